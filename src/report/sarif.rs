//! Check reports as SARIF 2.1.0, for code-scanning dashboards and CI annotations.
//!
//! Each finding becomes one result. Findings are about data rows, not source lines, so a
//! result points at the data file as a whole, names the variable (or check) as a logical
//! location, and carries the count and the example rows as properties rather than claiming
//! line numbers that the data file's rows do not have.

use serde_json::{json, Value};

use crate::check::report::CheckReport;
use crate::codebook::model::Severity;
use crate::rules::CHECK_RULES;

fn level(severity: Severity) -> &'static str {
    match severity {
        Severity::Error => "error",
        Severity::Warning => "warning",
    }
}

pub fn sarif(report: &CheckReport) -> String {
    let rules: Vec<Value> = CHECK_RULES
        .iter()
        .map(|r| {
            json!({
                "id": r.id,
                "shortDescription": { "text": r.summary },
                "fullDescription": { "text": r.explain },
                "defaultConfiguration": { "level": level(r.severity) },
            })
        })
        .collect();
    let results: Vec<Value> = report
        .findings
        .iter()
        .map(|f| {
            let mut result = json!({
                "ruleId": f.rule,
                "ruleIndex": CHECK_RULES.iter().position(|r| r.id == f.rule).unwrap_or(0),
                "level": level(f.severity),
                "message": { "text": f.message },
                "locations": [{
                    "physicalLocation": { "artifactLocation": { "uri": report.data } }
                }],
                "properties": {
                    "count": f.count,
                    "examples": f.examples,
                },
            });
            let logical = match (&f.variable, &f.check) {
                (_, Some(c)) => Some(json!({ "name": c, "kind": "check" })),
                (Some(v), None) => Some(json!({ "name": v, "kind": "variable" })),
                (None, None) => None,
            };
            if let Some(l) = logical {
                result["locations"][0]["logicalLocations"] = json!([l]);
            }
            result
        })
        .collect();
    let log = json!({
        "$schema": "https://json.schemastore.org/sarif-2.1.0.json",
        "version": "2.1.0",
        "runs": [{
            "tool": {
                "driver": {
                    "name": "concord",
                    "version": report.concord,
                    "rules": rules,
                }
            },
            "artifacts": [
                { "location": { "uri": report.data }, "roles": ["analysisTarget"] },
                { "location": { "uri": report.codebook } },
            ],
            "results": results,
            "properties": { "rows": report.rows, "passed": report.passed },
        }]
    });
    let mut s = serde_json::to_string_pretty(&log).unwrap_or_default();
    s.push('\n');
    s
}
