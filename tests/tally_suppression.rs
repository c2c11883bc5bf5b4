//! Secondary cell suppression in `concord tally`, through the built binary, on the demo
//! survey.
//!
//! The lines a reader could subtract along are rebuilt here from the JSON output alone: a
//! cross-tabulation's rows and columns with their totals; a frequency table's categories with
//! its valid total, and the valid total with the other rows and the overall total; the
//! by-group means with the summary's n. No line may keep exactly one suppressed entry. The
//! rule and the hand-worked patterns are common practice in statistical disclosure control
//! (secondary or complementary suppression; see e.g. Hundepool et al. (2012) Statistical
//! Disclosure Control, Wiley, ch. 4 — reference from memory). JSON output is validated
//! against `schemas/tally.schema.json` with `jsonschema`, and CSV read with the `csv` crate
//! (`support/tally.rs`). Crossed tables worked by hand are in `tally_suppression_formats.rs`.

mod support;

use serde_json::Value as Json;
use support::demo;
use support::tally::{array, assert_no_figures_in_csv, demo_json, hidden, tally};

/// Every line of every table in `report`, named, as the hidden flags of its entries. Totals the
/// report publishes whatever the table shows (the grand total, the overall total, the
/// summary's n beside the by-group means) are visible entries.
fn lines(report: &Json) -> Vec<(String, Vec<bool>)> {
    let mut lines = Vec::new();
    let c = &report["crosstab"];
    if c.is_object() {
        assert!(c["total"].is_u64(), "the grand total is always shown");
        let cells = array(&c["cells"]);
        let (rows, columns) = (array(&c["row_totals"]), array(&c["column_totals"]));
        for (r, row) in cells.iter().enumerate() {
            let mut line: Vec<bool> = array(row).iter().map(hidden).collect();
            line.push(hidden(&rows[r]));
            lines.push((format!("crosstab row {r}"), line));
        }
        let mut totals: Vec<bool> = columns.iter().map(hidden).collect();
        totals.push(false);
        lines.push(("crosstab column totals".to_string(), totals));
        for (j, total) in columns.iter().enumerate() {
            let mut line: Vec<bool> = cells.iter().map(|row| hidden(&row[j])).collect();
            line.push(hidden(total));
            lines.push((format!("crosstab column {j}"), line));
        }
        let mut totals: Vec<bool> = rows.iter().map(hidden).collect();
        totals.push(false);
        lines.push(("crosstab row totals".to_string(), totals));
    }
    let f = &report["frequency"];
    if f.is_object() {
        let rows = array(&f["rows"]);
        assert_eq!(f["valid_suppressed"], f["valid"].is_null(), "{f:#}");
        let valid_row = rows.iter().find(|r| r["kind"] == "valid");
        let valid_hidden = match valid_row {
            Some(row) => hidden(row),
            None => {
                let mut line: Vec<bool> = rows
                    .iter()
                    .filter(|r| r["kind"] == "category")
                    .map(hidden)
                    .collect();
                line.push(f["valid_suppressed"] == true);
                lines.push(("frequency categories".to_string(), line));
                f["valid_suppressed"] == true
            }
        };
        let mut line = vec![valid_hidden];
        line.extend(
            rows.iter()
                .filter(|r| r["kind"] != "category" && r["kind"] != "valid")
                .map(hidden),
        );
        line.push(false);
        lines.push(("frequency total".to_string(), line));
    }
    let g = &report["by_group"];
    if g.is_object() && g["statistic"] == "mean" {
        let mut line: Vec<bool> = array(&g["groups"]).iter().map(hidden).collect();
        line.push(false);
        lines.push(("by-group means".to_string(), line));
    }
    lines
}

/// The by-group proportions hide exactly the groups whose column total or event cell the
/// cross-tabulation hides.
fn assert_proportions_follow_the_crosstab(report: &Json) {
    let g = &report["by_group"];
    if !(g.is_object() && g["statistic"] == "proportion") {
        return;
    }
    let c = &report["crosstab"];
    let event = array(&c["rows"])
        .iter()
        .position(|l| l["code"] == g["event"]["code"])
        .unwrap();
    for (j, group) in array(&g["groups"]).iter().enumerate() {
        let total = &c["column_totals"][j];
        let cell = &c["cells"][event][j];
        assert_eq!(hidden(group), hidden(total) || hidden(cell), "group {j}");
        let primary = |x: &Json| hidden(x) && x["secondary"] == false;
        if hidden(group) {
            assert_eq!(group["secondary"] == false, primary(total) || primary(cell));
        }
    }
}

/// Hidden entries, (primary, secondary), counted once per figure as the disclosure block does.
fn counted(report: &Json) -> (u64, u64) {
    let mut entries: Vec<&Json> = Vec::new();
    let c = &report["crosstab"];
    if c.is_object() {
        entries.extend(array(&c["cells"]).iter().flat_map(array));
        entries.extend(array(&c["row_totals"]));
        entries.extend(array(&c["column_totals"]));
    }
    let f = &report["frequency"];
    if f.is_object() {
        entries.extend(array(&f["rows"]));
    }
    let g = &report["by_group"];
    if g.is_object() && g["statistic"] == "mean" {
        entries.extend(array(&g["groups"]));
    }
    let s = &report["summary"];
    if s.is_object() && !f.is_object() {
        entries.push(s);
    }
    let primary = entries
        .iter()
        .filter(|e| hidden(e) && e["secondary"] == false)
        .count() as u64;
    let mut secondary = entries.iter().filter(|e| e["secondary"] == true).count() as u64;
    let has_valid_row = f.is_object() && array(&f["rows"]).iter().any(|r| r["kind"] == "valid");
    if f["valid_suppressed"] == true && !has_valid_row {
        secondary += 1;
    }
    (primary, secondary)
}

const VARIABLES: [&str; 9] = [
    "district",
    "dwelling",
    "fuel",
    "wheeze",
    "wheeze_night",
    "cough",
    "wood_stove",
    "heat_hours",
    "stove_age",
];

#[test]
fn no_line_holds_a_lone_suppressed_entry_across_the_demo_tables() {
    let mut secondary_seen = 0;
    for variable in VARIABLES {
        for by in [None, Some("district"), Some("dwelling"), Some("hh_size")] {
            for threshold in ["5", "10", "20", "40"] {
                let mut args = vec![variable, "--suppress-below", threshold];
                if let Some(by) = by {
                    args.extend(["--by", by]);
                }
                let report = demo_json(&args);
                for (name, line) in lines(&report) {
                    let n = line.iter().filter(|h| **h).count();
                    assert_ne!(
                        n, 1,
                        "{args:?}: {name} holds one suppressed entry: {line:?}"
                    );
                }
                assert_proportions_follow_the_crosstab(&report);
                let d = &report["disclosure"];
                assert_eq!(d["unprotected_lines"], 0, "{args:?}");
                let (primary, secondary) = counted(&report);
                assert_eq!(d["suppressed_cells"], primary, "{args:?}");
                assert_eq!(d["secondary_suppressed_cells"], secondary, "{args:?}");
                if report["crosstab"].is_object() && primary > 0 {
                    assert!(report["crosstab"]["chi_square"].is_null(), "{args:?}");
                }
                secondary_seen += secondary;
            }
        }
    }
    assert!(
        secondary_seen > 0,
        "the demo tables never needed a complement"
    );
}

#[test]
fn the_rebuilt_lines_add_up_without_suppression() {
    // The lines the test above rebuilds are the table's sums: checked on the counts.
    let count = |x: &Json| x["count"].as_u64().unwrap();
    let fuel = demo_json(&["fuel", "--by", "district"]);
    let c = &fuel["crosstab"];
    let cells = array(&c["cells"]);
    for (r, row) in cells.iter().enumerate() {
        let sum: u64 = array(row).iter().map(count).sum();
        assert_eq!(sum, count(&c["row_totals"][r]));
    }
    for (j, total) in array(&c["column_totals"]).iter().enumerate() {
        let sum: u64 = cells.iter().map(|row| count(&row[j])).sum();
        assert_eq!(sum, count(total));
    }
    let grand = c["total"].as_u64().unwrap();
    assert_eq!(
        array(&c["row_totals"]).iter().map(count).sum::<u64>(),
        grand
    );
    assert_eq!(
        array(&c["column_totals"]).iter().map(count).sum::<u64>(),
        grand
    );
    for variable in ["fuel", "wheeze_night", "heat_hours"] {
        let f = &demo_json(&[variable])["frequency"];
        let rows = array(&f["rows"]);
        let valid: u64 = rows
            .iter()
            .filter(|r| r["kind"] == "category" || r["kind"] == "valid")
            .map(count)
            .sum();
        assert_eq!(f["valid"], valid, "{variable}");
        let total: u64 = rows.iter().map(count).sum();
        assert_eq!(f["total"], total, "{variable}");
    }
    // The groups' n and the cases outside any group make the summary's n.
    let means = demo_json(&["stove_age", "--by", "dwelling"]);
    let groups: u64 = array(&means["by_group"]["groups"])
        .iter()
        .map(|g| g["n"].as_u64().unwrap())
        .sum();
    let outside: u64 = array(&means["notes"])
        .iter()
        .filter_map(|n| n.as_str())
        .find(|n| n.contains("but missing or invalid on `dwelling`"))
        .and_then(|n| n.split(' ').next()?.parse().ok())
        .unwrap_or(0);
    assert_eq!(groups + outside, means["summary"]["n"].as_u64().unwrap());
}

#[test]
fn a_frequency_table_with_one_small_category_gets_a_complement() {
    // Worked by hand from the rule above (common practice): fuel's categories in wave 1 are
    // 227, 123, 61, 91, 40, 27, 15 (the codebook's documented frequencies) and 16 are not
    // recorded. Under 16 only the 15 (No heating) is suppressed; the line of categories to
    // the valid total then hides the smallest other category, 27 (Other fuel). The valid
    // total's other line (with the 16 and the overall total) holds nothing hidden.
    let report = demo_json(&["fuel", "--suppress-below", "16", "--unweighted"]);
    let f = &report["frequency"];
    let rows = array(&f["rows"]);
    let statuses: Vec<(&str, bool, bool)> = rows
        .iter()
        .map(|r| {
            (
                r["code"].as_str().unwrap(),
                hidden(r),
                r["secondary"] == true,
            )
        })
        .collect();
    assert_eq!(
        statuses,
        [
            ("1", false, false),
            ("2", false, false),
            ("3", false, false),
            ("4", false, false),
            ("5", false, false),
            ("6", true, true),
            ("7", true, false),
            ("99", false, false),
        ]
    );
    assert_eq!(f["valid"], 584);
    assert_eq!(f["valid_suppressed"], false);
    // The cumulative percent stops at the first hidden category.
    assert!(rows[4]["cumulative_valid_percent"].as_f64().is_some());
    assert!(rows[5]["cumulative_valid_percent"].is_null());
    let d = &report["disclosure"];
    assert_eq!(
        (
            d["suppressed_cells"].as_u64(),
            d["secondary_suppressed_cells"].as_u64()
        ),
        (Some(1), Some(1))
    );
}

#[test]
fn a_hidden_valid_total_takes_the_valid_percents_with_it() {
    // Worked by hand from the rule above (common practice): dwelling's missing row (Not
    // observed) holds one case; its line to the overall total holds only the valid total
    // beside it, which is hidden; the categories' line then hides the smallest category,
    // Mobile home or houseboat (26).
    let report = demo_json(&["dwelling", "--suppress-below", "10"]);
    let f = &report["frequency"];
    assert!(f["valid"].is_null() && f["weighted_valid"].is_null());
    assert_eq!(f["valid_suppressed"], true);
    for row in array(&f["rows"]) {
        for figure in [
            "valid_percent",
            "cumulative_valid_percent",
            "weighted_valid_percent",
            "ci95_low",
        ] {
            assert!(row[figure].is_null(), "{figure}: {row}");
        }
    }
    let mobile = array(&f["rows"]).iter().find(|r| r["code"] == "4").unwrap();
    assert_eq!((hidden(mobile), mobile["secondary"] == true), (true, true));
    let text = tally(
        &demo("codebook.toml"),
        &demo("wave1.csv"),
        &["dwelling", "--suppress-below", "10"],
    )
    .stdout;
    assert!(text.contains("the valid total is suppressed+"), "{text}");
    let csv = tally(
        &demo("codebook.toml"),
        &demo("wave1.csv"),
        &["dwelling", "--suppress-below", "10", "--format", "csv"],
    )
    .stdout;
    // Two secondary rows: the mobile homes, and the valid total itself, which the CSV lists
    // (`row_kind = valid-total`) so that a reader of it alone sees why the percents are gone.
    assert_eq!(assert_no_figures_in_csv(&csv), 2);
    let valid_total = csv
        .lines()
        .find(|l| l.contains(",valid-total,"))
        .expect("a valid-total row");
    assert!(valid_total.ends_with(",false,true,true"), "{valid_total}");
    let total = csv
        .lines()
        .find(|l| l.contains(",total,"))
        .expect("a total row");
    assert!(total.contains(",600,"), "{total}");
}

#[test]
fn a_secondary_valid_row_hides_the_summary_n_but_keeps_its_statistics() {
    // stove_age in wave 1: 156 valid values, 12 don't know, 432 not applicable. Under 13 the
    // 12 is hidden, and its line to the overall total hides the smallest other row, the 156
    // valid values; the summary's n, and the interval that would give it back, go with it.
    let report = demo_json(&["stove_age", "--unweighted", "--suppress-below", "13"]);
    let valid = &report["frequency"]["rows"][0];
    assert_eq!(valid["kind"], "valid");
    assert_eq!((hidden(valid), valid["secondary"] == true), (true, true));
    let s = &report["summary"];
    assert_eq!((hidden(s), s["secondary"] == true), (true, true));
    assert!(s["n"].is_null() && s["mean_ci95_low"].is_null() && s["mean_ci95_high"].is_null());
    assert!(s["mean"].as_f64().is_some() && s["median"].as_f64().is_some());
    // The summary repeats the valid row: counted once.
    assert_eq!(report["disclosure"]["secondary_suppressed_cells"], 1);
}
