//! The look of every plot: the palette, the shade of a temperature, the font sizes.
//!
//! Colours are the eight of Okabe & Ito, "Color Universal Design (CUD): how to make figures and
//! presentations that are friendly to colorblind people" (2008), chosen so that people with the common
//! red-green deficiencies (protanopia, deuteranopia) and with tritanopia tell them apart. Their yellow is
//! left out: it is too pale on white paper. Temperatures are one hue's lightness (the palette's blue mixed
//! with white), which reads the same whatever a reader's colour vision.

use plotters::style::RGBColor;

/// Okabe & Ito (2008) black.
pub const BLACK: RGBColor = RGBColor(0, 0, 0);
/// Okabe & Ito (2008) orange.
pub const ORANGE: RGBColor = RGBColor(230, 159, 0);
/// Okabe & Ito (2008) sky blue.
pub const SKY_BLUE: RGBColor = RGBColor(86, 180, 233);
/// Okabe & Ito (2008) bluish green.
pub const BLUISH_GREEN: RGBColor = RGBColor(0, 158, 115);
/// Okabe & Ito (2008) blue.
pub const BLUE: RGBColor = RGBColor(0, 114, 178);
/// Okabe & Ito (2008) vermillion.
pub const VERMILLION: RGBColor = RGBColor(213, 94, 0);
/// Okabe & Ito (2008) reddish purple.
pub const REDDISH_PURPLE: RGBColor = RGBColor(204, 121, 167);

/// Series colours in the order series are drawn: the first two (baseline, current) are the pair most
/// distinct under every common deficiency.
pub const SERIES: [RGBColor; 6] = [
    BLUE,
    VERMILLION,
    BLUISH_GREEN,
    REDDISH_PURPLE,
    ORANGE,
    SKY_BLUE,
];

/// Grey of ticks, marker lines and secondary text.
pub const GREY: RGBColor = RGBColor(90, 90, 90);
/// Grey of the grid.
pub const GRID: RGBColor = RGBColor(235, 235, 235);

/// Font sizes, pixels.
pub const TITLE_PX: u32 = 20;
pub const AXIS_DESC_PX: u32 = 15;
pub const TICK_PX: u32 = 13;
pub const LABEL_PX: u32 = 13;
pub const NOTE_PX: u32 = 13;

/// The warmest and coldest temperatures the band shade spans, K: room temperature and a mixing chamber's
/// 10 mK (common practice, no source). Colder or warmer draws as the end shade.
pub const SHADE_WARM_K: f64 = 295.0;
pub const SHADE_COLD_K: f64 = 0.01;

/// The shade of a band at `kelvin`: white-mixed blue, lightest at room temperature, full blue at 10 mK, on
/// a logarithmic scale (a line's stages are spaced by decades of temperature).
pub fn temperature_shade(kelvin: f64) -> RGBColor {
    let k = if kelvin.is_finite() && kelvin > 0.0 {
        kelvin.clamp(SHADE_COLD_K, SHADE_WARM_K)
    } else {
        SHADE_WARM_K
    };
    // 0 at room temperature, 1 at the coldest.
    let depth = (SHADE_WARM_K / k).ln() / (SHADE_WARM_K / SHADE_COLD_K).ln();
    // Keep the warmest band visible on white: at least 12 % of the hue.
    let amount = 0.12 + 0.88 * depth;
    let mix = |c: u8| (255.0 - amount * (255.0 - c as f64)).round() as u8;
    RGBColor(mix(BLUE.0), mix(BLUE.1), mix(BLUE.2))
}

/// `#rrggbb` of a colour, for the HTML report's CSS.
pub fn hex(c: RGBColor) -> String {
    format!("#{:02x}{:02x}{:02x}", c.0, c.1, c.2)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lightness(c: RGBColor) -> u32 {
        c.0 as u32 + c.1 as u32 + c.2 as u32
    }

    #[test]
    fn colder_bands_are_darker() {
        let temps = [295.0, 45.0, 3.5, 0.8, 0.1, 0.015];
        for w in temps.windows(2) {
            assert!(
                lightness(temperature_shade(w[1])) < lightness(temperature_shade(w[0])),
                "{} K is not darker than {} K",
                w[1],
                w[0]
            );
        }
        assert!(
            lightness(temperature_shade(295.0)) < 3 * 255,
            "room is not white"
        );
        assert_eq!(temperature_shade(f64::NAN), temperature_shade(295.0));
    }

    #[test]
    fn the_palette_is_okabe_and_ito() {
        // Okabe & Ito (2008), "Color Universal Design", the RGB values of their eight colours.
        assert_eq!(hex(BLUE), "#0072b2");
        assert_eq!(hex(VERMILLION), "#d55e00");
        assert_eq!(hex(BLUISH_GREEN), "#009e73");
        assert_eq!(hex(ORANGE), "#e69f00");
    }
}
