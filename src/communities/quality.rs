//! Partition quality: modularity with a resolution parameter.

use crate::graph::ParticipantGraph;

/// Modularity of a partition of a weighted undirected graph.
///
/// Q = sum_c [ L_c / m - gamma * (d_c / 2m)^2 ], where m is the total edge weight, L_c the
/// weight of edges inside community c (a self-loop counted once) and d_c the summed strength of
/// its nodes (a self-loop counted twice). This is networkx's `modularity` convention.
///
/// # Arguments
/// * `graph`: the graph; `membership[v]`: community label of node v (any integers).
/// * `resolution`: gamma; 1 gives Newman-Girvan modularity.
///
/// # Returns
/// Q, or 0 for a graph without edges.
///
/// # Complexity
/// O(n + E).
///
/// # References
/// Newman & Girvan 2004, Phys Rev E 69:026113; resolution: Reichardt & Bornholdt 2006,
/// Phys Rev E 74:016110.
pub fn modularity(graph: &ParticipantGraph, membership: &[usize], resolution: f64) -> f64 {
    let total = graph.total_weight();
    if total <= 0.0 {
        return 0.0;
    }
    let labels = membership.iter().copied().max().map_or(0, |max| max + 1);
    let mut inside = vec![0.0f64; labels];
    let mut strength = vec![0.0f64; labels];
    for node in 0..graph.node_count() {
        let community = membership[node];
        let (targets, weights) = graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(weights) {
            strength[community] += weight;
            if membership[target as usize] == community {
                inside[community] += weight / 2.0;
            }
        }
        inside[community] += graph.self_loops[node];
        strength[community] += 2.0 * graph.self_loops[node];
    }
    inside.iter().zip(&strength).map(|(&l, &d)| l / total - resolution * (d / (2.0 * total)).powi(2)).sum()
}
