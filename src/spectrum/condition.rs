//! Conditioning: per-block checks (non-finite samples, overload), detrending, and the
//! input-to-engineering-unit scaling.
//!
//! The checks and the block mean come from one pass over the block in input units
//! ([`Conditioning::inspect`]). The mean is subtracted in the same pass that applies the
//! window, and the sensitivity is applied to the *averaged* power when a spectrum is read
//! (as `sensitivity^2`): scaling is linear, so this gives the same levels as scaling every
//! sample, costs nothing per block, and keeps the accumulator in input units where its range
//! is bounded by [`MAX_INPUT_MAGNITUDE`].

use crate::error::ConfigError;

/// Samples with a magnitude at or beyond this (input units) are treated like NaN and
/// infinity: the block is rejected and counted as non-finite. Below it, an `N <= 4096` block
/// cannot overflow the `f32` transform or its power (`(2 * 1e15 * 4096)^2 < 3.4e38`).
pub const MAX_INPUT_MAGNITUDE: f32 = 1e15;

/// The magnitudes of sensitivity accepted: wide enough for any sensor (counts to g is about
/// 1e-4, volts to m/s^2 about 1e2), narrow enough that the read-out scaling of a valid block
/// stays inside the `f32` range instead of underflowing to zero.
pub const SENSITIVITY_RANGE: core::ops::RangeInclusive<f32> = 1e-9..=1e9;

/// What is removed from each block before windowing.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Detrend {
    /// Nothing: DC stays in bin 0 (and leaks into the low lines through the window).
    None,
    /// The block mean (SciPy's `detrend='constant'`, its default): bin 0 reads about 0.
    #[default]
    Mean,
}

/// What happens to a block with a sample at or beyond full scale.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum OverloadPolicy {
    /// Keep it out of the average (the default): a clipped block spreads false harmonics and
    /// broadband energy over the spectrum, and a clean average is worth more than one more block.
    #[default]
    Reject,
    /// Average it anyway (it is still counted as overloaded).
    Average,
}

/// The outcome of [`Conditioning::inspect`] for one block.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BlockCheck {
    /// Some sample is NaN, infinite, or at least [`MAX_INPUT_MAGNITUDE`] in magnitude.
    pub non_finite: bool,
    /// Some sample has `|x| >= full_scale` (an infinity counts; NaN does not). Always false
    /// without a full scale.
    pub overloaded: bool,
    /// The value to subtract from every sample: the block mean for [`Detrend::Mean`] (only
    /// meaningful when `non_finite` is false), else 0.
    pub offset: f32,
}

/// The validated conditioning settings.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Conditioning {
    detrend: Detrend,
    sensitivity: f32,
    full_scale: Option<f32>,
    overload: OverloadPolicy,
}

impl Conditioning {
    /// Checks the settings: `sensitivity` (engineering units per input unit) with a magnitude
    /// in [`SENSITIVITY_RANGE`] (a negative one flips polarity, which no power spectrum sees);
    /// `full_scale` (input units) finite and > 0 when given.
    pub fn new(
        detrend: Detrend,
        sensitivity: f32,
        full_scale: Option<f32>,
        overload: OverloadPolicy,
    ) -> Result<Self, ConfigError> {
        if !SENSITIVITY_RANGE.contains(&sensitivity.abs()) {
            return Err(ConfigError::Sensitivity);
        }
        if let Some(fs) = full_scale {
            if !(fs.is_finite() && fs > 0.0) {
                return Err(ConfigError::FullScale);
            }
        }
        Ok(Self {
            detrend,
            sensitivity,
            full_scale,
            overload,
        })
    }

    /// The detrend setting.
    pub fn detrend(&self) -> Detrend {
        self.detrend
    }

    /// Engineering units per input unit.
    pub fn sensitivity(&self) -> f32 {
        self.sensitivity
    }

    /// The overload limit in input units, if any.
    pub fn full_scale(&self) -> Option<f32> {
        self.full_scale
    }

    /// The overload policy.
    pub fn overload_policy(&self) -> OverloadPolicy {
        self.overload
    }

    /// One pass over a block in input units: the checks and the offset to remove.
    ///
    /// The sum runs in [`LANES`] interleaved partial sums, added in a fixed order at the end:
    /// independent sums let the compiler vectorise the loop, and the order depends only on
    /// the block, never on how the stream was chunked.
    ///
    /// The usual block is decided by sums alone: with the sum it takes the sum of squares, and
    /// when that is below `bound^2` (`bound` the smaller of the full scale and
    /// [`MAX_INPUT_MAGNITUDE`]) no sample can reach the bound, none is NaN or infinite, and
    /// the block is clean (every rounded square is at most a sum of non-negative terms, and
    /// rounding is monotone: `|x| >= bound` would give `x^2 >= bound^2` after rounding too).
    /// Only a block that fails this test, one whose mean square reaches `bound^2 / N`
    /// (-30 dB re the bound at `N = 1024`) or that holds a bad sample, takes the exact pass
    /// for the largest magnitude as well. Both passes add in the same order, so the offset
    /// is the same either way.
    pub fn inspect(&self, block: &[f32]) -> BlockCheck {
        let limit = self.full_scale.unwrap_or(f32::INFINITY);
        let bound = limit.min(MAX_INPUT_MAGNITUDE);
        let (sum, squares) = sums(block);
        let (sum, non_finite, overloaded) = if squares < bound * bound {
            (sum, false, false)
        } else {
            match self.full_scale {
                Some(limit) => scan(block, limit),
                // No limit: nothing is an overload, not even an infinity.
                None => {
                    let (sum, non_finite, _) = scan(block, f32::INFINITY);
                    (sum, non_finite, false)
                }
            }
        };
        let offset = match self.detrend {
            Detrend::Mean if !non_finite && !block.is_empty() => sum / block.len() as f32,
            _ => 0.0,
        };
        BlockCheck {
            non_finite,
            overloaded,
            offset,
        }
    }

    /// Whether a block with this check enters the average.
    pub fn accepts(&self, check: &BlockCheck) -> bool {
        let overload_rejects = check.overloaded && self.overload == OverloadPolicy::Reject;
        !(check.non_finite || overload_rejects)
    }
}

/// The window pass of the float path: `out[n] = (block[n] - offset) w[n]`, detrend and window
/// in one pass (`offset` from [`BlockCheck::offset`]).
#[inline]
pub fn detrend_and_window<const N: usize>(
    out: &mut [f32; N],
    block: &[f32; N],
    offset: f32,
    window: &[f32; N],
) {
    for ((y, &x), &w) in out.iter_mut().zip(block).zip(window) {
        *y = (x - offset) * w;
    }
}

/// Interleaved partial sums in [`Conditioning::inspect`].
pub const LANES: usize = 8;

/// Sum, non-finite flag and overload flag (`|x| >= limit`) of a block.
///
/// The loop keeps only partial sums and the largest magnitude, so it vectorises: a NaN or an
/// infinity makes its lane's sum non-finite (finite samples below [`MAX_INPUT_MAGNITUDE`]
/// cannot overflow a sum of at most 65536 of them), and [`larger`] skips NaN, so the largest
/// magnitude sees every infinity and every huge value but never a NaN.
#[inline(always)]
fn scan(block: &[f32], limit: f32) -> (f32, bool, bool) {
    let mut sums = [0.0f32; LANES];
    let mut largest = [0.0f32; LANES];
    let mut lanes = block.chunks_exact(LANES);
    for chunk in &mut lanes {
        for ((sum, big), &x) in sums.iter_mut().zip(&mut largest).zip(chunk) {
            *sum += x;
            *big = larger(*big, x.abs());
        }
    }
    for ((sum, big), &x) in sums.iter_mut().zip(&mut largest).zip(lanes.remainder()) {
        *sum += x;
        *big = larger(*big, x.abs());
    }
    let non_finite_sum = sums.iter().any(|s| !s.is_finite());
    let largest = largest.iter().fold(0.0f32, |m, &x| larger(m, x));
    let non_finite = non_finite_sum || out_of_range(largest);
    (pairwise(sums), non_finite, largest >= limit)
}

/// Sum and sum of squares of a block, the sum in the same lanes and order as [`scan`]'s.
#[inline(always)]
fn sums(block: &[f32]) -> (f32, f32) {
    let mut sums = [0.0f32; LANES];
    let mut squares = [0.0f32; LANES];
    let mut lanes = block.chunks_exact(LANES);
    for chunk in &mut lanes {
        for ((sum, square), &x) in sums.iter_mut().zip(&mut squares).zip(chunk) {
            *sum += x;
            *square += x * x;
        }
    }
    for ((sum, square), &x) in sums.iter_mut().zip(&mut squares).zip(lanes.remainder()) {
        *sum += x;
        *square += x * x;
    }
    (pairwise(sums), pairwise(squares))
}

/// The lanes added pairwise, in a fixed order.
#[inline(always)]
fn pairwise(mut lanes: [f32; LANES]) -> f32 {
    let mut width = LANES;
    while width > 1 {
        width /= 2;
        for l in 0..width {
            lanes[l] += lanes[l + width];
        }
    }
    lanes[0]
}

/// `x` if it is larger than `m`, else `m` (so a NaN `x` is skipped). One compare-and-select,
/// which vectorises better than `f32::max`.
#[inline(always)]
fn larger(m: f32, x: f32) -> f32 {
    if x > m {
        x
    } else {
        m
    }
}

/// NaN, an infinity, or a magnitude at or beyond [`MAX_INPUT_MAGNITUDE`], in one compare
/// (`NaN < x` is false).
#[inline(always)]
fn out_of_range(magnitude: f32) -> bool {
    #[allow(clippy::neg_cmp_op_on_partial_ord)]
    let outside = !(magnitude < MAX_INPUT_MAGNITUDE);
    outside
}

#[cfg(test)]
mod tests {
    use super::*;

    fn conditioning(full_scale: Option<f32>) -> Conditioning {
        Conditioning::new(Detrend::Mean, 1.0, full_scale, OverloadPolicy::Reject).unwrap()
    }

    #[test]
    fn non_finite_and_huge_samples_are_flagged() {
        let c = conditioning(None);
        for bad in [f32::NAN, f32::INFINITY, f32::NEG_INFINITY, 1e15, -3e38] {
            let check = c.inspect(&[0.0, bad, 1.0]);
            assert!(check.non_finite, "{bad}");
            assert!(!c.accepts(&check));
        }
        let check = c.inspect(&[0.0, 9.9e14, f32::MIN_POSITIVE / 4.0]);
        assert!(!check.non_finite && !check.overloaded && c.accepts(&check));
    }

    #[test]
    fn overload_is_at_or_beyond_full_scale() {
        let c = conditioning(Some(2.0));
        assert!(!c.inspect(&[1.999, -1.999]).overloaded);
        assert!(c.inspect(&[0.0, 2.0]).overloaded);
        assert!(c.inspect(&[-2.0, 0.0]).overloaded);
        assert!(c.inspect(&[f32::INFINITY]).overloaded);
        assert!(!c.inspect(&[f32::NAN]).overloaded);
        assert!(!c.accepts(&c.inspect(&[3.0])));
        let keep =
            Conditioning::new(Detrend::None, 1.0, Some(2.0), OverloadPolicy::Average).unwrap();
        let check = keep.inspect(&[3.0]);
        assert!(check.overloaded && keep.accepts(&check));
    }

    // The definition: the exact pass alone decides every block the same way, to the bit.
    #[test]
    fn the_sum_of_squares_test_agrees_with_the_exact_pass() {
        let mut seed = 0x1234_5678u32;
        let mut next = move || {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            seed
        };
        for full_scale in [None, Some(1.0), Some(32767.0), Some(3e15)] {
            let c = conditioning(full_scale);
            for case in 0..400 {
                let spread = [1e-3f32, 0.02, 0.5, 3.0, 4e4, 1e14, 2e15][case % 7];
                let mut block = [0.0f32; 64];
                for x in block.iter_mut() {
                    *x = (next() as i32 as f32 / 2_147_483_648.0) * spread;
                }
                if case % 11 == 0 {
                    block[(next() % 64) as usize] = [f32::NAN, f32::INFINITY, 1e15][case % 3];
                }
                let limit = full_scale.unwrap_or(f32::INFINITY);
                let (sum, non_finite, over) = scan(&block, limit);
                let want = BlockCheck {
                    non_finite,
                    overloaded: over && full_scale.is_some(),
                    offset: if non_finite { 0.0 } else { sum / 64.0 },
                };
                let got = c.inspect(&block);
                assert_eq!(got.non_finite, want.non_finite, "{full_scale:?} {case}");
                assert_eq!(got.overloaded, want.overloaded, "{full_scale:?} {case}");
                assert_eq!(got.offset.to_bits(), want.offset.to_bits(), "{case}");
            }
        }
    }

    #[test]
    fn mean_is_the_offset() {
        assert_eq!(
            conditioning(None).inspect(&[1.0, 2.0, 3.0, 6.0]).offset,
            3.0
        );
        let none = Conditioning::new(Detrend::None, 1.0, None, OverloadPolicy::Reject).unwrap();
        assert_eq!(none.inspect(&[1.0, 2.0]).offset, 0.0);
    }

    #[test]
    fn bad_settings_are_typed_errors() {
        let new = |s, fs| Conditioning::new(Detrend::Mean, s, fs, OverloadPolicy::Reject);
        for s in [0.0, f32::NAN, f32::INFINITY, -f32::INFINITY, 1e-10, -2e9] {
            assert_eq!(new(s, None).err(), Some(ConfigError::Sensitivity));
        }
        for fs in [0.0, -1.0, f32::NAN, f32::INFINITY] {
            assert_eq!(new(1.0, Some(fs)).err(), Some(ConfigError::FullScale));
        }
        assert!(new(-9.81, Some(1.0)).is_ok());
        assert!(new(1e-9, None).is_ok() && new(-1e9, None).is_ok());
    }
}
