//! The report's figures, drawn by strata as SVG (with PNG rasters inline for matrices and brain
//! slices): hand-written SVG rather than a plotting crate, because the figures are a few fixed
//! kinds whose every label must be escaped, and raster heat maps inside vector axes are simplest
//! to control by hand.

pub mod charts;
pub mod colour;
pub mod matrix;
pub mod mosaic;
pub mod raster;
pub mod svg;

/// One figure of the report.
#[derive(Debug, Clone)]
pub struct Figure {
    /// HTML id (letters, digits and dashes, made by strata).
    pub id: String,
    /// Short title.
    pub title: String,
    /// What the figure shows, in words (plain text; escaped when the page is written).
    pub caption: String,
    /// The `<svg>` element.
    pub svg: String,
}

/// The `fraction` quantile (linear interpolation between order statistics, numpy's default
/// "linear" method) of the finite values; NaN when there are none.
pub fn quantile(values: impl IntoIterator<Item = f64>, fraction: f64) -> f64 {
    let mut sorted: Vec<f64> = values.into_iter().filter(|v| v.is_finite()).collect();
    if sorted.is_empty() {
        return f64::NAN;
    }
    sorted.sort_by(f64::total_cmp);
    let position = fraction.clamp(0.0, 1.0) * (sorted.len() - 1) as f64;
    let lower = position.floor() as usize;
    let upper = position.ceil() as usize;
    sorted[lower] + (position - lower as f64) * (sorted[upper] - sorted[lower])
}

/// A symmetric range (-m, m) with m the `fraction` quantile of |values| (at least `floor`).
pub fn symmetric_range(values: impl IntoIterator<Item = f64>, fraction: f64, floor: f64) -> (f64, f64) {
    let magnitude = quantile(values.into_iter().map(f64::abs), fraction);
    let magnitude = if magnitude.is_finite() { magnitude.max(floor) } else { floor };
    (-magnitude, magnitude)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantile_matches_numpy_linear() {
        // numpy.quantile([1, 2, 3, 4], 0.25) = 1.75 and 0.5 -> 2.5 (numpy 2.x, method="linear";
        // from memory of the definition: (n - 1) * q interpolated between order statistics).
        assert!((quantile([4.0, 1.0, 3.0, 2.0], 0.25) - 1.75).abs() < 1e-12);
        assert!((quantile([4.0, 1.0, 3.0, 2.0, f64::NAN], 0.5) - 2.5).abs() < 1e-12);
        assert!(quantile(Vec::<f64>::new(), 0.5).is_nan());
        let (low, high) = symmetric_range([-4.0, 1.0, 2.0], 1.0, 1.0);
        assert!((low + 4.0).abs() < 1e-12 && (high - 4.0).abs() < 1e-12);
    }
}
