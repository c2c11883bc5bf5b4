//! `check`: does a data file honour its codebook?
//!
//! The flow is one way: the codebook and the file's header compile into a [`plan::Plan`];
//! [`run::run`] streams the records once, keeping only counts and the first examples; the
//! structure and documented-figure rules are added after the pass; the result is a plain
//! [`report::CheckReport`] that renderers format. Nothing here prints.

pub mod cell;
pub mod checker;
pub mod class;
pub mod documented;
pub mod findings;
pub mod keys;
pub mod plan;
pub mod report;
pub mod route;
pub mod row;
pub mod run;
pub mod tally;

use findings::{Example, Findings, Target};
pub use report::CheckReport;

use crate::codebook::model::Codebook;
use crate::data::{DataError, RecordSource};
use crate::diagnostic::Diagnostic;

pub struct Options {
    pub max_examples: usize,
    pub threads: run::Threads,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            max_examples: 5,
            threads: run::Threads::Auto,
        }
    }
}

#[derive(Debug)]
pub enum CheckError {
    /// The codebook's conditions do not compile (it has lint errors).
    Codebook(Vec<Diagnostic>),
    Data(DataError),
}

impl From<DataError> for CheckError {
    fn from(e: DataError) -> Self {
        CheckError::Data(e)
    }
}

/// Check every record of `source` against `codebook`.
pub fn check(
    codebook: &Codebook,
    source: &mut RecordSource,
    options: &Options,
    progress: run::Progress,
) -> Result<run::Pass, CheckError> {
    let header = source.headers().map(<[String]>::to_vec);
    let plan = plan::compile(codebook, header.as_deref()).map_err(CheckError::Codebook)?;
    let mut pass = run::run(
        codebook,
        &plan,
        source,
        options.max_examples,
        options.threads,
        progress,
    )?;
    structure(codebook, &plan, &mut pass.findings, pass.rows);
    documented::compare(codebook, &pass.tallies, &mut pass.findings);
    Ok(pass)
}

/// Rules about the file as a whole, known once the header and the row count are.
fn structure(codebook: &Codebook, plan: &plan::Plan, findings: &mut Findings, rows: u64) {
    let none = || Example {
        row: None,
        case: None,
        value: None,
    };
    for &v in &plan.structure.missing_columns {
        findings.add("structure.column-missing", Target::Variable(v), none);
    }
    for (_, name) in &plan.structure.unexpected_columns {
        findings.add(
            "structure.column-unexpected",
            Target::Column(name.clone()),
            none,
        );
    }
    for (_, name) in &plan.structure.duplicate_columns {
        match codebook.variable_index(name) {
            Some(v) => findings.add("structure.column-duplicate", Target::Variable(v), none),
            None => findings.add(
                "structure.column-duplicate",
                Target::Column(name.clone()),
                none,
            ),
        }
    }
    if let Some(cases) = codebook.dataset.cases {
        if cases != rows {
            findings.set(
                "structure.case-count",
                Target::File,
                1,
                format!(
                    "the file has {rows} row{}, the codebook documents {cases} case{}",
                    if rows == 1 { "" } else { "s" },
                    if cases == 1 { "" } else { "s" }
                ),
                vec![Example {
                    row: None,
                    case: None,
                    value: Some(rows.to_string()),
                }],
            );
        }
    }
    // Examples for column findings carry nothing; drop the placeholders.
    for f in &mut findings.list {
        f.examples.retain(|e| e.row.is_some() || e.value.is_some());
    }
}

/// How to read the data file, from the codebook's `[file]` table.
pub fn source_options(codebook: &Codebook) -> crate::data::SourceOptions {
    use crate::codebook::model::{Encoding, Layout};
    use crate::data::{FixedField, Layout as DataLayout};
    let file = &codebook.file;
    crate::data::SourceOptions {
        layout: match file.layout {
            Layout::Delimited => DataLayout::Delimited {
                delimiter: file.delimiter,
                quote: file.quote,
                header: file.header,
            },
            Layout::Fixed => DataLayout::Fixed {
                fields: codebook
                    .variables
                    .iter()
                    .map(|v| {
                        v.columns
                            .map_or(FixedField { start: 1, end: 0 }, |c| FixedField {
                                start: c.start,
                                end: c.end,
                            })
                    })
                    .collect(),
            },
        },
        encoding: match file.encoding {
            Encoding::Utf8 => crate::data::Encoding::Utf8,
            Encoding::Latin1 => crate::data::Encoding::Latin1,
            Encoding::Windows1252 => crate::data::Encoding::Windows1252,
        },
    }
}
