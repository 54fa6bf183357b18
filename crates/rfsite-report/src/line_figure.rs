//! Line and scatter figures from a plugin's [`Figure`] data (no computation here).
//!
//! Each series has its own colour and dash (solid, dashed, dotted, ...), so curves stay
//! apart in greyscale; a series of exactly two points is a reference line (a threshold,
//! free space) and is drawn thinner. The key sits in a strip under the plot, one series
//! a line, so it never covers the data.

use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use rfsite_plugin::Figure;

use crate::charts::CHART_FONT;

fn e<E: std::fmt::Debug>(x: E) -> String {
    format!("{x:?}")
}

/// Width of the figure and height of its plot, pixels.
const W: u32 = 900;
const PLOT_H: u32 = 420;

/// Height of one key line, pixels.
const KEY_LINE_H: u32 = 22;

/// A series' colour (8-bit RGB) and dash (dash, gap in pixels; `None` solid).
type Style = ((u8, u8, u8), Option<(u32, u32)>);

/// The style of the n-th series. Lightness differs from one to the next as well as hue.
const STYLES: [Style; 6] = [
    ((30, 70, 120), None),
    ((196, 110, 40), Some((12, 5))),
    ((60, 60, 60), Some((3, 4))),
    ((176, 40, 125), Some((18, 4))),
    ((70, 140, 80), Some((7, 3))),
    ((160, 160, 160), Some((2, 7))),
];

/// The style of series `i`: colour, dash.
pub fn series_style(i: usize) -> (RGBColor, Option<(u32, u32)>) {
    let ((r, g, b), d) = STYLES[i % STYLES.len()];
    (RGBColor(r, g, b), d)
}

type Area<'b> = DrawingArea<SVGBackend<'b>, plotters::coord::Shift>;

/// The data range of a figure, padded: (x0, x1, y0, y1).
fn ranges(f: &Figure) -> Result<(f64, f64, f64, f64), String> {
    let (mut x0, mut x1, mut y0, mut y1) = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for p in f.series.iter().flat_map(|s| s.points.iter()) {
        x0 = x0.min(p[0]);
        x1 = x1.max(p[0]);
        y0 = y0.min(p[1]);
        y1 = y1.max(p[1]);
    }
    if !x0.is_finite() || !y0.is_finite() {
        return Err("figure has no points".into());
    }
    if x1 - x0 < 1e-9 {
        x1 = x0 + 1.0;
    }
    if y1 - y0 < 1e-9 {
        y1 = y0 + 1.0;
    }
    let ypad = (y1 - y0) * 0.05;
    Ok((x0, x1, y0 - ypad, y1 + ypad))
}

/// Draws a line or scatter figure.
pub fn figure(f: &Figure) -> Result<String, String> {
    let (x0, x1, y0, y1) = ranges(f)?;
    let h = PLOT_H + KEY_LINE_H * f.series.len() as u32 + 8;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (W, h)).into_drawing_area();
        root.fill(&WHITE).map_err(e)?;
        let (top, key) = root.split_vertically(PLOT_H);
        let mut chart = ChartBuilder::on(&top)
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(56)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(e)?;
        chart
            .configure_mesh()
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(210, 210, 210))
            .x_desc(f.x_label.clone())
            .y_desc(f.y_label.clone())
            .label_style((CHART_FONT, 14))
            .axis_desc_style((CHART_FONT, 15))
            .draw()
            .map_err(e)?;
        for (i, s) in f.series.iter().enumerate() {
            let (col, dash) = series_style(i);
            let data: Vec<(f64, f64)> = s.points.iter().map(|p| (p[0], p[1])).collect();
            let width = if data.len() == 2 { 2 } else { 3 };
            if f.kind == "scatter" {
                chart
                    .draw_series(data.iter().map(|p| Circle::new(*p, 3, col.filled())))
                    .map_err(e)?;
            } else if let Some((d, g)) = dash {
                chart
                    .draw_series(DashedLineSeries::new(data, d, g, col.stroke_width(width)))
                    .map_err(e)?;
            } else {
                chart
                    .draw_series(LineSeries::new(data, col.stroke_width(width)))
                    .map_err(e)?;
            }
        }
        draw_key(&key, f)?;
        root.present().map_err(e)?;
    }
    Ok(svg)
}

/// The key: per series its line sample (or dot, for a scatter) and its name.
fn draw_key(area: &Area<'_>, f: &Figure) -> Result<(), String> {
    let x = 68;
    for (i, s) in f.series.iter().enumerate() {
        let (col, dash) = series_style(i);
        let y = (KEY_LINE_H as i32) * i as i32 + KEY_LINE_H as i32 / 2 + 4;
        if f.kind == "scatter" {
            area.draw(&Circle::new((x + 14, y), 4, col.filled()))
                .map_err(e)?;
        } else if let Some((d, g)) = dash {
            area.draw(&DashedPathElement::new(
                vec![(x, y), (x + 36, y)],
                d as i32,
                g as i32,
                col.stroke_width(3),
            ))
            .map_err(e)?;
        } else {
            area.draw(&PathElement::new(
                vec![(x, y), (x + 36, y)],
                col.stroke_width(3),
            ))
            .map_err(e)?;
        }
        let style = TextStyle::from((CHART_FONT, 14).into_font())
            .color(&BLACK)
            .pos(Pos::new(HPos::Left, VPos::Center));
        area.draw(&Text::new(s.name.clone(), (x + 48, y), style))
            .map_err(e)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use rfsite_plugin::Series;

    fn luminance((r, g, b): (u8, u8, u8)) -> f64 {
        // Rec. 709 luma weights on the 8-bit values (a greyscale printer's view, roughly).
        (0.2126 * r as f64 + 0.7152 * g as f64 + 0.0722 * b as f64) / 255.0
    }

    #[test]
    fn neighbouring_series_differ_in_dash_and_lightness() {
        for i in 0..STYLES.len() {
            let (a, b) = (STYLES[i], STYLES[(i + 1) % STYLES.len()]);
            assert_ne!(a.1, b.1, "series {i} and the next share a dash");
            assert!(
                (luminance(a.0) - luminance(b.0)).abs() > 0.05,
                "series {i} and the next are as light as each other"
            );
        }
    }

    #[test]
    fn every_series_is_named_in_the_key_under_the_plot() {
        let f = Figure {
            id: "t".into(),
            title: "t".into(),
            kind: "line".into(),
            x_label: "x".into(),
            y_label: "y".into(),
            series: vec![
                Series {
                    name: "curve".into(),
                    points: vec![[0.0, 0.0], [1.0, 1.0], [2.0, 4.0]],
                },
                Series {
                    name: "threshold -95.0 dBm".into(),
                    points: vec![[1.5, 0.0], [1.5, 4.0]],
                },
            ],
        };
        let svg = figure(&f).unwrap();
        for name in ["curve", "threshold -95.0 dBm"] {
            assert!(svg.contains(name), "{name} missing");
        }
        assert!(svg.contains(&format!("height=\"{}\"", PLOT_H + 2 * KEY_LINE_H + 8)));
    }
}
