//! Charts: community sizes with composition, the sweep, per-community profiles, the null
//! distribution and histograms.

use super::colour::{community_colour, hex, level_colour, ColourMap, CATEGORICAL};
use super::svg::{format_tick, nice_ticks, padded_domain, Anchor, Frame, Svg, INK, LABEL_FONT, TICK_FONT};
use super::Figure;
use crate::report::run_files::{CommunityView, NullTest};

/// Height of one bar of the composition chart.
const BAR_HEIGHT: f64 = 24.0;

/// Horizontal stacked bars: one per community, one segment per group level (`levels` in order).
pub fn composition(communities: &[CommunityView], levels: &[String], label: &str) -> String {
    let (left, top, width) = (150.0, 46.0, 480.0);
    let height = communities.len() as f64 * (BAR_HEIGHT + 10.0);
    let mut svg = Svg::new(left + width + 40.0, top + height + 56.0);
    let largest = communities.iter().map(|c| c.size).max().unwrap_or(1).max(1) as f64;
    let frame = Frame { left, top, width, height };
    let x = frame.x((0.0, largest * 1.05));
    // Legend.
    let mut legend_x = left;
    for (index, level) in levels.iter().enumerate() {
        svg.rect(legend_x, 12.0, 12.0, 12.0, level_colour(index, level), None);
        svg.text((legend_x + 16.0, 22.0), level, TICK_FONT, Anchor::Start, 0.0);
        legend_x += 30.0 + 7.0 * level.chars().count() as f64;
    }
    for tick in nice_ticks(0.0, largest * 1.05, 6) {
        let position = x.at(tick);
        svg.line((position, top), (position, top + height), super::svg::GRID, 1.0);
        svg.line((position, top + height), (position, top + height + 4.0), INK, 1.0);
        svg.text((position, top + height + 16.0), &format_tick(tick), TICK_FONT, Anchor::Middle, 0.0);
    }
    for (row, community) in communities.iter().enumerate() {
        let y = top + 5.0 + row as f64 * (BAR_HEIGHT + 10.0);
        let name = if community.community == 0 {
            format!("unassigned (n={})", community.size)
        } else {
            format!("community {} (n={})", community.community, community.size)
        };
        svg.rect(left - 14.0, y + 6.0, 8.0, BAR_HEIGHT - 12.0, community_colour(community.community), None);
        svg.text((left - 20.0, y + BAR_HEIGHT / 2.0 + 4.0), &name, TICK_FONT, Anchor::End, 0.0);
        let mut start = 0.0;
        for (level, count) in &community.group_counts {
            let index = levels.iter().position(|l| l == level).unwrap_or(levels.len());
            let end = start + *count as f64;
            let segment_width = x.at(end) - x.at(start);
            svg.rect(x.at(start), y, segment_width, BAR_HEIGHT, level_colour(index, level), Some("#fff"));
            if segment_width > 22.0 && *count > 0 {
                svg.raw(&format!(
                    r##"<text x="{:.1}" y="{:.1}" font-size="{TICK_FONT}" text-anchor="middle" fill="#fff">{count}</text>"##,
                    x.at(start) + segment_width / 2.0,
                    y + BAR_HEIGHT / 2.0 + 4.0
                ));
            }
            start = end;
        }
    }
    svg.line((left, top), (left, top + height), INK, 1.0);
    svg.line((left, top + height), (left + width, top + height), INK, 1.0);
    svg.text((left + width / 2.0, top + height + 36.0), "participants", LABEL_FONT, Anchor::Middle, 0.0);
    svg.finish(label)
}

/// One series of a sweep panel.
pub struct SweepPanel<'a> {
    /// Panel title (y axis).
    pub title: &'a str,
    /// Values per graph (NaN skipped).
    pub values: &'a [f64],
    /// Whether the axis should include zero.
    pub include_zero: bool,
}

/// Two panels over the graphs of the sweep, filled points for graphs in the consensus.
pub fn sweep(
    parameters: &[f64],
    in_consensus: &[bool],
    panels: &[SweepPanel<'_>],
    x_title: &str,
    label: &str,
) -> String {
    let (panel_width, panel_height) = (330.0, 220.0);
    let mut svg = Svg::new(40.0 + panels.len() as f64 * (panel_width + 90.0), panel_height + 110.0);
    for (index, panel) in panels.iter().enumerate() {
        let frame = Frame {
            left: 70.0 + index as f64 * (panel_width + 90.0),
            top: 34.0,
            width: panel_width,
            height: panel_height,
        };
        let x = frame.x(padded_domain(parameters.iter().copied(), false));
        let y = frame.y(padded_domain(panel.values.iter().copied(), panel.include_zero));
        frame.axes(&mut svg, x, y, x_title, panel.title);
        let points: Vec<(f64, f64)> = parameters
            .iter()
            .zip(panel.values)
            .filter(|(p, v)| p.is_finite() && v.is_finite())
            .map(|(p, v)| (x.at(*p), y.at(*v)))
            .collect();
        svg.polyline(&points, CATEGORICAL[0], 1.5);
        for ((parameter, value), included) in parameters.iter().zip(panel.values).zip(in_consensus) {
            if parameter.is_finite() && value.is_finite() {
                svg.circle((x.at(*parameter), y.at(*value)), 4.0, CATEGORICAL[0], *included);
            }
        }
        svg.title((frame.left, 20.0), panel.title, Anchor::Start);
    }
    let legend_y = panel_height + 100.0;
    svg.circle((80.0, legend_y - 4.0), 4.0, CATEGORICAL[0], true);
    svg.text((90.0, legend_y), "graph in the consensus", TICK_FONT, Anchor::Start, 0.0);
    svg.circle((260.0, legend_y - 4.0), 4.0, CATEGORICAL[0], false);
    svg.text((270.0, legend_y), "graph left out of the consensus", TICK_FONT, Anchor::Start, 0.0);
    svg.finish(label)
}

/// Small multiples: one network-by-network matrix of mean values per community, with a shared
/// diverging colour bar. `profiles` holds (community, G x G values row-major).
pub fn network_profiles(
    profiles: &[(usize, Vec<f64>)],
    networks: &[String],
    range: (f64, f64),
    colour_label: &str,
    label: &str,
) -> String {
    let groups = networks.len().max(1);
    let cell = (150.0 / groups as f64).clamp(10.0, 26.0);
    let side = cell * groups as f64;
    let label_room = 110.0;
    let per_row = ((820.0 - label_room) / (side + 24.0)).floor().max(1.0) as usize;
    let rows = profiles.len().div_ceil(per_row).max(1);
    let mut svg = Svg::new(
        label_room + per_row.min(profiles.len()).max(1) as f64 * (side + 24.0) + 90.0,
        30.0 + rows as f64 * (side + label_room + 10.0),
    );
    for (index, (community, values)) in profiles.iter().enumerate() {
        let (column, row) = (index % per_row, index / per_row);
        let left = label_room + column as f64 * (side + 24.0);
        let top = 30.0 + row as f64 * (side + label_room + 10.0);
        svg.title((left + side / 2.0, top - 10.0), &format!("community {community}"), Anchor::Middle);
        for i in 0..groups {
            for j in 0..groups {
                let value = values.get(i * groups + j).copied().unwrap_or(f64::NAN);
                let colour = if value.is_finite() {
                    hex(ColourMap::BlueRed.value(value, range))
                } else {
                    "#fff".to_string()
                };
                svg.rect(left + j as f64 * cell, top + i as f64 * cell, cell, cell, &colour, None);
            }
        }
        svg.rect(left, top, side, side, "none", Some(INK));
        for (position, name) in networks.iter().enumerate() {
            let centre = position as f64 * cell + cell / 2.0;
            if column == 0 {
                svg.text((left - 5.0, top + centre + 4.0), name, TICK_FONT, Anchor::End, 0.0);
            }
            svg.text((left + centre + 4.0, top + side + 6.0), name, TICK_FONT, Anchor::End, -60.0);
        }
    }
    let bar_x = svg.width() - 70.0;
    svg.colour_bar(bar_x, 50.0, side.max(120.0), ColourMap::BlueRed, range, colour_label);
    svg.finish(label)
}

/// A line per community over the regions (table order), for atlases without networks.
pub fn region_profiles(profiles: &[(usize, Vec<f64>)], y_title: &str, label: &str) -> String {
    let frame = Frame { left: 80.0, top: 30.0, width: 640.0, height: 240.0 };
    let mut svg = Svg::new(860.0, 330.0);
    let regions = profiles.first().map_or(1, |(_, values)| values.len()).max(1);
    let x = frame.x((0.5, regions as f64 + 0.5));
    let y = frame.y(padded_domain(profiles.iter().flat_map(|(_, v)| v.iter().copied()), true));
    frame.axes(&mut svg, x, y, "region (atlas order)", y_title);
    svg.line((frame.left, y.at(0.0)), (frame.left + frame.width, y.at(0.0)), "#888", 1.0);
    for (index, (community, values)) in profiles.iter().enumerate() {
        let points: Vec<(f64, f64)> = values
            .iter()
            .enumerate()
            .filter(|(_, v)| v.is_finite())
            .map(|(region, v)| (x.at(region as f64 + 1.0), y.at(*v)))
            .collect();
        svg.polyline(&points, community_colour(*community), 1.5);
        let legend_y = 40.0 + index as f64 * 18.0;
        svg.rect(740.0, legend_y - 9.0, 14.0, 4.0, community_colour(*community), None);
        svg.text((760.0, legend_y - 3.0), &format!("community {community}"), TICK_FONT, Anchor::Start, 0.0);
    }
    svg.finish(label)
}

/// The null distribution (histogram of the draws when given, else its quantiles as a box with
/// whiskers and ticks) with the observed value marked.
pub fn null_distribution(test: &NullTest, label: &str) -> String {
    let frame = Frame { left: 70.0, top: 30.0, width: 560.0, height: 180.0 };
    let mut svg = Svg::new(760.0, 270.0);
    let statistic = test.statistic.clone().unwrap_or_else(|| "test statistic".into());
    let all = test.values.iter().copied().chain(test.quantiles.iter().map(|q| q.1)).chain([test.observed]);
    let x = frame.x(padded_domain(all, false));
    if test.values.len() >= 2 {
        let counts = bin(&test.values, x.domain, 30);
        let y = frame.y((0.0, counts.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.08));
        frame.axes(&mut svg, x, y, &statistic, "null draws");
        bars(&mut svg, x, y, &counts);
    } else {
        let y = frame.y((0.0, 1.0));
        frame.axes(&mut svg, x, y, &statistic, "cumulative probability");
        let points: Vec<(f64, f64)> = test.quantiles.iter().map(|(p, v)| (x.at(*v), y.at(*p))).collect();
        svg.polyline(&points, CATEGORICAL[0], 1.5);
        for (p, v) in &test.quantiles {
            svg.circle((x.at(*v), y.at(*p)), 3.0, CATEGORICAL[0], true);
        }
    }
    let observed_x = x.at(test.observed);
    svg.line((observed_x, frame.top), (observed_x, frame.top + frame.height), "#c0392b", 2.0);
    let p = test.p_value.map_or(String::new(), |p| format!(", p = {}", format_tick(p)));
    svg.text(
        (observed_x + 4.0, frame.top + 12.0),
        &format!("observed {}{p}", format_tick(test.observed)),
        TICK_FONT,
        Anchor::Start,
        0.0,
    );
    svg.finish(label)
}

/// The bars of a histogram: `counts` in equal bins over the x scale's domain.
fn bars(svg: &mut Svg, x: super::svg::Scale, y: super::svg::Scale, counts: &[usize]) {
    let width = (x.domain.1 - x.domain.0) / counts.len() as f64;
    for (index, &count) in counts.iter().enumerate() {
        let from = x.domain.0 + index as f64 * width;
        svg.rect(
            x.at(from),
            y.at(count as f64),
            x.at(from + width) - x.at(from),
            y.at(0.0) - y.at(count as f64),
            "#9ec3e6",
            Some("#fff"),
        );
    }
}

/// Counts of `values` in `bins` equal bins over `domain`.
fn bin(values: &[f64], domain: (f64, f64), bins: usize) -> Vec<usize> {
    let mut counts = vec![0usize; bins];
    let width = (domain.1 - domain.0) / bins as f64;
    for value in values.iter().filter(|v| v.is_finite()) {
        let index = (((value - domain.0) / width).floor().max(0.0) as usize).min(bins - 1);
        counts[index] += 1;
    }
    counts
}

/// A histogram of `values` with an optional marked value.
pub fn histogram(values: &[f64], x_title: &str, marker: Option<(f64, &str)>, label: &str) -> String {
    let frame = Frame { left: 70.0, top: 30.0, width: 520.0, height: 170.0 };
    let mut svg = Svg::new(700.0, 260.0);
    let x = frame.x(padded_domain(values.iter().copied().chain(marker.map(|m| m.0)), false));
    let counts = bin(values, x.domain, 25);
    let y = frame.y((0.0, counts.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.08));
    frame.axes(&mut svg, x, y, x_title, "count");
    bars(&mut svg, x, y, &counts);
    if let Some((value, text)) = marker {
        svg.line((x.at(value), frame.top), (x.at(value), frame.top + frame.height), "#c0392b", 2.0);
        svg.text((x.at(value) + 4.0, frame.top + 12.0), text, TICK_FONT, Anchor::Start, 0.0);
    }
    svg.finish(label)
}

/// Largest side of the correlation heat map's square, in user units.
const HEATMAP_SIDE: f64 = 420.0;
/// Largest cell of the correlation heat map (few scopes stay compact).
const HEATMAP_CELL: f64 = 64.0;
/// Cells at least this large carry their value as text.
const HEATMAP_LABELLED_CELL: f64 = 22.0;
/// Cells whose |r| reaches this get white text (the diverging map is dark there).
const HEATMAP_DARK: f64 = 0.6;

/// A k x k heat map of correlations (`values` row-major, NaN shown grey as `n/a`) with the
/// scopes along both axes, on the diverging colour map from -1 to 1 with a colour bar, and the
/// value printed in each cell (two decimals) when the cells are large enough.
pub fn correlation_heatmap(scopes: &[String], values: &[f64], label: &str) -> String {
    let k = scopes.len().max(1);
    let cell = (HEATMAP_SIDE / k as f64).min(HEATMAP_CELL);
    let side = cell * k as f64;
    let (left, top) = (90.0, 20.0);
    let mut svg = Svg::new(left + side + 110.0, top + side + 90.0);
    let range = (-1.0, 1.0);
    for i in 0..scopes.len() {
        for j in 0..scopes.len() {
            let value = values.get(i * scopes.len() + j).copied().unwrap_or(f64::NAN);
            let colour =
                if value.is_finite() { ColourMap::BlueRed.value(value, range) } else { [200, 200, 200] };
            let (x, y) = (left + j as f64 * cell, top + i as f64 * cell);
            svg.rect(x, y, cell, cell, &hex(colour), Some("#fff"));
            if cell >= HEATMAP_LABELLED_CELL {
                let text = if value.is_finite() { format!("{value:.2}") } else { "n/a".into() };
                let ink = if value.abs() >= HEATMAP_DARK { "#fff" } else { INK };
                let size = TICK_FONT.min(cell / 3.0);
                svg.cell_text((x + cell / 2.0, y + cell / 2.0 + size / 3.0), &text, size, ink);
            }
        }
    }
    for (index, scope) in scopes.iter().enumerate() {
        let middle = index as f64 * cell + cell / 2.0;
        svg.text((left - 6.0, top + middle + 4.0), scope, TICK_FONT, Anchor::End, 0.0);
        svg.text((left + middle + 4.0, top + side + 8.0), scope, TICK_FONT, Anchor::End, -45.0);
    }
    svg.rect(left, top, side, side, "none", Some(INK));
    svg.text((18.0, top + side / 2.0), "scope", LABEL_FONT, Anchor::Middle, -90.0);
    svg.text((left + side / 2.0, top + side + 70.0), "scope", LABEL_FONT, Anchor::Middle, 0.0);
    svg.colour_bar(left + side + 30.0, top + 20.0, side.clamp(100.0, 200.0), ColourMap::BlueRed, range, "r");
    svg.finish(label)
}

/// A figure with this id, title, caption and picture.
pub fn figure(id: &str, title: &str, caption: String, svg: String) -> Figure {
    Figure { id: id.to_string(), title: title.to_string(), caption, svg }
}

/// One covariate panel: the column name and the values of each community (community, values).
pub type CovariatePanel = (String, Vec<(usize, Vec<f64>)>);

/// Per-community box plots of numeric columns (box: quartiles, line: median, whiskers: minimum
/// and maximum, dots: participants), three panels per row.
pub fn covariate_boxes(panels: &[CovariatePanel], label: &str) -> String {
    let (panel_width, panel_height) = (250.0, 170.0);
    let (column_step, row_step) = (panel_width + 80.0, panel_height + 80.0);
    let per_row = 3usize;
    let rows = panels.len().div_ceil(per_row).max(1);
    let mut svg =
        Svg::new(per_row.min(panels.len()).max(1) as f64 * column_step + 20.0, rows as f64 * row_step + 10.0);
    for (index, (name, groups)) in panels.iter().enumerate() {
        let frame = Frame {
            left: 60.0 + (index % per_row) as f64 * column_step,
            top: 30.0 + (index / per_row) as f64 * row_step,
            width: panel_width,
            height: panel_height,
        };
        let y = frame.y(padded_domain(groups.iter().flat_map(|(_, values)| values.iter().copied()), false));
        let x = frame.x((0.0, groups.len() as f64));
        svg.title((frame.left, frame.top - 12.0), name, Anchor::Start);
        for tick in nice_ticks(y.domain.0, y.domain.1, 4) {
            let position = y.at(tick);
            svg.line((frame.left, position), (frame.left + frame.width, position), super::svg::GRID, 1.0);
            svg.line((frame.left - 4.0, position), (frame.left, position), INK, 1.0);
            svg.text((frame.left - 7.0, position + 4.0), &format_tick(tick), TICK_FONT, Anchor::End, 0.0);
        }
        svg.line((frame.left, frame.top), (frame.left, frame.top + frame.height), INK, 1.0);
        svg.line(
            (frame.left, frame.top + frame.height),
            (frame.left + frame.width, frame.top + frame.height),
            INK,
            1.0,
        );
        let slot = x.at(1.0) - x.at(0.0);
        for (position, (community, values)) in groups.iter().enumerate() {
            let centre = x.at(position as f64 + 0.5);
            let colour = community_colour(*community);
            let name = if *community == 0 { "0".to_string() } else { community.to_string() };
            svg.text((centre, frame.top + frame.height + 16.0), &name, TICK_FONT, Anchor::Middle, 0.0);
            let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
            if finite.is_empty() {
                continue;
            }
            let [low, q1, median, q3, high] =
                [0.0, 0.25, 0.5, 0.75, 1.0].map(|fraction| super::quantile(finite.iter().copied(), fraction));
            let half = (slot * 0.28).min(26.0);
            svg.line((centre, y.at(low)), (centre, y.at(q1)), INK, 1.0);
            svg.line((centre, y.at(q3)), (centre, y.at(high)), INK, 1.0);
            svg.rect(centre - half, y.at(q3), 2.0 * half, y.at(q1) - y.at(q3), "#f4f4f4", Some(INK));
            // Participants as dots spread across the box by their order (deterministic jitter).
            for (at, value) in finite.iter().enumerate() {
                let spread = ((at * 37) % 17) as f64 / 16.0 - 0.5;
                svg.circle((centre + spread * 1.4 * half, y.at(*value)), 1.8, colour, true);
            }
            svg.line((centre - half, y.at(median)), (centre + half, y.at(median)), INK, 2.0);
        }
        svg.text(
            (frame.left + frame.width / 2.0, frame.top + frame.height + 34.0),
            "community",
            TICK_FONT,
            Anchor::Middle,
            0.0,
        );
    }
    svg.finish(label)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bins_cover_the_domain_edges() {
        assert_eq!(bin(&[0.0, 0.49, 0.5, 1.0, f64::NAN], (0.0, 1.0), 2), vec![2, 2]);
    }

    #[test]
    fn composition_escapes_level_names() {
        let communities =
            vec![CommunityView { community: 1, size: 3, group_counts: vec![("<i>x</i>".into(), 3)] }];
        let svg = composition(&communities, &["<i>x</i>".to_string()], "sizes");
        assert!(svg.contains("&lt;i&gt;x&lt;/i&gt;") && !svg.contains("<i>"));
    }
}
