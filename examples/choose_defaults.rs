//! Prints the table behind strata's default community detection (docs/methods.md): on planted
//! and homogeneous cohorts of strata's own generator, the communities found and the adjusted
//! Rand index with the planted subgroups, per method, for strata's consensus rule (densities
//! weighted by modularity, collapsed or fragmented ones left out) and for a plain co-assignment
//! consensus over the same 5%-50% density sweep, and for a k-nearest-neighbour sweep.
//!
//! Run: cargo run --release --example choose_defaults [-- --quick]

use strata::communities::{detect_with_weighting, CommunityOptions, DensityWeighting, Method};
use strata::demo::Scenario;
use strata::graph::SweepLevel;
use strata::similarity::pearson;
use strata::validation::adjusted_rand_index;

fn main() {
    let quick = std::env::args().any(|arg| arg == "--quick");
    let mut cases: Vec<(usize, Vec<f64>, f64)> = vec![
        (120, vec![0.4, 0.35, 0.25], 0.6),
        (120, vec![0.4, 0.35, 0.25], 0.4),
        (120, vec![], 0.0),
        (300, vec![0.25, 0.25, 0.25, 0.25], 0.4),
        (300, vec![0.5, 0.3, 0.2], 0.3),
        (300, vec![0.25, 0.25, 0.25, 0.25], 0.2),
        (300, vec![0.25, 0.25, 0.25, 0.25], 0.15),
        (300, vec![0.6, 0.25, 0.15], 0.15),
        (300, vec![0.8, 0.2], 0.3),
        (300, vec![], 0.0),
        (600, vec![0.25, 0.25, 0.25, 0.25], 0.3),
        (600, vec![], 0.0),
    ];
    if quick {
        cases.truncate(3);
    }
    let methods = [Method::Infomap, Method::Leiden, Method::Louvain];
    let mut header = "| N | proportions | separation |".to_string();
    for method in methods {
        let name = method.name();
        header += &format!(" {name} rule | {name} plain | {name} knn |");
    }
    println!("{header}");
    println!("|---|---|---|{}", "---|".repeat(3 * methods.len()));
    for (participants, proportions, separation) in cases {
        let scenario = Scenario {
            participant_count: participants,
            subgroup_proportions: proportions.clone(),
            separation,
            ..Scenario::default()
        };
        let (matrix, truth) = strata::demo::matrix_features(&scenario);
        let similarity = pearson(&matrix);
        let label = if proportions.is_empty() { "none".to_string() } else { format!("{proportions:?}") };
        let mut row = format!("| {participants} | {label} | {separation} |");
        for method in methods {
            let density = CommunityOptions { method, ..CommunityOptions::default() };
            let knn = CommunityOptions {
                levels: [5, 10, 15, 20, 25, 30].into_iter().map(SweepLevel::Neighbours).collect(),
                ..density.clone()
            };
            for (options, weighting) in [
                (&density, DensityWeighting::Structured),
                (&density, DensityWeighting::Uniform),
                (&knn, DensityWeighting::Structured),
            ] {
                let result = detect_with_weighting(&similarity, options, weighting).unwrap();
                let ari = adjusted_rand_index(&truth, &result.partition.membership);
                row += &format!(" {} / {ari:.3} |", result.partition.community_count());
            }
        }
        println!("{row}");
    }
    println!("\nEach cell: communities found / ARI with the planted subgroups. For a homogeneous cohort the right answer is 1 community (ARI is then 1 by convention, and 0 for any split).");
}
