//! Stage 5: participant graphs to a consensus [`Partition`].
//!
//! Per graph of the sweep, seeded trials of one method (best kept): Infomap (two-level map
//! equation, the default), Leiden (modularity or the constant Potts model, every community
//! connected) or Louvain (modularity); then the consensus across the sweep (Lancichinetti &
//! Fortunato 2012).

mod consensus;
mod infomap;
mod leiden;
mod louvain;
mod method;
mod plogp;
mod quality;

pub use consensus::{
    coassignment, detect, detect_with_weighting, DensityWeighting, DENSITY_MODULARITY_FLOOR,
    MIN_ASSIGNED_FRACTION,
};
pub use infomap::{infomap, infomap_trial, map_equation, Codelength, FlowNetwork};
pub use leiden::{cpm_quality, leiden, LeidenQuality};
pub use louvain::{louvain, renumber};
pub use method::{Method, Objective, Prepared};
pub use quality::modularity;

use ndarray::Array2;

use crate::graph::{EdgeWeights, SweepLevel};

/// A partition of participants into communities.
///
/// `membership[p]` is participant p's community: 1..=k numbered by decreasing size (ties by
/// smallest participant index), or 0 for unassigned (a community below the minimum size, or an
/// isolated participant).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Partition {
    /// Community of each participant, in cohort order; 0 = unassigned.
    pub membership: Vec<usize>,
}

impl Partition {
    /// Builds the partition from raw labels: communities smaller than `min_size` become 0, the
    /// others are numbered 1..=k by decreasing size (ties by smallest member index).
    pub fn from_labels(labels: &[usize], min_size: usize) -> Self {
        let (labels, count) = renumber(labels);
        let mut sizes = vec![0usize; count];
        let mut first = vec![usize::MAX; count];
        for (index, &label) in labels.iter().enumerate() {
            sizes[label] += 1;
            first[label] = first[label].min(index);
        }
        let mut order: Vec<usize> = (0..count).filter(|&label| sizes[label] >= min_size).collect();
        order.sort_by(|&a, &b| sizes[b].cmp(&sizes[a]).then(first[a].cmp(&first[b])));
        let mut number = vec![0usize; count];
        for (rank, &label) in order.iter().enumerate() {
            number[label] = rank + 1;
        }
        Partition { membership: labels.iter().map(|&label| number[label]).collect() }
    }

    /// Number of communities (excluding unassigned).
    pub fn community_count(&self) -> usize {
        self.membership.iter().copied().max().unwrap_or(0)
    }

    /// Size of community `community` (0 = unassigned).
    pub fn size(&self, community: usize) -> usize {
        self.membership.iter().filter(|&&c| c == community).count()
    }
}

/// Tunables of community detection (defaults live in `crate::config`).
#[derive(Debug, Clone)]
pub struct CommunityOptions {
    /// The graphs of the sweep (proportional densities by default).
    pub levels: Vec<SweepLevel>,
    /// Weighted or binary edges.
    pub edge_weights: EdgeWeights,
    /// The community-detection method.
    pub method: Method,
    /// Seeded trials per density; the best quality of the method is kept.
    pub trials: usize,
    /// Modularity resolution parameter gamma (1 = Newman-Girvan modularity).
    pub resolution: f64,
    /// Communities with fewer participants are reported as unassigned (community 0).
    pub min_community_size: usize,
    /// Co-assignment threshold tau of the consensus (Lancichinetti & Fortunato 2012).
    pub consensus_threshold: f64,
    /// Run seed; every trial derives its own seed from it (`crate::seed`).
    pub seed: u64,
}

impl Default for CommunityOptions {
    /// strata's defaults (`crate::config`): the density sweep 5%-50% with weighted edges, the
    /// default method, trials, size floor and consensus threshold.
    fn default() -> Self {
        use crate::config;
        CommunityOptions {
            levels: config::DEFAULT_DENSITIES.iter().map(|&d| SweepLevel::Density(d)).collect(),
            edge_weights: EdgeWeights::Weighted,
            method: config::DEFAULT_METHOD,
            trials: config::DEFAULT_TRIALS,
            resolution: config::DEFAULT_RESOLUTION,
            min_community_size: config::DEFAULT_MIN_COMMUNITY_SIZE,
            consensus_threshold: config::DEFAULT_CONSENSUS_THRESHOLD,
            seed: config::DEFAULT_SEED,
        }
    }
}

/// What one graph (one density, k or threshold) of the sweep gave.
#[derive(Debug, Clone)]
pub struct DensityResult {
    /// The graph rule and its parameter.
    pub level: SweepLevel,
    /// Density reached: kept edges over all participant pairs.
    pub density: f64,
    /// Undirected edges kept.
    pub edge_count: usize,
    /// Participants with no edge at this density (cohort indices).
    pub isolated: Vec<usize>,
    /// Communities in the best trial (before the minimum-size rule).
    pub community_count: usize,
    /// The method's quality of the best trial (codelength in bits for Infomap, else modularity).
    pub quality: f64,
    /// Modularity of the best trial (whatever the method; it decides the consensus weight).
    pub modularity: f64,
    /// The map equation of the best trial, for Infomap.
    pub codelength: Option<Codelength>,
    /// NMI of the best trial's partition to the consensus partition (arithmetic normalisation).
    pub nmi_to_consensus: f64,
    /// Weight this density received in the consensus (0 = left out), per the documented rule.
    pub consensus_weight: f64,
    /// The best trial's membership (0-based community labels, cohort order).
    pub membership: Vec<usize>,
}

/// The result of community detection over the sweep.
#[derive(Debug, Clone)]
pub struct CommunityResult {
    /// The consensus partition.
    pub partition: Partition,
    /// One row per density of the sweep, in sweep order.
    pub densities: Vec<DensityResult>,
    /// Weighted co-assignment matrix (fraction of weighted trials placing p and q together).
    pub coassignment: Array2<f32>,
    /// Consensus iterations until the partition was stable.
    pub consensus_iterations: usize,
    /// Modularity of the consensus partition on the co-assignment graph.
    pub consensus_modularity: f64,
    /// The map equation of the consensus partition on the co-assignment graph, for Infomap.
    pub consensus_codelength: Option<Codelength>,
    /// Per participant, the weighted fraction of included trials placing it with the other
    /// members of its final community (NaN for unassigned participants).
    pub consistency: Vec<f64>,
}

/// Community detection could not run on the participant graph.
#[derive(Debug, thiserror::Error)]
pub enum CommunityError {
    /// Every density of the sweep left a graph without edges.
    #[error("no graph of the sweep kept any edge between participants (all similarities are negative or zero, or below every --thresholds value); check the inputs, or raise --densities or --neighbours, or lower --thresholds")]
    NoEdges,
}
