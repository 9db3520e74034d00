//! The report's charts, drawn by plotters into SVG text: the traces of the
//! fit, documents per period, topic shares by period as a grid of shaded
//! cells, and one small line per topic card. Each chart is a complete
//! `<svg>` element that the page embeds as it is (plotters escapes the
//! text it writes).

use plotters::coord::Shift;
use plotters::prelude::*;

use super::ReportError;
use super::palette;

/// Width and height of the wide charts, in SVG units (the page scales them).
pub const WIDE: (u32, u32) = (880, 300);
/// Width and height of a card's line over time.
pub const SPARK: (u32, u32) = (260, 44);

const FONT: &str = "sans-serif";

fn failed<E: std::fmt::Debug>(error: E) -> ReportError {
    ReportError::Chart(format!("{error:?}"))
}

fn ink() -> RGBColor {
    palette::rgb(palette::INK)
}

fn rule() -> RGBColor {
    palette::rgb(palette::RULE)
}

/// Draws into an SVG string of `size`.
fn svg(
    size: (u32, u32),
    draw: impl FnOnce(&DrawingArea<SVGBackend<'_>, Shift>) -> Result<(), ReportError>,
) -> Result<String, ReportError> {
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, size).into_drawing_area();
        draw(&root)?;
        root.present().map_err(failed)?;
    }
    Ok(text)
}

/// Lower and upper ends of `values` with a little room, never empty.
fn padded_range(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (low, high) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(low, high), v| {
            (low.min(v), high.max(v))
        });
    if !low.is_finite() {
        return (0.0, 1.0);
    }
    let room = ((high - low) * 0.06).max(high.abs().max(1e-12) * 1e-6);
    (low - room, high + room)
}

/// A number for an axis, short.
fn axis_number(value: f64) -> String {
    let size = value.abs();
    if size == 0.0 {
        "0".into()
    } else if size >= 1e6 {
        format!("{:.2e}", value)
    } else if size >= 100.0 {
        format!("{value:.0}")
    } else if size >= 1.0 {
        format!("{value:.2}")
    } else if size >= 1e-3 {
        format!("{value:.4}")
    } else {
        format!("{value:.1e}")
    }
}

/// One line of a trace chart.
pub struct TraceLine {
    pub points: Vec<(f64, f64)>,
    pub colour: RGBAColor,
    pub width: u32,
}

/// One line (or many) against the sweep number, with the end of burn-in
/// marked.
pub fn trace_chart(lines: &[TraceLine], y_desc: &str, burn_in: Option<f64>) -> Result<String, ReportError> {
    let x_range = padded_range(lines.iter().flat_map(|line| line.points.iter().map(|p| p.0)));
    let y_range = padded_range(lines.iter().flat_map(|line| line.points.iter().map(|p| p.1)));
    svg(WIDE, |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(78)
            .build_cartesian_2d(x_range.0.max(0.0)..x_range.1, y_range.0..y_range.1)
            .map_err(failed)?;
        chart
            .configure_mesh()
            .x_desc("sweep")
            .y_desc(y_desc)
            .x_labels(8)
            .y_labels(6)
            .x_label_formatter(&|x| format!("{x:.0}"))
            .y_label_formatter(&|y| axis_number(*y))
            .max_light_lines(1)
            .light_line_style(rule().mix(0.25))
            .bold_line_style(rule().mix(0.7))
            .axis_style(ink().mix(0.6))
            .label_style((FONT, 13).into_font().color(&ink()))
            .axis_desc_style((FONT, 13).into_font().color(&ink()))
            .draw()
            .map_err(failed)?;
        if let Some(burn_in) = burn_in.filter(|b| *b > x_range.0 && *b < x_range.1) {
            let accent = palette::rgb(palette::ACCENT);
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(burn_in, y_range.0), (burn_in, y_range.1)],
                    accent.mix(0.7).stroke_width(1),
                )))
                .map_err(failed)?;
            chart
                .draw_series(std::iter::once(Text::new(
                    "end of burn-in",
                    (burn_in, y_range.1),
                    (FONT, 12).into_font().color(&accent),
                )))
                .map_err(failed)?;
        }
        for line in lines {
            chart
                .draw_series(LineSeries::new(
                    line.points.iter().copied(),
                    line.colour.stroke_width(line.width),
                ))
                .map_err(failed)?;
        }
        Ok(())
    })
}

/// Documents per period, as bars.
pub fn period_bars(periods: &[String], documents: &[usize]) -> Result<String, ReportError> {
    let n = periods.len().max(1);
    let top = documents.iter().copied().max().unwrap_or(0).max(1) as f64 * 1.08;
    svg((WIDE.0, 220), |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(78)
            .build_cartesian_2d(0f64..n as f64, 0f64..top)
            .map_err(failed)?;
        let label = |x: &f64| {
            let at = x.floor();
            if at >= 0.0 && (at as usize) < periods.len() {
                periods[at as usize].clone()
            } else {
                String::new()
            }
        };
        chart
            .configure_mesh()
            .disable_x_mesh()
            .x_labels(n.min(8))
            .y_labels(4)
            .x_label_formatter(&label)
            .y_label_formatter(&|y| format!("{y:.0}"))
            .y_desc("documents")
            .light_line_style(rule().mix(0.0))
            .bold_line_style(rule().mix(0.6))
            .axis_style(ink().mix(0.6))
            .label_style((FONT, 13).into_font().color(&ink()))
            .axis_desc_style((FONT, 13).into_font().color(&ink()))
            .draw()
            .map_err(failed)?;
        let fill = palette::rgb(palette::ACCENT).mix(0.75).filled();
        chart
            .draw_series(documents.iter().enumerate().map(|(i, &count)| {
                Rectangle::new([(i as f64 + 0.12, 0.0), (i as f64 + 0.88, count as f64)], fill)
            }))
            .map_err(failed)?;
        Ok(())
    })
}

/// Topic shares by period: one row per topic, one cell per period, shaded
/// by the share relative to that topic's largest share over time (so a
/// small topic's rise shows as clearly as a large one's).
pub fn period_grid(periods: &[String], rows: &[(String, Vec<f64>)]) -> Result<String, ReportError> {
    let n_periods = periods.len().max(1);
    let n_rows = rows.len().max(1);
    let row_height = if n_rows <= 30 { 18 } else { 7 };
    let height = (n_rows * row_height + 60) as u32;
    let show_every = n_rows.div_ceil(40).max(1);
    svg((WIDE.0, height), |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(150)
            .build_cartesian_2d(0f64..n_periods as f64, 0f64..n_rows as f64)
            .map_err(failed)?;
        let x_label = |x: &f64| {
            let at = x.floor();
            if at >= 0.0 && (at as usize) < periods.len() {
                periods[at as usize].clone()
            } else {
                String::new()
            }
        };
        // Row r is drawn from the top: y from n - r - 1 to n - r.
        let y_label = |y: &f64| {
            let from_top = n_rows as f64 - y.floor() - 1.0;
            if from_top >= 0.0
                && (from_top as usize) < rows.len()
                && (from_top as usize).is_multiple_of(show_every)
            {
                rows[from_top as usize].0.clone()
            } else {
                String::new()
            }
        };
        chart
            .configure_mesh()
            .disable_mesh()
            .x_labels(n_periods.min(8))
            .y_labels(n_rows.min(40) + 1)
            .x_label_formatter(&x_label)
            .y_label_formatter(&y_label)
            .axis_style(ink().mix(0.6))
            .label_style((FONT, 12).into_font().color(&ink()))
            .draw()
            .map_err(failed)?;
        let low = palette::rgb(palette::PAPER);
        let high = palette::rgb(palette::ACCENT_DEEP);
        let cells = rows.iter().enumerate().flat_map(|(r, (_, shares))| {
            let largest = shares.iter().copied().fold(0.0, f64::max);
            let y = (n_rows - r - 1) as f64;
            shares.iter().enumerate().map(move |(p, &share)| {
                let level = if largest > 0.0 { share / largest } else { 0.0 };
                let colour = palette::blend(low, high, level);
                Rectangle::new([(p as f64, y), (p as f64 + 1.0, y + 1.0)], colour.filled())
            })
        });
        chart.draw_series(cells).map_err(failed)?;
        Ok(())
    })
}

/// A topic's share over time, as a small line without axes.
pub fn spark_line(shares: &[f64], colour: RGBColor) -> Result<String, ReportError> {
    let n = shares.len().max(2);
    let top = shares.iter().copied().fold(0.0, f64::max).max(1e-12) * 1.1;
    svg(SPARK, |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(3)
            .build_cartesian_2d(0f64..(n - 1) as f64, 0f64..top)
            .map_err(failed)?;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![(0.0, 0.0), ((n - 1) as f64, 0.0)],
                rule().stroke_width(1),
            )))
            .map_err(failed)?;
        chart
            .draw_series(LineSeries::new(
                shares.iter().enumerate().map(|(i, &share)| (i as f64, share)),
                colour.stroke_width(2),
            ))
            .map_err(failed)?;
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn charts_are_single_svg_elements_with_their_text_escaped() {
        // Source: SVG 1.1 section 5.1 (an svg element), XML 1.0 section 2.4
        // (a literal `<` or `&` in text is escaped as &lt; and &amp;).
        let grid = period_grid(
            &["2024-01".to_string(), "2024-02".to_string()],
            &[("<b>&".to_string(), vec![0.1, 0.3])],
        )
        .unwrap();
        assert!(grid.trim_start().starts_with("<svg"), "{grid}");
        assert_eq!(grid.matches("<svg").count(), 1);
        assert!(grid.trim_end().ends_with("</svg>"));
        assert!(grid.contains("&lt;b&gt;&amp;") && !grid.contains("<b>"));
        let line = spark_line(&[0.1, 0.2, 0.15], palette::rgb(palette::ACCENT)).unwrap();
        assert!(line.contains("<polyline"));
        let bars = period_bars(&["2024".to_string()], &[3]).unwrap();
        assert!(bars.contains("<rect"));
    }
}
