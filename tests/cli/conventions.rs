//! Command-line conventions (issue 17 item 4): completions and a man page generated from
//! the clap definition, `--quiet`, and colour only on a terminal and never with `NO_COLOR`
//! (no-color.org: "when present and not an empty string").

use std::process::Command;

use crate::cli::util::{rfsite, root, run, starter_site_with, texts};

#[test]
fn completions_for_every_shell_name_the_subcommands() {
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let o = run(&["completions", shell]);
        let (out, err) = texts(&o);
        assert_eq!(o.status.code(), Some(0), "{shell}: {err}");
        for sub in ["report", "portfolio", "completions"] {
            assert!(out.contains(sub), "{shell} completions lack `{sub}`");
        }
    }
    // bash-completion's convention: the script defines `_rfsite` and registers it with
    // `complete` (clap_complete's bash output, common practice).
    let (bash, _) = texts(&run(&["completions", "bash"]));
    assert!(
        bash.contains("_rfsite()") && bash.contains("complete -F _rfsite"),
        "{bash}"
    );
    let o = run(&["completions", "tcsh-or-so"]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn man_pages_are_roff_with_the_options() {
    // man(7): a page starts with its .TH title line and has a NAME section.
    let (page, _) = texts(&run(&["man"]));
    assert!(page.contains(".TH rfsite 1"), "{page}");
    assert!(
        page.contains(".SH NAME") && page.contains("portfolio"),
        "{page}"
    );
    assert!(page.contains("quiet"), "{page}");
    let (page, _) = texts(&run(&["man", "report"]));
    assert!(page.contains(".TH rfsite-report 1"), "{page}");
    assert!(page.contains("allow\\-site\\-commands"), "{page}");
    let o = run(&["man", "reprot"]);
    let (_, err) = texts(&o);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        err.contains("`reprot` is not an rfsite subcommand") && err.contains("report"),
        "{err}"
    );
    // When man(1) is installed, it formats the page without complaint.
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("rfsite.1");
    std::fs::write(&file, texts(&run(&["man"])).0).unwrap();
    if let Ok(o) = Command::new("man")
        .arg("-l")
        .arg(&file)
        .env("MANPAGER", "cat")
        .output()
    {
        if o.status.success() {
            assert!(String::from_utf8_lossy(&o.stdout).contains("rfsite"));
        }
    }
}

#[test]
fn quiet_prints_errors_but_no_status_lines() {
    let dir = tempfile::tempdir().unwrap();
    let site = dir.path().join("site");
    std::fs::create_dir_all(&site).unwrap();
    starter_site_with(&site, "");
    let site_s = site.display().to_string();
    let (out, _) = texts(&run(&["check", &site_s]));
    assert!(out.contains(": ok"), "{out}");
    let o = run(&["--quiet", "check", &site_s]);
    let (out, err) = texts(&o);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert_eq!(out, "");
    // -q after the subcommand too (a global flag); the report is still written.
    let dest = dir.path().join("out");
    let o = run(&["report", &site_s, "-o", &dest.display().to_string(), "-q"]);
    let (out, err) = texts(&o);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert_eq!(out, "");
    assert!(dest.join("report.pdf").is_file() && dest.join("findings.json").is_file());
    // Errors are never silenced.
    let o = run(&["-q", "check", "tests/fixtures/broken/missing-floor"]);
    let (_, err) = texts(&o);
    assert_eq!(o.status.code(), Some(2));
    assert!(err.contains("site.toml:19:9: error:"), "{err}");
}

/// Runs `rfsite ARGS` under a pseudo-terminal with util-linux `script`, so that stderr is
/// a terminal; None when `script` is not installed.
fn on_a_terminal(args: &str, no_color: Option<&str>) -> Option<String> {
    let bin = env!("CARGO_BIN_EXE_rfsite");
    let mut cmd = Command::new("script");
    cmd.current_dir(root())
        .args(["-qec", &format!("{bin} {args}"), "/dev/null"])
        .env_remove("NO_COLOR");
    if let Some(v) = no_color {
        cmd.env("NO_COLOR", v);
    }
    let o = cmd.output().ok()?;
    o.status.code()?;
    Some(String::from_utf8_lossy(&o.stdout).to_string())
}

#[test]
fn colour_only_on_a_terminal_and_never_with_no_color() {
    let broken = "check tests/fixtures/broken/missing-floor";
    // Piped stderr: plain text, and file:line:column opens the first line of the problem.
    let o = rfsite()
        .current_dir(root())
        .args(broken.split(' '))
        .env_remove("NO_COLOR")
        .output()
        .unwrap();
    let (_, err) = texts(&o);
    assert!(!err.contains('\x1b'), "{err:?}");
    assert!(
        err.starts_with("tests/fixtures/broken/missing-floor/site.toml:19:9: error:"),
        "{err}"
    );
    let Some(tty) = on_a_terminal(broken, None) else {
        eprintln!("skipped: util-linux `script` is not installed");
        return;
    };
    assert!(tty.contains("\x1b["), "no colour on a terminal: {tty:?}");
    assert!(tty.contains("site.toml:19:9: error:"), "{tty:?}");
    let plain = on_a_terminal(broken, Some("1")).unwrap();
    assert!(
        !plain.contains('\x1b'),
        "colour despite NO_COLOR=1: {plain:?}"
    );
    // An empty NO_COLOR does not count as set.
    let empty = on_a_terminal(broken, Some("")).unwrap();
    assert!(empty.contains("\x1b["), "{empty:?}");
}
