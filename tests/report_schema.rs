//! The JSON Schema of the check report, `schemas/report.schema.json`, checked against what
//! the built binary writes.
//!
//! CI consumers read `concord check --format json`; the schema is the published promise about
//! that shape (DESIGN section 6). The reports are validated with `jsonschema`, a
//! general-purpose JSON Schema validator that knows nothing of concord, as a consumer would.
//!
//! - the schema is a valid draft 2020-12 schema;
//! - reports of the demo files and of small fixtures covering every shape validate;
//! - mutated reports (unknown rule id, missing `rows`, extra fields, ...) do not;
//! - the schema's rule enum is exactly the check rules of `concord::rules::CHECK_RULES`.

mod support;

use std::collections::BTreeSet;

use jsonschema::Validator;
use serde_json::{json, Value as Json};
use support::{check_json, demo, root, Case};

const DRAFT_2020_12: &str = "https://json-schema.org/draft/2020-12/schema";

fn schema() -> Json {
    let path = root().join("schemas/report.schema.json");
    let text = std::fs::read_to_string(&path).expect("read the report schema");
    serde_json::from_str(&text).expect("the report schema is JSON")
}

fn validator() -> Validator {
    jsonschema::draft202012::new(&schema()).expect("the report schema compiles")
}

fn problems(validator: &Validator, instance: &Json) -> Vec<String> {
    validator
        .iter_errors(instance)
        .map(|e| format!("{}: {e}", e.instance_path))
        .collect()
}

fn assert_valid(validator: &Validator, report: &Json, what: &str) {
    let p = problems(validator, report);
    assert!(
        p.is_empty(),
        "{what}: report does not match the schema:\n{}",
        p.join("\n")
    );
}

fn assert_invalid(validator: &Validator, report: &Json, what: &str) {
    assert!(
        !validator.is_valid(report),
        "{what}: a mutated report was accepted by the schema"
    );
}

#[test]
fn schema_is_a_valid_draft_2020_12_schema() {
    let schema = schema();
    assert_eq!(schema["$schema"], DRAFT_2020_12);
    let id = schema["$id"].as_str().unwrap();
    assert!(id.starts_with("https://concord.invalid/schemas/"), "{id}");
    // jsonschema bundles the draft 2020-12 meta-schema, so this needs no network.
    let meta = jsonschema::draft202012::new(&json!({ "$ref": DRAFT_2020_12 })).unwrap();
    let p = problems(&meta, &schema);
    assert!(p.is_empty(), "{}", p.join("\n"));
}

#[test]
fn rule_enum_is_the_check_rule_table() {
    let schema = schema();
    let in_schema: Vec<&str> = schema["$defs"]["rule"]["enum"]
        .as_array()
        .expect("$defs/rule/enum")
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    let in_table: Vec<&str> = concord::rules::CHECK_RULES.iter().map(|r| r.id).collect();
    assert_eq!(
        in_schema.iter().collect::<BTreeSet<_>>(),
        in_table.iter().collect::<BTreeSet<_>>(),
        "schema rule enum and CHECK_RULES differ"
    );
    assert_eq!(in_schema.len(), in_table.len(), "duplicates in the enum");
}

fn demo_report(codebook: &str, data: &str) -> Json {
    check_json(&demo(codebook), &demo(data), &[]).json()
}

#[test]
fn demo_reports_validate() {
    let v = validator();
    for (codebook, data) in [
        ("codebook.toml", "wave1.csv"),
        ("codebook.toml", "wave2.csv"),
        ("codebook.toml", "wave1-dup-header.csv"),
        ("codebook-fixed.toml", "wave1-fixed.txt"),
    ] {
        let report = demo_report(codebook, data);
        assert_valid(&v, &report, data);
    }
}

/// Small files that give the shapes the demo does not: no dataset id (null cases), an
/// encoding finding, every missing kind in the tallies, a duplicate column not in the
/// codebook, and a report on standard input.
#[test]
fn fixture_reports_validate() {
    let v = validator();
    let case = Case::new();
    let codebook = r#"
[dataset]
name = "shapes"
cases = 3

[[variables]]
name = "q"
label = "Question"
kind = "categorical"
categories = [ { code = 1, label = "Yes", frequency = 9 }, { code = 2, label = "No" } ]
missing = [
  { code = 7, label = "Refused", kind = "refused" },
  { code = 8, label = "Don't know", kind = "dont-know" },
  { code = 9, label = "Not asked", kind = "skipped" },
  { code = 6, label = "Lost", kind = "not-ascertained" },
  { code = 5, label = "Other", kind = "other" },
]

[[variables]]
name = "note"
label = "Note"
kind = "text"
max_length = 3
"#;
    let data =
        b"q,note,extra,extra\n1,ok,a,b\n7,caf\xe9,a,b\n8,x,a,b\n6,,a,b\n5,long,a,b\n3\n".to_vec();
    let run = case.check(codebook, &data, &["--max-examples", "1"]);
    run.assert_code(1);
    let report = run.json();
    assert_valid(&v, &report, "shapes fixture");
    let missing = &support::variable(&report, "q")["missing"];
    for kind in ["refused", "dont-know", "not-ascertained", "other"] {
        assert_eq!(missing[kind], 1, "{kind} in {missing}");
    }
    assert!(report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|f| f["rule"] == "structure.encoding"));

    let stdin = support::concord_stdin(
        [
            "check".as_ref(),
            "--format".as_ref(),
            "json".as_ref(),
            case.path("codebook.toml").as_os_str(),
            "-".as_ref(),
        ],
        &data,
    );
    assert_valid(&v, &stdin.json(), "shapes fixture on stdin");
}

/// A change that should make a valid report invalid.
type Mutation = Box<dyn Fn(&mut Json)>;

#[test]
fn mutated_reports_fail() {
    let v = validator();
    let report = demo_report("codebook.toml", "wave2.csv");
    assert_valid(&v, &report, "wave2");

    let mutations: Vec<(&str, Mutation)> = vec![
        (
            "unknown rule id",
            Box::new(|r| r["findings"][0]["rule"] = json!("value.made-up")),
        ),
        (
            "a lint rule id",
            Box::new(|r| r["findings"][0]["rule"] = json!("lint.duplicate-code")),
        ),
        (
            "missing rows",
            Box::new(|r| {
                r.as_object_mut().unwrap().remove("rows");
            }),
        ),
        ("rows as a string", Box::new(|r| r["rows"] = json!("640"))),
        (
            "extra top-level field",
            Box::new(|r| r["conventions"] = json!({})),
        ),
        (
            "unknown severity",
            Box::new(|r| r["findings"][0]["severity"] = json!("fatal")),
        ),
        (
            "extra field in a finding",
            Box::new(|r| r["findings"][0]["fields"] = json!(15)),
        ),
        (
            "finding without examples",
            Box::new(|r| {
                r["findings"][0].as_object_mut().unwrap().remove("examples");
            }),
        ),
        (
            "count zero",
            Box::new(|r| r["findings"][0]["count"] = json!(0)),
        ),
        (
            "check on a non-check finding",
            Box::new(|r| r["findings"][0]["check"] = json!("x")),
        ),
        (
            "consistency.failed without its check",
            Box::new(|r| {
                let findings = r["findings"].as_array_mut().unwrap();
                let f = findings
                    .iter_mut()
                    .find(|f| f["rule"] == "consistency.failed")
                    .unwrap();
                f.as_object_mut().unwrap().remove("check");
            }),
        ),
        (
            "example row zero",
            Box::new(|r| {
                let findings = r["findings"].as_array_mut().unwrap();
                let f = findings
                    .iter_mut()
                    .find(|f| f["rule"] == "value.not-a-number")
                    .unwrap();
                f["examples"][0]["row"] = json!(0);
            }),
        ),
        (
            "example without case",
            Box::new(|r| {
                let findings = r["findings"].as_array_mut().unwrap();
                let f = findings
                    .iter_mut()
                    .find(|f| f["rule"] == "value.not-a-number")
                    .unwrap();
                f["examples"][0].as_object_mut().unwrap().remove("case");
            }),
        ),
        (
            "unknown missing kind",
            Box::new(|r| r["variables"][0]["missing"]["refusd"] = json!(1)),
        ),
        (
            "skipped among the missing kinds",
            Box::new(|r| r["variables"][0]["missing"]["skipped"] = json!(1)),
        ),
        (
            "negative tally",
            Box::new(|r| r["variables"][0]["valid"] = json!(-1)),
        ),
        (
            "variable without gate_unknown",
            Box::new(|r| {
                r["variables"][0]
                    .as_object_mut()
                    .unwrap()
                    .remove("gate_unknown");
            }),
        ),
    ];
    for (what, mutate) in mutations {
        let mut m = report.clone();
        mutate(&mut m);
        assert_ne!(m, report, "{what}: the mutation changed nothing");
        assert_invalid(&v, &m, what);
    }
}
