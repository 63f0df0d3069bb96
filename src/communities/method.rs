//! The community-detection methods behind one interface: one seeded trial, and its quality.
//!
//! Each method optimises its own objective (Infomap the map equation, Leiden and Louvain
//! modularity or the constant Potts model); [`Method::score`] puts them on one scale where
//! higher is better, so the sweep and the consensus keep the best trial whatever the method.

use rand::Rng;
use serde::Serialize;

use super::infomap::{infomap, map_equation};
use super::louvain::louvain;
use super::quality::modularity;
use crate::graph::ParticipantGraph;

/// A community-detection method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// Infomap, the two-level map equation (Rosvall & Bergstrom 2008): shortest codelength kept.
    Infomap,
    /// Louvain modularity optimisation (Blondel et al. 2008): highest modularity kept.
    Louvain,
}

/// What a method's trials are scored by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Objective {
    /// Two-level codelength in bits (lower is better).
    Codelength,
    /// Modularity with the resolution gamma (higher is better).
    Modularity,
}

impl Method {
    /// The name used on the command line and in outputs.
    pub fn name(self) -> &'static str {
        match self {
            Method::Infomap => "infomap",
            Method::Louvain => "louvain",
        }
    }

    /// The objective this method optimises.
    pub fn objective(self) -> Objective {
        match self {
            Method::Infomap => Objective::Codelength,
            Method::Louvain => Objective::Modularity,
        }
    }

    /// One seeded trial: community label per node, 0..k.
    pub fn run<R: Rng>(self, graph: &ParticipantGraph, resolution: f64, rng: &mut R) -> Vec<usize> {
        match self {
            Method::Infomap => infomap(graph, rng),
            Method::Louvain => louvain(graph, resolution, rng),
        }
    }

    /// The objective's value of `labels` on `graph` (codelength in bits, or modularity).
    pub fn quality(self, graph: &ParticipantGraph, labels: &[usize], resolution: f64) -> f64 {
        match self.objective() {
            Objective::Codelength => map_equation(graph, labels).codelength,
            Objective::Modularity => modularity(graph, labels, resolution),
        }
    }

    /// `quality` on a higher-is-better scale (the codelength negated).
    pub fn score(self, quality: f64) -> f64 {
        match self.objective() {
            Objective::Codelength => -quality,
            Objective::Modularity => quality,
        }
    }
}
