//! NIfTI map writing: header fields at their nifti1.h byte offsets, read-back through the nifti
//! crate, and (when nibabel is importable) an independent check with nibabel via
//! `tests/data/generators/check_nifti_nibabel.py`. Set `STRATA_REQUIRE_REFERENCE=1` (CI does)
//! to make a missing python3/nibabel a failure instead of a skip.

use std::io::Read;
use std::path::Path;
use std::process::Command;

use approx::assert_relative_eq;
use nifti::{IntoNdArray, NiftiObject, ReaderOptions};
use serde_json::{json, Value};
use strata::features::{FeatureSpace, VoxelSpace};
use strata::maps::{contrast_fields, groups_field, write_map, MapName, Statistic};

/// Grid of the test space.
const DIM: [usize; 3] = [5, 4, 3];

/// A 5 x 4 x 3 grid, 2 x 3 x 4 mm voxels, the same affine in sform (MNI, code 4) and qform
/// (scanner, code 1, identity rotation), and a mask of every third voxel.
fn voxel_space() -> (FeatureSpace, [[f64; 4]; 4]) {
    let affine = [[2.0, 0.0, 0.0, -10.0], [0.0, 3.0, 0.0, -20.5], [0.0, 0.0, 4.0, 6.0], [0.0, 0.0, 0.0, 1.0]];
    let mut header = nifti::NiftiHeader {
        dim: [3, DIM[0] as u16, DIM[1] as u16, DIM[2] as u16, 1, 1, 1, 1],
        pixdim: [1.0, 2.0, 3.0, 4.0, 2.5, 1.0, 1.0, 1.0],
        sform_code: 4,
        qform_code: 1,
        srow_x: [2.0, 0.0, 0.0, -10.0],
        srow_y: [0.0, 3.0, 0.0, -20.5],
        srow_z: [0.0, 0.0, 4.0, 6.0],
        quatern_x: -10.0,
        quatern_y: -20.5,
        quatern_z: 6.0,
        xyzt_units: 2 | 8, // mm, seconds: the time bits must be dropped on output
        slice_duration: 0.5,
        datatype: 4,    // int16 input: output must still be float32
        intent_code: 5, // a stale input intent must not survive
        ..Default::default()
    };
    header.set_description(b"input map description".to_vec()).unwrap();
    let mask: Vec<usize> = (0..DIM.iter().product::<usize>()).step_by(3).collect();
    let space = VoxelSpace { dim: DIM, voxel_size: [2.0, 3.0, 4.0], affine, reference_header: header, mask };
    (FeatureSpace::Voxels(space), affine)
}

fn mask_of(space: &FeatureSpace) -> &[usize] {
    match space {
        FeatureSpace::Voxels(voxels) => &voxels.mask,
        FeatureSpace::Edges(_) | FeatureSpace::Measures(_) => unreachable!(),
    }
}

/// The expected full volume (Fortran order): values at mask voxels, `fill` elsewhere.
fn expected_volume(mask: &[usize], values: &[f32], fill: f32) -> Vec<f32> {
    let mut volume = vec![fill; DIM.iter().product()];
    for (&voxel, &value) in mask.iter().zip(values) {
        volume[voxel] = value;
    }
    volume
}

fn gunzip(path: &Path) -> Vec<u8> {
    let file = std::fs::File::open(path).unwrap();
    let mut bytes = Vec::new();
    flate2::read::GzDecoder::new(file).read_to_end(&mut bytes).unwrap();
    bytes
}

fn f32_at(bytes: &[u8], offset: usize) -> f32 {
    f32::from_le_bytes(bytes[offset..offset + 4].try_into().unwrap())
}

fn i16_at(bytes: &[u8], offset: usize) -> i16 {
    i16::from_le_bytes(bytes[offset..offset + 2].try_into().unwrap())
}

fn t_values(count: usize) -> Vec<f32> {
    (0..count).map(|i| (i as f32 - 7.0) * 0.37).collect()
}

#[test]
fn t_map_with_uniform_dof_has_ttest_intent_at_byte_offsets() {
    let dir = tempfile::tempdir().unwrap();
    let (space, affine) = voxel_space();
    let name =
        MapName::builder().community("2").contrast("insomnia", "control").build_for(Statistic::T).unwrap();
    let values = t_values(space.feature_count());
    let extra = contrast_fields("insomnia", 9, "control", 11);
    let paths = write_map(dir.path(), &space, &name, Statistic::T, &values, &extra, Some(18.0)).unwrap();
    let nii = dir.path().join("comm-2_contrast-insomniaVsControl_t.nii.gz");
    assert_eq!(paths, vec![nii.clone(), dir.path().join("comm-2_contrast-insomniaVsControl_t.json")]);

    // Byte offsets: REFERENCES.md (computed from nibabel's header dtype; nifti1.h).
    let bytes = gunzip(&nii);
    assert_eq!(i32::from_le_bytes(bytes[0..4].try_into().unwrap()), 348, "sizeof_hdr");
    assert_eq!(f32_at(&bytes, 56), 18.0, "intent_p1 = dof");
    assert_eq!(i16_at(&bytes, 68), 3, "intent_code TTEST");
    assert_eq!(i16_at(&bytes, 70), 16, "datatype float32");
    assert_eq!(i16_at(&bytes, 72), 32, "bitpix");
    assert_eq!(f32_at(&bytes, 108), 352.0, "vox_offset");
    assert_eq!(f32_at(&bytes, 112), 1.0, "scl_slope");
    assert_eq!(f32_at(&bytes, 116), 0.0, "scl_inter");
    assert_eq!(bytes[123], 2, "xyzt_units: mm only, time bits dropped");
    assert_eq!(i16_at(&bytes, 252), 1, "qform_code copied");
    assert_eq!(i16_at(&bytes, 254), 4, "sform_code copied");
    let srow: Vec<f32> = (0..12).map(|k| f32_at(&bytes, 280 + 4 * k)).collect();
    let expected_rows: Vec<f32> = affine[..3].iter().flatten().map(|&v| v as f32).collect();
    assert_eq!(srow, expected_rows, "srow_x/y/z");
    assert_eq!(&bytes[328..336], b"Welch t\0", "intent_name");
    assert_eq!(&bytes[344..348], b"n+1\0", "magic");
    let descrip = String::from_utf8_lossy(&bytes[148..228]).trim_end_matches('\0').to_string();
    assert_eq!(descrip, format!("strata {} Welch t comm-2_contrast-insomniaVsControl_t", strata::VERSION));
    // Data follow the 4-byte extension flag at 348: Fortran order, 0 outside the mask.
    let expected = expected_volume(mask_of(&space), &values, 0.0);
    assert_eq!(bytes.len(), 352 + 4 * expected.len());
    let data: Vec<f32> = (0..expected.len()).map(|v| f32_at(&bytes, 352 + 4 * v)).collect();
    assert_eq!(data, expected);

    // Read back through the nifti crate.
    let object = ReaderOptions::new().read_file(&nii).unwrap();
    let header = object.header().clone();
    assert_eq!(header.intent_code, 3);
    assert_eq!(header.slice_duration, 0.0);
    assert_relative_eq!(header.cal_min, values.iter().cloned().fold(f32::INFINITY, f32::min));
    assert_relative_eq!(header.cal_max, values.iter().cloned().fold(f32::NEG_INFINITY, f32::max));
    let sform = header.sform_affine::<f64>();
    for (row, expected_row) in affine.iter().enumerate() {
        for (column, value) in expected_row.iter().enumerate() {
            assert_relative_eq!(sform[(row, column)], *value, epsilon = 1e-6);
        }
    }
    let volume = object.into_volume().into_ndarray::<f32>().unwrap();
    assert_eq!(volume.shape(), &DIM);
    // Element [i, j, k] is flat voxel i + nx (j + ny k).
    assert_eq!(volume[[2, 1, 0]], expected[2 + 5]);
    assert_eq!(volume[[4, 3, 2]], expected[4 + 5 * (3 + 4 * 2)]);

    // Sidecar.
    let sidecar: Value = serde_json::from_str(&std::fs::read_to_string(&paths[1]).unwrap()).unwrap();
    assert_eq!(sidecar["Statistic"], "Welch t");
    assert_eq!(sidecar["DegreesOfFreedom"], 18.0);
    assert_eq!(sidecar["Correction"], "none");
    assert_eq!(sidecar["Contrast"], "insomnia - control");
    assert_eq!(
        sidecar["Groups"],
        json!([{"Label": "insomnia", "Count": 9}, {"Label": "control", "Count": 11}])
    );
    assert_eq!(sidecar["Entities"], json!({"comm": "2", "contrast": "insomniaVsControl"}));
    assert_eq!(sidecar["Space"]["IntentCode"], 3);
    assert_eq!(sidecar["Units"], "unitless");
    // No temporary files left behind.
    let mut names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        ["comm-2_contrast-insomniaVsControl_t.json", "comm-2_contrast-insomniaVsControl_t.nii.gz"]
    );
}

#[test]
fn welch_t_map_without_uniform_dof_has_no_ttest_intent() {
    let dir = tempfile::tempdir().unwrap();
    let (space, _) = voxel_space();
    let name =
        MapName::builder().community("all").contrast("insomnia", "control").build_for(Statistic::T).unwrap();
    let values = t_values(space.feature_count());
    let extra = contrast_fields("insomnia", 9, "control", 11);
    let paths = write_map(dir.path(), &space, &name, Statistic::T, &values, &extra, None).unwrap();
    let bytes = gunzip(&paths[0]);
    assert_eq!(i16_at(&bytes, 68), 0, "intent_code NONE: dof differ per voxel");
    assert_eq!(f32_at(&bytes, 56), 0.0, "intent_p1");
    let sidecar: Value = serde_json::from_str(&std::fs::read_to_string(&paths[1]).unwrap()).unwrap();
    assert_eq!(
        sidecar["DegreesOfFreedom"],
        "per feature (Welch-Satterthwaite): see comm-all_contrast-insomniaVsControl_dof"
    );
}

#[test]
fn p_map_fills_outside_mask_with_one_and_keeps_nan() {
    let dir = tempfile::tempdir().unwrap();
    let (space, _) = voxel_space();
    let name =
        MapName::builder().community("1").contrast("insomnia", "control").build_for(Statistic::P).unwrap();
    let mut values: Vec<f32> = (0..space.feature_count()).map(|i| 0.001 * (i + 1) as f32).collect();
    values[3] = f32::NAN;
    let extra = contrast_fields("insomnia", 4, "control", 5);
    let paths = write_map(dir.path(), &space, &name, Statistic::P, &values, &extra, None).unwrap();
    let bytes = gunzip(&paths[0]);
    assert_eq!(i16_at(&bytes, 68), 22, "intent_code PVAL");
    let mask = mask_of(&space);
    assert_eq!(f32_at(&bytes, 352 + 4), 1.0, "voxel 1 is outside the mask: fill 1");
    assert!(f32_at(&bytes, 352 + 4 * mask[3]).is_nan(), "NaN written as NaN");
    assert_eq!(f32_at(&bytes, 352 + 4 * mask[0]), 0.001);
}

#[test]
fn bad_inputs_are_refused_with_messages() {
    let dir = tempfile::tempdir().unwrap();
    let (space, _) = voxel_space();
    let name = MapName::builder().community("1").build_for(Statistic::Mean).unwrap();
    let stem_json = dir.path().join("comm-1_mean.json");
    let error =
        write_map(dir.path(), &space, &name, Statistic::Mean, &[1.0; 3], &groups_field(&[("all", 20)]), None)
            .unwrap_err();
    assert_eq!(
        error.to_string(),
        format!(
            "{}: 3 values; expected one value per feature of the feature space ({})",
            stem_json.display(),
            space.feature_count()
        )
    );
    let values = vec![0.5; space.feature_count()];
    let error =
        write_map(dir.path(), &space, &name, Statistic::T, &values, &groups_field(&[("all", 20)]), None)
            .unwrap_err();
    assert_eq!(
        error.to_string(),
        format!(
            "{}: name suffix 'mean' for a Welch t map; expected suffix 't' (build the name with MapNameBuilder::build_for)",
            stem_json.display()
        )
    );
    let error = write_map(dir.path(), &space, &name, Statistic::Mean, &values, &json!({}), None).unwrap_err();
    assert!(error.to_string().ends_with("extra sidecar fields without Groups; expected Groups with labels and participant counts (maps::groups_field or maps::contrast_fields)"), "{error}");
    let diff = MapName::builder().community("1").build_for(Statistic::Difference).unwrap();
    let error = write_map(
        dir.path(),
        &space,
        &diff,
        Statistic::Difference,
        &values,
        &groups_field(&[("a", 2)]),
        None,
    )
    .unwrap_err();
    assert!(error.to_string().contains("a difference A-B map without Contrast"), "{error}");
    let t = MapName::builder().community("1").build_for(Statistic::T).unwrap();
    let error = write_map(
        dir.path(),
        &space,
        &t,
        Statistic::T,
        &values,
        &contrast_fields("a", 2, "b", 2),
        Some(f64::NAN),
    )
    .unwrap_err();
    assert!(
        error.to_string().contains("degrees of freedom NaN; expected a finite positive number"),
        "{error}"
    );
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0, "nothing written on error");
}

/// Whether `python3 -c "import nibabel"` works.
fn nibabel_available() -> Result<(), String> {
    match Command::new("python3").args(["-c", "import nibabel"]).output() {
        Ok(output) if output.status.success() => Ok(()),
        Ok(output) => {
            Err(format!("python3 cannot import nibabel: {}", String::from_utf8_lossy(&output.stderr).trim()))
        }
        Err(error) => Err(format!("python3 not runnable: {error}")),
    }
}

#[test]
fn nibabel_reads_maps_as_written() {
    if let Err(missing) = nibabel_available() {
        if std::env::var("STRATA_REQUIRE_REFERENCE").as_deref() == Ok("1") {
            panic!("STRATA_REQUIRE_REFERENCE=1 but {missing}");
        }
        eprintln!("skipping nibabel check: {missing} (pip install nibabel to run it)");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let (space, affine) = voxel_space();
    let values = t_values(space.feature_count());
    let mut nan_values = values.clone();
    nan_values[2] = f32::NAN;
    let cases = [
        (Statistic::T, Some(18.0), values.clone(), 3, 18.0, "Welch t", 0.0f32),
        (Statistic::T, None, values.clone(), 0, 0.0, "Welch t", 0.0),
        (Statistic::HedgesG, None, nan_values, 1001, 0.0, "Hedges g", 0.0),
        (Statistic::Q, None, values.iter().map(|v| v.abs() / 10.0).collect(), 22, 0.0, "BH q", 1.0),
    ];
    let script = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/generators/check_nifti_nibabel.py");
    for (statistic, dof, values, intent_code, intent_p1, intent_name, fill) in cases {
        let name = MapName::builder()
            .community(if dof.is_some() { "1" } else { "2" })
            .contrast("insomnia", "control")
            .build_for(statistic)
            .unwrap();
        let paths = write_map(
            dir.path(),
            &space,
            &name,
            statistic,
            &values,
            &contrast_fields("insomnia", 5, "control", 6),
            dof,
        )
        .unwrap();
        let volume = expected_volume(mask_of(&space), &values, fill);
        let data: Vec<Value> =
            volume.iter().map(|&v| if v.is_nan() { Value::Null } else { json!(v) }).collect();
        let expected = json!({
            "shape": DIM, "data": data, "affine": affine, "intent_code": intent_code,
            "intent_p1": intent_p1, "intent_name": intent_name, "sform_code": 4, "qform_code": 1,
        });
        let expected_path = dir.path().join(format!("{}.expected.json", name.file_stem()));
        std::fs::write(&expected_path, expected.to_string()).unwrap();
        let output = Command::new("python3").arg(script).arg(&paths[0]).arg(&expected_path).output().unwrap();
        assert!(
            output.status.success(),
            "nibabel check failed for {}:\n{}{}",
            paths[0].display(),
            String::from_utf8_lossy(&output.stdout),
            String::from_utf8_lossy(&output.stderr)
        );
        // The checker must be able to fail: a wrong intent code is reported.
        let mut wrong = expected.clone();
        wrong["intent_code"] = json!(intent_code + 1);
        std::fs::write(&expected_path, wrong.to_string()).unwrap();
        let output = Command::new("python3").arg(script).arg(&paths[0]).arg(&expected_path).output().unwrap();
        assert!(!output.status.success(), "checker accepted a wrong intent code");
        assert!(String::from_utf8_lossy(&output.stderr).contains("intent_code: found"));
    }
}
