//! The map equation's term plogp(x) = x log2 x, branch-free, so that the move deltas of many
//! candidate modules are priced several at a time.
//!
//! log(x) follows fdlibm's `e_log.c` (Sun Microsystems 1993): x = 2^k m with m in
//! [sqrt(2)/2, sqrt(2)), f = m - 1, s = f / (2 + f) and log(m) = f - (f^2/2 - s (f^2/2 + R(s^2)))
//! with fdlibm's minimax polynomial R (shared with the Fisher z kernel); then
//! log2(x) = k + log(m) / ln 2. The arithmetic is the same IEEE operations in the same order on
//! every vector width (no fused multiply-add), so the scalar and vector paths agree bit for bit
//! and results do not depend on the CPU.

use crate::features::fisher::{lg_polynomial, SQRT_HALF_BITS, TWO_52_BITS};

/// (1023 << 52) - bits(sqrt(2)/2): added to the bits of a positive normal x, the exponent field
/// of the sum is k + 1023 with x = 2^k m, m in [sqrt(2)/2, sqrt(2)); the sum cannot overflow.
const REDUCTION_OFFSET: u64 = (1023u64 << 52) - SQRT_HALF_BITS;

/// x log2 x for positive normal x; 0 for x below the smallest normal (zero, the rounding
/// residues of an emptied module's exit, negative values), whose true value is below 1e-305
/// in magnitude.
#[inline(always)]
pub(super) fn plogp(x: f64) -> f64 {
    let bits = x.to_bits();
    let biased = bits.wrapping_add(REDUCTION_OFFSET) >> 52;
    let m = f64::from_bits(bits.wrapping_sub(biased << 52).wrapping_add(1023 << 52));
    let f = m - 1.0;
    let s = f / (2.0 + f);
    let half_square = 0.5 * f * f;
    let log_m = f - (half_square - s * (half_square + lg_polynomial(s * s)));
    let k = f64::from_bits(biased | TWO_52_BITS) - f64::from_bits(TWO_52_BITS) - 1023.0;
    let value = x * (k + log_m * std::f64::consts::LOG2_E);
    if x >= f64::MIN_POSITIVE {
        value
    } else {
        0.0
    }
}

/// [`plogp`] of every value in place: the widest of AVX-512, AVX2 and the baseline the CPU
/// offers, with identical results on each.
pub(super) fn plogp_in_place(values: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        if std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the CPU supports AVX-512F (checked just above).
            unsafe { plogp_avx512(values) };
            return;
        }
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU supports AVX2 (checked just above).
            unsafe { plogp_avx2(values) };
            return;
        }
    }
    plogp_lanes(values);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f")]
fn plogp_avx512(values: &mut [f64]) {
    plogp_lanes(values);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn plogp_avx2(values: &mut [f64]) {
    plogp_lanes(values);
}

/// Written so the compiler vectorises the kernel at the enclosing target features.
#[inline(always)]
fn plogp_lanes(values: &mut [f64]) {
    for value in values.iter_mut() {
        *value = plogp(*value);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The reference: x log2 x with the platform libm's log2 (glibc, under 1 ulp).
    fn reference(x: f64) -> f64 {
        if x > 0.0 {
            x * x.log2()
        } else {
            0.0
        }
    }

    #[test]
    fn kernel_matches_libm_log2() {
        // Flows and exit flows of a participant graph lie in (0, 1]; 200,000 values spread
        // geometrically over 1e-12..4 (and the exact powers of two, where log2 is an integer):
        // relative error below 4 ulp (9e-16) of libm's x log2 x.
        let mut worst = 0.0f64;
        let count = 200_000;
        for index in 0..count {
            let x = 1e-12 * (4e12f64).powf(index as f64 / (count - 1) as f64);
            for value in [x, f64::from_bits(x.to_bits() + 1)] {
                let expected = reference(value);
                let error = ((plogp(value) - expected) / expected).abs();
                worst = worst.max(if expected == 0.0 { plogp(value).abs() } else { error });
            }
        }
        assert!(worst < 9e-16, "worst relative error {worst:e}");
        for power in -40..3 {
            let x = 2f64.powi(power);
            assert_eq!(plogp(x), x * f64::from(power), "x = 2^{power}");
        }
        assert_eq!(plogp(1.0), 0.0);
    }

    #[test]
    fn zero_negative_and_subnormal_give_zero() {
        for x in [0.0, -0.0, -1e-17, -0.5, f64::MIN_POSITIVE / 2.0, 5e-324] {
            assert_eq!(plogp(x), 0.0, "x = {x:e}");
        }
        assert!(plogp(f64::MIN_POSITIVE) < 0.0);
    }

    #[test]
    fn vector_paths_equal_the_scalar_kernel() {
        let values: Vec<f64> =
            (0..1_003).map(|i| (i as f64 * 0.618_033_988_749_895).fract() * 0.9 - 0.05).collect();
        let mut vector = values.clone();
        plogp_in_place(&mut vector);
        for (x, v) in values.iter().zip(&vector) {
            assert_eq!(v.to_bits(), plogp(*x).to_bits(), "x = {x}");
        }
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            let mut narrow = values.clone();
            // SAFETY: the CPU supports AVX2 (checked just above).
            unsafe { plogp_avx2(&mut narrow) };
            assert_eq!(narrow, vector);
        }
    }
}
