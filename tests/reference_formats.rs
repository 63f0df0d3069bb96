//! Readers of the other input formats against the formats' reference libraries: files written by
//! nibabel 5.4.2 (tests/data/generators/input_formats.py) and the values the library reads back
//! (tests/data/formats_reference.json); and every bad input through the reader, with its message.

use std::path::{Path, PathBuf};

use serde_json::Value;
use strata::features::{build_features, FeatureOptions, FeatureSpace, ValueScale};
use strata::read::nifti::read_raw_stack;
use strata::read::{discover_inputs, read_participants, InputOptions};

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data").join(name)
}

fn reference() -> Value {
    serde_json::from_str(&std::fs::read_to_string(data("formats_reference.json")).unwrap()).unwrap()
}

fn numbers(value: &Value) -> Vec<f64> {
    value.as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect()
}

fn options(values: ValueScale) -> FeatureOptions {
    FeatureOptions { mask: None, values, region_names: None }
}

#[test]
fn merged_4d_nifti_volumes_equal_nibabel() {
    // Reference: nibabel 5.4.2 get_fdata of the file it wrote, volume t = data[..., t].
    let reference = reference();
    let case = &reference["merged_4d"];
    let stack = read_raw_stack(&data("formats/merged_4d.nii.gz")).unwrap();
    assert_eq!(stack.frames, 5);
    assert_eq!(stack.dim, [4, 5, 3]);
    for (row, expected_row) in case["affine"].as_array().unwrap().iter().enumerate().take(3) {
        for (col, expected) in numbers(expected_row).iter().enumerate() {
            assert!((stack.affine[row][col] - expected).abs() < 1e-5, "affine[{row}][{col}]");
        }
    }
    for (frame, expected) in case["volumes"].as_array().unwrap().iter().enumerate() {
        let volume = stack.decode_frame(frame);
        let expected = numbers(expected);
        assert_eq!(volume.values.len(), expected.len());
        for (index, (&got, &want)) in volume.values.iter().zip(&expected).enumerate() {
            assert!((f64::from(got) - want).abs() <= 1e-7, "volume {frame} voxel {index}: {got} vs {want}");
        }
        assert_eq!(volume.header.dim[0], 3, "a participant's volume is described as 3D");
    }
}

#[test]
fn merged_4d_nifti_rows_in_table_order() {
    // Participants along the 4th dimension in participants-table order: feature row t is
    // atanh(volume t) (Fisher 1921) at every voxel, compared with nibabel's values.
    let reference = reference();
    let table = read_participants(&data("formats/participants.tsv")).unwrap();
    let inputs = InputOptions {
        patterns: vec![data("formats/merged_4d.nii.gz").display().to_string()],
        match_column: None,
    };
    let cohort = discover_inputs(&inputs, &table).unwrap();
    assert_eq!(cohort.participant_ids, ["sub-01", "sub-02", "sub-03", "sub-04", "sub-05"]);
    let features = build_features(&cohort, &options(ValueScale::Correlation)).unwrap();
    let FeatureSpace::Voxels(space) = &features.space else { panic!("voxel space expected") };
    assert_eq!(space.reference_header.dim[0], 3);
    let volumes = reference["merged_4d"]["volumes"].as_array().unwrap();
    for (row, volume) in volumes.iter().enumerate() {
        let volume = numbers(volume);
        for (column, &voxel) in space.mask.iter().enumerate() {
            let want = volume[voxel].atanh();
            let got = f64::from(features.matrix.values[[row, column]]);
            assert!((got - want).abs() <= 1e-6 * want.abs().max(1.0), "row {row} voxel {voxel}");
        }
    }
}

#[test]
fn merged_4d_nifti_count_must_equal_the_table() {
    let dir = tempfile::tempdir().unwrap();
    let table_path = dir.path().join("participants.tsv");
    std::fs::write(&table_path, "participant_id\nsub-01\nsub-02\nsub-03\n").unwrap();
    let table = read_participants(&table_path).unwrap();
    let inputs = InputOptions {
        patterns: vec![data("formats/merged_4d.nii.gz").display().to_string()],
        match_column: None,
    };
    let message = discover_inputs(&inputs, &table).unwrap_err().to_string();
    assert!(
        message.contains("merged_4d.nii.gz: 4D image with 5 volumes along the 4th dimension but"),
        "{message}"
    );
    assert!(
        message.contains(
            "has 3 participants; a merged 4D NIfTI must hold one 3D volume per table row, in table order"
        ),
        "{message}"
    );
}

#[test]
fn a_4d_file_among_several_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let table_path = dir.path().join("participants.tsv");
    std::fs::write(&table_path, "participant_id\nsub-01\nsub-02\n").unwrap();
    for id in ["sub-01", "sub-02"] {
        std::fs::copy(data("formats/merged_4d.nii.gz"), dir.path().join(format!("{id}_map.nii.gz"))).unwrap();
    }
    let table = read_participants(&table_path).unwrap();
    let inputs = InputOptions {
        patterns: vec![format!("{}/sub-*_map.nii.gz", dir.path().display())],
        match_column: None,
    };
    let cohort = discover_inputs(&inputs, &table).unwrap();
    let message = build_features(&cohort, &options(ValueScale::Correlation)).unwrap_err().to_string();
    assert!(message.contains("sub-01_map.nii.gz: participant sub-01: image of shape 4x5x3x5; expected one 3D seed map per participant, or a single merged 4D file"), "{message}");
}
