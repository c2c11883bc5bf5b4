//! What a band or map does with each of a source's values: its valid values as a
//! [`Domain`] for interval arithmetic, missing codes that a band would take, and `map` keys
//! read as source codes. The findings go to the caller's list.

use super::intervals::{Domain, End, Interval, Stretch};
use super::spec::{Derive, MapEntry};
use crate::codebook::model::{Code, Kind, Variable};
use crate::diagnostic::Diagnostic;

/// Missing codes that a band would take. For `cuts`, whose outer bands are open by
/// construction, only codes inside the source's declared range count.
pub(super) fn missing_in_bands(
    out: &mut Vec<Diagnostic>,
    d: &Derive,
    var: &Variable,
    bands: &[Interval],
    cuts: bool,
) {
    for m in &var.missing {
        let Some(x) = m.code.as_number() else {
            continue;
        };
        if cuts && !var.range.is_some_and(|r| r.contains(x)) {
            continue;
        }
        if let Some(b) = bands.iter().find(|b| b.contains(x)) {
            out.push(
                Diagnostic::new("recode.missing-into-valid", format!("the missing code {} of `{}` ({}, {}) lies in the band {b} of `{}`", m.code, var.name, m.label, m.kind, d.name))
                    .at(d.method_place, format!("takes {}", m.code))
                    .help(format!("concord keeps {} missing ({}), but the band says otherwise: bound it by the valid range (e.g. `max = ...`), or map the code with `missing = [{{ from = {}, code = ... }}]`", m.code, m.kind, m.code)),
            );
        }
    }
}

pub(super) fn map_entries(
    out: &mut Vec<Diagnostic>,
    d: &Derive,
    var: &Variable,
    domain: &Domain,
    entries: &[MapEntry],
) -> Vec<(Code, Code)> {
    let mut pairs = Vec::new();
    for e in entries {
        match source_code(var, &e.key) {
            Some(Key::Category(code)) => pairs.push((code, e.code.clone())),
            Some(Key::Missing(m)) => out.push(
                Diagnostic::new("recode.missing-into-valid", format!("`map` of `{}` sends the missing code {} of `{}` ({}, {}) to the valid code {}", d.name, m.code, var.name, m.label, m.kind, e.code))
                    .at(e.place, "a missing code")
                    .help(format!("missing codes are never mapped to real values; remove the key, or map it to a missing code with `missing = [{{ from = {}, code = ... }}]`", m.code)),
            ),
            Some(Key::Value(x)) => pairs.push((Code::Number(x), e.code.clone())),
            None => {
                let codes: Vec<String> = var.categories.iter().map(|c| c.code.to_string()).collect();
                out.push(
                    Diagnostic::new("recode.unknown-code", format!("`{}` in the `map` of `{}` is not a code of `{}`", e.key, d.name, var.name))
                        .at(e.place, "no such source code")
                        .help(if codes.is_empty() { "a key must be a valid value of the source".to_string() } else { format!("the codes of `{}` are {}", var.name, codes.join(", ")) }),
                );
            }
        }
    }
    if var.kind.is_coded() || var.kind == Kind::Text {
        let unmapped: Vec<String> = var
            .categories
            .iter()
            .filter(|c| !pairs.iter().any(|(k, _)| *k == c.code))
            .map(|c| format!("{} ({})", c.code, c.label))
            .collect();
        if !unmapped.is_empty() {
            out.push(
                Diagnostic::new(
                    "recode.unmapped-code",
                    format!(
                        "`map` of `{}` has no entry for {} of `{}`: {}",
                        d.name,
                        if unmapped.len() == 1 {
                            "the code"
                        } else {
                            "the codes"
                        },
                        var.name,
                        unmapped.join(", ")
                    ),
                )
                .at(d.method_place, "incomplete")
                .help("map every category of the source, if need be to a catch-all output code"),
            );
        }
    } else {
        let keys: Vec<Interval> = pairs
            .iter()
            .filter_map(|(k, _)| k.as_number())
            .map(Interval::point)
            .collect();
        for gap in domain.uncovered(&keys) {
            out.push(
                Diagnostic::new(
                    "recode.unmapped-code",
                    format!(
                        "`map` of `{}` has no entry for {} of `{}`",
                        d.name,
                        describe(&gap, var),
                        var.name
                    ),
                )
                .at(d.method_place, "incomplete")
                .help("map every valid value of the source, or band it with `intervals`"),
            );
        }
    }
    pairs
}

pub(super) fn single(s: &Stretch) -> bool {
    match s {
        Stretch::Point(_) => true,
        Stretch::Grid { count, .. } => *count == 1,
        Stretch::Continuous(i) => i.lower.value == i.upper.value,
    }
}

/// A stretch of values in words, with the category label of a single code.
pub(super) fn describe(s: &Stretch, var: &Variable) -> String {
    if let Stretch::Point(x) = s {
        if let Some(c) = var
            .categories
            .iter()
            .find(|c| c.code.as_number() == Some(*x))
        {
            return format!("the code {} ({})", c.code, c.label);
        }
    }
    s.to_string()
}

/// The valid values of a source, for band arithmetic.
pub fn domain_of(var: &Variable) -> Domain {
    let numbers = |codes: &mut dyn Iterator<Item = &Code>| {
        codes.filter_map(Code::as_number).collect::<Vec<f64>>()
    };
    if var.kind.is_coded() {
        return Domain {
            range: None,
            decimals: None,
            points: numbers(&mut var.categories.iter().map(|c| &c.code)),
            excluded: Vec::new(),
        };
    }
    let range = match var.range {
        Some(r) => Interval::new(
            r.min
                .map_or(End::open(f64::NEG_INFINITY), |b| End::closed(b.value())),
            r.max
                .map_or(End::open(f64::INFINITY), |b| End::closed(b.value())),
        ),
        None => Interval::ALL,
    };
    Domain {
        range: Some(range),
        decimals: var.decimals,
        points: numbers(&mut var.categories.iter().map(|c| &c.code)),
        excluded: numbers(&mut var.missing.iter().map(|m| &m.code)),
    }
}

enum Key<'a> {
    Category(Code),
    Missing(&'a crate::codebook::model::MissingCode),
    /// A valid value of a numeric source that is not a labelled category.
    Value(f64),
}

/// Read a `map` key as a code of the source: a text code spelled exactly so, else a number
/// when it parses as one.
fn source_code<'a>(var: &'a Variable, key: &str) -> Option<Key<'a>> {
    let text = Code::Text(key.to_string());
    let number = crate::check::cell::parse_decimal(key).map(|(n, _)| n);
    let matches = |c: &Code| *c == text || number.is_some_and(|n| c.as_number() == Some(n));
    if let Some(c) = var.categories.iter().find(|c| matches(&c.code)) {
        return Some(Key::Category(c.code.clone()));
    }
    if let Some(m) = var.missing.iter().find(|m| matches(&m.code)) {
        return Some(Key::Missing(m));
    }
    if var.kind == Kind::Numeric {
        let n = number?;
        let on_grid = var.decimals.is_none_or(|d| {
            let scaled = n * 10f64.powi(d as i32);
            (scaled - scaled.round()).abs() < 1e-9 * scaled.abs().max(1.0)
        });
        if on_grid && var.range.is_none_or(|r| r.contains(n)) {
            return Some(Key::Value(n));
        }
    }
    None
}
