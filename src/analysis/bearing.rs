//! Rolling-element bearing defect frequencies from the bearing's geometry.
//!
//! A local defect on a race or a ball is struck once each time a rolling element passes over
//! it, so it repeats at a rate fixed by the geometry and the shaft speed. With `n` balls of
//! diameter `d` on a pitch diameter `D`, contact angle `phi`, shaft frequency `fr`, the outer
//! race stationary and the inner race turning with the shaft, and no slip (the usual
//! kinematic formulas, common practice):
//!
//! | name | meaning | frequency |
//! |---|---|---|
//! | FTF | fundamental train (cage) frequency | `fr / 2 * (1 - d/D cos phi)` |
//! | BPFO | ball pass frequency, outer race | `n fr / 2 * (1 - d/D cos phi)` |
//! | BPFI | ball pass frequency, inner race | `n fr / 2 * (1 + d/D cos phi)` |
//! | BSF | ball spin frequency | `D / (2 d) * fr * (1 - (d/D cos phi)^2)` |
//!
//! # Which BSF
//!
//! [`DefectOrders::bsf`] and [`DefectFrequencies::bsf_hz`] are the *spin* frequency: how often
//! a ball turns about its own axis, relative to the cage. A defect on a ball touches both
//! races once per spin, so its impacts come at **twice** that rate; some tables list that
//! figure (2 x BSF) under the same name. [`DefectFrequencies::ball_defect_hz`] gives it.
//!
//! Real bearings slip a little (typically 1-2 %), so measured lines sit slightly below these
//! figures; search a narrow band around them rather than a single line.
//!
//! ```
//! use leakless::analysis::bearing::BearingGeometry;
//!
//! // 8 balls of 10 mm on a 40 mm pitch circle, radial contact: d/D = 1/4.
//! let bearing = BearingGeometry::new(8, 10.0, 40.0, 0.0)?;
//! let f = bearing.defect_frequencies(25.0)?; // 1500 rpm
//! assert!((f.bpfo_hz - 75.0).abs() < 1e-9); // 8 * 25 / 2 * (1 - 1/4)
//! assert!((f.bpfi_hz - 125.0).abs() < 1e-9); // 8 * 25 / 2 * (1 + 1/4)
//! assert!((bearing.defect_orders().ftf - 0.375).abs() < 1e-12);
//! # Ok::<(), leakless::ConfigError>(())
//! ```

use crate::error::ConfigError;

/// The geometry of a rolling-element bearing, checked at construction.
///
/// Diameters are in millimetres, but only their ratio matters: any one length unit works.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BearingGeometry {
    balls: u32,
    ball_diameter_mm: f64,
    pitch_diameter_mm: f64,
    contact_angle_deg: f64,
}

impl BearingGeometry {
    /// A bearing with `balls` rolling elements of `ball_diameter_mm` on a pitch circle of
    /// `pitch_diameter_mm`, with a contact angle of `contact_angle_deg` (0 for a deep-groove
    /// ball bearing under radial load).
    ///
    /// `const`, so a geometry known at build time can be checked by the compiler.
    ///
    /// # Errors
    ///
    /// * [`ConfigError::BallCount`]: no balls.
    /// * [`ConfigError::PitchDiameter`]: pitch diameter not finite or not > 0.
    /// * [`ConfigError::BallDiameter`]: ball diameter not finite, not > 0, or not less than
    ///   the pitch diameter (the balls would overlap the shaft axis).
    /// * [`ConfigError::ContactAngle`]: angle not finite or outside `0.0..90.0` degrees.
    ///
    /// ```
    /// use leakless::{BearingGeometry, ConfigError};
    /// assert_eq!(BearingGeometry::new(0, 10.0, 40.0, 0.0), Err(ConfigError::BallCount));
    /// assert_eq!(BearingGeometry::new(8, 40.0, 40.0, 0.0), Err(ConfigError::BallDiameter));
    /// assert_eq!(BearingGeometry::new(8, 10.0, 40.0, 90.0), Err(ConfigError::ContactAngle));
    /// ```
    pub const fn new(
        balls: u32,
        ball_diameter_mm: f64,
        pitch_diameter_mm: f64,
        contact_angle_deg: f64,
    ) -> Result<Self, ConfigError> {
        if balls == 0 {
            return Err(ConfigError::BallCount);
        }
        // `is_finite` first: it rejects NaN, which every comparison would let through.
        if !pitch_diameter_mm.is_finite() || pitch_diameter_mm <= 0.0 {
            return Err(ConfigError::PitchDiameter);
        }
        if !ball_diameter_mm.is_finite()
            || ball_diameter_mm <= 0.0
            || ball_diameter_mm >= pitch_diameter_mm
        {
            return Err(ConfigError::BallDiameter);
        }
        if !contact_angle_deg.is_finite() || contact_angle_deg < 0.0 || contact_angle_deg >= 90.0 {
            return Err(ConfigError::ContactAngle);
        }
        Ok(Self {
            balls,
            ball_diameter_mm,
            pitch_diameter_mm,
            contact_angle_deg,
        })
    }

    /// Number of balls (rolling elements).
    pub const fn balls(&self) -> u32 {
        self.balls
    }

    /// Ball diameter `d`, in mm.
    pub const fn ball_diameter_mm(&self) -> f64 {
        self.ball_diameter_mm
    }

    /// Pitch diameter `D`, in mm.
    pub const fn pitch_diameter_mm(&self) -> f64 {
        self.pitch_diameter_mm
    }

    /// Contact angle `phi`, in degrees.
    pub const fn contact_angle_deg(&self) -> f64 {
        self.contact_angle_deg
    }

    /// The defect frequencies as orders: multiples of the shaft speed. They depend on the
    /// geometry alone.
    pub fn defect_orders(&self) -> DefectOrders {
        let angle_rad = self.contact_angle_deg.to_radians();
        // x = d/D cos(phi) < 1 by construction, so every order is finite and positive.
        let x = self.ball_diameter_mm / self.pitch_diameter_mm * libm::cos(angle_rad);
        let n = self.balls as f64;
        DefectOrders {
            ftf: 0.5 * (1.0 - x),
            bpfo: 0.5 * n * (1.0 - x),
            bpfi: 0.5 * n * (1.0 + x),
            bsf: self.pitch_diameter_mm / (2.0 * self.ball_diameter_mm) * (1.0 - x * x),
        }
    }

    /// The defect frequencies at a shaft speed of `shaft_hz` (revolutions per second).
    ///
    /// # Errors
    ///
    /// [`ConfigError::ShaftSpeed`] if `shaft_hz` is not finite or is negative. Zero is allowed
    /// (a stopped machine: every frequency is 0).
    pub fn defect_frequencies(&self, shaft_hz: f64) -> Result<DefectFrequencies, ConfigError> {
        if !shaft_hz.is_finite() || shaft_hz < 0.0 {
            return Err(ConfigError::ShaftSpeed);
        }
        let orders = self.defect_orders();
        let frequencies = DefectFrequencies {
            ftf_hz: orders.ftf * shaft_hz,
            bpfo_hz: orders.bpfo * shaft_hz,
            bpfi_hz: orders.bpfi * shaft_hz,
            bsf_hz: orders.bsf * shaft_hz,
        };
        // A finite but absurd speed (near f64::MAX) must not come back as infinite lines.
        let all_finite = [
            frequencies.ftf_hz,
            frequencies.bpfo_hz,
            frequencies.bpfi_hz,
            frequencies.bsf_hz,
        ]
        .iter()
        .all(|f| f.is_finite());
        if all_finite {
            Ok(frequencies)
        } else {
            Err(ConfigError::ShaftSpeed)
        }
    }
}

/// Bearing defect frequencies as multiples of the shaft speed (orders).
///
/// See the [module documentation](self) for the formulas and the BSF convention.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DefectOrders {
    /// Fundamental train (cage) frequency, in orders.
    pub ftf: f64,
    /// Ball pass frequency of the outer race, in orders.
    pub bpfo: f64,
    /// Ball pass frequency of the inner race, in orders.
    pub bpfi: f64,
    /// Ball spin frequency (one turn of a ball about its axis, relative to the cage), in
    /// orders. A ball defect repeats at twice this.
    pub bsf: f64,
}

/// Bearing defect frequencies at one shaft speed, in Hz.
///
/// See the [module documentation](self) for the formulas and the BSF convention.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DefectFrequencies {
    /// Fundamental train (cage) frequency, Hz.
    pub ftf_hz: f64,
    /// Ball pass frequency of the outer race, Hz: the impact rate of an outer-race defect.
    pub bpfo_hz: f64,
    /// Ball pass frequency of the inner race, Hz: the impact rate of an inner-race defect.
    pub bpfi_hz: f64,
    /// Ball spin frequency, Hz (one spin per period; see [`Self::ball_defect_hz`]).
    pub bsf_hz: f64,
}

impl DefectFrequencies {
    /// The impact rate of a defect on a ball, `2 * bsf_hz`: it meets the inner and the outer
    /// race once each per spin. Tables that list "BSF" as this figure use this convention.
    pub fn ball_defect_hz(&self) -> f64 {
        2.0 * self.bsf_hz
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs().max(1e-300)
    }

    // Hand-derived from the formulas: choosing d/D cos(phi) = 1/4 and 1/10 makes every order a
    // short exact decimal. Common practice (the kinematic formulas).
    #[test]
    fn hand_derived_orders() {
        // n = 8, d/D = 10/40 = 0.25, phi = 0.
        let o = BearingGeometry::new(8, 10.0, 40.0, 0.0)
            .unwrap()
            .defect_orders();
        assert!(close(o.ftf, 0.375, 1e-15)); // 0.5 * 0.75
        assert!(close(o.bpfo, 3.0, 1e-15)); // 8 * 0.5 * 0.75
        assert!(close(o.bpfi, 5.0, 1e-15)); // 8 * 0.5 * 1.25
        assert!(close(o.bsf, 1.875, 1e-15)); // 40/20 * (1 - 1/16)
                                             // n = 10, d/D = 10/50 = 0.2, phi = 60 deg: x = 0.1. cos(60 deg) is 0.5 to an ulp.
        let o = BearingGeometry::new(10, 10.0, 50.0, 60.0)
            .unwrap()
            .defect_orders();
        assert!(close(o.ftf, 0.45, 1e-14)); // 0.5 * 0.9
        assert!(close(o.bpfo, 4.5, 1e-14)); // 10 * 0.5 * 0.9
        assert!(close(o.bpfi, 5.5, 1e-14)); // 10 * 0.5 * 1.1
        assert!(close(o.bsf, 2.475, 1e-14)); // 50/20 * (1 - 0.01)
    }

    // Independent computation: rolling without slip, from contact-point speeds rather than
    // from the closed forms (common practice, the derivation behind the formulas). The inner
    // race contact point, at radius (D - d cos phi)/2, moves at w_shaft times that radius; the
    // outer one is still; the ball centre (and the cage) moves at the mean of the two, on the
    // pitch radius D/2. A ball rolls on the outer race without slip relative to the cage:
    // w_spin * d/2 = w_cage * (D + d cos phi)/2.
    #[test]
    fn orders_match_contact_point_kinematics() {
        for balls in [3u32, 7, 9, 13, 24] {
            for (d, pitch) in [(1.0, 3.0), (7.94, 39.04), (12.7, 58.0), (2.0, 100.0)] {
                for angle_deg in [0.0, 15.0, 25.0, 40.0, 89.0] {
                    let g = BearingGeometry::new(balls, d, pitch, angle_deg).unwrap();
                    let o = g.defect_orders();
                    let w_shaft = 1.0; // one revolution per unit time: results are orders
                    let cos_phi = libm::cos(angle_deg * core::f64::consts::PI / 180.0);
                    let inner_contact_speed = w_shaft * (pitch - d * cos_phi) / 2.0;
                    let cage_centre_speed = (inner_contact_speed + 0.0) / 2.0;
                    let w_cage = cage_centre_speed / (pitch / 2.0);
                    let w_spin = w_cage * ((pitch + d * cos_phi) / 2.0) / (d / 2.0);
                    let n = balls as f64;
                    assert!(close(o.ftf, w_cage, 1e-13), "ftf {g:?}");
                    assert!(close(o.bpfo, n * (w_cage - 0.0), 1e-13), "bpfo {g:?}");
                    assert!(close(o.bpfi, n * (w_shaft - w_cage), 1e-13), "bpfi {g:?}");
                    assert!(close(o.bsf, w_spin, 1e-13), "bsf {g:?}");
                }
            }
        }
    }

    // Identities of the kinematics (common practice): BPFO + BPFI = n fr, FTF = BPFO / n,
    // and the frequencies are the orders times the shaft speed.
    #[test]
    fn identities() {
        let g = BearingGeometry::new(11, 9.5, 47.0, 12.0).unwrap();
        for shaft_hz in [0.5, 24.7, 49.0, 300.0] {
            let f = g.defect_frequencies(shaft_hz).unwrap();
            let n = g.balls() as f64;
            assert!(close(f.bpfo_hz + f.bpfi_hz, n * shaft_hz, 1e-14));
            assert!(close(f.ftf_hz, f.bpfo_hz / n, 1e-14));
            assert!(close(f.ball_defect_hz(), 2.0 * f.bsf_hz, 0.0));
            let o = g.defect_orders();
            assert!(close(f.bsf_hz, o.bsf * shaft_hz, 0.0));
        }
        let stopped = g.defect_frequencies(0.0).unwrap();
        assert_eq!(stopped.bpfo_hz, 0.0);
    }

    // From memory: the bearing data published with a widely used public bearing-fault data set
    // (deep-groove 6205 and 6203 bearings), listing defect frequencies as multiples of running
    // speed, with the ball-defect figure as 2 x BSF. Dimensions in inches, 4 significant
    // figures. Rounding each dimension by half a unit of its last digit moves d/D by up to
    // 4.9e-4 (6205) and 6.3e-4 (6203) relative. FTF, BPFO and BPFI move by less than that
    // fraction; BSF ~ D/d (1 - x^2) moves by (1 + x^2) / (1 - x^2) = 1.12 times it, 7.1e-4.
    // So 8e-4 relative is what the published figures can support.
    #[test]
    fn published_6205_and_6203() {
        let tol = 8e-4;
        let b6205 = BearingGeometry::new(9, 0.3126, 1.537, 0.0).unwrap();
        let o = b6205.defect_orders();
        assert!(close(o.bpfi, 5.4152, tol), "{o:?}"); // from memory
        assert!(close(o.bpfo, 3.5848, tol), "{o:?}"); // from memory
        assert!(close(o.ftf, 0.39828, tol), "{o:?}"); // from memory
        assert!(close(2.0 * o.bsf, 4.7135, tol), "{o:?}"); // from memory
        let b6203 = BearingGeometry::new(8, 0.2656, 1.122, 0.0).unwrap();
        let o = b6203.defect_orders();
        assert!(close(o.bpfi, 4.9469, tol), "{o:?}"); // from memory
        assert!(close(o.bpfo, 3.0530, tol), "{o:?}"); // from memory
        assert!(close(o.ftf, 0.3817, tol), "{o:?}"); // from memory
        assert!(close(2.0 * o.bsf, 3.9874, tol), "{o:?}"); // from memory
    }

    #[test]
    fn impossible_geometry_is_a_typed_error() {
        use ConfigError::*;
        let cases = [
            ((0, 10.0, 40.0, 0.0), BallCount),
            ((8, 10.0, 0.0, 0.0), PitchDiameter),
            ((8, 10.0, -40.0, 0.0), PitchDiameter),
            ((8, 10.0, f64::NAN, 0.0), PitchDiameter),
            ((8, 10.0, f64::INFINITY, 0.0), PitchDiameter),
            ((8, 0.0, 40.0, 0.0), BallDiameter),
            ((8, -1.0, 40.0, 0.0), BallDiameter),
            ((8, 40.0, 40.0, 0.0), BallDiameter),
            ((8, 41.0, 40.0, 0.0), BallDiameter),
            ((8, f64::NAN, 40.0, 0.0), BallDiameter),
            ((8, 10.0, 40.0, -0.1), ContactAngle),
            ((8, 10.0, 40.0, 90.0), ContactAngle),
            ((8, 10.0, 40.0, f64::NAN), ContactAngle),
            ((8, 10.0, 40.0, f64::NEG_INFINITY), ContactAngle),
        ];
        for ((n, d, pitch, angle), want) in cases {
            assert_eq!(BearingGeometry::new(n, d, pitch, angle), Err(want));
        }
        // The edges that are allowed.
        assert!(BearingGeometry::new(1, 39.999, 40.0, 0.0).is_ok());
        assert!(BearingGeometry::new(8, 10.0, 40.0, 89.999).is_ok());
        let g = BearingGeometry::new(8, 10.0, 40.0, 0.0).unwrap();
        for bad in [-1.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY, f64::MAX] {
            assert_eq!(g.defect_frequencies(bad), Err(ShaftSpeed));
        }
    }

    #[test]
    fn geometry_checks_run_at_compile_time() {
        const G: BearingGeometry = match BearingGeometry::new(9, 12.0, 60.0, 0.0) {
            Ok(g) => g,
            Err(_) => panic!("impossible geometry"),
        };
        assert_eq!(G.balls(), 9);
        assert_eq!(G.ball_diameter_mm(), 12.0);
        assert_eq!(G.pitch_diameter_mm(), 60.0);
        assert_eq!(G.contact_angle_deg(), 0.0);
    }
}
