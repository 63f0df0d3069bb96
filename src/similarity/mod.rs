//! Stage 3: participant-by-feature matrix to participant-by-participant similarity.
//!
//! Thresholding is the graph stage's job.

mod pearson;

pub use pearson::{pearson, standardise_rows};

use ndarray::Array2;

/// Participant-by-participant similarity, symmetric, N x N, in cohort order.
#[derive(Debug, Clone)]
pub struct SimilarityMatrix {
    /// The values; the diagonal holds each participant's self-similarity (1 for Pearson).
    pub values: Array2<f32>,
}

impl SimilarityMatrix {
    /// Number of participants.
    pub fn participant_count(&self) -> usize {
        self.values.nrows()
    }
}
