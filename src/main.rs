//! The `chordline` command-line tool: a thin layer over the library.
//!
//! Exit codes: 0 success, 1 input or usage error, 2 internal error.

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    cli::main()
}
