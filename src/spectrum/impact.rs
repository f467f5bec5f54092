//! The impact (bump) test: force and response, one block per hammer hit, averaged into H1,
//! H2 and coherence, read out as modes.
//!
//! ```text
//! force, response (interleaved) -> HitTrigger (one block per hit; double hits and early hits
//!   rejected) -> CrossAnalyzer (force window on force, exponential window on response;
//!   overload and bad samples rejected; linear average over accepted hits)
//!   -> H1, H2, coherence, energy spectral densities -> modes (window damping removed)
//! ```
//!
//! It is composition, not a second analyzer: the trigger hands each accepted block to the
//! multi-channel analyzer through its ordinary per-channel push (no overlap, so `N` frames
//! make exactly one block), and the analyzer does conditioning, windowing, transforms and
//! averaging as for any other signal.
//!
//! # Transient scaling
//!
//! A hit is a transient, not a stationary signal, so no amplitude or energy correction is
//! applied. Those corrections restore a stationary signal's level from the window's average
//! attenuation over the block; the force window is 1 over the pulse and attenuates nothing
//! there (its amplitude correction, `N / sum w`, is about 18 for a 5 % window and would only
//! falsify the level), and the exponential window's effect on the response is a known added
//! decay, which is removed from the damping of each mode instead. The read-outs are the FRF
//! itself (a ratio, in response units per force unit) and energy spectral densities
//! (units^2 s/Hz, [`LineGains::energy_spectral_density`]).

use crate::analysis::frf::{Complex, FrfLine};
use crate::analysis::modes::{find_modes, Mode, ModeSearch};
use crate::error::ConfigError;
use crate::spectrum::average::{Averaging, WhenDone};
use crate::spectrum::condition::Detrend;
use crate::spectrum::config::Config;
use crate::spectrum::multi::{Channel, CrossAnalyzer, Pair};
use crate::spectrum::scale::{Conversion, LineGains};
use crate::spectrum::trigger::{HitOutcome, HitTrigger, TriggerCounts, TriggerSettings};
use crate::window::Window;

/// Which FRF estimator the modes are read from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Estimator {
    /// `G_xy / G_xx`, unbiased by response noise (the usual choice for impact tests, where
    /// the force channel is clean).
    #[default]
    H1,
    /// `G_yy / G_yx`, unbiased by force noise.
    H2,
}

/// Settings of an impact test. Channel 0 of the pushed frames is the force, channel 1 the
/// response.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ImpactSettings {
    /// Sample rate, Hz.
    pub sample_rate_hz: f32,
    /// The trigger (its `force_channel` must be 0).
    pub trigger: TriggerSettings,
    /// The force channel's sensitivity, full scale (overload) and unit (e.g. `"N"`).
    pub force: Channel,
    /// The response channel's sensitivity, full scale and unit (e.g. `"m/s^2"`).
    pub response: Channel,
    /// Accepted hits to average; later hits are counted and ignored.
    pub hits: u32,
}

/// What happened to the hits so far.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ImpactCounts {
    /// Triggers.
    pub hits: u32,
    /// Hits averaged.
    pub accepted: u32,
    /// Rejected: a second hit inside the block.
    pub double_hits: u32,
    /// Rejected: a sample at or beyond full scale on either channel.
    pub overloaded: u32,
    /// Rejected: NaN, infinity or a huge sample on either channel.
    pub non_finite: u32,
    /// Rejected: too early for the pre-trigger.
    pub too_early: u32,
    /// Not needed: the average already had its hits.
    pub ignored: u32,
}

/// An impact test over `N`-sample blocks (`BINS = N/2 + 1` lines).
///
/// # Memory
///
/// The trigger's ring (`8 N` bytes) and a two-channel [`CrossAnalyzer`] with one pair:
/// `size_of::<ImpactTest<4096, 2049>>()` is about 150 KB, so this mode is for hosts and large
/// nodes; its blocks are long because a lightly damped response must decay inside them.
///
/// ```
/// use leakless::spectrum::impact::{ImpactSettings, ImpactTest};
/// use leakless::spectrum::multi::Channel;
/// use leakless::spectrum::trigger::TriggerSettings;
/// use leakless::{Shape, Window};
///
/// static FORCE: Window<1024> = Window::new(Shape::Force { width: 0.05, taper: 0.01 });
/// static DECAY: Window<1024> = Window::new(Shape::Exponential { end_fraction: 0.01 });
/// let settings = ImpactSettings {
///     sample_rate_hz: 1024.0,
///     trigger: TriggerSettings::new(0, 10.0).with_pre_trigger(16),
///     force: Channel::new("N"),
///     response: Channel::new("m/s^2"),
///     hits: 3,
/// };
/// let mut test: ImpactTest<1024, 513> = ImpactTest::new(&FORCE, &DECAY, settings).unwrap();
/// // No hit yet: nothing averaged, no modes.
/// test.push_interleaved(&[0.0; 200]);
/// assert_eq!(test.counts().hits, 0);
/// assert!(test.modes::<4>(1.0, 400.0).is_empty());
/// ```
#[derive(Clone, Debug)]
pub struct ImpactTest<'a, const N: usize, const BINS: usize> {
    trigger: HitTrigger<N, 2>,
    analyzer: CrossAnalyzer<'a, N, BINS, 2, 1>,
    counts: ImpactCounts,
    estimator: Estimator,
}

impl<'a, const N: usize, const BINS: usize> ImpactTest<'a, N, BINS> {
    /// A test with `force_window` on the force (usually [`Shape::Force`](crate::Shape::Force))
    /// and `response_window` on the response (usually
    /// [`Shape::Exponential`](crate::Shape::Exponential), or rectangular when the response
    /// decays inside the block by itself). [`ConfigError::Trigger`] for a trigger whose force
    /// channel is not 0, [`ConfigError::AverageCount`] for 0 hits, and the analyzer's and the
    /// trigger's own checks.
    pub fn new(
        force_window: &'a Window<N>,
        response_window: &'a Window<N>,
        settings: ImpactSettings,
    ) -> Result<Self, ConfigError> {
        if settings.trigger.force_channel != 0 {
            return Err(ConfigError::Trigger);
        }
        let config = Config::new(settings.sample_rate_hz)
            .with_detrend(Detrend::None)
            .with_averaging(Averaging::Linear {
                count: settings.hits,
                when_done: WhenDone::Hold,
            });
        Ok(Self {
            trigger: HitTrigger::new(settings.trigger)?,
            analyzer: CrossAnalyzer::new(
                [force_window, response_window],
                config,
                [settings.force, settings.response],
                [Pair::new(0, 1)],
            )?,
            counts: ImpactCounts::default(),
            estimator: Estimator::H1,
        })
    }

    /// Reads modes from `estimator` (default H1).
    pub fn with_estimator(mut self, estimator: Estimator) -> Self {
        self.estimator = estimator;
        self
    }

    /// Pushes force and response interleaved (`f0 r0 f1 r1 ...`, input units), any chunking.
    pub fn push_interleaved(&mut self, samples: &[f32]) {
        let Self {
            trigger,
            analyzer,
            counts,
            ..
        } = self;
        trigger.push_interleaved(samples, |hit| {
            counts.hits = counts.hits.saturating_add(1);
            match hit.outcome {
                HitOutcome::DoubleHit => counts.double_hits = counts.double_hits.saturating_add(1),
                HitOutcome::TooEarly => counts.too_early = counts.too_early.saturating_add(1),
                HitOutcome::Accepted => {
                    let before = [analyzer.status(0), analyzer.status(1)];
                    let blocks: [&[f32]; 2] = [&hit.blocks[0], &hit.blocks[1]];
                    // Equal lengths and whole frames: the push cannot be refused.
                    let report = analyzer.push_channels(&blocks).unwrap_or_default();
                    let after = [analyzer.status(0), analyzer.status(1)];
                    let grew = |f: fn(&crate::spectrum::config::Status) -> u32| {
                        (0..2).any(|c| f(&after[c]) > f(&before[c]))
                    };
                    if report.rejected > 0 {
                        if grew(|s| s.rejected_non_finite) {
                            counts.non_finite = counts.non_finite.saturating_add(1);
                        } else if grew(|s| s.overloaded) {
                            counts.overloaded = counts.overloaded.saturating_add(1);
                        }
                    } else if report.ignored > 0 {
                        counts.ignored = counts.ignored.saturating_add(1);
                    } else if report.averaged > 0 {
                        counts.accepted = counts.accepted.saturating_add(1);
                    }
                }
            }
        });
    }

    /// Pushes one slice per channel (force, response); frames beyond the shorter are ignored.
    pub fn push_channels(&mut self, force: &[f32], response: &[f32]) {
        let mut frames = [0.0f32; 128];
        for (f, r) in force.chunks(64).zip(response.chunks(64)) {
            let n = f.len().min(r.len());
            for i in 0..n {
                frames[2 * i] = f[i];
                frames[2 * i + 1] = r[i];
            }
            self.push_interleaved(&frames[..2 * n]);
        }
    }

    /// The counters.
    pub fn counts(&self) -> ImpactCounts {
        self.counts
    }

    /// The trigger's own counters.
    pub fn trigger_counts(&self) -> TriggerCounts {
        self.trigger.counts()
    }

    /// Hits in the average.
    pub fn averages(&self) -> u32 {
        self.analyzer.averages()
    }

    /// Whether the average has all its hits.
    pub fn is_done(&self) -> bool {
        self.analyzer.is_done()
    }

    /// H1, H2 and coherence at line `k` (response units per force unit), `None` beyond
    /// Nyquist. NaN before the first accepted hit.
    pub fn frf_line(&self, k: usize) -> Option<FrfLine> {
        self.analyzer.frf_line(0, k)
    }

    /// The selected estimator's FRF and the coherence at line `k` (zero beyond Nyquist).
    pub fn frf(&self, k: usize) -> (Complex, f64) {
        match self.frf_line(k) {
            Some(line) => match self.estimator {
                Estimator::H1 => (line.h1, line.coherence),
                Estimator::H2 => (line.h2, line.coherence),
            },
            None => (Complex::default(), 0.0),
        }
    }

    /// Mean energy spectral density per hit of channel 0 (force) or 1 (response), units^2
    /// s/Hz, windowed, without correction (see the module docs). `None` out of range.
    pub fn energy_spectral_density(&self, channel: usize, k: usize) -> Option<f64> {
        let raw = self.analyzer.raw_auto(channel, k)?;
        let gains = LineGains::energy_spectral_density(self.analyzer.config().sample_rate_hz);
        let conversion = Conversion::between(LineGains::squared_magnitudes(1.0), gains);
        Some(conversion.apply(raw as f32, k, BINS) as f64)
    }

    /// The decay rate the response window adds, 1/s (0 for a window that is not
    /// exponential).
    pub fn added_decay_rate(&self) -> f64 {
        let fs = self.analyzer.config().sample_rate_hz as f64;
        self.analyzer.window(1).added_decay_rate(fs).unwrap_or(0.0)
    }

    /// Up to `M` modes between `f_min_hz` and `f_max_hz`, with the response window's damping
    /// removed (default prominence and range of [`ModeSearch::new`]).
    pub fn modes<const M: usize>(&self, f_min_hz: f64, f_max_hz: f64) -> heapless::Vec<Mode, M> {
        let search =
            ModeSearch::new(f_min_hz, f_max_hz).with_added_decay_rate(self.added_decay_rate());
        self.modes_with(&search)
    }

    /// [`ImpactTest::modes`] with every search setting given (its `added_decay_rate` is used
    /// as given).
    pub fn modes_with<const M: usize>(&self, search: &ModeSearch) -> heapless::Vec<Mode, M> {
        if self.averages() == 0 {
            return heapless::Vec::new();
        }
        let fs = self.analyzer.config().sample_rate_hz as f64;
        find_modes(BINS, N, fs, |k| self.frf(k), search)
    }

    /// Line spacing, Hz.
    pub fn bin_width_hz(&self) -> f32 {
        self.analyzer.bin_width_hz()
    }

    /// The multi-channel analyzer behind the test (auto and cross spectra, status).
    pub fn analyzer(&self) -> &CrossAnalyzer<'a, N, BINS, 2, 1> {
        &self.analyzer
    }
}
