//! The portfolio's progress display on stderr, drawn by `indicatif`: sites done of the
//! total, elapsed and remaining time, the sites running. Drawn only when stderr is a
//! terminal and `--quiet` is not given; the status lines printed above it go to stderr
//! either way (not with `--quiet`).

use std::collections::BTreeSet;
use std::io::IsTerminal;
use std::sync::Mutex;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

/// How often the display is redrawn while nothing finishes.
const TICK: Duration = Duration::from_millis(250);

/// The progress display of one portfolio run.
pub struct Progress {
    bar: ProgressBar,
    running: Mutex<BTreeSet<String>>,
}

impl Progress {
    /// A display for `total` sites whose clock started `elapsed` ago.
    pub fn new(total: usize, elapsed: Duration) -> Progress {
        let shown = std::io::stderr().is_terminal() && !crate::term::quiet();
        let target = if shown {
            ProgressDrawTarget::stderr()
        } else {
            ProgressDrawTarget::hidden()
        };
        let style = ProgressStyle::with_template(
            "{pos}/{len} sites, elapsed {elapsed}, remaining ~{eta}; running: {wide_msg}",
        )
        .unwrap_or_else(|_| ProgressStyle::default_bar());
        let bar = ProgressBar::with_draw_target(Some(total as u64), target)
            .with_style(style)
            .with_elapsed(elapsed);
        if shown {
            bar.enable_steady_tick(TICK);
        }
        Progress {
            bar,
            running: Mutex::new(BTreeSet::new()),
        }
    }

    fn show_running(&self, running: &BTreeSet<String>) {
        let ids: Vec<&str> = running.iter().map(String::as_str).collect();
        self.bar.set_message(ids.join(", "));
    }

    /// Site `id` started.
    pub fn start(&self, id: &str) {
        if let Ok(mut r) = self.running.lock() {
            r.insert(id.to_string());
            self.show_running(&r);
        }
    }

    /// Site `id` ended.
    pub fn finish(&self, id: &str) {
        if let Ok(mut r) = self.running.lock() {
            r.remove(id);
            self.show_running(&r);
        }
        self.bar.inc(1);
    }

    /// Prints a line above the display (on stderr; nothing with `--quiet`).
    pub fn say(&self, msg: &str) {
        if crate::term::quiet() {
            return;
        }
        if self.bar.is_hidden() {
            eprintln!("{msg}");
        } else {
            self.bar.println(msg);
        }
    }

    /// Removes the display.
    pub fn clear(&self) {
        self.bar.finish_and_clear();
    }
}
