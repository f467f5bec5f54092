//! The float analyzer against scipy 1.17.1 `welch` and `periodogram` golden data
//! (`tests/reference/spectra*.csv`, written by `tests/reference/generate.py`).
#![cfg(all(feature = "f32", feature = "size-4096"))]

mod common;

use common::{welch_cases, Scaling, SpectrumCase};
use leakless::{
    Analyzer, Averaging, Config, Correction, Detrend, Scale, Shape, Spectrum, WhenDone, Window,
};

static HANN_256: Window<256> = Window::new(Shape::Hann);
static FLAT_TOP_256: Window<256> = Window::new(Shape::FlatTop);
static HANN_4096: Window<4096> = Window::new(Shape::Hann);
static BOXCAR_4096: Window<4096> = Window::new(Shape::Rectangular);

/// Our spectrum for a case, on the scale its scipy `scaling` names: 'density' is
/// [`Scale::Psd`], 'spectrum' is [`Scale::Power`] with amplitude correction.
fn analyse<const N: usize, const BINS: usize>(
    window: &'static Window<N>,
    case: &SpectrumCase,
    input: &[f32],
) -> Vec<f64> {
    assert_eq!((case.nperseg, case.expected.len()), (N, BINS));
    let config = Config::new(case.fs_hz as f32)
        .with_overlap(case.noverlap)
        .with_detrend(if case.detrend_constant {
            Detrend::Mean
        } else {
            Detrend::None
        })
        .with_averaging(Averaging::Linear {
            count: case.segments as u32,
            when_done: WhenDone::Hold,
        });
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(window, config).unwrap();
    analyzer.push(input);
    // scipy uses whole segments only; so does a held linear average of that count.
    assert!(analyzer.is_done(), "case {}", case.id);
    let spectrum: Spectrum<BINS> = match case.scaling {
        Scaling::Density => analyzer.spectrum(Scale::Psd, Correction::Energy),
        Scaling::Spectrum => analyzer.spectrum(Scale::Power, Correction::Amplitude),
    };
    assert_eq!(spectrum.averages() as usize, case.segments);
    for (k, &f) in case.freqs_hz.iter().enumerate() {
        assert!((spectrum.frequency_hz(k) as f64 - f).abs() < 1e-9 * case.fs_hz);
    }
    spectrum.values().iter().map(|&v| v as f64).collect()
}

/// Compares every case that `select` picks; `allowed(want, peak)` is the absolute tolerance
/// of a bin. Returns (bins compared, worst relative error).
fn compare(
    select: impl Fn(&SpectrumCase) -> bool,
    allowed: impl Fn(f64, f64) -> f64,
) -> (usize, f64) {
    let (input, cases) = welch_cases();
    assert_eq!(cases.len(), 32);
    let mut worst = 0.0f64;
    let mut compared = 0;
    for case in cases.iter().filter(|c| select(c)) {
        let ours = match (case.window.as_str(), case.nperseg) {
            ("hann", 256) => analyse::<256, 129>(&HANN_256, case, &input),
            ("flattop", 256) => analyse::<256, 129>(&FLAT_TOP_256, case, &input),
            ("hann", 4096) => analyse::<4096, 2049>(&HANN_4096, case, &input),
            ("boxcar", 4096) => analyse::<4096, 2049>(&BOXCAR_4096, case, &input),
            other => panic!("case {}: no window for {other:?}", case.id),
        };
        let peak = case.expected.iter().cloned().fold(0.0, f64::max);
        let floor = peak * 1e-10; // 100 dB down, in power
        for (k, (&got, &want)) in ours.iter().zip(&case.expected).enumerate() {
            if want < floor {
                continue;
            }
            let err = (got - want).abs();
            worst = worst.max(err / want);
            compared += 1;
            assert!(
                err <= allowed(want, peak),
                "case {} ({} {} noverlap {} detrend {} {:?}) bin {k}: {got:e} vs {want:e}",
                case.id,
                case.function,
                case.window,
                case.noverlap,
                case.detrend_constant,
                case.scaling
            );
        }
    }
    (compared, worst)
}

// reference: scipy 1.17.1 signal.welch (tests/reference/README.md, cases 0-23): Hann and
// flat top, nperseg 256, 0/50/75 % overlap, detrend 'constant' and none, scaling 'density'
// (our Psd) and 'spectrum' (our Power with amplitude correction).
// Tolerance 1e-4 relative per bin wherever the reference is within 100 dB of its maximum.
// The input is the same float32 record scipy was given, so only our f32 arithmetic differs;
// at N = 256 its error stays below 1e-5 relative on every such bin (measured).
#[test]
fn welch_matches_scipy() {
    let (compared, worst) = compare(|c| c.function == "welch", |want, _| 1e-4 * want);
    println!("welch: {compared} bins within 100 dB of the peak, worst relative error {worst:.1e}");
    assert_eq!(compared, 24 * 129);
}

// reference: scipy 1.17.1 signal.periodogram (cases 24-31): boxcar and Hann, N = 4096,
// detrend 'constant' and none, both scalings.
// Tolerance: 1e-4 relative, plus the f32 transform's error floor: microfft's own SNR against
// rustfft 6 in f64 is 137.5 dB at N = 4096 (`fft::float::tests::every_size_matches_rustfft`,
// printed with --nocapture; cmsisdsp 1.10.3 `arm_rfft_fast_f32` measures about the same), i.e.
// an amplitude error up to about 10^(-138/20) of the peak amplitude on any bin; in power that
// is 2 sqrt(P P_peak) 10^(-138/20). It dominates only on bins more than about 60 dB down (measured
// worst: 1.2e-3 relative on a bin 85 dB down, an amplitude error 150 dB below the peak).
#[test]
fn periodogram_matches_scipy() {
    let f32_floor = 10f64.powf(-138.0 / 20.0);
    let (compared, worst) = compare(
        |c| c.function == "periodogram",
        |want, peak| 1e-4 * want + 2.0 * (want * peak).sqrt() * f32_floor,
    );
    println!(
        "periodogram: {compared} bins within 100 dB of the peak, worst relative error {worst:.1e}"
    );
    assert!(compared > 8 * 2000, "{compared}");
}
