//! One pass over a participant's BOLD series, frame by frame: residual correlations of a seed's
//! mean series with every voxel, or between the mean series of atlas regions.
//!
//! # Seed maps in one pass
//! With Q the orthonormal nuisance basis over the kept frames (K x k, intercept included), the
//! residual of a series y is y - Q Q'y, so for the seed series s and a voxel series y
//!
//! ```text
//!   residual cross-product  s'y - (Q's)'(Q'y)
//!   residual sums of squares  s's - |Q's|^2,  y'y - |Q'y|^2
//!   r = cross / sqrt(ss_s * ss_y)
//! ```
//!
//! Every term is a sum over frames, and the seed's value at frame t is the mean of the seed's
//! voxels in that same frame, so all of them accumulate while the series streams: per voxel,
//! k + 2 running sums in f64 (Q'y, s'y, y'y). Each series is first shifted by its value in the
//! first kept frame (the intercept is in Q, so the residuals are unchanged) to keep the
//! subtraction of sums of squares well conditioned. Frames are decoded in batches of
//! [`FRAME_BATCH`] and the sums updated one block of voxels at a time, so the per-voxel sums
//! travel through memory once per batch rather than once per frame.
//!
//! # Region matrices
//! The R region means of every kept frame are kept (K x R values, small), then residualised and
//! correlated at the end.
//!
//! Memory per participant: one batch of frames (float32) and k + 3 values per voxel; the
//! series itself is never held.

use std::path::Path;

use super::confounds::NuisanceModel;
use super::seed::Regions;
use super::ConnectivityError;
use crate::read::frames::FrameReader;

/// Frames decoded before the per-voxel sums are updated: 16 frames of a 91 x 109 x 91 grid are
/// 58 MB of float32, and the sums then cross memory 16 times less often. Measured in
/// `benches/connectivity.rs`; no published source.
pub const FRAME_BATCH: usize = 16;

/// Voxels per block of the batch update: the block's sums (k + 2 rows of f64) and shifted
/// values (a batch of f64) stay in the core's L1/L2 cache, and a block outside the brain is
/// skipped whole (a 2 mm grid's rows are 91 voxels). Chosen by measurement with
/// `benches/connectivity.sh`; common practice for cache blocking.
const VOXEL_BLOCK: usize = 64;

/// A voxel (or region) whose residual sum of squares is at most this fraction of its sum of
/// squares about its first kept value is taken as constant after regression (outside the brain,
/// or fully explained by the confounds): its correlation is undefined and written as 0.
/// Double-precision rounding of the subtraction is about 1e-16 of the larger term; no published
/// source.
pub const CONSTANT_TOLERANCE: f64 = 1e-10;

/// One participant's seed map.
#[derive(Debug, Clone)]
pub struct SeedMap {
    /// Pearson r of the residual seed series with each voxel's residual series (file order);
    /// 0 where undefined.
    pub r: Vec<f64>,
    /// Voxels whose residual series is constant (r written as 0).
    pub constant_voxels: usize,
    /// Voxels holding NaN or infinite values in a kept frame (r written as 0).
    pub nonfinite_voxels: usize,
}

/// One participant's region matrix.
#[derive(Debug, Clone)]
pub struct RegionMatrix {
    /// R x R Pearson r of the residual region mean series, row-major; diagonal 1, and 0 in the
    /// row and column of a region whose residual series is constant or non-finite.
    pub r: Vec<f64>,
    /// Regions R.
    pub regions: usize,
    /// Regions whose residual mean series is constant (rows of 0).
    pub constant_regions: Vec<usize>,
    /// Regions holding NaN or infinite values in a kept frame (rows of 0).
    pub nonfinite_regions: Vec<usize>,
}

fn invalid(path: &Path, participant: &str, problem: String) -> ConnectivityError {
    ConnectivityError::Input { path: path.to_path_buf(), participant: participant.to_string(), problem }
}

/// Pearson correlation of a seed's residual mean series with every voxel's residual series.
///
/// See the module documentation for the formula.
///
/// # Arguments
/// * `path` - the 4D series; `participant` names it in messages.
/// * `model` - kept frames and nuisance basis (its frame count must be the series').
/// * `seed` - voxel indices of the seed, file order, on the series' grid.
///
/// # Errors
/// The reader's errors; [`ConnectivityError::Input`] when the frame count differs from the
/// model's, a seed voxel is NaN or infinite, or the seed's residual series is constant.
///
/// # Complexity
/// O(T V (k + 2)) arithmetic for T frames, V voxels and k regressors; memory
/// O(V (FRAME_BATCH / 2 + k + 3)) f64 words.
pub fn seed_map(
    path: &Path,
    participant: &str,
    model: &NuisanceModel,
    seed: &[usize],
) -> Result<SeedMap, ConnectivityError> {
    let mut reader = open(path, participant, model)?;
    let voxels = reader.voxel_count();
    let rank = model.basis.rank;
    // Coefficients per kept frame: the basis row, then the shifted seed value.
    let width = rank + 1;
    // Rows 0..rank: Q'y; row rank: s'y; row rank + 1: y'y.
    let mut sums = vec![0.0f64; (rank + 2) * voxels];
    let mut batch = vec![0.0f32; FRAME_BATCH * voxels];
    let mut coefficients = vec![0.0f64; FRAME_BATCH * width];
    let mut first: Vec<f32> = Vec::new();
    let mut first_seed = 0.0;
    let mut seed_projection = vec![0.0f64; rank];
    let mut seed_squares = 0.0f64;
    let mut filled = 0;
    let mut kept_index = 0;
    for frame in 0..reader.frames {
        let slot = &mut batch[filled * voxels..(filled + 1) * voxels];
        reader.next_frame(slot).map_err(ConnectivityError::Read)?;
        if !model.kept[frame] {
            continue;
        }
        let total: f64 = seed.iter().map(|&voxel| f64::from(slot[voxel])).sum();
        if !total.is_finite() {
            return Err(invalid(
                path,
                participant,
                format!(
                    "the seed holds NaN or infinite values in frame {} of {}; the seed must lie where the series \
                     has values (inside the brain mask of preprocessing)",
                    frame + 1,
                    reader.frames
                ),
            ));
        }
        let mean = total / seed.len() as f64;
        if first.is_empty() {
            first = slot.to_vec();
            first_seed = mean;
        }
        let shifted = mean - first_seed;
        let row = model.basis.row(kept_index);
        let target = &mut coefficients[filled * width..(filled + 1) * width];
        target[..rank].copy_from_slice(row);
        target[rank] = shifted;
        for (projection, &q) in seed_projection.iter_mut().zip(row) {
            *projection += q * shifted;
        }
        seed_squares += shifted * shifted;
        kept_index += 1;
        filled += 1;
        if filled == FRAME_BATCH {
            accumulate(
                &mut sums,
                &Batch { values: &batch, first: &first, coefficients: &coefficients, filled, voxels, width },
            );
            filled = 0;
        }
    }
    accumulate(
        &mut sums,
        &Batch { values: &batch, first: &first, coefficients: &coefficients, filled, voxels, width },
    );
    drop(batch);

    let seed_residual = seed_squares - seed_projection.iter().map(|p| p * p).sum::<f64>();
    if seed_residual.is_nan() || seed_residual <= CONSTANT_TOLERANCE * seed_squares {
        return Err(invalid(
            path,
            participant,
            format!(
                "the seed's mean series ({} voxel(s)) is constant after regressing out the intercept{}; the seed \
                 lies outside the brain or on voxels without signal: check its position against this series",
                seed.len(),
                if rank > 1 { " and confounds" } else { "" }
            ),
        ));
    }
    let mut r = vec![0.0f64; voxels];
    let mut constant_voxels = 0;
    let mut nonfinite_voxels = 0;
    for (voxel, value) in r.iter_mut().enumerate() {
        let mut projected = 0.0;
        let mut cross = sums[rank * voxels + voxel];
        for (j, &seed_q) in seed_projection.iter().enumerate() {
            let q = sums[j * voxels + voxel];
            projected += q * q;
            cross -= seed_q * q;
        }
        let squares = sums[(rank + 1) * voxels + voxel];
        let residual = squares - projected;
        if !(cross.is_finite() && residual.is_finite()) {
            nonfinite_voxels += 1;
        } else if residual <= CONSTANT_TOLERANCE * squares {
            constant_voxels += 1;
        } else {
            *value = (cross / (residual * seed_residual).sqrt()).clamp(-1.0, 1.0);
        }
    }
    Ok(SeedMap { r, constant_voxels, nonfinite_voxels })
}

/// One batch of decoded frames and what the update needs with it.
struct Batch<'a> {
    /// `filled` frames of `voxels` values each, frame-major.
    values: &'a [f32],
    /// The first kept frame, subtracted from every value (the shift).
    first: &'a [f32],
    /// Per frame, `width` coefficients: the basis row, then the shifted seed value.
    coefficients: &'a [f64],
    filled: usize,
    voxels: usize,
    width: usize,
}

/// Adds a batch of frames to the per-voxel sums (see [`seed_map`]).
///
/// A block whose shifted values are all zero in this batch (background: a voxel equal to its
/// first kept value) adds nothing and is skipped, which is exact. Frames are taken four at a
/// time so each sum is loaded and stored once per four frames. Every voxel's sums take the same
/// operations in the same order at any vector width, so the widest of AVX-512, AVX2 and SSE2
/// the CPU offers gives identical results.
fn accumulate(sums: &mut [f64], batch: &Batch) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked just above).
            unsafe { accumulate_avx512(sums, batch) };
            return;
        }
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2 (checked just above).
            unsafe { accumulate_avx2(sums, batch) };
            return;
        }
    }
    accumulate_lanes(sums, batch);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn accumulate_avx512(sums: &mut [f64], batch: &Batch) {
    accumulate_lanes(sums, batch);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn accumulate_avx2(sums: &mut [f64], batch: &Batch) {
    accumulate_lanes(sums, batch);
}

/// The body of [`accumulate`], inlined into each target-feature variant so the compiler
/// vectorises it at that width.
#[inline(always)]
fn accumulate_lanes(sums: &mut [f64], batch: &Batch) {
    let Batch { values: batch, first, coefficients, filled, voxels, width } = *batch;
    if filled == 0 {
        return;
    }
    // Whole blocks as fixed-size arrays, so the loops below have constant bounds and vectorise.
    let mut shifted = vec![[0.0f64; VOXEL_BLOCK]; filled];
    let mut start = 0;
    while start < voxels {
        let len = VOXEL_BLOCK.min(voxels - start);
        let base = &first[start..start + len];
        let mut any = false;
        for (frame, target) in shifted.iter_mut().enumerate() {
            let values = &batch[frame * voxels + start..frame * voxels + start + len];
            for ((out, &value), &origin) in target.iter_mut().zip(values).zip(base) {
                *out = f64::from(value) - f64::from(origin);
            }
            // No early exit: a fold over the whole block vectorises, `any` would not.
            any |= target[..len].iter().fold(false, |seen, &value| seen | (value != 0.0));
        }
        if any {
            // Rows 0..width take coefficient * y; row `width` (y'y) takes y * y. Lanes past
            // `len` (the grid's last block) compute on stale values and are never stored.
            for row in 0..=width {
                let target = &mut sums[row * voxels + start..row * voxels + start + len];
                let mut lanes = [0.0f64; VOXEL_BLOCK];
                lanes[..len].copy_from_slice(target);
                let coefficient = |frame: usize| coefficients[frame * width + row];
                let mut frame = 0;
                while frame + 4 <= filled {
                    let (a, b, c, d) =
                        (&shifted[frame], &shifted[frame + 1], &shifted[frame + 2], &shifted[frame + 3]);
                    if row == width {
                        for v in 0..VOXEL_BLOCK {
                            lanes[v] += a[v] * a[v] + b[v] * b[v] + c[v] * c[v] + d[v] * d[v];
                        }
                    } else {
                        let (c0, c1, c2, c3) = (
                            coefficient(frame),
                            coefficient(frame + 1),
                            coefficient(frame + 2),
                            coefficient(frame + 3),
                        );
                        for v in 0..VOXEL_BLOCK {
                            lanes[v] += c0 * a[v] + c1 * b[v] + c2 * c[v] + c3 * d[v];
                        }
                    }
                    frame += 4;
                }
                for (frame, a) in shifted.iter().enumerate().skip(frame) {
                    if row == width {
                        for v in 0..VOXEL_BLOCK {
                            lanes[v] += a[v] * a[v];
                        }
                    } else {
                        let c0 = coefficient(frame);
                        for v in 0..VOXEL_BLOCK {
                            lanes[v] += c0 * a[v];
                        }
                    }
                }
                target.copy_from_slice(&lanes[..len]);
            }
        }
        start += len;
    }
}

/// Pearson correlations between the residual mean series of atlas regions.
///
/// # Arguments
/// * `path`, `participant`, `model` - as [`seed_map`].
/// * `regions` - the regions of a label volume on the series' grid.
///
/// # Errors
/// The reader's errors; [`ConnectivityError::Input`] when the frame count differs from the
/// model's.
///
/// # Complexity
/// O(T V) to read and average, O(K R (k + R)) for the residual correlations.
pub fn region_matrix(
    path: &Path,
    participant: &str,
    model: &NuisanceModel,
    regions: &Regions,
) -> Result<RegionMatrix, ConnectivityError> {
    let mut reader = open(path, participant, model)?;
    let count = regions.labels.len();
    let kept = model.kept_count();
    // series[t * R + region]: the region means of kept frame t.
    let mut series = vec![0.0f64; kept * count];
    let mut frame_values = vec![0.0f32; reader.voxel_count()];
    let mut kept_index = 0;
    for frame in 0..reader.frames {
        reader.next_frame(&mut frame_values).map_err(ConnectivityError::Read)?;
        if !model.kept[frame] {
            continue;
        }
        let target = &mut series[kept_index * count..(kept_index + 1) * count];
        for (&region, &value) in regions.index.iter().zip(&frame_values) {
            if region != Regions::BACKGROUND {
                target[region as usize] += f64::from(value);
            }
        }
        for (sum, &voxel_count) in target.iter_mut().zip(&regions.voxel_counts) {
            *sum /= voxel_count as f64;
        }
        kept_index += 1;
    }
    Ok(residual_correlations(&series, kept, count, model))
}

/// Residualises `series` (K x R, row-major) on the model's basis and correlates its columns.
fn residual_correlations(series: &[f64], kept: usize, count: usize, model: &NuisanceModel) -> RegionMatrix {
    let rank = model.basis.rank;
    let mut residual = series.to_vec();
    // Shift every column by its first value (the intercept is in Q): better conditioned sums.
    let first: Vec<f64> = series[..count].to_vec();
    for row in residual.chunks_exact_mut(count) {
        for (value, &origin) in row.iter_mut().zip(&first) {
            *value -= origin;
        }
    }
    // P = Q'E (k x R), then E -= Q P.
    let mut projection = vec![0.0f64; rank * count];
    for t in 0..kept {
        let q = model.basis.row(t);
        let row = &residual[t * count..(t + 1) * count];
        for (j, &qj) in q.iter().enumerate() {
            for (p, &value) in projection[j * count..(j + 1) * count].iter_mut().zip(row) {
                *p += qj * value;
            }
        }
    }
    let mut squares = vec![0.0f64; count];
    for t in 0..kept {
        let q = model.basis.row(t);
        let row = &mut residual[t * count..(t + 1) * count];
        for (value, square) in row.iter_mut().zip(squares.iter_mut()) {
            *square += *value * *value;
        }
        for (j, &qj) in q.iter().enumerate() {
            for (value, &p) in row.iter_mut().zip(&projection[j * count..(j + 1) * count]) {
                *value -= qj * p;
            }
        }
    }
    let mut cross = vec![0.0f64; count * count];
    for row in residual.chunks_exact(count) {
        for (i, &a) in row.iter().enumerate() {
            let target = &mut cross[i * count..(i + 1) * count];
            for (c, &b) in target[i..].iter_mut().zip(&row[i..]) {
                *c += a * b;
            }
        }
    }
    let mut constant_regions = Vec::new();
    let mut nonfinite_regions = Vec::new();
    let mut usable = vec![true; count];
    for region in 0..count {
        let variance = cross[region * count + region];
        if !variance.is_finite() {
            nonfinite_regions.push(region);
            usable[region] = false;
        } else if variance <= CONSTANT_TOLERANCE * squares[region] {
            constant_regions.push(region);
            usable[region] = false;
        }
    }
    let mut r = vec![0.0f64; count * count];
    for i in 0..count {
        r[i * count + i] = 1.0;
        if !usable[i] {
            continue;
        }
        for j in (i + 1)..count {
            if usable[j] {
                let value = (cross[i * count + j] / (cross[i * count + i] * cross[j * count + j]).sqrt())
                    .clamp(-1.0, 1.0);
                r[i * count + j] = value;
                r[j * count + i] = value;
            }
        }
    }
    RegionMatrix { r, regions: count, constant_regions, nonfinite_regions }
}

/// Opens a series for correlation: stored values unscaled (see [`FrameReader::ignore_scaling`];
/// a correlation is unchanged when every value goes through the same y = slope * x + inter with
/// slope != 0), and its frame count checked against the model's.
fn open(path: &Path, participant: &str, model: &NuisanceModel) -> Result<FrameReader, ConnectivityError> {
    let mut reader = FrameReader::open(path, participant).map_err(ConnectivityError::Read)?;
    reader.ignore_scaling();
    if reader.frames != model.kept.len() {
        return Err(invalid(
            path,
            participant,
            format!(
                "{} frames, but its confounds or censoring describe {}; give the tables of this run",
                reader.frames,
                model.kept.len()
            ),
        ));
    }
    Ok(reader)
}

#[cfg(test)]
mod tests {
    use super::super::confounds::{orthonormal_basis, Confounds};
    use super::*;

    #[test]
    fn region_correlations_without_confounds_are_pearson_r() {
        // Two regions: b = 2a + 1 (r = 1), c = -a (r = -1), over 5 kept frames.
        let a = [1.0, 3.0, 2.0, 5.0, 4.0];
        let series: Vec<f64> = a.iter().flat_map(|&v| [v, 2.0 * v + 1.0, -v]).collect();
        let model = NuisanceModel {
            kept: vec![true; 5],
            confounds: Confounds::default(),
            basis: orthonormal_basis(&[], 5),
        };
        let matrix = residual_correlations(&series, 5, 3, &model);
        assert!((matrix.r[1] - 1.0).abs() < 1e-12);
        assert!((matrix.r[2] + 1.0).abs() < 1e-12);
        assert!(matrix.constant_regions.is_empty());
    }
}
