//! The graph rules of the sweep: proportional density, k nearest neighbours, absolute threshold;
//! weighted or binary edges.

use rayon::prelude::*;
use serde::Serialize;

use super::{ParticipantGraph, RankedPairs};
use crate::similarity::SimilarityMatrix;

/// How one graph of the sweep is cut from the similarity matrix.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "rule", content = "parameter", rename_all = "snake_case")]
pub enum SweepLevel {
    /// Keep the strongest positive similarities, this fraction of all participant pairs.
    Density(f64),
    /// Link each participant to its k most similar participants (positive similarities only);
    /// an edge when either lists the other.
    Neighbours(usize),
    /// As `Neighbours`, but an edge only when each lists the other (mutual k nearest neighbours).
    MutualNeighbours(usize),
    /// Keep every similarity at or above this value (and above zero).
    Threshold(f64),
}

impl SweepLevel {
    /// The rule's name, as in sweep.tsv's `graph` column.
    pub fn rule(&self) -> &'static str {
        match self {
            SweepLevel::Density(_) => "density",
            SweepLevel::Neighbours(_) => "knn",
            SweepLevel::MutualNeighbours(_) => "mutual_knn",
            SweepLevel::Threshold(_) => "absolute",
        }
    }

    /// The rule's parameter (density, k or threshold).
    pub fn parameter(&self) -> f64 {
        match *self {
            SweepLevel::Density(value) | SweepLevel::Threshold(value) => value,
            SweepLevel::Neighbours(k) | SweepLevel::MutualNeighbours(k) => k as f64,
        }
    }
}

/// Edge weights of the participant graphs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
pub enum EdgeWeights {
    /// The similarity itself.
    Weighted,
    /// 1 for every kept pair.
    Binary,
}

/// Each participant's positive similarities to the others, strongest first (ties by index).
#[derive(Debug, Clone)]
pub struct Neighbours {
    lists: Vec<Vec<(f32, u32)>>,
}

impl Neighbours {
    /// Ranks every row of the similarity matrix.
    ///
    /// # Complexity
    /// O(N^2 log N), parallel over participants.
    pub fn new(similarity: &SimilarityMatrix) -> Self {
        let n = similarity.participant_count();
        let values = &similarity.values;
        let lists = (0..n)
            .into_par_iter()
            .map(|i| {
                let mut row: Vec<(f32, u32)> = (0..n)
                    .filter(|&j| j != i)
                    .filter_map(|j| {
                        let value = values[[i, j]];
                        (value > 0.0 && value.is_finite()).then_some((value, j as u32))
                    })
                    .collect();
                row.sort_unstable_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
                row
            })
            .collect();
        Neighbours { lists }
    }

    /// The k-nearest-neighbour graph: an edge i-j when j is among i's k most similar or (or, with
    /// `mutual`, and) i among j's; weight the similarity.
    ///
    /// # Complexity
    /// O(N k log k).
    ///
    /// # References
    /// k-nearest-neighbour graphs for clustering: von Luxburg 2007, Stat Comput 17:395, sec. 2.2.
    pub fn graph(&self, k: usize, mutual: bool) -> ParticipantGraph {
        let n = self.lists.len();
        let chosen: Vec<Vec<(u32, f32)>> = self
            .lists
            .iter()
            .map(|row| {
                let mut kept: Vec<(u32, f32)> = row.iter().take(k).map(|&(value, j)| (j, value)).collect();
                kept.sort_unstable_by_key(|&(j, _)| j);
                kept
            })
            .collect();
        let listed = |chosen: &Vec<Vec<(u32, f32)>>, a: usize, b: u32| {
            chosen[a].binary_search_by_key(&b, |e| e.0).is_ok()
        };
        let mut edges = Vec::new();
        for i in 0..n {
            for &(j, value) in &chosen[i] {
                let j_usize = j as usize;
                let back = listed(&chosen, j_usize, i as u32);
                // Each pair once: from the smaller index when both list each other.
                let keep = if mutual { back && i < j_usize } else { !back || i < j_usize };
                if keep {
                    edges.push((i.min(j_usize), i.max(j_usize), f64::from(value)));
                }
            }
        }
        edges.sort_unstable_by(|a, b| a.0.cmp(&b.0).then(a.1.cmp(&b.1)));
        ParticipantGraph::from_edges(n, &edges)
    }
}

/// What a sweep needs from the similarity matrix, each ranking made once (neighbour lists only
/// when a k-nearest-neighbour level asks for them).
#[derive(Debug)]
pub struct SweepGraphs<'a> {
    similarity: &'a SimilarityMatrix,
    ranked: RankedPairs,
    neighbours: std::sync::OnceLock<Neighbours>,
    weights: EdgeWeights,
}

impl<'a> SweepGraphs<'a> {
    /// Ranks the positive pairs of the similarity matrix.
    pub fn new(similarity: &'a SimilarityMatrix, weights: EdgeWeights) -> Self {
        SweepGraphs {
            similarity,
            ranked: RankedPairs::new(similarity),
            neighbours: std::sync::OnceLock::new(),
            weights,
        }
    }

    /// Number of positive participant pairs (0: no rule can make an edge).
    pub fn positive_pairs(&self) -> usize {
        self.ranked.positive_pairs()
    }

    /// The graph of one level.
    pub fn graph(&self, level: SweepLevel) -> ParticipantGraph {
        let mut graph = match level {
            SweepLevel::Density(density) => self.ranked.graph_at(density),
            SweepLevel::Threshold(threshold) => self.ranked.graph_above(threshold),
            SweepLevel::Neighbours(k) | SweepLevel::MutualNeighbours(k) => {
                let mutual = matches!(level, SweepLevel::MutualNeighbours(_));
                self.neighbours.get_or_init(|| Neighbours::new(self.similarity)).graph(k, mutual)
            }
        };
        if self.weights == EdgeWeights::Binary {
            graph.weights.iter_mut().for_each(|weight| *weight = 1.0);
        }
        graph
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    fn similarity() -> SimilarityMatrix {
        SimilarityMatrix {
            values: array![
                [1.0, 0.9, 0.8, 0.1],
                [0.9, 1.0, 0.3, -0.2],
                [0.8, 0.3, 1.0, 0.2],
                [0.1, -0.2, 0.2, 1.0]
            ],
        }
    }

    #[test]
    fn nearest_neighbour_graphs() {
        let similarity = similarity();
        let graphs = SweepGraphs::new(&similarity, EdgeWeights::Weighted);
        // k = 1: 0->1, 1->0, 2->0, 3->2; union {0-1, 0-2, 2-3}; mutual only {0-1}.
        let knn = graphs.graph(SweepLevel::Neighbours(1));
        assert_eq!(knn.edge_count(), 3);
        assert_eq!(knn.neighbours(0).0, &[1, 2]);
        assert_eq!(knn.neighbours(3).0, &[2]);
        let mutual = graphs.graph(SweepLevel::MutualNeighbours(1));
        assert_eq!(mutual.edge_count(), 1);
        assert_eq!(mutual.isolated(), vec![2, 3]);
        // Negative similarities never become edges, whatever k.
        let all = graphs.graph(SweepLevel::Neighbours(3));
        assert_eq!(all.edge_count(), 5);
    }

    #[test]
    fn absolute_threshold_and_binary_weights() {
        let similarity = similarity();
        let graphs = SweepGraphs::new(&similarity, EdgeWeights::Binary);
        let graph = graphs.graph(SweepLevel::Threshold(0.25));
        assert_eq!(graph.edge_count(), 3);
        assert!(graph.weights.iter().all(|&w| w == 1.0));
        assert_eq!(graph.isolated(), vec![3]);
    }
}
