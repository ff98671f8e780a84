//! The `stemcast` command: parse arguments, call the library, print, and map errors to exit
//! codes (0 success, 1 runtime failure such as non-convergence, 2 bad input or usage).

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(()) => ExitCode::SUCCESS,
        // A reader that went away (`stemcast … | head`) is not a failure.
        Err(e) if cli::out::is_closed_stdout(&e) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("stemcast: error: {e}");
            ExitCode::from(e.exit_code() as u8)
        }
    }
}
