//! `concord lint` output, snapshot by snapshot: one failing fixture per lint rule.
//!
//! Each rule of `LINT_RULES` has `tests/fixtures/lint/<rule-without-lint.>.toml` (or `.xml`
//! for the DDI rules), a tiny codebook that breaks that rule, and next to it `<name>.expected`, the exact plain-text
//! output of `concord lint` on it. The binary runs from the crate root with the fixture path
//! relative to it, so the paths in the output are stable; stdout is a pipe, so there is no
//! colour and the width is 100.
//!
//! `UPDATE_SNAPSHOTS=1 cargo test --test lint_snapshots` rewrites the `.expected` files;
//! review the diff before committing it.
//!
//! Fixtures start with `# Lint fixture: ...`. The few whose problem the codebook schema also
//! rejects (a negative `decimals`, say) start with `# not-a-codebook` instead, with the
//! `# Lint fixture:` line second, so that `tests/codebook_schema.rs` skips them.

use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;

use concord::codebook::model::Severity;
use concord::rules::LINT_RULES;
use serde_json::Value as Json;

const FIXTURES: &str = "tests/fixtures/lint";

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The fixture name of a rule: its id without the `lint.` prefix.
fn fixture_name(rule: &str) -> &str {
    rule.strip_prefix("lint.").unwrap_or(rule)
}

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

/// Run the built binary from the crate root, as a pipe would see it.
fn concord(args: &[&str]) -> Run {
    let output = Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(args)
        .current_dir(root())
        .env("NO_COLOR", "1")
        .env("COLUMNS", "100")
        .output()
        .expect("the concord binary runs");
    Run {
        code: output.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&output.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&output.stderr).into_owned(),
    }
}

/// A line diff of expected against actual: `-` lines only expected, `+` only actual, from
/// the longest common subsequence (the snapshots are a few dozen lines).
fn diff(expected: &str, actual: &str) -> String {
    let a: Vec<&str> = expected.lines().collect();
    let b: Vec<&str> = actual.lines().collect();
    let mut lcs = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for i in (0..a.len()).rev() {
        for j in (0..b.len()).rev() {
            lcs[i][j] = if a[i] == b[j] {
                lcs[i + 1][j + 1] + 1
            } else {
                lcs[i + 1][j].max(lcs[i][j + 1])
            };
        }
    }
    let (mut i, mut j, mut out) = (0, 0, String::new());
    while i < a.len() || j < b.len() {
        if i < a.len() && j < b.len() && a[i] == b[j] {
            out.push_str(&format!("  {}\n", a[i]));
            i += 1;
            j += 1;
        } else if i < a.len() && (j == b.len() || lcs[i + 1][j] >= lcs[i][j + 1]) {
            out.push_str(&format!("- {}\n", a[i]));
            i += 1;
        } else {
            out.push_str(&format!("+ {}\n", b[j]));
            j += 1;
        }
    }
    if expected.ends_with('\n') != actual.ends_with('\n') {
        out.push_str("(the two differ in the final newline)\n");
    }
    out
}

/// The fixture of a rule: native TOML, or DDI XML for the DDI rules.
fn fixture_of(name: &str) -> String {
    let xml = format!("{FIXTURES}/{name}.xml");
    if root().join(&xml).is_file() {
        xml
    } else {
        format!("{FIXTURES}/{name}.toml")
    }
}

/// The fixture's `# Lint fixture:` line must be first, or second after `# not-a-codebook`;
/// an XML fixture says the same in a `<!-- Lint fixture: ... -->` comment after the declaration.
fn check_header(path: &Path, text: &str) -> Result<(), String> {
    if path.extension().is_some_and(|e| e == "xml") {
        return if text
            .lines()
            .take(2)
            .any(|l| l.starts_with("<!-- Lint fixture: "))
        {
            Ok(())
        } else {
            Err(format!(
                "{}: the second line should be `<!-- Lint fixture: ... -->`",
                path.display()
            ))
        };
    }
    let mut lines = text.lines();
    let first = lines.next().unwrap_or("");
    let describing = if first.trim_end() == "# not-a-codebook" {
        lines.next().unwrap_or("")
    } else {
        first
    };
    if describing.starts_with("# Lint fixture: ") {
        Ok(())
    } else {
        Err(format!(
            "{}: the first line (or the second, after `# not-a-codebook`) should be \
             `# Lint fixture: <what is wrong>`",
            path.display()
        ))
    }
}

#[test]
fn every_lint_rule_has_a_fixture() {
    let missing: Vec<String> = LINT_RULES
        .iter()
        .map(|r| fixture_of(fixture_name(r.id)))
        .filter(|p| !root().join(p).is_file())
        .collect();
    assert!(
        missing.is_empty(),
        "these lint rules have no fixture:\n  {}",
        missing.join("\n  ")
    );
}

#[test]
fn every_fixture_is_a_lint_rule() {
    let mut strays = Vec::new();
    for entry in fs::read_dir(root().join(FIXTURES)).expect("the lint fixtures exist") {
        let path = entry.expect("a directory entry").path();
        let stem = path.file_stem().and_then(|s| s.to_str()).unwrap_or("");
        if !LINT_RULES.iter().any(|r| fixture_name(r.id) == stem) {
            strays.push(path.display().to_string());
        }
    }
    assert!(
        strays.is_empty(),
        "files in {FIXTURES} that belong to no lint rule:\n  {}",
        strays.join("\n  ")
    );
}

#[test]
fn lint_output_matches_the_snapshots() {
    let update = std::env::var_os("UPDATE_SNAPSHOTS").is_some_and(|v| v != "0" && !v.is_empty());
    let mut failures = Vec::new();
    for rule in LINT_RULES {
        let name = fixture_name(rule.id);
        let fixture = fixture_of(name);
        let expected_path = root().join(format!("{FIXTURES}/{name}.expected"));
        let Ok(text) = fs::read_to_string(root().join(&fixture)) else {
            continue; // reported by every_lint_rule_has_a_fixture
        };
        if let Err(e) = check_header(Path::new(&fixture), &text) {
            failures.push(e);
        }

        let run = concord(&["lint", &fixture]);
        // The gate fails on errors by default; a warning-only fixture passes it.
        let want_code = match rule.severity {
            Severity::Error => 1,
            Severity::Warning => 0,
        };
        if run.code != want_code {
            failures.push(format!(
                "{fixture}: exit code {} (expected {want_code}); stderr:\n{}",
                run.code, run.stderr
            ));
        }
        if !run.stderr.is_empty() {
            failures.push(format!("{fixture}: unexpected stderr:\n{}", run.stderr));
        }
        if !run.stdout.contains(rule.id) {
            failures.push(format!(
                "{fixture}: the output does not mention {}",
                rule.id
            ));
        }

        if update {
            fs::write(&expected_path, &run.stdout)
                .unwrap_or_else(|e| panic!("cannot write {}: {e}", expected_path.display()));
            continue;
        }
        let Ok(expected) = fs::read_to_string(&expected_path) else {
            failures.push(format!(
                "{fixture}: no {name}.expected next to it (UPDATE_SNAPSHOTS=1 writes it)"
            ));
            continue;
        };
        if run.stdout != expected {
            failures.push(format!(
                "{fixture}: output differs from {name}.expected (- expected, + actual; \
                 UPDATE_SNAPSHOTS=1 rewrites it):\n{}",
                diff(&expected, &run.stdout)
            ));
        }
    }
    assert!(failures.is_empty(), "\n{}", failures.join("\n\n"));
}

/// `concord lint --format json` on a fixture, parsed.
fn lint_json(name: &str) -> (i32, Json) {
    let fixture = format!("{FIXTURES}/{name}.toml");
    let run = concord(&["lint", "--format", "json", &fixture]);
    let json = serde_json::from_str(&run.stdout)
        .unwrap_or_else(|e| panic!("{fixture}: not JSON ({e}):\n{}", run.stdout));
    (run.code, json)
}

/// (rule, severity, line, column) of each diagnostic.
fn summary(json: &Json) -> Vec<(String, String, u64, u64)> {
    json["diagnostics"]
        .as_array()
        .expect("a diagnostics array")
        .iter()
        .map(|d| {
            (
                d["rule"].as_str().unwrap_or("").to_string(),
                d["severity"].as_str().unwrap_or("").to_string(),
                d["line"].as_u64().unwrap_or(0),
                d["column"].as_u64().unwrap_or(0),
            )
        })
        .collect()
}

fn row(rule: &str, severity: &str, line: u64, column: u64) -> (String, String, u64, u64) {
    (rule.to_string(), severity.to_string(), line, column)
}

#[test]
fn json_names_rule_severity_line_and_column() {
    let (code, json) = lint_json("condition-syntax");
    assert_eq!(code, 1);
    assert_eq!(
        json["codebook"],
        "tests/fixtures/lint/condition-syntax.toml"
    );
    assert_eq!(json["passed"], false);
    assert_eq!(
        (json["errors"].as_u64(), json["warnings"].as_u64()),
        (Some(1), Some(0))
    );
    // `universe = "smoker = 1"`: the `=` is the 20th character of line 16.
    assert_eq!(
        summary(&json),
        vec![row("lint.condition-syntax", "error", 16, 20)]
    );
    let d = &json["diagnostics"][0];
    assert_eq!(d["file"], "tests/fixtures/lint/condition-syntax.toml");
    assert_eq!(d["help"], "use `==` to compare");

    let (_, json) = lint_json("unknown-variable");
    assert_eq!(
        summary(&json),
        vec![row("lint.unknown-variable", "error", 16, 13)]
    );
    assert_eq!(json["diagnostics"][0]["help"], "did you mean `smoker`?");

    let (_, json) = lint_json("universe-cycle");
    assert_eq!(
        summary(&json),
        vec![
            row("lint.universe-cycle", "error", 10, 13),
            row("lint.universe-cycle", "error", 24, 13),
        ]
    );
}

#[test]
fn json_of_a_warning_only_codebook_passes_the_default_gate() {
    let (code, json) = lint_json("fixed-columns-gap");
    assert_eq!(code, 0);
    assert_eq!(json["passed"], true);
    assert_eq!(
        (json["errors"].as_u64(), json["warnings"].as_u64()),
        (Some(0), Some(1))
    );
    assert_eq!(
        summary(&json),
        vec![row("lint.fixed-columns-gap", "warning", 20, 11)]
    );
    assert_eq!(
        json["diagnostics"][0]["message"],
        "columns 7, 9, 11-12 are read by no variable"
    );

    let (_, json) = lint_json("unknown-missing-kind");
    assert_eq!(
        summary(&json),
        vec![row("lint.unknown-missing-kind", "error", 11, 51)]
    );

    // The same warning fails a stricter gate.
    let run = concord(&[
        "lint",
        "--fail-on",
        "warning",
        "--format",
        "json",
        "tests/fixtures/lint/duplicate-label.toml",
    ]);
    assert_eq!(run.code, 1);
    let json: Json = serde_json::from_str(&run.stdout).expect("JSON");
    assert_eq!(json["passed"], false);
    assert_eq!(
        summary(&json),
        vec![row("lint.duplicate-label", "warning", 13, 3)]
    );
}
