//! The demo's coverage and grading maps read without overlaps: from each map's SVG
//! geometry, no two text boxes overlap and no text box covers a survey or antenna marker.

use crate::cli::util::demo_report;

/// An axis-aligned box in SVG pixels.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Bx {
    pub(crate) x0: f64,
    pub(crate) y0: f64,
    pub(crate) x1: f64,
    pub(crate) y1: f64,
}

impl Bx {
    fn overlaps(&self, o: &Bx) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
}

/// The value of attribute `name` in one SVG tag.
fn attr<'a>(tag: &'a str, name: &str) -> Option<&'a str> {
    let key = format!(" {name}=\"");
    let i = tag.find(&key)? + key.len();
    let j = tag[i..].find('"')? + i;
    Some(&tag[i..j])
}

fn num(tag: &str, name: &str) -> Option<f64> {
    attr(tag, name)?.parse().ok()
}

/// A length in `em`/`ex` (1 ex taken as 0.5 em) in pixels at font size `fs`.
fn rel_len(v: &str, fs: f64) -> f64 {
    if let Some(n) = v.strip_suffix("em") {
        n.parse::<f64>().unwrap_or(0.0) * fs
    } else if let Some(n) = v.strip_suffix("ex") {
        n.parse::<f64>().unwrap_or(0.0) * 0.5 * fs
    } else {
        v.parse().unwrap_or(0.0)
    }
}

/// Boxes of every unrotated text element: width 0.6 em per character (Lato's average
/// advance is about 0.5 em, from memory; 0.6 em errs wide), from 0.75 em above the baseline
/// to 0.2 em below it (ascender and descender, common practice for a Latin sans).
pub(crate) fn text_boxes(svg: &str) -> Vec<(String, Bx)> {
    let mut out = Vec::new();
    let mut rest = svg;
    while let Some(i) = rest.find("<text ") {
        let Some(close) = rest[i..].find('>') else {
            break;
        };
        let tag = &rest[i..i + close];
        let Some(end) = rest[i..].find("</text>") else {
            break;
        };
        let content = rest[i + close + 1..i + end].trim().to_string();
        rest = &rest[i + end..];
        if attr(tag, "transform").is_some() || content.is_empty() {
            continue;
        }
        let (Some(x), Some(y), Some(fs)) = (num(tag, "x"), num(tag, "y"), num(tag, "font-size"))
        else {
            continue;
        };
        let w = content.chars().count() as f64 * 0.6 * fs;
        let base = y + attr(tag, "dy").map(|d| rel_len(d, fs)).unwrap_or(0.0);
        let x0 = match attr(tag, "text-anchor") {
            Some("middle") => x - w / 2.0,
            Some("end") => x - w,
            _ => x,
        };
        out.push((
            content,
            Bx {
                x0,
                y0: base - 0.75 * fs,
                x1: x0 + w,
                y1: base + 0.2 * fs,
            },
        ));
    }
    out
}

/// Boxes of the point markers: circles of radius up to 6 px (survey points) and the
/// polygons of up to 20 px across (antenna triangles).
fn marker_boxes(svg: &str) -> Vec<Bx> {
    let mut out = Vec::new();
    for tag in svg.split('<').filter(|t| t.starts_with("circle ")) {
        if let (Some(cx), Some(cy), Some(r)) = (num(tag, "cx"), num(tag, "cy"), num(tag, "r")) {
            if r <= 6.0 {
                out.push(Bx {
                    x0: cx - r,
                    y0: cy - r,
                    x1: cx + r,
                    y1: cy + r,
                });
            }
        }
    }
    for tag in svg.split('<').filter(|t| t.starts_with("polygon ")) {
        let pts: Vec<f64> = attr(tag, "points")
            .unwrap_or_default()
            .split([' ', ','])
            .filter_map(|v| v.parse().ok())
            .collect();
        let xs: Vec<f64> = pts.iter().step_by(2).copied().collect();
        let ys: Vec<f64> = pts.iter().skip(1).step_by(2).copied().collect();
        let b = Bx {
            x0: xs.iter().copied().fold(f64::INFINITY, f64::min),
            y0: ys.iter().copied().fold(f64::INFINITY, f64::min),
            x1: xs.iter().copied().fold(f64::NEG_INFINITY, f64::max),
            y1: ys.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        };
        if b.x1 - b.x0 <= 20.0 && b.y1 - b.y0 <= 20.0 {
            out.push(b);
        }
    }
    out
}

#[test]
fn demo_map_labels_overlap_neither_each_other_nor_markers() {
    let (dir, _) = demo_report();
    let mut maps = 0;
    for entry in std::fs::read_dir(dir.path().join("figures")).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        // The coverage maps, and the grading maps with each cell's value and mark.
        if !(name.starts_with("map-")
            || name.starts_with("option-map-")
            || name.starts_with("grading-"))
        {
            continue;
        }
        maps += 1;
        let svg = std::fs::read_to_string(&path).unwrap();
        let texts = text_boxes(&svg);
        assert!(
            texts.len() > 10,
            "{name}: too few labels read ({})",
            texts.len()
        );
        for (i, (ta, a)) in texts.iter().enumerate() {
            for (tb, b) in &texts[i + 1..] {
                assert!(!a.overlaps(b), "{name}: labels '{ta}' and '{tb}' overlap");
            }
            for m in marker_boxes(&svg) {
                assert!(
                    !a.overlaps(&m),
                    "{name}: label '{ta}' covers a marker at {m:?}"
                );
            }
        }
    }
    assert!(maps >= 6, "expected the demo's coverage maps, found {maps}");
}
