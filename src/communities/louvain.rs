//! Louvain modularity optimisation.

use rand::seq::SliceRandom;
use rand::Rng;

use crate::graph::ParticipantGraph;

/// A move must raise the gain by more than this to count (guards against floating-point
/// oscillation between equal-quality moves; common practice in Louvain implementations).
const MIN_GAIN: f64 = 1e-12;

/// Hard cap on local-moving passes per level; Louvain converges in a few passes in practice.
const MAX_PASSES: usize = 1000;

/// Louvain community detection (one seeded trial).
///
/// Repeats two phases until no node moves: local moving (nodes visited in a random order, each
/// moved to the neighbouring community of largest modularity gain
/// dQ = k_i,c - gamma * tot_c * k_i / 2m, up to the constant factor 1/m) and aggregation
/// (communities become nodes, internal weight becomes self-loops).
///
/// # Arguments
/// * `graph`: weighted undirected graph with non-negative weights.
/// * `resolution`: gamma.
/// * `rng`: the trial's generator (node orders).
///
/// # Returns
/// Community label per node, 0..k in order of first appearance.
///
/// # Complexity
/// O(E) per pass; a handful of passes and levels in practice.
///
/// # References
/// Blondel, Guillaume, Lambiotte & Lefebvre 2008, J Stat Mech P10008.
pub fn louvain<R: Rng>(graph: &ParticipantGraph, resolution: f64, rng: &mut R) -> Vec<usize> {
    let node_count = graph.node_count();
    let mut membership: Vec<usize> = (0..node_count).collect();
    if graph.total_weight() <= 0.0 {
        return membership;
    }
    let mut level = graph.clone();
    loop {
        let (local, moved) = local_moving(&level, resolution, rng);
        if !moved {
            break;
        }
        let (local, count) = renumber(&local);
        for label in membership.iter_mut() {
            *label = local[*label];
        }
        if count == level.node_count() {
            break;
        }
        level = aggregate(&level, &local, count);
    }
    renumber(&membership).0
}

/// Labels renumbered 0..k in order of first appearance, and k.
pub fn renumber(labels: &[usize]) -> (Vec<usize>, usize) {
    let mut map = std::collections::HashMap::new();
    let renumbered = labels
        .iter()
        .map(|label| {
            let next = map.len();
            *map.entry(*label).or_insert(next)
        })
        .collect();
    (renumbered, map.len())
}

fn local_moving<R: Rng>(graph: &ParticipantGraph, resolution: f64, rng: &mut R) -> (Vec<usize>, bool) {
    let node_count = graph.node_count();
    let strengths = graph.strengths();
    let two_m = 2.0 * graph.total_weight();
    let mut community: Vec<usize> = (0..node_count).collect();
    let mut total: Vec<f64> = strengths.clone();
    let mut order: Vec<usize> = (0..node_count).collect();
    order.shuffle(rng);
    let mut weight_to = vec![0.0f64; node_count];
    let mut touched: Vec<usize> = Vec::new();
    let mut moved_any = false;
    for _ in 0..MAX_PASSES {
        let mut moved = false;
        for &node in &order {
            let current = community[node];
            let k = strengths[node];
            let (targets, weights) = graph.neighbours(node);
            for (&target, &weight) in targets.iter().zip(weights) {
                let c = community[target as usize];
                if weight_to[c] == 0.0 {
                    touched.push(c);
                }
                weight_to[c] += weight;
            }
            total[current] -= k;
            let scale = resolution * k / two_m;
            let mut best = current;
            let mut best_gain = weight_to[current] - scale * total[current];
            for &c in &touched {
                let gain = weight_to[c] - scale * total[c];
                if gain > best_gain + MIN_GAIN {
                    best = c;
                    best_gain = gain;
                }
            }
            total[best] += k;
            if best != current {
                community[node] = best;
                moved = true;
                moved_any = true;
            }
            for &c in &touched {
                weight_to[c] = 0.0;
            }
            touched.clear();
        }
        if !moved {
            break;
        }
    }
    (community, moved_any)
}

/// Aggregate graph of `community` (labels 0..count): communities become nodes, internal weight
/// becomes self-loops (shared with Leiden).
pub(super) fn aggregate(graph: &ParticipantGraph, community: &[usize], count: usize) -> ParticipantGraph {
    let mut self_loops = vec![0.0f64; count];
    let mut maps: Vec<std::collections::BTreeMap<usize, f64>> = vec![Default::default(); count];
    for node in 0..graph.node_count() {
        let c = community[node];
        self_loops[c] += graph.self_loops[node];
        let (targets, weights) = graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(weights) {
            let d = community[target as usize];
            if c == d {
                // Each internal edge is seen from both ends.
                self_loops[c] += weight / 2.0;
            } else if c < d {
                *maps[c].entry(d).or_insert(0.0) += weight;
            }
        }
    }
    let mut edges: Vec<(usize, usize, f64)> = Vec::new();
    for (c, map) in maps.iter().enumerate() {
        for (&d, &weight) in map {
            edges.push((c, d, weight));
        }
    }
    for (c, &weight) in self_loops.iter().enumerate() {
        if weight > 0.0 {
            edges.push((c, c, weight));
        }
    }
    ParticipantGraph::from_edges(count, &edges)
}
