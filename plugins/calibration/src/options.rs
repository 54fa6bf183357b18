//! The plugin's options: `fit`, `bounds`, `min_points`, `apply`, `model`.

use rfsite_model::Site;
use rfsite_plugin::{Context, PluginError};

use crate::Term;

fn bad(key: &str, message: String) -> PluginError {
    PluginError::BadOption {
        key: key.into(),
        message,
    }
}

/// The checked options of the calibration.
pub(crate) struct CalOptions {
    pub terms: Vec<Term>,
    pub bounds: Vec<(f64, f64)>,
    pub min_points: usize,
    pub apply: bool,
    pub base: String,
}

/// Reads and checks `fit`, `bounds`, `min_points`, `apply` and `model`.
pub(crate) fn read_options(ctx: &Context<'_>) -> Result<CalOptions, PluginError> {
    let terms = terms(ctx.options, ctx.site)?;
    let bounds = bounds(ctx.options, &terms)?;
    let min_points = ctx.option_f64("min_points", 20.0)?.max(1.0) as usize;
    let apply = ctx.option_bool("apply", false)?;
    let base = ctx.option_str("model", "multi-wall")?;
    if base != "multi-wall" && base != "free-space" {
        return Err(bad(
            "model",
            format!("`{base}` is not a prediction model; write `multi-wall` or `free-space`"),
        ));
    }
    Ok(CalOptions {
        terms,
        bounds,
        min_points,
        apply,
        base,
    })
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
                    &format!("bounds.{}", t.key()),
                    "needs [low, high] numbers, low <= high (e.g. [-10, 10])".into(),
                )
            }),
            Some(_) => Err(bad(
                &format!("bounds.{}", t.key()),
                "needs [low, high]".into(),
            )),
        })
        .collect()
}

fn pair(lo: &toml::Value, hi: &toml::Value) -> Option<(f64, f64)> {
    let n = |v: &toml::Value| v.as_float().or(v.as_integer().map(|i| i as f64));
    match (n(lo), n(hi)) {
        // NaN fails `lo <= hi`; an infinite bound is allowed only on its own side.
        (Some(lo), Some(hi)) if lo <= hi && lo < f64::INFINITY && hi > f64::NEG_INFINITY => {
            Some((lo, hi))
        }
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table(s: &str) -> toml::Table {
        s.parse().unwrap()
    }

    #[test]
    fn bounds_are_checked() {
        let t = [Term::Offset];
        let ok = bounds(&table("bounds = { offset = [-3, 5.5] }"), &t).unwrap();
        assert_eq!(ok, vec![(-3.0, 5.5)]);
        assert_eq!(bounds(&table(""), &t).unwrap(), vec![(-20.0, 20.0)]);
        for bad in [
            "bounds = { offset = [5, -3] }",
            "bounds = { offset = [nan, 1] }",
            "bounds = { offset = [inf, inf] }",
            "bounds = { offset = [1] }",
            "bounds = { offset = \"wide\" }",
        ] {
            assert!(bounds(&table(bad), &t).is_err(), "{bad}");
        }
        let open = bounds(&table("bounds = { offset = [-inf, 2] }"), &t).unwrap();
        assert_eq!(open, vec![(f64::NEG_INFINITY, 2.0)]);
    }
}
