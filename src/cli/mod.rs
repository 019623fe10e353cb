//! Command-line interface: argument parsing, terminal output and exit codes.
//! Only this module (and `main.rs`) knows about clap, stderr and exit codes.

mod batch;
mod demo;
mod run;
mod simulate;
mod util;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Turn railway versine surveys into the as-built horizontal alignment.
/// The exit codes, as `--help` states them.
const EXIT_CODES: &str = "Exit status: 0 success; 1 input or usage error (the message names the file, line and column and says what to fix); 2 internal error (please report it).";

#[derive(Debug, Parser)]
#[command(name = "chordline", version, about, long_about = None, after_help = EXIT_CODES)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Reconstruct the alignment from a versine survey file and write an output folder.
    #[command(after_help = EXIT_CODES)]
    Run(run::RunCommand),
    /// Run many surveys with the same set-up in parallel, one output folder each.
    #[command(after_help = EXIT_CODES)]
    Batch(batch::BatchArgs),
    /// Run the whole job on the bundled demo survey and say where it wrote.
    #[command(after_help = EXIT_CODES)]
    Demo(demo::DemoArgs),
    /// Write the survey a chord would measure on a known design (exact geometry, optional noise).
    #[command(after_help = EXIT_CODES)]
    Simulate(simulate::SimulateArgs),
}

/// Outcome of a command that failed, with the exit code it maps to.
#[derive(Debug)]
pub enum Failure {
    /// Bad input or usage: exit 1.
    Input(anyhow::Error),
    /// A bug or an environment failure: exit 2.
    Internal(anyhow::Error),
}

impl<E: Into<anyhow::Error>> From<E> for Failure {
    fn from(e: E) -> Self {
        Failure::Input(e.into())
    }
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
    let result = match cli.command {
        Command::Run(a) => run::run(a),
        Command::Batch(a) => batch::run(a),
        Command::Demo(a) => demo::run(a),
        Command::Simulate(a) => simulate::run(a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(Failure::Input(e)) => {
            eprintln!("error: {}", chain_text(&e));
            ExitCode::from(1)
        }
        Err(Failure::Internal(e)) => {
            eprintln!(
                "internal error: {}\nThis is a bug in chordline; please report it with the input that caused it.",
                chain_text(&e)
            );
            ExitCode::from(2)
        }
    }
}

/// An error and its causes, each cause once: a cause whose text the message
/// already holds (many messages quote the operating system's error) is not
/// repeated.
fn chain_text(e: &anyhow::Error) -> String {
    let mut text = e.to_string();
    for cause in e.chain().skip(1) {
        let c = cause.to_string();
        if !text.contains(&c) {
            text.push_str(": ");
            text.push_str(&c);
        }
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn command_line_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
