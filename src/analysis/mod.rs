//! Analysis of spectra and signals: what the numbers mean for a machine.

pub mod bands;
pub mod bearing;
pub mod envelope;
pub mod frf;
pub mod levels;
pub mod modes;
pub mod peaks;
pub mod stats;
