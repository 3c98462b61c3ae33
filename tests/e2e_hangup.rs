//! End to end: a reviewer whose terminal goes away exits, promptly and without spinning.
//!
//! Two ways a terminal goes away on a rig computer: the multiplexer session holding it is
//! killed (tmux `kill-server`: hang-up signal and the pane's pseudo-terminal closed), and an SSH
//! connection drops (the pseudo-terminal's master side is closed under the program; with the
//! terminal as controlling terminal the kernel also sends a hang-up, without it only the reads
//! fail). In each case, with the reviewer idle, with the reason picker open, with the note
//! editor open, and while following a recording: the process is gone within 2 s, it used
//! almost no CPU time between the hang-up and its exit (measured from /proc before it exits),
//! and the mark made before is on disk.
//!
//! Needs tmux for the multiplexer cases (CI installs it; without it in CI the test fails).

use std::io::{Read, Write};
use std::os::fd::{AsRawFd, FromRawFd, OwnedFd};
use std::os::unix::process::CommandExt;
use std::path::PathBuf;
use std::process::Command;
use std::time::{Duration, Instant};

mod tmux_support;
use tmux_support::{scratch_subject, tmux_present, Server};

/// Clock ticks per second of /proc's CPU times (common practice on Linux: USER_HZ = 100).
fn ticks_per_second() -> f64 {
    // SAFETY: sysconf has no preconditions.
    let t = unsafe { libc::sysconf(libc::_SC_CLK_TCK) };
    if t > 0 {
        t as f64
    } else {
        100.0
    }
}

/// The process's CPU time so far, or None once it has exited (gone or a zombie).
fn cpu_seconds(pid: u32) -> Option<f64> {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    let rest = &stat[stat.rfind(')')? + 2..];
    let fields: Vec<&str> = rest.split_whitespace().collect();
    if fields.first() == Some(&"Z") || fields.first() == Some(&"X") {
        return None;
    }
    // After "pid (comm) ", field 0 is the state; utime and stime are fields 11 and 12.
    let utime: f64 = fields.get(11)?.parse().ok()?;
    let stime: f64 = fields.get(12)?.parse().ok()?;
    Some((utime + stime) / ticks_per_second())
}

/// Wait for `pid` to exit after its terminal went away; returns (seconds to exit, CPU seconds
/// used from `before` to the last sample taken while it still ran).
fn watch_exit(pid: u32, hung_up: Instant, before: f64) -> (f64, f64) {
    let mut last = before;
    loop {
        match cpu_seconds(pid) {
            Some(c) => last = c,
            None => return (hung_up.elapsed().as_secs_f64(), last - before),
        }
        if hung_up.elapsed() > Duration::from_secs(10) {
            // SAFETY: plain kill of our own test process.
            unsafe { libc::kill(pid as i32, libc::SIGKILL) };
            panic!("the reviewer (pid {pid}) was still running 10 s after its terminal went away");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn assert_prompt_exit(case: &str, pid: u32, hung_up: Instant, before: f64) {
    let (secs, cpu) = watch_exit(pid, hung_up, before);
    eprintln!("{case}: exited {secs:.2} s after the hang-up, {cpu:.3} s of CPU meanwhile");
    assert!(secs < 2.0, "{case}: took {secs:.2} s to exit (limit 2 s)");
    // A spinning reader burns a core: about 1 s of CPU per second. 0.3 s allows for the exit
    // path itself on a loaded machine.
    assert!(cpu < 0.3, "{case}: burnt {cpu:.3} s of CPU before exiting");
}

/// A copy of the reviewer fixture subject and a config folder naming the reviewer.
struct Setup {
    _tmp: tempfile::TempDir,
    subject: PathBuf,
    config: PathBuf,
}

impl Setup {
    fn new() -> Setup {
        let tmp = tempfile::tempdir().unwrap();
        let (subject, config) = scratch_subject(tmp.path());
        std::fs::write(
            config.join("trialdesk/config.toml"),
            "reviewer = \"hangup-reviewer\"\n",
        )
        .unwrap();
        Setup {
            _tmp: tmp,
            subject,
            config,
        }
    }

    /// Every session's marks.csv, joined (following opens the newest session).
    fn marks(&self) -> String {
        let mut all = String::new();
        for e in std::fs::read_dir(&self.subject).unwrap() {
            let path = e.unwrap().path().join("marks.csv");
            all.push_str(&std::fs::read_to_string(path).unwrap_or_default());
        }
        all
    }

    fn assert_mark_kept(&self, case: &str) {
        let csv = self.marks();
        assert!(
            csv.lines()
                .any(|l| l.starts_with("1,exclude,") && l.contains("hangup-reviewer")),
            "{case}: the exclusion made before the hang-up is missing:\n{csv}"
        );
    }
}

/// What is open when the terminal goes away.
#[derive(Clone, Copy, Debug)]
enum Moment {
    Idle,
    Picker,
    NoteEditor,
    Following,
}

const MOMENTS: [Moment; 4] = [
    Moment::Idle,
    Moment::Picker,
    Moment::NoteEditor,
    Moment::Following,
];

// ---------------------------------------------------------------- tmux session killed

/// The reviewer in a window of its own tmux server, with one mark made and `moment` open.
fn start_in_tmux(setup: &Setup, moment: Moment) -> Server {
    let server = Server::start(
        &format!("hup-{moment:?}"),
        vec![format!("XDG_CONFIG_HOME={}", setup.config.display())],
    );
    let subject = setup.subject.display().to_string();
    let mut args = vec!["review", subject.as_str()];
    if matches!(moment, Moment::Following) {
        args.push("--follow");
    }
    server.open("hup", &args);
    let wait = |what: &str, needle: &str| {
        server.wait_for("hup", what, Duration::from_secs(20), |s| s.contains(needle));
    };
    wait("the first frame", "hangup-reviewer");
    server.send("hup", &["x"]);
    wait("the reason picker", "why?");
    server.send("hup", &["1"]);
    wait("the saved exclusion", "saved: trial 1 excluded");
    match moment {
        Moment::Picker => {
            server.send("hup", &["j", "x"]);
            wait("the reason picker", "why?");
        }
        Moment::NoteEditor => {
            server.send("hup", &["n"]);
            wait("the note editor", "note on trial");
            server.send("hup", &["-l", "half a no"]);
        }
        Moment::Idle | Moment::Following => {}
    }
    server
}

#[test]
fn killing_the_tmux_session_ends_the_reviewer() {
    if !tmux_present() {
        assert!(
            std::env::var_os("CI").is_none(),
            "tmux is required in CI for the end-to-end hang-up test (.ci/run installs it)"
        );
        eprintln!("NOTICE: tmux not found; skipping the tmux hang-up cases");
        return;
    }
    for moment in MOMENTS {
        let setup = Setup::new();
        let server = start_in_tmux(&setup, moment);
        let pid = server.pid("hup").0 as u32;
        std::thread::sleep(Duration::from_millis(300));
        let before = cpu_seconds(pid).expect("reviewer running");
        let hung_up = Instant::now();
        server.tmux(&["kill-server"]);
        let case = format!("tmux kill-server, {moment:?}");
        assert_prompt_exit(&case, pid, hung_up, before);
        setup.assert_mark_kept(&case);
    }
}

// ---------------------------------------------------------------- pseudo-terminal closed

/// A pseudo-terminal pair: (master, slave), 100×30.
fn open_pty() -> (OwnedFd, OwnedFd) {
    let mut master = -1;
    let mut slave = -1;
    let size = libc::winsize {
        ws_row: 30,
        ws_col: 100,
        ws_xpixel: 0,
        ws_ypixel: 0,
    };
    // SAFETY: out-pointers to two ints; null name and termios; a valid winsize.
    let rc = unsafe {
        libc::openpty(
            &mut master,
            &mut slave,
            std::ptr::null_mut(),
            std::ptr::null(),
            &size,
        )
    };
    assert_eq!(rc, 0, "openpty: {}", std::io::Error::last_os_error());
    // Not inherited by the reviewer: a child holding the master open never sees a hang-up.
    for fd in [master, slave] {
        // SAFETY: fcntl on descriptors we own.
        unsafe { libc::fcntl(fd, libc::F_SETFD, libc::FD_CLOEXEC) };
    }
    // SAFETY: openpty returned two fresh descriptors that we now own.
    unsafe { (OwnedFd::from_raw_fd(master), OwnedFd::from_raw_fd(slave)) }
}

/// Reads the master side, as an SSH server would, until `needle` has been drawn. Only for
/// the first frame, which is drawn whole; later frames draw differences only, so a word on
/// screen need not arrive as one run of bytes.
fn read_until(master: &mut std::fs::File, needle: &str) {
    let start = Instant::now();
    let mut seen = Vec::new();
    while !String::from_utf8_lossy(&seen).contains(needle) {
        assert!(
            start.elapsed() < Duration::from_secs(20),
            "timed out waiting for {needle:?}; got {} bytes",
            seen.len()
        );
        drain(master, &mut seen, Duration::from_millis(100));
    }
}

/// Read what the reviewer draws for `time` (the pseudo-terminal's buffer must not fill up).
fn drain(master: &mut std::fs::File, seen: &mut Vec<u8>, time: Duration) {
    let start = Instant::now();
    let mut buf = [0u8; 4096];
    while start.elapsed() < time {
        let mut pfd = libc::pollfd {
            fd: master.as_raw_fd(),
            events: libc::POLLIN,
            revents: 0,
        };
        // SAFETY: one valid pollfd.
        if unsafe { libc::poll(&mut pfd, 1, 20) } > 0 {
            let n = master.read(&mut buf).unwrap_or(0);
            seen.extend_from_slice(&buf[..n]);
        }
    }
}

/// Type `keys` and keep reading the screen while the reviewer handles them.
fn type_keys(master: &mut std::fs::File, keys: &[u8]) {
    master.write_all(keys).unwrap();
    drain(master, &mut Vec::new(), Duration::from_millis(400));
}

fn ssh_like_case(moment: Moment, controlling: bool) {
    let setup = Setup::new();
    let (master, slave) = open_pty();
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_trialdesk"));
    cmd.arg("review").arg(&setup.subject);
    if matches!(moment, Moment::Following) {
        cmd.arg("--follow");
    }
    cmd.env_clear()
        .env("PATH", "/usr/bin:/bin")
        .env("TERM", "xterm-256color")
        .env("HOME", "/tmp")
        .env("XDG_CONFIG_HOME", &setup.config)
        .stdin(slave.try_clone().unwrap())
        .stdout(slave.try_clone().unwrap())
        .stderr(slave.try_clone().unwrap());
    if controlling {
        // SAFETY: setsid and ioctl are async-signal-safe; run in the child before exec.
        unsafe {
            cmd.pre_exec(|| {
                if libc::setsid() < 0 || libc::ioctl(0, libc::TIOCSCTTY, 0) < 0 {
                    return Err(std::io::Error::last_os_error());
                }
                Ok(())
            });
        }
    }
    let mut child = cmd.spawn().unwrap();
    drop(cmd); // the parent's copies of the slave side
    drop(slave);
    let mut master = std::fs::File::from(master);
    read_until(&mut master, "hangup-reviewer");
    type_keys(&mut master, b"x");
    type_keys(&mut master, b"1");
    let start = Instant::now();
    while !setup.marks().contains("1,exclude,") {
        assert!(
            start.elapsed() < Duration::from_secs(10),
            "no exclusion saved"
        );
        type_keys(&mut master, b"");
    }
    match moment {
        Moment::Picker => type_keys(&mut master, b"jx"),
        Moment::NoteEditor => {
            type_keys(&mut master, b"n");
            type_keys(&mut master, b"half a no");
        }
        Moment::Idle | Moment::Following => {}
    }
    std::thread::sleep(Duration::from_millis(300));
    let pid = child.id();
    let before = cpu_seconds(pid).expect("reviewer running");
    let hung_up = Instant::now();
    drop(master);
    let case = format!(
        "pty master closed ({}controlling terminal), {moment:?}",
        if controlling { "" } else { "not the " }
    );
    // Our own child: once it exits it stays a zombie until waited for, which watch_exit
    // counts as exited.
    assert_prompt_exit(&case, pid, hung_up, before);
    let _ = child.wait();
    setup.assert_mark_kept(&case);
}

#[test]
fn closing_the_pseudo_terminal_ends_the_reviewer() {
    for moment in MOMENTS {
        ssh_like_case(moment, true);
        ssh_like_case(moment, false);
    }
}
