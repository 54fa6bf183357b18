//! The collected result of a run: what the report renders and findings.json serialises.

use serde::{Deserialize, Serialize};

use crate::*;

/// An input file and its hash.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Eq, PartialOrd, Ord)]
pub struct InputFile {
    /// Path relative to the site folder.
    pub path: String,
    /// SHA-256, lowercase hex.
    pub sha256: String,
}

/// A plugin that ran.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct PluginRun {
    /// Id.
    pub id: String,
    /// Version.
    pub version: String,
    /// Method.
    pub method: Method,
    /// "built-in" or "external".
    pub kind: String,
}

/// Loss of a material at one service frequency.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct MaterialLoss {
    /// Service id.
    pub service: String,
    /// Frequency, MHz.
    pub freq_mhz: f64,
    /// Thickness used, m (None for empirical entries).
    pub thickness_m: Option<f64>,
    /// Loss the prediction charges at normal incidence, dB (the probe value where a site
    /// probe applies at this frequency; at most the crossing cap).
    pub loss_db: f64,
    /// Outside the material's range.
    pub extrapolated: bool,
    /// The value comes from a site probe at this frequency.
    #[serde(default)]
    pub probed: bool,
    /// The material's own loss is above the crossing cap; `loss_db` is the cap.
    #[serde(default)]
    pub beyond_cap: bool,
}

/// A material the site uses, with its losses.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct MaterialRow {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Class label.
    pub class: String,
    /// Model label.
    pub model: String,
    /// Source.
    pub source: String,
    /// Confidence, in words ("published formula", "empirical, from memory", "measured on
    /// site").
    pub confidence: String,
    /// How the site's thickness enters the loss.
    #[serde(default)]
    pub thickness_rule: String,
    /// Losses per service.
    pub losses: Vec<MaterialLoss>,
    /// Probe-measured loss that overrides the library value, dB, if any.
    #[serde(default)]
    pub probe_loss_db: Option<f64>,
}

/// Tool identification (findings.json contract).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Tool {
    /// "rfsite".
    pub name: String,
    /// Version.
    pub version: String,
}

/// Site identification (findings.json contract).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct SiteRef {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Client (the building owner or whoever commissioned the assessment).
    #[serde(default)]
    pub client: String,
    /// The report's date, from the project file (`[site] report_date`), never the clock.
    #[serde(default)]
    pub report_date: String,
    /// The report's revision.
    #[serde(default)]
    pub revision: String,
    /// The floors, lowest first (by elevation, then id).
    #[serde(default)]
    pub floors: Vec<FloorRef>,
}

/// A floor's identification, so that readers of findings.json can print its name.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FloorRef {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Elevation of the finished floor, m.
    pub elevation_m: f64,
}

/// The whole result of one site's run.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Assessment {
    /// Tool.
    pub tool: Tool,
    /// Site id and name.
    pub site: SiteRef,
    /// Inputs with hashes, sorted by path.
    pub inputs: Vec<InputFile>,
    /// Plugins in run order.
    pub plugins: Vec<PluginRun>,
    /// Per-service results.
    pub services: Vec<ServiceResult>,
    /// Findings, sorted by severity then id.
    pub findings: Vec<Finding>,
    /// Remediation options.
    pub remediation: Vec<Remediation>,
    /// Cautions.
    pub cautions: Vec<Caution>,
    /// Warnings (validity ranges, assumptions, data), sorted and unique.
    pub warnings: Vec<Warning>,
    /// Tables.
    pub tables: Vec<Table>,
    /// Figures.
    pub figures: Vec<Figure>,
    /// Link budgets.
    pub link_budgets: Vec<LinkBudget>,
    /// Materials used.
    pub materials: Vec<MaterialRow>,
    /// Coverage layers (not written to findings.json).
    #[serde(skip)]
    pub layers: Vec<CoverageLayer>,
    /// Survey summary.
    pub surveys: SurveySummary,
    /// Plugin extras, by plugin id.
    pub extra: serde_json::Map<String, serde_json::Value>,
}

/// Counts of survey rows.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq)]
pub struct SurveySummary {
    /// Accepted points.
    pub accepted: usize,
    /// Rejected rows.
    pub rejected: usize,
    /// Rejected rows by reason.
    pub rejected_by_reason: Vec<(String, usize)>,
    /// Rows per file.
    pub rows_per_file: Vec<(String, usize)>,
    /// The first rejected rows (all of them are counted above).
    pub rejected_rows: Vec<RejectedRow>,
}
