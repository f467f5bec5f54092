//! Frequency response from averaged auto and cross spectra: H1, H2 and coherence.
//!
//! With `G_xx`, `G_yy` the averaged auto spectra of the input `x` (force, reference) and the
//! output `y` (response), and `G_xy = mean conj(X) Y` their averaged cross spectrum:
//!
//! * `H1 = G_xy / G_xx`: unbiased by noise on the output, reads low by `1 / (1 + N_xx/G_xx)`
//!   when the input carries noise;
//! * `H2 = G_yy / G_yx` (`G_yx = conj(G_xy)`): unbiased by noise on the input, reads high when
//!   the output carries noise;
//! * coherence `|G_xy|^2 / (G_xx G_yy) = |H1| / |H2|`, in `[0, 1]`: the fraction of the output
//!   power linearly explained by the input.
//!
//! (Bendat and Piersol, *Random Data: Analysis and Measurement Procedures*, 4th ed., Wiley
//! 2010, chapter 9 on single-input/single-output relations; from memory.) The estimators are
//! ratios, so the one-sided factor and, for a shared window, the window factors cancel; with
//! different windows on the two channels (the impact test's force and exponential windows) no
//! window correction is applied, which is the transient convention: the FRF is the ratio of
//! the two windowed transforms (see [`crate::spectrum::impact`]).

/// A complex number in `f64`, for the response estimators.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Complex {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

impl Complex {
    /// `re + j im`.
    pub const fn new(re: f64, im: f64) -> Self {
        Self { re, im }
    }

    /// `|z|`.
    pub fn magnitude(self) -> f64 {
        libm::hypot(self.re, self.im)
    }

    /// `|z|^2`.
    pub fn norm_sqr(self) -> f64 {
        self.re * self.re + self.im * self.im
    }

    /// `20 log10 |z|`, dB.
    pub fn magnitude_db(self) -> f64 {
        20.0 * libm::log10(self.magnitude())
    }

    /// The phase in degrees, `-180 ..= 180`.
    pub fn phase_deg(self) -> f64 {
        libm::atan2(self.im, self.re).to_degrees()
    }

    /// `conj(z)`.
    pub const fn conj(self) -> Self {
        Self::new(self.re, -self.im)
    }

    /// `a z`.
    pub fn scale(self, a: f64) -> Self {
        Self::new(a * self.re, a * self.im)
    }

    /// `exp(z)`.
    pub fn exp(self) -> Self {
        let m = libm::exp(self.re);
        Self::new(m * libm::cos(self.im), m * libm::sin(self.im))
    }
}

impl core::ops::Mul for Complex {
    type Output = Self;
    fn mul(self, w: Self) -> Self {
        Self::new(
            self.re * w.re - self.im * w.im,
            self.re * w.im + self.im * w.re,
        )
    }
}

/// NaN or infinite parts for a zero divisor.
impl core::ops::Div for Complex {
    type Output = Self;
    fn div(self, w: Self) -> Self {
        let d = w.norm_sqr();
        let n = self * w.conj();
        Self::new(n.re / d, n.im / d)
    }
}

impl core::ops::Add for Complex {
    type Output = Self;
    fn add(self, w: Self) -> Self {
        Self::new(self.re + w.re, self.im + w.im)
    }
}

impl core::ops::Sub for Complex {
    type Output = Self;
    fn sub(self, w: Self) -> Self {
        Self::new(self.re - w.re, self.im - w.im)
    }
}

/// H1, H2 and coherence on one line.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FrfLine {
    /// `G_xy / G_xx`, output units per input unit.
    pub h1: Complex,
    /// `G_yy / G_yx`.
    pub h2: Complex,
    /// `|G_xy|^2 / (G_xx G_yy)`, in `[0, 1]` (rounding above 1 is clipped to 1); NaN when an
    /// auto spectrum is zero (nothing to relate).
    pub coherence: f64,
}

impl FrfLine {
    /// From the averaged `G_xx`, `G_yy` and `G_xy = re + j im` of one line (any common
    /// scale). A zero `G_xx` gives NaN values in `h1`, a zero `G_xy` in `h2`: flags, not
    /// plausible responses.
    pub fn from_averages(gxx: f64, gyy: f64, gxy_re: f64, gxy_im: f64) -> Self {
        let gxy = Complex::new(gxy_re, gxy_im);
        let h1 = if gxx > 0.0 {
            gxy.scale(1.0 / gxx)
        } else {
            Complex::new(f64::NAN, f64::NAN)
        };
        let h2 = if gxy.norm_sqr() > 0.0 {
            Complex::new(gyy, 0.0) / gxy.conj()
        } else {
            Complex::new(f64::NAN, f64::NAN)
        };
        let coherence = if gxx > 0.0 && gyy > 0.0 {
            (gxy.norm_sqr() / (gxx * gyy)).min(1.0)
        } else {
            f64::NAN
        };
        Self { h1, h2, coherence }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // from the definitions (Bendat and Piersol 2010, from memory): a noise-free linear
    // system y = H x has coherence 1 and H1 = H2 = H.
    #[test]
    fn noise_free_system_gives_h_and_unit_coherence() {
        let h = Complex::new(0.3, -1.2);
        let gxx = 2.0;
        let gxy = h.scale(gxx); // conj(X) H X = H |X|^2
        let gyy = h.norm_sqr() * gxx;
        let line = FrfLine::from_averages(gxx, gyy, gxy.re, gxy.im);
        for est in [line.h1, line.h2] {
            assert!((est - h).magnitude() < 1e-12);
        }
        assert!((line.coherence - 1.0).abs() < 1e-12);
        let zero = FrfLine::from_averages(0.0, 1.0, 0.0, 0.0);
        assert!(zero.h1.re.is_nan() && zero.h2.re.is_nan() && zero.coherence.is_nan());
    }

    #[test]
    fn complex_arithmetic() {
        let a = Complex::new(1.0, 2.0);
        let b = Complex::new(-3.0, 0.5);
        let q = a / b;
        assert!((q * b - a).magnitude() < 1e-12);
        assert!((Complex::new(0.0, 1.0).phase_deg() - 90.0).abs() < 1e-12);
        assert!((Complex::new(10.0, 0.0).magnitude_db() - 20.0).abs() < 1e-12);
        let e = Complex::new(0.0, core::f64::consts::PI).exp();
        assert!((e.re + 1.0).abs() < 1e-12 && e.im.abs() < 1e-12);
    }
}
