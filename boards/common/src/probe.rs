//! Instructions per pipeline stage, from an analyzer's stage probe.
//!
//! The analyzers call `probe(stage)` as each stage of a block begins and `probe(Done)` when
//! the block is finished. [`StageCounter::at`] closes the running stage and opens the next:
//! every block's stages are timed with SysTick (summed in ticks, so the per-block mean keeps
//! one tick of error in total), and the stages of one chosen block (`traced`) are also
//! bracketed by the plugin markers, so `count.sh` prints their exact counts.
//!
//! Whatever the counter itself costs between two stages (a few dozen instructions) falls
//! outside both the SysTick interval and the marked region: the stage's own reading is taken
//! last thing before it starts and first thing after it ends.

use leakless::Stage;

use crate::count::{self, Span};

/// The stages a block goes through, in order.
pub const STAGES: [Stage; 4] = [
    Stage::Condition,
    Stage::Window,
    Stage::Transform,
    Stage::Average,
];

/// Short names for the log.
pub fn name(stage: Stage) -> &'static str {
    match stage {
        Stage::Condition => "condition",
        Stage::Window => "window",
        Stage::Transform => "transform",
        Stage::Average => "average",
        Stage::Done => "done",
    }
}

fn slot(stage: Stage) -> usize {
    match stage {
        Stage::Condition => 0,
        Stage::Window => 1,
        Stage::Transform => 2,
        Stage::Average => 3,
        Stage::Done => 4,
    }
}

enum Open {
    None,
    Quiet(Stage, u64),
    Traced(Stage, Span),
}

/// Per-stage totals over the blocks seen.
pub struct StageCounter {
    open: Open,
    ticks: [u64; 4],
    blocks: u32,
    traced: u32,
    /// `(region index, instructions)` of each stage of the traced block, logged after it.
    exact: [(u32, u32); 4],
    label: &'static str,
}

impl StageCounter {
    /// Counts every block; block number `traced` (0-based) also as marked regions, logged as
    /// `insns[i] <label> block <traced>: <stage>`.
    pub fn new(label: &'static str, traced: u32) -> Self {
        Self {
            open: Open::None,
            ticks: [0; 4],
            blocks: 0,
            traced,
            exact: [(0, 0); 4],
            label,
        }
    }

    /// The probe: call with each stage as the analyzer announces it.
    #[inline(always)]
    pub fn at(&mut self, stage: Stage) {
        match core::mem::replace(&mut self.open, Open::None) {
            Open::None => {}
            Open::Quiet(s, t0) => self.ticks[slot(s)] += count::ticks() - t0,
            Open::Traced(s, span) => {
                let (index, n, ticks) = count::end_ticks(span);
                self.exact[slot(s)] = (index, n);
                self.ticks[slot(s)] += ticks;
            }
        }
        if stage == Stage::Done {
            if self.blocks == self.traced {
                self.log_traced();
            }
            self.blocks += 1;
            return;
        }
        if self.blocks == self.traced {
            self.open = Open::Traced(stage, count::begin());
        } else {
            self.open = Open::Quiet(stage, count::ticks());
        }
    }

    fn log_traced(&self) {
        for (&stage, &(index, n)) in STAGES.iter().zip(self.exact.iter()) {
            if index != 0 || n != 0 {
                defmt::info!(
                    "insns[{=u32}] {=str} block {=u32}: {=str}: {=u32}",
                    index,
                    self.label,
                    self.traced,
                    name(stage),
                    n
                );
            }
        }
    }

    /// Blocks finished.
    pub fn blocks(&self) -> u32 {
        self.blocks
    }

    /// Mean instructions per block in `stage` (0 before the first block).
    pub fn mean(&self, stage: Stage) -> u32 {
        let s = slot(stage);
        if s >= 4 || self.blocks == 0 {
            return 0;
        }
        (count::ticks_to_instructions(self.ticks[s]) / u64::from(self.blocks)) as u32
    }

    /// Mean instructions per block over all four stages.
    pub fn mean_total(&self) -> u32 {
        if self.blocks == 0 {
            return 0;
        }
        let ticks: u64 = self.ticks.iter().sum();
        (count::ticks_to_instructions(ticks) / u64::from(self.blocks)) as u32
    }
}
