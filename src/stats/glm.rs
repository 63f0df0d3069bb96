//! General linear model fitted to every feature at once: estimates, contrast t and F tests.
//!
//! One design matrix X (n participants x k columns) serves every feature, so it is factorised
//! once (thin QR through faer) and each feature only costs a projection of its n values on the
//! k columns of Q: no per-feature refit. The design itself (intercept, group indicators,
//! covariates) is assembled by the caller, as is the choice of which rows enter a model.

use faer::linalg::solvers::DenseSolveCore;
use faer::{Mat, Side};
use rayon::prelude::*;
use statrs::distribution::{ContinuousCDF, FisherSnedecor, StudentsT};

use super::welch::FEATURE_BLOCK;
use super::StatsError;
use crate::features::FeatureMatrix;

/// A design column whose QR diagonal is below this fraction of the largest diagonal is treated
/// as a linear combination of the columns before it. The value follows the usual rank tolerance
/// of pivoted QR (a small multiple of machine precision times the problem size), relaxed to
/// 1e-10 because designs hold raw covariates of very different scales (common practice).
pub const RANK_TOLERANCE: f64 = 1e-10;

/// A residual sum of squares below this fraction of the feature's raw sum of squares is a
/// perfect fit and is set to exactly 0: f64 rounding of f32 data leaves about 1e-30 there, far
/// below any real residual (chosen here, not from a published source).
pub const PERFECT_FIT: f64 = 1e-20;

/// An estimate below this fraction of the feature's largest coefficient counts as zero when the
/// fit is perfect (f64 rounding; chosen here, not from a published source).
pub const ZERO_ESTIMATE: f64 = 1e-9;

/// A design matrix: n rows (participants, in the order of the rows given to the fit) by k named
/// columns, stored row-major.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// Column names, e.g. `intercept`, `group[insomnia]`, `age`.
    pub columns: Vec<String>,
    /// n x k values, row-major.
    pub values: Vec<f64>,
}

impl Design {
    /// Number of rows (participants).
    pub fn row_count(&self) -> usize {
        if self.columns.is_empty() {
            0
        } else {
            self.values.len() / self.columns.len()
        }
    }

    /// Number of columns (parameters).
    pub fn column_count(&self) -> usize {
        self.columns.len()
    }

    /// Position of a named column.
    pub fn column_index(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|column| column == name)
    }
}

/// Ordinary least squares fitted to every feature with one design.
///
/// Coefficients are stored parameter-major: coefficient j of feature f sits at
/// `coefficients[j * feature_count + f]`.
#[derive(Debug, Clone)]
pub struct LinearModel {
    /// The design's column names.
    pub columns: Vec<String>,
    /// Participants that entered the fit (n).
    pub observation_count: usize,
    /// Residual degrees of freedom n - k.
    pub residual_dof: usize,
    /// (X'X)^-1, k x k row-major: the unscaled covariance of the estimates.
    pub unscaled_covariance: Vec<f64>,
    /// k x F least-squares estimates, parameter-major.
    pub coefficients: Vec<f64>,
    /// Residual sum of squares per feature.
    pub residual_ss: Vec<f64>,
    /// Number of features F.
    pub feature_count: usize,
}

impl LinearModel {
    /// Estimate of parameter `column` for every feature.
    pub fn coefficient(&self, column: usize) -> &[f64] {
        &self.coefficients[column * self.feature_count..(column + 1) * self.feature_count]
    }
}

/// Per-feature result of a t test of one contrast c'beta = 0.
#[derive(Debug, Clone, PartialEq)]
pub struct ContrastT {
    /// c'beta per feature.
    pub estimate: Vec<f32>,
    /// Standard error of c'beta per feature.
    pub standard_error: Vec<f32>,
    /// t = c'beta / SE.
    pub t: Vec<f32>,
    /// Residual degrees of freedom (one value: the design is shared).
    pub dof: f64,
    /// Two-sided p from Student's t with `dof` degrees of freedom.
    pub p: Vec<f64>,
    /// Benjamini-Hochberg q across the features.
    pub q: Vec<f64>,
}

/// Per-feature result of an F test of a set of contrasts (or of nested models).
#[derive(Debug, Clone, PartialEq)]
pub struct ContrastF {
    /// F statistic per feature.
    pub f: Vec<f32>,
    /// Numerator degrees of freedom (rank of the contrast set).
    pub dof_numerator: f64,
    /// Denominator degrees of freedom (residual dof of the full model).
    pub dof_denominator: f64,
    /// Upper-tail p of the F distribution.
    pub p: Vec<f64>,
    /// Benjamini-Hochberg q across the features.
    pub q: Vec<f64>,
}

/// Fits y_f = X beta_f + e_f by ordinary least squares for every feature f at once.
///
/// With the thin QR factorisation X = Q R (Q n x k with orthonormal columns, R k x k upper
/// triangular), computed once:
///
/// ```text
/// beta_f = R^-1 Q' y_f
/// RSS_f  = || y_f - Q Q' y_f ||^2        (residuals formed explicitly, f64)
/// (X'X)^-1 = R^-1 R^-T
/// ```
///
/// # Arguments
/// * `features` - the N x F participant-by-feature matrix (f32, read in f64).
/// * `rows` - the participant rows entering the model; design row i belongs to `rows[i]`.
///   Permuting `rows` permutes the data against the design.
/// * `design` - n x k design with n = `rows.len()`.
///
/// # Returns
/// A [`LinearModel`] with k x F estimates and F residual sums of squares.
///
/// # Errors
/// [`StatsError::RowOutOfRange`] for a row outside the matrix, [`StatsError::DesignShape`] when
/// the design does not have one row per given row, [`StatsError::TooFewForModel`] when
/// n <= k, [`StatsError::RankDeficient`] naming the first column that is a linear combination
/// of the columns before it.
///
/// # Complexity
/// O(n k^2) for the factorisation, then O(n k F) time and O(k F) memory, parallel over blocks
/// of features; every feature is computed by one thread in a fixed order (thread-count
/// independent).
///
/// # References
/// Golub & Van Loan 2013, Matrix Computations (4th ed.), sections 5.2-5.3 (least squares by QR).
pub fn fit_linear_model(
    features: &FeatureMatrix,
    rows: &[usize],
    design: &Design,
) -> Result<LinearModel, StatsError> {
    let participant_count = features.participant_count();
    if let Some(&row) = rows.iter().find(|&&row| row >= participant_count) {
        return Err(StatsError::RowOutOfRange {
            scope: "model".into(),
            group: "design".into(),
            row,
            participant_count,
        });
    }
    let factors = factorise(design, rows.len())?;
    let data = features.row_major();
    let width = features.feature_count();
    let (coefficients, residual_ss) = project(&factors, data, width, rows);
    Ok(LinearModel {
        columns: design.columns.clone(),
        observation_count: rows.len(),
        residual_dof: rows.len() - design.column_count(),
        unscaled_covariance: factors.unscaled_covariance,
        coefficients,
        residual_ss,
        feature_count: width,
    })
}

/// The factorisation of one design, reused for every feature (and every permutation).
#[derive(Debug, Clone)]
pub(crate) struct Factors {
    /// n x k thin Q, row-major.
    pub(crate) q: Vec<f64>,
    /// k x k inverse of R, row-major (upper triangular).
    pub(crate) r_inverse: Vec<f64>,
    /// (X'X)^-1, k x k row-major.
    pub(crate) unscaled_covariance: Vec<f64>,
    pub(crate) columns: usize,
}

pub(crate) fn factorise(design: &Design, row_count: usize) -> Result<Factors, StatsError> {
    let columns = design.column_count();
    if design.values.len() != row_count * columns || columns == 0 {
        return Err(StatsError::DesignShape { rows: row_count, columns, values: design.values.len() });
    }
    if row_count <= columns {
        return Err(StatsError::TooFewForModel {
            scope: "model".into(),
            count: row_count,
            parameters: columns,
        });
    }
    let x = Mat::<f64>::from_fn(row_count, columns, |i, j| design.values[i * columns + j]);
    let qr = x.qr();
    let r = qr.thin_R();
    let q = qr.compute_thin_Q();
    let largest = (0..columns).map(|j| r[(j, j)].abs()).fold(0.0f64, f64::max);
    for j in 0..columns {
        let diagonal = r[(j, j)].abs();
        if diagonal.is_nan() || diagonal <= RANK_TOLERANCE * largest || !diagonal.is_finite() {
            return Err(StatsError::RankDeficient {
                scope: "model".into(),
                column: design.columns[j].clone(),
            });
        }
    }
    // R^-1 by back substitution, column by column.
    let mut r_inverse = vec![0.0f64; columns * columns];
    for col in 0..columns {
        for i in (0..=col).rev() {
            let mut value = if i == col { 1.0 } else { 0.0 };
            for k in i + 1..=col {
                value -= r[(i, k)] * r_inverse[k * columns + col];
            }
            r_inverse[i * columns + col] = value / r[(i, i)];
        }
    }
    let mut unscaled_covariance = vec![0.0f64; columns * columns];
    for i in 0..columns {
        for j in 0..columns {
            let start = i.max(j);
            unscaled_covariance[i * columns + j] =
                (start..columns).map(|k| r_inverse[i * columns + k] * r_inverse[j * columns + k]).sum();
        }
    }
    let q = (0..row_count * columns).map(|index| q[(index / columns, index % columns)]).collect();
    Ok(Factors { q, r_inverse, unscaled_covariance, columns })
}

/// Blocks computed in parallel before their results are copied into place: enough to keep
/// every core busy, few enough that the blocks' own copies stay a small fraction of the k x F
/// estimates (the final array is filled wave by wave instead of after every block is done).
const BLOCKS_PER_WAVE: usize = 8;

/// Estimates (k x F, parameter-major) and residual sums of squares of every feature.
pub(crate) fn project(factors: &Factors, data: &[f32], width: usize, rows: &[usize]) -> (Vec<f64>, Vec<f64>) {
    let k = factors.columns;
    let blocks = width.div_ceil(FEATURE_BLOCK);
    let mut coefficients = vec![0.0f64; k * width];
    let mut residual_ss = Vec::with_capacity(width);
    for wave in (0..blocks).step_by(BLOCKS_PER_WAVE) {
        let results: Vec<(Vec<f64>, Vec<f64>)> = (wave..(wave + BLOCKS_PER_WAVE).min(blocks))
            .into_par_iter()
            .map(|block| {
                let start = block * FEATURE_BLOCK;
                let len = FEATURE_BLOCK.min(width - start);
                project_block(factors, data, width, rows, start, len)
            })
            .collect();
        for (offset, (block_coefficients, block_rss)) in results.iter().enumerate() {
            let start = (wave + offset) * FEATURE_BLOCK;
            let len = block_rss.len();
            for j in 0..k {
                coefficients[j * width + start..j * width + start + len]
                    .copy_from_slice(&block_coefficients[j * len..(j + 1) * len]);
            }
            residual_ss.extend_from_slice(block_rss);
        }
    }
    (coefficients, residual_ss)
}

/// One block of features: Q'y, then beta = R^-1 Q'y and the residual sum of squares.
fn project_block(
    factors: &Factors,
    data: &[f32],
    width: usize,
    rows: &[usize],
    start: usize,
    len: usize,
) -> (Vec<f64>, Vec<f64>) {
    let k = factors.columns;
    let mut projection = vec![0.0f64; k * len];
    for (i, &row) in rows.iter().enumerate() {
        let values = &data[row * width + start..row * width + start + len];
        for j in 0..k {
            let weight = factors.q[i * k + j];
            let target = &mut projection[j * len..(j + 1) * len];
            for (sum, &value) in target.iter_mut().zip(values) {
                *sum += weight * f64::from(value);
            }
        }
    }
    let mut rss = vec![0.0f64; len];
    let mut raw_ss = vec![0.0f64; len];
    let mut fitted = vec![0.0f64; len];
    for (i, &row) in rows.iter().enumerate() {
        let values = &data[row * width + start..row * width + start + len];
        fitted.fill(0.0);
        for j in 0..k {
            let weight = factors.q[i * k + j];
            for (fit, &projected) in fitted.iter_mut().zip(&projection[j * len..(j + 1) * len]) {
                *fit += weight * projected;
            }
        }
        for (((sum, raw), &fit), &value) in rss.iter_mut().zip(raw_ss.iter_mut()).zip(&fitted).zip(values) {
            let value = f64::from(value);
            let residual = value - fit;
            *sum += residual * residual;
            *raw += value * value;
        }
    }
    for (sum, raw) in rss.iter_mut().zip(&raw_ss) {
        if *sum <= PERFECT_FIT * raw {
            *sum = 0.0;
        }
    }
    let mut coefficients = vec![0.0f64; k * len];
    for i in 0..k {
        for j in i..k {
            let weight = factors.r_inverse[i * k + j];
            if weight == 0.0 {
                continue;
            }
            let (target, source) = (i * len, j * len);
            for f in 0..len {
                coefficients[target + f] += weight * projection[source + f];
            }
        }
    }
    (coefficients, rss)
}

/// t test of one contrast c'beta = 0 for every feature of a fitted model.
///
/// ```text
/// estimate = c' beta_f
/// SE       = sqrt( RSS_f / (n - k) * c' (X'X)^-1 c )
/// t        = estimate / SE,   dof = n - k,   p = 2 P(T_dof > |t|)
/// ```
///
/// Degenerate features (RSS = 0, a perfect fit): estimate 0 gives t = 0, p = 1; any other
/// estimate gives NaN t and p (no residual variation to scale it), as for the Welch test.
///
/// # Arguments
/// * `model` - a fitted [`LinearModel`].
/// * `contrast` - k weights, one per design column.
///
/// # Returns
/// A [`ContrastT`] with one value per feature, and BH q across features.
///
/// # Errors
/// [`StatsError::ContrastShape`] when the contrast does not have k weights or is all zero.
///
/// # Complexity
/// O(k F) time, O(F) memory.
///
/// # References
/// Searle 1971, Linear Models, ch. 5 (tests of linear hypotheses).
pub fn contrast_t(model: &LinearModel, contrast: &[f64]) -> Result<ContrastT, StatsError> {
    let k = model.columns.len();
    check_contrast(k, contrast)?;
    let variance_factor = quadratic_form(&model.unscaled_covariance, k, contrast, contrast);
    let dof = model.residual_dof as f64;
    let distribution = StudentsT::new(0.0, 1.0, dof).ok();
    let results: Vec<(f64, f64, f64, f64)> = (0..model.feature_count)
        .into_par_iter()
        .map(|f| {
            let estimate: f64 =
                (0..k).map(|j| contrast[j] * model.coefficients[j * model.feature_count + f]).sum();
            let sigma2 = model.residual_ss[f] / dof;
            let standard_error = (sigma2 * variance_factor).sqrt();
            let (t, p) = if standard_error > 0.0 {
                let t = estimate / standard_error;
                let p = distribution.as_ref().map_or(f64::NAN, |d| (2.0 * d.sf(t.abs())).min(1.0));
                (t, if t.is_nan() { f64::NAN } else { p })
            } else if standard_error == 0.0 && estimate.abs() <= ZERO_ESTIMATE * largest_coefficient(model, f)
            {
                (0.0, 1.0)
            } else {
                (f64::NAN, f64::NAN)
            };
            (estimate, standard_error, t, p)
        })
        .collect();
    let p: Vec<f64> = results.iter().map(|r| r.3).collect();
    let q = super::benjamini_hochberg(&p);
    Ok(ContrastT {
        estimate: results.iter().map(|r| r.0 as f32).collect(),
        standard_error: results.iter().map(|r| r.1 as f32).collect(),
        t: results.iter().map(|r| r.2 as f32).collect(),
        dof,
        p,
        q,
    })
}

/// F test of a set of m contrasts C beta = 0 (m x k) for every feature of a fitted model.
///
/// ```text
/// F = (C b)' [C (X'X)^-1 C']^-1 (C b) / (m * RSS / (n - k)),   dof = (m, n - k)
/// ```
///
/// This equals the comparison of the model with the reduced model that satisfies C beta = 0:
/// `F = ((RSS_reduced - RSS_full) / m) / (RSS_full / (n - k))` (see [`nested_f`]).
/// Degenerate features (RSS = 0) get F = 0, p = 1 when C b = 0, NaN otherwise.
///
/// # Arguments
/// * `model` - a fitted [`LinearModel`].
/// * `contrasts` - m rows of k weights, linearly independent.
///
/// # Returns
/// A [`ContrastF`] with one value per feature and BH q across features.
///
/// # Errors
/// [`StatsError::ContrastShape`] for a row without k weights, an empty set, or dependent rows.
///
/// # Complexity
/// O(m k F + m^2 F) time, O(F) memory.
///
/// # References
/// Searle 1971, Linear Models, ch. 5 (the general linear hypothesis).
pub fn contrast_f(model: &LinearModel, contrasts: &[Vec<f64>]) -> Result<ContrastF, StatsError> {
    let k = model.columns.len();
    let m = contrasts.len();
    if m == 0 {
        return Err(StatsError::ContrastShape { expected: k, found: 0 });
    }
    for contrast in contrasts {
        check_contrast(k, contrast)?;
    }
    let middle = Mat::<f64>::from_fn(m, m, |a, b| {
        quadratic_form(&model.unscaled_covariance, k, &contrasts[a], &contrasts[b])
    });
    let inverse =
        middle.llt(Side::Lower).map_err(|_| StatsError::ContrastShape { expected: k, found: m })?.inverse();
    let inverse: Vec<f64> = (0..m * m).map(|index| inverse[(index / m, index % m)]).collect();
    let dof = model.residual_dof as f64;
    let distribution = FisherSnedecor::new(m as f64, dof).ok();
    let results: Vec<(f64, f64)> = (0..model.feature_count)
        .into_par_iter()
        .map(|f| {
            let values: Vec<f64> = contrasts
                .iter()
                .map(|c| (0..k).map(|j| c[j] * model.coefficients[j * model.feature_count + f]).sum())
                .collect();
            let numerator = quadratic_form(&inverse, m, &values, &values) / m as f64;
            let tolerance = (ZERO_ESTIMATE * largest_coefficient(model, f)).powi(2);
            f_and_p(numerator, model.residual_ss[f] / dof, tolerance, distribution.as_ref())
        })
        .collect();
    let p: Vec<f64> = results.iter().map(|r| r.1).collect();
    let q = super::benjamini_hochberg(&p);
    Ok(ContrastF {
        f: results.iter().map(|r| r.0 as f32).collect(),
        dof_numerator: m as f64,
        dof_denominator: dof,
        p,
        q,
    })
}

/// F test of a reduced model nested in a full model, feature by feature.
///
/// ```text
/// F = ((RSS_reduced - RSS_full) / (dof_reduced - dof_full)) / (RSS_full / dof_full)
/// ```
///
/// The caller guarantees the nesting (the reduced design's columns span a subspace of the full
/// design's) and that both were fitted to the same rows.
///
/// # Errors
/// [`StatsError::NotNested`] when the models differ in feature count or rows, or the reduced
/// model does not have more residual degrees of freedom.
///
/// # Complexity
/// O(F).
///
/// # References
/// Searle 1971, Linear Models, ch. 5; the extra-sum-of-squares principle.
pub fn nested_f(full: &LinearModel, reduced: &LinearModel) -> Result<ContrastF, StatsError> {
    if full.feature_count != reduced.feature_count
        || full.observation_count != reduced.observation_count
        || reduced.residual_dof <= full.residual_dof
    {
        return Err(StatsError::NotNested {
            full_parameters: full.columns.len(),
            reduced_parameters: reduced.columns.len(),
        });
    }
    let dof_numerator = (reduced.residual_dof - full.residual_dof) as f64;
    let dof = full.residual_dof as f64;
    let distribution = FisherSnedecor::new(dof_numerator, dof).ok();
    let results: Vec<(f64, f64)> = (0..full.feature_count)
        .map(|f| {
            let numerator = (reduced.residual_ss[f] - full.residual_ss[f]).max(0.0) / dof_numerator;
            let tolerance = ZERO_ESTIMATE * reduced.residual_ss[f].max(largest_coefficient(full, f).powi(2));
            f_and_p(numerator, full.residual_ss[f] / dof, tolerance, distribution.as_ref())
        })
        .collect();
    let p: Vec<f64> = results.iter().map(|r| r.1).collect();
    let q = super::benjamini_hochberg(&p);
    Ok(ContrastF {
        f: results.iter().map(|r| r.0 as f32).collect(),
        dof_numerator,
        dof_denominator: dof,
        p,
        q,
    })
}

/// F and its upper-tail p from a numerator mean square and the residual variance.
fn f_and_p(numerator: f64, sigma2: f64, zero: f64, distribution: Option<&FisherSnedecor>) -> (f64, f64) {
    if sigma2 > 0.0 {
        let f = numerator / sigma2;
        if f.is_nan() {
            return (f64::NAN, f64::NAN);
        }
        (f, distribution.map_or(f64::NAN, |d| d.sf(f)))
    } else if sigma2 == 0.0 && numerator.abs() <= zero {
        (0.0, 1.0)
    } else {
        (f64::NAN, f64::NAN)
    }
}

/// The largest absolute coefficient of feature `f` (the scale for "zero" in a perfect fit).
fn largest_coefficient(model: &LinearModel, f: usize) -> f64 {
    (0..model.columns.len())
        .map(|j| model.coefficients[j * model.feature_count + f].abs())
        .fold(f64::MIN_POSITIVE, f64::max)
}

/// a' M b for a k x k row-major M.
fn quadratic_form(matrix: &[f64], k: usize, a: &[f64], b: &[f64]) -> f64 {
    let mut total = 0.0;
    for i in 0..k {
        if a[i] == 0.0 {
            continue;
        }
        for j in 0..k {
            total += a[i] * matrix[i * k + j] * b[j];
        }
    }
    total
}

fn check_contrast(k: usize, contrast: &[f64]) -> Result<(), StatsError> {
    if contrast.len() != k || contrast.iter().all(|&w| w == 0.0) || contrast.iter().any(|w| !w.is_finite()) {
        return Err(StatsError::ContrastShape { expected: k, found: contrast.len() });
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
    fn two_group_contrast_equals_pooled_t() {
        // Intercept + indicator: the contrast on the indicator is Student's pooled-variance t.
        // Hand computation: a = [1,2,3], b = [4,6,8]; means 2 and 6; pooled variance
        // (2 + 8) / 4 = 2.5; SE = sqrt(2.5 (1/3 + 1/3)) = 1.290994449; t = -4 / SE = -3.098386677.
        let data = matrix(6, 1, vec![1.0, 2.0, 3.0, 4.0, 6.0, 8.0]);
        let design = Design {
            columns: vec!["intercept".into(), "a".into()],
            values: vec![1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 0.0, 1.0, 0.0, 1.0, 0.0],
        };
        let model = fit_linear_model(&data, &(0..6).collect::<Vec<_>>(), &design).unwrap();
        let result = contrast_t(&model, &[0.0, 1.0]).unwrap();
        approx::assert_relative_eq!(f64::from(result.estimate[0]), -4.0, max_relative = 1e-6);
        approx::assert_relative_eq!(f64::from(result.t[0]), -3.098386677, max_relative = 1e-6);
        approx::assert_relative_eq!(result.dof, 4.0);
        // The F of the same single contrast is t^2 (common practice).
        let f = contrast_f(&model, &[vec![0.0, 1.0]]).unwrap();
        approx::assert_relative_eq!(f64::from(f.f[0]), 3.098386677f64.powi(2), max_relative = 1e-6);
        approx::assert_relative_eq!(f.p[0], result.p[0], max_relative = 1e-9);
    }

    #[test]
    fn collinear_and_small_designs_are_refused_with_the_column_named() {
        let data = matrix(4, 1, vec![1.0, 2.0, 3.0, 4.0]);
        let design = Design {
            columns: vec!["intercept".into(), "age".into(), "age_months".into()],
            values: vec![1.0, 30.0, 360.0, 1.0, 40.0, 480.0, 1.0, 50.0, 600.0, 1.0, 20.0, 240.0],
        };
        let error = fit_linear_model(&data, &[0, 1, 2, 3], &design).unwrap_err();
        assert!(error.to_string().contains("design column 'age_months'"), "{error}");
        let three_rows = Design { columns: design.columns.clone(), values: design.values[..9].to_vec() };
        let error = fit_linear_model(&data, &[0, 1, 2], &three_rows).unwrap_err();
        assert!(error.to_string().contains("3 participant(s) for a model with 3 parameters"), "{error}");
    }

    #[test]
    fn perfect_fit_gives_zero_or_nan_like_welch() {
        // y = intercept exactly: RSS 0, indicator estimate 0 -> t 0, p 1 (documented choice).
        let data = matrix(4, 2, vec![5.0, 1.0, 5.0, 1.0, 5.0, 2.0, 5.0, 2.0]);
        let design = Design {
            columns: vec!["intercept".into(), "a".into()],
            values: vec![1.0, 1.0, 1.0, 1.0, 1.0, 0.0, 1.0, 0.0],
        };
        let model = fit_linear_model(&data, &[0, 1, 2, 3], &design).unwrap();
        let result = contrast_t(&model, &[0.0, 1.0]).unwrap();
        approx::assert_abs_diff_eq!(result.t[0], 0.0);
        approx::assert_abs_diff_eq!(result.p[0], 1.0);
        assert!(result.t[1].is_nan() && result.p[1].is_nan());
    }
}
