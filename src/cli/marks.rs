//! `trialdesk marks`.

use super::{CliError, CmdResult};
use std::path::PathBuf;

#[derive(clap::Args, Debug)]
pub struct Args {
    /// A subject folder or one session folder
    pub path: PathBuf,
}

pub fn run(_args: Args) -> CmdResult {
    Err(CliError::failed("not built yet"))
}
