//! `[[services]] uplink` and the donor's `serving_site`, `donor_antenna` and `booster`
//! tables: numbers checked against their physical ranges, defaults with their sources.

use std::ops::Range;

use super::refs::floor_ref;
use super::V;
use crate::raw::*;
use crate::twoway::*;

/// A number of `table` in `lo..=hi`, or `default` when absent; an error (with `hint`)
/// when outside or when absent without a default.
struct Num<'a> {
    table: Range<usize>,
    what: &'a str,
}

impl Num<'_> {
    fn get(
        &self,
        v: &mut V<'_>,
        x: &Option<S<f64>>,
        field: &str,
        (lo, hi): (f64, f64),
        default: Option<f64>,
        hint: &str,
    ) -> Option<f64> {
        let Some(s) = x else {
            if default.is_none() {
                v.error(
                    self.table.clone(),
                    format!("{} is missing `{field}`", self.what),
                    Some(hint.into()),
                );
            }
            return default;
        };
        let n = *s.get_ref();
        if (lo..=hi).contains(&n) {
            return Some(n);
        }
        v.error(
            s.span(),
            format!("{}: `{field}` {n} is outside {lo} to {hi}", self.what),
            Some(hint.into()),
        );
        None
    }
}

const DBM: (f64, f64) = (-200.0, 100.0);
const GAIN: (f64, f64) = (-30.0, 60.0);
const LOSS: (f64, f64) = (0.0, 100.0);

/// The service's `uplink` table, or `None` (the uplink is then not assessed).
pub(super) fn uplink(
    v: &mut V<'_>,
    raw: &Option<S<RawUplink>>,
    life_safety: bool,
    service: &str,
) -> Option<Uplink> {
    let r = raw.as_ref()?;
    let what = format!("service `{service}` uplink");
    let n = Num {
        table: r.span(),
        what: &what,
    };
    let u = r.get_ref();
    let freq = n.get(v, &u.freq_mhz, "freq_mhz", (1.0, 100_000.0), None,
        "give the handset transmit frequency, e.g. `freq_mhz = 799.0` (from the licence or the band plan)");
    let (default_power, source) = if life_safety {
        (HANDSET_POWER_LIFE_SAFETY_DBM, "rfsite default for a portable radio, about 3 W (from memory): take the agency's radio data sheet")
    } else {
        (
            HANDSET_POWER_CELLULAR_DBM,
            "rfsite default: 23 dBm, UE power class 3 (3GPP TS 36.101)",
        )
    };
    let power = n.get(
        v,
        &u.handset_power_dbm,
        "handset_power_dbm",
        (-30.0, 50.0),
        Some(default_power),
        "give the handset's conducted power in dBm, e.g. 23 for a class 3 phone",
    );
    let gain = n.get(
        v,
        &u.handset_gain_dbi,
        "handset_gain_dbi",
        GAIN,
        Some(HANDSET_GAIN_DBI),
        "give the handset antenna gain in dBi (0 for an isotropic reference; lower for body loss)",
    );
    let head_end = match &u.head_end_required_dbm {
        Some(_) => n.get(
            v,
            &u.head_end_required_dbm,
            "head_end_required_dbm",
            DBM,
            None,
            "give the uplink level the head end needs at its input, dBm",
        ),
        None => None,
    };
    Some(Uplink {
        freq_mhz: freq?,
        handset_power_dbm: power?,
        handset_power_source: if u.handset_power_dbm.is_some() {
            "site.toml".into()
        } else {
            source.into()
        },
        handset_gain_dbi: gain?,
        head_end_required_dbm: head_end,
    })
}

/// The donor's serving site.
pub(super) fn serving_site(v: &mut V<'_>, d: &RawDonor, what: &str) -> Option<ServingSite> {
    let r = d.serving_site.as_ref()?;
    let what = format!("{what} serving_site");
    let n = Num {
        table: r.span(),
        what: &what,
    };
    let s = r.get_ref();
    let eirp = n.get(v, &s.eirp_dbm, "eirp_dbm", DBM, None, "give the site's downlink EIRP towards the building, e.g. `eirp_dbm = 50.0` (from the licensee)");
    let path_loss = match &s.path_loss_db {
        Some(_) => n.get(
            v,
            &s.path_loss_db,
            "path_loss_db",
            (0.0, 300.0),
            None,
            "give the path loss between the site and the roof antenna in dB",
        ),
        None => None,
    };
    let distance = s
        .distance
        .as_ref()
        .and_then(|x| v.length(x, "distance", false));
    let azimuth = match &s.azimuth_deg {
        Some(_) => n.get(
            v,
            &s.azimuth_deg,
            "azimuth_deg",
            (0.0, 360.0),
            None,
            "give the plan direction of the site, 0 to 360 degrees counter-clockwise from +x",
        ),
        None => None,
    };
    let rx_gain = n.get(
        v,
        &s.rx_gain_dbi,
        "rx_gain_dbi",
        GAIN,
        None,
        "give the site's receive antenna gain less its feeder loss, dBi (from the licensee)",
    );
    let floor = n.get(
        v,
        &s.noise_floor_dbm,
        "noise_floor_dbm",
        DBM,
        None,
        "give the site receiver's noise floor per channel, dBm (from the licensee)",
    );
    let needed = n.get(
        v,
        &s.uplink_required_dbm,
        "uplink_required_dbm",
        DBM,
        None,
        "give the uplink level the site receiver needs per channel, dBm (from the licensee)",
    );
    Some(ServingSite {
        eirp_dbm: eirp?,
        path_loss_db: path_loss,
        distance_m: distance,
        azimuth_deg: azimuth,
        rx_gain_dbi: rx_gain?,
        noise_floor_dbm: floor?,
        uplink_required_dbm: needed?,
    })
}

/// The donor's roof antenna.
pub(super) fn donor_antenna(
    v: &mut V<'_>,
    d: &RawDonor,
    floor_names: &[String],
    what: &str,
) -> Option<DonorAntenna> {
    let r = d.donor_antenna.as_ref()?;
    let what = format!("{what} donor_antenna");
    let n = Num {
        table: r.span(),
        what: &what,
    };
    let a = r.get_ref();
    let floor = match &a.floor {
        Some(_) => {
            floor_ref(v, floor_names, &a.floor, r.span(), &what).map(|i| floor_names[i].clone())
        }
        None => floor_names.last().cloned(),
    };
    let position = match &a.position {
        Some(p) => v.point(p),
        None => {
            v.error(
                r.span(),
                format!("{what} is missing `position`"),
                Some(
                    "give its plan position on the roof, `position = [x, y]` in site units".into(),
                ),
            );
            None
        }
    };
    let height = match &a.height {
        Some(h) => v.length(h, "height", true),
        None => Some(3.0),
    };
    let gain = n.get(
        v,
        &a.gain_dbi,
        "gain_dbi",
        GAIN,
        None,
        "give the donor antenna's gain towards the serving site, dBi (data sheet)",
    );
    let ftb = n.get(
        v,
        &a.front_to_back_db,
        "front_to_back_db",
        LOSS,
        Some(20.0),
        "give the front-to-back ratio in dB (data sheet)",
    );
    let azimuth = match &a.azimuth_deg {
        Some(_) => n.get(
            v,
            &a.azimuth_deg,
            "azimuth_deg",
            (0.0, 360.0),
            None,
            "give the plan direction it points to, 0 to 360 degrees counter-clockwise from +x",
        ),
        None => None,
    };
    let cable = n.get(
        v,
        &a.cable_loss_db,
        "cable_loss_db",
        LOSS,
        Some(0.0),
        "give the loss of its cable to the booster in dB",
    );
    let level = match &a.level_dbm {
        Some(_) => n.get(
            v,
            &a.level_dbm,
            "level_dbm",
            DBM,
            None,
            "give the level measured at the antenna position, dBm",
        ),
        None => None,
    };
    Some(DonorAntenna {
        floor: floor?,
        position: position?,
        height_m: height?,
        gain_dbi: gain?,
        front_to_back_db: ftb?,
        azimuth_deg: azimuth,
        cable_loss_db: cable?,
        level_dbm: level,
    })
}

/// The donor's booster.
pub(super) fn booster(v: &mut V<'_>, d: &RawDonor, what: &str) -> Option<Booster> {
    let r = d.booster.as_ref()?;
    let what = format!("{what} booster");
    let n = Num {
        table: r.span(),
        what: &what,
    };
    let b = r.get_ref();
    let ul = n.get(
        v,
        &b.uplink_gain_db,
        "uplink_gain_db",
        (0.0, 120.0),
        None,
        "give the booster's uplink gain in dB",
    );
    let dl = match &b.downlink_gain_db {
        Some(_) => n.get(
            v,
            &b.downlink_gain_db,
            "downlink_gain_db",
            (0.0, 120.0),
            None,
            "give the booster's downlink gain in dB",
        ),
        None => None,
    };
    let nf = n.get(
        v,
        &b.noise_figure_db,
        "noise_figure_db",
        (0.0, 30.0),
        None,
        "give the booster's uplink noise figure in dB (data sheet)",
    );
    let channels = match &b.channels {
        Some(c) if (1..=1000).contains(c.get_ref()) => Some(*c.get_ref() as u32),
        Some(c) => {
            v.error(
                c.span(),
                format!("{what}: `channels` {} is outside 1 to 1000", c.get_ref()),
                Some("give the number of channels the booster carries".into()),
            );
            None
        }
        None => Some(1),
    };
    let bw = n.get(
        v,
        &b.channel_bw_khz,
        "channel_bw_khz",
        (0.1, 1_000_000.0),
        None,
        "give the channel bandwidth in kHz, e.g. 12.5",
    );
    let rated = n.get(
        v,
        &b.max_composite_dbm,
        "max_composite_dbm",
        DBM,
        None,
        "give the booster's rated composite output, dBm (data sheet)",
    );
    let back_off = n.get(
        v,
        &b.back_off_db,
        "back_off_db",
        LOSS,
        Some(3.0),
        "give the back-off from the rated output in dB",
    );
    Some(Booster {
        uplink_gain_db: ul?,
        downlink_gain_db: dl,
        noise_figure_db: nf?,
        channels: channels?,
        channel_bw_khz: bw?,
        max_composite_dbm: rated?,
        back_off_db: back_off?,
    })
}
