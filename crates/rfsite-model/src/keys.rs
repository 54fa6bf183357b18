//! The keys each table of site.toml may hold, read from the serde derive of the raw types
//! themselves (so the list cannot drift from what the loader accepts), for "did you mean"
//! hints on unknown keys.

use serde::de::{self, Deserialize, Visitor};

use crate::raw::*;

/// A deserializer that only records the field list a derived struct asks for.
struct FieldGrabber<'a>(&'a mut &'static [&'static str]);

impl<'de> de::Deserializer<'de> for FieldGrabber<'_> {
    type Error = de::value::Error;

    fn deserialize_any<V: Visitor<'de>>(self, _: V) -> Result<V::Value, Self::Error> {
        Err(de::Error::custom("not a struct"))
    }

    fn deserialize_struct<V: Visitor<'de>>(
        self,
        _name: &'static str,
        fields: &'static [&'static str],
        _: V,
    ) -> Result<V::Value, Self::Error> {
        *self.0 = fields;
        Err(de::Error::custom("fields recorded"))
    }

    serde::forward_to_deserialize_any! {
        bool i8 i16 i32 i64 i128 u8 u16 u32 u64 u128 f32 f64 char str string bytes byte_buf
        option unit unit_struct newtype_struct seq tuple tuple_struct map enum identifier
        ignored_any
    }
}

/// The field names of a struct with a derived `Deserialize`.
fn fields_of<T: Deserialize<'static>>() -> &'static [&'static str] {
    let mut fields: &'static [&'static str] = &[];
    let _ = T::deserialize(FieldGrabber(&mut fields));
    fields
}

/// The keys allowed in the table at `parent` (a key path with array indices), when the
/// site format fixes them; `None` for free-form tables (`[plugins.<id>]`).
pub fn known_keys(parent: &[&str]) -> Option<&'static [&'static str]> {
    let is_index = |s: &str| s.parse::<usize>().is_ok();
    Some(match parent {
        [] => fields_of::<RawProject>(),
        ["site"] => fields_of::<RawSiteMeta>(),
        ["prediction"] => fields_of::<RawPrediction>(),
        ["materials", i, "layers", j] if is_index(i) && is_index(j) => fields_of::<RawLayer>(),
        ["what_if", i, sub, j] if is_index(i) && is_index(j) => match *sub {
            "set_material" => fields_of::<RawSetMaterial>(),
            "set_power" => fields_of::<RawSetPower>(),
            "add_transmitters" => fields_of::<RawTransmitter>(),
            _ => return None,
        },
        ["services", i, "uplink"] if is_index(i) => fields_of::<RawUplink>(),
        ["floors", i, "cad"] if is_index(i) => fields_of::<RawCadRef>(),
        ["donors", i, sub] if is_index(i) => match *sub {
            "serving_site" => fields_of::<RawServingSite>(),
            "donor_antenna" => fields_of::<RawDonorAntenna>(),
            "booster" => fields_of::<RawBooster>(),
            _ => return None,
        },
        [table, i] if is_index(i) => match *table {
            "revisions" => fields_of::<RawRevision>(),
            "materials" => fields_of::<RawMaterial>(),
            "floors" => fields_of::<RawFloor>(),
            "walls" => fields_of::<RawWall>(),
            "openings" => fields_of::<RawOpening>(),
            "zones" => fields_of::<RawZone>(),
            "services" => fields_of::<RawService>(),
            "transmitters" => fields_of::<RawTransmitter>(),
            "donors" => fields_of::<RawDonor>(),
            "surveys" => fields_of::<RawSurvey>(),
            "probes" => fields_of::<RawProbe>(),
            "what_if" => fields_of::<RawWhatIf>(),
            _ => return None,
        },
        _ => return None,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn service_keys_come_from_the_derive() {
        let k = known_keys(&["services", "0"]).unwrap();
        assert!(k.contains(&"threshold_dbm") && k.contains(&"design_margin_db"));
        assert!(known_keys(&[]).unwrap().contains(&"transmitters"));
        assert!(known_keys(&["plugins", "grading"]).is_none());
    }
}
