//! Reading recordings for the host examples: WAV (16-bit PCM or 32-bit float, via `hound`)
//! and one-column CSV. Host-only (std).

use std::path::Path;

/// Samples as the recording holds them.
pub enum Samples {
    /// 16-bit PCM: converter counts, exactly as firmware would get them.
    Counts(Vec<i16>),
    /// 32-bit float WAV or CSV values.
    Float(Vec<f32>),
}

/// A recording: its samples and, if the file carries it, its sample rate.
pub struct Recording {
    /// The samples of the first channel.
    pub samples: Samples,
    /// Hz; `None` for CSV, whose rate comes from `--fs`.
    pub sample_rate_hz: Option<f64>,
    /// Channels in the file (only the first is analysed).
    pub channels: u16,
}

/// Reads `path` by its extension (`.wav` or `.csv`), with a message fit for the user on error.
pub fn read_recording(path: &Path) -> Result<Recording, String> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase())
        .unwrap_or_default();
    match ext.as_str() {
        "wav" => read_wav(path),
        "csv" | "txt" => read_csv(path),
        _ => Err(format!(
            "{}: unknown file type (expected .wav or .csv)",
            path.display()
        )),
    }
}

fn read_wav(path: &Path) -> Result<Recording, String> {
    let mut reader =
        hound::WavReader::open(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let spec = reader.spec();
    let channels = spec.channels.max(1);
    let step = channels as usize;
    let samples = match (spec.sample_format, spec.bits_per_sample) {
        (hound::SampleFormat::Int, 16) => {
            let all: Result<Vec<i16>, _> = reader.samples::<i16>().step_by(step).collect();
            Samples::Counts(all.map_err(|e| format!("{}: {e}", path.display()))?)
        }
        (hound::SampleFormat::Float, 32) => {
            let all: Result<Vec<f32>, _> = reader.samples::<f32>().step_by(step).collect();
            Samples::Float(all.map_err(|e| format!("{}: {e}", path.display()))?)
        }
        (format, bits) => {
            return Err(format!(
                "{}: unsupported WAV sample format {format:?} {bits}-bit (use 16-bit PCM or 32-bit float)",
                path.display()
            ))
        }
    };
    Ok(Recording {
        samples,
        sample_rate_hz: Some(spec.sample_rate as f64),
        channels,
    })
}

fn read_csv(path: &Path) -> Result<Recording, String> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let mut values = Vec::new();
    for (line_no, line) in text.lines().enumerate() {
        let field = line.split(',').next().unwrap_or("").trim();
        if field.is_empty() || field.starts_with('#') {
            continue;
        }
        match field.parse::<f32>() {
            Ok(v) => values.push(v),
            // A header line (text in the first row) is allowed; anything else is an error.
            Err(_) if values.is_empty() && line_no == 0 => continue,
            Err(_) => {
                return Err(format!(
                    "{}:{}: not a number: {field:?}",
                    path.display(),
                    line_no + 1
                ))
            }
        }
    }
    if values.is_empty() {
        return Err(format!("{}: no samples", path.display()));
    }
    Ok(Recording {
        samples: Samples::Float(values),
        sample_rate_hz: None,
        channels: 1,
    })
}
