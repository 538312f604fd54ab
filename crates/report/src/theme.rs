//! Colours and sizes of every figure, in one place.

use plotters::style::RGBColor;

/// Observed points and their error bars.
pub const DATA: RGBColor = RGBColor(20, 20, 20);
/// Gas contribution.
pub const GAS: RGBColor = RGBColor(46, 134, 171);
/// Stellar-disk contribution.
pub const DISK: RGBColor = RGBColor(214, 140, 30);
/// Bulge contribution.
pub const BULGE: RGBColor = RGBColor(162, 59, 114);
/// Dark-matter halo.
pub const HALO: RGBColor = RGBColor(90, 90, 90);
/// Total model.
pub const TOTAL: RGBColor = RGBColor(192, 50, 33);
/// Markers of r1 and the core radius.
pub const MARKER: RGBColor = RGBColor(110, 110, 110);
/// Histograms and scatter in the corner plot.
pub const POSTERIOR: RGBColor = RGBColor(46, 80, 140);
/// Upper limits in the population plot.
pub const LIMIT: RGBColor = RGBColor(120, 120, 120);
/// Particle-model and population-fit curves, cycled.
pub const CURVES: [RGBColor; 5] = [
    RGBColor(192, 50, 33),
    RGBColor(46, 134, 171),
    RGBColor(214, 140, 30),
    RGBColor(60, 140, 60),
    RGBColor(162, 59, 114),
];

/// Font family registered from the bundled DejaVu Sans.
pub const FONT: &str = "sans-serif";
/// Figure size in pixels (about one journal column at 250 dpi).
pub const SIZE: (u32, u32) = (900, 760);
/// Text sizes in pixels.
pub const TITLE_SIZE: u32 = 28;
pub const LABEL_SIZE: u32 = 24;
pub const TICK_SIZE: u32 = 20;

/// The (red, green, blue) components of a theme colour, for front ends that draw with another
/// library (the desktop app).
#[must_use]
pub const fn rgb(colour: RGBColor) -> (u8, u8, u8) {
    (colour.0, colour.1, colour.2)
}
