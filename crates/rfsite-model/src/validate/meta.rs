//! `[site]` (identity, units, report date, building type) and `[prediction]`.

use super::{is_iso_date, V};
use crate::raw::*;
use crate::site::*;

/// `[site]` and its units (set on `v` first: every length depends on them), and the
/// plan's north.
pub(super) fn site_meta(v: &mut V<'_>, raw: &RawProject) -> (SiteMeta, Units, Option<f64>) {
    let whole = 0..1;
    let meta_raw = match &raw.site {
        Some(s) => s,
        None => {
            v.error(
                whole.clone(),
                "the file has no `[site]` table",
                Some("add `[site]` with at least `id`, `name`, `units` and `report_date`".into()),
            );
            &toml::Spanned::new(whole.clone(), RawSiteMeta::default())
        }
    };
    let mspan = meta_raw.span();
    let m = meta_raw.get_ref();
    let units = match &m.units {
        Some(u) => match Units::parse(u.get_ref()) {
            Some(x) => x,
            None => {
                v.error(
                    u.span(),
                    format!("unknown units `{}`", u.get_ref()),
                    Some("write `units = \"metres\"` or `units = \"feet\"`".into()),
                );
                Units::Metres
            }
        },
        None => {
            v.error(
                mspan.clone(),
                "`[site]` is missing `units`",
                Some("add `units = \"metres\"` or `units = \"feet\"`; every length in the file uses it".into()),
            );
            Units::Metres
        }
    };
    v.to_m = units.to_m();
    let id = v
        .req(
            &m.id,
            mspan.clone(),
            "`[site]`",
            "id",
            "add `id = \"short-name\"`",
        )
        .cloned()
        .unwrap_or_default();
    if let Some(idv) = &m.id {
        v.id_chars(
            idv,
            "the site",
            "it names output folders; e.g. `id = \"north-depot\"`",
        );
    }
    let name = v
        .req(
            &m.name,
            mspan.clone(),
            "`[site]`",
            "name",
            "add `name = \"...\"`",
        )
        .cloned()
        .unwrap_or_default();
    let report_date = match &m.report_date {
        Some(d) => {
            if !is_iso_date(d.get_ref()) {
                v.error(
                    d.span(),
                    format!("`report_date` must be YYYY-MM-DD (got `{}`)", d.get_ref()),
                    Some(
                        "e.g. `report_date = \"2026-11-20\"`; the report never reads the clock"
                            .into(),
                    ),
                );
            }
            d.get_ref().clone()
        }
        None => {
            v.error(
                mspan.clone(),
                "`[site]` is missing `report_date`",
                Some("add `report_date = \"YYYY-MM-DD\"`; the report date comes from the file so that runs are reproducible".into()),
            );
            String::new()
        }
    };
    let building = match &m.building {
        Some(b) => {
            let s = b.get_ref().as_str();
            if s != "traditional" && s != "thermally-efficient" {
                v.error(
                    b.span(),
                    format!("unknown building type `{s}`"),
                    Some("write `traditional` or `thermally-efficient` (ITU-R P.2109 building types)".into()),
                );
            }
            s.to_string()
        }
        None => "traditional".into(),
    };
    let meta = SiteMeta {
        id,
        name,
        client: v.text(&m.client),
        address: v.text(&m.address),
        author: v.text(&m.author),
        reviewer: v.text(&m.reviewer),
        report_date,
        revision: v.text(&m.revision),
        building,
    };
    let north_deg = m.north_deg.as_ref().map(|n| *n.get_ref());
    (meta, units, north_deg)
}

/// `[prediction]`, with its defaults.
pub(super) fn prediction(v: &mut V<'_>, raw: &RawProject) -> Prediction {
    let d = RawPrediction::default();
    let p = raw.prediction.as_ref().map(|p| p.get_ref()).unwrap_or(&d);
    let grid_step_m = match &p.grid_step {
        Some(g) => v.length(g, "grid_step", false).unwrap_or(1.0),
        None => 1.0,
    };
    let receiver_height_m = match &p.receiver_height {
        Some(g) => v.length(g, "receiver_height", true).unwrap_or(1.5),
        None => 1.5,
    };
    let combine = match &p.combine {
        Some(c) => match c.get_ref().as_str() {
            "strongest" => Combine::Strongest,
            "power-sum" => Combine::PowerSum,
            other => {
                v.error(
                    c.span(),
                    format!("unknown combine rule `{other}`"),
                    Some("write `strongest` (best server) or `power-sum`".into()),
                );
                Combine::Strongest
            }
        },
        None => Combine::Strongest,
    };
    let shadowing_sigma_db = match &p.shadowing_sigma_db {
        Some(s) if *s.get_ref() < 0.0 || *s.get_ref() > 20.0 => {
            v.error(
                s.span(),
                "`shadowing_sigma_db` must be between 0 and 20 dB",
                Some("indoor shadowing is typically 3 to 10 dB (common practice)".into()),
            );
            8.0
        }
        Some(s) => *s.get_ref(),
        None => 8.0,
    };
    let model = match &p.model {
        Some(mo) => {
            let s = mo.get_ref().as_str();
            if s != "multi-wall" && s != "free-space" {
                v.error(
                    mo.span(),
                    format!("unknown prediction model `{s}`"),
                    Some("write `multi-wall` or `free-space`".into()),
                );
            }
            s.to_string()
        }
        None => "multi-wall".into(),
    };
    if grid_step_m < 0.05 {
        if let Some(g) = &p.grid_step {
            v.error(
                g.span(),
                "`grid_step` is below 5 cm",
                Some("a step of 0.25 to 1 m is usual for a floor".into()),
            );
        }
    }
    Prediction {
        grid_step_m,
        receiver_height_m,
        combine,
        shadowing_sigma_db,
        shadowing_sigma_given: p.shadowing_sigma_db.is_some(),
        model,
    }
}
