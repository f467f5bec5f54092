//! The compact summary a node sends over a slow radio, and its decoding on the host
//! (feature `report`: serde and postcard, no `alloc`).
//!
//! A [`Summary`] holds what a condition-monitoring node reports each interval: the settings
//! that produced it (a fingerprint, so the host can tell reports of different settings
//! apart), the analyzer's counters, the overall levels and time statistics, and short lists
//! of the strongest tones, the band levels and the strongest envelope lines.
//! [`Summary::encode`] writes it into the caller's buffer; [`Summary::decode`] reads it back,
//! with a typed [`ReportError`] for anything short, corrupt or of another format version.
//!
//! # Size
//!
//! Target: a LoRaWAN-class uplink of **222 bytes** (the largest application payload of the
//! EU868 plan at its fast data rates, from memory). [`MAX_ENCODED_LEN`] = 218 bytes is the
//! worst case, every list full and every varint at its longest (tested); a typical summary
//! (8 tones, 6 bands, 5 envelope lines) is 134 bytes (tested and printed). The 51-byte
//! payloads of the slowest data rates do not fit a full summary; send fewer lines there.
//!
//! Lines carry frequency in centi-hertz (`u32`, a varint: 2 bytes below 163.84 Hz, 3 below
//! 20.97 kHz) and level in centi-dB (`i16`, zigzag varint, 2 bytes within +-81.9 dB): 4 to 5
//! bytes a line against 8 for two `f32`, with a resolution of 0.005 Hz and 0.005 dB
//! (0.06 % of amplitude), finer than any spectrum line's own uncertainty. The few overall
//! values are plain `f32`, where 4 bytes buy the full range without a unit convention.
//!
//! # Wire format (version 1)
//!
//! postcard's encoding of the fields in this order: `u8` is one byte, `u16`/`u32` are
//! unsigned LEB128 varints (7 bits a byte, low first), `i16` is zigzagged
//! (`(v << 1) ^ (v >> 15)`) then a varint, `f32` is 4 bytes little-endian IEEE 754, and a
//! list is a varint count followed by its elements.
//!
//! | # | field | type | meaning |
//! |---|---|---|---|
//! | 1 | version | `u8` | [`FORMAT_VERSION`], checked first by [`Summary::decode`] |
//! | 2 | sequence | `u32` | the node's report counter |
//! | 3 | settings.block_len | `u16` | N |
//! | 4 | settings.sample_rate_hz | `f32` | fs of the spectra, Hz |
//! | 5 | settings.window | `u8` | [`window_id`] of the window shape |
//! | 6 | settings.averaging | `u8` | 0 linear, 1 exponential, 2 peak hold |
//! | 7 | settings.averages | `u16` | linear count, or exponential time constant in blocks (rounded); 0 for peak hold |
//! | 8 | counters.blocks | `u32` | blocks framed |
//! | 9 | counters.averaged | `u32` | blocks averaged |
//! | 10 | counters.rejected | `u32` | blocks rejected for non-finite samples |
//! | 11 | counters.overloaded | `u32` | blocks at or beyond full scale |
//! | 12 | acceleration_rms | `f32` | overall acceleration, RMS (the spectrum's unit) |
//! | 13 | velocity_rms | `f32` | velocity RMS, 10 to 1000 Hz (that unit times s) |
//! | 14 | peak | `f32` | `max |x|` |
//! | 15 | crest_factor | `f32` | peak / RMS |
//! | 16 | kurtosis | `f32` | 4th standardized moment (3 for Gaussian) |
//! | 17 | tones | list of <= [`MAX_TONES`] [`Line`] | each `u32` centi-Hz, `i16` centi-dB |
//! | 18 | bands | list of <= [`MAX_BANDS`] [`BandLevel`] | each `u16` low Hz, `u16` high Hz, `i16` centi-dB |
//! | 19 | envelope | list of <= [`MAX_ENVELOPE_LINES`] [`Line`] | as tones |
//!
//! Levels in dB are `20 log10(amplitude / 1 unit)` of the quantity's own unit (for example
//! dB re 1 m/s^2); [`LEVEL_NONE`] (`i16::MIN`) means no level (zero, negative or NaN).
//! Values that are not available are sent as NaN (`f32`). A decoder reads exactly the
//! encoded length: trailing bytes are an error, so is a list longer than its capacity.
//!
//! ```
//! use leakless::report::{Line, Settings, Summary};
//! use leakless::Shape;
//!
//! let settings = Settings::new(4096, 25_600.0, Shape::Hann, leakless::Averaging::PeakHold);
//! let mut summary = Summary::new(17, settings);
//! summary.acceleration_rms = 1.42;
//! summary.tones.push(Line::new(172.9, 1.84)).unwrap();
//! summary.envelope.push(Line::new(86.8, 0.29)).unwrap();
//!
//! let mut buf = [0u8; leakless::report::MAX_ENCODED_LEN];
//! let bytes = summary.encode(&mut buf).unwrap();
//! assert!(bytes.len() < 50);
//! let back = Summary::decode(bytes).unwrap();
//! assert_eq!((back.sequence, back.acceleration_rms), (17, 1.42));
//! assert!(back.kurtosis.is_nan()); // not measured (`Summary::new` starts every value at NaN)
//! assert!((back.tones[0].frequency_hz() - 172.9).abs() < 0.005);
//! assert!((back.tones[0].amplitude().unwrap() - 1.84).abs() < 1e-3);
//! ```

use core::fmt;

use serde::{Deserialize, Serialize};

use crate::analysis::bands::Band;
use crate::spectrum::average::Averaging;
use crate::window::Shape;

/// The wire format's version, the first byte of every summary.
pub const FORMAT_VERSION: u8 = 1;
/// Tones a summary can carry.
pub const MAX_TONES: usize = 8;
/// Band levels a summary can carry.
pub const MAX_BANDS: usize = 6;
/// Envelope lines a summary can carry.
pub const MAX_ENVELOPE_LINES: usize = 5;
/// The longest encoding of any summary, bytes (see the module docs for the sum).
pub const MAX_ENCODED_LEN: usize = 1 // version
    + 5 // sequence
    + (3 + 4 + 1 + 1 + 3) // settings
    + 4 * 5 // counters
    + 5 * 4 // overall values
    + (1 + MAX_TONES * LINE_MAX_LEN)
    + (1 + MAX_BANDS * (3 + 3 + 3))
    + (1 + MAX_ENVELOPE_LINES * LINE_MAX_LEN);
// The radio payload this format is sized for (see the module docs).
const _: () = assert!(
    MAX_ENCODED_LEN <= 222,
    "a summary must fit a 222-byte payload"
);

/// A line: a `u32` varint (<= 5 bytes) and an `i16` varint (<= 3 bytes).
const LINE_MAX_LEN: usize = 5 + 3;
/// The level of nothing (0, negative or NaN amplitude), in centi-dB.
pub const LEVEL_NONE: i16 = i16::MIN;

/// Why a summary could not be encoded or decoded.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ReportError {
    /// The output buffer is too small ([`MAX_ENCODED_LEN`] always suffices).
    BufferTooSmall,
    /// The input ended before the summary did.
    Truncated,
    /// The input is not a summary (a bad varint, a list longer than its capacity, ...).
    Malformed,
    /// The input is a summary of another format version.
    Version {
        /// The version byte found.
        found: u8,
    },
    /// The summary ended before the input did.
    TrailingBytes {
        /// How many bytes were left over.
        extra: usize,
    },
}

impl fmt::Display for ReportError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::BufferTooSmall => f.write_str("buffer too small for the summary"),
            Self::Truncated => f.write_str("summary truncated"),
            Self::Malformed => f.write_str("not a well-formed summary"),
            Self::Version { found } => write!(
                f,
                "summary format version {found}, this decoder reads {FORMAT_VERSION}"
            ),
            Self::TrailingBytes { extra } => write!(f, "{extra} bytes after the summary"),
        }
    }
}

impl core::error::Error for ReportError {}

impl From<postcard::Error> for ReportError {
    fn from(error: postcard::Error) -> Self {
        match error {
            postcard::Error::SerializeBufferFull => ReportError::BufferTooSmall,
            postcard::Error::DeserializeUnexpectedEnd => ReportError::Truncated,
            _ => ReportError::Malformed,
        }
    }
}

/// The wire code of a window shape (its parameters, such as a Kaiser beta, are not sent).
/// Codes are fixed by the wire format and never reused.
pub const fn window_id(shape: Shape) -> u8 {
    match shape {
        Shape::Rectangular => 0,
        Shape::Hann => 1,
        Shape::Hamming => 2,
        Shape::Blackman => 3,
        Shape::ExactBlackman => 4,
        Shape::BlackmanHarris92 => 5,
        Shape::Nuttall => 6,
        Shape::FlatTop => 7,
        Shape::Hft70 => 8,
        Shape::Hft90d => 9,
        Shape::Hft95 => 10,
        Shape::Hft116d => 11,
        Shape::Hft144d => 12,
        Shape::Kaiser { .. } => 13,
        Shape::Tukey { .. } => 14,
        Shape::Force { .. } => 15,
        Shape::Exponential { .. } => 16,
        Shape::CosineSum(_) => 17,
    }
}

/// The settings fingerprint: what the spectra in a summary were made with.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Settings {
    /// Block length N.
    pub block_len: u16,
    /// Sample rate of the spectra, Hz.
    pub sample_rate_hz: f32,
    /// [`window_id`] of the window.
    pub window: u8,
    /// 0 linear, 1 exponential, 2 peak hold.
    pub averaging: u8,
    /// Linear count, or exponential time constant in blocks (rounded, saturating); 0 for peak
    /// hold.
    pub averages: u16,
}

impl Settings {
    /// The fingerprint of `block_len`-sample blocks at `sample_rate_hz` through `window`,
    /// averaged by `averaging` (block lengths above 65 535 saturate).
    pub fn new(block_len: usize, sample_rate_hz: f32, window: Shape, averaging: Averaging) -> Self {
        let (mode, averages) = match averaging {
            Averaging::Linear { count, .. } => (0, saturate_u16(count as f32)),
            Averaging::Exponential {
                time_constant_blocks,
            } => (1, saturate_u16(libm::roundf(time_constant_blocks))),
            Averaging::PeakHold => (2, 0),
        };
        Self {
            block_len: saturate_u16(block_len as f32),
            sample_rate_hz,
            window: window_id(window),
            averaging: mode,
            averages,
        }
    }

    /// The fingerprint of an analyzer's settings.
    #[cfg(feature = "f32")]
    pub fn of_analyzer<const N: usize, const BINS: usize>(
        analyzer: &crate::spectrum::analyzer::Analyzer<'_, N, BINS>,
    ) -> Self {
        let config = analyzer.config();
        Self::new(
            N,
            config.sample_rate_hz,
            analyzer.window().shape(),
            config.averaging,
        )
    }
}

/// `x` rounded toward zero into `0 ..= u16::MAX` (NaN reads 0: `as` saturates).
fn saturate_u16(x: f32) -> u16 {
    x as u16
}

/// The analyzer's counters (see [`crate::Status`]).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Counters {
    /// Blocks framed.
    pub blocks: u32,
    /// Blocks that entered an average.
    pub averaged: u32,
    /// Blocks rejected for a non-finite or out-of-range sample.
    pub rejected: u32,
    /// Blocks at or beyond full scale.
    pub overloaded: u32,
}

#[cfg(feature = "f32")]
impl From<crate::spectrum::analyzer::Status> for Counters {
    fn from(status: crate::spectrum::analyzer::Status) -> Self {
        Self {
            blocks: status.blocks_seen,
            averaged: status.blocks_averaged,
            rejected: status.rejected_non_finite,
            overloaded: status.overloaded,
        }
    }
}

/// `20 log10(amplitude)` in centi-dB, clamped to `-32767 ..= 32767`; [`LEVEL_NONE`] for an
/// amplitude that is not positive (or NaN).
pub fn level_centi_db(amplitude: f32) -> i16 {
    if amplitude.is_nan() || amplitude <= 0.0 {
        return LEVEL_NONE;
    }
    let centi_db = 2000.0 * libm::log10(amplitude as f64);
    libm::round(centi_db).clamp(-32767.0, 32767.0) as i16
}

/// The amplitude of a level in centi-dB, `None` for [`LEVEL_NONE`].
pub fn amplitude_of_centi_db(level: i16) -> Option<f32> {
    (level != LEVEL_NONE).then(|| libm::pow(10.0, level as f64 / 2000.0) as f32)
}

/// A spectral line: frequency and amplitude, quantised for the radio.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Line {
    /// Frequency, centi-hertz.
    pub frequency_centi_hz: u32,
    /// Level, centi-dB re 1 unit ([`level_centi_db`]).
    pub level_centi_db: i16,
}

impl Line {
    /// A line at `frequency_hz` (rounded to 0.01 Hz; negative or NaN reads 0) with
    /// `amplitude` in the spectrum's unit.
    pub fn new(frequency_hz: f32, amplitude: f32) -> Self {
        Self {
            // `as` saturates, and maps NaN to 0.
            frequency_centi_hz: libm::round(frequency_hz as f64 * 100.0) as u32,
            level_centi_db: level_centi_db(amplitude),
        }
    }

    /// Frequency, Hz.
    pub fn frequency_hz(&self) -> f32 {
        (self.frequency_centi_hz as f64 / 100.0) as f32
    }

    /// Amplitude in the spectrum's unit, `None` if there was none.
    pub fn amplitude(&self) -> Option<f32> {
        amplitude_of_centi_db(self.level_centi_db)
    }
}

/// The level of a band, with its edges in whole hertz.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BandLevel {
    /// Lower edge, Hz (rounded).
    pub low_hz: u16,
    /// Upper edge, Hz (rounded).
    pub high_hz: u16,
    /// RMS level, centi-dB re 1 unit ([`level_centi_db`]).
    pub level_centi_db: i16,
}

impl BandLevel {
    /// The level `rms` of `band` (e.g. from [`crate::analysis::bands::band_rms`]); edges
    /// round to whole hertz, saturating at 65 535.
    pub fn new(band: Band, rms: f32) -> Self {
        Self {
            low_hz: saturate_u16(libm::roundf(band.low_hz())),
            high_hz: saturate_u16(libm::roundf(band.high_hz())),
            level_centi_db: level_centi_db(rms),
        }
    }

    /// RMS level, `None` if there was none.
    pub fn rms(&self) -> Option<f32> {
        amplitude_of_centi_db(self.level_centi_db)
    }
}

/// One report. The format version is not a field: [`Summary::encode`] writes
/// [`FORMAT_VERSION`] and [`Summary::decode`] checks it. (Unlike its parts, `Summary` does
/// not derive `defmt::Format`, which would need heapless's own defmt feature; log the parts.)
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Summary {
    /// The node's report counter.
    pub sequence: u32,
    /// What the spectra were made with.
    pub settings: Settings,
    /// The analyzer's counters.
    pub counters: Counters,
    /// Overall acceleration, RMS (NaN if not measured).
    pub acceleration_rms: f32,
    /// Velocity RMS over 10 to 1000 Hz (NaN if not measured).
    pub velocity_rms: f32,
    /// Peak, `max |x|` (NaN if not measured).
    pub peak: f32,
    /// Crest factor, peak / RMS (NaN if not measured).
    pub crest_factor: f32,
    /// Kurtosis (NaN if not measured).
    pub kurtosis: f32,
    /// The strongest tones, strongest first.
    pub tones: heapless::Vec<Line, MAX_TONES>,
    /// Band levels.
    pub bands: heapless::Vec<BandLevel, MAX_BANDS>,
    /// The strongest envelope lines, strongest first.
    pub envelope: heapless::Vec<Line, MAX_ENVELOPE_LINES>,
}

impl Summary {
    /// Report `sequence` of `settings`, with every value NaN, zero counters and empty lists.
    pub fn new(sequence: u32, settings: Settings) -> Self {
        Self {
            sequence,
            settings,
            counters: Counters::default(),
            acceleration_rms: f32::NAN,
            velocity_rms: f32::NAN,
            peak: f32::NAN,
            crest_factor: f32::NAN,
            kurtosis: f32::NAN,
            tones: heapless::Vec::new(),
            bands: heapless::Vec::new(),
            envelope: heapless::Vec::new(),
        }
    }

    /// Writes the summary into `buf` and returns the encoded bytes (at most
    /// [`MAX_ENCODED_LEN`]).
    pub fn encode<'b>(&self, buf: &'b mut [u8]) -> Result<&'b [u8], ReportError> {
        let (version, body) = buf.split_first_mut().ok_or(ReportError::BufferTooSmall)?;
        *version = FORMAT_VERSION;
        let len = postcard::to_slice(self, body)?.len();
        Ok(&buf[..1 + len])
    }

    /// Reads a summary from exactly `bytes`. Never panics: anything that is not a version-1
    /// summary is a [`ReportError`].
    pub fn decode(bytes: &[u8]) -> Result<Summary, ReportError> {
        let (&version, body) = bytes.split_first().ok_or(ReportError::Truncated)?;
        if version != FORMAT_VERSION {
            return Err(ReportError::Version { found: version });
        }
        let (summary, rest) = postcard::take_from_bytes::<Summary>(body)?;
        if !rest.is_empty() {
            return Err(ReportError::TrailingBytes { extra: rest.len() });
        }
        Ok(summary)
    }
}

/// The `K` largest local maxima of `values` (lines `first_line ..` of a spectrum with lines
/// `line_width_hz` apart), strongest first, as [`Line`]s at their line's centre frequency
/// (no interpolation). A local maximum is a line above its lower neighbour and not below its
/// upper one; NaN lines are skipped.
///
/// ```
/// use leakless::report::{strongest_lines, Line};
///
/// let values = [0.0, 5.0, 1.0, 0.5, 3.0, 0.2, 4.0, 0.1];
/// let lines: heapless::Vec<Line, 2> = strongest_lines(&values, 10.0, 1);
/// assert_eq!(lines[0].frequency_hz(), 10.0);
/// assert_eq!(lines[1].frequency_hz(), 60.0);
/// ```
pub fn strongest_lines<const K: usize>(
    values: &[f32],
    line_width_hz: f32,
    first_line: usize,
) -> heapless::Vec<Line, K> {
    // (line, value), kept sorted strongest first.
    let mut best: heapless::Vec<(usize, f32), K> = heapless::Vec::new();
    for k in first_line.max(1)..values.len() {
        let v = values[k];
        let upper = values.get(k + 1).copied().unwrap_or(f32::NEG_INFINITY);
        if !(v > values[k - 1] && v >= upper) {
            continue;
        }
        let at = best.iter().position(|&(_, b)| v > b).unwrap_or(best.len());
        if at < K {
            if best.is_full() {
                best.pop();
            }
            // There is room now and `at <= len`, so this cannot fail.
            let _ = best.insert(at, (k, v));
        }
    }
    best.iter()
        .map(|&(k, v)| Line::new(k as f32 * line_width_hz, v))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn full_summary() -> Summary {
        let settings = Settings::new(
            4096,
            25_600.0,
            Shape::Hann,
            Averaging::Linear {
                count: 16,
                when_done: crate::WhenDone::Restart,
            },
        );
        let mut s = Summary::new(1234, settings);
        s.counters = Counters {
            blocks: 160,
            averaged: 158,
            rejected: 2,
            overloaded: 0,
        };
        s.acceleration_rms = 1.42;
        s.velocity_rms = 2.99e-3;
        s.peak = 6.1;
        s.crest_factor = 4.3;
        s.kurtosis = 3.8;
        for (f, a) in [
            (172.9, 1.84),
            (24.7, 0.55),
            (49.4, 0.44),
            (74.1, 0.26),
            (100.0, 0.27),
            (3000.0, 0.12),
            (2950.0, 0.08),
            (3050.0, 0.07),
        ] {
            s.tones.push(Line::new(f, a)).unwrap();
        }
        for (low, high, rms) in [
            (10.0, 1000.0, 1.3),
            (1000.0, 2000.0, 0.1),
            (2000.0, 4000.0, 0.35),
            (4000.0, 8000.0, 0.06),
            (8000.0, 10_000.0, 0.03),
            (2.0, 10.0, 0.002),
        ] {
            s.bands
                .push(BandLevel::new(Band::new(low, high).unwrap(), rms))
                .unwrap();
        }
        for k in 1..=5 {
            s.envelope
                .push(Line::new(86.81 * k as f32, 0.3 / k as f32))
                .unwrap();
        }
        s
    }

    #[test]
    fn round_trip_and_typical_size() {
        let s = full_summary();
        let mut buf = [0u8; MAX_ENCODED_LEN];
        let bytes = s.encode(&mut buf).unwrap();
        println!(
            "typical summary (8 tones, 6 bands, 5 envelope lines): {} bytes",
            bytes.len()
        );
        assert!(bytes.len() <= 222);
        assert_eq!(bytes[0], FORMAT_VERSION);
        assert_eq!(Summary::decode(bytes).unwrap(), s);
        // An empty summary is small; NaN survives (compared by bits).
        let empty = Summary::new(0, s.settings);
        let mut small = [0u8; 64];
        let bytes = empty.encode(&mut small).unwrap();
        println!("empty summary: {} bytes", bytes.len());
        let back = Summary::decode(bytes).unwrap();
        assert!(back.kurtosis.is_nan() && back.tones.is_empty());
    }

    // The quantisation is what the module docs say: 0.005 Hz and 0.005 dB at worst
    // (analytic: half a step), 0.0576 % of amplitude (10^(0.005/20) - 1).
    #[test]
    fn quantisation_is_within_half_a_step() {
        for (f, a) in [
            (0.013f32, 1e-4f32),
            (86.817, 0.2897),
            (12_799.99, 31.7),
            (1.0, 1.0),
        ] {
            let line = Line::new(f, a);
            assert!((line.frequency_hz() - f).abs() <= 0.005 + 1e-6 * f);
            let ratio = line.amplitude().unwrap() / a;
            assert!((ratio - 1.0).abs() < 5.8e-4, "{ratio}");
        }
        for bad in [0.0, -1.0, f32::NAN] {
            assert_eq!(level_centi_db(bad), LEVEL_NONE);
            assert_eq!(Line::new(10.0, bad).amplitude(), None);
        }
        assert_eq!(level_centi_db(1e30), 32767);
        assert_eq!(level_centi_db(1e-30), -32767);
        assert_eq!(Line::new(f32::NAN, 1.0).frequency_centi_hz, 0);
        assert_eq!(Line::new(-5.0, 1.0).frequency_centi_hz, 0);
    }

    #[test]
    fn worst_case_fits_the_stated_bound() {
        let mut s = full_summary();
        s.sequence = u32::MAX;
        s.settings.block_len = u16::MAX;
        s.settings.averages = u16::MAX;
        s.counters = Counters {
            blocks: u32::MAX,
            averaged: u32::MAX,
            rejected: u32::MAX,
            overloaded: u32::MAX,
        };
        let longest = Line {
            frequency_centi_hz: u32::MAX,
            level_centi_db: i16::MIN,
        };
        for t in s.tones.iter_mut().chain(s.envelope.iter_mut()) {
            *t = longest;
        }
        while s.envelope.push(longest).is_ok() {}
        for b in s.bands.iter_mut() {
            *b = BandLevel {
                low_hz: u16::MAX,
                high_hz: u16::MAX,
                level_centi_db: i16::MIN,
            };
        }
        let mut buf = [0u8; MAX_ENCODED_LEN];
        let bytes = s.encode(&mut buf).unwrap();
        assert_eq!(bytes.len(), MAX_ENCODED_LEN);
        // One byte short is a typed error, never a panic.
        let mut short = [0u8; MAX_ENCODED_LEN - 1];
        assert_eq!(s.encode(&mut short), Err(ReportError::BufferTooSmall));
        assert_eq!(s.encode(&mut []), Err(ReportError::BufferTooSmall));
    }

    #[test]
    fn wrong_version_truncation_and_trailing_bytes_are_typed_errors() {
        let s = full_summary();
        let mut buf = [0u8; MAX_ENCODED_LEN + 1];
        let len = s.encode(&mut buf).unwrap().len();
        let mut other = buf;
        other[0] = 2;
        assert_eq!(
            Summary::decode(&other[..len]),
            Err(ReportError::Version { found: 2 })
        );
        assert_eq!(Summary::decode(&[]), Err(ReportError::Truncated));
        for cut in 1..len {
            assert_eq!(
                Summary::decode(&buf[..cut]),
                Err(ReportError::Truncated),
                "cut at {cut}"
            );
        }
        assert_eq!(
            Summary::decode(&buf[..len + 1]),
            Err(ReportError::TrailingBytes { extra: 1 })
        );
    }

    #[test]
    fn a_list_longer_than_its_capacity_is_malformed() {
        let mut s = full_summary();
        s.tones.clear();
        s.bands.clear();
        s.envelope.clear();
        let mut buf = [0u8; MAX_ENCODED_LEN];
        let bytes = s.encode(&mut buf).unwrap();
        // The last three bytes are the three empty lists' counts; claim 9 tones.
        let mut forged = [0u8; MAX_ENCODED_LEN];
        let len = bytes.len();
        forged[..len].copy_from_slice(bytes);
        forged[len - 3] = 9;
        let mut at = len - 2;
        for _ in 0..9 {
            forged[at] = 1; // 0.01 Hz
            forged[at + 1] = 0; // 0 dB
            at += 2;
        }
        forged[at] = 0;
        forged[at + 1] = 0;
        assert_eq!(
            Summary::decode(&forged[..at + 2]),
            Err(ReportError::Malformed)
        );
    }

    #[test]
    fn strongest_lines_are_local_maxima_strongest_first() {
        let mut values = [0.0f32; 64];
        for (k, v) in [(5, 1.0), (20, 3.0), (21, 2.0), (40, 2.5), (63, 9.0)] {
            values[k] = v;
        }
        values[30] = f32::NAN;
        let lines: heapless::Vec<Line, 3> = strongest_lines(&values, 2.0, 1);
        let got: Vec<(f32, f32)> = lines
            .iter()
            .map(|l| (l.frequency_hz(), l.amplitude().unwrap()))
            .collect();
        // 63 is the last line, above its lower neighbour: a maximum. 21 is on 20's flank.
        assert_eq!(got.len(), 3);
        assert_eq!(got[0].0, 126.0);
        assert_eq!(got[1].0, 40.0);
        assert_eq!(got[2].0, 80.0);
        let none: heapless::Vec<Line, 3> = strongest_lines(&[1.0; 10], 1.0, 0);
        assert!(none.is_empty());
        let few: heapless::Vec<Line, 8> = strongest_lines(&values, 2.0, 0);
        assert_eq!(few.len(), 4);
    }

    fn any_line() -> impl Strategy<Value = Line> {
        (any::<u32>(), any::<i16>()).prop_map(|(f, l)| Line {
            frequency_centi_hz: f,
            level_centi_db: l,
        })
    }

    proptest! {
        #![proptest_config(ProptestConfig {
            cases: 256,
            rng_seed: proptest::test_runner::RngSeed::Fixed(0x1ea4_1e55),
            failure_persistence: None,
            ..ProptestConfig::default()
        })]

        // Random bytes: decode returns (almost always an error), never panics.
        #[test]
        fn random_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..300)) {
            let _ = Summary::decode(&bytes);
            let mut versioned = bytes.clone();
            if let Some(first) = versioned.first_mut() {
                *first = FORMAT_VERSION;
            }
            let _ = Summary::decode(&versioned);
        }

        // A valid summary with bytes flipped decodes to an error or to some summary, never
        // a panic; and random summaries round-trip.
        #[test]
        fn corrupt_summaries_never_panic_and_valid_ones_round_trip(
            sequence in any::<u32>(),
            levels in proptest::array::uniform5(any::<f32>()),
            tones in proptest::collection::vec(any_line(), 0..=MAX_TONES),
            envelope in proptest::collection::vec(any_line(), 0..=MAX_ENVELOPE_LINES),
            flip_at in any::<usize>(),
            flip in 1u8..=255,
        ) {
            let mut s = full_summary();
            s.sequence = sequence;
            s.acceleration_rms = levels[0];
            s.velocity_rms = levels[1];
            s.peak = levels[2];
            s.crest_factor = levels[3];
            s.kurtosis = levels[4];
            s.tones = tones.iter().copied().collect();
            s.envelope = envelope.iter().copied().collect();
            let mut buf = [0u8; MAX_ENCODED_LEN];
            let len = s.encode(&mut buf).unwrap().len();
            prop_assert!(len <= MAX_ENCODED_LEN);
            let back = Summary::decode(&buf[..len]).unwrap();
            let mut b1 = [0u8; MAX_ENCODED_LEN];
            let again = back.encode(&mut b1).unwrap();
            prop_assert_eq!(again, &buf[..len]); // bit-exact, NaN payloads included
            buf[flip_at % len] ^= flip;
            let _ = Summary::decode(&buf[..len]);
        }
    }
}
