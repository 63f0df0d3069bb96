//! Stage 2: a [`crate::read::Cohort`] to a [`FeatureMatrix`] and its [`FeatureSpace`].
//!
//! Masking (a given mask, or the voxels finite and non-zero in every participant), the upper
//! triangle without the diagonal for matrices, and Fisher z = atanh(r) with a documented clip
//! near |r| = 1. Values are decoded in parallel straight into their participant's row.
//! Similarity is the next stage's job.

mod build;
mod error;
pub(crate) mod fisher;
pub mod nuisance;

pub use build::{
    build_features, standardise_measures, FeatureOptions, FeatureSummary, Features, Standardised, ValueScale,
    ValueTransform, CONSTANT_MEASURE_TOLERANCE,
};
pub use error::FeatureError;
pub use fisher::{fisher_z, FISHER_Z_CLIP, RANGE_TOLERANCE};

use ndarray::Array2;

/// Participant-by-feature values: one row per participant (in cohort order), f32.
#[derive(Debug, Clone)]
pub struct FeatureMatrix {
    /// N x F values, standard (row-major) layout.
    pub values: Array2<f32>,
}

impl FeatureMatrix {
    /// Number of participants (rows).
    pub fn participant_count(&self) -> usize {
        self.values.nrows()
    }

    /// The values as one row-major slice (the matrix is always kept in standard layout).
    pub fn row_major(&self) -> &[f32] {
        self.values.as_slice().expect("FeatureMatrix is always in standard (row-major) layout")
    }

    /// Number of features (columns).
    pub fn feature_count(&self) -> usize {
        self.values.ncols()
    }
}

/// Where each feature came from, and how a length-F vector is written back in the user's format.
// One FeatureSpace exists per run; boxing the NIfTI header would buy nothing.
#[allow(clippy::large_enum_variant)]
#[derive(Debug, Clone)]
pub enum FeatureSpace {
    /// Masked voxels of a 3D grid.
    Voxels(VoxelSpace),
    /// Upper-triangle edges (i < j, row-major: numpy's `triu_indices(R, 1)` order) of R x R matrices.
    Edges(EdgeSpace),
    /// Measures (columns of a table), each standardised across participants.
    Measures(MeasureSpace),
}

/// A measure feature space: one feature per measure; maps become profile tables.
#[derive(Debug, Clone)]
pub struct MeasureSpace {
    /// Measure names, in feature order.
    pub names: Vec<String>,
    /// Mean of each measure across the analysed participants (before standardisation).
    pub means: Vec<f64>,
    /// Sample standard deviation (n - 1) of each measure.
    pub standard_deviations: Vec<f64>,
}

/// A voxel feature space: the input grid, its affine and the mask.
#[derive(Debug, Clone)]
pub struct VoxelSpace {
    /// Grid dimensions (i, j, k).
    pub dim: [usize; 3],
    /// Voxel sizes in mm (pixdim[1..4]).
    pub voxel_size: [f32; 3],
    /// Voxel-to-world affine (rows of a 4 x 4 matrix), from the sform if set, else the qform.
    pub affine: [[f64; 4]; 4],
    /// The first input's header, used as the reference for written maps (grid, xforms, units).
    pub reference_header: nifti::NiftiHeader,
    /// Flat voxel index of each feature, in NIfTI file (Fortran) order: i + nx * (j + ny * k).
    pub mask: Vec<usize>,
}

/// An edge feature space over an atlas of R regions.
#[derive(Debug, Clone)]
pub struct EdgeSpace {
    /// Number of regions R.
    pub region_count: usize,
    /// Region names (from an atlas table if given, else `region-001`...).
    pub region_names: Vec<String>,
}

impl EdgeSpace {
    /// The (i, j) regions of edge feature `index` (i < j).
    pub fn edge(&self, index: usize) -> (usize, usize) {
        // Row i holds R - 1 - i edges; walk rows until the index falls inside one.
        let regions = self.region_count;
        let mut remaining = index;
        for row in 0..regions {
            let row_len = regions - 1 - row;
            if remaining < row_len {
                return (row, row + 1 + remaining);
            }
            remaining -= row_len;
        }
        panic!("edge index {index} out of range for {regions} regions");
    }
}

impl FeatureSpace {
    /// Number of features this space describes.
    pub fn feature_count(&self) -> usize {
        match self {
            FeatureSpace::Voxels(space) => space.mask.len(),
            FeatureSpace::Edges(space) => space.region_count * space.region_count.saturating_sub(1) / 2,
            FeatureSpace::Measures(space) => space.names.len(),
        }
    }
}
