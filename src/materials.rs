//! `rfsite materials [--json]`

use rfsite_model::{Material, MaterialLibrary};
use rfsite_physics::p2040::Polarization;
use rfsite_plugin_multi_wall::DEFAULT_MAX_CROSSING_LOSS_DB as CAP_DB;
use serde_json::{json, Value};

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

/// One material's losses at the listing frequencies: the loss, or `null` with
/// `beyond_cap` where it exceeds the crossing cap the prediction charges at most.
fn losses(m: &Material, t: f64) -> Vec<Value> {
    FREQS_MHZ
        .iter()
        .map(|f| {
            let l = m.crossing_loss(*f, t, 1.0, Polarization::Te);
            let beyond = l.loss_db.is_nan() || l.loss_db > CAP_DB;
            json!({"freq_mhz": f, "loss_db": (!beyond).then_some((l.loss_db * 100.0).round() / 100.0),
                "beyond_cap": beyond, "extrapolated": l.note.is_some()})
        })
        .collect()
}

fn row(m: &Material, thickness_mm: f64) -> Value {
    let t = thickness_mm / 1000.0;
    json!({"id": m.id, "name": m.name, "class": m.class.label(), "model": m.model_label(), "source": m.source,
        "confidence": m.confidence_words(), "thickness": m.thickness_rule(t), "reference": m.reference,
        "range_mhz": m.range_mhz(), "thickness_mm": m.model.angle_dependent().then_some(thickness_mm),
        "crossing_cap_db": CAP_DB, "losses": losses(m, t)})
}

fn cell(l: &Value) -> String {
    if l["beyond_cap"].as_bool() == Some(true) {
        return format!("> {CAP_DB:.0}");
    }
    let star = if l["extrapolated"].as_bool() == Some(true) {
        "*"
    } else {
        ""
    };
    format!("{:.1}{star}", l["loss_db"].as_f64().unwrap_or(f64::NAN))
}

/// Runs `materials`.
pub fn run(a: Args) -> Outcome {
    if !(a.thickness_mm > 0.0 && a.thickness_mm.is_finite()) {
        eprintln!(
            "error: --thickness-mm must be a positive number (got {})",
            a.thickness_mm
        );
        return Outcome::BadInput;
    }
    let lib = MaterialLibrary::builtin();
    let rows: Vec<Value> = lib
        .materials
        .values()
        .map(|m| row(m, a.thickness_mm))
        .collect();
    if a.json {
        println!(
            "{}",
            serde_json::to_string_pretty(&rows).unwrap_or_default()
        );
        return Outcome::Ok;
    }
    println!(
        "{:<24} {:<16} {:>8} {:>8} {:>8} {:>8} {:>8}  confidence; range (MHz); source",
        "id", "class", "700", "900", "1900", "2400", "5800"
    );
    println!(
        "(dB per crossing at normal incidence; P.2040 slabs at {} mm; empirical entries per crossing of the element named, whatever the thickness; * = extrapolated; > {CAP_DB:.0} = beyond the crossing cap the prediction charges)",
        a.thickness_mm
    );
    for r in rows {
        let ls: Vec<String> = r["losses"]
            .as_array()
            .map(|v| v.iter().map(cell).collect())
            .unwrap_or_default();
        let range = r["range_mhz"]
            .as_array()
            .map(|v| format!("{}-{}", v[0], v[1]))
            .unwrap_or_else(|| "-".into());
        let reference = r["reference"]
            .as_str()
            .map(|s| format!("; element: {s}"))
            .unwrap_or_default();
        println!(
            "{:<24} {:<16} {:>8} {:>8} {:>8} {:>8} {:>8}  {}; {range}; {}{reference}",
            r["id"].as_str().unwrap_or(""),
            r["class"].as_str().unwrap_or(""),
            ls[0],
            ls[1],
            ls[2],
            ls[3],
            ls[4],
            r["confidence"].as_str().unwrap_or(""),
            r["source"].as_str().unwrap_or(""),
        );
    }
    Outcome::Ok
}
