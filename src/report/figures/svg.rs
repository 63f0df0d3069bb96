//! A small SVG writer: shapes, escaped text, embedded PNG rasters, axes with round ticks and
//! colour bars. Every text that reaches the page goes through [`escape`].

use std::fmt::Write as _;

use super::colour::ColourMap;
use super::raster::Raster;

/// Font size of tick labels, in SVG user units (pixels at 100% zoom).
pub const TICK_FONT: f64 = 11.0;
/// Font size of axis titles and panel titles.
pub const LABEL_FONT: f64 = 12.5;
/// Colour of axes, ticks and text.
pub const INK: &str = "#222";
/// Colour of grid lines.
pub const GRID: &str = "#e4e4e4";

/// Escapes `&`, `<`, `>`, `"` and `'` so any text (participant ids, table values, file names)
/// shows as text in HTML and SVG, in element content and in quoted attributes alike.
pub fn escape(text: &str) -> String {
    let mut escaped = String::with_capacity(text.len());
    for character in text.chars() {
        match character {
            '&' => escaped.push_str("&amp;"),
            '<' => escaped.push_str("&lt;"),
            '>' => escaped.push_str("&gt;"),
            '"' => escaped.push_str("&quot;"),
            '\'' => escaped.push_str("&#39;"),
            other => escaped.push(other),
        }
    }
    escaped
}

/// Horizontal anchor of a text.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    /// Text starts at x.
    Start,
    /// Text is centred on x.
    Middle,
    /// Text ends at x.
    End,
}

impl Anchor {
    fn name(self) -> &'static str {
        match self {
            Anchor::Start => "start",
            Anchor::Middle => "middle",
            Anchor::End => "end",
        }
    }
}

/// An SVG picture being drawn, in user units with y pointing down.
#[derive(Debug, Clone)]
pub struct Svg {
    width: f64,
    height: f64,
    body: String,
}

/// A number for an SVG attribute: at most two decimals, no trailing zeros.
fn num(value: f64) -> String {
    let text = format!("{value:.2}");
    text.trim_end_matches('0').trim_end_matches('.').to_string()
}

impl Svg {
    /// An empty picture of this size.
    pub fn new(width: f64, height: f64) -> Self {
        Svg { width, height, body: String::new() }
    }

    /// Width in user units.
    pub fn width(&self) -> f64 {
        self.width
    }

    /// Sets the height once the content is drawn (for pictures whose height is known late).
    pub fn set_height(&mut self, height: f64) {
        self.height = height;
    }

    /// Sets the size once the content is drawn.
    pub fn set_size(&mut self, width: f64, height: f64) {
        self.width = width;
        self.height = height;
    }

    /// A filled rectangle; `stroke` draws its outline too.
    pub fn rect(&mut self, x: f64, y: f64, width: f64, height: f64, fill: &str, stroke: Option<&str>) {
        let stroke = stroke.map_or(String::new(), |colour| format!(r#" stroke="{colour}" stroke-width="1""#));
        let _ = write!(
            self.body,
            r#"<rect x="{}" y="{}" width="{}" height="{}" fill="{fill}"{stroke}/>"#,
            num(x),
            num(y),
            num(width.max(0.0)),
            num(height.max(0.0))
        );
    }

    /// A line segment.
    pub fn line(&mut self, from: (f64, f64), to: (f64, f64), colour: &str, width: f64) {
        let _ = write!(
            self.body,
            r#"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="{colour}" stroke-width="{}"/>"#,
            num(from.0),
            num(from.1),
            num(to.0),
            num(to.1),
            num(width)
        );
    }

    /// A dashed line segment.
    pub fn dashed(&mut self, from: (f64, f64), to: (f64, f64), colour: &str, width: f64) {
        let _ = write!(
            self.body,
            r#"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="{colour}" stroke-width="{}" stroke-dasharray="4 3"/>"#,
            num(from.0),
            num(from.1),
            num(to.0),
            num(to.1),
            num(width)
        );
    }

    /// A polyline through `points`.
    pub fn polyline(&mut self, points: &[(f64, f64)], colour: &str, width: f64) {
        let list: Vec<String> = points.iter().map(|(x, y)| format!("{},{}", num(*x), num(*y))).collect();
        let _ = write!(
            self.body,
            r#"<polyline points="{}" fill="none" stroke="{colour}" stroke-width="{}" stroke-linejoin="round"/>"#,
            list.join(" "),
            num(width)
        );
    }

    /// A circle, filled or hollow.
    pub fn circle(&mut self, centre: (f64, f64), radius: f64, colour: &str, filled: bool) {
        let fill = if filled { colour } else { "#fff" };
        let _ = write!(
            self.body,
            r#"<circle cx="{}" cy="{}" r="{}" fill="{fill}" stroke="{colour}" stroke-width="1.5"/>"#,
            num(centre.0),
            num(centre.1),
            num(radius)
        );
    }

    /// Text (escaped) at a point; `rotate` turns it by that many degrees about the point.
    pub fn text(&mut self, at: (f64, f64), content: &str, size: f64, anchor: Anchor, rotate: f64) {
        let transform = if rotate == 0.0 {
            String::new()
        } else {
            format!(r#" transform="rotate({} {} {})""#, num(rotate), num(at.0), num(at.1))
        };
        let _ = write!(
            self.body,
            r#"<text x="{}" y="{}" font-size="{}" text-anchor="{}" fill="{INK}"{transform}>{}</text>"#,
            num(at.0),
            num(at.1),
            num(size),
            anchor.name(),
            escape(content)
        );
    }

    /// Text (escaped) centred on a point in a given fill colour, for values printed on cells.
    pub fn cell_text(&mut self, at: (f64, f64), content: &str, size: f64, fill: &str) {
        let _ = write!(
            self.body,
            r#"<text x="{}" y="{}" font-size="{}" text-anchor="middle" fill="{fill}">{}</text>"#,
            num(at.0),
            num(at.1),
            num(size),
            escape(content)
        );
    }

    /// Bold text (escaped), for panel titles.
    pub fn title(&mut self, at: (f64, f64), content: &str, anchor: Anchor) {
        let _ = write!(
            self.body,
            r#"<text x="{}" y="{}" font-size="{}" font-weight="600" text-anchor="{}" fill="{INK}">{}</text>"#,
            num(at.0),
            num(at.1),
            num(LABEL_FONT),
            anchor.name(),
            escape(content)
        );
    }

    /// A raster drawn into a box without smoothing, so each value stays a sharp square.
    pub fn image(&mut self, x: f64, y: f64, width: f64, height: f64, raster: &Raster) {
        let _ = write!(
            self.body,
            r#"<image x="{}" y="{}" width="{}" height="{}" preserveAspectRatio="none" style="image-rendering:pixelated" href="{}"/>"#,
            num(x),
            num(y),
            num(width),
            num(height),
            raster.data_uri()
        );
    }

    /// A vertical colour bar at (x, y) of the given size, labelled with its ends and middle.
    pub fn colour_bar(
        &mut self,
        x: f64,
        y: f64,
        height: f64,
        map: ColourMap,
        range: (f64, f64),
        label: &str,
    ) {
        let bar = Raster::colour_bar(map, 64);
        let width = 12.0;
        self.image(x, y, width, height, &bar);
        self.rect(x, y, width, height, "none", Some(INK));
        let middle = 0.5 * (range.0 + range.1);
        for (value, fraction) in [(range.1, 0.0), (middle, 0.5), (range.0, 1.0)] {
            let tick_y = y + fraction * height;
            self.line((x + width, tick_y), (x + width + 3.0, tick_y), INK, 1.0);
            self.text((x + width + 5.0, tick_y + 4.0), &format_tick(value), TICK_FONT, Anchor::Start, 0.0);
        }
        self.text((x + width / 2.0, y - 7.0), label, TICK_FONT, Anchor::Middle, 0.0);
    }

    /// Raw SVG markup made by this module's callers (never user text).
    pub fn raw(&mut self, markup: &str) {
        self.body.push_str(markup);
    }

    /// Places another picture inside this one with its top-left corner at (x, y).
    pub fn nest(&mut self, x: f64, y: f64, inner: Svg) {
        let _ = write!(
            self.body,
            r#"<svg x="{}" y="{}" width="{w}" height="{h}" viewBox="0 0 {w} {h}">{}</svg>"#,
            num(x),
            num(y),
            inner.body,
            w = num(inner.width),
            h = num(inner.height)
        );
    }

    /// Height in user units.
    pub fn height(&self) -> f64 {
        self.height
    }

    /// The finished `<svg>` element, scaled to the page width by CSS.
    pub fn finish(self, label: &str) -> String {
        format!(
            r#"<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {w} {h}" width="{w}" height="{h}" role="img" aria-label="{label}" font-family="Helvetica, Arial, sans-serif">{body}</svg>"#,
            w = num(self.width),
            h = num(self.height),
            label = escape(label),
            body = self.body
        )
    }
}

/// A tick label: up to 3 significant decimals, no trailing zeros, `-0` shown as `0`.
pub fn format_tick(value: f64) -> String {
    if !value.is_finite() {
        return "n/a".into();
    }
    let magnitude = value.abs();
    let text = if magnitude >= 1000.0 || value == value.round() {
        format!("{value:.0}")
    } else if magnitude >= 10.0 {
        format!("{value:.1}")
    } else if magnitude >= 0.1 {
        format!("{value:.2}")
    } else {
        format!("{value:.3}")
    };
    let text =
        if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.').to_string() } else { text };
    if text == "-0" {
        "0".into()
    } else {
        text
    }
}

/// About `count` round tick values (1, 2 or 5 times a power of ten) covering [low, high].
pub fn nice_ticks(low: f64, high: f64, count: usize) -> Vec<f64> {
    if !(low.is_finite() && high.is_finite()) {
        return Vec::new();
    }
    if high <= low {
        return vec![low];
    }
    let raw_step = (high - low) / count.max(1) as f64;
    let power = 10f64.powf(raw_step.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|factor| factor * power)
        .find(|step| *step >= raw_step)
        .unwrap_or(10.0 * power);
    let first = (low / step).ceil() as i64;
    let last = (high / step + 1e-9).floor() as i64;
    (first..=last).map(|multiple| if multiple == 0 { 0.0 } else { multiple as f64 * step }).collect()
}

/// A linear map from data values to positions.
#[derive(Debug, Clone, Copy)]
pub struct Scale {
    /// Data interval.
    pub domain: (f64, f64),
    /// Position interval (may be reversed, as for y).
    pub range: (f64, f64),
}

impl Scale {
    /// A scale from `domain` to `range`; a zero-width domain is widened by one unit.
    pub fn new(domain: (f64, f64), range: (f64, f64)) -> Self {
        let domain = if (domain.1 - domain.0).abs() < f64::EPSILON {
            (domain.0 - 0.5, domain.1 + 0.5)
        } else {
            domain
        };
        Scale { domain, range }
    }

    /// The position of `value`.
    pub fn at(&self, value: f64) -> f64 {
        let fraction = (value - self.domain.0) / (self.domain.1 - self.domain.0);
        self.range.0 + fraction * (self.range.1 - self.range.0)
    }
}

/// Domain widened to round ticks, with a margin so points do not sit on the frame.
pub fn padded_domain(values: impl IntoIterator<Item = f64>, include_zero: bool) -> (f64, f64) {
    let (mut low, mut high) = (f64::INFINITY, f64::NEG_INFINITY);
    for value in values.into_iter().filter(|v| v.is_finite()) {
        low = low.min(value);
        high = high.max(value);
    }
    if !low.is_finite() {
        return (0.0, 1.0);
    }
    if include_zero {
        low = low.min(0.0);
        high = high.max(0.0);
    }
    let margin = if high > low { 0.06 * (high - low) } else { 0.5 };
    let low = if include_zero && low == 0.0 { 0.0 } else { low - margin };
    (low, high + margin)
}

/// A plot frame: axes with ticks, tick labels and titles, in a box of the picture.
#[derive(Debug, Clone, Copy)]
pub struct Frame {
    /// Left edge of the plotting area.
    pub left: f64,
    /// Top edge of the plotting area.
    pub top: f64,
    /// Width of the plotting area.
    pub width: f64,
    /// Height of the plotting area.
    pub height: f64,
}

impl Frame {
    /// The x scale of this frame for a domain.
    pub fn x(&self, domain: (f64, f64)) -> Scale {
        Scale::new(domain, (self.left, self.left + self.width))
    }

    /// The y scale of this frame for a domain (up is larger).
    pub fn y(&self, domain: (f64, f64)) -> Scale {
        Scale::new(domain, (self.top + self.height, self.top))
    }

    /// Draws the left and bottom axes with grid lines, ticks, tick labels and axis titles.
    pub fn axes(&self, svg: &mut Svg, x: Scale, y: Scale, x_title: &str, y_title: &str) {
        let bottom = self.top + self.height;
        for tick in nice_ticks(y.domain.0, y.domain.1, 5) {
            let position = y.at(tick);
            svg.line((self.left, position), (self.left + self.width, position), GRID, 1.0);
            svg.line((self.left - 4.0, position), (self.left, position), INK, 1.0);
            svg.text((self.left - 7.0, position + 4.0), &format_tick(tick), TICK_FONT, Anchor::End, 0.0);
        }
        for tick in nice_ticks(x.domain.0, x.domain.1, 6) {
            let position = x.at(tick);
            svg.line((position, bottom), (position, bottom + 4.0), INK, 1.0);
            svg.text((position, bottom + 16.0), &format_tick(tick), TICK_FONT, Anchor::Middle, 0.0);
        }
        svg.line((self.left, self.top), (self.left, bottom), INK, 1.0);
        svg.line((self.left, bottom), (self.left + self.width, bottom), INK, 1.0);
        svg.text((self.left + self.width / 2.0, bottom + 34.0), x_title, LABEL_FONT, Anchor::Middle, 0.0);
        svg.text(
            (self.left - 44.0, self.top + self.height / 2.0),
            y_title,
            LABEL_FONT,
            Anchor::Middle,
            -90.0,
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escape_turns_markup_into_text() {
        // The five characters HTML 5 gives meaning to in content and quoted attributes (WHATWG
        // HTML Living Standard, "Serializing HTML fragments", escaping a string; common practice).
        assert_eq!(
            escape(r#"<script>alert("x" & 'y')</script>"#),
            "&lt;script&gt;alert(&quot;x&quot; &amp; &#39;y&#39;)&lt;/script&gt;"
        );
        assert_eq!(escape("sub-01"), "sub-01");
    }

    #[test]
    fn ticks_are_round_and_cover_the_range() {
        let ticks = nice_ticks(0.0, 1.0, 5);
        let expected = [0.0, 0.2, 0.4, 0.6, 0.8, 1.0];
        assert_eq!(ticks.len(), expected.len(), "{ticks:?}");
        for (tick, want) in ticks.iter().zip(expected) {
            assert!((tick - want).abs() < 1e-12, "{ticks:?}");
        }
        // Raw step 0.297 / 5 = 0.059 rounds up to 0.1 (the next of 1, 2, 5 x 10^k).
        let ticks = nice_ticks(0.013, 0.31, 5);
        assert_eq!(ticks.len(), 3, "{ticks:?}");
        assert!((ticks[0] - 0.1).abs() < 1e-12 && (ticks[2] - 0.3).abs() < 1e-12, "{ticks:?}");
        assert_eq!(format_tick(0.30000000000000004), "0.3");
        assert_eq!(format_tick(-0.0), "0");
        assert_eq!(format_tick(12.0), "12");
        assert_eq!(format_tick(2.5), "2.5");
    }

    #[test]
    fn text_is_escaped_in_the_picture() {
        let mut svg = Svg::new(10.0, 10.0);
        svg.text((1.0, 1.0), "<b>x</b>", 10.0, Anchor::Start, 0.0);
        let markup = svg.finish("a \"label\"");
        assert!(markup.contains("&lt;b&gt;x&lt;/b&gt;"));
        assert!(!markup.contains("<b>"));
        assert!(markup.contains("aria-label=\"a &quot;label&quot;\""));
    }
}
