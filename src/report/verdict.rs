//! The validation stage's results in words and in `summary.json`: the null test's verdict, the
//! stability figures, and the warnings they call for.

use std::collections::BTreeMap;

use super::summary::{
    CommunityStability, NullTestSummary, StabilitySummary, Warning, LOW_MEDIAN_ARI, UNSTABLE_JACCARD,
};
use crate::communities::Partition;
use crate::validation::{median, NullComparison, NullResult, StabilityResult};

fn quantiles(comparison: &NullComparison) -> BTreeMap<String, f64> {
    comparison.null_quantiles.iter().map(|(level, value)| (format!("{level}"), *value)).collect()
}

/// The null test's figures for `summary.json`.
pub fn null_summary(null: &NullResult) -> NullTestSummary {
    NullTestSummary {
        draws: null.draws,
        alpha: null.alpha,
        statistic: null.statistic.to_string(),
        observed: null.structure.observed,
        p_value: null.structure.p_value,
        null_quantiles: quantiles(&null.structure),
        null_mean: null.structure.null_mean,
        null_values: null.null.iter().map(|draw| draw.structure).collect(),
        consensus_observed: null.consensus.observed,
        consensus_p_value: null.consensus.p_value,
        consensus_null_quantiles: quantiles(&null.consensus),
        null_multi_community_share: null.null_multi_community_share,
        smallest_p: null.smallest_p,
        subgroups_supported: null.subgroups_supported,
    }
}

/// The stability figures for `summary.json`, and the warnings they call for.
pub fn stability_summary(
    result: &StabilityResult,
    partition: &Partition,
    subsamples: usize,
    fraction: f64,
) -> (StabilitySummary, Vec<Warning>) {
    let communities: Vec<CommunityStability> = result
        .community_stability
        .iter()
        .enumerate()
        .map(|(index, &stability)| {
            let members: Vec<f64> = partition
                .membership
                .iter()
                .zip(&result.confidence)
                .filter(|(&community, _)| community == index + 1)
                .map(|(_, &confidence)| confidence)
                .collect();
            CommunityStability { community: index + 1, stability, median_confidence: median(&members) }
        })
        .collect();
    let mut warnings = Vec::new();
    // One community: the stability figures say whether subsamples agree there is one; a
    // community-level warning would repeat the ARI warning.
    if communities.len() >= 2 {
        let unstable: Vec<(usize, f64)> = communities
            .iter()
            .filter(|community| community.stability < UNSTABLE_JACCARD)
            .map(|community| (community.community, community.stability))
            .collect();
        if !unstable.is_empty() {
            warnings.push(Warning::UnstableCommunities { communities: unstable });
        }
    }
    if result.median_ari < LOW_MEDIAN_ARI {
        warnings.push(Warning::LowSubsampleAgreement { median_ari: result.median_ari });
    }
    let summary = StabilitySummary {
        subsamples,
        fraction,
        median_ari: result.median_ari,
        communities,
        median_confidence: median(&result.confidence),
    };
    (summary, warnings)
}

/// The verdict sentence: the number of communities and what the null test says of them.
pub fn verdict(community_count: usize, null: Option<&NullTestSummary>) -> String {
    let statistic_words = |statistic: &str| {
        if statistic == "modularity" {
            "mean modularity over the sweep"
        } else {
            "mean relative codelength savings over the sweep"
        }
    };
    match (null, community_count) {
        (None, 0 | 1) => "No subgroups found: the consensus is one community (null test not run).".to_string(),
        (None, count) => format!(
            "{count} communities found; the null test was not run (--null-draws 0), so whether they are stronger than one homogeneous population would give is untested."
        ),
        (Some(null), 0 | 1) => format!(
            "No subgroups found: the consensus is one community (structure {} = {:.4}, null test p = {:.3} over {} null cohorts).",
            statistic_words(&null.statistic),
            null.observed,
            null.p_value,
            null.draws
        ),
        (Some(null), count) if null.subgroups_supported => format!(
            "Subgroups supported: {count} communities, and the community structure ({} = {:.4}) exceeds that of cohorts drawn from one homogeneous population with this cohort's mean and covariance (null test p = {:.3} over {} null cohorts; null median {:.4}, 95th percentile {:.4}).",
            statistic_words(&null.statistic),
            null.observed,
            null.p_value,
            null.draws,
            null.null_quantiles.get("0.5").copied().unwrap_or(f64::NAN),
            null.null_quantiles.get("0.95").copied().unwrap_or(f64::NAN)
        ),
        (Some(null), count) => format!(
            "Subgroups not supported: {count} communities were found, but their structure ({} = {:.4}) is not stronger than in cohorts drawn from one homogeneous population with this cohort's mean and covariance (null test p = {:.3} over {} null cohorts, alpha {}; null median {:.4}, 95th percentile {:.4}).",
            statistic_words(&null.statistic),
            null.observed,
            null.p_value,
            null.draws,
            null.alpha,
            null.null_quantiles.get("0.5").copied().unwrap_or(f64::NAN),
            null.null_quantiles.get("0.95").copied().unwrap_or(f64::NAN)
        ),
    }
}
