//! MATLAB level-5 `.mat` files (MATLAB's default save format since version 5, with the
//! zlib-compressed elements of version 7): numeric arrays read by variable name into f64 in
//! MATLAB's column-major order.
//!
//! The format is MathWorks' "MAT-File Format" (level 5): a 128-byte header (116 bytes of text, an
//! 8-byte subsystem offset, a 2-byte version 0x0100 and the 2-byte endian indicator "IM" or "MI"),
//! then tagged data elements. A tag is 8 bytes (a u32 type, a u32 byte count; or, in the small
//! element format, the count in the upper and the type in the lower 16 bits of the first word and
//! up to 4 bytes of data in the second). Top-level elements are `miMATRIX` (14) or `miCOMPRESSED`
//! (15, a zlib stream holding one `miMATRIX`). An `miMATRIX` holds the array flags (class in the
//! low byte; complex, global and logical bits), the dimensions (`miINT32`), the name (`miINT8`)
//! and the real part, whose stored type may be narrower than the class (MATLAB saves a double
//! array of small integers as `miUINT8`, for example). Uncompressed elements are padded to 8
//! bytes. Cell, struct, object, character and sparse arrays are listed in messages but not read.
//!
//! MATLAB v7.3 files are HDF5 files with a 512-byte user block; they are recognised by their
//! header and read through [`super::hdf5`]: HDF5 stores MATLAB's column-major array with its
//! dimensions reversed, so the MATLAB dimensions are the HDF5 shape reversed and the values keep
//! their order. Plain HDF5 files (`.h5`, `.hdf5`) are read the same way, their row-major (numpy)
//! order turned into this module's column-major one, so every container format ends as a
//! [`MatArray`].
//!
//! A small reader of its own rather than the `matfile` crate (0.5.0, October 2024): that crate
//! prints to standard output on element types it does not know, reads the MATLAB int32 class as
//! uint32, decodes every variable of a file eagerly, and its ndarray feature pulls a second
//! ndarray version into the tree.

use std::io::Read;
use std::path::Path;

use super::ReadError;

/// Length of the level-5 file header in bytes (MAT-File Format, "Level 5 MAT-File Format").
const HEADER_BYTES: usize = 128;

/// Data element types (MAT-File Format, table "MAT-File Data Types").
const MI_INT8: u32 = 1;
const MI_UINT8: u32 = 2;
const MI_INT16: u32 = 3;
const MI_UINT16: u32 = 4;
const MI_INT32: u32 = 5;
const MI_UINT32: u32 = 6;
const MI_SINGLE: u32 = 7;
const MI_DOUBLE: u32 = 9;
const MI_INT64: u32 = 12;
const MI_UINT64: u32 = 13;
const MI_MATRIX: u32 = 14;
const MI_COMPRESSED: u32 = 15;

/// Array flag bit of complex arrays (MAT-File Format, "Array Flags Subelement").
const COMPLEX_FLAG: u32 = 0x0800;

/// How many decompressed bytes of a compressed variable are read to learn its name, class and
/// dimensions before deciding whether to decompress the rest (tag, flags, a dimensions array of
/// up to several hundred axes and a name of up to 63 characters fit easily).
const PEEK_BYTES: u64 = 4096;

/// What a variable of a `.mat` file is, without its values.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MatVariable {
    /// The variable's name.
    pub name: String,
    /// MATLAB class name (`double`, `single`, `int16`, `cell`, ...).
    pub class: &'static str,
    /// Dimensions, MATLAB order (rows, columns, pages...).
    pub dims: Vec<usize>,
    /// The array came from a row-major file (`.h5`, `.hdf5`: numpy's convention), so a stack
    /// whose three dimensions are equal holds its participants along the first axis.
    pub numpy_order: bool,
}

impl MatVariable {
    /// True for real numeric or logical arrays, the ones strata can read.
    pub fn is_numeric(&self) -> bool {
        !matches!(
            self.class,
            "cell" | "struct" | "object" | "char" | "sparse" | "function" | "opaque" | "unknown"
        )
    }

    /// "name (double 100x100)", for messages.
    pub fn describe(&self) -> String {
        let dims: Vec<String> = self.dims.iter().map(usize::to_string).collect();
        format!("{} ({} {})", self.name, self.class, dims.join("x"))
    }
}

/// One numeric array: dimensions in MATLAB order and values in column-major (MATLAB) order,
/// element (i, j, k) at i + rows * (j + columns * k).
#[derive(Debug, Clone)]
pub struct MatArray {
    /// What it is.
    pub variable: MatVariable,
    /// Values, column-major.
    pub values: Vec<f64>,
}

fn class_name(class: u32) -> &'static str {
    match class {
        1 => "cell",
        2 => "struct",
        3 => "object",
        4 => "char",
        5 => "sparse",
        6 => "double",
        7 => "single",
        8 => "int8",
        9 => "uint8",
        10 => "int16",
        11 => "uint16",
        12 => "int32",
        13 => "uint32",
        14 => "int64",
        15 => "uint64",
        16 => "function",
        17 => "opaque",
        _ => "unknown",
    }
}

/// A parse failure, later given the file and participant.
type Problem = String;

/// Byte order of the file.
#[derive(Clone, Copy)]
struct Order {
    little: bool,
}

impl Order {
    fn u32(self, bytes: &[u8]) -> u32 {
        let b = [bytes[0], bytes[1], bytes[2], bytes[3]];
        if self.little {
            u32::from_le_bytes(b)
        } else {
            u32::from_be_bytes(b)
        }
    }
}

/// One tagged element: its type, its data and the offset just after it (padding included).
struct Element<'a> {
    kind: u32,
    data: &'a [u8],
    next: usize,
}

/// Reads the element tag at `at` in `bytes`. `pad` says whether the element is padded to 8 bytes
/// (every element but a top-level compressed one).
fn element(bytes: &[u8], at: usize, order: Order, pad: bool) -> Result<Element<'_>, Problem> {
    let truncated =
        || "the file ends inside a data element; it is truncated or corrupt: save it again".to_string();
    let tag = bytes.get(at..at + 8).ok_or_else(truncated)?;
    let first = order.u32(&tag[..4]);
    if first >> 16 != 0 {
        // Small data element: count in the upper 16 bits, type in the lower, data in the 4 bytes after.
        let count = (first >> 16) as usize;
        if count > 4 {
            return Err(format!(
                "a small data element claims {count} bytes (at most 4); the file is corrupt"
            ));
        }
        return Ok(Element { kind: first & 0xffff, data: &tag[4..4 + count], next: at + 8 });
    }
    let count = order.u32(&tag[4..]) as usize;
    let start = at + 8;
    let end = start.checked_add(count).filter(|&end| end <= bytes.len()).ok_or_else(truncated)?;
    let next = if pad { start + count.div_ceil(8) * 8 } else { end };
    Ok(Element { kind: first, data: &bytes[start..end], next })
}

/// Name, class, dimensions and the offset of the real part inside an `miMATRIX` element's data.
fn matrix_header(data: &[u8], order: Order) -> Result<(MatVariable, bool, usize), Problem> {
    if data.is_empty() {
        // An empty array as saved by some writers: no subelements at all.
        return Ok((
            MatVariable { name: String::new(), class: "double", dims: vec![0, 0], numpy_order: false },
            false,
            0,
        ));
    }
    let flags = element(data, 0, order, true)?;
    if flags.kind != MI_UINT32 || flags.data.len() < 4 {
        return Err("an array's flags are missing; the file is corrupt or not a MAT-file".into());
    }
    let word = order.u32(flags.data);
    let class = class_name(word & 0xff);
    let complex = word & COMPLEX_FLAG != 0;
    let dims_element = element(data, flags.next, order, true)?;
    if dims_element.kind != MI_INT32 || dims_element.data.len() % 4 != 0 {
        return Err("an array's dimensions are missing; the file is corrupt or not a MAT-file".into());
    }
    let mut dims = Vec::with_capacity(dims_element.data.len() / 4);
    for chunk in dims_element.data.chunks_exact(4) {
        let value = order.u32(chunk) as i32;
        if value < 0 {
            return Err(format!("an array has a negative dimension ({value}); the file is corrupt"));
        }
        dims.push(value as usize);
    }
    let name_element = element(data, dims_element.next, order, true)?;
    if name_element.kind != MI_INT8 && name_element.kind != MI_UINT8 {
        return Err("an array's name is missing; the file is corrupt or not a MAT-file".into());
    }
    let name = String::from_utf8_lossy(name_element.data).trim_end_matches('\0').to_string();
    Ok((MatVariable { name, class, dims, numpy_order: false }, complex, name_element.next))
}

/// Converts a numeric subelement to f64 in `out` (length checked by the caller).
fn decode_numbers(kind: u32, data: &[u8], order: Order, out: &mut Vec<f64>) -> Result<(), Problem> {
    macro_rules! convert {
        ($type:ty, $size:expr) => {{
            for chunk in data.chunks_exact($size) {
                let bytes: [u8; $size] = chunk.try_into().expect("chunk of the type's size");
                let value =
                    if order.little { <$type>::from_le_bytes(bytes) } else { <$type>::from_be_bytes(bytes) };
                out.push(value as f64);
            }
        }};
    }
    match kind {
        MI_INT8 => convert!(i8, 1),
        MI_UINT8 => convert!(u8, 1),
        MI_INT16 => convert!(i16, 2),
        MI_UINT16 => convert!(u16, 2),
        MI_INT32 => convert!(i32, 4),
        MI_UINT32 => convert!(u32, 4),
        MI_SINGLE => convert!(f32, 4),
        MI_DOUBLE => convert!(f64, 8),
        MI_INT64 => convert!(i64, 8),
        MI_UINT64 => convert!(u64, 8),
        other => {
            return Err(format!(
                "numeric data of element type {other} is not a number type; the file is corrupt"
            ))
        }
    }
    Ok(())
}

/// The byte size of one value of a numeric element type.
fn type_size(kind: u32) -> Option<usize> {
    match kind {
        MI_INT8 | MI_UINT8 => Some(1),
        MI_INT16 | MI_UINT16 => Some(2),
        MI_INT32 | MI_UINT32 | MI_SINGLE => Some(4),
        MI_DOUBLE | MI_INT64 | MI_UINT64 => Some(8),
        _ => None,
    }
}

/// Reads the values of an `miMATRIX` element's data.
fn matrix_values(data: &[u8], order: Order) -> Result<MatArray, Problem> {
    let (variable, complex, at) = matrix_header(data, order)?;
    if !variable.is_numeric() {
        return Err(format!(
            "variable {} is a {} array; strata reads numeric arrays: save the matrix itself (for example save(FILE, 'conn'))",
            variable.name, variable.class
        ));
    }
    if complex {
        return Err(format!("variable {} is complex; connectivity values must be real", variable.name));
    }
    let count =
        variable.dims.iter().try_fold(1usize, |product, &d| product.checked_mul(d)).ok_or_else(|| {
            format!("variable {}: dimensions too large; the file is corrupt", variable.name)
        })?;
    let mut values = Vec::new();
    if count > 0 {
        let real = element(data, at, order, true)?;
        let size = type_size(real.kind).ok_or_else(|| {
            format!("variable {}: its values are stored as element type {}, not a number type; the file is corrupt", variable.name, real.kind)
        })?;
        if Some(real.data.len()) != count.checked_mul(size) {
            return Err(format!(
                "variable {}: {} bytes of values for {} elements of {size} bytes; the file is corrupt",
                variable.name,
                real.data.len(),
                count
            ));
        }
        values.reserve_exact(count);
        decode_numbers(real.kind, real.data, order, &mut values)?;
    }
    Ok(MatArray { variable, values })
}

/// Decompresses a zlib stream, at most `limit` bytes of output.
fn inflate(data: &[u8], limit: Option<u64>) -> Result<Vec<u8>, Problem> {
    let mut out = Vec::new();
    let decoder = flate2::read::ZlibDecoder::new(data);
    let result = match limit {
        Some(limit) => decoder.take(limit).read_to_end(&mut out),
        None => {
            let mut decoder = decoder;
            decoder.read_to_end(&mut out)
        }
    };
    match result {
        Ok(_) => Ok(out),
        // A prefix may end inside the stream; what was decoded is still usable.
        Err(_) if limit.is_some() && !out.is_empty() => Ok(out),
        Err(error) => Err(format!(
            "a compressed variable cannot be decompressed ({error}); the file is truncated or corrupt"
        )),
    }
}

/// True for a MATLAB v7.3 file: an HDF5 file whose 512-byte user block begins with MATLAB's
/// header text.
pub fn is_v73(bytes: &[u8]) -> bool {
    let hdf5 = |at: usize| bytes.get(at..at + 8) == Some(HDF5_SIGNATURE);
    hdf5(0)
        || hdf5(512)
        || bytes.get(..HEADER_BYTES).is_some_and(|head| head.windows(11).any(|w| w == b"MATLAB 7.3 "))
}

/// The HDF5 format signature (HDF5 File Format Specification, "Format Signature").
const HDF5_SIGNATURE: &[u8] = b"\x89HDF\r\n\x1a\n";

fn byte_order(bytes: &[u8]) -> Result<Order, Problem> {
    if bytes.len() < HEADER_BYTES {
        return Err(format!(
            "{} bytes, shorter than the 128-byte MAT-file header; the file is truncated or not a MAT-file",
            bytes.len()
        ));
    }
    match &bytes[126..128] {
        b"IM" => Ok(Order { little: true }),
        b"MI" => Ok(Order { little: false }),
        _ if bytes[..4].contains(&0) => Err(
            "not a level-5 MAT-file (MATLAB 4 or another format); save it again from MATLAB with save(FILE, NAME) or from Python with scipy.io.savemat".into(),
        ),
        _ => Err("not a level-5 MAT-file (no endian indicator at bytes 126-127); save it with MATLAB's save or scipy.io.savemat".into()),
    }
}

/// Walks the top-level variables, calling `visit` with each variable's description and a way to
/// read its values; stops when `visit` returns Some.
fn walk<T>(
    bytes: &[u8],
    mut visit: impl FnMut(&MatVariable, &dyn Fn() -> Result<MatArray, Problem>) -> Result<Option<T>, Problem>,
) -> Result<Option<T>, Problem> {
    let order = byte_order(bytes)?;
    let mut at = HEADER_BYTES;
    while at + 8 <= bytes.len() {
        let top = element(bytes, at, order, true)?;
        match top.kind {
            MI_MATRIX => {
                let (variable, _, _) = matrix_header(top.data, order)?;
                let data = top.data;
                if let Some(found) = visit(&variable, &|| matrix_values(data, order))? {
                    return Ok(Some(found));
                }
                at = top.next;
            }
            MI_COMPRESSED => {
                // No padding after a compressed element (what MATLAB and scipy write).
                let top = element(bytes, at, order, false)?;
                let peek = inflate(top.data, Some(PEEK_BYTES))?;
                let inner = element(&peek, 0, order, true).or_else(|_| {
                    // A matrix larger than the peek: only its tag and header are needed here.
                    if peek.len() >= 8 {
                        Ok(Element { kind: order.u32(&peek[..4]), data: &peek[8..], next: peek.len() })
                    } else {
                        Err("a compressed variable is empty; the file is corrupt".to_string())
                    }
                })?;
                if inner.kind == MI_MATRIX {
                    let (variable, _, _) = matrix_header(inner.data, order)?;
                    let compressed = top.data;
                    let read = || -> Result<MatArray, Problem> {
                        let whole = inflate(compressed, None)?;
                        let inner = element(&whole, 0, order, true)?;
                        matrix_values(inner.data, order)
                    };
                    if let Some(found) = visit(&variable, &read)? {
                        return Ok(Some(found));
                    }
                }
                at = top.next;
            }
            // Other top-level elements (none are written by MATLAB or scipy) are skipped.
            _ => at = top.next,
        }
    }
    Ok(None)
}

fn invalid(path: &Path, participant: &str, problem: String) -> ReadError {
    ReadError::Invalid { path: path.to_path_buf(), participant: participant.to_string(), problem }
}

fn read_file(path: &Path) -> Result<Vec<u8>, ReadError> {
    std::fs::read(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })
}

/// True for `.h5` / `.hdf5` file names.
pub fn is_hdf5_name(path: &Path) -> bool {
    let name = path.to_string_lossy().to_ascii_lowercase();
    name.ends_with(".h5") || name.ends_with(".hdf5")
}

/// How a container file is read.
enum Container {
    Level5(Vec<u8>),
    /// HDF5; true when the array order is MATLAB's (v7.3), false for numpy's (`.h5`).
    Hdf5 {
        matlab: bool,
    },
}

fn container(path: &Path) -> Result<Container, ReadError> {
    if is_hdf5_name(path) {
        return Ok(Container::Hdf5 { matlab: false });
    }
    let bytes = read_file(path)?;
    Ok(if is_v73(&bytes) { Container::Hdf5 { matlab: true } } else { Container::Level5(bytes) })
}

fn class_of(name: Option<&str>) -> &'static str {
    const CLASSES: [&str; 17] = [
        "cell",
        "struct",
        "object",
        "char",
        "sparse",
        "double",
        "single",
        "int8",
        "uint8",
        "int16",
        "uint16",
        "int32",
        "uint32",
        "int64",
        "uint64",
        "logical",
        "function_handle",
    ];
    match name {
        None => "double",
        Some(name) => CLASSES.iter().find(|&&class| class == name).copied().unwrap_or("unknown"),
    }
}

fn hdf5_variable(info: &super::hdf5::DatasetInfo, matlab: bool) -> MatVariable {
    let class = if info.numeric || info.matlab_class.is_some() {
        class_of(info.matlab_class.as_deref())
    } else {
        "unknown"
    };
    let mut dims = info.shape.clone();
    if matlab {
        dims.reverse();
    }
    MatVariable { name: info.name.clone(), class, dims, numpy_order: !matlab }
}

/// A dataset as a column-major [`MatArray`]: MATLAB v7.3 arrays keep their values (HDF5 holds
/// them with the dimensions reversed); numpy-order arrays are reordered.
fn hdf5_array(dataset: super::hdf5::Dataset, matlab: bool) -> MatArray {
    let info = super::hdf5::DatasetInfo {
        name: dataset.name.clone(),
        shape: dataset.shape.clone(),
        numeric: true,
        matlab_class: dataset.matlab_class.clone(),
    };
    let variable = hdf5_variable(&info, matlab);
    let values =
        if matlab { dataset.values } else { row_major_to_column_major(&dataset.shape, &dataset.values) };
    MatArray { variable, values }
}

/// Reorders row-major values of `shape` into column-major order.
fn row_major_to_column_major(shape: &[usize], values: &[f64]) -> Vec<f64> {
    let axes = shape.len();
    if axes < 2 {
        return values.to_vec();
    }
    let mut strides = vec![1usize; axes];
    for axis in 1..axes {
        strides[axis] = strides[axis - 1] * shape[axis - 1];
    }
    let mut out = vec![0.0; values.len()];
    let mut index = vec![0usize; axes];
    for &value in values {
        let at: usize = index.iter().zip(&strides).map(|(i, s)| i * s).sum();
        out[at] = value;
        for axis in (0..axes).rev() {
            index[axis] += 1;
            if index[axis] < shape[axis] {
                break;
            }
            index[axis] = 0;
        }
    }
    out
}

/// The variables of a level-5 `.mat` file, without their values.
///
/// # Errors
/// The file cannot be read, is not a level-5 MAT-file (v7.3 files are named as such), or is
/// truncated or corrupt.
pub fn list_variables(path: &Path, participant: &str) -> Result<Vec<MatVariable>, ReadError> {
    let bytes = match container(path)? {
        Container::Level5(bytes) => bytes,
        Container::Hdf5 { matlab } => {
            let all = super::hdf5::list_datasets(path, participant)?;
            return Ok(all.iter().map(|info| hdf5_variable(info, matlab)).collect());
        }
    };
    let mut found = Vec::new();
    walk::<()>(&bytes, |variable, _| {
        found.push(variable.clone());
        Ok(None)
    })
    .map_err(|problem| invalid(path, participant, problem))?;
    Ok(found)
}

/// Reads one numeric variable: `name`, or the file's only numeric variable when `name` is None.
///
/// # Errors
/// As [`list_variables`]; no variable of that name (the message lists the file's variables); no
/// name given and not exactly one numeric variable; a cell, struct, character, sparse or complex
/// array.
pub fn read_variable(path: &Path, participant: &str, name: Option<&str>) -> Result<MatArray, ReadError> {
    let bytes = match container(path)? {
        Container::Level5(bytes) => bytes,
        Container::Hdf5 { matlab } => {
            return Ok(hdf5_array(super::hdf5::read_dataset(path, participant, name)?, matlab));
        }
    };
    let fail = |problem: Problem| invalid(path, participant, problem);
    let target = match name {
        Some(name) => name.to_string(),
        None => only_numeric(&bytes).map_err(fail)?.name,
    };
    let mut variables = Vec::new();
    let found = walk(&bytes, |variable, read| {
        variables.push(variable.clone());
        if variable.name == target {
            return read().map(Some);
        }
        Ok(None)
    })
    .map_err(fail)?;
    found.ok_or_else(|| {
        fail(format!(
            "no variable named '{target}'; the file holds {}; give one of them with --variable",
            list(&variables)
        ))
    })
}

/// The file's only numeric variable.
fn only_numeric(bytes: &[u8]) -> Result<MatVariable, Problem> {
    let mut variables = Vec::new();
    walk::<()>(bytes, |variable, _| {
        variables.push(variable.clone());
        Ok(None)
    })?;
    let numeric: Vec<&MatVariable> = variables.iter().filter(|v| v.is_numeric()).collect();
    match numeric.as_slice() {
        [only] => Ok((*only).clone()),
        _ => Err(format!(
            "{} numeric variables ({}); choose one with --variable NAME",
            numeric.len(),
            list(&variables)
        )),
    }
}

/// The description of variable `name` (or of the only numeric variable), without its values.
///
/// # Errors
/// As [`read_variable`].
pub fn find_variable(path: &Path, participant: &str, name: Option<&str>) -> Result<MatVariable, ReadError> {
    let bytes = match container(path)? {
        Container::Level5(bytes) => bytes,
        Container::Hdf5 { .. } => {
            // HDF5 reads only the chosen dataset, so reading it is the simplest check.
            return Ok(read_variable(path, participant, name)?.variable);
        }
    };
    let fail = |problem: Problem| invalid(path, participant, problem);
    let Some(name) = name else { return only_numeric(&bytes).map_err(fail) };
    let mut variables = Vec::new();
    let found = walk(&bytes, |variable, _| {
        variables.push(variable.clone());
        Ok((variable.name == name).then(|| variable.clone()))
    })
    .map_err(fail)?;
    found.ok_or_else(|| {
        fail(format!(
            "no variable named '{name}'; the file holds {}; give one of them with --variable",
            list(&variables)
        ))
    })
}

fn list(variables: &[MatVariable]) -> String {
    if variables.is_empty() {
        return "no variables".into();
    }
    variables.iter().map(MatVariable::describe).collect::<Vec<_>>().join(", ")
}

/// One R x R matrix of a 2D variable as a row-major ndarray (MATLAB's column-major storage
/// turned round: element (i, j) is `values[i + rows * j]`).
///
/// # Errors
/// The variable is not two-dimensional.
pub fn matrix_of(
    array: &MatArray,
    path: &Path,
    participant: &str,
) -> Result<ndarray::Array2<f64>, ReadError> {
    let dims = &array.variable.dims;
    if dims.len() != 2 {
        return Err(invalid(
            path,
            participant,
            format!(
                "variable {} is not a 2D matrix; expected one R x R matrix per participant (or a single R x R x N stack for the whole cohort)",
                array.variable.describe()
            ),
        ));
    }
    let (rows, columns) = (dims[0], dims[1]);
    Ok(ndarray::Array2::from_shape_fn((rows, columns), |(i, j)| array.values[i + rows * j]))
}

/// Which axis of a 3D variable holds the participants: MATLAB's R x R x N (`conn(:, :, k)`,
/// the last axis) when the first two dimensions are equal, else N x R x R (the first axis, as
/// `scipy.io.savemat` writes a numpy stack) when the last two are.
///
/// For arrays from row-major files (`.h5`) the first axis wins when all three are equal.
pub fn stack_axis(variable: &MatVariable) -> Option<usize> {
    match variable.dims.as_slice() {
        [_, b, c] if b == c && variable.numpy_order => Some(0),
        [a, b, _] if a == b => Some(2),
        [_, b, c] if b == c => Some(0),
        _ => None,
    }
}

/// Participant `index` of a 3D stack (see [`stack_axis`]) as a row-major R x R matrix.
pub fn stack_matrix(array: &MatArray, axis: usize, index: usize) -> ndarray::Array2<f64> {
    let dims = &array.variable.dims;
    let (d0, d1) = (dims[0], dims[1]);
    // Column-major: element (a, b, c) is at a + d0 * (b + d1 * c).
    match axis {
        2 => ndarray::Array2::from_shape_fn((d0, d1), |(i, j)| array.values[i + d0 * (j + d1 * index)]),
        _ => {
            let r = d1;
            ndarray::Array2::from_shape_fn((r, r), |(i, j)| array.values[index + d0 * (i + d1 * j)])
        }
    }
}
