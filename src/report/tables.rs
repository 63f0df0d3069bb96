//! Tab-separated tables with a header, written as BIDS tables are (`n/a` for missing values).

use std::fmt::Write as _;
use std::path::Path;

use crate::maps::WriteError;

/// A table being built row by row.
#[derive(Debug, Clone, Default)]
pub struct Table {
    columns: Vec<String>,
    rows: Vec<Vec<String>>,
}

/// Formats a float for a table: `n/a` when not finite, else up to 6 significant decimals.
pub fn format_number(value: f64) -> String {
    if !value.is_finite() {
        return "n/a".into();
    }
    if value == 0.0 {
        return "0".into();
    }
    let magnitude = value.abs();
    if (1e-4..1e6).contains(&magnitude) {
        let text = format!("{value:.6}");
        let trimmed = text.trim_end_matches('0').trim_end_matches('.');
        trimmed.to_string()
    } else {
        format!("{value:.6e}")
    }
}

impl Table {
    /// A table with these column names.
    pub fn new<S: Into<String>>(columns: impl IntoIterator<Item = S>) -> Self {
        Table { columns: columns.into_iter().map(Into::into).collect(), rows: Vec::new() }
    }

    /// Appends a row (must have one cell per column).
    pub fn push(&mut self, row: Vec<String>) {
        debug_assert_eq!(row.len(), self.columns.len(), "row width differs from the header");
        self.rows.push(row);
    }

    /// The rows so far.
    pub fn rows(&self) -> &[Vec<String>] {
        &self.rows
    }

    /// The table as TSV text.
    pub fn to_tsv(&self) -> String {
        let mut text = String::new();
        let clean = |cell: &str| cell.replace(['\t', '\n', '\r'], " ");
        let _ = writeln!(text, "{}", self.columns.iter().map(|c| clean(c)).collect::<Vec<_>>().join("\t"));
        for row in &self.rows {
            let _ = writeln!(text, "{}", row.iter().map(|c| clean(c)).collect::<Vec<_>>().join("\t"));
        }
        text
    }

    /// Writes the table to `path`.
    pub fn write(&self, path: &Path) -> Result<(), WriteError> {
        std::fs::write(path, self.to_tsv())
            .map_err(|source| WriteError::Io { path: path.to_path_buf(), source })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_and_missing_values() {
        assert_eq!(format_number(0.5), "0.5");
        assert_eq!(format_number(f64::NAN), "n/a");
        assert_eq!(format_number(1.0 / 3.0), "0.333333");
        assert_eq!(format_number(1.5e-7), "1.500000e-7");
        let mut table = Table::new(["a", "b"]);
        table.push(vec!["x\ty".into(), "1".into()]);
        assert_eq!(table.to_tsv(), "a\tb\nx y\t1\n");
    }
}
