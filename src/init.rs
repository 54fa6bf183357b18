//! `rfsite init DIR`: a small commented site project that passes `check` and renders.

use std::path::PathBuf;

use crate::Outcome;

/// Arguments of `init`.
#[derive(clap::Args)]
pub struct Args {
    /// Folder to create (must not hold a site.toml yet).
    pub dir: PathBuf,
}

/// The starter site.
pub const STARTER: &str = include_str!("../templates/starter/site.toml");

/// Runs `init`.
pub fn run(a: Args) -> Outcome {
    let file = a.dir.join("site.toml");
    if file.exists() {
        eprintln!(
            "error: {} already exists; rfsite init never overwrites a site",
            file.display()
        );
        return Outcome::BadInput;
    }
    if let Err(e) = std::fs::create_dir_all(&a.dir) {
        eprintln!("error: {}: {e}", a.dir.display());
        return Outcome::Failed;
    }
    let name = a
        .dir
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "new-site".into());
    let id: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    let text = STARTER.replace("new-site", if id.is_empty() { "new-site" } else { &id });
    if let Err(e) = std::fs::write(&file, text) {
        eprintln!("error: {}: {e}", file.display());
        return Outcome::Failed;
    }
    println!(
        "wrote {}\nnext: rfsite check {}   then: rfsite report {} -o {}/out",
        file.display(),
        a.dir.display(),
        a.dir.display(),
        a.dir.display()
    );
    Outcome::Ok
}
