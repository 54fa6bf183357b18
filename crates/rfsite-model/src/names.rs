//! File names made from ids, for figures: deterministic and injective (two different id
//! lists never give one name), whatever the ids hold.
//!
//! Each id is percent-encoded (RFC 3986 §2.1: `%` and two upper-case hex digits per byte
//! of UTF-8) except ASCII letters, digits, `-` and `_`, so a valid id (letters, digits,
//! `-`, `_`) is kept as written; the ids are joined by `.`, which no encoded id holds.

/// `s` percent-encoded, keeping ASCII letters, digits, `-`, `_` and the bytes in `keep`.
fn encode(s: &str, keep: &[u8]) -> String {
    let mut out = String::with_capacity(s.len());
    for b in s.bytes() {
        if b.is_ascii_alphanumeric() || b == b'-' || b == b'_' || keep.contains(&b) {
            out.push(b as char);
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out
}

/// The stem of a figure about `ids` (e.g. a floor and a service): `prefix-id1.id2`.
/// Different id lists give different stems for one prefix.
pub fn figure_stem(prefix: &str, ids: &[&str]) -> String {
    let parts: Vec<String> = ids.iter().map(|s| encode(s, b"")).collect();
    format!("{prefix}-{}", parts.join("."))
}

/// The file name of a figure with id `id`: `id.svg`, with every byte other than ASCII
/// letters, digits, `-`, `_` and `.` percent-encoded (no path separator can remain).
/// A [`figure_stem`] is kept as it is, unless its ids needed encoding.
pub fn figure_file(id: &str) -> String {
    format!("{}.svg", encode(id, b"."))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    #[test]
    fn valid_ids_are_kept_as_written() {
        assert_eq!(figure_stem("map", &["L1", "ps700"]), "map-L1.ps700");
        assert_eq!(figure_file("map-L1.ps700"), "map-L1.ps700.svg");
        assert_eq!(figure_file("survey-scatter"), "survey-scatter.svg");
        // RFC 3986 §2.1 examples of the form: "/" is %2F, "%" is %25, "é" is %C3%A9.
        assert_eq!(
            figure_stem("map", &["a/b", "%", "é"]),
            "map-a%2Fb.%25.%C3%A9"
        );
        assert_eq!(figure_file("../x"), "..%2Fx.svg");
    }

    #[test]
    fn names_are_injective_over_short_id_pairs() {
        // Every pair of ids of up to 2 characters from an alphabet holding the separator,
        // the escape character, a path separator, both cases and the id punctuation:
        // no two pairs share a stem, nor a file name.
        let alphabet = ['a', 'A', '-', '_', '.', '%', '/', '2', 'F'];
        let mut ids = vec![String::new()];
        for c in alphabet {
            ids.push(c.to_string());
            for d in alphabet {
                ids.push(format!("{c}{d}"));
            }
        }
        let mut seen: BTreeMap<String, (String, String)> = BTreeMap::new();
        for a in &ids {
            for b in &ids {
                let name = figure_file(&figure_stem("map", &[a, b]));
                if let Some(prev) = seen.insert(name.clone(), (a.clone(), b.clone())) {
                    panic!("{prev:?} and ({a:?}, {b:?}) both give {name}");
                }
            }
        }
        assert_eq!(seen.len(), ids.len() * ids.len());
    }

    #[test]
    fn ids_that_used_to_collide_do_not() {
        // The former names replaced every character but letters, digits and `-` by `_`
        // and joined with `-`: these pairs shared a file.
        let pairs = [
            (["a/b", "lte"], ["a_b", "lte"]),
            (["a-b", "c"], ["a", "b-c"]),
        ];
        for (x, y) in pairs {
            assert_ne!(
                figure_stem("map", &x),
                figure_stem("map", &y),
                "{x:?} {y:?}"
            );
        }
    }
}
