//! Edge-space maps: symmetric R x R `.npy`, the 1-based edge table and the sidecar.

use ndarray::Array2;
use ndarray_npy::read_npy;
use serde_json::{json, Value};
use strata::features::{EdgeSpace, FeatureSpace};
use strata::maps::{contrast_fields, groups_field, write_map, MapName, Statistic};

fn edge_space(regions: usize) -> FeatureSpace {
    FeatureSpace::Edges(EdgeSpace {
        region_count: regions,
        region_names: (1..=regions).map(|r| format!("region-{r:03}")).collect(),
    })
}

#[test]
fn edge_map_is_symmetric_with_fill_diagonal_and_table() {
    let dir = tempfile::tempdir().unwrap();
    let space = edge_space(4);
    // 6 edges in triu_indices(4, 1) order: (0,1) (0,2) (0,3) (1,2) (1,3) (2,3).
    let values = [0.01f32, 0.02, f32::NAN, 0.04, 0.05, 0.06];
    let name =
        MapName::builder().community("3").contrast("insomnia", "control").build_for(Statistic::Q).unwrap();
    let paths = write_map(
        dir.path(),
        &space,
        &name,
        Statistic::Q,
        &values,
        &contrast_fields("insomnia", 3, "control", 4),
        None,
    )
    .unwrap();
    let stem = "comm-3_contrast-insomniaVsControl_q";
    assert_eq!(
        paths,
        vec![
            dir.path().join(format!("{stem}.npy")),
            dir.path().join(format!("{stem}.tsv")),
            dir.path().join(format!("{stem}.json"))
        ]
    );
    let matrix: Array2<f32> = read_npy(&paths[0]).unwrap();
    assert_eq!(matrix.shape(), &[4, 4]);
    for i in 0..4 {
        assert_eq!(matrix[[i, i]], 1.0, "q diagonal is the fill value 1");
    }
    assert_eq!(matrix[[0, 1]], 0.01);
    assert_eq!(matrix[[1, 0]], 0.01);
    assert_eq!(matrix[[3, 1]], 0.05);
    assert_eq!(matrix[[2, 3]], 0.06);
    assert!(matrix[[0, 3]].is_nan() && matrix[[3, 0]].is_nan());

    let table = std::fs::read_to_string(&paths[1]).unwrap();
    let lines: Vec<&str> = table.lines().collect();
    assert_eq!(lines.len(), 7);
    assert_eq!(lines[0], "region_i\tregion_j\tname_i\tname_j\tvalue");
    assert_eq!(lines[1], "1\t2\tregion-001\tregion-002\t0.01");
    assert_eq!(lines[3], "1\t4\tregion-001\tregion-004\tn/a");
    assert_eq!(lines[6], "3\t4\tregion-003\tregion-004\t0.06");

    let sidecar: Value = serde_json::from_str(&std::fs::read_to_string(&paths[2]).unwrap()).unwrap();
    assert_eq!(sidecar["Statistic"], "BH q");
    assert_eq!(sidecar["Correction"], "Benjamini-Hochberg");
    assert_eq!(sidecar["Space"]["Kind"], "edges");
    assert_eq!(sidecar["Space"]["Diagonal"], 1.0);
    assert_eq!(sidecar["FillValue"], 1.0);
    assert_eq!(sidecar["GeneratedBy"]["Name"], "strata");
}

#[test]
fn extra_sidecar_fields_are_added_and_may_override() {
    let dir = tempfile::tempdir().unwrap();
    let space = edge_space(3);
    let name = MapName::builder().community("all").group("control").build_for(Statistic::Mean).unwrap();
    let mut extra = groups_field(&[("control", 12)]);
    extra["Units"] = json!("Pearson r");
    extra["Density"] = json!(0.1);
    let paths =
        write_map(dir.path(), &space, &name, Statistic::Mean, &[0.1, 0.2, 0.3], &extra, None).unwrap();
    let sidecar: Value = serde_json::from_str(&std::fs::read_to_string(&paths[2]).unwrap()).unwrap();
    assert_eq!(sidecar["Units"], "Pearson r");
    assert_eq!(sidecar["Density"], 0.1);
    assert_eq!(sidecar["Groups"], json!([{"Label": "control", "Count": 12}]));
    assert!(sidecar.get("DegreesOfFreedom").is_none(), "no dof on a mean map");
    let matrix: Array2<f32> = read_npy(&paths[0]).unwrap();
    assert_eq!(matrix[[0, 0]], 0.0, "mean diagonal is the fill value 0");
    assert_eq!(matrix[[2, 1]], 0.3);
}

#[test]
fn region_names_must_match_region_count() {
    let dir = tempfile::tempdir().unwrap();
    let space = FeatureSpace::Edges(EdgeSpace { region_count: 3, region_names: vec!["a".into()] });
    let name = MapName::builder().community("1").build_for(Statistic::Mean).unwrap();
    let error =
        write_map(dir.path(), &space, &name, Statistic::Mean, &[0.0; 3], &groups_field(&[("all", 5)]), None)
            .unwrap_err();
    assert_eq!(
        error.to_string(),
        format!(
            "{}: 1 region names; expected one name per region (3)",
            dir.path().join("comm-1_mean.tsv").display()
        )
    );
}
