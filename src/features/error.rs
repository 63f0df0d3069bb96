//! Errors of the features stage: each names the file and the participant.

use std::path::PathBuf;

/// The inputs read but cannot form a valid feature matrix.
#[derive(Debug, thiserror::Error)]
pub enum FeatureError {
    /// A file could not be read or decoded.
    #[error(transparent)]
    Read(#[from] crate::read::ReadError),
    /// The cohort is a precomputed similarity matrix, which has no per-participant features.
    #[error(
        "a precomputed similarity matrix has no per-participant features; maps and comparisons need --inputs"
    )]
    NoFeatures,
    /// A participant's values are constant, so its similarity to anyone is undefined.
    #[error("{path}: participant {participant}: all {feature_count} features have the same value; check the file is the right one (a blank map or matrix cannot be compared)")]
    ConstantParticipant {
        /// The participant's file.
        path: PathBuf,
        /// The participant.
        participant: String,
        /// Number of features.
        feature_count: usize,
    },
    /// A participant's grid or affine differs from the first participant's.
    #[error("{path}: participant {participant}: {what} {found} differs from the first map's {expected} ({first}); resample all maps to one template before running")]
    GridMismatch {
        /// The file.
        path: PathBuf,
        /// The participant.
        participant: String,
        /// "grid" or "affine".
        what: &'static str,
        /// This file's value.
        found: String,
        /// The first file's value.
        expected: String,
        /// The first file.
        first: PathBuf,
    },
    /// The given mask's grid or affine differs from the maps'.
    #[error("{path}: the --mask {what} {found} differs from the maps' {expected} ({first}); give a mask on the maps' grid and affine, or resample the maps to the mask's grid")]
    MaskMismatch {
        /// The mask file (for a built-in mask, its copy in the cache folder, whose path names it).
        path: PathBuf,
        /// "grid" or "affine".
        what: &'static str,
        /// The mask's value.
        found: String,
        /// The first map's value.
        expected: String,
        /// The first map.
        first: PathBuf,
    },
    /// A participant's matrix has another size than the first participant's.
    #[error("{path}: participant {participant}: {found} regions but {first} has {expected}; every participant needs a matrix over the same atlas")]
    RegionCountMismatch {
        /// The file.
        path: PathBuf,
        /// The participant.
        participant: String,
        /// This file's R.
        found: usize,
        /// The first file's R.
        expected: usize,
        /// The first file.
        first: PathBuf,
    },
    /// A value that cannot be used.
    #[error("{path}: participant {participant}: {problem}")]
    BadValue {
        /// The file.
        path: PathBuf,
        /// The participant.
        participant: String,
        /// What, where, and what to do.
        problem: String,
    },
    /// No voxel is valid in every participant (or the given mask is empty).
    #[error("{path}: the analysis mask is empty: {problem}")]
    EmptyMask {
        /// The mask file, or the first map when no mask was given.
        path: PathBuf,
        /// Why, and what to do.
        problem: String,
    },
    /// The atlas names another number of regions than the matrices hold.
    #[error("{path}: the atlas table has {names} regions but the matrices have {regions}; give the atlas the matrices were made with")]
    AtlasMismatch {
        /// The atlas table.
        path: PathBuf,
        /// Rows of the atlas.
        names: usize,
        /// R of the matrices.
        regions: usize,
    },
}
