//! The firmware self-check: for now a test tone through the Hann window and microfft.
//!
//! A sine of known amplitude is generated at an exact bin and at a bin and a half, windowed
//! with the compile-time Hann table, transformed, and its peak read back with the amplitude
//! correction `2 |X[k]| / sum(w)`. This is the place where the full pump-scenario check
//! through the library's f32/Q15/Q31 analyzers will go: it takes the same `&mut Checks`
//! and the same block buffer.

use leakless::math;
use leakless::window::{Shape, Window};
use microfft::Complex32;

use crate::checks::Checks;

/// Block length of the self-check and of the timed stages.
pub const N: usize = 1024;
/// Lines of the one-sided spectrum that microfft returns (bin 0 packs DC and Nyquist).
pub const BINS: usize = N / 2;

/// The Hann window, evaluated by the compiler; a `static` so the 4 KiB table stays in flash
/// and is never copied onto the stack.
pub static HANN: Window<N> = Window::new(Shape::Hann);

/// Amplitude of the test tones (full scale 1.0).
pub const AMPLITUDE: f32 = 0.75;

/// Fills `block` with `amplitude * sin(2 pi f n / N)` at `f = half_bins / 2` bins. The phase
/// is reduced exactly in integers before the sine, so every sample is within an f64
/// rounding of the true value before the final rounding to f32.
pub fn tone(block: &mut [f32; N], amplitude: f32, half_bins: u64) {
    let period = 2 * N as u64;
    for (n, x) in block.iter_mut().enumerate() {
        let turns = (half_bins * n as u64) % period;
        *x = (f64::from(amplitude) * math::sin_turns(turns, period)) as f32;
    }
}

/// Multiplies `block` by the window table, sample by sample.
pub fn apply_window(block: &mut [f32; N], window: &Window<N>) {
    for (x, w) in block.iter_mut().zip(window.table()) {
        *x *= *w;
    }
}

/// Squared magnitude of a line.
fn power(c: &Complex32) -> f32 {
    c.re * c.re + c.im * c.im
}

/// The line with the most power, skipping bin 0 (DC and Nyquist packed together).
pub fn peak(spectrum: &[Complex32; BINS]) -> usize {
    let mut best = 1;
    for k in 2..BINS {
        if power(&spectrum[k]) > power(&spectrum[best]) {
            best = k;
        }
    }
    best
}

/// Amplitude of line `k`, amplitude-corrected for `window`: `2 |X[k]| / sum(w)`.
pub fn amplitude(spectrum: &[Complex32; BINS], k: usize, window: &Window<N>) -> f32 {
    let sum = window.factors().sum as f32;
    2.0 * libm::sqrtf(power(&spectrum[k])) / sum
}

/// Windows `block` in place and returns its spectrum (microfft works in place too).
pub fn windowed_spectrum<'a>(
    block: &'a mut [f32; N],
    window: &Window<N>,
) -> &'a mut [Complex32; BINS] {
    apply_window(block, window);
    microfft::real::rfft_1024(block)
}

/// Runs the tone checks on `block` (its contents are overwritten).
pub fn run(checks: &mut Checks, block: &mut [f32; N]) {
    on_bin(checks, block);
    half_bin(checks, block);
}

/// A tone exactly on line 64.
fn on_bin(checks: &mut Checks, block: &mut [f32; N]) {
    const K: usize = 64;
    tone(block, AMPLITUDE, 2 * K as u64);
    let spectrum = windowed_spectrum(block, &HANN);
    let k = peak(spectrum);
    checks.check("on-bin tone: peak at line 64", k == K);

    // f32 rounding: the sine and the table are within 1 ulp (6e-8 relative), and a radix-2
    // FFT of 1024 points adds at most about log2(1024) ulps = 1.2e-6 relative. 1e-4 is ~80x
    // that, and still 1000x finer than any scaling mistake (a lost 2, sum vs N, the energy
    // correction, which reads Hann 1.76 dB = 18 % low).
    let level = amplitude(spectrum, K, &HANN);
    checks.close("on-bin tone: amplitude", level, AMPLITUDE, 1e-4 * AMPLITUDE);

    // The periodic Hann's DFT is N * [-1/4, 1/2, -1/4]: a tone on a line puts exactly half
    // its peak magnitude on each neighbour. Without the window (or with a symmetric table)
    // the ratio is 0 or visibly off; the tolerance is the same f32 budget as above.
    let centre = libm::sqrtf(power(&spectrum[K]));
    let below = libm::sqrtf(power(&spectrum[K - 1])) / centre;
    let above = libm::sqrtf(power(&spectrum[K + 1])) / centre;
    checks.close("on-bin tone: line 63 / line 64", below, 0.5, 1e-4);
    checks.close("on-bin tone: line 65 / line 64", above, 0.5, 1e-4);

    // Beyond the neighbours the periodic Hann is exactly zero on an exact line, so what is
    // left is f32 rounding noise, which sits near -130 dB under the peak. -100 dB leaves 30
    // dB of margin and still fails for a tone that is off its line (half a line off, Hann
    // leaks -15 dB into the line 1.5 lines away; 0.01 line off, still -55 dB).
    let mut worst = 0.0f32;
    for (j, c) in spectrum.iter().enumerate().skip(1) {
        if j.abs_diff(K) > 1 {
            worst = worst.max(power(c));
        }
    }
    let leakage_db = 10.0 * libm::log10f(worst / power(&spectrum[K]));
    defmt::info!(
        "on-bin tone: worst leakage beyond +-1 line = {=f32} dB",
        leakage_db
    );
    checks.check(
        "on-bin tone: leakage beyond +-1 line below -100 dB",
        leakage_db < -100.0,
    );
}

/// A tone half-way between lines 200 and 201: the worst case of the picket fence.
fn half_bin(checks: &mut Checks, block: &mut [f32; N]) {
    tone(block, AMPLITUDE, 401);
    let spectrum = windowed_spectrum(block, &HANN);
    let k = peak(spectrum);
    checks.check(
        "half-bin tone: peak at line 200 or 201",
        k == 200 || k == 201,
    );

    // The peak line reads low by the window's scalloping loss, which the library computes
    // at compile time from the same table (Hann: -1.42 dB). The image at -200.5 lines adds
    // leakage 400 lines away (below -150 dB for Hann), and f32 rounding is ~1e-5 dB, so
    // 0.01 dB is generous; a wrong correction or a mismatched factor is off by 0.1 dB or more.
    let level = amplitude(spectrum, k, &HANN);
    let read_db = 20.0 * libm::log10f(level / AMPLITUDE);
    let expected_db = HANN.factors().scalloping_loss_db as f32;
    checks.close(
        "half-bin tone: level re amplitude, dB",
        read_db,
        expected_db,
        0.01,
    );
}
