//! Summaries of the contrast maps: how much the A - B difference changes between communities
//! (correlation of the maps), the strongest features, and network-block means for region
//! matrices. Plain functions over feature vectors; the pipeline writes the tables.

use crate::features::EdgeSpace;

/// Pearson correlation of two maps over the features finite in both.
///
/// `r = sum (a - mean_a)(b - mean_b) / sqrt(sum (a - mean_a)^2 sum (b - mean_b)^2)`, in f64.
///
/// # Returns
/// (r, features used); r is NaN with fewer than 2 features or a constant map.
///
/// # Complexity
/// O(F).
pub fn map_correlation(a: &[f32], b: &[f32]) -> (f64, usize) {
    let pairs: Vec<(f64, f64)> = a
        .iter()
        .zip(b)
        .filter(|(x, y)| x.is_finite() && y.is_finite())
        .map(|(&x, &y)| (f64::from(x), f64::from(y)))
        .collect();
    let n = pairs.len();
    if n < 2 {
        return (f64::NAN, n);
    }
    let mean_a = pairs.iter().map(|p| p.0).sum::<f64>() / n as f64;
    let mean_b = pairs.iter().map(|p| p.1).sum::<f64>() / n as f64;
    let (mut cross, mut ss_a, mut ss_b) = (0.0, 0.0, 0.0);
    for (x, y) in &pairs {
        cross += (x - mean_a) * (y - mean_b);
        ss_a += (x - mean_a).powi(2);
        ss_b += (y - mean_b).powi(2);
    }
    let denominator = (ss_a * ss_b).sqrt();
    (if denominator > 0.0 { cross / denominator } else { f64::NAN }, n)
}

/// Indices of the `count` features with the largest |statistic| (NaN left out), largest first;
/// ties in feature order.
pub fn top_features(statistic: &[f32], count: usize) -> Vec<usize> {
    let mut order: Vec<usize> = (0..statistic.len()).filter(|&i| statistic[i].is_finite()).collect();
    order.sort_by(|&x, &y| statistic[y].abs().total_cmp(&statistic[x].abs()).then(x.cmp(&y)));
    order.truncate(count);
    order
}

/// Mean of an edge map within and between networks.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkBlock {
    /// First network (in order of first appearance in the atlas).
    pub network_a: String,
    /// Second network (the same for a within-network block).
    pub network_b: String,
    /// Edges in the block (finite values).
    pub edges: usize,
    /// Mean value over the block's edges.
    pub mean: f64,
}

/// Mean of an edge map per pair of networks (within and between).
///
/// # Arguments
/// * `space` - the edge space (features in upper-triangle order).
/// * `networks` - the network of each region (atlas `network` column), R entries.
/// * `values` - one value per edge.
///
/// # Returns
/// One block per unordered network pair with at least one edge, network order of first
/// appearance, `network_a` before `network_b`.
///
/// # Complexity
/// O(F + B) with B the number of network pairs.
pub fn network_blocks(space: &EdgeSpace, networks: &[String], values: &[f32]) -> Vec<NetworkBlock> {
    let mut names: Vec<&str> = Vec::new();
    let index: Vec<usize> = networks
        .iter()
        .map(|network| match names.iter().position(|n| n == network) {
            Some(position) => position,
            None => {
                names.push(network);
                names.len() - 1
            }
        })
        .collect();
    let count = names.len();
    let mut sums = vec![(0.0f64, 0usize); count * count];
    let mut feature = 0;
    for i in 0..space.region_count {
        for j in i + 1..space.region_count {
            let value = values[feature];
            feature += 1;
            if value.is_finite() {
                let (a, b) = (index[i].min(index[j]), index[i].max(index[j]));
                sums[a * count + b].0 += f64::from(value);
                sums[a * count + b].1 += 1;
            }
        }
    }
    let mut blocks = Vec::new();
    for a in 0..count {
        for b in a..count {
            let (sum, edges) = sums[a * count + b];
            if edges > 0 {
                blocks.push(NetworkBlock {
                    network_a: names[a].to_string(),
                    network_b: names[b].to_string(),
                    edges,
                    mean: sum / edges as f64,
                });
            }
        }
    }
    blocks
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn correlation_top_features_and_blocks() {
        // Perfectly related maps: r = 1; reversed: -1 (definition).
        let (r, n) = map_correlation(&[1.0, 2.0, 3.0, f32::NAN], &[2.0, 4.0, 6.0, 1.0]);
        approx::assert_relative_eq!(r, 1.0, max_relative = 1e-12);
        assert_eq!(n, 3);
        let (r, _) = map_correlation(&[1.0, 2.0, 3.0], &[3.0, 2.0, 1.0]);
        approx::assert_relative_eq!(r, -1.0, max_relative = 1e-12);
        assert_eq!(top_features(&[0.5, -3.0, f32::NAN, 3.0, 1.0], 3), vec![1, 3, 4]);
        // 4 regions, networks A A B B; edges (0,1) (0,2) (0,3) (1,2) (1,3) (2,3).
        let space = EdgeSpace {
            region_count: 4,
            region_names: vec!["r1".into(), "r2".into(), "r3".into(), "r4".into()],
        };
        let networks: Vec<String> = ["A", "A", "B", "B"].iter().map(|s| s.to_string()).collect();
        let blocks = network_blocks(&space, &networks, &[1.0, 2.0, 4.0, 6.0, 8.0, 3.0]);
        let summary: Vec<(&str, &str, usize, f64)> =
            blocks.iter().map(|b| (b.network_a.as_str(), b.network_b.as_str(), b.edges, b.mean)).collect();
        assert_eq!(summary, vec![("A", "A", 1, 1.0), ("A", "B", 4, 5.0), ("B", "B", 1, 3.0)]);
    }
}
