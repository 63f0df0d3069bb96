//! `strata atlases` and the built-in names of `--atlas` and `--mask`, through the real binary in
//! fresh temporary folders: the listing, one atlas's files and their export, a run labelled with
//! `--atlas dosenbach160`, a seed-map run with `--mask mni152-2mm` on the MNI152 2 mm grid, and
//! the errors of an unknown name, a name of the wrong kind and a mask on another grid.
//!
//! Expected counts come from the atlases' sources (atlases/*/README.md): Dosenbach et al. 2010
//! (160 regions, six networks; nilearn 0.14.1 `dosenbach_2010.csv`), the Seitzman source file
//! (300 regions, 13 networks and `unassigned`), nilearn 0.14.1 `load_mni152_brain_mask`
//! (235,375 voxels of a 91 x 109 x 91 grid); tests/reference_atlas_volumes.rs checks the files.

mod util;

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

use ndarray::Array3;
use serde_json::Value;
use sha2::{Digest, Sha256};
use util::cli::{fail, strata, text};

fn succeed(args: &[&str], cwd: &Path) -> String {
    let output = strata(args, cwd);
    let (stdout, stderr) = text(&output);
    assert!(output.status.success(), "strata {args:?} failed:\n{stderr}");
    stdout
}

fn root(path: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes).iter().map(|byte| format!("{byte:02x}")).collect()
}

fn read_json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// The rows of a TSV output as column -> cell maps.
fn tsv(path: &Path) -> Vec<std::collections::BTreeMap<String, String>> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split('\t').collect();
    lines
        .map(|line| header.iter().map(|h| h.to_string()).zip(line.split('\t').map(String::from)).collect())
        .collect()
}

#[test]
fn listing_names_every_built_in_with_its_counts_and_grid() {
    let dir = tempfile::tempdir().unwrap();
    let stdout = succeed(&["atlases"], dir.path());
    let lines: Vec<Vec<&str>> = stdout.lines().map(|line| line.split_whitespace().collect()).collect();
    assert_eq!(lines[0][..5], ["name", "kind", "regions", "networks", "volume"]);
    let row = |name: &str| {
        lines.iter().find(|cells| cells[0] == name).unwrap_or_else(|| panic!("{name}: {stdout}"))
    };
    // name, kind, regions, networks, then the volume grid and voxel size.
    assert_eq!(row("northfield100")[..7], ["northfield100", "atlas", "100", "7", "45x54x45", "at", "4"]);
    assert_eq!(row("dosenbach160")[..7], ["dosenbach160", "atlas", "160", "6", "91x109x91", "at", "2"]);
    assert_eq!(row("seitzman300")[..7], ["seitzman300", "atlas", "300", "14", "91x109x91", "at", "2"]);
    assert_eq!(row("mni152-2mm")[..7], ["mni152-2mm", "mask", "-", "-", "91x109x91", "at", "2"]);
    assert!(row("dosenbach160").join(" ").contains("nilearn 0.14.1"), "{stdout}");
    assert!(row("dosenbach160").join(" ").contains("BSD-3-Clause"), "{stdout}");
    assert_eq!(lines.len(), 5, "a header and four built-ins: {stdout}");
}

#[test]
fn one_atlas_is_shown_and_exported_byte_for_byte() {
    let dir = tempfile::tempdir().unwrap();
    let files = ["dosenbach160_regions.tsv", "dosenbach160_labels_2mm.nii.gz", "README.md"];
    let shown = succeed(&["atlases", "dosenbach160"], dir.path());
    for file in files {
        let digest = sha256_hex(&std::fs::read(root("atlases/dosenbach160").join(file)).unwrap());
        assert!(shown.contains(&format!("{file}  ")) && shown.contains(&digest), "{file} {digest}:\n{shown}");
    }
    assert!(shown.contains("# Dosenbach 160"), "the README follows: {shown}");

    let stdout = succeed(&["atlases", "dosenbach160", "--export", "atlas"], dir.path());
    assert_eq!(stdout.lines().count(), 3, "{stdout}");
    for file in files {
        let exported = std::fs::read(dir.path().join("atlas").join(file)).unwrap();
        assert_eq!(exported, std::fs::read(root("atlases/dosenbach160").join(file)).unwrap(), "{file}");
    }
    // Exporting again over identical files is fine; over a changed one it is refused (exit 5,
    // nothing replaced) until --force.
    succeed(&["atlases", "dosenbach160", "--export", "atlas"], dir.path());
    let table = dir.path().join("atlas/dosenbach160_regions.tsv");
    std::fs::write(&table, "index\tname\n1\tmine\n").unwrap();
    fail(
        &["atlases", "dosenbach160", "--export", "atlas"],
        dir.path(),
        5,
        &["atlas/dosenbach160_regions.tsv: exists and differs from the built-in file", "--force"],
    );
    assert_eq!(std::fs::read_to_string(&table).unwrap(), "index\tname\n1\tmine\n");
    succeed(&["atlases", "dosenbach160", "--export", "atlas", "--force"], dir.path());
    assert_eq!(
        std::fs::read(&table).unwrap(),
        std::fs::read(root("atlases/dosenbach160/dosenbach160_regions.tsv")).unwrap()
    );
    // The exported table is a region table --atlas takes as a file.
    // An unknown name is clap's usage error with the possible values.
    fail(
        &["atlases", "dosenbach16"],
        dir.path(),
        2,
        &["dosenbach16", "northfield100, dosenbach160, seitzman300, mni152-2mm"],
    );
    fail(&["atlases", "--export", "x"], dir.path(), 2, &["<NAME>"]);
}

/// A fictional matrix cohort over `regions` regions from strata's generator.
fn matrix_cohort(dir: &Path, regions: usize) -> String {
    let scenario =
        strata::demo::Scenario { participant_count: 24, region_count: regions, ..Default::default() };
    strata::demo::write_matrix_cohort(&scenario, dir).unwrap().inputs_glob
}

fn run_args<'a>(inputs: &'a str, out: &'a str, extra: &[&'a str]) -> Vec<&'a str> {
    let mut args = vec![
        "run",
        "--inputs",
        inputs,
        "--participants",
        "participants.tsv",
        "--group-column",
        "diagnosis",
        "--contrast",
        "insomnia,control",
        "--null-draws",
        "0",
        "--subsamples",
        "0",
        "--random-graphs",
        "0",
        "--out",
        out,
    ];
    args.extend(extra);
    args
}

#[test]
fn run_labels_edges_and_networks_from_a_built_in_atlas() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = matrix_cohort(dir.path(), 160);
    succeed(&run_args(&inputs, "out", &["--atlas", "dosenbach160"]), dir.path());
    let out = dir.path().join("out");
    let table = strata::read::read_table(&root("atlases/dosenbach160/dosenbach160_regions.tsv")).unwrap();
    let names: Vec<String> = table.column("name").unwrap().iter().map(|n| n.to_string()).collect();
    let networks: BTreeSet<String> = table.column("network").unwrap().iter().map(|n| n.to_string()).collect();
    // Edge labels: region_i / name_i pairs are the table's rows.
    let top = tsv(&out.join("top_edges.tsv"));
    assert!(!top.is_empty());
    for row in &top {
        for side in ["i", "j"] {
            let region: usize = row[&format!("region_{side}")].parse().unwrap();
            assert_eq!(row[&format!("name_{side}")], names[region - 1], "{row:?}");
        }
    }
    // Network blocks: every pair of the six networks (21 blocks) per scope, names from the table.
    let blocks = tsv(&out.join("network_blocks.tsv"));
    let seen: BTreeSet<String> =
        blocks.iter().flat_map(|row| [row["network_a"].clone(), row["network_b"].clone()]).collect();
    assert_eq!(seen, networks);
    assert_eq!(networks.len(), 6);
    let scopes: BTreeSet<&String> = blocks.iter().map(|row| &row["community"]).collect();
    assert_eq!(blocks.len(), 21 * scopes.len(), "6 * 7 / 2 network pairs per scope");
    // Provenance: the name as given, the built-in file and the SHA-256 of the shipped table.
    let provenance = read_json(&out.join("provenance.json"));
    assert_eq!(provenance["parameters"]["atlas"], "dosenbach160");
    let bytes = std::fs::read(root("atlases/dosenbach160/dosenbach160_regions.tsv")).unwrap();
    let entry =
        provenance["inputs"].as_array().unwrap().iter().find(|e| e["path"] == "dosenbach160").unwrap();
    assert_eq!(entry["sha256"], sha256_hex(&bytes));
    assert_eq!(entry["bytes"], bytes.len());
    assert_eq!(entry["built_in"], format!("dosenbach160_regions.tsv (strata {})", env!("CARGO_PKG_VERSION")));
    // The report, rendered again from the run folder, still finds the atlas by its name.
    succeed(&["report", "out"], dir.path());
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(!html.contains("atlas table not readable"), "the report re-reads the built-in table");
    assert!(html.contains("fronto-parietal"), "figures ordered and labelled by Dosenbach networks");

    // The configuration file keeps a built-in name as written (not read from its folder).
    std::fs::create_dir(dir.path().join("config")).unwrap();
    std::fs::write(
        dir.path().join("config/run.toml"),
        format!(
            "inputs = \"{inputs}\"\nparticipants = \"../participants.tsv\"\ngroup_column = \"diagnosis\"\n\
             contrast = \"insomnia,control\"\natlas = \"dosenbach160\"\n"
        ),
    )
    .unwrap();
    let output = strata(&["check", "config/run.toml"], dir.path());
    assert!(output.status.success(), "{}\n{}", text(&output).0, text(&output).1);
    // The same atlas with another number of regions than the matrices.
    let other = tempfile::tempdir().unwrap();
    let inputs = matrix_cohort(other.path(), 100);
    fail(
        &run_args(&inputs, "out", &["--atlas", "dosenbach160"]),
        other.path(),
        3,
        &["dosenbach160_regions.tsv: the atlas table has 160 regions but the matrices have 100"],
    );
    assert!(!other.path().join("out").exists());
}

#[test]
fn unknown_or_misplaced_names_list_the_built_ins() {
    let dir = tempfile::tempdir().unwrap();
    let inputs = matrix_cohort(dir.path(), 160);
    fail(
        &run_args(&inputs, "out", &["--atlas", "dosenbach16"]),
        dir.path(),
        2,
        &[
            "--atlas: 'dosenbach16' is neither an existing file nor a built-in name",
            "northfield100, dosenbach160, seitzman300",
            "strata atlases",
        ],
    );
    fail(
        &run_args(&inputs, "out", &["--atlas", "mni152-2mm"]),
        dir.path(),
        2,
        &["--atlas: 'mni152-2mm' is a built-in mask", "give it to --mask"],
    );
    fail(
        &run_args(&inputs, "out", &["--mask", "mni152"]),
        dir.path(),
        2,
        &["--mask: 'mni152' is neither an existing file nor a built-in name", "mni152-2mm"],
    );
    // A missing file is named the same way.
    fail(
        &run_args(&inputs, "out", &["--atlas", "atlas/regions.tsv"]),
        dir.path(),
        2,
        &["--atlas: 'atlas/regions.tsv' is neither an existing file nor a built-in name"],
    );
    // In a configuration file, the error names the key.
    std::fs::write(
        dir.path().join("run.toml"),
        format!(
            "inputs = \"{inputs}\"\nparticipants = \"participants.tsv\"\ngroup_column = \"diagnosis\"\n\
             contrast = \"insomnia,control\"\nout = \"out\"\natlas = \"seitzman\"\n"
        ),
    )
    .unwrap();
    fail(&["run", "run.toml"], dir.path(), 2, &["run.toml: key 'atlas': found \"seitzman\"", "seitzman300"]);
    assert!(!dir.path().join("out").exists());
}

/// The FSL MNI152 2 mm grid of the built-in mask: 91 x 109 x 91, affine
/// [[-2,0,0,90],[0,2,0,-126],[0,0,2,-72]] (common practice; atlases/mni152/README.md).
const MNI_2MM: [usize; 3] = [91, 109, 91];

fn write_map(path: &Path, grid: [usize; 3], mni: bool, volume: &Array3<f32>) {
    let header = if mni {
        assert_eq!(grid, strata::demo::MNI_2MM_GRID);
        strata::demo::mni_2mm_header(16, "test map")
    } else {
        strata::demo::grid_header(grid, 16, "test map")
    };
    strata::demo::write_volume_f32(path, &header, volume).unwrap();
}

/// `count` seed maps on `grid`, non-zero everywhere, different per participant.
fn map_cohort(dir: &Path, count: usize, grid: [usize; 3], mni: bool) {
    let mut table = String::from("participant_id\tdiagnosis\n");
    for index in 0..count {
        let id = format!("sub-{:02}", index + 1);
        table.push_str(&format!("{id}\t{}\n", if index % 2 == 0 { "insomnia" } else { "control" }));
        let volume = Array3::from_shape_fn((grid[0], grid[1], grid[2]), |(i, j, k)| {
            (((index * 5 + i * 3 + j * 7 + k) % 13) as f32 - 6.0) / 10.0 + 0.05
        });
        write_map(&dir.join(format!("{id}_seedmap.nii.gz")), grid, mni, &volume);
    }
    std::fs::write(dir.join("participants.tsv"), table).unwrap();
}

#[test]
fn built_in_mask_selects_its_voxels_on_the_2mm_grid() {
    let dir = tempfile::tempdir().unwrap();
    map_cohort(dir.path(), 6, MNI_2MM, true);
    succeed(&run_args("sub-*_seedmap.nii.gz", "out", &["--mask", "mni152-2mm"]), dir.path());
    let out = dir.path().join("out");
    let summary = read_json(&out.join("summary.json"));
    let summary_text = summary.to_string();
    assert!(summary_text.contains("235375"), "the mask's 235,375 voxels are the features: {summary_text}");
    let provenance = read_json(&out.join("provenance.json"));
    assert_eq!(provenance["parameters"]["mask"], "mni152-2mm");
    let bytes = std::fs::read(root("atlases/mni152/mni152_brainmask_2mm.nii.gz")).unwrap();
    let entry = provenance["inputs"].as_array().unwrap().iter().find(|e| e["path"] == "mni152-2mm").unwrap();
    assert_eq!(entry["sha256"], sha256_hex(&bytes));
    assert_eq!(
        entry["built_in"],
        format!("mni152_brainmask_2mm.nii.gz (strata {})", env!("CARGO_PKG_VERSION"))
    );
}

#[test]
fn built_in_mask_on_another_grid_names_the_mask_and_the_fix() {
    let dir = tempfile::tempdir().unwrap();
    map_cohort(dir.path(), 4, [4, 4, 4], false);
    let stderr = fail(
        &run_args("sub-*_seedmap.nii.gz", "out", &["--mask", "mni152-2mm"]),
        dir.path(),
        3,
        &[
            "mni152-2mm/mni152_brainmask_2mm.nii.gz: the --mask grid [91, 109, 91]",
            "differs from the maps' [4, 4, 4]",
            "sub-01_seedmap.nii.gz",
            "give a mask on the maps' grid and affine, or resample the maps to the mask's grid",
        ],
    );
    assert!(!dir.path().join("out").exists(), "{stderr}");
}
