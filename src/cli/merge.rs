//! `trialdesk merge DIR --out FILE`: join the per-subject tables of a cohort fit
//! (`DIR/<subject>/params.csv`) into one tidy CSV with a `subject` column; `--batch-example`
//! prints an example Slurm job-array script for a sharded cohort fit.

use super::{CliError, CmdResult};
use crate::cohort::{merge, SLURM_EXAMPLE};
use std::io::Write;
use std::path::PathBuf;

#[derive(clap::Args, Debug)]
#[command(
    after_help = "A cohort fit writes one folder per subject (trialdesk fit COHORT --out DIR, \
or one shard per cluster task with --shard K/N). Run merge once every task has finished; \
sub-folders without the table are listed as missing on stderr."
)]
pub struct Args {
    /// Folder of per-subject result folders (DIR/<subject>/params.csv)
    #[arg(required_unless_present = "batch_example")]
    pub dir: Option<PathBuf>,
    /// Which per-subject table to merge
    #[arg(long, default_value = "params.csv", value_name = "FILE_NAME")]
    pub table: String,
    /// Write the merged table here instead of standard output
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Print an example Slurm job-array script (one shard per task, then merge) and exit
    #[arg(long, conflicts_with_all = ["dir", "out"])]
    pub batch_example: bool,
}

fn to_stdout(bytes: &[u8]) -> CmdResult {
    let mut out = super::out::stdout();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(0),
    }
}

pub fn run(args: Args) -> CmdResult {
    if args.batch_example {
        return to_stdout(SLURM_EXAMPLE.as_bytes());
    }
    let Some(dir) = args.dir else {
        return Err(CliError::usage("merge needs DIR (or --batch-example)"));
    };
    if args.table.contains(['/', '\\']) || args.table.is_empty() {
        return Err(CliError::usage(format!(
            "--table '{}' must be a file name such as params.csv or trials.csv",
            args.table
        )));
    }
    if !dir.is_dir() {
        return Err(CliError::failed(format!("{}: not a folder", dir.display())));
    }
    let merged =
        merge::merge_tables(&dir, &args.table).map_err(|e| CliError::failed(e.to_string()))?;
    if !merged.missing.is_empty() {
        eprintln!(
            "trialdesk: warning: {} sub-folder(s) of {} have no {}: {}",
            merged.missing.len(),
            dir.display(),
            args.table,
            merged.missing.join(", ")
        );
    }
    let text = merge::to_csv(&merged).map_err(|e| CliError::failed(e.to_string()))?;
    match &args.out {
        Some(path) => {
            crate::safe_write::replace_file(path, text.as_bytes())
                .map_err(|e| CliError::failed(e.to_string()))?;
            eprintln!(
                "merged {} of {} subject(s), {} row(s) into {}",
                merged.subjects.len(),
                merged.subjects.len() + merged.missing.len(),
                merged.rows.len(),
                path.display()
            );
            Ok(0)
        }
        None => to_stdout(text.as_bytes()),
    }
}
