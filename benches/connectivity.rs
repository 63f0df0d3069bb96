//! Benchmark series for `strata connectivity` (run through benches/connectivity.sh).
//!
//! `cargo bench --bench connectivity -- generate DIR N` writes N participants' 4D BOLD series
//! of 91 x 109 x 91 x 600 float32 (2 mm grid, 2.17 GB each uncompressed) as `.nii.gz` at gzip
//! level 1 (nibabel's default), with a confounds table (six motion columns, a derivative with a
//! leading n/a, a censoring column dropping about 5% of the frames). Inside a brain-sized
//! ellipsoid (about 230,000 voxels) values are a baseline plus a slow wave shared by
//! neighbourhoods plus full-entropy noise, so the stream compresses like real float32 BOLD
//! (noise in every mantissa); outside, zeros. `... decode DIR` times a single-core gzip decode
//! of every series (the rate that bounds streaming). Figures are printed as `key value` lines.

use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::time::Instant;

use rayon::prelude::*;

const GRID: [usize; 3] = strata::demo::MNI_2MM_GRID;
const FRAMES: usize = 600;
/// Ellipsoid semi-axes (voxels) giving about 230,000 in-brain voxels on the 2 mm grid, as the
/// stage benchmark's maps.
const SEMI_AXES: [f64; 3] = [34.0, 42.0, 38.5];
/// gzip level of the generated series: nibabel's default (nibabel.openers.Opener).
const GZIP_LEVEL: u32 = 1;

/// A NIfTI-1 header of a 4D float32 series on the 2 mm grid, as 352 bytes (header and the empty
/// extension flag), made by the nifti crate's writer for a one-voxel image and given the
/// series' dimensions.
fn series_header(dir: &Path) -> Vec<u8> {
    let mut header = strata::demo::mni_2mm_header(16, "strata benchmark BOLD (synthetic)");
    header.pixdim[4] = 2.0;
    header.xyzt_units = 2 | 8; // mm, seconds (nifti1.h)
    let probe = dir.join(".header-probe.nii");
    nifti::writer::WriterOptions::new(&probe)
        .reference_header(&header)
        .write_nifti(&ndarray::Array4::<f32>::zeros((1, 1, 1, 1)))
        .unwrap();
    let mut bytes = std::fs::read(&probe).unwrap();
    std::fs::remove_file(&probe).unwrap();
    bytes.truncate(352);
    // dim[0..5] at byte 40 (nifti1.h), little-endian i16.
    for (index, value) in [4usize, GRID[0], GRID[1], GRID[2], FRAMES].iter().enumerate() {
        bytes[40 + 2 * index..42 + 2 * index].copy_from_slice(&(*value as i16).to_le_bytes());
    }
    bytes
}

/// xorshift64*: a fast deterministic noise source (Vigna 2016); quality beyond "looks random
/// to gzip" is not needed here.
fn next(state: &mut u64) -> u64 {
    *state ^= *state >> 12;
    *state ^= *state << 25;
    *state ^= *state >> 27;
    state.wrapping_mul(0x2545_F491_4F6C_DD1D)
}

fn generate(dir: &Path, participants: usize) {
    std::fs::create_dir_all(dir).unwrap();
    let header = series_header(dir);
    let voxels = GRID.iter().product::<usize>();
    let centre = GRID.map(|size| (size as f64 - 1.0) / 2.0);
    // Per voxel: inside the brain, its baseline and the phase of its slow wave.
    let layout: Vec<Option<(f32, f32)>> = (0..voxels)
        .map(|voxel| {
            let d =
                [voxel % GRID[0], (voxel / GRID[0]) % GRID[1], voxel / (GRID[0] * GRID[1])].map(|v| v as f64);
            let inside: f64 = (0..3).map(|axis| ((d[axis] - centre[axis]) / SEMI_AXES[axis]).powi(2)).sum();
            (inside <= 1.0).then(|| {
                let baseline = 800.0 + 200.0 * (d[0] / 11.0).sin() * (d[1] / 13.0).cos();
                let phase =
                    ((d[0] / 9.0).floor() + (d[1] / 9.0).floor() * 3.0 + (d[2] / 9.0).floor() * 7.0) * 0.7;
                (baseline as f32, phase as f32)
            })
        })
        .collect();
    let brain = layout.iter().filter(|v| v.is_some()).count();
    println!("brain_voxels {brain}");
    (0..participants).into_par_iter().for_each(|index| {
        let participant = format!("sub-{:03}", index + 1);
        let path = dir.join(format!("{participant}_task-rest_bold.nii.gz"));
        let file = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
        let mut encoder = flate2::write::GzEncoder::new(file, flate2::Compression::new(GZIP_LEVEL));
        encoder.write_all(&header).unwrap();
        let mut state = 0x9E37_79B9_7F4A_7C15u64 ^ (index as u64 + 1);
        let mut frame = vec![0u8; voxels * 4];
        let mut motion = [0.0f64; 6];
        let mut confounds =
            String::from("trans_x\ttrans_y\ttrans_z\trot_x\trot_y\trot_z\ttrans_x_derivative1\tkeep\n");
        for t in 0..FRAMES {
            let time = t as f32 * 0.15;
            for (voxel, slot) in layout.iter().enumerate() {
                let value = match slot {
                    Some((baseline, phase)) => {
                        let noise = (next(&mut state) >> 40) as f32 / (1u64 << 24) as f32 - 0.5;
                        baseline + 8.0 * (time + phase).sin() + 12.0 * noise
                    }
                    None => 0.0,
                };
                frame[voxel * 4..voxel * 4 + 4].copy_from_slice(&value.to_le_bytes());
            }
            encoder.write_all(&frame).unwrap();
            let previous = motion[0];
            for value in motion.iter_mut() {
                *value += ((next(&mut state) >> 40) as f64 / (1u64 << 24) as f64 - 0.5) * 0.02;
            }
            let derivative = if t == 0 { "n/a".to_string() } else { format!("{}", motion[0] - previous) };
            let keep = if next(&mut state).is_multiple_of(20) { 0 } else { 1 };
            let row: Vec<String> = motion.iter().map(|v| format!("{v}")).collect();
            confounds.push_str(&format!("{}\t{derivative}\t{keep}\n", row.join("\t")));
        }
        encoder.finish().unwrap().flush().unwrap();
        std::fs::write(dir.join(format!("{participant}_task-rest_confounds.tsv")), confounds).unwrap();
    });
    println!("participants {participants}");
    println!("series_bytes_uncompressed {}", 352 + voxels * 4 * FRAMES);
}

fn series(dir: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(|entry| entry.ok().map(|entry| entry.path()))
        .filter(|path| path.to_string_lossy().ends_with("_bold.nii.gz"))
        .collect();
    files.sort();
    files
}

fn decode(dir: &Path) {
    let files = series(dir);
    let mut seconds = 0.0;
    let mut bytes_in = 0u64;
    let mut bytes_out = 0u64;
    let mut buffer = vec![0u8; 1 << 20];
    for file in &files {
        bytes_in += std::fs::metadata(file).unwrap().len();
        let started = Instant::now();
        let mut decoder =
            flate2::bufread::MultiGzDecoder::new(std::io::BufReader::new(std::fs::File::open(file).unwrap()));
        loop {
            let read = decoder.read(&mut buffer).unwrap();
            if read == 0 {
                break;
            }
            bytes_out += read as u64;
        }
        seconds += started.elapsed().as_secs_f64();
    }
    println!("series {}", files.len());
    println!("compressed_gb {:.2}", bytes_in as f64 / 1e9);
    println!("uncompressed_gb {:.2}", bytes_out as f64 / 1e9);
    println!("gzip_single_core_seconds_total {seconds:.1}");
    println!("gzip_single_core_seconds_per_series {:.2}", seconds / files.len() as f64);
    println!("gzip_single_core_mb_per_s {:.0}", bytes_out as f64 / 1e6 / seconds);
}

fn main() {
    let args: Vec<String> = std::env::args().filter(|arg| arg != "--bench").collect();
    match args.get(1..).unwrap_or_default() {
        [command, dir, count] if command == "generate" => generate(Path::new(dir), count.parse().unwrap()),
        [command, dir] if command == "decode" => decode(Path::new(dir)),
        _ => eprintln!("usage: cargo bench --bench connectivity -- generate DIR N | decode DIR (see benches/connectivity.sh)"),
    }
}
