//! The full per-block float pipeline against the bare transform it wraps.
//!
//! ```text
//! cargo bench --bench pipeline            # or add `-- --quick` for a faster, rougher run
//! ```
//!
//! * `pipeline/N`: one block through an [`Analyzer`] with no overlap: `N` samples pushed
//!   (framing copy, non-finite/overload check and mean, detrend and window, FFT, `|X|^2`
//!   into a linear average).
//! * `bare_rfft/N`: microfft's real FFT of the same size on a copy of the same block (the
//!   transform works in place, so each run needs fresh input; the copy is part of the time).
//!
//! Each output is checked once before timing: a unit cosine on line 8 reads `N/2` in the
//! bare transform and an amplitude of 1 through the analyzer.
//!
//! On a shared machine criterion's estimates swing with the other processes' load, by more
//! than the difference measured here. So after criterion's report the bench also prints the
//! ratio pipeline / bare from the *fastest* of 300 short rounds of each, the two alternating round
//! by round: a round that another process interrupted is slower, never faster.

use std::f32::consts::PI;
use std::hint::black_box;
use std::time::{Duration, Instant};

use criterion::{criterion_group, BenchmarkId, Criterion};
use leakless::{Analyzer, Averaging, Config, Correction, Scale, Shape, WhenDone, Window};

static HANN_256: Window<256> = Window::new(Shape::Hann);
static HANN_1024: Window<1024> = Window::new(Shape::Hann);
static HANN_4096: Window<4096> = Window::new(Shape::Hann);

/// A unit cosine on line 8 of an `N`-sample block.
fn block<const N: usize>() -> [f32; N] {
    core::array::from_fn(|n| (2.0 * PI * 8.0 * n as f32 / N as f32).cos())
}

fn pipeline_one<const N: usize, const BINS: usize>(c: &mut Criterion, window: &'static Window<N>) {
    let config = Config::new(N as f32).with_averaging(Averaging::Linear {
        count: 8,
        when_done: WhenDone::Restart,
    });
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(window, config).unwrap();
    let input = block::<N>();
    let report = analyzer.push(&input);
    assert_eq!((report.blocks, report.averaged), (1, 1));
    let peak = analyzer
        .spectrum(Scale::Peak, Correction::Amplitude)
        .values()[8];
    assert!(
        (peak - 1.0).abs() < 1e-4,
        "pipeline N = {N}: line 8 reads {peak}"
    );

    let mut group = c.benchmark_group("pipeline");
    group.bench_with_input(BenchmarkId::from_parameter(N), &input, |b, input| {
        b.iter(|| black_box(analyzer.push(black_box(input))))
    });
    group.finish();
}

macro_rules! bare_one {
    ($c:expr, $n:literal, $f:path) => {{
        let input = block::<$n>();
        let mut check = input;
        let x8 = $f(&mut check)[8];
        assert!(
            (x8.re - $n as f32 / 2.0).abs() < 1e-2 * $n as f32 / 2.0,
            "bare N = {}",
            $n
        );
        let mut group = $c.benchmark_group("bare_rfft");
        group.bench_with_input(BenchmarkId::from_parameter($n), &input, |b, input| {
            b.iter(|| {
                let mut buf = *black_box(input);
                black_box($f(&mut buf)[1]);
            })
        });
        group.finish();
    }};
}

fn benches(c: &mut Criterion) {
    // Each size's pair runs back to back, so that a shared machine's load changes as little
    // as possible between the two figures that are compared.
    pipeline_one::<256, 129>(c, &HANN_256);
    bare_one!(c, 256, microfft::real::rfft_256);
    pipeline_one::<1024, 513>(c, &HANN_1024);
    bare_one!(c, 1024, microfft::real::rfft_1024);
    pipeline_one::<4096, 2049>(c, &HANN_4096);
    bare_one!(c, 4096, microfft::real::rfft_4096);
}

/// Nanoseconds per call of `f`, over `reps` calls.
fn per_call(reps: u32, mut f: impl FnMut()) -> f64 {
    let start = Instant::now();
    for _ in 0..reps {
        f();
    }
    start.elapsed().as_nanos() as f64 / reps as f64
}

macro_rules! fastest_rounds {
    ($n:literal, $bins:literal, $window:expr, $f:path) => {{
        let config = Config::new($n as f32).with_averaging(Averaging::Linear {
            count: 8,
            when_done: WhenDone::Restart,
        });
        let mut analyzer: Analyzer<$n, $bins> = Analyzer::new($window, config).unwrap();
        let input = block::<$n>();
        // Rounds of about a millisecond, shorter than a scheduler time slice, so that some
        // of them run uninterrupted.
        let reps = (1 << 18) / $n;
        let (mut pipeline, mut bare) = (f64::MAX, f64::MAX);
        for _ in 0..ROUNDS {
            pipeline = pipeline.min(per_call(reps, || {
                black_box(analyzer.push(black_box(&input)));
            }));
            bare = bare.min(per_call(reps, || {
                let mut buf = *black_box(&input);
                black_box($f(&mut buf)[1]);
            }));
        }
        println!(
            "N = {:>4}: pipeline {pipeline:>7.0} ns, bare rfft {bare:>7.0} ns, ratio {:.3} \
             (fastest of {ROUNDS} alternating rounds)",
            $n,
            pipeline / bare
        );
    }};
}

/// Rounds per figure in [`fastest_ratios`].
const ROUNDS: usize = 300;

fn fastest_ratios() {
    fastest_rounds!(256, 129, &HANN_256, microfft::real::rfft_256);
    fastest_rounds!(1024, 513, &HANN_1024, microfft::real::rfft_1024);
    fastest_rounds!(4096, 2049, &HANN_4096, microfft::real::rfft_4096);
}

criterion_group! {
    name = pipeline;
    // Short runs: the machine is shared. The figures are stable to a few per cent.
    config = Criterion::default()
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(3))
        .sample_size(40);
    targets = benches
}
fn main() {
    pipeline();
    Criterion::default().configure_from_args().final_summary();
    // Not when cargo only lists or smoke-tests the benches.
    let args: Vec<String> = std::env::args().collect();
    if !args.iter().any(|a| a == "--list" || a == "--test") {
        fastest_ratios();
    }
}
