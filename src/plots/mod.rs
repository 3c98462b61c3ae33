//! SVG pictures for lab meetings: learning curves, observed vs predicted per trial, and the
//! session heat map. Pure functions from already-computed data to an SVG string; nothing here
//! loads data or writes files (`trialdesk plot` does).
//!
//! Start at [`curves::learning_curves`] (day rows and per-trial observations),
//! [`fit_trials::fit_trials`] (the fitter's per-window rows) and [`heatmap::heatmap`]
//! (trial × time rows). Drawing goes through plotters' SVG backend, which writes text as SVG
//! `<text>` and escapes `<`, `&` and quotes itself; labels come from data (cue names, session
//! folder names), so [`crate::text::svg_label`] also drops the control characters XML 1.0 forbids, and
//! every text this module writes outside plotters goes through [`crate::text::for_svg`]. No font files
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

/// Put a `<title>` (shown by browsers as the tab name and read by screen readers) right after
/// the opening `<svg ...>` tag.
pub(crate) fn with_title(mut svg: String, title: &str) -> String {
    if let Some(open) = svg.find("<svg") {
        if let Some(end) = svg[open..].find('>') {
            let at = open + end + 1;
            svg.insert_str(
                at,
                &format!("\n<title>{}</title>", crate::text::for_svg(title)),
            );
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
            crate::text::for_svg("a<b & \"c\" 'd'>\u{1}"),
            "a&lt;b &amp; &quot;c&quot; &apos;d&apos;&gt; "
        );
        assert_eq!(crate::text::svg_label(&"x".repeat(70)).chars().count(), 61);
    }

    #[test]
    fn title_goes_inside_the_root_element() {
        let svg = with_title("<svg width=\"1\">\n</svg>".into(), "m<1>");
        assert_eq!(svg, "<svg width=\"1\">\n<title>m&lt;1&gt;</title>\n</svg>");
    }
}
