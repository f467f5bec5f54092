//! Every window shape against an outside reference: SciPy's `get_window` golden vectors where
//! SciPy has the shape, its defining formula evaluated with libm otherwise.
//!
//! Reference: scipy 1.17.1 `scipy.signal.get_window` (numpy 2.4.6), float64, written by
//! tests/reference/generate.py into tests/reference/windows/ and window_factors.csv.

mod common;

use leakless::window::{Shape, Symmetry, Window, WindowQ15};

/// Where a shape's reference comes from.
enum Reference {
    /// A column of the SciPy golden files, by our name (`Shape::from_name` form).
    Scipy(&'static str),
    /// The defining formula, evaluated at run time in f64 with libm.
    Formula(fn(n: usize, len: usize) -> f64),
}

/// The force window's definition (see `Shape::Force`): 1 over the first `width * N` samples,
/// a half-cosine down to 0 over the next `taper * N`, then 0. Evaluated with libm.
fn force_formula(width: f64, taper: f64) -> impl Fn(usize, usize) -> f64 {
    move |n, len| {
        let (x, flat, fall) = (n as f64, width * len as f64, taper * len as f64);
        if x < flat {
            1.0
        } else if x < flat + fall {
            0.5 * (1.0 + libm::cos(std::f64::consts::PI * (x - flat) / fall))
        } else {
            0.0
        }
    }
}

/// No wildcard: a new shape does not compile here until it is given a reference.
fn reference_for(shape: Shape) -> Reference {
    match shape {
        Shape::Rectangular => Reference::Scipy("rectangular"),
        Shape::Hann => Reference::Scipy("hann"),
        Shape::Hamming => Reference::Scipy("hamming"),
        Shape::Blackman => Reference::Scipy("blackman"),
        Shape::ExactBlackman => Reference::Scipy("exact-blackman"),
        Shape::BlackmanHarris92 => Reference::Scipy("blackman-harris-92"),
        Shape::Nuttall => Reference::Scipy("nuttall"),
        Shape::FlatTop => Reference::Scipy("flattop"),
        Shape::Hft70 => Reference::Scipy("hft70"),
        Shape::Hft90d => Reference::Scipy("hft90d"),
        Shape::Hft95 => Reference::Scipy("hft95"),
        Shape::Hft116d => Reference::Scipy("hft116d"),
        Shape::Hft144d => Reference::Scipy("hft144d"),
        Shape::Kaiser { .. } => Reference::Scipy("kaiser:9.42477796076938"),
        Shape::Tukey { .. } => Reference::Scipy("tukey:0.5"),
        Shape::Exponential { .. } => Reference::Scipy("exponential:0.01"),
        // SciPy has no force window: its formula, with the catalogue's parameters.
        Shape::Force { .. } => Reference::Formula(|n, len| force_formula(0.05, 0.01)(n, len)),
        // The catalogue's user cosine sum is [0.5, 0.5], which is Hann.
        Shape::CosineSum(_) => Reference::Scipy("hann"),
    }
}

/// f32 tables: max abs error 1e-6 (f32 rounding is 6e-8 at 1.0; SciPy's flattop peaks at
/// 1.000000003 because its coefficients sum to that, where ours is divided by the sum).
const F32_TOLERANCE: f64 = 1e-6;
/// Q15: within 0.5 LSB of 32767 w, plus 1e-3 LSB for the same SciPy flattop offset
/// (3e-9 * 32767 = 1e-4) and the 1e-14 f64 differences between the two definitions.
const Q15_TOLERANCE_LSB: f64 = 0.5 + 1e-3;

fn check_against<const N: usize>(shape: Shape, symmetry: Symmetry, expected: &[f64]) {
    let w = Window::<N>::try_with_symmetry(shape, symmetry).expect("valid shape");
    let q = WindowQ15::<N>::try_with_symmetry(shape, symmetry).expect("valid shape");
    let mut worst_f32: f64 = 0.0;
    let mut worst_q15: f64 = 0.0;
    for ((&f, &qv), &e) in w.table().iter().zip(q.table()).zip(expected) {
        worst_f32 = worst_f32.max((f as f64 - e).abs());
        worst_q15 = worst_q15.max((qv as f64 - 32767.0 * e).abs());
    }
    assert!(
        worst_f32 <= F32_TOLERANCE,
        "{shape:?} N={N} {symmetry:?}: f32 worst {worst_f32:e}"
    );
    assert!(
        worst_q15 <= Q15_TOLERANCE_LSB,
        "{shape:?} N={N} {symmetry:?}: Q15 worst {worst_q15} LSB"
    );
}

fn golden_sizes(n: usize, symmetry: Symmetry, column: &str) -> Option<Vec<f64>> {
    let symmetric = symmetry == Symmetry::Symmetric;
    // N = 4096 exists in the periodic form only (tests/reference/README.md).
    if n == 4096 && symmetric {
        return None;
    }
    if common::window_golden_shapes(n, symmetric)
        .iter()
        .any(|c| c == column)
    {
        Some(common::window_golden(column, n, symmetric))
    } else {
        None
    }
}

fn check_size<const N: usize>(shape: Shape) -> usize {
    let mut checked = 0;
    for symmetry in [Symmetry::Periodic, Symmetry::Symmetric] {
        let expected: Vec<f64> = match reference_for(shape) {
            Reference::Scipy(column) => match golden_sizes(N, symmetry, column) {
                Some(v) => v,
                None => continue,
            },
            Reference::Formula(f) => (0..N).map(|n| f(n, N)).collect(),
        };
        check_against::<N>(shape, symmetry, &expected);
        checked += 1;
    }
    checked
}

#[test]
fn every_shape_matches_its_reference() {
    for shape in Shape::CATALOGUE {
        let checked = check_size::<16>(shape)
            + check_size::<64>(shape)
            + check_size::<1024>(shape)
            + check_size::<4096>(shape);
        // At least the periodic form at three sizes; the exponential window with its
        // centre at 0 has no symmetric form in SciPy.
        assert!(
            checked >= 3,
            "{}: only {checked} reference sets",
            shape.name()
        );
    }
}

/// Every column of the golden files is one of our shapes (parsed by name, so parameters such
/// as `kaiser:8.6` and `tukey:0.25` are covered too) and matches.
#[test]
fn every_golden_column_matches() {
    for (n, symmetric) in [
        (16, false),
        (16, true),
        (64, false),
        (64, true),
        (1024, false),
    ] {
        let symmetry = if symmetric {
            Symmetry::Symmetric
        } else {
            Symmetry::Periodic
        };
        for column in common::window_golden_shapes(n, symmetric) {
            let shape = Shape::from_name(&column)
                .unwrap_or_else(|| panic!("golden column {column:?} is not a shape name"));
            let expected = common::window_golden(&column, n, symmetric);
            match n {
                16 => check_against::<16>(shape, symmetry, &expected),
                64 => check_against::<64>(shape, symmetry, &expected),
                _ => check_against::<1024>(shape, symmetry, &expected),
            }
        }
    }
}

/// The factors the crate computes at compile time against the same factors computed by
/// NumPy from SciPy's windows (window_factors.csv, N = 1024 periodic).
#[test]
fn factors_match_numpy() {
    let reference = common::window_factors();
    assert_eq!(common::WINDOW_FACTORS_N, 1024);
    for (name, r) in &reference {
        let shape = Shape::from_name(name).expect("a shape name");
        let w = Window::<1024>::try_new(shape).expect("valid");
        let f = w.factors();
        // 1e-8 relative: both are f64 sums of the same 1024 products (1e-13 apart), except
        // SciPy's flattop, whose coefficients sum to 1.000000003 (scipy 1.17.1
        // `windows.flattop` source).
        let rel = |a: f64, b: f64| ((a - b) / b).abs();
        for (what, ours, theirs) in [
            ("coherent_gain", f.coherent_gain, r.coherent_gain),
            (
                "amplitude_correction",
                f.amplitude_correction,
                r.amplitude_correction,
            ),
            ("mean_square_gain", f.mean_square_gain, r.mean_square_gain),
            (
                "energy_correction",
                f.energy_correction,
                r.energy_correction,
            ),
            ("enbw_bins", f.enbw_bins, r.nenbw_bins),
        ] {
            assert!(
                rel(ours, theirs) < 1e-8,
                "{name} {what}: {ours} vs {theirs}"
            );
        }
        // dB and correlations: absolute, 1e-9 (flat-top correlations cross zero).
        for (what, ours, theirs) in [
            ("scalloping_loss_db", f.scalloping_loss_db, r.scalloping_db),
            (
                "overlap_correlation_50",
                f.overlap_correlation_50,
                r.overlap_correlation_50,
            ),
            (
                "overlap_correlation_75",
                f.overlap_correlation_75,
                r.overlap_correlation_75,
            ),
        ] {
            assert!(
                (ours - theirs).abs() < 1e-9,
                "{name} {what}: {ours} vs {theirs}"
            );
        }
    }
    // Every catalogue shape with a SciPy reference is in the factor table.
    for shape in Shape::CATALOGUE {
        if let Reference::Scipy(column) = reference_for(shape) {
            assert!(reference.contains_key(column), "no factors for {column}");
        }
    }
}

/// The exponential window's added damping (common practice): decay
/// to 1 % over T = 1 s gives sigma = ln(100) / T = 4.605 1/s, and at 100 Hz
/// delta-zeta = sigma / (2 pi 100) = 0.00733.
#[test]
fn exponential_added_damping() {
    let w = Window::<1024>::new(Shape::Exponential { end_fraction: 0.01 });
    // (N - 1) samples span 1 s at fs = N - 1.
    let sigma = w.added_decay_rate(1023.0).unwrap();
    assert!((sigma - 4.605).abs() < 0.0005, "{sigma}");
    let zeta = w.added_damping_ratio(1023.0, 100.0).unwrap();
    assert!((zeta - 0.00733).abs() < 0.000005, "{zeta}");
    assert_eq!(
        Window::<64>::new(Shape::Hann).added_decay_rate(1000.0),
        None
    );
}
