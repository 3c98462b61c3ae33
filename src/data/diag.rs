//! Problems found in data files, each pointing at a file, a line and a column.

use std::fmt;
use std::path::PathBuf;

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Severity {
    Error,
    Warning,
}

/// One problem: `file:line: column: message (expected ...)`.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostic {
    pub severity: Severity,
    pub file: PathBuf,
    /// 1-based line in the file (the header is line 1); `None` for whole-file problems.
    pub line: Option<u64>,
    pub column: Option<String>,
    pub message: String,
    pub expected: Option<String>,
}

impl Diagnostic {
    pub fn error(file: impl Into<PathBuf>, message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Error,
            file: file.into(),
            line: None,
            column: None,
            message: message.into(),
            expected: None,
        }
    }
    pub fn warning(file: impl Into<PathBuf>, message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Warning,
            ..Diagnostic::error(file, message)
        }
    }
    pub fn at_line(mut self, line: u64) -> Self {
        self.line = Some(line);
        self
    }
    pub fn column(mut self, column: impl Into<String>) -> Self {
        self.column = Some(column.into());
        self
    }
    pub fn expected(mut self, expected: impl Into<String>) -> Self {
        self.expected = Some(expected.into());
        self
    }
    pub fn is_error(&self) -> bool {
        self.severity == Severity::Error
    }
}

impl fmt::Display for Diagnostic {
    /// Paths and quoted values come from the data: control characters are printed escaped.
    fn fmt(&self, out: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut text = String::new();
        self.write_raw(&mut text)?;
        out.write_str(&crate::text::for_text(&text))
    }
}

impl Diagnostic {
    fn write_raw(&self, f: &mut String) -> fmt::Result {
        use std::fmt::Write;
        write!(f, "{}", self.file.display())?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
        }
        write!(f, ": ")?;
        if self.severity == Severity::Warning {
            write!(f, "warning: ")?;
        }
        if let Some(col) = &self.column {
            write!(f, "{col}: ")?;
        }
        write!(f, "{}", self.message)?;
        if let Some(exp) = &self.expected {
            write!(f, " (expected {exp})")?;
        }
        Ok(())
    }
}
