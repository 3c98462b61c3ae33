//! Numbers on the reviewer's screens keep about three significant digits whatever their
//! magnitude: photometry ΔF/F responses of a few thousandths used to print as 0.0 on the days
//! screen while `summary` showed them, and the fit screen printed α with 17 digits.

mod tui_support;

use std::process::Command;
use tui_support::{frame_text, press, state};

/// A photometry-only subject from our simulator (no spikes.csv).
fn photometry_subject(dir: &std::path::Path) -> std::path::PathBuf {
    let subject = dir.join("m-photo");
    let o = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args([
            "simulate",
            subject.to_str().unwrap(),
            "--days",
            "2",
            "--trials-per-day",
            "30",
            "--units",
            "0",
            "--photometry",
            "on",
            "--seed",
            "5",
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    subject
}

#[test]
fn days_screen_shows_photometry_responses_with_their_digits() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = photometry_subject(tmp.path());
    let mut st = state(&subject);
    press(&mut st, "3");
    let text = frame_text(80, 24, &st);
    let row = text
        .lines()
        .find(|l| l.contains("2026-03-03"))
        .unwrap_or_else(|| panic!("{text}"));
    // Columns after the session name: trials excl susp cue reward omit licks dcue drew.
    let cells: Vec<&str> = row.split_whitespace().collect();
    let reward: f64 = cells[5].parse().unwrap_or_else(|_| panic!("{row}"));
    assert!(reward != 0.0, "reward response printed as zero: {row}");
    assert!(reward.abs() < 1.0, "not a ΔF/F value: {row}");
    // At least two significant digits survive.
    let digits = cells[5].trim_start_matches(['-', '0', '.']).len();
    assert!(digits >= 2, "{row}");
}

#[test]
fn numbers_follow_their_magnitude() {
    use trialdesk::util::{decimals_for, fmt_by_magnitude, fmt_sig};
    assert_eq!(decimals_for([12.5].into_iter()), 2);
    assert_eq!(decimals_for([0.004].into_iter()), 5);
    assert_eq!(fmt_by_magnitude(0.0123), "0.0123");
    assert_eq!(fmt_sig(0.019234567, 4), "0.01923");
    assert_eq!(fmt_sig(0.2, 4), "0.2");
    assert_eq!(fmt_sig(0.9956, 4), "0.9956");
    assert_eq!(fmt_sig(123.456, 4), "123.5");
}
