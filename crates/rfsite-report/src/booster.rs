//! The off-air booster of a designed option, as the designer worked it out: gains,
//! outputs, noise, isolation per server antenna and exposure distances.

use rfsite_model::Site;
use rfsite_plugin::BoosterDesign;
use serde_json::{json, Value};

use crate::f1;

fn db(x: f64) -> String {
    if x.is_finite() {
        format!("{} dB", f1(x))
    } else {
        "not worked out (serving-site data missing)".into()
    }
}

fn measures(site: &Site, b: &BoosterDesign) -> Vec<[String; 2]> {
    let ul = site.units.label();
    vec![
        [
            "Donor antenna".into(),
            format!(
                "{} at ({}, {}) {ul}, {} m above the roof",
                b.donor,
                f1(b.donor_position[0]),
                f1(b.donor_position[1]),
                f1(b.donor_height_m)
            ),
        ],
        [
            "Level at the donor antenna".into(),
            format!("{} dBm ({})", f1(b.roof_level_dbm), b.roof_level_source),
        ],
        [
            "Booster input per channel (level + donor gain − cable)".into(),
            format!("{} dBm", f1(b.input_per_channel_dbm)),
        ],
        [
            "Output per channel the antennas need".into(),
            format!("{} dBm", f1(b.output_per_channel_dbm)),
        ],
        [
            "Downlink gain (output − input)".into(),
            db(b.downlink_gain_db),
        ],
        [
            "Composite output (P_ch + 10·log10 N)".into(),
            format!(
                "{} dBm for {}; allowed {} dBm (rating less back-off){}",
                f1(b.composite_dbm),
                rfsite_plugin::words::count(b.channels as usize, "channel", "channels"),
                f1(b.allowed_composite_dbm),
                if b.exceeded { " — EXCEEDED" } else { "" }
            ),
        ],
        ["Uplink gain graded".into(), db(b.uplink_gain_db)],
        [
            "Uplink gain that balances the links".into(),
            db(b.balanced_uplink_gain_db),
        ],
        [
            format!(
                "Largest uplink gain for a noise rise of {} dB at the serving site",
                f1(b.max_noise_rise_db)
            ),
            db(b.noise_limited_gain_db),
        ],
        [
            "Noise rise at the serving site with the graded gain".into(),
            if b.noise_rise_db.is_finite() {
                format!("{:.2} dB", b.noise_rise_db)
            } else {
                "not worked out".into()
            },
        ],
        [
            "Smallest isolation − margin = largest stable gain".into(),
            format!(
                "{} (margin {} dB)",
                db(b.max_stable_gain_db),
                f1(b.isolation_margin_db)
            ),
        ],
        [
            "Stability".into(),
            if b.stable {
                "both gains within the largest stable gain".into()
            } else {
                format!("NOT STABLE: {}", b.fix)
            },
        ],
    ]
}

/// The booster's tables for the report: measures, isolation and exposure rows.
pub fn booster_view(site: &Site, b: &BoosterDesign) -> Value {
    let iso: Vec<[String; 7]> = b
        .isolation
        .iter()
        .map(|p| {
            [
                p.antenna.clone(),
                f1(p.distance_m),
                f1(p.slabs_db),
                f1(p.donor_gain_dbi),
                f1(p.server_gain_dbi),
                f1(p.cables_db),
                f1(p.isolation_db),
            ]
        })
        .collect();
    let exposure: Vec<[String; 5]> = b
        .exposure
        .iter()
        .map(|e| {
            [
                e.antenna.clone(),
                format!("{} dBm at {} MHz", f1(e.eirp_dbm), f1(e.freq_mhz)),
                e.limit.clone(),
                format!("{:.2}", e.distance_m),
                if e.near_field {
                    "inside the near field: evaluate by measurement or a near-field method".into()
                } else {
                    String::new()
                },
            ]
        })
        .collect();
    json!({"rows": measures(site, b), "isolation": iso, "exposure": exposure, "stable": b.stable, "exceeded": b.exceeded})
}
