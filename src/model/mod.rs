//! The temporal-difference learner of the design brief, and a trial-level Rescorla–Wagner
//! baseline.
//!
//! Flow: [`layout::layout_subject`] turns trials into spans of time bins, [`features`] gives the
//! stimulus representation of each bin, [`td::run`] walks every span in training order with
//! weights carried over and returns per-bin value and δ. The per-step rule is [`td::Learner`],
//! shared with the textbook checks. [`rw::run`] walks the same spans at trial level. The
//! simulator and the fitter call the same `td::run` / `td::run_in`.

pub mod defaults;
pub mod features;
pub mod labels;
pub mod layout;
mod layout_events;
pub mod rw;
pub mod td;

pub use features::{FeatureSpace, MicrostimulusParams, Representation};
pub use layout::{
    layout_subject, layout_subject_with_skips, SkippedTrial, SpanCue, SpanEvents, TrialSpan,
};
pub use td::{run, run_in, Learner, TdParams, TdRun};

/// Default model bin width, seconds ([`defaults::DT`]).
pub const DEFAULT_DT: f64 = defaults::DT;
/// Bins kept after the (expected) reward so a last-bin reward still gives a δ, seconds.
pub const POST_S: f64 = 1.0;
/// Tolerance that keeps an event exactly on a bin edge in the later bin (1.5/0.05 → 30).
pub const BIN_EPS: f64 = 1e-9;
