//! Portfolio isolation: every site of a portfolio is loaded and run in its own child
//! process (this same binary, hidden subcommand `portfolio-site`), under a time and a
//! memory limit, so a crash, an abort, a hang or an out-of-memory of one site is that
//! site's failure in the summary and the others complete.

use std::ffi::OsString;
use std::io::Read;
use std::path::PathBuf;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use serde_json::{json, Value};

use crate::Outcome;

/// Arguments of the hidden `portfolio-site` subcommand (one site, answered as one JSON
/// document on stdout).
#[derive(clap::Args)]
pub struct Args {
    /// `probe` (load, answer id and name) or `run` (load and report).
    #[arg(long)]
    pub phase: String,
    /// The site's path relative to the portfolio folder.
    #[arg(long)]
    pub rel: String,
    /// The site folder.
    #[arg(long)]
    pub folder: PathBuf,
    /// The site id (phase `run`).
    #[arg(long)]
    pub id: Option<String>,
    /// The portfolio output folder (phase `run`).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Template folder.
    #[arg(long)]
    pub template: Option<PathBuf>,
    /// Plugin declarations folder.
    #[arg(long)]
    pub plugins: Option<PathBuf>,
    /// Run even when unchanged.
    #[arg(long)]
    pub force: bool,
    /// Run the commands the site file declares.
    #[arg(long)]
    pub allow_site_commands: bool,
}

/// Limits on one site's child process.
#[derive(Debug, Clone, Copy)]
pub struct Limits {
    /// Wall-clock time.
    pub time: Duration,
    /// Address space, bytes.
    pub memory_bytes: u64,
}

/// Runs the hidden subcommand: the child's side.
pub fn child(a: Args) -> Outcome {
    // Test hook: lets the isolation tests make one site's child abort like a crash would.
    if std::env::var("RFSITE_TEST_ABORT_SITE").ok().as_deref() == Some(a.rel.as_str()) {
        std::process::abort();
    }
    let answer = crate::portfolio::child_answer(&a);
    println!("{answer}");
    Outcome::Ok
}

/// Runs one site's phase in a child process; the child's answer, or why there is none.
pub fn in_child(args: Vec<OsString>, limits: Limits) -> Result<Value, String> {
    let exe = std::env::current_exe().map_err(|e| format!("cannot find rfsite itself: {e}"))?;
    let mut cmd = Command::new(exe);
    cmd.arg("portfolio-site")
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    limit_memory(&mut cmd, limits.memory_bytes);
    std::os::unix::process::CommandExt::process_group(&mut cmd, 0);
    let mut child = cmd
        .spawn()
        .map_err(|e| format!("cannot start a child process: {e}"))?;
    let out = drain(child.stdout.take(), 64 << 20);
    let err = drain(child.stderr.take(), 16 << 10);
    let t0 = Instant::now();
    let status = loop {
        match child.try_wait() {
            Ok(Some(s)) => break s,
            Ok(None) if t0.elapsed() >= limits.time => {
                kill_group(child.id());
                let _ = child.kill();
                let _ = child.wait();
                return Err(format!(
                    "stopped after the per-site time limit of {} s (--site-timeout-s)",
                    limits.time.as_secs()
                ));
            }
            Ok(None) => std::thread::sleep(Duration::from_millis(20)),
            Err(e) => return Err(format!("lost the child process: {e}")),
        }
    };
    let stdout = out.join().unwrap_or_default();
    let stderr = err.join().unwrap_or_default();
    match serde_json::from_slice::<Value>(&stdout) {
        Ok(v) if status.success() => Ok(v),
        _ => Err(crash_text(status, &stderr)),
    }
}

/// Kills the child's whole process group (the site's run and anything it started there).
fn kill_group(pid: u32) {
    // SAFETY: a plain kill(2) of the group the child leads (process_group(0) above).
    unsafe {
        libc::kill(-(pid as libc::pid_t), libc::SIGKILL);
    }
}

/// Reads a pipe to its end on a thread, keeping at most `keep` bytes.
fn drain<R: Read + Send + 'static>(
    pipe: Option<R>,
    keep: usize,
) -> std::thread::JoinHandle<Vec<u8>> {
    std::thread::spawn(move || {
        let mut kept = Vec::new();
        if let Some(mut p) = pipe {
            let mut buf = [0u8; 8192];
            while let Ok(n) = p.read(&mut buf) {
                if n == 0 {
                    break;
                }
                let room = keep.saturating_sub(kept.len());
                kept.extend_from_slice(&buf[..n.min(room)]);
            }
        }
        kept
    })
}

fn crash_text(status: std::process::ExitStatus, stderr: &[u8]) -> String {
    use std::os::unix::process::ExitStatusExt;
    let how = match (status.code(), status.signal()) {
        (_, Some(6)) => {
            "aborted (signal 6; out of memory under --site-memory-mb, or a crash)".to_string()
        }
        (_, Some(9)) => "killed (signal 9)".to_string(),
        (_, Some(s)) => format!("crashed (signal {s})"),
        (Some(c), None) => format!("exited with status {c} without an answer"),
        (None, None) => "ended without an answer".to_string(),
    };
    let last = String::from_utf8_lossy(stderr)
        .lines()
        .rev()
        .find(|l| !l.trim().is_empty())
        .map(|l| format!(": {}", l.trim()))
        .unwrap_or_default();
    format!("the site's run {how}{last}")
}

/// Caps the child's address space (Linux `RLIMIT_AS`), so a site that would exhaust the
/// machine's memory fails alone.
fn limit_memory(cmd: &mut Command, bytes: u64) {
    use std::os::unix::process::CommandExt;
    // SAFETY: setrlimit is async-signal-safe; the closure touches nothing else.
    unsafe {
        cmd.pre_exec(move || {
            let lim = libc::rlimit {
                rlim_cur: bytes as libc::rlim_t,
                rlim_max: bytes as libc::rlim_t,
            };
            if libc::setrlimit(libc::RLIMIT_AS, &lim) != 0 {
                return Err(std::io::Error::last_os_error());
            }
            Ok(())
        });
    }
}

/// The arguments of a child for one site's phase.
pub fn child_args(
    phase: &str,
    rel: &str,
    folder: &std::path::Path,
    run: Option<(&str, &std::path::Path)>,
    template: Option<&std::path::Path>,
    plugins: Option<&std::path::Path>,
    (force, allow_site_commands): (bool, bool),
) -> Vec<OsString> {
    let mut a: Vec<OsString> = vec![
        "--phase".into(),
        phase.into(),
        "--rel".into(),
        rel.into(),
        "--folder".into(),
        folder.into(),
    ];
    if let Some((id, out)) = run {
        a.extend(["--id".into(), id.into(), "--out".into(), out.into()]);
    }
    if let Some(t) = template {
        a.extend(["--template".into(), t.into()]);
    }
    if let Some(p) = plugins {
        a.extend(["--plugins".into(), p.into()]);
    }
    if force {
        a.push("--force".into());
    }
    if allow_site_commands {
        a.push("--allow-site-commands".into());
    }
    a
}

/// A JSON answer for a probe that found the site's id and name.
pub fn probe_answer(id: &str, name: &str) -> Value {
    json!({"id": id, "name": name})
}
