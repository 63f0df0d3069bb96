//! The command line: clap definition (help grouped by stage), subcommands, terminal output.
//!
//! Flags are parsed into the raw structs of [`args`], turned into a validated
//! [`crate::config::RunConfig`] in one place, and handed to [`crate::pipeline`]. Results go to
//! standard output, messages to standard error.

pub mod args;

use clap::Parser;

pub use args::{Cli, Command};

use crate::error::Error;

/// Parses the process arguments and runs the chosen subcommand.
pub fn run() -> Result<(), Error> {
    let cli = Cli::parse();
    run_with(cli)
}

/// Runs a parsed command line.
pub fn run_with(cli: Cli) -> Result<(), Error> {
    let log = crate::report::Log::new(cli.quiet, cli.verbose);
    match cli.command {
        Command::Run(run) => {
            let config = run.into_config()?;
            install_threads(config.threads)?;
            let summary = crate::pipeline::run(&config, &log)?;
            print!("{}", summary.text());
            Ok(())
        }
        Command::Partition(partition) => {
            install_threads(partition.threads)?;
            let quality_json = partition.quality_json.clone();
            let outcome = crate::partition::partition(&partition.into_options()?)?;
            if let Some(path) = quality_json {
                let text = serde_json::to_string_pretty(&outcome).expect("the outcome serialises") + "\n";
                crate::maps::write_bytes_atomically(&path, text.as_bytes())?;
            }
            print!("{}", outcome.lines());
            if !cli.quiet {
                eprintln!("{}", outcome.quality_line());
            }
            Ok(())
        }
        Command::Report(report) => {
            let path = crate::report::write_report(&report.run_dir)?;
            println!("{}", path.display());
            Ok(())
        }
        Command::Demo(demo) => {
            install_threads(demo.threads)?;
            let text = crate::pipeline::demo(&demo.into_options()?, &log)?;
            print!("{text}");
            Ok(())
        }
    }
}

/// Sets the size of rayon's global pool (0 = one thread per core).
fn install_threads(threads: usize) -> Result<(), Error> {
    if threads == 0 {
        return Ok(());
    }
    rayon::ThreadPoolBuilder::new().num_threads(threads).build_global().map_err(|error| {
        crate::config::ConfigError::Invalid {
            flag: "--threads".into(),
            message: format!("could not start {threads} worker threads: {error}"),
        }
        .into()
    })
}
