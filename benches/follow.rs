//! Follow-mode benchmark (issue 7): what `review --follow` costs while the rig records.
//!
//! A session of 1,000 trials (one per 15 s) and 64 units at 300 spikes/s in total (4.5
//! million spikes) is written, loaded into the reviewer's state, then appended to one
//! simulated second at a time: 300 spikes, about 5 licks, a trial every 15 s, each second's
//! write ending in a torn line as a rig's buffered writer leaves it. After each second one
//! poll runs, as the reviewer's loop does. Per poll: wall time around the call (one thread
//! that never sleeps inside it, so an upper bound on its CPU time; this machine's
//! /proc/thread-self/schedstat turned out tick-granular, 4 ms, too coarse per poll). CPU per
//! second of following: this thread's schedstat time summed around the polls (tick samples
//! average out over hundreds of polls), and the process's utime+stime from /proc/self/stat
//! (clock ticks, 100 per second on Linux — common practice) over the whole follow phase.
//! Run: `cargo bench --bench follow`.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::fs::{File, OpenOptions};
use std::io::{BufWriter, Write};
use std::path::Path;
use std::time::{Duration, Instant};
use trialdesk::data::follow::{Polled, TableKind, Tail};
use trialdesk::tui::app;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::follow::Follower;
use trialdesk::tui::keymap::Keymap;
use trialdesk::tui::state::{Options, DEFAULT_REASONS};

const TRIALS: usize = 1000;
const UNITS: usize = 64;
const TRIAL_EVERY_S: f64 = 15.0;
const SPIKES_PER_S: usize = 300;
const LICKS_PER_S: f64 = 5.0;
/// Simulated seconds of following.
const FOLLOW_S: usize = 300;
const IDLE_POLLS: usize = 2000;

/// Nanoseconds this thread has spent on a CPU.
fn thread_cpu_ns() -> u64 {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()
        .and_then(|s| s.split_whitespace().next()?.parse().ok())
        .expect("/proc/thread-self/schedstat (Linux)")
}

/// utime + stime of the process, in clock ticks.
fn process_ticks() -> u64 {
    let s = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    // Fields after the parenthesised name; utime and stime are fields 14 and 15.
    let rest = s.rsplit_once(')').map_or("", |(_, r)| r);
    let f: Vec<u64> = rest
        .split_whitespace()
        .skip(11)
        .take(2)
        .filter_map(|v| v.parse().ok())
        .collect();
    f.iter().sum()
}

/// One second of recording as CSV text per table.
struct Second {
    trials: String,
    spikes: String,
    licks: String,
}

struct Rig {
    rng: ChaCha8Rng,
    next_trial: usize,
}

impl Rig {
    fn second(&mut self, t0: f64) -> Second {
        let mut s = Second {
            trials: String::new(),
            spikes: String::new(),
            licks: String::new(),
        };
        let mut times: Vec<f64> = (0..SPIKES_PER_S)
            .map(|_| t0 + self.rng.random::<f64>())
            .collect();
        times.sort_by(f64::total_cmp);
        for t in times {
            let unit = self.rng.random_range(1..=UNITS);
            s.spikes.push_str(&format!("u{unit},{t:.4}\n"));
        }
        let licks = (LICKS_PER_S * 2.0 * self.rng.random::<f64>()).round() as usize;
        let mut lt: Vec<f64> = (0..licks).map(|_| t0 + self.rng.random::<f64>()).collect();
        lt.sort_by(f64::total_cmp);
        for t in lt {
            s.licks.push_str(&format!("{t:.4}\n"));
        }
        let cue = self.next_trial as f64 * TRIAL_EVERY_S + 2.0;
        if cue >= t0 && cue < t0 + 1.0 {
            let n = self.next_trial + 1;
            s.trials = if n.is_multiple_of(4) {
                format!("{n},light,{cue:.3},,\n")
            } else {
                format!("{n},tone-hi,{cue:.3},{:.3},4\n", cue + 1.5)
            };
            self.next_trial += 1;
        }
        s
    }
}

fn write_session(dir: &Path, rig: &mut Rig) -> usize {
    std::fs::create_dir_all(dir).unwrap();
    std::fs::write(
        dir.join("session.toml"),
        "subject = \"m-021\"\ndate = \"2026-03-02\"\nrig = \"rig-north\"\n\n\
         [[cue]]\nname = \"tone-hi\"\nreward_delay_s = 1.5\n\n[[cue]]\nname = \"light\"\n",
    )
    .unwrap();
    let open = |name: &str, header: &str| {
        let mut w = BufWriter::new(File::create(dir.join(name)).unwrap());
        w.write_all(header.as_bytes()).unwrap();
        w
    };
    let mut trials = open("trials.csv", "trial,cue,cue_s,reward_s,reward_ul\n");
    let mut spikes = open("spikes.csv", "unit,time_s\n");
    let mut licks = open("licks.csv", "time_s\n");
    let seconds = (TRIALS as f64 * TRIAL_EVERY_S) as usize;
    let mut n_spikes = 0;
    for sec in 0..seconds {
        let s = rig.second(sec as f64);
        n_spikes += s.spikes.lines().count();
        trials.write_all(s.trials.as_bytes()).unwrap();
        spikes.write_all(s.spikes.as_bytes()).unwrap();
        licks.write_all(s.licks.as_bytes()).unwrap();
    }
    n_spikes
}

/// Appends `text` but holds back its last few bytes (a torn line) until the next call.
struct TornWriter {
    file: File,
    held: String,
}

impl TornWriter {
    fn new(path: &Path) -> Self {
        let file = OpenOptions::new().append(true).open(path).unwrap();
        TornWriter {
            file,
            held: String::new(),
        }
    }
    fn write(&mut self, text: &str) {
        let all = std::mem::take(&mut self.held) + text;
        let cut = all.len().saturating_sub(3);
        self.file.write_all(&all.as_bytes()[..cut]).unwrap();
        self.held = all[cut..].to_string();
    }
}

fn us(ns: u64) -> f64 {
    ns as f64 / 1e3
}

fn summary(label: &str, v: &mut [u64]) {
    v.sort_unstable();
    let q = |p: f64| v[((v.len() - 1) as f64 * p).round() as usize];
    println!(
        "{label}: median {:.1} µs, p99 {:.1} µs, max {:.1} µs over {} polls",
        us(q(0.5)),
        us(q(0.99)),
        us(*v.last().unwrap()),
        v.len()
    );
}

fn main() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().join("2026-03-02");
    let mut rig = Rig {
        rng: ChaCha8Rng::seed_from_u64(7),
        next_trial: 0,
    };
    let t = Instant::now();
    let n_spikes = write_session(&dir, &mut rig);
    println!(
        "session: {TRIALS} trials, {UNITS} units, {n_spikes} spikes (random seed 7), written in {:.1} s",
        t.elapsed().as_secs_f64()
    );

    let loaded = trialdesk::data::load(&dir).unwrap_or_else(|f| panic!("{f}"));
    let opts = Options {
        ascii: false,
        color: false,
        reviewer: "bench".into(),
        reasons: DEFAULT_REASONS.iter().map(|s| s.to_string()).collect(),
    };
    let settings = ModelSettings::defaults();
    let mut state = app::build_state(loaded.subject, opts, Keymap::build(&[]).unwrap(), &settings);
    let meta = state.subject.sessions[0].meta.clone();

    let c = thread_cpu_ns();
    let mut follower = Follower::start(0, &state.subject.sessions[0], settings).unwrap();
    println!(
        "start following (one read of the files to find their ends): {:.1} ms CPU",
        us(thread_cpu_ns() - c) / 1e3
    );
    // Library-only tails on the same files, to split reading from applying.
    let mut tails: Vec<Tail> = [TableKind::Trials, TableKind::Spikes, TableKind::Licks]
        .into_iter()
        .filter_map(|k| Tail::at_end(&dir, k, &meta).unwrap())
        .collect();

    let mut idle = Vec::with_capacity(IDLE_POLLS);
    for _ in 0..IDLE_POLLS {
        let c = Instant::now();
        follower.poll_into(&mut state);
        idle.push(c.elapsed().as_nanos() as u64);
    }
    summary("poll, nothing appended (3 stats)", &mut idle);

    let mut w_trials = TornWriter::new(&dir.join("trials.csv"));
    let mut w_spikes = TornWriter::new(&dir.join("spikes.csv"));
    let mut w_licks = TornWriter::new(&dir.join("licks.csv"));
    let (mut read_only, mut quiet, mut with_trial) = (Vec::new(), Vec::new(), Vec::new());
    let trials_before = state.subject.sessions[0].trials.len();
    let ticks0 = process_ticks();
    let wall0 = Instant::now();
    let (mut follow_ns, mut follow_cpu_ns) = (0u64, 0u64);
    for sec in 0..FOLLOW_S {
        let t0 = (TRIALS as f64 * TRIAL_EVERY_S) + sec as f64;
        let s = rig.second(t0);
        w_trials.write(&s.trials);
        w_spikes.write(&s.spikes);
        w_licks.write(&s.licks);

        let c = Instant::now();
        for tail in &mut tails {
            assert!(!matches!(tail.poll(), Polled::Reload(_)));
        }
        read_only.push(c.elapsed().as_nanos() as u64);

        let trials = state.subject.sessions[0].trials.len();
        let (c, cpu) = (Instant::now(), thread_cpu_ns());
        follower.poll_into(&mut state);
        let spent = c.elapsed().as_nanos() as u64;
        follow_cpu_ns += thread_cpu_ns() - cpu;
        follow_ns += spent;
        if state.subject.sessions[0].trials.len() > trials {
            with_trial.push(spent);
        } else {
            quiet.push(spent);
        }
    }
    let ticks = process_ticks() - ticks0;
    let wall = wall0.elapsed();
    let new_trials = state.subject.sessions[0].trials.len() - trials_before;
    println!(
        "followed {FOLLOW_S} simulated s: {new_trials} new trials, {} spikes/s, torn lines every second",
        SPIKES_PER_S
    );
    summary("tail read + parse only (library)", &mut read_only);
    summary("poll + apply, no new trial", &mut quiet);
    summary(
        "poll + apply with a new trial (traces, suggestions, model pass, observations, days)",
        &mut with_trial,
    );
    println!(
        "per second of following (poll + apply, one poll/s): {:.2} ms wall, {:.2} ms CPU \
         (schedstat) = {:.3} % of one core",
        us(follow_ns / FOLLOW_S as u64) / 1e3,
        us(follow_cpu_ns / FOLLOW_S as u64) / 1e3,
        follow_cpu_ns as f64 / FOLLOW_S as f64 / 1e9 * 100.0
    );
    println!(
        "cross-check, whole follow phase incl. the simulated rig's writes and the library-only \
         tails: {ticks} ticks utime+stime over {:.2} s wall ({:?} per simulated s)",
        wall.as_secs_f64(),
        Duration::from_millis(ticks * 10 / FOLLOW_S as u64)
    );
}
