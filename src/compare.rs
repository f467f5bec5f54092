//! Comparing two spectra of the same configuration: how far a spectrum under test (a
//! fixed-point analyzer's, say) is from a reference (the float analyzer's on the same
//! samples). `no_std`, no heap, independent of the arithmetic features.
//!
//! Every figure is computed from the energy-corrected mean square of each line
//! ([`Spectrum::line_mean_square`]), so it does not depend on the scale the spectra were read
//! on; line *amplitudes* below are its square roots.
//!
//! | figure | definition |
//! |---|---|
//! | [`snr_db`] | `10 log10(sum a_ref^2 / sum (a - a_ref)^2)` over all lines |
//! | [`worst_line_error_db`] | `20 log10(max |a - a_ref| / max a_ref)`: the largest line error relative to the spectrum's strongest line |
//! | [`tone_level_error_db`] | `10 log10` of the ratio of the powers summed over a tone's main lobe (its peak line +-2) |
//! | [`band_level_error_db`] | `20 log10` of the ratio of [`band_rms`] levels |
//!
//! Tones are found by [`strongest_tones`], a simple local-maximum search on the reference
//! (no interpolation, no noise-floor model): a line above both neighbours, strongest first,
//! skipping lines within a guard distance of a stronger tone so that a window's sidelobes
//! are not taken for tones.
//!
//! ```
//! use leakless::compare::{snr_db, worst_line_error_db};
//! use leakless::{Correction, Scale, Shape, Spectrum, SpectrumInfo, Window};
//!
//! const HANN: Window<64> = Window::new(Shape::Hann);
//! let info = SpectrumInfo {
//!     sample_rate_hz: 64.0,
//!     block_len: 64,
//!     factors: *HANN.factors(),
//!     unit: "g",
//!     averages: 1,
//! };
//! let mut values = [0.0f32; 33];
//! values[10] = 1.0;
//! let reference = Spectrum::new(values, Scale::Peak, Correction::Amplitude, info).unwrap();
//! values[10] = 0.99; // 1 % low: -40 dB of error
//! let test = Spectrum::new(values, Scale::Peak, Correction::Amplitude, info).unwrap();
//! assert!((snr_db(&test, &reference).unwrap() - 40.0).abs() < 1e-3);
//! assert!((worst_line_error_db(&test, &reference).unwrap().error_db + 40.0).abs() < 1e-3);
//! ```

use core::fmt;

use crate::analysis::bands::{band_rms, Band, Integration};
use crate::error::ConfigError;
use crate::spectrum::scale::Spectrum;

/// Why two spectra cannot be compared.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ComparisonError {
    /// The block lengths differ.
    BlockLen,
    /// The sample rates differ.
    SampleRate,
    /// The scales differ.
    Scale,
    /// The window corrections differ.
    Correction,
    /// The units differ.
    Unit,
    /// The windows differ: their ENBW disagree by more than 1e-3 (a Q15 and an f32 table of
    /// the same shape agree to about 1e-5).
    Window,
    /// The reference has no power at all, so no relative figure exists.
    EmptyReference,
    /// A band that holds no line of the spectra ([`band_rms`]'s error).
    Band(ConfigError),
}

impl fmt::Display for ComparisonError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::BlockLen => f.write_str("spectra have different block lengths"),
            Self::SampleRate => f.write_str("spectra have different sample rates"),
            Self::Scale => f.write_str("spectra are on different scales"),
            Self::Correction => f.write_str("spectra carry different window corrections"),
            Self::Unit => f.write_str("spectra are in different units"),
            Self::Window => f.write_str("spectra come from different windows"),
            Self::EmptyReference => f.write_str("the reference spectrum is all zero"),
            Self::Band(e) => write!(f, "band: {e}"),
        }
    }
}

impl core::error::Error for ComparisonError {}

/// Checks that `test` and `reference` have the same configuration.
pub fn check_same_configuration<const BINS: usize>(
    test: &Spectrum<BINS>,
    reference: &Spectrum<BINS>,
) -> Result<(), ComparisonError> {
    let (t, r) = (test.info(), reference.info());
    if t.block_len != r.block_len {
        return Err(ComparisonError::BlockLen);
    }
    if t.sample_rate_hz != r.sample_rate_hz {
        return Err(ComparisonError::SampleRate);
    }
    if test.scale() != reference.scale() {
        return Err(ComparisonError::Scale);
    }
    if test.correction() != reference.correction() {
        return Err(ComparisonError::Correction);
    }
    if t.unit != r.unit {
        return Err(ComparisonError::Unit);
    }
    let (te, re) = (t.factors.enbw_bins, r.factors.enbw_bins);
    // NaN fails the comparison and is rejected too.
    let windows_agree = (te - re).abs() <= 1e-3 * re;
    if !windows_agree {
        return Err(ComparisonError::Window);
    }
    Ok(())
}

/// Line `k`'s amplitude: the square root of its energy-corrected mean square.
fn amplitude<const BINS: usize>(s: &Spectrum<BINS>, k: usize) -> f64 {
    libm::sqrt(s.line_mean_square(k).max(0.0) as f64)
}

/// Signal-to-error ratio over all lines, dB (infinite when the spectra are equal).
pub fn snr_db<const BINS: usize>(
    test: &Spectrum<BINS>,
    reference: &Spectrum<BINS>,
) -> Result<f64, ComparisonError> {
    check_same_configuration(test, reference)?;
    let (mut signal, mut error) = (0.0f64, 0.0f64);
    for k in 0..BINS {
        let (a, r) = (amplitude(test, k), amplitude(reference, k));
        signal += r * r;
        error += (a - r) * (a - r);
    }
    if signal <= 0.0 {
        return Err(ComparisonError::EmptyReference);
    }
    Ok(10.0 * libm::log10(signal / error))
}

/// The worst line of a comparison.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LineError {
    /// The line.
    pub bin: usize,
    /// Its amplitude error relative to the reference's strongest line, dB (`-inf` when the
    /// spectra are equal).
    pub error_db: f64,
}

/// The line with the largest amplitude error, relative to the reference's strongest line.
pub fn worst_line_error_db<const BINS: usize>(
    test: &Spectrum<BINS>,
    reference: &Spectrum<BINS>,
) -> Result<LineError, ComparisonError> {
    check_same_configuration(test, reference)?;
    let mut strongest = 0.0f64;
    let (mut worst_bin, mut worst) = (0, 0.0f64);
    for k in 0..BINS {
        let (a, r) = (amplitude(test, k), amplitude(reference, k));
        strongest = strongest.max(r);
        if (a - r).abs() > worst {
            (worst_bin, worst) = (k, (a - r).abs());
        }
    }
    if strongest <= 0.0 {
        return Err(ComparisonError::EmptyReference);
    }
    Ok(LineError {
        bin: worst_bin,
        error_db: 20.0 * libm::log10(worst / strongest),
    })
}

/// The strongest tones of `reference` as line numbers, strongest first, into `out`; returns
/// how many were found (at most `out.len()`).
///
/// A tone is a line whose mean square exceeds its lower neighbour's and is at least its
/// upper neighbour's (DC and Nyquist excluded), and which lies more than `guard_lines` from
/// every stronger tone. Choose the guard from the window: Hann's sidelobes stay above
/// -65 dB out to 8 lines, a flat top's main lobe is 5 lines wide.
pub fn strongest_tones<const BINS: usize>(
    reference: &Spectrum<BINS>,
    guard_lines: usize,
    out: &mut [usize],
) -> usize {
    let mut found = 0;
    let level = |k: usize| reference.line_mean_square(k);
    // Repeated selection: out is short (a handful of tones), so this stays cheap.
    while found < out.len() {
        let mut best: Option<usize> = None;
        for k in 1..BINS.saturating_sub(1) {
            let is_peak = level(k) > level(k - 1) && level(k) >= level(k + 1);
            let guarded = out[..found].iter().any(|&t| t.abs_diff(k) <= guard_lines);
            if is_peak && !guarded && best.is_none_or(|b| level(k) > level(b)) {
                best = Some(k);
            }
        }
        match best {
            Some(k) => {
                out[found] = k;
                found += 1;
            }
            None => break,
        }
    }
    found
}

/// The level error of the tone whose peak line is `bin`: `10 log10` of the test power over
/// the reference power, both summed over lines `bin - 2 ..= bin + 2` (a Hann main lobe and
/// then some; for wider windows the sum still compares like with like).
pub fn tone_level_error_db<const BINS: usize>(
    test: &Spectrum<BINS>,
    reference: &Spectrum<BINS>,
    bin: usize,
) -> Result<f64, ComparisonError> {
    check_same_configuration(test, reference)?;
    let lines = bin.saturating_sub(2)..(bin + 3).min(BINS);
    let power =
        |s: &Spectrum<BINS>| -> f64 { lines.clone().map(|k| s.line_mean_square(k) as f64).sum() };
    let r = power(reference);
    if r <= 0.0 {
        return Err(ComparisonError::EmptyReference);
    }
    Ok(10.0 * libm::log10(power(test) / r))
}

/// The band-level error, `20 log10(band_rms(test) / band_rms(reference))`, dB.
pub fn band_level_error_db<const BINS: usize>(
    test: &Spectrum<BINS>,
    reference: &Spectrum<BINS>,
    band: Band,
    integration: Integration,
) -> Result<f64, ComparisonError> {
    check_same_configuration(test, reference)?;
    let t = band_rms(test, band, integration).map_err(ComparisonError::Band)? as f64;
    let r = band_rms(reference, band, integration).map_err(ComparisonError::Band)? as f64;
    if r <= 0.0 {
        return Err(ComparisonError::EmptyReference);
    }
    Ok(20.0 * libm::log10(t / r))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spectrum::scale::{Correction, Scale, SpectrumInfo};
    use crate::window::{Shape, Window};

    fn spectrum(values: [f32; 33], shape: Shape) -> Spectrum<33> {
        let w: Window<64> = Window::new(shape);
        let info = SpectrumInfo {
            sample_rate_hz: 64.0,
            block_len: 64,
            factors: *w.factors(),
            unit: "g",
            averages: 1,
        };
        Spectrum::new(values, Scale::Power, Correction::Energy, info).unwrap()
    }

    #[test]
    fn mismatched_configurations_are_typed_errors() {
        let a = spectrum([1.0; 33], Shape::Hann);
        let b = spectrum([1.0; 33], Shape::FlatTop);
        assert_eq!(snr_db(&a, &b), Err(ComparisonError::Window));
        let c = a.to_scale(Scale::Peak, Correction::Energy);
        assert_eq!(snr_db(&a, &c).err(), Some(ComparisonError::Scale));
        let zero = spectrum([0.0; 33], Shape::Hann);
        assert_eq!(snr_db(&a, &zero), Err(ComparisonError::EmptyReference));
        assert_eq!(snr_db(&a, &a), Ok(f64::INFINITY));
    }

    // By definition: a tone 4x the power (+6.02 dB) on its lobe, the rest equal.
    #[test]
    fn tones_and_levels() {
        let mut v = [1e-6f32; 33];
        v[9..=11].copy_from_slice(&[0.25, 1.0, 0.25]);
        v[20] = 0.01;
        let reference = spectrum(v, Shape::Hann);
        let mut tones = [0; 3];
        assert_eq!(strongest_tones(&reference, 3, &mut tones), 2);
        assert_eq!(&tones[..2], &[10, 20]);
        for line in &mut v[8..=12] {
            *line *= 4.0;
        }
        let test = spectrum(v, Shape::Hann);
        let e = tone_level_error_db(&test, &reference, 10).unwrap();
        assert!((e - 10.0 * 4f64.log10()).abs() < 1e-6);
        assert!(tone_level_error_db(&test, &reference, 20).unwrap().abs() < 1e-6);
        let band = Band::new(15.0, 25.0).unwrap();
        let e = band_level_error_db(&test, &reference, band, Integration::None).unwrap();
        assert!(e.abs() < 1e-6);
    }
}
