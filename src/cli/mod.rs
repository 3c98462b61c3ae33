//! The command-line shell: parses arguments (clap), calls the library, maps outcomes to exit
//! codes (0 success, 1 invalid data or failed job, 2 usage error). Each command lives in its
//! own file with its own `Args` struct and `run`.
//!
//! `println!` and `eprintln!` inside `cli` are the two macros below, not std's: they send the
//! text through [`out::text`], so the global `--ascii` covers every line a command prints.
//! Results streamed to standard output go through [`out::stdout`].

/// std's `println!`, in ASCII spelling under `--ascii` (see [`out`]).
macro_rules! println {
    () => { std::println!() };
    ($($arg:tt)*) => { std::println!("{}", $crate::cli::out::text(&std::format!($($arg)*))) };
}

/// std's `eprintln!`, in ASCII spelling under `--ascii` (see [`out`]).
macro_rules! eprintln {
    () => { std::eprintln!() };
    ($($arg:tt)*) => { std::eprintln!("{}", $crate::cli::out::text(&std::format!($($arg)*))) };
}

pub mod check;
pub mod completions;
pub mod fit;
pub mod marks;
pub mod merge;
pub mod model;
pub mod obs_args;
pub mod out;
pub mod plot;
pub mod review;
pub mod simulate;
pub mod summary;

use clap::{Parser, Subcommand};
use std::fmt;

#[derive(Parser, Debug)]
#[command(
    name = "trialdesk",
    version,
    about = "Review, mark and model Pavlovian conditioning sessions recorded with dopamine activity"
)]
pub struct Cli {
    /// Plain ASCII output: no box-drawing or block characters in the reviewer, and Greek
    /// letters, dashes and signs spelled out (dF/F, alpha, R^2, >=) in everything printed
    #[arg(long, global = true)]
    pub ascii: bool,
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Step through trials in the terminal, mark and annotate them
    Review(review::Args),
    /// Fit the TD model across all sessions of a subject, honouring marks
    Fit(fit::Args),
    /// Evaluate the model at given parameters and write per-bin traces
    Model(model::Args),
    /// Validate data files; every problem as file:line: what is wrong
    Check(check::Args),
    /// Write a synthetic subject from a known model
    Simulate(simulate::Args),
    /// Print or export the current marks of a session or subject
    Marks(marks::Args),
    /// Per-day learning table as text, tidy CSV or Markdown
    Summary(summary::Args),
    /// Write SVG pictures: learning curves, fit per trial, session heat maps
    Plot(plot::Args),
    /// Join per-subject result tables of a cohort fit into one tidy CSV
    Merge(merge::Args),
    /// Print a shell completion script (bash, zsh, fish, powershell, elvish)
    Completions(completions::Args),
    /// Print or write the manual page (trialdesk.1)
    Man(completions::ManArgs),
}

/// A failed command: its exit code and the message for stderr.
#[derive(Debug)]
pub struct CliError {
    pub code: i32,
    pub message: String,
}

impl CliError {
    /// Invalid data or a failed job (exit 1).
    pub fn failed(message: impl Into<String>) -> Self {
        CliError {
            code: 1,
            message: message.into(),
        }
    }
    /// A usage error (exit 2).
    pub fn usage(message: impl Into<String>) -> Self {
        CliError {
            code: 2,
            message: message.into(),
        }
    }
}

impl fmt::Display for CliError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl From<std::io::Error> for CliError {
    fn from(e: std::io::Error) -> Self {
        CliError::failed(e.to_string())
    }
}

/// What a command returns: `Ok(code)` (0, or 1 for "ran, found problems").
pub type CmdResult = Result<i32, CliError>;

/// Entry point of the binary; returns the process exit code.
pub fn main() -> i32 {
    run_args(std::env::args_os())
}

/// Run one command line (`args` starts with the program name) in this process and return its
/// exit code; the binary's `main`, and tests that run thousands of commands (the reliability
/// suite's fuzzer), share it.
pub fn run_args<I, T>(args: I) -> i32
where
    I: IntoIterator<Item = T>,
    T: Into<std::ffi::OsString> + Clone,
{
    let args: Vec<std::ffi::OsString> = args.into_iter().map(Into::into).collect();
    // Known before parsing, so help and usage errors are ASCII too.
    let ascii = args
        .iter()
        .skip(1)
        .take_while(|a| *a != "--")
        .any(|a| a == "--ascii");
    out::set_ascii(ascii);
    let cli = match Cli::try_parse_from(args) {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            if ascii {
                let text = e.render().to_string();
                if e.use_stderr() {
                    std::eprint!("{}", out::text(&text));
                } else {
                    std::print!("{}", out::text(&text));
                }
            } else {
                let _ = e.print();
            }
            return code;
        }
    };
    out::set_ascii(cli.ascii);
    let result = match cli.command {
        Command::Review(mut a) => {
            a.ascii = cli.ascii;
            review::run(a)
        }
        Command::Fit(a) => fit::run(a),
        Command::Model(a) => model::run(a),
        Command::Check(a) => check::run(a),
        Command::Simulate(a) => simulate::run(a),
        Command::Marks(a) => marks::run(a),
        Command::Summary(a) => summary::run(a),
        Command::Plot(a) => plot::run(a),
        Command::Merge(a) => merge::run(a),
        Command::Completions(a) => completions::run(a),
        Command::Man(a) => completions::run_man(a),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            // Messages quote paths and values from the data: no escape sequences through.
            eprintln!("trialdesk: {}", crate::text::for_text(&e.message));
            e.code
        }
    }
}
