//! Study planning (`strata power`): how well would strata recover subgroups of a given size and
//! separation, and how often would the null test detect them?
//!
//! Simulates cohorts with strata's own generator (the demo's region-matrix model: participants
//! drawn from latent subgroups with different connectivity profiles plus noise), runs each
//! through the same similarity, sweep, community detection, consensus and null test as
//! `strata run`, and reports the mean adjusted Rand index with the planted subgroups and the
//! share of cohorts in which the null test supports subgroups (its power; with zero separation,
//! its false-positive rate). The separation is in units of the participant noise standard
//! deviation, the scale a pilot run's subgroup effect sizes (Hedges g between communities) are
//! on.

use serde::Serialize;

use crate::communities::{detect, CommunityOptions, Method};
use crate::demo::Scenario;
use crate::error::Error;
use crate::similarity::{pearson, standardise_rows};
use crate::validation::{adjusted_rand_index, null_test, NullOptions};

/// Default simulated cohorts per setting (`--cohorts`): 20 gives a power estimate with a 95%
/// Wilson interval about +-0.2 wide at 0.5 and narrower near 0 or 1 (strata's choice, balanced
/// against a full analysis with its null test per cohort).
pub const DEFAULT_COHORTS: usize = 20;

/// Default null cohorts per simulated cohort (`--null-draws`): 39 make p = 0.025 attainable, so
/// the verdict at alpha 0.05 is not decided by the p-value's resolution (strata's choice: fewer
/// than a real run's default, to keep planning fast).
pub const DEFAULT_POWER_NULL_DRAWS: usize = 39;

/// z of the two-sided 95% interval (normal quantile 0.975, common practice).
const Z_95: f64 = 1.959_963_984_540_054;

/// Options of one power simulation.
#[derive(Debug, Clone)]
pub struct PowerOptions {
    /// Participants per simulated cohort.
    pub participants: usize,
    /// Share of each subgroup (sums to 1); empty for one homogeneous population.
    pub proportions: Vec<f64>,
    /// Subgroup separation in units of the noise standard deviation.
    pub separation: f64,
    /// Regions of the simulated matrices.
    pub regions: usize,
    /// Simulated cohorts.
    pub cohorts: usize,
    /// Null cohorts per simulated cohort.
    pub null_draws: usize,
    /// Community-detection method.
    pub method: Method,
    /// Seeded trials per graph of the sweep (as `strata run --trials`).
    pub trials: usize,
    /// Patient-minus-comparison difference planted on the generator's affected edges, in Fisher
    /// z (0: the subgroups are the only group structure, so that without subgroups the cohort
    /// is one population and the rate is a false-positive rate).
    pub diagnosis_effect: f64,
    /// Significance level.
    pub alpha: f64,
    /// Seed of the simulation.
    pub seed: u64,
}

/// What the simulation found.
#[derive(Debug, Clone, Serialize)]
pub struct PowerReport {
    /// Participants per cohort.
    pub participants: usize,
    /// Subgroup shares.
    pub proportions: Vec<f64>,
    /// Separation.
    pub separation: f64,
    /// Simulated cohorts.
    pub cohorts: usize,
    /// Null cohorts per simulated cohort.
    pub null_draws: usize,
    /// Trials per graph of the sweep.
    pub trials: usize,
    /// Patient-minus-comparison difference planted, in Fisher z.
    pub diagnosis_effect: f64,
    /// Mean ARI of the communities with the planted subgroups (NaN without subgroups).
    pub mean_ari: f64,
    /// 10th and 90th percentile of the ARI.
    pub ari_range: (f64, f64),
    /// Mean number of communities found.
    pub mean_communities: f64,
    /// Cohorts in which the null test supported subgroups.
    pub supported: usize,
    /// supported / cohorts: the power (or, without subgroups, the false-positive rate).
    pub rate: f64,
    /// 95% Wilson interval of the rate.
    pub rate_interval: (f64, f64),
}

impl PowerReport {
    /// The report in words.
    pub fn text(&self) -> String {
        let planted = if self.proportions.is_empty() {
            "one homogeneous population (no subgroups)".to_string()
        } else {
            let shares: Vec<String> = self.proportions.iter().map(|p| format!("{:.0}%", 100.0 * p)).collect();
            format!(
                "{} subgroups ({}) at separation {}",
                self.proportions.len(),
                shares.join(", "),
                self.separation
            )
        };
        let mut text = format!(
            "Simulated {} cohorts of {} participants: {planted}; {} null cohorts each; {} trials per graph of the sweep.\n",
            self.cohorts, self.participants, self.null_draws, self.trials
        );
        if !self.proportions.is_empty() {
            text += &format!(
                "Expected recovery: mean adjusted Rand index {:.3} (10th-90th percentile {:.3}-{:.3}); mean communities found {:.2}.\n",
                self.mean_ari, self.ari_range.0, self.ari_range.1, self.mean_communities
            );
        } else {
            text += &format!("Mean communities found {:.2}.\n", self.mean_communities);
        }
        if self.diagnosis_effect != 0.0 {
            text += &format!(
                "A patient-minus-comparison difference of {} Fisher z is planted on the generator's affected edges: it is group structure of its own, which the null test may detect with or without subgroups.\n",
                self.diagnosis_effect
            );
        }
        let what = if !self.proportions.is_empty() {
            "power"
        } else if self.diagnosis_effect == 0.0 {
            "false-positive rate"
        } else {
            "rate"
        };
        text += &format!(
            "Null test supported subgroups in {} of {} cohorts: {what} {:.2} (95% Wilson interval {:.2}-{:.2}).\n",
            self.supported, self.cohorts, self.rate, self.rate_interval.0, self.rate_interval.1
        );
        text += "Simulated with strata's own generator (region matrices); real cohorts differ: treat the figures as a guide for planning.\n";
        text
    }
}

/// The 95% Wilson score interval of `successes` out of `trials` (Wilson 1927).
pub fn wilson_interval(successes: usize, trials: usize) -> (f64, f64) {
    if trials == 0 {
        return (0.0, 1.0);
    }
    let n = trials as f64;
    let p = successes as f64 / n;
    let z2 = Z_95 * Z_95;
    let centre = (p + z2 / (2.0 * n)) / (1.0 + z2 / n);
    let half = Z_95 * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt() / (1.0 + z2 / n);
    ((centre - half).max(0.0), (centre + half).min(1.0))
}

/// Runs the simulation.
///
/// # Errors
/// An invalid scenario (checked as the demo's), or a cohort on which community detection or
/// the null test fails.
pub fn simulate(options: &PowerOptions) -> Result<PowerReport, Error> {
    let scenario = Scenario {
        participant_count: options.participants,
        subgroup_proportions: options.proportions.clone(),
        separation: if options.proportions.is_empty() { 0.0 } else { options.separation },
        diagnosis_effect: options.diagnosis_effect,
        region_count: options.regions,
        seed: options.seed,
        ..Scenario::default()
    };
    scenario.validate()?;
    let community_options =
        CommunityOptions { method: options.method, trials: options.trials, ..CommunityOptions::default() };
    // Cohorts run one after another; each uses every core for its own sweep and null draws.
    let outcomes: Vec<Result<(f64, usize, bool), Error>> = (0..options.cohorts)
        .map(|cohort| {
            let cohort_scenario = Scenario {
                seed: crate::seed::derive(options.seed, "power_cohort", &[cohort as u64]),
                ..scenario.clone()
            };
            let (features, truth) = crate::demo::matrix_features(&cohort_scenario);
            let similarity = pearson(&features);
            let (_, inverse_norms) = standardise_rows(&features);
            let norms: Vec<f64> =
                inverse_norms.iter().map(|&v| if v > 0.0 { 1.0 / v } else { 0.0 }).collect();
            let seed = crate::seed::derive(options.seed, "power_detect", &[cohort as u64]);
            let detect_options = CommunityOptions { seed, ..community_options.clone() };
            let result = detect(&similarity, &detect_options)?;
            let null = null_test(
                &similarity,
                Some(&norms),
                &result,
                &detect_options,
                &NullOptions {
                    draws: options.null_draws,
                    alpha: options.alpha,
                    seed: crate::seed::derive(options.seed, "power_null", &[cohort as u64]),
                },
            )?;
            let ari = if options.proportions.is_empty() {
                f64::NAN
            } else {
                adjusted_rand_index(&truth, &result.partition.membership)
            };
            Ok((ari, result.partition.community_count(), null.subgroups_supported))
        })
        .collect();
    let mut aris = Vec::new();
    let mut communities = 0usize;
    let mut supported = 0usize;
    for outcome in outcomes {
        let (ari, count, yes) = outcome?;
        aris.push(ari);
        communities += count;
        supported += usize::from(yes);
    }
    let mut finite: Vec<f64> = aris.iter().copied().filter(|a| a.is_finite()).collect();
    finite.sort_by(f64::total_cmp);
    let cohorts = options.cohorts.max(1);
    Ok(PowerReport {
        participants: options.participants,
        proportions: options.proportions.clone(),
        separation: options.separation,
        cohorts: options.cohorts,
        null_draws: options.null_draws,
        trials: options.trials,
        diagnosis_effect: options.diagnosis_effect,
        mean_ari: if finite.is_empty() { f64::NAN } else { finite.iter().sum::<f64>() / finite.len() as f64 },
        ari_range: (
            crate::validation::quantile_sorted(&finite, 0.1),
            crate::validation::quantile_sorted(&finite, 0.9),
        ),
        mean_communities: communities as f64 / cohorts as f64,
        supported,
        rate: supported as f64 / cohorts as f64,
        rate_interval: wilson_interval(supported, options.cohorts),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wilson_interval_matches_the_textbook_example() {
        // 8 successes in 10 trials: statsmodels 0.15.0 proportion_confint(8, 10,
        // method="wilson") gives (0.49016247153664183, 0.9433178485456247).
        let (low, high) = wilson_interval(8, 10);
        assert!((low - 0.4901625).abs() < 1e-6, "{low}");
        assert!((high - 0.9433178).abs() < 1e-6, "{high}");
    }
}
