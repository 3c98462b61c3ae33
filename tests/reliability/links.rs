//! Links where trialdesk writes. Every output file that is a symbolic or hard link is replaced,
//! never written through; a journal that is a link, a hard link, or another user's file in a
//! world-writable folder is refused (by the appender, the reader and `check`); an output
//! folder behind a link someone else planted is refused, and nothing is created at its target.

use super::tmux_support::{copy_dir, fixture_subject};
use super::{printed, privileged, trialdesk, Figures};
use std::os::unix::fs::{symlink, MetadataExt, PermissionsExt};
use std::path::{Path, PathBuf};
use trialdesk::marks::{self, MarkKind, MarkRow};

const VICTIM_TEXT: &str = "someone else's file: must not change\n";
/// A uid no test user has (the planted files' owner).
const OTHER_UID: u32 = 4242;

fn row() -> MarkRow {
    MarkRow {
        trial: Some(2),
        mark: MarkKind::Exclude,
        reason: "artifact".into(),
        note: "links test".into(),
        reviewer: "links".into(),
        at: "2026-03-02T10:00:00Z".into(),
    }
}

struct Lab {
    _tmp: tempfile::TempDir,
    root: PathBuf,
    subject: PathBuf,
}

impl Lab {
    fn new() -> Lab {
        let tmp = tempfile::tempdir().unwrap();
        let root = tmp.path().to_path_buf();
        let subject = root.join("m-007");
        copy_dir(&fixture_subject(), &subject);
        Lab {
            _tmp: tmp,
            root,
            subject,
        }
    }

    /// A new victim file and a link to it at `link`.
    fn plant(&self, link: &Path) -> PathBuf {
        let victim = self.root.join(format!(
            "victim-{}",
            link.file_name().unwrap().to_string_lossy()
        ));
        std::fs::write(&victim, VICTIM_TEXT).unwrap();
        let _ = std::fs::remove_file(link);
        symlink(&victim, link).unwrap();
        victim
    }

    fn session(&self) -> PathBuf {
        self.subject.join("2026-03-02")
    }
}

/// The link at `out` was replaced by a regular file of its own, and `victim` is untouched.
fn assert_replaced(out: &Path, victim: &Path) {
    let m = std::fs::symlink_metadata(out).unwrap();
    assert!(
        m.is_file() && m.nlink() == 1,
        "{} was not replaced",
        out.display()
    );
    assert_eq!(
        std::fs::read_to_string(victim).unwrap(),
        VICTIM_TEXT,
        "{} was written through {}",
        victim.display(),
        out.display()
    );
}

fn ok(args: &[&str]) {
    let o = trialdesk(args);
    assert!(o.status.success(), "trialdesk {args:?}: {}", printed(&o));
}

pub fn run(figures: &mut Figures) {
    let replaced = outputs_replace_links();
    figures.push(format!(
        "outputs behind links: {replaced} replaced, 0 written through; /dev/null and \
         /dev/stdout written into and left in place"
    ));
    let refused = journals_refused();
    figures.push(format!(
        "journal links refused: {refused} cases (appender, reader, check)"
    ));
    if privileged("planted-link cases (chown)") {
        let planted = planted_cases();
        figures.push(format!(
            "planted by another user: {planted} cases refused, nothing created at a target"
        ));
    }
}

/// Every command that writes a file, with that file (or each file in its folder) a link.
fn outputs_replace_links() -> usize {
    let lab = Lab::new();
    let s = lab.subject.to_str().unwrap().to_string();
    let session = lab.session();
    marks::append(&session, &row()).unwrap();
    let mut n = 0;
    let single: Vec<(&str, Vec<&str>)> = vec![
        (
            "summary.csv",
            vec!["summary", &s, "--format", "csv", "--out"],
        ),
        ("marks-out.csv", vec!["marks", &s, "--csv"]),
        (
            "model.csv",
            vec!["model", &s, "--alpha", "0.1", "--gamma", "0.95", "--out"],
        ),
    ];
    for (name, args) in single {
        let out = lab.root.join(name);
        let victim = lab.plant(&out);
        let mut args = args.clone();
        args.push(out.to_str().unwrap());
        ok(&args);
        assert_replaced(&out, &victim);
        n += 1;
    }

    // fit: both tables in --out and the saved fit beside the data.
    let fit_dir = lab.root.join("fit");
    std::fs::create_dir(&fit_dir).unwrap();
    let mut victims = Vec::new();
    for f in ["params.csv", "trials.csv"] {
        victims.push((fit_dir.join(f), lab.plant(&fit_dir.join(f))));
    }
    let saved = lab.subject.join("trialdesk-fit.toml");
    victims.push((saved.clone(), lab.plant(&saved)));
    ok(&[
        "fit",
        &s,
        "--no-compare",
        "--bootstrap",
        "0",
        "--out",
        fit_dir.to_str().unwrap(),
    ]);
    for (out, victim) in &victims {
        assert_replaced(out, victim);
        n += 1;
    }

    // merge over a cohort folder whose one subject has params.csv.
    let cohort = lab.root.join("cohort");
    copy_dir(&fit_dir, &cohort.join("m-007"));
    let merged = lab.root.join("merged.csv");
    let victim = lab.plant(&merged);
    ok(&[
        "merge",
        cohort.to_str().unwrap(),
        "--out",
        merged.to_str().unwrap(),
    ]);
    assert_replaced(&merged, &victim);
    n += 1;

    // plot and man: every file they write, each a link on the second run.
    for (cmd, dir) in [
        ("plot", lab.root.join("svg")),
        ("man", lab.root.join("man")),
    ] {
        let args: Vec<&str> = match cmd {
            "plot" => vec!["plot", &s, "--out", dir.to_str().unwrap()],
            _ => vec!["man", "--out", dir.to_str().unwrap()],
        };
        ok(&args);
        let files: Vec<PathBuf> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .collect();
        assert!(!files.is_empty(), "{cmd} wrote nothing");
        let victims: Vec<(PathBuf, PathBuf)> =
            files.iter().map(|f| (f.clone(), lab.plant(f))).collect();
        ok(&args);
        for (out, victim) in &victims {
            assert_replaced(out, victim);
            n += 1;
        }
    }

    // Devices are written into, never replaced (as root a rename would remove /dev/null).
    for dev in ["/dev/null", "/dev/stdout"] {
        ok(&["summary", &s, "--format", "csv", "--out", dev]);
    }
    use std::os::unix::fs::FileTypeExt;
    let null = std::fs::symlink_metadata("/dev/null").unwrap().file_type();
    assert!(null.is_char_device(), "/dev/null was replaced");
    assert!(std::fs::symlink_metadata("/dev/stdout")
        .unwrap()
        .file_type()
        .is_symlink());

    // A hard link in --out keeps its other name's content.
    let out = lab.root.join("hard.csv");
    let other = lab.root.join("other-name.csv");
    std::fs::write(&other, VICTIM_TEXT).unwrap();
    std::fs::hard_link(&other, &out).unwrap();
    ok(&[
        "summary",
        &s,
        "--format",
        "csv",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_replaced(&out, &other);
    n + 1
}

/// The journal refused by `marks::append`, by `trialdesk marks` (the reader) and by `check`,
/// each with `reason` in the message; `after` checks nothing was written anywhere.
fn refused_everywhere(session: &Path, reason: &str) {
    let e = marks::append(session, &row()).unwrap_err().to_string();
    assert!(e.contains("marks.csv") && e.contains(reason), "append: {e}");
    for cmd in ["marks", "check"] {
        let o = trialdesk(&[cmd, session.to_str().unwrap()]);
        let text = printed(&o);
        assert_eq!(o.status.code(), Some(1), "{cmd}: {text}");
        assert!(
            text.contains("marks.csv") && text.contains(reason),
            "{cmd} does not say why: {text}"
        );
    }
}

fn journals_refused() -> usize {
    let lab = Lab::new();
    let session = lab.session();
    let journal = session.join("marks.csv");
    let mut n = 0;

    // A dangling link: the appender must not create the file it points to.
    let target = lab.root.join("elsewhere/created.csv");
    std::fs::create_dir_all(target.parent().unwrap()).unwrap();
    symlink(&target, &journal).unwrap();
    refused_everywhere(&session, "symbolic link");
    assert!(!target.exists(), "the link's target was created");
    n += 1;

    // A link to another session's journal: refused, and that journal unchanged.
    let other = lab.subject.join("2026-03-03");
    marks::append(&other, &row()).unwrap();
    let before = std::fs::read(other.join("marks.csv")).unwrap();
    std::fs::remove_file(&journal).unwrap();
    symlink(other.join("marks.csv"), &journal).unwrap();
    refused_everywhere(&session, "symbolic link");
    assert_eq!(std::fs::read(other.join("marks.csv")).unwrap(), before);
    n += 1;

    // A hard link to that journal.
    std::fs::remove_file(&journal).unwrap();
    std::fs::hard_link(other.join("marks.csv"), &journal).unwrap();
    refused_everywhere(&session, "hard links");
    assert_eq!(std::fs::read(other.join("marks.csv")).unwrap(), before);
    n += 1;

    // Its own file again: accepted.
    std::fs::remove_file(&journal).unwrap();
    marks::append(&session, &row()).unwrap();
    let o = trialdesk(&["check", session.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(0), "{}", printed(&o));
    n
}

/// Files and links owned by another user (made as root with chown).
fn planted_cases() -> usize {
    let lab = Lab::new();
    let session = lab.session();
    let mut n = 0;

    // Another user's journal in a world-writable session folder.
    marks::append(&session, &row()).unwrap();
    let journal = session.join("marks.csv");
    std::os::unix::fs::chown(&journal, Some(OTHER_UID), None).unwrap();
    std::fs::set_permissions(&session, std::fs::Permissions::from_mode(0o777)).unwrap();
    refused_everywhere(&session, "another user");
    n += 1;
    // The same file in a folder only its owner can write is someone's real journal.
    std::fs::set_permissions(&session, std::fs::Permissions::from_mode(0o755)).unwrap();
    marks::append(&session, &row()).unwrap();

    // Output folders behind a link another user planted in a shared folder.
    let shared = lab.root.join("shared");
    std::fs::create_dir(&shared).unwrap();
    std::fs::set_permissions(&shared, std::fs::Permissions::from_mode(0o1777)).unwrap();
    let target = lab.root.join("victim-home");
    std::fs::create_dir(&target).unwrap();
    let planted = shared.join("out");
    symlink(&target, &planted).unwrap();
    std::os::unix::fs::lchown(&planted, Some(OTHER_UID), None).unwrap();
    let s = lab.subject.to_str().unwrap();
    let sub = planted.join("fit");
    let cases: [Vec<&str>; 3] = [
        vec![
            "fit",
            s,
            "--no-compare",
            "--bootstrap",
            "0",
            "--no-save",
            "--out",
            sub.to_str().unwrap(),
        ],
        vec!["plot", s, "--out", planted.to_str().unwrap()],
        vec!["man", "--out", sub.to_str().unwrap()],
    ];
    for args in &cases {
        let o = trialdesk(args);
        let text = printed(&o);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {text}");
        assert!(text.contains("made by another user"), "{args:?}: {text}");
        let left: Vec<_> = std::fs::read_dir(&target).unwrap().collect();
        assert!(left.is_empty(), "{args:?} wrote through the planted link");
        n += 1;
    }
    // The user's own link is theirs to use.
    let mine = lab.root.join("mine");
    symlink(&target, &mine).unwrap();
    ok(&["man", "--out", mine.join("pages").to_str().unwrap()]);
    assert!(target.join("pages/trialdesk.1").is_file());
    n
}
