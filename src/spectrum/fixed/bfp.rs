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

    /// Folds in one block: `power[k] = powers[k] * 2^block_exponent` (`BINS` values, DC
    /// first), whose largest value has at most `block_bits` bits. Returns whether this block
    /// completed a linear average.
    pub(crate) fn add(
        &mut self,
        powers: impl Iterator<Item = u64>,
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
        let average_shift = self.exponent - common;
        let block_shift = block_exponent - common;
        let (m, s) = (self.reciprocal_mantissa, self.reciprocal_shift);
        let lines = &mut self.mantissas;
        let shifts = (first, average_shift, block_shift);
        let peak = match (self.mode, first) {
            (_, true) => fold(lines, powers, shifts, |_, p| p),
            (Averaging::Linear { .. }, false) => fold(lines, powers, shifts, |a, p| a + p),
            (Averaging::Exponential { .. }, false) => fold(lines, powers, shifts, |a, p| {
                if p >= a {
                    a + times_reciprocal(p - a, m, s)
                } else {
                    a - times_reciprocal(a - p, m, s)
                }
            }),
            (Averaging::PeakHold, false) => fold(lines, powers, shifts, |a, p| a.max(p)),
        };
        self.exponent = common;
        self.peak_bits = bit_length(peak);
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

/// One pass over the lines: both operands brought to the common exponent (`shifts` =
/// first block, accumulator shift, block shift), combined; returns the largest result.
/// Generic, so each mode gets its own loop with `combine` inlined.
#[inline(always)]
fn fold<const BINS: usize>(
    lines: &mut [u64; BINS],
    powers: impl Iterator<Item = u64>,
    (first, average_shift, block_shift): (bool, i32, i32),
    combine: impl Fn(u64, u64) -> u64,
) -> u64 {
    let mut peak = 0;
    for (slot, p) in lines.iter_mut().zip(powers) {
        let new = shift_round(p, block_shift);
        let old = if first {
            0
        } else {
            shift_round(*slot, average_shift)
        };
        *slot = combine(old, new);
        peak = peak.max(*slot);
    }
    peak
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
