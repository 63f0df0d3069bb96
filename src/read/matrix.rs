//! Region-matrix readers: `.npy` (R x R, or an N x R x R stack) and delimited text
//! (`.csv`, `.tsv`, `.txt`: comma, tab or white space; no header).

use std::fs::File;
use std::io::BufReader;
use std::path::Path;

use ndarray::{Array2, Array3, Ix2};
use ndarray_npy::{ReadNpyExt, ReadableElement};

use super::ReadError;

fn invalid(path: &Path, participant: &str, problem: String) -> ReadError {
    ReadError::Invalid { path: path.to_path_buf(), participant: participant.to_string(), problem }
}

/// The shape recorded in a `.npy` header, without reading the data.
pub fn npy_shape(path: &Path) -> Result<Vec<usize>, ReadError> {
    let bytes = read_header_bytes(path)?;
    parse_npy_shape(&bytes).ok_or_else(|| ReadError::Format {
        path: path.to_path_buf(),
        problem: "not a valid .npy file (no readable header); save matrices with numpy.save".into(),
    })
}

/// The number of dimensions of a `.npy` file, or None for other files.
pub fn npy_dimensions(path: &Path) -> Result<Option<usize>, ReadError> {
    if !path.to_string_lossy().to_ascii_lowercase().ends_with(".npy") {
        return Ok(None);
    }
    Ok(Some(npy_shape(path)?.len()))
}

fn read_header_bytes(path: &Path) -> Result<Vec<u8>, ReadError> {
    use std::io::Read;
    let mut file = File::open(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
    let mut buffer = vec![0u8; 4096];
    let mut filled = 0;
    while filled < buffer.len() {
        let read = file
            .read(&mut buffer[filled..])
            .map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
        if read == 0 {
            break;
        }
        filled += read;
    }
    buffer.truncate(filled);
    Ok(buffer)
}

/// Parses `'shape': (a, b, c)` from a `.npy` header (format: numpy NEP 1, `.npy` version 1-3).
fn parse_npy_shape(bytes: &[u8]) -> Option<Vec<usize>> {
    if bytes.len() < 10 || &bytes[..6] != b"\x93NUMPY" {
        return None;
    }
    let text = String::from_utf8_lossy(bytes);
    let start = text.find("'shape':")? + "'shape':".len();
    let open = text[start..].find('(')? + start + 1;
    let close = text[open..].find(')')? + open;
    text[open..close]
        .split(',')
        .map(str::trim)
        .filter(|part| !part.is_empty())
        .map(|part| part.parse().ok())
        .collect()
}

fn read_npy<T: ReadableElement, D: ndarray::Dimension>(
    path: &Path,
) -> Result<ndarray::Array<T, D>, ndarray_npy::ReadNpyError> {
    let file = File::open(path).map_err(ndarray_npy::ReadNpyError::Io)?;
    ndarray::Array::<T, D>::read_npy(BufReader::new(file))
}

/// True for a container file read by variable or dataset name: MATLAB `.mat`, HDF5 `.h5`/`.hdf5`.
pub fn is_mat(path: &Path) -> bool {
    path.to_string_lossy().to_ascii_lowercase().ends_with(".mat") || super::mat::is_hdf5_name(path)
}

/// Reads one R x R matrix as f64 (from float32 or float64 `.npy`, or delimited text).
///
/// # Errors
/// The file cannot be read, holds another shape or element type, or a cell is not a number.
pub fn read_matrix(path: &Path, participant: &str) -> Result<Array2<f64>, ReadError> {
    read_matrix_in(path, participant, None)
}

/// As [`read_matrix`], and MATLAB `.mat` files (variable `variable`, or the file's only numeric
/// variable).
///
/// # Errors
/// As [`read_matrix`] and [`super::mat::read_variable`].
pub fn read_matrix_in(
    path: &Path,
    participant: &str,
    variable: Option<&str>,
) -> Result<Array2<f64>, ReadError> {
    let name = path.to_string_lossy().to_ascii_lowercase();
    if super::cifti::is_pconn(path) {
        Ok(super::cifti::read_pconn(path, participant)?.matrix)
    } else if is_mat(path) {
        let array = super::mat::read_variable(path, participant, variable)?;
        super::mat::matrix_of(&array, path, participant)
    } else if name.ends_with(".npy") {
        let shape = npy_shape(path)?;
        if shape.len() != 2 {
            return Err(invalid(path, participant, format!(
                "array of shape {shape:?}; expected one R x R matrix per participant (or a single N x R x R stack for the whole cohort)"
            )));
        }
        match read_npy::<f64, Ix2>(path) {
            Ok(matrix) => Ok(matrix),
            Err(_) => read_npy::<f32, Ix2>(path).map(|matrix| matrix.mapv(f64::from)).map_err(|error| {
                invalid(
                    path,
                    participant,
                    format!("cannot read the array ({error}); save it as float32 or float64 with numpy.save"),
                )
            }),
        }
    } else {
        read_text_matrix(path, participant)
    }
}

/// Reads a whole stack as N x R x R f64: an N x R x R `.npy`, or a 3D `.mat` variable (R x R x N
/// or N x R x R, see [`super::mat::stack_axis`]).
///
/// # Errors
/// The file cannot be read or does not hold a stack of square matrices.
pub fn read_stack_in(path: &Path, variable: Option<&str>) -> Result<Array3<f64>, ReadError> {
    use super::mat;
    if !is_mat(path) {
        return read_stack(path);
    }
    let participant = super::nifti::STACK_PARTICIPANT;
    let array = mat::read_variable(path, participant, variable)?;
    let axis = mat::stack_axis(&array.variable).ok_or_else(|| ReadError::Format {
        path: path.to_path_buf(),
        problem: format!("variable {} is not a stack of square matrices", array.variable.describe()),
    })?;
    let count = array.variable.dims[axis];
    let regions = if axis == 2 { array.variable.dims[0] } else { array.variable.dims[1] };
    let mut stack = Array3::zeros((count, regions, regions));
    for index in 0..count {
        stack.index_axis_mut(ndarray::Axis(0), index).assign(&mat::stack_matrix(&array, axis, index));
    }
    Ok(stack)
}

/// Reads an N x R x R `.npy` stack as f64.
pub fn read_stack(path: &Path) -> Result<Array3<f64>, ReadError> {
    match read_npy::<f64, ndarray::Ix3>(path) {
        Ok(stack) => Ok(stack),
        Err(_) => read_npy::<f32, ndarray::Ix3>(path).map(|stack| stack.mapv(f64::from)).map_err(|error| {
            ReadError::Format {
                path: path.to_path_buf(),
                problem: format!(
                    "cannot read the stacked array ({error}); save it as float32 or float64 with numpy.save"
                ),
            }
        }),
    }
}

fn read_text_matrix(path: &Path, participant: &str) -> Result<Array2<f64>, ReadError> {
    let text =
        std::fs::read_to_string(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
    let mut rows: Vec<Vec<f64>> = Vec::new();
    for (line_index, line) in text.lines().enumerate() {
        let line = line.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let cells: Vec<&str> = if line.contains(',') {
            line.split(',').map(str::trim).collect()
        } else {
            line.split_whitespace().collect()
        };
        let values = cells
            .iter()
            .enumerate()
            .map(|(column, cell)| {
                let cell = cell.trim_matches('"');
                match cell.to_ascii_lowercase().as_str() {
                    "nan" | "n/a" => Ok(f64::NAN),
                    "inf" | "+inf" => Ok(f64::INFINITY),
                    "-inf" => Ok(f64::NEG_INFINITY),
                    _ => cell.parse::<f64>().map_err(|_| {
                        invalid(path, participant, format!(
                            "line {}, column {}: '{cell}' is not a number; matrix text files hold numbers only, without a header row",
                            line_index + 1,
                            column + 1
                        ))
                    }),
                }
            })
            .collect::<Result<Vec<f64>, ReadError>>()?;
        rows.push(values);
    }
    let size = rows.len();
    if size == 0 {
        return Err(invalid(path, participant, "the file holds no numbers; expected an R x R matrix".into()));
    }
    for (row_index, row) in rows.iter().enumerate() {
        if row.len() != size {
            return Err(invalid(
                path,
                participant,
                format!(
                    "row {} has {} values but the file has {size} rows; expected a square R x R matrix",
                    row_index + 1,
                    row.len()
                ),
            ));
        }
    }
    Ok(Array2::from_shape_vec((size, size), rows.into_iter().flatten().collect())
        .expect("square by construction"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn npy_header_shapes() {
        let header = b"\x93NUMPY\x01\x00v\x00{'descr': '<f4', 'fortran_order': False, 'shape': (3, 4, 4), }";
        assert_eq!(parse_npy_shape(header), Some(vec![3, 4, 4]));
        let header = b"\x93NUMPY\x01\x00v\x00{'descr': '<f4', 'fortran_order': False, 'shape': (5,), }";
        assert_eq!(parse_npy_shape(header), Some(vec![5]));
        assert_eq!(parse_npy_shape(b"not numpy"), None);
    }

    #[test]
    fn text_matrices_in_three_spellings() {
        let dir = tempfile::tempdir().unwrap();
        for (name, text) in
            [("a.csv", "1,0.5\n0.5,1\n"), ("b.tsv", "1\t0.5\n0.5\t1\n"), ("c.txt", "1 0.5\n 0.5   1\n")]
        {
            let path = dir.path().join(name);
            std::fs::write(&path, text).unwrap();
            let matrix = read_matrix(&path, "sub-01").unwrap();
            assert_eq!(matrix.dim(), (2, 2));
            assert!((matrix[[0, 1]] - 0.5).abs() < 1e-12);
        }
        let path = dir.path().join("bad.csv");
        std::fs::write(&path, "1,0.5,0.2\n0.5,1,0.1\n").unwrap();
        let message = read_matrix(&path, "sub-01").unwrap_err().to_string();
        assert!(
            message.contains("participant sub-01: row 1 has 3 values but the file has 2 rows"),
            "{message}"
        );
    }
}
