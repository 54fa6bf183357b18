//! Wire types of the external-plugin protocol (`rfsite-plugin/1`).
//!
//! rfsite runs an external plugin's command, writes one [`Request`] as JSON on its stdin,
//! closes stdin, and reads one [`Response`] as JSON from its stdout. The payload types are
//! the same [`PluginOutput`] types the built-in plugins return, so an external plugin is
//! checked against exactly what a built-in one may produce.
//!
//! Numbers that are not finite (a coverage level outside the floor outline is NaN) travel
//! as JSON `null`; [`CoverageLayer::level_dbm`] reads `null` back as NaN.
//!
//! ```
//! use rfsite_plugin::wire::{Response, PROTOCOL};
//! let r = Response::parse(br#"{"protocol": "rfsite-plugin/1", "output": {"warnings": [{"plugin": "x", "message": "hi"}]}}"#).unwrap();
//! assert_eq!(r.protocol, PROTOCOL);
//! assert_eq!(r.output.warnings.len(), 1);
//! ```

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::PluginOutput;

/// The protocol id and version rfsite speaks; a request and its response carry it.
pub const PROTOCOL: &str = "rfsite-plugin/1";

/// What rfsite sends an external plugin on stdin.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Request {
    /// Always [`PROTOCOL`].
    pub protocol: String,
    /// The plugin's id (its `[plugins.<id>]` table name).
    pub plugin: String,
    /// rfsite's version.
    pub rfsite_version: String,
    /// The validated site (all lengths in metres), as rfsite serialises `rfsite_model::Site`.
    pub site: serde_json::Value,
    /// The plugin's own keys of its `[plugins.<id>]` table (the host's keys removed).
    pub options: serde_json::Map<String, serde_json::Value>,
    /// Outputs of the plugins named in its `after` list that ran, by plugin id.
    pub earlier: BTreeMap<String, PluginOutput>,
}

/// What an external plugin answers on stdout.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Response {
    /// Must equal [`PROTOCOL`].
    pub protocol: String,
    /// The outputs, as a built-in plugin returns them.
    #[serde(default)]
    pub output: PluginOutput,
}

/// Why a response could not be accepted.
#[derive(Debug, Clone, PartialEq)]
pub enum WireError {
    /// Not JSON, or not the shape of a [`Response`].
    Malformed(String),
    /// The plugin speaks another protocol version.
    Protocol {
        /// What it answered with.
        found: String,
    },
}

impl std::fmt::Display for WireError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            WireError::Malformed(m) => {
                write!(f, "answer is not a valid `{PROTOCOL}` response: {m}")
            }
            WireError::Protocol { found } => write!(
                f,
                "answers in protocol `{found}`, but rfsite speaks `{PROTOCOL}`"
            ),
        }
    }
}

impl std::error::Error for WireError {}

impl Response {
    /// Parses and checks a response: the protocol field first (so that a plugin written for
    /// another version gets a version error rather than a shape error), then the output.
    pub fn parse(bytes: &[u8]) -> Result<Response, WireError> {
        let v: serde_json::Value =
            serde_json::from_slice(bytes).map_err(|e| WireError::Malformed(e.to_string()))?;
        let found = match v.get("protocol") {
            Some(serde_json::Value::String(s)) => s.clone(),
            Some(other) => {
                return Err(WireError::Malformed(format!(
                    "`protocol` must be a string, found {other}"
                )))
            }
            None => return Err(WireError::Malformed("no `protocol` field".into())),
        };
        if found != PROTOCOL {
            return Err(WireError::Protocol { found });
        }
        serde_json::from_value(v).map_err(|e| WireError::Malformed(e.to_string()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::*;

    fn sample_output() -> PluginOutput {
        let mut extra = serde_json::Map::new();
        extra.insert("sir_p05_db".into(), serde_json::json!({"L1": 7.5}));
        PluginOutput {
            layers: vec![CoverageLayer {
                floor: "L1".into(),
                service: "lte".into(),
                model: "multi-wall".into(),
                grid: GridSpec {
                    origin_x_m: 0.25,
                    origin_y_m: 0.25,
                    step_m: 0.5,
                    nx: 2,
                    ny: 1,
                },
                level_dbm: vec![-61.5, -70.25],
                best_server: vec![0, 1],
                servers: vec!["A1".into(), "A2".into()],
            }],
            findings: vec![Finding {
                id: "sir-lte-L1".into(),
                severity: Severity::Major,
                floor: Some("L1".into()),
                service: Some("lte".into()),
                title: "Low SIR".into(),
                detail: "12 % of the floor below 9 dB".into(),
                plugin: "interference".into(),
                shortfall_db: Some(2.5),
                location_m: Some([3.0, 4.5]),
                causes: vec!["overlap".into()],
                remedies: vec![],
            }],
            tables: vec![Table {
                id: "t".into(),
                title: "SIR".into(),
                columns: vec!["floor".into()],
                rows: vec![vec!["L1".into()]],
            }],
            warnings: vec![Warning {
                plugin: "interference".into(),
                message: "walls ignored for interferers".into(),
            }],
            cautions: vec![Caution {
                id: "c".into(),
                topic: "t".into(),
                text: "x".into(),
            }],
            extra,
            ..Default::default()
        }
    }

    #[test]
    fn request_round_trips() {
        let mut earlier = BTreeMap::new();
        earlier.insert("multi-wall".to_string(), sample_output());
        let mut options = serde_json::Map::new();
        options.insert("sir_target_db".into(), serde_json::json!(9.0));
        let r = Request {
            protocol: PROTOCOL.into(),
            plugin: "interference".into(),
            rfsite_version: "0.1.0".into(),
            site: serde_json::json!({"meta": {"id": "s"}, "floors": []}),
            options,
            earlier,
        };
        let text = serde_json::to_string(&r).unwrap();
        let back: Request = serde_json::from_str(&text).unwrap();
        assert_eq!(back, r);
    }

    #[test]
    fn response_round_trips() {
        let r = Response {
            protocol: PROTOCOL.into(),
            output: sample_output(),
        };
        let text = serde_json::to_vec(&r).unwrap();
        assert_eq!(Response::parse(&text).unwrap(), r);
    }

    #[test]
    fn nan_levels_travel_as_null_and_come_back_as_nan() {
        let mut o = sample_output();
        o.layers[0].level_dbm[1] = f32::NAN;
        let text = serde_json::to_string(&Response {
            protocol: PROTOCOL.into(),
            output: o,
        })
        .unwrap();
        assert!(text.contains("[-61.5,null]"), "{text}");
        let back = Response::parse(text.as_bytes()).unwrap();
        assert_eq!(back.output.layers[0].level_dbm[0], -61.5);
        assert!(back.output.layers[0].level_dbm[1].is_nan());
    }

    /// The documented JSON schema names exactly the fields the wire types have.
    #[test]
    fn the_documented_schema_matches_the_wire_types() {
        let schema: serde_json::Value =
            serde_json::from_str(include_str!("../../../docs/external-plugins.schema.json"))
                .unwrap();
        let keys = |v: &serde_json::Value| -> Vec<String> {
            let mut k: Vec<String> = v.as_object().unwrap().keys().cloned().collect();
            k.sort();
            k
        };
        let defs = &schema["$defs"];
        assert_eq!(
            keys(&defs["PluginOutput"]["properties"]),
            keys(&serde_json::to_value(PluginOutput::default()).unwrap())
        );
        let req = Request {
            protocol: PROTOCOL.into(),
            plugin: "p".into(),
            rfsite_version: "0".into(),
            site: serde_json::json!({}),
            options: Default::default(),
            earlier: BTreeMap::new(),
        };
        assert_eq!(
            keys(&defs["Request"]["properties"]),
            keys(&serde_json::to_value(&req).unwrap())
        );
        let o = sample_output();
        assert_eq!(
            keys(&defs["Finding"]["properties"]),
            keys(&serde_json::to_value(&o.findings[0]).unwrap())
        );
        assert_eq!(
            keys(&defs["CoverageLayer"]["properties"]),
            keys(&serde_json::to_value(&o.layers[0]).unwrap())
        );
        assert_eq!(
            defs["Response"]["properties"]["protocol"]["const"],
            PROTOCOL
        );
    }

    #[test]
    fn an_empty_output_is_accepted() {
        let r = Response::parse(br#"{"protocol": "rfsite-plugin/1"}"#).unwrap();
        assert_eq!(r.output, PluginOutput::default());
    }

    #[test]
    fn another_version_is_a_protocol_error() {
        assert_eq!(
            Response::parse(br#"{"protocol": "rfsite-plugin/2", "output": {}}"#),
            Err(WireError::Protocol {
                found: "rfsite-plugin/2".into()
            })
        );
    }

    #[test]
    fn garbage_is_malformed() {
        assert!(matches!(
            Response::parse(b"hello"),
            Err(WireError::Malformed(_))
        ));
        assert!(matches!(
            Response::parse(br#"{"output": {}}"#),
            Err(WireError::Malformed(_))
        ));
        assert!(matches!(
            Response::parse(
                br#"{"protocol": "rfsite-plugin/1", "output": {"findings": [{"id": 1}]}}"#
            ),
            Err(WireError::Malformed(_))
        ));
    }
}
