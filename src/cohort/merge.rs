//! Joining per-subject result tables into one tidy table.
//!
//! A cohort fit writes `DIR/<subject>/params.csv` (and `trials.csv`) per subject, often from
//! many cluster tasks. [`merge_tables`] reads the chosen table of every sub-folder of `DIR`
//! (sorted by name), checks they have the same columns, and returns one table whose first
//! column is `subject` (the sub-folder name). Cells are copied as text, never re-parsed, so
//! numbers keep their exact written form.

use std::path::{Path, PathBuf};

/// The merged table plus what was found along the way.
#[derive(Debug, Clone, PartialEq)]
pub struct Merged {
    /// `subject` followed by the columns of the first table read.
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
    /// Sub-folders that had the table, in order.
    pub subjects: Vec<String>,
    /// Sub-folders without the table (a shard that has not run or a failed subject).
    pub missing: Vec<String>,
}

#[derive(Debug, thiserror::Error)]
pub enum MergeError {
    #[error("{}: cannot read: {source}", path.display())]
    Io {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("{}:{line}: {message}", path.display())]
    Bad {
        path: PathBuf,
        line: u64,
        message: String,
    },
    #[error("{}: no sub-folder holds {table} (expected {}/<subject>/{table}, as written by `trialdesk fit --out {}/<subject>`)", dir.display(), dir.display(), dir.display())]
    NoTables { dir: PathBuf, table: String },
}

/// Read `dir/<sub>/<table>` for every sub-folder (hidden ones skipped) and merge them.
pub fn merge_tables(dir: &Path, table: &str) -> Result<Merged, MergeError> {
    let io = |source| MergeError::Io {
        path: dir.to_path_buf(),
        source,
    };
    let mut subs: Vec<(String, PathBuf)> = Vec::new();
    for entry in std::fs::read_dir(dir).map_err(io)? {
        let entry = entry.map_err(io)?;
        let name = entry.file_name().to_string_lossy().into_owned();
        if !name.starts_with('.') && entry.path().is_dir() {
            subs.push((name, entry.path()));
        }
    }
    subs.sort();

    let mut merged = Merged {
        header: Vec::new(),
        rows: Vec::new(),
        subjects: Vec::new(),
        missing: Vec::new(),
    };
    // Columns of the first table, without `subject`.
    let mut columns: Option<Vec<String>> = None;
    for (name, sub) in subs {
        let path = sub.join(table);
        if !path.is_file() {
            merged.missing.push(name);
            continue;
        }
        let (header, rows) = read_table(&path)?;
        let order = match &columns {
            None => {
                columns = Some(header.clone());
                (0..header.len()).collect()
            }
            Some(cols) => reorder(&path, cols, &header)?,
        };
        for row in rows {
            let mut out = Vec::with_capacity(order.len() + 1);
            out.push(name.clone());
            out.extend(order.iter().map(|&i| row[i].clone()));
            merged.rows.push(out);
        }
        merged.subjects.push(name);
    }
    let Some(cols) = columns else {
        return Err(MergeError::NoTables {
            dir: dir.to_path_buf(),
            table: table.to_string(),
        });
    };
    merged.header = std::iter::once("subject".to_string()).chain(cols).collect();
    Ok(merged)
}

/// Header and rows of one CSV (BOM and CRLF tolerated); every row must have the header's width.
fn read_table(path: &Path) -> Result<(Vec<String>, Vec<Vec<String>>), MergeError> {
    let bytes = std::fs::read(path).map_err(|source| MergeError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(&bytes);
    let bad = |line: u64, message: String| MergeError::Bad {
        path: path.to_path_buf(),
        line,
        message,
    };
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .from_reader(bytes);
    let header: Vec<String> = reader
        .headers()
        .map_err(|e| bad(1, format!("unreadable header: {e}")))?
        .iter()
        .map(|h| h.trim().to_string())
        .collect();
    if header.iter().all(String::is_empty) {
        return Err(bad(1, "empty file: expected a header row".into()));
    }
    if let Some(dup) = header
        .iter()
        .enumerate()
        .find(|(i, h)| header[..*i].contains(h))
    {
        return Err(bad(1, format!("column '{}' appears twice", dup.1)));
    }
    if header.iter().any(|h| h == "subject") {
        return Err(bad(
            1,
            "already has a 'subject' column (is this a merged table?)".into(),
        ));
    }
    let mut rows = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let line = e.position().map(|p| p.line()).unwrap_or(0);
            bad(line, format!("unreadable row: {e}"))
        })?;
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        if record.len() == 1 && record[0].trim().is_empty() {
            continue;
        }
        if record.len() != header.len() {
            return Err(bad(
                line,
                format!(
                    "{} fields, expected {} (columns {})",
                    record.len(),
                    header.len(),
                    header.join(",")
                ),
            ));
        }
        rows.push(record.iter().map(str::to_string).collect());
    }
    Ok((header, rows))
}

/// Positions in `found` of each of `wanted`'s columns; the same set in any order is fine.
fn reorder(path: &Path, wanted: &[String], found: &[String]) -> Result<Vec<usize>, MergeError> {
    let mismatch = || MergeError::Bad {
        path: path.to_path_buf(),
        line: 1,
        message: format!(
            "columns {} differ from the first table's {}",
            found.join(","),
            wanted.join(",")
        ),
    };
    if wanted.len() != found.len() {
        return Err(mismatch());
    }
    wanted
        .iter()
        .map(|w| found.iter().position(|f| f == w).ok_or_else(mismatch))
        .collect()
}

/// The merged table as CSV text (quoted where needed).
pub fn to_csv(merged: &Merged) -> Result<String, csv::Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&merged.header)?;
    for r in &merged.rows {
        w.write_record(r)?;
    }
    let bytes = w.into_inner().map_err(|e| e.into_error())?;
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}
