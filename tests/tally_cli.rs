//! `concord tally` through the built binary, on the demo survey.
//!
//! The checks look outside concord: documented frequencies come from the codebook file
//! (read here with `toml`), counts and weights are recounted from the CSV with the `csv`
//! crate, the chi-square statistic is recomputed by the test's own arithmetic, and JSON
//! output is validated with `jsonschema` against `schemas/tally.schema.json`.

mod support;

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use assert_cmd::Command;
use serde_json::Value as Json;
use support::tally::{assert_schema_valid, schema_validator};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn codebook() -> PathBuf {
    root().join("demo-data/codebook.toml")
}

fn wave1() -> PathBuf {
    root().join("demo-data/wave1.csv")
}

fn concord() -> Command {
    Command::cargo_bin("concord").unwrap()
}

/// Run `concord tally` with `args` after the codebook and data; returns (exit code, stdout,
/// stderr).
fn tally(data: &Path, args: &[&str]) -> (i32, String, String) {
    let output = concord()
        .arg("tally")
        .arg(codebook())
        .arg(data)
        .args(args)
        .output()
        .unwrap();
    (
        output.status.code().unwrap_or(-1),
        String::from_utf8(output.stdout).unwrap(),
        String::from_utf8(output.stderr).unwrap(),
    )
}

/// `concord tally ... --format json`, checked against the published schema.
fn tally_json(data: &Path, args: &[&str]) -> Json {
    let mut all = args.to_vec();
    all.extend(["--format", "json"]);
    let (code, out, err) = tally(data, &all);
    assert_eq!(code, 0, "stderr: {err}");
    let json: Json = serde_json::from_str(&out).unwrap();
    assert_schema_valid(&json, args);
    json
}

/// The demo file's rows as maps from column name to trimmed cell.
fn rows(path: &Path) -> Vec<HashMap<String, String>> {
    let mut reader = csv::Reader::from_path(path).unwrap();
    let headers = reader.headers().unwrap().clone();
    reader
        .records()
        .map(|r| {
            let r = r.unwrap();
            headers
                .iter()
                .zip(r.iter())
                .map(|(h, v)| (h.to_string(), v.trim().to_string()))
                .collect()
        })
        .collect()
}

#[test]
fn district_counts_equal_the_documented_frequencies() {
    let text = std::fs::read_to_string(codebook()).unwrap();
    let table: toml::Table = text.parse().unwrap();
    let district = table["variables"]
        .as_array()
        .unwrap()
        .iter()
        .find(|v| v["name"].as_str() == Some("district"))
        .unwrap();
    let documented: Vec<(String, u64)> = district["categories"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["code"].as_integer().unwrap().to_string(),
                c["frequency"].as_integer().unwrap() as u64,
            )
        })
        .collect();
    let json = tally_json(&wave1(), &["district"]);
    let got: Vec<(String, u64)> = json["frequency"]["rows"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["kind"] == "category")
        .map(|r| {
            (
                r["code"].as_str().unwrap().to_string(),
                r["count"].as_u64().unwrap(),
            )
        })
        .collect();
    assert_eq!(got, documented);
    // And the text table shows the same counts in category order.
    let (code, out, _) = tally(&wave1(), &["district"]);
    assert_eq!(code, 0);
    let quayside = out.lines().find(|l| l.contains("Quayside")).unwrap();
    assert!(quayside.contains(" 114 "), "{quayside}");
    let order: Vec<usize> = [
        "Quayside",
        "Tanner's Rise",
        "Millbrook",
        "Larkfield",
        "Upper Fenn",
    ]
    .iter()
    .map(|l| out.find(l).unwrap())
    .collect();
    assert!(order.windows(2).all(|w| w[0] < w[1]), "category order");
}

/// Pearson's X^2 written out directly, for comparison with concord's.
fn pearson(table: &[Vec<f64>]) -> f64 {
    let rows: Vec<f64> = table.iter().map(|r| r.iter().sum()).collect();
    let columns: Vec<f64> = (0..table[0].len())
        .map(|c| table.iter().map(|r| r[c]).sum())
        .collect();
    let n: f64 = rows.iter().sum();
    let mut x2 = 0.0;
    for (r, row) in table.iter().enumerate() {
        for (c, observed) in row.iter().enumerate() {
            let expected = rows[r] * columns[c] / n;
            if expected > 0.0 {
                x2 += (observed - expected).powi(2) / expected;
            }
        }
    }
    x2
}

#[test]
fn fuel_by_district_chi_square_equals_a_recount() {
    // Recount fuel (1..7 valid, 99 not recorded) by district (1..5) from the CSV.
    let mut table = vec![vec![0.0; 5]; 7];
    for row in rows(&wave1()) {
        let (Ok(fuel), Ok(district)) = (
            row["fuel"].parse::<usize>(),
            row["district"].parse::<usize>(),
        ) else {
            continue;
        };
        if (1..=7).contains(&fuel) && (1..=5).contains(&district) {
            table[fuel - 1][district - 1] += 1.0;
        }
    }
    let json = tally_json(&wave1(), &["fuel", "--by", "district"]);
    let crosstab = &json["crosstab"];
    for (r, row) in table.iter().enumerate() {
        for (c, expected) in row.iter().enumerate() {
            assert_eq!(
                crosstab["cells"][r][c]["count"].as_f64().unwrap(),
                *expected,
                "cell fuel {} district {}",
                r + 1,
                c + 1
            );
        }
    }
    let test = &crosstab["chi_square"];
    let expected = pearson(&table);
    let got = test["statistic"].as_f64().unwrap();
    assert!((got - expected).abs() < 1e-9, "X^2 {got} vs {expected}");
    assert_eq!(test["df"], 24);
    let n: f64 = table.iter().flatten().sum();
    let v = (expected / (n * 4.0)).sqrt();
    assert!((test["cramers_v"].as_f64().unwrap() - v).abs() < 1e-12);
}

#[test]
fn weighted_by_default_with_hh_weight() {
    let data = rows(&wave1());
    let json = tally_json(&wave1(), &["district"]);
    assert_eq!(json["weight"]["variable"], "hh_weight");
    let sum: f64 = data
        .iter()
        .map(|r| r["hh_weight"].parse::<f64>().unwrap())
        .sum();
    assert!((json["weight"]["sum"].as_f64().unwrap() - sum).abs() < 1e-9);
    // Weighted count of Quayside recomputed.
    let quayside: f64 = data
        .iter()
        .filter(|r| r["district"] == "1")
        .map(|r| r["hh_weight"].parse::<f64>().unwrap())
        .sum();
    let row = &json["frequency"]["rows"][0];
    assert!((row["weighted_count"].as_f64().unwrap() - quayside).abs() < 1e-9);
    // Kish n_eff recomputed from the weights.
    let sum2: f64 = data
        .iter()
        .map(|r| r["hh_weight"].parse::<f64>().unwrap().powi(2))
        .sum();
    let n_eff = json["weight"]["effective_n"].as_f64().unwrap();
    assert!((n_eff - sum * sum / sum2).abs() < 1e-9);
    let unweighted = tally_json(&wave1(), &["district", "--unweighted"]);
    assert!(unweighted["weight"].is_null());
    assert!(unweighted["frequency"]["rows"][0]["weighted_count"].is_null());
}

#[test]
fn every_shape_validates_against_the_schema() {
    for args in [
        &["district"][..],
        &["fuel"],
        &["wheeze_night", "--unweighted"],
        &["heat_hours"],
        &["heat_hours", "--by", "district"],
        &["stove_age", "--by", "hh_size", "--unweighted"],
        &["wheeze", "--by", "dwelling", "--suppress-below", "10"],
        &[
            "fuel",
            "--by",
            "district",
            "--event",
            "4",
            "--min-cell",
            "5",
        ],
        &["cough", "--by", "hh_size"],
    ] {
        tally_json(&wave1(), args);
    }
    // The schema is strict enough to notice a wrong shape.
    let mut json = tally_json(&wave1(), &["district"]);
    json["frequency"]["rows"][0]["kind"] = Json::from("bogus");
    json["disclosure"]["extra"] = Json::from(1);
    assert!(schema_validator().iter_errors(&json).count() >= 2);
}

#[test]
fn missing_kinds_and_blanks_have_their_own_rows() {
    let json = tally_json(&wave1(), &["wheeze_night", "--unweighted"]);
    let rows = json["frequency"]["rows"].as_array().unwrap();
    let skipped = rows
        .iter()
        .find(|r| r["missing_kind"] == "skipped")
        .expect("a skipped row: blank means skipped for wheeze_night");
    let blanks = self::rows(&wave1())
        .iter()
        .filter(|r| r["wheeze_night"].is_empty())
        .count() as u64;
    assert_eq!(skipped["count"].as_u64().unwrap(), blanks);
    assert!(skipped["valid_percent"].is_null());
    let refused = rows
        .iter()
        .find(|r| r["missing_kind"] == "refused")
        .unwrap();
    assert_eq!(refused["code"], "8");
    let total: u64 = rows.iter().map(|r| r["count"].as_u64().unwrap()).sum();
    assert_eq!(total, 600);
}

#[test]
fn numeric_variables_get_a_summary() {
    let json = tally_json(&wave1(), &["heat_hours", "--unweighted"]);
    let summary = &json["summary"];
    // The codebook documents valid = 552, mean 9.27, sd 4.76, min 0, max 24 for wave 1.
    assert_eq!(summary["n"], 552);
    assert!((summary["mean"].as_f64().unwrap() - 9.27).abs() < 0.005);
    assert!((summary["sd"].as_f64().unwrap() - 4.76).abs() < 0.005);
    assert_eq!(summary["min"].as_f64(), Some(0.0));
    assert_eq!(summary["max"].as_f64(), Some(24.0));
    let rows = json["frequency"]["rows"].as_array().unwrap();
    assert_eq!(rows[0]["kind"], "valid");
    assert!(rows.iter().any(|r| r["missing_kind"] == "dont-know"));
}

#[test]
fn weighted_quartiles_in_every_format_and_suppressed_with_the_rest() {
    // Recounted from the CSV by the definition, the smallest x whose share of the weight
    // (values <= x) reaches p; `tally_stats.rs` checks the same against numpy.
    let mut valid: Vec<(f64, f64)> = rows(&wave1())
        .iter()
        .filter(|r| !["97", "98", ""].contains(&r["heat_hours"].as_str()))
        .map(|r| {
            (
                r["heat_hours"].parse().unwrap(),
                r["hh_weight"].parse().unwrap(),
            )
        })
        .collect();
    assert_eq!(valid.len(), 552);
    valid.sort_by(|a, b| a.0.total_cmp(&b.0));
    let total: f64 = valid.iter().map(|v| v.1).sum();
    let quantile = |p: f64| {
        let mut running = 0.0;
        valid
            .iter()
            .find(|(_, w)| {
                running += w;
                running / total >= p
            })
            .map(|v| v.0)
    };
    let json = tally_json(&wave1(), &["heat_hours"]);
    let summary = &json["summary"];
    let fields = ["weighted_q1", "weighted_median", "weighted_q3"];
    for (field, p) in fields.into_iter().zip([0.25, 0.5, 0.75]) {
        assert_eq!(summary[field].as_f64(), quantile(p), "{field}");
    }
    // Only when weighted.
    let unweighted = tally_json(&wave1(), &["heat_hours", "--unweighted"]);
    for field in fields {
        assert!(unweighted["summary"][field].is_null(), "{field}");
    }
    let (_, text, _) = tally(&wave1(), &["heat_hours"]);
    assert!(text.contains("weighted lower quartile"), "{text}");
    assert!(text.contains("weighted median"), "{text}");
    assert!(text.contains("weighted upper quartile"), "{text}");
    let (_, markdown, _) = tally(&wave1(), &["heat_hours", "--format", "markdown"]);
    let median = summary["weighted_median"].as_f64().unwrap();
    assert!(
        markdown.contains(&format!("| weighted median | {median} |")),
        "{markdown}"
    );
    let (_, csv, _) = tally(&wave1(), &["heat_hours", "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(csv.as_bytes());
    let headers = reader.headers().unwrap().clone();
    let at = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let line = reader
        .records()
        .map(Result::unwrap)
        .find(|r| &r[at("row_kind")] == "summary")
        .expect("a summary row");
    let cell = |name: &str| &line[at(name)];
    for field in fields {
        assert_eq!(cell(field).parse::<f64>().ok(), summary[field].as_f64());
    }
    // Suppression blanks them with the other figures.
    let hidden = tally_json(&wave1(), &["heat_hours", "--suppress-below", "1000"]);
    assert_eq!(hidden["summary"]["suppressed"], true);
    for field in fields {
        assert!(hidden["summary"][field].is_null(), "{field}");
    }
}

#[test]
fn binary_variable_by_group_gives_wilson_intervals() {
    let json = tally_json(&wave1(), &["wheeze", "--by", "district", "--unweighted"]);
    let group = &json["by_group"];
    assert_eq!(group["statistic"], "proportion");
    assert_eq!(group["event"]["code"], "1");
    let data = rows(&wave1());
    let quayside: Vec<_> = data
        .iter()
        .filter(|r| r["district"] == "1" && (r["wheeze"] == "1" || r["wheeze"] == "2"))
        .collect();
    let yes = quayside.iter().filter(|r| r["wheeze"] == "1").count() as f64;
    let n = quayside.len() as f64;
    let first = &group["groups"][0];
    assert_eq!(first["n"].as_f64(), Some(n));
    assert!((first["estimate"].as_f64().unwrap() - 100.0 * yes / n).abs() < 1e-9);
    // Wilson (1927) as in Newcombe (1998), recomputed here.
    let (z, p) = (1.959963984540054f64, yes / n);
    let low =
        (2.0 * n * p + z * z - z * (z * z + 4.0 * n * p * (1.0 - p)).sqrt()) / (2.0 * (n + z * z));
    assert!((first["ci95_low"].as_f64().unwrap() - 100.0 * low).abs() < 1e-9);
}

#[test]
fn small_cells_are_flagged_in_every_format() {
    let json = tally_json(&wave1(), &["fuel", "--by", "district"]);
    // Quayside x No heating holds one case in wave 1.
    let cell = &json["crosstab"]["cells"][6][0];
    assert_eq!(cell["count"], 1);
    assert_eq!(cell["small"], true);
    assert!(json["disclosure"]["small_cells"].as_u64().unwrap() > 0);
    let (_, text, _) = tally(&wave1(), &["fuel", "--by", "district"]);
    let line = text.lines().find(|l| l.contains("No heating")).unwrap();
    assert!(line.contains("1*"), "{line}");
    assert!(text.contains("* fewer than 10 cases"));
    assert!(text.trim_end().ends_with("your local disclosure rules."));
    let (_, markdown, _) = tally(
        &wave1(),
        &["fuel", "--by", "district", "--format", "markdown"],
    );
    assert!(markdown.contains("| 1* |"), "{markdown}");
    assert!(markdown
        .trim_end()
        .ends_with("your local disclosure rules."));
    let (_, csv_text, _) = tally(&wave1(), &["fuel", "--by", "district", "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(csv_text.as_bytes());
    let headers = reader.headers().unwrap().clone();
    let at = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let small = reader
        .records()
        .map(Result::unwrap)
        .find(|r| &r[at("var_label")] == "No heating" && &r[at("by_label")] == "Quayside")
        .unwrap();
    assert_eq!(&small[at("small")], "true");
    assert_eq!(&small[at("count")], "1");
    assert_eq!(&small[at("table")], "crosstab");
}

#[test]
fn suppression_removes_small_counts_and_the_test() {
    let json = tally_json(
        &wave1(),
        &["fuel", "--by", "district", "--suppress-below", "5"],
    );
    let cell = &json["crosstab"]["cells"][6][0];
    assert!(cell["count"].is_null());
    assert!(cell["row_percent"].is_null());
    assert_eq!(cell["suppressed"], true);
    assert!(json["crosstab"]["chi_square"].is_null());
    assert_eq!(json["disclosure"]["test_withheld"], true);
    let (_, text, _) = tally(
        &wave1(),
        &["fuel", "--by", "district", "--suppress-below", "5"],
    );
    assert!(text.contains("suppressed"));
    assert!(!text.contains("Pearson chi-square"));
    // In a frequency table the cumulative percent stops at the first suppressed row.
    let json = tally_json(&wave1(), &["fuel", "--suppress-below", "20"]);
    let rows = json["frequency"]["rows"].as_array().unwrap();
    let none_heating = rows.iter().find(|r| r["code"] == "7").unwrap();
    assert_eq!(none_heating["suppressed"], true);
    assert!(none_heating["count"].is_null());
}

#[test]
fn unknown_variables_suggest_the_nearest_name() {
    let (code, _, err) = tally(&wave1(), &["distrct"]);
    assert_eq!(code, 2);
    assert!(err.contains("did you mean `district`"), "{err}");
    let (code, _, err) = tally(&wave1(), &["fuel", "--by", "dwelling_type"]);
    assert_eq!(code, 2);
    assert!(err.contains("dwelling"), "{err}");
    let (code, _, err) = tally(&wave1(), &["hh_id"]);
    assert_eq!(code, 2, "{err}");
}

#[test]
fn a_numeric_by_variable_with_many_values_must_be_banded() {
    let (code, _, err) = tally(&wave1(), &["fuel", "--by", "hh_weight"]);
    assert_eq!(code, 2);
    assert!(err.contains("band it with a recode first"), "{err}");
}

#[test]
fn bad_weights_are_dropped_and_reported() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(wave1()).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let weight = lines[0].split(',').position(|h| h == "hh_weight").unwrap();
    let mut set = |line: usize, value: &str| {
        let mut fields: Vec<String> = lines[line].split(',').map(str::to_string).collect();
        fields[weight] = value.to_string();
        lines[line] = fields.join(",");
    };
    set(1, "-1.5");
    set(2, "");
    set(3, "");
    set(4, "heavy");
    let data = dir.path().join("bad-weights.csv");
    std::fs::write(&data, lines.join("\n") + "\n").unwrap();
    let (code, out, err) = tally(&data, &["district", "--format", "json"]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("1 case left out: they have a negative weight"),
        "{err}"
    );
    assert!(err.contains("2 cases left out"), "{err}");
    let json: Json = serde_json::from_str(&out).unwrap();
    assert_eq!(json["cases"], 596);
    let reasons: HashMap<String, u64> = json["excluded"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| {
            (
                e["reason"].as_str().unwrap().to_string(),
                e["count"].as_u64().unwrap(),
            )
        })
        .collect();
    assert_eq!(reasons["weight-negative"], 1);
    assert_eq!(reasons["weight-missing"], 2);
    assert_eq!(reasons["weight-invalid"], 1);
    let errors = schema_validator().iter_errors(&json).count();
    assert_eq!(errors, 0);
}

#[test]
fn output_goes_to_a_file_but_never_over_an_input() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("district.md");
    let (code, stdout, _) = tally(
        &wave1(),
        &[
            "district",
            "--format",
            "markdown",
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0);
    assert!(stdout.is_empty());
    assert!(std::fs::read_to_string(&out)
        .unwrap()
        .contains("| 1 | Quayside |"));
    // Writing over the data file is refused and leaves it as it was.
    let copy = dir.path().join("wave1.csv");
    std::fs::copy(wave1(), &copy).unwrap();
    let before = std::fs::read(&copy).unwrap();
    let (code, _, err) = tally(&copy, &["district", "-o", copy.to_str().unwrap()]);
    assert_eq!(code, 2);
    assert!(err.contains("also an input"), "{err}");
    assert_eq!(std::fs::read(&copy).unwrap(), before);
}

#[test]
fn an_unknown_event_code_is_refused() {
    let (code, _, err) = tally(&wave1(), &["fuel", "--by", "district", "--event", "42"]);
    assert_eq!(code, 2);
    assert!(err.contains("not a category"), "{err}");
}
