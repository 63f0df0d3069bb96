//! Prints the table behind strata's consensus rule (docs/methods.md): adjusted Rand index with
//! the planted subgroups of strata's own generator, for the modularity-weighted rule and for a
//! plain (uniform) co-assignment consensus, over the default 5%-50% sweep.
//!
//! Run: cargo run --release --example consensus_rule

use strata::communities::{detect_with_weighting, CommunityOptions, DensityWeighting};
use strata::demo::Scenario;
use strata::features::FeatureMatrix;
use strata::similarity::pearson;
use strata::validation::adjusted_rand_index;

fn features(scenario: &Scenario) -> (FeatureMatrix, Vec<usize>) {
    strata::demo::matrix_features(scenario)
}

fn main() {
    println!("| participants | proportions | separation | communities (rule) | ARI (rule) | communities (plain) | ARI (plain) |");
    println!("|---|---|---|---|---|---|---|");
    let cases: Vec<(usize, Vec<f64>, f64)> = vec![
        (120, vec![0.4, 0.35, 0.25], 0.6),
        (120, vec![0.4, 0.35, 0.25], 0.4),
        (300, vec![0.25, 0.25, 0.25, 0.25], 0.4),
        (300, vec![0.5, 0.3, 0.2], 0.3),
        (600, vec![0.25, 0.25, 0.25, 0.25], 0.3),
        (300, vec![0.25, 0.25, 0.25, 0.25], 0.2),
        (300, vec![0.25, 0.25, 0.25, 0.25], 0.15),
        (300, vec![0.25, 0.25, 0.25, 0.25], 0.1),
        (300, vec![0.6, 0.25, 0.15], 0.15),
        (300, vec![], 0.0),
    ];
    for (participants, proportions, separation) in cases {
        let scenario = Scenario {
            participant_count: participants,
            subgroup_proportions: proportions.clone(),
            separation,
            ..Scenario::default()
        };
        let (matrix, truth) = features(&scenario);
        let similarity = pearson(&matrix);
        let options = CommunityOptions {
            densities: strata::config::DEFAULT_DENSITIES.to_vec(),
            method: strata::communities::Method::Louvain,
            trials: strata::config::DEFAULT_TRIALS,
            resolution: 1.0,
            min_community_size: strata::config::DEFAULT_MIN_COMMUNITY_SIZE,
            consensus_threshold: strata::config::DEFAULT_CONSENSUS_THRESHOLD,
            seed: strata::config::DEFAULT_SEED,
        };
        let rule = detect_with_weighting(&similarity, &options, DensityWeighting::Structured).unwrap();
        let plain = detect_with_weighting(&similarity, &options, DensityWeighting::Uniform).unwrap();
        let label =
            if proportions.is_empty() { "homogeneous".to_string() } else { format!("{proportions:?}") };
        println!(
            "| {participants} | {label} | {separation} | {} | {:.3} | {} | {:.3} |",
            rule.partition.community_count(),
            adjusted_rand_index(&truth, &rule.partition.membership),
            plain.partition.community_count(),
            adjusted_rand_index(&truth, &plain.partition.membership)
        );
    }
}
