//! Infomap: the two-level map equation for undirected weighted graphs.
//!
//! Flow is that of a random walker on the undirected graph: a link of weight w carries flow
//! w / D in each direction and a node's flow is its strength over D, where D is the sum of the
//! strengths (a self-loop counted once: it holds the walker on the node and never exits it; this
//! is the flow of the `infomap` package with self-links included). The map equation then prices
//! a partition M by the expected description length of one step of the walk, in bits:
//!
//! L(M) = plogp(q) - 2 sum_i plogp(q_i) - sum_a plogp(p_a) + sum_i plogp(q_i + p_i)
//!
//! with q_i the flow leaving module i, q = sum_i q_i, p_a the flow of node a, p_i the flow of
//! module i and plogp(x) = x log2 x (Rosvall & Bergstrom 2008, PNAS 105:1118, eq. 4).
//! The optimiser is the published one: greedy moves of nodes between modules with repeated
//! aggregation (the core loop), then alternating fine tuning (single nodes moved again from the
//! current modules) and coarse tuning (each module split into sub-modules, which are moved as
//! units) while the codelength keeps falling. As in the `infomap` package, a moving pass
//! evaluates a node again only after one of its neighbours moved (see [`local_moving`]).

use rand::seq::SliceRandom;
use rand::Rng;
use std::borrow::Cow;

use super::louvain::renumber;
use super::plogp::{plogp, plogp_in_place};
use crate::graph::ParticipantGraph;

/// A move must shorten the codelength by more than this many bits to be made (the default
/// minimum improvement of the `infomap` package's core loop, 1e-10 bits).
pub const MIN_IMPROVEMENT: f64 = 1e-10;

/// Local-moving passes per level at most; moves stop earlier once a pass moves nothing.
/// (strata's choice; the optimiser converges within tens of passes on participant graphs.)
const MAX_PASSES: usize = 100;

/// Tuning goes on only while each round shortens the codelength by more than this share of the
/// initial two-level codelength (every node its own module): the infomap package's
/// tune-iteration threshold and its default, 1e-5, with the same rule that coarse tuning is
/// tried at least once.
pub const TUNE_RELATIVE_THRESHOLD: f64 = 1e-5;

/// Alternating fine and coarse tuning rounds at most (strata's choice; they stop earlier once a
/// round no longer shortens the codelength by [`MIN_IMPROVEMENT`]).
const MAX_TUNE_ROUNDS: usize = 20;

/// The parts of the two-level map equation for one partition, in bits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Codelength {
    /// L(M): the two-level codelength.
    pub codelength: f64,
    /// The index codebook's share: q H(Q).
    pub index: f64,
    /// The module codebooks' share: sum_i p_i^o H(P_i).
    pub module: f64,
    /// The codelength with every node in one module: the entropy of the node flows.
    pub one_level: f64,
}

impl Codelength {
    /// Relative codelength savings 1 - L(M) / L(one module); 0 for a graph without flow.
    pub fn relative_savings(&self) -> f64 {
        if self.one_level > 0.0 {
            1.0 - self.codelength / self.one_level
        } else {
            0.0
        }
    }
}

/// The undirected flow network one optimisation level works on: node flows and, per stored
/// direction, the flow on the link; flow that stays inside a node is carried in its flow only.
///
/// The graph of a trial borrows the participant graph's links and scales their weights to flow
/// as it reads them (`w * link_scale`, the same product a precomputed copy would hold), so
/// concurrent trials on one dense graph share its arrays instead of each holding a copy;
/// aggregated and sub-networks own theirs with a scale of 1.
#[derive(Debug, Clone)]
struct FlowGraph<'a> {
    flow: Vec<f64>,
    offsets: Cow<'a, [usize]>,
    targets: Cow<'a, [u32]>,
    link_weights: Cow<'a, [f64]>,
    link_scale: f64,
    /// Flow on the node's links to other nodes (its exit flow when alone in a module).
    out: Vec<f64>,
}

impl<'a> FlowGraph<'a> {
    fn from_graph(graph: &'a ParticipantGraph) -> Self {
        let n = graph.node_count();
        let strength: Vec<f64> = (0..n)
            .map(|node| graph.neighbours(node).1.iter().sum::<f64>() + graph.self_loops[node])
            .collect();
        let total: f64 = strength.iter().sum();
        let scale = if total > 0.0 { 1.0 / total } else { 0.0 };
        let mut flow_graph = FlowGraph {
            flow: strength.iter().map(|&s| s * scale).collect(),
            offsets: Cow::Borrowed(&graph.offsets),
            targets: Cow::Borrowed(&graph.targets),
            link_weights: Cow::Borrowed(&graph.weights),
            link_scale: scale,
            out: Vec::new(),
        };
        flow_graph.out = flow_graph.outflows();
        flow_graph
    }

    fn len(&self) -> usize {
        self.flow.len()
    }

    fn links(&self, node: usize) -> impl Iterator<Item = (usize, f64)> + '_ {
        let range = self.offsets[node]..self.offsets[node + 1];
        let scale = self.link_scale;
        self.targets[range.clone()]
            .iter()
            .map(|&t| t as usize)
            .zip(self.link_weights[range].iter().map(move |&w| w * scale))
    }

    fn outflows(&self) -> Vec<f64> {
        (0..self.len()).map(|node| self.links(node).map(|(_, f)| f).sum()).collect()
    }

    /// The graph of modules: `labels` 0..count per node; links inside a module disappear (their
    /// flow stays in the module's node flow).
    ///
    /// Each module's row is summed in a dense scratch row, visiting its nodes in ascending order
    /// and their links in stored order, and written out with targets ascending: every link flow
    /// is the same sum, in the same order, as a per-module ordered map would give, in O(n + E)
    /// plus the sorting of each row's distinct targets.
    fn aggregate(&self, labels: &[usize], count: usize) -> FlowGraph<'static> {
        let n = self.len();
        // Nodes grouped by module, ascending inside each (a counting sort).
        let mut starts = vec![0usize; count + 1];
        for &label in labels {
            starts[label + 1] += 1;
        }
        for module in 0..count {
            starts[module + 1] += starts[module];
        }
        let mut cursor = starts.clone();
        let mut grouped = vec![0usize; n];
        for (node, &label) in labels.iter().enumerate() {
            grouped[cursor[label]] = node;
            cursor[label] += 1;
        }
        let mut flow = vec![0.0; count];
        let mut row = vec![0.0f64; count];
        let mut seen = vec![false; count];
        let mut touched: Vec<usize> = Vec::new();
        let mut offsets = vec![0usize; count + 1];
        let mut out = vec![0.0; count];
        let mut targets = Vec::new();
        let mut link_flow = Vec::new();
        for a in 0..count {
            for &node in &grouped[starts[a]..starts[a + 1]] {
                flow[a] += self.flow[node];
                for (target, f) in self.links(node) {
                    let b = labels[target];
                    if a != b {
                        if !seen[b] {
                            seen[b] = true;
                            touched.push(b);
                        }
                        row[b] += f;
                    }
                }
            }
            touched.sort_unstable();
            // The out-flow sums the row in stored order, as `outflows` would.
            let mut row_out = 0.0;
            for &b in &touched {
                targets.push(b as u32);
                link_flow.push(row[b]);
                row_out += row[b];
                row[b] = 0.0;
                seen[b] = false;
            }
            out[a] = row_out;
            touched.clear();
            offsets[a + 1] = targets.len();
        }
        FlowGraph {
            flow,
            offsets: Cow::Owned(offsets),
            targets: Cow::Owned(targets),
            link_weights: Cow::Owned(link_flow),
            link_scale: 1.0,
            out,
        }
    }

    /// The sub-network of the nodes in `members` (sorted), with their flows and the links among
    /// them only. `local` is scratch of one entry per node of this network, all `u32::MAX` on
    /// entry and on return.
    fn subgraph(&self, members: &[usize], local: &mut [u32]) -> FlowGraph<'static> {
        for (index, &node) in members.iter().enumerate() {
            local[node] = index as u32;
        }
        let mut offsets = vec![0usize; members.len() + 1];
        let mut out = vec![0.0; members.len()];
        // At most every link of the members stays inside.
        let capacity: usize = members.iter().map(|&node| self.offsets[node + 1] - self.offsets[node]).sum();
        let mut targets = Vec::with_capacity(capacity);
        let mut link_flow = Vec::with_capacity(capacity);
        for (index, &node) in members.iter().enumerate() {
            // The out-flow sums the kept links in stored order, as `outflows` would.
            let mut node_out = 0.0;
            for (target, f) in self.links(node) {
                let t = local[target];
                if t != u32::MAX {
                    targets.push(t);
                    link_flow.push(f);
                    node_out += f;
                }
            }
            out[index] = node_out;
            offsets[index + 1] = targets.len();
        }
        for &node in members {
            local[node] = u32::MAX;
        }
        FlowGraph {
            flow: members.iter().map(|&node| self.flow[node]).collect(),
            offsets: Cow::Owned(offsets),
            targets: Cow::Owned(targets),
            link_weights: Cow::Owned(link_flow),
            link_scale: 1.0,
            out,
        }
    }

    /// The two-level codelength with every node its own module, in bits (each node's exit flow
    /// is its out-flow, so no pass over the links is needed).
    fn singleton_codelength(&self) -> f64 {
        let total_exit: f64 = self.out.iter().sum();
        plogp(total_exit) - 2.0 * self.out.iter().map(|&q| plogp(q)).sum::<f64>()
            + self.out.iter().zip(&self.flow).map(|(&q, &p)| plogp(q + p)).sum::<f64>()
            - self.flow.iter().map(|&p| plogp(p)).sum::<f64>()
    }

    /// Exit flow and flow of each module of `labels` (labels below the node count).
    fn module_totals(&self, labels: &[usize]) -> (Vec<f64>, Vec<f64>) {
        let count = labels.iter().copied().max().map_or(0, |max| max + 1);
        let mut exit = vec![0.0; count];
        let mut flow = vec![0.0; count];
        for node in 0..self.len() {
            let m = labels[node];
            flow[m] += self.flow[node];
            for (target, f) in self.links(node) {
                if labels[target] != m {
                    exit[m] += f;
                }
            }
        }
        (exit, flow)
    }

    /// Codelength of `labels` on this network, up to the constant node-entropy term, with the
    /// module totals it was computed from.
    fn module_terms(&self, labels: &[usize]) -> (f64, ModuleTotals) {
        let (exit, flow) = self.module_totals(labels);
        let total_exit: f64 = exit.iter().sum();
        let terms = plogp(total_exit) - 2.0 * exit.iter().map(|&q| plogp(q)).sum::<f64>()
            + exit.iter().zip(&flow).map(|(&q, &p)| plogp(q + p)).sum::<f64>();
        (terms, ModuleTotals { exit, flow })
    }
}

/// Exit flow and flow per module of a partition.
struct ModuleTotals {
    exit: Vec<f64>,
    flow: Vec<f64>,
}

/// Module totals during local moving, with the sums the map equation needs.
struct Modules {
    exit: Vec<f64>,
    flow: Vec<f64>,
    members: Vec<usize>,
    total_exit: f64,
    /// plogp(exit[m]), kept with `exit`: the move delta reads it for every candidate.
    plogp_exit: Vec<f64>,
    /// plogp(exit[m] + flow[m]), kept with `exit` and `flow`.
    plogp_exit_flow: Vec<f64>,
    /// plogp(total_exit).
    plogp_total_exit: f64,
}

impl Modules {
    /// The totals of `labels` (values below `count`) on `graph`; `known`, when given, holds the
    /// exit and flow per module that [`FlowGraph::module_totals`] computed for the same labels,
    /// and takes the place of the pass over the links (the same sums in the same order).
    fn new(graph: &FlowGraph, labels: &[usize], count: usize, known: Option<&ModuleTotals>) -> Self {
        let mut modules = Modules {
            exit: vec![0.0; count],
            flow: vec![0.0; count],
            members: vec![0; count],
            total_exit: 0.0,
            plogp_exit: Vec::new(),
            plogp_exit_flow: Vec::new(),
            plogp_total_exit: 0.0,
        };
        if let Some(known) = known {
            modules.exit[..known.exit.len()].copy_from_slice(&known.exit);
            modules.flow[..known.flow.len()].copy_from_slice(&known.flow);
            for &m in labels {
                modules.members[m] += 1;
            }
        } else {
            let singletons = count == graph.len() && labels.iter().enumerate().all(|(node, &m)| m == node);
            for node in 0..graph.len() {
                let m = labels[node];
                modules.flow[m] += graph.flow[node];
                modules.members[m] += 1;
                if singletons {
                    // Every link leaves the node's own module: the exit is the out-flow, summed
                    // in the same order.
                    modules.exit[m] = graph.out[node];
                    continue;
                }
                for (target, f) in graph.links(node) {
                    if labels[target] != m {
                        modules.exit[m] += f;
                    }
                }
            }
        }
        modules.total_exit = modules.exit.iter().sum();
        modules.plogp_exit = modules.exit.iter().map(|&q| plogp(q)).collect();
        modules.plogp_exit_flow =
            modules.exit.iter().zip(&modules.flow).map(|(&q, &p)| plogp(q + p)).collect();
        modules.plogp_total_exit = plogp(modules.total_exit);
        modules
    }

    /// Refreshes the cached plogp terms of module `m` and of the total exit.
    fn refresh(&mut self, m: usize) {
        self.plogp_exit[m] = plogp(self.exit[m]);
        self.plogp_exit_flow[m] = plogp(self.exit[m] + self.flow[m]);
        self.plogp_total_exit = plogp(self.total_exit);
    }

    /// The terms of a move out of `old` that do not depend on the target module: the new exit of
    /// `old`, plogp of it, and plogp of it plus the flow `old` keeps.
    fn leaving(&self, old: usize, p: f64, out: f64, to_old: f64) -> (f64, f64, f64) {
        let exit_old = self.exit[old] - out + 2.0 * to_old;
        (exit_old, plogp(exit_old), plogp(exit_old + self.flow[old] - p))
    }

    /// Change of codelength when a node of flow `p` and out-flow `out` moves from `old` to each
    /// module of `candidates`, having link flow `to_new[i]` to candidate i; `leaving` is
    /// [`Modules::leaving`] of the move (its terms are the same for every candidate). Fills
    /// `deltas` (one per candidate) with the map equation's difference term by term, in a fixed
    /// order, with the unchanged modules' plogp terms read from the cache; the three new plogp
    /// terms of each candidate are computed together in `scratch`, several at a time.
    #[allow(clippy::too_many_arguments)]
    fn deltas(
        &self,
        old: usize,
        candidates: &[usize],
        to_new: &[f64],
        p: f64,
        out: f64,
        leaving: (f64, f64, f64),
        scratch: &mut Vec<f64>,
        deltas: &mut Vec<f64>,
    ) {
        let (exit_old, plogp_exit_old, plogp_exit_flow_old) = leaving;
        let count = candidates.len();
        scratch.clear();
        scratch.resize(3 * count, 0.0);
        let (totals, rest) = scratch.split_at_mut(count);
        let (exits, exit_flows) = rest.split_at_mut(count);
        for (i, (&new, &to)) in candidates.iter().zip(to_new).enumerate() {
            let exit_new = self.exit[new] + out - 2.0 * to;
            totals[i] = self.total_exit - self.exit[old] - self.exit[new] + exit_old + exit_new;
            exits[i] = exit_new;
            exit_flows[i] = exit_new + self.flow[new] + p;
        }
        plogp_in_place(scratch);
        let (totals, rest) = scratch.split_at(count);
        let (exits, exit_flows) = rest.split_at(count);
        deltas.clear();
        deltas.extend(candidates.iter().enumerate().map(|(i, &new)| {
            totals[i]
                - self.plogp_total_exit
                - 2.0 * (plogp_exit_old + exits[i] - self.plogp_exit[old] - self.plogp_exit[new])
                + plogp_exit_flow_old
                + exit_flows[i]
                - self.plogp_exit_flow[old]
                - self.plogp_exit_flow[new]
        }));
    }
}

/// Scratch for the flow from one node to each module its links reach.
struct NeighbourFlow {
    /// Link flow per module; zero between nodes.
    to_module: Vec<f64>,
    /// The visit at which each module was last reached; `visit` marks the current node's.
    stamp: Vec<u32>,
    visit: u32,
    /// Modules reached by the current node, in order of first link; one spare slot.
    reached: Vec<usize>,
}

impl NeighbourFlow {
    fn new(module_count: usize) -> Self {
        NeighbourFlow {
            to_module: vec![0.0; module_count],
            stamp: vec![u32::MAX; module_count],
            visit: 0,
            reached: vec![0; module_count + 1],
        }
    }

    /// The link flow from `node` to each module its links reach, in order of first link:
    /// modules other than `old` go to `candidates` with their flows in `to_new`; returns the
    /// flow to `old`: 0 when no link reaches it, otherwise the node's out-flow less the flow to
    /// the other modules (the same sum up to rounding). Over the links to other modules the
    /// loop is branch-free: each writes its module into the next slot of `reached`, which
    /// advances only at a module's first link.
    fn gather(
        &mut self,
        graph: &FlowGraph,
        node: usize,
        labels: &[usize],
        old: usize,
        candidates: &mut Vec<usize>,
        to_new: &mut Vec<f64>,
    ) -> f64 {
        if self.visit == u32::MAX - 1 {
            self.stamp.fill(u32::MAX);
            self.visit = 0;
        }
        self.visit += 1;
        let visit = self.visit;
        let mut count = 0;
        let range = graph.offsets[node]..graph.offsets[node + 1];
        let scale = graph.link_scale;
        let links = graph.targets[range.clone()].iter().zip(&graph.link_weights[range]);
        let mut reaches_old = false;
        for (&target, &weight) in links {
            let m = labels[target as usize];
            if m == old {
                // Most links of a settled node stay in its module: their flow is the
                // out-flow less the flow to other modules, so they are only noted here.
                reaches_old = true;
                continue;
            }
            self.reached[count] = m;
            count += usize::from(self.stamp[m] != visit);
            self.stamp[m] = visit;
            self.to_module[m] += weight * scale;
        }
        candidates.clear();
        to_new.clear();
        let mut elsewhere = 0.0;
        for &m in &self.reached[..count] {
            let flow = std::mem::take(&mut self.to_module[m]);
            candidates.push(m);
            to_new.push(flow);
            elsewhere += flow;
        }
        if reaches_old {
            graph.out[node] - elsewhere
        } else {
            0.0
        }
    }
}

/// Greedy local moving from `labels` (module per node, values < node count). Returns whether any
/// node moved.
///
/// As in the `infomap` package's local moving (version 2, its `InfomapOptimizer`), a node is
/// evaluated only while it is dirty: at the start, and again after a neighbour moved; it turns
/// clean once evaluated without moving.
fn local_moving<R: Rng>(
    graph: &FlowGraph,
    labels: &mut [usize],
    known: Option<&ModuleTotals>,
    rng: &mut R,
) -> bool {
    let n = graph.len();
    let mut modules = Modules::new(graph, labels, n, known);
    let mut empty: Vec<usize> = (0..n).filter(|&m| modules.members[m] == 0).collect();
    let mut order: Vec<usize> = (0..n).collect();
    let mut neighbours = NeighbourFlow::new(n);
    let (mut candidates, mut to_new) = (Vec::<usize>::new(), Vec::<f64>::new());
    let (mut scratch, mut deltas) = (Vec::<f64>::new(), Vec::<f64>::new());
    let mut moved_any = false;
    let mut dirty = vec![true; n];
    for _ in 0..MAX_PASSES {
        order.shuffle(rng);
        let mut moved = false;
        for &node in &order {
            if !dirty[node] {
                continue;
            }
            let old = labels[node];
            let p = graph.flow[node];
            let out = graph.out[node];
            if out <= 0.0 {
                continue;
            }
            let to_old = neighbours.gather(graph, node, labels, old, &mut candidates, &mut to_new);
            let leaving = modules.leaving(old, p, out, to_old);
            if modules.members[old] > 1 {
                if let Some(&fresh) = empty.last() {
                    candidates.push(fresh);
                    to_new.push(0.0);
                }
            }
            modules.deltas(old, &candidates, &to_new, p, out, leaving, &mut scratch, &mut deltas);
            // The first candidate that beats the best so far by more than the minimum improvement.
            let mut chosen: Option<usize> = None;
            let mut best_delta = 0.0f64;
            for (i, &delta) in deltas.iter().enumerate() {
                if delta < best_delta - MIN_IMPROVEMENT {
                    chosen = Some(i);
                    best_delta = delta;
                }
            }
            let best = match chosen {
                Some(i) => {
                    let new = candidates[i];
                    let exit_new = modules.exit[new] + out - 2.0 * to_new[i];
                    (new, best_delta, leaving.0, exit_new)
                }
                None => (old, 0.0, 0.0, 0.0),
            };
            let (new, _, exit_old, exit_new) = best;
            if new != old {
                if empty.last() == Some(&new) {
                    empty.pop();
                }
                modules.total_exit += exit_old + exit_new - modules.exit[old] - modules.exit[new];
                modules.exit[old] = exit_old;
                modules.exit[new] = exit_new;
                modules.flow[old] -= p;
                modules.flow[new] += p;
                modules.members[old] -= 1;
                modules.members[new] += 1;
                if modules.members[old] == 0 {
                    modules.exit[old] = 0.0;
                    empty.push(old);
                }
                modules.refresh(old);
                modules.refresh(new);
                labels[node] = new;
                moved = true;
                moved_any = true;
                for &target in &graph.targets[graph.offsets[node]..graph.offsets[node + 1]] {
                    dirty[target as usize] = true;
                }
            } else {
                dirty[node] = false;
            }
        }
        if !moved {
            break;
        }
    }
    moved_any
}

/// The core loop: local moving from `initial` (or singletons), then aggregation and moving of
/// modules until a level moves nothing. `known`: the module totals of `initial` (labels in order
/// of first appearance) when the caller has them. Returns a module label per node of `graph`.
fn core<R: Rng>(
    graph: &FlowGraph,
    initial: Option<&[usize]>,
    known: Option<&ModuleTotals>,
    rng: &mut R,
) -> Vec<usize> {
    let n = graph.len();
    let mut membership: Vec<usize> = match initial {
        Some(labels) => renumber(labels).0,
        None => (0..n).collect(),
    };
    // The first level is the caller's network itself; aggregated levels are owned here.
    let mut aggregated: Option<FlowGraph<'static>> = None;
    let mut level_labels = membership.clone();
    loop {
        let level = aggregated.as_ref().unwrap_or(graph);
        let first_known = if aggregated.is_none() { known } else { None };
        let moved = local_moving(level, &mut level_labels, first_known, rng);
        let (local, count) = renumber(&level_labels);
        let first_level = level.len() == n;
        if first_level {
            membership = local.clone();
        } else {
            for label in membership.iter_mut() {
                *label = local[*label];
            }
        }
        if (!moved && !first_level) || count == level.len() || count <= 1 {
            break;
        }
        aggregated = Some(level.aggregate(&local, count));
        level_labels = (0..count).collect();
    }
    renumber(&membership).0
}

/// Coarse tuning: every module split into sub-modules by the core loop on its own sub-network;
/// sub-modules then start in their module and move as units.
fn coarse_tune<R: Rng>(graph: &FlowGraph, labels: &[usize], rng: &mut R) -> Vec<usize> {
    let (labels, count) = renumber(labels);
    let mut members: Vec<Vec<usize>> = vec![Vec::new(); count];
    for (node, &label) in labels.iter().enumerate() {
        members[label].push(node);
    }
    let mut submodule = vec![0usize; graph.len()];
    let mut parent = Vec::new();
    let mut local = vec![u32::MAX; graph.len()];
    for (module, nodes) in members.iter().enumerate() {
        let sub = graph.subgraph(nodes, &mut local);
        let sub_labels = core(&sub, None, None, rng);
        let offset = parent.len();
        let sub_count = sub_labels.iter().copied().max().map_or(0, |max| max + 1);
        for (index, &node) in nodes.iter().enumerate() {
            submodule[node] = offset + sub_labels[index];
        }
        parent.extend(std::iter::repeat_n(module, sub_count));
    }
    let coarse = graph.aggregate(&submodule, parent.len());
    let moved = core(&coarse, Some(&parent), None, rng);
    submodule.iter().map(|&s| moved[s]).collect()
}

/// Infomap community detection (one seeded trial) with the two-level map equation.
///
/// The core loop (greedy moves that shorten the codelength, then aggregation of modules into
/// nodes, repeated while modules merge) followed by alternating fine and coarse tuning while a
/// round shortens the codelength by more than `MIN_IMPROVEMENT` (1e-10) bits.
///
/// # Arguments
/// * `graph`: weighted undirected graph with non-negative weights; self-loops add to a node's
///   flow.
/// * `rng`: the trial's generator (node orders).
///
/// # Returns
/// Module label per node, 0..k in order of first appearance; nodes without links are singletons.
///
/// # Complexity
/// O(E) per local-moving pass; a few passes, levels and tuning rounds in practice.
///
/// # References
/// Rosvall & Bergstrom 2008, PNAS 105:1118 (map equation, core algorithm, fine and coarse
/// tuning in its supplementary material).
pub fn infomap<R: Rng>(graph: &ParticipantGraph, rng: &mut R) -> Vec<usize> {
    optimise(&FlowGraph::from_graph(graph), rng).0
}

/// The flow network of a participant graph, computed once and shared by every trial on it
/// (the node flows and out-flows take two passes over the links).
#[derive(Debug, Clone)]
pub struct FlowNetwork<'a> {
    flow: FlowGraph<'a>,
}

impl<'a> FlowNetwork<'a> {
    /// The flow network of `graph` (flow as in this module's documentation).
    pub fn new(graph: &'a ParticipantGraph) -> Self {
        FlowNetwork { flow: FlowGraph::from_graph(graph) }
    }

    /// [`map_equation`] of `membership` on this network's graph, without building its flow again.
    pub fn codelength(&self, membership: &[usize]) -> Codelength {
        codelength_of(&self.flow, membership)
    }
}

/// One seeded [`infomap`] trial on a shared flow network: the module labels and their
/// two-level codelength, equal to [`map_equation`] of the labels on the same graph.
pub fn infomap_trial<R: Rng>(network: &FlowNetwork, rng: &mut R) -> (Vec<usize>, f64) {
    let (labels, totals) = optimise(&network.flow, rng);
    let codelength = codelength_from(&network.flow, &totals).codelength;
    (labels, codelength)
}

/// The optimiser of [`infomap`]: module labels (in order of first appearance) and their module
/// totals.
fn optimise<R: Rng>(flow: &FlowGraph, rng: &mut R) -> (Vec<usize>, ModuleTotals) {
    let n = flow.len();
    if flow.flow.iter().all(|&p| p <= 0.0) {
        let labels: Vec<usize> = (0..n).collect();
        let (exit, module_flow) = flow.module_totals(&labels);
        return (labels, ModuleTotals { exit, flow: module_flow });
    }
    // A tuning round continues the tuning only if it shortens the codelength by more than
    // TUNE_RELATIVE_THRESHOLD of the initial (one node per module) two-level codelength.
    let tune_threshold = MIN_IMPROVEMENT.max(TUNE_RELATIVE_THRESHOLD * flow.singleton_codelength());
    // Labels are kept in order of first appearance, so the totals of the partition kept are
    // those `map_equation` computes for it.
    let mut labels = core(flow, None, None, rng);
    let (mut length, mut totals) = flow.module_terms(&labels);
    for round in 0..MAX_TUNE_ROUNDS {
        let candidate = if round % 2 == 0 {
            core(flow, Some(&labels), Some(&totals), rng)
        } else {
            renumber(&coarse_tune(flow, &labels, rng)).0
        };
        // A round that returned the partition it started from gained nothing; its totals are
        // not summed again.
        let gain = if candidate == labels {
            0.0
        } else {
            let (candidate_length, candidate_totals) = flow.module_terms(&candidate);
            let gain = length - candidate_length;
            if gain > MIN_IMPROVEMENT {
                labels = candidate;
                length = candidate_length;
                totals = candidate_totals;
            }
            gain
        };
        // Stop once a round gained too little, but only after coarse tuning has been tried.
        if gain <= tune_threshold && round > 0 {
            break;
        }
    }
    (labels, totals)
}

/// The two-level map equation of a partition.
///
/// # Arguments
/// * `graph`: the graph (flow as in this module's documentation).
/// * `membership`: module label per node (any integers below the node count or not).
///
/// # Returns
/// The codelength and its parts in bits; all zero for a graph without edges.
///
/// # Complexity
/// O(n + E).
///
/// # References
/// Rosvall & Bergstrom 2008, PNAS 105:1118, eq. 4.
pub fn map_equation(graph: &ParticipantGraph, membership: &[usize]) -> Codelength {
    codelength_of(&FlowGraph::from_graph(graph), membership)
}

/// [`map_equation`] on a flow network already built.
fn codelength_of(flow: &FlowGraph, membership: &[usize]) -> Codelength {
    let labels = renumber(membership).0;
    let (exit, module_flow) = flow.module_totals(&labels);
    codelength_from(flow, &ModuleTotals { exit, flow: module_flow })
}

/// The map equation's parts from a partition's module totals (modules in order of first
/// appearance).
fn codelength_from(flow: &FlowGraph, totals: &ModuleTotals) -> Codelength {
    let ModuleTotals { exit, flow: module_flow } = totals;
    let node_entropy = -flow.flow.iter().map(|&p| plogp(p)).sum::<f64>();
    let total_exit: f64 = exit.iter().sum();
    let index = plogp(total_exit) - exit.iter().map(|&q| plogp(q)).sum::<f64>();
    let module = exit.iter().zip(module_flow).map(|(&q, &p)| plogp(q + p)).sum::<f64>()
        - exit.iter().map(|&q| plogp(q)).sum::<f64>()
        + node_entropy;
    Codelength { codelength: index + module, index, module, one_level: node_entropy }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    fn two_triangles() -> ParticipantGraph {
        let edges =
            [(0, 1, 1.0), (1, 2, 1.0), (0, 2, 1.0), (2, 3, 1.0), (3, 4, 1.0), (4, 5, 1.0), (3, 5, 1.0)];
        ParticipantGraph::from_edges(6, &edges)
    }

    #[test]
    fn two_triangles_split_with_package_codelength() {
        // infomap 2.16.0 (PyPI), two-level, on this graph: 2.3207303568337894 bits, one-level
        // 2.556656707462823 bits, modules {0,1,2} and {3,4,5} (run by hand when writing this test).
        let graph = two_triangles();
        let labels = infomap(&graph, &mut rand_chacha::ChaCha8Rng::seed_from_u64(1));
        assert_eq!(labels, vec![0, 0, 0, 1, 1, 1]);
        let length = map_equation(&graph, &labels);
        assert!((length.codelength - 2.3207303568337894).abs() < 1e-12, "{length:?}");
        assert!((length.one_level - 2.556656707462823).abs() < 1e-12, "{length:?}");
        let one = map_equation(&graph, &[0; 6]);
        assert!((one.codelength - one.one_level).abs() < 1e-12);
        assert!(
            (FlowGraph::from_graph(&graph).module_terms(&labels).0 + length.one_level - length.codelength)
                .abs()
                < 1e-12
        );
    }

    #[test]
    fn self_loop_adds_to_node_flow() {
        // infomap 2.16.0 (PyPI) with a self-link of weight 2 on node 0 of the two triangles:
        // 2.231844121534167 bits, one-level 2.5306390622295662 bits (run by hand).
        let mut edges =
            vec![(0, 1, 1.0), (1, 2, 1.0), (0, 2, 1.0), (2, 3, 1.0), (3, 4, 1.0), (4, 5, 1.0), (3, 5, 1.0)];
        edges.push((0, 0, 2.0));
        let graph = ParticipantGraph::from_edges(6, &edges);
        let length = map_equation(&graph, &[0, 0, 0, 1, 1, 1]);
        assert!((length.codelength - 2.231844121534167).abs() < 1e-12, "{length:?}");
        assert!((length.one_level - 2.5306390622295662).abs() < 1e-12, "{length:?}");
    }

    #[test]
    fn no_edges_gives_singletons() {
        let graph = ParticipantGraph::from_edges(4, &[]);
        assert_eq!(infomap(&graph, &mut rand_chacha::ChaCha8Rng::seed_from_u64(1)), vec![0, 1, 2, 3]);
        assert_eq!(map_equation(&graph, &[0, 1, 2, 3]).codelength, 0.0);
    }
}
