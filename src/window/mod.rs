//! Window tables and their correction factors, computed at compile time.
//!
//! ```
//! use leakless::window::{Shape, Window, WindowQ15};
//!
//! const FLAT: Window<1024> = Window::new(Shape::Hft90d);
//! const HANN_Q15: WindowQ15<1024> = WindowQ15::new(Shape::Hann);
//! // A flat top reads a tone's amplitude to better than 0.01 dB wherever it falls in a bin.
//! assert!(FLAT.factors().scalloping_loss_db.abs() < 0.01);
//! assert_eq!(HANN_Q15.table()[512], 32767);
//! ```
//!
//! # Which correction, when
//!
//! A window attenuates the signal, and how much depends on what is measured:
//!
//! * **Amplitude correction** (`1 / coherent gain`) makes a *tone* centred on a line read its
//!   true amplitude. Use it to read tone amplitudes (with a flat top, wherever the tone falls).
//!   It over-reads broadband noise and band levels by the ENBW (+1.76 dB for Hann).
//! * **Energy correction** (`1 / sqrt(mean square gain)`) makes the *power* of the spectrum
//!   right: overall and band levels, PSD, noise. A tone then reads low by
//!   `sqrt(ENBW)` at its peak line, but the sum over its lines is right.
//!
//! The two differ (for Hann, 2.0 against 1.633), so one spectrum carries one of them; the
//! spectrum types record which. PSD and ASD are energy-corrected by definition.

mod shape;

pub use shape::{Shape, Symmetry};

use crate::error::ConfigError;
use crate::math;

/// The figures of merit and correction factors of a window table: from the f64 definition
/// for [`Window`], and from the rounded values for [`WindowQ15`] (where rounding matters).
///
/// With `S1 = sum w[n]` and `S2 = sum w[n]^2` over the `N` samples (Heinzel, Ruediger and
/// Schilling 2002, section 9):
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Factors {
    /// `S1`, the sum of the window.
    pub sum: f64,
    /// `S2`, the sum of the squared window.
    pub sum_of_squares: f64,
    /// Coherent gain `S1 / N`: how much a tone on a line is attenuated.
    pub coherent_gain: f64,
    /// Amplitude correction `N / S1 = 1 / coherent_gain`.
    pub amplitude_correction: f64,
    /// Mean-square gain `S2 / N`: how much noise power is attenuated.
    pub mean_square_gain: f64,
    /// Energy correction `1 / sqrt(S2 / N)`.
    pub energy_correction: f64,
    /// Normalised equivalent noise bandwidth `N S2 / S1^2`, in bins (lines).
    pub enbw_bins: f64,
    /// The amplitude response half a bin off a line, relative to the response on the line,
    /// in dB (negative: the worst-case picket-fence loss of a tone's peak line).
    pub scalloping_loss_db: f64,
    /// Overlap correlation at 50 % overlap, `sum w[n] w[n + N/2] / S2` (a fraction, not %).
    pub overlap_correlation_50: f64,
    /// Overlap correlation at 75 % overlap, `sum w[n] w[n + N/4] / S2`.
    pub overlap_correlation_75: f64,
}

impl Factors {
    /// Computes the factors of any table of samples (at compile time or at run time).
    ///
    /// ```
    /// use leakless::Factors;
    /// let f = Factors::of_samples(&[1.0; 8]);
    /// assert_eq!((f.coherent_gain, f.enbw_bins), (1.0, 1.0));
    /// ```
    pub const fn of_samples(table: &[f64]) -> Factors {
        let n_len = table.len();
        let mut sum = 0.0;
        let mut sum_of_squares = 0.0;
        // DTFT at half a bin: W(0.5) = sum w[n] exp(-j pi n / N).
        let mut re = 0.0;
        let mut im = 0.0;
        let mut lag_half = 0.0;
        let mut lag_quarter = 0.0;
        let mut i = 0;
        while i < n_len {
            let w = table[i];
            sum += w;
            sum_of_squares += w * w;
            re += w * math::cos_turns(i as u64, 2 * n_len as u64);
            im -= w * math::sin_turns(i as u64, 2 * n_len as u64);
            if i + n_len / 2 < n_len {
                lag_half += w * table[i + n_len / 2];
            }
            if i + n_len / 4 < n_len {
                lag_quarter += w * table[i + n_len / 4];
            }
            i += 1;
        }
        let n = n_len as f64;
        let half_bin = math::sqrt(re * re + im * im);
        Factors {
            sum,
            sum_of_squares,
            coherent_gain: sum / n,
            amplitude_correction: n / sum,
            mean_square_gain: sum_of_squares / n,
            energy_correction: 1.0 / math::sqrt(sum_of_squares / n),
            enbw_bins: n * sum_of_squares / (sum * sum),
            scalloping_loss_db: 2.0 * math::power_db(half_bin / math::abs(sum)),
            overlap_correlation_50: lag_half / sum_of_squares,
            overlap_correlation_75: lag_quarter / sum_of_squares,
        }
    }

    /// Whether levels can be corrected for this window: every correction divides by its
    /// sums, and a user cosine sum can make them (nearly) zero. Real windows have a coherent
    /// gain above 0.05; the bound is 1e-6 (and 1e-12 on the mean-square gain).
    pub const fn can_correct(&self) -> bool {
        self.coherent_gain > 1e-6 && self.mean_square_gain > 1e-12
    }

    /// Equivalent noise bandwidth in Hz for a block sampled at `sample_rate_hz`:
    /// `enbw_bins * sample_rate_hz / N` (infinite for `block_len` 0).
    pub fn enbw_hz(&self, sample_rate_hz: f64, block_len: usize) -> f64 {
        self.enbw_bins * sample_rate_hz / block_len as f64
    }
}

/// Checks a block length at compile time: at least 2 samples, at most 65536.
const fn assert_block_len<const N: usize>() {
    const {
        // Written as a const block so that a wrong N stops the build, not the program.
        assert!(N >= 2, "a window needs at least 2 samples");
        assert!(N <= 65536, "window tables are limited to 65536 samples");
    }
}

/// Evaluates a shape into an f64 table (compile time).
const fn f64_table<const N: usize>(shape: Shape, symmetry: Symmetry) -> [f64; N] {
    let mut t = [0.0f64; N];
    let mut i = 0;
    while i < N {
        t[i] = shape.sample(symmetry, i, N);
        i += 1;
    }
    t
}

/// A window of `N` samples in the number type `T`: its table and its [`Factors`], built by
/// `const fn`. Use it through its three forms:
///
/// * [`Window<N>`]: `f32`, for the float path;
/// * [`WindowQ15<N>`]: `i16`, `round(32767 w)`, for the Q15 path;
/// * [`WindowQ31<N>`]: `i32`, `round((2^31 - 1) w)`, for the Q31 path (24-bit converters).
///
/// Put one in a `const` or `static` and the compiler evaluates it: no start-up cost, and the
/// table lands in flash. Analyzers borrow it (`&'static Window<N>`) rather than copy it.
///
/// # Generics
///
/// * `T`: the number type of the table (`f32`, `i16` or `i32`).
/// * `N`: block length, 2 ..= 65536, checked at compile time.
///
/// ```compile_fail
/// use leakless::window::{Shape, Window};
/// const EMPTY: Window<0> = Window::new(Shape::Hann); // error: a window needs at least 2 samples
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct WindowTable<T, const N: usize> {
    shape: Shape,
    symmetry: Symmetry,
    table: [T; N],
    factors: Factors,
}

/// The `f32` window table of the float path.
///
/// Its [`Factors`] come from the f64 definition: rounding to f32 moves them by about 1e-9, far
/// below what the f32 path itself resolves, and this way the exact figures (Hann: 2.0, 1.5
/// bins) stay exact.
pub type Window<const N: usize> = WindowTable<f32, N>;

/// The Q15 twin of [`Window`]: an `i16` table for the fixed-point path.
///
/// Entry `n` is `round(32767 w[n])` from the f64 definition (within 0.5 LSB, and a peak of 1
/// becomes 32767, never overflowing). The fixed-point multiply reads it as `q / 32768`, and
/// its [`Factors`] are computed from exactly those values, so the corrections of the fixed
/// path include the small gain `32767/32768`.
pub type WindowQ15<const N: usize> = WindowTable<i16, N>;

/// The Q31 twin of [`Window`], for the Q31 path (24-bit converters): an `i32` table.
///
/// Entry `n` is `round(2147483647 w[n])` (the Q15 rule, `round((2^B - 1) w)`, at 31 bits) and
/// the fixed-point multiply reads it as `q / 2^31`; its [`Factors`] are computed from exactly
/// those values. Why a table of its own: a Q15 table's rounding (0.5 LSB of 2^-15 on every
/// sample) modulates the signal by an error about 97 dB below it, which would be the floor of
/// a Q31 spectrum whose transform alone reaches 135 dB and more. It costs `4 N` bytes of
/// flash instead of `2 N`.
///
/// ```
/// use leakless::window::{Shape, WindowQ31};
/// const HANN: WindowQ31<1024> = WindowQ31::new(Shape::Hann);
/// assert_eq!(HANN.table()[512], i32::MAX);
/// assert!((HANN.factors().amplitude_correction - 2.0).abs() < 1e-8);
/// ```
pub type WindowQ31<const N: usize> = WindowTable<i32, N>;

/// The constructors of one table type: `$quantise` turns a sample of the f64 definition into
/// the stored value, `$as_applied` says what a stored value means to the transform (the factors
/// are computed from that).
macro_rules! window_constructors {
    ($t:ty, $zero:expr, |$x:ident| $quantise:expr, |$x2:ident, $q:ident| $as_applied:expr) => {
        impl<const N: usize> WindowTable<$t, N> {
            /// The periodic (DFT-even) window of `shape`: the one to use for spectra.
            ///
            /// # Panics
            ///
            /// If the shape's parameters are out of range ([`Shape::validate`]). In a `const`
            /// that is a compile error; at run time use `try_new`.
            pub const fn new(shape: Shape) -> Self {
                Self::with_symmetry(shape, Symmetry::Periodic)
            }

            /// The window of `shape` in the given definition.
            ///
            /// # Panics
            ///
            /// As `new`.
            pub const fn with_symmetry(shape: Shape, symmetry: Symmetry) -> Self {
                match Self::try_with_symmetry(shape, symmetry) {
                    Ok(w) => w,
                    Err(_) => panic!("window parameter out of range"),
                }
            }

            /// `new` that returns an error instead of panicking.
            pub const fn try_new(shape: Shape) -> Result<Self, ConfigError> {
                Self::try_with_symmetry(shape, Symmetry::Periodic)
            }

            /// `with_symmetry` that returns an error instead of panicking.
            pub const fn try_with_symmetry(
                shape: Shape,
                symmetry: Symmetry,
            ) -> Result<Self, ConfigError> {
                assert_block_len::<N>();
                if let Err(e) = shape.validate() {
                    return Err(e);
                }
                let exact = f64_table::<N>(shape, symmetry);
                let mut table = [$zero; N];
                let mut applied = [0.0f64; N];
                let mut i = 0;
                while i < N {
                    let $x = exact[i];
                    let $q = $quantise;
                    table[i] = $q;
                    let $x2 = $x;
                    applied[i] = $as_applied;
                    i += 1;
                }
                Ok(WindowTable {
                    shape,
                    symmetry,
                    table,
                    factors: Factors::of_samples(&applied),
                })
            }
        }
    };
}

// f32: the factors use the exact f64 values (see `Window`).
window_constructors!(f32, 0.0f32, |x| x as f32, |x, _q| x);
window_constructors!(i16, 0i16, |x| round_to_i16(x * 32767.0), |_x, q| q as f64
    / 32768.0);
window_constructors!(i32, 0i32, |x| round_to_i32(x * 2_147_483_647.0), |_x, q| q
    as f64
    / 2_147_483_648.0);

impl<T, const N: usize> WindowTable<T, N> {
    /// The shape this window was built from.
    pub const fn shape(&self) -> Shape {
        self.shape
    }

    /// Periodic or symmetric.
    pub const fn symmetry(&self) -> Symmetry {
        self.symmetry
    }

    /// The `N` samples.
    pub const fn table(&self) -> &[T; N] {
        &self.table
    }

    /// The correction factors and figures of merit of the table as the transform applies it.
    pub const fn factors(&self) -> &Factors {
        &self.factors
    }

    /// For an exponential window: the decay rate it adds to every component, in 1/s, for a
    /// block sampled at `sample_rate_hz` (`sigma = ln(1/end_fraction) fs / (N - 1)`).
    /// `None` for other shapes.
    ///
    /// ```
    /// use leakless::window::{Shape, Window};
    /// let w: Window<1024> = Window::new(Shape::Exponential { end_fraction: 0.01 });
    /// // Decay to 1 % over (N-1)/fs = 1 s adds sigma = ln(100) = 4.605 1/s.
    /// let sigma = w.added_decay_rate(1023.0).unwrap();
    /// assert!((sigma - 4.60517).abs() < 1e-5);
    /// ```
    pub fn added_decay_rate(&self, sample_rate_hz: f64) -> Option<f64> {
        match self.shape {
            Shape::Exponential { end_fraction } => {
                Some(-libm::log(end_fraction) * sample_rate_hz / (N as f64 - 1.0))
            }
            _ => None,
        }
    }

    /// For an exponential window: the damping ratio it adds to a lightly damped mode at
    /// `mode_frequency_hz`, `sigma / (2 pi f)`. Subtract it from the damping ratio measured
    /// through the window to get the structure's own. `None` for other shapes.
    ///
    /// ```
    /// use leakless::window::{Shape, Window};
    /// let w: Window<1024> = Window::new(Shape::Exponential { end_fraction: 0.01 });
    /// let added = w.added_damping_ratio(1023.0, 100.0).unwrap();
    /// assert!((added - 0.00733).abs() < 1e-5);
    /// ```
    pub fn added_damping_ratio(&self, sample_rate_hz: f64, mode_frequency_hz: f64) -> Option<f64> {
        self.added_decay_rate(sample_rate_hz)
            .map(|sigma| sigma / (2.0 * core::f64::consts::PI * mode_frequency_hz))
    }
}

/// Round half away from zero, saturating to the `i32` range.
const fn round_to_i32(x: f64) -> i32 {
    let r = if x >= 0.0 { x + 0.5 } else { x - 0.5 };
    if r >= 2_147_483_647.0 {
        i32::MAX
    } else if r <= -2_147_483_648.0 {
        i32::MIN
    } else {
        r as i32
    }
}

/// Round half away from zero, saturating to the `i16` range.
const fn round_to_i16(x: f64) -> i16 {
    let r = if x >= 0.0 { x + 0.5 } else { x - 0.5 };
    if r >= 32767.0 {
        32767
    } else if r <= -32768.0 {
        -32768
    } else {
        r as i16
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // common practice: the Hann window's amplitude correction is 2 and its energy correction
    // sqrt(8/3) = 1.633, both exact for the periodic form.
    #[test]
    fn hann_corrections() {
        let w: Window<1024> = Window::new(Shape::Hann);
        assert!((w.factors().amplitude_correction - 2.0).abs() < 1e-12);
        assert!((w.factors().energy_correction - (8.0f64 / 3.0).sqrt()).abs() < 1e-7);
    }

    // common practice: a rectangular window needs no correction.
    #[test]
    fn rectangular_is_uncorrected() {
        let w: Window<64> = Window::new(Shape::Rectangular);
        let f = w.factors();
        assert_eq!(
            (f.coherent_gain, f.energy_correction, f.enbw_bins),
            (1.0, 1.0, 1.0)
        );
    }

    #[test]
    fn bad_parameters_are_typed_errors() {
        for shape in [
            Shape::Kaiser { beta: -1.0 },
            Shape::Tukey { alpha: 1.5 },
            Shape::Tukey { alpha: f64::NAN },
            Shape::Force {
                width: 0.0,
                taper: 0.1,
            },
            Shape::Exponential { end_fraction: 0.0 },
            Shape::CosineSum(&[]),
            Shape::CosineSum(&[f64::INFINITY]),
        ] {
            assert_eq!(
                Window::<16>::try_new(shape).err(),
                Some(ConfigError::WindowParameter),
                "{shape:?}"
            );
        }
    }

    #[test]
    fn q15_rounding_saturates() {
        assert_eq!(round_to_i16(32767.4), 32767);
        assert_eq!(round_to_i16(40000.0), 32767);
        assert_eq!(round_to_i16(-0.5), -1);
        assert_eq!(round_to_i16(-40000.0), -32768);
        assert_eq!(round_to_i32(2_147_483_646.6), i32::MAX);
        assert_eq!(round_to_i32(-0.5), -1);
        assert_eq!(round_to_i32(-3e9), i32::MIN);
    }
}
