//! F maps of the diagnosis x community interaction: NIfTI-1 FTEST intent with both degrees of
//! freedom, the `effect-interaction` naming, and the F that `strata run` writes recomputed from
//! two nested fits.

use std::io::Read;
use std::path::Path;
use std::process::Command;

use ndarray::Array2;
use serde_json::Value;
use strata::features::{FeatureMatrix, FeatureSpace, VoxelSpace};
use strata::maps::{contrast_fields, write_map_with_dof, MapName, Statistic};

fn voxel_space() -> FeatureSpace {
    let dim = [4, 3, 2];
    let header = nifti::NiftiHeader {
        dim: [3, 4, 3, 2, 1, 1, 1, 1],
        pixdim: [1.0, 2.0, 2.0, 2.0, 1.0, 1.0, 1.0, 1.0],
        sform_code: 4,
        srow_x: [2.0, 0.0, 0.0, 0.0],
        srow_y: [0.0, 2.0, 0.0, 0.0],
        srow_z: [0.0, 0.0, 2.0, 0.0],
        xyzt_units: 2,
        ..Default::default()
    };
    let affine = [[2.0, 0.0, 0.0, 0.0], [0.0, 2.0, 0.0, 0.0], [0.0, 0.0, 2.0, 0.0], [0.0, 0.0, 0.0, 1.0]];
    FeatureSpace::Voxels(VoxelSpace {
        dim,
        voxel_size: [2.0; 3],
        affine,
        reference_header: header,
        mask: (0..24).collect(),
    })
}

fn gunzip(path: &Path) -> Vec<u8> {
    let mut bytes = Vec::new();
    flate2::read::GzDecoder::new(std::fs::File::open(path).unwrap()).read_to_end(&mut bytes).unwrap();
    bytes
}

fn f32_at(bytes: &[u8], offset: usize) -> f32 {
    f32::from_le_bytes(bytes[offset..offset + 4].try_into().unwrap())
}

#[test]
fn f_map_has_ftest_intent_with_both_dof() {
    let dir = tempfile::tempdir().unwrap();
    let space = voxel_space();
    let name = MapName::builder()
        .community("all")
        .contrast("insomnia", "control")
        .interaction()
        .build_for(Statistic::F)
        .unwrap();
    assert_eq!(name.file_stem(), "comm-all_contrast-insomniaVsControl_effect-interaction_F");
    let values: Vec<f32> = (0..24).map(|i| i as f32 * 0.5).collect();
    let extra = contrast_fields("insomnia", 30, "control", 28);
    write_map_with_dof(dir.path(), &space, &name, Statistic::F, &values, &extra, &[2.0, 52.0]).unwrap();
    // NIfTI-1 (nifti1.h; REFERENCES.md): intent_code 68 = FTEST 4, intent_p1 at 56 = numerator
    // dof, intent_p2 at 60 = denominator dof.
    let bytes = gunzip(&dir.path().join("comm-all_contrast-insomniaVsControl_effect-interaction_F.nii.gz"));
    assert_eq!(i16::from_le_bytes(bytes[68..70].try_into().unwrap()), 4, "intent_code FTEST");
    assert_eq!(f32_at(&bytes, 56), 2.0, "intent_p1");
    assert_eq!(f32_at(&bytes, 60), 52.0, "intent_p2");
    let sidecar: Value = serde_json::from_str(
        &std::fs::read_to_string(
            dir.path().join("comm-all_contrast-insomniaVsControl_effect-interaction_F.json"),
        )
        .unwrap(),
    )
    .unwrap();
    assert_eq!(sidecar["DegreesOfFreedom"], serde_json::json!([2.0, 52.0]));
    // One dof for an F map is refused in words.
    let error =
        write_map_with_dof(dir.path(), &space, &name, Statistic::F, &values, &extra, &[2.0]).unwrap_err();
    assert!(error.to_string().contains("two (numerator, denominator) for an F map"), "{error}");
}

#[test]
fn run_writes_the_interaction_f_of_nested_models() {
    let dir = tempfile::tempdir().unwrap();
    let output = Command::new(env!("CARGO_BIN_EXE_strata"))
        .args(["demo", "--out", "demo", "--kind", "matrices"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(output.status.success(), "{}", String::from_utf8_lossy(&output.stderr));
    let results = dir.path().join("demo/results-matrices");
    let maps = results.join("maps");
    let stem = "comm-all_contrast-insomniaVsControl_effect-interaction";
    let sidecar: Value =
        serde_json::from_str(&std::fs::read_to_string(maps.join(format!("{stem}_F.json"))).unwrap()).unwrap();
    let written: Array2<f32> = ndarray_npy::read_npy(maps.join(format!("{stem}_F.npy"))).unwrap();

    // Rebuild the design from participants.tsv and the demo's inputs, fit the models with and
    // without the products, and compare the extra-sum-of-squares F at a few edges.
    let table = std::fs::read_to_string(results.join("participants.tsv")).unwrap();
    let mut lines = table.lines();
    let header: Vec<&str> = lines.next().unwrap().split('\t').collect();
    let column = |name: &str| header.iter().position(|c| *c == name).unwrap();
    let (diagnosis, community) = (column("diagnosis"), column("community"));
    let rows: Vec<(String, usize)> = lines
        .map(|line| {
            let cells: Vec<&str> = line.split('\t').collect();
            (cells[diagnosis].to_string(), cells[community].parse().unwrap())
        })
        .collect();
    let inputs = dir.path().join("demo/inputs-matrices");
    let ids: Vec<String> =
        table.lines().skip(1).map(|line| line.split('\t').next().unwrap().to_string()).collect();
    let regions = written.nrows();
    let edges: Vec<(usize, usize)> = vec![(0, 1), (3, 40), (10, 77), (52, 99)];
    let mut values = Vec::new();
    let mut kept = Vec::new();
    for (index, id) in ids.iter().enumerate() {
        let (label, membership) = &rows[index];
        if *membership == 0 || (label != "insomnia" && label != "control") {
            continue;
        }
        let matches: Vec<_> =
            glob::glob(&format!("{}/**/{id}_*", inputs.display())).unwrap().flatten().collect();
        let matrix: Array2<f32> = ndarray_npy::read_npy(&matches[0]).unwrap();
        assert_eq!(matrix.nrows(), regions);
        values.extend(edges.iter().map(|&(i, j)| (matrix[[i, j]] as f64).atanh() as f32));
        kept.push(index);
    }
    let n = kept.len();
    let features = FeatureMatrix { values: Array2::from_shape_vec((n, edges.len()), values).unwrap() };
    let communities: Vec<usize> =
        sidecar["Communities"].as_array().unwrap().iter().map(|c| c.as_u64().unwrap() as usize).collect();
    let mut reduced_columns =
        vec![vec![1.0; n], kept.iter().map(|&r| f64::from(u8::from(rows[r].0 == "insomnia"))).collect()];
    for &c in &communities[1..] {
        reduced_columns.push(kept.iter().map(|&r| f64::from(u8::from(rows[r].1 == c))).collect());
    }
    let mut full_columns = reduced_columns.clone();
    for k in 0..communities.len() - 1 {
        let product: Vec<f64> = (0..n).map(|i| full_columns[1][i] * full_columns[2 + k][i]).collect();
        full_columns.push(product);
    }
    let design = |columns: &[Vec<f64>]| strata::stats::Design {
        columns: (0..columns.len()).map(|j| format!("c{j}")).collect(),
        values: (0..n).flat_map(|i| columns.iter().map(move |column| column[i])).collect(),
    };
    let all: Vec<usize> = (0..n).collect();
    let reduced = strata::stats::fit_linear_model(&features, &all, &design(&reduced_columns)).unwrap();
    let full = strata::stats::fit_linear_model(&features, &all, &design(&full_columns)).unwrap();
    let nested = strata::stats::nested_f(&full, &reduced).unwrap();
    assert_eq!(
        sidecar["DegreesOfFreedom"],
        serde_json::json!([nested.dof_numerator, nested.dof_denominator])
    );
    for (index, &(i, j)) in edges.iter().enumerate() {
        // The run uses contrast_f on the full model; the nested-model F is the same number
        // (extra-sum-of-squares principle, Searle 1971), here from two separate fits.
        approx::assert_relative_eq!(written[[i, j]], nested.f[index], max_relative = 1e-4);
        approx::assert_relative_eq!(written[[j, i]], nested.f[index], max_relative = 1e-4);
    }
}
