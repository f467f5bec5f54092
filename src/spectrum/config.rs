//! Settings, stage names and counters shared by every analyzer (the float
//! [`Analyzer`](crate::spectrum::analyzer::Analyzer) and the fixed-point
//! [`FixedAnalyzer`](crate::spectrum::fixed::FixedAnalyzer)), so firmware can switch
//! arithmetic without touching its configuration or its bookkeeping.

use crate::error::ConfigError;
use crate::spectrum::average::{Averaging, WhenDone};
use crate::spectrum::condition::{Detrend, OverloadPolicy};
use crate::window::Factors;

/// The overlap between consecutive blocks.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Overlap {
    /// A number of samples, `0 ..= N - 1`.
    Samples(usize),
    /// A fraction of the block in `0.0 .. 1.0`, rounded to the nearest sample
    /// (0.5 for Hann, about 2/3 for Blackman-Harris and Nuttall, 0.75 for flat tops).
    Fraction(f32),
}

impl Overlap {
    /// The overlap in samples for `N`-sample blocks.
    pub fn samples(self, block_len: usize) -> Result<usize, ConfigError> {
        let samples = match self {
            Overlap::Samples(s) => s,
            Overlap::Fraction(f) => {
                if !(f.is_finite() && (0.0..1.0).contains(&f)) {
                    return Err(ConfigError::OverlapFraction);
                }
                libm::roundf(f * block_len as f32) as usize
            }
        };
        if samples >= block_len {
            return Err(ConfigError::Overlap {
                overlap: samples,
                block_len,
            });
        }
        Ok(samples)
    }
}

/// Settings of an analyzer. Start from [`Config::new`] and change what differs, with the
/// `with_*` setters or the public fields; [`Analyzer::new`](crate::spectrum::analyzer::Analyzer::new) and
/// [`FixedAnalyzer::new`](crate::spectrum::fixed::FixedAnalyzer::new) check them all.
///
/// ```
/// use leakless::{Averaging, Config, Detrend, WhenDone};
///
/// let config = Config::new(25_600.0)
///     .with_overlap_fraction(0.5)
///     .with_averaging(Averaging::Linear { count: 16, when_done: WhenDone::Restart })
///     .with_sensitivity(leakless::units::g_to_m_s2(1.0 / 16_384.0)) // counts to m/s^2 (+-2 g, 16 bits)
///     .with_full_scale(32_767.0) // counts
///     .with_unit("m/s^2");
/// assert_eq!(config.detrend, Detrend::Mean);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Config {
    /// Sample rate, Hz: finite and > 0.
    pub sample_rate_hz: f32,
    /// Overlap between blocks. Default: none.
    pub overlap: Overlap,
    /// How blocks are averaged. Default: linear over 8 blocks, then restart.
    pub averaging: Averaging,
    /// What is removed from each block before windowing. Default: the mean.
    pub detrend: Detrend,
    /// Engineering units per input unit (per count for [`Analyzer::push_counts`](crate::spectrum::analyzer::Analyzer::push_counts)
    /// and the fixed-point analyzers), magnitude
    /// in [`SENSITIVITY_RANGE`](crate::spectrum::condition::SENSITIVITY_RANGE). Default: 1.
    pub sensitivity: f32,
    /// Overload limit in input units (a block with any `|x| >= full_scale` is overloaded):
    /// finite and > 0, or `None` for no check. Default: `None`.
    pub full_scale: Option<f32>,
    /// Engineering unit name, e.g. `"m/s^2"` or `"g"`. Default: `""`.
    pub unit: &'static str,
    /// What happens to overloaded blocks. Default: [`OverloadPolicy::Reject`].
    pub overload: OverloadPolicy,
}

impl Config {
    /// The defaults listed on each field, at `sample_rate_hz`.
    pub const fn new(sample_rate_hz: f32) -> Self {
        Self {
            sample_rate_hz,
            overlap: Overlap::Samples(0),
            averaging: Averaging::Linear {
                count: 8,
                when_done: WhenDone::Restart,
            },
            detrend: Detrend::Mean,
            sensitivity: 1.0,
            full_scale: None,
            unit: "",
            overload: OverloadPolicy::Reject,
        }
    }

    /// Overlap of `samples` samples.
    pub const fn with_overlap(mut self, samples: usize) -> Self {
        self.overlap = Overlap::Samples(samples);
        self
    }

    /// Overlap as a fraction of the block, `0.0 .. 1.0`.
    pub const fn with_overlap_fraction(mut self, fraction: f32) -> Self {
        self.overlap = Overlap::Fraction(fraction);
        self
    }

    /// Averaging mode.
    pub const fn with_averaging(mut self, averaging: Averaging) -> Self {
        self.averaging = averaging;
        self
    }

    /// Detrending.
    pub const fn with_detrend(mut self, detrend: Detrend) -> Self {
        self.detrend = detrend;
        self
    }

    /// Sensitivity, engineering units per input unit.
    pub const fn with_sensitivity(mut self, sensitivity: f32) -> Self {
        self.sensitivity = sensitivity;
        self
    }

    /// Full scale in input units.
    pub const fn with_full_scale(mut self, full_scale: f32) -> Self {
        self.full_scale = Some(full_scale);
        self
    }

    /// Engineering unit name.
    pub const fn with_unit(mut self, unit: &'static str) -> Self {
        self.unit = unit;
        self
    }

    /// Overload policy.
    pub const fn with_overload_policy(mut self, overload: OverloadPolicy) -> Self {
        self.overload = overload;
        self
    }

    /// The checks every analyzer makes at construction, in this order: the sample rate, a
    /// window whose levels can be corrected ([`Factors::can_correct`]), the overlap (returned
    /// in samples for blocks of `block_len`), and the averaging.
    pub fn validate(&self, block_len: usize, window: &Factors) -> Result<usize, ConfigError> {
        if !(self.sample_rate_hz.is_finite() && self.sample_rate_hz > 0.0) {
            return Err(ConfigError::SampleRate);
        }
        if !window.can_correct() {
            return Err(ConfigError::WindowParameter);
        }
        let overlap = self.overlap.samples(block_len)?;
        self.averaging.validate()?;
        Ok(overlap)
    }
}

/// A stage of the per-block pipeline, passed to the probe of [`Analyzer::push_probed`](crate::spectrum::analyzer::Analyzer::push_probed)
/// (or [`FixedAnalyzer::push_probed`](crate::spectrum::fixed::FixedAnalyzer::push_probed)) as the
/// stage *begins* (and [`Stage::Done`] when the block is finished), so the time between two
/// calls is the time of the first stage.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Stage {
    /// Non-finite and overload checks, and the block mean (one pass).
    Condition,
    /// Detrend and window (one pass).
    Window,
    /// The real FFT.
    Transform,
    /// `|X|^2` per line folded into the average (one pass; the scaling to levels is done when
    /// a spectrum is read, not per block).
    Average,
    /// The block is finished (after any stage: rejected blocks skip the rest).
    Done,
}

/// What one call of [`Analyzer::push`](crate::spectrum::analyzer::Analyzer::push) (or a fixed-point analyzer's `push`) did.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PushReport {
    /// Blocks completed by these samples.
    pub blocks: u32,
    /// Blocks that entered the average.
    pub averaged: u32,
    /// Blocks kept out for a non-finite sample or (with [`OverloadPolicy::Reject`]) overload.
    pub rejected: u32,
    /// Blocks ignored because a held linear average was already done.
    pub ignored: u32,
    /// Linear averages completed.
    pub averages_completed: u32,
    /// Blocks lost before these, because the processing side had fallen behind an
    /// interrupt-side [`Collector`](crate::spectrum::feed::Collector) (always 0 for `push`).
    pub lost: u32,
}

impl PushReport {
    /// Adds another report's counts (used by the analyzers' chunked pushes).
    #[cfg_attr(not(any(feature = "f32", feature = "fixed")), allow(dead_code))]
    pub(crate) fn add(&mut self, other: PushReport) {
        self.blocks += other.blocks;
        self.averaged += other.averaged;
        self.rejected += other.rejected;
        self.ignored += other.ignored;
        self.averages_completed += other.averages_completed;
        self.lost += other.lost;
    }
}

/// Counters since construction or the last `reset` (saturating).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Status {
    /// Blocks framed.
    pub blocks_seen: u32,
    /// Blocks that entered an average.
    pub blocks_averaged: u32,
    /// Blocks with a NaN, an infinity, or a sample beyond
    /// [`MAX_INPUT_MAGNITUDE`](crate::spectrum::condition::MAX_INPUT_MAGNITUDE); never averaged.
    /// Always 0 for the fixed-point analyzers: integers cannot be non-finite.
    pub rejected_non_finite: u32,
    /// Blocks with a sample at or beyond full scale, whether averaged or not (a block can be
    /// both non-finite and overloaded: an infinity is both).
    pub overloaded: u32,
    /// Blocks in the current average.
    pub current_average: u32,
    /// Linear averages completed.
    pub averages_completed: u32,
    /// Blocks an interrupt-side [`Collector`](crate::spectrum::feed::Collector) completed but
    /// could not hand over, because the processing side had not freed a queue slot in time
    /// (overruns, learnt with the next block that did arrive). Never averaged, never spliced:
    /// the blocks around a lost one are still whole stretches of the stream.
    pub blocks_lost: u32,
}
