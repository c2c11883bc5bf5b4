//! The codebook that travels with an extract.
//!
//! It describes the extract as written, so `concord check SIDECAR EXTRACT` passes on it and
//! a collaborator can see each column's label, kind and level order. Categories become text
//! codes equal to what was written (the label, or `code|label`). Universes and checks are
//! left out: they compare codes, and the extract holds labels, so they would no longer mean
//! what they say; the sidecar's header comment says so.

use super::{code_text, CodeStyle, Options, Selection, Summary};
use crate::codebook::model::*;
use crate::codebook::write_toml::{to_toml, TomlOptions};

/// The sidecar codebook as native TOML text.
pub fn sidecar(
    codebook: &Codebook,
    selection: &Selection,
    options: &Options,
    summary: &Summary,
    data_name: &str,
) -> String {
    let mut out = Codebook {
        dataset: Dataset {
            name: format!("{}-extract", codebook.dataset.name),
            title: codebook.dataset.title.clone(),
            cases: Some(summary.rows_written),
            ..Dataset::default()
        },
        file: FileLayout::default(),
        ..Codebook::default()
    };
    let kept = |name: &str| {
        selection
            .variables
            .iter()
            .any(|&v| codebook.variables[v].name == name)
    };
    if !codebook.dataset.id.is_empty() && codebook.dataset.id.iter().all(|n| kept(&n.name)) {
        out.dataset.id = codebook.dataset.id.clone();
    }
    out.dataset.weight = codebook.dataset.weight.clone().filter(|w| kept(&w.name));
    let mut notes = TomlOptions {
        header: vec![
            format!("Codebook of a labelled extract of {data_name}, written by concord."),
            "Categories are written as their labels; see the note above each variable.".into(),
            "Universes, checks and documented figures of the source codebook are not carried:"
                .into(),
            "they refer to codes and to the whole file.".into(),
            "An empty cell is a missing value (or a value the source codebook did not allow)."
                .into(),
        ],
        ..TomlOptions::default()
    };
    for &v in &selection.variables {
        let src = &codebook.variables[v];
        let mut var = Variable::new(src.name.clone(), src.kind);
        var.label = src.label.clone();
        var.range = src.range;
        var.decimals = src.decimals;
        var.pattern = src.pattern.clone();
        var.max_length = src.max_length;
        var.blank = Some(MissingKind::Other);
        if src.kind.is_coded() {
            var.categories = src
                .categories
                .iter()
                .map(|c| Category {
                    code: Code::Text(match options.codes {
                        CodeStyle::Pair => format!("{}|{}", code_text(&c.code), c.label),
                        _ => c.label.clone(),
                    }),
                    label: c.label.clone(),
                    frequency: None,
                    place: None,
                })
                .collect();
            let what = match options.codes {
                CodeStyle::Pair => "values are written as code|label",
                _ => "values are written as labels",
            };
            notes.notes.insert(src.name.clone(), vec![what.to_string()]);
        } else {
            // Labelled special values of numeric variables (top codes) are written as numbers.
            var.categories = src
                .categories
                .iter()
                .map(|c| Category {
                    frequency: None,
                    place: None,
                    ..c.clone()
                })
                .collect();
        }
        if options.missing_labels {
            // Without its universe a variable is asked of everyone, so a legitimate skip
            // would read as a missing answer: skips are declared with kind `other` here and
            // keep their label, which still says what they are.
            let kind_here = |k: MissingKind| {
                if k == MissingKind::Skipped {
                    MissingKind::Other
                } else {
                    k
                }
            };
            let mut seen = std::collections::HashSet::new();
            for m in &src.missing {
                if seen.insert(m.label.clone()) {
                    var.missing.push(MissingCode {
                        code: Code::Text(m.label.clone()),
                        label: m.label.clone(),
                        kind: kind_here(m.kind),
                        place: None,
                    });
                }
            }
            if let Some(kind) = src.blank_meaning(&codebook.dataset) {
                if seen.insert(kind.name().to_string()) {
                    var.missing.push(MissingCode {
                        code: Code::Text(kind.name().to_string()),
                        label: kind.name().to_string(),
                        kind: kind_here(kind),
                        place: None,
                    });
                }
            }
        }
        out.variables.push(var);
        if options.codes == CodeStyle::Column && src.kind.is_coded() {
            let mut codes = Variable::new(format!("{}_code", src.name), src.kind);
            codes.label = Some(format!(
                "{} (code)",
                src.label.as_deref().unwrap_or(&src.name)
            ));
            codes.categories = src
                .categories
                .iter()
                .map(|c| Category {
                    frequency: None,
                    place: None,
                    ..c.clone()
                })
                .collect();
            codes.blank = Some(MissingKind::Other);
            out.variables.push(codes);
        }
    }
    to_toml(&out, &notes)
}
