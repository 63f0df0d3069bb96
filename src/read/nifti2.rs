//! NIfTI-2 headers: the 540-byte header of nifti2.h, shared by single-file seed maps
//! ([`super::nifti`]) and CIFTI-2 parcellated connectivity ([`super::cifti`]).
//!
//! Layout (nifti2.h, byte offsets): `sizeof_hdr` (i32, 540) at 0, magic (8 bytes,
//! `n+2\0\r\n\x1a\n` for a single file) at 4, `datatype` and `bitpix` (i16) at 12 and 14, `dim`
//! (8 x i64) at 16, `intent_p1..3` (f64) at 80, `pixdim` (8 x f64) at 104, `vox_offset` (i64) at
//! 168, `scl_slope`, `scl_inter`, `cal_max`, `cal_min` (f64) at 176-200, `descrip` (80 bytes) at
//! 240, `qform_code`, `sform_code` (i32) at 344 and 348, `quatern_b/c/d`, `qoffset_x/y/z` (f64)
//! at 352-392, `srow_x/y/z` (4 x f64 each) at 400, 432 and 464, `xyzt_units` (i32) at 500,
//! `intent_code` (i32) at 504, `intent_name` (16 bytes) at 508; then 4 bytes whose first is
//! non-zero when extensions follow, each an i32 size (header included), an i32 code and data.
//! Byte order: the one in which `sizeof_hdr` reads 540.

use nifti::NiftiHeader;

/// `sizeof_hdr` of a NIfTI-2 header, also its length in bytes (nifti2.h).
pub const HEADER_BYTES: usize = 540;

/// The first four bytes of the magic of a single-file NIfTI-2 image (nifti2.h).
const MAGIC_SINGLE_FILE: &[u8; 4] = b"n+2\0";

/// `vox_offset` of a NIfTI-1 single file without extensions: 348 header bytes and the 4-byte
/// extension flag (nifti1.h).
const NIFTI1_VOX_OFFSET: f32 = 352.0;

/// A parsed NIfTI-2 header (the fields strata uses).
#[derive(Debug, Clone, PartialEq)]
pub struct Nifti2Header {
    /// The file's byte order.
    pub little_endian: bool,
    /// NIfTI datatype code.
    pub datatype: i16,
    /// Bits per voxel.
    pub bitpix: i16,
    /// `dim[0]` (rank) and the sizes.
    pub dim: [i64; 8],
    /// `intent_p1..3`.
    pub intent_p: [f64; 3],
    /// `pixdim[0]` (qfac) and the voxel sizes.
    pub pixdim: [f64; 8],
    /// Byte offset of the voxel data.
    pub vox_offset: i64,
    /// Scaling slope (0: none).
    pub scl_slope: f64,
    /// Scaling intercept.
    pub scl_inter: f64,
    /// Display range.
    pub cal_max: f64,
    /// Display range.
    pub cal_min: f64,
    /// Description (80 bytes).
    pub descrip: Vec<u8>,
    /// qform code.
    pub qform_code: i32,
    /// sform code.
    pub sform_code: i32,
    /// Quaternion b, c, d.
    pub quatern: [f64; 3],
    /// qform offsets x, y, z.
    pub qoffset: [f64; 3],
    /// sform rows x, y, z.
    pub srow: [[f64; 4]; 3],
    /// Units.
    pub xyzt_units: i32,
    /// Intent code.
    pub intent_code: i32,
    /// Intent name (16 bytes).
    pub intent_name: [u8; 16],
}

/// The byte order of a NIfTI-2 header (true: little-endian), or None when the first four bytes
/// are not `sizeof_hdr` = 540 in either order.
pub fn byte_order(bytes: &[u8]) -> Option<bool> {
    let first: [u8; 4] = bytes.get(..4)?.try_into().ok()?;
    if i32::from_le_bytes(first) == HEADER_BYTES as i32 {
        Some(true)
    } else if i32::from_be_bytes(first) == HEADER_BYTES as i32 {
        Some(false)
    } else {
        None
    }
}

struct Fields<'a> {
    bytes: &'a [u8],
    little: bool,
}

impl Fields<'_> {
    fn array<const N: usize>(&self, at: usize) -> [u8; N] {
        let mut b: [u8; N] = self.bytes[at..at + N].try_into().expect("within the header");
        if !self.little {
            b.reverse();
        }
        b
    }
    fn i16(&self, at: usize) -> i16 {
        i16::from_le_bytes(self.array(at))
    }
    fn i32(&self, at: usize) -> i32 {
        i32::from_le_bytes(self.array(at))
    }
    fn i64(&self, at: usize) -> i64 {
        i64::from_le_bytes(self.array(at))
    }
    fn f64(&self, at: usize) -> f64 {
        f64::from_le_bytes(self.array(at))
    }
}

/// Parses the header at the start of `bytes`.
///
/// # Errors
/// A message (for the caller to attach to the file) when `sizeof_hdr` is not 540, the bytes are
/// shorter than the header, or the magic is not that of a single file (`n+2`).
pub fn parse(bytes: &[u8]) -> Result<Nifti2Header, String> {
    let little = byte_order(bytes).ok_or("not a NIfTI-2 header (sizeof_hdr is not 540)")?;
    if bytes.len() < HEADER_BYTES + 4 {
        return Err(format!("{} bytes, shorter than a NIfTI-2 header; the file is truncated", bytes.len()));
    }
    if &bytes[4..8] != MAGIC_SINGLE_FILE {
        return Err("the NIfTI-2 magic is not 'n+2' (a single .nii file); the file is corrupt, or a header of a .hdr/.img pair".into());
    }
    let f = Fields { bytes, little };
    let row = |at: usize| [f.f64(at), f.f64(at + 8), f.f64(at + 16), f.f64(at + 24)];
    Ok(Nifti2Header {
        little_endian: little,
        datatype: f.i16(12),
        bitpix: f.i16(14),
        dim: std::array::from_fn(|axis| f.i64(16 + 8 * axis)),
        intent_p: std::array::from_fn(|index| f.f64(80 + 8 * index)),
        pixdim: std::array::from_fn(|axis| f.f64(104 + 8 * axis)),
        vox_offset: f.i64(168),
        scl_slope: f.f64(176),
        scl_inter: f.f64(184),
        cal_max: f.f64(192),
        cal_min: f.f64(200),
        descrip: bytes[240..320].to_vec(),
        qform_code: f.i32(344),
        sform_code: f.i32(348),
        quatern: [f.f64(352), f.f64(360), f.f64(368)],
        qoffset: [f.f64(376), f.f64(384), f.f64(392)],
        srow: [row(400), row(432), row(464)],
        xyzt_units: f.i32(500),
        intent_code: f.i32(504),
        intent_name: bytes[508..524].try_into().expect("16 bytes"),
    })
}

impl Nifti2Header {
    /// The header's extensions as (code, data), between the header and `vox_offset`.
    ///
    /// # Errors
    /// A message when `vox_offset` lies outside `bytes` or an extension runs past it.
    pub fn extensions<'a>(&self, bytes: &'a [u8]) -> Result<Vec<(i32, &'a [u8])>, String> {
        let data_start = self.data_offset(bytes.len())?;
        let f = Fields { bytes, little: self.little_endian };
        let mut found = Vec::new();
        if bytes.len() <= HEADER_BYTES || bytes[HEADER_BYTES] == 0 {
            return Ok(found);
        }
        let mut at = HEADER_BYTES + 4;
        while at + 8 <= data_start {
            let size = f.i32(at);
            let code = f.i32(at + 4);
            let size =
                usize::try_from(size).ok().filter(|&s| s >= 8 && at + s <= data_start).ok_or_else(|| {
                    format!("a NIfTI extension of size {size} runs past the data; the file is corrupt")
                })?;
            found.push((code, &bytes[at + 8..at + size]));
            at += size;
        }
        Ok(found)
    }

    /// The byte offset of the voxel data, checked against the file length.
    ///
    /// # Errors
    /// A message when `vox_offset` is before the end of the header or beyond the file.
    pub fn data_offset(&self, file_length: usize) -> Result<usize, String> {
        usize::try_from(self.vox_offset)
            .ok()
            .filter(|&at| at >= HEADER_BYTES + 4 && at <= file_length)
            .ok_or_else(|| {
                format!("vox_offset {} lies outside the file; the file is corrupt", self.vox_offset)
            })
    }

    /// The same image described by a NIfTI-1 header (`vox_offset` 352, as a NIfTI-1 file of
    /// these voxels would have), so the seed-map reader, the affine and the written maps work as
    /// for NIfTI-1. The double-precision geometry is rounded to float32, NIfTI-1's storage:
    /// below 1e-5 mm for coordinates under 100 mm, far inside
    /// [`super::nifti::AFFINE_TOLERANCE_MM`].
    ///
    /// # Errors
    /// A message when a dimension does not fit NIfTI-1's 16-bit sizes or is negative.
    pub fn to_nifti1(&self) -> Result<NiftiHeader, String> {
        let mut dim = [0u16; 8];
        for (axis, (&size, target)) in self.dim.iter().zip(dim.iter_mut()).enumerate() {
            *target = u16::try_from(size).ok().filter(|&s| s <= i16::MAX as u16).ok_or_else(|| {
                format!("NIfTI-2 dim[{axis}] = {size} is negative or larger than a seed map can be (32767)")
            })?;
        }
        let narrow = |values: &[f64]| values.iter().map(|&v| v as f32).collect::<Vec<f32>>();
        Ok(NiftiHeader {
            sizeof_hdr: 348,
            dim,
            intent_p1: self.intent_p[0] as f32,
            intent_p2: self.intent_p[1] as f32,
            intent_p3: self.intent_p[2] as f32,
            intent_code: i16::try_from(self.intent_code).unwrap_or(0),
            datatype: self.datatype,
            bitpix: self.bitpix,
            pixdim: narrow(&self.pixdim).try_into().expect("8 values"),
            vox_offset: NIFTI1_VOX_OFFSET,
            scl_slope: self.scl_slope as f32,
            scl_inter: self.scl_inter as f32,
            cal_max: self.cal_max as f32,
            cal_min: self.cal_min as f32,
            xyzt_units: u8::try_from(self.xyzt_units).unwrap_or(0),
            descrip: self.descrip.clone(),
            qform_code: i16::try_from(self.qform_code).unwrap_or(0),
            sform_code: i16::try_from(self.sform_code).unwrap_or(0),
            quatern_b: self.quatern[0] as f32,
            quatern_c: self.quatern[1] as f32,
            quatern_d: self.quatern[2] as f32,
            quatern_x: self.qoffset[0] as f32,
            quatern_y: self.qoffset[1] as f32,
            quatern_z: self.qoffset[2] as f32,
            srow_x: narrow(&self.srow[0]).try_into().expect("4 values"),
            srow_y: narrow(&self.srow[1]).try_into().expect("4 values"),
            srow_z: narrow(&self.srow[2]).try_into().expect("4 values"),
            intent_name: self.intent_name,
            magic: *nifti::header::MAGIC_CODE_NIP1,
            endianness: if self.little_endian { nifti::Endianness::Little } else { nifti::Endianness::Big },
            ..NiftiHeader::default()
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A NIfTI-2 file written by nibabel 5.4.2 (tests/data/generators/nifti_inputs.py):
    /// big-endian int16, 5 x 4 x 3, scl_slope 2.5e-4, scl_inter -0.02, qform code 1 only.
    fn nibabel_file() -> Vec<u8> {
        std::fs::read(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/data/nifti/nifti2_int16_scaled_bigendian.nii"
        ))
        .unwrap()
    }

    #[test]
    fn reads_the_fields_nibabel_wrote() {
        let bytes = nibabel_file();
        let header = parse(&bytes).unwrap();
        assert!(!header.little_endian);
        assert_eq!(header.datatype, 4, "NIFTI_TYPE_INT16 (nifti1.h)");
        assert_eq!(header.bitpix, 16);
        assert_eq!(header.dim[..4], [3, 5, 4, 3]);
        assert_eq!((header.qform_code, header.sform_code), (1, 0));
        assert!((header.scl_slope - 2.5e-4).abs() < 1e-12 && (header.scl_inter + 0.02).abs() < 1e-12);
        assert_eq!(header.data_offset(bytes.len()).unwrap(), 544, "nibabel: header and extension flag");
        assert!(header.extensions(&bytes).unwrap().is_empty());
        let nifti1 = header.to_nifti1().unwrap();
        assert_eq!((nifti1.dim[..4].to_vec(), nifti1.vox_offset), (vec![3, 5, 4, 3], 352.0));
        assert_eq!(nifti1.endianness, nifti::Endianness::Big);
    }

    #[test]
    fn damaged_headers_say_what_is_wrong() {
        let bytes = nibabel_file();
        assert_eq!(
            parse(&bytes[..300]).unwrap_err(),
            "300 bytes, shorter than a NIfTI-2 header; the file is truncated"
        );
        let mut wrong_magic = bytes.clone();
        wrong_magic[4..8].copy_from_slice(b"ni2\0");
        assert!(parse(&wrong_magic).unwrap_err().starts_with("the NIfTI-2 magic is not 'n+2'"));
        assert!(byte_order(&[0x5c, 0x01, 0, 0]).is_none(), "348: a NIfTI-1 header");
        let mut header = parse(&bytes).unwrap();
        header.vox_offset = 10_000;
        assert_eq!(
            header.data_offset(bytes.len()).unwrap_err(),
            "vox_offset 10000 lies outside the file; the file is corrupt"
        );
        header.dim[1] = 40_000;
        assert_eq!(
            header.to_nifti1().unwrap_err(),
            "NIfTI-2 dim[1] = 40000 is negative or larger than a seed map can be (32767)"
        );
    }
}
