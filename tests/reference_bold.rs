//! `strata connectivity` against numpy and nibabel.
//!
//! Expected values come from `tests/data/generators/bold_reference.py` (numpy 2.4.6, nibabel
//! 5.4.2): two 6 x 7 x 5 x 40 series written by nibabel (float32 `.nii.gz`, and int16 with
//! scl_slope/scl_inter `.nii`), confounds with a leading n/a and a text column, and a censoring
//! column. Seed maps and region matrices are `np.corrcoef` of the residuals of
//! `np.linalg.lstsq` on [confounds, intercept] over the kept frames (constant voxels 0), with
//! `np.arctanh` for z; sphere voxel sets are those within the radius of
//! `nibabel.affines.apply_affine` of every voxel index. Tolerance 1e-5 (the issue's).

use std::path::{Path, PathBuf};
use std::process::Command;

use serde_json::Value;
use strata::read::nifti::read_volume;

/// The issue's tolerance for correlations against numpy.
const TOLERANCE: f64 = 1e-5;

fn data_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data")
}

fn reference() -> Value {
    serde_json::from_str(&std::fs::read_to_string(data_dir().join("bold_reference.json")).unwrap()).unwrap()
}

fn run_case(flags: &[String], out: &Path) -> std::process::Output {
    let bold = data_dir().join("bold");
    let mut args: Vec<String> = vec![
        "connectivity".into(),
        "--bold".into(),
        bold.join("sub-*_task-rest_bold.nii*").display().to_string(),
        "--out".into(),
        out.display().to_string(),
        "--quiet".into(),
    ];
    for flag in flags {
        args.push(match flag.as_str() {
            "CONFOUNDS" => bold.join("sub-*_task-rest_confounds.tsv").display().to_string(),
            "CENSOR" => bold.join("sub-*_task-rest_censor.tsv").display().to_string(),
            path if path.starts_with("bold/") => data_dir().join(path).display().to_string(),
            other => other.to_string(),
        });
    }
    Command::new(env!("CARGO_BIN_EXE_strata")).args(&args).output().expect("run strata")
}

fn compare(case: &str, participant: &str, got: &[f64], expected: &[f64]) {
    assert_eq!(got.len(), expected.len(), "{case} {participant}: value count");
    let mut worst = (0.0f64, 0);
    for (index, (&g, &e)) in got.iter().zip(expected).enumerate() {
        let difference = (g - e).abs();
        if difference > worst.0 {
            worst = (difference, index);
        }
    }
    assert!(
        worst.0 <= TOLERANCE,
        "{case} {participant}: largest difference {} at index {} (strata {}, numpy {})",
        worst.0,
        worst.1,
        got[worst.1],
        expected[worst.1]
    );
}

#[test]
fn seed_maps_and_region_matrices_equal_numpy() {
    let reference = reference();
    let cases = reference["cases"].as_array().unwrap();
    assert_eq!(cases.len(), 7);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let flags: Vec<String> =
            case["flags"].as_array().unwrap().iter().map(|f| f.as_str().unwrap().to_string()).collect();
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        let output = run_case(&flags, &out);
        assert!(output.status.success(), "{name}: {}", String::from_utf8_lossy(&output.stderr));
        let statistic = case["statistic"].as_str().unwrap();
        let table = std::fs::read_to_string(out.join("connectivity.tsv")).unwrap();
        for (participant, expected) in case["expected"].as_object().unwrap() {
            let expected: Vec<f64> =
                expected.as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
            let got: Vec<f64> = if case["kind"] == "map" {
                let path = out.join(format!("{participant}_stat-{statistic}_seedmap.nii.gz"));
                let volume = read_volume(&path, participant).unwrap();
                assert_eq!(volume.dim, [6, 7, 5], "{name}: the map is on the BOLD grid");
                // NIfTI-1 intent: CORREL (2) with the degrees of freedom for r, ESTIMATE for z.
                let dof = case["frames_kept"].as_u64().unwrap() - case["regressors"].as_u64().unwrap() - 1;
                if statistic == "r" {
                    assert_eq!(volume.header.intent_code, 2, "{name}");
                    assert_eq!(volume.header.intent_p1, dof as f32, "{name}");
                } else {
                    assert_eq!(volume.header.intent_code, 1001, "{name}");
                }
                volume.values.iter().map(|&v| f64::from(v)).collect()
            } else {
                let path = out.join(format!("{participant}_stat-{statistic}_conn.npy"));
                let matrix: ndarray::Array2<f32> = ndarray_npy::read_npy(&path).unwrap();
                matrix.iter().map(|&v| f64::from(v)).collect()
            };
            compare(name, participant, &got, &expected);
            // connectivity.tsv: frames kept and regressors as numpy's design has them.
            let row = table.lines().find(|line| line.starts_with(participant.as_str())).unwrap();
            let cells: Vec<&str> = row.split('\t').collect();
            assert_eq!(cells[2], case["frames_kept"].to_string(), "{name}: frames_kept");
            assert_eq!(cells[3], case["regressors"].to_string(), "{name}: regressors");
            if let Some(voxels) = case.get("seed_voxels") {
                assert_eq!(cells[5], voxels.to_string(), "{name}: seed voxels");
            }
        }
        if case["kind"] == "matrix" {
            let regions = std::fs::read_to_string(out.join("regions.tsv")).unwrap();
            let labels: Vec<String> =
                regions.lines().skip(1).map(|line| line.split('\t').nth(3).unwrap().to_string()).collect();
            let expected: Vec<String> =
                case["labels"].as_array().unwrap().iter().map(|v| v.to_string()).collect();
            assert_eq!(labels, expected, "{name}: regions in increasing label order");
        }
    }
}

#[test]
fn sphere_voxels_equal_nibabel_apply_affine() {
    let reference = reference();
    let spheres = reference["spheres"].as_array().unwrap();
    assert_eq!(spheres.len(), 3);
    for (index, sphere) in spheres.iter().enumerate() {
        let numbers = |value: &Value| -> Vec<f64> {
            value.as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect()
        };
        let dim: Vec<usize> =
            sphere["dim"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
        let mut affine = [[0.0; 4]; 4];
        for (row, values) in sphere["affine"].as_array().unwrap().iter().enumerate() {
            affine[row].copy_from_slice(&numbers(values));
        }
        let centre = numbers(&sphere["centre"]);
        let expected: Vec<usize> =
            sphere["voxels"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
        let got = strata::connectivity::seed::sphere_voxels(
            [dim[0], dim[1], dim[2]],
            &affine,
            [centre[0], centre[1], centre[2]],
            sphere["radius"].as_f64().unwrap(),
        );
        assert!(!expected.is_empty());
        assert_eq!(got, expected, "sphere {index}");
    }
}

#[test]
fn a_nifti2_series_gives_the_values_of_its_nifti1_copy() {
    // bold/nifti2/sub-01_task-rest_bold.nii: the same float32 series written by nibabel's
    // Nifti2Image (540-byte header); expected values are those of the case "mask_plain".
    let reference = reference();
    let case =
        reference["cases"].as_array().unwrap().iter().find(|case| case["name"] == "mask_plain").unwrap();
    let expected: Vec<f64> =
        case["expected"]["sub-01"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let output = Command::new(env!("CARGO_BIN_EXE_strata"))
        .args(["connectivity", "--quiet", "--bold"])
        .arg(data_dir().join("bold/nifti2/sub-01_task-rest_bold.nii"))
        .arg("--seed-mask")
        .arg(data_dir().join("bold/seed_mask.nii.gz"))
        .arg("--out")
        .arg(&out)
        .output()
        .unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let volume = read_volume(&out.join("sub-01_stat-r_seedmap.nii.gz"), "sub-01").unwrap();
    let got: Vec<f64> = volume.values.iter().map(|&v| f64::from(v)).collect();
    compare("nifti2", "sub-01", &got, &expected);
}
