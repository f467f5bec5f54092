//! Board-level Q15 and Q31 block pipelines, built from the library's pieces (the overlap
//! [`Framer`], the Q15 Hann table [`WindowQ15`], the block-floating-point transforms
//! [`rfft_q15`] / [`rfft_q31`], [`Spectrum::from_squares`] for the read-out).
//!
//! The library's own fixed-point analyzer is being written on another branch; until it lands
//! these stand in for it, with the same stage boundaries as the f32 [`leakless::Analyzer`]
//! (condition, window, transform, average, each announced to a probe as it begins) so that the
//! boards can count instructions per stage for all three paths alike. No float is used per
//! block; float appears only in [`Self::read_into`], once per finished average, to hand
//! the levels to the rest of the library.
//!
//! # Per block
//!
//! * **condition**: one pass for the sum (the mean, rounded) and the peak deviation, and the
//!   overload test (a sample at the converter's clip codes, `|x| >= 32767`, rejects the block,
//!   as the f32 analyzer does with `full_scale = 32767`).
//! * **window**: `y = (x - mean) * w`, with the block normalised on the way: the shift `g` is
//!   chosen from the peak so that the windowed block uses the whole word (block floating
//!   point starts here; the transform carries it on). Rounded, never overflows.
//! * **transform**: `rfft_q15` / `rfft_q31`, block exponent `e`.
//! * **average**: `|X|^2` of every line into a `u64` accumulator with one shared exponent;
//!   a block with a larger exponent scales the accumulator down first (a rare extra pass).
//!
//! # Memory
//!
//! Q15: overlap buffer `2 N`, block `2 N`, accumulator `8 BINS` bytes. Q31: overlap buffer
//! `2 N` (the counts are 16-bit), block `2 N`, 32-bit work block `4 N`, accumulator `8 BINS`.
//! The window tables are `static`s in flash.

use leakless::fft::fixed::{bin_q15, bin_q31, rfft_q15, rfft_q31};
use leakless::math::cos_turns;
use leakless::spectrum::frame::Framer;
use leakless::{ConfigError, Correction, Factors, Scale, Spectrum, SpectrumInfo, Stage, WindowQ15};

/// Settings shared by both pipelines (what the f32 analyzer's `Config` says for the same run).
#[derive(Clone, Copy, Debug)]
pub struct FixedConfig {
    /// Sample rate, Hz.
    pub sample_rate_hz: f32,
    /// Overlap, samples (`0 ..< N`).
    pub overlap: usize,
    /// Blocks in one linear average; the average then restarts.
    pub averages: u32,
    /// Engineering units per count.
    pub sensitivity: f32,
    /// Unit name.
    pub unit: &'static str,
}

/// A 16-bit sample at or beyond this magnitude is at the converter's clip codes.
const CLIP: i32 = 32_767;

/// Sum, rounded mean and peak deviation from it of a block; `None` if it is overloaded.
fn condition(block: &[i16]) -> Option<(i32, i32, i32)> {
    let mut sum = 0i32;
    let mut lo = i32::from(i16::MAX);
    let mut hi = i32::from(i16::MIN);
    for &x in block {
        let x = i32::from(x);
        sum += x;
        lo = lo.min(x);
        hi = hi.max(x);
    }
    if lo <= -CLIP || hi >= CLIP {
        return None;
    }
    let n = block.len() as i32; // a power of two <= 4096: the sum fits in i32 (2^27)
    let shift = n.trailing_zeros();
    let mean = (sum + n / 2) >> shift; // rounded half up
    let peak = (hi - mean).max(mean - lo);
    Some((sum, mean, peak))
}

/// Shift that brings `peak` (> 0) as close to `limit` (> 0) as possible without passing it:
/// the largest `g` (negative for a right shift) with `peak * 2^g <= limit`.
fn headroom_shift(peak: i32, limit: i32) -> i32 {
    if peak <= 0 || limit <= 0 {
        return 0;
    }
    // Aligning the leading ones leaves `peak * 2^g` within a factor 2 of `limit`, possibly
    // above it: then one bit less.
    let g = peak.leading_zeros() as i32 - limit.leading_zeros() as i32;
    let (p, l) = (i64::from(peak), i64::from(limit));
    let over = if g >= 0 { p << g > l } else { p > l << -g };
    g - i32::from(over)
}

/// Linear average of `|X|^2` with one shared binary exponent: `mean |X[k]|^2 =
/// acc[k] * 2^exp / blocks`.
#[derive(Clone, Debug)]
struct Accumulator<const BINS: usize> {
    acc: [u64; BINS],
    exp: i32,
    blocks: u32,
}

impl<const BINS: usize> Accumulator<BINS> {
    const fn new() -> Self {
        Self {
            acc: [0; BINS],
            exp: 0,
            blocks: 0,
        }
    }

    /// Aligns the accumulator to a block of exponent `exp`; returns the right shift for the
    /// block's own values.
    fn align(&mut self, exp: i32) -> u32 {
        if self.blocks == 0 {
            self.acc = [0; BINS];
            self.exp = exp;
            return 0;
        }
        if exp > self.exp {
            let down = (exp - self.exp) as u32;
            for a in self.acc.iter_mut() {
                *a = a.checked_shr(down).unwrap_or(0);
            }
            self.exp = exp;
        }
        (self.exp - exp) as u32
    }

    fn add(&mut self, k: usize, power: u64, shift: u32) {
        self.acc[k] += power.checked_shr(shift).unwrap_or(0);
    }
}

/// Converts a finished average into a spectrum on `scale`.
#[inline(never)]
fn read_out<const N: usize, const BINS: usize>(
    acc: &Accumulator<BINS>,
    factors: &Factors,
    config: &FixedConfig,
    out: &mut Spectrum<BINS>,
    scale: Scale,
    correction: Correction,
) {
    let mut squares = [0.0f32; BINS];
    for (s, &a) in squares.iter_mut().zip(acc.acc.iter()) {
        *s = a as f32;
    }
    // squares[k] = gain * mean |X_eng[k]|^2, with mean |X_counts|^2 = acc 2^exp / blocks and
    // X_eng = sensitivity X_counts.
    let s = f64::from(config.sensitivity);
    let gain = if acc.blocks == 0 {
        0.0
    } else {
        f64::from(acc.blocks) * libm::exp2(-f64::from(acc.exp)) / (s * s)
    };
    let info = SpectrumInfo {
        sample_rate_hz: config.sample_rate_hz,
        block_len: N,
        factors: *factors,
        unit: config.unit,
        averages: acc.blocks,
    };
    out.set_from_squares(&squares, gain, scale, correction, info);
}

/// The Q15 pipeline: 16-bit counts in, 16-bit block floating point throughout.
#[derive(Clone, Debug)]
pub struct PipelineQ15<'a, const N: usize, const BINS: usize> {
    window: &'a WindowQ15<N>,
    framer: Framer<i16, N>,
    block: [i16; N],
    avg: Accumulator<BINS>,
    config: FixedConfig,
    rejected: u32,
}

impl<'a, const N: usize, const BINS: usize> PipelineQ15<'a, N, BINS> {
    /// A pipeline over `window` (borrowed, stays in flash).
    pub fn new(window: &'a WindowQ15<N>, config: FixedConfig) -> Result<Self, ConfigError> {
        const { assert!(BINS == N / 2 + 1, "BINS must be N/2 + 1") };
        Ok(Self {
            window,
            framer: Framer::new(config.overlap)?,
            block: [0; N],
            avg: Accumulator::new(),
            config,
            rejected: 0,
        })
    }

    /// Pushes counts; `probe` is called as each stage of each block begins.
    pub fn push_probed(&mut self, counts: &[i16], probe: &mut impl FnMut(Stage)) -> u32 {
        let mut input = counts;
        let mut blocks = 0;
        while self.framer.next_block(&mut input, &mut self.block) {
            self.process(probe);
            blocks += 1;
        }
        blocks
    }

    /// Pushes counts without a probe.
    pub fn push(&mut self, counts: &[i16]) -> u32 {
        self.push_probed(counts, &mut |_| {})
    }

    fn process(&mut self, probe: &mut impl FnMut(Stage)) {
        probe(Stage::Condition);
        if self.avg.blocks >= self.config.averages {
            self.avg.blocks = 0; // linear average done: restart
        }
        let Some((sum, mean, peak)) = condition(&self.block) else {
            self.rejected += 1;
            probe(Stage::Done);
            return;
        };

        probe(Stage::Window);
        // y = (x - sum / N) 2^g w / 2^15, with g the largest shift that keeps
        // (peak + 1) 2^g <= 32767, so y fits. The exact mean, scaled, is computed once in 64
        // bits; per sample, x 2^g - mean 2^g is taken modulo 2^32 (wrapping), which is exact
        // because the true difference fits in an i32, and the loop stays in 32 bits for the
        // Cortex-M0.
        let g = headroom_shift(peak + 1, 32_767).min(15);
        if g >= 0 {
            let log2n = N.trailing_zeros();
            let scaled_mean = ((i64::from(sum) << g) + (1i64 << (log2n - 1))) >> log2n;
            let m = scaled_mean as i32; // modulo 2^32, see above
            for (x, &w) in self.block.iter_mut().zip(self.window.table()) {
                let d = i32::from(*x).wrapping_shl(g as u32).wrapping_sub(m);
                *x = ((d * i32::from(w) + (1 << 14)) >> 15) as i16;
            }
        } else {
            // A block spanning nearly the whole converter range (peak deviation >= 32767):
            // half a count of resolution, rounded mean.
            for (x, &w) in self.block.iter_mut().zip(self.window.table()) {
                let d = i32::from(*x) - mean;
                *x = ((d * i32::from(w) + (1 << 15)) >> 16) as i16;
            }
        }

        probe(Stage::Transform);
        let e = rfft_q15(&mut self.block);

        probe(Stage::Average);
        let shift = self.avg.align(2 * (e - g));
        // DC and Nyquist are real (packed in words 0 and 1, see `bin_q15`); then (re, im)
        // pairs. Each square <= 2^30, the sum of two <= 2^31: u32.
        let sq = |x: i16| (i32::from(x) * i32::from(x)) as u32;
        let (dc, _) = bin_q15(&self.block, 0).unwrap_or((0, 0));
        let (nyquist, _) = bin_q15(&self.block, N / 2).unwrap_or((0, 0));
        self.avg.add(0, u64::from(sq(dc)), shift);
        self.avg.add(BINS - 1, u64::from(sq(nyquist)), shift);
        for (k, pair) in self.block.chunks_exact(2).enumerate().skip(1) {
            self.avg.add(k, u64::from(sq(pair[0]) + sq(pair[1])), shift);
        }
        self.avg.blocks += 1;
        probe(Stage::Done);
    }

    /// Forgets the buffered samples, the average and the counter.
    pub fn reset(&mut self) {
        self.framer.clear();
        self.avg.blocks = 0;
        self.rejected = 0;
    }

    /// Whether the current linear average has all its blocks.
    pub fn is_done(&self) -> bool {
        self.avg.blocks >= self.config.averages
    }

    /// Blocks rejected for overload.
    pub fn rejected(&self) -> u32 {
        self.rejected
    }

    /// The current average on `scale` with `correction`.
    pub fn read_into(&self, out: &mut Spectrum<BINS>, scale: Scale, correction: Correction) {
        read_out::<N, BINS>(
            &self.avg,
            self.window.factors(),
            &self.config,
            out,
            scale,
            correction,
        );
    }

    /// A checksum of the accumulator (FNV-1a over its words and exponent): integer-only, so
    /// it must be the same on every core for the same input.
    pub fn checksum(&self) -> u32 {
        checksum(&self.avg)
    }
}

fn checksum<const BINS: usize>(avg: &Accumulator<BINS>) -> u32 {
    let mut h = 0x811C_9DC5u32;
    let mut eat = |b: u8| {
        h ^= u32::from(b);
        h = h.wrapping_mul(0x0100_0193);
    };
    for a in avg.acc.iter() {
        a.to_le_bytes().into_iter().for_each(&mut eat);
    }
    avg.exp.to_le_bytes().into_iter().for_each(&mut eat);
    h
}

/// The periodic Hann window in Q31, `round((2^31 - 1) w[n])` from the f64 definition, and
/// its factors computed from exactly those stored values (as [`WindowQ15`] does).
#[derive(Clone, Debug)]
pub struct HannQ31<const N: usize> {
    table: [i32; N],
    factors: Factors,
}

impl<const N: usize> HannQ31<N> {
    /// Evaluated by the compiler.
    pub const fn new() -> Self {
        let mut table = [0i32; N];
        let mut stored = [0.0f64; N];
        let mut n = 0;
        while n < N {
            let w = 0.5 - 0.5 * cos_turns(n as u64, N as u64);
            let q = (w * 2_147_483_647.0 + 0.5) as i64; // w >= 0: truncation of +0.5 rounds
            let q = if q > i32::MAX as i64 {
                i32::MAX
            } else {
                q as i32
            };
            table[n] = q;
            stored[n] = q as f64 / 2_147_483_648.0;
            n += 1;
        }
        Self {
            table,
            factors: Factors::of_samples(&stored),
        }
    }

    /// The table, read as `q / 2^31`.
    pub const fn table(&self) -> &[i32; N] {
        &self.table
    }

    /// Correction factors of the stored table.
    pub const fn factors(&self) -> &Factors {
        &self.factors
    }
}

impl<const N: usize> Default for HannQ31<N> {
    fn default() -> Self {
        Self::new()
    }
}

/// The Q31 pipeline: 16-bit counts in, 32-bit block floating point from the window on.
#[derive(Clone, Debug)]
pub struct PipelineQ31<'a, const N: usize, const BINS: usize> {
    window: &'a HannQ31<N>,
    framer: Framer<i16, N>,
    block: [i16; N],
    work: [i32; N],
    avg: Accumulator<BINS>,
    config: FixedConfig,
    rejected: u32,
}

/// Right shift of the Q31 powers before they are summed: `re^2 + im^2 <= 2^63`, so 8 bits
/// leave room for 256 blocks in a `u64`, and keep 55 bits of the strongest line.
const Q31_POWER_SHIFT: u32 = 8;

impl<'a, const N: usize, const BINS: usize> PipelineQ31<'a, N, BINS> {
    /// A pipeline over `window` (borrowed, stays in flash).
    pub fn new(window: &'a HannQ31<N>, config: FixedConfig) -> Result<Self, ConfigError> {
        const { assert!(BINS == N / 2 + 1, "BINS must be N/2 + 1") };
        if config.averages > 1 << Q31_POWER_SHIFT {
            return Err(ConfigError::AverageCount);
        }
        Ok(Self {
            window,
            framer: Framer::new(config.overlap)?,
            block: [0; N],
            work: [0; N],
            avg: Accumulator::new(),
            config,
            rejected: 0,
        })
    }

    /// Pushes counts; `probe` is called as each stage of each block begins.
    pub fn push_probed(&mut self, counts: &[i16], probe: &mut impl FnMut(Stage)) -> u32 {
        let mut input = counts;
        let mut blocks = 0;
        while self.framer.next_block(&mut input, &mut self.block) {
            self.process(probe);
            blocks += 1;
        }
        blocks
    }

    /// Pushes counts without a probe.
    pub fn push(&mut self, counts: &[i16]) -> u32 {
        self.push_probed(counts, &mut |_| {})
    }

    fn process(&mut self, probe: &mut impl FnMut(Stage)) {
        probe(Stage::Condition);
        if self.avg.blocks >= self.config.averages {
            self.avg.blocks = 0;
        }
        let Some((sum, _, peak)) = condition(&self.block) else {
            self.rejected += 1;
            probe(Stage::Done);
            return;
        };

        probe(Stage::Window);
        // The exact mean sum / N is removed, scaled by 2^g, as in the Q15 window: mean 2^g
        // once in 64 bits, the per-sample difference modulo 2^32 (exact, since
        // |x - mean| 2^g < (peak + 1) 2^g <= i32::MAX; g >= 15 for 16-bit counts). The
        // product with the Q31 table is taken in i64 and rounded back by 2^31.
        let g = headroom_shift(peak + 1, i32::MAX).clamp(0, 31);
        let log2n = N.trailing_zeros();
        let scaled_mean = ((i64::from(sum) << g) + (1i64 << (log2n - 1))) >> log2n;
        let m = scaled_mean as i32; // modulo 2^32: the differences below are exact
        for ((y, &x), &w) in self
            .work
            .iter_mut()
            .zip(self.block.iter())
            .zip(self.window.table())
        {
            let d = i32::from(x).wrapping_shl(g as u32).wrapping_sub(m);
            *y = ((i64::from(d) * i64::from(w) + (1 << 30)) >> 31) as i32;
        }

        probe(Stage::Transform);
        let e = rfft_q31(&mut self.work);

        probe(Stage::Average);
        let shift = self.avg.align(2 * (e - g) + Q31_POWER_SHIFT as i32);
        // Packed as for Q15. Each square <= 2^62, the sum of two <= 2^63: u64.
        let sq = |x: i32| (i64::from(x) * i64::from(x)) as u64;
        let (dc, _) = bin_q31(&self.work, 0).unwrap_or((0, 0));
        let (nyquist, _) = bin_q31(&self.work, N / 2).unwrap_or((0, 0));
        self.avg.add(0, sq(dc) >> Q31_POWER_SHIFT, shift);
        self.avg
            .add(BINS - 1, sq(nyquist) >> Q31_POWER_SHIFT, shift);
        for (k, pair) in self.work.chunks_exact(2).enumerate().skip(1) {
            self.avg
                .add(k, (sq(pair[0]) + sq(pair[1])) >> Q31_POWER_SHIFT, shift);
        }
        self.avg.blocks += 1;
        probe(Stage::Done);
    }

    /// Forgets the buffered samples, the average and the counter.
    pub fn reset(&mut self) {
        self.framer.clear();
        self.avg.blocks = 0;
        self.rejected = 0;
    }

    /// Whether the current linear average has all its blocks.
    pub fn is_done(&self) -> bool {
        self.avg.blocks >= self.config.averages
    }

    /// Blocks rejected for overload.
    pub fn rejected(&self) -> u32 {
        self.rejected
    }

    /// The current average on `scale` with `correction`.
    pub fn read_into(&self, out: &mut Spectrum<BINS>, scale: Scale, correction: Correction) {
        read_out::<N, BINS>(
            &self.avg,
            self.window.factors(),
            &self.config,
            out,
            scale,
            correction,
        );
    }

    /// A checksum of the accumulator, as [`PipelineQ15::checksum`].
    pub fn checksum(&self) -> u32 {
        checksum(&self.avg)
    }
}
