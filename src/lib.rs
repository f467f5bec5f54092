//! # leakless
//!
//! Windowed, averaged block spectra with correct levels, for vibration sensor nodes.
//!
//! `no_std`, no heap, no `unsafe`: every size is a const generic, window tables and their
//! correction factors are computed at compile time, and `core::mem::size_of` of an analyzer
//! is its RAM cost.
//!
//! ```
//! use leakless::window::{Shape, Window};
//!
//! // The table and its factors are evaluated by the compiler and live in flash.
//! const HANN: Window<1024> = Window::new(Shape::Hann);
//! assert!((HANN.factors().amplitude_correction - 2.0).abs() < 1e-12);
//! assert!((HANN.factors().enbw_bins - 1.5).abs() < 1e-12);
//! ```
//!
//! Spectra come from an [`Analyzer`] (feature `f32`): push samples in chunks of any length,
//! read a [`Spectrum`] on any [`Scale`] at any time. Levels are one-sided (lines
//! `1 ..= N/2 - 1` carry their negative-frequency image, DC and Nyquist do not), in
//! engineering units (input times sensitivity), and carry the window [`Correction`] they were
//! read with; [`spectrum::scale`] tabulates every factor.
//!
//! [`strongest_tones`] ([`analysis::peaks`]) reads the strongest lines of a spectrum as tones:
//! frequency from the power centroid and amplitude from the power in the main lobe, so that
//! neither depends on where a tone falls between lines, for any window.
//!
//! Without an FPU (or to save RAM), [`AnalyzerQ15`] and [`AnalyzerQ31`] (feature `fixed`) run
//! the same pipeline in integers on `i16` / `i32` counts, with the same [`Config`] and the
//! same [`Spectrum`] read-out, plus integer levels for cores where float is costly;
//! [`compare`] measures one spectrum against another (fixed point against float).
//!
//! ## Optional features
//!
//! | feature | default | what it adds |
//! |---|---|---|
//! | `f32` | yes | the floating-point transform (over `microfft`) and analyzer, N = 64 |
//! | `size-128` ... `size-4096` | `size-4096` | f32 transforms up to that N (chained: each includes the smaller; fewer means less flash) |
//! | `fixed` | no | Q15/Q31 transforms and analyzer; no float on the hot path |
//! | `defmt` | no | `defmt::Format` for the public types, for firmware logs |
//! | `std` | no | host helpers only; the core never needs it |
//! | `demo` | no | [`demo`]: an invented pump-set signal generator for the demo programs and firmware |
//! | `report` | no | [`report`]: the compact radio summary, encoded and decoded with serde + postcard (no `alloc`) |
//! | `cli` | no | the `leakless` host command (`src/bin/leakless/`); host only, never needed by the core |
//!
//! Without any feature the crate still has [`analysis::envelope::EnvelopeDetector`] and
//! [`analysis::stats::Statistics`] and the time-domain overall level meters
//! ([`analysis::levels`]); the envelope's `EnvelopeAnalyzer` needs `f32`. [`units`] holds the
//! sensitivity and unit conversions (mV/g, g and m/s^2, in/s and mm/s, mils and micrometres,
//! peak, peak-to-peak and RMS).
#![cfg_attr(not(test), no_std)]
#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![deny(
    clippy::std_instead_of_core,
    clippy::alloc_instead_of_core,
    clippy::std_instead_of_alloc
)]

pub mod analysis;
pub mod compare;
#[cfg(feature = "demo")]
pub mod demo;
pub mod error;
pub mod fft;
pub mod math;
#[cfg(feature = "report")]
pub mod report;
pub mod spectrum;
pub mod units;
pub mod window;

pub use analysis::bearing::{BearingGeometry, DefectFrequencies, DefectOrders};
pub use analysis::peaks::{strongest_tones, Tone, ToneSearch};
pub use error::ConfigError;
pub use window::{Factors, Shape, Symmetry, Window, WindowQ15, WindowQ31, WindowTable};

#[cfg(feature = "f32")]
pub use spectrum::analyzer::Analyzer;
pub use spectrum::average::{Averaging, WhenDone};
pub use spectrum::condition::{Detrend, OverloadPolicy};
pub use spectrum::config::{Config, Overlap, PushReport, Stage, Status};
#[cfg(feature = "fixed")]
pub use spectrum::fixed::{AnalyzerQ15, AnalyzerQ31, FixedAnalyzer};
pub use spectrum::scale::{Correction, Scale, Spectrum, SpectrumInfo};

// The README's example runs as a doctest, so it cannot go stale.
#[cfg(all(doctest, feature = "f32"))]
#[doc = include_str!("../README.md")]
struct ReadmeDoctests;
