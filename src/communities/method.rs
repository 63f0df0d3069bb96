//! The community-detection methods behind one interface: one seeded trial, and its quality.
//!
//! Each method optimises its own objective (Infomap the map equation, Leiden modularity or the
//! constant Potts model, Louvain modularity); [`Method::score`] puts them on one scale where
//! higher is better, so the sweep and the consensus keep the best trial whatever the method.

use rand::Rng;
use serde::Serialize;

use super::infomap::{infomap, infomap_trial, map_equation, FlowNetwork};
use super::leiden::{cpm_quality, leiden, LeidenQuality};
use super::louvain::louvain;
use super::quality::modularity;
use crate::graph::ParticipantGraph;

/// A community-detection method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// Infomap, the two-level map equation (Rosvall & Bergstrom 2008): shortest codelength kept.
    Infomap,
    /// Leiden (Traag, Waltman & van Eck 2019) on modularity: highest modularity kept; every
    /// community connected.
    Leiden,
    /// Leiden on the constant Potts model (resolution = the edge-weight density a community must
    /// exceed, for example 0.1): highest CPM quality kept.
    LeidenCpm,
    /// Louvain modularity optimisation (Blondel et al. 2008): highest modularity kept.
    Louvain,
}

/// A graph made ready for a method's trials ([`Method::prepare`]).
#[derive(Debug, Clone)]
pub enum Prepared<'a> {
    /// Infomap's flow network of the graph.
    Flow(FlowNetwork<'a>),
    /// The graph itself (methods that need nothing more).
    Graph(&'a ParticipantGraph),
}

/// What a method's trials are scored by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Objective {
    /// Two-level codelength in bits (lower is better).
    Codelength,
    /// Modularity with the resolution gamma (higher is better).
    Modularity,
    /// Constant Potts model quality with the resolution gamma (higher is better).
    Cpm,
}

impl Method {
    /// The name used on the command line and in outputs.
    pub fn name(self) -> &'static str {
        match self {
            Method::Infomap => "infomap",
            Method::Leiden => "leiden",
            Method::LeidenCpm => "leiden-cpm",
            Method::Louvain => "louvain",
        }
    }

    /// The objective this method optimises.
    pub fn objective(self) -> Objective {
        match self {
            Method::Infomap => Objective::Codelength,
            Method::Leiden | Method::Louvain => Objective::Modularity,
            Method::LeidenCpm => Objective::Cpm,
        }
    }

    /// One seeded trial: community label per node, 0..k.
    pub fn run<R: Rng>(self, graph: &ParticipantGraph, resolution: f64, rng: &mut R) -> Vec<usize> {
        match self {
            Method::Infomap => infomap(graph, rng),
            Method::Leiden => leiden(graph, LeidenQuality::Modularity { resolution }, rng),
            Method::LeidenCpm => leiden(graph, LeidenQuality::Cpm { resolution }, rng),
            Method::Louvain => louvain(graph, resolution, rng),
        }
    }

    /// What the method's trials on one graph share: Infomap's flow network, built once.
    pub fn prepare(self, graph: &ParticipantGraph) -> Prepared<'_> {
        match self {
            Method::Infomap => Prepared::Flow(FlowNetwork::new(graph)),
            Method::Leiden | Method::LeidenCpm | Method::Louvain => Prepared::Graph(graph),
        }
    }

    /// One seeded trial on a prepared graph: labels and [`Method::quality`] of them, the same
    /// values as [`Method::run`] followed by [`Method::quality`].
    pub fn run_prepared<R: Rng>(
        self,
        prepared: &Prepared,
        resolution: f64,
        rng: &mut R,
    ) -> (Vec<usize>, f64) {
        match prepared {
            Prepared::Flow(network) => infomap_trial(network, rng),
            Prepared::Graph(graph) => {
                let labels = self.run(graph, resolution, rng);
                let quality = self.quality(graph, &labels, resolution);
                (labels, quality)
            }
        }
    }

    /// The objective's value of `labels` on `graph` (codelength in bits, or modularity).
    pub fn quality(self, graph: &ParticipantGraph, labels: &[usize], resolution: f64) -> f64 {
        match self.objective() {
            Objective::Codelength => map_equation(graph, labels).codelength,
            Objective::Modularity => modularity(graph, labels, resolution),
            Objective::Cpm => cpm_quality(graph, labels, resolution),
        }
    }

    /// `quality` on a higher-is-better scale (the codelength negated).
    pub fn score(self, quality: f64) -> f64 {
        match self.objective() {
            Objective::Codelength => -quality,
            Objective::Modularity | Objective::Cpm => quality,
        }
    }
}
