//! One test per check rule of `concord::rules::CHECK_RULES`, through the built binary, on
//! tiny codebooks and data files written into a temporary folder.
//!
//! Every rule that can apply to fixed-width input runs on the same survey written both ways
//! (`Survey::both`): as a CSV with a header and with `[file] layout = "fixed"`. Only the
//! header rules (`structure.column-*`) are delimited-only. Each rule's test is the function
//! named after its id (`value.not-a-number` -> `value_not_a_number`); the last test fails
//! when a rule has none.
//!
//! DESIGN section 5 is the spec: routing, value precedence, a cell with a value finding
//! counting as missing for conditions, and `structure.id-duplicate` counting every repeat.

mod support;

use serde_json::{json, Value as Json};
use support::survey::{Layout, Survey, Var};
use support::{finding, findings, rows, values, variable, Case};

const ID: Var = ("id", 4, r#"kind = "identifier""#);

const YES_NO: &str = r#"kind = "categorical"
categories = [ { code = 1, label = "Yes" }, { code = 2, label = "No" } ]
missing = [
  { code = 8, label = "Refused", kind = "refused" },
  { code = 9, label = "Don't know", kind = "dont-know" },
]"#;

fn no_findings(report: &Json) {
    assert_eq!(report["findings"], json!([]), "{report:#}");
}

fn rules_of(report: &Json) -> Vec<&str> {
    report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["rule"].as_str().unwrap())
        .collect()
}

// ---------------------------------------------------------------- structure (header)

#[test]
fn structure_column_missing() {
    let case = Case::new();
    let codebook = r#"
[dataset]
name = "t"
[[variables]]
name = "a"
kind = "numeric"
[[variables]]
name = "b"
kind = "numeric"
[[checks]]
name = "b-positive"
assert = "b > 0"
"#;
    let run = case.check(codebook, "a,c\n1,x\n2,y\n", &[]);
    run.assert_code(1);
    let report = run.json();
    let f = finding(&report, "structure.column-missing", Some("b"));
    assert_eq!(f["count"], 1);
    assert_eq!(f["severity"], "error");
    assert_eq!(f["examples"], json!([]));
    let b = variable(&report, "b");
    assert_eq!(support::tally_sum(b), 0);
    assert_eq!(variable(&report, "a")["valid"], 2);
    // A condition reading the absent variable is unknown, not a failure.
    assert!(findings(&report, "consistency.failed").is_empty());
}

#[test]
fn structure_column_unexpected() {
    let case = Case::new();
    let codebook = "[dataset]\nname = \"t\"\n[[variables]]\nname = \"age\"\nkind = \"numeric\"\n";
    let run = case.check(codebook, "age,agee\n1,2\n", &[]);
    run.assert_code(0);
    let report = run.json();
    let f = finding(&report, "structure.column-unexpected", Some("agee"));
    assert_eq!(
        (f["count"].as_u64(), f["severity"].as_str()),
        (Some(1), Some("warning"))
    );
    assert!(
        f["message"]
            .as_str()
            .unwrap()
            .contains("did you mean `age`"),
        "{f}"
    );
    assert_eq!(report["warnings"], 1);
    case.check(codebook, "age,agee\n1,2\n", &["--fail-on", "warning"])
        .assert_code(1);
}

#[test]
fn structure_column_duplicate() {
    let case = Case::new();
    let codebook = "[dataset]\nname = \"t\"\n[[variables]]\nname = \"a\"\nkind = \"numeric\"\n";
    // The first `a` is checked; the repeat holds a value that would be a finding.
    let run = case.check(codebook, "a,a,x,x\n1,oops,p,q\n", &[]);
    run.assert_code(1);
    let report = run.json();
    let f = finding(&report, "structure.column-duplicate", Some("a"));
    assert_eq!(
        (f["count"].as_u64(), f["examples"].clone()),
        (Some(1), json!([]))
    );
    finding(&report, "structure.column-duplicate", Some("x"));
    finding(&report, "structure.column-unexpected", Some("x"));
    assert!(findings(&report, "value.not-a-number").is_empty());
    assert_eq!(variable(&report, "a")["valid"], 1);
}

// ---------------------------------------------------------------- structure (rows)

#[test]
fn structure_row_length() {
    let case = Case::new();
    let codebook = r#"
[dataset]
name = "t"
id = "id"
[[variables]]
name = "id"
kind = "identifier"
[[variables]]
name = "n"
kind = "numeric"
"#;
    // Row 2 has a field too many (and a bad number that must not be checked), row 3 one
    // too few, row 4 is fine apart from its value.
    let run = case.check(codebook, "id,n\nP1,1\nP2,oops,3\nP3\nP4,x\n", &[]);
    run.assert_code(1);
    let report = run.json();
    let f = finding(&report, "structure.row-length", None);
    assert_eq!(f["count"], 2);
    assert_eq!(rows(f), [2, 3]);
    assert_eq!(f["examples"][0]["case"], "P2");
    assert_eq!(f["examples"][0]["value"], "3 fields, expected 2");
    assert_eq!(values(f)[1], "1 field, expected 2");
    let nan = finding(&report, "value.not-a-number", Some("n"));
    assert_eq!(rows(nan), [4]);
    assert_eq!(report["rows"], 4);
    assert_eq!(support::tally_sum(variable(&report, "n")), 2);

    // Fixed width: a short record, and a long one with text past the last field, are wrong;
    // a long one with only trailing blanks is fine.
    let fixed = r#"
[dataset]
name = "t"
id = "id"
[file]
layout = "fixed"
[[variables]]
name = "id"
kind = "identifier"
columns = { start = 1, end = 3 }
[[variables]]
name = "n"
kind = "numeric"
columns = { start = 4, end = 6 }
"#;
    let run = case.check(fixed, "P1   1\nP2 1\nP3   1zz\nP4   1    \nP5 abc\n", &[]);
    run.assert_code(1);
    let report = run.json();
    let f = finding(&report, "structure.row-length", None);
    assert_eq!(f["count"], 2);
    assert_eq!(rows(f), [2, 3]);
    assert_eq!(
        values(f),
        ["record length 4, expected 6", "record length 8, expected 6"]
    );
    assert_eq!(f["examples"][1]["case"], "P3");
    assert_eq!(rows(finding(&report, "value.not-a-number", Some("n"))), [5]);
    assert_eq!(report["rows"], 5);
}

#[test]
fn structure_case_count() {
    let vars = [ID, ("n", 3, r#"kind = "numeric""#)];
    let data: &[&[&str]] = &[&["P1", "1"], &["P2", "2"]];
    Survey {
        dataset: "cases = 3",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "structure.case-count", None);
        assert_eq!(f["count"], 1);
        assert_eq!(
            f["examples"],
            json!([{ "row": null, "case": null, "value": "2" }])
        );
        assert_eq!(
            f["message"],
            "the file has 2 rows, the codebook documents 3 cases"
        );
        assert_eq!(r["passed"], false);
    });
    Survey {
        dataset: "cases = 2",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| no_findings(r));
}

#[test]
fn structure_encoding() {
    // Row 2 holds a Latin-1 byte in a file declared UTF-8; the run carries on (row 3's
    // over-long note is still found).
    let vars = [ID, ("note", 8, "kind = \"text\"\nmax_length = 4")];
    let data: &[&[&str]] = &[&["P1", "ok"], &["P2", "caf<xE9>"], &["P3", "toolong"]];
    let survey = Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    };
    survey.both(&[], |r, _| {
        let f = finding(r, "structure.encoding", None);
        assert_eq!(f["count"], 1);
        assert_eq!(
            f["examples"],
            json!([{ "row": 2, "case": "P2", "value": null }])
        );
        assert!(f["message"].as_str().unwrap().contains("utf-8"), "{f}");
        assert_eq!(rows(finding(r, "value.too-long", Some("note"))), [3]);
        assert_eq!(r["rows"], 3);
    });

    // Declared latin1, the same bytes are read correctly: é is a letter, É too.
    let vars = [ID, ("note", 8, "kind = \"text\"\npattern = \"[a-zé]+\"")];
    let data: &[&[&str]] = &[&["P1", "caf<xE9>"], &["P2", "CAF<xC9>"]];
    Survey {
        dataset: "id = \"id\"",
        file: "encoding = \"latin1\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        assert!(findings(r, "structure.encoding").is_empty(), "{r:#}");
        let f = finding(r, "value.pattern-mismatch", Some("note"));
        assert_eq!(
            f["examples"],
            json!([{ "row": 2, "case": "P2", "value": "CAFÉ" }])
        );
        assert_eq!(variable(r, "note")["valid"], 1);
    });

    // windows-1252 maps 0x80 to the euro sign, which latin1 does not.
    let vars = [ID, ("price", 6, "kind = \"text\"\npattern = \"€[0-9]+\"")];
    let data: &[&[&str]] = &[&["P1", "<x80>12"]];
    Survey {
        file: "encoding = \"windows-1252\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| no_findings(r));
}

#[test]
fn structure_id_duplicate() {
    // A appears three times: the second and third count, so a triple counts 2.
    let vars = [ID, ("n", 2, r#"kind = "numeric""#)];
    let data: &[&[&str]] = &[
        &["A", "1"],
        &["B", "1"],
        &["A", "1"],
        &["A", "1"],
        &["C", "1"],
        &["B", "1"],
    ];
    Survey {
        dataset: "id = [\"id\"]",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "structure.id-duplicate", Some("id"));
        assert_eq!(f["count"], 3);
        assert_eq!(rows(f), [3, 4, 6]);
        assert_eq!(values(f), ["A", "A", "B"]);
        assert_eq!(f["examples"][2]["case"], "B");
        assert_eq!(r["rows"], 6);
    });

    // A key of two variables: the case id joins them with "/".
    let vars = [
        ("hh", 2, r#"kind = "identifier""#),
        ("p", 2, r#"kind = "numeric""#),
    ];
    let data: &[&[&str]] = &[
        &["1", "1"],
        &["1", "2"],
        &["2", "1"],
        &["1", "1"],
        &["1", "1"],
    ];
    Survey {
        dataset: "id = [\"hh\", \"p\"]",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "structure.id-duplicate", Some("hh,p"));
        assert_eq!(f["count"], 2);
        assert_eq!(rows(f), [4, 5]);
        assert_eq!(f["examples"][0]["case"], "1/1");
    });
}

#[test]
fn structure_id_blank() {
    let vars = [ID, ("n", 2, r#"kind = "numeric""#)];
    let data: &[&[&str]] = &[&["", "1"], &["", "2"], &["A", "3"]];
    Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "structure.id-blank", Some("id"));
        assert_eq!(f["count"], 2);
        assert_eq!(
            f["examples"],
            json!([
                { "row": 1, "case": null, "value": "" },
                { "row": 2, "case": null, "value": "" },
            ])
        );
        // Reported once: not also value.blank, and two blank keys are not duplicates.
        assert_eq!(rules_of(r), ["structure.id-blank"]);
        let id = variable(r, "id");
        assert_eq!(
            (id["valid"].as_u64(), id["invalid"].as_u64()),
            (Some(1), Some(2))
        );
    });
}

// ---------------------------------------------------------------- value rules

#[test]
fn value_not_a_number() {
    let vars = [ID, ("n", 4, r#"kind = "numeric""#), ("c", 2, YES_NO)];
    let data: &[&[&str]] = &[
        &["P1", "n/a", "1"],
        &["P2", "1e3", "Y"],
        &["P3", "+7", "2"],
        &["P4", "1.5.", "1"],
    ];
    Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let n = finding(r, "value.not-a-number", Some("n"));
        assert_eq!((n["count"].as_u64(), rows(n)), (Some(3), vec![1, 2, 4]));
        assert_eq!(values(n), ["n/a", "1e3", "1.5."]);
        let c = finding(r, "value.not-a-number", Some("c"));
        assert_eq!(
            c["examples"],
            json!([{ "row": 2, "case": "P2", "value": "Y" }])
        );
        assert_eq!(variable(r, "n")["valid"], 1);
    });
}

#[test]
fn value_out_of_range() {
    // 97 is a missing code and 99 a labelled top code: neither is out of range.
    let n = r#"kind = "numeric"
range = { min = 0, max = 10 }
categories = [ { code = 99, label = "99 or more" } ]
missing = [ { code = 97, label = "Refused", kind = "refused" } ]"#;
    let vars = [("n", 4, n)];
    let data: &[&[&str]] = &[
        &["11"],
        &["-1"],
        &["97"],
        &["99"],
        &["10"],
        &["0"],
        &["10.5"],
    ];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "value.out-of-range", Some("n"));
        assert_eq!(f["count"], 3);
        assert_eq!(rows(f), [1, 2, 7]);
        assert_eq!(f["examples"][0]["case"], Json::Null);
        assert!(f["message"].as_str().unwrap().contains("0 to 10"), "{f}");
        let t = variable(r, "n");
        assert_eq!(t["valid"], 3);
        assert_eq!(t["missing"], json!({ "refused": 1 }));
        assert_eq!(t["invalid"], 3);
    });
}

#[test]
fn value_unlabelled_code() {
    let c = r#"kind = "categorical"
categories = [ { code = 1, label = "One" }, { code = 2, label = "Two" } ]
missing = [ { code = 9, label = "Not recorded", kind = "not-ascertained" } ]"#;
    let s = r#"kind = "ordinal"
categories = [ { code = "A", label = "Low" }, { code = "B", label = "High" } ]"#;
    let vars = [("c", 2, c), ("s", 2, s)];
    let data: &[&[&str]] = &[&["3", "C"], &["9", "a"], &["1", "A"], &["2", "B"]];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let c = finding(r, "value.unlabelled-code", Some("c"));
        assert_eq!((rows(c), values(c)), (vec![1], vec!["3".to_string()]));
        // String codes match exactly: "a" is not "A", and is not "not a number" either.
        let s = finding(r, "value.unlabelled-code", Some("s"));
        assert_eq!(
            (rows(s), values(s)),
            (vec![1, 2], vec!["C".into(), "a".into()])
        );
        assert_eq!(variable(r, "c")["missing"], json!({ "not-ascertained": 1 }));
        assert_eq!(rules_of(r).len(), 2);
    });
}

#[test]
fn value_too_many_decimals() {
    let vars = [("w", 6, "kind = \"numeric\"\ndecimals = 1")];
    let data: &[&[&str]] = &[&["1.25"], &["1.20"], &["3"], &["0.333"]];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "value.too-many-decimals", Some("w"));
        assert_eq!(f["severity"], "warning");
        // Trailing zeros do not count: 1.20 has one decimal.
        assert_eq!((rows(f), f["count"].as_u64()), (vec![1, 4], Some(2)));
        assert_eq!(r["passed"], true);
        assert_eq!(variable(r, "w")["valid"], 2);
    });
    let run = Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .run(Layout::Delimited, &["--fail-on", "warning"]);
    run.assert_code(1);
}

#[test]
fn value_bad_date() {
    let vars = [(
        "d",
        10,
        "kind = \"date\"\nrange = { min = \"2026-01-01\", max = \"2026-12-31\" }",
    )];
    let data: &[&[&str]] = &[
        &["2026-02-30"],
        &["2026-13-01"],
        &["16/02/2026"],
        &["2025-12-31"],
        &["2026-02-28"],
        &["2026-12-31"],
    ];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "value.bad-date", Some("d"));
        assert_eq!(f["count"], 4);
        assert_eq!(rows(f), [1, 2, 3, 4]);
        assert_eq!(values(f)[2], "16/02/2026");
        assert_eq!(variable(r, "d")["valid"], 2);
    });
}

#[test]
fn value_blank() {
    // No blank meaning anywhere: an empty numeric cell is value.blank; a text variable with
    // blank = "other" counts it as missing; an identifier must never be blank.
    let vars = [
        ("n", 3, r#"kind = "numeric""#),
        ("t", 3, "kind = \"text\"\nblank = \"other\""),
        ("x", 3, r#"kind = "identifier""#),
    ];
    let data: &[&[&str]] = &[&["", "", ""], &["1", "a", "X1"]];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let n = finding(r, "value.blank", Some("n"));
        assert_eq!(
            n["examples"],
            json!([{ "row": 1, "case": null, "value": "" }])
        );
        finding(r, "value.blank", Some("x"));
        assert_eq!(variable(r, "t")["missing"], json!({ "other": 1 }));
        assert_eq!(rules_of(r).len(), 2);
    });

    // dataset.blank gives every variable a blank meaning, except that identifiers stay
    // non-blank.
    Survey {
        dataset: "blank = \"refused\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        assert_eq!(rules_of(r), ["value.blank"]);
        finding(r, "value.blank", Some("x"));
        assert_eq!(variable(r, "n")["missing"], json!({ "refused": 1 }));
        assert_eq!(variable(r, "t")["missing"], json!({ "other": 1 }));
    });
}

#[test]
fn value_pattern_mismatch() {
    let vars = [("t", 5, "kind = \"text\"\npattern = \"H[0-9]{3}\"")];
    let data: &[&[&str]] = &[&["H12"], &["h123"], &["H123"], &["xH123"], &["H1234"]];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        // Matched against the whole cell.
        let f = finding(r, "value.pattern-mismatch", Some("t"));
        assert_eq!(rows(f), [1, 2, 4, 5]);
        assert_eq!(values(f), ["H12", "h123", "xH123", "H1234"]);
    });
    // A delimited cell is trimmed before matching.
    let case = Case::new();
    let codebook = "[dataset]\nname = \"t\"\n[[variables]]\nname = \"t\"\nkind = \"text\"\npattern = \"^H[0-9]{3}$\"\n";
    let run = case.check(codebook, "t\n  H123 \n", &[]);
    run.assert_code(0);
    no_findings(&run.json());
}

#[test]
fn value_too_long() {
    // Characters, not bytes: "café" is 4 characters in 5 bytes.
    let vars = [("t", 6, "kind = \"text\"\nmax_length = 4")];
    let data: &[&[&str]] = &[&["abcde"], &["café"], &["abcd"], &["ééééé"]];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "value.too-long", Some("t"));
        assert_eq!(
            (rows(f), values(f)),
            (vec![1, 4], vec!["abcde".into(), "ééééé".into()])
        );
        assert_eq!(variable(r, "t")["valid"], 2);
    });
}

// ---------------------------------------------------------------- routing (DESIGN 5)

/// `f` is asked only where `g == 1`; a blank means a legitimate skip, 96 is the skip code.
const FOLLOW_UP: &str = r#"kind = "numeric"
range = { min = 0, max = 50 }
missing = [
  { code = 96, label = "Not applicable", kind = "skipped" },
  { code = 97, label = "Refused", kind = "refused" },
  { code = 98, label = "Don't know", kind = "dont-know" },
]
universe = "g == 1"
blank = "skipped""#;

#[test]
fn routing_should_be_skipped() {
    let vars = [ID, ("g", 2, YES_NO), ("f", 3, FOLLOW_UP)];
    let data: &[&[&str]] = &[
        &["P1", "2", "5"],  // answered outside the universe
        &["P2", "2", ""],   // blank: skipped
        &["P3", "2", "96"], // skip code: skipped
        &["P4", "2", "97"], // refused, but the question was never put
        &["P5", "2", "98"], // don't know, likewise
    ];
    Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "routing.should-be-skipped", Some("f"));
        assert_eq!(f["count"], 3);
        assert_eq!(rows(f), [1, 4, 5]);
        assert_eq!(values(f), ["5", "97", "98"]);
        assert!(f["message"].as_str().unwrap().contains("g == 1"), "{f}");
        let t = variable(r, "f");
        assert_eq!(
            (t["skipped"].as_u64(), t["invalid"].as_u64()),
            (Some(2), Some(3))
        );
        assert_eq!(rules_of(r), ["routing.should-be-skipped"]);
    });
}

#[test]
fn routing_should_be_answered() {
    // f2: same routing, but a blank means refused. f3: same routing, no blank meaning.
    // e: asked of everyone, blank means skipped.
    let f2 = FOLLOW_UP.replace("blank = \"skipped\"", "blank = \"refused\"");
    let f3 = FOLLOW_UP.replace("blank = \"skipped\"", "");
    let vars = [
        ID,
        ("g", 2, YES_NO),
        ("f", 3, FOLLOW_UP),
        ("f2", 3, &f2),
        ("f3", 3, &f3),
        ("e", 2, "kind = \"numeric\"\nblank = \"skipped\""),
    ];
    let data: &[&[&str]] = &[
        &["P1", "1", "", "", "", "1"],
        &["P2", "1", "96", "12", "12", ""],
        &["P3", "1", "97", "12", "12", "1"],
        &["P4", "1", "12", "12", "12", "1"],
        &["P5", "2", "", "", "", "1"],
    ];
    Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "routing.should-be-answered", Some("f"));
        assert_eq!(
            (rows(f), values(f)),
            (vec![1, 2], vec!["".into(), "96".into()])
        );
        let t = variable(r, "f");
        assert_eq!(t["missing"], json!({ "refused": 1 }));
        assert_eq!(
            (t["valid"].as_u64(), t["skipped"].as_u64()),
            (Some(1), Some(1))
        );

        // Blank with blank = "refused" inside the universe is a refusal, not a finding;
        // outside it, it is a skip.
        assert!(findings(r, "routing.should-be-answered")
            .iter()
            .all(|f| f["variable"] != "f2"));
        let t = variable(r, "f2");
        assert_eq!(t["missing"], json!({ "refused": 1 }));
        assert_eq!(
            (t["valid"].as_u64(), t["skipped"].as_u64()),
            (Some(3), Some(1))
        );

        // With no blank meaning, a routed variable's blank inside the universe is
        // should-be-answered, outside it a skip.
        let f3 = finding(r, "routing.should-be-answered", Some("f3"));
        assert_eq!(rows(f3), [1]);
        assert_eq!(variable(r, "f3")["skipped"], 1);

        // No universe: asked of everyone, so a skip blank is should-be-answered.
        let e = finding(r, "routing.should-be-answered", Some("e"));
        assert_eq!(rows(e), [2]);
        assert!(
            e["message"].as_str().unwrap().contains("asked of everyone"),
            "{e}"
        );
        assert_eq!(findings(r, "routing.should-be-answered").len(), 3);
        assert_eq!(rules_of(r).len(), 3);
    });
}

#[test]
fn routing_gate_unknown_is_counted_not_reported() {
    // The gate is a don't-know or refused code, blank, unlabelled or not a number: the
    // universe is unknown, so the follow-up is accepted whatever it holds.
    let vars = [ID, ("g", 2, YES_NO), ("f", 3, FOLLOW_UP)];
    let data: &[&[&str]] = &[
        &["P1", "9", "5"],
        &["P2", "8", ""],
        &["P3", "", "96"],
        &["P4", "3", "5"],
        &["P5", "Y", "97"],
        &["P6", "1", "5"],
    ];
    Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let mut rules = rules_of(r);
        rules.sort();
        assert_eq!(
            rules,
            ["value.blank", "value.not-a-number", "value.unlabelled-code"]
        );
        assert!(findings(r, "value.blank")
            .iter()
            .all(|f| f["variable"] == "g"));
        let f = variable(r, "f");
        assert_eq!(
            (f["gate_unknown"].as_u64(), f["valid"].as_u64()),
            (Some(5), Some(1))
        );
        assert_eq!(support::tally_sum(f), 6);
    });
}

#[test]
fn codes_written_as_numbers_and_strings() {
    // "01" matches code 1 (also in a universe and in documented frequencies); a string code
    // "A" matches the trimmed cell exactly.
    let c = r#"kind = "categorical"
categories = [ { code = 1, label = "One", frequency = 3 }, { code = 2, label = "Two" } ]"#;
    let s = r#"kind = "categorical"
categories = [ { code = "A", label = "A" }, { code = "01", label = "Text one" } ]"#;
    let f = "kind = \"numeric\"\nuniverse = \"c == 1\"\nblank = \"skipped\"";
    let vars = [("c", 3, c), ("s", 3, s), ("f", 2, f)];
    let data: &[&[&str]] = &[
        &["01", "A", "5"],
        &["1", "01", "5"],
        &["001", "A", "4"],
        &["2", "1", ""],
    ];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        // "1" is not the string code "01".
        let f = finding(r, "value.unlabelled-code", Some("s"));
        assert_eq!(rows(f), [4]);
        assert_eq!(rules_of(r).len(), 1, "{r:#}");
        assert_eq!(variable(r, "f")["valid"], 3);
        assert_eq!(variable(r, "f")["skipped"], 1);
    });
    // In a delimited file the cell is trimmed first.
    let case = Case::new();
    let codebook = format!("[dataset]\nname = \"t\"\n[[variables]]\nname = \"s\"\n{s}\n");
    let run = case.check(&codebook, "s\n A \n\"a\"\n", &[]);
    let report = run.json();
    assert_eq!(
        rows(finding(&report, "value.unlabelled-code", Some("s"))),
        [2]
    );
}

#[test]
fn value_rules_come_first_one_finding_per_cell() {
    // 11.25 is out of range and has too many decimals: one finding, out-of-range. A bad
    // number outside the universe is a value finding, not also should-be-skipped.
    let n = "kind = \"numeric\"\nrange = { min = 0, max = 10 }\ndecimals = 1";
    let vars = [ID, ("g", 2, YES_NO), ("n", 5, n), ("f", 3, FOLLOW_UP)];
    let data: &[&[&str]] = &[
        &["P1", "1", "11.25", "5"],
        &["P2", "2", "1", "abc"],
        &["P3", "2", "1", "60"],
        &["P4", "1", "1.25", "5"],
    ];
    Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        assert_eq!(rows(finding(r, "value.out-of-range", Some("n"))), [1]);
        assert_eq!(rows(finding(r, "value.too-many-decimals", Some("n"))), [4]);
        assert_eq!(rows(finding(r, "value.not-a-number", Some("f"))), [2]);
        assert_eq!(rows(finding(r, "value.out-of-range", Some("f"))), [3]);
        assert_eq!(rules_of(r).len(), 4, "{r:#}");
        let total: u64 = r["findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["count"].as_u64().unwrap())
            .sum();
        assert_eq!(total, 4);
    });
}

// ---------------------------------------------------------------- consistency

#[test]
fn consistency_failed() {
    let a =
        "kind = \"numeric\"\nmissing = [ { code = 99, label = \"Refused\", kind = \"refused\" } ]";
    let vars = [ID, ("a", 3, a), ("b", 3, r#"kind = "numeric""#)];
    let checks = r#"
[[checks]]
name = "a-le-b"
assert = "a <= b"

[[checks]]
name = "b-small"
assert = "b < 100"
when = "a > 0"
severity = "warning"
"#;
    let data: &[&[&str]] = &[
        &["P1", "1", "2"],   // fine
        &["P2", "5", "3"],   // a-le-b fails
        &["P3", "99", "3"],  // a refused: unknown, not a failure
        &["P4", "0", "200"], // b-small: `when` false, skipped
        &["P5", "1", "150"], // b-small fails
        &["P6", "x", "1"],   // a not a number counts as missing: unknown
    ];
    Survey {
        dataset: "id = \"id\"",
        vars: &vars,
        checks,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let failed = findings(r, "consistency.failed");
        assert_eq!(failed.len(), 2);
        let le = failed.iter().find(|f| f["check"] == "a-le-b").unwrap();
        assert_eq!(
            (le["severity"].as_str(), le["variable"].clone()),
            (Some("error"), Json::Null)
        );
        assert_eq!(
            le["examples"],
            json!([{ "row": 2, "case": "P2", "value": "a=5, b=3" }])
        );
        assert!(le["message"].as_str().unwrap().contains("a <= b"), "{le}");
        let small = failed.iter().find(|f| f["check"] == "b-small").unwrap();
        assert_eq!(small["severity"], "warning");
        assert_eq!((small["count"].as_u64(), rows(small)), (Some(1), vec![5]));
        assert_eq!(rows(finding(r, "value.not-a-number", Some("a"))), [6]);
        assert_eq!(
            (r["errors"].as_u64(), r["warnings"].as_u64()),
            (Some(2), Some(1))
        );
    });

    // Only a warning check failing: the default gate passes, `--fail-on warning` does not.
    let data: &[&[&str]] = &[&["P1", "1", "150"]];
    let survey = Survey {
        vars: &vars,
        checks,
        rows: data,
        ..Survey::default()
    };
    survey.both(&[], |r, _| assert_eq!(r["passed"], true));
    survey
        .run(Layout::Fixed, &["--fail-on", "warning"])
        .assert_code(1);
}

// ---------------------------------------------------------------- documented figures

#[test]
fn documented_frequency_mismatch() {
    let c = r#"kind = "categorical"
categories = [
  { code = 1, label = "One", frequency = 2 },
  { code = 2, label = "Two", frequency = 1 },
  { code = 3, label = "Three", frequency = 0 },
  { code = 4, label = "Four" },
]
missing = [ { code = 9, label = "Not recorded", kind = "not-ascertained" } ]"#;
    let vars = [("c", 2, c)];
    let data: &[&[&str]] = &[&["1"], &["1"], &["2"], &["2"], &["4"], &["9"], &["5"]];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        // Only valid cells count: 9 is missing, 5 is an unlabelled code.
        let f = finding(r, "documented.frequency-mismatch", Some("c"));
        assert_eq!(f["count"], 1);
        assert_eq!(f["severity"], "error");
        assert_eq!(
            f["examples"],
            json!([{ "row": null, "case": null, "value": "2: documented 1, found 2" }])
        );
    });
    let data: &[&[&str]] = &[&["1"], &["2"], &["1"], &["9"]];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| no_findings(r));
}

#[test]
fn documented_statistic_mismatch() {
    // 1, 2, 3, 4: mean 2.5, sd 1.2910 (n - 1). Documented figures agree to their rounding.
    let n = "kind = \"numeric\"\nmissing = [ { code = 99, label = \"Refused\", kind = \"refused\" } ]\n";
    let good = format!("{n}documented = {{ valid = 4, mean = 2.5, sd = 1.29, min = 1, max = 4 }}");
    let data: &[&[&str]] = &[&["1"], &["2"], &["99"], &["3"], &["4"], &["x"]];
    let vars = [("n", 2, good.as_str())];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        assert_eq!(rules_of(r), ["value.not-a-number"]);
    });
    // sd 1.3 is within its rounding (0.05) of 1.291; mean 2.6 and max 5 and valid 5 are not.
    let bad = format!("{n}documented = {{ valid = 5, mean = 2.6, sd = 1.3, min = 1, max = 5 }}");
    let vars = [("n", 2, bad.as_str())];
    Survey {
        vars: &vars,
        rows: data,
        ..Survey::default()
    }
    .both(&[], |r, _| {
        let f = finding(r, "documented.statistic-mismatch", Some("n"));
        assert_eq!(
            (f["count"].as_u64(), f["severity"].as_str()),
            (Some(3), Some("warning"))
        );
        let v = values(f);
        assert_eq!(v[0], "valid: documented 5, found 4");
        assert!(v[1].starts_with("mean: documented 2.6, found 2.5"), "{v:?}");
        assert!(v[2].starts_with("max: documented 5, found 4"), "{v:?}");
        assert!(rows(f).is_empty());
    });
}

// ---------------------------------------------------------------- runs that cannot start

#[test]
fn codebook_with_lint_errors_is_refused() {
    let case = Case::new();
    let codebook = "[dataset]\nname = \"t\"\n[[variables]]\nname = \"a\"\nkind = \"numeric\"\n[[variables]]\nname = \"a\"\nkind = \"numeric\"\n";
    let run = case.check(codebook, "a\n1\n", &[]);
    run.assert_code(2);
    assert_eq!(run.stdout, "");
    assert!(run.stderr.contains("lint errors"), "{}", run.stderr);
    assert!(
        run.stderr.contains("lint.duplicate-variable"),
        "{}",
        run.stderr
    );
}

#[test]
fn unreadable_data_is_refused_naming_the_file() {
    let case = Case::new();
    let codebook = case.write(
        "codebook.toml",
        "[dataset]\nname = \"t\"\n[[variables]]\nname = \"a\"\nkind = \"numeric\"\n",
    );
    let folder = case.path("deliveries");
    std::fs::create_dir(&folder).unwrap();
    let empty = case.write("empty.csv", "");
    for (data, name) in [
        (folder.clone(), "deliveries"),
        (case.path("absent.csv"), "absent.csv"),
        (empty, "empty.csv"),
    ] {
        let run = support::check_json(&codebook, &data, &[]);
        run.assert_code(2);
        assert_eq!(run.stdout, "", "{name}");
        assert!(run.stderr.contains(name), "{name}: {}", run.stderr);
    }
}

// ---------------------------------------------------------------- every rule has a test

#[test]
fn every_check_rule_has_a_test() {
    let source = include_str!("check_rules.rs");
    let missing: Vec<&str> = concord::rules::CHECK_RULES
        .iter()
        .map(|r| r.id)
        .filter(|id| {
            let name = id.replace(['.', '-'], "_");
            !source.contains(&format!("#[test]\nfn {name}() {{"))
        })
        .collect();
    assert!(
        missing.is_empty(),
        "check rules without a test here: {missing:?}"
    );
}
