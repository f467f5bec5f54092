//! Integration tests of the float analyzer against outside references.
#![cfg(all(feature = "f32", feature = "size-1024"))]

mod support;

use leakless::spectrum::condition::MAX_INPUT_MAGNITUDE;
use leakless::{
    Analyzer, Averaging, Config, ConfigError, Correction, Detrend, OverloadPolicy, Scale, Shape,
    Spectrum, Stage, WhenDone, Window,
};
use support::{sine, window_response, SplitMix64};

const N: usize = 1024;
const BINS: usize = N / 2 + 1;
const FS: f32 = 1024.0; // 1 Hz lines

fn single_block() -> Averaging {
    Averaging::Linear {
        count: 1,
        when_done: WhenDone::Hold,
    }
}

/// One block of `samples` through a fresh analyzer.
fn analyse_one<'w>(
    window: &'w Window<N>,
    detrend: Detrend,
    samples: &[f32],
) -> Analyzer<'w, N, BINS> {
    let config = Config::new(FS)
        .with_averaging(single_block())
        .with_detrend(detrend);
    let mut analyzer = Analyzer::new(window, config).unwrap();
    let report = analyzer.push(samples);
    assert_eq!(report.averaged, 1);
    analyzer
}

fn close(got: f32, want: f64, tolerance: f64) -> bool {
    (got as f64 - want).abs() <= tolerance
}

/// Whether a window's image (the tone's negative-frequency copy, 2k bins away) is negligible
/// at 200 bins. Cosine sums are exactly zero at whole bins beyond their last term, and the
/// smooth Kaiser and Tukey tapers are below 1e-6 there; the force and exponential windows are
/// transient windows whose spectra decay like 1/f, so their image is not negligible.
fn image_is_negligible(shape: Shape) -> bool {
    match shape {
        Shape::Force { .. } | Shape::Exponential { .. } => false,
        Shape::Rectangular
        | Shape::Hann
        | Shape::Hamming
        | Shape::Blackman
        | Shape::ExactBlackman
        | Shape::BlackmanHarris92
        | Shape::Nuttall
        | Shape::FlatTop
        | Shape::Hft70
        | Shape::Hft90d
        | Shape::Hft95
        | Shape::Hft116d
        | Shape::Hft144d
        | Shape::Kaiser { .. }
        | Shape::Tukey { .. }
        | Shape::CosineSum(_) => true,
    }
}

// common practice (Heinzel 2002, §9: amplitude correction 1/CG): a tone on a line reads its
// amplitude with amplitude correction, for every window whose image does not reach the
// line. Tolerance 1e-5: f32 transform error at N = 1024 is about 1e-6 relative.
// For the two transient windows the check is against a naive f64 DFT of the same windowed
// block instead (the image is then part of the truth).
#[test]
fn exact_bin_tone_reads_its_amplitude_for_every_window() {
    let amplitude = 0.7;
    let tone = sine(N, amplitude, 100.0, FS as f64);
    for shape in Shape::CATALOGUE {
        let window: Window<N> = Window::new(shape);
        let analyzer = analyse_one(&window, Detrend::None, &tone);
        let peak = analyzer
            .spectrum(Scale::Peak, Correction::Amplitude)
            .values()[100];
        if image_is_negligible(shape) {
            assert!(
                close(peak, amplitude, 1e-5),
                "{}: {peak} vs {amplitude}",
                shape.name()
            );
        } else {
            let windowed: Vec<f32> = tone
                .iter()
                .zip(window.table())
                .map(|(x, w)| x * w)
                .collect();
            // the windowed tone's DFT at bin 100, by window_response's naive sum
            let (mut re, mut im) = (0.0f64, 0.0f64);
            for (n, &x) in windowed.iter().enumerate() {
                let phase = -2.0 * core::f64::consts::PI * 100.0 * n as f64 / N as f64;
                re += x as f64 * phase.cos();
                im += x as f64 * phase.sin();
            }
            let want = 2.0 * (re * re + im * im).sqrt() / window.factors().sum;
            assert!(
                close(peak, want, 1e-5),
                "{}: {peak} vs {want}",
                shape.name()
            );
        }
    }
}

// reference: Heinzel 2002 scalloping loss (Factors::scalloping_loss_db, the window's DTFT at
// half a bin). A tone at 100.5 Hz peaks at the window's half-bin response; the residual is
// the negative-frequency image (scipy 1.17.1 `signal.periodogram`, spectra_examples.csv example
// B), bounded here by the window's own response 200.5 and 201.5 bins away (naive f64 DTFT),
// plus 1e-5 for f32.
#[test]
fn half_bin_tone_reads_the_scalloping_loss() {
    let tone = sine(N, 1.0, 100.5, FS as f64);
    for shape in Shape::CATALOGUE {
        let window: Window<N> = Window::new(shape);
        let analyzer = analyse_one(&window, Detrend::None, &tone);
        let peak = analyzer.spectrum(Scale::Peak, Correction::Amplitude);
        let measured = peak.values()[100].max(peak.values()[101]) as f64;
        let expected = 10f64.powf(window.factors().scalloping_loss_db / 20.0);
        let half = window_response(window.table(), 0.5);
        let image =
            window_response(window.table(), 200.5).max(window_response(window.table(), 201.5));
        let bound = expected * image / half + 1e-5;
        assert!(
            (measured - expected).abs() <= bound,
            "{}: {measured} vs {expected} (bound {bound})",
            shape.name()
        );
    }
}

// reference: scipy 1.17.1 `signal.periodogram`, computed by tests/reference/generate.py into
// tests/reference/spectra_examples.csv, example B (peak corrected amplitude at 100.5 Hz, image
// included). Printed to 6 digits; 5e-6 covers the rounding and f32.
#[test]
fn example_b_half_bin_amplitudes() {
    let tone = sine(N, 1.0, 100.5, FS as f64);
    for (shape, want) in [
        (Shape::Rectangular, 0.638001),
        (Shape::Hann, 0.848826),
        (Shape::Hamming, 0.817593),
        (Shape::BlackmanHarris92, 0.909330),
        (Shape::FlatTop, 0.998878),
        (Shape::Hft90d, 0.999551),
    ] {
        let window: Window<N> = Window::new(shape);
        let analyzer = analyse_one(&window, Detrend::Mean, &tone);
        let peak = analyzer.spectrum(Scale::Peak, Correction::Amplitude);
        let got = peak.values()[100].max(peak.values()[101]);
        assert!(close(got, want, 5e-6), "{}: {got} vs {want}", shape.name());
    }
    // Hann: 'spectrum' and 'density' on both lines, and the band power.
    let hann: Window<N> = Window::new(Shape::Hann);
    let analyzer = analyse_one(&hann, Detrend::Mean, &tone);
    let spectrum = analyzer.spectrum(Scale::Power, Correction::Amplitude);
    let density = analyzer.spectrum(Scale::Psd, Correction::Energy);
    for k in [100, 101] {
        assert!(close(spectrum.values()[k], 0.360253, 2e-6));
        assert!(close(density.values()[k], 0.240169, 2e-6));
    }
    let band: f32 = density.values()[90..=110].iter().sum::<f32>() * density.bin_width_hz();
    assert!(close(band, 0.5, 2e-6), "{band}");
}

// reference: scipy 1.17.1 `signal.periodogram`, computed by tests/reference/generate.py into
// tests/reference/spectra_examples.csv, example A (Hann, exact bin).
// Values printed to 6 digits; 2e-6 absolute covers that and the f32 path.
#[test]
fn example_a_exact_bin_levels() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let tone = sine(N, 1.0, 100.0, FS as f64);
    let analyzer = analyse_one(&hann, Detrend::Mean, &tone);
    let spectrum = analyzer.spectrum(Scale::Power, Correction::Amplitude);
    let density = analyzer.spectrum(Scale::Psd, Correction::Energy);
    let peak = analyzer.spectrum(Scale::Peak, Correction::Amplitude);
    assert!(close(spectrum.values()[100], 0.5, 2e-6));
    assert!(close(spectrum.values()[101], 0.125, 2e-6));
    assert!(close(density.values()[100], 0.333333, 2e-6));
    assert!(close(density.values()[101], 0.083333, 2e-6));
    assert!(close(peak.values()[100], 1.0, 2e-6));
    assert!(close(peak.values()[101], 0.5, 2e-6));
    let band = 90..=110;
    let density_sum: f32 =
        density.values()[band.clone()].iter().sum::<f32>() * density.bin_width_hz();
    let spectrum_sum: f32 = spectrum.values()[band].iter().sum();
    assert!(close(density_sum, 0.5, 2e-6));
    assert!(close(spectrum_sum, 0.75, 2e-6));
    assert!(close(
        spectrum_sum / hann.factors().enbw_bins as f32,
        0.5,
        2e-6
    ));
    assert_eq!(spectrum.scale(), Scale::Power);
    assert_eq!(density.correction(), Correction::Energy);
    assert_eq!(spectrum.bin_width_hz(), 1.0);
    assert_eq!(spectrum.averages(), 1);
}

// reference: scipy 1.17.1 `signal.periodogram`, computed by tests/reference/generate.py into
// tests/reference/spectra_examples.csv, example D (boxcar, 'spectrum'):
// DC and Nyquist are not doubled; detrend='constant' removes DC.
#[test]
fn example_d_dc_and_nyquist() {
    let rect: Window<N> = Window::new(Shape::Rectangular);
    let signal: Vec<f32> = sine(N, 1.0, 100.0, FS as f64)
        .iter()
        .map(|x| x + 0.3)
        .collect();
    let with_mean = analyse_one(&rect, Detrend::Mean, &signal);
    let power = with_mean.spectrum(Scale::Power, Correction::Amplitude);
    assert!(close(power.values()[0], 0.0, 1e-10));
    assert!(close(power.values()[100], 0.5, 2e-6));
    let without = analyse_one(&rect, Detrend::None, &signal);
    let power = without.spectrum(Scale::Power, Correction::Amplitude);
    assert!(close(power.values()[0], 0.09, 2e-6));
    assert!(close(power.values()[100], 0.5, 2e-6));
    let alternating: Vec<f32> = (0..N)
        .map(|n| if n % 2 == 0 { 1.0 } else { -1.0 })
        .collect();
    let nyquist = analyse_one(&rect, Detrend::Mean, &alternating);
    let power = nyquist.spectrum(Scale::Power, Correction::Amplitude);
    assert!(close(power.values()[512], 1.0, 2e-6));
}

/// Gaussian white noise of standard deviation `sigma`.
fn noise(rng: &mut SplitMix64, len: usize, sigma: f64) -> Vec<f32> {
    (0..len).map(|_| (sigma * rng.gaussian()) as f32).collect()
}

// reference: scipy 1.17.1 `signal.welch`, tests/reference/spectra_examples.csv example C
// (analytic: one-sided PSD of white noise is 2 sigma^2 / fs, Nyquist sigma^2 / fs; Parseval:
// sum PSD df = sigma^2). Hann, 50 % overlap, 1023 blocks. Tolerance: 4 standard errors. Per
// line the relative standard error of a Welch average is sqrt((1 + 2 c50^2) / K) (Welch 1967);
// the mean over 511 lines has about 511 / NENBW independent lines. The Nyquist line is real
// (chi-square with 1 degree of freedom), so its error is sqrt(2) larger.
#[test]
fn example_c_white_noise_psd() {
    let sigma = 0.1;
    let hann: Window<N> = Window::new(Shape::Hann);
    let config = Config::new(FS)
        .with_overlap_fraction(0.5)
        .with_averaging(Averaging::Linear {
            count: 1023,
            when_done: WhenDone::Hold,
        });
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&hann, config).unwrap();
    let mut rng = SplitMix64(12345);
    analyzer.push(&noise(&mut rng, 524_288, sigma));
    assert!(analyzer.is_done());
    let psd = analyzer.spectrum(Scale::Psd, Correction::Energy);
    assert_eq!(psd.averages(), 1023);

    let factors = hann.factors();
    let c50 = factors.overlap_correlation_50;
    let per_line = ((1.0 + 2.0 * c50 * c50) / 1023.0).sqrt();
    let independent_lines = 511.0 / factors.enbw_bins;
    let tolerance = 4.0 * per_line / independent_lines.sqrt();

    let variance = sigma * sigma;
    let interior: f64 = psd.values()[1..512].iter().map(|&p| p as f64).sum::<f64>() / 511.0;
    let expected = 2.0 * variance / FS as f64;
    assert!(
        (interior / expected - 1.0).abs() < tolerance,
        "mean PSD {interior:e} vs {expected:e} (tolerance {tolerance})"
    );
    println!(
        "white noise: mean PSD {interior:.6e} (expected {expected:.6e}), tolerance {tolerance:.4}"
    );
    let nyquist = psd.values()[512] as f64 / (variance / FS as f64);
    assert!(
        (nyquist - 1.0).abs() < 4.0 * 2f64.sqrt() * per_line,
        "Nyquist {nyquist}"
    );
    let total: f64 =
        psd.values().iter().map(|&p| p as f64).sum::<f64>() * psd.bin_width_hz() as f64;
    assert!((total / variance - 1.0).abs() < tolerance, "total {total}");
    println!("white noise: Nyquist/expected {nyquist:.4}, sum PSD df {total:.6}");
    let rms = analyzer.overall_rms(true) as f64;
    assert!((rms * rms / total - 1.0).abs() < 1e-5, "overall rms {rms}");
    // 'spectrum' (amplitude-corrected power) reads noise high by NENBW: 3 sigma^2 / N for Hann.
    let spectrum = analyzer.spectrum(Scale::Power, Correction::Amplitude);
    let mean_spectrum: f64 = spectrum.values()[1..512]
        .iter()
        .map(|&p| p as f64)
        .sum::<f64>()
        / 511.0;
    assert!((mean_spectrum / (3.0 * variance / N as f64) - 1.0).abs() < tolerance);
}

// reference: Welch 1967, variance of the averaged periodogram (checked by Monte Carlo with
// scipy 1.17.1 `signal.welch`):
// (1/K)[1 + 2 sum_j (1 - j/K) c(jD)^2] = 0.03399 for Hann, 50 % overlap, K = 31, nperseg 256.
// Monte Carlo over 1000 records of 4096 samples. Tolerance: the variance estimate from T
// records has relative standard error sqrt(2 / T); averaged over 125 lines of which about
// 125 / NENBW are independent, 4 standard errors are 4 sqrt(2/T) / sqrt(125/1.5) = 2.0 %.
#[test]
fn example_e_welch_variance() {
    const M: usize = 256;
    static HANN: Window<M> = Window::new(Shape::Hann);
    let k = 31u32;
    let c = HANN.factors().overlap_correlation_50;
    let predicted = (1.0 + 2.0 * (1.0 - 1.0 / k as f64) * c * c) / k as f64;
    assert!((predicted - 0.03399).abs() < 5e-6, "{predicted}");

    let config = Config::new(1.0)
        .with_overlap(M / 2)
        .with_detrend(Detrend::None)
        .with_averaging(Averaging::Linear {
            count: k,
            when_done: WhenDone::Hold,
        });
    let mut analyzer: Analyzer<M, { M / 2 + 1 }> = Analyzer::new(&HANN, config).unwrap();
    let trials = 1000;
    let lines = 2..127;
    let mut sum = vec![0.0f64; M / 2 + 1];
    let mut sum_sq = vec![0.0f64; M / 2 + 1];
    let mut rng = SplitMix64(99);
    for _ in 0..trials {
        analyzer.reset();
        analyzer.push(&noise(&mut rng, 4096, 1.0));
        assert_eq!(analyzer.status().blocks_averaged, k);
        let psd = analyzer.spectrum(Scale::Psd, Correction::Energy);
        for line in lines.clone() {
            let p = psd.values()[line] as f64;
            sum[line] += p;
            sum_sq[line] += p * p;
        }
    }
    let t = trials as f64;
    let normalised: f64 = lines
        .clone()
        .map(|line| {
            let mean = sum[line] / t;
            let var = (sum_sq[line] - t * mean * mean) / (t - 1.0);
            var / (mean * mean)
        })
        .sum::<f64>()
        / lines.len() as f64;
    let independent = lines.len() as f64 / HANN.factors().enbw_bins;
    let tolerance = 4.0 * (2.0 / t).sqrt() / independent.sqrt();
    println!("Welch variance: Monte Carlo {normalised:.5}, predicted {predicted:.5}, tolerance {tolerance:.4}");
    assert!(
        (normalised / predicted - 1.0).abs() < tolerance,
        "Monte Carlo {normalised} vs Welch {predicted} (tolerance {tolerance})"
    );
}

/// Every block's power spectrum on its own (count 1, restart), for the averaging checks.
fn block_spectra(window: &Window<N>, stream: &[f32]) -> Vec<Spectrum<BINS>> {
    let config = Config::new(FS).with_averaging(Averaging::Linear {
        count: 1,
        when_done: WhenDone::Restart,
    });
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(window, config).unwrap();
    stream
        .chunks(N)
        .map(|block| {
            assert_eq!(analyzer.push(block).averages_completed, 1);
            analyzer.spectrum(Scale::Power, Correction::Energy)
        })
        .collect()
}

// from the definition (Averaging::Exponential docs): avg_1 = p_1, then
// avg_i = avg_{i-1} + (p_i - avg_{i-1}) / tau, checked against the same recursion in f64 on
// the per-block spectra. 1e-5 relative: a few f32 roundings per step over 20 steps.
#[test]
fn exponential_average_follows_its_recursion() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let mut rng = SplitMix64(7);
    let stream = noise(&mut rng, 20 * N, 1.0);
    let blocks = block_spectra(&hann, &stream);
    let tau = 4.0;
    let config = Config::new(FS).with_averaging(Averaging::Exponential {
        time_constant_blocks: tau,
    });
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&hann, config).unwrap();
    let mut reference = vec![0.0f64; BINS];
    for (i, (chunk, block)) in stream.chunks(N).zip(&blocks).enumerate() {
        analyzer.push(chunk);
        for (r, &p) in reference.iter_mut().zip(block.values()) {
            *r = if i == 0 {
                p as f64
            } else {
                *r + (p as f64 - *r) / tau as f64
            };
        }
        let got = analyzer.spectrum(Scale::Power, Correction::Energy);
        for (k, (&g, &r)) in got.values().iter().zip(&reference).enumerate() {
            assert!(
                (g as f64 - r).abs() <= 1e-5 * r.abs() + 1e-30,
                "block {i} line {k}: {g} vs {r}"
            );
        }
    }
    assert!(!analyzer.is_done());
    assert_eq!(analyzer.status().current_average, 20);
}

// from the definition: peak hold is >= every block and equals the largest one on each line.
#[test]
fn peak_hold_is_the_maximum_of_the_blocks() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let mut rng = SplitMix64(8);
    let stream = noise(&mut rng, 12 * N, 1.0);
    let blocks = block_spectra(&hann, &stream);
    let config = Config::new(FS).with_averaging(Averaging::PeakHold);
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&hann, config).unwrap();
    analyzer.push(&stream);
    let held = analyzer.spectrum(Scale::Power, Correction::Energy);
    for k in 0..BINS {
        let max = blocks
            .iter()
            .map(|b| b.values()[k])
            .fold(f32::MIN, f32::max);
        assert!(blocks.iter().all(|b| held.values()[k] >= b.values()[k]));
        assert_eq!(held.values()[k], max, "line {k}");
    }
}

// from the definition of a linear average (mean of `count` blocks), with Hold and Restart.
#[test]
fn linear_average_is_the_mean_and_holds_or_restarts() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let mut rng = SplitMix64(9);
    let stream = noise(&mut rng, 6 * N, 1.0);
    let blocks = block_spectra(&hann, &stream);
    for when_done in [WhenDone::Hold, WhenDone::Restart] {
        let config = Config::new(FS).with_averaging(Averaging::Linear {
            count: 4,
            when_done,
        });
        let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&hann, config).unwrap();
        let report = analyzer.push(&stream[..4 * N]);
        assert_eq!((report.averaged, report.averages_completed), (4, 1));
        assert!(analyzer.is_done());
        let mean = analyzer.spectrum(Scale::Power, Correction::Energy);
        for k in 0..BINS {
            let want: f64 = blocks[..4]
                .iter()
                .map(|b| b.values()[k] as f64)
                .sum::<f64>()
                / 4.0;
            assert!(
                (mean.values()[k] as f64 - want).abs() <= 1e-5 * want,
                "line {k}"
            );
        }
        let report = analyzer.push(&stream[4 * N..]);
        let after = analyzer.spectrum(Scale::Power, Correction::Energy);
        match when_done {
            WhenDone::Hold => {
                assert_eq!((report.ignored, report.averaged), (2, 0));
                assert_eq!(after.values(), mean.values());
            }
            WhenDone::Restart => {
                assert_eq!((report.ignored, report.averaged), (0, 2));
                assert!(!analyzer.is_done());
                assert_eq!(after.averages(), 2);
                // the partial average reads as the mean of its blocks so far
                let want = (blocks[4].values()[10] as f64 + blocks[5].values()[10] as f64) / 2.0;
                assert!((after.values()[10] as f64 - want).abs() <= 1e-5 * want);
            }
        }
    }
}

#[test]
fn rejected_blocks_stay_out_of_the_average() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let tone = sine(N, 1.0, 100.0, FS as f64);
    let mut poisoned = tone.clone();
    poisoned[17] = f32::NAN;
    let mut clipped = tone.clone();
    clipped[3] = 2.0;
    for policy in [OverloadPolicy::Reject, OverloadPolicy::Average] {
        let config = Config::new(FS)
            .with_full_scale(1.5)
            .with_overload_policy(policy)
            .with_averaging(Averaging::Linear {
                count: 10,
                when_done: WhenDone::Hold,
            });
        let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&hann, config).unwrap();
        analyzer.push(&tone);
        let nan = analyzer.push(&poisoned);
        assert_eq!((nan.rejected, nan.averaged), (1, 0));
        let over = analyzer.push(&clipped);
        let status = analyzer.status();
        assert_eq!(status.blocks_seen, 3);
        assert_eq!(status.rejected_non_finite, 1);
        assert_eq!(status.overloaded, 1);
        let spectrum = analyzer.spectrum(Scale::Peak, Correction::Amplitude);
        assert!(spectrum.values().iter().all(|v| v.is_finite()));
        match policy {
            OverloadPolicy::Reject => {
                assert_eq!(over.rejected, 1);
                assert_eq!(status.blocks_averaged, 1);
                // common practice: an amplitude-corrected tone on a line reads its amplitude
                // (1.0), so only the clean block is in the average; 1e-5 is the f32 path's
                // error for an exact-line tone, as in `exact_bin_tone_reads_its_amplitude_for_every_window`.
                assert!(close(spectrum.values()[100], 1.0, 1e-5));
            }
            OverloadPolicy::Average => {
                assert_eq!(over.averaged, 1);
                assert_eq!(status.blocks_averaged, 2);
            }
        }
    }
}

// common practice: a sensor's sensitivity scales levels linearly; counts * sensitivity.
#[test]
fn counts_and_sensitivity() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let counts: Vec<i16> = sine(N, 8192.0, 100.0, FS as f64)
        .iter()
        .map(|&x| x.round() as i16)
        .collect();
    let g_per_count = 1.0 / 16384.0;
    let config = Config::new(FS)
        .with_sensitivity(g_per_count)
        .with_full_scale(32767.0)
        .with_unit("g")
        .with_averaging(single_block());
    let mut from_counts: Analyzer<N, BINS> = Analyzer::new(&hann, config).unwrap();
    let mut from_floats = from_counts.clone();
    from_counts.push_counts(&counts);
    let floats: Vec<f32> = counts.iter().map(|&c| c as f32).collect();
    from_floats.push(&floats);
    let a = from_counts.spectrum(Scale::Peak, Correction::Amplitude);
    let b = from_floats.spectrum(Scale::Peak, Correction::Amplitude);
    assert_eq!(a, b);
    assert_eq!(a.unit(), "g");
    // 8192 counts at 1/16384 g per count = 0.5 g; rounding to counts moves it by < 1e-4.
    assert!(close(a.values()[100], 0.5, 1e-4), "{}", a.values()[100]);
}

#[test]
fn probe_sees_every_stage_in_order() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let config = Config::new(FS).with_full_scale(10.0);
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&hann, config).unwrap();
    let mut stages = Vec::new();
    let good = sine(N, 1.0, 50.0, FS as f64);
    analyzer.push_probed(&good, &mut |s| stages.push(s));
    assert_eq!(
        stages,
        [
            Stage::Condition,
            Stage::Window,
            Stage::Transform,
            Stage::Average,
            Stage::Done
        ]
    );
    stages.clear();
    analyzer.push_probed(&[f32::INFINITY; N], &mut |s| stages.push(s));
    assert_eq!(stages, [Stage::Condition, Stage::Done]);
}

#[test]
fn empty_analyzer_reads_zero() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&hann, Config::new(FS)).unwrap();
    analyzer.push(&[1.0; N - 1]);
    let s = analyzer.spectrum(Scale::Asd, Correction::Amplitude);
    assert_eq!(s.averages(), 0);
    assert!(s.values().iter().all(|&v| v == 0.0));
    assert_eq!(analyzer.overall_rms(true), 0.0);
    analyzer.push(&[1.0]);
    assert_eq!(analyzer.status().blocks_seen, 1);
    analyzer.reset();
    assert_eq!(analyzer.status().blocks_seen, 0);
    let mut out = analyzer.spectrum(Scale::Power, Correction::Energy);
    analyzer.read_into(&mut out, Scale::Psd, Correction::Amplitude);
    assert_eq!(out.scale(), Scale::Psd);
}

#[test]
fn every_bad_config_is_a_typed_error() {
    let hann: Window<N> = Window::new(Shape::Hann);
    let build = |config: Config| Analyzer::<N, BINS>::new(&hann, config).err();
    for fs in [0.0, -1.0, f32::NAN, f32::INFINITY] {
        assert_eq!(
            build(Config::new(fs)),
            Some(ConfigError::SampleRate),
            "{fs}"
        );
    }
    assert_eq!(
        build(Config::new(FS).with_overlap(N)),
        Some(ConfigError::Overlap {
            overlap: N,
            block_len: N
        })
    );
    assert!(build(Config::new(FS).with_overlap(N - 1)).is_none());
    for f in [1.0, -0.1, f32::NAN, f32::INFINITY] {
        assert_eq!(
            build(Config::new(FS).with_overlap_fraction(f)),
            Some(ConfigError::OverlapFraction),
            "{f}"
        );
    }
    // rounds to N samples
    assert_eq!(
        build(Config::new(FS).with_overlap_fraction(0.9999)),
        Some(ConfigError::Overlap {
            overlap: N,
            block_len: N
        })
    );
    let linear0 = Averaging::Linear {
        count: 0,
        when_done: WhenDone::Hold,
    };
    assert_eq!(
        build(Config::new(FS).with_averaging(linear0)),
        Some(ConfigError::AverageCount)
    );
    for tau in [0.99, 0.0, f32::NAN, f32::INFINITY] {
        let exp = Averaging::Exponential {
            time_constant_blocks: tau,
        };
        assert_eq!(
            build(Config::new(FS).with_averaging(exp)),
            Some(ConfigError::AverageCount)
        );
    }
    for s in [0.0, f32::NAN, f32::INFINITY] {
        assert_eq!(
            build(Config::new(FS).with_sensitivity(s)),
            Some(ConfigError::Sensitivity)
        );
    }
    for fs in [0.0, -1.0, f32::NAN, f32::INFINITY] {
        assert_eq!(
            build(Config::new(FS).with_full_scale(fs)),
            Some(ConfigError::FullScale)
        );
    }
}

// The documented RAM cost: within 10 % of the buffers' own size.
#[test]
fn ram_cost_is_the_buffers() {
    let size = core::mem::size_of::<Analyzer<'static, N, BINS>>();
    let buffers = 4 * N + 4 * N + 4 * BINS;
    assert!(
        size <= buffers + buffers / 10,
        "{size} bytes for {buffers} of buffers"
    );
    assert!(size >= buffers);
    println!("size_of::<Analyzer<1024, 513>>() = {size}");
}

#[test]
fn huge_inputs_are_rejected_not_overflowed() {
    let rect: Window<64> = Window::new(Shape::Rectangular);
    let config = Config::new(64.0).with_averaging(Averaging::PeakHold);
    let mut analyzer: Analyzer<64, 33> = Analyzer::new(&rect, config).unwrap();
    // just below the limit, alternating so the mean does not cancel: finite power
    let big = MAX_INPUT_MAGNITUDE * 0.999;
    let block: Vec<f32> = (0..64)
        .map(|n| if n % 2 == 0 { big } else { -big })
        .collect();
    assert_eq!(analyzer.push(&block).averaged, 1);
    assert_eq!(analyzer.push(&[MAX_INPUT_MAGNITUDE; 64]).rejected, 1);
    let s = analyzer.spectrum(Scale::Psd, Correction::Energy);
    assert!(s.values().iter().all(|v| v.is_finite()));
}
