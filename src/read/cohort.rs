//! Input files found and matched to participants-table rows.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::nifti::STACK_PARTICIPANT;
use super::table::ParticipantsTable;
use super::{mat, matrix, nifti, ReadError};
use crate::error::list_ids;

/// How input files are found and matched to participants.
#[derive(Debug, Clone, Default)]
pub struct InputOptions {
    /// Glob patterns (or plain paths) of the input files.
    pub patterns: Vec<String>,
    /// Match files by this participants-table column (its value must occur in the file name as a
    /// whole token) instead of the `sub-<label>` in the file name.
    pub match_column: Option<String>,
    /// The variable to read from MATLAB `.mat` files (None: the file's only numeric variable).
    pub variable: Option<String>,
}

/// What kind of data the inputs hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum InputKind {
    /// 3D NIfTI seed maps, one per participant, or one merged 4D file (a volume per participant).
    SeedMaps,
    /// R x R region matrices, one per participant or one stacked N x R x R array.
    RegionMatrices,
    /// A precomputed N x N participant similarity matrix: no features, similarity only.
    Similarity,
    /// Participants x measures from a table (scores): standardised, no Fisher z.
    Measures,
}

/// Where one participant's values are stored.
#[derive(Debug, Clone)]
pub struct InputSource {
    /// The file.
    pub path: PathBuf,
    /// For a stacked N x R x R `.npy`, the index along the first axis; for a merged 4D NIfTI,
    /// the volume along the 4th dimension.
    pub stack_index: Option<usize>,
}

/// The participants to analyse and where their values are.
#[derive(Debug, Clone)]
pub struct Cohort {
    /// The participants table restricted to the analysed participants, in analysis order.
    pub table: ParticipantsTable,
    /// Participant ids, in analysis order (the table's order).
    pub participant_ids: Vec<String>,
    /// Each participant's input.
    pub sources: Vec<InputSource>,
    /// What the inputs are.
    pub kind: InputKind,
    /// The variable read from MATLAB `.mat` inputs (None: each file's only numeric variable).
    pub variable: Option<String>,
    /// The values of a measures run (participants x measures), already read.
    pub measures: Option<super::measures::MeasureValues>,
}

/// The input kind of a file, from its name.
pub fn kind_of(path: &Path) -> Option<InputKind> {
    let name = path.file_name()?.to_string_lossy().to_ascii_lowercase();
    if name.ends_with(".pconn.nii") {
        Some(InputKind::RegionMatrices)
    } else if name.ends_with(".nii") || name.ends_with(".nii.gz") {
        Some(InputKind::SeedMaps)
    } else if [".npy", ".csv", ".tsv", ".txt", ".mat", ".h5", ".hdf5"]
        .iter()
        .any(|extension| name.ends_with(extension))
    {
        Some(InputKind::RegionMatrices)
    } else {
        None
    }
}

/// The `sub-<label>` entity of a file name, as `sub-<label>`.
pub fn participant_label(path: &Path) -> Option<String> {
    let name = path.file_name()?.to_string_lossy().into_owned();
    let start = if name.starts_with("sub-") { Some(0) } else { name.find("_sub-").map(|index| index + 1) }?;
    let label: String =
        name[start + 4..].chars().take_while(|c| c.is_ascii_alphanumeric() || *c == '+').collect();
    (!label.is_empty()).then(|| format!("sub-{label}"))
}

/// True if `token` occurs in the file name delimited by non-alphanumeric characters.
fn name_has_token(path: &Path, token: &str) -> bool {
    let Some(name) = path.file_name().map(|name| name.to_string_lossy().into_owned()) else { return false };
    name.match_indices(token).any(|(start, _)| {
        let before = name[..start].chars().next_back();
        let after = name[start + token.len()..].chars().next();
        !before.is_some_and(|c| c.is_ascii_alphanumeric())
            && !after.is_some_and(|c| c.is_ascii_alphanumeric())
    })
}

/// Expands glob patterns (or plain paths) into the sorted, de-duplicated list of files.
///
/// # Errors
/// [`ReadError::Pattern`] for an invalid pattern, a pattern that matches no file, or a folder.
pub fn expand_patterns(patterns: &[String]) -> Result<Vec<PathBuf>, ReadError> {
    let files = expand(patterns)?;
    if files.is_empty() {
        return Err(ReadError::Pattern {
            pattern: patterns.join(","),
            problem: "no input pattern given".into(),
        });
    }
    Ok(files)
}

fn expand(patterns: &[String]) -> Result<Vec<PathBuf>, ReadError> {
    let mut files = Vec::new();
    for pattern in patterns {
        let pattern = pattern.trim();
        if pattern.is_empty() {
            continue;
        }
        let entries = glob::glob(pattern).map_err(|error| ReadError::Pattern {
            pattern: pattern.to_string(),
            problem: format!("not a valid glob pattern ({error})"),
        })?;
        let mut matched: Vec<PathBuf> =
            entries.filter_map(Result::ok).filter(|path| path.is_file()).collect();
        if matched.is_empty() {
            let path = Path::new(pattern);
            let problem = if path.exists() {
                "is a folder; give a pattern of files inside it, for example 'DIR/sub-*_seedmap.nii.gz'"
                    .into()
            } else {
                "matched no file; check the path, and quote the pattern so the shell does not expand it"
                    .to_string()
            };
            return Err(ReadError::Pattern { pattern: pattern.to_string(), problem });
        }
        matched.sort();
        files.extend(matched);
    }
    files.sort();
    files.dedup();
    Ok(files)
}

/// Finds the input files and matches them to the participants table.
///
/// Every file must belong to exactly one table participant and every table participant must
/// have exactly one file; a single `.npy` holding an N x R x R stack is matched to the N table
/// rows in order, and so is a single NIfTI whose 4th dimension holds one volume per participant.
///
/// # Errors
/// A pattern matches nothing; files of mixed or unknown kinds; a file with no participant label
/// or no table row; two files for one participant; table participants without a file; a stack
/// or merged 4D file whose N differs from the table; fewer than two participants.
pub fn discover_inputs(options: &InputOptions, table: &ParticipantsTable) -> Result<Cohort, ReadError> {
    let files = expand(&options.patterns)?;
    let first = files.first().ok_or_else(|| ReadError::Pattern {
        pattern: options.patterns.join(","),
        problem: "no input pattern given".into(),
    })?;
    let mut kind = None;
    for file in &files {
        let this = kind_of(file).ok_or_else(|| ReadError::Format {
            path: file.clone(),
            problem: "unknown input format; strata reads .nii/.nii.gz seed maps and .npy/.csv/.tsv/.txt/.mat/.h5/.hdf5/.pconn.nii region matrices".into(),
        })?;
        match kind {
            None => kind = Some(this),
            Some(previous) if previous != this => {
                return Err(ReadError::Format {
                    path: file.clone(),
                    problem: format!(
                        "is a {} but {} is a {}; one run takes one kind of input",
                        describe(this),
                        first.display(),
                        describe(previous)
                    ),
                })
            }
            _ => {}
        }
    }
    let kind = kind.unwrap_or(InputKind::RegionMatrices);

    // One stacked array (N x R x R .npy) or merged 4D NIfTI for the whole cohort.
    let stacked = match (files.len(), kind) {
        (1, InputKind::RegionMatrices) if matrix::npy_dimensions(first)? == Some(3) => Some((
            matrix::npy_shape(first)?[0],
            "stack of",
            "matrices",
            "a stacked N x R x R array must hold one matrix",
        )),
        (1, InputKind::RegionMatrices) if matrix::is_mat(first) => {
            let variable = mat::find_variable(first, STACK_PARTICIPANT, options.variable.as_deref())?;
            match variable.dims.len() {
                2 => None,
                3 => {
                    let axis = mat::stack_axis(&variable).ok_or_else(|| ReadError::Format {
                        path: first.clone(),
                        problem: format!(
                            "variable {} is neither R x R x N (participants along the third dimension) nor N x R x R; a stack holds one square matrix per participant",
                            variable.describe()
                        ),
                    })?;
                    Some((
                        variable.dims[axis],
                        "stack of",
                        "matrices",
                        "a stacked R x R x N variable must hold one matrix",
                    ))
                }
                _ => {
                    return Err(ReadError::Format {
                        path: first.clone(),
                        problem: format!(
                            "variable {} has {} dimensions; expected an R x R matrix per participant or one R x R x N stack",
                            variable.describe(),
                            variable.dims.len()
                        ),
                    })
                }
            }
        }
        (1, InputKind::SeedMaps) => match nifti::frame_count(first)? {
            1 => None,
            frames => Some((
                frames,
                "4D image with",
                "volumes along the 4th dimension",
                "a merged 4D NIfTI must hold one 3D volume",
            )),
        },
        _ => None,
    };
    if let Some((count, before, after, rule)) = stacked {
        if count != table.row_count() {
            return Err(ReadError::Format {
                path: first.clone(),
                problem: format!(
                    "{before} {count} {after} but {} has {} participants; {rule} per table row, in table order",
                    table.path().display(),
                    table.row_count()
                ),
            });
        }
        if table.row_count() < 2 {
            return Err(ReadError::TooFewParticipants {
                path: table.path().to_path_buf(),
                count: table.row_count(),
            });
        }
        let sources =
            (0..count).map(|index| InputSource { path: first.clone(), stack_index: Some(index) }).collect();
        return Ok(Cohort {
            table: table.clone(),
            participant_ids: table.ids().iter().map(|id| id.to_string()).collect(),
            sources,
            kind,
            variable: options.variable.clone(),
            measures: None,
        });
    }

    let ids = table.ids();
    let row_of_id: HashMap<&str, usize> = ids.iter().enumerate().map(|(row, &id)| (id, row)).collect();
    let match_values = match &options.match_column {
        Some(column) => Some(table.column(column).ok_or_else(|| ReadError::Table {
            path: table.path().to_path_buf(),
            line: 1,
            problem: format!(
                "--match-column: no column '{column}'; the table has: {}",
                table.columns().join(", ")
            ),
        })?),
        None => None,
    };
    let mut file_of_row: Vec<Option<PathBuf>> = vec![None; table.row_count()];
    for file in &files {
        let row = match &match_values {
            None => {
                let label =
                    participant_label(file).ok_or_else(|| ReadError::NoLabel { path: file.clone() })?;
                *row_of_id.get(label.as_str()).ok_or_else(|| ReadError::UnknownParticipant {
                    path: file.clone(),
                    participant: label.clone(),
                    table: table.path().to_path_buf(),
                })?
            }
            Some(values) => {
                let rows: Vec<usize> = values
                    .iter()
                    .enumerate()
                    .filter(|(_, value)| !value.is_empty() && **value != "n/a" && name_has_token(file, value))
                    .map(|(row, _)| row)
                    .collect();
                match rows.as_slice() {
                    [row] => *row,
                    [] => {
                        return Err(ReadError::UnknownParticipant {
                            path: file.clone(),
                            participant: format!("(no value of column '{}' in the name)", options.match_column.as_deref().unwrap_or("")),
                            table: table.path().to_path_buf(),
                        })
                    }
                    several => {
                        return Err(ReadError::Format {
                            path: file.clone(),
                            problem: format!(
                                "its name matches {} rows of column '{}' ({}); make the values unique within file names",
                                several.len(),
                                options.match_column.as_deref().unwrap_or(""),
                                several.iter().map(|&row| ids[row]).collect::<Vec<_>>().join(", ")
                            ),
                        })
                    }
                }
            }
        };
        if let Some(previous) = &file_of_row[row] {
            return Err(ReadError::DuplicateInput {
                participant: ids[row].to_string(),
                first: previous.clone(),
                second: file.clone(),
            });
        }
        file_of_row[row] = Some(file.clone());
    }
    let missing: Vec<String> = file_of_row
        .iter()
        .zip(&ids)
        .filter(|(file, _)| file.is_none())
        .map(|(_, id)| id.to_string())
        .collect();
    if !missing.is_empty() {
        return Err(ReadError::MissingInputs {
            path: table.path().to_path_buf(),
            count: missing.len(),
            listed: list_ids(&missing),
        });
    }
    if table.row_count() < 2 {
        return Err(ReadError::TooFewParticipants {
            path: table.path().to_path_buf(),
            count: table.row_count(),
        });
    }
    Ok(Cohort {
        table: table.clone(),
        participant_ids: ids.iter().map(|id| id.to_string()).collect(),
        sources: file_of_row
            .into_iter()
            .flatten()
            .map(|path| InputSource { path, stack_index: None })
            .collect(),
        kind,
        variable: options.variable.clone(),
        measures: None,
    })
}

fn describe(kind: InputKind) -> &'static str {
    match kind {
        InputKind::SeedMaps => "NIfTI seed map",
        InputKind::RegionMatrices => "region matrix",
        InputKind::Similarity => "similarity matrix",
        InputKind::Measures => "measure table",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_from_bids_names() {
        assert_eq!(participant_label(Path::new("maps/sub-017_seedmap.nii.gz")).as_deref(), Some("sub-017"));
        assert_eq!(participant_label(Path::new("x/task-rest_sub-A2.npy")).as_deref(), Some("sub-A2"));
        assert_eq!(participant_label(Path::new("sub-03.csv")).as_deref(), Some("sub-03"));
        assert_eq!(participant_label(Path::new("mysub-03.csv")), None);
        assert_eq!(participant_label(Path::new("seed.nii")), None);
    }

    #[test]
    fn tokens_are_whole() {
        assert!(name_has_token(Path::new("P12_conn.npy"), "P12"));
        assert!(!name_has_token(Path::new("P123_conn.npy"), "P12"));
    }
}
