//! Reviewer benchmark: a 1,000-trial session with 64 units and about 2 million spikes.
//!
//! Writes the session to a temp folder, then, in a fresh child process (so the generator's
//! memory does not count), measures:
//! - time to first frame: `data::load` + building the reviewer state (model run, traces,
//!   journals) + drawing the first 80×24 frame through the real crossterm backend;
//! - peak memory (VmHWM from /proc/self/status) after the first frame;
//! - one trial-step key (`j`) handled and its frame drawn, over many steps (median, p99, max),
//!   on the trial screen and on the session screen;
//! - bytes written to the terminal per trial step at 80×24 (the backend writes into a counter).
//!
//! Targets (issue 4): first frame < 300 ms, < 200 MB; step + draw < 5 ms.
//! Run: `cargo bench --bench review`.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use ratatui::backend::CrosstermBackend;
use ratatui::Terminal;
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};
use trialdesk::tui::app;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::keymap::Keymap;
use trialdesk::tui::state::{Options, DEFAULT_REASONS};

const TRIALS: usize = 1000;
const UNITS: usize = 64;
const TRIAL_SPACING_S: f64 = 10.0;
/// 64 units × 3.1 spikes/s × 10,000 s ≈ 2 million spikes.
const RATE_HZ: f64 = 3.1;
const STEPS: usize = 600;
const CHILD_ENV: &str = "TRIALDESK_REVIEW_BENCH_DIR";

/// A writer that only counts bytes: what the terminal would receive.
#[derive(Clone, Default)]
struct Counter(Arc<AtomicU64>);

impl Write for Counter {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.0.fetch_add(buf.len() as u64, Ordering::Relaxed);
        Ok(buf.len())
    }
    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

fn main() {
    if let Ok(dir) = std::env::var(CHILD_ENV) {
        measure(Path::new(&dir));
        return;
    }
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().join("2026-03-02");
    let spikes = write_session(&dir).expect("write session");
    println!("session: {TRIALS} trials, {UNITS} units, {spikes} spikes (random seed 7)");
    let exe = std::env::current_exe().expect("own path");
    let status = std::process::Command::new(exe)
        .env(CHILD_ENV, &dir)
        .status()
        .expect("run child");
    assert!(status.success(), "child failed");
}

fn status_kib(field: &str) -> u64 {
    let s = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    s.lines()
        .find(|l| l.starts_with(field))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(0)
}

fn percentile(v: &mut [Duration], q: f64) -> Duration {
    v.sort();
    v[((v.len() - 1) as f64 * q).round() as usize]
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1e3
}

fn measure(dir: &Path) {
    let opts = Options {
        ascii: false,
        color: true,
        reviewer: "bench".into(),
        reasons: DEFAULT_REASONS.iter().map(|s| s.to_string()).collect(),
    };
    let counter = Counter::default();
    let t0 = Instant::now();
    let loaded = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{f}"));
    let t_load = t0.elapsed();
    let mut state = app::build_state(
        loaded.subject,
        opts,
        Keymap::build(&[]).unwrap(),
        &ModelSettings::defaults(),
    );
    let t_state = t0.elapsed();
    let backend = CrosstermBackend::new(counter.clone());
    let mut term = Terminal::with_options(
        backend,
        ratatui::TerminalOptions {
            viewport: ratatui::Viewport::Fixed(ratatui::layout::Rect::new(0, 0, 80, 24)),
        },
    )
    .unwrap();
    app::draw(&mut term, &state).unwrap();
    let t_first = t0.elapsed();
    let first_bytes = counter.0.load(Ordering::Relaxed);
    let hwm_mb = status_kib("VmHWM") as f64 / 1024.0;
    println!(
        "time to first frame: {:.1} ms (load {:.1} ms, reviewer state {:.1} ms, first draw {:.1} ms); {} bytes",
        ms(t_first),
        ms(t_load),
        ms(t_state - t_load),
        ms(t_first - t_state),
        first_bytes
    );
    println!("peak memory after first frame: {hwm_mb:.1} MB (VmHWM)");

    let j = KeyEvent::new(KeyCode::Char('j'), KeyModifiers::NONE);
    for (screen_key, name) in [('1', "trial"), ('2', "session")] {
        app::handle_key(
            &mut state,
            &KeyEvent::new(KeyCode::Char(screen_key), KeyModifiers::NONE),
        );
        app::handle_key(
            &mut state,
            &KeyEvent::new(KeyCode::Char('g'), KeyModifiers::NONE),
        );
        app::draw(&mut term, &state).unwrap();
        let mut times = Vec::with_capacity(STEPS);
        let mut bytes = Vec::with_capacity(STEPS);
        for _ in 0..STEPS {
            let before = counter.0.load(Ordering::Relaxed);
            let t = Instant::now();
            app::handle_key(&mut state, &j);
            app::draw(&mut term, &state).unwrap();
            times.push(t.elapsed());
            bytes.push(counter.0.load(Ordering::Relaxed) - before);
        }
        let max = *times.iter().max().unwrap();
        let over = times
            .iter()
            .filter(|t| **t > Duration::from_millis(5))
            .count();
        let mean_bytes = bytes.iter().sum::<u64>() as f64 / bytes.len() as f64;
        bytes.sort();
        println!(
            "{name} screen, step + draw at 80x24: median {:.3} ms, p99 {:.3} ms, max {:.3} ms, {over} of {STEPS} over 5 ms; bytes per step: mean {:.0}, median {}, max {}",
            ms(percentile(&mut times, 0.5)),
            ms(percentile(&mut times, 0.99)),
            ms(max),
            mean_bytes,
            bytes[bytes.len() / 2],
            bytes[bytes.len() - 1]
        );
    }
    println!(
        "targets: first frame < 300 ms and < 200 MB; step + draw < 5 ms (peak memory now {:.1} MB)",
        status_kib("VmHWM") as f64 / 1024.0
    );
    // Wall-clock figures on a shared machine: say how busy it was.
    let load = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    println!(
        "load average during the run: {} (on {} cores)",
        load.split_whitespace()
            .take(3)
            .collect::<Vec<_>>()
            .join(" "),
        std::thread::available_parallelism().map_or(0, |n| n.get())
    );
}

/// One session: alternating rewarded / omission / unrewarded-cue trials, 64 Poisson units with
/// a burst after cue and reward, licks after rewards. Streamed to disk unit by unit.
fn write_session(dir: &Path) -> std::io::Result<usize> {
    std::fs::create_dir_all(dir)?;
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    std::fs::write(
        dir.join("session.toml"),
        "subject = \"m-bench\"\ndate = \"2026-03-02\"\nrig = \"rig-north\"\n\
         [[cue]]\nname = \"tone-hi\"\nreward_delay_s = 1.5\n[[cue]]\nname = \"tone-lo\"\n",
    )?;
    let mut trials = BufWriter::new(File::create(dir.join("trials.csv"))?);
    let mut licks = BufWriter::new(File::create(dir.join("licks.csv"))?);
    writeln!(trials, "trial,cue,cue_s,reward_s,reward_ul")?;
    writeln!(licks, "time_s")?;
    let mut events = Vec::new();
    for i in 0..TRIALS {
        let cue_s = 5.0 + i as f64 * TRIAL_SPACING_S;
        match i % 4 {
            0 | 1 => {
                writeln!(trials, "{},tone-hi,{cue_s:.4},{:.4},4", i + 1, cue_s + 1.5)?;
                events.push(cue_s);
                events.push(cue_s + 1.5);
                for k in 0..8 {
                    writeln!(licks, "{:.4}", cue_s + 1.6 + 0.13 * k as f64)?;
                }
            }
            2 => {
                writeln!(trials, "{},tone-hi,{cue_s:.4},,", i + 1)?;
                events.push(cue_s);
            }
            _ => writeln!(trials, "{},tone-lo,{cue_s:.4},,", i + 1)?,
        }
    }
    let end = 5.0 + TRIALS as f64 * TRIAL_SPACING_S;
    let mut spikes = BufWriter::new(File::create(dir.join("spikes.csv"))?);
    writeln!(spikes, "unit,time_s")?;
    let mut n = 0;
    for u in 0..UNITS {
        let mut t = 0.0;
        loop {
            t += -(1.0 - rng.random::<f64>()).ln() / RATE_HZ;
            if t >= end {
                break;
            }
            writeln!(spikes, "u{u:02},{t:.5}")?;
            n += 1;
        }
        for &e in &events {
            for k in 0..2 {
                writeln!(spikes, "u{u:02},{:.5}", e + 0.06 + 0.04 * k as f64)?;
                n += 1;
            }
        }
    }
    spikes.flush()?;
    trials.flush()?;
    licks.flush()?;
    Ok(n)
}
