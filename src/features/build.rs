//! Decoding every participant straight into its row of the feature matrix.

use std::path::{Path, PathBuf};

use ndarray::Array2;
use rayon::prelude::*;
use serde::Serialize;

use super::fisher::{fisher_z, fisher_z_in_place, FISHER_Z_CLIP, RANGE_TOLERANCE};
use super::{EdgeSpace, FeatureError, FeatureMatrix, FeatureSpace, MeasureSpace, VoxelSpace};
use crate::read::cifti::{is_pconn, read_pconn};
use crate::read::matrix::{read_matrix_in, read_stack_in};
use crate::read::nifti::{
    affines_match, format_affine, read_raw, read_raw_stack, read_volume, RawVolume, Volume, STACK_PARTICIPANT,
};
use crate::read::{Cohort, InputKind};

/// Off-diagonal entries (i, j) and (j, i) of a matrix are taken as equal within this relative
/// tolerance (float32 rounding of a symmetric product; common practice).
pub const SYMMETRY_TOLERANCE: f64 = 1e-5;

/// How input values are scaled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ValueScale {
    /// Correlations r: checked to lie in [-1, 1], then Fisher z transformed.
    Correlation,
    /// Already Fisher z: used as they are.
    FisherZ,
    /// Not correlations (counts, densities, other measures): used as they are, no range check,
    /// no Fisher z.
    Raw,
}

/// A transform of raw values, applied before the scale's own handling.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ValueTransform {
    /// Values as they are.
    None,
    /// log(1 + x) (`f64::ln_1p`, accurate near 0), for counts; negative values are refused.
    Log1p,
}

impl From<crate::config::Values> for ValueScale {
    /// The scale of `--values`.
    fn from(values: crate::config::Values) -> Self {
        match values {
            crate::config::Values::R => ValueScale::Correlation,
            crate::config::Values::Z => ValueScale::FisherZ,
            crate::config::Values::Raw => ValueScale::Raw,
        }
    }
}

impl From<crate::config::Transform> for ValueTransform {
    /// The transform of `--transform`.
    fn from(transform: crate::config::Transform) -> Self {
        match transform {
            crate::config::Transform::None => ValueTransform::None,
            crate::config::Transform::Log1p => ValueTransform::Log1p,
        }
    }
}

/// Options of the features stage.
#[derive(Debug, Clone)]
pub struct FeatureOptions {
    /// A mask volume (non-zero voxels kept); None: voxels finite and non-zero in every participant.
    pub mask: Option<PathBuf>,
    /// How input values are scaled.
    pub values: ValueScale,
    /// Transform applied to each value first (meant for `ValueScale::Raw`).
    pub transform: ValueTransform,
    /// Region names for matrices, with the atlas table they came from.
    pub region_names: Option<(PathBuf, Vec<String>)>,
}

/// What the features stage did, for the summary and provenance.
#[derive(Debug, Clone, Serialize)]
pub struct FeatureSummary {
    /// Participants (rows).
    pub participants: usize,
    /// Features per participant.
    pub features: usize,
    /// Voxels of the grid outside the analysis mask (seed maps only).
    pub voxels_outside_mask: usize,
    /// Voxels of the candidate mask dropped because some participant had NaN, Inf or 0 there.
    pub voxels_dropped: usize,
    /// Values with |r| clipped at 1 - FISHER_Z_CLIP before the transform.
    pub clipped_values: usize,
    /// The clip epsilon used.
    pub fisher_z_clip: f64,
}

/// The feature matrix, its space and a summary.
#[derive(Debug, Clone)]
pub struct Features {
    /// N x F values.
    pub matrix: FeatureMatrix,
    /// Where each feature came from.
    pub space: FeatureSpace,
    /// What was done.
    pub summary: FeatureSummary,
}

/// Transforms one value; Err(problem) when a correlation is out of range or a value to be
/// log-transformed is negative.
fn transform(value: f64, options: &FeatureOptions, clipped: &mut usize) -> Result<f32, String> {
    let value = match options.transform {
        ValueTransform::None => value,
        ValueTransform::Log1p if value < 0.0 => {
            return Err(format!(
                "value {value} is negative; --transform log1p is for counts and densities (0 or more): check the file, or use --transform none"
            ))
        }
        ValueTransform::Log1p => value.ln_1p(),
    };
    match options.values {
        ValueScale::FisherZ | ValueScale::Raw => Ok(value as f32),
        ValueScale::Correlation => {
            if value.abs() > 1.0 + RANGE_TOLERANCE {
                return Err(format!(
                    "value {value} is outside [-1, 1], so it is not a correlation; if the inputs are already Fisher z, pass --values z; if they are not correlations (counts, densities), pass --values raw"
                ));
            }
            if value.abs() >= 1.0 - FISHER_Z_CLIP {
                *clipped += 1;
            }
            Ok(fisher_z(value) as f32)
        }
    }
}

/// True when `row` holds correlations to be Fisher-transformed (no other transform) that are all
/// finite, non-zero and below the clip (|r| < 1 - [`FISHER_Z_CLIP`]): then no column is dropped
/// or clipped and the row goes straight to [`fisher_z_in_place`]. Branch-free, so the check
/// runs several values at a time.
fn ordinary_correlations(row: &[f32], options: &FeatureOptions) -> bool {
    let near_one = 1.0 - FISHER_Z_CLIP;
    matches!((options.values, options.transform), (ValueScale::Correlation, ValueTransform::None))
        && row.iter().fold(true, |ordinary, &value| {
            // NaN and infinities fail the comparison.
            ordinary & (value != 0.0) & (f64::from(value.abs()) < near_one)
        })
}

/// Transforms a row of stored values in place, as [`transform`] value by value; NaN marks a
/// column already invalid and stays NaN. Returns the number of clipped values, or the first
/// offending column and the problem.
///
/// Correlations with no other transform (the common case) are range-checked in one pass and
/// transformed several at a time by [`fisher_z_in_place`].
fn transform_row(row: &mut [f32], options: &FeatureOptions) -> Result<usize, (usize, String)> {
    let mut clipped = 0;
    if matches!((options.values, options.transform), (ValueScale::Correlation, ValueTransform::None)) {
        let near_one = 1.0 - FISHER_Z_CLIP;
        for (column, &value) in row.iter().enumerate() {
            let magnitude = f64::from(value.abs());
            if magnitude >= near_one {
                if magnitude > 1.0 + RANGE_TOLERANCE {
                    return Err((column, transform(f64::from(value), options, &mut clipped).unwrap_err()));
                }
                clipped += 1;
            }
        }
        fisher_z_in_place(row);
        return Ok(clipped);
    }
    for (column, target) in row.iter_mut().enumerate() {
        if !target.is_nan() {
            *target =
                transform(f64::from(*target), options, &mut clipped).map_err(|problem| (column, problem))?;
        }
    }
    Ok(clipped)
}

/// Reads every participant's input into the feature matrix.
///
/// Seed maps: the mask is the given mask, or the voxels finite and non-zero in every
/// participant; values are stored only at the first participant's (or the mask's) candidate
/// voxels and compacted in place, so memory stays near the size of the final matrix. Matrices:
/// the upper triangle without the diagonal, in `triu_indices(R, 1)` order. Correlations are
/// Fisher z transformed. Participants are decoded in parallel; when several are invalid, the
/// first in cohort order is reported.
///
/// # Errors
/// Any reader error; grids, affines or R that differ; NaN/Inf in a matrix or inside a given
/// mask; correlations outside [-1, 1]; an empty mask; a constant participant.
pub fn build_features(cohort: &Cohort, options: &FeatureOptions) -> Result<Features, FeatureError> {
    let features = match cohort.kind {
        InputKind::SeedMaps => build_voxels(cohort, options)?,
        InputKind::RegionMatrices => build_edges(cohort, options)?,
        InputKind::Similarity => return Err(FeatureError::NoFeatures),
        InputKind::Measures => build_measures(cohort)?,
    };
    check_not_constant(cohort, &features.matrix)?;
    Ok(features)
}

fn check_not_constant(cohort: &Cohort, matrix: &FeatureMatrix) -> Result<(), FeatureError> {
    let width = matrix.feature_count().max(1);
    let constant =
        matrix.row_major().par_chunks(width).position_first(|row| row.iter().all(|&value| value == row[0]));
    if let Some(row) = constant {
        return Err(FeatureError::ConstantParticipant {
            path: cohort.sources[row].path.clone(),
            participant: cohort.participant_ids[row].clone(),
            feature_count: matrix.feature_count(),
        });
    }
    Ok(())
}

fn voxel_ijk(flat: usize, dim: [usize; 3]) -> (usize, usize, usize) {
    (flat % dim[0], (flat / dim[0]) % dim[1], flat / (dim[0] * dim[1]))
}

fn check_grid_raw(
    volume: &RawVolume,
    reference: &Volume,
    path: &Path,
    participant: &str,
    first: &Path,
) -> Result<(), FeatureError> {
    if volume.dim != reference.dim {
        let show = |d: [usize; 3]| format!("{}x{}x{}", d[0], d[1], d[2]);
        return Err(FeatureError::GridMismatch {
            path: path.to_path_buf(),
            participant: participant.to_string(),
            what: "grid",
            found: show(volume.dim),
            expected: show(reference.dim),
            first: first.to_path_buf(),
        });
    }
    if !affines_match(&volume.affine, &reference.affine) {
        return Err(FeatureError::GridMismatch {
            path: path.to_path_buf(),
            participant: participant.to_string(),
            what: "affine",
            found: format_affine(&volume.affine),
            expected: format_affine(&reference.affine),
            first: first.to_path_buf(),
        });
    }
    Ok(())
}

fn build_voxels(cohort: &Cohort, options: &FeatureOptions) -> Result<Features, FeatureError> {
    let first_path = &cohort.sources[0].path;
    // A merged 4D file is read once; each participant's volume is decoded from it on demand.
    let stack = match cohort.sources[0].stack_index {
        Some(_) => {
            let stack = read_raw_stack(first_path)?;
            if stack.frames != cohort.participant_ids.len() {
                return Err(FeatureError::BadValue {
                    path: first_path.clone(),
                    participant: STACK_PARTICIPANT.into(),
                    problem: format!(
                        "{} volumes along the 4th dimension for {} participants; a merged 4D NIfTI holds one volume per participants-table row",
                        stack.frames,
                        cohort.participant_ids.len()
                    ),
                });
            }
            Some(stack)
        }
        None => None,
    };
    let first = match &stack {
        Some(stack) => stack.decode_frame(0),
        None => read_volume(first_path, &cohort.participant_ids[0])?,
    };
    let grid_size = first.values.len();
    let given_mask = match &options.mask {
        Some(mask_path) => {
            let mask = read_volume(mask_path, "(mask)")?;
            if mask.dim != first.dim || !affines_match(&mask.affine, &first.affine) {
                return Err(FeatureError::MaskMismatch {
                    path: mask_path.clone(),
                    what: if mask.dim != first.dim { "grid" } else { "affine" },
                    found: format!("{:?} {}", mask.dim, format_affine(&mask.affine)),
                    expected: format!("{:?} {}", first.dim, format_affine(&first.affine)),
                    first: first_path.clone(),
                });
            }
            let voxels: Vec<usize> = mask
                .values
                .iter()
                .enumerate()
                .filter(|(_, &v)| v != 0.0 && v.is_finite())
                .map(|(i, _)| i)
                .collect();
            if voxels.is_empty() {
                return Err(FeatureError::EmptyMask {
                    path: mask_path.clone(),
                    problem: "the mask has no non-zero voxel; check it is the right file".into(),
                });
            }
            Some(voxels)
        }
        None => None,
    };
    let candidates: Vec<usize> = match &given_mask {
        Some(voxels) => voxels.clone(),
        None => first
            .values
            .iter()
            .enumerate()
            .filter(|(_, &v)| v != 0.0 && v.is_finite())
            .map(|(i, _)| i)
            .collect(),
    };
    if candidates.is_empty() {
        return Err(FeatureError::EmptyMask {
            path: first_path.clone(),
            problem: format!(
                "participant {} has no finite, non-zero voxel; check the map, or give --mask",
                cohort.participant_ids[0]
            ),
        });
    }
    let participants = cohort.participant_ids.len();
    let width = candidates.len();
    let mut values = vec![0.0f32; participants * width];
    let masked = given_mask.is_some();
    let reference = &first;
    let outcomes: Vec<Result<(usize, Vec<usize>), FeatureError>> = values
        .par_chunks_mut(width)
        .enumerate()
        .map(|(row, out)| {
            crate::report::progress::tick(1);
            let path = &cohort.sources[row].path;
            let participant = &cohort.participant_ids[row];
            // Participant 0 was decoded whole for the candidate mask; the others decode only the
            // candidate voxels, straight from their stored bytes into the row.
            if row == 0 {
                for (target, &voxel) in out.iter_mut().zip(&candidates) {
                    *target = reference.values[voxel];
                }
            } else if let Some(stack) = &stack {
                stack.gather_frame(row, &candidates, out);
            } else {
                let raw = read_raw(path, participant)?;
                check_grid_raw(&raw, reference, path, participant, first_path)?;
                raw.gather(&candidates, out);
            }
            // Candidate columns this participant lacks (NaN, Inf or 0 outside its coverage).
            let mut invalid = Vec::new();
            if ordinary_correlations(out, options) {
                // The common case, checked in one vectorised pass: nothing to drop or clip.
                fisher_z_in_place(out);
                return Ok((0, invalid));
            }
            for (column, target) in out.iter_mut().enumerate() {
                let value = *target;
                if !value.is_finite() {
                    if masked {
                        let (i, j, k) = voxel_ijk(candidates[column], reference.dim);
                        return Err(FeatureError::BadValue {
                            path: path.clone(),
                            participant: participant.clone(),
                            problem: format!(
                                "value {value} at voxel ({i}, {j}, {k}) inside the mask; fix the map or exclude the voxel from --mask"
                            ),
                        });
                    }
                    *target = f32::NAN;
                    invalid.push(column);
                } else if value == 0.0 && !masked {
                    *target = f32::NAN;
                    invalid.push(column);
                }
            }
            let clipped = transform_row(out, options).map_err(|(column, problem)| {
                let (i, j, k) = voxel_ijk(candidates[column], reference.dim);
                FeatureError::BadValue {
                    path: path.clone(),
                    participant: participant.clone(),
                    problem: format!("voxel ({i}, {j}, {k}): {problem}"),
                }
            })?;
            Ok((clipped, invalid))
        })
        .collect();
    let mut clipped_values = 0;
    // Keep the candidate voxels valid in every participant.
    let mut keep = vec![true; width];
    for outcome in outcomes {
        let (clipped, invalid) = outcome?;
        clipped_values += clipped;
        for column in invalid {
            keep[column] = false;
        }
    }
    let mask: Vec<usize> =
        candidates.iter().zip(&keep).filter(|(_, &k)| k).map(|(&voxel, _)| voxel).collect();
    if mask.is_empty() {
        return Err(FeatureError::EmptyMask {
            path: first_path.clone(),
            problem: "no voxel is finite and non-zero in every participant; check the maps share one brain coverage, or give --mask".into(),
        });
    }
    let kept = mask.len();
    if kept < width {
        // Compact in place: row r's kept values move to r * kept, never past where they are read.
        let mut write = 0;
        for row in 0..participants {
            for col in 0..width {
                if keep[col] {
                    values[write] = values[row * width + col];
                    write += 1;
                }
            }
        }
        values.truncate(participants * kept);
        values.shrink_to_fit();
    }
    let header = first.header.clone();
    let space = FeatureSpace::Voxels(VoxelSpace {
        dim: first.dim,
        voxel_size: [header.pixdim[1], header.pixdim[2], header.pixdim[3]],
        affine: first.affine,
        reference_header: header,
        mask,
    });
    let summary = FeatureSummary {
        participants,
        features: kept,
        voxels_outside_mask: grid_size - kept,
        voxels_dropped: width - kept,
        clipped_values,
        fisher_z_clip: FISHER_Z_CLIP,
    };
    let matrix = FeatureMatrix {
        values: Array2::from_shape_vec((participants, kept), values)
            .expect("rows x kept values by construction"),
    };
    Ok(Features { matrix, space, summary })
}

/// Checks one participant's matrix and writes its upper triangle into `out`.
fn matrix_row(
    matrix: ndarray::ArrayView2<f64>,
    regions: usize,
    options: &FeatureOptions,
    out: &mut [f32],
    path: &Path,
    participant: &str,
) -> Result<usize, FeatureError> {
    let bad = |problem: String| FeatureError::BadValue {
        path: path.to_path_buf(),
        participant: participant.to_string(),
        problem,
    };
    let mut clipped = 0;
    let mut index = 0;
    for i in 0..regions {
        for j in (i + 1)..regions {
            let value = matrix[[i, j]];
            let mirror = matrix[[j, i]];
            if !value.is_finite() || !mirror.is_finite() {
                let (row, col, found) = if value.is_finite() { (j, i, mirror) } else { (i, j, value) };
                return Err(bad(format!(
                    "value {found} at row {}, column {} (1-based); off-diagonal entries must be finite (fix or drop the participant)",
                    row + 1,
                    col + 1
                )));
            }
            if (value - mirror).abs() > SYMMETRY_TOLERANCE * value.abs().max(mirror.abs()).max(1.0) {
                return Err(bad(format!(
                    "matrix is not symmetric: entry ({}, {}) = {value} but ({}, {}) = {mirror}; give undirected connectivity matrices",
                    i + 1,
                    j + 1,
                    j + 1,
                    i + 1
                )));
            }
            out[index] = transform(value, options, &mut clipped)
                .map_err(|problem| bad(format!("row {}, column {}: {problem}", i + 1, j + 1)))?;
            index += 1;
        }
    }
    Ok(clipped)
}

fn build_edges(cohort: &Cohort, options: &FeatureOptions) -> Result<Features, FeatureError> {
    let participants = cohort.participant_ids.len();
    let first_path = cohort.sources[0].path.clone();
    let stack = match cohort.sources[0].stack_index {
        Some(_) => Some(read_stack_in(&first_path, cohort.variable.as_deref())?),
        None => None,
    };
    let check_square = |shape: (usize, usize), path: &Path, participant: &str| -> Result<(), FeatureError> {
        if shape.0 != shape.1 {
            return Err(FeatureError::BadValue {
                path: path.to_path_buf(),
                participant: participant.to_string(),
                problem: format!(
                    "matrix of shape {}x{} is not square; expected R x R region connectivity",
                    shape.0, shape.1
                ),
            });
        }
        Ok(())
    };
    // CIFTI-2 .pconn.nii files name their parcels: the first file's names become region names
    // and every other file must name the same parcels in the same order.
    let mut parcel_names = None;
    let first_matrix = match &stack {
        Some(stack) => stack.index_axis(ndarray::Axis(0), 0).to_owned(),
        None if is_pconn(&first_path) => {
            let pconn = read_pconn(&first_path, &cohort.participant_ids[0])?;
            parcel_names = Some(pconn.parcel_names);
            pconn.matrix
        }
        None => read_matrix_in(&first_path, &cohort.participant_ids[0], cohort.variable.as_deref())?,
    };
    check_square(first_matrix.dim(), &first_path, &cohort.participant_ids[0])?;
    let regions = first_matrix.nrows();
    if regions < 3 {
        return Err(FeatureError::BadValue {
            path: first_path,
            participant: cohort.participant_ids[0].clone(),
            problem: format!("{regions} region(s): a connectivity matrix needs at least 3 regions for a meaningful similarity"),
        });
    }
    let region_names = match &options.region_names {
        Some((atlas, names)) => {
            if names.len() != regions {
                return Err(FeatureError::AtlasMismatch { path: atlas.clone(), names: names.len(), regions });
            }
            names.clone()
        }
        None => match &parcel_names {
            Some(names) => names.clone(),
            None => (1..=regions).map(|index| format!("region-{index:03}")).collect(),
        },
    };
    let width = regions * (regions - 1) / 2;
    let mut values = vec![0.0f32; participants * width];
    let outcomes: Vec<Result<usize, FeatureError>> = values
        .par_chunks_mut(width)
        .enumerate()
        .map(|(row, out)| {
            crate::report::progress::tick(1);
            let path = &cohort.sources[row].path;
            let participant = &cohort.participant_ids[row];
            let owned;
            let view = match (&stack, row) {
                (Some(stack), _) => stack.index_axis(ndarray::Axis(0), row),
                (None, 0) => first_matrix.view(),
                (None, _) => {
                    owned = match &parcel_names {
                        Some(first_names) => {
                            let pconn = read_pconn(path, participant)?;
                            // Another parcel count is reported as such below.
                            let same_count = pconn.parcel_names.len() == first_names.len();
                            if same_count && &pconn.parcel_names != first_names {
                                let differs = pconn
                                    .parcel_names
                                    .iter()
                                    .zip(first_names)
                                    .position(|(a, b)| a != b)
                                    .unwrap_or(0);
                                return Err(FeatureError::BadValue {
                                    path: path.clone(),
                                    participant: participant.clone(),
                                    problem: format!(
                                        "parcel {} is '{}' but in {} it is '{}'; every participant needs the same parcellation in the same order",
                                        differs + 1,
                                        pconn.parcel_names.get(differs).map_or("(none)", String::as_str),
                                        first_path.display(),
                                        first_names.get(differs).map_or("(none)", String::as_str)
                                    ),
                                });
                            }
                            pconn.matrix
                        }
                        None => read_matrix_in(path, participant, cohort.variable.as_deref())?,
                    };
                    check_square(owned.dim(), path, participant)?;
                    if owned.nrows() != regions {
                        return Err(FeatureError::RegionCountMismatch {
                            path: path.clone(),
                            participant: participant.clone(),
                            found: owned.nrows(),
                            expected: regions,
                            first: first_path.clone(),
                        });
                    }
                    owned.view()
                }
            };
            matrix_row(view, regions, options, out, path, participant)
        })
        .collect();
    let mut clipped_values = 0;
    for outcome in outcomes {
        clipped_values += outcome?;
    }
    let matrix = FeatureMatrix {
        values: Array2::from_shape_vec((participants, width), values).expect("rows x edges by construction"),
    };
    let summary = FeatureSummary {
        participants,
        features: width,
        voxels_outside_mask: 0,
        voxels_dropped: 0,
        clipped_values,
        fisher_z_clip: FISHER_Z_CLIP,
    };
    Ok(Features {
        matrix,
        space: FeatureSpace::Edges(EdgeSpace { region_count: regions, region_names }),
        summary,
    })
}

/// Standardises each measure (column) of an N x M row-major table: z = (x - mean) / sd with the
/// sample standard deviation (n - 1 denominator), in f64.
///
/// # Arguments
/// `values`: N x M, row-major; `measures`: M.
///
/// # Returns
/// The standardised values (f32) and each measure's mean and standard deviation; Err(column)
/// for the first constant measure (SD at most [`CONSTANT_MEASURE_TOLERANCE`] times its mean's
/// magnitude, or 1).
///
/// # Complexity
/// O(N M) time, O(M) extra memory.
pub fn standardise_measures(values: &[f64], measures: usize) -> Result<Standardised, usize> {
    let rows = values.len() / measures.max(1);
    let mut means = vec![0.0; measures];
    for row in values.chunks_exact(measures) {
        for (mean, &value) in means.iter_mut().zip(row) {
            *mean += value;
        }
    }
    means.iter_mut().for_each(|mean| *mean /= rows as f64);
    let mut deviations = vec![0.0; measures];
    for row in values.chunks_exact(measures) {
        for ((sum, &value), mean) in deviations.iter_mut().zip(row).zip(&means) {
            *sum += (value - mean) * (value - mean);
        }
    }
    let denominator = rows.saturating_sub(1).max(1) as f64;
    let deviations: Vec<f64> = deviations.into_iter().map(|sum| (sum / denominator).sqrt()).collect();
    let constant = |(sd, mean): (&f64, &f64)| {
        sd.is_nan() || *sd <= CONSTANT_MEASURE_TOLERANCE * mean.abs().max(1.0) || !sd.is_finite()
    };
    if let Some(column) = deviations.iter().zip(&means).position(constant) {
        return Err(column);
    }
    let values = values
        .chunks_exact(measures)
        .flat_map(|row| row.iter().zip(&means).zip(&deviations).map(|((v, m), s)| ((v - m) / s) as f32))
        .collect();
    Ok(Standardised { values, means, standard_deviations: deviations })
}

/// A measure whose sample SD is at most this fraction of its mean's magnitude (or of 1) is taken
/// as constant: rounding of identical values in the mean leaves an SD near 1e-16 relative
/// (f64 resolution; common practice).
pub const CONSTANT_MEASURE_TOLERANCE: f64 = 1e-12;

/// Standardised measures and what was removed from them.
#[derive(Debug, Clone)]
pub struct Standardised {
    /// N x M standardised values, row-major, f32.
    pub values: Vec<f32>,
    /// Each measure's mean.
    pub means: Vec<f64>,
    /// Each measure's sample standard deviation (n - 1).
    pub standard_deviations: Vec<f64>,
}

fn build_measures(cohort: &Cohort) -> Result<Features, FeatureError> {
    let measures = cohort.measures.as_ref().ok_or(FeatureError::NoFeatures)?;
    let width = measures.names.len();
    let participants = cohort.participant_ids.len();
    let Standardised { values, means, standard_deviations } =
        standardise_measures(&measures.values, width).map_err(|column| FeatureError::BadValue {
            path: measures.path.clone(),
            participant: "(every participant)".into(),
            problem: format!(
                "measure '{}' has the same value for every analysed participant; it cannot be standardised: leave it out of --measures",
                measures.names[column]
            ),
        })?;
    let matrix = FeatureMatrix {
        values: Array2::from_shape_vec((participants, width), values)
            .expect("rows x measures by construction"),
    };
    let summary = FeatureSummary {
        participants,
        features: width,
        voxels_outside_mask: 0,
        voxels_dropped: 0,
        clipped_values: 0,
        fisher_z_clip: FISHER_Z_CLIP,
    };
    Ok(Features {
        matrix,
        space: FeatureSpace::Measures(MeasureSpace {
            names: measures.names.clone(),
            means,
            standard_deviations,
        }),
        summary,
    })
}
