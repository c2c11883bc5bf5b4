//! Builds the syntax tree from tokens by precedence climbing.
//!
//! One loop handles every binary operator; a table gives each its binding level (loosest
//! first: `or`, `and`, `not`, comparisons and `in`, `+ -`, `* /`, unary minus). Operators
//! of one level associate to the left, except comparisons, which do not chain: `a < b < c`
//! is an error rather than a silent `(a < b) < c`.
//!
//! The parser stops at the first error; a condition is a line of text, and its first
//! mistake is what the author needs to see.

use super::ast::{precedence, ArithmeticOp, CompareOp, Expr, ExprKind, Function, ListItem};
use super::ast::{Literal, LogicalOp, Name};
use super::lexer::{Lexer, Token, TokenKind};
use super::{ParseError, Span};

/// Operators and parentheses allowed in one condition. Codebook conditions are a line or
/// two; the bound keeps parsing, compiling and evaluating free of deep recursion on
/// hostile input.
const MAX_OPERATORS: usize = 256;

/// Nesting of parentheses and prefix operators, bounded for the same reason: each level is a
/// recursive call of the parser.
const MAX_NESTING: usize = 64;

/// Parse condition text (or an arithmetic expression) into a syntax tree.
pub fn parse(text: &str) -> Result<Expr, ParseError> {
    let mut lexer = Lexer::new(text);
    let current = lexer.next_token()?;
    if current.kind == TokenKind::End {
        return Err(ParseError {
            message: "the condition is empty".to_owned(),
            span: Span::new(0, text.len()),
            help: Some("write a condition such as `age >= 18`".to_owned()),
        });
    }
    let mut parser = Parser {
        lexer,
        current,
        budget: MAX_OPERATORS,
        nesting: 0,
    };
    let expr = parser.expression(precedence::OR)?;
    if parser.current.kind != TokenKind::End {
        let help = match &parser.current.kind {
            TokenKind::CloseParen => "this `)` has no matching `(`".to_owned(),
            TokenKind::Identifier(word)
                if ["and", "or", "not", "in"].contains(&word.to_lowercase().as_str()) =>
            {
                format!("keywords are lowercase: `{}`", word.to_lowercase())
            }
            _ => "join conditions with `and` or `or`".to_owned(),
        };
        return Err(parser.error_here(
            format!(
                "expected an operator or the end of the condition, found {}",
                parser.current.kind.describe()
            ),
            Some(&help),
        ));
    }
    Ok(expr)
}

enum Infix {
    Logical(LogicalOp),
    Arithmetic(ArithmeticOp),
    Compare(CompareOp),
    In,
    NotIn,
}

fn infix(kind: &TokenKind) -> Option<(u8, Infix)> {
    use precedence::*;
    Some(match kind {
        TokenKind::Or => (OR, Infix::Logical(LogicalOp::Or)),
        TokenKind::And => (AND, Infix::Logical(LogicalOp::And)),
        TokenKind::EqualEqual => (COMPARE, Infix::Compare(CompareOp::Equal)),
        TokenKind::NotEqual => (COMPARE, Infix::Compare(CompareOp::NotEqual)),
        TokenKind::Less => (COMPARE, Infix::Compare(CompareOp::Less)),
        TokenKind::LessOrEqual => (COMPARE, Infix::Compare(CompareOp::LessOrEqual)),
        TokenKind::Greater => (COMPARE, Infix::Compare(CompareOp::Greater)),
        TokenKind::GreaterOrEqual => (COMPARE, Infix::Compare(CompareOp::GreaterOrEqual)),
        TokenKind::In => (COMPARE, Infix::In),
        TokenKind::Not => (COMPARE, Infix::NotIn),
        TokenKind::Plus => (SUM, Infix::Arithmetic(ArithmeticOp::Add)),
        TokenKind::Minus => (SUM, Infix::Arithmetic(ArithmeticOp::Subtract)),
        TokenKind::Star => (PRODUCT, Infix::Arithmetic(ArithmeticOp::Multiply)),
        TokenKind::Slash => (PRODUCT, Infix::Arithmetic(ArithmeticOp::Divide)),
        _ => return None,
    })
}

struct Parser<'a> {
    lexer: Lexer<'a>,
    current: Token,
    budget: usize,
    nesting: usize,
}

fn node(kind: ExprKind, span: Span) -> Expr {
    Expr { kind, span }
}

impl Parser<'_> {
    fn advance(&mut self) -> Result<Token, ParseError> {
        let next = self.lexer.next_token()?;
        Ok(std::mem::replace(&mut self.current, next))
    }

    fn error_here(&self, message: String, help: Option<&str>) -> ParseError {
        ParseError {
            message,
            span: self.current.span,
            help: help.map(str::to_owned),
        }
    }

    fn spend(&mut self) -> Result<(), ParseError> {
        if self.budget == 0 {
            return Err(self.error_here(
                format!("the condition is too long (more than {MAX_OPERATORS} operators)"),
                Some("split it into several checks or derived variables"),
            ));
        }
        self.budget -= 1;
        Ok(())
    }

    /// Expect a closing `)` or `]` for the opener at `open`.
    fn close(&mut self, closer: TokenKind, open: Span, what: &str) -> Result<Span, ParseError> {
        if self.current.kind == closer {
            return Ok(self.advance()?.span);
        }
        let symbol = if closer == TokenKind::CloseParen {
            ")"
        } else {
            "]"
        };
        if self.current.kind == TokenKind::End {
            return Err(ParseError {
                message: format!(
                    "this `{}` is never closed",
                    if symbol == ")" { "(" } else { "[" }
                ),
                span: open,
                help: Some(format!("add `{symbol}` {what}")),
            });
        }
        Err(self.error_here(
            format!(
                "expected `{symbol}`, found {}",
                self.current.kind.describe()
            ),
            Some(&format!("add `{symbol}` {what}")),
        ))
    }

    /// Parse operators binding at least as tightly as `min`.
    fn expression(&mut self, min: u8) -> Result<Expr, ParseError> {
        if self.nesting == MAX_NESTING {
            return Err(self.error_here(
                format!("the condition is nested too deeply (more than {MAX_NESTING} levels)"),
                Some("remove redundant parentheses or split the condition"),
            ));
        }
        self.nesting += 1;
        let result = self.operators(min);
        self.nesting -= 1;
        result
    }

    fn operators(&mut self, min: u8) -> Result<Expr, ParseError> {
        let mut left = self.prefix(min)?;
        let mut compared = false;
        while let Some((level, op)) = infix(&self.current.kind) {
            if level < min {
                break;
            }
            if level == precedence::COMPARE && compared {
                return Err(self.error_here(
                    "comparisons cannot be chained".to_owned(),
                    Some("join them with `and`, e.g. `a < b and b < c`"),
                ));
            }
            self.spend()?;
            let op_token = self.advance()?;
            left = match op {
                Infix::Logical(op) => {
                    compared = false;
                    let right = self.expression(level + 1)?;
                    let span = left.span.to(right.span);
                    node(
                        ExprKind::Logical {
                            op,
                            left: Box::new(left),
                            right: Box::new(right),
                        },
                        span,
                    )
                }
                Infix::Arithmetic(op) => {
                    let right = self.expression(level + 1)?;
                    let span = left.span.to(right.span);
                    node(
                        ExprKind::Arithmetic {
                            op,
                            op_span: op_token.span,
                            left: Box::new(left),
                            right: Box::new(right),
                        },
                        span,
                    )
                }
                Infix::Compare(op) => {
                    compared = true;
                    let right = self.expression(precedence::SUM)?;
                    let span = left.span.to(right.span);
                    node(
                        ExprKind::Compare {
                            op,
                            op_span: op_token.span,
                            left: Box::new(left),
                            right: Box::new(right),
                        },
                        span,
                    )
                }
                Infix::In | Infix::NotIn => {
                    compared = true;
                    let negated = matches!(op, Infix::NotIn);
                    if negated {
                        if self.current.kind != TokenKind::In {
                            return Err(ParseError {
                                message: format!(
                                    "expected `in` after `not`, found {}",
                                    self.current.kind.describe()
                                ),
                                span: self.current.span,
                                help: Some(
                                    "`not` goes before a condition, e.g. `not (x == 1)`".to_owned(),
                                ),
                            });
                        }
                        self.advance()?;
                    }
                    let (list, close) = self.list()?;
                    let span = left.span.to(close);
                    node(
                        ExprKind::In {
                            value: Box::new(left),
                            list,
                            negated,
                        },
                        span,
                    )
                }
            };
        }
        Ok(left)
    }

    /// A value or a prefix operator applied to one.
    fn prefix(&mut self, min: u8) -> Result<Expr, ParseError> {
        match &self.current.kind {
            TokenKind::Minus => {
                self.spend()?;
                let minus = self.advance()?.span;
                let operand = self.expression(precedence::NEGATE)?;
                let span = minus.to(operand.span);
                Ok(node(ExprKind::Negate(Box::new(operand)), span))
            }
            TokenKind::Not if min <= precedence::NOT => {
                self.spend()?;
                let not = self.advance()?.span;
                let operand = self.expression(precedence::NOT)?;
                let span = not.to(operand.span);
                Ok(node(ExprKind::Not(Box::new(operand)), span))
            }
            TokenKind::Not => Err(self.error_here(
                "`not` cannot stand inside a comparison or arithmetic".to_owned(),
                Some("put the negated condition in parentheses: `(not ...)`"),
            )),
            TokenKind::Number(value) => {
                let value = *value;
                let span = self.advance()?.span;
                Ok(node(ExprKind::Literal(Literal::Number(value)), span))
            }
            TokenKind::Text(_) => {
                let token = self.advance()?;
                let TokenKind::Text(text) = token.kind else {
                    unreachable!("matched a text token")
                };
                Ok(node(ExprKind::Literal(Literal::Text(text)), token.span))
            }
            TokenKind::Identifier(_) => {
                let token = self.advance()?;
                let TokenKind::Identifier(name) = token.kind else {
                    unreachable!("matched an identifier token")
                };
                if self.current.kind == TokenKind::OpenParen {
                    return self.call(name, token.span);
                }
                Ok(node(ExprKind::Variable(name), token.span))
            }
            TokenKind::OpenParen => {
                self.spend()?;
                let open = self.advance()?.span;
                let mut inner = self.expression(precedence::OR)?;
                let close = self.close(TokenKind::CloseParen, open, "to close it")?;
                inner.span = open.to(close);
                Ok(inner)
            }
            other => {
                let help = match other {
                    TokenKind::And | TokenKind::Or | TokenKind::In => {
                        Some("`and`, `or`, `not` and `in` are keywords, not variable names")
                    }
                    _ => None,
                };
                Err(self.error_here(
                    format!("expected a value, found {}", other.describe()),
                    help,
                ))
            }
        }
    }

    /// `name(variable)`, with the current token at `(`.
    fn call(&mut self, name: String, name_span: Span) -> Result<Expr, ParseError> {
        let Some(function) = Function::from_name(&name) else {
            let close = ["answered", "missing"]
                .into_iter()
                .find(|known| strsim::damerau_levenshtein(&name, known) <= 2);
            let help = match close {
                Some(known) => format!("did you mean `{known}`?"),
                None => "the functions are `answered(x)` and `missing(x)`".to_owned(),
            };
            return Err(ParseError {
                message: format!("unknown function `{name}`"),
                span: name_span,
                help: Some(help),
            });
        };
        let open = self.advance()?.span;
        let TokenKind::Identifier(argument) = &self.current.kind else {
            return Err(self.error_here(
                format!(
                    "`{}` takes a variable name, found {}",
                    function.name(),
                    self.current.kind.describe()
                ),
                Some(&format!("write e.g. `{}(age)`", function.name())),
            ));
        };
        let argument = Name {
            text: argument.clone(),
            span: self.current.span,
        };
        self.advance()?;
        let what = format!("after the variable name: `{}` takes one", function.name());
        let close = self.close(TokenKind::CloseParen, open, &what)?;
        Ok(node(
            ExprKind::Call { function, argument },
            name_span.to(close),
        ))
    }

    /// `[literal, ...]`, with the current token at `[`; returns the items and the `]` span.
    fn list(&mut self) -> Result<(Vec<ListItem>, Span), ParseError> {
        if self.current.kind != TokenKind::OpenBracket {
            return Err(self.error_here(
                format!(
                    "expected `[` after `in`, found {}",
                    self.current.kind.describe()
                ),
                Some("write a list of values, e.g. `x in [1, 2, 5]`"),
            ));
        }
        let open = self.advance()?.span;
        let mut items = Vec::new();
        loop {
            if self.current.kind == TokenKind::CloseBracket {
                let close = self.advance()?.span;
                if items.is_empty() {
                    return Err(ParseError {
                        message: "the list is empty".to_owned(),
                        span: open.to(close),
                        help: Some("list at least one value, e.g. `x in [1, 2]`".to_owned()),
                    });
                }
                return Ok((items, close));
            }
            if self.current.kind == TokenKind::End {
                return Err(ParseError {
                    message: "this `[` is never closed".to_owned(),
                    span: open,
                    help: Some("add `]` after the last value".to_owned()),
                });
            }
            items.push(self.list_item()?);
            match self.current.kind {
                TokenKind::Comma => {
                    self.advance()?;
                }
                TokenKind::CloseBracket => {}
                _ => {
                    self.close(TokenKind::CloseBracket, open, "after the last value")?;
                }
            }
        }
    }

    fn list_item(&mut self) -> Result<ListItem, ParseError> {
        let start = self.current.span;
        let negative = self.current.kind == TokenKind::Minus;
        if negative {
            self.advance()?;
        }
        match &self.current.kind {
            TokenKind::Number(value) => {
                let value = if negative { -*value } else { *value };
                let span = start.to(self.advance()?.span);
                Ok(ListItem {
                    value: Literal::Number(value),
                    span,
                })
            }
            TokenKind::Text(text) if !negative => {
                let value = Literal::Text(text.clone());
                let span = self.advance()?.span;
                Ok(ListItem { value, span })
            }
            other => {
                let help = match other {
                    TokenKind::Identifier(_) => {
                        "a list holds literal values; compare with a variable using `==`"
                    }
                    _ => "a list holds numbers and quoted strings",
                };
                Err(self.error_here(
                    format!(
                        "expected a number or a quoted string, found {}",
                        other.describe()
                    ),
                    Some(help),
                ))
            }
        }
    }
}
