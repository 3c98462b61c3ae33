//! Reading a subject or session folder into typed data.

use super::{Diagnostic, Subject};
use std::path::Path;

/// A folder that loaded, with any warnings found on the way.
#[derive(Debug)]
pub struct Loaded {
    pub subject: Subject,
    pub warnings: Vec<Diagnostic>,
}

/// A folder that did not load: every problem found (at least one error).
#[derive(Debug)]
pub struct LoadFailure {
    pub diagnostics: Vec<Diagnostic>,
}

/// Load a subject folder (every sub-folder holding `session.toml`) or one session folder.
pub fn load(path: &Path) -> Result<Loaded, LoadFailure> {
    Err(LoadFailure {
        diagnostics: vec![Diagnostic::error(path, "loader not built yet")],
    })
}
