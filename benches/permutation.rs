//! Permutation benchmark: 1,000 Freedman-Lane permutations of a two-group contrast with one
//! covariate (max-statistic family-wise p over every feature), on synthetic data of the issue's
//! two sizes: 300 participants x 230,000 voxels and 1,000 participants x 55,278 edges.
//!
//! `cargo bench --bench permutation` prints `key value` lines (seconds; figures go to
//! docs/performance.md with the command). Data are seeded normal values generated in process:
//! only the sizes matter for the timing.

use std::time::Instant;

use ndarray::Array2;
use rand_distr::{Distribution, StandardNormal};
use rayon::prelude::*;
use strata::features::FeatureMatrix;
use strata::stats::permutation::{freedman_lane, random_permutations};
use strata::stats::Design;

const PERMUTATIONS: usize = 1000;

fn synthetic(participants: usize, features: usize) -> FeatureMatrix {
    let mut values = vec![0.0f32; participants * features];
    values.par_chunks_mut(features).enumerate().for_each(|(row, chunk)| {
        let mut rng = strata::seed::rng(1, "bench-permutation", &[row as u64]);
        for value in chunk {
            *value = <StandardNormal as Distribution<f64>>::sample(&StandardNormal, &mut rng) as f32;
        }
    });
    FeatureMatrix { values: Array2::from_shape_vec((participants, features), values).unwrap() }
}

fn run(label: &str, participants: usize, features: usize) {
    let matrix = synthetic(participants, features);
    let design = Design {
        columns: vec!["intercept".into(), "group".into(), "age".into()],
        values: (0..participants).flat_map(|i| [1.0, (i % 2) as f64, 20.0 + (i * 37 % 41) as f64]).collect(),
    };
    let rows: Vec<usize> = (0..participants).collect();
    let permutations = random_permutations(participants, PERMUTATIONS, 7);
    let started = Instant::now();
    let result = freedman_lane(&matrix, &rows, &design, 1, &permutations).unwrap();
    let seconds = started.elapsed().as_secs_f64();
    let smallest = result.p_fwe.iter().copied().fold(f64::INFINITY, f64::min);
    println!("{label}_participants {participants}");
    println!("{label}_features {features}");
    println!("{label}_permutations {}", result.permutations);
    println!("{label}_seconds {seconds:.2}");
    println!("{label}_threads {}", rayon::current_num_threads());
    println!("{label}_smallest_fwe_p {smallest:.4}");
}

fn main() {
    run("maps", 300, 230_269);
    run("matrices", 1000, 55_278);
}
