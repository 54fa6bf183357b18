//! The plugin's `fit` and `bounds` options.

use rfsite_model::Site;
use rfsite_plugin::PluginError;

use crate::Term;

fn bad(key: &str, message: String) -> PluginError {
    PluginError::BadOption {
        key: key.into(),
        message,
    }
}

/// The terms to fit (`fit`, default `["offset"]`); each material must be used on the site.
pub fn terms(options: &toml::Table, site: &Site) -> Result<Vec<Term>, PluginError> {
    let terms: Vec<Term> = match options.get("fit") {
        None => vec![Term::Offset],
        Some(toml::Value::Array(a)) => a
            .iter()
            .map(|v| {
                v.as_str().and_then(Term::parse).ok_or_else(|| {
                    bad(
                        "fit",
                        format!("`{v}` is not `offset`, `material:<id>` or `distance-exponent`"),
                    )
                })
            })
            .collect::<Result<_, _>>()?,
        Some(v) => {
            return Err(bad(
                "fit",
                format!("expected a list, found {}", v.type_str()),
            ))
        }
    };
    for t in &terms {
        if let Term::Material(m) = t {
            if !site.materials_used.contains(m) {
                return Err(bad(
                    "fit",
                    format!(
                        "material `{m}` is not used on this site (used: {})",
                        site.materials_used.join(", ")
                    ),
                ));
            }
        }
    }
    Ok(terms)
}

/// The bounds of each term (`bounds.<key> = [low, high]`, else the term's default).
pub fn bounds(options: &toml::Table, terms: &[Term]) -> Result<Vec<(f64, f64)>, PluginError> {
    let bt = options.get("bounds").and_then(|v| v.as_table());
    terms
        .iter()
        .map(|t| match bt.and_then(|b| b.get(&t.key())) {
            None => Ok(t.default_bounds()),
            Some(toml::Value::Array(a)) if a.len() == 2 => pair(&a[0], &a[1]).ok_or_else(|| {
                bad(
                    "bounds",
                    format!("`{}` needs [low, high] numbers, low <= high", t.key()),
                )
            }),
            Some(_) => Err(bad("bounds", format!("`{}` needs [low, high]", t.key()))),
        })
        .collect()
}

fn pair(lo: &toml::Value, hi: &toml::Value) -> Option<(f64, f64)> {
    let n = |v: &toml::Value| v.as_float().or(v.as_integer().map(|i| i as f64));
    match (n(lo), n(hi)) {
        (Some(lo), Some(hi)) if lo <= hi => Some((lo, hi)),
        _ => None,
    }
}
