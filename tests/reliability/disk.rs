//! The reviewer on a disk that fills up and on a read-only mount (root: `mount`).
//!
//! * Full tmpfs: marks made while the disk is full are refused by the OS; the status line says
//!   NOT SAVED with the system's reason, the marks stay on screen (in memory), and once space
//!   returns the reviewer's once-a-second retry writes them all, in order. Quitting while the
//!   disk is still full saves the rows in a journal elsewhere and says where; the rows read
//!   back whole from there and, appended as the message says, complete the session's journal.
//! * Read-only bind mount: the same NOT SAVED message; on quit the rows are saved elsewhere;
//!   when the mount becomes writable again a running reviewer writes its pending rows.

use super::tmux_support::{copy_dir, fixture_subject, Server};
use super::{privileged, tmux_or_skip, Figures};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};
use trialdesk::marks::{self, read_journal, MarkKind};

/// Unmounts on drop, so a failed assertion leaves no mount behind.
struct Mount(PathBuf);

impl Mount {
    fn new(args: &[&str], at: &Path) -> Mount {
        let ok = Command::new("mount")
            .args(args)
            .arg(at)
            .status()
            .unwrap()
            .success();
        assert!(ok, "mount {args:?} {}", at.display());
        Mount(at.to_path_buf())
    }

    fn remount(&self, opts: &str) {
        let ok = Command::new("mount")
            .args(["-o", opts])
            .arg(&self.0)
            .status()
            .unwrap()
            .success();
        assert!(ok, "remount {opts}");
    }
}

impl Drop for Mount {
    fn drop(&mut self) {
        let _ = Command::new("umount").arg("-l").arg(&self.0).status();
    }
}

/// Fill the file system holding `dir` until writes fail; returns the filler file.
fn fill(dir: &Path) -> PathBuf {
    let path = dir.join("filler.bin");
    let mut f = std::fs::File::create(&path).unwrap();
    let block = vec![0x5au8; 4096];
    while f.write_all(&block).is_ok() {}
    while f.write_all(&block[..1]).is_ok() {}
    let _ = f.sync_all();
    path
}

/// The system's reasons, as the status line must show them.
const NO_SPACE: &str = "No space left on device";
const READ_ONLY: &str = "Read-only file system";
const WAIT: Duration = Duration::from_secs(20);

fn mark(server: &Server, window: &str, trial: i64) {
    server.send(window, &["g"]);
    for _ in 1..trial {
        server.send(window, &["j"]);
    }
    server.wait_for(window, "the trial", WAIT, |s| {
        s.contains(&format!("| trial {trial} |"))
    });
    server.send(window, &["x"]);
    server.send(window, &["1"]);
}

/// Mark `trial` and wait for the refusal, with the system's reason, on the status line.
fn mark_refused(server: &Server, window: &str, trial: i64, os_reason: &str) {
    mark(server, window, trial);
    let want = format!("NOT SAVED: trial {trial} excluded");
    server.wait_for(window, &want, WAIT, |s| {
        s.lines()
            .any(|l| l.contains(&want) && l.contains(os_reason))
    });
}

/// Quit and wait for the exit text; returns the file the unsaved rows went to.
fn quit_saving_elsewhere(server: &Server, window: &str) -> PathBuf {
    server.send(window, &["q"]);
    server.wait_for(window, "the exit message", WAIT, |s| {
        s.contains("kept in ") && s.contains("marks.csv (same columns")
    });
    let screen = server.screen_and_history(window);
    assert!(
        screen.contains("could not be written to the data folder's marks.csv"),
        "{screen}"
    );
    // The path is what follows "kept in " up to " (same" (wrapped lines come back joined).
    let line = screen.lines().find(|l| l.contains("kept in ")).unwrap();
    let from = line.find("kept in ").unwrap() + "kept in ".len();
    let to = line[from..].find(" (same").unwrap() + from;
    PathBuf::from(&line[from..to])
}

fn trials_of(dir: &Path, reviewer: &str) -> Vec<i64> {
    read_journal(dir)
        .unwrap()
        .rows
        .iter()
        .filter(|r| r.reviewer == reviewer && r.mark == MarkKind::Exclude)
        .filter_map(|r| r.trial)
        .collect()
}

pub fn run(figures: &mut Figures) {
    if !tmux_or_skip("the disk tests") || !privileged("the disk-full and read-only tests (mount)") {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let data_home = tmp.path().join("data");
    let config = tmp.path().join("config");
    std::fs::create_dir_all(config.join("trialdesk")).unwrap();
    let server = Server::start(
        "disk",
        vec![
            format!("XDG_CONFIG_HOME={}", config.display()),
            format!("XDG_DATA_HOME={}", data_home.display()),
        ],
    );
    full_disk(tmp.path(), &server, figures);
    read_only(tmp.path(), &server, figures);
}

fn full_disk(tmp: &Path, server: &Server, figures: &mut Figures) {
    let mnt = tmp.join("small");
    std::fs::create_dir(&mnt).unwrap();
    let mount = Mount::new(&["-t", "tmpfs", "-o", "size=512k", "tmpfs"], &mnt);
    copy_dir(&fixture_subject(), &mnt.join("m-007"));
    let session = mnt.join("m-007/2026-03-02");
    let s = session.to_str().unwrap();
    server.open("full", &["review", s, "--ascii", "--reviewer", "full"]);
    server.wait_for("full", "the first frame", WAIT, |x| x.contains("full |"));

    let filler = fill(&mnt);
    for trial in 1..=3 {
        mark_refused(server, "full", trial, NO_SPACE);
    }
    // Kept in memory: the trial list still shows the marks.
    let screen = server.screen("full");
    for t in 1..=3 {
        assert_eq!(
            super::tmux_support::listed_glyph(&screen, t),
            Some('X'),
            "{screen}"
        );
    }
    std::fs::remove_file(&filler).unwrap();
    let freed = Instant::now();
    server.wait_for("full", "the retried rows saved", WAIT, |x| {
        x.contains("saved: 3 earlier unsaved row(s) now on disk")
    });
    let retry_s = freed.elapsed().as_secs_f64();
    assert_eq!(trials_of(&session, "full"), vec![1, 2, 3]);

    server.send("full", &["q"]);

    // Full again, and a reviewer of the other session (no journal yet: an append to an
    // existing one may fit in its last allocated page) quits before space returns.
    let session = mnt.join("m-007/2026-03-03");
    let s = session.to_str().unwrap();
    server.open("full2", &["review", s, "--ascii", "--reviewer", "full"]);
    server.wait_for("full2", "the first frame", WAIT, |x| x.contains("full |"));
    let filler = fill(&mnt);
    mark_refused(server, "full2", 4, NO_SPACE);
    let kept = quit_saving_elsewhere(server, "full2");
    assert!(kept.starts_with(tmp.join("data")), "{}", kept.display());
    let saved = read_journal(kept.parent().unwrap()).unwrap();
    assert_eq!(saved.rows.len(), 1);
    assert_eq!(saved.rows[0].trial, Some(4));
    // Space returns; the kept rows go in as the message says (append, without the header).
    std::fs::remove_file(&filler).unwrap();
    for row in &saved.rows {
        marks::append(&session, row).unwrap();
    }
    assert_eq!(trials_of(&session, "full"), vec![4], "nothing lost");
    drop(mount);
    figures.push(format!(
        "full disk (512 KiB tmpfs): 4 marks refused on screen with \"{NO_SPACE}\"; 3 kept in \
         memory and on disk {retry_s:.1} s after space returned, 1 saved elsewhere on quit and \
         appended once space returned; 4 of 4 in the journals"
    ));
}

fn read_only(tmp: &Path, server: &Server, figures: &mut Figures) {
    let src = tmp.join("rw/m-007");
    copy_dir(&fixture_subject(), &src);
    let ro = tmp.join("ro");
    std::fs::create_dir(&ro).unwrap();
    let mount = Mount::new(&["--bind", src.to_str().unwrap()], &ro);
    mount.remount("remount,bind,ro");
    let session = ro.join("2026-03-02");
    let s = session.to_str().unwrap();

    // One reviewer quits while the folder is read-only: its rows are saved elsewhere.
    server.open("ro1", &["review", s, "--ascii", "--reviewer", "ro1"]);
    server.wait_for("ro1", "the first frame", WAIT, |x| x.contains("ro1 |"));
    mark_refused(server, "ro1", 1, READ_ONLY);
    let kept = quit_saving_elsewhere(server, "ro1");
    let saved = read_journal(kept.parent().unwrap()).unwrap();
    assert_eq!(saved.rows.len(), 1);
    assert_eq!(saved.rows[0].trial, Some(1));
    assert!(!src.join("2026-03-02/marks.csv").exists());

    // Another keeps running until the folder is writable again.
    server.open("ro2", &["review", s, "--ascii", "--reviewer", "ro2"]);
    server.wait_for("ro2", "the first frame", WAIT, |x| x.contains("ro2 |"));
    mark_refused(server, "ro2", 2, READ_ONLY);
    mark_refused(server, "ro2", 3, READ_ONLY);
    mount.remount("remount,bind,rw");
    server.wait_for("ro2", "the retried rows saved", WAIT, |x| {
        x.contains("saved: 2 earlier unsaved row(s) now on disk")
    });
    assert_eq!(trials_of(&session, "ro2"), vec![2, 3]);
    server.send("ro2", &["q"]);
    drop(mount);
    figures.push(format!(
        "read-only bind mount: 3 marks refused on screen with \"{READ_ONLY}\"; 1 saved \
         elsewhere on quit, 2 written by the running reviewer once writable; 0 lost"
    ));
}
