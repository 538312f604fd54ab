//! The `caldera` command: parse the arguments, run, turn the result into an exit code.

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let cli = caldera_cli::Cli::parse();
    match caldera_cli::run(&cli) {
        Ok(code) => code,
        Err(error) => {
            eprintln!("error: {error:#}");
            ExitCode::FAILURE
        }
    }
}
