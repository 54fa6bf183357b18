//! The world: the only place rfsite reads input files. Every file read is hashed
//! (SHA-256) so the report's audit trail lists exactly what went in.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use rfsite_plugin::InputFile;
use sha2::{Digest, Sha256};

/// A site folder on disk.
#[derive(Debug, Clone)]
pub struct World {
    /// The site folder.
    pub root: PathBuf,
    /// The site file.
    pub site_file: PathBuf,
    hashes: BTreeMap<String, String>,
}

/// Hex SHA-256 of bytes.
pub fn sha256_hex(bytes: &[u8]) -> String {
    let d = Sha256::digest(bytes);
    d.iter().map(|b| format!("{b:02x}")).collect()
}

/// A path shown relative to the working folder when it lies below it.
pub fn display_path(p: &Path) -> String {
    if let Ok(cwd) = std::env::current_dir() {
        if let Ok(rel) = p.strip_prefix(&cwd) {
            return rel.display().to_string();
        }
    }
    p.display().to_string()
}

impl World {
    /// Opens `SITE`: a `site.toml` or a folder holding one.
    pub fn open(site: &Path) -> Result<World, String> {
        let (root, file) = if site.is_dir() {
            (site.to_path_buf(), site.join("site.toml"))
        } else {
            (site.parent().map(Path::to_path_buf).unwrap_or_else(|| PathBuf::from(".")), site.to_path_buf())
        };
        if !file.is_file() {
            return Err(if site.is_dir() {
                format!("{}: no site.toml in this folder\n  = hint: `rfsite init {}` writes one to start from", display_path(site), display_path(site))
            } else {
                format!("{}: no such file\n  = hint: SITE is a site.toml or a folder holding one", display_path(site))
            });
        }
        Ok(World { root, site_file: file, hashes: BTreeMap::new() })
    }

    /// The site file as shown to the user.
    pub fn display_site_path(&self) -> String {
        display_path(&self.site_file)
    }

    /// Reads the site file.
    pub fn read_site_text(&mut self) -> Result<String, String> {
        let name = self.site_file.file_name().map(|n| n.to_string_lossy().to_string()).unwrap_or_else(|| "site.toml".into());
        let bytes = std::fs::read(&self.site_file).map_err(|e| format!("{}: {e}", self.display_site_path()))?;
        self.hashes.insert(name, sha256_hex(&bytes));
        String::from_utf8(bytes).map_err(|_| format!("{}: the file is not UTF-8 text", self.display_site_path()))
    }

    /// Resolves a path named in the site file (relative to the site folder); refuses
    /// absolute paths and `..` so a site cannot reach outside its folder.
    pub fn resolve(&self, rel: &str) -> Result<PathBuf, String> {
        let p = Path::new(rel);
        if p.is_absolute() || p.components().any(|c| matches!(c, std::path::Component::ParentDir)) {
            return Err(format!("`{rel}`: paths in a site file are relative to the site folder and stay inside it"));
        }
        Ok(self.root.join(p))
    }

    /// Reads a file named by the site, hashing it.
    pub fn read_bytes(&mut self, rel: &str) -> Result<Vec<u8>, String> {
        let p = self.resolve(rel)?;
        let bytes = std::fs::read(&p).map_err(|e| format!("{}: {e}", display_path(&p)))?;
        self.hashes.insert(rel.to_string(), sha256_hex(&bytes));
        Ok(bytes)
    }

    /// Records a file that was streamed (hash computed by the caller).
    pub fn record(&mut self, rel: &str, sha256: String) {
        self.hashes.insert(rel.to_string(), sha256);
    }

    /// The inputs read so far, sorted by path.
    pub fn inputs(&self) -> Vec<InputFile> {
        self.hashes.iter().map(|(p, h)| InputFile { path: p.clone(), sha256: h.clone() }).collect()
    }
}
