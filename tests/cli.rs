//! The real binary, run in fresh temporary folders: the demo, a run on the committed small
//! cohort, and every bad input of the foundation issue (exit code, message naming file and
//! participant, nothing written).

mod util;

use std::path::Path;
use std::process::Command;

use ndarray::{Array2, Array3, Array4};
use util::cli::{assert_nothing_written, fail, matrix_cohort, strata, text};

fn run_args(out: &str) -> Vec<&str> {
    vec![
        "run",
        "--inputs",
        "sub-*_conn.npy",
        "--participants",
        "participants.tsv",
        "--group-column",
        "diagnosis",
        "--contrast",
        "insomnia,control",
        "--out",
        out,
    ]
}

/// Runs and checks: the exit code, every expected fragment in standard error, no output folder.
fn expect_failure(dir: &Path, args: &[&str], code: i32, fragments: &[&str]) {
    fail(args, dir, code, fragments);
    assert_nothing_written(dir);
}

#[test]
fn demo_recovers_planted_subgroups() {
    let dir = tempfile::tempdir().unwrap();
    // Fewer null cohorts and subsamples than the defaults keep the debug-build test short; the
    // null test's p is then at least 1/20.
    let output = strata(
        &["demo", "--out", "demo", "--kind", "matrices", "--null-draws", "19", "--subsamples", "10"],
        dir.path(),
    );
    let (stdout, stderr) = text(&output);
    assert!(output.status.success(), "{stderr}");
    // "adjusted Rand index with the planted subgroups: 0.987." -> parse the figure.
    let ari: f64 = stdout
        .split("planted subgroups: ")
        .nth(1)
        .and_then(|rest| rest.split_whitespace().next())
        .and_then(|figure| figure.trim_end_matches('.').trim().parse().ok())
        .unwrap_or_else(|| panic!("no ARI in: {stdout}"));
    assert!(ari >= 0.9, "{stdout}");
    assert!(stdout.contains("research software"));
    let results = dir.path().join("demo/results-matrices");
    for file in [
        "participants.tsv",
        "communities.tsv",
        "sweep.tsv",
        "comparisons.tsv",
        "similarity.npy",
        "provenance.json",
        "dataset_description.json",
        "stability.tsv",
        "subsamples.tsv",
        "null_distribution.tsv",
    ] {
        assert!(results.join(file).exists(), "{file} missing");
    }
    // Three planted subgroups of separation 0.6 lie far above the homogeneous null: every one of
    // the 19 null cohorts has weaker structure, so p = 1/20 (the smallest attainable).
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(results.join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["subgroups_supported"], true, "{summary}");
    assert!((summary["null_test"]["p_value"].as_f64().unwrap() - 0.05).abs() < 1e-12);
    assert_eq!(summary["null_test"]["draws"], 19);
    assert!(summary["stability"]["median_ari"].as_f64().unwrap() > 0.9, "{summary}");
    assert!(summary["verdict"].as_str().unwrap().starts_with("Subgroups supported"), "{summary}");
    // Refuses to overwrite without --force.
    let again = strata(&["demo", "--out", "demo", "--kind", "matrices"], dir.path());
    assert_eq!(again.status.code(), Some(5));
    assert!(text(&again).1.contains("output folder exists and is not empty"));
}

#[test]
fn run_on_the_committed_small_cohort() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("results");
    let output = Command::new(env!("CARGO_BIN_EXE_strata"))
        .args([
            "run",
            "--inputs",
            "demo-data/small-matrices/matrices/sub-*",
            "--participants",
            "demo-data/small-matrices/participants.tsv",
        ])
        .args([
            "--group-column",
            "diagnosis",
            "--contrast",
            "insomnia,control",
            "--atlas",
            "atlases/northfield100/northfield100_regions.tsv",
            "--quiet",
            "--out",
        ])
        .arg(&out)
        .current_dir(root)
        .output()
        .unwrap();
    let (stdout, stderr) = text(&output);
    assert!(output.status.success(), "{stderr}");
    assert!(stderr.is_empty(), "--quiet prints nothing on stderr: {stderr}");
    assert!(stdout.contains("24 participants"), "{stdout}");
    let table = std::fs::read_to_string(out.join("participants.tsv")).unwrap();
    let header: Vec<&str> = table.lines().next().unwrap().split('\t').collect();
    assert_eq!(&header[header.len() - 3..], &["community", "consistency", "confidence"]);
    assert_eq!(table.lines().count(), 25);
    // BIDS v1.11.1 derivative dataset_description: Name, BIDSVersion, DatasetType, GeneratedBy[].Name.
    let description: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("dataset_description.json")).unwrap())
            .unwrap();
    assert!(description["Name"].is_string());
    assert_eq!(description["BIDSVersion"], "1.11.1");
    assert_eq!(description["DatasetType"], "derivative");
    assert_eq!(description["GeneratedBy"][0]["Name"], "strata");
    let t: Array2<f32> =
        ndarray_npy::read_npy(out.join("maps/comm-all_contrast-insomniaVsControl_t.npy")).unwrap();
    assert_eq!(t.dim(), (100, 100));
    assert_eq!(t, t.t());
}

#[test]
fn results_do_not_depend_on_thread_count() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let mut tables = Vec::new();
    for threads in ["1", "2"] {
        let out = dir.path().join(format!("t{threads}"));
        let output = Command::new(env!("CARGO_BIN_EXE_strata"))
            .args([
                "run",
                "--inputs",
                "demo-data/small-matrices/matrices/sub-*",
                "--participants",
                "demo-data/small-matrices/participants.tsv",
            ])
            .args([
                "--group-column",
                "diagnosis",
                "--contrast",
                "insomnia,control",
                "--quiet",
                "--threads",
                threads,
                "--out",
            ])
            .arg(&out)
            .current_dir(root)
            .output()
            .unwrap();
        assert!(output.status.success(), "{}", text(&output).1);
        let summary: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
        tables.push((
            std::fs::read(out.join("participants.tsv")).unwrap(),
            std::fs::read(out.join("similarity.npy")).unwrap(),
            std::fs::read(out.join("null_distribution.tsv")).unwrap(),
            summary["null_test"].to_string(),
            summary["stability"].to_string(),
        ));
    }
    assert_eq!(tables[0], tables[1]);
}

#[test]
fn table_participant_without_file() {
    let dir = tempfile::tempdir().unwrap();
    let paths = matrix_cohort(dir.path(), 6);
    std::fs::remove_file(&paths[2]).unwrap();
    expect_failure(
        dir.path(),
        &run_args("out"),
        3,
        &["participants.tsv", "1 participant(s) in the table have no input file: sub-03"],
    );
}

#[test]
fn file_without_table_row_and_duplicate_ids() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 6);
    std::fs::copy(dir.path().join("sub-01_conn.npy"), dir.path().join("sub-99_conn.npy")).unwrap();
    expect_failure(dir.path(), &run_args("out"), 3, &["sub-99_conn.npy", "participant sub-99 has no row"]);
    std::fs::remove_file(dir.path().join("sub-99_conn.npy")).unwrap();
    let table = std::fs::read_to_string(dir.path().join("participants.tsv")).unwrap();
    std::fs::write(dir.path().join("participants.tsv"), table + "sub-02\tcontrol\t20\n").unwrap();
    expect_failure(dir.path(), &run_args("out"), 3, &["participant sub-02 appears on lines 3 and 8"]);
}

#[test]
fn unreadable_matrix_files() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 6);
    // Non-square.
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &Array2::<f32>::zeros((6, 5))).unwrap();
    expect_failure(dir.path(), &run_args("out"), 3, &["sub-04_conn.npy", "participant sub-04", "not square"]);
    // Asymmetric.
    let mut matrix = Array2::<f32>::eye(6);
    matrix[[0, 1]] = 0.5;
    matrix[[1, 0]] = 0.2;
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &matrix).unwrap();
    expect_failure(
        dir.path(),
        &run_args("out"),
        3,
        &["participant sub-04", "not symmetric: entry (1, 2) = 0.5"],
    );
    // Another R.
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &Array2::<f32>::eye(7)).unwrap();
    expect_failure(dir.path(), &run_args("out"), 3, &["participant sub-04: 7 regions but", "has 6"]);
    // NaN off the diagonal.
    let mut matrix = Array2::<f32>::eye(6);
    matrix[[2, 3]] = f32::NAN;
    matrix[[3, 2]] = f32::NAN;
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &matrix).unwrap();
    expect_failure(dir.path(), &run_args("out"), 3, &["participant sub-04: value NaN at row 3, column 4"]);
    // Outside [-1, 1].
    let mut matrix = Array2::<f32>::eye(6);
    matrix[[0, 5]] = 1.7;
    matrix[[5, 0]] = 1.7;
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &matrix).unwrap();
    expect_failure(
        dir.path(),
        &run_args("out"),
        3,
        &["participant sub-04", "value 1.7", "outside [-1, 1]", "--values z"],
    );
    // Constant participant (every off-diagonal value equal).
    let constant = Array2::<f32>::from_elem((6, 6), 0.3);
    ndarray_npy::write_npy(dir.path().join("sub-04_conn.npy"), &constant).unwrap();
    expect_failure(
        dir.path(),
        &run_args("out"),
        3,
        &["participant sub-04: all 15 features have the same value"],
    );
    // Not a .npy at all.
    std::fs::write(dir.path().join("sub-04_conn.npy"), b"garbage").unwrap();
    expect_failure(dir.path(), &run_args("out"), 3, &["sub-04_conn.npy", "not a valid .npy file"]);
}

#[test]
fn group_column_and_contrast_must_exist() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 6);
    let mut args = run_args("out");
    args[6] = "dx";
    expect_failure(
        dir.path(),
        &args,
        2,
        &["--group-column", "no column 'dx'", "participant_id, diagnosis, age"],
    );
    let mut args = run_args("out");
    args[8] = "insomnia,healthy";
    expect_failure(
        dir.path(),
        &args,
        2,
        &["--contrast", "level 'healthy' does not occur", "levels found: insomnia, control"],
    );
}

#[test]
fn fewer_than_two_participants() {
    let dir = tempfile::tempdir().unwrap();
    matrix_cohort(dir.path(), 1);
    expect_failure(dir.path(), &run_args("out"), 3, &["1 participant(s) matched", "at least 2"]);
}

fn header(dim: &[u16]) -> nifti::NiftiHeader {
    let mut header = strata::demo::grid_header([4, 4, 4], 16, "test");
    header.dim = [dim.len() as u16, 1, 1, 1, 1, 1, 1, 1];
    for (axis, &size) in dim.iter().enumerate() {
        header.dim[axis + 1] = size;
    }
    header
}

fn write_map(path: &Path, volume: &Array3<f32>) {
    let hdr = header(&[volume.dim().0 as u16, volume.dim().1 as u16, volume.dim().2 as u16]);
    strata::demo::write_volume_f32(path, &hdr, volume).unwrap();
}

/// A small valid seed-map cohort of 6 participants on a 4 x 4 x 4 grid.
fn map_cohort(dir: &Path) {
    let mut table = String::from("participant_id\tdiagnosis\n");
    for index in 0..6usize {
        let id = format!("sub-{:02}", index + 1);
        table.push_str(&format!("{id}\t{}\n", if index % 2 == 0 { "insomnia" } else { "control" }));
        let volume = Array3::from_shape_fn((4, 4, 4), |(i, j, k)| {
            (((index * 5 + i * 3 + j * 7 + k) % 13) as f32 - 6.0) / 10.0 + 0.05
        });
        write_map(&dir.join(format!("{id}_seedmap.nii.gz")), &volume);
    }
    std::fs::write(dir.join("participants.tsv"), table).unwrap();
}

fn map_args(out: &str) -> Vec<&str> {
    let mut args = run_args(out);
    args[2] = "sub-*_seedmap.nii.gz";
    args
}

#[test]
fn bad_seed_maps() {
    let dir = tempfile::tempdir().unwrap();
    map_cohort(dir.path());
    let ok = strata(&map_args("ok"), dir.path());
    assert!(ok.status.success(), "{}", text(&ok).1);
    std::fs::remove_dir_all(dir.path().join("ok")).unwrap();
    let target = dir.path().join("sub-03_seedmap.nii.gz");
    let good = std::fs::read(&target).unwrap();
    // Truncated gzip stream.
    std::fs::write(&target, &good[..good.len() / 2]).unwrap();
    expect_failure(dir.path(), &map_args("out"), 3, &["sub-03_seedmap.nii.gz", "participant sub-03"]);
    // Corrupt bytes.
    std::fs::write(&target, b"\x1f\x8bnot really gzip").unwrap();
    expect_failure(dir.path(), &map_args("out"), 3, &["sub-03_seedmap.nii.gz", "participant sub-03"]);
    // 4D volume where 3D is expected.
    let volume4 = Array4::<f32>::from_elem((4, 4, 4, 3), 0.2);
    let hdr = header(&[4, 4, 4, 3]);
    nifti::writer::WriterOptions::new(&target).reference_header(&hdr).write_nifti(&volume4).unwrap();
    expect_failure(
        dir.path(),
        &map_args("out"),
        3,
        &["participant sub-03", "image of shape 4x4x4x3", "expected one 3D seed map"],
    );
    // Another grid.
    write_map(&target, &Array3::from_elem((4, 4, 5), 0.2));
    expect_failure(
        dir.path(),
        &map_args("out"),
        3,
        &["participant sub-03: grid 4x4x5 differs from the first map's 4x4x4", "resample"],
    );
    // Another affine.
    let volume = Array3::from_shape_fn((4, 4, 4), |(i, j, k)| ((i + j + k) as f32) / 20.0 + 0.01);
    let mut hdr = header(&[4, 4, 4]);
    hdr.srow_x[3] += 2.0;
    strata::demo::write_volume_f32(&target, &hdr, &volume).unwrap();
    expect_failure(
        dir.path(),
        &map_args("out"),
        3,
        &["participant sub-03: affine", "differs from the first map's"],
    );
    // Every voxel zero in one participant: the implicit mask is empty... only if it is the
    // first; here a blank map leaves no voxel valid in every participant.
    write_map(&target, &Array3::zeros((4, 4, 4)));
    expect_failure(dir.path(), &map_args("out"), 3, &["the analysis mask is empty"]);
    // NaN inside a given mask.
    std::fs::write(&target, &good).unwrap();
    let mut volume = Array3::from_shape_fn((4, 4, 4), |(i, j, k)| ((i * 2 + j + k) as f32) / 20.0 + 0.01);
    volume[[1, 2, 3]] = f32::NAN;
    write_map(&target, &volume);
    write_map(&dir.path().join("mask.nii.gz"), &Array3::from_elem((4, 4, 4), 1.0));
    let mut args = map_args("out");
    args.extend(["--mask", "mask.nii.gz"]);
    expect_failure(
        dir.path(),
        &args,
        3,
        &["participant sub-03: value NaN at voxel (1, 2, 3) inside the mask"],
    );
    // An empty mask.
    std::fs::write(&target, &good).unwrap();
    write_map(&dir.path().join("mask.nii.gz"), &Array3::zeros((4, 4, 4)));
    expect_failure(dir.path(), &args, 3, &["mask.nii.gz", "the mask has no non-zero voxel"]);
    // A pattern that matches nothing.
    let mut args = map_args("out");
    args[2] = "nothing-*.nii.gz";
    expect_failure(dir.path(), &args, 3, &["--inputs 'nothing-*.nii.gz': matched no file"]);
}
