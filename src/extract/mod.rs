//! Labelled extracts: the data file with words instead of codes, for collaborators.
//!
//! A collaborator should never have to look up what `3` means in column `fuel`, nor mistake
//! `98 = don't know` for a real value. An extract therefore writes each category as its
//! label, each missing code as an empty cell (or as its label, on request), keeps only the
//! chosen variables, leaves direct identifiers out unless asked, and travels with a sidecar
//! codebook that describes exactly what was written.
//!
//! The pass reuses the checker's plan and cell classification, so an extract reads a cell
//! exactly as `check` does.

mod sidecar;

use std::io::Write;

pub use sidecar::sidecar;

use crate::check::cell::{classify, Cell};
use crate::check::plan::{CodeMeaning, Plan};
use crate::check::row::CellRow;
use crate::codebook::model::{Code, Codebook, Kind, MissingKind};
use crate::condition::{Compiled, Tri};
use crate::data::{DataError, Record, RecordSource};
use crate::diagnostic::nearest;

/// How categories are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum CodeStyle {
    /// The label only.
    #[default]
    Label,
    /// `code|label` in one cell.
    Pair,
    /// The label, and the code in an extra column `NAME_code` right after it.
    Column,
}

#[derive(Debug, Default)]
pub struct Options {
    /// Variables to write, in this order; `None` means all (in codebook order).
    pub keep: Option<Vec<String>>,
    pub drop: Vec<String>,
    pub codes: CodeStyle,
    /// Write missing codes (and blanks with a declared meaning) as their labels.
    pub missing_labels: bool,
    /// Keep variables of kind `identifier`.
    pub include_identifiers: bool,
}

/// The variables an extract writes, by codebook index, and the identifiers left out.
#[derive(Debug)]
pub struct Selection {
    pub variables: Vec<usize>,
    pub dropped_identifiers: Vec<String>,
}

/// A name given on the command line that is not a codebook variable.
#[derive(Debug, thiserror::Error, miette::Diagnostic)]
#[error("`{name}` is not a variable of the codebook{}", suggestion.as_ref().map(|s| format!(" (did you mean `{s}`?)")).unwrap_or_default())]
#[diagnostic(code(concord::extract::unknown_variable), help("`concord lint --format json CODEBOOK` lists the codebook; variable names are case-sensitive"))]
pub struct UnknownVariable {
    pub name: String,
    pub suggestion: Option<String>,
}

fn index_of(codebook: &Codebook, name: &str) -> Result<usize, UnknownVariable> {
    codebook
        .variable_index(name)
        .ok_or_else(|| UnknownVariable {
            name: name.to_string(),
            suggestion: nearest(name, codebook.variables.iter().map(|v| v.name.as_str()))
                .map(str::to_string),
        })
}

/// Decide which variables to write.
pub fn select(codebook: &Codebook, options: &Options) -> Result<Selection, UnknownVariable> {
    let mut variables = match &options.keep {
        Some(names) => names
            .iter()
            .map(|n| index_of(codebook, n))
            .collect::<Result<Vec<_>, _>>()?,
        None => (0..codebook.variables.len()).collect(),
    };
    for name in &options.drop {
        let i = index_of(codebook, name)?;
        variables.retain(|&v| v != i);
    }
    let mut dropped_identifiers = Vec::new();
    if !options.include_identifiers {
        variables.retain(|&v| {
            let var = &codebook.variables[v];
            let keep = var.kind != Kind::Identifier;
            if !keep {
                dropped_identifiers.push(var.name.clone());
            }
            keep
        });
    }
    let mut seen = std::collections::HashSet::new();
    variables.retain(|v| seen.insert(*v));
    Ok(Selection {
        variables,
        dropped_identifiers,
    })
}

/// What an extract pass did, for the notice to the user and the sidecar.
#[derive(Debug, Default)]
pub struct Summary {
    pub rows_read: u64,
    pub rows_written: u64,
    /// Rows left out because they have the wrong number of fields.
    pub ragged_rows: u64,
    /// Per selected variable (same order as the selection): cells with a value the codebook
    /// does not allow, written empty.
    pub invalid_cells: Vec<u64>,
}

#[derive(Debug)]
pub enum ExtractError {
    Data(DataError),
    Write(std::io::Error),
}

/// Write the extract of `source` as CSV to `out`. `filter` keeps only rows where it is true.
pub fn extract<W: Write>(
    codebook: &Codebook,
    plan: &Plan,
    selection: &Selection,
    options: &Options,
    filter: Option<&Compiled>,
    source: &mut RecordSource,
    out: W,
) -> Result<Summary, ExtractError> {
    let mut writer = csv::Writer::from_writer(out);
    let mut header: Vec<String> = Vec::new();
    for &v in &selection.variables {
        let var = &codebook.variables[v];
        header.push(var.name.clone());
        if options.codes == CodeStyle::Column && var.kind.is_coded() {
            header.push(format!("{}_code", var.name));
        }
    }
    writer.write_record(&header).map_err(csv_error)?;

    let mut summary = Summary {
        invalid_cells: vec![0; selection.variables.len()],
        ..Summary::default()
    };
    let mut cells = vec![Cell::Blank; plan.columns.len()];
    let mut record = Record::new();
    let mut fields: Vec<String> = Vec::with_capacity(header.len());
    while source
        .read_record(&mut record)
        .map_err(ExtractError::Data)?
    {
        summary.rows_read += 1;
        let ragged = match plan.expected_fields {
            Some(n) => record.len() != n,
            None => record.length_problem().is_some(),
        };
        if ragged {
            summary.ragged_rows += 1;
            continue;
        }
        for (col, cell) in plan.columns.iter().zip(cells.iter_mut()) {
            *cell = match col.field.and_then(|f| record.field(f)) {
                Some(text) => classify(col, text.trim()),
                None => Cell::Missing(MissingKind::NotAscertained),
            };
        }
        if let Some(f) = filter {
            let row = CellRow {
                cells: &cells,
                plan,
                record: &record,
            };
            if f.eval(&row) != Tri::True {
                continue;
            }
        }
        fields.clear();
        for (i, &v) in selection.variables.iter().enumerate() {
            let var = &codebook.variables[v];
            let col = &plan.columns[v];
            let text = col.field.and_then(|f| record.field(f)).unwrap_or("").trim();
            let mut code_column = String::new();
            let value = match cells[v] {
                Cell::Valid(_) if var.kind.is_coded() => {
                    let number = crate::check::cell::parse_decimal(text).map(|(n, _)| n);
                    match col.codes.lookup(text, number) {
                        Some(CodeMeaning::Category(c)) => {
                            let cat = &var.categories[c as usize];
                            let code = code_text(&cat.code);
                            match options.codes {
                                CodeStyle::Label => cat.label.clone(),
                                CodeStyle::Pair => format!("{code}|{}", cat.label),
                                CodeStyle::Column => {
                                    code_column = code;
                                    cat.label.clone()
                                }
                            }
                        }
                        _ => text.to_string(),
                    }
                }
                Cell::Valid(_) => text.to_string(),
                Cell::Missing(kind) if options.missing_labels => {
                    let number = crate::check::cell::parse_decimal(text).map(|(n, _)| n);
                    var.missing
                        .iter()
                        .find(|m| m.kind == kind && m.code.matches(text, number))
                        .map_or_else(|| kind.name().to_string(), |m| m.label.clone())
                }
                Cell::Blank if options.missing_labels => {
                    col.blank.map(|k| k.name().to_string()).unwrap_or_default()
                }
                Cell::Missing(_) | Cell::Blank => String::new(),
                Cell::Invalid(_) => {
                    summary.invalid_cells[i] += 1;
                    String::new()
                }
            };
            fields.push(value);
            if options.codes == CodeStyle::Column && var.kind.is_coded() {
                fields.push(code_column);
            }
        }
        writer.write_record(&fields).map_err(csv_error)?;
        summary.rows_written += 1;
    }
    writer.flush().map_err(ExtractError::Write)?;
    Ok(summary)
}

/// A code as it is written in an extract: numbers without a trailing ".0", text as is.
pub fn code_text(code: &Code) -> String {
    match code {
        Code::Number(n) => crate::codebook::model::format_number(*n),
        Code::Text(t) => t.clone(),
    }
}

fn csv_error(e: csv::Error) -> ExtractError {
    match e.into_kind() {
        csv::ErrorKind::Io(io) => ExtractError::Write(io),
        other => ExtractError::Write(std::io::Error::other(format!("{other:?}"))),
    }
}
