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
  130  interrupted (Ctrl-C or a termination signal); the unfinished output folder was removed
strata check exits 0 when run would pass its checks and 3 when it would stop.

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
    Run(Box<RunArgs>),
    /// Examine a cohort's inputs without running the analysis: participants matched, files,
    /// grids or R, value ranges, NaN, mask size, expected memory and run time, and anything that
    /// would make `strata run` fail (exit code 3 then). Takes the flags and CONFIG of run.
    Check(Box<RunArgs>),
    /// Generate the fictional Northfield demo cohort and run the whole analysis on it.
    Demo(DemoArgs),
    /// Partition any weighted undirected graph (edge list or dense .npy) into communities:
    /// `node<TAB>community` lines to standard output, the quality to standard error.
    #[command(after_help = PARTITION_EXAMPLE)]
    Partition(PartitionArgs),
    /// Place new participants into the communities of an earlier run: Pearson r with each
    /// community's centroid, the nearest community, a margin-based confidence, and community 0
    /// (none) when the placement is less clear than for nearly every training participant.
    #[command(after_help = ASSIGN_EXAMPLE)]
    Assign(AssignArgs),
    /// Plan a study: simulate cohorts with strata's generator and report the expected recovery
    /// of planted subgroups (adjusted Rand index) and the null test's power.
    #[command(after_help = POWER_EXAMPLE)]
    Power(PowerArgs),
    /// Print a commented configuration file for `strata run` with every key at its default
    /// (`strata defaults > run.toml`, edit, then `strata run run.toml`).
    Defaults,
    /// Print a shell completion script for strata (bash: `strata completions bash >
    /// ~/.local/share/bash-completion/completions/strata`).
    Completions(CompletionsArgs),
    /// Print strata's manual page (roff) to standard output, or write one page per subcommand
    /// into a folder (`man ./strata.1` shows it).
    Manpage(ManpageArgs),
    /// Render report.html again from a finished run folder's files, without recomputing.
    #[command(after_help = REPORT_EXAMPLE)]
    Report(ReportArgs),
    /// List the atlases and masks built into strata (names for --atlas and --mask), show one,
    /// or write one's files into a folder.
    #[command(after_help = ATLASES_EXAMPLE)]
    Atlases(AtlasesArgs),
    /// Compute seed maps or region matrices from preprocessed 4D BOLD series, one per
    /// participant (confounds regressed out, censored frames dropped), named `sub-<label>_...` so
    /// `strata run --inputs` reads them.
    #[command(after_help = CONNECTIVITY_EXAMPLE)]
    Connectivity(Box<ConnectivityArgs>),
}

const ATLASES_EXAMPLE: &str = "\
Built-in names work wherever an atlas or mask is taken (--atlas NAME, --mask NAME); a file of the
same name in the working folder wins over the built-in.

Examples:
  strata atlases
      list them: name, kind, regions, networks, volume grid, source, licence
  strata atlases dosenbach160
      its files with size and SHA-256, then its README (source, citation, licence)
  strata atlases dosenbach160 --export atlas/
      write its region table, label volume and README into atlas/
  strata run --inputs 'conn/sub-*_conn.npy' --atlas dosenbach160 ...";

/// Flags of `strata atlases`.
#[derive(Debug, Args)]
pub struct AtlasesArgs {
    /// A built-in atlas or mask: print its files (size, SHA-256) and README, or export it.
    #[arg(value_name = "NAME", value_parser = clap::builder::PossibleValuesParser::new(crate::atlas::NAMES))]
    pub name: Option<String>,
    /// Write NAME's files (region table, label or mask volume, README.md) into this folder,
    /// created if missing; a file there with other contents is refused unless --force.
    #[arg(long, value_name = "DIR", requires = "name")]
    pub export: Option<PathBuf>,
    /// With --export: replace files of the same name that differ.
    #[arg(long, requires = "export")]
    pub force: bool,
}

const CONNECTIVITY_EXAMPLE: &str = "\
Examples:
  strata connectivity --bold 'derivatives/sub-*_bold.nii.gz' --confounds 'derivatives/sub-*_confounds.tsv' \\
      --confound-columns trans_x,trans_y,trans_z,rot_x,rot_y,rot_z --censor-column keep \\
      --seed-sphere 0,-52,26 --radius 6 --out seedmaps
  strata connectivity --bold 'derivatives/sub-*_bold.nii.gz' --atlas-volume atlas_labels.nii.gz --out matrices
  strata run --inputs 'seedmaps/sub-*_seedmap.nii.gz' --participants participants.tsv ...

Outputs (in --out): sub-<label>_stat-<r|z>_seedmap.nii.gz (or _conn.npy) with a .json sidecar per
participant, connectivity.tsv (frames kept, regressors, degrees of freedom, constant voxels), and
regions.tsv for matrices (usable as `strata run --atlas`). Every series is read once, one batch of
frames at a time; participants run in parallel (--threads).";

/// Flags of `strata connectivity`.
#[derive(Debug, Args)]
pub struct ConnectivityArgs {
    /// The 4D BOLD series (NIfTI-1 or NIfTI-2, .nii or .nii.gz): a glob pattern or paths (repeat the flag or
    /// separate with commas), one per participant, named `sub-<label>_...`
    #[arg(long, value_name = "GLOB", required = true, value_delimiter = ',', help_heading = "Inputs")]
    pub bold: Vec<String>,
    /// Confounds tables (TSV with a header, one row per frame), one per participant, matched by
    /// `sub-<label>`. Leading n/a of a column (derivatives) take the column's mean. Without it only
    /// the mean is removed.
    #[arg(long, value_name = "GLOB", value_delimiter = ',', help_heading = "Nuisance")]
    pub confounds: Vec<String>,
    /// The confound columns to regress out. Default: every numeric column of the confounds
    /// table except --censor-column.
    #[arg(
        long,
        value_name = "COL,...",
        value_delimiter = ',',
        requires = "confounds",
        help_heading = "Nuisance"
    )]
    pub confound_columns: Option<Vec<String>>,
    /// Censoring column: 1 keeps a frame, 0 drops it before regression and correlation. Read
    /// from the confounds table, or from --censor tables when given.
    #[arg(long, value_name = "COLUMN", help_heading = "Nuisance")]
    pub censor_column: Option<String>,
    /// Separate censoring tables (TSV with a header holding --censor-column), one per
    /// participant, matched by `sub-<label>`.
    #[arg(
        long,
        value_name = "GLOB",
        value_delimiter = ',',
        requires = "censor_column",
        help_heading = "Nuisance"
    )]
    pub censor: Vec<String>,

    /// Seed: a mask on the BOLD grid (NIfTI); the seed series is the mean of its non-zero voxels.
    #[arg(long, value_name = "FILE", group = "target", help_heading = "Seed or regions")]
    pub seed_mask: Option<PathBuf>,
    /// Seed: a sphere centred at X,Y,Z in mm (the BOLD series' world space) of --radius mm; the
    /// seed series is the mean of the voxels whose centre lies within it.
    #[arg(
        long,
        value_name = "X,Y,Z",
        value_delimiter = ',',
        num_args = 1,
        group = "target",
        requires = "radius",
        allow_hyphen_values = true,
        help_heading = "Seed or regions"
    )]
    pub seed_sphere: Option<Vec<f64>>,
    /// Radius of --seed-sphere in mm.
    #[arg(long, value_name = "MM", requires = "seed_sphere", help_heading = "Seed or regions")]
    pub radius: Option<f64>,
    /// Seed: the voxels of this label of --atlas-volume.
    #[arg(
        long,
        value_name = "NUM",
        group = "target",
        requires = "atlas_volume",
        allow_negative_numbers = true,
        help_heading = "Seed or regions"
    )]
    pub seed_label: Option<i64>,
    /// Atlas label volume on the BOLD grid (whole numbers, 0 = background), a file or a built-in
    /// atlas name (`strata atlases`; their volumes are on the MNI 2 mm grid). Alone: an R x R
    /// matrix over its non-zero labels (in increasing order); with --seed-label: that label's
    /// seed map.
    #[arg(long, value_name = "NAME|FILE", help_heading = "Seed or regions")]
    pub atlas_volume: Option<PathBuf>,

    /// What the outputs hold: r (Pearson r; `strata run` applies Fisher z) or z (Fisher z =
    /// atanh r; read with `strata run --values z`).
    #[arg(long, value_enum, value_name = "STAT", default_value = "r", help_heading = "Output")]
    pub statistic: crate::connectivity::Statistic,
    /// Output folder (created; refused if it exists and is not empty, unless --force).
    #[arg(long, value_name = "DIR", help_heading = "Output")]
    pub out: PathBuf,
    /// Replace an existing output folder (the old one is removed only after the new one is complete).
    #[arg(long, help_heading = "Output")]
    pub force: bool,
    /// Worker threads, one participant each (0 = one per core).
    #[arg(long, value_name = "NUM", default_value_t = 0, help_heading = "Execution")]
    pub threads: usize,
}

impl ConnectivityArgs {
    /// Builds the validated options.
    pub fn into_options(self) -> Result<crate::connectivity::ConnectivityOptions, ConfigError> {
        use crate::connectivity::{ConnectivityOptions, Target};
        let invalid = |flag: &str, message: String| ConfigError::Invalid { flag: flag.into(), message };
        let target = match (self.seed_mask, self.seed_sphere, self.seed_label, self.atlas_volume) {
            (Some(mask), None, None, atlas) => {
                if atlas.is_some() {
                    return Err(invalid(
                        "--atlas-volume",
                        "is used with --seed-label or alone (region matrix), not with --seed-mask".into(),
                    ));
                }
                Target::Mask(mask)
            }
            (None, Some(centre), None, atlas) => {
                if atlas.is_some() {
                    return Err(invalid(
                        "--atlas-volume",
                        "is used with --seed-label or alone (region matrix), not with --seed-sphere".into(),
                    ));
                }
                let [x, y, z] = centre[..] else {
                    return Err(invalid(
                        "--seed-sphere",
                        format!("{} value(s); give the centre as X,Y,Z in mm, for example 0,-52,26", centre.len()),
                    ));
                };
                if ![x, y, z].iter().all(|v| v.is_finite()) {
                    return Err(invalid("--seed-sphere", "coordinates must be finite numbers (mm)".into()));
                }
                let radius = self.radius.unwrap_or(f64::NAN);
                if !(radius.is_finite() && radius > 0.0) {
                    return Err(invalid("--radius", format!("{radius} must be a positive number of mm")));
                }
                Target::Sphere { centre: [x, y, z], radius }
            }
            (None, None, Some(label), Some(atlas)) => {
                if label <= 0 {
                    return Err(invalid(
                        "--seed-label",
                        format!("{label}: labels are positive whole numbers (0 is the background)"),
                    ));
                }
                Target::Label { atlas, label }
            }
            (None, None, None, Some(atlas)) => Target::Regions(atlas),
            _ => {
                return Err(invalid(
                    "--seed-mask",
                    "give the seed or the regions: --seed-mask FILE, --seed-sphere X,Y,Z with --radius MM, \
                     --seed-label NUM with --atlas-volume FILE, or --atlas-volume FILE alone for a region matrix"
                        .into(),
                ))
            }
        };
        if self.censor_column.is_some() && self.confounds.is_empty() && self.censor.is_empty() {
            return Err(invalid(
                "--censor-column",
                "names a column of the confounds tables (--confounds) or of --censor tables; give one of them".into(),
            ));
        }
        if let Some(columns) = &self.confound_columns {
            if columns.iter().any(|column| column.trim().is_empty()) {
                return Err(invalid(
                    "--confound-columns",
                    "an empty column name; separate names with commas".into(),
                ));
            }
        }
        Ok(ConnectivityOptions {
            bold: self.bold,
            confounds: self.confounds,
            confound_columns: self
                .confound_columns
                .map(|columns| columns.into_iter().map(|column| column.trim().to_string()).collect()),
            censor_column: self.censor_column,
            censor: self.censor,
            target,
            statistic: self.statistic,
            out: self.out,
            force: self.force,
        })
    }
}

const POWER_EXAMPLE: &str = "\
Example (three subgroups of 40/35/25% at a pilot's separation of 0.3 noise SD, 150 participants):
  strata power --participants 150 --proportions 0.4,0.35,0.25 --separation 0.3

The separation is the subgroup profile strength in units of the participant noise standard
deviation; from a pilot run, the typical between-community Hedges g of the features is on that
scale. Leave out --proportions to estimate the null test's false-positive rate.";

/// Flags of `strata power`.
#[derive(Debug, Args)]
pub struct PowerArgs {
    /// Participants per simulated cohort.
    #[arg(long, value_name = "NUM")]
    pub participants: usize,
    /// Share of each planted subgroup, comma-separated, summing to 1 (for example 0.5,0.3,0.2);
    /// leave out for one homogeneous population.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub proportions: Vec<f64>,
    /// Subgroup separation in units of the participant noise standard deviation.
    #[arg(long, value_name = "NUM", default_value_t = 0.3)]
    pub separation: f64,
    /// Regions of the simulated connectivity matrices.
    #[arg(long, value_name = "NUM", default_value_t = 100)]
    pub regions: usize,
    /// Simulated cohorts.
    #[arg(long, value_name = "NUM", default_value_t = crate::power::DEFAULT_COHORTS)]
    pub cohorts: usize,
    /// Null cohorts per simulated cohort (the smallest attainable p is 1 / (NUM + 1)).
    #[arg(long, value_name = "NUM", default_value_t = crate::power::DEFAULT_POWER_NULL_DRAWS)]
    pub null_draws: usize,
    /// Community-detection method.
    #[arg(long, value_enum, value_name = "METHOD", default_value_t = config::DEFAULT_METHOD)]
    pub method: crate::communities::Method,
    /// Seeded trials per graph of the sweep (plan with the `--trials` of your runs).
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_TRIALS)]
    pub trials: usize,
    /// Patient-minus-comparison difference in Fisher z planted on the generator's affected
    /// edges for half the participants; 0 (the default) keeps the subgroups the only group
    /// structure, so that without --proportions the rate is a false-positive rate.
    #[arg(long, value_name = "Z", default_value_t = 0.0)]
    pub diagnosis_effect: f64,
    /// Significance level of the null test.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_ALPHA)]
    pub alpha: f64,
    /// Seed of the simulation.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_SEED)]
    pub seed: u64,
    /// Write the figures as JSON to this file as well.
    #[arg(long, value_name = "FILE")]
    pub json: Option<PathBuf>,
    /// Worker threads (0 = one per core).
    #[arg(long, value_name = "NUM", default_value_t = 0)]
    pub threads: usize,
}

impl PowerArgs {
    /// Builds the validated options.
    pub fn into_options(self) -> Result<crate::power::PowerOptions, ConfigError> {
        let invalid = |flag: &str, message: String| ConfigError::Invalid { flag: flag.to_string(), message };
        if self.participants < 10 {
            return Err(invalid(
                "--participants",
                format!("{} is too few to plan subgrouping; give at least 10", self.participants),
            ));
        }
        if self.cohorts == 0 {
            return Err(invalid("--cohorts", "must be at least 1".to_string()));
        }
        if self.trials == 0 {
            return Err(invalid("--trials", "must be at least 1".to_string()));
        }
        if !self.diagnosis_effect.is_finite() {
            return Err(invalid(
                "--diagnosis-effect",
                format!("{} must be a finite number (Fisher z)", self.diagnosis_effect),
            ));
        }
        if self.null_draws == 0 {
            return Err(invalid(
                "--null-draws",
                "must be at least 1 (the power is that of the null test)".to_string(),
            ));
        }
        if !(self.alpha > 0.0 && self.alpha < 1.0) {
            return Err(invalid("--alpha", format!("{} must lie strictly between 0 and 1", self.alpha)));
        }
        let smallest_p = 1.0 / (self.null_draws + 1) as f64;
        if smallest_p > self.alpha {
            let needed = (1.0 / self.alpha).ceil() as usize - 1;
            return Err(invalid(
                "--null-draws",
                format!(
                    "{} null cohorts give a smallest attainable p of {smallest_p:.3}, above --alpha {}: the test could never support subgroups; give at least {needed}",
                    self.null_draws, self.alpha
                ),
            ));
        }
        if !self.proportions.is_empty() {
            let sum: f64 = self.proportions.iter().sum();
            if self.proportions.len() < 2
                || self.proportions.iter().any(|&p| p.is_nan() || p <= 0.0)
                || (sum - 1.0).abs() > 1e-6
            {
                return Err(invalid(
                    "--proportions",
                    format!(
                        "{:?} must be two or more positive shares summing to 1, for example 0.5,0.3,0.2",
                        self.proportions
                    ),
                ));
            }
        }
        if !(self.separation.is_finite() && self.separation >= 0.0) {
            return Err(invalid(
                "--separation",
                format!("{} must be a non-negative number", self.separation),
            ));
        }
        Ok(crate::power::PowerOptions {
            participants: self.participants,
            proportions: self.proportions,
            separation: self.separation,
            regions: self.regions,
            cohorts: self.cohorts,
            null_draws: self.null_draws,
            method: self.method,
            trials: self.trials,
            diagnosis_effect: self.diagnosis_effect,
            alpha: self.alpha,
            seed: self.seed,
        })
    }
}

const ASSIGN_EXAMPLE: &str = "\
Example:
  strata assign results/ --inputs 'new/sub-*_conn.npy' --out new_assignments.tsv

Output columns: participant_id, community (0 = none), nearest, r_community_K per community,
margin, confidence, note (why a participant is left unassigned). New inputs must be of the
run's kind, on its grid and affine (seed maps) or with its number of regions (matrices), and
named sub-<label>_...";

/// Flags of `strata assign`.
#[derive(Debug, Args)]
pub struct AssignArgs {
    /// Output folder of an earlier `strata run` (it holds assignment/model.json).
    #[arg(value_name = "RUN_DIR")]
    pub run: PathBuf,
    /// New participants' input files: a glob pattern or paths (repeat the flag or separate with
    /// commas), named `sub-<label>_...`, of the same kind as the run's inputs.
    #[arg(long, value_name = "GLOB", required = true, value_delimiter = ',')]
    pub inputs: Vec<String>,
    /// Output table (TSV, one row per new participant).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Participants placed less clearly than this share of the training participants (by
    /// margin over the next community, or by similarity to the nearest centroid) get community 0.
    #[arg(long, value_name = "NUM", default_value_t = crate::assign::DEFAULT_MIN_CONFIDENCE)]
    pub min_confidence: f64,
    /// Worker threads (0 = one per core).
    #[arg(long, value_name = "NUM", default_value_t = 0)]
    pub threads: usize,
}

/// Flags of `strata completions`.
#[derive(Debug, Args)]
pub struct CompletionsArgs {
    /// The shell.
    #[arg(value_enum, value_name = "SHELL")]
    pub shell: clap_complete::Shell,
}

/// Flags of `strata manpage`.
#[derive(Debug, Args)]
pub struct ManpageArgs {
    /// Write strata.1 and one strata-SUBCOMMAND.1 per subcommand into this folder instead of
    /// printing strata.1.
    #[arg(long, value_name = "DIR")]
    pub out_dir: Option<PathBuf>,
}

const REPORT_EXAMPLE: &str = "\
Reads summary.json, participants.tsv, provenance.json, similarity.npy, coassignment.npy,
sweep.tsv, comparisons.tsv and maps/ (and, when present, composition.tsv, covariates.tsv,
outcome.tsv and stability.tsv) from RUN_DIR and writes RUN_DIR/report.html, the page
`strata run` writes at the end of a run.

Example:
  strata report results/";

/// Flags of `strata report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// A run folder written by `strata run` (its --out).
    #[arg(value_name = "RUN_DIR")]
    pub run_dir: PathBuf,
}

const PARTITION_EXAMPLE: &str = "\
Graph files:
  edge list: one edge per line, 'i j w' separated by tabs or spaces (w optional, default 1);
             lines starting with # are skipped; a pair listed twice has its weights added.
  .npy:      a dense symmetric N x N matrix of non-negative weights (float32 or float64).

Examples:
  strata partition network.tsv > communities.tsv
  strata partition similarity.npy --method leiden --density 0.1 --trials 50 --quality-json q.json";

/// Flags of `strata partition`.
#[derive(Debug, Args)]
pub struct PartitionArgs {
    /// The graph: an edge list (.tsv, .txt, any text) or a dense .npy weight matrix.
    #[arg(value_name = "GRAPH")]
    pub graph: PathBuf,
    /// Community-detection method.
    #[arg(long, value_enum, value_name = "METHOD", default_value_t = config::DEFAULT_METHOD)]
    pub method: crate::communities::Method,
    /// Seeded trials; the best quality is kept (shortest codelength for infomap, highest
    /// modularity otherwise).
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_TRIALS)]
    pub trials: usize,
    /// Run seed: the same seed gives the same partition at any thread count.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_SEED)]
    pub seed: u64,
    /// Resolution gamma of modularity (1 = Newman-Girvan).
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_RESOLUTION)]
    pub resolution: f64,
    /// Keep only the strongest fraction of all node pairs as edges (proportional density).
    #[arg(long, value_name = "NUM", group = "keep")]
    pub density: Option<f64>,
    /// Keep each node's K strongest edges (an edge when either node keeps it).
    #[arg(long, value_name = "K", group = "keep")]
    pub neighbours: Option<usize>,
    /// Keep an edge only when it is among both nodes' K strongest.
    #[arg(long, value_name = "K", group = "keep")]
    pub mutual_neighbours: Option<usize>,
    /// Keep edges of weight at or above this value.
    #[arg(long, value_name = "NUM", group = "keep")]
    pub threshold: Option<f64>,
    /// Edge weights: weighted (as given) or binary (1 for every kept edge).
    #[arg(long, value_enum, value_name = "KIND", default_value = "weighted")]
    pub edges: crate::graph::EdgeWeights,
    /// Also write the quality and run figures to this JSON file (keys in docs/outputs.md).
    #[arg(long, value_name = "FILE")]
    pub quality_json: Option<PathBuf>,
    /// Worker threads (0 = one per core).
    #[arg(long, value_name = "NUM", default_value_t = 0)]
    pub threads: usize,
}

impl PartitionArgs {
    /// Builds the validated options.
    pub fn into_options(self) -> Result<crate::partition::PartitionOptions, ConfigError> {
        use crate::graph::SweepLevel;
        let invalid = |flag: &str, message: String| ConfigError::Invalid { flag: flag.into(), message };
        if self.trials == 0 {
            return Err(invalid("--trials", "must be at least 1".into()));
        }
        if !self.resolution.is_finite() || self.resolution <= 0.0 {
            return Err(invalid("--resolution", format!("{} must be a positive number", self.resolution)));
        }
        let keep = if let Some(density) = self.density {
            if !(density > 0.0 && density <= 1.0) {
                return Err(invalid(
                    "--density",
                    format!("{density} is outside (0, 1]; it is a fraction of all node pairs"),
                ));
            }
            Some(SweepLevel::Density(density))
        } else if let Some(k) = self.neighbours {
            if k == 0 {
                return Err(invalid("--neighbours", "must be at least 1".into()));
            }
            Some(SweepLevel::Neighbours(k))
        } else if let Some(k) = self.mutual_neighbours {
            if k == 0 {
                return Err(invalid("--mutual-neighbours", "must be at least 1".into()));
            }
            Some(SweepLevel::MutualNeighbours(k))
        } else if let Some(threshold) = self.threshold {
            if !threshold.is_finite() {
                return Err(invalid("--threshold", format!("{threshold} is not a finite number")));
            }
            Some(SweepLevel::Threshold(threshold))
        } else {
            None
        };
        Ok(crate::partition::PartitionOptions {
            graph: self.graph,
            method: self.method,
            trials: self.trials,
            seed: self.seed,
            resolution: self.resolution,
            keep,
            edge_weights: self.edges,
        })
    }
}

const RUN_EXAMPLE: &str = "\
Example:
  strata run --inputs 'maps/sub-*_seedmap.nii.gz' --participants participants.tsv \\
             --group-column diagnosis --contrast insomnia,control --out results/";

/// Flags of `strata run` (and of `strata check`, which reads the same inputs).
#[derive(Debug, Args)]
pub struct RunArgs {
    /// A configuration file (TOML) holding any of the flags below as keys in snake_case
    /// (`strata defaults` prints one); flags on the command line take the place of its keys.
    #[arg(value_name = "CONFIG")]
    pub config: Option<PathBuf>,
    /// Input files: a glob pattern or paths (repeat the flag or separate with commas). 3D NIfTI
    /// seed maps (.nii, .nii.gz) or region matrices (.npy R x R or one N x R x R stack, .csv,
    /// .tsv). Quote globs so the shell does not expand them. Required, unless --similarity,
    /// --measures or --measures-table.
    #[arg(long, value_name = "GLOB", value_delimiter = ',', help_heading = "Inputs")]
    pub inputs: Vec<String>,
    /// A precomputed participant similarity matrix (.npy, N x N, rows in participants-table
    /// order) in place of --inputs: communities, sweep and tables are written, maps are not.
    #[arg(long, value_name = "NPY", conflicts_with_all = ["inputs", "mask", "atlas", "match_column"], help_heading = "Inputs")]
    pub similarity: Option<PathBuf>,
    /// BIDS participants table (tab-separated, first column participant_id). Required.
    #[arg(long, value_name = "TSV", help_heading = "Inputs")]
    pub participants: Option<PathBuf>,
    /// Match files to participants by this table column (its value must appear in the file
    /// name) instead of the `sub-<label>` in the file name.
    #[arg(long, value_name = "COLUMN", help_heading = "Inputs")]
    pub match_column: Option<String>,
    /// Mask volume for seed maps: non-zero voxels are analysed. A file, or a built-in name:
    /// mni152-2mm (MNI152 brain mask, 91x109x91 at 2 mm), or an atlas name (the voxels of its
    /// label volume); a file of that name wins. Default: the voxels finite and non-zero in
    /// every participant.
    #[arg(long, value_name = "NAME|FILE", help_heading = "Inputs")]
    pub mask: Option<PathBuf>,
    /// How input values are scaled: r (correlations; range-checked, Fisher z applied), z
    /// (already Fisher z) or raw (not correlations, such as streamline counts or fibre densities:
    /// used as they are, no range check, no Fisher z).
    #[arg(long, value_enum, default_value = "r", value_name = "SCALE", help_heading = "Inputs")]
    pub values: Values,
    /// Transform of raw values (with --values raw): none, or log1p = log(1 + x) for counts
    /// (negative values are an error).
    #[arg(long, value_enum, default_value = "none", value_name = "NAME", help_heading = "Inputs")]
    pub transform: config::Transform,
    /// The variable of MATLAB .mat inputs, or the dataset path of HDF5 inputs (--dataset is
    /// the same flag; for example group/conn): an R x R matrix per file, or one stack for the
    /// cohort (MATLAB R x R x N, numpy/HDF5 N x R x R). Default: the file's only numeric array.
    #[arg(long, visible_alias = "dataset", value_name = "NAME", help_heading = "Inputs")]
    pub variable: Option<String>,
    /// Measures in place of --inputs: columns of the participants table (or of
    /// --measures-table) holding scores, for example memory,attention. Each is standardised
    /// across participants; participants with a missing value (n/a) are left out with a warning.
    #[arg(long, value_name = "COL,...", value_delimiter = ',', conflicts_with_all = ["inputs", "similarity"], help_heading = "Inputs")]
    pub measures: Vec<String>,
    /// A separate measures table (TSV, first column participant_id); without --measures, all
    /// its numeric columns are used.
    #[arg(long, value_name = "TSV", conflicts_with_all = ["inputs", "similarity"], help_heading = "Inputs")]
    pub measures_table: Option<PathBuf>,
    /// Atlas naming the regions of matrices (edge labels, network blocks, figure order): a TSV
    /// with columns index, name (and optionally network), one row per region in matrix order, or
    /// a built-in name: northfield100, dosenbach160, seitzman300 (`strata atlases` lists them);
    /// a file of that name wins.
    #[arg(long, value_name = "NAME|FILE", help_heading = "Inputs")]
    pub atlas: Option<PathBuf>,

    /// Participants-table column holding the group labels (for example diagnosis). Required.
    #[arg(long, value_name = "COLUMN", help_heading = "Comparison")]
    pub group_column: Option<String>,
    /// Contrast A,B: maps of A minus B, both levels of --group-column. Required.
    #[arg(long, value_name = "A,B", help_heading = "Comparison")]
    pub contrast: Option<String>,
    /// False-discovery level used to count surviving features in the tables.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_ALPHA, help_heading = "Comparison")]
    pub alpha: f64,
    /// Participants-table columns (numeric or categorical, `n/a` for missing) entering the
    /// comparison model: each scope's A - B contrast becomes a linear model group + covariates
    /// (categorical columns dummy-coded; participants with n/a left out, with a warning), and
    /// only these columns are tested for balance in covariates.tsv. Default: Welch t maps, and
    /// every column other than participant_id and --group-column tested for balance.
    #[arg(long, value_name = "COLUMN,...", help_heading = "Comparison")]
    pub covariates: Option<String>,
    /// Permutations for the permutation p and family-wise (max-statistic) p maps of every
    /// contrast (Freedman-Lane with covariates); 0 writes none. Seeded by --seed.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_PERMUTATIONS, help_heading = "Comparison")]
    pub permutations: usize,
    /// Participants-table column (for example a follow-up score) tested for association with
    /// community membership in outcome.tsv, with effect size and a permutation p (--permutations
    /// shuffles, or 9,999 when 0).
    #[arg(long, value_name = "COLUMN", help_heading = "Comparison")]
    pub outcome: Option<String>,
    /// Participants-table columns (numeric or categorical) regressed out of every feature
    /// before the participant similarity (the maps keep the original features; use
    /// --covariates there). Every participant needs a value.
    #[arg(long, value_name = "COLUMN,...", help_heading = "Features")]
    pub nuisance: Option<String>,

    /// How the sweep's participant graphs are cut from the similarity matrix: density
    /// (strongest fraction of all pairs), knn or mutual-knn (each participant's k most similar),
    /// absolute (every similarity at or above a threshold).
    #[arg(
        long,
        value_enum,
        value_name = "RULE",
        default_value = "density",
        help_heading = "Graph and communities"
    )]
    pub graph: config::GraphRule,
    /// Proportional densities of the sweep (--graph density): a range START:STOP:STEP or a list
    /// A,B,... (fractions of all participant pairs).
    #[arg(long, value_name = "RANGE", default_value = config::DEFAULT_DENSITIES_TEXT, help_heading = "Graph and communities")]
    pub densities: String,
    /// Neighbour counts k of the sweep (--graph knn or mutual-knn): a range or a list.
    #[arg(long, value_name = "RANGE", default_value = config::DEFAULT_NEIGHBOURS_TEXT, help_heading = "Graph and communities")]
    pub neighbours: String,
    /// Similarity thresholds of the sweep (--graph absolute, required there): a range or a list
    /// of Pearson correlations in (0, 1).
    #[arg(long, value_name = "RANGE", help_heading = "Graph and communities")]
    pub thresholds: Option<String>,
    /// Edge weights: weighted (the similarity) or binary (1 for every kept pair).
    #[arg(
        long,
        value_enum,
        value_name = "KIND",
        default_value = "weighted",
        help_heading = "Graph and communities"
    )]
    pub edges: crate::graph::EdgeWeights,
    /// Community-detection method: infomap (two-level map equation, shortest codelength kept),
    /// leiden (modularity, connected communities), leiden-cpm (constant Potts model; give
    /// --resolution as an edge density such as 0.1) or louvain (modularity).
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

    /// Degree-matched random graphs behind the small-world index of the reported participant
    /// graph (graph_measures.tsv, summary.json); 0 skips the index.
    #[arg(long, value_name = "NUM", default_value_t = config::DEFAULT_RANDOM_GRAPHS, help_heading = "Graph and communities")]
    pub random_graphs: usize,

    /// Null cohorts of the null test of "are the subgroups real": each is drawn from one
    /// Gaussian population with the cohort's own mean and covariance (a random rotation of the
    /// participants) and runs through the same sweep, communities and consensus. The smallest
    /// attainable p is 1 / (NUM + 1); 0 skips the test.
    #[arg(long, value_name = "NUM", default_value_t = crate::validation::DEFAULT_NULL_DRAWS, help_heading = "Validation")]
    pub null_draws: usize,
    /// Subsamples of the resampling-stability check: each draws --subsample-fraction of the
    /// participants and reruns graphs and communities on their similarity; 0 skips the check.
    #[arg(long, value_name = "NUM", default_value_t = crate::validation::DEFAULT_SUBSAMPLES, help_heading = "Validation")]
    pub subsamples: usize,
    /// Share of participants drawn (without replacement) per subsample, in (0, 1).
    #[arg(long, value_name = "NUM", default_value_t = crate::validation::DEFAULT_SUBSAMPLE_FRACTION, help_heading = "Validation")]
    pub subsample_fraction: f64,

    /// Output folder (created; refused if it exists and is not empty, unless --force).
    /// Required by run; check reports whether run could write it.
    #[arg(long, value_name = "DIR", help_heading = "Output")]
    pub out: Option<PathBuf>,
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
    /// Builds the validated configuration of `strata run`.
    pub fn into_config(self) -> Result<RunConfig, ConfigError> {
        self.into_config_for(true)
    }

    /// Builds the validated configuration; without `needs_out` a missing --out is left empty
    /// (`strata check`).
    pub fn into_config_for(self, needs_out: bool) -> Result<RunConfig, ConfigError> {
        let missing = |flag: &str, placeholder: &str| ConfigError::Missing {
            flag: format!("--{flag}"),
            placeholder: placeholder.into(),
            key: flag.replace('-', "_"),
        };
        if self.inputs.is_empty()
            && self.similarity.is_none()
            && self.measures.is_empty()
            && self.measures_table.is_none()
        {
            return Err(missing("inputs", "GLOB"));
        }
        let participants = self.participants.ok_or_else(|| missing("participants", "TSV"))?;
        let group_column = self.group_column.ok_or_else(|| missing("group-column", "COLUMN"))?;
        let contrast = self.contrast.ok_or_else(|| missing("contrast", "A,B"))?;
        let out = match self.out {
            Some(out) => out,
            None if needs_out => return Err(missing("out", "DIR")),
            None => PathBuf::new(),
        };
        RunConfig {
            graph: self.graph,
            densities: config::parse_densities(&self.densities)?,
            neighbours: config::parse_neighbours(&self.neighbours)?,
            thresholds: self
                .thresholds
                .as_deref()
                .map(config::parse_thresholds)
                .transpose()?
                .unwrap_or_default(),
            edge_weights: self.edges,
            contrast: config::parse_contrast(&contrast)?,
            inputs: self.inputs,
            similarity: self.similarity,
            participants,
            match_column: self.match_column,
            group_column,
            out,
            force: self.force,
            mask: self.mask,
            values: self.values,
            transform: self.transform,
            variable: self.variable,
            measures: self.measures,
            measures_table: self.measures_table,
            atlas: self.atlas,
            method: self.method,
            trials: self.trials,
            resolution: self.resolution,
            min_community_size: self.min_community_size,
            consensus_threshold: self.consensus_threshold,
            random_graphs: self.random_graphs,
            null_draws: self.null_draws,
            subsamples: self.subsamples,
            subsample_fraction: self.subsample_fraction,
            alpha: self.alpha,
            covariates: self
                .covariates
                .as_deref()
                .map(|text| config::parse_columns("--covariates", text))
                .transpose()?,
            permutations: self.permutations,
            outcome: self.outcome,
            nuisance: self
                .nuisance
                .as_deref()
                .map(|text| config::parse_columns("--nuisance", text))
                .transpose()?
                .unwrap_or_default(),
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
    /// Null cohorts of the null test (as in `strata run`; 0 skips it).
    #[arg(long, value_name = "NUM", default_value_t = crate::validation::DEFAULT_NULL_DRAWS)]
    pub null_draws: usize,
    /// Subsamples of the stability check (as in `strata run`; 0 skips it).
    #[arg(long, value_name = "NUM", default_value_t = crate::validation::DEFAULT_SUBSAMPLES)]
    pub subsamples: usize,
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
    /// Null cohorts of the null test.
    pub null_draws: usize,
    /// Subsamples of the stability check.
    pub subsamples: usize,
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
            null_draws: self.null_draws,
            subsamples: self.subsamples,
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
