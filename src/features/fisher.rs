//! Fisher's z transform of correlation coefficients.

/// |r| is clipped to 1 - `FISHER_Z_CLIP` before the transform, so r = +-1 (a seed voxel's own
/// correlation, or a matrix rounded to float32) gives a large finite z (about +-8.3) instead of
/// infinity. 1e-7 is just above float32's resolution below 1 (6e-8), so every float32 r below
/// 1 - 1e-7 is transformed exactly.
pub const FISHER_Z_CLIP: f64 = 1e-7;

/// Values with |r| up to 1 + `RANGE_TOLERANCE` are taken as rounding of |r| = 1 (float32 products
/// can overshoot by a few ulps); beyond that the input is not a correlation and is refused.
pub const RANGE_TOLERANCE: f64 = 1e-5;

/// Fisher z = atanh(r), with |r| clipped at 1 - [`FISHER_Z_CLIP`].
///
/// # References
/// Fisher 1915, Biometrika 10:507-521; Fisher 1921, Metron 1:3-32.
pub fn fisher_z(r: f64) -> f64 {
    let limit = 1.0 - FISHER_Z_CLIP;
    // Rust's f64::atanh evaluates 0.5 * ln_1p(2x / (1 - x)), which loses about 1e-10 relative
    // accuracy for x near -1; atanh is odd, so transform |r| and restore the sign.
    if r.is_nan() {
        return f64::NAN;
    }
    let magnitude = r.abs().min(limit).atanh();
    magnitude.copysign(r)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn published_value_and_clip() {
        // REFERENCES.md: atanh(0.5) = 0.549306144334 (computed; Fisher 1915/1921).
        assert!((fisher_z(0.5) - 0.549_306_144_334).abs() < 1e-12);
        assert!((fisher_z(-0.5) + 0.549_306_144_334).abs() < 1e-12);
        assert!(fisher_z(1.0).is_finite());
        assert!((fisher_z(1.0) - (1.0f64 - FISHER_Z_CLIP).atanh()).abs() < 1e-12);
    }
}
