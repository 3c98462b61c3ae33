//! Reviewer benchmark: a 1,000-trial session with 64 units and about 2 million spikes, and
//! (unless `REVIEW_BENCH_SMALL_ONLY` is set) a high-density one: 384 units over an hour,
//! about 20 million spikes.
//!
//! Writes each session to a temp folder, then, in fresh child processes (so the generator's
//! memory does not count and every start is a real start), measures:
//! - time to first frame, wall and CPU, median over several fresh processes: `data::load` +
//!   the first frame's state (`app::start_state`: model run, journals, the current trial's
//!   trace) + drawing the first 80×24 frame through the real crossterm backend; then the rest
//!   of start-up the loop does after that frame (`update::finish_startup`: every trial's
//!   trace, observations, suggestions) and the second frame;
//! - peak memory (VmHWM from /proc/self/status) after start-up, against the loaded arrays;
//! - one trial-step key (`j`) handled and its frame drawn, over many steps (median, p99, max),
//!   on the trial screen and on the session screen;
//! - bytes written to the terminal per trial step at 80×24 (the backend writes into a counter).
//!
//! Targets: first frame < 300 ms, < 200 MB; step + draw < 5 ms (issue 4); first frame of the
//! 2 M-spike session ≤ 100 ms CPU, of the 20 M-spike session ≤ 1 s (issue 23).
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
use trialdesk::suggest::RuleSet;
use trialdesk::tui::app;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::keymap::Keymap;
use trialdesk::tui::state::{Options, DEFAULT_REASONS};
use trialdesk::tui::update;

#[path = "support/mod.rs"]
mod support;

const TRIAL_SPACING_S: f64 = 10.0;
const STEPS: usize = 600;
const CHILD_ENV: &str = "TRIALDESK_REVIEW_BENCH_DIR";
const MODE_ENV: &str = "TRIALDESK_REVIEW_BENCH_MODE";
/// Fresh processes per first-frame figure.
const STARTS: usize = 9;

/// A simulated session's size.
#[derive(Clone, Copy)]
struct Shape {
    name: &'static str,
    trials: usize,
    units: usize,
    rate_hz: f64,
    starts: usize,
}

/// 64 units × 3.1 spikes/s × 10,000 s ≈ 2 million spikes.
const STRESS: Shape = Shape {
    name: "stress session",
    trials: 1000,
    units: 64,
    rate_hz: 3.1,
    starts: STARTS,
};

/// A high-density probe: 384 units × 14.5 spikes/s × 3,600 s ≈ 20 million spikes.
const DENSE: Shape = Shape {
    name: "high-density session",
    trials: 360,
    units: 384,
    rate_hz: 14.5,
    starts: 3,
};

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
        match std::env::var(MODE_ENV).as_deref() {
            Ok("steps") => measure_steps(Path::new(&dir)),
            _ => measure_first_frame(Path::new(&dir)),
        }
        return;
    }
    let mut shapes = vec![STRESS];
    if std::env::var_os("REVIEW_BENCH_SMALL_ONLY").is_none() {
        shapes.push(DENSE);
    }
    for shape in shapes {
        let tmp = tempfile::tempdir().expect("temp dir");
        let dir = tmp.path().join("2026-03-02");
        let spikes = write_session(&dir, shape).expect("write session");
        let mb = csv_mb(&dir);
        println!(
            "{}: {} trials, {} units, {spikes} spikes, {mb:.0} MB of CSV (random seed 7)",
            shape.name, shape.trials, shape.units
        );
        let mut starts: Vec<[f64; 7]> = (0..shape.starts).map(|_| child(&dir, "first")).collect();
        let mut med = |k: usize| {
            starts.sort_by(|a, b| a[k].total_cmp(&b[k]));
            starts[starts.len() / 2][k]
        };
        let (wall, cpu) = (med(0), med(1));
        let (load, state, draw, rest) = (med(2), med(3), med(4), med(5));
        let hwm = med(6);
        println!(
            "  first frame, median of {} fresh starts: {wall:.1} ms wall, {cpu:.1} ms CPU \
             (load {load:.1} ms, first-frame state {state:.1} ms, draw {draw:.1} ms, wall); \
             rest of start-up after it {rest:.1} ms",
            shape.starts
        );
        println!("  peak memory after start-up: {hwm:.1} MB (VmHWM)");
        if shape.name == STRESS.name {
            child(&dir, "steps");
        }
    }
    // Wall-clock figures on a shared machine: say how busy it was.
    let load = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    println!(
        "targets: first frame ≤ 100 ms CPU (2 M spikes), ≤ 1 s (20 M spikes), < 200 MB (2 M); \
         step + draw < 5 ms"
    );
    println!(
        "load average at the end: {} (on {} cores)",
        load.split_whitespace()
            .take(3)
            .collect::<Vec<_>>()
            .join(" "),
        std::thread::available_parallelism().map_or(0, |n| n.get())
    );
}

/// Runs this binary as a child in `mode`; a "first" child prints one line of figures.
fn child(dir: &Path, mode: &str) -> [f64; 7] {
    let exe = std::env::current_exe().expect("own path");
    let out = std::process::Command::new(exe)
        .env(CHILD_ENV, dir)
        .env(MODE_ENV, mode)
        .stderr(std::process::Stdio::inherit())
        .output()
        .expect("run child");
    assert!(out.status.success(), "child failed");
    let text = String::from_utf8_lossy(&out.stdout);
    if mode != "first" {
        print!("{text}");
        return [0.0; 7];
    }
    let v: Vec<f64> = text
        .split_whitespace()
        .filter_map(|x| x.parse().ok())
        .collect();
    v.try_into().expect("seven figures from the child")
}

fn csv_mb(dir: &Path) -> f64 {
    std::fs::read_dir(dir)
        .map(|d| {
            d.filter_map(Result::ok)
                .filter_map(|e| e.metadata().ok())
                .map(|m| m.len())
                .sum::<u64>()
        })
        .unwrap_or(0) as f64
        / 1e6
}

fn options() -> Options {
    Options {
        ascii: false,
        color: true,
        reviewer: "bench".into(),
        reasons: DEFAULT_REASONS.iter().map(|s| s.to_string()).collect(),
    }
}

fn terminal(counter: &Counter) -> Terminal<CrosstermBackend<Counter>> {
    let backend = CrosstermBackend::new(counter.clone());
    Terminal::with_options(
        backend,
        ratatui::TerminalOptions {
            viewport: ratatui::Viewport::Fixed(ratatui::layout::Rect::new(0, 0, 80, 24)),
        },
    )
    .unwrap()
}

/// One start as `trialdesk review` does it: load, first-frame state, first frame, then the
/// rest of start-up and the second frame. Prints wall, CPU, load, state, draw, rest (ms) and
/// the peak memory (MB).
fn measure_first_frame(dir: &Path) {
    let counter = Counter::default();
    let (t0, c0) = (Instant::now(), support::cpu_s());
    let loaded = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{f}"));
    let t_load = t0.elapsed();
    let mut state = app::start_state(
        loaded.subject,
        options(),
        Keymap::build(&[]).unwrap(),
        &ModelSettings::defaults(),
        RuleSet::default(),
    );
    let t_state = t0.elapsed();
    let mut term = terminal(&counter);
    app::draw(&mut term, &state).unwrap();
    let (t_first, cpu) = (t0.elapsed(), support::cpu_s() - c0);
    let t = Instant::now();
    assert!(update::finish_startup(&mut state));
    app::draw(&mut term, &state).unwrap();
    let rest = t.elapsed();
    println!(
        "{:.3} {:.3} {:.3} {:.3} {:.3} {:.3} {:.3}",
        ms(t_first),
        cpu * 1e3,
        ms(t_load),
        ms(t_state - t_load),
        ms(t_first - t_state),
        ms(rest),
        status_kib("VmHWM") as f64 / 1024.0
    );
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

/// Trial steps on the trial and the session screens of a started reviewer.
fn measure_steps(dir: &Path) {
    let counter = Counter::default();
    let loaded = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{f}"));
    let mut state = app::build_state(
        loaded.subject,
        options(),
        Keymap::build(&[]).unwrap(),
        &ModelSettings::defaults(),
    );
    let mut term = terminal(&counter);
    app::draw(&mut term, &state).unwrap();
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
}

/// One session: alternating rewarded / omission / unrewarded-cue trials, 64 Poisson units with
/// a burst after cue and reward, licks after rewards. Streamed to disk unit by unit.
fn write_session(dir: &Path, shape: Shape) -> std::io::Result<usize> {
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
    for i in 0..shape.trials {
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
    let end = 5.0 + shape.trials as f64 * TRIAL_SPACING_S;
    let mut spikes = BufWriter::new(File::create(dir.join("spikes.csv"))?);
    writeln!(spikes, "unit,time_s")?;
    let mut n = 0;
    for u in 0..shape.units {
        let mut t = 0.0;
        loop {
            t += -(1.0 - rng.random::<f64>()).ln() / shape.rate_hz;
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
