//! The read-out's per-line arithmetic in integers: `fl(fl(m) 2^shift * factor)`, the `f32`
//! value the float read-out computes for a power mantissa `m`, built bit for bit with
//! integer operations (no soft-float calls on a core without an FPU, where the float form
//! costs a `u64` to `f32` conversion and a multiplication per line).
//!
//! Both roundings are IEEE 754 round-to-nearest-even, as `as f32` and `*` do: the mantissa of
//! `m` is rounded to 24 bits, then the 48-bit product of two 24-bit mantissas is. A result
//! outside the normal range (which a read-out never produces in practice) is left to the
//! float form by returning `None`.

/// Multiplies power mantissas by one `f32` factor after scaling them by `2^shift`.
#[derive(Clone, Copy, Debug)]
pub(crate) struct PowerScaler {
    /// The factor's mantissa with its hidden bit (`2^23 ..= 2^24 - 1`) in 12-bit halves.
    mantissa_high: u32,
    mantissa_low: u32,
    /// `shift` plus the factor's exponent of its integer mantissa.
    exponent: i32,
}

impl PowerScaler {
    /// For a finite, positive, normal `factor`; `None` otherwise.
    pub(crate) fn new(factor: f32, shift: i32) -> Option<Self> {
        let bits = factor.to_bits();
        let biased = ((bits >> 23) & 0xFF) as i32;
        if bits >> 31 != 0 || biased == 0 || biased == 0xFF {
            return None;
        }
        let mantissa = (bits & 0x7F_FFFF) | 0x80_0000;
        Some(Self {
            mantissa_high: mantissa >> 12,
            mantissa_low: mantissa & 0xFFF,
            exponent: shift + biased - 127 - 23,
        })
    }

    /// `fl(fl(m) * 2^shift * factor)` as the float form computes it (`(m as f32 * unit) *
    /// factor`, the first product exact), or `None` if the result is not a normal `f32`.
    ///
    /// In 32-bit words only: on Armv6-M every shift of a `u64` by a variable amount and every
    /// 64-bit product is a library call.
    #[inline]
    pub(crate) fn scale(&self, m: u64) -> Option<f32> {
        let (high, low) = ((m >> 32) as u32, m as u32);
        // The top 32 bits of m, left-aligned, and whether any bit below them is set.
        let (top, sticky, length) = if high != 0 {
            let s = leading_zeros(high);
            let top = if s == 0 {
                high
            } else {
                (high << s) | (low >> (32 - s))
            };
            (top, low << s != 0, 64 - s)
        } else if low != 0 {
            let s = leading_zeros(low);
            (low << s, false, 32 - s)
        } else {
            return Some(0.0);
        };
        let a = round_half_even(top >> 8, top & 0xFF, 0x80, sticky);
        // fl(m) = a 2^(length - 24); a may have rounded up to 2^24, which is still exact.
        let a_exponent = length as i32 - 24;
        let (q, q_exponent) = self.multiply(a);
        // value = q 2^(q_exponent + a_exponent + exponent), q = 1.f 2^23
        let biased = q_exponent + a_exponent + self.exponent + 23 + 127;
        if !(1..=254).contains(&biased) {
            return None;
        }
        Some(f32::from_bits(((biased as u32) << 23) | (q & 0x7F_FFFF)))
    }

    /// `a * mantissa` (`a <= 2^24`, so the product is below 2^48) rounded to 24 bits, half to even:
    /// `(q, e)` with `2^23 <= q < 2^24` and the product `~ q 2^e`. Four 12-by-12-bit
    /// products, so every partial sum fits 32 bits.
    #[inline(always)]
    fn multiply(&self, a: u32) -> (u32, i32) {
        let (ah, al) = (a >> 12, a & 0xFFF);
        let (fh, fl) = (self.mantissa_high, self.mantissa_low);
        let middle = ah * fl + al * fh; // < 2^26
        let low = ((middle & 0xFFF) << 12) + al * fl; // < 2^25
                                                      // product = high 2^24 + low, low < 2^24
        let high = ah * fh + (middle >> 12) + (low >> 24);
        let low = low & 0xFF_FFFF;
        // high < 2^24: the product is below 2^24 * 2^24 even for a = 2^24.
        if high >> 23 != 0 {
            normalised(round_half_even(high, low, 1 << 23, false), 24)
        } else {
            let q = (high << 1) | (low >> 23);
            normalised(round_half_even(q, low & 0x7F_FFFF, 1 << 22, false), 23)
        }
    }
}

/// `x.leading_zeros()` for `x != 0`, inline: Armv6-M has no count-leading-zeros instruction,
/// and the library routine costs a call and about 30 instructions.
#[inline(always)]
fn leading_zeros(x: u32) -> u32 {
    let (mut x, mut n) = (x, 0);
    for step in [16, 8, 4, 2, 1] {
        if x >> (32 - step) == 0 {
            n += step;
            x <<= step;
        }
    }
    n
}

/// `q`, rounded up when the dropped part `rest` (with `sticky`: more set bits below it) is
/// above `half`, or exactly `half` and `q` is odd.
#[inline(always)]
fn round_half_even(q: u32, rest: u32, half: u32, sticky: bool) -> u32 {
    let above = rest > half || (rest == half && sticky);
    if above || (rest == half && !sticky && q & 1 == 1) {
        q + 1
    } else {
        q
    }
}

/// A rounded 24-bit mantissa and its exponent; a carry to 2^24 becomes one more bit.
#[inline(always)]
fn normalised(q: u32, exponent: i32) -> (u32, i32) {
    if q >> 24 != 0 {
        (q >> 1, exponent + 1)
    } else {
        (q, exponent)
    }
}

#[cfg(test)]
#[allow(clippy::float_arithmetic)]
mod tests {
    use super::*;

    // The definition: IEEE 754 round-to-nearest-even as the host's `as f32` and `*` do it.
    #[test]
    fn every_line_is_the_float_form_to_the_bit() {
        let mut seed = 0x2545_f491_4f6c_dd1du64;
        let mut next = move || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            seed
        };
        let mut checked = 0;
        for case in 0..200_000u32 {
            let length = 1 + case % 63;
            let m = next() >> (64 - length) | 1u64 << (length - 1);
            // Exact halves and runs of ones, where rounding decides.
            let m = match case % 5 {
                0 => m | ((1u64 << (length.saturating_sub(25))) - 1),
                1 => m & !((1u64 << (length.saturating_sub(25))) - 1),
                _ => m,
            };
            let bits = length as i32 + (case % 3) as i32;
            let factor = f32::from_bits(0x3000_0000 + (next() as u32 % 0x1800_0000));
            let Some(scaler) = PowerScaler::new(factor, -bits) else {
                continue;
            };
            let unit = libm::ldexpf(1.0, -bits);
            let want = (m as f32 * unit) * factor;
            if let Some(got) = scaler.scale(m) {
                assert_eq!(got.to_bits(), want.to_bits(), "m {m} bits {bits} {factor}");
                checked += 1;
            } else {
                assert!(!want.is_normal(), "{want}");
            }
        }
        assert!(checked > 150_000);
        assert_eq!(PowerScaler::new(1.0, 0).unwrap().scale(0), Some(0.0));
        assert!(PowerScaler::new(-1.0, 0).is_none());
        assert!(PowerScaler::new(f32::INFINITY, 0).is_none());
        assert!(PowerScaler::new(1e-40, 0).is_none());
        // Far outside the normal range: left to the float form.
        assert!(PowerScaler::new(1e-30, -60).unwrap().scale(1).is_none());
    }
}
