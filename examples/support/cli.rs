//! The core of the `analyze` example: options, the analysis, and the CSV and SVG it writes.
//! Shared with `tests/analyze_cli.rs` through `#[path]`, so the test runs this very code in
//! process. Host only (std). The including crate root must also declare the `input` and
//! `plot` support modules.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use leakless::{
    Analyzer, Averaging, Config, Correction, Detrend, OverloadPolicy, Scale, Shape, Spectrum,
    WhenDone, Window,
};

use crate::input::{read_recording, Samples};
use crate::plot::SpectrumPlot;

/// The usage text of `--help`.
pub const USAGE: &str = "\
analyze: the averaged spectrum of a recording, as CSV (and optionally an SVG plot)

usage: analyze --input PATH [options]

  --input PATH          a WAV file (16-bit PCM or 32-bit float; the first channel is
                        analysed) or a one-column CSV (needs --fs)
  --fs HZ               sample rate of a CSV (a WAV carries its own)
  --n N                 block length: 64, 128, 256, 512, 1024, 2048 or 4096 (default 1024)
  --window SHAPE        hann (default), flattop, rectangular, hft90d, blackman-harris-92,
                        nuttall, hamming, blackman, exact-blackman, hft70, hft95, hft116d,
                        hft144d, kaiser[:BETA], tukey[:ALPHA], force[:WIDTH:TAPER],
                        exponential[:END]
  --overlap FRACTION    overlap of consecutive blocks, 0 <= FRACTION < 1 (default 0.5)
  --average MODE        linear:COUNT (the first COUNT blocks), exponential:BLOCKS (time
                        constant in blocks) or peak (peak hold); default: linear over every
                        block of the recording
  --scale SCALE         peak, rms (default), power, psd or asd
  --correction KIND     amplitude (default for peak, rms, power) or energy (default, and the
                        only choice, for psd and asd)
  --detrend MODE        mean (default) or none
  --gain FACTOR         multiplies every sample, after 16-bit WAV samples are mapped to
                        [-1, 1) (default 1)
  --unit NAME           unit of the samples after --gain (default: FS, full scale, for
                        16-bit WAV; \"units\" otherwise)
  --out PATH            the CSV (default: standard output)
  --plot PATH           also write an SVG plot of the spectrum
  --help                this text

The CSV starts with one '# ' comment line naming scale, correction, unit, window, N,
averages and sample rate, then 'frequency_hz,value', then one row per line from DC to
Nyquist. Nothing is written when an error stops the analysis.";

/// Why the program stopped: a message for the user and the exit code.
#[derive(Debug, PartialEq)]
pub struct Failure {
    /// What went wrong and, where it helps, what to do.
    pub message: String,
    /// 2 for a usage error (bad option or value), 1 for a file or analysis error.
    pub code: u8,
}

impl Failure {
    fn usage(message: impl Into<String>) -> Self {
        Self {
            message: message.into(),
            code: 2,
        }
    }

    fn runtime(message: impl Into<String>) -> Self {
        Self {
            message: message.into(),
            code: 1,
        }
    }
}

/// The parsed command line.
#[derive(Clone, Debug, PartialEq)]
pub struct Options {
    /// `--input`.
    pub input: PathBuf,
    /// `--fs`.
    pub sample_rate_hz: Option<f64>,
    /// `--n`.
    pub block_len: usize,
    /// `--window`, as given.
    pub window_name: String,
    /// `--window`, parsed.
    pub shape: Shape,
    /// `--overlap`.
    pub overlap_fraction: f32,
    /// `--average`; `None`: linear over every block.
    pub averaging: Option<Averaging>,
    /// `--scale`.
    pub scale: Scale,
    /// `--correction` (resolved to the scale's default when not given).
    pub correction: Correction,
    /// `--detrend`.
    pub detrend: Detrend,
    /// `--gain`.
    pub gain: f32,
    /// `--unit`.
    pub unit: Option<String>,
    /// `--out`.
    pub out: Option<PathBuf>,
    /// `--plot`.
    pub plot: Option<PathBuf>,
}

/// What a successful run produced, not yet written anywhere.
pub struct Outputs {
    /// The CSV text.
    pub csv: String,
    /// The SVG text, if `--plot` was given.
    pub svg: Option<String>,
    /// Notes for standard error (rejected or clipped blocks).
    pub notes: Vec<String>,
}

/// `None` for `--help`.
pub fn parse(args: &[String]) -> Result<Option<Options>, Failure> {
    let mut input = None;
    let mut sample_rate_hz = None;
    let mut block_len: usize = 1024;
    let mut window_name = "hann".to_string();
    let mut overlap_fraction = 0.5f32;
    let mut averaging = None;
    let mut scale = Scale::Rms;
    let mut correction = None;
    let mut detrend = Detrend::Mean;
    let mut gain = 1.0f32;
    let mut unit = None;
    let mut out = None;
    let mut plot = None;

    let mut rest = args.iter();
    while let Some(option) = rest.next() {
        if option == "--help" || option == "-h" {
            return Ok(None);
        }
        // An option right after an option is a forgotten value, not the value.
        let mut value = || match rest.next() {
            Some(v) if !v.starts_with("--") => Ok(v.clone()),
            _ => Err(Failure::usage(format!(
                "{option} needs a value (see --help)"
            ))),
        };
        match option.as_str() {
            "--input" => input = Some(PathBuf::from(value()?)),
            "--fs" => {
                let fs: f64 = number(option, &value()?)?;
                if !(fs.is_finite() && fs > 0.0) {
                    return Err(Failure::usage(format!("--fs {fs}: must be > 0 Hz")));
                }
                sample_rate_hz = Some(fs);
            }
            "--n" => {
                let text = value()?;
                block_len = number(option, &text)?;
                if !(block_len.is_power_of_two() && (64..=4096).contains(&block_len)) {
                    return Err(Failure::usage(format!(
                        "--n {text}: not supported; use 64, 128, 256, 512, 1024, 2048 or 4096"
                    )));
                }
            }
            "--window" => window_name = value()?,
            "--overlap" => {
                let text = value()?;
                overlap_fraction = number(option, &text)?;
                if !(0.0..1.0).contains(&overlap_fraction) {
                    return Err(Failure::usage(format!(
                        "--overlap {text}: a fraction of the block, 0 <= FRACTION < 1 (e.g. 0.5)"
                    )));
                }
            }
            "--average" => averaging = Some(parse_averaging(&value()?)?),
            "--scale" => {
                let text = value()?;
                scale = match text.as_str() {
                    "peak" => Scale::Peak,
                    "rms" => Scale::Rms,
                    "power" => Scale::Power,
                    "psd" => Scale::Psd,
                    "asd" => Scale::Asd,
                    _ => {
                        return Err(Failure::usage(format!(
                            "--scale {text}: use peak, rms, power, psd or asd"
                        )))
                    }
                }
            }
            "--correction" => {
                let text = value()?;
                correction = Some(match text.as_str() {
                    "amplitude" => Correction::Amplitude,
                    "energy" => Correction::Energy,
                    _ => {
                        return Err(Failure::usage(format!(
                            "--correction {text}: use amplitude or energy"
                        )))
                    }
                })
            }
            "--detrend" => {
                let text = value()?;
                detrend = match text.as_str() {
                    "mean" => Detrend::Mean,
                    "none" => Detrend::None,
                    _ => {
                        return Err(Failure::usage(format!(
                            "--detrend {text}: use mean or none"
                        )))
                    }
                }
            }
            "--gain" => {
                let text = value()?;
                gain = number(option, &text)?;
                if !(gain.is_finite() && gain != 0.0) {
                    return Err(Failure::usage(format!(
                        "--gain {text}: must be finite and non-zero"
                    )));
                }
            }
            "--unit" => unit = Some(value()?),
            "--out" => out = Some(PathBuf::from(value()?)),
            "--plot" => plot = Some(PathBuf::from(value()?)),
            other => {
                return Err(Failure::usage(format!(
                    "unknown option {other:?} (see --help)"
                )))
            }
        }
    }

    let input = input.ok_or_else(|| Failure::usage("--input PATH is required (see --help)"))?;
    let shape = Shape::from_name(&window_name).ok_or_else(|| {
        let family = window_name.split(':').next().unwrap_or("");
        if window_name.contains(':') && Shape::from_name(family).is_some() {
            Failure::usage(format!(
                "--window {window_name}: the {family} window parameter is out of range or not \
                 a number (see --help)"
            ))
        } else {
            Failure::usage(format!(
                "--window {window_name}: unknown window (see --help for the names)"
            ))
        }
    })?;
    let correction = match (correction, scale.is_density()) {
        (Some(Correction::Amplitude), true) => {
            return Err(Failure::usage(
                "--correction amplitude cannot go with --scale psd or asd: a density spreads \
                 power over frequency, which only the energy (noise-power) correction keeps \
                 right; amplitude correction is for reading tone levels (use --scale rms or \
                 peak for those)",
            ))
        }
        (Some(c), _) => c,
        (None, true) => Correction::Energy,
        (None, false) => Correction::Amplitude,
    };
    Ok(Some(Options {
        input,
        sample_rate_hz,
        block_len,
        window_name,
        shape,
        overlap_fraction,
        averaging,
        scale,
        correction,
        detrend,
        gain,
        unit,
        out,
        plot,
    }))
}

fn number<T: std::str::FromStr>(option: &str, text: &str) -> Result<T, Failure> {
    text.trim()
        .parse()
        .map_err(|_| Failure::usage(format!("{option} {text}: not a number")))
}

fn parse_averaging(text: &str) -> Result<Averaging, Failure> {
    let bad = || {
        Failure::usage(format!(
            "--average {text}: use linear:COUNT, exponential:BLOCKS or peak"
        ))
    };
    let (mode, value) = match text.split_once(':') {
        Some((m, v)) => (m, Some(v)),
        None => (text, None),
    };
    match (mode, value) {
        ("peak", None) => Ok(Averaging::PeakHold),
        ("linear", Some(v)) => {
            let count: u32 = v.trim().parse().map_err(|_| bad())?;
            if count == 0 {
                return Err(Failure::usage("--average linear:0: the count must be >= 1"));
            }
            Ok(Averaging::Linear {
                count,
                when_done: WhenDone::Hold,
            })
        }
        ("exponential", Some(v)) => {
            let blocks: f32 = v.trim().parse().map_err(|_| bad())?;
            if !(blocks.is_finite() && blocks >= 1.0) {
                return Err(Failure::usage(format!(
                    "--average {text}: the time constant must be >= 1 block"
                )));
            }
            Ok(Averaging::Exponential {
                time_constant_blocks: blocks,
            })
        }
        _ => Err(bad()),
    }
}

/// Reads the recording and analyses it: everything but writing.
pub fn analyze(options: &Options) -> Result<Outputs, Failure> {
    let recording = read_recording(&options.input).map_err(Failure::runtime)?;
    let sample_rate_hz = match (recording.sample_rate_hz, options.sample_rate_hz) {
        (Some(wav), Some(_)) => {
            return Err(Failure::usage(format!(
                "--fs is for CSV input: {} is a WAV file and carries its rate ({wav} Hz)",
                options.input.display()
            )))
        }
        (Some(wav), None) => wav,
        (None, Some(fs)) => fs,
        (None, None) => {
            return Err(Failure::usage(format!(
                "{}: a CSV carries no sample rate; give it with --fs HZ",
                options.input.display()
            )))
        }
    };
    macro_rules! dispatch {
        ($($n:literal),*) => {
            match options.block_len {
                $($n => run::<$n, { $n / 2 + 1 }>(options, &recording.samples, sample_rate_hz,
                    recording.channels),)*
                other => Err(Failure::usage(format!("--n {other}: not supported"))),
            }
        };
    }
    dispatch!(64, 128, 256, 512, 1024, 2048, 4096)
}

/// The unit of the samples after the gain, as the spectrum's unit names it.
fn sample_unit(options: &Options, samples: &Samples) -> &'static str {
    let name = match (&options.unit, samples) {
        (Some(u), _) => u.clone(),
        (None, Samples::Counts(_)) => "FS".to_string(),
        (None, Samples::Float(_)) => "units".to_string(),
    };
    // The analyzer keeps a `&'static str`; one small string per run.
    Box::leak(name.into_boxed_str())
}

/// The analyzer settings for these options and samples (the test builds the same).
pub fn config(options: &Options, samples: &Samples, sample_rate_hz: f64, blocks: u32) -> Config {
    let averaging = options.averaging.unwrap_or(Averaging::Linear {
        count: blocks.max(1),
        when_done: WhenDone::Hold,
    });
    let base = Config::new(sample_rate_hz as f32)
        .with_overlap_fraction(options.overlap_fraction)
        .with_averaging(averaging)
        .with_detrend(options.detrend)
        .with_unit(sample_unit(options, samples));
    match samples {
        // Counts / 32768 maps 16-bit PCM to [-1, 1); the top code means the converter clipped.
        // Clipped blocks are averaged all the same, with a note.
        Samples::Counts(_) => base
            .with_sensitivity(options.gain / 32768.0)
            .with_full_scale(32767.0)
            .with_overload_policy(OverloadPolicy::Average),
        Samples::Float(_) => base.with_sensitivity(options.gain),
    }
}

/// Whole blocks in `len` samples.
pub fn block_count(len: usize, block_len: usize, overlap: usize) -> usize {
    if len < block_len {
        0
    } else {
        (len - block_len) / (block_len - overlap) + 1
    }
}

fn run<const N: usize, const BINS: usize>(
    options: &Options,
    samples: &Samples,
    sample_rate_hz: f64,
    channels: u16,
) -> Result<Outputs, Failure> {
    let window = Window::<N>::try_new(options.shape)
        .map_err(|e| Failure::usage(format!("--window {}: {e}", options.window_name)))?;
    let len = match samples {
        Samples::Counts(c) => c.len(),
        Samples::Float(f) => f.len(),
    };
    let overlap = leakless::Overlap::Fraction(options.overlap_fraction)
        .samples(N)
        .map_err(|e| Failure::usage(format!("--overlap: {e}")))?;
    let blocks = block_count(len, N, overlap);
    if blocks == 0 {
        return Err(Failure::runtime(format!(
            "{}: {len} samples, fewer than one block of {N} (try a smaller --n)",
            options.input.display()
        )));
    }
    let config = config(options, samples, sample_rate_hz, blocks as u32);
    let mut analyzer: Analyzer<N, BINS> = Analyzer::new(&window, config).map_err(|e| match e {
        leakless::ConfigError::Sensitivity => {
            Failure::usage(format!("--gain {:e}: {e}", options.gain))
        }
        other => Failure::usage(format!("bad setting: {other}")),
    })?;
    match samples {
        Samples::Counts(c) => analyzer.push_counts(c),
        Samples::Float(f) => analyzer.push(f),
    };
    let status = analyzer.status();
    let mut notes = Vec::new();
    if channels > 1 {
        notes.push(format!(
            "the recording has {channels} channels; channel 1 was analysed"
        ));
    }
    if status.rejected_non_finite > 0 {
        notes.push(format!(
            "{} of {} blocks held NaN, infinite or absurdly large samples and were left out",
            status.rejected_non_finite, status.blocks_seen
        ));
    }
    if status.overloaded > 0 {
        notes.push(format!(
            "{} of {} blocks reach full scale (clipped?) and were averaged all the same",
            status.overloaded, status.blocks_seen
        ));
    }
    if status.blocks_averaged == 0 {
        return Err(Failure::runtime(format!(
            "{}: no block could be averaged ({} of {} had non-finite samples)",
            options.input.display(),
            status.rejected_non_finite,
            status.blocks_seen
        )));
    }
    let spectrum = analyzer.spectrum(options.scale, options.correction);
    let csv = to_csv(&spectrum, options, overlap);
    let svg = options.plot.as_ref().map(|_| to_svg(&spectrum, options));
    Ok(Outputs { csv, svg, notes })
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

fn correction_name(correction: Correction) -> &'static str {
    match correction {
        Correction::Amplitude => "amplitude",
        Correction::Energy => "energy",
    }
}

/// The unit of a spectrum's values.
pub fn value_unit<const BINS: usize>(spectrum: &Spectrum<BINS>) -> String {
    let u = spectrum.unit();
    match spectrum.scale() {
        Scale::Peak | Scale::Rms => u.to_string(),
        Scale::Power => format!("{u}^2"),
        Scale::Psd => format!("{u}^2/Hz"),
        Scale::Asd => format!("{u}/sqrt(Hz)"),
    }
}

fn to_csv<const BINS: usize>(
    spectrum: &Spectrum<BINS>,
    options: &Options,
    overlap: usize,
) -> String {
    let mut csv = String::with_capacity(BINS * 24 + 256);
    // f32 values print in the shortest form that reads back to the same f32.
    let _ = writeln!(
        csv,
        "# scale={} correction={} unit={} window={} n={} averages={} sample_rate_hz={} \
         overlap={} detrend={} gain={} input={}",
        scale_name(spectrum.scale()),
        correction_name(spectrum.correction()),
        value_unit(spectrum),
        options.window_name,
        spectrum.block_len(),
        spectrum.averages(),
        spectrum.sample_rate_hz(),
        overlap,
        match options.detrend {
            Detrend::Mean => "mean",
            Detrend::None => "none",
        },
        options.gain,
        options.input.display()
    );
    csv.push_str("frequency_hz,value\n");
    for (k, value) in spectrum.values().iter().enumerate() {
        let _ = writeln!(csv, "{},{:e}", spectrum.frequency_hz(k), value);
    }
    csv
}

fn to_svg<const BINS: usize>(spectrum: &Spectrum<BINS>, options: &Options) -> String {
    let frequencies: Vec<f64> = (0..BINS).map(|k| spectrum.frequency_hz(k) as f64).collect();
    let values: Vec<f64> = spectrum.values().iter().map(|&v| v as f64).collect();
    let unit = value_unit(spectrum);
    let title = format!(
        "{}: {}, {} window, N = {}, {} averages, {} Hz",
        options
            .input
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default(),
        scale_name(spectrum.scale()),
        options.window_name,
        spectrum.block_len(),
        spectrum.averages(),
        spectrum.sample_rate_hz()
    );
    let y_label = format!(
        "{} ({} correction), dB re 1 {unit}",
        scale_name(spectrum.scale()),
        correction_name(spectrum.correction())
    );
    SpectrumPlot {
        title: &title,
        frequencies_hz: &frequencies,
        values: &values,
        power_like: !spectrum.scale().is_amplitude(),
        y_label: &y_label,
        markers: &[],
    }
    .to_svg()
}

/// The whole program: parse, analyse, then write (CSV to `--out` or `stdout`, the plot to
/// `--plot`), notes and errors to `stderr`. Returns the exit code. Nothing is written to a
/// file unless everything before it succeeded, and a CSV file already written is removed
/// again if the plot cannot be.
pub fn main_with(
    args: &[String],
    stdout: &mut dyn std::io::Write,
    stderr: &mut dyn std::io::Write,
) -> u8 {
    match parse(args).and_then(|options| match options {
        None => {
            let _ = writeln!(stdout, "{USAGE}");
            Ok(())
        }
        Some(options) => {
            let outputs = analyze(&options)?;
            for note in &outputs.notes {
                let _ = writeln!(stderr, "analyze: note: {note}");
            }
            write_outputs(&options, &outputs, stdout)
        }
    }) {
        Ok(()) => 0,
        Err(failure) => {
            let _ = writeln!(stderr, "analyze: error: {}", failure.message);
            failure.code
        }
    }
}

fn write_outputs(
    options: &Options,
    outputs: &Outputs,
    stdout: &mut dyn std::io::Write,
) -> Result<(), Failure> {
    let write_file = |path: &Path, text: &str| {
        std::fs::write(path, text).map_err(|e| Failure::runtime(format!("{}: {e}", path.display())))
    };
    if let Some(out) = &options.out {
        write_file(out, &outputs.csv)?;
    }
    if let (Some(plot), Some(svg)) = (&options.plot, &outputs.svg) {
        if let Err(failure) = write_file(plot, svg) {
            if let Some(out) = &options.out {
                let _ = std::fs::remove_file(out);
            }
            return Err(failure);
        }
    }
    if options.out.is_none() {
        stdout
            .write_all(outputs.csv.as_bytes())
            .map_err(|e| Failure::runtime(format!("standard output: {e}")))?;
    }
    Ok(())
}
