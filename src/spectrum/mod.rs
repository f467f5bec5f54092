//! Block spectra: framing, conditioning, scaling, averaging, and the analyzer that strings
//! them together.
//!
//! ```text
//! samples -> frame -> condition -> window -> transform -> |X|^2 -> average -> scale (on read)
//! ```

pub mod average;
pub mod condition;
pub mod config;
pub mod feed;
pub mod frame;
pub mod scale;
pub mod trigger;

#[cfg(feature = "f32")]
pub mod analyzer;
#[cfg(feature = "fixed")]
pub mod fixed;
#[cfg(feature = "f32")]
pub mod impact;
#[cfg(feature = "f32")]
pub mod multi;
