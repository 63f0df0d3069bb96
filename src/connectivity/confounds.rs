//! Confounds and frame censoring of one participant's BOLD series, and the orthonormal basis
//! of the nuisance model over the kept frames.
//!
//! A confounds table is tab-separated with a header and one row per frame. `n/a` is accepted
//! only in a column's leading rows (derivatives and similar regressors have no value for the
//! first frames) and is replaced by the mean of the column's numeric rows. A censoring column
//! holds 1 (keep the frame) or 0 (drop it). The basis spans the intercept and the confound
//! columns over the kept frames; what is done with it (residual correlations) is
//! [`super::stream`]'s job.

use std::path::Path;

use super::ConnectivityError;
use crate::read::read_table;

/// A design column whose norm, after removing its projection on the columns before it, falls
/// below this fraction of its own norm is taken as a linear combination of them and left out
/// (rank deficiency: a spike regressor of a censored frame, a duplicated column). Common
/// practice for Gram-Schmidt rank decisions in double precision; no published source.
pub const RANK_TOLERANCE: f64 = 1e-10;

/// The cell text of a missing value (BIDS).
const MISSING: &str = "n/a";

/// The confound columns of one participant, one value per frame.
#[derive(Debug, Clone, Default)]
pub struct Confounds {
    /// Column names, in table order.
    pub names: Vec<String>,
    /// `values[c][t]`: column c at frame t, leading n/a filled.
    pub values: Vec<Vec<f64>>,
    /// Per column, how many leading n/a were filled with the column mean.
    pub filled: Vec<usize>,
}

/// The nuisance model of one participant: which frames are kept, and an orthonormal basis of
/// the intercept and the confounds over them.
#[derive(Debug, Clone)]
pub struct NuisanceModel {
    /// Per frame of the series, whether it is kept (not censored).
    pub kept: Vec<bool>,
    /// The confounds regressed out (empty names without a confounds table).
    pub confounds: Confounds,
    /// The basis Q over the kept frames.
    pub basis: Basis,
}

impl NuisanceModel {
    /// Frames kept.
    pub fn kept_count(&self) -> usize {
        self.basis.rows
    }

    /// Degrees of freedom of a residual correlation: kept frames - rank(Q) - 1 (the partial
    /// correlation's n - 2 - covariates, with the intercept counted in the rank).
    pub fn dof(&self) -> usize {
        self.basis.rows - self.basis.rank - 1
    }
}

/// An orthonormal basis Q (K kept frames x rank columns) of the nuisance design.
#[derive(Debug, Clone)]
pub struct Basis {
    /// Kept frames K.
    pub rows: usize,
    /// Columns of Q: the rank of the design (intercept included).
    pub rank: usize,
    /// Row-major K x rank: `q[t * rank + j]`.
    pub q: Vec<f64>,
}

impl Basis {
    /// Row t of Q (the coefficients of kept frame t).
    pub fn row(&self, t: usize) -> &[f64] {
        &self.q[t * self.rank..(t + 1) * self.rank]
    }
}

/// Orthonormal basis of the intercept and `columns` (each K values) by modified Gram-Schmidt.
///
/// The intercept comes first, then the columns in order; each is orthogonalised against the
/// basis so far twice (one reorthogonalisation pass keeps Q orthonormal to rounding) and kept
/// when its remaining norm is above [`RANK_TOLERANCE`] times its norm, so the basis spans the
/// same space as the design whatever its rank. The residual of a series y on the design is then
/// y - Q Q'y, the least-squares residual (Golub & Van Loan, Matrix Computations, 4th ed., 5.2.8).
///
/// # Arguments
/// * `columns` - design columns over the kept frames, each of length `rows`.
/// * `rows` - kept frames K (at least 1).
///
/// # Returns
/// The basis, rank between 1 and 1 + columns.
///
/// # Complexity
/// O(K c^2) for c columns.
///
/// # References
/// Björck 1967, BIT 7:1-21 (modified Gram-Schmidt); Giraud, Langou & Rozložník 2005, Comput.
/// Math. Appl. 50:1069-1075 (twice is enough).
pub fn orthonormal_basis(columns: &[Vec<f64>], rows: usize) -> Basis {
    let mut basis: Vec<Vec<f64>> = Vec::with_capacity(columns.len() + 1);
    let intercept = vec![1.0; rows];
    for column in std::iter::once(&intercept).chain(columns) {
        let norm = column.iter().map(|v| v * v).sum::<f64>().sqrt();
        if norm == 0.0 || !norm.is_finite() {
            continue;
        }
        let mut v = column.clone();
        for _ in 0..2 {
            for q in &basis {
                let projection: f64 = q.iter().zip(&v).map(|(a, b)| a * b).sum();
                for (value, &qi) in v.iter_mut().zip(q) {
                    *value -= projection * qi;
                }
            }
        }
        let remaining = v.iter().map(|x| x * x).sum::<f64>().sqrt();
        if remaining > RANK_TOLERANCE * norm {
            v.iter_mut().for_each(|x| *x /= remaining);
            basis.push(v);
        }
    }
    let rank = basis.len();
    let mut q = vec![0.0; rows * rank];
    for (j, column) in basis.iter().enumerate() {
        for (t, &value) in column.iter().enumerate() {
            q[t * rank + j] = value;
        }
    }
    Basis { rows, rank, q }
}

/// Which confound columns to use.
#[derive(Debug, Clone, Copy)]
pub enum Selection<'a> {
    /// Every column whose cells are numbers (leading n/a allowed), other than `exclude`.
    AllNumeric,
    /// These columns, in this order.
    Named(&'a [String]),
}

/// Reads the confound columns of a table with one row per frame.
///
/// # Errors
/// [`ConnectivityError::Input`] naming the file and participant when the table cannot be read,
/// its row count differs from `frames`, a named column is missing or is the censoring column, a
/// cell is neither a number nor a leading n/a, or a column holds no number at all.
pub fn read_confounds(
    path: &Path,
    participant: &str,
    frames: usize,
    selection: Selection<'_>,
    exclude: Option<&str>,
) -> Result<Confounds, ConnectivityError> {
    let problem = |problem: String| ConnectivityError::Input {
        path: path.to_path_buf(),
        participant: participant.to_string(),
        problem,
    };
    let table =
        read_table(path).map_err(|error| problem(format!("cannot read the confounds table: {error}")))?;
    if table.row_count() != frames {
        return Err(problem(format!(
            "{} rows of confounds for a BOLD series of {frames} frames; the table needs one row per frame \
             (was it made for another run of this participant?)",
            table.row_count()
        )));
    }
    let names: Vec<String> = match selection {
        Selection::Named(names) => {
            for name in names {
                if Some(name.as_str()) == exclude {
                    return Err(problem(format!(
                        "column '{name}' is the censoring column (--censor-column); leave it out of --confound-columns"
                    )));
                }
                if table.column(name).is_none() {
                    return Err(problem(format!(
                        "no column '{name}' (columns: {}); fix --confound-columns",
                        shorten(table.columns())
                    )));
                }
            }
            names.to_vec()
        }
        Selection::AllNumeric => table
            .columns()
            .iter()
            .filter(|name| Some(name.as_str()) != exclude)
            .filter(|name| {
                let cells = table.column(name).unwrap_or_default();
                cells.iter().any(|cell| cell.parse::<f64>().is_ok())
                    && cells.iter().all(|cell| *cell == MISSING || cell.parse::<f64>().is_ok())
            })
            .cloned()
            .collect(),
    };
    let mut confounds = Confounds::default();
    for name in names {
        let cells = table.column(&name).unwrap_or_default();
        let leading = cells.iter().take_while(|cell| **cell == MISSING).count();
        let mut values = Vec::with_capacity(frames);
        for (row, cell) in cells.iter().enumerate().skip(leading) {
            let value = cell.parse::<f64>().ok().filter(|value| value.is_finite()).ok_or_else(|| {
                let why = if *cell == MISSING {
                    "n/a after numeric rows; only a column's leading rows may be n/a (they are filled with \
                     the column mean): fill or drop this column"
                        .to_string()
                } else {
                    format!("'{cell}' is not a finite number")
                };
                problem(format!("line {}, column '{name}': {why}", table.line_of(row)))
            })?;
            values.push(value);
        }
        if values.is_empty() {
            return Err(problem(format!(
                "column '{name}' holds no number (every row is n/a); leave it out of --confound-columns"
            )));
        }
        let mean = values.iter().sum::<f64>() / values.len() as f64;
        let mut column = vec![mean; leading];
        column.extend(values);
        confounds.names.push(name);
        confounds.values.push(column);
        confounds.filled.push(leading);
    }
    Ok(confounds)
}

/// Reads a censoring column: 1 keeps a frame, 0 drops it.
///
/// # Errors
/// [`ConnectivityError::Input`] when the table cannot be read, the column is missing, its row
/// count differs from `frames`, or a cell is not 0 or 1.
pub fn read_censoring(
    path: &Path,
    participant: &str,
    frames: usize,
    column: &str,
) -> Result<Vec<bool>, ConnectivityError> {
    let problem = |problem: String| ConnectivityError::Input {
        path: path.to_path_buf(),
        participant: participant.to_string(),
        problem,
    };
    let table =
        read_table(path).map_err(|error| problem(format!("cannot read the censoring table: {error}")))?;
    let cells = table.column(column).ok_or_else(|| {
        problem(format!(
            "no censoring column '{column}' (columns: {}); fix --censor-column",
            shorten(table.columns())
        ))
    })?;
    if cells.len() != frames {
        return Err(problem(format!(
            "{} rows in censoring column '{column}' for a BOLD series of {frames} frames; it needs one row per frame",
            cells.len()
        )));
    }
    cells
        .iter()
        .enumerate()
        .map(|(row, cell)| match cell.parse::<f64>() {
            Ok(1.0) => Ok(true),
            Ok(0.0) => Ok(false),
            _ => Err(problem(format!(
                "line {}, censoring column '{column}': '{cell}'; expected 1 (keep the frame) or 0 (drop it)",
                table.line_of(row)
            ))),
        })
        .collect()
}

/// Builds the nuisance model from the confounds (possibly none) and the kept frames.
///
/// # Errors
/// [`ConnectivityError::Input`] naming `bold` when every frame is censored or too few frames
/// remain for the model (kept frames must be at least rank + 2, so one residual degree of
/// freedom is left for the correlation).
pub fn nuisance_model(
    bold: &Path,
    participant: &str,
    confounds: Confounds,
    kept: Vec<bool>,
) -> Result<NuisanceModel, ConnectivityError> {
    let problem = |problem: String| ConnectivityError::Input {
        path: bold.to_path_buf(),
        participant: participant.to_string(),
        problem,
    };
    let rows = kept.iter().filter(|&&keep| keep).count();
    if rows == 0 {
        return Err(problem(format!(
            "every one of its {} frames is censored (0 in the censoring column); check the column or \
             leave the participant out",
            kept.len()
        )));
    }
    let columns: Vec<Vec<f64>> = confounds
        .values
        .iter()
        .map(|column| column.iter().zip(&kept).filter(|(_, &keep)| keep).map(|(&value, _)| value).collect())
        .collect();
    let basis = orthonormal_basis(&columns, rows);
    if rows < basis.rank + 2 {
        return Err(problem(format!(
            "{rows} kept frame(s) for {} regressor(s) (intercept and confounds of full rank); a correlation \
             needs at least regressors + 2 kept frames: use fewer --confound-columns or censor fewer frames",
            basis.rank
        )));
    }
    Ok(NuisanceModel { kept, confounds, basis })
}

/// Column names for a message: the first few, then how many more.
fn shorten(columns: &[String]) -> String {
    const SHOWN: usize = 12;
    let mut text = columns.iter().take(SHOWN).cloned().collect::<Vec<_>>().join(", ");
    if columns.len() > SHOWN {
        text.push_str(&format!(" and {} more", columns.len() - SHOWN));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn basis_is_orthonormal_and_drops_dependent_columns() {
        let rows = 8;
        let a: Vec<f64> = (0..rows).map(|t| t as f64).collect();
        let b: Vec<f64> = (0..rows).map(|t| (t as f64).powi(2)).collect();
        // 2a + 3 lies in the span of the intercept and a: rank 3, not 4.
        let dependent: Vec<f64> = a.iter().map(|v| 2.0 * v + 3.0).collect();
        let basis = orthonormal_basis(&[a, b, dependent], rows);
        assert_eq!(basis.rank, 3);
        for i in 0..basis.rank {
            for j in 0..basis.rank {
                let dot: f64 = (0..rows).map(|t| basis.row(t)[i] * basis.row(t)[j]).sum();
                let expected = if i == j { 1.0 } else { 0.0 };
                assert!((dot - expected).abs() < 1e-12, "Q'Q[{i},{j}] = {dot}");
            }
        }
        // The first column is the normalised intercept (definition of the ordering).
        assert!((0..rows).all(|t| (basis.row(t)[0] - 1.0 / (rows as f64).sqrt()).abs() < 1e-15));
    }

    #[test]
    fn leading_missing_values_take_the_column_mean_and_later_ones_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("sub-01_confounds.tsv");
        std::fs::write(&path, "a\tb\tnote\tkeep\nn/a\t1\tx\t1\n2\t2\ty\t0\n4\t3\tz\t1\n").unwrap();
        let confounds = read_confounds(&path, "sub-01", 3, Selection::AllNumeric, Some("keep")).unwrap();
        assert_eq!(confounds.names, ["a", "b"], "text columns and the censoring column are left out");
        assert_eq!(confounds.values[0], [3.0, 2.0, 4.0]);
        assert_eq!(confounds.filled, [1, 0]);
        assert_eq!(read_censoring(&path, "sub-01", 3, "keep").unwrap(), [true, false, true]);
        std::fs::write(&path, "a\n1\nn/a\n3\n").unwrap();
        let error = read_confounds(&path, "sub-01", 3, Selection::AllNumeric, None).unwrap_err().to_string();
        assert!(error.contains("line 3, column 'a': n/a after numeric rows"), "{error}");
        let error = read_confounds(&path, "sub-01", 4, Selection::AllNumeric, None).unwrap_err().to_string();
        assert!(error.contains("3 rows of confounds for a BOLD series of 4 frames"), "{error}");
    }
}
