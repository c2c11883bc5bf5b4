//! Frequency tables, cross-tabulations and by-group summaries for collaborators.
//!
//! The flow mirrors `check`: the request is resolved against the codebook (names to
//! indices, the default weight), the codebook compiles into the checker's plan, [`pass::run`]
//! streams the records once into counts and running sums, and [`build::report`] turns those
//! into a plain [`model::TallyReport`] with the statistics of [`stats`] and the disclosure
//! flags, each table's suppression pattern completed by [`suppress`]. The renderers in
//! [`render`] only format it.

pub mod build;
mod crossing;
mod frequency;
pub mod model;
pub mod pass;
pub mod render;
pub mod stats;
pub mod suppress;

use crate::check::plan;
use crate::codebook::model::{Codebook, Kind};
use crate::data::{DataError, RecordSource};
use crate::diagnostic::{nearest, Diagnostic};

pub use model::TallyReport;

/// Which weight to use.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum WeightChoice {
    /// `dataset.weight` when the codebook names one.
    Default,
    None,
    Named(String),
}

/// What to tabulate and how to treat small cells.
#[derive(Debug, Clone)]
pub struct Request {
    pub variable: String,
    pub by: Option<String>,
    pub weight: WeightChoice,
    /// The category whose proportion the by-group summary gives (a code as written).
    pub event: Option<String>,
    pub min_cell: u64,
    pub suppress_below: Option<u64>,
    /// Names of the inputs, for the report.
    pub codebook_name: String,
    pub data_name: String,
}

/// The disclosure threshold used when none is given: fewer than 10 cases is a common-practice
/// rule in statistical disclosure control; local rules may differ.
pub const DEFAULT_MIN_CELL: u64 = 10;

/// "a" or "an" before a kind's name.
fn article(kind: Kind) -> &'static str {
    if kind.name().starts_with(['a', 'e', 'i', 'o', 'u']) {
        "an"
    } else {
        "a"
    }
}

/// Why a table could not be made.
#[derive(Debug, thiserror::Error, miette::Diagnostic)]
pub enum TallyError {
    #[error("the codebook has no variable `{name}`{}", suggestion.as_ref().map(|s| format!("; did you mean `{s}`?")).unwrap_or_default())]
    #[diagnostic(
        code(concord::tally::unknown_variable),
        help("the {role} must be named exactly as in the codebook (names are case-sensitive)")
    )]
    UnknownVariable {
        name: String,
        role: &'static str,
        suggestion: Option<String>,
    },

    #[error("`{name}` is {} {kind} variable; tally makes tables of categorical, ordinal and numeric variables", article(*.kind))]
    #[diagnostic(
        code(concord::tally::not_tabulable),
        help("derive a coded or numeric variable from it with a recode first")
    )]
    NotTabulable { name: String, kind: Kind },

    #[error("the weight `{name}` is {} {kind} variable, not a numeric one", article(*.kind))]
    #[diagnostic(
        code(concord::tally::weight_not_numeric),
        help("name a numeric weight with --weight, or use --unweighted")
    )]
    WeightNotNumeric { name: String, kind: Kind },

    #[error("`{name}` is in the codebook but not in the data file {data}")]
    #[diagnostic(
        code(concord::tally::column_missing),
        help("run `concord check` to compare the file's columns with the codebook")
    )]
    ColumnMissing { name: String, data: String },

    #[error("`{name}` has more than {limit} distinct values, too many for the columns of a table")]
    #[diagnostic(
        code(concord::tally::too_many_levels),
        help("band it with a recode first (see `concord recode`), then tabulate by the banded variable")
    )]
    TooManyLevels { name: String, limit: usize },

    #[error("`{code}` is not a category of `{name}`")]
    #[diagnostic(
        code(concord::tally::unknown_event),
        help("--event takes one of the variable's category codes: {codes}")
    )]
    UnknownEvent {
        code: String,
        name: String,
        codes: String,
    },

    #[error("--event needs a categorical or ordinal variable with --by; `{name}` is {what}")]
    #[diagnostic(code(concord::tally::event_not_applicable))]
    EventNotApplicable { name: String, what: &'static str },

    #[error("the codebook's conditions do not compile; run `concord lint` on it")]
    #[diagnostic(code(concord::tally::codebook))]
    Codebook(Vec<Diagnostic>),

    #[error(transparent)]
    #[diagnostic(transparent)]
    Data(#[from] DataError),
}

/// Make the tables asked for by `request` in one pass over `source`.
pub fn tally(
    codebook: &Codebook,
    source: &mut RecordSource,
    request: &Request,
) -> Result<TallyReport, TallyError> {
    let var = resolve(codebook, &request.variable, "variable")?;
    let by = request
        .by
        .as_deref()
        .map(|name| resolve(codebook, name, "--by variable"))
        .transpose()?;
    let weight = match &request.weight {
        WeightChoice::None => None,
        WeightChoice::Default => codebook
            .dataset
            .weight
            .as_ref()
            .map(|w| resolve(codebook, &w.name, "dataset weight"))
            .transpose()?,
        WeightChoice::Named(name) => Some(resolve(codebook, name, "--weight variable")?),
    };
    for &v in [Some(var), by].iter().flatten() {
        let variable = &codebook.variables[v];
        if !matches!(
            variable.kind,
            Kind::Categorical | Kind::Ordinal | Kind::Numeric
        ) {
            return Err(TallyError::NotTabulable {
                name: variable.name.clone(),
                kind: variable.kind,
            });
        }
    }
    if let Some(w) = weight {
        let variable = &codebook.variables[w];
        if variable.kind != Kind::Numeric {
            return Err(TallyError::WeightNotNumeric {
                name: variable.name.clone(),
                kind: variable.kind,
            });
        }
    }
    let numeric = codebook.variables[var].kind == Kind::Numeric;
    let event = match &request.event {
        None => None,
        Some(code) => Some(resolve_event(codebook, var, by.is_some(), code)?),
    };
    let header = source.headers().map(<[String]>::to_vec);
    let plan = plan::compile(codebook, header.as_deref()).map_err(TallyError::Codebook)?;
    for &v in [Some(var), by, weight].iter().flatten() {
        if plan.columns[v].field.is_none() {
            return Err(TallyError::ColumnMissing {
                name: codebook.variables[v].name.clone(),
                data: source.name().to_string(),
            });
        }
    }
    let targets = pass::Targets {
        var,
        by,
        weight,
        numeric,
        by_numeric: by.is_some_and(|b| codebook.variables[b].kind == Kind::Numeric),
    };
    let by_categories = by.map_or(0, |b| codebook.variables[b].categories.len());
    let accumulated = pass::run(
        &plan,
        &targets,
        codebook.variables[var].categories.len(),
        by_categories,
        source,
    )?;
    if accumulated.too_many_levels {
        return Err(TallyError::TooManyLevels {
            name: request.by.clone().unwrap_or_default(),
            limit: pass::MAX_BY_LEVELS,
        });
    }
    Ok(build::report(
        codebook,
        &targets,
        event,
        request,
        accumulated,
    ))
}

fn resolve(codebook: &Codebook, name: &str, role: &'static str) -> Result<usize, TallyError> {
    codebook
        .variable_index(name)
        .ok_or_else(|| TallyError::UnknownVariable {
            name: name.to_string(),
            role,
            suggestion: nearest(name, codebook.variables.iter().map(|v| v.name.as_str()))
                .map(str::to_string),
        })
}

/// The category index of `--event CODE`.
fn resolve_event(
    codebook: &Codebook,
    var: usize,
    has_by: bool,
    code: &str,
) -> Result<usize, TallyError> {
    let variable = &codebook.variables[var];
    if !variable.kind.is_coded() || !has_by {
        return Err(TallyError::EventNotApplicable {
            name: variable.name.clone(),
            what: if has_by {
                "numeric"
            } else {
                "tabulated without --by"
            },
        });
    }
    let number = crate::check::cell::parse_decimal(code.trim()).map(|(n, _)| n);
    variable
        .categories
        .iter()
        .position(|c| c.code.matches(code.trim(), number))
        .ok_or_else(|| TallyError::UnknownEvent {
            code: code.to_string(),
            name: variable.name.clone(),
            codes: variable
                .categories
                .iter()
                .map(|c| format!("{} ({})", c.code, c.label))
                .collect::<Vec<_>>()
                .join(", "),
        })
}
