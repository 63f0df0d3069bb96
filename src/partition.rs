//! The `strata partition` pipeline: a graph the user already has, straight to communities.
//!
//! Reads an edge list or a dense `.npy` weight matrix (`graph::read_graph`), optionally keeps
//! only part of its edges by one of the sweep's rules, runs seeded trials of the chosen method in
//! parallel and keeps the best, numbering communities 1..k by decreasing size.

use std::path::PathBuf;

use rayon::prelude::*;
use serde::Serialize;

use crate::communities::{map_equation, modularity, Method, Objective, Partition};
use crate::error::Error;
use crate::graph::{read_graph, EdgeWeights, GraphFile, ParticipantGraph, SweepGraphs, SweepLevel};
use crate::similarity::SimilarityMatrix;

/// Options of one `strata partition` run.
#[derive(Debug, Clone)]
pub struct PartitionOptions {
    /// The graph file.
    pub graph: PathBuf,
    /// The method.
    pub method: Method,
    /// Seeded trials; the best quality is kept.
    pub trials: usize,
    /// Run seed.
    pub seed: u64,
    /// Resolution gamma of modularity (and of the constant Potts model).
    pub resolution: f64,
    /// Keep only part of the edges, by a sweep rule applied to the weights; None keeps all.
    pub keep: Option<SweepLevel>,
    /// Weighted or binary edges.
    pub edge_weights: EdgeWeights,
}

/// What `strata partition` found; serialised as the `--quality-json` file (keys documented in
/// docs/outputs.md).
#[derive(Debug, Clone, Serialize)]
pub struct PartitionOutcome {
    /// strata's version.
    pub strata_version: String,
    /// The graph file.
    pub graph: PathBuf,
    /// Nodes of the graph.
    pub nodes: usize,
    /// Undirected edges used (after `keep`).
    pub edges: usize,
    /// Nodes without any edge (each its own community).
    pub isolated_nodes: usize,
    /// Method name.
    pub method: String,
    /// What the trials were scored by: `codelength`, `modularity` or `cpm`.
    pub objective: Objective,
    /// The best trial's objective value (codelength in bits, or modularity).
    pub quality: f64,
    /// Two-level codelength in bits of the partition (computed for every method).
    pub codelength_bits: f64,
    /// Codelength with all nodes in one module, in bits.
    pub one_level_codelength_bits: f64,
    /// 1 - codelength / one-level codelength.
    pub relative_savings: f64,
    /// Modularity of the partition at the resolution (computed for every method).
    pub modularity: f64,
    /// Resolution gamma used.
    pub resolution: f64,
    /// Communities found (a community may be a single node).
    pub communities: usize,
    /// Community sizes, largest first (community 1 first).
    pub sizes: Vec<usize>,
    /// Trials run.
    pub trials: usize,
    /// Index of the kept trial (0-based).
    pub best_trial: usize,
    /// Objective value of every trial, in trial order.
    pub trial_qualities: Vec<f64>,
    /// Run seed.
    pub seed: u64,
    /// Node names, in output order.
    #[serde(skip)]
    pub names: Vec<String>,
    /// Community of each node (1..k, by decreasing size).
    #[serde(skip)]
    pub membership: Vec<usize>,
}

impl PartitionOutcome {
    /// The `node<TAB>community` lines printed to standard output.
    pub fn lines(&self) -> String {
        let mut text = String::with_capacity(self.names.len() * 8);
        for (name, community) in self.names.iter().zip(&self.membership) {
            text.push_str(name);
            text.push('\t');
            text.push_str(&community.to_string());
            text.push('\n');
        }
        text
    }

    /// The one-line quality report printed to standard error.
    pub fn quality_line(&self) -> String {
        let quality = match self.objective {
            Objective::Codelength => format!(
                "codelength {:.6} bits (one module {:.6} bits, savings {:.2}%)",
                self.codelength_bits,
                self.one_level_codelength_bits,
                100.0 * self.relative_savings
            ),
            Objective::Modularity => {
                format!("modularity {:.6} (resolution {})", self.modularity, self.resolution)
            }
            Objective::Cpm => format!("CPM quality {:.6} (resolution {})", self.quality, self.resolution),
        };
        format!(
            "{}: {} communities of {} nodes, {quality}; best of {} trials (seed {})",
            self.method, self.communities, self.nodes, self.trials, self.seed
        )
    }
}

/// The kept part of a graph under a sweep rule applied to its weights.
fn keep_edges(file: &GraphFile, level: SweepLevel, weights: EdgeWeights) -> ParticipantGraph {
    let n = file.graph.node_count();
    let mut values = ndarray::Array2::<f32>::zeros((n, n));
    for node in 0..n {
        let (targets, edge_weights) = file.graph.neighbours(node);
        for (&target, &weight) in targets.iter().zip(edge_weights) {
            values[[node, target as usize]] = weight as f32;
        }
    }
    let similarity = SimilarityMatrix { values };
    SweepGraphs::new(&similarity, weights).graph(level)
}

/// Runs `strata partition`.
///
/// # Errors
/// The graph file cannot be read or is invalid (`ReadError`).
pub fn partition(options: &PartitionOptions) -> Result<PartitionOutcome, Error> {
    let file = read_graph(&options.graph)?;
    let mut graph = match options.keep {
        Some(level) => keep_edges(&file, level, options.edge_weights),
        None => file.graph.clone(),
    };
    if options.keep.is_none() && options.edge_weights == EdgeWeights::Binary {
        graph.weights.iter_mut().for_each(|weight| *weight = 1.0);
    }
    let method = options.method;
    let prepared = method.prepare(&graph);
    let trials: Vec<(Vec<usize>, f64)> = (0..options.trials as u64)
        .into_par_iter()
        .map(|trial| {
            let mut rng = crate::seed::rng(options.seed, "partition", &[trial]);
            method.run_prepared(&prepared, options.resolution, &mut rng)
        })
        .collect();
    let mut best_trial = 0;
    for (index, (_, quality)) in trials.iter().enumerate() {
        if method.score(*quality) > method.score(trials[best_trial].1) + 1e-12 {
            best_trial = index;
        }
    }
    let labels = &trials[best_trial].0;
    let partition = Partition::from_labels(labels, 1);
    let codelength = map_equation(&graph, labels);
    let communities = partition.community_count();
    Ok(PartitionOutcome {
        strata_version: crate::VERSION.to_string(),
        graph: options.graph.clone(),
        nodes: graph.node_count(),
        edges: graph.edge_count(),
        isolated_nodes: graph.isolated().len(),
        method: method.name().to_string(),
        objective: method.objective(),
        quality: trials[best_trial].1,
        codelength_bits: codelength.codelength,
        one_level_codelength_bits: codelength.one_level,
        relative_savings: codelength.relative_savings(),
        modularity: modularity(&graph, labels, options.resolution),
        resolution: options.resolution,
        communities,
        sizes: (1..=communities).map(|community| partition.size(community)).collect(),
        trials: options.trials,
        best_trial,
        trial_qualities: trials.iter().map(|(_, quality)| *quality).collect(),
        seed: options.seed,
        names: file.names,
        membership: partition.membership,
    })
}
