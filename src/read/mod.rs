//! Stage 1: files to a [`Cohort`]: the participants table, the input files matched to its rows,
//! and the checks that can be made before any value is decoded.
//!
//! Decoding values into the feature matrix is streamed by the features stage, which calls the
//! per-format readers of this module one participant at a time (in parallel). This module knows
//! file formats; it knows nothing of masks, Fisher z or similarity.

pub mod cifti;
mod cohort;
mod error;
pub mod frames;
pub mod hdf5;
pub mod mat;
pub mod matrix;
pub mod measures;
pub mod nifti;
pub mod nifti2;
mod similarity;
mod table;

pub use cohort::{
    discover_inputs, expand_patterns, kind_of, participant_label, Cohort, InputKind, InputOptions,
    InputSource,
};
pub use error::ReadError;
pub use measures::{discover_measures, MeasureValues, MissingMeasure};
pub use nifti::{affines_match, format_affine, read_volume};
pub use similarity::read_similarity;
pub use table::{read_participants, read_table, ParticipantsTable};
