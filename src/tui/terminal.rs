//! Terminal lifecycle: raw mode and the alternate screen on the way in; on the way out —
//! normal exit, error, panic, SIGTERM or SIGHUP — the terminal is put back.
//!
//! A panic hook restores first, then chains to the previous hook so the message prints on a
//! sane screen. The [`Guard`]'s Drop restores on every other exit and does nothing while
//! panicking (the hook already did it). Signals only raise a flag the event loop checks at
//! least every 250 ms; a second signal ends the process at once. Marks never wait for any of
//! this: each is on disk before the screen calls it saved.

use crossterm::{cursor, execute, terminal};
use ratatui::backend::CrosstermBackend;
use ratatui::Terminal;
use std::io::{self, Stdout};
use std::sync::atomic::AtomicBool;
use std::sync::{Arc, Once};

/// Restores the terminal when dropped (unless panicking: the panic hook does it then).
pub struct Guard;

impl Drop for Guard {
    fn drop(&mut self) {
        if !std::thread::panicking() {
            let _ = restore();
        }
    }
}

/// Leave raw mode and the alternate screen, show the cursor. Safe to call twice.
pub fn restore() -> io::Result<()> {
    let raw = terminal::disable_raw_mode();
    let screen = execute!(io::stdout(), terminal::LeaveAlternateScreen, cursor::Show);
    raw.and(screen)
}

fn install_panic_hook() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            let _ = restore();
            previous(info);
        }));
    });
}

/// Raise `flag` on SIGTERM and SIGHUP (and SIGINT, in case raw mode is off); a second one
/// while the flag is up exits immediately.
pub fn watch_signals() -> io::Result<Arc<AtomicBool>> {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
    let flag = Arc::new(AtomicBool::new(false));
    for sig in [SIGTERM, SIGHUP, SIGINT] {
        signal_hook::flag::register_conditional_shutdown(sig, 1, Arc::clone(&flag))?;
        signal_hook::flag::register(sig, Arc::clone(&flag))?;
    }
    Ok(flag)
}

/// Enter raw mode and the alternate screen (no mouse capture: keys only, SSH-friendly).
pub fn enter() -> io::Result<(Terminal<CrosstermBackend<Stdout>>, Guard)> {
    install_panic_hook();
    terminal::enable_raw_mode()?;
    let guard = Guard;
    execute!(io::stdout(), terminal::EnterAlternateScreen, cursor::Hide)?;
    let term = Terminal::new(CrosstermBackend::new(io::stdout()))?;
    Ok((term, guard))
}
