//! Terminal conventions shared by every subcommand: `--quiet`, and colour only on a
//! terminal and never when `NO_COLOR` is set to a non-empty value (no-color.org).

use std::io::IsTerminal;
use std::sync::atomic::{AtomicBool, Ordering};

static QUIET: AtomicBool = AtomicBool::new(false);

/// Sets `--quiet` for the whole run (once, from `main`).
pub fn set_quiet(quiet: bool) {
    QUIET.store(quiet, Ordering::Relaxed);
}

/// `--quiet`: no progress display and no status or summary lines; errors and warnings
/// are still printed, and a command's answer on stdout (`calc`, `man`, ...) is too.
pub fn quiet() -> bool {
    QUIET.load(Ordering::Relaxed)
}

/// Whether `NO_COLOR` asks for no colour: set and not empty (no-color.org).
pub fn no_color(value: Option<&std::ffi::OsStr>) -> bool {
    value.is_some_and(|v| !v.is_empty())
}

/// Colour on stderr: only when stderr is a terminal and `NO_COLOR` is unset or empty.
pub fn color_stderr() -> bool {
    std::io::stderr().is_terminal() && !no_color(std::env::var_os("NO_COLOR").as_deref())
}

#[cfg(test)]
mod tests {
    use super::no_color;
    use std::ffi::OsStr;

    #[test]
    fn no_color_means_set_and_not_empty() {
        // no-color.org: "when present and not an empty string ... prevents the addition
        // of ANSI color".
        assert!(!no_color(None));
        assert!(!no_color(Some(OsStr::new(""))));
        assert!(no_color(Some(OsStr::new("1"))));
        assert!(no_color(Some(OsStr::new("0"))));
    }
}
