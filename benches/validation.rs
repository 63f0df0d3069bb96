//! Validation-stage timings (run through benches/validation.sh): the rotation null test and the
//! resampling stability for 1,000 participants (strata's generator: four planted subgroups,
//! separation 0.3, 100-region matrices), with the default sweep, trials and Infomap.
//!
//! `cargo bench --bench validation -- NULLS SUBSAMPLES [PARTICIPANTS [TRIALS]]` times NULLS null cohorts
//! and SUBSAMPLES subsamples and prints `key value` lines: seconds of each part, seconds per
//! draw and per subsample, and the projection to the 200 null cohorts plus 100
//! subsamples (per-draw seconds times the count: draws are independent and equally costly).
//! TRIALS (default: strata's default trials per density) measures what `--trials` buys.

use std::time::Instant;

use strata::communities::{detect, CommunityOptions};
use strata::demo::Scenario;
use strata::similarity::{pearson, standardise_rows};
use strata::validation::{null_test, stability, NullOptions, StabilityOptions};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).filter(|arg| arg != "--bench").collect();
    let nulls: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(20);
    let subsamples: usize = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(10);
    let participants: usize = args.get(2).and_then(|a| a.parse().ok()).unwrap_or(1000);
    let trials: usize = args.get(3).and_then(|a| a.parse().ok()).unwrap_or(strata::config::DEFAULT_TRIALS);
    let scenario = Scenario {
        participant_count: participants,
        subgroup_proportions: vec![0.25; 4],
        separation: 0.3,
        ..Scenario::default()
    };
    let (features, _) = strata::demo::matrix_features(&scenario);
    let similarity = pearson(&features);
    let (_, inverse) = standardise_rows(&features);
    let norms: Vec<f64> = inverse.iter().map(|v| 1.0 / v).collect();
    let options = CommunityOptions { trials, ..CommunityOptions::default() };
    let started = Instant::now();
    let observed = detect(&similarity, &options).expect("planted cohort has edges");
    let detect_seconds = started.elapsed().as_secs_f64();
    println!("participants {participants}");
    println!("threads {}", rayon::current_num_threads());
    println!("trials_per_density {trials}");
    println!("detect_seconds {detect_seconds:.2}");
    println!("communities {}", observed.partition.community_count());
    let started = Instant::now();
    let null = null_test(
        &similarity,
        Some(&norms),
        &observed,
        &options,
        &NullOptions { draws: nulls, ..NullOptions::default() },
    )
    .expect("null test runs");
    let null_seconds = started.elapsed().as_secs_f64();
    println!("null_draws {nulls}");
    println!("null_seconds {null_seconds:.2}");
    println!("null_seconds_per_draw {:.3}", null_seconds / nulls as f64);
    println!("null_p {:.4}", null.structure.p_value);
    let started = Instant::now();
    let stable = stability(
        &similarity,
        &observed.partition,
        &options,
        &StabilityOptions { subsamples, ..StabilityOptions::default() },
    )
    .expect("stability runs");
    let stability_seconds = started.elapsed().as_secs_f64();
    println!("subsamples {subsamples}");
    println!("stability_seconds {stability_seconds:.2}");
    println!("stability_seconds_per_subsample {:.3}", stability_seconds / subsamples as f64);
    println!("median_ari {:.3}", stable.median_ari);
    let projected = 200.0 * null_seconds / nulls as f64 + 100.0 * stability_seconds / subsamples as f64;
    println!("projected_200_nulls_100_subsamples_seconds {projected:.0}");
}
