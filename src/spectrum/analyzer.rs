//! The float streaming analyzer: frame, condition, window, transform, average, read.

use crate::error::ConfigError;
use crate::fft::float::{is_supported, rfft};
use crate::spectrum::average::Averager;
use crate::spectrum::condition::Conditioning;
use crate::spectrum::feed::{drain, Collector, Framing, Handoff, Unframed};
use crate::spectrum::frame::Framer;
use crate::spectrum::scale::{overall_rms_of_sums, Correction, Scale, Spectrum, SpectrumInfo};
use crate::window::Window;
use heapless::spsc::{Consumer, Producer};

pub use crate::spectrum::config::{Config, Overlap, PushReport, Stage, Status};

/// A streaming spectrum analyzer for `N`-sample blocks (`BINS = N/2 + 1` lines).
///
/// Push samples in chunks of any length; every `N - overlap` samples a block is checked,
/// detrended, windowed, transformed and its power averaged. Read a [`Spectrum`] on any scale at
/// any time. Levels are one-sided (lines `1 ..= N/2 - 1` carry their negative-frequency
/// image, DC and Nyquist do not), in engineering units (`input * sensitivity`), with the
/// window correction the caller asks for; see [`crate::spectrum::scale`].
///
/// # Generics
///
/// * `N`: block length, a power of two from 64 to 4096 whose `size-N` feature is enabled
///   (compile-time checked; see [`crate::fft::float`]).
/// * `BINS`: `N / 2 + 1` (compile-time checked; stable Rust cannot compute it in a type).
///
/// ```compile_fail
/// use leakless::{Analyzer, Config, Shape, Window};
/// static HANN: Window<1024> = Window::new(Shape::Hann);
/// let _ = Analyzer::<1024, 512>::new(&HANN, Config::new(1024.0)); // error: BINS must be N/2 + 1
/// ```
///
/// # Memory
///
/// No allocation: `core::mem::size_of::<Analyzer<N, BINS>>()` is the whole RAM cost. It owns
/// the overlap buffer (`4 N` bytes), the work block (`4 N`) and the power accumulator
/// (`4 BINS`), plus about 120 bytes of settings and counters; the window table stays where
/// the window is (flash, for a `static`).
///
/// | `N` | buffers | `size_of`, thumbv7em (32-bit) | `size_of`, x86_64 |
/// |---|---|---|---|
/// | 1024 | 10 244 | 10 360 (+1.1 %) | 10 392 |
///
/// (Measured with a `const` array of that length on each target, rustc 1.95.)
///
/// # Cost per block
///
/// Outside the FFT, three O(N) passes: check and mean, detrend and window, `|X|^2` into the
/// average; scaling to levels happens only when a spectrum is read. On an x86-64 host at
/// `N = 1024` the whole pipeline measured 1.08 to 1.12 times a bare `microfft::rfft_1024` of
/// a copied block (best of 15 runs of 1280 blocks, on a shared machine).
///
/// # Example
///
/// ```
/// use leakless::{Analyzer, Averaging, Config, Correction, Scale, Shape, WhenDone, Window};
///
/// static HANN: Window<1024> = Window::new(Shape::Hann);
/// let config = Config::new(1024.0)
///     .with_overlap_fraction(0.5)
///     .with_averaging(Averaging::Linear { count: 4, when_done: WhenDone::Hold })
///     .with_unit("m/s^2");
/// let mut analyzer: Analyzer<1024, 513> = Analyzer::new(&HANN, config).unwrap();
///
/// // 1 m/s^2 (peak) at 100 Hz, an exact line (bin width 1 Hz), pushed in DMA-sized chunks.
/// let tone: Vec<f32> = (0..4096)
///     .map(|n| (2.0 * core::f32::consts::PI * 100.0 * n as f32 / 1024.0).sin())
///     .collect();
/// for chunk in tone.chunks(256) {
///     analyzer.push(chunk);
/// }
/// assert!(analyzer.is_done());
/// // Amplitude-corrected peak reads the tone's amplitude ...
/// let peak = analyzer.spectrum(Scale::Peak, Correction::Amplitude);
/// assert!((peak.values()[100] - 1.0).abs() < 1e-4);
/// assert_eq!(peak.frequency_hz(100), 100.0);
/// // ... and the PSD integrates to its mean square, A^2 / 2.
/// let psd = analyzer.spectrum(Scale::Psd, Correction::Energy);
/// let power: f32 = psd.values().iter().map(|p| p * psd.bin_width_hz()).sum();
/// assert!((power - 0.5).abs() < 1e-4);
/// assert!((analyzer.overall_rms(false) - 0.5f32.sqrt()).abs() < 1e-4);
/// ```
#[derive(Clone, Debug)]
pub struct Analyzer<'a, const N: usize, const BINS: usize, F: Framing = Framer<f32, N>> {
    framer: F,
    blocks: Blocks<'a, N, BINS>,
}

/// Everything but the framer: the processing half.
#[derive(Clone, Debug)]
struct Blocks<'a, const N: usize, const BINS: usize> {
    window: &'a Window<N>,
    block: [f32; N],
    averager: Averager<BINS>,
    conditioning: Conditioning,
    config: Config,
    status: Status,
}

/// The processing side of a split [`Analyzer`] (see [`crate::spectrum::feed`]): fed whole
/// blocks by [`Analyzer::process_queued`] or [`Analyzer::process_block`], read as any
/// analyzer. It holds no overlap buffer (`4 N` bytes less than an [`Analyzer`]).
pub type BlockAnalyzer<'a, const N: usize, const BINS: usize> = Analyzer<'a, N, BINS, Unframed>;

impl<'a, const N: usize, const BINS: usize> Analyzer<'a, N, BINS> {
    /// An analyzer over `window` (borrowed: the table stays in flash) with `config`, or the
    /// first setting that cannot work ([`ConfigError::WindowParameter`] for a window whose
    /// coherent gain is not above 1e-6, which no level could be corrected for).
    pub fn new(window: &'a Window<N>, config: Config) -> Result<Self, ConfigError> {
        const {
            assert!(is_supported(N), "N must be a power of two from 64 to 4096");
            assert!(BINS == N / 2 + 1, "BINS must be N/2 + 1");
        }
        let overlap = config.validate(N, window.factors())?;
        let framer = Framer::new(overlap)?;
        let averager = Averager::new(config.averaging)?;
        let conditioning = Conditioning::new(
            config.detrend,
            config.sensitivity,
            config.full_scale,
            config.overload,
        )?;
        Ok(Self {
            framer,
            blocks: Blocks {
                window,
                block: [0.0; N],
                averager,
                conditioning,
                config,
                status: Status::default(),
            },
        })
    }

    /// Pushes samples (input units), any number. Blocks completed by them are processed now;
    /// the rest waits for the next call. Any chunking of the same stream gives bit-identical
    /// results.
    pub fn push(&mut self, samples: &[f32]) -> PushReport {
        self.push_probed(samples, &mut |_| {})
    }

    /// Pushes `i16` samples (counts; `sensitivity` is then engineering units per count, and
    /// `full_scale` is in counts). The same as pushing them converted to `f32`.
    pub fn push_counts(&mut self, counts: &[i16]) -> PushReport {
        // Converted on the way into the block (exact: every i16 is an f32).
        let mut report = PushReport::default();
        let mut input = counts;
        while let Some(block) = self.framer.fill_converted(&mut input, f32::from) {
            report.add(self.blocks.process(block, &mut |_| {}));
        }
        report
    }

    /// [`Analyzer::push`] that calls `probe(stage)` at every stage boundary of every block
    /// (for reading a cycle counter in firmware). `push` is this with an empty probe, which
    /// the compiler removes.
    pub fn push_probed(&mut self, samples: &[f32], probe: &mut impl FnMut(Stage)) -> PushReport {
        let mut report = PushReport::default();
        let mut input = samples;
        while let Some(block) = self.framer.fill(&mut input) {
            report.add(self.blocks.process(block, probe));
        }
        report
    }

    /// Splits the analyzer into its interrupt side, a [`Collector`] that frames samples and
    /// hands complete blocks to `producer`, and its processing side, which takes them from
    /// the queue's consumer in [`Analyzer::process_queued`] (see [`crate::spectrum::feed`]).
    /// The buffered samples go with the framer; the average and the counters stay.
    pub fn split<'q, const Q: usize>(
        self,
        producer: Producer<'q, Handoff<f32, N>, Q>,
    ) -> (Collector<'q, f32, N, Q>, BlockAnalyzer<'a, N, BINS>) {
        let unframed = Unframed::new(self.framer.overlap());
        (
            Collector::new(self.framer, producer),
            Analyzer {
                framer: unframed,
                blocks: self.blocks,
            },
        )
    }
}

impl<'a, const N: usize, const BINS: usize, F: Framing> Analyzer<'a, N, BINS, F> {
    /// Runs one complete block (`N` samples, oldest first, in input units) through the
    /// pipeline: the processing half of [`Analyzer::push`], which calls it for every block
    /// its framer completes.
    pub fn process_block(&mut self, block: &[f32; N]) -> PushReport {
        self.blocks.process(block, &mut |_| {})
    }

    /// [`Analyzer::process_block`] with a stage probe, as [`Analyzer::push_probed`].
    pub fn process_block_probed(
        &mut self,
        block: &[f32; N],
        probe: &mut impl FnMut(Stage),
    ) -> PushReport {
        self.blocks.process(block, probe)
    }

    /// Processes every block waiting in `consumer` (each read where it lies in the queue),
    /// counting the blocks its [`Collector`] lost before them. Call it from thread mode or a
    /// low-priority task; it returns when the queue is empty.
    pub fn process_queued<const Q: usize>(
        &mut self,
        consumer: &mut Consumer<'_, Handoff<f32, N>, Q>,
    ) -> PushReport {
        self.process_queued_probed(consumer, &mut |_| {})
    }

    /// [`Analyzer::process_queued`] with a stage probe.
    pub fn process_queued_probed<const Q: usize>(
        &mut self,
        consumer: &mut Consumer<'_, Handoff<f32, N>, Q>,
        probe: &mut impl FnMut(Stage),
    ) -> PushReport {
        let blocks = &mut self.blocks;
        drain(consumer, |block, lost| {
            blocks.status.blocks_lost = blocks.status.blocks_lost.saturating_add(lost);
            let mut report = blocks.process(block, probe);
            report.lost = lost;
            report
        })
    }

    /// The current average on `scale` with `correction` (densities are always
    /// energy-corrected; see [`Correction::effective`]). All zeros, with `averages() == 0`,
    /// before the first accepted block.
    pub fn spectrum(&self, scale: Scale, correction: Correction) -> Spectrum<BINS> {
        Spectrum::from_squares(
            self.blocks.averager.squares(),
            self.squares_gain(),
            scale,
            correction,
            self.info(),
        )
    }

    /// [`Analyzer::spectrum`] into an existing spectrum (no 2 KB temporary on the stack).
    pub fn read_into(&self, out: &mut Spectrum<BINS>, scale: Scale, correction: Correction) {
        out.set_from_squares(
            self.blocks.averager.squares(),
            self.squares_gain(),
            scale,
            correction,
            self.info(),
        );
    }

    /// Overall RMS level in engineering units from the averaged power (Parseval: the sum of
    /// the energy-corrected power over all lines), with or without the DC line.
    pub fn overall_rms(&self, include_dc: bool) -> f32 {
        let squares = self.blocks.averager.squares();
        let interior: f32 = squares[1..BINS - 1].iter().sum();
        let dc = if include_dc { squares[0] } else { 0.0 };
        let edges = (dc + squares[BINS - 1]) as f64;
        overall_rms_of_sums(interior as f64, edges, self.squares_gain(), &self.info())
    }

    /// `squares[k] = gain * mean |X[k]|^2` in engineering units^2.
    fn squares_gain(&self) -> f64 {
        let s = self.blocks.conditioning.sensitivity() as f64;
        self.blocks.averager.gain() / (s * s)
    }

    fn info(&self) -> SpectrumInfo {
        SpectrumInfo {
            sample_rate_hz: self.blocks.config.sample_rate_hz,
            block_len: N,
            factors: *self.blocks.window.factors(),
            unit: self.blocks.config.unit,
            averages: self.blocks.averager.averaged(),
        }
    }

    /// The counters.
    pub fn status(&self) -> Status {
        self.blocks.status
    }

    /// Whether a linear average has all its blocks.
    pub fn is_done(&self) -> bool {
        self.blocks.averager.is_done()
    }

    /// Forgets the buffered samples, the average and the counters.
    pub fn reset(&mut self) {
        self.framer.clear();
        self.blocks.averager.reset();
        self.blocks.status = Status::default();
    }

    /// The settings as given.
    pub fn config(&self) -> &Config {
        &self.blocks.config
    }

    /// The window.
    pub fn window(&self) -> &'a Window<N> {
        self.blocks.window
    }

    /// Overlap in samples.
    pub fn overlap(&self) -> usize {
        self.framer.overlap()
    }

    /// Samples between block starts, `N - overlap`.
    pub fn hop(&self) -> usize {
        N - self.framer.overlap()
    }

    /// Line spacing `fs / N`, Hz.
    pub fn bin_width_hz(&self) -> f32 {
        self.blocks.config.sample_rate_hz / N as f32
    }
}

impl<const N: usize, const BINS: usize> Blocks<'_, N, BINS> {
    /// Runs the pipeline on `input`: checks and mean, then detrend and window on the way into
    /// the work block, transform, power into the average.
    fn process(&mut self, input: &[f32; N], probe: &mut impl FnMut(Stage)) -> PushReport {
        let mut report = PushReport {
            blocks: 1,
            ..PushReport::default()
        };
        let status = &mut self.status;
        status.blocks_seen = status.blocks_seen.saturating_add(1);

        probe(Stage::Condition);
        let check = self.conditioning.inspect(input);
        if check.non_finite {
            status.rejected_non_finite = status.rejected_non_finite.saturating_add(1);
        }
        if check.overloaded {
            status.overloaded = status.overloaded.saturating_add(1);
        }
        if !self.conditioning.accepts(&check) {
            report.rejected = 1;
            probe(Stage::Done);
            return report;
        }
        if !self.averager.wants_block() {
            report.ignored = 1;
            probe(Stage::Done);
            return report;
        }

        probe(Stage::Window);
        let offset = check.offset;
        for ((y, &x), w) in self.block.iter_mut().zip(input).zip(self.window.table()) {
            *y = (x - offset) * w;
        }

        probe(Stage::Transform);
        let spectrum = rfft(&mut self.block);

        probe(Stage::Average);
        let parts = spectrum.parts();
        let completed = self.averager.add(
            parts.dc * parts.dc,
            parts.interior.iter().map(|x| x.norm_sqr()),
            parts.nyquist * parts.nyquist,
        );
        report.averaged = 1;
        status.blocks_averaged = status.blocks_averaged.saturating_add(1);
        status.current_average = self.averager.averaged();
        if completed {
            report.averages_completed = 1;
            status.averages_completed = status.averages_completed.saturating_add(1);
        }
        probe(Stage::Done);
        report
    }
}
