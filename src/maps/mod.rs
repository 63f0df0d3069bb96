//! Stage 8: statistic vectors to files, through the [`crate::features::FeatureSpace`].
//!
//! NIfTI volumes on the input grid for voxel features, symmetric R x R `.npy` plus an edge table
//! for region features, a JSON sidecar for every map; the output naming lives here in one place
//! ([`naming`]). Computing the statistics is the stats stage's job; choosing which maps a run
//! writes, and the output folder's layout, is the pipeline's and the report's.

// OWNER: stats helper (naming, NIfTI/npy writers, sidecars). `WriteError` is shared with the
// report stage: add variants, keep the existing ones.

pub mod naming;
pub mod write;

pub use naming::{contrast_label, sanitise_label, MapName, MapNameBuilder};
pub use write::{
    contrast_fields, groups_field, write_bytes_atomically, write_map, write_map_with_dof, write_mask,
    write_volume, VolumeIntent, NIFTI_GZIP_LEVEL,
};

use std::path::PathBuf;

use thiserror::Error;

/// An output could not be written.
#[derive(Debug, Error)]
pub enum WriteError {
    /// The output folder exists and is not empty.
    #[error(
        "{path}: output folder exists and is not empty; choose another --out or pass --force to replace it"
    )]
    Exists {
        /// The folder.
        path: PathBuf,
    },
    /// An I/O failure on a path.
    #[error("{path}: {source}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The underlying error.
        source: std::io::Error,
    },
    /// An encoder failed.
    #[error("{path}: could not encode output: {message}")]
    Encode {
        /// The file.
        path: PathBuf,
        /// What failed.
        message: String,
    },
    /// An output name part breaks the naming rules of [`naming`].
    #[error("output name: {what} '{value}' is not valid; expected {expected}")]
    InvalidName {
        /// Which part (entity key, value of entity 'comm', suffix).
        what: String,
        /// The value found.
        value: String,
        /// What is allowed, and how to get there.
        expected: String,
    },
    /// The values do not fit the feature space or the name.
    #[error("{path}: {found}; expected {expected}")]
    Mismatch {
        /// The file that was to be written.
        path: PathBuf,
        /// What was found.
        found: String,
        /// What was expected (and so what to pass instead).
        expected: String,
    },
}

/// NIfTI-1 intent codes used by strata (nifti1.h, NIfTI Data Format Working Group 2004).
pub mod intent {
    /// `NIFTI_INTENT_NONE`: no statistical meaning declared.
    pub const NONE: i16 = 0;
    /// `NIFTI_INTENT_CORREL`: a correlation coefficient; `intent_p1` = degrees of freedom.
    pub const CORREL: i16 = 2;
    /// `NIFTI_INTENT_TTEST`: Student's t; `intent_p1` = degrees of freedom.
    pub const TTEST: i16 = 3;
    /// `NIFTI_INTENT_FTEST`: Fisher's F; `intent_p1` = numerator, `intent_p2` = denominator dof.
    pub const FTEST: i16 = 4;
    /// `NIFTI_INTENT_PVAL`: a p value.
    pub const PVAL: i16 = 22;
    /// `NIFTI_INTENT_ESTIMATE`: an estimate of some parameter, named in `intent_name`.
    pub const ESTIMATE: i16 = 1001;
}

/// The kinds of statistic map strata writes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Statistic {
    /// A group (or pooled) mean of the features.
    Mean,
    /// Group A mean minus group B mean.
    Difference,
    /// Welch t of A - B.
    T,
    /// Welch-Satterthwaite degrees of freedom of the t.
    Dof,
    /// Two-sided p of the Welch t.
    P,
    /// Benjamini-Hochberg adjusted p (q) across the map's features.
    Q,
    /// Hedges g (bias-corrected standardised difference).
    HedgesG,
    /// F statistic of a set of contrasts (the diagnosis x community interaction).
    F,
    /// Per-feature permutation p of the linear-model t.
    PermutationP,
    /// Family-wise (max-statistic) permutation p of the linear-model t.
    FamilyWiseP,
}

impl Statistic {
    /// Every statistic, in the order maps are listed.
    pub const ALL: [Statistic; 10] = [
        Statistic::Mean,
        Statistic::Difference,
        Statistic::T,
        Statistic::Dof,
        Statistic::P,
        Statistic::Q,
        Statistic::HedgesG,
        Statistic::F,
        Statistic::PermutationP,
        Statistic::FamilyWiseP,
    ];

    /// The file-name suffix.
    pub fn suffix(self) -> &'static str {
        match self {
            Statistic::Mean => "mean",
            Statistic::Difference => "diff",
            Statistic::T => "t",
            Statistic::Dof => "dof",
            Statistic::P => "p",
            Statistic::Q => "q",
            Statistic::HedgesG => "g",
            Statistic::F => "F",
            Statistic::PermutationP => "pperm",
            Statistic::FamilyWiseP => "pfwe",
        }
    }

    /// The NIfTI-1 intent code.
    ///
    /// `T` is `TTEST` only when one degrees-of-freedom value holds for every voxel (`intent_p1`
    /// is a single number); Welch t maps have a dof per voxel, and NIfTI-1 can carry per-voxel
    /// parameters only in a 5D dataset, so they are written as `NONE` with `intent_name`
    /// `Welch t` and the dof in a separate `dof` map named in the sidecar. The means, the
    /// difference, g and the dof (an estimated parameter of the t approximation) are `ESTIMATE`;
    /// p and q are `PVAL` (q is an adjusted p value).
    pub fn intent_code(self, uniform_dof: bool) -> i16 {
        match self {
            Statistic::T if uniform_dof => intent::TTEST,
            Statistic::T => intent::NONE,
            Statistic::F if uniform_dof => intent::FTEST,
            Statistic::F => intent::NONE,
            Statistic::Mean | Statistic::Difference | Statistic::Dof | Statistic::HedgesG => intent::ESTIMATE,
            Statistic::P | Statistic::Q | Statistic::PermutationP | Statistic::FamilyWiseP => intent::PVAL,
        }
    }

    /// Short name for the NIfTI `intent_name` field (at most 15 bytes) and sidecars.
    pub fn intent_name(self) -> &'static str {
        match self {
            Statistic::Mean => "mean",
            Statistic::Difference => "difference A-B",
            Statistic::T => "Welch t",
            Statistic::Dof => "Welch dof",
            Statistic::P => "p two-sided",
            Statistic::Q => "BH q",
            Statistic::HedgesG => "Hedges g",
            Statistic::F => "F",
            Statistic::PermutationP => "perm p",
            Statistic::FamilyWiseP => "FWE p",
        }
    }

    /// One sentence for the sidecar's `Description`.
    pub fn description(self) -> &'static str {
        match self {
            Statistic::Mean => "Mean of the features over the participants of the group(s) named in Groups.",
            Statistic::Difference => "Mean of the first group minus mean of the second group (Contrast).",
            Statistic::T => "Welch unequal-variance t statistic of the first group minus the second (Welch 1947).",
            Statistic::Dof => "Welch-Satterthwaite degrees of freedom of the Welch t (Satterthwaite 1946; Welch 1947).",
            Statistic::P => "Two-sided p value of the Welch t from Student's t distribution with the Welch-Satterthwaite degrees of freedom; uncorrected.",
            Statistic::Q => "Benjamini-Hochberg adjusted p value (q) of the two-sided Welch p, across all features of this map (Benjamini & Hochberg 1995).",
            Statistic::PermutationP => "Permutation p of the two-sided linear-model t of the contrast: the share of permutations (the observed order included) whose |t| reaches the observed |t| (Freedman & Lane 1983).",
            Statistic::FamilyWiseP => "Family-wise error p of the two-sided linear-model t: the share of permutations whose largest |t| over all features of the map reaches the observed |t| (Nichols & Holmes 2002; Freedman & Lane 1983).",
            Statistic::F => "F statistic of a set of contrasts of a linear model (numerator and denominator degrees of freedom in DegreesOfFreedom).",
            Statistic::HedgesG => "Hedges g: Cohen's d on the pooled standard deviation times the exact small-sample correction J(m) = Gamma(m/2) / (sqrt(m/2) Gamma((m-1)/2)), m = n1 + n2 - 2 (Hedges 1981).",
        }
    }

    /// The sidecar's `Correction` (multiple-comparison correction of the values).
    pub fn correction(self) -> &'static str {
        match self {
            Statistic::Q => "Benjamini-Hochberg",
            Statistic::FamilyWiseP => {
                "family-wise error, max statistic over the map's features (permutation)"
            }
            _ => "none",
        }
    }

    /// The sidecar's `Units`.
    ///
    /// Means and differences are in the units of the features (Fisher z of Pearson r from the
    /// features stage); the pipeline may override `Units` through the extra sidecar fields.
    pub fn units(self) -> &'static str {
        match self {
            Statistic::Mean | Statistic::Difference => "Fisher z (atanh of Pearson r)",
            Statistic::Dof => "degrees of freedom",
            Statistic::T
            | Statistic::P
            | Statistic::Q
            | Statistic::HedgesG
            | Statistic::F
            | Statistic::PermutationP
            | Statistic::FamilyWiseP => "unitless",
        }
    }

    /// Whether the statistic compares two groups (its sidecar needs a `Contrast`).
    pub fn is_contrast(self) -> bool {
        !matches!(self, Statistic::Mean)
    }

    /// The value written where no feature was analysed (voxels outside the mask, the diagonal
    /// of an edge matrix): 1 for p and q, so a `p < 0.05` threshold never selects them; 0 for
    /// everything else (no effect). Chosen over NaN because many viewers and tools mishandle NaN.
    pub fn fill_value(self) -> f32 {
        match self {
            Statistic::P | Statistic::Q | Statistic::PermutationP | Statistic::FamilyWiseP => 1.0,
            _ => 0.0,
        }
    }
}
