//! 3D NIfTI-1 and NIfTI-2 seed maps (`.nii`, `.nii.gz`) read into f32 in file (Fortran) order, and merged
//! 4D files holding one participant per volume along the 4th dimension.
//!
//! Any stored numeric type is converted to float with `scl_slope`/`scl_inter` applied as the
//! NIfTI-1 standard says (slope 0 means no scaling). Single-file NIfTI-2 images (540-byte
//! header, [`super::nifti2`]) are read the same way, through the equivalent NIfTI-1 header.

use std::path::Path;

use nifti::NiftiHeader;

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

/// NIfTI-1 datatype codes and their sizes in bytes (nifti1.h).
pub(crate) fn datatype_size(datatype: i16) -> Option<usize> {
    match datatype {
        2 | 256 => Some(1),          // UINT8, INT8
        4 | 512 => Some(2),          // INT16, UINT16
        8 | 16 | 768 => Some(4),     // INT32, FLOAT32, UINT32
        64 | 1024 | 1280 => Some(8), // FLOAT64, INT64, UINT64
        _ => None,
    }
}

/// Converts stored values to f32 with the NIfTI-1 scaling y = slope * x + inter (slope 0 or
/// non-finite means unscaled), computed in f64.
pub(crate) fn decode_values(
    data: &[u8],
    datatype: i16,
    little_endian: bool,
    slope: f64,
    inter: f64,
    out: &mut [f32],
) {
    if datatype == 16 && little_endian && slope == 1.0 && inter == 0.0 {
        // The common case (float32, little-endian, unscaled): a plain copy the compiler
        // vectorises, without the round trip through f64.
        for (target, chunk) in out.iter_mut().zip(data.chunks_exact(4)) {
            *target = f32::from_le_bytes([chunk[0], chunk[1], chunk[2], chunk[3]]);
        }
        return;
    }
    macro_rules! convert {
        ($type:ty, $size:expr) => {
            for (target, chunk) in out.iter_mut().zip(data.chunks_exact($size)) {
                let bytes: [u8; $size] = chunk.try_into().expect("chunk of the type's size");
                let raw =
                    if little_endian { <$type>::from_le_bytes(bytes) } else { <$type>::from_be_bytes(bytes) };
                *target = (raw as f64 * slope + inter) as f32;
            }
        };
    }
    match datatype {
        2 => convert!(u8, 1),
        256 => convert!(i8, 1),
        4 => convert!(i16, 2),
        512 => convert!(u16, 2),
        8 => convert!(i32, 4),
        768 => convert!(u32, 4),
        16 => convert!(f32, 4),
        64 => convert!(f64, 8),
        1024 => convert!(i64, 8),
        1280 => convert!(u64, 8),
        _ => {}
    }
}

/// Largest buffer a reading thread keeps for its next file ([`RawVolume`]'s bytes are handed
/// back on drop). Seed maps of a 2 mm grid take 3.6 MB as float32; a merged 4D file of a whole
/// cohort is larger and is freed rather than kept.
const POOLED_BUFFER_LIMIT: usize = 64 << 20;

/// Deflate expands at most about 1,032-fold (RFC 1951's longest match of 258 bytes coded in
/// 2 bits, a fact of the format from memory): a gzip trailer claiming more is corrupt, and the
/// first buffer is never sized from it.
const DEFLATE_MAX_RATIO: usize = 1032;

thread_local! {
    /// Per reading thread: the compressed bytes of the current file, and a decoded buffer handed
    /// back by the last [`RawVolume`] dropped on this thread. Reusing them spares each map the
    /// allocation, page faults and zero-filling of a fresh buffer.
    static BUFFERS: std::cell::RefCell<(Vec<u8>, Vec<u8>)> = const { std::cell::RefCell::new((Vec::new(), Vec::new())) };
}

/// Reads a file, gunzipping it when it starts with the gzip magic bytes.
///
/// Both the compressed input and the decoded output reuse this thread's buffers; the decoded
/// buffer grows only past the largest file seen on this thread, so a cohort of maps on one grid
/// decodes without allocating.
fn read_bytes(path: &Path) -> std::io::Result<Vec<u8>> {
    use std::io::Read;
    let mut file = std::fs::File::open(path)?;
    let (mut input, mut decoded) = BUFFERS.with(|buffers| {
        let mut buffers = buffers.borrow_mut();
        (std::mem::take(&mut buffers.0), std::mem::take(&mut buffers.1))
    });
    input.clear();
    let outcome = file.read_to_end(&mut input);
    let result = outcome.and_then(|_| {
        if input.len() < 2 || input[0] != 0x1f || input[1] != 0x8b {
            // Not compressed: the file's bytes are the result; the pooled buffer stays.
            return Ok(std::mem::take(&mut input));
        }
        // The gzip trailer holds the uncompressed size modulo 2^32 (RFC 1952): a good first size.
        let hint = input
            .len()
            .checked_sub(4)
            .map_or(0, |at| {
                u32::from_le_bytes([input[at], input[at + 1], input[at + 2], input[at + 3]]) as usize
            })
            .min(input.len().saturating_mul(DEFLATE_MAX_RATIO));
        let mut buffer = std::mem::take(&mut decoded);
        if buffer.len() < hint {
            buffer.resize(hint, 0);
        }
        if let Some(size) = inflate_whole(&input, &mut buffer[..hint]) {
            buffer.truncate(size);
            return Ok(buffer);
        }
        let mut decoder = flate2::bufread::MultiGzDecoder::new(&input[..]);
        let mut filled = 0;
        loop {
            if filled == buffer.len() {
                // Full at the size the trailer gave: almost always the end of the stream. Probe
                // with a small read before growing, so an exact-sized buffer is not doubled and
                // zero-filled only to learn that nothing follows.
                let mut probe = [0u8; 8192];
                match decoder.read(&mut probe) {
                    Ok(0) => break,
                    Ok(read) => {
                        buffer.resize((buffer.len() * 2).max(filled + read).max(1 << 16), 0);
                        buffer[filled..filled + read].copy_from_slice(&probe[..read]);
                        filled += read;
                        continue;
                    }
                    Err(error) if error.kind() == std::io::ErrorKind::Interrupted => continue,
                    Err(error) => {
                        decoded = buffer;
                        return Err(error);
                    }
                }
            }
            match decoder.read(&mut buffer[filled..]) {
                Ok(0) => break,
                Ok(read) => filled += read,
                Err(error) if error.kind() == std::io::ErrorKind::Interrupted => {}
                Err(error) => {
                    decoded = buffer;
                    return Err(error);
                }
            }
        }
        buffer.truncate(filled);
        Ok(buffer)
    });
    BUFFERS.with(|buffers| {
        let mut buffers = buffers.borrow_mut();
        if input.capacity() <= POOLED_BUFFER_LIMIT {
            buffers.0 = input;
        }
        if decoded.capacity() <= POOLED_BUFFER_LIMIT && decoded.capacity() > buffers.1.capacity() {
            buffers.1 = decoded;
        }
    });
    result
}

/// A libdeflate decompressor, one per reading thread.
struct Inflater(std::ptr::NonNull<libdeflate_sys::libdeflate_decompressor>);

impl Drop for Inflater {
    fn drop(&mut self) {
        // SAFETY: the pointer came from libdeflate_alloc_decompressor and is freed only here.
        unsafe { libdeflate_sys::libdeflate_free_decompressor(self.0.as_ptr()) };
    }
}

thread_local! {
    static INFLATER: Option<Inflater> = {
        // SAFETY: allocation has no preconditions; a null result (out of memory) is checked.
        std::ptr::NonNull::new(unsafe { libdeflate_sys::libdeflate_alloc_decompressor() }).map(Inflater)
    };
}

/// Decodes `input`, a whole gzip file, into `out` in one call with libdeflate (which checks
/// the CRC-32 and size of RFC 1952's trailer), when the file is exactly one gzip member whose
/// data fills `out` (sized from the trailer). Returns the decoded size, or `None` for anything
/// else (several members, a trailer that disagrees, damaged data): the caller then decodes
/// with the streaming decoder, which handles every case and words the errors.
pub fn inflate_whole(input: &[u8], out: &mut [u8]) -> Option<usize> {
    INFLATER.with(|inflater| {
        let inflater = inflater.as_ref()?;
        let (mut consumed, mut written) = (0usize, 0usize);
        // SAFETY: the decompressor is this thread's own; the pointers and lengths describe the
        // two live slices, which do not overlap; libdeflate writes at most out.len() bytes.
        let result = unsafe {
            libdeflate_sys::libdeflate_gzip_decompress_ex(
                inflater.0.as_ptr(),
                input.as_ptr().cast(),
                input.len(),
                out.as_mut_ptr().cast(),
                out.len(),
                &mut consumed,
                &mut written,
            )
        };
        (result == libdeflate_sys::libdeflate_result_LIBDEFLATE_SUCCESS
            && consumed == input.len()
            && written == out.len())
        .then_some(written)
    })
}

impl Drop for RawVolume {
    fn drop(&mut self) {
        let bytes = std::mem::take(&mut self.bytes);
        if bytes.capacity() > POOLED_BUFFER_LIMIT {
            return;
        }
        // `try_with`: a volume dropped while its thread shuts down simply frees its bytes.
        let _ = BUFFERS.try_with(|buffers| {
            if let Ok(mut buffers) = buffers.try_borrow_mut() {
                if bytes.capacity() > buffers.1.capacity() {
                    buffers.1 = bytes;
                }
            }
        });
    }
}

/// Reads a 3D volume.
///
/// The file is read (and gunzipped) whole, the header parsed by the `nifti` crate, and the voxel
/// values converted straight to f32 in file order.
///
/// # Errors
/// Unreadable, truncated or corrupt file; another format; an unsupported datatype;
/// more than three dimensions (a 4D file with one volume is accepted); a header whose affine
/// cannot be formed.
pub fn read_volume(path: &Path, participant: &str) -> Result<Volume, ReadError> {
    let raw = read_raw(path, participant)?;
    let voxels = raw.dim[0] * raw.dim[1] * raw.dim[2];
    let mut values = vec![0.0f32; voxels];
    decode_values(raw.data(), raw.header.datatype, raw.little_endian, raw.slope, raw.inter, &mut values);
    Ok(Volume { header: raw.header.clone(), dim: raw.dim, affine: raw.affine, values })
}

/// The number of volumes along the 4th dimension of a NIfTI-1 file, from its header alone
/// (gunzipping only the first bytes of a `.nii.gz`); 1 for a 3D file.
///
/// # Errors
/// The file cannot be opened or its header cannot be read.
pub fn frame_count(path: &Path) -> Result<usize, ReadError> {
    use std::io::{Read, Seek};
    let io = |source| ReadError::Io { path: path.to_path_buf(), source };
    let mut file = std::fs::File::open(path).map_err(io)?;
    let mut magic = Vec::with_capacity(2);
    (&mut file).take(2).read_to_end(&mut magic).map_err(io)?;
    file.rewind().map_err(io)?;
    // Enough for either header (NIfTI-2's 540 bytes and its extension flag).
    let limit = (super::nifti2::HEADER_BYTES + 4) as u64;
    let mut head = Vec::with_capacity(limit as usize);
    let outcome = if magic == [0x1f, 0x8b] {
        flate2::read::MultiGzDecoder::new(file).take(limit).read_to_end(&mut head)
    } else {
        file.take(limit).read_to_end(&mut head)
    };
    let unreadable = |problem: String| ReadError::Format { path: path.to_path_buf(), problem };
    outcome.map_err(|error| {
        unreadable(format!("cannot read the NIfTI header ({error}); the file is truncated or corrupt"))
    })?;
    let header = if super::nifti2::byte_order(&head).is_some() {
        super::nifti2::parse(&head).and_then(|header| header.to_nifti1()).map_err(unreadable)?
    } else {
        let head = &head[..head.len().min(NIFTI1_HEADER_BYTES)];
        match std::panic::catch_unwind(|| NiftiHeader::from_reader(head)) {
            Ok(Ok(header)) => header,
            _ => return Err(unreadable(
                "cannot read the NIfTI-1 header; the file may be truncated, corrupt, or not a NIfTI image"
                    .into(),
            )),
        }
    };
    let rank = header.dim[0];
    if !(4..=7).contains(&rank) {
        return Ok(1);
    }
    Ok(header.dim[4..=rank as usize].iter().map(|&d| d.max(1) as usize).product())
}

/// Reads a merged 4D file: one 3D volume per participant along the 4th dimension (see
/// [`read_volume`] for the checks). The stored bytes are held once; each participant's volume is
/// decoded on demand with [`RawVolume::decode_frame`] or [`RawVolume::gather_frame`].
///
/// # Errors
/// As [`read_volume`]; also a 5th or later dimension larger than 1.
pub fn read_raw_stack(path: &Path) -> Result<RawVolume, ReadError> {
    parse_raw(path, STACK_PARTICIPANT, true)
}

/// The participant named in messages about a file that holds every participant (a merged 4D
/// NIfTI, a stacked array).
pub const STACK_PARTICIPANT: &str = "(every participant: one stacked file)";

/// A volume whose voxel values are still in their stored form, decoded on demand: reading only
/// the masked voxels of each participant avoids converting (and allocating) the whole grid.
#[derive(Debug)]
pub struct RawVolume {
    /// The header as read.
    pub header: NiftiHeader,
    /// Grid dimensions (i, j, k).
    pub dim: [usize; 3],
    /// Voxel-to-world affine, rows of a 4 x 4 matrix.
    pub affine: [[f64; 4]; 4],
    /// Volumes along the 4th dimension (1 for a 3D file).
    pub frames: usize,
    bytes: Vec<u8>,
    offset: usize,
    size: usize,
    little_endian: bool,
    slope: f64,
    inter: f64,
}

impl RawVolume {
    fn data(&self) -> &[u8] {
        self.frame_data(0)
    }

    /// The stored bytes of volume `frame` (0-based) along the 4th dimension.
    fn frame_data(&self, frame: usize) -> &[u8] {
        let bytes = self.dim[0] * self.dim[1] * self.dim[2] * self.size;
        let start = self.offset + frame * bytes;
        &self.bytes[start..start + bytes]
    }

    /// Decodes the values of `voxels` (flat file-order indices) into `out`, scaled as NIfTI-1 says.
    pub fn gather(&self, voxels: &[usize], out: &mut [f32]) {
        self.gather_frame(0, voxels, out);
    }

    /// Decodes the whole of volume `frame` (0-based, `< frames`) as a 3D [`Volume`] whose header
    /// describes one 3D volume.
    pub fn decode_frame(&self, frame: usize) -> Volume {
        let voxels = self.dim[0] * self.dim[1] * self.dim[2];
        let mut values = vec![0.0f32; voxels];
        decode_values(
            self.frame_data(frame),
            self.header.datatype,
            self.little_endian,
            self.slope,
            self.inter,
            &mut values,
        );
        let mut header = self.header.clone();
        header.dim[0] = 3;
        header.dim[4..].fill(1);
        Volume { header, dim: self.dim, affine: self.affine, values }
    }

    /// Decodes the values of `voxels` of volume `frame` (0-based, `< frames`) into `out`.
    pub fn gather_frame(&self, frame: usize, voxels: &[usize], out: &mut [f32]) {
        let data = self.frame_data(frame);
        let size = self.size;
        if self.header.datatype == 16 && self.little_endian && self.slope == 1.0 && self.inter == 0.0 {
            // The common case (float32, little-endian, unscaled): no per-voxel dispatch.
            for (target, &voxel) in out.iter_mut().zip(voxels) {
                let word = data[voxel * 4..].first_chunk::<4>().copied().unwrap_or([0; 4]);
                *target = f32::from_le_bytes(word);
            }
            return;
        }
        let mut one = [0.0f32; 1];
        for (target, &voxel) in out.iter_mut().zip(voxels) {
            decode_values(
                &data[voxel * size..(voxel + 1) * size],
                self.header.datatype,
                self.little_endian,
                self.slope,
                self.inter,
                &mut one,
            );
            *target = one[0];
        }
    }
}

/// Reads a 3D volume's header and stored bytes (see [`read_volume`] for the checks and errors).
///
/// # Errors
/// As [`read_volume`].
pub fn read_raw(path: &Path, participant: &str) -> Result<RawVolume, ReadError> {
    parse_raw(path, participant, false)
}

/// `sizeof_hdr` of a NIfTI-1 header, also the header's length in bytes (nifti1.h).
pub(crate) const NIFTI1_HEADER_BYTES: usize = 348;

fn parse_raw(path: &Path, participant: &str, stacked: bool) -> Result<RawVolume, ReadError> {
    let bytes = match read_bytes(path) {
        Ok(bytes) => bytes,
        Err(source) if source.kind() == std::io::ErrorKind::NotFound => {
            return Err(ReadError::Io { path: path.to_path_buf(), source })
        }
        Err(error) => {
            return Err(invalid(
                path,
                participant,
                format!(
                "cannot decompress ({error}); the file is truncated or corrupt: copy it again from its source"
            ),
            ))
        }
    };
    let (header, data_offset) = if super::nifti2::byte_order(&bytes).is_some() {
        // NIfTI-2 (540-byte header): described by the equivalent NIfTI-1 header from here on.
        let nifti2 = super::nifti2::parse(&bytes).map_err(|problem| invalid(path, participant, problem))?;
        let offset =
            nifti2.data_offset(bytes.len()).map_err(|problem| invalid(path, participant, problem))?;
        (nifti2.to_nifti1().map_err(|problem| invalid(path, participant, problem))?, offset)
    } else {
        // The NIfTI decoder is third-party code fed with user files: a malformed header must
        // become an error naming the file, never a crash.
        let parsed = std::panic::catch_unwind(|| {
            NiftiHeader::from_reader(&bytes[..bytes.len().min(NIFTI1_HEADER_BYTES)])
        });
        let header = match parsed {
            Ok(Ok(header)) => header,
            Ok(Err(error)) => {
                return Err(invalid(path, participant, format!(
                    "cannot read the NIfTI-1 header ({error}); the file may be truncated, corrupt, or not a NIfTI image"
                )))
            }
            Err(_) => return Err(invalid(path, participant, "the NIfTI header is malformed; check the file with a NIfTI viewer".into())),
        };
        let offset = (header.vox_offset.max(0.0) as usize).max(NIFTI1_HEADER_BYTES);
        (header, offset)
    };
    let rank = header.dim[0];
    if !(1..=7).contains(&rank) {
        return Err(invalid(
            path,
            participant,
            format!("dim[0] = {rank} is not a valid number of dimensions (1-7)"),
        ));
    }
    let dims: Vec<usize> = header.dim[1..=rank as usize].iter().map(|&d| d as usize).collect();
    let shape = || dims.iter().map(usize::to_string).collect::<Vec<_>>().join("x");
    let frames = if stacked { dims.get(3).copied().unwrap_or(1).max(1) } else { 1 };
    let extra: usize = dims.iter().skip(if stacked { 4 } else { 3 }).product();
    if dims.len() < 3 || extra > 1 {
        let problem = if stacked {
            format!("image of shape {}; a merged file holds one 3D volume per participant along the 4th dimension and nothing beyond it", shape())
        } else {
            format!("image of shape {}; expected one 3D seed map per participant, or a single merged 4D file (participants along the 4th dimension, in participants-table order) as the only input", shape())
        };
        return Err(invalid(path, participant, problem));
    }
    let dim = [dims[0], dims[1], dims[2]];
    let size = datatype_size(header.datatype).ok_or_else(|| {
        invalid(
            path,
            participant,
            format!(
                "NIfTI datatype {} is not supported; strata reads integer and float32/float64 volumes",
                header.datatype
            ),
        )
    })?;
    let voxels = dim[0] * dim[1] * dim[2];
    let offset = data_offset;
    let needed = voxels.saturating_mul(size).saturating_mul(frames);
    if bytes.len() < offset.saturating_add(needed) {
        return Err(invalid(
            path,
            participant,
            format!(
                "{} bytes of voxel data for a {}x{}x{}{} grid that needs {needed}; the file is truncated",
                bytes.len().saturating_sub(offset),
                dim[0],
                dim[1],
                dim[2],
                if stacked { format!("x{frames}") } else { String::new() }
            ),
        ));
    }
    let affine = header_affine(&header).map_err(|problem| invalid(path, participant, problem))?;
    let (slope, inter) = scaling(&header);
    let little_endian = header.endianness == nifti::Endianness::Little;
    Ok(RawVolume { header, dim, affine, frames, bytes, offset, size, little_endian, slope, inter })
}

/// The NIfTI-1 scaling (slope, intercept) of stored values: `scl_slope` 0 or non-finite means
/// unscaled (1, 0); a non-finite `scl_inter` counts as 0.
pub(crate) fn scaling(header: &NiftiHeader) -> (f64, f64) {
    if header.scl_slope != 0.0 && header.scl_slope.is_finite() {
        (
            f64::from(header.scl_slope),
            if header.scl_inter.is_finite() { f64::from(header.scl_inter) } else { 0.0 },
        )
    } else {
        (1.0, 0.0)
    }
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

#[cfg(test)]
mod tests {
    use std::io::Write;

    use super::read_bytes;

    fn gzip(data: &[u8]) -> Vec<u8> {
        let mut encoder = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::fast());
        encoder.write_all(data).unwrap();
        encoder.finish().unwrap()
    }

    #[test]
    fn gzip_decodes_whatever_size_the_trailer_claims() {
        // RFC 1952: ISIZE, the last 4 bytes, is the size of the last member only, so it is a
        // hint that can be exact, too small (several members) or wrong (a damaged trailer).
        let first: Vec<u8> = (0..300_000u32).map(|i| (i * 7 % 251) as u8).collect();
        let second: Vec<u8> = (0..90_000u32).map(|i| (i % 13) as u8).collect();
        let folder = tempfile::tempdir().unwrap();
        let exact = folder.path().join("exact.gz");
        std::fs::write(&exact, gzip(&first)).unwrap();
        let members = folder.path().join("members.gz");
        std::fs::write(&members, [gzip(&first), gzip(&second)].concat()).unwrap();
        let mut overstated = gzip(&second);
        let at = overstated.len() - 4;
        overstated[at..].copy_from_slice(&(5_000_000u32).to_le_bytes());
        let wrong = folder.path().join("wrong.gz");
        std::fs::write(&wrong, &overstated).unwrap();
        // Twice each, so the second pass runs on this thread's pooled buffers.
        for _ in 0..2 {
            assert_eq!(read_bytes(&exact).unwrap(), first);
            assert_eq!(read_bytes(&members).unwrap(), [first.clone(), second.clone()].concat());
            // A trailer that disagrees with the data is corruption: flate2 checks ISIZE.
            assert!(read_bytes(&wrong).is_err());
        }
    }
}
