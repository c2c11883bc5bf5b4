//! Compiling a codebook's conditions against its variables.
//!
//! Universes and checks are written as text in the codebook; this module resolves their
//! names to variable indices (the order of `codebook.variables`) and types, and turns
//! parse and type errors into lint diagnostics pointing into the codebook file. Lint and
//! the checker's plan both compile through here, so they agree on what a condition means.

use crate::codebook::model::{Codebook, ConditionText, Kind};
use crate::condition::{self, Compiled, Resolve, VarType};
use crate::diagnostic::Diagnostic;

/// Resolves names to the codebook's variables.
pub struct Names<'a>(pub &'a Codebook);

/// The type a condition sees for a variable's values.
pub fn var_type(codebook: &Codebook, index: usize) -> VarType {
    let v = &codebook.variables[index];
    match v.kind {
        Kind::Date => VarType::Date,
        Kind::Numeric => VarType::Number,
        Kind::Categorical | Kind::Ordinal if v.has_numeric_codes() => VarType::Number,
        _ => VarType::Text,
    }
}

impl Resolve for Names<'_> {
    fn resolve(&self, name: &str) -> Option<(usize, VarType)> {
        let index = self.0.variable_index(name)?;
        Some((index, var_type(self.0, index)))
    }

    fn names(&self) -> Vec<String> {
        self.0.variables.iter().map(|v| v.name.clone()).collect()
    }
}

/// Compile one condition; on failure, diagnostics point at the offending characters.
/// `what` names the condition in messages, e.g. "universe of `stove_age`".
pub fn compile(
    codebook: &Codebook,
    condition: &ConditionText,
    what: &str,
) -> Result<Compiled, Vec<Diagnostic>> {
    let expr = condition::parse(&condition.text).map_err(|e| {
        let mut d = Diagnostic::new(
            "lint.condition-syntax",
            format!("the {what} does not parse: {}", e.message),
        )
        .at(
            condition.place_of(e.span.offset, e.span.len),
            e.message.clone(),
        );
        d.help = e.help.clone();
        vec![d]
    })?;
    let compiled = condition::compile(&expr, &Names(codebook)).map_err(|errors| {
        errors
            .into_iter()
            .map(|e| {
                let rule = if e.message.starts_with("unknown variable") {
                    "lint.unknown-variable"
                } else {
                    "lint.condition-type"
                };
                let mut d = Diagnostic::new(rule, format!("in the {what}: {}", e.message)).at(
                    condition.place_of(e.span.offset, e.span.len),
                    e.message.clone(),
                );
                d.help = e.help.clone();
                d
            })
            .collect::<Vec<_>>()
    })?;
    if !compiled.is_condition() {
        return Err(vec![Diagnostic::new(
            "lint.condition-type",
            format!("the {what} is a number, not a condition"),
        )
        .at(condition.place, "yields a number")
        .help("compare it with something, for example `x >= 1`")]);
    }
    Ok(compiled)
}
