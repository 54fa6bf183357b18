//! One service's design turned into a remediation option.

use rfsite_model::{Service, Site};
use rfsite_plugin::*;
use rfsite_plugin_calibration::{calibrated_adjust, calibrated_model, fitted_values, scene_for};
use rfsite_plugin_grading::{rule_for, rule_sets};
use rfsite_plugin_multi_wall::{FloorPredictor, Scene};

use crate::candidates::standing_waves;
use crate::feed::{network, Network};
use crate::floors::{Designer, FloorDesign, Grade, Model, ServiceDesign};
use crate::options::DesignOptions;

/// The scene and per-service (offset, exponent change) of the graded model.
fn model_for(ctx: &Context<'_>, model: &str) -> Result<(Scene, Vec<(f64, f64)>), String> {
    let site = ctx.site;
    match model {
        "multi-wall" => Ok((scene_for(site), vec![(0.0, 0.0); site.services.len()])),
        "calibrated" => {
            let fitted = ctx.output_of("calibration").map(fitted_values).unwrap_or_default();
            Ok(calibrated_model(site, &fitted))
        }
        other => Err(format!("the grading used the `{other}` model; the designer predicts with `multi-wall` or `calibrated`")),
    }
}

/// The graded levels per floor (no layer: −inf inside the outline, NaN outside).
fn graded_levels(ctx: &Context<'_>, d: &Designer<'_>, model: &str, svc: &str) -> Vec<Vec<f32>> {
    let layers = ctx.layers_of(model);
    (0..ctx.site.floors.len())
        .map(|fi| {
            let floor = &ctx.site.floors[fi].id;
            match layers
                .iter()
                .find(|l| &l.floor == floor && l.service == svc)
            {
                Some(l) => l.level_dbm.clone(),
                None => no_signal(d, fi),
            }
        })
        .collect()
}

fn no_signal(d: &Designer<'_>, fi: usize) -> Vec<f32> {
    let p = FloorPredictor::new(d.site, d.model.scene, d.si, fi, d.model.adjust);
    p.inside()
        .iter()
        .map(|i| if *i { f32::NEG_INFINITY } else { f32::NAN })
        .collect()
}

/// Designs `svc` and returns the option.
pub(crate) fn design_service(
    ctx: &Context<'_>,
    o: &DesignOptions,
    svc: &Service,
    r: &ServiceResult,
) -> Result<Remediation, String> {
    let site = ctx.site;
    let (scene, st) = model_for(ctx, &r.model)?;
    let adjust = move |s: usize, d: f64| calibrated_adjust(&st, s, d);
    let empty = toml::Table::new();
    let mut notes = Vec::new();
    let rules = rule_sets(
        site.plugin_options.get("grading").unwrap_or(&empty),
        &mut notes,
    )
    .map_err(|e| e.to_string())?;
    let rule = rule_for(svc, &rules)?;
    let reflectors = ctx
        .output_of("reflection-nulls")
        .and_then(|x| x.extra.get("reflectors"));
    let waves = standing_waves(reflectors, &svc.id);
    let measured: Vec<&Measurement> = ctx
        .surveys
        .points
        .iter()
        .filter(|m| m.service == svc.id)
        .collect();
    let passed: Vec<bool> = site
        .floors
        .iter()
        .map(|f| r.floors.iter().any(|x| x.id == f.id && x.pass))
        .collect();
    let up = rfsite_plugin_grading::uplink::budget(site, svc, r.required.threshold_dbm);
    let req = design_level(r, &up);
    let mut designer = Designer {
        site,
        si: crate::service_index(site, svc),
        model: Model {
            scene: &scene,
            adjust: &adjust,
            model: &r.model,
        },
        grade: Grade {
            svc,
            rule: &rule,
            req: &req,
        },
        options: o,
        waves: &waves,
        base: &[],
        measured: &measured,
        passed: &passed,
    };
    let base = graded_levels(ctx, &designer, &r.model, &svc.id);
    designer.base = &base;
    let mut current = base.clone();
    let d = designer.design(&mut current);
    if d.placed.is_empty() {
        return Err("no candidate position improves the failing floors".into());
    }
    let net = network(site, svc, o, &d.placed).map_err(|e| e.to_string())?;
    Ok(remediation(site, svc, r, o, &d, net))
}

/// The level the design works to: the graded required level, raised by the shortfall of
/// the uplink against the downlink when the uplink is assessed and the weaker direction
/// (so the design passes both ways, the uplink being the downlink moved by one shift).
fn design_level(
    r: &ServiceResult,
    up: &rfsite_plugin::UplinkBudget,
) -> rfsite_plugin::RequiredLevel {
    let mut req = r.required.clone();
    if up.assessed && up.shift_db < 0.0 {
        req.measured_dbm -= up.shift_db;
        req.predicted_dbm -= up.shift_db;
    }
    req
}

fn floor_line(site: &Site, f: &FloorDesign) -> String {
    let name = site
        .floor(&f.floor)
        .map(|x| x.name.as_str())
        .unwrap_or(&f.floor);
    if f.passed_before {
        return format!("{name}: passes as it is (the other floors' new antennas count here too)");
    }
    let proof = if f.optimal {
        "proven the fewest by trying every smaller set"
    } else {
        "not proven the fewest (the exact search's budget ran out)"
    };
    format!(
        "{name}: {} candidate positions, {} placed, {}; {} rule-set evaluations{}",
        f.candidates,
        rfsite_plugin::words::count(f.placed, "antenna", "antennas"),
        proof,
        f.evaluations,
        if f.passes {
            ""
        } else {
            "; the floor still fails at the antenna limit"
        }
    )
}

fn remediation(
    site: &Site,
    svc: &Service,
    r: &ServiceResult,
    o: &DesignOptions,
    d: &ServiceDesign,
    net: Network,
) -> Remediation {
    let floors: Vec<String> = d
        .floors
        .iter()
        .filter(|f| f.placed > 0)
        .map(|f| f.floor.clone())
        .collect();
    let lines: Vec<String> = d.floors.iter().map(|f| floor_line(site, f)).collect();
    let n = net.placed.len();
    let name = |id: &str| site.floor(id).map_or(id.to_string(), |f| f.name.clone());
    let floor_names: Vec<String> = floors.iter().map(|f| name(f)).collect();
    let servers: Vec<rfsite_model::Transmitter> = site
        .transmitters
        .iter()
        .filter(|t| t.service == svc.id)
        .cloned()
        .chain(net.placed.iter().map(|p| p.tx.clone()))
        .collect();
    let up = rfsite_plugin_grading::uplink::budget(site, svc, r.required.threshold_dbm);
    let design_req = design_level(r, &up);
    let booster = crate::booster::design(
        site,
        svc,
        &servers,
        &up,
        (o.isolation_margin_db, o.max_noise_rise_db),
    );
    let mut caveats = caveats(svc, o, &net);
    let mut quantities = net.quantities;
    if let Some(b) = &booster {
        quantities.extend(booster_quantities(site, svc, b));
        caveats.extend(booster_caveats(svc, b));
    }
    Remediation {
        id: format!("design-{}", svc.id),
        title: format!(
            "{n} new indoor {} for {} on {}, fed from the head end on {}",
            if n == 1 { "antenna" } else { "antennas" },
            svc.name,
            floor_names.join(", "),
            name(&net.distribution.head_end_floor)
        ),
        service: Some(svc.id.clone()),
        floors,
        detail: format!(
            "Designed by rfsite against the {} rule set at the required {:.1} dBm{}. {}.",
            r.rule,
            design_req.predicted_dbm,
            if design_req.predicted_dbm > r.required.predicted_dbm {
                " (raised so that the weaker uplink passes too)"
            } else {
                ""
            },
            lines.join(". ")
        ),
        margin_needed_db: r
            .floors
            .iter()
            .map(|f| f.margin_needed_db)
            .fold(0.0, f64::max),
        expected: format!("every floor of {} to its rule set (predicted)", svc.name),
        caveats,
        plugin: "antenna-design".into(),
        antennas: net.placed.iter().map(|p| antenna_of(site, &p.tx)).collect(),
        distribution: Some(net.distribution),
        booster,
        quantities,
        ..Default::default()
    }
}

fn antenna_of(site: &Site, t: &rfsite_model::Transmitter) -> DesignedAntenna {
    let u = site.units;
    DesignedAntenna {
        id: t.id.clone(),
        service: t.service.clone(),
        floor: t.floor.clone(),
        position: [
            round3(u.from_m(t.position.x)),
            round3(u.from_m(t.position.y)),
        ],
        height: round3(u.from_m(t.height_m)),
        power_dbm: t.power_dbm,
        cable_loss_db: t.cable_loss_db,
        connector_loss_db: t.connector_loss_db,
        antenna_gain_dbi: t.antenna_gain_dbi,
        pattern: "omni-ceiling".into(),
        azimuth_deg: None,
        downtilt_deg: None,
    }
}

fn round3(x: f64) -> f64 {
    (x * 1000.0).round() / 1000.0
}

fn caveats(svc: &Service, o: &DesignOptions, net: &Network) -> Vec<String> {
    let mut c = vec![
        "predicted, not measured: the calibration fitted on today's survey is kept; an acceptance survey after installation decides".to_string(),
        format!("antenna gain {:.1} dBi, {} at {:.1} dBm per antenna port, head end rated {:.1} dBm composite with {:.1} dB back-off: rfsite defaults unless set in [plugins.antenna-design] (from memory); take them from the equipment data sheets", o.gain_dbi, rfsite_plugin::words::count(o.channels as usize, "channel", "channels"), o.port_dbm, o.max_composite_dbm, o.back_off_db),
        "cable routes follow the plan rectilinearly with a slack allowance; the installer confirms routes, and every penetration of a fire-rated wall or floor is fire-stopped with a listed system".into(),
        "ceiling and riser work is work at height: follow the work-at-height rules and use licensed trades for electrical work".into(),
        "the downlink only: the uplink (handset to head end) is not balanced here".into(),
    ];
    if net.distribution.exceeded {
        c.push(format!("the head end's rated composite is exceeded by {:.1} dB: use a higher-power head end, a second head end, or fewer channels", -net.distribution.margin_db));
    }
    if svc.life_safety {
        c.push("a public-safety in-building system needs the approval of the authority having jurisdiction, the licensee's consent, listed equipment and the survivability the adopted code requires (pathways, back-up power); design and installation under licensed practice".into());
    }
    if o.head_end.is_none() {
        c.push("no head end was given: the lowest floor's centre is assumed; set `head_end` in [plugins.antenna-design]".into());
    }
    c
}

/// The booster's own lines of the bill of quantities.
fn booster_quantities(
    site: &Site,
    svc: &Service,
    b: &rfsite_plugin::BoosterDesign,
) -> Vec<rfsite_plugin::Quantity> {
    let antenna_gain = crate::booster::donor_of(site, svc).map_or(0.0, |(_, a, _)| a.gain_dbi);
    let q = |item: String, note: &str| rfsite_plugin::Quantity {
        item,
        unit: "each".into(),
        quantity: 1.0,
        note: note.into(),
    };
    vec![
        q(format!("off-air signal booster (bi-directional amplifier), {}, downlink gain {:.1} dB, uplink gain {:.1} dB", rfsite_plugin::words::count(b.channels as usize, "channel", "channels"), b.downlink_gain_db, b.uplink_gain_db), "listed for the service where the code requires it"),
        q(format!("donor antenna, directional, {antenna_gain:.1} dBi, on the roof at ({:.2}, {:.2}) {}", b.donor_position[0], b.donor_position[1], site.units.label()), "with its mount, surge protection and earthing (common practice)"),
    ]
}

/// Cautions that come with an off-air booster.
fn booster_caveats(svc: &Service, b: &rfsite_plugin::BoosterDesign) -> Vec<String> {
    let mut v = vec![
        "an off-air booster retransmits a licensee's signal: it needs the licensee's consent and must meet the applicable rule for signal boosters (for example the FCC's Part 90 signal-booster section, 47 CFR 90.219, from memory) or the local regulator's equivalent".into(),
        format!("donor-to-server isolation must exceed the booster gain by {:.0} dB (common practice); the smallest predicted isolation leaves a largest stable gain of {:.1} dB: confirm by measurement at commissioning", b.isolation_margin_db, b.max_stable_gain_db),
        "the donor antenna is rooftop work at height and an RF exposure point: keep people outside its compliance distance and evaluate exposure before energising".into(),
    ];
    if svc.life_safety {
        v.push("survivability as the authority having jurisdiction requires: pathway rating of the riser and feeders, battery back-up for the required duration, and monitoring and annunciation of the booster at the fire alarm or command panel".into());
    }
    if !b.stable {
        v.push(format!("NOT STABLE as designed: {}", b.fix));
    }
    if b.exceeded {
        v.push(format!(
            "EXCEEDED: the composite output {:.1} dBm is above the rating less back-off, {:.1} dBm",
            b.composite_dbm, b.allowed_composite_dbm
        ));
    }
    v
}
