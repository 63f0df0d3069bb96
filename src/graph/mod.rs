//! Stage 4: similarity matrix to participant graphs in compressed sparse rows, and their measures.
//!
//! Proportional-density thresholds keep the strongest positive similarities, k-nearest-neighbour
//! graphs each participant's most similar others, absolute thresholds every similarity above a
//! value; negative and zero similarities never become edges, and participants left without an edge are reported by the
//! communities stage. Community detection itself is the next stage's job.

mod file;
pub mod measures;
mod sweep;
mod threshold;

pub use file::{read_graph, GraphFile};
pub use sweep::{EdgeWeights, Neighbours, SweepGraphs, SweepLevel};
pub use threshold::{proportional_threshold, RankedPairs};

/// A weighted undirected graph in compressed sparse rows (both directions stored), with
/// self-loops kept apart (aggregated graphs of Louvain carry them).
#[derive(Debug, Clone)]
pub struct ParticipantGraph {
    /// Row offsets into `targets` / `weights`, length node_count + 1.
    pub offsets: Vec<usize>,
    /// Neighbour of each stored direction.
    pub targets: Vec<u32>,
    /// Weight of each stored direction.
    pub weights: Vec<f64>,
    /// Self-loop weight per node (0 if none).
    pub self_loops: Vec<f64>,
}

impl ParticipantGraph {
    /// Builds a graph from undirected edges `(i, j, w)`; `i == j` is a self-loop; parallel edges add.
    pub fn from_edges(node_count: usize, edges: &[(usize, usize, f64)]) -> Self {
        let mut degree = vec![0usize; node_count];
        let mut self_loops = vec![0.0; node_count];
        for &(i, j, weight) in edges {
            if i == j {
                self_loops[i] += weight;
            } else {
                degree[i] += 1;
                degree[j] += 1;
            }
        }
        let mut offsets = vec![0usize; node_count + 1];
        for node in 0..node_count {
            offsets[node + 1] = offsets[node] + degree[node];
        }
        let mut cursor = offsets.clone();
        let mut targets = vec![0u32; offsets[node_count]];
        let mut weights = vec![0.0f64; offsets[node_count]];
        for &(i, j, weight) in edges {
            if i == j {
                continue;
            }
            targets[cursor[i]] = j as u32;
            weights[cursor[i]] = weight;
            cursor[i] += 1;
            targets[cursor[j]] = i as u32;
            weights[cursor[j]] = weight;
            cursor[j] += 1;
        }
        ParticipantGraph { offsets, targets, weights, self_loops }
    }

    /// Number of nodes.
    pub fn node_count(&self) -> usize {
        self.self_loops.len()
    }

    /// Number of undirected edges between distinct nodes.
    pub fn edge_count(&self) -> usize {
        self.targets.len() / 2
    }

    /// Neighbours and weights of `node`.
    pub fn neighbours(&self, node: usize) -> (&[u32], &[f64]) {
        let range = self.offsets[node]..self.offsets[node + 1];
        (&self.targets[range.clone()], &self.weights[range])
    }

    /// Strength of each node: sum of its edge weights, a self-loop counted twice (the convention
    /// of modularity, Newman 2004).
    pub fn strengths(&self) -> Vec<f64> {
        (0..self.node_count())
            .map(|node| self.neighbours(node).1.iter().sum::<f64>() + 2.0 * self.self_loops[node])
            .collect()
    }

    /// Total undirected weight m (each edge once, self-loops once).
    pub fn total_weight(&self) -> f64 {
        self.weights.iter().sum::<f64>() / 2.0 + self.self_loops.iter().sum::<f64>()
    }

    /// Nodes with no edge and no self-loop.
    pub fn isolated(&self) -> Vec<usize> {
        (0..self.node_count())
            .filter(|&node| self.offsets[node] == self.offsets[node + 1] && self.self_loops[node] == 0.0)
            .collect()
    }
}
