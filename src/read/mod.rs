//! Stage 1: files to a [`Cohort`]: the participants table, the input files matched to its rows,
//! and the checks that can be made before any value is decoded.
//!
//! Decoding values into the feature matrix is streamed by the features stage, which calls the
//! per-format readers of this module one participant at a time (in parallel). This module knows
//! file formats; it knows nothing of masks, Fisher z or similarity.

// OWNER: read helper. Public interface used by the pipeline (keep these names):
//   read_participants(path) -> Result<ParticipantsTable, ReadError>
//   discover_inputs(&InputOptions, &ParticipantsTable) -> Result<Cohort, ReadError>

use std::path::PathBuf;

/// How input files are found and matched to participants.
#[derive(Debug, Clone, Default)]
pub struct InputOptions {
    /// Glob patterns (or plain paths) of the input files.
    pub patterns: Vec<String>,
    /// Match files by this participants-table column (its value must occur in the file name)
    /// instead of the `sub-<label>` in the file name.
    pub match_column: Option<String>,
}

/// What kind of data the inputs hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InputKind {
    /// 3D NIfTI seed maps, one per participant.
    SeedMaps,
    /// R x R region matrices, one per participant or one stacked N x R x R array.
    RegionMatrices,
}

/// Where one participant's values are stored.
#[derive(Debug, Clone)]
pub struct InputSource {
    /// The file.
    pub path: PathBuf,
    /// For a stacked N x R x R `.npy`, the index along the first axis.
    pub stack_index: Option<usize>,
}

/// A participants table or input file is missing, unreadable or invalid.
#[derive(Debug, thiserror::Error)]
pub enum ReadError {
    /// An I/O failure on a path.
    #[error("{path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
}
