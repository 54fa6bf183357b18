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
            (
                site.parent()
                    .map(Path::to_path_buf)
                    .unwrap_or_else(|| PathBuf::from(".")),
                site.to_path_buf(),
            )
        };
        if !file.is_file() {
            return Err(if site.is_dir() {
                format!("{}: no site.toml in this folder\n  = hint: `rfsite init {}` writes one to start from", display_path(site), display_path(site))
            } else {
                format!(
                    "{}: no such file\n  = hint: SITE is a site.toml or a folder holding one",
                    display_path(site)
                )
            });
        }
        Ok(World {
            root,
            site_file: file,
            hashes: BTreeMap::new(),
        })
    }

    /// The site file as shown to the user.
    pub fn display_site_path(&self) -> String {
        display_path(&self.site_file)
    }

    /// Reads the site file.
    pub fn read_site_text(&mut self) -> Result<String, String> {
        let name = self
            .site_file
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "site.toml".into());
        let bytes = std::fs::read(&self.site_file)
            .map_err(|e| format!("{}: {e}", self.display_site_path()))?;
        self.hashes.insert(name, sha256_hex(&bytes));
        String::from_utf8(bytes)
            .map_err(|_| format!("{}: the file is not UTF-8 text", self.display_site_path()))
    }

    /// Resolves a path named in the site file (relative to the site folder); refuses
    /// absolute paths and `..` so a site cannot reach outside its folder.
    pub fn resolve(&self, rel: &str) -> Result<PathBuf, String> {
        let p = Path::new(rel);
        if p.is_absolute()
            || p.components()
                .any(|c| matches!(c, std::path::Component::ParentDir))
        {
            return Err(format!(
                "`{rel}`: paths in a site file are relative to the site folder and stay inside it"
            ));
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
        self.hashes
            .iter()
            .map(|(p, h)| InputFile {
                path: p.clone(),
                sha256: h.clone(),
            })
            .collect()
    }
}

/// SHA-256 of a file, when it is a readable file (for fingerprints of external plugins'
/// scripts; absent files are simply not part of the fingerprint).
pub fn hash_file_if_exists(p: &Path) -> Option<String> {
    if !p.is_file() {
        return None;
    }
    std::fs::read(p).ok().map(|b| sha256_hex(&b))
}

/// The `*.toml` files of a plugin folder, sorted by name: (path, text).
pub fn read_plugin_folder(dir: &Path) -> Result<Vec<(PathBuf, String)>, String> {
    let rd = std::fs::read_dir(dir).map_err(|e| {
        format!(
            "{}: {e}\n  = hint: --plugins names a folder of *.toml plugin declarations",
            display_path(dir)
        )
    })?;
    let mut files: Vec<PathBuf> = rd
        .flatten()
        .map(|e| e.path())
        .filter(|p| p.is_file() && p.extension().is_some_and(|x| x == "toml"))
        .collect();
    files.sort();
    files
        .into_iter()
        .map(|p| {
            let text =
                std::fs::read_to_string(&p).map_err(|e| format!("{}: {e}", display_path(&p)))?;
            Ok((p, text))
        })
        .collect()
}

/// Reads every file below `dir` (relative names with `/`), for template folders.
pub fn read_dir_files(dir: &Path) -> Result<BTreeMap<String, Vec<u8>>, String> {
    fn walk(
        base: &Path,
        d: &Path,
        out: &mut BTreeMap<String, Vec<u8>>,
        depth: usize,
    ) -> Result<(), String> {
        if depth > 4 {
            return Ok(());
        }
        let rd = std::fs::read_dir(d).map_err(|e| format!("{}: {e}", display_path(d)))?;
        for entry in rd {
            let entry = entry.map_err(|e| e.to_string())?;
            let p = entry.path();
            if p.is_dir() {
                walk(base, &p, out, depth + 1)?;
            } else if p.is_file() {
                let rel = p
                    .strip_prefix(base)
                    .map_err(|e| e.to_string())?
                    .to_string_lossy()
                    .replace('\\', "/");
                out.insert(
                    rel,
                    std::fs::read(&p).map_err(|e| format!("{}: {e}", display_path(&p)))?,
                );
            }
        }
        Ok(())
    }
    let mut out = BTreeMap::new();
    walk(dir, dir, &mut out, 0)?;
    Ok(out)
}

/// Writes files below `out`, each through a temporary name renamed into place (for
/// summaries and copies, which have no input files to protect).
pub fn write_atomic(out: &Path, files: &[(String, Vec<u8>)]) -> Result<(), String> {
    for (rel, bytes) in files {
        let dest = out.join(rel);
        let parent = dest.parent().unwrap_or(out);
        std::fs::create_dir_all(parent).map_err(|e| format!("{}: {e}", display_path(parent)))?;
        let tmp = dest.with_file_name(format!(
            ".{}.tmp-{}",
            dest.file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default(),
            std::process::id()
        ));
        std::fs::write(&tmp, bytes).map_err(|e| format!("{}: {e}", display_path(&tmp)))?;
        std::fs::rename(&tmp, &dest).map_err(|e| format!("{}: {e}", display_path(&dest)))?;
    }
    Ok(())
}

/// Writes the whole output set of a run as the content of `out`, all or nothing
/// ([`crate::outputs`]). Refuses an `out` that holds any input file of `world`.
pub fn write_outputs(out: &Path, files: &[(String, Vec<u8>)], world: &World) -> Result<(), String> {
    crate::outputs::write_all(out, files, &world.input_paths())
}

/// Refuses, before any work, an output folder that holds an input or that rfsite did not
/// write ([`crate::outputs::check_destination`]).
pub fn check_output_folder(out: &Path, world: &World) -> Result<(), String> {
    crate::outputs::check_destination(out, &world.input_paths())
}

impl World {
    /// The canonical paths of the site file and every input file read so far.
    fn input_paths(&self) -> Vec<PathBuf> {
        self.hashes
            .keys()
            .map(|k| self.root.join(k))
            .chain(std::iter::once(self.site_file.clone()))
            .filter_map(|p| p.canonicalize().ok())
            .collect()
    }
}
