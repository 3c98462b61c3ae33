//! The trial screen's raster names its mode and what its rows are, before and after the
//! next-unit key switches from "all units of this trial" to "one unit across trials".

mod tui_support;

use tui_support::*;

#[test]
fn raster_heading_names_the_mode_and_its_rows() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir.join("2026-03-02"));
    let frame = frame_text(120, 40, &st);
    assert!(
        frame.contains("spikes: units of trial 1 (row = unit"),
        "{frame}"
    );
    press(&mut st, ".");
    let frame = frame_text(120, 40, &st);
    assert!(frame.contains("across trials (row = trial no."), "{frame}");
    assert!(!frame.contains("units of trial"), "{frame}");
}
