//! Permutation inference for one coefficient of the linear model: per-feature permutation p and
//! the family-wise (max-statistic) p over all features of a map.
//!
//! Freedman-Lane: the data are reduced to their residuals under the nuisance model (every design
//! column but the tested one), the residuals are permuted, and the full model is refitted. The
//! nuisance fit adds nothing to the tested coefficient or to the residuals, so the permuted t is
//! the t of the permuted residuals; with only an intercept as nuisance this is the plain
//! permutation of the data. Every permutation is one matrix product (permuted Q' times the
//! residual block) over all features, in f64, parallel over feature blocks and sequential inside
//! a block, so the result does not depend on the thread count. Permutations come from
//! `crate::seed`, one stream per permutation.

use faer::linalg::matmul::matmul;
use faer::{Accum, MatMut, MatRef, Par};
use rand::seq::SliceRandom;
use rayon::prelude::*;

use super::glm::{factorise, Design, Factors};
use super::StatsError;
use crate::features::FeatureMatrix;

/// Features per parallel block of the permutation kernel: 1,024 features x 300 participants of
/// f64 residuals is 2.4 MB (strata's choice, sized to stay in L2/L3 cache).
pub const PERMUTATION_FEATURE_BLOCK: usize = 1024;

/// Permutations per matrix product (bounds the product's memory: 256 x k x 1,024 f64).
pub const PERMUTATION_CHUNK: usize = 256;

/// A permuted statistic counts as reaching the observed one when it is within this relative
/// distance below it: permutations that only reorder the rows within a group give the same
/// statistic up to f64 rounding (about 1e-15), which must count (chosen here).
pub const STATISTIC_TIE: f64 = 1e-10;

/// Result of a permutation test of one design column, per feature.
#[derive(Debug, Clone, PartialEq)]
pub struct PermutationTest {
    /// The observed t of the tested coefficient.
    pub t: Vec<f32>,
    /// Per-feature permutation p: the share of permutations (the identity included) whose |t|
    /// reaches the observed |t|.
    pub p_uncorrected: Vec<f64>,
    /// Family-wise p: the share of permutations whose largest |t| over all features reaches
    /// the feature's observed |t| (Nichols & Holmes 2002).
    pub p_fwe: Vec<f64>,
    /// Permutations counted, the identity included.
    pub permutations: usize,
    /// The smallest attainable p, 1 / permutations.
    pub smallest_p: f64,
    /// The largest |t| over the features for each permutation (the identity first).
    pub max_statistic: Vec<f64>,
}

/// The identity followed by `count` seeded random permutations of `n` rows.
///
/// Permutation b (1-based) is drawn from `crate::seed::rng(seed, "permutation", [b])`, so the
/// set is the same at any thread count and a longer run extends a shorter one.
pub fn random_permutations(n: usize, count: usize, seed: u64) -> Vec<Vec<usize>> {
    let mut permutations = vec![(0..n).collect::<Vec<usize>>()];
    for index in 1..=count {
        let mut order: Vec<usize> = (0..n).collect();
        order.shuffle(&mut crate::seed::rng(seed, "permutation", &[index as u64]));
        permutations.push(order);
    }
    permutations
}

/// Freedman-Lane permutation test of design column `column`, with per-feature and family-wise
/// (max |t|) p values, over the given permutations.
///
/// With Z the design without `column` and R_z = (I - H_z) Y the nuisance residuals, each
/// permutation P gives Y* = P R_z + H_z Y; its t for the tested coefficient equals the t of
/// P R_z in the full model, computed from U = Q' P R_z (Q the full design's thin Q):
///
/// ```text
/// beta* = (R^-1 U)[column],   RSS* = ||R_z||^2 - ||U||^2,   t* = beta* / sqrt(RSS*/(n-k) (X'X)^-1[column, column])
/// p_f     = #{b : |t*_b,f| >= |t_f|} / B          (B permutations, the identity included)
/// p_fwe_f = #{b : max_g |t*_b,g| >= |t_f|} / B
/// ```
///
/// so p is never below 1 / B and p_fwe is never below p (the maximum over features is at least
/// the feature's own statistic). Features whose t is NaN (no residual variation) get NaN p and
/// do not enter the maxima.
///
/// # Arguments
/// * `features` - the N x F participant-by-feature matrix.
/// * `rows` - the participant rows of the model; design row i belongs to `rows[i]`.
/// * `design` - n x k design with n = `rows.len()`.
/// * `column` - the tested design column.
/// * `permutations` - orderings of 0..n; the first must be the identity (the observed data).
///
/// # Returns
/// A [`PermutationTest`].
///
/// # Errors
/// The design errors of [`super::fit_linear_model`]; [`StatsError::InvalidInput`] when the
/// column is out of range, a permutation is not an ordering of 0..n, or the first is not the
/// identity.
///
/// # Complexity
/// O(B k n F) time as B/256 matrix products per block of features; O(k n B + F + B) memory
/// beyond the input. Parallel over blocks of [`PERMUTATION_FEATURE_BLOCK`] features.
///
/// # References
/// Freedman & Lane 1983, J Bus Econ Stat 1:292-298; Nichols & Holmes 2002, Hum Brain Mapp
/// 15:1-25 (max statistic); Winkler et al. 2014, NeuroImage 92:381-397 (Freedman-Lane in
/// neuroimaging, exchangeability).
pub fn freedman_lane(
    features: &FeatureMatrix,
    rows: &[usize],
    design: &Design,
    column: usize,
    permutations: &[Vec<usize>],
) -> Result<PermutationTest, StatsError> {
    let n = rows.len();
    let k = design.column_count();
    let invalid = |message: String| StatsError::InvalidInput { test: "permutation test".into(), message };
    if column >= k {
        return Err(invalid(format!("column {column} is outside the design's {k} columns")));
    }
    for (index, permutation) in permutations.iter().enumerate() {
        let mut sorted = permutation.clone();
        sorted.sort_unstable();
        if sorted.len() != n || sorted.iter().enumerate().any(|(i, &v)| i != v) {
            return Err(invalid(format!("permutation {index} is not an ordering of the {n} rows")));
        }
    }
    if permutations.first().is_none_or(|first| first.iter().enumerate().any(|(i, &v)| i != v)) {
        return Err(invalid("the first permutation must be the identity (the observed data)".into()));
    }
    if let Some(&row) = rows.iter().find(|&&row| row >= features.participant_count()) {
        return Err(StatsError::RowOutOfRange {
            scope: "model".into(),
            group: "design".into(),
            row,
            participant_count: features.participant_count(),
        });
    }
    let full = factorise(design, n)?;
    let nuisance_design = Design {
        columns: design
            .columns
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != column)
            .map(|(_, c)| c.clone())
            .collect(),
        values: (0..n)
            .flat_map(|i| (0..k).filter(|&j| j != column).map(move |j| design.values[i * k + j]))
            .collect(),
    };
    let nuisance =
        if nuisance_design.columns.is_empty() { None } else { Some(factorise(&nuisance_design, n)?) };

    // Permuted Q' for every permutation: A_b[j, pi(i)] = Q[i, j], stacked (B k) x n.
    let count = permutations.len();
    let mut permuted_q = vec![0.0f64; count * k * n];
    for (b, permutation) in permutations.iter().enumerate() {
        for (i, &target) in permutation.iter().enumerate() {
            for j in 0..k {
                permuted_q[(b * k + j) * n + target] = full.q[i * k + j];
            }
        }
    }
    let weights: Vec<f64> = (0..k).map(|j| full.r_inverse[column * k + j]).collect();
    let variance_factor = full.unscaled_covariance[column * k + column];
    let dof = (n - k) as f64;

    let data = features.row_major();
    let width = features.feature_count();
    let blocks: Vec<BlockResult> = (0..width.div_ceil(PERMUTATION_FEATURE_BLOCK))
        .into_par_iter()
        .map(|block| {
            let start = block * PERMUTATION_FEATURE_BLOCK;
            let len = PERMUTATION_FEATURE_BLOCK.min(width - start);
            let residuals = nuisance_residuals(nuisance.as_ref(), data, width, rows, start, len);
            permute_block(&residuals, n, len, &permuted_q, count, k, &weights, variance_factor, dof)
        })
        .collect();

    let mut t = Vec::with_capacity(width);
    let mut reached = Vec::with_capacity(width);
    let mut max_statistic = vec![f64::NAN; count];
    for block in blocks {
        t.extend(block.observed);
        reached.extend(block.reached);
        for (maximum, candidate) in max_statistic.iter_mut().zip(block.maxima) {
            if candidate.is_finite() && (maximum.is_nan() || candidate > *maximum) {
                *maximum = candidate;
            }
        }
    }
    let total = count as f64;
    let mut sorted_maxima: Vec<f64> = max_statistic.iter().copied().filter(|v| v.is_finite()).collect();
    sorted_maxima.sort_by(f64::total_cmp);
    let p_uncorrected: Vec<f64> = t
        .iter()
        .zip(&reached)
        .map(|(&t, &reached)| if t.is_finite() { reached as f64 / total } else { f64::NAN })
        .collect();
    let p_fwe: Vec<f64> = t
        .iter()
        .map(|&t| {
            if !t.is_finite() {
                return f64::NAN;
            }
            let threshold = t.abs() * (1.0 - STATISTIC_TIE);
            let below = sorted_maxima.partition_point(|&maximum| maximum < threshold);
            (sorted_maxima.len() - below) as f64 / total
        })
        .collect();
    Ok(PermutationTest {
        t: t.iter().map(|&t| t as f32).collect(),
        p_uncorrected,
        p_fwe,
        permutations: count,
        smallest_p: 1.0 / total,
        max_statistic,
    })
}

/// What one block of features contributes.
struct BlockResult {
    /// Observed t per feature (f64).
    observed: Vec<f64>,
    /// Permutations (identity included) reaching the observed |t|, per feature.
    reached: Vec<usize>,
    /// Largest |t| of the block per permutation (NaN when the block has no finite t).
    maxima: Vec<f64>,
}

/// Residuals of the nuisance model for features start..start+len, n x len row-major.
fn nuisance_residuals(
    nuisance: Option<&Factors>,
    data: &[f32],
    width: usize,
    rows: &[usize],
    start: usize,
    len: usize,
) -> Vec<f64> {
    let n = rows.len();
    let mut residuals = vec![0.0f64; n * len];
    for (i, &row) in rows.iter().enumerate() {
        let source = &data[row * width + start..row * width + start + len];
        for (target, &value) in residuals[i * len..(i + 1) * len].iter_mut().zip(source) {
            *target = f64::from(value);
        }
    }
    let Some(factors) = nuisance else { return residuals };
    let k = factors.columns;
    let mut projection = vec![0.0f64; k * len];
    for i in 0..n {
        for j in 0..k {
            let weight = factors.q[i * k + j];
            for (sum, &value) in
                projection[j * len..(j + 1) * len].iter_mut().zip(&residuals[i * len..(i + 1) * len])
            {
                *sum += weight * value;
            }
        }
    }
    for i in 0..n {
        for j in 0..k {
            let weight = factors.q[i * k + j];
            for (value, &projected) in
                residuals[i * len..(i + 1) * len].iter_mut().zip(&projection[j * len..(j + 1) * len])
            {
                *value -= weight * projected;
            }
        }
    }
    residuals
}

#[allow(clippy::too_many_arguments)]
fn permute_block(
    residuals: &[f64],
    n: usize,
    len: usize,
    permuted_q: &[f64],
    count: usize,
    k: usize,
    weights: &[f64],
    variance_factor: f64,
    dof: f64,
) -> BlockResult {
    let mut total_ss = vec![0.0f64; len];
    for i in 0..n {
        for (sum, &value) in total_ss.iter_mut().zip(&residuals[i * len..(i + 1) * len]) {
            *sum += value * value;
        }
    }
    let rhs = MatRef::from_row_major_slice(residuals, n, len);
    let mut observed = vec![f64::NAN; len];
    let mut observed_abs = vec![f64::NAN; len];
    let mut reached = vec![0usize; len];
    let mut maxima = vec![f64::NAN; count];
    let mut product = vec![0.0f64; PERMUTATION_CHUNK.min(count) * k * len];
    for chunk_start in (0..count).step_by(PERMUTATION_CHUNK) {
        let chunk = PERMUTATION_CHUNK.min(count - chunk_start);
        let lhs = MatRef::from_row_major_slice(
            &permuted_q[chunk_start * k * n..(chunk_start + chunk) * k * n],
            chunk * k,
            n,
        );
        let output = &mut product[..chunk * k * len];
        matmul(
            MatMut::from_row_major_slice_mut(output, chunk * k, len),
            Accum::Replace,
            lhs,
            rhs,
            1.0f64,
            Par::Seq,
        );
        for b in 0..chunk {
            let permutation = chunk_start + b;
            let mut block_max = f64::NAN;
            for f in 0..len {
                let mut estimate = 0.0;
                let mut explained = 0.0;
                for j in 0..k {
                    let u = output[(b * k + j) * len + f];
                    estimate += weights[j] * u;
                    explained += u * u;
                }
                let rss = (total_ss[f] - explained).max(0.0);
                let se = (rss / dof * variance_factor).sqrt();
                let t = if se > 0.0 { estimate / se } else { f64::NAN };
                if permutation == 0 {
                    observed[f] = t;
                    observed_abs[f] = t.abs() * (1.0 - STATISTIC_TIE);
                }
                let magnitude = t.abs();
                if magnitude >= observed_abs[f] {
                    reached[f] += 1;
                }
                if magnitude.is_finite() && (block_max.is_nan() || magnitude > block_max) {
                    block_max = magnitude;
                }
            }
            maxima[permutation] = block_max;
        }
    }
    BlockResult { observed, reached, maxima }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    /// Every ordering of 0..n (Heap's algorithm), the identity first.
    fn all_permutations(n: usize) -> Vec<Vec<usize>> {
        fn heap(k: usize, order: &mut Vec<usize>, out: &mut Vec<Vec<usize>>) {
            if k <= 1 {
                out.push(order.clone());
                return;
            }
            heap(k - 1, order, out);
            for i in 0..k - 1 {
                if k.is_multiple_of(2) {
                    order.swap(i, k - 1);
                } else {
                    order.swap(0, k - 1);
                }
                heap(k - 1, order, out);
            }
        }
        let mut out = Vec::new();
        heap(n, &mut (0..n).collect(), &mut out);
        out
    }

    fn two_group_design(n_a: usize, n_b: usize) -> Design {
        let n = n_a + n_b;
        Design {
            columns: vec!["intercept".into(), "group".into()],
            values: (0..n).flat_map(|i| [1.0, if i < n_a { 1.0 } else { 0.0 }]).collect(),
        }
    }

    #[test]
    fn exact_p_over_all_permutations_is_the_stated_count() {
        // 3 vs 3 with values 4, 5, 6 against 1, 2, 3: only the two splits {4,5,6} | {1,2,3}
        // and its mirror reach |t|; each is 3! x 3! = 36 of the 6! = 720 orderings, so the
        // exact two-sided permutation p is 72 / 720 = 0.1 (hand count).
        let values = vec![4.0f32, 5.0, 6.0, 1.0, 2.0, 3.0];
        let features = FeatureMatrix { values: Array2::from_shape_vec((6, 1), values).unwrap() };
        let permutations = all_permutations(6);
        assert_eq!(permutations.len(), 720);
        let result =
            freedman_lane(&features, &(0..6).collect::<Vec<_>>(), &two_group_design(3, 3), 1, &permutations)
                .unwrap();
        approx::assert_relative_eq!(result.p_uncorrected[0], 0.1, max_relative = 1e-12);
        approx::assert_relative_eq!(result.p_fwe[0], 0.1, max_relative = 1e-12);
        approx::assert_relative_eq!(result.smallest_p, 1.0 / 720.0, max_relative = 1e-12);
        // The observed t is the pooled-variance t: means 5 and 2, pooled variance 1,
        // SE = sqrt(2/3), t = 3 / 0.8164965809 = 3.674234614 (hand computation).
        approx::assert_relative_eq!(f64::from(result.t[0]), 3.674234614, max_relative = 1e-6);
    }

    #[test]
    fn family_wise_p_never_below_uncorrected_and_matches_brute_force() {
        // 4 vs 4, three features, all 8! = 40,320 orderings. Brute force here: pooled t per
        // ordering from the textbook formula, independent of the kernel.
        let n = 8;
        let columns = 3;
        let raw: Vec<f32> = (0..n * columns)
            .map(|i| {
                ((i * 37 % 17) as f32) * 0.3 + if i % columns == 0 && i < 4 * columns { 2.0 } else { 0.0 }
            })
            .collect();
        let features = FeatureMatrix { values: Array2::from_shape_vec((n, columns), raw.clone()).unwrap() };
        let permutations = all_permutations(n);
        let result =
            freedman_lane(&features, &(0..n).collect::<Vec<_>>(), &two_group_design(4, 4), 1, &permutations)
                .unwrap();
        let pooled_t = |order: &[usize], f: usize| {
            let value = |i: usize| f64::from(raw[order[i] * columns + f]);
            let a: Vec<f64> = (0..4).map(value).collect();
            let b: Vec<f64> = (4..8).map(value).collect();
            let mean = |s: &[f64]| s.iter().sum::<f64>() / s.len() as f64;
            let ss = |s: &[f64]| {
                let m = mean(s);
                s.iter().map(|v| (v - m).powi(2)).sum::<f64>()
            };
            let pooled = (ss(&a) + ss(&b)) / 6.0;
            (mean(&a) - mean(&b)) / (pooled * 0.5).sqrt()
        };
        for f in 0..columns {
            let observed = pooled_t(&permutations[0], f).abs();
            let reached = permutations
                .iter()
                .filter(|order| pooled_t(order, f).abs() >= observed * (1.0 - 1e-9))
                .count();
            let family = permutations
                .iter()
                .filter(|order| {
                    (0..columns).map(|g| pooled_t(order, g).abs()).fold(0.0, f64::max)
                        >= observed * (1.0 - 1e-9)
                })
                .count();
            approx::assert_relative_eq!(
                result.p_uncorrected[f],
                reached as f64 / 40320.0,
                max_relative = 1e-12
            );
            approx::assert_relative_eq!(result.p_fwe[f], family as f64 / 40320.0, max_relative = 1e-12);
            assert!(result.p_fwe[f] >= result.p_uncorrected[f]);
        }
    }

    #[test]
    fn seeded_permutations_are_reproducible_and_validated() {
        let a = random_permutations(10, 5, 3);
        assert_eq!(a, random_permutations(10, 5, 3));
        assert_eq!(a[0], (0..10).collect::<Vec<_>>());
        assert_ne!(a[1], a[2]);
        let features = FeatureMatrix { values: Array2::zeros((4, 1)) };
        let error = freedman_lane(&features, &[0, 1, 2, 3], &two_group_design(2, 2), 1, &[vec![1, 0, 2, 3]])
            .unwrap_err();
        assert_eq!(
            error.to_string(),
            "permutation test: the first permutation must be the identity (the observed data)"
        );
    }
}
