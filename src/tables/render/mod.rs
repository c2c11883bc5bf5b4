//! Renderers for the tally report: aligned text, Markdown, tidy CSV and JSON.
//!
//! Text and Markdown are drawn from the same [`Grid`]s, so a table reads the same in a
//! terminal and in a pasted document. Renderers only format: every count, percent and flag
//! was decided in [`super::build`].

mod csv;
mod grid;
mod text;

pub use self::csv::csv;
pub use text::{markdown, text};

use super::model::TallyReport;

/// The report as pretty-printed JSON, in the shape of `schemas/tally.schema.json`.
pub fn json(report: &TallyReport) -> String {
    let mut out = serde_json::to_string_pretty(report).unwrap_or_else(|_| "{}".to_string());
    out.push('\n');
    out
}

/// The closing caution of text and Markdown output.
pub fn caution(min_cell: u64) -> String {
    format!(
        "Disclosure: cells with fewer than {min_cell} cases are marked * (a common-practice \
         threshold in statistical disclosure control). Before sharing, follow the data's access \
         conditions and your local disclosure rules."
    )
}
