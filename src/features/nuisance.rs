//! Nuisance regression of the features before the similarity step (`--nuisance`).
//!
//! Each feature is regressed on the nuisance design (intercept plus participant-level columns,
//! assembled by the caller) across participants, and the part explained by the nuisance columns
//! is removed: the residual plus the feature's mean, so the features keep their level and only
//! the variation that follows the nuisance columns (motion, age, site) leaves the similarity.

use faer::Mat;
use rayon::prelude::*;

/// Features per parallel block (f64 accumulators of one block stay in cache; strata's choice).
const NUISANCE_BLOCK: usize = 512;

/// The features with the nuisance columns regressed out, feature by feature.
///
/// With the nuisance design X (n x k, first column the intercept) factorised once, X = QR:
///
/// ```text
/// y_f' = y_f - Q Q' y_f + mean(y_f)
/// ```
///
/// # Arguments
/// * `features` - the N x F participant-by-feature matrix.
/// * `design` - N x k row-major nuisance design, first column all ones.
/// * `columns` - k.
///
/// # Returns
/// A new matrix (the input is kept for the maps, which use `--covariates` instead).
///
/// # Errors
/// A message naming the first design column (0-based) that is a linear combination of the
/// ones before it, or the shape that does not fit.
///
/// # Complexity
/// O(N k F) time, O(N F) memory for the copy; parallel over feature blocks.
///
/// # References
/// Golub & Van Loan 2013, Matrix Computations, 5.3 (least squares by QR).
pub fn regress_out(
    features: &super::FeatureMatrix,
    design: &[f64],
    columns: usize,
) -> Result<super::FeatureMatrix, String> {
    let n = features.participant_count();
    if columns == 0 || design.len() != n * columns || n <= columns {
        return Err(format!(
            "the nuisance design has {} values for {n} participants and {columns} columns; it needs more participants than columns",
            design.len()
        ));
    }
    let x = Mat::<f64>::from_fn(n, columns, |i, j| design[i * columns + j]);
    let qr = x.qr();
    let r = qr.thin_R();
    let largest = (0..columns).map(|j| r[(j, j)].abs()).fold(0.0f64, f64::max);
    if let Some(column) =
        (0..columns).find(|&j| r[(j, j)].abs().is_nan() || r[(j, j)].abs() <= 1e-10 * largest)
    {
        return Err(format!("nuisance column {column} is a linear combination of the columns before it"));
    }
    let q = qr.compute_thin_Q();
    let q: Vec<f64> = (0..n * columns).map(|index| q[(index / columns, index % columns)]).collect();
    let width = features.feature_count();
    let data = features.row_major();
    let mut output = features.values.clone();
    let out = output.as_slice_mut().expect("standard layout");
    let blocks: Vec<(usize, Vec<f32>)> = (0..width.div_ceil(NUISANCE_BLOCK))
        .into_par_iter()
        .map(|block| {
            let start = block * NUISANCE_BLOCK;
            let len = NUISANCE_BLOCK.min(width - start);
            let mut projection = vec![0.0f64; columns * len];
            let mut mean = vec![0.0f64; len];
            for i in 0..n {
                let values = &data[i * width + start..i * width + start + len];
                for (sum, &value) in mean.iter_mut().zip(values) {
                    *sum += f64::from(value) / n as f64;
                }
                for j in 0..columns {
                    let weight = q[i * columns + j];
                    for (sum, &value) in projection[j * len..(j + 1) * len].iter_mut().zip(values) {
                        *sum += weight * f64::from(value);
                    }
                }
            }
            let mut adjusted = vec![0.0f32; n * len];
            for i in 0..n {
                let values = &data[i * width + start..i * width + start + len];
                for f in 0..len {
                    let fitted: f64 =
                        (0..columns).map(|j| q[i * columns + j] * projection[j * len + f]).sum();
                    adjusted[i * len + f] = (f64::from(values[f]) - fitted + mean[f]) as f32;
                }
            }
            (start, adjusted)
        })
        .collect();
    for (start, adjusted) in blocks {
        let len = adjusted.len() / n;
        for i in 0..n {
            out[i * width + start..i * width + start + len]
                .copy_from_slice(&adjusted[i * len..(i + 1) * len]);
        }
    }
    Ok(super::FeatureMatrix { values: output })
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    #[test]
    fn a_feature_that_follows_the_nuisance_becomes_constant() {
        // Feature 0 = 2 * motion + 1 exactly: after regression it is its mean, 1 + 2 * 0.25
        // = 1.5, for everyone (hand computation). Feature 1 is orthogonal to motion and to the
        // intercept-centred motion: unchanged.
        let motion = [0.1, 0.2, 0.3, 0.4];
        let values: Vec<f32> = motion
            .iter()
            .zip([1.0, -1.0, -1.0, 1.0])
            .flat_map(|(&m, o)| [(2.0 * m + 1.0) as f32, o])
            .collect();
        let features =
            crate::features::FeatureMatrix { values: Array2::from_shape_vec((4, 2), values).unwrap() };
        let design: Vec<f64> = motion.iter().flat_map(|&m| [1.0, m]).collect();
        let adjusted = regress_out(&features, &design, 2).unwrap();
        for i in 0..4 {
            approx::assert_relative_eq!(adjusted.values[[i, 0]], 1.5, max_relative = 1e-6);
            approx::assert_relative_eq!(
                adjusted.values[[i, 1]],
                features.values[[i, 1]],
                max_relative = 1e-6
            );
        }
        let error = regress_out(&features, &[1.0; 8], 2).unwrap_err();
        assert_eq!(error, "nuisance column 1 is a linear combination of the columns before it");
    }
}
