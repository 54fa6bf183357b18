//! Finding a key path in a TOML text, so that a problem found after parsing (a plugin
//! option out of range, an unknown rule set) still points at its file, line and column.

use std::ops::Range;

use toml::de::{DeTable, DeValue};
use toml::Spanned;

/// One step of a key path.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Seg<'a> {
    /// A key of a table.
    Key(&'a str),
    /// The n-th element of an array (0-based).
    Index(usize),
    /// The element of an array of tables whose `id` is this.
    Id(&'a str),
}

/// Where a key path was found: the span of the deepest step that exists, and whether the
/// whole path exists. Spans point at keys (for `Key`) or elements (for `Index`, `Id`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Found {
    /// Byte span in the text.
    pub span: Range<usize>,
    /// The whole path exists.
    pub complete: bool,
}

/// Looks a key path up in `text`. `None` when the text does not parse as TOML.
pub fn locate(text: &str, path: &[Seg<'_>]) -> Option<Found> {
    let doc = DeTable::parse(text).ok()?;
    let mut span = 0..0;
    let mut here: Option<&Spanned<DeValue<'_>>> = None;
    let root = doc.get_ref();
    for seg in path {
        let next = match (here.map(|v| v.get_ref()), seg) {
            (None, Seg::Key(k)) => key_in(root, k),
            (Some(DeValue::Table(t)), Seg::Key(k)) => key_in(t, k),
            (Some(DeValue::Array(a)), Seg::Index(i)) => a.get(*i).map(|v| (v.span(), v)),
            (Some(DeValue::Array(a)), Seg::Id(id)) => a
                .iter()
                .find(|v| id_of(v) == Some(*id))
                .map(|v| (v.span(), v)),
            _ => None,
        };
        match next {
            Some((s, v)) => {
                span = s;
                here = Some(v);
            }
            None => {
                return Some(Found {
                    span,
                    complete: false,
                })
            }
        }
    }
    Some(Found {
        span,
        complete: true,
    })
}

fn key_in<'t, 'i>(
    t: &'t DeTable<'i>,
    key: &str,
) -> Option<(Range<usize>, &'t Spanned<DeValue<'i>>)> {
    t.iter()
        .find(|(k, _)| k.get_ref().as_ref() == key)
        .map(|(k, v)| (k.span(), v))
}

fn id_of<'t>(v: &'t Spanned<DeValue<'_>>) -> Option<&'t str> {
    let DeValue::Table(t) = v.get_ref() else {
        return None;
    };
    match key_in(t, "id")?.1.get_ref() {
        DeValue::String(s) => Some(s.as_ref()),
        _ => None,
    }
}

/// Splits a dotted option key (`rule_sets.mine.general_fraction`) into key steps.
pub fn dotted(key: &str) -> Vec<Seg<'_>> {
    key.split('.')
        .filter(|s| !s.is_empty())
        .map(Seg::Key)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "[site]\nid = \"a\"\n\n[[services]]\nid = \"one\"\n\n[[services]]\nid = \"two\"\nrules = \"x\"\n\n[plugins.grading.rule_sets.mine]\ngeneral_fraction = 2.0\n";

    fn line_of(span: &Range<usize>) -> usize {
        TEXT[..span.start].matches('\n').count() + 1
    }

    #[test]
    fn finds_a_service_key_by_id() {
        let f = locate(
            TEXT,
            &[Seg::Key("services"), Seg::Id("two"), Seg::Key("rules")],
        )
        .unwrap();
        assert!(f.complete);
        assert_eq!(line_of(&f.span), 9);
        assert_eq!(&TEXT[f.span.clone()], "rules");
    }

    #[test]
    fn finds_a_nested_option() {
        let mut p = vec![Seg::Key("plugins"), Seg::Key("grading")];
        p.extend(dotted("rule_sets.mine.general_fraction"));
        let f = locate(TEXT, &p).unwrap();
        assert!(f.complete);
        assert_eq!(line_of(&f.span), 12);
    }

    #[test]
    fn a_missing_key_points_at_the_deepest_step_found() {
        let f = locate(
            TEXT,
            &[Seg::Key("services"), Seg::Id("one"), Seg::Key("rules")],
        )
        .unwrap();
        assert!(!f.complete);
        assert_eq!(line_of(&f.span), 4);
    }
}
