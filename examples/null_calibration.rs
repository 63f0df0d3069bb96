//! Calibration and power of strata's rotation null test (docs/methods.md, "The null test"): on
//! homogeneous cohorts of strata's own generator (one population, no subgroups) it counts how
//! often the test says "subgroups supported" at alpha = 0.05, and on planted cohorts how often
//! it does, with the adjusted Rand index of the communities with the planted subgroups.
//!
//! Run: cargo run --release --example null_calibration [-- [--gaussian] COHORTS DRAWS N SEPARATION...]
//! (defaults: 40 cohorts, 39 draws, N = 120, separations 0.0 and 0.3 and 0.6). Each separation
//! after the first runs half as many cohorts.

use std::time::Instant;

use strata::communities::{detect, CommunityOptions};
use strata::demo::Scenario;
use strata::similarity::pearson;
use strata::validation::{adjusted_rand_index, null_test, NullOptions};

fn main() {
    // --gaussian: no age or motion effects (the generator's only non-Gaussian ingredients in a
    // homogeneous cohort: uniform ages and log-normal motion), so rows are exactly Gaussian.
    let gaussian = std::env::args().any(|arg| arg == "--gaussian");
    let args: Vec<String> = std::env::args().skip(1).filter(|arg| arg != "--gaussian").collect();
    let cohorts: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(40);
    let draws: usize = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(39);
    let participants: usize = args.get(2).and_then(|a| a.parse().ok()).unwrap_or(120);
    let mut separations: Vec<f64> = args.iter().skip(3).filter_map(|a| a.parse().ok()).collect();
    if separations.is_empty() {
        separations = vec![0.0, 0.3, 0.6];
    }
    println!("| separation | cohorts | null draws | N | subgroups supported (verdict) | also consensus p <= 0.05 | mean ARI | mean communities | seconds per cohort |");
    println!("|---|---|---|---|---|---|---|---|---|");
    for (index, &separation) in separations.iter().enumerate() {
        let cohorts = if index == 0 { cohorts } else { cohorts.div_ceil(2) };
        let started = Instant::now();
        let mut rejected = 0;
        let mut rejected_structure = 0;
        let mut ari_sum = 0.0;
        let mut communities_sum = 0;
        for cohort in 0..cohorts {
            let base = Scenario {
                participant_count: participants,
                seed: 1_000 + cohort as u64,
                separation,
                age_effect: if gaussian { 0.0 } else { Scenario::default().age_effect },
                motion_effect: if gaussian { 0.0 } else { Scenario::default().motion_effect },
                ..Scenario::default()
            };
            // One population: no subgroups and no diagnosis difference either (a diagnosis effect
            // makes the cohort a mixture of two populations, which the test should detect).
            let scenario = if separation == 0.0 {
                Scenario { diagnosis_effect: 0.0, ..base.homogeneous() }
            } else {
                base
            };
            let (features, truth) = strata::demo::matrix_features(&scenario);
            let similarity = pearson(&features);
            let options = CommunityOptions { seed: 77 + cohort as u64, ..CommunityOptions::default() };
            let result = detect(&similarity, &options).expect("generator cohorts have edges");
            let (_, inverse_norms) = strata::similarity::standardise_rows(&features);
            let norms: Vec<f64> = inverse_norms.iter().map(|value| 1.0 / value).collect();
            let null = null_test(
                &similarity,
                Some(&norms),
                &result,
                &options,
                &NullOptions { draws, seed: 99 + cohort as u64, ..NullOptions::default() },
            )
            .expect("null test runs");
            rejected += usize::from(null.subgroups_supported);
            rejected_structure +=
                usize::from(null.structure.p_value <= 0.05 && null.observed_communities >= 2);
            ari_sum += adjusted_rand_index(&truth, &result.partition.membership);
            communities_sum += result.partition.community_count();
            eprintln!(
                "separation {separation} cohort {cohort}: communities {}, structure {:.4} (p {:.3}), consensus {:.4} (p {:.3}), null multi-community share {:.2}",
                result.partition.community_count(),
                null.structure.observed,
                null.structure.p_value,
                null.consensus.observed,
                null.consensus.p_value,
                null.null_multi_community_share
            );
        }
        println!(
            "| {separation} | {cohorts} | {draws} | {participants} | {rejected} | {rejected_structure} | {:.3} | {:.2} | {:.1} |",
            ari_sum / cohorts as f64,
            communities_sum as f64 / cohorts as f64,
            started.elapsed().as_secs_f64() / cohorts as f64
        );
    }
}
