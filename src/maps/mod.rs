//! Stage 8: statistic vectors to files, through the [`crate::features::FeatureSpace`].
//!
//! NIfTI volumes on the input grid for voxel features, symmetric R x R `.npy` plus an edge table
//! for region features, a JSON sidecar for every map; the output naming lives here in one place.

// OWNER: stats helper (naming, NIfTI/npy writers, sidecars). `WriteError` is shared with the
// report stage: add variants, keep the existing ones.

use std::path::PathBuf;

use thiserror::Error;

/// An output could not be written.
#[derive(Debug, Error)]
pub enum WriteError {
    /// The output folder exists and is not empty.
    #[error(
        "{path}: output folder exists and is not empty; choose another --out or pass --force to replace it"
    )]
    Exists {
        /// The folder.
        path: PathBuf,
    },
    /// An I/O failure on a path.
    #[error("{path}: {source}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// An encoder failed.
    #[error("{path}: could not encode output: {message}")]
    Encode {
        /// The file.
        path: PathBuf,
        /// What failed.
        message: String,
    },
}
