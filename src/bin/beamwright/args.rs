//! Command-line arguments (clap). Turned into library calls in `commands.rs`.

use std::path::PathBuf;

use clap::{Parser, Subcommand};

/// Simulates real laser beams: FFT propagation of sampled fields through
/// apertures, lenses and aberrations, with ISO 11146 measurements.
///
/// Exit status: 0 success; 1 a --strict run found a probe outside
/// tolerance, or verify found a failing check; 2 bad input (file, key,
/// unit, value) or a run that could not complete; 128+N stopped by signal
/// N. A run never deletes or overwrites what it did not write.
#[derive(Debug, Parser)]
#[command(name = "beamwright", version, about)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Propagate a layout; write DIR/report.json and the saved files.
    Run {
        /// The layout file (TOML).
        layout: PathBuf,
        /// Output directory (created; must not exist or be empty unless --force).
        /// Never `.`, `..`, `/`, the home folder or a folder holding the layout.
        #[arg(short = 'o', long = "out", value_name = "DIR", default_value = "out")]
        out: PathBuf,
        /// Worker threads, 1 to 1024 (default: all cores). 1 runs sequentially.
        #[arg(long, value_name = "N")]
        threads: Option<usize>,
        /// No progress bar.
        #[arg(long)]
        quiet: bool,
        /// Exit with status 1 if any probe's width deviates from the paraxial
        /// prediction by more than --tolerance.
        #[arg(long)]
        strict: bool,
        /// Allowed width deviation for --strict, percent.
        #[arg(long, value_name = "PCT", default_value_t = 5.0)]
        tolerance: f64,
        /// Replace an output directory that a previous run wrote (only if it
        /// holds nothing but that run's files).
        #[arg(long)]
        force: bool,
    },
    /// Validate a layout and print the sampling plan and warnings; writes nothing.
    Check {
        /// The layout file (TOML).
        layout: PathBuf,
    },
    /// Run the built-in closed-form comparisons and print a table of errors.
    Verify,
    /// List the bundled example layouts, or write one.
    Examples {
        /// Example to print (or write with -o).
        name: Option<String>,
        /// Write the example to this file instead of standard output.
        #[arg(short = 'o', long = "out", value_name = "FILE")]
        out: Option<PathBuf>,
    },
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn definition_is_consistent() {
        Cli::command().debug_assert();
    }

    #[test]
    fn run_flags_parse() {
        let cli = Cli::try_parse_from([
            "beamwright",
            "run",
            "a.toml",
            "-o",
            "d",
            "--threads",
            "1",
            "--quiet",
            "--strict",
            "--tolerance",
            "2.5",
            "--force",
        ])
        .unwrap();
        match cli.command {
            Command::Run {
                layout,
                out,
                threads,
                quiet,
                strict,
                tolerance,
                force,
            } => {
                assert_eq!(layout, PathBuf::from("a.toml"));
                assert_eq!(out, PathBuf::from("d"));
                assert_eq!(threads, Some(1));
                assert!(quiet && strict && force);
                assert_eq!(tolerance, 2.5);
            }
            other => panic!("parsed as {other:?}"),
        }
        assert!(Cli::try_parse_from(["beamwright", "run"]).is_err());
        assert!(Cli::try_parse_from(["beamwright", "run", "a.toml", "--threads", "x"]).is_err());
    }

    #[test]
    fn other_commands_parse() {
        assert!(matches!(
            Cli::try_parse_from(["beamwright", "check", "a.toml"])
                .unwrap()
                .command,
            Command::Check { .. }
        ));
        assert!(matches!(
            Cli::try_parse_from(["beamwright", "verify"])
                .unwrap()
                .command,
            Command::Verify
        ));
        match Cli::try_parse_from(["beamwright", "examples", "relay", "-o", "r.toml"])
            .unwrap()
            .command
        {
            Command::Examples { name, out } => {
                assert_eq!(name.as_deref(), Some("relay"));
                assert_eq!(out, Some(PathBuf::from("r.toml")));
            }
            other => panic!("parsed as {other:?}"),
        }
    }
}
