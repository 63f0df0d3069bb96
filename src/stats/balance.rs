//! Composition and balance of the communities: is a community just a group level, or a
//! covariate, in disguise?
//!
//! Two participant-level tables: the community x group-level test of independence
//! ([`composition_tests`], written as `composition.tsv`) and, for each participants-table column
//! used as a covariate, the test that it differs across communities ([`covariate_tests`],
//! written as `covariates.tsv`): one-way ANOVA and Kruskal-Wallis for numeric columns, chi-square
//! for categorical ones, each with its effect size. A covariate that differs is described in
//! words ("community 2 has higher mean_fd ..."), which the pipeline turns into a warning.
//! Unassigned participants (community 0) and missing values (`n/a`) are left out of each test.

use super::contingency::{
    chi_square_independence, fisher_exact, monte_carlo_chi_square, SMALL_EXPECTED_COUNT,
};
use super::oneway::{kruskal_wallis, one_way_anova};
use rand::seq::SliceRandom;

/// Draws of the Monte Carlo p reported when an expected count is below
/// [`SMALL_EXPECTED_COUNT`]: with 9,999 draws the smallest attainable p is 1e-4 and the Monte
/// Carlo standard error at p = 0.05 is about 0.002 (common practice for permutation counts).
pub const MONTE_CARLO_DRAWS: usize = 9_999;

/// A categorical covariate with more levels than this fraction of its participants is treated
/// as an identifier or free text and not tested (a chi-square test on it says nothing).
pub const MAX_LEVEL_SHARE: f64 = 0.5;

/// A column of whole numbers with at most this many distinct values is a coded category (site
/// 1/2/3, sex 1/2), not a measurement, and is tested as categorical (strata's rule; counts with
/// few values, such as a number of prior episodes 0-3, are then tested as categories too).
pub const MAX_CODED_LEVELS: usize = 5;

/// The value BIDS uses for a missing table cell.
const MISSING: &str = "n/a";

/// A number for a sentence: three significant digits, no trailing zeros (`0.00312`, `41.5`).
fn format_number(value: f64) -> String {
    if !value.is_finite() {
        return MISSING.into();
    }
    if value == 0.0 {
        return "0".into();
    }
    let decimals = (2 - value.abs().log10().floor() as i32).clamp(0, 12) as usize;
    let text = format!("{value:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// One test of a balance table (one row of `composition.tsv` or `covariates.tsv`).
#[derive(Debug, Clone, PartialEq)]
pub struct BalanceTest {
    /// The participants-table column tested (the group column for composition).
    pub variable: String,
    /// `numeric` or `categorical`.
    pub kind: &'static str,
    /// `communities` (all communities together) or `community K` (K against the others).
    pub scope: String,
    /// `chi_square`, `one_way_anova`, `kruskal_wallis`; or `not_tested`.
    pub test: &'static str,
    /// Participants in the test.
    pub n: usize,
    /// Assigned participants left out for a missing value.
    pub n_missing: usize,
    /// The statistic (chi-square, F or H).
    pub statistic: f64,
    /// Degrees of freedom (numerator for F).
    pub dof: f64,
    /// Denominator degrees of freedom (F only).
    pub dof_denominator: f64,
    /// The asymptotic p.
    pub p: f64,
    /// The exact (Fisher, 2 x 2) or Monte Carlo p, when expected counts are small.
    pub p_exact: f64,
    /// `fisher_exact`, `monte_carlo`, or empty.
    pub p_exact_method: &'static str,
    /// Effect size value.
    pub effect_size: f64,
    /// `cramers_v`, `eta_squared`, `epsilon_squared`.
    pub effect_size_name: &'static str,
    /// Why the test was not run, or what it found, in words.
    pub note: String,
}

impl BalanceTest {
    fn untested(variable: &str, kind: &'static str, scope: &str, note: String) -> BalanceTest {
        BalanceTest {
            variable: variable.to_string(),
            kind,
            scope: scope.to_string(),
            test: "not_tested",
            n: 0,
            n_missing: 0,
            statistic: f64::NAN,
            dof: f64::NAN,
            dof_denominator: f64::NAN,
            p: f64::NAN,
            p_exact: f64::NAN,
            p_exact_method: "",
            effect_size: f64::NAN,
            effect_size_name: "",
            note,
        }
    }
}

/// A covariate that differs across communities, in words.
#[derive(Debug, Clone, PartialEq)]
pub struct Imbalance {
    /// The column.
    pub variable: String,
    /// E.g. "community 2 has higher mean_fd (mean 0.21, other communities 0.12; Kruskal-Wallis
    /// p = 0.003, epsilon-squared 0.21)".
    pub description: String,
}

/// Whether a cell is missing as BIDS defines it (`n/a`), or empty.
pub fn is_missing(value: &str) -> bool {
    let value = value.trim();
    value.is_empty() || value == MISSING
}

/// The numeric values of a column when every non-missing cell parses as a finite number and the
/// column is not a coded category (whole numbers with at most [`MAX_CODED_LEVELS`] values).
pub fn numeric_values(values: &[&str]) -> Option<Vec<Option<f64>>> {
    let parsed: Vec<Option<f64>> = values
        .iter()
        .map(|value| {
            if is_missing(value) {
                None
            } else {
                value.trim().parse::<f64>().ok().filter(|v| v.is_finite())
            }
        })
        .collect();
    let all_parsed = values.iter().zip(&parsed).all(|(value, parsed)| is_missing(value) || parsed.is_some());
    let mut distinct: Vec<f64> = parsed.iter().flatten().copied().collect();
    distinct.sort_by(f64::total_cmp);
    distinct.dedup();
    let coded = distinct.iter().all(|value| value.fract() == 0.0) && distinct.len() <= MAX_CODED_LEVELS;
    (all_parsed && !distinct.is_empty() && !coded).then_some(parsed)
}

/// Community numbers 1..=k present in `membership` (0, unassigned, left out).
fn communities_of(membership: &[usize]) -> Vec<usize> {
    let mut present: Vec<usize> = membership.iter().copied().filter(|&c| c > 0).collect();
    present.sort_unstable();
    present.dedup();
    present
}

/// Counts of a categorical variable: rows = communities, columns = levels (in first-appearance
/// order), over assigned participants with a value. Returns (table, levels, communities, missing).
fn cross_table(
    membership: &[usize],
    labels: &[Option<&str>],
) -> (Vec<Vec<u64>>, Vec<String>, Vec<usize>, usize) {
    let communities = communities_of(membership);
    let mut levels: Vec<String> = Vec::new();
    for label in labels.iter().zip(membership).filter(|(_, &c)| c > 0).filter_map(|(l, _)| *l) {
        if !levels.iter().any(|level| level == label) {
            levels.push(label.to_string());
        }
    }
    let mut table = vec![vec![0u64; levels.len()]; communities.len()];
    let mut missing = 0;
    for (label, &community) in labels.iter().zip(membership) {
        if community == 0 {
            continue;
        }
        let Some(label) = label else {
            missing += 1;
            continue;
        };
        let row = communities.iter().position(|&c| c == community).unwrap_or(0);
        let column = levels.iter().position(|level| level == label).unwrap_or(0);
        table[row][column] += 1;
    }
    (table, levels, communities, missing)
}

/// Chi-square test of a community x level table, with an exact (2 x 2, Fisher) or Monte Carlo
/// p when an expected count is below [`SMALL_EXPECTED_COUNT`].
fn chi_square_row(
    variable: &str,
    scope: &str,
    table: &[Vec<u64>],
    missing: usize,
    seed: u64,
    index: u64,
) -> BalanceTest {
    match chi_square_independence(table, true) {
        Ok(result) => {
            let (p_exact, method) = if result.min_expected < SMALL_EXPECTED_COUNT {
                let two_by_two = table.len() == 2 && table.iter().all(|row| row.len() == 2);
                if two_by_two {
                    let cells = [[table[0][0], table[0][1]], [table[1][0], table[1][1]]];
                    (fisher_exact(cells).p_two_sided, "fisher_exact")
                } else {
                    let mut rng = crate::seed::rng(seed, "balance", &[index]);
                    let p = monte_carlo_chi_square(table, MONTE_CARLO_DRAWS, &mut rng).unwrap_or(f64::NAN);
                    (p, "monte_carlo")
                }
            } else {
                (f64::NAN, "")
            };
            BalanceTest {
                variable: variable.to_string(),
                kind: "categorical",
                scope: scope.to_string(),
                test: "chi_square",
                n: result.total as usize,
                n_missing: missing,
                statistic: result.statistic,
                dof: result.dof as f64,
                dof_denominator: f64::NAN,
                p: result.p,
                p_exact,
                p_exact_method: method,
                effect_size: result.cramers_v,
                effect_size_name: "cramers_v",
                note: if result.yates { "Yates continuity correction".into() } else { String::new() },
            }
        }
        Err(error) => BalanceTest::untested(variable, "categorical", scope, error.to_string()),
    }
}

/// The community x group-level tests of `composition.tsv`.
///
/// One chi-square test of independence over all communities, then one per community against
/// the others pooled (a 2 x levels table), each with Cramer's V and, when an expected count is
/// below 5, Fisher's exact p (2 x 2) or a seeded Monte Carlo p ([`MONTE_CARLO_DRAWS`] draws).
///
/// # Arguments
/// * `group_column` - the name of the group column (reported as the variable).
/// * `membership` - community per participant (0 = unassigned, left out).
/// * `labels` - group level per participant (`None` = missing, left out).
/// * `seed` - the run seed (Monte Carlo draws through `crate::seed`).
///
/// # Returns
/// The rows, first the overall test; a single `not_tested` row when fewer than two communities
/// or group levels are present.
///
/// # Complexity
/// O(N) per table plus O(B N) per Monte Carlo p.
///
/// # References
/// See [`chi_square_independence`], [`fisher_exact`], [`monte_carlo_chi_square`].
pub fn composition_tests(
    group_column: &str,
    membership: &[usize],
    labels: &[Option<&str>],
    seed: u64,
) -> Vec<BalanceTest> {
    let (table, _levels, communities, missing) = cross_table(membership, labels);
    if communities.len() < 2 {
        return vec![BalanceTest::untested(
            group_column,
            "categorical",
            "communities",
            format!("{} community found: composition needs at least 2", communities.len()),
        )];
    }
    let mut rows = vec![chi_square_row(group_column, "communities", &table, missing, seed, 0)];
    if rows[0].test == "not_tested" {
        return rows;
    }
    for (position, community) in communities.iter().enumerate() {
        let inside = table[position].clone();
        let outside: Vec<u64> = (0..inside.len())
            .map(|j| table.iter().enumerate().filter(|(i, _)| *i != position).map(|(_, row)| row[j]).sum())
            .collect();
        rows.push(chi_square_row(
            group_column,
            &format!("community {community}"),
            &[inside, outside],
            missing,
            seed,
            1 + *community as u64,
        ));
    }
    rows
}

/// The tests of one covariate across communities, for `covariates.tsv`, and its description in
/// words when it differs at level `alpha`.
///
/// Numeric columns (every non-missing cell a number): one-way ANOVA (eta-squared) and
/// Kruskal-Wallis (epsilon-squared); the imbalance is judged on the Kruskal-Wallis p, which
/// does not assume normal values (head motion rarely is). Categorical columns: chi-square with
/// Cramer's V (and an exact or Monte Carlo p when expected counts are small), judged on the
/// Monte Carlo p when there is one. Columns with more levels than [`MAX_LEVEL_SHARE`] of their
/// participants are reported as not tested.
///
/// # Arguments
/// * `column` - the column name.
/// * `values` - the column's cells per participant (cohort order).
/// * `membership` - community per participant (0 = unassigned, left out).
/// * `alpha` - the level below which a difference is described.
/// * `seed`, `index` - the run seed and the column's index (for the Monte Carlo stream).
///
/// # Returns
/// The rows (two for numeric, one for categorical) and the imbalance, if any.
///
/// # Complexity
/// O(N log N), plus O(B N) for a Monte Carlo p.
///
/// # References
/// See [`one_way_anova`], [`kruskal_wallis`], [`chi_square_independence`].
pub fn covariate_tests(
    column: &str,
    values: &[&str],
    membership: &[usize],
    alpha: f64,
    seed: u64,
    index: u64,
) -> (Vec<BalanceTest>, Option<Imbalance>) {
    let communities = communities_of(membership);
    if communities.len() < 2 {
        let note = format!("{} community found: balance needs at least 2", communities.len());
        return (vec![BalanceTest::untested(column, "n/a", "communities", note)], None);
    }
    match numeric_values(values) {
        Some(numbers) => numeric_tests(column, &numbers, membership, &communities, alpha),
        None => categorical_tests(column, values, membership, alpha, seed, index),
    }
}

fn numeric_tests(
    column: &str,
    numbers: &[Option<f64>],
    membership: &[usize],
    communities: &[usize],
    alpha: f64,
) -> (Vec<BalanceTest>, Option<Imbalance>) {
    let mut missing = 0;
    let mut samples: Vec<Vec<f64>> = vec![Vec::new(); communities.len()];
    for (value, &community) in numbers.iter().zip(membership) {
        if community == 0 {
            continue;
        }
        match value {
            Some(value) => {
                let position = communities.iter().position(|&c| c == community).unwrap_or(0);
                samples[position].push(*value);
            }
            None => missing += 1,
        }
    }
    // Communities without a value drop out of the test.
    let kept: Vec<(usize, Vec<f64>)> =
        communities.iter().copied().zip(samples).filter(|(_, sample)| !sample.is_empty()).collect();
    let tested: Vec<Vec<f64>> = kept.iter().map(|(_, sample)| sample.clone()).collect();
    let n: usize = tested.iter().map(Vec::len).sum();
    let base = |test: &'static str| BalanceTest {
        variable: column.to_string(),
        kind: "numeric",
        scope: "communities".into(),
        test,
        n,
        n_missing: missing,
        ..BalanceTest::untested(column, "numeric", "communities", String::new())
    };
    let anova = match one_way_anova(&tested) {
        Ok(result) => BalanceTest {
            statistic: result.f,
            dof: result.dof_between as f64,
            dof_denominator: result.dof_within as f64,
            p: result.p,
            effect_size: result.eta_squared,
            effect_size_name: "eta_squared",
            ..base("one_way_anova")
        },
        Err(error) => BalanceTest { note: error.to_string(), ..base("not_tested") },
    };
    let (kruskal, imbalance) = match kruskal_wallis(&tested) {
        Ok(result) => {
            let imbalance = (result.p < alpha).then(|| {
                describe_numeric(
                    column,
                    &kept,
                    &format!(
                        "Kruskal-Wallis p = {}, epsilon-squared {}",
                        format_number(result.p),
                        format_number(result.epsilon_squared)
                    ),
                )
            });
            let row = BalanceTest {
                statistic: result.h,
                dof: result.dof as f64,
                p: result.p,
                effect_size: result.epsilon_squared,
                effect_size_name: "epsilon_squared",
                note: imbalance.as_ref().map(|i| i.description.clone()).unwrap_or_default(),
                ..base("kruskal_wallis")
            };
            (row, imbalance)
        }
        Err(error) => (BalanceTest { note: error.to_string(), ..base("not_tested") }, None),
    };
    (vec![anova, kruskal], imbalance)
}

/// "community 2 has higher age (median 41, other communities 30; ...)": the community whose
/// median is furthest from the median of the others.
fn describe_numeric(column: &str, kept: &[(usize, Vec<f64>)], evidence: &str) -> Imbalance {
    let median = |values: &mut Vec<f64>| {
        values.sort_by(f64::total_cmp);
        let middle = values.len() / 2;
        if values.len().is_multiple_of(2) {
            (values[middle - 1] + values[middle]) / 2.0
        } else {
            values[middle]
        }
    };
    let mut best: Option<(usize, f64, f64, f64)> = None;
    for (position, (community, sample)) in kept.iter().enumerate() {
        let mut own = sample.clone();
        let mut others: Vec<f64> = kept
            .iter()
            .enumerate()
            .filter(|(i, _)| *i != position)
            .flat_map(|(_, (_, s))| s.clone())
            .collect();
        let (own_median, other_median) = (median(&mut own), median(&mut others));
        let pooled = {
            let mut all: Vec<f64> = kept.iter().flat_map(|(_, s)| s.clone()).collect();
            let centre = median(&mut all);
            let mut deviations: Vec<f64> = all.iter().map(|v| (v - centre).abs()).collect();
            median(&mut deviations).max(f64::MIN_POSITIVE)
        };
        let distance = (own_median - other_median).abs() / pooled;
        if best.is_none_or(|(_, _, _, d)| distance > d) {
            best = Some((*community, own_median, other_median, distance));
        }
    }
    let (community, own, other, _) = best.unwrap_or((0, f64::NAN, f64::NAN, 0.0));
    let direction = if own > other { "higher" } else { "lower" };
    Imbalance {
        variable: column.to_string(),
        description: format!(
            "community {community} has {direction} {column} (median {}, other communities {}; {evidence})",
            format_number(own),
            format_number(other)
        ),
    }
}

fn categorical_tests(
    column: &str,
    values: &[&str],
    membership: &[usize],
    alpha: f64,
    seed: u64,
    index: u64,
) -> (Vec<BalanceTest>, Option<Imbalance>) {
    let labels: Vec<Option<&str>> =
        values.iter().map(|value| if is_missing(value) { None } else { Some(value.trim()) }).collect();
    let (table, levels, communities, missing) = cross_table(membership, &labels);
    let n: u64 = table.iter().flatten().sum();
    if levels.len() as f64 > MAX_LEVEL_SHARE * n as f64 {
        let note = format!(
            "{} distinct values among {n} participants: looks like an identifier or free text; give it to --covariates only if it is a category",
            levels.len()
        );
        return (vec![BalanceTest::untested(column, "categorical", "communities", note)], None);
    }
    let mut row = chi_square_row(column, "communities", &table, missing, seed, 1_000_000 + index);
    let judged = if row.p_exact_method == "monte_carlo" || row.p_exact_method == "fisher_exact" {
        row.p_exact
    } else {
        row.p
    };
    let imbalance = (judged < alpha).then(|| {
        // The cell furthest above its expected count, as a share of its community.
        let row_totals: Vec<f64> = table.iter().map(|r| r.iter().sum::<u64>() as f64).collect();
        let column_totals: Vec<f64> =
            (0..levels.len()).map(|j| table.iter().map(|r| r[j]).sum::<u64>() as f64).collect();
        let total = n as f64;
        let mut best = (0usize, 0usize, f64::NEG_INFINITY);
        for (i, counts) in table.iter().enumerate() {
            for (j, &count) in counts.iter().enumerate() {
                let expected = row_totals[i] * column_totals[j] / total;
                if expected > 0.0 {
                    let residual = (count as f64 - expected) / expected.sqrt();
                    if residual > best.2 {
                        best = (i, j, residual);
                    }
                }
            }
        }
        let (i, j, _) = best;
        let share = table[i][j] as f64 / row_totals[i].max(1.0);
        let other_total = total - row_totals[i];
        let other_share = (column_totals[j] - table[i][j] as f64) / other_total.max(1.0);
        Imbalance {
            variable: column.to_string(),
            description: format!(
                "community {} has more {column} = {} ({:.0}% against {:.0}% in the other communities; chi-square p = {}, Cramer's V {})",
                communities[i],
                levels[j],
                100.0 * share,
                100.0 * other_share,
                format_number(judged),
                format_number(row.effect_size)
            ),
        }
    });
    if let Some(imbalance) = &imbalance {
        row.note = if row.note.is_empty() {
            imbalance.description.clone()
        } else {
            format!("{}; {}", row.note, imbalance.description)
        };
    }
    (vec![row], imbalance)
}

/// The tests of `outcome.tsv`: whether community membership is associated with an outcome
/// column, as [`covariate_tests`], with a permutation p for every row.
///
/// Numeric outcome: ANOVA and Kruskal-Wallis rows, each with `p_exact` the share of `draws`
/// seeded shuffles of the community labels (over the participants with a value) whose statistic
/// reaches the observed one, the observed labelling counted: (b + 1) / (draws + 1).
/// Categorical outcome: the chi-square row with the Monte Carlo p of [`monte_carlo_chi_square`]
/// (a shuffle with both margins fixed), whatever the expected counts.
///
/// # Complexity
/// O(draws N log N).
///
/// # References
/// Phipson & Smyth 2010, Stat Appl Genet Mol Biol 9:39 ((b + 1) / (B + 1)).
pub fn outcome_tests(
    column: &str,
    values: &[&str],
    membership: &[usize],
    alpha: f64,
    seed: u64,
    draws: usize,
) -> (Vec<BalanceTest>, Option<Imbalance>) {
    let (mut rows, imbalance) = covariate_tests(column, values, membership, alpha, seed, 2_000_000);
    match numeric_values(values) {
        Some(numbers) => {
            let pairs: Vec<(usize, f64)> = numbers
                .iter()
                .zip(membership)
                .filter(|(_, &community)| community > 0)
                .filter_map(|(value, &community)| value.map(|v| (community, v)))
                .collect();
            let communities = communities_of(&pairs.iter().map(|p| p.0).collect::<Vec<_>>());
            let samples = |labels: &[usize]| -> Vec<Vec<f64>> {
                communities
                    .iter()
                    .map(|&c| pairs.iter().zip(labels).filter(|(_, &l)| l == c).map(|(p, _)| p.1).collect())
                    .collect()
            };
            let mut labels: Vec<usize> = pairs.iter().map(|p| p.0).collect();
            let mut rng = crate::seed::rng(seed, "outcome", &[0]);
            let mut reached = [0usize; 2];
            let observed = [rows[0].statistic, rows.get(1).map_or(f64::NAN, |r| r.statistic)];
            for _ in 0..draws {
                labels.shuffle(&mut rng);
                let shuffled = samples(&labels);
                let statistics = [
                    one_way_anova(&shuffled).map_or(f64::NAN, |r| r.f),
                    kruskal_wallis(&shuffled).map_or(f64::NAN, |r| r.h),
                ];
                for index in 0..2 {
                    if statistics[index] >= observed[index] * (1.0 - super::contingency::RELATIVE_TIE) {
                        reached[index] += 1;
                    }
                }
            }
            for (index, row) in rows.iter_mut().enumerate().take(2) {
                if row.statistic.is_finite() {
                    row.p_exact = (reached[index] + 1) as f64 / (draws + 1) as f64;
                    row.p_exact_method = "permutation";
                }
            }
        }
        None => {
            let labels: Vec<Option<&str>> = values
                .iter()
                .map(|value| if is_missing(value) { None } else { Some(value.trim()) })
                .collect();
            let (table, ..) = cross_table(membership, &labels);
            let mut rng = crate::seed::rng(seed, "outcome", &[1]);
            if let (Some(row), Ok(p)) = (rows.first_mut(), monte_carlo_chi_square(&table, draws, &mut rng)) {
                if row.test == "chi_square" {
                    row.p_exact = p;
                    row.p_exact_method = "monte_carlo";
                }
            }
        }
    }
    (rows, imbalance)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn composition_of_a_balanced_and_an_unbalanced_split() {
        // Community 1: 8 control, 2 insomnia; community 2: 2 control, 8 insomnia; one unassigned
        // and one missing label left out. Pearson X^2 = 7.2, Yates (|6-5| ... hand computation):
        // each |O - E| = 3, corrected 2.5, X^2 = 4 * 2.5^2 / 5 = 5.0, dof 1.
        let mut membership = vec![1; 10];
        membership.extend(vec![2; 10]);
        membership.extend([0, 2]);
        let mut labels: Vec<Option<&str>> = Vec::new();
        labels.extend(std::iter::repeat_n(Some("control"), 8));
        labels.extend(std::iter::repeat_n(Some("insomnia"), 2));
        labels.extend(std::iter::repeat_n(Some("control"), 2));
        labels.extend(std::iter::repeat_n(Some("insomnia"), 8));
        labels.extend([Some("control"), None]);
        let rows = composition_tests("diagnosis", &membership, &labels, 1);
        assert_eq!(rows.len(), 3);
        assert_eq!(rows[0].n, 20);
        assert_eq!(rows[0].n_missing, 1);
        approx::assert_relative_eq!(rows[0].statistic, 5.0, max_relative = 1e-12);
        approx::assert_relative_eq!(rows[0].effect_size, (7.2f64 / 20.0).sqrt(), max_relative = 1e-12);
        assert_eq!(rows[0].p_exact_method, "");
        assert_eq!(rows[1].scope, "community 1");
    }

    #[test]
    fn a_high_motion_community_is_described_in_words() {
        let membership = [1, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2, 2, 0];
        let values = [
            "0.10", "0.12", "0.11", "0.09", "0.13", "n/a", "0.31", "0.29", "0.35", "0.30", "0.33", "0.28",
            "9",
        ];
        let (rows, imbalance) = covariate_tests("mean_fd", &values, &membership, 0.05, 1, 0);
        assert_eq!(rows.len(), 2);
        assert_eq!((rows[0].test, rows[1].test), ("one_way_anova", "kruskal_wallis"));
        assert_eq!((rows[1].n, rows[1].n_missing), (11, 1));
        let imbalance = imbalance.expect("a clear difference is flagged");
        assert!(
            imbalance
                .description
                .starts_with("community 1 has lower mean_fd (median 0.11, other communities 0.305;")
                || imbalance
                    .description
                    .starts_with("community 2 has higher mean_fd (median 0.305, other communities 0.11;"),
            "{}",
            imbalance.description
        );
        // The outcome version adds a permutation p: with a clear separation (all five values of
        // community 1 below all six of community 2) the Kruskal-Wallis permutation p is near
        // the exact 2 / C(11, 5) = 2 / 462 (hand count of the two extreme splits).
        let (rows, _) = outcome_tests("mean_fd", &values, &membership, 0.05, 1, 4999);
        assert_eq!(rows[1].p_exact_method, "permutation");
        assert!(rows[1].p_exact < 0.01 && rows[1].p_exact >= 1.0 / 5000.0, "{}", rows[1].p_exact);
        // Site codes 1/2 are a category, not a measurement: one chi-square row.
        let sites = ["1", "2", "1", "2", "1", "2", "1", "2", "1", "2", "1", "2", "1"];
        let (rows, _) = covariate_tests("site", &sites, &membership, 0.05, 1, 2);
        assert_eq!((rows.len(), rows[0].test, rows[0].kind), (1, "chi_square", "categorical"));
        // An identifier-like column is not tested.
        let ids = ["a", "b", "c", "d", "e", "f", "g", "h", "i", "j", "k", "l", "m"];
        let (rows, imbalance) = covariate_tests("scanner_id", &ids, &membership, 0.05, 1, 1);
        assert_eq!(rows[0].test, "not_tested");
        assert!(imbalance.is_none());
        assert!(rows[0].note.starts_with("12 distinct values among 12 participants"), "{}", rows[0].note);
    }
}
