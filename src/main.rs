//! The `chordline` command-line tool: a thin layer over the library.
//!
//! Exit codes: 0 success, 1 input or usage error, 2 internal error. A panic
//! (a bug: the program never panics on input by design) is reported as an
//! internal error with exit code 2, never as a crash.

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    std::panic::set_hook(Box::new(|info| {
        eprintln!(
            "internal error: {info}\nThis is a bug in chordline; please report it with the input and the command that caused it. Nothing was written to the output folder."
        );
    }));
    std::panic::catch_unwind(cli::main).unwrap_or(ExitCode::from(2))
}
