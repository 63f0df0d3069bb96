//! Family-wise error control of the permutation test on null data: over simulated cohorts with
//! no group difference, the share of cohorts where any feature has a family-wise p <= 0.05 must
//! stay within the binomial interval around 0.05.

use ndarray::Array2;
use rand_distr::{Distribution, StandardNormal};
use strata::features::FeatureMatrix;
use strata::stats::permutation::{freedman_lane, random_permutations};
use strata::stats::Design;

#[test]
fn family_wise_rejection_rate_on_null_cohorts_is_within_the_binomial_interval() {
    // 400 null cohorts of 20 participants (10 vs 10) x 50 features, with an age covariate
    // (Freedman-Lane), 199 permutations each: under exchangeability P(p_fwe <= 0.05) = 10/200
    // exactly, so the count of rejecting cohorts is Binomial(400, 0.05), mean 20. The interval
    // 8..=35 holds it with probability 0.998 (scipy 1.17.1 binom: P(X <= 7) = 0.00062,
    // P(X >= 36) = 0.0011).
    let cohorts = 400u64;
    let (n, width) = (20usize, 50usize);
    let mut rejecting = 0;
    for cohort in 0..cohorts {
        let mut rng = strata::seed::rng(20261202, "type1-test", &[cohort]);
        let values: Vec<f32> = (0..n * width)
            .map(|_| <StandardNormal as Distribution<f64>>::sample(&StandardNormal, &mut rng) as f32)
            .collect();
        let age: Vec<f64> = (0..n)
            .map(|_| 30.0 + 8.0 * <StandardNormal as Distribution<f64>>::sample(&StandardNormal, &mut rng))
            .collect();
        let features = FeatureMatrix { values: Array2::from_shape_vec((n, width), values).unwrap() };
        let design = Design {
            columns: vec!["intercept".into(), "group".into(), "age".into()],
            values: (0..n).flat_map(|i| [1.0, if i < n / 2 { 1.0 } else { 0.0 }, age[i]]).collect(),
        };
        let permutations = random_permutations(n, 199, cohort);
        let rows: Vec<usize> = (0..n).collect();
        let result = freedman_lane(&features, &rows, &design, 1, &permutations).unwrap();
        if result.p_fwe.iter().any(|&p| p <= 0.05) {
            rejecting += 1;
        }
        for (fwe, uncorrected) in result.p_fwe.iter().zip(&result.p_uncorrected) {
            assert!(fwe >= uncorrected, "family-wise p {fwe} below uncorrected {uncorrected}");
        }
    }
    assert!((8..=35).contains(&rejecting), "{rejecting} of {cohorts} null cohorts rejected at 0.05");
    eprintln!("{rejecting} of {cohorts} null cohorts had a family-wise p <= 0.05 (expected 20)");
}
