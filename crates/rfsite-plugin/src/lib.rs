//! # rfsite-plugin
//!
//! The one interface every calculation in rfsite goes through. A [`Plugin`] has an id, a
//! version, a [`Method`] (what it computes, citations, validity range), a list of plugins
//! it runs after, a check of whether it applies to a site, and a run step that takes a
//! [`Context`] and returns a [`PluginOutput`] or a [`PluginError`].
//!
//! Built-in plugins and the adapter that runs an external program implement the same
//! trait; the engine sees only `Box<dyn Plugin>`. Output types here are also the wire
//! types of the external-plugin protocol, so they are plain serde data.
//!
//! This crate never reads files and computes no physics.
#![deny(missing_docs)]

use std::fmt;

use rfsite_model::Site;
use serde::{Deserialize, Serialize};

pub mod assessment;
pub mod check;
pub mod shift;
pub mod verdict;
pub mod wire;
pub mod words;
pub use assessment::*;
pub use check::{InputProblem, Place};
pub use verdict::*;

/// Reads levels with `null` as NaN, straight into the `Vec<f32>` (no `Vec<Option<f32>>` of
/// twice the size on the way).
fn nan_from_null<'de, D: serde::Deserializer<'de>>(d: D) -> Result<Vec<f32>, D::Error> {
    struct Levels;
    impl<'de> serde::de::Visitor<'de> for Levels {
        type Value = Vec<f32>;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("an array of numbers or nulls")
        }
        fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut s: A) -> Result<Vec<f32>, A::Error> {
            let mut v = Vec::with_capacity(s.size_hint().unwrap_or(0).min(1 << 16));
            while let Some(x) = s.next_element::<Option<f32>>()? {
                v.push(x.unwrap_or(f32::NAN));
            }
            Ok(v)
        }
    }
    d.deserialize_seq(Levels)
}

/// What a plugin computes and on what authority.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Method {
    /// One-line summary.
    pub summary: String,
    /// Published sources (document, edition, section).
    pub citations: Vec<String>,
    /// Where the method holds (frequency, distance, geometry).
    pub validity: String,
}

/// Severity of a finding (findings.json contract).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize, Hash)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// Fails a life-safety or contractual criterion.
    Critical,
    /// Fails a criterion.
    Major,
    /// Marginal or local.
    Minor,
    /// For information.
    Info,
}

impl Severity {
    /// Lowercase label.
    pub fn label(&self) -> &'static str {
        match self {
            Severity::Critical => "critical",
            Severity::Major => "major",
            Severity::Minor => "minor",
            Severity::Info => "info",
        }
    }
}

/// A regular grid of values (cell centres), in metres.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct GridSpec {
    /// Lower-left corner x, m.
    pub origin_x_m: f64,
    /// Lower-left corner y, m.
    pub origin_y_m: f64,
    /// Step, m.
    pub step_m: f64,
    /// Columns.
    pub nx: usize,
    /// Rows.
    pub ny: usize,
}

impl GridSpec {
    /// As a geometry grid.
    pub fn to_grid(&self) -> rfsite_geometry::Grid {
        rfsite_geometry::Grid {
            origin: rfsite_geometry::Point2::new(self.origin_x_m, self.origin_y_m),
            step_m: self.step_m,
            nx: self.nx,
            ny: self.ny,
        }
    }
    /// From a geometry grid.
    pub fn from_grid(g: &rfsite_geometry::Grid) -> Self {
        GridSpec {
            origin_x_m: g.origin.x,
            origin_y_m: g.origin.y,
            step_m: g.step_m,
            nx: g.nx,
            ny: g.ny,
        }
    }
}

/// Predicted received level over one floor for one service.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct CoverageLayer {
    /// Floor id.
    pub floor: String,
    /// Service id.
    pub service: String,
    /// Model (plugin id) that produced it.
    pub model: String,
    /// Grid.
    pub grid: GridSpec,
    /// Level in dBm at each grid point, row-major; NaN outside the floor outline (JSON
    /// writes NaN as `null`, and `null` reads back as NaN).
    #[serde(deserialize_with = "nan_from_null")]
    pub level_dbm: Vec<f32>,
    /// Index into `servers` of the best server at each point (`u16::MAX`: none).
    #[serde(default)]
    pub best_server: Vec<u16>,
    /// Transmitter ids.
    #[serde(default)]
    pub servers: Vec<String>,
}

/// One finding (findings.json contract: id, severity, floor, service, title, detail, plugin).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Finding {
    /// Stable id, e.g. `coverage-ps700-L2`.
    pub id: String,
    /// Severity.
    pub severity: Severity,
    /// Floor id, if local to a floor.
    pub floor: Option<String>,
    /// Service id, if about one service.
    pub service: Option<String>,
    /// One line.
    pub title: String,
    /// The explanation.
    pub detail: String,
    /// Plugin id that raised it.
    pub plugin: String,
    /// Shortfall against the threshold, dB (positive = short), if any.
    #[serde(default)]
    pub shortfall_db: Option<f64>,
    /// Plan location (m), if a point.
    #[serde(default)]
    pub location_m: Option<[f64; 2]>,
    /// Likely causes, in words.
    #[serde(default)]
    pub causes: Vec<String>,
    /// Remediation option ids that address it.
    #[serde(default)]
    pub remedies: Vec<String>,
}

/// Result per floor for one service.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FloorResult {
    /// Floor id.
    pub id: String,
    /// Fraction of predicted points (general + critical) at or above the predicted required
    /// level, 0..1.
    pub predicted_area_fraction: f64,
    /// Fraction of general area meeting it.
    pub general_fraction: Option<f64>,
    /// Fraction of critical area meeting it.
    pub critical_fraction: Option<f64>,
    /// Pass against the service targets.
    pub pass: bool,
    /// Lowest predicted level on the floor, dBm.
    pub min_level_dbm: f64,
    /// Median predicted level, dBm.
    pub median_level_dbm: f64,
    /// Extra margin needed so that the targets would be met, dB (0 when passing).
    pub margin_needed_db: f64,
    /// Points graded.
    pub points: usize,
    /// Area-weighted fraction of general test cells passing (rule-set cell test).
    #[serde(default)]
    pub general_cell_fraction: Option<f64>,
    /// Area-weighted fraction of critical test cells passing.
    #[serde(default)]
    pub critical_cell_fraction: Option<f64>,
    /// Each critical zone graded by itself.
    #[serde(default)]
    pub critical_zones: Vec<ZoneResult>,
    /// Measured points on the floor, and how many are below the measured required level.
    #[serde(default)]
    pub measured_points: usize,
    /// Measured points below the measured required level.
    #[serde(default)]
    pub measured_failures: usize,
    /// Each failed criterion (empty when the floor passes), uplink ones included.
    #[serde(default)]
    pub reasons: Vec<Reason>,
    /// The downlink's own verdict (`pass` is the floor's verdict of record: for a
    /// life-safety service both directions must pass).
    #[serde(default)]
    pub downlink_pass: Option<bool>,
    /// The uplink verdict, when the grading judged it.
    #[serde(default)]
    pub uplink: Option<UplinkFloor>,
}

/// Result per service (findings.json contract: id, freq_mhz, threshold_dbm, floors).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ServiceResult {
    /// Service id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Centre frequency, MHz.
    pub freq_mhz: f64,
    /// Threshold, dBm.
    pub threshold_dbm: f64,
    /// Design margin, dB: the site's value for the service (the shadowing margin and the
    /// required level are in `required`).
    pub design_margin_db: f64,
    /// The level graded at, by its parts.
    #[serde(default)]
    pub required: RequiredLevel,
    /// Levels below this are no service: thermal noise over the service bandwidth plus
    /// the receiver noise figure (or the site's value), dBm.
    #[serde(default)]
    pub receiver_floor_dbm: Option<f64>,
    /// Life-safety service.
    #[serde(default)]
    pub life_safety: bool,
    /// Acceptance rule set id.
    #[serde(default)]
    pub rule: String,
    /// Target fraction for general areas.
    pub target_general: f64,
    /// Target fraction for critical areas.
    pub target_critical: f64,
    /// Model graded.
    pub model: String,
    /// Per floor.
    pub floors: Vec<FloorResult>,
    /// How the uplink was judged (or why it was not).
    #[serde(default)]
    pub uplink: Option<UplinkBudget>,
    /// Whole-service verdict.
    pub pass: bool,
}

/// One remediation option.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq)]
pub struct Remediation {
    /// Id, e.g. `indoor-antennas-L2-ps700`.
    pub id: String,
    /// Title.
    pub title: String,
    /// Service.
    pub service: Option<String>,
    /// Floors concerned.
    pub floors: Vec<String>,
    /// What to do and why.
    pub detail: String,
    /// Additional margin the option must deliver, dB.
    pub margin_needed_db: f64,
    /// What it is expected to achieve.
    pub expected: String,
    /// Caveats.
    pub caveats: Vec<String>,
    /// Plugin that proposed it.
    pub plugin: String,
    /// Changes to walls and transmitters the option makes (besides `antennas`).
    #[serde(default)]
    pub changes: Vec<Change>,
    /// Antennas the option adds, with the keys of `[[transmitters]]` (site units), so that
    /// pasting them into the site reproduces the option.
    #[serde(default)]
    pub antennas: Vec<DesignedAntenna>,
    /// How each added antenna is fed, and the head end's power.
    #[serde(default)]
    pub distribution: Option<Distribution>,
    /// The off-air booster feeding the system, when the donor describes one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub booster: Option<BoosterDesign>,
    /// Bill of quantities.
    #[serde(default)]
    pub quantities: Vec<Quantity>,
    /// The option predicted and graded: filled by the engine for every option with changes.
    #[serde(default)]
    pub after: Option<After>,
    /// The option rfsite recommends for its service.
    #[serde(default)]
    pub recommended: bool,
    /// The graded layers of the changed site (for the report's maps; not in findings.json).
    #[serde(skip)]
    pub after_layers: Vec<CoverageLayer>,
}

/// A change to the site, in the wire's units (metres, dBm).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum Change {
    /// Wall parts (walls or openings) get another material.
    SetMaterial {
        /// Wall or opening ids.
        walls: Vec<String>,
        /// Material id.
        material: String,
        /// New thickness, m.
        #[serde(default)]
        thickness_m: Option<f64>,
    },
    /// Wall parts are taken out.
    RemoveWalls {
        /// Wall or opening ids.
        walls: Vec<String>,
    },
    /// A transmitter's conducted power changes.
    SetPower {
        /// Transmitter id.
        transmitter: String,
        /// Conducted power, dBm.
        power_dbm: f64,
    },
}

/// An antenna an option adds: the keys of `[[transmitters]]`, lengths in site units.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct DesignedAntenna {
    /// Id.
    pub id: String,
    /// Service id.
    pub service: String,
    /// Floor id.
    pub floor: String,
    /// Plan position, site units.
    pub position: [f64; 2],
    /// Height above the floor, site units.
    pub height: f64,
    /// Conducted power at the source, dBm.
    pub power_dbm: f64,
    /// Cable loss, dB.
    pub cable_loss_db: f64,
    /// Connector loss, dB.
    pub connector_loss_db: f64,
    /// Antenna gain, dBi.
    pub antenna_gain_dbi: f64,
    /// `omni-ceiling`, `sector` or `isotropic`.
    pub pattern: String,
    /// Sector azimuth, degrees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub azimuth_deg: Option<f64>,
    /// Sector downtilt, degrees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub downtilt_deg: Option<f64>,
}

/// One antenna's feed from the head end.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FeedLine {
    /// Antenna id.
    pub antenna: String,
    /// Floor id.
    pub floor: String,
    /// Cable on the floor, m (rectilinear route plus slack).
    pub horizontal_m: f64,
    /// Riser cable, m.
    pub riser_m: f64,
    /// Cable loss, dB.
    pub cable_db: f64,
    /// Splitter losses on the way, dB.
    pub splitter_db: f64,
    /// Connector losses, dB.
    pub connector_db: f64,
    /// Head-end port to antenna port, dB.
    pub total_db: f64,
    /// Power per channel at the antenna port, dBm.
    pub port_dbm: f64,
    /// EIRP per channel, dBm.
    pub eirp_dbm: f64,
    /// How to mount it (offset from a reflecting surface), if it matters.
    #[serde(default)]
    pub mounting: String,
}

/// The head end's power for one option.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Distribution {
    /// Head-end floor and position (site units).
    pub head_end_floor: String,
    /// Head-end position, site units.
    pub head_end_position: [f64; 2],
    /// Feeder cable id and name.
    pub cable: String,
    /// Frequency the losses are taken at, MHz.
    pub freq_mhz: f64,
    /// Channels carried.
    pub channels: u32,
    /// Output per channel the head end must deliver, dBm.
    pub per_channel_dbm: f64,
    /// Composite output, dBm (per channel + 10 log10 channels).
    pub composite_dbm: f64,
    /// Back-off from the rated composite, dB.
    pub back_off_db: f64,
    /// Rated composite output of the head end, dBm.
    pub max_composite_dbm: f64,
    /// Rated composite − back-off − composite, dB (negative: the limit is exceeded).
    pub margin_db: f64,
    /// The equipment limit is exceeded.
    pub exceeded: bool,
    /// Per antenna.
    pub feeds: Vec<FeedLine>,
}

/// The off-air booster feeding an option's system: gains, outputs, isolation, noise and
/// exposure, each figure worked out from the site's donor data.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Default)]
pub struct BoosterDesign {
    /// Donor id.
    pub donor: String,
    /// Donor antenna plan position, site units, and height above the roof, m.
    pub donor_position: [f64; 2],
    /// Height of the donor antenna above its roof, m.
    pub donor_height_m: f64,
    /// Level at the donor antenna (isotropic), dBm, and where it comes from.
    pub roof_level_dbm: f64,
    /// Source of the roof level.
    pub roof_level_source: String,
    /// Booster input per channel: roof level + donor gain − donor cable, dBm.
    pub input_per_channel_dbm: f64,
    /// Output per channel the system needs (the largest head-end output of its antennas), dBm.
    pub output_per_channel_dbm: f64,
    /// Downlink gain = output − input, dB.
    pub downlink_gain_db: f64,
    /// Channels carried.
    pub channels: u32,
    /// Composite output, dBm.
    pub composite_dbm: f64,
    /// Rated composite − back-off, dBm.
    pub allowed_composite_dbm: f64,
    /// The output limit is exceeded.
    pub exceeded: bool,
    /// Uplink gain the verdict was graded with (the site's booster), dB.
    pub uplink_gain_db: f64,
    /// Uplink gain that makes the uplink margin equal the downlink margin, dB.
    pub balanced_uplink_gain_db: f64,
    /// Largest uplink gain keeping the serving site's noise rise within the limit, dB.
    pub noise_limited_gain_db: f64,
    /// Uplink gain to set: the balancing gain, capped by the noise limit and the largest
    /// stable gain, dB.
    #[serde(default)]
    pub designed_uplink_gain_db: f64,
    /// The noise-rise limit, dB.
    pub max_noise_rise_db: f64,
    /// Noise rise at the serving site with the graded uplink gain, dB.
    pub noise_rise_db: f64,
    /// Isolation from the donor antenna to each server antenna.
    pub isolation: Vec<IsolationPath>,
    /// Required isolation margin over the gain, dB.
    pub isolation_margin_db: f64,
    /// Smallest isolation − margin, dB.
    pub max_stable_gain_db: f64,
    /// Both gains are within the largest stable gain.
    pub stable: bool,
    /// What to do when not stable (or empty).
    pub fix: String,
    /// Far-field compliance distances at the designed EIRPs.
    pub exposure: Vec<ExposureDistance>,
}

/// Isolation between the donor antenna and one server antenna.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct IsolationPath {
    /// Server antenna id.
    pub antenna: String,
    /// Straight-line distance, m.
    pub distance_m: f64,
    /// Roof and floor slabs crossed, dB.
    pub slabs_db: f64,
    /// Donor antenna gain towards it, dBi.
    pub donor_gain_dbi: f64,
    /// Its gain towards the donor antenna, dBi.
    pub server_gain_dbi: f64,
    /// Both cables, dB.
    pub cables_db: f64,
    /// Isolation, dB.
    pub isolation_db: f64,
}

/// A far-field compliance distance.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ExposureDistance {
    /// Antenna.
    pub antenna: String,
    /// EIRP, composite, dBm.
    pub eirp_dbm: f64,
    /// Frequency, MHz.
    pub freq_mhz: f64,
    /// Limit id.
    pub limit: String,
    /// Distance, m.
    pub distance_m: f64,
    /// The distance lies inside the near field (the formula does not hold there).
    pub near_field: bool,
}

/// One line of a bill of quantities.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Quantity {
    /// Item.
    pub item: String,
    /// Unit.
    pub unit: String,
    /// Quantity.
    pub quantity: f64,
    /// Note.
    pub note: String,
}

/// An option predicted and graded like the site itself.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct After {
    /// Per service, shaped like the top-level `services`.
    pub services: Vec<ServiceResult>,
    /// Every graded floor of the services the option is for passes.
    pub passes: bool,
    /// What happens to each finding of the graded services.
    #[serde(default)]
    pub findings: Vec<FindingChange>,
}

/// A finding before and after an option.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FindingChange {
    /// Finding id.
    pub id: String,
    /// Severity today (`None`: new with the option).
    pub before: Option<Severity>,
    /// Severity with the option (`None`: resolved).
    pub after: Option<Severity>,
    /// Why, in words.
    #[serde(default)]
    pub note: String,
}

/// A safety or compliance caution.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Caution {
    /// Id.
    pub id: String,
    /// Topic, e.g. "RF exposure".
    pub topic: String,
    /// Text.
    pub text: String,
}

/// A warning from a plugin (validity range, assumptions, skipped data).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Eq, PartialOrd, Ord)]
pub struct Warning {
    /// Plugin id, or "engine".
    pub plugin: String,
    /// Message.
    pub message: String,
}

/// A table for the report.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Table {
    /// Id.
    pub id: String,
    /// Title.
    pub title: String,
    /// Column headings.
    pub columns: Vec<String>,
    /// Rows of cells, already formatted.
    pub rows: Vec<Vec<String>>,
}

/// A data series for a figure.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Series {
    /// Legend name.
    pub name: String,
    /// (x, y) points.
    pub points: Vec<[f64; 2]>,
}

/// Data for a line or scatter chart; the report draws it.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Figure {
    /// Id (file name).
    pub id: String,
    /// Title.
    pub title: String,
    /// "line" or "scatter".
    pub kind: String,
    /// X axis label with unit.
    pub x_label: String,
    /// Y axis label with unit.
    pub y_label: String,
    /// Series.
    pub series: Vec<Series>,
}

/// A link budget line per transmitter.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct LinkBudget {
    /// Transmitter id.
    pub transmitter: String,
    /// Service id.
    pub service: String,
    /// Floor id.
    pub floor: String,
    /// Conducted power, dBm.
    pub power_dbm: f64,
    /// Cable loss, dB.
    pub cable_loss_db: f64,
    /// Connector loss, dB.
    pub connector_loss_db: f64,
    /// Antenna gain, dBi.
    pub antenna_gain_dbi: f64,
    /// EIRP, dBm.
    pub eirp_dbm: f64,
    /// Free-space loss at 10 m, dB.
    pub fspl_10m_db: f64,
    /// Distance at which free space alone reaches threshold + margin, m.
    pub free_space_range_m: f64,
}

/// Everything a plugin may return.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq)]
pub struct PluginOutput {
    /// Coverage layers.
    #[serde(default)]
    pub layers: Vec<CoverageLayer>,
    /// Findings.
    #[serde(default)]
    pub findings: Vec<Finding>,
    /// Per-service results (the grading plugin's).
    #[serde(default)]
    pub services: Vec<ServiceResult>,
    /// Remediation options.
    #[serde(default)]
    pub remediation: Vec<Remediation>,
    /// Cautions.
    #[serde(default)]
    pub cautions: Vec<Caution>,
    /// Tables.
    #[serde(default)]
    pub tables: Vec<Table>,
    /// Figures.
    #[serde(default)]
    pub figures: Vec<Figure>,
    /// Warnings.
    #[serde(default)]
    pub warnings: Vec<Warning>,
    /// Link budgets.
    #[serde(default)]
    pub link_budgets: Vec<LinkBudget>,
    /// Free-form machine-readable results, merged into findings.json under `extra.<plugin>`.
    #[serde(default)]
    pub extra: serde_json::Map<String, serde_json::Value>,
}

/// A failure of a plugin.
#[derive(Debug, Clone, PartialEq)]
pub enum PluginError {
    /// A `[plugins.<id>]` option is wrong.
    BadOption {
        /// Option key.
        key: String,
        /// What is wrong.
        message: String,
    },
    /// The plugin needs the output of another that did not run.
    MissingInput(String),
    /// Anything else.
    Failed(String),
}

impl fmt::Display for PluginError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PluginError::BadOption { key, message } => write!(f, "option `{key}`: {message}"),
            PluginError::MissingInput(s) => write!(f, "missing input: {s}"),
            PluginError::Failed(s) => write!(f, "{s}"),
        }
    }
}

impl std::error::Error for PluginError {}

/// One measured point of a survey.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Measurement {
    /// Floor id.
    pub floor: String,
    /// Service id.
    pub service: String,
    /// Plan x, m.
    pub x_m: f64,
    /// Plan y, m.
    pub y_m: f64,
    /// Level, dBm.
    pub level_dbm: f64,
    /// Source file (as named in the site).
    pub file: String,
    /// 1-based line in that file.
    pub line: usize,
}

/// A row of a survey file that was not used, and why.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Eq)]
pub struct RejectedRow {
    /// File.
    pub file: String,
    /// 1-based line.
    pub line: usize,
    /// Reason class: `missing-value`, `not-a-number`, `off-plan`, `unknown-service`, `unknown-floor`, `malformed`, `suspicious-level`, `comment`.
    pub reason: String,
    /// Detail.
    pub detail: String,
}

/// All survey data of a site, as read by the engine's world.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq)]
pub struct SurveyData {
    /// Accepted points.
    pub points: Vec<Measurement>,
    /// Rejected rows (every one of them).
    pub rejected: Vec<RejectedRow>,
    /// Rows read per file (accepted + rejected).
    pub rows_per_file: Vec<(String, usize)>,
}

/// What a plugin gets to work with.
pub struct Context<'a> {
    /// The validated site.
    pub site: &'a Site,
    /// The plugin's own `[plugins.<id>]` table (empty when absent).
    pub options: &'a toml::Table,
    /// Outputs of the plugins that ran before, by plugin id, in run order.
    pub earlier: &'a [(String, PluginOutput)],
    /// Survey measurements.
    pub surveys: &'a SurveyData,
    /// In an option's re-run: the run on the site as it is and the option's changes (a
    /// calibration, say, keeps the values fitted there). `None` in the site's own run.
    pub base: Option<BaseRun<'a>>,
}

/// What an option's re-run knows of the site's own run.
#[derive(Clone, Copy)]
pub struct BaseRun<'a> {
    /// The site as it is (the context's site is the changed one).
    pub site: &'a rfsite_model::Site,
    /// The outputs of the run on the site as it is, in run order.
    pub outputs: &'a [(String, PluginOutput)],
    /// The changes the option makes to the site.
    pub changes: &'a [rfsite_model::SiteChange],
}

impl BaseRun<'_> {
    /// When the option only adds transmitters or raises the power of existing ones: each
    /// such transmitter as it is with the option, and whether the site already has it.
    /// `None` for any other change (a lowered power, a material, a removed wall).
    pub fn only_raised_or_added(&self) -> Option<Vec<(rfsite_model::Transmitter, bool)>> {
        use rfsite_model::SiteChange;
        self.changes
            .iter()
            .map(|c| match c {
                SiteChange::AddTransmitter(t) => Some((t.clone(), false)),
                SiteChange::SetPower {
                    transmitter,
                    power_dbm,
                } => {
                    let t = self
                        .site
                        .transmitters
                        .iter()
                        .find(|t| &t.id == transmitter)?;
                    (*power_dbm >= t.power_dbm).then(|| {
                        let mut raised = t.clone();
                        raised.power_dbm = *power_dbm;
                        (raised, true)
                    })
                }
                _ => None,
            })
            .collect()
    }
    /// The layers of `model` in the site's own run.
    pub fn layers_of(&self, model: &str) -> Vec<&CoverageLayer> {
        self.outputs
            .iter()
            .flat_map(|(_, o)| o.layers.iter())
            .filter(|l| l.model == model)
            .collect()
    }
}

impl<'a> Context<'a> {
    /// The output of an earlier plugin.
    pub fn output_of(&self, id: &str) -> Option<&'a PluginOutput> {
        self.earlier.iter().find(|(i, _)| i == id).map(|(_, o)| o)
    }
    /// All layers produced so far by `model`.
    pub fn layers_of(&self, model: &str) -> Vec<&'a CoverageLayer> {
        self.earlier
            .iter()
            .flat_map(|(_, o)| o.layers.iter())
            .filter(|l| l.model == model)
            .collect()
    }
    /// A number option, with a default.
    pub fn option_f64(&self, key: &str, default: f64) -> Result<f64, PluginError> {
        match self.options.get(key) {
            None => Ok(default),
            Some(toml::Value::Float(f)) if f.is_finite() => Ok(*f),
            Some(toml::Value::Float(_)) => Err(PluginError::BadOption {
                key: key.into(),
                message: "must be a finite number, not nan or inf".into(),
            }),
            Some(toml::Value::Integer(i)) => Ok(*i as f64),
            Some(other) => Err(PluginError::BadOption {
                key: key.into(),
                message: format!("expected a number, found {}", other.type_str()),
            }),
        }
    }
    /// A string option, with a default.
    pub fn option_str(&self, key: &str, default: &str) -> Result<String, PluginError> {
        match self.options.get(key) {
            None => Ok(default.into()),
            Some(toml::Value::String(s)) => Ok(s.clone()),
            Some(other) => Err(PluginError::BadOption {
                key: key.into(),
                message: format!("expected a string, found {}", other.type_str()),
            }),
        }
    }
    /// A boolean option, with a default.
    pub fn option_bool(&self, key: &str, default: bool) -> Result<bool, PluginError> {
        match self.options.get(key) {
            None => Ok(default),
            Some(toml::Value::Boolean(b)) => Ok(*b),
            Some(other) => Err(PluginError::BadOption {
                key: key.into(),
                message: format!("expected true or false, found {}", other.type_str()),
            }),
        }
    }
}

/// A calculation plugin.
pub trait Plugin: Send + Sync {
    /// Stable id, kebab-case; also the `[plugins.<id>]` table name.
    fn id(&self) -> &str;
    /// Version of the plugin.
    fn version(&self) -> &str;
    /// What it computes and on what authority.
    fn method(&self) -> Method;
    /// Plugins it must run after (ids).
    fn after(&self) -> Vec<String> {
        Vec::new()
    }
    /// Whether it has anything to do on this site.
    fn applies(&self, _site: &Site) -> bool {
        true
    }
    /// The keys its `[plugins.<id>]` table may hold (besides `enabled`), or `None` when it
    /// does not say (external plugins): unknown keys then get a "did you mean" warning.
    fn option_keys(&self) -> Option<Vec<&'static str>> {
        None
    }
    /// Checks its options and the site values it depends on without running (the context
    /// has no earlier outputs). Must reject everything `run` would reject as bad input.
    fn check(&self, _ctx: &Context<'_>) -> Vec<InputProblem> {
        Vec::new()
    }
    /// Whether it runs again on each option's changed site (the prediction and grading
    /// chain); the rest run once, on the site as it is.
    fn reruns_for_options(&self, _site: &Site) -> bool {
        false
    }
    /// Runs it.
    fn run(&self, ctx: &Context<'_>) -> Result<PluginOutput, PluginError>;
}
