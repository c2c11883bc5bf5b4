//! One DDI `var` element -> a [`Variable`] (the mapping is described in [`super`]).

use std::path::Path;

use super::read::{concord_note, State};
use super::xml::{Attr, Element};
use super::{classify_missing, parse_code, parse_plain_number};
use crate::codebook::date::parse_iso_date;
use crate::codebook::error::LoadError;
use crate::codebook::model::*;
use crate::diagnostic::Diagnostic;

type Span = std::ops::Range<usize>;

/// A variable as read, before the data file is chosen.
pub(super) struct ReadVariable {
    pub(super) variable: Variable,
    /// Files the variable belongs to (var/@files and location/@fileid); empty means all.
    pub(super) files: Vec<String>,
    /// Locations by file id ("" when the location names none).
    pub(super) locations: Vec<(String, Columns)>,
    pub(super) weight: bool,
}

impl State {
    pub(super) fn variable(
        &mut self,
        path: &Path,
        text: &str,
        e: &Element,
    ) -> Result<(), LoadError> {
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
