//! The impact test against analytic responses: sums of damped sinusoids (one, two and three
//! modes) excited by a half-sine force pulse, with noise on both channels; and the trigger's
//! capture positions, double-hit rejection and chunking invariance.
#![cfg(all(feature = "f32", feature = "size-4096"))]

mod support;

use core::f64::consts::PI;
use leakless::analysis::frf::Complex;
use leakless::analysis::modes::Mode;
use leakless::spectrum::impact::{ImpactSettings, ImpactTest};
use leakless::spectrum::multi::Channel;
use leakless::spectrum::trigger::{HitOutcome, HitTrigger, TriggerSettings};
use leakless::{Shape, Window};
use support::SplitMix64;

const FS: f64 = 2048.0;
const N: usize = 4096;
const BINS: usize = N / 2 + 1;
const PRE: usize = 64;
/// Taps averaged per system (a usual count for an impact test: 5 to 10).
const HITS: usize = 8;
const PULSE_S: f64 = 0.001; // 1 ms half-sine: a hard hammer tip, flat well past 1 kHz

static FORCE_WINDOW: Window<N> = Window::new(Shape::Force {
    width: 0.05,
    taper: 0.01,
});
static DECAY_WINDOW: Window<N> = Window::new(Shape::Exponential { end_fraction: 0.01 });

/// A mode of the analytic system: natural frequency (Hz), damping ratio, modal constant.
#[derive(Clone, Copy, Debug)]
struct ModeSpec {
    fn_hz: f64,
    zeta: f64,
    residue: f64,
}

/// The response at time `t` (s after the pulse starts) of a system whose impulse response is
/// `sum A e^(-zeta wn t) sin(wd t) / wd` (receptance of unit-mass modes: Ewins, Modal
/// Testing, 2nd ed., 2000, from memory) to the force `F sin(pi t / Tp)` on `0 <= t <= Tp`.
/// The convolution integral in closed form: with `s = -zeta wn + j wd` and `W = pi / Tp`,
/// `int_0^u sin(W tau) e^(s (t - tau)) d tau = e^(s t) [ (e^((jW - s) u) - 1) / (jW - s)
/// - (e^((-jW - s) u) - 1) / (-jW - s) ] / 2j`, `u = min(t, Tp)`; the response is the
/// imaginary part, times `A / wd`.
fn response(modes: &[ModeSpec], force: f64, t: f64) -> f64 {
    if t <= 0.0 {
        return 0.0;
    }
    let w = PI / PULSE_S;
    let u = t.min(PULSE_S);
    let one = Complex::new(1.0, 0.0);
    let mut total = 0.0;
    for m in modes {
        let wn = 2.0 * PI * m.fn_hz;
        let wd = wn * (1.0 - m.zeta * m.zeta).sqrt();
        let s = Complex::new(-m.zeta * wn, wd);
        let term = |sign: f64| {
            let a = Complex::new(0.0, sign * w) - s;
            (a.scale(u).exp() - one) / a
        };
        let integral = (term(1.0) - term(-1.0)) / Complex::new(0.0, 2.0);
        total += m.residue / wd * (s.scale(t).exp() * integral).im;
    }
    force * total
}

fn half_sine(force: f64, t: f64) -> f64 {
    if (0.0..=PULSE_S).contains(&t) {
        force * (PI * t / PULSE_S).sin()
    } else {
        0.0
    }
}

/// A record of `hits` taps, each `spacing` samples apart at a random sub-sample start, with
/// random amplitudes (+-20 %), noise of `noise_fraction` of each channel's peak, and a second
/// tap `bounce` (delay s, fraction) after the `double`-th tap. Force and response
/// interleaved, plus the start time of each tap.
struct Record {
    interleaved: Vec<f32>,
    starts: Vec<f64>,
}

fn record(
    modes: &[ModeSpec],
    hits: usize,
    noise_fraction: f64,
    double: Option<(usize, f64, f64)>,
    rng: &mut SplitMix64,
) -> Record {
    let spacing = 3 * N;
    let len = spacing * (hits + 1);
    let mut starts = Vec::new();
    let mut taps: Vec<(f64, f64)> = Vec::new();
    for h in 0..hits {
        let start = ((h + 1) * spacing) as f64 / FS + rng.uniform() / FS;
        let amplitude = 100.0 * (0.8 + 0.4 * rng.uniform());
        starts.push(start);
        taps.push((start, amplitude));
        if let Some((which, delay, fraction)) = double {
            if which == h {
                taps.push((start + delay, amplitude * fraction));
            }
        }
    }
    let mut force = vec![0.0; len];
    let mut resp = vec![0.0; len];
    for &(start, amplitude) in &taps {
        let first = (start * FS) as usize;
        for n in first.saturating_sub(1)..(first + 2 * N).min(len) {
            let t = n as f64 / FS - start;
            force[n] += half_sine(amplitude, t);
            resp[n] += response(modes, amplitude, t);
        }
    }
    let peak = |v: &[f64]| v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let (fp, rp) = (peak(&force), peak(&resp));
    let interleaved = force
        .iter()
        .zip(&resp)
        .flat_map(|(&f, &r)| {
            [
                (f + noise_fraction * fp * rng.gaussian()) as f32,
                (r + noise_fraction * rp * rng.gaussian()) as f32,
            ]
        })
        .collect();
    Record {
        interleaved,
        starts,
    }
}

fn settings(hits: u32) -> ImpactSettings {
    ImpactSettings {
        sample_rate_hz: FS as f32,
        trigger: TriggerSettings::new(0, 20.0)
            .with_pre_trigger(PRE)
            .with_double_hit_fraction(0.1)
            .with_rearm_samples(100),
        force: Channel::new("N"),
        response: Channel::new("m"),
        hits,
    }
}

fn measure(modes: &[ModeSpec], seed: u64) -> (Vec<Mode>, ImpactTest<'static, N, BINS>) {
    let mut rng = SplitMix64(seed);
    // Noise of 0.1 % of each channel's peak on every sample (60 dB below the peak; a 16-bit
    // acquisition with the tap at half range resolves about 90 dB): with 8 taps the noise
    // scatters a 3 %-damped mode's frequency by about 0.04 % (measured over seeds).
    let rec = record(modes, HITS, 0.001, None, &mut rng);
    let mut test: ImpactTest<N, BINS> =
        ImpactTest::new(&FORCE_WINDOW, &DECAY_WINDOW, settings(HITS as u32)).unwrap();
    for chunk in rec.interleaved.chunks(1000 + (seed as usize % 7) * 37) {
        test.push_interleaved(chunk);
    }
    assert_eq!(test.counts().accepted, HITS as u32, "{:?}", test.counts());
    let found = test.modes::<8>(20.0, 900.0);
    (found.to_vec(), test)
}

/// The found mode nearest `spec`.
fn nearest(found: &[Mode], spec: &ModeSpec) -> Mode {
    *found
        .iter()
        .min_by(|a, b| {
            (a.frequency_hz - spec.fn_hz)
                .abs()
                .total_cmp(&(b.frequency_hz - spec.fn_hz).abs())
        })
        .expect("no mode found")
}

// reference: the analytic modes the record was built from (natural frequency, damping ratio)
// and, for the removal, the exponential window's own decay rate (window factor
// `added_decay_rate`, sigma = ln(1 / end_fraction) fs / (N - 1); the relation
// zeta_measured = zeta + sigma / wn is the impact-testing rule in tests/reference/README's
// sources, from memory). Acceptance from the issue: natural frequencies within 0.1 %, damping
// ratios within 5 % relative for 0.5 % to 5 % damping after the removal; without it, the
// error is the window's added damping ratio sigma / wn (within the same 5 %).
#[test]
fn one_two_and_three_mode_systems() {
    let systems: Vec<Vec<ModeSpec>> = vec![
        vec![ModeSpec {
            fn_hz: 95.0,
            zeta: 0.005,
            residue: 1.0,
        }],
        vec![ModeSpec {
            fn_hz: 180.0,
            zeta: 0.02,
            residue: 1.0,
        }],
        vec![ModeSpec {
            fn_hz: 400.0,
            zeta: 0.05,
            residue: 1.0,
        }],
        vec![
            ModeSpec {
                fn_hz: 120.0,
                zeta: 0.01,
                residue: 1.0,
            },
            ModeSpec {
                fn_hz: 310.0,
                zeta: 0.03,
                residue: 2.0,
            },
        ],
        vec![
            ModeSpec {
                fn_hz: 90.0,
                zeta: 0.005,
                residue: 0.5,
            },
            ModeSpec {
                fn_hz: 260.0,
                zeta: 0.02,
                residue: 2.0,
            },
            ModeSpec {
                fn_hz: 610.0,
                zeta: 0.05,
                residue: 6.0,
            },
        ],
    ];
    for (i, modes) in systems.iter().enumerate() {
        let (found, test) = measure(modes, 100 + i as u64);
        assert_eq!(found.len(), modes.len(), "system {i}: {found:#?}");
        for spec in modes {
            let m = nearest(&found, spec);
            let f_err = m.frequency_hz / spec.fn_hz - 1.0;
            let z_err = m.damping_ratio / spec.zeta - 1.0;
            let added = DECAY_WINDOW.added_damping_ratio(FS, spec.fn_hz).unwrap();
            let raw_err = (m.measured_damping_ratio - (spec.zeta + added)) / spec.zeta;
            println!(
                "system {i}: {:.1} Hz zeta {:.4}: found {:.3} Hz ({:+.4} %), zeta {:.5} ({:+.2} %), \
                 measured {:.5} = true + window {:.5} ({:+.2} %), coherence {:.4}, \
                 half-power lines {:.1}, half-power zeta {:.5}",
                spec.fn_hz,
                spec.zeta,
                m.frequency_hz,
                100.0 * f_err,
                m.damping_ratio,
                100.0 * z_err,
                m.measured_damping_ratio,
                added,
                100.0 * raw_err,
                m.coherence,
                m.half_power_lines,
                m.half_power_damping_ratio,
            );
            assert!(f_err.abs() <= 1e-3, "system {i} {spec:?}: {m:?}");
            assert!(z_err.abs() <= 0.05, "system {i} {spec:?}: {m:?}");
            assert!(raw_err.abs() <= 0.05, "system {i} {spec:?}: {m:?}");
            assert!(m.coherence > 0.9, "{m:?}");
        }
        assert_eq!(test.averages(), HITS as u32);
    }
}

/// The first sample at or above `level` after each tap start (the trigger's definition).
fn first_at_or_above(force: &[f32], level: f32, from: usize) -> usize {
    (from..force.len()).find(|&n| force[n] >= level).unwrap()
}

// from the trigger's definition (a crossing of the level from below): every tap is captured
// at its first sample at or above the level, under any chunking (chunk boundaries anywhere,
// also inside a frame); every double tap is rejected and counted; no tap is lost.
#[test]
fn trigger_positions_double_hits_and_chunking() {
    let modes = [ModeSpec {
        fn_hz: 150.0,
        zeta: 0.02,
        residue: 1.0,
    }];
    for seed in 0..6u64 {
        let mut rng = SplitMix64(1000 + seed);
        let hits = 6;
        // every other seed bounces the third tap: a second tap 40 ms later at 30 %
        let double = (seed % 2 == 0).then_some((2, 0.04, 0.3));
        let rec = record(&modes, hits, 0.001, double, &mut rng);
        let force: Vec<f32> = rec.interleaved.iter().step_by(2).copied().collect();
        let expected: Vec<u64> = rec
            .starts
            .iter()
            .map(|&s| first_at_or_above(&force, 20.0, (s * FS) as usize) as u64)
            .collect();
        let mut reference: Option<Vec<(u64, HitOutcome, Vec<u32>)>> = None;
        for _ in 0..4 {
            let mut trigger: HitTrigger<N, 2> = HitTrigger::new(settings(1).trigger).unwrap();
            let mut got = Vec::new();
            let mut rest: &[f32] = &rec.interleaved;
            while !rest.is_empty() {
                let take = (1 + (rng.next_u64() % 5000) as usize).min(rest.len());
                let (chunk, tail) = rest.split_at(take);
                trigger.push_interleaved(chunk, |hit| {
                    let bits = hit.blocks.iter().flatten().map(|x| x.to_bits()).collect();
                    got.push((hit.trigger_sample, hit.outcome, bits));
                });
                rest = tail;
            }
            let positions: Vec<u64> = got.iter().map(|g| g.0).collect();
            assert_eq!(positions, expected, "seed {seed}");
            let doubles = got.iter().filter(|g| g.1 == HitOutcome::DoubleHit).count();
            assert_eq!(doubles, double.is_some() as usize, "seed {seed}");
            assert_eq!(trigger.counts().double_hits as usize, doubles);
            if let Some((which, _, _)) = double {
                assert_eq!(got[which].1, HitOutcome::DoubleHit);
            }
            assert_eq!(trigger.counts().hits as usize, hits);
            // Bit-identical blocks under every chunking.
            match &reference {
                None => reference = Some(got),
                Some(r) => assert!(r == &got, "seed {seed}: blocks differ between chunkings"),
            }
        }
    }
}

// The double tap never reaches the average: an impact test of 4 taps with one bounce
// averages 3, counts 1 double hit, and an overloaded tap is rejected and counted too.
#[test]
fn rejected_taps_are_counted_and_never_averaged() {
    let modes = [ModeSpec {
        fn_hz: 150.0,
        zeta: 0.02,
        residue: 1.0,
    }];
    let mut rng = SplitMix64(77);
    let rec = record(&modes, 4, 0.001, Some((1, 0.05, 0.5)), &mut rng);
    let mut s = settings(10);
    s.force = Channel::new("N").with_full_scale(1e6);
    let mut test: ImpactTest<N, BINS> = ImpactTest::new(&FORCE_WINDOW, &DECAY_WINDOW, s).unwrap();
    test.push_interleaved(&rec.interleaved);
    let c = test.counts();
    assert_eq!((c.hits, c.accepted, c.double_hits), (4, 3, 1), "{c:?}");
    assert_eq!(test.averages(), 3);
    // The same record with a full scale below the taps' peaks: every clean tap overloads.
    let mut s = settings(10);
    s.force = Channel::new("N").with_full_scale(50.0);
    let mut test: ImpactTest<N, BINS> = ImpactTest::new(&FORCE_WINDOW, &DECAY_WINDOW, s).unwrap();
    test.push_interleaved(&rec.interleaved);
    let c = test.counts();
    assert_eq!(
        (c.hits, c.accepted, c.double_hits, c.overloaded),
        (4, 0, 1, 3),
        "{c:?}"
    );
    assert!(test.modes::<4>(20.0, 900.0).is_empty());
}
