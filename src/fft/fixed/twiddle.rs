//! Twiddle tables, built in f64 at compile time and rounded once.
//!
//! This is the only place in the fixed-point FFT that touches floating point, and it runs
//! in the compiler: the tables are `const`, so the hot path sees integers only.
#![allow(clippy::float_arithmetic)]

use crate::math;

/// `cos(2 pi i / N)` for `i = 0..N` in Q15, `-sin` is read from the same table a quarter
/// turn later.
pub(crate) struct CosTable<const N: usize>;

impl<const N: usize> CosTable<N> {
    /// `round(32768 cos)`, clamped to `+-32767`.
    pub(crate) const Q15: [i16; N] = {
        let mut t = [0i16; N];
        let mut i = 0;
        while i < N {
            t[i] = round_clamped(math::cos_turns(i as u64, N as u64), 32768.0) as i16;
            i += 1;
        }
        t
    };

    /// `round(2^31 cos)`, clamped to `+-(2^31 - 1)`.
    pub(crate) const Q31: [i32; N] = {
        let mut t = [0i32; N];
        let mut i = 0;
        while i < N {
            t[i] = round_clamped(math::cos_turns(i as u64, N as u64), 2_147_483_648.0) as i32;
            i += 1;
        }
        t
    };
}

/// `round(x * scale)` (half away from zero), clamped to `+-(scale - 1)`.
///
/// The clamp is symmetric on purpose: it only moves the few values within half an LSB of
/// +-1 (by at most one LSB), and it keeps every product of a data word and a twiddle inside
/// the wide type with no special case (see the bounds in `kernel.rs`).
const fn round_clamped(x: f64, scale: f64) -> i64 {
    let y = x * scale;
    let r = if y >= 0.0 { y + 0.5 } else { y - 0.5 };
    let limit = scale - 1.0;
    let r = if r > limit {
        limit
    } else if r < -limit {
        -limit
    } else {
        r
    };
    r as i64
}

#[cfg(test)]
mod tests {
    use super::*;

    // reference: libm 0.2 cos (< 1 ulp); the table is round(32768 cos) except the clamp.
    #[test]
    fn tables_are_rounded_once_and_clamped() {
        let q15 = &CosTable::<1024>::Q15;
        let q31 = &CosTable::<1024>::Q31;
        for i in 0..1024 {
            let c = libm::cos(2.0 * core::f64::consts::PI * i as f64 / 1024.0);
            let e15 = (q15[i] as f64 - c * 32768.0).abs();
            let e31 = (q31[i] as f64 - c * 2_147_483_648.0).abs();
            // half an LSB from rounding, plus one where the clamp bites (c = +-1 only here)
            let bound = if c.abs() > 1.0 - 1.0 / 65536.0 {
                1.0
            } else {
                0.5
            };
            assert!(e15 <= bound + 1e-6, "Q15 entry {i}: error {e15}");
            assert!(e31 <= bound + 1e-3, "Q31 entry {i}: error {e31}");
        }
        assert_eq!((q15[0], q15[256], q15[512]), (32767, 0, -32767));
        assert_eq!((q31[0], q31[512]), (i32::MAX, -i32::MAX));
    }
}
