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
//! subtraction of sums of squares well conditioned.
//!
//! # Streaming layout
//! Each frame is decoded in pieces of 65,536 voxels (`PIECE_VOXELS`) that stay in the core's
//! cache. A piece is cut into blocks of 64 voxels (`VOXEL_BLOCK`), and a block is copied into
//! the batch only when it differs from the first kept frame: a background block (one finite
//! value, unchanged) would add exact zeros. After [`FRAME_BATCH`] kept frames, each stored
//! block's sums are updated over the whole batch at once, so the sums travel through memory
//! once per batch rather than once per frame. The arithmetic per voxel is the same whatever the
//! piece size, the thread count or the vector width.
//!
//! # Region matrices
//! The R region means of every kept frame are kept (K x R values, small), then residualised and
//! correlated at the end.
//!
//! Memory per participant: one batch of the blocks that change (float32), k + 2 sums per voxel
//! of those blocks, and the first kept frame; the series itself is never held.

use std::path::Path;

use super::confounds::NuisanceModel;
use super::seed::Regions;
use super::ConnectivityError;
use crate::read::frames::FrameReader;

/// Kept frames stored before the per-voxel sums are updated (at most 32: one bit per frame marks
/// what a block stored). The sums then cross memory 32 times less often; 32 frames of 230,000
/// changing voxels are 29 MB of float32. 32 was faster than 16 and 64 in
/// `benches/connectivity.sh` (docs/performance.md); no published source.
pub const FRAME_BATCH: usize = 32;

/// Voxels per block of the batch update: the block's sums (k + 2 rows of f64) and shifted
/// values (a batch of f64) stay in the core's L1/L2 cache, and a block outside the brain is
/// skipped whole (a 2 mm grid's rows are 91 voxels). Chosen by measurement with
/// `benches/connectivity.sh`; common practice for cache blocking.
const VOXEL_BLOCK: usize = 64;

/// Voxels per piece of a frame handed over by the decoder (256 KB of float32): the piece is
/// decoded, checksummed and sorted into blocks while it sits in the core's L2 cache, so the
/// decoded frame itself never travels through main memory. Chosen by measurement with
/// `benches/connectivity.sh`; common practice for cache blocking.
const PIECE_VOXELS: usize = 1 << 16;

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
/// O(V' (FRAME_BATCH / 2 + k + 2)) f64 words for the V' voxels of blocks that ever change, and
/// V f32 values for the first kept frame.
pub fn seed_map(
    path: &Path,
    participant: &str,
    model: &NuisanceModel,
    seed: &[usize],
) -> Result<SeedMap, ConnectivityError> {
    seed_map_in_pieces(path, participant, model, seed, PIECE_VOXELS)
}

/// [`seed_map`] with frames decoded `piece_voxels` at a time (a multiple of [`VOXEL_BLOCK`]);
/// tests use small pieces to cross piece boundaries on small grids.
fn seed_map_in_pieces(
    path: &Path,
    participant: &str,
    model: &NuisanceModel,
    seed: &[usize],
    piece_voxels: usize,
) -> Result<SeedMap, ConnectivityError> {
    let mut reader = open(path, participant, model)?;
    let voxels = reader.voxel_count();
    let rank = model.basis.rank;
    // Coefficients per kept frame: the basis row, then the shifted seed value.
    let width = rank + 1;
    let mut batch = BlockBatch::new(voxels, rank + 2);
    let mut coefficients = vec![0.0f64; FRAME_BATCH * width];
    let mut piece = vec![0.0f32; piece_voxels.max(VOXEL_BLOCK) / VOXEL_BLOCK * VOXEL_BLOCK];
    // The seed's voxels in file order, each with its place in `seed`, so the frame's seed values
    // are picked up piece by piece and summed in the caller's order.
    let mut seed_order: Vec<(usize, usize)> =
        seed.iter().enumerate().map(|(place, &voxel)| (voxel, place)).collect();
    seed_order.sort_unstable();
    let mut seed_values = vec![0.0f64; seed.len()];
    let mut have_first = false;
    let mut first_seed = 0.0;
    let mut seed_projection = vec![0.0f64; rank];
    let mut seed_squares = 0.0f64;
    let mut filled = 0;
    let mut kept_index = 0;
    for frame in 0..reader.frames {
        if !model.kept[frame] {
            // Censored: decoded (the stream must be read through) and dropped.
            reader.next_frame_in_pieces(&mut piece, |_, _| {}).map_err(ConnectivityError::Read)?;
            continue;
        }
        let mut next_seed = 0;
        reader
            .next_frame_in_pieces(&mut piece, |start, values| {
                let end = start + values.len();
                while next_seed < seed_order.len() && seed_order[next_seed].0 < end {
                    let (voxel, place) = seed_order[next_seed];
                    seed_values[place] = f64::from(values[voxel - start]);
                    next_seed += 1;
                }
                if have_first {
                    batch.store(filled, start, values);
                } else {
                    batch.set_first(start, values);
                }
            })
            .map_err(ConnectivityError::Read)?;
        let total: f64 = seed_values.iter().sum();
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
        if !have_first {
            // The first kept frame is the shift: its own shifted values are all zero, so it
            // takes a slot of the batch (its coefficients) without stored values.
            have_first = true;
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
            batch.accumulate(&coefficients, filled);
            filled = 0;
        }
    }
    batch.accumulate(&coefficients, filled);

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
        let sum = |row: usize| batch.sum(row, voxel);
        let mut projected = 0.0;
        let mut cross = sum(rank);
        for (j, &seed_q) in seed_projection.iter().enumerate() {
            let q = sum(j);
            projected += q * q;
            cross -= seed_q * q;
        }
        let squares = sum(rank + 1);
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

/// The voxel values of one batch of frames, kept by block of [`VOXEL_BLOCK`] voxels, and the
/// per-voxel sums they are added to.
///
/// A block stores a frame's values only when they differ from the first kept frame (the shift):
/// a block that held one finite value in the first kept frame and holds it again (background)
/// would add exact zeros and is not copied. A block gets a slot the first time it stores in a
/// batch, and a frame's stored blocks sit side by side in slot order, so a frame is written
/// sequentially. Sums are laid out block by block; the pages of blocks that never change are
/// never touched.
struct BlockBatch {
    /// FRAME_BATCH frames of `blocks` slots of VOXEL_BLOCK values:
    /// `values[(f * blocks + slot) * VOXEL_BLOCK + v]`.
    values: Vec<f32>,
    /// The block in each slot taken this batch, in slot order.
    slots: Vec<usize>,
    /// Per block, its slot this batch (`NO_SLOT` when it stored nothing yet).
    slot: Vec<u32>,
    /// Per block, bit f set when frame f of the batch was stored (unset: shifted values all zero).
    stored: Vec<u32>,
    /// The first kept frame, padded with zeros to whole blocks.
    first: Vec<f32>,
    /// Per block, the one finite value all its voxels held in the first kept frame, if any.
    uniform: Vec<Option<f32>>,
    /// Per block, `rows` rows of VOXEL_BLOCK sums: rows 0..k are Q'y, row k is s'y, row k + 1 is y'y.
    sums: Vec<f64>,
    /// Per block, whether its sums were written yet. A block's sums are written with zeros
    /// before they are first read: reading an untouched page first maps the shared zero page,
    /// and the write after it then costs a copy-on-write fault and a TLB shootdown across the
    /// process's threads (measured: 8% of a 2-thread run).
    written: Vec<bool>,
    rows: usize,
    blocks: usize,
}

/// Where the values of `slot` in frame `frame` of a batch of `blocks` slots start.
fn value_offset(slot: usize, frame: usize, blocks: usize) -> usize {
    (frame * blocks + slot) * VOXEL_BLOCK
}

/// Slots ahead whose values the batch update asks the cache for: with 4, one participant of
/// `benches/connectivity.sh` took 3% less time than without prefetching, and 8 did no better
/// (docs/performance.md); no published source.
const PREFETCH_AHEAD: usize = 4;

/// A block without a slot in the current batch.
const NO_SLOT: u32 = u32::MAX;

const _: () = assert!(FRAME_BATCH <= u32::BITS as usize, "one bit per frame of a batch");

impl BlockBatch {
    fn new(voxels: usize, rows: usize) -> Self {
        let blocks = voxels.div_ceil(VOXEL_BLOCK);
        BlockBatch {
            values: vec![0.0; FRAME_BATCH * blocks * VOXEL_BLOCK],
            slots: Vec::new(),
            slot: vec![NO_SLOT; blocks],
            stored: vec![0; blocks],
            first: vec![0.0; blocks * VOXEL_BLOCK],
            uniform: vec![None; blocks],
            sums: vec![0.0; blocks * rows * VOXEL_BLOCK],
            written: vec![false; blocks],
            rows,
            blocks,
        }
    }

    /// Takes a piece of the first kept frame, `start` a multiple of VOXEL_BLOCK.
    fn set_first(&mut self, start: usize, values: &[f32]) {
        self.first[start..start + values.len()].copy_from_slice(values);
        for (offset, block) in values.chunks(VOXEL_BLOCK).enumerate() {
            let u = block[0];
            let same = block.iter().fold(u.is_finite(), |all, &value| all & (value == u));
            self.uniform[start / VOXEL_BLOCK + offset] = same.then_some(u);
        }
    }

    /// Stores a piece of the batch's frame `frame`, `start` a multiple of VOXEL_BLOCK.
    fn store(&mut self, frame: usize, start: usize, values: &[f32]) {
        for (offset, block) in values.chunks(VOXEL_BLOCK).enumerate() {
            let index = start / VOXEL_BLOCK + offset;
            if let Some(u) = self.uniform[index] {
                // No early exit: a fold over the whole block vectorises.
                if block.iter().fold(true, |all, &value| all & (value == u)) {
                    continue;
                }
            }
            if self.slot[index] == NO_SLOT {
                self.slot[index] = self.slots.len() as u32;
                self.slots.push(index);
            }
            let at = value_offset(self.slot[index] as usize, frame, self.blocks);
            self.values[at..at + block.len()].copy_from_slice(block);
            self.stored[index] |= 1 << frame;
        }
    }

    /// The sum of `row` for `voxel`.
    fn sum(&self, row: usize, voxel: usize) -> f64 {
        let block = voxel / VOXEL_BLOCK;
        self.sums[(block * self.rows + row) * VOXEL_BLOCK + voxel % VOXEL_BLOCK]
    }

    /// Adds the batch's `filled` frames to the sums and empties the batch; `coefficients` holds
    /// `rows - 1` per frame (the basis row, then the shifted seed value).
    fn accumulate(&mut self, coefficients: &[f64], filled: usize) {
        #[cfg(target_arch = "x86_64")]
        {
            if std::arch::is_x86_feature_detected!("avx512f") {
                // SAFETY: the CPU supports AVX-512F (checked just above).
                unsafe { accumulate_avx512(self, coefficients, filled) };
                return;
            }
            if std::arch::is_x86_feature_detected!("avx2") {
                // SAFETY: the CPU supports AVX2 (checked just above).
                unsafe { accumulate_avx2(self, coefficients, filled) };
                return;
            }
        }
        accumulate_lanes(self, coefficients, filled);
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn accumulate_avx512(batch: &mut BlockBatch, coefficients: &[f64], filled: usize) {
    accumulate_lanes(batch, coefficients, filled);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn accumulate_avx2(batch: &mut BlockBatch, coefficients: &[f64], filled: usize) {
    accumulate_lanes(batch, coefficients, filled);
}

/// The body of [`BlockBatch::accumulate`], inlined into each target-feature variant so the
/// compiler vectorises it at that width. Every voxel's sums take the same operations in the
/// same order at any vector width, so the widest of AVX-512, AVX2 and SSE2 the CPU offers gives
/// identical results.
#[inline(always)]
fn accumulate_lanes(batch: &mut BlockBatch, coefficients: &[f64], filled: usize) {
    if filled == 0 {
        return;
    }
    let rows = batch.rows;
    let width = rows - 1;
    let mut shifted = vec![[0.0f64; VOXEL_BLOCK]; filled];
    for (slot, &index) in batch.slots.iter().enumerate() {
        #[cfg(target_arch = "x86_64")]
        if slot + PREFETCH_AHEAD < batch.slots.len() {
            let ahead = slot + PREFETCH_AHEAD;
            let stored = batch.stored[batch.slots[ahead]];
            for frame in 0..filled {
                if stored & (1 << frame) != 0 {
                    let at = value_offset(ahead, frame, batch.blocks);
                    for line in (0..VOXEL_BLOCK).step_by(16) {
                        let pointer = batch.values[at + line..].as_ptr().cast::<i8>();
                        // SAFETY: a prefetch is a hint; it reads nothing and cannot fault.
                        unsafe {
                            std::arch::x86_64::_mm_prefetch::<{ std::arch::x86_64::_MM_HINT_T0 }>(pointer)
                        };
                    }
                }
            }
        }
        let stored = batch.stored[index];
        let base: &[f32; VOXEL_BLOCK] =
            batch.first[index * VOXEL_BLOCK..(index + 1) * VOXEL_BLOCK].try_into().expect("whole block");
        for (frame, target) in shifted.iter_mut().enumerate() {
            if stored & (1 << frame) == 0 {
                *target = [0.0; VOXEL_BLOCK];
                continue;
            }
            let at = value_offset(slot, frame, batch.blocks);
            let values: &[f32; VOXEL_BLOCK] =
                batch.values[at..at + VOXEL_BLOCK].try_into().expect("whole block");
            for ((out, &value), &origin) in target.iter_mut().zip(values).zip(base) {
                *out = f64::from(value) - f64::from(origin);
            }
        }
        batch.stored[index] = 0;
        batch.slot[index] = NO_SLOT;
        // Rows 0..width take coefficient * y; row `width` (y'y) takes y * y. Lanes past the
        // grid's last voxel compute on padding and are never read.
        let sums = &mut batch.sums[index * rows * VOXEL_BLOCK..(index + 1) * rows * VOXEL_BLOCK];
        if !batch.written[index] {
            sums.fill(0.0);
            batch.written[index] = true;
        }
        for (row, lanes) in sums.chunks_exact_mut(VOXEL_BLOCK).enumerate() {
            let lanes: &mut [f64; VOXEL_BLOCK] = lanes.try_into().expect("whole block");
            let coefficient = |frame: usize| coefficients[frame * width + row];
            update_block(lanes, &shifted, coefficient, row == width);
        }
    }
    batch.slots.clear();
}

/// One row of one block's sums over a batch: `lanes[v] += c(t) * y_t[v]` over frames t, or
/// `y_t[v]^2` when `squares` (the y'y row). Frames are taken four at a time, so each sum is
/// loaded and stored once per four frames even where the compiler keeps them in memory.
#[inline(always)]
fn update_block(
    lanes: &mut [f64; VOXEL_BLOCK],
    shifted: &[[f64; VOXEL_BLOCK]],
    coefficient: impl Fn(usize) -> f64,
    squares: bool,
) {
    let filled = shifted.len();
    let mut frame = 0;
    while frame + 4 <= filled {
        let (a, b, c, d) = (&shifted[frame], &shifted[frame + 1], &shifted[frame + 2], &shifted[frame + 3]);
        if squares {
            for v in 0..VOXEL_BLOCK {
                lanes[v] += a[v] * a[v] + b[v] * b[v] + c[v] * c[v] + d[v] * d[v];
            }
        } else {
            let (c0, c1, c2, c3) =
                (coefficient(frame), coefficient(frame + 1), coefficient(frame + 2), coefficient(frame + 3));
            for v in 0..VOXEL_BLOCK {
                lanes[v] += c0 * a[v] + c1 * b[v] + c2 * c[v] + c3 * d[v];
            }
        }
        frame += 4;
    }
    for (frame, a) in shifted.iter().enumerate().skip(frame) {
        if squares {
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
    let mut piece = vec![0.0f32; PIECE_VOXELS];
    let mut kept_index = 0;
    for frame in 0..reader.frames {
        if !model.kept[frame] {
            reader.next_frame_in_pieces(&mut piece, |_, _| {}).map_err(ConnectivityError::Read)?;
            continue;
        }
        let target = &mut series[kept_index * count..(kept_index + 1) * count];
        reader
            .next_frame_in_pieces(&mut piece, |start, values| {
                for (&region, &value) in regions.index[start..start + values.len()].iter().zip(values) {
                    if region != Regions::BACKGROUND {
                        target[region as usize] += f64::from(value);
                    }
                }
            })
            .map_err(ConnectivityError::Read)?;
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

    /// A 13 x 11 x 7 series (1,001 voxels: 15 whole blocks and one of 41) of 70 frames, value
    /// of voxel v (file order) at frame t from `value`, written as gzip NIfTI-1 by the nifti
    /// crate's writer.
    fn write_series(path: &Path, value: impl Fn(usize, usize) -> f32) {
        let (nx, ny, nz, frames) = (13, 11, 7, 70);
        let series = ndarray::Array4::from_shape_fn((nx, ny, nz, frames), |(i, j, k, t)| {
            value(i + nx * (j + ny * k), t)
        });
        nifti::writer::WriterOptions::new(path).write_nifti(&series).unwrap();
    }

    /// Pearson r of the residuals, computed the direct way (Q'y, then y - Q Q'y, then the
    /// textbook two-pass correlation) for one voxel's kept values.
    fn direct_r(y: &[f64], s: &[f64], basis: &super::super::confounds::Basis) -> Option<f64> {
        let residual = |x: &[f64]| {
            let mut projection = vec![0.0; basis.rank];
            for (t, &value) in x.iter().enumerate() {
                for (p, &q) in projection.iter_mut().zip(basis.row(t)) {
                    *p += q * value;
                }
            }
            x.iter()
                .enumerate()
                .map(|(t, &value)| {
                    value - basis.row(t).iter().zip(&projection).map(|(q, p)| q * p).sum::<f64>()
                })
                .collect::<Vec<f64>>()
        };
        let (ry, rs) = (residual(y), residual(s));
        let syy: f64 = ry.iter().map(|v| v * v).sum();
        let sss: f64 = rs.iter().map(|v| v * v).sum();
        let sys: f64 = ry.iter().zip(&rs).map(|(a, b)| a * b).sum();
        let scale: f64 = y.iter().map(|v| (v - y[0]) * (v - y[0])).sum();
        // Constant after regression, as the module's rule: residual squares at most
        // CONSTANT_TOLERANCE of the squares about the first value (zero for a constant series).
        (syy > CONSTANT_TOLERANCE * scale && scale > 0.0).then(|| sys / (syy * sss).sqrt())
    }

    #[test]
    fn seed_maps_equal_the_direct_residual_correlation_whatever_the_piece_size() {
        // The streamed map (pieces, blocks, background blocks skipped, batches of FRAME_BATCH
        // frames) against the definition: r of the least-squares residuals (Golub & Van Loan,
        // Matrix Computations 4th ed. 5.2.8) of each voxel and of the seed mean. Values are
        // invented for this check; voxels cover every path of the block store:
        // 0..200 zero throughout (whole background blocks), 200..330 a constant 5 (a block
        // mixing 0 and 5 is stored but constant), 150 zero until frame 40 then signal (in an
        // all-zero block, which starts storing mid-batch), 520 NaN in kept frame 45 (non-finite),
        // 530 NaN in censored frame 17 only (finite), 636..646 the seed (across the boundary of
        // pieces of 64 and 128 voxels, listed in reverse).
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("sub-01_bold.nii.gz");
        let noise = |v: usize, t: usize| {
            let x = ((v * 7919 + t * 104_729) % 1_000_003) as f64 / 1_000_003.0;
            (x * std::f64::consts::TAU).sin()
        };
        let seed_signal = |t: usize| (t as f64 * 0.37).sin() * 2.0;
        let drift = |t: usize| t as f64 / 70.0;
        let value = |v: usize, t: usize| -> f32 {
            match v {
                150 if t < 40 => 0.0,
                0..=149 | 151..=199 => 0.0,
                200..=329 => 5.0,
                520 if t == 45 => f32::NAN,
                530 if t == 17 => f32::NAN,
                _ => (100.0 + (v % 5) as f64 * seed_signal(t) + 3.0 * drift(t) + noise(v, t)) as f32,
            }
        };
        write_series(&path, value);
        let censored = [0usize, 17, 33, 64];
        let kept: Vec<bool> = (0..70).map(|t| !censored.contains(&t)).collect();
        let kept_frames: Vec<usize> = (0..70).filter(|&t| kept[t]).collect();
        let drift_column: Vec<f64> = kept_frames.iter().map(|&t| drift(t)).collect();
        let model = NuisanceModel {
            kept: kept.clone(),
            confounds: Confounds::default(),
            basis: orthonormal_basis(&[drift_column], kept_frames.len()),
        };
        let seed: Vec<usize> = (636..646).rev().collect();

        // The frame reader gives back what was written, whole or in pieces.
        let mut reader = FrameReader::open(&path, "sub-01").unwrap();
        let mut whole = vec![0.0f32; 1001];
        let mut piece = vec![0.0f32; 100];
        let mut pieces = vec![0.0f32; 1001];
        let mut reader_in_pieces = FrameReader::open(&path, "sub-01").unwrap();
        for t in 0..70 {
            assert!(reader.next_frame(&mut whole).unwrap());
            assert!(reader_in_pieces
                .next_frame_in_pieces(&mut piece, |start, values| {
                    pieces[start..start + values.len()].copy_from_slice(values)
                })
                .unwrap());
            for v in [0, 150, 250, 777, 1000] {
                assert_eq!(whole[v].to_bits(), value(v, t).to_bits(), "voxel {v} frame {t}");
                assert_eq!(pieces[v].to_bits(), value(v, t).to_bits(), "voxel {v} frame {t}");
            }
        }
        assert!(!reader.next_frame(&mut whole).unwrap());
        // A buffer that is not one frame is an error, not a short or shifted read.
        let mut reader = FrameReader::open(&path, "sub-01").unwrap();
        assert!(reader.next_frame(&mut whole[..1000]).is_err());
        assert!(reader.next_frame_in_pieces(&mut [], |_, _| {}).is_err());
        assert!(reader.next_frame(&mut whole).unwrap());

        let maps: Vec<SeedMap> = [64, 128, 192, 1024, PIECE_VOXELS]
            .iter()
            .map(|&piece| seed_map_in_pieces(&path, "sub-01", &model, &seed, piece).unwrap())
            .collect();
        for map in &maps[1..] {
            let same = map.r.iter().zip(&maps[0].r).all(|(a, b)| a.to_bits() == b.to_bits());
            assert!(same, "the piece size changed a correlation");
        }
        let map = &maps[0];
        assert_eq!(map.nonfinite_voxels, 1);
        assert_eq!(map.constant_voxels, 329);
        assert_eq!(map.r[520], 0.0);
        let series = |v: usize| kept_frames.iter().map(|&t| f64::from(value(v, t))).collect::<Vec<f64>>();
        let seed_mean: Vec<f64> = kept_frames
            .iter()
            .map(|&t| seed.iter().map(|&v| f64::from(value(v, t))).sum::<f64>() / seed.len() as f64)
            .collect();
        let mut compared = 0;
        for v in (0..1001).filter(|&v| v != 520) {
            match direct_r(&series(v), &seed_mean, &model.basis) {
                Some(expected) => {
                    assert!((map.r[v] - expected).abs() < 1e-9, "voxel {v}: {} against {expected}", map.r[v]);
                    compared += 1;
                }
                None => assert_eq!(map.r[v], 0.0, "voxel {v} is constant"),
            }
        }
        assert_eq!(compared, 1001 - 329 - 1);
        // The seed signal shows where it was put (weight v % 5): strong at 604, absent at 605.
        assert!(map.r[604] > 0.9 && map.r[605].abs() < 0.5, "{} {}", map.r[604], map.r[605]);
        assert!(map.r[150] != 0.0 && map.r[530] != 0.0);
    }
}
