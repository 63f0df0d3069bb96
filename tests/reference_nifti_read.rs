//! NIfTI-1 reading against nibabel: small files written by nibabel 5.4.2 and the values its
//! get_fdata gives (tests/data/generators/nifti_inputs.py), including int16 with
//! scl_slope/scl_inter (NIfTI-1: y = slope * x + inter), big-endian float64 and a qform-only
//! affine.

use serde_json::Value;
use strata::read::nifti::read_volume;

#[test]
fn volumes_match_nibabel() {
    let root = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/");
    let reference: Value =
        serde_json::from_str(&std::fs::read_to_string(format!("{root}nifti_reference.json")).unwrap())
            .unwrap();
    let files = reference["files"].as_array().unwrap();
    assert_eq!(files.len(), 3);
    for case in files {
        let path = format!("{root}{}", case["file"].as_str().unwrap());
        let volume = read_volume(std::path::Path::new(&path), "sub-test").unwrap();
        let shape: Vec<usize> =
            case["shape"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
        assert_eq!(volume.dim.to_vec(), shape, "{path}");
        for (row, expected_row) in case["affine"].as_array().unwrap().iter().enumerate().take(3) {
            for (col, expected) in expected_row.as_array().unwrap().iter().enumerate() {
                assert!(
                    (volume.affine[row][col] - expected.as_f64().unwrap()).abs() < 1e-5,
                    "{path} affine[{row}][{col}]"
                );
            }
        }
        let expected: Vec<f64> =
            case["values"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
        assert_eq!(volume.values.len(), expected.len());
        for (index, (&got, &want)) in volume.values.iter().zip(&expected).enumerate() {
            // f32 storage of nibabel's float64 values.
            assert!(
                (f64::from(got) - want).abs() <= 1e-6 * want.abs().max(1.0),
                "{path}[{index}]: {got} vs {want}"
            );
        }
    }
}
