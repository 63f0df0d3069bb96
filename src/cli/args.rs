//! Raw command-line structs (clap derive). Validation happens in [`crate::config`].

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};

use crate::config::{self, ConfigError, RunConfig, Values};

const EXIT_CODES: &str = "\
Exit codes:
  0  success: the run finished and wrote its outputs
  1  internal error (a bug: please report it with the command line)
  2  invalid command line or configuration
  3  invalid input data (files or participants table); nothing was written
  4  the analysis could not be carried out on these inputs
  5  the outputs could not be written (folder exists, permissions, disk)

strata is research software: its subgroups and maps are not diagnoses and not for individual
clinical decisions.";

/// strata: data-driven participant subgroups from connectivity maps and matrices.
#[derive(Debug, Parser)]
#[command(name = "strata", version, about, long_about = None, after_help = EXIT_CODES, propagate_version = true)]
pub struct Cli {
    /// Print only results and errors (no progress or notes on standard error).
    #[arg(long, short, global = true, conflicts_with = "verbose")]
    pub quiet: bool,
    /// Print stage-by-stage notes and timings on standard error.
    #[arg(long, short, global = true)]
    pub verbose: bool,
    /// The subcommand.
    #[command(subcommand)]
    pub command: Command,
}

/// Subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Run the whole analysis on a cohort: read, similarity, communities, comparisons, outputs.
    #[command(after_help = RUN_EXAMPLE)]
    Run(RunArgs),
    /// Generate the fictional Northfield demo cohort and run the whole analysis on it.
    Demo(DemoArgs),
}

const RUN_EXAMPLE: &str = "\
Example:
  strata run --inputs 'maps/sub-*_seedmap.nii.gz' --participants participants.tsv \\
             --group-column diagnosis --contrast insomnia,control --out results/";

/// Flags of `strata run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// Input files: a glob pattern or paths (repeat the flag or separate with commas). 3D NIfTI
    /// seed maps (.nii, .nii.gz) or region matrices (.npy R x R or one N x R x R stack, .csv,
    /// .tsv). Quote globs so the shell does not expand them.
    #[arg(long, value_name = "GLOB", required = true, value_delimiter = ',', help_heading = "Inputs")]
    pub inputs: Vec<String>,
    /// BIDS participants table (tab-separated, first column participant_id).
    #[arg(long, value_name = "TSV", help_heading = "Inputs")]
    pub participants: PathBuf,
    /// Match files to participants by this table column (its value must appear in the file
    /// name) instead of the `sub-<label>` in the file name.
    #[arg(long, value_name = "COLUMN", help_heading = "Inputs")]
    pub match_column: Option<String>,
    /// Mask volume for seed maps: non-zero voxels are analysed. Default: the voxels finite and
    /// non-zero in every participant.
    #[arg(long, value_name = "FILE", help_heading = "Inputs")]
    pub mask: Option<PathBuf>,
    /// How input values are scaled: r (correlations; Fisher z is applied) or z (already Fisher z).
    #[arg(long, value_enum, default_value = "r", value_name = "SCALE", help_heading = "Inputs")]
    pub values: Values,
    /// Atlas table naming the regions of matrices: TSV with columns index, name (and optionally
    /// network), one row per region in matrix order.
    #[arg(long, value_name = "TSV", help_heading = "Inputs")]
    pub atlas: Option<PathBuf>,

    /// Participants-table column holding the group labels (for example diagnosis).
    #[arg(long, value_name = "COLUMN", help_heading = "Comparison")]
    pub group_column: String,
    /// Contrast A,B: maps of A minus B, both levels of --group-column.
    #[arg(long, value_name = "A,B", help_heading = "Comparison")]
    pub contrast: String,
    /// False-discovery level used to count surviving features in the tables.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_ALPHA, help_heading = "Comparison")]
    pub alpha: f64,

    /// Proportional densities of the graph sweep: a range START:STOP:STEP or a list A,B,...
    /// (fractions of all participant pairs).
    #[arg(long, value_name = "RANGE", default_value = config::DEFAULT_DENSITIES_TEXT, help_heading = "Graph and communities")]
    pub densities: String,
    /// Community-detection method: infomap (two-level map equation, shortest codelength kept) or
    /// louvain (modularity, highest kept).
    #[arg(long, value_enum, value_name = "METHOD", default_value_t = config::DEFAULT_METHOD, help_heading = "Graph and communities")]
    pub method: crate::communities::Method,
    /// Seeded trials of the method per density; the best is kept.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_TRIALS, help_heading = "Graph and communities")]
    pub trials: usize,
    /// Modularity resolution gamma (1 = Newman-Girvan modularity; larger gives smaller communities).
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_RESOLUTION, help_heading = "Graph and communities")]
    pub resolution: f64,
    /// Communities with fewer participants are reported as unassigned (community 0).
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_MIN_COMMUNITY_SIZE, help_heading = "Graph and communities")]
    pub min_community_size: usize,
    /// Co-assignment threshold tau of the consensus, in (0, 1).
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_CONSENSUS_THRESHOLD, help_heading = "Graph and communities")]
    pub consensus_threshold: f64,

    /// Output folder (created; refused if it exists and is not empty, unless --force).
    #[arg(long, value_name = "DIR", help_heading = "Output")]
    pub out: PathBuf,
    /// Replace an existing output folder (the old one is removed only after the new run finished).
    #[arg(long, help_heading = "Output")]
    pub force: bool,

    /// Run seed: the same seed gives the same results at any thread count.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_SEED, help_heading = "Execution")]
    pub seed: u64,
    /// Worker threads (0 = one per core).
    #[arg(long, value_name = "NUM", default_value_t = 0, help_heading = "Execution")]
    pub threads: usize,
}

impl RunArgs {
    /// Builds the validated configuration.
    pub fn into_config(self) -> Result<RunConfig, ConfigError> {
        RunConfig {
            densities: config::parse_densities(&self.densities)?,
            contrast: config::parse_contrast(&self.contrast)?,
            inputs: self.inputs,
            participants: self.participants,
            match_column: self.match_column,
            group_column: self.group_column,
            out: self.out,
            force: self.force,
            mask: self.mask,
            values: self.values,
            atlas: self.atlas,
            method: self.method,
            trials: self.trials,
            resolution: self.resolution,
            min_community_size: self.min_community_size,
            consensus_threshold: self.consensus_threshold,
            alpha: self.alpha,
            seed: self.seed,
            threads: self.threads,
        }
        .validate()
    }
}

/// Which demo cohorts to generate and analyse.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum DemoKind {
    /// 100-region connectivity matrices.
    Matrices,
    /// Seed maps on a 4 mm grid.
    Maps,
    /// Both.
    Both,
}

/// Flags of `strata demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Folder for the generated cohort and the results (refused if not empty, unless --force).
    #[arg(long, value_name = "DIR", default_value = "strata-demo-output")]
    pub out: PathBuf,
    /// Replace an existing demo folder.
    #[arg(long)]
    pub force: bool,
    /// Which input kinds to generate and analyse.
    #[arg(long, value_enum, default_value = "both", value_name = "KIND")]
    pub kind: DemoKind,
    /// Scenario file (TOML) instead of the built-in Northfield scenario (demo-data/northfield.toml
    /// holds the built-in one).
    #[arg(long, value_name = "TOML")]
    pub scenario: Option<PathBuf>,
    /// Seed of the generator and of the analysis.
    #[arg(long, value_name = "NUM")]
    pub seed: Option<u64>,
    /// Worker threads (0 = one per core).
    #[arg(long, value_name = "NUM", default_value_t = 0)]
    pub threads: usize,
}

/// Validated demo options.
#[derive(Debug, Clone)]
pub struct DemoOptions {
    /// Output folder.
    pub out: PathBuf,
    /// Replace an existing folder.
    pub force: bool,
    /// Which kinds.
    pub kind: DemoKind,
    /// Scenario file.
    pub scenario: Option<PathBuf>,
    /// Seed override.
    pub seed: Option<u64>,
}

impl DemoArgs {
    /// Builds the demo options.
    pub fn into_options(self) -> Result<DemoOptions, ConfigError> {
        Ok(DemoOptions {
            out: self.out,
            force: self.force,
            kind: self.kind,
            scenario: self.scenario,
            seed: self.seed,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn clap_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
