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
}
