//! `strata run`'s community options through the real binary on the committed small cohort:
//! each method, each graph rule, a precomputed similarity matrix in place of the inputs, and the
//! sweep and participants tables they write.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn run(extra: &[&str], out: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_strata"))
        .args(["run", "--participants", "demo-data/small-matrices/participants.tsv"])
        .args(["--group-column", "diagnosis", "--contrast", "insomnia,control", "--quiet", "--out"])
        .arg(out)
        .args(extra)
        .current_dir(root())
        .output()
        .unwrap()
}

const INPUTS: [&str; 2] = ["--inputs", "demo-data/small-matrices/matrices/sub-*"];

fn table(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let mut lines = text.lines().map(|line| line.split('\t').map(str::to_string).collect::<Vec<_>>());
    (lines.next().unwrap(), lines.collect())
}

fn column(path: &Path, name: &str) -> Vec<String> {
    let (header, rows) = table(path);
    let index =
        header.iter().position(|h| h == name).unwrap_or_else(|| panic!("no column {name} in {header:?}"));
    rows.into_iter().map(|row| row[index].clone()).collect()
}

#[test]
fn every_method_runs_and_reports_its_quality() {
    let dir = tempfile::tempdir().unwrap();
    for method in ["infomap", "leiden", "louvain"] {
        let out: PathBuf = dir.path().join(method);
        let mut args = INPUTS.to_vec();
        args.extend(["--method", method]);
        let output = run(&args, &out);
        let stdout = String::from_utf8_lossy(&output.stdout);
        assert!(output.status.success(), "{method}: {}", String::from_utf8_lossy(&output.stderr));
        assert!(stdout.contains(&format!("Communities ({method})")), "{stdout}");
        let summary: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
        assert_eq!(summary["method"], method);
        let sweep = out.join("sweep.tsv");
        let (header, rows) = table(&sweep);
        assert_eq!(rows.len(), 10, "the default sweep has 10 densities");
        for name in ["density", "graph", "quality", "modularity", "nmi_to_consensus", "consensus_weight"] {
            assert!(header.iter().any(|h| h == name), "{name} in {header:?}");
        }
        // NMI of each density's partition to the consensus lies in [0, 1].
        for value in column(&sweep, "nmi_to_consensus") {
            let nmi: f64 = value.parse().unwrap();
            assert!((0.0..=1.0 + 1e-12).contains(&nmi), "{nmi}");
        }
        let codelengths = column(&sweep, "codelength_bits");
        if method == "infomap" {
            assert!(summary["consensus_relative_savings"].as_f64().is_some());
            // Infomap's quality column is its codelength.
            assert_eq!(column(&sweep, "quality"), codelengths);
        } else {
            assert!(codelengths.iter().all(|c| c == "n/a"));
            assert_eq!(column(&sweep, "quality"), column(&sweep, "modularity"));
        }
        // graph_measures.tsv: one row per participant; clustering and participation in [0, 1].
        let measures = out.join("graph_measures.tsv");
        assert_eq!(column(&measures, "participant_id").len(), 24);
        for name in ["clustering", "clustering_weighted"] {
            for value in column(&measures, name) {
                let value: f64 = value.parse().unwrap();
                assert!((0.0..=1.0).contains(&value), "{name} {value}");
            }
        }
        let graph = &summary["graph_measures"];
        assert_eq!(graph["random_graphs"], 10);
        assert!(graph["small_world_sigma"].as_f64().unwrap() > 0.0);
        assert!(graph["transitivity"].as_f64().unwrap() <= 1.0);
        // Consistency: the mean co-assignment with the own community, in [0, 1], or n/a for
        // unassigned participants.
        let participants = out.join("participants.tsv");
        for (community, consistency) in
            column(&participants, "community").iter().zip(column(&participants, "consistency"))
        {
            if community == "0" {
                assert_eq!(consistency, "n/a");
            } else {
                let value: f64 = consistency.parse().unwrap();
                assert!((0.0..=1.0).contains(&value), "{value}");
            }
        }
    }
}

#[test]
fn graph_rules() {
    let dir = tempfile::tempdir().unwrap();
    for (rule, extra) in [
        ("knn", vec!["--graph", "knn", "--neighbours", "3,5"]),
        ("mutual_knn", vec!["--graph", "mutual-knn", "--neighbours", "4:8:2"]),
        ("absolute", vec!["--graph", "absolute", "--thresholds", "0.1,0.2", "--edges", "binary"]),
    ] {
        let out = dir.path().join(rule);
        let mut args = INPUTS.to_vec();
        args.extend(extra.iter().copied());
        let output = run(&args, &out);
        assert!(output.status.success(), "{rule}: {}", String::from_utf8_lossy(&output.stderr));
        let sweep = out.join("sweep.tsv");
        assert!(column(&sweep, "graph").iter().all(|g| g == rule));
        let parameters = column(&sweep, "parameter");
        let expected: Vec<&str> = match rule {
            "knn" => vec!["3", "5"],
            "mutual_knn" => vec!["4", "6", "8"],
            _ => vec!["0.1", "0.2"],
        };
        assert_eq!(parameters, expected);
        // More neighbours or a lower threshold never keeps fewer edges.
        let edges: Vec<usize> = column(&sweep, "edges").iter().map(|e| e.parse().unwrap()).collect();
        if rule == "absolute" {
            assert!(edges[0] >= edges[1], "{edges:?}");
        } else {
            assert!(edges.windows(2).all(|pair| pair[0] <= pair[1]), "{edges:?}");
        }
    }
    let output = run(&[INPUTS[0], INPUTS[1], "--graph", "absolute"], &dir.path().join("bad"));
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("--graph absolute") && stderr.contains("--thresholds"), "{stderr}");
    let output =
        run(&[INPUTS[0], INPUTS[1], "--graph", "knn", "--neighbours", "2.5"], &dir.path().join("bad"));
    assert_eq!(output.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&output.stderr).contains("--neighbours"));
    // A threshold above every similarity leaves no edge: exit 4 (analysis impossible), nothing written.
    let output =
        run(&[INPUTS[0], INPUTS[1], "--graph", "absolute", "--thresholds", "0.999"], &dir.path().join("bad"));
    assert_eq!(output.status.code(), Some(4));
    assert!(String::from_utf8_lossy(&output.stderr).contains("no graph of the sweep kept any edge"));
    assert!(!dir.path().join("bad").exists());
}

#[test]
fn precomputed_similarity_gives_the_same_communities() {
    let dir = tempfile::tempdir().unwrap();
    let first = dir.path().join("from-inputs");
    assert!(run(&INPUTS, &first).status.success());
    let similarity = first.join("similarity.npy");
    let second = dir.path().join("from-similarity");
    let output = run(&["--similarity", similarity.to_str().unwrap()], &second);
    let stdout = String::from_utf8_lossy(&output.stdout);
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    assert!(stdout.contains("not compared (precomputed similarity matrix"), "{stdout}");
    assert_eq!(
        column(&first.join("participants.tsv"), "community"),
        column(&second.join("participants.tsv"), "community")
    );
    assert!(!second.join("maps").exists(), "no features, so no maps");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(second.join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["input_kind"], "similarity_matrix");

    // A matrix of the wrong size names the table and both counts.
    let small = ndarray::Array2::<f32>::eye(3);
    let path = dir.path().join("small.npy");
    ndarray_npy::write_npy(&path, &small).unwrap();
    let output = run(&["--similarity", path.to_str().unwrap()], &dir.path().join("bad"));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(3), "{stderr}");
    assert!(
        stderr.contains("small.npy") && stderr.contains("3 x 3") && stderr.contains("24 participants"),
        "{stderr}"
    );
    // NaN names the two participants.
    let mut nan = ndarray::Array2::<f32>::eye(24);
    nan[[2, 5]] = f32::NAN;
    nan[[5, 2]] = f32::NAN;
    ndarray_npy::write_npy(&path, &nan).unwrap();
    let output = run(&["--similarity", path.to_str().unwrap()], &dir.path().join("bad"));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(3), "{stderr}");
    assert!(stderr.contains("sub-") && stderr.contains("not a finite number"), "{stderr}");
    assert!(!dir.path().join("bad").exists());
}
