//! `strata check`: the inputs of a run examined by an ordered battery of named checks, without
//! running the analysis.
//!
//! Each check reads what it needs (the participants table, the input files, the feature matrix)
//! and returns a [`Finding`]: its name, a [`Severity`], what it found and, for a problem, what to
//! do. One policy decides the verdict: a run would stop if and only if a finding has severity
//! [`Severity::Fail`]. The checks use the same readers and the same feature builder as
//! `strata run`, so a failure here is the failure the run would meet; checks after a failed one
//! that need its result are reported as skipped. The memory and run-time figures are estimates
//! (see [`estimate_seconds`]).

use std::path::Path;
use std::time::Instant;

use rayon::prelude::*;

use crate::config::{GraphRule, RunConfig, Values};
use crate::features::{self, FeatureOptions, FeatureSpace, Features};
use crate::read::{self, Cohort, InputKind, InputOptions, ParticipantsTable};

/// How a finding bears on a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    /// Nothing to report beyond what was found.
    Ok,
    /// Something the analyst should know; the run goes ahead.
    Warn,
    /// The run would stop here.
    Fail,
    /// Not examined: an earlier check it needs failed.
    Skipped,
}

impl Severity {
    fn label(self) -> &'static str {
        match self {
            Severity::Ok => "ok",
            Severity::Warn => "warn",
            Severity::Fail => "FAIL",
            Severity::Skipped => "skip",
        }
    }
}

/// The outcome of one named check.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Finding {
    /// The check's name (stable, kebab-case).
    pub name: &'static str,
    /// How it bears on a run.
    pub severity: Severity,
    /// What was found (or the problem).
    pub found: String,
    /// What to do about a problem.
    pub fix: Option<String>,
}

impl Finding {
    fn ok(name: &'static str, found: impl Into<String>) -> Self {
        Finding { name, severity: Severity::Ok, found: found.into(), fix: None }
    }
    fn warn(name: &'static str, found: impl Into<String>, fix: impl Into<String>) -> Self {
        Finding { name, severity: Severity::Warn, found: found.into(), fix: Some(fix.into()) }
    }
    fn fail(name: &'static str, found: impl Into<String>, fix: impl Into<String>) -> Self {
        Finding { name, severity: Severity::Fail, found: found.into(), fix: Some(fix.into()) }
    }
    fn skipped(name: &'static str, needs: &str) -> Self {
        Finding {
            name,
            severity: Severity::Skipped,
            found: format!("not examined: needs a passing {needs} check"),
            fix: None,
        }
    }
}

/// Every finding of a check, in battery order.
#[derive(Debug, Clone, serde::Serialize)]
pub struct CheckReport {
    /// The findings.
    pub findings: Vec<Finding>,
}

impl CheckReport {
    /// Whether `strata run` would pass these checks (no [`Severity::Fail`]).
    pub fn passes(&self) -> bool {
        self.findings.iter().all(|finding| finding.severity != Severity::Fail)
    }

    /// The names of the failed checks.
    pub fn failed(&self) -> Vec<&'static str> {
        self.findings.iter().filter(|finding| finding.severity == Severity::Fail).map(|f| f.name).collect()
    }

    /// The report as text: one block per check, then the verdict.
    pub fn text(&self) -> String {
        let width = self.findings.iter().map(|finding| finding.name.len()).max().unwrap_or(0);
        let mut text = String::new();
        for finding in &self.findings {
            text.push_str(&format!(
                "{:<4}  {:<width$}  {}\n",
                finding.severity.label(),
                finding.name,
                finding.found
            ));
            if let Some(fix) = &finding.fix {
                text.push_str(&format!("{:<4}  {:<width$}  fix: {fix}\n", "", ""));
            }
        }
        if self.passes() {
            text.push_str("verdict: strata run would pass these checks.\n");
        } else {
            text.push_str(&format!(
                "verdict: strata run would stop; failed: {}.\n",
                self.failed().join(", ")
            ));
        }
        text
    }
}

/// Reading rate used by the run-time estimate: input values decoded and Fisher-z transformed
/// per second. From docs/performance.md (idle 2-core machine, 2026-12-02): 1,000 x 333 x 333
/// matrices in 0.73 s (1.5e8 values/s) and 300 maps of 902,629 voxels in 1.06 s (2.6e8/s);
/// the slower figure is used.
pub const READ_VALUES_PER_SECOND: f64 = 1.5e8;

/// Similarity rate used by the run-time estimate, counted as 2 N^2 F floating-point operations
/// per second: docs/performance.md measured 2.1e11 (300 maps) to 3.8e11 (1,000 matrices) on the
/// idle 2-core machine; the slower figure is used.
pub const SIMILARITY_FLOPS: f64 = 2.0e11;

/// Seconds per graph edge per trial of community detection used by the run-time estimate: the
/// 1,000-participant matrix run of docs/performance.md spent 3.81 s on 10 densities (1.37
/// million edges in all) x 20 Infomap trials, consensus included (1.4e-7 s); Infomap is the
/// slowest of the three methods per trial there.
pub const SECONDS_PER_EDGE_TRIAL: f64 = 1.5e-7;

/// Seconds per feature value (N x F) for the group comparisons and maps of all scopes:
/// docs/performance.md measured 1.12 s for 1,000 x 55,278 and 1.25 s for 300 x 230,269
/// (2.0e-8 and 1.8e-8 s).
pub const SECONDS_PER_COMPARED_VALUE: f64 = 2.0e-8;

/// Share of the machine's available memory above which the memory check warns.
pub const MEMORY_WARN_FRACTION: f64 = 0.8;

/// Expected bytes of the two largest arrays of a run: the feature matrix (N x F float32) and the
/// participant similarity (N x N float32).
pub fn expected_bytes(participants: usize, features: usize) -> u64 {
    let n = participants as u64;
    n * features as u64 * 4 + n * n * 4
}

/// A rough run time in seconds on the 2-core development machine: reading (N x values per
/// participant at [`READ_VALUES_PER_SECOND`]), similarity (2 N^2 F at [`SIMILARITY_FLOPS`]),
/// community detection (edges summed over the sweep x trials x [`SECONDS_PER_EDGE_TRIAL`]) and
/// comparisons (N x F x [`SECONDS_PER_COMPARED_VALUE`]).
///
/// # Arguments
/// `values_per_participant` is the number of stored values read per participant (grid voxels or
/// R^2); `features` the columns of the feature matrix (0 for a precomputed similarity).
pub fn estimate_seconds(
    config: &RunConfig,
    participants: usize,
    values_per_participant: usize,
    features: usize,
) -> f64 {
    let n = participants as f64;
    let pairs = n * (n - 1.0) / 2.0;
    let edges: f64 = match config.graph {
        GraphRule::Density => config.densities.iter().map(|density| density * pairs).sum(),
        GraphRule::Knn | GraphRule::MutualKnn => {
            config.neighbours.iter().map(|&k| (k as f64 * n).min(pairs)).sum()
        }
        // Unknown before the similarity exists: assume a quarter of all pairs per threshold.
        GraphRule::Absolute => config.thresholds.len() as f64 * 0.25 * pairs,
    };
    let read = n * values_per_participant as f64 / READ_VALUES_PER_SECOND;
    let similarity = 2.0 * n * n * features as f64 / SIMILARITY_FLOPS;
    let communities = edges * config.trials as f64 * SECONDS_PER_EDGE_TRIAL;
    let compare = n * features as f64 * SECONDS_PER_COMPARED_VALUE;
    // Every null cohort repeats the whole detection; a subsample of a share s of the
    // participants keeps about s^2 of the edges (docs/performance.md: 3.9 s per null cohort and
    // 2.6 s per 80% subsample for a 4.3 s detection at N = 1,000).
    let fraction = config.subsample_fraction;
    let validation =
        communities * (config.null_draws as f64 + config.subsamples as f64 * fraction * fraction);
    read + similarity + communities + compare + validation
}

fn human_bytes(bytes: u64) -> String {
    const UNITS: [&str; 4] = ["B", "KiB", "MiB", "GiB"];
    let mut value = bytes as f64;
    let mut unit = 0;
    while value >= 1024.0 && unit < UNITS.len() - 1 {
        value /= 1024.0;
        unit += 1;
    }
    if unit == 0 {
        format!("{bytes} B")
    } else {
        format!("{value:.1} {}", UNITS[unit])
    }
}

/// Available memory in bytes (Linux `MemAvailable`), if known.
fn available_memory() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|line| line.starts_with("MemAvailable:"))?;
    let kib: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024)
}

/// Value statistics of one participant's input.
#[derive(Debug, Clone)]
struct ValueStats {
    participant: String,
    /// Grid (seed maps) or [R, R] (matrices).
    shape: Vec<usize>,
    affine: Option<[[f64; 4]; 4]>,
    min: f64,
    max: f64,
    /// Non-finite values (off the diagonal for matrices).
    non_finite: usize,
    /// Stored values read.
    values: usize,
}

fn stats_of(
    participant: &str,
    shape: Vec<usize>,
    affine: Option<[[f64; 4]; 4]>,
    values: impl Iterator<Item = f64>,
) -> ValueStats {
    let (mut min, mut max, mut non_finite, mut count) = (f64::INFINITY, f64::NEG_INFINITY, 0, 0);
    for value in values {
        count += 1;
        if value.is_finite() {
            min = min.min(value);
            max = max.max(value);
        } else {
            non_finite += 1;
        }
    }
    ValueStats { participant: participant.to_string(), shape, affine, min, max, non_finite, values: count }
}

fn off_diagonal(matrix: ndarray::ArrayView2<'_, f64>) -> impl Iterator<Item = f64> + '_ {
    let width = matrix.ncols().max(1);
    matrix
        .into_iter()
        .enumerate()
        .filter(move |(index, _)| index / width != index % width)
        .map(|(_, &value)| value)
}

fn read_stats(cohort: &Cohort) -> Result<Vec<ValueStats>, read::ReadError> {
    if cohort.kind == InputKind::RegionMatrices
        && cohort.sources.first().is_some_and(|s| s.stack_index.is_some())
    {
        let stack = read::matrix::read_stack(&cohort.sources[0].path)?;
        return Ok(cohort
            .participant_ids
            .iter()
            .enumerate()
            .map(|(index, id)| {
                let matrix = stack.index_axis(ndarray::Axis(0), index);
                stats_of(id, matrix.shape().to_vec(), None, off_diagonal(matrix))
            })
            .collect());
    }
    cohort
        .participant_ids
        .par_iter()
        .zip(&cohort.sources)
        .map(|(id, source)| match cohort.kind {
            InputKind::SeedMaps => {
                let volume = read::nifti::read_volume(&source.path, id)?;
                Ok(stats_of(
                    id,
                    volume.dim.to_vec(),
                    Some(volume.affine),
                    volume.values.iter().map(|&value| f64::from(value)),
                ))
            }
            _ => {
                let matrix = read::matrix::read_matrix(&source.path, id)?;
                Ok(stats_of(id, matrix.shape().to_vec(), None, off_diagonal(matrix.view())))
            }
        })
        .collect()
}

fn shape_text(shape: &[usize]) -> String {
    shape.iter().map(usize::to_string).collect::<Vec<_>>().join("x")
}

/// Runs every check on the inputs `config` names, in order, and returns the findings.
/// Nothing is written.
pub fn check(config: &RunConfig) -> CheckReport {
    let mut findings = Vec::new();
    let table = check_table(config, &mut findings);
    let cohort = match &table {
        Some(table) => {
            check_groups(config, table, &mut findings);
            check_matching(config, table, &mut findings)
        }
        None => {
            findings.push(Finding::skipped("group-column", "participants-table"));
            findings.push(Finding::skipped("matching", "participants-table"));
            None
        }
    };
    let started = Instant::now();
    let (stats, features) = match &cohort {
        Some((cohort, _)) if cohort.kind != InputKind::Similarity => {
            let stats = check_values(config, cohort, &mut findings);
            let features = check_features(config, cohort, &mut findings);
            (stats, features)
        }
        Some(_) => {
            let note = "not applicable: a precomputed similarity has no per-participant values or features";
            findings.push(Finding::ok("values", note));
            findings.push(Finding::ok("features", note));
            (None, None)
        }
        None => {
            findings.push(Finding::skipped("values", "matching"));
            findings.push(Finding::skipped("features", "matching"));
            (None, None)
        }
    };
    let read_seconds = started.elapsed().as_secs_f64();
    match &cohort {
        Some((cohort, _)) => {
            let participants = cohort.participant_ids.len();
            let feature_count = features.as_ref().map_or(0, |f| f.matrix.feature_count());
            let values_per = stats.as_ref().and_then(|s| s.first()).map_or(0, |s| s.values);
            if cohort.kind != InputKind::Similarity && features.is_none() {
                findings.push(Finding::skipped("memory", "features"));
                findings.push(Finding::skipped("run-time", "features"));
            } else {
                check_memory(participants, feature_count, &mut findings);
                let estimate = estimate_seconds(config, participants, values_per, feature_count);
                findings.push(Finding::ok(
                    "run-time",
                    format!(
                        "about {} on a 2-core machine (rough: reading, similarity, {} graphs x {} trials, \
                         {} null cohorts and {} subsamples that repeat the detection, comparisons, at the \
                         rates measured in docs/performance.md; this check read the inputs in \
                         {read_seconds:.1} s)",
                        seconds_text(estimate),
                        config.levels().len(),
                        config.trials,
                        config.null_draws,
                        config.subsamples
                    ),
                ));
            }
        }
        None => {
            findings.push(Finding::skipped("memory", "matching"));
            findings.push(Finding::skipped("run-time", "matching"));
        }
    }
    check_output(config, &mut findings);
    CheckReport { findings }
}

fn seconds_text(seconds: f64) -> String {
    if seconds < 60.0 {
        format!("{:.0} s", seconds.max(1.0))
    } else if seconds < 3600.0 {
        format!("{:.0} min", seconds / 60.0)
    } else {
        format!("{:.1} h", seconds / 3600.0)
    }
}

fn check_table(config: &RunConfig, findings: &mut Vec<Finding>) -> Option<ParticipantsTable> {
    const NAME: &str = "participants-table";
    match read::read_participants(&config.participants) {
        Ok(table) => {
            findings.push(Finding::ok(
                NAME,
                format!(
                    "{}: {} participants; columns {}",
                    config.participants.display(),
                    table.row_count(),
                    table.columns().join(", ")
                ),
            ));
            Some(table)
        }
        Err(error) => {
            findings.push(Finding::fail(
                NAME,
                error.to_string(),
                "give a tab-separated BIDS participants.tsv whose first column is participant_id",
            ));
            None
        }
    }
}

fn check_groups(config: &RunConfig, table: &ParticipantsTable, findings: &mut Vec<Finding>) {
    const NAME: &str = "group-column";
    let Some(column) = table.column(&config.group_column) else {
        findings.push(Finding::fail(
            NAME,
            format!("{}: no column '{}'", table.path().display(), config.group_column),
            format!("choose --group-column among: {}", table.columns().join(", ")),
        ));
        return;
    };
    let mut levels: Vec<(String, usize)> = Vec::new();
    let mut missing = 0;
    for value in column {
        let value = value.trim();
        if value.is_empty() || value == "n/a" {
            missing += 1;
        } else if let Some(entry) = levels.iter_mut().find(|(level, _)| level == value) {
            entry.1 += 1;
        } else {
            levels.push((value.to_string(), 1));
        }
    }
    let counts =
        levels.iter().map(|(level, count)| format!("{level} {count}")).collect::<Vec<_>>().join(", ");
    let (a, b) = &config.contrast;
    let absent: Vec<&str> = [a, b]
        .into_iter()
        .filter(|level| !levels.iter().any(|(l, _)| l == *level))
        .map(String::as_str)
        .collect();
    if !absent.is_empty() {
        findings.push(Finding::fail(
            NAME,
            format!(
                "{}: level(s) {} of --contrast not in the column; found {counts}",
                config.group_column,
                absent.join(", ")
            ),
            "give --contrast two levels that occur in --group-column",
        ));
    } else if missing > 0 {
        findings.push(Finding::warn(
            NAME,
            format!("{}: {counts}; {missing} participant(s) without a label (n/a)", config.group_column),
            "they enter the subgrouping but no group comparison; fill in their labels if known",
        ));
    } else {
        findings.push(Finding::ok(NAME, format!("{}: {counts}", config.group_column)));
    }
}

/// Files found by the patterns, each with its participant label, for the matching counts.
fn match_counts(config: &RunConfig, table: &ParticipantsTable) -> Option<String> {
    if config.match_column.is_some() {
        return None;
    }
    let mut files = Vec::new();
    for pattern in &config.inputs {
        match glob::glob(pattern) {
            Ok(paths) => files.extend(paths.flatten().filter(|path| path.is_file())),
            Err(_) => files.push(pattern.into()),
        }
    }
    let ids: Vec<&str> = table.ids();
    let labels: Vec<Option<String>> = files.iter().map(|file| read::participant_label(file)).collect();
    let matched = ids.iter().filter(|id| labels.iter().any(|label| label.as_deref() == Some(**id))).count();
    let extra = labels
        .iter()
        .filter(|label| label.as_ref().is_none_or(|label| !ids.contains(&label.as_str())))
        .count();
    Some(format!(
        "{} file(s); {matched} of {} participants matched, {} without a file, {extra} file(s) without a table row",
        files.len(),
        ids.len(),
        ids.len() - matched
    ))
}

fn check_matching(
    config: &RunConfig,
    table: &ParticipantsTable,
    findings: &mut Vec<Finding>,
) -> Option<(Cohort, Option<ndarray::Array2<f32>>)> {
    const NAME: &str = "matching";
    let result = match &config.similarity {
        Some(path) => read::read_similarity(path, table).map(|(cohort, values)| (cohort, Some(values))),
        None if config.uses_measures() => {
            read::discover_measures(table, &config.measures, config.measures_table.as_deref())
                .map(|(cohort, _missing)| (cohort, None))
        }
        None => {
            let options = InputOptions {
                patterns: config.inputs.clone(),
                match_column: config.match_column.clone(),
                variable: config.variable.clone(),
            };
            read::discover_inputs(&options, table).map(|cohort| (cohort, None))
        }
    };
    let counts = match_counts(config, table);
    match result {
        Ok((cohort, similarity)) => {
            let kind = match cohort.kind {
                InputKind::SeedMaps => "seed maps",
                InputKind::RegionMatrices => "region matrices",
                InputKind::Similarity => "a precomputed similarity matrix",
                InputKind::Measures => "measure table",
            };
            let found = match (&similarity, counts) {
                (Some(values), _) => {
                    let off = off_diagonal_f32(values);
                    format!(
                        "{} participants, {kind} {}x{}; off-diagonal values {:.3} to {:.3}",
                        cohort.participant_ids.len(),
                        values.nrows(),
                        values.ncols(),
                        off.0,
                        off.1
                    )
                }
                (None, Some(counts)) => format!("{kind}: {counts}"),
                (None, None) => {
                    format!("{kind}: {} participants matched by column", cohort.participant_ids.len())
                }
            };
            findings.push(Finding::ok(NAME, found));
            Some((cohort, similarity))
        }
        Err(error) => {
            let found = match counts {
                Some(counts) => format!("{counts}: {error}"),
                None => error.to_string(),
            };
            findings.push(Finding::fail(
                NAME,
                found,
                "every table row needs exactly one input file and every file a table row (see the message)",
            ));
            None
        }
    }
}

fn off_diagonal_f32(values: &ndarray::Array2<f32>) -> (f32, f32) {
    values
        .indexed_iter()
        .filter(|((i, j), value)| i != j && value.is_finite())
        .fold((f32::INFINITY, f32::NEG_INFINITY), |(low, high), (_, &value)| {
            (low.min(value), high.max(value))
        })
}

fn check_values(config: &RunConfig, cohort: &Cohort, findings: &mut Vec<Finding>) -> Option<Vec<ValueStats>> {
    const NAME: &str = "values";
    let stats = match read_stats(cohort) {
        Ok(stats) => stats,
        Err(error) => {
            findings.push(Finding::fail(NAME, error.to_string(), "replace or re-export the file named"));
            return None;
        }
    };
    let first = stats.first()?;
    let mismatch = stats.iter().find(|s| {
        s.shape != first.shape
            || match (s.affine, first.affine) {
                (Some(a), Some(b)) => !read::nifti::affines_match(&a, &b),
                _ => false,
            }
    });
    let min = stats.iter().map(|s| s.min).fold(f64::INFINITY, f64::min);
    let max = stats.iter().map(|s| s.max).fold(f64::NEG_INFINITY, f64::max);
    let with_non_finite: Vec<String> =
        stats.iter().filter(|s| s.non_finite > 0).map(|s| s.participant.clone()).collect();
    let layout = match cohort.kind {
        InputKind::SeedMaps => match first.affine {
            Some(affine) => {
                let size: Vec<String> = (0..3)
                    .map(|axis| {
                        let length = (0..3).map(|row| affine[row][axis].powi(2)).sum::<f64>().sqrt();
                        format!("{length:.2}")
                    })
                    .collect();
                format!("grid {}, voxels {} mm", shape_text(&first.shape), size.join("x"))
            }
            None => format!("grid {}", shape_text(&first.shape)),
        },
        _ => format!("R = {} regions", first.shape[0]),
    };
    let mut found = format!("{layout}; values {min:.4} to {max:.4}");
    if !with_non_finite.is_empty() {
        found.push_str(&format!(
            "; {} participant(s) with NaN/Inf values ({})",
            with_non_finite.len(),
            crate::error::list_ids(&with_non_finite)
        ));
    }
    if let Some(other) = mismatch {
        findings.push(Finding::fail(
            NAME,
            format!(
                "{found}; participant {} has {} {} where {} has {}",
                other.participant,
                if cohort.kind == InputKind::SeedMaps { "grid/affine" } else { "shape" },
                shape_text(&other.shape),
                first.participant,
                shape_text(&first.shape)
            ),
            "resample all maps to one template (or use one atlas for all matrices)",
        ));
    } else if config.values == Values::R && (min < -1.0 || max > 1.0) {
        findings.push(Finding::fail(
            NAME,
            format!("{found}: outside [-1, 1] for correlations r"),
            "pass --values z if the inputs are already Fisher z",
        ));
    } else if !with_non_finite.is_empty() && cohort.kind == InputKind::SeedMaps {
        findings.push(Finding::warn(
            NAME,
            found,
            "voxels NaN in any participant are left out of the analysis unless a --mask includes them (an error)",
        ));
    } else {
        findings.push(Finding::ok(NAME, found));
    }
    Some(stats)
}

fn check_features(config: &RunConfig, cohort: &Cohort, findings: &mut Vec<Finding>) -> Option<Features> {
    const NAME: &str = "features";
    let resolved = crate::atlas::atlas_path(config.atlas.as_deref())
        .and_then(|atlas| Ok((atlas, crate::atlas::mask_path(config.mask.as_deref())?)));
    let (atlas, mask) = match resolved {
        Ok(paths) => paths,
        Err(error) => {
            findings.push(Finding::fail(NAME, error.to_string(), "set TMPDIR to a writable folder"));
            return None;
        }
    };
    let region_names = match &atlas {
        Some(path) => match read::read_table(path) {
            Ok(table) => table
                .column("name")
                .map(|names| (path.clone(), names.iter().map(|n| n.to_string()).collect())),
            Err(error) => {
                findings.push(Finding::fail(
                    NAME,
                    error.to_string(),
                    "give an atlas TSV with columns index and name",
                ));
                return None;
            }
        },
        None => None,
    };
    let options = FeatureOptions {
        mask,
        values: config.values.into(),
        transform: config.transform.into(),
        region_names,
    };
    match features::build_features(cohort, &options) {
        Ok(features) => {
            let count = features.matrix.feature_count();
            let found = match &features.space {
                FeatureSpace::Voxels(space) => {
                    let grid = space.dim.iter().product::<usize>();
                    format!(
                        "{count} features: mask of {} voxels ({:.1}% of the {} grid{})",
                        space.mask.len(),
                        100.0 * space.mask.len() as f64 / grid.max(1) as f64,
                        shape_text(&space.dim),
                        if config.mask.is_some() {
                            ", from --mask"
                        } else {
                            ", finite and non-zero in every participant"
                        }
                    )
                }
                _ => format!("{count} features (the upper triangle of each matrix)"),
            };
            let clipped = features.summary.clipped_values;
            if clipped > 0 {
                findings.push(Finding::warn(
                    NAME,
                    format!("{found}; {clipped} value(s) with |r| at 1 clipped before Fisher z"),
                    "check the inputs are correlations, not already Fisher z (then pass --values z)",
                ));
            } else {
                findings.push(Finding::ok(NAME, found));
            }
            Some(features)
        }
        Err(error) => {
            findings.push(Finding::fail(
                NAME,
                error.to_string(),
                "fix the file named (the message says how)",
            ));
            None
        }
    }
}

fn check_memory(participants: usize, features: usize, findings: &mut Vec<Finding>) {
    const NAME: &str = "memory";
    let bytes = expected_bytes(participants, features);
    let found = if features == 0 {
        format!("about {} for the similarity ({participants} x {participants} x 4 bytes)", human_bytes(bytes))
    } else {
        format!(
            "about {} for the feature matrix ({participants} x {features} x 4 bytes) and the similarity \
             ({participants} x {participants} x 4 bytes)",
            human_bytes(bytes)
        )
    };
    match available_memory() {
        Some(available) if bytes as f64 > MEMORY_WARN_FRACTION * available as f64 => {
            findings.push(Finding::warn(
                NAME,
                format!("{found}; only {} available", human_bytes(available)),
                "run on a machine with more memory, or use a coarser grid or a smaller --mask",
            ))
        }
        _ => findings.push(Finding::ok(NAME, found)),
    }
}

fn check_output(config: &RunConfig, findings: &mut Vec<Finding>) {
    const NAME: &str = "output";
    let out = &config.out;
    if out.as_os_str().is_empty() {
        findings.push(Finding::ok(NAME, "no --out given: not examined"));
        return;
    }
    let non_empty = std::fs::read_dir(out).map(|mut entries| entries.next().is_some()).unwrap_or(false);
    if out.exists() && !out.is_dir() {
        findings.push(Finding::fail(
            NAME,
            format!("{}: exists and is not a folder", out.display()),
            "choose another --out",
        ));
    } else if non_empty && !config.force {
        findings.push(Finding::fail(
            NAME,
            format!("{}: exists and is not empty", out.display()),
            "choose another --out, or pass --force to replace it when the run has finished",
        ));
    } else if non_empty {
        findings.push(Finding::warn(
            NAME,
            format!("{}: exists; --force replaces it when the run has finished", out.display()),
            "choose another --out to keep the earlier results",
        ));
    } else {
        let parent = match out.parent() {
            Some(parent) if !parent.as_os_str().is_empty() => parent,
            _ => Path::new("."),
        };
        findings
            .push(Finding::ok(NAME, format!("{}: will be created in {}", out.display(), parent.display())));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_run_time_estimate_counts_null_cohorts_and_subsamples() {
        // 1,000 participants, 55,278 features (333-region matrices), default sweep: each null
        // cohort adds one detection and each 80% subsample 0.64 of one (the estimate's model).
        let base = RunConfig {
            null_draws: 0,
            subsamples: 0,
            ..RunConfig::with_defaults(
                vec!["m/*".into()],
                "p.tsv".into(),
                "diagnosis",
                ("insomnia", "control"),
                "out".into(),
            )
        };
        let plain = estimate_seconds(&base, 1000, 333 * 333, 55_278);
        let pairs = 1000.0 * 999.0 / 2.0;
        let detection = base.densities.iter().map(|d| d * pairs).sum::<f64>()
            * base.trials as f64
            * SECONDS_PER_EDGE_TRIAL;
        let validated = RunConfig { null_draws: 100, subsamples: 50, ..base.clone() };
        let with = estimate_seconds(&validated, 1000, 333 * 333, 55_278);
        let expected = detection * (100.0 + 50.0 * 0.8 * 0.8);
        assert!((with - plain - expected).abs() < 1e-9 * expected, "{with} - {plain} vs {expected}");
    }
}
