//! Colour maps for the figures: a perceptually uniform sequential map for similarities and
//! co-assignment, a diverging map centred on zero for differences and t values, and a
//! colour-blind-safe palette for communities and group levels.

/// Nine evenly spaced stops of the viridis colour map (van der Walt & Smith, matplotlib 2.0
/// default; RGB values from memory of matplotlib's listed map at 0, 1/8, ..., 1).
const VIRIDIS: [[u8; 3]; 9] = [
    [68, 1, 84],
    [71, 44, 122],
    [59, 81, 139],
    [44, 113, 142],
    [33, 144, 141],
    [39, 173, 129],
    [92, 200, 99],
    [170, 220, 50],
    [253, 231, 37],
];

/// The eleven classes of ColorBrewer's RdBu diverging scheme (Brewer, colorbrewer2.org; from
/// memory), reversed so negative values are blue and positive values red.
const BLUE_RED: [[u8; 3]; 11] = [
    [5, 48, 97],
    [33, 102, 172],
    [67, 147, 195],
    [146, 197, 222],
    [209, 229, 240],
    [247, 247, 247],
    [253, 219, 199],
    [244, 165, 130],
    [214, 96, 77],
    [178, 24, 43],
    [103, 0, 31],
];

/// The Okabe-Ito colour-blind-safe palette (Okabe & Ito 2008, "Color Universal Design"; hex
/// values from memory), without black, which is kept for text.
pub const CATEGORICAL: [&str; 7] =
    ["#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442"];

/// Grey for the unassigned participants (community 0) and for missing group values.
pub const UNASSIGNED_GREY: &str = "#9a9a9a";

/// A colour map from a value in [0, 1] to RGB.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ColourMap {
    /// Sequential, dark blue to yellow.
    Viridis,
    /// Diverging, blue (negative) through white (zero) to red (positive).
    BlueRed,
}

impl ColourMap {
    /// The colour at `fraction` (clamped to [0, 1]; NaN gives mid-grey).
    pub fn at(self, fraction: f64) -> [u8; 3] {
        if fraction.is_nan() {
            return [128, 128, 128];
        }
        let stops: &[[u8; 3]] = match self {
            ColourMap::Viridis => &VIRIDIS,
            ColourMap::BlueRed => &BLUE_RED,
        };
        let position = fraction.clamp(0.0, 1.0) * (stops.len() - 1) as f64;
        let lower = (position.floor() as usize).min(stops.len() - 2);
        let weight = position - lower as f64;
        let mut colour = [0u8; 3];
        for channel in 0..3 {
            let a = f64::from(stops[lower][channel]);
            let b = f64::from(stops[lower + 1][channel]);
            colour[channel] = (a + weight * (b - a)).round() as u8;
        }
        colour
    }

    /// The colour of `value` on the interval `range`.
    pub fn value(self, value: f64, range: (f64, f64)) -> [u8; 3] {
        let width = range.1 - range.0;
        if width <= 0.0 {
            return self.at(0.5);
        }
        self.at((value - range.0) / width)
    }
}

/// The palette colour of community `community` (1-based; 0 is grey).
pub fn community_colour(community: usize) -> &'static str {
    if community == 0 {
        UNASSIGNED_GREY
    } else {
        CATEGORICAL[(community - 1) % CATEGORICAL.len()]
    }
}

/// The palette colour of the `index`-th group level (0-based); `n/a` is grey.
pub fn level_colour(index: usize, level: &str) -> &'static str {
    if level == "n/a" {
        UNASSIGNED_GREY
    } else {
        CATEGORICAL[index % CATEGORICAL.len()]
    }
}

/// `#rrggbb` of a colour.
pub fn hex(colour: [u8; 3]) -> String {
    format!("#{:02x}{:02x}{:02x}", colour[0], colour[1], colour[2])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ends_middle_and_clamping() {
        assert_eq!(ColourMap::Viridis.at(0.0), VIRIDIS[0]);
        assert_eq!(ColourMap::Viridis.at(1.0), VIRIDIS[8]);
        assert_eq!(ColourMap::BlueRed.at(0.5), [247, 247, 247], "zero is white");
        assert_eq!(ColourMap::BlueRed.value(-10.0, (-3.0, 3.0)), BLUE_RED[0]);
        assert_eq!(ColourMap::BlueRed.at(f64::NAN), [128, 128, 128]);
        // Halfway between the first two viridis stops: the mean of their channels, rounded.
        assert_eq!(ColourMap::Viridis.at(1.0 / 16.0), [70, 23, 103]);
        assert_eq!(hex([255, 0, 16]), "#ff0010");
    }
}
