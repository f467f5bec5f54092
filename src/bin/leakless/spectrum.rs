//! `leakless spectrum`: the averaged spectrum of a recording, as CSV or JSON, and optionally
//! an SVG plot.

use std::path::PathBuf;

use leakless::{Scale, Spectrum};
use serde_json::json;

use crate::engine::{self, with_block_len, Engine, Quantised};
use crate::failure::{Failure, Outcome};
use crate::input::{Channels, InputArgs, Recording};
use crate::options::{self, Analysis, AnalysisArgs};
use crate::output::{check_targets, Sink};
use crate::plot::{self, PlotArgs, Trace};

/// The averaged spectrum of a recording, as CSV (a header with units, then one row per line
/// from DC to Nyquist) or JSON (every setting, the counters and the lines), and optionally an
/// SVG plot. Nothing is written when an error stops the analysis.
#[derive(clap::Args, Debug)]
pub struct Args {
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub analysis: AnalysisArgs,
    /// Where to write the result (default: standard output)
    #[arg(long, value_name = "PATH")]
    pub out: Option<PathBuf>,
    /// Format of the result
    #[arg(long, value_name = "FORMAT", value_enum, default_value_t = Format::Csv)]
    pub format: Format,
    /// Also write an SVG plot of the spectrum
    #[arg(long, value_name = "PATH")]
    pub plot: Option<PathBuf>,
    #[command(flatten)]
    pub plot_options: PlotArgs,
}

/// `--format`: the same result, two formats.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// Comma-separated, units in the column names
    Csv,
    /// One JSON object with every setting
    Json,
}

/// A finished spectrum with what the run needs to report about it.
pub struct Run<const BINS: usize> {
    /// The spectrum as the library read it out.
    pub spectrum: Spectrum<BINS>,
    /// The analyzer's counters.
    pub status: leakless::Status,
    /// Overlap in samples.
    pub overlap: usize,
    /// What a fixed path did to float input.
    pub quantised: Option<Quantised>,
    /// Notes for standard error.
    pub notes: Vec<String>,
}

/// Streams the recording through the analyzer the options describe. Shared by every
/// subcommand that starts from the averaged spectrum.
pub fn analyze<const N: usize, const BINS: usize>(
    analysis: &Analysis,
    recording: &mut Recording,
) -> Outcome<Run<BINS>> {
    let overlap = engine::overlap_samples(analysis)?;
    let blocks = engine::block_count(recording.frames, N, overlap);
    if blocks == 0 {
        return Err(Failure::file(
            &recording.path,
            format!(
                "{} samples, fewer than one block of {N}; try a smaller --n",
                recording.frames
            ),
        ));
    }
    let mut engine: Engine<N, BINS> =
        Engine::new(analysis, recording, engine::averaging_for(analysis, blocks))?;
    recording.stream(|chunk| engine.push(chunk).map(|_| ()))?;
    let status = engine.status();
    let spectrum = engine.spectrum(analysis.scale, analysis.correction);
    let quantised = engine.quantised();
    let mut notes = Vec::new();
    if let Some(Quantised { bits, clipped }) = quantised {
        notes.push(format!(
            "samples were quantised to {bits}-bit codes for --arith {} (float read as a \
             fraction of full scale; {clipped} beyond full scale, clipped)",
            analysis.arith.name()
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
    if let Some(leakless::Averaging::Linear { count, .. }) = analysis.averaging {
        if status.blocks_averaged < count {
            notes.push(format!(
                "--average linear:{count}: the recording holds {} usable blocks; all are averaged",
                status.blocks_averaged
            ));
        }
    }
    if status.blocks_averaged == 0 {
        return Err(Failure::file(
            &recording.path,
            format!(
                "no block could be averaged ({} of {} had non-finite samples)",
                status.rejected_non_finite, status.blocks_seen
            ),
        ));
    }
    Ok(Run {
        spectrum,
        status,
        overlap,
        quantised,
        notes,
    })
}

/// The unit of a spectrum's values, e.g. `m/s^2`, `(m/s^2)^2/Hz`.
pub fn value_unit<const BINS: usize>(spectrum: &Spectrum<BINS>) -> String {
    let u = spectrum.unit();
    let grouped = if u.contains(['/', '^', '*', ' ']) {
        format!("({u})")
    } else {
        u.to_string()
    };
    match spectrum.scale() {
        Scale::Peak | Scale::Rms => u.to_string(),
        Scale::Power => format!("{grouped}^2"),
        Scale::Psd => format!("{grouped}^2/Hz"),
        Scale::Asd => format!("{grouped}/sqrt(Hz)"),
    }
}

/// Every setting of a spectrum run, for JSON output.
pub fn settings_json<const BINS: usize>(
    analysis: &Analysis,
    recording: &Recording,
    run: &Run<BINS>,
) -> serde_json::Value {
    json!({
        "input": recording.path.display().to_string(),
        "encoding": recording.encoding.name(),
        "channel": recording.names.first(),
        "sample_rate_hz": run.spectrum.sample_rate_hz(),
        "frames": recording.frames,
        "n": run.spectrum.block_len(),
        "window": analysis.window_name,
        "overlap": analysis.overlap_fraction,
        "overlap_samples": run.overlap,
        "average": analysis
            .averaging
            .as_ref()
            .map(options::averaging_name)
            .unwrap_or_else(|| "linear:all".to_string()),
        "scale": options::scale_name(run.spectrum.scale()),
        "correction": options::correction_name(run.spectrum.correction()),
        "detrend": options::detrend_name(analysis.detrend),
        "arith": analysis.arith.name(),
        "quantised_bits": run.quantised.map(|q| q.bits),
        "gain": analysis.gain,
        "unit": run.spectrum.unit(),
    })
}

/// The analyzer's counters, for JSON output.
pub fn status_json(status: &leakless::Status) -> serde_json::Value {
    json!({
        "blocks_seen": status.blocks_seen,
        "blocks_averaged": status.blocks_averaged,
        "rejected_non_finite": status.rejected_non_finite,
        "overloaded": status.overloaded,
    })
}

/// The title of a plot of `run`.
pub fn plot_title<const BINS: usize>(
    what: &str,
    analysis: &Analysis,
    recording: &Recording,
    spectrum: &Spectrum<BINS>,
) -> String {
    format!(
        "{}: {what}, {} window, N = {}, {} averages, {} Hz",
        recording
            .path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default(),
        analysis.window_name,
        spectrum.block_len(),
        spectrum.averages(),
        spectrum.sample_rate_hz()
    )
}

/// The SVG of a spectrum with optional cursors.
pub fn spectrum_svg<const BINS: usize>(
    title: &str,
    spectrum: &Spectrum<BINS>,
    plot_options: &PlotArgs,
    cursors: &[(String, f64)],
) -> Outcome<String> {
    let x: Vec<f64> = (0..BINS).map(|k| spectrum.frequency_hz(k) as f64).collect();
    let values: Vec<f64> = spectrum.values().iter().map(|&v| v as f64).collect();
    let unit = value_unit(spectrum);
    let scale = options::scale_name(spectrum.scale());
    let correction = options::correction_name(spectrum.correction());
    plot::trace_svg(
        &Trace {
            title,
            x: &x,
            values: &values,
            power_like: !spectrum.scale().is_amplitude(),
            linear_label: &format!("{scale} ({correction} correction), {unit}"),
            db_label: &format!("{scale} ({correction} correction), dB re 1 {unit}"),
            x_label: "frequency, Hz",
            cursors,
        },
        plot_options,
    )
}

/// `leakless spectrum`.
pub fn run(args: &Args) -> Outcome<()> {
    let analysis = args.analysis.resolve()?;
    let mut targets = Vec::new();
    if let Some(out) = &args.out {
        targets.push(("--out", out.as_path()));
    }
    if let Some(plot) = &args.plot {
        targets.push(("--plot", plot.as_path()));
    }
    check_targets(&[&args.input.input], &targets)?;
    let mut recording = Recording::open(&args.input, Channels::One)?;
    with_block_len!(analysis.block_len, |N, BINS| {
        let run = analyze::<N, BINS>(&analysis, &mut recording)?;
        for note in &run.notes {
            crate::output::note("spectrum", note);
        }
        let text = match args.format {
            Format::Csv => to_csv(&run.spectrum)?,
            Format::Json => crate::output::json_text(&SpectrumDoc {
                settings: settings_json(&analysis, &recording, &run),
                status: status_json(&run.status),
                averages: run.spectrum.averages(),
                bin_width_hz: run.spectrum.bin_width_hz(),
                value_unit: value_unit(&run.spectrum),
                frequencies_hz: (0..BINS).map(|k| run.spectrum.frequency_hz(k)).collect(),
                values: run.spectrum.values(),
            })?,
        };
        let svg = match &args.plot {
            Some(_) => Some(spectrum_svg(
                &plot_title(
                    options::scale_name(run.spectrum.scale()),
                    &analysis,
                    &recording,
                    &run.spectrum,
                ),
                &run.spectrum,
                &args.plot_options,
                &[],
            )?),
            None => None,
        };
        let mut extra = Vec::new();
        if let (Some(plot), Some(svg)) = (&args.plot, &svg) {
            extra.push((plot.as_path(), svg.as_bytes()));
        }
        Sink {
            out: args.out.as_deref(),
        }
        .finish(text.as_bytes(), &extra)
    })
}

/// The JSON of `spectrum --format json`. Typed, so f32 values print in their own shortest
/// form (a `serde_json::Value` would widen them to f64 first).
#[derive(serde::Serialize)]
struct SpectrumDoc<'a> {
    settings: serde_json::Value,
    status: serde_json::Value,
    averages: u32,
    bin_width_hz: f32,
    value_unit: String,
    frequencies_hz: Vec<f32>,
    values: &'a [f32],
}

/// `frequency_hz,<scale>_<unit>` then one row per line. f32 values print in the shortest form
/// that reads back to the same f32.
fn to_csv<const BINS: usize>(spectrum: &Spectrum<BINS>) -> Outcome<String> {
    let mut w = csv::Writer::from_writer(Vec::with_capacity(BINS * 24 + 64));
    let column = format!(
        "{}_{}",
        options::scale_name(spectrum.scale()),
        value_unit(spectrum)
    );
    let csv_failure = |e: csv::Error| Failure::runtime(format!("CSV: {e}"));
    w.write_record(["frequency_hz", column.as_str()])
        .map_err(csv_failure)?;
    for (k, value) in spectrum.values().iter().enumerate() {
        w.write_record([spectrum.frequency_hz(k).to_string(), format!("{value:e}")])
            .map_err(csv_failure)?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| Failure::runtime(format!("CSV: {e}")))?;
    String::from_utf8(bytes).map_err(|e| Failure::runtime(format!("CSV: {e}")))
}
