//! Static validation: prove a recode file right against the codebook alone, and compile it.
//!
//! Each derived variable is checked in file order, so it may read codebook variables and the
//! variables derived above it. Findings are [`Diagnostic`]s under the `recode.*` rules of
//! [`crate::rules::RECODE_RULES`], pointing into the recode file. Some findings leave a
//! derived variable impossible to compute (an unknown source, a type error, ambiguous
//! missing codes); they are *blocking*, and a blocked recode file cannot be applied. The
//! others (gaps, overlaps, unmapped codes) describe a recode that would run but be wrong.
//! Band arithmetic lives in [`super::intervals`] and [`super::sources`]; the output variable each derive
//! describes is built in [`super::outputs`]; the checks of each method against its source are
//! in [`methods`].

mod methods;

use super::outputs::{self, Built};
use super::plan::{DerivePlan, Plan, Rule, SourceRef};
use super::spec::{Derive, Method, RecodeFile};
use crate::codebook::model::{Code, Codebook, ConditionText, Kind, Variable};
use crate::condition::{self, Compiled, Resolve, VarType};
use crate::diagnostic::{nearest, Diagnostic};

/// The rules whose findings make a derived variable impossible to compute.
pub const BLOCKING: &[&str] = &[
    "recode.unknown-source",
    "recode.order",
    "recode.not-numeric",
    "recode.expression",
    "recode.duplicate-name",
    "recode.quantile-source",
    "recode.missing-code",
];

#[derive(Debug)]
pub struct Validated {
    pub diagnostics: Vec<Diagnostic>,
    /// The compiled recodes; `None` when a blocking finding prevents it.
    pub plan: Option<Plan>,
}

impl Validated {
    pub fn blocking(&self) -> impl Iterator<Item = &Diagnostic> {
        self.diagnostics
            .iter()
            .filter(|d| BLOCKING.contains(&d.rule))
    }
}

/// Names of recode conditions: codebook variables first, then derived variables at
/// `codebook.variables.len() + i`.
struct Names<'a> {
    codebook: &'a Codebook,
    derived: Vec<(String, VarType)>,
}

impl Resolve for Names<'_> {
    fn resolve(&self, name: &str) -> Option<(usize, VarType)> {
        if let Some(i) = self.codebook.variable_index(name) {
            return Some((i, crate::codebook::conditions::var_type(self.codebook, i)));
        }
        let n = self.codebook.variables.len();
        self.derived
            .iter()
            .position(|(d, _)| d == name)
            .map(|i| (n + i, self.derived[i].1))
    }

    fn names(&self) -> Vec<String> {
        let mut names: Vec<String> = self
            .codebook
            .variables
            .iter()
            .map(|v| v.name.clone())
            .collect();
        names.extend(self.derived.iter().map(|(d, _)| d.clone()));
        names
    }
}

fn var_type_of_output(derive: &Derive) -> VarType {
    let text = match &derive.method {
        Method::Map(entries) => entries.iter().any(|e| matches!(e.code, Code::Text(_))),
        Method::Intervals(rules) => rules.iter().any(|r| matches!(r.code, Code::Text(_))),
        _ => false,
    };
    if text {
        VarType::Text
    } else {
        VarType::Number
    }
}

struct Validator<'a> {
    codebook: &'a Codebook,
    names: Names<'a>,
    out: Vec<Diagnostic>,
    /// One per derive checked so far; `None` when it is blocked.
    built: Vec<Option<DerivePlan>>,
    /// Per derive: it reads quantile bands, directly or through other derives.
    on_quantiles: Vec<bool>,
}

/// Validate a recode file against its codebook.
pub fn validate(codebook: &Codebook, recodes: &RecodeFile) -> Validated {
    let names = Names {
        codebook,
        derived: recodes
            .derives
            .iter()
            .map(|d| (d.name.clone(), var_type_of_output(d)))
            .collect(),
    };
    let mut v = Validator {
        codebook,
        names,
        out: Vec::new(),
        built: Vec::new(),
        on_quantiles: Vec::new(),
    };
    for (i, d) in recodes.derives.iter().enumerate() {
        let before = v.out.len();
        let plan = v.derive(i, d, recodes);
        let blocked = v.out[before..].iter().any(|x| BLOCKING.contains(&x.rule));
        v.built.push(if blocked { None } else { plan });
    }
    let mut diagnostics = v.out;
    diagnostics.sort_by_key(|d| d.place.map_or((usize::MAX, 0), |p| (p.file, p.offset)));
    let plan = if v.built.iter().all(Option::is_some) {
        Some(Plan {
            derives: v.built.into_iter().flatten().collect(),
            variables: codebook.variables.len(),
        })
    } else {
        None
    };
    Validated { diagnostics, plan }
}

/// What `from` names.
enum Resolved<'p> {
    Found(SourceRef, &'p Variable),
    /// Already reported, or depends on a blocked derive.
    Blocked,
}

impl Validator<'_> {
    fn push(&mut self, d: Diagnostic) {
        self.out.push(d);
    }

    fn source_variable(&self, r: SourceRef) -> Option<&Variable> {
        match r {
            SourceRef::Codebook(i) => Some(&self.codebook.variables[i]),
            SourceRef::Derived(j) => self.built.get(j)?.as_ref().map(|p| &p.output),
        }
    }

    fn resolve_from(&mut self, i: usize, d: &Derive) -> Resolved<'_> {
        let Some(from) = &d.from else {
            return Resolved::Blocked;
        };
        if let Some(k) = self.codebook.variable_index(&from.name) {
            return Resolved::Found(SourceRef::Codebook(k), &self.codebook.variables[k]);
        }
        match self.names.derived.iter().position(|(n, _)| *n == from.name) {
            Some(j) if j < i => match self.built[j].as_ref() {
                Some(p) => Resolved::Found(SourceRef::Derived(j), &p.output),
                None => Resolved::Blocked,
            },
            Some(j) => {
                let what = if j == i {
                    "itself"
                } else {
                    "a variable derived further down"
                };
                self.push(
                    Diagnostic::new(
                        "recode.order",
                        format!("`{}` is derived from {what}, `{}`", d.name, from.name),
                    )
                    .at(from.place, "not derived yet")
                    .help("a derived variable may read only codebook variables and variables derived above it; move that entry up"),
                );
                Resolved::Blocked
            }
            None => {
                let names = self.names.names();
                let mut diag = Diagnostic::new(
                    "recode.unknown-source",
                    format!("`{}` is derived from `{}`, which is neither in the codebook nor derived above", d.name, from.name),
                )
                .at(from.place, "unknown variable");
                if let Some(n) = nearest(&from.name, names.iter().map(String::as_str)) {
                    diag = diag.help(format!("did you mean `{n}`?"));
                }
                self.push(diag);
                Resolved::Blocked
            }
        }
    }

    /// Compile an `expr` (`condition` false) or `when` (`condition` true).
    fn compile(
        &mut self,
        i: usize,
        text: &ConditionText,
        what: &str,
        condition: bool,
    ) -> Option<Compiled> {
        let expr = match condition::parse(&text.text) {
            Ok(e) => e,
            Err(e) => {
                let mut d = Diagnostic::new(
                    "recode.expression",
                    format!("the {what} does not parse: {}", e.message),
                )
                .at(text.place_of(e.span.offset, e.span.len), e.message.clone());
                d.help = e.help;
                self.push(d);
                return None;
            }
        };
        let compiled = if condition {
            condition::compile_condition(&expr, &self.names)
        } else {
            condition::compile(&expr, &self.names)
        };
        let compiled = match compiled {
            Ok(c) => c,
            Err(errors) => {
                for e in errors {
                    let rule = if e.message.starts_with("unknown variable") {
                        "recode.unknown-source"
                    } else {
                        "recode.expression"
                    };
                    let mut d = Diagnostic::new(rule, format!("in the {what}: {}", e.message))
                        .at(text.place_of(e.span.offset, e.span.len), e.message.clone());
                    d.help = e.help;
                    self.push(d);
                }
                return None;
            }
        };
        if !condition && compiled.is_condition() {
            self.push(
                Diagnostic::new(
                    "recode.expression",
                    format!("the {what} is a condition, not a number"),
                )
                .at(text.place, "yields true or false")
                .help("an `expr` computes a number, such as `bike_km / bike_days`"),
            );
            return None;
        }
        let n = self.codebook.variables.len();
        let mut blocked = false;
        for &var in compiled.variables() {
            if var < n {
                continue;
            }
            let j = var - n;
            if j >= i {
                let name = &self.names.derived[j].0;
                self.push(
                    Diagnostic::new(
                        "recode.order",
                        format!("the {what} reads `{name}`, which is derived {}", if j == i { "by this very entry" } else { "further down" }),
                    )
                    .at(text.place, "reads a variable not derived yet")
                    .help("a derived variable may read only codebook variables and variables derived above it"),
                );
                blocked = true;
            } else if self.built[j].is_none() {
                blocked = true;
            }
        }
        (!blocked).then_some(compiled)
    }

    fn derive(&mut self, i: usize, d: &Derive, recodes: &RecodeFile) -> Option<DerivePlan> {
        self.check_name(i, d, recodes);
        let n = self.codebook.variables.len();
        let when = match &d.when {
            Some(w) => Some(self.compile(i, w, &format!("`when` of `{}`", d.name), true)?),
            None => None,
        };
        let reads_quantiles = |v: &Self, vars: &[usize]| {
            vars.iter()
                .any(|&x| x >= n && v.on_quantiles.get(x - n).copied().unwrap_or(false))
        };
        let mut on_quantiles = when
            .as_ref()
            .is_some_and(|w| reads_quantiles(self, w.variables()));
        let result = if let Method::Expr(text) = &d.method {
            if d.kind != Kind::Numeric {
                self.push(
                    Diagnostic::new("recode.expression", format!("`{}` has an `expr`, which derives a numeric variable, but `kind = \"{}\"`", d.name, d.kind))
                        .at(d.method_place, "computes a number")
                        .help("remove `kind`, or derive bands from the number in a second entry"),
                );
            }
            let compiled = self.compile(i, text, &format!("`expr` of `{}`", d.name), false);
            match compiled {
                Some(c) => {
                    on_quantiles |= reads_quantiles(self, c.variables());
                    let inputs: Vec<SourceRef> = c
                        .variables()
                        .iter()
                        .map(|&x| {
                            if x < n {
                                SourceRef::Codebook(x)
                            } else {
                                SourceRef::Derived(x - n)
                            }
                        })
                        .collect();
                    let owned: Vec<Variable> = inputs
                        .iter()
                        .filter_map(|r| self.source_variable(*r))
                        .cloned()
                        .collect();
                    let vars: Vec<&Variable> = owned.iter().collect();
                    let divides = text.text.contains('/');
                    outputs::build(
                        self.codebook,
                        d,
                        &vars,
                        None,
                        when.is_some(),
                        divides,
                        &mut self.out,
                    )
                    .map(|b| (b, Rule::Expr(c), None, None))
                }
                None => None,
            }
        } else {
            let (source, var) = match self.resolve_from(i, d) {
                Resolved::Found(r, v) => (r, v.clone()),
                Resolved::Blocked => {
                    self.on_quantiles.push(false);
                    return None;
                }
            };
            if let SourceRef::Derived(j) = source {
                on_quantiles |= self.on_quantiles[j];
            }
            self.source_rule(d, source, &var, when.is_some())
                .map(|(b, rule, q)| (b, rule, q, Some(source)))
        };
        let quantile_entry = matches!(d.method, Method::Quantiles { .. });
        if quantile_entry && on_quantiles {
            self.push(
                Diagnostic::new(
                    "recode.quantile-source",
                    format!(
                        "the quantile bands of `{}` would read quantile bands derived above",
                        d.name
                    ),
                )
                .at(
                    d.method_place,
                    "cut points come from a first pass over codebook variables",
                )
                .help("base `from`, `weight` and `when` on codebook variables"),
            );
        }
        self.on_quantiles.push(on_quantiles || quantile_entry);
        let (built, rule, quantiles, source) = result?;
        let Built {
            output,
            missing_from,
            kind_codes,
        } = built;
        let coded_source = source
            .and_then(|s| self.source_variable(s))
            .is_some_and(|v| v.kind.is_coded());
        Some(DerivePlan {
            name: d.name.clone(),
            source,
            rule,
            quantiles,
            when,
            missing_from,
            kind_codes,
            output,
            coded_source,
            method: d.method.name(),
        })
    }

    fn check_name(&mut self, i: usize, d: &Derive, recodes: &RecodeFile) {
        let clash = if self.codebook.variable(&d.name).is_some() {
            Some("a codebook variable")
        } else if recodes.derives[..i].iter().any(|e| e.name == d.name) {
            Some("a variable derived above")
        } else {
            None
        };
        if let Some(what) = clash {
            self.push(
                Diagnostic::new(
                    "recode.duplicate-name",
                    format!("`{}` is already the name of {what}", d.name),
                )
                .at(d.place, "name taken")
                .help(
                    "give the derived variable its own name, e.g. with a `_band` or `_grp` suffix",
                ),
            );
        }
    }
}
