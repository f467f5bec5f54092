//! The fixed-point real FFTs against rustfft in f64 on the same (quantised) input.
#![cfg(feature = "fixed")]

mod common;

use common::{cmsis_fixed_cases, CmsisFixedCase, FixedKind};
use leakless::fft::fixed::{bin_q15, bin_q31, rfft_q15, rfft_q31};
use rustfft::{num_complex::Complex64, FftPlanner};
use std::f64::consts::PI;

/// Bins 0..=N/2 of the f64 DFT of `x`. reference: rustfft 6.4 in f64.
fn reference_spectrum(x: &[f64]) -> Vec<Complex64> {
    let mut buf: Vec<Complex64> = x.iter().map(|&v| Complex64::new(v, 0.0)).collect();
    FftPlanner::<f64>::new()
        .plan_fft_forward(x.len())
        .process(&mut buf);
    buf.truncate(x.len() / 2 + 1);
    buf
}

/// Q15 transform of `x`, unpacked and scaled back by the block exponent; also the exponent.
fn q15_spectrum<const N: usize>(x: &[i16; N]) -> (Vec<Complex64>, i32) {
    let mut data = *x;
    let e = rfft_q15(&mut data);
    let scale = 2f64.powi(e);
    let bins = (0..=N / 2)
        .map(|k| {
            let (re, im) = bin_q15(&data, k).unwrap();
            Complex64::new(re as f64 * scale, im as f64 * scale)
        })
        .collect();
    (bins, e)
}

fn q31_spectrum<const N: usize>(x: &[i32; N]) -> (Vec<Complex64>, i32) {
    let mut data = *x;
    let e = rfft_q31(&mut data);
    let scale = 2f64.powi(e);
    let bins = (0..=N / 2)
        .map(|k| {
            let (re, im) = bin_q31(&data, k).unwrap();
            Complex64::new(re as f64 * scale, im as f64 * scale)
        })
        .collect();
    (bins, e)
}

/// A small deterministic generator (64-bit LCG, Knuth's MMIX constants) for the phases.
struct Lcg(u64);
impl Lcg {
    fn next_unit(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// The two-tone test signal, as fractions of full scale: `level_db` dBFS at 0.1 N + 0.37
/// bins plus a tone 60 dB lower at 0.3 N + 0.21 bins, times a periodic Hann window (f64).
fn two_tones(n: usize, level_db: f64, phases: (f64, f64)) -> Vec<f64> {
    let a1 = 10f64.powf(level_db / 20.0);
    let a2 = a1 * 1e-3;
    let (f1, f2) = (0.1 * n as f64 + 0.37, 0.3 * n as f64 + 0.21);
    (0..n)
        .map(|i| {
            let t = i as f64 / n as f64;
            let hann = 0.5 - 0.5 * (2.0 * PI * t).cos();
            hann * (a1 * (2.0 * PI * f1 * t + phases.0).sin()
                + a2 * (2.0 * PI * f2 * t + phases.1).sin())
        })
        .collect()
}

fn quantise_q15<const N: usize>(x: &[f64]) -> [i16; N] {
    core::array::from_fn(|i| (x[i] * 32768.0).round().clamp(-32768.0, 32767.0) as i16)
}

fn quantise_q31<const N: usize>(x: &[f64]) -> [i32; N] {
    core::array::from_fn(|i| {
        (x[i] * 2_147_483_648.0)
            .round()
            .clamp(-2_147_483_648.0, 2_147_483_647.0) as i32
    })
}

/// Accumulated statistics over trials.
#[derive(Default, Debug)]
struct Stats {
    signal_power: f64,
    error_power: f64,
    worst_snr_db: f64,
    error_re_sum_lsb: f64,
    bins: usize,
    worst_small_tone_db: f64,
}

impl Stats {
    fn snr_db(&self) -> f64 {
        10.0 * (self.signal_power / self.error_power).log10()
    }
    fn bias_lsb(&self) -> f64 {
        self.error_re_sum_lsb / self.bins as f64
    }
    fn add(
        &mut self,
        ours: &[Complex64],
        reference: &[Complex64],
        exponent: i32,
        small_tone_bin: f64,
    ) {
        let s: f64 = reference.iter().map(|c| c.norm_sqr()).sum();
        let e: f64 = ours
            .iter()
            .zip(reference)
            .map(|(a, b)| (a - b).norm_sqr())
            .sum();
        let snr = 10.0 * (s / e).log10();
        if self.bins == 0 || snr < self.worst_snr_db {
            self.worst_snr_db = snr;
        }
        self.signal_power += s;
        self.error_power += e;
        let lsb = 2f64.powi(exponent);
        self.error_re_sum_lsb += ours
            .iter()
            .zip(reference)
            .map(|(a, b)| (a.re - b.re) / lsb)
            .sum::<f64>();
        self.bins += ours.len();
        // The small tone's level: power over its main lobe (nearest bin +-2, Hann).
        let centre = small_tone_bin.round() as usize;
        let lobe = |v: &[Complex64]| {
            v[centre - 2..=centre + 2]
                .iter()
                .map(|c| c.norm_sqr())
                .sum::<f64>()
        };
        let tone_db = 10.0 * (lobe(ours) / lobe(reference)).log10();
        if tone_db.abs() > self.worst_small_tone_db.abs() {
            self.worst_small_tone_db = tone_db;
        }
    }
}

const TRIALS: usize = 32;

fn q15_two_tone_stats<const N: usize>(level_db: f64) -> Stats {
    let mut rng = Lcg(0x5eed_0000 + N as u64);
    let mut stats = Stats::default();
    for _ in 0..TRIALS {
        let phases = (2.0 * PI * rng.next_unit(), 2.0 * PI * rng.next_unit());
        let x = quantise_q15::<N>(&two_tones(N, level_db, phases));
        let reference = reference_spectrum(&x.map(|v| v as f64));
        let (ours, e) = q15_spectrum(&x);
        stats.add(&ours, &reference, e, 0.3 * N as f64 + 0.21);
    }
    stats
}

fn q31_two_tone_stats<const N: usize>(level_db: f64) -> Stats {
    let mut rng = Lcg(0x5eed_0000 + N as u64);
    let mut stats = Stats::default();
    for _ in 0..TRIALS {
        let phases = (2.0 * PI * rng.next_unit(), 2.0 * PI * rng.next_unit());
        let x = quantise_q31::<N>(&two_tones(N, level_db, phases));
        let reference = reference_spectrum(&x.map(|v| v as f64));
        let (ours, e) = q31_spectrum(&x);
        stats.add(&ours, &reference, e, 0.3 * N as f64 + 0.21);
    }
    stats
}

// ---------------------------------------------------------------------------------------
// Two tones under Hann: SNR, bias and the small tone's level.
// ---------------------------------------------------------------------------------------

// CMSIS-DSP figures: cmsisdsp 1.10.3 `arm_rfft_q15` (scalar build), "hann" case, q15, SNR fft
// (against float64 np.fft.rfft of the same quantised input): 53.1 / 47.8 / 42.8 dB at
// N = 256 / 1024 / 4096. Our signal is built the same way (tones at 0.1 N + 0.37 and
// 0.3 N + 0.21 bins, -60 dB apart, periodic Hann in f64, 16-bit quantisation, 32 random phase
// pairs); the big tone is at -1 dBFS instead of -0.9 dBFS. Target: CMSIS + 6 dB.
// The bin-by-bin comparison with CMSIS's stored outputs on identical inputs is
// `q15_and_q31_beat_cmsis_bin_by_bin` below.
const CMSIS_Q15_HANN_SNR_DB: [(usize, f64); 3] = [(256, 53.1), (1024, 47.8), (4096, 42.8)];

#[test]
fn q15_two_tone_snr_beats_cmsis_by_6_db() {
    let measured = [
        q15_two_tone_stats::<256>(-1.0),
        q15_two_tone_stats::<1024>(-1.0),
        q15_two_tone_stats::<4096>(-1.0),
    ];
    for ((n, cmsis), stats) in CMSIS_Q15_HANN_SNR_DB.iter().zip(&measured) {
        println!(
            "N = {n}: Q15 SNR {:.1} dB (worst trial {:.1}), CMSIS {cmsis} dB",
            stats.snr_db(),
            stats.worst_snr_db
        );
        assert!(stats.snr_db() >= cmsis + 6.0, "N = {n}: {stats:?}");
    }
    // The project's own target at N = 1024.
    assert!(measured[1].snr_db() >= 54.0);
}

/// A quiet block (the same signal 40 dB lower) is normalised up first and keeps its SNR.
/// Target 50 dB at N = 1024; the same floor is asserted at every N (measured 57 dB or more).
#[test]
fn q15_quiet_block_keeps_snr() {
    fn check<const N: usize>() {
        let stats = q15_two_tone_stats::<N>(-41.0);
        println!("N = {N} at -41 dBFS: Q15 SNR {:.1} dB", stats.snr_db());
        assert!(stats.snr_db() >= 50.0, "N = {N}: {stats:?}");
    }
    check::<64>();
    check::<256>();
    check::<1024>();
    check::<4096>();
}

/// The -60 dB tone's level (power over its main lobe, nearest bin +-2) is within 0.5 dB of
/// the f64 DFT's in every trial, and the output has no bias. reference: rustfft 6.4 in f64.
///
/// The small tone sits only 10 to 30 output LSB high, so per trial its level scatters by about
/// 0.1 dB rms with the output rounding alone; 0.5 dB leaves room for the worst of 32 trials.
/// The bias is the mean of Re(error) over bins 0..=N/2 and 32 trials, in output LSB; its
/// standard error is below 0.005 LSB, so 0.1 LSB can only be exceeded by a real bias.
#[test]
fn q15_small_tone_level_and_bias() {
    fn check<const N: usize>() {
        let stats = q15_two_tone_stats::<N>(-1.0);
        println!(
            "N = {N}: small tone worst {:+.3} dB, bias {:+.4} LSB",
            stats.worst_small_tone_db,
            stats.bias_lsb()
        );
        assert!(stats.worst_small_tone_db.abs() <= 0.5, "N = {N}: {stats:?}");
        assert!(stats.bias_lsb().abs() <= 0.1, "N = {N}: {stats:?}");
        // A tighter guard than the target: measured |bias| <= 0.007 LSB at every N, while
        // rounding the exact sums half up instead of half to even measured +0.08 LSB at
        // N = 64; 0.03 is six standard errors above what we measure.
        assert!(stats.bias_lsb().abs() <= 0.03, "N = {N}: {stats:?}");
    }
    check::<64>();
    check::<128>();
    check::<256>();
    check::<512>();
    check::<1024>();
    check::<2048>();
    check::<4096>();
}

#[test]
fn q31_two_tone_snr() {
    fn check<const N: usize>(min_db: f64) {
        let stats = q31_two_tone_stats::<N>(-1.0);
        println!(
            "N = {N}: Q31 SNR {:.1} dB, bias {:+.4} LSB, small tone {:+.5} dB",
            stats.snr_db(),
            stats.bias_lsb(),
            stats.worst_small_tone_db
        );
        assert!(stats.snr_db() >= min_db, "N = {N}: {stats:?}");
    }
    // Target 130 dB at N = 1024; CMSIS-DSP's Q31 RFFT measured 139.5 dB on its hann case
    // (cmsisdsp 1.10.3 `arm_rfft_q31`; 139.49 dB in tests/reference/cmsis_fixed_summary.csv).
    // The same 130 dB floor is asserted at the ends of the range.
    check::<64>(130.0);
    check::<256>(130.0);
    check::<1024>(130.0);
    check::<4096>(130.0);
}

// ---------------------------------------------------------------------------------------
// Bin by bin against CMSIS-DSP's own outputs on the identical quantised inputs.
// ---------------------------------------------------------------------------------------

/// `10 log10(sum |reference|^2 / sum |test - reference|^2)` over bins 0..=N/2.
fn snr_against(test: &[Complex64], reference: &[Complex64]) -> f64 {
    let s: f64 = reference.iter().map(|c| c.norm_sqr()).sum();
    let e: f64 = test
        .iter()
        .zip(reference)
        .map(|(a, b)| (a - b).norm_sqr())
        .sum();
    10.0 * (s / e).log10()
}

/// Our transform of a CMSIS case's input, CMSIS's stored output and the f64 reference, all
/// as bins 0..=N/2 in the units of the input integers (no 1/N).
fn cmsis_case_spectra<const N: usize>(case: &CmsisFixedCase) -> [Vec<Complex64>; 3] {
    let x: Vec<f64> = case.input.iter().map(|&v| v as f64).collect();
    // reference: rustfft 6.4 in f64 on the same integers
    let reference = reference_spectrum(&x);
    let ours = match case.kind {
        FixedKind::Q15 => q15_spectrum::<N>(&core::array::from_fn(|i| case.input[i] as i16)).0,
        FixedKind::Q31 => q31_spectrum::<N>(&core::array::from_fn(|i| case.input[i])).0,
    };
    // CMSIS's output read as Q1.15 (Q1.31) is X / N of the input read the same way
    // (CMSIS-DSP `arm_rfft_q15.c` / `arm_rfft_q31.c` doc comments; measured with cmsisdsp
    // 1.10.3), so times N it is X of the input integers.
    let cmsis = case
        .output_bins()
        .iter()
        .map(|&(re, im)| Complex64::new(re, im) * (N as f64 * case.kind.full_scale()))
        .collect();
    [ours, cmsis, reference]
}

/// reference: CMSIS-DSP 1.10.3 (`arm_rfft_q15` / `arm_rfft_q31`), outputs stored in
/// `tests/reference/cmsis_fixed.csv` by `generate.py`, and rustfft 6.4 in f64 as the truth
/// both are measured against. Targets: Q15 at -1 dBFS beats CMSIS's SNR by 6 dB at every N;
/// Q15 at -41 dBFS (where CMSIS's 1/N scaling leaves it 13.7 / 8.8 / 3.3 dB) reaches 50 dB at
/// N = 1024; Q31 beats CMSIS's Q31 by 6 dB at both levels (measured 20.9 dB or more).
#[test]
fn q15_and_q31_beat_cmsis_bin_by_bin() {
    let cases = cmsis_fixed_cases();
    assert_eq!(cases.len(), 12, "3 sizes x 2 levels x 2 types");
    for case in &cases {
        let [ours, cmsis, reference] = match case.n {
            256 => cmsis_case_spectra::<256>(case),
            1024 => cmsis_case_spectra::<1024>(case),
            4096 => cmsis_case_spectra::<4096>(case),
            n => panic!("case {}: unexpected N = {n}", case.id),
        };
        let (snr_ours, snr_cmsis) = (
            snr_against(&ours, &reference),
            snr_against(&cmsis, &reference),
        );
        // Our reading of the stored outputs reproduces the generator's own SNR (numpy's f64
        // rfft and rustfft's agree to about 1e-13, far inside 0.01 dB).
        assert!(
            (snr_cmsis - case.snr_db).abs() < 0.01,
            "case {}: CMSIS SNR recomputed {snr_cmsis:.3} dB, stored {:.3} dB",
            case.id,
            case.snr_db
        );
        let closer = ours
            .iter()
            .zip(&cmsis)
            .zip(&reference)
            .filter(|((o, c), r)| (*o - *r).norm() < (*c - *r).norm())
            .count();
        println!(
            "{:?} N = {:4} at {:3} dBFS: ours {snr_ours:6.1} dB, CMSIS {snr_cmsis:6.1} dB; ours closer in {closer} of {} bins",
            case.kind,
            case.n,
            case.level_dbfs,
            ours.len()
        );
        match (case.kind, case.level_dbfs == -1.0) {
            (FixedKind::Q15, true) => assert!(snr_ours >= snr_cmsis + 6.0, "case {}", case.id),
            (FixedKind::Q15, false) if case.n == 1024 => {
                assert!(snr_ours >= 50.0, "case {}: {snr_ours:.1} dB", case.id)
            }
            (FixedKind::Q15, false) => {}
            (FixedKind::Q31, _) => assert!(snr_ours >= snr_cmsis + 6.0, "case {}", case.id),
        }
    }
}

// ---------------------------------------------------------------------------------------
// Any input: a per-bin error bound, and no panic (these tests run with overflow checks).
// ---------------------------------------------------------------------------------------

/// The error bound in output LSB (`2^e`) for noise-like blocks, from the rounding model.
///
/// Each rounding stage adds at most 1/2 LSB per component at its own scale: rms `1/sqrt(6)`
/// per complex value. Block floating point shifts a stage only as far as its worst-case
/// growth `g` needs (4 for the fused first stage, 5.24 for radix-4, 2.42 for radix-2), so a
/// stage's output can sit up to `g` below full scale, and the final output (whose shift is
/// chosen from its exact peak) up to 2 below; for data whose crest factor does not change
/// much from stage to stage (noise) a stage's error therefore reaches the output at most
/// `2 g` times its own size: `rms <= 2 sqrt(sum g^2 / 6 + 1/6)`. The largest of the N/2 + 1
/// bins of a roughly Gaussian error is about `sqrt(2 ln(N/2))` rms (under 4 up to N = 4096);
/// we allow 5 rms. Measured on 192 blocks of uniform noise at three levels per N: rms 2.6 to
/// 3.9 LSB, max 5.3 to 11 LSB, against bounds of 5.8 to 9.4 (rms) and 29 to 47 (max).
fn error_bound_lsb(n: usize) -> (f64, f64) {
    let complex_levels = (n / 2).trailing_zeros() as usize;
    let radix4_stages = (complex_levels - 2) / 2;
    let radix2_stages = (complex_levels - 2) % 2;
    let sum_g2 = 4.0f64.powi(2)
        + radix4_stages as f64 * 5.2429f64.powi(2)
        + radix2_stages as f64 * 2.41426f64.powi(2);
    let rms = 2.0 * (sum_g2 / 6.0 + 1.0 / 6.0).sqrt();
    (rms, 5.0 * rms)
}

/// Checks one transform's output against the reference within [`error_bound_lsb`].
fn assert_within_bound(ours: &[Complex64], reference: &[Complex64], exponent: i32, what: &str) {
    let n = 2 * (ours.len() - 1);
    let (rms_bound, max_bound) = error_bound_lsb(n);
    let lsb = 2f64.powi(exponent);
    let errors: Vec<f64> = ours
        .iter()
        .zip(reference)
        .map(|(a, b)| (a - b).norm() / lsb)
        .collect();
    let rms = (errors.iter().map(|e| e * e).sum::<f64>() / errors.len() as f64).sqrt();
    let max = errors.iter().copied().fold(0.0, f64::max);
    assert!(
        rms <= rms_bound && max <= max_bound,
        "{what}, N = {n}: rms {rms:.2} (bound {rms_bound:.2}), max {max:.2} (bound {max_bound:.2}) LSB"
    );
}

fn check_q15<const N: usize>(x: &[i16; N], what: &str) -> (Vec<Complex64>, i32) {
    // reference: rustfft 6.4 in f64
    let reference = reference_spectrum(&x.map(|v| v as f64));
    let (ours, e) = q15_spectrum(x);
    assert_within_bound(&ours, &reference, e, what);
    (ours, e)
}

fn check_q31<const N: usize>(x: &[i32; N], what: &str) -> (Vec<Complex64>, i32) {
    // reference: rustfft 6.4 in f64
    let reference = reference_spectrum(&x.map(|v| v as f64));
    let (ours, e) = q31_spectrum(x);
    assert_within_bound(&ours, &reference, e, what);
    (ours, e)
}

/// Inputs at the edges of the range. Each must transform without overflow (the test profile
/// has overflow checks and the kernel's debug assertions on) and within the error bound.
fn extreme_inputs<const N: usize>() -> Vec<(String, [i32; N])> {
    let mut cases = vec![
        ("i16::MIN everywhere".to_string(), [-32768; N]),
        ("DC at +full scale".to_string(), [32767; N]),
        (
            "Nyquist, alternating +-full scale".to_string(),
            core::array::from_fn(|n| if n % 2 == 0 { 32767 } else { -32768 }),
        ),
        (
            "impulse at 0, -full scale".to_string(),
            core::array::from_fn(|n| if n == 0 { -32768 } else { 0 }),
        ),
        (
            "impulse at N/2 + 1, +full scale".to_string(),
            core::array::from_fn(|n| if n == N / 2 + 1 { 32767 } else { 0 }),
        ),
        (
            "single LSB".to_string(),
            core::array::from_fn(|n| if n == 3 { 1 } else { 0 }),
        ),
    ];
    for period in [2, 4, 6, 16, N / 4, N] {
        cases.push((
            format!("square wave, period {period}"),
            core::array::from_fn(|n| {
                if n % period < period / 2 {
                    32767
                } else {
                    -32768
                }
            }),
        ));
    }
    cases
}

#[test]
fn extreme_inputs_stay_within_bound() {
    fn run<const N: usize>() {
        for (what, x) in extreme_inputs::<N>() {
            let x15 = x.map(|v| v as i16);
            let (ours, e) = check_q15(&x15, &format!("Q15 {what}"));
            // The exponent means what it says: DC of a constant block is N times the value,
            // to within the one rounding it takes (4 * 32767 / 8 = 16383.5 in the first stage:
            // half an output LSB).
            if what.starts_with("DC") {
                let lsb = 2f64.powi(e);
                assert!(
                    (ours[0].re - 32767.0 * N as f64).abs() <= 0.5 * lsb,
                    "Q15 DC, e = {e}"
                );
            }
            // In Q31 the same shapes at full 32-bit scale.
            let x31 = x.map(|v| if v == -32768 { i32::MIN } else { v * 65537 });
            check_q31(&x31, &format!("Q31 {what}"));
        }
    }
    run::<64>();
    run::<128>();
    run::<256>();
    run::<512>();
    run::<1024>();
    run::<2048>();
    run::<4096>();
}

#[test]
fn zeros_give_zeros_and_exponent_zero() {
    let mut q15 = [0i16; 256];
    assert_eq!(rfft_q15(&mut q15), 0);
    assert_eq!(q15, [0; 256]);
    let mut q31 = [0i32; 4096];
    assert_eq!(rfft_q31(&mut q31), 0);
    assert!(q31.iter().all(|&v| v == 0));
}

// ---------------------------------------------------------------------------------------
// Property tests: random blocks at every N, at random levels, within the bound above.
// ---------------------------------------------------------------------------------------

mod random_blocks {
    use super::*;
    use proptest::prelude::*;
    use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};

    /// A fixed seed and a small fixed number of cases so that CI time stays small and a
    /// failure reproduces.
    fn runner() -> TestRunner {
        let config = Config {
            cases: 24,
            failure_persistence: None,
            ..Config::default()
        };
        TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &[42; 32]))
    }

    /// `N` random words, scaled down by a random number of bits (quiet blocks too).
    fn block<const N: usize>() -> impl Strategy<Value = ([i32; N], u32)> {
        (proptest::collection::vec(any::<i32>(), N), 0u32..31)
            .prop_map(|(v, quiet_bits)| (core::array::from_fn(|i| v[i]), quiet_bits))
    }

    fn run<const N: usize>() {
        runner()
            .run(&block::<N>(), |(words, quiet_bits)| {
                let x31 = words.map(|w| w >> quiet_bits);
                check_q31(&x31, &format!("Q31 random >> {quiet_bits}"));
                let x15 = words.map(|w| ((w >> 16) >> quiet_bits.min(15)) as i16);
                check_q15(&x15, &format!("Q15 random >> {}", quiet_bits.min(15)));
                Ok(())
            })
            .unwrap();
    }

    #[test]
    fn every_size_matches_rustfft() {
        run::<64>();
        run::<128>();
        run::<256>();
        run::<512>();
        run::<1024>();
        run::<2048>();
        run::<4096>();
    }
}
