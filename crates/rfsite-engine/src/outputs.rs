//! All-or-nothing output folders. A run writes its whole output set (PDF, JSON, figures,
//! marker) into a fresh hidden folder beside the destination and swaps it into place in
//! one step (Linux `renameat2(RENAME_EXCHANGE)`; elsewhere two renames), so a reader sees
//! the previous set or the new one, never a mix; a failure or a kill before the swap
//! leaves the previous outputs as they were, and the leftovers of a killed run are
//! removed by the next one.

use std::path::{Component, Path, PathBuf};

use crate::world::display_path;

/// The marker file every output folder holds; only a folder with it (or an empty one) is
/// ever replaced.
pub const MARKER: &str = ".rfsite-output";

/// Writes `files` (paths relative to `out`) as the whole content of `out`. `inputs` are
/// the canonical paths of every input file: `out` may not hold any of them.
pub fn write_all(
    out: &Path,
    files: &[(String, Vec<u8>)],
    inputs: &[PathBuf],
) -> Result<(), String> {
    for (rel, _) in files {
        check_relative(rel)?;
    }
    check_destination(out, inputs)?;
    let parent = match out.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = out
        .file_name()
        .ok_or_else(|| format!("{}: not a folder name", display_path(out)))?
        .to_string_lossy()
        .to_string();
    std::fs::create_dir_all(&parent).map_err(|e| format!("{}: {e}", display_path(&parent)))?;
    remove_stale(&parent, &name);
    let fresh = parent.join(format!(".{name}.rfsite-new-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&fresh);
    if let Err(e) = fill(&fresh, files) {
        let _ = std::fs::remove_dir_all(&fresh);
        return Err(e);
    }
    swap_in(&fresh, out, &parent, &name)
}

/// Output names come from the program, but a path leaving the folder is refused anyway.
fn check_relative(rel: &str) -> Result<(), String> {
    let p = Path::new(rel);
    if p.components().all(|c| matches!(c, Component::Normal(_))) {
        Ok(())
    } else {
        Err(format!("output name `{rel}` is not a plain relative path"))
    }
}

/// `out` may be new, an empty folder or an earlier output folder, and may not hold inputs.
pub fn check_destination(out: &Path, inputs: &[PathBuf]) -> Result<(), String> {
    if let Ok(c) = out.canonicalize() {
        if let Some(i) = inputs.iter().find(|i| i.starts_with(&c)) {
            return Err(format!(
                "{}: the output folder would hold the input {}; choose another output folder with -o",
                display_path(out),
                display_path(i)
            ));
        }
    }
    let Ok(meta) = std::fs::symlink_metadata(out) else {
        return Ok(());
    };
    if !meta.is_dir() {
        return Err(format!(
            "{}: exists and is not a folder; choose another output folder with -o",
            display_path(out)
        ));
    }
    let empty = std::fs::read_dir(out)
        .map(|mut d| d.next().is_none())
        .unwrap_or(false);
    if !empty && !out.join(MARKER).is_file() {
        return Err(format!(
            "{}: holds files that rfsite did not write (no {MARKER} marker), so it is not replaced; choose a new or empty output folder with -o",
            display_path(out)
        ));
    }
    Ok(())
}

/// Writes every file below `dir`, a new folder.
fn fill(dir: &Path, files: &[(String, Vec<u8>)]) -> Result<(), String> {
    std::fs::create_dir_all(dir).map_err(|e| format!("{}: {e}", display_path(dir)))?;
    for (rel, bytes) in files {
        let dest = dir.join(rel);
        if let Some(p) = dest.parent() {
            std::fs::create_dir_all(p).map_err(|e| format!("{}: {e}", display_path(p)))?;
        }
        std::fs::write(&dest, bytes).map_err(|e| format!("{}: {e}", display_path(&dest)))?;
    }
    Ok(())
}

/// Puts `fresh` at `out`, removing the previous set once the new one is in place.
fn swap_in(fresh: &Path, out: &Path, parent: &Path, name: &str) -> Result<(), String> {
    if std::fs::symlink_metadata(out).is_err() {
        return std::fs::rename(fresh, out).map_err(|e| {
            let _ = std::fs::remove_dir_all(fresh);
            format!("{}: {e}", display_path(out))
        });
    }
    if exchange(fresh, out) {
        // `fresh` now holds the previous outputs.
        let _ = std::fs::remove_dir_all(fresh);
        return Ok(());
    }
    let old = parent.join(format!(".{name}.rfsite-old-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&old);
    std::fs::rename(out, &old).map_err(|e| {
        let _ = std::fs::remove_dir_all(fresh);
        format!("{}: {e}", display_path(out))
    })?;
    if let Err(e) = std::fs::rename(fresh, out) {
        let _ = std::fs::rename(&old, out);
        let _ = std::fs::remove_dir_all(fresh);
        return Err(format!("{}: {e}", display_path(out)));
    }
    let _ = std::fs::remove_dir_all(&old);
    Ok(())
}

/// Swaps two paths atomically where the system can (Linux 3.15+, most file systems).
#[cfg(target_os = "linux")]
fn exchange(a: &Path, b: &Path) -> bool {
    use std::ffi::CString;
    use std::os::unix::ffi::OsStrExt;
    let (Ok(ca), Ok(cb)) = (
        CString::new(a.as_os_str().as_bytes()),
        CString::new(b.as_os_str().as_bytes()),
    ) else {
        return false;
    };
    // SAFETY: two valid NUL-terminated paths relative to the working folder.
    let r = unsafe {
        libc::renameat2(
            libc::AT_FDCWD,
            ca.as_ptr(),
            libc::AT_FDCWD,
            cb.as_ptr(),
            libc::RENAME_EXCHANGE,
        )
    };
    r == 0
}

#[cfg(not(target_os = "linux"))]
fn exchange(_: &Path, _: &Path) -> bool {
    false
}

/// Removes the hidden folders of earlier runs on `name` that were killed before they
/// finished (their process no longer exists).
fn remove_stale(parent: &Path, name: &str) {
    let Ok(dir) = std::fs::read_dir(parent) else {
        return;
    };
    for e in dir.flatten() {
        let file = e.file_name().to_string_lossy().to_string();
        let pid = [".rfsite-new-", ".rfsite-old-"].iter().find_map(|k| {
            file.strip_prefix(&format!(".{name}{k}"))
                .and_then(|p| p.parse::<u32>().ok())
        });
        if let Some(pid) = pid {
            if !Path::new(&format!("/proc/{pid}")).exists() {
                let _ = std::fs::remove_dir_all(e.path());
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn files(tag: &str, figures: &[&str]) -> Vec<(String, Vec<u8>)> {
        let mut v = vec![
            ("report.pdf".to_string(), tag.as_bytes().to_vec()),
            (MARKER.to_string(), b"{}".to_vec()),
        ];
        v.extend(
            figures
                .iter()
                .map(|f| (format!("figures/{f}"), tag.as_bytes().to_vec())),
        );
        v
    }

    #[test]
    fn a_second_run_replaces_the_whole_set_and_leaves_no_temporary_folder() {
        let t = tempfile::tempdir().unwrap();
        let out = t.path().join("o");
        write_all(&out, &files("one", &["a.svg", "b.svg"]), &[]).unwrap();
        write_all(&out, &files("two", &["a.svg"]), &[]).unwrap();
        assert_eq!(std::fs::read(out.join("report.pdf")).unwrap(), b"two");
        assert!(
            !out.join("figures/b.svg").exists(),
            "a figure of the first run survived"
        );
        let names: Vec<String> = std::fs::read_dir(t.path())
            .unwrap()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().to_string())
            .collect();
        assert_eq!(names, vec!["o".to_string()]);
    }

    #[test]
    fn a_failed_write_leaves_the_previous_outputs_as_they_were() {
        let t = tempfile::tempdir().unwrap();
        let out = t.path().join("o");
        write_all(&out, &files("one", &["a.svg"]), &[]).unwrap();
        let bad = vec![("../escape".to_string(), b"x".to_vec())];
        assert!(write_all(&out, &bad, &[]).is_err());
        // A write that fails midway: a file where a folder must go.
        let mut clash = files("two", &[]);
        clash.push(("report.pdf/inner".to_string(), b"x".to_vec()));
        assert!(write_all(&out, &clash, &[]).is_err());
        assert_eq!(std::fs::read(out.join("report.pdf")).unwrap(), b"one");
        assert!(out.join("figures/a.svg").is_file());
        assert_eq!(std::fs::read_dir(t.path()).unwrap().count(), 1);
    }

    #[test]
    fn a_folder_rfsite_did_not_write_is_never_replaced() {
        let t = tempfile::tempdir().unwrap();
        let out = t.path().join("documents");
        std::fs::create_dir_all(&out).unwrap();
        std::fs::write(out.join("letter.txt"), b"mine").unwrap();
        let e = write_all(&out, &files("one", &[]), &[]).unwrap_err();
        assert!(e.contains("not replaced"), "{e}");
        assert_eq!(std::fs::read(out.join("letter.txt")).unwrap(), b"mine");
    }

    #[test]
    fn the_site_folder_is_never_the_output() {
        let t = tempfile::tempdir().unwrap();
        let site = t.path().join("site");
        std::fs::create_dir_all(&site).unwrap();
        std::fs::write(site.join("site.toml"), b"").unwrap();
        let input = site.join("site.toml").canonicalize().unwrap();
        let e = write_all(&site, &files("one", &[]), std::slice::from_ref(&input)).unwrap_err();
        assert!(e.contains("would hold the input"), "{e}");
        let e = write_all(t.path(), &files("one", &[]), &[input]).unwrap_err();
        assert!(e.contains("would hold the input"), "{e}");
    }

    #[test]
    fn leftovers_of_a_killed_run_are_removed() {
        let t = tempfile::tempdir().unwrap();
        // A process id above the kernel's maximum cannot be alive.
        let stale = t.path().join(".o.rfsite-new-4194305");
        std::fs::create_dir_all(&stale).unwrap();
        write_all(&t.path().join("o"), &files("one", &[]), &[]).unwrap();
        assert!(!stale.exists());
    }
}
