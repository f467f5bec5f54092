//! `const fn` elementary functions in `f64`, used to build window tables and their factors at
//! compile time.
//!
//! `core` has no `const` `sin`, `cos`, `exp` or `sqrt`, so these are written out here. They are
//! only meant for table construction (every argument is known at compile time); runtime code
//! uses `libm`. Accuracy against 40-digit mpmath values (tests/math_reference.rs): within
//! 1 ulp for `cos_turns`, `sin_turns`, `exp` (|x| <= 64), `ln` and `sqrt` on the reference set
//! (the test allows 4, and 1 for sqrt), and within 30 ulp (5e-15 relative) for [`bessel_i0`]
//! on `0 <= x <= 100` (the test allows 40); the unit tests below compare with `libm` too.
//!
//! The trigonometric functions take their angle as a rational number of turns
//! (`cos_turns(p, q) = cos(2*pi*p/q)`), which lets the range reduction be done exactly in
//! integers. Window tables then come out exactly symmetric, and `cos` of a quarter, half or
//! whole turn is exactly 0, -1 or 1.

use core::f64::consts::{FRAC_PI_2, LN_2, PI};

/// The largest denominator [`cos_turns`] takes: its exact integer reduction needs `8 q` to
/// fit a `u64`. ([`sin_turns`] takes a quarter of it.)
pub const MAX_TURN_DENOMINATOR: u64 = 1 << 60;

/// `cos(2*pi*p/q)`, with the reduction to the first octant done exactly in integers.
///
/// `q` must be in `1 ..= MAX_TURN_DENOMINATOR`; outside that it returns NaN rather than
/// panicking or wrapping.
///
/// ```
/// use leakless::math::cos_turns;
/// assert_eq!(cos_turns(1, 2), -1.0); // half a turn, exactly
/// assert_eq!(cos_turns(3, 4), 0.0);
/// assert!((cos_turns(1, 6) - 0.5).abs() < 1e-15);
/// ```
pub const fn cos_turns(p: u64, q: u64) -> f64 {
    if q == 0 || q > MAX_TURN_DENOMINATOR {
        return f64::NAN;
    }
    // Work in eighths of a turn: angle = 2*pi * r / q, r in [0, q).
    let r = p % q;
    let r = if 2 * r > q { q - r } else { r };
    // Now the angle is in [0, pi]. Past a quarter turn, cos(a) = -cos(pi - a), and
    // pi - a is (q - 2r) turns out of 2q.
    if 4 * r > q {
        return -cos_first_quadrant(q - 2 * r, 2 * q);
    }
    cos_first_quadrant(r, q)
}

/// `sin(2*pi*p/q)`, exact in the same way as [`cos_turns`]; NaN unless
/// `1 <= q <= MAX_TURN_DENOMINATOR / 4`.
///
/// ```
/// use leakless::math::sin_turns;
/// assert_eq!(sin_turns(1, 4), 1.0);
/// assert_eq!(sin_turns(1, 2), 0.0);
/// ```
pub const fn sin_turns(p: u64, q: u64) -> f64 {
    if q == 0 || q > MAX_TURN_DENOMINATOR / 4 {
        return f64::NAN;
    }
    // sin(a) = cos(a - pi/2) = cos(2*pi*(4p - q)/(4q)); keep the numerator non-negative.
    let q4 = 4 * q;
    let p4 = (4 * (p % q) + 3 * q) % q4; // a - pi/2 + 2*pi  ==  a + 3*pi/2
    cos_turns(p4, q4)
}

/// cos(2*pi*r/q) for 0 <= r/q <= 1/4.
const fn cos_first_quadrant(r: u64, q: u64) -> f64 {
    if r == 0 {
        return 1.0;
    }
    if 4 * r == q {
        return 0.0;
    }
    // Beyond an eighth of a turn, cos(a) = sin(pi/2 - a) keeps the polynomial argument <= pi/4.
    if 8 * r > q {
        let x = 2.0 * PI * ((q - 4 * r) as f64) / (4 * q) as f64;
        return sin_poly(x);
    }
    let x = 2.0 * PI * (r as f64) / (q as f64);
    cos_poly(x)
}

/// Taylor series of cos on |x| <= pi/4, to x^22 (the next term is below 1e-21).
const fn cos_poly(x: f64) -> f64 {
    let x2 = x * x;
    let mut term = 1.0;
    let mut n = 11;
    while n > 0 {
        term = 1.0 - x2 / (((2 * n - 1) * (2 * n)) as f64) * term;
        n -= 1;
    }
    term
}

/// Taylor series of sin on |x| <= pi/4, to x^23.
const fn sin_poly(x: f64) -> f64 {
    let x2 = x * x;
    let mut term = 1.0;
    let mut n = 11;
    while n > 0 {
        term = 1.0 - x2 / (((2 * n) * (2 * n + 1)) as f64) * term;
        n -= 1;
    }
    x * term
}

/// Cosine of an angle in radians, for table construction from non-rational angles.
///
/// Reduces with a two-part pi, accurate to a few ulp for |x| up to about 1e6.
///
/// ```
/// use leakless::math::cos;
/// assert!((cos(1.0) - 0.5403023058681398).abs() < 1e-15);
/// ```
pub const fn cos(x: f64) -> f64 {
    let (k, r) = reduce_quarter_turns(x);
    match k & 3 {
        0 => cos_poly(r),
        1 => -sin_poly(r),
        2 => -cos_poly(r),
        _ => sin_poly(r),
    }
}

/// Sine of an angle in radians (see [`cos`]).
///
/// ```
/// use leakless::math::sin;
/// assert!((sin(1.0) - 0.8414709848078965).abs() < 1e-15);
/// ```
pub const fn sin(x: f64) -> f64 {
    let (k, r) = reduce_quarter_turns(x);
    match k & 3 {
        0 => sin_poly(r),
        1 => cos_poly(r),
        2 => -sin_poly(r),
        _ => -cos_poly(r),
    }
}

/// x = k*pi/2 + r with |r| <= pi/4 (Cody-Waite with a two-part pi/2).
const fn reduce_quarter_turns(x: f64) -> (i64, f64) {
    // pi/2 split so that k * PIO2_HI is exact for |k| < 2^20.
    const PIO2_HI: f64 = 1.570_796_326_734_125_6;
    const PIO2_LO: f64 = 6.077_100_506_506_192e-11;
    let t = x / FRAC_PI_2 + if x >= 0.0 { 0.5 } else { -0.5 };
    let k = t as i64; // truncation toward zero after the half offset = round to nearest
    let r = (x - k as f64 * PIO2_HI) - k as f64 * PIO2_LO;
    (k, r)
}

/// `e^x`. Returns `+inf` above about 709.78 and 0 below about -745.
///
/// ```
/// use leakless::math::exp;
/// assert!((exp(1.0) - core::f64::consts::E).abs() < 1e-15);
/// assert_eq!(exp(0.0), 1.0);
/// ```
pub const fn exp(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    if x > 709.78 {
        return f64::INFINITY;
    }
    if x < -745.0 {
        return 0.0;
    }
    // x = k*ln2 + r, |r| <= ln2/2; e^x = 2^k * e^r.
    const LN2_HI: f64 = 6.931_471_803_691_238e-1;
    const LN2_LO: f64 = 1.908_214_929_270_587_8e-10;
    let t = x / LN_2 + if x >= 0.0 { 0.5 } else { -0.5 };
    let k = t as i64;
    let r = (x - k as f64 * LN2_HI) - k as f64 * LN2_LO;
    // Taylor of e^r to r^16 (|r| <= 0.347: next term < 2e-22).
    let mut term = 1.0;
    let mut n = 16;
    while n > 0 {
        term = 1.0 + r / (n as f64) * term;
        n -= 1;
    }
    scale_by_power_of_two(term, k)
}

/// `x * 2^k` through the exponent bits, in two steps so that subnormal results stay right.
const fn scale_by_power_of_two(x: f64, k: i64) -> f64 {
    let mut y = x;
    let mut k = k;
    while k > 1000 {
        y *= f64::from_bits(((1023 + 1000) as u64) << 52);
        k -= 1000;
    }
    while k < -1000 {
        y *= f64::from_bits(((1023 - 1000) as u64) << 52);
        k += 1000;
    }
    y * f64::from_bits(((1023 + k) as u64) << 52)
}

/// Square root (Newton's method from an exponent-halving first guess). NaN for `x < 0`.
///
/// ```
/// use leakless::math::sqrt;
/// assert_eq!(sqrt(4.0), 2.0);
/// assert!((sqrt(2.0) - core::f64::consts::SQRT_2).abs() <= 2.3e-16); // 1 ulp
/// ```
pub const fn sqrt(x: f64) -> f64 {
    if x.is_nan() || x < 0.0 {
        return f64::NAN;
    }
    if x == 0.0 || x == f64::INFINITY {
        return x;
    }
    // Halve the biased exponent for a guess within a factor of 2, then Newton steps
    // (quadratic convergence once within a factor of 2; subnormals need a few more).
    let bits = x.to_bits();
    let guess_bits = (bits >> 1) + (1023u64 << 51);
    let mut y = f64::from_bits(guess_bits);
    let mut i = 0;
    while i < 12 {
        y = 0.5 * (y + x / y);
        i += 1;
    }
    // One correction towards the correctly rounded result.
    let e = y * y - x;
    if e != 0.0 {
        let y2 = y - e / (2.0 * y);
        let e2 = y2 * y2 - x;
        if abs(e2) < abs(e) {
            y = y2;
        }
    }
    y
}

/// Absolute value (`f64::abs` is const, but this keeps the module self-contained on 1.82).
pub const fn abs(x: f64) -> f64 {
    if x < 0.0 {
        -x
    } else {
        x
    }
}

/// The modified Bessel function of the first kind of order zero, I0(x), for the Kaiser window.
///
/// Power series sum_k ((x/2)^k / k!)^2; every term is positive, so it converges without
/// cancellation for any real `x`. Within 5e-15 relative (30 ulp) for |x| <= 100.
///
/// ```
/// use leakless::math::bessel_i0;
/// assert_eq!(bessel_i0(0.0), 1.0);
/// // Abramowitz and Stegun 1964, Table 9.8: I0(1) = 1.266065878
/// assert!((bessel_i0(1.0) - 1.266_065_878).abs() < 1e-9);
/// ```
pub const fn bessel_i0(x: f64) -> f64 {
    let q = x * x / 4.0;
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1;
    while k < 500 {
        term *= q / ((k * k) as f64);
        sum += term;
        if term < sum * 1e-17 {
            break;
        }
        k += 1;
    }
    sum
}

/// Natural logarithm, for factors that are stored in dB. NaN for `x < 0`, `-inf` at 0.
///
/// ```
/// use leakless::math::ln;
/// assert!((ln(core::f64::consts::E) - 1.0).abs() < 1e-15);
/// ```
pub const fn ln(x: f64) -> f64 {
    if x.is_nan() || x < 0.0 {
        return f64::NAN;
    }
    if x == 0.0 {
        return f64::NEG_INFINITY;
    }
    if x == f64::INFINITY {
        return x;
    }
    // x = m * 2^e with m in [sqrt(1/2), sqrt(2)); ln x = e ln2 + ln m, and
    // ln m = 2 atanh(s) with s = (m-1)/(m+1), |s| <= 0.172.
    let mut y = x;
    let mut e: i64 = 0;
    // Normalise subnormals first.
    if y < 2.2250738585072014e-308 {
        y *= f64::from_bits((1023u64 + 54) << 52);
        e -= 54;
    }
    let bits = y.to_bits();
    e += ((bits >> 52) & 0x7ff) as i64 - 1023;
    let mut m = f64::from_bits((bits & ((1u64 << 52) - 1)) | (1023u64 << 52));
    if m > core::f64::consts::SQRT_2 {
        m *= 0.5;
        e += 1;
    }
    let s = (m - 1.0) / (m + 1.0);
    let s2 = s * s;
    // atanh series to s^41: (0.172)^42 < 1e-32.
    let mut sum = 0.0;
    let mut n = 20;
    while n >= 0 {
        sum = sum * s2 + 1.0 / ((2 * n + 1) as f64);
        n -= 1;
    }
    2.0 * s * sum + (e as f64) * LN_2
}

/// `10 * log10(x)`: a power ratio in decibels.
pub const fn power_db(x: f64) -> f64 {
    10.0 * ln(x) / core::f64::consts::LN_10
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Distance in ulp between two finite f64 values.
    fn ulps(a: f64, b: f64) -> u64 {
        if a == b {
            return 0;
        }
        let ia = a.to_bits() as i64;
        let ib = b.to_bits() as i64;
        let ia = if ia < 0 { i64::MIN - ia } else { ia };
        let ib = if ib < 0 { i64::MIN - ib } else { ib };
        ia.abs_diff(ib)
    }

    /// Largest error over a grid, as ulp, or as absolute error near zeros of the function.
    fn worst<F: Fn(f64) -> (f64, f64)>(points: impl Iterator<Item = f64>, f: F) -> (u64, f64) {
        let mut worst_ulp = 0;
        let mut worst_abs: f64 = 0.0;
        for x in points {
            let (ours, reference) = f(x);
            worst_abs = worst_abs.max((ours - reference).abs());
            if reference.abs() > 1e-3 {
                worst_ulp = worst_ulp.max(ulps(ours, reference));
            }
        }
        (worst_ulp, worst_abs)
    }

    // Reference: libm 0.2 `cos`/`sin` (a port of musl, < 1 ulp). The reference is handed the
    // angle 2*pi*p/q computed in f64: pi's own rounding plus two operations, up to ~1.5 ulp of
    // 2*pi (1.3e-15 absolute), which passes straight into the result. The check is therefore
    // absolute, 2e-15 = that plus libm's 1 ulp. Our own error, against 40-digit values from
    // mpmath, is checked in tests/math_reference.rs (a few ulp).
    #[test]
    fn cos_and_sin_turns_match_libm() {
        for q in [1000u64, 1024, 8192, 8193] {
            for (name, ours, reference) in [
                (
                    "cos_turns",
                    cos_turns as fn(u64, u64) -> f64,
                    libm::cos as fn(f64) -> f64,
                ),
                ("sin_turns", sin_turns, libm::sin),
            ] {
                let mut worst_abs: f64 = 0.0;
                for p in 0..q {
                    let a = ours(p, q);
                    let b = reference(2.0 * PI * p as f64 / q as f64);
                    worst_abs = worst_abs.max((a - b).abs());
                    // periodicity is exact by construction
                    assert_eq!(ours(p + 3 * q, q), a);
                }
                println!("{name} q={q}: worst {worst_abs:e} abs against libm");
                assert!(worst_abs <= 2e-15, "{name} worst abs {worst_abs:e}");
            }
        }
    }

    #[test]
    fn huge_denominators_give_nan_not_a_wrap() {
        assert!(cos_turns(u64::MAX - 1, u64::MAX).is_nan());
        assert!(sin_turns(1, u64::MAX / 2).is_nan());
        assert!(cos_turns(1, 0).is_nan());
        // The largest allowed ones still work: a quarter turn is exactly 0.
        assert_eq!(
            cos_turns(MAX_TURN_DENOMINATOR / 4, MAX_TURN_DENOMINATOR),
            0.0
        );
        assert_eq!(
            sin_turns(MAX_TURN_DENOMINATOR / 16, MAX_TURN_DENOMINATOR / 4),
            1.0
        );
    }

    #[test]
    fn exact_quarter_turns() {
        // common practice: exact values at multiples of a quarter turn.
        for q in [4u64, 8, 1024, 1025, 4096] {
            assert_eq!(cos_turns(0, q), 1.0);
            assert_eq!(cos_turns(q, q), 1.0);
            if q % 2 == 0 {
                assert_eq!(cos_turns(q / 2, q), -1.0);
            }
            if q % 4 == 0 {
                assert_eq!(cos_turns(q / 4, q), 0.0);
                assert_eq!(cos_turns(3 * q / 4, q), 0.0);
            }
        }
    }

    #[test]
    fn cos_sin_radians_match_libm() {
        let (u, a) = worst((-4000..=4000).map(|i| i as f64 * 0.01), |x| {
            (cos(x), libm::cos(x))
        });
        println!("cos: worst {u} ulp, {a:e} abs");
        assert!(u <= 4 && a <= 4e-16);
        let (u, a) = worst((-4000..=4000).map(|i| i as f64 * 0.01), |x| {
            (sin(x), libm::sin(x))
        });
        println!("sin: worst {u} ulp, {a:e} abs");
        assert!(u <= 4 && a <= 4e-16);
    }

    #[test]
    fn exp_matches_libm() {
        let (u, _) = worst((-6400..=6400).map(|i| i as f64 * 0.01), |x| {
            (exp(x), libm::exp(x))
        });
        println!("exp: worst {u} ulp");
        assert!(u <= 4, "exp worst {u} ulp");
        assert_eq!(exp(-1000.0), 0.0);
        assert_eq!(exp(1000.0), f64::INFINITY);
    }

    #[test]
    fn sqrt_matches_libm() {
        let (u, _) = worst(
            (0..=20000).map(|i| i as f64 * 0.37 + 1e-300 * i as f64),
            |x| (sqrt(x), libm::sqrt(x)),
        );
        println!("sqrt: worst {u} ulp");
        assert!(u <= 1, "sqrt worst {u} ulp");
        assert!(sqrt(-1.0).is_nan());
        assert_eq!(sqrt(1e-310), libm::sqrt(1e-310));
    }

    #[test]
    fn ln_matches_libm() {
        let (u, _) = worst((1..=20000).map(|i| i as f64 * 0.013), |x| {
            (ln(x), libm::log(x))
        });
        println!("ln: worst {u} ulp");
        assert!(u <= 4, "ln worst {u} ulp");
    }

    // Reference: the series is checked against an independent evaluation with the
    // integral form I0(x) = (1/pi) * int_0^pi exp(x cos t) dt (Abramowitz and Stegun 1964,
    // eq. 9.6.19), done here by the trapezoid rule, which converges geometrically for a
    // periodic integrand.
    #[test]
    fn bessel_i0_matches_integral_form() {
        let mut worst_rel: f64 = 0.0;
        for i in 0..=400 {
            let x = i as f64 * 0.25;
            // Midpoint rule with compensated (Kahan) summation, so that the reference's own
            // rounding stays near 1e-16 relative and does not mask the series' error.
            let m = 4000;
            let (mut s, mut c) = (0.0f64, 0.0f64);
            for j in 0..m {
                let t = PI * (j as f64 + 0.5) / m as f64;
                let y = libm::exp(x * libm::cos(t)) - c;
                let next = s + y;
                c = (next - s) - y;
                s = next;
            }
            let reference = s / m as f64;
            let rel = ((bessel_i0(x) - reference) / reference).abs();
            worst_rel = worst_rel.max(rel);
        }
        println!("bessel_i0: worst relative error {worst_rel:e}");
        // A few ulp: libm's exp is good to < 1 ulp, so the reference is good to ~2e-16 times
        // the condition of exp (|x cos t| <= 100 magnifies an argument rounding by up to 100).
        assert!(worst_rel < 2e-14, "bessel_i0 worst rel {worst_rel:e}");
    }
}
