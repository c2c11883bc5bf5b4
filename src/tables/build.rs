//! From the pass's counts to the report: percents, intervals, tests and disclosure flags.
//! The frequency table and numeric summary are built here; the `--by` tables in
//! [`super::crossing`].
//!
//! Disclosure control is applied here, once, so every renderer shows the same thing: a
//! cell with at least one but fewer than `min_cell` cases is `small`; one below
//! `suppress_below` has its counts, percents and intervals removed. Figures that would let a
//! reader subtract their way back to a suppressed cell (a cumulative percent past it, a
//! chi-square statistic over the table) are removed with it.

use super::crossing::{by_levels, cross, group_means, group_proportions, with_test};
use super::model::*;
use super::pass::{Accumulated, Count};
use super::stats::{self, kish_design_effect, kish_effective_n, wilson, wilson_count, Z95};
use super::{Request, TallyReport};
use crate::codebook::model::{format_number, Code, Codebook, MissingKind, Variable};

/// The order missing kinds are listed in a frequency table.
const MISSING_ORDER: [MissingKind; 5] = [
    MissingKind::Refused,
    MissingKind::DontKnow,
    MissingKind::NotAscertained,
    MissingKind::Other,
    MissingKind::Skipped,
];

/// A code as a table shows it: numbers without ".0", text as written.
pub fn code_text(code: &Code) -> String {
    match code {
        Code::Number(n) => format_number(*n),
        Code::Text(t) => t.clone(),
    }
}

pub(super) struct Disclose {
    min_cell: u64,
    suppress_below: Option<u64>,
    small: u64,
    pub(super) suppressed: u64,
}

impl Disclose {
    /// Flags for a cell of `n` cases: (small, suppressed). Empty cells are not flagged.
    pub(super) fn flag(&mut self, n: u64) -> (bool, bool) {
        let small = n > 0 && n < self.min_cell;
        let suppressed = n > 0 && self.suppress_below.is_some_and(|s| n < s);
        self.small += u64::from(small);
        self.suppressed += u64::from(suppressed);
        (small, suppressed)
    }

    /// The same flags without counting the cell (it is counted in another table).
    pub(super) fn peek(&self, n: u64) -> (bool, bool) {
        (
            n > 0 && n < self.min_cell,
            n > 0 && self.suppress_below.is_some_and(|s| n < s),
        )
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
    let mut disclose = Disclose {
        min_cell: request.min_cell,
        suppress_below: request.suppress_below,
        small: 0,
        suppressed: 0,
    };
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
    if acc.invalid.n > 0 {
        notes.push(format!(
            "{} {} of `{}` {} a value finding and {} counted as invalid; run `concord check` to see them",
            acc.invalid.n,
            if acc.invalid.n == 1 { "cell" } else { "cells" },
            variable.name,
            if acc.invalid.n == 1 { "has" } else { "have" },
            if acc.invalid.n == 1 { "is" } else { "are" },
        ));
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

    let mut frequency = None;
    let mut summary = None;
    let mut crosstab = None;
    let mut by_group = None;
    let mut test_withheld = false;
    if targets.numeric {
        summary = Some(numeric_summary(&acc, weighted, &mut disclose, &mut notes));
    }
    match targets.by {
        None => {
            frequency = Some(frequency_table(
                codebook,
                variable,
                targets,
                &acc,
                &mut disclose,
            ))
        }
        Some(by) => {
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
                let (table, withheld) =
                    with_test(table, &acc, &order, weighted, &mut disclose, &mut notes);
                test_withheld = withheld;
                crosstab = Some(table);
                let event = event.or((variable.categories.len() == 2).then_some(0));
                if let Some(e) = event {
                    by_group = Some(group_proportions(
                        variable,
                        e,
                        &acc,
                        &levels,
                        &order,
                        weighted,
                        &mut disclose,
                    ));
                }
            }
        }
    }
    if disclose.suppressed > 0 {
        notes.push(
            "totals are shown, so a lone suppressed cell in a row or column can be recovered by \
             subtraction; apply secondary suppression as your disclosure rules require"
                .to_string(),
        );
    }
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
            test_withheld,
        },
        frequency,
        summary,
        crosstab,
        by_group,
        notes,
    }
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

fn frequency_table(
    codebook: &Codebook,
    variable: &Variable,
    targets: &super::pass::Targets,
    acc: &Accumulated,
    disclose: &mut Disclose,
) -> Frequency {
    let weighted = targets.weight.is_some();
    let valid = acc.valid.iter().fold(Count::default(), |mut t, c| {
        t.n += c.n;
        t.w += c.w;
        t.w2 += c.w2;
        t
    });
    let valid_n_eff = kish_effective_n(valid.w, valid.w2);
    let mut rows = Vec::new();
    let mut cumulative = Some(0.0);
    let base = |c: &Count| Figures {
        count: Some(c.n),
        percent: percent(c.n as f64, acc.all.n as f64),
        weighted_count: weighted.then_some(c.w),
        weighted_percent: if weighted {
            percent(c.w, acc.all.w)
        } else {
            None
        },
        ..Figures::default()
    };
    if targets.numeric {
        let c = &acc.valid[0];
        let (small, suppressed) = disclose.flag(c.n);
        let mut figures = Figures {
            valid_percent: (c.n > 0).then_some(100.0),
            weighted_valid_percent: (weighted && c.n > 0).then_some(100.0),
            ..base(c)
        };
        if suppressed {
            figures = Figures::default();
        }
        rows.push(FrequencyRow {
            kind: RowKind::Valid,
            code: None,
            label: "Valid values".to_string(),
            missing_kind: None,
            figures,
            small,
            suppressed,
        });
    } else {
        for (category, c) in variable.categories.iter().zip(&acc.valid) {
            let (small, suppressed) = disclose.flag(c.n);
            let valid_percent = percent(c.n as f64, valid.n as f64);
            cumulative = match (cumulative, valid_percent, suppressed) {
                (Some(sum), Some(p), false) => Some(sum + p),
                _ => None,
            };
            let ci = if weighted {
                valid_n_eff.and_then(|n| wilson(c.w / valid.w, n, Z95))
            } else {
                wilson_count(c.n, valid.n)
            };
            let (ci95_low, ci95_high) = interval_percent(ci);
            let figures = if suppressed {
                Figures::default()
            } else {
                Figures {
                    valid_percent,
                    cumulative_valid_percent: cumulative.map(|s| s.min(100.0)),
                    weighted_valid_percent: if weighted {
                        percent(c.w, valid.w)
                    } else {
                        None
                    },
                    ci95_low,
                    ci95_high,
                    ..base(c)
                }
            };
            rows.push(FrequencyRow {
                kind: RowKind::Category,
                code: Some(code_text(&category.code)),
                label: category.label.clone(),
                missing_kind: None,
                figures,
                small,
                suppressed,
            });
        }
    }
    let blank_meaning = variable.blank_meaning(&codebook.dataset);
    for kind in MISSING_ORDER {
        let c = &acc.missing[kind as usize];
        let declared: Vec<_> = variable.missing.iter().filter(|m| m.kind == kind).collect();
        let blank_here = blank_meaning == Some(kind);
        if declared.is_empty() && !blank_here && c.n == 0 {
            continue;
        }
        let mut codes: Vec<String> = declared.iter().map(|m| code_text(&m.code)).collect();
        let mut labels: Vec<String> = declared.iter().map(|m| m.label.clone()).collect();
        if blank_here {
            codes.push("blank".to_string());
            if labels.is_empty() {
                labels.push(format!("Blank ({})", kind.name()));
            }
        }
        rows.push(missing_row(
            RowKind::Missing,
            Some(codes.join(", ")),
            labels.join("; "),
            Some(kind.name()),
            c,
            base(c),
            disclose,
        ));
    }
    if acc.blank.n > 0 {
        let figures = base(&acc.blank);
        rows.push(missing_row(
            RowKind::Blank,
            Some("blank".to_string()),
            "Blank (no blank meaning declared)".to_string(),
            None,
            &acc.blank,
            figures,
            disclose,
        ));
    }
    if acc.invalid.n > 0 {
        let figures = base(&acc.invalid);
        rows.push(missing_row(
            RowKind::Invalid,
            None,
            "Invalid (value findings; run `concord check`)".to_string(),
            None,
            &acc.invalid,
            figures,
            disclose,
        ));
    }
    Frequency {
        rows,
        total: acc.all.n,
        valid: valid.n,
        weighted_total: weighted.then_some(acc.all.w),
        weighted_valid: weighted.then_some(valid.w),
        valid_effective_n: if weighted { valid_n_eff } else { None },
    }
}

fn missing_row(
    kind: RowKind,
    code: Option<String>,
    label: String,
    missing_kind: Option<&'static str>,
    c: &Count,
    figures: Figures,
    disclose: &mut Disclose,
) -> FrequencyRow {
    let (small, suppressed) = disclose.flag(c.n);
    FrequencyRow {
        kind,
        code,
        label,
        missing_kind,
        figures: if suppressed {
            Figures::default()
        } else {
            figures
        },
        small,
        suppressed,
    }
}

fn numeric_summary(
    acc: &Accumulated,
    weighted: bool,
    disclose: &mut Disclose,
    notes: &mut Vec<String>,
) -> Summary {
    let unit = &acc.unit;
    let (small, suppressed) = disclose.flag(unit.count);
    if suppressed {
        return Summary {
            n: unit.count,
            small,
            suppressed,
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
    Summary {
        n: unit.count,
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
        effective_n: if weighted {
            acc.running.effective_n()
        } else {
            None
        },
        mean_ci95_low: interval.map(|i| i.0),
        mean_ci95_high: interval.map(|i| i.1),
        small,
        suppressed,
    }
}
