//! Window shapes: their coefficients and the formula of each, evaluated in `f64`.

use crate::error::ConfigError;
use crate::math;

/// A window shape. Parametric shapes carry their parameter.
///
/// Cosine-sum shapes (Hann through HFT144D and [`Shape::CosineSum`]) are
/// `w[n] = sum_k (-1)^k a_k cos(2 pi k n / L) / sum_k a_k`, so every one of them has a peak of
/// exactly 1 (the Heinzel HFT windows are published with `a_0 = 1`; dividing by `sum a_k`
/// puts them on the same footing as the others, which also lets them fit Q15).
/// `L = N` for the periodic (DFT-even) form and `L = N - 1` for the symmetric form.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Shape {
    /// Uniform (boxcar): no taper. For transients that start and end inside the block and for
    /// signals periodic in the block (order-tracked data). Both corrections are 1.
    Rectangular,
    /// Hann: a0 = a1 = 0.5. The general-purpose choice for random and mixed signals.
    Hann,
    /// Hamming: 0.54, 0.46.
    Hamming,
    /// Blackman: 0.42, 0.50, 0.08.
    Blackman,
    /// Exact Blackman (Harris 1978): 7938/18608, 9240/18608, 1430/18608.
    ExactBlackman,
    /// 4-term Blackman-Harris, -92 dB sidelobes: 0.35875, 0.48829, 0.14128, 0.01168.
    BlackmanHarris92,
    /// 4-term Nuttall, -98 dB sidelobes (Heinzel's "Nuttall4c", SciPy's `nuttall`).
    Nuttall,
    /// The 5-term flat-top window of SciPy's `flattop` (Heinzel's "Matlab" entry).
    FlatTop,
    /// Heinzel, Ruediger and Schilling 2002 flat-top HFT70 (-70.4 dB).
    Hft70,
    /// Heinzel, Ruediger and Schilling 2002 flat-top HFT90D (-90.2 dB).
    Hft90d,
    /// Heinzel, Ruediger and Schilling 2002 flat-top HFT95 (-95.0 dB).
    Hft95,
    /// Heinzel, Ruediger and Schilling 2002 flat-top HFT116D (-116.8 dB).
    Hft116d,
    /// Heinzel, Ruediger and Schilling 2002 flat-top HFT144D (-144.1 dB).
    Hft144d,
    /// Kaiser(-Bessel): `I0(beta sqrt(1 - r^2)) / I0(beta)`, `r = (2n - L)/L`.
    /// Harris's and Heinzel's alpha corresponds to `beta = pi * alpha`.
    Kaiser {
        /// Shape parameter, >= 0 (0 is rectangular).
        beta: f64,
    },
    /// Tukey (tapered cosine): a cosine taper over the fraction `alpha` of the window,
    /// flat in the middle. `alpha = 0` is rectangular, `alpha = 1` is Hann.
    Tukey {
        /// Tapered fraction, `0..=1`.
        alpha: f64,
    },
    /// Force window for the hammer channel of an impact test: 1 over the first `width` of the
    /// block (where the pulse is), then a half-cosine taper over `taper` of the block, then 0.
    /// It keeps the pulse and removes the noise that follows it.
    Force {
        /// Fraction of the block held at 1, in `(0, 1]`.
        width: f64,
        /// Fraction of the block over which it falls to 0, `>= 0`.
        taper: f64,
    },
    /// Exponential window for a ringing (impact) response: `w[n] = end_fraction^(n/(N-1))`,
    /// 1 at the first sample, `end_fraction` at the last. It forces the response to decay
    /// inside the block and adds a known damping; see
    /// [`Window::added_damping_ratio`](super::Window::added_damping_ratio).
    Exponential {
        /// Value at the last sample, in `(0, 1]`; 0.01 to 0.05 is usual.
        end_fraction: f64,
    },
    /// A user cosine sum: `a_0, a_1, ...` as positive numbers, in the form above.
    CosineSum(&'static [f64]),
}

const HANN: [f64; 2] = [0.5, 0.5];
const HAMMING: [f64; 2] = [0.54, 0.46];
const BLACKMAN: [f64; 3] = [0.42, 0.50, 0.08];
const EXACT_BLACKMAN: [f64; 3] = [7938.0 / 18608.0, 9240.0 / 18608.0, 1430.0 / 18608.0];
const BLACKMAN_HARRIS_92: [f64; 4] = [0.35875, 0.48829, 0.14128, 0.01168];
const NUTTALL: [f64; 4] = [0.3635819, 0.4891775, 0.1365995, 0.0106411];
const FLAT_TOP: [f64; 5] = [
    0.21557895,
    0.41663158,
    0.277263158,
    0.083578947,
    0.006947368,
];
const HFT70: [f64; 4] = [1.0, 1.90796, 1.07349, 0.18199];
const HFT90D: [f64; 5] = [1.0, 1.942604, 1.340318, 0.440811, 0.043097];
const HFT95: [f64; 5] = [1.0, 1.9383379, 1.3045202, 0.4028270, 0.0350665];
const HFT116D: [f64; 6] = [1.0, 1.9575375, 1.4780705, 0.6367431, 0.1228389, 0.0066288];
const HFT144D: [f64; 7] = [
    1.0, 1.96760033, 1.57983607, 0.81123644, 0.22583558, 0.02773848, 0.00090360,
];

impl Shape {
    /// One example of every shape, parametric shapes with a typical parameter. Tests iterate
    /// over it, so a new shape must be added here (and a `match` in the tests makes that a
    /// compile error when forgotten).
    pub const CATALOGUE: [Shape; 18] = [
        Shape::Rectangular,
        Shape::Hann,
        Shape::Hamming,
        Shape::Blackman,
        Shape::ExactBlackman,
        Shape::BlackmanHarris92,
        Shape::Nuttall,
        Shape::FlatTop,
        Shape::Hft70,
        Shape::Hft90d,
        Shape::Hft95,
        Shape::Hft116d,
        Shape::Hft144d,
        Shape::Kaiser {
            beta: 3.0 * core::f64::consts::PI,
        },
        Shape::Tukey { alpha: 0.5 },
        Shape::Force {
            width: 0.05,
            taper: 0.01,
        },
        Shape::Exponential { end_fraction: 0.01 },
        Shape::CosineSum(&[0.5, 0.5]),
    ];

    /// The cosine-sum coefficients `a_0, a_1, ...` as published (not yet peak-normalised),
    /// or `None` for shapes of another form.
    pub const fn cosine_coefficients(&self) -> Option<&'static [f64]> {
        match self {
            Shape::Hann => Some(&HANN),
            Shape::Hamming => Some(&HAMMING),
            Shape::Blackman => Some(&BLACKMAN),
            Shape::ExactBlackman => Some(&EXACT_BLACKMAN),
            Shape::BlackmanHarris92 => Some(&BLACKMAN_HARRIS_92),
            Shape::Nuttall => Some(&NUTTALL),
            Shape::FlatTop => Some(&FLAT_TOP),
            Shape::Hft70 => Some(&HFT70),
            Shape::Hft90d => Some(&HFT90D),
            Shape::Hft95 => Some(&HFT95),
            Shape::Hft116d => Some(&HFT116D),
            Shape::Hft144d => Some(&HFT144D),
            Shape::CosineSum(a) => Some(a),
            Shape::Rectangular
            | Shape::Kaiser { .. }
            | Shape::Tukey { .. }
            | Shape::Force { .. }
            | Shape::Exponential { .. } => None,
        }
    }

    /// The lower-case name used on command lines and in reports (`"hann"`, `"hft90d"`, ...).
    pub const fn name(&self) -> &'static str {
        match self {
            Shape::Rectangular => "rectangular",
            Shape::Hann => "hann",
            Shape::Hamming => "hamming",
            Shape::Blackman => "blackman",
            Shape::ExactBlackman => "exact-blackman",
            Shape::BlackmanHarris92 => "blackman-harris-92",
            Shape::Nuttall => "nuttall",
            Shape::FlatTop => "flattop",
            Shape::Hft70 => "hft70",
            Shape::Hft90d => "hft90d",
            Shape::Hft95 => "hft95",
            Shape::Hft116d => "hft116d",
            Shape::Hft144d => "hft144d",
            Shape::Kaiser { .. } => "kaiser",
            Shape::Tukey { .. } => "tukey",
            Shape::Force { .. } => "force",
            Shape::Exponential { .. } => "exponential",
            Shape::CosineSum(_) => "cosine-sum",
        }
    }

    /// Parses a name as [`Shape::name`] prints it. Parametric shapes take their parameters
    /// after a colon: `kaiser:9.42`, `tukey:0.5`, `force:0.05:0.01`, `exponential:0.01`;
    /// without them they get the [`Shape::CATALOGUE`] values. `uniform` and `boxcar` are
    /// accepted for `rectangular`. A user cosine sum cannot be named this way.
    ///
    /// ```
    /// use leakless::Shape;
    /// assert_eq!(Shape::from_name("hann"), Some(Shape::Hann));
    /// assert_eq!(Shape::from_name("kaiser:8"), Some(Shape::Kaiser { beta: 8.0 }));
    /// assert_eq!(Shape::from_name("hanning"), None);
    /// ```
    pub fn from_name(text: &str) -> Option<Shape> {
        let mut parts = text.split(':');
        let name = parts.next()?;
        let mut next_number = |default: f64| -> Option<f64> {
            match parts.next() {
                None => Some(default),
                Some(s) => s.trim().parse::<f64>().ok(),
            }
        };
        let shape = match name.trim() {
            "uniform" | "boxcar" => Shape::Rectangular,
            "kaiser" => Shape::Kaiser {
                beta: next_number(3.0 * core::f64::consts::PI)?,
            },
            "tukey" => Shape::Tukey {
                alpha: next_number(0.5)?,
            },
            "force" => Shape::Force {
                width: next_number(0.05)?,
                taper: next_number(0.01)?,
            },
            "exponential" => Shape::Exponential {
                end_fraction: next_number(0.01)?,
            },
            "cosine-sum" => return None,
            other => *Shape::CATALOGUE.iter().find(|s| s.name() == other)?,
        };
        if parts.next().is_some() || shape.validate().is_err() {
            return None;
        }
        Some(shape)
    }

    /// Checks the parameters of a parametric shape.
    pub const fn validate(&self) -> Result<(), ConfigError> {
        let ok = match *self {
            Shape::Kaiser { beta } => beta >= 0.0 && beta <= 700.0,
            Shape::Tukey { alpha } => alpha >= 0.0 && alpha <= 1.0,
            Shape::Force { width, taper } => {
                width > 0.0 && width <= 1.0 && taper >= 0.0 && taper <= 1.0
            }
            Shape::Exponential { end_fraction } => end_fraction > 0.0 && end_fraction <= 1.0,
            Shape::CosineSum(a) => {
                // Tables are divided by sum a_k (the centre value), so it must be finite and > 0.
                let mut sum = 0.0;
                let mut i = 0;
                while i < a.len() {
                    sum += a[i];
                    i += 1;
                }
                sum > 0.0 && sum < f64::INFINITY
            }
            _ => true,
        };
        if ok {
            Ok(())
        } else {
            Err(ConfigError::WindowParameter)
        }
    }

    /// Whether `w[n] = w[L - n]`: true for every shape but the force and exponential windows.
    pub const fn is_symmetric(&self) -> bool {
        !matches!(self, Shape::Force { .. } | Shape::Exponential { .. })
    }

    /// The window's value at sample `n` of `len`, in `f64` (0 for `n >= len`: outside the
    /// window).
    ///
    /// This is the one definition of every shape: the f32 and Q15 tables both come from it.
    pub const fn sample(&self, symmetry: Symmetry, n: usize, len: usize) -> f64 {
        if n >= len {
            return 0.0;
        }
        // L: the period of the cosine terms.
        let span = match symmetry {
            Symmetry::Periodic => len,
            Symmetry::Symmetric => {
                if len > 1 {
                    len - 1
                } else {
                    1
                }
            }
        };
        match *self {
            Shape::Rectangular => 1.0,
            Shape::Kaiser { beta } => {
                let r = (2.0 * n as f64 - span as f64) / span as f64;
                let arg = 1.0 - r * r;
                let arg = if arg < 0.0 { 0.0 } else { arg };
                math::bessel_i0(beta * math::sqrt(arg)) / math::bessel_i0(beta)
            }
            Shape::Tukey { alpha } => {
                // Distance from the nearer end, in samples, so both halves are bit-identical.
                let m = if n < span - n { n } else { span - n };
                let taper = alpha * span as f64 / 2.0;
                if alpha <= 0.0 || (m as f64) >= taper {
                    1.0
                } else {
                    0.5 * (1.0 - math::cos(core::f64::consts::PI * m as f64 / taper))
                }
            }
            Shape::Force { width, taper } => {
                let x = n as f64;
                let flat_end = width * len as f64;
                let taper_len = taper * len as f64;
                if x < flat_end {
                    1.0
                } else if x < flat_end + taper_len {
                    0.5 * (1.0 + math::cos(core::f64::consts::PI * (x - flat_end) / taper_len))
                } else {
                    0.0
                }
            }
            Shape::Exponential { end_fraction } => {
                if len < 2 {
                    1.0
                } else {
                    math::exp(math::ln(end_fraction) * n as f64 / (len - 1) as f64)
                }
            }
            _ => match self.cosine_coefficients() {
                Some(a) => cosine_sum(a, n as u64, span as u64),
                None => 1.0,
            },
        }
    }
}

/// `sum_k (-1)^k a_k cos(2 pi k n / span) / sum_k a_k` (peak 1 at the centre).
const fn cosine_sum(a: &[f64], n: u64, span: u64) -> f64 {
    let mut value = 0.0;
    let mut peak = 0.0;
    let mut k = 0;
    while k < a.len() {
        let sign = if k % 2 == 0 { 1.0 } else { -1.0 };
        value += sign * a[k] * math::cos_turns(k as u64 * n, span);
        peak += a[k];
        k += 1;
    }
    value / peak
}

/// Which of the two usual definitions a table follows.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Symmetry {
    /// DFT-even: the first `N` samples of a symmetric window of `N + 1`. What spectrum analysis
    /// wants (and what Heinzel, Harris, SciPy's `get_window` and CMSIS-DSP use).
    Periodic,
    /// `w[n] = w[N - 1 - n]`: for FIR filter design, not for spectra.
    Symmetric,
}
