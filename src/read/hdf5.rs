//! HDF5 datasets (`.h5`, `.hdf5`, and MATLAB v7.3 `.mat`, which is HDF5 behind a 512-byte user
//! block) read as f64. This module is the one place that knows the HDF5 crate.
//!
//! The crate is `hdf5-reader` (pure Rust, read-only; chunked layouts with deflate and shuffle),
//! chosen over `hdf5-pure` and over bindings to the C library (`hdf5-metno`, which would need
//! the system library at build and run time, breaking the README's set-up on a fresh machine).
//! Both pure-Rust readers read h5py-written chunked + gzip + shuffle datasets and a v7.3-style
//! file correctly; with every byte of such a file flipped and every truncation, `hdf5-reader`
//! returned an error each time, while `hdf5-pure` 0.47 attempted a 400 GB allocation and aborted
//! the process, which no error handling can catch.

use std::path::Path;

use hdf5_reader::{Datatype, Hdf5File};

use super::ReadError;

/// One dataset: its path, shape (HDF5 / numpy order) and values in row-major (C) order, with
/// the `MATLAB_class` attribute that MATLAB v7.3 files carry.
#[derive(Debug, Clone)]
pub struct Dataset {
    /// Path inside the file, without a leading slash.
    pub name: String,
    /// Shape, slowest axis first.
    pub shape: Vec<usize>,
    /// Values, row-major.
    pub values: Vec<f64>,
    /// The `MATLAB_class` attribute (`double`, `single`, `cell`...), if any.
    pub matlab_class: Option<String>,
}

fn invalid(path: &Path, participant: &str, problem: String) -> ReadError {
    ReadError::Invalid { path: path.to_path_buf(), participant: participant.to_string(), problem }
}

fn open(path: &Path, participant: &str) -> Result<Hdf5File, ReadError> {
    if let Err(source) = std::fs::metadata(path) {
        return Err(ReadError::Io { path: path.to_path_buf(), source });
    }
    Hdf5File::open(path).map_err(|error| {
        invalid(
            path,
            participant,
            format!("cannot read it as HDF5 ({error}); the file is truncated, corrupt, or not an HDF5 file"),
        )
    })
}

/// A dataset's description: path, shape and element type, for listings.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DatasetInfo {
    /// Path inside the file, without a leading slash.
    pub name: String,
    /// Shape, slowest axis first.
    pub shape: Vec<usize>,
    /// True for integer or floating-point elements.
    pub numeric: bool,
    /// The `MATLAB_class` attribute, if any.
    pub matlab_class: Option<String>,
}

impl DatasetInfo {
    /// "group/conn (5x6x6)", for messages.
    pub fn describe(&self) -> String {
        let shape: Vec<String> = self.shape.iter().map(usize::to_string).collect();
        let kind = match (&self.matlab_class, self.numeric) {
            (Some(class), _) => format!("{class} "),
            (None, true) => String::new(),
            (None, false) => "non-numeric ".into(),
        };
        format!("{} ({kind}{})", self.name, shape.join("x"))
    }
}

fn is_numeric(datatype: &Datatype) -> bool {
    matches!(datatype, Datatype::FixedPoint { .. } | Datatype::FloatingPoint { .. })
}

fn matlab_class(dataset: &hdf5_reader::Dataset) -> Option<String> {
    dataset.attribute("MATLAB_class").ok().and_then(|attribute| attribute.read_string().ok())
}

/// Every dataset of the file, depth first, at most `limit` groups deep (MATLAB v7.3 keeps
/// cell and struct contents under `#refs#`, which is skipped).
///
/// # Errors
/// The file cannot be opened or its groups cannot be walked.
pub fn list_datasets(path: &Path, participant: &str) -> Result<Vec<DatasetInfo>, ReadError> {
    let file = open(path, participant)?;
    let root = file
        .root_group()
        .map_err(|error| invalid(path, participant, format!("cannot read the root group ({error})")))?;
    let mut found = Vec::new();
    let mut pending = vec![(String::new(), root, 0usize)];
    while let Some((prefix, group, depth)) = pending.pop() {
        let (groups, datasets) = group.members().map_err(|error| {
            invalid(path, participant, format!("cannot list group '/{prefix}' ({error})"))
        })?;
        for dataset in datasets {
            found.push(DatasetInfo {
                name: format!("{prefix}{}", dataset.name()),
                shape: dataset.shape().iter().map(|&d| d as usize).collect(),
                numeric: is_numeric(dataset.dtype()),
                matlab_class: matlab_class(&dataset),
            });
        }
        if depth < MAX_GROUP_DEPTH {
            for child in groups {
                if child.name() != "#refs#" {
                    let name = format!("{prefix}{}/", child.name());
                    pending.push((name, child, depth + 1));
                }
            }
        }
    }
    found.sort_by(|a, b| a.name.cmp(&b.name));
    Ok(found)
}

/// How deep groups are walked when listing datasets (connectivity files nest shallowly; the
/// limit only bounds the walk of unusual files).
const MAX_GROUP_DEPTH: usize = 8;

/// Reads dataset `name` (a path such as `conn` or `/group/conn`), or the file's only numeric
/// dataset when `name` is None, converting any integer or float type to f64.
///
/// # Errors
/// The file cannot be opened; no such dataset (the message lists the file's datasets); no name
/// and not exactly one numeric dataset; a dataset of strings, compounds or references.
pub fn read_dataset(path: &Path, participant: &str, name: Option<&str>) -> Result<Dataset, ReadError> {
    let listing = || -> String {
        match list_datasets(path, participant) {
            Ok(all) if !all.is_empty() => {
                all.iter().map(DatasetInfo::describe).collect::<Vec<_>>().join(", ")
            }
            Ok(_) => "no datasets".into(),
            Err(_) => "datasets that cannot be listed".into(),
        }
    };
    let name = match name {
        Some(name) => name.trim_start_matches('/').to_string(),
        None => {
            let all = list_datasets(path, participant)?;
            let numeric: Vec<&DatasetInfo> = all.iter().filter(|d| d.numeric).collect();
            match numeric.as_slice() {
                [only] => only.name.clone(),
                _ => {
                    return Err(invalid(
                        path,
                        participant,
                        format!(
                            "{} numeric datasets ({}); choose one with --dataset PATH",
                            numeric.len(),
                            listing()
                        ),
                    ))
                }
            }
        }
    };
    let file = open(path, participant)?;
    let dataset = file.dataset(&name).map_err(|error| match list_datasets(path, participant) {
        Ok(_) => invalid(
            path,
            participant,
            format!("no dataset '{name}'; the file holds {}; give one of them with --dataset", listing()),
        ),
        Err(_) => invalid(
            path,
            participant,
            format!("cannot read dataset '{name}' ({error}); the file is truncated or corrupt: copy it again from its source"),
        ),
    })?;
    let shape: Vec<usize> = dataset.shape().iter().map(|&d| d as usize).collect();
    let class = matlab_class(&dataset);
    let unreadable = |error: hdf5_reader::error::Error| {
        invalid(
            path,
            participant,
            format!("cannot read dataset '{name}' ({error}); the file is truncated or corrupt"),
        )
    };
    macro_rules! read_as {
        ($type:ty) => {
            dataset.read_array::<$type>().map_err(unreadable)?.iter().map(|&v| v as f64).collect::<Vec<f64>>()
        };
    }
    let values = match dataset.dtype() {
        Datatype::FloatingPoint { size: 8, .. } => {
            dataset.read_array::<f64>().map_err(unreadable)?.into_iter().collect()
        }
        Datatype::FloatingPoint { size: 4, .. } => read_as!(f32),
        Datatype::FixedPoint { size: 1, signed: true, .. } => read_as!(i8),
        Datatype::FixedPoint { size: 1, signed: false, .. } => read_as!(u8),
        Datatype::FixedPoint { size: 2, signed: true, .. } => read_as!(i16),
        Datatype::FixedPoint { size: 2, signed: false, .. } => read_as!(u16),
        Datatype::FixedPoint { size: 4, signed: true, .. } => read_as!(i32),
        Datatype::FixedPoint { size: 4, signed: false, .. } => read_as!(u32),
        Datatype::FixedPoint { size: 8, signed: true, .. } => read_as!(i64),
        Datatype::FixedPoint { size: 8, signed: false, .. } => read_as!(u64),
        other => {
            let what = match &class {
                Some(class) => format!("a MATLAB {class} array"),
                None => format!("of element type {other:?}"),
            };
            return Err(invalid(
                path,
                participant,
                format!("dataset '{name}' is {what}; strata reads numeric arrays: save the matrix itself"),
            ));
        }
    };
    if shape.iter().try_fold(1usize, |product, &d| product.checked_mul(d)) != Some(values.len()) {
        return Err(invalid(
            path,
            participant,
            format!(
                "dataset '{name}' holds {} values for its shape {shape:?}; the file is corrupt",
                values.len()
            ),
        ));
    }
    if let Some(class) = &class {
        if matches!(class.as_str(), "cell" | "struct" | "char" | "function_handle") {
            return Err(invalid(
                path,
                participant,
                format!("dataset '{name}' is a MATLAB {class} array; strata reads numeric arrays: save the matrix itself"),
            ));
        }
    }
    Ok(Dataset { name, shape, values, matlab_class: class })
}
