//! The whole per-block pipeline (condition, window, transform, average) of the f32, Q15 and
//! Q31 analyzers on the host, one block per iteration, N = 256, 1024, 4096.
//!
//! `cargo bench --bench fixed --features fixed -- --warm-up-time 0.5 --measurement-time 2`
//!
//! Each analyzer's output is checked once against the f32 one before it is timed. The
//! `bare_rfft` group times `rfft_q15` / `rfft_q31` alone on a copied block, for the ratio.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use leakless::compare::snr_db;
use leakless::fft::fixed::{rfft_q15, rfft_q31};
use leakless::{
    Analyzer, AnalyzerQ15, AnalyzerQ31, Averaging, Config, Correction, Scale, Shape, Window,
    WindowQ15, WindowQ31,
};

/// A running average: never done, so every pushed block goes through every stage.
fn config() -> Config {
    Config::new(25_600.0)
        .with_averaging(Averaging::Exponential {
            time_constant_blocks: 8.0,
        })
        .with_full_scale(32_767.0)
}

/// A tone plus a little broadband content, as 16-bit counts.
fn counts(len: usize) -> Vec<i16> {
    let mut state = 0x1234_5678u32;
    (0..len)
        .map(|n| {
            state ^= state << 13;
            state ^= state >> 17;
            state ^= state << 5;
            let tone = 20_000.0 * (2.0 * std::f64::consts::PI * 0.1037 * n as f64).sin();
            (tone + (state >> 22) as f64 - 512.0).round() as i16
        })
        .collect()
}

fn pipeline<const N: usize, const BINS: usize>(c: &mut Criterion) {
    let float_window: Window<N> = Window::new(Shape::Hann);
    let q15_window: WindowQ15<N> = WindowQ15::new(Shape::Hann);
    let q31_window: WindowQ31<N> = WindowQ31::new(Shape::Hann);
    let block = counts(N);
    let block32: Vec<i32> = block.iter().map(|&c| i32::from(c)).collect();
    let block_f32: Vec<f32> = block.iter().map(|&c| f32::from(c)).collect();
    let mut float = Analyzer::<N, BINS>::new(&float_window, config()).unwrap();
    let mut q15 = AnalyzerQ15::<N, BINS>::new(&q15_window, config()).unwrap();
    let mut q31 = AnalyzerQ31::<N, BINS>::new(&q31_window, config()).unwrap();

    // The check, once: the same block through each path agrees with f32.
    float.push(&block_f32);
    q15.push(&block);
    q31.push(&block32);
    let reference = float.spectrum(Scale::Power, Correction::Energy);
    let q15_snr = snr_db(&q15.spectrum(Scale::Power, Correction::Energy), &reference).unwrap();
    let q31_snr = snr_db(&q31.spectrum(Scale::Power, Correction::Energy), &reference).unwrap();
    assert!(
        q15_snr > 60.0 && q31_snr > 110.0,
        "N = {N}: {q15_snr} / {q31_snr} dB"
    );

    let mut group = c.benchmark_group("pipeline");
    group.bench_function(BenchmarkId::new("f32", N), |b| {
        b.iter(|| float.push(black_box(&block_f32)))
    });
    group.bench_function(BenchmarkId::new("q15", N), |b| {
        b.iter(|| q15.push(black_box(&block)))
    });
    group.bench_function(BenchmarkId::new("q31", N), |b| {
        b.iter(|| q31.push(black_box(&block32)))
    });
    group.finish();

    // The transforms alone on a copy of the windowed block, for the pipeline / bare ratio.
    let windowed: [i16; N] =
        core::array::from_fn(|n| ((block[n] as i32 * q15_window.table()[n] as i32) >> 15) as i16);
    let windowed32: [i32; N] = windowed.map(|v| i32::from(v) << 16);
    let mut bare = c.benchmark_group("bare_rfft");
    bare.bench_function(BenchmarkId::new("q15", N), |b| {
        b.iter(|| {
            let mut data = black_box(windowed);
            rfft_q15(&mut data)
        })
    });
    bare.bench_function(BenchmarkId::new("q31", N), |b| {
        b.iter(|| {
            let mut data = black_box(windowed32);
            rfft_q31(&mut data)
        })
    });
    bare.finish();
}

fn benches(c: &mut Criterion) {
    pipeline::<256, 129>(c);
    pipeline::<1024, 513>(c);
    pipeline::<4096, 2049>(c);
}

criterion_group!(fixed, benches);
criterion_main!(fixed);
