//! The density sweep and the consensus partition across it.
//!
//! # The rule (documented in docs/methods.md)
//! Dense participant graphs often collapse to one community, and a plain co-assignment
//! consensus over a wide sweep is then dominated by those collapsed densities. strata therefore
//! weights each density by the modularity of its best partition and leaves a density out when
//! its partition shows no structure: fewer than two communities of at least the minimum size
//! (collapsed), fewer than [`MIN_ASSIGNED_FRACTION`] of the participants in such communities
//! (fragmented), or modularity below [`DENSITY_MODULARITY_FLOOR`]. Every trial of an included density
//! enters the co-assignment matrix with weight Q_d / trials. The Lancichinetti-Fortunato
//! iteration then runs on that matrix. When no density has structure, the consensus is one
//! community: the honest answer that no subgroups were found.

use ndarray::Array2;
use rayon::prelude::*;

use super::infomap::map_equation;
use super::louvain::renumber;
use super::method::{Method, Objective, Prepared};
use super::quality::modularity;
use super::{CommunityError, CommunityOptions, CommunityResult, DensityResult, Partition};
use crate::graph::{ParticipantGraph, SweepGraphs};
use crate::similarity::SimilarityMatrix;
use crate::validation::normalized_mutual_information;

/// A density enters the consensus only if its best partition reaches this modularity.
/// 0.05 is well below the modularity of any partition with real structure on these graphs and
/// above the near-zero values of collapsed (one-community) partitions (common practice sets a
/// floor near zero; this value is strata's choice, see docs/methods.md).
pub const DENSITY_MODULARITY_FLOOR: f64 = 0.05;

/// A density enters the consensus only if at least this share of participants sits in
/// communities of the minimum size; below it the graph is too sparse and its partition mostly
/// fragments and isolates (strata's choice: half the cohort, see docs/methods.md).
pub const MIN_ASSIGNED_FRACTION: f64 = 0.5;

/// The consensus iteration stops after this many rounds even if the partitions still disagree
/// (Lancichinetti & Fortunato 2012 report convergence within a few rounds).
pub const MAX_CONSENSUS_ITERATIONS: usize = 50;

/// Weighted co-assignment: entry (p, q) is the weighted fraction of partitions placing p and q
/// together (the diagonal is 1).
///
/// # Complexity
/// O(U n^2) for U distinct partitions.
pub fn coassignment(partitions: &[(Vec<usize>, f64)], node_count: usize) -> Array2<f32> {
    // Identical partitions (frequent among trials) are merged first.
    let mut distinct: Vec<(Vec<usize>, f64)> = Vec::new();
    for (labels, weight) in partitions {
        let canonical = renumber(labels).0;
        match distinct.iter_mut().find(|(existing, _)| *existing == canonical) {
            Some(entry) => entry.1 += weight,
            None => distinct.push((canonical, *weight)),
        }
    }
    let total: f64 = distinct.iter().map(|(_, weight)| weight).sum();
    let mut matrix = Array2::<f32>::zeros((node_count, node_count));
    if total <= 0.0 {
        return matrix;
    }
    let rows: Vec<Vec<f32>> = (0..node_count)
        .into_par_iter()
        .map(|p| {
            let mut row = vec![0.0f64; node_count];
            for (labels, weight) in &distinct {
                let label = labels[p];
                for (q, &other) in labels.iter().enumerate() {
                    if other == label {
                        row[q] += weight;
                    }
                }
            }
            row.into_iter().map(|value| (value / total) as f32).collect()
        })
        .collect();
    for (p, row) in rows.into_iter().enumerate() {
        matrix.row_mut(p).assign(&ndarray::Array1::from(row));
    }
    matrix
}

/// One trial: its labels and the method's quality (codelength or modularity).
type Trial = (Vec<usize>, f64);

/// Seeded trials of `method` on a prepared graph; returns every trial's labels and quality, in
/// trial order.
fn trials(
    prepared: &Prepared,
    options: &CommunityOptions,
    count: usize,
    stage: &str,
    index: u64,
) -> Vec<Trial> {
    (0..count as u64)
        .into_par_iter()
        .map(|trial| {
            let mut rng = crate::seed::rng(options.seed, stage, &[index, trial]);
            let result = options.method.run_prepared(prepared, options.resolution, &mut rng);
            crate::report::progress::tick(1);
            result
        })
        .collect()
}

/// The trial of best quality for `method` (the earliest among equals).
fn best(results: &[Trial], method: Method) -> usize {
    let mut best = 0;
    for (index, (_, quality)) in results.iter().enumerate() {
        if method.score(*quality) > method.score(results[best].1) + 1e-12 {
            best = index;
        }
    }
    best
}

fn graph_from_coassignment(matrix: &Array2<f32>, threshold: f64) -> ParticipantGraph {
    let n = matrix.nrows();
    let mut edges = Vec::new();
    for p in 0..n {
        for q in (p + 1)..n {
            let value = f64::from(matrix[[p, q]]);
            if value >= threshold {
                edges.push((p, q, value));
            }
        }
    }
    ParticipantGraph::from_edges(n, &edges)
}

/// Per participant, the mean co-assignment with the other members of its final community: how
/// often (weighted over the included trials) it sat with them. NaN for unassigned participants
/// and 1 for a community of one.
fn consistency(coassignment: &Array2<f32>, partition: &Partition) -> Vec<f64> {
    let membership = &partition.membership;
    (0..membership.len())
        .map(|p| {
            let community = membership[p];
            if community == 0 {
                return f64::NAN;
            }
            let (sum, count) = membership
                .iter()
                .enumerate()
                .filter(|&(q, &c)| c == community && q != p)
                .fold((0.0f64, 0usize), |(sum, count), (q, _)| {
                    (sum + f64::from(coassignment[[p, q]]), count + 1)
                });
            if count == 0 {
                1.0
            } else {
                sum / count as f64
            }
        })
        .collect()
}

fn structured(labels: &[usize], min_size: usize) -> bool {
    let node_count = labels.len();
    let (labels, count) = renumber(labels);
    let mut sizes = vec![0usize; count];
    for label in labels {
        sizes[label] += 1;
    }
    let large: Vec<usize> = sizes.into_iter().filter(|&size| size >= min_size).collect();
    let assigned: usize = large.iter().sum();
    large.len() >= 2 && assigned as f64 >= MIN_ASSIGNED_FRACTION * node_count as f64
}

/// Community detection over the density sweep, then the consensus partition.
///
/// For each density in turn: the graph and `trials` seeded runs of the method (in parallel), the
/// best quality kept. Densities are weighted and selected by the rule in this
/// module's documentation; the weighted co-assignment matrix D of all their trials is
/// thresholded at tau, partitioned by the run's method (`trials` trials), and D is rebuilt
/// from those partitions until they agree (Lancichinetti & Fortunato 2012).
///
/// # Errors
/// [`CommunityError::NoEdges`] when no density keeps any edge (no positive similarity).
///
/// # Complexity
/// O(D T E) for the sweep (D densities, T trials, E edges) plus O(I n^2) for the consensus.
///
/// # References
/// Rosvall & Bergstrom 2008 (Infomap), Traag et al. 2019 (Leiden), Blondel et al. 2008
/// (Louvain); Lancichinetti & Fortunato 2012, Sci Rep 2:336 (consensus).
pub fn detect(
    similarity: &SimilarityMatrix,
    options: &CommunityOptions,
) -> Result<CommunityResult, CommunityError> {
    detect_with_weighting(similarity, options, DensityWeighting::Structured)
}

/// How densities of the sweep are weighted in the consensus.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DensityWeighting {
    /// strata's rule: weight = modularity, densities without structure left out (the default).
    Structured,
    /// Every density with at least one edge weighs the same: the plain co-assignment consensus,
    /// kept for comparison in docs/methods.md (it falls into the collapse trap).
    Uniform,
}

/// [`detect`] with a chosen density weighting.
///
/// # Errors
/// As [`detect`].
pub fn detect_with_weighting(
    similarity: &SimilarityMatrix,
    options: &CommunityOptions,
    weighting: DensityWeighting,
) -> Result<CommunityResult, CommunityError> {
    let node_count = similarity.participant_count();
    let graphs = SweepGraphs::new(similarity, options.edge_weights);
    if graphs.positive_pairs() == 0 {
        return Err(CommunityError::NoEdges);
    }
    let all_pairs = (node_count * node_count.saturating_sub(1) / 2).max(1) as f64;
    // Levels one after the other, their trials in parallel: with parallel levels, work stealing
    // could keep several dense graphs and their trials alive at once, which set the run's peak
    // memory (1,000 participants: 282-298 MB against 284-286 MB this way) for 5% of the speed.
    let sweep: Vec<(DensityResult, Vec<Trial>)> = options
        .levels
        .iter()
        .enumerate()
        .map(|(index, &level)| {
            let graph = graphs.graph(level);
            let prepared = options.method.prepare(&graph);
            let results = trials(&prepared, options, options.trials, "sweep", index as u64);
            let chosen = best(&results, options.method);
            let (labels, quality) = results[chosen].clone();
            // The trials' flow network gives the map equation without building it again.
            let codelength = match &prepared {
                Prepared::Flow(network) => Some(network.codelength(&labels)),
                Prepared::Graph(_) => None,
            };
            let quality_modularity = modularity(&graph, &labels, options.resolution);
            let community_count = renumber(&labels).1;
            let has_structure = structured(&labels, options.min_community_size)
                && quality_modularity >= DENSITY_MODULARITY_FLOOR;
            let row = DensityResult {
                level,
                density: graph.edge_count() as f64 / all_pairs,
                edge_count: graph.edge_count(),
                isolated: graph.isolated(),
                community_count,
                quality,
                modularity: quality_modularity,
                codelength,
                nmi_to_consensus: f64::NAN,
                consensus_weight: match weighting {
                    DensityWeighting::Structured if has_structure => quality_modularity,
                    DensityWeighting::Structured => 0.0,
                    DensityWeighting::Uniform if graph.edge_count() > 0 => 1.0,
                    DensityWeighting::Uniform => 0.0,
                },
                membership: labels,
            };
            (row, results)
        })
        .collect();
    if sweep.iter().all(|(row, _)| row.edge_count == 0) {
        return Err(CommunityError::NoEdges);
    }
    let mut weighted: Vec<(Vec<usize>, f64)> = Vec::new();
    for (row, results) in &sweep {
        if row.consensus_weight > 0.0 {
            let share = row.consensus_weight / results.len() as f64;
            weighted.extend(results.iter().map(|(labels, _)| (labels.clone(), share)));
        }
    }
    let mut densities: Vec<DensityResult> = sweep.into_iter().map(|(row, _)| row).collect();
    if weighted.is_empty() {
        let everyone = vec![0usize; node_count];
        let partition = Partition::from_labels(&everyone, 1);
        for row in densities.iter_mut() {
            row.nmi_to_consensus = normalized_mutual_information(&row.membership, &everyone);
        }
        return Ok(CommunityResult {
            consistency: vec![1.0; node_count],
            partition,
            densities,
            coassignment: Array2::from_elem((node_count, node_count), 1.0),
            consensus_iterations: 0,
            consensus_modularity: 0.0,
            consensus_codelength: None,
        });
    }
    let initial = coassignment(&weighted, node_count);
    let mut matrix = initial.clone();
    let mut iterations = 0;
    let mut labels = vec![0usize; node_count];
    while iterations < MAX_CONSENSUS_ITERATIONS {
        iterations += 1;
        let graph = graph_from_coassignment(&matrix, options.consensus_threshold);
        let results =
            trials(&options.method.prepare(&graph), options, options.trials, "consensus", iterations as u64);
        labels = results[best(&results, options.method)].0.clone();
        let first = renumber(&results[0].0).0;
        let unanimous = results.iter().all(|(other, _)| renumber(other).0 == first);
        if unanimous {
            break;
        }
        let equal: Vec<(Vec<usize>, f64)> = results.into_iter().map(|(labels, _)| (labels, 1.0)).collect();
        matrix = coassignment(&equal, node_count);
    }
    let consensus_graph = graph_from_coassignment(&initial, options.consensus_threshold);
    let labels = renumber(&labels).0;
    let consensus_modularity = modularity(&consensus_graph, &labels, options.resolution);
    let consensus_codelength = (options.method.objective() == Objective::Codelength)
        .then(|| map_equation(&consensus_graph, &labels));
    let partition = Partition::from_labels(&labels, options.min_community_size);
    for row in densities.iter_mut() {
        row.nmi_to_consensus = normalized_mutual_information(&row.membership, &partition.membership);
    }
    Ok(CommunityResult {
        consistency: consistency(&initial, &partition),
        partition,
        densities,
        coassignment: initial,
        consensus_iterations: iterations,
        consensus_modularity,
        consensus_codelength,
    })
}
