//! The comparison model with covariates: the design of "group A vs B + covariates" for the rows
//! of one scope, built from participants-table columns.
//!
//! Numeric columns enter as they are; categorical columns (text, or whole-number codes, see
//! [`super::balance::numeric_values`]) are dummy-coded against their alphabetically first level
//! present in the scope (treatment coding). Participants with a missing value (`n/a`) in a used
//! column are left out of the model; the pipeline names them in a warning. Fitting is
//! [`super::glm`]'s job.

use super::balance::{is_missing, numeric_values};
use super::glm::Design;

/// One covariate column of the participants table, cells in cohort order.
#[derive(Debug, Clone)]
pub struct CovariateColumn {
    /// The column name.
    pub name: String,
    /// Numeric values (cohort order) when the column is numeric, else `None`.
    pub numbers: Option<Vec<Option<f64>>>,
    /// The raw cells (cohort order).
    pub cells: Vec<String>,
}

impl CovariateColumn {
    /// Classifies a column as numeric or categorical (see [`numeric_values`]).
    pub fn new(name: &str, cells: &[&str]) -> Self {
        CovariateColumn {
            name: name.to_string(),
            numbers: numeric_values(cells),
            cells: cells.iter().map(|cell| cell.trim().to_string()).collect(),
        }
    }

    /// Whether the participant at cohort row `row` has no value.
    pub fn is_missing(&self, row: usize) -> bool {
        is_missing(&self.cells[row])
    }
}

/// Cohort rows with a missing value in any of the columns.
pub fn rows_with_missing(columns: &[CovariateColumn], participant_count: usize) -> Vec<usize> {
    (0..participant_count).filter(|&row| columns.iter().any(|column| column.is_missing(row))).collect()
}

/// The design `intercept, group, covariates...` over the rows of groups A and B that have every
/// covariate value, with group = 1 for A and 0 for B (the group coefficient is the adjusted
/// A - B difference).
///
/// # Returns
/// The design, its rows (A's then B's, cohort row numbers) and the column index of the group.
pub fn group_design(
    rows_a: &[usize],
    rows_b: &[usize],
    columns: &[CovariateColumn],
) -> (Design, Vec<usize>, usize) {
    let complete = |row: &usize| columns.iter().all(|column| !column.is_missing(*row));
    let rows: Vec<usize> = rows_a.iter().chain(rows_b).copied().filter(complete).collect();
    let in_a: Vec<bool> = rows.iter().map(|row| rows_a.contains(row)).collect();
    let mut names = vec!["intercept".to_string(), "group".to_string()];
    let mut blocks: Vec<Vec<f64>> =
        vec![vec![1.0; rows.len()], in_a.iter().map(|&a| f64::from(u8::from(a))).collect()];
    for column in columns {
        match &column.numbers {
            Some(numbers) => {
                names.push(column.name.clone());
                blocks.push(rows.iter().map(|&row| numbers[row].unwrap_or(f64::NAN)).collect());
            }
            None => {
                let mut levels: Vec<&str> = rows.iter().map(|&row| column.cells[row].as_str()).collect();
                levels.sort_unstable();
                levels.dedup();
                for level in levels.iter().skip(1) {
                    names.push(format!("{}[{level}]", column.name));
                    blocks.push(
                        rows.iter().map(|&row| f64::from(u8::from(column.cells[row] == *level))).collect(),
                    );
                }
            }
        }
    }
    let mut values = Vec::with_capacity(rows.len() * names.len());
    for index in 0..rows.len() {
        values.extend(blocks.iter().map(|block| block[index]));
    }
    (Design { columns: names, values }, rows, 1)
}

/// The nuisance design `intercept, columns...` over every participant (cohort order), for the
/// features stage's nuisance regression; `Err` names the participants without a value.
pub fn nuisance_design(columns: &[CovariateColumn], participant_count: usize) -> Result<Design, Vec<usize>> {
    let missing = rows_with_missing(columns, participant_count);
    if !missing.is_empty() {
        return Err(missing);
    }
    // group_design with every participant in "A" and an all-ones group column dropped.
    let everyone: Vec<usize> = (0..participant_count).collect();
    let (design, _, group) = group_design(&everyone, &[], columns);
    let k = design.column_count();
    let values = &design.values;
    Ok(Design {
        columns: design
            .columns
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != group)
            .map(|(_, c)| c.clone())
            .collect(),
        values: (0..participant_count)
            .flat_map(|i| (0..k).filter(|&j| j != group).map(move |j| values[i * k + j]))
            .collect(),
    })
}

/// The design of the diagnosis x community interaction, and which columns form it.
#[derive(Debug, Clone)]
pub struct InteractionDesign {
    /// `intercept, group, covariates..., community[j]..., group:community[j]...`.
    pub design: Design,
    /// Cohort rows of the model, in design-row order.
    pub rows: Vec<usize>,
    /// Design columns of the interaction terms (the F test's contrasts).
    pub interaction_columns: Vec<usize>,
    /// Communities in the model (the first is the reference level).
    pub communities: Vec<usize>,
}

/// The full model of the diagnosis x community interaction over the communities that hold at
/// least `min_per_level` participants of each level (with every covariate value):
///
/// ```text
/// y = b0 + b1 group + covariates + sum_j c_j community_j + sum_j d_j group community_j + e
/// ```
///
/// with treatment coding against the first community. The F test of d_j = 0 for every j (the
/// A - B difference is the same in every community) is the comparison with the model without
/// the products (checked against statsmodels' anova_lm in tests/reference_glm.rs).
///
/// # Returns
/// `None` when fewer than two communities qualify.
pub fn interaction_design(
    rows_a: &[usize],
    rows_b: &[usize],
    membership: &[usize],
    columns: &[CovariateColumn],
    min_per_level: usize,
) -> Option<InteractionDesign> {
    let complete = |row: &usize| columns.iter().all(|column| !column.is_missing(*row));
    let mut communities: Vec<usize> = membership.iter().copied().filter(|&c| c > 0).collect();
    communities.sort_unstable();
    communities.dedup();
    communities.retain(|&community| {
        let count = |rows: &[usize]| {
            rows.iter().filter(|&&row| membership[row] == community && complete(&row)).count()
        };
        count(rows_a) >= min_per_level && count(rows_b) >= min_per_level
    });
    if communities.len() < 2 {
        return None;
    }
    let in_model = |row: &&usize| communities.contains(&membership[**row]);
    let kept_a: Vec<usize> = rows_a.iter().filter(in_model).copied().collect();
    let kept_b: Vec<usize> = rows_b.iter().filter(in_model).copied().collect();
    let (base, rows, group) = group_design(&kept_a, &kept_b, columns);
    let base_width = base.column_count();
    let mut names = base.columns.clone();
    let mut extra: Vec<Vec<f64>> = Vec::new();
    for &community in &communities[1..] {
        names.push(format!("community[{community}]"));
        extra.push(rows.iter().map(|&row| f64::from(u8::from(membership[row] == community))).collect());
    }
    let mut interaction_columns = Vec::new();
    for (offset, &community) in communities[1..].iter().enumerate() {
        names.push(format!("group:community[{community}]"));
        interaction_columns.push(names.len() - 1);
        extra.push(
            rows.iter()
                .enumerate()
                .map(|(index, _)| base.values[index * base_width + group] * extra[offset][index])
                .collect(),
        );
    }
    let mut values = Vec::with_capacity(rows.len() * names.len());
    for index in 0..rows.len() {
        values.extend_from_slice(&base.values[index * base_width..(index + 1) * base_width]);
        values.extend(extra.iter().map(|column| column[index]));
    }
    Some(InteractionDesign {
        design: Design { columns: names, values },
        rows,
        interaction_columns,
        communities,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn categorical_columns_are_dummy_coded_and_missing_rows_left_out() {
        let age = CovariateColumn::new("age", &["20.5", "31", "n/a", "44.5", "27", "38"]);
        let site = CovariateColumn::new("site", &["north", "east", "east", "west", "north", "east"]);
        let columns = vec![age, site];
        assert_eq!(rows_with_missing(&columns, 6), vec![2]);
        let (design, rows, group) = group_design(&[0, 1, 2], &[3, 4, 5], &columns);
        assert_eq!(rows, vec![0, 1, 3, 4, 5]);
        assert_eq!(group, 1);
        assert_eq!(design.columns, ["intercept", "group", "age", "site[north]", "site[west]"]);
        // Row of participant 3: intercept 1, group B = 0, age 44.5, site west.
        assert_eq!(&design.values[2 * 5..3 * 5], &[1.0, 0.0, 44.5, 0.0, 1.0]);
    }

    #[test]
    fn interaction_design_keeps_communities_with_both_levels() {
        // Communities 1 and 2 have two of each level; community 3 only B: left out.
        let membership = [1, 1, 1, 1, 2, 2, 2, 2, 3, 3, 0];
        let rows_a = [0, 1, 4, 5];
        let rows_b = [2, 3, 6, 7, 8, 9, 10];
        let built = interaction_design(&rows_a, &rows_b, &membership, &[], 2).unwrap();
        assert_eq!(built.communities, vec![1, 2]);
        assert_eq!(built.rows, vec![0, 1, 4, 5, 2, 3, 6, 7]);
        assert_eq!(built.design.columns, ["intercept", "group", "community[2]", "group:community[2]"]);
        assert_eq!(built.interaction_columns, vec![3]);
        // Participant 4 (A, community 2): 1, 1, 1, 1.
        assert_eq!(&built.design.values[2 * 4..3 * 4], &[1.0, 1.0, 1.0, 1.0]);
        assert!(interaction_design(&rows_a, &rows_b, &membership, &[], 3).is_none());
    }
}
