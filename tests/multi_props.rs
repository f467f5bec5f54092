//! Property tests of the multi-channel analyzer and the impact test: interleaved and
//! per-channel pushes under any chunking give bit-identical results, one channel is the
//! single-channel analyzer, and no input panics. Fixed seed, limited cases.
#![cfg(feature = "f32")]

use leakless::spectrum::condition::MAX_INPUT_MAGNITUDE;
use leakless::spectrum::impact::{ImpactSettings, ImpactTest};
use leakless::spectrum::multi::{Channel, ChannelAnalyzer, Pair};
use leakless::spectrum::trigger::TriggerSettings;
use leakless::{Averaging, Config, Correction, Scale, Shape, WhenDone, Window};
use proptest::prelude::*;
use proptest::test_runner::{Config as ProptestConfig, RngSeed};

const N: usize = 64;
const BINS: usize = N / 2 + 1;
const FULL_SCALE: f32 = 2.0;
static HANN: Window<N> = Window::new(Shape::Hann);
static FLAT: Window<N> = Window::new(Shape::FlatTop);
static FORCE: Window<N> = Window::new(Shape::Force {
    width: 0.2,
    taper: 0.05,
});
static DECAY: Window<N> = Window::new(Shape::Exponential { end_fraction: 0.05 });

fn settings() -> ProptestConfig {
    ProptestConfig {
        cases: 48,
        rng_seed: RngSeed::Fixed(0x3c4a_77e1),
        failure_persistence: None,
        ..ProptestConfig::default()
    }
}

/// Mostly ordinary samples, with rare NaN, infinities, huge and overload values.
fn sample() -> impl Strategy<Value = f32> {
    prop_oneof![
        600 => -1.5f32..1.5,
        1 => Just(f32::NAN),
        1 => Just(f32::INFINITY),
        1 => Just(-3.0e38f32),
        1 => Just(MAX_INPUT_MAGNITUDE),
        1 => Just(FULL_SCALE),
        1 => -1e6f32..1e6,
    ]
}

fn config(overlap: usize, averaging: Averaging) -> Config {
    Config::new(1000.0)
        .with_overlap(overlap)
        .with_averaging(averaging)
}

fn averaging(which: u8) -> Averaging {
    match which % 3 {
        0 => Averaging::Linear {
            count: 3,
            when_done: WhenDone::Restart,
        },
        1 => Averaging::Linear {
            count: 2,
            when_done: WhenDone::Hold,
        },
        _ => Averaging::Exponential {
            time_constant_blocks: 2.5,
        },
    }
}

/// Every read-out of an analyzer as bits: auto spectra of every channel, cross spectra of
/// every pair, FRF lines and the counters.
fn fingerprint<const C: usize, const P: usize, const H: usize>(
    a: &ChannelAnalyzer<'_, N, BINS, C, P, H>,
) -> Vec<u64> {
    let mut out = Vec::new();
    for c in 0..C {
        for v in a.spectrum(c, Scale::Psd, Correction::Energy).values() {
            out.push(v.to_bits() as u64);
        }
        let s = a.status(c);
        out.extend(
            [
                s.blocks_seen,
                s.blocks_averaged,
                s.rejected_non_finite,
                s.overloaded,
            ]
            .map(u64::from),
        );
    }
    for p in 0..P {
        let cross = a
            .cross_spectrum(p, Scale::Power, Correction::Amplitude)
            .unwrap();
        for k in 0..BINS {
            out.push(cross.re[k].to_bits() as u64);
            out.push(cross.im[k].to_bits() as u64);
            let line = a.frf_line(p, k).unwrap();
            out.extend([line.h1.re, line.h1.im, line.coherence].map(f64::to_bits));
        }
    }
    out.push(a.blocks_rejected() as u64);
    out
}

fn run<const C: usize, const P: usize, const H: usize>(
    frames: &[f32],
    chunk_sizes: &[usize],
    overlap: usize,
    which: u8,
    pairs: [Pair; P],
) {
    let windows: [&Window<N>; C] = core::array::from_fn(|c| if c % 2 == 0 { &HANN } else { &FLAT });
    let channels: [Channel; C] =
        core::array::from_fn(|c| Channel::new("g").with_full_scale(FULL_SCALE + c as f32));
    let make = || {
        ChannelAnalyzer::<N, BINS, C, P, H>::new(
            windows,
            config(overlap, averaging(which)),
            channels,
            pairs,
        )
        .unwrap()
    };
    let whole = frames.len() / C * C;
    let frames = &frames[..whole];
    // Interleaved, cut anywhere (also inside a frame).
    let mut interleaved = make();
    let mut rest = frames;
    let mut i = 0;
    while !rest.is_empty() {
        let take = chunk_sizes[i % chunk_sizes.len()].min(rest.len());
        let (head, tail) = rest.split_at(take);
        interleaved.push_interleaved(head);
        rest = tail;
        i += 1;
    }
    // Per channel, in chunks of whole frames.
    let per_channel: Vec<Vec<f32>> = (0..C)
        .map(|c| frames.iter().skip(c).step_by(C).copied().collect())
        .collect();
    let mut sliced = make();
    let mut start = 0;
    let len = per_channel[0].len();
    let mut i = 0;
    while start < len {
        let end = (start + chunk_sizes[i % chunk_sizes.len()].max(1)).min(len);
        let slices: [&[f32]; C] = core::array::from_fn(|c| &per_channel[c][start..end]);
        sliced.push_channels(&slices).unwrap();
        start = end;
        i += 1;
    }
    // All at once.
    let mut once = make();
    once.push_interleaved(frames);
    let reference = fingerprint(&once);
    assert!(
        fingerprint(&interleaved) == reference,
        "interleaved differs"
    );
    assert!(fingerprint(&sliced) == reference, "per-channel differs");
}

proptest! {
    #![proptest_config(settings())]

    #[test]
    fn interleaved_and_per_channel_pushes_are_bit_identical(
        frames in prop::collection::vec(sample(), 0..1200),
        chunk_sizes in prop::collection::vec(1usize..150, 1..6),
        overlap in 0usize..N,
        which in 0u8..3,
    ) {
        run::<1, 0, 0>(&frames, &chunk_sizes, overlap, which, []);
        run::<2, 1, 1>(&frames, &chunk_sizes, overlap, which, [Pair::new(0, 1)]);
        run::<3, 0, 0>(&frames, &chunk_sizes, overlap, which, []);
        run::<4, 3, 1>(&frames, &chunk_sizes, overlap, which,
            [Pair::new(0, 1), Pair::new(0, 2), Pair::new(3, 1)]);
    }

    #[test]
    fn the_impact_test_never_panics(
        frames in prop::collection::vec(sample(), 0..2000),
        chunk_sizes in prop::collection::vec(1usize..300, 1..6),
        level in 0.01f32..3.0,
        pre in 0usize..N,
    ) {
        let settings = ImpactSettings {
            sample_rate_hz: 1000.0,
            trigger: TriggerSettings::new(0, level).with_pre_trigger(pre),
            force: Channel::new("N").with_full_scale(FULL_SCALE),
            response: Channel::new("g"),
            hits: 3,
        };
        let mut test: ImpactTest<N, BINS> = ImpactTest::new(&FORCE, &DECAY, settings).unwrap();
        let mut rest: &[f32] = &frames;
        let mut i = 0;
        while !rest.is_empty() {
            let take = chunk_sizes[i % chunk_sizes.len()].min(rest.len());
            let (head, tail) = rest.split_at(take);
            test.push_interleaved(head);
            rest = tail;
            i += 1;
        }
        let c = test.counts();
        prop_assert_eq!(c.hits, c.accepted + c.double_hits + c.overloaded + c.non_finite + c.too_early + c.ignored);
        prop_assert_eq!(test.averages(), c.accepted);
        let _ = test.modes::<4>(1.0, 500.0);
        for k in 0..BINS + 2 {
            let _ = test.frf_line(k);
            let _ = test.energy_spectral_density(0, k);
        }
    }
}
