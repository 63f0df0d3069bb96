//! CIFTI-2 parcellated connectivity (`.pconn.nii`): a NIfTI-2 header, the CIFTI XML extension
//! (code 32) naming the parcels, and an R x R matrix.
//!
//! The NIfTI-2 header and its extensions are parsed by [`super::nifti2`] (shared with NIfTI-2
//! seed maps). CIFTI-2 (CIFTI-2 specification, 2014): the matrix
//! dimensions are NIfTI `dim[5]` (rows) and `dim[6]` (columns), dimensions 1-4 of length 1;
//! the XML's `MatrixIndicesMap` of type `CIFTI_INDEX_TYPE_PARCELS` applying to dimension 0 lists
//! the row parcels in order (`Parcel Name="..."`). Values are stored with the row index varying
//! fastest (NIfTI order), so element (i, j) is at i + R * j, as nibabel reads it.

use std::path::Path;

use ndarray::Array2;

use super::ReadError;

/// NIfTI extension code of CIFTI XML (nifti1.h, `NIFTI_ECODE_CIFTI`).
const CIFTI_EXTENSION_CODE: i32 = 32;

/// NIfTI intent code of CIFTI parcellated connectivity (CIFTI-2 specification,
/// `NIFTI_INTENT_CONNECTIVITY_PARCELLATED`).
const PCONN_INTENT_CODE: i32 = 3003;

/// One participant's parcellated connectivity.
#[derive(Debug, Clone)]
pub struct Pconn {
    /// R x R values, `[row, column]`.
    pub matrix: Array2<f64>,
    /// The parcel names of the rows, in order.
    pub parcel_names: Vec<String>,
}

/// True for a `.pconn.nii` file name.
pub fn is_pconn(path: &Path) -> bool {
    path.to_string_lossy().to_ascii_lowercase().ends_with(".pconn.nii")
}

fn invalid(path: &Path, participant: &str, problem: String) -> ReadError {
    ReadError::Invalid { path: path.to_path_buf(), participant: participant.to_string(), problem }
}

fn f64_at(bytes: &[u8], at: usize, little: bool) -> f64 {
    let b: [u8; 8] = bytes[at..at + 8].try_into().expect("8 bytes");
    if little {
        f64::from_le_bytes(b)
    } else {
        f64::from_be_bytes(b)
    }
}

/// Parcel names of the rows (dimension 0) from the CIFTI XML.
fn parcel_names(xml: &str) -> Result<Vec<String>, String> {
    use quick_xml::events::Event;
    let mut reader = quick_xml::Reader::from_str(xml);
    let mut in_row_parcels = false;
    let mut names = Vec::new();
    loop {
        let event = reader.read_event().map_err(|error| format!("the CIFTI XML is malformed ({error})"))?;
        match event {
            Event::Start(element) | Event::Empty(element) => match element.name().as_ref() {
                "MatrixIndicesMap" => {
                    let attribute = |key: &str| -> Option<String> {
                        element.try_get_attribute(key).ok().flatten().and_then(|a| {
                            a.normalized_value(quick_xml::XmlVersion::Implicit1_0)
                                .ok()
                                .map(|v| v.into_owned())
                        })
                    };
                    let applies = attribute("AppliesToMatrixDimension").unwrap_or_default();
                    let kind = attribute("IndicesMapToDataType").unwrap_or_default();
                    in_row_parcels = kind == "CIFTI_INDEX_TYPE_PARCELS"
                        && applies.split(',').any(|dimension| dimension.trim() == "0");
                }
                "Parcel" if in_row_parcels => {
                    let name = element
                        .try_get_attribute("Name")
                        .ok()
                        .flatten()
                        .and_then(|a| {
                            a.normalized_value(quick_xml::XmlVersion::Implicit1_0)
                                .ok()
                                .map(|v| v.into_owned())
                        })
                        .ok_or("a Parcel element has no readable Name")?;
                    names.push(name);
                }
                _ => {}
            },
            Event::End(element) if element.name().as_ref() == "MatrixIndicesMap" => in_row_parcels = false,
            Event::Eof => break,
            _ => {}
        }
    }
    Ok(names)
}

/// Reads a CIFTI-2 `.pconn.nii`.
///
/// # Errors
/// Unreadable file; not NIfTI-2; no CIFTI extension; not parcels along the rows; a matrix that is
/// not R x R with R parcel names; an unsupported datatype; truncated data.
pub fn read_pconn(path: &Path, participant: &str) -> Result<Pconn, ReadError> {
    let bytes = std::fs::read(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
    let fail = |problem: String| invalid(path, participant, problem);
    if super::nifti2::byte_order(&bytes).is_none() {
        return Err(fail(if bytes.len() < 4 {
            format!(
                "{} bytes, shorter than a NIfTI-2 header; the file is truncated or not a CIFTI-2 file",
                bytes.len()
            )
        } else {
            "not a NIfTI-2 header (sizeof_hdr is not 540); a .pconn.nii is CIFTI-2, written by Connectome Workbench or nibabel".into()
        }));
    }
    let header = super::nifti2::parse(&bytes).map_err(&fail)?;
    let little = header.little_endian;
    let (datatype, dim, intent) = (header.datatype, header.dim, header.intent_code);
    let (slope, inter) = (header.scl_slope, header.scl_inter);
    if dim[0] != 6 || dim[1..5].iter().any(|&d| d != 1) || dim[5] < 1 || dim[6] < 1 {
        return Err(fail(format!(
            "NIfTI dim {:?} is not a CIFTI matrix (dim[0] = 6, dim[1..4] = 1, rows and columns in dim[5] and dim[6])",
            &dim[..7]
        )));
    }
    let (rows, columns) = (dim[5] as usize, dim[6] as usize);
    if intent != PCONN_INTENT_CODE {
        return Err(fail(format!(
            "NIfTI intent code {intent} is not parcellated connectivity ({PCONN_INTENT_CODE}); strata reads .pconn.nii, not dense or time-series CIFTI"
        )));
    }
    let data_start = header.data_offset(bytes.len()).map_err(&fail)?;
    let xml = header
        .extensions(&bytes)
        .map_err(&fail)?
        .into_iter()
        .find(|(code, _)| *code == CIFTI_EXTENSION_CODE)
        .map(|(_, data)| String::from_utf8_lossy(data).trim_end_matches('\0').to_string());
    let xml = xml.ok_or_else(|| {
        fail("no CIFTI XML extension (code 32); the file is NIfTI-2 but not CIFTI-2".into())
    })?;
    let parcel_names = parcel_names(&xml).map_err(&fail)?;
    if parcel_names.len() != rows {
        return Err(fail(format!(
            "the CIFTI XML names {} row parcels but the matrix has {rows} rows; a .pconn.nii needs parcels along the rows",
            parcel_names.len()
        )));
    }
    let size = match datatype {
        16 => 4,
        64 => 8,
        other => {
            return Err(fail(format!(
                "NIfTI datatype {other} is not supported for CIFTI matrices; strata reads float32 and float64"
            )))
        }
    };
    let count = rows.checked_mul(columns).ok_or_else(|| fail("matrix dimensions too large".into()))?;
    let end =
        count.checked_mul(size).and_then(|n| n.checked_add(data_start)).filter(|&end| end <= bytes.len());
    let end = end.ok_or_else(|| {
        fail(format!(
            "{} bytes of data for a {rows} x {columns} matrix; the file is truncated",
            bytes.len() - data_start
        ))
    })?;
    let data = &bytes[data_start..end];
    let (slope, inter) = if slope != 0.0 && slope.is_finite() {
        (slope, if inter.is_finite() { inter } else { 0.0 })
    } else {
        (1.0, 0.0)
    };
    let value = |index: usize| -> f64 {
        let raw = if size == 4 {
            let b: [u8; 4] = data[index * 4..index * 4 + 4].try_into().expect("4 bytes");
            f64::from(if little { f32::from_le_bytes(b) } else { f32::from_be_bytes(b) })
        } else {
            f64_at(data, index * 8, little)
        };
        raw * slope + inter
    };
    let matrix = Array2::from_shape_fn((rows, columns), |(i, j)| value(i + rows * j));
    Ok(Pconn { matrix, parcel_names })
}
