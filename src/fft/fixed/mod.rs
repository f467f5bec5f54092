//! Fixed-point real FFTs with block floating point: Q15 (16-bit data, 32-bit products) and
//! Q31 (32-bit data, 64-bit products), for `N` = 64, 128, ..., 4096.
//!
//! Our own code: an `N/2`-point complex radix-4 (and one radix-2) decimation-in-time FFT of
//! the even and odd samples, then a split stage that turns it into the real input's
//! spectrum. Twiddles are `const` tables computed in f64 by [`crate::math::cos_turns`] and
//! rounded once.
//!
//! # Output convention
//!
//! The transform works in place. Afterwards `data` holds bins `0..=N/2` of
//! `X[k] = sum_n x[n] exp(-2 pi j k n / N)`, packed into the same `N` words:
//!
//! | word | holds |
//! |---|---|
//! | `0` | `Re X[0]` (`Im X[0]` is 0) |
//! | `1` | `Re X[N/2]` (`Im X[N/2]` is 0) |
//! | `2k`, `2k+1` | `Re X[k]`, `Im X[k]`, for `k = 1..N/2` |
//!
//! Read bins through [`bin_q15`] / [`bin_q31`] rather than by hand. Bins above `N/2` are the
//! complex conjugates of bins below it (`X[N-k] = conj X[k]`) and are not stored.
//!
//! # Block exponent
//!
//! Both transforms return an exponent `e`: `X[k] = raw[k] * 2^e`, with `x[n]` read as the
//! integers in `data` (no `1/N`, no Q-format scaling). If the input is read as a Q15
//! fraction, `x[n] / 32768`, the fraction's DFT is `raw * 2^(e - 15)` (Q31: `2^(e - 31)`).
//!
//! Before every stage the transform looks at the block's peak and shifts the stage down only
//! as far as its outputs could need (0 to 2 bits for a radix-2 stage, 0 to 3 for a radix-4
//! stage); when the block is small it shifts it *up* instead, first of all before the first
//! stage, so a -41 dBFS block keeps the SNR of a full-scale one. The peaks are exact or a
//! bound at most one LSB above, so a shift is larger than needed only for a peak within an
//! LSB of a threshold. The split stage, being last, takes its shift from the peak of its
//! outputs (exact to within 2^-13 of an unshifted LSB), so the spectrum uses the whole word.
//! Every shift rounds; exact halves are rounded to even, so the error has no bias.
//!
//! # Accuracy
//!
//! Measured by `tests/fixed_fft.rs` on two off-bin tones (-1 dBFS and -60 dB below it) under
//! a periodic Hann window, quantised to 16 bits, against rustfft in f64 on the same input
//! (32 random phase pairs per N; CMSIS-DSP's Q15 RFFT measured 53.1 / 47.8 / 42.8 dB on the
//! same kind of signal: cmsisdsp 1.10.3 `arm_rfft_q15`, scalar build, 32 random phase pairs):
//!
//! | N | Q15 SNR | Q15 SNR at -41 dBFS | -60 dB tone level, worst | Q31 SNR |
//! |---|---|---|---|---|
//! | 256 | 73.5 dB | 70.6 dB | 0.32 dB | 167.3 dB |
//! | 1024 | 70.1 dB | 64.7 dB | 0.35 dB | 161.6 dB |
//! | 4096 | 73.4 dB | 58.3 dB | 0.39 dB | 155.6 dB |
//!
//! The output's bias (mean error) is below 0.01 LSB. On uniform noise the error is 2.6 to
//! 3.9 output LSB rms per bin, at most 11 LSB in any bin (N = 64 ... 4096).
//!
//! # Cost
//!
//! No division, no 64-bit arithmetic in the Q15 path, no `unsafe`, no float. Flash: one
//! `N`-entry cosine table per size used (2 N bytes for Q15, 4 N for Q31). RAM: the caller's
//! buffer only. Instructions for one Q15 transform of full-scale noise, counted exactly by a
//! QEMU 7.2 TCG plugin between two marker calls, release build (`opt-level = 3`, fat LTO):
//!
//! | N | Cortex-M0 (`microbit`, thumbv6m) | Cortex-M4 (`mps2-an386`, thumbv7em) |
//! |---|---|---|
//! | 256 | 36,400 | 24,900 |
//! | 1024 | 170,800 | 117,400 |
//! | 4096 | 773,400 | 532,300 |
//!
//! A quiet block (N = 1024 at -42 dBFS) takes about 2 % less. At `opt-level = "s"`: about
//! 208,000 (M0) and 142,000 (M4) at N = 1024. Of the M0 count at N = 1024, about 36 % is
//! the twiddled radix-4 butterflies (about 180 instructions each, some 75 of them `ldr` /
//! `str` to the stack: the M0 has 8 low registers for twiddles, offsets and intermediates),
//! 21 % the two passes of the split stage, 8 % the radix-2 stage, 6 % the bit reversal, 5 %
//! the input's peak, the rest the fused first stage and the twiddle-free radix-4
//! butterflies. That is still well over the budget hoped for on Cortex-M0 (about 110,000).
//! Code size of that instantiation: about 7.1 KB of Thumb code at `opt-level = 3` (the
//! compiler unrolls the split and radix-2 loops), 3.9 KB at `"s"`, plus the 2 KB table. On
//! a 2020s x86-64 host (best of 12 runs on a busy 2-core machine): about 7 us (Q15) and
//! 8.5 us (Q31) at N = 1024.
//!
//! # Example
//!
//! ```
//! use leakless::fft::fixed::{bin_q15, rfft_q15};
//!
//! // A cosine of amplitude 8192 (-12 dBFS) on bin 8: X[8] = 8192 * N / 2.
//! let mut data = [0i16; 256];
//! for (n, x) in data.iter_mut().enumerate() {
//!     *x = (8192.0 * (2.0 * core::f64::consts::PI * 8.0 * n as f64 / 256.0).cos()).round() as i16;
//! }
//! let exponent = rfft_q15(&mut data);
//! let (re, im) = bin_q15(&data, 8).unwrap();
//! let scale = 2f64.powi(exponent);
//! assert!((re as f64 * scale - 8192.0 * 128.0).abs() < 1e-3 * 8192.0 * 128.0);
//! assert!((im as f64 * scale).abs() < 1e-3 * 8192.0 * 128.0);
//! ```
//!
//! A length that is not a power of two in `64..=4096` does not compile:
//!
//! ```compile_fail,E0080
//! let mut data = [0i16; 100];
//! leakless::fft::fixed::rfft_q15(&mut data); // error: N must be a power of two in 64..=4096
//! ```
//!
//! ```compile_fail,E0080
//! let mut data = [0i32; 8192];
//! leakless::fft::fixed::rfft_q31(&mut data); // error: N must be a power of two in 64..=4096
//! ```
//!
//! ```compile_fail,E0080
//! let mut data = [0i16; 32];
//! leakless::fft::fixed::rfft_q15(&mut data); // error: N must be a power of two in 64..=4096
//! ```
#![deny(clippy::float_arithmetic)]

mod kernel;
mod twiddle;

use twiddle::CosTable;

/// The shortest supported transform.
pub const MIN_LEN: usize = 64;
/// The longest supported transform.
pub const MAX_LEN: usize = 4096;

/// Rejects unsupported lengths at compile time.
const fn assert_supported_len<const N: usize>() {
    const {
        assert!(
            N.is_power_of_two() && N >= MIN_LEN && N <= MAX_LEN,
            "N must be a power of two in 64..=4096"
        );
    }
}

/// Q15 real FFT of `N` samples in place; returns the block exponent `e`.
///
/// On return `data` holds `X[0..=N/2]` packed as the [module docs](self) describe, with
/// `X[k] = raw * 2^e` in the units of the input integers. Any input is accepted (including
/// `i16::MIN` everywhere); all-zero input returns all zeros and `e = 0`.
///
/// 16-bit words, 32-bit products, no 64-bit arithmetic and no division.
///
/// ```
/// use leakless::fft::fixed::{bin_q15, rfft_q15};
/// let mut data = [0i16; 64];
/// data[0] = 1000; // an impulse: X[k] = 1000 for every k
/// let e = rfft_q15(&mut data);
/// for k in 0..=32 {
///     let (re, im) = bin_q15(&data, k).unwrap();
///     assert_eq!((re as f64 * 2f64.powi(e), im), (1000.0, 0));
/// }
/// ```
pub fn rfft_q15<const N: usize>(data: &mut [i16; N]) -> i32 {
    assert_supported_len::<N>();
    let cos: &'static [i16; N] = &CosTable::<N>::Q15;
    kernel::q15::rfft(data, cos)
}

/// Q31 real FFT of `N` samples in place; returns the block exponent `e`.
///
/// The same algorithm, packing and exponent meaning as [`rfft_q15`], with 32-bit words and
/// 64-bit products.
///
/// ```
/// use leakless::fft::fixed::{bin_q31, rfft_q31};
/// let mut data = [0i32; 64];
/// data[0] = 1 << 30;
/// let e = rfft_q31(&mut data);
/// let (re, im) = bin_q31(&data, 7).unwrap();
/// assert_eq!((re as f64 * 2f64.powi(e), im), ((1u64 << 30) as f64, 0));
/// ```
pub fn rfft_q31<const N: usize>(data: &mut [i32; N]) -> i32 {
    assert_supported_len::<N>();
    let cos: &'static [i32; N] = &CosTable::<N>::Q31;
    kernel::q31::rfft(data, cos)
}

/// Bin `k` (`0..=N/2`) of a spectrum packed by [`rfft_q15`], as raw `(re, im)`; multiply by
/// `2^e` for `X[k]`. `None` for `k > N/2`.
pub fn bin_q15<const N: usize>(spectrum: &[i16; N], k: usize) -> Option<(i16, i16)> {
    assert_supported_len::<N>();
    unpack(spectrum, k)
}

/// Bin `k` (`0..=N/2`) of a spectrum packed by [`rfft_q31`], as raw `(re, im)`; multiply by
/// `2^e` for `X[k]`. `None` for `k > N/2`.
pub fn bin_q31<const N: usize>(spectrum: &[i32; N], k: usize) -> Option<(i32, i32)> {
    assert_supported_len::<N>();
    unpack(spectrum, k)
}

/// The one place that knows the packing.
fn unpack<T: Copy + Default, const N: usize>(spectrum: &[T; N], k: usize) -> Option<(T, T)> {
    match k {
        0 => Some((spectrum[0], T::default())),
        _ if k == N / 2 => Some((spectrum[1], T::default())),
        _ if k < N / 2 => Some((spectrum[2 * k], spectrum[2 * k + 1])),
        _ => None,
    }
}

// The checks compute their references in f64.
#[cfg(test)]
#[allow(clippy::float_arithmetic)]
mod tests {
    use super::*;

    #[test]
    fn bins_follow_the_packing() {
        let spectrum: [i16; 64] = core::array::from_fn(|i| i as i16 + 1);
        assert_eq!(bin_q15(&spectrum, 0), Some((1, 0)));
        assert_eq!(bin_q15(&spectrum, 32), Some((2, 0)));
        assert_eq!(bin_q15(&spectrum, 1), Some((3, 4)));
        assert_eq!(bin_q15(&spectrum, 31), Some((63, 64)));
        assert_eq!(bin_q15(&spectrum, 33), None);
        let spectrum = spectrum.map(i32::from);
        assert_eq!(bin_q31(&spectrum, 5), Some((11, 12)));
        assert_eq!(bin_q31(&spectrum, usize::MAX), None);
    }

    // Analytic: x[n] = 64 + 4096 cos(2 pi 5 n / N) - 2048 sin(2 pi 9 n / N) has
    // X[0] = 64 N, X[5] = 4096 N / 2, X[9] = +2048 j N / 2 and nothing else.
    #[test]
    fn exponent_and_packing_of_known_tones() {
        const N: usize = 128;
        let mut data: [i16; N] = core::array::from_fn(|n| {
            let t = 2.0 * core::f64::consts::PI * n as f64 / N as f64;
            (64.0 + 4096.0 * (5.0 * t).cos() - 2048.0 * (9.0 * t).sin()).round() as i16
        });
        let e = rfft_q15(&mut data);
        let scale = 2f64.powi(e);
        for k in 0..=N / 2 {
            let (re, im) = bin_q15(&data, k).unwrap();
            let (re, im) = (re as f64 * scale, im as f64 * scale);
            let expected = match k {
                0 => (64.0 * N as f64, 0.0),
                5 => (4096.0 * N as f64 / 2.0, 0.0),
                9 => (0.0, 2048.0 * N as f64 / 2.0),
                _ => (0.0, 0.0),
            };
            // The input itself is rounded (|error| <= 0.5 per sample, up to 0.5 N per bin in
            // the worst case, about 0.5 sqrt(N / 3) rms), plus a few output LSB.
            let tolerance = 0.5 * N as f64 + 4.0 * scale;
            assert!(
                (re - expected.0).abs() <= tolerance && (im - expected.1).abs() <= tolerance,
                "bin {k}: ({re}, {im}), expected {expected:?}"
            );
        }
    }

    // A quiet block is normalised up before the first stage: a negative exponent.
    #[test]
    fn quiet_blocks_are_normalised_up() {
        let mut data = [0i16; 64];
        data[0] = 3;
        let e = rfft_q15(&mut data);
        assert!(e < 0, "e = {e}");
        // 3 * 4 << 11 = 24576 fits, << 12 would not: the first stage shifts up by 11.
        assert_eq!(
            bin_q15(&data, 0).map(|(re, _)| re as f64 * 2f64.powi(e)),
            Some(3.0)
        );
        let mut data = [0i32; 64];
        data[1] = -1;
        let e = rfft_q31(&mut data);
        assert!(e <= -28, "e = {e}");
        assert_eq!(
            bin_q31(&data, 0).map(|(re, _)| re as f64 * 2f64.powi(e)),
            Some(-1.0)
        );
    }
}
