//! The fixed-point analyzers against the float analyzer on the same counts, and their own
//! bookkeeping (counters, probe, configuration errors, RAM, chunking).
#![cfg(all(feature = "fixed", feature = "f32", feature = "size-4096"))]

mod support;

use leakless::compare::{snr_db, worst_line_error_db};
use leakless::{
    Analyzer, AnalyzerQ15, AnalyzerQ31, Averaging, Config, ConfigError, Correction, OverloadPolicy,
    Scale, Shape, Stage, WhenDone, Window, WindowQ15, WindowQ31,
};
use support::signals::{two_tones_counts, white_noise_counts};

const SCALES: [Scale; 5] = [
    Scale::Peak,
    Scale::Rms,
    Scale::Power,
    Scale::Psd,
    Scale::Asd,
];
const CORRECTIONS: [Correction; 2] = [Correction::Amplitude, Correction::Energy];

fn modes() -> [Averaging; 4] {
    [
        Averaging::Linear {
            count: 4,
            when_done: WhenDone::Hold,
        },
        Averaging::Linear {
            count: 3,
            when_done: WhenDone::Restart,
        },
        Averaging::Exponential {
            time_constant_blocks: 2.5,
        },
        Averaging::PeakHold,
    ]
}

fn config(mode: Averaging) -> Config {
    Config::new(25_600.0)
        .with_overlap_fraction(0.5)
        .with_averaging(mode)
        .with_sensitivity(9.80665 / 16_384.0)
        .with_full_scale(32_767.0)
        .with_unit("m/s^2")
}

/// The error bound of a fixed-point spectrum against the float one, from the Q15 transform's
/// measured noise floor: at most 4 output LSB rms per line (`tests/fixed_fft.rs` measured 2.6
/// to 3.9 LSB rms on noise blocks) and at most 5 times that in the worst line (the same
/// test's bound on the largest of N/2 + 1 near-Gaussian errors). The transform scales its
/// output so that its largest component is at least 2^14 LSB, and the strongest line is at
/// least that component, so one LSB is at most `a_max / 2^14` in line amplitude. Averaging
/// does not add to the rms of a per-line error (a mean or a maximum of errors of that size).
/// The window's Q15 rounding (0.5 LSB per sample, about -97 dB relative to the signal) and
/// the windowing product's rounding (0.3 LSB rms per sample at the block's full scale, about
/// -120 dB per line) are far below that and not counted.
///
/// Returns `(snr_db, worst_line_db)` bounds: SNR at least
/// `10 log10(sum a^2 / (BINS (4 a_max / 2^14)^2))`, worst line at most `20 log10(20 / 2^14)`.
fn q15_bounds<const BINS: usize>(reference: &leakless::Spectrum<BINS>) -> (f64, f64) {
    let amplitudes: Vec<f64> = (0..BINS)
        .map(|k| (reference.mean_square(k).unwrap_or(0.0) as f64).sqrt())
        .collect();
    let a_max = amplitudes.iter().copied().fold(0.0, f64::max);
    let signal: f64 = amplitudes.iter().map(|a| a * a).sum();
    let lsb = a_max / 16384.0;
    let snr = 10.0 * (signal / (BINS as f64 * (4.0 * lsb).powi(2))).log10();
    (snr, 20.0 * (20.0f64 / 16384.0).log10())
}

/// Pushes `counts` through the float and the Q15 analyzer in every mode and reads every scale
/// and correction; asserts the Q15 bounds and equal bookkeeping. Returns the lowest SNR.
fn q15_against_float<const N: usize, const BINS: usize>(counts: &[i16], what: &str) -> f64 {
    let float_window: Window<N> = Window::new(Shape::Hann);
    let fixed_window: WindowQ15<N> = WindowQ15::new(Shape::Hann);
    let mut lowest = f64::INFINITY;
    for mode in modes() {
        let mut float = Analyzer::<N, BINS>::new(&float_window, config(mode)).unwrap();
        let mut fixed = AnalyzerQ15::<N, BINS>::new(&fixed_window, config(mode)).unwrap();
        assert_eq!(float.push_counts(counts), fixed.push(counts), "{what}");
        assert_eq!(float.status(), fixed.status(), "{what}");
        for scale in SCALES {
            for correction in CORRECTIONS {
                // reference: our float analyzer (microfft f32) on the same counts
                let reference = float.spectrum(scale, correction);
                let test = fixed.spectrum(scale, correction);
                assert_eq!(test.info().averages, reference.info().averages);
                let (snr_bound, worst_bound) = q15_bounds(&reference);
                let snr = snr_db(&test, &reference).unwrap();
                let worst = worst_line_error_db(&test, &reference).unwrap();
                assert!(
                    snr >= snr_bound && worst.error_db <= worst_bound,
                    "{what}, N = {N}, {mode:?}, {scale:?}/{correction:?}: SNR {snr:.1} dB \
                     (bound {snr_bound:.1}), worst line {:.1} dB at {} (bound {worst_bound:.1})",
                    worst.error_db,
                    worst.bin
                );
                lowest = lowest.min(snr);
            }
        }
    }
    println!("{what}, N = {N}: Q15 vs f32 SNR >= {lowest:.1} dB over all modes and scales");
    lowest
}

#[test]
fn q15_matches_float_for_every_scale_and_mode() {
    let phases = (0.655, 2.568);
    q15_against_float::<1024, 513>(&two_tones_counts(5 * 1024, 1024, -1.0, phases), "-1 dBFS");
    q15_against_float::<1024, 513>(&two_tones_counts(5 * 1024, 1024, -41.0, phases), "-41 dBFS");
    q15_against_float::<1024, 513>(&white_noise_counts(5 * 1024, 3000.0, 7), "noise");
    q15_against_float::<256, 129>(&two_tones_counts(5 * 256, 256, -1.0, phases), "-1 dBFS");
    q15_against_float::<4096, 2049>(&two_tones_counts(5 * 4096, 4096, -1.0, phases), "-1 dBFS");
}

/// The Q31 path against the float one: here the float analyzer is the less accurate of the
/// two. Its f32 transform reaches 137 to 140 dB SNR (cmsisdsp 1.10.3 `arm_rfft_fast_f32`,
/// measured on the same kind of signal; microfft is the same class of f32
/// algorithm) and its f32 accumulator rounds at 2^-24 (-144 dB); 20 dB of margin for the
/// difference between the two f32 FFTs gives 115 dB.
#[test]
fn q31_matches_float() {
    const N: usize = 1024;
    const BINS: usize = 513;
    let float_window: Window<N> = Window::new(Shape::Hann);
    let fixed_window: WindowQ31<N> = WindowQ31::new(Shape::Hann);
    // 24-bit counts: the same two tones at 2^23 full scale (exact in f32).
    let counts24: Vec<i32> = two_tones_counts(5 * N, N, -1.0, (0.3, 1.9))
        .iter()
        .zip(white_noise_counts(5 * N, 0.6, 3))
        .map(|(&c, d)| i32::from(c) * 256 + i32::from(d))
        .collect();
    let as_f32: Vec<f32> = counts24.iter().map(|&c| c as f32).collect();
    for mode in modes() {
        let config = config(mode).with_full_scale(8_388_607.0);
        let mut float = Analyzer::<N, BINS>::new(&float_window, config).unwrap();
        let mut fixed = AnalyzerQ31::<N, BINS>::new(&fixed_window, config).unwrap();
        assert_eq!(float.push(&as_f32), fixed.push(&counts24));
        assert_eq!(float.status(), fixed.status());
        for scale in SCALES {
            let reference = float.spectrum(scale, Correction::Energy);
            let test = fixed.spectrum(scale, Correction::Energy);
            let snr = snr_db(&test, &reference).unwrap();
            println!("Q31 vs f32, {mode:?}, {scale:?}: SNR {snr:.1} dB");
            assert!(snr >= 115.0, "{mode:?} {scale:?}: {snr:.1} dB");
        }
    }
    // i16 counts through the Q31 path equal pushing them as i32.
    let counts16 = two_tones_counts(3 * N, N, -1.0, (0.1, 0.2));
    let widened: Vec<i32> = counts16.iter().map(|&c| i32::from(c)).collect();
    let mut a = AnalyzerQ31::<N, BINS>::new(&fixed_window, config(modes()[0])).unwrap();
    let mut b = a.clone();
    a.push_counts(&counts16);
    b.push(&widened);
    assert_eq!(a.raw_power(), b.raw_power());
}

// The integer read-out against 10 log10 of the float read-out of the same analyzer: the
// log2 table is within 2e-4 bit (0.0006 dB) and f32 values within 1e-7 relative, so both
// agree to the rounding of the last digit, 1 unit (0.01 dB).
#[test]
fn level_db_x100_matches_the_spectrum() {
    const N: usize = 1024;
    let window: WindowQ15<N> = WindowQ15::new(Shape::Hann);
    for mode in modes() {
        let mut fixed = AnalyzerQ15::<N, 513>::new(&window, config(mode)).unwrap();
        fixed.push(&two_tones_counts(4 * N, N, -21.0, (1.0, 2.0)));
        let mut db = [0i32; 513];
        for scale in SCALES {
            for correction in CORRECTIONS {
                fixed.level_db_x100(&mut db, scale, correction);
                let spectrum = fixed.spectrum(scale, correction);
                for (k, (&level, &value)) in db.iter().zip(spectrum.values()).enumerate() {
                    if value == 0.0 {
                        assert_eq!(level, i32::MIN, "{mode:?} {scale:?} line {k}");
                        continue;
                    }
                    let factor = if scale.is_amplitude() { 2000.0 } else { 1000.0 };
                    let want = factor * (value as f64).log10();
                    assert!(
                        (level as f64 - want).abs() <= 1.0,
                        "{mode:?} {scale:?} line {k}: {level} vs {want:.2}"
                    );
                }
            }
        }
    }
}

/// Clipped codes flag and reject blocks as the float analyzer does with the same counts:
/// the counters must be equal (reference: the float analyzer's documented semantics, which
/// `tests/analyzer_props.rs` checks against a by-definition oracle).
#[test]
fn overload_counters_match_float() {
    const N: usize = 256;
    let float_window: Window<N> = Window::new(Shape::Hann);
    let fixed_window: WindowQ15<N> = WindowQ15::new(Shape::Hann);
    let mut counts = two_tones_counts(12 * N, N, -6.0, (0.0, 0.0));
    counts[300] = i16::MAX; // block 2 (hop 128: blocks 1 and 2 hold sample 300)
    counts[1500] = i16::MIN;
    counts[2000] = -32767;
    for policy in [OverloadPolicy::Reject, OverloadPolicy::Average] {
        for full_scale in [Some(32_767.0), Some(32_766.5), None] {
            let mut config = config(Averaging::PeakHold).with_overload_policy(policy);
            config.full_scale = full_scale;
            let mut float = Analyzer::<N, 129>::new(&float_window, config).unwrap();
            let mut fixed = AnalyzerQ15::<N, 129>::new(&fixed_window, config).unwrap();
            assert_eq!(float.push_counts(&counts), fixed.push(&counts));
            let (f, q) = (float.status(), fixed.status());
            assert_eq!(f, q, "{policy:?} {full_scale:?}");
            let overloaded = match full_scale {
                None => 0,
                Some(_) => 6, // samples 300, 1500, 2000 each sit in two overlapping blocks
            };
            assert_eq!(q.overloaded, overloaded, "{policy:?} {full_scale:?}");
            if policy == OverloadPolicy::Reject {
                assert_eq!(q.blocks_averaged, q.blocks_seen - overloaded);
            }
        }
    }
}

#[test]
fn probe_sees_every_stage_in_order() {
    let window: WindowQ15<64> = WindowQ15::new(Shape::Hann);
    let config = Config::new(64.0).with_full_scale(30_000.0);
    let mut analyzer = AnalyzerQ15::<64, 33>::new(&window, config).unwrap();
    let mut stages = Vec::new();
    analyzer.push_probed(&[100; 64], &mut |s| stages.push(s));
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
    analyzer.push_probed(&[30_000; 64], &mut |s| stages.push(s));
    assert_eq!(stages, [Stage::Condition, Stage::Done]);
}

// The same bad settings give the same typed errors as the float analyzer.
#[test]
fn every_bad_config_is_the_float_error() {
    let float_window: Window<64> = Window::new(Shape::Hann);
    let q15: WindowQ15<64> = WindowQ15::new(Shape::Hann);
    let q31: WindowQ31<64> = WindowQ31::new(Shape::Hann);
    let base = Config::new(64.0);
    let bad = [
        Config::new(0.0),
        Config::new(f32::NAN),
        base.with_overlap(64),
        base.with_overlap_fraction(1.0),
        base.with_overlap_fraction(f32::NAN),
        base.with_averaging(Averaging::Linear {
            count: 0,
            when_done: WhenDone::Hold,
        }),
        base.with_averaging(Averaging::Exponential {
            time_constant_blocks: 0.5,
        }),
        base.with_sensitivity(0.0),
        base.with_sensitivity(f32::INFINITY),
        base.with_full_scale(-1.0),
        base.with_full_scale(f32::NAN),
    ];
    for config in bad {
        let want = Analyzer::<64, 33>::new(&float_window, config).err();
        assert!(want.is_some(), "{config:?}");
        assert_eq!(AnalyzerQ15::<64, 33>::new(&q15, config).err(), want);
        assert_eq!(AnalyzerQ31::<64, 33>::new(&q31, config).err(), want);
    }
    let zero_sum: WindowQ15<64> = WindowQ15::new(Shape::CosineSum(&[0.0, 1.0]));
    assert_eq!(
        AnalyzerQ15::<64, 33>::new(&zero_sum, base).err(),
        Some(ConfigError::WindowParameter)
    );
}

#[test]
fn empty_analyzer_reads_zero() {
    let window: WindowQ15<64> = WindowQ15::new(Shape::Hann);
    let analyzer = AnalyzerQ15::<64, 33>::new(&window, Config::new(64.0)).unwrap();
    let s = analyzer.spectrum(Scale::Psd, Correction::Energy);
    assert!(s.values().iter().all(|&v| v == 0.0));
    assert_eq!(analyzer.overall_rms(true), 0.0);
    let mut db = [0; 33];
    analyzer.level_db_x100(&mut db, Scale::Peak, Correction::Amplitude);
    assert!(db.iter().all(|&d| d == i32::MIN));
}

// The documented RAM cost: within 10 % of the buffers' own size.
#[test]
fn ram_cost_is_the_buffers() {
    fn check<const N: usize, const BINS: usize>(word: usize) -> usize {
        let size = if word == 2 {
            core::mem::size_of::<AnalyzerQ15<'static, N, BINS>>()
        } else {
            core::mem::size_of::<AnalyzerQ31<'static, N, BINS>>()
        };
        let buffers = 2 * word * N + 8 * BINS;
        println!(
            "size_of Q{} <{N}, {BINS}> = {size} (buffers {buffers})",
            8 * word - 1
        );
        assert!(
            size >= buffers && size <= buffers + buffers / 10,
            "{size} vs {buffers}"
        );
        size
    }
    check::<256, 129>(2);
    check::<1024, 513>(2);
    check::<4096, 2049>(2);
    check::<256, 129>(4);
    check::<1024, 513>(4);
    check::<4096, 2049>(4);
}

mod chunking {
    use super::*;
    use proptest::prelude::*;
    use proptest::test_runner::{Config as ProptestConfig, RngSeed};

    const N: usize = 64;
    static Q15: WindowQ15<N> = WindowQ15::new(Shape::Hann);
    static Q31: WindowQ31<N> = WindowQ31::new(Shape::Hann);

    fn settings() -> ProptestConfig {
        ProptestConfig {
            cases: 16,
            rng_seed: RngSeed::Fixed(0x1ea4_1e55),
            failure_persistence: None,
            ..ProptestConfig::default()
        }
    }

    fn chunks<'s, T>(stream: &'s [T], sizes: &[usize]) -> Vec<&'s [T]> {
        let mut out = Vec::new();
        let mut rest = stream;
        let mut i = 0;
        while !rest.is_empty() {
            let (head, tail) = rest.split_at(sizes[i % sizes.len()].min(rest.len()));
            out.push(&head[..0]);
            out.push(head);
            rest = tail;
            i += 1;
        }
        out
    }

    /// Ordinary samples with some clipped codes among them.
    fn sample() -> impl Strategy<Value = i16> {
        prop_oneof![200 => -20_000i16..20_000, 1 => Just(i16::MIN), 1 => Just(i16::MAX), 5 => any::<i16>()]
    }

    proptest! {
        #![proptest_config(settings())]

        // Any chunking of the same counts gives bit-identical averages and counters.
        #[test]
        fn chunking_never_changes_results(
            stream in prop::collection::vec(sample(), 0..600),
            sizes in prop::collection::vec(0usize..150, 1..6),
        ) {
            for mode in modes() {
                let config = Config::new(64.0).with_overlap(40).with_averaging(mode).with_full_scale(32_767.0);
                let mut whole = AnalyzerQ15::<N, 33>::new(&Q15, config).unwrap();
                let mut cut = whole.clone();
                whole.push(&stream);
                for chunk in chunks(&stream, &sizes) {
                    cut.push(chunk);
                }
                prop_assert_eq!(whole.raw_power(), cut.raw_power());
                prop_assert_eq!(whole.status(), cut.status());

                let wide: Vec<i32> = stream.iter().map(|&c| i32::from(c) << 12).collect();
                let mut whole = AnalyzerQ31::<N, 33>::new(&Q31, config.with_full_scale(1e9)).unwrap();
                let mut cut = whole.clone();
                whole.push(&wide);
                for chunk in chunks(&wide, &sizes) {
                    cut.push(chunk);
                }
                prop_assert_eq!(whole.raw_power(), cut.raw_power());
                prop_assert_eq!(whole.status(), cut.status());
            }
        }

        // Any counts, clipped ones averaged too (the widest detrended swings reach the
        // window and the transform): no panic under overflow checks, finite read-outs.
        #[test]
        fn no_input_panics(
            words in prop::collection::vec(prop_oneof![
                4 => any::<i32>(),
                1 => Just(i32::MIN),
                1 => Just(i32::MAX),
                1 => Just(0),
            ], 0..400),
        ) {
            for mode in modes() {
                let config = Config::new(64.0)
                    .with_overlap(16)
                    .with_averaging(mode)
                    .with_full_scale(1.0)
                    .with_overload_policy(OverloadPolicy::Average);
                let narrow: Vec<i16> = words.iter().map(|&w| (w >> 16) as i16).collect();
                let mut q15 = AnalyzerQ15::<N, 33>::new(&Q15, config).unwrap();
                q15.push(&narrow);
                let mut q31 = AnalyzerQ31::<N, 33>::new(&Q31, config).unwrap();
                q31.push(&words);
                for scale in SCALES {
                    for s in [q15.spectrum(scale, Correction::Energy), q31.spectrum(scale, Correction::Energy)] {
                        prop_assert!(s.values().iter().all(|v| v.is_finite()));
                    }
                }
                prop_assert!(q15.overall_rms(true).is_finite() && q31.overall_rms(true).is_finite());
            }
        }
    }
}
