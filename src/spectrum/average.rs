//! Averaging of power (`|X[k]|^2` per line), so that amplitude spectra read from an average
//! stay unbiased: averaging magnitudes instead would read noise low (by about 1 dB for Gaussian
//! noise) and depend on phase.
//!
//! The accumulator holds squared magnitudes in input units; scaling to a level happens once
//! when a spectrum is read (see [`crate::spectrum::scale`]).

use crate::error::ConfigError;

/// What a finished linear average does with the blocks that follow.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum WhenDone {
    /// Keep the finished average; later blocks are ignored until a reset.
    Hold,
    /// Start a new average with the next accepted block (the finished one is replaced then,
    /// so read it before pushing the samples of the next block).
    Restart,
}

/// How blocks are combined.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Averaging {
    /// The mean of `count` blocks, `avg = sum_i p_i / count`, accumulated as
    /// `acc += p * (1 / count)` (the reciprocal rounded to `f32` once), so the partial sum
    /// never exceeds the largest block. Done after `count` blocks. Read before then, the
    /// spectrum is the mean of the blocks so far.
    Linear {
        /// Blocks per average, >= 1.
        count: u32,
        /// What happens after `count` blocks.
        when_done: WhenDone,
    },
    /// A running (exponential) average with time constant `tau` blocks: the first block
    /// initialises it, `avg_1 = p_1`, then `avg_i = avg_{i-1} + (p_i - avg_{i-1}) * (1 / tau)`,
    /// computed in `f32` with the reciprocal rounded once. Never done.
    Exponential {
        /// `tau` in blocks, finite and >= 1 (1 keeps only the latest block).
        time_constant_blocks: f32,
    },
    /// The largest power seen on each line, `avg_i = max(avg_{i-1}, p_i)`. Never done.
    PeakHold,
}

impl Averaging {
    /// Checks the mode: a linear count of at least 1, an exponential time constant finite and
    /// at least 1 (both [`ConfigError::AverageCount`]). Every averager (float or fixed point)
    /// checks through this.
    pub fn validate(&self) -> Result<(), ConfigError> {
        let valid = match *self {
            Averaging::Linear { count, .. } => count >= 1,
            Averaging::Exponential {
                time_constant_blocks,
            } => time_constant_blocks.is_finite() && time_constant_blocks >= 1.0,
            Averaging::PeakHold => true,
        };
        if valid {
            Ok(())
        } else {
            Err(ConfigError::AverageCount)
        }
    }

    /// Whether a finished average keeps its blocks and ignores later ones (linear + hold).
    pub fn holds_when_done(&self) -> bool {
        matches!(
            self,
            Averaging::Linear {
                when_done: WhenDone::Hold,
                ..
            }
        )
    }
}

/// The accumulator of `BINS` lines and the averaging state.
#[derive(Clone, Debug)]
pub struct Averager<const BINS: usize> {
    squares: [f32; BINS],
    mode: Averaging,
    /// `1 / count` or `1 / tau`.
    reciprocal: f32,
    averaged: u32,
    done: bool,
}

impl<const BINS: usize> Averager<BINS> {
    /// Checks the mode: a linear count of at least 1, an exponential time constant finite and
    /// at least 1 (both [`ConfigError::AverageCount`]).
    pub fn new(mode: Averaging) -> Result<Self, ConfigError> {
        mode.validate()?;
        let reciprocal = match mode {
            Averaging::Linear { count, .. } => 1.0 / count as f32,
            Averaging::Exponential {
                time_constant_blocks,
            } => 1.0 / time_constant_blocks,
            Averaging::PeakHold => 1.0,
        };
        Ok(Self {
            squares: [0.0; BINS],
            mode,
            reciprocal,
            averaged: 0,
            done: false,
        })
    }

    /// The mode.
    pub fn mode(&self) -> Averaging {
        self.mode
    }

    /// Whether a new block would change the average (false once a held linear average is
    /// done, so the caller can skip its transform).
    pub fn wants_block(&self) -> bool {
        !(self.done && self.mode.holds_when_done())
    }

    /// Adds one block's squared magnitudes: DC, the `BINS - 2` interior lines in order, then
    /// Nyquist. Returns whether this block completed a linear average. A block that arrives
    /// when [`Averager::wants_block`] is false is ignored.
    pub fn add(&mut self, dc: f32, interior: impl Iterator<Item = f32>, nyquist: f32) -> bool {
        if !self.wants_block() {
            return false;
        }
        if self.done {
            // Linear + Restart: this block starts the next average.
            self.averaged = 0;
            self.done = false;
        }
        let first = self.averaged == 0;
        let r = self.reciprocal;
        let Some((first_line, rest)) = self.squares.split_first_mut() else {
            return false;
        };
        let Some((last_line, middle)) = rest.split_last_mut() else {
            return false;
        };
        let (dc_line, nyquist_line) = (first_line, last_line);
        let lines = Lines {
            dc_line,
            middle,
            nyquist_line,
        };
        match (self.mode, first) {
            (Averaging::Linear { .. }, true) => {
                lines.update(dc, interior, nyquist, |a, p| *a = p * r)
            }
            (Averaging::Linear { .. }, false) => {
                lines.update(dc, interior, nyquist, |a, p| *a += p * r)
            }
            (_, true) => lines.update(dc, interior, nyquist, |a, p| *a = p),
            (Averaging::Exponential { .. }, false) => {
                lines.update(dc, interior, nyquist, |a, p| *a += (p - *a) * r)
            }
            (Averaging::PeakHold, false) => {
                lines.update(dc, interior, nyquist, |a, p| *a = a.max(p))
            }
        }
        self.averaged = self.averaged.saturating_add(1);
        if let Averaging::Linear { count, .. } = self.mode {
            if self.averaged >= count {
                self.done = true;
                return true;
            }
        }
        false
    }

    /// The accumulator: `gain() * (average |X[k]|^2)`.
    pub fn squares(&self) -> &[f32; BINS] {
        &self.squares
    }

    /// How the accumulator relates to the average: `averaged / count` for a linear average
    /// (it holds a partial sum of `p / count`), else 1.
    pub fn gain(&self) -> f64 {
        match self.mode {
            Averaging::Linear { count, .. } => self.averaged as f64 / count as f64,
            _ => 1.0,
        }
    }

    /// Blocks in the current average.
    pub fn averaged(&self) -> u32 {
        self.averaged
    }

    /// Whether a linear average has its `count` blocks.
    pub fn is_done(&self) -> bool {
        self.done
    }

    /// Empties the average.
    pub fn reset(&mut self) {
        self.squares = [0.0; BINS];
        self.averaged = 0;
        self.done = false;
    }
}

/// The accumulator split into its lines.
struct Lines<'a> {
    dc_line: &'a mut f32,
    middle: &'a mut [f32],
    nyquist_line: &'a mut f32,
}

impl Lines<'_> {
    /// Applies `update(accumulated, new)` to every line. Generic, so each mode gets its own
    /// loop with the update inlined.
    #[inline(always)]
    fn update(
        self,
        dc: f32,
        interior: impl Iterator<Item = f32>,
        nyquist: f32,
        update: impl Fn(&mut f32, f32),
    ) {
        update(self.dc_line, dc);
        for (a, p) in self.middle.iter_mut().zip(interior) {
            update(a, p);
        }
        update(self.nyquist_line, nyquist);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn add_flat(a: &mut Averager<4>, p: f32) -> bool {
        a.add(p, [p, p].into_iter(), p)
    }

    // from the definition of the arithmetic mean.
    #[test]
    fn linear_hold_and_restart() {
        let mut hold = Averager::<4>::new(Averaging::Linear {
            count: 2,
            when_done: WhenDone::Hold,
        })
        .unwrap();
        assert!(!add_flat(&mut hold, 1.0));
        assert!((hold.squares()[1] as f64 / hold.gain() - 1.0).abs() < 1e-7);
        assert!(add_flat(&mut hold, 3.0));
        assert!(hold.is_done() && !hold.wants_block());
        assert!(!add_flat(&mut hold, 100.0));
        assert_eq!(hold.squares(), &[2.0; 4]);

        let mut restart = Averager::<4>::new(Averaging::Linear {
            count: 2,
            when_done: WhenDone::Restart,
        })
        .unwrap();
        add_flat(&mut restart, 1.0);
        add_flat(&mut restart, 3.0);
        assert!(restart.is_done() && restart.wants_block());
        assert!(!add_flat(&mut restart, 10.0));
        assert_eq!(restart.averaged(), 1);
        assert_eq!(restart.squares()[3] as f64 / restart.gain(), 10.0);
    }

    #[test]
    fn peak_hold_keeps_the_maximum() {
        let mut a = Averager::<4>::new(Averaging::PeakHold).unwrap();
        a.add(1.0, [5.0, 0.0].into_iter(), 2.0);
        a.add(3.0, [1.0, 4.0].into_iter(), 0.0);
        assert_eq!(a.squares(), &[3.0, 5.0, 4.0, 2.0]);
    }

    #[test]
    fn bad_modes_are_typed_errors() {
        let linear0 = Averaging::Linear {
            count: 0,
            when_done: WhenDone::Hold,
        };
        assert_eq!(
            Averager::<4>::new(linear0).err(),
            Some(ConfigError::AverageCount)
        );
        for tau in [0.5, 0.0, -1.0, f32::NAN, f32::INFINITY] {
            let mode = Averaging::Exponential {
                time_constant_blocks: tau,
            };
            assert_eq!(
                Averager::<4>::new(mode).err(),
                Some(ConfigError::AverageCount)
            );
        }
    }
}
