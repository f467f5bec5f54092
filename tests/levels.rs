//! Time-domain overall levels (`analysis::levels`) against outside references: the analytic
//! velocity and displacement of a sinusoid (`v = a / (2 pi f)`, `d = a / (2 pi f)^2`) times
//! the band-pass response that scipy.signal 1.17.1 evaluates for the same filters
//! (`tests/reference/levels_response.csv`, written by `tests/reference/gen_levels.py`).

mod common;

use std::f64::consts::{SQRT_2, TAU};

use leakless::analysis::bands::Band;
use leakless::analysis::levels::{
    LevelConfig, LevelMeter, LevelMeterFixed, OverallLevels, Quantity,
};
use proptest::prelude::*;

const QUANTITIES: [Quantity; 3] = [
    Quantity::Acceleration,
    Quantity::Velocity,
    Quantity::Displacement,
];

struct Case {
    fs: f64,
    low: f64,
    high: f64,
    integrations: i32,
    frequency: f64,
    analog: f64,
    digital: f64,
}

fn cases() -> Vec<Case> {
    let t = common::read_table("levels_response.csv");
    (0..t.rows.len())
        .map(|r| Case {
            fs: t.f64(r, "fs_hz"),
            low: t.f64(r, "low_hz"),
            high: t.f64(r, "high_hz"),
            integrations: t.i64(r, "integrations") as i32,
            frequency: t.f64(r, "frequency_hz"),
            analog: t.f64(r, "analog"),
            digital: t.f64(r, "digital"),
        })
        .collect()
}

fn quantity(integrations: i32) -> Quantity {
    QUANTITIES[integrations as usize]
}

fn config(fs: f64, low: f64, high: f64, interval: u32) -> LevelConfig {
    LevelConfig::new(fs as f32, Band::new(low as f32, high as f32).unwrap())
        .unwrap()
        .with_interval_samples(interval)
}

/// Ten seconds of reading: every reference frequency has a whole number of periods in it, so
/// the RMS of the steady state is exact (no partial-period term).
const SECONDS: f64 = 10.0;

/// `amplitude sin(2 pi f n / fs)` for the settling time plus the interval, in f64 then f32.
fn tone(config: &LevelConfig, frequency: f64, amplitude: f64) -> Vec<f64> {
    let fs = config.sample_rate_hz() as f64;
    let len = config.settling_samples() as usize + config.interval_samples() as usize;
    (0..len)
        .map(|n| amplitude * (TAU * frequency * n as f64 / fs).sin())
        .collect()
}

fn float_reading(config: LevelConfig, samples: &[f64], chunk: usize) -> OverallLevels {
    let x: Vec<f32> = samples.iter().map(|&v| v as f32).collect();
    let mut meter = LevelMeter::new(config).unwrap();
    for piece in x.chunks(chunk) {
        meter.push(piece);
    }
    assert_eq!(meter.intervals(), 1);
    meter.latest().unwrap()
}

// The Rust evaluation of the designed response is the digital filter scipy builds from the
// same prototype (scipy.signal.butter(..., fs=), sosfreqz, freqz; SciPy 1.17.1). Both are
// float64 evaluations, ours of the closed form, scipy's of the cascaded sections: 1e-8
// relative (in the stop band the response goes as the cube of a ratio of tangents, which
// triples their last-bit differences; 2e-9 is the largest seen).
#[test]
fn the_designed_response_is_scipys_digital_filter() {
    for c in cases() {
        let cfg = config(c.fs, c.low, c.high, 1);
        let ours = cfg.designed_response(quantity(c.integrations), c.frequency);
        assert!(
            (ours / c.digital - 1.0).abs() < 1e-8,
            "fs {} band {}-{} k {} f {}: {ours} vs scipy {}",
            c.fs,
            c.low,
            c.high,
            c.integrations,
            c.frequency,
            c.digital
        );
    }
}

// The digital chain against its analog prototype (scipy.signal.freqs of butter(analog=True)):
// from 12 to 900 Hz within 1 % at 25.6 kHz and above (the bilinear transform's warping grows
// as (f / fs)^2, so the 6.4 kHz rate is only checked in print). Against the ISO 2954 tolerance
// band, from memory (+-10 % mid band, +10 / -20 % at the edges: module docs), the deviation
// over the whole band is far inside.
#[test]
fn the_digital_chain_follows_the_analog_prototype() {
    let mut worst = 0.0f64;
    for c in cases() {
        let deviation = c.digital / c.analog - 1.0;
        if c.fs >= 25_600.0 && (12.0..=900.0).contains(&c.frequency) {
            assert!(
                deviation.abs() < 0.01,
                "fs {} band {}-{} k {} f {}: {deviation:+.4}",
                c.fs,
                c.low,
                c.high,
                c.integrations,
                c.frequency
            );
            worst = worst.max(deviation.abs());
        }
        if c.fs >= 25_600.0 && c.frequency >= c.low && c.frequency <= c.high {
            assert!(deviation.abs() < 0.1, "outside the tolerance band");
        }
    }
    println!("digital vs analog prototype, 12..900 Hz, fs >= 25.6 kHz: worst {worst:.5}");
}

/// The reading of `quantity` against the analytic value of a sinusoid times `response`.
fn relative_error(
    levels: &OverallLevels,
    q: Quantity,
    amplitude: f64,
    response: f64,
) -> (f64, f64) {
    let want_rms = amplitude / SQRT_2 * response;
    let level = levels.level(q);
    (
        level.rms as f64 / want_rms - 1.0,
        level.peak as f64 / (want_rms * SQRT_2) - 1.0,
    )
}

// Single tones 2 to 2000 Hz through the f32 meter, all three quantities: RMS against
// a / sqrt(2) times the designed response, within 0.2 % (the f32 sections' rounding over the
// 10 s interval; the steady state is exact over whole periods); the true peak against
// sqrt(2) RMS: within 0.5 %, and below by at most 1 - cos(pi f / fs) more (a sampled sine's
// crest falls between samples: 3 % at 2 kHz and 25.6 kHz; analytic). The 0.5 % is the
// arithmetic's noise floor on the crest where an output is 120 dB or more below its input
// (displacement of a 2 kHz tone in the 2-1000 Hz band: 1.2e-7 of the input, next to f32's
// 6e-8), which one extreme sample picks up while the RMS averages it away. 12 to 900 Hz at 25.6 kHz: also
// within 1 % of the analog prototype (the bound).
#[test]
fn single_tones_read_the_designed_response() {
    let mut worst = [0.0f64; 2];
    for c in cases() {
        if c.fs != 25_600.0 && c.fs != 6_400.0 {
            continue;
        }
        let cfg = config(c.fs, c.low, c.high, (SECONDS * c.fs) as u32);
        let q = quantity(c.integrations);
        let amplitude = 1.0;
        let levels = float_reading(cfg, &tone(&cfg, c.frequency, amplitude), 4096);
        let (rms, peak) = relative_error(&levels, q, amplitude, c.digital);
        let context = format!(
            "fs {} band {}-{} {q:?} f {}: rms {rms:+.5} peak {peak:+.5}",
            c.fs, c.low, c.high, c.frequency
        );
        assert!(rms.abs() < 2e-3, "{context}");
        let missed_crest = 1.0 - (std::f64::consts::PI * c.frequency / c.fs).cos();
        assert!(peak < 5e-3 && peak > -missed_crest - 5e-3, "{context}");
        worst[0] = worst[0].max(rms.abs());
        if c.fs == 25_600.0 && (12.0..=900.0).contains(&c.frequency) {
            let (analog, _) = relative_error(&levels, q, amplitude, c.analog);
            assert!(
                analog.abs() < 0.01,
                "{context}: against the prototype {analog:+.5}"
            );
            worst[1] = worst[1].max(analog.abs());
        }
    }
    println!(
        "f32 meter: worst RMS error against the designed response {:.2e}; \
         12..900 Hz against the analog prototype {:.2e}",
        worst[0], worst[1]
    );
}

// The same through the Q15 meter (i16 counts of a tone at -10 dBFS): the input's own
// quantisation (0.29 count rms against 7,327 counts rms, 4e-5) and the integer sections'
// rounding; within 0.2 % as the float meter, peaks as there (the input's quantisation noise
// on a displacement 2.6 counts in amplitude at 630 Hz moves one extreme by 0.34 %). Sensitivity 1 / 1000 per count, so the reading
// is in thousands of counts.
#[test]
fn the_q15_meter_reads_the_same_tones() {
    let mut worst = 0.0f64;
    for c in cases() {
        if c.fs != 25_600.0 {
            continue;
        }
        let cfg = config(c.fs, c.low, c.high, (SECONDS * c.fs) as u32).with_sensitivity(1e-3);
        let amplitude = 10_362.0; // -10 dBFS
        let counts: Vec<i16> = tone(&cfg, c.frequency, amplitude)
            .iter()
            .map(|v| v.round() as i16)
            .collect();
        let mut meter = LevelMeterFixed::<i16>::new(cfg).unwrap();
        meter.push_counts(&counts);
        let levels = meter.latest().unwrap();
        let q = quantity(c.integrations);
        let (rms, peak) = relative_error(&levels, q, amplitude * 1e-3, c.digital);
        let context = format!(
            "Q15 band {}-{} {q:?} f {}: rms {rms:+.5} peak {peak:+.5}",
            c.low, c.high, c.frequency
        );
        assert!(rms.abs() < 2e-3, "{context}");
        let missed_crest = 1.0 - (std::f64::consts::PI * c.frequency / c.fs).cos();
        // The filtered output in counts (the meter's internal, unit-gain scale): below
        // 10 counts of amplitude one extreme sample is mostly the input's quantisation.
        let output_counts = amplitude * c.digital * (TAU * c.low).powi(c.integrations);
        if output_counts >= 10.0 {
            assert!(peak < 5e-3 && peak > -missed_crest - 5e-3, "{context}");
        }
        worst = worst.max(rms.abs());
    }
    println!("Q15 meter: worst RMS error against the designed response {worst:.2e}");
}

// Q31 counts (the same tone scaled by 2^16) read what the Q15 meter reads of the i16 tone,
// within the Q15 input's quantisation (the Q31 input is quantised 65,536 times finer).
#[test]
fn the_q31_meter_agrees_with_the_q15_meter() {
    let cfg = config(25_600.0, 10.0, 1000.0, 25_600);
    let x = tone(&cfg, 123.4, 20_000.0);
    let q15: Vec<i16> = x.iter().map(|v| v.round() as i16).collect();
    let q31: Vec<i32> = x.iter().map(|v| (v * 65_536.0).round() as i32).collect();
    let mut a = LevelMeterFixed::<i16>::new(cfg).unwrap();
    let mut b = LevelMeterFixed::<i32>::new(cfg.with_sensitivity(1.0 / 65_536.0)).unwrap();
    a.push_counts(&q15);
    b.push_counts(&q31);
    let (a, b) = (a.latest().unwrap(), b.latest().unwrap());
    for q in QUANTITIES {
        let ratio = b.level(q).rms / a.level(q).rms - 1.0;
        assert!(ratio.abs() < 1e-4, "{q:?}: {ratio}");
    }
}

// A MEMS sensor's offset (gravity, 1000 times the vibration) is a step at start-up: after the
// settling time it must not show (the band-pass has three zeros at DC).
#[test]
fn an_offset_does_not_read_as_vibration() {
    let cfg = config(25_600.0, 2.0, 1000.0, 25_600);
    let x: Vec<f64> = tone(&cfg, 50.0, 1.0).iter().map(|v| v + 1000.0).collect();
    let levels = float_reading(cfg, &x, 1000);
    let want =
        1.0 / SQRT_2 / (TAU * 50.0) * cfg.designed_response(Quantity::Velocity, 50.0) * TAU * 50.0;
    let error = levels.velocity.rms as f64 / want - 1.0;
    println!("velocity with a 1000x offset: {error:+.2e}");
    // 120 dB of settling leaves 1e-6 of the step, 0.1 % of the tone; f32 holds the offset to
    // 6e-8 of 1000, 6e-5 of the tone.
    assert!(error.abs() < 0.02, "{error}");
}

#[test]
fn bad_samples_are_held_and_counted() {
    let cfg = config(25_600.0, 10.0, 1000.0, 25_600).with_full_scale(0.9);
    let mut x: Vec<f32> = tone(&cfg, 100.0, 1.0).iter().map(|&v| v as f32).collect();
    let settle = cfg.settling_samples() as usize;
    x[settle + 10] = f32::NAN;
    x[settle + 20] = f32::INFINITY;
    x[settle + 30] = 1e30;
    let mut meter = LevelMeter::new(cfg).unwrap();
    meter.push(&x);
    let levels = meter.latest().unwrap();
    assert_eq!(levels.bad_samples, 3);
    assert!(levels.overloaded > 0 && !levels.is_clean());
    assert!(levels.velocity.rms.is_finite());
    // Three held samples of a 100 Hz tone move the RMS far less than 1 %.
    let want = 1.0 / SQRT_2 * cfg.designed_response(Quantity::Velocity, 100.0);
    assert!((levels.velocity.rms as f64 / want - 1.0).abs() < 0.01);
}

#[test]
fn settings_that_cannot_work_are_refused() {
    let band = Band::SEVERITY_10_1000_HZ;
    assert!(LevelConfig::new(0.0, band).is_err());
    assert!(LevelConfig::new(f32::NAN, band).is_err());
    // Upper edge above 0.4 fs.
    assert!(LevelConfig::new(2_000.0, band).is_err());
    assert!(LevelConfig::new(2_000.0, Band::new(0.0, 500.0).unwrap()).is_err());
    let cfg = LevelConfig::new(25_600.0, band).unwrap();
    assert!(LevelMeter::new(cfg.with_sensitivity(0.0)).is_err());
    assert!(LevelMeterFixed::<i16>::new(cfg.with_full_scale(-1.0)).is_err());
    // Nothing read yet: no reading, not an error.
    let meter = LevelMeter::new(cfg).unwrap();
    assert!(meter.latest().is_none() && meter.running().is_none() && !meter.is_settled());
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: 24,
        rng_seed: proptest::test_runner::RngSeed::Fixed(0x001e_7e15),
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    // One sample at a time inside, intervals counted in samples: any chunking gives
    // bit-identical readings, float and fixed.
    #[test]
    fn chunking_does_not_change_a_bit(cuts in proptest::collection::vec(1usize..3000, 1..12)) {
        let cfg = config(25_600.0, 10.0, 1000.0, 2_000);
        let x: Vec<f64> = (0..cfg.settling_samples() as usize + 9_000)
            .map(|n| (TAU * 37.3 * n as f64 / 25_600.0).sin() + 0.3 * (TAU * 812.0 * n as f64 / 25_600.0).cos())
            .collect();
        let f: Vec<f32> = x.iter().map(|&v| v as f32).collect();
        let c: Vec<i16> = x.iter().map(|&v| (v * 20_000.0) as i16).collect();
        let (mut whole, mut pieces) = (LevelMeter::new(cfg).unwrap(), LevelMeter::new(cfg).unwrap());
        let (mut whole_q, mut pieces_q) = (
            LevelMeterFixed::<i16>::new(cfg).unwrap(),
            LevelMeterFixed::<i16>::new(cfg).unwrap(),
        );
        whole.push(&f);
        whole_q.push_counts(&c);
        let (mut start, mut k) = (0, 0);
        while start < f.len() {
            let end = (start + cuts[k % cuts.len()]).min(f.len());
            pieces.push(&f[start..end]);
            pieces_q.push_counts(&c[start..end]);
            start = end;
            k += 1;
        }
        prop_assert_eq!(whole.intervals(), 4);
        prop_assert_eq!(whole.latest(), pieces.latest());
        prop_assert_eq!(whole.running(), pieces.running());
        prop_assert_eq!(whole_q.latest(), pieces_q.latest());
        prop_assert_eq!(whole_q.running(), pieces_q.running());
    }

    // No input makes the meter panic or read a non-finite number.
    #[test]
    fn arbitrary_input_never_panics(x in proptest::collection::vec(any::<f32>(), 0..4000),
                                    c in proptest::collection::vec(any::<i16>(), 0..4000)) {
        let cfg = LevelConfig::new(1_000.0, Band::new(50.0, 400.0).unwrap()).unwrap().with_interval_samples(100);
        let mut meter = LevelMeter::new(cfg).unwrap();
        meter.push(&x);
        let mut fixed = LevelMeterFixed::<i16>::new(cfg).unwrap();
        fixed.push_counts(&c);
        for levels in [meter.latest(), meter.running(), fixed.latest(), fixed.running()].into_iter().flatten() {
            for q in QUANTITIES {
                prop_assert!(levels.level(q).rms.is_finite());
            }
        }
    }
}
