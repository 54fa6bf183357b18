//! The optional `portfolio.toml` at the top of a portfolio folder: the summary's title and
//! the portfolio's owner. Everything else comes from the sites.

use std::path::Path;

use serde::{Deserialize, Serialize};

/// File name, at DIR.
pub const FILE: &str = "portfolio.toml";

/// Longest file read (it holds two short strings).
const MAX_BYTES: u64 = 64 * 1024;

/// Longest title or owner, characters.
const MAX_CHARS: usize = 200;

/// The `[portfolio]` table.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct PortfolioMeta {
    /// The summary's title (default "Portfolio coverage summary").
    #[serde(default)]
    pub name: Option<String>,
    /// Who holds the portfolio: the owner or manager the summary is for.
    #[serde(default)]
    pub owner: Option<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct PortfolioFile {
    portfolio: PortfolioMeta,
}

const HINT: &str = "portfolio.toml holds one table: `[portfolio]` with `name = \"...\"` (the summary's title) and `owner = \"...\"`, both optional";

/// Reads DIR/portfolio.toml; none there is the default. Errors as `file:line:column:
/// message` with a hint line.
pub fn read(dir: &Path) -> Result<PortfolioMeta, String> {
    let path = dir.join(FILE);
    let shown = rfsite_engine::world::display_path(&path);
    let Ok(md) = std::fs::symlink_metadata(&path) else {
        return Ok(PortfolioMeta::default());
    };
    if !md.is_file() {
        return Err(format!("{shown}: not a regular file\n  = hint: {HINT}"));
    }
    if md.len() > MAX_BYTES {
        return Err(format!(
            "{shown}: {} bytes, more than the {MAX_BYTES} a portfolio.toml may have\n  = hint: {HINT}",
            md.len()
        ));
    }
    let text = std::fs::read_to_string(&path).map_err(|e| format!("{shown}: {e}"))?;
    parse(&shown, &text)
}

/// Parses the text of a portfolio.toml shown as `shown`.
pub fn parse(shown: &str, text: &str) -> Result<PortfolioMeta, String> {
    let src = rfsite_model::SourceFile::new(shown, text);
    let at = |offset: usize| {
        let (l, c) = src.line_col(offset);
        format!("{shown}:{l}:{c}")
    };
    let file: PortfolioFile = toml::from_str(text).map_err(|e| {
        let where_ = e
            .span()
            .map(|s| at(s.start))
            .unwrap_or_else(|| format!("{shown}:1:1"));
        format!("{where_}: {}\n  = hint: {HINT}", e.message().trim())
    })?;
    let m = file.portfolio;
    for (key, v) in [("name", &m.name), ("owner", &m.owner)] {
        let Some(v) = v else { continue };
        let bad =
            v.chars().count() > MAX_CHARS || v.chars().any(char::is_control) || v.trim().is_empty();
        if bad {
            let offset = text.find(key).unwrap_or(0);
            return Err(format!(
                "{}: `{key}` must be 1 to {MAX_CHARS} printable characters\n  = hint: {HINT}",
                at(offset)
            ));
        }
    }
    Ok(m)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn both_keys_are_optional_and_unknown_keys_are_located() {
        let m = parse("p.toml", "[portfolio]\nowner = \"Marbury Estates\"\n").unwrap();
        assert_eq!(m.owner.as_deref(), Some("Marbury Estates"));
        assert_eq!(m.name, None);
        let e = parse("p.toml", "[portfolio]\nowner = \"x\"\nownr = \"y\"\n").unwrap_err();
        assert!(e.starts_with("p.toml:3:1: unknown field `ownr`"), "{e}");
        assert!(e.contains("= hint:"), "{e}");
        let e = parse("p.toml", "[portfolio]\nname = \"\"\n").unwrap_err();
        assert!(e.starts_with("p.toml:2:1: `name`"), "{e}");
    }
}
