//! RGB rasters (matrix heat maps, brain slices, colour bars) encoded as PNG data URIs, so the
//! report carries its images inline and opens offline.

use base64::Engine as _;

use super::colour::ColourMap;

/// Longest side of a matrix raster; larger matrices are averaged in blocks, since a screen
/// shows at most a few hundred rows of a figure anyway (layout choice).
pub const MAX_MATRIX_PIXELS: usize = 600;

/// An 8-bit RGB image, rows top to bottom.
#[derive(Debug, Clone)]
pub struct Raster {
    width: usize,
    height: usize,
    pixels: Vec<u8>,
}

impl Raster {
    /// A raster filled with one colour.
    pub fn filled(width: usize, height: usize, colour: [u8; 3]) -> Self {
        let mut pixels = Vec::with_capacity(width * height * 3);
        for _ in 0..width * height {
            pixels.extend_from_slice(&colour);
        }
        Raster { width, height, pixels }
    }

    /// Width in pixels.
    pub fn width(&self) -> usize {
        self.width
    }

    /// Height in pixels.
    pub fn height(&self) -> usize {
        self.height
    }

    /// Sets one pixel (ignored outside the raster).
    pub fn set(&mut self, column: usize, row: usize, colour: [u8; 3]) {
        if column < self.width && row < self.height {
            let at = 3 * (row * self.width + column);
            self.pixels[at..at + 3].copy_from_slice(&colour);
        }
    }

    /// The colour of one pixel (black outside the raster).
    pub fn pixel(&self, column: usize, row: usize) -> [u8; 3] {
        if column < self.width && row < self.height {
            let at = 3 * (row * self.width + column);
            [self.pixels[at], self.pixels[at + 1], self.pixels[at + 2]]
        } else {
            [0, 0, 0]
        }
    }

    /// A square matrix coloured on `range`; matrices larger than [`MAX_MATRIX_PIXELS`] are
    /// averaged over square blocks first (NaN cells are left out of a block's mean).
    pub fn matrix(values: &[f32], side: usize, map: ColourMap, range: (f64, f64)) -> Self {
        let block = side.div_ceil(MAX_MATRIX_PIXELS).max(1);
        let pixels_side = side.div_ceil(block);
        let mut raster = Raster::filled(pixels_side, pixels_side, [255, 255, 255]);
        for row in 0..pixels_side {
            for column in 0..pixels_side {
                let (mut sum, mut count) = (0.0f64, 0usize);
                for i in row * block..((row + 1) * block).min(side) {
                    for j in column * block..((column + 1) * block).min(side) {
                        let value = f64::from(values[i * side + j]);
                        if value.is_finite() {
                            sum += value;
                            count += 1;
                        }
                    }
                }
                let colour = if count == 0 { [255, 255, 255] } else { map.value(sum / count as f64, range) };
                raster.set(column, row, colour);
            }
        }
        raster
    }

    /// A vertical colour bar, top = the high end of the map.
    pub fn colour_bar(map: ColourMap, steps: usize) -> Self {
        let mut raster = Raster::filled(1, steps, [0, 0, 0]);
        for row in 0..steps {
            raster.set(0, row, map.at(1.0 - row as f64 / (steps - 1).max(1) as f64));
        }
        raster
    }

    /// The raster as PNG bytes (8-bit RGB, default compression); an empty raster is written as
    /// one white pixel, since PNG has no empty images.
    pub fn png(&self) -> Vec<u8> {
        if self.width == 0 || self.height == 0 {
            return Raster::filled(1, 1, [255, 255, 255]).png();
        }
        let mut bytes = Vec::new();
        {
            let mut encoder = png::Encoder::new(&mut bytes, self.width as u32, self.height as u32);
            encoder.set_color(png::ColorType::Rgb);
            encoder.set_depth(png::BitDepth::Eight);
            // Writing into memory cannot fail for a well-formed raster (sizes match by construction).
            let mut writer = encoder.write_header().expect("PNG header of an in-memory raster");
            writer.write_image_data(&self.pixels).expect("PNG data of an in-memory raster");
        }
        bytes
    }

    /// `data:image/png;base64,...`
    pub fn data_uri(&self) -> String {
        format!("data:image/png;base64,{}", base64::engine::general_purpose::STANDARD.encode(self.png()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn png_signature_and_size() {
        let mut raster = Raster::filled(3, 2, [255, 255, 255]);
        raster.set(2, 1, [1, 2, 3]);
        let bytes = raster.png();
        // PNG signature and IHDR width/height (ISO/IEC 15948, PNG 2nd edition, 5.2 and 11.2.2).
        assert_eq!(&bytes[..8], &[0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A]);
        assert_eq!(&bytes[12..16], b"IHDR");
        assert_eq!(u32::from_be_bytes([bytes[16], bytes[17], bytes[18], bytes[19]]), 3);
        assert_eq!(u32::from_be_bytes([bytes[20], bytes[21], bytes[22], bytes[23]]), 2);
        assert!(raster.data_uri().starts_with("data:image/png;base64,iVBORw0KGgo"));
    }

    #[test]
    fn empty_rasters_still_encode() {
        let bytes = Raster::matrix(&[], 0, ColourMap::Viridis, (0.0, 1.0)).png();
        assert_eq!(u32::from_be_bytes([bytes[16], bytes[17], bytes[18], bytes[19]]), 1);
    }

    #[test]
    fn large_matrices_are_block_averaged() {
        let side = 2 * MAX_MATRIX_PIXELS;
        let values = vec![0.5f32; side * side];
        let raster = Raster::matrix(&values, side, ColourMap::Viridis, (0.0, 1.0));
        assert_eq!(raster.width(), MAX_MATRIX_PIXELS);
        assert_eq!(raster.height(), MAX_MATRIX_PIXELS);
    }
}
