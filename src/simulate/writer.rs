//! Lays a simulated subject out on disk in the brief's data layout: `OUT/<date>/session.toml`,
//! `trials.csv`, `spikes.csv`, `licks.csv`, `photometry.csv`, plus `OUT/truth.toml`.
//!
//! Numbers are pre-rounded (times to 0.1 ms) and written in the shortest form that reads back
//! to the same f64, so files are small and byte-identical for the same random seed.

use super::truth::Truth;
use super::Simulated;
use crate::data::{EventKind, Session};
use crate::util::fmt_f64;
use serde::Serialize;
use std::fs;
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

#[derive(Debug, thiserror::Error)]
pub enum WriteError {
    #[error("{0} exists and is not empty; pass --force to replace the simulated subject in it")]
    NotEmpty(PathBuf),
    #[error("{0} exists and is not a folder")]
    NotADir(PathBuf),
    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: io::Error,
    },
    #[error(transparent)]
    Write(#[from] crate::safe_write::WriteError),
}

fn io_at(path: &Path) -> impl FnOnce(io::Error) -> WriteError + '_ {
    move |source| WriteError::Io {
        path: path.to_path_buf(),
        source,
    }
}

/// The files a session folder of ours may hold (marks.csv: a reviewer may have added one).
const SESSION_FILES: [&str; 7] = [
    "session.toml",
    "trials.csv",
    "events.csv",
    "spikes.csv",
    "licks.csv",
    "photometry.csv",
    "marks.csv",
];

/// Write `sim` into the subject folder `out`. An existing non-empty `out` is refused unless
/// `force`; with `force`, earlier session folders and truth.toml in it are removed first (other
/// files are left alone) so no stale day survives.
pub fn write_subject(sim: &Simulated, out: &Path, force: bool) -> Result<(), WriteError> {
    if out.exists() {
        if !out.is_dir() {
            return Err(WriteError::NotADir(out.to_path_buf()));
        }
        let non_empty = fs::read_dir(out).map_err(io_at(out))?.next().is_some();
        if non_empty {
            if !force {
                return Err(WriteError::NotEmpty(out.to_path_buf()));
            }
            clear_simulated(out)?;
        }
    }
    crate::safe_write::create_dirs(out)?;
    for session in &sim.subject.sessions {
        let dir = out.join(&session.name);
        crate::safe_write::create_dirs(&dir)?;
        write_session(session, &dir)?;
    }
    if sim.config.faults.any() {
        let path = out.join(FAULTS_FILE);
        write_csv(&path, |w| {
            writeln!(w, "session,trial,fault,detail")?;
            for f in &sim.faults {
                let trial = f.trial.map(|t| t.to_string()).unwrap_or_default();
                let name = &sim.subject.sessions[f.session].name;
                // Details never hold quotes; commas would, so quote them.
                writeln!(w, "{name},{trial},{},\"{}\"", f.kind.name(), f.detail)?;
            }
            Ok(())
        })?;
    }
    let path = out.join("truth.toml");
    Ok(crate::safe_write::replace_file(
        &path,
        Truth::of(sim).to_toml().as_bytes(),
    )?)
}

/// Injected faults, one row per trial (`trial` empty for a whole-session fault), written
/// beside truth.toml only when faults were asked for.
pub const FAULTS_FILE: &str = "faults.csv";

fn clear_simulated(out: &Path) -> Result<(), WriteError> {
    for entry in fs::read_dir(out).map_err(io_at(out))? {
        let dir = entry.map_err(io_at(out))?.path();
        if dir.is_dir() && dir.join("session.toml").is_file() {
            for name in SESSION_FILES {
                let f = dir.join(name);
                if f.exists() {
                    fs::remove_file(&f).map_err(io_at(&f))?;
                }
            }
            // Left in place if the user kept something else there.
            let _ = fs::remove_dir(&dir);
        }
    }
    for name in ["truth.toml", FAULTS_FILE] {
        let f = out.join(name);
        if f.exists() {
            fs::remove_file(&f).map_err(io_at(&f))?;
        }
    }
    Ok(())
}

#[derive(Serialize)]
struct SessionToml<'a> {
    subject: &'a str,
    date: &'a str,
    #[serde(skip_serializing_if = "Option::is_none")]
    start_time: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    rig: Option<&'a str>,
    cue: Vec<CueToml<'a>>,
}

#[derive(Serialize)]
struct CueToml<'a> {
    name: &'a str,
    #[serde(skip_serializing_if = "Option::is_none")]
    reward_delay_s: Option<f64>,
}

fn write_session(session: &Session, dir: &Path) -> Result<(), WriteError> {
    let meta = &session.meta;
    let toml_text = toml::to_string(&SessionToml {
        subject: &meta.subject,
        date: &meta.date,
        start_time: meta.start_time.as_deref(),
        rig: meta.rig.as_deref(),
        cue: meta
            .cues
            .iter()
            .map(|c| CueToml {
                name: &c.name,
                reward_delay_s: c.reward_delay_s,
            })
            .collect(),
    })
    .expect("plain tables serialise");
    let path = dir.join("session.toml");
    crate::safe_write::replace_file(&path, toml_text.as_bytes())?;

    let opt = |x: Option<f64>| x.map(fmt_f64).unwrap_or_default();
    // cue_off_s and events.csv only when a design asked for them: plain subjects are
    // written exactly as before.
    let offsets = session.trials.iter().any(|t| t.cue_off_s.is_some());
    write_csv(&dir.join("trials.csv"), |w| {
        let extra = if offsets { ",cue_off_s" } else { "" };
        writeln!(w, "trial,cue,cue_s,reward_s,reward_ul{extra}")?;
        for t in &session.trials {
            write!(
                w,
                "{},{},{},{},{}",
                t.number,
                session.cue_name(t).unwrap_or(""),
                opt(t.cue_s),
                opt(t.reward_s),
                fmt_f64(t.reward_ul)
            )?;
            match offsets {
                true => writeln!(w, ",{}", opt(t.cue_off_s))?,
                false => writeln!(w)?,
            }
        }
        Ok(())
    })?;
    if session.trials.iter().any(|t| !t.events.is_empty()) {
        write_csv(&dir.join("events.csv"), |w| {
            writeln!(w, "trial,kind,name,onset_s,offset_s,size")?;
            for t in &session.trials {
                for e in &t.events {
                    let name = e.cue.map_or("", |c| session.meta.cues[c].name.as_str());
                    let (kind, size) = match e.kind {
                        EventKind::Cue => ("cue", String::new()),
                        EventKind::Reward => ("reward", fmt_f64(e.size)),
                    };
                    let (on, off) = (fmt_f64(e.onset_s), opt(e.offset_s));
                    writeln!(w, "{},{kind},{name},{on},{off},{size}", t.number)?;
                }
            }
            Ok(())
        })?;
    }
    if let Some(spikes) = &session.spikes {
        write_csv(&dir.join("spikes.csv"), |w| {
            writeln!(w, "unit,time_s")?;
            for (unit, times) in spikes.units.iter().zip(&spikes.times) {
                for &t in times {
                    writeln!(w, "{unit},{}", fmt_f64(t))?;
                }
            }
            Ok(())
        })?;
    }
    if let Some(licks) = &session.licks {
        write_csv(&dir.join("licks.csv"), |w| {
            writeln!(w, "time_s")?;
            for &t in licks {
                writeln!(w, "{}", fmt_f64(t))?;
            }
            Ok(())
        })?;
    }
    if let Some(ph) = &session.photometry {
        write_csv(&dir.join("photometry.csv"), |w| {
            match &ph.control {
                Some(control) => {
                    writeln!(w, "time_s,signal,control")?;
                    for ((t, s), c) in ph.time_s.iter().zip(&ph.signal).zip(control) {
                        writeln!(w, "{},{},{}", fmt_f64(*t), fmt_f64(*s), fmt_f64(*c))?;
                    }
                }
                None => {
                    writeln!(w, "time_s,signal")?;
                    for (t, s) in ph.time_s.iter().zip(&ph.signal) {
                        writeln!(w, "{},{}", fmt_f64(*t), fmt_f64(*s))?;
                    }
                }
            }
            Ok(())
        })?;
    }
    Ok(())
}

fn write_csv(
    path: &Path,
    body: impl FnOnce(&mut BufWriter<fs::File>) -> io::Result<()>,
) -> Result<(), WriteError> {
    Ok(crate::safe_write::replace_with(path, body)?)
}
