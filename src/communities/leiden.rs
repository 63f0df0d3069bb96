//! Leiden community detection (modularity or the constant Potts model), and CPM quality.
//!
//! A second community-detection method beside Louvain: one seeded trial on one participant graph
//! returns one label per participant. Like Louvain it moves nodes and aggregates, but it refines
//! each community into well-connected sub-communities before aggregating, so every community it
//! returns is connected (Louvain's can be disconnected). Choosing the best of several trials and
//! the consensus over densities stay with the callers in this stage.

use std::collections::VecDeque;

use rand::seq::SliceRandom;
use rand::Rng;

use super::louvain::{aggregate, renumber};
use crate::graph::ParticipantGraph;

/// A move or merge must raise the quality by more than this to count (guards against
/// floating-point oscillation between equal-quality moves; the value Louvain uses, common
/// practice in Louvain and Leiden implementations).
const MIN_GAIN: f64 = 1e-12;

/// Hard cap on full Leiden iterations; the partition stops changing after a handful in practice
/// (Traag et al. 2019 report convergence within about ten iterations on their benchmarks).
const MAX_ITERATIONS: usize = 1000;

/// Quality function optimised by Leiden.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LeidenQuality {
    /// Modularity with resolution gamma (1 = Newman-Girvan): gain k_v,C - gamma k_v K_C / 2m.
    Modularity { resolution: f64 },
    /// Constant Potts model (Traag, Van Dooren & Nesterov 2011): Q = sum_c (e_c - gamma * n_c (n_c - 1) / 2),
    /// node sizes n = number of original nodes; this is leidenalg's CPMVertexPartition convention.
    /// (leidenalg's `quality()` reports twice this value for undirected graphs.)
    Cpm { resolution: f64 },
}

/// Leiden community detection (one seeded trial).
///
/// Maximises the chosen quality H. Both qualities share one form of the gain of moving node v
/// (size ||v||) into community C (size ||C||, v's weight to it w_v,C):
/// dH = w_v,C - g * ||v|| * ||C||, with ||v|| = k_v (strength, a self-loop counted twice) and
/// g = gamma / 2m for modularity, and ||v|| = number of original nodes and g = gamma for CPM.
///
/// One iteration repeats three phases until every community of the current level is a single
/// node:
/// 1. fast local moving: a queue of nodes in random order; each node moves to the neighbouring
///    (or an empty) community of largest gain if the gain is positive, and its neighbours
///    outside its new community are queued again;
/// 2. refinement: within each community S, starting from singletons and visiting nodes in random
///    order, a singleton v that is well connected to S (w_v,S-v >= g ||v|| (||S|| - ||v||)) merges
///    into the sub-community C of S, itself well connected (w_C,S-C >= g ||C|| (||S|| - ||C||)),
///    of largest non-negative gain. The choice is greedy, the theta -> 0 limit of the paper's
///    randomised choice (Algorithm A.2, MergeNodesSubset);
/// 3. aggregation: refined sub-communities become nodes (internal weight becomes self-loops,
///    sizes add), and the aggregate starts from the non-refined partition.
///
/// Iterations start again from the original graph with the last partition, until the partition
/// no longer changes (leidenalg's `n_iterations = -1`).
///
/// # Arguments
/// * `graph`: weighted undirected graph with non-negative weights.
/// * `quality`: modularity or CPM, with its resolution gamma.
/// * `rng`: the trial's generator (node orders); the result is a function of its state.
///
/// # Returns
/// Community label per node, 0..k in order of first appearance; every community is connected.
/// A graph without edge weight gives singletons.
///
/// # Complexity
/// With n nodes and E edges: O(n + E) per pass of the queue over all nodes, O(n + E log E) per
/// refinement and aggregation; a handful of levels and iterations in practice.
///
/// # References
/// Traag, Waltman & van Eck 2019, Sci Rep 9:5233 (Algorithm A.2); CPM: Traag, Van Dooren &
/// Nesterov 2011, Phys Rev E 84:016114.
pub fn leiden<R: Rng>(graph: &ParticipantGraph, quality: LeidenQuality, rng: &mut R) -> Vec<usize> {
    let node_count = graph.node_count();
    let mut membership: Vec<usize> = (0..node_count).collect();
    let total = graph.total_weight();
    if total <= 0.0 {
        return membership;
    }
    let (scale, sizes) = match quality {
        LeidenQuality::Modularity { resolution } => (resolution / (2.0 * total), graph.strengths()),
        LeidenQuality::Cpm { resolution } => (resolution, vec![1.0; node_count]),
    };
    for _ in 0..MAX_ITERATIONS {
        let next = iteration(graph, &sizes, scale, &membership, rng);
        if next == membership {
            break;
        }
        membership = next;
    }
    membership
}

/// Constant Potts model quality of a partition.
///
/// Q = sum_c (e_c - gamma * n_c (n_c - 1) / 2), where e_c is the weight of edges inside
/// community c (a self-loop counted once) and n_c its number of nodes. leidenalg's
/// `CPMVertexPartition.quality()` reports 2Q for undirected graphs.
///
/// # Arguments
/// * `graph`: the graph; `membership[v]`: community label of node v (any integers).
/// * `resolution`: gamma, the density a community must exceed to be worth forming.
///
/// # Returns
/// Q (0 for singletons of a graph without edges).
///
/// # Complexity
/// O(n + E) for n nodes and E edges.
///
/// # References
/// Traag, Van Dooren & Nesterov 2011, Phys Rev E 84:016114.
pub fn cpm_quality(graph: &ParticipantGraph, membership: &[usize], resolution: f64) -> f64 {
    let labels = membership.iter().copied().max().map_or(0, |max| max + 1);
    let mut inside = vec![0.0f64; labels];
    let mut members = vec![0usize; labels];
    for node in 0..graph.node_count() {
        let community = membership[node];
        members[community] += 1;
        inside[community] += graph.self_loops[node];
        let (targets, weights) = graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(weights) {
            if membership[target as usize] == community {
                // Each internal edge is seen from both ends.
                inside[community] += weight / 2.0;
            }
        }
    }
    inside.iter().zip(&members).map(|(&e, &n)| e - resolution * (n as f64) * (n as f64 - 1.0) / 2.0).sum()
}

/// One Leiden iteration from `membership` (labels < node count): levels of moving, refinement
/// and aggregation until each community of a level is one node. Returns renumbered labels.
fn iteration<R: Rng>(
    graph: &ParticipantGraph,
    sizes: &[f64],
    scale: f64,
    membership: &[usize],
    rng: &mut R,
) -> Vec<usize> {
    let mut level = graph.clone();
    let mut level_sizes = sizes.to_vec();
    let mut partition = membership.to_vec();
    // Level node holding each original node.
    let mut level_node: Vec<usize> = (0..graph.node_count()).collect();
    loop {
        move_nodes_fast(&level, &level_sizes, scale, &mut partition, rng);
        let (moved, community_count) = renumber(&partition);
        partition = moved;
        if community_count == level.node_count() {
            break;
        }
        let (refined, refined_count) = renumber(&refine(&level, &level_sizes, scale, &partition, rng));
        // No merge in any community: aggregating would give the same level again (leidenalg
        // stops here too). Communities are then unions of the current nodes.
        if refined_count == level.node_count() {
            break;
        }
        let mut aggregate_sizes = vec![0.0f64; refined_count];
        let mut aggregate_partition = vec![0usize; refined_count];
        for node in 0..level.node_count() {
            aggregate_sizes[refined[node]] += level_sizes[node];
            // A refined sub-community lies inside one community of the moved partition.
            aggregate_partition[refined[node]] = partition[node];
        }
        for node in level_node.iter_mut() {
            *node = refined[*node];
        }
        level = aggregate(&level, &refined, refined_count);
        level_sizes = aggregate_sizes;
        partition = aggregate_partition;
    }
    renumber(&level_node.iter().map(|&node| partition[node]).collect::<Vec<_>>()).0
}

/// Fast local moving (Algorithm A.2, MoveNodesFast): `community` (labels < node count) is
/// improved in place until the queue is empty.
fn move_nodes_fast<R: Rng>(
    graph: &ParticipantGraph,
    sizes: &[f64],
    scale: f64,
    community: &mut [usize],
    rng: &mut R,
) {
    let node_count = graph.node_count();
    let mut community_size = vec![0.0f64; node_count];
    let mut member_count = vec![0usize; node_count];
    for (node, &label) in community.iter().enumerate() {
        community_size[label] += sizes[node];
        member_count[label] += 1;
    }
    let mut empty: Vec<usize> = (0..node_count).filter(|&label| member_count[label] == 0).collect();
    let mut order: Vec<usize> = (0..node_count).collect();
    order.shuffle(rng);
    let mut queue: VecDeque<usize> = order.into();
    let mut queued = vec![true; node_count];
    let mut weight_to = vec![0.0f64; node_count];
    let mut seen = vec![false; node_count];
    let mut touched: Vec<usize> = Vec::new();
    while let Some(node) = queue.pop_front() {
        queued[node] = false;
        let current = community[node];
        let size = sizes[node];
        let (targets, weights) = graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(weights) {
            let label = community[target as usize];
            if !seen[label] {
                seen[label] = true;
                touched.push(label);
            }
            weight_to[label] += weight;
        }
        community_size[current] -= size;
        let mut best = current;
        let mut best_gain = weight_to[current] - scale * size * community_size[current];
        for &label in &touched {
            let gain = weight_to[label] - scale * size * community_size[label];
            if gain > best_gain + MIN_GAIN {
                best = label;
                best_gain = gain;
            }
        }
        // An empty community (gain 0) is a distinct option only when the node is not alone; a
        // community with two or more members leaves some label of 0..node_count unused.
        let to_empty = member_count[current] > 1 && 0.0 > best_gain + MIN_GAIN;
        if to_empty {
            best = empty.pop().expect("a label is free when a community has two members");
        }
        community_size[best] += size;
        if best != current {
            member_count[current] -= 1;
            if member_count[current] == 0 {
                empty.push(current);
            }
            member_count[best] += 1;
            community[node] = best;
            for &target in targets {
                let target = target as usize;
                if !queued[target] && community[target] != best {
                    queued[target] = true;
                    queue.push_back(target);
                }
            }
        }
        for &label in &touched {
            weight_to[label] = 0.0;
            seen[label] = false;
        }
        touched.clear();
    }
}

/// Refinement (Algorithm A.2, RefinePartition with a greedy MergeNodesSubset): splits each
/// community of `partition` into well-connected sub-communities, merging singletons only.
/// Sub-communities grow along edges, so each is connected.
fn refine<R: Rng>(
    graph: &ParticipantGraph,
    sizes: &[f64],
    scale: f64,
    partition: &[usize],
    rng: &mut R,
) -> Vec<usize> {
    let node_count = graph.node_count();
    let mut community_size = vec![0.0f64; node_count];
    // Weight from each node to the rest of its community, w_v,S-v.
    let mut inside = vec![0.0f64; node_count];
    for node in 0..node_count {
        community_size[partition[node]] += sizes[node];
        let (targets, weights) = graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(weights) {
            if partition[target as usize] == partition[node] {
                inside[node] += weight;
            }
        }
    }
    let mut refined: Vec<usize> = (0..node_count).collect();
    let mut refined_size = sizes.to_vec();
    let mut refined_members = vec![1usize; node_count];
    // Weight from each sub-community C to the rest of its community, w_C,S-C.
    let mut outside = inside.clone();
    let mut order: Vec<usize> = (0..node_count).collect();
    order.shuffle(rng);
    let mut weight_to = vec![0.0f64; node_count];
    let mut seen = vec![false; node_count];
    let mut touched: Vec<usize> = Vec::new();
    for &node in &order {
        let own = refined[node];
        if refined_members[own] != 1 {
            continue;
        }
        let community = partition[node];
        let total = community_size[community];
        let size = sizes[node];
        if inside[node] < scale * size * (total - size) - MIN_GAIN {
            continue;
        }
        let (targets, weights) = graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(weights) {
            let target = target as usize;
            if partition[target] != community {
                continue;
            }
            let label = refined[target];
            if !seen[label] {
                seen[label] = true;
                touched.push(label);
            }
            weight_to[label] += weight;
        }
        // Staying a singleton has gain 0; merges need a positive gain.
        let mut best = own;
        let mut best_gain = 0.0;
        for &label in &touched {
            let label_size = refined_size[label];
            if outside[label] < scale * label_size * (total - label_size) - MIN_GAIN {
                continue;
            }
            let gain = weight_to[label] - scale * size * label_size;
            if gain > best_gain + MIN_GAIN {
                best = label;
                best_gain = gain;
            }
        }
        if best != own {
            outside[best] += inside[node] - 2.0 * weight_to[best];
            refined_size[best] += size;
            refined_members[best] += 1;
            refined_members[own] = 0;
            refined[node] = best;
        }
        for &label in &touched {
            weight_to[label] = 0.0;
            seen[label] = false;
        }
        touched.clear();
    }
    refined
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::communities::modularity;

    fn two_triangles() -> ParticipantGraph {
        let edges =
            [(0, 1, 1.0), (1, 2, 1.0), (0, 2, 1.0), (3, 4, 1.0), (4, 5, 1.0), (3, 5, 1.0), (2, 3, 1.0)];
        ParticipantGraph::from_edges(6, &edges)
    }

    #[test]
    fn two_triangles_joined_by_an_edge_give_the_triangles() {
        // Common practice: the textbook two-triangle graph splits into its triangles, for
        // modularity (Q = 5/14, analytic) and for CPM at gamma = 0.5 (analytic: triangles
        // 2 (3 - 0.5 * 3) = 3, one community 7 - 0.5 * 15 = -0.5).
        let graph = two_triangles();
        for quality in [LeidenQuality::Modularity { resolution: 1.0 }, LeidenQuality::Cpm { resolution: 0.5 }]
        {
            for trial in 0..5 {
                let mut rng = crate::seed::rng(7, "test", &[trial]);
                assert_eq!(leiden(&graph, quality, &mut rng), vec![0, 0, 0, 1, 1, 1], "{quality:?}");
            }
        }
        let mut rng = crate::seed::rng(7, "test", &[0]);
        let labels = leiden(&graph, LeidenQuality::Modularity { resolution: 1.0 }, &mut rng);
        assert!((modularity(&graph, &labels, 1.0) - 5.0 / 14.0).abs() < 1e-12);
    }

    #[test]
    fn graph_without_edges_gives_singletons() {
        // Common practice: no edge weight, nothing to group.
        let graph = ParticipantGraph::from_edges(4, &[]);
        let mut rng = crate::seed::rng(7, "test", &[0]);
        for quality in [LeidenQuality::Modularity { resolution: 1.0 }, LeidenQuality::Cpm { resolution: 0.5 }]
        {
            assert_eq!(leiden(&graph, quality, &mut rng), vec![0, 1, 2, 3]);
        }
        assert!(cpm_quality(&graph, &[0, 1, 2, 3], 0.5).abs() < 1e-12);
    }

    #[test]
    fn self_loops_count_twice_in_strength() {
        // Analytic: two nodes with self-loops of 10 joined by an edge of 1 (m = 21). Apart,
        // Q = 2 (10/21 - (21/42)^2) = 0.452; together Q = 0. Ignoring the self-loops in the
        // strengths would make the merge look profitable.
        let graph = ParticipantGraph::from_edges(2, &[(0, 0, 10.0), (1, 1, 10.0), (0, 1, 1.0)]);
        let mut rng = crate::seed::rng(7, "test", &[0]);
        let labels = leiden(&graph, LeidenQuality::Modularity { resolution: 1.0 }, &mut rng);
        assert_eq!(labels, vec![0, 1]);
        assert!((modularity(&graph, &labels, 1.0) - (20.0 / 21.0 - 0.5)).abs() < 1e-12);
    }

    #[test]
    fn cpm_quality_of_two_triangles() {
        // Analytic: triangles at gamma = 0.1: 2 (3 - 0.1 * 3) = 5.4; one community:
        // 7 - 0.1 * 15 = 5.5 (so at this resolution CPM prefers one community); a self-loop
        // counts once inside its community: 2 + 1 - 1 * 2 * 1 / 2 = 2.
        let graph = two_triangles();
        assert!((cpm_quality(&graph, &[0, 0, 0, 1, 1, 1], 0.1) - 5.4).abs() < 1e-12);
        assert!((cpm_quality(&graph, &[0; 6], 0.1) - 5.5).abs() < 1e-12);
        let looped = ParticipantGraph::from_edges(2, &[(0, 0, 2.0), (0, 1, 1.0)]);
        assert!((cpm_quality(&looped, &[0, 0], 1.0) - 2.0).abs() < 1e-12);
    }

    #[test]
    fn same_generator_state_gives_the_same_partition() {
        // Common practice: a trial is a function of its seed.
        let graph = two_triangles();
        let quality = LeidenQuality::Cpm { resolution: 0.4 };
        let first = leiden(&graph, quality, &mut crate::seed::rng(3, "test", &[1]));
        let second = leiden(&graph, quality, &mut crate::seed::rng(3, "test", &[1]));
        assert_eq!(first, second);
    }
}
