//! Placing new participants into the communities of an earlier run (`strata assign`).
//!
//! `strata run` saves an assignment model in `assignment/` of its output folder: each
//! community's centroid (the mean Fisher-z feature row of its members, the same values as the
//! `comm-K_mean` maps), the feature space (the voxel mask on the input grid, or the region
//! count), the preprocessing (value scale) and, from the training participants, the reference
//! distributions of the assignment margin and of the similarity to the own centroid.
//! `strata assign` reads new inputs through the same readers and features stage, correlates
//! each new participant with every centroid (Pearson r, as the similarity stage does between
//! participants), and places it in the community of the highest r, or in none (community 0)
//! when the placement is less clear than that of nearly every training participant.

use std::path::{Path, PathBuf};

use ndarray::Array2;
use serde::{Deserialize, Serialize};
use thiserror::Error;

use crate::communities::Partition;
use crate::error::Error as RunError;
use crate::features::{FeatureMatrix, FeatureOptions, FeatureSpace, ValueScale, ValueTransform};
use crate::maps::WriteError;
use crate::read::{Cohort, InputKind, InputSource};
use crate::report::tables::format_number;
use crate::report::Table;

/// Folder of the assignment model inside a run's output folder.
pub const MODEL_FOLDER: &str = "assignment";

/// Version of the model files; bumped when their layout changes.
pub const MODEL_FORMAT_VERSION: u32 = 1;

/// Default confidence floor (`--min-confidence`): a new participant whose margin or similarity
/// is below that of 95% of the training participants is left unassigned. 0.05 mirrors the
/// conventional 5% tail (common practice); 0 assigns everyone.
pub const DEFAULT_MIN_CONFIDENCE: f64 = 0.05;

/// What `strata run` saves for assignment (`assignment/model.json`).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct AssignmentModel {
    /// Layout version ([`MODEL_FORMAT_VERSION`]).
    pub format_version: u32,
    /// strata version that wrote it.
    pub strata_version: String,
    /// `seed_maps` or `region_matrices`.
    pub input_kind: String,
    /// `r` (Fisher z applied), `z` (used as given) or `raw` (no range check, no Fisher z).
    pub values: String,
    /// `none` or `log1p`, applied to raw values first.
    #[serde(default = "no_transform")]
    pub transform: String,
    /// The MATLAB / HDF5 variable the inputs were read from, if one was named.
    #[serde(default)]
    pub variable: Option<String>,
    /// Features per participant.
    pub feature_count: usize,
    /// Grid dimensions of seed maps.
    pub grid: Option<[usize; 3]>,
    /// Voxel-to-world affine of seed maps.
    pub affine: Option<[[f64; 4]; 4]>,
    /// Regions of matrices.
    pub region_count: Option<usize>,
    /// Community numbers (1..=k) in centroid-row order, with their training sizes.
    pub communities: Vec<(usize, usize)>,
    /// Sorted leave-one-out margins of the training participants: r with the own community's
    /// centroid (computed without the participant) minus the highest r with another centroid.
    /// Empty with one community.
    pub training_margins: Vec<f64>,
    /// Sorted leave-one-out similarities of the training participants to their own centroid.
    pub training_similarities: Vec<f64>,
}

fn no_transform() -> String {
    "none".to_string()
}

/// How the run turned input values into features; new participants are read the same way.
#[derive(Debug, Clone)]
pub struct Preprocessing {
    /// The value scale (`--values`).
    pub values: ValueScale,
    /// The transform of raw values (`--transform`).
    pub transform: ValueTransform,
    /// The MATLAB / HDF5 variable (`--variable`).
    pub variable: Option<String>,
}

/// One new participant's placement.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Assignment {
    /// Participant id (`sub-<label>` from the file name).
    pub participant_id: String,
    /// Community number, or 0 for none.
    pub community: usize,
    /// Community of the highest similarity, whatever the confidence.
    pub nearest: usize,
    /// Pearson r with each centroid, in the model's community order.
    pub similarities: Vec<f64>,
    /// Highest r minus the second highest (NaN with one community).
    pub margin: f64,
    /// Share of training participants placed no more clearly: the fraction of training margins
    /// at or below this margin (with one community: of training similarities at or below this
    /// similarity), and never above the similarity's own share.
    pub confidence: f64,
    /// Why the participant is left unassigned, when it is.
    pub note: Option<String>,
}

/// `strata assign` could not run.
#[derive(Debug, Error)]
pub enum AssignError {
    /// The run folder has no assignment model.
    #[error("{path}: no assignment model; pass the output folder of a `strata run` on seed maps or region matrices (runs on a precomputed similarity matrix or on measure tables save none), or rerun with strata {version} or later")]
    NoModel {
        /// The expected model file.
        path: PathBuf,
        /// strata's version.
        version: &'static str,
    },
    /// The model files are unreadable or inconsistent.
    #[error("{path}: {problem}; the run folder may be damaged: rerun `strata run`")]
    BadModel {
        /// The file.
        path: PathBuf,
        /// What is wrong.
        problem: String,
    },
    /// The new inputs do not fit the run's feature space.
    #[error("{path}: participant {participant}: {found}, but the run in {run} used {expected}; new participants must be on the run's grid and affine (or atlas): resample or reparcellate them first")]
    SpaceMismatch {
        /// First new input file.
        path: PathBuf,
        /// Its participant.
        participant: String,
        /// What the new inputs are.
        found: String,
        /// What the run used.
        expected: String,
        /// The run folder.
        run: PathBuf,
    },
    /// A new input has no participant label.
    #[error("{path}: no sub-<label> in the file name; name new inputs like sub-<label>_... so each row of the output names its participant")]
    NoLabel {
        /// The file.
        path: PathBuf,
    },
    /// Two new inputs carry one label.
    #[error("{first} and {second}: both are participant {participant}; give one file per participant")]
    DuplicateLabel {
        /// First file.
        first: PathBuf,
        /// Second file.
        second: PathBuf,
        /// The label.
        participant: String,
    },
    /// `--min-confidence` outside [0, 1].
    #[error(
        "--min-confidence is {found}; expected a share between 0 and 1 (default {DEFAULT_MIN_CONFIDENCE})"
    )]
    InvalidConfidence {
        /// The value given.
        found: f64,
    },
}

fn model_error(path: &Path, problem: impl Into<String>) -> AssignError {
    AssignError::BadModel { path: path.to_path_buf(), problem: problem.into() }
}

/// Pearson correlation of two vectors, accumulated in f64 (NaN when either is constant).
pub fn pearson_r(a: &[f32], b: &[f32]) -> f64 {
    let n = a.len().min(b.len()) as f64;
    if n < 2.0 {
        return f64::NAN;
    }
    let mean_a = a.iter().map(|&v| f64::from(v)).sum::<f64>() / n;
    let mean_b = b.iter().map(|&v| f64::from(v)).sum::<f64>() / n;
    let (mut ab, mut aa, mut bb) = (0.0f64, 0.0f64, 0.0f64);
    for (&x, &y) in a.iter().zip(b) {
        let (x, y) = (f64::from(x) - mean_a, f64::from(y) - mean_b);
        ab += x * y;
        aa += x * x;
        bb += y * y;
    }
    if aa > 0.0 && bb > 0.0 {
        ab / (aa * bb).sqrt()
    } else {
        f64::NAN
    }
}

/// Community centroids: the mean feature row of each community 1..=k (k x F), with sizes.
pub fn centroids(matrix: &FeatureMatrix, partition: &Partition) -> (Array2<f32>, Vec<(usize, usize)>) {
    let k = partition.community_count();
    let width = matrix.feature_count();
    let mut sums = Array2::<f64>::zeros((k, width));
    let mut sizes = vec![0usize; k];
    for (row, &community) in partition.membership.iter().enumerate() {
        if community == 0 {
            continue;
        }
        sizes[community - 1] += 1;
        let mut target = sums.row_mut(community - 1);
        for (slot, &value) in target.iter_mut().zip(matrix.values.row(row)) {
            *slot += f64::from(value);
        }
    }
    let centroids = Array2::from_shape_fn((k, width), |(c, f)| {
        if sizes[c] == 0 {
            0.0
        } else {
            (sums[[c, f]] / sizes[c] as f64) as f32
        }
    });
    (centroids, (1..=k).zip(sizes).collect())
}

/// The training reference distributions: per assigned participant, its leave-one-out r with
/// its own centroid and its margin over the best other centroid.
fn training_references(
    matrix: &FeatureMatrix,
    partition: &Partition,
    centroids: &Array2<f32>,
    sizes: &[(usize, usize)],
) -> (Vec<f64>, Vec<f64>) {
    use rayon::prelude::*;
    let rows: Vec<(usize, usize)> = partition
        .membership
        .iter()
        .enumerate()
        .filter(|(_, &community)| community > 0 && sizes[community - 1].1 >= 2)
        .map(|(row, &community)| (row, community))
        .collect();
    let pairs: Vec<(f64, f64)> = rows
        .par_iter()
        .map(|&(row, community)| {
            let values = matrix.values.row(row);
            let values = values.as_slice().expect("feature rows are contiguous");
            let size = sizes[community - 1].1 as f32;
            let own: Vec<f32> = centroids
                .row(community - 1)
                .iter()
                .zip(values)
                .map(|(&mean, &value)| (mean * size - value) / (size - 1.0))
                .collect();
            let own_r = pearson_r(values, &own);
            let best_other = (0..centroids.nrows())
                .filter(|&c| c != community - 1)
                .map(|c| pearson_r(values, centroids.row(c).as_slice().expect("contiguous")))
                .fold(f64::NEG_INFINITY, f64::max);
            (own_r, own_r - best_other)
        })
        .collect();
    let mut similarities: Vec<f64> = pairs.iter().map(|p| p.0).filter(|v| v.is_finite()).collect();
    let mut margins: Vec<f64> = if centroids.nrows() >= 2 {
        pairs.iter().map(|p| p.1).filter(|v| v.is_finite()).collect()
    } else {
        Vec::new()
    };
    similarities.sort_by(f64::total_cmp);
    margins.sort_by(f64::total_cmp);
    (similarities, margins)
}

/// Writes `assignment/` into a run's output folder (`dir` is the staging folder). Runs on
/// measure tables save none: their features are standardised across the run's participants,
/// which a new participant cannot repeat alone.
///
/// # Errors
/// Any file that cannot be written.
pub fn write_model(
    dir: &Path,
    matrix: &FeatureMatrix,
    space: &FeatureSpace,
    partition: &Partition,
    preprocessing: &Preprocessing,
) -> Result<(), RunError> {
    if matches!(space, FeatureSpace::Measures(_)) {
        return Ok(());
    }
    let folder = dir.join(MODEL_FOLDER);
    std::fs::create_dir_all(&folder).map_err(|source| WriteError::Io { path: folder.clone(), source })?;
    let (centroid_rows, sizes) = centroids(matrix, partition);
    let (training_similarities, training_margins) =
        training_references(matrix, partition, &centroid_rows, &sizes);
    let centroid_path = folder.join("centroids.npy");
    ndarray_npy::write_npy(&centroid_path, &centroid_rows)
        .map_err(|error| WriteError::Encode { path: centroid_path.clone(), message: error.to_string() })?;
    let (grid, affine, region_count, input_kind) = match space {
        FeatureSpace::Voxels(voxels) => {
            crate::maps::write_mask(&folder.join("mask.nii.gz"), voxels)?;
            (Some(voxels.dim), Some(voxels.affine), None, "seed_maps")
        }
        FeatureSpace::Edges(edges) => (None, None, Some(edges.region_count), "region_matrices"),
        FeatureSpace::Measures(_) => return Ok(()),
    };
    let model = AssignmentModel {
        format_version: MODEL_FORMAT_VERSION,
        strata_version: crate::VERSION.to_string(),
        input_kind: input_kind.to_string(),
        values: match preprocessing.values {
            ValueScale::Correlation => "r".to_string(),
            ValueScale::FisherZ => "z".to_string(),
            ValueScale::Raw => "raw".to_string(),
        },
        transform: match preprocessing.transform {
            ValueTransform::None => "none".to_string(),
            ValueTransform::Log1p => "log1p".to_string(),
        },
        variable: preprocessing.variable.clone(),
        feature_count: matrix.feature_count(),
        grid,
        affine,
        region_count,
        communities: sizes,
        training_margins,
        training_similarities,
    };
    let path = folder.join("model.json");
    let text = serde_json::to_string_pretty(&model)
        .map_err(|error| WriteError::Encode { path: path.clone(), message: error.to_string() })?;
    std::fs::write(&path, text + "\n").map_err(|source| WriteError::Io { path, source })?;
    Ok(())
}

/// Share of sorted `reference` values at or below `value` (0 for an empty reference).
fn share_at_or_below(reference: &[f64], value: f64) -> f64 {
    if reference.is_empty() || !value.is_finite() {
        return 0.0;
    }
    reference.partition_point(|&r| r <= value) as f64 / reference.len() as f64
}

/// Places one feature row.
///
/// r_c = Pearson(x, centroid_c); the nearest community maximises r; the margin is r_(1) - r_(2);
/// confidence = min(share of training margins <= margin, share of training own-centroid r <=
/// r_(1)) (with one community only the second share). Community 0 when the confidence is below
/// `min_confidence`.
pub fn assign_row(
    participant_id: &str,
    row: &[f32],
    centroids: &Array2<f32>,
    model: &AssignmentModel,
    min_confidence: f64,
) -> Assignment {
    let similarities: Vec<f64> = (0..centroids.nrows())
        .map(|c| pearson_r(row, centroids.row(c).as_slice().expect("centroid rows are contiguous")))
        .collect();
    let mut order: Vec<usize> = (0..similarities.len()).collect();
    order.sort_by(|&a, &b| similarities[b].total_cmp(&similarities[a]).then(a.cmp(&b)));
    let best = order[0];
    let margin = if order.len() >= 2 { similarities[best] - similarities[order[1]] } else { f64::NAN };
    let similarity_share = share_at_or_below(&model.training_similarities, similarities[best]);
    let confidence = if order.len() >= 2 {
        share_at_or_below(&model.training_margins, margin).min(similarity_share)
    } else {
        similarity_share
    };
    let nearest = model.communities[best].0;
    let note = (confidence < min_confidence).then(|| {
        if order.len() >= 2 && share_at_or_below(&model.training_margins, margin) < min_confidence {
            format!(
                "between communities: margin {margin:.3} over the next community is below that of {:.0}% of the training participants",
                100.0 * (1.0 - min_confidence)
            )
        } else {
            format!(
                "unlike every community: similarity {:.3} to the nearest centroid is below that of {:.0}% of the training participants",
                similarities[best],
                100.0 * (1.0 - min_confidence)
            )
        }
    });
    Assignment {
        participant_id: participant_id.to_string(),
        community: if note.is_some() { 0 } else { nearest },
        nearest,
        similarities,
        margin,
        confidence,
        note,
    }
}

/// Reads the model of a run folder.
///
/// # Errors
/// [`AssignError::NoModel`] or [`AssignError::BadModel`].
pub fn read_model(run: &Path) -> Result<(AssignmentModel, Array2<f32>), AssignError> {
    let path = run.join(MODEL_FOLDER).join("model.json");
    if !path.is_file() {
        return Err(AssignError::NoModel { path, version: crate::VERSION });
    }
    let text = std::fs::read_to_string(&path).map_err(|error| model_error(&path, error.to_string()))?;
    let model: AssignmentModel = serde_json::from_str(&text)
        .map_err(|error| model_error(&path, format!("not a model file ({error})")))?;
    if model.format_version != MODEL_FORMAT_VERSION {
        return Err(model_error(
            &path,
            format!(
                "model format {} but this strata reads format {MODEL_FORMAT_VERSION}",
                model.format_version
            ),
        ));
    }
    let centroid_path = run.join(MODEL_FOLDER).join("centroids.npy");
    let centroids: Array2<f32> = ndarray_npy::read_npy(&centroid_path)
        .map_err(|error| model_error(&centroid_path, format!("cannot read the centroids ({error})")))?;
    if centroids.nrows() != model.communities.len() || centroids.ncols() != model.feature_count {
        return Err(model_error(
            &centroid_path,
            format!(
                "centroids are {} x {} but the model has {} communities and {} features",
                centroids.nrows(),
                centroids.ncols(),
                model.communities.len(),
                model.feature_count
            ),
        ));
    }
    if model.communities.is_empty() {
        return Err(model_error(&path, "the run found no community to assign to"));
    }
    Ok((model, centroids))
}

/// Options of `strata assign`.
#[derive(Debug, Clone)]
pub struct AssignOptions {
    /// The earlier run's output folder.
    pub run: PathBuf,
    /// Glob patterns of the new inputs.
    pub inputs: Vec<String>,
    /// The output table.
    pub out: PathBuf,
    /// Confidence floor below which a participant is left unassigned.
    pub min_confidence: f64,
}

/// Reads new inputs, places each participant, and writes the table.
///
/// # Errors
/// A missing or damaged model, unreadable or invalid inputs, inputs on another grid or atlas,
/// or an output that cannot be written.
pub fn assign(options: &AssignOptions) -> Result<Vec<Assignment>, RunError> {
    if !(0.0..=1.0).contains(&options.min_confidence) {
        return Err(AssignError::InvalidConfidence { found: options.min_confidence }.into());
    }
    let (model, centroids) = read_model(&options.run)?;
    let files = crate::read::expand_patterns(&options.inputs)?;
    let mut ids: Vec<String> = Vec::with_capacity(files.len());
    for file in &files {
        let id = crate::read::participant_label(file)
            .ok_or_else(|| AssignError::NoLabel { path: file.clone() })?;
        if let Some(previous) = ids.iter().position(|existing| *existing == id) {
            return Err(AssignError::DuplicateLabel {
                first: files[previous].clone(),
                second: file.clone(),
                participant: id,
            }
            .into());
        }
        ids.push(id);
    }
    let kind = crate::read::kind_of(&files[0]).unwrap_or(InputKind::RegionMatrices);
    let expected_kind =
        if model.input_kind == "seed_maps" { InputKind::SeedMaps } else { InputKind::RegionMatrices };
    let describe =
        |kind: InputKind| if kind == InputKind::SeedMaps { "seed maps" } else { "region matrices" };
    if kind != expected_kind {
        return Err(AssignError::SpaceMismatch {
            path: files[0].clone(),
            participant: ids[0].clone(),
            found: format!("the new inputs are {}", describe(kind)),
            expected: describe(expected_kind).to_string(),
            run: options.run.clone(),
        }
        .into());
    }
    let table = crate::read::ParticipantsTable::from_ids(&files[0], &ids);
    let cohort = Cohort {
        table,
        participant_ids: ids.clone(),
        sources: files.iter().map(|path| InputSource { path: path.clone(), stack_index: None }).collect(),
        kind,
        variable: model.variable.clone(),
        measures: None,
    };
    if let (InputKind::SeedMaps, Some(grid), Some(affine)) = (kind, model.grid, model.affine) {
        let volume = crate::read::read_volume(&files[0], &ids[0])?;
        if volume.dim != grid || !crate::read::affines_match(&volume.affine, &affine) {
            return Err(AssignError::SpaceMismatch {
                path: files[0].clone(),
                participant: ids[0].clone(),
                found: format!(
                    "grid {}x{}x{} with affine {}",
                    volume.dim[0],
                    volume.dim[1],
                    volume.dim[2],
                    crate::read::format_affine(&volume.affine)
                ),
                expected: format!(
                    "grid {}x{}x{} with affine {}",
                    grid[0],
                    grid[1],
                    grid[2],
                    crate::read::format_affine(&affine)
                ),
                run: options.run.clone(),
            }
            .into());
        }
    }
    let feature_options = FeatureOptions {
        mask: (kind == InputKind::SeedMaps).then(|| options.run.join(MODEL_FOLDER).join("mask.nii.gz")),
        values: match model.values.as_str() {
            "z" => ValueScale::FisherZ,
            "raw" => ValueScale::Raw,
            _ => ValueScale::Correlation,
        },
        transform: if model.transform == "log1p" { ValueTransform::Log1p } else { ValueTransform::None },
        region_names: None,
    };
    let features = crate::features::build_features(&cohort, &feature_options)?;
    if let FeatureSpace::Edges(edges) = &features.space {
        if Some(edges.region_count) != model.region_count {
            return Err(AssignError::SpaceMismatch {
                path: files[0].clone(),
                participant: ids[0].clone(),
                found: format!("{} x {} matrices", edges.region_count, edges.region_count),
                expected: format!(
                    "{0} x {0} matrices of its atlas",
                    model.region_count.map_or("?".to_string(), |r| r.to_string())
                ),
                run: options.run.clone(),
            }
            .into());
        }
    }
    if features.matrix.feature_count() != model.feature_count {
        return Err(AssignError::SpaceMismatch {
            path: files[0].clone(),
            participant: ids[0].clone(),
            found: format!("{} features", features.matrix.feature_count()),
            expected: format!("{} features", model.feature_count),
            run: options.run.clone(),
        }
        .into());
    }
    let assignments: Vec<Assignment> = ids
        .iter()
        .enumerate()
        .map(|(row, id)| {
            let values = features.matrix.values.row(row);
            assign_row(id, values.as_slice().expect("contiguous"), &centroids, &model, options.min_confidence)
        })
        .collect();
    write_table(&options.out, &model, &assignments)?;
    Ok(assignments)
}

fn write_table(path: &Path, model: &AssignmentModel, assignments: &[Assignment]) -> Result<(), RunError> {
    let mut header = vec!["participant_id".to_string(), "community".to_string(), "nearest".to_string()];
    header.extend(model.communities.iter().map(|(community, _)| format!("r_community_{community}")));
    header.extend(["margin".to_string(), "confidence".to_string(), "note".to_string()]);
    let mut table = Table::new(header);
    for assignment in assignments {
        let mut cells = vec![
            assignment.participant_id.clone(),
            assignment.community.to_string(),
            assignment.nearest.to_string(),
        ];
        cells.extend(assignment.similarities.iter().map(|&r| format_number(r)));
        cells.push(if assignment.margin.is_nan() {
            "n/a".to_string()
        } else {
            format_number(assignment.margin)
        });
        cells.push(format_number(assignment.confidence));
        cells.push(assignment.note.clone().unwrap_or_else(|| "n/a".to_string()));
        table.push(cells);
    }
    if let Some(parent) = path.parent().filter(|parent| !parent.as_os_str().is_empty()) {
        std::fs::create_dir_all(parent)
            .map_err(|source| WriteError::Io { path: parent.to_path_buf(), source })?;
    }
    crate::maps::write_bytes_atomically(path, table.to_tsv().as_bytes())?;
    Ok(())
}
