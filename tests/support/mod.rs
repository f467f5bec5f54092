//! Helpers shared by the analyzer's integration tests (named `support`, not `common`, which
//! holds the reference-data loader).
#![allow(dead_code)]

use core::f64::consts::PI;

/// SplitMix64 (Steele, Lea, Flood 2014): a small seeded generator, so the tests need no
/// random-number dependency and every run sees the same numbers.
pub struct SplitMix64(pub u64);

impl SplitMix64 {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in (0, 1].
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) + 1) as f64 / (1u64 << 53) as f64
    }

    /// Standard normal by Box-Muller.
    pub fn gaussian(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * PI * v).cos()
    }
}

/// `amplitude * sin(2 pi f n / fs)` for `len` samples, computed in f64.
pub fn sine(len: usize, amplitude: f64, frequency_hz: f64, sample_rate_hz: f64) -> Vec<f32> {
    (0..len)
        .map(|n| (amplitude * (2.0 * PI * frequency_hz * n as f64 / sample_rate_hz).sin()) as f32)
        .collect()
}

/// `|sum_n w[n] exp(-2 pi j d n / N)|`, the window's DTFT at `d` bins, in f64 (naive sum).
pub fn window_response(table: &[f32], bins: f64) -> f64 {
    let n_len = table.len() as f64;
    let (mut re, mut im) = (0.0, 0.0);
    for (n, &w) in table.iter().enumerate() {
        let phase = -2.0 * PI * bins * n as f64 / n_len;
        re += w as f64 * phase.cos();
        im += w as f64 * phase.sin();
    }
    (re * re + im * im).sqrt()
}

pub mod signals;
