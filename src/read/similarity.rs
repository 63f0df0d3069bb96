//! A precomputed participant similarity matrix (`.npy`, N x N, in participants-table order),
//! read in place of per-participant inputs.

use std::path::Path;

use ndarray::Array2;

use super::cohort::{Cohort, InputKind, InputSource};
use super::matrix::read_matrix;
use super::{ParticipantsTable, ReadError};

/// Relative tolerance of the symmetry check (float32 round-off of a saved matrix).
const SYMMETRY_TOLERANCE: f64 = 1e-5;

/// Reads an N x N similarity matrix whose rows follow the participants table.
///
/// Every participant of the table is analysed, in table order; the diagonal is ignored.
///
/// # Errors
/// The file cannot be read, is not a square matrix, has another N than the table has rows, is
/// not symmetric, or holds a value that is not finite (the message names both participants).
pub fn read_similarity(path: &Path, table: &ParticipantsTable) -> Result<(Cohort, Array2<f32>), ReadError> {
    let format = |problem: String| ReadError::Format { path: path.to_path_buf(), problem };
    if !path.to_string_lossy().to_ascii_lowercase().ends_with(".npy") {
        return Err(format("a precomputed similarity matrix must be an N x N .npy file (numpy.save)".into()));
    }
    let matrix = read_matrix(path, "(all)").map_err(|error| match error {
        ReadError::Invalid { path, problem, .. } => ReadError::Format { path, problem },
        other => other,
    })?;
    let n = matrix.nrows();
    if matrix.ncols() != n {
        return Err(format(format!(
            "matrix of shape {n} x {}; a similarity matrix is square, N x N",
            matrix.ncols()
        )));
    }
    if n != table.row_count() {
        return Err(format(format!(
            "{n} x {n} matrix but {} has {} participants; the matrix's rows must follow the table's rows, one per participant",
            table.path().display(),
            table.row_count()
        )));
    }
    let ids = table.ids();
    for i in 0..n {
        for j in (i + 1)..n {
            let (a, b) = (matrix[[i, j]], matrix[[j, i]]);
            if !a.is_finite() || !b.is_finite() {
                return Err(format(format!(
                    "similarity of participants {} and {} (entry {i}, {j}) is not a finite number; recompute the matrix without NaN",
                    ids[i], ids[j]
                )));
            }
            if (a - b).abs() > SYMMETRY_TOLERANCE * a.abs().max(b.abs()).max(1.0) {
                return Err(format(format!(
                    "not symmetric: participants {} and {} have {a} at ({i}, {j}) but {b} at ({j}, {i}); a similarity matrix is symmetric",
                    ids[i], ids[j]
                )));
            }
        }
    }
    if n < 2 {
        return Err(ReadError::TooFewParticipants { path: table.path().to_path_buf(), count: n });
    }
    let mut values = matrix.mapv(|value| value as f32);
    for i in 0..n {
        values[[i, i]] = 1.0;
    }
    let cohort = Cohort {
        variable: None,
        measures: None,
        table: table.clone(),
        participant_ids: ids.iter().map(|id| id.to_string()).collect(),
        sources: (0..n)
            .map(|index| InputSource { path: path.to_path_buf(), stack_index: Some(index) })
            .collect(),
        kind: InputKind::Similarity,
    };
    Ok((cohort, values))
}
