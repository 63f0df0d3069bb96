//! strata: data-driven participant subgroups from connectivity data.
//!
//! An imaging cohort (per-participant seed maps or region-by-region connectivity matrices, plus a
//! BIDS-style participants table) flows one way through these stages:
//!
//! ```text
//! read  ->  features  ->  similarity  ->  graph  ->  communities  ->  validation  ->  stats  ->  maps / report
//! files     N x F f32     N x N f32       CSR per     partition per    agreement       per-community  NIfTI / npy /
//!           + space       Pearson         density     density, then    (ARI, NMI, VI)  statistics     TSV / JSON
//!                                                     consensus
//! ```
//!
//! * [`read`]: participants table and input files, matched and checked, decoded in parallel.
//! * [`features`]: masking, vectorising, Fisher z: the [`features::FeatureMatrix`] and the
//!   [`features::FeatureSpace`] that maps a feature vector back to the user's format.
//! * [`similarity`]: participant-by-participant Pearson similarity through one blocked matrix product.
//! * [`graph`]: proportional-density participant graphs in compressed sparse rows.
//! * [`communities`]: Infomap, Leiden and Louvain, and the consensus across the sweep.
//! * [`validation`]: partition agreement (adjusted Rand index, NMI, variation of information),
//!   the rotation null test of one homogeneous population, and resampling stability.
//! * [`stats`]: per-community and whole-cohort group comparisons (Welch t, linear models,
//!   permutations, interaction F, composition and covariate balance).
//! * [`maps`]: statistic vectors to files through the feature space; output naming.
//! * [`report`]: provenance JSON, the TSV tables, the run summary in words and the HTML report.
//! * [`assign`] and [`power`]: placing new participants into a run's communities, and planning a
//!   study by simulation.
//! * [`pipeline`]: the one place that runs the stages in order.
//! * [`connectivity`]: before the pipeline, seed maps or region matrices from preprocessed 4D
//!   BOLD series (`strata connectivity`), named so `strata run` reads them.
//!
//! strata is research software. Subgroup assignments and maps are not diagnoses and are not for
//! individual clinical decisions.

// Errors carry the file, participant and found/expected values their messages need; they are
// built once, on the failure path, so their size does not matter.
#![allow(clippy::result_large_err)]

pub mod assign;
pub mod atlas;
pub mod check;
pub mod communities;
pub mod config;
pub mod connectivity;
pub mod demo;
pub mod error;
pub mod features;
pub mod graph;
pub mod maps;
pub mod partition;
pub mod pipeline;
pub mod power;
pub mod read;
pub mod report;
pub mod seed;
pub mod similarity;
pub mod stats;
pub mod validation;

pub mod cli;

/// The version of strata, as written into provenance and sidecars.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
