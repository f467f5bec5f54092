//! The analysis options shared by the subcommands that compute spectra, their parsers, and
//! the names they print (every name printed parses back as the same option).

use leakless::{Averaging, Correction, Detrend, Scale, Shape, WhenDone};

use crate::failure::{Failure, Outcome};

/// Block lengths with a transform in both arithmetics.
pub const BLOCK_LENGTHS: [usize; 7] = [64, 128, 256, 512, 1024, 2048, 4096];

/// The settings of the averaged spectrum (the options of `leakless spectrum`).
#[derive(clap::Args, Clone, Debug)]
pub struct AnalysisArgs {
    /// Block length: 64, 128, 256, 512, 1024, 2048 or 4096
    #[arg(long = "n", value_name = "N", default_value_t = 1024, value_parser = block_len)]
    pub block_len: usize,
    /// Window: hann, flattop, rectangular, hft90d, blackman-harris-92, nuttall, hamming,
    /// blackman, exact-blackman, hft70, hft95, hft116d, hft144d, kaiser[:BETA],
    /// tukey[:ALPHA], force[:WIDTH:TAPER], exponential[:END], cosine-sum:A0:A1[:A2...]
    #[arg(long, value_name = "SHAPE", default_value = "hann")]
    pub window: String,
    /// Overlap of consecutive blocks, 0 <= FRACTION < 1
    #[arg(long, value_name = "FRACTION", default_value_t = 0.5, value_parser = overlap)]
    pub overlap: f32,
    /// linear:COUNT (the first COUNT blocks), exponential:BLOCKS (time constant in blocks) or
    /// peak (peak hold); default: linear over every block of the recording
    #[arg(long, value_name = "MODE", value_parser = averaging)]
    pub average: Option<Averaging>,
    /// Scale of the values
    #[arg(long, value_name = "SCALE", value_enum, default_value_t = ScaleArg::Rms)]
    pub scale: ScaleArg,
    /// amplitude (default for peak, rms, power) or energy (default, and the only choice, for
    /// psd and asd)
    #[arg(long, value_name = "KIND", value_enum)]
    pub correction: Option<CorrectionArg>,
    /// What is removed from each block before windowing
    #[arg(long, value_name = "MODE", value_enum, default_value_t = DetrendArg::Mean)]
    pub detrend: DetrendArg,
    /// The arithmetic, run as firmware would: 16-bit PCM goes in as i16 counts; float or CSV
    /// input is read as a fraction of full scale and quantised first (16 bits for q15, 24
    /// for q31); 24 and 32-bit PCM go to q31 as they are and are rounded to 16 bits for q15
    #[arg(long, value_name = "KIND", value_enum, default_value_t = Arith::F32)]
    pub arith: Arith,
    /// Multiplies every sample, after PCM codes are mapped to [-1, 1)
    #[arg(long, value_name = "FACTOR", default_value_t = 1.0, allow_hyphen_values = true, value_parser = gain)]
    pub gain: f32,
    /// Unit of the samples after --gain (default: FS, full scale, for PCM WAV; "units"
    /// otherwise)
    #[arg(long, value_name = "NAME")]
    pub unit: Option<String>,
}

/// `--scale`.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum ScaleArg {
    /// Peak amplitude
    Peak,
    /// RMS amplitude
    Rms,
    /// Power (mean square) per line
    Power,
    /// Power spectral density
    Psd,
    /// Amplitude spectral density
    Asd,
}

impl ScaleArg {
    /// The library's scale.
    pub fn scale(self) -> Scale {
        match self {
            ScaleArg::Peak => Scale::Peak,
            ScaleArg::Rms => Scale::Rms,
            ScaleArg::Power => Scale::Power,
            ScaleArg::Psd => Scale::Psd,
            ScaleArg::Asd => Scale::Asd,
        }
    }
}

/// `--correction`.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum CorrectionArg {
    /// Reads a tone's amplitude right
    Amplitude,
    /// Reads noise, band and overall levels right
    Energy,
}

/// `--detrend`.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum DetrendArg {
    /// Remove each block's mean
    Mean,
    /// Keep the block as it is
    None,
}

/// `--arith`: the arithmetic of the analysis.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum Arith {
    /// The float analyzer
    F32,
    /// AnalyzerQ15 on 16-bit counts
    Q15,
    /// AnalyzerQ31 on 16-bit counts or 24/32-bit codes
    Q31,
}

impl Arith {
    /// The name on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Arith::F32 => "f32",
            Arith::Q15 => "q15",
            Arith::Q31 => "q31",
        }
    }
}

/// The options checked and resolved: what the analysis runs with.
#[derive(Clone, Debug)]
pub struct Analysis {
    /// `--n`.
    pub block_len: usize,
    /// `--window`, parsed.
    pub shape: Shape,
    /// `--window` as a name that parses back to `shape`.
    pub window_name: String,
    /// `--overlap`.
    pub overlap_fraction: f32,
    /// `--average`; `None`: linear over every block.
    pub averaging: Option<Averaging>,
    /// `--scale`.
    pub scale: Scale,
    /// `--correction`, resolved to the scale's default when not given.
    pub correction: Correction,
    /// `--detrend`.
    pub detrend: Detrend,
    /// `--arith`.
    pub arith: Arith,
    /// `--gain`.
    pub gain: f32,
    /// `--unit`.
    pub unit: Option<String>,
}

impl AnalysisArgs {
    /// Checks the combination and parses the window.
    pub fn resolve(&self) -> Outcome<Analysis> {
        let shape = parse_window(&self.window)?;
        let scale = self.scale.scale();
        let correction = match (self.correction, scale.is_density()) {
            (Some(CorrectionArg::Amplitude), true) => {
                return Err(Failure::usage(
                    "--correction amplitude cannot go with --scale psd or asd: a density \
                     spreads power over frequency, which only the energy (noise-power) \
                     correction keeps right; use --scale rms or peak to read tone levels",
                ))
            }
            (Some(CorrectionArg::Amplitude), false) => Correction::Amplitude,
            (Some(CorrectionArg::Energy), _) | (None, true) => Correction::Energy,
            (None, false) => Correction::Amplitude,
        };
        Ok(Analysis {
            block_len: self.block_len,
            window_name: window_name(&shape),
            shape,
            overlap_fraction: self.overlap,
            averaging: self.average,
            scale,
            correction,
            detrend: match self.detrend {
                DetrendArg::Mean => Detrend::Mean,
                DetrendArg::None => Detrend::None,
            },
            arith: self.arith,
            gain: self.gain,
            unit: self.unit.clone(),
        })
    }
}

/// `--window TEXT`: the library's names, plus `cosine-sum:A0:A1...` for a user cosine sum.
pub fn parse_window(text: &str) -> Outcome<Shape> {
    if let Some(rest) = text.strip_prefix("cosine-sum:") {
        let coefficients: Result<Vec<f64>, _> = rest.split(':').map(|c| c.trim().parse()).collect();
        let shape = match coefficients {
            // The window table keeps a `&'static` slice: one small leak per run.
            Ok(c) if !c.is_empty() => Shape::CosineSum(Box::leak(c.into_boxed_slice())),
            _ => {
                return Err(Failure::usage(format!(
                    "--window {text}: cosine-sum needs its coefficients as numbers, e.g. \
                     cosine-sum:0.5:0.5"
                )))
            }
        };
        return shape
            .validate()
            .map(|()| shape)
            .map_err(|e| Failure::usage(format!("--window {text}: {e}")));
    }
    Shape::from_name(text).ok_or_else(|| {
        let family = text.split(':').next().unwrap_or("");
        if text.contains(':') && Shape::from_name(family).is_some() {
            Failure::usage(format!(
                "--window {text}: the {family} window parameter is out of range or not a number \
                 (see --help)"
            ))
        } else {
            Failure::usage(format!(
                "--window {text}: unknown window (see --help for the names)"
            ))
        }
    })
}

/// The name of `shape` as `--window` takes it, with every parameter, so that it parses back
/// to the same shape (f64 `Display` is the shortest text that reads back to the same value).
pub fn window_name(shape: &Shape) -> String {
    match *shape {
        Shape::Kaiser { beta } => format!("kaiser:{beta}"),
        Shape::Tukey { alpha } => format!("tukey:{alpha}"),
        Shape::Force { width, taper } => format!("force:{width}:{taper}"),
        Shape::Exponential { end_fraction } => format!("exponential:{end_fraction}"),
        Shape::CosineSum(c) => {
            let parts: Vec<String> = c.iter().map(|a| a.to_string()).collect();
            format!("cosine-sum:{}", parts.join(":"))
        }
        other => other.name().to_string(),
    }
}

/// The name of a scale on the command line.
pub fn scale_name(scale: Scale) -> &'static str {
    match scale {
        Scale::Peak => "peak",
        Scale::Rms => "rms",
        Scale::Power => "power",
        Scale::Psd => "psd",
        Scale::Asd => "asd",
    }
}

/// The name of a correction on the command line.
pub fn correction_name(correction: Correction) -> &'static str {
    match correction {
        Correction::Amplitude => "amplitude",
        Correction::Energy => "energy",
    }
}

/// The name of a detrend mode on the command line.
pub fn detrend_name(detrend: Detrend) -> &'static str {
    match detrend {
        Detrend::Mean => "mean",
        Detrend::None => "none",
    }
}

/// An averaging mode as `--average` takes it (`None`: every block, linearly).
pub fn averaging_name(averaging: &Averaging) -> String {
    match *averaging {
        Averaging::Linear { count, .. } => format!("linear:{count}"),
        Averaging::Exponential {
            time_constant_blocks,
        } => format!("exponential:{time_constant_blocks}"),
        Averaging::PeakHold => "peak".to_string(),
    }
}

fn number<T: std::str::FromStr>(text: &str) -> Result<T, String> {
    text.trim().parse().map_err(|_| "not a number".to_string())
}

/// A finite number above zero (`--fs` and other rates).
pub fn positive_f64(text: &str) -> Result<f64, String> {
    let value: f64 = number(text)?;
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err("must be > 0".to_string())
    }
}

fn block_len(text: &str) -> Result<usize, String> {
    let n: usize = number(text)?;
    if BLOCK_LENGTHS.contains(&n) {
        Ok(n)
    } else {
        Err("not supported; use 64, 128, 256, 512, 1024, 2048 or 4096".to_string())
    }
}

fn overlap(text: &str) -> Result<f32, String> {
    let fraction: f32 = number(text)?;
    if (0.0..1.0).contains(&fraction) {
        Ok(fraction)
    } else {
        Err("a fraction of the block, 0 <= FRACTION < 1 (e.g. 0.5)".to_string())
    }
}

fn gain(text: &str) -> Result<f32, String> {
    let gain: f32 = number(text)?;
    if gain.is_finite() && gain != 0.0 {
        Ok(gain)
    } else {
        Err("must be finite and non-zero".to_string())
    }
}

/// `--average MODE`.
pub fn averaging(text: &str) -> Result<Averaging, String> {
    let bad = || "use linear:COUNT, exponential:BLOCKS or peak".to_string();
    let (mode, value) = match text.split_once(':') {
        Some((m, v)) => (m, Some(v)),
        None => (text, None),
    };
    match (mode, value) {
        ("peak", None) => Ok(Averaging::PeakHold),
        ("linear", Some(v)) => {
            let count: u32 = v.trim().parse().map_err(|_| bad())?;
            if count == 0 {
                return Err("the count must be >= 1".to_string());
            }
            Ok(Averaging::Linear {
                count,
                when_done: WhenDone::Hold,
            })
        }
        ("exponential", Some(v)) => {
            let blocks: f32 = v.trim().parse().map_err(|_| bad())?;
            if !(blocks.is_finite() && blocks >= 1.0) {
                return Err("the time constant must be >= 1 block".to_string());
            }
            Ok(Averaging::Exponential {
                time_constant_blocks: blocks,
            })
        }
        _ => Err(bad()),
    }
}
