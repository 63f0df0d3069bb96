//! Stage 9: the run summary to words, provenance JSON and TSV tables, in an output folder that
//! appears whole or not at all.
//!
//! Everything a run reports comes from one [`RunSummary`]: the text printed at the end, the
//! `summary.json` for scripts and (later) the HTML report. Every warning is a variant of
//! [`Warning`], whose text gives the likely cause and what to try.

pub mod balance;
mod log;
mod output;
mod provenance;
mod summary;
pub mod tables;

pub use log::Log;
pub use output::OutputFolder;
pub use provenance::{file_sha256, utc_timestamp, InputDigest, Provenance};
pub use summary::{CommunitySummary, ComparisonSummary, GraphMeasuresSummary, RunSummary, Warning};
pub use tables::Table;
