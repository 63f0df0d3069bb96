//! Built-in atlases and masks, and what a `--atlas NAME|FILE` or `--mask NAME|FILE` value names.
//!
//! Shared by the stages, not one of them: the region tables, label volumes and brain mask of
//! `atlases/` are compiled into the binary (`include_bytes!`, about 80 kB in all), so a built-in
//! name works from any folder. A value is resolved by one rule, the same for every flag and for
//! the configuration file: **an existing file of that name wins**, otherwise a built-in name,
//! otherwise an error listing the built-in names. Readers take paths, so a built-in file is
//! written once into a cache folder ([`cache_folder`]) and its path handed on; the run's
//! configuration and provenance keep the name as given, with the SHA-256 of the built-in bytes,
//! so a run can be repeated from its provenance alone. `strata atlases` lists the built-ins and
//! exports their files ([`export`]).

use std::io::Read;
use std::path::{Path, PathBuf};

/// What a built-in holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BuiltInKind {
    /// A region table (index, name, network, coordinates) with a label volume.
    Atlas,
    /// A brain mask volume.
    Mask,
}

impl BuiltInKind {
    /// The word used in listings and messages.
    pub fn word(self) -> &'static str {
        match self {
            BuiltInKind::Atlas => "atlas",
            BuiltInKind::Mask => "mask",
        }
    }
}

/// A file compiled into the binary.
#[derive(Debug)]
pub struct EmbeddedFile {
    /// File name, as in `atlases/<folder>/`.
    pub name: &'static str,
    /// The file's bytes.
    pub bytes: &'static [u8],
}

/// One built-in atlas or mask.
#[derive(Debug)]
pub struct BuiltIn {
    /// The name `--atlas` / `--mask` take.
    pub name: &'static str,
    /// Atlas or mask.
    pub kind: BuiltInKind,
    /// Its folder under `atlases/` in the source tree.
    pub folder: &'static str,
    /// The region table (atlases).
    pub table: Option<EmbeddedFile>,
    /// The label volume (atlases) or the mask volume.
    pub volume: Option<EmbeddedFile>,
    /// The folder's README: source, citation, licence, construction.
    pub readme: EmbeddedFile,
    /// Where the files come from, in a few words (the README has the whole story).
    pub source: &'static str,
    /// The licence, in a few words.
    pub licence: &'static str,
}

impl BuiltIn {
    /// Every file of the built-in, README last.
    pub fn files(&self) -> Vec<&EmbeddedFile> {
        self.table.iter().chain(self.volume.iter()).chain(std::iter::once(&self.readme)).collect()
    }
}

macro_rules! embedded {
    ($folder:literal, $name:literal) => {
        EmbeddedFile {
            name: $name,
            bytes: include_bytes!(concat!(env!("CARGO_MANIFEST_DIR"), "/atlases/", $folder, "/", $name)),
        }
    };
}

/// The built-in atlases and masks, in listing order.
pub const BUILT_INS: &[BuiltIn] = &[
    BuiltIn {
        name: "northfield100",
        kind: BuiltInKind::Atlas,
        folder: "northfield100",
        table: Some(embedded!("northfield100", "northfield100_regions.tsv")),
        volume: Some(embedded!("northfield100", "northfield100_labels_4mm.nii.gz")),
        readme: embedded!("northfield100", "README.md"),
        source: "strata's own code: fictional, for the demo",
        licence: "CC0-1.0",
    },
    BuiltIn {
        name: "dosenbach160",
        kind: BuiltInKind::Atlas,
        folder: "dosenbach160",
        table: Some(embedded!("dosenbach160", "dosenbach160_regions.tsv")),
        volume: Some(embedded!("dosenbach160", "dosenbach160_labels_2mm.nii.gz")),
        readme: embedded!("dosenbach160", "README.md"),
        source: "nilearn 0.14.1 data: Dosenbach et al. 2010; 5 mm spheres",
        licence: "BSD-3-Clause (nilearn)",
    },
    BuiltIn {
        name: "seitzman300",
        kind: BuiltInKind::Atlas,
        folder: "seitzman300",
        table: Some(embedded!("seitzman300", "seitzman300_regions.tsv")),
        volume: Some(embedded!("seitzman300", "seitzman300_labels_2mm.nii.gz")),
        readme: embedded!("seitzman300", "README.md"),
        source: "nilearn 0.14.1 data: Seitzman et al. 2020; 4-5 mm spheres",
        licence: "BSD-3-Clause (nilearn)",
    },
    BuiltIn {
        name: "mni152-2mm",
        kind: BuiltInKind::Mask,
        folder: "mni152",
        table: None,
        volume: Some(embedded!("mni152", "mni152_brainmask_2mm.nii.gz")),
        readme: embedded!("mni152", "README.md"),
        source: "nilearn 0.14.1 data: ICBM 2009a template, brain mask",
        licence: "MNI template notice (permissive; see README)",
    },
];

/// The names of the built-ins, in listing order (the possible values of `strata atlases NAME`).
pub const NAMES: &[&str] = &["northfield100", "dosenbach160", "seitzman300", "mni152-2mm"];

/// The built-in of this name.
pub fn find(name: &str) -> Option<&'static BuiltIn> {
    BUILT_INS.iter().find(|built_in| built_in.name == name)
}

/// The names of the built-ins of one kind, comma-separated (for messages).
pub fn names_of(kind: BuiltInKind) -> String {
    BUILT_INS.iter().filter(|b| b.kind == kind).map(|b| b.name).collect::<Vec<_>>().join(", ")
}

/// Problems resolving or writing built-in atlases.
#[derive(Debug, thiserror::Error)]
pub enum AtlasError {
    /// The value is neither an existing file nor a built-in name.
    #[error("{flag}: '{value}' is neither an existing file nor a built-in name; give a {wanted} file, or one of the built-in names {names} (`strata atlases` describes them)")]
    Unknown {
        /// The flag (or configuration key) the value came from.
        flag: String,
        /// The value as given.
        value: String,
        /// What kind of file the flag takes.
        wanted: &'static str,
        /// The built-in names the flag takes.
        names: String,
    },
    /// A built-in name given to a flag that takes the other kind.
    #[error("{flag}: '{name}' is a built-in {kind}, which {flag} does not take; {hint}")]
    WrongKind {
        /// The flag.
        flag: String,
        /// The built-in name.
        name: String,
        /// "atlas" or "mask".
        kind: &'static str,
        /// What to do.
        hint: String,
    },
    /// A built-in file could not be written to the cache folder.
    #[error("{}: cannot write the built-in file there ({source}); set TMPDIR to a writable folder, or export it with `strata atlases NAME --export DIR` and give the file's path", path.display())]
    Cache {
        /// The file that could not be written.
        path: PathBuf,
        /// Why.
        source: std::io::Error,
    },
    /// An export would replace a different file.
    #[error("{}: exists and differs from the built-in file; remove it, choose another folder, or pass --force", path.display())]
    ExportExists {
        /// The existing file.
        path: PathBuf,
    },
    /// An exported file could not be written.
    #[error("{}: cannot write ({source}); check the folder exists and is writable", path.display())]
    Export {
        /// The file.
        path: PathBuf,
        /// Why.
        source: std::io::Error,
    },
}

impl AtlasError {
    /// Whether the command line is at fault (an unknown or misplaced name), not the disk.
    pub fn is_usage(&self) -> bool {
        matches!(self, AtlasError::Unknown { .. } | AtlasError::WrongKind { .. })
    }

    /// The message without its leading `FLAG: `, for a [`crate::config::ConfigError::Invalid`].
    pub fn problem(&self) -> String {
        let text = self.to_string();
        match self {
            AtlasError::Unknown { flag, .. } | AtlasError::WrongKind { flag, .. } => {
                text.strip_prefix(&format!("{flag}: ")).unwrap_or(&text).to_string()
            }
            _ => text,
        }
    }
}

/// What a `--atlas` or `--mask` value names: a file of the user's, or a built-in file.
#[derive(Debug, Clone)]
pub enum Resolved {
    /// A file on disk, the path as given.
    File(PathBuf),
    /// A built-in file.
    BuiltIn {
        /// The built-in it belongs to.
        built_in: &'static BuiltIn,
        /// The file.
        file: &'static EmbeddedFile,
    },
}

impl Resolved {
    /// A path readers can open: the user's file, or the built-in file written to the cache.
    ///
    /// # Errors
    /// [`AtlasError::Cache`] when a built-in file cannot be written.
    pub fn path(&self) -> Result<PathBuf, AtlasError> {
        match self {
            Resolved::File(path) => Ok(path.clone()),
            Resolved::BuiltIn { built_in, file } => materialise(built_in, file),
        }
    }

    /// The built-in, if the value named one.
    pub fn built_in(&self) -> Option<&'static BuiltIn> {
        match self {
            Resolved::File(_) => None,
            Resolved::BuiltIn { built_in, .. } => Some(built_in),
        }
    }

    /// The built-in file, if the value named one.
    pub fn embedded(&self) -> Option<&'static EmbeddedFile> {
        match self {
            Resolved::File(_) => None,
            Resolved::BuiltIn { file, .. } => Some(file),
        }
    }
}

/// What a flag wants from a built-in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Want {
    /// A region table (`--atlas`).
    Table,
    /// A label volume (atlas seeds).
    LabelVolume,
    /// A mask: the brain mask, or the non-zero voxels of an atlas's label volume.
    Mask,
}

fn resolve(value: &Path, flag: &str, want: Want) -> Result<Resolved, AtlasError> {
    if value.is_file() {
        return Ok(Resolved::File(value.to_path_buf()));
    }
    let name = value.to_str().unwrap_or_default();
    let Some(built_in) = find(name) else {
        let (wanted, names) = match want {
            Want::Table => ("region table (TSV)", names_of(BuiltInKind::Atlas)),
            Want::LabelVolume => ("label volume (NIfTI)", names_of(BuiltInKind::Atlas)),
            Want::Mask => ("mask volume (NIfTI)", NAMES.join(", ")),
        };
        return Err(AtlasError::Unknown {
            flag: flag.into(),
            value: value.display().to_string(),
            wanted,
            names,
        });
    };
    let file = match want {
        Want::Table => built_in.table.as_ref(),
        Want::LabelVolume => built_in.volume.as_ref().filter(|_| built_in.kind == BuiltInKind::Atlas),
        Want::Mask => built_in.volume.as_ref(),
    };
    let file = file.ok_or_else(|| AtlasError::WrongKind {
        flag: flag.into(),
        name: name.into(),
        kind: built_in.kind.word(),
        hint: format!("give it to --mask; atlases: {}", names_of(BuiltInKind::Atlas)),
    })?;
    Ok(Resolved::BuiltIn { built_in, file })
}

/// Resolves an `--atlas` value to a region table: an existing file, else a built-in atlas.
///
/// # Errors
/// [`AtlasError::Unknown`] (listing the built-in atlases) or [`AtlasError::WrongKind`] (a mask
/// name), naming `flag`.
pub fn resolve_table(value: &Path, flag: &str) -> Result<Resolved, AtlasError> {
    resolve(value, flag, Want::Table)
}

/// Resolves a label-volume value (atlas seeds, region matrices from a volume): an existing
/// file, else the label volume of a built-in atlas.
///
/// # Errors
/// As [`resolve_table`].
pub fn resolve_volume(value: &Path, flag: &str) -> Result<Resolved, AtlasError> {
    resolve(value, flag, Want::LabelVolume)
}

/// Resolves a `--mask` value: an existing file, else a built-in mask, or a built-in atlas (its
/// label volume: the voxels of all its regions).
///
/// # Errors
/// [`AtlasError::Unknown`], listing every built-in name.
pub fn resolve_mask(value: &Path, flag: &str) -> Result<Resolved, AtlasError> {
    resolve(value, flag, Want::Mask)
}

/// The readable path of an `--atlas` value of a run (None stays None).
///
/// # Errors
/// As [`resolve_table`] and [`Resolved::path`].
pub fn atlas_path(value: Option<&Path>) -> Result<Option<PathBuf>, AtlasError> {
    value.map(|value| resolve_table(value, "--atlas")?.path()).transpose()
}

/// The readable path of a `--mask` value of a run (None stays None).
///
/// # Errors
/// As [`resolve_mask`] and [`Resolved::path`].
pub fn mask_path(value: Option<&Path>) -> Result<Option<PathBuf>, AtlasError> {
    value.map(|value| resolve_mask(value, "--mask")?.path()).transpose()
}

/// The readable path of a label-volume value (`NAME|FILE` of a flag taking an atlas volume,
/// such as atlas seeds or region matrices from a volume): the file, or the built-in atlas's
/// label volume written to the cache folder.
///
/// # Errors
/// As [`resolve_volume`] and [`Resolved::path`].
pub fn volume_path(value: &Path, flag: &str) -> Result<PathBuf, AtlasError> {
    resolve_volume(value, flag)?.path()
}

/// Whether a configuration-file value should stay as written instead of being read from the
/// file's folder: a built-in name with no file of that name in `folder`.
pub fn is_builtin_value(value: &str, folder: &Path) -> bool {
    find(value).is_some() && !folder.join(value).is_file()
}

/// The folder built-in files are written to, one per strata version:
/// `<temporary folder>/strata-<version>-builtin/<name>/` (`TMPDIR` chooses the temporary folder).
pub fn cache_folder(built_in: &BuiltIn) -> PathBuf {
    std::env::temp_dir().join(format!("strata-{}-builtin", crate::VERSION)).join(built_in.name)
}

/// Writes a built-in file into [`cache_folder`] unless an identical copy is there, and returns
/// its path. The file is written to a temporary name and renamed, so concurrent runs never see
/// half a file; an existing copy is compared byte for byte, so a stale or altered one is
/// replaced.
///
/// # Errors
/// [`AtlasError::Cache`] when the folder or the file cannot be written.
pub fn materialise(built_in: &BuiltIn, file: &EmbeddedFile) -> Result<PathBuf, AtlasError> {
    materialise_in(&cache_folder(built_in), file)
}

fn materialise_in(folder: &Path, file: &EmbeddedFile) -> Result<PathBuf, AtlasError> {
    let path = folder.join(file.name);
    if std::fs::read(&path).is_ok_and(|bytes| bytes == file.bytes) {
        return Ok(path);
    }
    let cache = |source| AtlasError::Cache { path: path.clone(), source };
    std::fs::create_dir_all(folder).map_err(cache)?;
    let mut temporary = tempfile::NamedTempFile::new_in(folder).map_err(cache)?;
    std::io::Write::write_all(&mut temporary, file.bytes).map_err(cache)?;
    temporary.persist(&path).map_err(|error| cache(error.error))?;
    Ok(path)
}

/// Writes a built-in's files (region table, volume, README.md) into `folder`, creating it.
/// A file already there with the same bytes is left alone; one that differs is refused unless
/// `force`. Returns the paths written (or found identical).
///
/// # Errors
/// [`AtlasError::ExportExists`] for a differing file without `force` (nothing is written then);
/// [`AtlasError::Export`] when a file cannot be written.
pub fn export(built_in: &BuiltIn, folder: &Path, force: bool) -> Result<Vec<PathBuf>, AtlasError> {
    let files = built_in.files();
    if !force {
        for file in &files {
            let path = folder.join(file.name);
            if path.exists() && std::fs::read(&path).map_or(true, |bytes| bytes != file.bytes) {
                return Err(AtlasError::ExportExists { path });
            }
        }
    }
    let mut written = Vec::new();
    for file in files {
        let path = folder.join(file.name);
        let error = |source| AtlasError::Export { path: path.clone(), source };
        std::fs::create_dir_all(folder).map_err(error)?;
        let mut temporary = tempfile::NamedTempFile::new_in(folder).map_err(error)?;
        std::io::Write::write_all(&mut temporary, file.bytes).map_err(error)?;
        temporary.persist(&path).map_err(|persist| error(persist.error))?;
        written.push(path);
    }
    Ok(written)
}

/// Hex SHA-256 of bytes.
pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::Digest;
    sha2::Sha256::digest(bytes).iter().map(|byte| format!("{byte:02x}")).collect()
}

/// What `strata atlases` shows of a built-in, read from its embedded files.
#[derive(Debug, Clone, PartialEq)]
pub struct Description {
    /// Rows of the region table (atlases).
    pub regions: Option<usize>,
    /// Distinct values of the table's `network` column (atlases).
    pub networks: Option<usize>,
    /// Grid of the volume.
    pub grid: Option<[usize; 3]>,
    /// Voxel size (mm) of the volume.
    pub voxel_mm: Option<[f64; 3]>,
}

/// Reads the table's row and network counts and the volume's grid from the embedded files.
pub fn describe(built_in: &BuiltIn) -> Description {
    let (regions, networks) = match &built_in.table {
        Some(table) => {
            let text = std::str::from_utf8(table.bytes).unwrap_or_default();
            let mut lines = text.lines().filter(|line| !line.trim().is_empty());
            let header: Vec<&str> = lines.next().unwrap_or_default().split('\t').collect();
            let network_column = header.iter().position(|column| *column == "network");
            let rows: Vec<Vec<&str>> = lines.map(|line| line.split('\t').collect()).collect();
            let networks = network_column.map(|column| {
                let mut names: Vec<&str> = rows.iter().filter_map(|row| row.get(column).copied()).collect();
                names.sort_unstable();
                names.dedup();
                names.len()
            });
            (Some(rows.len()), networks)
        }
        None => (None, None),
    };
    let header = built_in.volume.as_ref().and_then(|volume| {
        let mut bytes = Vec::with_capacity(NIFTI1_HEADER_BYTES);
        flate2::read::GzDecoder::new(volume.bytes)
            .take(NIFTI1_HEADER_BYTES as u64)
            .read_to_end(&mut bytes)
            .ok()?;
        nifti::NiftiHeader::from_reader(&bytes[..]).ok()
    });
    Description {
        regions,
        networks,
        grid: header.as_ref().map(|h| [h.dim[1] as usize, h.dim[2] as usize, h.dim[3] as usize]),
        voxel_mm: header
            .as_ref()
            .map(|h| [f64::from(h.pixdim[1]), f64::from(h.pixdim[2]), f64::from(h.pixdim[3])]),
    }
}

/// `sizeof_hdr` of a NIfTI-1 header, also its length in bytes (nifti1.h).
const NIFTI1_HEADER_BYTES: usize = 348;

/// The listing of `strata atlases`: a header line and one aligned line per built-in.
pub fn listing() -> String {
    let mut rows =
        vec![["name", "kind", "regions", "networks", "volume", "source", "licence"].map(String::from)];
    for built_in in BUILT_INS {
        let description = describe(built_in);
        let count = |value: Option<usize>| value.map_or("-".to_string(), |v| v.to_string());
        let volume = match (description.grid, description.voxel_mm) {
            (Some(grid), Some(voxel)) => format!("{}x{}x{} at {} mm", grid[0], grid[1], grid[2], voxel[0]),
            _ => "-".into(),
        };
        rows.push([
            built_in.name.to_string(),
            built_in.kind.word().to_string(),
            count(description.regions),
            count(description.networks),
            volume,
            built_in.source.to_string(),
            built_in.licence.to_string(),
        ]);
    }
    let widths: Vec<usize> =
        (0..7).map(|column| rows.iter().map(|row| row[column].chars().count()).max().unwrap_or(0)).collect();
    let mut text = String::new();
    for row in rows {
        let cells: Vec<String> =
            row.iter().zip(&widths).map(|(cell, &width)| format!("{cell:<width$}")).collect();
        text.push_str(cells.join("  ").trim_end());
        text.push('\n');
    }
    text
}

/// What `strata atlases NAME` prints: the files with sizes and SHA-256, then the README.
pub fn details(built_in: &BuiltIn) -> String {
    let mut text =
        format!("{} (built-in {}, strata {}):\n", built_in.name, built_in.kind.word(), crate::VERSION);
    for file in built_in.files() {
        text.push_str(&format!(
            "  {}  {} bytes  sha256 {}\n",
            file.name,
            file.bytes.len(),
            sha256_hex(file.bytes)
        ));
    }
    text.push('\n');
    text.push_str(std::str::from_utf8(built_in.readme.bytes).unwrap_or_default());
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_list_the_registry_in_order() {
        assert_eq!(NAMES, BUILT_INS.iter().map(|b| b.name).collect::<Vec<_>>().as_slice());
    }

    #[test]
    fn descriptions_read_from_the_embedded_files() {
        // Row and network counts as in atlases/*/README.md (Dosenbach et al. 2010: 160 regions,
        // six networks; the Seitzman source file: 300 regions, 13 networks plus `unassigned`).
        let expected = [
            ("northfield100", Some(100), Some(7), Some([45, 54, 45]), 4.0),
            ("dosenbach160", Some(160), Some(6), Some([91, 109, 91]), 2.0),
            ("seitzman300", Some(300), Some(14), Some([91, 109, 91]), 2.0),
            ("mni152-2mm", None, None, Some([91, 109, 91]), 2.0),
        ];
        for (name, regions, networks, grid, voxel) in expected {
            let description = describe(find(name).unwrap());
            assert_eq!(
                (description.regions, description.networks, description.grid),
                (regions, networks, grid),
                "{name}"
            );
            for size in description.voxel_mm.unwrap() {
                assert!((size - voxel).abs() < 1e-6, "{name}: voxel {size} mm");
            }
        }
    }

    #[test]
    fn an_existing_file_wins_over_a_built_in_name() {
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("dosenbach160");
        std::fs::write(&file, "index\tname\n1\ta\n").unwrap();
        assert!(matches!(resolve_table(&file, "--atlas").unwrap(), Resolved::File(path) if path == file));
        let resolved = resolve_table(Path::new("dosenbach160"), "--atlas").unwrap();
        assert_eq!(resolved.built_in().unwrap().name, "dosenbach160");
        assert!(is_builtin_value("dosenbach160", Path::new("/nonexistent")));
        assert!(!is_builtin_value("dosenbach160", dir.path()));
        assert!(!is_builtin_value("regions.tsv", Path::new("/nonexistent")));
    }

    #[test]
    fn unknown_names_and_wrong_kinds_say_what_to_give() {
        let error = resolve_table(Path::new("dosenbach16"), "--atlas").unwrap_err().to_string();
        assert_eq!(
            error,
            "--atlas: 'dosenbach16' is neither an existing file nor a built-in name; give a region table \
             (TSV) file, or one of the built-in names northfield100, dosenbach160, seitzman300 (`strata \
             atlases` describes them)"
        );
        let error = resolve_table(Path::new("mni152-2mm"), "--atlas").unwrap_err().to_string();
        assert_eq!(
            error,
            "--atlas: 'mni152-2mm' is a built-in mask, which --atlas does not take; give it to --mask; \
             atlases: northfield100, dosenbach160, seitzman300"
        );
        let error = resolve_mask(Path::new("brain"), "--mask").unwrap_err().to_string();
        assert!(error.contains("northfield100, dosenbach160, seitzman300, mni152-2mm"), "{error}");
        assert!(
            resolve_mask(Path::new("seitzman300"), "--mask").is_ok(),
            "an atlas's label volume is a mask"
        );
        assert!(resolve_volume(Path::new("mni152-2mm"), "--seed-atlas").is_err());
        let labels = volume_path(Path::new("seitzman300"), "--seed-atlas").unwrap();
        assert_eq!(
            std::fs::read(labels).unwrap(),
            find("seitzman300").unwrap().volume.as_ref().unwrap().bytes
        );
    }

    #[test]
    fn materialised_files_equal_the_embedded_bytes() {
        let built_in = find("dosenbach160").unwrap();
        let file = built_in.table.as_ref().unwrap();
        let path = materialise(built_in, file).unwrap();
        assert_eq!(path, cache_folder(built_in).join("dosenbach160_regions.tsv"));
        assert_eq!(std::fs::read(&path).unwrap(), file.bytes);
        // A stale copy is replaced (in a folder of the test's own, not the shared cache).
        let dir = tempfile::tempdir().unwrap();
        let path = materialise_in(dir.path(), file).unwrap();
        std::fs::write(&path, b"stale").unwrap();
        assert_eq!(materialise_in(dir.path(), file).unwrap(), path);
        assert_eq!(std::fs::read(&path).unwrap(), file.bytes);
    }

    #[test]
    fn export_refuses_to_replace_a_different_file() {
        let dir = tempfile::tempdir().unwrap();
        let built_in = find("mni152-2mm").unwrap();
        let written = export(built_in, &dir.path().join("mask"), false).unwrap();
        assert_eq!(written.len(), 2);
        // Identical files are fine; a changed one is refused, then replaced with --force.
        export(built_in, &dir.path().join("mask"), false).unwrap();
        std::fs::write(&written[1], "changed").unwrap();
        let error = export(built_in, &dir.path().join("mask"), false).unwrap_err().to_string();
        assert!(error.ends_with("exists and differs from the built-in file; remove it, choose another folder, or pass --force"), "{error}");
        export(built_in, &dir.path().join("mask"), true).unwrap();
        assert_eq!(std::fs::read(&written[1]).unwrap(), built_in.readme.bytes);
    }
}
