//! `concord check` on the demo survey (demo-data/README.md): the clean wave passes, the
//! planted problems of wave 2 are found exactly as `expected-wave2.json` lists them, and the
//! command's surface (gate levels, `-o`, standard input, gzip) behaves as DESIGN sections 6
//! and 12 promise.
//!
//! The expected files were written by an independent verifier (`demo-data/verify.py`), not
//! from concord's output. Where they describe an example with fields of their own (`fields`
//! for a ragged row, `documented`/`actual` for documented figures) instead of a raw value,
//! the test checks concord's example value says the same thing.

mod support;

use std::collections::BTreeMap;
use std::fs;
use std::io::Write;

use serde_json::Value as Json;
use support::{check_json, concord, demo, tally_sum, Case};

fn expected(name: &str) -> Json {
    let text = fs::read_to_string(demo(name)).unwrap();
    serde_json::from_str(&text).unwrap()
}

/// Findings keyed by (rule, variable, check).
fn by_key(report: &Json) -> BTreeMap<(String, String, String), &Json> {
    let mut map = BTreeMap::new();
    for f in report["findings"].as_array().unwrap() {
        let key = (
            f["rule"].as_str().unwrap().to_string(),
            f["variable"].as_str().unwrap_or("").to_string(),
            f["check"].as_str().unwrap_or("").to_string(),
        );
        assert!(
            map.insert(key.clone(), f).is_none(),
            "{key:?} reported twice"
        );
    }
    map
}

/// Numbers as the expected file writes them: integers without a fraction.
fn number(v: &Json) -> String {
    match v.as_f64() {
        Some(n) if n.fract() == 0.0 => format!("{}", n as i64),
        Some(n) => format!("{n}"),
        None => v.to_string(),
    }
}

fn compare_example(key: &(String, String, String), want: &Json, got: &Json, context: &Json) {
    let (rule, _, _) = key;
    let got_value = got["value"].as_str();
    match rule.as_str() {
        "documented.frequency-mismatch" => {
            let text = format!(
                "{}: documented {}, found {}",
                number(&want["code"]),
                number(&want["documented"]),
                number(&want["actual"])
            );
            assert_eq!(got_value, Some(text.as_str()), "{key:?}");
            assert!(got["row"].is_null() && got["case"].is_null(), "{key:?}");
        }
        "documented.statistic-mismatch" => {
            let statistic = want["statistic"].as_str().unwrap();
            let value = got_value.unwrap();
            let prefix = format!(
                "{statistic}: documented {}, found ",
                number(&want["documented"])
            );
            let found = value
                .strip_prefix(&prefix)
                .unwrap_or_else(|| panic!("{key:?}: {value:?} does not start {prefix:?}"));
            let found: f64 = found.parse().unwrap();
            let actual = want["actual"].as_f64().unwrap();
            // The expected file rounds to 4 decimals.
            assert!(
                (found - actual).abs() <= 0.000_05 + 1e-12,
                "{key:?}: {value}"
            );
        }
        _ => {
            assert_eq!(got["row"], want["row"], "{key:?}: row");
            assert_eq!(got["case"], want["case"], "{key:?}: case");
            if let Some(fields) = want.get("fields") {
                let text = format!(
                    "{} fields, expected {}",
                    fields,
                    context["expected_fields"].as_u64().unwrap()
                );
                assert_eq!(got_value, Some(text.as_str()), "{key:?}: ragged row");
            } else if !want["value"].is_null() {
                assert_eq!(got["value"], want["value"], "{key:?}: value");
            }
        }
    }
}

/// The report equals the expected file: same findings (no extras), counts, severities, and
/// the examples the expected file gives.
fn assert_matches_expected(report: &Json, expected: &Json) {
    for field in ["rows", "passed", "errors", "warnings"] {
        assert_eq!(report[field], expected[field], "{field}");
    }
    let got = by_key(report);
    let want = by_key(expected);
    let got_keys: Vec<_> = got.keys().collect();
    let want_keys: Vec<_> = want.keys().collect();
    assert_eq!(got_keys, want_keys, "the set of findings differs");
    for (key, w) in &want {
        let g = got[key];
        assert_eq!(g["count"], w["count"], "{key:?}: count");
        assert_eq!(g["severity"], w["severity"], "{key:?}: severity");
        let w_examples = w["examples"].as_array().unwrap();
        let g_examples = g["examples"].as_array().unwrap();
        if key.0 == "structure.case-count" {
            // "no row examples": concord gives the row count as the example's value.
            assert!(g_examples.iter().all(|e| e["row"].is_null()), "{key:?}");
            for e in g_examples {
                assert_eq!(e["value"].as_str(), Some(number(&w["actual"]).as_str()));
            }
            let message = g["message"].as_str().unwrap();
            assert!(
                message.contains(&number(&w["actual"]))
                    && message.contains(&number(&w["documented"])),
                "{message}"
            );
            continue;
        }
        assert_eq!(g_examples.len(), w_examples.len(), "{key:?}: examples");
        for (we, ge) in w_examples.iter().zip(g_examples) {
            compare_example(key, we, ge, w);
        }
        if let Some(categories) = w.get("categories") {
            let differing = categories
                .as_array()
                .unwrap()
                .iter()
                .filter(|c| c["documented"] != c["actual"])
                .count();
            assert_eq!(g["count"], differing as u64, "{key:?}: categories");
        }
    }
}

fn assert_tallies_add_up(report: &Json, rows: u64) {
    for v in report["variables"].as_array().unwrap() {
        assert_eq!(tally_sum(v), rows, "tallies of {v}");
    }
}

#[test]
fn wave1_passes() {
    let run = check_json(&demo("codebook.toml"), &demo("wave1.csv"), &[]);
    run.assert_code(0);
    let report = run.json();
    assert_eq!(report["rows"], 600);
    assert_eq!(report["passed"], true);
    assert_eq!(report["findings"], serde_json::json!([]));
    assert_eq!(
        (report["errors"].as_u64(), report["warnings"].as_u64()),
        (Some(0), Some(0))
    );
    assert_tallies_add_up(&report, 600);
    // The README's gate-unknown figures for wave 1.
    assert_eq!(support::variable(&report, "stove_age")["gate_unknown"], 27);
    assert_eq!(
        support::variable(&report, "wheeze_night")["gate_unknown"],
        16
    );
}

#[test]
fn wave2_findings_are_the_expected_ones() {
    let run = check_json(&demo("codebook.toml"), &demo("wave2.csv"), &[]);
    run.assert_code(1);
    let report = run.json();
    assert_matches_expected(&report, &expected("expected-wave2.json"));
    // Rows with the wrong number of fields are not checked further; every other row is
    // counted once per variable that has a column.
    for v in report["variables"].as_array().unwrap() {
        let want = if v["name"] == "cough" { 0 } else { 638 };
        assert_eq!(tally_sum(v), want, "tallies of {v}");
    }
}

#[test]
fn wave1_duplicate_header() {
    let run = check_json(&demo("codebook.toml"), &demo("wave1-dup-header.csv"), &[]);
    run.assert_code(1);
    assert_matches_expected(&run.json(), &expected("expected-wave1-dup-header.json"));
}

#[test]
fn fixed_width_wave1_passes() {
    let run = check_json(&demo("codebook-fixed.toml"), &demo("wave1-fixed.txt"), &[]);
    run.assert_code(0);
    let report = run.json();
    assert_eq!(report["rows"], 600);
    assert_eq!(report["findings"], serde_json::json!([]));
    assert_tallies_add_up(&report, 600);
    // Same file, same tallies as the delimited wave 1.
    let delimited = check_json(&demo("codebook.toml"), &demo("wave1.csv"), &[]).json();
    assert_eq!(report["variables"], delimited["variables"]);
}

#[test]
fn fail_on_never_passes_wave2() {
    let run = check_json(
        &demo("codebook.toml"),
        &demo("wave2.csv"),
        &["--fail-on", "never"],
    );
    run.assert_code(0);
    let report = run.json();
    assert_eq!(report["passed"], true);
    assert_eq!(report["errors"], 26);
}

#[test]
fn fail_on_warning_fails_on_warnings_only() {
    // Wave 1 with one column the codebook does not describe: a single warning.
    let case = Case::new();
    let mut text = String::new();
    for (i, line) in fs::read_to_string(demo("wave1.csv"))
        .unwrap()
        .lines()
        .enumerate()
    {
        text.push_str(line);
        text.push_str(if i == 0 { ",batch\n" } else { ",7\n" });
    }
    let data = case.write("wave1-extra.csv", text);
    let codebook = demo("codebook.toml");

    let run = check_json(&codebook, &data, &[]);
    run.assert_code(0);
    let report = run.json();
    assert_eq!(
        (report["errors"].as_u64(), report["warnings"].as_u64()),
        (Some(0), Some(1))
    );
    assert_eq!(report["findings"][0]["rule"], "structure.column-unexpected");
    assert_eq!(report["findings"][0]["variable"], "batch");

    let run = check_json(&codebook, &data, &["--fail-on", "warning"]);
    run.assert_code(1);
    assert_eq!(run.json()["passed"], false);
}

#[test]
fn output_file_is_written_whole_or_not_at_all() {
    let case = Case::new();
    let out = case.path("report.json");
    let out_arg = out.to_str().unwrap();

    // A run that fails the gate still writes its report, and prints nothing.
    let run = check_json(&demo("codebook.toml"), &demo("wave2.csv"), &["-o", out_arg]);
    run.assert_code(1);
    assert_eq!(run.stdout, "");
    let written: Json = serde_json::from_str(&fs::read_to_string(&out).unwrap()).unwrap();
    assert_eq!(written["rows"], 640);
    fs::remove_file(&out).unwrap();

    // A run that cannot complete writes nothing: no report, no temporary file left behind.
    let missing = case.path("no-such-wave.csv");
    let run = check_json(&demo("codebook.toml"), &missing, &["-o", out_arg]);
    run.assert_code(2);
    assert!(run.stderr.contains("no-such-wave.csv"), "{}", run.stderr);
    assert!(!out.exists());
    assert_eq!(fs::read_dir(case.dir.path()).unwrap().count(), 0);

    // And an existing report is left as it was.
    fs::write(&out, "previous report\n").unwrap();
    let run = check_json(&demo("codebook.toml"), &missing, &["-o", out_arg]);
    run.assert_code(2);
    assert_eq!(fs::read_to_string(&out).unwrap(), "previous report\n");
    assert_eq!(fs::read_dir(case.dir.path()).unwrap().count(), 1);
}

#[test]
fn output_over_an_input_is_refused() {
    let case = Case::new();
    let codebook = case.write("codebook.toml", fs::read(demo("codebook.toml")).unwrap());
    let data = case.write("wave1.csv", fs::read(demo("wave1.csv")).unwrap());
    let data_bytes = fs::read(&data).unwrap();
    let codebook_bytes = fs::read(&codebook).unwrap();
    // The same files, also spelt another way.
    let dotted = case.dir.path().join(".").join("wave1.csv");
    for target in [&data, &codebook, &dotted] {
        let run = check_json(&codebook, &data, &["-o", target.to_str().unwrap()]);
        run.assert_code(2);
        assert!(run.stderr.contains("input"), "{}", run.stderr);
        assert_eq!(fs::read(&data).unwrap(), data_bytes);
        assert_eq!(fs::read(&codebook).unwrap(), codebook_bytes);
    }
    assert_eq!(fs::read_dir(case.dir.path()).unwrap().count(), 2);
}

#[test]
fn standard_input_as_data() {
    let bytes = fs::read(demo("wave2.csv")).unwrap();
    let run = support::concord_stdin(
        [
            "check".as_ref(),
            "--format".as_ref(),
            "json".as_ref(),
            demo("codebook.toml").as_os_str(),
            "-".as_ref(),
        ],
        &bytes,
    );
    run.assert_code(1);
    let report = run.json();
    assert_eq!(report["data"], "-");
    assert_matches_expected(&report, &expected("expected-wave2.json"));
}

#[test]
fn gzip_copy_gives_the_same_findings() {
    let case = Case::new();
    let path = case.path("wave2.csv.gz");
    let mut gz = flate2::write::GzEncoder::new(
        fs::File::create(&path).unwrap(),
        flate2::Compression::default(),
    );
    gz.write_all(&fs::read(demo("wave2.csv")).unwrap()).unwrap();
    gz.finish().unwrap();
    // Detected from the content, whatever the name.
    let renamed = case.path("wave2-compressed.csv");
    fs::copy(&path, &renamed).unwrap();

    let plain = check_json(&demo("codebook.toml"), &demo("wave2.csv"), &[]).json();
    for p in [&path, &renamed] {
        let run = check_json(&demo("codebook.toml"), p, &[]);
        run.assert_code(1);
        let report = run.json();
        assert_matches_expected(&report, &expected("expected-wave2.json"));
        assert_eq!(report["findings"], plain["findings"]);
        assert_eq!(report["variables"], plain["variables"]);
    }
}

#[test]
fn text_report_says_failed() {
    let run = concord([
        "check".as_ref(),
        demo("codebook.toml").as_os_str(),
        demo("wave2.csv").as_os_str(),
    ]);
    run.assert_code(1);
    assert!(
        run.stdout
            .contains("26 error findings, 4 warning findings: FAILED"),
        "{}",
        run.stdout
    );
}
