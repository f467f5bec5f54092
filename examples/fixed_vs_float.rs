//! The fixed-point analyzers next to the float one on the standard test signals and the pump
//! demo, with CMSIS-DSP's fixed-point FFT figures on the identical inputs beside ours.
//!
//! `cargo run --release --example fixed_vs_float` (features `f32`, `fixed`, `demo`)
//!
//! Each signal, as 16-bit counts, goes through the f32 analyzer ([`Analyzer::push_counts`]),
//! [`AnalyzerQ15`] and [`AnalyzerQ31`] (its `push_counts`): Hann, 50 % overlap, a linear
//! average of 8 blocks, fs = 25.6 kHz. The fixed-point spectra are compared with the f32 one
//! by [`leakless::compare`] (SNR, worst line relative to the strongest, the level of the two
//! strongest tones found by a local-maximum search, one band level). The f32 path is the
//! reference here, so the Q31 rows measure mostly the f32 path's own error.
//!
//! The last two columns are transform-only figures on CMSIS-DSP's test data (the same kind
//! of two tones, windowed in f64 before quantisation, `tests/reference/cmsis_fixed.csv`):
//! our `rfft_q15`/`rfft_q31` and CMSIS's stored SNR (`cmsis_fixed_summary.csv`), both
//! against an f64 DFT of the identical integer input.

#[path = "../tests/common/mod.rs"]
mod common;
#[path = "../tests/support/mod.rs"]
mod support;

use common::{cmsis_fixed_cases, CmsisFixedCase, FixedKind};
use leakless::analysis::bands::{Band, Integration};
use leakless::compare::{
    band_level_error_db, snr_db, strongest_tones, tone_level_error_db, worst_line_error_db,
};
use leakless::demo::PumpScenario;
use leakless::fft::fixed::{bin_q15, bin_q31, rfft_q15, rfft_q31};
use leakless::{
    Analyzer, AnalyzerQ15, AnalyzerQ31, Averaging, Config, Correction, Scale, Shape, Spectrum,
    WhenDone, Window, WindowQ15, WindowQ31,
};
use rustfft::{num_complex::Complex64, FftPlanner};
use support::signals::{two_tones_counts, white_noise_counts};

const FS: f32 = 25_600.0;
const AVERAGES: u32 = 8;

/// A signal of the table: its counts for blocks of `N`, and the band whose level is compared.
struct Signal {
    name: &'static str,
    counts: fn(usize, usize) -> Vec<i16>,
    band: fn(usize) -> (Band, Integration),
    /// (level dBFS) of the matching CMSIS cases, if any.
    cmsis_level_dbfs: Option<f64>,
    sensitivity: f32,
    unit: &'static str,
}

fn pump_counts(len: usize, _n: usize) -> Vec<i16> {
    let mut pump = PumpScenario::new();
    let mut out = vec![0i16; len];
    pump.fill_counts(&mut out);
    out
}

fn pump_sensitivity() -> f32 {
    let pump = PumpScenario::new();
    (1.0 / (pump.counts_per_volt() as f64 * pump.volts_per_m_s2())) as f32
}

/// The band around the small tone (0.3 N + 0.21 bins) of the two-tone signals.
fn small_tone_band(_n: usize) -> (Band, Integration) {
    (Band::new(0.28 * FS, 0.32 * FS).unwrap(), Integration::None)
}

fn signals() -> Vec<Signal> {
    vec![
        Signal {
            name: "2 tones -1 dBFS",
            counts: |len, n| two_tones_counts(len, n, -1.0, (0.655, 2.568)),
            band: small_tone_band,
            cmsis_level_dbfs: Some(-1.0),
            sensitivity: 1.0,
            unit: "counts",
        },
        Signal {
            name: "2 tones -41 dBFS",
            counts: |len, n| two_tones_counts(len, n, -41.0, (0.655, 2.568)),
            band: small_tone_band,
            cmsis_level_dbfs: Some(-41.0),
            sensitivity: 1.0,
            unit: "counts",
        },
        Signal {
            name: "white noise -20 dBFS",
            counts: |len, _| white_noise_counts(len, 3277.0, 7),
            band: |_| (Band::new(0.1 * FS, 0.2 * FS).unwrap(), Integration::None),
            cmsis_level_dbfs: None,
            sensitivity: 1.0,
            unit: "counts",
        },
        Signal {
            name: "pump demo (counts)",
            counts: pump_counts,
            band: |_| (Band::SEVERITY_10_1000_HZ, Integration::Once),
            cmsis_level_dbfs: None,
            sensitivity: pump_sensitivity(),
            unit: "m/s^2",
        },
    ]
}

/// The figures of one fixed-point spectrum against the f32 one.
fn figures<const BINS: usize>(
    test: &Spectrum<BINS>,
    reference: &Spectrum<BINS>,
    band: (Band, Integration),
) -> String {
    let snr = snr_db(test, reference).unwrap();
    let worst = worst_line_error_db(test, reference).unwrap();
    let mut tones = [0usize; 2];
    let found = strongest_tones(reference, 8, &mut tones);
    let tone_errors: Vec<String> = tones[..found]
        .iter()
        .map(|&k| format!("{:+.4}", tone_level_error_db(test, reference, k).unwrap()))
        .collect();
    let band_error = band_level_error_db(test, reference, band.0, band.1)
        .map(|e| format!("{e:+.4}"))
        .unwrap_or_else(|e| format!("({e})"));
    format!(
        "{snr:>7.1} {:>8.1} {:>17} {band_error:>9}",
        worst.error_db,
        tone_errors.join(" ")
    )
}

/// Our transform's SNR on a CMSIS case's input against an f64 DFT (rustfft 6.4).
fn our_fft_snr<const N: usize>(case: &CmsisFixedCase) -> f64 {
    let mut buf: Vec<Complex64> = case
        .input
        .iter()
        .map(|&v| Complex64::new(v as f64, 0.0))
        .collect();
    FftPlanner::<f64>::new()
        .plan_fft_forward(N)
        .process(&mut buf);
    let ours: Vec<Complex64> = match case.kind {
        FixedKind::Q15 => {
            let mut data: [i16; N] = core::array::from_fn(|i| case.input[i] as i16);
            let scale = 2f64.powi(rfft_q15(&mut data));
            (0..=N / 2)
                .map(|k| {
                    let (re, im) = bin_q15(&data, k).unwrap();
                    Complex64::new(re as f64, im as f64) * scale
                })
                .collect()
        }
        FixedKind::Q31 => {
            let mut data: [i32; N] = core::array::from_fn(|i| case.input[i]);
            let scale = 2f64.powi(rfft_q31(&mut data));
            (0..=N / 2)
                .map(|k| {
                    let (re, im) = bin_q31(&data, k).unwrap();
                    Complex64::new(re as f64, im as f64) * scale
                })
                .collect()
        }
    };
    let s: f64 = buf[..=N / 2].iter().map(|c| c.norm_sqr()).sum();
    let e: f64 = ours.iter().zip(&buf).map(|(a, b)| (a - b).norm_sqr()).sum();
    10.0 * (s / e).log10()
}

fn cmsis_columns(
    cases: &[CmsisFixedCase],
    n: usize,
    kind: FixedKind,
    level: Option<f64>,
) -> String {
    let Some(level) = level else {
        return format!("{:>8} {:>7}", "-", "-");
    };
    let case = cases
        .iter()
        .find(|c| c.n == n && c.kind == kind && c.level_dbfs == level)
        .expect("a CMSIS case for every N and level");
    let ours = match n {
        256 => our_fft_snr::<256>(case),
        1024 => our_fft_snr::<1024>(case),
        _ => our_fft_snr::<4096>(case),
    };
    format!("{ours:>8.1} {:>7.1}", case.snr_db)
}

fn run<const N: usize, const BINS: usize>(signal: &Signal, cases: &[CmsisFixedCase]) {
    let float_window: Window<N> = Window::new(Shape::Hann);
    let q15_window: WindowQ15<N> = WindowQ15::new(Shape::Hann);
    let q31_window: WindowQ31<N> = WindowQ31::new(Shape::Hann);
    let config = Config::new(FS)
        .with_overlap_fraction(0.5)
        .with_averaging(Averaging::Linear {
            count: AVERAGES,
            when_done: WhenDone::Hold,
        })
        .with_sensitivity(signal.sensitivity)
        .with_full_scale(32_767.0)
        .with_unit(signal.unit);
    let counts = (signal.counts)((AVERAGES as usize + 1) * N / 2, N);
    let mut float = Analyzer::<N, BINS>::new(&float_window, config).unwrap();
    let mut q15 = AnalyzerQ15::<N, BINS>::new(&q15_window, config).unwrap();
    let mut q31 = AnalyzerQ31::<N, BINS>::new(&q31_window, config).unwrap();
    float.push_counts(&counts);
    q15.push(&counts);
    q31.push_counts(&counts);
    assert!(float.is_done() && q15.is_done() && q31.is_done());
    let scale = (Scale::Power, Correction::Energy);
    let reference = float.spectrum(scale.0, scale.1);
    let band = (signal.band)(N);
    for (path, spectrum, kind) in [
        ("Q15", q15.spectrum(scale.0, scale.1), FixedKind::Q15),
        ("Q31", q31.spectrum(scale.0, scale.1), FixedKind::Q31),
    ] {
        println!(
            "{:<21} {N:>5} {path:>4} {} {}",
            signal.name,
            figures(&spectrum, &reference, band),
            cmsis_columns(cases, N, kind, signal.cmsis_level_dbfs)
        );
    }
}

fn main() {
    let cases = cmsis_fixed_cases();
    println!(
        "fixed point vs f32: Hann, 50 % overlap, {AVERAGES} linear averages, fs = {FS} Hz, \
         16-bit counts; Q15 = AnalyzerQ15, Q31 = AnalyzerQ31 (push_counts); reference: the f32 Analyzer"
    );
    println!(
        "CMSIS columns: FFT-only SNR on the identical quantised inputs of tests/reference/cmsis_fixed.csv \
         (ours: rfft_q15/rfft_q31 vs rustfft f64; CMSIS: snr_db of tests/reference/cmsis_fixed_summary.csv, \
         cmsisdsp 1.10.3 arm_rfft_q15/arm_rfft_q31 vs numpy f64 rfft)"
    );
    println!(
        "{:<21} {:>5} {:>4} {:>7} {:>8} {:>17} {:>9} {:>8} {:>7}",
        "signal", "N", "path", "SNR dB", "worst dB", "tone err dB", "band dB", "FFT ours", "CMSIS"
    );
    for signal in signals() {
        run::<256, 129>(&signal, &cases);
        run::<1024, 513>(&signal, &cases);
        run::<4096, 2049>(&signal, &cases);
    }
    println!(
        "worst dB: largest line amplitude error relative to the strongest line; tone err: power over \
         the peak line +-2 of the two strongest local maxima of the f32 spectrum (guard 8 lines); \
         band: 0.28-0.32 fs (two tones), 0.1-0.2 fs (noise), 10-1000 Hz velocity (pump)"
    );
}
