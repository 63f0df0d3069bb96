//! `strata connectivity` through the real binary: every bad input named in the issue (exit code,
//! a message naming file, participant and fix, nothing written), the output folder rules shared
//! with `strata run`, and the outputs read back by `strata run`'s own readers.
//!
//! Inputs are the committed series of `tests/data/bold/` (generator
//! `tests/data/generators/bold_reference.py`), copied and altered in a fresh temporary folder.

mod util;

use std::path::{Path, PathBuf};
use util::cli::{assert_nothing_written, strata};

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data").join(name)
}

/// A folder with one participant's series, confounds and the shared seed files.
fn setup(dir: &Path) {
    for name in [
        "sub-01_task-rest_bold.nii.gz",
        "sub-01_task-rest_confounds.tsv",
        "seed_mask.nii.gz",
        "atlas_labels.nii.gz",
    ] {
        std::fs::copy(data(&format!("bold/{name}")), dir.join(name)).unwrap();
    }
}

/// Runs connectivity on the setup folder with `extra` flags and expects failure with `code`.
fn fails(dir: &Path, extra: &[&str], code: i32) -> String {
    let mut args = vec!["connectivity", "--bold", "sub-*_bold.nii*", "--out", "out"];
    args.extend_from_slice(extra);
    let output = strata(&args, dir);
    let stderr = String::from_utf8_lossy(&output.stderr).into_owned();
    assert_eq!(output.status.code(), Some(code), "{args:?}: {stderr}");
    assert_nothing_written(dir);
    stderr
}

#[test]
fn a_3d_file_where_a_series_is_expected_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(data("bold/seed_mask.nii.gz"), dir.path().join("sub-01_bold.nii.gz")).unwrap();
    std::fs::copy(data("bold/seed_mask.nii.gz"), dir.path().join("seed_mask.nii.gz")).unwrap();
    let message = fails(dir.path(), &["--seed-mask", "seed_mask.nii.gz"], 3);
    assert!(
        message.contains("sub-01_bold.nii.gz: participant sub-01: image of shape 6x7x5 is not a 4D series; expected one BOLD run per participant"),
        "{message}"
    );
}

#[test]
fn confound_and_censoring_problems_name_file_participant_and_fix() {
    let dir = tempfile::tempdir().unwrap();
    setup(dir.path());
    let confounds = dir.path().join("sub-01_task-rest_confounds.tsv");
    let original = std::fs::read_to_string(&confounds).unwrap();
    let seed = ["--seed-mask", "seed_mask.nii.gz", "--confounds", "sub-*_confounds.tsv"];

    // Row count differs from the frame count (40).
    let short: String = original.lines().take(31).map(|line| format!("{line}\n")).collect();
    std::fs::write(&confounds, short).unwrap();
    let message = fails(dir.path(), &seed, 3);
    assert!(
        message.contains("sub-01_task-rest_confounds.tsv: participant sub-01: 30 rows of confounds for a BOLD series of 40 frames"),
        "{message}"
    );
    std::fs::write(&confounds, &original).unwrap();

    // Censoring column missing.
    let mut args = seed.to_vec();
    args.extend(["--censor-column", "scrub"]);
    let message = fails(dir.path(), &args, 3);
    assert!(
        message.contains("participant sub-01: no censoring column 'scrub' (columns: trans_x, rot_y"),
        "{message}"
    );
    assert!(message.contains("fix --censor-column"), "{message}");

    // Every frame censored.
    let none_kept: String = original
        .lines()
        .enumerate()
        .map(|(row, line)| {
            if row == 0 {
                format!("{line}\n")
            } else {
                format!("{}\t0\n", line.rsplit_once('\t').unwrap().0)
            }
        })
        .collect();
    std::fs::write(&confounds, none_kept).unwrap();
    let mut args = seed.to_vec();
    args.extend(["--censor-column", "keep"]);
    let message = fails(dir.path(), &args, 3);
    assert!(
        message.contains(
            "sub-01_task-rest_bold.nii.gz: participant sub-01: every one of its 40 frames is censored"
        ),
        "{message}"
    );

    // Fewer kept frames than regressors + 2: keep 5 frames for 4 regressors.
    let five_kept: String = original
        .lines()
        .enumerate()
        .map(|(row, line)| {
            let stem = line.rsplit_once('\t').unwrap().0;
            match row {
                0 => format!("{line}\n"),
                1..=5 => format!("{stem}\t1\n"),
                _ => format!("{stem}\t0\n"),
            }
        })
        .collect();
    std::fs::write(&confounds, five_kept).unwrap();
    let message = fails(dir.path(), &args, 3);
    assert!(
        message.contains("participant sub-01: 5 kept frame(s) for 4 regressor(s)")
            && message.contains("needs at least regressors + 2 kept frames"),
        "{message}"
    );

    // A named column that is not in the table.
    std::fs::write(&confounds, &original).unwrap();
    let mut args = seed.to_vec();
    args.extend(["--confound-columns", "trans_x,framewise_displacement"]);
    let message = fails(dir.path(), &args, 3);
    assert!(message.contains("no column 'framewise_displacement'"), "{message}");

    // A participant without a confounds table.
    std::fs::remove_file(&confounds).unwrap();
    std::fs::write(dir.path().join("sub-02_task-rest_confounds.tsv"), &original).unwrap();
    let message = fails(dir.path(), &seed, 3);
    assert!(message.contains("--confounds: participant sub-01"), "{message}");
    assert!(message.contains("has no table among the files matched"), "{message}");
}

#[test]
fn seeds_outside_the_data_or_the_grid_and_wrong_atlases_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    setup(dir.path());

    // A sphere beyond the grid: the grid's extent is in the message.
    let message = fails(dir.path(), &["--seed-sphere", "200,0,0", "--radius", "4"], 3);
    assert!(
        message.contains("participant sub-01: the sphere of radius 4 mm at (200, 0, 0) mm holds no voxel centre of this grid"),
        "{message}"
    );
    assert!(message.contains("x -6.0 to 9.0"), "{message}");

    // A sphere in the empty x = 0 plane of the series (x = 9 mm): constant seed series.
    let message = fails(dir.path(), &["--seed-sphere", "9,0,0", "--radius", "1"], 3);
    assert!(
        message.contains("participant sub-01: the seed's mean series (1 voxel(s)) is constant after regressing out the intercept; the seed lies outside the brain"),
        "{message}"
    );

    // A label absent from the atlas volume.
    let message = fails(dir.path(), &["--seed-label", "4", "--atlas-volume", "atlas_labels.nii.gz"], 3);
    assert!(
        message.contains("atlas_labels.nii.gz: label 4 is not in the atlas volume (labels present: 2, 5, 9, 11, 14); fix --seed-label"),
        "{message}"
    );

    // An atlas on another grid.
    let header = strata::demo::grid_header([4, 4, 4], 4, "labels on another grid");
    let labels = ndarray::Array3::<i16>::from_elem((4, 4, 4), 3);
    strata::demo::write_volume_i16(&dir.path().join("other_grid.nii.gz"), &header, &labels).unwrap();
    let message = fails(dir.path(), &["--atlas-volume", "other_grid.nii.gz"], 3);
    assert!(
        message.contains("participant sub-01: grid 6x7x5 differs from --atlas-volume")
            && message.contains("other_grid.nii.gz of 4x4x4; resample --atlas-volume to the BOLD grid"),
        "{message}"
    );

    // A built-in atlas name resolves to its label volume (MNI 2 mm grid), here on the wrong grid.
    let message = fails(dir.path(), &["--atlas-volume", "dosenbach160"], 3);
    assert!(message.contains("participant sub-01: grid 6x7x5 differs from --atlas-volume"), "{message}");
    assert!(message.contains("of 91x109x91; resample --atlas-volume to the BOLD grid"), "{message}");

    // A map of fractions is not a label volume.
    std::fs::copy(data("nifti/float32.nii.gz"), dir.path().join("fractions.nii.gz")).unwrap();
    let message = fails(dir.path(), &["--atlas-volume", "fractions.nii.gz"], 3);
    assert!(message.contains("fractions.nii.gz: value") && message.contains("is not a label"), "{message}");

    // Flags that do not go together.
    let message =
        fails(dir.path(), &["--seed-mask", "seed_mask.nii.gz", "--atlas-volume", "atlas_labels.nii.gz"], 2);
    assert!(message.contains("--atlas-volume: is used with --seed-label or alone"), "{message}");
}

#[test]
fn inputs_without_a_label_and_a_missing_seed_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    setup(dir.path());
    std::fs::copy(data("bold/sub-01_task-rest_bold.nii.gz"), dir.path().join("rest_bold.nii.gz")).unwrap();
    let output = strata(
        &["connectivity", "--bold", "*_bold.nii.gz", "--seed-mask", "seed_mask.nii.gz", "--out", "out"],
        dir.path(),
    );
    let message = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(3), "{message}");
    assert!(message.contains("rest_bold.nii.gz: no participant label in the file name"), "{message}");
    let message = fails(dir.path(), &[], 2);
    assert!(message.contains("give the seed or the regions: --seed-mask FILE"), "{message}");
}

#[test]
fn an_existing_output_folder_needs_force_and_outputs_read_back_in_run() {
    let dir = tempfile::tempdir().unwrap();
    setup(dir.path());
    std::fs::copy(data("bold/sub-02_task-rest_bold.nii"), dir.path().join("sub-02_task-rest_bold.nii"))
        .unwrap();
    std::fs::create_dir(dir.path().join("out")).unwrap();
    std::fs::write(dir.path().join("out/keep.txt"), "earlier results").unwrap();
    let args = [
        "connectivity",
        "--bold",
        "sub-*_bold.nii*",
        "--seed-mask",
        "seed_mask.nii.gz",
        "--out",
        "out",
        "--quiet",
    ];
    let output = strata(&args, dir.path());
    let message = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(5), "{message}");
    assert!(
        message.contains("output folder exists and is not empty; choose another --out or pass --force"),
        "{message}"
    );
    assert!(dir.path().join("out/keep.txt").exists());

    let mut forced = args.to_vec();
    forced.push("--force");
    let output = strata(&forced, dir.path());
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    assert!(!dir.path().join("out/keep.txt").exists());
    let stdout = String::from_utf8_lossy(&output.stdout);
    assert!(stdout.contains("sub-01: 40 of 40 frames kept, 1 regressor(s), dof 38"), "{stdout}");
    for name in [
        "sub-01_stat-r_seedmap.nii.gz",
        "sub-02_stat-r_seedmap.json",
        "connectivity.tsv",
        "dataset_description.json",
    ] {
        assert!(dir.path().join("out").join(name).exists(), "{name}");
    }

    // The maps are inputs of `strata run`: its discovery matches them to a participants table.
    std::fs::write(dir.path().join("participants.tsv"), "participant_id\tgroup\nsub-01\ta\nsub-02\tb\n")
        .unwrap();
    let output = strata(
        &[
            "check",
            "--inputs",
            "out/sub-*_seedmap.nii.gz",
            "--participants",
            "participants.tsv",
            "--group-column",
            "group",
            "--contrast",
            "a,b",
        ],
        dir.path(),
    );
    let report = String::from_utf8_lossy(&output.stdout);
    assert!(report.contains("2 participants"), "{report}\n{}", String::from_utf8_lossy(&output.stderr));
}

#[test]
fn outputs_do_not_depend_on_the_thread_count() {
    let dir = tempfile::tempdir().unwrap();
    setup(dir.path());
    std::fs::copy(data("bold/sub-02_task-rest_bold.nii"), dir.path().join("sub-02_task-rest_bold.nii"))
        .unwrap();
    std::fs::copy(
        data("bold/sub-02_task-rest_confounds.tsv"),
        dir.path().join("sub-02_task-rest_confounds.tsv"),
    )
    .unwrap();
    for threads in ["1", "2"] {
        let output = strata(
            &[
                "connectivity",
                "--bold",
                "sub-*_bold.nii*",
                "--confounds",
                "sub-*_confounds.tsv",
                "--censor-column",
                "keep",
                "--atlas-volume",
                "atlas_labels.nii.gz",
                "--seed-label",
                "9",
                "--out",
                threads,
                "--threads",
                threads,
                "--quiet",
            ],
            dir.path(),
        );
        assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    }
    for name in ["sub-01_stat-r_seedmap.nii.gz", "sub-02_stat-r_seedmap.nii.gz", "connectivity.tsv"] {
        let one = std::fs::read(dir.path().join("1").join(name)).unwrap();
        let two = std::fs::read(dir.path().join("2").join(name)).unwrap();
        assert!(one == two, "{name} differs between 1 and 2 threads");
    }
}

#[test]
fn a_built_in_atlas_gives_region_matrices_with_its_names_and_networks() {
    // A short series on the 91 x 109 x 91 grid of 2 mm voxels the built-in label volumes use
    // (affine [[-2,0,0,90],[0,2,0,-126],[0,0,2,-72]]: atlases/mni152/README.md); every voxel
    // varies differently over the 10 frames, so every region has a non-constant mean series.
    let dir = tempfile::tempdir().unwrap();
    let (nx, ny, nz, frames) = (91usize, 109usize, 91usize, 10usize);
    let series = ndarray::Array4::<f32>::from_shape_fn((nx, ny, nz, frames), |(x, y, z, t)| {
        let phase = ((x * 7 + y * 3 + z) % 17) as f32;
        (t as f32 * (1.0 + phase / 9.0)).sin() + 0.1 * phase
    });
    let header = nifti::NiftiHeader {
        dim: [4, nx as u16, ny as u16, nz as u16, frames as u16, 1, 1, 1],
        pixdim: [1.0, 2.0, 2.0, 2.0, 2.0, 1.0, 1.0, 1.0],
        sform_code: 4,
        srow_x: [-2.0, 0.0, 0.0, 90.0],
        srow_y: [0.0, 2.0, 0.0, -126.0],
        srow_z: [0.0, 0.0, 2.0, -72.0],
        ..Default::default()
    };
    nifti::writer::WriterOptions::new(dir.path().join("sub-07_task-rest_bold.nii"))
        .reference_header(&header)
        .write_nifti(&series)
        .unwrap();
    let output = strata(
        &["connectivity", "--bold", "sub-*_bold.nii", "--atlas-volume", "dosenbach160", "--out", "out"],
        dir.path(),
    );
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    // Names and networks as the shipped table gives them (atlases/dosenbach160/dosenbach160_regions.tsv,
    // from nilearn 0.14.1's package data): index 1 is vmPFC in the default network.
    let regions = std::fs::read_to_string(dir.path().join("out/regions.tsv")).unwrap();
    let lines: Vec<&str> = regions.lines().collect();
    assert_eq!(lines[0], "index\tname\tnetwork\tlabel\tvoxels");
    assert_eq!(lines.len(), 161, "160 regions");
    assert!(lines[1].starts_with("1\tvmPFC\tdefault\t1\t"), "{}", lines[1]);
    let table = std::fs::read_to_string(data("../../atlases/dosenbach160/dosenbach160_regions.tsv")).unwrap();
    for (ours, source) in lines.iter().skip(1).zip(table.lines().skip(1)) {
        let ours: Vec<&str> = ours.split('\t').collect();
        let source: Vec<&str> = source.split('\t').collect();
        assert_eq!(&ours[..3], &source[..3], "index, name and network as in the atlas table");
    }
    let written: Vec<String> = std::fs::read_dir(dir.path().join("out"))
        .unwrap()
        .map(|entry| entry.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|name| name.ends_with("_conn.npy"))
        .collect();
    assert_eq!(written.len(), 1, "{written:?}");
    assert!(written[0].starts_with("sub-07_stat-"), "{written:?}");
    let matrix: ndarray::Array2<f32> =
        ndarray_npy::read_npy(dir.path().join("out").join(&written[0])).unwrap();
    assert_eq!(matrix.dim(), (160, 160));
}
