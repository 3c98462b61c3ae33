//! Load benchmark: a 1,000-trial session with 64 units and about 2 million spikes.
//!
//! Writes the session to a temp folder, then times `trialdesk::data::load` in a fresh child
//! process (so the generator's memory does not count) and reports the median time and the
//! peak resident memory (VmHWM from /proc/self/status) against the size of the loaded data.
//! Run: `cargo bench --bench load`.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;
use std::time::Instant;

#[path = "support/mod.rs"]
mod support;

const TRIALS: usize = 1000;
const UNITS: usize = 64;
const TRIAL_SPACING_S: f64 = 10.0;
/// 64 units × 3.1 spikes/s × 10,000 s ≈ 2 million spikes.
const RATE_HZ: f64 = 3.1;
const TIMED_RUNS: usize = 7;
const CHILD_ENV: &str = "TRIALDESK_LOAD_BENCH_DIR";

fn main() {
    if let Ok(dir) = std::env::var(CHILD_ENV) {
        measure(Path::new(&dir));
        return;
    }
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().join("2026-03-02");
    let spikes = write_session(&dir).expect("write session");
    let file_bytes = csv_bytes(&dir);
    println!(
        "session: {TRIALS} trials, {UNITS} units, {spikes} spikes, {:.1} MB of CSV",
        file_bytes as f64 / 1e6
    );
    let exe = std::env::current_exe().expect("own path");
    let status = std::process::Command::new(exe)
        .env(CHILD_ENV, &dir)
        .status()
        .expect("run child");
    assert!(status.success(), "child failed");
}

/// In the child: one load for memory, then timed loads.
fn measure(dir: &Path) {
    let rss_before = status_kib("VmRSS");
    let first = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{f}"));
    let hwm = status_kib("VmHWM");
    let session = &first.subject.sessions[0];
    let spikes = session.spikes.as_ref().expect("spikes");
    let n_spikes: usize = spikes.times.iter().map(Vec::len).sum();
    let licks = session.licks.as_ref().map_or(0, Vec::len);
    let data_bytes =
        8 * (n_spikes + licks) + session.trials.len() * std::mem::size_of_val(&session.trials[0]);
    assert_eq!(session.trials.len(), TRIALS);
    assert_eq!(spikes.units.len(), UNITS);
    assert!(first.warnings.is_empty(), "{:?}", first.warnings);
    drop(first);

    let mut wall = Vec::with_capacity(TIMED_RUNS);
    let mut cpu = Vec::with_capacity(TIMED_RUNS);
    for _ in 0..TIMED_RUNS {
        let (t, c) = (Instant::now(), cpu_ns());
        let loaded = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{f}"));
        wall.push(t.elapsed().as_secs_f64());
        cpu.push((cpu_ns() - c) as f64 * 1e-9);
        std::hint::black_box(loaded);
    }
    wall.sort_by(f64::total_cmp);
    cpu.sort_by(f64::total_cmp);
    let mid = TIMED_RUNS / 2;
    println!(
        "load: median {:.1} ms wall (min {:.1}, max {:.1}), median {:.1} ms CPU, over {TIMED_RUNS} runs",
        wall[mid] * 1e3,
        wall[0] * 1e3,
        wall[TIMED_RUNS - 1] * 1e3,
        cpu[mid] * 1e3,
    );
    println!(
        "throughput: {:.0} MB/s of CSV, {:.1} M spikes/s (median wall)",
        csv_bytes(dir) as f64 / 1e6 / wall[mid],
        n_spikes as f64 / 1e6 / wall[mid]
    );
    println!(
        "memory: loaded data {:.1} MB; peak RSS {:.1} MB (before load {:.1} MB, growth {:.1} MB = {:.2}x the data)",
        data_bytes as f64 / 1e6,
        hwm as f64 * 1.024e-3,
        rss_before as f64 * 1.024e-3,
        (hwm - rss_before) as f64 * 1.024e-3,
        (hwm - rss_before) as f64 * 1024.0 / data_bytes as f64
    );
    println!("spikes loaded: {n_spikes}");
    per_table(dir);
}

/// Each large table read by the fast path and by the standard reader from the same bytes in
/// memory (alternating rounds, medians of CPU time): the parsing itself, without the disk.
fn per_table(dir: &Path) {
    use trialdesk::data::{fast, tables};
    let spikes = std::fs::read(dir.join("spikes.csv")).expect("spikes.csv");
    let photometry = synthetic_photometry();
    let photometry_file = dir.with_file_name("photometry-bench.csv");
    std::fs::write(&photometry_file, &photometry).expect("write photometry");
    let pandas = pandas_cpu(&[dir.join("spikes.csv"), photometry_file]);
    type Reader<'a> = Box<dyn Fn(&[u8]) -> usize + 'a>;
    let cases: [(&str, &[u8], Reader, Reader); 2] = [
        (
            "spikes.csv",
            &spikes,
            Box::new(|b| {
                let p = std::path::Path::new("spikes.csv");
                fast::spikes(p, b, None, &mut Vec::new()).map_or(0, |s| s.units.len())
            }),
            Box::new(|b| {
                let p = std::path::Path::new("spikes.csv");
                tables::read_spikes(p, b, None, &mut Vec::new()).map_or(0, |s| s.value.units.len())
            }),
        ),
        (
            "photometry.csv (10 min at 1 kHz, signal and control)",
            &photometry,
            Box::new(|b| fast::photometry(b).map_or(0, |p| p.time_s.len())),
            Box::new(|b| {
                let p = std::path::Path::new("photometry.csv");
                tables::read_photometry(p, b, &mut Vec::new()).map_or(0, |p| p.value.time_s.len())
            }),
        ),
    ];
    for ((name, bytes, fast_read, standard), pandas) in cases.into_iter().zip(pandas) {
        let (mut a, mut b) = (Vec::new(), Vec::new());
        for _ in 0..TIMED_RUNS {
            let c = cpu_ns();
            assert!(
                std::hint::black_box(fast_read(bytes)) > 0,
                "{name}: fast path refused"
            );
            a.push((cpu_ns() - c) as f64 * 1e-9);
            let c = cpu_ns();
            std::hint::black_box(standard(bytes));
            b.push((cpu_ns() - c) as f64 * 1e-9);
        }
        a.sort_by(f64::total_cmp);
        b.sort_by(f64::total_cmp);
        let mb = bytes.len() as f64 / 1e6;
        let (fa, fb) = (a[TIMED_RUNS / 2], b[TIMED_RUNS / 2]);
        println!(
            "{name}, {mb:.1} MB: fast path {:.1} ms CPU ({:.0} MB/s), standard reader {:.1} ms \
             ({:.0} MB/s), {:.1}x",
            fa * 1e3,
            mb / fa,
            fb * 1e3,
            mb / fb,
            fb / fa
        );
        if name == "spikes.csv" {
            let mut t = Vec::new();
            for _ in 0..TIMED_RUNS {
                let c = cpu_ns();
                std::hint::black_box(tight_spikes(bytes));
                t.push((cpu_ns() - c) as f64 * 1e-9);
            }
            t.sort_by(f64::total_cmp);
            let ft = t[TIMED_RUNS / 2];
            println!(
                "  plain Rust reader (csv crate, one reused ByteRecord, std float parsing, no \
                 checks): {:.1} ms CPU ({:.0} MB/s); fast path {:.1}x it",
                ft * 1e3,
                mb / ft,
                ft / fa
            );
        }
        match pandas {
            Some(p) => println!(
                "  pandas read_csv on the same file: {:.1} ms CPU ({:.0} MB/s); fast path {:.1}x \
                 pandas",
                p * 1e3,
                mb / p,
                p / fa
            ),
            None => println!("  pandas: not run (python3 with pandas not found)"),
        }
    }
}

/// The plain way to read spikes.csv in Rust, for comparison: the csv crate with one reused
/// record, a map from unit id to train, the standard float parser; none of our checks.
fn tight_spikes(bytes: &[u8]) -> usize {
    let mut reader = csv::ReaderBuilder::new().from_reader(bytes);
    let mut record = csv::ByteRecord::new();
    let mut trains: std::collections::HashMap<Vec<u8>, Vec<f64>> = Default::default();
    while reader.read_byte_record(&mut record).unwrap_or(false) {
        let t: f64 = std::str::from_utf8(&record[1])
            .ok()
            .and_then(|s| s.parse().ok())
            .unwrap_or(f64::NAN);
        match trains.get_mut(&record[0]) {
            Some(v) => v.push(t),
            None => {
                trains.insert(record[0].to_vec(), vec![t]);
            }
        }
    }
    trains.len()
}

/// Median CPU seconds of pandas `read_csv` per file (benches/pandas_read.py), in this run.
fn pandas_cpu(files: &[std::path::PathBuf]) -> Vec<Option<f64>> {
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("benches/pandas_read.py");
    let out = std::process::Command::new("python3")
        .arg(script)
        .args(files)
        .output();
    let text = match out {
        Ok(o) if o.status.success() => String::from_utf8_lossy(&o.stdout).into_owned(),
        _ => String::new(),
    };
    let mut found = text
        .lines()
        .filter_map(|l| l.split_whitespace().nth(2)?.parse::<f64>().ok());
    files.iter().map(|_| found.next()).collect()
}

/// A 10-minute two-channel trace at 1 kHz as a rig writes it.
fn synthetic_photometry() -> Vec<u8> {
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    let mut s = String::from("time_s,signal,control\n");
    for i in 0..600_000u32 {
        let t = f64::from(i) * 1e-3;
        let sig = 1.2 + 0.05 * (t * 0.7).sin() + 0.01 * rng.random::<f64>();
        let ctl = 0.8 + 0.03 * (t * 0.7).sin() + 0.01 * rng.random::<f64>();
        s.push_str(&format!("{t:.3},{sig:.5},{ctl:.5}\n"));
    }
    s.into_bytes()
}

/// CPU time of this process in ns: on a shared machine wall time includes waiting for a core.
fn cpu_ns() -> u64 {
    (support::cpu_s() * 1e9) as u64
}

fn csv_bytes(dir: &Path) -> u64 {
    std::fs::read_dir(dir)
        .map(|d| {
            d.filter_map(Result::ok)
                .filter_map(|e| e.metadata().ok())
                .map(|m| m.len())
                .sum()
        })
        .unwrap_or(0)
}

fn status_kib(key: &str) -> i64 {
    let text = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    text.lines()
        .find_map(|l| l.strip_prefix(key)?.strip_prefix(':'))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse().ok())
        .unwrap_or(0)
}

/// Write the session (spikes interleaved in time order, as a sorter exports them); returns
/// the number of spikes.
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
    for i in 0..TRIALS {
        let cue_s = 5.0 + i as f64 * TRIAL_SPACING_S;
        if i % 2 == 0 {
            writeln!(trials, "{},tone-hi,{cue_s:.4},{:.4},4", i + 1, cue_s + 1.5)?;
            for k in 0..8 {
                writeln!(licks, "{:.4}", cue_s + 1.55 + 0.14 * k as f64)?;
            }
        } else {
            writeln!(trials, "{},tone-lo,{cue_s:.4},,", i + 1)?;
        }
    }
    trials.flush()?;
    licks.flush()?;

    let end_s = TRIALS as f64 * TRIAL_SPACING_S + 5.0;
    let mut all: Vec<(f64, u8)> = Vec::new();
    for unit in 0..UNITS {
        let mut t = 0.0;
        loop {
            let u: f64 = rng.random::<f64>().max(1e-12);
            t += -u.ln() / RATE_HZ;
            if t >= end_s {
                break;
            }
            all.push((t, unit as u8));
        }
    }
    all.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut spikes = BufWriter::new(File::create(dir.join("spikes.csv"))?);
    writeln!(spikes, "unit,time_s")?;
    for (t, u) in &all {
        writeln!(spikes, "u{},{t:.5}", u + 1)?;
    }
    spikes.flush()?;
    Ok(all.len())
}
