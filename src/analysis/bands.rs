//! Band and overall levels from a spectrum, with integration from acceleration to velocity
//! and displacement done line by line in the frequency domain.
//!
//! A band level is the square root of the summed energy-corrected mean square of the lines
//! whose centre frequency lies in the band (Parseval). That sum does not depend on the window
//! or on where a tone falls between lines, as long as the tone's main lobe lies inside the
//! band; a tone within a main-lobe width of a band edge is only partly counted.
//!
//! The band is rectangular (brick-wall), not the Butterworth band-limiting response that
//! broadband severity instruments use (ISO 2954: third-order high- and low-pass); near the
//! edges the two differ.
//!
//! ```
//! use leakless::analysis::bands::{band_rms, Band, Integration};
//! use leakless::{Correction, Scale, Shape, Spectrum, SpectrumInfo, Window};
//!
//! const HANN: Window<64> = Window::new(Shape::Hann);
//! let info = SpectrumInfo {
//!     sample_rate_hz: 64.0,
//!     block_len: 64,
//!     factors: *HANN.factors(),
//!     unit: "m/s^2",
//!     averages: 1,
//! };
//! // A 1 m/s^2 rms tone on the 10 Hz line, on the power scale with energy correction: its
//! // mean square spreads over three lines (0.25 : 1 : 0.25, divided by the ENBW of 1.5).
//! let mut values = [0.0f32; 33];
//! values[9] = 0.25 / 1.5;
//! values[10] = 1.0 / 1.5;
//! values[11] = 0.25 / 1.5;
//! let power = Spectrum::new(values, Scale::Power, Correction::Energy, info).unwrap();
//! let band = Band::new(5.0, 15.0).unwrap();
//! let rms = band_rms(&power, band, Integration::None).unwrap();
//! assert!((rms - 1.0).abs() < 1e-6);
//! ```

use crate::error::ConfigError;
use crate::spectrum::scale::Spectrum;

/// A frequency band `low_hz ..= high_hz`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Band {
    low_hz: f32,
    high_hz: f32,
}

impl Band {
    /// The broadband range of machine-vibration severity in velocity for machines above
    /// 600 r/min, 10 to 1000 Hz (ISO 10816-3 / 20816-3, from memory; secondary
    /// summaries agree). Machines from 120 to 600 r/min use 2 to 1000 Hz.
    pub const SEVERITY_10_1000_HZ: Band = Band {
        low_hz: 10.0,
        high_hz: 1000.0,
    };

    /// A band from `low_hz` to `high_hz`; both finite, `0 <= low_hz < high_hz`.
    pub const fn new(low_hz: f32, high_hz: f32) -> Result<Band, ConfigError> {
        if low_hz >= 0.0 && high_hz > low_hz && high_hz < f32::INFINITY {
            Ok(Band { low_hz, high_hz })
        } else {
            Err(ConfigError::Frequency)
        }
    }

    /// Lower edge, Hz.
    pub const fn low_hz(&self) -> f32 {
        self.low_hz
    }

    /// Upper edge, Hz.
    pub const fn high_hz(&self) -> f32 {
        self.high_hz
    }

    /// The lines of a spectrum whose centre frequency lies in the band, as a range.
    fn lines(&self, bin_width_hz: f32, bins: usize) -> core::ops::Range<usize> {
        let first = libm::ceilf(self.low_hz / bin_width_hz) as usize;
        let last = libm::floorf(self.high_hz / bin_width_hz) as usize;
        first.min(bins)..(last.saturating_add(1)).min(bins)
    }
}

/// How many times to integrate over time before taking the level, done per line as a division
/// by `(2 pi f)^2` of the mean square for each integration (a sinusoid's `v = a / (2 pi f)`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Integration {
    /// The spectrum's own quantity (e.g. acceleration in m/s^2).
    None,
    /// Once: acceleration to velocity (m/s^2 to m/s).
    Once,
    /// Twice: acceleration to displacement (m/s^2 to m).
    Twice,
}

impl Integration {
    fn times(self) -> i32 {
        match self {
            Integration::None => 0,
            Integration::Once => 1,
            Integration::Twice => 2,
        }
    }
}

/// RMS level in a band, in the spectrum's unit times `s^k` for `k` integrations (so m/s for
/// an m/s^2 spectrum integrated once). The DC line never takes part in an integration.
///
/// Fails with [`ConfigError::Frequency`] if the band holds no line of this spectrum (it lies
/// above Nyquist, or between two lines).
pub fn band_rms<const BINS: usize>(
    spectrum: &Spectrum<BINS>,
    band: Band,
    integration: Integration,
) -> Result<f32, ConfigError> {
    let bin_width = spectrum.bin_width_hz();
    let mut lines = band.lines(bin_width, BINS);
    if integration != Integration::None && lines.start == 0 {
        lines.start = 1;
    }
    if lines.is_empty() {
        return Err(ConfigError::Frequency);
    }
    let times = integration.times();
    let mean_squares = spectrum.mean_squares();
    let mut sum = 0.0f64;
    for bin in lines {
        let mut mean_square = mean_squares.get(bin).unwrap_or(0.0) as f64;
        if times > 0 {
            let omega = core::f64::consts::TAU * (bin as f64 * bin_width as f64);
            let omega_squared = omega * omega;
            let mut t = 0;
            while t < times {
                mean_square /= omega_squared;
                t += 1;
            }
        }
        sum += mean_square;
    }
    Ok(libm::sqrt(sum) as f32)
}

/// Overall RMS over every line but DC: the AC level of the signal (Parseval).
pub fn overall_rms<const BINS: usize>(spectrum: &Spectrum<BINS>) -> f32 {
    let mean_squares = spectrum.mean_squares();
    let sum: f64 = (1..BINS)
        .map(|bin| mean_squares.get(bin).unwrap_or(0.0) as f64)
        .sum();
    libm::sqrt(sum) as f32
}
