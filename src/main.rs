//! The `themata` command: parses the command line, runs one subcommand and
//! maps its outcome to the documented exit codes (0 success, 2 bad input or
//! usage, 3 I/O or internal failure).

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    match cli::run(cli::parse()) {
        Ok(()) => ExitCode::SUCCESS,
        Err(failure) if failure.is_quiet_stop() => ExitCode::SUCCESS,
        Err(failure) => {
            eprintln!("themata: error: {}", cli::describe(&failure.error));
            ExitCode::from(failure.code)
        }
    }
}
