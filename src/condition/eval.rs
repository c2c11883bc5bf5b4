//! The compiled form of a condition and its evaluation against one row.
//!
//! Compiling leaves a small tree of enum nodes: names replaced by variable indices, types
//! already checked (so each node knows whether it reads numbers or text), date literals
//! already turned into day numbers. Evaluating walks the tree without allocating, which is
//! what the row loop needs: a universe is evaluated once per case and variable.

use super::ast::{ArithmeticOp, CompareOp};
use super::{Row, Tri, Value, VarType};

/// A condition or arithmetic expression ready to evaluate.
#[derive(Clone, Debug)]
pub struct Compiled {
    pub(crate) program: Program,
    /// Sorted and distinct.
    pub(crate) variables: Vec<usize>,
}

#[derive(Clone, Debug)]
pub(crate) enum Program {
    Condition(Condition),
    Number(Number),
}

/// A node yielding a truth value.
#[derive(Clone, Debug)]
pub(crate) enum Condition {
    And(Box<Condition>, Box<Condition>),
    Or(Box<Condition>, Box<Condition>),
    Not(Box<Condition>),
    /// Numbers, or dates as day numbers.
    CompareNumber {
        op: CompareOp,
        left: Number,
        right: Number,
    },
    /// `==` (when `equal`) or `!=` on text.
    CompareText {
        equal: bool,
        left: Text,
        right: Text,
    },
    InNumber {
        value: Number,
        list: Box<[f64]>,
    },
    InText {
        value: Text,
        list: Box<[Box<str>]>,
    },
    Answered(usize, VarType),
    Missing(usize, VarType),
}

/// A node yielding a number; `None` is missing.
#[derive(Clone, Debug)]
pub(crate) enum Number {
    Constant(f64),
    Variable(usize),
    Negate(Box<Number>),
    Arithmetic {
        op: ArithmeticOp,
        left: Box<Number>,
        right: Box<Number>,
    },
}

/// A node yielding text; `None` is missing.
#[derive(Clone, Debug)]
pub(crate) enum Text {
    Constant(Box<str>),
    Variable(usize),
}

impl Compiled {
    /// The variable indices the expression reads, sorted and distinct, for dependency and
    /// cycle analysis.
    pub fn variables(&self) -> &[usize] {
        &self.variables
    }

    /// True when the expression yields a truth value (a universe or check), false when it
    /// yields a number (a recode's `expr`).
    pub fn is_condition(&self) -> bool {
        matches!(self.program, Program::Condition(_))
    }

    /// Evaluate a condition. An arithmetic expression has no truth value and gives
    /// `Unknown`; check [`Compiled::is_condition`] at compile time.
    pub fn eval<R: Row + ?Sized>(&self, row: &R) -> Tri {
        match &self.program {
            Program::Condition(condition) => condition.eval(row),
            Program::Number(_) => Tri::Unknown,
        }
    }

    /// Evaluate an arithmetic expression. `None` means missing: a missing input, division
    /// by zero or a result that is not a finite number. A condition gives `None`.
    pub fn eval_number<R: Row + ?Sized>(&self, row: &R) -> Option<f64> {
        match &self.program {
            Program::Number(number) => number.eval(row),
            Program::Condition(_) => None,
        }
    }
}

/// Whether the row holds a value of the variable's kind; anything else reads as missing.
fn present<R: Row + ?Sized>(row: &R, var: usize, var_type: VarType) -> bool {
    matches!(
        (row.value(var), var_type),
        (Value::Number(_), VarType::Number | VarType::Date) | (Value::Text(_), VarType::Text)
    )
}

impl Condition {
    pub(crate) fn eval<R: Row + ?Sized>(&self, row: &R) -> Tri {
        match self {
            // Kleene's connectives; the right side is skipped when the left decides.
            Condition::And(left, right) => match left.eval(row) {
                Tri::False => Tri::False,
                decided => decided.and(right.eval(row)),
            },
            Condition::Or(left, right) => match left.eval(row) {
                Tri::True => Tri::True,
                decided => decided.or(right.eval(row)),
            },
            Condition::Not(operand) => !operand.eval(row),
            Condition::CompareNumber { op, left, right } => {
                match (left.eval_leaf(row), right.eval_leaf(row)) {
                    (Some(a), Some(b)) => Tri::from(compare(*op, a, b)),
                    _ => Tri::Unknown,
                }
            }
            Condition::CompareText { equal, left, right } => {
                match (left.eval(row), right.eval(row)) {
                    (Some(a), Some(b)) => Tri::from((a == b) == *equal),
                    _ => Tri::Unknown,
                }
            }
            Condition::InNumber { value, list } => match value.eval(row) {
                Some(v) => Tri::from(list.contains(&v)),
                None => Tri::Unknown,
            },
            Condition::InText { value, list } => match value.eval(row) {
                Some(v) => Tri::from(list.iter().any(|item| &**item == v)),
                None => Tri::Unknown,
            },
            Condition::Answered(var, var_type) => Tri::from(present(row, *var, *var_type)),
            Condition::Missing(var, var_type) => Tri::from(!present(row, *var, *var_type)),
        }
    }
}

fn compare(op: CompareOp, a: f64, b: f64) -> bool {
    match op {
        CompareOp::Equal => a == b,
        CompareOp::NotEqual => a != b,
        CompareOp::Less => a < b,
        CompareOp::LessOrEqual => a <= b,
        CompareOp::Greater => a > b,
        CompareOp::GreaterOrEqual => a >= b,
    }
}

impl Number {
    /// [`Number::eval`] with its two commonest cases (a variable, a constant: most
    /// conditions compare one with the other) inline, not behind a recursive call.
    #[inline(always)]
    fn eval_leaf<R: Row + ?Sized>(&self, row: &R) -> Option<f64> {
        match self {
            Number::Constant(value) => value.is_finite().then_some(*value),
            Number::Variable(var) => match row.value(*var) {
                Value::Number(value) => value.is_finite().then_some(value),
                Value::Missing | Value::Text(_) => None,
            },
            _ => self.eval(row),
        }
    }

    pub(crate) fn eval<R: Row + ?Sized>(&self, row: &R) -> Option<f64> {
        let result = match self {
            Number::Constant(value) => *value,
            Number::Variable(var) => match row.value(*var) {
                Value::Number(value) => value,
                Value::Missing | Value::Text(_) => return None,
            },
            Number::Negate(operand) => -operand.eval(row)?,
            Number::Arithmetic { op, left, right } => {
                let (a, b) = (left.eval(row)?, right.eval(row)?);
                match op {
                    ArithmeticOp::Add => a + b,
                    ArithmeticOp::Subtract => a - b,
                    ArithmeticOp::Multiply => a * b,
                    ArithmeticOp::Divide => a / b,
                }
            }
        };
        // Division by zero and overflow give infinities or NaN: no usable value.
        result.is_finite().then_some(result)
    }
}

impl Text {
    fn eval<'a, R: Row + ?Sized>(&'a self, row: &'a R) -> Option<&'a str> {
        match self {
            Text::Constant(text) => Some(text),
            Text::Variable(var) => match row.value(*var) {
                Value::Text(text) => Some(text),
                Value::Missing | Value::Number(_) => None,
            },
        }
    }
}
