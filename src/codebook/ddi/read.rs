//! DDI Codebook XML -> the codebook model (the mapping is described in [`super`]).

use std::collections::HashSet;
use std::path::Path;
use std::sync::Arc;

use super::xml::{walk, Attr, Element, Visit};
use super::{classify_missing, parse_code, parse_plain_number, Options, CONCORD_NOTE};
use crate::codebook::date::parse_iso_date;
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

/// A variable as read, before the data file is chosen.
struct ReadVariable {
    variable: Variable,
    /// Files the variable belongs to (var/@files and location/@fileid); empty means all.
    files: Vec<String>,
    /// Locations by file id ("" when the location names none).
    locations: Vec<(String, Columns)>,
    weight: bool,
}

struct State {
    file: usize,
    problems: Vec<Diagnostic>,
    /// Every ID in the document.
    ids: HashSet<String>,
    /// IDREFs to check once every ID is known: (target, span, what refers).
    references: Vec<(String, Span, String)>,
    files: Vec<FileDescription>,
    variables: Vec<ReadVariable>,
    title: Option<String>,
    study_id: Option<String>,
    dataset_notes: Vec<(String, String)>,
}

impl State {
    fn place(&self, range: Span) -> Option<Place> {
        Some(Place::new(self.file, range))
    }

    fn not_a_number(&mut self, attr_or_text: (&str, Span), what: &str, expected: &str) {
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

    fn refer(&mut self, attr: Option<&Attr>, what: &str) -> Vec<String> {
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

    fn variable(&mut self, path: &Path, text: &str, e: &Element) -> Result<(), LoadError> {
        let name_attr = e.attr("name").filter(|a| !a.value.trim().is_empty());
        let Some(name_attr) = name_attr else {
            return Err(LoadError::at(
                "ddi.variable-without-name",
                path,
                text,
                e.span.clone(),
                "a <var> has no `name` attribute (or an empty one)",
            )
            .with_help(
                "every DDI variable needs name=\"...\": it is how the data file's column is found",
            ));
        };
        let name = name_attr.value.trim().to_string();
        // The kind is settled once categories and formats are read; start with a placeholder.
        let mut v = Variable::new(name.clone(), Kind::Numeric);
        v.place = self.place(name_attr.span.clone());
        v.entry = self.place(e.span.clone());
        v.label = e.child("labl").map(Element::text).filter(|t| !t.is_empty());
        let mut files = self.refer(e.attr("files"), &format!("`files` of variable `{name}`"));
        self.refer(
            e.attr("wgt-var"),
            &format!("`wgt-var` of variable `{name}`"),
        );

        let mut locations = Vec::new();
        for l in e.children("location") {
            let fileid = self.refer(l.attr("fileid"), &format!("`fileid` of variable `{name}`"));
            if let Some(columns) = self.location(l, &name) {
                locations.push((fileid.first().cloned().unwrap_or_default(), columns));
            }
            files.extend(fileid);
        }

        if let Some(d) = e.attr("dcml") {
            match d.value.trim().parse::<u32>() {
                Ok(n) => v.decimals = Some(n),
                Err(_) => self.not_a_number(
                    (&d.value, d.span.clone()),
                    "`dcml`",
                    "a whole number of decimal places",
                ),
            }
        }

        // Valid values: ranges and listed items (kept to check the categories against).
        let mut valid_items: Vec<Code> = Vec::new();
        let mut ranges: Vec<Range_> = Vec::new();
        for r in e.children("valrng") {
            for item in r.children("item") {
                if let Some(value) = item.attr_value("VALUE") {
                    valid_items.push(parse_code(value));
                }
            }
            for range in r.children("range") {
                ranges.push(self.range(range, &name));
            }
        }
        // Missing codes: invalrng items and ranges, then catgry missing="Y".
        let mut missing: Vec<MissingCode> = Vec::new();
        for r in e.children("invalrng") {
            for item in r.children("item") {
                if let Some(a) = item.attr("VALUE") {
                    let code = parse_code(&a.value);
                    missing.push(MissingCode {
                        label: a.value.trim().to_string(),
                        code,
                        kind: MissingKind::Other,
                        place: self.place(item.span.clone()),
                    });
                }
            }
            for range in r.children("range") {
                let bounds = self.range(range, &name);
                self.invalid_range(&bounds, range, &name, &mut missing);
            }
        }
        let mut categories: Vec<Category> = Vec::new();
        for c in e.children("catgry") {
            let Some(value) = c.child("catValu") else {
                self.problems.push(
                    Diagnostic::new(
                        "lint.ddi-category-without-value",
                        format!("a category of `{name}` has no <catValu>"),
                    )
                    .at(self.place(c.span.clone()), "no code")
                    .help("give the category its code in <catValu>; it was ignored"),
                );
                continue;
            };
            let code_text = value.text();
            let code = parse_code(&code_text);
            let label = c
                .child("labl")
                .map(Element::text)
                .filter(|t| !t.is_empty())
                .unwrap_or_else(|| code_text.clone());
            let place = self.place(c.span.clone());
            let is_missing = c.attr_value("missing").map(str::trim) == Some("Y");
            let listed_invalid = missing.iter().position(|m| m.code == code);
            if is_missing || listed_invalid.is_some() {
                // missType says why; when it is absent or unclear, the label often does.
                let kind = match c.attr_value("missType").map(classify_missing) {
                    Some(k) if k != MissingKind::Other => k,
                    _ => classify_missing(&label),
                };
                let entry = MissingCode {
                    code,
                    label,
                    kind,
                    place,
                };
                match listed_invalid {
                    Some(i) => missing[i] = entry,
                    None => missing.push(entry),
                }
                continue;
            }
            let mut frequency = None;
            for s in c.children("catStat") {
                let kind = s.attr_value("type").unwrap_or("freq");
                let weighted = s.attr_value("wgtd") == Some("wgtd");
                if kind != "freq" || weighted {
                    continue;
                }
                let t = s.text();
                match parse_plain_number(&t) {
                    Some(n) if n >= 0.0 && n.fract() == 0.0 => frequency = Some(n as u64),
                    _ => self.not_a_number(
                        (&t, s.text_span()),
                        &format!("a frequency of `{name}`"),
                        "a whole number of cases",
                    ),
                }
            }
            categories.push(Category {
                code,
                label,
                frequency,
                place,
            });
        }
        // Items without categories are the variable's valid codes: read them as categories.
        if categories.is_empty() && !valid_items.is_empty() {
            for item in e.children("valrng").flat_map(|r| r.children("item")) {
                if let Some(value) = item.attr_value("VALUE") {
                    let code = parse_code(value);
                    if !missing.iter().any(|m| m.code == code) {
                        categories.push(Category {
                            code,
                            label: value.trim().to_string(),
                            frequency: None,
                            place: self.place(item.span.clone()),
                        });
                    }
                }
            }
            valid_items.clear();
        }
        if !ranges.is_empty() {
            self.range_disagrees(&name, &ranges, &valid_items, &categories, &missing);
        }

        let format = e.child("varFormat");
        let format_type = format
            .and_then(|f| f.attr_value("type"))
            .unwrap_or("numeric");
        let format_category = format
            .and_then(|f| f.attr_value("category"))
            .unwrap_or("other");
        let representation = e.attr_value("representationType");
        let nature = e.attr_value("nature");
        let continuous = e.attr_value("intrvl") == Some("contin");
        v.kind = if format_category == "date" || representation == Some("datetime") {
            Kind::Date
        } else if !categories.is_empty() && nature == Some("ordinal") {
            Kind::Ordinal
        } else if continuous {
            Kind::Numeric
        } else if !categories.is_empty() {
            Kind::Categorical
        } else if format_type == "character" || representation == Some("text") {
            Kind::Text
        } else {
            Kind::Numeric
        };
        v.range = self.envelope(&ranges, v.kind);
        v.categories = categories;
        v.missing = missing;

        let universes: Vec<String> = e
            .children("universe")
            .map(|u| {
                let t = u.text();
                if u.attr_value("clusion") == Some("E") {
                    format!("Excluded: {t}")
                } else {
                    t
                }
            })
            .filter(|t| !t.is_empty())
            .collect();
        if !universes.is_empty() {
            v.universe_text = Some(universes.join("; "));
        }
        v.documented = self.documented(e, &name);
        for (key, value) in e.children("notes").filter_map(concord_note) {
            match key.as_str() {
                "kind" => {
                    if let Some(k) = Kind::from_name(&value) {
                        v.kind = k;
                    }
                }
                "pattern" => v.pattern = Some(value),
                "max-length" => v.max_length = value.parse().ok(),
                "blank" => v.blank = MissingKind::from_name(&value),
                _ => {}
            }
        }
        self.variables.push(ReadVariable {
            variable: v,
            files,
            locations,
            weight: e.attr_value("wgt") == Some("wgt"),
        });
        Ok(())
    }

    fn location(&mut self, l: &Element, name: &str) -> Option<Columns> {
        let mut number = |attr: &str| -> Option<usize> {
            let a = l.attr(attr)?;
            match a.value.trim().parse::<usize>() {
                Ok(n) => Some(n),
                Err(_) => {
                    self.not_a_number(
                        (&a.value, a.span.clone()),
                        &format!("`{attr}` of `{name}`"),
                        "a whole number",
                    );
                    None
                }
            }
        };
        let start = number("StartPos");
        let end = number("EndPos");
        let width = number("width");
        let start = start?;
        let end = end.or_else(|| width.map(|w| start + w.saturating_sub(1)))?;
        Some(Columns {
            start,
            end,
            place: self.place(l.span.clone()),
        })
    }

    fn range(&mut self, r: &Element, name: &str) -> Range_ {
        let integers = r.attr_value("UNITS") != Some("REAL");
        let mut bound = |inclusive: &str, exclusive: &str, step: f64| -> Option<RangeBound> {
            if let Some(a) = r.attr(inclusive) {
                return self.bound(a, name);
            }
            let a = r.attr(exclusive)?;
            // concord ranges are inclusive: an exclusive integer bound moves by one.
            match self.bound(a, name)? {
                RangeBound::Number(n) if integers => Some(RangeBound::Number(n + step)),
                b => Some(b),
            }
        };
        let min = bound("min", "minExclusive", 1.0);
        let max = bound("max", "maxExclusive", -1.0);
        Range_ {
            min,
            max,
            span: r.span.clone(),
        }
    }

    fn bound(&mut self, a: &Attr, name: &str) -> Option<RangeBound> {
        let value = a.value.trim();
        if let Some(n) = parse_plain_number(value) {
            return Some(RangeBound::Number(n));
        }
        if let Some(d) = parse_iso_date(value) {
            return Some(RangeBound::Date(d));
        }
        self.not_a_number(
            (&a.value, a.span.clone()),
            &format!("a range bound of `{name}`"),
            "a number or an ISO 8601 date",
        );
        None
    }

    fn invalid_range(
        &mut self,
        r: &Range_,
        e: &Element,
        name: &str,
        missing: &mut Vec<MissingCode>,
    ) {
        const MOST: f64 = 1000.0;
        match (r.min, r.max) {
            (Some(RangeBound::Number(lo)), Some(RangeBound::Number(hi)))
                if lo.fract() == 0.0 && hi.fract() == 0.0 && hi >= lo && hi - lo < MOST =>
            {
                let mut n = lo;
                while n <= hi {
                    missing.push(MissingCode {
                        code: Code::Number(n),
                        label: format_number(n),
                        kind: MissingKind::Other,
                        place: self.place(e.span.clone()),
                    });
                    n += 1.0;
                }
            }
            _ => self.problems.push(
                Diagnostic::new(
                    "lint.ddi-range-disagrees",
                    format!("a missing-value range of `{name}` is not a short range of whole numbers"),
                )
                .at(self.place(e.span.clone()), "cannot be listed as missing codes")
                .help(format!("concord lists missing codes one by one; list them as <item> (at most {MOST} in a range)")),
            ),
        }
    }

    fn range_disagrees(
        &mut self,
        name: &str,
        ranges: &[Range_],
        items: &[Code],
        categories: &[Category],
        missing: &[MissingCode],
    ) {
        for c in categories {
            let Some(n) = c.code.as_number() else {
                continue;
            };
            let inside = ranges.iter().any(|r| r.contains(n)) || items.contains(&c.code);
            if !inside && !missing.iter().any(|m| m.code == c.code) {
                self.problems.push(
                    Diagnostic::new(
                        "lint.ddi-range-disagrees",
                        format!("category {} of `{name}` lies outside the variable's valrng and is not a missing code", c.code),
                    )
                    .at(c.place, "outside the valid range")
                    .help("widen the valrng, mark the category missing=\"Y\", or correct the code"),
                );
            }
        }
    }

    fn envelope(&mut self, ranges: &[Range_], kind: Kind) -> Option<Range> {
        let first = ranges.first()?;
        let value = |b: RangeBound| match (b, kind) {
            (RangeBound::Date(d), Kind::Date) => Some(Bound::Date(d)),
            (RangeBound::Number(n), k) if k != Kind::Date => Some(Bound::Number(n)),
            _ => None,
        };
        let mut min = first.min.and_then(value);
        let mut max = first.max.and_then(value);
        for r in &ranges[1..] {
            min = match (min, r.min.and_then(value)) {
                (Some(a), Some(b)) => Some(if b.value() < a.value() { b } else { a }),
                _ => None,
            };
            max = match (max, r.max.and_then(value)) {
                (Some(a), Some(b)) => Some(if b.value() > a.value() { b } else { a }),
                _ => None,
            };
        }
        Some(Range {
            min,
            max,
            place: self.place(first.span.clone()),
        })
    }

    fn documented(&mut self, e: &Element, name: &str) -> Option<Documented> {
        let mut d = Documented::default();
        let mut any = false;
        for s in e.children("sumStat") {
            if s.attr_value("wgtd") == Some("wgtd") {
                continue;
            }
            let kind = s.attr_value("type").unwrap_or("");
            if !matches!(kind, "vald" | "mean" | "stdev" | "min" | "max") {
                continue;
            }
            let t = s.text();
            let Some(n) = parse_plain_number(&t) else {
                self.not_a_number(
                    (&t, s.text_span()),
                    &format!("the {kind} of `{name}`"),
                    "a number",
                );
                continue;
            };
            any = true;
            if d.place.is_none() {
                d.place = self.place(s.span.clone());
            }
            match kind {
                "vald" if n >= 0.0 && n.fract() == 0.0 => d.valid = Some(n as u64),
                "vald" => self.not_a_number(
                    (&t, s.text_span()),
                    &format!("the valid count of `{name}`"),
                    "a whole number",
                ),
                "mean" => d.mean = Some(n),
                "stdev" => d.sd = Some(n),
                "min" => d.min = Some(n),
                _ => d.max = Some(n),
            }
        }
        any.then_some(d)
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
                let known: Vec<&str> = self.files.iter().filter_map(|f| f.id.as_deref()).collect();
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
                        d.help(format!("file IDs in this document: {}", known.join(", ")))
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

#[derive(Clone, Copy)]
enum RangeBound {
    Number(f64),
    Date(i32),
}

impl RangeBound {
    fn value(self) -> f64 {
        match self {
            RangeBound::Number(n) => n,
            RangeBound::Date(d) => f64::from(d),
        }
    }
}

struct Range_ {
    min: Option<RangeBound>,
    max: Option<RangeBound>,
    span: Span,
}

impl Range_ {
    fn contains(&self, n: f64) -> bool {
        self.min.is_none_or(|b| n >= b.value()) && self.max.is_none_or(|b| n <= b.value())
    }
}

/// A `<notes type="concord:KEY">VALUE</notes>`: what concord wrote for keys DDI has no
/// element for.
fn concord_note(e: &Element) -> Option<(String, String)> {
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
