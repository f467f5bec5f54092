//! A command-line analyzer for recordings: the averaged spectrum of a WAV (16-bit PCM or
//! 32-bit float) or one-column CSV file, as CSV, and optionally an SVG plot.
//!
//! ```text
//! cargo run --release --example analyze -- --input recording.wav --n 4096 --window flattop \
//!     --overlap 0.75 --scale rms --out spectrum.csv --plot spectrum.svg
//! cargo run --release --example analyze -- --help
//! ```
//!
//! The options and the CSV layout are in `support/cli.rs` (`USAGE`), which
//! `tests/analyze_cli.rs` also runs in process.

#[path = "support/cli.rs"]
mod cli;
#[path = "support/input.rs"]
mod input;
#[path = "support/plot.rs"]
mod plot;

use std::process::ExitCode;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let code = cli::main_with(&args, &mut std::io::stdout(), &mut std::io::stderr());
    ExitCode::from(code)
}
