//! The grading map: the test cells of one floor and service with their verdicts, drawn
//! from the grading plugin's `extra` (no computation here). Thin black cell borders;
//! failed cells hatched and marked "F", passing cells marked "P", "m" when judged on
//! measurements, "C" for critical cells; readable in greyscale.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use rfsite_model::Site;
use rfsite_plugin::Assessment;
use serde_json::Value;

use crate::charts::CHART_FONT;

fn e<E: std::fmt::Debug>(x: E) -> String {
    format!("{x:?}")
}

/// Draws every grading map in the assessment: file name -> SVG. Names match the
/// grading plugin's figures (`grading-<floor>.<service>.svg`, `rfsite_model::names`).
pub fn grading_maps(site: &Site, a: &Assessment) -> Result<Vec<(String, String)>, String> {
    let mut out = Vec::new();
    let Some(services) = a
        .extra
        .get("grading")
        .and_then(|g| g.get("services"))
        .and_then(Value::as_array)
    else {
        return Ok(out);
    };
    for s in services {
        let sid = s["service"].as_str().unwrap_or_default();
        for f in s["floors"].as_array().into_iter().flatten() {
            let fid = f["floor"].as_str().unwrap_or_default();
            let Some(floor) = site.floor(fid) else {
                continue;
            };
            let svg = draw(site, floor, f)?;
            let stem = rfsite_model::names::figure_stem("grading", &[fid, sid]);
            out.push((rfsite_model::names::figure_file(&stem), svg));
        }
    }
    Ok(out)
}

fn draw(site: &Site, floor: &rfsite_model::Floor, fg: &Value) -> Result<String, String> {
    let u = site.units;
    let (min, max) = rfsite_geometry::polygon_bbox(&floor.outline);
    let pad = (max.x - min.x).max(max.y - min.y) * 0.03;
    let (x0, x1) = (u.from_m(min.x - pad), u.from_m(max.x + pad));
    let (y0, y1) = (u.from_m(min.y - pad), u.from_m(max.y + pad));
    let plot_w = 820.0;
    let plot_h = (plot_w * (y1 - y0) / (x1 - x0)).clamp(200.0, 860.0);
    let (w, h) = (plot_w as u32 + 70, plot_h as u32 + 100);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(e)?;
        let (top, bottom) = root.split_vertically(h - 40);
        let mut chart = crate::charts::plan_chart(&top, x0..x1, y0..y1, u.label())?;
        // Walls, light, under everything.
        for part in &floor.parts {
            let seg = vec![
                (u.from_m(part.segment.a.x), u.from_m(part.segment.a.y)),
                (u.from_m(part.segment.b.x), u.from_m(part.segment.b.y)),
            ];
            chart
                .draw_series(std::iter::once(PathElement::new(
                    seg,
                    RGBColor(200, 200, 200).stroke_width(2),
                )))
                .map_err(e)?;
        }
        let cells = fg["cells"].as_array().cloned().unwrap_or_default();
        for c in &cells {
            let b = &c["bounds_m"];
            let n = |v: &Value| v.as_f64().unwrap_or(0.0);
            let (ax, ay, bx, by) = (
                u.from_m(n(&b[0][0])),
                u.from_m(n(&b[0][1])),
                u.from_m(n(&b[1][0])),
                u.from_m(n(&b[1][1])),
            );
            let pass = c["pass"].as_bool();
            let critical = c["kind"] == "critical";
            if pass == Some(false) {
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(ax, ay), (bx, by)],
                        RGBColor(235, 235, 235).filled(),
                    )))
                    .map_err(e)?;
                // 45-degree hatching clipped to the cell.
                let (cw, ch) = (bx - ax, by - ay);
                let step = cw.max(ch) / 8.0;
                let mut k = -ch;
                while k < cw {
                    // Line x - ax - (y - ay) = k.
                    let mut pts = Vec::new();
                    for (x, y) in [
                        (ax + k, ay),
                        (ax + k + ch, by),
                        (ax, ay - k),
                        (bx, ay + cw - k),
                    ] {
                        if x >= ax - 1e-9 && x <= bx + 1e-9 && y >= ay - 1e-9 && y <= by + 1e-9 {
                            pts.push((x, y));
                        }
                    }
                    pts.sort_by(|p, q| p.0.total_cmp(&q.0));
                    pts.dedup_by(|p, q| (p.0 - q.0).abs() < 1e-9 && (p.1 - q.1).abs() < 1e-9);
                    if pts.len() >= 2 {
                        chart
                            .draw_series(std::iter::once(PathElement::new(
                                vec![pts[0], pts[pts.len() - 1]],
                                RGBColor(90, 90, 90).stroke_width(1),
                            )))
                            .map_err(e)?;
                    }
                    k += step;
                }
            }
            let border = if critical {
                BLACK.stroke_width(3)
            } else {
                BLACK.stroke_width(1)
            };
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(ax, ay), (bx, by)],
                    border,
                )))
                .map_err(e)?;
            let mut label = match pass {
                Some(true) => "P".to_string(),
                Some(false) => "F".to_string(),
                None => "–".to_string(),
            };
            if c["judged_by"] == "measured" {
                label.push_str(" m");
            }
            if critical {
                label = format!("C {label}");
            }
            let style = TextStyle::from((CHART_FONT, 17).into_font().style(FontStyle::Bold))
                .color(&BLACK)
                .pos(Pos::new(HPos::Center, VPos::Center));
            let cx = 0.5 * (ax + bx);
            let cy = 0.5 * (ay + by);
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [
                        (cx - 0.09 * (bx - ax), cy - 0.12 * (by - ay)),
                        (cx + 0.09 * (bx - ax), cy + 0.12 * (by - ay)),
                    ],
                    WHITE.filled(),
                )))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Text::new(label, (cx, cy), style)))
                .map_err(e)?;
        }
        let mut outline: Vec<(f64, f64)> = floor
            .outline
            .iter()
            .map(|p| (u.from_m(p.x), u.from_m(p.y)))
            .collect();
        if let Some(first) = outline.first().copied() {
            outline.push(first);
        }
        chart
            .draw_series(std::iter::once(PathElement::new(
                outline,
                BLACK.stroke_width(2),
            )))
            .map_err(e)?;
        let v = &fg["cell_test"];
        let pct = |x: &Value| {
            x.as_f64()
                .map(|f| format!("{:.0} %", 100.0 * f))
                .unwrap_or_else(|| "n/a".into())
        };
        let text = format!(
            "Floor verdict {}; cell test: general cells passing {}, critical {}, {} failed. P pass, F fail (hatched), m judged on measurements, C critical.",
            if fg["pass"].as_bool() == Some(true) { "PASS" } else { "FAIL" },
            pct(&v["general_fraction"]),
            pct(&v["critical_fraction"]),
            v["failed_cells"].as_u64().unwrap_or(0)
        );
        bottom
            .draw(&Text::new(
                text,
                (56, 12),
                (CHART_FONT, 14).into_font().color(&BLACK),
            ))
            .map_err(e)?;
        root.present().map_err(e)?;
    }
    Ok(svg)
}
