//! The impact trigger: a stage in front of framing that captures one block per hammer hit.
//!
//! Continuous framing is wrong for an impact test: it averages blocks with no hit into the
//! one that had it, and a block that starts after the hit has lost the start of the
//! response. This stage watches the force channel of an interleaved `C`-channel stream and,
//! for each hit, hands over exactly one block of every channel: `pre_trigger` samples before
//! the force crossed the trigger level, the rest after it.
//!
//! * **Trigger**: the force (sign-flipped for [`Slope::Falling`]) crosses `level` from below:
//!   `f[t - 1] < level <= f[t]`, `t` the trigger sample.
//! * **Double hit**: within the captured block, after the first pulse has fallen below
//!   `double_hit_fraction` of its peak, any force sample at or above that fraction of the
//!   first peak (the hammer bounced, or the operator hit twice). The block is handed over
//!   flagged [`HitOutcome::DoubleHit`] and counted; the caller must not average it.
//! * **Too early**: a hit less than `pre_trigger` samples after the start (or after
//!   [`HitTrigger::clear`]) cannot have its pre-trigger samples; flagged and counted.
//! * **Re-arm**: after a block, the trigger re-arms once the force has stayed below `level`
//!   for `rearm_samples` consecutive samples, so a slowly decaying pulse, or a hit that
//!   straddles the block's end, cannot trigger a second block.
//! * **Baseline**: with a pre-trigger, each channel's mean over the pre-trigger samples is
//!   subtracted from its block (a transient must not be detrended by its own mean, which
//!   would spread the pulse's DC over the whole record).
//!
//! Every sample is treated alike whatever the chunking (the stage keeps the last `N` frames
//! in a ring, in place of the framer's buffer), so a hit is captured at the same sample under
//! any chunking, and none is lost across chunk boundaries.
//!
//! ```
//! use leakless::spectrum::trigger::{HitOutcome, HitTrigger, Slope, TriggerSettings};
//!
//! let settings = TriggerSettings::new(0, 1.0).with_pre_trigger(2);
//! let mut trigger: HitTrigger<8, 2> = HitTrigger::new(settings).unwrap();
//! // force, response interleaved; the force crosses 1.0 at frame 4.
//! let force = [0.0, 0.0, 0.0, 0.0, 5.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0];
//! let stream: Vec<f32> = force.iter().enumerate().flat_map(|(n, &f)| [f, n as f32]).collect();
//! let mut hits = Vec::new();
//! trigger.push_interleaved(&stream, |hit| hits.push((hit.trigger_sample, hit.outcome, hit.blocks[1][0])));
//! // The block is frames 2 ..= 9; the response (the frame index) less its pre-trigger mean 2.5.
//! assert_eq!(hits, [(4, HitOutcome::Accepted, -0.5)]);
//! ```

use crate::error::ConfigError;

/// Which way the force goes when the hammer strikes.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Slope {
    /// The force rises through the level (a positive force sensor).
    #[default]
    Rising,
    /// The force falls through `-level`.
    Falling,
}

/// Trigger settings; start from [`TriggerSettings::new`].
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TriggerSettings {
    /// Index of the force channel, `< C`.
    pub force_channel: usize,
    /// Trigger level in the force channel's input units, finite and > 0.
    pub level: f32,
    /// Direction of the hit. Default: rising.
    pub slope: Slope,
    /// Samples kept before the trigger sample, `< N`. Default: 0.
    pub pre_trigger: usize,
    /// A second force peak at or above this fraction of the first rejects the block, in
    /// `(0, 1]`. Default: 0.1.
    pub double_hit_fraction: f32,
    /// Samples the force must stay below the level after a block before the next trigger.
    /// Default: 1.
    pub rearm_samples: usize,
}

impl TriggerSettings {
    /// Force on channel `force_channel`, trigger at `level`; the other fields take their
    /// defaults.
    pub const fn new(force_channel: usize, level: f32) -> Self {
        Self {
            force_channel,
            level,
            slope: Slope::Rising,
            pre_trigger: 0,
            double_hit_fraction: 0.1,
            rearm_samples: 1,
        }
    }

    /// Pre-trigger samples.
    pub const fn with_pre_trigger(mut self, samples: usize) -> Self {
        self.pre_trigger = samples;
        self
    }

    /// Slope.
    pub const fn with_slope(mut self, slope: Slope) -> Self {
        self.slope = slope;
        self
    }

    /// Double-hit fraction.
    pub const fn with_double_hit_fraction(mut self, fraction: f32) -> Self {
        self.double_hit_fraction = fraction;
        self
    }

    /// Re-arm hold-off in samples.
    pub const fn with_rearm_samples(mut self, samples: usize) -> Self {
        self.rearm_samples = samples;
        self
    }

    /// Checks the settings for `N`-sample blocks of `C` channels ([`ConfigError::Trigger`]).
    pub fn validate(&self, block_len: usize, channels: usize) -> Result<(), ConfigError> {
        let fraction = self.double_hit_fraction;
        let ok = self.force_channel < channels
            && self.level.is_finite()
            && self.level > 0.0
            && self.pre_trigger < block_len
            && fraction.is_finite()
            && fraction > 0.0
            && fraction <= 1.0;
        if ok {
            Ok(())
        } else {
            Err(ConfigError::Trigger)
        }
    }
}

/// What a captured block is good for.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum HitOutcome {
    /// One clean hit: average it.
    Accepted,
    /// A second hit inside the block: reject.
    DoubleHit,
    /// Not enough samples before the hit for the pre-trigger: reject.
    TooEarly,
}

/// One captured block, handed to the caller's closure.
#[derive(Clone, Copy, Debug)]
pub struct Hit<'b, const N: usize, const C: usize> {
    /// Every channel's block, oldest sample first; the trigger sample is at `pre_trigger`.
    pub blocks: &'b [[f32; N]; C],
    /// Index of the trigger sample in the stream (frames since construction or `clear`).
    pub trigger_sample: u64,
    /// The first pulse's peak force (input units, sign-flipped for a falling slope).
    pub peak: f32,
    /// Accepted, or why not.
    pub outcome: HitOutcome,
}

/// Counters since construction or [`HitTrigger::clear`].
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct TriggerCounts {
    /// Triggers (every captured block, whatever its outcome).
    pub hits: u32,
    /// Blocks with a double hit.
    pub double_hits: u32,
    /// Hits too early for the pre-trigger.
    pub too_early: u32,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Phase {
    /// Waiting for a crossing.
    Armed,
    /// Recording until the block is complete.
    Capturing { trigger_sample: u64, early: bool },
    /// After a block: counting samples below the level.
    HoldOff { below: usize },
}

/// The trigger stage for `N`-sample blocks of `C` interleaved channels.
///
/// # Memory
///
/// `4 N C` bytes for the ring that holds the last `N` frames (the pre-trigger history, then
/// the block), plus about 60 bytes.
#[derive(Clone, Debug)]
pub struct HitTrigger<const N: usize, const C: usize> {
    ring: [[f32; N]; C],
    /// Ring slot of the next frame (the oldest held).
    write: usize,
    /// Frames since the start (or `clear`).
    frames: u64,
    /// The interleaved sample the next input belongs to.
    next_channel: usize,
    previous_force: f32,
    phase: Phase,
    settings: TriggerSettings,
    counts: TriggerCounts,
}

impl<const N: usize, const C: usize> HitTrigger<N, C> {
    /// A trigger with `settings` ([`TriggerSettings::validate`]).
    pub fn new(settings: TriggerSettings) -> Result<Self, ConfigError> {
        const {
            assert!(
                N >= 2 && C >= 1,
                "a block of at least 2 samples and 1 channel"
            )
        };
        settings.validate(N, C)?;
        Ok(Self {
            ring: [[0.0; N]; C],
            write: 0,
            frames: 0,
            next_channel: 0,
            previous_force: f32::INFINITY,
            phase: Phase::Armed,
            settings,
            counts: TriggerCounts::default(),
        })
    }

    /// The settings.
    pub fn settings(&self) -> &TriggerSettings {
        &self.settings
    }

    /// The counters.
    pub fn counts(&self) -> TriggerCounts {
        self.counts
    }

    /// Whether the trigger waits for a hit (not capturing, not holding off).
    pub fn is_armed(&self) -> bool {
        self.phase == Phase::Armed
    }

    /// Forgets the history, the interleave phase and the counters; re-arms.
    pub fn clear(&mut self) {
        self.write = 0;
        self.frames = 0;
        self.next_channel = 0;
        self.previous_force = f32::INFINITY;
        self.phase = Phase::Armed;
        self.counts = TriggerCounts::default();
    }

    /// The force as the trigger compares it (sign-flipped for a falling slope).
    fn force(&self, x: f32) -> f32 {
        match self.settings.slope {
            Slope::Rising => x,
            Slope::Falling => -x,
        }
    }

    /// Pushes interleaved samples (chunks may end inside a frame). `on_hit` is called once
    /// per captured block, accepted or not; the block is only borrowed for the call.
    pub fn push_interleaved(&mut self, samples: &[f32], mut on_hit: impl FnMut(Hit<'_, N, C>)) {
        for &x in samples {
            self.ring[self.next_channel][self.write] = x;
            self.next_channel += 1;
            if self.next_channel == C {
                self.next_channel = 0;
                self.frame_complete(&mut on_hit);
            }
        }
    }

    /// Advances the state machine by the frame just written at `self.write`.
    fn frame_complete(&mut self, on_hit: &mut impl FnMut(Hit<'_, N, C>)) {
        let level = self.settings.level;
        let force = self.force(self.ring[self.settings.force_channel][self.write]);
        let sample = self.frames;
        self.frames += 1;
        self.write = (self.write + 1) % N;
        match self.phase {
            Phase::Armed => {
                // NaN compares false both ways, so it never triggers.
                if self.previous_force < level && force >= level {
                    let pre = self.settings.pre_trigger as u64;
                    self.phase = Phase::Capturing {
                        trigger_sample: sample,
                        early: sample < pre,
                    };
                }
            }
            Phase::Capturing {
                trigger_sample,
                early,
            } => {
                let pre = self.settings.pre_trigger as u64;
                if self.frames >= trigger_sample + (N as u64) - pre {
                    self.deliver(trigger_sample, early, on_hit);
                    self.phase = Phase::HoldOff { below: 0 };
                }
            }
            Phase::HoldOff { below } => {
                let below = if force < level { below + 1 } else { 0 };
                self.phase = if below >= self.settings.rearm_samples {
                    Phase::Armed
                } else {
                    Phase::HoldOff { below }
                };
            }
        }
        // A capture that completes on its trigger frame (pre-trigger N - 1).
        if let Phase::Capturing {
            trigger_sample,
            early,
        } = self.phase
        {
            let pre = self.settings.pre_trigger as u64;
            if trigger_sample == sample && self.frames >= trigger_sample + (N as u64) - pre {
                self.deliver(trigger_sample, early, on_hit);
                self.phase = Phase::HoldOff { below: 0 };
            }
        }
        self.previous_force = force;
    }

    /// The ring holds the block (its oldest frame at `self.write`): rotate it in place to
    /// start at index 0, judge it, remove the baseline and hand it over.
    fn deliver(
        &mut self,
        trigger_sample: u64,
        early: bool,
        on_hit: &mut impl FnMut(Hit<'_, N, C>),
    ) {
        for channel in &mut self.ring {
            channel.rotate_left(self.write);
        }
        self.write = 0;
        let pre = self.settings.pre_trigger;
        let (peak, double) = self.first_peak_and_double_hit();
        if pre > 0 {
            for channel in &mut self.ring {
                let baseline = channel[..pre].iter().sum::<f32>() / pre as f32;
                for x in channel.iter_mut() {
                    *x -= baseline;
                }
            }
        }
        let outcome = if early {
            self.counts.too_early = self.counts.too_early.saturating_add(1);
            HitOutcome::TooEarly
        } else if double {
            self.counts.double_hits = self.counts.double_hits.saturating_add(1);
            HitOutcome::DoubleHit
        } else {
            HitOutcome::Accepted
        };
        self.counts.hits = self.counts.hits.saturating_add(1);
        on_hit(Hit {
            blocks: &self.ring,
            trigger_sample,
            peak,
            outcome,
        });
    }

    /// The first pulse's peak (from the trigger sample until the force falls below
    /// `double_hit_fraction` of the peak so far) and whether a later sample of the block
    /// reaches that fraction again.
    fn first_peak_and_double_hit(&self) -> (f32, bool) {
        let force = &self.ring[self.settings.force_channel];
        let fraction = self.settings.double_hit_fraction;
        let mut samples = force[self.settings.pre_trigger..]
            .iter()
            .map(|&x| self.force(x));
        let mut peak = f32::NEG_INFINITY;
        for f in samples.by_ref() {
            peak = peak.max(f);
            if f < fraction * peak {
                break;
            }
        }
        let threshold = fraction * peak;
        // A NaN counts as a second hit: the block cannot be trusted.
        let double = samples.any(|f| f >= threshold || f.is_nan());
        (peak, double)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Interleaves a force record with a response equal to the sample index.
    fn stream(force: &[f32]) -> Vec<f32> {
        force
            .iter()
            .enumerate()
            .flat_map(|(n, &f)| [f, n as f32])
            .collect()
    }

    fn run(
        trigger: &mut HitTrigger<16, 2>,
        data: &[f32],
        chunk: usize,
    ) -> Vec<(u64, HitOutcome, f32)> {
        let mut hits = Vec::new();
        for piece in data.chunks(chunk) {
            trigger.push_interleaved(piece, |hit| {
                // response sample at the trigger position, less the pre-trigger mean
                hits.push((hit.trigger_sample, hit.outcome, hit.blocks[1][4]));
            });
        }
        hits
    }

    #[test]
    fn single_double_and_early_hits() {
        let mut force = vec![0.0f32; 100];
        force[2] = 3.0; // too early for 4 pre-trigger samples
        force[30] = 2.0;
        force[31] = 4.0;
        force[32] = 1.0;
        force[60] = 5.0;
        force[66] = 1.0; // 20 % of the first peak inside the block: double hit
        let settings = TriggerSettings::new(0, 1.5)
            .with_pre_trigger(4)
            .with_double_hit_fraction(0.1);
        for chunk in [1, 3, 7, 200] {
            let mut t: HitTrigger<16, 2> = HitTrigger::new(settings).unwrap();
            let hits = run(&mut t, &stream(&force), chunk);
            // baseline: the response is n, its pre-trigger mean is trigger - 2.5
            assert_eq!(
                hits,
                [
                    // the ring held two unwritten (zero) frames before frame 0
                    (2, HitOutcome::TooEarly, 2.0 - 0.25),
                    (30, HitOutcome::Accepted, 2.5),
                    (60, HitOutcome::DoubleHit, 2.5),
                ],
                "chunk {chunk}"
            );
            assert_eq!(
                t.counts(),
                TriggerCounts {
                    hits: 3,
                    double_hits: 1,
                    too_early: 1
                }
            );
        }
    }

    #[test]
    fn falling_slope_and_bad_settings() {
        let mut force = vec![0.0f32; 40];
        force[20] = -2.0;
        let settings = TriggerSettings::new(0, 1.0).with_slope(Slope::Falling);
        let mut t: HitTrigger<16, 2> = HitTrigger::new(settings).unwrap();
        let hits = run(&mut t, &stream(&force), 5);
        assert_eq!(hits.len(), 1);
        assert_eq!(hits[0].0, 20);
        for bad in [
            TriggerSettings::new(2, 1.0),
            TriggerSettings::new(0, 0.0),
            TriggerSettings::new(0, f32::NAN),
            TriggerSettings::new(0, 1.0).with_pre_trigger(16),
            TriggerSettings::new(0, 1.0).with_double_hit_fraction(0.0),
            TriggerSettings::new(0, 1.0).with_double_hit_fraction(1.5),
        ] {
            assert_eq!(
                HitTrigger::<16, 2>::new(bad).err(),
                Some(ConfigError::Trigger)
            );
        }
    }
}
