//! SVG pictures for lab meetings: learning curves, observed vs predicted per trial, and the
//! session heat map. Pure functions from already-computed data to an SVG string; nothing here
//! loads data or writes files (`trialdesk plot` does).
//!
//! Start at [`curves::learning_curves`] (day rows and per-trial observations),
//! [`fit_trials::fit_trials`] (the fitter's per-window rows) and [`heatmap::heatmap`]
//! (trial × time rows). Drawing goes through plotters' SVG backend, which writes text as SVG
//! `<text>` and escapes `<`, `&` and quotes itself; labels come from data (cue names, session
//! folder names), so [`clean_label`] also drops the control characters XML 1.0 forbids, and
//! every text this module writes outside plotters goes through [`escape_xml`]. No font files
//! are read: the browser picks the font.

pub mod curves;
pub mod fit_trials;
pub mod heatmap;
mod panel;

pub use curves::{day_curves, learning_curves, trial_curves, TrialCurves};
pub use fit_trials::{fit_trials, FitTrialRow};
pub use heatmap::{heatmap, HeatMap};
pub use panel::Series;

/// Drawing failed inside the plotting crate (should not happen when writing to a string).
#[derive(Debug, thiserror::Error)]
#[error("drawing the picture failed: {0}")]
pub struct PlotError(pub String);

impl<E: std::error::Error + Send + Sync> From<plotters::drawing::DrawingAreaErrorKind<E>>
    for PlotError
{
    fn from(e: plotters::drawing::DrawingAreaErrorKind<E>) -> Self {
        PlotError(e.to_string())
    }
}

/// A label as it may appear in SVG text: control characters (forbidden in XML 1.0, and
/// meaningless in a picture) become spaces; long labels are cut to 60 characters.
pub fn clean_label(text: &str) -> String {
    let cleaned: String = text
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect();
    match cleaned.char_indices().nth(60) {
        Some((i, _)) => format!("{}…", &cleaned[..i]),
        None => cleaned,
    }
}

/// `text` safe inside XML character data and attribute values.
pub fn escape_xml(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in clean_label(text).chars() {
        match c {
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '&' => out.push_str("&amp;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c => out.push(c),
        }
    }
    out
}

/// Put a `<title>` (shown by browsers as the tab name and read by screen readers) right after
/// the opening `<svg ...>` tag.
pub(crate) fn with_title(mut svg: String, title: &str) -> String {
    if let Some(open) = svg.find("<svg") {
        if let Some(end) = svg[open..].find('>') {
            let at = open + end + 1;
            svg.insert_str(at, &format!("\n<title>{}</title>", escape_xml(title)));
        }
    }
    svg
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escaping_covers_markup_and_control_characters() {
        assert_eq!(
            escape_xml("a<b & \"c\" 'd'>\u{1}"),
            "a&lt;b &amp; &quot;c&quot; &apos;d&apos;&gt; "
        );
        assert_eq!(clean_label(&"x".repeat(70)).chars().count(), 61);
    }

    #[test]
    fn title_goes_inside_the_root_element() {
        let svg = with_title("<svg width=\"1\">\n</svg>".into(), "m<1>");
        assert_eq!(svg, "<svg width=\"1\">\n<title>m&lt;1&gt;</title>\n</svg>");
    }
}
