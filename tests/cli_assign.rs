//! `strata assign` through the real binary: participants held out of a run and assigned
//! afterwards land in their planted subgroup about as often as the run's own participants;
//! their placement equals numpy's recomputation from the saved centroids
//! (tests/data/generators/check_assign_numpy.py; set `STRATA_REQUIRE_REFERENCE=1`, as CI does,
//! to make a missing numpy a failure instead of a skip); inputs of another kind or size are
//! refused.

mod util;

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use strata::demo::Scenario;
use util::cli::strata;

fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).into_owned()
}

fn column(table: &str, name: &str) -> Vec<String> {
    let mut lines = table.lines();
    let header: Vec<&str> = lines.next().unwrap().split('\t').collect();
    let index = header.iter().position(|c| *c == name).unwrap_or_else(|| panic!("no column {name}"));
    lines.map(|line| line.split('\t').nth(index).unwrap().to_string()).collect()
}

/// Writes a planted cohort of 150, keeps the first 120 in the run's folder and moves the last
/// 30 into `new/`. Returns the planted subgroup per participant id.
fn held_out_cohort(dir: &Path) -> HashMap<String, usize> {
    let scenario = Scenario { participant_count: 150, separation: 0.5, ..Scenario::default() };
    let cohort = strata::demo::write_matrix_cohort(&scenario, dir).unwrap();
    std::fs::create_dir_all(dir.join("new")).unwrap();
    let table = std::fs::read_to_string(dir.join("participants.tsv")).unwrap();
    let mut kept: Vec<&str> = table.lines().take(121).collect();
    kept.push("");
    std::fs::write(dir.join("participants.tsv"), kept.join("\n")).unwrap();
    for participant in &cohort.participants[120..] {
        let name = format!("{}_conn.npy", participant.participant_id);
        std::fs::rename(dir.join("matrices").join(&name), dir.join("new").join(&name)).unwrap();
    }
    cohort.participants.iter().map(|p| (p.participant_id.clone(), p.subgroup)).collect()
}

/// `strata run` on the held-out cohort's 120 participants into `results/`, without the null test
/// and the stability check (not needed here; they keep the debug-build test short).
fn run_without_validation(root: &Path) {
    let run = strata(
        &[
            "run",
            "--inputs",
            "matrices/sub-*",
            "--participants",
            "participants.tsv",
            "--group-column",
            "diagnosis",
            "--contrast",
            "insomnia,control",
            "--null-draws",
            "0",
            "--subsamples",
            "0",
            "--quiet",
            "--out",
            "results",
        ],
        root,
    );
    assert!(run.status.success(), "{}", stderr(&run));
}

fn numpy_available() -> Result<(), String> {
    match Command::new("python3").args(["-c", "import numpy"]).output() {
        Ok(output) if output.status.success() => Ok(()),
        Ok(output) => {
            Err(format!("python3 cannot import numpy: {}", String::from_utf8_lossy(&output.stderr).trim()))
        }
        Err(error) => Err(format!("python3 not runnable: {error}")),
    }
}

#[test]
fn held_out_participants_land_in_their_planted_subgroup_as_numpy_recomputes() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    let truth = held_out_cohort(root);
    run_without_validation(root);
    for file in ["model.json", "centroids.npy"] {
        assert!(root.join("results/assignment").join(file).is_file(), "{file} missing");
    }
    let assign = strata(&["assign", "results", "--inputs", "new/sub-*", "--out", "new.tsv"], root);
    assert!(assign.status.success(), "{}", stderr(&assign));
    assert!(String::from_utf8_lossy(&assign.stdout).contains("30 participant(s) read"));

    // Each community stands for the planted subgroup most of its training members come from.
    let participants = std::fs::read_to_string(root.join("results/participants.tsv")).unwrap();
    let ids = column(&participants, "participant_id");
    let communities: Vec<usize> =
        column(&participants, "community").iter().map(|c| c.parse().unwrap()).collect();
    let mut votes: HashMap<(usize, usize), usize> = HashMap::new();
    for (id, &community) in ids.iter().zip(&communities) {
        *votes.entry((community, truth[id])).or_default() += 1;
    }
    let label_of = |community: usize| {
        (1..=3).max_by_key(|&subgroup| votes.get(&(community, subgroup)).copied().unwrap_or(0)).unwrap()
    };
    let in_sample = ids.iter().zip(&communities).filter(|(id, &c)| c > 0 && label_of(c) == truth[*id]).count()
        as f64
        / ids.len() as f64;
    let table = std::fs::read_to_string(root.join("new.tsv")).unwrap();
    let new_ids = column(&table, "participant_id");
    let placed: Vec<usize> = column(&table, "community").iter().map(|c| c.parse().unwrap()).collect();
    let held_out = new_ids.iter().zip(&placed).filter(|(id, &c)| c > 0 && label_of(c) == truth[*id]).count()
        as f64
        / new_ids.len() as f64;
    assert!(in_sample > 0.9, "in-sample recovery {in_sample}");
    assert!(held_out >= in_sample - 0.1, "held-out {held_out} vs in-sample {in_sample}");

    if let Err(missing) = numpy_available() {
        if std::env::var("STRATA_REQUIRE_REFERENCE").as_deref() == Ok("1") {
            panic!("STRATA_REQUIRE_REFERENCE=1 but {missing}");
        }
        eprintln!("skipping numpy check: {missing} (pip install numpy to run it)");
        return;
    }
    let script = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/generators/check_assign_numpy.py");
    let mut files: Vec<PathBuf> =
        std::fs::read_dir(root.join("new")).unwrap().flatten().map(|entry| entry.path()).collect();
    files.sort();
    let check = Command::new("python3")
        .arg(script)
        .arg(root.join("results"))
        .arg(root.join("new.tsv"))
        .args(&files)
        .output()
        .unwrap();
    assert!(
        check.status.success(),
        "{}{}",
        String::from_utf8_lossy(&check.stdout),
        String::from_utf8_lossy(&check.stderr)
    );
}

#[test]
fn inputs_that_do_not_fit_the_run_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let root = dir.path();
    held_out_cohort(root);
    run_without_validation(root);
    // Another atlas size: a 10 x 10 identity-like matrix.
    std::fs::create_dir_all(root.join("other")).unwrap();
    let small = ndarray::Array2::<f32>::from_shape_fn((10, 10), |(i, j)| {
        if i == j {
            1.0
        } else {
            0.1 + 0.01 * (i + j) as f32
        }
    });
    ndarray_npy::write_npy(root.join("other/sub-X01_conn.npy"), &small).unwrap();
    let output = strata(&["assign", "results", "--inputs", "other/sub-*", "--out", "x.tsv"], root);
    assert_eq!(output.status.code(), Some(3), "{}", stderr(&output));
    let message = stderr(&output);
    assert!(message.contains("sub-X01") && message.contains("10 x 10 matrices"), "{message}");
    assert!(message.contains("100 x 100 matrices of its atlas"), "{message}");
    assert!(!root.join("x.tsv").exists(), "nothing is written on failure");
    // Not a run folder.
    let output = strata(&["assign", "other", "--inputs", "new/sub-*", "--out", "x.tsv"], root);
    assert_eq!(output.status.code(), Some(3));
    assert!(stderr(&output).contains("no assignment model"), "{}", stderr(&output));
    // A confidence floor outside [0, 1].
    let output = strata(
        &["assign", "results", "--inputs", "new/sub-*", "--out", "x.tsv", "--min-confidence", "2"],
        root,
    );
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("--min-confidence is 2"), "{}", stderr(&output));
}
