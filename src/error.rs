//! Typed errors for configurations the type system cannot reject at compile time.

use core::fmt;

/// A configuration value that cannot work, named by the parameter at fault.
///
/// Returned at construction time; once an analyzer exists, no input sample can make it fail.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ConfigError {
    /// The sample rate must be finite and greater than zero (Hz).
    SampleRate,
    /// The overlap must be fewer samples than the block length.
    Overlap {
        /// The overlap asked for, in samples.
        overlap: usize,
        /// The block length N.
        block_len: usize,
    },
    /// The overlap fraction must be finite and in `0.0..1.0`.
    OverlapFraction,
    /// A linear average needs a count of at least 1; an exponential one a time constant >= 1.
    AverageCount,
    /// The sensitivity (engineering units per input unit) must be finite and non-zero, with a
    /// magnitude in `1e-9 ..= 1e9` (`spectrum::condition::SENSITIVITY_RANGE`).
    Sensitivity,
    /// The full-scale (overload) limit must be finite and greater than zero.
    FullScale,
    /// A window parameter is out of its range (Kaiser beta < 0, Tukey alpha outside 0..=1,
    /// force width outside (0, 1], exponential end fraction outside (0, 1], empty cosine sum).
    WindowParameter,
    /// A frequency (band edge, integration cut-off, tone search range) is not usable.
    Frequency,
    /// A tone search's floor must be finite and `>= 0` (RMS), and its range in dB `>= 0`.
    ToneFloor,
    /// A rolling-element bearing needs at least one ball (or roller).
    BallCount,
    /// The ball diameter must be finite, greater than zero and less than the pitch diameter.
    BallDiameter,
    /// The pitch diameter must be finite and greater than zero.
    PitchDiameter,
    /// The contact angle must be finite and in `0.0..90.0` degrees.
    ContactAngle,
    /// A shaft speed must be finite and not negative (Hz).
    ShaftSpeed,
    /// A spectrum of `bins` lines cannot hold the `block_len / 2 + 1` lines of an even block.
    BinCount {
        /// The lines the spectrum has.
        bins: usize,
        /// The block length N.
        block_len: usize,
    },
    /// A decimation factor must be in `1 ..= 256` (see `analysis::envelope::MAX_DECIMATION`).
    Decimation,
    /// A channel pair must name two different channels of the analyzer.
    ChannelPair,
    /// Cross spectra average complex values: linear or exponential, not peak hold.
    CrossAveraging,
    /// An impact trigger setting is out of range (level finite and > 0, pre-trigger shorter
    /// than the block, double-hit fraction in `(0, 1]`, channel index below the count).
    Trigger,
}

impl fmt::Display for ConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::SampleRate => f.write_str("sample rate must be finite and > 0 Hz"),
            Self::Overlap { overlap, block_len } => write!(
                f,
                "overlap of {overlap} samples must be less than the block length {block_len}"
            ),
            Self::OverlapFraction => f.write_str("overlap fraction must be in 0.0..1.0"),
            Self::AverageCount => f.write_str("average count / time constant must be >= 1"),
            Self::Sensitivity => {
                f.write_str("sensitivity must be finite, with magnitude in 1e-9..=1e9")
            }
            Self::FullScale => f.write_str("full scale must be finite and > 0"),
            Self::WindowParameter => f.write_str("window parameter out of range"),
            Self::Frequency => f.write_str("frequency out of range"),
            Self::ToneFloor => f.write_str("tone floor and range must be >= 0"),
            Self::BallCount => f.write_str("a bearing needs at least one ball"),
            Self::BallDiameter => {
                f.write_str("ball diameter must be finite, > 0 and less than the pitch diameter")
            }
            Self::PitchDiameter => f.write_str("pitch diameter must be finite and > 0"),
            Self::ContactAngle => f.write_str("contact angle must be in 0.0..90.0 degrees"),
            Self::ShaftSpeed => f.write_str("shaft speed must be finite and >= 0 Hz"),
            Self::BinCount { bins, block_len } => write!(
                f,
                "{bins} spectrum lines do not fit a block of {block_len} (need N/2 + 1)"
            ),
            Self::Decimation => f.write_str("decimation factor must be in 1..=256"),
            Self::ChannelPair => f.write_str("a channel pair must name two different channels"),
            Self::CrossAveraging => {
                f.write_str("cross spectra need linear or exponential averaging, not peak hold")
            }
            Self::Trigger => f.write_str("impact trigger setting out of range"),
        }
    }
}

impl core::error::Error for ConfigError {}
