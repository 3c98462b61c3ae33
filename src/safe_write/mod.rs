//! Writes that cannot be redirected: every file trialdesk replaces goes through here.
//!
//! Start at [`replace_file`] (a whole file: tables, SVGs, man pages, the saved fit, the
//! unsaved-marks fallback) and [`create_dirs`] (output folders). The marks journal, the one
//! file that is appended to, has its own rules in `marks` and uses [`owner_problem`] from here.
//!
//! * A replaced file is written to a new temporary file in the same folder (created with
//!   `O_EXCL`, so never through anything already there), synced, then renamed over the target.
//!   `rename` replaces a symbolic link or hard link at the target instead of writing through
//!   it, and a reader never sees half a file. The folder is synced so the rename survives a
//!   power cut.
//! * An output folder is created one component at a time; a component that is already a
//!   symbolic link is followed only when its owner is trusted ([`link_is_trusted`]), so a link
//!   planted in a shared folder cannot send output somewhere else.

mod dirs;

pub use dirs::{create_dirs, link_is_trusted};

use std::fs::{File, OpenOptions};
use std::io::{self, BufWriter, Write};
use std::os::unix::fs::{MetadataExt, OpenOptionsExt, PermissionsExt};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

#[derive(Debug, thiserror::Error)]
pub enum WriteError {
    /// The operating system refused (no space, read-only, no permission, ...).
    #[error("{}: cannot write: {source}", path.display())]
    Io { path: PathBuf, source: io::Error },
    /// trialdesk refused, for the reason given (which says what to do instead).
    #[error("{}: {reason}", path.display())]
    Refused { path: PathBuf, reason: String },
}

impl WriteError {
    fn io(path: &Path, source: io::Error) -> Self {
        WriteError::Io {
            path: path.to_path_buf(),
            source,
        }
    }
    fn refused(path: &Path, reason: impl Into<String>) -> Self {
        WriteError::Refused {
            path: path.to_path_buf(),
            reason: reason.into(),
        }
    }
}

/// Replace `path` with `bytes` (see the module notes).
pub fn replace_file(path: &Path, bytes: &[u8]) -> Result<(), WriteError> {
    replace_with(path, |w| w.write_all(bytes))
}

/// Replace `path` with what `write` writes (buffered), atomically: a temporary file in the
/// same folder, synced, renamed over `path`. On any error the temporary file is removed and
/// `path` is as it was.
pub fn replace_with<F>(path: &Path, write: F) -> Result<(), WriteError>
where
    F: FnOnce(&mut BufWriter<File>) -> io::Result<()>,
{
    let Some(name) = path.file_name() else {
        return Err(WriteError::refused(path, "not a file name"));
    };
    let dir = parent_of(path);
    let old = std::fs::symlink_metadata(path).ok();
    if old.as_ref().is_some_and(|m| m.is_dir()) {
        return Err(WriteError::refused(
            path,
            "is a folder; give a file name to write",
        ));
    }
    if is_stream(path, old.as_ref()) {
        return write_stream(path, write);
    }
    let (tmp, file) = create_temp(dir, &name.to_string_lossy())?;
    let result = (|| {
        // A replaced regular file keeps its permissions (a link's target is not looked at).
        if let Some(m) = old.as_ref().filter(|m| m.is_file()) {
            let mode = std::fs::Permissions::from_mode(m.mode() & 0o7777);
            file.set_permissions(mode)?;
        }
        let mut w = BufWriter::new(file);
        write(&mut w)?;
        let file = w.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(WriteError::io(path, e));
    }
    sync_dir(dir).map_err(|e| WriteError::io(path, e))
}

/// Whether `path` is something to write into rather than replace: a character device or a
/// FIFO (`--out /dev/null`, a named pipe), or any path under /dev (but /dev/shm) or /proc (`/dev/stdout` is a
/// link to `/proc/self/fd/1`). Renaming over those would destroy a device node or a system
/// link, for root even /dev/null itself. A link elsewhere that points at a device is still
/// replaced: that is how a planted link would reach a disk.
fn is_stream(path: &Path, entry: Option<&std::fs::Metadata>) -> bool {
    use std::os::unix::fs::FileTypeExt;
    if let Some(t) = entry.map(|m| m.file_type()) {
        if t.is_char_device() || t.is_fifo() {
            return true;
        }
    }
    let absolute = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    // /dev/shm is an ordinary (shared, world-writable) folder of files.
    (absolute.starts_with("/dev") && !absolute.starts_with("/dev/shm"))
        || absolute.starts_with("/proc")
}

/// Write into a device, FIFO or system path as it stands (never created, never renamed).
fn write_stream<F>(path: &Path, write: F) -> Result<(), WriteError>
where
    F: FnOnce(&mut BufWriter<File>) -> io::Result<()>,
{
    let result = (|| {
        use std::os::unix::fs::FileTypeExt;
        let file = OpenOptions::new().write(true).open(path)?;
        if file.metadata()?.file_type().is_block_device() {
            return Err(io::Error::other(
                "is a block device (a disk); trialdesk does not write tables to disks",
            ));
        }
        let mut w = BufWriter::new(file);
        write(&mut w)?;
        w.flush()
    })();
    result.map_err(|e| WriteError::io(path, e))
}

/// The folder a relative or absolute file path lives in (`.` for a bare name).
fn parent_of(path: &Path) -> &Path {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    }
}

/// A new, empty temporary file beside the target. `create_new` (`O_EXCL`) never opens or
/// follows anything already at that name; a name taken by a leftover is skipped.
fn create_temp(dir: &Path, name: &str) -> Result<(PathBuf, File), WriteError> {
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let pid = std::process::id();
    let mut last = None;
    for _ in 0..64 {
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let tmp = dir.join(format!(".{name}.{pid}-{n}.tmp"));
        match OpenOptions::new()
            .write(true)
            .create_new(true)
            .mode(0o666)
            .open(&tmp)
        {
            Ok(f) => return Ok((tmp, f)),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => last = Some(e),
            Err(e) => return Err(WriteError::io(&dir.join(name), e)),
        }
    }
    Err(WriteError::io(
        &dir.join(name),
        last.unwrap_or_else(|| io::Error::other("no free temporary name")),
    ))
}

/// Make a folder's entries (a new or renamed file) durable. Some file systems cannot sync a
/// folder; the data itself was synced, so that is not an error.
pub fn sync_dir(dir: &Path) -> io::Result<()> {
    let dir = if dir.as_os_str().is_empty() {
        Path::new(".")
    } else {
        dir
    };
    match File::open(dir).and_then(|d| d.sync_all()) {
        Err(e)
            if matches!(
                e.kind(),
                io::ErrorKind::InvalidInput | io::ErrorKind::Unsupported
            ) =>
        {
            Ok(())
        }
        r => r,
    }
}

/// The effective user id of this process.
pub fn current_uid() -> u32 {
    // SAFETY: geteuid has no preconditions and cannot fail.
    unsafe { libc::geteuid() }
}

/// Why a file owned by someone else, sitting in a folder anyone can write, must not be taken
/// as ours: anyone could have put it there. `None` when the file is ours or the folder is
/// not world-writable.
pub fn owner_problem(file: &std::fs::Metadata, folder: &std::fs::Metadata) -> Option<String> {
    let me = current_uid();
    if file.uid() == me || folder.mode() & 0o002 == 0 {
        return None;
    }
    Some(format!(
        "belongs to another user (uid {}) and sits in a folder anyone can write, so anyone \
         could have put it there; move the session to a folder that is not world-writable, \
         or ask that user to check and remove the file",
        file.uid()
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::os::unix::fs::symlink;

    #[test]
    fn a_symlink_at_the_target_is_replaced_not_written_through() {
        let tmp = tempfile::tempdir().unwrap();
        let victim = tmp.path().join("victim.txt");
        std::fs::write(&victim, "precious").unwrap();
        let out = tmp.path().join("out.csv");
        symlink(&victim, &out).unwrap();
        replace_file(&out, b"a,b\n").unwrap();
        assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");
        assert!(std::fs::symlink_metadata(&out).unwrap().is_file());
        assert_eq!(std::fs::read_to_string(&out).unwrap(), "a,b\n");
    }

    #[test]
    fn a_hard_link_keeps_its_other_name_and_permissions_carry_over() {
        let tmp = tempfile::tempdir().unwrap();
        let other = tmp.path().join("other.csv");
        std::fs::write(&other, "old").unwrap();
        let out = tmp.path().join("out.csv");
        std::fs::hard_link(&other, &out).unwrap();
        std::fs::set_permissions(&out, std::fs::Permissions::from_mode(0o640)).unwrap();
        replace_file(&out, b"new").unwrap();
        assert_eq!(std::fs::read_to_string(&other).unwrap(), "old");
        assert_eq!(std::fs::read_to_string(&out).unwrap(), "new");
        let mode = std::fs::metadata(&out).unwrap().mode() & 0o777;
        assert_eq!(mode, 0o640);
    }

    #[test]
    fn a_failed_write_leaves_the_target_and_no_temporary_file() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out.csv");
        std::fs::write(&out, "before").unwrap();
        let e = replace_with(&out, |_| Err(io::Error::other("disk on fire"))).unwrap_err();
        assert!(
            e.to_string()
                .contains("out.csv: cannot write: disk on fire"),
            "{e}"
        );
        assert_eq!(std::fs::read_to_string(&out).unwrap(), "before");
        let names: Vec<_> = std::fs::read_dir(tmp.path()).unwrap().collect();
        assert_eq!(names.len(), 1, "temporary file left behind");
    }

    #[test]
    fn devices_and_fifos_are_written_into_not_replaced() {
        use std::os::unix::fs::FileTypeExt;
        replace_file(Path::new("/dev/null"), b"gone\n").unwrap();
        let t = std::fs::symlink_metadata("/dev/null").unwrap().file_type();
        assert!(t.is_char_device(), "/dev/null was replaced");
        let tmp = tempfile::tempdir().unwrap();
        let fifo = tmp.path().join("pipe");
        let made = std::process::Command::new("mkfifo").arg(&fifo).status();
        assert!(made.unwrap().success());
        let reader = {
            let fifo = fifo.clone();
            std::thread::spawn(move || std::fs::read_to_string(fifo).unwrap())
        };
        replace_file(&fifo, b"through the pipe").unwrap();
        assert_eq!(reader.join().unwrap(), "through the pipe");
        assert!(std::fs::symlink_metadata(&fifo)
            .unwrap()
            .file_type()
            .is_fifo());
    }

    #[test]
    fn a_folder_at_the_target_is_refused() {
        let tmp = tempfile::tempdir().unwrap();
        let e = replace_file(tmp.path(), b"x").unwrap_err().to_string();
        assert!(e.contains("is a folder"), "{e}");
    }
}
