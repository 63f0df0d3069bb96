//! Brain slice mosaics: axial, coronal and sagittal slices of a volume over its mask, as PNG
//! rasters inside SVG, with slice coordinates in mm and a colour bar.
//!
//! Display follows the neurological convention: the participant's left on the left of axial and
//! coronal slices, anterior on the right of sagittal slices, superior (or anterior in axial
//! slices) at the top. Axis directions are taken from the signs of the affine's diagonal, so
//! grids stored with flipped axes show the same way round (rotations are not undone).

use super::colour::ColourMap;
use super::raster::Raster;
use super::svg::{format_tick, Anchor, Svg, TICK_FONT};

/// Slices shown per orientation.
pub const SLICES_PER_ROW: usize = 6;
/// Drawing scale, user units per mm: a 180 mm slice is about 110 units wide (layout choice).
const UNITS_PER_MM: f64 = 0.6;
/// Colour outside the mask (dark, as image viewers show the background).
const BACKGROUND: [u8; 3] = [38, 38, 38];
/// Gap between slices.
const GAP: f64 = 6.0;
/// Height of the row label and slice coordinate text under each slice.
const LABEL_ROOM: f64 = 18.0;

/// A volume on its grid, with the mask of voxels that carry values.
#[derive(Debug, Clone, Copy)]
pub struct Grid<'a> {
    /// Dimensions (i, j, k).
    pub dim: [usize; 3],
    /// Voxel-to-world affine rows.
    pub affine: &'a [[f64; 4]; 4],
    /// In-mask flag per voxel, file order (i fastest).
    pub mask: &'a [bool],
}

/// How a volume is coloured and labelled.
#[derive(Debug, Clone, Copy)]
pub struct Scale<'a> {
    /// Colour map.
    pub map: ColourMap,
    /// Values at the two ends of the map.
    pub range: (f64, f64),
    /// Title above the mosaic.
    pub title: &'a str,
    /// Label above the colour bar.
    pub colour_label: &'a str,
}

/// The three orientations: (name, horizontal axis, vertical axis, fixed axis, coordinate name).
const ORIENTATIONS: [(&str, usize, usize, usize, &str); 3] =
    [("axial", 0, 1, 2, "z"), ("coronal", 0, 2, 1, "y"), ("sagittal", 1, 2, 0, "x")];

impl Grid<'_> {
    fn index(&self, voxel: [usize; 3]) -> usize {
        voxel[0] + self.dim[0] * (voxel[1] + self.dim[1] * voxel[2])
    }

    /// Voxel size along axis `axis` (mm) and whether the axis points to increasing world
    /// coordinates.
    fn axis(&self, axis: usize) -> (f64, bool) {
        let column: Vec<f64> = (0..3).map(|row| self.affine[row][axis]).collect();
        let size = column.iter().map(|v| v * v).sum::<f64>().sqrt();
        (if size > 0.0 { size } else { 1.0 }, self.affine[axis][axis] >= 0.0)
    }

    /// World coordinate along `axis` of a voxel index on that axis, others at the grid centre.
    fn world(&self, axis: usize, index: usize) -> f64 {
        let mut voxel = [(self.dim[0] / 2) as f64, (self.dim[1] / 2) as f64, (self.dim[2] / 2) as f64];
        voxel[axis] = index as f64;
        let row = &self.affine[axis];
        row[0] * voxel[0] + row[1] * voxel[1] + row[2] * voxel[2] + row[3]
    }

    /// Evenly spaced slice indices across the mask's extent along `axis`, in increasing world
    /// coordinate.
    pub fn slices(&self, axis: usize) -> Vec<usize> {
        let (mut low, mut high) = (usize::MAX, 0usize);
        for k in 0..self.dim[2] {
            for j in 0..self.dim[1] {
                for i in 0..self.dim[0] {
                    let voxel = [i, j, k];
                    if self.mask[self.index(voxel)] {
                        low = low.min(voxel[axis]);
                        high = high.max(voxel[axis]);
                    }
                }
            }
        }
        if low > high {
            return Vec::new();
        }
        let span = (high - low) as f64;
        let mut slices: Vec<usize> = (0..SLICES_PER_ROW)
            .map(|s| low + (span * (s as f64 + 1.0) / (SLICES_PER_ROW as f64 + 1.0)).round() as usize)
            .collect();
        slices.dedup();
        if !self.axis(axis).1 {
            slices.reverse();
        }
        slices
    }

    /// One slice as a raster: mask voxels coloured by value, the rest background.
    fn slice(
        &self,
        values: &[f32],
        orientation: usize,
        at: usize,
        map: ColourMap,
        range: (f64, f64),
    ) -> Raster {
        let (_, horizontal, vertical, fixed, _) = ORIENTATIONS[orientation];
        let (width, height) = (self.dim[horizontal], self.dim[vertical]);
        let (_, h_up) = self.axis(horizontal);
        let (_, v_up) = self.axis(vertical);
        let mut raster = Raster::filled(width, height, BACKGROUND);
        for row in 0..height {
            for column in 0..width {
                let mut voxel = [0usize; 3];
                voxel[fixed] = at;
                voxel[horizontal] = if h_up { column } else { width - 1 - column };
                voxel[vertical] = if v_up { height - 1 - row } else { row };
                let index = self.index(voxel);
                if self.mask[index] {
                    raster.set(column, row, map.value(f64::from(values[index]), range));
                }
            }
        }
        raster
    }

    /// Width in user units of the widest mosaic row.
    pub fn mosaic_width(&self) -> f64 {
        ORIENTATIONS
            .iter()
            .map(|(_, horizontal, ..)| {
                let (size, _) = self.axis(*horizontal);
                SLICES_PER_ROW as f64 * (self.dim[*horizontal] as f64 * size * UNITS_PER_MM + GAP)
            })
            .fold(0.0, f64::max)
    }

    /// Draws the three rows of slices of `values` at (left, top) with a colour bar on the right;
    /// returns the height used.
    pub fn draw(&self, svg: &mut Svg, (left, top): (f64, f64), values: &[f32], scale: &Scale<'_>) -> f64 {
        let Scale { map, range, title, colour_label } = *scale;
        svg.title((left, top + 13.0), title, Anchor::Start);
        let mut y = top + 22.0;
        for (orientation, (name, horizontal, vertical, fixed, coordinate)) in ORIENTATIONS.iter().enumerate()
        {
            let (h_size, _) = self.axis(*horizontal);
            let (v_size, _) = self.axis(*vertical);
            let width = self.dim[*horizontal] as f64 * h_size * UNITS_PER_MM;
            let height = self.dim[*vertical] as f64 * v_size * UNITS_PER_MM;
            let mut x = left + 62.0;
            svg.text((left + 56.0, y + height / 2.0 + 4.0), name, TICK_FONT, Anchor::End, 0.0);
            for at in self.slices(*fixed) {
                let raster = self.slice(values, orientation, at, map, range);
                svg.image(x, y, width, height, &raster);
                let mm = self.world(*fixed, at);
                svg.text(
                    (x + width / 2.0, y + height + 13.0),
                    &format!("{coordinate} = {} mm", format_tick(mm.round())),
                    TICK_FONT,
                    Anchor::Middle,
                    0.0,
                );
                x += width + GAP;
            }
            y += height + LABEL_ROOM;
        }
        let bar_x = left + 62.0 + self.mosaic_width() + 10.0;
        let bar_height = (y - top - 60.0).max(60.0);
        svg.colour_bar(bar_x, top + 40.0, bar_height, map, range, colour_label);
        y - top
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slices_span_the_mask_and_coordinates_follow_the_affine() {
        // A 10 x 10 x 10 grid of 2 mm voxels, origin at -10 mm, mask = voxels 2..=8 on every axis.
        let dim = [10, 10, 10];
        let affine =
            [[2.0, 0.0, 0.0, -10.0], [0.0, 2.0, 0.0, -10.0], [0.0, 0.0, 2.0, -10.0], [0.0, 0.0, 0.0, 1.0]];
        let mut mask = vec![false; 1000];
        for k in 2..=8 {
            for j in 2..=8 {
                for i in 2..=8 {
                    mask[i + 10 * (j + 10 * k)] = true;
                }
            }
        }
        let grid = Grid { dim, affine: &affine, mask: &mask };
        // 6 slices over 2..=8: 2 + 6 * s / 7 rounded for s = 1..=6.
        assert_eq!(grid.slices(2), vec![3, 4, 5, 6, 7], "the repeated slice 5 is shown once");
        assert!((grid.world(2, 5) - 0.0).abs() < 1e-12, "voxel 5 sits at 0 mm");
        let values = vec![1.0f32; 1000];
        let raster = grid.slice(&values, 0, 5, ColourMap::BlueRed, (-1.0, 1.0));
        assert_eq!((raster.width(), raster.height()), (10, 10));
    }

    #[test]
    fn left_and_anterior_land_on_the_same_side_whatever_the_storage_order() {
        // NIfTI-1 (nifti1.h, "sform"/"qform" comments): world coordinates are RAS+, x increasing
        // to the participant's right, y anterior, z superior. A voxel at x = -8 mm (left),
        // y = +8 mm (anterior) must show in the left column and top row of an axial slice, for a
        // grid stored left-to-right (positive x step) and one stored right-to-left (negative).
        for x_step in [2.0, -2.0] {
            let x_origin = if x_step > 0.0 { -10.0 } else { 10.0 };
            let affine = [
                [x_step, 0.0, 0.0, x_origin],
                [0.0, 2.0, 0.0, -10.0],
                [0.0, 0.0, 2.0, -10.0],
                [0.0, 0.0, 0.0, 1.0],
            ];
            let dim = [11, 11, 11];
            let mask = vec![true; 11 * 11 * 11];
            let grid = Grid { dim, affine: &affine, mask: &mask };
            let i = ((-8.0 - x_origin) / x_step) as usize;
            let j = ((8.0 + 10.0) / 2.0) as usize;
            let mut values = vec![0.0f32; 11 * 11 * 11];
            values[grid.index([i, j, 5])] = 1.0;
            let raster = grid.slice(&values, 0, 5, ColourMap::BlueRed, (-1.0, 1.0));
            let red = ColourMap::BlueRed.at(1.0);
            let mut found = Vec::new();
            for row in 0..raster.height() {
                for column in 0..raster.width() {
                    if raster.pixel(column, row) == red {
                        found.push((column, row));
                    }
                }
            }
            // x = -8 mm is the second column from the left (-10 mm is the first); y = +8 mm is
            // the second row from the top (+10 mm is the first).
            assert_eq!(found, vec![(1, 1)], "x step {x_step}");
        }
    }
}
