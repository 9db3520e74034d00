//! The report's colours, chosen for this report: a warm paper ground, ink
//! text, a teal accent, and twelve muted topic colours that stay apart from
//! each other on paper. The page's CSS and the charts read the same values.

use plotters::style::RGBColor;

/// Page ground.
pub const PAPER: u32 = 0xfbf8f2;
/// Text.
pub const INK: u32 = 0x24262b;
/// Thin rules and grid lines.
pub const RULE: u32 = 0xc9c2b4;
/// The accent (links, bars, highlights).
pub const ACCENT: u32 = 0x0f766e;
/// The accent at its darkest (the strongest cells of a grid).
pub const ACCENT_DEEP: u32 = 0x0b3f3b;

/// Topic colours, by topic index modulo their number.
pub const TOPICS: [u32; 12] = [
    0x1f6f8b, 0xc0612b, 0x5b8c3a, 0x8e4a8c, 0xb8912f, 0x3d5a99, 0xa63d40, 0x2f8f83, 0x7a6a4f, 0xc4607f,
    0x4f7d5b, 0x6b6fb5,
];

/// The colour of topic `index`.
pub fn topic(index: usize) -> u32 {
    TOPICS[index % TOPICS.len()]
}

/// A colour for plotters.
pub fn rgb(colour: u32) -> RGBColor {
    RGBColor((colour >> 16) as u8, (colour >> 8) as u8, colour as u8)
}

/// A colour for CSS and SVG attributes: `#rrggbb`.
pub fn hex(colour: u32) -> String {
    format!("#{colour:06x}")
}

/// The colour `level` (0 to 1) of the way from `low` to `high`.
pub fn blend(low: RGBColor, high: RGBColor, level: f64) -> RGBColor {
    let level = level.clamp(0.0, 1.0);
    let mix = |a: u8, b: u8| (f64::from(a) + (f64::from(b) - f64::from(a)) * level).round() as u8;
    RGBColor(mix(low.0, high.0), mix(low.1, high.1), mix(low.2, high.2))
}
