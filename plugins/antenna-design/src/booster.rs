//! The off-air booster behind a designed system: downlink gain from the roof level to the
//! output the antennas need, composite output against the rating, the uplink gain that
//! balances the links within the noise the serving site tolerates, the isolation from the
//! donor antenna to every server antenna and the largest stable gain, and the exposure
//! distances at the designed EIRPs. Formulas in `rfsite_physics::booster`.

use rfsite_geometry::Point2;
use rfsite_model::{Booster, Donor, DonorAntenna, Service, ServingSite, Site, Transmitter};
use rfsite_physics::p2040::Polarization;
use rfsite_physics::{antenna, booster as bst, exposure, fspl};
use rfsite_plugin::{BoosterDesign, ExposureDistance, IsolationPath, UplinkBudget};

/// The donor of `svc` with an antenna and a booster, if any.
pub fn donor_of<'a>(
    site: &'a Site,
    svc: &Service,
) -> Option<(&'a Donor, &'a DonorAntenna, &'a Booster)> {
    site.donors
        .iter()
        .filter(|d| d.service == svc.id)
        .find_map(|d| Some((d, d.antenna.as_ref()?, d.booster.as_ref()?)))
}

/// The level at the donor antenna and where it comes from.
fn roof_level(svc: &Service, a: &DonorAntenna, s: Option<&ServingSite>) -> Option<(f64, String)> {
    if let Some(l) = a.level_dbm {
        return Some((l, "measured at the donor antenna (site.toml)".into()));
    }
    let s = s?;
    if let Some(pl) = s.path_loss_db {
        return Some((
            s.eirp_dbm - pl,
            "serving site EIRP less the path loss (site.toml)".into(),
        ));
    }
    let d = s.distance_m?;
    Some((
        s.eirp_dbm - fspl::fspl_db(svc.freq_mhz, d),
        "serving site EIRP less free-space loss over the distance (ITU-R P.525; optimistic)".into(),
    ))
}

/// The booster design for `svc` fed to `servers` (the service's antennas with the option),
/// or `None` when the donor data do not describe one.
/// `limits` = (isolation margin over the gain, largest noise rise at the serving site), dB.
pub fn design(
    site: &Site,
    svc: &Service,
    servers: &[Transmitter],
    up: &UplinkBudget,
    limits: (f64, f64),
) -> Option<BoosterDesign> {
    let (d, a, b) = donor_of(site, svc)?;
    let (roof, roof_src) = roof_level(svc, a, d.serving_site.as_ref())?;
    let output = servers.iter().map(|t| t.power_dbm).reduce(f64::max)?;
    let input = roof + a.gain_dbi - a.cable_loss_db;
    let downlink_gain = b
        .downlink_gain_db
        .unwrap_or_else(|| bst::downlink_gain_db(output, roof, a.gain_dbi, a.cable_loss_db));
    let composite = bst::composite_dbm(output, b.channels).ok()?;
    let allowed = b.max_composite_dbm - b.back_off_db;
    let isolation: Vec<IsolationPath> = servers
        .iter()
        .filter_map(|t| isolation_to(site, svc, a, t))
        .collect();
    let min_iso = isolation.iter().map(|p| p.isolation_db).reduce(f64::min)?;
    let (margin, max_rise) = limits;
    let max_stable = bst::max_stable_gain_db(min_iso, margin);
    let (noise_gain, rise) = noise(d.serving_site.as_ref(), (a, b), up, svc, max_rise);
    let stable = downlink_gain.max(b.uplink_gain_db) <= max_stable;
    let balanced = b.uplink_gain_db - up.shift_db;
    let designed_ul = [balanced, noise_gain, max_stable]
        .into_iter()
        .filter(|g| g.is_finite())
        .fold(f64::INFINITY, f64::min);
    Some(BoosterDesign {
        donor: d.id.clone(),
        donor_position: [
            site.units.from_m(a.position.x),
            site.units.from_m(a.position.y),
        ],
        donor_height_m: a.height_m,
        roof_level_dbm: roof,
        roof_level_source: roof_src,
        input_per_channel_dbm: input,
        output_per_channel_dbm: output,
        downlink_gain_db: downlink_gain,
        channels: b.channels,
        composite_dbm: composite,
        allowed_composite_dbm: allowed,
        exceeded: composite > allowed,
        uplink_gain_db: b.uplink_gain_db,
        balanced_uplink_gain_db: balanced,
        noise_limited_gain_db: noise_gain,
        designed_uplink_gain_db: designed_ul,
        max_noise_rise_db: max_rise,
        noise_rise_db: rise,
        isolation,
        isolation_margin_db: margin,
        max_stable_gain_db: max_stable,
        stable,
        fix: if stable {
            String::new()
        } else {
            format!("the gain exceeds the largest stable gain {max_stable:.1} dB: move the donor antenna further from the server antennas or behind more of the roof structure, shield it, or lower the gain")
        },
        exposure: exposure_lines(svc, a, b, servers, up),
    })
}

/// The largest uplink gain within the noise-rise limit, and the rise at the site's gain.
fn noise(
    s: Option<&ServingSite>,
    (a, b): (&DonorAntenna, &Booster),
    up: &UplinkBudget,
    svc: &Service,
    max_rise: f64,
) -> (f64, f64) {
    let (Some(s), Some(ul)) = (s, svc.uplink.as_ref()) else {
        return (f64::NAN, up.noise_rise_db.unwrap_or(f64::NAN));
    };
    let link_dl = match (a.level_dbm, s.path_loss_db, s.distance_m) {
        (_, Some(pl), _) => pl,
        (Some(l), _, _) => s.eirp_dbm - l,
        (_, _, Some(d)) => fspl::fspl_db(svc.freq_mhz, d),
        _ => return (f64::NAN, f64::NAN),
    };
    let df = bst::frequency_offset_db(svc.freq_mhz, ul.freq_mhz).unwrap_or(0.0);
    let loss = a.cable_loss_db - a.gain_dbi + link_dl + df - s.rx_gain_dbi;
    let bw = b.channel_bw_khz * 1e3;
    let gmax =
        bst::max_gain_for_noise_rise_db(bw, b.noise_figure_db, loss, s.noise_floor_dbm, max_rise)
            .unwrap_or(f64::NAN);
    let rise = bst::booster_noise_out_dbm(bw, b.noise_figure_db, b.uplink_gain_db)
        .map(|n| bst::noise_rise_db(bst::noise_delta_at_receiver_db(n, loss, s.noise_floor_dbm)))
        .unwrap_or(f64::NAN);
    (gmax, rise)
}

/// Height of a point `h` above floor `fi`'s finished level, m.
fn z_of(site: &Site, floor: &str, h: f64) -> Option<(usize, f64)> {
    let fi = site.floor_index(floor)?;
    Some((fi, site.floors[fi].elevation_m + h))
}

/// Isolation from the donor antenna (on the roof over its floor) to server antenna `t`:
/// free space over the straight line + the slabs crossed (the roof, taken as the top
/// floor's slab material until the site has a roof key, and each slab between) − the donor
/// antenna's back-lobe gain (gain less front-to-back ratio: the server antennas lie behind
/// and below it; common practice) − the server's gain towards the donor + both cables.
fn isolation_to(
    site: &Site,
    svc: &Service,
    a: &DonorAntenna,
    t: &Transmitter,
) -> Option<IsolationPath> {
    let (di, droof) = z_of(site, &a.floor, 0.0)?;
    let dz_top = site.floors[di].height_m + a.height_m;
    let (ti, tz) = z_of(site, &t.floor, t.height_m)?;
    let dh = Point2::new(a.position.x - t.position.x, a.position.y - t.position.y);
    let dz = droof + dz_top - tz;
    let dist = (dh.x * dh.x + dh.y * dh.y + dz * dz).sqrt().max(0.1);
    let slabs = slabs_between(site, svc.freq_mhz, ti, di);
    let theta = (dz / dist).clamp(-1.0, 1.0).acos().to_degrees();
    let server_gain = antenna::omni_ceiling_gain_dbi(t.antenna_gain_dbi, theta);
    let donor_gain = a.gain_dbi - a.front_to_back_db;
    let cables = a.cable_loss_db + t.cable_loss_db + t.connector_loss_db;
    let iso = bst::isolation_db(dist, svc.freq_mhz, slabs, donor_gain, server_gain, cables).ok()?;
    Some(IsolationPath {
        antenna: t.id.clone(),
        distance_m: dist,
        slabs_db: slabs,
        donor_gain_dbi: donor_gain,
        server_gain_dbi: server_gain,
        cables_db: cables,
        isolation_db: iso,
    })
}

/// Normal-incidence loss of the slabs over floors `from+1 ..= to` and the roof over `to`.
fn slabs_between(site: &Site, freq_mhz: f64, from: usize, to: usize) -> f64 {
    let slab = |material: &str, thickness: f64| {
        site.materials.get(material).map_or(0.0, |m| {
            m.crossing_loss(freq_mhz, thickness, 1.0, Polarization::Tm)
                .loss_db
        })
    };
    let between: f64 = site
        .floors
        .iter()
        .take(to + 1)
        .skip(from + 1)
        .map(|f| slab(&f.slab_material, f.slab_thickness_m))
        .sum();
    let roof = site
        .floors
        .get(to + 1)
        .or(site.floors.last())
        .map_or(0.0, |f| slab(&f.slab_material, f.slab_thickness_m));
    between + roof
}

/// Far-field compliance distances, general-public limits: the donor antenna at the
/// booster's rated uplink output (worst case) and each server antenna at its composite EIRP.
fn exposure_lines(
    svc: &Service,
    a: &DonorAntenna,
    b: &Booster,
    servers: &[Transmitter],
    _up: &UplinkBudget,
) -> Vec<ExposureDistance> {
    let ch = 10.0 * f64::from(b.channels.max(1)).log10();
    let f_ul = svc.uplink.as_ref().map_or(svc.freq_mhz, |u| u.freq_mhz);
    let mut v = vec![(
        "donor antenna".to_string(),
        b.max_composite_dbm - a.cable_loss_db + a.gain_dbi,
        f_ul,
    )];
    v.extend(
        servers
            .iter()
            .map(|t| (t.id.clone(), t.eirp_dbm() + ch, svc.freq_mhz)),
    );
    let mut out = Vec::new();
    for (id, eirp, f) in v {
        for lim in [
            exposure::ExposureLimit::FccGeneral,
            exposure::ExposureLimit::IcnirpGeneral,
        ] {
            let Ok(s) = exposure::limit_w_per_m2(lim, f) else {
                continue;
            };
            let d = exposure::compliance_distance_m(10f64.powf((eirp - 30.0) / 10.0), s);
            out.push(ExposureDistance {
                antenna: id.clone(),
                eirp_dbm: eirp,
                freq_mhz: f,
                limit: lim.id().to_string(),
                distance_m: d,
                near_field: d < exposure::far_field_min_distance_m(f, None),
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    const SITE: &str = r#"
[site]
id = "iso"
name = "Isolation"
units = "metres"
report_date = "2026-01-15"
[[floors]]
id = "L1"
elevation = 0.0
height = 3.0
slab_material = "concrete"
slab_thickness = 0.2
outline = [[0, 0], [10, 0], [10, 10], [0, 10]]
[[services]]
id = "ps"
freq_mhz = 770.0
threshold_dbm = -95.0
target_general = 0.95
target_critical = 0.99
[[transmitters]]
id = "S1"
service = "ps"
floor = "L1"
position = [5, 5]
height = 2.5
power_dbm = 10.0
cable_loss_db = 2.0
connector_loss_db = 0.5
antenna_gain_dbi = 2.0
[[donors]]
id = "d"
service = "ps"
level_dbm = -70.0
donor_antenna = { position = [5, 5], height = 1.0, gain_dbi = 11.0, front_to_back_db = 20.0, cable_loss_db = 3.0 }
booster = { uplink_gain_db = 50.0, noise_figure_db = 5.0, channel_bw_khz = 12.5, max_composite_dbm = 33.0 }
"#;

    /// The donor antenna 1 m above the roof, the server 0.5 m under the 3 m ceiling,
    /// straight below: 1.5 m through one 200 mm concrete roof slab. Isolation by hand =
    /// free space (ITU-R P.525: 32.4478 + 20 log10 770 + 20 log10 0.0015 = 33.6994 dB)
    /// plus the slab's loss (the material library's normal-incidence value), minus the
    /// donor's back lobe (11 − 20 = −9 dBi), minus the server's gain straight up (the
    /// dipole null, filled 20 dB below the 2 dBi peak: −18 dBi), plus cables 3 + 2 + 0.5 dB.
    #[test]
    fn isolation_through_a_slab_by_hand() {
        let file = rfsite_model::SourceFile::new("site.toml", SITE);
        let l = rfsite_model::load(&file, &rfsite_model::MaterialLibrary::builtin());
        let site = l.site.unwrap_or_else(|| panic!("{:?}", l.diagnostics));
        let svc = &site.services[0];
        let (_, a, _) = donor_of(&site, svc).unwrap();
        let p = isolation_to(&site, svc, a, &site.transmitters[0]).unwrap();
        let slab = site
            .materials
            .get("concrete")
            .unwrap()
            .crossing_loss(770.0, 0.2, 1.0, Polarization::Tm)
            .loss_db;
        let fs = 32.4478 + 20.0 * 770f64.log10() + 20.0 * 0.0015f64.log10();
        assert!((fs - 33.6994).abs() < 1e-3);
        let expected = fs + slab - (-9.0) - (-18.0) + 5.5;
        assert!((p.distance_m - 1.5).abs() < 1e-9);
        assert!((p.slabs_db - slab).abs() < 1e-9);
        assert!(
            (p.isolation_db - expected).abs() < 0.01,
            "{} vs {expected}",
            p.isolation_db
        );
    }
}
