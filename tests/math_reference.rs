//! The compile-time elementary functions against 40-digit values.
//!
//! Reference: mpmath 1.3.0 (`mpmath.cos`, `sin`, `exp`, `sqrt`, `log`, `besseli(0, x)`) at
//! 40 significant digits, correctly rounded to f64 by tests/reference/generate.py
//! (tests/reference/math.csv).

mod common;

use common::MathCase;
use leakless::math;

/// Distance in units in the last place between two finite f64 of the same sign.
fn ulps(a: f64, b: f64) -> u64 {
    if a == b {
        return 0;
    }
    (a.to_bits() as i64).abs_diff(b.to_bits() as i64)
}

#[test]
fn elementary_functions_are_within_a_few_ulp() {
    let mut worst = std::collections::BTreeMap::<&str, (u64, f64)>::new();
    for case in common::math_reference() {
        let (name, ours, value) = match case {
            MathCase::Cos { p, q, value } => ("cos_turns", math::cos_turns(p, q), value),
            MathCase::Sin { p, q, value } => ("sin_turns", math::sin_turns(p, q), value),
            MathCase::Exp { x, value } => ("exp", math::exp(x), value),
            MathCase::Sqrt { x, value } => ("sqrt", math::sqrt(x), value),
            MathCase::Ln { x, value } => ("ln", math::ln(x), value),
            MathCase::BesselI0 { x, value } => ("bessel_i0", math::bessel_i0(x), value),
        };
        let entry = worst.entry(name).or_insert((0, 0.0));
        // Near a zero of cos/sin the relative error is meaningless; there we measure the
        // absolute error in ulp of 1.0 (what matters for a window table whose peak is 1).
        let u = if value.abs() < 0.5 && name.ends_with("_turns") {
            ((ours - value).abs() / f64::EPSILON).ceil() as u64
        } else {
            ulps(ours, value)
        };
        entry.0 = entry.0.max(u);
        if value != 0.0 {
            entry.1 = entry.1.max(((ours - value) / value).abs());
        }
    }
    for (name, (u, rel)) in &worst {
        println!("{name:>10}: worst {u} ulp ({rel:.2e} relative)");
    }
    // The accuracy math.rs states: 4 ulp for the trigonometric, exponential and log families
    // (Taylor series in Horner form round once per term near the top), 1 for sqrt (one Newton
    // correction towards the nearest), and 40 for I0 over 0..100: its series term
    // (x^2/4)^k/(k!)^2 is built by ~k multiplications and divisions, so at x = 100 (about 70
    // terms) its relative error grows to tens of ulp. Kaiser tables round to f32 (2^29 ulp of
    // f64), so this is far below anything a table shows.
    let bound = |name: &str| match name {
        "sqrt" => 1,
        "bessel_i0" => 40,
        _ => 4,
    };
    for (name, (u, _)) in &worst {
        assert!(*u <= bound(name), "{name}: {u} ulp");
    }
    assert_eq!(worst.len(), 6, "every function has reference values");
}
