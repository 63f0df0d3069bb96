//! The crate's top-level error: one variant per domain, each wrapping that domain's own enum.
//!
//! Domain enums live beside their stage (`read::ReadError`, `features::FeatureError`, ...) and
//! carry what their message needs: what was found, what was expected, where (file, participant,
//! column, flag) and what to do. The command line maps each domain to an exit code.

use thiserror::Error;

/// Any failure of a strata run.
#[derive(Debug, Error)]
pub enum Error {
    /// The command line or configuration is invalid.
    #[error(transparent)]
    Config(#[from] crate::config::ConfigError),
    /// An input file or the participants table is missing, unreadable or invalid.
    #[error(transparent)]
    Read(#[from] crate::read::ReadError),
    /// The inputs read but cannot form a valid feature matrix.
    #[error(transparent)]
    Feature(#[from] crate::features::FeatureError),
    /// Community detection could not run on the participant graph.
    #[error(transparent)]
    Community(#[from] crate::communities::CommunityError),
    /// The null test could not run.
    #[error(transparent)]
    Null(#[from] crate::validation::NullError),
    /// The resampling-stability check could not run.
    #[error(transparent)]
    Stability(#[from] crate::validation::StabilityError),
    /// New participants could not be assigned to an earlier run's communities.
    #[error(transparent)]
    Assign(#[from] crate::assign::AssignError),
    /// Seed maps or region matrices could not be computed from BOLD series.
    #[error(transparent)]
    Connectivity(#[from] crate::connectivity::ConnectivityError),
    /// A built-in atlas could not be resolved, cached or exported.
    #[error(transparent)]
    Atlas(#[from] crate::atlas::AtlasError),
    /// An output could not be written.
    #[error(transparent)]
    Write(#[from] crate::maps::WriteError),
    /// A run folder could not be read to render its report.
    #[error(transparent)]
    Report(#[from] crate::report::ReportError),
    /// The demo cohort could not be generated.
    #[error(transparent)]
    Demo(#[from] crate::demo::DemoError),
    /// `strata check` found problems that would stop `strata run` (the report lists them).
    #[error("check: strata run would stop on these inputs; failed checks: {failed}")]
    CheckFailed {
        /// The names of the failed checks, comma-separated.
        failed: String,
    },
}

/// Messages list at most this many participant ids, then "and N more".
pub const MAX_LISTED: usize = 10;

/// Up to [`MAX_LISTED`] ids joined by commas, then "and N more".
pub fn list_ids(ids: &[String]) -> String {
    let shown: Vec<&str> = ids.iter().take(MAX_LISTED).map(String::as_str).collect();
    if ids.len() > MAX_LISTED {
        format!("{} and {} more", shown.join(", "), ids.len() - MAX_LISTED)
    } else {
        shown.join(", ")
    }
}

/// Process exit codes, documented in `--help` and the README.
pub mod exit_code {
    /// The run finished and wrote its outputs.
    pub const SUCCESS: i32 = 0;
    /// An unexpected internal failure (a bug: please report it).
    pub const INTERNAL: i32 = 1;
    /// The command line or configuration is invalid (clap's own usage errors also exit 2).
    pub const USAGE: i32 = 2;
    /// The input data (files or participants table) is invalid; nothing was written.
    pub const INPUT: i32 = 3;
    /// The analysis could not be carried out on valid inputs (for example no usable graph).
    pub const ANALYSIS: i32 = 4;
    /// The outputs could not be written (folder exists, disk full, permissions).
    pub const OUTPUT: i32 = 5;
    /// Interrupted by Ctrl-C or a termination signal; the unfinished output folder was removed
    /// (128 + 2, the shell's code for SIGINT: common practice).
    pub const INTERRUPTED: i32 = 130;
}

impl Error {
    /// The exit code for this error.
    pub fn exit_code(&self) -> i32 {
        match self {
            Error::Config(_) => exit_code::USAGE,
            Error::Read(_) | Error::Feature(_) | Error::Connectivity(_) | Error::CheckFailed { .. } => {
                exit_code::INPUT
            }
            Error::Community(_) | Error::Null(_) | Error::Stability(_) => exit_code::ANALYSIS,
            Error::Assign(crate::assign::AssignError::InvalidConfidence { .. }) => exit_code::USAGE,
            Error::Assign(_) => exit_code::INPUT,
            Error::Atlas(error) if error.is_usage() => exit_code::USAGE,
            Error::Atlas(_) => exit_code::OUTPUT,
            Error::Write(_) => exit_code::OUTPUT,
            Error::Demo(_) => exit_code::OUTPUT,
            Error::Report(_) => exit_code::INPUT,
        }
    }
}
