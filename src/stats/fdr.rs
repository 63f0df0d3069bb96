//! False discovery rate control across the features of one comparison.
//!
//! Benjamini-Hochberg adjusted p values (q). Which p values form a family (one comparison's
//! features) is the caller's choice.

/// Benjamini-Hochberg adjusted p values (q), in the input order.
///
/// With the m non-NaN p values sorted ascending, p_(1) <= ... <= p_(m):
///
/// ```text
/// q_(i) = min(1, min_{k >= i} m * p_(k) / k)      (step-up, monotone cumulative minimum)
/// ```
///
/// A feature is declared discovered at FDR level alpha when q <= alpha; this is the BH step-up
/// procedure (largest i with p_(i) <= i alpha / m, reject 1..i).
///
/// NaN p values (untestable features, see [`super::Comparison`]) are not counted in m and get a
/// NaN q, so a degenerate feature neither inflates nor deflates the others' q. Ties get the same q.
///
/// # Arguments
/// * `p` - p values in [0, 1] (values above 1 behave like 1 through the cap).
///
/// # Returns
/// One q per input, same order.
///
/// # Complexity
/// O(m log m) time (one sort), O(m) memory.
///
/// # References
/// Benjamini & Hochberg 1995, J R Stat Soc B 57:289-300.
pub fn benjamini_hochberg(p: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..p.len()).filter(|&index| !p[index].is_nan()).collect();
    // Stable sort on total order: ties keep input order, which does not change the q values.
    order.sort_by(|&left, &right| p[left].total_cmp(&p[right]));
    let tests = order.len() as f64;
    let mut q = vec![f64::NAN; p.len()];
    let mut running_minimum = 1.0f64;
    for (rank, &index) in order.iter().enumerate().rev() {
        let adjusted = p[index] * tests / (rank + 1) as f64;
        running_minimum = running_minimum.min(adjusted);
        q[index] = running_minimum;
    }
    q
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn small_example_and_nan() {
        // [0.01,0.04,0.03,0.005] -> [0.02,0.04,0.04,0.02]: REFERENCES.md (computed scipy).
        let q = benjamini_hochberg(&[0.01, 0.04, 0.03, 0.005]);
        for (got, want) in q.iter().zip([0.02, 0.04, 0.04, 0.02]) {
            approx::assert_relative_eq!(*got, want, max_relative = 1e-12);
        }
        // NaN excluded from m: the same result with a NaN inserted (hand computation).
        let q = benjamini_hochberg(&[0.01, f64::NAN, 0.04, 0.03, 0.005]);
        assert!(q[1].is_nan());
        approx::assert_relative_eq!(q[0], 0.02, max_relative = 1e-12);
        approx::assert_relative_eq!(q[2], 0.04, max_relative = 1e-12);
        assert!(benjamini_hochberg(&[]).is_empty());
        // Cap at 1 (hand computation: 2 * 0.9 / 1 and 2 * 0.95 / 2 both exceed or reach 0.95).
        assert_eq!(benjamini_hochberg(&[0.9, 0.95]), vec![0.95, 0.95]);
        assert_eq!(benjamini_hochberg(&[1.0, 1.0]), vec![1.0, 1.0]);
    }
}
