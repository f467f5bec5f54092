//! Helpers for the tests of the `leakless` binary: scratch folders, files the tests write
//! (WAV of every width and channel count, CSV), and running the real program.
#![allow(dead_code)]

use std::f64::consts::PI;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The built binary (Cargo builds it for integration tests of a crate with a `[[bin]]`).
pub fn leakless() -> Command {
    Command::new(env!("CARGO_BIN_EXE_leakless"))
}

/// Runs `leakless ARGS`: (exit code, stdout, stderr).
pub fn run(args: &[&str]) -> (i32, String, String) {
    let output = leakless().args(args).output().expect("run leakless");
    (
        output.status.code().unwrap_or(-1),
        String::from_utf8(output.stdout).expect("UTF-8 stdout"),
        String::from_utf8(output.stderr).expect("UTF-8 stderr"),
    )
}

/// A fresh folder for one test's files.
pub fn scratch(test: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("leakless-cli-{}-{test}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// `amplitude sin(2 pi f n / fs)` plus a tone of 0.01 at 3.3 f, in f64.
pub fn signal(len: usize, fs: f64, amplitude: f64, frequency_hz: f64) -> Vec<f64> {
    (0..len)
        .map(|n| {
            let t = n as f64 / fs;
            amplitude * (2.0 * PI * frequency_hz * t).sin()
                + 0.01 * (2.0 * PI * 3.3 * frequency_hz * t + 0.4).sin()
        })
        .collect()
}

/// Writes interleaved `samples` as a WAV of `channels` channels.
pub fn write_wav<S: hound::Sample + Copy>(
    path: &Path,
    fs: u32,
    channels: u16,
    bits: u16,
    format: hound::SampleFormat,
    samples: &[S],
) {
    let spec = hound::WavSpec {
        channels,
        sample_rate: fs,
        bits_per_sample: bits,
        sample_format: format,
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    for &s in samples {
        w.write_sample(s).unwrap();
    }
    w.finalize().unwrap();
}

/// A mono 16-bit PCM WAV.
pub fn write_wav_i16(path: &Path, fs: u32, samples: &[i16]) {
    write_wav(path, fs, 1, 16, hound::SampleFormat::Int, samples);
}

/// A mono 32-bit float WAV.
pub fn write_wav_f32(path: &Path, fs: u32, samples: &[f32]) {
    write_wav(path, fs, 1, 32, hound::SampleFormat::Float, samples);
}

/// `x` (a fraction of full scale) as the codes of a `bits`-bit converter, rounded.
pub fn codes(x: &[f64], bits: u32) -> Vec<i32> {
    let full = (1i64 << (bits - 1)) as f64;
    x.iter()
        .map(|v| (v * full).round().clamp(-full, full - 1.0) as i32)
        .collect()
}

/// The CSV a subcommand wrote: header fields and rows of numbers.
pub fn parse_csv(text: &str) -> (Vec<String>, Vec<Vec<f64>>) {
    let mut lines = text.lines();
    let header = lines
        .next()
        .expect("a header")
        .split(',')
        .map(|s| s.to_string())
        .collect();
    let rows = lines
        .map(|l| l.split(',').map(|v| v.parse().expect(v)).collect())
        .collect();
    (header, rows)
}

/// The (frequency, value) rows of a `spectrum` CSV as f32, and its header.
pub fn spectrum_rows(text: &str) -> (Vec<String>, Vec<(f32, f32)>) {
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .unwrap()
        .split(',')
        .map(|s| s.to_string())
        .collect();
    assert_eq!(header.len(), 2, "{header:?}");
    let rows = lines
        .map(|l| {
            let (f, v) = l.split_once(',').unwrap();
            (f.parse().unwrap(), v.parse().unwrap())
        })
        .collect();
    (header, rows)
}

/// Asserts that rows are the library's spectrum, bit for bit: the CLI prints every f32 in the
/// shortest form that reads back to the same f32.
pub fn assert_same<const BINS: usize>(rows: &[(f32, f32)], want: &leakless::Spectrum<BINS>) {
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
