//! Properties every window must have, for every shape and N in 16 ..= 8192 (proptest, fixed
//! seed), and agreement of the compile-time tables with the run-time definition.

use leakless::window::{Factors, Shape, Symmetry, Window, WindowQ15};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};

/// A shape with a parameter drawn from its valid range.
fn any_shape() -> impl Strategy<Value = Shape> {
    prop_oneof![
        (0..Shape::CATALOGUE.len()).prop_map(|i| Shape::CATALOGUE[i]),
        (0.0f64..40.0).prop_map(|beta| Shape::Kaiser { beta }),
        (0.0f64..=1.0).prop_map(|alpha| Shape::Tukey { alpha }),
        (0.01f64..=1.0, 0.0f64..0.5).prop_map(|(width, taper)| Shape::Force { width, taper }),
        (0.001f64..=1.0).prop_map(|end_fraction| Shape::Exponential { end_fraction }),
    ]
}

fn runner() -> TestRunner {
    // Fixed seed: CI runs the same cases every time.
    TestRunner::new_with_rng(
        Config {
            cases: 300,
            failure_persistence: None,
            ..Config::default()
        },
        TestRng::from_seed(RngAlgorithm::ChaCha, &[7; 32]),
    )
}

fn samples(shape: Shape, symmetry: Symmetry, n: usize) -> Vec<f64> {
    (0..n).map(|i| shape.sample(symmetry, i, n)).collect()
}

#[test]
fn symmetry_peak_and_gains() {
    let strategy = (
        any_shape(),
        16usize..=8192,
        prop_oneof![Just(Symmetry::Periodic), Just(Symmetry::Symmetric)],
    );
    runner()
        .run(&strategy, |(shape, n, symmetry)| {
            let w = samples(shape, symmetry, n);
            // Symmetry (common practice): periodic w[i] = w[N - i]; symmetric w[i] = w[N-1-i].
            // Exact, because the definition reduces its angles in integers.
            if shape.is_symmetric() {
                for i in 1..n {
                    let mirror = match symmetry {
                        Symmetry::Periodic => n - i,
                        Symmetry::Symmetric => n - 1 - i,
                    };
                    prop_assert_eq!(w[i], w[mirror], "{:?} n={} i={}", shape, n, i);
                }
                // Where a sample falls on the centre, it is exactly 1.
                let centre = match symmetry {
                    Symmetry::Periodic if n % 2 == 0 => Some(n / 2),
                    Symmetry::Symmetric if n % 2 == 1 => Some((n - 1) / 2),
                    _ => None,
                };
                if let Some(c) = centre {
                    prop_assert_eq!(w[c], 1.0, "{:?} n={}", shape, n);
                }
            }
            // Peak <= 1: exactly for the f32 values a table stores; for the f64 definition
            // within 4 ulp of 1 (a K-term cosine sum rounds K times near its peak).
            for &x in &w {
                prop_assert!((x as f32) <= 1.0, "{:?} n={} value {}", shape, n, x);
                prop_assert!(x <= 1.0 + 4.0 * f64::EPSILON);
                // Flat tops dip below zero, as published (Heinzel 2002, figures of HFT
                // windows), but never below -0.1 of the peak.
                prop_assert!(x >= -0.1);
            }
            let f = Factors::of_samples(&w);
            // Cauchy-Schwarz: (sum w)^2 <= N sum w^2, so ENBW >= 1 bin; with peak <= 1,
            // mean w^2 <= 1, so the energy correction is >= 1.
            prop_assert!(
                f.enbw_bins >= 1.0 - 1e-12,
                "{:?} n={} enbw {}",
                shape,
                n,
                f.enbw_bins
            );
            prop_assert!(f.energy_correction >= 1.0 - 1e-12);
            prop_assert!(f.amplitude_correction >= 1.0 - 1e-12);
            Ok(())
        })
        .unwrap();
}

/// The const tables equal the run-time definition: f32 rounded once, Q15 within 0.5 LSB.
fn check_tables<const N: usize>() {
    for shape in Shape::CATALOGUE {
        for symmetry in [Symmetry::Periodic, Symmetry::Symmetric] {
            let w = Window::<N>::with_symmetry(shape, symmetry);
            let q = WindowQ15::<N>::with_symmetry(shape, symmetry);
            for (i, exact) in samples(shape, symmetry, N).into_iter().enumerate() {
                assert_eq!(w.table()[i], exact as f32, "{shape:?} N={N} i={i}");
                let err = (q.table()[i] as f64 - exact * 32767.0).abs();
                assert!(err <= 0.5, "{shape:?} N={N} i={i}: Q15 error {err} LSB");
            }
        }
    }
}

#[test]
fn const_tables_match_definition() {
    check_tables::<16>();
    check_tables::<1024>();
    check_tables::<4096>();
}

/// A `match` without a wildcard: adding a shape makes this fail to compile until the shape
/// gets a catalogue entry and a reference test (see tests/window_reference.rs).
#[test]
fn catalogue_lists_every_shape() {
    let mut seen = [false; 18];
    for shape in Shape::CATALOGUE {
        let index = match shape {
            Shape::Rectangular => 0,
            Shape::Hann => 1,
            Shape::Hamming => 2,
            Shape::Blackman => 3,
            Shape::ExactBlackman => 4,
            Shape::BlackmanHarris92 => 5,
            Shape::Nuttall => 6,
            Shape::FlatTop => 7,
            Shape::Hft70 => 8,
            Shape::Hft90d => 9,
            Shape::Hft95 => 10,
            Shape::Hft116d => 11,
            Shape::Hft144d => 12,
            Shape::Kaiser { .. } => 13,
            Shape::Tukey { .. } => 14,
            Shape::Force { .. } => 15,
            Shape::Exponential { .. } => 16,
            Shape::CosineSum(_) => 17,
        };
        seen[index] = true;
    }
    assert!(
        seen.iter().all(|&s| s),
        "a shape is missing from Shape::CATALOGUE"
    );
}

#[test]
fn names_round_trip() {
    for shape in Shape::CATALOGUE {
        if matches!(shape, Shape::CosineSum(_)) {
            assert_eq!(Shape::from_name(shape.name()), None);
            continue;
        }
        assert_eq!(
            Shape::from_name(shape.name()).map(|s| s.name()),
            Some(shape.name())
        );
    }
}
