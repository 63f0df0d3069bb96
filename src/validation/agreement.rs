//! Agreement between two partitions of the same participants.

use std::collections::HashMap;

/// Contingency counts n_ij, row sums a_i, column sums b_j and n.
type Contingency = (HashMap<(usize, usize), f64>, HashMap<usize, f64>, HashMap<usize, f64>, f64);

fn contingency(a: &[usize], b: &[usize]) -> Contingency {
    assert_eq!(a.len(), b.len(), "partitions of different lengths");
    let mut joint = HashMap::new();
    let mut rows = HashMap::new();
    let mut cols = HashMap::new();
    for (&x, &y) in a.iter().zip(b) {
        *joint.entry((x, y)).or_insert(0.0) += 1.0;
        *rows.entry(x).or_insert(0.0) += 1.0;
        *cols.entry(y).or_insert(0.0) += 1.0;
    }
    (joint, rows, cols, a.len() as f64)
}

fn pairs(count: f64) -> f64 {
    count * (count - 1.0) / 2.0
}

/// Adjusted Rand index.
///
/// ARI = (sum_ij C(n_ij,2) - E) / (0.5 (sum_i C(a_i,2) + sum_j C(b_j,2)) - E), with
/// E = sum_i C(a_i,2) sum_j C(b_j,2) / C(n,2). Identical partitions give 1 (also when both are
/// one community, as scikit-learn defines it); independent ones about 0.
///
/// # References
/// Hubert & Arabie 1985, J Classification 2:193-218.
pub fn adjusted_rand_index(a: &[usize], b: &[usize]) -> f64 {
    let (joint, rows, cols, n) = contingency(a, b);
    if n < 2.0 {
        return 1.0;
    }
    let index: f64 = joint.values().map(|&c| pairs(c)).sum();
    let row_sum: f64 = rows.values().map(|&c| pairs(c)).sum();
    let col_sum: f64 = cols.values().map(|&c| pairs(c)).sum();
    let expected = row_sum * col_sum / pairs(n);
    let maximum = 0.5 * (row_sum + col_sum);
    if (maximum - expected).abs() < 1e-15 {
        return 1.0;
    }
    (index - expected) / (maximum - expected)
}

fn entropy(counts: &HashMap<usize, f64>, n: f64) -> f64 {
    counts.values().map(|&c| if c > 0.0 { -(c / n) * (c / n).ln() } else { 0.0 }).sum()
}

fn mutual_information(a: &[usize], b: &[usize]) -> (f64, f64, f64) {
    let (joint, rows, cols, n) = contingency(a, b);
    let mut information = 0.0;
    for (&(x, y), &count) in &joint {
        let p = count / n;
        information += p * (p / ((rows[&x] / n) * (cols[&y] / n))).ln();
    }
    (information.max(0.0), entropy(&rows, n), entropy(&cols, n))
}

/// Normalised mutual information with the arithmetic-mean normaliser,
/// NMI = I(A;B) / ((H(A) + H(B)) / 2): scikit-learn's default since 0.22.
///
/// # References
/// Danon, Diaz-Guilera, Duch & Arenas 2005, J Stat Mech P09008.
pub fn normalized_mutual_information(a: &[usize], b: &[usize]) -> f64 {
    let (information, ha, hb) = mutual_information(a, b);
    let mean = 0.5 * (ha + hb);
    if mean <= 0.0 {
        return 1.0;
    }
    (information / mean).clamp(0.0, 1.0)
}

/// Variation of information in nats, VI = H(A) + H(B) - 2 I(A;B).
///
/// # References
/// Meila 2007, J Multivariate Anal 98:873-895.
pub fn variation_of_information(a: &[usize], b: &[usize]) -> f64 {
    let (information, ha, hb) = mutual_information(a, b);
    (ha + hb - 2.0 * information).max(0.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reference_values() {
        // REFERENCES.md, computed with scikit-learn (= igraph): U=[0,0,0,1,1,1], V=[0,0,1,1,2,2].
        let u = [0, 0, 0, 1, 1, 1];
        let v = [0, 0, 1, 1, 2, 2];
        assert!((adjusted_rand_index(&u, &v) - 0.242_424_242_4).abs() < 1e-9);
        assert!((normalized_mutual_information(&u, &v) - 0.515_803_743_0).abs() < 1e-9);
        assert!((variation_of_information(&u, &v) - 0.867_563_228_5).abs() < 1e-9);
        // ARI of [0,0,1,1] vs [0,1,0,1] is -0.5; NMI 0 (computed, REFERENCES.md).
        assert!((adjusted_rand_index(&[0, 0, 1, 1], &[0, 1, 0, 1]) + 0.5).abs() < 1e-12);
        assert!(normalized_mutual_information(&[0, 0, 1, 1], &[0, 1, 0, 1]).abs() < 1e-12);
        // Labels are names only.
        assert!((adjusted_rand_index(&[5, 5, 7, 7], &[1, 1, 0, 0]) - 1.0).abs() < 1e-12);
    }
}
