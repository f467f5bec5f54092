//! Time-domain statistics of a sample stream: mean, RMS, peak, peak-to-peak, crest factor,
//! skewness and kurtosis, updated as samples arrive.
//!
//! Kurtosis (the fourth standardized moment) is 3 for Gaussian vibration, 1.5 for a sine and
//! grows with impacts, which is why it is watched as an early sign of bearing damage (common
//! practice); the crest factor (peak over RMS) rises the same way.
//!
//! # Conventions
//!
//! Moments are population moments of the samples seen (divided by `n`, not `n - 1`):
//! `variance = M2 / n`, `skewness = sqrt(n) M3 / M2^1.5`, `kurtosis = n M4 / M2^2` (not the
//! excess kurtosis: a Gaussian reads 3). [`Statistics::rms`] includes the mean (DC);
//! [`Statistics::std_dev`] is the RMS about the mean. [`Statistics::peak`] is `max |x|` and
//! [`Statistics::crest_factor`] is `peak / rms`; for a signal with an offset (a MEMS sensor's
//! gravity, an ADC's mid-scale) [`Statistics::ac_crest_factor`] uses the largest excursion
//! from the mean over the standard deviation instead.
//!
//! # Arithmetic, and why
//!
//! A Cortex-M4F has a single-precision FPU only; `f64` is done in software, some ten times
//! slower. So the per-sample work is in `f32` and the totals are in `f64`:
//!
//! * Samples are gathered in runs of [`RUN_LEN`] = 64 accepted samples. Within a run the
//!   sums of `d, d^2, d^3, d^4` with `d = x - shift` are kept in `f32`, where `shift` is the
//!   running mean (the run's first sample for the very first run). Shifting by the mean is
//!   what keeps the power sums from cancelling on a signal with an offset; 64 terms keep their
//!   rounding to a few `f32` ulps.
//! * Each full run becomes central moments in `f64` and is merged into the totals with the
//!   pairwise update for the mean, `M2`, `M3` and `M4` (Chan, Golub and LeVeque for `M2`;
//!   Terriberry's and Pebay's extension to the higher moments), about 40 `f64` operations
//!   per 64 samples. Reading merges the open run into a copy.
//!
//! Runs are counted in accepted samples, not in calls, so any chunking of the same stream
//! gives **bit-identical** results.
//!
//! # Bad samples
//!
//! NaN, infinities and samples with `|x| > MAX_MAGNITUDE` (1e8, so that `d^4` of 64 of them
//! stays finite in `f32`) are left out of every statistic and counted
//! ([`Statistics::excluded`]).
//!
//! ```
//! use leakless::analysis::stats::Statistics;
//!
//! let mut stats = Statistics::new();
//! // A square wave of amplitude 2, pushed in two pieces.
//! let square: Vec<f32> = (0..1000).map(|n| if n % 10 < 5 { 2.0 } else { -2.0 }).collect();
//! stats.push(&square[..300]);
//! stats.push(&square[300..]);
//! stats.push(&[f32::NAN]); // left out, counted
//! assert_eq!(stats.count(), 1000);
//! assert_eq!(stats.excluded(), 1);
//! assert!((stats.rms().unwrap() - 2.0).abs() < 1e-6);
//! assert!((stats.crest_factor().unwrap() - 1.0).abs() < 1e-6);
//! assert!((stats.kurtosis().unwrap() - 1.0).abs() < 1e-6);
//! assert!(Statistics::new().kurtosis().is_none()); // nothing seen, nothing to say
//! ```

/// Samples beyond this magnitude are excluded (see the module docs).
pub const MAX_MAGNITUDE: f32 = 1e8;
/// Accepted samples gathered in `f32` before they are merged into the `f64` totals.
pub const RUN_LEN: u32 = 64;

/// Count, mean and central moment sums `M2 = sum (x - mean)^2`, `M3`, `M4`, in `f64`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
struct Moments {
    count: f64,
    mean: f64,
    m2: f64,
    m3: f64,
    m4: f64,
}

impl Moments {
    /// The moments of the union of two disjoint sets of samples (pairwise update).
    fn merge(a: Moments, b: Moments) -> Moments {
        if a.count == 0.0 {
            return b;
        }
        if b.count == 0.0 {
            return a;
        }
        let (na, nb) = (a.count, b.count);
        let n = na + nb;
        let delta = b.mean - a.mean;
        let delta_n = delta / n;
        let delta_n2 = delta_n * delta_n;
        let cross = delta * delta_n * na * nb; // delta^2 na nb / n
        Moments {
            count: n,
            mean: a.mean + delta_n * nb,
            m2: a.m2 + b.m2 + cross,
            m3: a.m3 + b.m3 + cross * delta_n * (na - nb) + 3.0 * delta_n * (na * b.m2 - nb * a.m2),
            m4: a.m4
                + b.m4
                + cross * delta_n2 * (na * na - na * nb + nb * nb)
                + 6.0 * delta_n2 * (na * na * b.m2 + nb * nb * a.m2)
                + 4.0 * delta_n * (na * b.m3 - nb * a.m3),
        }
    }
}

/// The open run: `f32` power sums of `x - shift`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
struct Run {
    count: u32,
    shift: f32,
    s1: f32,
    s2: f32,
    s3: f32,
    s4: f32,
}

impl Run {
    /// Central moments from the shifted power sums, in `f64`.
    fn moments(&self) -> Moments {
        if self.count == 0 {
            return Moments::default();
        }
        let n = self.count as f64;
        let (s1, s2, s3, s4) = (
            self.s1 as f64,
            self.s2 as f64,
            self.s3 as f64,
            self.s4 as f64,
        );
        let mu = s1 / n;
        let mu2 = mu * mu;
        Moments {
            count: n,
            mean: self.shift as f64 + mu,
            m2: (s2 - n * mu2).max(0.0),
            m3: s3 - 3.0 * mu * s2 + 2.0 * n * mu2 * mu,
            m4: (s4 - 4.0 * mu * s3 + 6.0 * mu2 * s2 - 3.0 * n * mu2 * mu2).max(0.0),
        }
    }
}

/// Running time-domain statistics; see the [module documentation](self).
///
/// About 80 bytes; no buffers.
#[derive(Clone, Debug, PartialEq)]
pub struct Statistics {
    totals: Moments,
    run: Run,
    min: f32,
    max: f32,
    excluded: u32,
}

impl Default for Statistics {
    fn default() -> Self {
        Self::new()
    }
}

impl Statistics {
    /// Nothing seen yet.
    pub const fn new() -> Self {
        Self {
            totals: Moments {
                count: 0.0,
                mean: 0.0,
                m2: 0.0,
                m3: 0.0,
                m4: 0.0,
            },
            run: Run {
                count: 0,
                shift: 0.0,
                s1: 0.0,
                s2: 0.0,
                s3: 0.0,
                s4: 0.0,
            },
            min: f32::INFINITY,
            max: f32::NEG_INFINITY,
            excluded: 0,
        }
    }

    /// The statistics of `samples` alone.
    pub fn of(samples: &[f32]) -> Self {
        let mut stats = Self::new();
        stats.push(samples);
        stats
    }

    /// Adds samples, any number; bad ones are counted and left out.
    pub fn push(&mut self, samples: &[f32]) {
        for &x in samples {
            if x.is_nan() || x.abs() > MAX_MAGNITUDE {
                self.excluded = self.excluded.saturating_add(1);
                continue;
            }
            if self.run.count == 0 {
                // The running mean keeps the power sums small; the first run has none yet.
                self.run.shift = if self.totals.count == 0.0 {
                    x
                } else {
                    self.totals.mean as f32
                };
            }
            let d = x - self.run.shift;
            let d2 = d * d;
            self.run.s1 += d;
            self.run.s2 += d2;
            self.run.s3 += d2 * d;
            self.run.s4 += d2 * d2;
            self.run.count += 1;
            self.min = self.min.min(x);
            self.max = self.max.max(x);
            if self.run.count == RUN_LEN {
                self.totals = Moments::merge(self.totals, self.run.moments());
                self.run = Run::default();
            }
        }
    }

    /// Forgets everything, including the excluded count.
    pub fn reset(&mut self) {
        *self = Self::new();
    }

    fn moments(&self) -> Moments {
        Moments::merge(self.totals, self.run.moments())
    }

    /// Samples taken into the statistics.
    pub fn count(&self) -> u64 {
        self.totals.count as u64 + self.run.count as u64
    }

    /// Samples left out (NaN, infinite, or beyond [`MAX_MAGNITUDE`]), saturating.
    pub fn excluded(&self) -> u32 {
        self.excluded
    }

    /// Mean (DC), or `None` before the first sample.
    pub fn mean(&self) -> Option<f32> {
        let m = self.moments();
        (m.count > 0.0).then_some(m.mean as f32)
    }

    /// Population variance `M2 / n`.
    fn variance(m: &Moments) -> f64 {
        m.m2 / m.count
    }

    /// RMS about the mean (population standard deviation), or `None` before the first sample.
    pub fn std_dev(&self) -> Option<f32> {
        let m = self.moments();
        (m.count > 0.0).then(|| libm::sqrt(Self::variance(&m)) as f32)
    }

    /// RMS including the mean, `sqrt(mean^2 + variance)`, or `None` before the first sample.
    pub fn rms(&self) -> Option<f32> {
        let m = self.moments();
        (m.count > 0.0).then(|| libm::sqrt(m.mean * m.mean + Self::variance(&m)) as f32)
    }

    /// `max |x|`, or `None` before the first sample.
    pub fn peak(&self) -> Option<f32> {
        (self.count() > 0).then(|| self.max.abs().max(self.min.abs()))
    }

    /// Largest minus smallest sample, or `None` before the first sample.
    pub fn peak_to_peak(&self) -> Option<f32> {
        (self.count() > 0).then_some(self.max - self.min)
    }

    /// The smallest and largest samples, or `None` before the first sample.
    pub fn min_max(&self) -> Option<(f32, f32)> {
        (self.count() > 0).then_some((self.min, self.max))
    }

    /// `peak / rms`, or `None` if there is no sample or the RMS is 0.
    pub fn crest_factor(&self) -> Option<f32> {
        let rms = self.rms()?;
        let peak = self.peak()?;
        (rms > 0.0).then(|| peak / rms)
    }

    /// The largest excursion from the mean over the standard deviation,
    /// `max(max - mean, mean - min) / std_dev`: the crest factor of the signal without its
    /// offset. `None` if there is no sample or the standard deviation is 0.
    pub fn ac_crest_factor(&self) -> Option<f32> {
        let m = self.moments();
        if m.count == 0.0 || m.m2 <= 0.0 {
            return None;
        }
        let excursion = (self.max as f64 - m.mean).max(m.mean - self.min as f64);
        Some((excursion / libm::sqrt(Self::variance(&m))) as f32)
    }

    /// Skewness `sqrt(n) M3 / M2^1.5` (0 for a symmetric distribution), or `None` if the
    /// variance is 0 or nothing was seen.
    pub fn skewness(&self) -> Option<f32> {
        let m = self.moments();
        (m.count > 0.0 && m.m2 > 0.0)
            .then(|| (libm::sqrt(m.count) * m.m3 / (m.m2 * libm::sqrt(m.m2))) as f32)
    }

    /// Kurtosis `n M4 / M2^2` (3 for a Gaussian, 1.5 for a sine, 1 for a square wave), or
    /// `None` if the variance is 0 or nothing was seen.
    pub fn kurtosis(&self) -> Option<f32> {
        let m = self.moments();
        (m.count > 0.0 && m.m2 > 0.0).then(|| (m.count * m.m4 / (m.m2 * m.m2)) as f32)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use core::f64::consts::{PI, SQRT_2};
    use proptest::prelude::*;

    fn close(got: Option<f32>, want: f64, tolerance: f64) {
        let got = got.expect("a value") as f64;
        assert!(
            (got - want).abs() <= tolerance,
            "{got} vs {want} (tolerance {tolerance:e})"
        );
    }

    /// `offset + A cos(2 pi n / 64)` over whole periods.
    fn sine(periods: usize, amplitude: f64, offset: f64) -> Vec<f32> {
        (0..64 * periods)
            .map(|n| (offset + amplitude * (2.0 * PI * n as f64 / 64.0).cos()) as f32)
            .collect()
    }

    // analytic: over whole periods of P > 4 samples, sum cos^2 = P/2 and sum cos^4 = 3P/8, so
    // kurtosis (3/8) / (1/2)^2 = 1.5 exactly, skewness 0, RMS A / sqrt(2); sample 0 is the
    // crest, so crest factor sqrt(2). Tolerances: f32 samples (relative 6e-8) and f32 run sums
    // of 64 terms (a few 1e-7): 2e-6.
    #[test]
    fn a_sine_has_crest_sqrt2_and_kurtosis_one_and_a_half() {
        let s = Statistics::of(&sine(100, 3.0, 0.0));
        assert_eq!(s.count(), 6400);
        close(s.kurtosis(), 1.5, 2e-6);
        close(s.skewness(), 0.0, 2e-6);
        close(s.crest_factor(), SQRT_2, 2e-6);
        close(s.rms(), 3.0 / SQRT_2, 3.0 * 2e-6);
        close(s.mean(), 0.0, 3.0 * 2e-6);
        close(s.peak(), 3.0, 0.0);
        close(s.peak_to_peak(), 6.0, 3.0 * 2e-6);
        println!(
            "sine: kurtosis error {:e}, crest error {:e}",
            s.kurtosis().unwrap() as f64 - 1.5,
            s.crest_factor().unwrap() as f64 - SQRT_2
        );
    }

    // The same sine on an offset of 1e4 (1e4 times its amplitude: an ADC's mid-scale). The
    // samples themselves are then rounded to 1e4 * 6e-8 = 6e-4 of the amplitude, which moves
    // the kurtosis by about that much (analytic: a perturbation e of each sample changes M4/M2^2
    // by O(e / A)); the statistics must not add more. A naive f32 sum of x^4 would have lost
    // everything (1e16 against 1).
    #[test]
    fn an_offset_does_not_spoil_the_moments() {
        let s = Statistics::of(&sine(100, 1.0, 1e4));
        let kurtosis_error = s.kurtosis().unwrap() as f64 - 1.5;
        println!("sine on 1e4 offset: kurtosis error {kurtosis_error:e}");
        close(s.kurtosis(), 1.5, 2e-3);
        close(s.skewness(), 0.0, 2e-3);
        close(s.std_dev(), 1.0 / SQRT_2, 1e-3);
        close(s.ac_crest_factor(), SQRT_2, 2e-3);
        close(s.mean(), 1e4, 1e-3);
    }

    // analytic: a square wave of +-A is two-valued: kurtosis 1, skewness 0, crest factor 1.
    #[test]
    fn a_square_wave_has_crest_and_kurtosis_one() {
        let x: Vec<f32> = (0..10_000)
            .map(|n| if n % 20 < 10 { 1.5 } else { -1.5 })
            .collect();
        let s = Statistics::of(&x);
        close(s.kurtosis(), 1.0, 1e-6);
        close(s.skewness(), 0.0, 1e-6);
        close(s.crest_factor(), 1.0, 1e-6);
        close(s.ac_crest_factor(), 1.0, 1e-6);
    }

    /// Standard normal samples: splitmix64 into Box-Muller, seeded.
    fn gaussian(len: usize, seed: u64) -> Vec<f32> {
        let mut state = seed;
        let mut uniform = || {
            state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = state;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            z ^= z >> 31;
            ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64 // in (0, 1)
        };
        (0..len)
            .map(|_| {
                let (u, v) = (uniform(), uniform());
                ((-2.0 * u.ln()).sqrt() * (2.0 * PI * v).cos()) as f32
            })
            .collect()
    }

    // analytic: a Gaussian has kurtosis 3 and skewness 0; their sampling standard deviations
    // over n samples are sqrt(24 / n) and sqrt(6 / n) (common practice, large-n), the mean's
    // sigma / sqrt(n) and the standard deviation's sigma / sqrt(2 n). Each check allows 5 of
    // them: a seeded generator, so the result is fixed, but the bound is not tuned to it.
    #[test]
    fn gaussian_noise_has_kurtosis_three() {
        let n = 200_000;
        let sigma = 0.7;
        let x: Vec<f32> = gaussian(n, 42).iter().map(|v| v * sigma as f32).collect();
        let s = Statistics::of(&x);
        let nf = n as f64;
        let kurtosis = s.kurtosis().unwrap() as f64;
        println!(
            "gaussian: kurtosis {kurtosis} ({:.2} sampling sd from 3), skewness {}",
            (kurtosis - 3.0) / (24.0 / nf).sqrt(),
            s.skewness().unwrap()
        );
        close(s.kurtosis(), 3.0, 5.0 * (24.0 / nf).sqrt());
        close(s.skewness(), 0.0, 5.0 * (6.0 / nf).sqrt());
        close(s.mean(), 0.0, 5.0 * sigma / nf.sqrt());
        close(s.std_dev(), sigma, 5.0 * sigma / (2.0 * nf).sqrt());
    }

    // analytic: pulses of height A, one sample in every P, are a two-valued sequence with
    // p = 1 / P: kurtosis (1 - 3 p q) / (p q), skewness (1 - 2 p) / sqrt(p q) with q = 1 - p,
    // crest factor A / (A sqrt(p)) = sqrt(P). Exact over whole periods; f32 run sums: 1e-5
    // relative.
    #[test]
    fn an_impulse_train_has_the_kurtosis_of_its_duty() {
        for period in [10usize, 100, 1000] {
            let x: Vec<f32> = (0..period * 200)
                .map(|n| if n % period == 0 { 4.0 } else { 0.0 })
                .collect();
            let s = Statistics::of(&x);
            let p = 1.0 / period as f64;
            let pq = p * (1.0 - p);
            let kurtosis = (1.0 - 3.0 * pq) / pq;
            println!(
                "impulses 1/{period}: kurtosis {} vs {kurtosis}",
                s.kurtosis().unwrap()
            );
            close(s.kurtosis(), kurtosis, 1e-5 * kurtosis);
            let skewness = (1.0 - 2.0 * p) / pq.sqrt();
            close(s.skewness(), skewness, 1e-5 * skewness);
            close(
                s.crest_factor(),
                (period as f64).sqrt(),
                1e-5 * (period as f64).sqrt(),
            );
        }
    }

    // Against a two-pass f64 computation (analytic definitions evaluated directly) on noise
    // with an offset and impacts; f32 input, so allow 1e-5 relative.
    #[test]
    fn agrees_with_a_two_pass_f64_reference() {
        let mut x = gaussian(50_001, 7);
        for (n, v) in x.iter_mut().enumerate() {
            *v = 5.0 + 0.3 * *v + if n % 997 == 0 { 4.0 } else { 0.0 };
        }
        let s = Statistics::of(&x);
        let n = x.len() as f64;
        let mean = x.iter().map(|&v| v as f64).sum::<f64>() / n;
        let central = |k: i32| x.iter().map(|&v| (v as f64 - mean).powi(k)).sum::<f64>();
        let (m2, m3, m4) = (central(2), central(3), central(4));
        let kurtosis = n * m4 / (m2 * m2);
        let skewness = n.sqrt() * m3 / m2.powf(1.5);
        close(s.mean(), mean, 1e-5 * mean);
        close(s.std_dev(), (m2 / n).sqrt(), 1e-5 * (m2 / n).sqrt());
        close(s.kurtosis(), kurtosis, 1e-5 * kurtosis);
        close(s.skewness(), skewness, 1e-5 * skewness.abs());
        let rms = (x.iter().map(|&v| (v as f64).powi(2)).sum::<f64>() / n).sqrt();
        close(s.rms(), rms, 1e-5 * rms);
    }

    #[test]
    fn bad_samples_are_counted_and_left_out() {
        let clean = sine(10, 1.0, 0.2);
        let mut dirty = Vec::new();
        for (n, &v) in clean.iter().enumerate() {
            dirty.push(v);
            if n % 50 == 3 {
                dirty.extend_from_slice(&[f32::NAN, f32::INFINITY, -f32::INFINITY, 2e8]);
            }
        }
        let (a, b) = (Statistics::of(&clean), Statistics::of(&dirty));
        assert_eq!(b.count(), clean.len() as u64);
        assert_eq!(b.excluded() as usize, dirty.len() - clean.len());
        // The accepted stream is the same, so are the statistics, to the bit.
        assert_eq!(a.totals, b.totals);
        assert_eq!(a.run, b.run);
        assert_eq!(a.kurtosis(), b.kurtosis());
        // A stream of nothing but bad samples says nothing.
        let only_bad = Statistics::of(&[f32::NAN; 10]);
        assert_eq!(only_bad.count(), 0);
        assert_eq!(only_bad.excluded(), 10);
        assert!(only_bad.mean().is_none() && only_bad.peak().is_none());
    }

    #[test]
    fn undefined_statistics_are_none() {
        let empty = Statistics::new();
        assert!(empty.mean().is_none() && empty.rms().is_none() && empty.std_dev().is_none());
        assert!(empty.crest_factor().is_none() && empty.kurtosis().is_none());
        assert!(empty.peak_to_peak().is_none() && empty.min_max().is_none());
        let constant = Statistics::of(&[2.5; 100]);
        close(constant.mean(), 2.5, 0.0);
        close(constant.rms(), 2.5, 1e-6);
        assert!(constant.kurtosis().is_none() && constant.skewness().is_none());
        assert!(constant.ac_crest_factor().is_none());
        close(constant.crest_factor(), 1.0, 1e-6);
        assert!(Statistics::of(&[0.0; 10]).crest_factor().is_none());
        let mut s = Statistics::of(&sine(2, 1.0, 0.0));
        s.reset();
        assert_eq!(s, Statistics::new());
    }

    proptest! {
        #![proptest_config(ProptestConfig {
            cases: 48,
            rng_seed: proptest::test_runner::RngSeed::Fixed(0x1ea4_1e55),
            failure_persistence: None,
            ..ProptestConfig::default()
        })]

        // Runs are counted in accepted samples, so the chunking cannot matter, to the bit.
        #[test]
        fn chunking_does_not_change_anything(
            cuts in proptest::collection::vec(1usize..300, 1..20),
            seed in any::<u64>(),
        ) {
            let mut x = gaussian(3000, seed);
            x[1234] = f32::NAN;
            let whole = Statistics::of(&x);
            let mut chunked = Statistics::new();
            let mut rest = &x[..];
            for cut in cuts.iter().cycle() {
                if rest.is_empty() {
                    break;
                }
                let (now, later) = rest.split_at((*cut).min(rest.len()));
                chunked.push(now);
                rest = later;
            }
            prop_assert_eq!(whole, chunked);
        }
    }
}
