//! The grading map: the test cells of one floor and service with their verdicts, drawn
//! from the grading plugin's `extra` (no computation here). Thin black cell borders;
//! failed cells hatched and marked "F", passing cells marked "P", "m" when judged on
//! measurements, "C" for critical cells; readable in greyscale. Above the mark each cell
//! prints the mean level that judged it (dBm, 0.1 dB), sized to the cell: shortened to
//! whole dB, or left out, where it does not fit at a legible size (the note says how many).

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use rfsite_model::Site;
use rfsite_plugin::Assessment;
use serde_json::Value;

use crate::charts::CHART_FONT;
use crate::labels::{text_size, PxBox, SVG_FONT_SCALE};

/// Height of the note under the map, pixels (three lines of 14 px text).
const NOTE_H: u32 = 62;

/// The key line of the note.
const KEY: &str = "Each cell: mean level, dBm (m: of the measurements, else of the predicted points); P pass, F fail (hatched), C critical.";

/// Largest and smallest font size of a cell's text (plotters size; the SVG writes
/// size / 1.24). 13 gives an x-height near the axis labels' (size 14): legible in print.
const MAX_FONT: f64 = 19.0;
const MIN_FONT: f64 = 13.0;

/// Space kept between a cell's text box and its border, pixels.
const CELL_PAD_PX: f64 = 3.0;

/// What one cell prints: its mark and, when it has one, its mean level.
#[derive(Debug, Clone, PartialEq)]
struct CellText {
    mark: String,
    /// The level that judged the cell, dBm.
    value: Option<f64>,
    /// The service's receiver floor, dBm: a mean below it prints as "no service".
    rx_floor_dbm: Option<f64>,
}

/// The cell's text, from the grading's cell data: the measured mean when the cell was
/// judged on measurements, else the predicted mean; none for a cell not judged.
fn cell_text(c: &Value, rx_floor_dbm: Option<f64>) -> CellText {
    let pass = c["pass"].as_bool();
    let mut mark = match pass {
        Some(true) => "P".to_string(),
        Some(false) => "F".to_string(),
        None => "–".to_string(),
    };
    let value = match c["judged_by"].as_str() {
        Some("measured") => {
            mark.push_str(" m");
            c["measured_mean_dbm"].as_f64()
        }
        Some("predicted") => c["predicted_mean_dbm"].as_f64(),
        _ => None,
    };
    if c["kind"] == "critical" {
        mark = format!("C {mark}");
    }
    CellText {
        mark,
        value,
        rx_floor_dbm,
    }
}

/// The cell's text laid out: lines (value first), font size and the box behind it.
#[derive(Debug, Clone, PartialEq)]
struct Fitted {
    lines: Vec<String>,
    size: f64,
    centre: (f64, f64),
    bg: PxBox,
    shortened: bool,
}

/// Lays `t` out in `cell` (pixels): the value to 0.1 dB, else to whole dB, else left out,
/// at the largest size up to [`MAX_FONT`] whose box fits inside the cell with
/// [`CELL_PAD_PX`] to spare; `None` when not even the mark fits at [`MIN_FONT`].
fn fit(t: &CellText, cell: &PxBox) -> Option<Fitted> {
    let mut variants = Vec::new();
    match (t.value, t.rx_floor_dbm) {
        // `rfsite_plugin::level_cell`: no number below the receiver floor.
        (Some(v), Some(f)) if v < f => {
            variants.push((vec!["no service".into(), t.mark.clone()], false));
            variants.push((vec!["none".into(), t.mark.clone()], true));
        }
        (Some(v), _) => {
            variants.push((vec![format!("{v:.1}"), t.mark.clone()], false));
            variants.push((vec![format!("{v:.0}"), t.mark.clone()], true));
        }
        (None, _) => {}
    }
    variants.push((vec![t.mark.clone()], false));
    let (w, h) = (
        cell.x1 - cell.x0 - 2.0 * CELL_PAD_PX,
        cell.y1 - cell.y0 - 2.0 * CELL_PAD_PX,
    );
    for (lines, shortened) in variants {
        let (bw, bh) = block_size(&lines, 1.0);
        // The box scales with the size: the largest size that fits both ways.
        let size = (w / bw).min(h / bh).min(MAX_FONT);
        if size >= MIN_FONT {
            let (bw, bh) = block_size(&lines, size);
            let centre = cell.centre();
            let bg = PxBox {
                x0: centre.0 - bw / 2.0,
                y0: centre.1 - bh / 2.0,
                x1: centre.0 + bw / 2.0,
                y1: centre.1 + bh / 2.0,
            };
            return Some(Fitted {
                lines,
                size,
                centre,
                bg,
                shortened,
            });
        }
    }
    None
}

/// Line height of a cell's text in ems.
const LINE_EM: f64 = 1.15;

/// Width and height in pixels of the text block `lines` at `size`, with 0.3 em padding.
fn block_size(lines: &[String], size: f64) -> (f64, f64) {
    let em = size * SVG_FONT_SCALE;
    let w = lines
        .iter()
        .map(|l| text_size(l, size).0)
        .fold(0.0, f64::max);
    (w + 0.6 * em, LINE_EM * em * lines.len() as f64 + 0.3 * em)
}

/// Draws a fitted cell text: a white box, then the lines centred in it (bold mark).
fn draw_cell_text(
    area: &DrawingArea<SVGBackend<'_>, plotters::coord::Shift>,
    f: &Fitted,
) -> Result<(), String> {
    let r = |v: f64| v.round() as i32;
    area.draw(&Rectangle::new(
        [(r(f.bg.x0), r(f.bg.y0)), (r(f.bg.x1), r(f.bg.y1))],
        WHITE.filled(),
    ))
    .map_err(e)?;
    let em = f.size * SVG_FONT_SCALE;
    let n = f.lines.len() as f64;
    for (i, line) in f.lines.iter().enumerate() {
        let bold = i + 1 == f.lines.len();
        let style = TextStyle::from(crate::charts::label_font(f.size, bold))
            .color(&BLACK)
            .pos(Pos::new(HPos::Center, VPos::Center));
        let y = f.centre.1 + (i as f64 - (n - 1.0) / 2.0) * LINE_EM * em;
        area.draw(&Text::new(line.clone(), (r(f.centre.0), r(y)), style))
            .map_err(e)?;
    }
    Ok(())
}

/// Counts of the cells whose text did not fit at full precision.
#[derive(Debug, Default)]
struct Fitting {
    shortened: usize,
    omitted: usize,
    marks_omitted: usize,
}

impl Fitting {
    fn count(&mut self, t: &CellText, f: Option<&Fitted>) {
        match f {
            None => {
                self.marks_omitted += 1;
                self.omitted += usize::from(t.value.is_some());
            }
            Some(f) if t.value.is_some() && f.lines.len() < 2 => self.omitted += 1,
            Some(f) => self.shortened += usize::from(f.shortened),
        }
    }

    fn note(&self) -> Option<String> {
        let mut parts = Vec::new();
        if self.shortened > 0 {
            parts.push(format!(
                "values of {} cells shortened to whole dB",
                self.shortened
            ));
        }
        if self.omitted > 0 {
            parts.push(format!("values of {} cells left out", self.omitted));
        }
        if self.marks_omitted > 0 {
            parts.push(format!(
                "marks of {} cells left out (hatching shows a failed cell)",
                self.marks_omitted
            ));
        }
        (!parts.is_empty()).then(|| {
            format!(
                "Cells too small for the value at a legible size: {}.",
                parts.join(", ")
            )
        })
    }
}

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
            let rx = a
                .services
                .iter()
                .find(|r| r.id == sid)
                .and_then(|r| r.receiver_floor_dbm);
            let svg = draw(site, floor, f, rx)?;
            let stem = rfsite_model::names::figure_stem("grading", &[fid, sid]);
            out.push((rfsite_model::names::figure_file(&stem), svg));
        }
    }
    Ok(out)
}

fn draw(
    site: &Site,
    floor: &rfsite_model::Floor,
    fg: &Value,
    rx_floor_dbm: Option<f64>,
) -> Result<String, String> {
    let u = site.units;
    let (min, max) = rfsite_geometry::polygon_bbox(&floor.outline);
    let pad = (max.x - min.x).max(max.y - min.y) * 0.03;
    let (x0, x1) = (u.from_m(min.x - pad), u.from_m(max.x + pad));
    let (y0, y1) = (u.from_m(min.y - pad), u.from_m(max.y + pad));
    let plot_w = 820.0;
    let plot_h = (plot_w * (y1 - y0) / (x1 - x0)).clamp(200.0, 860.0);
    let (w, h) = (plot_w as u32 + 70, plot_h as u32 + 100 + NOTE_H - 40);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(e)?;
        let (top, bottom) = root.split_vertically(h - NOTE_H);
        let mut fitting = Fitting::default();
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
            let px = PxBox {
                x0: chart.backend_coord(&(ax, by)).0 as f64,
                y0: chart.backend_coord(&(ax, by)).1 as f64,
                x1: chart.backend_coord(&(bx, ay)).0 as f64,
                y1: chart.backend_coord(&(bx, ay)).1 as f64,
            };
            let text = cell_text(c, rx_floor_dbm);
            let fitted = fit(&text, &px);
            fitting.count(&text, fitted.as_ref());
            if let Some(f) = &fitted {
                draw_cell_text(&top, f)?;
            }
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
        let line1 = format!(
            "Floor verdict {}; cell test: general cells passing {}, critical {}, {} failed.",
            if fg["pass"].as_bool() == Some(true) {
                "PASS"
            } else {
                "FAIL"
            },
            pct(&v["general_fraction"]),
            pct(&v["critical_fraction"]),
            v["failed_cells"].as_u64().unwrap_or(0)
        );
        let style = (CHART_FONT, 14).into_font().color(&BLACK);
        bottom
            .draw(&Text::new(line1, (56, 8), style.clone()))
            .map_err(e)?;
        bottom
            .draw(&Text::new(KEY.to_string(), (56, 26), style.clone()))
            .map_err(e)?;
        if let Some(note) = fitting.note() {
            bottom.draw(&Text::new(note, (56, 44), style)).map_err(e)?;
        }
        root.present().map_err(e)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cell(w: f64, h: f64) -> PxBox {
        PxBox {
            x0: 100.0,
            y0: 50.0,
            x1: 100.0 + w,
            y1: 50.0 + h,
        }
    }

    fn text(v: Option<f64>) -> CellText {
        CellText {
            mark: "F".into(),
            value: v,
            rx_floor_dbm: Some(-125.0),
        }
    }

    #[test]
    fn the_value_printed_is_the_one_that_judged_the_cell() {
        let c = serde_json::json!({"pass": false, "judged_by": "measured", "kind": "critical",
            "measured_mean_dbm": -91.25, "predicted_mean_dbm": -80.0});
        assert_eq!(
            cell_text(&c, None),
            CellText {
                mark: "C F m".into(),
                value: Some(-91.25),
                rx_floor_dbm: None,
            }
        );
        let c = serde_json::json!({"pass": true, "judged_by": "predicted", "kind": "general",
            "measured_mean_dbm": null, "predicted_mean_dbm": -80.04});
        assert_eq!(cell_text(&c, None).value, Some(-80.04));
        let c = serde_json::json!({"pass": null, "judged_by": "not judged", "kind": "excluded"});
        assert_eq!(cell_text(&c, None).value, None);
    }

    // Hand arithmetic with the estimate of `labels::text_size` (0.6 em a character, em =
    // size / 1.24): "-87.3" over "F" is 3.6 em wide with padding and 2.6 em tall.
    #[test]
    fn text_is_sized_to_the_cell_then_shortened_then_left_out() {
        let t = text(Some(-87.31));
        // 100 x 80 px: room for 32 px text; capped at the largest size.
        let f = fit(&t, &cell(100.0, 80.0)).unwrap();
        assert_eq!(f.lines, vec!["-87.3", "F"]);
        assert_eq!(f.size, MAX_FONT);
        assert!(f.bg.inside(&cell(100.0, 80.0)));
        // 40 px wide: 34 / (3.6 / 1.24) = 11.7 < 13, but "-87" (2.4 em) fits.
        let f = fit(&t, &cell(40.0, 60.0)).unwrap();
        assert_eq!((f.lines[0].as_str(), f.shortened), ("-87", true));
        assert!(f.bg.inside(&cell(40.0, 60.0)));
        // 30 px tall: 24 / (2.6 / 1.24) = 11.4 < 13: only the mark (1.45 em tall).
        let f = fit(&t, &cell(100.0, 30.0)).unwrap();
        assert_eq!(f.lines, vec!["F"]);
        // 12 px: nothing fits.
        assert!(fit(&t, &cell(12.0, 12.0)).is_none());
        // Below the receiver floor (-125 dBm here) no number is printed.
        let f = fit(&text(Some(-130.0)), &cell(100.0, 80.0)).unwrap();
        assert_eq!(f.lines, vec!["no service", "F"]);
    }

    #[test]
    fn the_note_counts_what_did_not_fit() {
        let mut n = Fitting::default();
        let t = text(Some(-87.3));
        for c in [
            cell(100.0, 80.0),
            cell(40.0, 60.0),
            cell(100.0, 30.0),
            cell(12.0, 12.0),
        ] {
            n.count(&t, fit(&t, &c).as_ref());
        }
        assert_eq!((n.shortened, n.omitted, n.marks_omitted), (1, 2, 1));
        assert_eq!(
            n.note().unwrap(),
            "Cells too small for the value at a legible size: values of 1 cells shortened to whole dB, values of 2 cells left out, marks of 1 cells left out (hatching shows a failed cell)."
        );
        assert!(Fitting::default().note().is_none());
    }
}
