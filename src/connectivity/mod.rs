//! `strata connectivity`: seed maps or region matrices from preprocessed 4D BOLD series, one
//! per participant, as inputs for `strata run`.
//!
//! Beside the pipeline, before its read stage: each participant's series is streamed once
//! ([`stream`]), its confounds regressed out and censored frames dropped ([`confounds`]), and the
//! residual correlations with a seed ([`seed`]: mask file, atlas label or sphere) or between
//! atlas regions written on the series' grid or as an R x R `.npy`, named `sub-<label>_...` so
//! `strata run --inputs` finds them. Participants run in parallel; every check that needs no
//! voxel value (files, grids, confounds, censoring) runs for every participant before the first
//! series is streamed, so bad input stops the command early.

pub mod confounds;
pub mod seed;
pub mod stream;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::time::Instant;

use rayon::prelude::*;
use serde_json::{json, Value};

use crate::error::Error;
use crate::features::fisher_z;
use crate::maps::{intent, write_bytes_atomically, write_volume, VolumeIntent, WriteError};
use crate::read::frames::FrameReader;
use crate::read::{expand_patterns, participant_label, ReadError};
use crate::report::{Log, OutputFolder};

pub use confounds::{NuisanceModel, Selection};
pub use seed::{GridVolume, Regions, Target};

/// What the written correlations are.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Statistic {
    /// Pearson r (`strata run --values r`, its default, applies Fisher z itself).
    R,
    /// Fisher z = atanh(r) (`strata run --values z`).
    Z,
}

impl Statistic {
    fn key(self) -> &'static str {
        match self {
            Statistic::R => "r",
            Statistic::Z => "z",
        }
    }

    fn name(self) -> &'static str {
        match self {
            Statistic::R => "Pearson r",
            Statistic::Z => "Fisher z",
        }
    }
}

/// The validated options of `strata connectivity`.
#[derive(Debug, Clone)]
pub struct ConnectivityOptions {
    /// Glob patterns (or paths) of the 4D BOLD series, named `sub-<label>_...`.
    pub bold: Vec<String>,
    /// Glob patterns of the confounds tables (one per participant, matched by `sub-<label>`);
    /// empty: no confound regression (the mean is still removed).
    pub confounds: Vec<String>,
    /// The confound columns; None: every numeric column (the censoring column left out).
    pub confound_columns: Option<Vec<String>>,
    /// The censoring column (1 keep, 0 drop), in the confounds tables or in `censor` tables.
    pub censor_column: Option<String>,
    /// Glob patterns of separate censoring tables; empty: the column is in the confounds tables.
    pub censor: Vec<String>,
    /// The seed or the regions.
    pub target: Target,
    /// r or Fisher z.
    pub statistic: Statistic,
    /// Output folder.
    pub out: PathBuf,
    /// Replace an existing output folder.
    pub force: bool,
}

/// A problem of the BOLD inputs, their tables or the seed.
#[derive(Debug, thiserror::Error)]
pub enum ConnectivityError {
    /// A participant's file cannot be used.
    #[error("{path}: participant {participant}: {problem}")]
    Input {
        /// The file.
        path: PathBuf,
        /// The participant.
        participant: String,
        /// What was found, what was expected and what to do.
        problem: String,
    },
    /// A file shared by every participant (seed mask, atlas volume) cannot be used.
    #[error("{path}: {problem}")]
    File {
        /// The file.
        path: PathBuf,
        /// What was found and what to do.
        problem: String,
    },
    /// A pattern or the matching of files to participants failed.
    #[error("{flag}: {problem}")]
    Matching {
        /// The flag whose files are concerned.
        flag: String,
        /// What is wrong and what to do.
        problem: String,
    },
    /// A reader error (unreadable or malformed NIfTI).
    #[error(transparent)]
    Read(#[from] ReadError),
}

/// One participant's files.
#[derive(Debug, Clone)]
pub struct ParticipantFiles {
    /// `sub-<label>`.
    pub participant: String,
    /// The 4D series.
    pub bold: PathBuf,
    /// The confounds table, if any.
    pub confounds: Option<PathBuf>,
    /// The table holding the censoring column, if any.
    pub censor: Option<PathBuf>,
}

/// What was computed for one participant (a row of `connectivity.tsv`).
#[derive(Debug, Clone, serde::Serialize)]
pub struct ParticipantResult {
    /// `sub-<label>`.
    pub participant_id: String,
    /// Frames of the series.
    pub frames: usize,
    /// Frames kept after censoring.
    pub frames_kept: usize,
    /// Rank of the nuisance model (intercept included).
    pub regressors: usize,
    /// Degrees of freedom of the correlations: kept frames - regressors - 1.
    pub dof: usize,
    /// Seed voxels (seed maps) or regions (matrices).
    pub seed_voxels: usize,
    /// Voxels (or regions) written as 0 because their residual series is constant.
    pub constant: usize,
    /// Voxels (or regions) written as 0 because they hold NaN or infinite values.
    pub nonfinite: usize,
    /// The files written, relative to the output folder.
    pub outputs: Vec<String>,
}

/// What `strata connectivity` did.
#[derive(Debug, Clone)]
pub struct ConnectivitySummary {
    /// Per participant, in `sub-<label>` order.
    pub participants: Vec<ParticipantResult>,
    /// The output folder.
    pub out: PathBuf,
    /// Files matched by --confounds or --censor that belong to no BOLD participant (ignored).
    pub unused_tables: Vec<PathBuf>,
    /// Wall-clock seconds.
    pub seconds: f64,
}

impl ConnectivitySummary {
    /// Lines for standard output.
    pub fn text(&self) -> String {
        let mut text = String::new();
        for result in &self.participants {
            text.push_str(&format!(
                "{}: {} of {} frames kept, {} regressor(s), dof {}; {} constant and {} non-finite {}; {}\n",
                result.participant_id,
                result.frames_kept,
                result.frames,
                result.regressors,
                result.dof,
                result.constant,
                result.nonfinite,
                if result.outputs.iter().any(|o| o.ends_with(".npy")) { "region(s)" } else { "voxel(s)" },
                result.outputs.first().map(String::as_str).unwrap_or("")
            ));
        }
        text.push_str(&format!(
            "{} participant(s) written to {} in {:.1} s\n",
            self.participants.len(),
            self.out.display(),
            self.seconds
        ));
        text
    }
}

/// Everything prepared for one participant before its series is streamed.
#[derive(Debug)]
struct Prepared {
    files: ParticipantFiles,
    model: NuisanceModel,
    dim: [usize; 3],
    header: nifti::NiftiHeader,
    /// The seed's voxels (seed maps).
    seed: Vec<usize>,
}

/// Matches BOLD series, confounds and censoring tables to participants by `sub-<label>`.
///
/// # Errors
/// [`ConnectivityError::Matching`] for a pattern that matches nothing, a BOLD file that is not
/// NIfTI or has no `sub-<label>`, two files of one kind for a participant, or a participant
/// whose confounds or censoring table is missing.
pub fn match_files(options: &ConnectivityOptions) -> Result<(Vec<ParticipantFiles>, Vec<PathBuf>), Error> {
    let expand = |flag: &str, patterns: &[String]| -> Result<Vec<PathBuf>, Error> {
        if patterns.is_empty() {
            return Ok(Vec::new());
        }
        expand_patterns(patterns).map_err(|error| match error {
            ReadError::Pattern { pattern, problem } => {
                ConnectivityError::Matching { flag: format!("{flag} '{pattern}'"), problem }.into()
            }
            other => other.into(),
        })
    };
    let by_label = |flag: &str, files: Vec<PathBuf>| -> Result<BTreeMap<String, PathBuf>, Error> {
        let mut map: BTreeMap<String, PathBuf> = BTreeMap::new();
        for path in files {
            let label = participant_label(&path).ok_or_else(|| ConnectivityError::Matching {
                flag: flag.to_string(),
                problem: format!(
                    "{}: no participant label in the file name; name files with a sub-<label> entity \
                     (sub-017_bold.nii.gz)",
                    path.display()
                ),
            })?;
            if let Some(first) = map.get(&label) {
                return Err(ConnectivityError::Matching {
                    flag: flag.to_string(),
                    problem: format!(
                        "participant {label}: two files, {} and {}; keep one per participant (narrow the pattern \
                         to one run)",
                        first.display(),
                        path.display()
                    ),
                }
                .into());
            }
            map.insert(label, path);
        }
        Ok(map)
    };
    let bold_files = expand("--bold", &options.bold)?;
    for path in &bold_files {
        let name = path.file_name().map(|n| n.to_string_lossy().to_ascii_lowercase()).unwrap_or_default();
        if !(name.ends_with(".nii") || name.ends_with(".nii.gz")) {
            return Err(ConnectivityError::Matching {
                flag: "--bold".into(),
                problem: format!(
                    "{}: not a NIfTI file (.nii or .nii.gz); give the 4D BOLD series",
                    path.display()
                ),
            }
            .into());
        }
    }
    let bold = by_label("--bold", bold_files)?;
    let mut confounds = by_label("--confounds", expand("--confounds", &options.confounds)?)?;
    let mut censor = by_label("--censor", expand("--censor", &options.censor)?)?;
    let mut participants = Vec::with_capacity(bold.len());
    for (participant, path) in bold {
        let take = |tables: &mut BTreeMap<String, PathBuf>, flag: &str, given: bool| -> Result<_, Error> {
            if !given {
                return Ok(None);
            }
            tables.remove(&participant).map(Some).ok_or_else(|| {
                ConnectivityError::Matching {
                    flag: flag.to_string(),
                    problem: format!(
                        "participant {participant} ({}) has no table among the files matched; add its \
                         sub-{}_... table or leave its BOLD series out of --bold",
                        path.display(),
                        participant.trim_start_matches("sub-")
                    ),
                }
                .into()
            })
        };
        let confounds_path = take(&mut confounds, "--confounds", !options.confounds.is_empty())?;
        let censor_path = take(&mut censor, "--censor", !options.censor.is_empty())?;
        participants.push(ParticipantFiles {
            participant,
            bold: path,
            confounds: confounds_path,
            censor: censor_path,
        });
    }
    let unused = confounds.into_values().chain(censor.into_values()).collect();
    Ok((participants, unused))
}

/// Computes and writes every participant's seed map or region matrix into `options.out`.
///
/// # Errors
/// Any [`ConnectivityError`], [`ReadError`] or [`WriteError`]; nothing is left in
/// `options.out` unless every participant succeeded (the folder is written under a temporary
/// name and renamed at the end).
pub fn run(options: &ConnectivityOptions, log: &Log) -> Result<ConnectivitySummary, Error> {
    let started = Instant::now();
    let (participants, unused_tables) = match_files(options)?;
    if let Some(first) = unused_tables.first() {
        log.note(&format!(
            "{} table(s) matched by --confounds or --censor belong to no series of --bold and are ignored (first: {})",
            unused_tables.len(),
            first.display()
        ));
    }
    let output = OutputFolder::prepare(&options.out, options.force)?;

    // The shared volumes: seed mask or atlas label volume.
    let (shared, labels) = match &options.target {
        Target::Mask(path) => (Some(GridVolume::read(path, "(seed mask)")?), None),
        Target::Label { atlas, .. } | Target::Regions(atlas) => {
            // A file of that name, else a built-in atlas's label volume (`strata atlases`).
            let path = crate::atlas::volume_path(atlas, "--atlas-volume")?;
            let volume = GridVolume::read(&path, "(atlas volume)")?;
            let labels = seed::labels_of(&volume)?;
            (Some(volume), Some(labels))
        }
        Target::Sphere { .. } => (None, None),
    };
    let seed_voxels = match (&options.target, &shared, &labels) {
        (Target::Mask(_), Some(mask), _) => seed::mask_voxels(mask)?,
        (Target::Label { label, .. }, Some(atlas), Some(labels)) => {
            seed::label_voxels(atlas, labels, *label)?
        }
        _ => Vec::new(),
    };
    let regions = match (&options.target, &labels) {
        (Target::Regions(_), Some(labels)) => Some(Regions::from_labels(labels)),
        _ => None,
    };
    let flag = match &options.target {
        Target::Mask(_) => "--seed-mask",
        _ => "--atlas-volume",
    };

    log.note(&format!("checking {} participant(s): headers, confounds, censoring", participants.len()));
    let prepared: Vec<Prepared> = participants
        .into_iter()
        .map(|files| prepare(files, options, shared.as_ref(), flag, &seed_voxels))
        .collect::<Result<_, Error>>()?;

    let progress = log.progress("connectivity", prepared.len(), "participants");
    let results: Vec<Result<ParticipantResult, Error>> = prepared
        .par_iter()
        .map(|item| {
            let result = compute(item, options, regions.as_ref(), output.path());
            crate::report::progress::tick(1);
            result
        })
        .collect();
    drop(progress);
    let results: Vec<ParticipantResult> = results.into_iter().collect::<Result<_, Error>>()?;

    let names = match &options.target {
        Target::Regions(atlas) => region_names(atlas)?,
        _ => None,
    };
    write_tables(output.path(), &results, regions.as_ref(), names.as_ref())?;
    write_json(&output.path().join("dataset_description.json"), &dataset_description())?;
    let out = output.commit()?;
    Ok(ConnectivitySummary {
        participants: results,
        out,
        unused_tables,
        seconds: started.elapsed().as_secs_f64(),
    })
}

/// Reads a participant's header and tables, builds its nuisance model and seed, and checks the
/// grid: everything short of the voxel values.
fn prepare(
    files: ParticipantFiles,
    options: &ConnectivityOptions,
    shared: Option<&GridVolume>,
    flag: &str,
    seed_voxels: &[usize],
) -> Result<Prepared, Error> {
    let participant = files.participant.as_str();
    let reader = FrameReader::open(&files.bold, participant)?;
    if let Some(volume) = shared {
        volume.check_grid(&files.bold, participant, reader.dim, &reader.affine, flag)?;
    }
    let exclude = if files.censor.is_none() { options.censor_column.as_deref() } else { None };
    let confounds = match &files.confounds {
        Some(path) => {
            let selection = match &options.confound_columns {
                Some(names) => Selection::Named(names),
                None => Selection::AllNumeric,
            };
            confounds::read_confounds(path, participant, reader.frames, selection, exclude)?
        }
        None => confounds::Confounds::default(),
    };
    let kept = match (&options.censor_column, files.censor.as_ref().or(files.confounds.as_ref())) {
        (Some(column), Some(table)) => confounds::read_censoring(table, participant, reader.frames, column)?,
        _ => vec![true; reader.frames],
    };
    let model = confounds::nuisance_model(&files.bold, participant, confounds, kept)?;
    let seed = match &options.target {
        Target::Sphere { centre, radius } => {
            let voxels = seed::sphere_voxels(reader.dim, &reader.affine, *centre, *radius);
            if voxels.is_empty() {
                return Err(ConnectivityError::Input {
                    path: files.bold.clone(),
                    participant: participant.to_string(),
                    problem: format!(
                        "the sphere of radius {radius} mm at ({}, {}, {}) mm holds no voxel centre of this grid \
                         (voxel centres span {}); give coordinates in this series' world space (mm) or a larger \
                         --radius",
                        centre[0],
                        centre[1],
                        centre[2],
                        seed::grid_extent(reader.dim, &reader.affine)
                    ),
                }
                .into());
            }
            voxels
        }
        _ => seed_voxels.to_vec(),
    };
    Ok(Prepared { dim: reader.dim, header: reader.header.clone(), files, model, seed })
}

/// Streams one participant's series and writes its map or matrix and sidecar.
fn compute(
    item: &Prepared,
    options: &ConnectivityOptions,
    regions: Option<&Regions>,
    dir: &Path,
) -> Result<ParticipantResult, Error> {
    let participant = item.files.participant.as_str();
    let statistic = options.statistic;
    let transform = |r: f64| match statistic {
        Statistic::R => r,
        Statistic::Z => fisher_z(r),
    };
    let model = &item.model;
    let (outputs, seed_voxels, constant, nonfinite, seed_field) = match regions {
        Some(regions) => {
            let matrix = stream::region_matrix(&item.files.bold, participant, model, regions)?;
            let count = matrix.regions;
            let values: Vec<f32> = matrix
                .r
                .iter()
                .enumerate()
                .map(|(index, &r)| {
                    if index / count == index % count && statistic == Statistic::Z {
                        0.0
                    } else {
                        transform(r) as f32
                    }
                })
                .collect();
            let array = ndarray::Array2::from_shape_vec((count, count), values)
                .expect("R x R values for an R x R matrix");
            let name = format!("{participant}_stat-{}_conn.npy", statistic.key());
            let mut bytes = Vec::new();
            ndarray_npy::WriteNpyExt::write_npy(&array, &mut bytes)
                .map_err(|error| WriteError::Encode { path: dir.join(&name), message: error.to_string() })?;
            write_bytes_atomically(&dir.join(&name), &bytes)?;
            let seed_field = json!({
                "Kind": "regions",
                "AtlasVolume": path_text(match &options.target { Target::Regions(path) => path, _ => Path::new("") }),
                "Regions": count,
                "RegionTable": "regions.tsv",
                "Diagonal": if statistic == Statistic::Z { 0.0 } else { 1.0 },
                "ConstantRegions": matrix.constant_regions.iter().map(|&r| regions.labels[r]).collect::<Vec<_>>(),
                "NonFiniteRegions": matrix.nonfinite_regions.iter().map(|&r| regions.labels[r]).collect::<Vec<_>>(),
            });
            (vec![name], count, matrix.constant_regions.len(), matrix.nonfinite_regions.len(), seed_field)
        }
        None => {
            let map = stream::seed_map(&item.files.bold, participant, model, &item.seed)?;
            let values: Vec<f32> = map.r.iter().map(|&r| transform(r) as f32).collect();
            let stem = format!("{participant}_stat-{}_seedmap", statistic.key());
            let name = format!("{stem}.nii.gz");
            let volume_intent = VolumeIntent {
                code: match statistic {
                    Statistic::R => intent::CORREL,
                    Statistic::Z => intent::ESTIMATE,
                },
                p1: match statistic {
                    Statistic::R => model.dof() as f32,
                    Statistic::Z => 0.0,
                },
                p2: 0.0,
                name: statistic.name(),
                stem: &stem,
            };
            write_volume(&dir.join(&name), &item.header, item.dim, values, &volume_intent)?;
            let seed_field = match &options.target {
                Target::Mask(path) => {
                    json!({"Kind": "mask", "File": path_text(path), "Voxels": item.seed.len()})
                }
                Target::Sphere { centre, radius } => json!({
                    "Kind": "sphere", "CentreMm": centre, "RadiusMm": radius, "Voxels": item.seed.len(),
                    "Rule": "voxels whose centre (sform, else qform, affine) lies within the radius"
                }),
                Target::Label { atlas, label } => json!({
                    "Kind": "label", "AtlasVolume": path_text(atlas), "Label": label, "Voxels": item.seed.len()
                }),
                Target::Regions(_) => Value::Null,
            };
            (vec![name], item.seed.len(), map.constant_voxels, map.nonfinite_voxels, seed_field)
        }
    };
    let result = ParticipantResult {
        participant_id: participant.to_string(),
        frames: model.kept.len(),
        frames_kept: model.kept_count(),
        regressors: model.basis.rank,
        dof: model.dof(),
        seed_voxels,
        constant,
        nonfinite,
        outputs: outputs.clone(),
    };
    let stem = outputs[0].trim_end_matches(".nii.gz").trim_end_matches(".npy").to_string();
    let sidecar = sidecar(item, options, &result, seed_field);
    let sidecar_name = format!("{stem}.json");
    write_json(&dir.join(&sidecar_name), &sidecar)?;
    let mut result = result;
    result.outputs.push(sidecar_name);
    Ok(result)
}

fn sidecar(item: &Prepared, options: &ConnectivityOptions, result: &ParticipantResult, seed: Value) -> Value {
    let model = &item.model;
    let filled: serde_json::Map<String, Value> = model
        .confounds
        .names
        .iter()
        .zip(&model.confounds.filled)
        .filter(|(_, &count)| count > 0)
        .map(|(name, &count)| (name.clone(), json!(count)))
        .collect();
    let description = match options.statistic {
        Statistic::R => "Pearson correlation of residual series (after regressing the intercept and the confounds out over the kept frames)",
        Statistic::Z => "Fisher z = atanh(r) of the Pearson correlation of residual series (after regressing the intercept and the confounds out over the kept frames); |r| clipped at 1 - 1e-7",
    };
    json!({
        "Statistic": options.statistic.name(),
        "Description": description,
        "Participant": result.participant_id,
        "Source": path_text(&item.files.bold),
        "Seed": seed,
        "Frames": result.frames,
        "FramesKept": result.frames_kept,
        "Censoring": match &options.censor_column {
            Some(column) => json!({
                "File": item.files.censor.as_ref().or(item.files.confounds.as_ref()).map(|p| path_text(p)),
                "Column": column,
                "Rule": "1 keeps a frame, 0 drops it",
            }),
            None => Value::Null,
        },
        "Confounds": match &item.files.confounds {
            Some(path) => json!({
                "File": path_text(path),
                "Columns": model.confounds.names,
                "LeadingMissingFilledWithColumnMean": filled,
            }),
            None => Value::Null,
        },
        "Regressors": result.regressors,
        "DegreesOfFreedom": result.dof,
        "ConstantSeries": result.constant,
        "NonFiniteSeries": result.nonfinite,
        "FillValue": 0.0,
        "GeneratedBy": {"Name": "strata", "Version": crate::VERSION},
    })
}

/// Region name and network by atlas label.
type RegionNames = std::collections::HashMap<i64, (String, String)>;

/// Region names and networks by label, when the atlas volume is a built-in atlas (not a file
/// of that name) whose region table numbers its regions by the volume's labels (`index`).
fn region_names(atlas: &Path) -> Result<Option<RegionNames>, Error> {
    let name = atlas.to_string_lossy();
    if atlas.exists() || crate::atlas::find(&name).is_none() {
        return Ok(None);
    }
    let Some(table_path) = crate::atlas::atlas_path(Some(atlas))? else { return Ok(None) };
    let table = crate::read::read_table(&table_path)?;
    let (Some(index), Some(names)) = (table.column("index"), table.column("name")) else { return Ok(None) };
    let networks = table.column("network");
    Ok(Some(
        index
            .iter()
            .enumerate()
            .filter_map(|(row, index)| {
                let network = networks.as_ref().map_or("n/a", |column| column[row]);
                Some((index.trim().parse::<i64>().ok()?, (names[row].to_string(), network.to_string())))
            })
            .collect(),
    ))
}

/// `connectivity.tsv` (one row per participant) and, for matrices, `regions.tsv` (with the
/// atlas's region names and networks where `names` gives them, else `label-N` and n/a).
fn write_tables(
    dir: &Path,
    results: &[ParticipantResult],
    regions: Option<&Regions>,
    names: Option<&RegionNames>,
) -> Result<(), Error> {
    let kind = if regions.is_some() { "regions" } else { "seed_voxels" };
    let mut table = format!(
        "participant_id\tframes\tframes_kept\tregressors\tdof\t{kind}\tconstant\tnonfinite\toutput\n"
    );
    for result in results {
        table.push_str(&format!(
            "{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\t{}\n",
            result.participant_id,
            result.frames,
            result.frames_kept,
            result.regressors,
            result.dof,
            result.seed_voxels,
            result.constant,
            result.nonfinite,
            result.outputs[0]
        ));
    }
    write_bytes_atomically(&dir.join("connectivity.tsv"), table.as_bytes())?;
    if let Some(regions) = regions {
        let mut table = String::from("index\tname\tnetwork\tlabel\tvoxels\n");
        for (row, (label, count)) in regions.labels.iter().zip(&regions.voxel_counts).enumerate() {
            let (name, network) = names
                .and_then(|names| names.get(label).cloned())
                .unwrap_or_else(|| (format!("label-{label}"), "n/a".to_string()));
            table.push_str(&format!("{}\t{name}\t{network}\t{label}\t{count}\n", row + 1));
        }
        write_bytes_atomically(&dir.join("regions.tsv"), table.as_bytes())?;
    }
    Ok(())
}

/// The BIDS derivative dataset description of the folder (BIDS v1.11.1; see
/// [`crate::pipeline::dataset_description`] for the fields).
fn dataset_description() -> Value {
    let mut description = crate::pipeline::dataset_description();
    description["Name"] = json!("strata connectivity from preprocessed BOLD series");
    description
}

fn write_json(path: &Path, value: &Value) -> Result<(), Error> {
    let text = serde_json::to_string_pretty(value)
        .map_err(|error| WriteError::Encode { path: path.to_path_buf(), message: error.to_string() })?;
    write_bytes_atomically(path, format!("{text}\n").as_bytes())?;
    Ok(())
}

fn path_text(path: &Path) -> String {
    path.display().to_string()
}
