//! The demo scenario: an **invented** cooling-water pump set, as a deterministic signal
//! generator (feature `demo`).
//!
//! Everything here is made-up demo data for the demo programs and for firmware bring-up. It
//! is plausible, not measured, and no test uses it as a reference value: tests check that the
//! generator does what this page says, never that the machine "should" read these numbers.
//!
//! # The machine
//!
//! A 4-pole induction motor on a 50 Hz supply runs at 1482 rpm and drives a centrifugal pump
//! with a 7-vane impeller. The drive-end ball bearing (9 balls of 12.7 mm on a 58 mm pitch
//! diameter, 0 deg contact angle) has a developing outer-race defect. An accelerometer of
//! 100 mV/g is read by a 16-bit converter at 25.6 kHz.
//!
//! Every frequency is derived in code from those numbers (common practice for the formulas):
//!
//! | what | formula | value |
//! |---|---|---|
//! | running speed 1x | 1482 rpm / 60 | 24.7 Hz |
//! | 2x, 3x | k x 1x | 49.4, 74.1 Hz |
//! | vane pass | 7 vanes x 1x | 172.9 Hz |
//! | twice line frequency (electrical) | 2 x 50 Hz | 100 Hz |
//! | synchronous speed | 2 x 50 Hz / 4 poles | 25 Hz (1500 rpm) |
//! | slip | (25 - 24.7) / 25 | 1.2 %, slip frequency 0.3 Hz |
//! | pole pass | 4 poles x slip frequency | 1.2 Hz |
//! | FTF, BPFO, BPFI, BSF | [`crate::analysis::bearing`] at 1x | 9.646, 86.81, 135.49, 53.70 Hz |
//!
//! # The signal
//!
//! The invented amplitudes are set as velocity (the way machine condition is usually judged)
//! and turned into acceleration, `a_peak = sqrt(2) * 2 pi f * v_rms`:
//!
//! | tone | Hz | velocity, mm/s rms | acceleration, m/s^2 rms | m/s^2 peak | g peak |
//! |---|---|---|---|---|---|
//! | 1x | 24.7 | 2.5 | 0.388 | 0.549 | 0.056 |
//! | 2x | 49.4 | 1.0 | 0.310 | 0.439 | 0.045 |
//! | 3x | 74.1 | 0.4 | 0.186 | 0.263 | 0.027 |
//! | vane pass | 172.9 | 1.2 | 1.304 | 1.844 | 0.188 |
//! | 2x line | 100 | 0.3 | 0.188 | 0.267 | 0.027 |
//!
//! Overall velocity of the tones: 2.99 mm/s rms; overall acceleration 1.42 m/s^2 rms. The vane
//! pass dominates the acceleration, the 1x the velocity.
//!
//! The outer-race defect is struck at BPFO (86.81 Hz); each impact rings a structural
//! resonance at 3 kHz with 5 % damping: `2.0 m/s^2 * exp(-sigma t) * sin(omega_d t)`, with
//! `sigma = 0.05 * 2 pi 3000 = 942 /s` (time constant 1.06 ms, against 11.5 ms between
//! impacts). That train is about 0.30 m/s^2 rms in acceleration but only about 0.016 mm/s in
//! velocity (at 3 kHz): invisible in a velocity overall, plain in an envelope spectrum, which
//! shows lines at BPFO and its harmonics. An outer race does not move through the load zone,
//! so the impacts are of equal strength; the impact times are exactly periodic (real
//! bearings slip and jitter by a percent or two; this one does not).
//!
//! Broadband noise of 0.1 m/s^2 rms, white from 0 to 12.8 kHz, sits under everything.
//!
//! # Volts and counts
//!
//! Volts = acceleration / 9.80665 m/s^2 per g x 0.1 V/g (so 10.197 mV per m/s^2). The
//! converter spans +-2.5 V by default (+-25 g): `counts = round(volts * 32768 / 2.5)`, clipped
//! to -32768 ..= 32767 as a real converter clips (its top code is one step short of +full
//! scale). One count is 76.3 uV = 7.48 mm/s^2 (133.7 counts per m/s^2); the whole signal
//! peaks near 45 mV, about 600 counts, so the converter's quantisation (0.29 counts rms) is
//! far under the 13-count noise.
//!
//! # How it is generated, and what it costs
//!
//! Sample after sample, with no state but a few words, so the stream is the same however it is
//! cut into calls (tested). It should also be the same on the host and on a microcontroller:
//! the arithmetic is integer plus IEEE f32 add and multiply, which every target rounds alike,
//! and `libm` is plain Rust, used once per impact and per sample for the converter's rounding.
//! That has not yet been compared on a board or in QEMU.
//!
//! * Tones: a 32-bit phase accumulator per tone (frequency resolution 25.6 kHz / 2^32 = 6 uHz)
//!   into a 1024-point sine table (4 KiB of flash) with linear interpolation. Its error is at
//!   most `(2 pi / 1024)^2 / 8 = 4.7e-6` of the tone (spurs 106 dB down), below 16-bit
//!   quantisation. No drift, however long it runs.
//! * Impacts: a two-pole recursive resonator, `y[n] = 2 r cos(theta) y[n-1] - r^2 y[n-2]`,
//!   which reproduces a damped sine exactly. Each impact adds the burst's value at its true
//!   (fractional-sample) time to the resonator's two state words: two `expf` and two `sinf`
//!   per impact, 87 times a second.
//! * Noise: xorshift32 (Marsaglia's 13/17/5 triple), two draws a sample, the sum of their four
//!   16-bit halves: nearly Gaussian (Irwin-Hall of 4), exactly known variance, bounded at
//!   +-3.46 sigma. The sequence repeats after 2^31 samples, 23 hours.
//!
//! About 35 f32 operations a sample. Estimated, not measured: on a Cortex-M4F a few hundred
//! cycles; on a Cortex-M0+, where float is done in software, perhaps 1500-2500 cycles a
//! sample, so there it fills a block for analysis rather than keeping up with 25.6 kHz.
//!
//! ```
//! use leakless::demo::PumpScenario;
//!
//! let mut pump = PumpScenario::new();
//! let mut block = [0i16; 512];
//! pump.fill_counts(&mut block); // the next 512 samples, as the converter would give them
//!
//! let vane = pump.tones().iter().find(|t| t.name == "vane pass").unwrap();
//! assert!((vane.frequency_hz - 7.0 * pump.running_speed_hz()).abs() < 1e-9);
//! assert!((pump.bearing_frequencies().bpfo_hz - 86.81).abs() < 0.01);
//! ```

use crate::analysis::bearing::{BearingGeometry, DefectFrequencies};
use crate::error::ConfigError;
use crate::math;

use core::f64::consts::{PI, SQRT_2};

/// Supply (line) frequency, Hz.
pub const LINE_FREQUENCY_HZ: f64 = 50.0;
/// Poles of the induction motor.
pub const MOTOR_POLES: u32 = 4;
/// Motor (and pump) speed under load, rpm.
pub const MOTOR_SPEED_RPM: f64 = 1482.0;
/// Vanes of the pump impeller.
pub const IMPELLER_VANES: u32 = 7;
/// The drive-end ball bearing: 9 balls of 12.7 mm on a 58 mm pitch diameter, 0 deg contact.
pub const DRIVE_END_BEARING: BearingGeometry = match BearingGeometry::new(9, 12.7, 58.0, 0.0) {
    Ok(bearing) => bearing,
    Err(_) => panic!("impossible bearing geometry"),
};
/// Accelerometer sensitivity, V per g.
pub const SENSITIVITY_V_PER_G: f64 = 0.100;
pub use crate::units::STANDARD_GRAVITY_M_S2;
/// Sample rate of the converter, Hz.
pub const SAMPLE_RATE_HZ: f64 = 25_600.0;
/// Default converter span: +-2.5 V.
pub const DEFAULT_FULL_SCALE_V: f32 = 2.5;
/// Default seed of the noise generator.
pub const DEFAULT_SEED: u32 = 0x1EA4_1E55;

/// Velocity (mm/s rms) of each invented tone; frequencies are derived in [`PumpScenario::new`].
const TONE_VELOCITY_RMS_MM_S: [f64; TONE_COUNT] = [2.5, 1.0, 0.4, 1.2, 0.3];
const TONE_NAMES: [&str; TONE_COUNT] = [
    "1x running speed",
    "2x running speed",
    "3x running speed",
    "vane pass",
    "2x line frequency",
];
const TONE_COUNT: usize = 5;
/// The structural resonance the bearing impacts excite.
const RESONANCE_HZ: f64 = 3000.0;
const RESONANCE_DAMPING_RATIO: f64 = 0.05;
/// Starting value of each impact's exponential envelope, m/s^2.
const IMPACT_AMPLITUDE_M_S2: f64 = 2.0;
/// Broadband noise, m/s^2 rms.
const NOISE_RMS_M_S2: f64 = 0.1;

/// Sine table for the tone oscillators: one period in 1024 steps, plus the first point again
/// so that interpolation never wraps. Built at compile time from exact rational turns.
static SINE_TABLE: [f32; SINE_TABLE_LEN + 1] = {
    let mut table = [0.0f32; SINE_TABLE_LEN + 1];
    let mut i = 0;
    while i <= SINE_TABLE_LEN {
        table[i] = math::sin_turns(i as u64, SINE_TABLE_LEN as u64) as f32;
        i += 1;
    }
    table
};
const SINE_TABLE_LEN: usize = 1024;
/// Phase bits below the table index: 32 - log2(1024).
const SINE_FRACTION_BITS: u32 = 22;

/// One sinusoidal component of the scenario.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Tone {
    /// What causes it, e.g. `"vane pass"`.
    pub name: &'static str,
    /// Frequency, Hz.
    pub frequency_hz: f64,
    /// Acceleration amplitude (peak, not rms), m/s^2.
    pub acceleration_peak_m_s2: f64,
}

impl Tone {
    /// RMS acceleration, m/s^2: peak / sqrt(2).
    pub fn acceleration_rms_m_s2(&self) -> f64 {
        self.acceleration_peak_m_s2 / SQRT_2
    }

    /// The velocity this acceleration corresponds to, mm/s rms: `a_rms / (2 pi f)`.
    pub fn velocity_rms_mm_s(&self) -> f64 {
        1000.0 * self.acceleration_rms_m_s2() / (2.0 * PI * self.frequency_hz)
    }
}

/// The train of bursts from the bearing defect:
/// `amplitude_m_s2 * exp(-sigma t) * sin(omega_d t)` after each impact, impacts `1 / rate_hz`
/// apart, the first at t = 0, where `sigma = damping_ratio * 2 pi resonance_hz` and
/// `omega_d = 2 pi resonance_hz * sqrt(1 - damping_ratio^2)`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ImpactTrain {
    /// Impacts per second (the outer-race defect: BPFO), Hz.
    pub rate_hz: f64,
    /// Undamped natural frequency of the resonance, Hz.
    pub resonance_hz: f64,
    /// Damping ratio of the resonance (a fraction of critical).
    pub damping_ratio: f64,
    /// Starting value of each burst's exponential envelope, m/s^2. The burst's highest
    /// sample is somewhat lower, since the sine starts at zero while the envelope decays.
    pub amplitude_m_s2: f64,
}

impl ImpactTrain {
    /// Decay rate `sigma` of each burst, 1/s.
    pub fn decay_per_s(&self) -> f64 {
        self.damping_ratio * 2.0 * PI * self.resonance_hz
    }

    /// Damped angular frequency `omega_d` of each burst, rad/s.
    pub fn damped_rad_per_s(&self) -> f64 {
        2.0 * PI * self.resonance_hz * libm::sqrt(1.0 - self.damping_ratio * self.damping_ratio)
    }
}

/// The invented pump set as a continuous, deterministic sample stream. See the
/// [module documentation](self) for every number.
///
/// Each `fill_*` call continues where the last one stopped, whichever of them it was: the
/// volts and the counts are two views of one stream.
#[derive(Clone, Debug)]
pub struct PumpScenario {
    tones: [Tone; TONE_COUNT],
    impacts: ImpactTrain,
    bearing: DefectFrequencies,
    full_scale_v: f32,
    counts_per_volt: f32,
    oscillators: Oscillators,
}

/// The generator's state; all of it advances by exactly one sample per sample.
#[derive(Clone, Debug)]
struct Oscillators {
    tone_phase: [u32; TONE_COUNT],
    tone_step: [u32; TONE_COUNT],
    tone_amplitude_v: [f32; TONE_COUNT],
    impact_phase: u32,
    impact_step: u32,
    impact_amplitude_v: f32,
    /// `sigma` and `omega_d` per sample period.
    decay_per_sample: f32,
    damped_rad_per_sample: f32,
    resonator_a1: f32,
    resonator_a2: f32,
    /// y[n-1] and y[n-2] of the resonator.
    resonator_y1: f32,
    resonator_y2: f32,
    noise_state: u32,
    noise_v_per_count: f32,
}

impl Default for PumpScenario {
    fn default() -> Self {
        Self::new()
    }
}

impl PumpScenario {
    /// The scenario with [`DEFAULT_SEED`] and the default +-2.5 V converter.
    pub fn new() -> Self {
        Self::with_seed(DEFAULT_SEED)
    }

    /// The scenario with another noise seed. Tones and impacts do not depend on it. Seed 0
    /// (the one state xorshift cannot leave) is replaced by [`DEFAULT_SEED`].
    pub fn with_seed(seed: u32) -> Self {
        let running_hz = running_speed_hz();
        let tone_hz = [
            running_hz,
            2.0 * running_hz,
            3.0 * running_hz,
            IMPELLER_VANES as f64 * running_hz,
            2.0 * LINE_FREQUENCY_HZ,
        ];
        let mut tones = [Tone {
            name: "",
            frequency_hz: 0.0,
            acceleration_peak_m_s2: 0.0,
        }; TONE_COUNT];
        for (i, tone) in tones.iter_mut().enumerate() {
            *tone = Tone {
                name: TONE_NAMES[i],
                frequency_hz: tone_hz[i],
                acceleration_peak_m_s2: SQRT_2
                    * 2.0
                    * PI
                    * tone_hz[i]
                    * (TONE_VELOCITY_RMS_MM_S[i] / 1000.0),
            };
        }

        // The speed is a positive constant, so the only error case cannot happen; the orders
        // times the speed are the same numbers without the check.
        let orders = DRIVE_END_BEARING.defect_orders();
        let bearing = DefectFrequencies {
            ftf_hz: orders.ftf * running_hz,
            bpfo_hz: orders.bpfo * running_hz,
            bpfi_hz: orders.bpfi * running_hz,
            bsf_hz: orders.bsf * running_hz,
        };
        let impacts = ImpactTrain {
            rate_hz: bearing.bpfo_hz,
            resonance_hz: RESONANCE_HZ,
            damping_ratio: RESONANCE_DAMPING_RATIO,
            amplitude_m_s2: IMPACT_AMPLITUDE_M_S2,
        };

        let volts_per_m_s2 = volts_per_m_s2();
        let mut tone_step = [0u32; TONE_COUNT];
        let mut tone_amplitude_v = [0.0f32; TONE_COUNT];
        for i in 0..TONE_COUNT {
            tone_step[i] = phase_step(tones[i].frequency_hz);
            tone_amplitude_v[i] = (tones[i].acceleration_peak_m_s2 * volts_per_m_s2) as f32;
        }
        let sample_period_s = 1.0 / SAMPLE_RATE_HZ;
        let decay = impacts.decay_per_s() * sample_period_s;
        let damped = impacts.damped_rad_per_s() * sample_period_s;
        let r = libm::exp(-decay);
        // Four 16-bit uniforms, each of variance (65536^2 - 1) / 12 counts^2.
        let noise_sum_variance = 4.0 * (65536.0f64 * 65536.0 - 1.0) / 12.0;
        let oscillators = Oscillators {
            tone_phase: [0; TONE_COUNT],
            tone_step,
            tone_amplitude_v,
            impact_phase: 0,
            impact_step: phase_step(impacts.rate_hz),
            impact_amplitude_v: (impacts.amplitude_m_s2 * volts_per_m_s2) as f32,
            decay_per_sample: decay as f32,
            damped_rad_per_sample: damped as f32,
            resonator_a1: (2.0 * r * libm::cos(damped)) as f32,
            resonator_a2: (r * r) as f32,
            resonator_y1: 0.0,
            resonator_y2: 0.0,
            noise_state: if seed == 0 { DEFAULT_SEED } else { seed },
            noise_v_per_count: (NOISE_RMS_M_S2 * volts_per_m_s2 / libm::sqrt(noise_sum_variance))
                as f32,
        };
        let full_scale_v = DEFAULT_FULL_SCALE_V;
        Self {
            tones,
            impacts,
            bearing,
            full_scale_v,
            counts_per_volt: 32768.0 / full_scale_v,
            oscillators,
        }
    }

    /// The same scenario read by a converter spanning `+-full_scale_v` volts.
    ///
    /// # Errors
    ///
    /// [`ConfigError::FullScale`] if `full_scale_v` is not finite or not > 0.
    pub fn with_full_scale_volts(mut self, full_scale_v: f32) -> Result<Self, ConfigError> {
        if !full_scale_v.is_finite() || full_scale_v <= 0.0 {
            return Err(ConfigError::FullScale);
        }
        self.full_scale_v = full_scale_v;
        self.counts_per_volt = 32768.0 / full_scale_v;
        Ok(self)
    }

    /// The sinusoidal components: 1x, 2x, 3x, vane pass, 2x line frequency.
    pub fn tones(&self) -> &[Tone] {
        &self.tones
    }

    /// The bearing-defect burst train.
    pub fn impacts(&self) -> &ImpactTrain {
        &self.impacts
    }

    /// The drive-end bearing's defect frequencies at the running speed.
    pub fn bearing_frequencies(&self) -> &DefectFrequencies {
        &self.bearing
    }

    /// Shaft speed, Hz (1482 rpm / 60).
    pub fn running_speed_hz(&self) -> f64 {
        running_speed_hz()
    }

    /// Synchronous speed of the motor, Hz: `2 * line / poles`.
    pub fn synchronous_speed_hz(&self) -> f64 {
        2.0 * LINE_FREQUENCY_HZ / MOTOR_POLES as f64
    }

    /// Slip, as a fraction of synchronous speed.
    pub fn slip(&self) -> f64 {
        let sync = self.synchronous_speed_hz();
        (sync - self.running_speed_hz()) / sync
    }

    /// Pole-pass frequency, Hz: poles times the slip frequency. It is also the spacing
    /// between 4x running speed (98.8 Hz) and twice line frequency (100 Hz): telling those
    /// two apart needs a resolution finer than this.
    pub fn pole_pass_hz(&self) -> f64 {
        MOTOR_POLES as f64 * (self.synchronous_speed_hz() - self.running_speed_hz())
    }

    /// Sample rate, Hz.
    pub fn sample_rate_hz(&self) -> f64 {
        SAMPLE_RATE_HZ
    }

    /// Broadband noise, m/s^2 rms.
    pub fn noise_rms_m_s2(&self) -> f64 {
        NOISE_RMS_M_S2
    }

    /// Sensor output per unit acceleration, V per m/s^2.
    pub fn volts_per_m_s2(&self) -> f64 {
        volts_per_m_s2()
    }

    /// The converter's span: it reads `-full_scale_volts ..< +full_scale_volts`.
    pub fn full_scale_volts(&self) -> f32 {
        self.full_scale_v
    }

    /// Counts per volt, `32768 / full_scale_volts`.
    pub fn counts_per_volt(&self) -> f32 {
        self.counts_per_volt
    }

    /// What the converter reads for `volts`: rounded to the nearest count (halves away from
    /// zero), clipped to -32768 ..= 32767. NaN reads 0. Never panics.
    pub fn volts_to_counts(&self, volts: f32) -> i16 {
        // `as` saturates at the i16 limits and maps NaN to 0 (a language guarantee): that is
        // exactly the converter's clipping.
        libm::roundf(volts * self.counts_per_volt) as i16
    }

    /// Writes the next `out.len()` samples, in volts at the sensor output.
    pub fn fill_volts(&mut self, out: &mut [f32]) {
        for sample in out.iter_mut() {
            *sample = self.oscillators.next_volts();
        }
    }

    /// Writes the next `out.len()` samples as converter counts
    /// ([`volts_to_counts`](Self::volts_to_counts) of the same stream as
    /// [`fill_volts`](Self::fill_volts)).
    pub fn fill_counts(&mut self, out: &mut [i16]) {
        for sample in out.iter_mut() {
            let volts = self.oscillators.next_volts();
            *sample = self.volts_to_counts(volts);
        }
    }
}

fn running_speed_hz() -> f64 {
    MOTOR_SPEED_RPM / 60.0
}

fn volts_per_m_s2() -> f64 {
    SENSITIVITY_V_PER_G / STANDARD_GRAVITY_M_S2
}

/// Phase-accumulator step for `frequency_hz`: `round(f / fs * 2^32)`. Every frequency here is
/// below Nyquist, so the step fits in a u32.
fn phase_step(frequency_hz: f64) -> u32 {
    libm::round(frequency_hz / SAMPLE_RATE_HZ * 4_294_967_296.0) as u32
}

/// `sin(2 pi phase / 2^32)` from the table, linearly interpolated.
fn sine_of_phase(phase: u32) -> f32 {
    let index = (phase >> SINE_FRACTION_BITS) as usize; // 0 ..= 1023, so index + 1 is in range
    let fraction = (phase & ((1 << SINE_FRACTION_BITS) - 1)) as f32
        * (1.0 / (1u32 << SINE_FRACTION_BITS) as f32);
    let here = SINE_TABLE[index];
    here + fraction * (SINE_TABLE[index + 1] - here)
}

impl Oscillators {
    fn next_volts(&mut self) -> f32 {
        let mut volts = 0.0f32;
        for i in 0..TONE_COUNT {
            volts += self.tone_amplitude_v[i] * sine_of_phase(self.tone_phase[i]);
            self.tone_phase[i] = self.tone_phase[i].wrapping_add(self.tone_step[i]);
        }
        volts + self.next_impact_response() + self.next_noise()
    }

    /// The resonator's output for this sample, after adding any impact that fell since the
    /// previous sample.
    fn next_impact_response(&mut self) -> f32 {
        let mut y0 = self.resonator_a1 * self.resonator_y1 - self.resonator_a2 * self.resonator_y2;
        // The impact accumulator wrapped (or this is sample 0, at which the first impact
        // falls) exactly when its phase is below one step; the phase then says how long ago,
        // in samples.
        if self.impact_phase < self.impact_step {
            let samples_since = self.impact_phase as f32 / self.impact_step as f32;
            // The burst from an impact `samples_since` ago, at this sample and (virtually) at
            // the one before: the recursion carries it on from these two values exactly.
            y0 += self.burst_at(samples_since);
            self.resonator_y1 += self.burst_at(samples_since - 1.0);
        }
        self.impact_phase = self.impact_phase.wrapping_add(self.impact_step);
        self.resonator_y2 = self.resonator_y1;
        self.resonator_y1 = y0;
        y0
    }

    /// `A exp(-sigma t) sin(omega_d t)`, t in sample periods (may be negative: the value the
    /// recursion needs one sample before the impact).
    fn burst_at(&self, samples: f32) -> f32 {
        self.impact_amplitude_v
            * libm::expf(-self.decay_per_sample * samples)
            * libm::sinf(self.damped_rad_per_sample * samples)
    }

    fn next_noise(&mut self) -> f32 {
        let a = self.next_random();
        let b = self.next_random();
        let sum = (a & 0xFFFF) + (a >> 16) + (b & 0xFFFF) + (b >> 16);
        // Centre: each 16-bit value averages 32767.5. The sum is below 2^24, so exact in f32.
        (sum as i32 - 131_070) as f32 * self.noise_v_per_count
    }

    /// xorshift32 (Marsaglia 2003, shifts 13, 17, 5): period 2^32 - 1 over non-zero states.
    fn next_random(&mut self) -> u32 {
        let mut x = self.noise_state;
        x ^= x << 13;
        x ^= x >> 17;
        x ^= x << 5;
        self.noise_state = x;
        x
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEN_SECONDS: usize = 256_000;

    fn volts(scenario: &mut PumpScenario, len: usize) -> Vec<f32> {
        let mut out = vec![0.0f32; len];
        scenario.fill_volts(&mut out);
        out
    }

    fn mean_square(samples: &[f64]) -> f64 {
        samples.iter().map(|x| x * x).sum::<f64>() / samples.len() as f64
    }

    /// The scenario's output in m/s^2, with some components switched off.
    fn acceleration(tones: bool, impacts: bool, noise: bool, len: usize) -> Vec<f64> {
        let mut scenario = PumpScenario::new();
        let o = &mut scenario.oscillators;
        if !tones {
            o.tone_amplitude_v = [0.0; TONE_COUNT];
        }
        if !impacts {
            o.impact_amplitude_v = 0.0;
        }
        if !noise {
            o.noise_v_per_count = 0.0;
        }
        let per_volt = 1.0 / scenario.volts_per_m_s2();
        volts(&mut scenario, len)
            .into_iter()
            .map(|v| v as f64 * per_volt)
            .collect()
    }

    /// One-sided amplitude of a tone at `frequency_hz` by a single-frequency DFT (f64).
    fn dft_amplitude(x: &[f64], frequency_hz: f64) -> f64 {
        let (mut re, mut im) = (0.0, 0.0);
        for (n, &v) in x.iter().enumerate() {
            let angle = 2.0 * PI * frequency_hz * n as f64 / SAMPLE_RATE_HZ;
            re += v * angle.cos();
            im -= v * angle.sin();
        }
        2.0 * (re * re + im * im).sqrt() / x.len() as f64
    }

    #[test]
    fn chunking_does_not_change_the_stream() {
        let len = 20_000; // about 68 impacts
        let whole = volts(&mut PumpScenario::new(), len);
        let mut chunked = PumpScenario::new();
        let mut pieces = Vec::new();
        let sizes = [1usize, 2, 3, 5, 64, 100, 1000, 4096, 7, 0, 295, 296];
        let mut done = 0;
        for &size in sizes.iter().cycle() {
            if done >= len {
                break;
            }
            let size = size.min(len - done);
            pieces.extend(volts(&mut chunked, size));
            done += size;
        }
        assert!(whole
            .iter()
            .zip(&pieces)
            .all(|(a, b)| a.to_bits() == b.to_bits()));

        // Counts are the same stream: alternating the two views changes nothing either.
        let mut counts = vec![0i16; len];
        PumpScenario::new().fill_counts(&mut counts);
        let mut mixed = PumpScenario::new();
        let reference = PumpScenario::new();
        let mut v = [0.0f32; 333];
        let mut c = [0i16; 333];
        for (block, start) in (0..len).step_by(333).enumerate() {
            let n = 333.min(len - start);
            if block % 2 == 0 {
                mixed.fill_volts(&mut v[..n]);
                for i in 0..n {
                    assert_eq!(reference.volts_to_counts(v[i]), counts[start + i]);
                }
            } else {
                mixed.fill_counts(&mut c[..n]);
                assert_eq!(&c[..n], &counts[start..start + n]);
            }
        }
    }

    #[test]
    fn same_seed_same_samples() {
        let a = volts(&mut PumpScenario::with_seed(7), 5000);
        let b = volts(&mut PumpScenario::with_seed(7), 5000);
        assert!(a.iter().zip(&b).all(|(x, y)| x.to_bits() == y.to_bits()));
        let c = volts(&mut PumpScenario::with_seed(8), 5000);
        assert!(a.iter().zip(&c).filter(|(x, y)| x != y).count() > 4900);
        // Seed 0 cannot drive xorshift; it is documented to mean the default seed.
        let zero = volts(&mut PumpScenario::with_seed(0), 100);
        let default = volts(&mut PumpScenario::new(), 100);
        assert_eq!(zero, default);
    }

    // The derivations of the module table, each by its formula (common practice).
    #[test]
    fn derived_frequencies_follow_the_formulas() {
        let pump = PumpScenario::new();
        let running = 1482.0 / 60.0; // rpm / 60
        assert_eq!(pump.running_speed_hz(), running);
        let t = pump.tones();
        assert_eq!(t[0].frequency_hz, running);
        assert_eq!(t[1].frequency_hz, 2.0 * running);
        assert_eq!(t[2].frequency_hz, 3.0 * running);
        assert_eq!(t[3].frequency_hz, 7.0 * running); // vanes x running speed
        assert_eq!(t[4].frequency_hz, 2.0 * 50.0); // twice line frequency
        assert_eq!(pump.synchronous_speed_hz(), 120.0 * 50.0 / 4.0 / 60.0); // 120 f / p rpm
        assert!((pump.slip() - (1500.0 - 1482.0) / 1500.0).abs() < 1e-15);
        assert!((pump.pole_pass_hz() - 4.0 * (25.0 - running)).abs() < 1e-12);
        // The bearing lines come from analysis::bearing at the running speed.
        let geometry = BearingGeometry::new(9, 12.7, 58.0, 0.0).unwrap();
        let expected = geometry.defect_frequencies(running).unwrap();
        let got = pump.bearing_frequencies();
        for (a, b) in [
            (got.ftf_hz, expected.ftf_hz),
            (got.bpfo_hz, expected.bpfo_hz),
            (got.bpfi_hz, expected.bpfi_hz),
            (got.bsf_hz, expected.bsf_hz),
        ] {
            assert!((a - b).abs() <= 1e-12 * b);
        }
        assert_eq!(pump.impacts().rate_hz, got.bpfo_hz);
        assert_eq!(pump.sample_rate_hz(), 25_600.0);
        // 100 mV/g over standard gravity.
        assert!((pump.volts_per_m_s2() - 0.1 / 9.80665).abs() < 1e-15);
    }

    // a_rms = 2 pi f v_rms, peak = sqrt(2) rms (common practice).
    #[test]
    fn tone_velocity_conversion() {
        let tone = Tone {
            name: "test",
            frequency_hz: 1000.0 / (2.0 * PI), // 2 pi f = 1000 rad/s
            acceleration_peak_m_s2: SQRT_2,
        };
        assert!((tone.acceleration_rms_m_s2() - 1.0).abs() < 1e-15);
        assert!((tone.velocity_rms_mm_s() - 1.0).abs() < 1e-12); // 1 m/s^2 / 1000 rad/s
    }

    // Each tone, alone with the others (no impacts, no noise), read by an f64 DFT over 10 s.
    // Every tone completes a whole number of cycles in 10 s (they are multiples of 0.1 Hz), so
    // the others leak nothing into its line. What remains: the sine table's interpolation
    // error, at most 4.7e-6 of the tone, the phase step's rounding (< 3e-6 Hz, an amplitude
    // loss below 1e-9), and f32 rounding (~1e-7). Tolerance 2e-5 relative. A frequency error
    // of 1 mHz would lose 1.6e-4, and leave a line where none belongs (the second check).
    #[test]
    fn tones_are_at_their_frequencies_with_their_amplitudes() {
        let pump = PumpScenario::new();
        let x = acceleration(true, false, false, TEN_SECONDS);
        for tone in pump.tones() {
            let got = dft_amplitude(&x, tone.frequency_hz);
            let want = tone.acceleration_peak_m_s2;
            println!("{}: relative error {:e}", tone.name, got / want - 1.0);
            assert!(
                (got - want).abs() <= 2e-5 * want,
                "{}: {got} against {want}",
                tone.name
            );
        }
        // 4x (98.8 Hz) is a bin where nothing was put.
        let largest = pump.tones()[3].acceleration_peak_m_s2;
        assert!(dft_amplitude(&x, 4.0 * pump.running_speed_hz()) < 2e-5 * largest);
    }

    // The impact train, alone, against its definition evaluated directly in f64:
    // sum over past impacts k/rate of A exp(-sigma t) sin(omega_d t). The generator places
    // impacts by a 32-bit phase step, rounded by at most half a unit, which moves each impact
    // period by at most P / (2 step); after k impacts that is k times as much. The burst
    // changes by at most A (sigma + omega_d) per second, so that drift bounds the error; f32
    // arithmetic adds about 1e-6 A (allowance 1e-5 A).
    #[test]
    fn impacts_follow_their_definition() {
        let pump = PumpScenario::new();
        let imp = *pump.impacts();
        let len = 12_800; // 0.5 s, 44 impacts
        let x = acceleration(false, true, false, len);
        let period_s = 1.0 / imp.rate_hz;
        let (sigma, omega_d) = (imp.decay_per_s(), imp.damped_rad_per_s());
        let step = (imp.rate_hz / SAMPLE_RATE_HZ * 2f64.powi(32)).round();
        let impacts_in_span = (len as f64 / SAMPLE_RATE_HZ / period_s).ceil();
        let drift_s = impacts_in_span * period_s / (2.0 * step);
        let tolerance =
            imp.amplitude_m_s2 * (sigma + omega_d) * drift_s + 1e-5 * imp.amplitude_m_s2;
        let mut worst: f64 = 0.0;
        for (n, &got) in x.iter().enumerate() {
            let t = n as f64 / SAMPLE_RATE_HZ;
            let last = (t / period_s).floor() as i64;
            let mut want = 0.0;
            for k in (last - 30).max(0)..=last {
                let since = t - k as f64 * period_s;
                want += imp.amplitude_m_s2 * (-sigma * since).exp() * (omega_d * since).sin();
            }
            worst = worst.max((got - want).abs());
        }
        println!("impacts: worst {worst:e} m/s^2, tolerance {tolerance:e}");
        assert!(worst <= tolerance, "worst {worst:e} > {tolerance:e}");
        assert!(x.iter().any(|v| v.abs() > 0.5 * imp.amplitude_m_s2));
    }

    // The noise alone: zero mean, the stated variance, white (lag-1 correlation), bounded.
    // For N samples, the sample variance has a relative standard deviation of
    // sqrt((kurtosis - 1) / N), kurtosis 2.7 for a sum of four uniforms (common practice), so
    // 2.6e-3 over 10 s; mean and lag-1 correlation have standard deviations sigma / sqrt(N)
    // and 1 / sqrt(N). Each check allows 5 standard deviations.
    #[test]
    fn noise_has_its_stated_statistics() {
        let x = acceleration(false, false, true, TEN_SECONDS);
        let n = x.len() as f64;
        let sigma = PumpScenario::new().noise_rms_m_s2();
        let mean = x.iter().sum::<f64>() / n;
        assert!(mean.abs() < 5.0 * sigma / n.sqrt(), "mean {mean}");
        let variance = mean_square(&x) - mean * mean;
        let rel = (variance / (sigma * sigma) - 1.0).abs();
        assert!(rel < 5.0 * (1.7 / n).sqrt(), "variance off by {rel}");
        let lag1 = x.windows(2).map(|w| w[0] * w[1]).sum::<f64>() / (n * variance);
        assert!(lag1.abs() < 5.0 / n.sqrt(), "lag-1 correlation {lag1}");
        // A sum of four uniforms of variance 1/12 each reaches at most 2 / sqrt(1/3) = 3.46
        // standard deviations.
        let peak = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!(peak <= 3.4641 * sigma * 1.000_01, "peak {peak}");
        assert!(peak > 2.5 * sigma);
    }

    // Parseval over 10 s: mean square = sum of tone amplitudes^2 / 2 + the impact train's
    // mean square + the noise variance. The impact train's mean square is integrated here
    // over one period of its steady state (midpoint rule, 200 000 points, in f64).
    // Tolerance 3e-3 of the mean square, from what a finite record leaves over (relative to
    // the total, 2.12 (m/s^2)^2): noise x signal cross term, 5 standard deviations of
    // 2 sqrt(S sigma^2 / N) = 5.7e-4 -> 1.4e-3; tone x impact-harmonic cross terms (the
    // impact lines at 2 BPFO = 173.6 Hz, 0.018 m/s^2, lie 0.7 Hz from the vane pass), each
    // bounded by A B / (2 pi df T), together under 1e-3; the noise's own sampling error
    // (6e-5) and the last, partly recorded impact (4e-5). Tone x tone terms vanish: whole
    // cycles.
    #[test]
    fn overall_level_matches_parseval() {
        let pump = PumpScenario::new();
        let x = acceleration(true, true, true, TEN_SECONDS);
        let measured = mean_square(&x);
        let tones: f64 = pump
            .tones()
            .iter()
            .map(|t| t.acceleration_peak_m_s2.powi(2) / 2.0)
            .sum();
        let imp = *pump.impacts();
        let period_s = 1.0 / imp.rate_hz;
        let (sigma, omega_d) = (imp.decay_per_s(), imp.damped_rad_per_s());
        let points = 200_000;
        let mut impacts = 0.0;
        for i in 0..points {
            let t = (i as f64 + 0.5) / points as f64 * period_s;
            let mut v = 0.0;
            for k in 0..30 {
                let since = t + k as f64 * period_s;
                v += imp.amplitude_m_s2 * (-sigma * since).exp() * (omega_d * since).sin();
            }
            impacts += v * v;
        }
        impacts /= points as f64;
        let noise = pump.noise_rms_m_s2().powi(2);
        let expected = tones + impacts + noise;
        println!(
            "mean square: measured {measured}, expected {expected} \
             (tones {tones}, impacts {impacts}, noise {noise})"
        );
        assert!((measured / expected - 1.0).abs() < 3e-3);
    }

    #[test]
    fn counts_clip_like_a_converter() {
        let pump = PumpScenario::new();
        let lsb = 2.5 / 32768.0;
        assert_eq!(pump.volts_to_counts(0.0), 0);
        assert_eq!(pump.volts_to_counts(lsb), 1);
        assert_eq!(pump.volts_to_counts(-lsb), -1);
        assert_eq!(pump.volts_to_counts(0.5 * lsb), 1); // halves away from zero
        assert_eq!(pump.volts_to_counts(0.49 * lsb), 0);
        assert_eq!(pump.volts_to_counts(2.5 - 0.75 * lsb), 32767); // 32767.25
        assert_eq!(pump.volts_to_counts(2.5), 32767); // +full scale is one step out of reach
        assert_eq!(pump.volts_to_counts(-2.5), -32768);
        for (v, want) in [
            (1e9, 32767),
            (-1e9, -32768),
            (f32::INFINITY, 32767),
            (f32::NEG_INFINITY, -32768),
            (f32::NAN, 0),
        ] {
            assert_eq!(pump.volts_to_counts(v), want);
        }

        // A +-10 mV converter is overdriven by the ~60 mV signal: it clips at both ends, and
        // every count is the clipped reading of the same volts stream.
        let mut small = PumpScenario::new().with_full_scale_volts(0.01).unwrap();
        let mut counts = vec![0i16; 25_600];
        small.fill_counts(&mut counts);
        assert!(counts.contains(&32767) && counts.contains(&-32768));
        let v = volts(&mut PumpScenario::new(), 25_600);
        // Reference in f64. The converter multiplies in f32 (two roundings, under 2.4e-7
        // relative, 0.008 counts at full scale), so within 0.01 count of a half either
        // neighbour is right.
        let mut clipped = 0;
        for (&c, &v) in counts.iter().zip(&v) {
            let exact = v as f64 * 32768.0 / 0.01f32 as f64;
            let want = exact.round().clamp(-32768.0, 32767.0);
            let near_half = (exact.abs().fract() - 0.5).abs() < 0.01;
            let ok = c as f64 == want || (near_half && (c as f64 - exact).abs() < 0.51);
            assert!(ok, "{c} counts for {v} V");
            clipped += (want.abs() >= 32767.0) as usize;
        }
        assert!(clipped > 100);
        // The default converter does not clip this signal.
        let mut counts = vec![0i16; 25_600];
        PumpScenario::new().fill_counts(&mut counts);
        let peak = counts.iter().map(|c| c.unsigned_abs()).max().unwrap();
        println!("default converter: peak {peak} counts");
        assert!(peak > 100 && peak < 32767, "peak {peak} counts");
    }

    #[test]
    fn impossible_full_scale_is_a_typed_error() {
        for bad in [0.0, -1.0, f32::NAN, f32::INFINITY] {
            assert_eq!(
                PumpScenario::new().with_full_scale_volts(bad).err(),
                Some(ConfigError::FullScale)
            );
        }
        let pump = PumpScenario::new().with_full_scale_volts(5.0).unwrap();
        assert_eq!(pump.full_scale_volts(), 5.0);
        assert_eq!(pump.counts_per_volt(), 32768.0 / 5.0);
    }
}
