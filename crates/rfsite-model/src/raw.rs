//! Stage one: the site file as written, every value with its byte span.
//!
//! Nearly every field is optional here so that stage two can report every missing or
//! wrong value at once, with its location, instead of stopping at the first.

use serde::Deserialize;
use toml::Spanned;

/// A spanned value.
pub type S<T> = Spanned<T>;
/// A point as written: `[x, y]`.
pub type RawPoint = Vec<f64>;

/// The whole `site.toml`.
#[derive(Debug, Deserialize, Default)]
pub struct RawProject {
    /// `[site]`
    pub site: Option<S<RawSiteMeta>>,
    /// `[prediction]`
    pub prediction: Option<S<RawPrediction>>,
    /// `[[revisions]]`
    #[serde(default)]
    pub revisions: Vec<S<RawRevision>>,
    /// `[[materials]]`
    #[serde(default)]
    pub materials: Vec<S<RawMaterial>>,
    /// `[[floors]]`
    #[serde(default)]
    pub floors: Vec<S<RawFloor>>,
    /// `[[walls]]`
    #[serde(default)]
    pub walls: Vec<S<RawWall>>,
    /// `[[openings]]`
    #[serde(default)]
    pub openings: Vec<S<RawOpening>>,
    /// `[[zones]]`
    #[serde(default)]
    pub zones: Vec<S<RawZone>>,
    /// `[[services]]`
    #[serde(default)]
    pub services: Vec<S<RawService>>,
    /// `[[transmitters]]`
    #[serde(default)]
    pub transmitters: Vec<S<RawTransmitter>>,
    /// `[[donors]]`
    #[serde(default)]
    pub donors: Vec<S<RawDonor>>,
    /// `[[surveys]]`
    #[serde(default)]
    pub surveys: Vec<S<RawSurvey>>,
    /// `[[probes]]`
    #[serde(default)]
    pub probes: Vec<S<RawProbe>>,
    /// `[[what_if]]`: remediation options the user declares as changes to the site.
    #[serde(default)]
    pub what_if: Vec<S<RawWhatIf>>,
    /// `[plugins.<id>]`: each plugin's own table, uninterpreted here.
    #[serde(default)]
    pub plugins: Option<S<toml::Table>>,
}

/// `[site]`
#[derive(Debug, Deserialize, Default)]
pub struct RawSiteMeta {
    pub id: Option<S<String>>,
    pub name: Option<S<String>>,
    pub client: Option<S<String>>,
    pub address: Option<S<String>>,
    pub author: Option<S<String>>,
    pub reviewer: Option<S<String>>,
    pub report_date: Option<S<String>>,
    pub revision: Option<S<String>>,
    pub units: Option<S<String>>,
    pub north_deg: Option<S<f64>>,
    pub building: Option<S<String>>,
}

/// `[prediction]`
#[derive(Debug, Deserialize, Default)]
pub struct RawPrediction {
    pub grid_step: Option<S<f64>>,
    pub receiver_height: Option<S<f64>>,
    pub combine: Option<S<String>>,
    pub shadowing_sigma_db: Option<S<f64>>,
    pub model: Option<S<String>>,
}

/// `[[revisions]]`
#[derive(Debug, Deserialize, Default)]
pub struct RawRevision {
    pub revision: Option<S<String>>,
    pub date: Option<S<String>>,
    pub note: Option<S<String>>,
}

/// `[[materials]]`: a site-defined material, or an override of a library one.
#[derive(Debug, Deserialize, Default)]
pub struct RawMaterial {
    pub id: Option<S<String>>,
    pub name: Option<S<String>>,
    pub class: Option<S<String>>,
    pub source: Option<S<String>>,
    /// `[[freq_mhz, loss_db], ...]`
    pub loss_db: Option<S<Vec<Vec<f64>>>>,
    /// Relative permittivity (real part) for a slab material.
    pub permittivity: Option<S<f64>>,
    /// Conductivity in S/m for a slab material.
    pub conductivity: Option<S<f64>>,
    /// Use an ITU-R P.2040 material by id.
    pub itu: Option<S<String>>,
    /// Layered assembly.
    pub layers: Option<S<Vec<S<RawLayer>>>>,
    /// Reflection loss in dB (empirical entries), `[[freq_mhz, dB], ...]`.
    pub reflection_loss_db: Option<S<Vec<Vec<f64>>>>,
}

/// One layer of a layered material.
#[derive(Debug, Deserialize, Default)]
pub struct RawLayer {
    pub material: Option<S<String>>,
    pub thickness: Option<S<f64>>,
}

/// `[[floors]]`
#[derive(Debug, Deserialize, Default)]
pub struct RawFloor {
    pub id: Option<S<String>>,
    pub name: Option<S<String>>,
    pub elevation: Option<S<f64>>,
    pub height: Option<S<f64>>,
    pub slab_material: Option<S<String>>,
    pub slab_thickness: Option<S<f64>>,
    pub outline: Option<S<Vec<S<RawPoint>>>>,
    pub plan_image: Option<S<String>>,
    /// Site units per image pixel.
    pub plan_scale: Option<S<f64>>,
    /// Site coordinates of the image's lower-left corner.
    pub plan_offset: Option<S<RawPoint>>,
    /// `[floors.cad]`: the floor's walls from a DXF drawing.
    pub cad: Option<S<RawCadRef>>,
}

/// `[floors.cad]`: a DXF drawing and its layer mapping; the placement keys override the
/// mapping's `[drawing]` table.
#[derive(Debug, Deserialize, Default)]
pub struct RawCadRef {
    pub file: Option<S<String>>,
    pub map: Option<S<String>>,
    pub units: Option<S<String>>,
    pub scale: Option<S<f64>>,
    pub rotation_deg: Option<S<f64>>,
    pub offset: Option<S<RawPoint>>,
}

/// `[[walls]]`
#[derive(Debug, Deserialize, Default)]
pub struct RawWall {
    pub id: Option<S<String>>,
    pub floor: Option<S<String>>,
    pub material: Option<S<String>>,
    pub thickness: Option<S<f64>>,
    pub points: Option<S<Vec<S<RawPoint>>>>,
    pub closed: Option<S<bool>>,
}

/// `[[openings]]`
#[derive(Debug, Deserialize, Default)]
pub struct RawOpening {
    pub id: Option<S<String>>,
    pub wall: Option<S<String>>,
    pub kind: Option<S<String>>,
    pub material: Option<S<String>>,
    pub thickness: Option<S<f64>>,
    /// Distance along the wall from its first point to the opening's near edge.
    pub offset: Option<S<f64>>,
    pub width: Option<S<f64>>,
}

/// `[[zones]]`
#[derive(Debug, Deserialize, Default)]
pub struct RawZone {
    pub id: Option<S<String>>,
    pub floor: Option<S<String>>,
    pub name: Option<S<String>>,
    pub kind: Option<S<String>>,
    pub polygon: Option<S<Vec<S<RawPoint>>>>,
}

/// `[[services]]`
#[derive(Debug, Deserialize, Default)]
pub struct RawService {
    pub id: Option<S<String>>,
    pub name: Option<S<String>>,
    pub freq_mhz: Option<S<f64>>,
    pub metric: Option<S<String>>,
    pub threshold_dbm: Option<S<f64>>,
    pub target_general: Option<S<f64>>,
    pub target_critical: Option<S<f64>>,
    pub design_margin_db: Option<S<f64>>,
    pub life_safety: Option<S<bool>>,
    pub rules: Option<S<String>>,
    pub bandwidth_khz: Option<S<f64>>,
    pub noise_figure_db: Option<S<f64>>,
    pub receiver_floor_dbm: Option<S<f64>>,
    pub uplink: Option<S<RawUplink>>,
}

/// `[[services]] uplink = { ... }`.
#[derive(Debug, Deserialize, Default)]
pub struct RawUplink {
    pub freq_mhz: Option<S<f64>>,
    pub handset_power_dbm: Option<S<f64>>,
    pub handset_gain_dbi: Option<S<f64>>,
    pub head_end_required_dbm: Option<S<f64>>,
}

/// `[[donors]] serving_site = { ... }`.
#[derive(Debug, Deserialize, Default)]
pub struct RawServingSite {
    pub eirp_dbm: Option<S<f64>>,
    pub path_loss_db: Option<S<f64>>,
    pub distance: Option<S<f64>>,
    pub azimuth_deg: Option<S<f64>>,
    pub rx_gain_dbi: Option<S<f64>>,
    pub noise_floor_dbm: Option<S<f64>>,
    pub uplink_required_dbm: Option<S<f64>>,
}

/// `[[donors]] donor_antenna = { ... }`.
#[derive(Debug, Deserialize, Default)]
pub struct RawDonorAntenna {
    pub floor: Option<S<String>>,
    pub position: Option<S<RawPoint>>,
    pub height: Option<S<f64>>,
    pub gain_dbi: Option<S<f64>>,
    pub front_to_back_db: Option<S<f64>>,
    pub azimuth_deg: Option<S<f64>>,
    pub cable_loss_db: Option<S<f64>>,
    pub level_dbm: Option<S<f64>>,
}

/// `[[donors]] booster = { ... }`.
#[derive(Debug, Deserialize, Default)]
pub struct RawBooster {
    pub uplink_gain_db: Option<S<f64>>,
    pub downlink_gain_db: Option<S<f64>>,
    pub noise_figure_db: Option<S<f64>>,
    pub channels: Option<S<i64>>,
    pub channel_bw_khz: Option<S<f64>>,
    pub max_composite_dbm: Option<S<f64>>,
    pub back_off_db: Option<S<f64>>,
}

/// `[[transmitters]]`
#[derive(Debug, Deserialize, Default)]
pub struct RawTransmitter {
    pub id: Option<S<String>>,
    pub service: Option<S<String>>,
    pub floor: Option<S<String>>,
    pub position: Option<S<RawPoint>>,
    pub height: Option<S<f64>>,
    pub power_dbm: Option<S<f64>>,
    pub cable_loss_db: Option<S<f64>>,
    pub connector_loss_db: Option<S<f64>>,
    pub antenna_gain_dbi: Option<S<f64>>,
    pub pattern: Option<S<String>>,
    pub azimuth_deg: Option<S<f64>>,
    pub downtilt_deg: Option<S<f64>>,
}

/// `[[donors]]`: an outdoor signal arriving at a facade.
#[derive(Debug, Deserialize, Default)]
pub struct RawDonor {
    pub id: Option<S<String>>,
    pub service: Option<S<String>>,
    pub level_dbm: Option<S<f64>>,
    pub floors: Option<S<Vec<S<String>>>>,
    pub facade: Option<S<Vec<S<String>>>>,
    pub elevation_deg: Option<S<f64>>,
    pub direction_deg: Option<S<f64>>,
    pub serving_site: Option<S<RawServingSite>>,
    pub donor_antenna: Option<S<RawDonorAntenna>>,
    pub booster: Option<S<RawBooster>>,
}

/// `[[surveys]]`: a measurement CSV file.
#[derive(Debug, Deserialize, Default)]
pub struct RawSurvey {
    pub file: Option<S<String>>,
    pub floor: Option<S<String>>,
    pub service: Option<S<String>>,
    pub columns: Option<S<toml::Table>>,
    pub position_units: Option<S<String>>,
}

/// `[[probes]]`: an in-situ material measurement.
#[derive(Debug, Deserialize, Default)]
pub struct RawProbe {
    pub material: Option<S<String>>,
    pub freq_mhz: Option<S<f64>>,
    pub clear_dbm: Option<S<f64>>,
    pub through_dbm: Option<S<f64>>,
    pub distance: Option<S<f64>>,
    pub angle_deg: Option<S<f64>>,
    pub note: Option<S<String>>,
}

/// `[[what_if]]`: one option, a set of changes to the site.
#[derive(Debug, Deserialize, Default)]
pub struct RawWhatIf {
    pub id: Option<S<String>>,
    pub title: Option<S<String>>,
    pub note: Option<S<String>>,
    /// Services it is meant for (all when absent).
    pub services: Option<S<Vec<S<String>>>>,
    #[serde(default)]
    pub set_material: Vec<S<RawSetMaterial>>,
    pub remove_walls: Option<S<Vec<S<String>>>>,
    #[serde(default)]
    pub set_power: Vec<S<RawSetPower>>,
    #[serde(default)]
    pub add_transmitters: Vec<S<RawTransmitter>>,
}

/// `set_material = [{ walls = [...], material = "...", thickness = ... }]`
#[derive(Debug, Deserialize, Default)]
pub struct RawSetMaterial {
    pub walls: Option<S<Vec<S<String>>>>,
    pub material: Option<S<String>>,
    pub thickness: Option<S<f64>>,
}

/// `set_power = [{ transmitter = "...", power_dbm = ... }]`
#[derive(Debug, Deserialize, Default)]
pub struct RawSetPower {
    pub transmitter: Option<S<String>>,
    pub power_dbm: Option<S<f64>>,
}
