//! Lint of conditions (universes, checks' `assert` and `when`): the right rule, the right
//! help, and a span on the very characters at fault, both in JSON (line and column) and in
//! the text output (where the underline starts and how wide it is).
//!
//! A condition written as a TOML string without escapes maps character for character onto
//! the file, so a diagnostic points inside the string. With escapes (`\"A\"`) the condition
//! text and the file differ, and the diagnostic points at the whole string instead.
//!
//! Each test writes a small codebook to a temporary folder; the expected place is found by
//! searching the codebook text for a marker, so the numbers cannot drift from the text.

use std::fs;
use std::process::Command;

use serde_json::Value as Json;

/// The household-travel codebook the cases below extend.
const BASE: &str = r#"[dataset]
name = "travel-diary-2025"

[[variables]]
name = "district"
label = "District of residence"
kind = "categorical"
categories = [{ code = "A", label = "Harbour" }, { code = "B", label = "Uplands" }]

[[variables]]
name = "has_bike"
label = "Household owns a bicycle"
kind = "categorical"
categories = [{ code = 1, label = "Yes" }, { code = 2, label = "No" }]

[[variables]]
name = "bike_trips"
label = "Bicycle trips on the diary day"
kind = "numeric"
range = { min = 0, max = 30 }
"#;

struct Lint {
    code: i32,
    text: String,
    json: Json,
    source: String,
}

/// Lint `BASE` followed by `extra`, in text and in JSON.
fn lint(extra: &str) -> Lint {
    let source = format!("{BASE}{extra}");
    let dir = tempfile::tempdir().expect("a temporary folder");
    let path = dir.path().join("codebook.toml");
    fs::write(&path, &source).expect("write the codebook");
    let run = |format: &str| {
        Command::new(env!("CARGO_BIN_EXE_concord"))
            .args(["lint", "--format", format])
            .arg(&path)
            .env("NO_COLOR", "1")
            .output()
            .expect("the concord binary runs")
    };
    let text = run("text");
    let json = run("json");
    assert!(
        text.stderr.is_empty() && json.stderr.is_empty(),
        "unexpected stderr:\n{}",
        String::from_utf8_lossy(&text.stderr)
    );
    assert_eq!(text.status.code(), json.status.code());
    Lint {
        code: json.status.code().unwrap_or(-1),
        text: String::from_utf8_lossy(&text.stdout).into_owned(),
        json: serde_json::from_slice(&json.stdout).expect("JSON output"),
        source,
    }
}

/// 1-based line and column of the first occurrence of `marker` in `source`, moved
/// `offset` characters into it.
fn place_of(source: &str, marker: &str, offset: usize) -> (u64, u64) {
    let at = source
        .find(marker)
        .unwrap_or_else(|| panic!("marker {marker:?} is not in the codebook"));
    let before = &source[..at];
    let line = before.matches('\n').count() + 1;
    let column = before.rsplit('\n').next().unwrap_or("").chars().count() + 1 + offset;
    (line as u64, column as u64)
}

/// The column where the first underline in the text output starts, and its width in
/// characters. The underline line is `    ·     ──┬─`, aligned with `NN │ source`.
fn first_underline(text: &str) -> (usize, usize) {
    let line = text
        .lines()
        .find(|l| l.contains('┬'))
        .unwrap_or_else(|| panic!("no underline in:\n{text}"));
    let chars: Vec<char> = line.chars().collect();
    let gutter = chars.iter().position(|&c| c == '·').expect("a gutter");
    let start = chars
        .iter()
        .position(|&c| c == '─' || c == '┬')
        .expect("an underline");
    let width = chars[start..]
        .iter()
        .take_while(|&&c| c == '─' || c == '┬')
        .count();
    // The source text starts two characters after the gutter mark (`· `).
    (start - gutter - 1, width)
}

/// The one diagnostic of a run: (rule, line, column, help).
fn only(lint: &Lint) -> (String, u64, u64, String) {
    let all = lint.json["diagnostics"].as_array().expect("diagnostics");
    assert_eq!(all.len(), 1, "expected one diagnostic:\n{}", lint.text);
    let d = &all[0];
    (
        d["rule"].as_str().unwrap_or("").to_string(),
        d["line"].as_u64().unwrap_or(0),
        d["column"].as_u64().unwrap_or(0),
        d["help"].as_str().unwrap_or("").to_string(),
    )
}

/// Assert the single diagnostic's rule, place (from `marker` and `offset`), underline
/// width and help.
fn expect(lint: &Lint, rule: &str, marker: &str, offset: usize, width: usize, help: &str) {
    let (got_rule, line, column, got_help) = only(lint);
    let (want_line, want_column) = place_of(&lint.source, marker, offset);
    assert_eq!(
        (got_rule.as_str(), line, column),
        (rule, want_line, want_column),
        "rule and place of:\n{}",
        lint.text
    );
    assert_eq!(
        first_underline(&lint.text),
        (want_column as usize, width),
        "underline of:\n{}",
        lint.text
    );
    assert_eq!(got_help, help, "help of:\n{}", lint.text);
    assert_eq!(lint.code, 1);
}

#[test]
fn an_unknown_name_in_a_universe_suggests_the_nearest() {
    let l = lint(
        "\n[[variables]]\nname = \"bike_km\"\nkind = \"numeric\"\nuniverse = \"has_bkie == 1\"\n",
    );
    expect(
        &l,
        "lint.unknown-variable",
        "has_bkie",
        0,
        "has_bkie".len(),
        "did you mean `has_bike`?",
    );
}

#[test]
fn an_unknown_name_in_a_check_points_into_assert_and_when() {
    let l = lint(
        "\n[[checks]]\nname = \"trips-need-bike\"\nassert = \"bike_trip == 0\"\nwhen = \"has_bike == 2\"\n",
    );
    expect(
        &l,
        "lint.unknown-variable",
        "bike_trip ",
        0,
        "bike_trip".len(),
        "did you mean `bike_trips`?",
    );
    let l = lint(
        "\n[[checks]]\nname = \"trips-need-bike\"\nassert = \"bike_trips == 0\"\nwhen = \"has_bike == 2 and distict == \\\"B\\\"\"\n",
    );
    // The `when` has escapes, so the span is the whole TOML string, quotes included.
    let raw = "\"has_bike == 2 and distict == \\\"B\\\"\"";
    expect(
        &l,
        "lint.unknown-variable",
        raw,
        0,
        raw.chars().count(),
        "did you mean `district`?",
    );
}

#[test]
fn a_syntax_error_points_at_the_character() {
    // `=` instead of `==`.
    let l = lint(
        "\n[[variables]]\nname = \"bike_km\"\nkind = \"numeric\"\nuniverse = \"has_bike = 1\"\n",
    );
    expect(
        &l,
        "lint.condition-syntax",
        "= 1\"",
        0,
        1,
        "use `==` to compare",
    );

    // An unterminated string inside a literal TOML string (no escapes, so still exact).
    let l = lint(
        "\n[[variables]]\nname = \"ferry\"\nkind = \"numeric\"\nuniverse = 'district == \"A'\n",
    );
    let (rule, line, column, _) = only(&l);
    assert_eq!(rule, "lint.condition-syntax");
    assert_eq!((line, column), place_of(&l.source, "\"A'", 0), "{}", l.text);

    // A condition that stops half-way: the place is just after its last character.
    let l = lint(
        "\n[[variables]]\nname = \"bike_km\"\nkind = \"numeric\"\nuniverse = \"has_bike ==\"\n",
    );
    let (rule, line, column, _) = only(&l);
    assert_eq!(rule, "lint.condition-syntax");
    assert_eq!(
        (line, column),
        place_of(&l.source, "==\"\n", 2),
        "{}",
        l.text
    );
}

#[test]
fn a_syntax_error_in_an_escaped_string_points_at_the_whole_string() {
    let raw = r#""district == \"A\" and (bike_trips > 1""#;
    let l = lint(&format!(
        "\n[[variables]]\nname = \"ferry\"\nkind = \"numeric\"\nuniverse = {raw}\n"
    ));
    expect(
        &l,
        "lint.condition-syntax",
        raw,
        0,
        raw.chars().count(),
        "add `)` to close it",
    );
}

#[test]
fn type_errors_point_at_the_comparison_or_the_whole_condition() {
    // A text code compared with a number: the span is the number.
    let l = lint(
        "\n[[variables]]\nname = \"ferry\"\nkind = \"numeric\"\nuniverse = \"district == 1\"\n",
    );
    let (rule, line, column, help) = only(&l);
    assert_eq!(rule, "lint.condition-type");
    assert_eq!(
        (line, column),
        place_of(&l.source, "1\"\n", 0),
        "{}",
        l.text
    );
    assert!(help.contains("put the code in quotes"), "{help}");

    // Arithmetic where a truth value is needed: the whole condition, without its quotes.
    let l = lint(
        "\n[[variables]]\nname = \"ferry\"\nkind = \"numeric\"\nuniverse = \"bike_trips + 1\"\n",
    );
    expect(
        &l,
        "lint.condition-type",
        "bike_trips + 1",
        0,
        "bike_trips + 1".len(),
        "compare it with something, for example `x >= 1`",
    );

    // Text ordered with `>`, inside an escaped string: the whole string.
    let raw = r#""district > \"A\"""#;
    let l = lint(&format!(
        "\n[[variables]]\nname = \"ferry\"\nkind = \"numeric\"\nuniverse = {raw}\n"
    ));
    expect(
        &l,
        "lint.condition-type",
        raw,
        0,
        raw.chars().count(),
        "text compares only with `==`, `!=` and `in`",
    );
}

#[test]
fn string_codes_in_escaped_conditions_lint_clean() {
    let l = lint(
        "\n[[variables]]\nname = \"ferry\"\nkind = \"numeric\"\nuniverse = \"district == \\\"A\\\"\"\n\
         \n[[checks]]\nname = \"no-ferry-uplands\"\nassert = \"ferry == 0\"\nwhen = 'district in [\"B\"]'\n",
    );
    assert_eq!(l.code, 0, "{}", l.text);
    assert_eq!(l.json["diagnostics"], Json::Array(Vec::new()), "{}", l.text);
}

#[test]
fn universes_in_a_cycle_are_reported_once_each() {
    let l = lint(
        "\n[[variables]]\nname = \"bike_km\"\nkind = \"numeric\"\nuniverse = \"bike_minutes >= 1\"\n\
         \n[[variables]]\nname = \"bike_minutes\"\nkind = \"numeric\"\nuniverse = \"bike_km > 0\"\n\
         \n[[variables]]\nname = \"bike_rating\"\nkind = \"numeric\"\nuniverse = \"answered(bike_rating)\"\n",
    );
    assert_eq!(l.code, 1);
    let found: Vec<(String, u64, u64)> = l.json["diagnostics"]
        .as_array()
        .expect("diagnostics")
        .iter()
        .map(|d| {
            (
                d["message"].as_str().unwrap_or("").to_string(),
                d["line"].as_u64().unwrap_or(0),
                d["column"].as_u64().unwrap_or(0),
            )
        })
        .collect();
    let (l1, c1) = place_of(&l.source, "bike_minutes >= 1", 0);
    let (l2, c2) = place_of(&l.source, "answered(bike_rating)", 0);
    assert_eq!(
        found,
        vec![
            (
                "universes depend on each other in a cycle: bike_km -> bike_minutes -> bike_km"
                    .to_string(),
                l1,
                c1
            ),
            (
                "universes depend on each other in a cycle: bike_rating -> bike_rating".to_string(),
                l2,
                c2
            ),
        ],
        "{}",
        l.text
    );
    assert!(l.json["diagnostics"]
        .as_array()
        .expect("diagnostics")
        .iter()
        .all(|d| d["rule"] == "lint.universe-cycle"));
}

#[test]
fn a_universe_that_only_leads_into_a_cycle_is_not_in_it() {
    // bike_rating depends on the cycle bike_km <-> bike_minutes but is not part of it.
    let l = lint(
        "\n[[variables]]\nname = \"bike_km\"\nkind = \"numeric\"\nuniverse = \"bike_minutes >= 1\"\n\
         \n[[variables]]\nname = \"bike_minutes\"\nkind = \"numeric\"\nuniverse = \"bike_km > 0\"\n\
         \n[[variables]]\nname = \"bike_rating\"\nkind = \"numeric\"\nuniverse = \"bike_km > 5\"\n",
    );
    let messages: Vec<&str> = l.json["diagnostics"]
        .as_array()
        .expect("diagnostics")
        .iter()
        .map(|d| d["message"].as_str().unwrap_or(""))
        .collect();
    assert_eq!(
        messages,
        vec!["universes depend on each other in a cycle: bike_km -> bike_minutes -> bike_km"],
        "{}",
        l.text
    );
}
