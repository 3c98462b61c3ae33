//! The terminal reviewer (`trialdesk review`): step through trials, see raster, licks and
//! activity beside the model's value and δ, mark and annotate trials into `marks.csv`.
//!
//! Start at [`app`] (the loop), then [`update`] (the one place state changes, from one
//! [`action::Action`]), [`state`] (what is shown) and [`screens`] (how, drawn from `&State`).
//! [`keymap`] turns key files into a lookup table; [`terminal`] puts the terminal back however
//! the program ends. The heavy numbers come from the core (`model`, `obs`, `marks`) via
//! [`derived`], computed when their inputs change, never per frame.

pub mod action;
pub mod app;
pub mod caps;
pub mod config;
pub mod derived;
mod editor;
pub mod follow;
pub mod input;
pub mod keymap;
pub mod screens;
pub mod state;
pub mod suggestions;
pub mod terminal;
pub mod theme;
pub mod update;
pub mod widgets;

pub use action::Action;
pub use state::State;
