//! Tones: the strongest lines of an averaged spectrum, with a frequency and an amplitude that
//! survive leakage and picket-fence (scalloping) error, for any window.
//!
//! # Method
//!
//! 1. **Candidates**: local maxima of the spectrum (a line above its lower neighbour and not
//!    below its upper one), DC excluded, inside the search range.
//! 2. **Selection**, strongest first: a candidate closer than one main-lobe width (twice the
//!    window's first null, [`main_lobe_half_width_bins`]) to a stronger accepted tone is part
//!    of that tone's lobe or its first sidelobes, not a tone of its own. Two tones a whole
//!    main-lobe width apart (Hann: 4 lines) are both found. Candidates below the
//!    floor ([`ToneSearch::floor_rms`], [`ToneSearch::range_db`]) end the search.
//! 3. **Amplitude** from the *power in a band* (scipy 1.17.1 `signal.periodogram`, band sums
//!    of examples A and B in tests/reference/spectra_examples.csv): the sum of the
//!    energy-corrected mean squares ([`Spectrum::mean_square`]) of the `2 H + 2` lines
//!    around the tone (`H`, the first null rounded up, on either side of it, and one line
//!    more on the far side; a line nearer another tone found is left to that one) is its
//!    mean square, whatever the window
//!    and wherever the tone falls between lines. By Parseval the sum over *all* lines is
//!    exact; the main lobe misses only the sidelobe power.
//! 4. **Frequency** from the power-weighted centroid of the same lines, `sum k P_k / sum P_k`.
//!    Over all lines of a windowed complex tone the centroid is exact as well:
//!    `sum_k exp(2 pi j k / N) |X_k|^2 = N exp(2 pi j f / N) sum_n w_n w_(n-1)` (the lag-1
//!    autocorrelation), whose phase is the tone's frequency `f` in bins, and for a lobe a few
//!    lines wide the linear centroid equals that phase to `O((lobe / N)^2)`. Over the main
//!    lobe it errs by the asymmetry of the sidelobe power left out. The lines are chosen
//!    around a first centroid (of the peak line and its larger neighbour), so that they sit
//!    as symmetrically around the tone as the line grid allows.
//!
//! Cost: per tone, one scan of the search range (about three line reads of one `f32`
//! multiply each, per line) and `2 H + 2` lines summed; the conversion to mean squares is
//! worked out once per call. No heap: the result is a [`heapless::Vec`] of capacity `K`.
//!
//! # Accuracy (measured)
//!
//! Single sines of amplitude 1 at 0, 0.25 and 0.5 bins off line 100, `N = 1024`, one block,
//! f32 analyzer (the tests at the bottom of this file print these figures):
//!
//! | window | amplitude error | frequency error |
//! |---|---|---|
//! | Hann | <= 6e-5 (0.0005 dB) | <= 8e-5 bins |
//! | flat top (SciPy), HFT90D | <= 1.2e-7 (f32 rounding) | 0 (to f32) |
//! | rectangular, on a line | 1.2e-7 | 0 |
//! | rectangular, 0.25 bin off | -2.6 % (-0.23 dB) | -0.153 bins |
//! | rectangular, 0.5 bin off | -5.1 % (-0.45 dB) | -0.004 bins |
//!
//! The rectangular window's sidelobes hold too much power, too unevenly spread over the
//! lines, for a four-line sum; it is still better than the peak line alone, which reads up
//! to 3.92 dB low and half a bin off. (Hann's peak line: 1.42 dB low at half a bin.)
//!
//! What still biases the estimates:
//!
//! * **Noise** inside the summed lines adds its power: about `(2 first null + 1)` lines of
//!   noise. A tone 40 dB above the noise power of one line reads high by about 0.1 dB for
//!   Hann.
//! * **Neighbours** closer than about two main-lobe widths leak into each other's lines.
//! * **Near DC or Nyquist**, where the lobe is cut off (DC is never summed) and meets the
//!   tone's negative-frequency image.
//!
//! ```
//! use leakless::analysis::peaks::{strongest_tones, ToneSearch};
//! use leakless::{Analyzer, Config, Correction, Scale, Shape, Window};
//!
//! static HANN: Window<1024> = Window::new(Shape::Hann);
//! let mut analyzer: Analyzer<1024, 513> = Analyzer::new(&HANN, Config::new(1024.0)).unwrap();
//! // 2 units peak at 100.3 Hz, between lines 100 and 101 (1 Hz apart).
//! let x: Vec<f32> = (0..8192)
//!     .map(|n| 2.0 * (2.0 * core::f32::consts::PI * 100.3 * n as f32 / 1024.0).sin())
//!     .collect();
//! analyzer.push(&x);
//! let spectrum = analyzer.spectrum(Scale::Rms, Correction::Amplitude);
//! let search = ToneSearch::for_shape(Shape::Hann).unwrap();
//! let tones = strongest_tones::<4, 513>(&spectrum, &search).unwrap();
//! let tone = tones[0];
//! assert!((tone.frequency_hz - 100.3).abs() < 0.005);
//! assert!((tone.peak - 2.0).abs() < 0.002);
//! // The peak line alone reads low (scalloping loss of Hann at 0.3 bins: about 0.5 dB).
//! assert!(spectrum.values()[100] * 2f32.sqrt() < 1.9);
//! ```

use crate::error::ConfigError;
use crate::spectrum::scale::{MeanSquares, Spectrum};
use crate::window::Shape;

/// One tone found in a spectrum. Amplitudes are in the spectrum's unit.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Tone {
    /// Estimated frequency, Hz (the power centroid of the summed lines).
    pub frequency_hz: f32,
    /// RMS amplitude: the square root of the summed mean squares.
    pub rms: f32,
    /// Peak amplitude of the sinusoid, `sqrt(2) rms`.
    pub peak: f32,
    /// `20 log10(rms)`, dB re 1 unit rms.
    pub level_db: f32,
    /// The local maximum the tone was found at.
    pub peak_line: usize,
    /// First line summed.
    pub first_line: usize,
    /// Last line summed.
    pub last_line: usize,
}

/// What [`strongest_tones`] looks for. Start from [`ToneSearch::for_shape`] (or
/// [`ToneSearch::new`] with the first null of a window of your own).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ToneSearch {
    /// The window's first null, in bins (half the main-lobe width): finite, `>= 0.5`.
    pub lobe_half_width_bins: f32,
    /// Lowest peak line frequency searched, Hz. Default 0 (DC itself is never a tone).
    pub min_frequency_hz: f32,
    /// Highest peak line frequency searched, Hz. Default infinity (up to Nyquist).
    pub max_frequency_hz: f32,
    /// Tones with a smaller RMS amplitude are not reported (units); `>= 0`. Default 0.
    pub floor_rms: f32,
    /// Tones more than this far below the strongest one are not reported, dB (of
    /// amplitude); `>= 0`, infinity for no limit. Default 80 dB.
    pub range_db: f32,
}

impl ToneSearch {
    /// The defaults listed on each field, for a window whose first null is
    /// `lobe_half_width_bins` bins from its peak.
    pub const fn new(lobe_half_width_bins: f32) -> Self {
        Self {
            lobe_half_width_bins,
            min_frequency_hz: 0.0,
            max_frequency_hz: f32::INFINITY,
            floor_rms: 0.0,
            range_db: 80.0,
        }
    }

    /// The defaults for a window of `shape` ([`main_lobe_half_width_bins`]); `None` for the
    /// transient windows, which have no main lobe to speak of.
    pub fn for_shape(shape: Shape) -> Option<Self> {
        main_lobe_half_width_bins(shape).map(Self::new)
    }

    /// Searches peak lines from `min_hz` to `max_hz` only.
    pub const fn with_range_hz(mut self, min_hz: f32, max_hz: f32) -> Self {
        self.min_frequency_hz = min_hz;
        self.max_frequency_hz = max_hz;
        self
    }

    /// Reports no tone below `rms` (units).
    pub const fn with_floor_rms(mut self, rms: f32) -> Self {
        self.floor_rms = rms;
        self
    }

    /// Reports no tone more than `db` below the strongest.
    pub const fn with_range_db(mut self, db: f32) -> Self {
        self.range_db = db;
        self
    }

    fn validate(&self) -> Result<(), ConfigError> {
        let lobe = self.lobe_half_width_bins;
        if !(lobe.is_finite() && lobe >= 0.5) {
            return Err(ConfigError::WindowParameter);
        }
        let (lo, hi) = (self.min_frequency_hz, self.max_frequency_hz);
        if lo.is_nan() || hi.is_nan() || lo > hi || hi < 0.0 {
            return Err(ConfigError::Frequency);
        }
        if !(self.floor_rms.is_finite() && self.floor_rms >= 0.0) || self.range_db.is_nan() {
            return Err(ConfigError::ToneFloor);
        }
        #[allow(clippy::neg_cmp_op_on_partial_ord)]
        if !(self.range_db >= 0.0) {
            return Err(ConfigError::ToneFloor);
        }
        Ok(())
    }
}

/// The first null of a window's response, in bins from its peak (half its main-lobe width),
/// for the periodic window of `shape`:
///
/// * a cosine sum of `K` terms (Hann 2, Blackman 3, Blackman-Harris 4, the 5-term flat tops,
///   HFT116D 6, HFT144D 7): `K`, exactly, since every term's response is zero on the lines
///   from `K` on (`first_minimum_bin` in tests/reference/window_factors.csv, scipy 1.17.1 /
///   numpy 2.4.6 via generate.py, agrees);
/// * rectangular: 1;
/// * Kaiser: `sqrt(1 + (beta / pi)^2)`, the null of the continuous window, which the first
///   nulls computed with numpy 2.4.6 / scipy 1.17.1 (exact DTFT) match to 0.01 bin;
/// * Tukey: `1 + alpha`, an upper bound (from 1 for rectangular to 2 for Hann; the same
///   computation gives 1.06, 1.16, 1.34 for alpha = 0.1, 0.25, 0.5).
///
/// `None` for the force and exponential windows, made for transients, not tones.
///
/// ```
/// use leakless::analysis::peaks::main_lobe_half_width_bins;
/// use leakless::Shape;
/// assert_eq!(main_lobe_half_width_bins(Shape::Hann), Some(2.0));
/// assert_eq!(main_lobe_half_width_bins(Shape::Hft90d), Some(5.0));
/// assert_eq!(main_lobe_half_width_bins(Shape::Exponential { end_fraction: 0.01 }), None);
/// ```
pub fn main_lobe_half_width_bins(shape: Shape) -> Option<f32> {
    let bins = match shape {
        Shape::Rectangular => 1.0,
        Shape::Kaiser { beta } => {
            let alpha = beta / core::f64::consts::PI;
            libm::sqrt(1.0 + alpha * alpha)
        }
        Shape::Tukey { alpha } => 1.0 + alpha,
        Shape::Force { .. } | Shape::Exponential { .. } => return None,
        _ => shape.cosine_coefficients()?.len() as f64,
    };
    Some(bins as f32)
}

/// The up to `K` strongest tones of `spectrum`, strongest first (by their peak line), found
/// and measured as the [module documentation](self) describes. Any scale and correction
/// will do: lines are read through [`Spectrum::mean_square`].
///
/// Fails only on settings that cannot work ([`ToneSearch`]'s fields); a spectrum of zeros or
/// non-finite values gives no tones (a NaN line is never a maximum).
///
/// # Generics
///
/// * `K`: the most tones returned (the capacity of the list).
/// * `BINS`: the spectrum's lines, `N/2 + 1`.
pub fn strongest_tones<const K: usize, const BINS: usize>(
    spectrum: &Spectrum<BINS>,
    search: &ToneSearch,
) -> Result<heapless::Vec<Tone, K>, ConfigError> {
    search.validate()?;
    let mut tones = heapless::Vec::new();
    if BINS < 3 {
        return Ok(tones);
    }
    let bin_hz = spectrum.bin_width_hz();
    let lobe = search.lobe_half_width_bins;
    // The conversion to mean squares, worked out once for the many line reads below.
    let lines = spectrum.mean_squares();
    // Lines, not Hz, from here on. Float-to-int casts saturate, so huge or infinite limits
    // are safe.
    let first = (libm::ceilf(search.min_frequency_hz / bin_hz) as usize).max(1);
    let last = (libm::floorf(search.max_frequency_hz / bin_hz) as usize).min(BINS - 1);

    // Select the peak lines, strongest first; then measure each.
    let mut peaks: heapless::Vec<usize, K> = heapless::Vec::new();
    let mut strongest_line_power = None;
    while !peaks.is_full() {
        let Some((line, line_power)) = strongest_free_maximum(&lines, first, last, &peaks, lobe)
        else {
            break;
        };
        let strongest = *strongest_line_power.get_or_insert(line_power);
        // range_db is of amplitude: a power ratio of 10^(range / 10).
        if line_power < strongest * libm::powf(10.0, -search.range_db / 10.0) {
            break;
        }
        // Cannot fail: the loop stops when the list is full.
        let _ = peaks.push(line);
    }
    let mut centres: heapless::Vec<f32, K> = heapless::Vec::new();
    for &line in &peaks {
        let _ = centres.push(first_centre(&lines, line));
    }
    for (i, &line) in peaks.iter().enumerate() {
        let tone = measure(&lines, line, i, &centres, lobe, bin_hz);
        if tone.rms >= search.floor_rms {
            let _ = tones.push(tone);
        }
    }
    Ok(tones)
}

/// The strongest local maximum in `first ..= last` that is not closer than a main-lobe width
/// (`2 lobe`) to a line already taken, with its mean square.
fn strongest_free_maximum<const BINS: usize>(
    lines: &MeanSquares<'_, BINS>,
    first: usize,
    last: usize,
    taken: &[usize],
    lobe: f32,
) -> Option<(usize, f32)> {
    let power = |k: usize| lines.get(k).unwrap_or(0.0);
    let mut best: Option<(usize, f32)> = None;
    for k in first..=last {
        let p = power(k);
        if best.is_some_and(|(_, b)| p <= b) {
            continue;
        }
        let above = if k + 1 < BINS { power(k + 1) } else { 0.0 };
        // `p > below` is false for NaN, so a NaN line is never a maximum.
        if !(p > power(k - 1) && p >= above) {
            continue;
        }
        let free = taken
            .iter()
            .all(|&t| (k as f32 - t as f32).abs() >= 2.0 * lobe);
        if free {
            best = Some((k, p));
        }
    }
    best
}

/// Sum and centroid of the lines `lo ..= hi` that lie nearer `centres[own]` than any other
/// centre: `(sum P, sum (k - origin) P)`.
fn moments<const BINS: usize>(
    lines: &MeanSquares<'_, BINS>,
    (lo, hi): (usize, usize),
    origin: usize,
    own: usize,
    centres: &[f32],
) -> (f32, f32) {
    let mut sum = 0.0f32;
    let mut weighted = 0.0f32;
    for k in lo..=hi {
        let x = k as f32;
        let distance = |c: f32| (x - c).abs();
        let mine = centres.get(own).map_or(0.0, |&c| distance(c));
        let nearer_other = centres
            .iter()
            .enumerate()
            .any(|(i, &c)| i != own && distance(c) < mine);
        if nearer_other {
            continue;
        }
        let p = lines.get(k).unwrap_or(0.0);
        sum += p;
        // Offsets from the peak line keep the products small and exact in f32.
        weighted += (x - origin as f32) * p;
    }
    (sum, weighted)
}

/// A first centre for the tone at peak `line`: the power centroid of the line and its larger
/// neighbour. It only has to pick the lines to sum, so its bias towards their midpoint does no
/// harm.
fn first_centre<const BINS: usize>(lines: &MeanSquares<'_, BINS>, line: usize) -> f32 {
    let below = lines.get(line - 1).unwrap_or(0.0);
    let above = lines.get(line + 1).unwrap_or(0.0);
    let pair = if above > below {
        (line, (line + 1).min(BINS - 1))
    } else {
        ((line - 1).max(1), line)
    };
    let (sum, weighted) = moments(lines, pair, line, 0, &[]);
    if sum > 0.0 && sum.is_finite() {
        line as f32 + weighted / sum
    } else {
        line as f32
    }
}

/// Measures tone `own` (peak `line`, 1 ..= BINS - 1) of the tones whose first centres are
/// `centres`.
fn measure<const BINS: usize>(
    lines: &MeanSquares<'_, BINS>,
    line: usize,
    own: usize,
    centres: &[f32],
    lobe: f32,
    bin_hz: f32,
) -> Tone {
    // Casts saturate: a negative line becomes 0, then 1.
    let clamp = |k: f32| (k.max(1.0) as usize).min(BINS - 1);
    // The 2 H + 2 lines from floor(centre) - H to floor(centre) + H + 1, with H the first
    // null rounded up: they cover the whole main lobe, centre +- null, wherever the tone
    // falls, and sit symmetrically around a tone half a bin off a line (the worst case of
    // scalloping). The choice only jumps where the tone is on a line, and there the
    // outermost lines are nulls. Lines nearer another tone's centre are that tone's.
    let centre = centres.get(own).copied().unwrap_or(line as f32);
    let reach = libm::ceilf(lobe - 1e-3);
    let base = libm::floorf(centre);
    let span = (clamp(base - reach), clamp(base + reach + 1.0));
    let (sum, weighted) = moments(lines, span, line, own, centres);
    let (frequency_bins, mean_square) = if sum > 0.0 && sum.is_finite() {
        (line as f32 + weighted / sum, sum)
    } else {
        (line as f32, 0.0)
    };
    let rms = libm::sqrtf(mean_square);
    Tone {
        frequency_hz: frequency_bins * bin_hz,
        rms,
        peak: rms * core::f32::consts::SQRT_2,
        level_db: 20.0 * libm::log10f(rms),
        peak_line: line,
        first_line: span.0,
        last_line: span.1,
    }
}

#[cfg(all(test, feature = "f32"))]
mod tests {
    use super::*;
    use crate::spectrum::average::{Averaging, WhenDone};
    use crate::spectrum::scale::{Correction, Scale};
    use crate::window::Window;
    use crate::{Analyzer, Config};
    use core::f64::consts::PI;

    const N: usize = 1024;
    const BINS: usize = N / 2 + 1;
    /// 1 Hz lines.
    const FS: f64 = N as f64;

    /// `sum amplitude_i sin(2 pi f_i n / fs + phase_i)` in f64, rounded once to f32: an
    /// analytic signal whose tones are known exactly.
    fn tones(len: usize, parts: &[(f64, f64)]) -> Vec<f32> {
        (0..len)
            .map(|n| {
                let t = n as f64 / FS;
                parts
                    .iter()
                    .enumerate()
                    .map(|(i, &(a, f))| a * (2.0 * PI * f * t + 0.7 * i as f64).sin())
                    .sum::<f64>() as f32
            })
            .collect()
    }

    /// The averaged spectrum of `x` in blocks of N without overlap, read as RMS with amplitude
    /// correction (any scale would do: the search reads mean squares).
    fn spectrum_of(window: &Window<N>, x: &[f32]) -> Spectrum<BINS> {
        let blocks = (x.len() / N) as u32;
        let config = Config::new(FS as f32).with_averaging(Averaging::Linear {
            count: blocks,
            when_done: WhenDone::Hold,
        });
        let mut analyzer: Analyzer<N, BINS> = Analyzer::new(window, config).unwrap();
        analyzer.push(x);
        assert!(analyzer.is_done());
        analyzer.spectrum(Scale::Rms, Correction::Amplitude)
    }

    static HANN: Window<N> = Window::new(Shape::Hann);
    static FLAT_TOP: Window<N> = Window::new(Shape::FlatTop);
    static HFT90D: Window<N> = Window::new(Shape::Hft90d);
    static RECTANGULAR: Window<N> = Window::new(Shape::Rectangular);

    /// Amplitude error (relative) and frequency error (bins) of the strongest tone, for a
    /// unit sine at `line + offset` bins.
    fn single_tone_errors(window: &Window<N>, line: f64, offset: f64) -> (f64, f64, f64) {
        let f = line + offset;
        let s = spectrum_of(window, &tones(N, &[(1.0, f)]));
        let search = ToneSearch::for_shape(window.shape()).unwrap();
        let found = strongest_tones::<4, BINS>(&s, &search).unwrap();
        let tone = found[0];
        let amplitude_error = tone.peak as f64 - 1.0;
        let frequency_error = tone.frequency_hz as f64 - f;
        // What the peak line alone reads (amplitude-corrected peak): the scalloping loss.
        let peak_line = s.values()[tone.peak_line] as f64 * 2f64.sqrt() - 1.0;
        (amplitude_error, frequency_error, peak_line)
    }

    // reference: analytic truth (a synthesized sine of known amplitude and frequency).
    // Tolerances from the measured errors (printed; see the module table) with a margin, and
    // each far tighter than what the peak line alone gives, which the test also checks so
    // that it cannot pass without the method: Hann 1.42 dB and the flat top 0.0098 dB low at
    // half a bin (scipy 1.17.1, `scalloping_db` in tests/reference/window_factors.csv).
    // Hann: its main lobe holds all but about 1e-4 of the power at any offset (lines 3 bins out
    // are sidelobes below -31 dB, and their power falls 18 dB per octave; measured 6e-5 in
    // amplitude), so 2e-4 amplitude and 1e-3 bins. Flat tops: sidelobes below -90 dB, so only
    // f32 rounding (~1e-7) remains: 1e-5 and 1e-4 bins.
    #[test]
    fn single_tones_on_and_between_lines() {
        let cases: [(&Window<N>, f64, f64, &str); 3] = [
            (&HANN, 2e-4, 1e-3, "hann"),
            (&FLAT_TOP, 1e-5, 1e-4, "flattop"),
            (&HFT90D, 1e-5, 1e-4, "hft90d"),
        ];
        for (window, amplitude_tolerance, frequency_tolerance, name) in cases {
            for offset in [0.0, 0.25, 0.5] {
                let (a, f, line) = single_tone_errors(window, 100.0, offset);
                println!(
                    "{name} offset {offset}: amplitude {a:+.2e}, frequency {f:+.2e} bins, \
                     peak line alone {line:+.2e}"
                );
                assert!(
                    a.abs() < amplitude_tolerance,
                    "{name} {offset}: amplitude {a}"
                );
                assert!(
                    f.abs() < frequency_tolerance,
                    "{name} {offset}: frequency {f}"
                );
            }
        }
        // The peak line alone at half a bin: Hann -1.4236 dB (scipy 1.17.1 `signal.periodogram`,
        // tests/reference/spectra_examples.csv example B).
        let (_, _, line) = single_tone_errors(&HANN, 100.0, 0.5);
        assert!((20.0 * (1.0 + line).log10() + 1.4236).abs() < 0.01);
    }

    // reference: analytic truth. The rectangular window's response is the Dirichlet kernel
    // `D(d) = |sin(pi d) / (N sin(pi d / N))|` (d in bins off the tone): on a line every
    // other line is an exact zero, so the amplitude is exact (f32 rounding, 1e-5). Off a
    // line the 4 lines summed (the tone's line -1 to +2) hold `sum D^2` of the power and
    // their centroid is `sum d D^2 / sum D^2`, both evaluated here in f64: at half a bin
    // (offsets +-0.5, +-1.5) 0.9006 of the power (-0.45 dB in amplitude) and no centroid
    // error; at a quarter bin 0.949 and -0.155 bins, since the sinc's sidelobes are strong
    // and the lines sit unevenly around the tone. Tolerances: 2e-3 of the amplitude and 0.01
    // bins, for the negative-frequency image, whose leakage at these lines is
    // 1/(pi 201) = 1.6e-3 of the tone (rectangular sidelobes fall slowly) and enters each
    // power as a cross term of up to 3e-3. The peak line alone reads 2/pi (-3.92 dB) at half
    // a bin (20 log10(2/pi), exact; `scalloping_db` in tests/reference/window_factors.csv).
    #[test]
    fn rectangular_window_on_and_between_lines() {
        let (a, f, _) = single_tone_errors(&RECTANGULAR, 100.0, 0.0);
        println!("rectangular on a line: amplitude {a:+.2e}, frequency {f:+.2e} bins");
        assert!(a.abs() < 1e-5 && f.abs() < 1e-4);
        let dirichlet = |d: f64| {
            let n = N as f64;
            ((PI * d).sin() / (n * (PI * d / n).sin())).powi(2)
        };
        for offset in [0.25, 0.5] {
            let offsets = [-1.0 - offset, -offset, 1.0 - offset, 2.0 - offset];
            let power: f64 = offsets.iter().map(|&d| dirichlet(d)).sum();
            let centroid = offsets.iter().map(|&d| d * dirichlet(d)).sum::<f64>() / power;
            let (a, f, line) = single_tone_errors(&RECTANGULAR, 100.0, offset);
            println!(
                "rectangular at {offset} bin: amplitude {a:+.3e} (expected {:+.3e}), \
                 frequency {f:+.3e} bins (expected {centroid:+.3e}), peak line alone {line:+.3e}",
                power.sqrt() - 1.0
            );
            assert!((1.0 + a - power.sqrt()).abs() < 2e-3, "{offset}: {a}");
            assert!((f - centroid).abs() < 0.01, "{offset}: {f}");
            if offset == 0.5 {
                assert!((line + 1.0 - 2.0 / PI).abs() < 2e-3, "{line}");
            }
        }
    }

    // reference: analytic truth. Two tones 6.3 bins apart (more than one Hann main-lobe
    // width, 4 bins, so both are found; less than two, so each one's lobe reaches the
    // other's lines). Each line summed for one tone holds the other's sidelobe, below -31 dB
    // in amplitude and falling: 1 % in amplitude allowed, 0.02 bins in frequency.
    #[test]
    fn two_close_tones() {
        let s = spectrum_of(&HANN, &tones(4 * N, &[(1.0, 100.2), (0.5, 106.5)]));
        let search = ToneSearch::for_shape(Shape::Hann).unwrap();
        let found = strongest_tones::<4, BINS>(&s, &search).unwrap();
        for t in &found {
            println!("{:.4} Hz, peak {:.5}", t.frequency_hz, t.peak);
        }
        assert_eq!(found.len(), 2, "{found:?}");
        for (tone, (a, f)) in found.iter().zip([(1.0, 100.2), (0.5, 106.5)]) {
            assert!((tone.peak as f64 / a - 1.0).abs() < 0.01, "{tone:?}");
            assert!((tone.frequency_hz as f64 - f).abs() < 0.02, "{tone:?}");
        }
        // One main-lobe width apart (4.1 bins), the lobes share lines; each line goes to the
        // nearer tone. What each one loses or gains is its neighbour's response beyond the
        // midpoint, 2.05 bins out: Hann's null (at 2) and first sidelobe (-31.5 dB, a power
        // of 7e-4 per line; Heinzel, Rüdiger and Schilling 2002, Hann PSLL), so at most about
        // 1e-3 of the power, 5e-4 of the amplitude (measured 1.1e-4, and 1e-4 bins): allowed
        // 1e-3 and 0.01 bins. Without the split, each would take two of the other's lobe lines:
        // 10 % and 0.5 bins off.
        let s = spectrum_of(&HANN, &tones(4 * N, &[(1.0, 60.3), (0.8, 64.4)]));
        let found = strongest_tones::<4, BINS>(&s, &search.with_range_db(30.0)).unwrap();
        for t in &found {
            println!("{:.4} Hz, peak {:.5}", t.frequency_hz, t.peak);
        }
        assert_eq!(found.len(), 2, "{found:?}");
        for (tone, (a, f)) in found.iter().zip([(1.0, 60.3), (0.8, 64.4)]) {
            assert!((tone.peak as f64 / a - 1.0).abs() < 1e-3, "{tone:?}");
            assert!((tone.frequency_hz as f64 - f).abs() < 0.01, "{tone:?}");
        }
        // Closer than a main-lobe width, the weaker one is taken for part of the stronger.
        let s = spectrum_of(&HANN, &tones(4 * N, &[(1.0, 100.2), (0.5, 103.0)]));
        let found = strongest_tones::<4, BINS>(&s, &search.with_range_db(40.0)).unwrap();
        assert!(found
            .iter()
            .all(|t| (t.frequency_hz - 100.2).abs() > 5.0 || t.peak_line == found[0].peak_line));
        assert!((found[0].frequency_hz - 100.2).abs() < 1.0);
    }

    /// xorshift32 (Marsaglia 2003) into an approximately Gaussian sum of four uniforms: the
    /// noise of the next test, seeded.
    fn noise(len: usize, rms: f64) -> Vec<f64> {
        let mut state = 0x2545_F491u32;
        let mut uniform = || {
            state ^= state << 13;
            state ^= state >> 17;
            state ^= state << 5;
            state as f64 / 4_294_967_296.0 - 0.5
        };
        // Four uniforms of variance 1/12 each: variance 1/3.
        (0..len)
            .map(|_| (uniform() + uniform() + uniform() + uniform()) * rms * 3f64.sqrt())
            .collect()
    }

    // reference: analytic truth for the tone; white noise of variance sigma^2 adds, on
    // average, `2 sigma^2 / N` of mean square per line (one-sided, energy-corrected:
    // scipy 1.17.1 `signal.welch`, tests/reference/spectra_examples.csv example C), so the 6
    // lines summed for a Hann tone read `A^2/2 + 12 sigma^2 / N` on average: with sigma = 0.1,
    // A = 1 and N = 1024, +1.2e-4 in amplitude. The larger effect is random: the tone x noise
    // cross term, whose standard deviation is about `2 sqrt(P_line / P_tone)` of the tone's
    // power per block (P_line = 2e-5, P_tone = 0.5: 1.3e-2), over 16 blocks 3.2e-3 in power,
    // 1.6e-3 in amplitude. Tolerance 5e-3 in amplitude (3 standard deviations) and 0.01 bins in
    // frequency. The noise's own local maxima sit about 44 dB under the tone (10 log10(0.5 /
    // 2e-5)), so with a range of 30 dB they are not reported, and with no range they are, but
    // never within a main-lobe width of the tone.
    #[test]
    fn tone_next_to_noise() {
        let len = 16 * N;
        let tone = tones(len, &[(1.0, 200.3)]);
        let n = noise(len, 0.1);
        let x: Vec<f32> = tone
            .iter()
            .zip(&n)
            .map(|(&t, &e)| (t as f64 + e) as f32)
            .collect();
        let s = spectrum_of(&HANN, &x);
        let search = ToneSearch::for_shape(Shape::Hann)
            .unwrap()
            .with_range_db(30.0);
        let found = strongest_tones::<8, BINS>(&s, &search).unwrap();
        println!("{found:?}");
        assert_eq!(found.len(), 1);
        let expected = (0.5f64 + 12.0 * 0.01 / N as f64).sqrt() * 2f64.sqrt();
        assert!(
            (found[0].peak as f64 - expected).abs() < 5e-3,
            "{:?}",
            found[0]
        );
        assert!((found[0].frequency_hz as f64 - 200.3).abs() < 0.01);
        let everything =
            strongest_tones::<8, BINS>(&s, &search.with_range_db(f32::INFINITY)).unwrap();
        assert_eq!(everything.len(), 8);
        assert_eq!(everything[0], found[0]);
        for t in &everything[1..] {
            // Not closer than one main-lobe width (4 lines) to the tone.
            assert!((t.peak_line as f32 - found[0].peak_line as f32).abs() >= 4.0);
            assert!(t.rms < 0.02 * found[0].rms, "{t:?}");
        }
        // An absolute floor between the tone and the noise keeps only the tone.
        let floored = search.with_range_db(f32::INFINITY).with_floor_rms(0.1);
        assert_eq!(strongest_tones::<8, BINS>(&s, &floored).unwrap().len(), 1);
    }

    #[test]
    fn search_range_and_order() {
        let s = spectrum_of(&HANN, &tones(N, &[(0.3, 50.0), (1.0, 300.0), (0.6, 150.4)]));
        let search = ToneSearch::for_shape(Shape::Hann).unwrap();
        let all = strongest_tones::<4, BINS>(&s, &search).unwrap();
        let order: Vec<i32> = all.iter().map(|t| t.frequency_hz.round() as i32).collect();
        assert_eq!(order, [300, 150, 50]);
        let low = strongest_tones::<4, BINS>(&s, &search.with_range_hz(0.0, 200.0)).unwrap();
        assert_eq!(low.len(), 2);
        assert!((low[0].frequency_hz - 150.4).abs() < 0.01);
        let one = strongest_tones::<1, BINS>(&s, &search).unwrap();
        assert_eq!(one.len(), 1);
        assert_eq!(one[0], all[0]);
        // level_db is 20 log10 of the RMS: 1 peak is -3.01 dB.
        assert!((all[0].level_db + 3.0103).abs() < 1e-3);
    }

    #[test]
    fn nothing_to_find_and_bad_settings() {
        let zeros = spectrum_of(&HANN, &[0.0; N]);
        let search = ToneSearch::for_shape(Shape::Hann).unwrap();
        assert!(strongest_tones::<4, BINS>(&zeros, &search)
            .unwrap()
            .is_empty());
        let mut values = [f32::NAN; BINS];
        values[10] = 1.0;
        let nan = Spectrum::new(values, Scale::Rms, Correction::Amplitude, *zeros.info()).unwrap();
        assert!(strongest_tones::<4, BINS>(&nan, &search)
            .unwrap()
            .is_empty());
        let bad = [
            (ToneSearch::new(0.2), ConfigError::WindowParameter),
            (ToneSearch::new(f32::NAN), ConfigError::WindowParameter),
            (search.with_range_hz(10.0, 5.0), ConfigError::Frequency),
            (search.with_range_hz(f32::NAN, 5.0), ConfigError::Frequency),
            (search.with_floor_rms(-1.0), ConfigError::ToneFloor),
            (search.with_range_db(-3.0), ConfigError::ToneFloor),
            (search.with_range_db(f32::NAN), ConfigError::ToneFloor),
        ];
        for (s, error) in bad {
            assert_eq!(
                strongest_tones::<4, BINS>(&zeros, &s).err(),
                Some(error),
                "{s:?}"
            );
        }
        assert!(strongest_tones::<0, BINS>(&zeros, &search)
            .unwrap()
            .is_empty());
    }

    // reference: `first_minimum_bin` in tests/reference/window_factors.csv (numpy 2.4.6 /
    // scipy 1.17.1, computed by tests/reference/generate.py).
    #[test]
    fn first_nulls_match_the_computed_table() {
        let table = [
            (Shape::Rectangular, 1.00),
            (Shape::Hann, 2.00),
            (Shape::Hamming, 2.00),
            (Shape::Blackman, 3.00),
            (Shape::BlackmanHarris92, 4.00),
            (Shape::Nuttall, 4.00),
            (Shape::FlatTop, 5.00),
            (Shape::Hft70, 4.00),
            (Shape::Hft90d, 5.00),
            (Shape::Hft116d, 6.00),
            (Shape::Hft144d, 7.00),
            (Shape::Kaiser { beta: 2.0 * PI }, 2.25),
            (Shape::Kaiser { beta: 3.0 * PI }, 3.16),
            (Shape::Kaiser { beta: 6.0 }, 2.16),
            (Shape::Kaiser { beta: 9.0 }, 3.03),
        ];
        for (shape, null) in table {
            let got = main_lobe_half_width_bins(shape).unwrap() as f64;
            // The table gives two decimals; the continuous Kaiser formula is within 0.015.
            assert!((got - null).abs() < 0.015, "{shape:?}: {got} vs {null}");
        }
        // Tukey: an upper bound of the computed nulls, and exact at the ends.
        for (alpha, null) in [(0.1, 1.06), (0.25, 1.16), (0.5, 1.34)] {
            let got = main_lobe_half_width_bins(Shape::Tukey { alpha }).unwrap() as f64;
            assert!(got >= null && got < null + 0.2, "tukey {alpha}: {got}");
        }
        assert_eq!(
            main_lobe_half_width_bins(Shape::Tukey { alpha: 1.0 }),
            Some(2.0)
        );
        assert!(ToneSearch::for_shape(Shape::Force {
            width: 0.1,
            taper: 0.0
        })
        .is_none());
    }
}
