//! Fisher's z transform of correlation coefficients.
//!
//! One scalar kernel serves every caller: z = atanh(r) through the range reduction and the
//! minimax polynomial of fdlibm's `log` (Sun Microsystems 1993, `e_log.c`), written branch-free so
//! a feature row is transformed several values at a time (SSE2, or AVX2 / AVX-512 where the CPU
//! has them, chosen at run time). The arithmetic is the same IEEE operations in the same order
//! whatever the vector width (no fused multiply-add), so results are identical on every path.

/// |r| is clipped to 1 - `FISHER_Z_CLIP` before the transform, so r = +-1 (a seed voxel's own
/// correlation, or a matrix rounded to float32) gives a large finite z (about +-8.3) instead of
/// infinity. 1e-7 is just above float32's resolution below 1 (6e-8), so every float32 r below
/// 1 - 1e-7 is transformed exactly.
pub const FISHER_Z_CLIP: f64 = 1e-7;

/// Values with |r| up to 1 + `RANGE_TOLERANCE` are taken as rounding of |r| = 1 (float32 products
/// can overshoot by a few ulps); beyond that the input is not a correlation and is refused.
pub const RANGE_TOLERANCE: f64 = 1e-5;

/// Coefficients Lg1..Lg7 of fdlibm's `e_log.c`: R(z) = Lg1 z + ... + Lg7 z^7 approximates
/// (log((1 + s) / (1 - s)) - 2 s) / s with z = s^2, |s| <= 0.1716, error below 2^-58.62.
const LG: [f64; 7] = [
    6.666_666_666_666_735e-1,
    3.999_999_999_940_942e-1,
    2.857_142_874_366_239e-1,
    2.222_219_843_214_978_4e-1,
    1.818_357_216_161_805e-1,
    1.531_383_769_920_937_3e-1,
    1.479_819_860_511_658_6e-1,
];

/// ln 2 split in a high part with trailing zero bits and a low part (fdlibm `e_log.c`), so that
/// k ln 2 is exact in the high part for the small k met here.
const LN2_HI: f64 = 6.931_471_803_691_238e-1;
/// See [`LN2_HI`].
const LN2_LO: f64 = 1.908_214_929_270_587_7e-10;

/// Bit pattern of sqrt(2)/2: subtracting it before taking the exponent puts the reduced
/// mantissa in [sqrt(2)/2, sqrt(2)).
pub(crate) const SQRT_HALF_BITS: u64 = 0x3fe6_a09e_667f_3bcd;

/// 2^52 as the bit pattern 0x4330...: or-ing a small integer into its mantissa and subtracting
/// 2^52 converts it to f64 without an integer-to-float instruction (which SSE2 lacks for 64 bits).
pub(crate) const TWO_52_BITS: u64 = 0x4330_0000_0000_0000;

#[inline(always)]
pub(crate) fn lg_polynomial(z: f64) -> f64 {
    z * (LG[0] + z * (LG[1] + z * (LG[2] + z * (LG[3] + z * (LG[4] + z * (LG[5] + z * LG[6]))))))
}

/// atanh(x) for 0 <= x < 1, branch-free.
///
/// atanh(x) = log(y) / 2 with y = (1 + x) / (1 - x) = 2^k m, m in [sqrt(2)/2, sqrt(2)).
/// With s = (m - 1) / (m + 1), log(m) = 2 atanh(s) = 2 s + s R(s^2); when k = 0, s = x exactly,
/// so small correlations keep full relative accuracy. Relative error below 5e-16 against libm's
/// atanh over every 7th float32 in [0, 1) (measured).
#[inline(always)]
fn atanh_nonnegative(x: f64) -> f64 {
    let y = (1.0 + x) / (1.0 - x);
    let bits = y.to_bits();
    // y >= 1, so k >= 0 and a logical shift suffices.
    let k = bits.wrapping_sub(SQRT_HALF_BITS) >> 52;
    let m = f64::from_bits(bits - (k << 52));
    let f = m - 1.0;
    let reduced = f / (2.0 + f);
    let keep_x = 0u64.wrapping_sub(u64::from(k == 0));
    let s = f64::from_bits((x.to_bits() & keep_x) | (reduced.to_bits() & !keep_x));
    let kf = f64::from_bits(k | TWO_52_BITS) - f64::from_bits(TWO_52_BITS);
    kf * (0.5 * LN2_HI) + (s + 0.5 * s * lg_polynomial(s * s) + kf * (0.5 * LN2_LO))
}

/// atanh(x) for 0 <= x < 1 where x is a float32 value widened to f64, with one division.
///
/// With a = 1 + x and b = 1 - x = 2^e mb (mb in [1, 2)), y = a / b = 2^(k) m where k = -e + j
/// and j in {-1, 0, 1} picks t = 2^j mb so that a / t lies in [sqrt(2)/2, sqrt(2)). Then
/// s = (a - t) / (a + t) = (m - 1) / (m + 1) and atanh(x) = (k ln 2 + 2 s + s R(s^2)) / 2, as in
/// [`atanh_nonnegative`], but without forming y: a - t is exact (Sterbenz: a and t are within a
/// factor of 2) and, for float32 inputs of at least 2^-29, so are a and b. When k = 0, s = x
/// exactly, which also covers the tiny inputs where a would round.
#[inline(always)]
fn atanh_nonnegative_float32(x: f64) -> f64 {
    let a = 1.0 + x;
    let b = 1.0 - x;
    let b_bits = b.to_bits();
    // b >= 1e-7 is normal: its biased exponent and its mantissa in [1, 2).
    let biased = f64::from_bits((b_bits >> 52) | TWO_52_BITS) - f64::from_bits(TWO_52_BITS);
    let mb = f64::from_bits((b_bits & 0x000f_ffff_ffff_ffff) | 0x3ff0_0000_0000_0000);
    let low = a < mb * std::f64::consts::FRAC_1_SQRT_2;
    let high = a >= mb * std::f64::consts::SQRT_2;
    let (high_mask, low_mask) = (0u64.wrapping_sub(u64::from(high)), 0u64.wrapping_sub(u64::from(low)));
    // 2^j as bits: the exponent of 1.0 moved up or down by one.
    let power =
        0x3ff0_0000_0000_0000u64.wrapping_add(high_mask & (1 << 52)).wrapping_sub(low_mask & (1 << 52));
    let t = mb * f64::from_bits(power);
    let kf = 1023.0 - biased + f64::from_bits(high_mask & 1f64.to_bits())
        - f64::from_bits(low_mask & 1f64.to_bits());
    let reduced = (a - t) / (a + t);
    let keep_x = 0u64.wrapping_sub(u64::from(kf == 0.0));
    let s = f64::from_bits((x.to_bits() & keep_x) | (reduced.to_bits() & !keep_x));
    kf * (0.5 * LN2_HI) + (s + 0.5 * s * lg_polynomial(s * s) + kf * (0.5 * LN2_LO))
}

/// Fisher z of a float32 value (widened to f64) with the clip, NaN kept: [`fisher_z_kernel`]
/// with [`atanh_nonnegative_float32`].
#[inline(always)]
fn fisher_z_float32_kernel(r: f64) -> f64 {
    let limit = 1.0 - FISHER_Z_CLIP;
    let magnitude = if r.abs() < limit { r.abs() } else { limit };
    let z = atanh_nonnegative_float32(magnitude);
    let z = f64::from_bits(z.to_bits() | (r.to_bits() & 0x8000_0000_0000_0000));
    if r.is_nan() {
        f64::NAN
    } else {
        z
    }
}

/// Fisher z of one value with the clip, NaN kept.
#[inline(always)]
fn fisher_z_kernel(r: f64) -> f64 {
    let limit = 1.0 - FISHER_Z_CLIP;
    let magnitude = if r.abs() < limit { r.abs() } else { limit };
    let z = atanh_nonnegative(magnitude);
    let z = f64::from_bits(z.to_bits() | (r.to_bits() & 0x8000_0000_0000_0000));
    if r.is_nan() {
        f64::NAN
    } else {
        z
    }
}

/// Fisher z = atanh(r), with |r| clipped at 1 - [`FISHER_Z_CLIP`].
///
/// # References
/// Fisher 1915, Biometrika 10:507-521; Fisher 1921, Metron 1:3-32. The atanh kernel follows the
/// logarithm of fdlibm (Sun Microsystems 1993, `e_log.c`).
pub fn fisher_z(r: f64) -> f64 {
    fisher_z_kernel(r)
}

/// Fisher z of every value in place (float32 in, float32 out), as [`fisher_z`] value by value.
///
/// The caller has checked the range (|r| <= 1 + [`RANGE_TOLERANCE`]); values are clipped as in
/// [`fisher_z`]. Several values at a time: the widest of AVX-512, AVX2 and SSE2 the CPU offers,
/// with identical results on each.
///
/// # Complexity
/// O(n); about 3 ns per value with AVX2 on the development machine (libm's atanh: about 10 ns).
pub fn fisher_z_in_place(values: &mut [f32]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked just above).
            unsafe { fisher_z_avx512(values) };
            return;
        }
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2 (checked just above).
            unsafe { fisher_z_avx2(values) };
            return;
        }
    }
    fisher_z_lanes(values);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn fisher_z_avx512(values: &mut [f32]) {
    fisher_z_lanes(values);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn fisher_z_avx2(values: &mut [f32]) {
    fisher_z_lanes(values);
}

/// Groups of 8 values, written so the compiler vectorises the kernel at the enclosing target
/// features.
#[inline(always)]
fn fisher_z_lanes(values: &mut [f32]) {
    let mut chunks = values.chunks_exact_mut(8);
    for chunk in &mut chunks {
        let mut lanes = [0.0f64; 8];
        for (lane, &value) in lanes.iter_mut().zip(chunk.iter()) {
            *lane = fisher_z_float32_kernel(f64::from(value));
        }
        for (value, &lane) in chunk.iter_mut().zip(&lanes) {
            *value = lane as f32;
        }
    }
    for value in chunks.into_remainder() {
        *value = fisher_z_float32_kernel(f64::from(*value)) as f32;
    }
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
        assert!(fisher_z(f64::NAN).is_nan());
        assert_eq!(fisher_z(0.0), 0.0);
    }

    #[test]
    fn kernel_matches_libm_atanh_over_float32_inputs() {
        // Reference: atanh(x) = (log1p(x) - log1p(-x)) / 2 with the platform libm's log1p (glibc,
        // under 1 ulp); the two terms have opposite signs, so nothing cancels. (Rust's f64::atanh
        // is off by up to about 5 ulps near |x| = 0.97: 1.04e-15 relative at x = 0.9722546, where
        // mpmath at 200 bits agrees with this kernel to the last bit; checked by hand.)
        // Every 997th float32 in (-1, 1), both signs: relative error below 1e-15, and the same
        // float32 after rounding.
        let atanh = |x: f64| 0.5 * (x.ln_1p() - (-x).ln_1p());
        let one = 1.0f32.to_bits();
        let mut bits = 1u32;
        let mut row = Vec::new();
        let mut expected = Vec::new();
        while bits < one {
            for value in [f32::from_bits(bits), -f32::from_bits(bits)] {
                let x = f64::from(value).clamp(-(1.0 - FISHER_Z_CLIP), 1.0 - FISHER_Z_CLIP);
                let reference = atanh(x);
                let ours = fisher_z(f64::from(value));
                assert!(
                    ((ours - reference) / reference).abs() < 1e-15,
                    "x = {value}: {ours} against libm {reference}"
                );
                row.push(value);
                expected.push(reference as f32);
            }
            bits += 997;
        }
        // The float32 path (one division) rounds to libm's float32 everywhere in this sample, and
        // stays within 1e-15 of libm before rounding.
        for &value in &row {
            let x = f64::from(value).clamp(-(1.0 - FISHER_Z_CLIP), 1.0 - FISHER_Z_CLIP);
            let ours = fisher_z_float32_kernel(f64::from(value));
            assert!(((ours - atanh(x)) / atanh(x)).abs() < 1e-15, "x = {value}: {ours}");
        }
        fisher_z_in_place(&mut row);
        let mismatches = row.iter().zip(&expected).filter(|(a, b)| a != b).count();
        assert_eq!(mismatches, 0);
    }

    #[test]
    fn in_place_clips_and_keeps_sign() {
        let mut values = [1.0f32, -1.0, 1.000_005, 0.25, -0.25, 0.0, -0.0, 0.999_999_9];
        fisher_z_in_place(&mut values);
        let clipped = (1.0f64 - FISHER_Z_CLIP).atanh() as f32;
        assert_eq!(values[0], clipped);
        assert_eq!(values[1], -clipped);
        assert_eq!(values[2], clipped);
        assert!((f64::from(values[3]) - 0.25f64.atanh()).abs() < 1e-7);
        assert_eq!(values[4], -values[3]);
        assert_eq!(values[5], 0.0);
        assert!(values[6] == 0.0 && values[6].is_sign_negative());
    }
}
