//! `trialdesk check`: print every problem as `file:line: column: what (expected ...)`.

use super::{CliError, CmdResult};
use crate::check::check_report;
use std::io::{self, Write};
use std::path::PathBuf;

#[derive(clap::Args, Debug)]
pub struct Args {
    /// A subject folder or one session folder
    pub path: PathBuf,
}

/// Exit 0 when clean or only warnings, 1 when any error was found.
pub fn run(args: Args) -> CmdResult {
    let report = check_report(&args.path);
    let (errors, warnings) = (report.errors(), report.warnings());
    let mut text = String::new();
    for d in &report.diagnostics {
        text.push_str(&d.to_string());
        text.push('\n');
    }
    text.push_str(&format!(
        "{}: {} error{}, {} warning{} ({} of {} session{} loaded)\n",
        args.path.display(),
        errors,
        plural(errors),
        warnings,
        plural(warnings),
        report.sessions_loaded,
        report.sessions_found,
        plural(report.sessions_found),
    ));
    let text = crate::util::printable(&text);
    let mut stdout = io::stdout().lock();
    match stdout
        .write_all(text.as_bytes())
        .and_then(|_| stdout.flush())
    {
        Ok(()) => {}
        // `trialdesk check DIR | head` is not a failure.
        Err(e) if e.kind() == io::ErrorKind::BrokenPipe => {}
        Err(e) => return Err(CliError::from(e)),
    }
    Ok(if errors > 0 { 1 } else { 0 })
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}
