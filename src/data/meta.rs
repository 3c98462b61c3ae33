//! `session.toml`: parsed with spans so every problem names its line.

use super::diag::Diagnostic;
use super::{CueDef, SessionMeta};
use serde::Deserialize;
use std::io::Read;
use std::path::Path;
use toml::{Spanned, Value};

/// File name of the session description; its presence makes a folder a session.
pub const SESSION_FILE: &str = "session.toml";

/// session.toml files are a few hundred bytes; anything much larger is a wrong file.
const MAX_META_BYTES: u64 = 1 << 20;

#[derive(Deserialize)]
struct RawMeta {
    subject: Option<Spanned<Value>>,
    date: Option<Spanned<Value>>,
    start_time: Option<Spanned<Value>>,
    rig: Option<Spanned<Value>>,
    cue: Option<Spanned<Vec<Spanned<RawCue>>>>,
}

#[derive(Deserialize)]
struct RawCue {
    name: Option<Spanned<Value>>,
    reward_delay_s: Option<Spanned<Value>>,
}

/// A `session.toml` that parsed as TOML: what could be read, and whether it was all valid
/// (the cues of a file with a bad date still let trials.csv be checked).
#[derive(Debug, Clone)]
pub struct MetaRead {
    pub meta: SessionMeta,
    pub ok: bool,
}

/// Read and validate `session.toml`; problems go to `out`. `None` if any error was found.
pub fn read_meta(path: &Path, out: &mut Vec<Diagnostic>) -> Option<SessionMeta> {
    read_meta_partial(path, out)
        .filter(|m| m.ok)
        .map(|m| m.meta)
}

/// Like [`read_meta`], keeping what was valid of a file with errors.
pub fn read_meta_partial(path: &Path, out: &mut Vec<Diagnostic>) -> Option<MetaRead> {
    let bytes = match read_limited(path) {
        Ok(b) => b,
        Err(d) => {
            out.push(d);
            return None;
        }
    };
    parse_meta_partial(path, &bytes, out)
}

fn read_limited(path: &Path) -> Result<Vec<u8>, Diagnostic> {
    let meta = std::fs::metadata(path).map_err(|e| {
        Diagnostic::error(path, format!("cannot read: {e}")).expected("a session.toml file")
    })?;
    if meta.is_dir() {
        return Err(Diagnostic::error(path, "is a folder").expected("a session.toml file"));
    }
    // A FIFO would block in `open` until some writer appears.
    if !meta.is_file() {
        return Err(Diagnostic::error(path, "not a regular file").expected("a session.toml file"));
    }
    // Read through `take`: a device or pipe reports length 0 and may never end.
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| f.take(MAX_META_BYTES + 1).read_to_end(&mut bytes))
        .map_err(|e| Diagnostic::error(path, format!("cannot read: {e}")))?;
    if bytes.len() as u64 > MAX_META_BYTES {
        return Err(
            Diagnostic::error(path, "file too large for a session description")
                .expected(format!("under {MAX_META_BYTES} bytes")),
        );
    }
    Ok(bytes)
}

/// Parse the bytes of a `session.toml` (separate from the file for tests); `None` on any error.
pub fn parse_meta(path: &Path, bytes: &[u8], out: &mut Vec<Diagnostic>) -> Option<SessionMeta> {
    parse_meta_partial(path, bytes, out)
        .filter(|m| m.ok)
        .map(|m| m.meta)
}

/// Parse what can be parsed; `None` only when the bytes are not TOML text at all.
pub fn parse_meta_partial(
    path: &Path,
    bytes: &[u8],
    out: &mut Vec<Diagnostic>,
) -> Option<MetaRead> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if let Some(pos) = bytes.iter().position(|&b| b == 0) {
        out.push(
            Diagnostic::error(path, "binary data (NUL byte)")
                .at_line(line_of(bytes, pos))
                .expected("a UTF-8 TOML text file"),
        );
        return None;
    }
    let text = match std::str::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => {
            out.push(
                Diagnostic::error(path, "not valid UTF-8 text")
                    .at_line(line_of(bytes, e.valid_up_to()))
                    .expected("a UTF-8 TOML text file"),
            );
            return None;
        }
    };
    let raw: RawMeta = match toml::from_str(text) {
        Ok(r) => r,
        Err(e) => {
            let msg = e.message().trim().replace('\n', " ");
            let d = Diagnostic::error(path, format!("not valid TOML: {msg}"))
                .expected("TOML like `subject = \"m-041\"` and `date = \"2026-03-02\"`");
            out.push(match e.span() {
                Some(span) => d.at_line(line_of(bytes, span.start)),
                None => d,
            });
            return None;
        }
    };
    super::lookalike::unknown_meta_keys(path, text, out);
    let before = out.iter().filter(|d| d.is_error()).count();
    let at = |span: std::ops::Range<usize>| line_of(bytes, span.start);
    let err = |line: u64, col: &str, msg: String, exp: &str| {
        Diagnostic::error(path, msg)
            .at_line(line)
            .column(col)
            .expected(exp)
    };

    let subject = match &raw.subject {
        None => {
            out.push(
                Diagnostic::error(path, "`subject` is missing")
                    .column("subject")
                    .expected("subject = \"<animal id>\""),
            );
            String::new()
        }
        Some(v) => match v.get_ref() {
            Value::String(s) if !s.trim().is_empty() => s.trim().to_string(),
            other => {
                out.push(err(
                    at(v.span()),
                    "subject",
                    format!("bad subject {}", show(other)),
                    "a non-empty text such as \"m-041\"",
                ));
                String::new()
            }
        },
    };

    let date = match &raw.date {
        None => {
            out.push(
                Diagnostic::error(path, "`date` is missing")
                    .column("date")
                    .expected("date = \"YYYY-MM-DD\""),
            );
            String::new()
        }
        Some(v) => {
            let text = match v.get_ref() {
                Value::String(s) => Some(s.trim().to_string()),
                Value::Datetime(d) => Some(d.to_string()),
                _ => None,
            };
            match text.as_deref().filter(|t| valid_iso_date(t)) {
                Some(t) => t.to_string(),
                None => {
                    out.push(err(
                        at(v.span()),
                        "date",
                        format!("bad date {}", show(v.get_ref())),
                        "an ISO date YYYY-MM-DD that exists, e.g. \"2026-03-02\"",
                    ));
                    String::new()
                }
            }
        }
    };

    let start_time = raw.start_time.as_ref().and_then(|v| {
        let text = match v.get_ref() {
            Value::String(s) => Some(s.trim().to_string()),
            Value::Datetime(d) => Some(d.to_string()),
            _ => None,
        };
        match text.as_deref().and_then(normalize_time) {
            Some(t) => Some(t),
            None => {
                out.push(err(
                    at(v.span()),
                    "start_time",
                    format!("bad start_time {}", show(v.get_ref())),
                    "a time of day HH:MM:SS, e.g. \"09:30:00\"",
                ));
                None
            }
        }
    });

    let rig = raw.rig.as_ref().and_then(|v| match v.get_ref() {
        Value::String(s) => Some(s.clone()),
        other => {
            out.push(err(
                at(v.span()),
                "rig",
                format!("bad rig {}", show(other)),
                "a text such as \"box-2\"",
            ));
            None
        }
    });

    let mut cues: Vec<CueDef> = Vec::new();
    for c in raw
        .cue
        .as_ref()
        .map(|c| c.get_ref().as_slice())
        .unwrap_or(&[])
    {
        let cue_line = at(c.span());
        let cue = c.get_ref();
        let name = match &cue.name {
            None => {
                out.push(err(
                    cue_line,
                    "cue.name",
                    "[[cue]] without a name".into(),
                    "name = \"<cue name>\"",
                ));
                continue;
            }
            Some(v) => match v.get_ref() {
                Value::String(s) if !s.trim().is_empty() => s.trim().to_string(),
                other => {
                    out.push(err(
                        at(v.span()),
                        "cue.name",
                        format!("bad cue name {}", show(other)),
                        "a non-empty text such as \"tone-hi\"",
                    ));
                    continue;
                }
            },
        };
        if cues.iter().any(|k| k.name == name) {
            out.push(err(
                cue.name.as_ref().map_or(cue_line, |v| at(v.span())),
                "cue.name",
                format!("cue `{name}` is declared twice"),
                "each cue name once",
            ));
            continue;
        }
        let reward_delay_s = match &cue.reward_delay_s {
            None => None,
            Some(v) => {
                let x = match v.get_ref() {
                    Value::Float(x) => Some(*x),
                    Value::Integer(i) => Some(*i as f64),
                    _ => None,
                };
                match x {
                    Some(x) if x.is_finite() && x >= 0.0 => Some(x),
                    _ => {
                        out.push(err(
                            at(v.span()),
                            "cue.reward_delay_s",
                            format!("bad reward_delay_s {} for cue `{name}`", show(v.get_ref())),
                            "seconds ≥ 0 from cue onset to reward, e.g. 1.5",
                        ));
                        None
                    }
                }
            }
        };
        cues.push(CueDef {
            name,
            reward_delay_s,
        });
    }

    let ok = out.iter().filter(|d| d.is_error()).count() == before;
    Some(MetaRead {
        meta: SessionMeta {
            subject,
            date,
            start_time,
            rig,
            cues,
        },
        ok,
    })
}

fn line_of(bytes: &[u8], pos: usize) -> u64 {
    crate::util::line_at(bytes, pos) as u64
}

fn show(v: &Value) -> String {
    let s = match v {
        Value::String(s) => format!("\"{s}\""),
        other => other.to_string(),
    };
    super::csvio::shorten(&s)
}

/// `YYYY-MM-DD` naming a real calendar day.
pub fn valid_iso_date(t: &str) -> bool {
    let b = t.as_bytes();
    if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
        return false;
    }
    let num = |r: std::ops::Range<usize>| -> Option<u32> {
        let s = &t[r];
        if s.bytes().all(|c| c.is_ascii_digit()) {
            s.parse().ok()
        } else {
            None
        }
    };
    let (Some(y), Some(m), Some(d)) = (num(0..4), num(5..7), num(8..10)) else {
        return false;
    };
    let leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    let days = match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if leap => 29,
        2 => 28,
        _ => return false,
    };
    (1..=days).contains(&d)
}

/// `HH:MM:SS` (or `HH:MM`, read as `HH:MM:00`); `None` if not a valid time of day.
pub fn normalize_time(t: &str) -> Option<String> {
    let parts: Vec<&str> = t.split(':').collect();
    if !(2..=3).contains(&parts.len()) {
        return None;
    }
    let mut vals = [0u32; 3];
    for (i, p) in parts.iter().enumerate() {
        if p.len() != 2 || !p.bytes().all(|c| c.is_ascii_digit()) {
            return None;
        }
        vals[i] = p.parse().ok()?;
    }
    if vals[0] > 23 || vals[1] > 59 || vals[2] > 59 {
        return None;
    }
    Some(format!("{:02}:{:02}:{:02}", vals[0], vals[1], vals[2]))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> (Option<SessionMeta>, Vec<Diagnostic>) {
        let mut out = Vec::new();
        let m = parse_meta(Path::new("session.toml"), text.as_bytes(), &mut out);
        (m, out)
    }

    #[test]
    fn reads_the_brief_example() {
        let (m, out) = parse(
            "subject = \"m-041\"\ndate = \"2026-03-02\"\nstart_time = \"09:30:00\"\nrig = \"box-2\"\n\
             [[cue]]\nname = \"tone-hi\"\nreward_delay_s = 1.5\n[[cue]]\nname = \"tone-lo\"\n",
        );
        assert!(out.is_empty(), "{out:?}");
        let m = m.unwrap();
        assert_eq!(m.subject, "m-041");
        assert_eq!(m.start_time.as_deref(), Some("09:30:00"));
        assert_eq!(m.cues.len(), 2);
        assert_eq!(m.cues[0].reward_delay_s, Some(1.5));
        assert_eq!(m.cues[1].reward_delay_s, None);
    }

    #[test]
    fn unquoted_toml_dates_and_integer_delays_are_accepted() {
        let (m, out) = parse("subject = \"a\"\ndate = 2026-03-02\nstart_time = 09:30:00\n[[cue]]\nname=\"x\"\nreward_delay_s = 2\n");
        assert!(out.is_empty(), "{out:?}");
        let m = m.unwrap();
        assert_eq!(m.date, "2026-03-02");
        assert_eq!(m.start_time.as_deref(), Some("09:30:00"));
        assert_eq!(m.cues[0].reward_delay_s, Some(2.0));
    }

    #[test]
    fn every_problem_is_reported_with_its_line() {
        let (m, out) = parse(
            "date = \"2026-02-30\"\nstart_time = \"25:00\"\n[[cue]]\nname = \"a\"\nreward_delay_s = -1\n[[cue]]\nname = \"a\"\n",
        );
        assert!(m.is_none());
        let cols: Vec<_> = out
            .iter()
            .map(|d| (d.column.clone().unwrap(), d.line))
            .collect();
        assert_eq!(
            cols,
            vec![
                ("subject".to_string(), None),
                ("date".to_string(), Some(1)),
                ("start_time".to_string(), Some(2)),
                ("cue.reward_delay_s".to_string(), Some(5)),
                ("cue.name".to_string(), Some(7)),
            ]
        );
    }

    #[test]
    fn dates_and_times() {
        assert!(valid_iso_date("2024-02-29"));
        assert!(!valid_iso_date("2023-02-29"));
        assert!(!valid_iso_date("2023-13-01"));
        assert!(!valid_iso_date("2023-1-01"));
        assert_eq!(normalize_time("9:30"), None);
        assert_eq!(normalize_time("09:30").as_deref(), Some("09:30:00"));
        assert_eq!(normalize_time("23:59:60"), None);
    }
}
