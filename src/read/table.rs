//! Tab-separated tables: the BIDS participants table and atlas tables.
//!
//! BIDS v1.11.1: `participants.tsv` is tab-separated with a header; its first column is
//! `participant_id`, whose values match `^sub-[0-9a-zA-Z+]+$`, one row per participant; `n/a`
//! marks a missing value.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::ReadError;

/// A tab-separated table with a header row.
#[derive(Debug, Clone)]
pub struct ParticipantsTable {
    path: PathBuf,
    columns: Vec<String>,
    rows: Vec<Vec<String>>,
    /// 1-based line of each row in the file (for messages).
    lines: Vec<usize>,
}

impl ParticipantsTable {
    /// The file the table was read from.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Column names, in file order.
    pub fn columns(&self) -> &[String] {
        &self.columns
    }

    /// The rows (one cell per column).
    pub fn rows(&self) -> &[Vec<String>] {
        &self.rows
    }

    /// Number of rows.
    pub fn row_count(&self) -> usize {
        self.rows.len()
    }

    /// The values of the first column (`participant_id` in a participants table).
    pub fn ids(&self) -> Vec<&str> {
        self.rows.iter().map(|row| row[0].as_str()).collect()
    }

    /// The values of a column by name.
    pub fn column(&self, name: &str) -> Option<Vec<&str>> {
        let index = self.columns.iter().position(|column| column == name)?;
        Some(self.rows.iter().map(|row| row[index].as_str()).collect())
    }

    /// The 1-based file line of row `row`.
    pub fn line_of(&self, row: usize) -> usize {
        self.lines[row]
    }

    /// A one-column table (`participant_id`) of `ids`, for inputs that come without a
    /// participants table (`strata assign`); `path` names where the ids came from in messages.
    pub fn from_ids(path: &Path, ids: &[String]) -> ParticipantsTable {
        ParticipantsTable {
            path: path.to_path_buf(),
            columns: vec!["participant_id".to_string()],
            rows: ids.iter().map(|id| vec![id.clone()]).collect(),
            lines: (2..ids.len() + 2).collect(),
        }
    }

    /// The same table restricted to `rows`, in that order.
    pub fn select(&self, rows: &[usize]) -> ParticipantsTable {
        ParticipantsTable {
            path: self.path.clone(),
            columns: self.columns.clone(),
            rows: rows.iter().map(|&row| self.rows[row].clone()).collect(),
            lines: rows.iter().map(|&row| self.lines[row]).collect(),
        }
    }
}

/// Reads any tab-separated table with a header (atlas tables, earlier outputs).
///
/// # Errors
/// The file cannot be read, is empty, has an empty or duplicated column name, or a row whose
/// cell count differs from the header's.
pub fn read_table(path: &Path) -> Result<ParticipantsTable, ReadError> {
    let bytes = std::fs::read(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
    let text = String::from_utf8(bytes).map_err(|error| ReadError::Table {
        path: path.to_path_buf(),
        line: 1,
        problem: format!("not UTF-8 text ({error}); save the table as UTF-8"),
    })?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
    let mut lines = text.lines().enumerate().map(|(index, line)| (index + 1, line.trim_end_matches('\r')));
    let (_, header) = lines.find(|(_, line)| !line.trim().is_empty()).ok_or_else(|| ReadError::Table {
        path: path.to_path_buf(),
        line: 1,
        problem: "the table is empty; a header row is expected".into(),
    })?;
    let columns: Vec<String> = header.split('\t').map(|cell| cell.trim().to_string()).collect();
    if columns.len() == 1 && (header.contains(',') || header.contains(';')) {
        return Err(ReadError::Table {
            path: path.to_path_buf(),
            line: 1,
            problem: format!(
                "header '{header}' has no tab; the table must be tab-separated (TSV), not comma-separated"
            ),
        });
    }
    let mut seen = HashMap::new();
    for (index, column) in columns.iter().enumerate() {
        if column.is_empty() {
            return Err(ReadError::Table {
                path: path.to_path_buf(),
                line: 1,
                problem: format!("column {} of the header has no name", index + 1),
            });
        }
        if let Some(first) = seen.insert(column.clone(), index) {
            return Err(ReadError::Table {
                path: path.to_path_buf(),
                line: 1,
                problem: format!("column '{column}' appears twice (columns {} and {})", first + 1, index + 1),
            });
        }
    }
    let mut rows = Vec::new();
    let mut row_lines = Vec::new();
    for (line_number, line) in lines {
        if line.trim().is_empty() {
            continue;
        }
        let cells: Vec<String> = line.split('\t').map(|cell| cell.trim().to_string()).collect();
        if cells.len() != columns.len() {
            return Err(ReadError::Table {
                path: path.to_path_buf(),
                line: line_number,
                problem: format!(
                    "{} cell(s) where the header has {} columns; every row needs one tab-separated cell per column (n/a for missing)",
                    cells.len(),
                    columns.len()
                ),
            });
        }
        rows.push(cells);
        row_lines.push(line_number);
    }
    Ok(ParticipantsTable { path: path.to_path_buf(), columns, rows, lines: row_lines })
}

/// True if `id` is a valid BIDS participant id (`^sub-[0-9a-zA-Z+]+$`).
pub fn is_participant_id(id: &str) -> bool {
    id.strip_prefix("sub-").is_some_and(|label| {
        !label.is_empty() && label.chars().all(|c| c.is_ascii_alphanumeric() || c == '+')
    })
}

/// Reads and checks a BIDS participants table.
///
/// # Errors
/// As [`read_table`], plus: the first column is not `participant_id`, an id does not match the
/// BIDS pattern, an id appears twice, or the table has no rows.
pub fn read_participants(path: &Path) -> Result<ParticipantsTable, ReadError> {
    let table = read_table(path)?;
    if table.columns[0] != "participant_id" {
        return Err(ReadError::Table {
            path: path.to_path_buf(),
            line: 1,
            problem: format!(
                "the first column is '{}'; a BIDS participants table starts with a participant_id column",
                table.columns[0]
            ),
        });
    }
    if table.rows.is_empty() {
        return Err(ReadError::Table {
            path: path.to_path_buf(),
            line: 2,
            problem: "the table has a header but no participants".into(),
        });
    }
    let mut first_line: HashMap<&str, usize> = HashMap::new();
    for (row, cells) in table.rows.iter().enumerate() {
        let id = cells[0].as_str();
        let line = table.lines[row];
        if !is_participant_id(id) {
            return Err(ReadError::Table {
                path: path.to_path_buf(),
                line,
                problem: format!(
                    "participant_id '{id}' does not match the BIDS pattern sub-<label> (label of letters and digits), for example sub-017"
                ),
            });
        }
        if let Some(&first) = first_line.get(id) {
            return Err(ReadError::DuplicateParticipant {
                path: path.to_path_buf(),
                participant: id.to_string(),
                first_line: first,
                second_line: line,
            });
        }
        first_line.insert(id, line);
    }
    Ok(table)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write(text: &str) -> (tempfile::TempDir, PathBuf) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("participants.tsv");
        std::fs::write(&path, text).unwrap();
        (dir, path)
    }

    #[test]
    fn reads_bids_table_with_crlf_and_missing_values() {
        let (_dir, path) =
            write("participant_id\tdiagnosis\tage\r\nsub-01\tinsomnia\t14\r\nsub-02\tcontrol\tn/a\r\n");
        let table = read_participants(&path).unwrap();
        assert_eq!(table.ids(), vec!["sub-01", "sub-02"]);
        assert_eq!(table.column("age").unwrap(), vec!["14", "n/a"]);
        assert!(table.column("sex").is_none());
    }

    #[test]
    fn bids_participant_id_pattern() {
        // BIDS v1.11.1 schema: ^sub-[0-9a-zA-Z+]+$
        assert!(is_participant_id("sub-017"));
        assert!(is_participant_id("sub-NSM001"));
        assert!(!is_participant_id("sub-"));
        assert!(!is_participant_id("017"));
        assert!(!is_participant_id("sub-01_ses-1"));
    }

    #[test]
    fn errors_name_file_line_and_fix() {
        let (_dir, path) = write("participant_id\tdiagnosis\nsub-01\tinsomnia\nsub-01\tcontrol\n");
        let message = read_participants(&path).unwrap_err().to_string();
        assert!(message.contains("participant sub-01 appears on lines 2 and 3"), "{message}");
        let (_dir, path) = write("participant_id\tdiagnosis\nsub-01\n");
        let message = read_participants(&path).unwrap_err().to_string();
        assert!(message.contains("line 2: 1 cell(s) where the header has 2 columns"), "{message}");
        let (_dir, path) = write("id\tdiagnosis\nsub-01\tx\n");
        let message = read_participants(&path).unwrap_err().to_string();
        assert!(message.contains("starts with a participant_id column"), "{message}");
        let (_dir, path) = write("participant_id,diagnosis\nsub-01,x\n");
        let message = read_participants(&path).unwrap_err().to_string();
        assert!(message.contains("must be tab-separated"), "{message}");
        let (_dir, path) = write("participant_id\tdiagnosis\n017\tx\n");
        let message = read_participants(&path).unwrap_err().to_string();
        assert!(message.contains("'017' does not match the BIDS pattern"), "{message}");
    }
}
