//! `leakless`: the host tool for recordings and node reports. A thin dispatcher: each
//! subcommand is its own module; the numbers all come from the library, called exactly as
//! firmware calls it.
//!
//! Errors go to standard error as one line naming the file, the problem and the fix; the exit
//! code is 2 for a usage error and 1 for anything else, and nothing is written on failure.

mod engine;
mod failure;
mod input;
mod options;
mod output;
mod plot;
mod spectrum;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

/// Spectra, levels and reports of vibration recordings, computed by the leakless library as
/// a sensor node would compute them.
#[derive(Parser, Debug)]
#[command(name = "leakless", version, about, propagate_version = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// The averaged spectrum of a recording (CSV or JSON, and an SVG plot)
    Spectrum(spectrum::Args),
}

impl Command {
    fn name(&self) -> &'static str {
        match self {
            Command::Spectrum(_) => "spectrum",
        }
    }
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => return clap_exit(e),
    };
    let name = cli.command.name();
    let result = match &cli.command {
        Command::Spectrum(args) => spectrum::run(args),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(failure) => {
            eprintln!("leakless {name}: error: {failure}");
            ExitCode::from(failure.code)
        }
    }
}

/// clap's own help and version go out as clap prints them; its errors become one line (clap
/// adds usage and tips on further lines), with exit code 2.
fn clap_exit(e: clap::Error) -> ExitCode {
    use clap::error::ErrorKind;
    match e.kind() {
        ErrorKind::DisplayHelp | ErrorKind::DisplayVersion => {
            let _ = e.print();
            ExitCode::SUCCESS
        }
        ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand => {
            let _ = e.print();
            ExitCode::from(2)
        }
        _ => {
            let rendered = e.render().to_string();
            // The first paragraph is the message (a list of missing options spans lines).
            let first: Vec<&str> = rendered
                .lines()
                .skip_while(|l| l.trim().is_empty())
                .take_while(|l| !l.trim().is_empty())
                .map(|l| l.trim())
                .collect();
            let first = first.join(" ");
            let first = first.trim_start_matches("error: ");
            let tip = rendered
                .lines()
                .find_map(|l| l.trim().strip_prefix("tip: "))
                .map(|t| format!("; {t}"))
                .unwrap_or_default();
            eprintln!("leakless: error: {first}{tip} (see --help)");
            ExitCode::from(2)
        }
    }
}
