//! Secondary cell suppression in `concord tally` on small crossed tables worked by hand,
//! and what each format (JSON, CSV, text, Markdown) shows of a suppressed entry.
//!
//! The hand-worked patterns follow the rule of common practice in statistical disclosure
//! control (secondary or complementary suppression; see e.g. Hundepool et al. (2012)
//! Statistical Disclosure Control, Wiley, ch. 4 — reference from memory), as written out in
//! `src/tables/suppress.rs` and `docs/tally.md`.

mod support;

use std::path::PathBuf;

use serde_json::Value as Json;
use support::tally::{
    array, assert_no_figures_in_csv, crossed, demo_json, hidden, tally, tally_json, FIGURES,
};
use support::Case;

/// The pattern of a cross-tabulation, a letter per entry: `P` suppressed for its own count,
/// `S` suppressed as a complement, `.` shown; each row ends with its row total, and the last
/// string is the column totals.
fn pattern(c: &Json) -> Vec<String> {
    let letter = |x: &Json| match (hidden(x), x["secondary"] == true) {
        (false, _) => '.',
        (true, false) => 'P',
        (true, true) => 'S',
    };
    let mut out: Vec<String> = array(&c["cells"])
        .iter()
        .zip(array(&c["row_totals"]))
        .map(|(row, total)| {
            array(row)
                .iter()
                .chain([total])
                .map(letter)
                .collect::<String>()
        })
        .collect();
    out.push(array(&c["column_totals"]).iter().map(letter).collect());
    out
}

/// Worked by hand from the rule above (common practice), as in `src/tables/suppress.rs`:
/// (1,1) = 2 is under 5. Row A1 hides its smallest other cell, 15; column B1 its smallest
/// other, 12 (row A2); column B2 then holds the 15 alone and hides 11 (row A2), which closes
/// the rectangle.
const RECTANGLE: [[u64; 3]; 3] = [[2, 15, 30], [12, 11, 40], [20, 25, 50]];

fn rectangle(case: &Case) -> (PathBuf, PathBuf) {
    let cells: Vec<Vec<u64>> = RECTANGLE.iter().map(|r| r.to_vec()).collect();
    crossed(case, &cells)
}

#[test]
fn a_small_cell_is_hidden_with_the_rectangle_that_protects_it() {
    let case = Case::new();
    let (codebook, data) = rectangle(&case);
    let args = ["a", "--by", "b", "--suppress-below", "5", "--event", "1"];
    let report = tally_json(&codebook, &data, &args);
    assert_eq!(
        pattern(&report["crosstab"]),
        ["PS..", "SS..", "....", "..."],
        "worked by hand from the rule above (common practice)"
    );
    let d = &report["disclosure"];
    assert_eq!(
        (
            d["suppressed_cells"].as_u64(),
            d["secondary_suppressed_cells"].as_u64()
        ),
        (Some(1), Some(3))
    );
    assert_eq!(d["test_withheld"], true);
    // The percent of A1 per group of b: B1 holds the small cell, B2 a complement.
    let groups: Vec<(bool, bool)> = array(&report["by_group"]["groups"])
        .iter()
        .map(|g| (hidden(g), g["secondary"] == true))
        .collect();
    assert_eq!(groups, [(true, false), (true, true), (false, false)]);
    let note = array(&report["notes"])
        .iter()
        .filter_map(Json::as_str)
        .find(|n| n.starts_with("3 further cells suppressed"))
        .expect("the secondary suppression note");
    assert!(
        !array(&report["notes"])
            .iter()
            .filter_map(Json::as_str)
            .any(|n| n.contains("apply secondary suppression")),
        "the note of primary-only suppression is gone"
    );
    assert!(
        note.contains(
            "no suppressed cell can be recovered by subtraction along a row, column or total"
        ) && note.contains(
            "does not guarantee a protection interval against linear-programming attacks"
        ),
        "{note}"
    );
}

#[test]
fn a_margin_is_hidden_when_its_line_has_no_cell_left_to_hide() {
    // Worked by hand from the rule above (common practice), as in `src/tables/suppress.rs`:
    // (2,1) = 3 is under 5. Row A2 hides 40; column B1 hides 50 (the 0 above is not
    // positive); column B2 hides 7; row A1 then holds the 7 alone beside a 0, so its total is
    // hidden; row A3 hides 60; the row totals hide the smallest other total, 43 (row A2).
    let case = Case::new();
    let (codebook, data) = crossed(&case, &[vec![0, 7], vec![3, 40], vec![50, 60]]);
    let report = tally_json(
        &codebook,
        &data,
        &["a", "--by", "b", "--suppress-below", "5"],
    );
    let c = &report["crosstab"];
    assert_eq!(pattern(c), [".SS", "PSS", "SS.", ".."]);
    // The shown 0 of row A1 keeps its column percent, but not its row percent: its row
    // total is hidden.
    let zero = &c["cells"][0][0];
    assert_eq!(zero["count"], 0);
    assert!(zero["row_percent"].is_null(), "{zero}");
    assert_eq!(zero["column_percent"].as_f64(), Some(0.0));
    assert!(c["row_totals"][0]["count"].is_null());
}

fn assert_no_figures_in_json(report: &Json) {
    let mut entries: Vec<&Json> = Vec::new();
    for key in ["frequency", "by_group"] {
        if let Some(rows) = report[key]["rows"]
            .as_array()
            .or(report[key]["groups"].as_array())
        {
            entries.extend(rows);
        }
    }
    let c = &report["crosstab"];
    if c.is_object() {
        entries.extend(array(&c["cells"]).iter().flat_map(array));
        entries.extend(array(&c["row_totals"]));
        entries.extend(array(&c["column_totals"]));
    }
    let mut seen = 0;
    for entry in entries.into_iter().filter(|e| hidden(e)) {
        seen += 1;
        for figure in FIGURES {
            assert!(
                entry[figure].is_null(),
                "{figure} of a suppressed entry: {entry}"
            );
        }
    }
    assert!(seen > 0, "nothing suppressed");
}

/// The cells of the unweighted counts' row `label` in text output, split on runs of spaces.
fn count_row(text: &str, label: &str) -> Vec<String> {
    let section = text.split("Counts (unweighted)").nth(1).unwrap();
    let line = section
        .lines()
        .find(|l| l.split_whitespace().nth(1) == Some(label))
        .unwrap();
    line.split_whitespace().map(str::to_string).collect()
}

#[test]
fn suppressed_and_secondary_entries_carry_no_figures_in_any_format() {
    let case = Case::new();
    let (codebook, data) = rectangle(&case);
    let args = ["a", "--by", "b", "--suppress-below", "5", "--event", "1"];
    assert_no_figures_in_json(&tally_json(&codebook, &data, &args));
    for demo_args in [
        &["wheeze", "--by", "dwelling", "--suppress-below", "10"][..],
        &["dwelling", "--suppress-below", "10"],
        &["fuel", "--by", "district", "--suppress-below", "5"],
        &["heat_hours", "--by", "hh_size", "--suppress-below", "20"],
    ] {
        assert_no_figures_in_json(&demo_json(demo_args));
    }
    let csv_args: Vec<&str> = args.iter().copied().chain(["--format", "csv"]).collect();
    let csv = tally(&codebook, &data, &csv_args);
    // Three secondary cells in the cross-tabulation, one group in the by-group table.
    assert_eq!(assert_no_figures_in_csv(&csv.assert_code(0).stdout), 4);
    let text = tally(&codebook, &data, &args).stdout;
    assert_eq!(
        count_row(&text, "A1"),
        ["1", "A1", "suppressed", "suppressed+", "30", "47"]
    );
    assert_eq!(
        count_row(&text, "A2"),
        ["2", "A2", "suppressed+", "suppressed+", "40", "63"]
    );
    // The row percents of A1: only the shown cell's (30 of 47) and the total's; the hidden
    // cells carry their markers in this grid too.
    let percents = text.split("Row percents").nth(1).unwrap();
    let a1 = percents.lines().find(|l| l.contains(" A1 ")).unwrap();
    assert_eq!(
        a1.split_whitespace().collect::<Vec<_>>(),
        ["1", "A1", "suppressed", "suppressed+", "63.8", "100.0"]
    );
    assert!(
        text.contains("- suppressed+: suppressed as a complement (secondary suppression)"),
        "{text}"
    );
    let md_args: Vec<&str> = args
        .iter()
        .copied()
        .chain(["--format", "markdown"])
        .collect();
    let markdown = tally(&codebook, &data, &md_args).stdout;
    assert!(
        markdown.contains("| 1 | A1 | suppressed | suppressed+ | 30 | 47 |"),
        "{markdown}"
    );
    assert!(
        markdown.contains("| 2 | A2 | suppressed+ | suppressed+ | 40 | 63 |"),
        "{markdown}"
    );
    assert!(markdown.contains("| 2 | B2 | suppressed+ |"), "{markdown}");
}

#[test]
fn a_table_whose_only_cases_are_few_is_reported_unprotected() {
    // Three cases, all in one category, no missing rows: the valid total equals the number
    // of cases tabulated, which every report states, so nothing can protect the 3.
    let case = Case::new();
    let (codebook, data) = crossed(&case, &[vec![3], vec![0]]);
    let report = tally_json(&codebook, &data, &["a", "--suppress-below", "5"]);
    assert_eq!(report["disclosure"]["unprotected_lines"], 1);
    let note = array(&report["notes"])
        .iter()
        .filter_map(Json::as_str)
        .find(|n| n.contains("still holds a single suppressed cell"));
    assert!(
        note.is_some_and(|n| n.contains("treat the table as unprotected")),
        "{report:#}"
    );
}
