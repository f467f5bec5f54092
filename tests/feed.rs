//! The split feeding API (`spectrum::feed`): an interrupt-side `Collector` that only frames,
//! a processing side that runs the pipeline on queued blocks. Checked against `push` (the
//! two halves in one call, which the chunking tests elsewhere pin to the definition of
//! overlapped framing, Welch 1967), and against the definition of an overrun: a block that
//! finds the queue full is dropped whole and counted, and the blocks around it are the
//! stream's own.
#![cfg(all(feature = "f32", feature = "fixed"))]

use heapless::spsc::Queue;
use leakless::spectrum::feed::{BlockQueue, Handoff};
use leakless::spectrum::frame::Framer;
use leakless::{
    Analyzer, AnalyzerQ15, AnalyzerQ31, Averaging, Config, PushReport, Shape, Stage, WhenDone,
    Window, WindowQ15, WindowQ31,
};

const N: usize = 64;
const BINS: usize = N / 2 + 1;
static HANN: Window<N> = Window::new(Shape::Hann);
static HANN_Q15: WindowQ15<N> = WindowQ15::new(Shape::Hann);
static HANN_Q31: WindowQ31<N> = WindowQ31::new(Shape::Hann);

fn config(overlap: usize) -> Config {
    Config::new(25_600.0)
        .with_overlap(overlap)
        .with_full_scale(30_000.0)
        .with_averaging(Averaging::Linear {
            count: 5,
            when_done: WhenDone::Restart,
        })
}

/// A deterministic stream of 16-bit counts: two tones and a little xorshift noise, with
/// one clipped stretch so that the overload path is fed too.
fn counts(len: usize) -> Vec<i16> {
    let mut seed = 0x9e37_79b9u32;
    (0..len)
        .map(|n| {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            let t = n as f64 / 25_600.0;
            let v = 9000.0 * (2.0 * std::f64::consts::PI * 1234.5 * t).sin()
                + 300.0 * (2.0 * std::f64::consts::PI * 7000.0 * t).sin()
                + f64::from(seed % 201)
                - 100.0;
            if (700..720).contains(&n) {
                32_767
            } else {
                v.round() as i16
            }
        })
        .collect()
}

fn bits(values: &[f32]) -> Vec<u32> {
    values.iter().map(|v| v.to_bits()).collect()
}

// Fed through a collector and processed after every chunk (the queue never fills), the
// float analyzer gives what push gives, to the bit, for every overlap and chunk size.
#[test]
fn interrupt_fed_f32_is_push_bit_for_bit() {
    let stream = counts(3000);
    for overlap in [0, 16, 32, 48, 63] {
        for chunk in [1, 7, 32, 64, 100, 1000] {
            // At most chunk / hop + 1 blocks complete per chunk; the queue holds 127.
            if chunk / (N - overlap) + 1 > 127 {
                continue;
            }
            let mut pushed: Analyzer<N, BINS> = Analyzer::new(&HANN, config(overlap)).unwrap();
            let mut queue: BlockQueue<f32, N, 128> = Queue::new();
            let (producer, mut consumer) = queue.split();
            let fresh: Analyzer<N, BINS> = Analyzer::new(&HANN, config(overlap)).unwrap();
            let (mut collector, mut processing) = fresh.split(producer);
            let (mut want, mut got) = (PushReport::default(), PushReport::default());
            for piece in stream.chunks(chunk) {
                let r = pushed.push_counts(piece);
                want = sum(want, r);
                collector.collect_converted(piece, f32::from);
                got = sum(got, processing.process_queued(&mut consumer));
            }
            assert_eq!(got, want, "overlap {overlap}, chunk {chunk}");
            assert_eq!(processing.status(), pushed.status());
            for scale in [leakless::Scale::Power, leakless::Scale::Peak] {
                let c = leakless::Correction::Energy;
                assert_eq!(
                    bits(processing.spectrum(scale, c).values()),
                    bits(pushed.spectrum(scale, c).values()),
                    "overlap {overlap}, chunk {chunk}"
                );
            }
            assert_eq!(processing.overlap(), overlap);
            assert_eq!(processing.hop(), N - overlap);
            assert_eq!(collector.blocks_lost(), 0);
        }
    }
}

fn sum(mut a: PushReport, b: PushReport) -> PushReport {
    a.blocks += b.blocks;
    a.averaged += b.averaged;
    a.rejected += b.rejected;
    a.ignored += b.ignored;
    a.averages_completed += b.averages_completed;
    a.lost += b.lost;
    a
}

// The same for the Q15 and Q31 analyzers: raw averages identical to push's.
#[test]
fn interrupt_fed_fixed_is_push_bit_for_bit() {
    let stream = counts(3000);
    for overlap in [0, 32, 48] {
        for chunk in [5, 64, 333] {
            let mut pushed: AnalyzerQ15<N, BINS> =
                AnalyzerQ15::new(&HANN_Q15, config(overlap)).unwrap();
            // At most 333 / 16 + 1 = 21 blocks complete per chunk; the queue holds 31.
            let mut queue: BlockQueue<i16, N, 32> = Queue::new();
            let (producer, mut consumer) = queue.split();
            let fresh: AnalyzerQ15<N, BINS> = AnalyzerQ15::new(&HANN_Q15, config(overlap)).unwrap();
            let (mut collector, mut processing) = fresh.split(producer);
            for piece in stream.chunks(chunk) {
                pushed.push(piece);
                collector.collect(piece);
                processing.process_queued(&mut consumer);
            }
            assert_eq!(
                processing.raw_power(),
                pushed.raw_power(),
                "Q15 {overlap} {chunk}"
            );
            assert_eq!(processing.status(), pushed.status());

            let mut pushed: AnalyzerQ31<N, BINS> =
                AnalyzerQ31::new(&HANN_Q31, config(overlap)).unwrap();
            let mut queue: BlockQueue<i32, N, 32> = Queue::new();
            let (producer, mut consumer) = queue.split();
            let fresh: AnalyzerQ31<N, BINS> = AnalyzerQ31::new(&HANN_Q31, config(overlap)).unwrap();
            let (mut collector, mut processing) = fresh.split(producer);
            for piece in stream.chunks(chunk) {
                pushed.push_counts(piece);
                collector.collect_converted(piece, i32::from);
                processing.process_queued(&mut consumer);
            }
            assert_eq!(
                processing.raw_power(),
                pushed.raw_power(),
                "Q31 {overlap} {chunk}"
            );
            assert_eq!(processing.status(), pushed.status());
        }
    }
}

// A probe that counts transforms per call: push runs them inside the call that completes a
// block; the collector completes the same blocks (it reports them handed over) and none
// has been transformed until the processing side runs, which then runs exactly one per
// block. The collector holds no window, work block or average, so it could not.
#[test]
fn the_interrupt_side_never_transforms() {
    let stream = counts(2000);
    let mut pushed: Analyzer<N, BINS> = Analyzer::new(&HANN, config(32)).unwrap();
    let mut queue: BlockQueue<f32, N, 8> = Queue::new();
    let (producer, mut consumer) = queue.split();
    let fresh: Analyzer<N, BINS> = Analyzer::new(&HANN, config(32)).unwrap();
    let (mut collector, mut processing) = fresh.split(producer);
    let floats: Vec<f32> = stream.iter().map(|&c| f32::from(c)).collect();
    let (mut push_transforms, mut queued_transforms) = (0u32, 0u32);
    let mut handed_total = 0u32;
    for (i, piece) in floats.chunks(40).enumerate() {
        let mut in_push = 0u32;
        let report = pushed.push_probed(piece, &mut |s| {
            if s == Stage::Transform {
                in_push += 1;
            }
        });
        push_transforms += in_push;
        let before = queued_transforms;
        let handed = collector.collect(piece).handed_over;
        handed_total += handed;
        // Nothing ran a transform during collect.
        assert_eq!(queued_transforms, before);
        assert_eq!(handed, report.blocks, "chunk {i}: same blocks completed");
        if i % 3 == 2 {
            let mut in_process = 0u32;
            let done = processing.process_queued_probed(&mut consumer, &mut |s| {
                if s == Stage::Transform {
                    in_process += 1;
                }
            });
            queued_transforms += in_process;
            assert_eq!(
                in_process, done.averaged,
                "one transform per averaged block"
            );
        }
    }
    processing.process_queued_probed(&mut consumer, &mut |s| {
        if s == Stage::Transform {
            queued_transforms += 1;
        }
    });
    assert!(push_transforms > 20);
    assert_eq!(queued_transforms, push_transforms);
    assert_eq!(handed_total, pushed.status().blocks_seen);
}

// Overruns: with the processing side stalled, a queue of Q slots holds Q - 1 blocks; every
// further block is dropped and counted on both sides, and what is averaged is exactly the
// blocks that got through, each a whole stretch of the stream.
#[test]
fn overruns_are_counted_and_never_spliced() {
    let stream = counts(4000);
    let overlap = 16;
    let mut queue: BlockQueue<f32, N, 3> = Queue::new();
    let (producer, mut consumer) = queue.split();
    let fresh: Analyzer<N, BINS> = Analyzer::new(&HANN, config(overlap)).unwrap();
    let (mut collector, mut processing) = fresh.split(producer);
    // The reference: every block of the stream by the framer, the kept ones processed.
    let mut reference: Analyzer<N, BINS> = Analyzer::new(&HANN, config(overlap)).unwrap();
    let mut framer: Framer<f32, N> = Framer::new(overlap).unwrap();
    let mut all_blocks = Vec::new();
    let mut input: &[i16] = &stream;
    while let Some(b) = framer.fill_converted(&mut input, f32::from) {
        all_blocks.push(*b);
    }

    // Stall: 10 blocks complete, 2 fit the queue, 8 are lost.
    let hop = N - overlap;
    let first = N + 9 * hop;
    let r = collector.collect_converted(&stream[..first], f32::from);
    assert_eq!((r.handed_over, r.lost), (2, 8));
    assert_eq!(collector.blocks_lost(), 8);
    let got = processing.process_queued(&mut consumer);
    assert_eq!(
        (got.blocks, got.lost),
        (2, 0),
        "the loss is learnt with the next block"
    );
    // The rest, processed as it comes: the first block after the gap reports the 8 lost.
    let mut lost_seen = 0;
    for piece in stream[first..].chunks(50) {
        collector.collect_converted(piece, f32::from);
        lost_seen += processing.process_queued(&mut consumer).lost;
    }
    assert_eq!(lost_seen, 8);
    assert_eq!(processing.status().blocks_lost, 8);
    assert_eq!(collector.blocks_lost(), 8);

    for (i, block) in all_blocks.iter().enumerate() {
        if !(2..10).contains(&i) {
            reference.process_block(block);
        }
    }
    let c = leakless::Correction::Energy;
    let s = leakless::Scale::Power;
    assert_eq!(
        bits(processing.spectrum(s, c).values()),
        bits(reference.spectrum(s, c).values())
    );
    assert_eq!(processing.status().blocks_seen, all_blocks.len() as u32 - 8);
    assert_eq!(
        processing.status().blocks_averaged,
        reference.status().blocks_averaged
    );
}

// The one-call path is the two halves: push equals framing with the framer and handing each
// block to process_block.
#[test]
fn push_is_fill_then_process_block() {
    let stream: Vec<f32> = counts(1500).iter().map(|&c| f32::from(c)).collect();
    let mut pushed: Analyzer<N, BINS> = Analyzer::new(&HANN, config(48)).unwrap();
    let mut halves: Analyzer<N, BINS> = Analyzer::new(&HANN, config(48)).unwrap();
    let mut framer: Framer<f32, N> = Framer::new(48).unwrap();
    for piece in stream.chunks(77) {
        pushed.push(piece);
        let mut input = piece;
        while let Some(block) = framer.fill(&mut input) {
            halves.process_block(block);
        }
    }
    let (s, c) = (leakless::Scale::Rms, leakless::Correction::Amplitude);
    assert_eq!(
        bits(halves.spectrum(s, c).values()),
        bits(pushed.spectrum(s, c).values())
    );
    assert_eq!(halves.status(), pushed.status());
    let _: Handoff<f32, N> = Handoff {
        samples: [0.0; N],
        lost_before: 0,
    };
}
