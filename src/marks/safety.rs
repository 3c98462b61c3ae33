//! Which files may be taken as a session's journal: its own regular file, nothing else.
//!
//! The journal is the one file trialdesk appends to instead of replacing, so it must not be a
//! way to reach another file: a symbolic link (even a dangling one, which `open(O_CREAT)` would
//! create at the link's target), a hard link with other names (a write here changes the same
//! file elsewhere), or a file someone else put in a folder anyone can write. Both the reader
//! and the appender refuse these, with a message saying why and what to do; `check` reports
//! the same message. The appender also opens with `O_NOFOLLOW`, so a link swapped in after
//! the look is still not followed.

use super::MarksError;
use std::fs::Metadata;
use std::os::unix::fs::MetadataExt;
use std::path::Path;

/// Flags for opening the journal: never through a link at its last component.
pub(crate) const OPEN_FLAGS: i32 = libc::O_NOFOLLOW;

/// Look at the journal's directory entry without following it: `None` when there is none,
/// an error naming the problem when it is not a journal trialdesk may use.
pub(crate) fn check_entry(path: &Path) -> Result<Option<Metadata>, MarksError> {
    match std::fs::symlink_metadata(path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(e) => Err(MarksError::io(path, e)),
        Ok(m) => {
            check_meta(path, &m)?;
            Ok(Some(m))
        }
    }
}

/// The checks on metadata of the entry (`symlink_metadata`) or of the opened file.
pub(crate) fn check_meta(path: &Path, m: &Metadata) -> Result<(), MarksError> {
    if m.file_type().is_symlink() {
        return Err(link_refused(path));
    }
    // A FIFO or device named marks.csv would block or never end.
    if !m.is_file() {
        return Err(MarksError::invalid(path, "not a regular file"));
    }
    if m.nlink() > 1 {
        return Err(MarksError::invalid(
            path,
            format!(
                "has {} names (hard links), so a mark written here would also change the file \
                 under its other name(s), possibly another session's journal; give this session \
                 a copy of its own: cp marks.csv marks.own && mv marks.own marks.csv",
                m.nlink()
            ),
        ));
    }
    let folder = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let folder_meta = std::fs::metadata(folder).map_err(|e| MarksError::io(folder, e))?;
    match crate::safe_write::owner_problem(m, &folder_meta) {
        Some(problem) => Err(MarksError::invalid(path, problem)),
        None => Ok(()),
    }
}

/// The refusal of a journal that is a symbolic link.
fn link_refused(path: &Path) -> MarksError {
    let target = std::fs::read_link(path)
        .map(|t| format!(" to {}", t.display()))
        .unwrap_or_default();
    MarksError::invalid(
        path,
        format!(
            "is a symbolic link{target}; trialdesk never reads or writes marks through a link, \
             which could send this session's marks to (or take them from) any file. Put the \
             session's own journal here: remove the link, and if the file it points to holds \
             this session's marks, move that file here as marks.csv"
        ),
    )
}

/// An error from opening the journal with [`OPEN_FLAGS`]: a link that appeared after the
/// look gives `ELOOP`, reported as the same refusal.
pub(crate) fn open_error(path: &Path, e: std::io::Error) -> MarksError {
    if e.raw_os_error() == Some(libc::ELOOP) {
        link_refused(path)
    } else {
        MarksError::io(path, e)
    }
}

#[cfg(test)]
mod tests {
    use crate::marks::{append, read_journal, MarkKind, MarkRow};

    fn row() -> MarkRow {
        MarkRow {
            trial: Some(1),
            mark: MarkKind::Exclude,
            reason: "artifact".into(),
            note: String::new(),
            reviewer: "t".into(),
            at: "2026-03-02T10:00:00Z".into(),
        }
    }

    #[test]
    fn a_dangling_link_is_refused_and_its_target_not_created() {
        let tmp = tempfile::tempdir().unwrap();
        let target = tmp.path().join("elsewhere.csv");
        std::os::unix::fs::symlink(&target, tmp.path().join("marks.csv")).unwrap();
        let e = append(tmp.path(), &row()).unwrap_err().to_string();
        assert!(e.contains("marks.csv: is a symbolic link to"), "{e}");
        assert!(e.contains("remove the link"), "{e}");
        assert!(!target.exists());
        let e = read_journal(tmp.path()).unwrap_err().to_string();
        assert!(e.contains("symbolic link"), "{e}");
    }

    #[test]
    fn a_journal_with_another_name_is_refused_until_it_has_its_own_file() {
        let tmp = tempfile::tempdir().unwrap();
        append(tmp.path(), &row()).unwrap();
        let other = tmp.path().join("copy-elsewhere.csv");
        std::fs::hard_link(tmp.path().join("marks.csv"), &other).unwrap();
        let e = append(tmp.path(), &row()).unwrap_err().to_string();
        assert!(e.contains("has 2 names (hard links)"), "{e}");
        std::fs::remove_file(&other).unwrap();
        append(tmp.path(), &row()).unwrap();
        assert_eq!(read_journal(tmp.path()).unwrap().rows.len(), 2);
    }
}
