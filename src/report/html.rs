//! The HTML report: one self-contained `report.html` per run folder, rendered from the run's
//! files alone ([`RunFiles`]), so `strata run` and `strata report RUN_DIR` share one code path.
//!
//! The page holds the run summary in words and the research-use caution first, then figures
//! (inline SVG drawn by [`super::figures`], with PNG rasters as data URIs), then tables. It loads
//! no remote resource and runs no script; a Content-Security-Policy forbids both. Every text
//! that comes from the run's files (participant ids, table values, group levels, file names) is
//! escaped with [`escape`]. Sections for results of later stages appear when their files or
//! `summary.json` keys exist (see [`super::run_files`]).

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use ndarray::Array2;
use serde_json::Value;

use super::figures::charts::{self, figure, SweepPanel};
use super::figures::colour::ColourMap;
use super::figures::matrix::{community_order, network_order, participant_matrix, region_matrix};
use super::figures::mosaic::{Grid, Scale};
use super::figures::svg::{format_tick, Anchor, Svg, TICK_FONT};
use super::figures::{quantile, symmetric_range, Figure};
use super::run_files::{MapFile, RunFiles, REPORT_FILE};
use super::tables::format_number;

pub use super::figures::svg::escape;

/// Features listed per community in the top-features table.
pub const TOP_FEATURES: usize = 5;
/// Minimum distance between two listed voxel peaks, in mm (about two voxels of a 4-6 mm map;
/// layout choice so neighbours of one peak are not listed as separate features).
const PEAK_SEPARATION_MM: f64 = 12.0;
/// Quantile of |value| that sets the end of a diverging colour bar (the top 1% saturate).
const COLOUR_QUANTILE: f64 = 0.99;
/// Columns with at most this many distinct numbers are codes of categories (site, sex as 0/1),
/// not covariates to draw as distributions (layout choice).
const MIN_COVARIATE_LEVELS: usize = 5;
/// Most covariate panels drawn (two rows of three).
const MAX_COVARIATE_PANELS: usize = 6;
/// Height of the two title lines above each contrast matrix.
const TITLE_ROOM: f64 = 40.0;
/// Longest group label in a figure title before it is cut with an ellipsis (layout choice: two
/// labels and their counts fit above a contrast matrix).
const MAX_TITLE_LABEL: usize = 24;
/// Side of one contrast matrix in the grid of contrast matrices (two per row fit the page).
const CONTRAST_PANEL_SIDE: f64 = 300.0;
/// Smallest end of the t colour bar, so noise-only maps do not look strong.
const T_COLOUR_FLOOR: f64 = 3.0;

/// The research-use caution shown on every report.
pub const CAUTION: &str = "strata is research software. Its subgroups, maps and statistics describe \
patterns in this cohort's data; they are not diagnoses and must not be used for decisions about \
individual people. Clinical decisions belong to licensed practice; use of these results must \
follow the approval of the local ethics committee and local data-protection rules.";

/// The page's Content-Security-Policy: nothing loads from anywhere, no script runs; inline
/// styles and data-URI images only.
const CONTENT_SECURITY_POLICY: &str = "default-src 'none'; img-src data:; style-src 'unsafe-inline'";

/// The page style (no web fonts: the reader's sans-serif).
const STYLE: &str = "
body{font-family:system-ui,-apple-system,'Segoe UI',Helvetica,Arial,sans-serif;color:#222;margin:0;background:#fafafa;line-height:1.45}
main{max-width:1040px;margin:0 auto;padding:24px 32px 60px;background:#fff;box-shadow:0 0 12px rgba(0,0,0,.06)}
h1{font-size:1.7em;margin:.2em 0 .1em}h2{font-size:1.3em;margin-top:2em;border-bottom:2px solid #e6e6e6;padding-bottom:.2em}
h3{font-size:1.05em;margin:1.6em 0 .4em}
.meta{color:#666;font-size:.9em;margin:0 0 1em}
.caution{border-left:5px solid #c0392b;background:#fbeeee;padding:10px 16px;margin:1.2em 0}
.summary p{margin:.45em 0}
ul.warnings li{color:#8a4b00}
figure{margin:1.8em 0;padding:0}
figure svg{max-width:100%;height:auto;display:block}
figcaption{font-size:.92em;color:#333;margin-top:.4em;max-width:900px}
table{border-collapse:collapse;font-size:.88em;margin:.5em 0 1em}
th,td{border-bottom:1px solid #e3e3e3;padding:3px 10px;text-align:left;vertical-align:top}
th{background:#f2f2f2;font-weight:600}
tr:nth-child(even) td{background:#fbfbfb}
td.num{text-align:right;font-variant-numeric:tabular-nums}
code,.mono{font-family:ui-monospace,Menlo,Consolas,monospace;font-size:.92em;word-break:break-all}
details{margin:.5em 0 1em}summary{cursor:pointer;color:#0b5394}
.notes{color:#8a4b00;font-size:.9em}
";

/// Reads a run folder, renders its report and writes `report.html` into it (atomically).
///
/// # Errors
/// [`super::run_files::ReportError`] when the run folder lacks `summary.json` or
/// `participants.tsv`; [`crate::maps::WriteError`] when the page cannot be written.
pub fn write_report(dir: &Path) -> Result<PathBuf, crate::error::Error> {
    let files = RunFiles::read(dir)?;
    let page = render(&files);
    let path = dir.join(REPORT_FILE);
    crate::maps::write_bytes_atomically(&path, page.as_bytes())?;
    Ok(path)
}

/// The whole page.
pub fn render(files: &RunFiles) -> String {
    let summary = &files.summary;
    let mut page = String::new();
    let folder = folder_name(files);
    let _ = write!(
        page,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta http-equiv=\"Content-Security-Policy\" content=\"{CONTENT_SECURITY_POLICY}\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>strata report: {}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n<main>\n",
        escape(&folder)
    );
    let _ = write!(
        page,
        "<h1>strata report</h1>\n<p class=\"meta\">Run folder <span class=\"mono\">{}</span> &middot; strata {}{}</p>\n",
        escape(&folder),
        escape(&summary.strata_version),
        files
            .provenance
            .as_ref()
            .and_then(|(value, _)| value.get("started_utc").and_then(Value::as_str))
            .map_or(String::new(), |started| format!(" &middot; started {}", escape(started)))
    );
    page.push_str("<section class=\"summary\" id=\"summary\">\n<h2>Summary</h2>\n");
    for paragraph in summary_paragraphs(files) {
        let _ = writeln!(page, "<p>{}</p>", escape(&paragraph));
    }
    if !summary.warnings.is_empty() {
        page.push_str("<p>Warnings:</p>\n<ul class=\"warnings\">\n");
        for warning in &summary.warnings {
            let _ = writeln!(page, "<li>{}</li>", escape(warning));
        }
        page.push_str("</ul>\n");
    }
    let _ = writeln!(
        page,
        "<p class=\"caution\" id=\"caution\"><strong>Research use only.</strong> {}</p>",
        escape(CAUTION)
    );
    page.push_str("</section>\n");

    let (figures, mut notes) = build_figures(files);
    page.push_str("<section id=\"figures\">\n<h2>Figures</h2>\n");
    for (index, figure) in figures.iter().enumerate() {
        let _ = write!(
            page,
            "<figure id=\"{}\" class=\"figure\">\n{}\n<figcaption><strong>Figure {}. {}.</strong> {}</figcaption>\n</figure>\n",
            escape(&figure.id),
            figure.svg,
            index + 1,
            escape(&figure.title),
            escape(&figure.caption)
        );
    }
    page.push_str("</section>\n");

    page.push_str("<section id=\"tables\">\n<h2>Tables</h2>\n");
    page.push_str(&communities_table(files));
    page.push_str(&comparisons_table(files));
    let (top, top_notes) = top_features_table(files);
    page.push_str(&top);
    notes.extend(top_notes);
    page.push_str(&optional_tables(files));
    page.push_str(&participants_table(files));
    page.push_str(&parameters_table(files));
    notes.extend(files.notes.iter().cloned());
    if !notes.is_empty() {
        page.push_str("<h3>Notes on this report</h3>\n<ul class=\"notes\">\n");
        for note in &notes {
            let _ = writeln!(page, "<li>{}</li>", escape(note));
        }
        page.push_str("</ul>\n");
    }
    page.push_str("</section>\n</main>\n</body>\n</html>\n");
    page
}

/// The run folder's name: the final name the run was given (`summary.json` `output`), else the
/// folder read.
fn folder_name(files: &RunFiles) -> String {
    let given = Path::new(&files.summary.output);
    given
        .file_name()
        .or_else(|| files.dir.file_name())
        .map_or_else(|| files.dir.display().to_string(), |name| name.to_string_lossy().into_owned())
}

/// The input kind in words.
fn kind_words(kind: &str) -> &'static str {
    match kind {
        "seed_maps" => "seed-based connectivity maps",
        "region_matrices" => "region-by-region connectivity matrices",
        _ => "a precomputed participant similarity matrix",
    }
}

/// The run summary in words (plain text; escaped by the caller).
pub fn summary_paragraphs(files: &RunFiles) -> Vec<String> {
    let summary = &files.summary;
    let mut paragraphs = Vec::new();
    let groups: Vec<String> =
        summary.group_counts.iter().map(|(level, count)| format!("{count} {level}")).collect();
    paragraphs.push(format!(
        "Cohort: {} participants ({}; group column '{}'), {}: {}.",
        summary.participant_count,
        groups.join(", "),
        summary.group_column,
        kind_words(&summary.input_kind),
        summary.feature_description
    ));
    if let Some((provenance, _)) = &files.provenance {
        let inputs = provenance.get("inputs").and_then(Value::as_array).cloned().unwrap_or_default();
        let table = inputs.first().and_then(|input| input.get("path")).and_then(Value::as_str).unwrap_or("");
        let per_participant = inputs
            .iter()
            .filter(|input| {
                input.get("participant_id").and_then(Value::as_str).is_some_and(|id| !id.is_empty())
            })
            .count();
        let parameter = |key: &str| {
            provenance.get("parameters").and_then(|p| p.get(key)).and_then(Value::as_str).map(str::to_string)
        };
        let mut parts = vec![format!("participants table {table}")];
        if per_participant > 0 {
            parts.push(format!("{per_participant} per-participant input files"));
        }
        let named: Vec<String> =
            ["similarity", "mask", "atlas"].iter().filter_map(|key| parameter(key)).collect();
        let stacked = inputs.len().saturating_sub(per_participant + 1 + named.len());
        if stacked > 0 {
            parts.push(format!("{stacked} stacked input array(s)"));
        }
        for (key, words) in
            [("similarity", "precomputed similarity"), ("mask", "mask"), ("atlas", "atlas table")]
        {
            if let Some(path) = parameter(key) {
                parts.push(format!("{words} {path}"));
            }
        }
        paragraphs.push(format!(
            "Inputs: {}; the SHA-256 of every input is listed under Parameters and provenance.",
            parts.join("; ")
        ));
    }
    let sizes: Vec<String> = summary
        .communities
        .iter()
        .filter(|c| c.community > 0)
        .map(|c| format!("{} (n={})", c.community, c.size))
        .collect();
    let unassigned = summary.communities.iter().find(|c| c.community == 0).map_or(0, |c| c.size);
    let consensus = format!(
        "consensus of {} of {} {} graphs",
        summary.densities_in_consensus.len(),
        summary.sweep_parameters.len(),
        summary.graph_rule
    );
    let quality = format!(
        "consensus modularity {}, median consistency {}",
        summary.consensus_modularity.map_or("n/a".into(), |m| format!("{m:.3}")),
        summary.median_consistency.map_or("n/a".into(), |m| format!("{m:.2}"))
    );
    if summary.community_count >= 2 {
        paragraphs.push(format!(
            "Subgroups: {} communities found by {} ({consensus}): {}{}; {quality}.",
            summary.community_count,
            summary.method,
            sizes.join(", "),
            if unassigned > 0 { format!("; {unassigned} participant(s) unassigned") } else { String::new() }
        ));
    } else {
        paragraphs.push(format!(
            "Subgroups: none; {} found a single community ({consensus}){}; {quality}.",
            summary.method,
            if unassigned > 0 { format!("; {unassigned} participant(s) unassigned") } else { String::new() }
        ));
    }
    if let Some(test) = &files.optional.null_test {
        let verdict = match test.supported {
            Some(true) => ": the subgroups are supported by the null test",
            Some(false) => {
                ": the subgroups are not supported by the null test (no evidence of structure beyond chance)"
            }
            None => "",
        };
        paragraphs.push(match &test.sentence {
            Some(sentence) => sentence.clone(),
            None => format!(
                "Null test{}: observed {}{}{verdict}.",
                test.statistic.as_ref().map_or(String::new(), |s| format!(" ({s})")),
                format_tick(test.observed),
                test.p_value.map_or(String::new(), |p| format!(", p = {}", format_number(p)))
            ),
        });
    }
    if let Some(stability) = &files.optional.stability {
        let details: Vec<String> =
            stability.other.iter().map(|(key, value)| format!("{key} {value}")).collect();
        let per_community: Vec<String> = stability
            .communities
            .iter()
            .map(|(community, value)| format!("{community}: {value:.2}"))
            .collect();
        paragraphs.push(format!(
            "Stability: median adjusted Rand index {} between resampled and full partitions{}{}.",
            stability.median_ari.map_or("n/a".into(), |ari| format!("{ari:.2}")),
            if details.is_empty() { String::new() } else { format!(" ({})", details.join(", ")) },
            if per_community.is_empty() {
                String::new()
            } else {
                format!("; community stability (mean best-match Jaccard) {}", per_community.join(", "))
            }
        ));
    }
    let (a, b) = (
        summary.contrast.first().cloned().unwrap_or_default(),
        summary.contrast.get(1).cloned().unwrap_or_default(),
    );
    let alpha = summary.alpha.map_or("alpha".into(), format_number);
    let mut written: Vec<_> = summary.comparisons.iter().filter(|c| c.written).collect();
    written.sort_by_key(|comparison| std::cmp::Reverse(comparison.significant_features));
    if written.is_empty() {
        let reason = summary.comparisons.iter().find_map(|c| c.reason.clone()).unwrap_or_default();
        paragraphs.push(format!("Differences: no {a} vs {b} contrast was computed ({reason})."));
    } else {
        let parts: Vec<String> = written
            .iter()
            .map(|c| {
                let scope = if c.scope == "all" {
                    "whole cohort".to_string()
                } else {
                    format!("community {}", c.scope)
                };
                format!(
                    "{scope} ({} {a} vs {} {b}): {} feature(s) with q < {alpha}, peak t = {} at {}",
                    c.count_a,
                    c.count_b,
                    c.significant_features,
                    c.peak_t.map_or("n/a".into(), |t| format!("{t:.2}")),
                    c.peak
                )
            })
            .collect();
        paragraphs.push(format!(
            "Differences, {a} minus {b} (Welch t, Benjamini-Hochberg q): {}.",
            parts.join("; ")
        ));
    }
    paragraphs
}

/// Every figure the run's files allow, and notes on those that could not be drawn.
fn build_figures(files: &RunFiles) -> (Vec<Figure>, Vec<String>) {
    let mut figures = Vec::new();
    let mut notes = Vec::new();
    let membership = files.membership();
    let consistency = files.consistency();
    let order = community_order(&membership, &consistency);
    let summary = &files.summary;
    if let Some(similarity) = &files.similarity {
        let off_diagonal = off_diagonal(similarity);
        let range =
            (quantile(off_diagonal.iter().copied(), 0.02), quantile(off_diagonal.iter().copied(), 0.98));
        let range = if range.0 < range.1 { range } else { (-1.0, 1.0) };
        figures.push(figure(
            "figure-similarity",
            "Participant similarity",
            format!(
                "Pearson similarity between participants' feature vectors, rows and columns ordered by community (strips and numbers on the left; unassigned participants last), black squares marking the communities, within a community by decreasing consistency. Colours span the 2nd to 98th percentile of the off-diagonal values ({} to {}); the diagonal is blank.",
                format_tick(range.0),
                format_tick(range.1)
            ),
            participant_matrix(similarity, &membership, &order, ColourMap::Viridis, range, "r", "participant similarity matrix"),
        ));
    }
    if !summary.communities.is_empty() {
        let levels: Vec<String> = summary.group_counts.iter().map(|(level, _)| level.clone()).collect();
        figures.push(figure(
            "figure-composition",
            "Community sizes and composition",
            format!(
                "Participants per community, split by the levels of the group column '{}' (numbers inside the bars are counts). Community 0 (unassigned) holds participants in communities smaller than the minimum size.",
                summary.group_column
            ),
            charts::composition(&summary.communities, &levels, "community sizes and composition"),
        ));
    }
    if let Some(sweep) = &files.sweep {
        match sweep_figure(sweep, &summary.method) {
            Some(figure) => figures.push(figure),
            None => {
                notes.push("sweep.tsv has no parameter or communities column; sweep figure left out".into())
            }
        }
    }
    if let Some(coassignment) = &files.coassignment {
        figures.push(figure(
            "figure-coassignment",
            "Consensus co-assignment",
            "Weighted fraction of the sweep's partitions that place two participants in the same community (0 to 1), in the same order as the similarity matrix; solid blocks on the diagonal mean communities that every graph agrees on.".into(),
            participant_matrix(coassignment, &membership, &order, ColourMap::Viridis, (0.0, 1.0), "fraction", "consensus co-assignment matrix"),
        ));
    }
    // Figures of the input kind: profiles come here, the maps and matrices last.
    let (mut kind_figures, kind_notes) = match summary.input_kind.as_str() {
        "region_matrices" => matrix_figures(files),
        "seed_maps" => mosaic_figures(files),
        _ => (Vec::new(), Vec::new()),
    };
    notes.extend(kind_notes);
    if let Some(position) = kind_figures.iter().position(|figure| figure.id == "figure-profiles") {
        figures.push(kind_figures.remove(position));
    }
    if let Some(figure) = covariate_figure(files, &membership) {
        figures.push(figure);
    }
    if let Some(table) = &files.optional.contrast_correlations {
        let (level_a, level_b) = contrast_levels(files);
        match crate::report::run_files::correlation_matrix(table) {
            Some((scopes, values)) => figures.push(figure(
                "figure-contrast-correlations",
                "How much the difference changes between scopes",
                format!(
                    "Pearson correlation between the {level_a} - {level_b} difference maps of every pair of scopes (contrast_correlations.tsv): 'all' is the whole cohort, numbers are communities. Red cells: two scopes share the direction of the difference over the features; blue: they oppose; white: unrelated. Colours run from -1 to 1; the value is printed in each cell, n/a where a pair was not computed.",
                ),
                charts::correlation_heatmap(&scopes, &values, "correlations between the scopes' difference maps"),
            )),
            None => notes.push(
                "contrast_correlations.tsv has no community_a, community_b and correlation columns or no row; correlation figure left out".into(),
            ),
        }
    }
    if let Some(test) = &files.optional.null_test {
        figures.push(figure(
            "figure-null",
            "Null distribution",
            format!(
                "{} of the null model ({}), with the observed value as the red line{}.",
                if test.values.len() >= 2 {
                    "Distribution of the test statistic over the null draws"
                } else {
                    "Quantiles of the test statistic (cumulative probability against value)"
                },
                test.statistic.clone().unwrap_or_else(|| "test statistic".into()),
                test.p_value.map_or(String::new(), |p| format!("; p = {}", format_number(p)))
            ),
            charts::null_distribution(test, "null distribution with the observed value"),
        ));
    }
    let resamples = files.optional.subsamples_table.as_ref().or(files.optional.stability_table.as_ref());
    if let Some(table) = resamples {
        if let Some(values) = numeric_column(table, &["ari", "adjusted_rand_index"]) {
            let median = files
                .optional
                .stability
                .as_ref()
                .and_then(|s| s.median_ari)
                .unwrap_or_else(|| quantile(values.iter().copied(), 0.5));
            figures.push(figure(
                "figure-stability",
                "Stability under resampling",
                format!("Adjusted Rand index between each subsample's partition and the full partition on the same participants (subsamples.tsv); the red line marks the median ({median:.2})."),
                charts::histogram(&values, "adjusted Rand index", Some((median, &format!("median {median:.2}"))), "stability histogram"),
            ));
        }
    }
    figures.extend(kind_figures);
    (figures, notes)
}

/// Numeric columns of the participants table by community: every column but the id, the
/// group column, `community` and `consistency` whose present values all parse as numbers, with
/// more than [`MIN_COVARIATE_LEVELS`] distinct values (fewer is a coding of categories, such as
/// site), at most [`MAX_COVARIATE_PANELS`] of them in table order.
fn covariate_figure(files: &RunFiles, membership: &[usize]) -> Option<Figure> {
    let table = &files.participants;
    let mut communities: Vec<usize> = membership.iter().copied().filter(|&c| c > 0).collect();
    communities.sort_unstable();
    communities.dedup();
    if membership.contains(&0) {
        communities.push(0);
    }
    let mut panels = Vec::new();
    for (index, column) in table.columns().iter().enumerate().skip(1) {
        if [files.summary.group_column.as_str(), "community", "consistency"].contains(&column.as_str()) {
            continue;
        }
        let cells: Vec<&str> = table.rows().iter().map(|row| row[index].trim()).collect();
        let present: Vec<&str> =
            cells.iter().copied().filter(|cell| !cell.is_empty() && *cell != "n/a").collect();
        let parsed: Vec<f64> =
            present.iter().filter_map(|cell| cell.parse::<f64>().ok()).filter(|v| v.is_finite()).collect();
        if present.is_empty() || parsed.len() != present.len() {
            continue;
        }
        let mut distinct = parsed.clone();
        distinct.sort_by(f64::total_cmp);
        distinct.dedup();
        if distinct.len() <= MIN_COVARIATE_LEVELS {
            continue;
        }
        let values: Vec<f64> = cells.iter().map(|cell| cell.parse().unwrap_or(f64::NAN)).collect();
        let groups = communities
            .iter()
            .map(|&community| {
                let within =
                    values.iter().zip(membership).filter(|(_, &m)| m == community).map(|(v, _)| *v).collect();
                (community, within)
            })
            .collect();
        panels.push((column.clone(), groups));
        if panels.len() == MAX_COVARIATE_PANELS {
            break;
        }
    }
    if panels.is_empty() {
        return None;
    }
    Some(figure(
        "figure-covariates",
        "Covariates by community",
        "Numeric columns of the participants table in each community (community 0: unassigned): boxes span the quartiles with the median as a thick line, whiskers reach the smallest and largest values, dots are participants; missing values are left out. Descriptive only: the covariate tests, when run, are in their own table.".into(),
        charts::covariate_boxes(&panels, "covariates by community"),
    ))
}

fn off_diagonal(matrix: &Array2<f32>) -> Vec<f64> {
    let mut values = Vec::with_capacity(matrix.len());
    for ((i, j), value) in matrix.indexed_iter() {
        if i != j {
            values.push(f64::from(*value));
        }
    }
    values
}

/// The values of the first of `names` that is a column of `table`, parsed (n/a = NaN).
fn numeric_column(table: &crate::read::ParticipantsTable, names: &[&str]) -> Option<Vec<f64>> {
    let column = names.iter().find_map(|name| table.column(name))?;
    Some(column.iter().map(|value| value.trim().parse().unwrap_or(f64::NAN)).collect())
}

fn sweep_figure(sweep: &crate::read::ParticipantsTable, method: &str) -> Option<Figure> {
    let parameters = numeric_column(sweep, &["parameter", "density"])?;
    let communities = numeric_column(sweep, &["communities"])?;
    let quality = numeric_column(sweep, &["quality"]).unwrap_or_else(|| vec![f64::NAN; parameters.len()]);
    let included: Vec<bool> = numeric_column(sweep, &["consensus_weight"])
        .map(|weights| weights.iter().map(|w| *w > 0.0).collect())
        .unwrap_or_else(|| vec![true; parameters.len()]);
    let rule = sweep
        .column("graph")
        .and_then(|column| column.first().map(|r| r.to_string()))
        .unwrap_or_else(|| "density".into());
    let x_title = match rule.as_str() {
        "knn" | "mutual_knn" => "neighbours per participant (k)",
        "absolute" => "similarity threshold",
        _ => "graph density",
    };
    let quality_title = match method {
        "infomap" => "codelength (bits)",
        "leiden-cpm" => "CPM quality",
        _ => "modularity",
    };
    let panels = [
        SweepPanel { title: "communities", values: &communities, include_zero: true },
        SweepPanel { title: quality_title, values: &quality, include_zero: false },
    ];
    Some(figure(
        "figure-sweep",
        "Graph sweep",
        format!(
            "Communities found (left) and the {method} objective of the best trial (right, {quality_title}) for each graph of the sweep ({rule} rule); filled points are graphs that entered the consensus."
        ),
        charts::sweep(&parameters, &included, &panels, x_title, "graph sweep: communities and quality per graph"),
    ))
}

/// A square region-by-region map of the run (`.npy`).
fn read_matrix_map(map: &MapFile) -> Result<Array2<f32>, String> {
    let matrix = ndarray_npy::read_npy::<_, Array2<f32>>(&map.path)
        .map_err(|error| format!("{}: cannot read ({error}); left out", map.path.display()))?;
    if matrix.nrows() != matrix.ncols() {
        return Err(format!(
            "{}: {}x{} matrix, expected a square region-by-region matrix; left out",
            map.path.display(),
            matrix.nrows(),
            matrix.ncols()
        ));
    }
    Ok(matrix)
}

/// Communities 1..k present in the summary.
fn community_numbers(files: &RunFiles) -> Vec<usize> {
    files.summary.communities.iter().map(|c| c.community).filter(|&c| c > 0).collect()
}

/// Per-community profiles and contrast t matrices of a region-matrix run.
fn matrix_figures(files: &RunFiles) -> (Vec<Figure>, Vec<String>) {
    let mut figures = Vec::new();
    let mut notes = Vec::new();
    let networks = files.atlas.as_ref().and_then(|atlas| atlas.networks.clone());
    let cohort_mean = files.map("all", "mean", false).map(read_matrix_map);
    let cohort_mean = match cohort_mean {
        Some(Ok(mean)) => Some(mean),
        Some(Err(note)) => {
            notes.push(note);
            None
        }
        None => None,
    };
    if let Some(cohort) = &cohort_mean {
        let mut differences = Vec::new();
        for community in community_numbers(files) {
            match files.map(&community.to_string(), "mean", false).map(read_matrix_map) {
                Some(Ok(mean)) if mean.dim() == cohort.dim() => differences.push((community, &mean - cohort)),
                Some(Err(note)) => notes.push(note),
                _ => {}
            }
        }
        if !differences.is_empty() {
            let regions = cohort.nrows();
            match networks.as_deref().filter(|n| n.len() == regions) {
                Some(networks) => {
                    let (order, runs) = network_order(networks);
                    let names: Vec<String> = runs.iter().map(|(name, ..)| name.clone()).collect();
                    let mut network_of = vec![0usize; regions];
                    for (index, (_, start, length)) in runs.iter().enumerate() {
                        for &region in &order[*start..start + length] {
                            network_of[region] = index;
                        }
                    }
                    let groups = names.len();
                    let profiles: Vec<(usize, Vec<f64>)> = differences
                        .iter()
                        .map(|(community, difference)| {
                            let mut sums = vec![0.0f64; groups * groups];
                            let mut counts = vec![0usize; groups * groups];
                            for ((i, j), value) in difference.indexed_iter() {
                                if i != j && value.is_finite() {
                                    let cell = network_of[i] * groups + network_of[j];
                                    sums[cell] += f64::from(*value);
                                    counts[cell] += 1;
                                }
                            }
                            let means = sums
                                .iter()
                                .zip(&counts)
                                .map(|(s, &n)| if n > 0 { s / n as f64 } else { f64::NAN })
                                .collect();
                            (*community, means)
                        })
                        .collect();
                    let range =
                        symmetric_range(profiles.iter().flat_map(|(_, v)| v.iter().copied()), 1.0, 0.01);
                    figures.push(figure(
                        "figure-profiles",
                        "Community profiles by network",
                        "For each community, the mean connectivity (Fisher z) of its members minus the cohort mean, averaged over the edges within each network (diagonal cells) and between each pair of networks (off-diagonal cells). Red: stronger connectivity in the community than in the cohort; blue: weaker.".into(),
                        charts::network_profiles(&profiles, &names, range, "Δz", "community profiles by network"),
                    ));
                }
                None => {
                    let profiles: Vec<(usize, Vec<f64>)> = differences
                        .iter()
                        .map(|(community, difference)| {
                            let means = (0..regions)
                                .map(|i| {
                                    let row: Vec<f64> = (0..regions)
                                        .filter(|&j| j != i)
                                        .map(|j| f64::from(difference[[i, j]]))
                                        .filter(|v| v.is_finite())
                                        .collect();
                                    if row.is_empty() {
                                        f64::NAN
                                    } else {
                                        row.iter().sum::<f64>() / row.len() as f64
                                    }
                                })
                                .collect();
                            (*community, means)
                        })
                        .collect();
                    figures.push(figure(
                        "figure-profiles",
                        "Community profiles by region",
                        "For each community, the mean connectivity (Fisher z) of each region with all others among the community's members, minus the cohort mean (the atlas has no network column, or was not given, so regions are shown in atlas order).".into(),
                        charts::region_profiles(&profiles, "Δz from the cohort mean", "community profiles by region"),
                    ));
                }
            }
        }
    }
    let t_maps: Vec<&MapFile> = files
        .maps
        .iter()
        .filter(|m| !m.is_volume && m.suffix == "t" && m.contrast.is_some() && m.group.is_none())
        .collect();
    let mut loaded = Vec::new();
    for map in t_maps {
        match read_matrix_map(map) {
            Ok(values) => loaded.push((map, values)),
            Err(note) => notes.push(note),
        }
    }
    let range =
        symmetric_range(loaded.iter().flat_map(|(_, v)| off_diagonal(v)), COLOUR_QUANTILE, T_COLOUR_FLOOR);
    let (a, b) = contrast_levels(files);
    let loaded = scope_sorted(loaded);
    if !loaded.is_empty() {
        let labelled_all =
            loaded.iter().all(|(_, values)| networks.as_ref().is_some_and(|n| n.len() == values.nrows()));
        let mut grid = Svg::new(0.0, 0.0);
        let (mut width, mut height) = (0.0f64, 0.0f64);
        for (index, (map, values)) in loaded.iter().enumerate() {
            let labelled = networks.as_deref().filter(|n| n.len() == values.nrows());
            let panel = region_matrix(values, labelled, range, "t", CONTRAST_PANEL_SIDE);
            let (x, y) =
                ((index % 2) as f64 * panel.width(), (index / 2) as f64 * (panel.height() + TITLE_ROOM));
            // Two title lines over the matrix (the matrix starts after its label column).
            let matrix_left = x + panel.width() - CONTRAST_PANEL_SIDE - 100.0;
            grid.title((matrix_left, y + 14.0), &scope_words(&map.community), Anchor::Start);
            if let Some(c) = files.summary.comparisons.iter().find(|c| c.scope == map.community) {
                let counts = format!("{} n={}, {} n={}", shorten(&a), c.count_a, shorten(&b), c.count_b);
                grid.text((matrix_left, y + 30.0), &counts, TICK_FONT, Anchor::Start, 0.0);
            }
            width = width.max(x + panel.width());
            height = height.max(y + TITLE_ROOM + panel.height());
            grid.nest(x, y + TITLE_ROOM, panel);
        }
        grid.set_size(width, height);
        figures.push(figure(
            "figure-contrasts",
            "Contrast t matrices",
            format!(
                "Welch t of {a} minus {b} for every pair of regions, within the whole cohort and within each community{}; red: higher in {a}, blue: higher in {b}. Colours saturate at |t| = {} in every panel; uncorrected values (comparisons.tsv and the q maps give the false-discovery control).",
                if labelled_all { ", regions ordered by network with network borders" } else { ", regions in atlas order" },
                format_tick(range.1)
            ),
            grid.finish("contrast t matrices"),
        ));
    }
    (figures, notes)
}

/// Scopes in report order: the whole cohort, then communities by number.
fn scope_sorted<T>(mut items: Vec<(&MapFile, T)>) -> Vec<(&MapFile, T)> {
    items.sort_by_key(|(map, _)| {
        if map.community == "all" {
            0
        } else {
            map.community.parse::<usize>().unwrap_or(usize::MAX - 1) + 1
        }
    });
    items
}

/// A label cut to [`MAX_TITLE_LABEL`] characters with an ellipsis.
fn shorten(label: &str) -> String {
    if label.chars().count() <= MAX_TITLE_LABEL {
        label.to_string()
    } else {
        label.chars().take(MAX_TITLE_LABEL - 1).chain(std::iter::once('…')).collect()
    }
}

fn scope_words(community: &str) -> String {
    if community == "all" {
        "whole cohort".into()
    } else {
        format!("community {community}")
    }
}

/// Letters, digits and dashes only (for element ids made from file names).
fn html_id(text: &str) -> String {
    text.chars().map(|c| if c.is_ascii_alphanumeric() { c } else { '-' }).collect()
}

fn contrast_levels(files: &RunFiles) -> (String, String) {
    let contrast = &files.summary.contrast;
    (
        contrast.first().cloned().unwrap_or_else(|| "A".into()),
        contrast.get(1).cloned().unwrap_or_else(|| "B".into()),
    )
}

/// A NIfTI map of the run.
fn read_volume_map(map: &MapFile) -> Result<crate::read::nifti::Volume, String> {
    crate::read::nifti::read_volume(&map.path, "").map_err(|error| error.to_string())
}

/// Slice mosaics of each scope's mean map and contrast t map of a seed-map run.
fn mosaic_figures(files: &RunFiles) -> (Vec<Figure>, Vec<String>) {
    let mut figures = Vec::new();
    let mut notes = Vec::new();
    let Some(cohort_map) = files.map("all", "mean", false) else { return (figures, notes) };
    let cohort = match read_volume_map(cohort_map) {
        Ok(volume) => volume,
        Err(note) => {
            notes.push(note);
            return (figures, notes);
        }
    };
    // Maps hold values at mask voxels and 0 elsewhere: the mask is where the cohort mean is non-zero.
    let mask: Vec<bool> = cohort.values.iter().map(|v| v.is_finite() && *v != 0.0).collect();
    let grid = Grid { dim: cohort.dim, affine: &cohort.affine, mask: &mask };
    let mut scopes: Vec<String> = vec!["all".into()];
    scopes.extend(community_numbers(files).iter().map(usize::to_string));
    let mut means = Vec::new();
    let mut t_maps = Vec::new();
    for scope in &scopes {
        for (contrast, target) in [(false, &mut means), (true, &mut t_maps)] {
            let suffix = if contrast { "t" } else { "mean" };
            if let Some(map) = files.map(scope, suffix, contrast) {
                match read_volume_map(map) {
                    Ok(volume) if volume.dim == cohort.dim => target.push((scope.clone(), volume.values)),
                    Ok(_) => notes.push(format!(
                        "{}: grid differs from the cohort mean map; left out",
                        map.path.display()
                    )),
                    Err(note) => notes.push(note),
                }
            }
        }
    }
    let in_mask = |values: &[f32]| -> Vec<f64> {
        values.iter().zip(&mask).filter(|(_, m)| **m).map(|(v, _)| f64::from(*v)).collect()
    };
    let mean_range = symmetric_range(means.iter().flat_map(|(_, v)| in_mask(v)), COLOUR_QUANTILE, 0.01);
    let t_range =
        symmetric_range(t_maps.iter().flat_map(|(_, v)| in_mask(v)), COLOUR_QUANTILE, T_COLOUR_FLOOR);
    let (a, b) = contrast_levels(files);
    for scope in &scopes {
        let mean = means.iter().find(|(s, _)| s == scope);
        let t = t_maps.iter().find(|(s, _)| s == scope);
        if mean.is_none() && t.is_none() {
            continue;
        }
        let words = scope_words(scope);
        let width = 62.0 + grid.mosaic_width() + 80.0;
        let mut svg = Svg::new(width, 2000.0);
        let mut y = 0.0;
        if let Some((_, values)) = mean {
            let title = format!("Mean Fisher z, {words}");
            let scale =
                Scale { map: ColourMap::BlueRed, range: mean_range, title: &title, colour_label: "z" };
            y += grid.draw(&mut svg, (0.0, y), values, &scale);
            y += 10.0;
        }
        if let Some((_, values)) = t {
            let title = format!("Welch t, {a} minus {b}, {words}");
            let scale = Scale { map: ColourMap::BlueRed, range: t_range, title: &title, colour_label: "t" };
            y += grid.draw(&mut svg, (0.0, y), values, &scale);
        }
        svg.set_height(y.ceil());
        let markup = svg.finish(&format!("slice mosaics, {words}"));
        figures.push(figure(
            &format!("figure-mosaic-{}", html_id(scope)),
            &format!("Slice mosaics, {words}"),
            format!(
                "Axial, coronal and sagittal slices over the analysis mask (dark outside it), neurological orientation (left on the left), slice positions in mm. Top: mean Fisher z of the {words}, colours saturating at |z| = {}. Bottom: Welch t of {a} minus {b} within the {words} (uncorrected; red higher in {a}), saturating at |t| = {}. Colour scales are shared across subgroups.",
                format_tick(mean_range.1),
                format_tick(t_range.1)
            ),
            markup,
        ));
    }
    (figures, notes)
}

/// An HTML table; every header and cell is escaped; cells that parse as numbers align right.
fn html_table(columns: &[String], rows: &[Vec<String>]) -> String {
    let mut html = String::from("<table>\n<thead><tr>");
    for column in columns {
        let _ = write!(html, "<th>{}</th>", escape(column));
    }
    html.push_str("</tr></thead>\n<tbody>\n");
    for row in rows {
        html.push_str("<tr>");
        for cell in row {
            let class = if cell.parse::<f64>().is_ok() { " class=\"num\"" } else { "" };
            let _ = write!(html, "<td{class}>{}</td>", escape(cell));
        }
        html.push_str("</tr>\n");
    }
    html.push_str("</tbody>\n</table>\n");
    html
}

fn communities_table(files: &RunFiles) -> String {
    let summary = &files.summary;
    let levels: Vec<String> = summary.group_counts.iter().map(|(level, _)| level.clone()).collect();
    let mut columns = vec!["community".to_string(), "size".to_string()];
    columns.extend(levels.iter().map(|level| format!("n {level}")));
    columns.push("median consistency".into());
    let membership = files.membership();
    let consistency = files.consistency();
    let rows: Vec<Vec<String>> = summary
        .communities
        .iter()
        .map(|community| {
            let mut row = vec![
                if community.community == 0 {
                    "0 (unassigned)".to_string()
                } else {
                    community.community.to_string()
                },
                community.size.to_string(),
            ];
            for level in &levels {
                let count = community.group_counts.iter().find(|(l, _)| l == level).map_or(0, |(_, n)| *n);
                row.push(count.to_string());
            }
            let values = membership
                .iter()
                .zip(&consistency)
                .filter(|(m, _)| **m == community.community)
                .map(|(_, c)| *c);
            let median = quantile(values, 0.5);
            row.push(if median.is_finite() { format!("{median:.2}") } else { "n/a".into() });
            row
        })
        .collect();
    format!("<h3 id=\"table-communities\">Communities</h3>\n{}", html_table(&columns, &rows))
}

fn comparisons_table(files: &RunFiles) -> String {
    let summary = &files.summary;
    let (a, b) = contrast_levels(files);
    let alpha = summary.alpha.map_or("alpha".into(), format_number);
    let columns: Vec<String> = vec![
        "scope".into(),
        format!("n {a}"),
        format!("n {b}"),
        "maps written".into(),
        format!("features q < {alpha}"),
        "peak t".into(),
        "peak location".into(),
        "note".into(),
    ];
    let rows: Vec<Vec<String>> = summary
        .comparisons
        .iter()
        .map(|c| {
            vec![
                scope_words(&c.scope),
                c.count_a.to_string(),
                c.count_b.to_string(),
                if c.written { "yes" } else { "no" }.into(),
                if c.written { c.significant_features.to_string() } else { "n/a".into() },
                c.peak_t.map_or("n/a".into(), |t| format!("{t:.2}")),
                if c.peak.is_empty() { "n/a".into() } else { c.peak.clone() },
                c.reason.clone().unwrap_or_default(),
            ]
        })
        .collect();
    format!(
        "<h3 id=\"table-comparisons\">Comparisons ({} minus {}, Welch t)</h3>\n{}",
        escape(&a),
        escape(&b),
        html_table(&columns, &rows)
    )
}

/// The features where each community's mean departs most from the cohort mean.
fn top_features_table(files: &RunFiles) -> (String, Vec<String>) {
    let mut notes = Vec::new();
    let mut rows = Vec::new();
    let communities = community_numbers(files);
    match files.summary.input_kind.as_str() {
        "region_matrices" => {
            let Some(Ok(cohort)) = files.map("all", "mean", false).map(read_matrix_map) else {
                return (String::new(), notes);
            };
            let names = files
                .atlas
                .as_ref()
                .map(|atlas| atlas.names.clone())
                .filter(|names| names.len() == cohort.nrows());
            let networks = files
                .atlas
                .as_ref()
                .and_then(|atlas| atlas.networks.clone())
                .filter(|n| n.len() == cohort.nrows());
            let region = |index: usize| -> String {
                let name = names
                    .as_ref()
                    .map_or_else(|| format!("region {}", index + 1), |names| names[index].clone());
                match &networks {
                    Some(networks) => format!("{name} ({})", networks[index]),
                    None => name,
                }
            };
            for community in communities {
                let mean = match files.map(&community.to_string(), "mean", false).map(read_matrix_map) {
                    Some(Ok(mean)) if mean.dim() == cohort.dim() => mean,
                    Some(Err(note)) => {
                        notes.push(note);
                        continue;
                    }
                    _ => continue,
                };
                let mut edges: Vec<(usize, usize, f64)> = Vec::new();
                for i in 0..cohort.nrows() {
                    for j in i + 1..cohort.ncols() {
                        let difference = f64::from(mean[[i, j]] - cohort[[i, j]]);
                        if difference.is_finite() {
                            edges.push((i, j, difference));
                        }
                    }
                }
                edges.sort_by(|x, y| y.2.abs().total_cmp(&x.2.abs()).then((x.0, x.1).cmp(&(y.0, y.1))));
                for (rank, (i, j, difference)) in edges.into_iter().take(TOP_FEATURES).enumerate() {
                    rows.push(vec![
                        community.to_string(),
                        (rank + 1).to_string(),
                        format!("{} – {}", region(i), region(j)),
                        format!("{:.3}", mean[[i, j]]),
                        format!("{:.3}", cohort[[i, j]]),
                        format!("{difference:+.3}"),
                    ]);
                }
            }
        }
        "seed_maps" => {
            let Some(Ok(cohort)) = files.map("all", "mean", false).map(read_volume_map) else {
                return (String::new(), notes);
            };
            for community in communities {
                let mean = match files.map(&community.to_string(), "mean", false).map(read_volume_map) {
                    Some(Ok(mean)) if mean.dim == cohort.dim => mean,
                    Some(Err(note)) => {
                        notes.push(note);
                        continue;
                    }
                    _ => continue,
                };
                let mut voxels: Vec<(usize, f64)> = cohort
                    .values
                    .iter()
                    .zip(&mean.values)
                    .enumerate()
                    .filter(|(_, (c, _))| c.is_finite() && **c != 0.0)
                    .map(|(index, (c, m))| (index, f64::from(m - c)))
                    .filter(|(_, d)| d.is_finite())
                    .collect();
                voxels.sort_by(|x, y| y.1.abs().total_cmp(&x.1.abs()).then(x.0.cmp(&y.0)));
                let mut peaks: Vec<(usize, [f64; 3], f64)> = Vec::new();
                for (index, difference) in voxels {
                    let mm = voxel_mm(&cohort, index);
                    let far = peaks.iter().all(|(_, other, _)| {
                        (0..3).map(|axis| (mm[axis] - other[axis]).powi(2)).sum::<f64>().sqrt()
                            >= PEAK_SEPARATION_MM
                    });
                    if far {
                        peaks.push((index, mm, difference));
                        if peaks.len() == TOP_FEATURES {
                            break;
                        }
                    }
                }
                for (rank, (index, mm, difference)) in peaks.into_iter().enumerate() {
                    rows.push(vec![
                        community.to_string(),
                        (rank + 1).to_string(),
                        format!("({:.0}, {:.0}, {:.0}) mm", mm[0], mm[1], mm[2]),
                        format!("{:.3}", mean.values[index]),
                        format!("{:.3}", cohort.values[index]),
                        format!("{difference:+.3}"),
                    ]);
                }
            }
        }
        _ => return (String::new(), notes),
    }
    if rows.is_empty() {
        return (String::new(), notes);
    }
    let columns: Vec<String> =
        ["community", "rank", "feature", "community mean z", "cohort mean z", "difference"]
            .iter()
            .map(|c| c.to_string())
            .collect();
    let separation = if files.summary.input_kind == "seed_maps" {
        format!(" Voxel peaks are at least {PEAK_SEPARATION_MM} mm apart.")
    } else {
        String::new()
    };
    (
        format!(
            "<h3 id=\"table-top-features\">Top features per community</h3>\n<p>The {TOP_FEATURES} features where each community's mean Fisher z departs most from the cohort mean (largest absolute difference).{separation}</p>\n{}",
            html_table(&columns, &rows)
        ),
        notes,
    )
}

fn voxel_mm(volume: &crate::read::nifti::Volume, index: usize) -> [f64; 3] {
    let [nx, ny, _] = volume.dim;
    let ijk = [index % nx, (index / nx) % ny, index / (nx * ny)];
    let a = &volume.affine;
    let mut mm = [0.0; 3];
    for (row, value) in mm.iter_mut().enumerate() {
        *value =
            a[row][0] * ijk[0] as f64 + a[row][1] * ijk[1] as f64 + a[row][2] * ijk[2] as f64 + a[row][3];
    }
    mm
}

/// A table of a run file, folded away when long.
fn file_table(title: &str, id: &str, file: &str, table: &crate::read::ParticipantsTable) -> String {
    let body = html_table(table.columns(), table.rows());
    let folded = if table.row_count() > 25 {
        format!("<details><summary>{} rows</summary>\n{body}</details>\n", table.row_count())
    } else {
        body
    };
    format!(
        "<h3 id=\"{id}\">{}</h3>\n<p>From <span class=\"mono\">{}</span>.</p>\n{folded}",
        escape(title),
        escape(file)
    )
}

/// Tables of later stages, each when its file exists.
fn optional_tables(files: &RunFiles) -> String {
    let optional = &files.optional;
    let mut html = String::new();
    for (table, title, id, file) in [
        (&optional.composition, "Composition test", "table-composition", "composition.tsv"),
        (&optional.covariates, "Covariate tests", "table-covariates", "covariates.tsv"),
        (&optional.outcome, "Outcome association", "table-outcome", "outcome.tsv"),
        (&optional.stability_table, "Stability", "table-stability", "stability.tsv"),
    ] {
        if let Some(table) = table {
            html.push_str(&file_table(title, id, file, table));
        }
    }
    html
}

/// Who is in which community (folded).
fn participants_table(files: &RunFiles) -> String {
    let table = &files.participants;
    let group_column = &files.summary.group_column;
    let mut wanted: Vec<&str> = vec![table.columns().first().map_or("participant_id", String::as_str)];
    for column in [group_column.as_str(), "community", "consistency"] {
        if table.column(column).is_some() && !wanted.contains(&column) {
            wanted.push(column);
        }
    }
    let indices: Vec<usize> =
        wanted.iter().filter_map(|name| table.columns().iter().position(|c| c == name)).collect();
    let membership = files.membership();
    let consistency = files.consistency();
    let order = community_order(&membership, &consistency);
    let columns: Vec<String> = indices.iter().map(|&i| table.columns()[i].clone()).collect();
    let rows: Vec<Vec<String>> =
        order.iter().map(|&row| indices.iter().map(|&i| table.rows()[row][i].clone()).collect()).collect();
    format!(
        "<h3 id=\"table-participants\">Participants by community</h3>\n<details><summary>{} participants (from participants.tsv; all columns are in that file)</summary>\n{}</details>\n",
        table.row_count(),
        html_table(&columns, &rows)
    )
}

/// A JSON value in one line for the parameters table.
fn compact(value: &Value) -> String {
    match value {
        Value::String(text) => text.clone(),
        Value::Null => "none".into(),
        other => other.to_string(),
    }
}

fn parameters_table(files: &RunFiles) -> String {
    let Some((provenance, digest)) = &files.provenance else {
        return "<h3 id=\"table-parameters\">Parameters</h3>\n<p>provenance.json is missing from the run folder.</p>\n".into();
    };
    let mut rows: Vec<Vec<String>> = vec![vec!["provenance.json SHA-256".into(), digest.clone()]];
    for key in ["strata_version", "started_utc", "threads", "seed"] {
        if let Some(value) = provenance.get(key) {
            rows.push(vec![key.to_string(), compact(value)]);
        }
    }
    if let Some(command) = provenance.get("command").and_then(Value::as_array) {
        rows.push(vec!["command".into(), command.iter().map(compact).collect::<Vec<_>>().join(" ")]);
    }
    if let Some(Value::Object(parameters)) = provenance.get("parameters") {
        for (key, value) in parameters {
            rows.push(vec![key.clone(), compact(value)]);
        }
    }
    let mut html = format!(
        "<h3 id=\"table-parameters\">Parameters and provenance</h3>\n<p>Every option of the run after validation (provenance.json); the digest identifies the provenance record, which holds the SHA-256 of every input file.</p>\n{}",
        html_table(&["parameter".to_string(), "value".to_string()], &rows)
    );
    if let Some(inputs) = provenance.get("inputs").and_then(Value::as_array) {
        let rows: Vec<Vec<String>> = inputs
            .iter()
            .map(|input| {
                ["participant_id", "path", "bytes", "sha256"]
                    .iter()
                    .map(|key| input.get(*key).map_or(String::new(), compact))
                    .collect()
            })
            .collect();
        let columns: Vec<String> =
            ["participant_id", "path", "bytes", "sha256"].iter().map(|c| c.to_string()).collect();
        let _ = write!(
            html,
            "<details><summary>{} input files with SHA-256 digests</summary>\n{}</details>\n",
            rows.len(),
            html_table(&columns, &rows)
        );
    }
    html
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_cells_are_escaped() {
        let html = html_table(&["<b>h</b>".into()], &[vec!["<script>alert(1)</script>".into()]]);
        assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
        assert!(!html.contains("<script>") && !html.contains("<b>"));
    }

    #[test]
    fn long_labels_are_cut_with_an_ellipsis() {
        assert_eq!(shorten("control"), "control");
        let cut = shorten(&"x".repeat(40));
        assert_eq!(cut.chars().count(), MAX_TITLE_LABEL);
        assert!(cut.ends_with('…'));
    }

    #[test]
    fn ids_keep_letters_and_digits() {
        assert_eq!(html_id("all"), "all");
        assert_eq!(html_id("a\"b<"), "a-b-");
    }
}
