//! Photometry preprocessing benchmark: one hour at 1 kHz, two channels (3.6 M samples each).
//!
//! Target (issue 5): whole-session OLS fit + ΔF/F under 200 ms. Also times the default robust
//! fit (IRLS, Tukey bisquare), the sliding-window variants and the bleaching detrend. Prints
//! milliseconds (best and median of several runs) and memory from /proc/self/status: VmHWM
//! (peak resident set) after each stage, reset between stages through /proc/self/clear_refs
//! where the kernel allows it. Run: `cargo bench --bench photometry`.

use std::time::Instant;

use trialdesk::data::Photometry;
use trialdesk::photometry::{
    preprocess, BaselineFit, ControlFit, FitScope, PreprocessOptions, RobustWeight,
};

const RATE_HZ: f64 = 1000.0;
const SECONDS: usize = 3600;

/// A deterministic recording (xorshift noise, random seed 7): shared bleaching and slow motion
/// in both channels, transients in the signal.
fn recording() -> Photometry {
    let n = SECONDS * RATE_HZ as usize;
    let mut state: u64 = 7 ^ 0x9E37_79B9_7F4A_7C15;
    let mut noise = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    let mut time = Vec::with_capacity(n);
    let mut signal = Vec::with_capacity(n);
    let mut control = Vec::with_capacity(n);
    for i in 0..n {
        let t = i as f64 / RATE_HZ;
        let shared = (0.8 + 0.2 * (-t / 600.0).exp()) * (1.0 + 0.05 * (t * 0.37).sin());
        let transient = 0.1 * ((t % 12.0) * -1.5).exp();
        time.push(t);
        signal.push(2.0 * shared * (1.0 + transient) + 0.01 * noise());
        control.push(1.25 * shared + 0.01 * noise());
    }
    Photometry {
        time_s: time,
        signal,
        control: Some(control),
    }
}

fn status_kb(field: &str) -> Option<u64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = s.lines().find(|l| l.starts_with(field))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

/// CPU time this thread has run, in ms (/proc/thread-self/schedstat, first field in ns): the
/// machine is shared, so wall time alone overstates the cost under load.
fn thread_cpu_ms() -> Option<f64> {
    let s = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    Some(s.split_whitespace().next()?.parse::<f64>().ok()? / 1e6)
}

/// Reset the peak-RSS mark (Linux: writing 5 to clear_refs); false when not permitted.
fn reset_peak() -> bool {
    std::fs::write("/proc/self/clear_refs", "5").is_ok()
}

fn mb(kb: Option<u64>) -> String {
    kb.map_or("n/a".into(), |k| format!("{:.1} MB", k as f64 / 1024.0))
}

fn stage(name: &str, p: &Photometry, opts: PreprocessOptions, runs: usize) {
    // Memory first: one run right after resetting the peak mark, nothing else alive.
    let resettable = reset_peak();
    let before = status_kb("VmRSS:");
    let out = preprocess(p, &opts).expect("benchmark data preprocesses");
    let peak = status_kb("VmHWM:");
    drop(out);
    let mut times = Vec::with_capacity(runs);
    let mut cpu = Vec::with_capacity(runs);
    let mut last = None;
    for _ in 0..runs {
        drop(last.take());
        let (start, cpu_start) = (Instant::now(), thread_cpu_ms());
        let out = preprocess(p, &opts).expect("benchmark data preprocesses");
        times.push(start.elapsed().as_secs_f64() * 1e3);
        if let (Some(a), Some(b)) = (cpu_start, thread_cpu_ms()) {
            cpu.push(b - a);
        }
        last = Some(out);
    }
    let out = last.expect("at least one run");
    times.sort_by(f64::total_cmp);
    cpu.sort_by(f64::total_cmp);
    let cpu_text = cpu.first().map_or("n/a".into(), |c| format!("{c:.1} ms"));
    println!(
        "{name:<34} wall best {:>7.1} ms, median {:>7.1} ms; CPU best {cpu_text} ({runs} runs); \
         RSS before {}, peak {} (+{}){}",
        times[0],
        times[times.len() / 2],
        mb(before),
        mb(peak),
        mb(peak.zip(before).map(|(p, b)| p.saturating_sub(b))),
        if resettable {
            ""
        } else {
            " (peak not reset: process-wide)"
        }
    );
    let coefs: Vec<String> = out
        .coefficients()
        .iter()
        .map(|(k, v)| format!("{k}={v:.6}"))
        .collect();
    let iterations = match &out.baseline {
        BaselineFit::Control(l) => {
            format!(" iterations={} converged={}", l.iterations, l.converged)
        }
        BaselineFit::SlidingControl(s) => {
            format!(" iterations={} converged={}", s.iterations, s.converged)
        }
        BaselineFit::Bleaching(b) => format!(" points_fitted={}", b.points_fitted),
    };
    println!("    {}{iterations}", coefs.join(" "));
}

/// The stages, by name: (options, timed runs).
fn stages() -> Vec<(&'static str, PreprocessOptions, usize)> {
    let ols = PreprocessOptions {
        fit: ControlFit::Ols,
        ..PreprocessOptions::default()
    };
    let tukey = PreprocessOptions {
        fit: ControlFit::Irls(RobustWeight::TUKEY_DEFAULT),
        ..PreprocessOptions::default()
    };
    let sliding = FitScope::Sliding { window_s: 60.0 };
    vec![
        ("OLS whole session + ΔF/F", ols, 11),
        ("IRLS Tukey whole session (default)", tukey, 5),
        (
            "OLS sliding 60 s + ΔF/F",
            PreprocessOptions {
                scope: sliding,
                ..ols
            },
            5,
        ),
        (
            "IRLS Tukey sliding 60 s + ΔF/F",
            PreprocessOptions {
                scope: sliding,
                ..tukey
            },
            3,
        ),
        (
            "bleaching detrend (no control)",
            PreprocessOptions {
                use_control: false,
                ..PreprocessOptions::default()
            },
            3,
        ),
    ]
}

/// Each stage runs in its own process (this binary with `--stage K`), so its peak memory is
/// its own and not the allocator's leftovers from an earlier stage.
fn main() {
    let args: Vec<String> = std::env::args().collect();
    let chosen = args
        .iter()
        .position(|a| a == "--stage")
        .and_then(|i| args.get(i + 1))
        .and_then(|k| k.parse::<usize>().ok());
    let Some(k) = chosen else {
        println!(
            "photometry benchmark: {} s at {} Hz, two channels; one process per stage",
            SECONDS, RATE_HZ
        );
        let exe = std::env::current_exe().expect("own path");
        for k in 0..stages().len() {
            let status = std::process::Command::new(&exe)
                .args(["--stage", &k.to_string()])
                .status()
                .expect("stage runs");
            assert!(status.success(), "stage {k} failed");
        }
        return;
    };
    let t = Instant::now();
    let p = recording();
    let generated = t.elapsed().as_secs_f64() * 1e3;
    let (name, opts, runs) = stages()[k];
    if k == 0 {
        println!(
            "{} samples × 2 channels, generated in {generated:.0} ms; inputs resident {}",
            p.signal.len(),
            mb(status_kb("VmRSS:"))
        );
    }
    stage(name, &p, opts, runs);
}
