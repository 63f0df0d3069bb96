//! CIFTI-2 parcellated connectivity (`.pconn.nii`): a NIfTI-2 header, the CIFTI XML extension
//! (code 32) naming the parcels, and an R x R matrix.
//!
//! NIfTI-2 header (nifti2.h): 540 bytes, `sizeof_hdr` = 540, magic `n+2\0\r\n\x1a\n` at byte 4,
//! `datatype` (i16) at 12, `dim` (8 x i64) at 16, `vox_offset` (i64) at 168, `scl_slope` and
//! `scl_inter` (f64) at 176 and 184, `intent_code` (i32) at 504; then 4 bytes whose first is
//! non-zero when extensions follow, each extension an i32 size (a multiple of 16, header
//! included), an i32 code and its data. CIFTI-2 (CIFTI-2 specification, 2014): the matrix
//! dimensions are NIfTI `dim[5]` (rows) and `dim[6]` (columns), dimensions 1-4 of length 1;
//! the XML's `MatrixIndicesMap` of type `CIFTI_INDEX_TYPE_PARCELS` applying to dimension 0 lists
//! the row parcels in order (`Parcel Name="..."`). Values are stored with the row index varying
//! fastest (NIfTI order), so element (i, j) is at i + R * j, as nibabel reads it.

use std::path::Path;

use ndarray::Array2;

use super::ReadError;

/// `sizeof_hdr` of a NIfTI-2 header, also its length (nifti2.h).
const NIFTI2_HEADER_BYTES: usize = 540;

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

fn i16_at(bytes: &[u8], at: usize, little: bool) -> i16 {
    let b = [bytes[at], bytes[at + 1]];
    if little {
        i16::from_le_bytes(b)
    } else {
        i16::from_be_bytes(b)
    }
}

fn i32_at(bytes: &[u8], at: usize, little: bool) -> i32 {
    let b: [u8; 4] = bytes[at..at + 4].try_into().expect("4 bytes");
    if little {
        i32::from_le_bytes(b)
    } else {
        i32::from_be_bytes(b)
    }
}

fn i64_at(bytes: &[u8], at: usize, little: bool) -> i64 {
    let b: [u8; 8] = bytes[at..at + 8].try_into().expect("8 bytes");
    if little {
        i64::from_le_bytes(b)
    } else {
        i64::from_be_bytes(b)
    }
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
    let too_short = |length: usize| {
        fail(format!(
            "{length} bytes, shorter than a NIfTI-2 header; the file is truncated or not a CIFTI-2 file"
        ))
    };
    if bytes.len() < 4 {
        return Err(too_short(bytes.len()));
    }
    let little = match (
        i32::from_le_bytes(bytes[..4].try_into().expect("4 bytes")),
        i32::from_be_bytes(bytes[..4].try_into().expect("4 bytes")),
    ) {
        (540, _) => true,
        (_, 540) => false,
        _ => {
            return Err(fail(
                "not a NIfTI-2 header (sizeof_hdr is not 540); a .pconn.nii is CIFTI-2, written by Connectome Workbench or nibabel".into(),
            ))
        }
    };
    if bytes.len() < NIFTI2_HEADER_BYTES + 4 {
        return Err(too_short(bytes.len()));
    }
    if &bytes[4..8] != b"n+2\0" {
        return Err(fail("the NIfTI-2 magic is not 'n+2' (single-file); the file is corrupt".into()));
    }
    let datatype = i16_at(&bytes, 12, little);
    let dim: Vec<i64> = (0..8).map(|axis| i64_at(&bytes, 16 + 8 * axis, little)).collect();
    let vox_offset = i64_at(&bytes, 168, little);
    let (slope, inter) = (f64_at(&bytes, 176, little), f64_at(&bytes, 184, little));
    let intent = i32_at(&bytes, 504, little);
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
    // Extensions: after the 4-byte extension flag, up to vox_offset.
    let data_start =
        usize::try_from(vox_offset).ok().filter(|&at| at >= NIFTI2_HEADER_BYTES + 4 && at <= bytes.len());
    let data_start = data_start
        .ok_or_else(|| fail(format!("vox_offset {vox_offset} lies outside the file; the file is corrupt")))?;
    let mut xml = None;
    if bytes[NIFTI2_HEADER_BYTES] != 0 {
        let mut at = NIFTI2_HEADER_BYTES + 4;
        while at + 8 <= data_start {
            let size = i32_at(&bytes, at, little);
            let code = i32_at(&bytes, at + 4, little);
            let size =
                usize::try_from(size).ok().filter(|&s| s >= 8 && at + s <= data_start).ok_or_else(|| {
                    fail(format!("a NIfTI extension of size {size} runs past the data; the file is corrupt"))
                })?;
            if code == CIFTI_EXTENSION_CODE {
                let text = String::from_utf8_lossy(&bytes[at + 8..at + size]);
                xml = Some(text.trim_end_matches('\0').to_string());
            }
            at += size;
        }
    }
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
