//! The fictional Northfield Sleep and Mood cohort generator.
//!
//! strata's built-in demo and its planted-structure tests and benchmarks draw their data here. The
//! study is invented: adolescents labelled `insomnia` or `control`, with age, sex, mean framewise
//! displacement, site and a one-year follow-up insomnia severity score. Participants come from a
//! few latent subgroups with different connectivity profiles; diagnoses are spread across all of
//! them, and the insomnia-versus-control difference sits in different edges (matrices) or brain
//! locations (seed maps) in each subgroup.
//!
//! Connectivity is built in Fisher z space and mapped back with r = tanh(z):
//!
//! ```text
//! z = baseline + separation * noise_sd * subgroup_profile + diagnosis_effect * [insomnia] * effect_pattern(subgroup)
//!     + age_effect * age_pattern * (age - 15) / 3 + motion_effect * motion_pattern * (fd - median) / median
//!     + participant noise (sd noise_sd)
//! ```
//!
//! Every random draw comes from [`crate::seed::rng`] keyed by the scenario seed, a stage name and
//! the participant index, so the cohort is identical at any thread count. This module only makes
//! files; reading them back is the read stage's job.

use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

use ndarray::{Array2, Array3};
use rand::seq::SliceRandom;
use rand::Rng;
use rand_distr::{Distribution, LogNormal, Normal};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use thiserror::Error;

use crate::seed;

/// Voxel size of the demo seed-map grid, in mm (the "coarse 4 mm grid" of the design).
pub const VOXEL_SIZE_MM: f64 = 4.0;

/// Networks of the fictional Northfield atlas, with the share of regions each holds
/// (trade names of common resting-state networks; shares are our own choice).
pub const NETWORKS: [(&str, &str, usize); 7] = [
    ("Default", "DMN", 16),
    ("Salience", "SAL", 14),
    ("Frontoparietal", "FPN", 14),
    ("Sensorimotor", "SMN", 16),
    ("Visual", "VIS", 14),
    ("DorsalAttention", "DAN", 14),
    ("Limbic", "LIM", 12),
];

/// Ellipsoid "brain" centre in MNI-like mm (our own choice, roughly the centre of an adult brain).
const BRAIN_CENTRE_MM: [f64; 3] = [0.0, -18.0, 14.0];
/// Ellipsoid semi-axes in mm (roughly an adult brain's half-width, half-length, half-height).
const BRAIN_SEMI_AXES_MM: [f64; 3] = [68.0, 86.0, 60.0];
/// MNI-like coordinate of the centre voxel, chosen so a 45 x 54 x 45 grid gets the usual MNI
/// 4 mm origin (90, -126, -72).
const GRID_CENTRE_MM: [f64; 3] = [2.0, -20.0, 16.0];

/// Baseline Fisher z within a network (our own choice: r about 0.4).
const BASELINE_WITHIN_Z: f64 = 0.45;
/// Baseline Fisher z between networks (our own choice: r about 0.1).
const BASELINE_BETWEEN_Z: f64 = 0.1;
/// Standard deviation of the fixed edge-level baseline jitter (our own choice).
const BASELINE_EDGE_SD: f64 = 0.12;
/// Weight of the edge-level part of a subgroup profile relative to its network-block part.
const PROFILE_EDGE_WEIGHT: f64 = 0.6;
/// Spread of each participant's loading on their subgroup profile (1 +- this, uniform).
const PROFILE_LOADING_SPREAD: f64 = 0.3;
/// Age in years: uniform between these bounds (adolescent cohort).
const AGE_RANGE_YEARS: (f64, f64) = (12.0, 18.0);
/// Median mean framewise displacement in mm (common order of magnitude for adolescents).
const FD_MEDIAN_MM: f64 = 0.12;
/// Log-scale spread of the log-normal mean framewise displacement.
const FD_LOG_SD: f64 = 0.45;
/// Follow-up insomnia severity score: control mean, insomnia increase, per-subgroup shifts, noise.
const FOLLOWUP_CONTROL_MEAN: f64 = 6.0;
/// Increase of the follow-up score for insomnia participants.
const FOLLOWUP_INSOMNIA_SHIFT: f64 = 8.0;
/// Follow-up score shift per subgroup (cycled), so subgroup predicts the outcome a little.
const FOLLOWUP_SUBGROUP_SHIFT: [f64; 3] = [0.0, 3.0, -2.0];
/// Standard deviation of the follow-up score noise.
const FOLLOWUP_NOISE_SD: f64 = 3.0;
/// Largest follow-up score (the 7-item insomnia severity scale ranges 0-28, common practice).
const FOLLOWUP_MAX: f64 = 28.0;
/// Number of smooth noise blobs per participant seed map (our own choice).
const NOISE_BLOB_COUNT: usize = 40;
/// Width (Gaussian sigma, mm) of the smooth noise blobs.
const NOISE_BLOB_SIGMA_MM: f64 = 10.0;
/// Share of the seed-map noise variance that is white (voxel-independent).
const WHITE_NOISE_SHARE: f64 = 0.2;
/// Width (sigma, mm) of the subgroup-profile blobs of the seed maps.
const PROFILE_BLOB_SIGMA_MM: f64 = 14.0;
/// Number of subgroup-profile blobs per subgroup in the seed maps.
const PROFILE_BLOB_COUNT: usize = 6;
/// Peak of a seed-map subgroup-profile blob relative to `separation * noise_sd`: blobs cover a
/// small share of the brain, so their peak must exceed the matrices' per-edge profile for a
/// similar participant-similarity contrast (tuned so the default seed maps separate about as
/// well as the default matrices).
const SEED_PROFILE_GAIN: f64 = 3.0;
/// Width (sigma, mm) of the diagnosis-effect blob of each subgroup.
const EFFECT_BLOB_SIGMA_MM: f64 = 9.0;
/// Gzip level of written NIfTI files (flate2 default level, a balance of size and speed).
const NIFTI_GZIP_LEVEL: u32 = 6;
/// NIfTI xform code 4: aligned to the MNI152 template space.
const XFORM_MNI: i16 = 4;
/// NIfTI xyzt_units value 2: spatial unit millimetres.
const UNITS_MM: u8 = 2;
/// NIfTI datatype 16: float32.
const DATATYPE_FLOAT32: i16 = 16;
/// Largest |r| written, so every value stays strictly inside (-1, 1) in float32.
const R_LIMIT: f64 = 0.999_999;

/// Diagnosis label of patients.
pub const INSOMNIA: &str = "insomnia";
/// Diagnosis label of the comparison group.
pub const CONTROL: &str = "control";

/// A generator definition: everything that decides the fictional cohort.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Scenario {
    /// Number of participants.
    pub participant_count: usize,
    /// Share of participants in each latent subgroup (sums to 1); empty means one homogeneous
    /// population (subgroup label 0).
    pub subgroup_proportions: Vec<f64>,
    /// Subgroup profile strength, in units of the participant noise standard deviation.
    pub separation: f64,
    /// Insomnia-minus-control difference on the affected edges or voxels, in Fisher z.
    pub diagnosis_effect: f64,
    /// Share of participants labelled insomnia, within every subgroup.
    pub insomnia_fraction: f64,
    /// Participant noise standard deviation in Fisher z.
    pub noise_sd: f64,
    /// Age effect in Fisher z per 3 years, on a fixed random pattern.
    pub age_effect: f64,
    /// Motion effect in Fisher z per median of fd_mean above the median, on short-range edges.
    pub motion_effect: f64,
    /// Number of atlas regions of the matrices.
    pub region_count: usize,
    /// Seed-map grid (voxels at 4 mm).
    pub grid: [usize; 3],
    /// Number of acquisition sites (labels `1`..; no site effect is planted).
    pub site_count: usize,
    /// Share of follow-up scores left missing (`n/a` in participants.tsv, NaN in memory).
    pub followup_missing_fraction: f64,
    /// Prefix of participant labels: `sub-<prefix><number>`.
    pub id_prefix: String,
    /// Seed of every random draw.
    pub seed: u64,
}

impl Default for Scenario {
    /// The built-in demo: 120 participants in three subgroups.
    fn default() -> Self {
        Scenario {
            participant_count: 120,
            subgroup_proportions: vec![0.4, 0.35, 0.25],
            separation: 0.6,
            diagnosis_effect: 0.2,
            insomnia_fraction: 0.5,
            noise_sd: 0.25,
            age_effect: 0.03,
            motion_effect: 0.03,
            region_count: 100,
            grid: [45, 54, 45],
            site_count: 2,
            followup_missing_fraction: 0.05,
            id_prefix: "NSM".to_string(),
            seed: 20_261_202,
        }
    }
}

/// One fictional participant.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DemoParticipant {
    /// BIDS label, `sub-NSM001` style.
    pub participant_id: String,
    /// Planted subgroup, 1-based; 0 in a homogeneous scenario.
    pub subgroup: usize,
    /// `insomnia` or `control`.
    pub diagnosis: String,
    /// Age in years (one decimal).
    pub age: f64,
    /// `F` or `M`.
    pub sex: String,
    /// Mean framewise displacement in mm (positive, right-skewed).
    pub fd_mean: f64,
    /// Acquisition site label.
    pub site: String,
    /// One-year follow-up insomnia severity score (0-28); NaN when missing.
    pub followup: f64,
}

/// A written cohort: its participants, the table, and a glob matching its input files.
#[derive(Debug, Clone)]
pub struct DemoCohort {
    /// Participants in table order.
    pub participants: Vec<DemoParticipant>,
    /// The written participants.tsv.
    pub participants_tsv: PathBuf,
    /// Glob matching every written input file.
    pub inputs_glob: String,
    /// Planted subgroup of each participant (same order).
    pub truth: Vec<usize>,
}

/// A region of the fictional Northfield atlas.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AtlasRegion {
    /// 1-based region index (the label value in the label volume).
    pub index: usize,
    /// Region name, `DMN-01` style.
    pub name: String,
    /// Network name.
    pub network: String,
    /// Centroid in MNI-like mm.
    pub centroid: [f64; 3],
}

/// Failures of the demo generator.
#[derive(Debug, Error)]
pub enum DemoError {
    /// A file or folder could not be written or read.
    #[error("{path}: {what} failed: {source}; check the folder exists and is writable")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// What was being done.
        what: &'static str,
        /// The system error.
        source: std::io::Error,
    },
    /// A scenario file could not be parsed.
    #[error("{path}: scenario file is not valid: {message}; compare with demo-data/northfield.toml")]
    ScenarioFile {
        /// The file.
        path: PathBuf,
        /// The parser's message.
        message: String,
    },
    /// A scenario field is out of range.
    #[error("scenario field `{field}` is {found}; expected {expected}")]
    InvalidScenario {
        /// The field.
        field: &'static str,
        /// The value found.
        found: String,
        /// What is allowed.
        expected: &'static str,
    },
    /// An output file could not be encoded.
    #[error("{path}: writing {format} failed: {message}")]
    Encode {
        /// The file.
        path: PathBuf,
        /// The format (NIfTI, npy).
        format: &'static str,
        /// The encoder's message.
        message: String,
    },
}

impl Scenario {
    /// Reads a scenario from a TOML file; missing fields take the [`Default`] values.
    ///
    /// # Errors
    /// [`DemoError::Io`] when the file cannot be read, [`DemoError::ScenarioFile`] when it is not
    /// valid TOML or has unknown fields, [`DemoError::InvalidScenario`] when a value is out of range.
    pub fn from_toml_file(path: &Path) -> Result<Scenario, DemoError> {
        let text = fs::read_to_string(path).map_err(|source| DemoError::Io {
            path: path.to_path_buf(),
            what: "reading the scenario",
            source,
        })?;
        let scenario: Scenario = toml::from_str(&text).map_err(|error| DemoError::ScenarioFile {
            path: path.to_path_buf(),
            message: error.to_string(),
        })?;
        scenario.validate()?;
        Ok(scenario)
    }

    /// The same cohort without subgroups (one population, subgroup label 0), for null checks.
    pub fn homogeneous(&self) -> Scenario {
        Scenario { subgroup_proportions: Vec::new(), separation: 0.0, ..self.clone() }
    }

    /// Number of planted subgroups (0 when homogeneous).
    pub fn subgroup_count(&self) -> usize {
        self.subgroup_proportions.len()
    }

    /// Checks every field's range.
    ///
    /// # Errors
    /// [`DemoError::InvalidScenario`] naming the first field out of range.
    pub fn validate(&self) -> Result<(), DemoError> {
        let invalid =
            |field, found: String, expected| Err(DemoError::InvalidScenario { field, found, expected });
        if self.participant_count < 2 {
            return invalid("participant_count", self.participant_count.to_string(), "at least 2");
        }
        let sum: f64 = self.subgroup_proportions.iter().sum();
        if self.subgroup_proportions.iter().any(|p| !(p.is_finite() && *p > 0.0))
            || (!self.subgroup_proportions.is_empty() && (sum - 1.0).abs() > 1e-6)
        {
            return invalid(
                "subgroup_proportions",
                format!("{:?}", self.subgroup_proportions),
                "positive shares summing to 1, or an empty list for one homogeneous population",
            );
        }
        if !(self.separation.is_finite() && self.separation >= 0.0) {
            return invalid("separation", self.separation.to_string(), "a finite number >= 0");
        }
        if !self.diagnosis_effect.is_finite() {
            return invalid("diagnosis_effect", self.diagnosis_effect.to_string(), "a finite number");
        }
        if !(0.0..=1.0).contains(&self.insomnia_fraction) {
            return invalid("insomnia_fraction", self.insomnia_fraction.to_string(), "between 0 and 1");
        }
        if !(self.noise_sd.is_finite() && self.noise_sd > 0.0) {
            return invalid("noise_sd", self.noise_sd.to_string(), "a finite number > 0");
        }
        if !(self.age_effect.is_finite() && self.motion_effect.is_finite()) {
            return invalid("age_effect", format!("{} / {}", self.age_effect, self.motion_effect), "finite");
        }
        if self.region_count < NETWORKS.len() {
            return invalid("region_count", self.region_count.to_string(), "at least 7 (one per network)");
        }
        if self.grid.iter().any(|&n| n < 8) {
            return invalid("grid", format!("{:?}", self.grid), "at least 8 voxels along each axis");
        }
        if self.site_count == 0 {
            return invalid("site_count", "0".to_string(), "at least 1");
        }
        if !(0.0..1.0).contains(&self.followup_missing_fraction) {
            return invalid(
                "followup_missing_fraction",
                self.followup_missing_fraction.to_string(),
                "at least 0 and below 1",
            );
        }
        if self.id_prefix.is_empty() || !self.id_prefix.chars().all(|c| c.is_ascii_alphanumeric()) {
            return invalid("id_prefix", format!("{:?}", self.id_prefix), "letters and digits only");
        }
        Ok(())
    }
}

/// The 100 regions of the fictional Northfield atlas.
pub fn atlas_regions() -> Vec<AtlasRegion> {
    atlas_regions_with_count(100)
}

/// A fictional atlas of `region_count` regions over the seven networks.
///
/// Regions are shared among networks in proportion to [`NETWORKS`]; each network has a fixed
/// anchor, and its regions scatter around it (alternating hemispheres) inside the brain ellipsoid.
pub fn atlas_regions_with_count(region_count: usize) -> Vec<AtlasRegion> {
    let anchors: [[f64; 3]; 7] = [
        [6.0, -50.0, 28.0],
        [36.0, 16.0, 4.0],
        [42.0, 24.0, 36.0],
        [38.0, -22.0, 56.0],
        [18.0, -86.0, 4.0],
        [28.0, -56.0, 50.0],
        [26.0, 4.0, -26.0],
    ];
    let counts = network_region_counts(region_count);
    let mut rng = seed::rng(0, "demo-atlas", &[region_count as u64]);
    let jitter = Normal::new(0.0, 14.0).expect("constant standard deviation is positive");
    let mut regions = Vec::with_capacity(region_count);
    for (network_index, (&(network, abbreviation, _), &count)) in NETWORKS.iter().zip(&counts).enumerate() {
        for within in 0..count {
            let hemisphere = if within % 2 == 0 { -1.0 } else { 1.0 };
            let anchor = anchors[network_index];
            let mut point = [
                hemisphere * anchor[0].abs() + jitter.sample(&mut rng),
                anchor[1] + jitter.sample(&mut rng),
                anchor[2] + jitter.sample(&mut rng),
            ];
            // Pull the point inside the ellipsoid (to 90% of its radius) when jitter pushed it out.
            let radius = ellipsoid_radius(point);
            if radius > 0.9 {
                for axis in 0..3 {
                    point[axis] =
                        BRAIN_CENTRE_MM[axis] + (point[axis] - BRAIN_CENTRE_MM[axis]) * 0.9 / radius;
                }
            }
            let centroid = point.map(|value| (value * 10.0).round() / 10.0);
            regions.push(AtlasRegion {
                index: regions.len() + 1,
                name: format!("{abbreviation}-{:02}", within + 1),
                network: network.to_string(),
                centroid,
            });
        }
    }
    regions
}

/// Regions per network for `region_count` regions (largest-remainder share of [`NETWORKS`]).
fn network_region_counts(region_count: usize) -> Vec<usize> {
    let weights: Vec<f64> = NETWORKS.iter().map(|n| n.2 as f64).collect();
    let mut counts = apportion(region_count, &weights);
    // Every network keeps at least one region.
    for network in 0..counts.len() {
        if counts[network] == 0 {
            let largest = (0..counts.len()).max_by_key(|&i| counts[i]).unwrap_or(0);
            counts[largest] -= 1;
            counts[network] = 1;
        }
    }
    counts
}

/// Splits `total` into integer counts proportional to `weights` (largest remainder method).
fn apportion(total: usize, weights: &[f64]) -> Vec<usize> {
    let sum: f64 = weights.iter().sum();
    let exact: Vec<f64> = weights.iter().map(|w| w / sum * total as f64).collect();
    let mut counts: Vec<usize> = exact.iter().map(|e| e.floor() as usize).collect();
    let mut order: Vec<usize> = (0..weights.len()).collect();
    order.sort_by(|&a, &b| {
        (exact[b] - exact[b].floor()).total_cmp(&(exact[a] - exact[a].floor())).then(a.cmp(&b))
    });
    let assigned: usize = counts.iter().sum();
    for &index in order.iter().take(total - assigned) {
        counts[index] += 1;
    }
    counts
}

/// Normalised ellipsoid radius of a point in mm (1 on the brain surface).
fn ellipsoid_radius(point: [f64; 3]) -> f64 {
    (0..3)
        .map(|axis| ((point[axis] - BRAIN_CENTRE_MM[axis]) / BRAIN_SEMI_AXES_MM[axis]).powi(2))
        .sum::<f64>()
        .sqrt()
}

/// The voxel-to-mm affine of the demo grid (rows of the NIfTI sform): LAS orientation, 4 mm voxels.
pub fn grid_affine(grid: [usize; 3]) -> [[f64; 4]; 3] {
    let half = |axis: usize| VOXEL_SIZE_MM * (grid[axis] as f64 - 1.0) / 2.0;
    [
        [-VOXEL_SIZE_MM, 0.0, 0.0, GRID_CENTRE_MM[0] + half(0)],
        [0.0, VOXEL_SIZE_MM, 0.0, GRID_CENTRE_MM[1] - half(1)],
        [0.0, 0.0, VOXEL_SIZE_MM, GRID_CENTRE_MM[2] - half(2)],
    ]
}

/// mm coordinate of voxel (i, j, k).
fn voxel_mm(affine: &[[f64; 4]; 3], i: usize, j: usize, k: usize) -> [f64; 3] {
    let v = [i as f64, j as f64, k as f64];
    affine.map(|row| row[0] * v[0] + row[1] * v[1] + row[2] * v[2] + row[3])
}

/// The brain-shaped (ellipsoid) mask of a grid, indexed `[i, j, k]`.
pub fn brain_mask(grid: [usize; 3]) -> Array3<bool> {
    let affine = grid_affine(grid);
    Array3::from_shape_fn((grid[0], grid[1], grid[2]), |(i, j, k)| {
        ellipsoid_radius(voxel_mm(&affine, i, j, k)) <= 1.0
    })
}

/// The atlas label volume on a grid: each mask voxel gets the index of its nearest centroid.
pub fn atlas_label_volume(regions: &[AtlasRegion], grid: [usize; 3]) -> Array3<i16> {
    let affine = grid_affine(grid);
    let mask = brain_mask(grid);
    Array3::from_shape_fn((grid[0], grid[1], grid[2]), |(i, j, k)| {
        if !mask[[i, j, k]] {
            return 0;
        }
        let point = voxel_mm(&affine, i, j, k);
        let mut best = (f64::INFINITY, 0usize);
        for region in regions {
            let distance: f64 = (0..3).map(|a| (point[a] - region.centroid[a]).powi(2)).sum();
            if distance < best.0 {
                best = (distance, region.index);
            }
        }
        best.1 as i16
    })
}

/// Draws the participants' labels and covariates.
fn draw_participants(scenario: &Scenario) -> Vec<DemoParticipant> {
    let n = scenario.participant_count;
    let subgroups: Vec<usize> = if scenario.subgroup_proportions.is_empty() {
        vec![0; n]
    } else {
        let counts = apportion(n, &scenario.subgroup_proportions);
        let mut labels: Vec<usize> =
            counts.iter().enumerate().flat_map(|(g, &c)| std::iter::repeat_n(g + 1, c)).collect();
        labels.shuffle(&mut seed::rng(scenario.seed, "demo-assignment", &[]));
        labels
    };
    // Diagnosis per subgroup: exactly round(fraction * size) insomnia, chosen at random.
    let mut insomnia = vec![false; n];
    let group_labels: Vec<usize> = if scenario.subgroup_proportions.is_empty() {
        vec![0]
    } else {
        (1..=scenario.subgroup_count()).collect()
    };
    for &g in &group_labels {
        let mut members: Vec<usize> = (0..n).filter(|&i| subgroups[i] == g).collect();
        members.shuffle(&mut seed::rng(scenario.seed, "demo-diagnosis", &[g as u64]));
        let count = (scenario.insomnia_fraction * members.len() as f64).round() as usize;
        for &i in members.iter().take(count) {
            insomnia[i] = true;
        }
    }
    let width = n.to_string().len().max(3);
    let fd = LogNormal::new(FD_MEDIAN_MM.ln(), FD_LOG_SD).expect("constant log-normal parameters are valid");
    let noise = Normal::new(0.0, FOLLOWUP_NOISE_SD).expect("constant standard deviation is positive");
    (0..n)
        .map(|i| {
            let mut rng = seed::rng(scenario.seed, "demo-covariates", &[i as u64]);
            let age = rng.random_range(AGE_RANGE_YEARS.0..AGE_RANGE_YEARS.1);
            let sex = if rng.random_bool(0.5) { "F" } else { "M" };
            let fd_mean = fd.sample(&mut rng);
            let site = rng.random_range(1..=scenario.site_count);
            let shift = if subgroups[i] == 0 { 0.0 } else { FOLLOWUP_SUBGROUP_SHIFT[(subgroups[i] - 1) % 3] };
            let score = FOLLOWUP_CONTROL_MEAN
                + if insomnia[i] { FOLLOWUP_INSOMNIA_SHIFT } else { 0.0 }
                + shift
                + noise.sample(&mut rng);
            let missing = rng.random_bool(scenario.followup_missing_fraction);
            DemoParticipant {
                participant_id: format!("sub-{}{:0width$}", scenario.id_prefix, i + 1),
                subgroup: subgroups[i],
                diagnosis: if insomnia[i] { INSOMNIA } else { CONTROL }.to_string(),
                age: (age * 10.0).round() / 10.0,
                sex: sex.to_string(),
                fd_mean: (fd_mean * 1000.0).round() / 1000.0,
                site: site.to_string(),
                followup: if missing { f64::NAN } else { score.round().clamp(0.0, FOLLOWUP_MAX) },
            }
        })
        .collect()
}

/// A vector of `len` independent standard normal values from `rng`.
fn standard_normal_vector(rng: &mut impl Rng, len: usize) -> Vec<f64> {
    (0..len).map(|_| rng.sample::<f64, _>(rand_distr::StandardNormal)).collect()
}

/// Rescales a vector to zero mean and unit standard deviation (left alone when constant).
fn unit_scale(values: &mut [f64]) {
    let n = values.len().max(1) as f64;
    let mean = values.iter().sum::<f64>() / n;
    let sd = (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n).sqrt();
    if sd > 0.0 {
        values.iter_mut().for_each(|v| *v = (*v - mean) / sd);
    }
}

/// Network pairs carrying the diagnosis effect, one per subgroup (cycled), and for a homogeneous
/// cohort (last entry), with the effect's sign.
const EFFECT_NETWORK_PAIRS: [(usize, usize, f64); 4] = [(0, 0, 1.0), (1, 2, -1.0), (3, 4, 1.0), (0, 2, 1.0)];

/// The fixed (population-level) Fisher z patterns of a matrix scenario over the upper triangle.
struct MatrixPatterns {
    edges: Vec<(usize, usize)>,
    baseline: Vec<f64>,
    profiles: Vec<Vec<f64>>,
    effects: Vec<Vec<f64>>,
    age: Vec<f64>,
    motion: Vec<f64>,
}

fn matrix_patterns(scenario: &Scenario) -> MatrixPatterns {
    let regions = atlas_regions_with_count(scenario.region_count);
    let network_of: Vec<usize> =
        regions.iter().map(|r| NETWORKS.iter().position(|n| n.0 == r.network).unwrap_or(0)).collect();
    let r = scenario.region_count;
    let edges: Vec<(usize, usize)> = (0..r).flat_map(|a| ((a + 1)..r).map(move |b| (a, b))).collect();
    let mut rng = seed::rng(scenario.seed, "demo-matrix-patterns", &[]);
    let jitter = standard_normal_vector(&mut rng, edges.len());
    let baseline = edges
        .iter()
        .zip(&jitter)
        .map(|(&(a, b), j)| {
            let level = if network_of[a] == network_of[b] { BASELINE_WITHIN_Z } else { BASELINE_BETWEEN_Z };
            level + BASELINE_EDGE_SD * j
        })
        .collect();
    let network_count = NETWORKS.len();
    let profiles = (0..scenario.subgroup_count())
        .map(|_| {
            let blocks = standard_normal_vector(&mut rng, network_count * network_count);
            let edge_part = standard_normal_vector(&mut rng, edges.len());
            let mut profile: Vec<f64> = edges
                .iter()
                .zip(&edge_part)
                .map(|(&(a, b), e)| {
                    let (p, q) = (network_of[a].min(network_of[b]), network_of[a].max(network_of[b]));
                    blocks[p * network_count + q] + PROFILE_EDGE_WEIGHT * e
                })
                .collect();
            unit_scale(&mut profile);
            profile
        })
        .collect();
    let effect_for = |pair: (usize, usize, f64)| -> Vec<f64> {
        edges
            .iter()
            .map(|&(a, b)| {
                let (p, q) = (network_of[a].min(network_of[b]), network_of[a].max(network_of[b]));
                if (p, q) == (pair.0.min(pair.1), pair.0.max(pair.1)) {
                    pair.2
                } else {
                    0.0
                }
            })
            .collect()
    };
    let effects = if scenario.subgroup_count() == 0 {
        vec![effect_for(EFFECT_NETWORK_PAIRS[3])]
    } else {
        (0..scenario.subgroup_count()).map(|g| effect_for(EFFECT_NETWORK_PAIRS[g % 3])).collect()
    };
    let mut age = standard_normal_vector(&mut rng, edges.len());
    unit_scale(&mut age);
    // Motion raises short-range and lowers long-range coupling (common observation).
    let mut motion: Vec<f64> = edges
        .iter()
        .map(|&(a, b)| {
            let d: f64 = (0..3).map(|x| (regions[a].centroid[x] - regions[b].centroid[x]).powi(2)).sum();
            -d.sqrt()
        })
        .collect();
    unit_scale(&mut motion);
    MatrixPatterns { edges, baseline, profiles, effects, age, motion }
}

/// The per-participant Fisher z modifiers shared by both kinds of data.
fn participant_weights(
    scenario: &Scenario,
    participant: &DemoParticipant,
    index: usize,
) -> (f64, f64, f64, f64) {
    let mut rng = seed::rng(scenario.seed, "demo-loading", &[index as u64]);
    let loading = 1.0 + rng.random_range(-PROFILE_LOADING_SPREAD..PROFILE_LOADING_SPREAD);
    let profile = scenario.separation * scenario.noise_sd * loading;
    let effect = if participant.diagnosis == INSOMNIA { scenario.diagnosis_effect } else { 0.0 };
    let age = scenario.age_effect * (participant.age - 15.0) / 3.0;
    let motion = scenario.motion_effect * (participant.fd_mean - FD_MEDIAN_MM) / FD_MEDIAN_MM;
    (profile, effect, age, motion)
}

/// Generates the matrix cohort in memory: participants and their R x R correlation matrices.
///
/// Each matrix is symmetric with a unit diagonal and off-diagonal values in (-1, 1).
///
/// # Arguments
/// * `scenario` - the generator definition (assumed valid; see [`Scenario::validate`]).
///
/// # Returns
/// The participants and one `region_count x region_count` float32 matrix per participant.
///
/// # Complexity
/// O(N R^2) time; O(N R^2) memory for the returned matrices.
pub fn generate_matrix_values(scenario: &Scenario) -> (Vec<DemoParticipant>, Vec<Array2<f32>>) {
    let participants = draw_participants(scenario);
    let patterns = matrix_patterns(scenario);
    let r = scenario.region_count;
    let noise = Normal::new(0.0, scenario.noise_sd).expect("validated noise_sd is positive");
    let matrices = participants
        .par_iter()
        .enumerate()
        .map(|(index, participant)| {
            let (profile_weight, effect_weight, age_weight, motion_weight) =
                participant_weights(scenario, participant, index);
            let group = participant.subgroup.checked_sub(1);
            let mut rng = seed::rng(scenario.seed, "demo-matrix-noise", &[index as u64]);
            let mut matrix = Array2::<f32>::eye(r);
            for (e, &(a, b)) in patterns.edges.iter().enumerate() {
                let mut z = patterns.baseline[e]
                    + age_weight * patterns.age[e]
                    + motion_weight * patterns.motion[e]
                    + noise.sample(&mut rng);
                if let Some(g) = group {
                    z += profile_weight * patterns.profiles[g][e];
                }
                z += effect_weight * patterns.effects[group.unwrap_or(0)][e];
                let value = z.tanh().clamp(-R_LIMIT, R_LIMIT) as f32;
                matrix[[a, b]] = value;
                matrix[[b, a]] = value;
            }
            matrix
        })
        .collect();
    (participants, matrices)
}

/// A Gaussian blob in mm space.
#[derive(Clone, Copy)]
struct Blob {
    centre: [f64; 3],
    sigma: f64,
    amplitude: f64,
}

/// Adds `blob` to a voxel value vector over `coordinates` (mask voxels), within 3 sigma.
fn add_blob(values: &mut [f64], coordinates: &[[f64; 3]], blob: Blob) {
    let cutoff = (3.0 * blob.sigma).powi(2);
    let scale = -0.5 / (blob.sigma * blob.sigma);
    for (value, point) in values.iter_mut().zip(coordinates) {
        let d: f64 = (0..3).map(|a| (point[a] - blob.centre[a]).powi(2)).sum();
        if d < cutoff {
            *value += blob.amplitude * (d * scale).exp();
        }
    }
}

/// A random point inside the brain ellipsoid (at most `radius` of its normalised radius).
fn random_brain_point(rng: &mut impl Rng, radius: f64) -> [f64; 3] {
    loop {
        let u: [f64; 3] =
            [rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0), rng.random_range(-1.0..1.0)];
        if u.iter().map(|x| x * x).sum::<f64>() <= radius * radius {
            return [0, 1, 2].map(|a| BRAIN_CENTRE_MM[a] + u[a] * BRAIN_SEMI_AXES_MM[a]);
        }
    }
}

/// Seed-map baseline: a posterior cingulate seed and its usual positive and negative partners
/// (default-mode pattern, common knowledge), as (centre mm, sigma mm, Fisher z).
const SEED_BASELINE_BLOBS: [([f64; 3], f64, f64); 8] = [
    ([0.0, -52.0, 26.0], 10.0, 1.3),
    ([0.0, 52.0, -6.0], 12.0, 0.6),
    ([-46.0, -66.0, 30.0], 9.0, 0.5),
    ([46.0, -66.0, 30.0], 9.0, 0.5),
    ([-26.0, -58.0, 52.0], 9.0, -0.25),
    ([26.0, -58.0, 52.0], 9.0, -0.25),
    ([-38.0, 14.0, 0.0], 8.0, -0.2),
    ([38.0, 14.0, 0.0], 8.0, -0.2),
];

/// Fixed seed-map patterns over the mask voxels.
struct SeedPatterns {
    coordinates: Vec<[f64; 3]>,
    baseline: Vec<f64>,
    profiles: Vec<Vec<f64>>,
    effects: Vec<Vec<f64>>,
    age: Vec<f64>,
    motion: Vec<f64>,
}

fn seed_patterns(scenario: &Scenario, mask: &Array3<bool>) -> SeedPatterns {
    let affine = grid_affine(scenario.grid);
    // Mask voxels in Fortran (file) order: i fastest.
    let [nx, ny, nz] = scenario.grid;
    let mut coordinates = Vec::new();
    for k in 0..nz {
        for j in 0..ny {
            for i in 0..nx {
                if mask[[i, j, k]] {
                    coordinates.push(voxel_mm(&affine, i, j, k));
                }
            }
        }
    }
    let v = coordinates.len();
    let mut baseline = vec![0.0; v];
    for (centre, sigma, amplitude) in SEED_BASELINE_BLOBS {
        add_blob(&mut baseline, &coordinates, Blob { centre, sigma, amplitude });
    }
    let mut rng = seed::rng(scenario.seed, "demo-seed-patterns", &[]);
    let profiles = (0..scenario.subgroup_count())
        .map(|_| {
            let mut profile = vec![0.0; v];
            for blob in 0..PROFILE_BLOB_COUNT {
                let sign = if blob % 2 == 0 { 1.0 } else { -1.0 };
                let centre = random_brain_point(&mut rng, 0.75);
                add_blob(
                    &mut profile,
                    &coordinates,
                    Blob { centre, sigma: PROFILE_BLOB_SIGMA_MM, amplitude: sign * SEED_PROFILE_GAIN },
                );
            }
            profile
        })
        .collect();
    let effect_count = scenario.subgroup_count().max(1);
    let effects = (0..effect_count)
        .map(|_| {
            let mut effect = vec![0.0; v];
            let centre = random_brain_point(&mut rng, 0.7);
            add_blob(&mut effect, &coordinates, Blob { centre, sigma: EFFECT_BLOB_SIGMA_MM, amplitude: 1.0 });
            effect
        })
        .collect();
    let mut age = vec![0.0; v];
    add_blob(
        &mut age,
        &coordinates,
        Blob { centre: random_brain_point(&mut rng, 0.6), sigma: 20.0, amplitude: 1.0 },
    );
    // Motion inflates correlation near the brain edge (common observation).
    let motion = coordinates.iter().map(|&p| ellipsoid_radius(p).powi(4)).collect();
    SeedPatterns { coordinates, baseline, profiles, effects, age, motion }
}

/// Generates one participant's seed-map values over the mask voxels, as r.
fn seed_map_values(
    scenario: &Scenario,
    patterns: &SeedPatterns,
    participant: &DemoParticipant,
    index: usize,
) -> Vec<f32> {
    let (profile_weight, effect_weight, age_weight, motion_weight) =
        participant_weights(scenario, participant, index);
    let group = participant.subgroup.checked_sub(1);
    let mut rng = seed::rng(scenario.seed, "demo-seed-noise", &[index as u64]);
    let mut noise = vec![0.0; patterns.coordinates.len()];
    // Smooth part: random-sign blobs; scaled afterwards so its sd is the smooth share of noise_sd.
    for _ in 0..NOISE_BLOB_COUNT {
        let centre = random_brain_point(&mut rng, 1.0);
        let amplitude: f64 = rng.sample(rand_distr::StandardNormal);
        add_blob(&mut noise, &patterns.coordinates, Blob { centre, sigma: NOISE_BLOB_SIGMA_MM, amplitude });
    }
    unit_scale(&mut noise);
    let smooth_sd = scenario.noise_sd * (1.0 - WHITE_NOISE_SHARE).sqrt();
    let white_sd = scenario.noise_sd * WHITE_NOISE_SHARE.sqrt();
    (0..patterns.coordinates.len())
        .map(|voxel| {
            let white: f64 = rng.sample(rand_distr::StandardNormal);
            let mut z = patterns.baseline[voxel]
                + age_weight * patterns.age[voxel]
                + motion_weight * patterns.motion[voxel]
                + smooth_sd * noise[voxel]
                + white_sd * white;
            if let Some(g) = group {
                z += profile_weight * patterns.profiles[g][voxel];
            }
            z += effect_weight * patterns.effects[group.unwrap_or(0)][voxel];
            z.tanh().clamp(-R_LIMIT, R_LIMIT) as f32
        })
        .collect()
}

fn io_error<'a>(path: &'a Path, what: &'static str) -> impl FnOnce(std::io::Error) -> DemoError + 'a {
    move |source| DemoError::Io { path: path.to_path_buf(), what, source }
}

/// Writes participants.tsv (BIDS: tab-separated, `participant_id` first, `n/a` for missing).
///
/// Columns: participant_id, diagnosis, age, sex, fd_mean, site, followup_isi. The planted
/// subgroup is not written (it is the answer); [`DemoCohort::truth`] holds it.
///
/// # Errors
/// [`DemoError::Io`] when the file cannot be written.
pub fn write_participants_tsv(participants: &[DemoParticipant], path: &Path) -> Result<(), DemoError> {
    let mut text = String::from("participant_id\tdiagnosis\tage\tsex\tfd_mean\tsite\tfollowup_isi\n");
    for p in participants {
        let followup = if p.followup.is_nan() { "n/a".to_string() } else { format!("{}", p.followup) };
        text.push_str(&format!(
            "{}\t{}\t{:.1}\t{}\t{:.3}\t{}\t{}\n",
            p.participant_id, p.diagnosis, p.age, p.sex, p.fd_mean, p.site, followup
        ));
    }
    fs::write(path, text).map_err(io_error(path, "writing participants.tsv"))
}

fn create_dir(path: &Path) -> Result<(), DemoError> {
    fs::create_dir_all(path).map_err(io_error(path, "creating the folder"))
}

/// Writes the matrix cohort: `participants.tsv` and `matrices/<participant_id>_conn.npy`
/// (R x R float32) under `dir`.
///
/// # Errors
/// [`DemoError::InvalidScenario`] for an invalid scenario, [`DemoError::Io`] or
/// [`DemoError::Encode`] when a file cannot be written.
pub fn write_matrix_cohort(scenario: &Scenario, dir: &Path) -> Result<DemoCohort, DemoError> {
    scenario.validate()?;
    let (participants, matrices) = generate_matrix_values(scenario);
    let matrix_dir = dir.join("matrices");
    create_dir(&matrix_dir)?;
    participants.par_iter().zip(&matrices).try_for_each(|(participant, matrix)| {
        let path = matrix_dir.join(format!("{}_conn.npy", participant.participant_id));
        ndarray_npy::write_npy(&path, matrix).map_err(|error| DemoError::Encode {
            path: path.clone(),
            format: "npy",
            message: error.to_string(),
        })
    })?;
    finish_cohort(participants, dir, matrix_dir.join("sub-*_conn.npy"))
}

/// Writes a matrix as delimited text (`,` for csv, tab for tsv), no header, full precision.
///
/// # Errors
/// [`DemoError::Io`] when the file cannot be written.
pub fn write_matrix_text(matrix: &Array2<f32>, path: &Path, delimiter: char) -> Result<(), DemoError> {
    let mut text = String::new();
    for row in matrix.rows() {
        let cells: Vec<String> = row.iter().map(|v| format!("{v}")).collect();
        text.push_str(&cells.join(&delimiter.to_string()));
        text.push('\n');
    }
    fs::write(path, text).map_err(io_error(path, "writing the matrix"))
}

fn finish_cohort(
    participants: Vec<DemoParticipant>,
    dir: &Path,
    glob: PathBuf,
) -> Result<DemoCohort, DemoError> {
    let participants_tsv = dir.join("participants.tsv");
    write_participants_tsv(&participants, &participants_tsv)?;
    let truth = participants.iter().map(|p| p.subgroup).collect();
    Ok(DemoCohort { participants, participants_tsv, inputs_glob: glob.to_string_lossy().into_owned(), truth })
}

/// A NIfTI-1 header for a float32 (or int16 label) volume on the demo grid, MNI-aligned sform and
/// a matching qform (LAS: quaternion (0, 1, 0) with qfac -1).
pub fn grid_header(grid: [usize; 3], datatype: i16, description: &str) -> nifti::NiftiHeader {
    let affine = grid_affine(grid);
    let mut header = nifti::NiftiHeader {
        dim: [3, grid[0] as u16, grid[1] as u16, grid[2] as u16, 1, 1, 1, 1],
        pixdim: [-1.0, VOXEL_SIZE_MM as f32, VOXEL_SIZE_MM as f32, VOXEL_SIZE_MM as f32, 1.0, 1.0, 1.0, 1.0],
        datatype,
        bitpix: if datatype == DATATYPE_FLOAT32 { 32 } else { 16 },
        xyzt_units: UNITS_MM,
        sform_code: XFORM_MNI,
        qform_code: XFORM_MNI,
        quatern_b: 0.0,
        quatern_c: 1.0,
        quatern_d: 0.0,
        quatern_x: affine[0][3] as f32,
        quatern_y: affine[1][3] as f32,
        quatern_z: affine[2][3] as f32,
        srow_x: affine[0].map(|v| v as f32),
        srow_y: affine[1].map(|v| v as f32),
        srow_z: affine[2].map(|v| v as f32),
        scl_slope: 1.0,
        magic: *nifti::header::MAGIC_CODE_NIP1,
        ..Default::default()
    };
    let mut descrip = description.as_bytes().to_vec();
    descrip.truncate(79);
    descrip.resize(80, 0);
    header.descrip = descrip;
    header
}

/// The 91 x 109 x 91 grid of 2 mm voxels of MNI-space maps (the grid of the built-in
/// `mni152-2mm` mask and label volumes: atlases/mni152/README.md).
pub const MNI_2MM_GRID: [usize; 3] = [91, 109, 91];

/// [`grid_header`] on [`MNI_2MM_GRID`] with 2 mm voxels and the affine
/// [[-2,0,0,90],[0,2,0,-126],[0,0,2,-72]] in the sform (the qform carries the same offsets and
/// [`grid_header`]'s flip of the first axis): common practice for 2 mm MNI maps.
pub fn mni_2mm_header(datatype: i16, description: &str) -> nifti::NiftiHeader {
    let mut header = grid_header(MNI_2MM_GRID, datatype, description);
    header.pixdim[1..4].copy_from_slice(&[2.0, 2.0, 2.0]);
    header.srow_x = [-2.0, 0.0, 0.0, 90.0];
    header.srow_y = [0.0, 2.0, 0.0, -126.0];
    header.srow_z = [0.0, 0.0, 2.0, -72.0];
    header.quatern_x = 90.0;
    header.quatern_y = -126.0;
    header.quatern_z = -72.0;
    header
}

/// Writes a 3D float32 volume (indexed `[i, j, k]`) as gzip NIfTI-1 with `header`.
///
/// # Errors
/// [`DemoError::Encode`] when the file cannot be written.
pub fn write_volume_f32(
    path: &Path,
    header: &nifti::NiftiHeader,
    volume: &Array3<f32>,
) -> Result<(), DemoError> {
    nifti::writer::WriterOptions::new(path)
        .reference_header(header)
        .compression_level(flate2::Compression::new(NIFTI_GZIP_LEVEL))
        .write_nifti(volume)
        .map_err(|error| DemoError::Encode {
            path: path.to_path_buf(),
            format: "NIfTI",
            message: error.to_string(),
        })
}

/// Writes a 3D int16 label volume (indexed `[i, j, k]`) as gzip NIfTI-1 with `header`.
///
/// # Errors
/// [`DemoError::Encode`] when the file cannot be written.
pub fn write_volume_i16(
    path: &Path,
    header: &nifti::NiftiHeader,
    volume: &Array3<i16>,
) -> Result<(), DemoError> {
    nifti::writer::WriterOptions::new(path)
        .reference_header(header)
        .compression_level(flate2::Compression::new(NIFTI_GZIP_LEVEL))
        .write_nifti(volume)
        .map_err(|error| DemoError::Encode {
            path: path.to_path_buf(),
            format: "NIfTI",
            message: error.to_string(),
        })
}

/// Generates the seed-map cohort in memory: participants and one volume (indexed `[i, j, k]`,
/// r values, zeros outside the brain mask) per participant.
///
/// # Complexity
/// O(N V b) time for V mask voxels and b blobs within reach of a voxel; O(N X Y Z) memory.
pub fn generate_seedmap_values(scenario: &Scenario) -> (Vec<DemoParticipant>, Vec<Array3<f32>>) {
    let participants = draw_participants(scenario);
    let mask = brain_mask(scenario.grid);
    let patterns = seed_patterns(scenario, &mask);
    let [nx, ny, nz] = scenario.grid;
    let volumes = participants
        .par_iter()
        .enumerate()
        .map(|(index, participant)| {
            let values = seed_map_values(scenario, &patterns, participant, index);
            let mut volume = Array3::<f32>::zeros((nx, ny, nz));
            let mut next = values.into_iter();
            for k in 0..nz {
                for j in 0..ny {
                    for i in 0..nx {
                        if mask[[i, j, k]] {
                            volume[[i, j, k]] = next.next().unwrap_or(0.0);
                        }
                    }
                }
            }
            volume
        })
        .collect();
    (participants, volumes)
}

/// Writes the seed-map cohort: `participants.tsv` and `maps/<participant_id>_seedmap.nii.gz`
/// (float32 r on the 4 mm grid, MNI-aligned sform and qform) under `dir`.
///
/// # Errors
/// [`DemoError::InvalidScenario`] for an invalid scenario, [`DemoError::Io`] or
/// [`DemoError::Encode`] when a file cannot be written.
pub fn write_seedmap_cohort(scenario: &Scenario, dir: &Path) -> Result<DemoCohort, DemoError> {
    scenario.validate()?;
    let (participants, volumes) = generate_seedmap_values(scenario);
    let map_dir = dir.join("maps");
    create_dir(&map_dir)?;
    participants.par_iter().zip(&volumes).try_for_each(|(participant, volume)| {
        let path = map_dir.join(format!("{}_seedmap.nii.gz", participant.participant_id));
        let header = grid_header(
            scenario.grid,
            DATATYPE_FLOAT32,
            &format!("strata demo seed map (fictional) {}", participant.participant_id),
        );
        write_volume_f32(&path, &header, volume)
    })?;
    finish_cohort(participants, dir, map_dir.join("sub-*_seedmap.nii.gz"))
}

/// Writes the Northfield atlas folder: regions table, 4 mm label volume and README.
///
/// # Errors
/// [`DemoError::Io`] or [`DemoError::Encode`] when a file cannot be written.
pub fn write_atlas(dir: &Path) -> Result<(), DemoError> {
    create_dir(dir)?;
    let regions = atlas_regions();
    let mut table = String::from("index\tname\tnetwork\tx\ty\tz\n");
    for region in &regions {
        let [x, y, z] = region.centroid;
        table.push_str(&format!(
            "{}\t{}\t{}\t{x:.1}\t{y:.1}\t{z:.1}\n",
            region.index, region.name, region.network
        ));
    }
    let table_path = dir.join("northfield100_regions.tsv");
    fs::write(&table_path, table).map_err(io_error(&table_path, "writing the atlas table"))?;
    let grid = Scenario::default().grid;
    let labels = atlas_label_volume(&regions, grid);
    let header = grid_header(grid, DATATYPE_INT16, "strata fictional Northfield100 atlas labels");
    write_volume_i16(&dir.join("northfield100_labels_4mm.nii.gz"), &header, &labels)?;
    let readme_path = dir.join("README.md");
    let mut readme = fs::File::create(&readme_path).map_err(io_error(&readme_path, "writing the README"))?;
    readme.write_all(ATLAS_README.as_bytes()).map_err(io_error(&readme_path, "writing the README"))
}

/// NIfTI datatype 4: int16 (label volumes).
const DATATYPE_INT16: i16 = 4;

/// README of the generated atlas folder.
const ATLAS_README: &str = "# Northfield100 (fictional atlas)\n\n\
A fictional 100-region atlas made by strata's own code (`strata::demo::write_atlas`) for the \
fictional Northfield Sleep and Mood demo cohort. It does not describe any real brain \
parcellation: regions are scattered around seven network anchors inside an ellipsoid and the \
label volume gives each voxel of the ellipsoid the index of its nearest region centroid.\n\n\
* `northfield100_regions.tsv`: index (1..100, the label value), name, network, x, y, z \
(centroid, MNI-like mm).\n\
* `northfield100_labels_4mm.nii.gz`: int16 labels on a 45 x 54 x 45 grid of 4 mm voxels \
(MNI-like affine, sform and qform code 4); 0 outside the ellipsoid.\n\n\
Regenerate with `cargo test --test demo_make_data -- --ignored`.\n\n\
Licence: CC0 1.0 (public domain dedication).\n";

/// The planted matrix cohort of `scenario` as Fisher-z upper-triangle features (the features
/// stage's layout) with the planted subgroup of each participant: for recovery tests and for
/// the measurements in docs/methods.md.
pub fn matrix_features(scenario: &Scenario) -> (crate::features::FeatureMatrix, Vec<usize>) {
    let (participants, matrices) = generate_matrix_values(scenario);
    let regions = matrices.first().map_or(0, |matrix| matrix.nrows());
    let width = regions * regions.saturating_sub(1) / 2;
    let mut values = Vec::with_capacity(participants.len() * width);
    for matrix in &matrices {
        for i in 0..regions {
            for j in (i + 1)..regions {
                values.push(crate::features::fisher_z(f64::from(matrix[[i, j]])) as f32);
            }
        }
    }
    let truth = participants.iter().map(|participant| participant.subgroup).collect();
    let values =
        Array2::from_shape_vec((participants.len(), width), values).expect("rows x edges by construction");
    (crate::features::FeatureMatrix { values }, truth)
}
