//! Bytes from the terminal → key events.
//!
//! The reviewer reads its terminal itself (see [`super::TtyInput`]) so that a terminal that
//! went away ends the program; this is the decoding half. It knows what terminals send for the
//! keys a keymap can name: printable text (UTF-8), control characters, `ESC [` (CSI) and `ESC O`
//! (SS3) sequences for arrows, Home/End, PageUp/PageDown, Insert/Delete, F1–F12 and back-tab,
//! with xterm's modifier parameter (`ESC [ 1 ; 5 A` is ctrl-up), and ESC-prefixed keys as alt.
//! Anything else (mouse reports, focus events, unknown sequences) is consumed and ignored.
//! Uppercase letters carry SHIFT, as crossterm reports them, so keymap lookup is unchanged.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

const ESC: u8 = 0x1b;

/// Decodes a byte stream; bytes of a sequence cut between two reads wait for the next read.
#[derive(Debug, Default)]
pub struct KeyDecoder {
    pending: Vec<u8>,
}

/// What one attempt to decode at the front of the buffer found.
enum Step {
    /// A key, and how many bytes it took.
    Key(KeyEvent, usize),
    /// Bytes that mean nothing to us, skipped.
    Skip(usize),
    /// The buffer ends inside a sequence.
    Incomplete,
}

impl KeyDecoder {
    /// Feed bytes just read; returns the keys they complete. `more_may_follow` is false when
    /// the read returned everything there was: a lone ESC at the end is then the Esc key (a
    /// terminal writes a whole escape sequence at once), not the start of a sequence.
    pub fn feed(&mut self, bytes: &[u8], more_may_follow: bool) -> Vec<KeyEvent> {
        self.pending.extend_from_slice(bytes);
        let mut keys = Vec::new();
        let mut at = 0;
        while at < self.pending.len() {
            match decode(&self.pending[at..]) {
                Step::Key(k, n) => {
                    keys.push(k);
                    at += n;
                }
                Step::Skip(n) => at += n,
                Step::Incomplete => {
                    if !more_may_follow && self.pending[at] == ESC {
                        // ESC then an unfinished sequence: keep the sequence only if it can
                        // still finish; a lone ESC is the key.
                        if self.pending.len() - at == 1 {
                            keys.push(KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE));
                            at += 1;
                        }
                    }
                    break;
                }
            }
        }
        self.pending.drain(..at);
        // A sequence that never finishes must not grow without bound.
        if self.pending.len() > 64 {
            self.pending.clear();
        }
        keys
    }

    /// Called when no byte came for a while: a held ESC is the Esc key, half sequences go.
    pub fn flush(&mut self) -> Option<KeyEvent> {
        let lone_esc = self.pending == [ESC];
        self.pending.clear();
        lone_esc.then(|| KeyEvent::new(KeyCode::Esc, KeyModifiers::NONE))
    }
}

fn key(code: KeyCode, mods: KeyModifiers) -> KeyEvent {
    KeyEvent::new(code, mods)
}

fn decode(buf: &[u8]) -> Step {
    match buf[0] {
        ESC => decode_escape(buf),
        b => decode_plain(buf, b),
    }
}

/// One key that does not start with ESC.
fn decode_plain(buf: &[u8], b: u8) -> Step {
    let none = KeyModifiers::NONE;
    match b {
        b'\r' | b'\n' => Step::Key(key(KeyCode::Enter, none), 1),
        b'\t' => Step::Key(key(KeyCode::Tab, none), 1),
        0x7f | 0x08 => Step::Key(key(KeyCode::Backspace, none), 1),
        0x00 => Step::Key(key(KeyCode::Char(' '), KeyModifiers::CONTROL), 1),
        0x01..=0x1a => Step::Key(
            key(KeyCode::Char((b - 1 + b'a') as char), KeyModifiers::CONTROL),
            1,
        ),
        0x1c..=0x1f => Step::Key(
            key(
                KeyCode::Char((b - 0x1c + b'4') as char),
                KeyModifiers::CONTROL,
            ),
            1,
        ),
        _ => match decode_utf8(buf) {
            Some((c, n)) => {
                let mods = if c.is_uppercase() {
                    KeyModifiers::SHIFT
                } else {
                    none
                };
                Step::Key(key(KeyCode::Char(c), mods), n)
            }
            None if utf8_len(b).is_some_and(|n| n > buf.len()) => Step::Incomplete,
            None => Step::Skip(1),
        },
    }
}

fn utf8_len(first: u8) -> Option<usize> {
    match first {
        0x00..=0x7f => Some(1),
        0xc2..=0xdf => Some(2),
        0xe0..=0xef => Some(3),
        0xf0..=0xf4 => Some(4),
        _ => None,
    }
}

fn decode_utf8(buf: &[u8]) -> Option<(char, usize)> {
    let n = utf8_len(buf[0])?;
    let s = std::str::from_utf8(buf.get(..n)?).ok()?;
    s.chars().next().map(|c| (c, n))
}

/// ESC alone, ESC + key (alt), `ESC [ …` (CSI) or `ESC O x` (SS3).
fn decode_escape(buf: &[u8]) -> Step {
    let Some(&next) = buf.get(1) else {
        return Step::Incomplete;
    };
    match next {
        b'[' => decode_csi(buf),
        b'O' => match buf.get(2) {
            None => Step::Incomplete,
            Some(&f) => match final_key(f) {
                Some(code) => Step::Key(key(code, KeyModifiers::NONE), 3),
                None => Step::Skip(3),
            },
        },
        ESC => Step::Key(key(KeyCode::Esc, KeyModifiers::NONE), 1),
        _ => match decode_plain(&buf[1..], next) {
            Step::Key(mut k, n) => {
                k.modifiers |= KeyModifiers::ALT;
                Step::Key(k, n + 1)
            }
            Step::Skip(n) => Step::Skip(n + 1),
            Step::Incomplete => Step::Incomplete,
        },
    }
}

/// The key of a one-letter sequence end (`ESC [ A`, `ESC O P`, `ESC [ 1 ; 5 A`).
fn final_key(f: u8) -> Option<KeyCode> {
    Some(match f {
        b'A' => KeyCode::Up,
        b'B' => KeyCode::Down,
        b'C' => KeyCode::Right,
        b'D' => KeyCode::Left,
        b'H' => KeyCode::Home,
        b'F' => KeyCode::End,
        b'P' => KeyCode::F(1),
        b'Q' => KeyCode::F(2),
        b'R' => KeyCode::F(3),
        b'S' => KeyCode::F(4),
        _ => return None,
    })
}

/// The key of `ESC [ n ~` (VT220 style).
fn tilde_key(n: u16) -> Option<KeyCode> {
    Some(match n {
        1 | 7 => KeyCode::Home,
        2 => KeyCode::Insert,
        3 => KeyCode::Delete,
        4 | 8 => KeyCode::End,
        5 => KeyCode::PageUp,
        6 => KeyCode::PageDown,
        11..=15 => KeyCode::F((n - 10) as u8),
        17..=21 => KeyCode::F((n - 11) as u8),
        23 | 24 => KeyCode::F((n - 12) as u8),
        _ => return None,
    })
}

/// xterm's modifier parameter: 1 + (shift 1, alt 2, ctrl 4).
fn modifiers(param: Option<u16>) -> KeyModifiers {
    let bits = param.unwrap_or(1).saturating_sub(1);
    let mut m = KeyModifiers::NONE;
    if bits & 1 != 0 {
        m |= KeyModifiers::SHIFT;
    }
    if bits & 2 != 0 {
        m |= KeyModifiers::ALT;
    }
    if bits & 4 != 0 {
        m |= KeyModifiers::CONTROL;
    }
    m
}

fn decode_csi(buf: &[u8]) -> Step {
    // Parameter and intermediate bytes, then one final byte in 0x40..=0x7e.
    let Some(end) = buf[2..].iter().position(|b| (0x40..=0x7e).contains(b)) else {
        return if buf[2..].iter().all(|b| (0x20..=0x3f).contains(b)) {
            Step::Incomplete
        } else {
            Step::Skip(2)
        };
    };
    let len = 2 + end + 1;
    let params = &buf[2..2 + end];
    let fin = buf[2 + end];
    if params.first().is_some_and(|b| !b.is_ascii_digit()) {
        return Step::Skip(len); // private sequences: mouse (`<`), replies (`?`, `>`)
    }
    let nums: Vec<Option<u16>> = std::str::from_utf8(params)
        .unwrap_or("")
        .split(';')
        .map(|p| p.parse().ok())
        .collect();
    let first = nums.first().copied().flatten();
    let mods = modifiers(nums.get(1).copied().flatten());
    let code = match fin {
        b'~' => first.and_then(tilde_key),
        b'Z' => Some(KeyCode::BackTab),
        f => final_key(f),
    };
    match code {
        Some(KeyCode::BackTab) => Step::Key(key(KeyCode::BackTab, KeyModifiers::SHIFT), len),
        Some(c) => Step::Key(key(c, mods), len),
        None => Step::Skip(len),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn keys(bytes: &[u8]) -> Vec<(KeyCode, KeyModifiers)> {
        KeyDecoder::default()
            .feed(bytes, false)
            .into_iter()
            .map(|k| (k.code, k.modifiers))
            .collect()
    }

    const N: KeyModifiers = KeyModifiers::NONE;

    #[test]
    fn plain_and_control_keys() {
        assert_eq!(
            keys(b"jG \r\t\x7f\x1a"),
            vec![
                (KeyCode::Char('j'), N),
                (KeyCode::Char('G'), KeyModifiers::SHIFT),
                (KeyCode::Char(' '), N),
                (KeyCode::Enter, N),
                (KeyCode::Tab, N),
                (KeyCode::Backspace, N),
                (KeyCode::Char('z'), KeyModifiers::CONTROL),
            ]
        );
    }

    #[test]
    fn escape_sequences_of_common_terminals() {
        // xterm and VT220 sequences as terminfo lists them (common practice).
        let cases: &[(&[u8], KeyCode, KeyModifiers)] = &[
            (b"\x1b[A", KeyCode::Up, N),
            (b"\x1bOB", KeyCode::Down, N),
            (b"\x1b[5~", KeyCode::PageUp, N),
            (b"\x1b[6~", KeyCode::PageDown, N),
            (b"\x1b[1~", KeyCode::Home, N),
            (b"\x1b[F", KeyCode::End, N),
            (b"\x1b[3~", KeyCode::Delete, N),
            (b"\x1bOP", KeyCode::F(1), N),
            (b"\x1b[24~", KeyCode::F(12), N),
            (b"\x1b[Z", KeyCode::BackTab, KeyModifiers::SHIFT),
            (b"\x1b[1;5A", KeyCode::Up, KeyModifiers::CONTROL),
            (b"\x1bx", KeyCode::Char('x'), KeyModifiers::ALT),
            (b"\x1b", KeyCode::Esc, N),
        ];
        for (bytes, code, mods) in cases {
            assert_eq!(keys(bytes), vec![(*code, *mods)], "{bytes:?}");
        }
    }

    #[test]
    fn text_in_utf8_and_ignored_sequences() {
        assert_eq!(
            keys("é√".as_bytes()),
            vec![(KeyCode::Char('é'), N), (KeyCode::Char('√'), N)]
        );
        // A mouse report and a focus event are dropped; the key after them is kept.
        assert_eq!(keys(b"\x1b[<0;3;4M\x1b[Iq"), vec![(KeyCode::Char('q'), N)]);
        assert_eq!(keys(&[0xff, b'q']), vec![(KeyCode::Char('q'), N)]);
    }

    #[test]
    fn sequences_split_between_reads_wait_for_the_rest() {
        let mut d = KeyDecoder::default();
        assert!(d.feed(b"\x1b[", true).is_empty());
        assert!(d.feed(b"1;5", true).is_empty());
        let k = d.feed(b"Bj", false);
        assert_eq!(k[0].code, KeyCode::Down);
        assert_eq!(k[1].code, KeyCode::Char('j'));
        assert!(d.feed(&"é".as_bytes()[..1], true).is_empty());
        assert_eq!(
            d.feed(&"é".as_bytes()[1..], false)[0].code,
            KeyCode::Char('é')
        );
        // An ESC that arrived alone while more could follow is the Esc key once time passes.
        assert!(d.feed(b"\x1b", true).is_empty());
        assert_eq!(d.flush().map(|k| k.code), Some(KeyCode::Esc));
        assert_eq!(d.flush(), None);
    }

    #[test]
    fn garbage_never_grows_the_buffer() {
        let mut d = KeyDecoder::default();
        let mut junk = b"\x1b[".to_vec();
        junk.extend(std::iter::repeat_n(b'1', 500));
        d.feed(&junk, true);
        assert!(d.pending.len() <= 64);
        assert_eq!(d.feed(b"q", false).len(), 1);
    }
}
