//! One-way tests of k independent samples: the ANOVA F test and the Kruskal-Wallis H test,
//! with their effect sizes (eta-squared, epsilon-squared).
//!
//! Used to test whether a numeric participant-level covariate (age, head motion) or outcome
//! differs across communities. The samples are plain value lists; grouping participants and
//! dropping missing values is the caller's job.

use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor};

use super::StatsError;

/// Result of a one-way analysis of variance.
#[derive(Debug, Clone, PartialEq)]
pub struct OneWayAnova {
    /// F = (SS_between / (k - 1)) / (SS_within / (N - k)).
    pub f: f64,
    /// k - 1.
    pub dof_between: usize,
    /// N - k.
    pub dof_within: usize,
    /// Upper-tail p of F(k - 1, N - k).
    pub p: f64,
    /// eta^2 = SS_between / SS_total.
    pub eta_squared: f64,
}

/// Result of a Kruskal-Wallis H test.
#[derive(Debug, Clone, PartialEq)]
pub struct KruskalWallis {
    /// Tie-corrected H.
    pub h: f64,
    /// k - 1.
    pub dof: usize,
    /// Upper-tail p of chi-square with k - 1 degrees of freedom.
    pub p: f64,
    /// epsilon^2 = H / (N - 1), the rank analogue of eta^2.
    pub epsilon_squared: f64,
}

fn check_samples(samples: &[Vec<f64>], test: &str) -> Result<usize, StatsError> {
    if samples.len() < 2 {
        return Err(StatsError::InvalidInput {
            test: test.into(),
            message: format!("{} sample(s) given; the test compares at least 2", samples.len()),
        });
    }
    if let Some(index) = samples.iter().position(Vec::is_empty) {
        return Err(StatsError::InvalidInput {
            test: test.into(),
            message: format!("sample {} is empty; leave empty samples out before testing", index + 1),
        });
    }
    if samples.iter().flatten().any(|value| !value.is_finite()) {
        return Err(StatsError::InvalidInput {
            test: test.into(),
            message: "a value is NaN or infinite; drop missing values before testing".into(),
        });
    }
    let total: usize = samples.iter().map(Vec::len).sum();
    if total <= samples.len() {
        return Err(StatsError::InvalidInput {
            test: test.into(),
            message: format!(
                "{total} values in {} samples; the test needs more values than samples",
                samples.len()
            ),
        });
    }
    Ok(total)
}

/// One-way ANOVA F test that k samples share one mean, with eta-squared.
///
/// With sample sizes n_i, means m_i, grand mean m and N = sum n_i:
///
/// ```text
/// SS_between = sum_i n_i (m_i - m)^2,   SS_within = sum_i sum_j (x_ij - m_i)^2
/// F = (SS_between / (k - 1)) / (SS_within / (N - k)),   p = P(F_{k-1, N-k} > F)
/// eta^2 = SS_between / (SS_between + SS_within)
/// ```
///
/// When every sample is constant (SS_within = 0), F is infinite and p = 0 if the means differ,
/// and F, p are NaN if all values are equal.
///
/// # Errors
/// [`StatsError::InvalidInput`] for fewer than 2 samples, an empty sample, a non-finite value,
/// or N <= k.
///
/// # Complexity
/// O(N).
///
/// # References
/// Fisher 1925, Statistical Methods for Research Workers; Cohen 1973, Educ Psychol Meas
/// 33:107-112 (eta-squared).
pub fn one_way_anova(samples: &[Vec<f64>]) -> Result<OneWayAnova, StatsError> {
    let total = check_samples(samples, "one-way ANOVA")?;
    let k = samples.len();
    let grand_mean = samples.iter().flatten().sum::<f64>() / total as f64;
    let mut between = 0.0;
    let mut within = 0.0;
    for sample in samples {
        let mean = sample.iter().sum::<f64>() / sample.len() as f64;
        between += sample.len() as f64 * (mean - grand_mean).powi(2);
        within += sample.iter().map(|value| (value - mean).powi(2)).sum::<f64>();
    }
    let dof_between = k - 1;
    let dof_within = total - k;
    let f = (between / dof_between as f64) / (within / dof_within as f64);
    let p = if f.is_nan() {
        f64::NAN
    } else {
        FisherSnedecor::new(dof_between as f64, dof_within as f64).map_or(f64::NAN, |d| d.sf(f))
    };
    let eta_squared = between / (between + within);
    Ok(OneWayAnova { f, dof_between, dof_within, p, eta_squared })
}

/// Kruskal-Wallis H test that k samples come from one distribution, with epsilon-squared.
///
/// Pool the N values and rank them (ties get their average rank); with R_i the rank sum of
/// sample i and t_g the size of each group of tied values:
///
/// ```text
/// H = [12 / (N (N + 1)) sum_i R_i^2 / n_i - 3 (N + 1)] / [1 - sum_g (t_g^3 - t_g) / (N^3 - N)]
/// p = P(chi2_{k-1} > H),   epsilon^2 = H / (N - 1)
/// ```
///
/// # Errors
/// [`StatsError::InvalidInput`] as [`one_way_anova`], and when all N values are equal (the tie
/// correction is 0: ranks carry no information).
///
/// # Complexity
/// O(N log N).
///
/// # References
/// Kruskal & Wallis 1952, J Am Stat Assoc 47:583-621; Tomczak & Tomczak 2014, Trends Sport Sci
/// 21:19-25 (epsilon-squared for H).
pub fn kruskal_wallis(samples: &[Vec<f64>]) -> Result<KruskalWallis, StatsError> {
    let total = check_samples(samples, "Kruskal-Wallis test")?;
    let k = samples.len();
    let mut pooled: Vec<(f64, usize)> = samples
        .iter()
        .enumerate()
        .flat_map(|(index, sample)| sample.iter().map(move |&value| (value, index)))
        .collect();
    pooled.sort_by(|left, right| left.0.total_cmp(&right.0));
    let mut rank_sums = vec![0.0f64; k];
    let mut tie_sum = 0.0f64;
    let mut start = 0;
    while start < pooled.len() {
        let mut end = start + 1;
        while end < pooled.len() && pooled[end].0 == pooled[start].0 {
            end += 1;
        }
        // Ranks start..end (0-based) share the average 1-based rank.
        let average_rank = (start + end + 1) as f64 / 2.0;
        for &(_, sample) in &pooled[start..end] {
            rank_sums[sample] += average_rank;
        }
        let tied = (end - start) as f64;
        tie_sum += tied * tied * tied - tied;
        start = end;
    }
    let n = total as f64;
    let correction = 1.0 - tie_sum / (n * n * n - n);
    if correction <= 0.0 {
        return Err(StatsError::InvalidInput {
            test: "Kruskal-Wallis test".into(),
            message: "all values are equal; ranks carry no information".into(),
        });
    }
    let sum: f64 = rank_sums
        .iter()
        .zip(samples)
        .map(|(rank_sum, sample)| rank_sum * rank_sum / sample.len() as f64)
        .sum();
    let h = (12.0 / (n * (n + 1.0)) * sum - 3.0 * (n + 1.0)) / correction;
    let dof = k - 1;
    let p = ChiSquared::new(dof as f64).map_or(f64::NAN, |d| d.sf(h));
    Ok(KruskalWallis { h, dof, p, epsilon_squared: h / (n - 1.0) })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn hand_computed_small_case() {
        // [1,2,3] vs [4,5,6]: ranks are the values; R = 6, 15; H = 12/42 (36/3 + 225/3) - 21
        // = 3.857142857 (hand computation, no ties). ANOVA: means 2, 5, grand 3.5; SSB = 13.5,
        // SSW = 4; F = 13.5 / (4/4) = 13.5; eta^2 = 13.5 / 17.5.
        let samples = vec![vec![1.0, 2.0, 3.0], vec![4.0, 5.0, 6.0]];
        let kw = kruskal_wallis(&samples).unwrap();
        assert_relative_eq!(kw.h, 3.857142857142857, max_relative = 1e-12);
        assert_relative_eq!(kw.epsilon_squared, 3.857142857142857 / 5.0, max_relative = 1e-12);
        let anova = one_way_anova(&samples).unwrap();
        assert_relative_eq!(anova.f, 13.5, max_relative = 1e-12);
        assert_relative_eq!(anova.eta_squared, 13.5 / 17.5, max_relative = 1e-12);
        assert_eq!((anova.dof_between, anova.dof_within), (1, 4));
    }

    #[test]
    fn bad_samples_are_refused_in_words() {
        let error = kruskal_wallis(&[vec![1.0, 1.0], vec![1.0]]).unwrap_err();
        assert_eq!(
            error.to_string(),
            "Kruskal-Wallis test: all values are equal; ranks carry no information"
        );
        let error = one_way_anova(&[vec![1.0, 2.0]]).unwrap_err();
        assert_eq!(error.to_string(), "one-way ANOVA: 1 sample(s) given; the test compares at least 2");
        let error = one_way_anova(&[vec![1.0, f64::NAN], vec![2.0]]).unwrap_err();
        assert!(error.to_string().contains("NaN or infinite"), "{error}");
    }
}
