//! `concord extract` through the built binary, on the invented demo survey.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn concord(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_concord"))
        .current_dir(root())
        .env("NO_COLOR", "1")
        .args(args)
        .output()
        .expect("run concord")
}

/// Read a CSV into its header and rows with the csv crate, independently of concord.
fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut reader = csv::ReaderBuilder::new()
        .flexible(true)
        .from_path(path)
        .unwrap();
    let header = reader
        .headers()
        .unwrap()
        .iter()
        .map(str::to_string)
        .collect();
    let rows = reader
        .records()
        .map(|r| r.unwrap().iter().map(str::to_string).collect())
        .collect();
    (header, rows)
}

fn column<'a>(header: &[String], rows: &'a [Vec<String>], name: &str) -> Vec<&'a str> {
    let i = header.iter().position(|h| h == name).unwrap();
    rows.iter().map(|r| r[i].trim()).collect()
}

fn counts<'a>(values: impl IntoIterator<Item = &'a str>) -> HashMap<String, usize> {
    let mut m = HashMap::new();
    for v in values {
        *m.entry(v.to_string()).or_insert(0) += 1;
    }
    m
}

/// The demo codebook's labels, read from its TOML with the toml crate.
fn labels(variable: &str) -> Vec<(String, String)> {
    let text = std::fs::read_to_string(root().join("demo-data/codebook.toml")).unwrap();
    let value: toml::Value = toml::from_str(&text).unwrap();
    let var = value["variables"]
        .as_array()
        .unwrap()
        .iter()
        .find(|v| v["name"].as_str() == Some(variable))
        .unwrap();
    var["categories"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            (
                c["code"].to_string(),
                c["label"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

#[test]
fn every_label_count_equals_the_code_count_in_the_source() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("extract.csv");
    let result = concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(
        result.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&result.stderr)
    );
    let (src_header, src_rows) = read_csv(&root().join("demo-data/wave1.csv"));
    let (out_header, out_rows) = read_csv(&out);
    assert_eq!(src_rows.len(), out_rows.len());
    for variable in [
        "district",
        "dwelling",
        "fuel",
        "wood_stove",
        "wheeze",
        "cough",
    ] {
        let source = counts(column(&src_header, &src_rows, variable));
        let written = counts(column(&out_header, &out_rows, variable));
        for (code, label) in labels(variable) {
            // Codes in the demo file are written without leading zeros.
            let n_code = source.get(&code).copied().unwrap_or(0);
            let n_label = written.get(&label).copied().unwrap_or(0);
            assert_eq!(n_code, n_label, "{variable}: code {code} vs label {label}");
        }
        // Nothing but labels and empty cells (missing values) was written.
        let allowed: Vec<String> = labels(variable).into_iter().map(|(_, l)| l).collect();
        for value in written.keys() {
            assert!(
                value.is_empty() || allowed.contains(value),
                "{variable}: {value}"
            );
        }
    }
    // Numbers and dates pass through unchanged.
    assert_eq!(
        column(&src_header, &src_rows, "heat_hours")
            .iter()
            .filter(|v| !["97", "98"].contains(v))
            .count(),
        column(&out_header, &out_rows, "heat_hours")
            .iter()
            .filter(|v| !v.is_empty())
            .count()
    );
    assert_eq!(
        column(&src_header, &src_rows, "interview_date"),
        column(&out_header, &out_rows, "interview_date")
    );
}

#[test]
fn identifiers_are_left_out_unless_asked_for() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("x.csv");
    let o = out.to_str().unwrap();
    let result = concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        o,
    ]);
    assert!(String::from_utf8_lossy(&result.stderr).contains("left out direct identifiers hh_id"));
    assert!(!read_csv(&out).0.contains(&"hh_id".to_string()));
    let result = concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        o,
        "--include-identifiers",
    ]);
    assert_eq!(result.status.code(), Some(0));
    assert_eq!(read_csv(&out).0[0], "hh_id");
}

#[test]
fn sidecar_codebook_checks_the_extract_in_every_style() {
    let dir = tempfile::tempdir().unwrap();
    for style in [
        vec!["--codes", "label"],
        vec!["--codes", "pair", "--missing-labels"],
        vec!["--codes", "column", "--include-identifiers"],
    ] {
        let out = dir.path().join("e.csv");
        let mut args = vec![
            "extract",
            "demo-data/codebook.toml",
            "demo-data/wave1.csv",
            "-o",
            out.to_str().unwrap(),
        ];
        args.extend(style.iter().copied());
        let result = concord(&args);
        assert_eq!(result.status.code(), Some(0), "{style:?}");
        let sidecar = dir.path().join("e.codebook.toml");
        let check = concord(&["check", sidecar.to_str().unwrap(), out.to_str().unwrap()]);
        assert_eq!(
            check.status.code(),
            Some(0),
            "{style:?}\n{}{}",
            String::from_utf8_lossy(&check.stdout),
            String::from_utf8_lossy(&check.stderr)
        );
        let lint = concord(&["lint", sidecar.to_str().unwrap()]);
        assert_eq!(
            lint.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&lint.stdout)
        );
    }
}

#[test]
fn pairs_columns_and_missing_labels() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("p.csv");
    let o = out.to_str().unwrap();
    concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        o,
        "--codes",
        "pair",
        "--keep",
        "district,heat_hours",
        "--missing-labels",
    ]);
    let (header, rows) = read_csv(&out);
    assert_eq!(header, ["district", "heat_hours"]);
    let district = counts(column(&header, &rows, "district"));
    assert!(district.keys().all(|k| k.contains('|')), "{district:?}");
    assert!(district.contains_key("1|Quayside"));
    let hours = column(&header, &rows, "heat_hours");
    let (src_header, src_rows) = read_csv(&root().join("demo-data/wave1.csv"));
    let refused = column(&src_header, &src_rows, "heat_hours")
        .iter()
        .filter(|v| **v == "97")
        .count();
    assert!(refused > 0);
    assert_eq!(hours.iter().filter(|v| **v == "Refused").count(), refused);

    concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        o,
        "--codes",
        "column",
        "--keep",
        "fuel",
    ]);
    let (header, rows) = read_csv(&out);
    assert_eq!(header, ["fuel", "fuel_code"]);
    assert!(rows.iter().all(|r| r[1].is_empty() == r[0].is_empty()));
}

#[test]
fn where_filters_cases() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("w.csv");
    let result = concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        out.to_str().unwrap(),
        "--where",
        "district == 3 and hh_size >= 2",
    ]);
    assert_eq!(result.status.code(), Some(0));
    let (src_header, src_rows) = read_csv(&root().join("demo-data/wave1.csv"));
    let d = src_header.iter().position(|h| h == "district").unwrap();
    let s = src_header.iter().position(|h| h == "hh_size").unwrap();
    let expected = src_rows
        .iter()
        .filter(|r| r[d] == "3" && r[s].parse::<f64>().is_ok_and(|n| n >= 2.0))
        .count();
    let (header, rows) = read_csv(&out);
    assert_eq!(rows.len(), expected);
    assert!(column(&header, &rows, "district")
        .iter()
        .all(|v| *v == "Millbrook"));
}

#[test]
fn bad_input_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("bad.csv");
    let o = out.to_str().unwrap();
    let cases: Vec<Vec<&str>> = vec![
        vec![
            "extract",
            "demo-data/codebook.toml",
            "demo-data/nope.csv",
            "-o",
            o,
        ],
        vec![
            "extract",
            "demo-data/codebook.toml",
            "demo-data/wave1.csv",
            "-o",
            o,
            "--keep",
            "distrct",
        ],
        vec![
            "extract",
            "demo-data/codebook.toml",
            "demo-data/wave1.csv",
            "-o",
            o,
            "--where",
            "district = 3",
        ],
        vec![
            "extract",
            "demo-data/codebook.toml",
            "demo-data/wave2.csv",
            "-o",
            o,
        ],
    ];
    for args in &cases {
        let result = concord(args);
        assert_eq!(result.status.code(), Some(2), "{args:?}");
        assert!(!out.exists(), "{args:?} left an output file");
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            0,
            "{args:?}"
        );
    }
    let unknown = concord(&cases[1]);
    assert!(String::from_utf8_lossy(&unknown.stderr).contains("did you mean `district`?"));
}

#[test]
fn refuses_to_write_over_an_input() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data.csv");
    std::fs::copy(root().join("demo-data/wave1.csv"), &data).unwrap();
    let before = std::fs::read(&data).unwrap();
    let result = concord(&[
        "extract",
        "demo-data/codebook.toml",
        data.to_str().unwrap(),
        "-o",
        data.to_str().unwrap(),
    ]);
    assert_eq!(result.status.code(), Some(2));
    assert_eq!(std::fs::read(&data).unwrap(), before);
}

#[test]
fn derived_variables_from_a_recode_file() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("r.csv");
    let result = concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        out.to_str().unwrap(),
        "--recodes",
        "demo-data/recodes.toml",
        "--keep",
        "fuel,solid_fuel",
    ]);
    assert_eq!(
        result.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&result.stderr)
    );
    let (header, rows) = read_csv(&out);
    assert_eq!(header, ["fuel", "solid_fuel"]);
    // demo-data/recodes.toml maps fuel 4 (wood) and 5 (coal or peat) to solid fuel.
    let (src_header, src_rows) = read_csv(&root().join("demo-data/wave1.csv"));
    let solid = column(&src_header, &src_rows, "fuel")
        .iter()
        .filter(|f| ["4", "5"].contains(f))
        .count();
    let written = column(&header, &rows, "solid_fuel");
    assert_eq!(
        written
            .iter()
            .filter(|v| v.starts_with("Solid fuel"))
            .count(),
        solid
    );
    let sidecar = dir.path().join("r.codebook.toml");
    let check = concord(&["check", sidecar.to_str().unwrap(), out.to_str().unwrap()]);
    assert_eq!(
        check.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&check.stdout)
    );
    // A broken recode file stops the extract before anything is written.
    let bad = dir.path().join("bad.toml");
    std::fs::write(
        &bad,
        "[[derive]]\nname = \"x\"\nfrom = \"nope\"\ncuts = [1]\n",
    )
    .unwrap();
    let out2 = dir.path().join("never.csv");
    let result = concord(&[
        "extract",
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "-o",
        out2.to_str().unwrap(),
        "--recodes",
        bad.to_str().unwrap(),
    ]);
    assert_eq!(result.status.code(), Some(2));
    assert!(!out2.exists());
}
