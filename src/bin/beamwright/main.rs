//! The `beamwright` command: a thin front end over the library.

mod args;
mod commands;
mod console;
mod output;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let cli = args::Cli::parse();
    match commands::dispatch(cli) {
        Ok(code) => code,
        Err(err) => {
            if let Some(io) =
                std::error::Error::source(&err).and_then(|s| s.downcast_ref::<std::io::Error>())
            {
                if io.kind() == std::io::ErrorKind::BrokenPipe {
                    return ExitCode::SUCCESS;
                }
            }
            console::error(&err.to_string());
            ExitCode::from(2)
        }
    }
}
