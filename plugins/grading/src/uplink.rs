//! The uplink: whether the network hears a handset anywhere on a floor.
//!
//! At a point served by in-building antennas the uplink reaching the head end is
//! DL − P_ant + P_hs + G_hs − Δf: the downlink level DL came from the head-end output
//! P_ant through the feed, the antenna and the building; the handset's signal takes the
//! same path back (reciprocity) at the uplink frequency, Δf = 20 log10(f_ul/f_dl) more
//! free-space loss (ITU-R P.525). Beyond the head end the budget is the same at every
//! point (booster gain, donor link), so the uplink margin is the downlink level plus one
//! shift, graded against the downlink's own required level: the same cells, critical zones
//! and targets grade both directions. With several head-end outputs the largest is taken
//! (the antenna fed hardest gives the least uplink for its downlink: conservative).

use rfsite_model::{Booster, Donor, DonorAntenna, Service, ServingSite, Site, Uplink};
use rfsite_physics::{booster as bst, fspl};
use rfsite_plugin::{
    BudgetLine, Finding, FloorResult, Measurement, Reason, Severity, UplinkBudget, UplinkFloor,
};

use crate::{grade_one_floor, FloorInput};

fn line(label: &str, value: f64, unit: &str, source: &str) -> BudgetLine {
    BudgetLine {
        label: label.into(),
        value,
        unit: unit.into(),
        source: source.into(),
    }
}

fn not_assessed(why: &str) -> UplinkBudget {
    UplinkBudget {
        why_not: why.into(),
        ..Default::default()
    }
}

/// The uplink budget of `svc` on `site`, or why it cannot be assessed; `threshold_dbm` is
/// the downlink threshold the grading works to (the shift is against it).
pub fn budget(site: &Site, svc: &Service, threshold_dbm: f64) -> UplinkBudget {
    let Some(up) = &svc.uplink else {
        return not_assessed("the service has no `uplink` table: give `uplink = { freq_mhz = ... }` in its `[[services]]` entry");
    };
    let Ok(df) = bst::frequency_offset_db(svc.freq_mhz, up.freq_mhz) else {
        return not_assessed("the uplink frequency is not a positive number");
    };
    let head_end = site
        .transmitters
        .iter()
        .filter(|t| t.service == svc.id)
        .map(|t| t.power_dbm)
        .reduce(f64::max);
    let donor = site
        .donors
        .iter()
        .find(|d| d.service == svc.id && d.serving_site.is_some());
    let booster = donor.and_then(|d| {
        Some((
            d,
            d.serving_site.as_ref()?,
            d.antenna.as_ref()?,
            d.booster.as_ref()?,
        ))
    });
    let mut lines = vec![
        line(
            "handset power",
            up.handset_power_dbm,
            "dBm",
            &up.handset_power_source,
        ),
        line(
            "handset antenna gain",
            up.handset_gain_dbi,
            "dB",
            "site.toml or rfsite default 0 dBi (from memory; body loss not included)",
        ),
        line(
            "uplink frequency offset, -20 log10(f_ul/f_dl)",
            -df,
            "dB",
            "ITU-R P.525",
        ),
    ];
    match (head_end, booster, up.head_end_required_dbm, donor) {
        (Some(p), Some((_, site_, ant, b)), _, _) => off_air(svc, threshold_dbm, up, p, (site_, ant, b), lines),
        (Some(p), None, Some(need), _) => {
            lines.push(line("head-end output per channel (the downlink's source)", -p, "dB", "the service's transmitters"));
            finish(threshold_dbm, lines, need, "head end fed by a base station", None)
        }
        (Some(_), None, None, _) => not_assessed("the in-building system's uplink path is not described: give a donor with `serving_site`, `donor_antenna` and `booster` for an off-air booster, or `uplink.head_end_required_dbm` for a head end fed by its own base station"),
        (None, _, _, Some(d)) => direct(threshold_dbm, d, lines),
        (None, _, _, None) => not_assessed("no in-building antennas and no donor with a `serving_site` for the service"),
    }
}

/// Shift = Σ lines − required + the downlink threshold.
fn finish(
    threshold: f64,
    mut lines: Vec<BudgetLine>,
    required: f64,
    path: &str,
    rise: Option<f64>,
) -> UplinkBudget {
    // Every line so far is a contribution: the handset's power (dBm) and gains and
    // losses (dB); the level needed is added after the sum.
    let sum: f64 = lines.iter().map(|l| l.value).sum();
    lines.push(line(
        "uplink level needed at the receiver",
        required,
        "dBm",
        "site.toml",
    ));
    UplinkBudget {
        assessed: true,
        path: path.into(),
        why_not: String::new(),
        shift_db: sum - required + threshold,
        lines,
        noise_rise_db: rise,
    }
}

/// Path loss between the serving site and the donor antenna at the downlink frequency.
fn donor_link_db(
    svc: &Service,
    s: &ServingSite,
    a: Option<&DonorAntenna>,
) -> Option<(f64, &'static str)> {
    if let Some(l) = s.path_loss_db {
        return Some((l, "site.toml (path loss)"));
    }
    if let Some(level) = a.and_then(|a| a.level_dbm) {
        return Some((
            s.eirp_dbm - level,
            "site EIRP less the level measured at the donor antenna",
        ));
    }
    s.distance_m.map(|d| {
        (
            fspl::fspl_db(svc.freq_mhz, d),
            "free space over the distance (ITU-R P.525; optimistic)",
        )
    })
}

fn off_air(
    svc: &Service,
    threshold: f64,
    up: &Uplink,
    p: f64,
    (s, a, b): (&ServingSite, &DonorAntenna, &Booster),
    mut lines: Vec<BudgetLine>,
) -> UplinkBudget {
    let Some((link_dl, src)) = donor_link_db(svc, s, Some(a)) else {
        return not_assessed("the donor's serving site has no `path_loss_db`, `distance` or donor-antenna `level_dbm`: the donor link cannot be worked out");
    };
    let Ok(df) = bst::frequency_offset_db(svc.freq_mhz, up.freq_mhz) else {
        return not_assessed("the uplink frequency is not a positive number");
    };
    let link_ul = link_dl + df;
    lines.extend([
        line(
            "head-end (booster) output per channel, the downlink's source",
            -p,
            "dB",
            "the service's transmitters",
        ),
        line("booster uplink gain", b.uplink_gain_db, "dB", "site.toml"),
        line("donor cable", -a.cable_loss_db, "dB", "site.toml"),
        line("donor antenna gain", a.gain_dbi, "dB", "site.toml"),
        line(
            "donor link path loss at the uplink frequency",
            -link_ul,
            "dB",
            src,
        ),
        line(
            "serving site receive gain",
            s.rx_gain_dbi,
            "dB",
            "site.toml",
        ),
    ]);
    let to_site = a.cable_loss_db - a.gain_dbi + link_ul - s.rx_gain_dbi;
    let rise =
        bst::booster_noise_out_dbm(b.channel_bw_khz * 1e3, b.noise_figure_db, b.uplink_gain_db)
            .map(|n| {
                bst::noise_rise_db(bst::noise_delta_at_receiver_db(
                    n,
                    to_site,
                    s.noise_floor_dbm,
                ))
            })
            .unwrap_or(0.0);
    let mut u = finish(
        threshold,
        lines,
        s.uplink_required_dbm + rise,
        "off-air booster",
        Some(rise),
    );
    if let Some(l) = u.lines.last_mut() {
        l.label = format!("uplink level needed at the site receiver (its need {:.1} dBm + the booster's noise rise {:.2} dB)", s.uplink_required_dbm, rise);
    }
    u
}

/// No in-building antennas: the handset reaches the serving site through the building,
/// over the path the downlink came in on (L = EIRP − DL).
fn direct(threshold: f64, d: &Donor, mut lines: Vec<BudgetLine>) -> UplinkBudget {
    let Some(s) = &d.serving_site else {
        return not_assessed("no serving site for the donor");
    };
    lines.extend([
        line(
            "serving site EIRP (the path loss is EIRP − DL)",
            -s.eirp_dbm,
            "dB",
            "site.toml",
        ),
        line(
            "serving site receive gain",
            s.rx_gain_dbi,
            "dB",
            "site.toml",
        ),
    ]);
    finish(
        threshold,
        lines,
        s.uplink_required_dbm,
        "direct to the serving site",
        None,
    )
}

/// The floor graded on the uplink: the downlink layer and survey points moved by the
/// budget's shift, through the same test as the downlink. `None` when not assessed.
pub fn grade(inp: &FloorInput<'_>, b: &UplinkBudget) -> Option<UplinkFloor> {
    if !b.assessed {
        return None;
    }
    let shift = b.shift_db;
    let layer = inp.layer.map(|l| {
        let mut l = l.clone();
        l.level_dbm.iter_mut().for_each(|v| *v += shift as f32);
        l
    });
    let measured: Vec<Measurement> = inp
        .measured
        .iter()
        .map(|m| Measurement {
            level_dbm: m.level_dbm + shift,
            ..(*m).clone()
        })
        .collect();
    let shifted = FloorInput {
        layer: layer.as_ref(),
        measured: measured.iter().collect(),
        ..*inp
    };
    let r = grade_one_floor(&shifted).result;
    Some(UplinkFloor {
        assessed: true,
        pass: r.pass,
        general_fraction: r.general_fraction,
        critical_fraction: r.critical_fraction,
        margin_needed_db: r.margin_needed_db,
        reasons: r
            .reasons
            .into_iter()
            .map(|x| Reason {
                criterion: format!("uplink-{}", x.criterion),
                text: format!("uplink: {}", x.text),
                ..x
            })
            .collect(),
    })
}

/// The floor's verdict of record from both directions: a floor whose uplink was assessed
/// passes only when both pass; a life-safety floor whose uplink could not be assessed
/// does not pass.
pub fn combine(r: &mut FloorResult, ul: Option<UplinkFloor>, svc: &Service, b: &UplinkBudget) {
    let downlink = r.pass;
    r.downlink_pass = Some(downlink);
    match &ul {
        Some(u) => {
            r.pass = downlink && u.pass;
            r.reasons.extend(u.reasons.iter().cloned());
            if !u.pass {
                r.margin_needed_db = r.margin_needed_db.max(u.margin_needed_db);
            }
        }
        None if svc.life_safety => {
            r.pass = false;
            r.reasons.push(Reason {
                criterion: "uplink-not-assessed".into(),
                zone: None,
                value: 0.0,
                target: 1.0,
                text: format!("the uplink (handset to network) was not assessed: {}; a life-safety floor passes only when both directions do", b.why_not),
            });
        }
        None => {}
    }
    r.uplink = Some(ul.unwrap_or(UplinkFloor {
        assessed: false,
        pass: false,
        general_fraction: None,
        critical_fraction: None,
        margin_needed_db: 0.0,
        reasons: Vec::new(),
    }));
}

/// A finding for a floor whose uplink fails while its downlink passes, or whose
/// life-safety uplink was not assessed.
pub fn finding(
    inp: &FloorInput<'_>,
    b: &UplinkBudget,
    ul: &Option<UplinkFloor>,
) -> Option<Finding> {
    let floor = &inp.site.floors[inp.fi];
    let svc = inp.svc;
    let severity = if svc.life_safety {
        Severity::Critical
    } else {
        Severity::Major
    };
    let (id, title, detail) = match ul {
        Some(u) if !u.pass => (
            format!("uplink-{}-{}", svc.id, floor.id),
            format!("{}: handsets on {} would not be heard by the network (uplink)", svc.name, floor.name),
            format!("Path: {}. The uplink margin is the downlink margin {:+.1} dB at every point; {}. About {:.1} dB more uplink would meet the targets.", b.path, b.shift_db, u.reasons.iter().map(|r| r.text.as_str()).collect::<Vec<_>>().join("; "), u.margin_needed_db),
        ),
        None if svc.life_safety => (
            format!("uplink-not-assessed-{}-{}", svc.id, floor.id),
            format!("{}: uplink on {} not assessed, so the floor is not passed", svc.name, floor.name),
            format!("Public-safety acceptance is two-way. {}.", capitalised(&b.why_not)),
        ),
        _ => return None,
    };
    Some(Finding {
        id,
        severity,
        floor: Some(floor.id.clone()),
        service: Some(svc.id.clone()),
        title,
        detail,
        plugin: "grading".into(),
        shortfall_db: ul.as_ref().map(|u| u.margin_needed_db),
        location_m: None,
        causes: Vec::new(),
        remedies: Vec::new(),
    })
}

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    c.next()
        .map(|f| f.to_uppercase().chain(c).collect())
        .unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A hand budget (values invented for the test, arithmetic by hand): handset 35 dBm,
    /// 0 dBi, 770/800 MHz (Δf = 20 log10(800/770) = 0.3320 dB, P.525), head end 10 dBm,
    /// required at the head end −100 dBm, downlink threshold −95 dBm:
    /// the shift compares the margins,
    /// (DL + 35 − 0.332 − 10) − (−100) − (DL − (−95)) = 124.668 − 95 = 29.668 dB.
    #[test]
    fn head_end_budget_by_hand() {
        let text = r#"
[site]
id = "u"
name = "u"
units = "metres"
report_date = "2026-01-15"
[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
outline = [[0, 0], [10, 0], [10, 10], [0, 10]]
[[services]]
id = "ps"
freq_mhz = 770.0
threshold_dbm = -95.0
target_general = 0.95
target_critical = 0.99
life_safety = true
uplink = { freq_mhz = 800.0, handset_power_dbm = 35.0, head_end_required_dbm = -100.0 }
[[transmitters]]
id = "T1"
service = "ps"
floor = "L1"
position = [5, 5]
power_dbm = 10.0
"#;
        let file = rfsite_model::SourceFile::new("site.toml", text);
        let l = rfsite_model::load(&file, &rfsite_model::MaterialLibrary::builtin());
        let site = l.site.expect("loads");
        let b = budget(&site, &site.services[0], -95.0);
        assert!(b.assessed, "{}", b.why_not);
        assert!((b.shift_db - 29.668).abs() < 0.01, "{}", b.shift_db);
    }
}
