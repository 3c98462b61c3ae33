//! A table of formatted cells written as aligned text or Markdown; shared by the summary's
//! tables.

/// A table of already formatted cells; columns in `left` are left-aligned (text), the rest
/// right-aligned (numbers).
pub(super) struct Table {
    pub(super) title: String,
    pub(super) headers: Vec<String>,
    pub(super) rows: Vec<Vec<Cell>>,
    pub(super) left: std::ops::Range<usize>,
    /// The last column is left-aligned too (a list in words).
    pub(super) left_last: bool,
    /// Lines printed under the table (a legend).
    pub(super) footer: Vec<String>,
    /// Numeric columns in the same unit share one number of decimals: the last `licks` columns
    /// are licks/s, the other numbers the response unit.
    pub(super) licks: usize,
}

/// A table cell: text as is, or a number whose decimals are chosen per column.
pub(super) enum Cell {
    Text(String),
    Num(Option<f64>),
}

impl From<String> for Cell {
    fn from(s: String) -> Self {
        Cell::Text(s)
    }
}

use crate::util::decimals_for;

pub(super) fn fmt_num(v: Option<f64>, decimals: usize) -> String {
    match v {
        None => "-".to_string(),
        Some(v) => {
            let s = format!("{v:.decimals$}");
            // No "-0.00": a value that rounds to zero is shown as zero.
            if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
                s[1..].to_string()
            } else {
                s
            }
        }
    }
}

impl Table {
    fn is_left(&self, c: usize) -> bool {
        self.left.contains(&c) || (self.left_last && c + 1 == self.headers.len())
    }

    /// The cells as strings, numbers formatted per column.
    fn formatted(&self) -> Vec<Vec<String>> {
        let n = self.headers.len();
        let unit_of = |c: usize| usize::from(c + self.licks >= n);
        let decimals: Vec<usize> = (0..2)
            .map(|unit| {
                decimals_for(self.rows.iter().flat_map(|r| {
                    r.iter()
                        .enumerate()
                        .filter_map(move |(c, cell)| match cell {
                            Cell::Num(v) if unit_of(c) == unit => *v,
                            _ => None,
                        })
                }))
            })
            .collect();
        self.rows
            .iter()
            .map(|r| {
                r.iter()
                    .enumerate()
                    .map(|(c, cell)| match cell {
                        Cell::Text(t) => t.clone(),
                        Cell::Num(v) => fmt_num(*v, decimals[unit_of(c)]),
                    })
                    .collect()
            })
            .collect()
    }

    pub(super) fn text(&self, out: &mut String) {
        let rows = self.formatted();
        let widths: Vec<usize> = (0..self.headers.len())
            .map(|c| {
                rows.iter()
                    .map(|r| r[c].chars().count())
                    .chain([self.headers[c].chars().count()])
                    .max()
                    .unwrap_or(0)
            })
            .collect();
        out.push_str(&self.title);
        out.push('\n');
        for row in std::iter::once(&self.headers).chain(&rows) {
            let cells: Vec<String> = row
                .iter()
                .enumerate()
                .map(|(c, cell)| {
                    if self.is_left(c) {
                        format!("{cell:<w$}", w = widths[c])
                    } else {
                        format!("{cell:>w$}", w = widths[c])
                    }
                })
                .collect();
            out.push_str(cells.join("  ").trim_end());
            out.push('\n');
        }
        for f in &self.footer {
            out.push_str(&format!("  {f}\n"));
        }
        out.push('\n');
    }

    pub(super) fn markdown(&self, out: &mut String) {
        out.push_str(&format!("**{}**\n\n", md_escape(&self.title)));
        let line = |cells: &[String]| {
            let escaped: Vec<String> = cells.iter().map(|c| md_escape(c)).collect();
            format!("| {} |\n", escaped.join(" | "))
        };
        out.push_str(&line(&self.headers));
        let align: Vec<String> = (0..self.headers.len())
            .map(|c| if self.is_left(c) { ":---" } else { "---:" }.to_string())
            .collect();
        out.push_str(&format!("|{}|\n", align.join("|")));
        for row in &self.formatted() {
            out.push_str(&line(row));
        }
        if !self.footer.is_empty() {
            out.push('\n');
        }
        for f in &self.footer {
            out.push_str(&format!("- {}\n", md_escape(f)));
        }
        out.push('\n');
    }
}

pub(super) fn md_escape(s: &str) -> String {
    s.replace('\\', "\\\\").replace('|', "\\|")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decimals_follow_the_magnitude() {
        assert_eq!(decimals_for([8.28, -1.2].into_iter()), 2);
        assert_eq!(decimals_for([0.5].into_iter()), 3);
        assert_eq!(decimals_for([0.0586, -0.003].into_iter()), 4);
        assert_eq!(decimals_for([1e-9].into_iter()), 6);
        assert_eq!(decimals_for(std::iter::empty()), 2);
        assert_eq!(fmt_num(Some(-0.0001), 2), "0.00");
        assert_eq!(fmt_num(Some(-0.25), 2), "-0.25");
        assert_eq!(fmt_num(None, 2), "-");
    }
}
