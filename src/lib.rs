//! trialdesk: review, mark and model Pavlovian conditioning sessions recorded with dopamine activity.
//!
//! The core (`data`, `marks`, `model`, `obs`, `fit`, `simulate`, `check`, `summary`) is free of
//! terminal code; `cli` and `tui` are thin shells over it. Start reading at `data` (what a session
//! is), then `model` (the TD learner), then `fit`.

pub mod ascii;
pub mod check;
pub mod cli;
pub mod cohort;
pub mod data;
pub mod fit;
pub mod marks;
pub mod model;
pub mod obs;
pub mod photometry;
pub mod plan;
pub mod plots;
pub mod safe_write;
pub mod simulate;
pub mod suggest;
pub mod summary;
pub mod text;
pub mod tui;
pub mod util;
