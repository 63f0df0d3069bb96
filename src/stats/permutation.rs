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

/// A residual sum of squares at or below this share of the nuisance residuals' sum of squares
/// counts as an exact fit (f64 rounding leaves about 1e-15); a permuted F there is infinite
/// (chosen here).
pub const PERFECT_FIT: f64 = 1e-12;

/// Result of a permutation test of one design column, per feature.
#[derive(Debug, Clone, PartialEq)]
pub struct PermutationTest {
    /// The observed t of the tested coefficient ([`freedman_lane`]), or the observed F of the
    /// tested columns ([`freedman_lane_f`]).
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
    check_inputs(features, rows, permutations)?;
    let full = factorise(design, n)?;
    let nuisance = nuisance_factors(design, &[column], n)?;
    let weights: Vec<f64> = (0..k).map(|j| full.r_inverse[column * k + j]).collect();
    let variance_factor = full.unscaled_covariance[column * k + column];
    let dof = (n - k) as f64;
    let statistic = |u: &[f64], total_ss: f64| {
        let estimate: f64 = weights.iter().zip(u).map(|(w, u)| w * u).sum();
        let explained: f64 = u.iter().map(|u| u * u).sum();
        let rss = (total_ss - explained).max(0.0);
        let se = (rss / dof * variance_factor).sqrt();
        if se > 0.0 {
            estimate / se
        } else {
            f64::NAN
        }
    };
    Ok(run_permutations(features, rows, nuisance.as_ref(), &[&full], permutations, &statistic))
}

/// Freedman-Lane permutation test of several design columns at once by the F of the full model
/// against the reduced model without them, with per-feature and family-wise (max F) p values.
///
/// With Z the design without the `tested` columns and R_z = (I - H_z) Y, each permutation P
/// gives Y* = P R_z + H_z Y. H_z Y lies in the span of both models, so the F of Y* equals the F of
/// P R_z, computed from U_x = Q_x' P R_z and U_z = Q_z' P R_z (thin Q of the full and reduced
/// designs, each factorised once):
///
/// ```text
/// RSS_full* = ||R_z||^2 - ||U_x||^2,   RSS_reduced* = ||R_z||^2 - ||U_z||^2
/// F* = ((RSS_reduced* - RSS_full*) / q) / (RSS_full* / (n - k))      (q tested columns, k in all)
/// p_f     = #{b : F*_b,f >= F_f} / B
/// p_fwe_f = #{b : max_g F*_b,g >= F_f} / B
/// ```
///
/// The observed F (the identity permutation) is the usual nested-model F. A permutation whose
/// data the full model fits exactly (RSS_full* <= [`PERFECT_FIT`] ||R_z||^2) has an infinite
/// F*, which reaches every observed F. Features with no residual variation get NaN and do not
/// enter the maxima.
///
/// # Arguments
/// * `features` - the N x F participant-by-feature matrix.
/// * `rows` - the participant rows of the model; design row i belongs to `rows[i]`.
/// * `design` - n x k full design with n = `rows.len()`.
/// * `tested` - the design columns dropped in the reduced model (at least one, distinct).
/// * `permutations` - orderings of 0..n; the first must be the identity (the observed data).
///
/// # Returns
/// A [`PermutationTest`] whose `t` field holds the observed F.
///
/// # Errors
/// As [`freedman_lane`]; [`StatsError::InvalidInput`] when `tested` is empty, repeats a column
/// or names one outside the design.
///
/// # Complexity
/// O(B (2k - q) n F) time; memory and parallelism as [`freedman_lane`].
///
/// # References
/// Freedman & Lane 1983, J Bus Econ Stat 1:292-298; Nichols & Holmes 2002, Hum Brain Mapp
/// 15:1-25; Winkler et al. 2014, NeuroImage 92:381-397 (Freedman-Lane for F statistics).
pub fn freedman_lane_f(
    features: &FeatureMatrix,
    rows: &[usize],
    design: &Design,
    tested: &[usize],
    permutations: &[Vec<usize>],
) -> Result<PermutationTest, StatsError> {
    let n = rows.len();
    let k = design.column_count();
    let invalid = |message: String| StatsError::InvalidInput { test: "permutation test".into(), message };
    let mut sorted_tested = tested.to_vec();
    sorted_tested.sort_unstable();
    sorted_tested.dedup();
    if tested.is_empty() || sorted_tested.len() != tested.len() || sorted_tested.iter().any(|&c| c >= k) {
        return Err(invalid(format!(
            "the tested columns {tested:?} must be distinct, at least one, and inside the design's {k} columns"
        )));
    }
    check_inputs(features, rows, permutations)?;
    let full = factorise(design, n)?;
    let nuisance = nuisance_factors(design, tested, n)?;
    let q = tested.len() as f64;
    let dof = (n - k) as f64;
    let statistic = |u: &[f64], total_ss: f64| {
        let explained_full: f64 = u[..k].iter().map(|u| u * u).sum();
        let explained_reduced: f64 = u[k..].iter().map(|u| u * u).sum();
        let rss = (total_ss - explained_full).max(0.0);
        let numerator = (explained_full - explained_reduced).max(0.0) / q;
        if rss > PERFECT_FIT * total_ss {
            numerator / (rss / dof)
        } else if numerator > PERFECT_FIT * total_ss {
            f64::INFINITY // the permuted data fit the full model exactly but not the reduced one
        } else {
            f64::NAN
        }
    };
    let stacked: Vec<&Factors> = std::iter::once(&full).chain(nuisance.as_ref()).collect();
    Ok(run_permutations(features, rows, nuisance.as_ref(), &stacked, permutations, &statistic))
}

/// The permutation, ordering and row checks shared by both tests.
fn check_inputs(
    features: &FeatureMatrix,
    rows: &[usize],
    permutations: &[Vec<usize>],
) -> Result<(), StatsError> {
    let n = rows.len();
    let invalid = |message: String| StatsError::InvalidInput { test: "permutation test".into(), message };
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
    Ok(())
}

/// The factorisation of the design without the `dropped` columns (`None` when nothing is left).
fn nuisance_factors(design: &Design, dropped: &[usize], n: usize) -> Result<Option<Factors>, StatsError> {
    let k = design.column_count();
    let kept: Vec<usize> = (0..k).filter(|j| !dropped.contains(j)).collect();
    if kept.is_empty() {
        return Ok(None);
    }
    let reduced = Design {
        columns: kept.iter().map(|&j| design.columns[j].clone()).collect(),
        values: (0..n).flat_map(|i| kept.iter().map(move |&j| design.values[i * k + j])).collect(),
    };
    Ok(Some(factorise(&reduced, n)?))
}

/// Permute the nuisance residuals, evaluate `statistic` (from the stacked permuted Q'R_z and
/// ||R_z||^2) for every permutation and feature, and count per-feature and max-statistic
/// exceedances of the observed |statistic|.
fn run_permutations(
    features: &FeatureMatrix,
    rows: &[usize],
    nuisance: Option<&Factors>,
    stacked: &[&Factors],
    permutations: &[Vec<usize>],
    statistic: &(dyn Fn(&[f64], f64) -> f64 + Sync),
) -> PermutationTest {
    let n = rows.len();
    // Permuted Q' for every permutation, the factors' Q side by side:
    // A_b[j, pi(i)] = Q[i, j], stacked (B k) x n with k the total column count.
    let k: usize = stacked.iter().map(|f| f.columns).sum();
    let count = permutations.len();
    let mut permuted_q = vec![0.0f64; count * k * n];
    for (b, permutation) in permutations.iter().enumerate() {
        for (i, &target) in permutation.iter().enumerate() {
            let mut j = 0;
            for factors in stacked {
                for c in 0..factors.columns {
                    permuted_q[(b * k + j) * n + target] = factors.q[i * factors.columns + c];
                    j += 1;
                }
            }
        }
    }

    let data = features.row_major();
    let width = features.feature_count();
    let blocks: Vec<BlockResult> = (0..width.div_ceil(PERMUTATION_FEATURE_BLOCK))
        .into_par_iter()
        .map(|block| {
            let start = block * PERMUTATION_FEATURE_BLOCK;
            let len = PERMUTATION_FEATURE_BLOCK.min(width - start);
            let residuals = nuisance_residuals(nuisance, data, width, rows, start, len);
            permute_block(&residuals, n, len, &permuted_q, count, k, statistic)
        })
        .collect();

    let mut t = Vec::with_capacity(width);
    let mut reached = Vec::with_capacity(width);
    let mut max_statistic = vec![f64::NAN; count];
    for block in blocks {
        t.extend(block.observed);
        reached.extend(block.reached);
        for (maximum, candidate) in max_statistic.iter_mut().zip(block.maxima) {
            if !candidate.is_nan() && (maximum.is_nan() || candidate > *maximum) {
                *maximum = candidate;
            }
        }
    }
    let total = count as f64;
    let mut sorted_maxima: Vec<f64> = max_statistic.iter().copied().filter(|v| !v.is_nan()).collect();
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
    PermutationTest {
        t: t.iter().map(|&t| t as f32).collect(),
        p_uncorrected,
        p_fwe,
        permutations: count,
        smallest_p: 1.0 / total,
        max_statistic,
    }
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

fn permute_block(
    residuals: &[f64],
    n: usize,
    len: usize,
    permuted_q: &[f64],
    count: usize,
    k: usize,
    statistic: &(dyn Fn(&[f64], f64) -> f64 + Sync),
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
    let mut column = vec![0.0f64; k];
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
                for (j, value) in column.iter_mut().enumerate() {
                    *value = output[(b * k + j) * len + f];
                }
                let t = statistic(&column, total_ss[f]);
                if permutation == 0 {
                    observed[f] = t;
                    observed_abs[f] = t.abs() * (1.0 - STATISTIC_TIE);
                }
                let magnitude = t.abs();
                if magnitude >= observed_abs[f] {
                    reached[f] += 1;
                }
                if !magnitude.is_nan() && (block_max.is_nan() || magnitude > block_max) {
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
    /// Balanced 2 x 2 design (group x community, `per_cell` rows per cell, cells in row order
    /// a1 b1 a2 b2 repeated): intercept, group, community, group x community.
    fn two_by_two_design(per_cell: usize) -> (Design, Vec<(usize, usize)>) {
        let cells: Vec<(usize, usize)> = (0..4 * per_cell).map(|i| ((i % 4) / 2, i % 2)).collect();
        let design = Design {
            columns: vec!["intercept".into(), "group".into(), "community".into(), "interaction".into()],
            values: cells.iter().flat_map(|&(g, c)| [1.0, g as f64, c as f64, (g * c) as f64]).collect(),
        };
        (design, cells)
    }

    /// Textbook balanced two-way ANOVA (Montgomery, Design and Analysis of Experiments, ch. 5):
    /// additive fit y_ij = mean_i. + mean_.j - mean.., interaction SS = m sum (cell mean - additive)^2,
    /// error SS = within-cell SS, F = SS_AB / (SS_E / (n - 4)).
    fn textbook_interaction_f(y: &[f64], cells: &[(usize, usize)]) -> (f64, Vec<f64>) {
        let n = y.len();
        let m = (n / 4) as f64;
        let mut cell = [[0.0; 2]; 2];
        for (&(g, c), &v) in cells.iter().zip(y) {
            cell[g][c] += v / m;
        }
        let grand = (cell[0][0] + cell[0][1] + cell[1][0] + cell[1][1]) / 4.0;
        let row = |g: usize| (cell[g][0] + cell[g][1]) / 2.0;
        let col = |c: usize| (cell[0][c] + cell[1][c]) / 2.0;
        let additive: Vec<f64> = cells.iter().map(|&(g, c)| row(g) + col(c) - grand).collect();
        let ss_ab: f64 = (0..2)
            .flat_map(|g| (0..2).map(move |c| (g, c)))
            .map(|(g, c)| m * (cell[g][c] - (row(g) + col(c) - grand)).powi(2))
            .sum();
        let ss_e: f64 = cells.iter().zip(y).map(|(&(g, c), &v)| (v - cell[g][c]).powi(2)).sum();
        (ss_ab / (ss_e / (n as f64 - 4.0)), additive)
    }

    #[test]
    fn interaction_f_exact_over_all_permutations_matches_textbook_count() {
        // 2 per cell, n = 8, all 8! = 40,320 orderings of the reduced-model residuals. Brute
        // force: Y* = P R_z + fitted (additive fit by the textbook formula), F by the textbook
        // two-way formula; p = count / 40,320, independent of the kernel. The values repeat, so
        // some orderings fit the full model exactly (infinite F, counted as reaching).
        let (design, cells) = two_by_two_design(2);
        let n = 8;
        let columns = 3;
        let raw: Vec<f32> = (0..n * columns)
            .map(|i| {
                ((i * 29 % 13) as f32) * 0.4
                    + if i % columns == 0 && (i / columns) % 4 == 3 { 3.0 } else { 0.0 }
            })
            .collect();
        let features = FeatureMatrix { values: Array2::from_shape_vec((n, columns), raw.clone()).unwrap() };
        let permutations = all_permutations(n);
        let rows: Vec<usize> = (0..n).collect();
        let result = freedman_lane_f(&features, &rows, &design, &[3], &permutations).unwrap();
        let permuted_f = |order: &[usize], f: usize| {
            let y: Vec<f64> = (0..n).map(|i| f64::from(raw[i * columns + f])).collect();
            let (_, fitted) = textbook_interaction_f(&y, &cells);
            let residual: Vec<f64> = y.iter().zip(&fitted).map(|(y, h)| y - h).collect();
            // Row i takes the residual of row order[i] (the kernel's P).
            let mut star = fitted.clone();
            for (i, &source) in order.iter().enumerate() {
                star[i] += residual[source];
            }
            textbook_interaction_f(&star, &cells).0
        };
        let values: Vec<Vec<f64>> =
            (0..columns).map(|f| permutations.iter().map(|order| permuted_f(order, f)).collect()).collect();
        let maxima: Vec<f64> =
            (0..permutations.len()).map(|b| (0..columns).map(|f| values[f][b]).fold(0.0, f64::max)).collect();
        for (f, values) in values.iter().enumerate() {
            let observed = values[0];
            approx::assert_relative_eq!(f64::from(result.t[f]), observed, max_relative = 1e-5);
            let reached = values.iter().filter(|&&v| v >= observed * (1.0 - 1e-9)).count();
            let family = maxima.iter().filter(|&&v| v >= observed * (1.0 - 1e-9)).count();
            approx::assert_relative_eq!(
                result.p_uncorrected[f],
                reached as f64 / 40320.0,
                max_relative = 1e-12
            );
            approx::assert_relative_eq!(result.p_fwe[f], family as f64 / 40320.0, max_relative = 1e-12);
            assert!(result.p_fwe[f] >= result.p_uncorrected[f]);
        }
        // The observed F is the nested-model F of the linear model (checked against statsmodels'
        // anova_lm in tests/reference_glm.rs).
        let model = crate::stats::fit_linear_model(&features, &rows, &design).unwrap();
        let nested = crate::stats::contrast_f(&model, &[vec![0.0, 0.0, 0.0, 1.0]]).unwrap();
        for f in 0..columns {
            approx::assert_relative_eq!(result.t[f], nested.f[f], max_relative = 1e-4);
        }
    }

    #[test]
    fn interaction_p_on_the_grid_and_thread_count_free() {
        // 3 per cell plus a covariate, 2,100 features (3 blocks), 199 random permutations:
        // every p is (b + 1) / 200 for a whole b, FWE p >= per-feature p, and 1 and 2 threads agree
        // bitwise.
        let (mut design, _) = two_by_two_design(3);
        let n = 12;
        let covariate: Vec<f64> = (0..n).map(|i| ((i * 7) % 5) as f64).collect();
        design.columns.push("age".into());
        design.values = (0..n)
            .flat_map(|i| design.values[i * 4..i * 4 + 4].iter().copied().chain([covariate[i]]))
            .collect();
        let width = 2100;
        let values: Vec<f32> = (0..n * width).map(|v| ((v * 7919) % 1009) as f32 * 0.01).collect();
        let features = FeatureMatrix { values: Array2::from_shape_vec((n, width), values).unwrap() };
        let rows: Vec<usize> = (0..n).collect();
        let permutations = random_permutations(n, 199, 11);
        let run = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
            pool.install(|| freedman_lane_f(&features, &rows, &design, &[3], &permutations).unwrap())
        };
        let one = run(1);
        assert_eq!(format!("{one:?}"), format!("{:?}", run(2)));
        assert_eq!(one.permutations, 200);
        approx::assert_relative_eq!(one.smallest_p, 1.0 / 200.0, max_relative = 1e-12);
        for (&p, &fwe) in one.p_uncorrected.iter().zip(&one.p_fwe) {
            for value in [p, fwe] {
                let b = value * 200.0 - 1.0;
                assert!((b - b.round()).abs() < 1e-9 && b >= -1e-9, "p {value} is off the grid");
            }
            assert!(fwe >= p, "FWE p {fwe} below per-feature p {p}");
        }
        let error = freedman_lane_f(&features, &rows, &design, &[], &permutations).unwrap_err();
        assert_eq!(
            error.to_string(),
            "permutation test: the tested columns [] must be distinct, at least one, and inside the design's 5 columns"
        );
    }
}
