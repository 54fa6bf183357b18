//! Charts as SVG (plotters): coverage maps and data figures. Pure drawing: the values come
//! from the assessment; nothing here computes physics.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use rfsite_geometry::{Point2, Segment};
use rfsite_model::{MaterialClass, PartKind, Site, Units, ZoneKind};
use rfsite_plugin::{CoverageLayer, Figure, Measurement};
use std::fmt::Write as _;

use crate::labels::{beside, text_size, Placer, PxBox};

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

/// The rfsite map scale: dark warm browns below the required level, darker the worse;
/// pale blues at and above it, paler the stronger. Lightness rises bin by bin and jumps at
/// the required level (a contrast ratio near 4:1 there, against 1.2–1.5:1 between the other
/// neighbours; `tests::legend_steps_at_the_required_level`), so pass and fail read apart in
/// greyscale and for red-green colour-blind readers; a black contour marks it too.
pub const BINS: &[Bin] = &[
    Bin {
        from_db: f64::NEG_INFINITY,
        rgb: (32, 18, 14),
    },
    Bin {
        from_db: -20.0,
        rgb: (76, 32, 20),
    },
    Bin {
        from_db: -10.0,
        rgb: (116, 50, 26),
    },
    Bin {
        from_db: -5.0,
        rgb: (150, 68, 30),
    },
    Bin {
        from_db: 0.0,
        rgb: (162, 206, 234),
    },
    Bin {
        from_db: 5.0,
        rgb: (188, 220, 240),
    },
    Bin {
        from_db: 10.0,
        rgb: (214, 234, 246),
    },
    Bin {
        from_db: 20.0,
        rgb: (240, 248, 252),
    },
];

/// Index of the first bin at or above the required level.
pub const REQUIRED_BIN: usize = 4;

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

/// How a wall class is drawn: colour, width in pixels and dash (dash, gap in pixels;
/// `None` solid). Width and dash differ between every two classes, so walls read apart
/// without colour too.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WallStyle {
    /// Line colour.
    pub rgb: RGBColor,
    /// Line width, pixels.
    pub width: u32,
    /// Dash and gap, pixels; `None` for a solid line.
    pub dash: Option<(u32, u32)>,
}

const fn ws(rgb: RGBColor, width: u32, dash: Option<(u32, u32)>) -> WallStyle {
    WallStyle { rgb, width, dash }
}

/// The style of a wall class (or of a door) on the map.
pub fn wall_style(class: MaterialClass, kind: PartKind) -> WallStyle {
    if kind == PartKind::Door {
        return ws(RGBColor(150, 90, 30), 5, Some((2, 2)));
    }
    match class {
        MaterialClass::Metal => ws(RGBColor(0, 0, 0), 8, None),
        MaterialClass::Concrete => ws(RGBColor(70, 70, 70), 6, None),
        MaterialClass::Masonry => ws(RGBColor(120, 90, 60), 5, Some((12, 4))),
        MaterialClass::CoatedGlass => ws(RGBColor(176, 40, 125), 6, Some((3, 3))),
        MaterialClass::Glass => ws(RGBColor(60, 170, 200), 4, Some((3, 3))),
        MaterialClass::Wood => ws(RGBColor(150, 90, 30), 4, Some((10, 4))),
        MaterialClass::Light => ws(RGBColor(140, 140, 150), 3, None),
        _ => ws(RGBColor(110, 110, 110), 3, Some((6, 3))),
    }
}

/// Draws `pts` in a wall style on the chart, over a white halo when `halo`.
fn styled_wall(
    chart: &mut MapChart<'_, '_>,
    pts: Vec<(f64, f64)>,
    st: WallStyle,
) -> DrawResult<()> {
    chart
        .draw_series(std::iter::once(PathElement::new(
            pts.clone(),
            WHITE.stroke_width(st.width + 2),
        )))
        .map_err(e)?;
    match st.dash {
        None => chart
            .draw_series(std::iter::once(PathElement::new(
                pts,
                st.rgb.stroke_width(st.width),
            )))
            .map(|_| ())
            .map_err(e),
        Some((d, g)) => chart
            .draw_series(DashedLineSeries::new(
                pts,
                d,
                g,
                st.rgb.stroke_width(st.width),
            ))
            .map(|_| ())
            .map_err(e),
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
    backdrop: crate::Backdrop<'_>,
    added: &[AddedAntenna],
) -> DrawResult<String> {
    let plan = backdrop.image;
    let floor = site.floor(&layer.floor).ok_or("floor not found")?;
    let u = site.units;
    let (min, max) = rfsite_geometry::polygon_bbox(&floor.outline);
    let pad = (max.x - min.x).max(max.y - min.y) * 0.03;
    let (x0, x1) = (u.from_m(min.x - pad), u.from_m(max.x + pad));
    let (y0, y1) = (u.from_m(min.y - pad), u.from_m(max.y + pad));
    let plot_w = 880.0;
    let plot_h = (plot_w * (y1 - y0) / (x1 - x0)).clamp(200.0, 900.0);
    let legend_w = 190u32;
    let map_h = plot_h as u32 + 70;
    let (w, h) = (
        plot_w as u32 + 70 + legend_w,
        map_h.max(legend_height(
            site,
            floor,
            !added.is_empty(),
            !measured.is_empty(),
            !backdrop.linework.is_empty(),
        )),
    );
    let mut svg = String::new();
    let plan_svg: Option<String>;
    let mut linework_svg: Option<String> = None;
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(e)?;
        let (left, right) = root.split_horizontally(w - legend_w);
        let (left, _) = left.split_vertically(map_h);
        let unit = u.label();
        let mut chart = plan_chart(&left, x0..x1, y0..y1, u.label())?;
        // Background plan image: its pixel rectangle on the chart.
        plan_svg = plan.and_then(|bytes| plan_image_svg(&chart, floor, u, bytes));
        draw_cells(&mut chart, layer, threshold_dbm, plan.is_some(), u)?;
        if !backdrop.linework.is_empty() {
            linework_svg = Some(linework_path(&chart, u, backdrop.linework));
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(x0, y0), (x0, y0)],
                    LINEWORK_MARK.filled(),
                )))
                .map_err(e)?;
        }
        draw_required_contour(&mut chart, layer, threshold_dbm, u)?;
        draw_outline_and_walls(&mut chart, site, floor)?;
        draw_zone_outlines(&mut chart, site, floor)?;
        let mut placer = Placer::new(plot_bounds(&chart));
        let groups = survey_groups(&chart, u, measured, measured_required_dbm);
        draw_survey_markers(&left, &groups, &mut placer)?;
        let antennas = antenna_marks(&chart, site, layer, added);
        draw_antenna_markers(&left, &antennas, &mut placer)?;
        draw_antenna_labels(&left, &antennas, &mut placer)?;
        draw_survey_counts(&left, &groups, &mut placer)?;
        draw_zone_labels(&left, &chart, site, floor, &mut placer)?;
        let px_per_unit = {
            let a = chart.backend_coord(&(x0, y0));
            let b = chart.backend_coord(&(x1, y0));
            (b.0 - a.0) as f64 / (x1 - x0)
        };
        // Legend.
        let y = draw_level_legend(&right, threshold_dbm)?;
        let y = draw_wall_legend(&right, site, floor, !backdrop.linework.is_empty(), y)?;
        let y = draw_marker_legend(&right, !added.is_empty(), &groups, y)?;
        draw_scale_and_north(&right, y + 52, px_per_unit, x1 - x0, unit, site.north_deg)?;
        root.present().map_err(e)?;
    }
    if let Some(lines) = linework_svg {
        splice_at_mark(&mut svg, &lines);
    }
    if let Some(img) = plan_svg {
        insert_under_everything(&mut svg, &img);
    }
    Ok(svg)
}

/// The floor's plan image as an SVG `<image>` over its pixel rectangle on the chart.
fn plan_image_svg(
    chart: &MapChart<'_, '_>,
    floor: &rfsite_model::Floor,
    u: rfsite_model::Units,
    bytes: &[u8],
) -> Option<String> {
    let (wpx, hpx, mime) = image_size(bytes)?;
    let s = floor.plan_m_per_px;
    let (ox, oy) = (floor.plan_offset.x, floor.plan_offset.y);
    let tl = chart.backend_coord(&(u.from_m(ox), u.from_m(oy + hpx as f64 * s)));
    let br = chart.backend_coord(&(u.from_m(ox + wpx as f64 * s), u.from_m(oy)));
    Some(format!(
        "<image x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" preserveAspectRatio=\"none\" href=\"data:{mime};base64,{}\"/>",
        tl.0, tl.1, br.0 - tl.0, br.1 - tl.1, base64(bytes)
    ))
}

/// The grid's cells in their bins' colours (faded over a plan image), run-length merged
/// along rows.
fn draw_cells(
    chart: &mut MapChart<'_, '_>,
    layer: &CoverageLayer,
    threshold_dbm: f64,
    faded: bool,
    u: rfsite_model::Units,
) -> DrawResult<()> {
    let g = layer.grid.to_grid();
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
                if faded {
                    rgb(BINS[b].rgb).mix(0.6).filled()
                } else {
                    rgb(BINS[b].rgb).filled()
                },
            ));
        }
    }
    chart.draw_series(rects).map_err(e)?;
    Ok(())
}

/// The required-level contour: cell edges where one side meets `threshold_dbm` and the
/// other not.
fn draw_required_contour(
    chart: &mut MapChart<'_, '_>,
    layer: &CoverageLayer,
    threshold_dbm: f64,
    u: rfsite_model::Units,
) -> DrawResult<()> {
    let g = layer.grid.to_grid();
    let step = u.from_m(g.step_m);
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
    Ok(())
}

/// The floor outline and every wall part in its class's style.
fn draw_outline_and_walls(
    chart: &mut MapChart<'_, '_>,
    site: &Site,
    floor: &rfsite_model::Floor,
) -> DrawResult<()> {
    let u = site.units;
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
        let seg = vec![
            (u.from_m(part.segment.a.x), u.from_m(part.segment.a.y)),
            (u.from_m(part.segment.b.x), u.from_m(part.segment.b.y)),
        ];
        styled_wall(chart, seg, wall_style(class, part.kind))?;
    }
    Ok(())
}

/// The level bins (strongest first) with the required level marked; returns the next y.
fn draw_level_legend(right: &Area<'_>, threshold_dbm: f64) -> DrawResult<i32> {
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
        if i == REQUIRED_BIN {
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
    Ok(y)
}

/// The wall classes drawn on the floor (and the DXF linework); returns the next y.
fn draw_wall_legend(
    right: &Area<'_>,
    site: &Site,
    floor: &rfsite_model::Floor,
    linework: bool,
    mut y: i32,
) -> DrawResult<i32> {
    let font = (CHART_FONT, 14).into_font();
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
        legend_wall(right, y + 8, wall_style(c, k))?;
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
    if linework {
        right
            .draw(&PathElement::new(
                vec![(8, y + 8), (34, y + 8)],
                RGBColor(0x8c, 0x8c, 0x8c).stroke_width(1),
            ))
            .map_err(e)?;
        right
            .draw(&Text::new("plan drawing (DXF)", (40, y), font.clone()))
            .map_err(e)?;
        y += 20;
    }
    Ok(y)
}

/// Antennas, new antennas, critical zones and survey markers; returns the last row's y.
fn draw_marker_legend(
    right: &Area<'_>,
    added: bool,
    groups: &[SurveyGroup],
    mut y: i32,
) -> DrawResult<i32> {
    let font = (CHART_FONT, 14).into_font();
    y += 8;
    right
        .draw(&TriangleMarker::new((20, y + 8), 7, BLACK.filled()))
        .map_err(e)?;
    right
        .draw(&Text::new("antenna", (40, y), font.clone()))
        .map_err(e)?;
    y += 20;
    if added {
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
    if !groups.is_empty() {
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
        let usual = usual_count(groups);
        if usual > 1 || groups.iter().any(|g| g.count != usual) {
            y += 20;
            let text = match usual {
                1 => "×n: n points at one place".to_string(),
                n => format!("{n} points a marker, ×n: n"),
            };
            right
                .draw(&Text::new(text, (8, y), font.clone()))
                .map_err(e)?;
        }
    }
    Ok(y)
}

/// Puts `img` right after the SVG's white background, under everything else.
fn insert_under_everything(svg: &mut String, img: &str) {
    if let Some(r) = svg.find("<rect") {
        if let Some(end) = svg[r..].find("/>") {
            svg.insert_str(r + end + 2, img);
        }
    }
}

/// The colour of the placeholder rectangle drawn where the linework goes (replaced after
/// drawing; plotters has no raw-SVG element). No bin or wall colour uses it.
const LINEWORK_MARK: RGBColor = RGBColor(1, 2, 3);

/// Replaces the placeholder rectangle of [`LINEWORK_MARK`] with `insert`.
fn splice_at_mark(svg: &mut String, insert: &str) {
    let Some(fill) = svg.find("fill=\"#010203\"") else {
        return;
    };
    let (Some(start), Some(len)) = (svg[..fill].rfind("<rect"), svg[fill..].find("/>")) else {
        return;
    };
    svg.replace_range(start..fill + len + 2, insert);
}

/// The drawing's linework as one thin grey SVG path clipped to the plot area, in the
/// chart's pixels; segments that round to the same pixels are drawn once.
fn linework_path(chart: &MapChart<'_, '_>, u: Units, lines: &[Segment]) -> String {
    let px = |p: Point2| chart.backend_coord(&(u.from_m(p.x), u.from_m(p.y)));
    let mut seen = std::collections::HashSet::new();
    let mut d = String::new();
    let mut last = None;
    for s in lines {
        let (a, b) = (px(s.a), px(s.b));
        let key = if a <= b { (a, b) } else { (b, a) };
        if a == b || !seen.insert(key) {
            continue;
        }
        if last != Some(a) {
            let _ = write!(d, "M{} {}", a.0, a.1);
        }
        let _ = write!(d, "L{} {}", b.0, b.1);
        last = Some(b);
    }
    let PxBox {
        x0: l,
        y0: t,
        x1: r,
        y1: bt,
    } = plot_bounds(chart);
    format!(
        "<clipPath id=\"plan-clip\"><rect x=\"{l}\" y=\"{t}\" width=\"{}\" height=\"{}\"/></clipPath><path clip-path=\"url(#plan-clip)\" fill=\"none\" stroke=\"#8c8c8c\" stroke-width=\"0.6\" d=\"{d}\"/>",
        r - l,
        bt - t
    )
}

/// Height in pixels the legend column needs: bins, wall classes, markers, scale and north.
fn legend_height(
    site: &Site,
    floor: &rfsite_model::Floor,
    added: bool,
    measured: bool,
    linework: bool,
) -> u32 {
    let classes: std::collections::BTreeSet<(u8, MaterialClass)> = floor
        .parts
        .iter()
        .map(|p| {
            let c = site.materials.get(&p.material).map(|m| m.class);
            (p.kind as u8, c.unwrap_or(MaterialClass::Other))
        })
        .collect();
    let bins = 34 + 22 * BINS.len() as u32 + 18;
    let walls = 28 + 20 * (classes.len() as u32 + u32::from(linework));
    let marks = 8 + 40 + 20 * u32::from(added) + 60 * u32::from(measured);
    bins + walls + marks + 110
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

/// The pixel area of a map's drawing (its whole left part).
type Area<'b> = DrawingArea<SVGBackend<'b>, plotters::coord::Shift>;

/// The plotting area of a chart, in pixels.
fn plot_bounds(chart: &MapChart<'_, '_>) -> PxBox {
    let (xr, yr) = chart.plotting_area().get_pixel_range();
    PxBox {
        x0: xr.start as f64,
        y0: yr.start as f64,
        x1: xr.end as f64,
        y1: yr.end as f64,
    }
}

/// A zone's polygon in site units, closed.
fn zone_points(site: &Site, z: &rfsite_model::Zone) -> Vec<(f64, f64)> {
    let u = site.units;
    let mut pts: Vec<(f64, f64)> = z
        .polygon
        .iter()
        .map(|p| (u.from_m(p.x), u.from_m(p.y)))
        .collect();
    if let Some(f) = pts.first().copied() {
        pts.push(f);
    }
    pts
}

/// Zone outlines: dashed, thick black for critical zones, over a white halo.
fn draw_zone_outlines(
    chart: &mut MapChart<'_, '_>,
    site: &Site,
    floor: &rfsite_model::Floor,
) -> DrawResult<()> {
    for z in &floor.zones {
        let pts = zone_points(site, z);
        let (col, wdt) = match z.kind {
            ZoneKind::Critical => (RGBColor(0, 0, 0), 3),
            ZoneKind::Excluded | ZoneKind::General => (RGBColor(90, 90, 90), 1),
        };
        chart
            .draw_series(std::iter::once(PathElement::new(
                pts.clone(),
                WHITE.stroke_width(wdt + 3),
            )))
            .map_err(e)?;
        chart
            .draw_series(DashedLineSeries::new(pts, 9, 5, col.stroke_width(wdt)))
            .map_err(e)?;
    }
    Ok(())
}

/// Survey points at one place on the map (within a marker's size): one marker, a count.
#[derive(Debug, Clone, PartialEq)]
struct SurveyGroup {
    /// Pixel position of the first point.
    px: (i32, i32),
    /// Points in the group.
    count: usize,
    /// Points below the measured required level.
    below: usize,
}

/// Half size in pixels of a survey marker; points closer than twice this share one marker.
const SURVEY_R: i32 = 5;

/// Groups the survey points by place, in input order.
fn survey_groups(
    chart: &MapChart<'_, '_>,
    u: rfsite_model::Units,
    measured: &[&Measurement],
    required_dbm: f64,
) -> Vec<SurveyGroup> {
    let mut out: Vec<SurveyGroup> = Vec::new();
    for m in measured {
        let px = chart.backend_coord(&(u.from_m(m.x_m), u.from_m(m.y_m)));
        let below = usize::from(m.level_dbm < required_dbm);
        let near = |g: &SurveyGroup| {
            (g.px.0 - px.0).abs() < 2 * SURVEY_R && (g.px.1 - px.1).abs() < 2 * SURVEY_R
        };
        match out.iter_mut().find(|g| near(g)) {
            Some(g) => {
                g.count += 1;
                g.below += below;
            }
            None => out.push(SurveyGroup {
                px,
                count: 1,
                below,
            }),
        }
    }
    out
}

/// Survey markers: a circle where every point of the place meets the measured required
/// level, a cross where any is below.
fn draw_survey_markers(
    area: &Area<'_>,
    groups: &[SurveyGroup],
    placer: &mut Placer,
) -> DrawResult<()> {
    for g in groups {
        let p = g.px;
        if g.below == 0 {
            area.draw(&Circle::new(p, 4, WHITE.filled())).map_err(e)?;
            area.draw(&Circle::new(p, 4, BLACK.stroke_width(1)))
                .map_err(e)?;
        } else {
            area.draw(&Cross::new(p, 5, WHITE.stroke_width(4)))
                .map_err(e)?;
            area.draw(&Cross::new(p, 5, BLACK.stroke_width(2)))
                .map_err(e)?;
        }
        placer.block(PxBox::around(
            (p.0 as f64, p.1 as f64),
            SURVEY_R as f64 + 1.0,
        ));
    }
    Ok(())
}

/// The most common number of survey points at one place (the smaller on a tie): a marker
/// without a count stands for this many.
fn usual_count(groups: &[SurveyGroup]) -> usize {
    let mut n: std::collections::BTreeMap<usize, usize> = std::collections::BTreeMap::new();
    for g in groups {
        *n.entry(g.count).or_default() += 1;
    }
    n.iter()
        .max_by(|a, b| a.1.cmp(b.1).then(b.0.cmp(a.0)))
        .map_or(1, |(c, _)| *c)
}

/// "×n" beside each place whose number of survey points differs from the usual one.
fn draw_survey_counts(
    area: &Area<'_>,
    groups: &[SurveyGroup],
    placer: &mut Placer,
) -> DrawResult<()> {
    let usual = usual_count(groups);
    for g in groups.iter().filter(|g| g.count != usual) {
        let text = format!("×{}", g.count);
        let size = text_size(&text, 12.0);
        let p = (g.px.0 as f64, g.px.1 as f64);
        if let Some(b) = placer.place(size, beside(p, SURVEY_R as f64, size), None) {
            draw_label(area, &text, b, 12.0, false)?;
        }
    }
    Ok(())
}

/// An antenna on the map: the site's (triangle) or an option's new one (square).
#[derive(Debug, Clone, PartialEq)]
struct AntennaMark {
    /// Label text.
    label: String,
    /// Pixel position.
    px: (i32, i32),
    /// Whether an option adds it.
    new: bool,
}

/// Half size in pixels of an antenna marker.
const ANTENNA_R: f64 = 9.0;

/// The layer's transmitters on its floor, then the antennas an option adds.
fn antenna_marks(
    chart: &MapChart<'_, '_>,
    site: &Site,
    layer: &CoverageLayer,
    added: &[AddedAntenna],
) -> Vec<AntennaMark> {
    let u = site.units;
    let own = site
        .transmitters
        .iter()
        .filter(|t| t.service == layer.service && t.floor == layer.floor)
        .map(|t| AntennaMark {
            label: t.id.clone(),
            px: chart.backend_coord(&(u.from_m(t.position.x), u.from_m(t.position.y))),
            new: false,
        });
    let new = added.iter().map(|a| AntennaMark {
        label: format!("{} (new)", a.id),
        px: chart.backend_coord(&(a.x, a.y)),
        new: true,
    });
    own.chain(new).collect()
}

/// Antenna markers: black triangles, or the white-centred squares of new antennas.
fn draw_antenna_markers(
    area: &Area<'_>,
    marks: &[AntennaMark],
    placer: &mut Placer,
) -> DrawResult<()> {
    for m in marks {
        let p = m.px;
        if m.new {
            for (h, c) in NEW_MARKER {
                area.draw(&Rectangle::new(
                    [(p.0 - h, p.1 - h), (p.0 + h, p.1 + h)],
                    c.filled(),
                ))
                .map_err(e)?;
            }
        } else {
            area.draw(&TriangleMarker::new(p, 9, WHITE.filled()))
                .map_err(e)?;
            area.draw(&TriangleMarker::new(p, 7, BLACK.filled()))
                .map_err(e)?;
        }
        placer.block(PxBox::around((p.0 as f64, p.1 as f64), ANTENNA_R));
    }
    Ok(())
}

/// Antenna labels in bold beside their markers, at the first free side; with a leader line
/// from a free place nearby when every side is taken.
fn draw_antenna_labels(
    area: &Area<'_>,
    marks: &[AntennaMark],
    placer: &mut Placer,
) -> DrawResult<()> {
    for m in marks {
        let size = text_size(&m.label, 14.0);
        let p = (m.px.0 as f64, m.px.1 as f64);
        if let Some(b) = placer.place(size, beside(p, ANTENNA_R, size), None) {
            draw_label(area, &m.label, b, 14.0, true)?;
        } else if let Some(b) = placer.place(size, placer.grid_near(size, p, 6.0), None) {
            leader(area, p, b)?;
            draw_label(area, &m.label, b, 14.0, true)?;
        }
    }
    Ok(())
}

/// Label of a zone: its name, "(critical)" added for a critical zone.
fn zone_label(z: &rfsite_model::Zone) -> (String, String) {
    let name = if z.name.is_empty() {
        z.id.clone()
    } else {
        z.name.clone()
    };
    match z.kind {
        ZoneKind::Critical => (format!("{name} (critical)"), name),
        _ => (name.clone(), name),
    }
}

/// Zone labels: inside the zone's box near its centre when one fits (the long form, then
/// the name alone), else at the nearest free place with a leader line to the zone.
fn draw_zone_labels(
    area: &Area<'_>,
    chart: &MapChart<'_, '_>,
    site: &Site,
    floor: &rfsite_model::Floor,
    placer: &mut Placer,
) -> DrawResult<()> {
    for z in &floor.zones {
        let pts = zone_points(site, z);
        let px: Vec<(f64, f64)> = pts
            .iter()
            .map(|p| {
                let b = chart.backend_coord(p);
                (b.0 as f64, b.1 as f64)
            })
            .collect();
        let Some(zb) = bbox(&px[..px.len().saturating_sub(1)]) else {
            continue;
        };
        let inner = PxBox {
            x0: zb.x0 + 3.0,
            y0: zb.y0 + 3.0,
            x1: zb.x1 - 3.0,
            y1: zb.y1 - 3.0,
        };
        let c = zb.centre();
        let (long, short) = zone_label(z);
        let mut done = false;
        for text in [&long, &short] {
            let size = text_size(text, 13.0);
            if let Some(b) = placer.place(size, placer.grid_near(size, c, 4.0), Some(&inner)) {
                draw_label(area, text, b, 13.0, false)?;
                done = true;
                break;
            }
        }
        if !done {
            let size = text_size(&short, 13.0);
            if let Some(b) = placer.place(size, placer.grid_near(size, c, 6.0), None) {
                leader(area, c, b)?;
                draw_label(area, &short, b, 13.0, false)?;
            }
        }
    }
    Ok(())
}

/// Bounding box of pixel points.
fn bbox(pts: &[(f64, f64)]) -> Option<PxBox> {
    let first = pts.first()?;
    let mut b = PxBox::around(*first, 0.0);
    for p in pts {
        b.x0 = b.x0.min(p.0);
        b.y0 = b.y0.min(p.1);
        b.x1 = b.x1.max(p.0);
        b.y1 = b.y1.max(p.1);
    }
    Some(b)
}

/// The chart font at `size`, bold or regular.
pub(crate) fn label_font(size: f64, bold: bool) -> FontDesc<'static> {
    let font = (CHART_FONT, size).into_font();
    if bold {
        font.style(FontStyle::Bold)
    } else {
        font
    }
}

/// Text with its top left at the box's, on a white ground so lines under it do not cut it.
fn draw_label(area: &Area<'_>, text: &str, b: PxBox, size: f64, bold: bool) -> DrawResult<()> {
    let style = TextStyle::from(label_font(size, bold))
        .color(&BLACK)
        .pos(Pos::new(HPos::Left, VPos::Top));
    let (x0, y0) = (b.x0.round() as i32, b.y0.round() as i32);
    let (x1, y1) = (b.x1.round() as i32, b.y1.round() as i32);
    area.draw(&Rectangle::new(
        [(x0 - 1, y0), (x1 + 1, y1)],
        WHITE.mix(0.8).filled(),
    ))
    .map_err(e)?;
    area.draw(&Text::new(text.to_string(), (x0, y0), style))
        .map_err(e)
}

/// A thin leader line from `p` to the nearest point of the label box.
fn leader(area: &Area<'_>, p: (f64, f64), b: PxBox) -> DrawResult<()> {
    let q = (p.0.clamp(b.x0, b.x1), p.1.clamp(b.y0, b.y1));
    area.draw(&PathElement::new(
        vec![(p.0 as i32, p.1 as i32), (q.0 as i32, q.1 as i32)],
        RGBColor(60, 60, 60).stroke_width(1),
    ))
    .map_err(e)
}

/// A wall style's sample line in the legend at height `y`.
fn legend_wall(area: &Area<'_>, y: i32, st: WallStyle) -> DrawResult<()> {
    let pts = vec![(8, y), (34, y)];
    match st.dash {
        None => area
            .draw(&PathElement::new(pts, st.rgb.stroke_width(st.width)))
            .map_err(e),
        Some((d, g)) => area
            .draw(&plotters::element::DashedPathElement::new(
                pts,
                d,
                g,
                st.rgb.stroke_width(st.width),
            ))
            .map_err(e),
    }
}

/// The scale bar (a round length of at most 120 px) and the north arrow, in the legend
/// column below its entries, so that neither covers the plan.
fn draw_scale_and_north(
    area: &Area<'_>,
    y: i32,
    px_per_unit: f64,
    span: f64,
    unit: &str,
    north_deg: Option<f64>,
) -> DrawResult<()> {
    let nice = [1.0, 2.0, 5.0, 10.0, 20.0, 25.0, 50.0, 100.0, 200.0, 500.0];
    let bar = nice
        .iter()
        .copied()
        .filter(|n| *n * px_per_unit <= 120.0 && *n <= span)
        .fold(1.0, f64::max);
    let len = (bar * px_per_unit).round() as i32;
    area.draw(&Rectangle::new(
        [(8, y + 16), (8 + len, y + 22)],
        BLACK.filled(),
    ))
    .map_err(e)?;
    let font = (CHART_FONT, 14).into_font();
    area.draw(&Text::new(format!("{bar} {unit}"), (8, y), font))
        .map_err(e)?;
    let Some(n) = north_deg else { return Ok(()) };
    let (cx, cy, r) = (160.0, y as f64 + 10.0, 14.0);
    // Plan y grows upwards, pixels downwards: the arrow's pixel direction flips y.
    let a = n.to_radians();
    let tip = ((cx + r * a.cos()) as i32, (cy - r * a.sin()) as i32);
    let tail = ((cx - r * a.cos()) as i32, (cy + r * a.sin()) as i32);
    area.draw(&PathElement::new(vec![tail, tip], BLACK.stroke_width(3)))
        .map_err(e)?;
    area.draw(&Circle::new(tip, 4, BLACK.filled())).map_err(e)?;
    let style = TextStyle::from((CHART_FONT, 15).into_font().style(FontStyle::Bold))
        .color(&BLACK)
        .pos(Pos::new(HPos::Center, VPos::Center));
    let lab = (
        (cx + 2.0 * r * a.cos()) as i32,
        (cy - 2.0 * r * a.sin()) as i32,
    );
    area.draw(&Text::new("N", lab, style)).map_err(e)
}

/// The layers of an added antenna's marker, outermost first: half side in pixels and
/// colour (white halo, black square, white centre).
const NEW_MARKER: [(i32, RGBColor); 3] = [(9, WHITE), (7, BLACK), (4, WHITE)];

/// Draws a line or scatter figure ([`crate::line_figure`]).
pub fn figure(f: &Figure) -> DrawResult<String> {
    crate::line_figure::figure(f)
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
    use super::*;

    /// Relative luminance of an sRGB colour: the sRGB transfer function (IEC 61966-2-1)
    /// and the Rec. 709 weights, as WCAG 2.1 defines "relative luminance".
    fn luminance(c: (u8, u8, u8)) -> f64 {
        let lin = |v: u8| {
            let v = v as f64 / 255.0;
            if v <= 0.04045 {
                v / 12.92
            } else {
                ((v + 0.055) / 1.055).powf(2.4)
            }
        };
        0.2126 * lin(c.0) + 0.7152 * lin(c.1) + 0.0722 * lin(c.2)
    }

    /// Grey level of a colour printed or rendered in greyscale: the Rec. 601 luma weights
    /// (0.299, 0.587, 0.114), which greyscale conversion commonly uses (common practice).
    fn luma(c: (u8, u8, u8)) -> f64 {
        (0.299 * c.0 as f64 + 0.587 * c.1 as f64 + 0.114 * c.2 as f64) / 255.0
    }

    /// WCAG 2.1 contrast ratio of two relative luminances.
    fn contrast(a: f64, b: f64) -> f64 {
        (a.max(b) + 0.05) / (a.min(b) + 0.05)
    }

    #[test]
    fn legend_steps_at_the_required_level() {
        let lum: Vec<f64> = BINS.iter().map(|b| luminance(b.rgb)).collect();
        let grey: Vec<f64> = BINS.iter().map(|b| luma(b.rgb)).collect();
        assert_eq!(BINS[REQUIRED_BIN].from_db, 0.0);
        // Lightness alone orders the scale: every bin lighter than the one below it.
        for i in 1..BINS.len() {
            assert!(lum[i] > lum[i - 1], "bin {i} not lighter: {lum:?}");
            assert!(
                grey[i] > grey[i - 1],
                "bin {i} not lighter in grey: {grey:?}"
            );
        }
        // The bins either side of the required level: at least 3:1, the WCAG 2.1 minimum
        // contrast for graphical objects (success criterion 1.4.11, non-text contrast).
        let (fail, pass) = (lum[REQUIRED_BIN - 1], lum[REQUIRED_BIN]);
        assert!(contrast(fail, pass) >= 3.0, "{fail} vs {pass}");
        // And the step there is the one that stands out: at least twice any other
        // neighbour step, in contrast ratio and in grey level.
        let step = |v: &[f64], i: usize| v[i] - v[i - 1];
        for i in (1..BINS.len()).filter(|i| *i != REQUIRED_BIN) {
            let c = contrast(lum[i], lum[i - 1]);
            assert!(contrast(fail, pass) >= 2.0 * c, "step {i}: {c}");
            assert!(
                step(&grey, REQUIRED_BIN) >= 2.0 * step(&grey, i),
                "grey step {i}"
            );
        }
    }

    #[test]
    fn wall_classes_differ_in_width_or_dash() {
        // Greyscale loses the colour: every two classes (and doors) must still differ in
        // line width or dash.
        use MaterialClass::*;
        let mut seen: Vec<(u32, Option<(u32, u32)>)> = Vec::new();
        let walls = [
            Metal,
            Concrete,
            Masonry,
            CoatedGlass,
            Glass,
            Wood,
            Light,
            Other,
        ];
        let styles = walls
            .iter()
            .map(|c| wall_style(*c, PartKind::Wall))
            .chain([wall_style(Wood, PartKind::Door)]);
        for st in styles {
            let key = (st.width, st.dash);
            assert!(!seen.contains(&key), "{key:?} used twice");
            seen.push(key);
        }
    }

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
