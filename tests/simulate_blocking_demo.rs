//! demo_data/m-052 (a blocking experiment from demo_data/blocking.toml) is exactly what its
//! README command makes, and it shows blocking: on the probe day the light that was added to an
//! already trained tone (B) draws a smaller cue response than the light of the control compound
//! trained from scratch (D) — Kamin's blocking, as Rescorla & Wagner (1972) and TD predict.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;
use trialdesk::obs::{observe, ObsOptions};

fn repo(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)
}

fn tree(root: &Path) -> BTreeMap<String, Vec<u8>> {
    fn walk(root: &Path, dir: &Path, out: &mut BTreeMap<String, Vec<u8>>) {
        for entry in std::fs::read_dir(dir).unwrap() {
            let path = entry.unwrap().path();
            if path.is_dir() {
                walk(root, &path, out);
            } else {
                let rel = path
                    .strip_prefix(root)
                    .unwrap()
                    .to_string_lossy()
                    .into_owned();
                out.insert(rel, std::fs::read(&path).unwrap());
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(root, root, &mut out);
    out
}

/// The README line that makes m-052, as arguments after `trialdesk simulate`.
fn readme_command() -> Vec<String> {
    let readme = std::fs::read_to_string(repo("demo_data/README.md")).unwrap();
    let line = readme
        .lines()
        .map(str::trim)
        .find(|l| l.starts_with("trialdesk simulate demo_data/m-052 "))
        .expect("README gives the command");
    line.split_whitespace().skip(3).map(String::from).collect()
}

#[test]
fn the_blocking_demo_is_remade_byte_for_byte_and_stays_small() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("m-052");
    let o = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .current_dir(repo(""))
        .arg("simulate")
        .arg(&out)
        .args(readme_command())
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let ours = tree(&out);
    let shipped = tree(&repo("demo_data/m-052"));
    assert_eq!(
        ours.keys().collect::<Vec<_>>(),
        shipped.keys().collect::<Vec<_>>()
    );
    for (name, bytes) in &ours {
        assert!(
            bytes == &shipped[name],
            "{name} differs from the shipped demo"
        );
    }
    let total: usize = shipped.values().map(Vec::len).sum();
    assert!(total < 3 << 20, "{total} bytes");
    assert!(shipped.keys().any(|k| k.ends_with("events.csv")));
}

#[test]
fn the_blocked_light_answers_less_than_the_control_light() {
    let subject = trialdesk::data::load(&repo("demo_data/m-052"))
        .unwrap()
        .subject;
    let obs = observe(&subject, &ObsOptions::default()).unwrap();
    let last = subject.sessions.len() - 1;
    // Probe trials: a light alone (a plain single-cue trial: its cue window is `cue`).
    let session = &subject.sessions[last];
    let mean_probe = |name: &str| {
        let v: Vec<f64> = obs
            .iter()
            .filter(|o| o.session == last)
            .filter(|o| {
                let t = &session.trials[o.trial];
                !t.has_events() && session.cue_name(t) == Some(name)
            })
            .filter_map(|o| o.cue)
            .collect();
        assert!(v.len() >= 3, "{name}: {} probe trials", v.len());
        v.iter().sum::<f64>() / v.len() as f64
    };
    let (b, d) = (mean_probe("light-b"), mean_probe("light-d"));
    assert!(
        d > b + 1.0,
        "blocked B {b} vs control D {d} (spikes/s above baseline)"
    );
}

/// The same result as the user reads it: `summary`'s table by trial type names the probe
/// types and shows the blocked light's cue response near zero next to the control light's.
#[test]
fn summary_by_trial_type_shows_the_blocked_probe_next_to_its_control() {
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(["summary", "--format", "csv"])
        .arg(repo("demo_data/m-052"))
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8(out.stdout).unwrap();
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let mut probe = BTreeMap::new();
    let mut types = std::collections::BTreeSet::new();
    for row in reader.records() {
        let row = row.unwrap();
        if &row[4] == "type_trials" {
            types.insert(row[5].to_string());
        }
        if &row[4] == "type_cue_response" && row[3] == *"6" {
            probe.insert(row[5].to_string(), row[6].parse::<f64>().unwrap());
        }
    }
    for t in [
        "tone-a rewarded",
        "tone-a + light-b rewarded",
        "tone-c + light-d rewarded",
        "light-b omission",
        "light-d omission",
    ] {
        assert!(types.contains(t), "{t} missing from {types:?}");
    }
    let (b, d) = (probe["light-b omission"], probe["light-d omission"]);
    assert!(
        b.abs() < 1.0 && d > b + 1.0,
        "blocked B {b} vs control D {d}"
    );
}

/// A plain one-cue subject gets no table by trial type (its output stays as it was).
#[test]
fn a_plain_subject_has_no_table_by_trial_type() {
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("summary")
        .arg(repo("demo_data/m-041"))
        .output()
        .unwrap();
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        out.status.success() && !text.contains("by trial type"),
        "{text}"
    );
}

/// The fit says it too: in `fit`'s trials.csv the model's predicted cue response to the blocked
/// light probed alone (B, day 6) stays near zero while the control light's (D) is clearly
/// positive, and the observed probe responses agree in sign and order.
#[test]
fn the_fitted_model_predicts_the_blocked_probe_near_zero() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-052");
    for (rel, bytes) in tree(&repo("demo_data/m-052")) {
        let to = subject.join(rel);
        std::fs::create_dir_all(to.parent().unwrap()).unwrap();
        std::fs::write(to, bytes).unwrap();
    }
    let out_dir = tmp.path().join("fit");
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("fit")
        .arg(&subject)
        .args([
            "--bootstrap",
            "0",
            "--no-compare",
            "--no-sensitivity",
            "--no-save",
        ])
        .arg("--out")
        .arg(&out_dir)
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    // Probe trials: a light alone, its trials.csv cue.
    let mut probes: BTreeMap<i64, String> = BTreeMap::new();
    let day6 = repo("demo_data/m-052/2026-03-07");
    let mut r = csv::Reader::from_path(day6.join("trials.csv")).unwrap();
    for row in r.records() {
        let row = row.unwrap();
        if row[1].starts_with("light") {
            probes.insert(row[0].parse().unwrap(), row[1].to_string());
        }
    }
    let mut reader = csv::Reader::from_path(out_dir.join("trials.csv")).unwrap();
    let mut sums: BTreeMap<String, (f64, f64, usize)> = BTreeMap::new();
    for row in reader.records() {
        let row = row.unwrap();
        let trial: i64 = row[1].parse().unwrap();
        if &row[0] != "2026-03-07" || !row[2].starts_with("cue:") {
            continue;
        }
        let Some(cue) = probes.get(&trial) else {
            continue;
        };
        let (obs, pred): (f64, f64) = (row[3].parse().unwrap(), row[4].parse().unwrap());
        let e = sums.entry(cue.clone()).or_default();
        *e = (e.0 + obs, e.1 + pred, e.2 + 1);
    }
    let probe = |cue: &str| {
        let (o, p, n) = sums[cue];
        assert!(n >= 3, "{cue}: {n} probe windows");
        (o / n as f64, p / n as f64)
    };
    let ((ob, pb), (od, pd)) = (probe("light-b"), probe("light-d"));
    assert!(
        pb.abs() < 0.5 * pd && pd > 1.0,
        "predicted B {pb} vs D {pd}"
    );
    assert!(ob < od, "observed B {ob} vs D {od}");
}
