//! Memory does not grow with the recording: a generated 1-hour WAV and a 1-hour CSV stream
//! through the tool's own reader and analysis (its modules, compiled into this test) with
//! the same peak allocation as 1-minute files, counted by a global allocator.
//!
//! Only the measuring thread's allocations are counted, so the harness's (and the plot
//! module's unit test, compiled in here too) are not.
#![allow(dead_code)]

#[path = "../src/bin/leakless/engine.rs"]
mod engine;
#[path = "../src/bin/leakless/failure.rs"]
mod failure;
#[path = "../src/bin/leakless/input.rs"]
mod input;
#[path = "../src/bin/leakless/options.rs"]
mod options;
#[path = "../src/bin/leakless/output.rs"]
mod output;
#[path = "../src/bin/leakless/plot.rs"]
mod plot;
#[path = "../src/bin/leakless/spectrum.rs"]
mod spectrum;

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicIsize, Ordering};

use clap::Parser;

/// Counts the bytes the measuring thread allocates, net of what it frees, and the most at
/// any time. Other threads (the test harness's) are not counted.
struct CountingAllocator;

static CURRENT: AtomicIsize = AtomicIsize::new(0);
static PEAK: AtomicIsize = AtomicIsize::new(0);

thread_local! {
    // `const`: no lazy initialisation, so reading it never allocates.
    static MEASURING: Cell<bool> = const { Cell::new(false) };
}

fn measuring() -> bool {
    MEASURING.with(|m| m.get())
}

fn grew(bytes: usize) {
    if measuring() {
        let now = CURRENT.fetch_add(bytes as isize, Ordering::SeqCst) + bytes as isize;
        PEAK.fetch_max(now, Ordering::SeqCst);
    }
}

fn shrank(bytes: usize) {
    if measuring() {
        CURRENT.fetch_sub(bytes as isize, Ordering::SeqCst);
    }
}

// SAFETY: every call is forwarded to the system allocator unchanged; only counters are added.
unsafe impl GlobalAlloc for CountingAllocator {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // SAFETY: the caller's contract for `alloc` is passed on as it is.
        let p = unsafe { System.alloc(layout) };
        if !p.is_null() {
            grew(layout.size());
        }
        p
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: as for `alloc`.
        unsafe { System.dealloc(ptr, layout) };
        shrank(layout.size());
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        // SAFETY: as for `alloc`.
        let p = unsafe { System.realloc(ptr, layout, new_size) };
        if !p.is_null() {
            shrank(layout.size());
            grew(new_size);
        }
        p
    }
}

#[global_allocator]
static ALLOCATOR: CountingAllocator = CountingAllocator;

/// The options of `leakless spectrum ARGS`, parsed as the binary parses them.
#[derive(Parser)]
struct Cli {
    #[command(flatten)]
    args: spectrum::Args,
}

/// A tone and a little deterministic wobble, as 16-bit counts, sample `n`.
fn sample(n: u64, fs: f64) -> f64 {
    let t = n as f64 / fs;
    0.3 * (2.0 * std::f64::consts::PI * 97.0 * t).sin()
        + 0.01 * ((n * 7919 % 1000) as f64 / 1000.0 - 0.5)
}

fn write_wav(path: &Path, fs: u32, seconds: u64) {
    let spec = hound::WavSpec {
        channels: 1,
        sample_rate: fs,
        bits_per_sample: 16,
        sample_format: hound::SampleFormat::Int,
    };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    for n in 0..fs as u64 * seconds {
        w.write_sample((sample(n, fs as f64) * 32768.0).round() as i16)
            .unwrap();
    }
    w.finalize().unwrap();
}

fn write_csv(path: &Path, fs: u32, seconds: u64) {
    let mut w = std::io::BufWriter::new(std::fs::File::create(path).unwrap());
    writeln!(w, "time_s,acceleration_m/s^2").unwrap();
    for n in 0..fs as u64 * seconds {
        writeln!(
            w,
            "{},{}",
            n as f64 / fs as f64,
            sample(n, fs as f64) as f32
        )
        .unwrap();
    }
}

/// Peak bytes allocated above what was allocated before, while the spectrum of `path` is
/// computed: parse, open, stream every chunk through the analyzer, read the spectrum.
fn peak_while_analysing(path: &Path, extra: &[&str]) -> (usize, u32) {
    CURRENT.store(0, Ordering::SeqCst);
    PEAK.store(0, Ordering::SeqCst);
    MEASURING.with(|m| m.set(true));
    let mut argv = vec![
        "spectrum",
        "--input",
        path.to_str().unwrap(),
        "--n",
        "4096",
        "--overlap",
        "0",
    ];
    argv.extend(extra);
    let cli = Cli::parse_from(argv);
    let analysis = cli.args.analysis.resolve().unwrap();
    let mut recording = input::Recording::open(&cli.args.input, input::Channels::One).unwrap();
    let run = spectrum::analyze::<4096, 2049>(&analysis, &mut recording).unwrap();
    let averages = run.spectrum.averages();
    drop(run);
    drop(recording);
    MEASURING.with(|m| m.set(false));
    (PEAK.load(Ordering::SeqCst) as usize, averages)
}

fn scratch() -> PathBuf {
    let dir = std::env::temp_dir().join(format!("leakless-cli-{}-memory", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

// Bound: the 1-hour peak may exceed the 1-minute peak by at most 1 KiB. Both runs make the
// same allocations (chunk buffers of 4096 frames, the file buffer, one window table, the
// option strings); the only length-dependent sizes are the CSV row record, which grows to
// the longest row (a few bytes longer for the hour's larger time stamps). A reader that kept
// the samples would need 60 times the minute's samples: 14 MB for the WAV, 2.9 MB for the
// CSV.
#[test]
fn an_hour_streams_in_the_memory_of_a_minute() {
    let dir = scratch();
    let (wav_fs, csv_fs) = (2000u32, 200u32);
    let (minute_wav, hour_wav) = (dir.join("minute.wav"), dir.join("hour.wav"));
    let (minute_csv, hour_csv) = (dir.join("minute.csv"), dir.join("hour.csv"));
    write_wav(&minute_wav, wav_fs, 60);
    write_wav(&hour_wav, wav_fs, 3600);
    write_csv(&minute_csv, csv_fs, 60);
    write_csv(&hour_csv, csv_fs, 3600);

    let (wav_minute, blocks_minute) = peak_while_analysing(&minute_wav, &[]);
    let (wav_hour, blocks_hour) = peak_while_analysing(&hour_wav, &[]);
    let csv_args = ["--fs", "200", "--column", "acceleration_m/s^2"];
    let (csv_minute, _) = peak_while_analysing(&minute_csv, &csv_args);
    let (csv_hour, csv_blocks_hour) = peak_while_analysing(&hour_csv, &csv_args);
    println!(
        "peak allocation: WAV 1 min {wav_minute} B, 1 h {wav_hour} B ({blocks_hour} blocks); \
         CSV 1 min {csv_minute} B, 1 h {csv_hour} B ({csv_blocks_hour} blocks)"
    );
    // The hour really was analysed, every block of it.
    assert_eq!(blocks_minute, 60 * wav_fs / 4096);
    assert_eq!(blocks_hour, 3600 * wav_fs / 4096);
    assert_eq!(csv_blocks_hour, 3600 * csv_fs / 4096);
    assert!(
        wav_hour <= wav_minute + 1024,
        "WAV: {wav_hour} B against {wav_minute} B"
    );
    assert!(
        csv_hour <= csv_minute + 1024,
        "CSV: {csv_hour} B against {csv_minute} B"
    );
    // And the minute itself is small: well under one recording's samples.
    assert!(wav_minute < 256 * 1024, "{wav_minute} B");
    let _ = std::fs::remove_dir_all(&dir);
}
