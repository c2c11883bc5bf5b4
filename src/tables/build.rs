//! From the pass's counts to the report: percents, intervals, tests and disclosure flags.
//! The numeric summary is built here; the frequency table in [`super::frequency`], the
//! `--by` tables in [`super::crossing`].
//!
//! Disclosure control is applied here, once, so every renderer shows the same thing: a
//! cell with at least one but fewer than `min_cell` cases is `small`; one below
//! `suppress_below` has its counts, percents and intervals removed (primary suppression).
//! Totals stay visible, so each table then goes through secondary suppression
//! ([`super::suppress`]): further entries are hidden until no row, column or total holds a
//! lone suppressed entry that subtraction would give back. Figures derived from a hidden
//! entry (a cumulative percent past it, a percent over a hidden total, a by-group estimate, a
//! chi-square statistic over the table) are removed with it.

use super::crossing::{by_levels, cross, group_means, group_proportions, with_test};
use super::frequency::frequency_table;
use super::model::*;
use super::pass::Accumulated;
use super::stats::{self, kish_design_effect, kish_effective_n};
use super::suppress::{Pattern, Status, Table};
use super::{Request, TallyReport};
use crate::codebook::model::{format_number, Code, Codebook, Variable};

/// A code as a table shows it: numbers without ".0", text as written.
pub fn code_text(code: &Code) -> String {
    match code {
        Code::Number(n) => format_number(*n),
        Code::Text(t) => t.clone(),
    }
}

/// The disclosure thresholds, and what the tables flagged and hid.
pub(super) struct Disclose {
    min_cell: u64,
    suppress_below: Option<u64>,
    small: u64,
    suppressed: u64,
    secondary: u64,
    unprotected: u64,
}

impl Disclose {
    pub(super) fn new(min_cell: u64, suppress_below: Option<u64>) -> Self {
        Disclose {
            min_cell,
            suppress_below,
            small: 0,
            suppressed: 0,
            secondary: 0,
            unprotected: 0,
        }
    }

    /// At least one but fewer than `min_cell` cases. Empty cells are not flagged.
    pub(super) fn is_small(&self, n: u64) -> bool {
        n > 0 && n < self.min_cell
    }

    /// At least one but fewer than `suppress_below` cases: primary suppression.
    pub(super) fn is_primary(&self, n: u64) -> bool {
        n > 0 && self.suppress_below.is_some_and(|s| n < s)
    }

    /// [`Self::is_small`] for an entry a table shows, counted.
    pub(super) fn small(&mut self, n: u64) -> bool {
        let small = self.is_small(n);
        self.small += u64::from(small);
        small
    }

    /// The status of a figure that is in no table's lines (a summary's n), counted.
    pub(super) fn alone(&mut self, n: u64) -> Status {
        if self.is_primary(n) {
            self.suppressed += 1;
            Status::Primary
        } else {
            Status::Shown
        }
    }

    /// The table's final pattern after secondary suppression, counted.
    pub(super) fn protect(&mut self, table: &Table) -> Pattern {
        let pattern = table.protect();
        self.suppressed += pattern.primary();
        self.secondary += pattern.secondary();
        self.unprotected += pattern.unprotected;
        pattern
    }
}

pub(super) fn percent(part: f64, whole: f64) -> Option<f64> {
    (whole > 0.0).then(|| 100.0 * part / whole)
}

pub(super) fn interval_percent(ci: Option<(f64, f64)>) -> (Option<f64>, Option<f64>) {
    match ci {
        Some((l, h)) => (Some(100.0 * l), Some(100.0 * h)),
        None => (None, None),
    }
}

pub fn report(
    codebook: &Codebook,
    targets: &super::pass::Targets,
    event: Option<usize>,
    request: &Request,
    acc: Accumulated,
) -> TallyReport {
    let variable = &codebook.variables[targets.var];
    let weighted = targets.weight.is_some();
    let mut disclose = Disclose::new(request.min_cell, request.suppress_below);
    let mut notes = Vec::new();
    let mut excluded = Vec::new();
    let weight_name = targets
        .weight
        .map(|w| codebook.variables[w].name.clone())
        .unwrap_or_default();
    for (reason, count, why) in [
        (
            "row-length",
            acc.ragged,
            "have the wrong number of fields (run `concord check`)".to_string(),
        ),
        (
            "weight-negative",
            acc.weight_negative,
            format!("have a negative weight `{weight_name}`"),
        ),
        (
            "weight-missing",
            acc.weight_missing,
            format!("have a blank or missing-code weight `{weight_name}`"),
        ),
        (
            "weight-invalid",
            acc.weight_invalid,
            format!(
                "have a weight `{weight_name}` that fails its codebook entry (run `concord check`)"
            ),
        ),
    ] {
        if count > 0 {
            let message = format!("{count} {} left out: they {why}", cases(count));
            notes.push(message.clone());
            excluded.push(Exclusion {
                reason,
                count,
                message,
            });
        }
    }
    // The frequency table comes first: the note on invalid cells must not give back its
    // Invalid row's count when that row is suppressed.
    let frequency = targets
        .by
        .is_none()
        .then(|| frequency_table(codebook, variable, targets, &acc, &mut disclose));
    let invalid_hidden = frequency.as_ref().is_some_and(|f| {
        f.rows
            .iter()
            .any(|r| r.kind == RowKind::Invalid && r.suppressed)
    });
    if acc.invalid.n > 0 {
        notes.push(invalid_note(acc.invalid.n, &variable.name, invalid_hidden));
    }
    let weight = targets.weight.map(|w| WeightInfo {
        variable: codebook.variables[w].name.clone(),
        sum: acc.all.w,
        effective_n: kish_effective_n(acc.all.w, acc.all.w2),
        design_effect: kish_design_effect(acc.all.n, acc.all.w, acc.all.w2),
    });
    if weighted {
        notes.push(
            "weighted intervals use the Kish effective sample size (sum w)^2 / sum w^2 with the \
             weighted estimate, common practice for approximate intervals under unequal weights"
                .to_string(),
        );
    }

    let mut summary = None;
    let mut crosstab = None;
    let mut by_group = None;
    let mut test_withheld = false;
    if targets.numeric {
        // Beside a frequency table the summary's n is the valid row's count.
        let follows = frequency
            .as_ref()
            .and_then(|f| f.rows.iter().find(|r| r.kind == RowKind::Valid))
            .map(|r| status(r.suppressed, r.secondary));
        summary = Some(numeric_summary(
            &acc,
            weighted,
            follows,
            &mut disclose,
            &mut notes,
        ));
    }
    if let Some(by) = targets.by {
        let by_variable = &codebook.variables[by];
        let (levels, order) = by_levels(by_variable, &acc.by_levels);
        let var_valid: u64 = acc.valid.iter().map(|c| c.n).sum();
        let var_not_valid = acc.all.n - var_valid;
        if var_not_valid > 0 {
            notes.push(format!(
                "{var_not_valid} {} missing or invalid on `{}` {} left out of the by-group tables",
                cases(var_not_valid),
                variable.name,
                if var_not_valid == 1 { "is" } else { "are" },
            ));
        }
        if acc.by_not_valid > 0 {
            notes.push(format!(
                "{} {} valid on `{}` but missing or invalid on `{}` {} left out of the by-group tables",
                acc.by_not_valid,
                cases(acc.by_not_valid),
                variable.name,
                by_variable.name,
                if acc.by_not_valid == 1 { "is" } else { "are" },
            ));
        }
        if targets.numeric {
            by_group = Some(group_means(&acc, &levels, &order, weighted, &mut disclose));
        } else {
            let table = cross(variable, &acc, &levels, &order, weighted, &mut disclose);
            let (table, withheld) = with_test(table, &acc, &order, weighted, &mut notes);
            test_withheld = withheld;
            let event = event.or((variable.categories.len() == 2).then_some(0));
            if let Some(e) = event {
                by_group = Some(group_proportions(
                    variable, e, &acc, &table, &levels, &order, weighted,
                ));
            }
            crosstab = Some(table);
        }
    }
    notes.extend(suppression_notes(&disclose));
    TallyReport {
        concord: env!("CARGO_PKG_VERSION"),
        codebook: request.codebook_name.clone(),
        data: request.data_name.clone(),
        variable: info(variable),
        by: targets.by.map(|b| info(&codebook.variables[b])),
        weight,
        rows: acc.rows,
        cases: acc.all.n,
        excluded,
        disclosure: Disclosure {
            min_cell: request.min_cell,
            suppress_below: request.suppress_below,
            small_cells: disclose.small,
            suppressed_cells: disclose.suppressed,
            secondary_suppressed_cells: disclose.secondary,
            unprotected_lines: disclose.unprotected,
            test_withheld,
        },
        frequency,
        summary,
        crosstab,
        by_group,
        notes,
    }
}

/// A figure's status from its model flags.
fn status(suppressed: bool, secondary: bool) -> Status {
    match (suppressed, secondary) {
        (false, _) => Status::Shown,
        (true, false) => Status::Primary,
        (true, true) => Status::Secondary,
    }
}

fn invalid_note(n: u64, name: &str, hidden: bool) -> String {
    let one = n == 1;
    if hidden {
        return format!(
            "cells of `{name}` with a value finding are counted as invalid (their number is \
             suppressed); run `concord check` to see them"
        );
    }
    format!(
        "{n} {} of `{name}` {} a value finding and {} counted as invalid; run `concord check` to see them",
        if one { "cell" } else { "cells" },
        if one { "has" } else { "have" },
        if one { "is" } else { "are" },
    )
}

/// What suppression did, and what it does not promise.
fn suppression_notes(d: &Disclose) -> Vec<String> {
    const LIMIT: &str = "this does not guarantee a protection interval against \
                         linear-programming attacks: follow your local disclosure rules";
    let mut notes = Vec::new();
    if d.secondary > 0 {
        notes.push(format!(
            "{} further {} suppressed so that no suppressed cell can be recovered by \
             subtraction along a row, column or total; {LIMIT}",
            d.secondary,
            if d.secondary == 1 { "cell" } else { "cells" },
        ));
    } else if d.suppressed > 0 {
        notes.push(format!(
            "no further cells needed suppressing: every row, column or total with a suppressed \
             cell holds another; {LIMIT}"
        ));
    }
    if d.unprotected > 0 {
        let one = d.unprotected == 1;
        notes.push(format!(
            "{} {} still {} a single suppressed cell, because every other figure in {} is \
             published elsewhere in the report (the number of cases tabulated): that cell can \
             be recovered, so treat the table as unprotected",
            d.unprotected,
            if one {
                "row, column or total"
            } else {
                "rows, columns or totals"
            },
            if one { "holds" } else { "hold" },
            if one { "it" } else { "them" },
        ));
    }
    notes
}

fn cases(n: u64) -> &'static str {
    if n == 1 {
        "case"
    } else {
        "cases"
    }
}

fn info(v: &Variable) -> VariableInfo {
    VariableInfo {
        name: v.name.clone(),
        label: v.label.clone(),
        kind: v.kind.name(),
    }
}

/// The summary of a numeric variable's valid values. Beside a frequency table it `follows`
/// the valid row, and its flags are not counted again: a primary suppression removes every
/// figure (a few cases' mean discloses them); a secondary one, of a count that is not small
/// itself, removes what would give the count back (n, the Kish n and the interval of the
/// mean, whose width is set by n) and keeps the other statistics.
fn numeric_summary(
    acc: &Accumulated,
    weighted: bool,
    follows: Option<Status>,
    disclose: &mut Disclose,
    notes: &mut Vec<String>,
) -> Summary {
    let unit = &acc.unit;
    let (small, status) = match follows {
        Some(s) if s.suppressed() => (disclose.is_small(unit.count), s),
        Some(_) => (disclose.is_small(unit.count), disclose.alone(unit.count)),
        None => (disclose.small(unit.count), disclose.alone(unit.count)),
    };
    if status == Status::Primary {
        return Summary {
            small,
            suppressed: true,
            ..Summary::default()
        };
    }
    let sorted = acc.distinct.as_ref().map(|map| {
        let mut values: Vec<(f64, (u64, f64))> =
            map.iter().map(|(b, c)| (f64::from_bits(*b), *c)).collect();
        values.sort_by(|a, b| a.0.total_cmp(&b.0));
        values
    });
    let counts: Option<Vec<(f64, u64)>> = sorted
        .as_ref()
        .map(|s| s.iter().map(|&(x, (n, _))| (x, n)).collect());
    let weights: Option<Vec<(f64, f64)>> = sorted
        .as_ref()
        .filter(|_| weighted)
        .map(|s| s.iter().map(|&(x, (_, w))| (x, w)).collect());
    if sorted.is_none() {
        notes.push(format!(
            "{} left out: more than {} distinct values",
            if weighted {
                "quartiles and weighted quartiles are"
            } else {
                "quartiles are"
            },
            super::pass::MAX_DISTINCT
        ));
    }
    let quantile = |p| counts.as_deref().and_then(|s| stats::quantile_type7(s, p));
    let weighted_quantile = |p| {
        weights
            .as_deref()
            .and_then(|s| stats::weighted_quantile_inverted_cdf(s, p))
    };
    let interval = if weighted {
        acc.running.mean_interval()
    } else {
        unit.mean_interval()
    };
    let shown = !status.suppressed();
    Summary {
        n: shown.then_some(unit.count),
        mean: unit.mean(),
        sd: unit.sd(),
        min: unit.min(),
        q1: quantile(0.25),
        median: quantile(0.5),
        q3: quantile(0.75),
        max: unit.max(),
        weighted_mean: if weighted { acc.running.mean() } else { None },
        weighted_sd: if weighted { acc.running.sd() } else { None },
        weighted_q1: weighted_quantile(0.25),
        weighted_median: weighted_quantile(0.5),
        weighted_q3: weighted_quantile(0.75),
        effective_n: if weighted && shown {
            acc.running.effective_n()
        } else {
            None
        },
        mean_ci95_low: interval.filter(|_| shown).map(|i| i.0),
        mean_ci95_high: interval.filter(|_| shown).map(|i| i.1),
        small,
        suppressed: !shown,
        secondary: status.secondary(),
    }
}
