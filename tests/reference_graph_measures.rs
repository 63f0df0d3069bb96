//! Graph measures against networkx, published formulas and common-practice examples.
//!
//! Reference data: tests/data/graph_measures_reference.json, made by
//! tests/data/generators/graph_measures.py with networkx 3.6.1 and numpy 2.4.6. Tolerances:
//! 1e-12 for integer counts and their ratios (binary clustering, transitivity, hop path length)
//! and sums of integer weights; 1e-9 where rounding order differs (cube roots, reciprocals,
//! Dijkstra sums, module roles).

use rand::Rng;
use serde_json::Value;
use strata::graph::measures::{graph_measures, node_measures, GraphMeasures, LabelZero, SmallWorld};
use strata::graph::ParticipantGraph;

const EXACT: f64 = 1e-12;
const ROUNDED: f64 = 1e-9;

fn reference() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/graph_measures_reference.json"
    ))
    .expect("tests/data/graph_measures_reference.json (made by tests/data/generators/graph_measures.py)");
    serde_json::from_str(&text).unwrap()
}

fn graph(edges: &Value, nodes: usize, weighted: bool) -> ParticipantGraph {
    let edges: Vec<(usize, usize, f64)> = edges
        .as_array()
        .unwrap()
        .iter()
        .map(|edge| {
            let weight = if weighted { edge[2].as_f64().unwrap() } else { 1.0 };
            (edge[0].as_u64().unwrap() as usize, edge[1].as_u64().unwrap() as usize, weight)
        })
        .collect();
    ParticipantGraph::from_edges(nodes, &edges)
}

/// Reference numbers, null read as NaN.
fn numbers(value: &Value) -> Vec<f64> {
    value.as_array().unwrap().iter().map(|v| v.as_f64().unwrap_or(f64::NAN)).collect()
}

fn assert_close(actual: f64, expected: f64, tolerance: f64, what: &str) {
    if expected.is_nan() {
        assert!(actual.is_nan(), "{what}: strata {actual}, reference NaN");
    } else {
        assert!((actual - expected).abs() <= tolerance, "{what}: strata {actual}, reference {expected}");
    }
}

fn assert_all_close(actual: &[f64], expected: &[f64], tolerance: f64, what: &str) {
    assert_eq!(actual.len(), expected.len(), "{what}: lengths");
    for (node, (&a, &e)) in actual.iter().zip(expected).enumerate() {
        assert_close(a, e, tolerance, &format!("{what}, node {node}"));
    }
}

/// Checks node and whole-graph measures of `graph` against one block of the reference file.
fn check_against_networkx(graph: &ParticipantGraph, expected: &Value, name: &str) {
    let nodes = node_measures(graph, &vec![1; graph.node_count()], LabelZero::Module);
    let degree: Vec<usize> =
        expected["degree"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
    // networkx 3.6.1 Graph.degree() and degree(weight="weight").
    assert_eq!(nodes.degree, degree, "{name}: degree");
    assert_all_close(&nodes.strength, &numbers(&expected["strength"]), EXACT, &format!("{name}: strength"));
    // networkx 3.6.1 clustering(G) and clustering(G, weight="weight") (Onnela et al. 2005).
    assert_all_close(
        &nodes.clustering,
        &numbers(&expected["clustering"]),
        EXACT,
        &format!("{name}: clustering"),
    );
    assert_all_close(
        &nodes.clustering_weighted,
        &numbers(&expected["clustering_weighted"]),
        ROUNDED,
        &format!("{name}: weighted clustering"),
    );

    let whole = graph_measures(graph, 0, 1);
    let value = |key: &str| expected[key].as_f64().unwrap();
    // networkx 3.6.1 average_clustering (count_zeros=True), with and without weight.
    assert_close(
        whole.mean_clustering,
        value("mean_clustering"),
        EXACT,
        &format!("{name}: average_clustering"),
    );
    assert_close(
        whole.mean_clustering_weighted,
        value("mean_clustering_weighted"),
        ROUNDED,
        &format!("{name}: weighted average_clustering"),
    );
    // networkx 3.6.1 transitivity.
    assert_close(whole.transitivity, value("transitivity"), EXACT, &format!("{name}: transitivity"));
    // networkx 3.6.1 average_shortest_path_length (karate), or the mean over connected pairs of
    // all_pairs_shortest_path_length (disconnected graph), hops and weight="length" = 1 / w.
    assert_close(whole.path_length, value("path_length"), EXACT, &format!("{name}: path length"));
    assert_close(
        whole.path_length_weighted,
        value("path_length_weighted"),
        ROUNDED,
        &format!("{name}: weighted path length"),
    );
    // networkx 3.6.1 global_efficiency; weighted: from all_pairs_dijkstra_path_length, 1 / w.
    assert_close(whole.efficiency, value("efficiency"), ROUNDED, &format!("{name}: global_efficiency"));
    assert_close(
        whole.efficiency_weighted,
        value("efficiency_weighted"),
        ROUNDED,
        &format!("{name}: weighted efficiency"),
    );
    assert_eq!(whole.small_world, None, "no random graphs asked for");
}

#[test]
fn karate_measures_match_networkx() {
    let reference = reference();
    let karate = graph(&reference["karate_edges"], 34, true);
    assert_eq!(karate.edge_count(), 78, "Zachary 1977: 78 edges");
    check_against_networkx(&karate, &reference["karate"], "karate");
}

#[test]
fn disconnected_graph_measures_match_networkx() {
    let reference = reference();
    let nodes = reference["disconnected_node_count"].as_u64().unwrap() as usize;
    let disconnected = graph(&reference["disconnected_edges"], nodes, true);
    check_against_networkx(&disconnected, &reference["disconnected"], "disconnected");
}

#[test]
fn participation_and_within_module_z_match_the_published_formulas() {
    // Guimerà & Amaral 2005 (Nature 433:895) written out independently in numpy by
    // tests/data/generators/graph_measures.py: karate club factions as modules, binary and
    // weighted, and with nodes 0, 8 and 33 unassigned (NaN positions must match).
    let reference = reference();
    for case in reference["karate_modules"].as_array().unwrap() {
        let name = case["case"].as_str().unwrap();
        let karate = graph(&reference["karate_edges"], 34, case["weighted"].as_bool().unwrap());
        let labels: Vec<usize> =
            case["labels"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
        let label_zero = if case["zero_unassigned"].as_bool().unwrap() {
            LabelZero::Unassigned
        } else {
            LabelZero::Module
        };
        let nodes = node_measures(&karate, &labels, label_zero);
        assert_all_close(
            &nodes.participation,
            &numbers(&case["participation"]),
            ROUNDED,
            &format!("{name}: participation"),
        );
        assert_all_close(
            &nodes.within_module_z,
            &numbers(&case["within_module_z"]),
            ROUNDED,
            &format!("{name}: within-module z"),
        );
    }
}

#[test]
fn node_with_two_of_three_neighbour_links_has_clustering_two_thirds() {
    // Common-practice teaching example: node 0 has neighbours 1, 2, 3, and two of the three
    // possible links among them (1-2, 2-3) exist, so c_0 = 2/3.
    let edges = [(0, 1, 1.0), (0, 2, 1.0), (0, 3, 1.0), (1, 2, 1.0), (2, 3, 1.0)];
    let graph = ParticipantGraph::from_edges(4, &edges);
    let nodes = node_measures(&graph, &[0; 4], LabelZero::Module);
    assert_close(nodes.clustering[0], 2.0 / 3.0, EXACT, "teaching example c_0");
}

/// Ring lattice of `node_count` nodes, each linked to its `reach` nearest neighbours each side.
fn ring_lattice(node_count: usize, reach: usize) -> Vec<(usize, usize, f64)> {
    (0..node_count).flat_map(|i| (1..=reach).map(move |step| (i, (i + step) % node_count, 1.0))).collect()
}

#[test]
fn ring_lattice_clustering_matches_watts_strogatz() {
    // Watts & Strogatz 1998 (Nature 393:440): a ring lattice with K neighbours per node has
    // C = 3(K - 2) / (4(K - 1)); K = 4 gives 0.5 at every node.
    const K: f64 = 4.0;
    let expected = 3.0 * (K - 2.0) / (4.0 * (K - 1.0));
    let graph = ParticipantGraph::from_edges(20, &ring_lattice(20, 2));
    let nodes = node_measures(&graph, &[0; 20], LabelZero::Module);
    assert_all_close(&nodes.clustering, &[expected; 20], EXACT, "ring lattice clustering");
    assert_close(graph_measures(&graph, 0, 1).mean_clustering, expected, EXACT, "ring lattice mean");
}

/// A 200-node ring lattice (K = 4) with 10 long shortcuts, in the spirit of Watts & Strogatz.
fn lattice_with_shortcuts() -> ParticipantGraph {
    let mut edges = ring_lattice(200, 2);
    edges.extend((0..200).step_by(20).map(|i| (i, (i + 93) % 200, 1.0)));
    ParticipantGraph::from_edges(200, &edges)
}

fn small_world(measures: &GraphMeasures) -> &SmallWorld {
    measures.small_world.as_ref().expect("random graphs were asked for")
}

#[test]
fn small_world_index_exceeds_one_on_a_lattice_with_shortcuts() {
    // Humphries & Gurney 2008 (PLoS ONE 3:e0002051): sigma > 1 marks a small world. A lattice
    // with a few shortcuts keeps most of its clustering (0.5 with K = 4) against ~K/n = 0.02 in
    // random graphs, while its path length is only a few times the random one.
    let measures = graph_measures(&lattice_with_shortcuts(), 10, 7);
    let sw = small_world(&measures);
    assert!(
        sw.sigma > 1.0,
        "sigma {} (C_rand {}, L_rand {})",
        sw.sigma,
        sw.random_clustering,
        sw.random_path_length
    );
    assert_eq!(sw.random_graphs, 10);
    assert_eq!(sw.swaps, 10 * strata::graph::measures::SWAPS_PER_EDGE * 410, "every swap found room");
}

#[test]
fn small_world_index_is_near_one_on_a_random_graph() {
    // A G(n, p) graph is its own degree-matched random reference, so sigma is about 1. With
    // n = 300 and mean degree 10 it has ~170 triangles, a relative sampling sd of ~8% in C;
    // the bounds allow more than 3 sd.
    const NODES: usize = 300;
    const MEAN_DEGREE: f64 = 10.0;
    let mut rng = strata::seed::rng(5, "test", &[]);
    let p = MEAN_DEGREE / (NODES - 1) as f64;
    let edges: Vec<(usize, usize, f64)> = (0..NODES)
        .flat_map(|i| ((i + 1)..NODES).map(move |j| (i, j)))
        .filter(|_| rng.random_bool(p))
        .map(|(i, j)| (i, j, 1.0))
        .collect();
    let measures = graph_measures(&ParticipantGraph::from_edges(NODES, &edges), 20, 7);
    let sigma = small_world(&measures).sigma;
    assert!((0.75..=1.33).contains(&sigma), "sigma {sigma}");
}

/// Bit patterns of every number, so NaN compares equal to NaN: the determinism checks below ask
/// for identical results, not close ones.
fn bits(measures: &GraphMeasures) -> Vec<u64> {
    let mut all = vec![
        measures.mean_clustering,
        measures.mean_clustering_weighted,
        measures.transitivity,
        measures.path_length,
        measures.path_length_weighted,
        measures.efficiency,
        measures.efficiency_weighted,
    ];
    let sw = small_world(measures);
    all.extend([sw.sigma, sw.random_clustering, sw.random_path_length, sw.swaps as f64]);
    all.iter().map(|value| value.to_bits()).collect()
}

#[test]
fn small_world_index_is_identical_across_calls_and_thread_counts() {
    let graph = lattice_with_shortcuts();
    let run = |threads: usize, seed: u64| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| graph_measures(&graph, 6, seed))
    };
    let one = run(1, 3);
    assert_eq!(bits(&one), bits(&run(1, 3)), "same seed, same call twice");
    assert_eq!(bits(&one), bits(&run(2, 3)), "1 thread vs 2 threads");
    assert_ne!(
        small_world(&one).random_clustering,
        small_world(&run(2, 4)).random_clustering,
        "another seed"
    );
}
