//! The level meter in integers, for cores without an FPU: the same sections, coefficients
//! and read-out as the `f32` meter, with no float per sample.
//!
//! Signals are `i64` in units of `2^-32` of an `i16` count (`2^-16` of an `i32` count), so a
//! full-scale input uses 48 bits and leaves 15 bits of headroom for the sections' gains
//! (at most about 2.3 on a state). Each coefficient is a 31-bit mantissa with its own
//! shift, so the smallest (`g^2 a1`, 6e-8 for a 2 Hz edge at 25.6 kHz) keeps its full
//! relative precision; a product is two 32 x 32 -> 64-bit multiplies, rounded to nearest.
//! Squares are taken of the output rounded to `2^-15` count (`i32`, saturating) and summed
//! in a `u128`; peaks are exact.
#![deny(clippy::float_arithmetic)]

use super::{Accumulator, Interval, Level, LevelConfig, OverallLevels, QUANTITIES};
use crate::error::ConfigError;

/// A coefficient in `[0, 1)`: `mantissa / 2^shift`, mantissa in `[2^30, 2^31)` (or 0),
/// shift in `31 ..= 62`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct Coefficient {
    mantissa: u32,
    shift: u32,
}

impl Coefficient {
    #[allow(clippy::float_arithmetic)]
    fn new(value: f64) -> Self {
        let mut shift = 31u32;
        let mut scaled = value * 2_147_483_648.0; // 2^31
        if scaled.is_nan() || scaled < 1.0 {
            return Self {
                mantissa: 0,
                shift: 62,
            };
        }
        while scaled < 1_073_741_824.0 && shift < 62 {
            scaled *= 2.0;
            shift += 1;
        }
        let mantissa = libm::round(scaled).min(2_147_483_647.0) as u32;
        Self { mantissa, shift }
    }

    /// `round(x * mantissa / 2^shift)` for `|x| < 2^62`, from two 32 x 32 -> 64 products.
    #[inline]
    fn times(self, x: i64) -> i64 {
        let m = self.mantissa as i64;
        let high = (x >> 32).wrapping_mul(m); // |x >> 32| < 2^30, so no wrap in range
        let low = ((x as u64) & 0xFFFF_FFFF) * self.mantissa as u64; // < 2^63
        if self.shift == 31 {
            (high << 1).wrapping_add(((low + (1 << 30)) >> 31) as i64)
        } else {
            let d = self.shift - 32;
            let high_quotient = high >> d;
            let high_rest = high.wrapping_sub(high_quotient << d) as u64; // 0 .. 2^d
            let rest = (high_rest << 32) + low + (1u64 << (self.shift - 1));
            high_quotient.wrapping_add((rest >> self.shift) as i64)
        }
    }
}

/// First-order section (see the `f32` twin).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct OnePole {
    gain: Coefficient,
    state: i64,
}

impl OnePole {
    #[allow(clippy::float_arithmetic)]
    fn new(g: f64) -> Self {
        Self {
            gain: Coefficient::new(g / (1.0 + g)),
            state: 0,
        }
    }

    #[inline]
    fn step(&mut self, x: i64) -> (i64, i64) {
        let v = self.gain.times(x.wrapping_sub(self.state));
        let low = v.wrapping_add(self.state);
        self.state = low.wrapping_add(v);
        (low, x.wrapping_sub(low))
    }
}

/// Second-order state-variable section, `k = 1` (see the `f32` twin).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct StateVariable {
    a1: Coefficient,
    a2: Coefficient,
    a3: Coefficient,
    ic1: i64,
    ic2: i64,
}

impl StateVariable {
    fn new(g: f64) -> Self {
        let [a1, a2, a3] = super::state_variable_coefficients(g);
        Self {
            a1: Coefficient::new(a1),
            a2: Coefficient::new(a2),
            a3: Coefficient::new(a3),
            ic1: 0,
            ic2: 0,
        }
    }

    /// `(low-pass, band-pass, high-pass)`.
    #[inline]
    fn step(&mut self, x: i64) -> (i64, i64, i64) {
        let v3 = x.wrapping_sub(self.ic2);
        let v1 = self.a1.times(self.ic1).wrapping_add(self.a2.times(v3));
        let v2 = self
            .ic2
            .wrapping_add(self.a2.times(self.ic1))
            .wrapping_add(self.a3.times(v3));
        self.ic1 = v1.wrapping_mul(2).wrapping_sub(self.ic1);
        self.ic2 = v2.wrapping_mul(2).wrapping_sub(self.ic2);
        (v2, v1, x.wrapping_sub(v1).wrapping_sub(v2))
    }
}

/// Running integer sums of one quantity.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
struct Sums {
    squares: u128,
    max: i64,
    min: i64,
}

impl Sums {
    const EMPTY: Self = Self {
        squares: 0,
        max: i64::MIN,
        min: i64::MAX,
    };

    #[inline]
    fn add(&mut self, y: i64) {
        // To 2^-15 count, rounded, saturating: |y| < 2^46 in range, so this never clips there.
        let coarse = (y.saturating_add(1 << 16) >> 17).clamp(i32::MIN as i64, i32::MAX as i64);
        self.squares += (coarse * coarse) as u128;
        self.max = self.max.max(y);
        self.min = self.min.min(y);
    }

    /// As the float accumulator, for one read-out function.
    #[allow(clippy::float_arithmetic)]
    fn level(&self, samples: u32, scale_per_unit: f64) -> Level {
        let as_float = Accumulator {
            // squares are of 2^-15 counts; the accumulator's unit is 2^-32 counts.
            total: self.squares as f64 * (1u64 << 34) as f64,
            run: 0.0,
            max: self.max as f32,
            min: self.min as f32,
        };
        if samples == 0 {
            return Level::default();
        }
        // Peaks from the exact integers (an f32 of 2^-32 counts keeps 24 bits of them).
        let peak = (self.max as f64).abs().max((self.min as f64).abs());
        let mut level = as_float.level(samples, scale_per_unit);
        level.peak = (peak * scale_per_unit) as f32;
        level.peak_to_peak = ((self.max as f64 - self.min as f64) * scale_per_unit) as f32;
        level
    }
}

/// An integer sample the fixed-point meter takes: `i16` (Q15) or `i32` (Q31) counts.
pub trait CountSample: Copy + sealed::Sealed {
    /// Left shift from a count to the meter's internal `2^-32` of an `i16` count.
    const SHIFT: u32;
    /// The count, widened.
    fn widen(self) -> i64;
}

mod sealed {
    pub trait Sealed {}
    impl Sealed for i16 {}
    impl Sealed for i32 {}
}

impl CountSample for i16 {
    const SHIFT: u32 = 32;
    fn widen(self) -> i64 {
        self as i64
    }
}

impl CountSample for i32 {
    const SHIFT: u32 = 16;
    fn widen(self) -> i64 {
        self as i64
    }
}

/// The [`LevelMeter`](super::LevelMeter) in integers, for `i16` (`LevelMeterFixed<i16>`)
/// or `i32` (`LevelMeterFixed<i32>`) counts; the sensitivity is engineering units per
/// count, as for the fixed-point spectrum analyzers. See the [module docs](super).
///
/// ```
/// use leakless::analysis::bands::Band;
/// use leakless::analysis::levels::{LevelConfig, LevelMeterFixed};
/// use leakless::units::Sensitivity;
///
/// let fs = 25_600.0;
/// let config = LevelConfig::new(fs, Band::SEVERITY_10_1000_HZ)
///     .unwrap()
///     // counts -> m/s^2: 100 mV/g through +-10 V on 16 bits
///     .with_sensitivity(Sensitivity::MillivoltsPerG(100.0).m_s2_per_count(10.0 / 32_768.0))
///     .with_full_scale(32_767.0);
/// let mut meter = LevelMeterFixed::<i16>::new(config).unwrap();
/// let counts: Vec<i16> = (0..3 * 25_600)
///     .map(|n| (3276.8 * (core::f64::consts::TAU * 159.155 * n as f64 / fs as f64).sin()) as i16)
///     .collect();
/// meter.push_counts(&counts);
/// let v = meter.latest().unwrap().velocity;
/// // 10 g peak (3276.8 counts) at 159.155 Hz is 98.07 mm/s peak, 69.34 mm/s rms (the
/// // band-pass reads 0.9993 there).
/// assert!((v.rms / 0.069_34 - 1.0).abs() < 0.005);
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct LevelMeterFixed<S: CountSample> {
    config: LevelConfig,
    high_edge_first: OnePole,
    high_edge_pair: StateVariable,
    low_edge_first: OnePole,
    acceleration_pair: StateVariable,
    integrated_pair: StateVariable,
    sums: [Sums; 3],
    interval: Interval,
    overload_at: i64,
    latest: Option<OverallLevels>,
    sample: core::marker::PhantomData<S>,
}

impl<S: CountSample> LevelMeterFixed<S> {
    /// A meter at rest; the checks of [`LevelMeter::new`](super::LevelMeter::new).
    #[allow(clippy::float_arithmetic)]
    pub fn new(config: LevelConfig) -> Result<Self, ConfigError> {
        config.check_scaling()?;
        let (g_low, g_high) = config.warped_edges();
        // |x| >= full_scale for an integer x is |x| >= ceil(full_scale).
        let overload_at = config.full_scale.map_or(i64::MAX, |fs| {
            libm::ceil(fs as f64).min(i64::MAX as f64) as i64
        });
        Ok(Self {
            config,
            high_edge_first: OnePole::new(g_high),
            high_edge_pair: StateVariable::new(g_high),
            low_edge_first: OnePole::new(g_low),
            acceleration_pair: StateVariable::new(g_low),
            integrated_pair: StateVariable::new(g_low),
            sums: [Sums::EMPTY; 3],
            interval: Interval::new(&config),
            overload_at,
            latest: None,
            sample: core::marker::PhantomData,
        })
    }

    /// The settings.
    pub const fn config(&self) -> &LevelConfig {
        &self.config
    }

    /// Filters `counts`, any number; returns how many intervals they completed.
    pub fn push_counts(&mut self, counts: &[S]) -> u32 {
        let before = self.interval.completed;
        for &count in counts {
            let raw = count.widen();
            if raw.abs() >= self.overload_at {
                self.interval.overloaded = self.interval.overloaded.saturating_add(1);
            }
            let x = raw << S::SHIFT;
            let band_limited = self.high_edge_pair.step(self.high_edge_first.step(x).0).0;
            let (low, high) = self.low_edge_first.step(band_limited);
            let acceleration = self.acceleration_pair.step(high).2;
            let (_, displacement, velocity) = self.integrated_pair.step(low);
            if self.interval.reads() {
                self.read([acceleration, velocity, displacement]);
            }
        }
        self.interval.completed.wrapping_sub(before)
    }

    #[inline]
    fn read(&mut self, values: [i64; 3]) {
        for (sum, value) in self.sums.iter_mut().zip(values) {
            sum.add(value);
        }
        self.interval.samples += 1;
        if self.interval.samples >= self.config.interval_samples {
            self.latest = self.running();
            self.interval.completed = self.interval.completed.wrapping_add(1);
            self.interval.restart();
            self.sums = [Sums::EMPTY; 3];
        }
    }

    /// The last completed interval's reading, if any.
    pub const fn latest(&self) -> Option<OverallLevels> {
        self.latest
    }

    /// The open interval's reading so far (see [`LevelMeter::running`](super::LevelMeter::running)).
    #[allow(clippy::float_arithmetic)]
    pub fn running(&self) -> Option<OverallLevels> {
        let samples = self.interval.samples;
        if samples == 0 {
            return None;
        }
        // Internal units are 2^-SHIFT counts.
        let per_unit = self.config.sensitivity as f64 / (1u64 << S::SHIFT) as f64;
        let levels = core::array::from_fn(|i| {
            let q = QUANTITIES[i];
            self.sums[i].level(samples, per_unit * self.config.normalisation(q))
        });
        Some(self.interval.counted(levels))
    }

    /// Intervals completed since the start or the last reset (wrapping).
    pub const fn intervals(&self) -> u32 {
        self.interval.completed
    }

    /// Whether the settling time has passed.
    pub const fn is_settled(&self) -> bool {
        self.interval.settle_left == 0
    }

    /// Back to rest.
    pub fn reset(&mut self) {
        if let Ok(fresh) = Self::new(self.config) {
            *self = fresh;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Exact arithmetic: the product against i128, for coefficients of every shift and states
    // across the range the meter uses.
    #[test]
    #[allow(clippy::float_arithmetic)]
    fn the_split_product_is_the_rounded_exact_product() {
        let values = [
            0.999_999, 0.75, 0.5, 0.123, 2.4e-4, 6.0e-8, 1.0e-12, 3.0e-18,
        ];
        let states = [
            0i64,
            1,
            -1,
            (1 << 32) + 12345,
            -(1 << 47),
            (1 << 47) - 1,
            (1 << 49) + 987_654_321,
            -(1 << 49) - 3,
        ];
        for v in values {
            let c = Coefficient::new(v);
            assert!(c.mantissa == 0 || (1 << 30..1 << 31).contains(&c.mantissa));
            for x in states {
                let exact = x as i128 * c.mantissa as i128;
                let rounded = (exact + (1i128 << (c.shift - 1))) >> c.shift;
                assert_eq!(c.times(x) as i128, rounded, "{v} x {x}");
            }
        }
    }
}
