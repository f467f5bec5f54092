//! The bare transforms, timed on a windowed block of the scenario, and the budget runs at
//! other block lengths (no checks there: the self-check is at N = 1024).
//!
//! Each timed region is logged as `insns[i] name: count`, which `count.sh` pairs with the
//! plugin's exact count.

use core::hint::black_box;

use leakless::demo::PumpScenario;
use leakless::fft::fixed::{rfft_q15, rfft_q31};
use leakless::fft::float::rfft;
use leakless::{Analyzer, AnalyzerQ15, AnalyzerQ31, Window, WindowQ15, WindowQ31};

use crate::checks::Checks;
use crate::count;
use crate::pump;
use crate::selfcheck::{check_resolved_1x, config, empty_spectrum, log_ram, Expected};

/// A Hann-windowed block of the scenario's first `N` counts (the transforms' cost depends on
/// the data only on the soft-float core; this keeps it the same for every path).
fn scenario_block<const N: usize>(out: &mut [i16; N]) {
    let mut pump = PumpScenario::new();
    pump.fill_counts(out);
}

/// Times the bare transforms of `N` points: f32 (`with_float`), Q15, Q31 (`with_q31`), on
/// the scenario's first block under the Q15 Hann window. Each in its own stack frame, so a
/// 16 KiB core only ever holds one block at a time.
pub fn bare<const N: usize>(
    labels: [&'static str; 3],
    hann: &WindowQ15<N>,
    with_float: bool,
    with_q31: bool,
) {
    if with_float {
        bare_f32(labels[0], hann);
    }
    bare_q15(labels[1], hann);
    if with_q31 {
        bare_q31(labels[2], hann);
    }
}

/// The scenario's first block, windowed, scaled up 6 bits (it peaks near 600 counts).
fn windowed_q15<const N: usize>(hann: &WindowQ15<N>, out: &mut [i16; N]) {
    scenario_block(out);
    for (q, &w) in out.iter_mut().zip(hann.table()) {
        *q = ((i32::from(*q) * i32::from(w)) >> 9) as i16;
    }
}

#[inline(never)]
fn bare_f32<const N: usize>(label: &'static str, hann: &WindowQ15<N>) {
    let mut q15 = [0i16; N];
    windowed_q15(hann, &mut q15);
    let mut block = [0.0f32; N];
    for (x, &q) in block.iter_mut().zip(q15.iter()) {
        *x = f32::from(q);
    }
    count::stage(label, || {
        black_box(rfft(black_box(&mut block)).bins());
    });
}

#[inline(never)]
fn bare_q15<const N: usize>(label: &'static str, hann: &WindowQ15<N>) {
    let mut q15 = [0i16; N];
    windowed_q15(hann, &mut q15);
    count::stage(label, || {
        black_box(rfft_q15(black_box(&mut q15)));
    });
}

#[inline(never)]
fn bare_q31<const N: usize>(label: &'static str, hann: &WindowQ15<N>) {
    let mut q15 = [0i16; N];
    windowed_q15(hann, &mut q15);
    let mut q31 = [0i32; N];
    for (d, &s) in q31.iter_mut().zip(q15.iter()) {
        *d = i32::from(s) << 16;
    }
    count::stage(label, || {
        black_box(rfft_q31(black_box(&mut q31)));
    });
}

/// The budget run of the f32 analyzer at `N`; with `checks`, the resolved-1x check.
#[inline(never)]
pub fn budget_f32<const N: usize, const BINS: usize>(
    (label, read_label): (&'static str, &'static str),
    window: &Window<N>,
    checks: Option<&mut Checks>,
) {
    let pump = PumpScenario::new();
    let mut made = Analyzer::<N, BINS>::new(window, config(&pump));
    if let Ok(a) = &mut made {
        log_ram::<Analyzer<N, BINS>>(label, 8 * N + 4 * BINS);
        let mut out = empty_spectrum::<BINS>(N, window.factors());
        pump::measure::<N, BINS, _>((label, read_label), a, &mut out);
        pump::tones(label, &out);
        if let Some(checks) = checks {
            check_resolved_1x(checks, label, &out, &Expected::of(&pump));
        }
    }
}

/// The budget run of the Q15 analyzer at `N`; with `checks`, the resolved-1x check.
#[inline(never)]
pub fn budget_q15<const N: usize, const BINS: usize>(
    (label, read_label): (&'static str, &'static str),
    window: &WindowQ15<N>,
    checks: Option<&mut Checks>,
) {
    let pump = PumpScenario::new();
    let mut made = AnalyzerQ15::<N, BINS>::new(window, config(&pump));
    if let Ok(q) = &mut made {
        log_ram::<AnalyzerQ15<N, BINS>>(label, 4 * N + 8 * BINS);
        let mut out = empty_spectrum::<BINS>(N, window.factors());
        pump::measure::<N, BINS, _>((label, read_label), q, &mut out);
        pump::tones(label, &out);
        if let Some(checks) = checks {
            check_resolved_1x(checks, label, &out, &Expected::of(&pump));
        }
    }
}

/// The budget run of the Q31 analyzer at `N`; with `checks`, the resolved-1x check.
#[inline(never)]
pub fn budget_q31<const N: usize, const BINS: usize>(
    (label, read_label): (&'static str, &'static str),
    window: &WindowQ31<N>,
    checks: Option<&mut Checks>,
) {
    let pump = PumpScenario::new();
    let mut made = AnalyzerQ31::<N, BINS>::new(window, config(&pump));
    if let Ok(q) = &mut made {
        log_ram::<AnalyzerQ31<N, BINS>>(label, 8 * N + 8 * BINS);
        let mut out = empty_spectrum::<BINS>(N, window.factors());
        pump::measure::<N, BINS, _>((label, read_label), q, &mut out);
        pump::tones(label, &out);
        if let Some(checks) = checks {
            check_resolved_1x(checks, label, &out, &Expected::of(&pump));
        }
    }
}
