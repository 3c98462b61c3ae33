//! Keymaps as data: parsing the TOML files in `keymaps/` and the user's file, merging them,
//! and looking keys up. Pure (no terminal I/O), so every rule here is unit-tested.
//!
//! File format:
//! ```toml
//! layout = "one_handed"        # optional, user files only: start from this shipped layout
//! [keys]
//! next_trial = ["j", "down"]   # action name = one key or a list of keys
//! quit = "q"
//! ```
//! Key names: a single character (`"G"` is shift-g), or `space enter esc tab backtab backspace
//! delete insert up down left right home end pageup pagedown f1`…`f12`, optionally prefixed
//! with `ctrl-` and/or `alt-`. An unknown action, an unknown key name or a key bound twice in one
//! file is an error naming the file and line. A later layer rebinds an action wholesale and takes
//! its keys away from whatever the earlier layer bound them to.

use super::action::{Action, BINDABLE};
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use std::collections::{BTreeMap, HashMap};
use std::fmt;

/// The shipped layouts, by name (the file stem in `keymaps/`).
pub const SHIPPED: &[(&str, &str)] = &[
    ("default", include_str!("../../keymaps/default.toml")),
    ("one_handed", include_str!("../../keymaps/one_handed.toml")),
];

/// One key with its modifiers, normalised so that a typed `G` and the name `"G"` compare equal.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct KeyChord {
    pub code: KeyCode,
    pub mods: KeyModifiers,
}

impl KeyChord {
    /// Normalise a terminal key event: shift is part of the character, not a modifier.
    pub fn from_event(ev: &KeyEvent) -> KeyChord {
        let mut mods = ev.modifiers & (KeyModifiers::CONTROL | KeyModifiers::ALT);
        let code = match ev.code {
            KeyCode::BackTab => KeyCode::BackTab,
            KeyCode::Char(c) if mods.contains(KeyModifiers::CONTROL) => {
                KeyCode::Char(c.to_ascii_lowercase())
            }
            other => other,
        };
        if matches!(code, KeyCode::Char(_)) && ev.modifiers.contains(KeyModifiers::SHIFT) {
            mods -= KeyModifiers::SHIFT;
        }
        KeyChord { code, mods }
    }

    /// Parse a key name as written in a keymap file.
    pub fn parse(name: &str) -> Option<KeyChord> {
        let mut mods = KeyModifiers::NONE;
        let mut rest = name;
        loop {
            if let Some(r) = rest.strip_prefix("ctrl-").filter(|r| !r.is_empty()) {
                mods |= KeyModifiers::CONTROL;
                rest = r;
            } else if let Some(r) = rest.strip_prefix("alt-").filter(|r| !r.is_empty()) {
                mods |= KeyModifiers::ALT;
                rest = r;
            } else {
                break;
            }
        }
        let mut chars = rest.chars();
        let code = match (chars.next(), chars.next()) {
            (Some(c), None) if !c.is_control() && c != ' ' => {
                if mods.contains(KeyModifiers::CONTROL) {
                    KeyCode::Char(c.to_ascii_lowercase())
                } else {
                    KeyCode::Char(c)
                }
            }
            _ => match rest {
                "space" => KeyCode::Char(' '),
                "enter" => KeyCode::Enter,
                "esc" => KeyCode::Esc,
                "tab" => KeyCode::Tab,
                "backtab" => KeyCode::BackTab,
                "backspace" => KeyCode::Backspace,
                "delete" => KeyCode::Delete,
                "insert" => KeyCode::Insert,
                "up" => KeyCode::Up,
                "down" => KeyCode::Down,
                "left" => KeyCode::Left,
                "right" => KeyCode::Right,
                "home" => KeyCode::Home,
                "end" => KeyCode::End,
                "pageup" => KeyCode::PageUp,
                "pagedown" => KeyCode::PageDown,
                f if f.starts_with('f') => match f[1..].parse::<u8>() {
                    Ok(n @ 1..=12) => KeyCode::F(n),
                    _ => return None,
                },
                _ => return None,
            },
        };
        Some(KeyChord { code, mods })
    }
}

impl fmt::Display for KeyChord {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.mods.contains(KeyModifiers::CONTROL) {
            f.write_str("ctrl-")?;
        }
        if self.mods.contains(KeyModifiers::ALT) {
            f.write_str("alt-")?;
        }
        match self.code {
            KeyCode::Char(' ') => f.write_str("space"),
            KeyCode::Char(c) => write!(f, "{c}"),
            KeyCode::Enter => f.write_str("enter"),
            KeyCode::Esc => f.write_str("esc"),
            KeyCode::Tab => f.write_str("tab"),
            KeyCode::BackTab => f.write_str("backtab"),
            KeyCode::Backspace => f.write_str("backspace"),
            KeyCode::Delete => f.write_str("delete"),
            KeyCode::Insert => f.write_str("insert"),
            KeyCode::Up => f.write_str("up"),
            KeyCode::Down => f.write_str("down"),
            KeyCode::Left => f.write_str("left"),
            KeyCode::Right => f.write_str("right"),
            KeyCode::Home => f.write_str("home"),
            KeyCode::End => f.write_str("end"),
            KeyCode::PageUp => f.write_str("pageup"),
            KeyCode::PageDown => f.write_str("pagedown"),
            KeyCode::F(n) => write!(f, "f{n}"),
            other => write!(f, "{other:?}"),
        }
    }
}

/// A keymap problem, pointing at the file and line.
#[derive(Debug, Clone, PartialEq)]
pub struct KeymapError {
    pub file: String,
    pub line: Option<usize>,
    pub message: String,
}

impl fmt::Display for KeymapError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(l) => write!(f, "{}:{}: {}", self.file, l, self.message),
            None => write!(f, "{}: {}", self.file, self.message),
        }
    }
}

impl std::error::Error for KeymapError {}

#[derive(serde::Deserialize)]
#[serde(untagged)]
enum OneOrMany {
    One(String),
    Many(Vec<String>),
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    layout: Option<toml::Spanned<String>>,
    #[serde(default)]
    keys: BTreeMap<toml::Spanned<String>, toml::Spanned<OneOrMany>>,
}

/// One parsed file: which shipped layout it builds on, and its bindings in file order.
#[derive(Debug, Clone, PartialEq)]
pub struct KeymapFile {
    pub layout: Option<String>,
    pub bindings: Vec<(Action, Vec<KeyChord>)>,
}

fn line_of(text: &str, offset: usize) -> usize {
    crate::util::line_at(text.as_bytes(), offset)
}

/// Parse one keymap file's text; `file` names it in errors.
pub fn parse_file(file: &str, text: &str) -> Result<KeymapFile, KeymapError> {
    let err = |line: Option<usize>, message: String| KeymapError {
        file: file.to_string(),
        line,
        message,
    };
    let raw: RawFile = toml::from_str(text).map_err(|e| {
        let line = e.span().map(|s| line_of(text, s.start));
        err(line, e.message().trim().to_string())
    })?;
    let layout = match raw.layout {
        Some(l) => {
            if !SHIPPED.iter().any(|(n, _)| *n == l.get_ref().as_str()) {
                let names: Vec<&str> = SHIPPED.iter().map(|(n, _)| *n).collect();
                return Err(err(
                    Some(line_of(text, l.span().start)),
                    format!(
                        "unknown layout {:?} (expected one of {})",
                        l.get_ref(),
                        names.join(", ")
                    ),
                ));
            }
            Some(l.into_inner())
        }
        None => None,
    };
    let mut entries: Vec<_> = raw.keys.into_iter().collect();
    entries.sort_by_key(|(k, _)| k.span().start);
    let mut seen: HashMap<KeyChord, (usize, &'static str)> = HashMap::new();
    let mut bindings = Vec::new();
    for (name, keys) in entries {
        let line = line_of(text, name.span().start);
        let action = Action::from_name(name.get_ref()).ok_or_else(|| {
            err(
                Some(line),
                format!(
                    "unknown action {:?} (see the help overlay or keymaps/default.toml for the names)",
                    name.get_ref()
                ),
            )
        })?;
        let action_name = action.name().unwrap_or("?");
        let key_line = line_of(text, keys.span().start);
        let list = match keys.into_inner() {
            OneOrMany::One(k) => vec![k],
            OneOrMany::Many(ks) => ks,
        };
        let mut chords = Vec::new();
        for k in list {
            let chord = KeyChord::parse(&k).ok_or_else(|| {
                err(
                    Some(key_line),
                    format!(
                        "unknown key name {k:?} for {action_name} (expected a single character, \
                         a name such as enter, esc, up, pageup, f1, or ctrl-/alt- before one)"
                    ),
                )
            })?;
            if let Some((first_line, other)) = seen.get(&chord) {
                return Err(err(
                    Some(key_line),
                    format!(
                        "key {chord} is bound twice: to {action_name} here and to {other} on line {first_line}"
                    ),
                ));
            }
            seen.insert(chord, (key_line, action_name));
            chords.push(chord);
        }
        bindings.push((action, chords));
    }
    Ok(KeymapFile { layout, bindings })
}

/// The keymap in force: which action each key means, and the sources it came from.
#[derive(Debug, Clone, PartialEq)]
pub struct Keymap {
    /// Per bindable action, in help order, its keys.
    pub bindings: Vec<(Action, Vec<KeyChord>)>,
    /// Where the bindings came from, for the help overlay ("default", a file path, ...).
    pub sources: Vec<String>,
    lookup: HashMap<KeyChord, Action>,
}

impl Keymap {
    /// A shipped layout on its own.
    pub fn shipped(name: &str) -> Result<Keymap, KeymapError> {
        let text = SHIPPED
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, t)| *t)
            .ok_or_else(|| KeymapError {
                file: name.to_string(),
                line: None,
                message: "no such shipped layout".to_string(),
            })?;
        let file = parse_file(&format!("keymaps/{name}.toml"), text)?;
        let mut map = Keymap {
            bindings: BINDABLE.iter().map(|(a, _)| (*a, Vec::new())).collect(),
            sources: vec![name.to_string()],
            lookup: HashMap::new(),
        };
        map.overlay(&file);
        Ok(map)
    }

    /// The default layout with the given user files laid over it, in order. A file that names a
    /// `layout` starts over from that shipped layout.
    pub fn build(layers: &[(String, String)]) -> Result<Keymap, KeymapError> {
        let mut map = Keymap::shipped("default")?;
        for (file, text) in layers {
            let parsed = parse_file(file, text)?;
            if let Some(layout) = &parsed.layout {
                map = Keymap::shipped(layout)?;
            }
            map.overlay(&parsed);
            map.sources.push(file.clone());
        }
        Ok(map)
    }

    fn overlay(&mut self, file: &KeymapFile) {
        for (action, chords) in &file.bindings {
            for (a, keys) in self.bindings.iter_mut() {
                if a == action {
                    *keys = chords.clone();
                } else {
                    keys.retain(|k| !chords.contains(k));
                }
            }
        }
        self.lookup = self
            .bindings
            .iter()
            .flat_map(|(a, ks)| ks.iter().map(move |k| (*k, *a)))
            .collect();
    }

    /// The action a key means in normal mode.
    pub fn lookup(&self, key: &KeyEvent) -> Option<Action> {
        self.lookup.get(&KeyChord::from_event(key)).copied()
    }

    /// The keys bound to an action ("j, down"), for hints and help.
    pub fn keys_for(&self, action: Action) -> String {
        self.bindings
            .iter()
            .find(|(a, _)| *a == action)
            .map(|(_, ks)| {
                ks.iter()
                    .map(|k| k.to_string())
                    .collect::<Vec<_>>()
                    .join(", ")
            })
            .unwrap_or_default()
    }
}

/// Fixed keys of the reason picker.
pub fn picker_action(key: &KeyEvent) -> Option<Action> {
    match key.code {
        KeyCode::Up | KeyCode::Char('k') => Some(Action::PickerUp),
        KeyCode::Down | KeyCode::Char('j') => Some(Action::PickerDown),
        KeyCode::Enter => Some(Action::Confirm),
        KeyCode::Esc => Some(Action::Cancel),
        KeyCode::Char(c @ '1'..='9') => Some(Action::PickReason(c as usize - '1' as usize)),
        _ => None,
    }
}

/// Fixed keys of a yes/no question: y answers yes; n or esc answers no.
pub fn confirm_action(key: &KeyEvent) -> Option<Action> {
    match key.code {
        KeyCode::Char('y') | KeyCode::Char('Y') => Some(Action::Confirm),
        KeyCode::Char('n') | KeyCode::Char('N') | KeyCode::Esc => Some(Action::Cancel),
        _ => None,
    }
}

/// Fixed keys of the one-line note editor: printable characters type themselves.
pub fn editor_action(key: &KeyEvent) -> Option<Action> {
    let ctrl = key.modifiers.contains(KeyModifiers::CONTROL);
    match key.code {
        KeyCode::Enter => Some(Action::Confirm),
        KeyCode::Esc => Some(Action::Cancel),
        KeyCode::Backspace => Some(Action::DeleteBack),
        KeyCode::Left => Some(Action::CursorLeft),
        KeyCode::Right => Some(Action::CursorRight),
        KeyCode::Home => Some(Action::CursorHome),
        KeyCode::End => Some(Action::CursorEnd),
        KeyCode::Char('a') if ctrl => Some(Action::CursorHome),
        KeyCode::Char('e') if ctrl => Some(Action::CursorEnd),
        KeyCode::Char(c) if !ctrl && !c.is_control() => Some(Action::TypeChar(c)),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn key(code: KeyCode, mods: KeyModifiers) -> KeyEvent {
        KeyEvent::new(code, mods)
    }

    #[test]
    fn shipped_layouts_bind_every_action_once() {
        for (name, _) in SHIPPED {
            let map = Keymap::shipped(name).unwrap();
            for (a, ks) in &map.bindings {
                assert!(!ks.is_empty(), "{name}: {:?} unbound", a.name());
            }
        }
    }

    #[test]
    fn parses_key_names() {
        let g = KeyChord::parse("G").unwrap();
        assert_eq!(g.code, KeyCode::Char('G'));
        let typed = key(KeyCode::Char('G'), KeyModifiers::SHIFT);
        assert_eq!(KeyChord::from_event(&typed), g);
        let c = KeyChord::parse("ctrl-z").unwrap();
        assert_eq!(
            KeyChord::from_event(&key(KeyCode::Char('z'), KeyModifiers::CONTROL)),
            c
        );
        assert_eq!(KeyChord::parse("f5").unwrap().code, KeyCode::F(5));
        assert_eq!(KeyChord::parse("space").unwrap().code, KeyCode::Char(' '));
        for bad in ["f13", "ctrl-", "pgdn", "", "jk"] {
            assert_eq!(KeyChord::parse(bad), None, "{bad}");
        }
        for name in ["ctrl-alt-x", "pagedown", "?", "f12", "backtab"] {
            assert_eq!(KeyChord::parse(name).unwrap().to_string(), name);
        }
    }

    #[test]
    fn default_lookup() {
        let map = Keymap::build(&[]).unwrap();
        assert_eq!(
            map.lookup(&key(KeyCode::Char('j'), KeyModifiers::NONE)),
            Some(Action::NextTrial)
        );
        assert_eq!(
            map.lookup(&key(KeyCode::Down, KeyModifiers::NONE)),
            Some(Action::NextTrial)
        );
        assert_eq!(
            map.lookup(&key(KeyCode::Char('Z'), KeyModifiers::SHIFT)),
            None
        );
    }

    #[test]
    fn unknown_action_names_the_line() {
        let text = "[keys]\nnext_trial = \"j\"\nnext_trail = \"l\"\n";
        let e = parse_file("my.toml", text).unwrap_err();
        assert_eq!(e.line, Some(3));
        assert!(
            e.to_string()
                .starts_with("my.toml:3: unknown action \"next_trail\""),
            "{e}"
        );
    }

    #[test]
    fn unknown_key_names_the_line() {
        let text = "[keys]\n\nquit = [\"q\", \"escape\"]\n";
        let e = parse_file("my.toml", text).unwrap_err();
        assert_eq!(e.line, Some(3));
        assert!(
            e.message.contains("unknown key name \"escape\" for quit"),
            "{e}"
        );
    }

    #[test]
    fn key_bound_twice_names_both_lines() {
        let text = "[keys]\nnext_trial = \"j\"\nprev_trial = [\"k\", \"j\"]\n";
        let e = parse_file("my.toml", text).unwrap_err();
        assert_eq!(e.line, Some(3));
        assert!(
            e.message
                .contains("key j is bound twice: to prev_trial here and to next_trial on line 2"),
            "{e}"
        );
    }

    #[test]
    fn toml_syntax_error_has_a_line() {
        let e = parse_file("my.toml", "[keys]\nquit = \n").unwrap_err();
        assert_eq!(e.line, Some(2), "{e}");
    }

    #[test]
    fn user_layer_rebinds_and_steals_keys() {
        let user = "[keys]\nmark_suspect = \"j\"\n".to_string();
        let map = Keymap::build(&[("user.toml".into(), user)]).unwrap();
        assert_eq!(
            map.lookup(&key(KeyCode::Char('j'), KeyModifiers::NONE)),
            Some(Action::MarkSuspect)
        );
        // next_trial keeps its other keys.
        assert_eq!(
            map.lookup(&key(KeyCode::Down, KeyModifiers::NONE)),
            Some(Action::NextTrial)
        );
        let mut all: Vec<KeyChord> = map.bindings.iter().flat_map(|(_, k)| k.clone()).collect();
        let n = all.len();
        all.sort_by_key(|k| k.to_string());
        all.dedup();
        assert_eq!(all.len(), n, "a key is bound twice after merging");
    }

    #[test]
    fn user_file_can_pick_a_layout() {
        let user = "layout = \"one_handed\"\n".to_string();
        let map = Keymap::build(&[("user.toml".into(), user)]).unwrap();
        assert_eq!(map, {
            let mut m = Keymap::shipped("one_handed").unwrap();
            m.sources.push("user.toml".into());
            m
        });
        let bad = "layout = \"two_handed\"\n".to_string();
        let e = Keymap::build(&[("user.toml".into(), bad)]).unwrap_err();
        assert_eq!(e.line, Some(1));
    }

    #[test]
    fn picker_and_editor_keys() {
        assert_eq!(
            picker_action(&key(KeyCode::Char('3'), KeyModifiers::NONE)),
            Some(Action::PickReason(2))
        );
        assert_eq!(
            editor_action(&key(KeyCode::Char('q'), KeyModifiers::NONE)),
            Some(Action::TypeChar('q'))
        );
        assert_eq!(
            editor_action(&key(KeyCode::Char('q'), KeyModifiers::CONTROL)),
            None
        );
    }

    #[test]
    fn question_keys() {
        let k = |c| confirm_action(&key(c, KeyModifiers::NONE));
        assert_eq!(k(KeyCode::Char('y')), Some(Action::Confirm));
        assert_eq!(k(KeyCode::Char('n')), Some(Action::Cancel));
        assert_eq!(k(KeyCode::Esc), Some(Action::Cancel));
        // Enter is not an answer: accepting many rows takes a deliberate y.
        assert_eq!(k(KeyCode::Enter), None);
        assert_eq!(k(KeyCode::Char('j')), None);
    }
}
