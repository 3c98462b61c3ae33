//! `trialdesk check`: print every problem as `file:line: column: what (expected ...)`, then
//! the pending suggested marks of each session (information only), then the total line.

use super::{CliError, CmdResult};
use crate::check::{check_with_suggestions, rules_diagnostic, Report};
use crate::data::Diagnostic;
use crate::suggest::{rule_info, RuleSet};
use std::io::{self, Write};
use std::path::PathBuf;

#[derive(clap::Args, Debug)]
pub struct Args {
    /// A subject folder or one session folder
    pub path: PathBuf,
}

/// The user's suggestion rules (`suggest.toml` over the shipped defaults) and the file read;
/// a file that does not parse gives a warning naming its line, and no rules.
pub(super) fn user_rules() -> Result<(RuleSet, Option<PathBuf>), Diagnostic> {
    let Some(dirs) = directories::ProjectDirs::from("", "", "trialdesk") else {
        return Ok((RuleSet::default(), None));
    };
    let dir = dirs.config_dir();
    RuleSet::load_from(dir).map_err(|e| rules_diagnostic(&e))
}

/// Exit 0 when clean or only warnings, 1 when any error was found. Suggested marks never
/// change the exit code.
pub fn run(args: Args) -> CmdResult {
    let rules = user_rules();
    let mut report = check_with_suggestions(&args.path, rules.as_ref().ok().map(|(r, _)| r));
    if let Err(d) = rules {
        report.diagnostics.push(d);
    }
    let (errors, warnings) = (report.errors(), report.warnings());
    let mut text = String::new();
    for d in &report.diagnostics {
        text.push_str(&d.to_string());
        text.push('\n');
    }
    text.push_str(&suggested_section(&report));
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
    let text = crate::text::for_text(&text);
    let mut stdout = super::out::stdout();
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

/// One block per session: `  rule  count  description` lines, or `none`. Empty when no
/// session loaded or the rules could not be read.
fn suggested_section(report: &Report) -> String {
    if report.suggested.is_empty() {
        return String::new();
    }
    let mut out =
        String::from("suggested marks (pending; accept or reject them in `trialdesk review`):\n");
    for s in &report.suggested {
        if s.counts.is_empty() {
            out.push_str(&format!("  {}: none\n", s.dir.display()));
            continue;
        }
        let total: usize = s.counts.iter().map(|(_, n)| n).sum();
        out.push_str(&format!(
            "  {}: {total} suggestion{}\n",
            s.dir.display(),
            plural(total)
        ));
        for (rule, n) in &s.counts {
            let about = rule_info(rule).map_or("", |r| r.description);
            out.push_str(&format!("    {rule:<17} {n:>5}  {about}\n"));
        }
    }
    out
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}
