//! NIfTI-1 and NIfTI-2 reading against nibabel: small files written by nibabel 5.4.2 and the
//! values its get_fdata gives (tests/data/generators/nifti_inputs.py), including int16 with
//! scl_slope/scl_inter (NIfTI-1 and -2: y = slope * x + inter), big-endian float64 and int16, a
//! qform-only affine, and a NIfTI-2 oblique sform whose float64 entries float32 cannot hold
//! exactly.

use serde_json::Value;
use strata::read::nifti::read_volume;

#[test]
fn volumes_match_nibabel() {
    let root = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/");
    let reference: Value =
        serde_json::from_str(&std::fs::read_to_string(format!("{root}nifti_reference.json")).unwrap())
            .unwrap();
    let files = reference["files"].as_array().unwrap();
    assert_eq!(files.len(), 5);
    let mut nifti2 = 0;
    for case in files {
        let path = format!("{root}{}", case["file"].as_str().unwrap());
        // The header version nibabel wrote (sizeof_hdr 348: NIfTI-1, 540: NIfTI-2), as read by
        // strata (big-endian files read 540 the other way round).
        let volume = read_volume(std::path::Path::new(&path), "sub-test").unwrap();
        let sizeof_hdr = case["sizeof_hdr"].as_i64().unwrap();
        assert_eq!(sizeof_hdr == 540, strata::read::nifti2::byte_order(&decoded(&path)).is_some(), "{path}");
        nifti2 += usize::from(sizeof_hdr == 540);
        assert_eq!(volume.header.sizeof_hdr, 348, "{path}: described by a NIfTI-1 header");
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
    assert_eq!(nifti2, 2, "two NIfTI-2 files");
}

/// The file's bytes, gunzipped when compressed.
fn decoded(path: &str) -> Vec<u8> {
    use std::io::Read;
    let bytes = std::fs::read(path).unwrap();
    if !path.ends_with(".gz") {
        return bytes;
    }
    let mut out = Vec::new();
    flate2::read::GzDecoder::new(&bytes[..]).read_to_end(&mut out).unwrap();
    out
}
