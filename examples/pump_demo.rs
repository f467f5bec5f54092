//! The demo: 10 s of the **invented** pump set of `leakless::demo`, streamed through the float
//! analyzer as 16-bit converter counts in 256-sample chunks (a DMA half-buffer), then the
//! strongest lines, what they are, the overall levels, and an SVG plot.
//!
//! ```text
//! cargo run --release --example pump_demo --features demo [-- --plot PATH]
//! ```
//!
//! Settings: Hann, N = 4096 at 25.6 kHz (6.25 Hz lines, 1600 lines to 10 kHz), 50 % overlap,
//! a linear average of every block in the 10 s. 6.25 Hz keeps 1x (24.7 Hz), its harmonics,
//! 2x line (100 Hz) and the vane pass (172.9 Hz) on separate lines; telling 4x (98.8 Hz)
//! from 2x line would need N = 32768 or zoom, which is beyond this demo.

#[path = "support/plot.rs"]
mod plot;

use std::f64::consts::PI;
use std::path::PathBuf;
use std::process::ExitCode;

use leakless::analysis::peaks::{strongest_tones, Tone, ToneSearch};
use leakless::demo::PumpScenario;
use leakless::{Analyzer, Averaging, Config, Correction, Scale, Shape, Spectrum, WhenDone, Window};

const N: usize = 4096;
const BINS: usize = N / 2 + 1;
const SECONDS: usize = 10;
/// The DMA half-buffer of a typical node.
const CHUNK: usize = 256;
/// The band of the overall levels (and of the plot), Hz.
const BAND_HZ: (f64, f64) = (10.0, 1000.0);
/// The plot's upper frequency, Hz: the machine's lines and the first BPFO harmonics.
const PLOT_MAX_HZ: f64 = 500.0;
/// How many lines to list.
const LISTED: usize = 10;

static HANN: Window<N> = Window::new(Shape::Hann);

fn main() -> ExitCode {
    let plot_path = match plot_path_from_args() {
        Ok(path) => path,
        Err(message) => {
            eprintln!("pump_demo: {message}\nusage: pump_demo [--plot PATH]");
            return ExitCode::from(2);
        }
    };

    let mut pump = PumpScenario::new();
    let sample_rate_hz = pump.sample_rate_hz();
    let samples = SECONDS * sample_rate_hz as usize;
    let overlap = N / 2;
    let blocks = (samples - N) / (N - overlap) + 1;
    // Counts -> volts -> m/s^2: the converter's span and the accelerometer's 100 mV/g.
    let m_s2_per_count = 1.0 / (pump.counts_per_volt() as f64 * pump.volts_per_m_s2());
    let config = Config::new(sample_rate_hz as f32)
        .with_overlap(overlap)
        .with_averaging(Averaging::Linear {
            count: blocks as u32,
            when_done: WhenDone::Hold,
        })
        .with_sensitivity(m_s2_per_count as f32)
        // The top code: a converter that reads it has clipped.
        .with_full_scale(32767.0)
        .with_unit("m/s^2");
    let mut analyzer: Analyzer<N, BINS> = match Analyzer::new(&HANN, config) {
        Ok(a) => a,
        Err(e) => {
            eprintln!("pump_demo: {e}");
            return ExitCode::FAILURE;
        }
    };

    let mut chunk = [0i16; CHUNK];
    for _ in 0..samples / CHUNK {
        pump.fill_counts(&mut chunk);
        analyzer.push_counts(&chunk);
    }
    let status = analyzer.status();
    let spectrum = analyzer.spectrum(Scale::Rms, Correction::Amplitude);

    let search = ToneSearch::for_shape(Shape::Hann)
        .expect("Hann has a main lobe")
        .with_range_hz(BAND_HZ.0 as f32, (sample_rate_hz / 2.56) as f32)
        .with_range_db(40.0);
    let tones = match strongest_tones::<LISTED, BINS>(&spectrum, &search) {
        Ok(t) => t,
        Err(e) => {
            eprintln!("pump_demo: {e}");
            return ExitCode::FAILURE;
        }
    };
    let names = known_lines(&pump);

    println!("leakless pump demo -- INVENTED data: a made-up pump set (leakless::demo), not a measurement");
    println!(
        "  {SECONDS} s at {sample_rate_hz} Hz, 16-bit counts from a 100 mV/g accelerometer, \
         {:.3} mm/s^2 per count, pushed in chunks of {CHUNK}",
        1000.0 * m_s2_per_count
    );
    println!(
        "settings: Hann window, N = {N}, overlap {overlap} ({:.0} %), {} lines to {:.0} Hz, \
         resolution {:.2} Hz",
        100.0 * overlap as f64 / N as f64,
        (N as f64 / 2.56) as usize,
        sample_rate_hz / 2.56,
        analyzer.bin_width_hz()
    );
    println!(
        "          linear average of {blocks} blocks: {} framed, {} averaged, {} overloaded",
        status.blocks_seen, status.blocks_averaged, status.overloaded
    );
    println!(
        "strongest lines {:.0} Hz-{:.0} Hz (frequency: power centroid; level: power in the main lobe):",
        BAND_HZ.0,
        sample_rate_hz / 2.56
    );
    println!("   frequency Hz   m/s^2 rms   mm/s rms   matches");
    for tone in &tones {
        println!(
            "   {:>12.2}   {:>9.4}   {:>8.3}   {}",
            tone.frequency_hz,
            tone.rms,
            velocity_mm_s(tone),
            matching(tone, &names, analyzer.bin_width_hz() as f64 / 2.0)
        );
    }
    let (acceleration, velocity) = band_levels(&spectrum, BAND_HZ);
    println!(
        "overall {:.0}-{:.0} Hz: acceleration {acceleration:.3} m/s^2 rms, velocity \
         {velocity:.3} mm/s rms",
        BAND_HZ.0, BAND_HZ.1
    );
    println!(
        "overall, all lines but DC: acceleration {:.3} m/s^2 rms",
        analyzer.overall_rms(false)
    );

    let svg = plot_svg(&spectrum, &names);
    if let Some(parent) = plot_path.parent().filter(|p| !p.as_os_str().is_empty()) {
        if let Err(e) = std::fs::create_dir_all(parent) {
            eprintln!("pump_demo: {}: {e}", parent.display());
            return ExitCode::FAILURE;
        }
    }
    if let Err(e) = std::fs::write(&plot_path, svg) {
        eprintln!("pump_demo: {}: {e}", plot_path.display());
        return ExitCode::FAILURE;
    }
    println!("plot: {}", plot_path.display());
    ExitCode::SUCCESS
}

/// `--plot PATH`, or the default `target/pump_demo.svg`.
fn plot_path_from_args() -> Result<PathBuf, String> {
    let mut args = std::env::args().skip(1);
    let mut path = PathBuf::from("target/pump_demo.svg");
    while let Some(arg) = args.next() {
        match arg.as_str() {
            "--plot" => path = args.next().ok_or("--plot needs a path")?.into(),
            other => return Err(format!("unknown option {other:?}")),
        }
    }
    Ok(path)
}

/// The scenario's derived lines, named: its tones, the bearing's defect frequencies, and the
/// BPFO harmonics the impacts put around the 3 kHz resonance.
fn known_lines(pump: &PumpScenario) -> Vec<(String, f64)> {
    let short = |name: &str| match name {
        "1x running speed" => "1x".to_string(),
        "2x running speed" => "2x".to_string(),
        "3x running speed" => "3x".to_string(),
        "2x line frequency" => "2x line".to_string(),
        other => other.to_string(),
    };
    let mut lines: Vec<(String, f64)> = pump
        .tones()
        .iter()
        .map(|t| (short(t.name), t.frequency_hz))
        .collect();
    let bearing = pump.bearing_frequencies();
    lines.push(("BPFO".into(), bearing.bpfo_hz));
    lines.push(("BPFI".into(), bearing.bpfi_hz));
    lines.push(("BSF".into(), bearing.bsf_hz));
    lines.push(("FTF".into(), bearing.ftf_hz));
    for k in 2..=115 {
        lines.push((format!("{k}x BPFO"), k as f64 * bearing.bpfo_hz));
    }
    lines
}

/// The named line nearest to the tone, if within `tolerance_hz`.
fn matching(tone: &Tone, names: &[(String, f64)], tolerance_hz: f64) -> String {
    let f = tone.frequency_hz as f64;
    names
        .iter()
        .map(|(name, hz)| (name, hz, (hz - f).abs()))
        .filter(|(_, _, d)| *d <= tolerance_hz)
        .min_by(|a, b| a.2.total_cmp(&b.2))
        .map(|(name, hz, _)| format!("{name} ({hz:.2} Hz)"))
        .unwrap_or_else(|| "-".into())
}

/// The tone's RMS velocity, mm/s: `a_rms / (2 pi f)` (a single sinusoid).
fn velocity_mm_s(tone: &Tone) -> f64 {
    1000.0 * tone.rms as f64 / (2.0 * PI * tone.frequency_hz as f64)
}

/// RMS acceleration (m/s^2) and velocity (mm/s) over the lines whose centre is inside `band`:
/// the power in the band, each line's velocity power its acceleration power over
/// `(2 pi f)^2`.
fn band_levels(spectrum: &Spectrum<BINS>, band: (f64, f64)) -> (f64, f64) {
    let (mut acceleration, mut velocity) = (0.0, 0.0);
    for k in 1..BINS {
        let f = spectrum.frequency_hz(k) as f64;
        if f < band.0 || f > band.1 {
            continue;
        }
        let p = spectrum.mean_square(k).unwrap_or(0.0) as f64;
        acceleration += p;
        velocity += p / (2.0 * PI * f).powi(2);
    }
    (acceleration.sqrt(), 1000.0 * velocity.sqrt())
}

/// The averaged spectrum to [`PLOT_MAX_HZ`], in dB re 1 m/s^2 rms, with the scenario's lines
/// marked.
fn plot_svg(spectrum: &Spectrum<BINS>, names: &[(String, f64)]) -> String {
    let last = (PLOT_MAX_HZ / spectrum.bin_width_hz() as f64) as usize;
    let frequencies: Vec<f64> = (0..=last)
        .map(|k| spectrum.frequency_hz(k) as f64)
        .collect();
    let values: Vec<f64> = spectrum.values()[..=last]
        .iter()
        .map(|&v| v as f64)
        .collect();
    // The machine's tones and the defect's impact rate and harmonics; the other bearing lines
    // are not in the signal. A label closer than half a line to an earlier one (2x BPFO, 0.7 Hz
    // from the vane pass) would print over it.
    let mut markers: Vec<(String, f64)> = Vec::new();
    for (name, hz) in names {
        let crowded = markers
            .iter()
            .any(|(_, f)| (f - hz).abs() < spectrum.bin_width_hz() as f64 / 2.0);
        if *hz <= PLOT_MAX_HZ && !crowded && !["BPFI", "BSF", "FTF"].contains(&name.as_str()) {
            markers.push((name.clone(), *hz));
        }
    }
    plot::SpectrumPlot {
        title: "INVENTED demo pump set: acceleration 0-500 Hz (of 10 kHz), Hann, N = 4096, 6.25 Hz lines",
        frequencies_hz: &frequencies,
        values: &values,
        power_like: false,
        y_label: "acceleration, dB re 1 m/s^2 rms (amplitude-corrected)",
        markers: &markers,
    }
    .to_svg()
}
