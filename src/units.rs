//! Units of vibration measurement in one place: sensor sensitivities as data sheets give
//! them, g and m/s^2, inch and metric velocity and displacement, and the peak, peak-to-peak
//! and RMS conventions of a sinusoid. Nobody writes `9.80665 / 0.1` by hand.
//!
//! Defined values (exact by definition, from memory): standard gravity
//! `g_n = 9.806 65 m/s^2` (3rd CGPM, 1901; ISO 80000-3), the international inch
//! `25.4 mm` (1959), so `1 in/s = 25.4 mm/s` and `1 mil = 0.001 in = 25.4 um`.
//!
//! ```
//! use leakless::units::{self, Amplitude, Sensitivity};
//!
//! // A 100 mV/g accelerometer: engineering units (m/s^2) per volt for `Config::with_sensitivity`.
//! let per_volt = Sensitivity::MillivoltsPerG(100.0).m_s2_per_volt();
//! assert!((per_volt - 98.0665).abs() < 1e-4);
//! // ... and through a +-10 V, 16-bit converter: per count.
//! let per_count = Sensitivity::MillivoltsPerG(100.0).m_s2_per_count(10.0 / 32_768.0);
//! assert!((per_count - 98.0665 * 10.0 / 32_768.0).abs() < 1e-6);
//!
//! assert!((units::in_s_to_mm_s(0.3) - 7.62).abs() < 1e-5);
//! assert!((units::um_to_mils(25.4) - 1.0).abs() < 1e-6);
//! // A sinusoid of 7.1 mm/s rms is 10.04 mm/s peak, 20.08 peak-to-peak.
//! let peak = Amplitude::Rms.convert_sine(7.1, Amplitude::Peak);
//! assert!((peak - 10.041).abs() < 1e-3);
//! ```

/// Standard gravity, m/s^2 per g (the defined value).
pub const STANDARD_GRAVITY_M_S2: f64 = 9.806_65;
/// Millimetres per inch (the defined value).
pub const MM_PER_INCH: f64 = 25.4;
/// Micrometres per mil (a thousandth of an inch).
pub const UM_PER_MIL: f64 = 25.4;

/// A sensor's sensitivity, in the unit its data sheet states.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Sensitivity {
    /// Millivolts per g (an IEPE accelerometer's usual 100 mV/g).
    MillivoltsPerG(f32),
    /// Millivolts per m/s^2 (10.2 mV/(m/s^2) is 100 mV/g).
    MillivoltsPerMs2(f32),
}

impl Sensitivity {
    /// Volts per m/s^2 of acceleration.
    pub const fn volts_per_m_s2(self) -> f64 {
        match self {
            Sensitivity::MillivoltsPerG(mv) => mv as f64 * 1e-3 / STANDARD_GRAVITY_M_S2,
            Sensitivity::MillivoltsPerMs2(mv) => mv as f64 * 1e-3,
        }
    }

    /// m/s^2 per volt: the `sensitivity` of an analyzer fed volts.
    pub const fn m_s2_per_volt(self) -> f32 {
        (1.0 / self.volts_per_m_s2()) as f32
    }

    /// g per volt, for spectra in g.
    pub const fn g_per_volt(self) -> f32 {
        (1.0 / (self.volts_per_m_s2() * STANDARD_GRAVITY_M_S2)) as f32
    }

    /// m/s^2 per converter count, given the converter's volts per count (its span over
    /// `2^bits`): the `sensitivity` of an analyzer fed counts.
    pub const fn m_s2_per_count(self, volts_per_count: f32) -> f32 {
        (volts_per_count as f64 / self.volts_per_m_s2()) as f32
    }
}

/// g to m/s^2.
pub const fn g_to_m_s2(g: f32) -> f32 {
    (g as f64 * STANDARD_GRAVITY_M_S2) as f32
}

/// m/s^2 to g.
pub const fn m_s2_to_g(m_s2: f32) -> f32 {
    (m_s2 as f64 / STANDARD_GRAVITY_M_S2) as f32
}

/// in/s to mm/s.
pub const fn in_s_to_mm_s(in_s: f32) -> f32 {
    (in_s as f64 * MM_PER_INCH) as f32
}

/// mm/s to in/s.
pub const fn mm_s_to_in_s(mm_s: f32) -> f32 {
    (mm_s as f64 / MM_PER_INCH) as f32
}

/// m/s to mm/s.
pub const fn m_s_to_mm_s(m_s: f32) -> f32 {
    m_s * 1e3
}

/// m to micrometres.
pub const fn m_to_um(m: f32) -> f32 {
    m * 1e6
}

/// mils to micrometres.
pub const fn mils_to_um(mils: f32) -> f32 {
    (mils as f64 * UM_PER_MIL) as f32
}

/// Micrometres to mils.
pub const fn um_to_mils(um: f32) -> f32 {
    (um as f64 / UM_PER_MIL) as f32
}

/// How an amplitude is stated. Velocity severity is usually RMS, displacement often
/// peak-to-peak, acceleration peak (common practice).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Amplitude {
    /// Root mean square.
    Rms,
    /// Zero to peak.
    Peak,
    /// Peak to peak.
    PeakToPeak,
}

impl Amplitude {
    /// The factor from RMS to this convention for a single sinusoid (1, sqrt(2), 2 sqrt(2)).
    pub const fn sine_factor(self) -> f64 {
        match self {
            Amplitude::Rms => 1.0,
            Amplitude::Peak => core::f64::consts::SQRT_2,
            Amplitude::PeakToPeak => 2.0 * core::f64::consts::SQRT_2,
        }
    }

    /// `value`, stated in this convention, restated in `to`, **for a single sinusoid only**:
    /// for anything else (several tones, noise, impacts) the measured peak is not
    /// `sqrt(2) rms`; read both from the meter instead (`analysis::levels::Level`).
    pub const fn convert_sine(self, value: f32, to: Amplitude) -> f32 {
        (value as f64 * to.sine_factor() / self.sine_factor()) as f32
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Defined values (from memory: CGPM 1901, international inch 1959); 1 g rms at 100 Hz is
    // 15.6078 mm/s rms (REFERENCES.md section 4, textbook relation, computed).
    #[test]
    fn conversions_follow_the_defined_values() {
        assert_eq!(g_to_m_s2(1.0), 9.806_65);
        assert!((m_s2_to_g(9.806_65) - 1.0).abs() < 1e-7);
        assert_eq!(in_s_to_mm_s(1.0), 25.4);
        assert_eq!(mils_to_um(1.0), 25.4);
        assert!((mm_s_to_in_s(25.4) - 1.0).abs() < 1e-7);
        let velocity_mm_s = m_s_to_mm_s(g_to_m_s2(1.0) / (core::f32::consts::TAU * 100.0));
        assert!((velocity_mm_s - 15.6078).abs() < 1e-3);
        assert_eq!(m_to_um(2.5e-6), 2.5);
        // 100 mV/g is 10.197 mV/(m/s^2): both forms give the same sensitivity.
        let a = Sensitivity::MillivoltsPerG(100.0).m_s2_per_volt();
        let b = Sensitivity::MillivoltsPerMs2((100.0 / 9.806_65) as f32).m_s2_per_volt();
        assert!((a / b - 1.0).abs() < 1e-6);
        assert!((Sensitivity::MillivoltsPerG(100.0).g_per_volt() - 10.0).abs() < 1e-6);
    }

    // analytic: a sinusoid's peak is sqrt(2) times its RMS, its peak-to-peak twice its peak.
    #[test]
    fn sine_conventions_round_trip() {
        for from in [Amplitude::Rms, Amplitude::Peak, Amplitude::PeakToPeak] {
            for to in [Amplitude::Rms, Amplitude::Peak, Amplitude::PeakToPeak] {
                let there = from.convert_sine(3.0, to);
                assert!((to.convert_sine(there, from) - 3.0).abs() < 1e-6);
            }
        }
        assert!((Amplitude::Peak.convert_sine(1.0, Amplitude::PeakToPeak) - 2.0).abs() < 1e-6);
        let peak = Amplitude::Rms.convert_sine(1.0, Amplitude::Peak);
        assert!((peak - core::f32::consts::SQRT_2).abs() < 1e-6);
    }
}
