//! Power averaged in block floating point: one `u64` mantissa per line and one exponent
//! shared by all lines, `power[k] = mantissa[k] * 2^exponent / divisor`.
//!
//! Every block arrives with its own exponent (the transform's block exponent). Before a block
//! is folded in, the accumulator and the block are both brought to a common exponent chosen
//! so that the larger of the two tops out at [`TOP_BITS`] bits: a louder block shifts the
//! accumulator down, a decayed accumulator (exponential average after a transient) is
//! shifted back up. Two operands below `2^62` cannot overflow a `u64` sum, and a mantissa of
//! 62 bits keeps lines about 180 dB below the strongest one, far under either transform's
//! noise floor. Every down-shift rounds (half up; on power values an exact half is rare).

use crate::spectrum::average::Averaging;

/// Operands are scaled to at most this many bits, so a sum of two fits a `u64`.
pub(crate) const TOP_BITS: i32 = 62;

/// The averaged power of `BINS` lines in block floating point, and the averaging state.
#[derive(Clone, Debug)]
pub(crate) struct PowerAverage<const BINS: usize> {
    mantissas: [u64; BINS],
    /// `power = mantissa * 2^exponent` (before the divisor).
    exponent: i32,
    /// Bit length of the largest mantissa (0: all zero).
    peak_bits: u32,
    mode: Averaging,
    /// `1 / tau = reciprocal_mantissa * 2^-(31 + reciprocal_shift)`, 31 significant bits
    /// whatever `tau` (exponential averaging only).
    reciprocal_mantissa: u64,
    reciprocal_shift: i32,
    averaged: u32,
    done: bool,
}

/// `v * 2^shift`, rounding half up when `shift < 0`. The caller keeps `v * 2^shift` below
/// `2^64` for `shift > 0`.
#[inline(always)]
pub(crate) fn shift_round(v: u64, shift: i32) -> u64 {
    if shift >= 0 {
        return v.checked_shl(shift as u32).unwrap_or(0);
    }
    let right = shift.unsigned_abs();
    if right > 64 {
        0
    } else {
        // Keep one more bit than wanted, then add it back as the rounding.
        let kept = v.checked_shr(right - 1).unwrap_or(0);
        (kept >> 1) + (kept & 1)
    }
}

/// Bit length of `v` (0 for 0).
#[inline(always)]
pub(crate) fn bit_length(v: u64) -> u32 {
    u64::BITS - v.leading_zeros()
}

impl<const BINS: usize> PowerAverage<BINS> {
    /// A validated mode (see [`Averaging::validate`]) with the exponential reciprocal already
    /// split into mantissa and shift (computed at construction, in the float-allowed part).
    pub(crate) fn new(mode: Averaging, reciprocal_mantissa: u64, reciprocal_shift: i32) -> Self {
        Self {
            mantissas: [0; BINS],
            exponent: 0,
            peak_bits: 0,
            mode,
            reciprocal_mantissa,
            reciprocal_shift,
            averaged: 0,
            done: false,
        }
    }

    /// Whether a new block would change the average.
    pub(crate) fn wants_block(&self) -> bool {
        !(self.done && self.mode.holds_when_done())
    }

    /// [`PowerAverage::add_lines`] with the `BINS` powers from one iterator, DC first.
    #[cfg(test)]
    pub(crate) fn add(
        &mut self,
        powers: impl Iterator<Item = u64>,
        block_exponent: i32,
        block_bits: u32,
    ) -> bool {
        // Each interior power as the pair (p, 0), whose "power" is p (see `LineWord for u64`).
        let mut all = [[0u64; 2]; BINS];
        for (slot, p) in all.iter_mut().zip(powers) {
            slot[0] = p;
        }
        let (dc, nyquist) = (all[0][0], all[BINS - 1][0]);
        let interior = all[1..BINS - 1].as_flattened();
        self.add_lines(dc, interior, nyquist, block_exponent, block_bits)
    }

    /// Folds in one block: `power[k] = p[k] * 2^block_exponent` for DC, the `BINS - 2`
    /// interior lines (`p = re^2 + im^2` of the word pairs of `interior`, in order), then
    /// Nyquist; the largest `p[k]` has at most `block_bits` bits. Returns whether this block completed a linear average.
    ///
    /// The arithmetic is the one the module describes; only its order is arranged for
    /// cores without a 64-bit barrel shifter: the exponent is chosen once per block, the
    /// accumulator is shifted in a pass of its own only when that exponent moves it
    /// (`u64` shifts by an amount fixed for the block, done on 32-bit halves), and the
    /// per-line fold has no branch.
    pub(crate) fn add_lines<W: LineWord>(
        &mut self,
        dc: u64,
        interior: &[W],
        nyquist: u64,
        block_exponent: i32,
        block_bits: u32,
    ) -> bool {
        if !self.wants_block() {
            return false;
        }
        if self.done {
            // Linear + Restart: this block starts the next average.
            self.averaged = 0;
            self.done = false;
        }
        let first = self.averaged == 0;
        // The tops (exponent of the highest bit) of the two operands; None for all zeros.
        let block_top = (block_bits > 0).then(|| block_exponent + block_bits as i32);
        let average_top =
            (!first && self.peak_bits > 0).then(|| self.exponent + self.peak_bits as i32);
        let common = match (average_top, block_top) {
            (Some(a), Some(b)) => a.max(b) - TOP_BITS,
            (Some(a), None) => a - TOP_BITS,
            (None, Some(b)) => b - TOP_BITS,
            (None, None) => 0,
        };
        if !first {
            realign(&mut self.mantissas, self.exponent - common);
        }
        let shift = Shift::of(block_exponent - common);
        let mode = match (self.mode, first) {
            (_, true) => Combine::First,
            (Averaging::Linear { .. }, false) => Combine::Sum,
            (Averaging::Exponential { .. }, false) => {
                Combine::Exponential(self.reciprocal_mantissa, self.reciprocal_shift)
            }
            (Averaging::PeakHold, false) => Combine::Max,
        };
        let bits = fold(&mut self.mantissas, (dc, interior, nyquist), shift, mode);
        self.exponent = common;
        // The OR of the lines has the bit length of their maximum.
        self.peak_bits = bit_length(bits);
        self.averaged = self.averaged.saturating_add(1);
        if let Averaging::Linear { count, .. } = self.mode {
            if self.averaged >= count {
                self.done = true;
                return true;
            }
        }
        false
    }

    /// The mantissas, DC first.
    pub(crate) fn mantissas(&self) -> &[u64; BINS] {
        &self.mantissas
    }

    /// The shared exponent.
    pub(crate) fn exponent(&self) -> i32 {
        self.exponent
    }

    /// Bit length of the largest mantissa.
    pub(crate) fn peak_bits(&self) -> u32 {
        self.peak_bits
    }

    /// What the mantissas are divided by for the average: the blocks summed so far for a
    /// linear average, else 1.
    pub(crate) fn divisor(&self) -> u32 {
        match self.mode {
            Averaging::Linear { .. } => self.averaged.max(1),
            _ => 1,
        }
    }

    /// Blocks in the current average.
    pub(crate) fn averaged(&self) -> u32 {
        self.averaged
    }

    /// Whether a linear average has its `count` blocks.
    pub(crate) fn is_done(&self) -> bool {
        self.done
    }

    /// Empties the average.
    pub(crate) fn reset(&mut self) {
        self.mantissas = [0; BINS];
        self.exponent = 0;
        self.peak_bits = 0;
        self.averaged = 0;
        self.done = false;
    }
}

/// `shift_round(v, shift)` for every mantissa, in place (nothing for `shift == 0`). The
/// amount is the same for every line, so the case is chosen once, outside the loop.
#[inline(never)]
fn realign(lines: &mut [u64], shift: i32) {
    match Shift::of(shift) {
        Shift::Left(0) => {}
        Shift::Right(r) => lines.iter_mut().for_each(|v| *v = right_round(*v, r)),
        Shift::Left(l) => lines.iter_mut().for_each(|v| *v = left(*v, l)),
        Shift::LeftWide(l) => lines.iter_mut().for_each(|v| *v = left_wide(*v, l)),
        Shift::Any(s) => lines.iter_mut().for_each(|v| *v = shift_round(*v, s)),
    }
}

/// A shift by an amount fixed for a whole block, sorted into the cases that 32-bit
/// instructions do without a 64-bit shift: a Cortex-M0 has none, and a `u64` shift by a
/// variable amount is a library call there.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Shift {
    /// `v << l`, `l` in `0..32`.
    Left(u32),
    /// `v << (32 + l)`, `l` in `0..32`.
    LeftWide(u32),
    /// `v >> r` rounded half up, `r` in `1..32`.
    Right(u32),
    /// Anything else: [`shift_round`].
    Any(i32),
}

impl Shift {
    fn of(shift: i32) -> Self {
        match shift {
            0..=31 => Shift::Left(shift as u32),
            32..=63 => Shift::LeftWide(shift as u32 - 32),
            -31..=-1 => Shift::Right(shift.unsigned_abs()),
            _ => Shift::Any(shift),
        }
    }
}

/// How a block is combined with the (aligned) accumulator.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Combine {
    /// The first block of an average: taken as it is.
    First,
    /// Linear: summed.
    Sum,
    /// Exponential, with `1 / tau` as mantissa and shift.
    Exponential(u64, i32),
    /// Peak hold: the larger.
    Max,
}

/// A transform word whose pairs `(re, im)` give a line's power.
pub trait LineWord: Copy {
    /// `re^2 + im^2`.
    fn power(re: Self, im: Self) -> u64;
}

impl LineWord for i16 {
    #[inline(always)]
    fn power(re: i16, im: i16) -> u64 {
        // Each square is at most 2^30, so the sum of two fits a `u32`.
        let square = |v: i16| (i32::from(v) * i32::from(v)) as u32;
        u64::from(square(re) + square(im))
    }
}

impl LineWord for i32 {
    #[inline(always)]
    fn power(re: i32, im: i32) -> u64 {
        let square = |v: i32| (i64::from(v) * i64::from(v)) as u64;
        square(re) + square(im)
    }
}

/// A given power `re` (with `im = 0`), for the unit tests.
#[cfg(test)]
impl LineWord for u64 {
    fn power(re: u64, im: u64) -> u64 {
        re + im
    }
}

/// One pass over the lines: each block power brought to the common exponent by `shift` and
/// combined with its (already aligned) mantissa; returns the OR of the results. Every mode
/// and every case of the shift gets its own loop with both inlined and no branch per line.
/// Takes slices, so one copy serves every `N` (it is not inlined for the same reason).
#[inline(never)]
fn fold<W: LineWord>(acc: &mut [u64], lines: (u64, &[W], u64), shift: Shift, mode: Combine) -> u64 {
    match mode {
        Combine::First => fold_shifted(acc, lines, shift, |_, p| p),
        Combine::Sum => fold_shifted(acc, lines, shift, |a, p| a + p),
        Combine::Exponential(m, s) => fold_shifted(acc, lines, shift, |a, p| {
            if p >= a {
                a + times_reciprocal(p - a, m, s)
            } else {
                a - times_reciprocal(a - p, m, s)
            }
        }),
        Combine::Max => fold_shifted(acc, lines, shift, |a, p| a.max(p)),
    }
}

#[inline(always)]
fn fold_shifted<W: LineWord>(
    acc: &mut [u64],
    lines: (u64, &[W], u64),
    shift: Shift,
    combine: impl Fn(u64, u64) -> u64,
) -> u64 {
    match shift {
        Shift::Left(l) => fold_with(acc, lines, |p| left(p, l), combine),
        Shift::LeftWide(l) => fold_with(acc, lines, |p| left_wide(p, l), combine),
        Shift::Right(r) => fold_with(acc, lines, |p| right_round(p, r), combine),
        Shift::Any(s) => fold_with(acc, lines, |p| shift_round(p, s), combine),
    }
}

#[inline(always)]
fn fold_with<W: LineWord>(
    acc: &mut [u64],
    (dc, interior, nyquist): (u64, &[W], u64),
    align: impl Fn(u64) -> u64,
    combine: impl Fn(u64, u64) -> u64,
) -> u64 {
    let Some((dc_line, rest)) = acc.split_first_mut() else {
        return 0;
    };
    let Some((nyquist_line, middle)) = rest.split_last_mut() else {
        return 0;
    };
    *dc_line = combine(*dc_line, align(dc));
    *nyquist_line = combine(*nyquist_line, align(nyquist));
    // Only the high halves are ORed per line (one register fewer in the loop, which a
    // Cortex-M0 with its eight low registers feels); the low halves matter only when every
    // high half is zero, and then take a pass of their own.
    let high = |v: u64| (v >> 32) as u32;
    let mut high_bits = high(*dc_line) | high(*nyquist_line);
    for (slot, pair) in middle.iter_mut().zip(interior.chunks_exact(2)) {
        *slot = combine(*slot, align(W::power(pair[0], pair[1])));
        high_bits |= high(*slot);
    }
    if high_bits != 0 {
        // The same bit length as the OR of the full lines.
        return u64::from(high_bits) << 32;
    }
    acc.iter().fold(0, |bits, &v| bits | v)
}

/// The 32-bit halves of `v`, high first.
#[inline(always)]
fn halves(v: u64) -> (u32, u32) {
    ((v >> 32) as u32, v as u32)
}

/// `hi 2^32 + lo`.
#[inline(always)]
fn join(hi: u32, lo: u32) -> u64 {
    (u64::from(hi) << 32) | u64::from(lo)
}

/// `v << l` for `l < 32` (bits beyond 64 are lost, as with `<<`).
#[inline(always)]
fn left(v: u64, l: u32) -> u64 {
    let (hi, lo) = halves(v);
    join((hi << l) | ((lo >> 1) >> (31 - l)), lo << l)
}

/// `v << (32 + l)` for `l < 32`.
#[inline(always)]
fn left_wide(v: u64, l: u32) -> u64 {
    join((v as u32) << l, 0)
}

/// `v >> r` rounded half up (`shift_round(v, -r)`) for `1 <= r < 32`.
#[inline(always)]
fn right_round(v: u64, r: u32) -> u64 {
    let (hi, lo) = halves(v);
    let round = (lo >> (r - 1)) & 1;
    join(hi >> r, (lo >> r) | (hi << (32 - r))) + u64::from(round)
}

/// `d / tau` rounded, for `d < 2^63` and `1 / tau = m * 2^-(31 + s)` with `m <= 2^31`:
/// `d = hi 2^31 + lo`, so `d m / 2^31 = hi m + lo m / 2^31` with both products below `2^63`.
#[inline(always)]
fn times_reciprocal(d: u64, m: u64, s: i32) -> u64 {
    let hi = d >> 31;
    let lo = d & ((1 << 31) - 1);
    shift_round(hi * m + shift_round(lo * m, -31), -s)
}

// The checks compute expected values in f64.
#[cfg(test)]
#[allow(clippy::float_arithmetic)]
mod tests {
    use super::*;
    use crate::spectrum::average::WhenDone;

    #[test]
    fn shifts_round_half_up_and_never_overflow() {
        assert_eq!(shift_round(5, -1), 3);
        assert_eq!(shift_round(4, -1), 2);
        assert_eq!(shift_round(u64::MAX, -1), 1 << 63);
        assert_eq!(shift_round(u64::MAX, -64), 1);
        assert_eq!(shift_round(u64::MAX, -65), 0);
        assert_eq!(shift_round(0, 200), 0);
        assert_eq!(shift_round(3, 4), 48);
        assert_eq!(
            (bit_length(0), bit_length(1), bit_length(u64::MAX)),
            (0, 1, 64)
        );
    }

    fn value(a: &PowerAverage<3>, k: usize) -> f64 {
        a.mantissas()[k] as f64 * libm::ldexp(1.0, a.exponent()) / a.divisor() as f64
    }

    // From the definition of the arithmetic mean: blocks of different exponents add as
    // their values, whatever the order of loud and quiet.
    #[test]
    fn linear_sum_aligns_exponents() {
        let mut a = PowerAverage::<3>::new(
            Averaging::Linear {
                count: 3,
                when_done: WhenDone::Hold,
            },
            0,
            0,
        );
        a.add([4u64, 0, 1].into_iter(), 10, 3); // 4096, 0, 1024
        a.add([1u64 << 40, 3, 0].into_iter(), -30, 41); // 1024, 3 * 2^-30, 0
        assert!(a.add([2u64, 2, 2].into_iter(), 0, 2)); // 2, 2, 2
        let tiny = 3.0 * libm::ldexp(1.0, -30);
        let expected = [
            (4096.0 + 1024.0 + 2.0) / 3.0,
            (tiny + 2.0) / 3.0,
            (1024.0 + 2.0) / 3.0,
        ];
        for (k, e) in expected.iter().enumerate() {
            let relative = (value(&a, k) - e).abs() / e;
            assert!(relative < 1e-15, "line {k}: {} vs {e}", value(&a, k));
        }
        assert!(!a.wants_block());
    }

    // The exponential recursion avg += (p - avg) / tau, here tau = 4, in exact binary steps.
    #[test]
    fn exponential_follows_its_recursion() {
        // 1/4 = 2^30 * 2^-(31 + 1)
        let mut a = PowerAverage::<3>::new(
            Averaging::Exponential {
                time_constant_blocks: 4.0,
            },
            1 << 30,
            1,
        );
        a.add([16u64, 16, 0].into_iter(), 0, 5);
        a.add([0u64, 32, 16].into_iter(), 4, 6); // 0, 512, 256
        assert_eq!(value(&a, 0), 12.0);
        assert_eq!(value(&a, 1), 16.0 + (512.0 - 16.0) / 4.0);
        assert_eq!(value(&a, 2), 64.0);
    }

    // By definition: peak hold keeps each line's largest value; an all-zero block (no bits)
    // changes nothing and does not disturb the exponent.
    #[test]
    fn peak_hold_and_zero_blocks() {
        let mut a = PowerAverage::<3>::new(Averaging::PeakHold, 0, 0);
        a.add([0u64, 0, 0].into_iter(), 0, 0);
        assert_eq!(a.peak_bits(), 0);
        a.add([1u64, 8, 0].into_iter(), -20, 4);
        a.add([0u64, 0, 0].into_iter(), 50, 0);
        a.add([1u64, 1, 0].into_iter(), -18, 1);
        assert_eq!(value(&a, 0), libm::ldexp(1.0, -18));
        assert_eq!(value(&a, 1), libm::ldexp(1.0, -17));
        assert_eq!(value(&a, 2), 0.0);
    }
}
