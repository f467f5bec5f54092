//! The fixed-point streaming analyzers (feature `fixed`): [`AnalyzerQ15`] for 16-bit
//! converters (`i16` counts, [`WindowQ15`], [`rfft_q15`]) and
//! [`AnalyzerQ31`] for 24-bit converters (`i32` counts, [`WindowQ31`],
//! [`rfft_q31`]).
//!
//! They do what the float [`Analyzer`](crate::spectrum::analyzer::Analyzer) does, with the
//! same [`Config`], [`ConfigError`](crate::ConfigError)s, [`Status`], [`PushReport`] and
//! [`Stage`] probe, and read out the same [`Spectrum`](crate::Spectrum): frame ([`Framer`]),
//! check for overload and find the mean, detrend and window, transform, and fold the power
//! into an average. No float arithmetic runs per block (this module denies it; construction
//! and read-out live in `read.rs`, where it is allowed).
//!
//! # Arithmetic
//!
//! * **Condition**: sum, minimum and maximum of the block in integers (`i32` for Q15, `i64`
//!   for Q31). Overload is `|x| >= ceil(full_scale)`, the float rule for integer samples.
//! * **Window**: `t[n] = (N x[n] - sum) 2^u / N`, rounded half to even, then
//!   `t[n] w[n] / 2^15` (Q31: `/ 2^31`), rounded. The mean is removed at the block's own
//!   scale, not rounded to a count first, and `u` is chosen from the exact peak of the
//!   detrended block so that it fills the word (a quiet block is scaled up by `2^u`, a block
//!   whose detrended swing exceeds the word, down).
//! * **Transform**: the block-floating-point real FFT, `X = raw 2^(e - u)` in input units.
//! * **Average**: `|raw|^2` per line (`u32` products for Q15, `u64` for Q31) folded into a
//!   `u64` mantissa per line with one exponent shared by all lines and carried across blocks
//!   (block floating point; see `bfp.rs`). Linear averages sum and divide when read,
//!   exponential ones run `avg += (p - avg) / tau` with `1 / tau` kept to 31 bits, peak hold
//!   keeps the maximum.
//!
//! # Read-out
//!
//! [`FixedAnalyzer::spectrum`] converts the mantissas to `f32` once (normalised by the peak
//! so no value under- or overflows) and goes through
//! [`Spectrum::from_squares`](crate::Spectrum::from_squares) like the float analyzer, so the
//! same scales, corrections and units apply. For cores without an FPU,
//! [`FixedAnalyzer::level_db_x100`] gives every line's level in hundredths of a dB with
//! integer arithmetic per line (a few float operations per call for the scale's constants),
//! and [`FixedAnalyzer::raw_power`] gives the mantissas and exponent themselves.
//!
//! # Accuracy
//!
//! The error is the transform's own (a few output LSB per line, see [`crate::fft::fixed`]):
//! the windowing adds one rounding at the block's full scale and the averaging rounds 62-bit
//! mantissas. Against the f32 analyzer on the same 16-bit counts (Hann, 50 % overlap, 8
//! linear averages; `cargo run --release --example fixed_vs_float`, which prints the tone and
//! band level errors too):
//!
//! | signal | N | Q15 SNR | Q15 worst line | Q31 SNR |
//! |---|---|---|---|---|
//! | two tones, -1 dBFS and -60 dB below, off-bin | 256 / 1024 / 4096 | 75.0 / 71.6 / 74.7 dB | -87 to -88 dB | 144 to 148 dB |
//! | the same 40 dB lower | 256 / 1024 / 4096 | 80.7 / 74.4 / 67.2 dB | -89 to -90 dB | 143 to 146 dB |
//! | white noise, -20 dBFS | 256 / 1024 / 4096 | 84.9 / 81.7 / 81.0 dB | -72 to -78 dB | 144 dB |
//!
//! The Q31 figures are the f32 path's own error: the Q31 transform alone reaches 155 to
//! 167 dB. `tests/fixed_analyzer.rs` asserts a bound derived from the Q15 noise floor for
//! every scale and averaging mode.
//!
//! # Cost
//!
//! Outside the transform, four O(N) integer passes (scan, window, peak, fold into the
//! average), plus a shift of the accumulator on the blocks that move its exponent. In the
//! usual cases no `u64` is shifted by a variable amount per line (a library call on a
//! Cortex-M0): the block's shift is sorted into a 32-bit case once (right shifts of 32 bits
//! or more, and exponential averaging's `1 / tau`, keep the general form), and the window pass removes the mean as one
//! offset per block (`x 2^u + offset`, exact) wherever half-to-even rounding allows. On the
//! QEMU boards (`boards/README.md`) the Q15 stages outside the transform take about 37k
//! instructions per 1024 block on a Cortex-M4F and 55k on a Cortex-M0. On an x86-64 host
//! the Q15 pipeline measured 1.15 to 1.3 times a bare
//! `rfft_q15` of a copied block (`benches/fixed.rs`, N = 256 to 4096, shared machine).

#![deny(clippy::float_arithmetic)]

mod bfp;
mod read;
mod to_f32;

pub use read::RawPower;

use crate::fft::fixed::{rfft_q15, rfft_q31};
use crate::spectrum::condition::{Conditioning, Detrend};
use crate::spectrum::config::{Config, PushReport, Stage, Status};
use crate::spectrum::feed::{drain, Collector, Framing, Handoff, Unframed};
use crate::spectrum::frame::Framer;
use crate::window::{Factors, WindowQ15, WindowQ31};
use bfp::{bit_length, PowerAverage};
use heapless::spsc::{Consumer, Producer};

/// The fixed-point analyzer for 16-bit converters: `i16` counts, a [`WindowQ15`] table, the
/// Q15 transform. See [`FixedAnalyzer`].
pub type AnalyzerQ15<'a, const N: usize, const BINS: usize> =
    FixedAnalyzer<'a, WindowQ15<N>, N, BINS>;

/// The fixed-point analyzer for 24-bit (or any up to 32-bit) converters: `i32` counts, a
/// [`WindowQ31`] table, the Q31 transform. See [`FixedAnalyzer`].
pub type AnalyzerQ31<'a, const N: usize, const BINS: usize> =
    FixedAnalyzer<'a, WindowQ31<N>, N, BINS>;

/// A window table that selects a fixed-point path: [`WindowQ15`] (Q15) or [`WindowQ31`]
/// (Q31). Sealed: the two paths are the only ones.
pub trait FixedWindow<const N: usize>: sealed::Kernel<N> {}

impl<const N: usize> FixedWindow<N> for WindowQ15<N> {}
impl<const N: usize> FixedWindow<N> for WindowQ31<N> {}

use sealed::Scan;

pub(crate) mod sealed {
    use crate::window::Factors;

    /// What the condition pass finds, in integers.
    #[derive(Clone, Copy, Debug, PartialEq, Eq)]
    pub struct Scan {
        pub(crate) sum: i64,
        pub(crate) min: i64,
        pub(crate) max: i64,
    }

    /// The per-word arithmetic of one path, written once by `fixed_kernel!`.
    pub trait Kernel<const N: usize> {
        /// A sample and a transform word: `i16` or `i32`.
        type Word: Copy + Default + core::fmt::Debug + super::bfp::LineWord;
        /// Largest magnitude a windowed word may take.
        const WORD_MAX: u64;
        /// The window's factors as the path applies it.
        fn window_factors(&self) -> &Factors;
        /// Sum, minimum and maximum of a block.
        fn scan(block: &[Self::Word; N]) -> Scan;
        /// `block[n] = round(round((N x - sum) 2^up / N) w[n] / 2^FRAC)`.
        fn window_block(&self, block: &mut [Self::Word; N], sum: i64, up: i32);
        /// The real FFT in place; the block exponent.
        fn transform(block: &mut [Self::Word; N]) -> i32;
        /// The largest `|word|` of a transformed block.
        fn peak_word(block: &[Self::Word; N]) -> u64;
        /// `re^2 + im^2` of DC and of Nyquist.
        fn edge_powers(block: &[Self::Word; N]) -> (u64, u64);
    }
}

/// Whether the condition pass takes its minimum and maximum in pairs (the same result
/// either way). It pays where every compare is a branch: Armv6-M (Cortex-M0/M0+/M1, Thumb-1
/// without IT blocks), recognised as the Arm target without 32-bit atomics. Where compares
/// become conditional moves (Cortex-M4: IT blocks), the plain loop is shorter.
const PAIRED_SCAN: bool = cfg!(all(target_arch = "arm", not(target_has_atomic = "32")));

/// `(v + half) >> shift` rounding half to even (no bias on exact halves, which integer
/// sums produce), or `v << -shift` for `shift <= 0`.
macro_rules! fixed_kernel {
    ($window:ident, $word:ty, $wide:ty, $frac:expr, $rfft:ident) => {
        impl<const N: usize> sealed::Kernel<N> for $window<N> {
            type Word = $word;
            const WORD_MAX: u64 = <$word>::MAX as u64;

            fn window_factors(&self) -> &Factors {
                self.factors()
            }

            fn scan(block: &[$word; N]) -> Scan {
                let (mut sum, mut min, mut max): ($wide, $word, $word) = (0, 0, 0);
                if let Some(&first) = block.first() {
                    (min, max) = (first, first);
                }
                if !PAIRED_SCAN {
                    for &x in block {
                        sum += x as $wide;
                        min = min.min(x);
                        max = max.max(x);
                    }
                    return Scan {
                        sum: sum as i64,
                        min: min as i64,
                        max: max as i64,
                    };
                }
                // In pairs: the smaller of each pair can only lower the minimum and the
                // larger only raise the maximum, three compares per two samples.
                let mut pairs = block.chunks_exact(2);
                for pair in &mut pairs {
                    let (a, b) = (pair[0], pair[1]);
                    sum += a as $wide + b as $wide;
                    let (low, high) = if a < b { (a, b) } else { (b, a) };
                    min = min.min(low);
                    max = max.max(high);
                }
                for &x in pairs.remainder() {
                    sum += x as $wide;
                    min = min.min(x);
                    max = max.max(x);
                }
                Scan {
                    sum: sum as i64,
                    min: min as i64,
                    max: max as i64,
                }
            }

            fn window_block(&self, block: &mut [$word; N], sum: i64, up: i32) {
                let log2_n = N.trailing_zeros() as i32;
                let sum = sum as $wide;
                let down = log2_n - up;
                // |t| <= WORD_MAX (the choice of `up`), so t fits an i32, and with
                // |w| <= 2^FRAC the product fits the wide type.
                let round = |t: i32, w: $word| {
                    ((t as $wide * w as $wide + (1 << ($frac - 1))) >> $frac) as $word
                };
                if let Some(offset) = detrend_offset(sum, up, down) {
                    // t = x 2^up + offset, exact modulo 2^32: the true t fits an i32, so
                    // the wrapping of the parts (a large offset of a quiet block, x 2^up
                    // past 32 bits) cancels. 2^up as a multiplier: 0 modulo 2^32 for up >= 32.
                    let scale = 1i32.checked_shl(up as u32).unwrap_or(0);
                    let offset = offset as i32;
                    for (x, &w) in block.iter_mut().zip(self.table()) {
                        let t = (*x as i32).wrapping_mul(scale).wrapping_add(offset);
                        *x = round(t, w);
                    }
                    return;
                }
                for (x, &w) in block.iter_mut().zip(self.table()) {
                    let v = ((*x as $wide) << log2_n) - sum;
                    let t = if down > 0 {
                        let d = down as u32;
                        let odd = (v >> d) & 1;
                        (v + (1 << (d - 1)) - 1 + odd) >> d
                    } else {
                        v << (-down) as u32
                    };
                    *x = round(t as i32, w);
                }
            }

            fn transform(block: &mut [$word; N]) -> i32 {
                $rfft(block)
            }

            fn peak_word(block: &[$word; N]) -> u64 {
                // The OR of the magnitudes has the bit length of the largest, which is all
                // the caller uses, and needs no compare per word.
                block.iter().fold(0, |bits, &v| bits | v.unsigned_abs()) as u64
            }

            fn edge_powers(block: &[$word; N]) -> (u64, u64) {
                let square = |v: $word| (v as $wide * v as $wide) as u64;
                match block.as_slice() {
                    [dc, nyquist, ..] => (square(*dc), square(*nyquist)),
                    _ => (0, 0),
                }
            }
        }
    };
}

fixed_kernel!(WindowQ15, i16, i32, 15, rfft_q15);
fixed_kernel!(WindowQ31, i32, i64, 31, rfft_q31);

/// A fixed-point streaming spectrum analyzer for `N`-sample blocks (`BINS = N/2 + 1`
/// lines): the float [`Analyzer`](crate::spectrum::analyzer::Analyzer)'s pipeline in integers.
/// Use it through [`AnalyzerQ15`] or [`AnalyzerQ31`].
///
/// Push counts in chunks of any length (bit-identical results for any chunking); read a
/// [`Spectrum`](crate::Spectrum) on any scale at any time, or integer levels. Blocks with a
/// sample at or beyond `full_scale` (in counts; set it to `32767` to catch a 16-bit
/// converter's clipped codes `i16::MIN` and `i16::MAX`) are counted as overloaded and, with
/// [`OverloadPolicy::Reject`](crate::OverloadPolicy::Reject), kept out of the average.
///
/// # Generics
///
/// * `W`: [`WindowQ15<N>`] or [`WindowQ31<N>`], which selects the path.
/// * `N`: block length, a power of two from 64 to 4096 (compile-time checked).
/// * `BINS`: `N / 2 + 1` (compile-time checked).
///
/// ```compile_fail
/// use leakless::{AnalyzerQ15, Config, Shape, WindowQ15};
/// static HANN: WindowQ15<1024> = WindowQ15::new(Shape::Hann);
/// let _ = AnalyzerQ15::<1024, 512>::new(&HANN, Config::new(1024.0)); // BINS must be N/2 + 1
/// ```
///
/// # Memory
///
/// No allocation: `size_of` is the RAM cost. Q15 owns the overlap buffer (`2 N` bytes), the
/// work block (`2 N`) and the power mantissas (`8 BINS`); Q31 `4 N + 4 N + 8 BINS`; plus
/// 152 bytes of settings and counters on a 32-bit target (184 on x86_64).
///
/// | type | buffers | `size_of`, thumbv7em (32-bit) | `size_of`, x86_64 |
/// |---|---|---|---|
/// | `AnalyzerQ15<256, 129>` | 2 056 | 2 208 (+7.4 %) | 2 240 (+9.0 %) |
/// | `AnalyzerQ15<1024, 513>` | 8 200 | 8 352 (+1.9 %) | 8 384 (+2.2 %) |
/// | `AnalyzerQ15<4096, 2049>` | 32 776 | 32 928 (+0.5 %) | 32 960 (+0.6 %) |
/// | `AnalyzerQ31<256, 129>` | 3 080 | 3 232 (+4.9 %) | 3 264 (+6.0 %) |
/// | `AnalyzerQ31<1024, 513>` | 12 296 | 12 448 (+1.2 %) | 12 480 (+1.5 %) |
/// | `AnalyzerQ31<4096, 2049>` | 49 160 | 49 312 (+0.3 %) | 49 344 (+0.4 %) |
///
/// (x86_64: `tests/fixed_analyzer.rs`, `ram_cost_is_the_buffers`; thumbv7em: a `const` array
/// of that length in a `no_std` crate, as DEVELOPERS.md describes; rustc 1.95.)
///
/// # Example
///
/// ```
/// use leakless::{AnalyzerQ15, Averaging, Config, Correction, Scale, Shape, WhenDone, WindowQ15};
///
/// static HANN: WindowQ15<1024> = WindowQ15::new(Shape::Hann);
/// let config = Config::new(1024.0)
///     .with_overlap_fraction(0.5)
///     .with_averaging(Averaging::Linear { count: 4, when_done: WhenDone::Hold })
///     .with_sensitivity(1.0 / 16_384.0) // counts to g
///     .with_full_scale(32_767.0)
///     .with_unit("g");
/// let mut analyzer: AnalyzerQ15<1024, 513> = AnalyzerQ15::new(&HANN, config).unwrap();
///
/// // 0.5 g (peak) at 100 Hz, an exact line, as 16-bit counts in DMA-sized chunks.
/// let counts: Vec<i16> = (0..4096)
///     .map(|n| (8192.0 * (2.0 * core::f64::consts::PI * 100.0 * n as f64 / 1024.0).sin()).round() as i16)
///     .collect();
/// for chunk in counts.chunks(256) {
///     analyzer.push(chunk);
/// }
/// assert!(analyzer.is_done());
/// let peak = analyzer.spectrum(Scale::Peak, Correction::Amplitude);
/// assert!((peak.values()[100] - 0.5).abs() < 1e-4);
/// // The same level in integers: 20 log10(0.5) = -6.02 dB.
/// let mut db = [0i32; 513];
/// analyzer.level_db_x100(&mut db, Scale::Peak, Correction::Amplitude);
/// assert!((db[100] + 602).abs() <= 1);
/// ```
#[derive(Clone, Debug)]
pub struct FixedAnalyzer<
    'a,
    W: FixedWindow<N>,
    const N: usize,
    const BINS: usize,
    F: Framing = Framer<<W as sealed::Kernel<N>>::Word, N>,
> {
    framer: F,
    blocks: Blocks<'a, W, N, BINS>,
}

/// Everything but the framer: the processing half.
#[derive(Clone, Debug)]
pub(crate) struct Blocks<'a, W: FixedWindow<N>, const N: usize, const BINS: usize> {
    window: &'a W,
    block: [W::Word; N],
    average: PowerAverage<BINS>,
    conditioning: Conditioning,
    /// `|x| >= overload_at` is an overload; `None`: no limit.
    overload_at: Option<u64>,
    config: Config,
    status: Status,
}

/// The processing side of a split [`AnalyzerQ15`] or [`AnalyzerQ31`] (see
/// [`crate::spectrum::feed`]), fed whole blocks; it holds no overlap buffer.
pub type FixedBlockAnalyzer<'a, W, const N: usize, const BINS: usize> =
    FixedAnalyzer<'a, W, N, BINS, Unframed>;

impl<'a, const N: usize, const BINS: usize> AnalyzerQ15<'a, N, BINS> {
    /// Pushes `i16` counts, any number (`sensitivity` is engineering units per count,
    /// `full_scale` in counts). Blocks completed by them are processed now; the rest waits.
    pub fn push(&mut self, counts: &[i16]) -> PushReport {
        self.push_words(counts, &mut |_| {})
    }

    /// [`AnalyzerQ15::push`] that calls `probe(stage)` at every stage boundary of every block
    /// (for reading a cycle counter in firmware); `push` is this with an empty probe.
    pub fn push_probed(&mut self, counts: &[i16], probe: &mut impl FnMut(Stage)) -> PushReport {
        self.push_words(counts, probe)
    }
}

impl<'a, const N: usize, const BINS: usize> AnalyzerQ31<'a, N, BINS> {
    /// Pushes `i32` counts (a 24-bit converter's sign-extended codes, or any 32-bit value),
    /// any number. Blocks completed by them are processed now; the rest waits.
    pub fn push(&mut self, counts: &[i32]) -> PushReport {
        self.push_words(counts, &mut |_| {})
    }

    /// [`AnalyzerQ31::push`] with a stage probe, as [`AnalyzerQ15::push_probed`].
    pub fn push_probed(&mut self, counts: &[i32], probe: &mut impl FnMut(Stage)) -> PushReport {
        self.push_words(counts, probe)
    }

    /// Pushes `i16` counts through the Q31 path (the same as pushing them as `i32`).
    pub fn push_counts(&mut self, counts: &[i16]) -> PushReport {
        // Widened on the way into the block.
        let mut report = PushReport::default();
        let mut input = counts;
        while self
            .framer
            .next_block_converted(&mut input, &mut self.blocks.block, i32::from)
        {
            report.add(self.blocks.process(&mut |_| {}));
        }
        report
    }
}

impl<'a, W: FixedWindow<N>, const N: usize, const BINS: usize> FixedAnalyzer<'a, W, N, BINS> {
    fn push_words(&mut self, samples: &[W::Word], probe: &mut impl FnMut(Stage)) -> PushReport {
        let mut report = PushReport::default();
        let mut input = samples;
        // Framed straight into the work block, which is windowed in place: a window pass
        // from a separate source made the compiler unroll the loop past the Cortex-M4's
        // registers (2.6k instructions more per 1024 block), and a copy costs about as much.
        while self.framer.next_block(&mut input, &mut self.blocks.block) {
            report.add(self.blocks.process(probe));
        }
        report
    }

    /// Splits the analyzer into its interrupt side, a [`Collector`] that frames counts and
    /// hands complete blocks to `producer`, and its processing side, which takes them from
    /// the queue's consumer in [`FixedAnalyzer::process_queued`] (see
    /// [`crate::spectrum::feed`]). The buffered samples go with the framer.
    #[allow(clippy::type_complexity)]
    pub fn split<'q, const Q: usize>(
        self,
        producer: Producer<'q, Handoff<W::Word, N>, Q>,
    ) -> (
        Collector<'q, W::Word, N, Q>,
        FixedBlockAnalyzer<'a, W, N, BINS>,
    ) {
        let unframed = Unframed::new(self.framer.overlap());
        (
            Collector::new(self.framer, producer),
            FixedAnalyzer {
                framer: unframed,
                blocks: self.blocks,
            },
        )
    }
}

impl<'a, W: FixedWindow<N>, const N: usize, const BINS: usize, F: Framing>
    FixedAnalyzer<'a, W, N, BINS, F>
{
    /// Runs one complete block (`N` counts, oldest first) through the pipeline: the
    /// processing half of `push`, which calls it for every block its framer completes.
    pub fn process_block(&mut self, block: &[W::Word; N]) -> PushReport {
        self.process_block_probed(block, &mut |_| {})
    }

    /// [`FixedAnalyzer::process_block`] with a stage probe.
    pub fn process_block_probed(
        &mut self,
        block: &[W::Word; N],
        probe: &mut impl FnMut(Stage),
    ) -> PushReport {
        self.blocks.block.copy_from_slice(block);
        self.blocks.process(probe)
    }

    /// Processes every block waiting in `consumer` (each read where it lies in the queue),
    /// counting the blocks its [`Collector`] lost before them; returns when it is empty.
    pub fn process_queued<const Q: usize>(
        &mut self,
        consumer: &mut Consumer<'_, Handoff<W::Word, N>, Q>,
    ) -> PushReport {
        self.process_queued_probed(consumer, &mut |_| {})
    }

    /// [`FixedAnalyzer::process_queued`] with a stage probe.
    pub fn process_queued_probed<const Q: usize>(
        &mut self,
        consumer: &mut Consumer<'_, Handoff<W::Word, N>, Q>,
        probe: &mut impl FnMut(Stage),
    ) -> PushReport {
        let blocks = &mut self.blocks;
        drain(consumer, |block, lost| {
            blocks.status.blocks_lost = blocks.status.blocks_lost.saturating_add(lost);
            blocks.block.copy_from_slice(block);
            let mut report = blocks.process(probe);
            report.lost = lost;
            report
        })
    }

    /// The counters.
    pub fn status(&self) -> Status {
        self.blocks.status
    }

    /// Whether a linear average has all its blocks.
    pub fn is_done(&self) -> bool {
        self.blocks.average.is_done()
    }

    /// Blocks in the current average.
    pub fn averages(&self) -> u32 {
        self.blocks.average.averaged()
    }

    /// Forgets the buffered samples, the average and the counters.
    pub fn reset(&mut self) {
        self.framer.clear();
        self.blocks.average.reset();
        self.blocks.status = Status::default();
    }

    /// The settings as given.
    pub fn config(&self) -> &Config {
        &self.blocks.config
    }

    /// The window.
    pub fn window(&self) -> &'a W {
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
}

impl<W: FixedWindow<N>, const N: usize, const BINS: usize> Blocks<'_, W, N, BINS> {
    /// Runs the pipeline on the block in the work block, in place.
    fn process(&mut self, probe: &mut impl FnMut(Stage)) -> PushReport {
        let mut report = PushReport {
            blocks: 1,
            ..PushReport::default()
        };
        let status = &mut self.status;
        status.blocks_seen = status.blocks_seen.saturating_add(1);

        probe(Stage::Condition);
        let scan = W::scan(&self.block);
        let largest = scan.min.unsigned_abs().max(scan.max.unsigned_abs());
        let overloaded = self.overload_at.is_some_and(|limit| largest >= limit);
        if overloaded {
            status.overloaded = status.overloaded.saturating_add(1);
            if self.conditioning.overload_policy() == crate::OverloadPolicy::Reject {
                report.rejected = 1;
                probe(Stage::Done);
                return report;
            }
        }
        if !self.average.wants_block() {
            report.ignored = 1;
            probe(Stage::Done);
            return report;
        }

        probe(Stage::Window);
        let sum = match self.conditioning.detrend() {
            Detrend::Mean => scan.sum,
            Detrend::None => 0,
        };
        let up = normalising_shift(&scan, sum, N.trailing_zeros(), W::WORD_MAX);
        self.window.window_block(&mut self.block, sum, up);

        probe(Stage::Transform);
        let exponent = W::transform(&mut self.block);

        probe(Stage::Average);
        // |X|^2 = |raw|^2 2^(2 (e - up)), and |raw|^2 <= 2 peak^2.
        let peak = W::peak_word(&self.block);
        let block_bits = if peak == 0 {
            0
        } else {
            bit_length(peak) * 2 + 1
        };
        let (dc, nyquist) = W::edge_powers(&self.block);
        let completed = self.average.add_lines(
            dc,
            self.block.get(2..).unwrap_or(&[]),
            nyquist,
            2 * (exponent - up),
            block_bits,
        );
        report.averaged = 1;
        status.blocks_averaged = status.blocks_averaged.saturating_add(1);
        status.current_average = self.average.averaged();
        if completed {
            report.averages_completed = 1;
            status.averages_completed = status.averages_completed.saturating_add(1);
        }
        probe(Stage::Done);
        report
    }
}

/// The `u` of `t = (N x - sum) 2^u / N` that makes the block's largest `|t|` fit `word_max`
/// with the least headroom: the largest `u` with `V 2^u <= word_max N`, `V` the exact
/// largest `|N x - sum|` (reached at the block's minimum or maximum). 0 for a constant block.
fn normalising_shift(scan: &Scan, sum: i64, log2_n: u32, word_max: u64) -> i32 {
    let peak = |x: i64| ((x << log2_n) - sum).unsigned_abs();
    let largest = peak(scan.min).max(peak(scan.max));
    let limit = word_max << log2_n;
    if largest == 0 {
        return 0;
    }
    let mut up = 0;
    if largest <= limit {
        while largest << (up + 1) as u32 <= limit {
            up += 1;
        }
    } else {
        while largest > limit << (-up) as u32 {
            up -= 1;
        }
    }
    up
}

/// The `offset` with `round((N x - sum) 2^up / N) = x 2^up + offset` for every integer `x`
/// (rounded half to even, `down = log2 N - up`), when one exists: always for `up >= 0`
/// except `up = 0` with `sum` an exact odd multiple of `N / 2`, where the rounding of an
/// exact half depends on the parity of `x`. `x 2^L` is a multiple of `2^down`, so it passes
/// the shift untouched; for `up >= 1` the parity that half-to-even looks at is that of the
/// offset alone. `None`: use the general form (a block scaled down, `up < 0`, or that tie).
/// Wrapping arithmetic: the offset of a quiet block with a large mean may wrap, and wraps
/// back when added to `x 2^up`.
macro_rules! detrend_offset_for {
    ($wide:ty) => {
        impl DetrendOffset for $wide {
            fn detrend_offset(sum: $wide, up: i32, down: i32) -> Option<$wide> {
                let c = sum.wrapping_neg();
                if down <= 0 {
                    return Some(c.wrapping_shl((-down) as u32));
                }
                if up < 0 {
                    return None;
                }
                let d = down as u32;
                let half: $wide = 1 << (d - 1);
                if up == 0 && c & ((half << 1) - 1) == half {
                    return None;
                }
                let odd = (c >> d) & 1;
                // up = 0 (no tie): the same for either parity of x, so take the even one.
                let odd = if up == 0 { 0 } else { odd };
                Some((c + half - 1 + odd) >> d)
            }
        }
    };
}

/// See [`detrend_offset_for`].
trait DetrendOffset: Sized {
    fn detrend_offset(sum: Self, up: i32, down: i32) -> Option<Self>;
}
detrend_offset_for!(i32);
detrend_offset_for!(i64);

#[inline(always)]
fn detrend_offset<T: DetrendOffset>(sum: T, up: i32, down: i32) -> Option<T> {
    T::detrend_offset(sum, up, down)
}

#[cfg(test)]
mod tests {
    use super::*;

    // The definition: round((N x - sum) 2^up / N) half to even, as the general loop does.
    #[test]
    fn detrend_offset_is_the_general_rounding() {
        let general = |x: i64, sum: i64, log2_n: i32, up: i32| {
            let v = (x << log2_n) - sum;
            let down = log2_n - up;
            if down > 0 {
                let d = down as u32;
                (v + (1 << (d - 1)) - 1 + ((v >> d) & 1)) >> d
            } else {
                v << (-down) as u32
            }
        };
        let mut checked = 0;
        for log2_n in [1, 2, 3, 6] {
            for up in -2..12 {
                for sum in -300i64..300 {
                    let down = log2_n - up;
                    let Some(offset) = detrend_offset(sum, up, down) else {
                        assert!(
                            up < 0
                                || (up == 0 && (-sum).rem_euclid(1 << log2_n) == 1 << (log2_n - 1))
                        );
                        continue;
                    };
                    let narrow = detrend_offset(sum as i32, up, down);
                    assert_eq!(narrow.map(i64::from), Some(offset));
                    for x in -40i64..40 {
                        assert_eq!(
                            (x << up) + offset,
                            general(x, sum, log2_n, up),
                            "x {x} sum {sum} log2_n {log2_n} up {up}"
                        );
                        checked += 1;
                    }
                }
            }
        }
        assert!(checked > 100_000);
    }

    #[test]
    fn normalising_shift_fills_the_word() {
        let scan = |min, max, sum| Scan { sum, min, max };
        // N = 64: a block of +-1 with mean 0 goes up by 14 bits (1 << 14 <= 32767 < 1 << 15).
        assert_eq!(normalising_shift(&scan(-1, 1, 0), 0, 6, 32767), 14);
        assert_eq!(normalising_shift(&scan(-32768, 32767, 0), 0, 6, 32767), -1);
        assert_eq!(
            normalising_shift(&scan(-16384, 16383, -64), -64, 6, 32767),
            0
        );
        // The widest detrended swing, one sample at 32767 and 63 at -32768: 64 511 counts
        // from the mean, one bit down.
        let sum = -32768 * 63 + 32767;
        assert_eq!(
            normalising_shift(&scan(-32768, 32767, sum), sum, 6, 32767),
            -1
        );
        assert_eq!(normalising_shift(&scan(5, 5, 5 * 64), 5 * 64, 6, 32767), 0);
        let q31 = i32::MAX as u64;
        assert_eq!(
            normalising_shift(&scan(i32::MIN as i64, i32::MAX as i64, 0), 0, 12, q31),
            -1
        );
    }
}
