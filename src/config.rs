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

/// Default seeded trials per density (the method's best quality is kept).
pub const DEFAULT_TRIALS: usize = 20;

/// Default modularity resolution (1 = Newman-Girvan modularity).
pub const DEFAULT_RESOLUTION: f64 = 1.0;

/// Default minimum community size: smaller communities are reported as unassigned (community 0).
/// Five participants is the smallest group for which per-group means and a Welch test with two
/// participants per level are still meaningful (common practice, not a published threshold).
pub const DEFAULT_MIN_COMMUNITY_SIZE: usize = 5;

/// Default co-assignment threshold tau of the consensus; Lancichinetti & Fortunato (2012) report
/// results insensitive to tau over a broad middle range and use values around 0.5.
pub const DEFAULT_CONSENSUS_THRESHOLD: f64 = 0.5;

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
}

/// A validated run configuration.
#[derive(Debug, Clone, Serialize)]
pub struct RunConfig {
    /// Glob patterns or paths of the input files.
    pub inputs: Vec<String>,
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
    /// A mask volume for seed maps (non-zero voxels are kept).
    pub mask: Option<PathBuf>,
    /// How input values are scaled.
    pub values: Values,
    /// An atlas table (TSV with `index` and `name` columns, optional `network`) naming regions.
    pub atlas: Option<PathBuf>,
    /// Proportional densities of the sweep, each in (0, 1].
    pub densities: Vec<f64>,
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
    /// False-discovery level for counting surviving features.
    pub alpha: f64,
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
}

fn invalid(flag: &str, message: impl Into<String>) -> ConfigError {
    ConfigError::Invalid { flag: flag.to_string(), message: message.into() }
}

/// Parses a density list: comma-separated values (`0.05,0.1`) or a range `START:STOP:STEP`
/// (inclusive of STOP within rounding), each density a fraction in (0, 1].
pub fn parse_densities(text: &str) -> Result<Vec<f64>, ConfigError> {
    const FLAG: &str = "--densities";
    let parse = |part: &str| -> Result<f64, ConfigError> {
        part.trim().parse::<f64>().map_err(|_| {
            invalid(
                FLAG,
                format!("'{part}' is not a number; give fractions like 0.05,0.1 or a range 0.02:0.2:0.02"),
            )
        })
    };
    let densities = if text.contains(':') {
        let parts: Vec<&str> = text.split(':').collect();
        if parts.len() != 3 {
            return Err(invalid(
                FLAG,
                format!("range '{text}' must be START:STOP:STEP, for example 0.02:0.2:0.02"),
            ));
        }
        let (start, stop, step) = (parse(parts[0])?, parse(parts[1])?, parse(parts[2])?);
        if step.is_nan() || step <= 0.0 || stop < start {
            return Err(invalid(FLAG, format!("range '{text}' needs STEP > 0 and STOP >= START")));
        }
        let count = ((stop - start) / step + 1e-9).floor() as usize + 1;
        (0..count).map(|index| ((start + step * index as f64) * 1e9).round() / 1e9).collect()
    } else {
        text.split(',').filter(|part| !part.trim().is_empty()).map(parse).collect::<Result<Vec<_>, _>>()?
    };
    if densities.is_empty() {
        return Err(invalid(FLAG, "no density given; for example --densities 0.02:0.2:0.02"));
    }
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
            participants,
            match_column: None,
            group_column: group_column.to_string(),
            contrast: (contrast.0.to_string(), contrast.1.to_string()),
            out,
            force: false,
            mask: None,
            values: Values::R,
            atlas: None,
            densities: DEFAULT_DENSITIES.to_vec(),
            method: DEFAULT_METHOD,
            trials: DEFAULT_TRIALS,
            resolution: DEFAULT_RESOLUTION,
            min_community_size: DEFAULT_MIN_COMMUNITY_SIZE,
            consensus_threshold: DEFAULT_CONSENSUS_THRESHOLD,
            alpha: DEFAULT_ALPHA,
            seed: DEFAULT_SEED,
            threads: 0,
        }
    }

    /// Checks cross-flag rules; every message names the flags involved.
    pub fn validate(self) -> Result<Self, ConfigError> {
        if self.inputs.is_empty() {
            return Err(invalid(
                "--inputs",
                "no input given; for example --inputs 'maps/sub-*_seedmap.nii.gz'",
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
        if !(self.alpha > 0.0 && self.alpha < 1.0) {
            return Err(invalid("--alpha", format!("{} must lie strictly between 0 and 1", self.alpha)));
        }
        if self.min_community_size == 0 {
            return Err(invalid("--min-community-size", "must be at least 1"));
        }
        Ok(self)
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
