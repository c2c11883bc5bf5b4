//! A table of strings with column alignment, drawn as aligned text or as Markdown.

use std::fmt::Write;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    Left,
    Right,
}

pub struct Grid {
    pub header: Vec<String>,
    pub align: Vec<Align>,
    pub rows: Vec<Vec<String>>,
}

impl Grid {
    pub fn new(columns: &[(&str, Align)]) -> Self {
        Grid {
            header: columns.iter().map(|(h, _)| h.to_string()).collect(),
            align: columns.iter().map(|(_, a)| *a).collect(),
            rows: Vec::new(),
        }
    }

    pub fn push(&mut self, row: Vec<String>) {
        self.rows.push(row);
    }

    /// Columns padded to their widest cell, two spaces apart, a rule under the header.
    pub fn text(&self, out: &mut String) {
        let widths: Vec<usize> = (0..self.header.len())
            .map(|i| {
                std::iter::once(&self.header)
                    .chain(&self.rows)
                    .map(|r| r.get(i).map_or(0, |c| c.chars().count()))
                    .max()
                    .unwrap_or(0)
            })
            .collect();
        let line = |out: &mut String, row: &[String]| {
            let mut text = String::new();
            for (i, width) in widths.iter().enumerate() {
                let cell = row.get(i).map_or("", String::as_str);
                let pad = width.saturating_sub(cell.chars().count());
                if i > 0 {
                    text.push_str("  ");
                }
                match self.align[i] {
                    Align::Left => {
                        text.push_str(cell);
                        text.push_str(&" ".repeat(pad));
                    }
                    Align::Right => {
                        text.push_str(&" ".repeat(pad));
                        text.push_str(cell);
                    }
                }
            }
            let _ = writeln!(out, "  {}", text.trim_end());
        };
        line(out, &self.header);
        let rule: Vec<String> = widths.iter().map(|w| "-".repeat(*w)).collect();
        line(out, &rule);
        for row in &self.rows {
            line(out, row);
        }
    }

    /// A GitHub-flavoured Markdown table.
    pub fn markdown(&self, out: &mut String) {
        let escape = |c: &str| c.replace('|', "\\|");
        let _ = writeln!(
            out,
            "| {} |",
            self.header
                .iter()
                .map(|h| escape(h))
                .collect::<Vec<_>>()
                .join(" | ")
        );
        let _ = writeln!(
            out,
            "|{}|",
            self.align
                .iter()
                .map(|a| match a {
                    Align::Left => " --- ",
                    Align::Right => " ---: ",
                })
                .collect::<Vec<_>>()
                .join("|")
        );
        for row in &self.rows {
            let _ = writeln!(
                out,
                "| {} |",
                row.iter()
                    .map(|c| escape(c))
                    .collect::<Vec<_>>()
                    .join(" | ")
            );
        }
    }
}

/// A count with its disclosure marker: `7*` when small, `suppressed` when hidden for its own
/// count, `suppressed+` when hidden as a complement (secondary suppression).
pub fn count(n: Option<u64>, small: bool, suppressed: bool, secondary: bool) -> String {
    if suppressed {
        return if secondary {
            "suppressed+"
        } else {
            "suppressed"
        }
        .to_string();
    }
    match n {
        Some(n) if small => format!("{n}*"),
        Some(n) => n.to_string(),
        None => String::new(),
    }
}

/// A weighted count or other figure with a fixed number of decimals; blank when absent.
pub fn fixed(x: Option<f64>, decimals: usize) -> String {
    x.map_or_else(String::new, |x| format!("{x:.decimals$}"))
}

/// A weighted count, with the small-cell marker of its unweighted count.
pub fn weighted(x: Option<f64>, small: bool) -> String {
    match x {
        Some(x) if small => format!("{x:.1}*"),
        Some(x) => format!("{x:.1}"),
        None => String::new(),
    }
}

pub fn percent(x: Option<f64>) -> String {
    fixed(x, 1)
}

pub fn interval(low: Option<f64>, high: Option<f64>, decimals: usize) -> String {
    match (low, high) {
        (Some(l), Some(h)) => format!("{l:.decimals$} to {h:.decimals$}"),
        _ => String::new(),
    }
}

/// A statistic in a variable's own units: up to four significant decimals, trimmed.
pub fn statistic(x: Option<f64>) -> String {
    let Some(x) = x else { return String::new() };
    let decimals = if x.abs() >= 1000.0 {
        1
    } else if x.abs() >= 1.0 {
        2
    } else {
        4
    };
    let text = format!("{x:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// A p-value as usually reported: four decimals, or scientific below 0.0001.
pub fn p_value(p: f64) -> String {
    if p < 1e-4 {
        format!("{p:.3e}")
    } else {
        format!("{p:.4}")
    }
}
