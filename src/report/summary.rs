//! The run summary: the one source of the printed text, `summary.json` and the report.

use std::fmt::{self, Write as _};
use std::path::PathBuf;

use serde::{Serialize, Serializer};

use crate::error::list_ids;

/// Every warning strata gives, with its likely cause and what to try.
#[derive(Debug, Clone, PartialEq)]
pub enum Warning {
    /// Participants had no edge in many graphs of the sweep (`densities` counts those graphs,
    /// whatever the rule).
    IsolatedParticipants {
        /// Densities that entered the consensus.
        densities: usize,
        /// Who.
        participants: Vec<String>,
    },
    /// Participants fell in communities below the minimum size and are unassigned (community 0).
    Unassigned {
        /// The minimum size in force.
        min_size: usize,
        /// Who.
        participants: Vec<String>,
    },
    /// Participants have no group label (`n/a` or empty) and are left out of the contrasts.
    MissingGroupLabel {
        /// The group column.
        column: String,
        /// Who.
        participants: Vec<String>,
    },
    /// A contrast could not be computed within a scope.
    ContrastSkipped {
        /// "whole cohort" or "community K".
        scope: String,
        /// Why (which level has fewer than two participants).
        reason: String,
    },
    /// The consensus found a single community.
    SingleCommunity,
    /// The community structure is not stronger than one homogeneous population gives.
    NotAboveNull {
        /// The null test's p-value of the sweep structure.
        p_value: f64,
        /// The level in force.
        alpha: f64,
    },
    /// Communities whose members do not stay together when participants are resampled.
    UnstableCommunities {
        /// (community, mean best-match Jaccard) of each unstable community.
        communities: Vec<(usize, f64)>,
    },
    /// A validation check could not run on this cohort and was skipped.
    ValidationSkipped {
        /// `null test` or `stability check`.
        check: String,
        /// Why.
        reason: String,
    },
    /// The null test has too few draws to reach the significance level.
    TooFewNullDraws {
        /// Draws.
        draws: usize,
        /// The level in force.
        alpha: f64,
    },
    /// Subsample partitions agree poorly with the full partition.
    LowSubsampleAgreement {
        /// Median adjusted Rand index over the subsamples.
        median_ari: f64,
    },
    /// Participants left out of a measures run because a measure is missing (`n/a` or empty).
    MissingMeasures {
        /// (participant, column) of every missing value.
        entries: Vec<(String, String)>,
    },
    /// Participants without a value in a `--covariates` column are left out of the comparisons.
    MissingCovariate {
        /// The covariate columns.
        columns: Vec<String>,
        /// Who.
        participants: Vec<String>,
    },
    /// A participants-table column differs across communities (`covariates.tsv`).
    CovariateImbalance {
        /// The column.
        column: String,
        /// What differs, in words, with the test's p and effect size.
        description: String,
    },
}

/// A community whose mean best-match Jaccard under resampling falls below this is flagged as
/// unstable. Hennig (2007) reads values at or below 0.5 as a dissolved cluster and advises
/// against trusting clusters below about 0.6 (thresholds from memory of that paper).
pub const UNSTABLE_JACCARD: f64 = 0.6;

/// A median subsample ARI below this is flagged: ARI 0.65 is the lower end of what is commonly
/// read as good agreement (common practice, no single published threshold).
pub const LOW_MEDIAN_ARI: f64 = 0.65;

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Warning::IsolatedParticipants { densities, participants } => write!(
                f,
                "{} participant(s) had no edge in at least half of the {densities} graphs of the consensus: {}; \
                 their similarity to everyone else is low (check their inputs for artefacts), or the sweep is too sparse for this cohort; \
                 participants alone in most graphs end as community 0 (unassigned)",
                participants.len(),
                list_ids(participants)
            ),
            Warning::Unassigned { min_size, participants } => write!(
                f,
                "{} participant(s) are in communities smaller than {min_size} and are reported as community 0 (unassigned): {}; \
                 they may be outliers, or lower --min-community-size to keep small communities",
                participants.len(),
                list_ids(participants)
            ),
            Warning::MissingGroupLabel { column, participants } => write!(
                f,
                "{} participant(s) have no value in column '{column}' and are left out of the contrasts \
                 (they still take part in the communities): {}",
                participants.len(),
                list_ids(participants)
            ),
            Warning::ContrastSkipped { scope, reason } => {
                write!(f, "{scope}: no contrast maps written: {reason}")
            }
            Warning::MissingMeasures { entries } => {
                let mut participants: Vec<&str> = entries.iter().map(|(p, _)| p.as_str()).collect();
                participants.dedup();
                let shown: Vec<String> =
                    entries.iter().take(20).map(|(p, c)| format!("{p} ({c})")).collect();
                write!(
                    f,
                    "{} participant(s) left out of the analysis for missing measure values: {}{}; \
                     fill the values in or leave the measure out of --measures",
                    participants.len(),
                    shown.join(", "),
                    if entries.len() > 20 { format!(" and {} more", entries.len() - 20) } else { String::new() }
                )
            }
            Warning::SingleCommunity => write!(
                f,
                "the consensus found one community: no graph of the sweep showed subgroups that held together; \
                 the cohort may be homogeneous (no evidence of subgroups at these settings), or try a sparser --densities range, a kNN sweep (--graph knn) or --method leiden"
            ),
            Warning::NotAboveNull { p_value, alpha } => write!(
                f,
                "the community structure is not stronger than in cohorts drawn from one homogeneous population (null test p = {p_value:.3}, above {alpha}): \
                 read the communities as a partition of a continuum, not as distinct subgroups; a larger cohort or a different feature set may show structure that this one does not"
            ),
            Warning::UnstableCommunities { communities } => {
                let listed: Vec<String> = communities
                    .iter()
                    .map(|(community, jaccard)| format!("community {community} ({jaccard:.2})"))
                    .collect();
                write!(
                    f,
                    "{} do not hold together when participants are resampled (mean best-match Jaccard below {UNSTABLE_JACCARD}): \
                     their membership depends on who is in the cohort; do not interpret them on their own, and see stability.tsv",
                    listed.join(", ")
                )
            }
            Warning::ValidationSkipped { check, reason } => write!(
                f,
                "the {check} was skipped: {reason}; the communities are reported without it, so read them with extra caution"
            ),
            Warning::TooFewNullDraws { draws, alpha } => write!(
                f,
                "--null-draws {draws} gives a smallest attainable p of {:.3}, above --alpha {alpha}: the null test cannot support subgroups at this level; give --null-draws {} or more",
                1.0 / (*draws as f64 + 1.0),
                (1.0 / alpha).ceil() as usize - 1
            ),
            Warning::LowSubsampleAgreement { median_ari } => write!(
                f,
                "subsamples of the cohort give partitions that agree poorly with the full one (median adjusted Rand index {median_ari:.2}, below {LOW_MEDIAN_ARI}): \
                 the number or the borders of the communities are not stable"

            ),
            Warning::MissingCovariate { columns, participants } => write!(
                f,
                "{} participant(s) have no value (n/a) in a covariate column ({}) and are left out of the comparison models \
                 (they still take part in the communities): {}",
                participants.len(),
                columns.join(", "),
                list_ids(participants)
            ),
            Warning::CovariateImbalance { column, description } => write!(
                f,
                "{description}: the subgroups may partly reflect {column} rather than connectivity alone; \
                 check its values (covariates.tsv) before reading the subgroup maps as connectivity differences"
            ),
        }
    }
}

impl Serialize for Warning {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(&self.to_string())
    }
}

/// One community of the consensus partition.
#[derive(Debug, Clone, Serialize)]
pub struct CommunitySummary {
    /// 1..=k, or 0 for the unassigned participants.
    pub community: usize,
    /// Participants in it.
    pub size: usize,
    /// Participants per group level, in level order.
    pub group_counts: Vec<(String, usize)>,
}

/// One contrast scope (the whole cohort or one community).
#[derive(Debug, Clone, Serialize)]
pub struct ComparisonSummary {
    /// `all` or the community number.
    pub scope: String,
    /// Participants of level A.
    pub count_a: usize,
    /// Participants of level B.
    pub count_b: usize,
    /// Whether maps were written.
    pub written: bool,
    /// Why not, when not.
    pub reason: Option<String>,
    /// Features with BH q below alpha.
    pub significant_features: usize,
    /// Largest |t|.
    pub max_abs_t: f64,
    /// Where the largest |t| is (mm coordinates or region pair).
    pub peak: String,
    /// The t at the peak.
    pub peak_t: f64,
}

/// Measures of the participant graph with the strongest structure (`summary.json` key
/// `graph_measures`; per-participant measures are in graph_measures.tsv).
#[derive(Debug, Clone, Serialize)]
pub struct GraphMeasuresSummary {
    /// The graph's rule (`density`, `knn`, `mutual_knn`, `absolute`).
    pub graph_rule: String,
    /// The rule's parameter.
    pub parameter: f64,
    /// Density reached.
    pub density: f64,
    /// Undirected edges.
    pub edges: usize,
    /// Mean binary local clustering (zeros counted).
    pub mean_clustering: f64,
    /// Mean weighted local clustering (Onnela et al. 2005).
    pub mean_clustering_weighted: f64,
    /// Transitivity: 3 x triangles / connected triples.
    pub transitivity: f64,
    /// Characteristic path length in hops over connected pairs.
    pub path_length: f64,
    /// Characteristic path length with edge length 1 / w.
    pub path_length_weighted: f64,
    /// Global efficiency in hops.
    pub efficiency: f64,
    /// Global efficiency with edge length 1 / w.
    pub efficiency_weighted: f64,
    /// Small-world index sigma (Humphries & Gurney 2008); null when not computed.
    pub small_world_sigma: Option<f64>,
    /// Mean transitivity of the degree-matched random graphs.
    pub random_transitivity: Option<f64>,
    /// Mean path length of the degree-matched random graphs.
    pub random_path_length: Option<f64>,
    /// Number of random graphs (0 = small-world index not computed).
    pub random_graphs: usize,
}

/// The null test in `summary.json` (key `null_test`).
#[derive(Debug, Clone, Serialize)]
pub struct NullTestSummary {
    /// Null cohorts drawn.
    pub draws: usize,
    /// Significance level of the verdict.
    pub alpha: f64,
    /// The statistic: `relative_codelength_savings` (Infomap) or `modularity`, averaged over the
    /// graphs of the sweep.
    pub statistic: String,
    /// Its observed value.
    pub observed: f64,
    /// Its Monte Carlo p-value.
    pub p_value: f64,
    /// Null quantiles keyed by level (`"0.05"`, `"0.25"`, `"0.5"`, `"0.75"`, `"0.95"`).
    pub null_quantiles: std::collections::BTreeMap<String, f64>,
    /// Mean of the null values.
    pub null_mean: f64,
    /// The statistic of every null cohort, in draw order (also in null_distribution.tsv).
    pub null_values: Vec<f64>,
    /// Observed consensus strength (the method's structure of the consensus partition).
    pub consensus_observed: f64,
    /// Its Monte Carlo p-value.
    pub consensus_p_value: f64,
    /// Null quantiles of the consensus strength.
    pub consensus_null_quantiles: std::collections::BTreeMap<String, f64>,
    /// Share of null cohorts whose consensus had two or more communities.
    pub null_multi_community_share: f64,
    /// Smallest attainable p, 1 / (draws + 1).
    pub smallest_p: f64,
    /// At least two communities and the structure's p <= alpha.
    pub subgroups_supported: bool,
}

/// One community under resampling.
#[derive(Debug, Clone, Serialize)]
pub struct CommunityStability {
    /// Community 1..=k.
    pub community: usize,
    /// Mean best-match Jaccard over the subsamples that drew a member (Hennig 2007).
    pub stability: f64,
    /// Median confidence of its members.
    pub median_confidence: f64,
}

/// The resampling-stability check in `summary.json` (key `stability`).
#[derive(Debug, Clone, Serialize)]
pub struct StabilitySummary {
    /// Subsamples drawn.
    pub subsamples: usize,
    /// Share of participants per subsample.
    pub fraction: f64,
    /// Median adjusted Rand index of the subsample partitions with the full one.
    pub median_ari: f64,
    /// Per community.
    pub communities: Vec<CommunityStability>,
    /// Median per-participant confidence over the assigned participants.
    pub median_confidence: f64,
}

/// Everything a run reports.
#[derive(Debug, Clone, Serialize)]
pub struct RunSummary {
    /// strata's version.
    pub strata_version: String,
    /// The output folder.
    pub output: PathBuf,
    /// `seed_maps` or `region_matrices`.
    pub input_kind: String,
    /// Participants analysed.
    pub participant_count: usize,
    /// Features per participant.
    pub feature_count: usize,
    /// What the features are, in words.
    pub feature_description: String,
    /// The group column.
    pub group_column: String,
    /// The contrast levels (A, B).
    pub contrast: (String, String),
    /// Participants per group level over the cohort.
    pub group_counts: Vec<(String, usize)>,
    /// Community-detection method (`infomap`, `leiden`, `louvain`).
    pub method: String,
    /// Graph rule of the sweep (`density`, `knn`, `mutual_knn`, `absolute`).
    pub graph_rule: String,
    /// The rule's parameter per graph of the sweep (density, k or threshold).
    pub sweep_parameters: Vec<f64>,
    /// Densities reached by the graphs of the sweep (kept edges over all pairs).
    pub densities: Vec<f64>,
    /// Densities of the graphs that entered the consensus.
    pub densities_in_consensus: Vec<f64>,
    /// The rule's parameters of the graphs that entered the consensus.
    pub parameters_in_consensus: Vec<f64>,
    /// Communities of the consensus (excluding unassigned).
    pub community_count: usize,
    /// Communities and their composition (community 0 last, if any).
    pub communities: Vec<CommunitySummary>,
    /// Modularity of the consensus partition on the co-assignment graph.
    pub consensus_modularity: f64,
    /// Two-level codelength (bits) of the consensus partition on the co-assignment graph
    /// (Infomap only).
    pub consensus_codelength: Option<f64>,
    /// Relative codelength savings over one module on the co-assignment graph (Infomap only).
    pub consensus_relative_savings: Option<f64>,
    /// Consensus iterations.
    pub consensus_iterations: usize,
    /// Median per-participant consistency (mean co-assignment with the own community).
    pub median_consistency: f64,
    /// Measures of the participant graph with the strongest structure.
    pub graph_measures: Option<GraphMeasuresSummary>,
    /// The verdict of the null test (`null` when the test was not run).
    pub subgroups_supported: Option<bool>,
    /// The verdict in one sentence.
    pub verdict: String,
    /// The null test (`null` when not run).
    pub null_test: Option<NullTestSummary>,
    /// The resampling-stability check (`null` when not run).
    pub stability: Option<StabilitySummary>,
    /// The contrasts.
    pub comparisons: Vec<ComparisonSummary>,
    /// The false-discovery level used in `significant_features`.
    pub alpha: f64,
    /// Warnings, in the order they arose.
    pub warnings: Vec<Warning>,
    /// Wall-clock seconds of the whole run.
    pub seconds: f64,
}

impl RunSummary {
    /// The summary in words, as printed at the end of a run.
    pub fn text(&self) -> String {
        let mut text = String::new();
        let kind = if self.input_kind == "seed_maps" { "seed maps" } else { "region matrices" };
        let groups: Vec<String> =
            self.group_counts.iter().map(|(level, count)| format!("{count} {level}")).collect();
        let _ = writeln!(
            text,
            "strata {}: {} participants ({}), {kind}, {}.",
            self.strata_version,
            self.participant_count,
            groups.join(", "),
            self.feature_description
        );
        let sizes: Vec<String> = self
            .communities
            .iter()
            .filter(|community| community.community > 0)
            .map(|community| format!("{} (n={})", community.community, community.size))
            .collect();
        let unassigned =
            self.communities.iter().find(|community| community.community == 0).map_or(0, |c| c.size);
        let savings = self
            .consensus_relative_savings
            .map_or(String::new(), |savings| format!(", codelength savings {:.1}%", 100.0 * savings));
        let rule = match self.graph_rule.as_str() {
            "density" => "density",
            "knn" => "k-nearest-neighbour",
            "mutual_knn" => "mutual k-nearest-neighbour",
            _ => "threshold",
        };
        let _ = writeln!(
            text,
            "Communities ({}): {} found: {}{} (consensus over {} of {} {rule} graphs, modularity {:.3}{savings}; median consistency {:.2}).",
            self.method,
            self.community_count,
            sizes.join(", "),
            if unassigned > 0 { format!("; {unassigned} unassigned") } else { String::new() },
            self.densities_in_consensus.len(),
            self.densities.len(),
            self.consensus_modularity,
            self.median_consistency
        );
        let _ = writeln!(text, "{}", self.verdict);
        if let Some(stability) = &self.stability {
            let per_community: Vec<String> = stability
                .communities
                .iter()
                .map(|community| format!("{}: {:.2}", community.community, community.stability))
                .collect();
            let _ = writeln!(
                text,
                "Stability over {} subsamples of {:.0}% of the participants: median adjusted Rand index {:.2}; community stability (mean best-match Jaccard) {}; median participant confidence {:.2}.",
                stability.subsamples,
                100.0 * stability.fraction,
                stability.median_ari,
                if per_community.is_empty() { "n/a".to_string() } else { per_community.join(", ") },
                stability.median_confidence
            );
        }
        if let Some(graph) = &self.graph_measures {
            let sigma = graph.small_world_sigma.map_or(String::new(), |sigma| {
                format!(", small-world sigma {sigma:.2} ({} random graphs)", graph.random_graphs)
            });
            let _ = writeln!(
                text,
                "Participant graph ({} {}, the strongest structure): clustering {:.2}, path length {:.2}, efficiency {:.2}{sigma}.",
                graph.graph_rule,
                graph.parameter,
                graph.mean_clustering,
                graph.path_length,
                graph.efficiency
            );
        }
        let (a, b) = &self.contrast;
        for comparison in &self.comparisons {
            let scope = if comparison.scope == "all" {
                "Whole cohort".to_string()
            } else {
                format!("Community {}", comparison.scope)
            };
            if comparison.written {
                let _ = writeln!(
                    text,
                    "{scope}: {a} (n={}) vs {b} (n={}): {} features with q < {}; peak t = {:.2} at {}.",
                    comparison.count_a,
                    comparison.count_b,
                    comparison.significant_features,
                    self.alpha,
                    comparison.peak_t,
                    comparison.peak
                );
            } else {
                let _ = writeln!(
                    text,
                    "{scope}: {a} (n={}) vs {b} (n={}): not compared ({}).",
                    comparison.count_a,
                    comparison.count_b,
                    comparison.reason.as_deref().unwrap_or("")
                );
            }
        }
        for warning in &self.warnings {
            let _ = writeln!(text, "Warning: {warning}");
        }
        let _ = writeln!(text, "Results: {} ({:.1} s).", self.output.display(), self.seconds);
        let _ = writeln!(
            text,
            "Research software: subgroups and maps are not diagnoses and not for individual clinical decisions."
        );
        text
    }
}
