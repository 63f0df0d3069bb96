//! Readers of the other input formats against the formats' reference libraries: files written by
//! nibabel 5.4.2 (tests/data/generators/input_formats.py) and the values the library reads back
//! (tests/data/formats_reference.json); and every bad input through the reader, with its message.

use std::path::{Path, PathBuf};

use serde_json::Value;
use strata::features::{build_features, FeatureOptions, FeatureSpace, ValueScale, ValueTransform};
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
    FeatureOptions { mask: None, values, transform: ValueTransform::None, region_names: None }
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
        variable: None,
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
        variable: None,
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
        variable: None,
    };
    let cohort = discover_inputs(&inputs, &table).unwrap();
    let message = build_features(&cohort, &options(ValueScale::Correlation)).unwrap_err().to_string();
    assert!(message.contains("sub-01_map.nii.gz: participant sub-01: image of shape 4x5x3x5; expected one 3D seed map per participant, or a single merged 4D file"), "{message}");
}

fn stacked_counts(
    values: ValueScale,
    transform: ValueTransform,
) -> Result<strata::features::Features, String> {
    let table = read_participants(&data("formats/participants.tsv")).unwrap();
    let inputs = InputOptions {
        patterns: vec![data("formats/counts_stack.npy").display().to_string()],
        match_column: None,
        variable: None,
    };
    let cohort = discover_inputs(&inputs, &table).unwrap();
    build_features(&cohort, &FeatureOptions { mask: None, values, transform, region_names: None })
        .map_err(|error| error.to_string())
}

#[test]
fn raw_counts_and_log1p_equal_numpy() {
    // Reference: numpy 2.4.6 upper triangles (triu_indices(6, 1)) of the counts, and numpy.log1p.
    let reference = reference();
    for (transform, key) in [(ValueTransform::None, "raw"), (ValueTransform::Log1p, "log1p")] {
        let features = stacked_counts(ValueScale::Raw, transform).unwrap();
        let expected = reference["counts"][key].as_array().unwrap();
        assert_eq!(features.matrix.values.dim(), (5, 15));
        for (row, expected) in expected.iter().enumerate() {
            for (column, want) in numbers(expected).into_iter().enumerate() {
                let got = f64::from(features.matrix.values[[row, column]]);
                assert!(
                    (got - want).abs() <= 1e-6 * want.abs().max(1.0),
                    "{key} [{row}, {column}]: {got} vs {want}"
                );
            }
        }
    }
    // The same counts as correlations are refused, and the message points at --values raw.
    let message = stacked_counts(ValueScale::Correlation, ValueTransform::None).unwrap_err();
    assert!(
        message.contains(
            "participant sub-01: row 1, column 2: value 46 is outside [-1, 1], so it is not a correlation"
        ),
        "{message}"
    );
    assert!(
        message.contains("if they are not correlations (counts, densities), pass --values raw"),
        "{message}"
    );
}

#[test]
fn log1p_of_a_negative_value_names_file_and_participant() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("participants.tsv"), "participant_id\nsub-01\nsub-02\n").unwrap();
    std::fs::write(dir.path().join("sub-01_counts.csv"), "0,3,4\n3,0,5\n4,5,0\n").unwrap();
    std::fs::write(dir.path().join("sub-02_counts.csv"), "0,3,4\n3,0,-2\n4,-2,0\n").unwrap();
    let table = read_participants(&dir.path().join("participants.tsv")).unwrap();
    let inputs = InputOptions {
        patterns: vec![format!("{}/sub-*_counts.csv", dir.path().display())],
        match_column: None,
        variable: None,
    };
    let cohort = discover_inputs(&inputs, &table).unwrap();
    let options = FeatureOptions {
        mask: None,
        values: ValueScale::Raw,
        transform: ValueTransform::Log1p,
        region_names: None,
    };
    let message = build_features(&cohort, &options).unwrap_err().to_string();
    assert!(
        message.contains("sub-02_counts.csv: participant sub-02: row 2, column 3: value -2 is negative; --transform log1p is for counts and densities (0 or more)"),
        "{message}"
    );
}

#[test]
fn transform_needs_raw_values() {
    use strata::config::{RunConfig, Transform, Values};
    let mut config = RunConfig::with_defaults(
        vec!["x.npy".into()],
        "participants.tsv".into(),
        "diagnosis",
        ("a", "b"),
        "out".into(),
    );
    config.transform = Transform::Log1p;
    let message = config.clone().validate().unwrap_err().to_string();
    assert!(
        message.starts_with("--transform: applies to raw values (counts, densities) only; pass --values raw"),
        "{message}"
    );
    config.values = Values::Raw;
    assert!(config.validate().is_ok());
}

// MATLAB level-5 `.mat`: files written by scipy 1.17.1 io.savemat (do_compression False and
// True), compared with what scipy.io.loadmat reads back (row-major lists of the MATLAB arrays).

fn matrix_of(value: &Value) -> Vec<Vec<f64>> {
    value.as_array().unwrap().iter().map(numbers).collect()
}

fn mat_reference(name: &str) -> Value {
    reference()["mat"]["files"][name].clone()
}

#[test]
fn mat_level5_plain_and_compressed_equal_scipy() {
    use strata::read::mat::{list_variables, matrix_of as mat_matrix, read_variable};
    for name in ["matrix_plain.mat", "matrix_compressed.mat"] {
        let path = data(&format!("formats/mat/{name}"));
        let listed: Vec<String> =
            list_variables(&path, "sub-01").unwrap().iter().map(|variable| variable.describe()).collect();
        assert_eq!(
            listed,
            ["atlas (char 1x10)", "conn (double 3x4)", "counts (int16 3x4)", "names (cell 3x1)"],
            "{name}"
        );
        let expected = mat_reference(name);
        for variable in ["conn", "counts"] {
            let array = read_variable(&path, "sub-01", Some(variable)).unwrap();
            // Column-major storage turned round: a 3 x 4 matrix that is not symmetric.
            let matrix = mat_matrix(&array, &path, "sub-01").unwrap();
            let want = matrix_of(&expected[variable]);
            assert_eq!(matrix.dim(), (3, 4));
            for (i, row) in want.iter().enumerate() {
                for (j, &value) in row.iter().enumerate() {
                    assert!((matrix[[i, j]] - value).abs() <= 1e-12, "{name} {variable}[{i}, {j}]");
                }
            }
        }
    }
}

#[test]
fn mat_per_participant_and_stacks_give_the_same_features_as_scipy() {
    let table = read_participants(&data("formats/participants.tsv")).unwrap();
    let per_participant: Vec<Vec<Vec<f64>>> =
        (1..=5).map(|k| matrix_of(&mat_reference(&format!("sub-0{k}_conn.mat"))["conn"])).collect();
    let stack_rrn: Vec<Vec<Vec<f64>>> =
        mat_reference("stack_rrn.mat")["conn"].as_array().unwrap().iter().map(matrix_of).collect();
    let stack_nrr: Vec<Vec<Vec<f64>>> =
        mat_reference("stack_nrr.mat")["conn"].as_array().unwrap().iter().map(matrix_of).collect();
    for (pattern, variable, expected, tolerance) in [
        ("formats/mat/sub-*_conn.mat", Some("conn"), &per_participant, 1e-6),
        ("formats/mat/stack_rrn.mat", None, &stack_rrn, 1e-6),
        // float32 storage.
        ("formats/mat/stack_nrr.mat", Some("conn"), &stack_nrr, 1e-5),
    ] {
        let inputs = InputOptions {
            patterns: vec![data(pattern).display().to_string()],
            match_column: None,
            variable: variable.map(str::to_string),
        };
        let cohort = discover_inputs(&inputs, &table).unwrap();
        let features = build_features(&cohort, &options(ValueScale::Correlation)).unwrap();
        assert_eq!(features.matrix.values.dim(), (5, 15), "{pattern}");
        for (row, matrix) in expected.iter().enumerate() {
            let upper = (0..6).flat_map(|i| ((i + 1)..6).map(move |j| (i, j)));
            for (column, (i, j)) in upper.enumerate() {
                // Fisher 1921: z = atanh(r), upper triangle in numpy triu_indices order.
                let want = matrix[i][j].atanh();
                let got = f64::from(features.matrix.values[[row, column]]);
                assert!((got - want).abs() <= tolerance * want.abs().max(1.0), "{pattern} [{row}, {column}]");
            }
        }
    }
}

fn mat_error(pattern: &str, variable: Option<&str>, table_rows: &[&str]) -> String {
    let dir = tempfile::tempdir().unwrap();
    let table_path = dir.path().join("participants.tsv");
    std::fs::write(&table_path, format!("participant_id\n{}\n", table_rows.join("\n"))).unwrap();
    let table = read_participants(&table_path).unwrap();
    let inputs = InputOptions {
        patterns: vec![pattern.to_string()],
        match_column: None,
        variable: variable.map(str::to_string),
    };
    match discover_inputs(&inputs, &table) {
        Err(error) => error.to_string(),
        Ok(cohort) => build_features(&cohort, &options(ValueScale::Correlation)).unwrap_err().to_string(),
    }
}

#[test]
fn bad_mat_inputs_are_refused_with_their_reason() {
    let five = ["sub-01", "sub-02", "sub-03", "sub-04", "sub-05"];
    let stack = data("formats/mat/stack_rrn.mat").display().to_string();
    let message = mat_error(&stack, Some("connectivity"), &five);
    assert!(
        message.contains("no variable named 'connectivity'; the file holds conn (double 6x6x5)"),
        "{message}"
    );

    let message = mat_error(&stack, None, &five[..3]);
    assert!(
        message.contains("stack of 5 matrices but")
            && message.contains(
                "has 3 participants; a stacked R x R x N variable must hold one matrix per table row"
            ),
        "{message}"
    );

    let message = mat_error(&data("formats/mat/four_dims.mat").display().to_string(), None, &five);
    assert!(message.contains("variable conn (double 2x2x2x2) has 4 dimensions; expected an R x R matrix per participant or one R x R x N stack"), "{message}");

    let message = mat_error(&data("formats/mat/not_a_stack.mat").display().to_string(), None, &five);
    assert!(message.contains("variable conn (double 3x4x5) is neither R x R x N"), "{message}");

    // Two participants' files: one 3 x 4 (not square), one with several numeric variables.
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(data("formats/mat/matrix_compressed.mat"), dir.path().join("sub-01_conn.mat")).unwrap();
    std::fs::copy(data("formats/mat/sub-02_conn.mat"), dir.path().join("sub-02_conn.mat")).unwrap();
    let pattern = format!("{}/sub-*_conn.mat", dir.path().display());
    let message = mat_error(&pattern, None, &five[..2]);
    assert!(message.contains("sub-01_conn.mat: participant sub-01: 2 numeric variables (atlas (char 1x10), conn (double 3x4), counts (int16 3x4), names (cell 3x1)); choose one with --variable NAME"), "{message}");
    let message = mat_error(&pattern, Some("conn"), &five[..2]);
    assert!(
        message.contains("sub-01_conn.mat: participant sub-01: matrix of shape 3x4 is not square"),
        "{message}"
    );
    let message = mat_error(&pattern, Some("names"), &five[..2]);
    assert!(
        message.contains("participant sub-01: variable names is a cell array; strata reads numeric arrays"),
        "{message}"
    );

    // NaN off the diagonal.
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(data("formats/mat/with_nan.mat"), dir.path().join("sub-01_conn.mat")).unwrap();
    std::fs::copy(data("formats/mat/sub-02_conn.mat"), dir.path().join("sub-02_conn.mat")).unwrap();
    let message = mat_error(&format!("{}/sub-*_conn.mat", dir.path().display()), Some("conn"), &five[..2]);
    assert!(
        message.contains("sub-01_conn.mat: participant sub-01: value NaN at row 3, column 5 (1-based)"),
        "{message}"
    );

    // Truncated inside the variable read, and not a MAT-file at all.
    for (first, second, expected) in [
        (
            &bytes_of("formats/mat/sub-01_conn.mat")[..200],
            bytes_of("formats/mat/sub-02_conn.mat"),
            "sub-01_conn.mat: participant sub-01: the file ends inside a data element; it is truncated or corrupt",
        ),
        (
            &bytes_of("formats/mat/sub-01_conn.mat")[..],
            b"conn = [1 0.5; 0.5 1]\n".to_vec(),
            "sub-02_conn.mat: participant sub-02: 22 bytes, shorter than the 128-byte MAT-file header",
        ),
    ] {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("sub-01_conn.mat"), first).unwrap();
        std::fs::write(dir.path().join("sub-02_conn.mat"), second).unwrap();
        let message = mat_error(&format!("{}/sub-*_conn.mat", dir.path().display()), Some("conn"), &five[..2]);
        assert!(message.contains(expected), "{message}");
    }
}

fn bytes_of(name: &str) -> Vec<u8> {
    std::fs::read(data(name)).unwrap()
}

#[test]
fn damaged_mat_files_give_errors_never_panics() {
    // Every truncation and a byte flipped at every position of two files (one compressed, one
    // not): the reader returns Ok or an error, and never panics.
    use strata::read::mat::{list_variables, read_variable};
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("damaged.mat");
    for name in ["formats/mat/matrix_plain.mat", "formats/mat/sub-01_conn.mat"] {
        let bytes = bytes_of(name);
        for cut in 0..bytes.len() {
            std::fs::write(&path, &bytes[..cut]).unwrap();
            let _ = list_variables(&path, "sub-01");
            let _ = read_variable(&path, "sub-01", Some("conn"));
        }
        for at in 0..bytes.len() {
            let mut flipped = bytes.clone();
            flipped[at] ^= 0xa5;
            std::fs::write(&path, &flipped).unwrap();
            let _ = list_variables(&path, "sub-01");
            let _ = read_variable(&path, "sub-01", Some("conn"));
        }
    }
}

// HDF5 and MATLAB v7.3: files written by h5py 3.16.0 (chunked, gzip, shuffle; a v7.3-style file
// with a 512-byte user block and MATLAB's reversed dimensions), compared with what h5py reads
// back (tests/data/generators/input_formats.py).

fn hdf5_reference(name: &str) -> Value {
    reference()["hdf5"]["files"][name].clone()
}

fn assert_matrix(got: &ndarray::Array2<f64>, want: &[Vec<f64>], tolerance: f64, what: &str) {
    assert_eq!(got.dim(), (want.len(), want[0].len()), "{what}");
    for (i, row) in want.iter().enumerate() {
        for (j, &value) in row.iter().enumerate() {
            assert!(
                (got[[i, j]] - value).abs() <= tolerance,
                "{what} [{i}, {j}]: {} vs {value}",
                got[[i, j]]
            );
        }
    }
}

#[test]
fn hdf5_chunked_and_matlab_v73_equal_h5py() {
    use strata::read::mat::{
        list_variables, matrix_of as mat_matrix, read_variable, stack_axis, stack_matrix,
    };
    let path = data("formats/h5/stack_chunked.h5");
    let listed: Vec<String> = list_variables(&path, "sub-01").unwrap().iter().map(|v| v.describe()).collect();
    assert_eq!(
        listed,
        ["group/conn (double 5x6x6)", "ints (double 3x4)", "names (unknown 3)", "plain (double 3x4)"]
    );
    let expected = hdf5_reference("stack_chunked.h5");
    for name in ["plain", "ints"] {
        let array = read_variable(&path, "sub-01", Some(name)).unwrap();
        let want = matrix_of(&expected[name]);
        assert_matrix(&mat_matrix(&array, &path, "sub-01").unwrap(), &want, 1e-7, name);
    }
    let stack = read_variable(&path, "sub-01", Some("/group/conn")).unwrap();
    assert_eq!(stack_axis(&stack.variable), Some(0));
    for (k, want) in expected["group/conn"].as_array().unwrap().iter().enumerate() {
        assert_matrix(&stack_matrix(&stack, 0, k), &matrix_of(want), 1e-12, "group/conn");
    }

    // MATLAB v7.3: rect is 3 x 4 in MATLAB (stored 4 x 3 in HDF5); conn is R x R x N.
    let path = data("formats/h5/matlab_v73.mat");
    let expected = hdf5_reference("matlab_v73.mat");
    let rect = read_variable(&path, "sub-01", Some("rect")).unwrap();
    assert_eq!(rect.variable.dims, [3, 4]);
    assert_matrix(&mat_matrix(&rect, &path, "sub-01").unwrap(), &matrix_of(&expected["rect"]), 1e-12, "rect");
    let conn = read_variable(&path, "sub-01", Some("conn")).unwrap();
    assert_eq!(conn.variable.dims, [6, 6, 5]);
    assert_eq!(stack_axis(&conn.variable), Some(2));
    for (k, want) in expected["conn"].as_array().unwrap().iter().enumerate() {
        assert_matrix(&stack_matrix(&conn, 2, k), &matrix_of(want), 1e-12, "conn");
    }
}

#[test]
fn hdf5_and_v73_stacks_give_features_in_table_order() {
    let table = read_participants(&data("formats/participants.tsv")).unwrap();
    for (file, dataset, key) in
        [("stack_chunked.h5", "/group/conn", "group/conn"), ("matlab_v73.mat", "conn", "conn")]
    {
        let inputs = InputOptions {
            patterns: vec![data(&format!("formats/h5/{file}")).display().to_string()],
            match_column: None,
            variable: Some(dataset.into()),
        };
        let cohort = discover_inputs(&inputs, &table).unwrap();
        let features = build_features(&cohort, &options(ValueScale::Correlation)).unwrap();
        let expected = hdf5_reference(file);
        for (row, matrix) in expected[key].as_array().unwrap().iter().map(matrix_of).enumerate() {
            let upper = (0..6).flat_map(|i| ((i + 1)..6).map(move |j| (i, j)));
            for (column, (i, j)) in upper.enumerate() {
                // Fisher 1921: z = atanh(r).
                let want = matrix[i][j].atanh();
                let got = f64::from(features.matrix.values[[row, column]]);
                assert!((got - want).abs() <= 1e-6 * want.abs().max(1.0), "{file} [{row}, {column}]");
            }
        }
    }
}

#[test]
fn bad_hdf5_inputs_are_refused_with_their_reason() {
    let five = ["sub-01", "sub-02", "sub-03", "sub-04", "sub-05"];
    let stack = data("formats/h5/stack_chunked.h5").display().to_string();
    let message = mat_error(&stack, Some("conn"), &five);
    assert!(
        message.contains("no dataset 'conn'; the file holds group/conn (5x6x6), ints (3x4), names (non-numeric 3), plain (3x4); give one of them with --dataset"),
        "{message}"
    );
    let message = mat_error(&stack, None, &five);
    assert!(message.contains("3 numeric datasets ("), "{message}");
    assert!(message.contains("choose one with --dataset PATH"), "{message}");

    let dir = tempfile::tempdir().unwrap();
    for id in ["sub-01", "sub-02"] {
        std::fs::copy(data("formats/h5/stack_chunked.h5"), dir.path().join(format!("{id}_conn.h5"))).unwrap();
    }
    let pattern = format!("{}/sub-*_conn.h5", dir.path().display());
    let message = mat_error(&pattern, Some("plain"), &five[..2]);
    assert!(
        message.contains("sub-01_conn.h5: participant sub-01: matrix of shape 3x4 is not square"),
        "{message}"
    );
    let message = mat_error(&pattern, Some("names"), &five[..2]);
    assert!(message.contains("participant sub-01: dataset 'names' is of element type"), "{message}");
    assert!(message.contains("strata reads numeric arrays"), "{message}");

    let dir = tempfile::tempdir().unwrap();
    let bytes = bytes_of("formats/h5/stack_chunked.h5");
    std::fs::write(dir.path().join("sub-01_conn.h5"), &bytes[..3000]).unwrap();
    std::fs::copy(data("formats/h5/stack_chunked.h5"), dir.path().join("sub-02_conn.h5")).unwrap();
    let message = mat_error(&format!("{}/sub-*_conn.h5", dir.path().display()), Some("plain"), &five[..2]);
    assert!(message.contains("sub-01_conn.h5: participant sub-01: cannot"), "{message}");
    assert!(
        message.contains("the file is truncated, corrupt")
            || message.contains("the file is truncated or corrupt"),
        "{message}"
    );

    // A MATLAB v7.3 file per participant: the 3 x 4 variable (4 x 3 in HDF5) is named as MATLAB
    // sees it.
    let dir = tempfile::tempdir().unwrap();
    for id in ["sub-01", "sub-02"] {
        std::fs::copy(data("formats/h5/matlab_v73.mat"), dir.path().join(format!("{id}_conn.mat"))).unwrap();
    }
    let message = mat_error(&format!("{}/sub-*_conn.mat", dir.path().display()), Some("rect"), &five[..2]);
    assert!(
        message.contains("sub-01_conn.mat: participant sub-01: matrix of shape 3x4 is not square"),
        "{message}"
    );
}

#[test]
fn damaged_hdf5_files_give_errors_never_panics() {
    // Truncations and flipped bytes across an h5py file (every 11th position, to keep the test
    // short): the reader returns Ok or an error, and never panics or aborts.
    use strata::read::mat::read_variable;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("damaged.h5");
    let bytes = bytes_of("formats/h5/stack_chunked.h5");
    for at in (0..bytes.len()).step_by(11) {
        std::fs::write(&path, &bytes[..at]).unwrap();
        let _ = read_variable(&path, "sub-01", Some("group/conn"));
        let mut flipped = bytes.clone();
        flipped[at] ^= 0xff;
        std::fs::write(&path, &flipped).unwrap();
        let _ = read_variable(&path, "sub-01", Some("group/conn"));
    }
}

// CIFTI-2 parcellated connectivity: .pconn.nii files written by nibabel 5.4.2 (cifti2), compared
// with nibabel's get_fdata and the parcel names of its ParcelsAxis.

fn cifti_reference(name: &str) -> Value {
    reference()["cifti"]["files"][name].clone()
}

fn strings(value: &Value) -> Vec<String> {
    value.as_array().unwrap().iter().map(|v| v.as_str().unwrap().to_string()).collect()
}

#[test]
fn pconn_matrix_and_parcel_names_equal_nibabel() {
    use strata::read::cifti::read_pconn;
    for name in ["asymmetric.pconn.nii", "sub-01_conn.pconn.nii", "renamed.pconn.nii"] {
        let pconn = read_pconn(&data(&format!("formats/cifti/{name}")), "sub-01").unwrap();
        let expected = cifti_reference(name);
        // A matrix that is not symmetric checks the storage order (row index fastest).
        assert_matrix(&pconn.matrix, &matrix_of(&expected["matrix"]), 1e-7, name);
        assert_eq!(pconn.parcel_names, strings(&expected["names"]), "{name}");
    }
    let names = read_pconn(&data("formats/cifti/sub-01_conn.pconn.nii"), "sub-01").unwrap().parcel_names;
    assert_eq!(names[0], "Visual & Occipital");
    assert_eq!(names[2], "Dorsal <Attention>");
}

#[test]
fn pconn_cohort_takes_parcel_names_as_region_names() {
    let table = read_participants(&data("formats/participants.tsv")).unwrap();
    let inputs = InputOptions {
        patterns: vec![data("formats/cifti/sub-*_conn.pconn.nii").display().to_string()],
        match_column: None,
        variable: None,
    };
    let cohort = discover_inputs(&inputs, &table).unwrap();
    let features = build_features(&cohort, &options(ValueScale::Correlation)).unwrap();
    let FeatureSpace::Edges(space) = &features.space else { panic!("edge space expected") };
    assert_eq!(space.region_names, strings(&cifti_reference("sub-01_conn.pconn.nii")["names"]));
    for row in 0..5 {
        let matrix = matrix_of(&cifti_reference(&format!("sub-0{}_conn.pconn.nii", row + 1))["matrix"]);
        let upper = (0..6).flat_map(|i| ((i + 1)..6).map(move |j| (i, j)));
        for (column, (i, j)) in upper.enumerate() {
            // Fisher 1921: z = atanh(r).
            let want = matrix[i][j].atanh();
            let got = f64::from(features.matrix.values[[row, column]]);
            assert!((got - want).abs() <= 1e-6 * want.abs().max(1.0), "[{row}, {column}]");
        }
    }
}

#[test]
fn bad_pconn_inputs_are_refused_with_their_reason() {
    let five = ["sub-01", "sub-02", "sub-03", "sub-04", "sub-05"];
    let run = |second: &[u8], first: Option<&[u8]>| -> String {
        let dir = tempfile::tempdir().unwrap();
        let first = first.map_or_else(|| bytes_of("formats/cifti/sub-01_conn.pconn.nii"), <[u8]>::to_vec);
        std::fs::write(dir.path().join("sub-01_conn.pconn.nii"), first).unwrap();
        std::fs::write(dir.path().join("sub-02_conn.pconn.nii"), second).unwrap();
        mat_error(&format!("{}/sub-*_conn.pconn.nii", dir.path().display()), None, &five[..2])
    };
    let message = run(&bytes_of("formats/cifti/renamed.pconn.nii"), None);
    assert!(
        message.contains("sub-02_conn.pconn.nii: participant sub-02: parcel 4 is 'Frontoparietal' but in")
            && message.contains("it is 'Salience \"Ventral\"'; every participant needs the same parcellation in the same order"),
        "{message}"
    );
    let message = run(&bytes_of("formats/cifti/asymmetric.pconn.nii"), None);
    assert!(message.contains("participant sub-02: 4 regions but"), "{message}");
    // The 4 x 4 matrix is not symmetric.
    let message = run(
        &bytes_of("formats/cifti/sub-02_conn.pconn.nii"),
        Some(&bytes_of("formats/cifti/asymmetric.pconn.nii")),
    );
    assert!(message.contains("participant sub-01: matrix is not symmetric: entry (1, 2) = 0.05000000074505806 but (2, 1) = 0.2000000029802"), "{message}");
    // A NIfTI-1 file named .pconn.nii, a truncated one, a CIFTI file of another intent.
    let message = run(&bytes_of("nifti/int16_scaled.nii"), None);
    assert!(
        message.contains("participant sub-02: not a NIfTI-2 header (sizeof_hdr is not 540)"),
        "{message}"
    );
    let good = bytes_of("formats/cifti/sub-02_conn.pconn.nii");
    let message = run(&good[..good.len() - 10], None);
    assert!(
        message.contains("participant sub-02: ")
            && message.contains("bytes of data for a 6 x 6 matrix; the file is truncated"),
        "{message}"
    );
    let mut dense = good.clone();
    dense[504..508].copy_from_slice(&3001i32.to_le_bytes());
    let message = run(&dense, None);
    assert!(
        message.contains("participant sub-02: NIfTI intent code 3001 is not parcellated connectivity (3003)"),
        "{message}"
    );
    // NaN in a matrix.
    let mut with_nan = good.clone();
    let offset = i64::from_le_bytes(good[168..176].try_into().unwrap()) as usize;
    let at = offset + 4 * (1 + 6 * 3); // element (1, 3), 0-based: row index fastest
    with_nan[at..at + 4].copy_from_slice(&f32::NAN.to_le_bytes());
    let message = run(&with_nan, None);
    assert!(message.contains("participant sub-02: value NaN at row 2, column 4 (1-based)"), "{message}");
}

#[test]
fn damaged_pconn_files_give_errors_never_panics() {
    // Every truncation and a byte flipped at every position of a nibabel-written file.
    use strata::read::cifti::read_pconn;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("damaged.pconn.nii");
    let bytes = bytes_of("formats/cifti/sub-01_conn.pconn.nii");
    for at in 0..bytes.len() {
        std::fs::write(&path, &bytes[..at]).unwrap();
        assert!(read_pconn(&path, "sub-01").is_err(), "truncated at {at}");
        let mut flipped = bytes.clone();
        flipped[at] ^= 0xff;
        std::fs::write(&path, &flipped).unwrap();
        let _ = read_pconn(&path, "sub-01");
    }
}

// Measure tables: standardised scores against scipy 1.17.1 stats.zscore(ddof=1) of the complete
// participants (tests/data/generators/input_formats.py).

#[test]
fn measures_are_standardised_like_scipy_and_missing_values_named() {
    use strata::read::{discover_measures, MissingMeasure};
    let reference = reference();
    let expected = &reference["measures"];
    let names = strings(&expected["names"]);
    let table = read_participants(&data("formats/measures/participants.tsv")).unwrap();
    for file in [None, Some(data("formats/measures/scores.tsv"))] {
        // From the participants table (columns named) and from the separate table (all numeric
        // columns: the text column 'site' is left out).
        let columns = if file.is_none() { names.clone() } else { Vec::new() };
        let (cohort, missing) = discover_measures(&table, &columns, file.as_deref()).unwrap();
        assert_eq!(missing, [MissingMeasure { participant: "sub-05".into(), column: "attention".into() }]);
        assert_eq!(cohort.participant_ids, strings(&expected["participants"]));
        let features = build_features(&cohort, &options(ValueScale::Correlation)).unwrap();
        let FeatureSpace::Measures(space) = &features.space else { panic!("measure space expected") };
        assert_eq!(space.names, names);
        for (row, want) in expected["zscores"].as_array().unwrap().iter().enumerate() {
            for (column, want) in numbers(want).into_iter().enumerate() {
                let got = f64::from(features.matrix.values[[row, column]]);
                assert!((got - want).abs() <= 1e-6, "{file:?} [{row}, {column}]: {got} vs {want}");
            }
        }
    }
}

#[test]
fn bad_measure_tables_are_refused_with_their_reason() {
    use strata::read::discover_measures;
    let table = read_participants(&data("formats/measures/participants.tsv")).unwrap();
    let message = discover_measures(&table, &[], None).unwrap_err().to_string();
    assert!(
        message.contains(
            "--measures needs column names when the measures are columns of the participants table"
        ),
        "{message}"
    );
    let message = discover_measures(&table, &["memory".into(), "mood".into()], None).unwrap_err().to_string();
    assert!(
        message.contains(
            "no column 'mood'; the table has: participant_id, diagnosis, memory, attention, sleep_hours"
        ),
        "{message}"
    );
    let message =
        discover_measures(&table, &["memory".into(), "diagnosis".into()], None).unwrap_err().to_string();
    assert!(message.contains("participant sub-01: column 'diagnosis' holds 'control', not a number; write n/a for a missing value"), "{message}");
    let message = discover_measures(&table, &["memory".into()], None).unwrap_err().to_string();
    assert!(
        message.contains("1 measure column(s) (memory); a profile needs at least two measures"),
        "{message}"
    );
    // A participant of the table missing from the separate file; a constant measure.
    let dir = tempfile::tempdir().unwrap();
    let scores = dir.path().join("scores.tsv");
    std::fs::write(&scores, "participant_id\ta\tb\nsub-01\t1\t5\n").unwrap();
    let message = discover_measures(&table, &[], Some(&scores)).unwrap_err().to_string();
    assert!(message.contains("participant sub-02 of the participants table has no row here"), "{message}");
    let text: String = (1..=12).map(|k| format!("sub-{k:02}\t{k}\t3\n")).collect();
    std::fs::write(&scores, format!("participant_id\ta\tb\n{text}")).unwrap();
    let (cohort, _) = discover_measures(&table, &[], Some(&scores)).unwrap();
    let message = build_features(&cohort, &options(ValueScale::Correlation)).unwrap_err().to_string();
    assert!(message.contains("measure 'b' has the same value for every analysed participant"), "{message}");
}

#[test]
fn a_measures_run_writes_profiles_and_warns_by_name() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("results");
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_strata"))
        .args(["run", "--participants"])
        .arg(data("formats/measures/participants.tsv"))
        .args(["--measures", "memory,attention,sleep_hours", "--group-column", "diagnosis"])
        .args(["--contrast", "insomnia,control", "--trials", "2", "--random-graphs", "0", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(output.status.success(), "{stderr}");
    assert!(
        stderr.contains(
            "1 participant(s) left out of the analysis for missing measure values: sub-05 (attention)"
        ),
        "{stderr}"
    );
    // docs/outputs.md: the whole cohort's t map, as a profile table for measures.
    let profile =
        std::fs::read_to_string(out.join("maps/comm-all_contrast-insomniaVsControl_t.tsv")).unwrap();
    let lines: Vec<&str> = profile.lines().collect();
    assert_eq!(lines[0], "measure\tvalue");
    assert_eq!(lines.len(), 4, "{profile}");
    assert!(lines[1].starts_with("memory\t") && lines[3].starts_with("sleep_hours\t"), "{profile}");
    // scipy.stats.ttest_ind(equal_var=False) of the raw scores, insomnia minus control.
    let reference = reference();
    let welch = numbers(&reference["measures"]["welch_t"]);
    for (line, (name, want)) in
        lines[1..].iter().zip(["memory", "attention", "sleep_hours"].iter().zip(welch))
    {
        let (measure, value) = line.split_once('\t').unwrap();
        assert_eq!(measure, *name);
        let got: f64 = value.parse().unwrap();
        assert!((got - want).abs() <= 1e-5 * want.abs().max(1.0), "{name}: {got} vs {want}");
    }
}
