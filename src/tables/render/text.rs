//! Text for a terminal and Markdown for a document, from the same grids.

use std::fmt::Write;

use super::grid::{self, Align, Grid};
use crate::tables::model::*;

/// How headings are written: plain text or Markdown.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Style {
    Text,
    Markdown,
}

pub fn text(report: &TallyReport) -> String {
    render(report, Style::Text)
}

pub fn markdown(report: &TallyReport) -> String {
    render(report, Style::Markdown)
}

fn render(report: &TallyReport, style: Style) -> String {
    let mut out = String::new();
    let title = match &report.by {
        Some(by) => format!("{} by {}", describe(&report.variable), describe(by)),
        None => describe(&report.variable),
    };
    match style {
        Style::Text => {
            let _ = writeln!(out, "concord tally: {title}");
        }
        Style::Markdown => {
            let _ = writeln!(out, "## {}", title.replace('|', "\\|"));
            out.push('\n');
        }
    }
    let _ = writeln!(out, "{}", overview(report));
    if let Some(f) = &report.frequency {
        section(&mut out, style, "Frequencies", &frequency_grid(f, report));
    }
    if let Some(s) = &report.summary {
        section(&mut out, style, "Summary of valid values", &summary_grid(s));
    }
    if let Some(c) = &report.crosstab {
        let weighted = report.weight.is_some();
        section(
            &mut out,
            style,
            "Counts (unweighted)",
            &cross_grid(
                c,
                |cell| grid::count(cell.count, cell.small, cell.suppressed, cell.secondary),
                |t| t.total.to_string(),
            ),
        );
        if weighted {
            section(
                &mut out,
                style,
                "Weighted counts",
                &cross_grid(
                    c,
                    |cell| {
                        hidden(cell)
                            .unwrap_or_else(|| grid::weighted(cell.weighted_count, cell.small))
                    },
                    |t| grid::fixed(t.weighted_total, 1),
                ),
            );
        }
        let basis = if weighted { " (weighted)" } else { "" };
        section(
            &mut out,
            style,
            &format!("Row percents{basis}"),
            &cross_grid(
                c,
                |cell| hidden(cell).unwrap_or_else(|| grid::percent(cell.row_percent)),
                |_| "100.0".to_string(),
            ),
        );
        section(
            &mut out,
            style,
            &format!("Column percents{basis}"),
            &cross_grid(
                c,
                |cell| hidden(cell).unwrap_or_else(|| grid::percent(cell.column_percent)),
                |_| "100.0".to_string(),
            ),
        );
        if let Some(test) = &c.chi_square {
            let _ = writeln!(
                out,
                "\nPearson chi-square {:.3}, df {}, p = {}; Cramer's V {} (unweighted counts, n = {})",
                test.statistic,
                test.df,
                grid::p_value(test.p_value),
                test.cramers_v.map_or_else(String::new, |v| format!("{v:.3}")),
                c.total,
            );
        }
        if let Some(test) = &c.rao_scott {
            let _ = writeln!(
                out,
                "Rao-Scott chi-square on the weighted proportions, design effect {:.3} from the \
                 weights: first order {:.3}, df {}, p = {}; second order {:.3}, df {:.2}, p = {}",
                test.design_effect,
                test.corrected,
                test.df,
                grid::p_value(test.p_value),
                test.second_order.statistic,
                test.second_order.df,
                grid::p_value(test.second_order.p_value),
            );
        }
    }
    if let Some(g) = &report.by_group {
        let heading = match (&g.statistic, &g.event) {
            (GroupStatistic::Proportion, Some(e)) => {
                format!(
                    "Percent {} ({}) by group, 95% Wilson interval",
                    e.label, e.code
                )
            }
            _ => "Mean by group, 95% t interval".to_string(),
        };
        section(
            &mut out,
            style,
            &heading,
            &group_grid(g, report.weight.is_some()),
        );
    }
    let list: Vec<String> = notes(report);
    if !list.is_empty() {
        out.push('\n');
        if style == Style::Markdown {
            out.push_str("Notes:\n\n");
        } else {
            out.push_str("Notes:\n");
        }
        for note in list {
            let _ = writeln!(out, "- {note}");
        }
    }
    out.push('\n');
    let _ = writeln!(out, "{}", super::caution(report.disclosure.min_cell));
    out
}

fn describe(v: &VariableInfo) -> String {
    match &v.label {
        Some(l) => format!("{} ({l})", v.name),
        None => v.name.clone(),
    }
}

fn overview(report: &TallyReport) -> String {
    let mut line = format!(
        "{} of {} rows of {} tabulated",
        report.cases, report.rows, report.data
    );
    if let Some(w) = &report.weight {
        let _ = write!(
            line,
            "; weighted by {} (sum {:.1}, Kish effective n {}, design effect {})",
            w.variable,
            w.sum,
            w.effective_n
                .map_or("n/a".to_string(), |n| format!("{n:.1}")),
            w.design_effect
                .map_or("n/a".to_string(), |d| format!("{d:.3}")),
        );
    } else {
        line.push_str("; unweighted");
    }
    line
}

fn section(out: &mut String, style: Style, heading: &str, table: &Grid) {
    out.push('\n');
    match style {
        Style::Text => {
            let _ = writeln!(out, "{heading}");
            table.text(out);
        }
        Style::Markdown => {
            let _ = writeln!(out, "### {heading}\n");
            table.markdown(out);
        }
    }
}

fn frequency_grid(f: &Frequency, report: &TallyReport) -> Grid {
    let weighted = report.weight.is_some();
    let mut columns = vec![
        ("code", Align::Left),
        ("label", Align::Left),
        ("count", Align::Right),
        ("percent", Align::Right),
        ("valid %", Align::Right),
        ("cum. valid %", Align::Right),
        ("95% CI of valid %", Align::Right),
    ];
    if weighted {
        columns.push(("weighted", Align::Right));
        columns.push(("w. valid %", Align::Right));
    }
    let mut table = Grid::new(&columns);
    for row in &f.rows {
        let fig = &row.figures;
        let mut cells = vec![
            row.code.clone().unwrap_or_default(),
            row.label.clone(),
            grid::count(fig.count, row.small, row.suppressed, row.secondary),
            grid::percent(fig.percent),
            grid::percent(fig.valid_percent),
            grid::percent(fig.cumulative_valid_percent),
            grid::interval(fig.ci95_low, fig.ci95_high, 1),
        ];
        if weighted {
            cells.push(grid::weighted(fig.weighted_count, row.small));
            cells.push(grid::percent(fig.weighted_valid_percent));
        }
        table.push(cells);
    }
    let mut total = vec![
        String::new(),
        "Total".to_string(),
        f.total.to_string(),
        if f.total > 0 {
            "100.0".to_string()
        } else {
            String::new()
        },
        if f.valid.is_some_and(|v| v > 0) {
            "100.0".to_string()
        } else {
            String::new()
        },
        String::new(),
        String::new(),
    ];
    if weighted {
        total.push(grid::fixed(f.weighted_total, 1));
        total.push(String::new());
    }
    table.push(total);
    table
}

fn summary_grid(s: &Summary) -> Grid {
    let mut table = Grid::new(&[("statistic", Align::Left), ("value", Align::Right)]);
    let mut add = |name: &str, value: String| table.push(vec![name.to_string(), value]);
    add(
        "n (valid)",
        grid::count(s.n, s.small, s.suppressed, s.secondary),
    );
    if s.suppressed && !s.secondary {
        return table;
    }
    add("mean", grid::statistic(s.mean));
    add("sd", grid::statistic(s.sd));
    add("min", grid::statistic(s.min));
    add("lower quartile", grid::statistic(s.q1));
    add("median", grid::statistic(s.median));
    add("upper quartile", grid::statistic(s.q3));
    add("max", grid::statistic(s.max));
    if s.weighted_mean.is_some() {
        add("weighted mean", grid::statistic(s.weighted_mean));
        add("weighted sd", grid::statistic(s.weighted_sd));
        add("weighted lower quartile", grid::statistic(s.weighted_q1));
        add("weighted median", grid::statistic(s.weighted_median));
        add("weighted upper quartile", grid::statistic(s.weighted_q3));
        add("Kish effective n", grid::fixed(s.effective_n, 1));
    }
    add(
        "95% CI of the mean",
        match (s.mean_ci95_low, s.mean_ci95_high) {
            (Some(l), Some(h)) => format!(
                "{} to {}",
                grid::statistic(Some(l)),
                grid::statistic(Some(h))
            ),
            _ => String::new(),
        },
    );
    table
}

/// The marker of a suppressed cross-tabulation entry, shown in every grid (weighted counts and
/// percents too) so that a hidden figure does not read as an empty one; `None` when shown.
fn hidden(cell: &CrossCell) -> Option<String> {
    cell.suppressed
        .then(|| grid::count(None, cell.small, true, cell.secondary))
}

fn cross_grid(
    c: &Crosstab,
    cell: impl Fn(&CrossCell) -> String,
    corner: impl Fn(&Crosstab) -> String,
) -> Grid {
    let mut columns: Vec<(String, Align)> =
        vec![("code".into(), Align::Left), ("label".into(), Align::Left)];
    columns.extend(c.columns.iter().map(|l| (l.label.clone(), Align::Right)));
    columns.push(("Total".into(), Align::Right));
    let refs: Vec<(&str, Align)> = columns.iter().map(|(h, a)| (h.as_str(), *a)).collect();
    let mut table = Grid::new(&refs);
    for (r, level) in c.rows.iter().enumerate() {
        let mut row = vec![level.code.clone(), level.label.clone()];
        row.extend(c.cells[r].iter().map(&cell));
        row.push(cell(&c.row_totals[r]));
        table.push(row);
    }
    let mut total = vec![String::new(), "Total".to_string()];
    total.extend(c.column_totals.iter().map(&cell));
    total.push(corner(c));
    table.push(total);
    table
}

fn group_grid(g: &ByGroup, weighted: bool) -> Grid {
    let estimate = match g.statistic {
        GroupStatistic::Proportion => "percent",
        GroupStatistic::Mean => "mean",
    };
    let mut columns = vec![
        ("code", Align::Left),
        ("label", Align::Left),
        ("n", Align::Right),
    ];
    if weighted {
        columns.push(("weighted n", Align::Right));
        columns.push(("effective n", Align::Right));
    }
    columns.push((estimate, Align::Right));
    columns.push(("95% CI", Align::Right));
    let mut table = Grid::new(&columns);
    for group in &g.groups {
        let mut row = vec![
            group.code.clone(),
            group.label.clone(),
            grid::count(group.n, group.small, group.suppressed, group.secondary),
        ];
        if weighted {
            row.push(grid::fixed(group.weighted_n, 1));
            row.push(grid::fixed(group.effective_n, 1));
        }
        match g.statistic {
            GroupStatistic::Proportion => {
                row.push(grid::percent(group.estimate));
                row.push(grid::interval(group.ci95_low, group.ci95_high, 1));
            }
            GroupStatistic::Mean => {
                row.push(grid::statistic(group.estimate));
                row.push(match (group.ci95_low, group.ci95_high) {
                    (Some(l), Some(h)) => {
                        format!(
                            "{} to {}",
                            grid::statistic(Some(l)),
                            grid::statistic(Some(h))
                        )
                    }
                    _ => String::new(),
                });
            }
        }
        table.push(row);
    }
    table
}

/// The report's notes, then the footnotes for the disclosure markers.
fn notes(report: &TallyReport) -> Vec<String> {
    let mut list = report.notes.clone();
    let d = &report.disclosure;
    if d.small_cells > 0 {
        list.push(format!(
            "* fewer than {} cases ({} flagged)",
            d.min_cell,
            entries(d.small_cells),
        ));
    }
    if d.suppressed_cells > 0 {
        list.push(format!(
            "suppressed: fewer than {} cases; counts, percents and intervals removed ({})",
            d.suppress_below.unwrap_or(0),
            entries(d.suppressed_cells),
        ));
    }
    if d.secondary_suppressed_cells > 0 {
        list.push(format!(
            "suppressed+: suppressed as a complement (secondary suppression), not for its own \
             count, so that no suppressed figure can be recovered by subtraction; its figures \
             are removed in the same way ({})",
            entries(d.secondary_suppressed_cells),
        ));
    }
    // A numeric variable's valid row is its valid total, and says so itself.
    let coded = |f: &Frequency| f.rows.iter().all(|r| r.kind != RowKind::Valid);
    if report
        .frequency
        .as_ref()
        .is_some_and(|f| f.valid_suppressed && coded(f))
    {
        list.push(
            "the valid total is suppressed+, so valid percents and their intervals are removed"
                .to_string(),
        );
    }
    list
}

fn entries(n: u64) -> String {
    format!("{n} {}", if n == 1 { "entry" } else { "entries" })
}
