//! Modes from a frequency response: natural frequency and damping of each resonance, the
//! damping an exponential window added removed, a quality figure per mode, and the
//! separation of each mode from the machine's forcing frequencies.
//!
//! # Method
//!
//! Peaks of `|H|` (local maxima that stand out by a prominence and lie within a range of the
//! strongest) are fitted one at a time with a single-degree-of-freedom model in the discrete
//! frequency domain: the DFT of a sampled decaying exponential `z^n` over a block is
//! `(1 - z^N) / (1 - z q_k)`, `q_k = exp(-j 2 pi k / N)`, exactly, for any record length (so
//! truncation at the block's end moves no pole). Around a peak
//!
//! ```text
//! H_k = (c0 + c1 u_k + c2 u_k^2) / (1 - z q_k),   u_k = q_k / q_peak - 1
//! ```
//!
//! where the numerator absorbs the mode's residue and the slowly varying rest (its conjugate
//! pole, other modes). Multiplied out it is linear in `c0, c1, c2, z`, solved by weighted
//! least squares with the weights refined from the denominator (Sanathanan and Koerner,
//! *IEEE Trans. Automatic Control* 8(1), 1963, from memory). The pole gives the decay rate
//! `sigma = -fs ln |z|` and the damped frequency `w_d = fs arg z`; `w_n = sqrt(w_d^2 +
//! sigma^2)` and `zeta = sigma / w_n` (the single-degree-of-freedom relations of Ewins,
//! *Modal Testing*, 2nd ed., 2000, from memory).
//!
//! An exponential window `exp(-sigma_w t)` on the response multiplies every mode's decay:
//! the fit measures `sigma + sigma_w`, and `sigma_w` (the window's
//! [`added_decay_rate`](crate::window::WindowTable::added_decay_rate), one of its factors) is
//! subtracted from the decay rate before `zeta` is formed.
//!
//! The half-power bandwidth (`zeta ~ (f2 - f1) / (2 f_peak)`, common practice) is reported
//! beside the fit, window damping removed the same way, with how many lines span it: fewer
//! than about five and it is biased high (the peak falls between lines), which is why the fit
//! is the primary estimate.

use crate::analysis::frf::Complex;
use crate::error::ConfigError;

/// What to look for.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ModeSearch {
    /// Lowest frequency searched, Hz.
    pub f_min_hz: f64,
    /// Highest frequency searched, Hz.
    pub f_max_hz: f64,
    /// A peak must stand this far above the deeper of the two valleys that separate it from
    /// higher ground, dB. Default 6.
    pub min_prominence_db: f64,
    /// Peaks more than this far below the strongest are ignored, dB. Default 40.
    pub range_db: f64,
    /// The decay rate the response window added, 1/s (0 for none; see
    /// [`WindowTable::added_decay_rate`](crate::window::WindowTable::added_decay_rate)).
    pub added_decay_rate: f64,
}

impl ModeSearch {
    /// Search `f_min_hz ..= f_max_hz` with the default prominence and range, no window decay.
    pub const fn new(f_min_hz: f64, f_max_hz: f64) -> Self {
        Self {
            f_min_hz,
            f_max_hz,
            min_prominence_db: 6.0,
            range_db: 40.0,
            added_decay_rate: 0.0,
        }
    }

    /// The response window's added decay rate, 1/s.
    pub const fn with_added_decay_rate(mut self, sigma: f64) -> Self {
        self.added_decay_rate = sigma;
        self
    }
}

/// One mode.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Mode {
    /// Undamped natural frequency `w_n / 2 pi`, Hz, window damping removed.
    pub frequency_hz: f64,
    /// Damped natural frequency `w_d / 2 pi`, Hz (the window does not change it).
    pub damped_frequency_hz: f64,
    /// Damping ratio (fraction of critical), window damping removed.
    pub damping_ratio: f64,
    /// Damping ratio as measured through the window (before the removal).
    pub measured_damping_ratio: f64,
    /// Damping ratio from the half-power bandwidth, window damping removed (NaN if higher
    /// ground or the halfway point to the next mode comes before the half-power level on
    /// either side).
    pub half_power_damping_ratio: f64,
    /// Lines spanning the half-power band `(f2 - f1) / bin width` (NaN as above).
    pub half_power_lines: f64,
    /// The line of the peak.
    pub peak_line: usize,
    /// `|H|` at the peak line.
    pub peak_magnitude: f64,
    /// Coherence at the peak line.
    pub coherence: f64,
    /// Lines used by the fit (0: no fit was possible; frequency and damping then come from
    /// the peak line and the half-power band).
    pub fit_lines: usize,
}

/// Finds up to `M` modes (the strongest, returned in order of frequency) of the response
/// `frf(k) = (H_k, coherence_k)` on lines `0 .. lines` of an `N = block_len` transform at
/// `sample_rate_hz`.
pub fn find_modes<const M: usize>(
    lines: usize,
    block_len: usize,
    sample_rate_hz: f64,
    frf: impl Fn(usize) -> (Complex, f64),
    search: &ModeSearch,
) -> heapless::Vec<Mode, M> {
    let mut modes: heapless::Vec<Mode, M> = heapless::Vec::new();
    if lines < 5 || block_len < 2 || sample_rate_hz.is_nan() || sample_rate_hz <= 0.0 {
        return modes;
    }
    let bin_hz = sample_rate_hz / block_len as f64;
    let magnitude = |k: usize| {
        let m = frf(k).0.magnitude();
        if m.is_finite() {
            m
        } else {
            0.0
        }
    };
    let first = libm::ceil(search.f_min_hz / bin_hz).max(1.0) as usize;
    let last = (libm::floor(search.f_max_hz / bin_hz) as usize).min(lines - 2);
    if first > last {
        return modes;
    }
    let strongest = (first..=last).map(magnitude).fold(0.0, f64::max);
    if strongest <= 0.0 {
        return modes;
    }
    let floor = strongest * libm::pow(10.0, -search.range_db / 20.0);
    let prominence = libm::pow(10.0, search.min_prominence_db / 20.0);
    // Candidates, strongest first, at most M kept.
    let mut peaks: heapless::Vec<(usize, f64), M> = heapless::Vec::new();
    for k in first..=last {
        let m = magnitude(k);
        if !(m > magnitude(k - 1) && m >= magnitude(k + 1) && m >= floor) {
            continue;
        }
        let valley = |step: isize| {
            let mut lowest = m;
            let mut i = k as isize + step;
            while i >= first as isize && i <= last as isize {
                let v = magnitude(i as usize);
                if v > m {
                    return lowest;
                }
                lowest = lowest.min(v);
                i += step;
            }
            lowest
        };
        let ground = valley(-1).max(valley(1));
        if m < prominence * ground {
            continue;
        }
        if peaks.is_full() {
            // Replace the weakest if this one is stronger.
            let weakest = peaks
                .iter()
                .enumerate()
                .min_by(|a, b| a.1 .1.total_cmp(&b.1 .1))
                .map(|(i, p)| (i, p.1));
            if let Some((i, w)) = weakest {
                if m > w {
                    peaks[i] = (k, m);
                }
            }
        } else {
            let _ = peaks.push((k, m));
        }
    }
    peaks.sort_unstable_by_key(|p| p.0);
    for (i, &(k, m)) in peaks.iter().enumerate() {
        // A mode's lines end halfway to its neighbours (or at the search range).
        let low = match i.checked_sub(1).and_then(|j| peaks.get(j)) {
            Some(&(left, _)) => (left + k).div_ceil(2),
            None => first,
        };
        let high = match peaks.get(i + 1) {
            Some(&(right, _)) => (k + right) / 2,
            None => last,
        };
        let mode = fit_peak(k, m, (low, high), block_len, sample_rate_hz, &frf, search);
        let _ = modes.push(mode);
    }
    modes
}

/// Frequency, damping and quality of the peak at line `k`.
fn fit_peak(
    k: usize,
    m: f64,
    (low, high): (usize, usize),
    block_len: usize,
    fs: f64,
    frf: &impl Fn(usize) -> (Complex, f64),
    search: &ModeSearch,
) -> Mode {
    let bin_hz = fs / block_len as f64;
    let magnitude = |i: usize| frf(i).0.magnitude();
    // Half-power crossings, interpolated linearly in |H|^2 between lines: the first line at
    // or below half power going outwards (noise wiggles above it are passed over), or none
    // if higher ground or the mode's limit comes first.
    let half = m * m / 2.0;
    let crossing = |from: usize, step: isize, bound: usize| -> Option<f64> {
        let mut i = from;
        while i != bound {
            let next = (i as isize + step) as usize;
            let (a, b) = (magnitude(i), magnitude(next));
            if b > m {
                return None;
            }
            let (a, b) = (a * a, b * b);
            if b <= half {
                let t = (a - half) / (a - b);
                return Some(i as f64 + step as f64 * t);
            }
            i = next;
        }
        None
    };
    let (f1, f2) = (crossing(k, -1, low), crossing(k, 1, high));
    let sigma_w = search.added_decay_rate;
    let (half_power_lines, half_power_damping_ratio) = match (f1, f2) {
        (Some(a), Some(b)) => {
            let width = b - a;
            let f_peak = k as f64 * bin_hz;
            let measured = width * bin_hz / (2.0 * f_peak);
            let added = sigma_w / (2.0 * core::f64::consts::PI * f_peak);
            (width, measured - added)
        }
        _ => (f64::NAN, f64::NAN),
    };
    // Fit over one half-power bandwidth each side of the peak (twice the band: with noise,
    // fewer lines scatter more, and the numerator's quadratic still follows the conjugate
    // pole there), at least 3 lines each side, within the mode's limits.
    let reach = if half_power_lines.is_finite() {
        libm::ceil(half_power_lines).max(3.0) as usize
    } else {
        3
    };
    let start = k.saturating_sub(reach).max(low).max(1);
    let end = (k + reach).min(high);
    let mut mode = Mode {
        frequency_hz: k as f64 * bin_hz,
        damped_frequency_hz: k as f64 * bin_hz,
        damping_ratio: half_power_damping_ratio,
        measured_damping_ratio: f64::NAN,
        half_power_damping_ratio,
        half_power_lines,
        peak_line: k,
        peak_magnitude: m,
        coherence: frf(k).1,
        fit_lines: 0,
    };
    if end + 1 - start < 5 {
        return mode;
    }
    let Some(z) = fit_pole(start, end, k, block_len, frf) else {
        return mode;
    };
    let radius = z.magnitude();
    let angle = libm::atan2(z.im, z.re);
    let sigma_measured = -fs * libm::log(radius);
    let wd = fs * angle;
    let f_fit = wd / (2.0 * core::f64::consts::PI);
    let in_band = f_fit >= start as f64 * bin_hz && f_fit <= end as f64 * bin_hz;
    if !(radius < 1.0 && wd > 0.0 && in_band) {
        return mode;
    }
    let wn_measured = libm::hypot(wd, sigma_measured);
    let sigma = sigma_measured - sigma_w;
    let wn = libm::hypot(wd, sigma);
    mode.frequency_hz = wn / (2.0 * core::f64::consts::PI);
    mode.damped_frequency_hz = f_fit;
    mode.measured_damping_ratio = sigma_measured / wn_measured;
    mode.damping_ratio = sigma / wn;
    mode.fit_lines = end + 1 - start;
    mode
}

/// The pole `z` of the single-degree-of-freedom model fitted to lines `start ..= end`
/// (see the module docs), or `None` if the equations are singular.
fn fit_pole(
    start: usize,
    end: usize,
    peak: usize,
    block_len: usize,
    frf: &impl Fn(usize) -> (Complex, f64),
) -> Option<Complex> {
    let angle = |k: usize| -2.0 * core::f64::consts::PI * k as f64 / block_len as f64;
    let q = |k: usize| Complex::new(libm::cos(angle(k)), libm::sin(angle(k)));
    let q0 = q(peak);
    let span = (end - start) as f64 / block_len as f64 * 2.0 * core::f64::consts::PI;
    let reference = frf(peak).0.magnitude();
    if !(reference > 0.0 && reference.is_finite()) {
        return None;
    }
    // Unknowns [c0, c1, c2, w] with w = z q0:  H = c0 + c1 v + c2 v^2 + w (1 + u) H, where
    // u = q / q0 - 1 and v = u / span (scaled for conditioning).
    let mut w_prev: Option<Complex> = None;
    let mut solution = None;
    for _ in 0..4 {
        let mut normal = [[Complex::default(); 5]; 4];
        for k in start..=end {
            let h = frf(k).0.scale(1.0 / reference);
            let u = q(k) / q0 - Complex::new(1.0, 0.0);
            let v = u.scale(1.0 / span);
            let one_plus_u = u + Complex::new(1.0, 0.0);
            let row = [Complex::new(1.0, 0.0), v, v * v, one_plus_u * h];
            let weight = match w_prev {
                Some(w) => {
                    let d = (Complex::new(1.0, 0.0) - w * one_plus_u).norm_sqr();
                    if d > 0.0 {
                        1.0 / d
                    } else {
                        1.0
                    }
                }
                None => 1.0,
            };
            for i in 0..4 {
                let ci = row[i].conj().scale(weight);
                for j in 0..4 {
                    normal[i][j] = normal[i][j] + ci * row[j];
                }
                normal[i][4] = normal[i][4] + ci * h;
            }
        }
        let x = solve4(normal)?;
        w_prev = Some(x[3]);
        solution = Some(x[3]);
    }
    solution.map(|w| w / q0)
}

/// Gaussian elimination with partial pivoting on a 4 x 4 complex system (augmented).
fn solve4(mut m: [[Complex; 5]; 4]) -> Option<[Complex; 4]> {
    for col in 0..4 {
        let pivot =
            (col..4).max_by(|&a, &b| m[a][col].norm_sqr().total_cmp(&m[b][col].norm_sqr()))?;
        let size = m[pivot][col].norm_sqr();
        if size.is_nan() || size <= 1e-300 {
            return None;
        }
        m.swap(col, pivot);
        let pivot_row = m[col];
        for row in &mut m[col + 1..] {
            let factor = row[col] / pivot_row[col];
            for (x, &p) in row.iter_mut().zip(&pivot_row).skip(col) {
                *x = *x - factor * p;
            }
        }
    }
    let mut x = [Complex::default(); 4];
    for row in (0..4).rev() {
        let mut acc = m[row][4];
        for j in row + 1..4 {
            acc = acc - m[row][j] * x[j];
        }
        x[row] = acc / m[row][row];
    }
    x.iter()
        .all(|v| v.re.is_finite() && v.im.is_finite())
        .then_some(x)
}

/// Where a forcing frequency comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ForcingKind {
    /// A harmonic of the running speed (1x, 2x, ...): unbalance, misalignment, looseness.
    RunningSpeed,
    /// A harmonic of the vane (blade) pass frequency, vanes x running speed.
    VanePass,
    /// A harmonic of the line (mains) frequency: electromagnetic forces in a motor act at
    /// twice line frequency, and 1x line shows up through supplies and drives.
    LineFrequency,
}

impl ForcingKind {
    /// A short name for reports.
    pub const fn name(self) -> &'static str {
        match self {
            Self::RunningSpeed => "running speed",
            Self::VanePass => "vane pass",
            Self::LineFrequency => "line frequency",
        }
    }
}

/// One forcing frequency.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Forcing {
    /// Its source.
    pub kind: ForcingKind,
    /// Harmonic order, 1 for the fundamental.
    pub harmonic: u32,
    /// Frequency, Hz.
    pub frequency_hz: f64,
}

/// The forcing frequencies of a rotating machine, at most `K`.
///
/// ```
/// use leakless::analysis::modes::ForcingFrequencies;
/// // 1482 rpm, 7 vanes, 50 Hz line: 1x..4x, vane pass 1x..2x, line 1x..2x.
/// let f = ForcingFrequencies::<16>::machine(1482.0 / 60.0, 4, 7, 2, 50.0, 2).unwrap();
/// assert_eq!(f.list().len(), 8);
/// assert!((f.list()[4].frequency_hz - 7.0 * 24.7).abs() < 1e-9); // vane pass
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct ForcingFrequencies<const K: usize> {
    list: heapless::Vec<Forcing, K>,
}

impl<const K: usize> ForcingFrequencies<K> {
    /// An empty set.
    pub const fn new() -> Self {
        Self {
            list: heapless::Vec::new(),
        }
    }

    /// `running_harmonics` harmonics of the running speed, `vane_harmonics` of vane pass
    /// (`vanes` x running speed; 0 vanes for none) and `line_harmonics` of the line
    /// frequency. [`ConfigError::ShaftSpeed`] for a speed that is not finite and > 0,
    /// [`ConfigError::Frequency`] for a bad line frequency or more than `K` frequencies.
    pub fn machine(
        running_speed_hz: f64,
        running_harmonics: u32,
        vanes: u32,
        vane_harmonics: u32,
        line_hz: f64,
        line_harmonics: u32,
    ) -> Result<Self, ConfigError> {
        if !(running_speed_hz.is_finite() && running_speed_hz > 0.0) {
            return Err(ConfigError::ShaftSpeed);
        }
        if line_harmonics > 0 && !(line_hz.is_finite() && line_hz > 0.0) {
            return Err(ConfigError::Frequency);
        }
        let mut set = Self::new();
        for h in 1..=running_harmonics {
            set.add(ForcingKind::RunningSpeed, h, h as f64 * running_speed_hz)?;
        }
        if vanes > 0 {
            for h in 1..=vane_harmonics {
                let f = (h * vanes) as f64 * running_speed_hz;
                set.add(ForcingKind::VanePass, h, f)?;
            }
        }
        for h in 1..=line_harmonics {
            set.add(ForcingKind::LineFrequency, h, h as f64 * line_hz)?;
        }
        Ok(set)
    }

    /// Adds one ([`ConfigError::Frequency`] when full or not finite and > 0).
    pub fn add(
        &mut self,
        kind: ForcingKind,
        harmonic: u32,
        frequency_hz: f64,
    ) -> Result<(), ConfigError> {
        if !(frequency_hz.is_finite() && frequency_hz > 0.0) {
            return Err(ConfigError::Frequency);
        }
        self.list
            .push(Forcing {
                kind,
                harmonic,
                frequency_hz,
            })
            .map_err(|_| ConfigError::Frequency)
    }

    /// The frequencies, in the order added.
    pub fn list(&self) -> &[Forcing] {
        &self.list
    }

    /// The separation of a mode at `mode_hz` from the nearest forcing frequency, against a
    /// required margin in percent of that forcing frequency (`None` for an empty set).
    pub fn separation(&self, mode_hz: f64, required_margin_percent: f64) -> Option<Separation> {
        let nearest = self.list.iter().min_by(|a, b| {
            (a.frequency_hz - mode_hz)
                .abs()
                .total_cmp(&(b.frequency_hz - mode_hz).abs())
        })?;
        let margin_percent = 100.0 * (mode_hz - nearest.frequency_hz).abs() / nearest.frequency_hz;
        Some(Separation {
            nearest: *nearest,
            margin_percent,
            meets_margin: margin_percent >= required_margin_percent,
        })
    }
}

impl<const K: usize> Default for ForcingFrequencies<K> {
    fn default() -> Self {
        Self::new()
    }
}

/// How far a mode lies from the nearest forcing frequency.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Separation {
    /// The nearest forcing frequency.
    pub nearest: Forcing,
    /// `100 |f_mode - f_forcing| / f_forcing`.
    pub margin_percent: f64,
    /// Whether the margin is at least the required one. The required margin is the user's:
    /// it comes from the applicable standard and the machine's maker, not from this crate.
    pub meets_margin: bool,
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The DFT of a sampled SDOF impulse response (two conjugate poles), exact.
    fn sdof_dft(fn_hz: f64, zeta: f64, fs: f64, n: usize, k: usize) -> Complex {
        let wn = 2.0 * core::f64::consts::PI * fn_hz;
        let s = Complex::new(-zeta * wn, wn * libm::sqrt(1.0 - zeta * zeta));
        let q = Complex::new(0.0, -2.0 * core::f64::consts::PI * k as f64 / n as f64).exp();
        let one = Complex::new(1.0, 0.0);
        let mut total = Complex::default();
        for pole in [s, s.conj()] {
            let z = pole.scale(1.0 / fs).exp();
            let zn = pole.scale(n as f64 / fs).exp();
            // residues +-1/(2j): sin(wd t)
            let r = if pole.im > 0.0 {
                Complex::new(0.0, -0.5)
            } else {
                Complex::new(0.0, 0.5)
            };
            total = total + r * (one - zn) / (one - z * q);
        }
        total
    }

    // Ewins 2000 (from memory): the impulse response of a single-degree-of-freedom system is
    // e^(-zeta wn t) sin(wd t) / (m wd); sampled, its DFT is the geometric series above,
    // exactly. The fit's quadratic numerator only approximates the conjugate pole's term, so
    // the result is not exact: 1e-5 in frequency and 1e-3 relative in damping bound what
    // that leaves at 5 % damping (measured 4e-6 and 2e-5).
    #[test]
    fn fit_recovers_an_exact_sdof() {
        for &(fn_hz, zeta) in &[(100.0, 0.005), (100.0, 0.05), (333.3, 0.02)] {
            let (fs, n) = (2048.0, 2048);
            let modes: heapless::Vec<Mode, 4> = find_modes(
                n / 2 + 1,
                n,
                fs,
                |k| (sdof_dft(fn_hz, zeta, fs, n, k), 1.0),
                &ModeSearch::new(10.0, 900.0),
            );
            assert_eq!(modes.len(), 1, "{modes:?}");
            let m = modes[0];
            assert!((m.frequency_hz / fn_hz - 1.0).abs() < 1e-5, "{m:?}");
            assert!((m.damping_ratio / zeta - 1.0).abs() < 1e-3, "{m:?}");
            assert!(m.fit_lines >= 5);
        }
    }

    #[test]
    fn separation_names_the_nearest_forcing() {
        let f = ForcingFrequencies::<16>::machine(24.7, 4, 7, 2, 50.0, 2).unwrap();
        let s = f.separation(180.0, 10.0).unwrap();
        assert_eq!(s.nearest.kind, ForcingKind::VanePass);
        assert!((s.margin_percent - 100.0 * (180.0 - 172.9) / 172.9).abs() < 1e-9);
        assert!(s.meets_margin == (s.margin_percent >= 10.0));
        assert!(ForcingFrequencies::<2>::machine(24.7, 4, 0, 0, 50.0, 0).is_err());
        assert!(ForcingFrequencies::<16>::machine(0.0, 1, 0, 0, 50.0, 0).is_err());
        assert!(ForcingFrequencies::<16>::new()
            .separation(1.0, 1.0)
            .is_none());
    }
}
