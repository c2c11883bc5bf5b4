//! A tiny survey written both ways: as a delimited file with a header, and as a fixed-width
//! file with `[file] layout = "fixed"`, from one description. Rule tests run the same
//! assertions on both, so a rule that can apply to fixed-width input is tested there too.

use super::{check_json, Case, Run};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Layout {
    Delimited,
    Fixed,
}

pub const BOTH: [Layout; 2] = [Layout::Delimited, Layout::Fixed];

/// One variable: its name, its width in the fixed-width file, and the rest of its TOML
/// entry (kind, categories, ...).
pub type Var<'a> = (&'a str, usize, &'a str);

#[derive(Debug, Clone, Default)]
pub struct Survey<'a> {
    /// Extra lines of `[dataset]` (after `name`).
    pub dataset: &'a str,
    /// Extra lines of `[file]` (encoding, ...).
    pub file: &'a str,
    pub vars: &'a [Var<'a>],
    /// `[[checks]]` entries, as TOML.
    pub checks: &'a str,
    /// Data rows, one cell per variable. In a cell, `<xNN>` stands for the raw byte 0xNN.
    pub rows: &'a [&'a [&'a str]],
}

/// A cell's bytes, with `<xNN>` replaced by the byte it names.
pub fn cell_bytes(cell: &str) -> Vec<u8> {
    let mut out = Vec::new();
    let mut rest = cell;
    while let Some(at) = rest.find("<x") {
        out.extend_from_slice(&rest.as_bytes()[..at]);
        let hex = &rest[at + 2..at + 4];
        assert_eq!(&rest[at + 4..at + 5], ">", "bad byte marker in {cell:?}");
        out.push(u8::from_str_radix(hex, 16).unwrap());
        rest = &rest[at + 5..];
    }
    out.extend_from_slice(rest.as_bytes());
    out
}

impl Survey<'_> {
    pub fn codebook(&self, layout: Layout) -> String {
        let mut s = format!("[dataset]\nname = \"test\"\n{}\n", self.dataset);
        match layout {
            Layout::Delimited => s.push_str(&format!("[file]\n{}\n", self.file)),
            Layout::Fixed => s.push_str(&format!(
                "[file]\nlayout = \"fixed\"\nheader = false\n{}\n",
                self.file
            )),
        }
        let mut start = 1;
        for (name, width, body) in self.vars {
            s.push_str(&format!("[[variables]]\nname = \"{name}\"\n{body}\n"));
            if layout == Layout::Fixed {
                s.push_str(&format!(
                    "columns = {{ start = {start}, end = {} }}\n",
                    start + width - 1
                ));
                start += width;
            }
        }
        s.push_str(self.checks);
        s
    }

    /// A record of the fixed-width file: every cell padded to its width in characters.
    pub fn fixed_line(&self, row: &[&str]) -> Vec<u8> {
        let mut line = Vec::new();
        for ((name, width, _), cell) in self.vars.iter().zip(row) {
            let bytes = cell_bytes(cell);
            let chars = String::from_utf8_lossy(&bytes).chars().count();
            assert!(chars <= *width, "cell {cell:?} is wider than `{name}`");
            line.extend_from_slice(&bytes);
            line.extend(std::iter::repeat_n(b' ', width - chars));
        }
        line
    }

    pub fn data(&self, layout: Layout) -> Vec<u8> {
        let mut out = Vec::new();
        if layout == Layout::Delimited {
            let names: Vec<&str> = self.vars.iter().map(|v| v.0).collect();
            out.extend_from_slice(names.join(",").as_bytes());
            out.push(b'\n');
        }
        for row in self.rows {
            match layout {
                Layout::Delimited => {
                    let cells: Vec<Vec<u8>> = row.iter().map(|c| cell_bytes(c)).collect();
                    out.extend_from_slice(&cells.join(&b","[..]));
                }
                Layout::Fixed => out.extend_from_slice(&self.fixed_line(row)),
            }
            out.push(b'\n');
        }
        out
    }

    /// Check the survey written in `layout`.
    pub fn run(&self, layout: Layout, extra: &[&str]) -> Run {
        let case = Case::new();
        let codebook = case.write("codebook.toml", self.codebook(layout));
        let data = case.write("data.txt", self.data(layout));
        check_json(&codebook, &data, extra)
    }

    /// Run in both layouts and hand each report to `assert`; the two reports must also agree
    /// on findings and tallies.
    pub fn both(&self, extra: &[&str], assert: impl Fn(&serde_json::Value, Layout)) {
        let mut reports = Vec::new();
        for layout in BOTH {
            let run = self.run(layout, extra);
            let report = run.json();
            assert!(
                run.code == Some(if report["passed"] == true { 0 } else { 1 }),
                "{layout:?}: exit code {:?} disagrees with passed\n{report:#}\n{}",
                run.code,
                run.stderr
            );
            assert(&report, layout);
            reports.push(report);
        }
        assert_eq!(
            reports[0]["findings"], reports[1]["findings"],
            "delimited and fixed-width findings differ"
        );
        assert_eq!(
            reports[0]["variables"], reports[1]["variables"],
            "delimited and fixed-width tallies differ"
        );
    }
}
