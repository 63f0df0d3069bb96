//! Where the seed is and what the regions are: a seed mask file, one label of an atlas label
//! volume, or a sphere around a point in mm; the regions of an atlas label volume.
//!
//! Everything here works on voxel indices of one grid in NIfTI file (Fortran) order,
//! i + nx * (j + ny * k); reading the series is [`super::stream`]'s job.

use std::path::{Path, PathBuf};

use super::ConnectivityError;
use crate::read::nifti::{affines_match, format_affine, read_volume};

/// A label volume's values must be whole numbers within this distance of an integer (float
/// storage of integer labels is exact; anything further is not a label).
const LABEL_TOLERANCE: f64 = 1e-3;

/// What the seed or the regions are, as given on the command line.
#[derive(Debug, Clone, PartialEq)]
pub enum Target {
    /// The mean series of the voxels where a mask file is non-zero.
    Mask(PathBuf),
    /// The mean series of the voxels whose centre lies within `radius` mm of `centre`.
    Sphere {
        /// World coordinates (mm) of the centre.
        centre: [f64; 3],
        /// Radius in mm.
        radius: f64,
    },
    /// The mean series of the voxels of one label of an atlas label volume.
    Label {
        /// The label volume.
        atlas: PathBuf,
        /// The label.
        label: i64,
    },
    /// An R x R matrix of the mean series of every label of an atlas label volume.
    Regions(PathBuf),
}

impl Target {
    /// True for a region matrix, false for a seed map.
    pub fn is_matrix(&self) -> bool {
        matches!(self, Target::Regions(_))
    }
}

/// A 3D volume read for its grid and values: a seed mask or an atlas label volume.
#[derive(Debug, Clone)]
pub struct GridVolume {
    /// The file.
    pub path: PathBuf,
    /// Grid dimensions.
    pub dim: [usize; 3],
    /// Voxel-to-world affine.
    pub affine: [[f64; 4]; 4],
    /// Values in file order.
    pub values: Vec<f32>,
}

impl GridVolume {
    /// Reads a 3D NIfTI volume.
    ///
    /// # Errors
    /// The reader's errors (unreadable, not 3D, unsupported type).
    pub fn read(path: &Path, role: &str) -> Result<Self, ConnectivityError> {
        let volume = read_volume(path, role).map_err(ConnectivityError::Read)?;
        Ok(GridVolume {
            path: path.to_path_buf(),
            dim: volume.dim,
            affine: volume.affine,
            values: volume.values,
        })
    }

    /// Checks that a BOLD series lies on this volume's grid.
    ///
    /// # Errors
    /// [`ConnectivityError::Input`] naming the series, the participant and this file.
    pub fn check_grid(
        &self,
        bold: &Path,
        participant: &str,
        dim: [usize; 3],
        affine: &[[f64; 4]; 4],
        flag: &str,
    ) -> Result<(), ConnectivityError> {
        let shape = |d: [usize; 3]| format!("{}x{}x{}", d[0], d[1], d[2]);
        let found = if dim != self.dim {
            Some(format!(
                "grid {} differs from {} {} of {}",
                shape(dim),
                flag,
                self.path.display(),
                shape(self.dim)
            ))
        } else if !affines_match(affine, &self.affine) {
            Some(format!(
                "affine {} differs from {} {}'s {}",
                format_affine(affine),
                flag,
                self.path.display(),
                format_affine(&self.affine)
            ))
        } else {
            None
        };
        match found {
            Some(found) => Err(ConnectivityError::Input {
                path: bold.to_path_buf(),
                participant: participant.to_string(),
                problem: format!("{found}; resample {flag} to the BOLD grid (same dimensions and affine)"),
            }),
            None => Ok(()),
        }
    }
}

/// The voxels of a seed mask: every voxel whose value is non-zero (and not NaN).
///
/// # Errors
/// [`ConnectivityError::File`] when the mask has no such voxel.
pub fn mask_voxels(mask: &GridVolume) -> Result<Vec<usize>, ConnectivityError> {
    let voxels: Vec<usize> =
        mask.values.iter().enumerate().filter(|(_, &v)| v != 0.0 && !v.is_nan()).map(|(i, _)| i).collect();
    if voxels.is_empty() {
        return Err(ConnectivityError::File {
            path: mask.path.clone(),
            problem: "the seed mask holds no non-zero voxel; give a mask with the seed's voxels set to 1"
                .into(),
        });
    }
    Ok(voxels)
}

/// The labels of an atlas label volume, as whole numbers (0 = background).
///
/// # Errors
/// [`ConnectivityError::File`] when a value is not a whole number, or no voxel is labelled.
pub fn labels_of(atlas: &GridVolume) -> Result<Vec<i64>, ConnectivityError> {
    let mut labels = Vec::with_capacity(atlas.values.len());
    for (voxel, &value) in atlas.values.iter().enumerate() {
        let rounded = f64::from(value).round();
        if !value.is_finite() || (f64::from(value) - rounded).abs() > LABEL_TOLERANCE || rounded < 0.0 {
            let [nx, ny, _] = atlas.dim;
            return Err(ConnectivityError::File {
                path: atlas.path.clone(),
                problem: format!(
                    "value {value} at voxel ({}, {}, {}) is not a label; an atlas label volume holds whole numbers \
                     >= 0 (0 = background): give the label volume, not a probability map",
                    voxel % nx,
                    (voxel / nx) % ny,
                    voxel / (nx * ny)
                ),
            });
        }
        labels.push(rounded as i64);
    }
    if labels.iter().all(|&label| label == 0) {
        return Err(ConnectivityError::File {
            path: atlas.path.clone(),
            problem: "every voxel is 0 (background); the atlas label volume labels no region".into(),
        });
    }
    Ok(labels)
}

/// The voxels of one label.
///
/// # Errors
/// [`ConnectivityError::File`] naming the labels present when `label` is absent.
pub fn label_voxels(atlas: &GridVolume, labels: &[i64], label: i64) -> Result<Vec<usize>, ConnectivityError> {
    let voxels: Vec<usize> =
        labels.iter().enumerate().filter(|(_, &value)| value == label).map(|(i, _)| i).collect();
    if voxels.is_empty() || label == 0 {
        let present = Regions::from_labels(labels).labels;
        let shown: Vec<String> = present.iter().take(20).map(i64::to_string).collect();
        return Err(ConnectivityError::File {
            path: atlas.path.clone(),
            problem: format!(
                "label {label} is not in the atlas volume (labels present: {}{}); fix --seed-label",
                shown.join(", "),
                if present.len() > 20 { format!(" and {} more", present.len() - 20) } else { String::new() }
            ),
        });
    }
    Ok(voxels)
}

/// The voxels whose centre lies within `radius` mm of `centre`: world coordinates of voxel
/// (i, j, k) are `affine * [i, j, k, 1]`, and a voxel belongs when the squared distance is at
/// most `radius^2`.
///
/// # Complexity
/// O(V) for V voxels of the grid.
pub fn sphere_voxels(dim: [usize; 3], affine: &[[f64; 4]; 4], centre: [f64; 3], radius: f64) -> Vec<usize> {
    let [nx, ny, nz] = dim;
    let limit = radius * radius;
    let mut voxels = Vec::new();
    for k in 0..nz {
        for j in 0..ny {
            for i in 0..nx {
                let point = [i as f64, j as f64, k as f64];
                let distance: f64 = (0..3)
                    .map(|axis| {
                        let row = &affine[axis];
                        let world = row[0] * point[0] + row[1] * point[1] + row[2] * point[2] + row[3];
                        (world - centre[axis]).powi(2)
                    })
                    .sum();
                if distance <= limit {
                    voxels.push(i + nx * (j + ny * k));
                }
            }
        }
    }
    voxels
}

/// The world-space box (mm) spanned by a grid's voxel centres, for messages.
pub fn grid_extent(dim: [usize; 3], affine: &[[f64; 4]; 4]) -> String {
    let mut low = [f64::INFINITY; 3];
    let mut high = [f64::NEG_INFINITY; 3];
    for corner in 0..8 {
        let point = [
            if corner & 1 == 1 { (dim[0] - 1) as f64 } else { 0.0 },
            if corner & 2 == 2 { (dim[1] - 1) as f64 } else { 0.0 },
            if corner & 4 == 4 { (dim[2] - 1) as f64 } else { 0.0 },
        ];
        for axis in 0..3 {
            let row = &affine[axis];
            let world = row[0] * point[0] + row[1] * point[1] + row[2] * point[2] + row[3];
            low[axis] = low[axis].min(world);
            high[axis] = high[axis].max(world);
        }
    }
    format!(
        "x {:.1} to {:.1}, y {:.1} to {:.1}, z {:.1} to {:.1} mm",
        low[0], high[0], low[1], high[1], low[2], high[2]
    )
}

/// The regions of a label volume: each distinct non-zero label, in increasing order.
#[derive(Debug, Clone)]
pub struct Regions {
    /// The labels, increasing; region r of the matrix is `labels[r]`.
    pub labels: Vec<i64>,
    /// Per voxel, its region index, or [`Regions::BACKGROUND`].
    pub index: Vec<u32>,
    /// Voxels per region.
    pub voxel_counts: Vec<usize>,
}

impl Regions {
    /// The index of a voxel in no region.
    pub const BACKGROUND: u32 = u32::MAX;

    /// Groups the voxels of a label volume into regions.
    pub fn from_labels(labels: &[i64]) -> Regions {
        let mut distinct: Vec<i64> = labels.iter().copied().filter(|&label| label != 0).collect();
        distinct.sort_unstable();
        distinct.dedup();
        let mut voxel_counts = vec![0; distinct.len()];
        let index = labels
            .iter()
            .map(|&label| match distinct.binary_search(&label) {
                Ok(region) if label != 0 => {
                    voxel_counts[region] += 1;
                    region as u32
                }
                _ => Regions::BACKGROUND,
            })
            .collect();
        Regions { labels: distinct, index, voxel_counts }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sphere_on_a_unit_grid_holds_the_lattice_points_within_the_radius() {
        // Identity affine: the 7 points of a radius-1 ball on the integer lattice (centre and
        // its 6 face neighbours; the 12 edge neighbours lie at sqrt(2)).
        let identity =
            [[1.0, 0.0, 0.0, 0.0], [0.0, 1.0, 0.0, 0.0], [0.0, 0.0, 1.0, 0.0], [0.0, 0.0, 0.0, 1.0]];
        let voxels = sphere_voxels([5, 5, 5], &identity, [2.0, 2.0, 2.0], 1.0);
        assert_eq!(voxels.len(), 7);
        assert!(voxels.contains(&(2 + 5 * (2 + 5 * 2))));
        assert!(sphere_voxels([5, 5, 5], &identity, [20.0, 2.0, 2.0], 1.0).is_empty());
    }

    #[test]
    fn regions_are_sorted_labels_with_their_voxel_counts() {
        let regions = Regions::from_labels(&[0, 7, 3, 7, 0, 3, 3]);
        assert_eq!(regions.labels, [3, 7]);
        assert_eq!(regions.voxel_counts, [3, 2]);
        assert_eq!(regions.index[1], 1);
        assert_eq!(regions.index[0], Regions::BACKGROUND);
    }
}
