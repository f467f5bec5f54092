//! Scaling: one-sided levels from `|X[k]|^2`, and the one conversion between them.
//!
//! With `S1 = sum w`, `S2 = sum w^2` (the window's [`Factors`]), `fs` the sample rate and `N`
//! the block length, the power-like value of line `k` is `g * |X[k]|^2` with
//!
//! | scale | correction | `g`, lines `1 ..= N/2 - 1` | `g`, DC and Nyquist | then |
//! |---|---|---|---|---|
//! | [`Scale::Power`] | [`Correction::Amplitude`] | `2 / S1^2` | `1 / S1^2` | |
//! | [`Scale::Power`] | [`Correction::Energy`] | `2 / (N S2)` | `1 / (N S2)` | |
//! | [`Scale::Rms`] | either | as `Power` | as `Power` | `sqrt` |
//! | [`Scale::Peak`] | either | `2 x` `Power` | as `Power` | `sqrt` |
//! | [`Scale::Psd`] | energy only | `2 / (fs S2)` | `1 / (fs S2)` | |
//! | [`Scale::Asd`] | energy only | as `Psd` | as `Psd` | `sqrt` |
//!
//! The factor 2 on the interior lines is the one-sided fold (the negative-frequency image);
//! DC and Nyquist have no image and are not doubled. `Power` with amplitude correction is
//! SciPy's `scaling='spectrum'` (a tone on a line reads its mean square, `A^2/2`), `Psd` is
//! SciPy's `scaling='density'` (`Power` with energy correction divided by the bin width), and
//! `Peak` reads a sinusoid's amplitude `A` (`sqrt(2)` times its RMS; at DC and Nyquist the
//! component's value itself).
//!
//! [`rescale`] is the only place these factors are applied: reading an analyzer and
//! [`Spectrum::to_scale`] both go through it.

use crate::error::ConfigError;
use crate::window::Factors;

/// The one-sided fold: an interior line carries its negative-frequency image too.
const ONE_SIDED: f64 = 2.0;
/// A sinusoid's peak squared over its mean square.
const PEAK_SQUARED_PER_MEAN_SQUARE: f64 = 2.0;

/// What a spectrum's values are.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Scale {
    /// Peak amplitude of the sinusoid on each line, in units.
    Peak,
    /// RMS amplitude per line, in units.
    Rms,
    /// Mean-square power per line, in units^2.
    Power,
    /// Power spectral density, units^2/Hz (always energy-corrected).
    Psd,
    /// Amplitude spectral density, `sqrt(Psd)`, units/sqrt(Hz) (always energy-corrected).
    Asd,
}

impl Scale {
    /// Whether values are amplitudes (square roots of a power-like quantity).
    pub const fn is_amplitude(self) -> bool {
        matches!(self, Scale::Peak | Scale::Rms | Scale::Asd)
    }

    /// Whether the scale is a density, which is energy-corrected by definition.
    pub const fn is_density(self) -> bool {
        matches!(self, Scale::Psd | Scale::Asd)
    }
}

/// Which window correction a spectrum's levels carry (see [`crate::window`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Correction {
    /// `1 / coherent gain`: a tone on a line reads its true amplitude.
    Amplitude,
    /// `1 / sqrt(mean-square gain)`: sums over lines read the true power.
    Energy,
}

impl Correction {
    /// The correction a scale really uses: densities are always [`Correction::Energy`].
    pub const fn effective(self, scale: Scale) -> Correction {
        if scale.is_density() {
            Correction::Energy
        } else {
            self
        }
    }
}

/// How values relate to `|X[k]|^2`: `value = (gain * |X[k]|^2)`, square-rooted when
/// `amplitude`. The first and last of `N/2 + 1` values (DC, Nyquist) use `edge`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LineGains {
    /// Gain of lines `1 ..= N/2 - 1`.
    pub interior: f64,
    /// Gain of DC and Nyquist.
    pub edge: f64,
    /// Values are square roots.
    pub amplitude: bool,
}

impl LineGains {
    /// Squared magnitudes times `gain`, the same on every line: what an accumulator holds.
    pub const fn squared_magnitudes(gain: f64) -> Self {
        LineGains {
            interior: gain,
            edge: gain,
            amplitude: false,
        }
    }

    /// The gains of `scale` with `correction` for blocks of `block_len` at `sample_rate_hz`
    /// through a window with `factors`, in engineering units (see the module table).
    pub fn of(
        scale: Scale,
        correction: Correction,
        factors: &Factors,
        sample_rate_hz: f32,
        block_len: usize,
    ) -> Self {
        let base = if scale.is_density() {
            1.0 / (sample_rate_hz as f64 * factors.sum_of_squares)
        } else {
            match correction {
                Correction::Amplitude => 1.0 / (factors.sum * factors.sum),
                Correction::Energy => 1.0 / (block_len as f64 * factors.sum_of_squares),
            }
        };
        let interior = match scale {
            Scale::Peak => PEAK_SQUARED_PER_MEAN_SQUARE * ONE_SIDED * base,
            _ => ONE_SIDED * base,
        };
        LineGains {
            interior,
            edge: base,
            amplitude: scale.is_amplitude(),
        }
    }
}

impl LineGains {
    /// The one-sided energy spectral density of a transient, units^2 s/Hz, from `|X[k]|^2`
    /// of an unscaled DFT: `2 / fs^2` on the interior lines, `1 / fs^2` at DC and Nyquist
    /// (`X(f) ~ X[k] / fs` is the continuous transform, and `sum ESD * fs / N` is the energy
    /// `sum x^2 / fs` by Parseval). No window correction: a transient that lies where the
    /// window is 1 (the force window over the hammer pulse) is not attenuated, and an
    /// amplitude or energy correction, which restores a *stationary* signal's level from the
    /// window's average attenuation over the block, would scale it by a meaningless factor
    /// (x18 for a 5 % force window).
    pub fn energy_spectral_density(sample_rate_hz: f32) -> Self {
        let fs = sample_rate_hz as f64;
        let base = 1.0 / (fs * fs);
        LineGains {
            interior: ONE_SIDED * base,
            edge: base,
            amplitude: false,
        }
    }
}

/// Converts `values` (`N/2 + 1` lines, DC first) from one set of gains to another. The one
/// conversion between scales: everything that changes a level goes through it.
pub fn rescale(values: &mut [f32], from: LineGains, to: LineGains) {
    let conversion = Conversion::between(from, to);
    let lines = values.len();
    for (k, v) in values.iter_mut().enumerate() {
        *v = conversion.apply(*v, k, lines);
    }
}

/// The conversion [`rescale`] applies, worked out once, for reading single lines in a loop
/// without converting a whole spectrum (see [`Spectrum::mean_squares`]).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Conversion {
    interior: f32,
    edge: f32,
    from_amplitude: bool,
    to_amplitude: bool,
}

impl Conversion {
    /// From values on `from` to values on `to`.
    pub fn between(from: LineGains, to: LineGains) -> Self {
        Self {
            interior: (to.interior / from.interior) as f32,
            edge: (to.edge / from.edge) as f32,
            from_amplitude: from.amplitude,
            to_amplitude: to.amplitude,
        }
    }

    /// The factors of the interior lines and of DC and Nyquist, when the conversion is a
    /// plain multiplication (power-like to power-like); `None` when it takes a square or a
    /// square root.
    pub fn power_factors(&self) -> Option<(f32, f32)> {
        (!self.from_amplitude && !self.to_amplitude).then_some((self.interior, self.edge))
    }

    /// Converts `value`, the value of line `bin` of `lines` (DC first; the first and the last
    /// line use the edge gains).
    #[inline]
    pub fn apply(&self, value: f32, bin: usize, lines: usize) -> f32 {
        let factor = if bin == 0 || bin + 1 >= lines {
            self.edge
        } else {
            self.interior
        };
        let power = if self.from_amplitude {
            value * value
        } else {
            value
        };
        let scaled = power * factor;
        if self.to_amplitude {
            libm::sqrtf(scaled)
        } else {
            scaled
        }
    }
}

/// The lines of a spectrum read as energy-corrected mean squares, with the conversion worked
/// out once ([`Spectrum::mean_squares`]).
#[derive(Clone, Copy, Debug)]
pub struct MeanSquares<'a, const BINS: usize> {
    values: &'a [f32; BINS],
    conversion: Conversion,
}

impl<const BINS: usize> MeanSquares<'_, BINS> {
    /// Line `bin` as a mean square, units^2; `None` beyond Nyquist.
    #[inline]
    pub fn get(&self, bin: usize) -> Option<f32> {
        let value = *self.values.get(bin)?;
        Some(self.conversion.apply(value, bin, BINS))
    }
}

/// Overall RMS (Parseval) in engineering units from accumulated squared magnitudes
/// `gain * |X[k]|^2`, summed by the caller over the interior lines and over the edge lines
/// (DC, if wanted, and Nyquist): the energy-corrected power of every analyzer's
/// `overall_rms`, whatever its accumulator's representation. 0 when nothing was accumulated.
pub(crate) fn overall_rms_of_sums(
    interior: f64,
    edges: f64,
    gain: f64,
    info: &SpectrumInfo,
) -> f32 {
    if gain == 0.0 {
        return 0.0;
    }
    let to = LineGains::of(
        Scale::Power,
        Correction::Energy,
        &info.factors,
        info.sample_rate_hz,
        info.block_len,
    );
    libm::sqrt((interior * to.interior + edges * to.edge) / gain) as f32
}

/// What a spectrum needs to know besides its values.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SpectrumInfo {
    /// Sample rate of the blocks, Hz.
    pub sample_rate_hz: f32,
    /// Block length `N`.
    pub block_len: usize,
    /// The window's factors (its sums give every conversion).
    pub factors: Factors,
    /// Engineering unit of the signal, e.g. `"m/s^2"`; values are in it, its square, or its
    /// square per Hz, depending on the scale.
    pub unit: &'static str,
    /// How many blocks went into the values.
    pub averages: u32,
}

impl SpectrumInfo {
    /// Whether this describes `BINS` one-sided lines that levels can be computed for: an even
    /// block of at least 2 samples with `BINS = N/2 + 1`, a finite positive sample rate, and
    /// window sums a correction can divide by ([`Factors::can_correct`]).
    pub fn check<const BINS: usize>(&self) -> Result<(), ConfigError> {
        if self.block_len < 2 || self.block_len % 2 != 0 || self.block_len / 2 + 1 != BINS {
            return Err(ConfigError::BinCount {
                bins: BINS,
                block_len: self.block_len,
            });
        }
        if !(self.sample_rate_hz.is_finite() && self.sample_rate_hz > 0.0) {
            return Err(ConfigError::SampleRate);
        }
        if !self.factors.can_correct() {
            return Err(ConfigError::WindowParameter);
        }
        Ok(())
    }
}

/// A one-sided spectrum of `BINS = N/2 + 1` lines (DC first, Nyquist last) that knows its
/// scale, correction, bin width and unit.
///
/// ```
/// use leakless::{Correction, Scale, Spectrum, SpectrumInfo, Window, Shape};
///
/// const HANN: Window<64> = Window::new(Shape::Hann);
/// let info = SpectrumInfo {
///     sample_rate_hz: 64.0,
///     block_len: 64,
///     factors: *HANN.factors(),
///     unit: "g",
///     averages: 1,
/// };
/// // A 1 g (peak) tone on line 4, read as amplitude-corrected peak.
/// let mut values = [0.0f32; 33];
/// values[4] = 1.0;
/// let peak = Spectrum::new(values, Scale::Peak, Correction::Amplitude, info).unwrap();
/// let power = peak.to_scale(Scale::Power, Correction::Amplitude);
/// assert!((power.values()[4] - 0.5).abs() < 1e-6); // A^2 / 2
/// assert_eq!(peak.frequency_hz(4), 4.0);
/// // Energy correction reads the tone's line low by the ENBW (1.5 bins for Hann).
/// let energy = peak.to_scale(Scale::Power, Correction::Energy);
/// assert!((energy.values()[4] - 0.5 / 1.5).abs() < 1e-6);
/// ```
#[derive(Clone, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Spectrum<const BINS: usize> {
    values: [f32; BINS],
    scale: Scale,
    correction: Correction,
    info: SpectrumInfo,
}

impl<const BINS: usize> Spectrum<BINS> {
    /// Wraps values already on `scale` with `correction` (normalised by
    /// [`Correction::effective`]). Fails if `BINS != block_len / 2 + 1`, the block length is
    /// odd, or the sample rate is not finite and positive.
    pub fn new(
        values: [f32; BINS],
        scale: Scale,
        correction: Correction,
        info: SpectrumInfo,
    ) -> Result<Self, ConfigError> {
        info.check::<BINS>()?;
        Ok(Self {
            values,
            scale,
            correction: correction.effective(scale),
            info,
        })
    }

    /// Builds a spectrum from accumulated squared magnitudes: `squares[k] = gain * |X[k]|^2`
    /// in engineering units^2 (what an analyzer accumulates). A zero gain (nothing
    /// accumulated) gives zeros. If `info` cannot describe these lines (the checks of
    /// [`Spectrum::new`] fail), every value is NaN: a visible flag, never plausible levels.
    pub fn from_squares(
        squares: &[f32; BINS],
        gain: f64,
        scale: Scale,
        correction: Correction,
        info: SpectrumInfo,
    ) -> Self {
        let mut spectrum = Self {
            values: [0.0; BINS],
            scale,
            correction,
            info,
        };
        spectrum.set_from_squares(squares, gain, scale, correction, info);
        spectrum
    }

    /// [`Spectrum::from_squares`] into `self`.
    pub fn set_from_squares(
        &mut self,
        squares: &[f32; BINS],
        gain: f64,
        scale: Scale,
        correction: Correction,
        info: SpectrumInfo,
    ) {
        self.set_from_square_lines(squares.iter().copied(), gain, scale, correction, info);
    }

    /// [`Spectrum::set_from_squares`] from the lines one by one (DC first), so an
    /// accumulator in another representation is read without a `BINS`-line temporary.
    pub(crate) fn set_from_square_lines(
        &mut self,
        squares: impl Iterator<Item = f32>,
        gain: f64,
        scale: Scale,
        correction: Correction,
        info: SpectrumInfo,
    ) {
        self.scale = scale;
        self.correction = correction.effective(scale);
        self.info = info;
        if info.check::<BINS>().is_err() {
            self.values = [f32::NAN; BINS];
        } else if gain > 0.0 && gain.is_finite() {
            for (value, square) in self.values.iter_mut().zip(squares) {
                *value = square;
            }
            let to = self.gains();
            rescale(&mut self.values, LineGains::squared_magnitudes(gain), to);
        } else {
            self.values = [0.0; BINS];
        }
    }

    /// [`Spectrum::set_from_square_lines`] for a caller that writes the converted values
    /// itself: `write(values, conversion)` must set every line `k` to
    /// `conversion.apply(square_k, k, BINS)` (the fixed-point analyzers do that in integers).
    /// Not called when the set-up is invalid or the gain is not positive (the values are
    /// then NaN or zeros, as there).
    #[cfg_attr(not(feature = "fixed"), allow(dead_code))]
    pub(crate) fn set_converted(
        &mut self,
        gain: f64,
        scale: Scale,
        correction: Correction,
        info: SpectrumInfo,
        write: impl FnOnce(&mut [f32; BINS], &Conversion),
    ) {
        self.scale = scale;
        self.correction = correction.effective(scale);
        self.info = info;
        if info.check::<BINS>().is_err() {
            self.values = [f32::NAN; BINS];
        } else if gain > 0.0 && gain.is_finite() {
            let conversion = Conversion::between(LineGains::squared_magnitudes(gain), self.gains());
            write(&mut self.values, &conversion);
        } else {
            self.values = [0.0; BINS];
        }
    }

    /// The values, DC first.
    pub fn values(&self) -> &[f32; BINS] {
        &self.values
    }

    /// The scale of the values.
    pub fn scale(&self) -> Scale {
        self.scale
    }

    /// The correction the values carry.
    pub fn correction(&self) -> Correction {
        self.correction
    }

    /// Everything but the values.
    pub fn info(&self) -> &SpectrumInfo {
        &self.info
    }

    /// Sample rate, Hz.
    pub fn sample_rate_hz(&self) -> f32 {
        self.info.sample_rate_hz
    }

    /// Block length `N`.
    pub fn block_len(&self) -> usize {
        self.info.block_len
    }

    /// Engineering unit of the signal.
    pub fn unit(&self) -> &'static str {
        self.info.unit
    }

    /// Blocks averaged into the values.
    pub fn averages(&self) -> u32 {
        self.info.averages
    }

    /// The window's factors.
    pub fn factors(&self) -> &Factors {
        &self.info.factors
    }

    /// Line spacing `fs / N`, Hz.
    pub fn bin_width_hz(&self) -> f32 {
        self.info.sample_rate_hz / self.info.block_len as f32
    }

    /// Frequency of line `bin`, `bin * fs / N`, Hz.
    pub fn frequency_hz(&self, bin: usize) -> f32 {
        bin as f32 * self.bin_width_hz()
    }

    /// The gains of this spectrum's scale and correction.
    pub fn gains(&self) -> LineGains {
        LineGains::of(
            self.scale,
            self.correction,
            &self.info.factors,
            self.info.sample_rate_hz,
            self.info.block_len,
        )
    }

    /// Line `bin` as an energy-corrected mean square (units^2), whatever this spectrum's own
    /// scale: [`Scale::Power`] with [`Correction::Energy`], through [`rescale`]. Summed over
    /// lines it is the power in that band, independent of the window and of where a tone
    /// falls between lines while its main lobe stays inside (scipy 1.17.1
    /// `signal.periodogram`, band sums of examples A and B in
    /// tests/reference/spectra_examples.csv). `None` beyond Nyquist.
    ///
    /// ```
    /// use leakless::{Correction, Scale, Shape, Spectrum, SpectrumInfo, Window};
    ///
    /// const HANN: Window<64> = Window::new(Shape::Hann);
    /// let info = SpectrumInfo {
    ///     sample_rate_hz: 64.0,
    ///     block_len: 64,
    ///     factors: *HANN.factors(),
    ///     unit: "g",
    ///     averages: 1,
    /// };
    /// let mut values = [0.0f32; 33];
    /// values[4] = 1.0; // a 1 g peak tone on line 4, amplitude-corrected
    /// let peak = Spectrum::new(values, Scale::Peak, Correction::Amplitude, info).unwrap();
    /// // Energy correction reads the peak line low by the ENBW (1.5 lines for Hann).
    /// assert!((peak.mean_square(4).unwrap() - 0.5 / 1.5).abs() < 1e-6);
    /// assert_eq!(peak.mean_square(33), None);
    /// ```
    pub fn mean_square(&self, bin: usize) -> Option<f32> {
        self.mean_squares().get(bin)
    }

    /// [`Spectrum::mean_square`] for many lines: the conversion is worked out once.
    pub fn mean_squares(&self) -> MeanSquares<'_, BINS> {
        let to = LineGains::of(
            Scale::Power,
            Correction::Energy,
            &self.info.factors,
            self.info.sample_rate_hz,
            self.info.block_len,
        );
        MeanSquares {
            values: &self.values,
            conversion: Conversion::between(self.gains(), to),
        }
    }

    /// The same spectrum on another scale and correction (through [`rescale`]).
    pub fn to_scale(&self, scale: Scale, correction: Correction) -> Self {
        let mut out = self.clone();
        out.convert(scale, correction);
        out
    }

    /// Converts in place (through [`rescale`]).
    pub fn convert(&mut self, scale: Scale, correction: Correction) {
        let from = self.gains();
        self.scale = scale;
        self.correction = correction.effective(scale);
        let to = self.gains();
        rescale(&mut self.values, from, to);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::window::{Shape, Window};

    fn info(factors: Factors) -> SpectrumInfo {
        SpectrumInfo {
            sample_rate_hz: 1024.0,
            block_len: 1024,
            factors,
            unit: "V",
            averages: 1,
        }
    }

    #[test]
    fn inconsistent_info_is_refused_or_flagged() {
        let hann: Window<1024> = Window::new(Shape::Hann);
        let good = info(*hann.factors());
        let short = SpectrumInfo {
            block_len: 0,
            ..good
        };
        assert!(Spectrum::<1>::new([0.0], Scale::Power, Correction::Energy, short).is_err());
        let zero_window = SpectrumInfo {
            factors: Factors::of_samples(&[0.0; 8]),
            ..good
        };
        assert_eq!(
            Spectrum::<513>::new([0.0; 513], Scale::Power, Correction::Energy, zero_window).err(),
            Some(ConfigError::WindowParameter)
        );
        // from_squares cannot fail, so it flags: every value NaN, never plausible levels.
        let odd = SpectrumInfo {
            block_len: 7,
            ..good
        };
        let s = Spectrum::<3>::from_squares(&[1.0; 3], 1.0, Scale::Rms, Correction::Energy, odd);
        assert!(s.values().iter().all(|v| v.is_nan()));
    }

    // reference: scipy 1.17.1 `signal.periodogram`, tests/reference/spectra_examples.csv
    // example A (Hann, N = 1024,
    // fs = 1024 Hz, A = 1 on bin 100): spectrum 0.5, density 1/3, corrected peak 1.0.
    #[test]
    fn example_a_levels_from_squared_magnitude() {
        let hann: Window<1024> = Window::new(Shape::Hann);
        let mut squares = [0.0f32; 513];
        squares[100] = 256.0 * 256.0; // |rfft(x w)| = 256 at bin 100
        let s = Spectrum::from_squares(
            &squares,
            1.0,
            Scale::Power,
            Correction::Amplitude,
            info(*hann.factors()),
        );
        assert!((s.values()[100] - 0.5).abs() < 1e-6);
        let psd = s.to_scale(Scale::Psd, Correction::Amplitude);
        assert_eq!(psd.correction(), Correction::Energy);
        assert!((psd.values()[100] - 1.0 / 3.0).abs() < 1e-6);
        let peak = psd.to_scale(Scale::Peak, Correction::Amplitude);
        assert!((peak.values()[100] - 1.0).abs() < 1e-6);
        let asd = peak.to_scale(Scale::Asd, Correction::Energy);
        assert!((asd.values()[100] - (1.0f32 / 3.0).sqrt()).abs() < 1e-6);
    }

    // reference: scipy 1.17.1 `signal.periodogram`, tests/reference/spectra_examples.csv
    // example D: DC and Nyquist are not doubled
    // (boxcar, 'spectrum': DC 0.3 reads 0.09, a unit cosine at fs/2 reads 1.0).
    #[test]
    fn edges_are_not_doubled() {
        let rect: Window<1024> = Window::new(Shape::Rectangular);
        let mut squares = [0.0f32; 513];
        squares[0] = (0.3f32 * 1024.0).powi(2);
        squares[512] = 1024.0f32.powi(2);
        let s = Spectrum::from_squares(
            &squares,
            1.0,
            Scale::Power,
            Correction::Amplitude,
            info(*rect.factors()),
        );
        assert!((s.values()[0] - 0.09).abs() < 1e-6);
        assert!((s.values()[512] - 1.0).abs() < 1e-6);
        let peak = s.to_scale(Scale::Peak, Correction::Amplitude);
        assert!((peak.values()[0] - 0.3).abs() < 1e-6);
        assert!((peak.values()[512] - 1.0).abs() < 1e-6);
    }

    #[test]
    fn round_trips_through_every_scale() {
        let flat: Window<1024> = Window::new(Shape::FlatTop);
        let values: [f32; 513] = core::array::from_fn(|k| 1.0 + k as f32);
        let start = Spectrum::new(
            values,
            Scale::Rms,
            Correction::Amplitude,
            info(*flat.factors()),
        )
        .unwrap();
        let mut s = start.clone();
        for scale in [
            Scale::Peak,
            Scale::Power,
            Scale::Psd,
            Scale::Asd,
            Scale::Rms,
        ] {
            for correction in [Correction::Energy, Correction::Amplitude] {
                s.convert(scale, correction);
            }
        }
        for (a, b) in s.values().iter().zip(start.values()) {
            assert!((a - b).abs() <= 1e-5 * b, "{a} vs {b}");
        }
    }

    #[test]
    fn inconsistent_spectra_are_typed_errors() {
        let hann: Window<64> = Window::new(Shape::Hann);
        let mut i = info(*hann.factors());
        i.block_len = 64;
        assert!(Spectrum::new([0.0; 33], Scale::Power, Correction::Energy, i).is_ok());
        assert_eq!(
            Spectrum::new([0.0; 32], Scale::Power, Correction::Energy, i).err(),
            Some(ConfigError::BinCount {
                bins: 32,
                block_len: 64
            })
        );
        i.sample_rate_hz = f32::NAN;
        assert_eq!(
            Spectrum::new([0.0; 33], Scale::Power, Correction::Energy, i).err(),
            Some(ConfigError::SampleRate)
        );
    }
}
