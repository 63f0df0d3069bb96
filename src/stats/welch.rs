//! Welch's unequal-variance t test, feature by feature, with Hedges g.
//!
//! The feature matrix is row-major (one participant per row), so the kernels walk each group's
//! rows over one block of [`FEATURE_BLOCK`] contiguous features at a time: every load is a
//! contiguous run of f32 values, the f64 accumulators of a block stay in L1/L2 cache, and blocks
//! run in parallel with rayon. Moments use two passes (mean first, then the sum of squared
//! deviations) in f64, so a constant feature has a variance of exactly 0 and large offsets do not
//! cancel. Results are independent of the thread count: every feature is computed by one thread
//! in a fixed order. Which rows form a group is decided by the caller.

use rayon::prelude::*;
use statrs::distribution::{ContinuousCDF, StudentsT};
use statrs::function::gamma::ln_gamma;

use super::StatsError;
use crate::features::FeatureMatrix;

/// Features per parallel block. 512 features x 300 participants of f32 is 600 KB, so a block's
/// second pass re-reads its values from cache; chosen by measurement on the target machine kind
/// (256-2048 perform alike there), not from a published source.
pub const FEATURE_BLOCK: usize = 512;

/// Participants needed in each group of a Welch comparison: a sample variance needs two values.
pub const MIN_GROUP_SIZE: usize = 2;

/// Label of the first group in errors before [`StatsError::for_community`] renames it.
pub(crate) const GROUP_A: &str = "A";
/// Label of the second group in errors before [`StatsError::for_community`] renames it.
pub(crate) const GROUP_B: &str = "B";

/// Per-feature results of a Welch comparison of group A against group B (A - B).
///
/// Every vector has one entry per feature, in feature order. Statistics are computed in f64;
/// `p` and `q` are kept in f64 (small p values matter for the correction), the rest stored as f32.
///
/// Degenerate features (no panic, documented choice):
/// * both groups constant and equal means: `t = 0`, `p = 1`, `hedges_g = 0`, `dof = NaN`
///   (the Welch-Satterthwaite formula is 0/0 there and no distribution is involved);
/// * both groups constant with different means: `t`, `dof`, `p`, `hedges_g` are NaN (the
///   evidence cannot be quantified without any within-group variation, and reporting p = 0
///   would dominate the correction);
/// * a NaN in the input values of a group makes that feature's statistics NaN.
///
/// NaN p values are not counted as tests by [`super::benjamini_hochberg`] and get a NaN q.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// Participants in group A.
    pub count_a: usize,
    /// Participants in group B.
    pub count_b: usize,
    /// Mean of group A.
    pub mean_a: Vec<f32>,
    /// Mean of group B.
    pub mean_b: Vec<f32>,
    /// `mean_a - mean_b`.
    pub difference: Vec<f32>,
    /// Welch t of A - B.
    pub t: Vec<f32>,
    /// Welch-Satterthwaite degrees of freedom.
    pub dof: Vec<f32>,
    /// Two-sided p from Student's t with `dof` degrees of freedom.
    pub p: Vec<f64>,
    /// Benjamini-Hochberg adjusted p (q) across all features of this comparison.
    pub q: Vec<f64>,
    /// Hedges g: pooled-SD Cohen's d times the exact small-sample correction J.
    pub hedges_g: Vec<f32>,
}

impl Comparison {
    /// Number of features compared.
    pub fn feature_count(&self) -> usize {
        self.t.len()
    }
}

/// Mean of each feature over the given rows.
///
/// `mean_f = (1 / n) * sum_{r in rows} x[r, f]`, accumulated in f64 and stored as f32.
///
/// # Arguments
/// * `features` - the N x F participant-by-feature matrix.
/// * `rows` - participant rows to average (a row listed twice counts twice).
///
/// # Returns
/// F means; NaN for every feature when `rows` is empty.
///
/// # Panics
/// If a row is `>= features.participant_count()`: rows come from the pipeline's own grouping,
/// never from user files, so this is a caller bug. [`welch_comparison`] checks its rows and
/// returns an error instead.
///
/// # Complexity
/// O(n F) time with n = `rows.len()`, O(F) memory; parallel over feature blocks.
pub fn group_mean(features: &FeatureMatrix, rows: &[usize]) -> Vec<f32> {
    let participant_count = features.participant_count();
    if let Some(&row) = rows.iter().find(|&&row| row >= participant_count) {
        panic!("group_mean: row {row} out of range for {participant_count} participants");
    }
    let data = features.row_major();
    let width = features.feature_count();
    let mut means = vec![0.0f32; width];
    let mut sums = vec![0.0f64; width];
    means.par_chunks_mut(FEATURE_BLOCK).zip(sums.par_chunks_mut(FEATURE_BLOCK)).enumerate().for_each(
        |(block, (means, sums))| {
            let start = block * FEATURE_BLOCK;
            accumulate_sums(data, width, rows, start, sums);
            let scale = 1.0 / rows.len() as f64;
            for (mean, sum) in means.iter_mut().zip(sums.iter()) {
                *mean = (sum * scale) as f32;
            }
        },
    );
    means
}

/// Welch's t test of group A against group B for every feature, with Hedges g and BH q.
///
/// For each feature, with group sizes n_a, n_b, means m_a, m_b and sample variances
/// s_a^2, s_b^2 (denominator n - 1):
///
/// ```text
/// t   = (m_a - m_b) / sqrt(s_a^2/n_a + s_b^2/n_b)
/// dof = (s_a^2/n_a + s_b^2/n_b)^2 / ((s_a^2/n_a)^2/(n_a-1) + (s_b^2/n_b)^2/(n_b-1))
/// p   = 2 * P(T_dof > |t|)                          (two-sided, capped at 1)
/// s_p = sqrt(((n_a-1) s_a^2 + (n_b-1) s_b^2) / (n_a+n_b-2))
/// d   = (m_a - m_b) / s_p                           (Cohen's d, pooled SD)
/// g   = J(n_a+n_b-2) * d,  J(m) = Gamma(m/2) / (sqrt(m/2) Gamma((m-1)/2))
/// q   = Benjamini-Hochberg adjustment of p across the features
/// ```
///
/// J is Hedges' exact bias correction (Hedges 1981, eq. for J(m)), not the approximation
/// 1 - 3/(4m - 1); see [`hedges_correction`]. Degenerate features are described on
/// [`Comparison`].
///
/// # Arguments
/// * `features` - the N x F participant-by-feature matrix.
/// * `rows_a`, `rows_b` - participant rows of the two groups (disjoint, each row at most once).
///
/// # Returns
/// A [`Comparison`] with F entries per vector.
///
/// # Errors
/// [`StatsError::TooFewParticipants`] if a group has fewer than [`MIN_GROUP_SIZE`] rows,
/// [`StatsError::RowOutOfRange`] for a row `>= N`, [`StatsError::OverlappingGroups`] for a row
/// listed twice. Errors name groups `A`/`B`; see [`StatsError::for_community`].
///
/// # Complexity
/// O((n_a + n_b) F) time (two passes over the groups' rows), O(F) memory; parallel over
/// blocks of [`FEATURE_BLOCK`] features. 300 x 230,000 takes well under a second.
///
/// # References
/// Welch 1947, Biometrika 34:28-35; Satterthwaite 1946, Biometrics Bulletin 2:110-114;
/// Hedges 1981, J Educ Stat 6:107-128; Benjamini & Hochberg 1995, J R Stat Soc B 57:289-300.
pub fn welch_comparison(
    features: &FeatureMatrix,
    rows_a: &[usize],
    rows_b: &[usize],
) -> Result<Comparison, StatsError> {
    check_groups(features.participant_count(), rows_a, rows_b)?;
    let data = features.row_major();
    let width = features.feature_count();
    let count_a = rows_a.len();
    let count_b = rows_b.len();

    // Per feature: [mean_a, m2_a, mean_b, m2_b] with m2 the sum of squared deviations.
    let mut moments = vec![[0.0f64; 4]; width];
    moments.par_chunks_mut(FEATURE_BLOCK).enumerate().for_each(|(block, moments)| {
        let start = block * FEATURE_BLOCK;
        let len = moments.len();
        let mut mean = vec![0.0f64; len];
        let mut m2 = vec![0.0f64; len];
        for (slot, rows) in [(0usize, rows_a), (2usize, rows_b)] {
            group_moments(data, width, rows, start, &mut mean, &mut m2);
            for ((moment, mean), m2) in moments.iter_mut().zip(&mean).zip(&m2) {
                moment[slot] = *mean;
                moment[slot + 1] = *m2;
            }
        }
    });

    let correction = hedges_correction((count_a + count_b - 2) as f64);
    let per_feature: Vec<FeatureStatistics> = moments
        .par_iter()
        .map(|moment| feature_statistics(moment, count_a as f64, count_b as f64, correction))
        .collect();

    let p: Vec<f64> = per_feature.iter().map(|s| s.p).collect();
    let q = super::benjamini_hochberg(&p);
    Ok(Comparison {
        count_a,
        count_b,
        mean_a: moments.iter().map(|m| m[0] as f32).collect(),
        mean_b: moments.iter().map(|m| m[2] as f32).collect(),
        difference: per_feature.iter().map(|s| s.difference as f32).collect(),
        t: per_feature.iter().map(|s| s.t as f32).collect(),
        dof: per_feature.iter().map(|s| s.dof as f32).collect(),
        p,
        q,
        hedges_g: per_feature.iter().map(|s| s.hedges_g as f32).collect(),
    })
}

/// Hedges' exact small-sample bias correction J(m) for Cohen's d with m degrees of freedom.
///
/// `J(m) = Gamma(m/2) / (sqrt(m/2) * Gamma((m-1)/2))`, computed through log-gamma so it stays
/// finite for large m (J tends to 1). For n_a + n_b = 30 (m = 28), J = 0.9729321151, against
/// 0.9729729730 for the common approximation 1 - 3/(4m - 1).
///
/// # Returns
/// J(m) in (0, 1) for m > 1; NaN for m <= 1 (Gamma((m-1)/2) has its pole at m = 1).
///
/// # References
/// Hedges 1981, J Educ Stat 6:107-128 (exact J and its approximation).
pub fn hedges_correction(degrees_of_freedom: f64) -> f64 {
    if degrees_of_freedom.is_nan() || degrees_of_freedom <= 1.0 {
        return f64::NAN;
    }
    let half = degrees_of_freedom / 2.0;
    (ln_gamma(half) - ln_gamma(half - 0.5) - 0.5 * half.ln()).exp()
}

/// The statistics of one feature, in f64.
struct FeatureStatistics {
    difference: f64,
    t: f64,
    dof: f64,
    p: f64,
    hedges_g: f64,
}

fn feature_statistics(moment: &[f64; 4], count_a: f64, count_b: f64, correction: f64) -> FeatureStatistics {
    let [mean_a, m2_a, mean_b, m2_b] = *moment;
    let difference = mean_a - mean_b;
    let variance_a = m2_a / (count_a - 1.0);
    let variance_b = m2_b / (count_b - 1.0);
    let share_a = variance_a / count_a;
    let share_b = variance_b / count_b;
    let squared_error = share_a + share_b;
    let pooled_sd = ((m2_a + m2_b) / (count_a + count_b - 2.0)).sqrt();

    if squared_error > 0.0 {
        let t = difference / squared_error.sqrt();
        let dof = squared_error * squared_error
            / (share_a * share_a / (count_a - 1.0) + share_b * share_b / (count_b - 1.0));
        FeatureStatistics {
            difference,
            t,
            dof,
            p: two_sided_p(t, dof),
            hedges_g: correction * difference / pooled_sd,
        }
    } else if squared_error == 0.0 && difference == 0.0 {
        FeatureStatistics { difference, t: 0.0, dof: f64::NAN, p: 1.0, hedges_g: 0.0 }
    } else {
        // Constant groups with different means, or NaN in the input.
        FeatureStatistics { difference, t: f64::NAN, dof: f64::NAN, p: f64::NAN, hedges_g: f64::NAN }
    }
}

/// Two-sided p = 2 * sf(|t|) of Student's t with `dof` degrees of freedom, capped at 1.
fn two_sided_p(t: f64, dof: f64) -> f64 {
    if t.is_nan() {
        return f64::NAN;
    }
    match StudentsT::new(0.0, 1.0, dof) {
        Ok(distribution) => (2.0 * distribution.sf(t.abs())).min(1.0),
        Err(_) => f64::NAN,
    }
}

/// Sums of `rows` over features `start..start + sums.len()` into `sums` (overwritten).
fn accumulate_sums(data: &[f32], width: usize, rows: &[usize], start: usize, sums: &mut [f64]) {
    sums.fill(0.0);
    let len = sums.len();
    for &row in rows {
        let offset = row * width + start;
        let values = &data[offset..offset + len];
        for (sum, &value) in sums.iter_mut().zip(values) {
            *sum += f64::from(value);
        }
    }
}

/// Two-pass mean and sum of squared deviations of `rows` over one feature block.
fn group_moments(data: &[f32], width: usize, rows: &[usize], start: usize, mean: &mut [f64], m2: &mut [f64]) {
    accumulate_sums(data, width, rows, start, mean);
    let scale = 1.0 / rows.len() as f64;
    mean.iter_mut().for_each(|value| *value *= scale);
    m2.fill(0.0);
    let len = mean.len();
    for &row in rows {
        let offset = row * width + start;
        let values = &data[offset..offset + len];
        for ((m2, &mean), &value) in m2.iter_mut().zip(mean.iter()).zip(values) {
            let deviation = f64::from(value) - mean;
            *m2 += deviation * deviation;
        }
    }
}

/// Sizes, ranges and disjointness of the two groups.
fn check_groups(participant_count: usize, rows_a: &[usize], rows_b: &[usize]) -> Result<(), StatsError> {
    let scope = || "comparison".to_string();
    for (group, rows) in [(GROUP_A, rows_a), (GROUP_B, rows_b)] {
        if rows.len() < MIN_GROUP_SIZE {
            return Err(StatsError::TooFewParticipants {
                scope: scope(),
                group: group.to_string(),
                count: rows.len(),
                minimum: MIN_GROUP_SIZE,
            });
        }
    }
    // 0 = unused, 1 = group A, 2 = group B.
    let mut owner = vec![0u8; participant_count];
    for (mark, group, rows) in [(1u8, GROUP_A, rows_a), (2u8, GROUP_B, rows_b)] {
        for &row in rows {
            let Some(slot) = owner.get_mut(row) else {
                return Err(StatsError::RowOutOfRange {
                    scope: scope(),
                    group: group.to_string(),
                    row,
                    participant_count,
                });
            };
            if *slot != 0 {
                let first = if *slot == 1 { GROUP_A } else { GROUP_B };
                return Err(StatsError::OverlappingGroups {
                    scope: scope(),
                    row,
                    group_a: first.to_string(),
                    group_b: group.to_string(),
                });
            }
            *slot = mark;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    fn matrix(rows: usize, cols: usize, values: Vec<f32>) -> FeatureMatrix {
        FeatureMatrix { values: Array2::from_shape_vec((rows, cols), values).unwrap() }
    }

    #[test]
    fn hedges_correction_exact_for_df_28() {
        // Exact J for n1 + n2 = 30: REFERENCES.md (computed; Hedges 1981).
        approx::assert_relative_eq!(hedges_correction(28.0), 0.9729321151, max_relative = 1e-9);
        // J(2) = Gamma(1) / (1 * Gamma(1/2)) = 1 / sqrt(pi) (analytic).
        approx::assert_relative_eq!(
            hedges_correction(2.0),
            1.0 / std::f64::consts::PI.sqrt(),
            max_relative = 1e-12
        );
        assert!(hedges_correction(1.0).is_nan());
        assert!(hedges_correction(1e7) < 1.0 && hedges_correction(1e7) > 0.9999999);
    }

    #[test]
    fn degenerate_features_follow_documented_choice() {
        // Feature 0: all 3.0 (equal constant groups); feature 1: A = 1, B = 2 (constant, different).
        let features = matrix(4, 2, vec![3.0, 1.0, 3.0, 1.0, 3.0, 2.0, 3.0, 2.0]);
        let result = welch_comparison(&features, &[0, 1], &[2, 3]).unwrap();
        assert_eq!(result.t[0], 0.0);
        assert_eq!(result.p[0], 1.0);
        assert_eq!(result.hedges_g[0], 0.0);
        assert!(result.dof[0].is_nan());
        assert!(result.t[1].is_nan() && result.p[1].is_nan() && result.hedges_g[1].is_nan());
        assert_eq!(result.difference[1], -1.0);
        // Only feature 0 is a test: q = p = 1 there, NaN for the other.
        assert_eq!(result.q[0], 1.0);
        assert!(result.q[1].is_nan());
    }

    #[test]
    fn group_mean_spans_blocks() {
        let width = FEATURE_BLOCK + 7;
        let values: Vec<f32> = (0..3 * width).map(|v| v as f32).collect();
        let features = matrix(3, width, values);
        let means = group_mean(&features, &[0, 2]);
        assert_eq!(means.len(), width);
        // Rows 0 and 2 of column c hold c and 2 * width + c: mean = width + c.
        for (column, mean) in means.iter().enumerate() {
            approx::assert_relative_eq!(*mean, (width + column) as f32);
        }
        assert!(group_mean(&features, &[]).iter().all(|m| m.is_nan()));
    }

    #[test]
    fn errors_name_groups_and_fix() {
        let features = matrix(4, 1, vec![1.0, 2.0, 3.0, 4.0]);
        let error = welch_comparison(&features, &[0], &[1, 2]).unwrap_err();
        assert_eq!(
            error.to_string(),
            "comparison: group A has 1 participant(s); a Welch comparison needs at least 2 in each group (a variance needs two values); skip this comparison or merge small communities"
        );
        let error = error.for_community("2", "insomnia", "control");
        assert!(error.to_string().starts_with("community 2: group insomnia has 1 participant(s)"));

        let error = welch_comparison(&features, &[0, 1], &[2, 9]).unwrap_err();
        assert_eq!(
            error.to_string(),
            "comparison: group B lists row 9, but the feature matrix has 4 participants (rows 0..4); build the groups from the same cohort as the features"
        );
        let error = welch_comparison(&features, &[0, 1], &[1, 2])
            .unwrap_err()
            .for_community("all", "insomnia", "control");
        assert_eq!(
            error.to_string(),
            "community all: row 1 is listed in group insomnia and in group control; each participant must belong to exactly one group of a comparison"
        );
    }
}
