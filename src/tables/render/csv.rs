//! Tidy CSV: one row per table cell, the same columns for every table, ready for a plotting
//! tool. Columns that do not apply to a row are empty; `row_kind` tells margins from cells.
//! `suppressed` is true for every hidden row, `secondary` when it was hidden as a complement.

use crate::tables::model::*;

const HEADER: [&str; 43] = [
    "table",
    "var",
    "var_code",
    "var_label",
    "by",
    "by_code",
    "by_label",
    "row_kind",
    "missing_kind",
    "count",
    "percent",
    "valid_percent",
    "cumulative_valid_percent",
    "weighted_count",
    "weighted_percent",
    "weighted_valid_percent",
    "row_percent",
    "column_percent",
    "estimate",
    "ci95_low",
    "ci95_high",
    "n",
    "mean",
    "sd",
    "min",
    "q1",
    "median",
    "q3",
    "max",
    "weighted_mean",
    "weighted_sd",
    "weighted_q1",
    "weighted_median",
    "weighted_q3",
    "effective_n",
    "chi_square",
    "df",
    "p_value",
    "cramers_v",
    "design_effect",
    "small",
    "suppressed",
    "secondary",
];

fn column(name: &str) -> usize {
    HEADER.iter().position(|h| *h == name).unwrap_or(0)
}

/// One CSV row being filled by column name.
struct Line(Vec<String>);

impl Line {
    fn new(table: &str, report: &TallyReport) -> Self {
        let mut line = Line(vec![String::new(); HEADER.len()]);
        line.set("table", table);
        line.set("var", &report.variable.name);
        if let Some(by) = &report.by {
            line.set("by", &by.name);
        }
        line
    }

    fn set(&mut self, name: &str, value: &str) -> &mut Self {
        self.0[column(name)] = value.to_string();
        self
    }

    fn float(&mut self, name: &str, value: Option<f64>) -> &mut Self {
        if let Some(v) = value {
            self.0[column(name)] = significant(v);
        }
        self
    }

    fn count(&mut self, name: &str, value: Option<u64>) -> &mut Self {
        if let Some(v) = value {
            self.0[column(name)] = v.to_string();
        }
        self
    }

    fn flags(&mut self, small: bool, suppressed: bool, secondary: bool) -> &mut Self {
        let text = |flag: bool| if flag { "true" } else { "false" };
        self.set("small", text(small))
            .set("suppressed", text(suppressed))
            .set("secondary", text(secondary))
    }
}

pub fn csv(report: &TallyReport) -> String {
    let mut lines: Vec<Line> = Vec::new();
    if let Some(f) = &report.frequency {
        for row in &f.rows {
            let fig = &row.figures;
            let mut line = Line::new("frequency", report);
            line.set("var_code", row.code.as_deref().unwrap_or(""))
                .set("var_label", &row.label)
                .set("row_kind", kind_name(row.kind))
                .set("missing_kind", row.missing_kind.unwrap_or(""))
                .count("count", fig.count)
                .float("percent", fig.percent)
                .float("valid_percent", fig.valid_percent)
                .float("cumulative_valid_percent", fig.cumulative_valid_percent)
                .float("weighted_count", fig.weighted_count)
                .float("weighted_percent", fig.weighted_percent)
                .float("weighted_valid_percent", fig.weighted_valid_percent)
                .float("ci95_low", fig.ci95_low)
                .float("ci95_high", fig.ci95_high)
                .flags(row.small, row.suppressed, row.secondary);
            lines.push(line);
        }
        // The totals the percents are taken over, so that a reader of the CSV alone sees
        // when the valid total is suppressed (and why the valid percents are empty).
        let mut line = Line::new("frequency", report);
        line.set("row_kind", "valid-total")
            .count("count", f.valid)
            .float(
                "weighted_count",
                f.weighted_valid.filter(|_| !f.valid_suppressed),
            )
            .flags(false, f.valid_suppressed, f.valid_suppressed);
        lines.push(line);
        let mut line = Line::new("frequency", report);
        line.set("row_kind", "total")
            .count("count", Some(f.total))
            .float("weighted_count", f.weighted_total)
            .flags(false, false, false);
        lines.push(line);
    }
    if let Some(s) = &report.summary {
        let mut line = Line::new("summary", report);
        line.set("row_kind", "summary")
            .count("n", s.n)
            .float("mean", s.mean)
            .float("sd", s.sd)
            .float("min", s.min)
            .float("q1", s.q1)
            .float("median", s.median)
            .float("q3", s.q3)
            .float("max", s.max)
            .float("weighted_mean", s.weighted_mean)
            .float("weighted_sd", s.weighted_sd)
            .float("weighted_q1", s.weighted_q1)
            .float("weighted_median", s.weighted_median)
            .float("weighted_q3", s.weighted_q3)
            .float("effective_n", s.effective_n)
            .float("ci95_low", s.mean_ci95_low)
            .float("ci95_high", s.mean_ci95_high)
            .flags(s.small, s.suppressed, s.secondary);
        lines.push(line);
    }
    if let Some(c) = &report.crosstab {
        let mut cell = |row: Option<&Level>, column: Option<&Level>, kind: &str, x: &CrossCell| {
            let mut line = Line::new("crosstab", report);
            let (var_code, var_label) = row.map_or(("", "Total"), |l| (&l.code, &l.label));
            let (by_code, by_label) = column.map_or(("", "Total"), |l| (&l.code, &l.label));
            line.set("var_code", var_code)
                .set("var_label", var_label)
                .set("by_code", by_code)
                .set("by_label", by_label)
                .set("row_kind", kind)
                .count("count", x.count)
                .float("weighted_count", x.weighted_count)
                .float("row_percent", x.row_percent)
                .float("column_percent", x.column_percent)
                .flags(x.small, x.suppressed, x.secondary);
            lines.push(line);
        };
        for (r, level) in c.rows.iter().enumerate() {
            for (j, by) in c.columns.iter().enumerate() {
                cell(Some(level), Some(by), "cell", &c.cells[r][j]);
            }
            cell(Some(level), None, "row-total", &c.row_totals[r]);
        }
        for (j, by) in c.columns.iter().enumerate() {
            cell(None, Some(by), "column-total", &c.column_totals[j]);
        }
        if let Some(t) = &c.chi_square {
            let mut line = Line::new("chi-square", report);
            line.set("row_kind", "test")
                .count("n", Some(c.total))
                .float("chi_square", Some(t.statistic))
                .count("df", Some(t.df))
                .float("p_value", Some(t.p_value))
                .float("cramers_v", t.cramers_v);
            lines.push(line);
        }
        if let Some(t) = &c.rao_scott {
            let mut line = Line::new("rao-scott", report);
            line.set("row_kind", "test")
                .count("n", Some(c.total))
                .float("chi_square", Some(t.corrected))
                .count("df", Some(t.df))
                .float("p_value", Some(t.p_value))
                .float("design_effect", Some(t.design_effect));
            lines.push(line);
            let mut line = Line::new("rao-scott-second-order", report);
            line.set("row_kind", "test")
                .count("n", Some(c.total))
                .float("chi_square", Some(t.second_order.statistic))
                .float("df", Some(t.second_order.df))
                .float("p_value", Some(t.second_order.p_value))
                .float("design_effect", Some(t.design_effect));
            lines.push(line);
        }
    }
    if let Some(g) = &report.by_group {
        for group in &g.groups {
            let mut line = Line::new("by-group", report);
            if let Some(e) = &g.event {
                line.set("var_code", &e.code).set("var_label", &e.label);
            }
            line.set("by_code", &group.code)
                .set("by_label", &group.label)
                .set(
                    "row_kind",
                    match g.statistic {
                        GroupStatistic::Proportion => "proportion",
                        GroupStatistic::Mean => "mean",
                    },
                )
                .count("n", group.n)
                .float("weighted_count", group.weighted_n)
                .float("effective_n", group.effective_n)
                .float("estimate", group.estimate)
                .float("ci95_low", group.ci95_low)
                .float("ci95_high", group.ci95_high)
                .flags(group.small, group.suppressed, group.secondary);
            lines.push(line);
        }
    }
    let mut writer = ::csv::Writer::from_writer(Vec::new());
    let _ = writer.write_record(HEADER);
    for line in &lines {
        let _ = writer.write_record(&line.0);
    }
    let bytes = writer.into_inner().unwrap_or_default();
    String::from_utf8(bytes).unwrap_or_default()
}

fn kind_name(kind: RowKind) -> &'static str {
    match kind {
        RowKind::Category => "category",
        RowKind::Valid => "valid",
        RowKind::Missing => "missing",
        RowKind::Blank => "blank",
        RowKind::Invalid => "invalid",
    }
}

/// A number with at most 12 significant digits, so floating-point noise such as
/// `32.471999999999994` reads as `32.472` in a spreadsheet; JSON keeps full precision.
fn significant(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return v.to_string();
    }
    let magnitude = v.abs().log10().floor() as i32 + 1;
    let decimals = (12 - magnitude).clamp(0, 300) as usize;
    let text = format!("{v:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

#[cfg(test)]
mod significant_tests {
    use super::significant;

    #[test]
    fn trims_floating_point_noise_only() {
        assert_eq!(significant(32.471999999999994), "32.472");
        assert_eq!(significant(19.051530423660694), "19.0515304237");
        assert_eq!(significant(2.953589e-07), "0.0000002953589");
        assert_eq!(significant(600.0), "600");
        assert_eq!(significant(-1.5), "-1.5");
        assert_eq!(significant(0.0), "0");
    }
}
