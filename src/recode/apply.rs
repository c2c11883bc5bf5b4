//! Applying a compiled recode file to a data file.
//!
//! One streaming pass reads each record, classifies the source cells exactly as `check` does
//! ([`crate::check::plan::compile`], [`crate::check::cell::classify`]), derives each variable
//! in file order (later ones may read earlier ones), counts the audit and writes the record
//! with the derived columns appended. Memory stays flat: one record, one row of cells.
//!
//! Quantile bands need their cut points before the first derived value is written, so a
//! recode file with `quantiles` makes a first pass that only collects the valid values (and
//! weights) of the quantile sources: memory O(valid values of those sources), 16 bytes each,
//! and nothing for any other variable. That pass needs a file it can read twice (not `-`).

use std::io::Write;

use super::audit::{self, AuditTable, Counter, Source};
use super::plan::{DerivePlan, Derived, Input, Plan, Rule, SourceRef};
use super::quantile;
use super::spec::bands_of_cuts;
use crate::check::cell::{classify, parse_decimal, Cell, Seen};
use crate::check::plan::{self as check_plan, Plan as CheckPlan};
use crate::codebook::model::{format_number, Code, Codebook, MissingKind, Place, Variable};
use crate::condition::{Row, Tri, Value};
use crate::data::{DataError, Record, RecordSource};
use crate::diagnostic::Diagnostic;

#[derive(Debug)]
pub enum ApplyError {
    /// The codebook's own conditions do not compile (it has lint errors).
    Codebook(Vec<Diagnostic>),
    Data(DataError),
    Write(std::io::Error),
    /// The data file has no column for these codebook variables the recodes read.
    ColumnsMissing {
        data: String,
        names: Vec<String>,
    },
}

/// Fail when the data has no column for a codebook variable the recodes read (a `from`, a
/// `when`, an `expr` or a quantile weight): every derived value would silently be missing.
fn require_columns(
    codebook: &Codebook,
    plan: &Plan,
    check: &CheckPlan,
    data: &str,
) -> Result<(), ApplyError> {
    let mut read: Vec<usize> = Vec::new();
    for d in &plan.derives {
        if let Some(SourceRef::Codebook(i)) = d.source {
            read.push(i);
        }
        if let Some(w) = d.quantiles.as_ref().and_then(|q| q.weight) {
            read.push(w);
        }
        if let Some(c) = &d.when {
            read.extend_from_slice(c.variables());
        }
        if let Rule::Expr(c) = &d.rule {
            read.extend_from_slice(c.variables());
        }
    }
    read.retain(|&v| v < codebook.variables.len());
    read.sort_unstable();
    read.dedup();
    let names: Vec<String> = read
        .into_iter()
        .filter(|&v| check.columns[v].field.is_none())
        .map(|v| codebook.variables[v].name.clone())
        .collect();
    if names.is_empty() {
        Ok(())
    } else {
        Err(ApplyError::ColumnsMissing {
            data: data.to_string(),
            names,
        })
    }
}

impl From<DataError> for ApplyError {
    fn from(e: DataError) -> Self {
        ApplyError::Data(e)
    }
}

/// Which columns the output holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Columns {
    /// Every source column, then the derived ones.
    #[default]
    All,
    /// The case id, the variables the derived universes read, then the derived columns.
    OnlyDerived,
}

/// The result of the data pass.
#[derive(Debug)]
pub struct Applied {
    pub rows: u64,
    pub audits: Vec<AuditTable>,
    /// `recode.empty-output` and `recode.invalid-source` warnings, and
    /// `recode.computed-missing-code` errors.
    pub diagnostics: Vec<Diagnostic>,
}

/// The values conditions and derives see for the current row.
struct RowValues<'a> {
    codebook: &'a Codebook,
    check: &'a CheckPlan,
    record: &'a Record,
    cells: &'a [Cell],
    derived: &'a [Derived],
}

impl RowValues<'_> {
    fn text(&self, var: usize) -> &str {
        self.check.columns[var]
            .field
            .and_then(|f| self.record.field(f))
            .unwrap_or("")
            .trim()
    }

    /// A codebook variable's cell as a derive sees it.
    fn input(&self, var: usize) -> Input<'_> {
        let v = &self.codebook.variables[var];
        match self.cells[var] {
            Cell::Valid(Seen::Number(n)) => Input::Number(n),
            Cell::Valid(Seen::Text) => Input::Text(self.text(var)),
            Cell::Missing(kind) => {
                let text = self.text(var);
                let number = parse_decimal(text).map(|(n, _)| n);
                let code = v
                    .missing
                    .iter()
                    .find(|m| m.kind == kind && m.code.matches(text, number))
                    .map(|m| m.code.clone());
                Input::Missing(kind, code)
            }
            Cell::Blank => match v.blank_meaning(&self.codebook.dataset) {
                Some(kind) => Input::Missing(kind, None),
                None if v.universe.is_some() => Input::Missing(MissingKind::Skipped, None),
                None => Input::Invalid,
            },
            Cell::Invalid(_) => Input::Invalid,
        }
    }

    fn derived_input(&self, j: usize) -> Input<'_> {
        match &self.derived[j] {
            Derived::Number(n) => Input::Number(*n),
            Derived::Code(Code::Number(n)) => Input::Number(*n),
            Derived::Code(Code::Text(t)) => Input::Text(t),
            Derived::Missing(k, c) => Input::Missing(*k, c.clone()),
        }
    }

    fn source(&self, r: SourceRef) -> Input<'_> {
        match r {
            SourceRef::Codebook(i) => self.input(i),
            SourceRef::Derived(j) => self.derived_input(j),
        }
    }
}

impl Row for RowValues<'_> {
    fn value(&self, var: usize) -> Value<'_> {
        let n = self.codebook.variables.len();
        let input = if var < n {
            match self.cells[var] {
                Cell::Valid(Seen::Number(x)) => return Value::Number(x),
                Cell::Valid(Seen::Text) => return Value::Text(self.text(var)),
                _ => return Value::Missing,
            }
        } else {
            match self.derived.get(var - n) {
                Some(d) => d,
                None => return Value::Missing,
            }
        };
        match input {
            Derived::Number(x) | Derived::Code(Code::Number(x)) => Value::Number(*x),
            Derived::Code(Code::Text(t)) => Value::Text(t),
            Derived::Missing(..) => Value::Missing,
        }
    }
}

/// Derive one variable for the current row.
fn derive_one(plan: &Plan, d: &DerivePlan, row: &RowValues) -> (Source, Derived) {
    if let Some(w) = &d.when {
        if w.eval(row) != Tri::True {
            return (Source::WhenNotTrue, d.produced(MissingKind::Skipped));
        }
    }
    match (&d.rule, d.source) {
        (Rule::Expr(c), _) => {
            let mut first: Option<Input> = None;
            for &var in c.variables() {
                let input = if var < plan.variables {
                    row.input(var)
                } else {
                    row.derived_input(var - plan.variables)
                };
                match input {
                    Input::Number(_) | Input::Text(_) => {}
                    Input::Missing(MissingKind::Skipped, _) => {
                        first = Some(input);
                        break;
                    }
                    missing if first.is_none() => first = Some(missing),
                    _ => {}
                }
            }
            match first {
                Some(Input::Missing(kind, code)) => {
                    (Source::InputMissing(kind), d.carry(kind, code.as_ref()))
                }
                Some(_) => (Source::Invalid, d.produced(MissingKind::Other)),
                None => match c.eval_number(row) {
                    Some(n) => (Source::Computed(n), Derived::Number(n)),
                    None => (Source::NotFinite, d.produced(MissingKind::Other)),
                },
            }
        }
        (_, Some(source)) => d.derive(&row.source(source)),
        (_, None) => (Source::Invalid, d.produced(MissingKind::Other)),
    }
}

fn classify_row(check: &CheckPlan, record: &Record, cells: &mut [Cell]) {
    for (col, cell) in check.columns.iter().zip(cells.iter_mut()) {
        *cell = match col.field.and_then(|f| record.field(f)) {
            Some(text) => classify(col, text.trim()),
            None => Cell::Missing(MissingKind::NotAscertained),
        };
    }
}

/// The first pass: collect each quantile source's valid values and weights, then fill in
/// the cut points and bands.
pub fn cut_quantiles(
    codebook: &Codebook,
    plan: &mut Plan,
    source: &mut RecordSource,
) -> Result<Vec<u64>, ApplyError> {
    let header = source.headers().map(<[String]>::to_vec);
    let check = check_plan::compile(codebook, header.as_deref()).map_err(ApplyError::Codebook)?;
    require_columns(codebook, plan, &check, source.name())?;
    let mut values: Vec<Vec<(f64, f64)>> = vec![Vec::new(); plan.derives.len()];
    let mut excluded = vec![0u64; plan.derives.len()];
    let mut cells = vec![Cell::Blank; codebook.variables.len()];
    let mut derived: Vec<Derived> = Vec::with_capacity(plan.derives.len());
    let mut record = Record::new();
    while source.read_record(&mut record)? {
        classify_row(&check, &record, &mut cells);
        derived.clear();
        for (j, d) in plan.derives.iter().enumerate() {
            let row = RowValues {
                codebook,
                check: &check,
                record: &record,
                cells: &cells,
                derived: &derived,
            };
            if let (Some(q), Some(SourceRef::Codebook(var))) = (&d.quantiles, d.source) {
                let applies = d.when.as_ref().is_none_or(|w| w.eval(&row) == Tri::True);
                if let (true, Input::Number(x)) = (applies, row.input(var)) {
                    match q.weight {
                        None => values[j].push((x, 1.0)),
                        Some(w) => match cells[w] {
                            Cell::Valid(Seen::Number(wt)) if wt > 0.0 && wt.is_finite() => {
                                values[j].push((x, wt))
                            }
                            _ => excluded[j] += 1,
                        },
                    }
                }
            }
            let (_, value) = derive_one(plan, d, &row);
            derived.push(value);
        }
    }
    for (j, d) in plan.derives.iter_mut().enumerate() {
        let Some(q) = &mut d.quantiles else { continue };
        let taken = std::mem::take(&mut values[j]);
        q.cuts = quantile::cut_points(taken, q.bands, q.kind, q.weight.is_some());
        let bands = bands_of_cuts(&q.cuts, q.closed);
        for (k, band) in bands.iter().enumerate() {
            let fallback = format!("quantile band {} of {}", k + 1, q.bands);
            if let Some(c) = d
                .output
                .categories
                .iter_mut()
                .find(|c| c.code == Code::Number((k + 1) as f64) && c.label == fallback)
            {
                c.label = band.to_string();
            }
        }
        d.rule = Rule::Bands(
            bands
                .into_iter()
                .enumerate()
                .map(|(k, b)| (b, Code::Number((k + 1) as f64)))
                .collect(),
        );
    }
    Ok(excluded)
}

fn cell_text(d: &Derived) -> String {
    match d {
        Derived::Number(n) => format_number(*n),
        Derived::Code(Code::Number(n)) | Derived::Missing(_, Some(Code::Number(n))) => {
            format_number(*n)
        }
        Derived::Code(Code::Text(t)) | Derived::Missing(_, Some(Code::Text(t))) => t.clone(),
        Derived::Missing(_, None) => String::new(),
    }
}

/// The codebook variables written before the derived columns in [`Columns::OnlyDerived`]:
/// the case id, and every variable a derived universe reads (so the output codebook's
/// universes still resolve), with the variables their own universes read.
pub fn kept_variables(codebook: &Codebook, plan: &Plan, columns: Columns) -> Vec<usize> {
    if columns == Columns::All {
        return (0..codebook.variables.len()).collect();
    }
    let mut keep: Vec<usize> = codebook
        .dataset
        .id
        .iter()
        .filter_map(|n| codebook.variable_index(&n.name))
        .collect();
    let full = extended(codebook, plan);
    let mut queue: Vec<usize> = (codebook.variables.len()..full.variables.len()).collect();
    while let Some(v) = queue.pop() {
        let Some(u) = &full.variables[v].universe else {
            continue;
        };
        if let Ok(c) = crate::codebook::conditions::compile(&full, u, "universe") {
            for &x in c.variables() {
                if x < codebook.variables.len() && !keep.contains(&x) {
                    keep.push(x);
                    queue.push(x);
                }
            }
        }
    }
    keep.sort_unstable();
    keep
}

/// The codebook with the derived variables appended (conditions over it compile).
fn extended(codebook: &Codebook, plan: &Plan) -> Codebook {
    let mut variables = codebook.variables.clone();
    variables.extend(plan.derives.iter().map(|d| d.output.clone()));
    Codebook {
        dataset: Default::default(),
        file: Default::default(),
        variables,
        checks: Vec::new(),
        sources: Vec::new(),
    }
}

/// The codebook of the output file: the source codebook's variables (or the kept ones),
/// then the derived variables; the layout is the CSV this module writes.
pub fn output_codebook(codebook: &Codebook, plan: &Plan, columns: Columns) -> Codebook {
    let kept = kept_variables(codebook, plan, columns);
    let mut variables: Vec<Variable> = kept
        .iter()
        .map(|&i| {
            let mut v = codebook.variables[i].clone();
            v.columns = None;
            v
        })
        .collect();
    variables.extend(plan.derives.iter().map(|d| d.output.clone()));
    Codebook {
        dataset: crate::codebook::model::Dataset {
            name: codebook.dataset.name.clone(),
            title: codebook.dataset.title.clone(),
            cases: codebook.dataset.cases,
            id: codebook.dataset.id.clone(),
            weight: codebook
                .dataset
                .weight
                .clone()
                .filter(|w| variables.iter().any(|v| v.name == w.name)),
            blank: codebook.dataset.blank,
            place: None,
        },
        file: Default::default(),
        variables,
        checks: if columns == Columns::All {
            codebook.checks.clone()
        } else {
            Vec::new()
        },
        sources: Vec::new(),
    }
}

/// Stream `source` through the plan, writing CSV (comma, double quotes, UTF-8, a header
/// row) to `out`. `places` gives each derive's place in the recode file for diagnostics;
/// `weight_excluded` comes from [`cut_quantiles`].
pub fn apply(
    codebook: &Codebook,
    plan: &Plan,
    source: &mut RecordSource,
    out: &mut dyn Write,
    columns: Columns,
    places: &[Option<Place>],
    weight_excluded: &[u64],
) -> Result<Applied, ApplyError> {
    let header = source.headers().map(<[String]>::to_vec);
    let check = check_plan::compile(codebook, header.as_deref()).map_err(ApplyError::Codebook)?;
    require_columns(codebook, plan, &check, source.name())?;
    let sources: Vec<Option<&Variable>> = plan
        .derives
        .iter()
        .map(|d| match d.source {
            Some(SourceRef::Codebook(i)) => Some(&codebook.variables[i]),
            Some(SourceRef::Derived(j)) => Some(&plan.derives[j].output),
            None => None,
        })
        .collect();
    let mut counters: Vec<Counter> = plan
        .derives
        .iter()
        .zip(&sources)
        .map(|(d, s)| Counter::with_static_rows(d, *s))
        .collect();
    for (c, x) in counters.iter_mut().zip(weight_excluded) {
        c.weight_excluded = *x;
    }
    let mut writer = csv::WriterBuilder::new().flexible(true).from_writer(out);
    let kept = kept_variables(codebook, plan, columns);
    let source_fields: Option<Vec<usize>> = match columns {
        Columns::All => None,
        Columns::OnlyDerived => Some(
            kept.iter()
                .filter_map(|&v| check.columns[v].field)
                .collect(),
        ),
    };
    let mut names: Vec<String> = match (&source_fields, &header) {
        (None, Some(h)) => h.clone(),
        (None, None) => codebook.variables.iter().map(|v| v.name.clone()).collect(),
        (Some(_), _) => kept
            .iter()
            .map(|&v| codebook.variables[v].name.clone())
            .collect(),
    };
    names.extend(plan.derives.iter().map(|d| d.name.clone()));
    writer.write_record(&names).map_err(csv_error)?;

    let mut cells = vec![Cell::Blank; codebook.variables.len()];
    let mut derived: Vec<Derived> = Vec::with_capacity(plan.derives.len());
    let mut record = Record::new();
    let mut fields: Vec<String> = Vec::new();
    let mut rows = 0u64;
    // The numeric missing codes of each derived variable, against which computed values
    // are compared, and what was found: (count, first row, the code).
    let missing_numbers: Vec<Vec<f64>> = plan
        .derives
        .iter()
        .map(|d| {
            d.output
                .missing
                .iter()
                .filter_map(|m| match m.code {
                    Code::Number(n) => Some(n),
                    Code::Text(_) => None,
                })
                .collect()
        })
        .collect();
    let mut clashes: Vec<(u64, u64, f64)> = vec![(0, 0, 0.0); plan.derives.len()];
    while source.read_record(&mut record)? {
        rows += 1;
        classify_row(&check, &record, &mut cells);
        derived.clear();
        for (j, d) in plan.derives.iter().enumerate() {
            let row = RowValues {
                codebook,
                check: &check,
                record: &record,
                cells: &cells,
                derived: &derived,
            };
            let (class, value) = derive_one(plan, d, &row);
            counters[j].add(class, &value);
            if let Derived::Number(n) = value {
                if missing_numbers[j].contains(&n) {
                    let clash = &mut clashes[j];
                    if clash.0 == 0 {
                        *clash = (0, rows, n);
                    }
                    clash.0 += 1;
                }
            }
            derived.push(value);
        }
        fields.clear();
        match &source_fields {
            None => fields.extend(record.fields().map(str::to_string)),
            Some(list) => fields.extend(
                list.iter()
                    .map(|&f| record.field(f).unwrap_or("").to_string()),
            ),
        }
        fields.extend(derived.iter().map(cell_text));
        writer.write_record(&fields).map_err(csv_error)?;
    }
    writer.flush().map_err(ApplyError::Write)?;

    let mut diagnostics = Vec::new();
    let mut audits = Vec::new();
    for (j, d) in plan.derives.iter().enumerate() {
        let place = places.get(j).copied().flatten();
        for (c, n) in d
            .output
            .categories
            .iter()
            .zip(counters[j].category_counts(&d.output))
        {
            if n == 0 {
                diagnostics.push(
                    Diagnostic::new(
                        "recode.empty-output",
                        format!(
                            "no case reached the category {} (\"{}\") of `{}`",
                            c.code, c.label, d.name
                        ),
                    )
                    .at(place, "has an empty category")
                    .help("check the band limits against the data's units and spread"),
                );
            }
        }
        let (clash, first_row, code) = clashes[j];
        if clash > 0 {
            diagnostics.push(
                Diagnostic::new(
                    "recode.computed-missing-code",
                    format!(
                        "{clash} computed value{} of `{}` equal{} its missing code {}, first on data row {first_row}; read back with the output codebook, {} would count as missing",
                        if clash == 1 { "" } else { "s" },
                        d.name,
                        if clash == 1 { "s" } else { "" },
                        format_number(code),
                        if clash == 1 { "it" } else { "they" },
                    ),
                )
                .at(place, "computes a value that is also a missing code")
                .help("give the derived variable missing codes its expression cannot reach (`missing` entries with `code`), for example negative ones for a quantity"),
            );
        }
        let invalid = counters[j].invalid();
        if invalid > 0 {
            diagnostics.push(
                Diagnostic::new(
                    "recode.invalid-source",
                    format!("{invalid} source cell{} of `{}` break the codebook; derived as missing (other)", if invalid == 1 { "" } else { "s" }, d.name),
                )
                .at(place, "reads invalid cells")
                .help("run `concord check` on the data and fix those cells first"),
            );
        }
        let weight = d
            .quantiles
            .as_ref()
            .and_then(|q| q.weight)
            .map(|w| codebook.variables[w].name.as_str());
        audits.push(audit::table(d, &counters[j], sources[j], d.method, weight));
    }
    Ok(Applied {
        rows,
        audits,
        diagnostics,
    })
}

fn csv_error(e: csv::Error) -> ApplyError {
    ApplyError::Write(std::io::Error::other(e.to_string()))
}
