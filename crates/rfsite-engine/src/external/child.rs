//! Running an external plugin's command: in a process group of its own, the request
//! written, the answer and stderr read in one `poll(2)` loop of this thread (so neither
//! side can block the other), until the command exits, overruns its time limit or writes
//! more than the answer limit. Then the whole group is killed (a grandchild that still
//! holds stdout cannot keep the answer waiting, nor outlive the run), what the command
//! wrote before it ended is drained, and it is reaped.
//!
//! Exit is detected with `waitid(WNOWAIT)`: the command stays a zombie until the group is
//! killed, so its pid, which is the group id, cannot have been reused by then.

use std::io::{self, Read, Write};
use std::os::fd::{AsRawFd, RawFd};
use std::os::unix::process::CommandExt;
use std::process::{Child, ChildStderr, ChildStdin, ChildStdout, Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

/// Bytes of a plugin's stderr passed on to rfsite's log (64 KiB); the rest is read and
/// counted, not kept.
pub const STDERR_LOG_BYTES: usize = 64 << 10;

/// Bytes of the end of stderr kept for an error message.
const STDERR_TAIL_BYTES: usize = 4 << 10;

/// Lines of stderr quoted in an error message.
const STDERR_TAIL_LINES: usize = 12;

/// Longest wait between two looks at whether the command has exited.
const TICK: Duration = Duration::from_millis(10);

/// Bytes read from a pipe at a time.
const CHUNK: usize = 64 << 10;

/// What a run may take.
pub(super) struct Limits {
    /// Time limit.
    pub time: Duration,
    /// Largest answer, bytes.
    pub stdout_bytes: usize,
}

/// How the command ended.
pub(super) enum End {
    /// It exited by itself (or by a signal it did not get from us).
    Exited(ExitStatus),
    /// It overran its time limit and was killed.
    TimedOut,
    /// It wrote more than the answer limit and was killed.
    Oversize,
}

/// A finished run.
pub(super) struct Ran {
    /// How it ended.
    pub end: End,
    /// Its stdout (at most the limit and one byte).
    pub stdout: Vec<u8>,
    /// Its stderr, as kept.
    pub stderr: Stderr,
}

/// Runs `cmd` with `request` on its stdin; `log` prefixes its stderr lines in rfsite's log.
/// `Err` only when it cannot be started or watched.
pub(super) fn run(
    mut cmd: Command,
    request: Vec<u8>,
    limits: &Limits,
    log: &str,
) -> io::Result<Ran> {
    cmd.stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .process_group(0);
    let mut child = cmd.spawn()?;
    let group = Group(child.id() as libc::pid_t);
    let pumped = Pipes::take(&mut child, request, limits.stdout_bytes, log)
        .and_then(|mut p| p.pump(&group, limits.time).map(|how| (how, p)));
    // Whatever happened, nothing of the command's group outlives the call.
    group.kill();
    let (how, mut pipes) = match pumped {
        Ok(x) => x,
        Err(e) => {
            let _ = child.wait();
            return Err(e);
        }
    };
    pipes.stdin = None;
    let drained = pipes.drain();
    let status = child.wait()?;
    drained?;
    pipes.stderr_log.finish();
    let end = match how {
        _ if pipes.out.len() > limits.stdout_bytes => End::Oversize,
        Pump::Exited => End::Exited(status),
        Pump::TimedOut => End::TimedOut,
        Pump::Oversize => End::Oversize,
    };
    Ok(Ran {
        end,
        stdout: pipes.out,
        stderr: pipes.stderr_log,
    })
}

/// The command's process group (its id is the command's pid).
struct Group(libc::pid_t);

impl Group {
    /// Whether the leader (the command) has exited; it is left unreaped.
    fn leader_exited(&self) -> io::Result<bool> {
        // SAFETY: an all-zero siginfo_t is a valid value; waitid writes into it and,
        // with WNOHANG, leaves si_pid 0 when the child has not exited.
        let mut info: libc::siginfo_t = unsafe { std::mem::zeroed() };
        // SAFETY: `info` is a valid, writable siginfo_t; the pid is our unreaped child.
        let r = unsafe {
            libc::waitid(
                libc::P_PID,
                self.0 as libc::id_t,
                &mut info,
                libc::WEXITED | libc::WNOHANG | libc::WNOWAIT,
            )
        };
        if r != 0 {
            return Err(io::Error::last_os_error());
        }
        // SAFETY: waitid filled `info` (or left it zeroed).
        Ok(unsafe { info.si_pid() } != 0)
    }

    /// SIGKILL to every process of the group. The leader is not reaped yet, so the group
    /// id is still ours; a group already gone (ESRCH) is fine.
    fn kill(&self) {
        // SAFETY: kill(2) with a negative pid signals that process group; no memory is
        // involved.
        unsafe {
            libc::kill(-self.0, libc::SIGKILL);
        }
    }
}

/// How the pump loop ended.
enum Pump {
    Exited,
    TimedOut,
    Oversize,
}

/// Our ends of the command's pipes, non-blocking, and what came through them.
struct Pipes {
    stdin: Option<ChildStdin>,
    request: Vec<u8>,
    written: usize,
    stdout: Option<ChildStdout>,
    out: Vec<u8>,
    /// Bytes kept of stdout at most: the limit and one, to tell an overrun.
    keep: usize,
    stderr: Option<ChildStderr>,
    stderr_log: Stderr,
}

/// What one read round found.
enum Flow {
    /// Nothing more for now.
    Pending,
    /// End of file: every writer closed it.
    Eof,
}

impl Pipes {
    fn take(child: &mut Child, request: Vec<u8>, limit: usize, log: &str) -> io::Result<Pipes> {
        let p = Pipes {
            stdin: child.stdin.take(),
            request,
            written: 0,
            stdout: child.stdout.take(),
            out: Vec::new(),
            keep: limit.saturating_add(1),
            stderr: child.stderr.take(),
            stderr_log: Stderr::new(log),
        };
        for fd in [
            p.stdin.as_ref().map(|s| s.as_raw_fd()),
            p.stdout.as_ref().map(|s| s.as_raw_fd()),
            p.stderr.as_ref().map(|s| s.as_raw_fd()),
        ]
        .into_iter()
        .flatten()
        {
            nonblocking(fd)?;
        }
        Ok(p)
    }

    /// Moves bytes until the command exits, overruns `time` or the answer limit.
    fn pump(&mut self, group: &Group, time: Duration) -> io::Result<Pump> {
        let t0 = Instant::now();
        loop {
            self.write_request()?;
            self.read_all()?;
            if self.out.len() >= self.keep {
                return Ok(Pump::Oversize);
            }
            if group.leader_exited()? {
                return Ok(Pump::Exited);
            }
            let left = time.saturating_sub(t0.elapsed());
            if left.is_zero() {
                return Ok(Pump::TimedOut);
            }
            self.wait_ready(left.min(TICK))?;
        }
    }

    /// Reads what is left in the pipes once the command has ended: everything it wrote is
    /// there; a writer that escaped the group does not make us wait.
    fn drain(&mut self) -> io::Result<()> {
        self.read_all()
    }

    fn write_request(&mut self) -> io::Result<()> {
        let Some(stdin) = self.stdin.as_mut() else {
            return Ok(());
        };
        while self.written < self.request.len() {
            match stdin.write(&self.request[self.written..]) {
                Ok(n) => self.written += n,
                Err(e) if e.kind() == io::ErrorKind::WouldBlock => return Ok(()),
                Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
                // It closed its stdin (it does not read it all): fine.
                Err(_) => break,
            }
        }
        self.stdin = None;
        self.request = Vec::new();
        Ok(())
    }

    fn read_all(&mut self) -> io::Result<()> {
        if let Some(s) = self.stdout.as_mut() {
            let (out, keep) = (&mut self.out, self.keep);
            if let Flow::Eof = read_some(s, |b| keep_bounded(out, b, keep))? {
                self.stdout = None;
            }
        }
        if let Some(s) = self.stderr.as_mut() {
            let log = &mut self.stderr_log;
            if let Flow::Eof = read_some(s, |b| {
                log.feed(b);
                true
            })? {
                self.stderr = None;
            }
        }
        Ok(())
    }

    /// Sleeps until a pipe is ready or `d` has passed.
    fn wait_ready(&self, d: Duration) -> io::Result<()> {
        let mut fds: Vec<libc::pollfd> = Vec::with_capacity(3);
        let mut add = |fd: RawFd, events: libc::c_short| {
            fds.push(libc::pollfd {
                fd,
                events,
                revents: 0,
            })
        };
        if let Some(s) = &self.stdin {
            add(s.as_raw_fd(), libc::POLLOUT);
        }
        if let Some(s) = &self.stdout {
            add(s.as_raw_fd(), libc::POLLIN);
        }
        if let Some(s) = &self.stderr {
            add(s.as_raw_fd(), libc::POLLIN);
        }
        let ms = d.as_micros().div_ceil(1000).min(i32::MAX as u128) as libc::c_int;
        // SAFETY: `fds` is a valid array of `fds.len()` pollfd structs for the call.
        let r = unsafe { libc::poll(fds.as_mut_ptr(), fds.len() as libc::nfds_t, ms) };
        if r < 0 {
            let e = io::Error::last_os_error();
            if e.kind() != io::ErrorKind::Interrupted {
                return Err(e);
            }
        }
        Ok(())
    }
}

/// Reads from a non-blocking pipe until it would block or ends, handing each chunk to
/// `take`; stops early (as pending) when `take` says it wants no more.
fn read_some(r: &mut impl Read, mut take: impl FnMut(&[u8]) -> bool) -> io::Result<Flow> {
    let mut chunk = vec![0u8; CHUNK];
    loop {
        match r.read(&mut chunk) {
            Ok(0) => return Ok(Flow::Eof),
            Ok(n) => {
                if !take(&chunk[..n]) {
                    return Ok(Flow::Pending);
                }
            }
            Err(e) if e.kind() == io::ErrorKind::WouldBlock => return Ok(Flow::Pending),
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
}

/// Appends `b` to `out`, never holding more than `keep` bytes nor reserving more than
/// that; `false` once `out` is full.
fn keep_bounded(out: &mut Vec<u8>, b: &[u8], keep: usize) -> bool {
    let b = &b[..b.len().min(keep - out.len())];
    if out.capacity() - out.len() < b.len() {
        let want = (out.capacity() * 2).max(out.len() + b.len()).min(keep);
        out.reserve_exact(want - out.len());
    }
    out.extend_from_slice(b);
    out.len() < keep
}

fn nonblocking(fd: RawFd) -> io::Result<()> {
    // SAFETY: fcntl on a file descriptor we own; F_GETFL/F_SETFL take and return ints.
    let r = unsafe {
        let flags = libc::fcntl(fd, libc::F_GETFL);
        if flags < 0 {
            flags
        } else {
            libc::fcntl(fd, libc::F_SETFL, flags | libc::O_NONBLOCK)
        }
    };
    if r < 0 {
        return Err(io::Error::last_os_error());
    }
    Ok(())
}

/// A plugin's stderr: each line passed on to rfsite's log with a prefix, up to
/// [`STDERR_LOG_BYTES`]; past that it is counted and said to be truncated. The last
/// bytes are kept for an error message.
pub(super) struct Stderr {
    prefix: String,
    logged: usize,
    cut: bool,
    line: Vec<u8>,
    total: u64,
    tail: Vec<u8>,
}

impl Stderr {
    fn new(prefix: &str) -> Self {
        Stderr {
            prefix: prefix.to_string(),
            logged: 0,
            cut: false,
            line: Vec::new(),
            total: 0,
            tail: Vec::new(),
        }
    }

    fn feed(&mut self, b: &[u8]) {
        self.total += b.len() as u64;
        self.tail.extend_from_slice(b);
        if self.tail.len() > 2 * STDERR_TAIL_BYTES {
            self.tail.drain(..self.tail.len() - STDERR_TAIL_BYTES);
        }
        let room = STDERR_LOG_BYTES - self.logged;
        let head = &b[..b.len().min(room)];
        self.logged += head.len();
        let mut parts = head.split(|c| *c == b'\n');
        if let Some(first) = parts.next() {
            self.line.extend_from_slice(first);
        }
        for part in parts {
            self.emit();
            self.line.extend_from_slice(part);
        }
        if head.len() < b.len() && !self.cut {
            self.cut = true;
            self.emit();
            eprintln!(
                "{}: [stderr truncated at {} KiB: the rest is read but not logged]",
                self.prefix,
                STDERR_LOG_BYTES >> 10
            );
        }
    }

    fn emit(&mut self) {
        eprintln!("{}: {}", self.prefix, String::from_utf8_lossy(&self.line));
        self.line.clear();
    }

    fn truncated(&self) -> bool {
        self.total > STDERR_LOG_BYTES as u64
    }

    fn finish(&mut self) {
        if !self.line.is_empty() {
            self.emit();
        }
        if self.truncated() {
            eprintln!(
                "{}: [stderr truncated: {} bytes in all, the first {} logged]",
                self.prefix, self.total, STDERR_LOG_BYTES
            );
        }
    }

    /// Its last lines, for an error message.
    pub(super) fn quoted(&self) -> String {
        let start = self.tail.len().saturating_sub(STDERR_TAIL_BYTES);
        let text = String::from_utf8_lossy(&self.tail[start..]);
        let mut lines: Vec<&str> = text.split('\n').collect();
        if self.total > (self.tail.len() - start) as u64 {
            lines.remove(0); // cut mid-line
        }
        while lines.last().is_some_and(|l| l.is_empty()) {
            lines.pop();
        }
        if lines.is_empty() {
            return "(its stderr was empty)".into();
        }
        let from = lines.len().saturating_sub(STDERR_TAIL_LINES);
        let note = if self.truncated() {
            format!(
                " (its stderr ran to {} bytes; the first {} KiB went to the log)",
                self.total,
                STDERR_LOG_BYTES >> 10
            )
        } else {
            String::new()
        };
        format!(
            "last lines of its stderr{note}:\n    {}",
            lines[from..].join("\n    ")
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_answer_buffer_never_holds_or_reserves_more_than_asked() {
        let mut out = Vec::new();
        assert!(keep_bounded(&mut out, &[1; 6], 10));
        assert!(!keep_bounded(&mut out, &[2; 6], 10));
        assert_eq!(out.len(), 10);
        assert!(out.capacity() <= 10, "{}", out.capacity());
    }

    #[test]
    fn stderr_keeps_the_last_lines_and_says_when_it_was_cut() {
        let mut s = Stderr::new("p");
        s.feed(b"one\ntwo\n");
        assert_eq!(s.quoted(), "last lines of its stderr:\n    one\n    two");
        let mut s = Stderr::new("p");
        s.feed(&vec![b'x'; STDERR_LOG_BYTES + 10]);
        s.feed(b"\nlast\n");
        assert!(s.truncated());
        let q = s.quoted();
        assert!(q.ends_with(":\n    last"), "{q}");
        assert!(q.contains("ran to 65552 bytes"), "{q}");
        assert!(s.tail.len() <= 2 * STDERR_TAIL_BYTES);
        assert_eq!(Stderr::new("p").quoted(), "(its stderr was empty)");
    }
}
