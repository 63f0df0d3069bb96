//! Benchmark cohorts and in-process stage figures (run through benches/run.sh).
//!
//! `cargo bench --bench stages -- generate matrices DIR` writes 1,000 participants x 333-region
//! matrices (55,278 edges); `... generate maps DIR` writes 300 participants x 2 mm seed maps
//! (91 x 109 x 91 grid, about 230,000 in-mask voxels). `... similarity DIR` reads a generated
//! cohort, times the similarity step in process, writes the standardised matrix to
//! DIR/standardised.npy for the numpy comparison, and times single-core gzip decoding of the
//! inputs. `... welch` times the Welch comparison of 300 participants x 230,000 features
//! (groups of 140 and 160; a deterministic synthetic matrix). Figures are printed as `key value`
//! lines.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::time::Instant;

use ndarray::{Array2, Array3};
use rayon::prelude::*;
use strata::demo::{write_participants_tsv, Scenario};
use strata::features::{build_features, FeatureMatrix, FeatureOptions, ValueScale, ValueTransform};
use strata::read::{discover_inputs, read_participants, InputOptions};
use strata::similarity::{pearson, standardise_rows};

/// Ellipsoid semi-axes (voxels) giving about 230,000 in-mask voxels on the 2 mm grid
/// (4/3 pi a b c = 230,300 for 34 x 42 x 38.5).
const SEMI_AXES: [f64; 3] = [34.0, 42.0, 38.5];
const GRID_2MM: [usize; 3] = strata::demo::MNI_2MM_GRID;

fn generate_matrices(dir: &Path) {
    let scenario = Scenario { participant_count: 1000, region_count: 333, ..Scenario::default() };
    let cohort = strata::demo::write_matrix_cohort(&scenario, dir).expect("write matrices");
    println!("participants {}", cohort.participants.len());
}

fn generate_maps(dir: &Path) {
    // A fast smooth synthetic pattern (separable waves plus noise): only the data volume and
    // the mask size matter for the timings, not the connectivity content.
    let scenario = Scenario { participant_count: 300, ..Scenario::default() };
    let (participants, _) =
        strata::demo::generate_matrix_values(&Scenario { region_count: 4, ..scenario.clone() });
    std::fs::create_dir_all(dir.join("maps")).unwrap();
    write_participants_tsv(&participants, &dir.join("participants.tsv")).unwrap();
    let header = strata::demo::mni_2mm_header(16, "strata benchmark map (synthetic)");
    let centre = GRID_2MM.map(|size| (size as f64 - 1.0) / 2.0);
    participants.par_iter().enumerate().for_each(|(index, participant)| {
        let mut rng = strata::seed::rng(7, "bench-maps", &[index as u64]);
        let phase: [f64; 3] = [0, 1, 2].map(|_| rand::Rng::random::<f64>(&mut rng) * 6.0);
        let volume = Array3::from_shape_fn((GRID_2MM[0], GRID_2MM[1], GRID_2MM[2]), |(i, j, k)| {
            let d = [i as f64, j as f64, k as f64];
            let inside: f64 = (0..3).map(|axis| ((d[axis] - centre[axis]) / SEMI_AXES[axis]).powi(2)).sum();
            if inside > 1.0 {
                return 0.0f32;
            }
            let wave =
                (d[0] / 6.0 + phase[0]).sin() * (d[1] / 9.0 + phase[1]).cos() + (d[2] / 7.0 + phase[2]).sin();
            let noise = (((i * 73 + j * 151 + k * 19 + index * 7) % 101) as f64 / 101.0) - 0.5;
            (0.3 * wave + 0.2 * noise + 0.05).tanh() as f32
        });
        let path = dir.join("maps").join(format!("{}_seedmap.nii.gz", participant.participant_id));
        strata::demo::write_volume_f32(&path, &header, &volume).unwrap();
    });
    println!("participants {}", participants.len());
}

fn inputs(dir: &Path) -> (strata::read::Cohort, Vec<PathBuf>) {
    let table = read_participants(&dir.join("participants.tsv")).unwrap();
    let pattern =
        if dir.join("maps").exists() { "maps/sub-*_seedmap.nii.gz" } else { "matrices/sub-*_conn.npy" };
    let options = InputOptions {
        patterns: vec![dir.join(pattern).to_string_lossy().into_owned()],
        match_column: None,
        variable: None,
    };
    let cohort = discover_inputs(&options, &table).unwrap();
    let files = cohort.sources.iter().map(|source| source.path.clone()).collect();
    (cohort, files)
}

fn similarity(dir: &Path) {
    let (cohort, files) = inputs(dir);
    // Warm the page cache so both timings below measure decoding, not the disk.
    for file in &files {
        std::hint::black_box(std::fs::read(file).unwrap());
    }
    let started = Instant::now();
    let cpu_started = cpu_seconds();
    let features = build_features(
        &cohort,
        &FeatureOptions {
            mask: None,
            values: ValueScale::Correlation,
            transform: ValueTransform::None,
            region_names: None,
        },
    )
    .unwrap();
    let read_seconds = started.elapsed().as_secs_f64();
    let read_cpu = cpu_seconds() - cpu_started;
    let (n, f) = (features.matrix.participant_count(), features.matrix.feature_count());
    println!("participants {n}");
    println!("features {f}");
    println!("read_features_seconds {read_seconds:.3}");
    println!("read_features_cpu_seconds {read_cpu:.2}");
    // Single-core gzip decode of the same files (the reference rate for the reading target).
    if files[0].to_string_lossy().ends_with(".gz") {
        let started = Instant::now();
        let cpu_started = cpu_seconds();
        let mut bytes_out = 0usize;
        for file in &files {
            let mut decoder = flate2::read::GzDecoder::new(std::fs::File::open(file).unwrap());
            let mut buffer = Vec::new();
            decoder.read_to_end(&mut buffer).unwrap();
            bytes_out += buffer.len();
        }
        let seconds = started.elapsed().as_secs_f64();
        println!("gzip_single_core_seconds {seconds:.3}");
        println!("gzip_single_core_cpu_seconds {:.2}", cpu_seconds() - cpu_started);
        println!("gzip_single_core_mb_per_s {:.1}", bytes_out as f64 / 1e6 / seconds);
        println!("read_speedup_over_single_core_gzip {:.2}", seconds / read_seconds);
        // The same files through libdeflate on one core (the whole-file decoder strata uses
        // for single-member gzip), for comparison with the streaming zlib-rs rate above.
        let inputs: Vec<Vec<u8>> = files.iter().map(|file| std::fs::read(file).unwrap()).collect();
        let mut buffer = Vec::new();
        let started = Instant::now();
        for input in &inputs {
            let size = u32::from_le_bytes(input[input.len() - 4..].try_into().unwrap()) as usize;
            buffer.resize(size.max(buffer.len()), 0);
            strata::read::nifti::inflate_whole(input, &mut buffer[..size]).expect("single-member gzip");
        }
        let libdeflate_seconds = started.elapsed().as_secs_f64();
        println!("libdeflate_single_core_seconds {libdeflate_seconds:.3}");
        println!("read_speedup_over_single_core_libdeflate {:.2}", libdeflate_seconds / read_seconds);
    }
    let mut best = f64::INFINITY;
    for _ in 0..3 {
        let started = Instant::now();
        let result = pearson(&features.matrix);
        best = best.min(started.elapsed().as_secs_f64());
        std::hint::black_box(result);
    }
    let flops = 2.0 * (n as f64).powi(2) * f as f64;
    println!("similarity_seconds {best:.3}");
    println!("similarity_gflops_full_equivalent {:.1}", flops / best / 1e9);
    // The standardised matrix numpy multiplies: same values as strata's blocks.
    let (means, inverse_norms) = standardise_rows(&features.matrix);
    let mut z = Array2::<f32>::zeros((n, f));
    z.outer_iter_mut().enumerate().for_each(|(row, mut out)| {
        for (target, &value) in out.iter_mut().zip(features.matrix.values.row(row)) {
            *target = ((f64::from(value) - means[row]) * inverse_norms[row]) as f32;
        }
    });
    ndarray_npy::write_npy(dir.join("standardised.npy"), &z).unwrap();
    let _ = FeatureMatrix { values: Array2::zeros((0, 0)) };
}

/// User plus system CPU seconds of this process so far (Linux `/proc/self/stat` fields 14 and
/// 15, in clock ticks of 1/100 s: proc(5)); 0 elsewhere. CPU time, unlike wall time, stays
/// meaningful when other jobs share the machine.
fn cpu_seconds() -> f64 {
    let stat = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    let after_name = stat.rsplit_once(')').map_or("", |(_, rest)| rest);
    let fields: Vec<&str> = after_name.split_whitespace().collect();
    let ticks = |index: usize| fields.get(index).and_then(|v| v.parse::<f64>().ok()).unwrap_or(0.0);
    // After the ")" the fields start at field 3 (state), so utime (14) is index 11.
    (ticks(11) + ticks(12)) / 100.0
}

/// Seconds of the Welch comparison (means, t, degrees of freedom, p, Hedges g) over 300 x 230,000
/// features, best of three runs.
fn welch() {
    let (rows, cols) = (300, 230_000);
    let values: Vec<f32> = (0..rows * cols).map(|v| ((v * 7919) % 1009) as f32 * 0.01).collect();
    let matrix = FeatureMatrix { values: Array2::from_shape_vec((rows, cols), values).unwrap() };
    let a: Vec<usize> = (0..140).collect();
    let b: Vec<usize> = (140..rows).collect();
    let mut best = f64::INFINITY;
    for _ in 0..3 {
        let start = Instant::now();
        let result = strata::stats::welch_comparison(&matrix, &a, &b).expect("two groups");
        best = best.min(start.elapsed().as_secs_f64());
        assert_eq!(result.feature_count(), cols);
    }
    println!("welch_participants {rows}");
    println!("welch_features {cols}");
    println!("threads {}", rayon::current_num_threads());
    println!("welch_seconds {best:.3}");
}

fn main() {
    let args: Vec<String> = std::env::args().filter(|arg| arg != "--bench").collect();
    match args.get(1..).unwrap_or_default() {
        [command, kind, dir] if command == "generate" => {
            let dir = PathBuf::from(dir);
            std::fs::create_dir_all(&dir).unwrap();
            if kind == "matrices" {
                generate_matrices(&dir)
            } else {
                generate_maps(&dir)
            }
        }
        [command, dir] if command == "similarity" => similarity(Path::new(dir)),
        [command] if command == "welch" => welch(),
        _ => eprintln!("usage: cargo bench --bench stages -- generate matrices|maps DIR | similarity DIR | welch (see benches/run.sh)"),
    }
}
