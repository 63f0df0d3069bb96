//! Stage 9: the run summary to words, provenance JSON and TSV tables, in an output folder that
//! appears whole or not at all.
//!
//! Everything a run reports comes from one [`RunSummary`]: the text printed at the end, the
//! `summary.json` for scripts and the HTML report (`report.html`, [`html`], rendered from the
//! run folder's files so a finished run can be re-rendered without recomputing). Every warning is a variant of
//! [`Warning`], whose text gives the likely cause and what to try.

pub mod balance;
pub mod figures;
pub mod html;
mod log;
mod output;
pub mod progress;
mod provenance;
pub mod run_files;
mod summary;
pub mod tables;
mod verdict;

pub use html::write_report;
pub use log::Log;
pub use output::{interrupted, remove_staging_folders, OutputFolder};
pub use provenance::{file_sha256, utc_timestamp, InputDigest, Provenance};
pub use run_files::ReportError;
pub use summary::{
    CommunityStability, CommunitySummary, ComparisonSummary, GraphMeasuresSummary, NullTestSummary,
    RunSummary, StabilitySummary, Warning, LOW_MEDIAN_ARI, UNSTABLE_JACCARD,
};
pub use tables::Table;
pub use verdict::{null_summary, stability_summary, verdict};
