//! The label volumes and the brain mask built into strata, read with strata's own NIfTI reader,
//! against tests/data/atlas_volumes_reference.json: what `tests/data/generators/atlas_volumes.py`
//! recorded from nilearn 0.14.1 package data (PyPI: the Dosenbach and Seitzman coordinate files
//! and `load_mni152_brain_mask`) with numpy 2.4.6 and nibabel 5.4.2. Also: the built-in bytes
//! are those of `atlases/`, whose tables tests/reference_atlases.rs checks against the same
//! sources, and both reference files name the same source files by SHA-256.

use std::io::Read;
use std::path::{Path, PathBuf};

use serde_json::Value;
use sha2::{Digest, Sha256};
use strata::atlas;
use strata::read::{read_table, read_volume};

fn root(path: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

fn load(path: &str) -> Value {
    serde_json::from_str(&std::fs::read_to_string(root(path)).unwrap()).unwrap()
}

fn volumes_reference() -> Value {
    load("tests/data/atlas_volumes_reference.json")
}

fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes).iter().map(|byte| format!("{byte:02x}")).collect()
}

fn gunzip(bytes: &[u8]) -> Vec<u8> {
    let mut out = Vec::new();
    flate2::read::GzDecoder::new(bytes).read_to_end(&mut out).unwrap();
    out
}

/// The volume of a built-in, checked to be the bytes of its file under atlases/.
fn built_in_volume(name: &str, file: &str) -> (strata::read::nifti::Volume, Vec<u8>) {
    let built_in = atlas::find(name).unwrap();
    let embedded = built_in.volume.as_ref().unwrap();
    let path = root(&format!("atlases/{}/{file}", built_in.folder));
    assert_eq!(embedded.name, file);
    assert_eq!(embedded.bytes, std::fs::read(&path).unwrap().as_slice(), "{name}: built-in = atlases/ file");
    (read_volume(&path, "(atlas)").unwrap(), embedded.bytes.to_vec())
}

/// Grid and affine of the record (the FSL MNI152 2 mm grid: 91 x 109 x 91, affine
/// [[-2,0,0,90],[0,2,0,-126],[0,0,2,-72]]; common practice).
fn check_grid(volume: &strata::read::nifti::Volume, reference: &Value, name: &str) {
    let shape: Vec<usize> =
        reference["grid_shape"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
    assert_eq!(volume.dim.to_vec(), shape, "{name}: grid");
    assert_eq!(shape, vec![91, 109, 91]);
    for (row, expected) in reference["grid_affine"].as_array().unwrap().iter().enumerate() {
        for (column, value) in expected.as_array().unwrap().iter().enumerate() {
            let want = value.as_f64().unwrap();
            let got = volume.affine[row][column];
            assert!((got - want).abs() <= 1e-6, "{name}: affine[{row}][{column}] {got} vs {want}");
        }
    }
}

fn labels(volume: &strata::read::nifti::Volume) -> Vec<i64> {
    volume
        .values
        .iter()
        .map(|&value| {
            assert_eq!(value, value.round(), "labels are whole numbers");
            value as i64
        })
        .collect()
}

fn check_label_volume(name: &str, file: &str, source_file: &str) {
    let reference = volumes_reference();
    let record = &reference[name];
    let (volume, gz) = built_in_volume(name, file);
    assert_eq!(sha256_hex(&gunzip(&gz)), record["sha256_uncompressed"].as_str().unwrap(), "{name}: bytes");
    check_grid(&volume, &reference, name);
    let labels = labels(&volume);
    let regions = record["regions"].as_u64().unwrap() as usize;
    // Voxels per label, every region present, nothing above R.
    let mut counts = vec![0u64; regions + 1];
    for &label in &labels {
        assert!((0..=regions as i64).contains(&label), "{name}: label {label} outside 0..={regions}");
        counts[label as usize] += 1;
    }
    let expected: Vec<u64> =
        record["voxel_counts"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap()).collect();
    assert_eq!(&counts[1..], expected.as_slice(), "{name}: voxels per region");
    assert_eq!(counts[1..].iter().sum::<u64>(), record["labelled_voxels"].as_u64().unwrap());
    assert!(record["missing_regions"].as_array().unwrap().is_empty());
    assert!(counts[1..].iter().all(|&count| count > 0), "{name}: every region has voxels");
    // Probe voxels (i, j, k, label), indexed i + nx (j + ny k) as the reader stores them.
    let [nx, ny, _] = volume.dim;
    for probe in record["probes"].as_array().unwrap() {
        let p: Vec<usize> = probe.as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as usize).collect();
        assert_eq!(labels[p[0] + nx * (p[1] + ny * p[2])], p[3] as i64, "{name}: probe {p:?}");
    }
    // The region table built in: R rows, index 1..R, each region's voxel centroid within 0.5 mm
    // of the table's centre (a sphere on a 2 mm grid; nibabel 5.4.2 on the same files gives at
    // most 0.00 mm for Dosenbach 160, 0.46 mm for Seitzman 300).
    let built_in = atlas::find(name).unwrap();
    let table_file = built_in.table.as_ref().unwrap();
    let table_path = root(&format!("atlases/{}/{}", built_in.folder, table_file.name));
    assert_eq!(table_file.bytes, std::fs::read(&table_path).unwrap().as_slice(), "{name}: built-in table");
    let table = read_table(&table_path).unwrap();
    assert_eq!(table.row_count(), regions);
    let mut sums = vec![[0.0f64; 3]; regions + 1];
    for (flat, &label) in labels.iter().enumerate() {
        if label == 0 {
            continue;
        }
        let ijk = [flat % nx, (flat / nx) % ny, flat / (nx * ny)];
        for (axis, sum) in sums[label as usize].iter_mut().enumerate() {
            let row = &volume.affine[axis];
            *sum += row[0] * ijk[0] as f64 + row[1] * ijk[1] as f64 + row[2] * ijk[2] as f64 + row[3];
        }
    }
    let index = table.column("index").unwrap();
    let centres: Vec<Vec<f64>> = ["x", "y", "z"]
        .iter()
        .map(|column| table.column(column).unwrap().iter().map(|v| v.parse().unwrap()).collect())
        .collect();
    for row in 0..regions {
        let label: usize = index[row].parse().unwrap();
        assert_eq!(label, row + 1, "{name}: index column");
        for axis in 0..3 {
            let centroid = sums[label][axis] / counts[label] as f64;
            let centre = centres[axis][row];
            assert!(
                (centroid - centre).abs() <= 0.5,
                "{name} region {label} axis {axis}: {centroid} vs {centre}"
            );
        }
    }
    // Both generators read the same source file (its SHA-256 in both reference files).
    let tables = load("tests/data/atlases_reference.json");
    assert_eq!(
        record["source_sha256"][source_file].as_str().unwrap(),
        tables[name]["sha256"].as_str().unwrap(),
        "{name}: the volume and the table come from the same source file"
    );
}

#[test]
fn dosenbach160_volume_equals_its_reference() {
    // Dosenbach et al. 2010: 160 regions; 5 mm spheres, 10312 labelled voxels (nilearn 0.14.1
    // dosenbach_2010.csv, atlas_volumes.py).
    check_label_volume("dosenbach160", "dosenbach160_labels_2mm.nii.gz", "dosenbach_2010.csv");
    assert_eq!(volumes_reference()["dosenbach160"]["labelled_voxels"], 10312);
}

#[test]
fn seitzman300_volume_equals_its_reference() {
    // Seitzman et al. 2020: 300 regions, radii 4 and 5 mm from the source's radius column.
    check_label_volume(
        "seitzman300",
        "seitzman300_labels_2mm.nii.gz",
        "seitzman_2018_ROIs_300inVol_MNI_allInfo.txt",
    );
    assert_eq!(volumes_reference()["seitzman300"]["labelled_voxels"], 17638);
}

#[test]
fn mni152_mask_equals_nilearns() {
    // nilearn 0.14.1 load_mni152_brain_mask(resolution=2): 235,375 brain voxels, carried onto
    // the 91 x 109 x 91 grid without loss (atlas_volumes.py asserts it).
    let reference = volumes_reference();
    let record = &reference["mni152_brainmask_2mm"];
    let (volume, gz) = built_in_volume("mni152-2mm", "mni152_brainmask_2mm.nii.gz");
    assert_eq!(sha256_hex(&gunzip(&gz)), record["sha256_uncompressed"].as_str().unwrap());
    check_grid(&volume, &reference, "mni152-2mm");
    assert!(volume.values.iter().all(|&v| v == 0.0 || v == 1.0), "a 0/1 mask");
    let count = volume.values.iter().filter(|&&v| v == 1.0).count() as u64;
    assert_eq!(count, record["voxel_count"].as_u64().unwrap());
    assert_eq!(count, record["nilearn_voxel_count"].as_u64().unwrap());
    assert_eq!(count, 235_375);
}

#[test]
fn built_in_tables_are_the_checked_files() {
    // The tables the binary ships are byte for byte those tests/reference_atlases.rs checks
    // against nilearn's package data; northfield100 is strata's own (fictional) atlas.
    for name in ["northfield100", "dosenbach160", "seitzman300"] {
        let built_in = atlas::find(name).unwrap();
        for file in built_in.files() {
            let on_disk = std::fs::read(root(&format!("atlases/{}/{}", built_in.folder, file.name))).unwrap();
            assert_eq!(file.bytes, on_disk.as_slice(), "{name}: {}", file.name);
        }
    }
}
