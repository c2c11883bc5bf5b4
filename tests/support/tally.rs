//! Running `concord tally` and reading its output, for the tally test crates: JSON checked
//! against `schemas/tally.schema.json` with `jsonschema`, CSV read with the `csv` crate, and
//! small crossed data sets written by hand.

use std::path::{Path, PathBuf};

use serde_json::Value as Json;

use super::{concord, demo, root, Case, Run};

pub fn tally(codebook: &Path, data: &Path, args: &[&str]) -> Run {
    let mut all: Vec<std::ffi::OsString> = vec!["tally".into(), codebook.into(), data.into()];
    all.extend(args.iter().map(Into::into));
    concord(all)
}

pub fn schema_validator() -> jsonschema::Validator {
    let text = std::fs::read_to_string(root().join("schemas/tally.schema.json")).unwrap();
    let schema: Json = serde_json::from_str(&text).unwrap();
    jsonschema::draft202012::new(&schema).expect("the tally schema compiles")
}

/// `concord tally ... --format json`, checked against the published schema.
pub fn tally_json(codebook: &Path, data: &Path, args: &[&str]) -> Json {
    let mut all = args.to_vec();
    all.extend(["--format", "json"]);
    let run = tally(codebook, data, &all);
    run.assert_code(0);
    let json = run.json();
    assert_schema_valid(&json, args);
    json
}

/// Fail, naming `args`, unless `json` is valid against `schemas/tally.schema.json`.
pub fn assert_schema_valid(json: &Json, args: &[&str]) {
    let errors: Vec<String> = schema_validator()
        .iter_errors(json)
        .map(|e| format!("{}: {e}", e.instance_path))
        .collect();
    assert!(
        errors.is_empty(),
        "schema violations for {args:?}: {errors:#?}"
    );
}

pub fn demo_json(args: &[&str]) -> Json {
    tally_json(&demo("codebook.toml"), &demo("wave1.csv"), args)
}

pub fn hidden(entry: &Json) -> bool {
    entry["suppressed"] == true
}

pub fn array(json: &Json) -> &Vec<Json> {
    json.as_array().expect("an array")
}

/// A codebook of two coded variables `a` and `b` with `rows` and `columns` categories, and a
/// data file holding `cells[i][j]` cases of a = i + 1, b = j + 1.
pub fn crossed(case: &Case, cells: &[Vec<u64>]) -> (PathBuf, PathBuf) {
    let categories = |name: &str, prefix: &str, n: usize| {
        let list: Vec<String> = (1..=n)
            .map(|k| format!("{{ code = {k}, label = \"{prefix}{k}\" }}"))
            .collect();
        format!(
            "[[variables]]\nname = \"{name}\"\nkind = \"categorical\"\ncategories = [{}]\n",
            list.join(", ")
        )
    };
    let codebook = format!(
        "[dataset]\nname = \"worked-example\"\n\n{}\n{}",
        categories("a", "A", cells.len()),
        categories("b", "B", cells[0].len()),
    );
    let mut data = String::from("a,b\n");
    for (i, row) in cells.iter().enumerate() {
        for (j, &n) in row.iter().enumerate() {
            for _ in 0..n {
                data.push_str(&format!("{},{}\n", i + 1, j + 1));
            }
        }
    }
    (
        case.write("codebook.toml", codebook),
        case.write("data.csv", data),
    )
}

/// Every figure of an entry of a cross-tabulation, frequency table or by-group summary.
pub const FIGURES: [&str; 17] = [
    "count",
    "weighted_count",
    "row_percent",
    "column_percent",
    "percent",
    "valid_percent",
    "cumulative_valid_percent",
    "weighted_percent",
    "weighted_valid_percent",
    "ci95_low",
    "ci95_high",
    "n",
    "weighted_n",
    "effective_n",
    "estimate",
    "mean_ci95_low",
    "mean_ci95_high",
];

/// Checks that no row of tally CSV output marked suppressed has a figure; returns how many are
/// secondary.
pub fn assert_no_figures_in_csv(text: &str) -> usize {
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let headers = reader.headers().unwrap().clone();
    let at = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let mut secondary = 0;
    for record in reader.records().map(Result::unwrap) {
        if &record[at("suppressed")] != "true" {
            assert_eq!(&record[at("secondary")], "false");
            continue;
        }
        secondary += usize::from(&record[at("secondary")] == "true");
        for figure in FIGURES
            .iter()
            .filter(|f| !["weighted_n", "mean_ci95_low", "mean_ci95_high"].contains(f))
        {
            assert_eq!(
                &record[at(figure)],
                "",
                "{figure} of a suppressed row: {record:?}"
            );
        }
    }
    secondary
}
