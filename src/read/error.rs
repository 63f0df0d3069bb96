//! Errors of the read stage: each names the file, and the participant where there is one.

use std::path::PathBuf;

/// A participants table or input file is missing, unreadable or invalid.
#[derive(Debug, thiserror::Error)]
pub enum ReadError {
    /// An I/O failure on a path.
    #[error("{path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// A table is malformed.
    #[error("{path}: line {line}: {problem}")]
    Table {
        /// The table.
        path: PathBuf,
        /// 1-based line number.
        line: usize,
        /// What is wrong and what to do.
        problem: String,
    },
    /// A participant id occurs twice in the participants table.
    #[error("{path}: participant {participant} appears on lines {first_line} and {second_line}; BIDS allows one row per participant: merge or remove the duplicate")]
    DuplicateParticipant {
        /// The table.
        path: PathBuf,
        /// The id.
        participant: String,
        /// Line of the first occurrence.
        first_line: usize,
        /// Line of the second occurrence.
        second_line: usize,
    },
    /// A glob pattern is invalid or matched nothing.
    #[error("--inputs '{pattern}': {problem}")]
    Pattern {
        /// The pattern as given.
        pattern: String,
        /// What is wrong and what to do.
        problem: String,
    },
    /// Table participants without an input file.
    #[error("{path}: {count} participant(s) in the table have no input file: {listed}; add their files to --inputs or remove their rows from the table")]
    MissingInputs {
        /// The table.
        path: PathBuf,
        /// How many.
        count: usize,
        /// Up to ten ids.
        listed: String,
    },
    /// An input file whose participant is not in the table.
    #[error("{path}: participant {participant} has no row in {table}; add a row for it or leave the file out of --inputs")]
    UnknownParticipant {
        /// The file.
        path: PathBuf,
        /// The label found in its name.
        participant: String,
        /// The table.
        table: PathBuf,
    },
    /// An input file whose name carries no participant label.
    #[error("{path}: no participant label in the file name; name files with a sub-<label> entity (sub-017_seedmap.nii.gz) or pass --match-column COLUMN")]
    NoLabel {
        /// The file.
        path: PathBuf,
    },
    /// Two files for one participant.
    #[error("participant {participant}: two input files, {first} and {second}; keep one per participant")]
    DuplicateInput {
        /// The participant.
        participant: String,
        /// The first file.
        first: PathBuf,
        /// The second file.
        second: PathBuf,
    },
    /// Input files of different kinds in one run.
    #[error("{path}: {problem}")]
    Format {
        /// The file.
        path: PathBuf,
        /// What is wrong and what to do.
        problem: String,
    },
    /// A participant's file holds values that cannot be used.
    #[error("{path}: participant {participant}: {problem}")]
    Invalid {
        /// The file.
        path: PathBuf,
        /// The participant.
        participant: String,
        /// What was found, what was expected and what to do.
        problem: String,
    },
    /// Fewer than two participants.
    #[error("{path}: {count} participant(s) matched to input files; subgrouping needs at least 2 (in practice dozens)")]
    TooFewParticipants {
        /// The table.
        path: PathBuf,
        /// How many.
        count: usize,
    },
}
