//! The progress bar of `trialdesk fit`: indicatif on stderr, only on a terminal.

use crate::fit::Progress;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::io::IsTerminal;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

/// indicatif bar that stays hidden until the job has run for a second, and only on a terminal.
pub(super) struct Bar {
    bar: ProgressBar,
    start: Instant,
    pub(super) terminal: bool,
    shown: AtomicBool,
}

impl Bar {
    pub(super) fn new() -> Self {
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::hidden());
        if let Ok(style) =
            ProgressStyle::with_template("{msg:>18} [{bar:30}] {pos}/{len} {elapsed}")
        {
            bar.set_style(style.progress_chars("=> "));
        }
        Bar {
            bar,
            start: Instant::now(),
            terminal: std::io::stderr().is_terminal(),
            shown: AtomicBool::new(false),
        }
    }
    pub(super) fn finish(&self) {
        self.bar.finish_and_clear();
    }
    /// Draw from now on (a cohort run: the first subject may take minutes to tick).
    pub(super) fn show_now(&self) {
        if self.terminal && !self.shown.swap(true, Ordering::Relaxed) {
            self.bar.set_draw_target(ProgressDrawTarget::stderr());
            self.bar.enable_steady_tick(Duration::from_millis(500));
        }
    }
}

impl Progress for Bar {
    fn phase(&self, name: &str, total: u64) {
        self.bar
            .set_message(crate::cli::out::text(name).into_owned());
        if total > 0 {
            self.bar.set_length(total);
        } else {
            self.bar.unset_length();
        }
        self.bar.set_position(0);
    }
    fn tick(&self) {
        self.bar.inc(1);
        if self.terminal
            && self.start.elapsed() > Duration::from_secs(1)
            && !self.shown.swap(true, Ordering::Relaxed)
        {
            self.bar.set_draw_target(ProgressDrawTarget::stderr());
        }
    }
}
