//! Reads a finished run folder for the HTML report: the files `strata run` always writes
//! (`summary.json`, `participants.tsv`) and every file it may write (similarity and
//! co-assignment matrices, `sweep.tsv`, `comparisons.tsv`, `provenance.json`, `maps/`), plus the
//! optional results of later stages, each read by one small function below
//! ([`read_optional_table`], [`read_null_test`], [`read_stability`]) so their names and keys sit
//! in one place. A missing optional file leaves its section out of the report; a file that is
//! present but unreadable becomes a note in the report rather than a failure.

use std::path::{Path, PathBuf};

use ndarray::Array2;
use serde::Deserialize;
use serde_json::Value;

use crate::read::{self, ParticipantsTable};

/// The run's summary file.
pub const SUMMARY_FILE: &str = "summary.json";
/// The run's participants table (input columns plus `community` and `consistency`).
pub const PARTICIPANTS_FILE: &str = "participants.tsv";
/// Provenance of the run.
pub const PROVENANCE_FILE: &str = "provenance.json";
/// The report itself.
pub const REPORT_FILE: &str = "report.html";

/// A finished run folder cannot be read for a report.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// A file every run writes is missing.
    #[error("{path}: not found; `strata report` needs a run folder written by `strata run` ({what}); give the run's --out folder")]
    Missing {
        /// The missing file.
        path: PathBuf,
        /// What the file holds.
        what: &'static str,
    },
    /// A file every run writes cannot be parsed.
    #[error(
        "{path}: {message}; the run folder may be incomplete or from another program: run `strata run` again"
    )]
    Invalid {
        /// The file.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// A table could not be read.
    #[error(transparent)]
    Read(#[from] read::ReadError),
}

/// One community as `summary.json` lists it.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct CommunityView {
    /// 1..=k, or 0 for unassigned participants.
    pub community: usize,
    /// Participants in it.
    pub size: usize,
    /// Participants per group level.
    pub group_counts: Vec<(String, usize)>,
}

/// One comparison scope as `summary.json` lists it (NaN values arrive as null).
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct ComparisonView {
    /// `all` or a community number.
    pub scope: String,
    /// Participants of level A.
    pub count_a: usize,
    /// Participants of level B.
    pub count_b: usize,
    /// Whether maps were written.
    pub written: bool,
    /// Why not.
    pub reason: Option<String>,
    /// Features with q below alpha.
    pub significant_features: usize,
    /// Where the largest |t| is.
    pub peak: String,
    /// The t at the peak.
    pub peak_t: Option<f64>,
}

/// The keys of `summary.json` the report uses (others are ignored).
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(default)]
pub struct SummaryView {
    /// strata's version.
    pub strata_version: String,
    /// The output folder the run was asked for (its final name; the report may be rendered
    /// while the folder still has its staging name).
    pub output: String,
    /// `seed_maps`, `region_matrices` or `similarity_matrix`.
    pub input_kind: String,
    /// Participants analysed.
    pub participant_count: usize,
    /// Features per participant.
    pub feature_count: usize,
    /// What the features are.
    pub feature_description: String,
    /// The group column.
    pub group_column: String,
    /// The contrast levels.
    pub contrast: Vec<String>,
    /// Participants per group level.
    pub group_counts: Vec<(String, usize)>,
    /// Community-detection method.
    pub method: String,
    /// Graph rule of the sweep.
    pub graph_rule: String,
    /// Parameter per graph of the sweep.
    pub sweep_parameters: Vec<f64>,
    /// Graphs that entered the consensus (by density).
    pub densities_in_consensus: Vec<f64>,
    /// Communities found (excluding unassigned).
    pub community_count: usize,
    /// Communities and composition.
    pub communities: Vec<CommunityView>,
    /// Modularity of the consensus.
    pub consensus_modularity: Option<f64>,
    /// Median per-participant consistency.
    pub median_consistency: Option<f64>,
    /// The contrasts.
    pub comparisons: Vec<ComparisonView>,
    /// False-discovery level.
    pub alpha: Option<f64>,
    /// Warning sentences.
    pub warnings: Vec<String>,
    /// Run time in seconds.
    pub seconds: Option<f64>,
}

/// The null test of the communities (`summary.json` key `null_test`).
#[derive(Debug, Clone, Default)]
pub struct NullTest {
    /// Name of the test statistic (key `statistic`, optional).
    pub statistic: Option<String>,
    /// Observed value (key `observed`).
    pub observed: f64,
    /// p value (key `p_value`).
    pub p_value: Option<f64>,
    /// (probability, value) pairs of the null distribution (key `null_quantiles`).
    pub quantiles: Vec<(f64, f64)>,
    /// The null draws themselves, when given (key `null_values`, optional).
    pub values: Vec<f64>,
    /// The verdict (key `subgroups_supported`).
    pub supported: Option<bool>,
    /// The verdict in one sentence (top-level `summary.json` key `verdict`).
    pub sentence: Option<String>,
}

/// Resampling stability of the partition (`summary.json` key `stability`).
#[derive(Debug, Clone, Default)]
pub struct StabilitySummary {
    /// Median adjusted Rand index of subsample partitions with the full one (key `median_ari`).
    pub median_ari: Option<f64>,
    /// The other scalar keys, as text, in file order.
    pub other: Vec<(String, String)>,
    /// (community, mean best-match Jaccard) from key `communities`, when given.
    pub communities: Vec<(usize, f64)>,
}

/// Results of later stages, each present only when its file or key exists.
#[derive(Debug, Clone, Default)]
pub struct OptionalResults {
    /// `composition.tsv`: tests of group composition across communities.
    pub composition: Option<ParticipantsTable>,
    /// `covariates.tsv`: covariate balance across communities.
    pub covariates: Option<ParticipantsTable>,
    /// `outcome.tsv`: association of communities with an outcome.
    pub outcome: Option<ParticipantsTable>,
    /// `stability.tsv`: per-community stability.
    pub stability_table: Option<ParticipantsTable>,
    /// `subsamples.tsv`: the adjusted Rand index of each resampled partition.
    pub subsamples_table: Option<ParticipantsTable>,
    /// `contrast_correlations.tsv`: correlation between the scopes' difference maps.
    pub contrast_correlations: Option<ParticipantsTable>,
    /// `summary.json` `null_test`.
    pub null_test: Option<NullTest>,
    /// `summary.json` `stability`.
    pub stability: Option<StabilitySummary>,
}

/// A region table (atlas): names and, when given, networks, in matrix order.
#[derive(Debug, Clone)]
pub struct Atlas {
    /// Region names.
    pub names: Vec<String>,
    /// Network of each region, when the table has a `network` column.
    pub networks: Option<Vec<String>>,
}

/// One map file of `maps/`, named `key-value_..._suffix.ext`.
#[derive(Debug, Clone)]
pub struct MapFile {
    /// The file.
    pub path: PathBuf,
    /// `all` or the community number (entity `comm`).
    pub community: String,
    /// Entity `group`, if any.
    pub group: Option<String>,
    /// Entity `contrast`, if any.
    pub contrast: Option<String>,
    /// The statistic suffix (`mean`, `t`, ...).
    pub suffix: String,
    /// True for NIfTI maps, false for `.npy` matrices.
    pub is_volume: bool,
}

/// Everything of a run folder the report shows.
#[derive(Debug, Clone)]
pub struct RunFiles {
    /// The run folder.
    pub dir: PathBuf,
    /// `summary.json`.
    pub summary: SummaryView,
    /// `participants.tsv`.
    pub participants: ParticipantsTable,
    /// `provenance.json`, and the SHA-256 of its bytes.
    pub provenance: Option<(Value, String)>,
    /// `similarity.npy`.
    pub similarity: Option<Array2<f32>>,
    /// `coassignment.npy`.
    pub coassignment: Option<Array2<f32>>,
    /// `sweep.tsv`.
    pub sweep: Option<ParticipantsTable>,
    /// `comparisons.tsv`.
    pub comparisons: Option<ParticipantsTable>,
    /// The atlas named in the provenance parameters, when it can still be read.
    pub atlas: Option<Atlas>,
    /// The files of `maps/`, sorted by name.
    pub maps: Vec<MapFile>,
    /// Results of later stages.
    pub optional: OptionalResults,
    /// Files that were present but could not be read, in words.
    pub notes: Vec<String>,
}

impl RunFiles {
    /// Reads a run folder.
    ///
    /// # Errors
    /// [`ReportError::Missing`] or [`ReportError::Invalid`] when `summary.json` or
    /// `participants.tsv` is missing or unreadable; every other file is optional.
    pub fn read(dir: &Path) -> Result<Self, ReportError> {
        let summary_path = dir.join(SUMMARY_FILE);
        if !summary_path.is_file() {
            return Err(ReportError::Missing { path: summary_path, what: "the run summary" });
        }
        let summary_json: Value = read_json(&summary_path)?;
        let summary: SummaryView =
            serde_json::from_value(summary_json.clone()).map_err(|error| ReportError::Invalid {
                path: summary_path.clone(),
                message: format!("unexpected content ({error})"),
            })?;
        let participants_path = dir.join(PARTICIPANTS_FILE);
        if !participants_path.is_file() {
            return Err(ReportError::Missing {
                path: participants_path,
                what: "the participants with their communities",
            });
        }
        let participants = read::read_table(&participants_path)?;
        for column in ["community"] {
            if participants.column(column).is_none() {
                return Err(ReportError::Invalid {
                    path: participants_path,
                    message: format!("no '{column}' column"),
                });
            }
        }
        let mut notes = Vec::new();
        let provenance = read_provenance(dir, &mut notes);
        let similarity = read_square(dir, "similarity.npy", participants.row_count(), &mut notes);
        let coassignment = read_square(dir, "coassignment.npy", participants.row_count(), &mut notes);
        let sweep = read_optional_table(dir, "sweep.tsv", &mut notes);
        let comparisons = read_optional_table(dir, "comparisons.tsv", &mut notes);
        let atlas = provenance.as_ref().and_then(|(value, _)| read_atlas(value, &mut notes));
        let maps = list_maps(&dir.join("maps"));
        let optional = OptionalResults {
            composition: read_optional_table(dir, "composition.tsv", &mut notes),
            covariates: read_optional_table(dir, "covariates.tsv", &mut notes),
            outcome: read_optional_table(dir, "outcome.tsv", &mut notes),
            stability_table: read_optional_table(dir, "stability.tsv", &mut notes),
            subsamples_table: read_optional_table(dir, "subsamples.tsv", &mut notes),
            contrast_correlations: read_optional_table(dir, "contrast_correlations.tsv", &mut notes),
            null_test: read_null_test(&summary_json),
            stability: read_stability(&summary_json),
        };
        Ok(RunFiles {
            dir: dir.to_path_buf(),
            summary,
            participants,
            provenance,
            similarity,
            coassignment,
            sweep,
            comparisons,
            atlas,
            maps,
            optional,
            notes,
        })
    }

    /// The community of each participant (cohort order; unreadable cells count as 0).
    pub fn membership(&self) -> Vec<usize> {
        self.participants
            .column("community")
            .unwrap_or_default()
            .iter()
            .map(|value| value.trim().parse().unwrap_or(0))
            .collect()
    }

    /// The consistency of each participant (NaN when missing).
    pub fn consistency(&self) -> Vec<f64> {
        match self.participants.column("consistency") {
            Some(column) => column.iter().map(|value| value.trim().parse().unwrap_or(f64::NAN)).collect(),
            None => vec![f64::NAN; self.participants.row_count()],
        }
    }

    /// The map of `community` with this suffix and contrast (`None` = no contrast entity), and no
    /// group entity.
    pub fn map(&self, community: &str, suffix: &str, contrast: bool) -> Option<&MapFile> {
        self.maps.iter().find(|map| {
            map.community == community
                && map.suffix == suffix
                && map.group.is_none()
                && map.contrast.is_some() == contrast
        })
    }
}

fn read_json(path: &Path) -> Result<Value, ReportError> {
    let text = std::fs::read_to_string(path)
        .map_err(|source| read::ReadError::Io { path: path.to_path_buf(), source })?;
    serde_json::from_str(&text).map_err(|error| ReportError::Invalid {
        path: path.to_path_buf(),
        message: format!("not valid JSON ({error})"),
    })
}

fn read_provenance(dir: &Path, notes: &mut Vec<String>) -> Option<(Value, String)> {
    let path = dir.join(PROVENANCE_FILE);
    if !path.is_file() {
        return None;
    }
    match (read_json(&path), super::file_sha256(&path)) {
        (Ok(value), Ok((digest, _))) => Some((value, digest)),
        (Err(error), _) => {
            notes.push(error.to_string());
            None
        }
        (_, Err(error)) => {
            notes.push(format!("{}: {error}", path.display()));
            None
        }
    }
}

/// An N x N float32 matrix of the run, when present and of the participants' size.
fn read_square(dir: &Path, name: &str, participants: usize, notes: &mut Vec<String>) -> Option<Array2<f32>> {
    let path = dir.join(name);
    if !path.is_file() {
        return None;
    }
    match ndarray_npy::read_npy::<_, Array2<f32>>(&path) {
        Ok(matrix) if matrix.nrows() == participants && matrix.ncols() == participants => Some(matrix),
        Ok(matrix) => {
            notes.push(format!(
                "{}: {}x{} matrix for {participants} participants; figure left out",
                path.display(),
                matrix.nrows(),
                matrix.ncols()
            ));
            None
        }
        Err(error) => {
            notes.push(format!("{}: cannot read ({error}); figure left out", path.display()));
            None
        }
    }
}

/// A table of the run folder, when present (`name` is the file name: `composition.tsv`,
/// `covariates.tsv`, `outcome.tsv`, `stability.tsv`, `sweep.tsv`, `comparisons.tsv`).
pub fn read_optional_table(dir: &Path, name: &str, notes: &mut Vec<String>) -> Option<ParticipantsTable> {
    let path = dir.join(name);
    if !path.is_file() {
        return None;
    }
    match read::read_table(&path) {
        Ok(table) => Some(table),
        Err(error) => {
            notes.push(format!("{error}; section left out"));
            None
        }
    }
}

/// The square matrix of `contrast_correlations.tsv` (one row per pair of scopes: columns
/// `community_a`, `community_b`, `correlation`): the scopes with `all` first, then communities
/// by number (other names after them, by name), and the k x k values row-major, 1 on the
/// diagonal and NaN for a pair the table lacks or whose value is not a number. `None` when a
/// column is missing or the table has no row.
pub fn correlation_matrix(table: &ParticipantsTable) -> Option<(Vec<String>, Vec<f64>)> {
    let first = table.column("community_a")?;
    let second = table.column("community_b")?;
    let values = table.column("correlation")?;
    if first.is_empty() {
        return None;
    }
    let mut scopes: Vec<String> = first.iter().chain(&second).map(|s| s.trim().to_string()).collect();
    let key = |scope: &String| match (scope.as_str(), scope.parse::<u64>()) {
        ("all", _) => (0, 0, String::new()),
        (_, Ok(number)) => (1, number, String::new()),
        _ => (2, 0, scope.clone()),
    };
    scopes.sort_by_key(key);
    scopes.dedup();
    let k = scopes.len();
    let mut matrix = vec![f64::NAN; k * k];
    for i in 0..k {
        matrix[i * k + i] = 1.0;
    }
    let position = |scope: &str| scopes.iter().position(|s| s == scope.trim());
    for ((a, b), value) in first.iter().zip(&second).zip(&values) {
        let (Some(i), Some(j)) = (position(a), position(b)) else { continue };
        let value = value.trim().parse::<f64>().unwrap_or(f64::NAN);
        if i != j {
            matrix[i * k + j] = value;
            matrix[j * k + i] = value;
        }
    }
    Some((scopes, matrix))
}

/// The null test from `summary.json`: key `null_test` holding `observed` (number), `p_value`
/// (number), `null_quantiles` (an object `{"0.05": value, ...}`, an array of `[probability,
/// value]` pairs, or an array of values at evenly spaced probabilities), optional
/// `subgroups_supported` (bool), `statistic` (text) and `null_values` (array of draws).
/// `None` when the key is absent or null, or `observed` is missing.
pub fn read_null_test(summary: &Value) -> Option<NullTest> {
    let test = summary.get("null_test").filter(|value| value.is_object())?;
    let observed = test.get("observed")?.as_f64()?;
    let quantiles = match test.get("null_quantiles") {
        Some(Value::Object(map)) => {
            let mut pairs: Vec<(f64, f64)> = map
                .iter()
                .filter_map(|(key, value)| {
                    Some((key.trim_end_matches('%').parse::<f64>().ok()?, value.as_f64()?))
                })
                .map(|(p, v)| if p > 1.0 { (p / 100.0, v) } else { (p, v) })
                .collect();
            pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
            pairs
        }
        Some(Value::Array(items)) => {
            let pairs: Vec<(f64, f64)> = items
                .iter()
                .filter_map(|item| {
                    let pair = item.as_array()?;
                    Some((pair.first()?.as_f64()?, pair.get(1)?.as_f64()?))
                })
                .collect();
            if pairs.len() == items.len() {
                pairs
            } else {
                let values: Vec<f64> = items.iter().filter_map(Value::as_f64).collect();
                let count = values.len();
                values
                    .into_iter()
                    .enumerate()
                    .map(|(index, value)| ((index as f64 + 1.0) / (count as f64 + 1.0), value))
                    .collect()
            }
        }
        _ => Vec::new(),
    };
    let values = test
        .get("null_values")
        .and_then(Value::as_array)
        .map(|items| items.iter().filter_map(Value::as_f64).collect())
        .unwrap_or_default();
    Some(NullTest {
        statistic: test.get("statistic").and_then(Value::as_str).map(str::to_string),
        observed,
        p_value: test.get("p_value").and_then(Value::as_f64),
        quantiles,
        values,
        supported: test.get("subgroups_supported").and_then(Value::as_bool),
        // The run's own sentence describes its own null test: used only when the run recorded a
        // verdict (top-level `subgroups_supported`), not for a `null_test` added afterwards.
        sentence: summary
            .get("subgroups_supported")
            .filter(|verdict| verdict.is_boolean())
            .and_then(|_| summary.get("verdict"))
            .and_then(Value::as_str)
            .filter(|text| !text.is_empty())
            .map(str::to_string),
    })
}

/// Resampling stability from `summary.json`: key `stability` holding `median_ari` (number) and
/// any other scalar keys, shown as given. `None` when the key is absent or null.
pub fn read_stability(summary: &Value) -> Option<StabilitySummary> {
    let object = summary.get("stability")?.as_object()?;
    let other = object
        .iter()
        .filter(|(key, _)| key.as_str() != "median_ari")
        .filter_map(|(key, value)| {
            let text = match value {
                Value::Number(number) => number.as_f64().map(crate::report::tables::format_number)?,
                Value::String(text) => text.clone(),
                Value::Bool(flag) => flag.to_string(),
                _ => return None,
            };
            Some((key.clone(), text))
        })
        .collect();
    let communities = object
        .get("communities")
        .and_then(Value::as_array)
        .map(|items| {
            items
                .iter()
                .filter_map(|item| {
                    Some((item.get("community")?.as_u64()? as usize, item.get("stability")?.as_f64()?))
                })
                .collect()
        })
        .unwrap_or_default();
    Some(StabilitySummary {
        median_ari: object.get("median_ari").and_then(Value::as_f64),
        other,
        communities,
    })
}

/// The atlas of the run (provenance `parameters.atlas`), when its table can still be read.
fn read_atlas(provenance: &Value, notes: &mut Vec<String>) -> Option<Atlas> {
    let value = PathBuf::from(provenance.get("parameters")?.get("atlas")?.as_str()?);
    // A built-in name resolves to the table of this strata version.
    let table = match crate::atlas::atlas_path(Some(&value))
        .map_err(|error| error.to_string())
        .and_then(|path| read::read_table(&path.unwrap_or(value)).map_err(|error| error.to_string()))
    {
        Ok(table) => table,
        Err(error) => {
            notes.push(format!("atlas table not readable now ({error}); profiles shown by region"));
            return None;
        }
    };
    let names: Vec<String> = table.column("name")?.iter().map(|name| name.to_string()).collect();
    let networks = table.column("network").map(|column| column.iter().map(|n| n.to_string()).collect());
    Some(Atlas { names, networks })
}

/// The map files of a `maps/` folder (`.nii.gz`, `.nii`, `.npy`), sorted by name.
fn list_maps(dir: &Path) -> Vec<MapFile> {
    let Ok(entries) = std::fs::read_dir(dir) else { return Vec::new() };
    let mut maps: Vec<MapFile> = entries
        .flatten()
        .filter_map(|entry| {
            let name = entry.file_name().to_string_lossy().into_owned();
            let (stem, is_volume) = if let Some(stem) = name.strip_suffix(".nii.gz") {
                (stem, true)
            } else if let Some(stem) = name.strip_suffix(".nii") {
                (stem, true)
            } else {
                (name.strip_suffix(".npy")?, false)
            };
            let mut parts: Vec<&str> = stem.split('_').collect();
            let suffix = parts.pop()?.to_string();
            let mut map = MapFile {
                path: entry.path(),
                community: String::new(),
                group: None,
                contrast: None,
                suffix,
                is_volume,
            };
            for part in parts {
                let (key, value) = part.split_once('-')?;
                match key {
                    "comm" => map.community = value.to_string(),
                    "group" => map.group = Some(value.to_string()),
                    "contrast" => map.contrast = Some(value.to_string()),
                    _ => {}
                }
            }
            (!map.community.is_empty()).then_some(map)
        })
        .collect();
    maps.sort_by(|a, b| a.path.cmp(&b.path));
    maps
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn correlation_matrix_puts_all_first_and_fills_both_halves() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("contrast_correlations.tsv");
        std::fs::write(
            &path,
            "community_a\tcommunity_b\tcorrelation\tfeatures\n10\t2\t-0.25\t90\nall\t2\t0.5\t90\nall\t10\tn/a\t0\n",
        )
        .unwrap();
        let table = crate::read::read_table(&path).unwrap();
        let (scopes, matrix) = correlation_matrix(&table).unwrap();
        assert_eq!(scopes, ["all", "2", "10"]);
        assert_eq!(matrix[0], 1.0);
        assert_eq!((matrix[1], matrix[3]), (0.5, 0.5));
        assert_eq!((matrix[5], matrix[7]), (-0.25, -0.25));
        assert!(matrix[2].is_nan() && matrix[6].is_nan());
        std::fs::write(&path, "community_a\tcorrelation\nall\t1\n").unwrap();
        assert!(correlation_matrix(&crate::read::read_table(&path).unwrap()).is_none());
    }

    #[test]
    fn null_test_in_each_quantile_form() {
        let as_object = json!({"null_test": {"observed": 0.4, "p_value": 0.01,
            "null_quantiles": {"0.5": 0.2, "0.05": 0.1, "0.95": 0.3}, "subgroups_supported": true}});
        let test = read_null_test(&as_object).unwrap();
        assert_eq!(test.quantiles.len(), 3);
        assert!((test.quantiles[0].0 - 0.05).abs() < 1e-12 && (test.quantiles[2].1 - 0.3).abs() < 1e-12);
        assert_eq!(test.supported, Some(true));
        let as_pairs = json!({"null_test": {"observed": 0.4, "null_quantiles": [[0.05, 0.1], [0.95, 0.3]]}});
        assert_eq!(read_null_test(&as_pairs).unwrap().quantiles.len(), 2);
        let as_values = json!({"null_test": {"observed": 0.4, "null_quantiles": [0.1, 0.2, 0.3]}});
        let quantiles = read_null_test(&as_values).unwrap().quantiles;
        assert!((quantiles[1].0 - 0.5).abs() < 1e-12, "{quantiles:?}");
        assert!(read_null_test(&json!({"null_test": null})).is_none());
        assert!(read_null_test(&json!({})).is_none());
    }

    #[test]
    fn stability_keeps_median_and_other_scalars() {
        let summary = json!({"stability": {"median_ari": 0.82, "subsamples": 100, "fraction": 0.8}});
        let stability = read_stability(&summary).unwrap();
        assert!((stability.median_ari.unwrap() - 0.82).abs() < 1e-12);
        assert_eq!(stability.other.len(), 2);
        assert!(read_stability(&json!({"stability": null})).is_none());
    }
}
