//! Runs the stages in order from a [`RunConfig`]: the first file to read to see how strata works.
//!
//! ```text
//! read_participants -> discover_inputs -> build_features -> pearson -> detect -> compare -> write
//! ```
//! Each stage is timed; the outputs are written into a staging folder that is moved into place
//! only when everything succeeded ([`OutputFolder`]).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::time::Instant;

use rayon::prelude::*;
use serde_json::json;

use crate::communities::{self, CommunityOptions, CommunityResult};
use crate::config::{ConfigError, RunConfig};
use crate::error::Error;
use crate::features::{self, FeatureOptions, FeatureSpace, Features};
use crate::maps::{self, MapName, Statistic, WriteError};
use crate::read::{self, Cohort, InputOptions};
use crate::report::tables::format_number;
use crate::report::{
    file_sha256, utc_timestamp, CommunitySummary, ComparisonSummary, GraphMeasuresSummary, InputDigest, Log,
    OutputFolder, Provenance, RunSummary, Table, Warning,
};
use crate::similarity::{self, SimilarityMatrix};
use crate::stats;

/// BIDS version whose derivative rules the output folder follows.
pub const BIDS_VERSION: &str = "1.11.1";

/// The value BIDS uses for a missing table cell.
const MISSING: &str = "n/a";

/// Stage timings, in pipeline order.
#[derive(Debug, Default)]
struct Timings {
    stages: Vec<(String, f64)>,
    peaks: Vec<(String, u64)>,
}

impl Timings {
    fn time<T>(&mut self, log: &Log, stage: &str, work: impl FnOnce() -> T) -> T {
        let started = Instant::now();
        let result = work();
        let seconds = started.elapsed().as_secs_f64();
        match peak_resident_bytes() {
            Some(bytes) => {
                log.detail(&format!("{stage}: {seconds:.2} s (peak memory so far {} MB)", bytes >> 20));
                self.peaks.push((stage.to_string(), bytes));
            }
            None => log.detail(&format!("{stage}: {seconds:.2} s")),
        }
        self.stages.push((stage.to_string(), seconds));
        result
    }
}

/// The process's peak resident memory so far (Linux `VmHWM` in `/proc/self/status`), or `None`
/// where the system does not report it.
pub fn peak_resident_bytes() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|line| line.starts_with("VmHWM:"))?;
    let kilobytes: u64 =
        line.trim_start_matches("VmHWM:").trim().trim_end_matches("kB").trim().parse().ok()?;
    Some(kilobytes * 1024)
}

/// Group labels of the analysed participants, with the levels in order of first appearance.
#[derive(Debug)]
struct Groups {
    /// Level of each participant (cohort order); `None` when missing.
    labels: Vec<Option<String>>,
    /// Levels present, in order of first appearance.
    levels: Vec<String>,
}

impl Groups {
    fn rows_of(&self, level: &str, within: &[usize]) -> Vec<usize> {
        within.iter().copied().filter(|&row| self.labels[row].as_deref() == Some(level)).collect()
    }

    fn counts(&self, within: &[usize]) -> Vec<(String, usize)> {
        let mut counts: Vec<(String, usize)> =
            self.levels.iter().map(|level| (level.clone(), self.rows_of(level, within).len())).collect();
        let missing = within.iter().filter(|&&row| self.labels[row].is_none()).count();
        if missing > 0 {
            counts.push((MISSING.to_string(), missing));
        }
        counts
    }
}

fn group_labels(config: &RunConfig, cohort: &Cohort) -> Result<Groups, Error> {
    let table = &cohort.table;
    let column = table.column(&config.group_column).ok_or_else(|| ConfigError::Invalid {
        flag: "--group-column".into(),
        message: format!(
            "{}: no column '{}'; the table has: {}",
            table.path().display(),
            config.group_column,
            table.columns().join(", ")
        ),
    })?;
    let labels: Vec<Option<String>> = column
        .iter()
        .map(|value| {
            let value = value.trim();
            (!value.is_empty() && value != MISSING).then(|| value.to_string())
        })
        .collect();
    let mut levels: Vec<String> = Vec::new();
    for label in labels.iter().flatten() {
        if !levels.contains(label) {
            levels.push(label.clone());
        }
    }
    let (a, b) = &config.contrast;
    for level in [a, b] {
        if !levels.contains(level) {
            return Err(ConfigError::Invalid {
                flag: "--contrast".into(),
                message: format!(
                    "{}: level '{level}' does not occur in column '{}' of the analysed participants; levels found: {}",
                    table.path().display(),
                    config.group_column,
                    if levels.is_empty() { "none".to_string() } else { levels.join(", ") }
                ),
            }
            .into());
        }
    }
    Ok(Groups { labels, levels })
}

/// Region names from an atlas table (TSV with `index` and `name` columns, rows in matrix order).
fn read_atlas_names(path: &Path) -> Result<Vec<String>, Error> {
    let table = read::read_table(path)?;
    let names = table.column("name").ok_or_else(|| ConfigError::Invalid {
        flag: "--atlas".into(),
        message: format!(
            "{}: no 'name' column; an atlas table needs columns index and name (found: {})",
            path.display(),
            table.columns().join(", ")
        ),
    })?;
    Ok(names.iter().map(|name| name.to_string()).collect())
}

/// Runs the whole analysis and writes its outputs into `config.out`.
///
/// # Errors
/// Any stage's error; nothing is left in `config.out` unless the run succeeded.
pub fn run(config: &RunConfig, log: &Log) -> Result<RunSummary, Error> {
    let started = Instant::now();
    let started_utc = utc_timestamp();
    let mut timings = Timings::default();
    let output = OutputFolder::prepare(&config.out, config.force)?;

    let mut missing_measures = Vec::new();
    let (cohort, groups, given_similarity) = timings.time(log, "read", || -> Result<_, Error> {
        let table = read::read_participants(&config.participants)?;
        let (cohort, given) = match &config.similarity {
            Some(path) => {
                let (cohort, values) = read::read_similarity(path, &table)?;
                (cohort, Some(SimilarityMatrix { values }))
            }
            None if config.uses_measures() => {
                let (cohort, missing) =
                    read::discover_measures(&table, &config.measures, config.measures_table.as_deref())?;
                missing_measures = missing;
                (cohort, None)
            }
            None => {
                let options = InputOptions {
                    patterns: config.inputs.clone(),
                    match_column: config.match_column.clone(),
                    variable: config.variable.clone(),
                };
                (read::discover_inputs(&options, &table)?, None)
            }
        };
        let groups = group_labels(config, &cohort)?;
        if let Some(missing) = config
            .covariates
            .iter()
            .flatten()
            .chain(&config.outcome)
            .chain(&config.nuisance)
            .find(|column| cohort.table.column(column).is_none())
        {
            let flag = if config.outcome.as_ref() == Some(missing) {
                "--outcome"
            } else if config.nuisance.contains(missing) {
                "--nuisance"
            } else {
                "--covariates"
            };
            return Err(ConfigError::Invalid {
                flag: flag.into(),
                message: format!(
                    "{}: no column '{missing}'; the table has: {}",
                    cohort.table.path().display(),
                    cohort.table.columns().join(", ")
                ),
            }
            .into());
        }
        Ok((cohort, groups, given))
    })?;

    let (features, similarity, row_norms) = match given_similarity {
        Some(similarity) => {
            log.note(&format!(
                "{} participants, precomputed similarity matrix (no features: no maps or comparisons)",
                cohort.participant_ids.len()
            ));
            (None, similarity, None)
        }
        None => {
            log.note(&format!(
                "{} participants matched to {} input file(s)",
                cohort.participant_ids.len(),
                cohort.sources.len()
            ));
            let region_names = match crate::atlas::atlas_path(config.atlas.as_deref())? {
                Some(path) => {
                    let names = read_atlas_names(&path)?;
                    Some((path, names))
                }
                None => None,
            };
            let mask = crate::atlas::mask_path(config.mask.as_deref())?;
            let features = timings.time(log, "features", || {
                let _bar = log.progress("reading", cohort.sources.len(), "participants");
                let options = FeatureOptions {
                    mask,
                    values: config.values.into(),
                    transform: config.transform.into(),
                    region_names,
                };
                features::build_features(&cohort, &options)
            })?;
            log.note(&format!(
                "{} features per participant; computing participant similarity",
                features.matrix.feature_count()
            ));
            let done = &features.summary;
            let layout = match cohort.kind {
                read::InputKind::SeedMaps => format!(
                    "{} voxels outside the mask, {} dropped (not finite or zero in some participant)",
                    done.voxels_outside_mask, done.voxels_dropped
                ),
                _ => "upper-triangle edges of each matrix".to_string(),
            };
            log.detail(&format!(
                "features: {layout}; {} values clipped at |r| = 1 before Fisher z; feature matrix {:.1} MiB",
                done.clipped_values,
                (done.participants * done.features * 4) as f64 / 1_048_576.0
            ));
            let adjusted = timings.time(log, "nuisance", || remove_nuisance(config, &cohort, &features))?;
            let compared = adjusted.as_ref().unwrap_or(&features.matrix);
            let similarity = timings.time(log, "similarity", || {
                let _bar = log.progress("similarity", compared.feature_count(), "features");
                similarity::pearson(compared)
            });
            // The null test rotates the centred rows the similarity was computed from.
            let (_, inverse_norms) = similarity::standardise_rows(compared);
            let row_norms: Vec<f64> = inverse_norms
                .iter()
                .map(|&inverse| if inverse > 0.0 { 1.0 / inverse } else { 0.0 })
                .collect();
            (Some(features), similarity, Some(row_norms))
        }
    };
    log.note(&format!(
        "community detection ({}) over {} graphs of the sweep",
        config.method.name(),
        config.levels().len()
    ));
    log.detail(&format!(
        "sweep: {} rule, {} graphs, {} trials each, {} edges, resolution {}, seed {}",
        value_name(&config.graph),
        config.levels().len(),
        config.trials,
        value_name(&config.edge_weights),
        config.resolution,
        config.seed
    ));
    let community_options = CommunityOptions {
        levels: config.levels(),
        edge_weights: config.edge_weights,
        method: config.method,
        trials: config.trials,
        resolution: config.resolution,
        min_community_size: config.min_community_size,
        consensus_threshold: config.consensus_threshold,
        seed: config.seed,
    };
    let communities = timings.time(log, "communities", || {
        let _bar = log.progress("sweep", config.levels().len() * config.trials, "trials");
        communities::detect(&similarity, &community_options)
    })?;
    let validated = validate(
        config,
        log,
        &mut timings,
        &similarity,
        row_norms.as_deref(),
        &communities,
        &community_options,
    )?;

    let measured = timings.time(log, "graph measures", || measure_graph(config, &similarity, &communities));

    let mut warnings = Vec::new();
    if !missing_measures.is_empty() {
        warnings.push(Warning::MissingMeasures {
            entries: missing_measures.iter().map(|m| (m.participant.clone(), m.column.clone())).collect(),
        });
    }
    collect_community_warnings(&cohort, &communities, config, &mut warnings);
    warnings.extend(validated.warnings.iter().cloned());
    let missing: Vec<String> = groups
        .labels
        .iter()
        .zip(&cohort.participant_ids)
        .filter(|(label, _)| label.is_none())
        .map(|(_, id)| id.clone())
        .collect();
    if !missing.is_empty() {
        warnings
            .push(Warning::MissingGroupLabel { column: config.group_column.clone(), participants: missing });
    }

    timings.time(log, "balance", || {
        write_balance(config, &output, &cohort, &groups.labels, &communities, &mut warnings)
    })?;

    let comparisons = match &features {
        Some(features) => {
            log.note("group comparisons and maps");
            let maps_dir = output.subdir("maps")?;
            timings.time(log, "compare", || {
                compare_and_write(config, &cohort, features, &groups, &communities, &maps_dir, &mut warnings)
            })?
        }
        None => not_compared(config, &groups, &communities),
    };

    if let Some(features) = &features {
        crate::assign::write_model(
            output.path(),
            &features.matrix,
            &features.space,
            &communities.partition,
            &crate::assign::Preprocessing {
                values: config.values.into(),
                transform: config.transform.into(),
                variable: config.variable.clone(),
            },
        )?;
    }
    timings.time(log, "write", || {
        write_tables(config, &output, &cohort, &groups, &communities, &comparisons, &similarity, &validated)?;
        write_validation_tables(&output, &communities, &validated)?;
        write_graph_measures(&output, &cohort, &communities, &measured)
    })?;
    for warning in &warnings {
        log.warn(warning);
    }

    let summary = build_summary(
        config,
        &cohort,
        features.as_ref(),
        &groups,
        &communities,
        comparisons,
        warnings,
        started,
    );
    let summary = RunSummary {
        graph_measures: Some(measured.summary()),
        subgroups_supported: validated.null_summary.as_ref().map(|null| null.subgroups_supported),
        verdict: crate::report::verdict(
            communities.partition.community_count(),
            validated.null_summary.as_ref(),
        ),
        null_test: validated.null_summary.clone(),
        stability: validated.stability_summary.clone(),
        ..summary
    };
    let digests = timings.time(log, "digests", || input_digests(config, &cohort))?;
    // Nothing below needs the feature matrix, the similarity matrix or the communities (the
    // report reads the files just written): free them so the report's buffers do not add to
    // the run's peak memory.
    drop((features, similarity, communities));
    let provenance = Provenance {
        strata_version: crate::VERSION.to_string(),
        command: std::env::args().collect(),
        started_utc,
        threads: rayon::current_num_threads(),
        seed: config.seed,
        parameters: serde_json::to_value(config).unwrap_or(serde_json::Value::Null),
        inputs: digests,
        stage_seconds: timings.stages,
        stage_peak_memory_bytes: timings.peaks,
    };
    write_json(&output.path().join("provenance.json"), &provenance)?;
    write_json(&output.path().join("summary.json"), &summary)?;
    write_json(&output.path().join("dataset_description.json"), &dataset_description())?;
    // The report reads the files just written, exactly as `strata report` does later.
    time_report(log, || crate::report::write_report(output.path()))?;
    output.commit()?;
    Ok(summary)
}

/// What the validation stage found: the null test and the resampling stability, each `None`
/// when switched off.
struct Validated {
    null: Option<crate::validation::NullResult>,
    null_summary: Option<crate::report::NullTestSummary>,
    stability: Option<crate::validation::StabilityResult>,
    stability_summary: Option<crate::report::StabilitySummary>,
    warnings: Vec<Warning>,
}

/// Stage 6: the rotation null test and the resampling stability of the consensus partition.
/// A check that cannot run on this cohort (too few participants, no spread) is skipped with a
/// warning rather than failing the run.
fn validate(
    config: &RunConfig,
    log: &Log,
    timings: &mut Timings,
    similarity: &SimilarityMatrix,
    row_norms: Option<&[f64]>,
    communities: &CommunityResult,
    options: &CommunityOptions,
) -> Result<Validated, Error> {
    let mut warnings = Vec::new();
    let null = if config.null_draws > 0 {
        log.note(&format!(
            "null test: {} null cohorts through the same sweep and consensus",
            config.null_draws
        ));
        // The rotation acts on the centred feature rows before standardisation (docs/methods.md).
        let null_options = crate::validation::NullOptions {
            draws: config.null_draws,
            alpha: config.alpha,
            seed: config.seed,
        };
        let outcome = timings.time(log, "null test", || {
            let _bar = log.progress(
                "null test",
                config.null_draws * options.levels.len() * options.trials,
                "trials",
            );
            crate::validation::null_test(similarity, row_norms, communities, options, &null_options)
        });
        match outcome {
            Ok(result) => {
                let summary = crate::report::null_summary(&result);
                if summary.smallest_p > summary.alpha {
                    warnings.push(Warning::TooFewNullDraws { draws: summary.draws, alpha: summary.alpha });
                } else if !summary.subgroups_supported && communities.partition.community_count() >= 2 {
                    warnings.push(Warning::NotAboveNull { p_value: summary.p_value, alpha: summary.alpha });
                }
                Some((result, summary))
            }
            Err(error @ crate::validation::NullError::Degenerate { .. }) => {
                warnings.push(Warning::ValidationSkipped {
                    check: "null test".into(),
                    reason: error.to_string(),
                });
                None
            }
            Err(error) => return Err(error.into()),
        }
    } else {
        None
    };
    let stability = if config.subsamples > 0 {
        log.note(&format!(
            "stability: {} subsamples of {:.0}% of the participants",
            config.subsamples,
            100.0 * config.subsample_fraction
        ));
        let stability_options = crate::validation::StabilityOptions {
            subsamples: config.subsamples,
            fraction: config.subsample_fraction,
            seed: config.seed,
        };
        let outcome = timings.time(log, "stability", || {
            let _bar = log.progress(
                "stability",
                config.subsamples * options.levels.len() * options.trials,
                "trials",
            );
            crate::validation::stability(similarity, &communities.partition, options, &stability_options)
        });
        match outcome {
            Ok(result) => {
                let (summary, stability_warnings) = crate::report::stability_summary(
                    &result,
                    &communities.partition,
                    config.subsamples,
                    config.subsample_fraction,
                );
                warnings.extend(stability_warnings);
                Some((result, summary))
            }
            Err(
                error @ (crate::validation::StabilityError::SubsampleTooSmall { .. }
                | crate::validation::StabilityError::Community { .. }),
            ) => {
                warnings.push(Warning::ValidationSkipped {
                    check: "stability check".into(),
                    reason: error.to_string(),
                });
                None
            }
            Err(error) => return Err(error.into()),
        }
    } else {
        None
    };
    let (null, null_summary) = match null {
        Some((result, summary)) => (Some(result), Some(summary)),
        None => (None, None),
    };
    let (stability, stability_summary) = match stability {
        Some((result, summary)) => (Some(result), Some(summary)),
        None => (None, None),
    };
    Ok(Validated { null, null_summary, stability, stability_summary, warnings })
}

/// `stability.tsv` (one row per community) and `null_distribution.tsv` (one row per null cohort).
fn write_validation_tables(
    output: &OutputFolder,
    communities: &CommunityResult,
    validated: &Validated,
) -> Result<(), Error> {
    if let (Some(result), Some(summary)) = (&validated.stability, &validated.stability_summary) {
        let mut table = Table::new(["community", "size", "stability", "median_confidence"]);
        for community in &summary.communities {
            table.push(vec![
                community.community.to_string(),
                communities.partition.size(community.community).to_string(),
                format_number(community.stability),
                format_number(community.median_confidence),
            ]);
        }
        table.write(&output.path().join("stability.tsv"))?;
        let mut subsamples = Table::new(["subsample", "ari"]);
        for (index, ari) in result.subsample_ari.iter().enumerate() {
            subsamples.push(vec![(index + 1).to_string(), format_number(*ari)]);
        }
        subsamples.write(&output.path().join("subsamples.tsv"))?;
    }
    if let Some(null) = &validated.null {
        let mut table = Table::new(["draw", "structure", "consensus", "communities"]);
        for (index, draw) in null.null.iter().enumerate() {
            table.push(vec![
                (index + 1).to_string(),
                format_number(draw.structure),
                format_number(draw.consensus),
                draw.communities.to_string(),
            ]);
        }
        table.write(&output.path().join("null_distribution.tsv"))?;
    }
    Ok(())
}

/// The command-line spelling of a flag value.
fn value_name(value: &impl clap::ValueEnum) -> String {
    value.to_possible_value().map_or_else(String::new, |value| value.get_name().to_string())
}

/// Renders the report, with its time in the detailed log (after provenance.json is written, so
/// the time is not part of `stage_seconds`).
fn time_report<T>(log: &Log, work: impl FnOnce() -> T) -> T {
    let started = Instant::now();
    let result = work();
    log.detail(&format!("report: {:.2} s", started.elapsed().as_secs_f64()));
    result
}

fn collect_community_warnings(
    cohort: &Cohort,
    communities: &CommunityResult,
    config: &RunConfig,
    warnings: &mut Vec<Warning>,
) {
    let ids = &cohort.participant_ids;
    // Participants isolated in at least half of the densities that entered the consensus: a
    // participant isolated only at the sparsest densities is the normal effect of thresholding.
    let included: Vec<_> =
        communities.densities.iter().filter(|density| density.consensus_weight > 0.0).collect();
    let mut isolated_count = vec![0usize; ids.len()];
    for density in &included {
        for &row in &density.isolated {
            isolated_count[row] += 1;
        }
    }
    let often: Vec<String> = isolated_count
        .iter()
        .zip(ids)
        .filter(|(&count, _)| count > 0 && 2 * count >= included.len())
        .map(|(_, id)| id.clone())
        .collect();
    if !often.is_empty() {
        warnings.push(Warning::IsolatedParticipants { densities: included.len(), participants: often });
    }
    let unassigned: Vec<String> = communities
        .partition
        .membership
        .iter()
        .zip(ids)
        .filter(|(&community, _)| community == 0)
        .map(|(_, id)| id.clone())
        .collect();
    if !unassigned.is_empty() {
        warnings.push(Warning::Unassigned { min_size: config.min_community_size, participants: unassigned });
    }
    if communities.partition.community_count() <= 1 {
        warnings.push(Warning::SingleCommunity);
    }
}

/// composition.tsv and covariates.tsv (`stats::balance`), with a warning per covariate that
/// differs across communities.
fn write_balance(
    config: &RunConfig,
    output: &OutputFolder,
    cohort: &Cohort,
    labels: &[Option<String>],
    communities: &CommunityResult,
    warnings: &mut Vec<Warning>,
) -> Result<(), Error> {
    use crate::report::balance::balance_table;
    let membership = &communities.partition.membership;
    let labels: Vec<Option<&str>> = labels.iter().map(Option::as_deref).collect();
    let composition =
        stats::balance::composition_tests(&config.group_column, membership, &labels, config.seed);
    balance_table(&composition).write(&output.path().join("composition.tsv"))?;
    let table = &cohort.table;
    let excluded =
        ["participant_id", config.group_column.as_str(), config.match_column.as_deref().unwrap_or("")];
    let columns: Vec<String> = match &config.covariates {
        Some(columns) => columns.clone(),
        None => table.columns().iter().filter(|c| !excluded.contains(&c.as_str())).cloned().collect(),
    };
    let mut rows = Vec::new();
    for (index, column) in columns.iter().enumerate() {
        let values = table.column(column).ok_or_else(|| ConfigError::Invalid {
            flag: "--covariates".into(),
            message: format!(
                "{}: no column '{column}'; the table has: {}",
                table.path().display(),
                table.columns().join(", ")
            ),
        })?;
        let (tests, imbalance) = stats::balance::covariate_tests(
            column,
            &values,
            membership,
            config.alpha,
            config.seed,
            index as u64,
        );
        rows.extend(tests);
        if let Some(imbalance) = imbalance {
            warnings.push(Warning::CovariateImbalance {
                column: imbalance.variable,
                description: imbalance.description,
            });
        }
    }
    balance_table(&rows).write(&output.path().join("covariates.tsv"))?;
    if let Some(column) = &config.outcome {
        let values = table.column(column).unwrap_or_default();
        let draws =
            if config.permutations > 0 { config.permutations } else { stats::balance::MONTE_CARLO_DRAWS };
        let (tests, _) =
            stats::balance::outcome_tests(column, &values, membership, config.alpha, config.seed, draws);
        balance_table(&tests).write(&output.path().join("outcome.tsv"))?;
    }
    Ok(())
}

/// Cohort rows of `community` (0 = unassigned).
fn members_of(communities: &CommunityResult, community: usize) -> Vec<usize> {
    communities
        .partition
        .membership
        .iter()
        .enumerate()
        .filter(|(_, &c)| c == community)
        .map(|(row, _)| row)
        .collect()
}

/// The scopes of the comparisons: the whole cohort, then each community.
fn scopes(communities: &CommunityResult) -> Vec<(String, Vec<usize>)> {
    let membership = &communities.partition.membership;
    let mut scopes = vec![("all".to_string(), (0..membership.len()).collect::<Vec<_>>())];
    for community in 1..=communities.partition.community_count() {
        let rows =
            membership.iter().enumerate().filter(|(_, &c)| c == community).map(|(row, _)| row).collect();
        scopes.push((community.to_string(), rows));
    }
    scopes
}

/// The comparison rows of a run without features (a precomputed similarity matrix).
fn not_compared(
    config: &RunConfig,
    groups: &Groups,
    communities: &CommunityResult,
) -> Vec<ComparisonSummary> {
    let (level_a, level_b) = &config.contrast;
    scopes(communities)
        .into_iter()
        .map(|(scope, rows)| ComparisonSummary {
            scope,
            count_a: groups.rows_of(level_a, &rows).len(),
            count_b: groups.rows_of(level_b, &rows).len(),
            written: false,
            reason: Some(
                "precomputed similarity matrix: no features to compare; run with --inputs for maps".into(),
            ),
            significant_features: 0,
            max_abs_t: f64::NAN,
            peak: String::new(),
            peak_t: f64::NAN,
        })
        .collect()
}

#[allow(clippy::too_many_arguments)]
fn compare_and_write(
    config: &RunConfig,
    cohort: &Cohort,
    features: &Features,
    groups: &Groups,
    communities: &CommunityResult,
    maps_dir: &Path,
    warnings: &mut Vec<Warning>,
) -> Result<Vec<ComparisonSummary>, Error> {
    let (level_a, level_b) = &config.contrast;
    let space = &features.space;
    let matrix = &features.matrix;
    let mut summaries = Vec::new();
    let covariates = covariate_columns(config, cohort, warnings);
    let mut effects: Vec<ContrastMaps> = Vec::new();
    for (scope, rows) in scopes(communities) {
        let scope_words =
            if scope == "all" { "whole cohort".to_string() } else { format!("community {scope}") };
        let base_sidecar = json!({
            "Community": if scope == "all" { json!("all") } else { json!(scope.parse::<usize>().unwrap_or(0)) },
            "CommunitySize": rows.len(),
            "GroupColumn": config.group_column,
        });
        // Means: pooled, then one per group level with at least one participant in scope.
        let pooled = stats::group_mean(matrix, &rows);
        let name = MapName::builder().community(&scope).build_for(Statistic::Mean)?;
        let counts = groups.counts(&rows);
        let count_refs: Vec<(&str, usize)> = counts.iter().map(|(level, n)| (level.as_str(), *n)).collect();
        let pooled_sidecar = with(
            &with(&base_sidecar, maps::groups_field(&count_refs)),
            json!({
                "Description": format!("Mean Fisher z over all participants of the {scope_words}"),
                "Participants": rows.len(),
            }),
        );
        maps::write_map(maps_dir, space, &name, Statistic::Mean, &pooled, &pooled_sidecar, None)?;
        for level in &groups.levels {
            let level_rows = groups.rows_of(level, &rows);
            if level_rows.is_empty() {
                continue;
            }
            let mean = stats::group_mean(matrix, &level_rows);
            let name = MapName::builder().community(&scope).group(level).build_for(Statistic::Mean)?;
            let level_sidecar = with(
                &with(&base_sidecar, maps::groups_field(&[(level.as_str(), level_rows.len())])),
                json!({
                    "Description": format!("Mean Fisher z of the {level} participants of the {scope_words}"),
                    "Participants": level_rows.len(),
                }),
            );
            maps::write_map(maps_dir, space, &name, Statistic::Mean, &mean, &level_sidecar, None)?;
        }
        let rows_a = groups.rows_of(level_a, &rows);
        let rows_b = groups.rows_of(level_b, &rows);
        if rows_a.len() < 2 || rows_b.len() < 2 {
            let reason = format!(
                "fewer than 2 participants in a level ({level_a}: {}, {level_b}: {})",
                rows_a.len(),
                rows_b.len()
            );
            warnings.push(Warning::ContrastSkipped { scope: scope_words.clone(), reason: reason.clone() });
            summaries.push(ComparisonSummary {
                scope,
                count_a: rows_a.len(),
                count_b: rows_b.len(),
                written: false,
                reason: Some(reason),
                significant_features: 0,
                max_abs_t: f64::NAN,
                peak: String::new(),
                peak_t: f64::NAN,
            });
            continue;
        }
        if let Some(columns) = &covariates {
            let counts = (rows_a.len(), rows_b.len());
            let summary = compare_with_covariates(
                config,
                features,
                columns,
                (&rows_a, &rows_b),
                &scope,
                maps_dir,
                &base_sidecar,
                (warnings, &mut effects),
            )?;
            summaries.push(summary.unwrap_or_else(|reason| skipped(&scope, counts, reason)));
            continue;
        }
        let comparison = stats::welch_comparison(matrix, &rows_a, &rows_b).map_err(|error| {
            ConfigError::Invalid { flag: "--contrast".into(), message: format!("{scope_words}: {error}") }
        })?;
        let contrast_sidecar = with(
            &with(&base_sidecar, maps::contrast_fields(level_a, rows_a.len(), level_b, rows_b.len())),
            json!({
                "Test": "Welch two-sample t test (unequal variances), two-sided",
            }),
        );
        let uniform_dof = uniform(&comparison.dof);
        // Maps are stored as float32; p and q are kept in f64 by the stats stage.
        let p_map: Vec<f32> = comparison.p.iter().map(|&p| p as f32).collect();
        let q_map: Vec<f32> = comparison.q.iter().map(|&q| q as f32).collect();
        let outputs: [(Statistic, &[f32], &str); 6] = [
            (Statistic::Difference, &comparison.difference, "Mean Fisher z difference"),
            (Statistic::T, &comparison.t, "Welch t statistic"),
            (Statistic::Dof, &comparison.dof, "Welch-Satterthwaite degrees of freedom"),
            (Statistic::P, &p_map, "Two-sided uncorrected p of the Welch t test"),
            (Statistic::Q, &q_map, "Benjamini-Hochberg q across all features of this map"),
            (
                Statistic::HedgesG,
                &comparison.hedges_g,
                "Hedges g (bias-corrected standardised mean difference)",
            ),
        ];
        for (statistic, values, description) in outputs {
            let name =
                MapName::builder().community(&scope).contrast(level_a, level_b).build_for(statistic)?;
            let t_dof = if statistic == Statistic::T { uniform_dof } else { None };
            maps::write_map(
                maps_dir,
                space,
                &name,
                statistic,
                values,
                &with(
                    &contrast_sidecar,
                    json!({
                        "Description": format!("{description} of {level_a} - {level_b}, {scope_words}"),
                    }),
                ),
                t_dof,
            )?;
        }
        let permutation_input = (&rows_a[..], &rows_b[..], covariates.as_deref().unwrap_or(&[]));
        write_permutation_maps(config, features, permutation_input, &scope, maps_dir, &contrast_sidecar)?;
        // t and q feed only the edge tables (top edges, network blocks); voxel maps keep the
        // difference alone, for the correlation between scopes, to spare memory.
        let edges = matches!(space, FeatureSpace::Edges(_));
        effects.push((
            scope.clone(),
            comparison.difference.clone(),
            if edges { comparison.t.clone() } else { Vec::new() },
            if edges { comparison.q.clone() } else { Vec::new() },
        ));
        let significant = comparison.q.iter().filter(|&&q| q < config.alpha).count();
        let (peak_index, peak_t) = comparison
            .t
            .iter()
            .enumerate()
            .filter(|(_, t)| t.is_finite())
            .max_by(|(ia, a), (ib, b)| a.abs().total_cmp(&b.abs()).then(ib.cmp(ia)))
            .map(|(index, &t)| (index, f64::from(t)))
            .unwrap_or((0, f64::NAN));
        summaries.push(ComparisonSummary {
            scope,
            count_a: rows_a.len(),
            count_b: rows_b.len(),
            written: true,
            reason: None,
            significant_features: significant,
            max_abs_t: peak_t.abs(),
            peak: describe_feature(space, peak_index),
            peak_t,
        });
    }
    write_contrast_summaries(config, features, &effects, maps_dir.parent().unwrap_or(maps_dir))?;
    drop(effects);
    write_interaction(
        config,
        features,
        covariates.as_deref().unwrap_or(&[]),
        groups,
        communities,
        maps_dir,
        warnings,
    )?;
    Ok(summaries)
}

/// The diagnosis x community interaction F, p and q maps (`stats::model::interaction_design`),
/// or a warning saying why they are not written.
fn write_interaction(
    config: &RunConfig,
    features: &Features,
    covariates: &[stats::model::CovariateColumn],
    groups: &Groups,
    communities: &CommunityResult,
    maps_dir: &Path,
    warnings: &mut Vec<Warning>,
) -> Result<(), Error> {
    let (level_a, level_b) = &config.contrast;
    let membership = &communities.partition.membership;
    let everyone: Vec<usize> = (0..membership.len()).collect();
    let (rows_a, rows_b) = (groups.rows_of(level_a, &everyone), groups.rows_of(level_b, &everyone));
    let skip = |reason: String| Warning::ContrastSkipped {
        scope: "diagnosis x community interaction".into(),
        reason,
    };
    let Some(built) =
        stats::model::interaction_design(&rows_a, &rows_b, membership, covariates, stats::MIN_GROUP_SIZE)
    else {
        warnings.push(skip(format!(
            "fewer than 2 communities with at least {} participants of each level",
            stats::MIN_GROUP_SIZE
        )));
        return Ok(());
    };
    let contrasts: Vec<Vec<f64>> = built
        .interaction_columns
        .iter()
        .map(|&column| (0..built.design.column_count()).map(|j| f64::from(u8::from(j == column))).collect())
        .collect();
    let test = match stats::fit_linear_model(&features.matrix, &built.rows, &built.design)
        .and_then(|model| stats::contrast_f(&model, &contrasts))
    {
        Ok(test) => test,
        Err(error) => {
            warnings.push(skip(error.to_string()));
            return Ok(());
        }
    };
    let count_a = built.rows.iter().filter(|row| rows_a.contains(row)).count();
    let dof = [test.dof_numerator, test.dof_denominator];
    let sidecar = with(
        &maps::contrast_fields(level_a, count_a, level_b, built.rows.len() - count_a),
        json!({
            "Community": "all",
            "Communities": built.communities,
            "GroupColumn": config.group_column,
            "Test": "F test of the group x community terms: full linear model against the model without them",
            "Model": built.design.columns,
            "DegreesOfFreedom": dof,
        }),
    );
    let p_map: Vec<f32> = test.p.iter().map(|&p| p as f32).collect();
    let q_map: Vec<f32> = test.q.iter().map(|&q| q as f32).collect();
    let outputs: [(Statistic, &[f32], &str); 3] = [
        (Statistic::F, &test.f, "F of the diagnosis x community interaction"),
        (Statistic::P, &p_map, "Uncorrected p of the interaction F"),
        (Statistic::Q, &q_map, "Benjamini-Hochberg q of the interaction p across all features of this map"),
    ];
    for (statistic, values, description) in outputs {
        let name = MapName::builder()
            .community("all")
            .contrast(level_a, level_b)
            .interaction()
            .build_for(statistic)?;
        let extra = json!({"Description": format!("{description}: does {level_a} - {level_b} differ across communities?")});
        maps::write_map_with_dof(
            maps_dir,
            &features.space,
            &name,
            statistic,
            values,
            &with(&sidecar, extra),
            &dof,
        )?;
    }
    write_interaction_permutation_maps(config, features, &built, &sidecar, maps_dir)
}

/// Permutation p and family-wise p maps of the interaction F (`--permutations`): Freedman-Lane
/// with the model without the group x community terms as nuisance
/// (`stats::permutation::freedman_lane_f`), seeded by its own stream.
fn write_interaction_permutation_maps(
    config: &RunConfig,
    features: &Features,
    built: &stats::model::InteractionDesign,
    sidecar: &serde_json::Value,
    maps_dir: &Path,
) -> Result<(), Error> {
    if config.permutations == 0 {
        return Ok(());
    }
    let (level_a, level_b) = &config.contrast;
    let seed = crate::seed::derive(config.seed, "permutation-interaction", &[]);
    let permutations = stats::permutation::random_permutations(built.rows.len(), config.permutations, seed);
    let Ok(test) = stats::permutation::freedman_lane_f(
        &features.matrix,
        &built.rows,
        &built.design,
        &built.interaction_columns,
        &permutations,
    ) else {
        return Ok(()); // the F maps were written from the same model, so this does not happen
    };
    let extra = json!({
        "Test": "F of the group x community terms (full linear model against the model without them), permutation inference",
        "Permutations": test.permutations,
        "SmallestAttainableP": test.smallest_p,
        "PermutationMethod": "Freedman-Lane: residuals of the model without the group x community terms permuted, its fitted values added back",
    });
    let outputs = [
        (
            Statistic::PermutationP,
            &test.p_uncorrected,
            "Permutation p of the interaction F: the share of permutations (the observed order included) whose F reaches the observed F",
        ),
        (
            Statistic::FamilyWiseP,
            &test.p_fwe,
            "Family-wise error p of the interaction F: the share of permutations whose largest F over all features of the map reaches the observed F",
        ),
    ];
    for (statistic, values, description) in outputs {
        let values: Vec<f32> = values.iter().map(|&p| p as f32).collect();
        let name = MapName::builder()
            .community("all")
            .contrast(level_a, level_b)
            .interaction()
            .build_for(statistic)?;
        let described = with(
            &with(sidecar, extra.clone()),
            json!({"Description": format!("{description}: does {level_a} - {level_b} differ across communities?")}),
        );
        maps::write_map(maps_dir, &features.space, &name, statistic, &values, &described, None)?;
    }
    Ok(())
}

/// Permutation p and family-wise p maps of one scope's contrast (`--permutations`): Freedman-Lane
/// on the linear model group + covariates (`stats::permutation`), seeded per scope.
fn write_permutation_maps(
    config: &RunConfig,
    features: &Features,
    (rows_a, rows_b, columns): (&[usize], &[usize], &[stats::model::CovariateColumn]),
    scope: &str,
    maps_dir: &Path,
    sidecar: &serde_json::Value,
) -> Result<(), Error> {
    if config.permutations == 0 {
        return Ok(());
    }
    let (level_a, level_b) = &config.contrast;
    let (design, rows, group) = stats::model::group_design(rows_a, rows_b, columns);
    let scope_seed =
        crate::seed::derive(config.seed, "permutation-scope", &[scope.parse::<u64>().unwrap_or(0)]);
    let permutations = stats::permutation::random_permutations(rows.len(), config.permutations, scope_seed);
    let Ok(test) = stats::permutation::freedman_lane(&features.matrix, &rows, &design, group, &permutations)
    else {
        return Ok(()); // the model cannot be fitted in this scope: the contrast maps say so already
    };
    let extra = json!({
        "Test": "two-sided t of the group coefficient of the linear model, permutation inference",
        "Permutations": test.permutations,
        "SmallestAttainableP": test.smallest_p,
        "PermutationMethod": "Freedman-Lane on the linear model below (plain permutation of the data when it holds only the intercept and group)",
        "Model": design.columns,
    });
    let pairs = [(Statistic::PermutationP, &test.p_uncorrected), (Statistic::FamilyWiseP, &test.p_fwe)];
    for (statistic, values) in pairs {
        let values: Vec<f32> = values.iter().map(|&p| p as f32).collect();
        let name = MapName::builder().community(scope).contrast(level_a, level_b).build_for(statistic)?;
        let described = with(
            &with(sidecar, extra.clone()),
            json!({"Description": format!("{} ({level_a} - {level_b})", statistic.description())}),
        );
        maps::write_map(maps_dir, &features.space, &name, statistic, &values, &described, None)?;
    }
    Ok(())
}

/// The features with the `--nuisance` columns regressed out (`features::nuisance`), for the
/// similarity step only; `None` without the flag.
fn remove_nuisance(
    config: &RunConfig,
    cohort: &Cohort,
    features: &Features,
) -> Result<Option<features::FeatureMatrix>, Error> {
    if config.nuisance.is_empty() {
        return Ok(None);
    }
    let invalid = |message: String| ConfigError::Invalid { flag: "--nuisance".into(), message };
    let columns: Vec<_> = config
        .nuisance
        .iter()
        .filter_map(|name| {
            cohort.table.column(name).map(|cells| stats::model::CovariateColumn::new(name, &cells))
        })
        .collect();
    let design = stats::model::nuisance_design(&columns, cohort.participant_ids.len()).map_err(|rows| {
        let ids: Vec<&str> = rows.iter().map(|&row| cohort.participant_ids[row].as_str()).collect();
        invalid(format!(
            "{}: participant(s) {} have no value (n/a) in {}; nuisance regression needs a value for everyone: fill them or remove these participants",
            cohort.table.path().display(),
            ids.join(", "),
            config.nuisance.join(", ")
        ))
    })?;
    let adjusted =
        features::nuisance::regress_out(&features.matrix, &design.values, design.column_count())
            .map_err(|message| invalid(format!("{} (columns {})", message, design.columns.join(", "))))?;
    Ok(Some(adjusted))
}

/// Scope, difference (or adjusted estimate), t and q of a written contrast.
type ContrastMaps = (String, Vec<f32>, Vec<f32>, Vec<f64>);

/// Features listed per scope in `top_edges.tsv`.
const TOP_EDGES: usize = 20;

/// contrast_correlations.tsv (every pair of written contrast maps); for region matrices also
/// top_edges.tsv and, with an atlas `network` column, network_blocks.tsv (`stats::summaries`).
fn write_contrast_summaries(
    config: &RunConfig,
    features: &Features,
    effects: &[ContrastMaps],
    dir: &Path,
) -> Result<(), Error> {
    let mut table = Table::new(["community_a", "community_b", "correlation", "features"]);
    for (index, (scope_a, difference_a, ..)) in effects.iter().enumerate() {
        for (scope_b, difference_b, ..) in &effects[index + 1..] {
            let (r, n) = stats::summaries::map_correlation(difference_a, difference_b);
            table.push(vec![scope_a.clone(), scope_b.clone(), format_number(r), n.to_string()]);
        }
    }
    table.write(&dir.join("contrast_correlations.tsv"))?;
    let FeatureSpace::Edges(edges) = &features.space else { return Ok(()) };
    let mut top =
        Table::new(["community", "rank", "region_i", "region_j", "name_i", "name_j", "difference", "t", "q"]);
    for (scope, difference, t, q) in effects {
        for (rank, index) in stats::summaries::top_features(t, TOP_EDGES).into_iter().enumerate() {
            let (i, j) = edges.edge(index);
            top.push(vec![
                scope.clone(),
                (rank + 1).to_string(),
                (i + 1).to_string(),
                (j + 1).to_string(),
                edges.region_names[i].clone(),
                edges.region_names[j].clone(),
                format_number(f64::from(difference[index])),
                format_number(f64::from(t[index])),
                format_number(q[index]),
            ]);
        }
    }
    top.write(&dir.join("top_edges.tsv"))?;
    let Some(atlas) = crate::atlas::atlas_path(config.atlas.as_deref())? else { return Ok(()) };
    let atlas_table = read::read_table(&atlas)?;
    let Some(networks) = atlas_table.column("network") else { return Ok(()) };
    let networks: Vec<String> = networks.iter().map(|n| n.trim().to_string()).collect();
    if networks.len() != edges.region_count {
        return Ok(());
    }
    let mut blocks =
        Table::new(["community", "network_a", "network_b", "edges", "mean_difference", "mean_t"]);
    for (scope, difference, t, _) in effects {
        let means = stats::summaries::network_blocks(edges, &networks, difference);
        let t_means = stats::summaries::network_blocks(edges, &networks, t);
        for (block, t_block) in means.iter().zip(&t_means) {
            blocks.push(vec![
                scope.clone(),
                block.network_a.clone(),
                block.network_b.clone(),
                block.edges.to_string(),
                format_number(block.mean),
                format_number(t_block.mean),
            ]);
        }
    }
    blocks.write(&dir.join("network_blocks.tsv"))?;
    Ok(())
}

/// The `--covariates` columns of the comparison model (None without the flag), with a warning
/// naming the participants left out for a missing value.
fn covariate_columns(
    config: &RunConfig,
    cohort: &Cohort,
    warnings: &mut Vec<Warning>,
) -> Option<Vec<stats::model::CovariateColumn>> {
    let names = config.covariates.as_ref()?;
    let columns: Vec<_> = names
        .iter()
        .filter_map(|name| {
            cohort.table.column(name).map(|cells| stats::model::CovariateColumn::new(name, &cells))
        })
        .collect();
    let missing = stats::model::rows_with_missing(&columns, cohort.participant_ids.len());
    if !missing.is_empty() {
        warnings.push(Warning::MissingCovariate {
            columns: names.clone(),
            participants: missing.iter().map(|&row| cohort.participant_ids[row].clone()).collect(),
        });
    }
    Some(columns)
}

/// The row of `comparisons.tsv` for a scope without maps.
fn skipped(scope: &str, (count_a, count_b): (usize, usize), reason: String) -> ComparisonSummary {
    ComparisonSummary {
        scope: scope.to_string(),
        count_a,
        count_b,
        written: false,
        reason: Some(reason),
        significant_features: 0,
        max_abs_t: f64::NAN,
        peak: String::new(),
        peak_t: f64::NAN,
    }
}

/// The A - B contrast of one scope in the linear model `group + covariates` (`stats::glm`):
/// adjusted difference, t (uniform dof), p and q maps. `Ok(Err(reason))` when the model cannot
/// be fitted in this scope (too few participants, a covariate constant within it).
#[allow(clippy::too_many_arguments)]
fn compare_with_covariates(
    config: &RunConfig,
    features: &Features,
    columns: &[stats::model::CovariateColumn],
    (rows_a, rows_b): (&[usize], &[usize]),
    scope: &str,
    maps_dir: &Path,
    base_sidecar: &serde_json::Value,
    (warnings, effects): (&mut Vec<Warning>, &mut Vec<ContrastMaps>),
) -> Result<Result<ComparisonSummary, String>, Error> {
    let (level_a, level_b) = &config.contrast;
    let scope_words = if scope == "all" { "whole cohort".to_string() } else { format!("community {scope}") };
    let (design, rows, group) = stats::model::group_design(rows_a, rows_b, columns);
    let count_a = rows.iter().filter(|row| rows_a.contains(row)).count();
    let count_b = rows.len() - count_a;
    let fitted = stats::fit_linear_model(&features.matrix, &rows, &design).and_then(|model| {
        let mut weights = vec![0.0; design.column_count()];
        weights[group] = 1.0;
        stats::contrast_t(&model, &weights)
    });
    let test = match fitted {
        Ok(test) if count_a >= 2 && count_b >= 2 => test,
        Ok(_) | Err(_) => {
            let reason = match fitted {
                Err(error) => error.to_string(),
                Ok(_) => format!("fewer than 2 participants with covariates in a level ({level_a}: {count_a}, {level_b}: {count_b})"),
            };
            warnings.push(Warning::ContrastSkipped { scope: scope_words, reason: reason.clone() });
            return Ok(Err(reason));
        }
    };
    let sidecar = with(
        &with(base_sidecar, maps::contrast_fields(level_a, count_a, level_b, count_b)),
        json!({
            "Test": "general linear model, t test of the group coefficient, two-sided",
            "Model": design.columns,
        }),
    );
    let p_map: Vec<f32> = test.p.iter().map(|&p| p as f32).collect();
    let q_map: Vec<f32> = test.q.iter().map(|&q| q as f32).collect();
    let outputs: [(Statistic, &[f32], &str); 4] = [
        (
            Statistic::Difference,
            &test.estimate,
            "Covariate-adjusted mean Fisher z difference (group coefficient)",
        ),
        (Statistic::T, &test.t, "t of the group coefficient"),
        (Statistic::P, &p_map, "Two-sided uncorrected p of the group coefficient"),
        (Statistic::Q, &q_map, "Benjamini-Hochberg q across all features of this map"),
    ];
    for (statistic, values, description) in outputs {
        let name = MapName::builder().community(scope).contrast(level_a, level_b).build_for(statistic)?;
        let extra = json!({"Description": format!("{description} of {level_a} - {level_b}, {scope_words}")});
        maps::write_map(
            maps_dir,
            &features.space,
            &name,
            statistic,
            values,
            &with(&sidecar, extra),
            Some(test.dof),
        )?;
    }
    write_permutation_maps(config, features, (rows_a, rows_b, columns), scope, maps_dir, &sidecar)?;
    // As in the Welch path: t and q are kept for edge tables only.
    let edges = matches!(features.space, FeatureSpace::Edges(_));
    effects.push((
        scope.to_string(),
        test.estimate.clone(),
        if edges { test.t.clone() } else { Vec::new() },
        if edges { test.q.clone() } else { Vec::new() },
    ));
    let significant = test.q.iter().filter(|&&q| q < config.alpha).count();
    let (peak_index, peak_t) = test
        .t
        .iter()
        .enumerate()
        .filter(|(_, t)| t.is_finite())
        .max_by(|(ia, a), (ib, b)| a.abs().total_cmp(&b.abs()).then(ib.cmp(ia)))
        .map(|(index, &t)| (index, f64::from(t)))
        .unwrap_or((0, f64::NAN));
    Ok(Ok(ComparisonSummary {
        scope: scope.to_string(),
        count_a,
        count_b,
        written: true,
        reason: None,
        significant_features: significant,
        max_abs_t: peak_t.abs(),
        peak: describe_feature(&features.space, peak_index),
        peak_t,
    }))
}

/// Merges two JSON objects (the second wins).
fn with(base: &serde_json::Value, extra: serde_json::Value) -> serde_json::Value {
    let mut merged = base.clone();
    if let (Some(target), serde_json::Value::Object(source)) = (merged.as_object_mut(), extra) {
        target.extend(source);
    }
    merged
}

/// The common value when all values agree (within f32 rounding), else None.
fn uniform(values: &[f32]) -> Option<f64> {
    let first = *values.first()?;
    values
        .iter()
        .all(|&value| (value - first).abs() <= 1e-4 * first.abs().max(1.0))
        .then_some(f64::from(first))
}

/// A feature's location in words: mm coordinates for voxels, region names for edges.
pub fn describe_feature(space: &FeatureSpace, index: usize) -> String {
    match space {
        FeatureSpace::Voxels(voxels) => {
            let Some(&flat) = voxels.mask.get(index) else { return String::new() };
            let [nx, ny, _] = voxels.dim;
            let ijk = [flat % nx, (flat / nx) % ny, flat / (nx * ny)];
            let a = &voxels.affine;
            let mm: Vec<String> = (0..3)
                .map(|row| {
                    let value = a[row][0] * ijk[0] as f64
                        + a[row][1] * ijk[1] as f64
                        + a[row][2] * ijk[2] as f64
                        + a[row][3];
                    format!("{value:.0}")
                })
                .collect();
            format!("({}) mm, voxel ({}, {}, {})", mm.join(", "), ijk[0], ijk[1], ijk[2])
        }
        FeatureSpace::Edges(edges) => {
            if index >= space.feature_count() {
                return String::new();
            }
            let (i, j) = edges.edge(index);
            format!("{} - {}", edges.region_names[i], edges.region_names[j])
        }
        FeatureSpace::Measures(measures) => measures.names.get(index).cloned().unwrap_or_default(),
    }
}

#[allow(clippy::too_many_arguments)]
fn build_summary(
    config: &RunConfig,
    cohort: &Cohort,
    features: Option<&Features>,
    groups: &Groups,
    communities: &CommunityResult,
    comparisons: Vec<ComparisonSummary>,
    warnings: Vec<Warning>,
    started: Instant,
) -> RunSummary {
    let everyone: Vec<usize> = (0..cohort.participant_ids.len()).collect();
    let mut community_rows: Vec<CommunitySummary> = scopes(communities)
        .into_iter()
        .skip(1)
        .map(|(scope, rows)| CommunitySummary {
            community: scope.parse().unwrap_or(0),
            size: rows.len(),
            group_counts: groups.counts(&rows),
        })
        .collect();
    let unassigned = members_of(communities, 0);
    if !unassigned.is_empty() {
        community_rows.push(CommunitySummary {
            community: 0,
            size: unassigned.len(),
            group_counts: groups.counts(&unassigned),
        });
    }
    let feature_description = match features.map(|features| &features.space) {
        Some(FeatureSpace::Voxels(voxels)) => format!(
            "{} in-mask voxels of a {}x{}x{} grid",
            voxels.mask.len(),
            voxels.dim[0],
            voxels.dim[1],
            voxels.dim[2]
        ),
        Some(space @ FeatureSpace::Edges(edges)) => {
            format!("{} regions, {} edges", edges.region_count, space.feature_count())
        }
        Some(FeatureSpace::Measures(measures)) => format!("{} standardised measures", measures.names.len()),
        None => "a precomputed similarity matrix".to_string(),
    };
    RunSummary {
        strata_version: crate::VERSION.to_string(),
        output: config.out.clone(),
        input_kind: match features.map(|features| &features.space) {
            Some(FeatureSpace::Voxels(_)) => "seed_maps".into(),
            Some(FeatureSpace::Edges(_)) => "region_matrices".into(),
            Some(FeatureSpace::Measures(_)) => "measures".into(),
            None => "similarity_matrix".into(),
        },
        participant_count: cohort.participant_ids.len(),
        feature_count: features.map_or(0, |features| features.matrix.feature_count()),
        feature_description,
        group_column: config.group_column.clone(),
        contrast: config.contrast.clone(),
        group_counts: groups.counts(&everyone),
        method: config.method.name().to_string(),
        graph_rule: communities.densities.first().map_or("density", |row| row.level.rule()).to_string(),
        sweep_parameters: communities.densities.iter().map(|row| row.level.parameter()).collect(),
        densities: communities.densities.iter().map(|row| row.density).collect(),
        densities_in_consensus: communities
            .densities
            .iter()
            .filter(|density| density.consensus_weight > 0.0)
            .map(|density| density.density)
            .collect(),
        parameters_in_consensus: communities
            .densities
            .iter()
            .filter(|density| density.consensus_weight > 0.0)
            .map(|density| density.level.parameter())
            .collect(),
        consensus_codelength: communities.consensus_codelength.map(|c| c.codelength),
        consensus_relative_savings: communities.consensus_codelength.map(|c| c.relative_savings()),
        median_consistency: crate::validation::median(&communities.consistency),
        community_count: communities.partition.community_count(),
        communities: community_rows,
        graph_measures: None,
        subgroups_supported: None,
        verdict: String::new(),
        null_test: None,
        stability: None,
        consensus_modularity: communities.consensus_modularity,
        consensus_iterations: communities.consensus_iterations,
        comparisons,
        alpha: config.alpha,
        warnings,
        seconds: started.elapsed().as_secs_f64(),
    }
}

/// The graph measures of the run: the graph they were taken on and the measures.
struct MeasuredGraph {
    level: crate::graph::SweepLevel,
    density: f64,
    edges: usize,
    nodes: crate::graph::measures::NodeMeasures,
    whole: crate::graph::measures::GraphMeasures,
}

impl MeasuredGraph {
    fn summary(&self) -> GraphMeasuresSummary {
        let small_world = self.whole.small_world.as_ref();
        GraphMeasuresSummary {
            graph_rule: self.level.rule().to_string(),
            parameter: self.level.parameter(),
            density: self.density,
            edges: self.edges,
            mean_clustering: self.whole.mean_clustering,
            mean_clustering_weighted: self.whole.mean_clustering_weighted,
            transitivity: self.whole.transitivity,
            path_length: self.whole.path_length,
            path_length_weighted: self.whole.path_length_weighted,
            efficiency: self.whole.efficiency,
            efficiency_weighted: self.whole.efficiency_weighted,
            small_world_sigma: small_world.map(|s| s.sigma),
            random_transitivity: small_world.map(|s| s.random_clustering),
            random_path_length: small_world.map(|s| s.random_path_length),
            random_graphs: small_world.map_or(0, |s| s.random_graphs),
        }
    }
}

/// The graph whose measures are reported: the graph of the sweep with the largest consensus
/// weight (the strongest structure), or the middle graph of the sweep when none entered it.
fn measure_graph(
    config: &RunConfig,
    similarity: &SimilarityMatrix,
    communities: &CommunityResult,
) -> MeasuredGraph {
    let rows = &communities.densities;
    let chosen = rows
        .iter()
        .enumerate()
        .filter(|(_, row)| row.consensus_weight > 0.0)
        .max_by(|a, b| a.1.consensus_weight.total_cmp(&b.1.consensus_weight).then(b.0.cmp(&a.0)))
        .map_or(rows.len() / 2, |(index, _)| index);
    let level = rows[chosen].level;
    let graph = crate::graph::SweepGraphs::new(similarity, config.edge_weights).graph(level);
    let nodes = crate::graph::measures::node_measures(
        &graph,
        &communities.partition.membership,
        crate::graph::measures::LabelZero::Unassigned,
    );
    let whole = crate::graph::measures::graph_measures(&graph, config.random_graphs, config.seed);
    MeasuredGraph { level, density: rows[chosen].density, edges: graph.edge_count(), nodes, whole }
}

/// graph_measures.tsv: per participant, the measures of the reported graph.
fn write_graph_measures(
    output: &OutputFolder,
    cohort: &Cohort,
    communities: &CommunityResult,
    measured: &MeasuredGraph,
) -> Result<(), Error> {
    let mut table = Table::new([
        "participant_id",
        "community",
        "degree",
        "strength",
        "clustering",
        "clustering_weighted",
        "participation",
        "within_module_z",
    ]);
    let nodes = &measured.nodes;
    for (row, id) in cohort.participant_ids.iter().enumerate() {
        table.push(vec![
            id.clone(),
            communities.partition.membership[row].to_string(),
            nodes.degree[row].to_string(),
            format_number(nodes.strength[row]),
            format_number(nodes.clustering[row]),
            format_number(nodes.clustering_weighted[row]),
            format_number(nodes.participation[row]),
            format_number(nodes.within_module_z[row]),
        ]);
    }
    table.write(&output.path().join("graph_measures.tsv"))?;
    Ok(())
}

#[allow(clippy::too_many_arguments)]
fn write_tables(
    config: &RunConfig,
    output: &OutputFolder,
    cohort: &Cohort,
    groups: &Groups,
    communities: &CommunityResult,
    comparisons: &[ComparisonSummary],
    similarity: &SimilarityMatrix,
    validated: &Validated,
) -> Result<(), Error> {
    let dir = output.path();
    // participants.tsv: the analysed input rows plus the community.
    let table = &cohort.table;
    let mut columns: Vec<String> = table.columns().to_vec();
    columns.push("community".into());
    columns.push("consistency".into());
    if validated.stability.is_some() {
        columns.push("confidence".into());
    }
    let mut participants = Table::new(columns);
    let cell = |value: f64| if value.is_nan() { MISSING.to_string() } else { format_number(value) };
    for (index, ((row, community), consistency)) in
        table.rows().iter().zip(&communities.partition.membership).zip(&communities.consistency).enumerate()
    {
        let mut cells = row.clone();
        cells.push(community.to_string());
        cells.push(cell(*consistency));
        if let Some(stability) = &validated.stability {
            cells.push(cell(stability.confidence[index]));
        }
        participants.push(cells);
    }
    participants.write(&dir.join("participants.tsv"))?;

    // communities.tsv: size and counts per group level.
    let level_columns: Vec<String> = groups
        .levels
        .iter()
        .map(|level| format!("n_{level}"))
        .chain(std::iter::once("n_missing".to_string()))
        .collect();
    let mut header = vec!["community".to_string(), "size".to_string()];
    header.extend(level_columns);
    let mut table = Table::new(header);
    let mut scope_rows = scopes(communities).into_iter().skip(1).collect::<Vec<_>>();
    let unassigned = members_of(communities, 0);
    if !unassigned.is_empty() {
        scope_rows.push(("0".to_string(), unassigned));
    }
    for (scope, rows) in scope_rows {
        let mut cells = vec![scope, rows.len().to_string()];
        for level in &groups.levels {
            cells.push(groups.rows_of(level, &rows).len().to_string());
        }
        cells.push(rows.iter().filter(|&&row| groups.labels[row].is_none()).count().to_string());
        table.push(cells);
    }
    table.write(&dir.join("communities.tsv"))?;

    // sweep.tsv: per graph of the sweep.
    let mut sweep = Table::new([
        "density",
        "graph",
        "parameter",
        "edges",
        "isolated",
        "communities",
        "quality",
        "modularity",
        "codelength_bits",
        "relative_savings",
        "nmi_to_consensus",
        "consensus_weight",
    ]);
    for density in &communities.densities {
        sweep.push(vec![
            format_number(density.density),
            density.level.rule().to_string(),
            format_number(density.level.parameter()),
            density.edge_count.to_string(),
            density.isolated.len().to_string(),
            density.community_count.to_string(),
            format_number(density.quality),
            format_number(density.modularity),
            density.codelength.map_or(MISSING.to_string(), |c| format_number(c.codelength)),
            density.codelength.map_or(MISSING.to_string(), |c| format_number(c.relative_savings())),
            format_number(density.nmi_to_consensus),
            format_number(density.consensus_weight),
        ]);
    }
    sweep.write(&dir.join("sweep.tsv"))?;

    // comparisons.tsv: per scope.
    let (a, b) = &config.contrast;
    let mut table = Table::new([
        "community".to_string(),
        format!("n_{a}"),
        format!("n_{b}"),
        "maps_written".to_string(),
        format!("features_q_below_{}", config.alpha),
        "peak_t".to_string(),
        "peak_location".to_string(),
        "note".to_string(),
    ]);
    for comparison in comparisons {
        table.push(vec![
            comparison.scope.clone(),
            comparison.count_a.to_string(),
            comparison.count_b.to_string(),
            if comparison.written { "yes" } else { "no" }.to_string(),
            if comparison.written {
                comparison.significant_features.to_string()
            } else {
                MISSING.to_string()
            },
            format_number(comparison.peak_t),
            if comparison.peak.is_empty() { MISSING.to_string() } else { comparison.peak.clone() },
            comparison.reason.clone().unwrap_or_else(|| MISSING.to_string()),
        ]);
    }
    table.write(&dir.join("comparisons.tsv"))?;

    write_npy(&dir.join("similarity.npy"), &similarity.values)?;
    write_npy(&dir.join("coassignment.npy"), &communities.coassignment)?;
    Ok(())
}

fn write_npy(path: &Path, values: &ndarray::Array2<f32>) -> Result<(), Error> {
    ndarray_npy::write_npy(path, values)
        .map_err(|error| WriteError::Encode { path: path.to_path_buf(), message: error.to_string() }.into())
}

fn write_json(path: &Path, value: &impl serde::Serialize) -> Result<(), Error> {
    let text = serde_json::to_string_pretty(value)
        .map_err(|error| WriteError::Encode { path: path.to_path_buf(), message: error.to_string() })?;
    std::fs::write(path, text + "\n")
        .map_err(|source| WriteError::Io { path: path.to_path_buf(), source }.into())
}

/// The BIDS derivative dataset description (BIDS v1.11.1: Name and BIDSVersion required,
/// DatasetType "derivative", GeneratedBy required for derivatives, each entry with Name required
/// and Version recommended). The schema's GeneratedBy entries allow only Name, Version,
/// Description, CodeURL and Container, so the command line is recorded in Description.
pub fn dataset_description() -> serde_json::Value {
    let command: Vec<String> = std::env::args().map(|arg| shell_quoted(&arg)).collect();
    json!({
        "Name": "strata participant subgroup analysis",
        "BIDSVersion": BIDS_VERSION,
        "DatasetType": "derivative",
        "GeneratedBy": [{
            "Name": "strata",
            "Version": crate::VERSION,
            "Description": format!(
                "Data-driven participant subgroups (research software). Command line: {}",
                command.join(" ")
            ),
        }],
    })
}

/// An argument as a POSIX shell would need it typed: unchanged when it holds only safe
/// characters, else in single quotes (with embedded quotes escaped as '\'').
fn shell_quoted(arg: &str) -> String {
    let safe = !arg.is_empty() && arg.chars().all(|c| c.is_ascii_alphanumeric() || "-_./:=,+@%".contains(c));
    if safe {
        arg.to_string()
    } else {
        format!("'{}'", arg.replace('\'', "'\\''"))
    }
}

fn input_digests(config: &RunConfig, cohort: &Cohort) -> Result<Vec<InputDigest>, Error> {
    let mut files: Vec<(String, PathBuf)> = vec![(String::new(), config.participants.clone())];
    // Built-in atlases and masks are digested from the bytes compiled in, under the name given.
    let mut built_ins = Vec::new();
    let resolved = [
        config.mask.as_deref().map(|mask| crate::atlas::resolve_mask(mask, "--mask")),
        config.atlas.as_deref().map(|atlas| crate::atlas::resolve_table(atlas, "--atlas")),
    ];
    for (value, resolved) in [config.mask.as_deref(), config.atlas.as_deref()].into_iter().zip(resolved) {
        let (Some(value), Some(resolved)) = (value, resolved) else { continue };
        match resolved?.embedded() {
            Some(file) => built_ins.push(InputDigest {
                participant_id: String::new(),
                path: value.display().to_string(),
                bytes: file.bytes.len() as u64,
                sha256: crate::atlas::sha256_hex(file.bytes),
                built_in: Some(format!("{} (strata {})", file.name, crate::VERSION)),
            }),
            None => files.push((String::new(), value.to_path_buf())),
        }
    }
    let mut seen = BTreeMap::new();
    for (id, source) in cohort.participant_ids.iter().zip(&cohort.sources) {
        // A stacked .npy holds every participant: digest it once.
        seen.entry(source.path.clone()).or_insert_with(|| {
            if source.stack_index.is_some() {
                String::new()
            } else {
                id.clone()
            }
        });
    }
    files.extend(seen.into_iter().map(|(path, id)| (id, path)));
    files
        .par_iter()
        .map(|(id, path)| {
            let (sha256, bytes) =
                file_sha256(path).map_err(|source| WriteError::Io { path: path.clone(), source })?;
            Ok(InputDigest {
                participant_id: id.clone(),
                path: path.display().to_string(),
                bytes,
                sha256,
                built_in: None,
            })
        })
        .collect::<Result<Vec<_>, Error>>()
        .map(|mut digests| {
            // After the participants table, where a mask or atlas file would be.
            digests.splice(1..1, built_ins);
            digests
        })
}

/// Generates the fictional Northfield cohort and runs the whole analysis on it.
///
/// Writes `inputs-matrices/`, `results-matrices/`, `inputs-seedmaps/` and `results-seedmaps/`
/// (as chosen by `options.kind`) into `options.out`, and returns the text to print: where the
/// results are and how well the planted subgroups were recovered (adjusted Rand index).
pub fn demo(options: &crate::cli::args::DemoOptions, log: &Log) -> Result<String, Error> {
    use crate::cli::args::DemoKind;
    use crate::demo::Scenario;
    let started = Instant::now();
    // The demo folder itself is not staged: each cohort and each result inside it is written
    // whole (staged and renamed), so the paths recorded in the results are the final ones.
    if options.out.is_dir()
        && std::fs::read_dir(&options.out).map(|mut e| e.next().is_some()).unwrap_or(false)
    {
        if !options.force {
            return Err(WriteError::Exists { path: options.out.clone() }.into());
        }
        std::fs::remove_dir_all(&options.out)
            .map_err(|source| WriteError::Io { path: options.out.clone(), source })?;
    }
    std::fs::create_dir_all(&options.out)
        .map_err(|source| WriteError::Io { path: options.out.clone(), source })?;
    let mut scenario = match &options.scenario {
        Some(path) => Scenario::from_toml_file(path)?,
        None => Scenario::default(),
    };
    if let Some(seed) = options.seed {
        scenario.seed = seed;
    }
    let mut text = String::new();
    let kinds: Vec<&str> = match options.kind {
        DemoKind::Matrices => vec!["matrices"],
        DemoKind::Maps => vec!["seedmaps"],
        DemoKind::Both => vec!["matrices", "seedmaps"],
    };
    for kind in kinds {
        let inputs_dir = options.out.join(format!("inputs-{kind}"));
        log.note(&format!("generating the Northfield demo cohort ({kind}) in {}", inputs_dir.display()));
        let staged_inputs = OutputFolder::prepare(&inputs_dir, false)?;
        let staged = if kind == "matrices" {
            crate::demo::write_matrix_cohort(&scenario, staged_inputs.path())?
        } else {
            crate::demo::write_seedmap_cohort(&scenario, staged_inputs.path())?
        };
        let atlas_table = if kind == "matrices" && scenario.region_count == crate::demo::atlas_regions().len()
        {
            crate::demo::write_atlas(&staged_inputs.path().join("atlas"))?;
            Some(inputs_dir.join("atlas").join("northfield100_regions.tsv"))
        } else {
            None
        };
        // The cohort was written under the staging name: point its paths at the final folder.
        let staging = staged_inputs.path().to_string_lossy().into_owned();
        let final_name = inputs_dir.to_string_lossy().into_owned();
        staged_inputs.commit()?;
        let inputs_glob = staged.inputs_glob.replacen(&staging, &final_name, 1);
        let participants_tsv = inputs_dir.join("participants.tsv");
        let results_dir = options.out.join(format!("results-{kind}"));
        let config = RunConfig {
            atlas: atlas_table,
            seed: scenario.seed,
            null_draws: options.null_draws,
            subsamples: options.subsamples,
            ..RunConfig::with_defaults(
                vec![inputs_glob],
                participants_tsv,
                "diagnosis",
                ("insomnia", "control"),
                results_dir,
            )
        };
        let summary = run(&config, log)?;
        let found = read_communities(&config.out.join("participants.tsv"))?;
        let ari = crate::validation::adjusted_rand_index(&staged.truth, &found);
        let final_dir = &config.out;
        let _ = std::fmt::Write::write_fmt(
            &mut text,
            format_args!(
                "Demo ({kind}): {} participants, {} planted subgroups; strata found {} communities; \
                 adjusted Rand index with the planted subgroups: {ari:.3}.\n  {}\n{}  results: {}\n",
                summary.participant_count,
                staged.truth.iter().copied().max().unwrap_or(0),
                summary.community_count,
                summary.verdict,
                summary.stability.as_ref().map_or(String::new(), |stability| format!(
                    "  Stability: median adjusted Rand index {:.2} over {} subsamples of {:.0}%.\n",
                    stability.median_ari,
                    stability.subsamples,
                    100.0 * stability.fraction
                )),
                final_dir.display()
            ),
        );
    }
    let final_dir = &options.out;
    let _ = std::fmt::Write::write_fmt(
        &mut text,
        format_args!(
            "Demo finished in {:.1} s; inputs and results in {}.\n\
             The Northfield cohort is fictional, generated by strata. strata is research software: \
             subgroups and maps are not diagnoses and not for individual clinical decisions.\n",
            started.elapsed().as_secs_f64(),
            final_dir.display()
        ),
    );
    Ok(text)
}

/// The `community` column of a written participants.tsv (demo use).
fn read_communities(path: &Path) -> Result<Vec<usize>, Error> {
    let table = read::read_table(path)?;
    let column = table.column("community").unwrap_or_default();
    Ok(column.iter().map(|value| value.parse().unwrap_or(0)).collect())
}
