//! Acceptance rule sets: data plugins in TOML (`plugins/data/rules/*.toml`, compiled in),
//! which a site may add to or override under `[plugins.grading.rule_sets.<id>]`.
//!
//! Every number (and every yes/no) in a rule set carries a sibling `<key>_source` string
//! that names where it comes from or says "from memory".

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

/// The rule sets compiled into the binary: (file name, text).
pub const BUILTIN_RULES: &[(&str, &str)] = &[
    (
        "public-safety-95-99.toml",
        include_str!("../../data/rules/public-safety-95-99.toml"),
    ),
    (
        "public-safety-90-99.toml",
        include_str!("../../data/rules/public-safety-90-99.toml"),
    ),
    (
        "cellular-rsrp.toml",
        include_str!("../../data/rules/cellular-rsrp.toml"),
    ),
    (
        "wifi-voice.toml",
        include_str!("../../data/rules/wifi-voice.toml"),
    ),
];

/// How a test cell is judged.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Judge {
    /// On the prediction only.
    Predicted,
    /// On measurements only (cells without any are not judged).
    Measured,
    /// On the mean measured level where the cell has measurements, else on the prediction.
    MeasuredElsePredicted,
}

impl Judge {
    /// Label.
    pub fn label(&self) -> &'static str {
        match self {
            Judge::Predicted => "predicted",
            Judge::Measured => "measured",
            Judge::MeasuredElsePredicted => "measured-else-predicted",
        }
    }
}

/// One acceptance rule set.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Rule {
    /// Id.
    pub id: String,
    /// Name.
    pub name: String,
    /// Who decides (printed in the report).
    pub authority: String,
    /// Metric graded.
    pub metric: String,
    /// Threshold, dBm.
    pub threshold_dbm: f64,
    /// Fraction of general area (cells, area-weighted) that must pass.
    pub target_general: f64,
    /// Fraction of critical area that must pass.
    pub target_critical: f64,
    /// Test cells per floor.
    pub cells_per_floor: usize,
    /// Unit of the cell sides: "ft" or "m".
    pub cell_side_unit: String,
    /// Smallest cell side, in `cell_side_unit`.
    pub min_cell_side: f64,
    /// Largest cell side, in `cell_side_unit`.
    pub max_cell_side: f64,
    /// How a cell is judged.
    pub judge: Judge,
    /// Failed cells tolerated per floor (none: only the percentages count).
    #[serde(default)]
    pub max_failed_cells: Option<usize>,
    /// Whether failed cells may share an edge.
    pub failed_cells_may_be_adjacent: bool,
    /// Location probability for the shadowing margin of predicted cells.
    pub location_probability: f64,
    /// Fraction of a cell's predicted points that must meet threshold + margins.
    pub predicted_cell_point_fraction: f64,
    /// Measured points below the required level tolerated in each critical zone before
    /// the floor fails (none: such points give a finding but do not fail the floor by
    /// themselves; a life-safety service then tolerates none).
    #[serde(default)]
    pub max_measured_failures_critical: Option<usize>,
    /// `<key>_source` strings, by key.
    #[serde(skip_deserializing, default)]
    pub sources: BTreeMap<String, String>,
}

impl Rule {
    /// Metres per cell-side unit.
    pub fn side_to_m(&self) -> f64 {
        if self.cell_side_unit == "ft" {
            0.3048
        } else {
            1.0
        }
    }
    /// The source of a key.
    pub fn source(&self, key: &str) -> &str {
        self.sources.get(key).map(String::as_str).unwrap_or("")
    }
}

/// Parses a rule set from a TOML table, checking that every number and yes/no carries a
/// non-empty `<key>_source` (error if `strict`, else returned as notes).
pub fn rule_from_table(t: &toml::Table, strict: bool) -> Result<(Rule, Vec<String>), String> {
    let mut notes = Vec::new();
    let mut sources = BTreeMap::new();
    let mut core = toml::Table::new();
    for (k, v) in t {
        if let Some(base) = k.strip_suffix("_source") {
            match v.as_str() {
                Some(s) if !s.trim().is_empty() => {
                    sources.insert(base.to_string(), s.to_string());
                }
                _ => {
                    return Err(format!(
                    "`{k}` must be a non-empty string naming the source or saying \"from memory\""
                ))
                }
            }
            if !t.contains_key(base) {
                return Err(format!("`{k}` names no key `{base}`"));
            }
            continue;
        }
        core.insert(k.clone(), v.clone());
    }
    for (k, v) in &core {
        if matches!(
            v,
            toml::Value::Integer(_) | toml::Value::Float(_) | toml::Value::Boolean(_)
        ) && !sources.contains_key(k)
        {
            let msg = format!(
                "rule key `{k}` has no `{k}_source` (give its source or write \"from memory\")"
            );
            if strict {
                return Err(msg);
            }
            notes.push(msg);
        }
    }
    let mut rule: Rule = toml::Value::Table(core)
        .try_into()
        .map_err(|e: toml::de::Error| e.message().to_string())?;
    rule.sources = sources;
    validate(&rule)?;
    Ok((rule, notes))
}

fn validate(r: &Rule) -> Result<(), String> {
    let frac = |x: f64, k: &str| {
        if (0.0..=1.0).contains(&x) {
            Ok(())
        } else {
            Err(format!(
                "rule `{}`: `{k}` is a fraction 0..1 (got {x})",
                r.id
            ))
        }
    };
    frac(r.target_general, "target_general")?;
    frac(r.target_critical, "target_critical")?;
    frac(
        r.predicted_cell_point_fraction,
        "predicted_cell_point_fraction",
    )?;
    if !(r.location_probability > 0.0 && r.location_probability < 1.0) {
        return Err(format!(
            "rule `{}`: `location_probability` must lie strictly between 0 and 1",
            r.id
        ));
    }
    if r.cells_per_floor == 0 {
        return Err(format!(
            "rule `{}`: `cells_per_floor` must be at least 1",
            r.id
        ));
    }
    if !(r.min_cell_side > 0.0 && r.max_cell_side >= r.min_cell_side) {
        return Err(format!(
            "rule `{}`: need 0 < min_cell_side <= max_cell_side",
            r.id
        ));
    }
    if r.cell_side_unit != "ft" && r.cell_side_unit != "m" {
        return Err(format!(
            "rule `{}`: `cell_side_unit` is \"ft\" or \"m\"",
            r.id
        ));
    }
    if !r.threshold_dbm.is_finite() {
        return Err(format!("rule `{}`: threshold is not a number", r.id));
    }
    Ok(())
}

/// Parses a rule set file's text (strict: every number needs a source).
pub fn parse_rule(text: &str) -> Result<Rule, String> {
    let t: toml::Table = toml::from_str(text).map_err(|e| e.message().to_string())?;
    rule_from_table(&t, true).map(|(r, _)| r)
}

/// The built-in rule sets by id.
pub fn builtin_rules() -> BTreeMap<String, Rule> {
    BUILTIN_RULES
        .iter()
        .map(|(f, t)| {
            // Compiled-in files are tested; a failure here is a build defect.
            let r =
                parse_rule(t).unwrap_or_else(|e| panic!("built-in rule set {f} is invalid: {e}"));
            (r.id.clone(), r)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Issue 4 item 5: the rule files parse and every number carries a source or
    /// "from memory".
    #[test]
    fn rule_files_parse_and_every_number_has_a_source() {
        for (f, text) in BUILTIN_RULES {
            let t: toml::Table = toml::from_str(text).unwrap_or_else(|e| panic!("{f}: {e}"));
            let r = parse_rule(text).unwrap_or_else(|e| panic!("{f}: {e}"));
            assert_eq!(format!("{}.toml", r.id), *f, "file named after its id");
            for (k, v) in &t {
                if matches!(
                    v,
                    toml::Value::Integer(_) | toml::Value::Float(_) | toml::Value::Boolean(_)
                ) {
                    let s = t
                        .get(&format!("{k}_source"))
                        .and_then(|s| s.as_str())
                        .unwrap_or_else(|| panic!("{f}: `{k}` has no source"));
                    assert!(!s.trim().is_empty(), "{f}: `{k}_source` is empty");
                }
            }
            // Where a source is hedged, it says so in these words.
            for (k, s) in &r.sources {
                let l = s.to_lowercase();
                assert!(
                    l.contains("from memory")
                        || l.contains("consistent")
                        || l.contains("common practice")
                        || l.contains("confirmed")
                        || l.contains("rfsite"),
                    "{f}: `{k}_source` states no confidence: {s}"
                );
            }
        }
        let all = builtin_rules();
        // REFERENCES.md, public-safety acceptance: -95 dBm; 95 %/99 % and 90 %/99 %; 20 cells, 20-80 ft.
        let ps = &all["public-safety-95-99"];
        assert_eq!(
            (
                ps.threshold_dbm,
                ps.target_general,
                ps.target_critical,
                ps.cells_per_floor
            ),
            (-95.0, 0.95, 0.99, 20)
        );
        assert_eq!(
            (
                ps.min_cell_side,
                ps.max_cell_side,
                ps.cell_side_unit.as_str()
            ),
            (20.0, 80.0, "ft")
        );
        let ps90 = &all["public-safety-90-99"];
        assert_eq!((ps90.target_general, ps90.target_critical), (0.90, 0.99));
        assert_eq!(all["wifi-voice"].threshold_dbm, -67.0);
        assert!(all.contains_key("cellular-rsrp"));
    }

    #[test]
    fn a_number_without_source_is_refused() {
        let text = "id = \"x\"\nname = \"x\"\nauthority = \"a\"\nmetric = \"rssi-dbm\"\nthreshold_dbm = -90.0\n";
        let e = parse_rule(text).unwrap_err();
        assert!(e.contains("threshold_dbm_source"), "{e}");
    }
}
