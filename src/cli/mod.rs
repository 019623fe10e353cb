//! Command-line interface: argument parsing, terminal output and exit codes.
//! Only this module (and `main.rs`) knows about clap, stderr and exit codes.

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Turn railway versine surveys into the as-built horizontal alignment.
#[derive(Debug, Parser)]
#[command(name = "chordline", version, about, long_about = None,
    after_help = "Exit status: 0 success, 1 input or usage error (the message says what to fix), 2 internal error.")]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Reconstruct the alignment from a versine survey file.
    Run,
}

/// Parse the command line, run, and map the outcome to an exit code.
pub fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() {
                ExitCode::from(1)
            } else {
                ExitCode::SUCCESS
            };
        }
    };
    match cli.command {
        Command::Run => ExitCode::SUCCESS,
    }
}
