//! Renderers: turn finished results into text, JSON and other formats.
//!
//! Renderers never compute: they receive plain data (diagnostics, check reports) and only
//! format it. The miette renderer for terminals lives here too, configured once.

pub mod check;
pub mod junit;
pub mod lint;
pub mod recode;
pub mod sarif;

use miette::{GraphicalReportHandler, GraphicalTheme};

/// How text output should look.
#[derive(Debug, Clone, Copy)]
pub struct TextStyle {
    pub colour: bool,
    pub width: usize,
}

impl TextStyle {
    /// Plain text at a fixed width: for files, pipes and tests.
    pub fn plain() -> Self {
        TextStyle {
            colour: false,
            width: 100,
        }
    }
}

/// Render one miette report as text.
pub fn render_miette(report: &miette::Report, style: TextStyle) -> String {
    let theme = if style.colour {
        GraphicalTheme::unicode()
    } else {
        GraphicalTheme::unicode_nocolor()
    };
    let handler = GraphicalReportHandler::new_themed(theme).with_width(style.width);
    let mut out = String::new();
    if handler.render_report(&mut out, report.as_ref()).is_err() {
        out = format!("{report}\n");
    }
    out
}
