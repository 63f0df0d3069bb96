//! Measure tables: participants x measures (cognitive or questionnaire scores), from columns of
//! the participants table or of a separate tab-separated file keyed by `participant_id`.
//!
//! Missing values (`n/a` or empty, as BIDS writes them) leave their participant out of the
//! analysis; each (participant, column) is returned so the run can warn about it by name.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::table::{read_table, ParticipantsTable};
use super::{Cohort, InputKind, InputSource, ReadError};

/// The measure values of the analysed participants.
#[derive(Debug, Clone)]
pub struct MeasureValues {
    /// The file the values came from (the participants table or the separate table).
    pub path: PathBuf,
    /// Measure (column) names, in feature order.
    pub names: Vec<String>,
    /// N x M values, row-major, rows in cohort order; no missing values.
    pub values: Vec<f64>,
}

/// A participant left out because of a missing value.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MissingMeasure {
    /// The participant.
    pub participant: String,
    /// The column whose value is missing.
    pub column: String,
}

fn is_missing(cell: &str) -> bool {
    let cell = cell.trim();
    cell.is_empty() || cell == "n/a"
}

/// Builds the cohort of a measures run.
///
/// `columns` names the measures (empty: every column of `file` other than `participant_id`
/// whose non-missing values are all numbers). `file` is a separate table keyed by
/// `participant_id` (None: the participants table itself, where `columns` is required).
///
/// # Errors
/// No columns given for the participants table; a named column absent; a value that is not a
/// number; a participant of the table absent from the separate file; fewer than two complete
/// participants; fewer than two measures.
pub fn discover_measures(
    table: &ParticipantsTable,
    columns: &[String],
    file: Option<&Path>,
) -> Result<(Cohort, Vec<MissingMeasure>), ReadError> {
    let separate = match file {
        Some(path) => Some(read_table(path)?),
        None => None,
    };
    let source = separate.as_ref().unwrap_or(table);
    let path = source.path().to_path_buf();
    let table_error = |line: usize, problem: String| ReadError::Table { path: path.clone(), line, problem };
    let names: Vec<String> = if columns.is_empty() {
        if separate.is_none() {
            return Err(table_error(
                1,
                "--measures needs column names when the measures are columns of the participants table (for example --measures memory,attention), or give --measures-table FILE".into(),
            ));
        }
        source
            .columns()
            .iter()
            .skip(1)
            .filter(|column| {
                source.column(column).is_some_and(|cells| {
                    cells.iter().all(|cell| is_missing(cell) || cell.trim().parse::<f64>().is_ok())
                })
            })
            .cloned()
            .collect()
    } else {
        columns.to_vec()
    };
    if names.len() < 2 {
        return Err(table_error(
            1,
            format!(
                "{} measure column(s) ({}); a profile needs at least two measures to compare participants",
                names.len(),
                names.join(", ")
            ),
        ));
    }
    let mut cells = Vec::with_capacity(names.len());
    for name in &names {
        let column = source.column(name).ok_or_else(|| {
            table_error(1, format!("no column '{name}'; the table has: {}", source.columns().join(", ")))
        })?;
        cells.push(column);
    }
    // Row of each participant in the source table.
    let source_row: HashMap<&str, usize> =
        source.ids().into_iter().enumerate().map(|(row, id)| (id, row)).collect();
    let mut keep = Vec::new();
    let mut missing = Vec::new();
    let mut values = Vec::new();
    for (row, id) in table.ids().into_iter().enumerate() {
        let Some(&at) = source_row.get(id) else {
            return Err(table_error(
                1,
                format!("participant {id} of the participants table has no row here; add one (n/a for missing values) or remove the participant from the participants table"),
            ));
        };
        let mut complete = true;
        let mut row_values = Vec::with_capacity(names.len());
        for (name, column) in names.iter().zip(&cells) {
            let cell = column[at].trim();
            if is_missing(cell) {
                missing.push(MissingMeasure { participant: id.to_string(), column: name.clone() });
                complete = false;
                continue;
            }
            let value = cell.parse::<f64>().ok().filter(|v| v.is_finite()).ok_or_else(|| {
                table_error(
                    source.line_of(at),
                    format!("participant {id}: column '{name}' holds '{cell}', not a number; write n/a for a missing value"),
                )
            })?;
            row_values.push(value);
        }
        if complete {
            keep.push(row);
            values.extend(row_values);
        }
    }
    if keep.len() < 2 {
        return Err(ReadError::TooFewParticipants { path: path.clone(), count: keep.len() });
    }
    let analysed = table.select(&keep);
    let participant_ids: Vec<String> = analysed.ids().iter().map(|id| id.to_string()).collect();
    let sources =
        (0..keep.len()).map(|row| InputSource { path: path.clone(), stack_index: Some(row) }).collect();
    let cohort = Cohort {
        table: analysed,
        participant_ids,
        sources,
        kind: InputKind::Measures,
        variable: None,
        measures: Some(MeasureValues { path, names, values }),
    };
    Ok((cohort, missing))
}
