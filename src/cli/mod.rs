//! Command-line interface: argument parsing, terminal output and exit codes.
//! Only this module (and `main.rs`) knows about clap, stderr and exit codes.

mod batch;
mod check;
mod demo;
mod run;
mod simulate;
mod util;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Turn railway versine surveys into the as-built horizontal alignment.

#[derive(Debug, Parser)]
#[command(name = "chordline", version, about, long_about = None, after_help = TOP_EXAMPLES)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

/// Examples shown by `chordline --help`.
const TOP_EXAMPLES: &str = "Examples:
  chordline demo
  chordline run survey.csv --chord 20m --rail left --out results
  chordline check survey.csv --chord 20m --rail left
  chordline batch surveys/*.csv --chord 20m --rail left --out results

Exit status: 0 success; 1 input or usage error (the message names the file, line and column and says what to fix); 2 internal error (please report it).";

/// Examples shown by `chordline run --help`.
const RUN_EXAMPLES: &str = "Examples:
  chordline run survey.csv --chord 20m --rail left --out results
  chordline run survey.csv --chord 62ft --rail right --out results --force
  chordline run survey.csv --chord 20m --rail L --control control.csv --crs EPSG:25832 --out placed
  chordline run survey.csv --chord 20m --rail left --fixed 12500m --max-slew 5cm --out slews
  chordline run - --chord 20m --rail left --out results < survey.csv > summary.txt

The summary goes to standard output, warnings and errors to standard error.

Exit status: 0 success; 1 input or usage error (the message names the file, line and column and says what to fix); 2 internal error (please report it).";

/// Examples shown by `chordline batch --help`.
const BATCH_EXAMPLES: &str = "Examples:
  chordline batch surveys/*.csv --chord 20m --rail left --out results
  chordline batch a.csv b.csv --chord 20m --rail left --out results --jobs 2 --quiet

Progress: a bar on a terminal; one line per finished survey when standard error is not a terminal; nothing with --quiet.

Exit status: 0 success; 1 input or usage error (the message names the file, line and column and says what to fix); 2 internal error (please report it).";

/// Examples shown by `chordline demo --help`.
const DEMO_EXAMPLES: &str = "Examples:
  chordline demo
  chordline demo --out my-demo --force

Exit status: 0 success; 1 input or usage error (the message names the file, line and column and says what to fix); 2 internal error (please report it).";

/// Examples shown by `chordline simulate --help`.
const SIMULATE_EXAMPLES: &str = "Examples:
  chordline simulate design.json survey.csv
  chordline simulate design.json --noise 1mm --resolution 1mm --seed 7 --out survey.csv --truth truth.csv
  chordline simulate design.json - | chordline run - --chord 20m --rail left --out results

Exit status: 0 success; 1 input or usage error (the message names the file, line and column and says what to fix); 2 internal error (please report it).";

/// Examples shown by `chordline check --help`.
const CHECK_EXAMPLES: &str = "Examples:
  chordline check survey.csv --chord 20m --rail left
  chordline check surveys/*.csv --chord 20m --rail left --quiet

Writes nothing. Exit status: 0 every survey can be run; 1 a survey is refused (the message names the file, line and column and says what to fix), or a usage error; 2 internal error (please report it).";

#[derive(Debug, Subcommand)]
enum Command {
    /// Reconstruct the alignment from a versine survey file and write an output folder.
    #[command(after_help = RUN_EXAMPLES)]
    Run(run::RunCommand),
    /// Read and check survey files without running them: readings, spacing, chord, gaps, outliers, warnings.
    #[command(after_help = CHECK_EXAMPLES)]
    Check(check::CheckArgs),
    /// Run many surveys with the same set-up in parallel, one output folder each.
    #[command(after_help = BATCH_EXAMPLES)]
    Batch(batch::BatchArgs),
    /// Run the whole job on the bundled demo survey and say where it wrote.
    #[command(after_help = DEMO_EXAMPLES)]
    Demo(demo::DemoArgs),
    /// Write the survey a chord would measure on a known design (exact geometry, optional noise).
    #[command(after_help = SIMULATE_EXAMPLES)]
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
        Command::Check(a) => check::run(a),
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
