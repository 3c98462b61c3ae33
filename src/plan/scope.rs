//! What a folder given on the command line stands for. A session folder inside a subject
//! folder is analysed with its subject's history: the model learns across every earlier
//! session, so a session modelled alone starts from untrained weights and predicts as if the
//! animal had never seen the cue.

use crate::data::meta::SESSION_FILE;
use std::path::{Path, PathBuf};

/// The folder to load, the one session of it that was asked for, and what to tell the user.
#[derive(Debug, Clone, PartialEq)]
pub struct Scope {
    /// Load this folder (the subject folder when a session has a history).
    pub root: PathBuf,
    /// The session folder name that was asked for, when a session was given.
    pub session: Option<String>,
    /// Said on stderr or the status line when a session was given.
    pub note: Option<String>,
}

/// A session folder whose parent holds other sessions (or the subject's saved fit) is read
/// with that history; any other folder is itself.
pub fn scope(path: &Path) -> Scope {
    let alone = |note: Option<String>| Scope {
        root: path.to_path_buf(),
        session: None,
        note,
    };
    if !path.join(SESSION_FILE).is_file() {
        return alone(None);
    }
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let siblings = if parent.join(SESSION_FILE).is_file() {
        Vec::new()
    } else {
        crate::data::load::session_dirs(&parent, &mut Vec::new())
    };
    let has_fit = crate::fit::saved::saved_path(&parent).is_file();
    if siblings.len() >= 2 || (has_fit && siblings.len() == 1) {
        return Scope {
            note: Some(format!(
                "{name}: read with its subject's history ({} session(s) in {}); the model \
                 learns across every earlier session",
                siblings.len(),
                parent.display()
            )),
            root: parent,
            session: Some(name),
        };
    }
    alone(Some(format!(
        "{}: a session on its own: the model starts untrained (no earlier sessions beside it), \
         so its value and δ are those of a first day",
        path.display()
    )))
}

/// The note for a session that was read alone after its subject failed to load.
pub fn fallback_note(path: &Path, why: &str) -> String {
    format!(
        "{}: its subject's other sessions did not load ({why}); read alone, the model starts \
         untrained",
        path.display()
    )
}
