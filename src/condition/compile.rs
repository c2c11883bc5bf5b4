//! Resolves names and checks types, turning a syntax tree into an evaluable [`Compiled`].
//!
//! This is where a condition meets the codebook: `agee >= 18` names no variable, `region <
//! "n"` orders text, `start >= 5` compares a date with a number. Every such error is
//! collected, not only the first, so a codebook author fixes them in one pass. A subtree
//! that already failed yields `Typed::Invalid`, which later checks accept silently so one
//! mistake is not reported twice.

use super::ast::{CompareOp, Expr, ExprKind, Function, ListItem, Literal, LogicalOp};
use super::eval::{Compiled, Condition, Number, Program, Text};
use super::{CompileError, Resolve, Span, VarType};
use crate::codebook::date::parse_iso_date;

/// Compile a condition or an arithmetic expression.
///
/// The result is a condition when the expression yields a truth value and a number
/// expression when it yields a number; see [`Compiled::is_condition`]. Text and dates are
/// not valid results on their own.
pub fn compile(expr: &Expr, resolver: &dyn Resolve) -> Result<Compiled, Vec<CompileError>> {
    let mut compiler = Compiler::new(resolver);
    let program = match compiler.expr(expr) {
        Typed::Condition(condition) => Some(Program::Condition(condition)),
        Typed::Number(number) => Some(Program::Number(number)),
        Typed::Invalid => None,
        other => {
            compiler.error(
                format!(
                    "expected a condition or a number, found {}",
                    other.describe()
                ),
                expr.span,
                None,
            );
            None
        }
    };
    compiler.finish(program)
}

/// Compile an expression that must be a condition, as a universe or a check requires.
pub fn compile_condition(
    expr: &Expr,
    resolver: &dyn Resolve,
) -> Result<Compiled, Vec<CompileError>> {
    let mut compiler = Compiler::new(resolver);
    let program = compiler.condition(expr).map(Program::Condition);
    compiler.finish(program)
}

/// What a subtree yields, with its compiled form.
enum Typed {
    Condition(Condition),
    Number(Number),
    /// A date variable; evaluates to its day number.
    Date(Number),
    Text(Text),
    /// A quoted literal: text, or a date when compared with a date.
    TextLiteral(String),
    /// An error was reported inside.
    Invalid,
}

impl Typed {
    fn describe(&self) -> &'static str {
        match self {
            Typed::Condition(_) => "a condition",
            Typed::Number(_) => "a number",
            Typed::Date(_) => "a date",
            Typed::Text(_) | Typed::TextLiteral(_) => "text",
            Typed::Invalid => "an invalid expression",
        }
    }
}

struct Compiler<'r> {
    resolver: &'r dyn Resolve,
    known_names: Option<Vec<String>>,
    variables: Vec<usize>,
    errors: Vec<CompileError>,
}

fn is_literal(expr: &Expr) -> bool {
    match &expr.kind {
        ExprKind::Literal(_) => true,
        ExprKind::Negate(operand) => is_literal(operand),
        _ => false,
    }
}

impl<'r> Compiler<'r> {
    fn new(resolver: &'r dyn Resolve) -> Compiler<'r> {
        Compiler {
            resolver,
            known_names: None,
            variables: Vec::new(),
            errors: Vec::new(),
        }
    }

    fn finish(mut self, program: Option<Program>) -> Result<Compiled, Vec<CompileError>> {
        match program {
            Some(program) if self.errors.is_empty() => {
                self.variables.sort_unstable();
                self.variables.dedup();
                Ok(Compiled {
                    program,
                    variables: self.variables,
                })
            }
            _ => Err(self.errors),
        }
    }

    fn error(&mut self, message: String, span: Span, help: Option<String>) {
        self.errors.push(CompileError {
            message,
            span,
            help,
        });
    }

    fn variable(&mut self, name: &str, span: Span) -> Option<(usize, VarType)> {
        if let Some(found) = self.resolver.resolve(name) {
            self.variables.push(found.0);
            return Some(found);
        }
        let help = self.suggest(name);
        self.error(format!("unknown variable `{name}`"), span, help);
        None
    }

    fn suggest(&mut self, name: &str) -> Option<String> {
        if ["and", "or", "not", "in"].contains(&name.to_lowercase().as_str()) {
            return Some(format!("keywords are lowercase: `{}`", name.to_lowercase()));
        }
        let resolver = self.resolver;
        let names = self.known_names.get_or_insert_with(|| resolver.names());
        if let Some(same) = names.iter().find(|known| known.eq_ignore_ascii_case(name)) {
            return Some(format!("did you mean `{same}`? Names are case-sensitive"));
        }
        let allowed = (name.chars().count() / 3).max(1);
        names
            .iter()
            .map(|known| (strsim::damerau_levenshtein(name, known), known))
            .filter(|(distance, _)| *distance <= allowed)
            .min_by_key(|(distance, _)| *distance)
            .map(|(_, known)| format!("did you mean `{known}`?"))
    }

    fn expr(&mut self, expr: &Expr) -> Typed {
        match &expr.kind {
            ExprKind::Literal(Literal::Number(value)) => Typed::Number(Number::Constant(*value)),
            ExprKind::Literal(Literal::Text(text)) => Typed::TextLiteral(text.clone()),
            ExprKind::Variable(name) => match self.variable(name, expr.span) {
                Some((var, VarType::Number)) => Typed::Number(Number::Variable(var)),
                Some((var, VarType::Date)) => Typed::Date(Number::Variable(var)),
                Some((var, VarType::Text)) => Typed::Text(Text::Variable(var)),
                None => Typed::Invalid,
            },
            ExprKind::Negate(operand) => match self.number(operand) {
                Some(number) => Typed::Number(Number::Negate(Box::new(number))),
                None => Typed::Invalid,
            },
            ExprKind::Arithmetic {
                op, left, right, ..
            } => match (self.number(left), self.number(right)) {
                (Some(left), Some(right)) => Typed::Number(Number::Arithmetic {
                    op: *op,
                    left: Box::new(left),
                    right: Box::new(right),
                }),
                _ => Typed::Invalid,
            },
            ExprKind::Compare {
                op,
                op_span,
                left,
                right,
            } => self.compare(*op, *op_span, left, right, expr.span),
            ExprKind::In {
                value,
                list,
                negated,
            } => match self.in_list(value, list) {
                Some(condition) if *negated => {
                    Typed::Condition(Condition::Not(Box::new(condition)))
                }
                Some(condition) => Typed::Condition(condition),
                None => Typed::Invalid,
            },
            ExprKind::Not(operand) => match self.condition(operand) {
                Some(condition) => Typed::Condition(Condition::Not(Box::new(condition))),
                None => Typed::Invalid,
            },
            ExprKind::Logical { op, left, right } => {
                match (self.condition(left), self.condition(right)) {
                    (Some(left), Some(right)) => Typed::Condition(match op {
                        LogicalOp::And => Condition::And(Box::new(left), Box::new(right)),
                        LogicalOp::Or => Condition::Or(Box::new(left), Box::new(right)),
                    }),
                    _ => Typed::Invalid,
                }
            }
            ExprKind::Call { function, argument } => {
                match self.variable(&argument.text, argument.span) {
                    Some((var, var_type)) => Typed::Condition(match function {
                        Function::Answered => Condition::Answered(var, var_type),
                        Function::Missing => Condition::Missing(var, var_type),
                    }),
                    None => Typed::Invalid,
                }
            }
        }
    }

    /// A subtree that must yield a truth value.
    fn condition(&mut self, expr: &Expr) -> Option<Condition> {
        let typed = self.expr(expr);
        let help = match (&typed, &expr.kind) {
            (Typed::Condition(_), _) | (Typed::Invalid, _) => None,
            (Typed::Text(_), ExprKind::Variable(name)) => Some(format!(
                "compare it, e.g. `{name} == \"yes\"`, or test `answered({name})`"
            )),
            (_, ExprKind::Variable(name)) => Some(format!(
                "compare it, e.g. `{name} == 1`, or test `answered({name})`"
            )),
            (Typed::TextLiteral(text), _) if self.resolver.resolve(text).is_some() => Some(
                format!("remove the quotes to refer to the variable `{text}`"),
            ),
            _ => Some("compare it with a value, e.g. `... > 0`".to_owned()),
        };
        match typed {
            Typed::Condition(condition) => Some(condition),
            Typed::Invalid => None,
            other => {
                let message = format!("expected a condition, found {}", other.describe());
                self.error(message, expr.span, help);
                None
            }
        }
    }

    /// An operand of arithmetic or unary minus.
    fn number(&mut self, expr: &Expr) -> Option<Number> {
        let (message, help) = match self.expr(expr) {
            Typed::Number(number) => return Some(number),
            Typed::Invalid => return None,
            Typed::Date(_) => (
                "arithmetic on dates is not supported",
                "compare dates directly, e.g. `start <= end`",
            ),
            Typed::Text(_) | Typed::TextLiteral(_) => (
                "arithmetic needs numbers, found text",
                "only number variables and numbers take `+ - * /`",
            ),
            Typed::Condition(_) => (
                "arithmetic needs numbers, found a condition",
                "a condition has no numeric value",
            ),
        };
        self.error(message.to_owned(), expr.span, Some(help.to_owned()));
        None
    }

    fn date_literal(&mut self, text: &str, span: Span) -> Option<Number> {
        match parse_iso_date(text) {
            Some(day) => Some(Number::Constant(f64::from(day))),
            None => {
                self.error(
                    format!("`{text}` is not a valid date"),
                    span,
                    Some("write dates as `YYYY-MM-DD`, e.g. \"2024-01-31\"".to_owned()),
                );
                None
            }
        }
    }

    fn compare(
        &mut self,
        op: CompareOp,
        op_span: Span,
        left: &Expr,
        right: &Expr,
        span: Span,
    ) -> Typed {
        let (a, b) = (self.expr(left), self.expr(right));
        let numbers = |left, right| Typed::Condition(Condition::CompareNumber { op, left, right });
        match (a, b) {
            (Typed::Invalid, _) | (_, Typed::Invalid) => Typed::Invalid,
            (Typed::Number(l), Typed::Number(r)) | (Typed::Date(l), Typed::Date(r)) => {
                numbers(l, r)
            }
            (Typed::Date(l), Typed::TextLiteral(text)) => {
                match self.date_literal(&text, right.span) {
                    Some(r) => numbers(l, r),
                    None => Typed::Invalid,
                }
            }
            (Typed::TextLiteral(text), Typed::Date(r)) => match self.date_literal(&text, left.span)
            {
                Some(l) => numbers(l, r),
                None => Typed::Invalid,
            },
            (
                l @ (Typed::Text(_) | Typed::TextLiteral(_)),
                r @ (Typed::Text(_) | Typed::TextLiteral(_)),
            ) => {
                if !op.is_equality() {
                    self.error(
                        format!("text cannot be ordered with `{}`", op.symbol()),
                        op_span,
                        Some("text compares only with `==`, `!=` and `in`".to_owned()),
                    );
                    return Typed::Invalid;
                }
                let as_text = |typed| match typed {
                    Typed::Text(text) => text,
                    Typed::TextLiteral(text) => Text::Constant(text.into_boxed_str()),
                    _ => unreachable!("matched text operands"),
                };
                Typed::Condition(Condition::CompareText {
                    equal: op == CompareOp::Equal,
                    left: as_text(l),
                    right: as_text(r),
                })
            }
            (l, r) => {
                self.mismatch(&l, left, &r, right, span);
                Typed::Invalid
            }
        }
    }

    /// Report operands of a comparison whose types do not meet.
    fn mismatch(&mut self, a: &Typed, left: &Expr, b: &Typed, right: &Expr, span: Span) {
        for (typed, expr) in [(a, left), (b, right)] {
            if matches!(typed, Typed::Condition(_)) {
                self.error(
                    "a condition cannot be compared".to_owned(),
                    expr.span,
                    Some("join conditions with `and` or `or`".to_owned()),
                );
            }
        }
        if matches!(a, Typed::Condition(_)) || matches!(b, Typed::Condition(_)) {
            return;
        }
        let message = format!("{} cannot be compared with {}", a.describe(), b.describe());
        // Point at the literal when there is one: it is usually the part to fix.
        let (literal, other) = if is_literal(right) {
            (Some((b, right)), a)
        } else if is_literal(left) {
            (Some((a, left)), b)
        } else {
            (None, a)
        };
        let (error_span, help) = match (literal, other) {
            (Some((Typed::TextLiteral(_), expr)), Typed::Number(_)) => {
                (expr.span, "remove the quotes to write a number".to_owned())
            }
            (Some((Typed::Number(_), expr)), Typed::Date(_)) => (
                expr.span,
                "write the date in quotes, e.g. \"2024-01-31\"".to_owned(),
            ),
            (Some((Typed::Number(_), expr)), Typed::Text(_)) => (
                expr.span,
                "this variable holds text: put the code in quotes, e.g. \"1\"".to_owned(),
            ),
            (Some((_, expr)), _) => (expr.span, "compare values of the same kind".to_owned()),
            (None, _) => (span, "compare values of the same kind".to_owned()),
        };
        self.error(message, error_span, Some(help));
    }

    fn in_list(&mut self, value: &Expr, list: &[ListItem]) -> Option<Condition> {
        match self.expr(value) {
            Typed::Invalid => None,
            Typed::Number(number) => {
                let items = self.list_items(list, |item| match item {
                    Literal::Number(n) => Ok(*n),
                    Literal::Text(_) => Err("remove the quotes: the value is a number"),
                });
                Some(Condition::InNumber {
                    value: number,
                    list: items?.into_boxed_slice(),
                })
            }
            Typed::Date(number) => {
                let mut days = Vec::with_capacity(list.len());
                let mut ok = true;
                for item in list {
                    let day = match &item.value {
                        Literal::Text(text) => self.date_literal(text, item.span),
                        Literal::Number(_) => {
                            self.error(
                                "a date cannot be compared with a number".to_owned(),
                                item.span,
                                Some("write the date in quotes, e.g. \"2024-01-31\"".to_owned()),
                            );
                            None
                        }
                    };
                    ok &= day.is_some();
                    if let Some(Number::Constant(day)) = day {
                        days.push(day);
                    }
                }
                ok.then(|| Condition::InNumber {
                    value: number,
                    list: days.into_boxed_slice(),
                })
            }
            typed @ (Typed::Text(_) | Typed::TextLiteral(_)) => {
                let items = self.list_items(list, |item| match item {
                    Literal::Text(text) => Ok(text.clone().into_boxed_str()),
                    Literal::Number(_) => Err("the value is text: put the code in quotes"),
                });
                let value = match typed {
                    Typed::Text(text) => text,
                    Typed::TextLiteral(text) => Text::Constant(text.into_boxed_str()),
                    _ => unreachable!("matched text"),
                };
                Some(Condition::InText {
                    value,
                    list: items?.into_boxed_slice(),
                })
            }
            Typed::Condition(_) => {
                self.error(
                    "a condition cannot be tested with `in`".to_owned(),
                    value.span,
                    Some("`in` tests a value, e.g. `x in [1, 2]`".to_owned()),
                );
                None
            }
        }
    }

    /// Convert every list item, reporting each one of the wrong kind.
    fn list_items<T>(
        &mut self,
        list: &[ListItem],
        convert: impl Fn(&Literal) -> Result<T, &'static str>,
    ) -> Option<Vec<T>> {
        let mut items = Vec::with_capacity(list.len());
        let mut ok = true;
        for item in list {
            match convert(&item.value) {
                Ok(value) => items.push(value),
                Err(help) => {
                    ok = false;
                    let found = match item.value {
                        Literal::Number(_) => "a number",
                        Literal::Text(_) => "text",
                    };
                    self.error(
                        format!("the list item is {found}, which does not match the value"),
                        item.span,
                        Some(help.to_owned()),
                    );
                }
            }
        }
        ok.then_some(items)
    }
}
