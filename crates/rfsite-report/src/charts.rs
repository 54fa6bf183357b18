//! Charts as SVG (plotters): coverage maps and data figures. Pure drawing: the values come
//! from the assessment; nothing here computes physics.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use rfsite_model::{MaterialClass, PartKind, Site, ZoneKind};
use rfsite_plugin::{CoverageLayer, Figure, Measurement};

/// Font family used in every chart (shipped with the templates, OFL).
pub const CHART_FONT: &str = "Lato";

/// One colour bin of the map scale, relative to the service threshold.
#[derive(Debug, Clone, Copy)]
pub struct Bin {
    /// Lower edge relative to the threshold, dB (`f64::NEG_INFINITY` for the lowest).
    pub from_db: f64,
    /// Fill colour.
    pub rgb: (u8, u8, u8),
}

/// The rfsite map scale: warm earth tones below the threshold, darker the worse; cool blues
/// to pale at and above it, lighter the stronger. The jump at the threshold is both a hue
/// and a lightness step, so it reads in greyscale and for red-green colour-blind readers;
/// a black contour marks it too.
pub const BINS: &[Bin] = &[
    Bin {
        from_db: f64::NEG_INFINITY,
        rgb: (58, 40, 36),
    },
    Bin {
        from_db: -20.0,
        rgb: (118, 78, 58),
    },
    Bin {
        from_db: -10.0,
        rgb: (196, 142, 98),
    },
    Bin {
        from_db: -5.0,
        rgb: (232, 196, 150),
    },
    Bin {
        from_db: 0.0,
        rgb: (30, 70, 120),
    },
    Bin {
        from_db: 5.0,
        rgb: (52, 118, 160),
    },
    Bin {
        from_db: 10.0,
        rgb: (98, 168, 186),
    },
    Bin {
        from_db: 20.0,
        rgb: (196, 226, 214),
    },
];

fn bin_of(rel_db: f64) -> usize {
    let mut b = 0;
    for (i, bin) in BINS.iter().enumerate() {
        if rel_db >= bin.from_db {
            b = i;
        }
    }
    b
}

fn rgb(c: (u8, u8, u8)) -> RGBColor {
    RGBColor(c.0, c.1, c.2)
}

/// Line colour and width of a wall class on the map.
pub fn wall_style(class: MaterialClass, kind: PartKind) -> (RGBColor, u32) {
    match kind {
        PartKind::Door => return (RGBColor(150, 90, 30), 4),
        PartKind::Window => {}
        PartKind::Wall => {}
    }
    match class {
        MaterialClass::Metal => (RGBColor(0, 0, 0), 8),
        MaterialClass::Concrete => (RGBColor(70, 70, 70), 6),
        MaterialClass::Masonry => (RGBColor(120, 90, 60), 5),
        MaterialClass::CoatedGlass => (RGBColor(176, 40, 125), 6),
        MaterialClass::Glass => (RGBColor(60, 170, 200), 4),
        MaterialClass::Wood => (RGBColor(150, 90, 30), 4),
        MaterialClass::Light => (RGBColor(140, 140, 150), 3),
        _ => (RGBColor(110, 110, 110), 3),
    }
}

type DrawResult<T> = Result<T, String>;

fn e<E: std::fmt::Debug>(x: E) -> String {
    format!("{x:?}")
}

/// Draws the coverage map of one layer: colour bins and the contour at `threshold_dbm`
/// (the predicted required level the verdict uses), survey markers judged against
/// `measured_required_dbm` (the measured required level).
pub fn coverage_map(
    site: &Site,
    layer: &CoverageLayer,
    threshold_dbm: f64,
    measured_required_dbm: f64,
    measured: &[&Measurement],
    plan: Option<&[u8]>,
    added: &[AddedAntenna],
) -> DrawResult<String> {
    let floor = site.floor(&layer.floor).ok_or("floor not found")?;
    let u = site.units;
    let g = layer.grid.to_grid();
    let (min, max) = rfsite_geometry::polygon_bbox(&floor.outline);
    let pad = (max.x - min.x).max(max.y - min.y) * 0.03;
    let (x0, x1) = (u.from_m(min.x - pad), u.from_m(max.x + pad));
    let (y0, y1) = (u.from_m(min.y - pad), u.from_m(max.y + pad));
    let plot_w = 880.0;
    let plot_h = (plot_w * (y1 - y0) / (x1 - x0)).clamp(200.0, 900.0);
    let legend_w = 190u32;
    let (w, h) = (plot_w as u32 + 70 + legend_w, plot_h as u32 + 70);
    let mut svg = String::new();
    let mut plan_svg: Option<String> = None;
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(e)?;
        let (left, right) = root.split_horizontally(w - legend_w);
        let unit = u.label();
        let mut chart = plan_chart(&left, x0..x1, y0..y1, u.label())?;
        // Background plan image: its pixel rectangle on the chart.
        if let (Some(bytes), Some(floor_ref)) = (plan, Some(floor)) {
            if let Some((wpx, hpx, mime)) = image_size(bytes) {
                let s = floor_ref.plan_m_per_px;
                let (ox, oy) = (floor_ref.plan_offset.x, floor_ref.plan_offset.y);
                let tl = chart.backend_coord(&(u.from_m(ox), u.from_m(oy + hpx as f64 * s)));
                let br = chart.backend_coord(&(u.from_m(ox + wpx as f64 * s), u.from_m(oy)));
                plan_svg = Some(format!(
                    "<image x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" preserveAspectRatio=\"none\" href=\"data:{mime};base64,{}\"/>",
                    tl.0, tl.1, br.0 - tl.0, br.1 - tl.1, base64(bytes)
                ));
            }
        }
        // Cells, run-length merged along rows.
        let step = u.from_m(g.step_m);
        let mut rects = Vec::new();
        for iy in 0..g.ny {
            let mut ix = 0;
            while ix < g.nx {
                let v = layer.level_dbm[iy * g.nx + ix];
                if !v.is_finite() {
                    ix += 1;
                    continue;
                }
                let b = bin_of(v as f64 - threshold_dbm);
                let start = ix;
                while ix < g.nx {
                    let w = layer.level_dbm[iy * g.nx + ix];
                    if !w.is_finite() || bin_of(w as f64 - threshold_dbm) != b {
                        break;
                    }
                    ix += 1;
                }
                let xa = u.from_m(g.origin.x) + start as f64 * step;
                let xb = u.from_m(g.origin.x) + ix as f64 * step;
                let ya = u.from_m(g.origin.y) + iy as f64 * step;
                rects.push(Rectangle::new(
                    [(xa, ya), (xb, ya + step)],
                    if plan.is_some() {
                        rgb(BINS[b].rgb).mix(0.6).filled()
                    } else {
                        rgb(BINS[b].rgb).filled()
                    },
                ));
            }
        }
        chart.draw_series(rects).map_err(e)?;
        // Threshold contour: cell edges where one side meets the threshold and the other not.
        let mut edges = Vec::new();
        let ok = |ix: usize, iy: usize| -> Option<bool> {
            let v = layer.level_dbm[iy * g.nx + ix];
            v.is_finite().then_some(v as f64 >= threshold_dbm)
        };
        let ox = u.from_m(g.origin.x);
        let oy = u.from_m(g.origin.y);
        for iy in 0..g.ny {
            for ix in 0..g.nx {
                let Some(a) = ok(ix, iy) else { continue };
                if ix + 1 < g.nx {
                    if let Some(b) = ok(ix + 1, iy) {
                        if a != b {
                            let x = ox + (ix + 1) as f64 * step;
                            edges.push(vec![
                                (x, oy + iy as f64 * step),
                                (x, oy + (iy + 1) as f64 * step),
                            ]);
                        }
                    }
                }
                if iy + 1 < g.ny {
                    if let Some(b) = ok(ix, iy + 1) {
                        if a != b {
                            let y = oy + (iy + 1) as f64 * step;
                            edges.push(vec![
                                (ox + ix as f64 * step, y),
                                (ox + (ix + 1) as f64 * step, y),
                            ]);
                        }
                    }
                }
            }
        }
        for ed in edges {
            chart
                .draw_series(std::iter::once(PathElement::new(ed, BLACK.stroke_width(2))))
                .map_err(e)?;
        }
        // Outline and walls, each with a white halo.
        let mut outline: Vec<(f64, f64)> = floor
            .outline
            .iter()
            .map(|p| (u.from_m(p.x), u.from_m(p.y)))
            .collect();
        outline.push(outline[0]);
        chart
            .draw_series(std::iter::once(PathElement::new(
                outline,
                BLACK.stroke_width(1),
            )))
            .map_err(e)?;
        for part in &floor.parts {
            let class = site
                .materials
                .get(&part.material)
                .map(|m| m.class)
                .unwrap_or(MaterialClass::Other);
            let (col, wdt) = wall_style(class, part.kind);
            let seg = vec![
                (u.from_m(part.segment.a.x), u.from_m(part.segment.a.y)),
                (u.from_m(part.segment.b.x), u.from_m(part.segment.b.y)),
            ];
            chart
                .draw_series(std::iter::once(PathElement::new(
                    seg.clone(),
                    WHITE.stroke_width(wdt + 2),
                )))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(PathElement::new(
                    seg,
                    col.stroke_width(wdt),
                )))
                .map_err(e)?;
        }
        // Zones.
        for z in &floor.zones {
            let mut pts: Vec<(f64, f64)> = z
                .polygon
                .iter()
                .map(|p| (u.from_m(p.x), u.from_m(p.y)))
                .collect();
            pts.push(pts[0]);
            let (col, wdt) = match z.kind {
                ZoneKind::Critical => (RGBColor(0, 0, 0), 3),
                ZoneKind::Excluded => (RGBColor(90, 90, 90), 1),
                ZoneKind::General => (RGBColor(90, 90, 90), 1),
            };
            chart
                .draw_series(std::iter::once(PathElement::new(
                    pts.clone(),
                    WHITE.stroke_width(wdt + 3),
                )))
                .map_err(e)?;
            chart
                .draw_series(DashedLineSeries::new(
                    pts.clone(),
                    9,
                    5,
                    col.stroke_width(wdt),
                ))
                .map_err(e)?;
            let cx = pts[..pts.len() - 1].iter().map(|p| p.0).sum::<f64>() / (pts.len() - 1) as f64;
            let cy = pts[..pts.len() - 1].iter().map(|p| p.1).sum::<f64>() / (pts.len() - 1) as f64;
            let name = if z.name.is_empty() {
                z.id.clone()
            } else {
                z.name.clone()
            };
            let label = if z.kind == ZoneKind::Critical {
                format!("{name} (critical)")
            } else {
                name
            };
            let style = TextStyle::from((CHART_FONT, 13).into_font())
                .color(&BLACK)
                .pos(Pos::new(HPos::Center, VPos::Center));
            chart
                .draw_series(std::iter::once(Text::new(label, (cx, cy), style)))
                .map_err(e)?;
        }
        // Measured points: filled circle = meets the measured required level, cross = below.
        for m in measured {
            let p = (u.from_m(m.x_m), u.from_m(m.y_m));
            if m.level_dbm >= measured_required_dbm {
                chart
                    .draw_series(std::iter::once(Circle::new(p, 4, WHITE.filled())))
                    .map_err(e)?;
                chart
                    .draw_series(std::iter::once(Circle::new(p, 4, BLACK.stroke_width(1))))
                    .map_err(e)?;
            } else {
                chart
                    .draw_series(std::iter::once(Cross::new(p, 5, WHITE.stroke_width(4))))
                    .map_err(e)?;
                chart
                    .draw_series(std::iter::once(Cross::new(p, 5, BLACK.stroke_width(2))))
                    .map_err(e)?;
            }
        }
        // Transmitters of this service (on this floor), then the ones an option adds.
        draw_transmitters(&mut chart, site, layer, (x1 - x0) * 0.008)?;
        draw_added(&mut chart, added, (x1 - x0) * 0.008)?;
        // Scale bar: a round length near a fifth of the width.
        let span = x1 - x0;
        let nice = [1.0, 2.0, 5.0, 10.0, 20.0, 25.0, 50.0, 100.0, 200.0, 500.0];
        let bar = nice
            .iter()
            .copied()
            .filter(|n| *n <= span / 4.0)
            .fold(1.0, f64::max);
        let bx = x0 + span * 0.03;
        let by = y0 + (y1 - y0) * 0.045;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(bx, by), (bx + bar, by + (y1 - y0) * 0.008)],
                BLACK.filled(),
            )))
            .map_err(e)?;
        let style = TextStyle::from((CHART_FONT, 13).into_font())
            .color(&BLACK)
            .pos(Pos::new(HPos::Left, VPos::Bottom));
        chart
            .draw_series(std::iter::once(Text::new(
                format!("{bar} {unit}"),
                (bx, by + (y1 - y0) * 0.015),
                style,
            )))
            .map_err(e)?;
        // North arrow.
        if let Some(n) = site.north_deg {
            let r = (x1 - x0).min(y1 - y0) * 0.05;
            let cx = x1 - r * 1.6;
            let cy = y1 - r * 1.6;
            let a = n.to_radians();
            let tip = (cx + r * a.cos(), cy + r * a.sin());
            let tail = (cx - r * a.cos(), cy - r * a.sin());
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![tail, tip],
                    BLACK.stroke_width(3),
                )))
                .map_err(e)?;
            chart
                .draw_series(std::iter::once(Circle::new(tip, 4, BLACK.filled())))
                .map_err(e)?;
            let style = TextStyle::from((CHART_FONT, 15).into_font().style(FontStyle::Bold))
                .color(&BLACK)
                .pos(Pos::new(HPos::Center, VPos::Center));
            chart
                .draw_series(std::iter::once(Text::new(
                    "N",
                    (cx + 1.45 * r * a.cos(), cy + 1.45 * r * a.sin()),
                    style,
                )))
                .map_err(e)?;
        }
        // Legend.
        let font = (CHART_FONT, 14).into_font();
        right
            .draw(&Text::new(
                "Level (dBm)",
                (8, 18),
                font.clone().style(FontStyle::Bold),
            ))
            .map_err(e)?;
        let mut y = 34;
        for (i, b) in BINS.iter().enumerate().rev() {
            let lo = b.from_db + threshold_dbm;
            let label = if i == 0 {
                format!("< {:.1}", BINS[1].from_db + threshold_dbm)
            } else if i == BINS.len() - 1 {
                format!(">= {lo:.1}")
            } else {
                format!("{lo:.1} to {:.1}", BINS[i + 1].from_db + threshold_dbm)
            };
            right
                .draw(&Rectangle::new([(8, y), (34, y + 18)], rgb(b.rgb).filled()))
                .map_err(e)?;
            right
                .draw(&Rectangle::new(
                    [(8, y), (34, y + 18)],
                    BLACK.stroke_width(1),
                ))
                .map_err(e)?;
            right
                .draw(&Text::new(label, (40, y + 3), font.clone()))
                .map_err(e)?;
            if i == 4 {
                right
                    .draw(&PathElement::new(
                        vec![(4, y + 19), (180, y + 19)],
                        BLACK.stroke_width(3),
                    ))
                    .map_err(e)?;
                right
                    .draw(&Text::new(
                        format!("required {threshold_dbm:.1}"),
                        (40, y + 23),
                        font.clone().style(FontStyle::Bold),
                    ))
                    .map_err(e)?;
                y += 18;
            }
            y += 22;
        }
        y += 10;
        right
            .draw(&Text::new(
                "Walls",
                (8, y),
                font.clone().style(FontStyle::Bold),
            ))
            .map_err(e)?;
        y += 18;
        let mut classes: Vec<(MaterialClass, PartKind)> = floor
            .parts
            .iter()
            .map(|p| {
                (
                    site.materials
                        .get(&p.material)
                        .map(|m| m.class)
                        .unwrap_or(MaterialClass::Other),
                    p.kind,
                )
            })
            .map(|(c, k)| {
                if k == PartKind::Door {
                    (MaterialClass::Wood, PartKind::Door)
                } else {
                    (c, PartKind::Wall)
                }
            })
            .collect();
        classes.sort_by_key(|(c, k)| (*k as u8, *c));
        classes.dedup();
        for (c, k) in classes {
            let (col, wdt) = wall_style(c, k);
            right
                .draw(&PathElement::new(
                    vec![(8, y + 8), (34, y + 8)],
                    col.stroke_width(wdt),
                ))
                .map_err(e)?;
            let label = if k == PartKind::Door {
                "door".to_string()
            } else {
                c.label().to_string()
            };
            right
                .draw(&Text::new(label, (40, y), font.clone()))
                .map_err(e)?;
            y += 20;
        }
        y += 8;
        right
            .draw(&TriangleMarker::new((20, y + 8), 7, BLACK.filled()))
            .map_err(e)?;
        right
            .draw(&Text::new("antenna", (40, y), font.clone()))
            .map_err(e)?;
        y += 20;
        if !added.is_empty() {
            for (h, c) in NEW_MARKER {
                right
                    .draw(&Rectangle::new(
                        [(20 - h, y + 8 - h), (20 + h, y + 8 + h)],
                        c.filled(),
                    ))
                    .map_err(e)?;
            }
            right
                .draw(&Text::new("new antenna (option)", (40, y), font.clone()))
                .map_err(e)?;
            y += 20;
        }
        right
            .draw(&PathElement::new(
                vec![(8, y + 8), (34, y + 8)],
                BLACK.stroke_width(3),
            ))
            .map_err(e)?;
        right
            .draw(&Text::new("critical zone", (40, y), font.clone()))
            .map_err(e)?;
        if !measured.is_empty() {
            y += 20;
            right
                .draw(&Circle::new((20, y + 8), 4, BLACK.stroke_width(1)))
                .map_err(e)?;
            right
                .draw(&Text::new("measured, meets", (40, y), font.clone()))
                .map_err(e)?;
            y += 20;
            right
                .draw(&Cross::new((20, y + 8), 5, BLACK.stroke_width(2)))
                .map_err(e)?;
            right
                .draw(&Text::new("measured, below", (40, y), font.clone()))
                .map_err(e)?;
        }
        root.present().map_err(e)?;
    }
    if let Some(img) = plan_svg {
        // Right after the white background, under everything else.
        if let Some(r) = svg.find("<rect") {
            if let Some(end) = svg[r..].find("/>") {
                svg.insert_str(r + end + 2, &img);
            }
        }
    }
    Ok(svg)
}

/// An antenna an option adds, marked on its after-map apart from the site's own: a white
/// square with a black border (the site's are black triangles) labelled "<id> (new)".
#[derive(Debug, Clone, PartialEq)]
pub struct AddedAntenna {
    /// Antenna id.
    pub id: String,
    /// Plan position x, site units.
    pub x: f64,
    /// Plan position y, site units.
    pub y: f64,
}

/// A floor-plan chart on `area` over `x` × `y` (site units): axes titled in `unit`, no mesh.
pub(crate) fn plan_chart<'a, 'b>(
    area: &'a DrawingArea<SVGBackend<'b>, plotters::coord::Shift>,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    unit: &str,
) -> DrawResult<MapChart<'a, 'b>> {
    let mut chart = ChartBuilder::on(area)
        .margin(8)
        .x_label_area_size(36)
        .y_label_area_size(48)
        .build_cartesian_2d(x, y)
        .map_err(e)?;
    chart
        .configure_mesh()
        .disable_mesh()
        .x_desc(format!("x ({unit})"))
        .y_desc(format!("y ({unit})"))
        .label_style((CHART_FONT, 14))
        .axis_desc_style((CHART_FONT, 15))
        .draw()
        .map_err(e)?;
    Ok(chart)
}

pub(crate) type MapChart<'a, 'b> = ChartContext<
    'a,
    SVGBackend<'b>,
    Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
>;

/// The label of an antenna, in bold, just up and right of its marker.
fn antenna_label(
    chart: &mut MapChart<'_, '_>,
    text: String,
    p: (f64, f64),
    off: f64,
) -> DrawResult<()> {
    let style = TextStyle::from((CHART_FONT, 14).into_font().style(FontStyle::Bold))
        .color(&BLACK)
        .pos(Pos::new(HPos::Left, VPos::Bottom));
    chart
        .draw_series(std::iter::once(Text::new(
            text,
            (p.0 + off, p.1 + off),
            style,
        )))
        .map_err(e)?;
    Ok(())
}

/// The site's transmitters of the layer's service on its floor: black triangles.
fn draw_transmitters(
    chart: &mut MapChart<'_, '_>,
    site: &Site,
    layer: &CoverageLayer,
    off: f64,
) -> DrawResult<()> {
    let u = site.units;
    for t in site
        .transmitters
        .iter()
        .filter(|t| t.service == layer.service && t.floor == layer.floor)
    {
        let p = (u.from_m(t.position.x), u.from_m(t.position.y));
        chart
            .draw_series(std::iter::once(TriangleMarker::new(p, 9, WHITE.filled())))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(TriangleMarker::new(p, 7, BLACK.filled())))
            .map_err(e)?;
        antenna_label(chart, t.id.clone(), p, off)?;
    }
    Ok(())
}

/// The layers of an added antenna's marker, outermost first: half side in pixels and
/// colour (white halo, black square, white centre).
const NEW_MARKER: [(i32, RGBColor); 3] = [(9, WHITE), (7, BLACK), (4, WHITE)];

/// The antennas an option adds: squares labelled "<id> (new)".
fn draw_added(chart: &mut MapChart<'_, '_>, added: &[AddedAntenna], off: f64) -> DrawResult<()> {
    for a in added {
        let p = (a.x, a.y);
        for (h, c) in NEW_MARKER {
            let sq = Rectangle::new([(-h, -h), (h, h)], c.filled());
            chart
                .draw_series(std::iter::once(EmptyElement::at(p) + sq))
                .map_err(e)?;
        }
        antenna_label(chart, format!("{} (new)", a.id), p, off)?;
    }
    Ok(())
}

/// Draws a line or scatter figure.
pub fn figure(f: &Figure) -> DrawResult<String> {
    let pts = f.series.iter().flat_map(|s| s.points.iter());
    let (mut x0, mut x1, mut y0, mut y1) = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for p in pts {
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
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (900, 420)).into_drawing_area();
        root.fill(&WHITE).map_err(e)?;
        let mut chart = ChartBuilder::on(&root)
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(56)
            .build_cartesian_2d(x0..x1, (y0 - ypad)..(y1 + ypad))
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
        let palette = [
            RGBColor(30, 70, 120),
            RGBColor(196, 110, 40),
            RGBColor(60, 60, 60),
            RGBColor(176, 40, 125),
        ];
        for (i, s) in f.series.iter().enumerate() {
            let col = palette[i % palette.len()];
            let data: Vec<(f64, f64)> = s.points.iter().map(|p| (p[0], p[1])).collect();
            let anno = if f.kind == "scatter" {
                chart
                    .draw_series(data.iter().map(|p| Circle::new(*p, 3, col.filled())))
                    .map_err(e)?
            } else {
                chart
                    .draw_series(LineSeries::new(data, col.stroke_width(2)))
                    .map_err(e)?
            };
            anno.label(s.name.clone()).legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 18, y)], col.stroke_width(3))
            });
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.9))
            .border_style(BLACK)
            .label_font((CHART_FONT, 14))
            .position(SeriesLabelPosition::LowerRight)
            .draw()
            .map_err(e)?;
        root.present().map_err(e)?;
    }
    Ok(svg)
}

/// Pixel size and MIME type of a PNG or JPEG.
pub fn image_size(b: &[u8]) -> Option<(u32, u32, &'static str)> {
    if b.len() > 24 && b.starts_with(&[0x89, b'P', b'N', b'G']) {
        let w = u32::from_be_bytes([b[16], b[17], b[18], b[19]]);
        let h = u32::from_be_bytes([b[20], b[21], b[22], b[23]]);
        return Some((w, h, "image/png"));
    }
    if b.len() > 4 && b[0] == 0xFF && b[1] == 0xD8 {
        let mut i = 2;
        while i + 9 < b.len() {
            if b[i] != 0xFF {
                return None;
            }
            let marker = b[i + 1];
            let len = u16::from_be_bytes([b[i + 2], b[i + 3]]) as usize;
            if (0xC0..=0xCF).contains(&marker) && marker != 0xC4 && marker != 0xC8 && marker != 0xCC
            {
                let h = u16::from_be_bytes([b[i + 5], b[i + 6]]) as u32;
                let w = u16::from_be_bytes([b[i + 7], b[i + 8]]) as u32;
                return Some((w, h, "image/jpeg"));
            }
            i += 2 + len;
        }
    }
    None
}

/// Standard base64 (RFC 4648) with padding.
pub fn base64(data: &[u8]) -> String {
    const T: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(data.len().div_ceil(3) * 4);
    for c in data.chunks(3) {
        let n = (c[0] as u32) << 16
            | (*c.get(1).unwrap_or(&0) as u32) << 8
            | *c.get(2).unwrap_or(&0) as u32;
        out.push(T[(n >> 18) as usize & 63] as char);
        out.push(T[(n >> 12) as usize & 63] as char);
        out.push(if c.len() > 1 {
            T[(n >> 6) as usize & 63] as char
        } else {
            '='
        });
        out.push(if c.len() > 2 {
            T[n as usize & 63] as char
        } else {
            '='
        });
    }
    out
}

#[cfg(test)]
mod tests {
    #[test]
    fn base64_matches_rfc4648_vectors() {
        // RFC 4648 section 10 test vectors.
        for (i, o) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(super::base64(i.as_bytes()), o);
        }
    }
}
