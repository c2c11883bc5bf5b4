//! `lint`: the codebook's own consistency, before any data is read.
//!
//! A codebook that contradicts itself makes every later answer doubtful: a code that is
//! both a category and a missing code, a universe naming a variable that does not exist, a
//! range that admits nothing. Lint finds these from the model alone. Each check below
//! reports under a rule id of [`crate::rules::LINT_RULES`]; the checker refuses to run on a
//! codebook with lint errors.

use std::collections::{HashMap, HashSet};

use crate::codebook::conditions;
use crate::codebook::model::{Code, Codebook, Kind, Layout, Variable};
use crate::diagnostic::{nearest, Diagnostic};

/// Every lint diagnostic of a codebook, in the order of the file.
pub fn lint(codebook: &Codebook) -> Vec<Diagnostic> {
    let mut out = Vec::new();
    duplicate_variables(codebook, &mut out);
    for v in &codebook.variables {
        codes(v, &mut out);
        kind_options(v, &mut out);
        range(v, &mut out);
    }
    references(codebook, &mut out);
    conditions_and_cycles(codebook, &mut out);
    if codebook.file.layout == Layout::Fixed {
        fixed_columns(codebook, &mut out);
    }
    out.sort_by_key(|d| {
        d.place
            .map_or((usize::MAX, usize::MAX), |p| (p.file, p.offset))
    });
    out
}

fn duplicate_variables(codebook: &Codebook, out: &mut Vec<Diagnostic>) {
    let mut seen = HashSet::new();
    for v in &codebook.variables {
        if !seen.insert(v.name.as_str()) {
            out.push(
                Diagnostic::new(
                    "lint.duplicate-variable",
                    format!("variable `{}` is declared more than once", v.name),
                )
                .at(v.place, "declared again here")
                .help("rename or remove one of the entries"),
            );
        }
    }
    let mut seen = HashSet::new();
    for c in &codebook.checks {
        if !seen.insert(c.name.as_str()) {
            out.push(
                Diagnostic::new(
                    "lint.duplicate-check",
                    format!("check `{}` is declared more than once", c.name),
                )
                .at(c.place, "declared again here"),
            );
        }
    }
}

fn code_key(code: &Code) -> String {
    match code {
        Code::Number(n) => format!("n:{n}"),
        Code::Text(t) => format!("t:{t}"),
    }
}

fn codes(v: &Variable, out: &mut Vec<Diagnostic>) {
    if v.kind.is_coded() && v.categories.is_empty() {
        out.push(
            Diagnostic::new(
                "lint.no-categories",
                format!("{} variable `{}` has no categories", v.kind, v.name),
            )
            .at(v.place, "no categories")
            .help("list its categories, or make it numeric or text"),
        );
    }
    if matches!(v.kind, Kind::Text | Kind::Date | Kind::Identifier) && !v.categories.is_empty() {
        out.push(
            Diagnostic::new(
                "lint.categories-not-allowed",
                format!("{} variable `{}` has categories", v.kind, v.name),
            )
            .at(
                v.categories[0].place,
                "categories are not used for this kind",
            )
            .help("make the variable categorical, or remove the categories"),
        );
    }
    let mut categories: HashMap<String, &str> = HashMap::new();
    for c in &v.categories {
        if categories.insert(code_key(&c.code), &c.label).is_some() {
            out.push(
                Diagnostic::new(
                    "lint.duplicate-code",
                    format!("code {} of `{}` is listed twice", c.code, v.name),
                )
                .at(c.place, "listed again here")
                .help("keep one entry per code"),
            );
        }
    }
    let mut missing = HashSet::new();
    for m in &v.missing {
        let key = code_key(&m.code);
        if categories.contains_key(&key) {
            out.push(
                Diagnostic::new(
                    "lint.category-and-missing",
                    format!(
                        "code {} of `{}` is both a category and a missing code",
                        m.code, v.name
                    ),
                )
                .at(m.place, "also a category")
                .help(
                    "decide whether the code is an answer or a missing value, and keep one entry",
                ),
            );
        } else if !missing.insert(key) {
            out.push(
                Diagnostic::new(
                    "lint.duplicate-code",
                    format!("missing code {} of `{}` is listed twice", m.code, v.name),
                )
                .at(m.place, "listed again here")
                .help("keep one entry per code"),
            );
        }
    }
    let mut labels = HashSet::new();
    for c in &v.categories {
        if !labels.insert(c.label.trim().to_lowercase()) {
            out.push(
                Diagnostic::new(
                    "lint.duplicate-label",
                    format!(
                        "two categories of `{}` are labelled \"{}\"",
                        v.name, c.label
                    ),
                )
                .at(c.place, "same label as an earlier category"),
            );
        }
    }
}

fn kind_options(v: &Variable, out: &mut Vec<Diagnostic>) {
    let text_like = matches!(v.kind, Kind::Text | Kind::Identifier);
    let mut not_applicable = |option: &str, applies_to: &str| {
        out.push(
            Diagnostic::new(
                "lint.option-not-applicable",
                format!(
                    "`{option}` on {} variable `{}` is never used",
                    v.kind, v.name
                ),
            )
            .at(
                v.place,
                format!("`{option}` applies to {applies_to} variables"),
            )
            .help("check the variable's kind, or remove the option"),
        );
    };
    if v.pattern.is_some() && !text_like {
        not_applicable("pattern", "text and identifier");
    }
    if v.max_length.is_some() && !text_like {
        not_applicable("max_length", "text and identifier");
    }
    if v.decimals.is_some() && v.kind != Kind::Numeric {
        not_applicable("decimals", "numeric");
    }
}

fn range(v: &Variable, out: &mut Vec<Diagnostic>) {
    let Some(r) = &v.range else { return };
    if let (Some(min), Some(max)) = (r.min, r.max) {
        if min.value() > max.value() {
            out.push(
                Diagnostic::new(
                    "lint.range-inverted",
                    format!("range of `{}` has min {min} above max {max}", v.name),
                )
                .at(r.place, "no value can be inside this range")
                .help("swap the bounds"),
            );
            return;
        }
    }
    if v.kind == Kind::Numeric && (r.min.is_some() || r.max.is_some()) {
        for m in &v.missing {
            if let Some(n) = m.code.as_number() {
                if r.contains(n) {
                    out.push(
                        Diagnostic::new(
                            "lint.missing-in-range",
                            format!(
                                "missing code {} ({}) of `{}` lies inside its valid range",
                                m.code, m.kind, v.name
                            ),
                        )
                        .at(m.place, "also a valid value")
                        .help("use a code outside the range, such as 997, or narrow the range"),
                    );
                }
            }
        }
    }
}

fn unknown_name(codebook: &Codebook, name: &str, what: &str) -> Diagnostic {
    let d = Diagnostic::new(
        "lint.unknown-variable",
        format!("{what} names `{name}`, which is not a variable of this codebook"),
    );
    match nearest(name, codebook.variables.iter().map(|v| v.name.as_str())) {
        Some(n) => d.help(format!("did you mean `{n}`?")),
        None => d.help("declare the variable, or correct the name"),
    }
}

fn references(codebook: &Codebook, out: &mut Vec<Diagnostic>) {
    for id in &codebook.dataset.id {
        if codebook.variable(&id.name).is_none() {
            out.push(unknown_name(codebook, &id.name, "the dataset id").at(id.place, "unknown"));
        }
    }
    if let Some(w) = &codebook.dataset.weight {
        match codebook.variable(&w.name) {
            None => out
                .push(unknown_name(codebook, &w.name, "the dataset weight").at(w.place, "unknown")),
            Some(v) if v.kind != Kind::Numeric => out.push(
                Diagnostic::new(
                    "lint.weight-not-numeric",
                    format!("the weight `{}` is a {} variable", w.name, v.kind),
                )
                .at(w.place, "not numeric")
                .help("point `weight` at a numeric variable"),
            ),
            Some(_) => {}
        }
    }
}

fn conditions_and_cycles(codebook: &Codebook, out: &mut Vec<Diagnostic>) {
    // depends[i] lists the variables that variable i's universe reads.
    let mut depends: Vec<Vec<usize>> = vec![Vec::new(); codebook.variables.len()];
    for (i, v) in codebook.variables.iter().enumerate() {
        if let Some(u) = &v.universe {
            match conditions::compile(codebook, u, &format!("universe of `{}`", v.name)) {
                Ok(c) => depends[i] = c.variables().to_vec(),
                Err(ds) => out.extend(ds),
            }
        }
    }
    for c in &codebook.checks {
        let what = format!("check `{}`", c.name);
        if let Err(ds) = conditions::compile(codebook, &c.assert, &format!("assert of {what}")) {
            out.extend(ds);
        }
        if let Some(w) = &c.when {
            if let Err(ds) = conditions::compile(codebook, w, &format!("when of {what}")) {
                out.extend(ds);
            }
        }
    }
    for cycle in cycles(&depends) {
        let first = &codebook.variables[cycle[0]];
        let path: Vec<&str> = cycle
            .iter()
            .chain(std::iter::once(&cycle[0]))
            .map(|&i| codebook.variables[i].name.as_str())
            .collect();
        out.push(
            Diagnostic::new(
                "lint.universe-cycle",
                format!(
                    "universes depend on each other in a cycle: {}",
                    path.join(" -> ")
                ),
            )
            .at(
                first.universe.as_ref().and_then(|u| u.place),
                "this universe is part of the cycle",
            )
            .help("a question's universe may depend only on questions asked before it"),
        );
    }
}

/// Each elementary cycle found by depth-first search, reported once, starting at its
/// lowest variable index.
fn cycles(depends: &[Vec<usize>]) -> Vec<Vec<usize>> {
    #[derive(Clone, Copy, PartialEq)]
    enum Mark {
        New,
        Active,
        Done,
    }
    fn visit(
        node: usize,
        depends: &[Vec<usize>],
        marks: &mut [Mark],
        stack: &mut Vec<usize>,
        found: &mut Vec<Vec<usize>>,
    ) {
        marks[node] = Mark::Active;
        stack.push(node);
        for &next in &depends[node] {
            match marks[next] {
                Mark::New => visit(next, depends, marks, stack, found),
                Mark::Active => {
                    let start = stack.iter().position(|&n| n == next).unwrap_or(0);
                    let mut cycle = stack[start..].to_vec();
                    let lowest = cycle
                        .iter()
                        .enumerate()
                        .min_by_key(|(_, &n)| n)
                        .map_or(0, |(i, _)| i);
                    cycle.rotate_left(lowest);
                    if !found.contains(&cycle) {
                        found.push(cycle);
                    }
                }
                Mark::Done => {}
            }
        }
        stack.pop();
        marks[node] = Mark::Done;
    }
    let mut marks = vec![Mark::New; depends.len()];
    let mut found = Vec::new();
    for node in 0..depends.len() {
        if marks[node] == Mark::New {
            visit(node, depends, &mut marks, &mut Vec::new(), &mut found);
        }
    }
    found
}

fn fixed_columns(codebook: &Codebook, out: &mut Vec<Diagnostic>) {
    let mut spans = Vec::new();
    for v in &codebook.variables {
        match v.columns {
            // Already reported by the reader as `lint.bad-columns`.
            Some(c) if c.start < 1 || c.end < c.start => {}
            Some(c) => spans.push((c, v)),
            None => out.push(
                Diagnostic::new(
                    "lint.fixed-columns-absent",
                    format!(
                        "variable `{}` has no columns, but the layout is fixed-width",
                        v.name
                    ),
                )
                .at(v.place, "no `columns`")
                .help("add `columns = { start = .., end = .. }` (1-based, inclusive)"),
            ),
        }
    }
    spans.sort_by_key(|(c, _)| (c.start, c.end));
    // Unread column ranges, each with the variable that starts right after it. They are
    // reported together: one blank separator column between fields is a common layout, and
    // a warning per separator would bury the gaps that matter.
    let mut gaps: Vec<((usize, usize), &Variable)> = Vec::new();
    let mut covered_to = 0usize;
    let mut last: Option<&Variable> = None;
    for (c, v) in spans {
        match last {
            Some(prev) if c.start <= covered_to => out.push(
                Diagnostic::new(
                    "lint.fixed-columns-overlap",
                    format!(
                        "columns {}-{} of `{}` overlap those of `{}` (up to {covered_to})",
                        c.start, c.end, v.name, prev.name
                    ),
                )
                .at(c.place, "overlaps")
                .help("each character position should belong to one variable"),
            ),
            _ if c.start > covered_to + 1 => gaps.push(((covered_to + 1, c.start - 1), v)),
            _ => {}
        }
        if c.end > covered_to {
            covered_to = c.end;
            last = Some(v);
        }
    }
    if let Some(&((start, end), first)) = gaps.first() {
        let ranges: Vec<String> = gaps.iter().map(|&(r, _)| column_range(r)).collect();
        let (noun, verb) = if gaps.len() == 1 && start == end {
            ("column", "is")
        } else {
            ("columns", "are")
        };
        out.push(
            Diagnostic::new(
                "lint.fixed-columns-gap",
                format!("{noun} {} {verb} read by no variable", ranges.join(", ")),
            )
            .at(
                first.columns.and_then(|c| c.place),
                format!(
                    "the first unread {}, {}, comes just before `{}`",
                    if start == end { "column" } else { "columns" },
                    column_range((start, end)),
                    first.name
                ),
            )
            .help(
                "single filler columns between fields are common and harmless when intended; \
                 a wider gap can be a variable missing from the codebook",
            ),
        );
    }
}

/// `7` or `11-12`.
fn column_range((start, end): (usize, usize)) -> String {
    if start == end {
        start.to_string()
    } else {
        format!("{start}-{end}")
    }
}

#[cfg(test)]
mod tests {
    use super::cycles;

    #[test]
    fn finds_each_cycle_once() {
        // 0 -> 1 -> 2 -> 0, and 3 -> 3 (self loop), 4 -> 0 (leads into a cycle, not in one).
        let depends = vec![vec![1], vec![2], vec![0], vec![3], vec![0]];
        assert_eq!(cycles(&depends), vec![vec![0, 1, 2], vec![3]]);
        assert!(cycles(&[vec![1], vec![], vec![0, 1]]).is_empty());
    }
}
