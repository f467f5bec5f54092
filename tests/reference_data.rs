//! Sanity checks of the golden reference data in `tests/reference/` and of its loaders:
//! every file kind loads, has the documented shape, and a few published values hold.

mod common;

use common::{FixedKind, MathCase, Scaling};
use leakless::Shape;

#[test]
fn allclose_reports_the_worst_index() {
    assert!(common::allclose(&[1.0, 2.0], &[1.0, 2.0 + 1e-13], 1e-12, 0.0).is_ok());
    let err = common::allclose(&[1.0, 2.5, 3.1], &[1.0, 2.0, 3.0], 1e-3, 0.0).unwrap_err();
    assert!(err.contains("2 of 3") && err.contains("index 1"), "{err}");
    assert!(common::allclose(&[1.0], &[1.0, 2.0], 0.0, 0.0).is_err());
    assert!(common::allclose(&[f64::NAN], &[f64::NAN], 1.0, 1.0).is_err());
    assert!(common::allclose(&[f64::NEG_INFINITY], &[f64::NEG_INFINITY], 0.0, 0.0).is_ok());
}

#[test]
fn math_reference_loads() {
    let cases = common::math_reference();
    assert!(cases.len() > 1000, "{} rows", cases.len());
    let mut seen = [false; 6];
    for c in &cases {
        match *c {
            MathCase::Cos { p, q, value } => {
                seen[0] = true;
                assert!(p <= q && value.abs() <= 1.0);
                if 4 * p == q {
                    assert_eq!(value, 0.0, "cos of a quarter turn is exactly 0");
                }
            }
            MathCase::Sin { p, q, value } => {
                seen[1] = true;
                assert!(p <= q && value.abs() <= 1.0);
            }
            MathCase::Exp { x, value } => {
                seen[2] = true;
                assert!((-64.0..=64.0).contains(&x) && value > 0.0);
                if x == 0.0 {
                    assert_eq!(value, 1.0);
                }
            }
            MathCase::Sqrt { x, value } => {
                seen[3] = true;
                assert!(x >= 0.0 && value >= 0.0);
                if x == 4.0 {
                    assert_eq!(value, 2.0);
                }
            }
            MathCase::Ln { x, value } => {
                seen[4] = true;
                if x == 1.0 {
                    assert_eq!(value, 0.0);
                }
            }
            MathCase::BesselI0 { x, value } => {
                seen[5] = true;
                assert!((0.0..=100.0).contains(&x) && value >= 1.0);
            }
        }
    }
    assert!(seen.iter().all(|&s| s), "every function present: {seen:?}");
}

#[test]
fn window_golden_vectors_load() {
    for (n, symmetric) in [
        (16, false),
        (16, true),
        (64, false),
        (64, true),
        (1024, false),
        (1024, true),
        (4096, false),
    ] {
        let shapes = common::window_golden_shapes(n, symmetric);
        assert!(shapes.len() >= 5, "N = {n}: {shapes:?}");
        // Only the periodic files have scipy's exponential window (centre 0 needs sym=False).
        assert_eq!(
            shapes.iter().any(|s| s.starts_with("exponential")),
            !symmetric && n != 4096,
            "N = {n}, symmetric = {symmetric}: {shapes:?}"
        );
        for name in &shapes {
            assert!(
                Shape::from_name(name).is_some(),
                "column {name:?} is not a Shape name"
            );
            let w = common::window_golden(name, n, symmetric);
            assert_eq!(w.len(), n);
            let peak = w.iter().cloned().fold(f64::MIN, f64::max);
            // Peak 1 for all (scipy's flattop: 1.000000003; sampled windows may miss the centre).
            assert!(
                peak <= 1.0 + 1e-8 && peak > 0.9,
                "{name} N = {n}: peak {peak}"
            );
        }
    }
    // The parameter in the column name is the exact f64 of the shape's parameter.
    assert_eq!(
        Shape::from_name("kaiser:9.42477796076938"),
        Some(Shape::Kaiser {
            beta: 3.0 * core::f64::consts::PI
        })
    );
}

#[test]
fn hann_16_matches_published_first_samples() {
    // scipy 1.17.1 `signal.get_window` / `windows.hann` (via tests/reference/generate.py).
    let periodic = common::window_golden("hann", 16, false);
    common::allclose(
        &periodic[..5],
        &[0.0, 0.03806, 0.146447, 0.308658, 0.5],
        0.0,
        1e-6,
    )
    .unwrap();
    let symmetric = common::window_golden("hann", 16, true);
    common::allclose(
        &symmetric[..5],
        &[0.0, 0.043227, 0.165435, 0.345492, 0.552264],
        0.0,
        1e-6,
    )
    .unwrap();
}

#[test]
fn window_factors_load() {
    let factors = common::window_factors();
    assert_eq!(factors.len(), 18);
    for (name, f) in &factors {
        assert!(Shape::from_name(name).is_some(), "{name}");
        assert!((f.amplitude_correction * f.coherent_gain - 1.0).abs() < 1e-12);
        assert!(f.psll_db < -10.0 && f.psll_bin > f.first_minimum_bin);
        // NENBW = mean-square gain / coherent gain^2.
        let nenbw = f.mean_square_gain / (f.coherent_gain * f.coherent_gain);
        assert!((f.nenbw_bins - nenbw).abs() < 1e-12 * nenbw, "{name}");
    }
    let hann = factors["hann"];
    assert!((hann.nenbw_bins - 1.5).abs() < 1e-12, "{}", hann.nenbw_bins);
    assert!((hann.coherent_gain - 0.5).abs() < 1e-15);
    assert_eq!(common::WINDOW_FACTORS_N, 1024);
}

#[test]
fn welch_cases_load() {
    let (x, cases) = common::welch_cases();
    assert_eq!(x.len(), 4096);
    assert_eq!(cases.len(), 32);
    for c in &cases {
        assert_eq!(c.expected.len(), c.nperseg / 2 + 1, "case {}", c.id);
        assert_eq!(
            c.segments,
            (x.len() - c.noverlap) / (c.nperseg - c.noverlap),
            "case {}",
            c.id
        );
        for (k, &f) in c.freqs_hz.iter().enumerate() {
            assert!((f - k as f64 * c.fs_hz / c.nperseg as f64).abs() < 1e-9);
        }
        assert!(c.expected.iter().all(|&p| p >= 0.0 && p.is_finite()));
        // The 1.0-amplitude 100 Hz tone is on a bin for both lengths: 'spectrum' reads A^2/2
        // there for the flat-top and rectangular windows (Hann too, on a bin).
        if c.scaling == Scaling::Spectrum {
            let k = (100.0 * c.nperseg as f64 / c.fs_hz) as usize;
            assert!(
                (c.expected[k] - 0.5).abs() < 0.01,
                "case {}: {}",
                c.id,
                c.expected[k]
            );
        }
        // Example D (scipy 1.17.1 `signal.periodogram`): the 0.3 offset reads 0.3^2 (not
        // doubled) at DC, and detrend='constant' removes it exactly only for the boxcar (with a
        // taper the windowed remainder still has a DC component).
        if c.window == "boxcar" && c.scaling == Scaling::Spectrum {
            let dc = if c.detrend_constant { 0.0 } else { 0.09 };
            assert!(
                (c.expected[0] - dc).abs() < 1e-3,
                "case {}: DC {}",
                c.id,
                c.expected[0]
            );
        }
    }
    assert_eq!(cases.iter().filter(|c| c.function == "welch").count(), 24);
    let examples = common::spectra_examples();
    assert!(examples
        .iter()
        .any(|e| e.example == "A" && e.quantity == "hann_periodogram_spectrum_bin100"));
}

#[test]
fn cmsis_fixed_cases_load() {
    let cases = common::cmsis_fixed_cases();
    assert_eq!(cases.len(), 12);
    for c in &cases {
        assert_eq!(c.input.len(), c.n, "case {}", c.id);
        assert_eq!(c.output.len(), c.n + 2, "case {}", c.id);
        assert_eq!(c.output_len, 2 * c.n, "case {}", c.id);
        assert_eq!(c.output_bins().len(), c.n / 2 + 1);
        if c.kind == FixedKind::Q15 {
            assert!(c.input.iter().all(|&v| i16::try_from(v).is_ok()));
            assert!(c.output.iter().all(|&v| i16::try_from(v).is_ok()));
        }
        assert!(c.snr_db > 0.0 && c.snr_db < 200.0);
    }
    // cmsisdsp 1.10.3 `arm_rfft_q15` measured 47.8 dB for Q15 at N = 1024 (other phases).
    let q15_1024 = cases
        .iter()
        .find(|c| c.kind == FixedKind::Q15 && c.n == 1024 && c.level_dbfs == -1.0)
        .unwrap();
    assert!((q15_1024.snr_db - 47.8).abs() < 1.5, "{}", q15_1024.snr_db);
}
