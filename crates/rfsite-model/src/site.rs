//! Stage two: the validated site that the rest of rfsite trusts. All lengths in metres.

use rfsite_geometry::{Point2, Segment};
use serde::Serialize;

use crate::material::MaterialLibrary;

/// Length units of a site file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Units {
    /// Metres.
    Metres,
    /// International feet (0.3048 m).
    Feet,
}

impl Units {
    /// Metres per site unit.
    pub fn to_m(&self) -> f64 {
        match self {
            Units::Metres => 1.0,
            Units::Feet => 0.3048,
        }
    }
    /// Short label: "m" or "ft".
    pub fn label(&self) -> &'static str {
        match self {
            Units::Metres => "m",
            Units::Feet => "ft",
        }
    }
    /// Converts metres to site units.
    pub fn from_m(&self, m: f64) -> f64 {
        m / self.to_m()
    }
    /// Parses the words a site file may use.
    pub fn parse(s: &str) -> Option<Units> {
        match s.trim().to_lowercase().as_str() {
            "m" | "metre" | "metres" | "meter" | "meters" => Some(Units::Metres),
            "ft" | "foot" | "feet" => Some(Units::Feet),
            _ => None,
        }
    }
}

/// Descriptive data of the site and the report.
#[derive(Debug, Clone, Serialize, Default)]
pub struct SiteMeta {
    /// Short id (file-name safe).
    pub id: String,
    /// Site name.
    pub name: String,
    /// Client.
    pub client: String,
    /// Address.
    pub address: String,
    /// Author of the assessment.
    pub author: String,
    /// Reviewer.
    pub reviewer: String,
    /// Report date, ISO `YYYY-MM-DD` (never the clock).
    pub report_date: String,
    /// Revision label.
    pub revision: String,
    /// Building type for entry loss: "traditional" or "thermally-efficient".
    pub building: String,
}

/// One entry of the revision history.
#[derive(Debug, Clone, Serialize)]
pub struct Revision {
    /// Label.
    pub revision: String,
    /// ISO date.
    pub date: String,
    /// What changed.
    pub note: String,
}

/// How several transmitters of one service combine at a point.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Combine {
    /// The strongest server alone (conservative for simulcast and distinct cells).
    Strongest,
    /// Power sum (non-coherent), for a DAS where every antenna carries the same signal.
    PowerSum,
}

/// Prediction settings.
#[derive(Debug, Clone, Serialize)]
pub struct Prediction {
    /// Grid step, m.
    pub grid_step_m: f64,
    /// Receiver height above the floor, m.
    pub receiver_height_m: f64,
    /// Combination of transmitters.
    pub combine: Combine,
    /// Log-normal shadowing standard deviation, dB.
    pub shadowing_sigma_db: f64,
    /// Whether the site gave `shadowing_sigma_db` (false: the default is in force).
    pub shadowing_sigma_given: bool,
    /// Which model the link budget grades: "multi-wall" or "free-space".
    pub model: String,
}

/// What a part of a wall is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum PartKind {
    /// Solid wall.
    Wall,
    /// Door.
    Door,
    /// Window.
    Window,
}

/// One straight piece of wall, door or window, in metres.
#[derive(Debug, Clone, Serialize)]
pub struct WallPart {
    /// Id of the wall (or opening) it belongs to.
    pub id: String,
    /// Geometry.
    #[serde(serialize_with = "ser_segment")]
    pub segment: Segment,
    /// Material id (resolved in the site's library).
    pub material: String,
    /// Thickness, m.
    pub thickness_m: f64,
    /// Wall, door or window.
    pub kind: PartKind,
}

fn ser_segment<S: serde::Serializer>(s: &Segment, ser: S) -> Result<S::Ok, S::Error> {
    use serde::ser::SerializeSeq;
    let mut q = ser.serialize_seq(Some(2))?;
    q.serialize_element(&[s.a.x, s.a.y])?;
    q.serialize_element(&[s.b.x, s.b.y])?;
    q.end()
}

fn ser_points<S: serde::Serializer>(p: &[Point2], ser: S) -> Result<S::Ok, S::Error> {
    use serde::ser::SerializeSeq;
    let mut q = ser.serialize_seq(Some(p.len()))?;
    for pt in p {
        q.serialize_element(&[pt.x, pt.y])?;
    }
    q.end()
}

pub(crate) fn ser_point<S: serde::Serializer>(p: &Point2, ser: S) -> Result<S::Ok, S::Error> {
    [p.x, p.y].serialize(ser)
}

/// Kind of a zone.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ZoneKind {
    /// General area.
    General,
    /// Critical area (stairs, fire command room, elevator lobby...).
    Critical,
    /// Excluded from grading (plant, void).
    Excluded,
}

impl ZoneKind {
    /// Label.
    pub fn label(&self) -> &'static str {
        match self {
            ZoneKind::General => "general",
            ZoneKind::Critical => "critical",
            ZoneKind::Excluded => "excluded",
        }
    }
}

/// A zone on a floor.
#[derive(Debug, Clone, Serialize)]
pub struct Zone {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Kind.
    pub kind: ZoneKind,
    /// Polygon, m.
    #[serde(serialize_with = "ser_points")]
    pub polygon: Vec<Point2>,
}

/// A floor (storey).
#[derive(Debug, Clone, Serialize)]
pub struct Floor {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Elevation of the finished floor, m.
    pub elevation_m: f64,
    /// Storey height (floor to floor), m.
    pub height_m: f64,
    /// Slab material under this floor (between it and the storey below).
    pub slab_material: String,
    /// Slab thickness, m.
    pub slab_thickness_m: f64,
    /// Outline polygon, m.
    #[serde(serialize_with = "ser_points")]
    pub outline: Vec<Point2>,
    /// Wall parts, doors and windows split out.
    pub parts: Vec<WallPart>,
    /// Zones.
    pub zones: Vec<Zone>,
    /// Background plan image (path relative to the site folder), if any.
    pub plan_image: Option<String>,
    /// Metres per image pixel.
    pub plan_m_per_px: f64,
    /// Plan position of the image's lower-left corner, m.
    #[serde(serialize_with = "ser_point")]
    pub plan_offset: Point2,
    /// The DXF drawing the floor's walls also come from, if any.
    pub cad: Option<CadRef>,
}

/// A floor's DXF drawing, as the site names it (paths relative to the site folder). The
/// placement values, when given, override the layer mapping's `[drawing]` table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CadRef {
    /// The DXF file.
    pub file: String,
    /// The layer mapping (TOML).
    pub map: String,
    /// Drawing units (`mm`, `cm`, `m`, `in`, `ft`).
    pub units: Option<String>,
    /// Extra scale.
    pub scale: Option<f64>,
    /// Rotation onto the site plan, degrees counter-clockwise.
    pub rotation_deg: Option<f64>,
    /// Where the drawing's origin lands on the site plan, m.
    pub offset_m: Option<(f64, f64)>,
}

impl Floor {
    /// Area of the outline, m².
    pub fn area_m2(&self) -> f64 {
        rfsite_geometry::polygon_area(&self.outline)
    }
    /// Zone kind at a point: the most restrictive zone containing it, else general.
    pub fn zone_kind_at(&self, p: Point2) -> ZoneKind {
        let mut k = ZoneKind::General;
        for z in &self.zones {
            if rfsite_geometry::point_in_polygon(p, &z.polygon) {
                match z.kind {
                    ZoneKind::Excluded => return ZoneKind::Excluded,
                    ZoneKind::Critical => k = ZoneKind::Critical,
                    ZoneKind::General => {}
                }
            }
        }
        k
    }
}

/// A service with its acceptance criteria.
#[derive(Debug, Clone, Serialize)]
pub struct Service {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Centre frequency, MHz.
    pub freq_mhz: f64,
    /// Metric: "rssi-dbm" (received power at an isotropic antenna).
    pub metric: String,
    /// Threshold, dBm.
    pub threshold_dbm: f64,
    /// Area fraction required in general zones, 0..1.
    pub target_general: f64,
    /// Area fraction required in critical zones, 0..1.
    pub target_critical: f64,
    /// Design margin above the threshold, dB.
    pub design_margin_db: f64,
    /// Life-safety radio (public-safety in-building): adds the AHJ cautions.
    pub life_safety: bool,
    /// Acceptance rule set id, if any.
    pub rules: Option<String>,
    /// Receiver bandwidth the noise floor is taken over, kHz.
    pub bandwidth_khz: f64,
    /// Receiver noise figure, dB.
    pub noise_figure_db: f64,
    /// Levels below this are no service, dBm: the site's `receiver_floor_dbm`, else
    /// thermal noise over `bandwidth_khz` plus `noise_figure_db`.
    pub receiver_floor_dbm: f64,
    /// How a handset reaches the network, when described.
    pub uplink: Option<crate::Uplink>,
}

/// Default receiver bandwidth of a service, kHz: a 12.5 kHz land-mobile channel for a
/// life-safety service, else one 15 kHz LTE resource element, the bandwidth RSRP is
/// defined over (3GPP TS 36.214, RSRP; the 12.5 kHz channel is from memory).
pub fn default_bandwidth_khz(life_safety: bool) -> f64 {
    if life_safety {
        12.5
    } else {
        15.0
    }
}

/// Default receiver noise figure, dB (from memory: a typical portable or handset
/// receiver; set `noise_figure_db` from the equipment data sheet).
pub const DEFAULT_NOISE_FIGURE_DB: f64 = 7.0;

/// Antenna pattern of a transmitter.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Pattern {
    /// Isotropic.
    Isotropic,
    /// Ceiling-mounted omni (pattern in rfsite-physics).
    OmniCeiling,
    /// 3GPP TR 38.901 sector element, pointing at `azimuth_deg` (plan angle, counter-clockwise
    /// from +x) with `downtilt_deg`.
    Sector {
        /// Plan azimuth of boresight, degrees from +x counter-clockwise.
        azimuth_deg: f64,
        /// Downtilt, degrees.
        downtilt_deg: f64,
    },
}

/// A transmitter (antenna) inside the building.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Transmitter {
    /// Id.
    pub id: String,
    /// Service id.
    pub service: String,
    /// Floor id.
    pub floor: String,
    /// Plan position, m.
    #[serde(serialize_with = "ser_point")]
    pub position: Point2,
    /// Height above the floor, m.
    pub height_m: f64,
    /// Conducted power at the source, dBm.
    pub power_dbm: f64,
    /// Cable loss, dB.
    pub cable_loss_db: f64,
    /// Connector loss, dB.
    pub connector_loss_db: f64,
    /// Antenna gain, dBi.
    pub antenna_gain_dbi: f64,
    /// Pattern.
    pub pattern: Pattern,
}

impl Transmitter {
    /// EIRP in dBm: power - cable - connectors + gain.
    pub fn eirp_dbm(&self) -> f64 {
        self.power_dbm - self.cable_loss_db - self.connector_loss_db + self.antenna_gain_dbi
    }
}

/// An outdoor donor signal (a macro cell or a repeater's donor antenna).
#[derive(Debug, Clone, Serialize)]
pub struct Donor {
    /// Id.
    pub id: String,
    /// Service id.
    pub service: String,
    /// Level outside the facade, dBm.
    pub level_dbm: f64,
    /// Floors it reaches.
    pub floors: Vec<String>,
    /// Facade wall ids it arrives through (all exterior walls when empty).
    pub facade: Vec<String>,
    /// Elevation angle at the facade, degrees.
    pub elevation_deg: f64,
    /// Plan direction the signal comes from, degrees counter-clockwise from +x.
    pub direction_deg: Option<f64>,
    /// The network site the signal comes from, when described.
    pub serving_site: Option<crate::ServingSite>,
    /// A roof donor antenna facing it.
    pub antenna: Option<crate::DonorAntenna>,
    /// The off-air signal booster the donor antenna feeds.
    pub booster: Option<crate::Booster>,
}

/// A survey file named by the site.
#[derive(Debug, Clone, Serialize)]
pub struct Survey {
    /// Path relative to the site folder.
    pub file: String,
    /// Floor, when the file has no floor column.
    pub floor: Option<String>,
    /// Service, when the file has no service column.
    pub service: Option<String>,
    /// Column mapping: role -> header name.
    pub columns: std::collections::BTreeMap<String, String>,
    /// Units of the position columns.
    pub position_units: Units,
}

/// An in-situ probe measurement of a material.
#[derive(Debug, Clone, Serialize)]
pub struct Probe {
    /// Material id.
    pub material: String,
    /// Frequency, MHz.
    pub freq_mhz: f64,
    /// Level with a clear path, dBm.
    pub clear_dbm: f64,
    /// Level through the material, dBm.
    pub through_dbm: f64,
    /// Antenna separation, m.
    pub distance_m: Option<f64>,
    /// Incidence angle, degrees.
    pub angle_deg: Option<f64>,
    /// Note.
    pub note: String,
}

/// The validated site.
#[derive(Debug, Clone, Serialize)]
pub struct Site {
    /// Metadata.
    pub meta: SiteMeta,
    /// Units the file used (the report uses them too).
    pub units: Units,
    /// Plan angle of true north, degrees counter-clockwise from +x, if given.
    pub north_deg: Option<f64>,
    /// Prediction settings.
    pub prediction: Prediction,
    /// Revision history.
    pub revisions: Vec<Revision>,
    /// Floors, in ascending elevation.
    pub floors: Vec<Floor>,
    /// Services.
    pub services: Vec<Service>,
    /// Transmitters.
    pub transmitters: Vec<Transmitter>,
    /// Donor signals.
    pub donors: Vec<Donor>,
    /// Survey files.
    pub surveys: Vec<Survey>,
    /// Probe measurements.
    pub probes: Vec<Probe>,
    /// Materials available (ITU + library + site), by id.
    #[serde(skip)]
    pub materials: MaterialLibrary,
    /// Ids of materials the site actually uses, sorted.
    pub materials_used: Vec<String>,
    /// `[plugins.<id>]` tables, uninterpreted.
    pub plugin_options: std::collections::BTreeMap<String, toml::Table>,
    /// Warnings found while validating (as text), for the report.
    pub load_warnings: Vec<String>,
    /// `[[what_if]]` options, in file order.
    pub what_ifs: Vec<crate::whatif::WhatIf>,
}

impl Site {
    /// Floor by id.
    pub fn floor(&self, id: &str) -> Option<&Floor> {
        self.floors.iter().find(|f| f.id == id)
    }
    /// Service by id.
    pub fn service(&self, id: &str) -> Option<&Service> {
        self.services.iter().find(|s| s.id == id)
    }
    /// The shadowing standard deviation in force and where it comes from: the grading's
    /// own option, else `[prediction]`, else the default.
    pub fn shadowing_sigma(&self) -> (f64, SigmaSource) {
        let graded = self
            .plugin_options
            .get("grading")
            .and_then(|t| t.get("shadowing_sigma_db"))
            .and_then(|v| v.as_float().or(v.as_integer().map(|i| i as f64)));
        match (graded, self.prediction.shadowing_sigma_given) {
            (Some(x), _) => (x, SigmaSource::Grading),
            (None, true) => (self.prediction.shadowing_sigma_db, SigmaSource::Prediction),
            (None, false) => (self.prediction.shadowing_sigma_db, SigmaSource::Default),
        }
    }
    /// The prediction grid of floor `index`: the outline's bounding box at the grid step.
    /// The load checked its size against [`crate::limits`] with the same function.
    pub fn floor_grid(&self, index: usize) -> rfsite_geometry::Grid {
        crate::limits::grid_of(&self.floors[index].outline, self.prediction.grid_step_m)
    }
    /// Index of a floor by id.
    pub fn floor_index(&self, id: &str) -> Option<usize> {
        self.floors.iter().position(|f| f.id == id)
    }
}

/// Where the shadowing standard deviation in force comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SigmaSource {
    /// `[plugins.grading] shadowing_sigma_db`.
    Grading,
    /// `[prediction] shadowing_sigma_db`.
    Prediction,
    /// Not set: rfsite's default.
    Default,
}

impl SigmaSource {
    /// In words, for the method section.
    pub fn words(self) -> &'static str {
        match self {
            SigmaSource::Grading => "set for the grading in site.toml",
            SigmaSource::Prediction => "given in site.toml",
            SigmaSource::Default => "rfsite's default, as site.toml does not set it",
        }
    }
    /// The key it comes from, for `check`.
    pub fn key(self) -> &'static str {
        match self {
            SigmaSource::Grading => "from `[plugins.grading] shadowing_sigma_db`",
            SigmaSource::Prediction => "from `[prediction] shadowing_sigma_db`",
            SigmaSource::Default => "default; set `[prediction] shadowing_sigma_db` to change it",
        }
    }
}
