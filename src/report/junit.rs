//! Check reports as JUnit XML, which nearly every CI system shows as a test summary.
//!
//! One test case per codebook variable (plus one for the file and one per check): a case
//! fails when it has a finding that fails the gate; other findings are listed in its
//! output. A delivery's report then reads like a test run: "13 passed, 2 failed".

use std::fmt::Write;

use crate::check::report::{CheckReport, Finding};

fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            // Characters XML 1.0 cannot hold at all.
            c if (c as u32) < 0x20 && !matches!(c, '\t' | '\n' | '\r') => out.push('\u{fffd}'),
            c => out.push(c),
        }
    }
    out
}

fn details(f: &Finding) -> String {
    let mut s = format!("{} (count {})\n", f.message, f.count);
    for e in &f.examples {
        let _ = writeln!(
            s,
            "row {} case {}: {}",
            e.row.map_or("-".to_string(), |r| r.to_string()),
            e.case.as_deref().unwrap_or("-"),
            e.value.as_deref().unwrap_or("")
        );
    }
    s
}

/// `fails` says whether a finding fails the gate (the same predicate as `passed`).
pub fn junit(report: &CheckReport, fails: impl Fn(&Finding) -> bool) -> String {
    // Groups in report order: the file, each variable, each check.
    let mut cases: Vec<(String, String, Vec<&Finding>)> =
        vec![("file".into(), "structure".into(), Vec::new())];
    for v in &report.variables {
        cases.push(("variable".into(), v.name.clone(), Vec::new()));
    }
    for f in &report.findings {
        let (class, name) = match (&f.variable, &f.check) {
            (_, Some(c)) => ("check", c.clone()),
            (Some(v), None) => ("variable", v.clone()),
            (None, None) => ("file", "structure".to_string()),
        };
        match cases.iter_mut().find(|(c, n, _)| c == class && *n == name) {
            Some(case) => case.2.push(f),
            None => cases.push((class.to_string(), name, vec![f])),
        }
    }
    let failures = cases
        .iter()
        .filter(|c| c.2.iter().any(|f| fails(f)))
        .count();
    let mut out = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    let suite = escape(&format!("concord check {}", report.data));
    let _ = writeln!(
        out,
        "<testsuites name=\"concord\" tests=\"{}\" failures=\"{failures}\">",
        cases.len()
    );
    let _ = writeln!(
        out,
        "  <testsuite name=\"{suite}\" tests=\"{}\" failures=\"{failures}\" errors=\"0\">",
        cases.len()
    );
    for (class, name, findings) in &cases {
        let _ = write!(
            out,
            "    <testcase classname=\"{}\" name=\"{}\"",
            escape(class),
            escape(name)
        );
        if findings.is_empty() {
            out.push_str("/>\n");
            continue;
        }
        out.push_str(">\n");
        let mut other = String::new();
        for f in findings {
            if fails(f) {
                let _ = writeln!(
                    out,
                    "      <failure type=\"{}\" message=\"{}\">{}</failure>",
                    escape(f.rule),
                    escape(&f.message),
                    escape(&details(f))
                );
            } else {
                let _ = write!(other, "{}: {}", f.rule, details(f));
            }
        }
        if !other.is_empty() {
            let _ = writeln!(out, "      <system-out>{}</system-out>", escape(&other));
        }
        out.push_str("    </testcase>\n");
    }
    out.push_str("  </testsuite>\n</testsuites>\n");
    out
}
