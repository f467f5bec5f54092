//! The standard test signals of the fixed-point comparisons, as 16-bit converter counts.
//! Shared by `tests/fixed_analyzer.rs` and `examples/fixed_vs_float.rs` (which includes this
//! file by path), so the figures the example prints come from the signals the tests check.

use core::f64::consts::PI;

use super::SplitMix64;

/// Full scale of a 16-bit converter, counts.
pub const FULL_SCALE_COUNTS: f64 = 32768.0;

/// A tone at `level_dbfs` on `0.1 N + 0.37` bins plus a tone 60 dB lower on `0.3 N + 0.21`
/// bins (both off-bin, for blocks of `block_len`), with the given phases, rounded to counts
/// (half away from zero) and clipped as a converter clips.
pub fn two_tones_counts(
    len: usize,
    block_len: usize,
    level_dbfs: f64,
    phases: (f64, f64),
) -> Vec<i16> {
    let a1 = 10f64.powf(level_dbfs / 20.0) * FULL_SCALE_COUNTS;
    let a2 = a1 * 1e-3;
    let n = block_len as f64;
    let (f1, f2) = ((0.1 * n + 0.37) / n, (0.3 * n + 0.21) / n);
    (0..len)
        .map(|i| {
            let t = i as f64;
            let x = a1 * (2.0 * PI * f1 * t + phases.0).sin()
                + a2 * (2.0 * PI * f2 * t + phases.1).sin();
            x.round().clamp(-32768.0, 32767.0) as i16
        })
        .collect()
}

/// The bins of the two tones of [`two_tones_counts`].
pub fn two_tone_bins(block_len: usize) -> (f64, f64) {
    let n = block_len as f64;
    (0.1 * n + 0.37, 0.3 * n + 0.21)
}

/// Gaussian white noise of `rms_counts`, rounded and clipped to counts.
pub fn white_noise_counts(len: usize, rms_counts: f64, seed: u64) -> Vec<i16> {
    let mut rng = SplitMix64(seed);
    (0..len)
        .map(|_| {
            (rng.gaussian() * rms_counts)
                .round()
                .clamp(-32768.0, 32767.0) as i16
        })
        .collect()
}
