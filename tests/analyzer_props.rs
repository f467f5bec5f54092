//! Property tests of the float analyzer: chunking invariance, no panics, exact counters.
//! Fixed seed and a limited number of cases so CI stays fast.
#![cfg(feature = "f32")]

use leakless::spectrum::condition::MAX_INPUT_MAGNITUDE;
use leakless::{Analyzer, Averaging, Config, Correction, Scale, Shape, Status, WhenDone, Window};
use proptest::prelude::*;
use proptest::test_runner::{Config as ProptestConfig, RngSeed};

const N: usize = 64;
const BINS: usize = N / 2 + 1;
const OVERLAP: usize = 48;
const FULL_SCALE: f32 = 2.0;
static HANN: Window<N> = Window::new(Shape::Hann);

fn settings() -> ProptestConfig {
    ProptestConfig {
        cases: 64,
        rng_seed: RngSeed::Fixed(0x1ea4_1e55),
        failure_persistence: None,
        ..ProptestConfig::default()
    }
}

fn analyzer(averaging: Averaging) -> Analyzer<'static, N, BINS> {
    let config = Config::new(1000.0)
        .with_overlap(OVERLAP)
        .with_full_scale(FULL_SCALE)
        .with_averaging(averaging);
    Analyzer::new(&HANN, config).unwrap()
}

fn modes() -> [Averaging; 4] {
    [
        Averaging::Linear {
            count: 3,
            when_done: WhenDone::Restart,
        },
        Averaging::Linear {
            count: 2,
            when_done: WhenDone::Hold,
        },
        Averaging::Exponential {
            time_constant_blocks: 2.5,
        },
        Averaging::PeakHold,
    ]
}

/// Mostly ordinary samples, with some NaN, infinities, huge, subnormal and overload values.
/// The odd ones are rare enough (about 1 in 125) that most blocks are clean and averaged.
fn sample() -> impl Strategy<Value = f32> {
    prop_oneof![
        1000 => -1.5f32..1.5,
        1 => Just(f32::NAN),
        1 => Just(f32::INFINITY),
        1 => Just(f32::NEG_INFINITY),
        1 => Just(3.0e38f32),
        1 => Just(MAX_INPUT_MAGNITUDE),
        1 => Just(f32::MIN_POSITIVE / 8.0),
        1 => Just(FULL_SCALE),
        1 => -1e6f32..1e6,
    ]
}

/// Cuts `stream` at the given sizes (cycled), with empty chunks in between.
fn chunks<'s>(stream: &'s [f32], sizes: &[usize]) -> Vec<&'s [f32]> {
    let mut out = Vec::new();
    let mut rest = stream;
    let mut i = 0;
    while !rest.is_empty() {
        let take = sizes[i % sizes.len()].min(rest.len());
        let (head, tail) = rest.split_at(take);
        out.push(&head[..0]);
        out.push(head);
        rest = tail;
        i += 1;
    }
    out
}

fn bits(a: &Analyzer<N, BINS>) -> Vec<u32> {
    let mut out = Vec::new();
    for scale in [Scale::Peak, Scale::Psd] {
        let s = a.spectrum(scale, Correction::Amplitude);
        out.extend(s.values().iter().map(|v| v.to_bits()));
    }
    out
}

proptest! {
    #![proptest_config(settings())]

    // Any chunking of the same samples gives bit-identical spectra and counters.
    #[test]
    fn chunking_never_changes_results(
        stream in prop::collection::vec(sample(), 0..700),
        sizes in prop::collection::vec(0usize..200, 1..8),
    ) {
        for mode in modes() {
            let mut whole = analyzer(mode);
            whole.push(&stream);
            let mut cut = analyzer(mode);
            for chunk in chunks(&stream, &sizes) {
                cut.push(chunk);
            }
            prop_assert_eq!(bits(&whole), bits(&cut));
            prop_assert_eq!(whole.status(), cut.status());
        }
    }

    // Any f32 bit pattern: no panic, and never a non-finite value in a spectrum.
    #[test]
    fn no_input_panics_or_poisons_the_average(
        stream in prop::collection::vec(
            prop_oneof![100 => sample(), 1 => any::<f32>(), 1 => -1e14f32..1e14],
            0..400,
        ),
        sizes in prop::collection::vec(0usize..100, 1..5),
    ) {
        for mode in modes() {
            let mut a = analyzer(mode);
            for chunk in chunks(&stream, &sizes) {
                a.push(chunk);
            }
            for scale in [Scale::Peak, Scale::Rms, Scale::Power, Scale::Psd, Scale::Asd] {
                let s = a.spectrum(scale, Correction::Energy);
                prop_assert!(s.values().iter().all(|v| v.is_finite()));
            }
            prop_assert!(a.overall_rms(true).is_finite());
        }
    }

    // The counters equal an oracle that frames the stream by definition (block b is samples
    // b*hop .. b*hop + N) and classifies each block as the docs say.
    #[test]
    fn counters_are_exact(
        stream in prop::collection::vec(sample(), 0..700),
        sizes in prop::collection::vec(1usize..90, 1..5),
    ) {
        let mode = Averaging::Linear { count: 3, when_done: WhenDone::Restart };
        let mut a = analyzer(mode);
        for chunk in chunks(&stream, &sizes) {
            a.push(chunk);
        }
        let mut want = Status::default();
        let mut start = 0;
        while start + N <= stream.len() {
            let block = &stream[start..start + N];
            let non_finite = block.iter().any(|x| x.is_nan() || x.abs() >= MAX_INPUT_MAGNITUDE);
            let overloaded = block.iter().any(|x| x.abs() >= FULL_SCALE);
            want.blocks_seen += 1;
            want.rejected_non_finite += u32::from(non_finite);
            want.overloaded += u32::from(overloaded);
            if !non_finite && !overloaded {
                want.blocks_averaged += 1;
                want.current_average = want.current_average % 3 + 1;
                want.averages_completed += u32::from(want.current_average == 3);
            }
            start += N - OVERLAP;
        }
        prop_assert_eq!(a.status(), want);
    }
}
