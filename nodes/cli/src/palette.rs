//! sillage's plot colours: one palette for every plot the command draws.
//!
//! Eight hues picked to stay apart for the common colour-vision deficiencies (protan, deutan,
//! tritan) and in greyscale: the hue set published by M. Okabe and K. Ito, "Color Universal
//! Design (CUD): how to make figures and presentations that are friendly to colorblind
//! people" (2008), in our own order (blue first, then orange and bluish green, so the first
//! three series differ in lightness too), with its yellow darkened to #C9B300 so that thin
//! lines stay visible on white. Mode bands use the same hues at low opacity.
//!
//! | name | hex | use |
//! | --- | --- | --- |
//! | BLUE | #0072B2 | first series, paths |
//! | ORANGE | #E69F00 | second series |
//! | GREEN | #009E73 | third series, start / success |
//! | VERMILLION | #D55E00 | caps, end / failure |
//! | SKY | #56B4E9 | fifth series |
//! | PURPLE | #CC79A7 | sixth series, estimates |
//! | YELLOW | #C9B300 | seventh series |
//! | GREY | #5F5F5F | eighth series, obstacles, reference lines |

use plotters::style::RGBColor;

/// Blue #0072B2.
pub const BLUE: RGBColor = RGBColor(0x00, 0x72, 0xB2);
/// Orange #E69F00.
pub const ORANGE: RGBColor = RGBColor(0xE6, 0x9F, 0x00);
/// Bluish green #009E73.
pub const GREEN: RGBColor = RGBColor(0x00, 0x9E, 0x73);
/// Vermillion #D55E00.
pub const VERMILLION: RGBColor = RGBColor(0xD5, 0x5E, 0x00);
/// Sky blue #56B4E9.
pub const SKY: RGBColor = RGBColor(0x56, 0xB4, 0xE9);
/// Reddish purple #CC79A7.
pub const PURPLE: RGBColor = RGBColor(0xCC, 0x79, 0xA7);
/// Darkened yellow #C9B300.
pub const YELLOW: RGBColor = RGBColor(0xC9, 0xB3, 0x00);
/// Grey #5F5F5F.
pub const GREY: RGBColor = RGBColor(0x5F, 0x5F, 0x5F);

/// The series order.
pub const SERIES: [RGBColor; 8] = [BLUE, ORANGE, GREEN, VERMILLION, SKY, PURPLE, YELLOW, GREY];

/// Colour of a search mode (SearchState code) for bands and traces.
pub fn mode_colour(mode: u8) -> RGBColor {
    use sillage_core::msg::SearchState;
    match mode {
        SearchState::HALTED => GREY,
        SearchState::WAITING => SKY,
        SearchState::CASTING => ORANGE,
        SearchState::SURGING => GREEN,
        SearchState::DECLARED => PURPLE,
        _ => YELLOW,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Relative luminance (WCAG 2.1, definition of relative luminance, sRGB).
    fn luminance(c: RGBColor) -> f64 {
        let lin = |v: u8| {
            let s = f64::from(v) / 255.0;
            if s <= 0.04045 { s / 12.92 } else { ((s + 0.055) / 1.055).powf(2.4) }
        };
        0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2)
    }

    #[test]
    fn every_series_colour_is_distinct_and_visible_on_white() {
        for (i, a) in SERIES.iter().enumerate() {
            // WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05) against white: at least 1.9 for
            // every line colour (our threshold for 2 px lines; the darkened yellow is there
            // for it).
            let contrast = 1.05 / (luminance(*a) + 0.05);
            assert!(contrast >= 1.9, "colour {i} {a:?}: contrast {contrast:.2}");
            for b in &SERIES[i + 1..] {
                assert_ne!(a, b);
            }
        }
    }
}
