//! The `analyze` example end to end: its core (`examples/support/cli.rs`) in process, and the
//! built binary as a real process when `cargo test` has built the examples.

#[path = "../examples/support/cli.rs"]
mod cli;
#[path = "../examples/support/input.rs"]
mod input;
#[path = "../examples/support/plot.rs"]
mod plot;

use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use std::process::Command;

use leakless::{
    Analyzer, Averaging, Config, Correction, OverloadPolicy, Scale, Shape, WhenDone, Window,
};

/// A fresh folder for one test's files.
fn scratch(test: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("leakless-analyze-{}-{test}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// `amplitude sin(2 pi f n / fs)` plus a smaller tone, in f64.
fn signal(len: usize, fs: f64, amplitude: f64, frequency_hz: f64) -> Vec<f64> {
    (0..len)
        .map(|n| {
            let t = n as f64 / fs;
            amplitude * (2.0 * PI * frequency_hz * t).sin()
                + 0.01 * (2.0 * PI * 3.3 * frequency_hz * t + 0.4).sin()
        })
        .collect()
}

/// A mono WAV of `samples`: 16-bit PCM for `i16`, 32-bit float for `f32`.
fn write_wav<S: hound::Sample + Copy>(
    path: &Path,
    fs: u32,
    samples: &[S],
    format: hound::SampleFormat,
) {
    let spec = hound::WavSpec {
        channels: 1,
        sample_rate: fs,
        bits_per_sample: (std::mem::size_of::<S>() * 8) as u16,
        sample_format: format,
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    for &s in samples {
        w.write_sample(s).unwrap();
    }
    w.finalize().unwrap();
}

fn write_wav_i16(path: &Path, fs: u32, samples: &[i16]) {
    write_wav(path, fs, samples, hound::SampleFormat::Int);
}

fn write_wav_f32(path: &Path, fs: u32, samples: &[f32]) {
    write_wav(path, fs, samples, hound::SampleFormat::Float);
}

/// Runs the CLI core in process: (exit code, stdout, stderr).
fn run(args: &[&str]) -> (u8, String, String) {
    let args: Vec<String> = args.iter().map(|s| s.to_string()).collect();
    let (mut out, mut err) = (Vec::new(), Vec::new());
    let code = cli::main_with(&args, &mut out, &mut err);
    (
        code,
        String::from_utf8(out).unwrap(),
        String::from_utf8(err).unwrap(),
    )
}

/// The header comment and the (frequency, value) rows of a CSV the CLI wrote.
fn parse_csv(text: &str) -> (String, Vec<(f32, f32)>) {
    let mut lines = text.lines();
    let header = lines.next().unwrap().to_string();
    assert!(header.starts_with("# "), "{header}");
    assert_eq!(lines.next(), Some("frequency_hz,value"));
    let rows = lines
        .map(|l| {
            let (f, v) = l.split_once(',').unwrap();
            (f.parse().unwrap(), v.parse().unwrap())
        })
        .collect();
    (header, rows)
}

/// Asserts the CLI's rows are the library's values, bit for bit: the CSV prints every f32 in
/// the shortest form that reads back to the same f32.
fn assert_same<const BINS: usize>(rows: &[(f32, f32)], want: &leakless::Spectrum<BINS>) {
    assert_eq!(rows.len(), BINS);
    for (k, &(f, v)) in rows.iter().enumerate() {
        assert_eq!(
            f.to_bits(),
            want.frequency_hz(k).to_bits(),
            "frequency of line {k}"
        );
        assert_eq!(
            v.to_bits(),
            want.values()[k].to_bits(),
            "line {k}: {v} vs {}",
            want.values()[k]
        );
    }
}

// The library result (reference: the library's own Analyzer, configured here by hand from
// the documented meaning of each option), and one analytic check: a sine of amplitude
// 0.5 full scale on an exact line (1000 Hz at fs = 8000, N = 512: line 64), times --gain 2,
// reads an RMS of 1/sqrt(2) with amplitude correction. Tolerance 1e-4: 16-bit quantisation
// (1/65536 of full scale per sample) and the small second tone's leakage (Hann sidelobes,
// -31 dB of 0.01 and falling, at 217 lines away far lower).
#[test]
fn wav16_matches_the_library_and_analytic_truth() {
    let dir = scratch("wav16");
    let (fs, n, len) = (8000u32, 512usize, 24_000usize);
    let x = signal(len, fs as f64, 0.5, 1000.0);
    let counts: Vec<i16> = x.iter().map(|v| (v * 32768.0).round() as i16).collect();
    let wav = dir.join("tone.wav");
    write_wav_i16(&wav, fs, &counts);
    let out = dir.join("spectrum.csv");
    let (code, stdout, stderr) = run(&[
        "--input",
        wav.to_str().unwrap(),
        "--n",
        "512",
        "--window",
        "hann",
        "--overlap",
        "0.5",
        "--scale",
        "rms",
        "--gain",
        "2",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.is_empty());
    let (header, rows) = parse_csv(&std::fs::read_to_string(&out).unwrap());

    static HANN: Window<512> = Window::new(Shape::Hann);
    let blocks = (len - n) / (n / 2) + 1;
    let config = Config::new(fs as f32)
        .with_overlap(n / 2)
        .with_averaging(Averaging::Linear {
            count: blocks as u32,
            when_done: WhenDone::Hold,
        })
        .with_sensitivity(2.0 / 32768.0)
        .with_full_scale(32767.0)
        .with_overload_policy(OverloadPolicy::Average)
        .with_unit("FS");
    let mut analyzer: Analyzer<512, 257> = Analyzer::new(&HANN, config).unwrap();
    analyzer.push_counts(&counts);
    let want = analyzer.spectrum(Scale::Rms, Correction::Amplitude);
    assert_same(&rows, &want);
    for field in [
        "scale=rms",
        "correction=amplitude",
        "unit=FS",
        "window=hann",
        "n=512",
        &format!("averages={blocks}"),
        "sample_rate_hz=8000",
    ] {
        assert!(
            header.split(' ').any(|f| f == field),
            "{field} not in {header}"
        );
    }
    assert!((rows[64].1 - 0.5f32.sqrt()).abs() < 1e-4, "{:?}", rows[64]);
    let _ = std::fs::remove_dir_all(&dir);
}

// reference: the library's Analyzer, configured by hand as the options say.
#[test]
fn float_wav_psd_with_exponential_average() {
    let dir = scratch("wav32");
    let (fs, len) = (25_600u32, 40_000usize);
    let x: Vec<f32> = signal(len, fs as f64, 3.0, 1234.5)
        .iter()
        .map(|&v| v as f32)
        .collect();
    let wav = dir.join("float.wav");
    write_wav_f32(&wav, fs, &x);
    let (code, stdout, stderr) = run(&[
        "--input",
        wav.to_str().unwrap(),
        "--n",
        "2048",
        "--window",
        "flattop",
        "--overlap",
        "0.75",
        "--average",
        "exponential:4",
        "--scale",
        "psd",
        "--detrend",
        "none",
        "--unit",
        "m/s^2",
    ]);
    assert_eq!(code, 0, "{stderr}");
    let (header, rows) = parse_csv(&stdout);
    static FLAT_TOP: Window<2048> = Window::new(Shape::FlatTop);
    let config = Config::new(fs as f32)
        .with_overlap(1536)
        .with_averaging(Averaging::Exponential {
            time_constant_blocks: 4.0,
        })
        .with_detrend(leakless::Detrend::None)
        .with_unit("m/s^2");
    let mut analyzer: Analyzer<2048, 1025> = Analyzer::new(&FLAT_TOP, config).unwrap();
    analyzer.push(&x);
    let want = analyzer.spectrum(Scale::Psd, Correction::Energy);
    assert_same(&rows, &want);
    assert!(
        header.contains("scale=psd correction=energy unit=m/s^2^2/Hz window=flattop n=2048"),
        "{header}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

// reference: the library's Analyzer; CSV values are the samples themselves (no mapping).
#[test]
fn csv_input_needs_fs() {
    let dir = scratch("csv");
    let x: Vec<f32> = signal(3000, 1000.0, 1.0, 125.0)
        .iter()
        .map(|&v| v as f32)
        .collect();
    let csv = dir.join("samples.csv");
    let mut text = String::from("acceleration\n");
    for v in &x {
        text.push_str(&format!("{v}\n"));
    }
    std::fs::write(&csv, text).unwrap();
    let out = dir.join("out.csv");
    let (code, _, stderr) = run(&[
        "--input",
        csv.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("--fs"), "{stderr}");
    assert!(!out.exists());

    let (code, stdout, stderr) = run(&[
        "--input",
        csv.to_str().unwrap(),
        "--fs",
        "1000",
        "--n",
        "256",
        "--window",
        "rectangular",
        "--overlap",
        "0",
        "--scale",
        "peak",
        "--average",
        "linear:5",
        "--gain",
        "0.5",
    ]);
    assert_eq!(code, 0, "{stderr}");
    let (header, rows) = parse_csv(&stdout);
    static RECT: Window<256> = Window::new(Shape::Rectangular);
    let config = Config::new(1000.0)
        .with_averaging(Averaging::Linear {
            count: 5,
            when_done: WhenDone::Hold,
        })
        .with_sensitivity(0.5)
        .with_unit("units");
    let mut analyzer: Analyzer<256, 129> = Analyzer::new(&RECT, config).unwrap();
    analyzer.push(&x);
    assert_same(
        &rows,
        &analyzer.spectrum(Scale::Peak, Correction::Amplitude),
    );
    assert!(
        header.contains(" averages=5 sample_rate_hz=1000 "),
        "{header}"
    );
    // 125 Hz is line 32 of 256 at 1 kHz: a rectangular window reads the amplitude exactly,
    // 1.0 x gain 0.5 (analytic truth; f32 rounding of the samples, 1e-6).
    assert!((rows[32].1 - 0.5).abs() < 1e-5, "{:?}", rows[32]);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn errors_exit_non_zero_and_write_nothing() {
    let dir = scratch("errors");
    let counts: Vec<i16> = (0..4096).map(|n| ((n * 37) % 2000) as i16 - 1000).collect();
    let wav = dir.join("ok.wav");
    write_wav_i16(&wav, 8000, &counts);
    let csv = dir.join("ok.csv");
    std::fs::write(&csv, "1\n2\n3\n").unwrap();
    let bad_csv = dir.join("bad.csv");
    std::fs::write(&bad_csv, "1\n2\nthree\n").unwrap();
    let not_wav = dir.join("garbage.wav");
    std::fs::write(&not_wav, "this is not a WAV file").unwrap();
    let w = wav.to_str().unwrap();
    let missing = dir.join("missing.wav");
    let flac = dir.join("x.flac");
    let out = dir.join("out.csv");
    let plot = dir.join("out.svg");
    let cases: &[(&[&str], u8, &str)] = &[
        (&["--input", w, "--bogus"], 2, "unknown option"),
        (&["--input", w, "--n"], 2, "needs a value"),
        (&["--input", w, "--n", "1000"], 2, "not supported"),
        (&["--input", w, "--n", "8192"], 2, "not supported"),
        (&["--input", w, "--n", "many"], 2, "not a number"),
        (&["--input", w, "--overlap", "1.5"], 2, "0 <= FRACTION < 1"),
        (&["--input", w, "--overlap", "half"], 2, "not a number"),
        (&["--input", w, "--window", "hanning"], 2, "unknown window"),
        (&["--input", w, "--window", "kaiser:-1"], 2, "out of range"),
        (&["--input", w, "--window", "tukey:2"], 2, "out of range"),
        (&["--input", w, "--average", "linear"], 2, "linear:COUNT"),
        (&["--input", w, "--average", "linear:0"], 2, ">= 1"),
        (
            &["--input", w, "--average", "exponential:0.5"],
            2,
            ">= 1 block",
        ),
        (&["--input", w, "--scale", "db"], 2, "--scale"),
        (
            &["--input", w, "--scale", "psd", "--correction", "amplitude"],
            2,
            "energy",
        ),
        (
            &["--input", w, "--scale", "asd", "--correction", "amplitude"],
            2,
            "density",
        ),
        (
            &["--input", w, "--correction", "both"],
            2,
            "amplitude or energy",
        ),
        (&["--input", w, "--detrend", "linear"], 2, "mean or none"),
        (&["--input", w, "--gain", "0"], 2, "non-zero"),
        (&["--input", w, "--gain", "1e-12"], 2, "sensitivity"),
        (&["--input", w, "--fs", "8000"], 2, "carries its rate"),
        (&["--input", w, "--fs", "-1"], 2, "> 0"),
        (&["--n", "256"], 2, "--input PATH is required"),
        (
            &["--input", csv.to_str().unwrap(), "--fs", "100", "--n", "64"],
            1,
            "fewer than one block",
        ),
        (
            &["--input", bad_csv.to_str().unwrap(), "--fs", "100"],
            1,
            "not a number",
        ),
        (&["--input", not_wav.to_str().unwrap()], 1, "garbage.wav"),
        (&["--input", missing.to_str().unwrap()], 1, "missing.wav"),
        (&["--input", flac.to_str().unwrap()], 1, "unknown file type"),
    ];
    for (args, code, phrase) in cases {
        let mut all: Vec<&str> = args.to_vec();
        all.extend([
            "--out",
            out.to_str().unwrap(),
            "--plot",
            plot.to_str().unwrap(),
        ]);
        let (got, stdout, stderr) = run(&all);
        assert_eq!(got, *code, "{args:?}: {stderr}");
        assert!(
            stderr.contains(phrase),
            "{args:?}: {stderr:?} lacks {phrase:?}"
        );
        assert!(stdout.is_empty(), "{args:?}");
        assert!(!out.exists() && !plot.exists(), "{args:?} wrote a file");
    }
    // A plot that cannot be written takes the CSV already written with it.
    let (code, _, stderr) = run(&[
        "--input",
        w,
        "--n",
        "256",
        "--out",
        out.to_str().unwrap(),
        "--plot",
        dir.join("no/such/folder/p.svg").to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(!out.exists());
    // Asking for more blocks than there are is a note, not an error.
    let (code, _, stderr) = run(&["--input", w, "--n", "256", "--average", "linear:1000"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stderr.contains("holds 31 usable blocks"), "{stderr}");
    // And the good case writes both.
    let (code, _, stderr) = run(&[
        "--input",
        w,
        "--n",
        "256",
        "--out",
        out.to_str().unwrap(),
        "--plot",
        plot.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(std::fs::read_to_string(&plot).unwrap().starts_with("<svg"));
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .starts_with("# scale=rms"));
    let (code, stdout, _) = run(&["--help"]);
    assert_eq!(code, 0);
    assert!(stdout.contains("--average MODE") && stdout.contains("--gain FACTOR"));
    let _ = std::fs::remove_dir_all(&dir);
}

/// `target/<profile>/examples/analyze`, next to this test's `deps/` folder, if built.
fn built_binary() -> Option<PathBuf> {
    let exe = std::env::current_exe().ok()?;
    let profile_dir = exe.parent()?.parent()?;
    let name = format!("analyze{}", std::env::consts::EXE_SUFFIX);
    let path = profile_dir.join("examples").join(name);
    path.exists().then_some(path)
}

// The real program: the same CSV as in process, byte for byte, and a failing exit code that
// leaves no file. `cargo test` builds the examples before it runs any test; a lone
// `cargo test --test analyze_cli` does not, and then this test says so and checks nothing
// more, except under CI (the `CI` variable set), where a missing binary is a failure.
#[test]
fn real_process_agrees_with_the_core() {
    let Some(binary) = built_binary() else {
        assert!(
            std::env::var_os("CI").is_none(),
            "analyze binary not built: CI runs `cargo test`, which builds the examples"
        );
        eprintln!(
            "analyze binary not built (run `cargo test` or `cargo build --examples`); skipped"
        );
        return;
    };
    let dir = scratch("process");
    let x = signal(10_000, 8000.0, 0.25, 500.0);
    let counts: Vec<i16> = x.iter().map(|v| (v * 32768.0).round() as i16).collect();
    let wav = dir.join("tone.wav");
    write_wav_i16(&wav, 8000, &counts);
    let args = [
        "--input",
        wav.to_str().unwrap(),
        "--n",
        "1024",
        "--window",
        "hft90d",
    ];
    let output = Command::new(&binary).args(args).output().unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let (_, in_process, _) = run(&args);
    assert_eq!(String::from_utf8(output.stdout).unwrap(), in_process);

    let out = dir.join("never.csv");
    let output = Command::new(&binary)
        .args([
            "--input",
            wav.to_str().unwrap(),
            "--n",
            "1000",
            "--out",
            out.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    assert_eq!(output.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&output.stderr).contains("--n 1000"));
    assert!(!out.exists());
    let _ = std::fs::remove_dir_all(&dir);
}

// --arith: the fixed-point paths, exactly as firmware runs them. Reference: the library's
// AnalyzerQ15 / AnalyzerQ31 configured by hand as the options say, and the float analyzer on
// the same counts for the analytic level (0.5 full scale on line 64 reads 0.5/sqrt(2) rms,
// within 1e-4 as in `wav16_matches_the_library_and_analytic_truth`).
#[cfg(feature = "fixed")]
#[test]
fn arith_q15_and_q31_match_the_fixed_analyzers() {
    use leakless::{AnalyzerQ15, AnalyzerQ31, WindowQ15, WindowQ31};
    let dir = scratch("arith");
    let (fs, n, len) = (8000u32, 512usize, 24_000usize);
    let x = signal(len, fs as f64, 0.5, 1000.0);
    let counts: Vec<i16> = x.iter().map(|v| (v * 32768.0).round() as i16).collect();
    let wav = dir.join("tone.wav");
    write_wav_i16(&wav, fs, &counts);
    let blocks = (len - n) / (n / 2) + 1;
    let config = Config::new(fs as f32)
        .with_overlap(n / 2)
        .with_averaging(Averaging::Linear {
            count: blocks as u32,
            when_done: WhenDone::Hold,
        })
        .with_sensitivity(1.0 / 32768.0)
        .with_full_scale(32767.0)
        .with_overload_policy(OverloadPolicy::Average)
        .with_unit("FS");
    static HANN_Q15: WindowQ15<512> = WindowQ15::new(Shape::Hann);
    static HANN_Q31: WindowQ31<512> = WindowQ31::new(Shape::Hann);
    let mut q15: AnalyzerQ15<512, 257> = AnalyzerQ15::new(&HANN_Q15, config).unwrap();
    q15.push(&counts);
    let mut q31: AnalyzerQ31<512, 257> = AnalyzerQ31::new(&HANN_Q31, config).unwrap();
    q31.push_counts(&counts);
    for (arith, want) in [
        ("q15", q15.spectrum(Scale::Rms, Correction::Amplitude)),
        ("q31", q31.spectrum(Scale::Rms, Correction::Amplitude)),
    ] {
        let args = [
            "--input",
            wav.to_str().unwrap(),
            "--n",
            "512",
            "--arith",
            arith,
        ];
        let (code, stdout, stderr) = run(&args);
        assert_eq!(code, 0, "{stderr}");
        let (header, rows) = parse_csv(&stdout);
        assert_same(&rows, &want);
        assert!(
            header.split(' ').any(|f| f == format!("arith={arith}")),
            "{header}"
        );
        assert!(
            !header.contains("quantised"),
            "16-bit PCM goes in as counts: {header}"
        );
        assert!(
            (rows[64].1 - 0.125f32.sqrt()).abs() < 1e-4,
            "{arith}: {:?}",
            rows[64]
        );
    }

    // A float WAV is quantised first (16 bits for q15, 24 for q31), and the header says so.
    let float_wav = dir.join("float.wav");
    let xf: Vec<f32> = x.iter().map(|&v| v as f32).collect();
    write_wav_f32(&float_wav, fs, &xf);
    for (arith, bits) in [("q15", 16), ("q31", 24)] {
        let args = [
            "--input",
            float_wav.to_str().unwrap(),
            "--n",
            "512",
            "--arith",
            arith,
        ];
        let (code, stdout, stderr) = run(&args);
        assert_eq!(code, 0, "{stderr}");
        let (header, rows) = parse_csv(&stdout);
        assert!(
            header.contains(&format!("quantised={bits}-bit")),
            "{header}"
        );
        assert!(
            stderr.contains(&format!("quantised to {bits}-bit")),
            "{stderr}"
        );
        assert!(
            (rows[64].1 - 0.125f32.sqrt()).abs() < 1e-4,
            "{arith}: {:?}",
            rows[64]
        );
    }
    // Through q15 the float WAV's 16-bit codes are exactly the PCM file's counts.
    let (_, from_float, _) = run(&[
        "--input",
        float_wav.to_str().unwrap(),
        "--n",
        "512",
        "--arith",
        "q15",
    ]);
    let (_, from_pcm, _) = run(&[
        "--input",
        wav.to_str().unwrap(),
        "--n",
        "512",
        "--arith",
        "q15",
    ]);
    assert_eq!(parse_csv(&from_float).1, parse_csv(&from_pcm).1);

    // Non-finite samples have no code: an error, and nothing written.
    let mut bad = xf.clone();
    bad[100] = f32::NAN;
    let bad_wav = dir.join("nan.wav");
    write_wav_f32(&bad_wav, fs, &bad);
    let out = dir.join("never.csv");
    let (code, _, stderr) = run(&[
        "--input",
        bad_wav.to_str().unwrap(),
        "--arith",
        "q15",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stderr.contains("NaN or infinite"), "{stderr}");
    assert!(!out.exists());
    let (code, _, stderr) = run(&["--input", wav.to_str().unwrap(), "--arith", "q7"]);
    assert_eq!(code, 2);
    assert!(stderr.contains("use f32, q15 or q31"), "{stderr}");
    let _ = std::fs::remove_dir_all(&dir);
}
