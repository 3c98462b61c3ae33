//! `trialdesk completions SHELL` and `trialdesk man`: shell completion scripts and manual
//! pages generated from the one clap command definition, so they never drift from `--help`.

use super::{CliError, CmdResult};
use clap::CommandFactory;
use std::io::Write;
use std::path::PathBuf;

#[derive(clap::Args, Debug)]
#[command(after_help = "Install, for example:\n  \
bash: trialdesk completions bash > ~/.local/share/bash-completion/completions/trialdesk\n  \
zsh:  trialdesk completions zsh > ~/.zfunc/_trialdesk   (with fpath+=~/.zfunc before compinit)\n  \
fish: trialdesk completions fish > ~/.config/fish/completions/trialdesk.fish")]
pub struct Args {
    /// Shell to write the completion script for
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

#[derive(clap::Args, Debug)]
#[command(after_help = "Read it without installing: trialdesk man | man -l -\n\
Install: trialdesk man --out ~/.local/share/man/man1")]
pub struct ManArgs {
    /// Write trialdesk.1 and one page per command (trialdesk-fit.1, ...) into this folder
    /// (created if needed) instead of printing trialdesk.1 to standard output
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
}

/// Write `bytes` to stdout; a closed pipe (`| head`) is not an error.
fn to_stdout(bytes: &[u8]) -> CmdResult {
    let mut out = super::out::stdout();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(0),
    }
}

/// The completion script for `shell`, as text.
pub fn completion_script(shell: clap_complete::Shell) -> Vec<u8> {
    let mut cmd = super::Cli::command();
    let mut buf = Vec::new();
    clap_complete::generate(shell, &mut cmd, "trialdesk", &mut buf);
    buf
}

/// The top-level manual page (roff), listing every command.
pub fn man_page() -> Result<Vec<u8>, std::io::Error> {
    let mut buf = Vec::new();
    clap_mangen::Man::new(super::Cli::command()).render(&mut buf)?;
    Ok(buf)
}

/// One page per command and subcommand (as `clap_mangen::generate_to` lays them out), each
/// written with [`crate::safe_write::replace_with`].
fn write_pages(cmd: &clap::Command, dir: &std::path::Path) -> Result<(), CliError> {
    for sub in cmd.get_subcommands().filter(|s| !s.is_hide_set()) {
        write_pages(sub, dir)?;
    }
    let man = clap_mangen::Man::new(cmd.clone());
    crate::safe_write::replace_with(&dir.join(man.get_filename()), |w| man.render(w))
        .map_err(|e| CliError::failed(e.to_string()))
}

pub fn run(args: Args) -> CmdResult {
    to_stdout(&completion_script(args.shell))
}

pub fn run_man(args: ManArgs) -> CmdResult {
    match args.out {
        None => to_stdout(&man_page()?),
        Some(dir) => {
            crate::safe_write::create_dirs(&dir).map_err(|e| CliError::failed(e.to_string()))?;
            let mut cmd = super::Cli::command().disable_help_subcommand(true);
            cmd.build();
            write_pages(&cmd, &dir)?;
            eprintln!(
                "wrote {} (and one page per command beside it)",
                dir.join("trialdesk.1").display()
            );
            Ok(0)
        }
    }
}
