//! `strata check` and the configuration file through the real binary, in fresh temporary folders:
//! the battery's report on a valid cohort (exit 0) and on each kind of bad input (exit 3, the
//! failed check named, nothing written), and `strata run CONFIG` with flags taking the place of
//! the file's keys.

mod util;

use std::path::Path;
use std::process::Output;

use ndarray::Array2;
use util::cli::{matrix_cohort, strata, text};

const CHECK: [&str; 9] = [
    "check",
    "--inputs",
    "sub-*_conn.npy",
    "--participants",
    "participants.tsv",
    "--group-column",
    "diagnosis",
    "--contrast",
    "insomnia,control",
];

fn expect(output: &Output, code: i32, fragments: &[&str]) -> String {
    let (stdout, stderr) = text(output);
    assert_eq!(output.status.code(), Some(code), "stdout:\n{stdout}\nstderr:\n{stderr}");
    for fragment in fragments {
        assert!(stdout.contains(fragment), "expected '{fragment}' in:\n{stdout}");
    }
    assert!(!stderr.contains("panicked"), "{stderr}");
    stderr
}

#[test]
fn check_reports_a_valid_cohort_without_writing() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 12);
    let mut args = CHECK.to_vec();
    args.extend(["--out", "results"]);
    let output = strata(&args, dir.path());
    // Values of the cohort above: (k % 11 - 5) / 10 over k spans -0.5 to 0.5; 6 x 5 / 2 = 15
    // edges; memory 12 x 15 x 4 + 12 x 12 x 4 = 1,296 bytes.
    expect(
        &output,
        0,
        &[
            "ok    participants-table  participants.tsv: 12 participants; columns participant_id, diagnosis, age",
            "ok    group-column        diagnosis: insomnia 6, control 6",
            "ok    matching            region matrices: 12 file(s); 12 of 12 participants matched, 0 without a file, 0 file(s) without a table row",
            "ok    values              R = 6 regions; values -0.5000 to 0.5000",
            "ok    features            15 features (the upper triangle of each matrix)",
            "ok    memory              about 1.3 KiB for the feature matrix (12 x 15 x 4 bytes) and the similarity (12 x 12 x 4 bytes)",
            "ok    run-time            about 1 s on a 2-core machine",
            "ok    output              results: will be created in .",
            "verdict: strata run would pass these checks.",
        ],
    );
    assert!(!dir.path().join("results").exists(), "check writes nothing");
}

#[test]
fn check_fails_with_exit_3_naming_the_check() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 12);
    // A participant without a file, and a file without a row.
    std::fs::rename(dir.path().join("sub-12_conn.npy"), dir.path().join("sub-99_conn.npy")).unwrap();
    let stderr = expect(
        &strata(&CHECK, dir.path()),
        3,
        &[
            "FAIL  matching            12 file(s); 11 of 12 participants matched, 1 without a file, 1 file(s) without a table row: ",
            "participant sub-99 has no row in participants.tsv",
            "skip  values              not examined: needs a passing matching check",
            "verdict: strata run would stop; failed: matching.",
        ],
    );
    assert!(
        stderr
            .contains("strata: error: check: strata run would stop on these inputs; failed checks: matching"),
        "{stderr}"
    );
    std::fs::rename(dir.path().join("sub-99_conn.npy"), dir.path().join("sub-12_conn.npy")).unwrap();

    // A value outside [-1, 1] for correlations.
    let mut matrix = Array2::<f32>::eye(6);
    matrix[[0, 5]] = 1.7;
    matrix[[5, 0]] = 1.7;
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &matrix).unwrap();
    expect(
        &strata(&CHECK, dir.path()),
        3,
        &["FAIL  values              R = 6 regions; values -0.5000 to 1.7000: outside [-1, 1] for correlations r", "fix: pass --values z"],
    );
    // Another R: the shape mismatch is named with both participants.
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &Array2::<f32>::eye(7)).unwrap();
    expect(&strata(&CHECK, dir.path()), 3, &["participant sub-04 has shape 7x7 where sub-01 has 6x6"]);

    // The group column and the contrast.
    matrix_cohort(dir.path(), 12);
    let mut args = CHECK.to_vec();
    args[8] = "insomnia,healthy";
    expect(
        &strata(&args, dir.path()),
        3,
        &["FAIL  group-column        diagnosis: level(s) healthy of --contrast not in the column; found insomnia 6, control 6"],
    );
    // An output folder that exists and is not empty.
    std::fs::create_dir(dir.path().join("results")).unwrap();
    std::fs::write(dir.path().join("results/old.txt"), "x").unwrap();
    let mut args = CHECK.to_vec();
    args.extend(["--out", "results"]);
    expect(
        &strata(&args, dir.path()),
        3,
        &["FAIL  output              results: exists and is not empty", "pass --force"],
    );
    // A missing participants table.
    let mut args = CHECK.to_vec();
    args[4] = "absent.tsv";
    expect(&strata(&args, dir.path()), 3, &["FAIL  participants-table  absent.tsv", "skip  matching"]);
}

#[test]
fn run_reads_a_configuration_file_and_flags_take_its_place() {
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("study");
    std::fs::create_dir(&study).unwrap();
    matrix_cohort(&study, 12);
    // Relative paths are read from the file's folder, wherever strata is started.
    std::fs::write(
        study.join("run.toml"),
        "inputs = \"sub-*_conn.npy\"\nparticipants = \"participants.tsv\"\ngroup_column = \"diagnosis\"\n\
         contrast = [\"insomnia\", \"control\"]\nout = \"results\"\ntrials = 3\nmethod = \"louvain\"\n\
         densities = [0.3, 0.5]\nmin_community_size = 2\nrandom_graphs = 0\n",
    )
    .unwrap();
    let output = strata(&["--quiet", "run", "study/run.toml", "--trials", "2"], dir.path());
    let (stdout, stderr) = text(&output);
    assert_eq!(output.status.code(), Some(0), "{stdout}\n{stderr}");
    let provenance: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(study.join("results/provenance.json")).unwrap())
            .unwrap();
    let parameters = &provenance["parameters"];
    assert_eq!(parameters["trials"], 2, "the flag takes the place of the key");
    assert_eq!(parameters["method"], "louvain");
    assert_eq!(parameters["densities"], serde_json::json!([0.3, 0.5]));
    assert_eq!(parameters["seed"], 20_261_202, "keys left out keep their default");

    // check takes the same file.
    let output = strata(&["check", "study/run.toml"], dir.path());
    expect(&output, 3, &["FAIL  output              study/results: exists and is not empty"]);

    // Errors in the file: exit 2, the file, the key, the value and what is allowed.
    std::fs::write(study.join("bad.toml"), "method = \"walktrap\"\n").unwrap();
    let output = strata(&["run", "study/bad.toml"], dir.path());
    let (_, stderr) = text(&output);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert_eq!(
        stderr.trim_end(),
        "strata: error: study/bad.toml: key 'method': found \"walktrap\"; allowed: one of infomap, leiden, leiden-cpm, louvain"
    );
}

#[test]
fn printed_defaults_are_a_configuration_file() {
    let dir = tempfile::tempdir().unwrap();
    let output = strata(&["defaults"], dir.path());
    let (stdout, _) = text(&output);
    assert_eq!(output.status.code(), Some(0));
    for fragment in [
        "method = \"infomap\"",
        "densities = \"0.05:0.5:0.05\"",
        "trials = 4",
        "resolution = 1.0",
        "# One of: infomap, leiden, leiden-cpm, louvain.",
        "participants = \"participants.tsv\"   # required: edit",
        "# mask = \"mask.nii.gz\"",
    ] {
        assert!(stdout.contains(fragment), "expected '{fragment}' in:\n{stdout}");
    }
}

#[test]
fn completions_and_manual_page_come_from_the_clap_definition() {
    let dir = tempfile::tempdir().unwrap();
    for shell in ["bash", "zsh", "fish"] {
        let output = strata(&["completions", shell], dir.path());
        let (stdout, stderr) = text(&output);
        assert_eq!(output.status.code(), Some(0), "{stderr}");
        assert!(stdout.len() > 500, "{shell}: {} bytes", stdout.len());
        for word in ["run", "check", "min-community-size", "leiden-cpm"] {
            assert!(stdout.contains(word), "{shell} completions lack '{word}'");
        }
    }
    let output = strata(&["manpage"], dir.path());
    let (stdout, _) = text(&output);
    assert_eq!(output.status.code(), Some(0));
    // roff: the title line names the page and section 1 (man-pages(7)).
    assert!(stdout.starts_with(".ie \\n(.g .ds Aq \\(aq") || stdout.contains(".TH strata 1"), "{stdout}");
    assert!(stdout.contains(".TH strata 1"), "{stdout}");
    assert!(stdout.contains("run"), "{stdout}");
    let output = strata(&["manpage", "--out-dir", "man"], dir.path());
    assert_eq!(output.status.code(), Some(0));
    let run_page = std::fs::read_to_string(dir.path().join("man/strata-run.1")).unwrap();
    assert!(run_page.contains("min\\-community\\-size"), "{run_page}");
}

/// A 4 x 4 x 4 seed-map cohort of 6 participants (4 mm voxels, strata's demo grid header),
/// values (k % 13 - 6) / 10 + 0.05: never zero, from -0.55 to 0.65.
fn map_cohort(dir: &Path) {
    let mut table = String::from("participant_id\tdiagnosis\n");
    for index in 0..6usize {
        let id = format!("sub-{:02}", index + 1);
        table.push_str(&format!("{id}\t{}\n", if index % 2 == 0 { "insomnia" } else { "control" }));
        let mut volume = ndarray::Array3::from_shape_fn((4, 4, 4), |(i, j, k)| {
            (((index * 5 + i * 3 + j * 7 + k) % 13) as f32 - 6.0) / 10.0 + 0.05
        });
        if index == 2 {
            volume[[0, 0, 0]] = f32::NAN;
        }
        write_map(&dir.join(format!("{id}_seedmap.nii.gz")), &volume);
    }
    std::fs::write(dir.join("participants.tsv"), table).unwrap();
}

fn write_map(path: &Path, volume: &ndarray::Array3<f32>) {
    let header = strata::demo::grid_header([4, 4, 4], 16, "test");
    strata::demo::write_volume_f32(path, &header, volume).unwrap();
}

#[test]
fn check_reports_grid_nan_and_mask_of_seed_maps() {
    let dir = tempfile::tempdir().unwrap();
    map_cohort(dir.path());
    let mut args = CHECK.to_vec();
    args[2] = "sub-*_seedmap.nii.gz";
    // Memory: 6 x 63 x 4 + 6 x 6 x 4 = 1,656 bytes = 1.6 KiB.
    expect(
        &strata(&args, dir.path()),
        0,
        &[
            "ok    matching            seed maps: 6 file(s); 6 of 6 participants matched",
            "warn  values              grid 4x4x4, voxels 4.00x4.00x4.00 mm; values -0.5500 to 0.6500; 1 participant(s) with NaN/Inf values (sub-03)",
            "ok    features            63 features: mask of 63 voxels (98.4% of the 4x4x4 grid, finite and non-zero in every participant)",
            "ok    memory              about 1.6 KiB for the feature matrix (6 x 63 x 4 bytes)",
            "verdict: strata run would pass these checks.",
        ],
    );
    // A mask of the half i >= 2 (32 voxels), which leaves out the NaN voxel (0, 0, 0).
    let mask = ndarray::Array3::from_shape_fn((4, 4, 4), |(i, _, _)| if i >= 2 { 1.0f32 } else { 0.0 });
    write_map(&dir.path().join("mask.nii.gz"), &mask);
    args.extend(["--mask", "mask.nii.gz"]);
    expect(
        &strata(&args, dir.path()),
        0,
        &["ok    features            32 features: mask of 32 voxels (50.0% of the 4x4x4 grid, from --mask)"],
    );
    // A mask that includes the NaN voxel: run would stop in the features stage.
    let mask = ndarray::Array3::<f32>::ones((4, 4, 4));
    write_map(&dir.path().join("mask.nii.gz"), &mask);
    expect(
        &strata(&args, dir.path()),
        3,
        &[
            "FAIL  features            ",
            "participant sub-03",
            "verdict: strata run would stop; failed: features.",
        ],
    );
}

#[test]
fn check_of_a_precomputed_similarity() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 8);
    // A valid 8 x 8 similarity: 1 on the diagonal, 0.1 x (i + j) / 14 elsewhere.
    let similarity =
        Array2::<f32>::from_shape_fn((8, 8), |(i, j)| if i == j { 1.0 } else { 0.1 * (i + j) as f32 / 14.0 });
    ndarray_npy::write_npy(dir.path().join("similarity.npy"), &similarity).unwrap();
    let mut args = CHECK.to_vec();
    args[1] = "--similarity";
    args[2] = "similarity.npy";
    // Memory: 8 x 8 x 4 = 256 bytes.
    expect(
        &strata(&args, dir.path()),
        0,
        &[
            "ok    matching            8 participants, a precomputed similarity matrix 8x8; off-diagonal values 0.007 to 0.093",
            "ok    values              not applicable",
            "ok    memory              about 256 B for the similarity (8 x 8 x 4 bytes)",
        ],
    );
}
