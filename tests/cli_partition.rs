//! `strata partition` through the real binary: edge lists and dense matrices in, node/community
//! lines and the quality out, checked against the reference packages' results on the karate club.
//!
//! Reference values: tests/data/graphs_reference.json (tests/data/generators/graphs.py, infomap
//! 2.16.0 and igraph 1.0.0).

mod util;

use util::cli::strata;
use util::graphs::reference_entry;

fn karate_path() -> String {
    format!("{}/tests/data/graphs/karate.tsv", env!("CARGO_MANIFEST_DIR"))
}

fn parse_lines(stdout: &[u8]) -> Vec<(String, usize)> {
    String::from_utf8_lossy(stdout)
        .lines()
        .map(|line| {
            let (node, community) = line.split_once('\t').expect("node<TAB>community");
            (node.to_string(), community.parse().expect("community number"))
        })
        .collect()
}

#[test]
fn infomap_on_the_karate_club_edge_list() {
    let dir = tempfile::tempdir().unwrap();
    let output =
        strata(&["partition", &karate_path(), "--trials", "10", "--quality-json", "q.json"], dir.path());
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(output.status.success(), "{stderr}");
    let lines = parse_lines(&output.stdout);
    assert_eq!(lines.len(), 34);
    assert_eq!(lines[0].0, "0");
    assert_eq!(lines[33].0, "33");
    // infomap 2.16.0 (PyPI): 3 modules, 4.3117926458018285 bits, one level 4.704422598883342.
    let reference = &reference_entry("karate")["infomap"];
    assert_eq!(lines.iter().map(|l| l.1).max(), Some(3));
    assert!(stderr.contains("codelength 4.311793 bits"), "{stderr}");
    let quality: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("q.json")).unwrap()).unwrap();
    let codelength = quality["codelength_bits"].as_f64().unwrap();
    assert!((codelength - reference["codelength"].as_f64().unwrap()).abs() < 1e-6);
    assert!(
        (quality["one_level_codelength_bits"].as_f64().unwrap()
            - reference["one_level_codelength"].as_f64().unwrap())
        .abs()
            < 1e-9
    );
    assert_eq!(quality["method"], "infomap");
    assert_eq!(quality["objective"], "codelength");
    assert_eq!(quality["nodes"], 34);
    assert_eq!(quality["edges"], 78);
    assert_eq!(quality["trial_qualities"].as_array().unwrap().len(), 10);
    let sizes: Vec<u64> = quality["sizes"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap()).collect();
    assert_eq!(sizes.iter().sum::<u64>(), 34);
    assert!(sizes.windows(2).all(|pair| pair[0] >= pair[1]), "communities numbered by size: {sizes:?}");
}

#[test]
fn louvain_modularity_and_dense_matrix_input() {
    let dir = tempfile::tempdir().unwrap();
    let edges = std::fs::read_to_string(karate_path()).unwrap();
    let mut matrix = ndarray::Array2::<f64>::zeros((34, 34));
    for line in edges.lines() {
        let fields: Vec<usize> = line.split('\t').take(2).map(|f| f.parse().unwrap()).collect();
        matrix[[fields[0], fields[1]]] = 1.0;
        matrix[[fields[1], fields[0]]] = 1.0;
    }
    ndarray_npy::write_npy(dir.path().join("karate.npy"), &matrix).unwrap();
    // Space-separated, unweighted copy of the same edge list.
    std::fs::write(dir.path().join("karate.txt"), edges.replace('\t', " ").replace(" 1\n", "\n")).unwrap();
    // igraph 1.0.0 multilevel, best of 10: 0.41978961209730437 (the published optimum 0.4198,
    // Brandes et al. 2008).
    let expected = reference_entry("karate")["louvain_modularity"]["modularity"].as_f64().unwrap();
    let mut outputs = Vec::new();
    for file in ["karate.npy", "karate.txt"] {
        let output = strata(
            &["partition", file, "--method", "louvain", "--trials", "20", "--quality-json", "q.json"],
            dir.path(),
        );
        assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
        let quality: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(dir.path().join("q.json")).unwrap()).unwrap();
        let modularity = quality["modularity"].as_f64().unwrap();
        assert!(modularity >= expected - 1e-3, "{file}: {modularity} vs igraph {expected}");
        assert_eq!(quality["objective"], "modularity");
        outputs.push(output.stdout);
    }
    assert_eq!(outputs[0], outputs[1], "the same graph as .npy and as an edge list gives the same lines");
}

#[test]
fn same_partition_at_any_thread_count() {
    let dir = tempfile::tempdir().unwrap();
    let lfr = format!("{}/tests/data/graphs/lfr-mu04.tsv", env!("CARGO_MANIFEST_DIR"));
    let one = strata(&["partition", &lfr, "--trials", "4", "--threads", "1"], dir.path());
    let two = strata(&["partition", &lfr, "--trials", "4", "--threads", "2"], dir.path());
    assert!(one.status.success() && two.status.success());
    assert_eq!(one.stdout, two.stdout);
    assert_eq!(one.stderr, two.stderr);
}

#[test]
fn bad_graph_files() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path();
    let expect = |args: &[&str], code: i32, fragments: &[&str]| {
        let output = strata(args, path);
        let stderr = String::from_utf8_lossy(&output.stderr);
        assert_eq!(output.status.code(), Some(code), "{stderr}");
        for fragment in fragments {
            assert!(stderr.contains(fragment), "expected '{fragment}' in: {stderr}");
        }
        assert!(!stderr.contains("panicked"), "{stderr}");
        assert!(output.stdout.is_empty());
    };
    std::fs::write(path.join("negative.tsv"), "0 1 1\n1 2 -0.5\n").unwrap();
    expect(&["partition", "negative.tsv"], 3, &["negative.tsv", "line 2", "non-negative"]);
    std::fs::write(path.join("fields.tsv"), "0 1 1 7\n").unwrap();
    expect(&["partition", "fields.tsv"], 3, &["fields.tsv", "line 1", "4 fields"]);
    std::fs::write(path.join("empty.tsv"), "# nothing\n").unwrap();
    expect(&["partition", "empty.tsv"], 3, &["empty.tsv", "no edges"]);
    expect(&["partition", "missing.tsv"], 3, &["missing.tsv"]);
    let asymmetric = ndarray::array![[0.0f32, 1.0], [0.5, 0.0]];
    ndarray_npy::write_npy(path.join("asymmetric.npy"), &asymmetric).unwrap();
    expect(&["partition", "asymmetric.npy"], 3, &["asymmetric.npy", "not symmetric"]);
    let wide = ndarray::Array2::<f32>::zeros((2, 3));
    ndarray_npy::write_npy(path.join("wide.npy"), &wide).unwrap();
    expect(&["partition", "wide.npy"], 3, &["wide.npy", "2 x 3"]);
    std::fs::write(path.join("ok.tsv"), "0 1\n").unwrap();
    expect(&["partition", "ok.tsv", "--density", "2"], 2, &["--density", "(0, 1]"]);
    expect(&["partition", "ok.tsv", "--trials", "0"], 2, &["--trials"]);
    expect(&["partition", "ok.tsv", "--density", "0.1", "--neighbours", "3"], 2, &["--density"]);
}
