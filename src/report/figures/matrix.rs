//! Matrix figures: participant-by-participant matrices ordered by community with community
//! borders, and region-by-region matrices ordered by network with network labels.

use ndarray::Array2;

use super::colour::{community_colour, ColourMap};
use super::raster::Raster;
use super::svg::{Anchor, Svg, INK, LABEL_FONT, TICK_FONT};

/// Side of the matrix drawing, in user units.
const MATRIX_SIDE: f64 = 440.0;
/// Width of the community strips beside a participant matrix.
const STRIP: f64 = 10.0;

/// Participants ordered for display: by community (1..k, then unassigned 0), within a community
/// by decreasing consistency, then by table order.
pub fn community_order(membership: &[usize], consistency: &[f64]) -> Vec<usize> {
    let mut rows: Vec<usize> = (0..membership.len()).collect();
    let key = |community: usize| if community == 0 { usize::MAX } else { community };
    let value =
        |row: usize| consistency.get(row).copied().filter(|v| v.is_finite()).unwrap_or(f64::NEG_INFINITY);
    rows.sort_by(|&a, &b| {
        key(membership[a]).cmp(&key(membership[b])).then(value(b).total_cmp(&value(a))).then(a.cmp(&b))
    });
    rows
}

/// Contiguous runs of one community in an ordered list: (community, first position, length).
fn blocks(order: &[usize], membership: &[usize]) -> Vec<(usize, usize, usize)> {
    let mut runs: Vec<(usize, usize, usize)> = Vec::new();
    for (position, &row) in order.iter().enumerate() {
        match runs.last_mut() {
            Some((community, _, length)) if *community == membership[row] => *length += 1,
            _ => runs.push((membership[row], position, 1)),
        }
    }
    runs
}

/// A participant matrix reordered by `order`, with community strips along the top and left,
/// community borders on the diagonal and a colour bar.
pub fn participant_matrix(
    values: &Array2<f32>,
    membership: &[usize],
    order: &[usize],
    map: ColourMap,
    range: (f64, f64),
    colour_label: &str,
    label: &str,
) -> String {
    let count = order.len();
    let mut reordered = vec![f32::NAN; count * count];
    for (i, &row) in order.iter().enumerate() {
        for (j, &column) in order.iter().enumerate() {
            reordered[i * count + j] = if row == column { f32::NAN } else { values[[row, column]] };
        }
    }
    let raster = Raster::matrix(&reordered, count, map, range);
    let (left, top) = (70.0, 40.0);
    let mut svg = Svg::new(left + MATRIX_SIDE + 110.0, top + MATRIX_SIDE + 50.0);
    svg.image(left, top, MATRIX_SIDE, MATRIX_SIDE, &raster);
    let unit = MATRIX_SIDE / count.max(1) as f64;
    for (community, start, length) in blocks(order, membership) {
        let (from, size) = (start as f64 * unit, length as f64 * unit);
        let colour = community_colour(community);
        svg.rect(left - STRIP - 3.0, top + from, STRIP, size, colour, None);
        svg.rect(left + from, top - STRIP - 3.0, size, STRIP, colour, None);
        svg.rect(left + from, top + from, size, size, "none", Some("#000"));
        let name = if community == 0 { "0".to_string() } else { community.to_string() };
        if size >= 12.0 {
            svg.text((left - STRIP - 8.0, top + from + size / 2.0 + 4.0), &name, TICK_FONT, Anchor::End, 0.0);
        }
    }
    svg.rect(left, top, MATRIX_SIDE, MATRIX_SIDE, "none", Some(INK));
    svg.text((left - 44.0, top + MATRIX_SIDE / 2.0), "community", LABEL_FONT, Anchor::Middle, -90.0);
    svg.text(
        (left + MATRIX_SIDE / 2.0, top + MATRIX_SIDE + 24.0),
        &format!("{count} participants, ordered by community"),
        LABEL_FONT,
        Anchor::Middle,
        0.0,
    );
    svg.colour_bar(left + MATRIX_SIDE + 28.0, top + 20.0, 200.0, map, range, colour_label);
    svg.finish(label)
}

/// Regions ordered by network (networks in order of first appearance, regions in table order
/// within a network); returns the order and the (network, first position, length) blocks.
pub fn network_order(networks: &[String]) -> (Vec<usize>, Vec<(String, usize, usize)>) {
    let mut names: Vec<&String> = Vec::new();
    for network in networks {
        if !names.contains(&network) {
            names.push(network);
        }
    }
    let mut order = Vec::with_capacity(networks.len());
    let mut runs = Vec::new();
    for name in names {
        let start = order.len();
        order.extend(networks.iter().enumerate().filter(|(_, n)| *n == name).map(|(index, _)| index));
        runs.push((name.clone(), start, order.len() - start));
    }
    (order, runs)
}

/// A region-by-region matrix ordered by network, with network borders and labels (or by table
/// order with no labels when `networks` is `None`), on a diverging scale, with a colour bar;
/// the picture is left open so it can be finished or nested in a grid.
pub fn region_matrix(
    values: &Array2<f32>,
    networks: Option<&[String]>,
    range: (f64, f64),
    colour_label: &str,
    side: f64,
) -> Svg {
    let count = values.nrows();
    let (order, runs) = match networks {
        Some(networks) if networks.len() == count => network_order(networks),
        _ => ((0..count).collect(), Vec::new()),
    };
    let mut reordered = vec![f32::NAN; count * count];
    for (i, &row) in order.iter().enumerate() {
        for (j, &column) in order.iter().enumerate() {
            reordered[i * count + j] = if row == column { f32::NAN } else { values[[row, column]] };
        }
    }
    let raster = Raster::matrix(&reordered, count, ColourMap::BlueRed, range);
    let label_room = if runs.is_empty() { 40.0 } else { 90.0 };
    let (left, top) = (label_room, 14.0);
    let mut svg = Svg::new(left + side + 100.0, top + side + label_room + 10.0);
    svg.image(left, top, side, side, &raster);
    let unit = side / count.max(1) as f64;
    for (name, start, length) in &runs {
        let (from, size) = (*start as f64 * unit, *length as f64 * unit);
        if *start > 0 {
            svg.line((left + from, top), (left + from, top + side), "#333", 0.8);
            svg.line((left, top + from), (left + side, top + from), "#333", 0.8);
        }
        svg.text((left - 5.0, top + from + size / 2.0 + 4.0), name, TICK_FONT, Anchor::End, 0.0);
        let x = left + from + size / 2.0;
        svg.text((x + 4.0, top + side + 6.0), name, TICK_FONT, Anchor::End, -60.0);
    }
    if runs.is_empty() {
        svg.text(
            (left + side / 2.0, top + side + 20.0),
            &format!("{count} regions"),
            LABEL_FONT,
            Anchor::Middle,
            0.0,
        );
    }
    svg.rect(left, top, side, side, "none", Some(INK));
    svg.colour_bar(
        left + side + 24.0,
        top + 24.0,
        (side * 0.6).max(100.0),
        ColourMap::BlueRed,
        range,
        colour_label,
    );
    svg
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn order_groups_communities_with_unassigned_last() {
        let membership = [2, 1, 0, 1, 2];
        let consistency = [0.5, 0.2, f64::NAN, 0.9, 0.7];
        let order = community_order(&membership, &consistency);
        assert_eq!(order, vec![3, 1, 4, 0, 2]);
        assert_eq!(blocks(&order, &membership), vec![(1, 0, 2), (2, 2, 2), (0, 4, 1)]);
    }

    #[test]
    fn network_order_keeps_first_appearance() {
        let networks: Vec<String> = ["B", "A", "B", "C", "A"].iter().map(|s| s.to_string()).collect();
        let (order, runs) = network_order(&networks);
        assert_eq!(order, vec![0, 2, 1, 4, 3]);
        assert_eq!(runs, vec![("B".to_string(), 0, 2), ("A".to_string(), 2, 2), ("C".to_string(), 4, 1)]);
    }
}
