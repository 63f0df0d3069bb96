//! Writers: one statistic vector to a NIfTI volume or an edge matrix + table, with a sidecar.
//!
//! Every file is first written under a hidden temporary name in the destination folder, then
//! renamed over its final name, so a reader never sees a half-written map (a rename within one
//! folder is atomic on POSIX file systems). The output folder itself is the pipeline's.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use ndarray::{Array2, Array3, ShapeBuilder};
use ndarray_npy::WriteNpyExt;
use nifti::writer::WriterOptions;
use serde_json::{json, Map, Value};

use super::{MapName, Statistic, WriteError};
use crate::features::{EdgeSpace, FeatureSpace, MeasureSpace, VoxelSpace};

/// gzip level of written `.nii.gz` maps: zlib's default 6. Statistic maps compress well (zeros
/// outside the mask) and a 91 x 109 x 91 map still writes in tens of milliseconds, so the better
/// ratio over level 1 (the nifti crate's default) costs little; no published source.
pub const NIFTI_GZIP_LEVEL: u32 = 6;

/// Bytes of NIfTI-1 `descrip` text (the field is 80 bytes; one is kept for the NUL).
const DESCRIP_TEXT_BYTES: usize = 79;
/// Bytes of NIfTI-1 `intent_name` text (the field is 16 bytes; one is kept for the NUL).
const INTENT_NAME_TEXT_BYTES: usize = 15;
/// NIfTI-1 `xyzt_units` bits of the spatial unit (nifti1.h `XYZT_TO_SPACE` mask).
const SPACE_UNITS_MASK: u8 = 0x07;

/// Write one statistic map and its JSON sidecar into `dir`.
///
/// * Voxels: `<stem>.nii.gz`, a 3D float32 NIfTI-1 volume on the input grid. Values go to the
///   mask voxels; every other voxel holds [`Statistic::fill_value`] (0, or 1 for p and q).
///   NaN values (degenerate features) are written as NaN. The header starts from the reference
///   header: pixdim, spatial units, sform (code and rows) and qform (code, quaternion, offsets,
///   qfac) are copied unchanged, so the map lands in the same world space as the input in every
///   reader; datatype float32, `scl_slope` 1, `scl_inter` 0, `vox_offset` 352, magic `n+1`;
///   intent code/name from [`Statistic::intent_code`] / [`Statistic::intent_name`] with
///   `intent_p1` = `t_dof` for a uniform-dof t map; `cal_min`/`cal_max` the finite range of the
///   values; `descrip` names strata, the statistic and the stem (at most 79 bytes); slice
///   timing fields cleared. gzip level [`NIFTI_GZIP_LEVEL`].
/// * Edges: `<stem>.npy`, a symmetric R x R float32 matrix in C order (`[i, j] = [j, i]` =
///   the edge's value, diagonal = [`Statistic::fill_value`]), and `<stem>.tsv` with columns
///   `region_i region_j name_i name_j value`, one row per edge (i < j) in feature order; region
///   numbers are 1-based (row/column i of the matrix is region i + 1, as in atlas tables), NaN
///   is written `n/a` (BIDS).
/// * Both: `<stem>.json` with `Statistic`, `Description`, `Correction`, `Units`,
///   `DegreesOfFreedom` (t and p maps: the number, or a note naming the `dof` map when `t_dof`
///   is `None`), `Entities`, `FillValue`, `Space` and `GeneratedBy`, then the caller's `sidecar`
///   fields, which replace strata's where a key is the same. `sidecar` must hold `Groups`
///   (see [`groups_field`]) and, for a contrast statistic, `Contrast` (see [`contrast_fields`]).
///
/// # Arguments
/// * `dir` - existing destination folder.
/// * `space` - where each feature came from.
/// * `name` - the map's name; its suffix must be `statistic.suffix()`.
/// * `statistic` - what the values are.
/// * `values` - one value per feature of `space`.
/// * `sidecar` - a JSON object of extra sidecar fields.
/// * `t_dof` - the uniform degrees of freedom of a t map (`Some` makes it `NIFTI_INTENT_TTEST`
///   with `intent_p1` = dof); `None` for Welch maps, whose dof differ per feature. Used only
///   for `T` and `P` maps.
///
/// # Returns
/// The paths written: `[nii.gz, json]` or `[npy, tsv, json]`.
///
/// # Errors
/// [`WriteError::Mismatch`] when the value count, the suffix, the mask, the region names, the
/// dof or the sidecar do not fit; [`WriteError::Io`] / [`WriteError::Encode`] on write failure.
///
/// # Complexity
/// O(V) for a voxel grid of V voxels, O(R^2) for edges; gzip dominates.
pub fn write_map(
    dir: &Path,
    space: &FeatureSpace,
    name: &MapName,
    statistic: Statistic,
    values: &[f32],
    sidecar: &Value,
    t_dof: Option<f64>,
) -> Result<Vec<PathBuf>, WriteError> {
    write_map_with_dof(dir, space, name, statistic, values, sidecar, t_dof.as_slice())
}

/// [`write_map`] for any statistic with uniform degrees of freedom: one value for t maps (and
/// their p), two (numerator, denominator) for F maps (and their p), empty when the dof differ
/// per feature. An F map with two dof is `NIFTI_INTENT_FTEST` with `intent_p1`, `intent_p2`;
/// the sidecar's `DegreesOfFreedom` holds the number or the pair.
///
/// # Errors
/// As [`write_map`], and [`WriteError::Mismatch`] for more than two dof or two dof on a t map.
pub fn write_map_with_dof(
    dir: &Path,
    space: &FeatureSpace,
    name: &MapName,
    statistic: Statistic,
    values: &[f32],
    sidecar: &Value,
    dof: &[f64],
) -> Result<Vec<PathBuf>, WriteError> {
    let stem = name.file_stem();
    let sidecar_path = dir.join(format!("{stem}.json"));
    if name.suffix() != statistic.suffix() {
        return Err(WriteError::Mismatch {
            path: sidecar_path,
            found: format!("name suffix '{}' for a {} map", name.suffix(), statistic.intent_name()),
            expected: format!(
                "suffix '{}' (build the name with MapNameBuilder::build_for)",
                statistic.suffix()
            ),
        });
    }
    if values.len() != space.feature_count() {
        return Err(WriteError::Mismatch {
            path: sidecar_path,
            found: format!("{} values", values.len()),
            expected: format!("one value per feature of the feature space ({})", space.feature_count()),
        });
    }
    let dof: &[f64] = match statistic {
        Statistic::T | Statistic::P | Statistic::F => dof,
        _ => &[],
    };
    if dof.len() > 2
        || (statistic == Statistic::T && dof.len() > 1)
        || (statistic == Statistic::F && dof.len() == 1)
    {
        return Err(WriteError::Mismatch {
            path: sidecar_path,
            found: format!("{} degrees-of-freedom values for a {} map", dof.len(), statistic.intent_name()),
            expected: "one for a t map, two (numerator, denominator) for an F map".to_string(),
        });
    }
    for &dof in dof {
        if !(dof.is_finite() && dof > 0.0) {
            return Err(WriteError::Mismatch {
                path: sidecar_path,
                found: format!("degrees of freedom {dof}"),
                expected: "a finite positive number, or None when the dof differ per feature".to_string(),
            });
        }
    }
    let extra = check_sidecar(sidecar, statistic, &sidecar_path)?;

    let mut fields = Map::new();
    fields.insert("Statistic".into(), json!(statistic.intent_name()));
    fields.insert("Description".into(), json!(statistic.description()));
    fields.insert("Correction".into(), json!(statistic.correction()));
    fields.insert("Units".into(), json!(statistic.units()));
    if matches!(statistic, Statistic::T | Statistic::P | Statistic::F) {
        let dof = match dof {
            [one] => json!(one),
            [numerator, denominator] => json!([numerator, denominator]),
            _ => json!(format!(
                "per feature (Welch-Satterthwaite): see {}",
                name.with_suffix(Statistic::Dof.suffix())?.file_stem()
            )),
        };
        fields.insert("DegreesOfFreedom".into(), dof);
    }
    let entities: Map<String, Value> =
        name.entities().iter().map(|(k, v)| (k.clone(), Value::String(v.clone()))).collect();
    fields.insert("Entities".into(), Value::Object(entities));
    fields.insert("FillValue".into(), json!(statistic.fill_value()));
    fields.insert("GeneratedBy".into(), json!({"Name": "strata", "Version": crate::VERSION}));

    let mut written = match space {
        FeatureSpace::Voxels(voxels) => {
            let path = dir.join(format!("{stem}.nii.gz"));
            let intent_code = statistic.intent_code(!dof.is_empty());
            fields.insert(
                "Space".into(),
                json!({"Kind": "voxels", "Dimensions": voxels.dim, "MaskVoxels": voxels.mask.len(),
                       "IntentCode": intent_code, "IntentName": statistic.intent_name()}),
            );
            write_nifti_map(&path, voxels, &stem, statistic, values, dof)?;
            vec![path]
        }
        FeatureSpace::Edges(edges) => {
            let npy = dir.join(format!("{stem}.npy"));
            let tsv = dir.join(format!("{stem}.tsv"));
            fields.insert(
                "Space".into(),
                json!({"Kind": "edges", "Regions": edges.region_count, "Diagonal": statistic.fill_value(),
                       "RegionNumbering": "1-based in the .tsv; row/column i of the .npy is region i + 1"}),
            );
            write_edge_map(&npy, &tsv, edges, statistic, values)?;
            vec![npy, tsv]
        }
        FeatureSpace::Measures(measures) => {
            let tsv = dir.join(format!("{stem}.tsv"));
            fields.insert(
                "Space".into(),
                json!({"Kind": "measures", "Measures": measures.names.len(),
                       "Scale": "each measure standardised across the analysed participants (mean 0, sample SD 1)"}),
            );
            write_profile(&tsv, measures, values)?;
            vec![tsv]
        }
    };
    for (key, value) in extra {
        fields.insert(key.clone(), value.clone());
    }
    let text = serde_json::to_string_pretty(&Value::Object(fields))
        .map_err(|error| WriteError::Encode { path: sidecar_path.clone(), message: error.to_string() })?;
    write_atomically(&sidecar_path, |temporary| {
        std::fs::write(temporary, format!("{text}\n"))
            .map_err(|source| WriteError::Io { path: temporary.to_path_buf(), source })
    })?;
    written.push(sidecar_path);
    Ok(written)
}

/// `{"Groups": [{"Label": .., "Count": ..}, ...]}`: the participants a map summarises.
pub fn groups_field(groups: &[(&str, usize)]) -> Value {
    let list: Vec<Value> =
        groups.iter().map(|(label, count)| json!({"Label": label, "Count": count})).collect();
    json!({ "Groups": list })
}

/// `Groups` for two groups plus `Contrast`: `"insomnia - control"` (A minus B).
pub fn contrast_fields(label_a: &str, count_a: usize, label_b: &str, count_b: usize) -> Value {
    let mut fields = groups_field(&[(label_a, count_a), (label_b, count_b)]);
    if let Value::Object(map) = &mut fields {
        map.insert("Contrast".into(), json!(format!("{label_a} - {label_b}")));
    }
    fields
}

fn check_sidecar<'a>(
    sidecar: &'a Value,
    statistic: Statistic,
    path: &Path,
) -> Result<&'a Map<String, Value>, WriteError> {
    let mismatch = |found: &str, expected: &str| WriteError::Mismatch {
        path: path.to_path_buf(),
        found: found.to_string(),
        expected: expected.to_string(),
    };
    let Value::Object(fields) = sidecar else {
        return Err(mismatch("extra sidecar fields that are not a JSON object", "a JSON object"));
    };
    if !fields.contains_key("Groups") {
        return Err(mismatch(
            "extra sidecar fields without Groups",
            "Groups with labels and participant counts (maps::groups_field or maps::contrast_fields)",
        ));
    }
    if statistic.is_contrast() && !fields.contains_key("Contrast") {
        return Err(mismatch(
            &format!("a {} map without Contrast", statistic.intent_name()),
            "Contrast naming group A minus group B (maps::contrast_fields)",
        ));
    }
    Ok(fields)
}

/// Writes the analysis mask of a voxel space as a NIfTI volume on its grid: 1 at the analysed
/// voxels, 0 elsewhere (used by `strata assign` to read new participants on the same voxels).
///
/// # Errors
/// As [`write_map`].
pub fn write_mask(path: &Path, space: &VoxelSpace) -> Result<(), WriteError> {
    let ones = vec![1.0f32; space.mask.len()];
    write_nifti_map(path, space, "mask", Statistic::Mean, &ones, &[])
}

fn write_nifti_map(
    path: &Path,
    space: &VoxelSpace,
    stem: &str,
    statistic: Statistic,
    values: &[f32],
    dof: &[f64],
) -> Result<(), WriteError> {
    let [nx, ny, nz] = space.dim;
    let voxel_count = nx * ny * nz;
    let mut flat = vec![statistic.fill_value(); voxel_count];
    for (&voxel, &value) in space.mask.iter().zip(values) {
        let Some(slot) = flat.get_mut(voxel) else {
            return Err(WriteError::Mismatch {
                path: path.to_path_buf(),
                found: format!("mask voxel index {voxel}"),
                expected: format!("indices below {voxel_count} for the {nx}x{ny}x{nz} grid"),
            });
        };
        *slot = value;
    }
    let (intent_p1, intent_p2) = match (statistic, dof) {
        (Statistic::T, [dof]) => (*dof as f32, 0.0),
        (Statistic::F, [numerator, denominator]) => (*numerator as f32, *denominator as f32),
        _ => (0.0, 0.0),
    };
    let intent = VolumeIntent {
        code: statistic.intent_code(!dof.is_empty()),
        p1: intent_p1,
        p2: intent_p2,
        name: statistic.intent_name(),
        stem,
    };
    write_volume(path, &space.reference_header, space.dim, flat, &intent)
}

/// What a written volume holds, for its NIfTI-1 header.
#[derive(Debug, Clone, Copy)]
pub struct VolumeIntent<'a> {
    /// `intent_code` (see [`super::intent`]).
    pub code: i16,
    /// `intent_p1` (for example the degrees of freedom of a t or correlation map).
    pub p1: f32,
    /// `intent_p2`.
    pub p2: f32,
    /// `intent_name` (at most 15 bytes are kept); also named in `descrip`.
    pub name: &'a str,
    /// The file stem, named in `descrip`.
    pub stem: &'a str,
}

/// Writes one 3D float32 volume on the grid of `reference_header` (any 4D dimension of the
/// reference is dropped), atomically.
///
/// The header starts from the reference: pixdim, spatial units, sform (code and rows) and qform
/// (code, quaternion, offsets, qfac) are copied unchanged, so the volume lands in the same world
/// space as the input in every reader; datatype float32, `scl_slope` 1, `scl_inter` 0,
/// `vox_offset` 352, magic `n+1`; intent code, parameters and name from `intent`;
/// `cal_min`/`cal_max` the finite range of the values; `descrip` names strata, the intent name
/// and the stem (at most 79 bytes); slice timing fields cleared. gzip level
/// [`NIFTI_GZIP_LEVEL`] when the name ends in `.gz`.
///
/// # Arguments
/// * `path` - the file to write (`.nii` or `.nii.gz`).
/// * `reference_header` - the header of the input on whose grid the values lie.
/// * `dim` - grid dimensions (i, j, k).
/// * `flat` - one value per voxel in file (Fortran) order, index i + nx * (j + ny * k).
/// * `intent` - what the values are.
///
/// # Errors
/// [`WriteError::Mismatch`] when the grid is empty, too large for NIfTI-1 or does not match
/// the value count; [`WriteError::Encode`] when the writer fails.
///
/// # Complexity
/// O(V) for V voxels; gzip dominates.
pub fn write_volume(
    path: &Path,
    reference_header: &nifti::NiftiHeader,
    dim: [usize; 3],
    flat: Vec<f32>,
    intent: &VolumeIntent<'_>,
) -> Result<(), WriteError> {
    let [nx, ny, nz] = dim;
    let voxel_count = nx * ny * nz;
    let mismatch =
        |found: String, expected: String| WriteError::Mismatch { path: path.to_path_buf(), found, expected };
    if voxel_count == 0 || [nx, ny, nz].iter().any(|&d| d > usize::from(u16::MAX)) {
        return Err(mismatch(
            format!("grid {nx}x{ny}x{nz}"),
            "a non-empty grid of at most 65535 voxels per axis (NIfTI-1)".to_string(),
        ));
    }
    if flat.len() != voxel_count {
        return Err(mismatch(
            format!("{} values", flat.len()),
            format!("one per voxel of the {nx}x{ny}x{nz} grid ({voxel_count})"),
        ));
    }
    let (low, high) = flat
        .iter()
        .filter(|v| v.is_finite())
        .fold((f32::INFINITY, f32::NEG_INFINITY), |(lo, hi), &v| (lo.min(v), hi.max(v)));
    // Fortran order: flat index i + nx * (j + ny * k) is element [i, j, k].
    let volume = Array3::from_shape_vec((nx, ny, nz).f(), flat)
        .map_err(|error| mismatch(error.to_string(), "a volume matching the grid".to_string()))?;

    let mut header = reference_header.clone();
    header.endianness = nifti::Endianness::Little;
    header.dim[0] = 3;
    header.dim[4..].fill(1);
    header.intent_code = intent.code;
    header.intent_p1 = intent.p1;
    header.intent_p2 = intent.p2;
    header.intent_p3 = 0.0;
    header.intent_name = [0; 16];
    let intent_name = intent.name.as_bytes();
    let intent_len = intent_name.len().min(INTENT_NAME_TEXT_BYTES);
    header.intent_name[..intent_len].copy_from_slice(&intent_name[..intent_len]);
    let mut descrip = format!("strata {} {} {}", crate::VERSION, intent.name, intent.stem).into_bytes();
    descrip.truncate(DESCRIP_TEXT_BYTES);
    descrip.resize(80, 0);
    header.descrip = descrip;
    (header.cal_min, header.cal_max) = if low <= high { (low, high) } else { (0.0, 0.0) };
    header.glmin = 0;
    header.glmax = 0;
    header.aux_file = [0; 24];
    header.xyzt_units &= SPACE_UNITS_MASK;
    header.pixdim[4..].fill(1.0);
    header.dim_info = 0;
    header.slice_code = 0;
    header.slice_start = 0;
    header.slice_end = 0;
    header.slice_duration = 0.0;
    header.toffset = 0.0;
    header.extents = 0;
    header.session_error = 0;
    header.regular = 0;
    header.data_type = [0; 10];
    header.db_name = [0; 18];

    write_atomically(path, |temporary| {
        WriterOptions::new(temporary)
            .reference_header(&header)
            .compression_level(flate2::Compression::new(NIFTI_GZIP_LEVEL))
            .write_nifti(&volume)
            .map_err(|error| WriteError::Encode { path: path.to_path_buf(), message: error.to_string() })?;
        if temporary.is_file() {
            Ok(())
        } else {
            Err(WriteError::Encode {
                path: path.to_path_buf(),
                message: format!("the NIfTI writer did not create {}", temporary.display()),
            })
        }
    })
}

fn write_edge_map(
    npy: &Path,
    tsv: &Path,
    space: &EdgeSpace,
    statistic: Statistic,
    values: &[f32],
) -> Result<(), WriteError> {
    let regions = space.region_count;
    if space.region_names.len() != regions {
        return Err(WriteError::Mismatch {
            path: tsv.to_path_buf(),
            found: format!("{} region names", space.region_names.len()),
            expected: format!("one name per region ({regions})"),
        });
    }
    let mut matrix = Array2::from_elem((regions, regions), statistic.fill_value());
    let mut table = String::from("region_i\tregion_j\tname_i\tname_j\tvalue\n");
    // Walk the upper triangle in feature order (numpy triu_indices(R, 1)) rather than calling
    // EdgeSpace::edge per feature, which is O(R) each.
    let mut feature = 0;
    for i in 0..regions {
        for j in (i + 1)..regions {
            let value = values[feature];
            matrix[[i, j]] = value;
            matrix[[j, i]] = value;
            let shown = if value.is_nan() { "n/a".to_string() } else { value.to_string() };
            table.push_str(&format!(
                "{}\t{}\t{}\t{}\t{shown}\n",
                i + 1,
                j + 1,
                space.region_names[i],
                space.region_names[j]
            ));
            feature += 1;
        }
    }
    write_atomically(npy, |temporary| {
        let file = File::create(temporary)
            .map_err(|source| WriteError::Io { path: temporary.to_path_buf(), source })?;
        let mut writer = BufWriter::new(file);
        matrix
            .write_npy(&mut writer)
            .map_err(|error| WriteError::Encode { path: npy.to_path_buf(), message: error.to_string() })?;
        writer.flush().map_err(|source| WriteError::Io { path: temporary.to_path_buf(), source })
    })?;
    write_atomically(tsv, |temporary| {
        std::fs::write(temporary, &table)
            .map_err(|source| WriteError::Io { path: temporary.to_path_buf(), source })
    })
}

/// A profile table: one row per measure (`measure`, `value`), in feature order.
fn write_profile(tsv: &Path, space: &MeasureSpace, values: &[f32]) -> Result<(), WriteError> {
    if space.names.len() != values.len() {
        return Err(WriteError::Mismatch {
            path: tsv.to_path_buf(),
            found: format!("{} values", values.len()),
            expected: format!("one per measure ({})", space.names.len()),
        });
    }
    let mut table = String::from("measure\tvalue\n");
    for (name, value) in space.names.iter().zip(values) {
        let shown = if value.is_nan() { "n/a".to_string() } else { value.to_string() };
        table.push_str(&format!("{name}\t{shown}\n"));
    }
    write_atomically(tsv, |temporary| {
        std::fs::write(temporary, &table)
            .map_err(|source| WriteError::Io { path: temporary.to_path_buf(), source })
    })
}

/// Writes `bytes` to `path` through a temporary file and a rename, so that `path` is never
/// half-written.
///
/// # Errors
/// The file cannot be created or renamed.
pub fn write_bytes_atomically(path: &Path, bytes: &[u8]) -> Result<(), WriteError> {
    write_atomically(path, |temporary| {
        std::fs::write(temporary, bytes).map_err(|source| WriteError::Io { path: path.to_path_buf(), source })
    })
}

/// Run `write` on a hidden temporary path beside `path`, then rename it to `path`.
///
/// The temporary name `.tmp-<pid>-<file name>` keeps the file's extensions (the NIfTI writer
/// picks compression from them); on failure the temporary file is removed.
fn write_atomically(
    path: &Path,
    write: impl FnOnce(&Path) -> Result<(), WriteError>,
) -> Result<(), WriteError> {
    let file_name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    let temporary = path.with_file_name(format!(".tmp-{}-{file_name}", std::process::id()));
    let result = write(&temporary).and_then(|()| {
        std::fs::rename(&temporary, path)
            .map_err(|source| WriteError::Io { path: path.to_path_buf(), source })
    });
    if result.is_err() {
        let _ = std::fs::remove_file(&temporary);
    }
    result
}
