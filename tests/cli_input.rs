//! Input done right, end to end through the real binary: every WAV width (16, 24 and 32-bit
//! PCM and 32-bit float) with 1 and 3 channels and CSV with 1 and 3 columns give the library's
//! numbers bit for bit; every bad input of the list below exits non-zero with a one-line
//! message naming the problem and leaves no file behind.

mod cli_support;

use std::path::Path;

use cli_support::*;
use leakless::{
    Analyzer, Averaging, Config, Correction, OverloadPolicy, Scale, Shape, WhenDone, Window,
};

const FS: u32 = 8000;
const LEN: usize = 6000;
/// N = 256, 50 % overlap: blocks in LEN samples.
const BLOCKS: u32 = ((LEN - 256) / 128 + 1) as u32;

/// Channel `c` of the test recordings: a tone of amplitude 0.2 (c + 1) full scale at
/// 500 (c + 1) Hz, so a wrong channel or a mis-decoded sample shows in the numbers.
fn channel_signal(c: usize) -> Vec<f64> {
    signal(LEN, FS as f64, 0.2 * (c + 1) as f64, 500.0 * (c + 1) as f64)
}

fn interleave<T: Copy>(channels: &[Vec<T>]) -> Vec<T> {
    (0..channels[0].len())
        .flat_map(|i| channels.iter().map(move |c| c[i]))
        .collect()
}

/// The library's analyzer on the same values, configured as the options document: N = 256,
/// Hann, 50 % overlap, linear over every block, rms, amplitude correction.
fn reference(
    values: &[f32],
    sensitivity: f32,
    full_scale: Option<f32>,
    unit: &'static str,
) -> leakless::Spectrum<129> {
    static HANN: Window<256> = Window::new(Shape::Hann);
    let mut config = Config::new(FS as f32)
        .with_overlap(128)
        .with_averaging(Averaging::Linear {
            count: BLOCKS,
            when_done: WhenDone::Hold,
        })
        .with_sensitivity(sensitivity)
        .with_unit(unit);
    if let Some(full) = full_scale {
        config = config
            .with_full_scale(full)
            .with_overload_policy(OverloadPolicy::Average);
    }
    let mut analyzer: Analyzer<256, 129> = Analyzer::new(&HANN, config).unwrap();
    analyzer.push(values);
    analyzer.spectrum(Scale::Rms, Correction::Amplitude)
}

fn spectrum_of(path: &Path, extra: &[&str]) -> Vec<(f32, f32)> {
    let mut args = vec!["spectrum", "--input", path.to_str().unwrap(), "--n", "256"];
    args.extend(extra);
    let (code, stdout, stderr) = run(&args);
    assert_eq!(code, 0, "{args:?}: {stderr}");
    spectrum_rows(&stdout).1
}

// Reference: the library's Analyzer on the codes the test wrote, as the tool documents: 16-bit
// counts through `push_counts` (which is `push` of the counts as f32) with sensitivity
// 1 / 32768; 24 and 32-bit codes as fractions of full scale (code / 2^(bits-1) in f32);
// floats as they are. And
// an analytic check per channel: the tone of amplitude A on line 16 (c + 1) reads A / sqrt(2)
// rms within 1e-4 (16-bit quantisation and the small tone's leakage, as in cli_spectrum.rs).
#[test]
fn every_wav_width_and_channel_count_matches_the_library() {
    let dir = scratch("input-widths");
    let signals: Vec<Vec<f64>> = (0..3).map(channel_signal).collect();
    for channels in [1usize, 3] {
        for (label, bits) in [
            ("pcm16", 16u16),
            ("pcm24", 24),
            ("pcm32", 32),
            ("float", 32),
        ] {
            let wav = dir.join(format!("{label}-{channels}.wav"));
            let float = label == "float";
            let per_channel_codes: Vec<Vec<i32>> = signals[..channels]
                .iter()
                .map(|x| codes(x, bits as u32))
                .collect();
            if float {
                let values: Vec<Vec<f32>> = signals[..channels]
                    .iter()
                    .map(|x| x.iter().map(|&v| v as f32).collect())
                    .collect();
                write_wav(
                    &wav,
                    FS,
                    channels as u16,
                    32,
                    hound::SampleFormat::Float,
                    &interleave(&values),
                );
            } else if bits == 16 {
                let values: Vec<Vec<i16>> = per_channel_codes
                    .iter()
                    .map(|c| c.iter().map(|&v| v as i16).collect())
                    .collect();
                write_wav(
                    &wav,
                    FS,
                    channels as u16,
                    16,
                    hound::SampleFormat::Int,
                    &interleave(&values),
                );
            } else {
                write_wav(
                    &wav,
                    FS,
                    channels as u16,
                    bits,
                    hound::SampleFormat::Int,
                    &interleave(&per_channel_codes),
                );
            }
            for c in 0..channels {
                let channel = c.to_string();
                let extra: Vec<&str> = if channels > 1 {
                    vec!["--channel", &channel]
                } else {
                    vec![]
                };
                let rows = spectrum_of(&wav, &extra);
                let want = if float {
                    let values: Vec<f32> = signals[c].iter().map(|&v| v as f32).collect();
                    reference(&values, 1.0, None, "units")
                } else {
                    let full = (1u64 << (bits - 1)) as f32;
                    if bits == 16 {
                        let values: Vec<f32> =
                            per_channel_codes[c].iter().map(|&v| v as f32).collect();
                        reference(&values, 1.0 / full, Some(full - 1.0), "FS")
                    } else {
                        let values: Vec<f32> = per_channel_codes[c]
                            .iter()
                            .map(|&v| v as f32 * (1.0 / full))
                            .collect();
                        reference(&values, 1.0, Some((full - 1.0) / full), "FS")
                    }
                };
                assert_same(&rows, &want);
                let line = 16 * (c + 1);
                let amplitude = 0.2 * (c + 1) as f32;
                assert!(
                    (rows[line].1 - amplitude / 2f32.sqrt()).abs() < 1e-4,
                    "{label} {channels} ch, channel {c}: {:?}",
                    rows[line]
                );
            }
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
}

// Reference: the library's Analyzer on the CSV's values (parsed as f32, as the file says).
#[test]
fn csv_with_one_and_three_columns() {
    let dir = scratch("input-csv");
    let signals: Vec<Vec<f32>> = (0..3)
        .map(|c| channel_signal(c).iter().map(|&v| v as f32).collect())
        .collect();
    let one = dir.join("one.csv");
    let mut text = String::new();
    for v in &signals[0] {
        text.push_str(&format!("{v}\n"));
    }
    std::fs::write(&one, text).unwrap();
    let three = dir.join("three.csv");
    let mut text = String::from("# a comment line is skipped\nx_m/s^2,y_m/s^2,z_m/s^2\n");
    for ((x, y), z) in signals[0].iter().zip(&signals[1]).zip(&signals[2]) {
        text.push_str(&format!("{x},{y},{z}\r\n"));
    }
    std::fs::write(&three, text).unwrap();

    let rows = spectrum_of(&one, &["--fs", "8000"]);
    assert_same(&rows, &reference(&signals[0], 1.0, None, "units"));
    for (choice, c) in [("x_m/s^2", 0), ("1", 1), ("z_m/s^2", 2)] {
        let rows = spectrum_of(&three, &["--fs", "8000", "--column", choice]);
        assert_same(&rows, &reference(&signals[c], 1.0, None, "units"));
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// A WAV header of `format_tag` and `bits`, claiming `data_bytes` of data, followed by
/// `actual` bytes of zeros.
fn raw_wav(format_tag: u16, channels: u16, bits: u16, data_bytes: u32, actual: usize) -> Vec<u8> {
    let block_align = channels * bits.div_ceil(8);
    let mut v = Vec::new();
    v.extend(b"RIFF");
    v.extend((36 + data_bytes).to_le_bytes());
    v.extend(b"WAVEfmt ");
    v.extend(16u32.to_le_bytes());
    v.extend(format_tag.to_le_bytes());
    v.extend(channels.to_le_bytes());
    v.extend(FS.to_le_bytes());
    v.extend((FS * block_align as u32).to_le_bytes());
    v.extend(block_align.to_le_bytes());
    v.extend(bits.to_le_bytes());
    v.extend(b"data");
    v.extend(data_bytes.to_le_bytes());
    v.extend(std::iter::repeat_n(0u8, actual));
    v
}

/// A folder this process cannot write in: a read-only folder, or, when the tests run as root
/// (who may write in any folder), a folder of the kernel's that refuses new files.
fn unwritable_folder(dir: &Path) -> std::path::PathBuf {
    use std::os::unix::fs::PermissionsExt;
    let ro = dir.join("read-only");
    std::fs::create_dir_all(&ro).unwrap();
    std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o555)).unwrap();
    let probe = ro.join("probe");
    if std::fs::write(&probe, b"x").is_err() {
        return ro;
    }
    let _ = std::fs::remove_file(&probe);
    let sys = Path::new("/sys");
    assert!(
        std::fs::write(sys.join("leakless-probe"), b"x").is_err(),
        "no folder refuses writes here (root, and /sys is writable): cannot test it"
    );
    sys.to_path_buf()
}

// The bad-input list: each exits non-zero with a one-line message naming the problem, writes
// nothing, and leaves the folder as it was.
#[test]
fn bad_inputs_exit_non_zero_name_the_problem_and_leave_nothing() {
    let dir = scratch("input-bad");
    let good: Vec<i16> = codes(&channel_signal(0), 16)
        .iter()
        .map(|&c| c as i16)
        .collect();
    let wav = dir.join("good.wav");
    write_wav_i16(&wav, FS, &good);
    let three_ch = dir.join("three.wav");
    write_wav(
        &three_ch,
        FS,
        3,
        16,
        hound::SampleFormat::Int,
        &interleave(&[good.clone(), good.clone(), good.clone()]),
    );
    let files: &[(&str, &[u8])] = &[
        ("empty.wav", b""),
        ("empty.csv", b""),
        ("header-cut.wav", &raw_wav(1, 1, 16, 2000, 0)[..20]),
        ("data-beyond-end.wav", &raw_wav(1, 1, 16, 200_000, 1000)),
        ("alaw.wav", &raw_wav(6, 1, 8, 1000, 1000)),
        ("float64.wav", &raw_wav(3, 1, 64, 8000, 8000)),
        ("text.wav", b"this is not a WAV file, just text\n"),
        ("two-columns.csv", b"time,value\n0,1.5\n0.001,2.5\n"),
        ("decimal-comma.csv", b"1,5\n2,25\n-0,125\n"),
        ("semicolons.csv", b"value;other\n1,5;2,5\n"),
        ("cr-only.csv", b"1.5\r2.5\r3.5\r"),
        ("nan.csv", b"1.5\nNaN\n2.5\n"),
        ("inf.csv", b"1.5\n2.5\n-inf\n"),
        ("text-value.csv", b"1.5\ntwo\n"),
        ("header-only.csv", b"acceleration\n"),
        ("ragged.csv", b"a,b\n1,2\n3\n"),
        ("recording.flac", b"fLaC"),
    ];
    for (name, bytes) in files {
        std::fs::write(dir.join(name), bytes).unwrap();
    }
    let p = |name: &str| dir.join(name).to_str().unwrap().to_string();
    let unwritable = unwritable_folder(&dir);
    let out_in_unwritable = unwritable.join("out.csv");
    let w = p("good.wav");
    let cases: Vec<(Vec<String>, i32, &str)> = vec![
        (
            vec!["--input".into(), p("empty.wav")],
            1,
            "the file is empty",
        ),
        (
            vec![
                "--input".into(),
                p("empty.csv"),
                "--fs".into(),
                "100".into(),
            ],
            1,
            "the file is empty",
        ),
        (
            vec!["--input".into(), p("header-cut.wav")],
            1,
            "ends inside its WAV header",
        ),
        (
            vec!["--input".into(), p("data-beyond-end.wav")],
            1,
            "the header promises 100000 frames but the file holds 500",
        ),
        (
            vec!["--input".into(), p("alaw.wav")],
            1,
            "unsupported WAV layout",
        ),
        (
            vec!["--input".into(), p("float64.wav")],
            1,
            "unsupported WAV",
        ),
        (vec!["--input".into(), p("text.wav")], 1, "not a WAV file"),
        (
            vec![
                "--input".into(),
                p("two-columns.csv"),
                "--fs".into(),
                "1000".into(),
            ],
            2,
            "2 columns (\"time\", \"value\"); choose one with --column",
        ),
        (
            vec![
                "--input".into(),
                p("two-columns.csv"),
                "--fs".into(),
                "1000".into(),
                "--column".into(),
                "speed".into(),
            ],
            2,
            "no such column; its columns are \"time\", \"value\"",
        ),
        (
            vec![
                "--input".into(),
                p("decimal-comma.csv"),
                "--fs".into(),
                "1000".into(),
            ],
            1,
            "a decimal comma?",
        ),
        (
            vec![
                "--input".into(),
                p("semicolons.csv"),
                "--fs".into(),
                "1000".into(),
            ],
            1,
            "separated by semicolons",
        ),
        (
            vec![
                "--input".into(),
                p("cr-only.csv"),
                "--fs".into(),
                "1000".into(),
            ],
            1,
            "bare carriage return",
        ),
        (
            vec!["--input".into(), p("nan.csv"), "--fs".into(), "1000".into()],
            1,
            "nan.csv:2: \"NaN\" is not a finite sample",
        ),
        (
            vec!["--input".into(), p("inf.csv"), "--fs".into(), "1000".into()],
            1,
            "inf.csv:3: \"-inf\" is not a finite sample",
        ),
        (
            vec![
                "--input".into(),
                p("text-value.csv"),
                "--fs".into(),
                "1000".into(),
            ],
            1,
            "text-value.csv:2: not a number: \"two\"",
        ),
        (
            vec![
                "--input".into(),
                p("header-only.csv"),
                "--fs".into(),
                "1000".into(),
            ],
            1,
            "a header but no samples",
        ),
        (
            vec![
                "--input".into(),
                p("ragged.csv"),
                "--fs".into(),
                "1000".into(),
                "--column".into(),
                "a".into(),
            ],
            1,
            "ragged.csv:3: 1 fields where the rows before have 2",
        ),
        (
            vec!["--input".into(), p("recording.flac")],
            1,
            "unknown file type",
        ),
        (
            vec!["--input".into(), p("missing.wav")],
            1,
            "missing.wav: no such file",
        ),
        (
            vec!["--input".into(), p("three.wav")],
            2,
            "3 channels; choose one with --channel (0 to 2)",
        ),
        (
            vec![
                "--input".into(),
                p("three.wav"),
                "--channel".into(),
                "3".into(),
            ],
            2,
            "--channel 3",
        ),
        (
            vec!["--input".into(), w.clone(), "--out".into(), w.clone()],
            2,
            "is the input file",
        ),
        (
            vec![
                "--input".into(),
                w.clone(),
                "--plot".into(),
                format!(
                    "{}/../{}/good.wav",
                    dir.display(),
                    dir.file_name().unwrap().to_str().unwrap()
                ),
            ],
            2,
            "is the input file",
        ),
        (
            vec![
                "--input".into(),
                w.clone(),
                "--out".into(),
                p("x.csv"),
                "--plot".into(),
                p("x.csv"),
            ],
            2,
            "writes the same file",
        ),
        (
            vec![
                "--input".into(),
                w.clone(),
                "--out".into(),
                p("no/such/folder/x.csv"),
            ],
            1,
            "does not exist",
        ),
        (
            vec![
                "--input".into(),
                w.clone(),
                "--out".into(),
                out_in_unwritable.to_str().unwrap().into(),
            ],
            1,
            "cannot write in",
        ),
        (
            vec!["--input".into(), w.clone(), "--out".into(), p("")],
            2,
            "is a folder",
        ),
    ];
    let before = listing(&dir);
    for (args, code, phrase) in &cases {
        let mut all = vec!["spectrum"];
        all.extend(args.iter().map(|s| s.as_str()));
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
        assert!(stdout.is_empty(), "{args:?}: {stdout}");
        assert_eq!(listing(&dir), before, "{args:?} left a file");
        assert!(!out_in_unwritable.exists());
    }
    // A good run still replaces an existing output, and only by a whole one.
    let out = dir.join("out.csv");
    std::fs::write(&out, "old").unwrap();
    let (code, _, stderr) = run(&[
        "spectrum",
        "--input",
        &w,
        "--n",
        "256",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .starts_with("frequency_hz,rms_FS\n"));
    let _ = std::fs::remove_dir_all(&dir);
}

/// Every file under `dir` (names only), sorted.
fn listing(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}
