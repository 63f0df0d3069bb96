//! Graph measures of a participant graph: per node, degree, strength, clustering, participation
//! and within-module degree; for the whole graph, clustering, transitivity, path length,
//! efficiency and the small-world index against degree-matched random graphs.
//!
//! Part of stage 4 (graph): these describe a [`ParticipantGraph`] made by thresholding and, for
//! the module measures, a membership given by the caller; finding communities is the next
//! stage's job, and tabulating the measures the report's. Every measure reads the graph as
//! simple, undirected and positively weighted: self-loops are ignored (so degree and strength
//! here leave them out, unlike [`ParticipantGraph::strengths`]), parallel edges are merged with
//! their weights added (as [`ParticipantGraph::from_edges`] documents), and edges whose weight is
//! not positive and finite are treated as absent. *Binary* measures use only which edges exist;
//! *weighted* measures read weights as similarities, and weighted paths take the length of an
//! edge as 1 / w (a strong similarity is a short step). Path lengths average over the ordered
//! pairs that are connected; pairs in different components are left out of path lengths and
//! add 0 to efficiencies.

use std::cmp::Ordering;
use std::collections::{BTreeMap, BinaryHeap, HashSet, VecDeque};

use rand::Rng;
use rayon::prelude::*;

use super::ParticipantGraph;

/// Successful double-edge swaps per edge when making each degree-matched random graph.
///
/// Each swap rewires two edges, so every edge is rewired about 20 times on average. Of order 10
/// swaps per edge is the common practice in brain-network studies (e.g. the Brain Connectivity
/// Toolbox's `randmio_und`, Rubinov & Sporns 2010, is usually called with 10 iterations per edge;
/// from memory), well past the point where clustering and path length of the randomised graph
/// stop changing.
pub const SWAPS_PER_EDGE: usize = 10;

/// Attempts allowed per requested swap before a random graph is taken as rewired as far as it
/// can be.
///
/// A swap is accepted with probability about (1 - density)^2 (both new edges must be absent), so
/// 10 attempts per swap suffice up to densities near 0.7; graphs that allow few or no swaps (a
/// complete graph, a star) stop at this budget, and [`SmallWorld::swaps`] reports the shortfall.
/// Chosen here, not taken from a paper.
pub const MAX_ATTEMPTS_PER_SWAP: usize = 10;

/// Stage name of the seeds of the random graphs (see [`crate::seed::rng`]).
const SEED_STAGE: &str = "small_world";

/// How label 0 of a membership is read by [`node_measures`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LabelZero {
    /// Label 0 is a module like any other.
    Module,
    /// Label 0 marks unassigned nodes (the convention of [`crate::communities::Partition`]): they
    /// get NaN module measures, and edges to them are left out of the module measures of others.
    Unassigned,
}

/// Per-node measures, each indexed by node.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeMeasures {
    /// Binary degree k_i: number of distinct neighbours (self-loops left out).
    pub degree: Vec<usize>,
    /// Strength s_i = sum_j w_ij over distinct neighbours (self-loops left out).
    pub strength: Vec<f64>,
    /// Binary local clustering c_i = t_i / (k_i (k_i - 1) / 2), t_i the triangles through i;
    /// 0 when k_i < 2 (networkx `clustering`).
    pub clustering: Vec<f64>,
    /// Weighted local clustering c_i = 1 / (k_i (k_i - 1)) sum_{j,h} (w'_ij w'_ih w'_jh)^(1/3)
    /// over ordered neighbour pairs, with w' = w / max(w) (Onnela et al. 2005, networkx
    /// `clustering(weight=...)`); 0 when k_i < 2.
    pub clustering_weighted: Vec<f64>,
    /// Weighted participation coefficient P_i = 1 - sum_m (s_im / s_i)^2, s_im the strength from
    /// i to module m (Guimerà & Amaral 2005 with strengths for degrees). 0 for a node without
    /// edges, or without edges to assigned nodes (the Brain Connectivity Toolbox convention for
    /// nodes without edges); NaN for an unassigned node.
    pub participation: Vec<f64>,
    /// Weighted within-module degree z-score z_i = (kappa_i - mean_m kappa) / sd_m kappa, kappa_i
    /// the strength from i to its own module m and the mean and population standard deviation
    /// (divisor n_m) taken over m's nodes (Guimerà & Amaral 2005 with strengths). 0 when every
    /// node of the module has the same kappa (sd 0, a one-node module included); NaN for an
    /// unassigned node.
    pub within_module_z: Vec<f64>,
}

/// Whole-graph measures.
#[derive(Debug, Clone, PartialEq)]
pub struct GraphMeasures {
    /// Mean of the binary local clustering over all nodes, zeros counted (networkx
    /// `average_clustering`); NaN for a graph without nodes.
    pub mean_clustering: f64,
    /// Mean of the weighted local clustering over all nodes, zeros counted; NaN without nodes.
    pub mean_clustering_weighted: f64,
    /// Transitivity T = 3 x triangles / connected triples (networkx `transitivity`); 0 without
    /// triangles.
    pub transitivity: f64,
    /// Characteristic path length: mean shortest-path hop count over ordered connected pairs
    /// i != j; equals networkx `average_shortest_path_length` on a connected graph; NaN when no
    /// pair is connected.
    pub path_length: f64,
    /// As `path_length` with edge length 1 / w (shortest weighted paths by Dijkstra).
    pub path_length_weighted: f64,
    /// Global efficiency E = 1 / (n (n - 1)) sum_{i != j} 1 / d_ij in hops, 1 / d = 0 for
    /// disconnected pairs (Latora & Marchiori 2001, networkx `global_efficiency`); 0 when n < 2.
    pub efficiency: f64,
    /// As `efficiency` with edge length 1 / w; weights are not rescaled.
    pub efficiency_weighted: f64,
    /// Small-world index against degree-matched random graphs; `None` when no random graph was
    /// asked for or the graph has fewer than 2 edges to swap.
    pub small_world: Option<SmallWorld>,
}

/// The small-world index sigma of a graph and the random graphs it was measured against.
#[derive(Debug, Clone, PartialEq)]
pub struct SmallWorld {
    /// sigma = (C / C_rand) / (L / L_rand) with C the transitivity and L the binary path length;
    /// inf when the random graphs have no triangles but the graph has, NaN when neither has.
    pub sigma: f64,
    /// C_rand: mean transitivity of the random graphs.
    pub random_clustering: f64,
    /// L_rand: mean binary path length (over connected pairs) of the random graphs.
    pub random_path_length: f64,
    /// Number of random graphs.
    pub random_graphs: usize,
    /// Successful swaps summed over the random graphs; below
    /// `SWAPS_PER_EDGE x edges x random_graphs` when the graph could not be rewired that far.
    pub swaps: usize,
}

/// Per-node degree, strength, clustering (binary and weighted), participation coefficient and
/// within-module degree z-score.
///
/// Clustering: c_i = t_i / (k_i (k_i - 1) / 2) (Watts & Strogatz 1998) and its weighted form
/// c_i = 1 / (k_i (k_i - 1)) sum_{j,h} (w'_ij w'_ih w'_jh)^(1/3), w' = w / max(w) over the graph
/// (Onnela et al. 2005, the networkx definition). Module roles (Guimerà & Amaral 2005), weighted
/// with strengths in place of degrees (on a binary graph they reduce to the published degree
/// forms): P_i = 1 - sum_m (s_im / s_i)^2 and z_i = (kappa_i - mean_m kappa) / sd_m kappa, with
/// the population standard deviation. See [`NodeMeasures`] for each convention at the edges
/// (isolated nodes, one-node modules, unassigned nodes).
///
/// # Arguments
/// * `graph`: the participant graph (weights positive; see the module notes).
/// * `membership`: module label of each node (any integers, not necessarily contiguous).
/// * `label_zero`: whether label 0 is a module or marks unassigned nodes.
///
/// # Returns
/// The [`NodeMeasures`].
///
/// # Panics
/// If `membership` does not have one label per node.
///
/// # Complexity
/// O(sum_i sum_{j in N(i)} (k_i + k_j)) for the clustering by sorted-list intersection (at most
/// O(E k_max), with E edges and k_max the largest degree), O(n + E) for the rest; nodes run in
/// parallel.
///
/// # References
/// Watts & Strogatz 1998, Nature 393:440; Onnela, Saramäki, Kertész & Kaski 2005, Phys Rev E
/// 71:065103; Guimerà & Amaral 2005, Nature 433:895; Rubinov & Sporns 2010, NeuroImage 52:1059.
pub fn node_measures(graph: &ParticipantGraph, membership: &[usize], label_zero: LabelZero) -> NodeMeasures {
    assert_eq!(
        membership.len(),
        graph.node_count(),
        "membership has {} labels for a graph of {} nodes",
        membership.len(),
        graph.node_count()
    );
    let simple = SimpleGraph::from_participant_graph(graph);
    let node_count = simple.node_count();
    let degree: Vec<usize> = (0..node_count).map(|node| simple.degree(node)).collect();
    let strength: Vec<f64> = (0..node_count).map(|node| simple.neighbours(node).1.iter().sum()).collect();
    let (clustering, clustering_weighted) = local_clustering(&simple);
    let (participation, within_module_z) = module_roles(&simple, membership, label_zero);
    NodeMeasures { degree, strength, clustering, clustering_weighted, participation, within_module_z }
}

/// Whole-graph clustering, transitivity, characteristic path length, global efficiency and the
/// small-world index.
///
/// Mean clustering is the mean of the local coefficients of [`node_measures`] over all nodes.
/// Transitivity T = 3 x triangles / connected triples. Path length L = mean of d_ij over ordered
/// connected pairs; efficiency E = 1 / (n (n - 1)) sum_{i != j} 1 / d_ij with 1 / d = 0 between
/// components (Latora & Marchiori 2001). Binary versions count hops (breadth-first search);
/// weighted versions use edge length 1 / w (Dijkstra). The small-world index is
/// sigma = (C / C_rand) / (L / L_rand) (Humphries & Gurney 2008) with C the transitivity (their
/// S^Delta, and what networkx `sigma` uses) and L the binary path length, C_rand and L_rand the
/// means over `random_graphs` degree-matched random graphs, each made from the graph by
/// [`SWAPS_PER_EDGE`] x E seeded double-edge swaps (Maslov & Sneppen 2002) that keep every degree
/// and refuse self-loops and multi-edges. Connectedness is not enforced: a random graph that
/// falls apart has its L over connected pairs. Random graph r draws from
/// `seed::rng(seed, "small_world", [r])`, and all sums run in a fixed order, so results are the
/// same at any thread count.
///
/// # Arguments
/// * `graph`: the participant graph (weights positive; see the module notes).
/// * `random_graphs`: number of random graphs for the small-world index; 0 skips it.
/// * `seed`: run seed for the random graphs.
///
/// # Returns
/// The [`GraphMeasures`]; see its fields for the conventions of empty and disconnected graphs.
///
/// # Complexity
/// O(n E log n) for the all-pairs shortest paths (n breadth-first searches and n Dijkstra runs,
/// in parallel over sources), plus per random graph O(SWAPS_PER_EDGE x E) expected for the
/// swaps and O(n E) for its path length, in parallel over random graphs.
///
/// # References
/// Latora & Marchiori 2001, Phys Rev Lett 87:198701; Maslov & Sneppen 2002, Science 296:910;
/// Humphries & Gurney 2008, PLoS ONE 3:e0002051; Watts & Strogatz 1998, Nature 393:440.
pub fn graph_measures(graph: &ParticipantGraph, random_graphs: usize, seed: u64) -> GraphMeasures {
    let simple = SimpleGraph::from_participant_graph(graph);
    let node_count = simple.node_count();
    let (clustering, clustering_weighted) = local_clustering(&simple);
    let mean = |values: &[f64]| {
        if values.is_empty() {
            f64::NAN
        } else {
            values.iter().sum::<f64>() / values.len() as f64
        }
    };
    let transitivity = transitivity(&simple);
    let paths = all_pairs(&simple, true);
    let pair_slots = node_count as f64 * node_count.saturating_sub(1) as f64;
    let efficiency = |inverse_sum: f64| if node_count < 2 { 0.0 } else { inverse_sum / pair_slots };
    let path_length = paths.mean_hops();
    let small_world = small_world_of(&simple, transitivity, path_length, random_graphs, seed);
    GraphMeasures {
        mean_clustering: mean(&clustering),
        mean_clustering_weighted: mean(&clustering_weighted),
        transitivity,
        path_length,
        path_length_weighted: paths.mean_lengths(),
        efficiency: efficiency(paths.inverse_hops),
        efficiency_weighted: efficiency(paths.inverse_lengths),
        small_world,
    }
}

/// The small-world index sigma of `graph` alone, as computed by [`graph_measures`].
///
/// # Arguments
/// * `graph`, `random_graphs`, `seed`: as for [`graph_measures`].
///
/// # Returns
/// `None` when `random_graphs` is 0 or the graph has fewer than 2 edges (nothing to swap).
///
/// # Complexity
/// O(n E) for the graph's own path length, plus O(SWAPS_PER_EDGE x E + n E) per random graph.
///
/// # References
/// Humphries & Gurney 2008, PLoS ONE 3:e0002051; Maslov & Sneppen 2002, Science 296:910.
pub fn small_world_sigma(graph: &ParticipantGraph, random_graphs: usize, seed: u64) -> Option<SmallWorld> {
    let simple = SimpleGraph::from_participant_graph(graph);
    let path_length = all_pairs(&simple, false).mean_hops();
    small_world_of(&simple, transitivity(&simple), path_length, random_graphs, seed)
}

/// A simple graph in compressed sparse rows: neighbours sorted, parallel edges merged, no
/// self-loops, only positive finite weights.
struct SimpleGraph {
    offsets: Vec<usize>,
    targets: Vec<u32>,
    weights: Vec<f64>,
}

impl SimpleGraph {
    fn from_participant_graph(graph: &ParticipantGraph) -> Self {
        let node_count = graph.node_count();
        let mut offsets = Vec::with_capacity(node_count + 1);
        offsets.push(0);
        let mut targets = Vec::with_capacity(graph.targets.len());
        let mut weights = Vec::with_capacity(graph.targets.len());
        let mut row: Vec<(u32, f64)> = Vec::new();
        for node in 0..node_count {
            let (node_targets, node_weights) = graph.neighbours(node);
            row.clear();
            row.extend(
                node_targets
                    .iter()
                    .zip(node_weights)
                    .filter(|&(&target, &weight)| {
                        target as usize != node && weight > 0.0 && weight.is_finite()
                    })
                    .map(|(&target, &weight)| (target, weight)),
            );
            row.sort_by_key(|&(target, _)| target);
            for &(target, weight) in &row {
                if targets.len() > offsets[node] && targets.last() == Some(&target) {
                    *weights.last_mut().unwrap() += weight;
                } else {
                    targets.push(target);
                    weights.push(weight);
                }
            }
            offsets.push(targets.len());
        }
        SimpleGraph { offsets, targets, weights }
    }

    /// Unit-weight graph of undirected edges (i, j), i != j, no duplicates.
    fn from_binary_edges(node_count: usize, edges: &[(u32, u32)]) -> Self {
        let mut rows: Vec<Vec<u32>> = vec![Vec::new(); node_count];
        for &(i, j) in edges {
            rows[i as usize].push(j);
            rows[j as usize].push(i);
        }
        let mut offsets = Vec::with_capacity(node_count + 1);
        offsets.push(0);
        let mut targets = Vec::with_capacity(2 * edges.len());
        for mut row in rows {
            row.sort_unstable();
            targets.extend(row);
            offsets.push(targets.len());
        }
        let weights = vec![1.0; targets.len()];
        SimpleGraph { offsets, targets, weights }
    }

    fn node_count(&self) -> usize {
        self.offsets.len() - 1
    }

    fn degree(&self, node: usize) -> usize {
        self.offsets[node + 1] - self.offsets[node]
    }

    fn neighbours(&self, node: usize) -> (&[u32], &[f64]) {
        let range = self.offsets[node]..self.offsets[node + 1];
        (&self.targets[range.clone()], &self.weights[range])
    }

    /// Each undirected edge once, as (i, j) with i < j, in row order.
    fn edges(&self) -> Vec<(u32, u32)> {
        (0..self.node_count())
            .flat_map(|node| {
                self.neighbours(node)
                    .0
                    .iter()
                    .filter(move |&&target| target as usize > node)
                    .map(move |&target| (node as u32, target))
            })
            .collect()
    }
}

/// Adjacency rows as bitsets (row i, bit j set when i and j are linked), for the binary
/// measures of dense graphs, where word-parallel AND / OR / popcount over N / 64 words beat
/// walking neighbour lists of length k.
struct AdjacencyBits {
    words: usize,
    bits: Vec<u64>,
}

/// Memory allowed for [`AdjacencyBits`] whatever the graph (N^2 / 8 bytes: N up to 11,585);
/// larger graphs take bitsets only where they are no bigger than the neighbour lists.
const BITSET_BUDGET_BYTES: usize = 16 << 20;

impl AdjacencyBits {
    /// The bitset rows of `graph`, or `None` when they would take more memory than allowed.
    fn of(graph: &SimpleGraph) -> Option<Self> {
        let node_count = graph.node_count();
        let words = node_count.div_ceil(64);
        let bytes = node_count.saturating_mul(words).saturating_mul(8);
        if bytes > BITSET_BUDGET_BYTES.max(graph.targets.len().saturating_mul(12)) {
            return None;
        }
        let mut bits = vec![0u64; node_count * words];
        for node in 0..node_count {
            let row = &mut bits[node * words..(node + 1) * words];
            for &target in graph.neighbours(node).0 {
                row[target as usize / 64] |= 1 << (target % 64);
            }
        }
        Some(AdjacencyBits { words, bits })
    }

    fn row(&self, node: usize) -> &[u64] {
        &self.bits[node * self.words..(node + 1) * self.words]
    }
}

/// Binary and weighted local clustering of every node.
///
/// For node i, its neighbours' cube-rooted normalised weights are scattered into a dense row;
/// each neighbour j's list is then walked against that row, so every linked ordered pair (j, h)
/// adds (w'_ij)^(1/3) (w'_jh)^(1/3) (w'_ih)^(1/3) (the cube root of networkx's product, taken
/// per edge once instead of per triangle) in the same order as a sorted-list intersection.
fn local_clustering(graph: &SimpleGraph) -> (Vec<f64>, Vec<f64>) {
    let node_count = graph.node_count();
    let max_weight = graph.weights.iter().copied().fold(0.0f64, f64::max);
    let roots: Vec<f64> = graph.weights.iter().map(|&weight| (weight / max_weight).cbrt()).collect();
    (0..node_count)
        .into_par_iter()
        .map_init(
            || (vec![0.0f64; node_count], vec![0u8; node_count]),
            |(root_to, linked_to), node| {
                let degree = graph.degree(node);
                if degree < 2 {
                    return (0.0, 0.0);
                }
                let range = graph.offsets[node]..graph.offsets[node + 1];
                let (targets, node_roots) = (&graph.targets[range.clone()], &roots[range]);
                for (&target, &root) in targets.iter().zip(node_roots) {
                    root_to[target as usize] = root;
                    linked_to[target as usize] = 1;
                }
                let mut linked_pairs = 0usize;
                let mut weighted = 0.0f64;
                for (&neighbour, &root_ij) in targets.iter().zip(node_roots) {
                    let range = graph.offsets[neighbour as usize]..graph.offsets[neighbour as usize + 1];
                    for (&other, &root_jh) in graph.targets[range.clone()].iter().zip(&roots[range]) {
                        linked_pairs += usize::from(linked_to[other as usize]);
                        weighted += root_ij * root_jh * root_to[other as usize];
                    }
                }
                for &target in targets {
                    root_to[target as usize] = 0.0;
                    linked_to[target as usize] = 0;
                }
                let ordered_pairs = (degree * (degree - 1)) as f64;
                (linked_pairs as f64 / ordered_pairs, weighted / ordered_pairs)
            },
        )
        .unzip()
}

/// Linked ordered neighbour pairs of `node` (2 t_i) by sorted-list intersection.
fn linked_pairs_at(graph: &SimpleGraph, node: usize) -> usize {
    let targets = graph.neighbours(node).0;
    let mut linked_pairs = 0usize;
    for &neighbour in targets {
        let neighbour_targets = graph.neighbours(neighbour as usize).0;
        let (mut a, mut b) = (0, 0);
        while a < targets.len() && b < neighbour_targets.len() {
            match targets[a].cmp(&neighbour_targets[b]) {
                Ordering::Less => a += 1,
                Ordering::Greater => b += 1,
                Ordering::Equal => {
                    linked_pairs += 1;
                    a += 1;
                    b += 1;
                }
            }
        }
    }
    linked_pairs
}

/// Transitivity: linked ordered neighbour pairs over all ordered neighbour pairs (= 3 x triangles
/// over connected triples); 0 without triangles. Counts are integers, so the bitset and the
/// list paths give the same figure.
fn transitivity(graph: &SimpleGraph) -> f64 {
    let bits = AdjacencyBits::of(graph);
    let counts: Vec<(usize, usize)> = (0..graph.node_count())
        .into_par_iter()
        .map(|node| {
            let degree = graph.degree(node);
            let linked = match (&bits, degree < 2) {
                (_, true) => 0,
                (Some(bits), false) => {
                    let row = bits.row(node);
                    graph
                        .neighbours(node)
                        .0
                        .iter()
                        .map(|&neighbour| {
                            row.iter()
                                .zip(bits.row(neighbour as usize))
                                .map(|(a, b)| (a & b).count_ones() as usize)
                                .sum::<usize>()
                        })
                        .sum()
                }
                (None, false) => linked_pairs_at(graph, node),
            };
            (linked, degree * degree.saturating_sub(1))
        })
        .collect();
    let (linked, triples) = counts.iter().fold((0usize, 0usize), |(l, t), &(a, b)| (l + a, t + b));
    if linked == 0 {
        0.0
    } else {
        linked as f64 / triples as f64
    }
}

/// Module roles (participation, within-module z) of every node; see [`NodeMeasures`].
fn module_roles(graph: &SimpleGraph, membership: &[usize], label_zero: LabelZero) -> (Vec<f64>, Vec<f64>) {
    let node_count = graph.node_count();
    let assigned = |node: usize| label_zero == LabelZero::Module || membership[node] != 0;
    // Compact module indices, in label order (any integers may be given).
    let mut modules: BTreeMap<usize, usize> = BTreeMap::new();
    for node in (0..node_count).filter(|&node| assigned(node)) {
        let next = modules.len();
        modules.entry(membership[node]).or_insert(next);
    }
    let module_of: Vec<Option<usize>> =
        (0..node_count).map(|node| assigned(node).then(|| modules[&membership[node]])).collect();

    let mut participation = vec![f64::NAN; node_count];
    let mut within = vec![f64::NAN; node_count];
    let mut to_module = vec![0.0f64; modules.len()];
    let mut touched: Vec<usize> = Vec::new();
    for node in 0..node_count {
        let Some(own) = module_of[node] else { continue };
        let (targets, weights) = graph.neighbours(node);
        let mut strength = 0.0;
        for (&target, &weight) in targets.iter().zip(weights) {
            let Some(module) = module_of[target as usize] else { continue };
            if to_module[module] == 0.0 {
                touched.push(module);
            }
            to_module[module] += weight;
            strength += weight;
        }
        within[node] = to_module[own];
        participation[node] = if strength > 0.0 {
            1.0 - touched.iter().map(|&module| (to_module[module] / strength).powi(2)).sum::<f64>()
        } else {
            0.0
        };
        for &module in &touched {
            to_module[module] = 0.0;
        }
        touched.clear();
    }

    // within[] holds kappa_i; turn it into z_i per module (two passes: mean, then spread).
    let mut sums = vec![0.0f64; modules.len()];
    let mut sizes = vec![0usize; modules.len()];
    for node in 0..node_count {
        if let Some(module) = module_of[node] {
            sums[module] += within[node];
            sizes[module] += 1;
        }
    }
    let means: Vec<f64> = sums.iter().zip(&sizes).map(|(&sum, &size)| sum / size as f64).collect();
    let mut squares = vec![0.0f64; modules.len()];
    for node in 0..node_count {
        if let Some(module) = module_of[node] {
            squares[module] += (within[node] - means[module]).powi(2);
        }
    }
    for node in 0..node_count {
        if let Some(module) = module_of[node] {
            let deviation = (squares[module] / sizes[module] as f64).sqrt();
            within[node] = if deviation > 0.0 { (within[node] - means[module]) / deviation } else { 0.0 };
        }
    }
    (participation, within)
}

/// Sums over all ordered connected pairs of one kind of shortest path.
#[derive(Debug, Default, Clone, Copy)]
struct PathSums {
    /// Ordered pairs i != j joined by a path.
    connected_pairs: u64,
    /// Sum of hop counts over those pairs.
    hops: u64,
    /// Sum of 1 / hops.
    inverse_hops: f64,
    /// Sum of weighted lengths (edge length 1 / w).
    lengths: f64,
    /// Sum of 1 / weighted length.
    inverse_lengths: f64,
}

impl PathSums {
    fn mean_hops(&self) -> f64 {
        if self.connected_pairs == 0 {
            f64::NAN
        } else {
            self.hops as f64 / self.connected_pairs as f64
        }
    }

    fn mean_lengths(&self) -> f64 {
        if self.connected_pairs == 0 {
            f64::NAN
        } else {
            self.lengths / self.connected_pairs as f64
        }
    }
}

/// Shortest-path sums from every source: hops by breadth-first search and, if `weighted`,
/// lengths 1 / w by Dijkstra. Sources run in parallel; their sums are added in source order so
/// the result does not depend on the thread count. Dense graphs take the bitset search and the
/// array Dijkstra, which give the same sums as the list search and the heap Dijkstra.
fn all_pairs(graph: &SimpleGraph, weighted: bool) -> PathSums {
    let node_count = graph.node_count();
    let bits = AdjacencyBits::of(graph);
    let dense = graph.targets.len().saturating_mul(DENSE_DIJKSTRA_FRACTION) >= node_count * node_count;
    let per_source: Vec<PathSums> = (0..node_count)
        .into_par_iter()
        .map_init(
            || {
                (
                    vec![u32::MAX; node_count],
                    VecDeque::new(),
                    vec![f64::INFINITY; node_count],
                    BinaryHeap::new(),
                )
            },
            |(hops, queue, lengths, heap), source| {
                let mut sums = match &bits {
                    Some(bits) => breadth_first_bits(bits, source),
                    None => breadth_first(graph, source, hops, queue),
                };
                if weighted {
                    let (total, inverse) = if dense {
                        dijkstra_dense(graph, source, lengths)
                    } else {
                        dijkstra(graph, source, lengths, heap)
                    };
                    sums.lengths = total;
                    sums.inverse_lengths = inverse;
                }
                sums
            },
        )
        .collect();
    per_source.iter().fold(PathSums::default(), |total, source| PathSums {
        connected_pairs: total.connected_pairs + source.connected_pairs,
        hops: total.hops + source.hops,
        inverse_hops: total.inverse_hops + source.inverse_hops,
        lengths: total.lengths + source.lengths,
        inverse_lengths: total.inverse_lengths + source.inverse_lengths,
    })
}

/// Graphs whose directed edge count 2E is at least N^2 / this take [`dijkstra_dense`].
const DENSE_DIJKSTRA_FRACTION: usize = 16;

/// Hop sums from `source` by a level-synchronous search over bitset rows: each level is the
/// union of the frontier's rows minus the nodes already reached. Every node of a level adds
/// 1 / level to the inverse sum, level by level, exactly as [`breadth_first`] adds them.
fn breadth_first_bits(bits: &AdjacencyBits, source: usize) -> PathSums {
    let words = bits.words;
    let mut sums = PathSums::default();
    let mut reached = vec![0u64; words];
    let mut next = vec![0u64; words];
    reached[source / 64] |= 1 << (source % 64);
    let mut frontier = vec![source as u32];
    let mut level = 0u32;
    while !frontier.is_empty() {
        level += 1;
        next.fill(0);
        for &node in &frontier {
            for (word, &row) in next.iter_mut().zip(bits.row(node as usize)) {
                *word |= row;
            }
        }
        frontier.clear();
        for (index, (word, seen)) in next.iter_mut().zip(reached.iter_mut()).enumerate() {
            *word &= !*seen;
            *seen |= *word;
            let mut remaining = *word;
            while remaining != 0 {
                frontier.push((index * 64) as u32 + remaining.trailing_zeros());
                remaining &= remaining - 1;
            }
        }
        let count = frontier.len() as u64;
        sums.connected_pairs += count;
        sums.hops += count * u64::from(level);
        let inverse = 1.0 / f64::from(level);
        for _ in 0..count {
            sums.inverse_hops += inverse;
        }
    }
    sums
}

/// [`dijkstra`] for dense graphs: the next node is found by scanning the open nodes for the
/// smallest (length, node), the order in which the heap pops them, so both settle the nodes in
/// the same order and return the same sums. O(N^2 + E) per source.
fn dijkstra_dense(graph: &SimpleGraph, source: usize, lengths: &mut [f64]) -> (f64, f64) {
    let mut open: Vec<u32> = vec![source as u32];
    let mut settled = Vec::new();
    lengths[source] = 0.0;
    let (mut total, mut inverse) = (0.0, 0.0);
    let mut done = vec![false; lengths.len()];
    while !open.is_empty() {
        let mut best = 0;
        for (position, &node) in open.iter().enumerate().skip(1) {
            let (length, best_length) = (lengths[node as usize], lengths[open[best] as usize]);
            if length < best_length || (length == best_length && node < open[best]) {
                best = position;
            }
        }
        let node = open.swap_remove(best) as usize;
        let length = lengths[node];
        done[node] = true;
        if node != source {
            total += length;
            inverse += 1.0 / length;
        }
        settled.push(node);
        let (targets, weights) = graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(weights) {
            let target = target as usize;
            if done[target] {
                continue;
            }
            let candidate = length + 1.0 / weight;
            if candidate < lengths[target] {
                if lengths[target] == f64::INFINITY {
                    open.push(target as u32);
                }
                lengths[target] = candidate;
            }
        }
    }
    for node in settled {
        lengths[node] = f64::INFINITY;
    }
    (total, inverse)
}

/// Hop counts from `source`; `hops` (all u32::MAX on entry and on return) and `queue` are
/// scratch space.
fn breadth_first(
    graph: &SimpleGraph,
    source: usize,
    hops: &mut [u32],
    queue: &mut VecDeque<u32>,
) -> PathSums {
    let mut sums = PathSums::default();
    let mut visited = vec![source as u32];
    hops[source] = 0;
    queue.push_back(source as u32);
    while let Some(node) = queue.pop_front() {
        let next = hops[node as usize] + 1;
        for &target in graph.neighbours(node as usize).0 {
            if hops[target as usize] == u32::MAX {
                hops[target as usize] = next;
                visited.push(target);
                queue.push_back(target);
                sums.connected_pairs += 1;
                sums.hops += u64::from(next);
                sums.inverse_hops += 1.0 / f64::from(next);
            }
        }
    }
    for node in visited {
        hops[node as usize] = u32::MAX;
    }
    sums
}

/// A tentative distance in Dijkstra's heap, smallest first.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Tentative {
    length: f64,
    node: u32,
}

impl Eq for Tentative {}

impl Ord for Tentative {
    fn cmp(&self, other: &Self) -> Ordering {
        // Reversed so that std's max-heap pops the shortest length; node breaks ties.
        other.length.total_cmp(&self.length).then_with(|| other.node.cmp(&self.node))
    }
}

impl PartialOrd for Tentative {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.cmp(other))
    }
}

/// (sum of lengths, sum of 1 / lengths) from `source` to every other reachable node, edge length
/// 1 / w; `lengths` (all infinite on entry and on return) and `heap` are scratch space.
fn dijkstra(
    graph: &SimpleGraph,
    source: usize,
    lengths: &mut [f64],
    heap: &mut BinaryHeap<Tentative>,
) -> (f64, f64) {
    let mut settled = Vec::new();
    lengths[source] = 0.0;
    heap.push(Tentative { length: 0.0, node: source as u32 });
    let (mut total, mut inverse) = (0.0, 0.0);
    while let Some(Tentative { length, node }) = heap.pop() {
        if length > lengths[node as usize] {
            continue;
        }
        if node as usize != source {
            total += length;
            inverse += 1.0 / length;
        }
        settled.push(node);
        let (targets, weights) = graph.neighbours(node as usize);
        for (&target, &weight) in targets.iter().zip(weights) {
            let candidate = length + 1.0 / weight;
            if candidate < lengths[target as usize] {
                lengths[target as usize] = candidate;
                heap.push(Tentative { length: candidate, node: target });
            }
        }
    }
    for node in settled {
        lengths[node as usize] = f64::INFINITY;
    }
    (total, inverse)
}

/// sigma of a graph whose transitivity and binary path length are known.
fn small_world_of(
    graph: &SimpleGraph,
    transitivity_of_graph: f64,
    path_length: f64,
    random_graphs: usize,
    seed: u64,
) -> Option<SmallWorld> {
    let edges = graph.edges();
    if random_graphs == 0 || edges.len() < 2 {
        return None;
    }
    // Parallel over random graphs; each also runs its sources in parallel (rayon nests without
    // oversubscribing), which keeps both cores busy when only one random graph is asked for.
    let randomised: Vec<(f64, f64, usize)> = (0..random_graphs)
        .into_par_iter()
        .map(|index| {
            let mut rng = crate::seed::rng(seed, SEED_STAGE, &[index as u64]);
            let mut rewired = edges.clone();
            let swaps = double_edge_swaps(&mut rewired, &mut rng);
            let random = SimpleGraph::from_binary_edges(graph.node_count(), &rewired);
            (transitivity(&random), all_pairs(&random, false).mean_hops(), swaps)
        })
        .collect();
    let count = random_graphs as f64;
    let random_clustering = randomised.iter().map(|r| r.0).sum::<f64>() / count;
    let random_path_length = randomised.iter().map(|r| r.1).sum::<f64>() / count;
    let swaps = randomised.iter().map(|r| r.2).sum();
    Some(SmallWorld {
        sigma: (transitivity_of_graph / random_clustering) / (path_length / random_path_length),
        random_clustering,
        random_path_length,
        random_graphs,
        swaps,
    })
}

/// The set of undirected edges during the swaps: a bit per node pair (upper triangle of an
/// N x N bit matrix) when that fits [`BITSET_BUDGET_BYTES`], else a hash set of pair keys. Both
/// answer the same questions, so the swaps do not depend on which is used.
enum EdgeSet {
    Bits { node_count: usize, bits: Vec<u64> },
    Hashed(HashSet<u64>),
}

impl EdgeSet {
    fn new(node_count: usize, edges: &[(u32, u32)]) -> Self {
        let mut set = if node_count.saturating_mul(node_count) / 8 <= BITSET_BUDGET_BYTES {
            EdgeSet::Bits { node_count, bits: vec![0u64; (node_count * node_count).div_ceil(64)] }
        } else {
            EdgeSet::Hashed(HashSet::with_capacity(edges.len()))
        };
        for &(a, b) in edges {
            set.set(a, b, true);
        }
        set
    }

    fn key(a: u32, b: u32) -> u64 {
        (u64::from(a.min(b)) << 32) | u64::from(a.max(b))
    }

    fn contains(&self, a: u32, b: u32) -> bool {
        match self {
            EdgeSet::Bits { node_count, bits } => {
                let index = a.min(b) as usize * node_count + a.max(b) as usize;
                bits[index / 64] & (1 << (index % 64)) != 0
            }
            EdgeSet::Hashed(set) => set.contains(&Self::key(a, b)),
        }
    }

    fn set(&mut self, a: u32, b: u32, linked: bool) {
        match self {
            EdgeSet::Bits { node_count, bits } => {
                let index = a.min(b) as usize * *node_count + a.max(b) as usize;
                if linked {
                    bits[index / 64] |= 1 << (index % 64);
                } else {
                    bits[index / 64] &= !(1 << (index % 64));
                }
            }
            EdgeSet::Hashed(set) => {
                if linked {
                    set.insert(Self::key(a, b));
                } else {
                    set.remove(&Self::key(a, b));
                }
            }
        }
    }
}

/// Rewires `edges` in place by double-edge swaps (a, b), (c, d) -> (a, d), (c, b) that keep every
/// degree and refuse self-loops and multi-edges (Maslov & Sneppen 2002); stops after
/// [`SWAPS_PER_EDGE`] x E successes or [`MAX_ATTEMPTS_PER_SWAP`] times as many attempts.
/// Returns the successful swaps.
fn double_edge_swaps(edges: &mut [(u32, u32)], rng: &mut impl Rng) -> usize {
    let edge_count = edges.len();
    if edge_count < 2 {
        return 0;
    }
    let node_count = edges.iter().map(|&(a, b)| a.max(b) as usize + 1).max().unwrap_or(0);
    let mut present = EdgeSet::new(node_count, edges);
    let wanted = SWAPS_PER_EDGE * edge_count;
    let mut swaps = 0;
    for _ in 0..MAX_ATTEMPTS_PER_SWAP * wanted {
        if swaps == wanted {
            break;
        }
        let first = rng.random_range(0..edge_count);
        let second = rng.random_range(0..edge_count);
        if first == second {
            continue;
        }
        let (a, b) = edges[first];
        let (mut c, mut d) = edges[second];
        // Either orientation of the second edge, so both rewirings of the pair are reachable.
        if rng.random_bool(0.5) {
            std::mem::swap(&mut c, &mut d);
        }
        if a == d || c == b || present.contains(a, d) || present.contains(c, b) {
            continue;
        }
        present.set(a, b, false);
        present.set(c, d, false);
        present.set(a, d, true);
        present.set(c, b, true);
        edges[first] = (a, d);
        edges[second] = (c, b);
        swaps += 1;
    }
    swaps
}

#[cfg(test)]
mod tests {
    use super::*;

    fn unit(node_count: usize, edges: &[(usize, usize)]) -> ParticipantGraph {
        let edges: Vec<(usize, usize, f64)> = edges.iter().map(|&(i, j)| (i, j, 1.0)).collect();
        ParticipantGraph::from_edges(node_count, &edges)
    }

    #[test]
    fn empty_graph_gives_empty_and_undefined_measures() {
        let graph = ParticipantGraph::from_edges(0, &[]);
        let nodes = node_measures(&graph, &[], LabelZero::Module);
        assert!(nodes.degree.is_empty() && nodes.participation.is_empty());
        let whole = graph_measures(&graph, 5, 1);
        assert!(whole.mean_clustering.is_nan(), "no nodes: mean clustering undefined");
        assert!(whole.path_length.is_nan() && whole.path_length_weighted.is_nan());
        assert_eq!(whole.transitivity, 0.0);
        assert_eq!(whole.efficiency, 0.0);
        assert_eq!(whole.small_world, None);
    }

    #[test]
    fn isolated_nodes_have_zero_clustering_and_participation() {
        // Nodes 3 and 4 are isolated; node 2 has one neighbour.
        let graph = unit(5, &[(0, 1), (1, 2)]);
        let nodes = node_measures(&graph, &[1, 1, 2, 2, 3], LabelZero::Module);
        assert_eq!(nodes.degree, vec![1, 2, 1, 0, 0]);
        for node in [0, 1, 2, 3, 4] {
            assert_eq!(nodes.clustering[node], 0.0, "node {node}: k < 2 or no triangle");
            assert_eq!(nodes.clustering_weighted[node], 0.0);
        }
        assert_eq!(nodes.participation[3], 0.0, "no edges: P = 0 by convention");
        assert_eq!(nodes.within_module_z[4], 0.0, "one-node module: sd 0, z = 0 by convention");
        let whole = graph_measures(&graph, 3, 1);
        // Connected ordered pairs: 0-1, 1-2 (1 hop), 0-2 (2 hops), both ways: (1+1+2)*2/6 = 4/3.
        assert!((whole.path_length - 4.0 / 3.0).abs() < 1e-12);
        // Efficiency over all 20 ordered pairs: 2 * (1 + 1 + 1/2) / 20 = 0.25.
        assert!((whole.efficiency - 0.25).abs() < 1e-12);
    }

    #[test]
    fn unassigned_nodes_get_nan_and_are_left_out_of_the_module_measures_of_others() {
        // Path 0-1-2 with node 2 unassigned: node 1 sees only module 1, so P = 0.
        let graph = unit(3, &[(0, 1), (1, 2)]);
        let nodes = node_measures(&graph, &[1, 1, 0], LabelZero::Unassigned);
        assert!(nodes.participation[2].is_nan() && nodes.within_module_z[2].is_nan());
        assert_eq!(nodes.participation[1], 0.0);
        let as_module = node_measures(&graph, &[1, 1, 0], LabelZero::Module);
        // Node 1: half its strength to each module, P = 1 - 2 (1/2)^2 = 0.5.
        assert!((as_module.participation[1] - 0.5).abs() < 1e-12);
    }

    #[test]
    fn self_loops_parallel_edges_and_non_positive_weights_are_read_as_documented() {
        let graph = ParticipantGraph::from_edges(
            3,
            &[(0, 0, 5.0), (0, 1, 1.0), (0, 1, 2.0), (1, 2, 0.0), (0, 2, f64::NAN)],
        );
        let nodes = node_measures(&graph, &[0, 0, 0], LabelZero::Module);
        assert_eq!(nodes.degree, vec![1, 1, 0]);
        assert!((nodes.strength[0] - 3.0).abs() < 1e-12, "parallel edges add, self-loop left out");
    }

    #[test]
    fn graphs_too_small_or_too_rigid_to_rewire() {
        let single_edge = unit(2, &[(0, 1)]);
        assert_eq!(small_world_sigma(&single_edge, 10, 1), None);
        assert_eq!(small_world_sigma(&unit(4, &[(0, 1), (2, 3)]), 0, 1), None, "no random graph asked");
        // A triangle admits no swap: it is its own randomisation, sigma = 1.
        let triangle = unit(3, &[(0, 1), (1, 2), (0, 2)]);
        let sw = small_world_sigma(&triangle, 4, 1).unwrap();
        assert_eq!(sw.swaps, 0);
        assert!((sw.sigma - 1.0).abs() < 1e-12);
        // A star likewise (every swap would make a self-loop or a multi-edge).
        let star = unit(5, &[(0, 1), (0, 2), (0, 3), (0, 4)]);
        let sw = small_world_sigma(&star, 2, 1).unwrap();
        assert_eq!(sw.swaps, 0);
        assert!(sw.sigma.is_nan(), "no triangles in graph or random graphs: 0/0");
        // Two disjoint edges can swap into two other disjoint edges; degrees stay 1.
        let pair = unit(4, &[(0, 1), (2, 3)]);
        let sw = small_world_sigma(&pair, 3, 1).unwrap();
        assert!(sw.swaps > 0);
        assert!((sw.random_path_length - 1.0).abs() < 1e-12);
    }

    /// A weighted graph of 60 nodes with about a third of the pairs linked, two components and
    /// an isolated node, weights from a fixed hash (deterministic, no seed needed).
    fn hashed_graph() -> SimpleGraph {
        let mut edges = Vec::new();
        for i in 0..60usize {
            for j in (i + 1)..60 {
                let hash = (i * 7919 + j * 104_729) % 97;
                let same_side = (i < 40) == (j < 40);
                if same_side && hash < 33 && i != 59 && j != 59 {
                    edges.push((i, j, 0.05 + (hash as f64) / 40.0));
                }
            }
        }
        SimpleGraph::from_participant_graph(&ParticipantGraph::from_edges(60, &edges))
    }

    #[test]
    fn dense_and_sparse_paths_give_identical_sums() {
        // The bitset search and the array Dijkstra must give bit-identical sums to the list
        // search and the heap Dijkstra they replace on dense graphs.
        let graph = hashed_graph();
        let bits = AdjacencyBits::of(&graph).unwrap();
        let node_count = graph.node_count();
        let (mut hops, mut queue) = (vec![u32::MAX; node_count], VecDeque::new());
        let (mut lengths, mut heap) = (vec![f64::INFINITY; node_count], BinaryHeap::new());
        let mut reached_pairs = 0;
        for source in 0..node_count {
            let list = breadth_first(&graph, source, &mut hops, &mut queue);
            let set = breadth_first_bits(&bits, source);
            assert_eq!(list.connected_pairs, set.connected_pairs);
            assert_eq!(list.hops, set.hops);
            assert_eq!(list.inverse_hops.to_bits(), set.inverse_hops.to_bits());
            let heap_sums = dijkstra(&graph, source, &mut lengths, &mut heap);
            let array_sums = dijkstra_dense(&graph, source, &mut lengths);
            assert_eq!(heap_sums.0.to_bits(), array_sums.0.to_bits());
            assert_eq!(heap_sums.1.to_bits(), array_sums.1.to_bits());
            reached_pairs += list.connected_pairs;
        }
        // 40 + 19 nodes in two components and node 59 alone: 40 * 39 + 19 * 18 ordered pairs.
        assert_eq!(reached_pairs, 40 * 39 + 19 * 18);
        for node in 0..node_count {
            let row = bits.row(node);
            let by_bits: usize = graph
                .neighbours(node)
                .0
                .iter()
                .map(|&j| {
                    row.iter()
                        .zip(bits.row(j as usize))
                        .map(|(a, b)| (a & b).count_ones() as usize)
                        .sum::<usize>()
                })
                .sum();
            assert_eq!(by_bits, linked_pairs_at(&graph, node));
        }
    }

    #[test]
    fn edge_sets_agree_whatever_their_storage() {
        let edges = [(0u32, 5u32), (3, 1), (4, 2)];
        let mut bits = EdgeSet::new(6, &edges);
        assert!(matches!(bits, EdgeSet::Bits { .. }));
        let mut hashed = EdgeSet::Hashed(edges.iter().map(|&(a, b)| EdgeSet::key(a, b)).collect());
        for set in [&mut bits, &mut hashed] {
            assert!(set.contains(5, 0) && set.contains(1, 3) && !set.contains(0, 1));
            set.set(1, 3, false);
            set.set(2, 5, true);
            assert!(!set.contains(3, 1) && set.contains(5, 2));
        }
    }

    #[test]
    fn double_edge_swaps_keep_every_degree() {
        let graph =
            unit(8, &[(0, 1), (0, 2), (0, 3), (1, 2), (3, 4), (4, 5), (5, 6), (6, 7), (7, 4), (2, 6)]);
        let simple = SimpleGraph::from_participant_graph(&graph);
        let mut edges = simple.edges();
        let mut rng = crate::seed::rng(3, "test", &[]);
        assert!(double_edge_swaps(&mut edges, &mut rng) > 0);
        let rewired = SimpleGraph::from_binary_edges(8, &edges);
        for node in 0..8 {
            assert_eq!(rewired.degree(node), simple.degree(node), "node {node}");
            let targets = rewired.neighbours(node).0;
            assert!(targets.windows(2).all(|pair| pair[0] < pair[1]), "no multi-edge at {node}");
            assert!(!targets.contains(&(node as u32)), "no self-loop at {node}");
        }
    }
}
