//! 3D NIfTI-1 seed maps (`.nii`, `.nii.gz`) read into f32 in file (Fortran) order.
//!
//! Any stored numeric type is converted to float with `scl_slope`/`scl_inter` applied as the
//! NIfTI-1 standard says (slope 0 means no scaling). NIfTI-2 headers are refused with a message.

use std::path::Path;

use nifti::{IntoNdArray, NiftiHeader, NiftiObject, ReaderOptions};

use super::ReadError;

/// Affines of two participants agree when every entry differs by at most this many mm
/// (float32 storage of `srow_*` in the header; common practice in neuroimaging I/O checks).
pub const AFFINE_TOLERANCE_MM: f64 = 1e-4;

/// One decoded volume.
#[derive(Debug)]
pub struct Volume {
    /// The header as read.
    pub header: NiftiHeader,
    /// Grid dimensions (i, j, k).
    pub dim: [usize; 3],
    /// Voxel-to-world affine, rows of a 4 x 4 matrix.
    pub affine: [[f64; 4]; 4],
    /// Values in file order, index i + nx * (j + ny * k).
    pub values: Vec<f32>,
}

fn invalid(path: &Path, participant: &str, problem: String) -> ReadError {
    ReadError::Invalid { path: path.to_path_buf(), participant: participant.to_string(), problem }
}

/// The voxel-to-world affine: sform if `sform_code` > 0, else qform if `qform_code` > 0, else
/// the voxel sizes on the diagonal (NIfTI-1 "method 1").
pub fn header_affine(header: &NiftiHeader) -> Result<[[f64; 4]; 4], String> {
    let matrix = if header.sform_code > 0 {
        header.sform_affine::<f64>()
    } else if header.qform_code > 0 {
        if header.pixdim[1..4].iter().any(|&size| size < 0.0) {
            return Err(
                "negative voxel size in pixdim with a qform; fix the header (for example with nibabel)"
                    .into(),
            );
        }
        if header.pixdim[0] != 1.0 && header.pixdim[0] != -1.0 && header.pixdim[0] != 0.0 {
            return Err(format!("qfac pixdim[0] = {} is not 1 or -1", header.pixdim[0]));
        }
        header.qform_affine::<f64>()
    } else {
        let mut affine = [[0.0; 4]; 4];
        for (axis, row) in affine.iter_mut().take(3).enumerate() {
            row[axis] = f64::from(header.pixdim[axis + 1]);
        }
        affine[3][3] = 1.0;
        return Ok(affine);
    };
    let mut affine = [[0.0; 4]; 4];
    for (row, target) in affine.iter_mut().enumerate() {
        for (col, value) in target.iter_mut().enumerate() {
            *value = matrix[(row, col)];
        }
    }
    Ok(affine)
}

/// Reads a 3D volume.
///
/// # Errors
/// Unreadable, truncated or corrupt file; NIfTI-2 or other format; more than three dimensions
/// (a 4D file with one volume is accepted); a header whose affine cannot be formed.
pub fn read_volume(path: &Path, participant: &str) -> Result<Volume, ReadError> {
    if !path.exists() {
        return Err(ReadError::Io {
            path: path.to_path_buf(),
            source: std::io::Error::from(std::io::ErrorKind::NotFound),
        });
    }
    // The NIfTI decoder is third-party code fed with user files: a malformed header must become
    // an error naming the file, never a crash.
    let outcome = std::panic::catch_unwind(|| -> Result<Volume, ReadError> {
        let object = ReaderOptions::new().read_file(path).map_err(|error| {
            invalid(path, participant, format!(
                "cannot read as NIfTI-1 ({error}); the file may be truncated, corrupt, NIfTI-2, or not a NIfTI image"
            ))
        })?;
        let header = object.header().clone();
        let dims: Vec<usize> =
            header.dim[1..=(header.dim[0].clamp(1, 7) as usize)].iter().map(|&d| d as usize).collect();
        let extra: usize = dims.iter().skip(3).product();
        if dims.len() < 3 || extra > 1 {
            return Err(invalid(path, participant, format!(
                "image of shape {}; expected one 3D seed map per participant (split 4D files into 3D volumes first)",
                dims.iter().map(usize::to_string).collect::<Vec<_>>().join("x")
            )));
        }
        let affine = header_affine(&header).map_err(|problem| invalid(path, participant, problem))?;
        let array = object.into_volume().into_ndarray::<f32>().map_err(|error| {
            invalid(
                path,
                participant,
                format!("cannot decode the voxel values ({error}); the file may be truncated"),
            )
        })?;
        let values: Vec<f32> = match array.as_slice_memory_order() {
            Some(slice) => slice.to_vec(),
            None => array.t().iter().copied().collect(),
        };
        let dim = [dims[0], dims[1], dims[2]];
        if values.len() != dim[0] * dim[1] * dim[2] {
            return Err(invalid(
                path,
                participant,
                format!(
                    "{} voxel values for a {}x{}x{} grid; the file is truncated",
                    values.len(),
                    dim[0],
                    dim[1],
                    dim[2]
                ),
            ));
        }
        Ok(Volume { header, dim, affine, values })
    });
    outcome.unwrap_or_else(|_| {
        Err(invalid(
            path,
            participant,
            "the NIfTI header is malformed and could not be decoded; check the file with a NIfTI viewer"
                .into(),
        ))
    })
}

/// True if two affines agree within [`AFFINE_TOLERANCE_MM`].
pub fn affines_match(a: &[[f64; 4]; 4], b: &[[f64; 4]; 4]) -> bool {
    a.iter().flatten().zip(b.iter().flatten()).all(|(x, y)| (x - y).abs() <= AFFINE_TOLERANCE_MM)
}

/// An affine in one line, for messages.
pub fn format_affine(affine: &[[f64; 4]; 4]) -> String {
    let rows: Vec<String> = affine[..3]
        .iter()
        .map(|row| row.iter().map(|v| format!("{v:.3}")).collect::<Vec<_>>().join(" "))
        .collect();
    format!("[{}]", rows.join("; "))
}
