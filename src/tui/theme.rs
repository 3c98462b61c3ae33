//! How things look: glyphs for Unicode and plain-ASCII mode, styles with and without colour,
//! and [`clean`], the one gate every data string passes before it reaches the terminal.

use super::state::{Options, Tone};
use crate::marks::MarkKind;
use ratatui::style::{Color, Modifier, Style};
use ratatui::symbols::border;

/// Drawing choices fixed for the run (from `--ascii` and `NO_COLOR`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Theme {
    pub ascii: bool,
    pub color: bool,
}

/// What a piece of text is, so its style can be chosen in one place.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    Plain,
    Dim,
    Title,
    /// The current row of a list.
    Current,
    Exclude,
    Suspect,
    /// A suggested mark, not yet accepted or rejected.
    Suggest,
    Cue,
    Reward,
    Tone(Tone),
}

const ASCII_BORDER: border::Set = border::Set {
    top_left: "+",
    top_right: "+",
    bottom_left: "+",
    bottom_right: "+",
    vertical_left: "|",
    vertical_right: "|",
    horizontal_top: "-",
    horizontal_bottom: "-",
};

impl Theme {
    pub fn from_options(opts: &Options) -> Theme {
        Theme {
            ascii: opts.ascii,
            color: opts.color,
        }
    }

    pub fn style(&self, role: Role) -> Style {
        let s = Style::default();
        let c = |color: Color| if self.color { s.fg(color) } else { s };
        match role {
            Role::Plain => s,
            Role::Dim => {
                if self.color {
                    s.fg(Color::DarkGray)
                } else {
                    s
                }
            }
            Role::Title => s.add_modifier(Modifier::BOLD),
            Role::Current => s.add_modifier(Modifier::REVERSED),
            Role::Exclude => c(Color::LightRed).add_modifier(Modifier::BOLD),
            Role::Suspect => c(Color::Yellow),
            Role::Suggest => c(Color::Magenta),
            Role::Cue => c(Color::Cyan),
            Role::Reward => c(Color::LightGreen),
            Role::Tone(Tone::Info) => s,
            Role::Tone(Tone::Saved) => c(Color::Green),
            Role::Tone(Tone::Warn) => c(Color::Yellow),
            Role::Tone(Tone::Error) => c(Color::LightRed).add_modifier(Modifier::BOLD),
        }
    }

    pub fn border(&self) -> border::Set<'static> {
        if self.ascii {
            ASCII_BORDER
        } else {
            border::ROUNDED
        }
    }

    /// A horizontal rule character.
    pub fn rule(&self) -> &'static str {
        if self.ascii {
            "-"
        } else {
            "─"
        }
    }

    /// A vertical separator character.
    pub fn bar(&self) -> &'static str {
        if self.ascii {
            "|"
        } else {
            "│"
        }
    }

    /// Shading from empty to full, for heat rows.
    pub fn shades(&self) -> &'static [&'static str] {
        if self.ascii {
            &[" ", ".", ":", "+", "*", "#"]
        } else {
            &[" ", "·", "░", "▒", "▓", "█"]
        }
    }

    /// Raster cell for 1 or more spikes in a column.
    pub fn spike(&self, count: usize) -> &'static str {
        match (self.ascii, count) {
            (_, 0) => " ",
            (true, 1) => "|",
            (true, _) => "#",
            (false, 1) => "│",
            (false, _) => "┃",
        }
    }

    pub fn lick(&self) -> &'static str {
        if self.ascii {
            "v"
        } else {
            "▾"
        }
    }

    /// A point of a trace plot.
    pub fn dot(&self) -> &'static str {
        if self.ascii {
            "*"
        } else {
            "•"
        }
    }

    /// The guide line drawn down the plots at cue and reward times.
    pub fn guide(&self) -> &'static str {
        if self.ascii {
            ":"
        } else {
            "┊"
        }
    }

    /// Marks the current row beside the reverse video.
    pub fn pointer(&self) -> &'static str {
        if self.ascii {
            ">"
        } else {
            "▸"
        }
    }

    /// The ellipsis that ends cut text.
    pub fn ellipsis(&self) -> &'static str {
        if self.ascii {
            "~"
        } else {
            "…"
        }
    }

    /// Margin glyph for a standing mark, and its role.
    pub fn mark_glyph(&self, kind: Option<MarkKind>) -> (&'static str, Role) {
        match kind {
            Some(MarkKind::Exclude) => (if self.ascii { "X" } else { "✗" }, Role::Exclude),
            Some(MarkKind::Suspect) => ("?", Role::Suspect),
            _ => (" ", Role::Plain),
        }
    }

    /// Glyph for a pending suggested mark: a shape no mark uses, so it reads without colour.
    pub fn suggest_glyph(&self) -> &'static str {
        if self.ascii {
            "!"
        } else {
            "◇"
        }
    }

    /// Make a data string safe to draw: see [`clean`].
    pub fn clean(&self, s: &str) -> String {
        clean(s, self.ascii)
    }
}

/// Neutralise a data string before it is drawn: the screen policy of [`crate::text`]
/// (control and invisible characters become `?`; in ASCII mode every other non-ASCII character
/// is written in its ASCII spelling, `ΔF/F` → `dF/F`, or `?` when it has none).
/// ratatui writes cell contents, never raw escape sequences of ours, so nothing else is needed.
pub fn clean(s: &str, ascii: bool) -> String {
    crate::text::for_screen(s, ascii)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clean_neutralises_escapes_and_controls() {
        assert_eq!(clean("ok\x1b[2Jbad\x07", false), "ok?[2Jbad?");
        assert_eq!(clean("a\nb\tc\r\u{9b}", false), "a?b?c??");
        assert_eq!(clean("u\u{202E}1", false), "u?1");
        assert_eq!(clean("tône", false), "tône");
        assert_eq!(clean("tône", true), "tone");
        assert_eq!(clean("ΔF/F, α — γ", true), "dF/F, alpha - gamma");
        assert_eq!(clean("a😀b", true), "a?b");
    }
}
