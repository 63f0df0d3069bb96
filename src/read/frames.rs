//! A 4D NIfTI series (NIfTI-1 or single-file NIfTI-2, `.nii` or `.nii.gz`) read one 3D frame at
//! a time.
//!
//! The gzip stream is decoded as it is read, so a series of any length needs only one frame's
//! stored bytes and one frame of f32 values in memory. Header parsing, datatypes and the
//! `scl_slope`/`scl_inter` scaling are those of [`super::nifti`]. What is done with each frame
//! (correlations, sums) is the caller's job.

use std::fs::File;
use std::io::{BufReader, Read};
use std::path::{Path, PathBuf};

use nifti::NiftiHeader;

use super::nifti::{datatype_size, decode_values, header_affine, scaling, NIFTI1_HEADER_BYTES};
use super::nifti2;
use super::ReadError;

/// Bytes of the read-ahead buffer under the gzip decoder: large enough that a frame is read in
/// a few system calls; no published source.
const READ_BUFFER_BYTES: usize = 1 << 20;

/// Largest piece of a frame asked of the decoder at once. The gzip checksum and the decoder's
/// window copy read back what was just decoded, so a piece that stays in the core's L2 cache
/// keeps them from reaching main memory. Chosen by measurement with `benches/connectivity.sh`
/// (common practice for cache blocking; no published source).
const DECODE_PIECE_BYTES: usize = 256 << 10;

/// An open 4D series positioned at its next frame.
pub struct FrameReader {
    /// The header as read.
    pub header: NiftiHeader,
    /// Grid dimensions (i, j, k).
    pub dim: [usize; 3],
    /// Voxel-to-world affine, rows of a 4 x 4 matrix.
    pub affine: [[f64; 4]; 4],
    /// Frames along the 4th dimension.
    pub frames: usize,
    path: PathBuf,
    participant: String,
    source: Box<dyn Read + Send>,
    stored: Vec<u8>,
    little_endian: bool,
    slope: f64,
    inter: f64,
    next: usize,
}

impl std::fmt::Debug for FrameReader {
    fn fmt(&self, formatter: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        formatter
            .debug_struct("FrameReader")
            .field("path", &self.path)
            .field("dim", &self.dim)
            .field("frames", &self.frames)
            .field("next", &self.next)
            .finish()
    }
}

impl FrameReader {
    /// Opens a 4D series and reads its header; no voxel value is decoded yet.
    ///
    /// # Errors
    /// [`ReadError::Io`] when the file cannot be opened; [`ReadError::Invalid`] for an unreadable
    /// header, an image that is not 4D (a 5th dimension larger than 1 included), an
    /// unsupported datatype or an affine that cannot be formed.
    pub fn open(path: &Path, participant: &str) -> Result<Self, ReadError> {
        let invalid = |problem: String| ReadError::Invalid {
            path: path.to_path_buf(),
            participant: participant.to_string(),
            problem,
        };
        let file = File::open(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
        let mut buffered = BufReader::with_capacity(READ_BUFFER_BYTES, file);
        let gzipped = {
            use std::io::BufRead;
            let head =
                buffered.fill_buf().map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
            head.len() >= 2 && head[0] == 0x1f && head[1] == 0x8b
        };
        let mut source: Box<dyn Read + Send> = if gzipped {
            Box::new(flate2::bufread::MultiGzDecoder::new(buffered))
        } else {
            Box::new(buffered)
        };
        let mut head = vec![0u8; NIFTI1_HEADER_BYTES];
        read_full(&mut source, &mut head).map_err(|error| {
            invalid(format!("cannot read the NIfTI header ({error}); the file is truncated or corrupt"))
        })?;
        // Bytes of the file read so far, and the offset of the first frame.
        let (header, read, offset) = if nifti2::byte_order(&head).is_some() {
            // NIfTI-2: the rest of its 540-byte header and the extension flag, then the image
            // described by the equivalent NIfTI-1 header (super::nifti2::Nifti2Header::to_nifti1).
            head.resize(nifti2::HEADER_BYTES + 4, 0);
            read_full(&mut source, &mut head[NIFTI1_HEADER_BYTES..]).map_err(|error| {
                invalid(format!("cannot read the NIfTI-2 header ({error}); the file is truncated or corrupt"))
            })?;
            let parsed = nifti2::parse(&head).map_err(invalid)?;
            let offset = parsed.data_offset(usize::MAX).map_err(invalid)?;
            (parsed.to_nifti1().map_err(invalid)?, head.len(), offset)
        } else {
            // Third-party header parsing of a user file: a malformed header is an error, never a crash.
            let header = match std::panic::catch_unwind(|| NiftiHeader::from_reader(&head[..])) {
                Ok(Ok(header)) => header,
                _ => {
                    return Err(invalid(
                        "cannot read the NIfTI-1 header; the file may be truncated, corrupt, or not a NIfTI image"
                            .into(),
                    ))
                }
            };
            let offset = (header.vox_offset.max(0.0) as usize).max(NIFTI1_HEADER_BYTES);
            (header, NIFTI1_HEADER_BYTES, offset)
        };
        let rank = header.dim[0];
        if !(1..=7).contains(&rank) {
            return Err(invalid(format!("dim[0] = {rank} is not a valid number of dimensions (1-7)")));
        }
        let dims: Vec<usize> = header.dim[1..=rank as usize].iter().map(|&d| d as usize).collect();
        let shape = dims.iter().map(usize::to_string).collect::<Vec<_>>().join("x");
        let beyond: usize = dims.iter().skip(4).product();
        if dims.len() < 4 || beyond > 1 || dims[3] < 1 || dims[..3].contains(&0) {
            return Err(invalid(format!(
                "image of shape {shape} is not a 4D series; expected one BOLD run per participant, frames along the 4th dimension"
            )));
        }
        let size = datatype_size(header.datatype).ok_or_else(|| {
            invalid(format!(
                "NIfTI datatype {} is not supported; strata reads integer and float32/float64 series",
                header.datatype
            ))
        })?;
        let affine = header_affine(&header).map_err(invalid)?;
        // Skip the extensions between the header and the voxel data.
        let mut skip = vec![0u8; offset.saturating_sub(read)];
        read_full(&mut source, &mut skip).map_err(|error| {
            invalid(format!(
                "cannot read up to vox_offset {offset} ({error}); the file is truncated or corrupt"
            ))
        })?;
        let (slope, inter) = scaling(&header);
        let little_endian = header.endianness == nifti::Endianness::Little;
        let dim = [dims[0], dims[1], dims[2]];
        Ok(FrameReader {
            dim,
            affine,
            frames: dims[3],
            path: path.to_path_buf(),
            participant: participant.to_string(),
            source,
            stored: vec![0u8; dim[0] * dim[1] * dim[2] * size],
            little_endian,
            slope,
            inter,
            next: 0,
            header,
        })
    }

    /// The NIfTI-1 scaling (slope, intercept) the header asks for; (1, 0) when unscaled.
    pub fn scaling(&self) -> (f64, f64) {
        (self.slope, self.inter)
    }

    /// From now on, decode the stored values without the header's `scl_slope`/`scl_inter`.
    ///
    /// For callers whose result does not change under one affine map of every value, such as
    /// correlations: integer storage (int16 BOLD) then reaches f32 exactly, where the scaled
    /// values would be rounded to f32.
    pub fn ignore_scaling(&mut self) {
        self.slope = 1.0;
        self.inter = 0.0;
    }

    /// Voxels per frame.
    pub fn voxel_count(&self) -> usize {
        self.dim[0] * self.dim[1] * self.dim[2]
    }

    /// Decodes the next frame into `out` (length [`Self::voxel_count`]), scaled as NIfTI-1 says.
    /// Returns false once every frame was read; after the last frame the rest of the stream is
    /// read so a gzip file's checksum is verified.
    ///
    /// # Errors
    /// [`ReadError::Invalid`] naming the frame when the file ends early or fails to decompress,
    /// or when `out` does not hold one frame.
    pub fn next_frame(&mut self, out: &mut [f32]) -> Result<bool, ReadError> {
        if self.next == self.frames {
            return Ok(false);
        }
        if out.len() != self.voxel_count() {
            return Err(self.buffer_error(out.len(), "a frame"));
        }
        self.read_values(out)?;
        self.finish_frame()?;
        Ok(true)
    }

    /// Decodes the next frame in consecutive pieces of at most `piece.len()` voxels, handing
    /// each to `visit` with the file-order index of its first voxel. The frame never sits in
    /// memory whole: a caller that keeps only part of each frame (or sums of it) touches one
    /// cache-sized piece at a time. Returns false once every frame was read, as
    /// [`Self::next_frame`].
    ///
    /// # Errors
    /// As [`Self::next_frame`], and [`ReadError::Invalid`] when `piece` is empty.
    pub fn next_frame_in_pieces(
        &mut self,
        piece: &mut [f32],
        mut visit: impl FnMut(usize, &[f32]),
    ) -> Result<bool, ReadError> {
        if self.next == self.frames {
            return Ok(false);
        }
        if piece.is_empty() {
            return Err(self.buffer_error(0, "at least one voxel"));
        }
        let voxels = self.voxel_count();
        let step = piece.len();
        let mut start = 0;
        while start < voxels {
            let len = step.min(voxels - start);
            self.read_values(&mut piece[..len])?;
            visit(start, &piece[..len]);
            start += len;
        }
        self.finish_frame()?;
        Ok(true)
    }

    /// Reads and decodes the next `out.len()` voxels of the current frame.
    fn read_values(&mut self, out: &mut [f32]) -> Result<(), ReadError> {
        let size = self.stored.len() / self.voxel_count().max(1);
        // float32 stored as this machine holds it, unscaled: read straight into `out`.
        let direct = self.header.datatype == 16
            && self.little_endian == cfg!(target_endian = "little")
            && self.slope == 1.0
            && self.inter == 0.0;
        let stored = &mut self.stored[..out.len() * size];
        let target: &mut [u8] = if direct { bytemuck::cast_slice_mut(out) } else { stored };
        let source = &mut self.source;
        target.chunks_mut(DECODE_PIECE_BYTES).try_for_each(|piece| read_full(source, piece)).map_err(|error| {
            ReadError::Invalid {
                path: self.path.clone(),
                participant: self.participant.clone(),
                problem: format!(
                    "cannot read frame {} of {} ({error}); the file is truncated or corrupt: copy it again from its source",
                    self.next + 1,
                    self.frames
                ),
            }
        })?;
        if !direct {
            decode_values(
                &self.stored[..out.len() * size],
                self.header.datatype,
                self.little_endian,
                self.slope,
                self.inter,
                out,
            );
        }
        Ok(())
    }

    /// The error for a caller's buffer of `len` values where `expected` was needed.
    fn buffer_error(&self, len: usize, expected: &str) -> ReadError {
        ReadError::Invalid {
            path: self.path.clone(),
            participant: self.participant.clone(),
            problem: format!(
                "a buffer of {len} values was given to read {expected} of {} voxels (a caller's error, not the file's)",
                self.voxel_count()
            ),
        }
    }

    /// Counts a frame as read; after the last one, reads the rest of the stream so a gzip
    /// file's checksum is verified.
    fn finish_frame(&mut self) -> Result<(), ReadError> {
        self.next += 1;
        if self.next == self.frames {
            let mut rest = Vec::new();
            self.source.read_to_end(&mut rest).map_err(|error| ReadError::Invalid {
                path: self.path.clone(),
                participant: self.participant.clone(),
                problem: format!(
                    "the data after the last frame does not decode ({error}); the file is truncated or corrupt"
                ),
            })?;
        }
        Ok(())
    }
}

/// Fills `buffer` completely; an early end of the stream is an error.
fn read_full(source: &mut dyn Read, buffer: &mut [u8]) -> std::io::Result<()> {
    source.read_exact(buffer).map_err(|error| {
        if error.kind() == std::io::ErrorKind::UnexpectedEof {
            std::io::Error::new(std::io::ErrorKind::UnexpectedEof, "unexpected end of file")
        } else {
            error
        }
    })
}
