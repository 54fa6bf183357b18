//! `rfsite materials [--json]`

use rfsite_model::MaterialLibrary;
use rfsite_physics::p2040::Polarization;

use crate::Outcome;

/// Arguments of `materials`.
#[derive(clap::Args)]
pub struct Args {
    /// Print JSON.
    #[arg(long)]
    pub json: bool,
    /// Thickness used for slab materials, mm.
    #[arg(long, default_value_t = 100.0)]
    pub thickness_mm: f64,
}

/// Frequencies the listing shows, MHz.
pub const FREQS_MHZ: [f64; 5] = [700.0, 900.0, 1900.0, 2400.0, 5800.0];

/// Runs `materials`.
pub fn run(a: Args) -> Outcome {
    let lib = MaterialLibrary::builtin();
    let t = a.thickness_mm / 1000.0;
    let rows: Vec<_> = lib
        .materials
        .values()
        .map(|m| {
            let losses: Vec<_> = FREQS_MHZ
                .iter()
                .map(|f| {
                    let l = m.crossing_loss(*f, t, 1.0, Polarization::Te);
                    serde_json::json!({"freq_mhz": f, "loss_db": (l.loss_db * 100.0).round() / 100.0, "extrapolated": l.note.is_some()})
                })
                .collect();
            serde_json::json!({"id": m.id, "name": m.name, "class": m.class.label(), "model": m.model_label(), "source": m.source, "confidence": m.confidence,
                "range_mhz": m.range_mhz(), "thickness_mm": if m.model.angle_dependent() { Some(a.thickness_mm) } else { None }, "losses": losses})
        })
        .collect();
    if a.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&rows).unwrap_or_default()
        );
        return Outcome::Ok;
    }
    println!(
        "{:<24} {:<16} {:>8} {:>8} {:>8} {:>8} {:>8}  range (MHz), source",
        "id", "class", "700", "900", "1900", "2400", "5800"
    );
    println!(
        "{:<24} {:<16} {:>44}",
        "",
        "",
        format!(
            "(dB per crossing; slabs at {} mm; * = extrapolated)",
            a.thickness_mm
        )
    );
    for r in rows {
        let ls: Vec<String> = r["losses"]
            .as_array()
            .map(|v| {
                v.iter()
                    .map(|l| {
                        format!(
                            "{:.1}{}",
                            l["loss_db"].as_f64().unwrap_or(0.0),
                            if l["extrapolated"].as_bool() == Some(true) {
                                "*"
                            } else {
                                ""
                            }
                        )
                    })
                    .collect()
            })
            .unwrap_or_default();
        let range = r["range_mhz"]
            .as_array()
            .map(|v| format!("{}-{}", v[0], v[1]))
            .unwrap_or_else(|| "-".into());
        println!(
            "{:<24} {:<16} {:>8} {:>8} {:>8} {:>8} {:>8}  {range}, {} ({})",
            r["id"].as_str().unwrap_or(""),
            r["class"].as_str().unwrap_or(""),
            ls[0],
            ls[1],
            ls[2],
            ls[3],
            ls[4],
            r["source"].as_str().unwrap_or(""),
            r["confidence"].as_str().unwrap_or("")
        );
    }
    Outcome::Ok
}
