//! Writing learning tables: aligned plain text for a terminal (fits 80 columns for up to two
//! cues), Markdown for a lab notebook, and tidy long-form CSV for pandas/R (one value per row:
//! `subject,session,date,day,measure,cue,value,n`; for the `type_*` measures of subjects with
//! event lists the `cue` column holds the trial type, e.g. `tone-a + light-b rewarded`). With
//! suggested-mark counts ([`render_with`]) a further table per subject, and CSV rows
//! `suggested:<rule id>`.

use super::cohort::CohortRow;
use super::suggested::{by_rule, legend};
use super::table::{md_escape, Cell, Table};
use super::{DayRow, Mean};
use crate::suggest::CATALOG;
use crate::util::fmt_f64;

/// One subject's rows and the header lines that say how they were measured.
#[derive(Debug, Clone, PartialEq)]
pub struct SubjectSummary {
    pub subject: String,
    pub rows: Vec<DayRow>,
    /// Provenance lines (signal, windows, exclusions, model source), printed above the tables
    /// in text and Markdown.
    pub notes: Vec<String>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Text,
    Csv,
    Markdown,
}

/// Pending suggested-mark counts of one subject: entry `i` belongs to `rows[i]` and lists
/// `(rule id, count)` in catalogue order, rules without suggestions left out
/// ([`super::suggested_counts`]).
pub type SuggestedCounts = Vec<Vec<(String, usize)>>;

/// The whole output in one format (CSV has no cohort rows: it is tidy, aggregate it there).
pub fn render(
    format: Format,
    subjects: &[SubjectSummary],
    cohort: Option<&[CohortRow]>,
) -> Result<String, csv::Error> {
    render_with(format, subjects, &[], cohort)
}

/// [`render`] with suggested-mark counts: `suggested[i]` belongs to `subjects[i]`; a subject
/// without an entry gets none of the suggestion table or rows.
pub fn render_with(
    format: Format,
    subjects: &[SubjectSummary],
    suggested: &[SuggestedCounts],
    cohort: Option<&[CohortRow]>,
) -> Result<String, csv::Error> {
    Ok(match format {
        Format::Text => text_with(subjects, suggested, cohort),
        Format::Markdown => markdown_with(subjects, suggested, cohort),
        Format::Csv => csv_with(subjects, suggested)?,
    })
}

fn num(m: &Mean) -> Cell {
    Cell::Num(m.value)
}

/// Column headers per cue: the cue names of the subject in the order they first occur.
fn cue_names(rows: &[DayRow]) -> Vec<String> {
    let mut names: Vec<String> = Vec::new();
    for r in rows {
        for c in &r.cues {
            if !names.contains(&c.cue) {
                names.push(c.cue.clone());
            }
        }
    }
    names
}

fn cue_cell(r: &DayRow, cue: &str, pick: impl Fn(&super::CueDay) -> Option<Mean>) -> Cell {
    Cell::Num(
        r.cues
            .iter()
            .find(|c| c.cue == cue)
            .and_then(pick)
            .and_then(|m| m.value),
    )
}

fn subject_tables(s: &SubjectSummary, suggested: Option<&SuggestedCounts>) -> Vec<Table> {
    // Sessions are usually named by their date: then one column says both.
    let show_date = s.rows.iter().any(|r| r.session != r.date);
    let lead = |r: &DayRow| {
        let mut v: Vec<Cell> = vec![r.day.to_string().into(), r.session.clone().into()];
        if show_date {
            v.push(r.date.clone().into());
        }
        v
    };
    let lead_h = || {
        let mut v = vec!["day".to_string(), "session".into()];
        if show_date {
            v.push("date".into());
        }
        v
    };
    let left = 1..(if show_date { 3 } else { 2 });
    let cues = cue_names(&s.rows);
    let mut tables = Vec::new();

    let mut h = lead_h();
    h.extend(
        [
            "trials", "rewarded", "omission", "unrew", "uncued", "excl", "susp",
        ]
        .map(String::from),
    );
    tables.push(Table {
        title: "Trials (all trials; excl/susp = standing marks)".into(),
        licks: 0,
        headers: h,
        rows: s
            .rows
            .iter()
            .map(|r| {
                let mut v = lead(r);
                v.extend(
                    [
                        r.trials,
                        r.counts.rewarded,
                        r.counts.omission,
                        r.counts.unrewarded_cue,
                        r.counts.uncued_reward,
                        r.excluded,
                        r.suspect,
                    ]
                    .map(|n| Cell::Text(n.to_string())),
                );
                v
            })
            .collect(),
        left: left.clone(),
        left_last: false,
        footer: Vec::new(),
    });

    let mut h = lead_h();
    h.extend(cues.iter().map(|c| format!("cue:{c}")));
    h.extend(["reward", "uncued", "omission", "licks/s"].map(String::from));
    tables.push(Table {
        title: "Responses (window mean - baseline; excluded trials left out)".into(),
        licks: 1,
        headers: h,
        rows: s
            .rows
            .iter()
            .map(|r| {
                let mut v = lead(r);
                v.extend(cues.iter().map(|c| cue_cell(r, c, |d| Some(d.response))));
                v.extend(
                    [
                        &r.reward_response,
                        &r.uncued_reward_response,
                        &r.omission_dip,
                        &r.lick_rate,
                    ]
                    .map(num),
                );
                v
            })
            .collect(),
        left: left.clone(),
        left_last: false,
        footer: compound_note(&s.rows),
    });

    // Licking per cue, the never-rewarded cue included (its own column above is the response):
    // only with licks and more than one cue, where it says more than the licks/s column.
    let licked = |c: &String| {
        s.rows
            .iter()
            .any(|r| r.cues.iter().any(|d| d.cue == *c && d.lick_rate.n > 0))
    };
    if cues.len() > 1 && cues.iter().any(licked) {
        let mut h = lead_h();
        h.extend(cues.iter().map(|c| format!("licks:{c}")));
        tables.push(Table {
            title: "Anticipatory licks/s by cue (a never-rewarded cue over the longest delay)"
                .into(),
            licks: cues.len(),
            headers: h,
            rows: s
                .rows
                .iter()
                .map(|r| {
                    let mut v = lead(r);
                    v.extend(cues.iter().map(|c| cue_cell(r, c, |d| Some(d.lick_rate))));
                    v
                })
                .collect(),
            left: left.clone(),
            left_last: false,
            footer: Vec::new(),
        });
    }

    if s.rows.iter().any(|r| r.model.is_some()) {
        let mut h = lead_h();
        h.extend(cues.iter().map(|c| format!("d:{c}")));
        h.extend(["d:reward", "d:uncued", "d:omission"].map(String::from));
        tables.push(Table {
            title: "Model delta summed over the same windows (same trials)".into(),
            licks: 0,
            headers: h,
            rows: s
                .rows
                .iter()
                .map(|r| {
                    let mut v = lead(r);
                    v.extend(cues.iter().map(|c| cue_cell(r, c, |d| d.model_delta)));
                    let blank = Mean::default();
                    let m = r.model.unwrap_or_default();
                    let pick = |x: Mean| num(if r.model.is_some() { &x } else { &blank });
                    v.extend([m.reward, m.uncued_reward, m.omission].map(pick));
                    v
                })
                .collect(),
            left: left.clone(),
            left_last: false,
            footer: Vec::new(),
        });
    }
    tables.extend(super::types::table(&s.rows, show_date));
    if let Some(counts) = suggested {
        let mut h = lead_h();
        h.extend(["suggested", "by rule"].map(String::from));
        let none = Vec::new();
        tables.push(Table {
            title: "Suggested marks (pending; accept or reject them in `trialdesk review`)".into(),
            licks: 0,
            headers: h,
            rows: s
                .rows
                .iter()
                .enumerate()
                .map(|(i, r)| {
                    let c = counts.get(i).unwrap_or(&none);
                    let mut v = lead(r);
                    v.push(c.iter().map(|(_, n)| n).sum::<usize>().to_string().into());
                    v.push(by_rule(c).into());
                    v
                })
                .collect(),
            left,
            left_last: true,
            footer: legend(counts),
        });
    }
    tables
}

/// With event lists a cue column mixes the cue alone and in compounds: say so.
fn compound_note(rows: &[DayRow]) -> Vec<String> {
    match rows.iter().any(|r| r.event_trials > 0) {
        true => vec![
            "cue:<name>: every trial presenting the cue, alone or in a compound \
                      (the table by trial type separates them)"
                .into(),
        ],
        false => Vec::new(),
    }
}

fn cohort_table(rows: &[CohortRow]) -> Table {
    let mut cues: Vec<String> = Vec::new();
    for r in rows {
        for (c, _) in &r.cues {
            if !cues.contains(c) {
                cues.push(c.clone());
            }
        }
    }
    let mut h = vec!["day".to_string(), "subjects".into()];
    h.extend(cues.iter().map(|c| format!("cue:{c}")));
    h.extend(["reward", "uncued", "omission", "licks/s"].map(String::from));
    Table {
        title: "Cohort: mean over subjects of each subject's day mean, by training day".into(),
        licks: 1,
        headers: h,
        rows: rows
            .iter()
            .map(|r| {
                let mut v: Vec<Cell> =
                    vec![r.day.to_string().into(), r.subjects.to_string().into()];
                v.extend(cues.iter().map(|c| {
                    Cell::Num(
                        r.cues
                            .iter()
                            .find(|(n, _)| n == c)
                            .and_then(|(_, m)| m.value),
                    )
                }));
                v.extend([&r.reward, &r.uncued_reward, &r.omission, &r.lick_rate].map(num));
                v
            })
            .collect(),
        left: 0..0,
        left_last: false,
        footer: Vec::new(),
    }
}

fn sessions(n: usize) -> String {
    if n == 1 {
        "1 session".to_string()
    } else {
        format!("{n} sessions")
    }
}

pub fn text(subjects: &[SubjectSummary], cohort: Option<&[CohortRow]>) -> String {
    text_with(subjects, &[], cohort)
}

fn text_with(
    subjects: &[SubjectSummary],
    suggested: &[SuggestedCounts],
    cohort: Option<&[CohortRow]>,
) -> String {
    let mut out = String::new();
    for (i, s) in subjects.iter().enumerate() {
        let trials: usize = s.rows.iter().map(|r| r.trials).sum();
        out.push_str(&format!(
            "Subject {}: {}, {} trials\n",
            s.subject,
            sessions(s.rows.len()),
            trials
        ));
        for n in &s.notes {
            out.push_str(&format!("  {n}\n"));
        }
        out.push('\n');
        for t in subject_tables(s, suggested.get(i)) {
            t.text(&mut out);
        }
    }
    if let Some(rows) = cohort {
        cohort_table(rows).text(&mut out);
    }
    out
}

pub fn markdown(subjects: &[SubjectSummary], cohort: Option<&[CohortRow]>) -> String {
    markdown_with(subjects, &[], cohort)
}

fn markdown_with(
    subjects: &[SubjectSummary],
    suggested: &[SuggestedCounts],
    cohort: Option<&[CohortRow]>,
) -> String {
    let mut out = String::new();
    for (i, s) in subjects.iter().enumerate() {
        let trials: usize = s.rows.iter().map(|r| r.trials).sum();
        out.push_str(&format!(
            "## Subject {}: {}, {} trials\n\n",
            md_escape(&s.subject),
            sessions(s.rows.len()),
            trials
        ));
        for n in &s.notes {
            out.push_str(&format!("- {}\n", md_escape(n)));
        }
        out.push('\n');
        for t in subject_tables(s, suggested.get(i)) {
            t.markdown(&mut out);
        }
    }
    if let Some(rows) = cohort {
        out.push_str("## Cohort\n\n");
        cohort_table(rows).markdown(&mut out);
    }
    out
}

/// A text cell that a spreadsheet would run as a formula (leading `=`, `+`, `-`, `@`, tab or
/// carriage return) gets a leading apostrophe (OWASP's CSV-injection advice). Numbers are
/// written by the program and never pass through here.
pub fn safe_cell(s: &str) -> String {
    match s.chars().next() {
        Some('=' | '+' | '-' | '@' | '\t' | '\r') => format!("'{s}"),
        _ => s.to_string(),
    }
}

/// Long-form CSV: one measured value per row.
pub fn csv(subjects: &[SubjectSummary]) -> Result<String, csv::Error> {
    csv_with(subjects, &[])
}

/// [`csv`] plus, for a subject with counts, one `suggested:<rule id>` row per catalogue rule
/// and session (value: pending suggestions, 0 included).
fn csv_with(
    subjects: &[SubjectSummary],
    suggested: &[SuggestedCounts],
) -> Result<String, csv::Error> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "subject", "session", "date", "day", "measure", "cue", "value", "n",
    ])?;
    for (si, s) in subjects.iter().enumerate() {
        for (ri, r) in s.rows.iter().enumerate() {
            let mut put = |measure: &str, cue: &str, value: String, n: String| {
                w.write_record([
                    safe_cell(&s.subject),
                    safe_cell(&r.session),
                    safe_cell(&r.date),
                    r.day.to_string(),
                    measure.to_string(),
                    safe_cell(cue),
                    value,
                    n,
                ])
            };
            let mean = |m: &Mean| (m.value.map(fmt_f64).unwrap_or_default(), m.n.to_string());
            for (measure, count) in [
                ("trials", r.trials),
                ("rewarded", r.counts.rewarded),
                ("omission", r.counts.omission),
                ("unrewarded_cue", r.counts.unrewarded_cue),
                ("uncued_reward", r.counts.uncued_reward),
                ("excluded", r.excluded),
                ("suspect", r.suspect),
            ] {
                put(measure, "", count.to_string(), String::new())?;
            }
            for c in &r.cues {
                put("cue_trials", &c.cue, c.trials.to_string(), String::new())?;
                let (v, n) = mean(&c.response);
                put("cue_response", &c.cue, v, n)?;
                let (v, n) = mean(&c.lick_rate);
                put("anticipatory_lick_rate", &c.cue, v, n)?;
                if let Some(m) = &c.model_delta {
                    let (v, n) = mean(m);
                    put("model_delta_cue", &c.cue, v, n)?;
                }
            }
            for (measure, m) in [
                ("reward_response", &r.reward_response),
                ("uncued_reward_response", &r.uncued_reward_response),
                ("omission_response", &r.omission_dip),
            ] {
                let (v, n) = mean(m);
                put(measure, "", v, n)?;
            }
            if let Some(md) = &r.model {
                for (measure, m) in [
                    ("model_delta_reward", &md.reward),
                    ("model_delta_uncued_reward", &md.uncued_reward),
                    ("model_delta_omission", &md.omission),
                ] {
                    let (v, n) = mean(m);
                    put(measure, "", v, n)?;
                }
            }
            if s.rows.iter().any(|r| r.event_trials > 0) {
                for t in &r.types {
                    put("type_trials", &t.label, t.trials.to_string(), String::new())?;
                    let mut means = vec![
                        ("type_cue_response", Some(t.cue_response)),
                        ("type_reward_response", Some(t.reward_response)),
                        ("type_anticipatory_lick_rate", Some(t.lick_rate)),
                    ];
                    if r.model.is_some() {
                        means.push(("type_model_delta_cue", t.model_cue));
                        means.push(("type_model_delta_reward", t.model_reward));
                    }
                    for (measure, m) in means {
                        let (v, n) = mean(&m.unwrap_or_default());
                        put(measure, &t.label, v, n)?;
                    }
                }
            }
            if let Some(counts) = suggested.get(si) {
                let session = counts.get(ri).map(Vec::as_slice).unwrap_or_default();
                for rule in &CATALOG {
                    let n = session
                        .iter()
                        .find(|(id, _)| id == rule.id)
                        .map_or(0, |(_, n)| *n);
                    let measure = format!("suggested:{}", rule.id);
                    put(&measure, "", n.to_string(), String::new())?;
                }
            }
        }
    }
    let bytes = w
        .into_inner()
        .map_err(|e| csv::Error::from(e.into_error()))?;
    Ok(String::from_utf8(bytes).expect("csv of UTF-8 strings is UTF-8"))
}
