//! Tests of the fictional Northfield cohort generator: determinism, value ranges, labels,
//! proportions, NIfTI headers, the committed scenario file, and planted-subgroup separability.

use std::collections::BTreeSet;
use std::path::Path;

use ndarray::Array2;
use strata::demo::{self, Scenario};

/// A small matrix scenario for fast tests.
fn small() -> Scenario {
    Scenario { participant_count: 30, region_count: 20, ..Scenario::default() }
}

fn read_dir_bytes(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut files = Vec::new();
    for entry in walk(dir) {
        let bytes = std::fs::read(&entry).expect("test file readable");
        files.push((entry.strip_prefix(dir).unwrap().to_string_lossy().into_owned(), bytes));
    }
    files.sort();
    files
}

fn walk(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut out = Vec::new();
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            out.extend(walk(&path));
        } else {
            out.push(path);
        }
    }
    out
}

#[test]
fn same_seed_gives_byte_identical_files_and_other_seed_differs() {
    let scenario = Scenario { grid: [16, 18, 16], ..small() };
    let (a, b, c) =
        (tempfile::tempdir().unwrap(), tempfile::tempdir().unwrap(), tempfile::tempdir().unwrap());
    demo::write_matrix_cohort(&scenario, a.path()).unwrap();
    demo::write_seedmap_cohort(&scenario, a.path()).unwrap();
    demo::write_matrix_cohort(&scenario, b.path()).unwrap();
    demo::write_seedmap_cohort(&scenario, b.path()).unwrap();
    let other = Scenario { seed: scenario.seed + 1, ..scenario.clone() };
    demo::write_matrix_cohort(&other, c.path()).unwrap();
    let files_a = read_dir_bytes(a.path());
    assert_eq!(files_a.len(), 2 * 30 + 1);
    assert_eq!(files_a, read_dir_bytes(b.path()));
    let npy = |dir: &Path| std::fs::read(dir.join("matrices/sub-NSM001_conn.npy")).unwrap();
    assert_ne!(npy(a.path()), npy(c.path()));
}

#[test]
fn generation_is_independent_of_thread_count() {
    let scenario = small();
    let one = rayon::ThreadPoolBuilder::new().num_threads(1).build().unwrap();
    let (_, serial) = one.install(|| demo::generate_matrix_values(&scenario));
    let (_, parallel) = demo::generate_matrix_values(&scenario);
    assert_eq!(serial, parallel);
}

#[test]
fn matrices_are_symmetric_correlations_with_unit_diagonal() {
    let scenario = Scenario { region_count: 100, participant_count: 12, ..Scenario::default() };
    let (participants, matrices) = demo::generate_matrix_values(&scenario);
    assert_eq!(participants.len(), 12);
    for m in &matrices {
        assert_eq!(m.dim(), (100, 100));
        for a in 0..100 {
            assert_eq!(m[[a, a]], 1.0);
            for b in 0..a {
                assert_eq!(m[[a, b]], m[[b, a]]);
                assert!(m[[a, b]] > -1.0 && m[[a, b]] < 1.0, "r = {}", m[[a, b]]);
            }
        }
    }
}

#[test]
fn ids_labels_and_proportions_follow_the_scenario() {
    let scenario = Scenario::default();
    let (participants, _) = demo::generate_matrix_values(&Scenario { region_count: 7, ..scenario.clone() });
    assert_eq!(participants.len(), 120);
    for p in &participants {
        let label = p.participant_id.strip_prefix("sub-").expect("sub- prefix");
        assert!(
            !label.is_empty() && label.chars().all(|c| c.is_ascii_alphanumeric()),
            "{}",
            p.participant_id
        );
        assert!((12.0..=18.0).contains(&p.age), "age {}", p.age);
        assert!(p.fd_mean > 0.0);
        assert!(p.sex == "F" || p.sex == "M");
        assert!(p.followup.is_nan() || (0.0..=28.0).contains(&p.followup));
    }
    assert_eq!(participants[0].participant_id, "sub-NSM001");
    let ids: BTreeSet<_> = participants.iter().map(|p| &p.participant_id).collect();
    assert_eq!(ids.len(), 120);
    // 0.40 / 0.35 / 0.25 of 120 = 48 / 42 / 30 exactly.
    for (group, expected) in [(1, 48), (2, 42), (3, 30)] {
        let members: Vec<_> = participants.iter().filter(|p| p.subgroup == group).collect();
        assert_eq!(members.len(), expected, "subgroup {group}");
        let insomnia = members.iter().filter(|p| p.diagnosis == "insomnia").count();
        assert_eq!(insomnia, expected / 2, "insomnia in subgroup {group}");
    }
    let homogeneous = demo::generate_matrix_values(&Scenario { region_count: 7, ..scenario.homogeneous() }).0;
    assert!(homogeneous.iter().all(|p| p.subgroup == 0));
    assert_eq!(homogeneous.iter().filter(|p| p.diagnosis == "insomnia").count(), 60);
}

#[test]
fn participants_tsv_is_bids_with_na_for_missing_followup() {
    let dir = tempfile::tempdir().unwrap();
    let cohort = demo::write_matrix_cohort(&small(), dir.path()).unwrap();
    let text = std::fs::read_to_string(&cohort.participants_tsv).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next().unwrap(), "participant_id\tdiagnosis\tage\tsex\tfd_mean\tsite\tfollowup_isi");
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split('\t').collect()).collect();
    assert_eq!(rows.len(), 30);
    for (row, p) in rows.iter().zip(&cohort.participants) {
        assert_eq!(row.len(), 7);
        assert_eq!(row[0], p.participant_id);
        assert_eq!(row[6] == "n/a", p.followup.is_nan());
    }
    assert_eq!(cohort.truth, cohort.participants.iter().map(|p| p.subgroup).collect::<Vec<_>>());
    assert!(cohort.inputs_glob.ends_with("matrices/sub-*_conn.npy"));
    let first: Array2<f32> =
        ndarray_npy::read_npy(dir.path().join("matrices").join(format!("{}_conn.npy", rows[0][0]))).unwrap();
    assert_eq!(first.dim(), (20, 20));
}

#[test]
fn seed_maps_read_back_with_the_mni_4mm_grid_and_affine() {
    let scenario = Scenario { participant_count: 4, ..Scenario::default() };
    let dir = tempfile::tempdir().unwrap();
    let cohort = demo::write_seedmap_cohort(&scenario, dir.path()).unwrap();
    let path = dir.path().join("maps/sub-NSM001_seedmap.nii.gz");
    use nifti::{IntoNdArray, NiftiObject};
    let object = nifti::ReaderOptions::new().read_file(&path).unwrap();
    let header = object.header().clone();
    assert_eq!(&header.dim[..4], &[3, 45, 54, 45]);
    assert_eq!(header.sform_code, 4);
    assert_eq!(header.qform_code, 4);
    assert_eq!(header.xyzt_units, 2);
    // MNI152 4 mm grid affine (common practice: the 2 mm template's origin with 4 mm voxels).
    assert_eq!(header.srow_x, [-4.0, 0.0, 0.0, 90.0]);
    assert_eq!(header.srow_y, [0.0, 4.0, 0.0, -126.0]);
    assert_eq!(header.srow_z, [0.0, 0.0, 4.0, -72.0]);
    let qform = header.qform_affine::<f64>();
    let sform = header.sform_affine::<f64>();
    assert!((qform - sform).abs().max() < 1e-5, "qform {qform} sform {sform}");
    let volume = object.into_volume().into_ndarray::<f32>().unwrap();
    assert_eq!(volume.shape(), &[45, 54, 45]);
    let mask = demo::brain_mask(scenario.grid);
    let (_, in_memory) = demo::generate_seedmap_values(&scenario);
    let mut inside = 0;
    for ((index, &value), &expected) in volume.indexed_iter().zip(in_memory[0].iter()) {
        let (i, j, k) = (index[0], index[1], index[2]);
        assert_eq!(value, in_memory[0][[i, j, k]]);
        let _ = expected;
        if mask[[i, j, k]] {
            inside += 1;
            assert!(value > -1.0 && value < 1.0);
        } else {
            assert_eq!(value, 0.0);
        }
    }
    assert!(inside > 15_000 && inside < 30_000, "mask voxels {inside}");
    // The posterior cingulate seed (0, -52, 26) mm is voxel (22.5, 18.5, 24.5): strongly positive.
    assert!(volume[[22, 18, 24]] > 0.5, "seed r {}", volume[[22, 18, 24]]);
    assert_eq!(cohort.participants.len(), 4);
}

#[test]
fn committed_scenario_file_equals_the_default() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/northfield.toml");
    assert_eq!(Scenario::from_toml_file(&path).unwrap(), Scenario::default());
}

#[test]
fn bad_scenarios_are_refused_with_the_field_named() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("s.toml");
    std::fs::write(&path, "participant_count = 10\nsubgroup_proportions = [0.5, 0.6]\n").unwrap();
    let message = Scenario::from_toml_file(&path).unwrap_err().to_string();
    assert!(message.contains("scenario field `subgroup_proportions` is [0.5, 0.6]"), "{message}");
    std::fs::write(&path, "participants = 10\n").unwrap();
    let message = Scenario::from_toml_file(&path).unwrap_err().to_string();
    assert!(
        message.contains("s.toml: scenario file is not valid") && message.contains("participants"),
        "{message}"
    );
    let error = demo::write_matrix_cohort(&Scenario { region_count: 3, ..small() }, dir.path()).unwrap_err();
    assert_eq!(
        error.to_string(),
        "scenario field `region_count` is 3; expected at least 7 (one per network)"
    );
}

/// Mean within- and between-subgroup Pearson similarity of participants' Fisher z vectors.
fn within_between(features: &[Vec<f64>], labels: &[usize]) -> (f64, f64) {
    let standardised: Vec<Vec<f64>> = features
        .iter()
        .map(|f| {
            let n = f.len() as f64;
            let mean = f.iter().sum::<f64>() / n;
            let sd = (f.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n).sqrt();
            f.iter().map(|v| (v - mean) / sd).collect()
        })
        .collect();
    let (mut within, mut between, mut wn, mut bn) = (0.0, 0.0, 0.0, 0.0);
    for a in 0..features.len() {
        for b in 0..a {
            let r: f64 = standardised[a].iter().zip(&standardised[b]).map(|(x, y)| x * y).sum::<f64>()
                / standardised[a].len() as f64;
            if labels[a] == labels[b] {
                within += r;
                wn += 1.0;
            } else {
                between += r;
                bn += 1.0;
            }
        }
    }
    (within / wn, between / bn)
}

fn matrix_features(matrices: &[Array2<f32>]) -> Vec<Vec<f64>> {
    matrices
        .iter()
        .map(|m| {
            let r = m.nrows();
            (0..r)
                .flat_map(|a| ((a + 1)..r).map(move |b| (a, b)))
                .map(|(a, b)| f64::from(m[[a, b]]).atanh())
                .collect()
        })
        .collect()
}

#[test]
fn planted_matrix_subgroups_are_separable_and_homogeneous_is_not() {
    let scenario = Scenario::default();
    let (participants, matrices) = demo::generate_matrix_values(&scenario);
    let labels: Vec<usize> = participants.iter().map(|p| p.subgroup).collect();
    let (within, between) = within_between(&matrix_features(&matrices), &labels);
    eprintln!("matrices: within {within:.4} between {between:.4}");
    // Margin chosen for the default separation 0.6 (our own design target, see src/demo.rs).
    assert!(within - between > 0.05, "within {within} between {between}");
    // Homogeneous: compare with the default scenario's labels, which now mean nothing.
    let (_, null_matrices) = demo::generate_matrix_values(&scenario.homogeneous());
    let (within, between) = within_between(&matrix_features(&null_matrices), &labels);
    eprintln!("homogeneous: within {within:.4} between {between:.4}");
    assert!((within - between).abs() < 0.01, "within {within} between {between}");
}

#[test]
fn planted_seedmap_subgroups_are_separable() {
    let scenario = Scenario { participant_count: 45, ..Scenario::default() };
    let (participants, volumes) = demo::generate_seedmap_values(&scenario);
    let mask = demo::brain_mask(scenario.grid);
    let features: Vec<Vec<f64>> = volumes
        .iter()
        .map(|v| v.iter().zip(mask.iter()).filter(|(_, &m)| m).map(|(&x, _)| f64::from(x).atanh()).collect())
        .collect();
    let labels: Vec<usize> = participants.iter().map(|p| p.subgroup).collect();
    let (within, between) = within_between(&features, &labels);
    eprintln!("seed maps: within {within:.4} between {between:.4}");
    assert!(within - between > 0.05, "within {within} between {between}");
}
