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
            Warning::SingleCommunity => write!(
                f,
                "the consensus found one community: no graph of the sweep showed subgroups that held together; \
                 the cohort may be homogeneous (no evidence of subgroups at these settings), or try a sparser --densities range, a kNN sweep (--graph knn) or --method leiden"
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
