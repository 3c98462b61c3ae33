//! `trialdesk review`: load the data, settle reviewer, reasons and keys, then hand over to the
//! terminal reviewer (`crate::tui`).

use super::obs_args::ObsArgs;
use super::{CliError, CmdResult};
use crate::data;
use crate::tui::derived::ModelSettings;
use crate::tui::follow::Follower;
use crate::tui::input::TtyInput;
use crate::tui::keymap::{Keymap, SHIPPED};
use crate::tui::state::{Options, Tone, DEFAULT_REASONS};
use crate::tui::{app, config, terminal, update};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

#[derive(clap::Args, Debug)]
#[command(
    after_help = "Keys come from keymaps/default.toml, then keymap.toml in the config \
folder (Linux: ~/.config/trialdesk/), then --keymap. config.toml there may set \
reviewer = \"name\" and reasons = [...]. NO_COLOR turns colour off."
)]
pub struct Args {
    /// A subject folder or one session folder
    pub path: PathBuf,
    /// A keymap file laid over the others, or a shipped layout name (default, one_handed)
    #[arg(long, value_name = "FILE")]
    pub keymap: Option<String>,
    /// Plain ASCII drawing: set from the global `--ascii`
    #[arg(skip)]
    pub ascii: bool,
    /// Name for the reviewer column (default: config.toml's reviewer, else the login name)
    #[arg(long, value_name = "NAME")]
    pub reviewer: Option<String>,
    /// Show rows the rig appends to the last session while it records (polled every second)
    #[arg(long)]
    pub follow: bool,
    #[command(flatten)]
    pub obs: ObsArgs,
}

fn read_layer(path: &Path) -> Result<(String, String), CliError> {
    let text = crate::util::read_settings(path)
        .map_err(|e| CliError::failed(format!("{}: {e}", path.display())))?;
    Ok((path.display().to_string(), text))
}

/// The keymap in force: default, then the user's keymap.toml, then `--keymap`.
pub fn keymap_for(cfg_dir: Option<&Path>, flag: Option<&str>) -> Result<Keymap, CliError> {
    let mut layers = Vec::new();
    if let Some(dir) = cfg_dir {
        let user = dir.join("keymap.toml");
        if user.is_file() {
            layers.push(read_layer(&user)?);
        }
    }
    if let Some(k) = flag {
        if SHIPPED.iter().any(|(n, _)| *n == k) && !Path::new(k).exists() {
            layers.push((format!("--keymap {k}"), format!("layout = \"{k}\"\n")));
        } else if Path::new(k).is_file() {
            layers.push(read_layer(Path::new(k))?);
        } else {
            return Err(CliError::usage(format!(
                "--keymap {k}: no such file, and not a shipped layout (default, one_handed)"
            )));
        }
    }
    Keymap::build(&layers).map_err(|e| CliError::failed(format!("keymap: {e}")))
}

/// The reviewer shows one subject: a cohort folder is refused with the command that opens each
/// of its subjects, before any terminal is needed. A cohort folder is what `summary` takes as
/// one ([`crate::summary::cohort::cohort_subject_dirs`]: sub-folders whose sessions name at
/// least two animals), so a subject folder that groups its sessions by month still opens.
fn cohort_refusal(path: &Path) -> Result<(), CliError> {
    let Some(subjects) = crate::summary::cohort::cohort_subject_dirs(path) else {
        return Ok(());
    };
    let shown: Vec<String> = subjects
        .iter()
        .take(8)
        .map(|s| format!("  trialdesk review {}", s.display()))
        .collect();
    let more = match subjects.len().saturating_sub(shown.len()) {
        0 => String::new(),
        n => format!("\n  ... and {n} more"),
    };
    Err(CliError::usage(format!(
        "{} is a cohort folder of {} subject(s); the reviewer opens one subject at a time:\n{}{more}\n\
         (`trialdesk summary`, `fit` and `plot` take the whole cohort folder)",
        path.display(),
        subjects.len(),
        shown.join("\n"),
    )))
}

pub fn run(args: Args) -> CmdResult {
    let cfg_dir = config::config_dir();
    let cfg = match &cfg_dir {
        Some(d) => config::load(d).map_err(|e| CliError::failed(e.to_string()))?,
        None => config::Config::default(),
    };
    let keymap = keymap_for(cfg_dir.as_deref(), args.keymap.as_deref())?;
    let reviewer = args
        .reviewer
        .or(cfg.reviewer)
        .unwrap_or_else(crate::marks::reviewer_name);
    let caps = crate::tui::caps::from_env();
    let opts = Options {
        // The terminal's capabilities: no colour codes for a vt100, no UTF-8 for a C locale.
        ascii: args.ascii || !caps.unicode,
        color: caps.color,
        reviewer,
        reasons: cfg
            .reasons
            .unwrap_or_else(|| DEFAULT_REASONS.iter().map(|s| s.to_string()).collect()),
    };
    cohort_refusal(&args.path)?;
    if !std::io::stdout().is_terminal() || !std::io::stdin().is_terminal() {
        return Err(CliError::usage(
            "review needs an interactive terminal (for lists use `trialdesk marks` or `trialdesk summary`)",
        ));
    }
    let report = |f: data::LoadFailure| {
        let lines: Vec<String> = f.diagnostics.iter().map(|d| d.to_string()).collect();
        CliError::failed(lines.join("\n"))
    };
    // A session inside a subject folder is reviewed with its subject's history.
    let sc = crate::plan::scope(&args.path);
    let mut only = sc.session.clone();
    let mut scope_note = sc.note.clone();
    let mut left_out = Vec::new();
    let mut load = |p: &Path| {
        data::load_partial(p).map(|partial| {
            left_out = partial.left_out;
            partial.loaded
        })
    };
    let loaded = match load(&sc.root) {
        Ok(l) => l,
        Err(f) if only.is_some() => {
            only = None;
            let why = format!(
                "{} problem(s); `trialdesk check {}` lists them",
                f.diagnostics.iter().filter(|d| d.is_error()).count(),
                sc.root.display()
            );
            scope_note = Some(crate::plan::fallback_note(&args.path, &why));
            load(&args.path).map_err(report)?
        }
        Err(f) => return Err(report(f)),
    };
    // One bad day does not keep the others from being reviewed; say which day and why.
    let left_out_note = left_out.first().map(|(dir, first)| {
        format!(
            "{} session(s) left out, their files have errors (first: {}); the model learns \
             without them; `trialdesk check {}` lists every problem",
            left_out.len(),
            first,
            dir.display()
        )
    });
    if loaded.subject.sessions.is_empty() {
        return Err(CliError::failed(format!(
            "{}: no session folders (a session folder holds session.toml)",
            args.path.display()
        )));
    }
    // The same plan as every command: a saved fit that fails its check, or flags that do not
    // fit the data, stop here, before the terminal is taken over.
    let mut settings = ModelSettings::from_subject(&loaded.subject.root)?;
    settings.request = args.obs.request();
    let planned =
        crate::plan::measurement(&loaded.subject, &settings.request, settings.saved.as_ref());
    if let Err(e) = planned {
        match e {
            crate::plan::PlanError::NoActivity(_) => {
                eprintln!("trialdesk: warning: {e}; reviewing licks and marks only")
            }
            e => return Err(e.into()),
        }
    }
    // A broken suggest.toml should not keep anyone from reviewing: shipped rules, and say so.
    let (rules, rules_problem) = match crate::suggest::RuleSet::load_user() {
        Ok((rules, _)) => (rules, None),
        Err(e) => (
            crate::suggest::RuleSet::default(),
            Some(format!("{e}; using the shipped suggestion rules")),
        ),
    };
    let follow_settings = args.follow.then(|| settings.clone());
    let mut state = app::start_state(loaded.subject, opts, keymap, &settings, rules);
    if let Some(i) = only
        .as_ref()
        .and_then(|n| state.subject.sessions.iter().position(|s| &s.name == n))
    {
        update::open_session(&mut state, i);
    }
    // The newest session in training order is the one being recorded.
    let follower = match follow_settings {
        Some(settings) => {
            let last = state.subject.sessions.len() - 1;
            crate::tui::update::open_session(&mut state, last);
            let f = Follower::start(last, &state.subject.sessions[last], settings)
                .map_err(|e| CliError::failed(format!("--follow: {e}")))?;
            Some(f)
        }
        None => None,
    };
    // Start-up messages, most important last: it is the one that stays on the status line.
    if !loaded.warnings.is_empty() {
        let text = format!(
            "{} data warning(s); `trialdesk check {}` lists them",
            loaded.warnings.len(),
            args.path.display()
        );
        update::notice(&mut state, text, Tone::Warn);
    }
    if let Some(n) = scope_note {
        let tone = if only.is_some() {
            Tone::Info
        } else {
            Tone::Warn
        };
        update::notice(&mut state, n, tone);
    }
    if let Some(p) = rules_problem {
        update::notice(&mut state, p, Tone::Warn);
    }
    if let Some(n) = left_out_note {
        update::notice(&mut state, n, Tone::Error);
    }
    if let Some(f) = &follower {
        // While recording, the caution matters more than older warnings.
        update::notice(&mut state, f.status_text(), Tone::Warn);
    }
    let stop = terminal::watch_signals()?;
    let mut input = TtyInput::stdin()?;
    let (mut term, guard) = terminal::enter()?;
    let result = app::run_loop(&mut term, &mut input, &mut state, &stop, follower);
    drop(term);
    drop(guard);
    // Whatever ended the loop (quit, a signal, a terminal that went away), marks not yet in
    // marks.csv are written now, before any error is reported.
    let rescued = rescue_unsaved(&mut state);
    match (result, rescued) {
        (Ok(()), None) => Ok(0),
        (Ok(()), Some(lines)) => Err(CliError::failed(lines)),
        (Err(e), None) => Err(CliError::failed(e.to_string())),
        (Err(e), Some(lines)) => Err(CliError::failed(format!("{e}\n{lines}"))),
    }
}

/// One last try for rows whose append failed while reviewing; rows that still cannot go into
/// their session's marks.csv are saved elsewhere. Returns the lines that tell the user where.
fn rescue_unsaved(state: &mut crate::tui::state::State) -> Option<String> {
    crate::tui::update::update(state, crate::tui::Action::RefreshMarks);
    let unsaved: usize = state.sessions.iter().map(|s| s.marks.unsaved.len()).sum();
    if unsaved > 0 {
        let base = directories::ProjectDirs::from("", "", "trialdesk")
            .map_or_else(std::env::temp_dir, |d| d.data_dir().to_path_buf())
            .join("unsaved-marks");
        let mut lines = vec![format!(
            "{unsaved} mark row(s) could not be written to the data folder's marks.csv:"
        )];
        for (session, result) in save_unsaved_elsewhere(state, &base) {
            lines.push(match result {
                Ok(file) => format!(
                    "  {}: kept in {} (same columns: append its rows, without the header, \
                     to {}/marks.csv once the folder is writable)",
                    session.display(),
                    file.display(),
                    session.display()
                ),
                Err(e) => format!(
                    "  {}: LOST, could not save elsewhere either: {e}",
                    session.display()
                ),
            });
        }
        return Some(lines.join("\n"));
    }
    None
}

/// Journal rows that could not be appended in their session folder (read-only, full disk),
/// appended instead to a journal of their own under `base` (one folder per session and
/// time), so a reviewer's work outlives an unwritable data folder. Returns, per session with
/// such rows, the session folder and the file written (or why not).
pub fn save_unsaved_elsewhere(
    state: &crate::tui::state::State,
    base: &Path,
) -> Vec<(PathBuf, Result<PathBuf, String>)> {
    let stamp = crate::marks::now_rfc3339().replace(':', "-");
    let mut out = Vec::new();
    for (i, m) in state.sessions.iter().map(|s| &s.marks).enumerate() {
        if m.unsaved.is_empty() {
            continue;
        }
        let session = &state.subject.sessions[i];
        let dir = base.join(format!(
            "{}-{stamp}",
            session.name.replace(['/', '\\'], "_")
        ));
        let file = dir.join(crate::marks::MARKS_FILE);
        // A folder of its own, written whole: the base may be a shared temporary folder, so
        // nothing there is followed or appended to (`safe_write`).
        let result = crate::marks::journal_text(&m.unsaved)
            .map_err(|e| e.to_string())
            .and_then(|text| {
                crate::safe_write::create_dirs(&dir)
                    .and_then(|_| crate::safe_write::replace_file(&file, text.as_bytes()))
                    .map_err(|e| e.to_string())
            })
            .map(|_| file);
        out.push((session.dir.clone(), result));
    }
    out
}
