//! demo_data/ is exactly what its README's command makes, and the simulator is deterministic:
//! same random seed → same bytes, another seed → other bytes. The simulated subject loads and
//! checks clean through the same code a user's data goes through.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
}

fn repo(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)
}

/// Every file under `root`, by relative path, with its bytes (sorted, so comparisons list
/// missing and extra files deterministically).
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

/// The arguments after `trialdesk simulate` on the README's command line.
fn readme_command() -> (String, Vec<String>) {
    let readme = std::fs::read_to_string(repo("demo_data/README.md")).unwrap();
    let line = readme
        .lines()
        .map(str::trim)
        .find(|l| l.starts_with("trialdesk simulate "))
        .expect("README gives the command");
    let mut words = line.split_whitespace().skip(2).map(String::from);
    let out = words.next().expect("command names OUT");
    (out, words.collect())
}

fn simulate(out: &Path, args: &[&str]) -> std::process::Output {
    bin()
        .arg("simulate")
        .arg(out)
        .args(args)
        .output()
        .expect("binary runs")
}

#[test]
fn demo_data_is_reproduced_byte_for_byte() {
    let (out, args) = readme_command();
    let shipped = repo(&out);
    let tmp = tempfile::tempdir().unwrap();
    // The same folder name as the shipped copy: simulate names the subject after it.
    let fresh = tmp.path().join(shipped.file_name().unwrap());
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let o = simulate(&fresh, &args);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // Files other tools add to a subject (the reviewer's marks.csv, a saved fit) are not ours
    // to compare; every file the simulator writes must match.
    let want: BTreeMap<String, Vec<u8>> = tree(&shipped)
        .into_iter()
        .filter(|(name, _)| simulator_file(name))
        .collect();
    let got = tree(&fresh);
    assert_eq!(
        want.keys().collect::<Vec<_>>(),
        got.keys().collect::<Vec<_>>(),
        "file lists differ"
    );
    for (name, bytes) in &want {
        assert!(got[name] == *bytes, "{name} differs from the shipped demo");
    }
}

fn simulator_file(rel: &str) -> bool {
    let name = Path::new(rel).file_name().unwrap().to_string_lossy();
    [
        "truth.toml",
        "session.toml",
        "trials.csv",
        "spikes.csv",
        "licks.csv",
        "photometry.csv",
    ]
    .contains(&name.as_ref())
}

#[test]
fn demo_data_is_under_five_megabytes() {
    let (out, _) = readme_command();
    let total: usize = tree(&repo(&out))
        .iter()
        .filter(|(name, _)| simulator_file(name))
        .map(|(_, bytes)| bytes.len())
        .sum();
    assert!(total < 5_000_000, "demo subject is {total} bytes");
}

/// A small subject; the id is fixed so that folders of different names hold the same bytes.
const SMALL: [&str; 8] = [
    "--subject",
    "m-1",
    "--days",
    "2",
    "--trials-per-day",
    "30",
    "--photometry",
    "on",
];

#[test]
fn same_seed_same_bytes_other_seed_other_bytes() {
    let tmp = tempfile::tempdir().unwrap();
    let run = |name: &str, seed: &str| {
        let dir = tmp.path().join(name);
        let mut args = SMALL.to_vec();
        args.extend(["--seed", seed]);
        let o = simulate(&dir, &args);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        tree(&dir)
    };
    let a = run("a", "7");
    let b = run("b", "7");
    let c = run("c", "8");
    assert_eq!(a, b);
    assert_eq!(a.keys().collect::<Vec<_>>(), c.keys().collect::<Vec<_>>());
    for name in a.keys().filter(|n| n.ends_with(".csv")) {
        assert_ne!(a[name], c[name], "{name} ignores the random seed");
    }
}

#[test]
fn photometry_switch_leaves_other_outputs_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let on = tmp.path().join("on");
    let off = tmp.path().join("off");
    assert!(simulate(&on, &SMALL).status.success());
    assert!(simulate(&off, &SMALL[..6]).status.success());
    let (on, off) = (tree(&on), tree(&off));
    for (name, bytes) in &off {
        if name != "truth.toml" {
            assert!(on[name] == *bytes, "{name} changed with photometry on");
        }
    }
    assert!(on.keys().any(|n| n.ends_with("photometry.csv")));
    assert!(!off.keys().any(|n| n.ends_with("photometry.csv")));
}

#[test]
fn refuses_non_empty_out_without_force() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("m-1");
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("keep.txt"), "mine").unwrap();
    let o = simulate(&out, &SMALL[..4]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("not empty") && err.contains("--force"),
        "{err}"
    );
    assert_eq!(tree(&out).len(), 1, "nothing written");

    // --force replaces an earlier simulation entirely (no stale day survives) and keeps
    // unrelated files.
    let o = simulate(&out, &["--days", "3", "--trials-per-day", "10", "--force"]);
    assert!(o.status.success());
    let o = simulate(&out, &["--days", "1", "--trials-per-day", "10", "--force"]);
    assert!(o.status.success());
    let files = tree(&out);
    let days: std::collections::BTreeSet<&str> = files
        .keys()
        .filter_map(|k| k.split_once(std::path::MAIN_SEPARATOR).map(|(d, _)| d))
        .collect();
    assert_eq!(days.into_iter().collect::<Vec<_>>(), vec!["2026-03-02"]);
    assert!(files.contains_key("keep.txt"));
}

#[test]
fn bad_options_are_usage_errors() {
    let tmp = tempfile::tempdir().unwrap();
    for bad in [
        vec!["--cue", "tone-x:1.5:1"],
        vec!["--cue", "tone-x"],
        vec!["--alpha", "0"],
        vec!["--representation", "wavelet"],
        vec!["--start-date", "2026-02-30"],
        vec!["--photometry", "maybe"],
        vec!["--days", "0"],
        vec!["--motion", "1:0.2:1"],
        vec!["--photometry", "on", "--bleaching", "2:5"],
        vec!["--photometry", "on", "--motion", "1:0.2"],
    ] {
        let o = simulate(&tmp.path().join("x"), &bad);
        assert_eq!(o.status.code(), Some(2), "{bad:?}");
        assert!(!tmp.path().join("x").exists(), "{bad:?} wrote files");
    }
}

/// The simulated subject reads back, through `data::load`, to the subject the simulator held
/// in memory: same trials, spikes and licks, hence the same model spans and δ.
#[test]
fn simulated_subject_loads_back_identically() {
    use trialdesk::model::{layout_subject, run};
    use trialdesk::simulate::{simulate as sim, write_subject, SimConfig};
    let mut config = SimConfig::default();
    config.schedule.days = 3;
    config.schedule.trials_per_day = 40;
    config.photometry = Some(Default::default());
    let s = sim(&config).unwrap();
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("m-041");
    write_subject(&s, &out, false).unwrap();
    let loaded = trialdesk::data::load(&out).expect("loads").subject;
    assert_eq!(loaded.sessions.len(), 3);
    for (a, b) in s.subject.sessions.iter().zip(&loaded.sessions) {
        assert_eq!(a.name, b.name);
        assert_eq!(a.meta, b.meta);
        assert_eq!(a.trials, b.trials);
        assert_eq!(a.licks, b.licks);
        let (sa, sb) = (a.spikes.as_ref().unwrap(), b.spikes.as_ref().unwrap());
        assert_eq!(sa.units, sb.units);
        assert_eq!(sa.times, sb.times);
        let (pa, pb) = (
            a.photometry.as_ref().unwrap(),
            b.photometry.as_ref().unwrap(),
        );
        assert_eq!(pa.time_s, pb.time_s);
        assert_eq!(pa.signal, pb.signal);
        assert_eq!(pa.control, pb.control);
    }
    let spans = layout_subject(&loaded, config.td.dt);
    assert_eq!(spans, s.spans);
    let td = run(&spans, loaded.cue_names().len(), &config.td);
    assert_eq!(td.delta, s.td.delta);
}

#[test]
fn photometry_subject_with_artifacts_checks_clean() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("m-042");
    let mut args = SMALL.to_vec();
    args.extend(["--bleaching", "0.3:900", "--motion", "1:0.2:1"]);
    assert!(simulate(&out, &args).status.success());
    let o = bin().arg("check").arg(&out).output().unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );
    let truth = std::fs::read_to_string(out.join("truth.toml")).unwrap();
    assert!(truth.contains("bleaching_tau_s = 900.0") && truth.contains("motion_per_minute = 1.0"));
}

#[test]
fn demo_data_checks_clean() {
    let (out, _) = readme_command();
    let o = bin().arg("check").arg(repo(&out)).output().unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
}

/// The subject is named after OUT's folder unless --subject says otherwise, so subjects
/// simulated side by side with the same dates stay apart: `summary`, `fit` and `plot` take
/// the cohort folder, and only a true duplicate (same subject, same session name) is refused,
/// naming both folders.
#[test]
fn subjects_are_named_after_their_folder_and_share_dates_in_a_cohort() {
    let tmp = tempfile::tempdir().unwrap();
    let cohort = tmp.path().join("cohort");
    for (name, seed) in [("m-a", "1"), ("m-b", "2")] {
        let o = simulate(
            &cohort.join(name),
            &["--seed", seed, "--days", "2", "--trials-per-day", "30"],
        );
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let meta = std::fs::read_to_string(cohort.join("m-b/2026-03-02/session.toml")).unwrap();
    assert!(meta.contains("subject = \"m-b\""), "{meta}");
    let o = simulate(
        &tmp.path().join("x"),
        &["--subject", "m-9", "--days", "1", "--trials-per-day", "20"],
    );
    assert!(o.status.success());
    let meta = std::fs::read_to_string(tmp.path().join("x/2026-03-02/session.toml")).unwrap();
    assert!(meta.contains("subject = \"m-9\""), "{meta}");

    let run = |args: &[&str]| bin().args(args).output().unwrap();
    let c = cohort.to_str().unwrap();
    let o = run(&["summary", c]);
    assert!(
        o.status.success(),
        "summary: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let o = run(&["fit", c, "--bootstrap", "0", "--no-compare", "--no-save"]);
    assert!(
        o.status.success(),
        "fit: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let plots = tmp.path().join("plots");
    let o = run(&["plot", c, "--out", plots.to_str().unwrap()]);
    assert!(
        o.status.success(),
        "plot: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(plots.join("m-a/heatmap_2026-03-02.svg").is_file());
    assert!(plots.join("m-b/heatmap_2026-03-02.svg").is_file());

    // A true duplicate: one subject holding two folders of the same name.
    let dup = tmp.path().join("dup");
    for d in ["one", "two"] {
        let from = cohort.join("m-a/2026-03-02");
        let to = dup.join(d).join("2026-03-02");
        std::fs::create_dir_all(&to).unwrap();
        for f in std::fs::read_dir(&from).unwrap() {
            let f = f.unwrap().path();
            std::fs::copy(&f, to.join(f.file_name().unwrap())).unwrap();
        }
    }
    let o = run(&["check", dup.to_str().unwrap()]);
    let err = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(
        err.contains("session name `2026-03-02` is also used by"),
        "{err}"
    );
    assert!(err.contains("one") && err.contains("two"), "{err}");
}
