//! The world: the only place rfsite reads input files. Every file read is hashed
//! (SHA-256) so the report's audit trail lists exactly what went in.

use std::collections::BTreeMap;
use std::io::Read;
use std::path::{Path, PathBuf};

use rfsite_plugin::InputFile;
use sha2::{Digest, Sha256};

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

/// The largest file of each kind rfsite reads, checked from the file's metadata before it
/// is opened and again while reading (README, "Limits").
#[derive(Debug, Clone, Copy)]
pub struct Limit {
    /// What the file is, for messages ("site file", "survey file", "plan image").
    pub what: &'static str,
    /// Largest size read, bytes.
    pub bytes: u64,
}

/// site.toml: 16 MiB (the largest demo site is under 100 KiB).
pub const SITE_FILE: Limit = Limit {
    what: "site file",
    bytes: 16 << 20,
};
/// One survey CSV: 256 MiB (about ten times what the per-site row limit needs).
pub const SURVEY_FILE: Limit = Limit {
    what: "survey file",
    bytes: 256 << 20,
};
/// One plan image (PNG or JPEG): 64 MiB.
pub const PLAN_IMAGE: Limit = Limit {
    what: "plan image",
    bytes: 64 << 20,
};

/// One DXF drawing: 256 MiB (a 20-storey building's plans are a few MiB each).
pub const CAD_DRAWING: Limit = Limit {
    what: "DXF drawing",
    bytes: 256 << 20,
};
/// One layer mapping: 1 MiB.
pub const CAD_MAP: Limit = Limit {
    what: "layer mapping",
    bytes: 1 << 20,
};

/// Why a file cannot be read: what is wrong and how to fix it. `io` marks a failing read
/// (the file is there and allowed, the system could not read it) as opposed to a file the
/// site should not name.
#[derive(Debug, Clone)]
pub struct FileProblem {
    /// What is wrong, naming the file as the site names it.
    pub message: String,
    /// How to fix it.
    pub hint: Option<String>,
    /// The system failed to read an allowed file.
    pub io: bool,
}

impl FileProblem {
    fn bad(message: String, hint: &str) -> Self {
        FileProblem {
            message,
            hint: Some(hint.into()),
            io: false,
        }
    }

    fn io(shown: &str, e: &std::io::Error) -> Self {
        FileProblem {
            message: format!("`{shown}` cannot be read: {e}"),
            hint: None,
            io: true,
        }
    }

    /// The file holds more than `limit` allows: `len` is its size (or a lower bound when it
    /// grew while it was read).
    pub fn too_big(shown: &str, len: u64, limit: Limit) -> Self {
        FileProblem::bad(
            format!(
                "{} `{shown}` is {len} bytes ({}); a {} may be at most {} ({} bytes)",
                limit.what,
                mib(len),
                limit.what,
                mib(limit.bytes),
                limit.bytes,
            ),
            "split or shrink the file (README, \"Limits\")",
        )
    }
}

/// `n` bytes in MiB, as "256 MiB" or "256.1 MiB".
fn mib(n: u64) -> String {
    let m = n as f64 / (1u64 << 20) as f64;
    if m.fract() == 0.0 {
        format!("{m:.0} MiB")
    } else {
        format!("{m:.1} MiB")
    }
}

/// The kind of a file that is not a regular one, for messages.
fn kind_of(ft: &std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if ft.is_fifo() {
            return "a FIFO (named pipe)";
        }
        if ft.is_char_device() || ft.is_block_device() {
            return "a device";
        }
        if ft.is_socket() {
            return "a socket";
        }
    }
    if ft.is_dir() {
        "a folder"
    } else {
        "not a file"
    }
}

/// Opens `path` for reading only if, after following links, it is a regular file inside
/// `root` (canonical) of at most `limit` bytes. Its metadata is checked before it is opened,
/// so a FIFO or a device is never opened; the opened file is checked again (it may have been
/// swapped in between). `shown` names the file in messages.
fn open_checked(
    path: &Path,
    shown: &str,
    root: &Path,
    limit: Limit,
) -> Result<(std::fs::File, u64), FileProblem> {
    let canon = path.canonicalize().map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => FileProblem::bad(
            format!("{} `{shown}` does not exist", limit.what),
            "paths in a site file are relative to the site folder; check the spelling",
        ),
        _ => FileProblem::io(shown, &e),
    })?;
    if !canon.starts_with(root) {
        return Err(outside(shown, limit));
    }
    let meta = std::fs::metadata(&canon).map_err(|e| FileProblem::io(shown, &e))?;
    check_meta(&meta, shown, limit)?;
    let file = open_no_block(&canon, false).map_err(|e| FileProblem::io(shown, &e))?;
    let meta = file.metadata().map_err(|e| FileProblem::io(shown, &e))?;
    check_meta(&meta, shown, limit)?;
    if !opened_inside(&file, root) {
        return Err(outside(shown, limit));
    }
    Ok((file, meta.len()))
}

fn outside(shown: &str, limit: Limit) -> FileProblem {
    FileProblem::bad(
        format!(
            "{} `{shown}` leads outside the site folder (through a symbolic link); rfsite reads only files inside the site folder",
            limit.what
        ),
        "copy the file into the site folder and name the copy",
    )
}

fn check_meta(meta: &std::fs::Metadata, shown: &str, limit: Limit) -> Result<(), FileProblem> {
    if !meta.is_file() {
        return Err(FileProblem::bad(
            format!(
                "{} `{shown}` is {}, not a regular file",
                limit.what,
                kind_of(&meta.file_type())
            ),
            "name a regular file inside the site folder",
        ));
    }
    if meta.len() > limit.bytes {
        return Err(FileProblem::too_big(shown, meta.len(), limit));
    }
    Ok(())
}

/// Opens a file without blocking (a FIFO swapped in after a check must not hang the run);
/// unless `follow`, a link in its last component is refused.
fn open_no_block(p: &Path, follow: bool) -> std::io::Result<std::fs::File> {
    let mut o = std::fs::OpenOptions::new();
    o.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        let nofollow = if follow { 0 } else { libc::O_NOFOLLOW };
        o.custom_flags(libc::O_NONBLOCK | nofollow);
    }
    #[cfg(not(unix))]
    let _ = follow;
    o.open(p)
}

/// Where the system says an opened file is, when it can say (Linux: `/proc/self/fd`), lies
/// inside `root`.
fn opened_inside(file: &std::fs::File, root: &Path) -> bool {
    #[cfg(target_os = "linux")]
    {
        use std::os::fd::AsRawFd;
        if let Ok(p) = std::fs::read_link(format!("/proc/self/fd/{}", file.as_raw_fd())) {
            return p.starts_with(root);
        }
    }
    let _ = (file, root);
    true
}

/// Reads an opened file to its end, refusing more than `limit` bytes even when the file
/// grows while it is read.
fn read_limited(
    file: std::fs::File,
    len: u64,
    shown: &str,
    limit: Limit,
) -> Result<Vec<u8>, FileProblem> {
    let mut bytes = Vec::with_capacity(len.min(limit.bytes) as usize);
    file.take(limit.bytes + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| FileProblem::io(shown, &e))?;
    if bytes.len() as u64 > limit.bytes {
        return Err(FileProblem::too_big(shown, bytes.len() as u64, limit));
    }
    Ok(bytes)
}

/// A site folder on disk.
#[derive(Debug, Clone)]
pub struct World {
    /// The site folder.
    pub root: PathBuf,
    /// The site file.
    pub site_file: PathBuf,
    /// The site folder with every link resolved: files read must lie below it.
    root_canon: PathBuf,
    hashes: BTreeMap<String, String>,
}

impl World {
    /// Opens `SITE`: a `site.toml` or a folder holding one.
    pub fn open(site: &Path) -> Result<World, String> {
        let (root, file) = if site.is_dir() {
            (site.to_path_buf(), site.join("site.toml"))
        } else {
            (
                site.parent()
                    .filter(|p| !p.as_os_str().is_empty())
                    .map(Path::to_path_buf)
                    .unwrap_or_else(|| PathBuf::from(".")),
                site.to_path_buf(),
            )
        };
        if !file.exists() {
            return Err(if site.is_dir() {
                format!("{}: no site.toml in this folder\n  = hint: `rfsite init {}` writes one to start from", display_path(site), display_path(site))
            } else {
                format!(
                    "{}: no such file\n  = hint: SITE is a site.toml or a folder holding one",
                    display_path(site)
                )
            });
        }
        let root_canon = root
            .canonicalize()
            .map_err(|e| format!("{}: {e}", display_path(&root)))?;
        Ok(World {
            root,
            site_file: file,
            root_canon,
            hashes: BTreeMap::new(),
        })
    }

    /// A file the site names, as shown to the user (beside the site file).
    pub fn display_named(&self, rel: &str) -> String {
        match self.site_file.parent() {
            Some(dir) => display_path(&dir.join(rel)),
            None => rel.to_string(),
        }
    }

    /// The site file as shown to the user.
    pub fn display_site_path(&self) -> String {
        display_path(&self.site_file)
    }

    /// Reads the site file: a regular file inside the site folder (after links), at most
    /// [`SITE_FILE`] bytes, UTF-8 text. Anything else is bad input located in the file (the
    /// first invalid byte for text that is not UTF-8).
    pub fn read_site_text(&mut self) -> Result<String, crate::EngineError> {
        let name = self
            .site_file
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "site.toml".into());
        let shown = self.display_site_path();
        let bytes = open_checked(&self.site_file, &shown, &self.root_canon, SITE_FILE)
            .and_then(|(f, len)| read_limited(f, len, &shown, SITE_FILE))
            .map_err(|p| site_problem(&shown, p))?;
        self.hashes.insert(name, sha256_hex(&bytes));
        String::from_utf8(bytes).map_err(|e| {
            let mut d = rfsite_model::Diagnostics::default();
            d.push(not_utf8(&shown, e.as_bytes(), e.utf8_error().valid_up_to()));
            crate::EngineError::BadInput(d)
        })
    }

    /// Resolves a path named in the site file (relative to the site folder); refuses
    /// absolute paths and `..` so a site cannot reach outside its folder by name (links
    /// are checked when the file is opened).
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

    /// Opens a file the site names, for streaming: it must be a regular file inside the site
    /// folder after following links, of at most `limit` bytes (the caller reads at most
    /// `limit.bytes + 1` and refuses more). Returns the file and its size.
    pub fn open_named(&self, rel: &str, limit: Limit) -> Result<(std::fs::File, u64), FileProblem> {
        let p = self.resolve(rel).map_err(|m| {
            FileProblem::bad(
                m,
                "name a file inside the site folder, e.g. `survey/L1.csv`",
            )
        })?;
        open_checked(&p, rel, &self.root_canon, limit)
    }

    /// Reads a file the site names (checked as [`World::open_named`]), hashing it.
    pub fn read_named(&mut self, rel: &str, limit: Limit) -> Result<Vec<u8>, FileProblem> {
        let (f, len) = self.open_named(rel, limit)?;
        let bytes = read_limited(f, len, rel, limit)?;
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

/// A problem reading the site file as an engine error: bad input (exit 2) unless the
/// system failed to read an allowed file.
fn site_problem(shown: &str, p: FileProblem) -> crate::EngineError {
    if p.io {
        return crate::EngineError::Io(p.message);
    }
    let mut d = rfsite_model::Diagnostics::default();
    d.push(rfsite_model::Diagnostic::whole_file(
        rfsite_model::Severity::Error,
        shown,
        p.message,
        p.hint,
    ));
    crate::EngineError::BadInput(d)
}

/// The diagnostic for a site file that is not UTF-8: the line and column (in characters)
/// of the first invalid byte, at offset `at` of `bytes`.
fn not_utf8(shown: &str, bytes: &[u8], at: usize) -> rfsite_model::Diagnostic {
    let before = &bytes[..at];
    let start = before
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |i| i + 1);
    let end = bytes[at..]
        .iter()
        .position(|&b| b == b'\n')
        .map_or(bytes.len(), |i| at + i);
    let line = before.iter().filter(|&&b| b == b'\n').count() + 1;
    let column = String::from_utf8_lossy(&bytes[start..at]).chars().count() + 1;
    let source_line: String = String::from_utf8_lossy(&bytes[start..end])
        .trim_end_matches('\r')
        .chars()
        .take(200)
        .collect();
    rfsite_model::Diagnostic {
        severity: rfsite_model::Severity::Error,
        file: shown.to_string(),
        line,
        column,
        message: format!(
            "the site file is not UTF-8 text: byte 0x{:02X} here is not valid UTF-8",
            bytes[at]
        ),
        hint: Some("save the file as UTF-8 (a lone byte like 0xE9 is usually Latin-1 or Windows-1252 text, e.g. `é`)".into()),
        source_line,
        width: 1,
    }
}

/// SHA-256 of a file, when it is a readable file (for fingerprints of external plugins'
/// scripts; absent files are simply not part of the fingerprint).
pub fn hash_file_if_exists(p: &Path) -> Option<String> {
    if !p.is_file() {
        return None;
    }
    let (f, len) = open_regular(p).ok()?;
    // A declaration may name any file as an argument: beyond 256 MiB only its size enters
    // the fingerprint, so naming a huge file costs no time.
    if len > 256 << 20 {
        return Some(format!("size-{len}"));
    }
    let mut hasher = Sha256::new();
    std::io::copy(&mut std::io::BufReader::new(f).take(len), &mut hasher).ok()?;
    Some(
        hasher
            .finalize()
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect(),
    )
}

/// A file of a plugin folder: a plugin declaration (`*.toml`) is at most 16 MiB, like a site
/// file.
pub const PLUGIN_DECLARATION: Limit = Limit {
    what: "plugin declaration",
    bytes: 16 << 20,
};

/// Opens a regular file (links followed) without blocking: a FIFO or device put in its
/// place after the caller's check is refused, never read.
fn open_regular(p: &Path) -> Result<(std::fs::File, u64), String> {
    let shown = display_path(p);
    let f = open_no_block(p, true).map_err(|e| format!("{shown}: {e}"))?;
    let m = f.metadata().map_err(|e| format!("{shown}: {e}"))?;
    if !m.is_file() {
        return Err(format!(
            "{shown}: {}, not a regular file",
            kind_of(&m.file_type())
        ));
    }
    Ok((f, m.len()))
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
            let shown = display_path(&p);
            let (f, len) = open_regular(&p)?;
            let bytes = read_limited(f, len, &shown, PLUGIN_DECLARATION)
                .map_err(|e| format!("{shown}: {}", e.message))?;
            let text = String::from_utf8(bytes)
                .map_err(|_| format!("{shown}: the file is not UTF-8 text"))?;
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
                let (mut f, len) = open_regular(&p)?;
                let mut bytes = Vec::with_capacity(len as usize);
                f.read_to_end(&mut bytes)
                    .map_err(|e| format!("{}: {e}", display_path(&p)))?;
                out.insert(rel, bytes);
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
