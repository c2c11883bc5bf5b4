//! The syntax tree of a condition, as written.
//!
//! The tree keeps names as text and every node's byte span, so the compiler can point its
//! errors at the exact characters. Parentheses leave no node of their own; they only widen
//! the span of the expression they enclose. `Display` writes the tree back as condition text
//! with the fewest parentheses that keep its meaning, so parse and display round-trip.

use std::fmt;

use super::Span;

/// One node of the syntax tree.
#[derive(Clone, PartialEq, Debug)]
pub struct Expr {
    pub kind: ExprKind,
    /// The node's text, including any parentheses around it.
    pub span: Span,
}

#[derive(Clone, PartialEq, Debug)]
pub enum ExprKind {
    Literal(Literal),
    Variable(String),
    /// Unary minus.
    Negate(Box<Expr>),
    Arithmetic {
        op: ArithmeticOp,
        op_span: Span,
        left: Box<Expr>,
        right: Box<Expr>,
    },
    Compare {
        op: CompareOp,
        op_span: Span,
        left: Box<Expr>,
        right: Box<Expr>,
    },
    /// `value in [..]`, or `value not in [..]` when `negated`.
    In {
        value: Box<Expr>,
        list: Vec<ListItem>,
        negated: bool,
    },
    Not(Box<Expr>),
    Logical {
        op: LogicalOp,
        left: Box<Expr>,
        right: Box<Expr>,
    },
    /// `answered(x)` or `missing(x)`.
    Call {
        function: Function,
        argument: Name,
    },
}

#[derive(Clone, PartialEq, Debug)]
pub enum Literal {
    Number(f64),
    Text(String),
}

/// A literal in an `in` list; a leading minus is folded into the number.
#[derive(Clone, PartialEq, Debug)]
pub struct ListItem {
    pub value: Literal,
    pub span: Span,
}

/// A variable name where only a name may stand (a function argument).
#[derive(Clone, PartialEq, Eq, Debug)]
pub struct Name {
    pub text: String,
    pub span: Span,
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub enum ArithmeticOp {
    Add,
    Subtract,
    Multiply,
    Divide,
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub enum CompareOp {
    Equal,
    NotEqual,
    Less,
    LessOrEqual,
    Greater,
    GreaterOrEqual,
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub enum LogicalOp {
    And,
    Or,
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub enum Function {
    Answered,
    Missing,
}

impl ArithmeticOp {
    pub fn symbol(self) -> &'static str {
        match self {
            ArithmeticOp::Add => "+",
            ArithmeticOp::Subtract => "-",
            ArithmeticOp::Multiply => "*",
            ArithmeticOp::Divide => "/",
        }
    }
}

impl CompareOp {
    pub fn symbol(self) -> &'static str {
        match self {
            CompareOp::Equal => "==",
            CompareOp::NotEqual => "!=",
            CompareOp::Less => "<",
            CompareOp::LessOrEqual => "<=",
            CompareOp::Greater => ">",
            CompareOp::GreaterOrEqual => ">=",
        }
    }

    /// `==` and `!=`, the only comparisons that make sense for text.
    pub fn is_equality(self) -> bool {
        matches!(self, CompareOp::Equal | CompareOp::NotEqual)
    }
}

impl Function {
    /// The function called `name`, if any.
    pub fn from_name(name: &str) -> Option<Function> {
        match name {
            "answered" => Some(Function::Answered),
            "missing" => Some(Function::Missing),
            _ => None,
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Function::Answered => "answered",
            Function::Missing => "missing",
        }
    }
}

// Binding strength, loosest first; the parser uses the same ladder.
pub(crate) mod precedence {
    pub const OR: u8 = 1;
    pub const AND: u8 = 2;
    pub const NOT: u8 = 3;
    pub const COMPARE: u8 = 4;
    pub const SUM: u8 = 5;
    pub const PRODUCT: u8 = 6;
    pub const NEGATE: u8 = 7;
    pub const ATOM: u8 = 8;
}

impl Expr {
    fn precedence(&self) -> u8 {
        use precedence::*;
        match &self.kind {
            ExprKind::Literal(_) | ExprKind::Variable(_) | ExprKind::Call { .. } => ATOM,
            ExprKind::Negate(_) => NEGATE,
            ExprKind::Arithmetic { op, .. } => match op {
                ArithmeticOp::Add | ArithmeticOp::Subtract => SUM,
                ArithmeticOp::Multiply | ArithmeticOp::Divide => PRODUCT,
            },
            ExprKind::Compare { .. } | ExprKind::In { .. } => COMPARE,
            ExprKind::Not(_) => NOT,
            ExprKind::Logical { op, .. } => match op {
                LogicalOp::And => AND,
                LogicalOp::Or => OR,
            },
        }
    }

    /// Write the expression, in parentheses when it binds looser than `at_least`.
    fn write(&self, f: &mut fmt::Formatter<'_>, at_least: u8) -> fmt::Result {
        use precedence::*;
        let own = self.precedence();
        if own < at_least {
            f.write_str("(")?;
        }
        match &self.kind {
            ExprKind::Literal(literal) => write!(f, "{literal}")?,
            ExprKind::Variable(name) => f.write_str(name)?,
            ExprKind::Negate(operand) => {
                f.write_str("-")?;
                operand.write(f, NEGATE)?;
            }
            // Operators of one level associate to the left, so a right operand of the same
            // level needs parentheses.
            ExprKind::Arithmetic {
                op, left, right, ..
            } => {
                left.write(f, own)?;
                write!(f, " {} ", op.symbol())?;
                right.write(f, own + 1)?;
            }
            // Comparisons do not chain: an operand that is itself a comparison is bracketed.
            ExprKind::Compare {
                op, left, right, ..
            } => {
                left.write(f, SUM)?;
                write!(f, " {} ", op.symbol())?;
                right.write(f, SUM)?;
            }
            ExprKind::In {
                value,
                list,
                negated,
            } => {
                value.write(f, SUM)?;
                f.write_str(if *negated { " not in [" } else { " in [" })?;
                for (i, item) in list.iter().enumerate() {
                    if i > 0 {
                        f.write_str(", ")?;
                    }
                    write!(f, "{}", item.value)?;
                }
                f.write_str("]")?;
            }
            ExprKind::Not(operand) => {
                f.write_str("not ")?;
                operand.write(f, NOT)?;
            }
            ExprKind::Logical { op, left, right } => {
                left.write(f, own)?;
                f.write_str(match op {
                    LogicalOp::And => " and ",
                    LogicalOp::Or => " or ",
                })?;
                right.write(f, own + 1)?;
            }
            ExprKind::Call { function, argument } => {
                write!(f, "{}({})", function.name(), argument.text)?;
            }
        }
        if own < at_least {
            f.write_str(")")?;
        }
        Ok(())
    }
}

impl fmt::Display for Expr {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        self.write(f, precedence::OR)
    }
}

impl fmt::Display for Literal {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Literal::Number(number) => write!(f, "{number}"),
            Literal::Text(text) => {
                f.write_str("\"")?;
                for c in text.chars() {
                    if c == '"' || c == '\\' {
                        f.write_str("\\")?;
                    }
                    write!(f, "{c}")?;
                }
                f.write_str("\"")
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use crate::condition::parse;

    fn shown(text: &str) -> String {
        parse(text).unwrap().to_string()
    }

    #[test]
    fn display_keeps_only_needed_parentheses() {
        assert_eq!(
            shown("((a == 1)) or (b == 1 and c == 1)"),
            "a == 1 or b == 1 and c == 1"
        );
        assert_eq!(
            shown("(a == 1 or b == 1) and c == 1"),
            "(a == 1 or b == 1) and c == 1"
        );
        assert_eq!(shown("a - (b - c)"), "a - (b - c)");
        assert_eq!(shown("(a - b) - c"), "a - b - c");
        assert_eq!(shown("-(a + 1) * 2"), "-(a + 1) * 2");
        assert_eq!(shown("not (a == 1 and b)"), "not (a == 1 and b)");
        assert_eq!(shown("(a < b) < c"), "(a < b) < c");
    }

    #[test]
    fn display_writes_literals_back_as_parsed() {
        assert_eq!(
            shown(r#"x in [1, -2.5, 'it\'s', "a\"b\\"]"#),
            r#"x in [1, -2.5, "it's", "a\"b\\"]"#
        );
        assert_eq!(shown("x not in [0.1]"), "x not in [0.1]");
        assert_eq!(shown("answered( x )"), "answered(x)");
    }
}
