//! The envelope map: one floor's exterior walls, windows and doors drawn by their
//! screening band, from the building-entry plugin's `extra.envelope` (no computation
//! here). Each band has its own colour, line width and dash, so the map reads in greyscale;
//! interior walls are thin and light grey. One map per floor, for the service the plugin
//! names in `extra.envelope_map_service`.

use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use rfsite_model::{Floor, Site};
use rfsite_plugin::Assessment;
use serde_json::Value;

use crate::charts::CHART_FONT;

/// One screening band: faces from `from_db` (inclusive) to the next band's edge.
struct Band {
    from_db: f64,
    label: &'static str,
    rgb: RGBColor,
    width: u32,
    /// Dash and gap in pixels; `None` for a solid line.
    dash: Option<(u32, u32)>,
}

/// The bands, weakest first: the weakest faces draw widest and solid.
const BANDS: [Band; 4] = [
    Band {
        from_db: f64::NEG_INFINITY,
        label: "below 10 dB",
        rgb: RGBColor(213, 94, 0),
        width: 9,
        dash: None,
    },
    Band {
        from_db: 10.0,
        label: "10 to 20 dB",
        rgb: RGBColor(230, 159, 0),
        width: 6,
        dash: Some((14, 6)),
    },
    Band {
        from_db: 20.0,
        label: "20 to 30 dB",
        rgb: RGBColor(60, 150, 210),
        width: 4,
        dash: Some((4, 4)),
    },
    Band {
        from_db: 30.0,
        label: "30 dB and more",
        rgb: RGBColor(0, 50, 110),
        width: 3,
        dash: None,
    },
];

fn e<E: std::fmt::Debug>(x: E) -> String {
    format!("{x:?}")
}

fn band_of(db: f64) -> &'static Band {
    BANDS
        .iter()
        .rev()
        .find(|b| db >= b.from_db)
        .unwrap_or(&BANDS[0])
}

/// Draws every envelope map in the assessment: file name -> SVG, named like the
/// plugin's figures (`envelope-<floor>.<service>.svg`, `rfsite_model::names`).
pub fn envelope_maps(site: &Site, a: &Assessment) -> Result<Vec<(String, String)>, String> {
    let mut out = Vec::new();
    let Some(be) = a.extra.get("building-entry") else {
        return Ok(out);
    };
    let Some(sid) = be["envelope_map_service"].as_str() else {
        return Ok(out);
    };
    let services = be["envelope"].as_array().into_iter().flatten();
    let Some(s) = services.into_iter().find(|s| s["service"] == sid) else {
        return Ok(out);
    };
    for fl in s["floors"].as_array().into_iter().flatten() {
        let fid = fl["floor"].as_str().unwrap_or_default();
        let Some(floor) = site.floor(fid) else {
            continue;
        };
        if fl["faces"].as_array().is_none_or(|f| f.is_empty()) {
            continue;
        }
        let stem = rfsite_model::names::figure_stem("envelope", &[fid, sid]);
        out.push((
            rfsite_model::names::figure_file(&stem),
            draw(site, floor, fl)?,
        ));
    }
    Ok(out)
}

type Chart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
>;

/// A line in a band's style, over a white halo.
fn styled_line(chart: &mut Chart<'_, '_>, pts: Vec<(f64, f64)>, b: &Band) -> Result<(), String> {
    chart
        .draw_series(std::iter::once(PathElement::new(
            pts.clone(),
            WHITE.stroke_width(b.width + 3),
        )))
        .map_err(e)?;
    match b.dash {
        None => chart
            .draw_series(std::iter::once(PathElement::new(
                pts,
                b.rgb.stroke_width(b.width),
            )))
            .map(|_| ())
            .map_err(e),
        Some((d, g)) => chart
            .draw_series(DashedLineSeries::new(
                pts,
                d,
                g,
                b.rgb.stroke_width(b.width),
            ))
            .map(|_| ())
            .map_err(e),
    }
}

/// The floor's walls (light), its outline and the faces by band.
fn draw_plan(
    chart: &mut Chart<'_, '_>,
    site: &Site,
    floor: &Floor,
    faces: &[Value],
) -> Result<(), String> {
    let u = site.units;
    let p = |x: f64, y: f64| (u.from_m(x), u.from_m(y));
    for part in &floor.parts {
        let seg = vec![
            p(part.segment.a.x, part.segment.a.y),
            p(part.segment.b.x, part.segment.b.y),
        ];
        chart
            .draw_series(std::iter::once(PathElement::new(
                seg,
                RGBColor(190, 190, 190).stroke_width(2),
            )))
            .map_err(e)?;
    }
    let mut outline: Vec<(f64, f64)> = floor.outline.iter().map(|q| p(q.x, q.y)).collect();
    if let Some(first) = outline.first().copied() {
        outline.push(first);
    }
    chart
        .draw_series(std::iter::once(PathElement::new(
            outline,
            RGBColor(120, 120, 120).stroke_width(1),
        )))
        .map_err(e)?;
    // Strongest first, so the weakest faces draw on top.
    for f in faces.iter().rev() {
        let band = band_of(f["screening_db"].as_f64().unwrap_or(f64::NAN));
        for s in f["segments_m"].as_array().into_iter().flatten() {
            let n = |v: &Value| v.as_f64().unwrap_or(0.0);
            let pts = vec![p(n(&s[0][0]), n(&s[0][1])), p(n(&s[1][0]), n(&s[1][1]))];
            styled_line(chart, pts, band)?;
        }
    }
    Ok(())
}

/// Marks the weakest faces (those within 0.05 dB of the weakest): a ring at each segment's
/// middle, and the first one's id and screening beside it, towards the plan's centre.
fn mark_weakest(
    chart: &mut Chart<'_, '_>,
    site: &Site,
    floor: &Floor,
    faces: &[Value],
) -> Result<(), String> {
    let u = site.units;
    let db = |f: &Value| f["screening_db"].as_f64().unwrap_or(f64::NAN);
    let Some(w) = faces.first().filter(|f| f["kind"] != "roof") else {
        return Ok(());
    };
    let (min, max) = rfsite_geometry::polygon_bbox(&floor.outline);
    let (cx, cy) = (0.5 * (min.x + max.x), 0.5 * (min.y + max.y));
    let inset = 0.035 * (max.x - min.x).max(max.y - min.y);
    let n = |v: &Value| v.as_f64().unwrap_or(0.0);
    let mut labelled = false;
    for f in faces
        .iter()
        .filter(|f| db(f) - db(w) <= 0.05 && f["kind"] != "roof")
    {
        for s in f["segments_m"].as_array().into_iter().flatten() {
            let (mx, my) = (
                0.5 * (n(&s[0][0]) + n(&s[1][0])),
                0.5 * (n(&s[0][1]) + n(&s[1][1])),
            );
            let p = (u.from_m(mx), u.from_m(my));
            chart
                .draw_series(std::iter::once(Circle::new(p, 8, WHITE.filled())))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Circle::new(p, 8, BLACK.stroke_width(2))))
                .map_err(e)?;
            if !labelled {
                labelled = true;
                let (dx, dy) = (cx - mx, cy - my);
                let len = dx.hypot(dy).max(1e-9);
                let at = (
                    u.from_m(mx + inset * dx / len),
                    u.from_m(my + inset * dy / len),
                );
                // Away from the ring, into the plan: right-aligned left of an east face,
                // left-aligned right of a west face, centred off a north or south face.
                let h = if dx.abs() <= dy.abs() {
                    HPos::Center
                } else if dx < 0.0 {
                    HPos::Right
                } else {
                    HPos::Left
                };
                let style = TextStyle::from((CHART_FONT, 16).into_font().style(FontStyle::Bold))
                    .color(&BLACK)
                    .pos(Pos::new(h, VPos::Center));
                let label = format!("{} {:.1} dB", f["id"].as_str().unwrap_or_default(), db(f));
                chart
                    .draw_series(std::iter::once(Text::new(label, at, style)))
                    .map_err(e)?;
            }
        }
    }
    Ok(())
}

/// The legend: one line sample per band, then the roof and the weakest face in words.
fn draw_legend(
    area: &DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    fl: &Value,
) -> Result<(), String> {
    let font = (CHART_FONT, 17).into_font();
    area.draw(&Text::new(
        "Screening",
        (8, 18),
        font.clone().style(FontStyle::Bold),
    ))
    .map_err(e)?;
    let mut y = 44;
    for b in BANDS.iter().rev() {
        let pts = vec![(8, y), (56, y)];
        area.draw(&PathElement::new(
            pts.clone(),
            WHITE.stroke_width(b.width + 3),
        ))
        .map_err(e)?;
        match b.dash {
            None => area.draw(&PathElement::new(pts, b.rgb.stroke_width(b.width))),
            Some((d, g)) => area.draw(&DashedPathElement::new(
                pts,
                d,
                g,
                b.rgb.stroke_width(b.width),
            )),
        }
        .map_err(e)?;
        area.draw(&Text::new(b.label, (64, y - 8), font.clone()))
            .map_err(e)?;
        y += 30;
    }
    let faces = fl["faces"].as_array().cloned().unwrap_or_default();
    let words = |f: &Value| {
        format!(
            "{} {:.1} dB",
            f["id"].as_str().unwrap_or_default(),
            f["screening_db"].as_f64().unwrap_or(f64::NAN)
        )
    };
    let mut lines = Vec::new();
    if let Some(w) = faces.first() {
        let db = |f: &Value| f["screening_db"].as_f64().unwrap_or(f64::NAN);
        for (i, f) in faces
            .iter()
            .filter(|f| db(f) - db(w) <= 0.05)
            .take(3)
            .enumerate()
        {
            let head = if i == 0 { "Weakest (ringed)" } else { "" };
            lines.push((head.to_string(), words(f)));
        }
    }
    if let Some(r) = faces.iter().find(|f| f["kind"] == "roof") {
        let m = r["material"].as_str().unwrap_or_default();
        lines.push((
            format!(
                "Roof ({})",
                band_of(r["screening_db"].as_f64().unwrap_or(f64::NAN)).label
            ),
            format!(
                "{m} {:.1} dB",
                r["screening_db"].as_f64().unwrap_or(f64::NAN)
            ),
        ));
    }
    lines.push(("Interior walls".to_string(), "thin grey".to_string()));
    y += 8;
    for (head, text) in lines {
        if !head.is_empty() {
            y += 12;
            let bold = font.clone().style(FontStyle::Bold);
            area.draw(&Text::new(head, (8, y), bold)).map_err(e)?;
            y += 20;
        }
        area.draw(&Text::new(text, (8, y), font.clone()))
            .map_err(e)?;
        y += 20;
    }
    Ok(())
}

/// One floor's map.
fn draw(site: &Site, floor: &Floor, fl: &Value) -> Result<String, String> {
    let u = site.units;
    let (min, max) = rfsite_geometry::polygon_bbox(&floor.outline);
    let pad = (max.x - min.x).max(max.y - min.y) * 0.04;
    let (x0, x1) = (u.from_m(min.x - pad), u.from_m(max.x + pad));
    let (y0, y1) = (u.from_m(min.y - pad), u.from_m(max.y + pad));
    let plot_w = 760.0;
    let plot_h = (plot_w * (y1 - y0) / (x1 - x0)).clamp(260.0, 820.0);
    let legend_w = 270u32;
    let (w, h) = (plot_w as u32 + 70 + legend_w, plot_h as u32 + 60);
    let faces = fl["faces"].as_array().cloned().unwrap_or_default();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(e)?;
        let (left, right) = root.split_horizontally(w - legend_w);
        let mut chart = crate::charts::plan_chart(&left, x0..x1, y0..y1, u.label())?;
        draw_plan(&mut chart, site, floor, &faces)?;
        mark_weakest(&mut chart, site, floor, &faces)?;
        draw_legend(&right, fl)?;
        root.present().map_err(e)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bands_split_at_10_20_30_db() {
        // The band edges the legend states (README, envelope map).
        assert_eq!(band_of(9.99).label, "below 10 dB");
        assert_eq!(band_of(10.0).label, "10 to 20 dB");
        assert_eq!(band_of(29.9).label, "20 to 30 dB");
        assert_eq!(band_of(30.0).label, "30 dB and more");
        assert_eq!(band_of(f64::NAN).label, "below 10 dB");
    }

    #[test]
    fn bands_differ_without_colour() {
        // Greyscale reading: no two bands share both line width and dash.
        for (i, a) in BANDS.iter().enumerate() {
            for b in &BANDS[i + 1..] {
                assert!(a.width != b.width || a.dash != b.dash);
            }
        }
    }
}
