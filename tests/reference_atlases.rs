//! The shipped atlas tables against their source: nilearn 0.14.1 package data (PyPI), whose
//! values and sha256 `tests/data/generators/atlases.py` records in
//! tests/data/atlases_reference.json.

use std::path::Path;

use serde_json::Value;
use strata::read::read_table;

fn root(path: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

fn reference() -> Value {
    serde_json::from_str(&std::fs::read_to_string(root("tests/data/atlases_reference.json")).unwrap())
        .unwrap()
}

fn check_table(name: &str, rows: usize, networks: usize) {
    let reference = reference();
    let source = &reference[name];
    assert_eq!(source["rows"].as_u64().unwrap() as usize, rows, "{name}: published row count");
    assert_eq!(source["sha256"].as_str().unwrap().len(), 64);
    let table = read_table(&root(&format!("atlases/{name}/{name}_regions.tsv"))).unwrap();
    assert_eq!(table.row_count(), rows, "{name}");
    let index: Vec<usize> = table.column("index").unwrap().iter().map(|v| v.parse().unwrap()).collect();
    assert_eq!(index, (1..=rows).collect::<Vec<_>>(), "{name}: index 1..R in order");
    let mut found: Vec<&str> = table.column("network").unwrap();
    found.sort_unstable();
    found.dedup();
    let expected: Vec<&str> =
        source["networks"].as_array().unwrap().iter().map(|v| v.as_str().unwrap()).collect();
    assert_eq!(found, expected, "{name}: network labels");
    assert_eq!(found.len(), networks, "{name}");
    let coordinates = source["coordinates"].as_array().unwrap();
    for (axis, column) in ["x", "y", "z"].iter().enumerate() {
        for (row, cell) in table.column(column).unwrap().iter().enumerate() {
            let want = coordinates[row][axis].as_f64().unwrap();
            let got: f64 = cell.parse().unwrap();
            assert!((got - want).abs() <= 1e-9, "{name} row {} {column}: {got} vs {want}", row + 1);
        }
    }
}

#[test]
fn dosenbach160_equals_its_source() {
    // Dosenbach et al. 2010: 160 regions in six networks (from memory; the source file agrees).
    check_table("dosenbach160", 160, 6);
    let reference = reference();
    let names: Vec<&str> =
        reference["dosenbach160"]["names"].as_array().unwrap().iter().map(|v| v.as_str().unwrap()).collect();
    let table = read_table(&root("atlases/dosenbach160/dosenbach160_regions.tsv")).unwrap();
    assert_eq!(table.column("name").unwrap(), names);
}

#[test]
fn seitzman300_equals_its_source() {
    // Seitzman et al. 2020: 300 regions; 13 networks plus `unassigned` in the source file.
    check_table("seitzman300", 300, 14);
}
