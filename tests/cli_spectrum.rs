//! `leakless spectrum` end to end: the real binary on files the test writes, its numbers
//! against the library's own analyzers on the same samples (bit for bit), and its errors.

mod cli_support;

use cli_support::*;
use leakless::{
    Analyzer, Averaging, Config, Correction, OverloadPolicy, Scale, Shape, WhenDone, Window,
};

// The library result (reference: the library's own Analyzer, configured here by hand from
// the documented meaning of each option), and one analytic check: a sine of amplitude
// 0.5 full scale on an exact line (1000 Hz at fs = 8000, N = 512: line 64), times --gain 2,
// reads an RMS of 1/sqrt(2) with amplitude correction. Tolerance 1e-4: 16-bit quantisation
// (1/65536 of full scale per sample) and the small second tone's leakage (Hann sidelobes,
// -31 dB of 0.01 and falling, at 217 lines away far lower).
#[test]
fn wav16_matches_the_library_and_analytic_truth() {
    let dir = scratch("spectrum-wav16");
    let (fs, n, len) = (8000u32, 512usize, 24_000usize);
    let x = signal(len, fs as f64, 0.5, 1000.0);
    let counts: Vec<i16> = x.iter().map(|v| (v * 32768.0).round() as i16).collect();
    let wav = dir.join("tone.wav");
    write_wav_i16(&wav, fs, &counts);
    let out = dir.join("spectrum.csv");
    let common = [
        "spectrum",
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
    ];
    let mut args = common.to_vec();
    args.extend(["--out", out.to_str().unwrap()]);
    let (code, stdout, stderr) = run(&args);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.is_empty());
    let (header, rows) = spectrum_rows(&std::fs::read_to_string(&out).unwrap());
    // The column names carry the unit, so a spreadsheet needs no junk row.
    assert_eq!(header, ["frequency_hz", "rms_FS"]);

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
    assert!((rows[64].1 - 0.5f32.sqrt()).abs() < 1e-4, "{:?}", rows[64]);

    // The same run as JSON: every setting, and the same values.
    let mut args = common.to_vec();
    args.extend(["--format", "json"]);
    let (code, stdout, stderr) = run(&args);
    assert_eq!(code, 0, "{stderr}");
    let doc: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    let settings = &doc["settings"];
    for (key, value) in [
        ("scale", "rms"),
        ("correction", "amplitude"),
        ("unit", "FS"),
        ("window", "hann"),
        ("detrend", "mean"),
        ("arith", "f32"),
        ("encoding", "pcm16"),
        ("average", "linear:all"),
    ] {
        assert_eq!(settings[key], value, "{key} in {settings}");
    }
    assert_eq!(settings["n"], 512);
    assert_eq!(settings["sample_rate_hz"], 8000.0);
    assert_eq!(settings["overlap_samples"], 256);
    assert_eq!(settings["gain"], 2.0);
    assert_eq!(doc["averages"], blocks);
    let values = doc["values"].as_array().unwrap();
    for (k, v) in values.iter().enumerate() {
        assert_eq!(
            (v.as_f64().unwrap() as f32).to_bits(),
            want.values()[k].to_bits()
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

// reference: the library's Analyzer, configured by hand as the options say.
#[test]
fn float_wav_psd_with_exponential_average() {
    let dir = scratch("spectrum-wav32");
    let (fs, len) = (25_600u32, 40_000usize);
    let x: Vec<f32> = signal(len, fs as f64, 3.0, 1234.5)
        .iter()
        .map(|&v| v as f32)
        .collect();
    let wav = dir.join("float.wav");
    write_wav_f32(&wav, fs, &x);
    let (code, stdout, stderr) = run(&[
        "spectrum",
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
    let (header, rows) = spectrum_rows(&stdout);
    assert_eq!(header, ["frequency_hz", "psd_(m/s^2)^2/Hz"]);
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
    assert_same(&rows, &analyzer.spectrum(Scale::Psd, Correction::Energy));
    let _ = std::fs::remove_dir_all(&dir);
}

// reference: the library's Analyzer; CSV values are the samples themselves (no mapping).
#[test]
fn csv_input_needs_fs() {
    let dir = scratch("spectrum-csv");
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
        "spectrum",
        "--input",
        csv.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("--fs"), "{stderr}");
    assert!(!out.exists());

    let (code, stdout, stderr) = run(&[
        "spectrum",
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
    let (header, rows) = spectrum_rows(&stdout);
    assert_eq!(header, ["frequency_hz", "peak_units"]);
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
    // 125 Hz is line 32 of 256 at 1 kHz: a rectangular window reads the amplitude exactly,
    // 1.0 x gain 0.5 (analytic truth; f32 rounding of the samples, 1e-6).
    assert!((rows[32].1 - 0.5).abs() < 1e-5, "{:?}", rows[32]);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn option_errors_exit_2_and_write_nothing() {
    let dir = scratch("spectrum-errors");
    let counts: Vec<i16> = (0..4096).map(|n| ((n * 37) % 2000) as i16 - 1000).collect();
    let wav = dir.join("ok.wav");
    write_wav_i16(&wav, 8000, &counts);
    let csv = dir.join("ok.csv");
    std::fs::write(&csv, "1\n2\n3\n").unwrap();
    let w = wav.to_str().unwrap();
    let out = dir.join("out.csv");
    let plot = dir.join("out.svg");
    let cases: &[(&[&str], i32, &str)] = &[
        (
            &["--input", w, "--bogus"],
            2,
            "unexpected argument '--bogus'",
        ),
        (
            &["--input", w, "--n"],
            2,
            "a value is required for '--n <N>'",
        ),
        (&["--input", w, "--n", "1000"], 2, "not supported"),
        (&["--input", w, "--n", "8192"], 2, "not supported"),
        (&["--input", w, "--n", "many"], 2, "not a number"),
        (&["--input", w, "--overlap", "1.5"], 2, "0 <= FRACTION < 1"),
        (&["--input", w, "--overlap", "half"], 2, "not a number"),
        (&["--input", w, "--window", "hanning"], 2, "unknown window"),
        (&["--input", w, "--window", "kaiser:-1"], 2, "out of range"),
        (&["--input", w, "--window", "tukey:2"], 2, "out of range"),
        (
            &["--input", w, "--window", "cosine-sum:a"],
            2,
            "coefficients",
        ),
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
            "amplitude, energy",
        ),
        (&["--input", w, "--detrend", "linear"], 2, "mean, none"),
        (&["--input", w, "--arith", "q7"], 2, "f32, q15, q31"),
        (&["--input", w, "--gain", "0"], 2, "non-zero"),
        (&["--input", w, "--gain", "1e-12"], 2, "sensitivity"),
        (&["--input", w, "--fs", "8000"], 2, "carries its rate"),
        (&["--input", w, "--fs", "-1"], 2, "> 0"),
        (&["--input", w, "--channel", "1"], 2, "1 channels (0 to 0)"),
        (&["--input", w, "--column", "1"], 2, "--column is for CSV"),
        (
            &["--n", "256"],
            2,
            "required arguments were not provided: --input <PATH>",
        ),
        (
            &["--input", csv.to_str().unwrap(), "--fs", "100", "--n", "64"],
            1,
            "fewer than one block",
        ),
    ];
    for (args, code, phrase) in cases {
        let mut all: Vec<&str> = vec!["spectrum"];
        all.extend(args.iter());
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
        assert_eq!(
            stderr.lines().count(),
            1,
            "{args:?}: not one line: {stderr:?}"
        );
        assert!(stdout.is_empty(), "{args:?}");
        assert!(!out.exists() && !plot.exists(), "{args:?} wrote a file");
        assert_eq!(
            std::fs::read_dir(&dir).unwrap().count(),
            2,
            "{args:?} left a file"
        );
    }
    // Asking for more blocks than there are is a note, not an error.
    let (code, _, stderr) = run(&[
        "spectrum",
        "--input",
        w,
        "--n",
        "256",
        "--average",
        "linear:1000",
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stderr.contains("holds 31 usable blocks"), "{stderr}");
    // And the good case writes both.
    let (code, _, stderr) = run(&[
        "spectrum",
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
    assert!(std::fs::read_to_string(&plot).unwrap().contains("<svg"));
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .starts_with("frequency_hz,rms_FS\n"));
    let (code, stdout, _) = run(&["spectrum", "--help"]);
    assert_eq!(code, 0);
    assert!(stdout.contains("--average <MODE>") && stdout.contains("--gain <FACTOR>"));
    let _ = std::fs::remove_dir_all(&dir);
}

// --arith: the fixed-point paths, exactly as firmware runs them. Reference: the library's
// AnalyzerQ15 / AnalyzerQ31 configured by hand as the options say, and the analytic level
// (0.5 full scale on line 64 reads 0.5/sqrt(2) rms, within 1e-4 as in
// `wav16_matches_the_library_and_analytic_truth`).
#[test]
fn arith_q15_and_q31_match_the_fixed_analyzers() {
    use leakless::{AnalyzerQ15, AnalyzerQ31, WindowQ15, WindowQ31};
    let dir = scratch("spectrum-arith");
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
            "spectrum",
            "--input",
            wav.to_str().unwrap(),
            "--n",
            "512",
            "--arith",
            arith,
        ];
        let (code, stdout, stderr) = run(&args);
        assert_eq!(code, 0, "{stderr}");
        assert!(
            !stderr.contains("quantised"),
            "16-bit PCM goes in as counts: {stderr}"
        );
        let (_, rows) = spectrum_rows(&stdout);
        assert_same(&rows, &want);
        assert!(
            (rows[64].1 - 0.125f32.sqrt()).abs() < 1e-4,
            "{arith}: {:?}",
            rows[64]
        );
    }

    // A float WAV is quantised first (16 bits for q15, 24 for q31), and a note says so.
    let float_wav = dir.join("float.wav");
    let xf: Vec<f32> = x.iter().map(|&v| v as f32).collect();
    write_wav_f32(&float_wav, fs, &xf);
    for (arith, bits) in [("q15", 16), ("q31", 24)] {
        let args = [
            "spectrum",
            "--input",
            float_wav.to_str().unwrap(),
            "--n",
            "512",
            "--arith",
            arith,
        ];
        let (code, stdout, stderr) = run(&args);
        assert_eq!(code, 0, "{stderr}");
        assert!(
            stderr.contains(&format!("quantised to {bits}-bit")),
            "{stderr}"
        );
        let (_, rows) = spectrum_rows(&stdout);
        assert!(
            (rows[64].1 - 0.125f32.sqrt()).abs() < 1e-4,
            "{arith}: {:?}",
            rows[64]
        );
    }
    // Through q15 the float WAV's 16-bit codes are exactly the PCM file's counts.
    let q15_of = |path: &std::path::Path| {
        let text = run(&[
            "spectrum",
            "--input",
            path.to_str().unwrap(),
            "--n",
            "512",
            "--arith",
            "q15",
        ])
        .1;
        spectrum_rows(&text).1
    };
    assert_eq!(q15_of(&float_wav), q15_of(&wav));

    // Non-finite samples have no code: an error, and nothing written.
    let mut bad = xf.clone();
    bad[100] = f32::NAN;
    let bad_wav = dir.join("nan.wav");
    write_wav_f32(&bad_wav, fs, &bad);
    let out = dir.join("never.csv");
    let (code, _, stderr) = run(&[
        "spectrum",
        "--input",
        bad_wav.to_str().unwrap(),
        "--arith",
        "q15",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stderr.contains("sample 100 is NaN or infinite"), "{stderr}");
    assert!(!out.exists());
    let _ = std::fs::remove_dir_all(&dir);
}
