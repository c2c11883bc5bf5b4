//! Codebooks that cannot be read: `concord lint` must exit 2 with one clear diagnostic on
//! stderr that names the file (and the line and column, where there is one), print nothing
//! on stdout, and never panic.
//!
//! The fixtures live in `tests/fixtures/codebook-errors/`; their first line is
//! `# not-a-codebook`, so the schema test skips them. Files that cannot carry that line (an
//! empty file, bytes that are not UTF-8) are written to a temporary folder by the test.

use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;

const FIXTURES: &str = "tests/fixtures/codebook-errors";

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

fn lint(path: &Path) -> Run {
    let output = Command::new(env!("CARGO_BIN_EXE_concord"))
        .arg("lint")
        .arg(path)
        .current_dir(root())
        .env("NO_COLOR", "1")
        .output()
        .expect("the concord binary runs");
    Run {
        code: output.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&output.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&output.stderr).into_owned(),
    }
}

/// Lint `path`, expect exit 2, nothing on stdout, and a stderr holding the file name, the
/// error code and every one of `wanted`. Returns stderr for further checks.
fn could_not_run(path: &Path, code: &str, wanted: &[&str]) -> String {
    let run = lint(path);
    let shown = path.display().to_string();
    let context = format!(
        "concord lint {shown}\nstdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    assert_eq!(run.code, 2, "exit code should be 2\n{context}");
    assert!(
        run.stdout.is_empty(),
        "nothing belongs on stdout\n{context}"
    );
    assert!(
        !run.stderr.contains("panicked"),
        "the reader panicked\n{context}"
    );
    assert!(
        run.stderr.contains(&shown),
        "stderr should name {shown}\n{context}"
    );
    assert!(
        run.stderr.contains(code),
        "stderr should carry the code {code}\n{context}"
    );
    let heading = unwrap_heading(&run.stderr);
    for w in wanted {
        assert!(
            heading.contains(w),
            "stderr should contain {w:?}\n{context}"
        );
    }
    // One diagnostic: one `×` heading.
    assert_eq!(
        run.stderr.matches('×').count(),
        1,
        "expected exactly one diagnostic\n{context}"
    );
    run.stderr
}

/// miette wraps a long heading at the width, continuing it on lines that start with `│ `;
/// join those back so that a test can look for a phrase that was wrapped.
fn unwrap_heading(text: &str) -> String {
    let mut out = String::new();
    for line in text.lines() {
        match line.trim_start().strip_prefix("│ ") {
            Some(rest) => {
                out.push(' ');
                out.push_str(rest);
            }
            None => {
                out.push('\n');
                out.push_str(line);
            }
        }
    }
    out
}

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(format!("{FIXTURES}/{name}.toml"))
}

#[test]
fn malformed_toml_names_the_line() {
    could_not_run(
        &fixture("malformed-toml"),
        "codebook.syntax",
        &["line 10, column 12", "invalid table header"],
    );
}

#[test]
fn a_value_of_the_wrong_type_names_the_line() {
    could_not_run(
        &fixture("wrong-type"),
        "codebook.syntax",
        &[
            "line 10, column 12",
            "string \"one\", expected a whole number",
            "decimals = \"one\"",
        ],
    );
}

#[test]
fn an_unknown_key_suggests_the_nearest() {
    could_not_run(
        &fixture("unknown-key"),
        "codebook.syntax",
        &[
            "line 8, column 1",
            "unknown field `lable`",
            "did you mean `label`?",
        ],
    );
}

#[test]
fn an_unknown_kind_suggests_the_nearest() {
    could_not_run(
        &fixture("unknown-kind"),
        "codebook.syntax",
        &[
            "line 9, column 8",
            "unknown variant `categorial`",
            "did you mean `categorical`?",
        ],
    );
}

#[test]
fn a_missing_ddi_base_is_named() {
    could_not_run(
        &fixture("base-ddi"),
        "codebook.base",
        &["line 5, column 8", "cannot read the base codebook", "x.xml"],
    );
}

#[test]
fn a_codebook_needs_a_dataset_table() {
    could_not_run(
        &fixture("no-dataset"),
        "codebook.no-dataset",
        &["no [dataset] table"],
    );
}

#[test]
fn a_codebook_needs_variables() {
    could_not_run(
        &fixture("no-variables"),
        "codebook.no-variables",
        &["declares no variables"],
    );
}

#[test]
fn an_empty_file_says_so() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    for (name, text) in [("empty.toml", ""), ("blank.toml", "\n  \n\t\n")] {
        let path = dir.path().join(name);
        fs::write(&path, text).expect("write the codebook");
        could_not_run(&path, "codebook.empty", &["the codebook file is empty"]);
    }
}

#[test]
fn a_directory_is_not_a_codebook() {
    could_not_run(
        Path::new(FIXTURES),
        "io.is-directory",
        &["is a directory, not a codebook file"],
    );
}

#[test]
fn a_missing_file_cannot_be_read() {
    could_not_run(
        &fixture("there-is-no-such-codebook"),
        "io.unreadable",
        &["cannot read codebook file"],
    );
}

#[test]
fn bytes_that_are_not_utf8_are_placed_by_line_and_column() {
    let dir = tempfile::tempdir().expect("a temporary folder");
    let path = dir.path().join("latin1.toml");
    // "Café" saved as Latin-1: the é is the single byte 0xE9, at line 3, column 13.
    let bytes = b"[dataset]\nname = \"cafe-survey\"\ntitle = \"Caf\xe9 visitors\"\n\n\
                  [[variables]]\nname = \"visits\"\nkind = \"numeric\"\n";
    fs::write(&path, bytes).expect("write the codebook");
    could_not_run(
        &path,
        "io.not-utf8",
        &["line 3, column 13", "not valid UTF-8", "iconv"],
    );
}

#[test]
fn a_condition_with_toml_escapes_still_lints() {
    let run = lint(&fixture("escaped-condition"));
    assert_eq!(
        (run.code, run.stdout.as_str(), run.stderr.as_str()),
        (
            0,
            "tests/fixtures/codebook-errors/escaped-condition.toml: no problems found\n",
            ""
        )
    );
}
