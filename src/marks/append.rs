//! Appending to the journal: one row, durable before returning, safe against other writers and
//! against a torn tail left by an earlier interrupted write (see the module notes in `marks`).

use super::csvline::{is_blank, parse_fields, push_field, BoundaryScan, MAX_RECORD_BYTES};
use super::read::{
    fingerprint, identity, is_header_prefix, lock_within, parse_row, valid_at, Columns, COLUMNS,
    HEADER_LINE, MAX_JOURNAL_BYTES,
};
use super::safety;
use super::{MarkKind, MarkRow, MarksError, MARKS_FILE, TORN_LINE_REASON};
use std::collections::BTreeMap;
use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, SeekFrom, Write};
use std::os::unix::fs::OpenOptionsExt;
use std::path::Path;
use std::sync::Mutex;

/// Per file (device, inode): an offset known to be a record boundary, because this process
/// wrote up to it, and the bytes just before it. The next append scans only from there, so a
/// long reviewer session does not re-read the whole journal on every key press. Safe because
/// the journal only ever grows; the bytes catch a new file that reuses a deleted one's inode.
static CLEAN_ENDS: Mutex<BTreeMap<FileId, (u64, Vec<u8>)>> = Mutex::new(BTreeMap::new());

/// (device, inode).
type FileId = (u64, u64);

/// How long an append waits for other writers. Each holds the lock for one write and one
/// sync (milliseconds); a longer wait means a stuck process, and an error says so instead of
/// freezing the reviewer.
const WRITE_LOCK_WAIT: std::time::Duration = std::time::Duration::from_secs(10);

/// Append one row to the session's journal, durably (written and synced to disk before
/// returning), under an exclusive file lock so concurrent reviewers lose nothing.
///
/// Creates `marks.csv` with its header when absent (and syncs the folder so the new file
/// survives a power cut). A torn tail from an earlier interrupted write is sealed first.
/// Refuses a journal whose columns are not in the order it writes.
pub fn append(session_dir: &Path, row: &MarkRow) -> Result<(), MarksError> {
    append_within(session_dir, row, WRITE_LOCK_WAIT)
}

/// [`append`], waiting at most `wait` for another writer's lock. The reviewer waits a
/// fraction of a second and keeps the row in memory (retried every second) rather than freeze
/// while a stuck process holds the journal.
pub fn append_within(
    session_dir: &Path,
    row: &MarkRow,
    wait: std::time::Duration,
) -> Result<(), MarksError> {
    let path = session_dir.join(MARKS_FILE);
    let line = encode_row(row).map_err(|m| MarksError::invalid(&path, m))?;
    safety::check_entry(&path)?;
    let mut file = OpenOptions::new()
        .read(true)
        .append(true)
        .create(true)
        .custom_flags(safety::OPEN_FLAGS)
        .open(&path)
        .map_err(|e| safety::open_error(&path, e))?;
    // The entry may have changed between the look and the open: check what was opened.
    let opened = file.metadata().map_err(|e| MarksError::io(&path, e))?;
    safety::check_meta(&path, &opened)?;
    lock_within(&file, &path, wait, false).map_err(|e| match e {
        MarksError::Invalid { path, message } => MarksError::Invalid {
            path,
            message: format!("{message}; the mark was not saved"),
        },
        other => other,
    })?;
    // The folder is synced before unlocking: a second writer's row, acknowledged right after,
    // must not depend on a directory entry that is not yet on disk.
    let result = write_locked(&mut file, &path, &line, &row.reviewer).and_then(|created| {
        if created {
            crate::safe_write::sync_dir(session_dir).map_err(|e| MarksError::io(session_dir, e))
        } else {
            Ok(())
        }
    });
    let _ = file.unlock();
    result
}

/// The row as one CSV line (with its newline), after checking it is one the reader accepts.
pub fn encode_row(row: &MarkRow) -> Result<String, String> {
    if row.trial.is_none() && row.mark != MarkKind::Note {
        return Err(format!(
            "a {} row needs a trial number; only a note may leave trial empty",
            row.mark.as_str()
        ));
    }
    if !valid_at(&row.at) {
        return Err(format!(
            "`at` must be an RFC 3339 UTC time like 2026-03-02T09:30:00Z, got {:?}",
            row.at
        ));
    }
    let mut out = String::new();
    if let Some(t) = row.trial {
        out.push_str(&t.to_string());
    }
    out.push(',');
    out.push_str(row.mark.as_str());
    for field in [&row.reason, &row.note, &row.reviewer] {
        out.push(',');
        push_field(&mut out, field);
    }
    out.push(',');
    out.push_str(&row.at);
    if out.len() > MAX_RECORD_BYTES {
        return Err(format!(
            "the row is {} bytes; the journal takes at most {MAX_RECORD_BYTES} bytes per row (shorten the note)",
            out.len()
        ));
    }
    out.push('\n');
    Ok(out)
}

/// A whole journal (header and `rows`) as text, for writing a new file in one piece.
pub fn journal_text(rows: &[MarkRow]) -> Result<String, String> {
    let mut text = HEADER_LINE.to_string();
    for row in rows {
        text.push_str(&encode_row(row)?);
    }
    Ok(text)
}

/// The current time as RFC 3339 UTC with milliseconds (`2026-03-02T09:30:00.123Z`).
pub fn now_rfc3339() -> String {
    humantime::format_rfc3339_millis(std::time::SystemTime::now()).to_string()
}

/// Who is marking: the login name (`USER`, then `LOGNAME`), else "unknown". The reviewer's
/// config file, when it names someone, takes precedence over this.
pub fn reviewer_name() -> String {
    ["USER", "LOGNAME"]
        .iter()
        .filter_map(|k| std::env::var(k).ok())
        .map(|v| v.trim().to_string())
        .find(|v| !v.is_empty())
        .or_else(account_name)
        .unwrap_or_else(|| "unknown".to_string())
}

/// The login name of the process's user from /etc/passwd, for shells (tmux, cron, sudo -i)
/// that set neither USER nor LOGNAME.
fn account_name() -> Option<String> {
    use std::os::unix::fs::MetadataExt;
    let uid = std::fs::metadata("/proc/self").ok()?.uid();
    let passwd = std::fs::read_to_string("/etc/passwd").ok()?;
    passwd.lines().find_map(|line| {
        let mut fields = line.split(':');
        let name = fields.next()?;
        let id: u32 = fields.nth(1)?.parse().ok()?;
        (id == uid && !name.is_empty()).then(|| name.to_string())
    })
}

/// What has to be written before the new row so that it starts a record of its own.
#[derive(Debug, PartialEq, Eq)]
enum Fixup {
    /// The file ends on a record boundary.
    None,
    /// The header is missing or was cut short: write the rest of it.
    Header(&'static str),
    /// The last record is whole but lacks its newline.
    Newline,
    /// The last record is torn: close its quote if open, end it, write the sealing note.
    Seal { close_quote: bool },
}

/// Runs under the exclusive lock. Returns whether the header was written (a new file).
fn write_locked(
    file: &mut File,
    path: &Path,
    line: &str,
    reviewer: &str,
) -> Result<bool, MarksError> {
    let io = |e| MarksError::io(path, e);
    let meta = file.metadata().map_err(io)?;
    let len = meta.len();
    if len > MAX_JOURNAL_BYTES {
        return Err(MarksError::invalid(
            path,
            format!("{len} bytes; refusing to grow a journal past {MAX_JOURNAL_BYTES} bytes"),
        ));
    }
    let id = identity(&meta);
    let fixup = inspect(file, path, len, id)?;
    let mut out = String::new();
    match fixup {
        Fixup::None => {}
        Fixup::Header(rest) => out.push_str(rest),
        Fixup::Newline => out.push('\n'),
        Fixup::Seal { close_quote } => {
            if close_quote {
                out.push('"');
            }
            out.push('\n');
            let seal = MarkRow {
                trial: None,
                mark: MarkKind::Note,
                reason: TORN_LINE_REASON.to_string(),
                note:
                    "an interrupted write left an incomplete line just above; trialdesk ignores it"
                        .to_string(),
                reviewer: reviewer.to_string(),
                at: now_rfc3339(),
            };
            out.push_str(&encode_row(&seal).map_err(|m| MarksError::invalid(path, m))?);
        }
    }
    out.push_str(line);
    // One write: a process killed mid-append leaves all of it or none of it.
    file.write_all(out.as_bytes()).map_err(io)?;
    file.sync_data().map_err(io)?;
    if let Some(id) = id {
        let mut ends = CLEAN_ENDS.lock().unwrap_or_else(|p| p.into_inner());
        ends.insert(
            id,
            (len + out.len() as u64, fingerprint(&[], out.as_bytes())),
        );
    }
    Ok(matches!(fixup, Fixup::Header(_)))
}

/// Decide what must precede the new row, reading as little of the file as it can.
fn inspect(
    file: &mut File,
    path: &Path,
    len: u64,
    id: Option<(u64, u64)>,
) -> Result<Fixup, MarksError> {
    let io = |e| MarksError::io(path, e);
    let known = id.and_then(|id| {
        let ends = CLEAN_ENDS.lock().unwrap_or_else(|p| p.into_inner());
        ends.get(&id).cloned()
    });
    let known = match known {
        Some((k, fp)) if k <= len && k >= fp.len() as u64 => {
            let mut before = vec![0u8; fp.len()];
            file.seek(SeekFrom::Start(k - fp.len() as u64))
                .map_err(io)?;
            file.read_exact(&mut before).map_err(io)?;
            (before == fp).then_some(k)
        }
        _ => None,
    };
    let from = match known {
        Some(k) => k,
        None => match header_end(file, path, len)? {
            HeaderEnd::At(end) => end,
            HeaderEnd::Incomplete(rest) => return Ok(Fixup::Header(rest)),
        },
    };
    let mut scan = BoundaryScan::at(from);
    file.seek(SeekFrom::Start(from)).map_err(io)?;
    let mut chunk = vec![0u8; 1 << 16];
    let mut offset = from;
    while offset < len {
        let want = chunk.len().min((len - offset) as usize);
        file.read_exact(&mut chunk[..want]).map_err(io)?;
        scan.feed(offset, &chunk[..want]);
        offset += want as u64;
    }
    if scan.record_start == len {
        return Ok(Fixup::None);
    }
    if scan.state.open_quote() {
        return Ok(Fixup::Seal { close_quote: true });
    }
    let tail_len = len - scan.record_start;
    if tail_len > MAX_RECORD_BYTES as u64 + 1 {
        return Ok(Fixup::Seal { close_quote: false });
    }
    let mut tail = vec![0u8; tail_len as usize];
    file.seek(SeekFrom::Start(scan.record_start)).map_err(io)?;
    file.read_exact(&mut tail).map_err(io)?;
    // Same test as the reader: a whole row that only lacks its newline is a row.
    if is_blank(&tail) || parse_row(&tail, &Columns::CANONICAL).is_ok() {
        Ok(Fixup::Newline)
    } else {
        Ok(Fixup::Seal { close_quote: false })
    }
}

enum HeaderEnd {
    /// Offset just after the header's newline.
    At(u64),
    /// The file holds only a cut-short header (or nothing): the rest of it to write.
    Incomplete(&'static str),
}

/// Find the end of the header and check it is the layout this appender writes.
fn header_end(file: &mut File, path: &Path, len: u64) -> Result<HeaderEnd, MarksError> {
    let io = |e| MarksError::io(path, e);
    let mut head = Vec::new();
    file.seek(SeekFrom::Start(0)).map_err(io)?;
    (&mut *file)
        .take(MAX_RECORD_BYTES as u64 + 8)
        .read_to_end(&mut head)
        .map_err(io)?;
    let bom = if head.starts_with(b"\xEF\xBB\xBF") {
        3
    } else {
        0
    };
    // Blank lines before the header are skipped by the reader, so here too.
    let blank = head[bom..]
        .iter()
        .take_while(|&&b| b == b'\n' || b == b'\r')
        .count();
    let lead = bom
        + head[bom..bom + blank]
            .iter()
            .rposition(|&b| b == b'\n')
            .map_or(0, |p| p + 1);
    let body = &head[lead..];
    let Some(nl) = body.iter().position(|&b| b == b'\n') else {
        if head.len() as u64 == len && is_header_prefix(body) {
            let done = body.strip_suffix(b"\r").unwrap_or(body).len();
            return Ok(HeaderEnd::Incomplete(&HEADER_LINE[done..]));
        }
        return Err(MarksError::invalid(
            path,
            "the first line is not the marks header trial,mark,reason,note,reviewer,at",
        ));
    };
    let names = parse_fields(&body[..nl]).unwrap_or_default();
    if names.iter().map(|n| n.trim()).ne(COLUMNS.iter().copied()) {
        return Err(MarksError::invalid(
            path,
            "columns are not trial,mark,reason,note,reviewer,at in that order; \
             trialdesk only appends to the layout it writes, so that no row lands in the wrong column",
        ));
    }
    Ok(HeaderEnd::At((lead + nl + 1) as u64))
}

#[cfg(test)]
mod account_tests {
    #[test]
    fn account_name_matches_the_process_owner() {
        // Any Linux test host has /etc/passwd with an entry for the running user.
        let name = super::account_name().expect("an /etc/passwd entry for this uid");
        let home_owner = std::process::Command::new("id").arg("-un").output();
        if let Ok(out) = home_owner {
            assert_eq!(name, String::from_utf8_lossy(&out.stdout).trim());
        }
    }
}
