//! Envelope (demodulation) spectra for rolling-element bearings.
//!
//! A defect on a race or a ball strikes once per defect period; each strike rings a structural
//! resonance, often kilohertz high, far above the defect frequency itself. The spectrum of the
//! raw signal shows the resonance; the spectrum of its *envelope* shows the strike rate and
//! its harmonics (BPFO, BPFI, ... from [`crate::analysis::bearing`]).
//!
//! ```text
//! x -> band-pass around the resonance -> |.| -> low-pass -> keep every D-th -> Analyzer
//!      (4th-order Butterworth,            full   (8th-order Butterworth,
//!       two biquads)                      wave    four biquads, x pi/2)
//! ```
//!
//! # The filters
//!
//! * **Band-pass**: a 4th-order Butterworth band-pass, the low-pass-to-band-pass transform
//!   of the 2nd-order Butterworth prototype, `s -> (s^2 + w0^2) / (B s)` with
//!   `w0^2 = w_low w_high` and `B = w_high - w_low`, then the bilinear transform with both
//!   edges prewarped (`w = 2 fs tan(pi f / fs)`), so the digital filter is exactly
//!   -3.01 dB at `band_low_hz` and `band_high_hz` and 0 dB at
//!   [`band_centre_hz`](EnvelopeDetector::band_centre_hz) (tested against the analytic
//!   Butterworth response). Skirts fall 12 dB per octave on each side.
//! * **Rectifier**: full wave, `|x|`. For a narrow-band signal `A(t) cos(wc t + phi(t))` the
//!   mean of `|cos|` is `2 / pi`, so `|x|` low-passed is `(2 / pi) A(t)`; the low-pass has a
//!   gain of `pi / 2` folded in, so the output estimates the envelope `A(t)` itself, in the
//!   input's units: an amplitude-modulated carrier `A (1 + m cos wm t) cos wc t` reads a line
//!   of amplitude `A m` at `fm` (and nothing at `2 fm`; a square-law detector would give
//!   `A^2 m` and a harmonic `A^2 m^2 / 4`). The same `2 / pi` holds for narrow-band noise
//!   (mean of `|x|` is `sigma sqrt(2 / pi)`, mean of its Rayleigh envelope `sigma sqrt(pi/2)`).
//! * **Low-pass and decimation**: an 8th-order Butterworth low-pass at
//!   [`LOW_PASS_PER_OUTPUT_RATE`] = 0.3 of the output rate `fs / D` (bilinear, prewarped),
//!   then every `D`-th sample is kept. It is -0.23 dB at 0.25 of the output rate (where the
//!   envelope spectrum should be read up to) and attenuates by 63 dB or more everything that
//!   would fold below 0.25 of the output rate.
//!
//! All filters run in `f32` (transposed direct form II), which a Cortex-M4F does in hardware:
//! six biquads, about 60 floating-point operations per input sample. Coefficients are designed
//! in `f64` at construction and rounded once; [`band_pass_gain`](EnvelopeDetector::band_pass_gain)
//! and [`low_pass_gain`](EnvelopeDetector::low_pass_gain) evaluate the *rounded* filters.
//! The larger `D`, the closer the low-pass's poles crowd `z = 1` and the more that rounding
//! moves its gain: within 1 % up to [`MAX_DECIMATION`] (tested; measured 0.3 % at `D = 256`,
//! under 0.002 % at `D <= 8`); rates below `fs / 256` are not offered for that reason.
//!
//! The rectifier runs at the input rate, so its harmonics (at `2 k fc`, each
//! `4 / (pi (4 k^2 - 1))` of the envelope before the `pi / 2`) that lie above the input's
//! Nyquist frequency fold back; those that fold under the low-pass's cut-off stay, as weak
//! lines away from the envelope's own. A higher input rate (several times `band_high_hz`)
//! pushes them further down.
//!
//! # Bad samples
//!
//! A NaN, an infinity or a sample beyond
//! [`MAX_INPUT_MAGNITUDE`] would poison the
//! recursive filters for ever. Instead the detector **resets** every filter state to zero,
//! treats the sample as 0, counts the event ([`EnvelopeDetector::resets`]), and writes NaN
//! for the next [`settling_outputs`](EnvelopeDetector::settling_outputs) outputs, the time
//! its slowest pole takes to decay by 80 dB. The same blanking covers the start after
//! construction or [`reset`](EnvelopeDetector::reset). An [`Analyzer`] fed those outputs
//! rejects the blocks that hold them (its `rejected_non_finite` counter), so a transient never
//! enters an envelope spectrum, and the output is clean again after the settling time.
//!
//! # Example
//!
//! ```
//! use leakless::analysis::envelope::EnvelopeDetector;
//!
//! // A 25.6 kHz stream, the 2-4 kHz band around a resonance, envelope at 3.2 kHz.
//! let mut detector = EnvelopeDetector::new(25_600.0, 2_000.0, 4_000.0, 8).unwrap();
//! assert_eq!(detector.output_rate_hz(), 3_200.0);
//! let input = [0.0f32; 256];
//! let mut out = [0.0f32; 256 / 8 + 1];
//! let done = detector.process(&input, &mut out);
//! assert_eq!((done.consumed, done.written), (256, 32));
//! assert!(out[0].is_nan()); // the filters are still settling
//! ```

use crate::error::ConfigError;
#[cfg(feature = "f32")]
use crate::spectrum::analyzer::{Analyzer, Config, PushReport};
use crate::spectrum::condition::MAX_INPUT_MAGNITUDE;
#[cfg(feature = "f32")]
use crate::spectrum::scale::{Correction, Scale, Spectrum};
#[cfg(feature = "f32")]
use crate::window::Window;

use core::f64::consts::{FRAC_1_SQRT_2, PI};

/// Cut-off of the anti-alias low-pass as a fraction of the output rate `fs / D`.
pub const LOW_PASS_PER_OUTPUT_RATE: f64 = 0.3;
/// The largest decimation factor: beyond it the low-pass's poles crowd `z = 1` and `f32`
/// coefficients no longer place them well.
pub const MAX_DECIMATION: u32 = 256;
/// How far the slowest pole decays before outputs count as settled: 1e-4 (80 dB).
const SETTLED_FRACTION: f64 = 1e-4;
/// The longest settling time a detector may have, in seconds: a band narrow enough to ring
/// longer than this is refused rather than blanking its output for minutes after each start.
pub const MAX_SETTLING_S: f64 = 60.0;
/// Mean of `|cos|` over a period is `2 / pi`; the low-pass undoes it.
const FULL_WAVE_MEAN: f64 = 2.0 / PI;

const BAND_PASS_SECTIONS: usize = 2;
const LOW_PASS_SECTIONS: usize = 4;

/// One second-order section in transposed direct form II: coefficients and two state words.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
struct Biquad {
    b0: f32,
    b1: f32,
    b2: f32,
    a1: f32,
    a2: f32,
    s1: f32,
    s2: f32,
}

/// An analog section `(n2 s^2 + n1 s + n0) / (s^2 + d1 s + d0)`, s in rad/s.
#[derive(Clone, Copy, Debug)]
struct AnalogSection {
    n2: f64,
    n1: f64,
    n0: f64,
    d1: f64,
    d0: f64,
}

/// The design's numbers in `f64`, before rounding to `f32`.
struct DigitalSection {
    b: [f64; 3],
    a: [f64; 3],
}

impl AnalogSection {
    /// Bilinear transform, `s = 2 fs (1 - 1/z) / (1 + 1/z)`.
    fn bilinear(&self, sample_rate_hz: f64) -> DigitalSection {
        let k = 2.0 * sample_rate_hz;
        let kk = k * k;
        let a0 = kk + self.d1 * k + self.d0;
        let b = [
            (self.n2 * kk + self.n1 * k + self.n0) / a0,
            2.0 * (self.n0 - self.n2 * kk) / a0,
            (self.n2 * kk - self.n1 * k + self.n0) / a0,
        ];
        let a = [
            1.0,
            2.0 * (self.d0 - kk) / a0,
            (kk - self.d1 * k + self.d0) / a0,
        ];
        DigitalSection { b, a }
    }
}

impl DigitalSection {
    /// `|H(e^{j omega})|`, omega in rad/sample.
    fn gain(&self, omega: f64) -> f64 {
        response(&self.b, &self.a, omega)
    }

    fn scaled(mut self, factor: f64) -> Self {
        for b in self.b.iter_mut() {
            *b *= factor;
        }
        self
    }

    fn rounded(&self) -> Biquad {
        Biquad {
            b0: self.b[0] as f32,
            b1: self.b[1] as f32,
            b2: self.b[2] as f32,
            a1: self.a[1] as f32,
            a2: self.a[2] as f32,
            s1: 0.0,
            s2: 0.0,
        }
    }
}

/// `|B(z) / A(z)|` at `z = e^{j omega}`.
fn response(b: &[f64; 3], a: &[f64; 3], omega: f64) -> f64 {
    let polynomial = |c: &[f64; 3]| {
        let re = c[0] + c[1] * libm::cos(omega) + c[2] * libm::cos(2.0 * omega);
        let im = -(c[1] * libm::sin(omega) + c[2] * libm::sin(2.0 * omega));
        libm::sqrt(re * re + im * im)
    };
    polynomial(b) / polynomial(a)
}

impl Biquad {
    #[inline]
    fn run(&mut self, x: f32) -> f32 {
        let y = self.b0 * x + self.s1;
        self.s1 = self.b1 * x - self.a1 * y + self.s2;
        self.s2 = self.b2 * x - self.a2 * y;
        y
    }

    fn clear(&mut self) {
        self.s1 = 0.0;
        self.s2 = 0.0;
    }

    /// The response of the rounded coefficients.
    fn gain(&self, omega: f64) -> f64 {
        let b = [self.b0 as f64, self.b1 as f64, self.b2 as f64];
        let a = [1.0, self.a1 as f64, self.a2 as f64];
        response(&b, &a, omega)
    }
}

/// The complex square root (principal branch) of `re + j im`.
fn complex_sqrt(re: f64, im: f64) -> (f64, f64) {
    let modulus = libm::hypot(re, im);
    let root_re = libm::sqrt(((modulus + re) / 2.0).max(0.0));
    let root_im = libm::sqrt(((modulus - re) / 2.0).max(0.0));
    (root_re, if im < 0.0 { -root_im } else { root_im })
}

/// What one call of [`EnvelopeDetector::process`] did.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Processed {
    /// Input samples used. Fewer than given only when `out` filled up; pass the rest again.
    pub consumed: usize,
    /// Envelope samples written to the front of `out`.
    pub written: usize,
}

/// A streaming envelope detector: band-pass, full-wave rectifier, low-pass, decimation by `D`.
/// See the [module documentation](self) for the filters, the gain and bad samples.
///
/// # Memory
///
/// Six biquads (28 bytes each) plus about 50 bytes of settings and counters; no buffers.
#[derive(Clone, Debug)]
pub struct EnvelopeDetector {
    band_pass: [Biquad; BAND_PASS_SECTIONS],
    low_pass: [Biquad; LOW_PASS_SECTIONS],
    sample_rate_hz: f32,
    band_low_hz: f32,
    band_high_hz: f32,
    band_centre_hz: f32,
    low_pass_cutoff_hz: f32,
    decimation: u32,
    /// Input samples since the last output, `0 .. decimation`: an output is taken at phase 0.
    phase: u32,
    settling_outputs: u32,
    /// Outputs still to be written as NaN.
    blanked: u32,
    resets: u32,
}

impl EnvelopeDetector {
    /// A detector for a stream at `sample_rate_hz`, passing `band_low_hz ..= band_high_hz`
    /// (the -3 dB edges) and keeping every `decimation`-th sample of the envelope.
    ///
    /// # Errors
    ///
    /// * [`ConfigError::SampleRate`]: `sample_rate_hz` not finite and > 0.
    /// * [`ConfigError::Frequency`]: not `0 < band_low_hz < band_high_hz < sample_rate_hz / 2`.
    /// * [`ConfigError::Decimation`]: `decimation` not in `1 ..= MAX_DECIMATION`.
    /// * [`ConfigError::Frequency`] also when the band is so narrow (or so low) that the
    ///   filters would take longer than [`MAX_SETTLING_S`] to settle: every start and every
    ///   bad sample would blank the output for that long.
    pub fn new(
        sample_rate_hz: f32,
        band_low_hz: f32,
        band_high_hz: f32,
        decimation: u32,
    ) -> Result<Self, ConfigError> {
        if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
            return Err(ConfigError::SampleRate);
        }
        let nyquist = sample_rate_hz / 2.0;
        if !(band_low_hz > 0.0 && band_high_hz > band_low_hz && band_high_hz < nyquist) {
            return Err(ConfigError::Frequency);
        }
        if !(1..=MAX_DECIMATION).contains(&decimation) {
            return Err(ConfigError::Decimation);
        }
        let fs = sample_rate_hz as f64;
        let k = 2.0 * fs;
        let prewarp = |f: f64| k * libm::tan(PI * f / fs);

        // Band-pass: each pole p of the prototype 1 / (q^2 + sqrt(2) q + 1) becomes the two
        // roots of s^2 - p B s + w0^2 = 0; one pole of each conjugate pair gives a section
        // with that root and its conjugate, numerator B s (together B^2 s^2, as the transform
        // gives).
        let (w_low, w_high) = (prewarp(band_low_hz as f64), prewarp(band_high_hz as f64));
        let w0_squared = w_low * w_high;
        let bandwidth = w_high - w_low;
        let (p_re, p_im) = (-FRAC_1_SQRT_2, FRAC_1_SQRT_2);
        // (p B)^2 - 4 w0^2, with p^2 = -j.
        let (root_re, root_im) = complex_sqrt(-4.0 * w0_squared, -bandwidth * bandwidth);
        let poles = [
            (
                (p_re * bandwidth + root_re) / 2.0,
                (p_im * bandwidth + root_im) / 2.0,
            ),
            (
                (p_re * bandwidth - root_re) / 2.0,
                (p_im * bandwidth - root_im) / 2.0,
            ),
        ];
        let centre_omega = 2.0 * libm::atan(libm::sqrt(w0_squared) / k);
        let mut band_pass = [Biquad::default(); BAND_PASS_SECTIONS];
        let mut slowest_decay = f64::INFINITY;
        for (section, &(re, im)) in band_pass.iter_mut().zip(&poles) {
            slowest_decay = slowest_decay.min(-re);
            let digital = AnalogSection {
                n2: 0.0,
                n1: bandwidth,
                n0: 0.0,
                d1: -2.0 * re,
                d0: re * re + im * im,
            }
            .bilinear(fs);
            // The cascade is 0 dB at the centre; share that out so each section is too (no
            // section amplifies what the next must attenuate).
            let gain = digital.gain(centre_omega);
            *section = digital.scaled(1.0 / gain).rounded();
        }

        // Low-pass: 8th-order Butterworth, poles at wc exp(j (pi/2 + theta_k)),
        // theta_k = (2k + 1) pi / 16; the first section carries the rectifier's pi / 2.
        let output_rate = fs / decimation as f64;
        let cutoff_hz = LOW_PASS_PER_OUTPUT_RATE * output_rate;
        let wc = prewarp(cutoff_hz);
        let mut low_pass = [Biquad::default(); LOW_PASS_SECTIONS];
        for (index, section) in low_pass.iter_mut().enumerate() {
            let theta = (2 * index + 1) as f64 * PI / (4 * LOW_PASS_SECTIONS) as f64;
            let decay = wc * libm::sin(theta);
            slowest_decay = slowest_decay.min(decay);
            let gain = if index == 0 {
                1.0 / FULL_WAVE_MEAN
            } else {
                1.0
            };
            *section = AnalogSection {
                n2: 0.0,
                n1: 0.0,
                n0: gain * wc * wc,
                d1: 2.0 * decay,
                d0: wc * wc,
            }
            .bilinear(fs)
            .rounded();
        }

        let settling_s = -libm::log(SETTLED_FRACTION) / slowest_decay;
        if settling_s.is_nan() || settling_s > MAX_SETTLING_S {
            return Err(ConfigError::Frequency);
        }
        // At most 60 s at the input rate (<= 2^32 samples for any f32 rate below 71 MHz).
        let settling_outputs = (libm::ceil(settling_s * output_rate) as u32).saturating_add(1);
        Ok(Self {
            band_pass,
            low_pass,
            sample_rate_hz,
            band_low_hz,
            band_high_hz,
            band_centre_hz: (centre_omega * fs / (2.0 * PI)) as f32,
            low_pass_cutoff_hz: cutoff_hz as f32,
            decimation,
            phase: 0,
            settling_outputs,
            blanked: settling_outputs,
            resets: 0,
        })
    }

    /// Filters `input` and writes the envelope, one sample for every `decimation` input
    /// samples, to the front of `out`. An `out` of `input.len() / decimation + 1` samples
    /// always takes all of it; a shorter one stops the input where `out` is full (see
    /// [`Processed::consumed`]). Any chunking of the same stream gives bit-identical output.
    pub fn process(&mut self, input: &[f32], out: &mut [f32]) -> Processed {
        let mut written = 0;
        for (consumed, &x) in input.iter().enumerate() {
            if self.phase == 0 && written == out.len() {
                return Processed { consumed, written };
            }
            let envelope = self.step(x);
            if self.phase == 0 {
                if let Some(slot) = out.get_mut(written) {
                    *slot = if self.blanked > 0 {
                        self.blanked -= 1;
                        f32::NAN
                    } else {
                        envelope
                    };
                    written += 1;
                }
            }
            self.phase += 1;
            if self.phase == self.decimation {
                self.phase = 0;
            }
        }
        Processed {
            consumed: input.len(),
            written,
        }
    }

    /// One input sample through every filter (the low-pass must see every sample).
    #[inline]
    fn step(&mut self, x: f32) -> f32 {
        let x = if x.abs() <= MAX_INPUT_MAGNITUDE {
            x
        } else {
            self.clear_filters();
            self.blanked = self.settling_outputs;
            self.resets = self.resets.saturating_add(1);
            0.0
        };
        let mut band = x;
        for section in self.band_pass.iter_mut() {
            band = section.run(band);
        }
        let mut envelope = band.abs();
        for section in self.low_pass.iter_mut() {
            envelope = section.run(envelope);
        }
        envelope
    }

    fn clear_filters(&mut self) {
        for section in self.band_pass.iter_mut().chain(self.low_pass.iter_mut()) {
            section.clear();
        }
    }

    /// Forgets the filter state and the decimation phase, and starts the settling blanking
    /// again, as after construction. The reset counter is kept.
    pub fn reset(&mut self) {
        self.clear_filters();
        self.phase = 0;
        self.blanked = self.settling_outputs;
    }

    /// The envelope's sample rate, `sample_rate_hz / decimation`, Hz.
    pub fn output_rate_hz(&self) -> f32 {
        (self.sample_rate_hz as f64 / self.decimation as f64) as f32
    }

    /// The input sample rate, Hz.
    pub fn sample_rate_hz(&self) -> f32 {
        self.sample_rate_hz
    }

    /// The decimation factor `D`.
    pub fn decimation(&self) -> u32 {
        self.decimation
    }

    /// The band-pass's lower -3 dB edge, Hz.
    pub fn band_low_hz(&self) -> f32 {
        self.band_low_hz
    }

    /// The band-pass's upper -3 dB edge, Hz.
    pub fn band_high_hz(&self) -> f32 {
        self.band_high_hz
    }

    /// Where the band-pass is 0 dB: the geometric centre of the edges in prewarped frequency,
    /// a little below `sqrt(low * high)`, Hz.
    pub fn band_centre_hz(&self) -> f32 {
        self.band_centre_hz
    }

    /// The low-pass's -3 dB cut-off, [`LOW_PASS_PER_OUTPUT_RATE`] times the output rate, Hz.
    pub fn low_pass_cutoff_hz(&self) -> f32 {
        self.low_pass_cutoff_hz
    }

    /// Outputs written as NaN after construction, a reset or a bad sample.
    pub fn settling_outputs(&self) -> u32 {
        self.settling_outputs
    }

    /// Bad input samples (NaN, infinite or too large) seen, each of which reset the filters.
    pub fn resets(&self) -> u32 {
        self.resets
    }

    /// The band-pass's gain at `frequency_hz` (linear), from its rounded coefficients.
    pub fn band_pass_gain(&self, frequency_hz: f32) -> f64 {
        let omega = self.omega(frequency_hz);
        self.band_pass.iter().map(|s| s.gain(omega)).product()
    }

    /// The low-pass's gain at `frequency_hz` (linear, `pi / 2` at DC), from its rounded
    /// coefficients: the envelope's gain at that frequency is this times `2 / pi`.
    pub fn low_pass_gain(&self, frequency_hz: f32) -> f64 {
        let omega = self.omega(frequency_hz);
        self.low_pass.iter().map(|s| s.gain(omega)).product()
    }

    fn omega(&self, frequency_hz: f32) -> f64 {
        2.0 * PI * frequency_hz as f64 / self.sample_rate_hz as f64
    }
}

/// An [`EnvelopeDetector`] feeding an [`Analyzer`] at the detector's output rate: push the
/// raw stream, read envelope spectra with every framing, averaging and scaling rule of the
/// analyzer. Blocks holding the detector's blanked (NaN) outputs are rejected by the analyzer
/// and counted in its [`Status`](crate::Status).
///
/// ```
/// use leakless::analysis::envelope::{EnvelopeAnalyzer, EnvelopeDetector};
/// use leakless::{Config, Correction, Scale, Shape, Window};
///
/// static HANN: Window<256> = Window::new(Shape::Hann);
/// let detector = EnvelopeDetector::new(25_600.0, 2_000.0, 4_000.0, 8).unwrap();
/// let mut envelope: EnvelopeAnalyzer<256, 129> =
///     EnvelopeAnalyzer::new(detector, &HANN, Config::new(0.0)).unwrap();
/// assert_eq!(envelope.analyzer().config().sample_rate_hz, 3_200.0);
/// envelope.push(&[0.0; 4096]);
/// let spectrum = envelope.spectrum(Scale::Peak, Correction::Amplitude);
/// assert_eq!(spectrum.bin_width_hz(), 12.5);
/// ```
#[cfg(feature = "f32")]
#[derive(Clone, Debug)]
pub struct EnvelopeAnalyzer<'a, const N: usize, const BINS: usize> {
    detector: EnvelopeDetector,
    analyzer: Analyzer<'a, N, BINS>,
}

#[cfg(feature = "f32")]
impl<'a, const N: usize, const BINS: usize> EnvelopeAnalyzer<'a, N, BINS> {
    /// Couples `detector` to an analyzer over `window` with `config`, whose sample rate is
    /// replaced by the detector's output rate (whatever `config` says). Fails as
    /// [`Analyzer::new`] does.
    pub fn new(
        detector: EnvelopeDetector,
        window: &'a Window<N>,
        config: Config,
    ) -> Result<Self, ConfigError> {
        let config = Config {
            sample_rate_hz: detector.output_rate_hz(),
            ..config
        };
        Ok(Self {
            detector,
            analyzer: Analyzer::new(window, config)?,
        })
    }

    /// Pushes raw samples (the detector's input), any number.
    pub fn push(&mut self, samples: &[f32]) -> PushReport {
        let mut envelope = [0.0f32; 64];
        let mut total = PushReport::default();
        let mut rest = samples;
        while !rest.is_empty() {
            let done = self.detector.process(rest, &mut envelope);
            let report = self.analyzer.push(&envelope[..done.written]);
            total.blocks += report.blocks;
            total.averaged += report.averaged;
            total.rejected += report.rejected;
            total.ignored += report.ignored;
            total.averages_completed += report.averages_completed;
            rest = &rest[done.consumed..];
        }
        total
    }

    /// The current envelope spectrum (see [`Analyzer::spectrum`]).
    pub fn spectrum(&self, scale: Scale, correction: Correction) -> Spectrum<BINS> {
        self.analyzer.spectrum(scale, correction)
    }

    /// The detector.
    pub fn detector(&self) -> &EnvelopeDetector {
        &self.detector
    }

    /// The analyzer of the envelope.
    pub fn analyzer(&self) -> &Analyzer<'a, N, BINS> {
        &self.analyzer
    }

    /// Resets the detector and the analyzer.
    pub fn reset(&mut self) {
        self.detector.reset();
        self.analyzer.reset();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const FS: f32 = 25_600.0;

    /// Eight blocks, then hold (the sample rate is the detector's).
    fn held() -> Config {
        Config::new(0.0).with_averaging(crate::Averaging::Linear {
            count: 8,
            when_done: crate::WhenDone::Hold,
        })
    }

    fn detector() -> EnvelopeDetector {
        EnvelopeDetector::new(FS, 2_000.0, 4_000.0, 8).unwrap()
    }

    /// The analog Butterworth magnitude at the prewarped frequency of `f` (analytic: the
    /// bilinear transform maps the digital frequency f to the analog 2 fs tan(pi f / fs)).
    fn warped(f: f64) -> f64 {
        2.0 * FS as f64 * (PI * f / FS as f64).tan()
    }

    fn analytic_band_pass(f: f64, low: f64, high: f64) -> f64 {
        let (w, w1, w2) = (warped(f), warped(low), warped(high));
        let q = (w * w - w1 * w2) / ((w2 - w1) * w);
        1.0 / (1.0 + q.powi(4)).sqrt()
    }

    // analytic: |H|^2 = 1 / (1 + q^4), q = (w^2 - w0^2) / (B w) for the 4th-order
    // Butterworth band-pass; 1 / (1 + (w / wc)^16) for the 8th-order low-pass (times pi/2).
    // The only departure is the f32 rounding of the coefficients, relative ~1e-7 per
    // coefficient, amplified by the pole sensitivity near the band edges; 1e-4 allows it.
    #[test]
    fn filters_follow_the_analytic_butterworth_responses() {
        let d = detector();
        let mut worst: f64 = 0.0;
        for f in [
            100.0, 500.0, 1000.0, 2000.0, 2500.0, 2828.0, 3500.0, 4000.0, 6000.0, 12000.0,
        ] {
            let want = analytic_band_pass(f, 2000.0, 4000.0);
            let got = d.band_pass_gain(f as f32);
            worst = worst.max((got / want - 1.0).abs());
            assert!((got / want - 1.0).abs() < 1e-4, "{f} Hz: {got} vs {want}");
        }
        println!("band-pass worst relative error {worst:e}");
        // The -3 dB edges and the 0 dB centre.
        for edge in [2000.0, 4000.0] {
            assert!((d.band_pass_gain(edge) - FRAC_1_SQRT_2).abs() < 1e-5);
        }
        assert!((d.band_pass_gain(d.band_centre_hz()) - 1.0).abs() < 1e-5);
        let centre = (warped(2000.0) * warped(4000.0)).sqrt();
        let centre_hz = (centre / (2.0 * FS as f64)).atan() * FS as f64 / PI;
        assert!((d.band_centre_hz() as f64 - centre_hz).abs() < 1e-3);

        let wc = warped(0.3 * 3200.0);
        for f in [0.0, 100.0, 500.0, 800.0, 960.0, 1200.0, 2400.0] {
            let want = (PI / 2.0) / (1.0 + (warped(f) / wc).powi(16)).sqrt();
            let got = d.low_pass_gain(f as f32);
            assert!((got / want - 1.0).abs() < 1e-4, "{f} Hz: {got} vs {want}");
        }
        assert_eq!(d.low_pass_cutoff_hz(), 960.0);
    }

    // The design is exact; what moves the low-pass's gain is rounding its coefficients to f32
    // (relative 6e-8), which a pole pair at a distance delta = 1 - r from z = 1 amplifies by
    // up to about 1 / delta^2 in the DC gain: at D = 256 the slowest pair has delta = 1.4e-3,
    // a bound of a few percent. The module docs promise 1 % up to MAX_DECIMATION (measured:
    // 0.3 % at D = 256, under 0.002 % at D <= 8); this holds it, from the rounded
    // coefficients and in the time domain (a steady carrier's mean output, which adds the
    // f32 state rounding).
    #[test]
    fn low_pass_gain_holds_up_to_the_largest_decimation() {
        for d in [1, 8, 32, 128, MAX_DECIMATION] {
            let mut det = EnvelopeDetector::new(FS, 2_000.0, 4_000.0, d).unwrap();
            let dc = det.low_pass_gain(0.0) / (PI / 2.0);
            let at_cutoff = det.low_pass_gain(det.low_pass_cutoff_hz()) / (PI / 2.0);
            let out = run(&mut det, &am(4 * 25_600, 0.5, 0.0, 0.0, 2828.0));
            let settled = &out[det.settling_outputs() as usize..];
            let mean = settled.iter().map(|&x| x as f64).sum::<f64>() / settled.len() as f64;
            let mean_ratio = mean / (0.5 * det.band_pass_gain(2828.0));
            println!("D {d}: low-pass DC gain {dc:.6}, carrier mean / expected {mean_ratio:.6}");
            assert!((dc - 1.0).abs() < 0.01, "D {d}: DC gain {dc}");
            assert!(
                (at_cutoff * 2f64.sqrt() - 1.0).abs() < 0.01,
                "D {d}: {at_cutoff}"
            );
            assert!(
                (mean_ratio - 1.0).abs() < 0.01,
                "D {d}: mean ratio {mean_ratio}"
            );
        }
    }

    #[test]
    fn impossible_settings_are_typed_errors() {
        for fs in [0.0, -1.0, f32::NAN, f32::INFINITY] {
            assert_eq!(
                EnvelopeDetector::new(fs, 2e3, 4e3, 8).err(),
                Some(ConfigError::SampleRate)
            );
        }
        for (low, high) in [
            (0.0, 4e3),
            (-1.0, 4e3),
            (4e3, 4e3),
            (5e3, 4e3),
            (2e3, 12_800.0),
            (f32::NAN, 4e3),
            (2e3, f32::INFINITY),
            // Rings for hours: refused rather than blanking the output that long.
            (1e-30, 1e-29),
            (1000.0, 1000.0001),
        ] {
            assert_eq!(
                EnvelopeDetector::new(FS, low, high, 8).err(),
                Some(ConfigError::Frequency),
                "{low}..{high}"
            );
        }
        for d in [0, MAX_DECIMATION + 1] {
            assert_eq!(
                EnvelopeDetector::new(FS, 2e3, 4e3, d).err(),
                Some(ConfigError::Decimation)
            );
        }
        assert!(EnvelopeDetector::new(FS, 2e3, 4e3, MAX_DECIMATION).is_ok());
        assert!(EnvelopeDetector::new(FS, 2e3, 4e3, 1).is_ok());
    }

    /// `A (1 + m cos(2 pi fm t)) cos(2 pi fc t)`.
    fn am(len: usize, a: f64, m: f64, fm: f64, fc: f64) -> Vec<f32> {
        (0..len)
            .map(|n| {
                let t = n as f64 / FS as f64;
                (a * (1.0 + m * (2.0 * PI * fm * t).cos()) * (2.0 * PI * fc * t).cos()) as f32
            })
            .collect()
    }

    fn run(d: &mut EnvelopeDetector, input: &[f32]) -> Vec<f32> {
        let mut out = vec![0.0; input.len() / d.decimation() as usize + 1];
        let done = d.process(input, &mut out);
        assert_eq!(done.consumed, input.len());
        out.truncate(done.written);
        out
    }

    /// An upper bound (relative to the envelope) on what the rectifier's harmonics leave near
    /// the frequencies `offsets_hz` after folding at the input rate (analytic: |cos| has
    /// harmonics at 2 k fc of 4 / (pi (4 k^2 - 1)), times the low-pass's pi/2 that is
    /// 2 / (4 k^2 - 1) of the envelope; each carries the envelope's modulation with it). A
    /// harmonic counts if it folds within `near_hz` of an offset.
    fn folded_harmonics_bound(fc: f64, offsets_hz: &[f64], near_hz: f64) -> f64 {
        let fs = FS as f64;
        (1..20_000u32)
            .map(f64::from)
            .filter(|k| {
                let folded = (2.0 * k * fc).rem_euclid(fs);
                let folded = folded.min(fs - folded);
                offsets_hz.iter().any(|o| (folded - o).abs() < near_hz)
            })
            .map(|k| 2.0 / (4.0 * k * k - 1.0))
            .sum()
    }

    // analytic: a steady carrier A cos(wc t) rectified has mean 2A/pi; times the low-pass's
    // pi/2 the output's mean is A |H_bp(fc)|. What is left: the rectifier's folded harmonics
    // (tones; those folding within 1 Hz of DC do not average out over 2 s: bounded by
    // `folded_harmonics_bound`) and f32 rounding in the filters (~1e-6, allowance 2e-5).
    #[test]
    fn a_steady_carrier_reads_its_amplitude() {
        let mut d = detector();
        for fc in [2828.0, 2200.0, 3700.0] {
            d.reset();
            let out = run(&mut d, &am(2 * 25_600, 0.5, 0.0, 0.0, fc));
            let settled = &out[d.settling_outputs() as usize..];
            assert!(settled.iter().all(|x| x.is_finite()));
            let mean = settled.iter().map(|&x| x as f64).sum::<f64>() / settled.len() as f64;
            let want = 0.5 * d.band_pass_gain(fc as f32);
            let tolerance = 2e-5 + folded_harmonics_bound(fc, &[0.0], 1.0);
            println!("carrier {fc} Hz: mean {mean}, expected {want}, tolerance {tolerance:e}");
            assert!((mean / want - 1.0).abs() < tolerance, "{mean} vs {want}");
        }
    }

    // analytic: full-wave detection of A (1 + m cos wm t) cos wc t gives, after the
    // low-pass and its pi/2, A (1 + m cos wm t) when the band-pass passes carrier and both
    // sidebands alike: a line of peak amplitude A m at fm. The band-pass weighs the sidebands
    // at fc +- fm by |H(fc +- fm)| (their mean is the expected gain; to first order in m the
    // phase shifts only delay the envelope), and the low-pass by its gain at fm times 2/pi.
    // Expected: A m (|H(fc-fm)| + |H(fc+fm)|) / 2 * |H_lp(fm)| 2/pi. fm = 100 Hz is line 32 of
    // a 1024-line analysis at 3.2 kHz (3.125 Hz), so the Hann amplitude-corrected peak reads
    // it with no scalloping loss. The rest of the error budget: the spread between the two
    // sideband gains (computed, added to the tolerance), the rectifier's folded harmonics
    // that land within two lines of 0, fm or 2 fm (their sidebands then fall on fm; bounded by
    // `folded_harmonics_bound`), Hann leakage from lines further away (below 1e-4 at 2 lines
    // of offset, nil beyond 10) and f32 filter rounding (~1e-6): tolerance 1e-3 plus both.
    #[test]
    fn an_am_carrier_in_band_gives_its_modulation_line() {
        static HANN: Window<1024> = Window::new(crate::Shape::Hann);
        let (a, m, fm) = (2.0, 0.5, 100.0);
        for fc in [2828.0, 2500.0, 3400.0] {
            let mut env: EnvelopeAnalyzer<1024, 513> =
                EnvelopeAnalyzer::new(detector(), &HANN, held()).unwrap();
            let input = am(8 * 1024 * 10, a, m, fm, fc);
            let report = env.push(&input);
            assert!(report.averages_completed >= 1, "{report:?}");
            let d = env.detector();
            let (lower, upper) = (
                d.band_pass_gain((fc - fm) as f32),
                d.band_pass_gain((fc + fm) as f32),
            );
            let low_pass = d.low_pass_gain(fm as f32) * 2.0 / PI;
            let want = a * m * (lower + upper) / 2.0 * low_pass;
            let spread = (upper - lower).abs() / (lower + upper)
                + folded_harmonics_bound(fc, &[0.0, fm, 2.0 * fm], 2.0 * 3.125);
            let peak = env.spectrum(Scale::Peak, Correction::Amplitude);
            let got = peak.values()[32] as f64;
            let error = got / want - 1.0;
            println!("fc {fc} Hz: line at fm {got}, expected {want}, relative error {error:e}");
            assert!(error.abs() < 1e-3 + spread, "{got} vs {want}");
            // Full-wave detection has no 2 fm harmonic (a square law would give A^2 m^2 / 4).
            assert!((peak.values()[64] as f64) < 1e-3 * want);
        }
    }

    // analytic: a carrier outside the band is attenuated by |H_bp| there (Butterworth, about
    // 1/60 two octaves down, 12 dB/octave); its modulation line is at most A m times the
    // largest band-pass gain over fc +- fm (plus the same 1e-3 allowance), far below A m.
    #[test]
    fn a_carrier_outside_the_band_gives_next_to_nothing() {
        static HANN: Window<1024> = Window::new(crate::Shape::Hann);
        let (a, m, fm) = (2.0, 0.5, 100.0);
        for fc in [500.0, 9000.0] {
            let mut env: EnvelopeAnalyzer<1024, 513> =
                EnvelopeAnalyzer::new(detector(), &HANN, held()).unwrap();
            env.push(&am(8 * 1024 * 10, a, m, fm, fc));
            let d = env.detector();
            let bound = d
                .band_pass_gain((fc - fm) as f32)
                .max(d.band_pass_gain((fc + fm) as f32));
            let got = env.spectrum(Scale::Peak, Correction::Amplitude).values()[32] as f64;
            println!("fc {fc} Hz: line {got}, in-band would be {}", a * m);
            assert!(got <= a * m * bound * 1.001, "{got}");
            assert!(got < 0.03 * a * m);
        }
    }

    #[test]
    fn chunking_does_not_change_the_output() {
        let mut input = am(20_000, 1.0, 0.3, 87.0, 3000.0);
        input[7777] = f32::NAN;
        let whole = run(&mut detector(), &input);
        let mut chunked = detector();
        let mut pieces = Vec::new();
        let mut rest = &input[..];
        let mut out = [0.0f32; 5];
        for &size in [1usize, 7, 8, 9, 64, 0, 333, 1000, 3].iter().cycle() {
            if rest.is_empty() {
                break;
            }
            let (now, later) = rest.split_at(size.min(rest.len()));
            // A small `out` also exercises the stop-when-full path.
            let mut now = now;
            while !now.is_empty() {
                let done = chunked.process(now, &mut out);
                pieces.extend_from_slice(&out[..done.written]);
                now = &now[done.consumed..];
            }
            rest = later;
        }
        assert_eq!(whole.len(), pieces.len());
        assert!(whole
            .iter()
            .zip(&pieces)
            .all(|(a, b)| a.to_bits() == b.to_bits()));
    }

    // After a bad sample the filters restart from zero: the output from there on is exactly
    // that of a fresh detector fed the rest of the stream (the bad sample read as 0), so no
    // state is poisoned; the outputs in between are NaN, flagged, never silent garbage.
    #[test]
    fn a_bad_sample_resets_and_blanks_instead_of_poisoning() {
        for bad in [f32::NAN, f32::INFINITY, -f32::INFINITY, 1e30] {
            let mut input = am(16_000, 1.0, 0.3, 87.0, 3000.0);
            let at = 8 * 700; // on the decimation grid, so the fresh detector's phase matches
            input[at] = bad;
            let mut d = detector();
            let out = run(&mut d, &input);
            assert_eq!(d.resets(), 1);
            let settle = d.settling_outputs() as usize;
            let first_bad = at / 8;
            assert!(out[first_bad..first_bad + settle]
                .iter()
                .all(|x| x.is_nan()));
            assert!(out[settle..first_bad].iter().all(|x| x.is_finite()));
            assert!(out[first_bad + settle..].iter().all(|x| x.is_finite()));
            let mut rest = input[at..].to_vec();
            rest[0] = 0.0;
            let fresh = run(&mut detector(), &rest);
            assert!(out[first_bad..]
                .iter()
                .zip(&fresh)
                .all(|(a, b)| a.to_bits() == b.to_bits()));
        }
        // Through an analyzer: the blocks holding NaN are rejected and counted.
        static HANN: Window<256> = Window::new(crate::Shape::Hann);
        let mut env: EnvelopeAnalyzer<256, 129> =
            EnvelopeAnalyzer::new(detector(), &HANN, Config::new(0.0)).unwrap();
        let mut input = am(8 * 256 * 8, 1.0, 0.3, 87.0, 3000.0);
        input[8 * 256 * 4] = f32::NAN;
        let report = env.push(&input);
        assert_eq!(report.blocks, 8);
        assert!(report.rejected >= 2, "{report:?}"); // the start-up block and the reset's
        assert_eq!(env.analyzer().status().rejected_non_finite, report.rejected);
        assert!(env
            .analyzer()
            .spectrum(Scale::Rms, Correction::Energy)
            .values()[5]
            .is_finite());
    }

    // The invented pump scenario (crate::demo) strikes its outer race at its own derived
    // BPFO and rings 3 kHz. This checks the pipeline against the scenario's *own* BPFO (a
    // consistency check, not a reference value): the strongest envelope line above DC lies
    // within one line of it.
    #[cfg(feature = "demo")]
    #[test]
    fn demo_pump_shows_bpfo_in_its_envelope_spectrum() {
        use crate::demo::PumpScenario;
        static HANN: Window<1024> = Window::new(crate::Shape::Hann);
        let mut pump = PumpScenario::new();
        let per_volt = (1.0 / pump.volts_per_m_s2()) as f32;
        let config = held().with_sensitivity(per_volt).with_unit("m/s^2");
        let mut env: EnvelopeAnalyzer<1024, 513> = EnvelopeAnalyzer::new(
            EnvelopeDetector::new(pump.sample_rate_hz() as f32, 2_000.0, 4_000.0, 8).unwrap(),
            &HANN,
            config,
        )
        .unwrap();
        let mut volts = [0.0f32; 2048];
        while !env.analyzer().is_done() && env.analyzer().status().blocks_seen < 100 {
            pump.fill_volts(&mut volts);
            env.push(&volts);
        }
        let peak = env.spectrum(Scale::Peak, Correction::Amplitude);
        let (strongest, level) =
            peak.values()
                .iter()
                .enumerate()
                .skip(2)
                .fold(
                    (0, 0.0f32),
                    |best, (k, &v)| if v > best.1 { (k, v) } else { best },
                );
        let bpfo_line = pump.bearing_frequencies().bpfo_hz / peak.bin_width_hz() as f64;
        println!(
            "demo: strongest envelope line {strongest} ({} Hz, {level} m/s^2 peak), \
             BPFO {} Hz = line {bpfo_line:.2}",
            peak.frequency_hz(strongest),
            pump.bearing_frequencies().bpfo_hz
        );
        assert!((strongest as f64 - bpfo_line).abs() <= 1.0);
    }
}
