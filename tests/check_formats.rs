//! `concord check --format sarif|junit` on the demo survey: SARIF validated against the
//! published SARIF 2.1.0 JSON Schema (vendored, see tests/fixtures/sarif/README.md) with a
//! general-purpose JSON Schema validator, JUnit XML checked for well-formedness by xmllint.

use std::path::PathBuf;
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn check(data: &str, format: &str) -> (Option<i32>, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_concord"))
        .current_dir(root())
        .args(["check", "demo-data/codebook.toml", data, "--format", format])
        .output()
        .unwrap();
    (out.status.code(), String::from_utf8(out.stdout).unwrap())
}

#[test]
fn sarif_validates_against_the_published_schema() {
    let schema: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("tests/fixtures/sarif/sarif-2.1.0-rtm.5.json"))
            .unwrap(),
    )
    .unwrap();
    let validator = jsonschema::validator_for(&schema).expect("the SARIF schema compiles");
    for data in ["demo-data/wave1.csv", "demo-data/wave2.csv"] {
        let (code, text) = check(data, "sarif");
        let log: serde_json::Value = serde_json::from_str(&text).unwrap();
        let errors: Vec<String> = validator
            .iter_errors(&log)
            .map(|e| format!("{} at {}", e, e.instance_path))
            .collect();
        assert!(errors.is_empty(), "{data}: {errors:#?}");
        let results = log["runs"][0]["results"].as_array().unwrap();
        if data.ends_with("wave2.csv") {
            assert_eq!(code, Some(1));
            // The demo's planted problems: 26 error and 4 warning findings (demo-data/README.md).
            assert_eq!(results.len(), 30);
            assert_eq!(
                results.iter().filter(|r| r["level"] == "warning").count(),
                4
            );
            let rules = log["runs"][0]["tool"]["driver"]["rules"]
                .as_array()
                .unwrap();
            for r in results {
                let i = r["ruleIndex"].as_u64().unwrap() as usize;
                assert_eq!(rules[i]["id"], r["ruleId"]);
            }
        } else {
            assert_eq!(code, Some(0));
            assert!(results.is_empty());
        }
    }
    // A broken log must fail the same validator, so the test above can fail.
    let mut broken: serde_json::Value =
        serde_json::from_str(&check("demo-data/wave2.csv", "sarif").1).unwrap();
    broken["runs"][0]["results"][0]["level"] = "fatal".into();
    assert!(!validator.is_valid(&broken));
}

#[test]
fn junit_is_well_formed_and_counts_failing_variables() {
    let (code, xml) = check("demo-data/wave2.csv", "junit");
    assert_eq!(code, Some(1));
    // 14 codebook variables, the file case, the unexpected column `interviewer` and two checks.
    assert!(
        xml.contains("<testsuites name=\"concord\" tests=\"18\""),
        "{xml}"
    );
    assert_eq!(xml.matches("<testcase ").count(), 18);
    // Warnings do not fail the gate by default, so they are reported as output only.
    assert!(xml.contains("<system-out>value.too-many-decimals"));
    assert!(!xml.contains("type=\"value.too-many-decimals\""));
    let (_, clean) = check("demo-data/wave1.csv", "junit");
    assert!(clean.contains("failures=\"0\""));
    assert!(!clean.contains("<failure"));

    let have_xmllint = Command::new("xmllint").arg("--version").output().is_ok();
    if !have_xmllint {
        assert_ne!(
            std::env::var("CI").as_deref(),
            Ok("true"),
            "xmllint must run under CI"
        );
        eprintln!("skipped: xmllint is not installed (Debian package libxml2-utils)");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    for (name, text) in [("wave2.xml", &xml), ("wave1.xml", &clean)] {
        let path = dir.path().join(name);
        std::fs::write(&path, text).unwrap();
        let out = Command::new("xmllint")
            .arg("--noout")
            .arg(&path)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}
