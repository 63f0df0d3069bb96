//! Tests on contingency tables of counts: chi-square test of independence, Monte Carlo p,
//! Fisher's exact test for 2 x 2 tables and Cramer's V.
//!
//! Used for the composition of communities (community x group level) and for categorical
//! covariates across communities. Tables are given as rows of counts; building them from
//! participant labels is the caller's job.

use rand::seq::SliceRandom;
use rand::Rng;
use statrs::distribution::{ChiSquared, ContinuousCDF};
use statrs::function::factorial::ln_binomial;

use super::StatsError;

/// Expected counts below this make the chi-square approximation doubtful (Cochran 1954's rule
/// of thumb, common practice): a Monte Carlo or exact p is reported beside it.
pub const SMALL_EXPECTED_COUNT: f64 = 5.0;

/// Relative tolerance under which two table probabilities (Fisher) or two statistics (Monte
/// Carlo) count as equal, so that rounding does not drop tables as extreme as the observed one.
/// 1e-7 is the value scipy.stats.fisher_exact uses (from memory).
pub const RELATIVE_TIE: f64 = 1e-7;

/// Result of a chi-square test of independence on an r x c table.
#[derive(Debug, Clone, PartialEq)]
pub struct ChiSquareTest {
    /// The statistic (Yates-corrected when `yates` is true).
    pub statistic: f64,
    /// Degrees of freedom (r - 1)(c - 1) over the non-empty rows and columns.
    pub dof: usize,
    /// Upper-tail p of the chi-square distribution.
    pub p: f64,
    /// Whether Yates' continuity correction was applied (asked for, and dof = 1).
    pub yates: bool,
    /// Smallest expected count.
    pub min_expected: f64,
    /// Total count n.
    pub total: u64,
    /// Cramer's V from the uncorrected statistic.
    pub cramers_v: f64,
    /// Pearson statistic without correction (the basis of V and of the Monte Carlo p).
    pub pearson_statistic: f64,
}

/// Result of Fisher's exact test on a 2 x 2 table [[a, b], [c, d]].
#[derive(Debug, Clone, PartialEq)]
pub struct FisherExact {
    /// Sample odds ratio a d / (b c); infinite when b c = 0 < a d; NaN when a margin is empty.
    pub odds_ratio: f64,
    /// Two-sided p: the total probability of the tables (same margins) no more probable than
    /// the observed one.
    pub p_two_sided: f64,
    /// One-sided p for an odds ratio below 1: P(X <= a).
    pub p_less: f64,
    /// One-sided p for an odds ratio above 1: P(X >= a).
    pub p_greater: f64,
}

/// Rows and columns with a non-zero total, as a dense f64 table.
fn non_empty(table: &[Vec<u64>], test: &str) -> Result<Vec<Vec<f64>>, StatsError> {
    let columns = table.first().map_or(0, Vec::len);
    if table.iter().any(|row| row.len() != columns) {
        return Err(StatsError::InvalidInput {
            test: test.into(),
            message: "rows of the table have different lengths; give one count per column in every row"
                .into(),
        });
    }
    let keep_columns: Vec<usize> =
        (0..columns).filter(|&j| table.iter().map(|row| row[j]).sum::<u64>() > 0).collect();
    let kept: Vec<Vec<f64>> = table
        .iter()
        .filter(|row| row.iter().sum::<u64>() > 0)
        .map(|row| keep_columns.iter().map(|&j| row[j] as f64).collect())
        .collect();
    if kept.len() < 2 || keep_columns.len() < 2 {
        return Err(StatsError::InvalidInput {
            test: test.into(),
            message: format!(
                "the table has {} non-empty row(s) and {} non-empty column(s); a test of independence needs at least 2 of each",
                kept.len(),
                keep_columns.len()
            ),
        });
    }
    Ok(kept)
}

/// Pearson's chi-square test of independence of the rows and columns of a table of counts.
///
/// With row totals R_i, column totals C_j and total n, expected counts E_ij = R_i C_j / n:
///
/// ```text
/// X^2 = sum_ij (|O_ij - E_ij| - y_ij)^2 / E_ij,   dof = (r - 1)(c - 1),   p = P(chi2_dof > X^2)
/// y_ij = min(0.5, |O_ij - E_ij|) when Yates' correction applies (asked and dof = 1), else 0
/// V    = sqrt( X^2_uncorrected / (n (min(r, c) - 1)) )            (Cramer's V)
/// ```
///
/// Rows and columns whose total is 0 are left out before the test (they carry no information;
/// the reference implementation refuses such tables instead).
///
/// # Arguments
/// * `table` - r rows of c counts.
/// * `yates` - apply Yates' continuity correction to 2 x 2 tables (scipy's default is true).
///
/// # Returns
/// A [`ChiSquareTest`].
///
/// # Errors
/// [`StatsError::InvalidInput`] for ragged rows or fewer than 2 non-empty rows or columns.
///
/// # Complexity
/// O(r c).
///
/// # References
/// Pearson 1900, Phil Mag 50:157-175; Yates 1934, Suppl J R Stat Soc 1:217-235;
/// Cramer 1946, Mathematical Methods of Statistics, p. 282.
pub fn chi_square_independence(table: &[Vec<u64>], yates: bool) -> Result<ChiSquareTest, StatsError> {
    let observed = non_empty(table, "chi-square test of independence")?;
    let rows = observed.len();
    let columns = observed[0].len();
    let row_totals: Vec<f64> = observed.iter().map(|row| row.iter().sum()).collect();
    let column_totals: Vec<f64> = (0..columns).map(|j| observed.iter().map(|row| row[j]).sum()).collect();
    let total: f64 = row_totals.iter().sum();
    let dof = (rows - 1) * (columns - 1);
    let apply_yates = yates && dof == 1;
    let mut statistic = 0.0;
    let mut pearson_statistic = 0.0;
    let mut min_expected = f64::INFINITY;
    for (i, row) in observed.iter().enumerate() {
        for (j, &count) in row.iter().enumerate() {
            let expected = row_totals[i] * column_totals[j] / total;
            min_expected = min_expected.min(expected);
            let deviation = (count - expected).abs();
            pearson_statistic += deviation * deviation / expected;
            let corrected = if apply_yates { deviation - deviation.min(0.5) } else { deviation };
            statistic += corrected * corrected / expected;
        }
    }
    let p = ChiSquared::new(dof as f64).map_or(f64::NAN, |distribution| distribution.sf(statistic));
    Ok(ChiSquareTest {
        statistic,
        dof,
        p,
        yates: apply_yates,
        min_expected,
        total: total as u64,
        cramers_v: cramers_v_from(pearson_statistic, total, rows, columns),
        pearson_statistic,
    })
}

/// Cramer's V of a table of counts: `sqrt(X^2 / (n (min(r, c) - 1)))` with the uncorrected
/// Pearson X^2 over the non-empty rows and columns.
///
/// # Errors
/// As [`chi_square_independence`].
///
/// # References
/// Cramer 1946, Mathematical Methods of Statistics, p. 282.
pub fn cramers_v(table: &[Vec<u64>]) -> Result<f64, StatsError> {
    Ok(chi_square_independence(table, false)?.cramers_v)
}

fn cramers_v_from(statistic: f64, total: f64, rows: usize, columns: usize) -> f64 {
    (statistic / (total * (rows.min(columns) - 1) as f64)).sqrt()
}

/// Monte Carlo p of Pearson's chi-square statistic with both margins fixed.
///
/// The table is expanded into n (row, column) label pairs; each draw shuffles the column labels
/// against the row labels (a uniform draw from the tables with the observed margins, under
/// independence) and recomputes X^2 (uncorrected). With B draws of which b reach the observed
/// statistic (within [`RELATIVE_TIE`]):
///
/// ```text
/// p = (b + 1) / (B + 1)
/// ```
///
/// which counts the observed table as one of the draws, so p is never 0 and the smallest
/// attainable value is 1 / (B + 1).
///
/// # Arguments
/// * `table` - r rows of c counts.
/// * `draws` - B, the number of shuffled tables.
/// * `rng` - a seeded generator (derive it through `crate::seed`).
///
/// # Returns
/// The p value.
///
/// # Errors
/// As [`chi_square_independence`].
///
/// # Complexity
/// O(B (n + r c)) time, O(n + r c) memory.
///
/// # References
/// Hope 1968, J R Stat Soc B 30:582-598 (Monte Carlo tests); Phipson & Smyth 2010, Stat Appl
/// Genet Mol Biol 9:39 (the (b + 1) / (B + 1) estimate).
pub fn monte_carlo_chi_square<R: Rng>(
    table: &[Vec<u64>],
    draws: usize,
    rng: &mut R,
) -> Result<f64, StatsError> {
    let observed = chi_square_independence(table, false)?;
    let counts = non_empty(table, "chi-square test of independence")?;
    let rows = counts.len();
    let columns = counts[0].len();
    let mut row_labels = Vec::new();
    let mut column_labels = Vec::new();
    for (i, row) in counts.iter().enumerate() {
        for (j, &count) in row.iter().enumerate() {
            for _ in 0..count as usize {
                row_labels.push(i);
                column_labels.push(j);
            }
        }
    }
    let row_totals: Vec<f64> = counts.iter().map(|row| row.iter().sum()).collect();
    let column_totals: Vec<f64> = (0..columns).map(|j| counts.iter().map(|row| row[j]).sum()).collect();
    let total = row_labels.len() as f64;
    let threshold = observed.pearson_statistic * (1.0 - RELATIVE_TIE);
    let mut cells = vec![0.0f64; rows * columns];
    let mut reached = 0usize;
    for _ in 0..draws {
        column_labels.shuffle(rng);
        cells.fill(0.0);
        for (&i, &j) in row_labels.iter().zip(&column_labels) {
            cells[i * columns + j] += 1.0;
        }
        let mut statistic = 0.0;
        for i in 0..rows {
            for j in 0..columns {
                let expected = row_totals[i] * column_totals[j] / total;
                let deviation = cells[i * columns + j] - expected;
                statistic += deviation * deviation / expected;
            }
        }
        if statistic >= threshold {
            reached += 1;
        }
    }
    Ok((reached + 1) as f64 / (draws + 1) as f64)
}

/// Fisher's exact test of independence on a 2 x 2 table [[a, b], [c, d]].
///
/// With the margins fixed, the top-left count X follows the hypergeometric distribution
///
/// ```text
/// P(X = x) = C(a + c, x) C(b + d, a + b - x) / C(n, a + b)
/// p_less = P(X <= a),  p_greater = P(X >= a)
/// p_two_sided = sum of P(X = x) over x with P(X = x) <= P(X = a) (1 + 1e-7)
/// ```
///
/// # Arguments
/// * `table` - `[[a, b], [c, d]]`.
///
/// # Returns
/// A [`FisherExact`]; all p are 1 (and the odds ratio NaN) when a margin is empty.
///
/// # Complexity
/// O(min(a + b, a + c)) log-gamma evaluations.
///
/// # References
/// Fisher 1935, J R Stat Soc 98:39-82; Agresti 2002, Categorical Data Analysis (2nd ed.), 3.5.
pub fn fisher_exact(table: [[u64; 2]; 2]) -> FisherExact {
    let [[a, b], [c, d]] = table;
    let n = a + b + c + d;
    let row = a + b;
    let column = a + c;
    if row == 0 || column == 0 || row == n || column == n {
        return FisherExact { odds_ratio: f64::NAN, p_two_sided: 1.0, p_less: 1.0, p_greater: 1.0 };
    }
    let odds_ratio = if b > 0 && c > 0 { (a * d) as f64 / (b * c) as f64 } else { f64::INFINITY };
    let low = (row + column).saturating_sub(n);
    let high = row.min(column);
    let log_denominator = ln_binomial(n, row);
    let probability =
        |x: u64| (ln_binomial(column, x) + ln_binomial(n - column, row - x) - log_denominator).exp();
    let observed = probability(a);
    let mut p_less = 0.0;
    let mut p_greater = 0.0;
    let mut p_two_sided = 0.0;
    for x in low..=high {
        let p = probability(x);
        if x <= a {
            p_less += p;
        }
        if x >= a {
            p_greater += p;
        }
        if p <= observed * (1.0 + RELATIVE_TIE) {
            p_two_sided += p;
        }
    }
    FisherExact {
        odds_ratio,
        p_two_sided: p_two_sided.min(1.0),
        p_less: p_less.min(1.0),
        p_greater: p_greater.min(1.0),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn handbook_tables() {
        // REFERENCES.md (computed scipy): [[10,20],[30,40]] Yates 0.4464285714 (p 0.5040358665),
        // Pearson 0.7936507937 (p 0.3729984836), V 0.0890870806.
        let table = vec![vec![10, 20], vec![30, 40]];
        let yates = chi_square_independence(&table, true).unwrap();
        assert!(yates.yates);
        assert_relative_eq!(yates.statistic, 0.4464285714, max_relative = 1e-9);
        assert_relative_eq!(yates.p, 0.5040358665, max_relative = 1e-9);
        let pearson = chi_square_independence(&table, false).unwrap();
        assert_relative_eq!(pearson.statistic, 0.7936507937, max_relative = 1e-9);
        assert_relative_eq!(pearson.p, 0.3729984836, max_relative = 1e-9);
        assert_relative_eq!(yates.cramers_v, 0.0890870806, max_relative = 1e-9);
        // [[10,20],[15,15],[25,5]]: 15.75, df 2, p 0.0003801290, V 0.4183300133.
        let table = vec![vec![10, 20], vec![15, 15], vec![25, 5]];
        let result = chi_square_independence(&table, true).unwrap();
        assert!(!result.yates);
        assert_eq!(result.dof, 2);
        assert_relative_eq!(result.statistic, 15.75, max_relative = 1e-12);
        assert_relative_eq!(result.p, 0.0003801290, max_relative = 1e-6);
        assert_relative_eq!(result.cramers_v, 0.4183300133, max_relative = 1e-9);
        // Fisher [[3,1],[1,3]]: two-sided 0.4857142857, greater 17/70, OR 9.
        let fisher = fisher_exact([[3, 1], [1, 3]]);
        assert_relative_eq!(fisher.p_two_sided, 0.4857142857, max_relative = 1e-9);
        assert_relative_eq!(fisher.p_greater, 17.0 / 70.0, max_relative = 1e-9);
        assert_relative_eq!(fisher.odds_ratio, 9.0, max_relative = 1e-12);
    }

    #[test]
    fn empty_rows_are_dropped_and_degenerate_tables_refused() {
        let with_empty = chi_square_independence(&[vec![10, 0, 20], vec![30, 0, 40]], false).unwrap();
        assert_relative_eq!(with_empty.statistic, 0.7936507937, max_relative = 1e-9);
        let error = chi_square_independence(&[vec![10, 20], vec![0, 0]], true).unwrap_err();
        assert_eq!(
            error.to_string(),
            "chi-square test of independence: the table has 1 non-empty row(s) and 2 non-empty column(s); a test of independence needs at least 2 of each"
        );
    }

    #[test]
    fn monte_carlo_p_is_seeded_and_near_the_asymptotic_p() {
        // With large counts the chi-square approximation holds, so the Monte Carlo p of the
        // 3 x 2 handbook table (asymptotic 0.00038) must be small; with 999 draws none should
        // reach the statistic, giving the smallest attainable p, 1 / 1000.
        let table = vec![vec![10, 20], vec![15, 15], vec![25, 5]];
        let mut rng = crate::seed::rng(7, "test", &[0]);
        let p = monte_carlo_chi_square(&table, 999, &mut rng).unwrap();
        assert!(p <= 0.005, "{p}");
        let mut rng = crate::seed::rng(7, "test", &[0]);
        assert_eq!(monte_carlo_chi_square(&table, 999, &mut rng).unwrap(), p);
        // 2 x 2: X^2 grows with |a - E(a)|, so the exact permutation p is the hypergeometric
        // probability of |X - E| >= |a - E| (hand derivation, computed here with statrs); the
        // Monte Carlo estimate from 4999 draws lies within 4 binomial standard errors of it.
        use statrs::distribution::{Discrete, Hypergeometric};
        let hypergeometric = Hypergeometric::new(100, 40, 30).unwrap();
        let expected = 30.0 * 40.0 / 100.0;
        let exact: f64 = (0..=30u64)
            .filter(|&x| (x as f64 - expected).abs() >= (10.0f64 - expected).abs() - 1e-9)
            .map(|x| hypergeometric.pmf(x))
            .sum();
        let mut rng = crate::seed::rng(7, "test", &[1]);
        let p = monte_carlo_chi_square(&[vec![10, 20], vec![30, 40]], 4999, &mut rng).unwrap();
        let tolerance = 4.0 * (exact * (1.0 - exact) / 4999.0).sqrt();
        assert!((p - exact).abs() < tolerance, "Monte Carlo {p}, exact {exact}");
    }
}
