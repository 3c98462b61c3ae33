//! Creating output folders without following a planted symbolic link.

use super::{current_uid, WriteError};
use std::io;
use std::os::unix::fs::MetadataExt;
use std::path::{Component, Path, PathBuf};

/// Create `path` and its missing parents, like `create_dir_all`, except that a component which
/// already exists as a symbolic link is followed only if [`link_is_trusted`]. Otherwise the
/// link could have been planted by someone else to send the output (and the folders created
/// for it) anywhere this user can write.
pub fn create_dirs(path: &Path) -> Result<(), WriteError> {
    let mut prefix = PathBuf::new();
    for comp in path.components() {
        prefix.push(comp);
        if matches!(
            comp,
            Component::Prefix(_) | Component::RootDir | Component::CurDir
        ) {
            continue;
        }
        settle(&prefix)?;
    }
    Ok(())
}

/// Make sure `dir` is a folder (creating it when absent) reached without an untrusted link.
fn settle(dir: &Path) -> Result<(), WriteError> {
    // A second pass only when another process created the folder between the look and mkdir.
    for _ in 0..2 {
        match std::fs::symlink_metadata(dir) {
            Ok(m) if m.is_dir() => return Ok(()),
            Ok(m) if m.file_type().is_symlink() => {
                if !link_is_trusted(dir, &m) {
                    let target = std::fs::read_link(dir)
                        .map(|t| t.display().to_string())
                        .unwrap_or_else(|_| "?".into());
                    return Err(WriteError::refused(
                        dir,
                        format!(
                            "is a symbolic link to {target} made by another user (uid {}); \
                             trialdesk does not write output through a link someone else could \
                             have planted. If that is where the output belongs, give the real \
                             folder ({target}); otherwise remove the link or choose another folder",
                            m.uid()
                        ),
                    ));
                }
                return match std::fs::metadata(dir) {
                    Ok(t) if t.is_dir() => Ok(()),
                    Ok(_) => Err(WriteError::refused(
                        dir,
                        "is a link to something that is not a folder",
                    )),
                    Err(e) if e.kind() == io::ErrorKind::NotFound => Err(WriteError::refused(
                        dir,
                        "is a link to a folder that does not exist; trialdesk does not create \
                         folders at a link's target",
                    )),
                    Err(e) => Err(WriteError::io(dir, e)),
                };
            }
            Ok(_) => return Err(WriteError::refused(dir, "exists and is not a folder")),
            Err(e) if e.kind() == io::ErrorKind::NotFound => {
                // mkdir never follows a link at its last component: it fails with EEXIST.
                match std::fs::create_dir(dir) {
                    Ok(()) => return Ok(()),
                    Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
                    Err(e) => return Err(WriteError::io(dir, e)),
                }
            }
            Err(e) => return Err(WriteError::io(dir, e)),
        }
    }
    Err(WriteError::refused(
        dir,
        "kept changing while the folder was being created",
    ))
}

/// A symbolic link is trusted when it belongs to this user, to root, or to the owner of the
/// folder it sits in (only they, or someone they let write there, could have made it; the same
/// rule as Linux's `fs.protected_symlinks` applies in sticky world-writable folders — common
/// practice).
pub fn link_is_trusted(link: &Path, meta: &std::fs::Metadata) -> bool {
    let owner = meta.uid();
    if owner == current_uid() || owner == 0 {
        return true;
    }
    let folder = match link.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    std::fs::metadata(folder).is_ok_and(|f| f.uid() == owner)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::os::unix::fs::symlink;

    #[test]
    fn creates_nested_folders_and_accepts_existing_ones() {
        let tmp = tempfile::tempdir().unwrap();
        let deep = tmp.path().join("a/b/c");
        create_dirs(&deep).unwrap();
        assert!(deep.is_dir());
        create_dirs(&deep).unwrap();
    }

    #[test]
    fn a_file_in_the_way_is_named() {
        let tmp = tempfile::tempdir().unwrap();
        std::fs::write(tmp.path().join("a"), "x").unwrap();
        let e = create_dirs(&tmp.path().join("a/b"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("a: exists and is not a folder"), "{e}");
    }

    #[test]
    fn own_links_are_followed_and_dangling_ones_refused() {
        let tmp = tempfile::tempdir().unwrap();
        std::fs::create_dir(tmp.path().join("real")).unwrap();
        symlink(tmp.path().join("real"), tmp.path().join("mine")).unwrap();
        create_dirs(&tmp.path().join("mine/out")).unwrap();
        assert!(tmp.path().join("real/out").is_dir());
        symlink(tmp.path().join("nowhere"), tmp.path().join("dangling")).unwrap();
        let e = create_dirs(&tmp.path().join("dangling/out"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("does not exist"), "{e}");
        assert!(!tmp.path().join("nowhere").exists());
    }
}
