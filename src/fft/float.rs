//! The `f32` real FFT, over `microfft`.
//!
//! [`rfft`] transforms an `N`-sample block in place, for `N` = 64, 128, ..., 4096: 64 always,
//! the larger sizes up to the `size-*` feature enabled (`size-4096` by default). Any other
//! `N` is a compile error:
//!
//! ```compile_fail
//! let mut block = [0.0f32; 1000];
//! let _ = leakless::fft::float::rfft(&mut block); // error: not a supported FFT size
//! ```
//!
//! `microfft` packs the (real) Nyquist bin into the imaginary part of the (real) DC bin;
//! [`RealSpectrum::parts`] is the one place that unpacks it, and everything else reads the
//! bins through it.
//!
//! ```
//! use leakless::fft::float::rfft;
//!
//! // A cosine of amplitude 1 on bin 8 of 64, plus 0.25 at DC and 0.5 at Nyquist.
//! let mut block = [0.0f32; 64];
//! for (n, x) in block.iter_mut().enumerate() {
//!     let phase = 2.0 * core::f32::consts::PI * 8.0 * n as f32 / 64.0;
//!     *x = 0.25 + libm::cosf(phase) + if n % 2 == 0 { 0.5 } else { -0.5 };
//! }
//! let spectrum = rfft(&mut block);
//! let parts = spectrum.parts();
//! assert!((parts.dc - 16.0).abs() < 1e-4); // 0.25 * N
//! assert!((parts.nyquist - 32.0).abs() < 1e-4); // 0.5 * N
//! assert!((spectrum.bin(8).unwrap().re - 32.0).abs() < 1e-4); // N / 2
//! assert_eq!(spectrum.bins(), 33);
//! ```

pub use microfft::Complex32;

/// Whether [`rfft`] supports a block length in this build: 64, or a larger power of two up
/// to 4096 whose `size-N` feature is enabled.
pub const fn is_supported(n: usize) -> bool {
    n == 64
        || (n == 128 && cfg!(feature = "size-128"))
        || (n == 256 && cfg!(feature = "size-256"))
        || (n == 512 && cfg!(feature = "size-512"))
        || (n == 1024 && cfg!(feature = "size-1024"))
        || (n == 2048 && cfg!(feature = "size-2048"))
        || (n == 4096 && cfg!(feature = "size-4096"))
}

/// The one-sided spectrum of a real block, borrowed from the transformed buffer.
#[derive(Clone, Copy, Debug)]
pub struct RealSpectrum<'a> {
    /// `N/2` values as microfft returns them: `packed[0] = (X[0], X[N/2])`, then `X[1..N/2]`.
    packed: &'a [Complex32],
}

/// A [`RealSpectrum`] split into its real end bins and its complex interior.
#[derive(Clone, Copy, Debug)]
pub struct Parts<'a> {
    /// `X[0]`, real.
    pub dc: f32,
    /// `X[1] ..= X[N/2 - 1]`.
    pub interior: &'a [Complex32],
    /// `X[N/2]`, real.
    pub nyquist: f32,
}

impl<'a> RealSpectrum<'a> {
    /// DC, interior and Nyquist bins. This is the only place that undoes microfft's packing.
    pub fn parts(&self) -> Parts<'a> {
        match self.packed.split_first() {
            Some((first, interior)) => Parts {
                dc: first.re,
                interior,
                nyquist: first.im,
            },
            None => Parts {
                dc: 0.0,
                interior: &[],
                nyquist: 0.0,
            },
        }
    }

    /// The number of bins, `N/2 + 1`.
    pub fn bins(&self) -> usize {
        self.packed.len() + 1
    }

    /// Bin `k` for `k` in `0 ..= N/2`; `None` beyond.
    pub fn bin(&self, k: usize) -> Option<Complex32> {
        self.iter().nth(k)
    }

    /// The bins `X[0] ..= X[N/2]` in order (the end bins with a zero imaginary part).
    pub fn iter(&self) -> impl Iterator<Item = Complex32> + 'a {
        let parts = self.parts();
        core::iter::once(Complex32::new(parts.dc, 0.0))
            .chain(parts.interior.iter().copied())
            .chain(core::iter::once(Complex32::new(parts.nyquist, 0.0)))
    }
}

/// Transforms `block` in place and returns its `N/2 + 1` bins, unscaled.
///
/// The block's contents are overwritten (microfft works in place). `N` must satisfy
/// [`is_supported`]; anything else fails to compile.
pub fn rfft<const N: usize>(block: &mut [f32; N]) -> RealSpectrum<'_> {
    const {
        assert!(
            is_supported(N),
            "not a supported FFT size: N must be a power of two from 64 to 4096, \
             with its `size-N` feature enabled"
        )
    };
    // One arm per size; `try_from` cannot fail in the arm whose size matches N, and the
    // fallback arm is unreachable after the assertion above. Neither panics.
    macro_rules! dispatch {
        ($($size:literal => $f:ident $(if $feature:literal)?),*) => {
            match N {
                $($(#[cfg(feature = $feature)])? $size => match <&mut [f32; $size]>::try_from(block.as_mut_slice()) {
                    Ok(b) => microfft::real::$f(b).as_slice(),
                    Err(_) => &[],
                },)*
                _ => &[],
            }
        };
    }
    let packed: &[Complex32] = dispatch!(
        64 => rfft_64,
        128 => rfft_128 if "size-128",
        256 => rfft_256 if "size-256",
        512 => rfft_512 if "size-512",
        1024 => rfft_1024 if "size-1024",
        2048 => rfft_2048 if "size-2048",
        4096 => rfft_4096 if "size-4096"
    );
    RealSpectrum { packed }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rustfft::{num_complex::Complex64, FftPlanner};

    /// Checks every size against rustfft in f64 on a deterministic signal.
    fn check_against_rustfft<const N: usize>() {
        let signal: [f32; N] = core::array::from_fn(|n| {
            // A few tones, a DC offset and an alternating (Nyquist) part.
            let t = n as f64 / N as f64;
            (0.3 + (2.0 * core::f64::consts::PI * 5.0 * t).sin()
                + 0.5 * (2.0 * core::f64::consts::PI * 17.3 * t).cos()
                + if n % 2 == 0 { 0.2 } else { -0.2 }) as f32
        });
        let mut reference: Vec<Complex64> = signal
            .iter()
            .map(|&x| Complex64::new(x as f64, 0.0))
            .collect();
        FftPlanner::new()
            .plan_fft_forward(N)
            .process(&mut reference);
        let mut block = signal;
        let spectrum = rfft(&mut block);
        assert_eq!(spectrum.bins(), N / 2 + 1);
        // reference: rustfft 6 in f64. f32 FFT error grows like eps * log2 N * sum|x|; the
        // signal sums to about N, so 1e-6 * N is a generous bound that still catches a
        // wrong bin, sign or scale.
        let tolerance = 1e-6 * N as f64 * (N as f64).log2();
        let (mut error_power, mut signal_power) = (0.0, 0.0);
        for (k, got) in spectrum.iter().enumerate() {
            let want = reference[k];
            let err =
                ((got.re as f64 - want.re).powi(2) + (got.im as f64 - want.im).powi(2)).sqrt();
            assert!(err < tolerance, "N={N} bin {k}: {got} vs {want}");
            error_power += err * err;
            signal_power += want.norm_sqr();
        }
        // The transform's own floor, which bounds every f32 level comparison: the input is
        // exact in f32, so this is arithmetic error alone. Each of log2 N stages rounds to
        // 2^-24 relative, so the error stays near -140 dB; 120 dB leaves 20 dB of margin.
        let snr_db = 10.0 * (signal_power / error_power).log10();
        println!("microfft rfft_{N}: SNR {snr_db:.1} dB against rustfft in f64");
        assert!(snr_db > 120.0, "N={N}: SNR {snr_db} dB");
        assert!(spectrum.bin(N / 2 + 1).is_none());
    }

    #[test]
    fn every_size_matches_rustfft() {
        check_against_rustfft::<64>();
        #[cfg(feature = "size-128")]
        check_against_rustfft::<128>();
        #[cfg(feature = "size-256")]
        check_against_rustfft::<256>();
        #[cfg(feature = "size-512")]
        check_against_rustfft::<512>();
        #[cfg(feature = "size-1024")]
        check_against_rustfft::<1024>();
        #[cfg(feature = "size-2048")]
        check_against_rustfft::<2048>();
        #[cfg(feature = "size-4096")]
        check_against_rustfft::<4096>();
    }

    #[test]
    fn supported_sizes() {
        assert!(is_supported(64));
        assert_eq!(is_supported(4096), cfg!(feature = "size-4096"));
        assert_eq!(is_supported(1024), cfg!(feature = "size-1024"));
        assert!(!is_supported(32) && !is_supported(8192) && !is_supported(1000));
    }
}
