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

/// Most JSON values (objects, arrays, strings, numbers, booleans, nulls, at any depth) a
/// response's free-form `output.extra` may hold. `extra` is kept as a `serde_json::Value`
/// tree, which costs up to ~100 bytes a value against ~8 bytes of JSON (small objects);
/// 250 000 values keep it under ~30 MB whatever the answer size.
pub const MAX_EXTRA_VALUES: u64 = 250_000;

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
    /// A part that is kept as a JSON tree is larger than rfsite keeps (the message).
    TooBig(String),
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
            WireError::TooBig(m) => write!(f, "answer breaks `{PROTOCOL}`: {m}"),
        }
    }
}

impl std::error::Error for WireError {}

impl Response {
    /// Parses and checks a response: the protocol field first (so that a plugin written for
    /// another version gets a version error rather than a shape error), then the size of
    /// `output.extra`, then the output, straight into the output types. Two passes over
    /// the bytes; the first builds nothing but the protocol string, the second no
    /// intermediate JSON tree.
    pub fn parse(bytes: &[u8]) -> Result<Response, WireError> {
        let probe: probe::Probe =
            serde_json::from_slice(bytes).map_err(|e| WireError::Malformed(e.to_string()))?;
        let found = match probe.protocol {
            Some(probe::Protocol::Text(s)) => s,
            Some(probe::Protocol::Other(kind)) => {
                return Err(WireError::Malformed(format!(
                    "`protocol` must be a string, found {kind}"
                )))
            }
            None => return Err(WireError::Malformed("no `protocol` field".into())),
        };
        if found != PROTOCOL {
            return Err(WireError::Protocol { found });
        }
        if probe.extra_values > MAX_EXTRA_VALUES {
            return Err(WireError::TooBig(format!(
                "`output.extra` holds more than {MAX_EXTRA_VALUES} JSON values; put bulk data in layers or tables"
            )));
        }
        serde_json::from_slice(bytes).map_err(|e| WireError::Malformed(e.to_string()))
    }
}

/// The first pass of [`Response::parse`]: reads the protocol and counts the values of
/// `output.extra` without building them; accepts any JSON object.
mod probe {
    use serde::de::{self, Deserializer, IgnoredAny, MapAccess, SeqAccess, Visitor};
    use serde::Deserialize;

    /// What the first pass found.
    pub struct Probe {
        pub protocol: Option<Protocol>,
        pub extra_values: u64,
    }

    /// The `protocol` field: a string, or the kind of value found instead.
    pub enum Protocol {
        Text(String),
        Other(&'static str),
    }

    impl<'de> Deserialize<'de> for Probe {
        fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
            d.deserialize_map(TopVisitor)
        }
    }

    struct TopVisitor;
    impl<'de> Visitor<'de> for TopVisitor {
        type Value = Probe;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("a JSON object")
        }
        fn visit_map<A: MapAccess<'de>>(self, mut m: A) -> Result<Probe, A::Error> {
            let mut p = Probe {
                protocol: None,
                extra_values: 0,
            };
            while let Some(k) = m.next_key::<std::borrow::Cow<'de, str>>()? {
                match k.as_ref() {
                    "protocol" => p.protocol = Some(m.next_value::<Protocol>()?),
                    "output" => p.extra_values += m.next_value::<OutputProbe>()?.0,
                    _ => {
                        m.next_value::<IgnoredAny>()?;
                    }
                }
            }
            Ok(p)
        }
    }

    impl<'de> Deserialize<'de> for Protocol {
        fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
            d.deserialize_any(ProtocolVisitor)
        }
    }

    struct ProtocolVisitor;
    impl<'de> Visitor<'de> for ProtocolVisitor {
        type Value = Protocol;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("a string")
        }
        fn visit_str<E: de::Error>(self, v: &str) -> Result<Protocol, E> {
            Ok(Protocol::Text(v.to_string()))
        }
        fn visit_bool<E: de::Error>(self, _: bool) -> Result<Protocol, E> {
            Ok(Protocol::Other("a boolean"))
        }
        fn visit_i64<E: de::Error>(self, _: i64) -> Result<Protocol, E> {
            Ok(Protocol::Other("a number"))
        }
        fn visit_u64<E: de::Error>(self, _: u64) -> Result<Protocol, E> {
            Ok(Protocol::Other("a number"))
        }
        fn visit_f64<E: de::Error>(self, _: f64) -> Result<Protocol, E> {
            Ok(Protocol::Other("a number"))
        }
        fn visit_unit<E: de::Error>(self) -> Result<Protocol, E> {
            Ok(Protocol::Other("null"))
        }
        fn visit_seq<A: SeqAccess<'de>>(self, mut s: A) -> Result<Protocol, A::Error> {
            while s.next_element::<IgnoredAny>()?.is_some() {}
            Ok(Protocol::Other("an array"))
        }
        fn visit_map<A: MapAccess<'de>>(self, mut m: A) -> Result<Protocol, A::Error> {
            while m.next_entry::<IgnoredAny, IgnoredAny>()?.is_some() {}
            Ok(Protocol::Other("an object"))
        }
    }

    /// `output`: the number of values under its `extra` key; anything else is skipped.
    struct OutputProbe(u64);
    impl<'de> Deserialize<'de> for OutputProbe {
        fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
            d.deserialize_any(OutputVisitor)
        }
    }

    struct OutputVisitor;
    impl<'de> Visitor<'de> for OutputVisitor {
        type Value = OutputProbe;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("any JSON value")
        }
        fn visit_map<A: MapAccess<'de>>(self, mut m: A) -> Result<OutputProbe, A::Error> {
            let mut n = 0;
            while let Some(k) = m.next_key::<std::borrow::Cow<'de, str>>()? {
                if k == "extra" {
                    n += m.next_value::<Count>()?.0;
                } else {
                    m.next_value::<IgnoredAny>()?;
                }
            }
            Ok(OutputProbe(n))
        }
        fn visit_seq<A: SeqAccess<'de>>(self, mut s: A) -> Result<OutputProbe, A::Error> {
            while s.next_element::<IgnoredAny>()?.is_some() {}
            Ok(OutputProbe(0))
        }
        fn visit_bool<E: de::Error>(self, _: bool) -> Result<OutputProbe, E> {
            Ok(OutputProbe(0))
        }
        fn visit_i64<E: de::Error>(self, _: i64) -> Result<OutputProbe, E> {
            Ok(OutputProbe(0))
        }
        fn visit_u64<E: de::Error>(self, _: u64) -> Result<OutputProbe, E> {
            Ok(OutputProbe(0))
        }
        fn visit_f64<E: de::Error>(self, _: f64) -> Result<OutputProbe, E> {
            Ok(OutputProbe(0))
        }
        fn visit_str<E: de::Error>(self, _: &str) -> Result<OutputProbe, E> {
            Ok(OutputProbe(0))
        }
        fn visit_unit<E: de::Error>(self) -> Result<OutputProbe, E> {
            Ok(OutputProbe(0))
        }
    }

    /// The number of JSON values in one value, itself included; nothing is kept.
    struct Count(u64);
    impl<'de> Deserialize<'de> for Count {
        fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
            d.deserialize_any(CountVisitor)
        }
    }

    struct CountVisitor;
    impl<'de> Visitor<'de> for CountVisitor {
        type Value = Count;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("any JSON value")
        }
        fn visit_map<A: MapAccess<'de>>(self, mut m: A) -> Result<Count, A::Error> {
            let mut n = 1;
            while m.next_key::<IgnoredAny>()?.is_some() {
                n += m.next_value::<Count>()?.0;
            }
            Ok(Count(n))
        }
        fn visit_seq<A: SeqAccess<'de>>(self, mut s: A) -> Result<Count, A::Error> {
            let mut n = 1;
            while let Some(c) = s.next_element::<Count>()? {
                n += c.0;
            }
            Ok(Count(n))
        }
        fn visit_bool<E: de::Error>(self, _: bool) -> Result<Count, E> {
            Ok(Count(1))
        }
        fn visit_i64<E: de::Error>(self, _: i64) -> Result<Count, E> {
            Ok(Count(1))
        }
        fn visit_u64<E: de::Error>(self, _: u64) -> Result<Count, E> {
            Ok(Count(1))
        }
        fn visit_f64<E: de::Error>(self, _: f64) -> Result<Count, E> {
            Ok(Count(1))
        }
        fn visit_str<E: de::Error>(self, _: &str) -> Result<Count, E> {
            Ok(Count(1))
        }
        fn visit_unit<E: de::Error>(self) -> Result<Count, E> {
            Ok(Count(1))
        }
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

    #[test]
    fn a_non_string_protocol_is_named_by_kind() {
        assert_eq!(
            Response::parse(br#"{"protocol": {"v": [1, 2]}}"#),
            Err(WireError::Malformed(
                "`protocol` must be a string, found an object".into()
            ))
        );
    }

    #[test]
    fn the_protocol_is_checked_before_the_shape_wherever_it_stands() {
        assert_eq!(
            Response::parse(
                br#"{"output": {"layers": "new shape"}, "protocol": "rfsite-plugin/2"}"#
            ),
            Err(WireError::Protocol {
                found: "rfsite-plugin/2".into()
            })
        );
    }

    #[test]
    fn extra_is_counted_at_every_depth_and_refused_past_the_limit() {
        let n = MAX_EXTRA_VALUES as usize; // `extra` and the array count 2 more
        let body = vec!["0"; n - 2].join(",");
        let ok = format!(
            r#"{{"protocol": "rfsite-plugin/1", "output": {{"extra": {{"x": [{body}]}}}}}}"#
        );
        assert_eq!(
            Response::parse(ok.as_bytes()).unwrap().output.extra["x"]
                .as_array()
                .unwrap()
                .len(),
            n - 2
        );
        let over = ok.replace("[0,", "[0,0,");
        assert!(matches!(
            Response::parse(over.as_bytes()),
            Err(WireError::TooBig(m)) if m.contains("`output.extra`")
        ));
    }
}
