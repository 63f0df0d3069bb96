//! Proportional-density thresholding of a similarity matrix.

use rayon::prelude::*;

use super::ParticipantGraph;
use crate::similarity::SimilarityMatrix;

/// The positive off-diagonal similarities ranked strongest first, ties by (i, j), so that every
/// density of a sweep is a prefix of one ranking.
#[derive(Debug, Clone)]
pub struct RankedPairs {
    node_count: usize,
    /// (similarity, i, j) with i < j, strongest first.
    pairs: Vec<(f32, u32, u32)>,
}

impl RankedPairs {
    /// Ranks the positive similarities of the upper triangle.
    ///
    /// # Complexity
    /// O(P log P) for the P = N(N-1)/2 pairs, once per sweep.
    pub fn new(similarity: &SimilarityMatrix) -> Self {
        let node_count = similarity.participant_count();
        let values = &similarity.values;
        let mut pairs: Vec<(f32, u32, u32)> = (0..node_count)
            .into_par_iter()
            .flat_map_iter(|i| {
                ((i + 1)..node_count).filter_map(move |j| {
                    let value = values[[i, j]];
                    (value > 0.0 && value.is_finite()).then_some((value, i as u32, j as u32))
                })
            })
            .collect();
        pairs.par_sort_unstable_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)).then(a.2.cmp(&b.2)));
        RankedPairs { node_count, pairs }
    }

    /// Edges kept at `density`: round(density * N(N-1)/2), at most the positive pairs.
    pub fn edge_count_at(&self, density: f64) -> usize {
        let all_pairs = self.node_count * self.node_count.saturating_sub(1) / 2;
        ((density * all_pairs as f64).round() as usize).min(self.pairs.len())
    }

    /// Number of positive pairs.
    pub fn positive_pairs(&self) -> usize {
        self.pairs.len()
    }

    /// The weighted graph of every positive pair with similarity at or above `threshold`.
    pub fn graph_above(&self, threshold: f64) -> ParticipantGraph {
        let kept = self.pairs.partition_point(|&(value, _, _)| f64::from(value) >= threshold);
        self.graph_of_first(kept)
    }

    /// The weighted graph of the strongest pairs at `density`.
    pub fn graph_at(&self, density: f64) -> ParticipantGraph {
        self.graph_of_first(self.edge_count_at(density))
    }

    fn graph_of_first(&self, kept: usize) -> ParticipantGraph {
        let edges: Vec<(usize, usize, f64)> = self.pairs[..kept]
            .iter()
            .map(|&(value, i, j)| (i as usize, j as usize, f64::from(value)))
            .collect();
        ParticipantGraph::from_edges(self.node_count, &edges)
    }
}

/// Keeps the strongest positive similarities at a proportional density.
///
/// Keeps the round(density * N(N-1)/2) largest positive off-diagonal similarities (fewer when
/// fewer are positive), as weighted undirected edges; ties are broken by participant index so
/// the graph is the same on every run.
///
/// # Arguments
/// * `similarity`: N x N symmetric similarity.
/// * `density`: fraction of all participant pairs to keep, in (0, 1].
///
/// # Complexity
/// O(P log P) for P = N(N-1)/2 pairs; a sweep should rank once with [`RankedPairs`].
///
/// # References
/// Proportional thresholding: common practice in network neuroscience (e.g. Rubinov & Sporns
/// 2010, NeuroImage 52:1059).
pub fn proportional_threshold(similarity: &SimilarityMatrix, density: f64) -> ParticipantGraph {
    RankedPairs::new(similarity).graph_at(density)
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn keeps_strongest_positive_pairs() {
        let similarity = SimilarityMatrix {
            values: array![
                [1.0, 0.9, -0.5, 0.1],
                [0.9, 1.0, 0.3, 0.0],
                [-0.5, 0.3, 1.0, 0.3],
                [0.1, 0.0, 0.3, 1.0]
            ],
        };
        // 6 pairs; density 0.5 keeps 3: 0.9 (0,1), then the 0.3 tie broken by index: (1,2), (2,3).
        let graph = proportional_threshold(&similarity, 0.5);
        assert_eq!(graph.edge_count(), 3);
        assert_eq!(graph.neighbours(0).0, &[1]);
        assert_eq!(graph.isolated(), Vec::<usize>::new());
        // Density 1 keeps only the 4 positive pairs; negative and zero never become edges.
        let graph = proportional_threshold(&similarity, 1.0);
        assert_eq!(graph.edge_count(), 4);
        let graph = proportional_threshold(&similarity, 1.0 / 6.0);
        assert_eq!(graph.isolated(), vec![2, 3]);
    }
}
