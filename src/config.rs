//! `RunConfig`: every tunable of a run with its default and unit, validated in one place.
//!
//! The command line parses flags into a raw struct and calls [`RunConfig::validate`]; cross-flag
//! rules live there and their messages name the flags involved. The validated configuration is
//! serialised into the run's provenance.

use std::path::PathBuf;

use serde::Serialize;

/// The default proportional densities of the sweep: 5% to 50% in steps of 5%.
///
/// Sparse graphs fragment (at 2% of pairs a 120-participant cohort averages 2.4 edges per
/// participant and splits into dozens of pieces) and dense graphs merge subgroups; the consensus
/// rule of `communities::detect` weights each density by its modularity and leaves out densities
/// whose partition collapsed or fragmented, so a wide sweep is safe (measurements in
/// docs/methods.md).
pub const DEFAULT_DENSITIES: [f64; 10] = [0.05, 0.10, 0.15, 0.20, 0.25, 0.30, 0.35, 0.40, 0.45, 0.50];

/// The default sweep as written on the command line.
pub const DEFAULT_DENSITIES_TEXT: &str = "0.05:0.5:0.05";

/// Default community-detection method. Infomap (the map equation) as in the published
/// subgrouping work; with strata's density rule it recovers planted subgroups as well as the
/// modularity methods and finds one community in homogeneous cohorts (docs/methods.md).
pub const DEFAULT_METHOD: crate::communities::Method = crate::communities::Method::Infomap;

/// Default seeded trials per density (the method's best quality is kept); the consensus
/// iterations run as many on the co-assignment graph.
///
/// Four (strata's choice): the null test re-runs the whole sweep and consensus for every null
/// cohort, so the trials set the cost of the validation. On strata's generator, 4, 5 and 20
/// trials gave the same recovery, power and false-positive rate within one cohort in twenty, and
/// the same best codelength per density at 1,000 participants (docs/performance.md); `--trials`
/// raises it. The `infomap` package itself runs one trial unless asked for more.
pub const DEFAULT_TRIALS: usize = 4;

/// Default modularity resolution (1 = Newman-Girvan modularity).
pub const DEFAULT_RESOLUTION: f64 = 1.0;

/// Default minimum community size: smaller communities are reported as unassigned (community 0).
/// Five participants is the smallest group for which per-group means and a Welch test with two
/// participants per level are still meaningful (common practice, not a published threshold).
pub const DEFAULT_MIN_COMMUNITY_SIZE: usize = 5;

/// Default co-assignment threshold tau of the consensus; Lancichinetti & Fortunato (2012) report
/// results insensitive to tau over a broad middle range and use values around 0.5.
pub const DEFAULT_CONSENSUS_THRESHOLD: f64 = 0.5;

/// Default number of degree-matched random graphs behind the small-world index of the reported
/// participant graph (0 skips it). Ten keeps the index's standard error small next to its
/// typical values (strata's choice) at a cost of ten all-pairs path searches.
pub const DEFAULT_RANDOM_GRAPHS: usize = 10;

/// Default number of permutations for the family-wise p maps: 0 (off). Permutations multiply the
/// comparison's cost by their number, so they are asked for (`--permutations 5000` is common
/// practice for a family-wise p near 0.05; Nichols & Holmes 2002 use thousands).
pub const DEFAULT_PERMUTATIONS: usize = 0;

/// Default run seed.
pub const DEFAULT_SEED: u64 = 20_261_202;

/// Default false-discovery level used to count surviving features in the tables.
pub const DEFAULT_ALPHA: f64 = 0.05;

/// How input values are scaled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
pub enum Values {
    /// Correlations r in [-1, 1]: Fisher z = atanh(r) is applied.
    R,
    /// Already Fisher z: used as they are, without range check.
    Z,
    /// Not correlations (streamline counts, fibre densities, any other measure): used as they
    /// are, without range check and without Fisher z.
    Raw,
}

/// A transform of raw input values (`--values raw`) before features are formed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
pub enum Transform {
    /// Values as they are.
    None,
    /// log(1 + x), for counts (x >= 0): compresses a heavy right tail, keeps 0 at 0.
    Log1p,
}

/// A validated run configuration.
#[derive(Debug, Clone, Serialize)]
pub struct RunConfig {
    /// Glob patterns or paths of the input files.
    pub inputs: Vec<String>,
    /// A precomputed N x N participant similarity matrix (`.npy`, participants-table order) used
    /// in place of `inputs`.
    pub similarity: Option<PathBuf>,
    /// The BIDS participants table.
    pub participants: PathBuf,
    /// Match files by this table column instead of the `sub-<label>` in the file name.
    pub match_column: Option<String>,
    /// The participants-table column holding the group (diagnosis) labels.
    pub group_column: String,
    /// The contrast A - B: (A, B), both levels of `group_column`.
    pub contrast: (String, String),
    /// The output folder.
    pub out: PathBuf,
    /// Replace an existing, non-empty output folder.
    pub force: bool,
    /// A mask volume for seed maps (non-zero voxels are kept): a file, or a built-in name as
    /// given (resolved where read, by [`crate::atlas::mask_path`]).
    pub mask: Option<PathBuf>,
    /// How input values are scaled.
    pub values: Values,
    /// Transform of raw values (`Values::Raw` only).
    pub transform: Transform,
    /// The variable read from MATLAB `.mat` inputs (None: each file's only numeric variable).
    pub variable: Option<String>,
    /// Measure columns (of the participants table, or of `measures_table`) in place of inputs.
    pub measures: Vec<String>,
    /// A separate measures table keyed by `participant_id` (all numeric columns when
    /// `measures` is empty).
    pub measures_table: Option<PathBuf>,
    /// An atlas table (TSV with `index` and `name` columns, optional `network`) naming regions:
    /// a file, or a built-in name as given (resolved where read, by [`crate::atlas::atlas_path`]).
    pub atlas: Option<PathBuf>,
    /// How the sweep's graphs are cut from the similarity matrix.
    pub graph: GraphRule,
    /// Proportional densities of the sweep, each in (0, 1] (graph rule `density`).
    pub densities: Vec<f64>,
    /// Neighbour counts k (graph rules `knn`, `mutual_knn`).
    pub neighbours: Vec<usize>,
    /// Absolute similarity thresholds (graph rule `absolute`).
    pub thresholds: Vec<f64>,
    /// Weighted or binary edges.
    pub edge_weights: crate::graph::EdgeWeights,
    /// Community-detection method.
    pub method: crate::communities::Method,
    /// Seeded trials per density.
    pub trials: usize,
    /// Modularity resolution gamma.
    pub resolution: f64,
    /// Minimum community size.
    pub min_community_size: usize,
    /// Consensus co-assignment threshold tau.
    pub consensus_threshold: f64,
    /// Degree-matched random graphs for the small-world index (0 skips it).
    pub random_graphs: usize,
    /// Null cohorts of the rotation null test (0 = no null test).
    pub null_draws: usize,
    /// Subsamples of the resampling-stability check (0 = no stability check).
    pub subsamples: usize,
    /// Share of participants drawn per subsample, in (0, 1].
    pub subsample_fraction: f64,
    /// False-discovery level for counting surviving features.
    pub alpha: f64,
    /// Participants-table columns given with `--covariates`: the comparison model becomes the
    /// linear model group + covariates, and these columns are tested for balance across
    /// communities (`covariates.tsv`). `None` when the flag is absent: Welch comparisons, and
    /// every column other than `participant_id` and the group column tested for balance.
    pub covariates: Option<Vec<String>>,
    /// Participants-table columns regressed out of the features before the similarity step.
    pub nuisance: Vec<String>,
    /// A participants-table column tested for association with community membership
    /// (`outcome.tsv`).
    pub outcome: Option<String>,
    /// Permutations for the per-feature and family-wise permutation p maps (0 = none).
    pub permutations: usize,
    /// Run seed.
    pub seed: u64,
    /// Worker threads (0 = one per core).
    pub threads: usize,
}

/// The command line or configuration is invalid.
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// A flag's value is invalid.
    #[error("{flag}: {message}")]
    Invalid {
        /// The flag, as spelled on the command line.
        flag: String,
        /// What is wrong and what to do.
        message: String,
    },
    /// A value the run needs was given neither as a flag nor in the configuration file.
    #[error("{flag}: required; give {flag} {placeholder} on the command line or {key} = ... in a configuration file")]
    Missing {
        /// The flag.
        flag: String,
        /// Its placeholder (`DIR`, `TSV`).
        placeholder: String,
        /// The key of the configuration file.
        key: String,
    },
    /// The configuration file cannot be read.
    #[error("{}: cannot read the configuration file: {source}", path.display())]
    FileRead {
        /// The file.
        path: PathBuf,
        /// Why.
        source: std::io::Error,
    },
    /// The configuration file is not TOML.
    #[error("{}: not valid TOML: {message}", path.display())]
    FileSyntax {
        /// The file.
        path: PathBuf,
        /// The parser's message and line.
        message: String,
    },
    /// The configuration file has a key that is not a flag of `strata run`.
    #[error("{}: unknown key '{key}'{hint}; known keys: {known}", path.display())]
    UnknownKey {
        /// The file.
        path: PathBuf,
        /// The key found.
        key: String,
        /// A suggestion, or empty.
        hint: String,
        /// Every known key, comma-separated.
        known: String,
    },
    /// A key of the configuration file has a value of the wrong type or outside its range.
    #[error("{}: key '{key}': found {found}; allowed: {allowed}", path.display())]
    FileValue {
        /// The file.
        path: PathBuf,
        /// The key.
        key: String,
        /// The value found, as TOML.
        found: String,
        /// The values allowed (or what is wrong with the value found).
        allowed: String,
    },
}

fn invalid(flag: &str, message: impl Into<String>) -> ConfigError {
    ConfigError::Invalid { flag: flag.to_string(), message: message.into() }
}

/// Parses numbers given as a comma-separated list (`0.05,0.1`) or a range `START:STOP:STEP`
/// (inclusive of STOP within rounding); `example` is shown in messages.
pub fn parse_numbers(flag: &str, text: &str, example: &str) -> Result<Vec<f64>, ConfigError> {
    let parse = |part: &str| -> Result<f64, ConfigError> {
        part.trim().parse::<f64>().ok().filter(|value| value.is_finite()).ok_or_else(|| {
            invalid(flag, format!("'{part}' is not a number; give a list or a range, for example {example}"))
        })
    };
    let values = if text.contains(':') {
        let parts: Vec<&str> = text.split(':').collect();
        if parts.len() != 3 {
            return Err(invalid(
                flag,
                format!("range '{text}' must be START:STOP:STEP, for example {example}"),
            ));
        }
        let (start, stop, step) = (parse(parts[0])?, parse(parts[1])?, parse(parts[2])?);
        if step <= 0.0 || stop < start {
            return Err(invalid(flag, format!("range '{text}' needs STEP > 0 and STOP >= START")));
        }
        let count = ((stop - start) / step + 1e-9).floor() as usize + 1;
        if count > MAX_SWEEP_LEVELS {
            return Err(invalid(
                flag,
                format!("range '{text}' gives {count} values; at most {MAX_SWEEP_LEVELS} are allowed"),
            ));
        }
        (0..count).map(|index| ((start + step * index as f64) * 1e9).round() / 1e9).collect()
    } else {
        text.split(',').filter(|part| !part.trim().is_empty()).map(parse).collect::<Result<Vec<_>, _>>()?
    };
    if values.is_empty() {
        return Err(invalid(flag, format!("no value given; for example {example}")));
    }
    Ok(values)
}

/// A sweep has at most this many graphs (guards against a mistyped range such as 0:1:0.0001).
pub const MAX_SWEEP_LEVELS: usize = 1000;

/// Parses a density list or range, each density a fraction in (0, 1].
pub fn parse_densities(text: &str) -> Result<Vec<f64>, ConfigError> {
    const FLAG: &str = "--densities";
    let densities = parse_numbers(FLAG, text, "0.05:0.5:0.05")?;
    for &density in &densities {
        if !(density > 0.0 && density <= 1.0) {
            return Err(invalid(
                FLAG,
                format!(
                    "density {density} is outside (0, 1]; densities are fractions of all participant pairs"
                ),
            ));
        }
    }
    Ok(densities)
}

/// Parses the neighbour counts k of k-nearest-neighbour graphs (whole numbers, at least 1).
pub fn parse_neighbours(text: &str) -> Result<Vec<usize>, ConfigError> {
    const FLAG: &str = "--neighbours";
    parse_numbers(FLAG, text, "5:30:5")?
        .into_iter()
        .map(|k| {
            if k >= 1.0 && k.fract() == 0.0 {
                Ok(k as usize)
            } else {
                Err(invalid(FLAG, format!("{k} is not a whole number of neighbours of at least 1")))
            }
        })
        .collect()
}

/// Parses absolute similarity thresholds (each in (0, 1): only positive similarities are edges).
pub fn parse_thresholds(text: &str) -> Result<Vec<f64>, ConfigError> {
    const FLAG: &str = "--thresholds";
    let thresholds = parse_numbers(FLAG, text, "0.2:0.5:0.05")?;
    for &threshold in &thresholds {
        if !(threshold > 0.0 && threshold < 1.0) {
            return Err(invalid(
                FLAG,
                format!("threshold {threshold} is outside (0, 1); thresholds are Pearson correlations between participants"),
            ));
        }
    }
    Ok(thresholds)
}

/// How the participant graphs of the sweep are cut from the similarity matrix.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
pub enum GraphRule {
    /// Proportional density: the strongest fraction of all pairs (--densities).
    Density,
    /// k nearest neighbours, an edge when either participant lists the other (--neighbours).
    Knn,
    /// Mutual k nearest neighbours, an edge when both list each other (--neighbours).
    MutualKnn,
    /// Absolute threshold: every similarity at or above each value (--thresholds).
    Absolute,
}

/// The default neighbour counts of k-nearest-neighbour sweeps.
pub const DEFAULT_NEIGHBOURS_TEXT: &str = "5:30:5";

/// Parses a comma-separated list of participants-table columns (`age,sex,mean_fd`) for `flag`.
pub fn parse_columns(flag: &str, text: &str) -> Result<Vec<String>, ConfigError> {
    let columns: Vec<String> =
        text.split(',').map(str::trim).filter(|part| !part.is_empty()).map(str::to_string).collect();
    if columns.is_empty() {
        return Err(invalid(
            flag,
            format!("no column given in '{text}'; for example {flag} age,sex,mean_fd"),
        ));
    }
    for (index, column) in columns.iter().enumerate() {
        if columns[..index].contains(column) {
            return Err(invalid(flag, format!("column '{column}' is listed twice; list each column once")));
        }
        if column == "participant_id" {
            return Err(invalid(flag, "participant_id identifies participants and cannot be a covariate"));
        }
    }
    Ok(columns)
}

/// Parses `A,B` into the contrast levels.
pub fn parse_contrast(text: &str) -> Result<(String, String), ConfigError> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    match parts.as_slice() {
        [a, b] if !a.is_empty() && !b.is_empty() && a != b => Ok((a.to_string(), b.to_string())),
        [a, b] if a == b && !a.is_empty() => Err(invalid(
            "--contrast",
            format!("both levels are '{a}'; give two different levels, for example insomnia,control"),
        )),
        _ => Err(invalid(
            "--contrast",
            format!(
                "'{text}' is not two levels A,B of --group-column; for example --contrast insomnia,control"
            ),
        )),
    }
}

impl RunConfig {
    /// A configuration with every tunable at its default.
    pub fn with_defaults(
        inputs: Vec<String>,
        participants: PathBuf,
        group_column: &str,
        contrast: (&str, &str),
        out: PathBuf,
    ) -> Self {
        RunConfig {
            inputs,
            similarity: None,
            participants,
            match_column: None,
            group_column: group_column.to_string(),
            contrast: (contrast.0.to_string(), contrast.1.to_string()),
            out,
            force: false,
            mask: None,
            values: Values::R,
            transform: Transform::None,
            variable: None,
            measures: Vec::new(),
            measures_table: None,
            atlas: None,
            graph: GraphRule::Density,
            densities: DEFAULT_DENSITIES.to_vec(),
            neighbours: vec![5, 10, 15, 20, 25, 30],
            thresholds: Vec::new(),
            edge_weights: crate::graph::EdgeWeights::Weighted,
            method: DEFAULT_METHOD,
            trials: DEFAULT_TRIALS,
            resolution: DEFAULT_RESOLUTION,
            min_community_size: DEFAULT_MIN_COMMUNITY_SIZE,
            consensus_threshold: DEFAULT_CONSENSUS_THRESHOLD,
            random_graphs: DEFAULT_RANDOM_GRAPHS,
            null_draws: crate::validation::DEFAULT_NULL_DRAWS,
            subsamples: crate::validation::DEFAULT_SUBSAMPLES,
            subsample_fraction: crate::validation::DEFAULT_SUBSAMPLE_FRACTION,
            alpha: DEFAULT_ALPHA,
            covariates: None,
            permutations: DEFAULT_PERMUTATIONS,
            outcome: None,
            nuisance: Vec::new(),
            seed: DEFAULT_SEED,
            threads: 0,
        }
    }

    /// True when the run analyses a measure table rather than input files.
    pub fn uses_measures(&self) -> bool {
        !self.measures.is_empty() || self.measures_table.is_some()
    }

    /// Checks cross-flag rules; every message names the flags involved.
    pub fn validate(self) -> Result<Self, ConfigError> {
        // Built-in names are resolved here so an unknown name fails before anything is read.
        if let Some(atlas) = &self.atlas {
            crate::atlas::resolve_table(atlas, "--atlas")
                .map_err(|error| invalid("--atlas", error.problem()))?;
        }
        if let Some(mask) = &self.mask {
            crate::atlas::resolve_mask(mask, "--mask").map_err(|error| invalid("--mask", error.problem()))?;
        }
        if self.uses_measures() && (!self.inputs.is_empty() || self.similarity.is_some()) {
            return Err(invalid(
                "--measures",
                "takes the place of --inputs and --similarity; give one kind of input per run",
            ));
        }
        if self.uses_measures() && self.values != Values::R {
            return Err(invalid(
                "--values",
                "does not apply to measures (they are standardised, never Fisher-transformed); drop --values",
            ));
        }
        if self.inputs.is_empty() && self.similarity.is_none() && !self.uses_measures() {
            return Err(invalid(
                "--inputs",
                "no input given; for example --inputs 'maps/sub-*_seedmap.nii.gz'",
            ));
        }
        if self.transform != Transform::None && self.values != Values::Raw {
            return Err(invalid(
                "--transform",
                "applies to raw values (counts, densities) only; pass --values raw with it, or drop --transform for correlations",
            ));
        }
        if self.trials == 0 {
            return Err(invalid("--trials", "must be at least 1"));
        }
        if !self.resolution.is_finite() || self.resolution <= 0.0 {
            return Err(invalid("--resolution", format!("{} must be a positive number", self.resolution)));
        }
        if !(self.consensus_threshold > 0.0 && self.consensus_threshold < 1.0) {
            return Err(invalid(
                "--consensus-threshold",
                format!("{} must lie strictly between 0 and 1", self.consensus_threshold),
            ));
        }
        if let Some(column) = self.covariates.iter().flatten().find(|column| **column == self.group_column) {
            return Err(invalid(
                "--covariates",
                format!("'{column}' is the --group-column; the group enters every comparison already, list other columns"),
            ));
        }
        if self.outcome.as_deref() == Some(self.group_column.as_str()) {
            return Err(invalid(
                "--outcome",
                format!(
                    "'{}' is the --group-column; composition.tsv already tests it against the communities",
                    self.group_column
                ),
            ));
        }
        if self.permutations > 0 && 1.0 / (self.permutations as f64 + 1.0) > self.alpha {
            return Err(invalid(
                "--permutations",
                format!(
                    "{} permutations give a smallest attainable p of 1/{} = {:.3}, above --alpha {}; use at least {} permutations",
                    self.permutations,
                    self.permutations + 1,
                    1.0 / (self.permutations as f64 + 1.0),
                    self.alpha,
                    (1.0 / self.alpha).ceil() as usize
                ),
            ));
        }
        if !(self.alpha > 0.0 && self.alpha < 1.0) {
            return Err(invalid("--alpha", format!("{} must lie strictly between 0 and 1", self.alpha)));
        }
        if !(self.subsample_fraction > 0.0 && self.subsample_fraction < 1.0) {
            return Err(invalid(
                "--subsample-fraction",
                format!(
                    "{} must lie strictly between 0 and 1 (a share of participants drawn per subsample, for example 0.8)",
                    self.subsample_fraction
                ),
            ));
        }
        if self.min_community_size == 0 {
            return Err(invalid("--min-community-size", "must be at least 1"));
        }
        if self.graph == GraphRule::Absolute && self.thresholds.is_empty() {
            return Err(invalid(
                "--graph absolute",
                "needs --thresholds, for example --graph absolute --thresholds 0.2:0.5:0.05",
            ));
        }
        Ok(self)
    }

    /// The graphs of the sweep under the chosen rule.
    pub fn levels(&self) -> Vec<crate::graph::SweepLevel> {
        use crate::graph::SweepLevel;
        match self.graph {
            GraphRule::Density => self.densities.iter().map(|&d| SweepLevel::Density(d)).collect(),
            GraphRule::Knn => self.neighbours.iter().map(|&k| SweepLevel::Neighbours(k)).collect(),
            GraphRule::MutualKnn => {
                self.neighbours.iter().map(|&k| SweepLevel::MutualNeighbours(k)).collect()
            }
            GraphRule::Absolute => self.thresholds.iter().map(|&t| SweepLevel::Threshold(t)).collect(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn density_range_is_inclusive() {
        let densities = parse_densities("0.02:0.2:0.02").unwrap();
        assert_eq!(densities.len(), 10);
        assert!((densities[9] - 0.2).abs() < 1e-12);
        assert_eq!(parse_densities("0.05, 0.1").unwrap(), vec![0.05, 0.1]);
    }

    #[test]
    fn bad_densities_name_the_flag() {
        let message = parse_densities("0.5,1.5").unwrap_err().to_string();
        assert!(message.starts_with("--densities: density 1.5 is outside (0, 1]"), "{message}");
        let message = parse_densities("a").unwrap_err().to_string();
        assert!(message.contains("'a' is not a number"), "{message}");
    }

    #[test]
    fn contrast_needs_two_different_levels() {
        assert_eq!(parse_contrast("insomnia,control").unwrap(), ("insomnia".into(), "control".into()));
        assert!(parse_contrast("insomnia").unwrap_err().to_string().contains("is not two levels"));
        assert!(parse_contrast("a,a").unwrap_err().to_string().contains("both levels are 'a'"));
    }
}
