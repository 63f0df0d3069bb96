//! The reference graphs of tests/data/graphs (made by tests/data/generators/graphs.py).

use serde_json::Value;
use strata::graph::ParticipantGraph;

/// tests/data/graphs_reference.json, parsed.
pub fn reference() -> Value {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/graphs_reference.json");
    let text = std::fs::read_to_string(path)
        .expect("tests/data/graphs_reference.json (made by tests/data/generators/graphs.py)");
    serde_json::from_str(&text).unwrap()
}

/// Every reference graph's entry, by name, in file order.
pub fn reference_graphs() -> Vec<(String, Value)> {
    reference()["graphs"]
        .as_object()
        .unwrap()
        .iter()
        .map(|(name, entry)| (name.clone(), entry.clone()))
        .collect()
}

/// One reference graph's entry.
pub fn reference_entry(name: &str) -> Value {
    reference()["graphs"][name].clone()
}

/// The graph of an entry, read from its edge list ("i<TAB>j<TAB>w", 0-based).
pub fn reference_graph(entry: &Value) -> ParticipantGraph {
    let path = format!("{}/tests/data/{}", env!("CARGO_MANIFEST_DIR"), entry["file"].as_str().unwrap());
    let text = std::fs::read_to_string(&path).unwrap_or_else(|error| panic!("{path}: {error}"));
    let edges: Vec<(usize, usize, f64)> = text
        .lines()
        .map(|line| {
            let fields: Vec<&str> = line.split('\t').collect();
            (fields[0].parse().unwrap(), fields[1].parse().unwrap(), fields[2].parse().unwrap())
        })
        .collect();
    ParticipantGraph::from_edges(entry["nodes"].as_u64().unwrap() as usize, &edges)
}

/// A JSON array of labels.
pub fn labels(value: &Value) -> Vec<usize> {
    value.as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect()
}
