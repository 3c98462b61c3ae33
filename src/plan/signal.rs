//! Which recorded activity a subject's responses are measured on: one rule for every command.

use crate::data::Subject;
use crate::obs::Signal;

/// What the user asked for (`--signal`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SignalRequest {
    /// Decide from the data (and the saved fit, when the command reads one).
    #[default]
    Auto,
    Spikes,
    Photometry,
}

/// The signal in force, why, and which sessions lack it (their responses stay blank in tables;
/// the fitter refuses them).
#[derive(Debug, Clone, PartialEq)]
pub struct SignalChoice {
    pub signal: Signal,
    /// How it was chosen, in words, for reports and status lines.
    pub reason: String,
    /// Names of sessions that do not have this signal.
    pub missing: Vec<String>,
}

impl SignalChoice {
    /// The same words in every command and the reviewer when some sessions lack the signal.
    pub fn missing_note(&self) -> Option<String> {
        (!self.missing.is_empty()).then(|| {
            format!(
                "{} session(s) have no {}: {}",
                self.missing.len(),
                kind_word(&self.signal),
                self.missing.join(", ")
            )
        })
    }
}

fn kind_word(s: &Signal) -> &'static str {
    match s {
        Signal::Spikes { .. } => "spikes.csv with units",
        Signal::Photometry => "photometry.csv",
    }
}

fn has_spikes(s: &crate::data::Session) -> bool {
    s.spikes.as_ref().is_some_and(|sp| !sp.units.is_empty())
}

/// The rule, the same in `fit`, `summary`, `plot`, `model` and the reviewer:
/// an explicit `--signal` wins; `--unit` means spikes; else the saved fit's signal; else the
/// signal every session has (spikes first); else the one most sessions have (spikes on a tie).
/// `None` only when no session has either.
pub fn choose_signal(
    subject: &Subject,
    request: SignalRequest,
    unit: Option<&str>,
    saved: Option<&str>,
) -> Option<SignalChoice> {
    let spikes = Signal::Spikes {
        unit: unit.map(str::to_string),
    };
    let n = subject.sessions.len();
    let n_spikes = subject.sessions.iter().filter(|s| has_spikes(s)).count();
    let n_photometry = subject
        .sessions
        .iter()
        .filter(|s| s.photometry.is_some())
        .count();
    let (signal, reason) = match request {
        SignalRequest::Spikes => (spikes, "--signal spikes".to_string()),
        SignalRequest::Photometry => (Signal::Photometry, "--signal photometry".to_string()),
        SignalRequest::Auto if unit.is_some() => (spikes, "--unit given".to_string()),
        SignalRequest::Auto => match saved {
            Some("photometry") => (Signal::Photometry, "the saved fit's signal".to_string()),
            Some("spikes") => (spikes, "the saved fit's signal".to_string()),
            _ if n_spikes == 0 && n_photometry == 0 => return None,
            _ if n_spikes == n => (spikes, "every session has spikes".to_string()),
            _ if n_photometry == n => (
                Signal::Photometry,
                "every session has photometry".to_string(),
            ),
            _ if n_spikes >= n_photometry => (
                spikes,
                format!("spikes in {n_spikes} of {n} sessions, photometry in {n_photometry}"),
            ),
            _ => (
                Signal::Photometry,
                format!("photometry in {n_photometry} of {n} sessions, spikes in {n_spikes}"),
            ),
        },
    };
    let missing = subject
        .sessions
        .iter()
        .filter(|s| match signal {
            Signal::Spikes { .. } => !has_spikes(s),
            Signal::Photometry => s.photometry.is_none(),
        })
        .map(|s| s.name.clone())
        .collect();
    Some(SignalChoice {
        signal,
        reason,
        missing,
    })
}

/// The name a saved fit records for a signal.
pub fn signal_name(s: &Signal) -> &'static str {
    match s {
        Signal::Spikes { .. } => "spikes",
        Signal::Photometry => "photometry",
    }
}
