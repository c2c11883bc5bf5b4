//! DDI Codebook XML -> the codebook model (the mapping is described in [`super`]).

use std::collections::HashSet;
use std::path::Path;
use std::sync::Arc;

use super::variable::ReadVariable;
use super::xml::{walk, Attr, Element, Visit};
use super::{Options, CONCORD_NOTE};
use crate::codebook::error::LoadError;
use crate::codebook::model::*;
use crate::codebook::native::Loaded;
use crate::diagnostic::Diagnostic;

type Span = std::ops::Range<usize>;

/// Read a DDI codebook from its text. Places point at `sources[file]`, which the caller
/// fills with this file.
pub fn parse(
    path: &Path,
    text: String,
    options: &Options,
    file: usize,
) -> Result<Loaded, LoadError> {
    let mut state = State {
        file,
        problems: Vec::new(),
        ids: HashSet::new(),
        references: Vec::new(),
        files: Vec::new(),
        variables: Vec::new(),
        title: None,
        study_id: None,
        dataset_notes: Vec::new(),
    };
    walk(
        path,
        &text,
        |ancestors, name| {
            let at = |p: &[&str]| ancestors.iter().map(String::as_str).eq(p.iter().copied());
            (at(&[]) && name == "fileDscr")
                || (at(&["dataDscr"]) && matches!(name, "var" | "notes"))
                || (at(&["stdyDscr", "citation"]) && name == "titlStmt")
        },
        |visit| state.visit(path, &text, visit),
    )?;
    let codebook = state.finish(path, &text, options)?;
    let source = Arc::new(SourceFile {
        path: path.to_path_buf(),
        text,
    });
    let mut sources = Vec::new();
    sources.resize_with(file, || source.clone());
    sources.push(source);
    Ok(Loaded {
        codebook: Codebook {
            sources,
            ..codebook
        },
        problems: state.problems,
    })
}

struct FileDescription {
    id: Option<String>,
    cases: Option<u64>,
    encoding: Option<Encoding>,
    notes: Vec<(String, String)>,
    span: Span,
}

pub(super) struct State {
    pub(super) file: usize,
    pub(super) problems: Vec<Diagnostic>,
    /// Every ID in the document.
    pub(super) ids: HashSet<String>,
    /// IDREFs to check once every ID is known: (target, span, what refers).
    references: Vec<(String, Span, String)>,
    files: Vec<FileDescription>,
    pub(super) variables: Vec<ReadVariable>,
    title: Option<String>,
    study_id: Option<String>,
    dataset_notes: Vec<(String, String)>,
}

impl State {
    pub(super) fn place(&self, range: Span) -> Option<Place> {
        Some(Place::new(self.file, range))
    }

    pub(super) fn not_a_number(&mut self, attr_or_text: (&str, Span), what: &str, expected: &str) {
        let (value, span) = attr_or_text;
        self.problems.push(
            Diagnostic::new(
                "lint.ddi-not-a-number",
                format!("{what} is \"{value}\", which is not {expected}"),
            )
            .at(self.place(span), "not a number")
            .help(format!("write {expected} here; the value was ignored")),
        );
    }

    fn visit(&mut self, path: &Path, text: &str, visit: Visit<'_>) -> Result<(), LoadError> {
        match visit {
            Visit::Id(attr) => self.id(attr),
            Visit::Part(e) => match e.name.as_str() {
                "fileDscr" => self.file_description(&e),
                "var" => self.variable(path, text, &e)?,
                "titlStmt" if self.title.is_none() => {
                    self.title = e.child("titl").map(Element::text).filter(|t| !t.is_empty());
                    self.study_id = e.child("IDNo").map(Element::text).filter(|t| !t.is_empty());
                }
                "notes" => {
                    if let Some(n) = concord_note(&e) {
                        self.dataset_notes.push(n);
                    }
                }
                _ => {}
            },
        }
        Ok(())
    }

    fn id(&mut self, attr: &Attr) {
        let id = attr.value.trim().to_string();
        if !self.ids.insert(id.clone()) {
            self.problems.push(
                Diagnostic::new(
                    "lint.ddi-duplicate-id",
                    format!("the ID `{id}` is used by more than one element"),
                )
                .at(self.place(attr.span.clone()), "used again here")
                .help(
                    "IDs must be unique across the whole document; references to it are ambiguous",
                ),
            );
        }
    }

    pub(super) fn refer(&mut self, attr: Option<&Attr>, what: &str) -> Vec<String> {
        let Some(attr) = attr else { return Vec::new() };
        let targets: Vec<String> = attr.value.split_whitespace().map(str::to_string).collect();
        for t in &targets {
            self.references
                .push((t.clone(), attr.span.clone(), what.to_string()));
        }
        targets
    }

    fn file_description(&mut self, e: &Element) {
        let text = e.child("fileTxt");
        let mut cases = None;
        if let Some(q) = text
            .and_then(|t| t.child("dimensns"))
            .and_then(|d| d.child("caseQnty"))
        {
            let value = q.text();
            match value.parse::<u64>() {
                Ok(n) => cases = Some(n),
                Err(_) => self.not_a_number(
                    (&value, q.text_span()),
                    "caseQnty",
                    "a whole number of cases",
                ),
            }
        }
        let encoding = text
            .and_then(|t| t.child("fileType"))
            .and_then(|f| f.attr_value("charset"))
            .and_then(encoding_from_charset);
        self.files.push(FileDescription {
            id: e.attr_value("ID").map(|s| s.trim().to_string()),
            cases,
            encoding,
            notes: e.children("notes").filter_map(concord_note).collect(),
            span: e.span.clone(),
        });
    }

    fn finish(
        &mut self,
        path: &Path,
        text: &str,
        options: &Options,
    ) -> Result<Codebook, LoadError> {
        let references = std::mem::take(&mut self.references);
        for (target, span, what) in references {
            if !self.ids.contains(&target) {
                let to_file = what.contains("files") || what.contains("fileid");
                let (kind, known): (&str, Vec<&str>) = if to_file {
                    (
                        "file IDs",
                        self.files.iter().filter_map(|f| f.id.as_deref()).collect(),
                    )
                } else {
                    let mut all: Vec<&str> = self.ids.iter().map(String::as_str).collect();
                    all.sort_unstable();
                    all.truncate(10);
                    ("IDs", all)
                };
                let d = Diagnostic::new(
                    "lint.ddi-broken-reference",
                    format!("{what} refers to the ID `{target}`, which no element has"),
                )
                .at(self.place(span), "points nowhere");
                let d = match crate::diagnostic::nearest(
                    &target,
                    self.ids.iter().map(String::as_str),
                ) {
                    Some(n) => d.help(format!("did you mean `{n}`?")),
                    None if !known.is_empty() => {
                        d.help(format!("{kind} in this document: {}", known.join(", ")))
                    }
                    None => d.help("correct the reference or give the target element this ID"),
                };
                self.problems.push(d);
            }
        }
        let chosen = self.choose_file(path, text, options)?;
        let chosen_id = chosen.and_then(|i| self.files[i].id.clone());
        let mut dataset = Dataset {
            name: self
                .study_id
                .clone()
                .or_else(|| chosen_id.clone())
                .or_else(|| path.file_stem().map(|s| s.to_string_lossy().into_owned()))
                .unwrap_or_else(|| "ddi".to_string()),
            title: None,
            cases: chosen.and_then(|i| self.files[i].cases),
            ..Dataset::default()
        };
        dataset.title = self.title.clone().filter(|t| *t != dataset.name);
        let mut layout = FileLayout::default();
        let mut header = None;
        if let Some(i) = chosen {
            if let Some(e) = self.files[i].encoding {
                layout.encoding = e;
            }
            for (key, value) in &self.files[i].notes {
                match key.as_str() {
                    "delimiter" => {
                        let v = if value == "\\t" { "\t" } else { value.as_str() };
                        if let [b] = v.as_bytes() {
                            layout.delimiter = *b;
                        }
                    }
                    "quote" => {
                        if let [b] = value.as_bytes() {
                            layout.quote = *b;
                        }
                    }
                    "header" => header = Some(value != "false"),
                    _ => {}
                }
            }
        }
        for (key, value) in &self.dataset_notes {
            match key.as_str() {
                "id" => {
                    dataset.id = value
                        .split_whitespace()
                        .map(|n| Named {
                            name: n.to_string(),
                            place: None,
                        })
                        .collect()
                }
                "blank" => dataset.blank = MissingKind::from_name(value),
                _ => {}
            }
        }
        let mut variables = Vec::new();
        for r in std::mem::take(&mut self.variables) {
            let belongs = match &chosen_id {
                Some(id) => r.files.is_empty() || r.files.contains(id),
                None => true,
            };
            if !belongs {
                continue;
            }
            let mut v = r.variable;
            v.columns = r
                .locations
                .iter()
                .find(|(f, _)| chosen_id.as_deref() == Some(f.as_str()))
                .or_else(|| r.locations.iter().find(|(f, _)| f.is_empty()))
                .or(r.locations.first())
                .map(|(_, c)| *c);
            if r.weight && dataset.weight.is_none() {
                dataset.weight = Some(Named {
                    name: v.name.clone(),
                    place: v.place,
                });
            }
            variables.push(v);
        }
        if variables.iter().any(|v| v.columns.is_some()) {
            layout.layout = Layout::Fixed;
            layout.header = false;
        }
        if let Some(h) = header {
            layout.header = h;
        }
        if variables.is_empty() {
            return Err(LoadError::file(
                "codebook.no-variables",
                path,
                match &chosen_id {
                    Some(id) => format!("the DDI codebook describes no variables of file `{id}`"),
                    None => "the DDI codebook describes no variables (no dataDscr/var)".to_string(),
                },
            )
            .with_help("a codebook needs at least one <var> in <dataDscr>"));
        }
        Ok(Codebook {
            dataset,
            file: layout,
            variables,
            checks: Vec::new(),
            sources: Vec::new(),
        })
    }

    /// The fileDscr the codebook describes: the one named by `--file-id`, or the only one.
    fn choose_file(
        &self,
        path: &Path,
        text: &str,
        options: &Options,
    ) -> Result<Option<usize>, LoadError> {
        let ids: Vec<&str> = self.files.iter().filter_map(|f| f.id.as_deref()).collect();
        let listed = if ids.is_empty() {
            "(none have an ID)".to_string()
        } else {
            ids.join(", ")
        };
        match &options.file_id {
            Some(wanted) => match self.files.iter().position(|f| f.id.as_deref() == Some(wanted.as_str())) {
                Some(i) => Ok(Some(i)),
                None => Err(LoadError::file(
                    "ddi.unknown-file-id",
                    path,
                    format!("the DDI codebook has no fileDscr with ID `{wanted}`; its file IDs are: {listed}"),
                )
                .with_help("give one of these with --file-id")),
            },
            None if self.files.len() > 1 => Err(LoadError::at(
                "ddi.ambiguous-file",
                path,
                text,
                self.files[1].span.clone(),
                format!(
                    "the DDI codebook describes {} data files, so it is not clear which one to use; their IDs are: {listed}",
                    self.files.len()
                ),
            )
            .with_help(format!("choose one with --file-id (for example --file-id {})", ids.first().unwrap_or(&"ID")))),
            None if self.files.is_empty() => Ok(None),
            None => Ok(Some(0)),
        }
    }
}

/// A `<notes type="concord:KEY">VALUE</notes>`: what concord wrote for keys DDI has no
/// element for.
pub(super) fn concord_note(e: &Element) -> Option<(String, String)> {
    let key = e.attr_value("type")?.strip_prefix(CONCORD_NOTE)?;
    let mut value = String::new();
    for n in &e.children {
        if let super::xml::Node::Text(t, _) = n {
            value.push_str(t);
        }
    }
    // Patterns and delimiters are kept exactly; only the surrounding newlines go.
    let value = value.trim_matches(|c| c == '\n' || c == '\r').to_string();
    Some((key.to_string(), value))
}

fn encoding_from_charset(charset: &str) -> Option<Encoding> {
    match charset.trim().to_ascii_lowercase().as_str() {
        "utf-8" | "utf8" => Some(Encoding::Utf8),
        "latin1" | "iso-8859-1" | "latin-1" => Some(Encoding::Latin1),
        "windows-1252" | "cp1252" => Some(Encoding::Windows1252),
        _ => None,
    }
}
