//! The derived variable as a codebook variable: its categories, missing codes, blank meaning
//! and universe, and the findings about them.
//!
//! The output codebook must describe the derived column so that `concord check` passes on
//! the output file. So a derived variable declares every missing code it can write (carried
//! over from its sources, mapped by `missing` entries, or given for a kind the recode itself
//! produces), the one missing kind it writes as an empty cell, and a universe: the
//! conjunction of its sources' universes and its `when`, which is exactly when it is
//! answered.

use super::spec::Derive;
use crate::codebook::model::{
    Category, Code, Codebook, ConditionText, MissingCode, MissingKind, Variable,
};
use crate::diagnostic::Diagnostic;

/// What validation builds for one derived variable.
#[derive(Debug, Clone)]
pub struct Built {
    pub output: Variable,
    pub missing_from: Vec<(Code, Option<Code>, MissingKind)>,
    pub kind_codes: [Option<Code>; 5],
}

fn default_label(kind: MissingKind) -> &'static str {
    match kind {
        MissingKind::Skipped => "Not applicable",
        MissingKind::Refused => "Refused",
        MissingKind::DontKnow => "Don't know",
        MissingKind::NotAscertained => "Not ascertained",
        MissingKind::Other => "Could not be derived",
    }
}

/// Build the output variable of `d`, which reads `inputs`. `codes` lists the output codes a
/// band or map recode produces, each with the label used when `categories` gives none;
/// `None` for an `expr`. `divides`: the expression can divide by zero.
pub fn build(
    codebook: &Codebook,
    d: &Derive,
    inputs: &[&Variable],
    codes: Option<&[(Code, String)]>,
    has_when: bool,
    divides: bool,
    out: &mut Vec<Diagnostic>,
) -> Option<Built> {
    let mut output = Variable::new(d.name.clone(), d.kind);
    output.label = d.label.clone();
    output.categories = categories(d, codes, out);
    let mut blocked = false;
    let mut block = |out: &mut Vec<Diagnostic>, diag: Diagnostic| {
        out.push(diag);
        blocked = true;
    };

    // The sources' missing codes, one entry per code.
    let mut source_missing: Vec<MissingCode> = Vec::new();
    for v in inputs {
        for m in &v.missing {
            match source_missing.iter().find(|s| s.code == m.code) {
                Some(s) if s.kind != m.kind => block(
                    out,
                    Diagnostic::new(
                        "recode.missing-code",
                        format!(
                            "the inputs of `{}` use the missing code {} for two kinds, {} and {}",
                            d.name, m.code, s.kind, m.kind
                        ),
                    )
                    .at(d.method_place, "ambiguous missing code")
                    .help(format!(
                        "map one of them: `missing = [{{ from = {}, code = ..., kind = \"{}\" }}]` cannot tell the inputs apart, so derive one input first",
                        m.code, m.kind
                    )),
                ),
                Some(_) => {}
                None => source_missing.push(MissingCode {
                    place: None,
                    ..m.clone()
                }),
            }
        }
    }

    let mut missing_from = Vec::new();
    let mut kind_codes: [Option<Code>; 5] = Default::default();
    let mut declared: Vec<MissingCode> = Vec::new();
    for rule in &d.missing {
        match &rule.from {
            Some(from) => match source_missing.iter().find(|m| &m.code == from) {
                Some(m) => {
                    let kind = rule.kind.unwrap_or(m.kind);
                    missing_from.push((from.clone(), Some(rule.code.clone()), kind));
                    declared.push(MissingCode {
                        code: rule.code.clone(),
                        label: rule.label.clone().unwrap_or_else(|| m.label.clone()),
                        kind,
                        place: None,
                    });
                }
                None => {
                    let is_category = inputs
                        .iter()
                        .any(|v| v.categories.iter().any(|c| &c.code == from));
                    let names: Vec<&str> = inputs.iter().map(|v| v.name.as_str()).collect();
                    out.push(
                        Diagnostic::new(
                            "recode.unknown-code",
                            format!(
                                "`missing` of `{}` maps {from}, which is {} of `{}`",
                                d.name,
                                if is_category { "a category, not a missing code," } else { "not a missing code" },
                                names.join("`, `")
                            ),
                        )
                        .at(rule.place, "not a source missing code")
                        .help("`from` names a missing-value code of the source; categories go through the bands or `map`"),
                    );
                }
            },
            None => {
                let kind = rule.kind.unwrap_or(MissingKind::Other);
                kind_codes[kind as usize] = Some(rule.code.clone());
                declared.push(MissingCode {
                    code: rule.code.clone(),
                    label: rule
                        .label
                        .clone()
                        .unwrap_or_else(|| default_label(kind).to_string()),
                    kind,
                    place: None,
                });
            }
        }
    }
    for m in &source_missing {
        if !missing_from.iter().any(|(from, _, _)| *from == m.code) {
            declared.push(m.clone());
        }
    }
    for m in declared {
        if let Some(c) = output.categories.iter().find(|c| c.code == m.code) {
            block(
                out,
                Diagnostic::new(
                    "recode.missing-code",
                    format!(
                        "the missing code {} of `{}` ({}) is also its valid code \"{}\"",
                        m.code, d.name, m.kind, c.label
                    ),
                )
                .at(d.method_place, "code used twice")
                .help("give the missing value another code with a `missing` entry"),
            );
        } else {
            match output.missing.iter().find(|x| x.code == m.code) {
                Some(x) if x.kind != m.kind => block(
                    out,
                    Diagnostic::new(
                        "recode.missing-code",
                        format!(
                            "`{}` would write the missing code {} for two kinds, {} and {}",
                            d.name, m.code, x.kind, m.kind
                        ),
                    )
                    .at(d.entry, "ambiguous missing code")
                    .help("give each kind its own code in `missing`"),
                ),
                Some(_) => {}
                None => output.missing.push(m),
            }
        }
    }

    // Kinds written as an empty cell: the sources' blank meanings, `when`, division by zero.
    let mut blank: Vec<MissingKind> = Vec::new();
    let mut wants = |kind: MissingKind| {
        if kind_codes[kind as usize].is_none() && !blank.contains(&kind) {
            blank.push(kind);
        }
    };
    for v in inputs {
        if let Some(kind) = v.blank_meaning(&codebook.dataset) {
            wants(kind);
        }
    }
    if has_when {
        wants(MissingKind::Skipped);
    }
    if divides {
        wants(MissingKind::Other);
    }
    if blank.len() > 1 {
        let kinds: Vec<&str> = blank.iter().map(|k| k.name()).collect();
        block(
            out,
            Diagnostic::new(
                "recode.missing-code",
                format!(
                    "`{}` would write {} as empty cells, but an empty cell can mean one kind only",
                    d.name,
                    kinds.join(" and ")
                ),
            )
            .at(d.entry, "needs missing codes")
            .help(format!(
                "give a code to all but one: `missing = [{{ kind = \"{}\", code = ... }}]`",
                kinds[1]
            )),
        );
    }
    output.blank = blank.first().copied();

    let mut parts: Vec<&str> = inputs
        .iter()
        .filter_map(|v| v.universe.as_ref().map(|u| u.text.as_str()))
        .collect();
    if let Some(w) = &d.when {
        parts.push(&w.text);
    }
    parts.dedup();
    output.universe = match parts.len() {
        0 => None,
        1 => Some(parts[0].to_string()),
        _ => Some(
            parts
                .iter()
                .map(|p| format!("({p})"))
                .collect::<Vec<_>>()
                .join(" and "),
        ),
    }
    .map(|text| ConditionText {
        text,
        place: None,
        exact: false,
    });
    (!blocked).then_some(Built {
        output,
        missing_from,
        kind_codes,
    })
}

/// The output categories in level order: those `categories` labels first, then unlabelled
/// output codes with a generated label (reported as `recode.unlabelled-output`).
fn categories(
    d: &Derive,
    codes: Option<&[(Code, String)]>,
    out: &mut Vec<Diagnostic>,
) -> Vec<Category> {
    let Some(codes) = codes else {
        return d
            .categories
            .iter()
            .map(|c| Category {
                place: None,
                ..c.clone()
            })
            .collect();
    };
    let mut result = Vec::new();
    for c in &d.categories {
        if codes.iter().any(|(code, _)| *code == c.code) {
            if !result.iter().any(|r: &Category| r.code == c.code) {
                result.push(Category {
                    place: None,
                    ..c.clone()
                });
            }
        } else {
            let all: Vec<String> = codes.iter().map(|(c, _)| c.to_string()).collect();
            out.push(
                Diagnostic::new(
                    "recode.unknown-code",
                    format!(
                        "`categories` of `{}` labels {}, which it never produces",
                        d.name, c.code
                    ),
                )
                .at(c.place, "not an output code")
                .help(format!("its output codes are {}", all.join(", "))),
            );
        }
    }
    let mut unlabelled = Vec::new();
    for (code, fallback) in codes {
        if !result.iter().any(|r| r.code == *code) {
            unlabelled.push(code.to_string());
            result.push(Category {
                code: code.clone(),
                label: fallback.clone(),
                frequency: None,
                place: None,
            });
        }
    }
    if !unlabelled.is_empty() {
        out.push(
            Diagnostic::new(
                "recode.unlabelled-output",
                format!(
                    "the output {} {} of `{}` {} no label",
                    if unlabelled.len() == 1 {
                        "code"
                    } else {
                        "codes"
                    },
                    unlabelled.join(", "),
                    d.name,
                    if unlabelled.len() == 1 { "has" } else { "have" }
                ),
            )
            .at(d.method_place, "produces unlabelled codes")
            .help(format!(
                "add `categories = [{{ code = {}, label = \"...\" }}, ...]` to the entry",
                unlabelled[0]
            )),
        );
    }
    result
}
