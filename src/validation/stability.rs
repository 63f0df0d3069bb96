//! Resampling stability of the consensus partition: are the communities still there when part
//! of the cohort is left out?
//!
//! Part of stage 6 (validation). Each subsample draws a share of the participants without
//! replacement, reruns the whole community stage ([`detect`]) on their sub-matrix of the
//! similarity, and compares the result with the full partition restricted to the same
//! participants: per subsample an adjusted Rand index, per community the best-match Jaccard
//! (Hennig 2007), per participant how often it stays in its community's core. Deciding whether
//! a stability is good enough, and reporting it, are the report stage's job.

use ndarray::Axis;
use rayon::prelude::*;
use thiserror::Error;

use super::agreement::adjusted_rand_index;
use crate::communities::{detect, CommunityError, CommunityOptions, Partition};
use crate::similarity::SimilarityMatrix;

/// Default number of subsamples (`--subsamples`). The sample median of S draws has standard
/// error about sqrt(pi / 2) * sigma / sqrt(S) (asymptotic variance of the median, pi sigma^2 /
/// (2 S), for near-normal draws), so 50 subsamples give 0.18 sigma: under 0.02 ARI whenever the
/// per-subsample ARI spreads by sigma <= 0.1, while one subsample costs one full community
/// detection (strata's choice, a balance of precision and run time).
pub const DEFAULT_SUBSAMPLES: usize = 50;

/// Default share of participants drawn per subsample (`--subsample-fraction`): 0.8, a common
/// choice in resampling-stability studies (common practice).
pub const DEFAULT_SUBSAMPLE_FRACTION: f64 = 0.8;

/// Smallest subsample that can be partitioned and compared (two participants form one pair).
pub const MIN_SUBSAMPLE_PARTICIPANTS: usize = 2;

/// Seed stage name of the participant draw of each subsample.
const DRAW_STAGE: &str = "stability";

/// Seed stage name of the community detection run on each subsample.
const DETECT_STAGE: &str = "stability_detect";

/// Tunables of the resampling-stability check.
#[derive(Debug, Clone, PartialEq)]
pub struct StabilityOptions {
    /// Number of subsamples S (`--subsamples`, default [`DEFAULT_SUBSAMPLES`]).
    pub subsamples: usize,
    /// Share of participants drawn per subsample, in (0, 1] (`--subsample-fraction`, default
    /// [`DEFAULT_SUBSAMPLE_FRACTION`]); round(fraction * N) participants are drawn.
    pub fraction: f64,
    /// Seed of the draws; each subsample derives its own draw and detection seeds from it.
    pub seed: u64,
}

impl Default for StabilityOptions {
    /// [`DEFAULT_SUBSAMPLES`] subsamples of [`DEFAULT_SUBSAMPLE_FRACTION`] of the cohort, seeded
    /// by strata's default run seed.
    fn default() -> Self {
        StabilityOptions {
            subsamples: DEFAULT_SUBSAMPLES,
            fraction: DEFAULT_SUBSAMPLE_FRACTION,
            seed: crate::config::DEFAULT_SEED,
        }
    }
}

/// How the full partition held up under resampling.
#[derive(Debug, Clone, PartialEq)]
pub struct StabilityResult {
    /// Per subsample (in subsample order): ARI of its consensus partition with the full
    /// partition, over the drawn participants assigned in the full partition (see
    /// [`compare_subsample`]); NaN when fewer than two such participants were drawn.
    pub subsample_ari: Vec<f64>,
    /// Median of the finite values of `subsample_ari` (NaN if none).
    pub median_ari: f64,
    /// Index c - 1 for community c = 1..=k of the full partition: mean over the subsamples that
    /// drew at least one member of c of its best-match Jaccard (Hennig 2007); NaN if no
    /// subsample drew a member.
    pub community_stability: Vec<f64>,
    /// Per participant (cohort order): share of the subsamples containing it in which it falls
    /// in its community's core (the subsample community that best matches its own community).
    /// NaN for participants unassigned in the full partition and for participants never drawn.
    pub confidence: Vec<f64>,
    /// Per participant (cohort order): number of subsamples that contained it.
    pub drawn: Vec<usize>,
}

/// One subsample compared with the full partition.
#[derive(Debug, Clone, PartialEq)]
pub struct SubsampleComparison {
    /// ARI over the drawn participants assigned in the full partition (NaN if fewer than two).
    pub ari: f64,
    /// Index c - 1 for full community c: best-match Jaccard, `None` if no member of c was drawn.
    pub jaccard: Vec<Option<f64>>,
    /// Index c - 1 for full community c: the subsample community (1-based label of the
    /// subsample partition) that best matches c, its core; `None` if no member of c was drawn
    /// or no subsample community holds any of them.
    pub core: Vec<Option<usize>>,
    /// Per drawn participant (in `drawn` order): whether it sits in its full community's core;
    /// `None` for participants unassigned in the full partition.
    pub in_core: Vec<Option<bool>>,
}

/// The resampling-stability check could not run.
#[derive(Debug, Error)]
pub enum StabilityError {
    /// The subsample fraction is not a share in (0, 1].
    #[error("--subsample-fraction is {found}; expected a share of participants above 0 and at most 1, for example {DEFAULT_SUBSAMPLE_FRACTION} (the default)")]
    InvalidFraction {
        /// The fraction given.
        found: f64,
    },
    /// The fraction draws too few participants from this cohort.
    #[error("--subsample-fraction {fraction} of {participants} participants draws {drawn}; a subsample needs at least {MIN_SUBSAMPLE_PARTICIPANTS} participants: raise --subsample-fraction or use a larger cohort")]
    SubsampleTooSmall {
        /// The fraction given.
        fraction: f64,
        /// Participants in the cohort.
        participants: usize,
        /// Participants a subsample would hold.
        drawn: usize,
    },
    /// No subsample was asked for.
    #[error("--subsamples is 0; expected at least 1 subsample (default {DEFAULT_SUBSAMPLES}), or leave out the stability check")]
    NoSubsamples,
    /// The partition does not describe the participants of the similarity matrix.
    #[error("the partition has {partition} participants but the similarity matrix has {similarity}; pass the partition detected on this similarity matrix")]
    SizeMismatch {
        /// Participants in the partition.
        partition: usize,
        /// Participants in the similarity matrix.
        similarity: usize,
    },
    /// Community detection failed on one subsample.
    #[error("subsample {subsample} of the stability check: {source}")]
    Community {
        /// 0-based subsample index.
        subsample: usize,
        /// The community stage's error.
        #[source]
        source: CommunityError,
    },
}

/// Compares one subsample's partition with the full partition restricted to its participants.
///
/// With A_c = the drawn members of full community c and B_c' = the members of subsample
/// community c' (c' >= 1; unassigned participants form no community):
///
/// ```text
/// J(c) = max over c' of |A_c ∩ B_c'| / |A_c ∪ B_c'|        (best-match Jaccard)
/// core(c) = the c' reaching the maximum (the smallest label among ties; none if J(c) = 0)
/// ```
///
/// A drawn participant of community c is in the core when its subsample community is core(c).
/// The ARI runs over the drawn participants assigned in the full partition (community > 0);
/// among them, each one unassigned in the subsample counts as a community of its own, since it
/// was placed with nobody.
///
/// # Arguments
/// * `full`: the partition of the whole cohort (0 = unassigned).
/// * `drawn`: cohort index of each subsample participant, in subsample order, no repeats.
/// * `subsample`: the partition of the subsample, `subsample.membership[i]` for `drawn[i]`.
///
/// # Returns
/// The ARI, per full community the best-match Jaccard and core, per drawn participant whether it
/// sits in its community's core.
///
/// # Complexity
/// O(m + k k' + m log m) for m drawn participants, k full and k' subsample communities.
///
/// # Panics
/// If `drawn` and `subsample` differ in length or `drawn` holds an index outside `full`.
///
/// # References
/// Hennig 2007, Comput Stat Data Anal 52:258-271 (best-match Jaccard); Hubert & Arabie 1985
/// (ARI).
pub fn compare_subsample(full: &Partition, drawn: &[usize], subsample: &Partition) -> SubsampleComparison {
    assert_eq!(drawn.len(), subsample.membership.len(), "one subsample label per drawn participant");
    let full_count = full.community_count();
    let sub_count = subsample.community_count();
    // overlap[c - 1][c'] = drawn participants in full community c and subsample community c'
    // (column 0: unassigned in the subsample).
    let mut overlap = vec![vec![0usize; sub_count + 1]; full_count];
    let mut drawn_size = vec![0usize; full_count];
    let mut sub_size = vec![0usize; sub_count + 1];
    for (&participant, &label) in drawn.iter().zip(&subsample.membership) {
        sub_size[label] += 1;
        let community = full.membership[participant];
        if community > 0 {
            overlap[community - 1][label] += 1;
            drawn_size[community - 1] += 1;
        }
    }
    let mut jaccard = vec![None; full_count];
    let mut core = vec![None; full_count];
    for community in 0..full_count {
        if drawn_size[community] == 0 {
            continue;
        }
        let mut best = (0.0f64, None);
        for label in 1..=sub_count {
            let shared = overlap[community][label];
            let union = drawn_size[community] + sub_size[label] - shared;
            let value = shared as f64 / union as f64;
            if value > best.0 {
                best = (value, Some(label));
            }
        }
        jaccard[community] = Some(best.0);
        core[community] = best.1;
    }
    let in_core = drawn
        .iter()
        .zip(&subsample.membership)
        .map(|(&participant, &label)| match full.membership[participant] {
            0 => None,
            community => Some(label > 0 && core[community - 1] == Some(label)),
        })
        .collect();
    let mut full_labels = Vec::new();
    let mut sub_labels = Vec::new();
    for (index, (&participant, &label)) in drawn.iter().zip(&subsample.membership).enumerate() {
        if full.membership[participant] > 0 {
            full_labels.push(full.membership[participant]);
            // Unassigned in the subsample: a singleton, labelled past every community.
            sub_labels.push(if label > 0 { label } else { sub_count + 1 + index });
        }
    }
    let ari = if full_labels.len() < MIN_SUBSAMPLE_PARTICIPANTS {
        f64::NAN
    } else {
        adjusted_rand_index(&full_labels, &sub_labels)
    };
    SubsampleComparison { ari, jaccard, core, in_core }
}

/// Resampling stability of a partition (subsampling without replacement).
///
/// For each subsample s = 0..S (in parallel): draw m = round(fraction * N) participants without
/// replacement (seeded by `crate::seed::rng(seed, "stability", [s])`), take their m x m
/// sub-matrix of the similarity, run [`detect`] on it with the caller's options and a seed
/// derived from `seed` and s, and compare with the full partition ([`compare_subsample`]).
/// Then, with D_c the subsamples that drew a member of community c and n_p the subsamples that
/// drew participant p:
///
/// ```text
/// median_ari             = median over s of ARI_s
/// community_stability(c) = (1 / |D_c|) sum over s in D_c of J_s(c)
/// confidence(p)          = (1 / n_p) sum over s drawing p of [p in core_s(community of p)]
/// ```
///
/// When the full partition has one community (no subgroups found), the values say whether the
/// subsamples agree: they are 1 when every subsample also finds one community (the ARI of two
/// one-community partitions is 1 by the scikit-learn convention) and lower when subsamples split
/// it. When it has no assigned participant, the ARIs are NaN, `community_stability` is empty
/// and every confidence is NaN. Results are identical at any thread count.
///
/// # Arguments
/// * `similarity`: the N x N similarity the partition was detected on.
/// * `partition`: the full partition (N participants).
/// * `options`: the community options of the full run (their seed is replaced per subsample).
/// * `stability`: subsample count, fraction and seed.
///
/// # Returns
/// Per-subsample ARIs and their median, per-community stability, per-participant confidence and
/// draw counts.
///
/// # Errors
/// [`StabilityError::NoSubsamples`] for S = 0, [`StabilityError::InvalidFraction`] for a
/// fraction outside (0, 1], [`StabilityError::SubsampleTooSmall`] when m < 2,
/// [`StabilityError::SizeMismatch`] when the partition and matrix sizes differ, and
/// [`StabilityError::Community`] (the first failing subsample) when detection fails on a
/// subsample.
///
/// # Complexity
/// S community detections on m participants (each O(D T E + I m^2), see [`detect`]) plus
/// O(S (m^2 + k k')) to copy sub-matrices and compare.
///
/// # References
/// Hennig 2007, Comput Stat Data Anal 52:258-271 (cluster-wise stability by best-match Jaccard
/// under subsetting); Ben-Hur, Elisseeff & Guyon 2002, Pac Symp Biocomput 7:6-17 (partition
/// stability under subsampling).
pub fn stability(
    similarity: &SimilarityMatrix,
    partition: &Partition,
    options: &CommunityOptions,
    stability: &StabilityOptions,
) -> Result<StabilityResult, StabilityError> {
    let participants = similarity.participant_count();
    let size = subsample_size(participants, stability)?;
    if partition.membership.len() != participants {
        return Err(StabilityError::SizeMismatch {
            partition: partition.membership.len(),
            similarity: participants,
        });
    }
    let outcomes: Vec<Result<(Vec<usize>, SubsampleComparison), StabilityError>> = (0..stability.subsamples)
        .into_par_iter()
        .map(|subsample| {
            let mut rng = crate::seed::rng(stability.seed, DRAW_STAGE, &[subsample as u64]);
            let mut drawn = rand::seq::index::sample(&mut rng, participants, size).into_vec();
            drawn.sort_unstable();
            let values = similarity.values.select(Axis(0), &drawn).select(Axis(1), &drawn);
            let seed = crate::seed::derive(stability.seed, DETECT_STAGE, &[subsample as u64]);
            let sub_options = CommunityOptions { seed, ..options.clone() };
            let result = detect(&SimilarityMatrix { values }, &sub_options)
                .map_err(|source| StabilityError::Community { subsample, source })?;
            let comparison = compare_subsample(partition, &drawn, &result.partition);
            Ok((drawn, comparison))
        })
        .collect();
    let mut comparisons = Vec::with_capacity(outcomes.len());
    for outcome in outcomes {
        comparisons.push(outcome?);
    }
    Ok(summarise(partition, &comparisons))
}

/// Checks the options and returns round(fraction * N).
fn subsample_size(participants: usize, stability: &StabilityOptions) -> Result<usize, StabilityError> {
    if stability.subsamples == 0 {
        return Err(StabilityError::NoSubsamples);
    }
    let fraction = stability.fraction;
    // Written so that NaN fails too.
    if !(fraction > 0.0 && fraction <= 1.0) {
        return Err(StabilityError::InvalidFraction { found: fraction });
    }
    let drawn = ((fraction * participants as f64).round() as usize).min(participants);
    if drawn < MIN_SUBSAMPLE_PARTICIPANTS {
        return Err(StabilityError::SubsampleTooSmall { fraction, participants, drawn });
    }
    Ok(drawn)
}

/// Aggregates the subsample comparisons (in subsample order) into the result.
fn summarise(partition: &Partition, comparisons: &[(Vec<usize>, SubsampleComparison)]) -> StabilityResult {
    let participants = partition.membership.len();
    let community_count = partition.community_count();
    let subsample_ari: Vec<f64> = comparisons.iter().map(|(_, comparison)| comparison.ari).collect();
    let mut jaccard_sum = vec![0.0f64; community_count];
    let mut jaccard_count = vec![0usize; community_count];
    let mut drawn_count = vec![0usize; participants];
    let mut core_count = vec![0usize; participants];
    for (drawn, comparison) in comparisons {
        for (community, value) in comparison.jaccard.iter().enumerate() {
            if let Some(value) = value {
                jaccard_sum[community] += value;
                jaccard_count[community] += 1;
            }
        }
        for (&participant, in_core) in drawn.iter().zip(&comparison.in_core) {
            drawn_count[participant] += 1;
            if *in_core == Some(true) {
                core_count[participant] += 1;
            }
        }
    }
    let community_stability = jaccard_sum
        .iter()
        .zip(&jaccard_count)
        .map(|(&sum, &count)| if count == 0 { f64::NAN } else { sum / count as f64 })
        .collect();
    let confidence = (0..participants)
        .map(|participant| {
            if partition.membership[participant] == 0 || drawn_count[participant] == 0 {
                f64::NAN
            } else {
                core_count[participant] as f64 / drawn_count[participant] as f64
            }
        })
        .collect();
    StabilityResult {
        median_ari: median(&subsample_ari),
        subsample_ari,
        community_stability,
        confidence,
        drawn: drawn_count,
    }
}

/// Median of the finite values (mean of the middle two for an even count); NaN if none.
pub fn median(values: &[f64]) -> f64 {
    let mut finite: Vec<f64> = values.iter().copied().filter(|value| value.is_finite()).collect();
    if finite.is_empty() {
        return f64::NAN;
    }
    finite.sort_by(f64::total_cmp);
    let middle = finite.len() / 2;
    if finite.len() % 2 == 1 {
        finite[middle]
    } else {
        0.5 * (finite[middle - 1] + finite[middle])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn partition(membership: &[usize]) -> Partition {
        Partition { membership: membership.to_vec() }
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() < 1e-12
    }

    #[test]
    fn best_match_jaccard_and_core_by_hand() {
        // Hand-computed from the definition (Hennig 2007); invented data. Full: community 1 =
        // {0,1,2,3}, community 2 = {4,5,6}, participant 7 unassigned. Drawn {0,1,2,4,5,7} with
        // subsample labels 1,1,2,2,2,0. Community 1 restricted = {0,1,2}: with c'=1 {0,1}
        // J = 2/3, with c'=2 {2,4,5} J = 1/5, so J = 2/3, core 1. Community 2 restricted =
        // {4,5}: with c'=2 J = 2/3, core 2.
        let full = partition(&[1, 1, 1, 1, 2, 2, 2, 0]);
        let drawn = [0, 1, 2, 4, 5, 7];
        let comparison = compare_subsample(&full, &drawn, &partition(&[1, 1, 2, 2, 2, 0]));
        assert!(close(comparison.jaccard[0].unwrap(), 2.0 / 3.0));
        assert!(close(comparison.jaccard[1].unwrap(), 2.0 / 3.0));
        assert_eq!(comparison.core, vec![Some(1), Some(2)]);
        // Participant 2 sits in community 2 of the subsample, not its core (1); 7 is unassigned.
        assert_eq!(
            comparison.in_core,
            vec![Some(true), Some(true), Some(false), Some(true), Some(true), None]
        );
        // ARI over {0,1,2,4,5}: full [1,1,1,2,2] vs subsample [1,1,2,2,2]. Pairs: index
        // sum_ij C(n_ij,2) = 1 + 1 = 2, rows C(3,2)+C(2,2) = 4, columns 1 + 3 = 4, C(5,2) = 10,
        // E = 1.6, max = 4: ARI = 0.4 / 2.4 = 1/6 (hand-computed from Hubert & Arabie 1985).
        assert!(close(comparison.ari, 1.0 / 6.0));
    }

    #[test]
    fn undrawn_community_is_skipped_and_unmatched_community_scores_zero() {
        // Hand-computed from the definition (Hennig 2007); invented data. Community 2 = {3,4}
        // is not drawn: skipped (None). Community 1's drawn members are all unassigned in the
        // subsample, so no subsample community overlaps it: J = 0, no core, nobody in the core.
        let full = partition(&[1, 1, 1, 2, 2, 0, 0]);
        let drawn = [0, 1, 5, 6];
        let comparison = compare_subsample(&full, &drawn, &partition(&[0, 0, 1, 1]));
        assert_eq!(comparison.jaccard, vec![Some(0.0), None]);
        assert_eq!(comparison.core, vec![None, None]);
        assert_eq!(comparison.in_core, vec![Some(false), Some(false), None, None]);
    }

    #[test]
    fn confidence_and_stability_aggregate_by_hand() {
        // Hand-computed from the definitions (Hennig 2007 for J); invented data. Full:
        // community 1 = {0,1,2}, community 2 = {3,4}, participant 5 unassigned.
        let full = partition(&[1, 1, 1, 2, 2, 0]);
        // Subsample A draws {0,1,2,3,4}: labels 1,1,2,2,2. Community 1 {0,1,2}: with c'=1 {0,1}
        // J = 2/3, with c'=2 {2,3,4} J = 1/5; J = 2/3, core 1. Community 2 {3,4}: with c'=2
        // J = 2/3, core 2.
        let a = compare_subsample(&full, &[0, 1, 2, 3, 4], &partition(&[1, 1, 2, 2, 2]));
        // Subsample B draws {0,2,3,5}: labels 1,1,2,2. Community 1 {0,2}: c'=1 -> 1, core 1.
        // Community 2 {3}: c'=2 {3,5} -> 1/2, core 2.
        let b = compare_subsample(&full, &[0, 2, 3, 5], &partition(&[1, 1, 2, 2]));
        let result = summarise(&full, &[(vec![0, 1, 2, 3, 4], a), (vec![0, 2, 3, 5], b)]);
        assert!(close(result.community_stability[0], (2.0 / 3.0 + 1.0) / 2.0));
        assert!(close(result.community_stability[1], (2.0 / 3.0 + 0.5) / 2.0));
        assert_eq!(result.drawn, vec![2, 1, 2, 2, 1, 1]);
        // Participant 2: out of the core in A, in it in B: 1/2. Participant 5: unassigned: NaN.
        let expected = [1.0, 1.0, 0.5, 1.0, 1.0, f64::NAN];
        for (participant, (&value, &wanted)) in result.confidence.iter().zip(&expected).enumerate() {
            assert!(
                (value.is_nan() && wanted.is_nan()) || close(value, wanted),
                "participant {participant}: {value} vs {wanted}"
            );
        }
    }

    #[test]
    fn one_community_partitions_agree_with_ari_one() {
        // The documented convention: one community in both gives ARI 1, J = 1, confidence 1
        // (scikit-learn's ARI convention for two single-cluster labelings).
        let full = partition(&[1, 1, 1, 1]);
        let comparison = compare_subsample(&full, &[0, 2, 3], &partition(&[1, 1, 1]));
        assert!(close(comparison.ari, 1.0));
        assert_eq!(comparison.jaccard, vec![Some(1.0)]);
    }

    #[test]
    fn median_ignores_nan() {
        // Common practice: the median of the finite values.
        assert!(close(median(&[0.2, f64::NAN, 0.9, 0.5]), 0.5));
        assert!(close(median(&[0.2, 0.4]), 0.3));
        assert!(median(&[f64::NAN]).is_nan());
    }

    #[test]
    fn options_are_checked_before_any_work() {
        let options = |subsamples, fraction| StabilityOptions { subsamples, fraction, seed: 1 };
        assert!(matches!(subsample_size(10, &options(0, 0.8)), Err(StabilityError::NoSubsamples)));
        assert!(matches!(
            subsample_size(10, &options(5, f64::NAN)),
            Err(StabilityError::InvalidFraction { .. })
        ));
        assert!(matches!(
            subsample_size(10, &options(5, 0.1)),
            Err(StabilityError::SubsampleTooSmall { drawn: 1, .. })
        ));
        assert_eq!(subsample_size(10, &options(5, 0.25)).unwrap(), 3);
        assert_eq!(subsample_size(10, &options(5, 1.0)).unwrap(), 10);
    }
}
