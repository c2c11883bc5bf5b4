//! Splits condition text into tokens with byte spans.
//!
//! The lexer is pulled one token at a time by the parser, so the first mistake in reading
//! order is the one reported. Mistakes typical of people who know another language (`=`,
//! `&&`, `!`, `.5`) get a specific message and a help line instead of "unexpected character".

use super::{ParseError, Span};

#[derive(Clone, PartialEq, Debug)]
pub(crate) enum TokenKind {
    Identifier(String),
    Number(f64),
    Text(String),
    And,
    Or,
    Not,
    In,
    EqualEqual,
    NotEqual,
    Less,
    LessOrEqual,
    Greater,
    GreaterOrEqual,
    Plus,
    Minus,
    Star,
    Slash,
    OpenParen,
    CloseParen,
    OpenBracket,
    CloseBracket,
    Comma,
    End,
}

#[derive(Clone, PartialEq, Debug)]
pub(crate) struct Token {
    pub kind: TokenKind,
    pub span: Span,
}

impl TokenKind {
    /// How the token reads in an error message.
    pub fn describe(&self) -> String {
        match self {
            TokenKind::Identifier(name) => format!("`{name}`"),
            TokenKind::Number(_) => "a number".to_owned(),
            TokenKind::Text(_) => "a quoted string".to_owned(),
            TokenKind::End => "the end of the condition".to_owned(),
            other => format!("`{}`", other.symbol()),
        }
    }

    fn symbol(&self) -> &'static str {
        match self {
            TokenKind::And => "and",
            TokenKind::Or => "or",
            TokenKind::Not => "not",
            TokenKind::In => "in",
            TokenKind::EqualEqual => "==",
            TokenKind::NotEqual => "!=",
            TokenKind::Less => "<",
            TokenKind::LessOrEqual => "<=",
            TokenKind::Greater => ">",
            TokenKind::GreaterOrEqual => ">=",
            TokenKind::Plus => "+",
            TokenKind::Minus => "-",
            TokenKind::Star => "*",
            TokenKind::Slash => "/",
            TokenKind::OpenParen => "(",
            TokenKind::CloseParen => ")",
            TokenKind::OpenBracket => "[",
            TokenKind::CloseBracket => "]",
            TokenKind::Comma => ",",
            TokenKind::Identifier(_) | TokenKind::Number(_) | TokenKind::Text(_) => "",
            TokenKind::End => "",
        }
    }
}

pub(crate) struct Lexer<'a> {
    text: &'a str,
    position: usize,
}

fn error(message: impl Into<String>, span: Span, help: Option<&str>) -> ParseError {
    ParseError {
        message: message.into(),
        span,
        help: help.map(str::to_owned),
    }
}

impl<'a> Lexer<'a> {
    pub fn new(text: &'a str) -> Lexer<'a> {
        Lexer { text, position: 0 }
    }

    fn peek_byte(&self, ahead: usize) -> Option<u8> {
        self.text.as_bytes().get(self.position + ahead).copied()
    }

    pub fn next_token(&mut self) -> Result<Token, ParseError> {
        while self.peek_byte(0).is_some_and(|b| b.is_ascii_whitespace()) {
            self.position += 1;
        }
        let start = self.position;
        let Some(first) = self.peek_byte(0) else {
            return Ok(Token {
                kind: TokenKind::End,
                span: Span::new(start, 0),
            });
        };
        let second = self.peek_byte(1);
        let (kind, len) = match (first, second) {
            (b'=', Some(b'=')) => (TokenKind::EqualEqual, 2),
            (b'!', Some(b'=')) => (TokenKind::NotEqual, 2),
            (b'<', Some(b'=')) => (TokenKind::LessOrEqual, 2),
            (b'>', Some(b'=')) => (TokenKind::GreaterOrEqual, 2),
            (b'<', Some(b'>')) => {
                return Err(error(
                    "`<>` is not an operator",
                    Span::new(start, 2),
                    Some("use `!=` for \"not equal\""),
                ))
            }
            (b'=', _) => {
                return Err(error(
                    "`=` is not an operator",
                    Span::new(start, 1),
                    Some("use `==` to compare"),
                ))
            }
            (b'!', _) => {
                return Err(error(
                    "`!` is not an operator",
                    Span::new(start, 1),
                    Some("use `not` to negate a condition, or `!=` for \"not equal\""),
                ))
            }
            (b'&', _) => {
                let len = if second == Some(b'&') { 2 } else { 1 };
                return Err(error(
                    format!("`{}` is not an operator", &self.text[start..start + len]),
                    Span::new(start, len),
                    Some("use `and` to join conditions"),
                ));
            }
            (b'|', _) => {
                let len = if second == Some(b'|') { 2 } else { 1 };
                return Err(error(
                    format!("`{}` is not an operator", &self.text[start..start + len]),
                    Span::new(start, len),
                    Some("use `or` to join conditions"),
                ));
            }
            (b'<', _) => (TokenKind::Less, 1),
            (b'>', _) => (TokenKind::Greater, 1),
            (b'+', _) => (TokenKind::Plus, 1),
            (b'-', _) => (TokenKind::Minus, 1),
            (b'*', _) => (TokenKind::Star, 1),
            (b'/', _) => (TokenKind::Slash, 1),
            (b'(', _) => (TokenKind::OpenParen, 1),
            (b')', _) => (TokenKind::CloseParen, 1),
            (b'[', _) => (TokenKind::OpenBracket, 1),
            (b']', _) => (TokenKind::CloseBracket, 1),
            (b',', _) => (TokenKind::Comma, 1),
            (b'"' | b'\'', _) => return self.string(first),
            (b'0'..=b'9', _) => return self.number(),
            (b'.', Some(b'0'..=b'9')) => {
                return Err(error(
                    "a number must start with a digit",
                    Span::new(start, 1),
                    Some("write a zero before the decimal point, e.g. `0.5`"),
                ))
            }
            (b'A'..=b'Z' | b'a'..=b'z' | b'_', _) => return Ok(self.word()),
            _ if self.text[start..]
                .chars()
                .next()
                .is_some_and(char::is_alphabetic) =>
            {
                return Ok(self.word())
            }
            _ => {
                let c = self.text[start..].chars().next().unwrap_or('\u{fffd}');
                return Err(error(
                    format!("unexpected character `{c}`"),
                    Span::new(start, c.len_utf8()),
                    None,
                ));
            }
        };
        self.position += len;
        Ok(Token {
            kind,
            span: Span::new(start, len),
        })
    }

    /// A name or keyword: letters (any script, since codebooks name variables in their
    /// own language), digits and underscores.
    fn word(&mut self) -> Token {
        let start = self.position;
        while let Some(c) = self.text[self.position..].chars().next() {
            if c.is_alphanumeric() || c == '_' {
                self.position += c.len_utf8();
            } else {
                break;
            }
        }
        let word = &self.text[start..self.position];
        let kind = match word {
            "and" => TokenKind::And,
            "or" => TokenKind::Or,
            "not" => TokenKind::Not,
            "in" => TokenKind::In,
            _ => TokenKind::Identifier(word.to_owned()),
        };
        Token {
            kind,
            span: Span::new(start, self.position - start),
        }
    }

    fn number(&mut self) -> Result<Token, ParseError> {
        let start = self.position;
        let skip_digits = |lexer: &mut Lexer<'_>| {
            while lexer.peek_byte(0).is_some_and(|b| b.is_ascii_digit()) {
                lexer.position += 1;
            }
        };
        skip_digits(self);
        if self.peek_byte(0) == Some(b'.') {
            if !self.peek_byte(1).is_some_and(|b| b.is_ascii_digit()) {
                return Err(error(
                    "a decimal point must be followed by a digit",
                    Span::new(start, self.position + 1 - start),
                    Some("write e.g. `1.0`, or leave the point out"),
                ));
            }
            self.position += 1;
            skip_digits(self);
        }
        // `12abc` is one malformed word, not a number followed by a name.
        if self
            .peek_byte(0)
            .is_some_and(|b| b.is_ascii_alphanumeric() || b == b'_' || b == b'.')
        {
            while self
                .peek_byte(0)
                .is_some_and(|b| b.is_ascii_alphanumeric() || b == b'_' || b == b'.')
            {
                self.position += 1;
            }
            return Err(error(
                format!("`{}` is not a number", &self.text[start..self.position]),
                Span::new(start, self.position - start),
                Some("variable names start with a letter or `_`; numbers are digits with an optional decimal point"),
            ));
        }
        let span = Span::new(start, self.position - start);
        // Digits with one optional point always parse; very long ones round to infinity.
        let value: f64 = self.text[start..self.position].parse().unwrap_or(f64::NAN);
        if !value.is_finite() {
            return Err(error("the number is too large", span, None));
        }
        Ok(Token {
            kind: TokenKind::Number(value),
            span,
        })
    }

    fn string(&mut self, quote: u8) -> Result<Token, ParseError> {
        let start = self.position;
        self.position += 1;
        let mut value = String::new();
        let mut chunk_start = self.position;
        loop {
            let Some(b) = self.peek_byte(0) else {
                return Err(error(
                    "unterminated string",
                    Span::new(start, self.position - start),
                    Some(if quote == b'"' {
                        "close the string with `\"`"
                    } else {
                        "close the string with `'`"
                    }),
                ));
            };
            if b == quote {
                value.push_str(&self.text[chunk_start..self.position]);
                self.position += 1;
                return Ok(Token {
                    kind: TokenKind::Text(value),
                    span: Span::new(start, self.position - start),
                });
            }
            if b == b'\\' {
                value.push_str(&self.text[chunk_start..self.position]);
                match self.peek_byte(1) {
                    Some(escaped @ (b'"' | b'\'' | b'\\')) => {
                        value.push(char::from(escaped));
                        self.position += 2;
                        chunk_start = self.position;
                        continue;
                    }
                    _ => {
                        let escaped_len = self.text[self.position + 1..]
                            .chars()
                            .next()
                            .map_or(0, char::len_utf8);
                        return Err(error(
                            "unknown escape in string",
                            Span::new(self.position, 1 + escaped_len),
                            Some("only `\\\"`, `\\'` and `\\\\` are escapes"),
                        ));
                    }
                }
            }
            // Multi-byte characters contain no ASCII bytes, so byte steps stay in step.
            self.position += 1;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn kinds(text: &str) -> Vec<TokenKind> {
        let mut lexer = Lexer::new(text);
        let mut out = Vec::new();
        loop {
            let token = lexer.next_token().unwrap();
            if token.kind == TokenKind::End {
                return out;
            }
            out.push(token.kind);
        }
    }

    fn first_error(text: &str) -> ParseError {
        let mut lexer = Lexer::new(text);
        loop {
            match lexer.next_token() {
                Ok(token) if token.kind == TokenKind::End => panic!("no error in {text:?}"),
                Ok(_) => {}
                Err(error) => return error,
            }
        }
    }

    #[test]
    fn operators_and_words() {
        use TokenKind::*;
        assert_eq!(
            kinds("a_1 <= 12.5 and not(b!=c)or x in [1,-2]"),
            vec![
                Identifier("a_1".into()),
                LessOrEqual,
                Number(12.5),
                And,
                Not,
                OpenParen,
                Identifier("b".into()),
                NotEqual,
                Identifier("c".into()),
                CloseParen,
                Or,
                Identifier("x".into()),
                In,
                OpenBracket,
                Number(1.0),
                Comma,
                Minus,
                Number(2.0),
                CloseBracket,
            ]
        );
    }

    #[test]
    fn keywords_are_case_sensitive() {
        assert_eq!(kinds("AND"), vec![TokenKind::Identifier("AND".into())]);
    }

    #[test]
    fn strings_and_escapes() {
        assert_eq!(
            kinds(r#""a\"b\\c" 'it\'s' "é""#),
            vec![
                TokenKind::Text("a\"b\\c".into()),
                TokenKind::Text("it's".into()),
                TokenKind::Text("é".into()),
            ]
        );
    }

    #[test]
    fn spans_are_byte_ranges() {
        let mut lexer = Lexer::new("  ab >= \"é\"");
        assert_eq!(lexer.next_token().unwrap().span, Span::new(2, 2));
        assert_eq!(lexer.next_token().unwrap().span, Span::new(5, 2));
        assert_eq!(lexer.next_token().unwrap().span, Span::new(8, 4));
        assert_eq!(lexer.next_token().unwrap().span, Span::new(12, 0));
    }

    #[test]
    fn mistakes_from_other_languages() {
        let e = first_error("a = 1");
        assert_eq!(
            (e.span, e.help.as_deref()),
            (Span::new(2, 1), Some("use `==` to compare"))
        );
        assert_eq!(first_error("a && b").span, Span::new(2, 2));
        assert_eq!(first_error("!a").span, Span::new(0, 1));
        assert_eq!(first_error("a <> 1").span, Span::new(2, 2));
        assert_eq!(first_error("x == .5").span, Span::new(5, 1));
    }

    #[test]
    fn malformed_literals() {
        assert_eq!(first_error("x == 'abc").span, Span::new(5, 4));
        assert_eq!(first_error(r#"x == "a\n""#).span, Span::new(7, 2));
        assert_eq!(first_error("x == 12ab").span, Span::new(5, 4));
        assert_eq!(first_error("x == 1.").span, Span::new(5, 2));
        // Letters of any script make names; other symbols are errors spanning the character.
        let e = first_error("x == €");
        assert_eq!(e.span, Span::new(5, 3));
    }
}
