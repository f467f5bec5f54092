//! Several channels sampled together (a triaxial sensor, or force and response of an impact
//! test): one frame clock, auto spectra per channel and cross spectra between chosen pairs.
//!
//! ```text
//! interleaved or per-channel samples -> ChannelFramer (one clock, one buffer per channel)
//!   -> condition every channel (a bad sample on any channel rejects the block on all)
//!   -> per channel: detrend + window into the shared work block -> FFT -> |X|^2 average
//!   -> per pair (x, y): conj(X) Y into a complex average (needs X held beside Y)
//! ```
//!
//! The stages are the single-channel analyzer's: [`ChannelFramer`] beside [`Framer`]
//! (frame.rs), [`Conditioning`] (condition.rs), [`Averager`] (average.rs, the complex average
//! is two of them, real and imaginary parts, which linear and exponential averaging treat
//! independently) and the read-out through [`LineGains`] / [`Conversion`] (scale.rs).
//!
//! # Cross-spectrum conventions
//!
//! The cross spectrum of pair `(x, y)` is `G_xy[k] = g conj(X[k]) Y[k]`, the convention of
//! `scipy.signal.csd(x, y)`, with the same one-sided gains `g` as the auto spectra (DC and
//! Nyquist not doubled). When the two channels use different windows, `g` is the geometric
//! mean of their gains. From the averages: coherence `|G_xy|^2 / (G_xx G_yy)`, `H1 = G_xy /
//! G_xx` and `H2 = G_yy / G_yx` (Bendat and Piersol, *Random Data*, 4th ed., 2010, from
//! memory); see [`crate::analysis::frf`].
//!
//! # Memory
//!
//! Per channel: its framer buffer (`4 N` bytes) and its power average (`4 BINS`); per pair
//! two averages (`8 BINS`); shared: one work block (`4 N`), and with pairs one more block
//! (`4 N`, the `H` generic) that holds the reference channel's transform while its partner is
//! transformed. [`MultiAnalyzer`] (no pairs) and [`CrossAnalyzer`] (pairs) fix `H`.
//!
//! [`Framer`]: crate::spectrum::frame::Framer

use crate::error::ConfigError;
use crate::fft::float::{is_supported, rfft, Complex32, RealSpectrum};
use crate::spectrum::average::{Averager, Averaging};
use crate::spectrum::condition::{detrend_and_window, BlockCheck, Conditioning};
use crate::spectrum::config::{Config, PushReport, Status};
use crate::spectrum::frame::ChannelFramer;
use crate::spectrum::scale::{Conversion, Correction, LineGains, Scale, Spectrum, SpectrumInfo};
use crate::window::Window;

/// The settings that differ between channels: what a channel's input unit is worth, where
/// it overloads, and its unit name. Everything else comes from the shared [`Config`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Channel {
    /// Engineering units per input unit (see [`Config::sensitivity`]).
    pub sensitivity: f32,
    /// Overload limit in input units, or `None` (see [`Config::full_scale`]).
    pub full_scale: Option<f32>,
    /// Engineering unit name, e.g. `"N"` or `"m/s^2"`.
    pub unit: &'static str,
}

impl Channel {
    /// Sensitivity 1, no full scale, the given unit.
    pub const fn new(unit: &'static str) -> Self {
        Self {
            sensitivity: 1.0,
            full_scale: None,
            unit,
        }
    }

    /// The sensitivity, full scale and unit of `config`.
    pub const fn of_config(config: &Config) -> Self {
        Self {
            sensitivity: config.sensitivity,
            full_scale: config.full_scale,
            unit: config.unit,
        }
    }

    /// Sensitivity, engineering units per input unit.
    pub const fn with_sensitivity(mut self, sensitivity: f32) -> Self {
        self.sensitivity = sensitivity;
        self
    }

    /// Full scale in input units.
    pub const fn with_full_scale(mut self, full_scale: f32) -> Self {
        self.full_scale = Some(full_scale);
        self
    }
}

/// Two channels whose cross spectrum is averaged: `x` the reference (input, force), `y` the
/// response. The cross spectrum is `conj(X) Y`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Pair {
    /// Reference channel index.
    pub x: usize,
    /// Response channel index.
    pub y: usize,
}

impl Pair {
    /// The pair `(x, y)`.
    pub const fn new(x: usize, y: usize) -> Self {
        Self { x, y }
    }
}

/// Why a per-channel push was refused (nothing was taken).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum PushError {
    /// The channel slices differ in length.
    UnequalLengths,
    /// An interleaved push ended inside a frame; finish the frame with
    /// [`ChannelAnalyzer::push_interleaved`] first.
    InsideFrame,
}

impl core::fmt::Display for PushError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::UnequalLengths => "channel slices must have the same length",
            Self::InsideFrame => "the last interleaved push ended inside a frame",
        })
    }
}

impl core::error::Error for PushError {}

/// A one-sided cross spectrum `G_xy` (complex), on a power-like scale.
#[derive(Clone, Debug, PartialEq)]
pub struct CrossSpectrum<const BINS: usize> {
    /// Real parts, DC first.
    pub re: [f32; BINS],
    /// Imaginary parts.
    pub im: [f32; BINS],
    /// [`Scale::Power`] or [`Scale::Psd`].
    pub scale: Scale,
    /// Blocks averaged.
    pub averages: u32,
    /// Line spacing, Hz.
    pub bin_width_hz: f32,
}

impl<const BINS: usize> CrossSpectrum<BINS> {
    /// Line `k` as a complex value, `None` beyond Nyquist.
    pub fn line(&self, k: usize) -> Option<Complex32> {
        Some(Complex32::new(*self.re.get(k)?, *self.im.get(k)?))
    }
}

/// The multi-channel analyzer: `C` channels, `P` cross-spectrum pairs, `H` held blocks
/// (`H = 1` with pairs, `0` without; use the aliases [`MultiAnalyzer`] and [`CrossAnalyzer`]).
///
/// # Generics
///
/// * `N`, `BINS`: as for [`Analyzer`](crate::Analyzer) (compile-time checked).
/// * `C`: channels, `1 ..= 8`.
/// * `P`: pairs with a cross spectrum; `H`: `1` if `P > 0`, else `0` (compile-time checked).
///
/// ```compile_fail
/// use leakless::spectrum::multi::ChannelAnalyzer;
/// use leakless::{Config, Shape, Window};
/// static HANN: Window<64> = Window::new(Shape::Hann);
/// // error: a pair needs the held block (H = 1)
/// let _ = ChannelAnalyzer::<64, 33, 2, 1, 0>::new([&HANN; 2], Config::new(64.0), [leakless::spectrum::multi::Channel::new(""); 2], [leakless::spectrum::multi::Pair::new(0, 1)]);
/// ```
///
/// # Example
///
/// ```
/// use leakless::spectrum::multi::{Channel, MultiAnalyzer};
/// use leakless::{Averaging, Config, Correction, Scale, Shape, WhenDone, Window};
///
/// static HANN: Window<1024> = Window::new(Shape::Hann);
/// let config = Config::new(1024.0)
///     .with_averaging(Averaging::Linear { count: 2, when_done: WhenDone::Hold });
/// let channels = [Channel::new("g"); 3];
/// let mut triaxial: MultiAnalyzer<1024, 513, 3> =
///     MultiAnalyzer::new([&HANN; 3], config, channels, []).unwrap();
/// // x, y, z interleaved as a FIFO delivers them: 1, 2 and 3 g (peak) at 100 Hz.
/// let fifo: Vec<f32> = (0..3 * 2048)
///     .map(|i| {
///         let (n, axis) = (i / 3, i % 3);
///         (axis + 1) as f32 * (2.0 * core::f32::consts::PI * 100.0 * n as f32 / 1024.0).sin()
///     })
///     .collect();
/// for chunk in fifo.chunks(100) {
///     // chunks end anywhere, also inside a frame
///     triaxial.push_interleaved(chunk);
/// }
/// assert!(triaxial.is_done());
/// for axis in 0..3 {
///     let peak = triaxial.spectrum(axis, Scale::Peak, Correction::Amplitude);
///     assert!((peak.values()[100] - (axis + 1) as f32).abs() < 1e-4);
/// }
/// ```
#[derive(Clone, Debug)]
pub struct ChannelAnalyzer<
    'a,
    const N: usize,
    const BINS: usize,
    const C: usize,
    const P: usize,
    const H: usize,
> {
    framer: ChannelFramer<f32, N, C>,
    state: State<'a, N, BINS, C, P, H>,
}

/// A multi-channel analyzer with auto spectra only (`P = 0`, no held block).
pub type MultiAnalyzer<'a, const N: usize, const BINS: usize, const C: usize> =
    ChannelAnalyzer<'a, N, BINS, C, 0, 0>;

/// A multi-channel analyzer with `P` cross-spectrum pairs (one held block).
pub type CrossAnalyzer<'a, const N: usize, const BINS: usize, const C: usize, const P: usize> =
    ChannelAnalyzer<'a, N, BINS, C, P, 1>;

/// Everything but the framer (so a block borrowed from the framer can be processed).
#[derive(Clone, Debug)]
struct State<'a, const N: usize, const BINS: usize, const C: usize, const P: usize, const H: usize>
{
    windows: [&'a Window<N>; C],
    work: [f32; N],
    held: [[f32; N]; H],
    autos: [Averager<BINS>; C],
    cross_re: [Averager<BINS>; P],
    cross_im: [Averager<BINS>; P],
    conditioning: [Conditioning; C],
    channels: [Channel; C],
    pairs: [Pair; P],
    config: Config,
    status: [Status; C],
    blocks_rejected: u32,
}

impl<'a, const N: usize, const BINS: usize, const C: usize, const P: usize, const H: usize>
    ChannelAnalyzer<'a, N, BINS, C, P, H>
{
    /// An analyzer over one window per channel (pass `[&WINDOW; C]` for one shared table),
    /// the shared `config` (sample rate, overlap, averaging, detrend, overload policy; its
    /// sensitivity, full scale and unit are replaced by each channel's), the channels and the
    /// pairs. Fails on the first setting that cannot work, as [`Config::validate`] for every
    /// window, [`ConfigError::ChannelPair`] for a pair outside the channels or of one channel
    /// with itself, [`ConfigError::CrossAveraging`] for peak hold with pairs.
    pub fn new(
        windows: [&'a Window<N>; C],
        config: Config,
        channels: [Channel; C],
        pairs: [Pair; P],
    ) -> Result<Self, ConfigError> {
        const {
            assert!(is_supported(N), "N must be a power of two from 64 to 4096");
            assert!(BINS == N / 2 + 1, "BINS must be N/2 + 1");
            assert!(C >= 1 && C <= 8, "C must be 1 ..= 8 channels");
            assert!(H == (P > 0) as usize, "H must be 1 with pairs, 0 without");
        }
        let mut overlap = 0;
        for window in &windows {
            overlap = config.validate(N, window.factors())?;
        }
        if P > 0 && matches!(config.averaging, Averaging::PeakHold) {
            return Err(ConfigError::CrossAveraging);
        }
        for pair in &pairs {
            if pair.x >= C || pair.y >= C || pair.x == pair.y {
                return Err(ConfigError::ChannelPair);
            }
        }
        let mut conditioning = [Conditioning::new(config.detrend, 1.0, None, config.overload)?; C];
        for (slot, channel) in conditioning.iter_mut().zip(&channels) {
            *slot = Conditioning::new(
                config.detrend,
                channel.sensitivity,
                channel.full_scale,
                config.overload,
            )?;
        }
        let averager = Averager::new(config.averaging)?;
        Ok(Self {
            framer: ChannelFramer::new(overlap)?,
            state: State {
                windows,
                work: [0.0; N],
                held: [[0.0; N]; H],
                autos: core::array::from_fn(|_| averager.clone()),
                cross_re: core::array::from_fn(|_| averager.clone()),
                cross_im: core::array::from_fn(|_| averager.clone()),
                conditioning,
                channels,
                pairs,
                config,
                status: [Status::default(); C],
                blocks_rejected: 0,
            },
        })
    }

    /// Pushes interleaved samples (`ch0 ch1 .. ch(C-1) ch0 ..`, input units), any number: a
    /// chunk may end inside a frame and the next one continues it. Blocks completed are
    /// processed now. Any chunking gives bit-identical results, and the same as
    /// [`ChannelAnalyzer::push_channels`] of the de-interleaved samples.
    pub fn push_interleaved(&mut self, samples: &[f32]) -> PushReport {
        let mut report = PushReport::default();
        let mut input = samples;
        while let Some(blocks) = self.framer.next_interleaved(&mut input) {
            report.add(self.state.process(blocks));
        }
        report
    }

    /// [`ChannelAnalyzer::push_interleaved`] for `i16` counts (each channel's `sensitivity`
    /// is then per count): converted exactly to `f32` in chunks on the stack.
    pub fn push_interleaved_counts(&mut self, counts: &[i16]) -> PushReport {
        let mut report = PushReport::default();
        let mut converted = [0.0f32; 96];
        for chunk in counts.chunks(converted.len()) {
            for (y, &x) in converted.iter_mut().zip(chunk) {
                *y = f32::from(x);
            }
            report.add(self.push_interleaved(&converted[..chunk.len()]));
        }
        report
    }

    /// Pushes one slice per channel, all the same length. Refused (nothing taken) when the
    /// lengths differ or the last interleaved push ended inside a frame.
    pub fn push_channels(&mut self, channels: &[&[f32]; C]) -> Result<PushReport, PushError> {
        let len = channels.first().map_or(0, |c| c.len());
        if channels.iter().any(|c| c.len() != len) {
            return Err(PushError::UnequalLengths);
        }
        if self.framer.next_channel() != 0 {
            return Err(PushError::InsideFrame);
        }
        let mut report = PushReport::default();
        let mut taken = 0;
        while let Some(blocks) = self.framer.next_channels(channels, &mut taken) {
            report.add(self.state.process(blocks));
        }
        Ok(report)
    }

    /// Channel `channel`'s auto spectrum on `scale` with `correction`, as
    /// [`Analyzer::spectrum`](crate::Analyzer::spectrum) would read it. NaN values (a flag)
    /// for a channel index beyond `C`.
    pub fn spectrum(&self, channel: usize, scale: Scale, correction: Correction) -> Spectrum<BINS> {
        let s = &self.state;
        let info = s.info(channel.min(C - 1));
        match s.autos.get(channel) {
            Some(average) => Spectrum::from_squares(
                average.squares(),
                average.gain() / sensitivity_squared(s.channels[channel].sensitivity),
                scale,
                correction,
                info,
            ),
            None => {
                let bad = SpectrumInfo {
                    block_len: 0,
                    ..info
                };
                Spectrum::from_squares(&[0.0; BINS], 1.0, scale, correction, bad)
            }
        }
    }

    /// Pair `pair`'s cross spectrum on `scale` (power-like: [`Scale::Power`] with
    /// `correction`, or [`Scale::Psd`]; an amplitude scale gives NaN values, a flag), or
    /// `None` for a pair index beyond `P`. Zeros before the first accepted block.
    pub fn cross_spectrum(
        &self,
        pair: usize,
        scale: Scale,
        correction: Correction,
    ) -> Option<CrossSpectrum<BINS>> {
        let s = &self.state;
        let p = *s.pairs.get(pair)?;
        let (re_avg, im_avg) = (&s.cross_re[pair], &s.cross_im[pair]);
        let mut out = CrossSpectrum {
            re: [0.0; BINS],
            im: [0.0; BINS],
            scale,
            averages: re_avg.averaged(),
            bin_width_hz: s.config.sample_rate_hz / N as f32,
        };
        if scale.is_amplitude() {
            out.re = [f32::NAN; BINS];
            out.im = [f32::NAN; BINS];
            return Some(out);
        }
        if re_avg.averaged() == 0 {
            return Some(out);
        }
        let gains = |c: usize| {
            LineGains::of(
                scale,
                correction,
                s.windows[c].factors(),
                s.config.sample_rate_hz,
                N,
            )
        };
        let (gx, gy) = (gains(p.x), gains(p.y));
        let to = LineGains {
            interior: libm::sqrt(gx.interior * gy.interior),
            edge: libm::sqrt(gx.edge * gy.edge),
            amplitude: false,
        };
        let sxy = s.channels[p.x].sensitivity as f64 * s.channels[p.y].sensitivity as f64;
        let from = LineGains::squared_magnitudes(re_avg.gain() / sxy);
        let conversion = Conversion::between(from, to);
        for (k, (re, im)) in out.re.iter_mut().zip(out.im.iter_mut()).enumerate() {
            *re = conversion.apply(re_avg.squares()[k], k, BINS);
            *im = conversion.apply(im_avg.squares()[k], k, BINS);
        }
        Some(out)
    }

    /// The averaged `mean |X[k]|^2` of `channel` and `mean conj(X[k]) Y[k]` of pair `pair`
    /// in engineering units, with no window or one-sided factor: what the frequency-response
    /// estimators divide ([`crate::analysis::frf`]). `None` for an index out of range.
    pub fn raw_auto(&self, channel: usize, k: usize) -> Option<f64> {
        let s = &self.state;
        let average = s.autos.get(channel)?;
        let gain = average.gain();
        if gain == 0.0 {
            return Some(0.0);
        }
        let value = *average.squares().get(k)? as f64 / gain;
        Some(value * sensitivity_squared(s.channels[channel].sensitivity))
    }

    /// See [`ChannelAnalyzer::raw_auto`]: pair `pair`'s averaged `conj(X) Y` as (re, im).
    pub fn raw_cross(&self, pair: usize, k: usize) -> Option<(f64, f64)> {
        let s = &self.state;
        let p = s.pairs.get(pair)?;
        let (re, im) = (&s.cross_re[pair], &s.cross_im[pair]);
        let gain = re.gain();
        if gain == 0.0 {
            return Some((0.0, 0.0));
        }
        let sxy = s.channels[p.x].sensitivity as f64 * s.channels[p.y].sensitivity as f64;
        let scale = sxy / gain;
        Some((
            *re.squares().get(k)? as f64 * scale,
            *im.squares().get(k)? as f64 * scale,
        ))
    }

    /// The frequency response of pair `pair` at line `k` (H1, H2, coherence), `None` out of
    /// range; see [`crate::analysis::frf`].
    pub fn frf_line(&self, pair: usize, k: usize) -> Option<crate::analysis::frf::FrfLine> {
        let p = *self.state.pairs.get(pair)?;
        let gxx = self.raw_auto(p.x, k)?;
        let gyy = self.raw_auto(p.y, k)?;
        let (re, im) = self.raw_cross(pair, k)?;
        Some(crate::analysis::frf::FrfLine::from_averages(
            gxx, gyy, re, im,
        ))
    }

    /// Channel `channel`'s counters (the blocks it saw, its own non-finite and overload
    /// flags; `blocks_averaged` and the average counts are the same on every channel).
    /// Default counters for an index beyond `C`.
    pub fn status(&self, channel: usize) -> Status {
        self.state.status.get(channel).copied().unwrap_or_default()
    }

    /// Blocks kept out of every channel's average because some channel had a bad sample.
    pub fn blocks_rejected(&self) -> u32 {
        self.state.blocks_rejected
    }

    /// Blocks in the current average (the same on every channel).
    pub fn averages(&self) -> u32 {
        self.state.autos[0].averaged()
    }

    /// Whether a linear average has all its blocks.
    pub fn is_done(&self) -> bool {
        self.state.autos[0].is_done()
    }

    /// Forgets the buffered samples, the averages and the counters.
    pub fn reset(&mut self) {
        self.framer.clear();
        let s = &mut self.state;
        for a in s
            .autos
            .iter_mut()
            .chain(&mut s.cross_re)
            .chain(&mut s.cross_im)
        {
            a.reset();
        }
        s.status = [Status::default(); C];
        s.blocks_rejected = 0;
    }

    /// The shared settings as given.
    pub fn config(&self) -> &Config {
        &self.state.config
    }

    /// The channels' settings.
    pub fn channels(&self) -> &[Channel; C] {
        &self.state.channels
    }

    /// The pairs.
    pub fn pairs(&self) -> &[Pair; P] {
        &self.state.pairs
    }

    /// Channel `channel`'s window (the last channel's for an index beyond `C`).
    pub fn window(&self, channel: usize) -> &'a Window<N> {
        self.state.windows[channel.min(C - 1)]
    }

    /// Samples between block starts, `N - overlap`.
    pub fn hop(&self) -> usize {
        self.framer.hop()
    }

    /// Whole frames buffered towards the next block.
    pub fn buffered(&self) -> usize {
        self.framer.buffered()
    }

    /// Line spacing `fs / N`, Hz.
    pub fn bin_width_hz(&self) -> f32 {
        self.state.config.sample_rate_hz / N as f32
    }
}

fn sensitivity_squared(s: f32) -> f64 {
    s as f64 * s as f64
}

impl<const N: usize, const BINS: usize, const C: usize, const P: usize, const H: usize>
    State<'_, N, BINS, C, P, H>
{
    fn info(&self, channel: usize) -> SpectrumInfo {
        SpectrumInfo {
            sample_rate_hz: self.config.sample_rate_hz,
            block_len: N,
            factors: *self.windows[channel].factors(),
            unit: self.channels[channel].unit,
            averages: self.autos[channel].averaged(),
        }
    }

    /// One block of every channel through the pipeline.
    fn process(&mut self, blocks: &[[f32; N]; C]) -> PushReport {
        let mut report = PushReport {
            blocks: 1,
            ..PushReport::default()
        };
        let mut checks = [BlockCheck {
            non_finite: false,
            overloaded: false,
            offset: 0.0,
        }; C];
        let mut accepted = true;
        for c in 0..C {
            let status = &mut self.status[c];
            status.blocks_seen = status.blocks_seen.saturating_add(1);
            let check = self.conditioning[c].inspect(&blocks[c]);
            if check.non_finite {
                status.rejected_non_finite = status.rejected_non_finite.saturating_add(1);
            }
            if check.overloaded {
                status.overloaded = status.overloaded.saturating_add(1);
            }
            accepted &= self.conditioning[c].accepts(&check);
            checks[c] = check;
        }
        if !accepted {
            // Synchronous averages: one bad channel keeps the block out of all of them.
            self.blocks_rejected = self.blocks_rejected.saturating_add(1);
            report.rejected = 1;
            return report;
        }
        if !self.autos[0].wants_block() {
            report.ignored = 1;
            return report;
        }
        let mut auto_done = [false; C];
        // The reference channel's transform stays in the held block while its partners are
        // transformed in the work block (pairs sharing a reference in a row reuse it).
        let mut held = self.held.first_mut();
        let mut reference: Option<(usize, RealSpectrum<'_>)> = None;
        for p in 0..P {
            let Pair { x, y } = self.pairs[p];
            if reference.as_ref().map(|r| r.0) != Some(x) {
                let Some(block) = held.as_deref_mut() else {
                    break;
                };
                detrend_and_window(block, &blocks[x], checks[x].offset, self.windows[x].table());
                let spectrum = rfft(block);
                if !auto_done[x] {
                    add_power(&mut self.autos[x], &spectrum);
                    auto_done[x] = true;
                }
                reference = Some((x, spectrum));
            }
            detrend_and_window(
                &mut self.work,
                &blocks[y],
                checks[y].offset,
                self.windows[y].table(),
            );
            let response = rfft(&mut self.work);
            if !auto_done[y] {
                add_power(&mut self.autos[y], &response);
                auto_done[y] = true;
            }
            if let Some((_, spectrum)) = &reference {
                add_cross(
                    &mut self.cross_re[p],
                    &mut self.cross_im[p],
                    spectrum,
                    &response,
                );
            }
        }
        for c in 0..C {
            if !auto_done[c] {
                detrend_and_window(
                    &mut self.work,
                    &blocks[c],
                    checks[c].offset,
                    self.windows[c].table(),
                );
                let spectrum = rfft(&mut self.work);
                add_power(&mut self.autos[c], &spectrum);
            }
        }
        report.averaged = 1;
        let completed = self.autos[0].is_done();
        for status in &mut self.status {
            status.blocks_averaged = status.blocks_averaged.saturating_add(1);
            status.current_average = self.autos[0].averaged();
            if completed {
                status.averages_completed = status.averages_completed.saturating_add(1);
            }
        }
        if completed {
            report.averages_completed = 1;
        }
        report
    }
}

/// `|X|^2` of one block folded into `average`, as the single-channel analyzer does.
fn add_power<const BINS: usize>(average: &mut Averager<BINS>, spectrum: &RealSpectrum<'_>) {
    let parts = spectrum.parts();
    average.add(
        parts.dc * parts.dc,
        parts.interior.iter().map(|x| x.norm_sqr()),
        parts.nyquist * parts.nyquist,
    );
}

/// `conj(X) Y` of one block folded into the real and imaginary averages (linear and
/// exponential averaging are linear, so averaging the parts averages the complex value).
fn add_cross<const BINS: usize>(
    re: &mut Averager<BINS>,
    im: &mut Averager<BINS>,
    x: &RealSpectrum<'_>,
    y: &RealSpectrum<'_>,
) {
    let (a, b) = (x.parts(), y.parts());
    let pairs = || a.interior.iter().zip(b.interior);
    re.add(
        a.dc * b.dc,
        pairs().map(|(p, q)| p.re * q.re + p.im * q.im),
        a.nyquist * b.nyquist,
    );
    im.add(0.0, pairs().map(|(p, q)| p.re * q.im - p.im * q.re), 0.0);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spectrum::average::WhenDone;
    use crate::window::Shape;
    use crate::Analyzer;

    static HANN: Window<64> = Window::new(Shape::Hann);

    fn signal(len: usize, seed: u32) -> Vec<f32> {
        // A deterministic, broadband test signal (a linear congruential sequence).
        let mut state = seed;
        (0..len)
            .map(|_| {
                state = state.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
                (state >> 8) as f32 / (1u32 << 24) as f32 - 0.5
            })
            .collect()
    }

    fn config() -> Config {
        Config::new(64.0)
            .with_overlap(16)
            .with_averaging(Averaging::Linear {
                count: 5,
                when_done: WhenDone::Hold,
            })
    }

    // One channel is the single-channel analyzer: the same stages in the same order, so the
    // spectra must be bit-identical.
    #[test]
    fn one_channel_is_the_single_channel_analyzer() {
        let x = signal(400, 7);
        let mut single: Analyzer<64, 33> = Analyzer::new(&HANN, config()).unwrap();
        single.push(&x);
        let mut multi: MultiAnalyzer<64, 33, 1> =
            MultiAnalyzer::new([&HANN], config(), [Channel::new("")], []).unwrap();
        multi.push_interleaved(&x);
        for scale in [Scale::Power, Scale::Psd, Scale::Peak] {
            let a = single.spectrum(scale, Correction::Amplitude);
            let b = multi.spectrum(0, scale, Correction::Amplitude);
            assert_eq!(a, b);
        }
        assert_eq!(single.status(), multi.status(0));
    }

    // from the definition G_xy = conj(X) Y: a channel paired with a copy of itself has a
    // real cross spectrum equal to its auto spectrum.
    #[test]
    fn cross_spectrum_of_a_copy_is_the_auto_spectrum() {
        let x = signal(400, 11);
        let interleaved: Vec<f32> = x.iter().flat_map(|&v| [v, v]).collect();
        let mut a: CrossAnalyzer<64, 33, 2, 1> = CrossAnalyzer::new(
            [&HANN; 2],
            config(),
            [Channel::new("V"); 2],
            [Pair::new(0, 1)],
        )
        .unwrap();
        a.push_interleaved(&interleaved);
        let auto = a.spectrum(0, Scale::Psd, Correction::Energy);
        let cross = a.cross_spectrum(0, Scale::Psd, Correction::Energy).unwrap();
        assert_eq!(cross.averages, 5);
        for k in 0..33 {
            assert!((cross.re[k] - auto.values()[k]).abs() <= 1e-6 * auto.values()[k]);
            assert!(cross.im[k].abs() <= 1e-6 * auto.values()[k]);
            let line = a.frf_line(0, k).unwrap();
            assert!((line.coherence - 1.0).abs() < 1e-5, "{k}: {line:?}");
        }
        assert!(a
            .cross_spectrum(1, Scale::Psd, Correction::Energy)
            .is_none());
    }

    #[test]
    fn a_bad_sample_on_one_channel_rejects_the_block_on_all() {
        let mut x = signal(3 * 64, 3);
        x[71] = f32::NAN; // channel 1 (odd index), block 0
        let mut a: MultiAnalyzer<64, 33, 2> =
            MultiAnalyzer::new([&HANN; 2], Config::new(64.0), [Channel::new(""); 2], []).unwrap();
        let report = a.push_interleaved(&x[..128]);
        assert_eq!((report.blocks, report.rejected, report.averaged), (1, 1, 0));
        assert_eq!(a.blocks_rejected(), 1);
        assert_eq!(a.status(1).rejected_non_finite, 1);
        assert_eq!(a.status(0).rejected_non_finite, 0);
        assert_eq!(a.averages(), 0);
    }

    #[test]
    fn bad_settings_and_pushes_are_typed_errors() {
        let pairs = [Pair::new(0, 0)];
        let err =
            CrossAnalyzer::<64, 33, 2, 1>::new([&HANN; 2], config(), [Channel::new(""); 2], pairs);
        assert_eq!(err.err(), Some(ConfigError::ChannelPair));
        let peak = config().with_averaging(Averaging::PeakHold);
        let err = CrossAnalyzer::<64, 33, 2, 1>::new(
            [&HANN; 2],
            peak,
            [Channel::new(""); 2],
            [Pair::new(0, 1)],
        );
        assert_eq!(err.err(), Some(ConfigError::CrossAveraging));
        let mut a: MultiAnalyzer<64, 33, 2> =
            MultiAnalyzer::new([&HANN; 2], config(), [Channel::new(""); 2], []).unwrap();
        assert_eq!(
            a.push_channels(&[&[1.0, 2.0], &[1.0]]),
            Err(PushError::UnequalLengths)
        );
        a.push_interleaved(&[1.0]);
        assert_eq!(
            a.push_channels(&[&[1.0], &[1.0]]),
            Err(PushError::InsideFrame)
        );
        assert!(a.spectrum(5, Scale::Power, Correction::Energy).values()[0].is_nan());
    }
}
