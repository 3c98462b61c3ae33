//! Small helpers shared by the core and the shells.

/// Format an f64 so that it reads back to the same value (Rust's `Display` is the shortest
/// round-trip form).
pub fn fmt_f64(x: f64) -> String {
    format!("{x}")
}
