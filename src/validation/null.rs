//! The null test: is the community structure stronger than one homogeneous population gives?
//!
//! Part of stage 6 (validation). The null hypothesis is that the participants are independent
//! draws from one Gaussian population. Null cohorts are drawn from the observed cohort's own
//! mean and covariance by random rotation in participant space (a rotation test, Langsrud 2005):
//! every null cohort has exactly the observed mean and the observed feature covariance (so the
//! same covariance spectrum), but its participants are random orthogonal mixtures of the
//! observed ones, so any clustering of participants is destroyed. All the work happens on the
//! N x N similarity matrix; nothing of size F is formed. Each null cohort runs through the same
//! graph sweep, community detection and consensus as the observed one ([`detect`]) and the
//! observed statistics are ranked among the null ones. Writing the verdict in words is the
//! report stage's job. The construction is derived in docs/methods.md ("The null test").

use faer::linalg::matmul::matmul;
use faer::{Accum, Mat, Par};
use rand::Rng;
use rand_distr::StandardNormal;
use rayon::prelude::*;
use serde::Serialize;
use thiserror::Error;

use crate::communities::{detect, CommunityError, CommunityOptions, CommunityResult, Objective};
use crate::similarity::SimilarityMatrix;

/// Default number of null cohorts (`--null-draws`). With B draws the smallest attainable p is
/// 1 / (B + 1); 100 draws resolve p = 0.01 and estimate a p near 0.05 with a Monte Carlo
/// standard error of about 0.02 (binomial, sqrt(0.05 * 0.95 / 100)); strata's choice, balanced
/// against one full community detection per draw.
pub const DEFAULT_NULL_DRAWS: usize = 100;

/// The null quantiles reported beside each observed statistic.
pub const NULL_QUANTILES: [f64; 5] = [0.05, 0.25, 0.5, 0.75, 0.95];

/// Eigenvalues of the centred Gram matrix below this share of the largest are treated as zero
/// (rounding of an N x N float32 similarity matrix is about 1e-7 relative; 1e-10 keeps every
/// direction that float32 data can carry and drops the one exact zero of the centring).
pub const EIGENVALUE_FLOOR: f64 = 1e-10;

/// Seed stage name of the rotation of each null cohort.
const DRAW_STAGE: &str = "null";

/// Seed stage name of the community detection run on each null cohort.
const DETECT_STAGE: &str = "null_detect";

/// The two statistics compared with the null distribution.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct StructureStatistics {
    /// Mean over the graphs of the sweep of the best trial's structure: relative codelength
    /// savings 1 - L(M) / L(one module) for Infomap, modularity for Leiden and Louvain (higher
    /// means more community structure).
    pub structure: f64,
    /// Consensus strength: the method's structure of the consensus partition on the
    /// co-assignment graph (relative codelength savings for Infomap, modularity otherwise); 0
    /// when the consensus is one community.
    pub consensus: f64,
    /// Communities of the consensus partition (of at least the minimum size).
    pub communities: usize,
}

impl StructureStatistics {
    /// The statistics of one community-detection result.
    pub fn of(result: &CommunityResult, objective: Objective) -> Self {
        let per_graph: Vec<f64> = result
            .densities
            .iter()
            .map(|row| match (objective, row.codelength) {
                (Objective::Codelength, Some(codelength)) => codelength.relative_savings(),
                _ => row.modularity,
            })
            .collect();
        let structure =
            if per_graph.is_empty() { 0.0 } else { per_graph.iter().sum::<f64>() / per_graph.len() as f64 };
        let communities = result.partition.community_count();
        let consensus = if communities < 2 {
            0.0
        } else {
            match (objective, result.consensus_codelength) {
                (Objective::Codelength, Some(codelength)) => codelength.relative_savings(),
                _ => result.consensus_modularity,
            }
        };
        StructureStatistics { structure, consensus, communities }
    }
}

/// Tunables of the null test.
#[derive(Debug, Clone, PartialEq)]
pub struct NullOptions {
    /// Number of null cohorts B (`--null-draws`, default [`DEFAULT_NULL_DRAWS`]).
    pub draws: usize,
    /// Significance level of the verdict (`--alpha`).
    pub alpha: f64,
    /// Seed; each draw derives its own rotation and detection seeds from it.
    pub seed: u64,
}

impl Default for NullOptions {
    /// [`DEFAULT_NULL_DRAWS`] draws at the default alpha and run seed.
    fn default() -> Self {
        NullOptions {
            draws: DEFAULT_NULL_DRAWS,
            alpha: crate::config::DEFAULT_ALPHA,
            seed: crate::config::DEFAULT_SEED,
        }
    }
}

/// One statistic against its null distribution.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NullComparison {
    /// The observed value.
    pub observed: f64,
    /// Monte Carlo p-value (1 + #{null >= observed}) / (1 + B) (Phipson & Smyth 2010).
    pub p_value: f64,
    /// Quantiles of the null values at [`NULL_QUANTILES`] (linear interpolation, numpy's default).
    pub null_quantiles: Vec<(f64, f64)>,
    /// Mean of the null values.
    pub null_mean: f64,
}

/// The outcome of the null test.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NullResult {
    /// Null cohorts drawn.
    pub draws: usize,
    /// Significance level of the verdict.
    pub alpha: f64,
    /// Smallest attainable p-value, 1 / (B + 1).
    pub smallest_p: f64,
    /// The statistic the method optimises, averaged over the sweep.
    pub structure: NullComparison,
    /// The consensus strength.
    pub consensus: NullComparison,
    /// Observed communities.
    pub observed_communities: usize,
    /// Share of null cohorts whose consensus found two or more communities.
    pub null_multi_community_share: f64,
    /// The verdict: at least two communities, and the sweep structure above the null at `alpha`
    /// (p <= alpha). The consensus strength is reported beside it but does not decide: in
    /// calibration runs it had less power than the sweep structure (docs/methods.md).
    pub subgroups_supported: bool,
    /// Every null cohort's statistics, in draw order.
    pub null: Vec<StructureStatistics>,
    /// Name of the statistic behind `structure` (`relative_codelength_savings` or `modularity`).
    pub statistic: &'static str,
}

/// The null test could not run.
#[derive(Debug, Error)]
pub enum NullError {
    /// No draw was asked for.
    #[error("the null test needs at least 1 null cohort (default {DEFAULT_NULL_DRAWS}); --null-draws 0 skips the test")]
    NoDraws,
    /// The similarity matrix is too small or has no spread.
    #[error("the null test needs at least 3 participants with differing similarity; found {participants} participants and a centred similarity of largest eigenvalue {largest:.3e}")]
    Degenerate {
        /// Participants.
        participants: usize,
        /// Largest eigenvalue of the centred similarity.
        largest: f64,
    },
    /// The eigendecomposition did not converge.
    #[error("the eigendecomposition of the centred similarity matrix did not converge; check the similarity matrix for NaN or infinite values")]
    Eigen,
}

/// The observed cohort's Gram matrix split into its mean and centred parts, from which null
/// cohorts are drawn.
///
/// With K the N x N Gram matrix of the centred feature rows (the similarity scaled by the row
/// norms, see [`NullModel::new`]), 1 the vector of
/// ones, H = I - 1 1t / N and J = 1 1t / N:
///
/// ```text
/// K = H K H + H K J + J K H + J K J
///   = U L Ut + m 1t + 1 mt + k 1 1t,  with H K H = U L Ut, m = H K 1 / N = U (Ut m), k = 1t K 1 / N^2
/// ```
///
/// A null cohort replaces the observed frame U (N x r, orthonormal, orthogonal to 1) by a
/// Haar-random orthonormal frame W in the same (N - 1)-dimensional space:
///
/// ```text
/// K0 = W L Wt + (W a) 1t + 1 (W a)t + k 1 1t,   a = Ut m
/// ```
///
/// which is exactly the Gram matrix of the feature rows x_bar + O (x_p - x_bar) for a random
/// rotation O of participant space that fixes 1.
#[derive(Debug, Clone)]
pub struct NullModel {
    /// Eigenvalues L (descending, above the floor) of H K H.
    eigenvalues: Vec<f64>,
    /// a = Ut m, the mean term in the eigenbasis.
    mean_loadings: Vec<f64>,
    /// k = 1t K 1 / N^2, the squared norm of the mean feature row.
    mean_norm: f64,
    /// The observed frame U (N x r), kept to reproduce the observed cohort in tests.
    frame: Mat<f64>,
    /// Participants N.
    participants: usize,
}

impl NullModel {
    /// Decomposes the observed similarity matrix.
    ///
    /// `row_norms` are the participants' centred feature-row norms ||x_p - mean(x_p)||: the
    /// Gram matrix of the centred rows, K = diag(norms) S diag(norms), is what the rotation acts
    /// on, so that null rows are drawn before the per-participant standardisation, as the
    /// pipeline's own rows are. Without them (a precomputed similarity matrix) every row is
    /// taken to have norm 1: the null then rotates the standardised rows themselves.
    ///
    /// # Errors
    /// [`NullError::Degenerate`] for fewer than 3 participants or a centred matrix without
    /// spread, [`NullError::Eigen`] when the eigendecomposition fails.
    ///
    /// # Complexity
    /// O(N^3) once (one symmetric eigendecomposition).
    pub fn new(similarity: &SimilarityMatrix, row_norms: Option<&[f64]>) -> Result<Self, NullError> {
        let n = similarity.participant_count();
        let values = &similarity.values;
        let norm = |i: usize| row_norms.map_or(1.0, |norms| norms.get(i).copied().unwrap_or(1.0));
        let gram = Mat::<f64>::from_fn(n, n, |i, j| {
            0.5 * (f64::from(values[[i, j]]) + f64::from(values[[j, i]])) * norm(i) * norm(j)
        });
        let row_means: Vec<f64> =
            (0..n).map(|i| (0..n).map(|j| gram[(i, j)]).sum::<f64>() / n as f64).collect();
        let grand = row_means.iter().sum::<f64>() / n.max(1) as f64;
        let centred = Mat::<f64>::from_fn(n, n, |i, j| gram[(i, j)] - row_means[i] - row_means[j] + grand);
        let mean_vector: Vec<f64> = row_means.iter().map(|&mean| mean - grand).collect();
        if n < 3 {
            return Err(NullError::Degenerate { participants: n, largest: 0.0 });
        }
        let (eigenvalues, eigenvectors) = symmetric_eigen(&centred)?;
        let largest = eigenvalues.iter().copied().fold(0.0f64, f64::max);
        if largest.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
            return Err(NullError::Degenerate { participants: n, largest });
        }
        // Keep positive eigenvalues above the floor, largest first; at most N - 1 of them.
        let mut order: Vec<usize> =
            (0..n).filter(|&index| eigenvalues[index] > EIGENVALUE_FLOOR * largest).collect();
        order.sort_by(|&a, &b| eigenvalues[b].total_cmp(&eigenvalues[a]).then(a.cmp(&b)));
        order.truncate(n - 1);
        let rank = order.len();
        let frame = Mat::<f64>::from_fn(n, rank, |i, column| eigenvectors[(i, order[column])]);
        let mean_loadings: Vec<f64> =
            (0..rank).map(|column| (0..n).map(|i| frame[(i, column)] * mean_vector[i]).sum()).collect();
        Ok(NullModel {
            eigenvalues: order.iter().map(|&index| eigenvalues[index]).collect(),
            mean_loadings,
            mean_norm: grand,
            frame,
            participants: n,
        })
    }

    /// Eigenvalues of the centred similarity kept by the model, largest first: the covariance
    /// spectrum every null cohort shares (up to the factor N - 1).
    pub fn spectrum(&self) -> &[f64] {
        &self.eigenvalues
    }

    /// The similarity of the cohort whose centred frame is `frame` (N x r, orthonormal columns
    /// orthogonal to 1): each null cohort, or with the observed frame the observed similarity.
    fn similarity_with_frame(&self, frame: &Mat<f64>) -> SimilarityMatrix {
        standardise_gram(&self.gram_with_frame(frame))
    }

    /// The Gram matrix of the centred feature rows of the cohort with centred frame `frame`,
    /// before the per-participant standardisation.
    fn gram_with_frame(&self, frame: &Mat<f64>) -> Mat<f64> {
        let n = self.participants;
        let rank = self.eigenvalues.len();
        let scaled =
            Mat::<f64>::from_fn(n, rank, |i, column| frame[(i, column)] * self.eigenvalues[column].sqrt());
        let mut gram = Mat::<f64>::zeros(n, n);
        matmul(gram.as_mut(), Accum::Replace, scaled.as_ref(), scaled.transpose(), 1.0, Par::Seq);
        let mean_term: Vec<f64> = (0..n)
            .map(|i| (0..rank).map(|column| frame[(i, column)] * self.mean_loadings[column]).sum())
            .collect();
        for i in 0..n {
            for j in 0..n {
                gram[(i, j)] += mean_term[i] + mean_term[j] + self.mean_norm;
            }
        }
        gram
    }

    /// The null cohort obtained with a given rotation O of participant space (N x N, orthogonal,
    /// O 1 = 1): the similarity of the rows y_bar + O (y_p - y_bar). Used to check the
    /// participant-space construction against the same rotation applied in feature space.
    ///
    /// # Panics
    /// If `rotation` is not N x N.
    pub fn rotated(&self, rotation: &ndarray::Array2<f64>) -> SimilarityMatrix {
        let n = self.participants;
        assert_eq!(rotation.dim(), (n, n), "rotation must be N x N");
        let rotation = Mat::<f64>::from_fn(n, n, |i, j| rotation[[i, j]]);
        let mut frame = Mat::<f64>::zeros(n, self.eigenvalues.len());
        matmul(frame.as_mut(), Accum::Replace, rotation.as_ref(), self.frame.as_ref(), 1.0, Par::Seq);
        self.similarity_with_frame(&frame)
    }

    /// One null cohort's Gram matrix of centred feature rows, before the per-participant
    /// standardisation (its centred spectrum equals [`NullModel::spectrum`]).
    pub fn draw_gram<R: Rng>(&self, rng: &mut R) -> ndarray::Array2<f64> {
        let gram = self.gram_with_frame(&self.random_frame(rng));
        ndarray::Array2::from_shape_fn((self.participants, self.participants), |(i, j)| gram[(i, j)])
    }

    /// The observed similarity rebuilt from the model (for checks of the decomposition).
    pub fn observed(&self) -> SimilarityMatrix {
        self.similarity_with_frame(&self.frame)
    }

    /// One null cohort's similarity matrix.
    ///
    /// W is the orthonormal factor of H A (A an N x r matrix of independent standard normal
    /// draws), taken from the Cholesky factor R of (H A)t (H A) as W = H A R^-1: the Q of a QR
    /// decomposition with positive diagonal, which is Haar distributed (Mezzadri 2007).
    ///
    /// # Complexity
    /// O(N^2 r), about 3.3 N^3 operations for r = N - 1.
    pub fn draw<R: Rng>(&self, rng: &mut R) -> SimilarityMatrix {
        self.similarity_with_frame(&self.random_frame(rng))
    }

    fn random_frame<R: Rng>(&self, rng: &mut R) -> Mat<f64> {
        let n = self.participants;
        let rank = self.eigenvalues.len();
        loop {
            let mut gaussian = Mat::<f64>::from_fn(n, rank, |_, _| rng.sample::<f64, _>(StandardNormal));
            for column in 0..rank {
                let mean = (0..n).map(|i| gaussian[(i, column)]).sum::<f64>() / n as f64;
                for i in 0..n {
                    gaussian[(i, column)] -= mean;
                }
            }
            if let Some(frame) = orthonormal_factor(&gaussian) {
                return frame;
            }
            // A Gaussian matrix is rank-deficient with probability 0; redraw if rounding made
            // its Gram matrix numerically singular.
        }
    }
}

/// Pearson similarity from a Gram matrix of centred rows: K_pq / sqrt(K_pp K_qq).
///
/// Pearson similarity standardises every participant's feature row. The rows of a null cohort
/// are already centred (each is a combination of centred rows), so only their norms are
/// reproduced.
fn standardise_gram(gram: &Mat<f64>) -> SimilarityMatrix {
    let n = gram.nrows();
    let scale: Vec<f64> = (0..n).map(|i| 1.0 / gram[(i, i)].max(f64::MIN_POSITIVE).sqrt()).collect();
    let values = ndarray::Array2::from_shape_fn((n, n), |(i, j)| {
        if i == j {
            1.0
        } else {
            (gram[(i, j)] * scale[i] * scale[j]) as f32
        }
    });
    SimilarityMatrix { values }
}

/// Symmetric eigendecomposition, single-threaded so the result does not depend on the thread
/// count: (eigenvalues ascending, eigenvectors as columns).
fn symmetric_eigen(matrix: &Mat<f64>) -> Result<(Vec<f64>, Mat<f64>), NullError> {
    use faer::dyn_stack::{MemBuffer, MemStack};
    use faer::linalg::evd;
    let n = matrix.nrows();
    let mut values = faer::diag::Diag::<f64>::zeros(n);
    let mut vectors = Mat::<f64>::zeros(n, n);
    let scratch =
        evd::self_adjoint_evd_scratch::<f64>(n, evd::ComputeEigenvectors::Yes, Par::Seq, Default::default());
    let mut buffer = MemBuffer::new(scratch);
    evd::self_adjoint_evd(
        matrix.as_ref(),
        values.as_mut(),
        Some(vectors.as_mut()),
        Par::Seq,
        MemStack::new(&mut buffer),
        Default::default(),
    )
    .map_err(|_| NullError::Eigen)?;
    let values: Vec<f64> = (0..n).map(|i| values[i]).collect();
    Ok((values, vectors))
}

/// W = A R^-1 with Rt R = At A (Cholesky), the orthonormal factor of A with positive-diagonal
/// R; `None` when At A is numerically singular. Single-threaded (faer with `Par::Seq`) so that
/// draws running in parallel give the same values at any thread count.
fn orthonormal_factor(a: &Mat<f64>) -> Option<Mat<f64>> {
    use faer::dyn_stack::{MemBuffer, MemStack};
    use faer::linalg::cholesky::llt::factor::{
        cholesky_in_place, cholesky_in_place_scratch, LltRegularization,
    };
    let r = a.ncols();
    let mut gram = Mat::<f64>::zeros(r, r);
    matmul(gram.as_mut(), Accum::Replace, a.transpose(), a.as_ref(), 1.0, Par::Seq);
    let scratch = cholesky_in_place_scratch::<f64>(r, Par::Seq, Default::default());
    let mut buffer = MemBuffer::new(scratch);
    let regularization =
        LltRegularization { dynamic_regularization_delta: 0.0, dynamic_regularization_epsilon: 0.0 };
    cholesky_in_place(
        gram.as_mut(),
        regularization,
        Par::Seq,
        MemStack::new(&mut buffer),
        Default::default(),
    )
    .ok()?;
    // gram now holds L (lower, L Lt = At A) in its lower triangle. Solve L X = At: W = Xt.
    let mut solution = a.transpose().to_owned();
    faer::linalg::triangular_solve::solve_lower_triangular_in_place(
        gram.as_ref(),
        solution.as_mut(),
        Par::Seq,
    );
    let w = solution.transpose().to_owned();
    let finite = w.col_iter().all(|column| column.iter().all(|value| value.is_finite()));
    finite.then_some(w)
}

/// Quantile at level `q` of sorted values, linear interpolation between order statistics
/// (numpy's default `linear` method).
pub fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let position = q.clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let lower = position.floor() as usize;
    let upper = position.ceil() as usize;
    let fraction = position - lower as f64;
    sorted[lower] + (sorted[upper] - sorted[lower]) * fraction
}

fn compare(observed: f64, null: &[f64]) -> NullComparison {
    let mut sorted: Vec<f64> = null.iter().copied().filter(|value| value.is_finite()).collect();
    sorted.sort_by(f64::total_cmp);
    // Ties count against the observed value; a tolerance absorbs rounding of equal partitions.
    let tolerance = 1e-12 * observed.abs().max(1.0);
    let at_least = sorted.iter().filter(|&&value| value >= observed - tolerance).count();
    NullComparison {
        observed,
        p_value: (1 + at_least) as f64 / (1 + sorted.len()) as f64,
        null_quantiles: NULL_QUANTILES.iter().map(|&q| (q, quantile_sorted(&sorted, q))).collect(),
        null_mean: if sorted.is_empty() {
            f64::NAN
        } else {
            sorted.iter().sum::<f64>() / sorted.len() as f64
        },
    }
}

/// Rotation null test of the community structure found by [`detect`].
///
/// For b = 1..B (in parallel): a null cohort's similarity K0_b ([`NullModel::draw`], seeded by
/// `crate::seed::rng(seed, "null", [b])`), community detection with the caller's options and a
/// seed derived from b, and its statistics T_b ([`StructureStatistics`]). For each statistic:
///
/// ```text
/// p = (1 + #{b : T_b >= T_observed}) / (1 + B)
/// ```
///
/// The verdict "subgroups supported" needs at least two observed communities and p <= alpha for
/// the sweep structure; the consensus strength's p is reported beside it.
///
/// # Arguments
/// * `similarity`: the observed N x N similarity.
/// * `row_norms`: per participant, the norm of its centred feature row (see [`NullModel::new`]);
///   `None` for a precomputed similarity matrix.
/// * `observed`: the community result of the observed cohort (same options).
/// * `options`: the community options of the run (their seed is replaced per draw).
/// * `null`: draws, alpha and seed.
///
/// # Errors
/// [`NullError::NoDraws`], [`NullError::Degenerate`] or [`NullError::Eigen`]. A null cohort
/// whose graphs keep no edge counts as one without structure (statistics 0).
///
/// # Complexity
/// O(N^3) once, then per draw O(N^2 r) for the rotation plus one community detection.
///
/// # References
/// Langsrud 2005, Stat Comput 15:53-60 (rotation tests); Liu, Hayes, Nobel & Marron 2008,
/// J Am Stat Assoc 103:1281 (a Gaussian null for cluster significance); Phipson & Smyth 2010,
/// Stat Appl Genet Mol Biol 9:39 (permutation p-values never zero); Mezzadri 2007, Notices AMS
/// 54:592 (Haar-distributed orthogonal matrices from QR).
pub fn null_test(
    similarity: &SimilarityMatrix,
    row_norms: Option<&[f64]>,
    observed: &CommunityResult,
    options: &CommunityOptions,
    null: &NullOptions,
) -> Result<NullResult, NullError> {
    null_test_with_progress(similarity, row_norms, observed, options, null, &|| {})
}

/// [`null_test`], calling `tick` once per finished draw (for progress display).
///
/// # Errors
/// As [`null_test`].
pub fn null_test_with_progress(
    similarity: &SimilarityMatrix,
    row_norms: Option<&[f64]>,
    observed: &CommunityResult,
    options: &CommunityOptions,
    null: &NullOptions,
    tick: &(dyn Fn() + Sync),
) -> Result<NullResult, NullError> {
    if null.draws == 0 {
        return Err(NullError::NoDraws);
    }
    let model = NullModel::new(similarity, row_norms)?;
    let objective = options.method.objective();
    let outcomes: Vec<Result<StructureStatistics, NullError>> = (0..null.draws)
        .into_par_iter()
        .map(|draw| {
            let mut rng = crate::seed::rng(null.seed, DRAW_STAGE, &[draw as u64]);
            let cohort = model.draw(&mut rng);
            let seed = crate::seed::derive(null.seed, DETECT_STAGE, &[draw as u64]);
            let statistics = match detect(&cohort, &CommunityOptions { seed, ..options.clone() }) {
                Ok(result) => StructureStatistics::of(&result, objective),
                // A null cohort whose graphs keep no edge has no community structure at all.
                Err(CommunityError::NoEdges) => {
                    StructureStatistics { structure: 0.0, consensus: 0.0, communities: 0 }
                }
            };
            tick();
            Ok(statistics)
        })
        .collect();
    let mut draws = Vec::with_capacity(outcomes.len());
    for outcome in outcomes {
        draws.push(outcome?);
    }
    let observed_statistics = StructureStatistics::of(observed, objective);
    let structure =
        compare(observed_statistics.structure, &draws.iter().map(|s| s.structure).collect::<Vec<_>>());
    let consensus =
        compare(observed_statistics.consensus, &draws.iter().map(|s| s.consensus).collect::<Vec<_>>());
    let subgroups_supported = observed_statistics.communities >= 2 && structure.p_value <= null.alpha;
    Ok(NullResult {
        draws: null.draws,
        alpha: null.alpha,
        smallest_p: 1.0 / (null.draws + 1) as f64,
        structure,
        consensus,
        observed_communities: observed_statistics.communities,
        null_multi_community_share: draws.iter().filter(|s| s.communities >= 2).count() as f64
            / draws.len() as f64,
        subgroups_supported,
        null: draws,
        statistic: match objective {
            Objective::Codelength => "relative_codelength_savings",
            _ => "modularity",
        },
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn small_similarity() -> SimilarityMatrix {
        // Pearson similarity of 6 rows of invented features (a unit test of the algebra only).
        let rows: [[f64; 5]; 6] = [
            [0.3, -0.2, 0.9, 0.1, -0.5],
            [0.1, 0.4, 0.7, -0.3, -0.2],
            [-0.6, 0.2, 0.1, 0.8, 0.0],
            [0.5, 0.5, -0.4, 0.2, 0.3],
            [0.0, -0.7, 0.3, 0.4, 0.6],
            [0.9, 0.1, 0.2, -0.8, 0.1],
        ];
        let standardised: Vec<Vec<f64>> = rows
            .iter()
            .map(|row| {
                let mean = row.iter().sum::<f64>() / 5.0;
                let norm = row.iter().map(|v| (v - mean).powi(2)).sum::<f64>().sqrt();
                row.iter().map(|v| (v - mean) / norm).collect()
            })
            .collect();
        let values = ndarray::Array2::from_shape_fn((6, 6), |(i, j)| {
            standardised[i].iter().zip(&standardised[j]).map(|(a, b)| a * b).sum::<f64>() as f32
        });
        SimilarityMatrix { values }
    }

    #[test]
    fn the_observed_frame_rebuilds_the_observed_similarity() {
        let similarity = small_similarity();
        let model = NullModel::new(&similarity, None).unwrap();
        let rebuilt = model.observed();
        for (a, b) in rebuilt.values.iter().zip(similarity.values.iter()) {
            assert!((a - b).abs() < 1e-5, "{a} vs {b}");
        }
    }

    #[test]
    fn a_random_frame_is_orthonormal_and_orthogonal_to_ones() {
        let model = NullModel::new(&small_similarity(), None).unwrap();
        let mut rng = crate::seed::rng(7, "test", &[]);
        let frame = model.random_frame(&mut rng);
        let (n, r) = (frame.nrows(), frame.ncols());
        for a in 0..r {
            let sum: f64 = (0..n).map(|i| frame[(i, a)]).sum();
            assert!(sum.abs() < 1e-10);
            for b in 0..r {
                let dot: f64 = (0..n).map(|i| frame[(i, a)] * frame[(i, b)]).sum();
                let expected = if a == b { 1.0 } else { 0.0 };
                assert!((dot - expected).abs() < 1e-10, "({a}, {b}): {dot}");
            }
        }
    }

    #[test]
    fn quantiles_follow_numpy_linear_interpolation() {
        // numpy.quantile([1, 2, 3, 4], [0.05, 0.5, 0.95]) = [1.15, 2.5, 3.85] (numpy, linear).
        let sorted = [1.0, 2.0, 3.0, 4.0];
        assert!((quantile_sorted(&sorted, 0.05) - 1.15).abs() < 1e-12);
        assert!((quantile_sorted(&sorted, 0.5) - 2.5).abs() < 1e-12);
        assert!((quantile_sorted(&sorted, 0.95) - 3.85).abs() < 1e-12);
    }

    #[test]
    fn p_value_counts_ties_against_the_observation() {
        // (1 + 2) / (1 + 4): two of four null values reach 0.5 (Phipson & Smyth 2010).
        let comparison = compare(0.5, &[0.1, 0.5, 0.7, 0.2]);
        assert!((comparison.p_value - 0.6).abs() < 1e-12);
    }
}
