//! Two-way data: the uplink of a service (handset to network) and, per donor, the network
//! site that serves the building, a roof donor antenna and an off-air signal booster.
//! Everything here is optional in `site.toml`; what is missing makes the uplink "not
//! assessed", never a pass.

use rfsite_geometry::Point2;
use serde::Serialize;

/// Handset power of a cellular handset, dBm: 23 dBm, UE power class 3 (3GPP TS 36.101,
/// table 6.2.2-1).
pub const HANDSET_POWER_CELLULAR_DBM: f64 = 23.0;
/// Handset power of a public-safety portable radio, dBm: about 3 W (from memory: portables
/// are commonly rated 1 to 5 W); take the agency's radio data sheet.
pub const HANDSET_POWER_LIFE_SAFETY_DBM: f64 = 35.0;
/// Handset antenna gain, dBi: 0 dBi (from memory; body loss, often several dB, is not
/// included: lower it where the agency's practice says so).
pub const HANDSET_GAIN_DBI: f64 = 0.0;

/// `[[services]] uplink = { ... }`: how a handset reaches the network.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Uplink {
    /// Uplink (handset transmit) frequency, MHz.
    pub freq_mhz: f64,
    /// Handset conducted power, dBm.
    pub handset_power_dbm: f64,
    /// Where the handset power comes from ("site.toml" or the default's source).
    pub handset_power_source: String,
    /// Handset antenna gain, dBi.
    pub handset_gain_dbi: f64,
    /// For an in-building system fed by its own base station: the uplink level the head
    /// end needs at its input, dBm. `None` when the system is fed off-air (a donor's booster).
    pub head_end_required_dbm: Option<f64>,
}

/// `[[donors]] serving_site = { ... }`: the network site whose signal the donor is.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ServingSite {
    /// Downlink EIRP towards the building, dBm.
    pub eirp_dbm: f64,
    /// Path loss between the site and the donor antenna, dB, when known.
    pub path_loss_db: Option<f64>,
    /// Distance to the site, m (free-space path loss when no other figure is given).
    pub distance_m: Option<f64>,
    /// Plan direction of the site from the building, degrees counter-clockwise from +x.
    pub azimuth_deg: Option<f64>,
    /// Receive antenna gain of the site less its feeder loss, dBi.
    pub rx_gain_dbi: f64,
    /// The site receiver's noise floor per channel, dBm (at its input).
    pub noise_floor_dbm: f64,
    /// The uplink level the site receiver needs per channel, dBm (at its input).
    pub uplink_required_dbm: f64,
}

/// `[[donors]] donor_antenna = { ... }`: the roof antenna facing the serving site.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct DonorAntenna {
    /// Floor whose roof it stands on (the top floor when absent).
    pub floor: String,
    /// Plan position, m.
    #[serde(serialize_with = "crate::site::ser_point")]
    pub position: Point2,
    /// Height above the roof, m.
    pub height_m: f64,
    /// Gain towards the serving site, dBi.
    pub gain_dbi: f64,
    /// Front-to-back ratio, dB.
    pub front_to_back_db: f64,
    /// Plan direction it points to, degrees counter-clockwise from +x (the serving site's
    /// azimuth when absent).
    pub azimuth_deg: Option<f64>,
    /// Loss of its cable to the booster, dB.
    pub cable_loss_db: f64,
    /// Level at the antenna (isotropic), dBm, when measured on the roof.
    pub level_dbm: Option<f64>,
}

/// `[[donors]] booster = { ... }`: the off-air signal booster (bi-directional amplifier).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Booster {
    /// Uplink gain, dB.
    pub uplink_gain_db: f64,
    /// Downlink gain, dB (designed when absent).
    pub downlink_gain_db: Option<f64>,
    /// Noise figure, dB.
    pub noise_figure_db: f64,
    /// Channels carried.
    pub channels: u32,
    /// Channel bandwidth, kHz.
    pub channel_bw_khz: f64,
    /// Rated composite output, dBm.
    pub max_composite_dbm: f64,
    /// Back-off from the rated output, dB.
    pub back_off_db: f64,
}
