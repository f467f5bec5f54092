//! Interrupt-safe feeding: an interrupt side that only frames samples into blocks, and a
//! processing side that runs the pipeline on them in thread mode (or a low-priority task).
//!
//! `push` does both in one call, so fed from a DMA half-transfer interrupt it would run the
//! transform inside the interrupt. Split instead:
//!
//! * the **interrupt side**, a [`Collector`], copies each chunk into the block it is
//!   assembling ([`Framer::fill`]) and hands every complete block to a
//!   [`heapless::spsc`] queue (lock-free, one producer and one consumer; on Armv6-M it needs
//!   only atomic loads and stores, which heapless 0.8 uses there). It never checks,
//!   windows or transforms a block: it holds no window, no work block and no average.
//! * the **processing side** is the analyzer, split from its framer by `split` (for example
//!   [`Analyzer::split`](crate::spectrum::analyzer::Analyzer::split)): its `process_queued`
//!   runs every queued block through the same stages `push` uses, reading each block where it
//!   lies in the queue.
//!
//! `push` is the two halves back to back (the framer's [`Framer::fill`] and the analyzer's
//! `process_block`), so a stream fed either way gives bit-identical results.
//!
//! When the queue is full as a block completes (the processing side fell behind), the block
//! is dropped and counted: [`Collector::blocks_lost`] on the interrupt side, and
//! [`Status::blocks_lost`](crate::spectrum::config::Status::blocks_lost) /
//! [`PushReport::lost`](crate::spectrum::config::PushReport::lost) on the processing side,
//! which learns of it with the next block that arrives. The framing carries on, so every
//! block that is processed is a whole stretch of the stream; no samples are spliced.
//!
//! # Cost per call
//!
//! Interrupt side, per call: one write per sample of the chunk (converted, for `i16` counts
//! into an `f32` analyzer), and per completed block one move of the block into its queue slot
//! and one move of the overlap within the framer. Measured worst cases are in
//! `boards/README.md` (the `qemu-m4-irq` board).
//!
//! # Example
//!
//! ```
//! use heapless::spsc::Queue;
//! use leakless::spectrum::feed::Handoff;
//! use leakless::{Analyzer, Config, Shape, Window};
//!
//! static HANN: Window<256> = Window::new(Shape::Hann);
//! // Two blocks in flight (heapless queues hold one item less than their size).
//! let mut queue: Queue<Handoff<f32, 256>, 3> = Queue::new();
//! let (producer, mut consumer) = queue.split();
//! let analyzer: Analyzer<256, 129> = Analyzer::new(&HANN, Config::new(25_600.0)).unwrap();
//! let (mut collector, mut processing) = analyzer.split(producer);
//!
//! let chunk = [0.25f32; 64];
//! for _ in 0..8 {
//!     collector.collect(&chunk); // in the DMA interrupt: copies only
//! }
//! let report = processing.process_queued(&mut consumer); // in thread mode
//! assert_eq!((report.blocks, report.lost), (2, 0));
//! ```

use heapless::spsc::{Consumer, Producer, Queue};

use crate::spectrum::config::PushReport;
use crate::spectrum::frame::Framer;

/// A complete block on its way from a [`Collector`] to the processing side.
#[derive(Clone, Copy, Debug)]
pub struct Handoff<T, const N: usize> {
    /// The block's samples, oldest first.
    pub samples: [T; N],
    /// Blocks the collector completed but could not hand over just before this one.
    pub lost_before: u32,
}

/// The queue between the two sides: `Q - 1` blocks in flight (heapless keeps one slot
/// free), each `N` samples.
pub type BlockQueue<T, const N: usize, const Q: usize> = Queue<Handoff<T, N>, Q>;

/// What one [`Collector::collect`] call did.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CollectReport {
    /// Blocks completed and handed to the queue.
    pub handed_over: u32,
    /// Blocks completed but dropped: the queue was full.
    pub lost: u32,
}

/// The interrupt side: frames samples into blocks and hands them to the processing side.
///
/// Made by an analyzer's `split`, which gives it the analyzer's framer (so its overlap).
/// Call [`Collector::collect`] from the interrupt that delivers samples.
pub struct Collector<'q, T, const N: usize, const Q: usize> {
    framer: Framer<T, N>,
    producer: Producer<'q, Handoff<T, N>, Q>,
    /// Lost since the last block handed over.
    unreported: u32,
    /// Lost in all.
    lost: u32,
}

impl<'q, T: Copy + Default, const N: usize, const Q: usize> Collector<'q, T, N, Q> {
    /// A collector that frames with `framer` and hands blocks to `producer`.
    pub fn new(framer: Framer<T, N>, producer: Producer<'q, Handoff<T, N>, Q>) -> Self {
        Self {
            framer,
            producer,
            unreported: 0,
            lost: 0,
        }
    }

    /// Copies `samples` into the block being assembled; hands over every block they complete.
    pub fn collect(&mut self, samples: &[T]) -> CollectReport {
        self.collect_converted(samples, |x| x)
    }

    /// [`Collector::collect`] for samples of another type, converted on their way into the
    /// block (e.g. `i16` counts into an `f32` analyzer with `f32::from`).
    pub fn collect_converted<S: Copy>(
        &mut self,
        samples: &[S],
        convert: impl Fn(S) -> T,
    ) -> CollectReport {
        let mut report = CollectReport::default();
        let mut input = samples;
        while let Some(block) = self.framer.fill_converted(&mut input, &convert) {
            if self.producer.ready() {
                let handoff = Handoff {
                    samples: *block,
                    lost_before: self.unreported,
                };
                // `ready()` said there is a free slot, and only this side adds to the queue.
                if self.producer.enqueue(handoff).is_ok() {
                    self.unreported = 0;
                    report.handed_over += 1;
                    continue;
                }
            }
            self.unreported = self.unreported.saturating_add(1);
            self.lost = self.lost.saturating_add(1);
            report.lost += 1;
        }
        report
    }

    /// Blocks completed but dropped since construction (overruns).
    pub fn blocks_lost(&self) -> u32 {
        self.lost
    }

    /// Samples held towards the next block.
    pub fn buffered(&self) -> usize {
        self.framer.buffered()
    }
}

impl<T: Copy + Default, const N: usize, const Q: usize> core::fmt::Debug
    for Collector<'_, T, N, Q>
{
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.debug_struct("Collector")
            .field("buffered", &self.framer.buffered())
            .field("queued", &self.producer.len())
            .field("lost", &self.lost)
            .finish()
    }
}

/// What an analyzer keeps of the stream between blocks: its own [`Framer`] (it is fed by
/// `push`), or [`Unframed`] (its framer went to a [`Collector`]; it is fed whole blocks).
/// Sealed.
pub trait Framing: sealed::Sealed {
    /// Forgets buffered samples.
    fn clear(&mut self);
    /// Overlap in samples.
    fn overlap(&self) -> usize;
}

/// The processing side's stand-in for the framer it gave away: only the overlap, for the
/// read-out of the settings.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Unframed {
    overlap: usize,
}

impl Unframed {
    /// For blocks overlapping by `overlap` samples.
    pub(crate) fn new(overlap: usize) -> Self {
        Self { overlap }
    }
}

impl<T: Copy + Default, const N: usize> Framing for Framer<T, N> {
    fn clear(&mut self) {
        Framer::clear(self);
    }
    fn overlap(&self) -> usize {
        Framer::overlap(self)
    }
}

impl Framing for Unframed {
    fn clear(&mut self) {}
    fn overlap(&self) -> usize {
        self.overlap
    }
}

mod sealed {
    pub trait Sealed {}
    impl<T, const N: usize> Sealed for crate::spectrum::frame::Framer<T, N> {}
    impl Sealed for super::Unframed {}
}

/// Runs `process(block, lost_before)` on every block in `consumer`, where it lies in the
/// queue, then frees its slot. The one drain loop of every analyzer.
#[cfg_attr(not(any(feature = "f32", feature = "fixed")), allow(dead_code))]
pub(crate) fn drain<T, const N: usize, const Q: usize>(
    consumer: &mut Consumer<'_, Handoff<T, N>, Q>,
    mut process: impl FnMut(&[T; N], u32) -> PushReport,
) -> PushReport {
    let mut report = PushReport::default();
    while let Some(handoff) = consumer.peek() {
        report.add(process(&handoff.samples, handoff.lost_before));
        // Frees the slot; the value itself is not needed again.
        let _ = consumer.dequeue();
    }
    report
}
