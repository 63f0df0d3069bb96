//! Pearson correlation between participants (rows of the feature matrix).

use faer::linalg::matmul::matmul;
use faer::linalg::matmul::triangular::{self, BlockStructure};
use faer::{Accum, MatMut, MatRef, Par};
use ndarray::Array2;
use rayon::prelude::*;

use super::SimilarityMatrix;
use crate::features::FeatureMatrix;

/// Features per column block of the product. Each block is standardised into a scratch copy of
/// N x `FEATURE_BLOCK` values, so the extra memory stays small whatever F is; 8,192 f32 columns
/// keep each tile's operands large enough for the matrix-multiply kernel to run near peak.
pub const FEATURE_BLOCK: usize = 8192;

/// Cohorts up to this size take the whole-block path ([`accumulate_by_blocks`]); larger ones
/// are split into tiles. Chosen by measurement (docs/performance.md): at N = 300 whole blocks
/// run near the kernel's peak, while at N = 1,000 the tiles win and need less scratch memory.
pub const WHOLE_BLOCK_MAX_PARTICIPANTS: usize = 512;

/// Feature blocks computed at once on the whole-block path: two cores busy, and the scratch
/// stays at 2 x N x [`FEATURE_BLOCK`] values plus 2 x N^2.
pub const BLOCKS_IN_FLIGHT: usize = 2;

/// Largest and smallest number of participants per output tile. Tiles are the unit of parallel
/// work; their size depends on nothing but N (about N/8, rounded up to a multiple of 16, within
/// these bounds), so every tile is computed the same way at any thread count. 256 keeps a
/// tile's operands in cache-friendly panels for the matrix-multiply kernel; 64 keeps small
/// cohorts split into enough tiles to keep two or more cores busy.
pub const MAX_TILE: usize = 256;
/// See [`MAX_TILE`].
pub const MIN_TILE: usize = 64;

/// Scratch budget of the tiled path: the standardised block holds at most this many bytes
/// (whatever N), so large cohorts keep the similarity step's extra memory to the scratch, the
/// f64 accumulator and the output.
pub const TILE_SCRATCH_BYTES: usize = 8 << 20;

/// Features per block on the tiled path: [`FEATURE_BLOCK`], narrowed so the standardised block
/// fits [`TILE_SCRATCH_BYTES`], and never below 1,024 (a tile's product must stay long enough
/// for the kernel). Depends on N only, so results do not depend on the thread count.
pub fn tile_feature_block(participants: usize) -> usize {
    (TILE_SCRATCH_BYTES / (4 * participants.max(1))).clamp(1024, FEATURE_BLOCK) / 256 * 256
}

/// The tile size for N participants.
pub fn tile_size(participants: usize) -> usize {
    (participants.div_ceil(8).div_ceil(16) * 16).clamp(MIN_TILE, MAX_TILE)
}

/// Row means and inverse centred norms, accumulated in f64.
///
/// Returns `(mean, inverse_norm)` per row; `inverse_norm` is 0 for a constant row (the features
/// stage refuses those before this point, so a 0 here only guards the arithmetic). Each row is
/// summed in 32 interleaved f64 partial sums combined in a fixed order (one pass of sums
/// shifted by the row's first value), so the figures do not depend on the thread count or
/// the vector width the CPU offers.
pub fn standardise_rows(features: &FeatureMatrix) -> (Vec<f64>, Vec<f64>) {
    let width = features.feature_count().max(1);
    let rows: Vec<(f64, f64)> = features.row_major().par_chunks(width).map(row_moments).collect();
    rows.into_iter().unzip()
}

/// Partial sums per row in [`standardise_rows`]: enough independent chains to hide the latency of
/// f64 additions at the widest vector width (4 AVX-512 registers of 8).
pub const LANES: usize = 32;

/// (mean, inverse centred norm) of one row.
fn row_moments(values: &[f32]) -> (f64, f64) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked just above).
            return unsafe { row_moments_avx512(values) };
        }
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2 (checked just above).
            return unsafe { row_moments_avx2(values) };
        }
    }
    row_moments_lanes(values)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn row_moments_avx512(values: &[f32]) -> (f64, f64) {
    row_moments_lanes(values)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn row_moments_avx2(values: &[f32]) -> (f64, f64) {
    row_moments_lanes(values)
}

#[inline(always)]
fn row_moments_lanes(values: &[f32]) -> (f64, f64) {
    // One pass over the row: sums of d and d^2 for d = x - x0, shifted by the first value so
    // that the centred sum of squares, sum d^2 - (sum d)^2 / n, loses nothing to cancellation
    // when the mean is large against the spread (Chan, Golub and LeVeque 1983, Am Stat 37:242).
    let shift = values.first().map_or(0.0, |&v| f64::from(v));
    let mut sums = [0.0f64; LANES];
    let mut squares = [0.0f64; LANES];
    let mut chunks = values.chunks_exact(LANES);
    for chunk in &mut chunks {
        for ((sum, square), &value) in sums.iter_mut().zip(squares.iter_mut()).zip(chunk) {
            let d = f64::from(value) - shift;
            *sum += d;
            *square += d * d;
        }
    }
    for ((sum, square), &value) in sums.iter_mut().zip(squares.iter_mut()).zip(chunks.remainder()) {
        let d = f64::from(value) - shift;
        *sum += d;
        *square += d * d;
    }
    // Pairwise, in a fixed order.
    let combine = |mut lanes: [f64; LANES]| {
        let mut half = LANES / 2;
        while half > 0 {
            for lane in 0..half {
                lanes[lane] += lanes[lane + half];
            }
            half /= 2;
        }
        lanes[0]
    };
    let (sum, square) = (combine(sums), combine(squares));
    let count = values.len().max(1) as f64;
    let mean_shift = sum / count;
    let sum_squares = (square - sum * mean_shift).max(0.0);
    let inverse_norm = if sum_squares > 0.0 { 1.0 / sum_squares.sqrt() } else { 0.0 };
    (shift + mean_shift, inverse_norm)
}

/// out = (values - mean) * scale, in f64, stored as f32.
fn standardise_slice(values: &[f32], mean: f64, scale: f64, out: &mut [f32]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked just above).
            unsafe { standardise_slice_avx512(values, mean, scale, out) };
            return;
        }
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2 (checked just above).
            unsafe { standardise_slice_avx2(values, mean, scale, out) };
            return;
        }
    }
    standardise_slice_lanes(values, mean, scale, out);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn standardise_slice_avx512(values: &[f32], mean: f64, scale: f64, out: &mut [f32]) {
    standardise_slice_lanes(values, mean, scale, out);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn standardise_slice_avx2(values: &[f32], mean: f64, scale: f64, out: &mut [f32]) {
    standardise_slice_lanes(values, mean, scale, out);
}

#[inline(always)]
fn standardise_slice_lanes(values: &[f32], mean: f64, scale: f64, out: &mut [f32]) {
    for (target, &value) in out.iter_mut().zip(values) {
        *target = ((f64::from(value) - mean) * scale) as f32;
    }
}

/// Pearson correlation between every pair of participants.
///
/// r(p, q) = sum_f z_pf z_qf, where z_p = (x_p - mean(x_p)) / ||x_p - mean(x_p)||.
/// Rows are standardised one column block at a time and the product Z Zt is accumulated block by
/// block in f64; within a block the lower-triangle tiles run in parallel, each a single-threaded
/// f32 matrix product (faer), so the result is identical at any thread count. The diagonal is
/// set to exactly 1.
///
/// # Arguments
/// * `features`: N x F feature matrix, rows in cohort order; no row may be constant.
///
/// # Returns
/// The N x N symmetric similarity matrix.
///
/// # Complexity
/// O(N^2 F) arithmetic (half of it skipped by symmetry), O(N^2 + N * FEATURE_BLOCK) extra memory.
///
/// # References
/// Pearson 1895, Proc R Soc Lond 58:240-242.
pub fn pearson(features: &FeatureMatrix) -> SimilarityMatrix {
    let participants = features.participant_count();
    let (means, inverse_norms) = standardise_rows(features);
    let mut accumulated = vec![0.0f64; participants * participants];
    if participants <= WHOLE_BLOCK_MAX_PARTICIPANTS {
        accumulate_by_blocks(features, &means, &inverse_norms, &mut accumulated);
    } else {
        accumulate_by_tiles(features, &means, &inverse_norms, &mut accumulated);
    }
    let mut values = Array2::<f32>::zeros((participants, participants));
    for row in 0..participants {
        for col in 0..=row {
            let r = accumulated[row * participants + col].clamp(-1.0, 1.0) as f32;
            values[[row, col]] = r;
            values[[col, row]] = r;
        }
        values[[row, row]] = 1.0;
    }
    SimilarityMatrix { values }
}

/// Standardises columns `start..end` of every row into `block` (N x (end - start), row-major).
fn standardise_block(
    features: &FeatureMatrix,
    means: &[f64],
    inverse_norms: &[f64],
    start: usize,
    end: usize,
    block: &mut [f32],
) {
    let feature_count = features.feature_count();
    let width = end - start;
    block.chunks_mut(width).zip(features.row_major().chunks(feature_count)).enumerate().for_each(
        |(row_index, (out, row))| {
            standardise_slice(&row[start..end], means[row_index], inverse_norms[row_index], out);
        },
    );
}

/// Adds the lower triangle of a block's N x N f32 product (row-major) into the f64 total.
fn add_lower(total: &mut [f64], product: &[f32], participants: usize) {
    for row in 0..participants {
        let range = row * participants..row * participants + row + 1;
        for (acc, &value) in total[range.clone()].iter_mut().zip(&product[range]) {
            *acc += f64::from(value);
        }
    }
}

/// Small cohorts: each feature block is one single-threaded lower-triangle product of all N
/// rows, and [`BLOCKS_IN_FLIGHT`] blocks run at once. Tiles of a few dozen rows would keep the
/// kernel far from its peak at this size. Blocks are added to the total in block order, and
/// their grouping depends on nothing but F, so the result is the same at any thread count.
fn accumulate_by_blocks(features: &FeatureMatrix, means: &[f64], inverse_norms: &[f64], total: &mut [f64]) {
    let participants = features.participant_count();
    let feature_count = features.feature_count();
    let blocks: Vec<(usize, usize)> = (0..feature_count.div_ceil(FEATURE_BLOCK))
        .map(|index| (index * FEATURE_BLOCK, ((index + 1) * FEATURE_BLOCK).min(feature_count)))
        .collect();
    let width = FEATURE_BLOCK.min(feature_count.max(1));
    let mut scratch: Vec<(Vec<f32>, Vec<f32>)> = (0..BLOCKS_IN_FLIGHT.min(blocks.len()))
        .map(|_| (vec![0.0f32; participants * width], vec![0.0f32; participants * participants]))
        .collect();
    for group in blocks.chunks(BLOCKS_IN_FLIGHT) {
        scratch.par_iter_mut().zip(group).for_each(|((block, product), &(start, end))| {
            let width = end - start;
            let block = &mut block[..participants * width];
            standardise_block(features, means, inverse_norms, start, end, block);
            let rows = MatRef::from_row_major_slice(block, participants, width);
            let dst = MatMut::from_row_major_slice_mut(product, participants, participants);
            triangular::matmul(
                dst,
                BlockStructure::TriangularLower,
                Accum::Replace,
                rows,
                BlockStructure::Rectangular,
                rows.transpose(),
                BlockStructure::Rectangular,
                1.0f32,
                Par::Seq,
            );
        });
        for ((_, product), &(start, end)) in scratch.iter().zip(group) {
            add_lower(total, product, participants);
            crate::report::progress::tick((end - start) as u64);
        }
    }
}

/// Larger cohorts: within each feature block the lower-triangle tiles run in parallel, each a
/// single-threaded product (see [`tile_size`]); blocks are added in order.
fn accumulate_by_tiles(
    features: &FeatureMatrix,
    means: &[f64],
    inverse_norms: &[f64],
    accumulated: &mut [f64],
) {
    let participants = features.participant_count();
    let feature_count = features.feature_count();
    let tile = tile_size(participants);
    let tiles = lower_tiles(participants, tile);
    let block_width = tile_feature_block(participants);
    let mut scratch = vec![0.0f32; participants * block_width.min(feature_count.max(1))];
    let mut block_start = 0;
    while block_start < feature_count {
        let block_end = (block_start + block_width).min(feature_count);
        let width = block_end - block_start;
        let block = &mut scratch[..participants * width];
        block.par_chunks_mut(width).zip(features.row_major().par_chunks(feature_count)).enumerate().for_each(
            |(row_index, (out, row))| {
                standardise_slice(
                    &row[block_start..block_end],
                    means[row_index],
                    inverse_norms[row_index],
                    out,
                );
            },
        );
        let block: &[f32] = block;
        let products: Vec<Vec<f32>> = tiles
            .par_iter()
            .map(|&(row_tile, col_tile)| tile_product(block, participants, width, tile, row_tile, col_tile))
            .collect();
        for (&(row_tile, col_tile), product) in tiles.iter().zip(&products) {
            let (row_start, row_end) = tile_range(row_tile, tile, participants);
            let (col_start, col_end) = tile_range(col_tile, tile, participants);
            let tile_cols = col_end - col_start;
            for (offset, row) in (row_start..row_end).enumerate() {
                let target = &mut accumulated[row * participants + col_start..row * participants + col_end];
                let source = &product[offset * tile_cols..(offset + 1) * tile_cols];
                for (acc, &value) in target.iter_mut().zip(source) {
                    *acc += f64::from(value);
                }
            }
        }
        crate::report::progress::tick(width as u64);
        block_start = block_end;
    }
}

/// The (row tile, column tile) pairs of the lower triangle, column tile <= row tile.
fn lower_tiles(participants: usize, tile: usize) -> Vec<(usize, usize)> {
    let tile_count = participants.div_ceil(tile);
    (0..tile_count).flat_map(|row_tile| (0..=row_tile).map(move |col_tile| (row_tile, col_tile))).collect()
}

fn tile_range(index: usize, tile: usize, participants: usize) -> (usize, usize) {
    (index * tile, ((index + 1) * tile).min(participants))
}

/// One output tile: rows of `row_tile` times columns of `col_tile`, row-major f32. Diagonal tiles
/// compute only their lower triangle (the upper one is never read).
fn tile_product(
    block: &[f32],
    participants: usize,
    width: usize,
    tile: usize,
    row_tile: usize,
    col_tile: usize,
) -> Vec<f32> {
    let (row_start, row_end) = tile_range(row_tile, tile, participants);
    let (col_start, col_end) = tile_range(col_tile, tile, participants);
    let (tile_rows, tile_cols) = (row_end - row_start, col_end - col_start);
    let lhs = MatRef::from_row_major_slice(&block[row_start * width..row_end * width], tile_rows, width);
    let rhs = MatRef::from_row_major_slice(&block[col_start * width..col_end * width], tile_cols, width)
        .transpose();
    let mut product = vec![0.0f32; tile_rows * tile_cols];
    let dst = MatMut::from_row_major_slice_mut(&mut product, tile_rows, tile_cols);
    if row_tile == col_tile {
        triangular::matmul(
            dst,
            BlockStructure::TriangularLower,
            Accum::Replace,
            lhs,
            BlockStructure::Rectangular,
            rhs,
            BlockStructure::Rectangular,
            1.0f32,
            Par::Seq,
        );
    } else {
        matmul(dst, Accum::Replace, lhs, rhs, 1.0f32, Par::Seq);
    }
    product
}

#[cfg(test)]
mod tests {
    use super::*;

    fn matrix(rows: usize, cols: usize, values: Vec<f32>) -> FeatureMatrix {
        FeatureMatrix { values: Array2::from_shape_vec((rows, cols), values).unwrap() }
    }

    #[test]
    fn perfectly_correlated_and_anticorrelated_rows() {
        // Common practice: r = 1 for a positive affine copy, r = -1 for a negative one.
        let features = matrix(3, 4, vec![1.0, 2.0, 3.0, 4.0, 3.0, 5.0, 7.0, 9.0, 4.0, 3.0, 2.0, 1.0]);
        let similarity = pearson(&features);
        assert!((similarity.values[[0, 1]] - 1.0).abs() < 1e-6);
        assert!((similarity.values[[0, 2]] + 1.0).abs() < 1e-6);
        assert!((similarity.values[[2, 1]] + 1.0).abs() < 1e-6);
    }

    /// Direct two-pass Pearson correlation of rows p and q in f64 (the textbook definition).
    fn direct(features: &FeatureMatrix, p: usize, q: usize) -> f64 {
        let row_p = features.values.row(p);
        let row_q = features.values.row(q);
        let mean_p = row_p.iter().map(|&v| f64::from(v)).sum::<f64>() / row_p.len() as f64;
        let mean_q = row_q.iter().map(|&v| f64::from(v)).sum::<f64>() / row_q.len() as f64;
        let (mut cross, mut ss_p, mut ss_q) = (0.0, 0.0, 0.0);
        for (&a, &b) in row_p.iter().zip(row_q.iter()) {
            let (da, db) = (f64::from(a) - mean_p, f64::from(b) - mean_q);
            cross += da * db;
            ss_p += da * da;
            ss_q += db * db;
        }
        cross / (ss_p * ss_q).sqrt()
    }

    fn hashed(participants: usize, features: usize) -> FeatureMatrix {
        let values: Vec<f32> = (0..participants * features)
            .map(|index| (((index * 2654435761) % 1000) as f32) / 1000.0)
            .collect();
        matrix(participants, features, values)
    }

    #[test]
    fn spans_several_tiles_and_blocks_symmetrically() {
        // More participants than one tile and more features than one block exercise the
        // accumulation across blocks and the mirroring of the lower triangle (whole-block path).
        let participants = MAX_TILE + 7;
        let features = hashed(participants, FEATURE_BLOCK + 13);
        let similarity = pearson(&features);
        let (p, q) = (3, MAX_TILE + 5);
        assert!((f64::from(similarity.values[[p, q]]) - direct(&features, p, q)).abs() < 1e-6);
        assert_eq!(similarity.values[[p, q]], similarity.values[[q, p]]);
    }

    #[test]
    fn tiled_path_spans_tiles_and_narrowed_blocks() {
        // Above WHOLE_BLOCK_MAX_PARTICIPANTS the tiled path runs, with feature blocks narrowed
        // to the scratch budget: check pairs within one tile, across tiles, and the diagonal.
        let participants = WHOLE_BLOCK_MAX_PARTICIPANTS + 9;
        let block = tile_feature_block(participants);
        assert!(block < FEATURE_BLOCK && participants * block * 4 <= TILE_SCRATCH_BYTES);
        let features = hashed(participants, 2 * block + 13);
        let similarity = pearson(&features);
        let last = participants - 1;
        for (p, q) in [(0, 1), (3, last), (tile_size(participants) + 1, 7), (last - 1, last)] {
            let value = f64::from(similarity.values[[p, q]]);
            assert!((value - direct(&features, p, q)).abs() < 1e-6, "pair ({p}, {q})");
            assert_eq!(similarity.values[[p, q]], similarity.values[[q, p]]);
        }
        assert_eq!(similarity.values[[5, 5]], 1.0);
    }
}
