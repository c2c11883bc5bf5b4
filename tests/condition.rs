//! The condition language end to end: parse, compile against a codebook's names, evaluate.

use concord::condition::{
    compile, compile_condition_str, compile_str, parse, CompileError, Expr, ExprKind, Span, Tri,
    Value, VarType,
};

const VARS: &[(&str, VarType)] = &[
    ("a", VarType::Number),
    ("b", VarType::Number),
    ("c", VarType::Number),
    ("age", VarType::Number),
    ("region", VarType::Text),
    ("start", VarType::Date),
    ("end", VarType::Date),
];

fn day(iso: &str) -> f64 {
    f64::from(concord::codebook::date::parse_iso_date(iso).unwrap())
}

fn eval(text: &str, row: &[Value<'_>]) -> Tri {
    let compiled = compile_condition_str(text, &VARS).unwrap_or_else(|e| panic!("{text}: {e:?}"));
    compiled.eval(&row)
}

fn number(text: &str, row: &[Value<'_>]) -> Option<f64> {
    let compiled = compile_str(text, &VARS).unwrap_or_else(|e| panic!("{text}: {e:?}"));
    assert!(!compiled.is_condition(), "{text}");
    compiled.eval_number(&row)
}

fn compile_errors(text: &str) -> Vec<CompileError> {
    match compile_condition_str(text, &VARS) {
        Ok(_) => panic!("{text:?} compiled"),
        Err(errors) => errors,
    }
}

/// The single error for `text`, as (message, span, help).
fn one_error(text: &str) -> (String, Span, Option<String>) {
    let mut errors = compile_errors(text);
    assert_eq!(errors.len(), 1, "{text:?}: {errors:?}");
    let e = errors.remove(0);
    (e.message, e.span, e.help)
}

/// The bytes an error points at.
fn pointed(text: &str, span: Span) -> &str {
    &text[span.offset..span.end()]
}

/// A fully bracketed prefix form, to see grouping regardless of how Display brackets.
fn grouping(expr: &Expr) -> String {
    match &expr.kind {
        ExprKind::Literal(literal) => literal.to_string(),
        ExprKind::Variable(name) => name.clone(),
        ExprKind::Negate(operand) => format!("(neg {})", grouping(operand)),
        ExprKind::Arithmetic {
            op, left, right, ..
        } => format!("({} {} {})", op.symbol(), grouping(left), grouping(right)),
        ExprKind::Compare {
            op, left, right, ..
        } => format!("({} {} {})", op.symbol(), grouping(left), grouping(right)),
        ExprKind::In {
            value,
            list,
            negated,
        } => format!(
            "({} {} [{}])",
            if *negated { "not-in" } else { "in" },
            grouping(value),
            list.iter()
                .map(|i| i.value.to_string())
                .collect::<Vec<_>>()
                .join(" ")
        ),
        ExprKind::Not(operand) => format!("(not {})", grouping(operand)),
        ExprKind::Logical { op, left, right } => {
            format!("({op:?} {} {})", grouping(left), grouping(right)).to_lowercase()
        }
        ExprKind::Call { function, argument } => format!("{}({})", function.name(), argument.text),
    }
}

fn grouped(text: &str) -> String {
    grouping(&parse(text).unwrap_or_else(|e| panic!("{text}: {e:?}")))
}

// ---------------------------------------------------------------------------------------
// Three-valued logic.
//
// Strong three-valued logic as defined by Kleene (1952), Introduction to Metamathematics,
// section 64: "unknown" stands for a value that is true or false but not known, so
// `F and U = F`, `T or U = T`, and `not U = U`. The tables below are Kleene's, written out
// for all nine pairs; each operand is made True, False or Unknown by the data row
// (`a == 1` with a = 1, a = 0, a missing).
// ---------------------------------------------------------------------------------------

use Tri::{False as F, True as T, Unknown as U};

/// A value of `a` (or `b`) that makes `a == 1` the given truth value.
fn making(truth: Tri) -> Value<'static> {
    match truth {
        T => Value::Number(1.0),
        F => Value::Number(0.0),
        U => Value::Missing,
    }
}

#[test]
fn kleene_and_table() {
    let table = [
        (T, T, T),
        (T, F, F),
        (T, U, U),
        (F, T, F),
        (F, F, F),
        (F, U, F),
        (U, T, U),
        (U, F, F),
        (U, U, U),
    ];
    for (left, right, expected) in table {
        let row = [making(left), making(right)];
        assert_eq!(
            eval("a == 1 and b == 1", &row),
            expected,
            "{left:?} and {right:?}"
        );
        assert_eq!(left.and(right), expected);
    }
}

#[test]
fn kleene_or_table() {
    let table = [
        (T, T, T),
        (T, F, T),
        (T, U, T),
        (F, T, T),
        (F, F, F),
        (F, U, U),
        (U, T, T),
        (U, F, U),
        (U, U, U),
    ];
    for (left, right, expected) in table {
        let row = [making(left), making(right)];
        assert_eq!(
            eval("a == 1 or b == 1", &row),
            expected,
            "{left:?} or {right:?}"
        );
        assert_eq!(left.or(right), expected);
    }
}

#[test]
fn kleene_not_table() {
    for (operand, expected) in [(T, F), (F, T), (U, U)] {
        assert_eq!(
            eval("not a == 1", &[making(operand)]),
            expected,
            "not {operand:?}"
        );
        assert_eq!(!operand, expected);
    }
}

#[test]
fn any_comparison_touching_missing_is_unknown() {
    let missing = [Value::Missing, Value::Number(3.0)];
    for text in [
        "a == 1",
        "a != 1",
        "a < b",
        "a <= 1",
        "a > 1",
        "a >= b",
        "a + 1 == b",
    ] {
        assert_eq!(eval(text, &missing), U, "{text}");
    }
    assert_eq!(eval("region == \"north\"", &[]), U);
    assert_eq!(eval("region != \"north\"", &[]), U);
}

// ---------------------------------------------------------------------------------------
// Precedence and grouping.
// ---------------------------------------------------------------------------------------

#[test]
fn and_binds_tighter_than_or() {
    assert_eq!(
        grouped("a == 1 or b == 1 and c == 1"),
        "(or (== a 1) (and (== b 1) (== c 1)))"
    );
    // With a true and b, c false, only the `a or (b and c)` reading is true.
    let row = [Value::Number(1.0), Value::Number(0.0), Value::Number(0.0)];
    assert_eq!(eval("a == 1 or b == 1 and c == 1", &row), T);
    assert_eq!(eval("(a == 1 or b == 1) and c == 1", &row), F);
}

#[test]
fn not_binds_looser_than_comparison_and_tighter_than_and() {
    assert_eq!(
        grouped("not a == 1 and b == 1"),
        "(and (not (== a 1)) (== b 1))"
    );
    assert_eq!(grouped("not not a == 1"), "(not (not (== a 1)))");
}

#[test]
fn arithmetic_precedence() {
    assert_eq!(grouped("1 + 2 * 3 == 7"), "(== (+ 1 (* 2 3)) 7)");
    assert_eq!(eval("1 + 2 * 3 == 7", &[]), T);
    assert_eq!(number("1 + 2 * 3", &[]), Some(7.0));
    assert_eq!(number("(1 + 2) * 3", &[]), Some(9.0));
    assert_eq!(number("2 - 3 - 4", &[]), Some(-5.0));
    assert_eq!(number("8 / 4 / 2", &[]), Some(1.0));
    assert_eq!(grouped("a - b - c"), "(- (- a b) c)");
}

#[test]
fn unary_minus() {
    assert_eq!(grouped("-a * 2"), "(* (neg a) 2)");
    assert_eq!(grouped("- -3"), "(neg (neg 3))");
    assert_eq!(number("-(1 + 2) * 3", &[]), Some(-9.0));
    assert_eq!(number("2 * -a", &[Value::Number(4.0)]), Some(-8.0));
    assert_eq!(eval("a > -3", &[Value::Number(-2.5)]), T);
}

#[test]
fn parentheses_widen_spans() {
    let expr = parse(" (a == 1) ").unwrap();
    assert_eq!(expr.span, Span::new(1, 8));
}

#[test]
fn keywords_are_case_sensitive() {
    let (_, span, help) = one_error("a == 1 AND b == 1");
    assert_eq!(span, Span::new(7, 3));
    assert_eq!(help.as_deref(), Some("keywords are lowercase: `and`"));
    let (message, _, help) = one_error("a == 1 and OR == 1");
    assert_eq!(message, "unknown variable `OR`");
    assert_eq!(help.as_deref(), Some("keywords are lowercase: `or`"));
}

// ---------------------------------------------------------------------------------------
// Parse errors, with the exact bytes they point at.
// ---------------------------------------------------------------------------------------

fn parse_error(text: &str) -> (String, String, Option<String>) {
    let e = parse(text).expect_err(text);
    assert!(e.span.end() <= text.len(), "{text:?}: {e:?}");
    (e.message.clone(), pointed(text, e.span).to_owned(), e.help)
}

#[test]
fn unterminated_string() {
    let text = "region == \"nor and a == 1";
    let e = parse(text).unwrap_err();
    assert_eq!(e.message, "unterminated string");
    assert_eq!(e.span, Span::new(10, 15));
    assert_eq!(parse_error("region == 'x").1, "'x");
}

#[test]
fn single_equals_sign() {
    let e = parse("age = 18").unwrap_err();
    assert_eq!(e.span, Span::new(4, 1));
    assert_eq!(e.help.as_deref(), Some("use `==` to compare"));
}

#[test]
fn unexpected_token() {
    let (message, at, _) = parse_error("a == )");
    assert_eq!(
        (message.as_str(), at.as_str()),
        ("expected a value, found `)`", ")")
    );
    let (message, at, _) = parse_error("a == 1 and or b == 1");
    assert_eq!(
        (message.as_str(), at.as_str()),
        ("expected a value, found `or`", "or")
    );
    let e = parse("a ==").unwrap_err();
    assert_eq!(e.span, Span::new(4, 0));
    assert_eq!(
        e.message,
        "expected a value, found the end of the condition"
    );
}

#[test]
fn trailing_input() {
    let e = parse("a == 1 b == 2").unwrap_err();
    assert_eq!(e.span, Span::new(7, 1));
    assert_eq!(
        e.help.as_deref(),
        Some("join conditions with `and` or `or`")
    );
    let (_, at, help) = parse_error("a == 1)");
    assert_eq!(at, ")");
    assert_eq!(help.as_deref(), Some("this `)` has no matching `(`"));
}

#[test]
fn empty_condition() {
    assert_eq!(parse("").unwrap_err().span, Span::new(0, 0));
    let e = parse("   ").unwrap_err();
    assert_eq!(
        (e.message.as_str(), e.span),
        ("the condition is empty", Span::new(0, 3))
    );
}

#[test]
fn comparisons_do_not_chain() {
    let e = parse("a < b < c").unwrap_err();
    assert_eq!(e.message, "comparisons cannot be chained");
    assert_eq!(e.span, Span::new(6, 1));
    assert_eq!(parse_error("a == 1 in [1]").1, "in");
    assert_eq!(parse_error("not a == b != c").1, "!=");
    // Brackets make it a type question instead, answered by the compiler.
    assert!(parse("(a < b) < c").is_ok());
}

#[test]
fn unknown_function() {
    let (message, at, help) = parse_error("answerd(a) and a == 1");
    assert_eq!(message, "unknown function `answerd`");
    assert_eq!(at, "answerd");
    assert_eq!(help.as_deref(), Some("did you mean `answered`?"));
    let (_, at, help) = parse_error("  len(region) > 2");
    assert_eq!(at, "len");
    assert_eq!(
        help.as_deref(),
        Some("the functions are `answered(x)` and `missing(x)`")
    );
    assert_eq!(parse_error("answered(1)").1, "1");
}

#[test]
fn missing_closing_parenthesis() {
    let e = parse("x == 1 and (a == 1 or b == 2").unwrap_err();
    assert_eq!(e.message, "this `(` is never closed");
    assert_eq!(e.span, Span::new(11, 1));
    let (message, at, _) = parse_error("(a == 1 b");
    assert_eq!(
        (message.as_str(), at.as_str()),
        ("expected `)`, found `b`", "b")
    );
    assert_eq!(parse_error("missing(a").1, "(");
    assert_eq!(parse_error("a in [1, 2").1, "[");
}

#[test]
fn malformed_lists() {
    assert_eq!(parse_error("a in [1 2]").1, "2");
    assert_eq!(parse_error("a in [b]").1, "b");
    assert_eq!(parse_error("a in []").1, "[]");
    assert_eq!(parse_error("a in 1").1, "1");
    assert_eq!(parse_error("a not 1").1, "1");
    assert_eq!(parse_error("a == not b").1, "not");
}

// ---------------------------------------------------------------------------------------
// Compile errors.
// ---------------------------------------------------------------------------------------

#[test]
fn unknown_variable_with_suggestion() {
    let (message, span, help) = one_error("agee >= 18");
    assert_eq!(message, "unknown variable `agee`");
    assert_eq!(span, Span::new(0, 4));
    assert_eq!(help.as_deref(), Some("did you mean `age`?"));
    let (_, _, help) = one_error("Region == \"north\"");
    assert_eq!(
        help.as_deref(),
        Some("did you mean `region`? Names are case-sensitive")
    );
    let (_, span, help) = one_error("answered(zzzzzz)");
    assert_eq!((span, help), (Span::new(9, 6), None));
}

#[test]
fn all_errors_are_reported() {
    let text = "agee > 1 and regoin == \"x\" or start > 5";
    let errors = compile_errors(text);
    let at: Vec<&str> = errors.iter().map(|e| pointed(text, e.span)).collect();
    assert_eq!(at, ["agee", "regoin", "5"]);
}

#[test]
fn text_type_errors() {
    let (message, span, _) = one_error("region < \"n\"");
    assert_eq!(message, "text cannot be ordered with `<`");
    assert_eq!(span, Span::new(7, 1));
    let (message, span, help) = one_error("region == 1");
    assert_eq!(message, "text cannot be compared with a number");
    assert_eq!(span, Span::new(10, 1));
    assert!(help.unwrap().contains("quotes"));
    let (message, span, _) = one_error("age == \"18\"");
    assert_eq!(message, "a number cannot be compared with text");
    assert_eq!(span, Span::new(7, 4));
    let (message, span, _) = one_error("age + region > 1");
    assert_eq!(message, "arithmetic needs numbers, found text");
    assert_eq!(span, Span::new(6, 6));
    assert_eq!(one_error("region in [1, \"x\"]").1, Span::new(11, 1));
    assert_eq!(one_error("age in [1, \"x\"]").1, Span::new(11, 3));
}

#[test]
fn values_and_conditions_do_not_mix() {
    let (message, span, help) = one_error("age");
    assert_eq!(message, "expected a condition, found a number");
    assert_eq!(span, Span::new(0, 3));
    assert_eq!(
        help.as_deref(),
        Some("compare it, e.g. `age == 1`, or test `answered(age)`")
    );
    // `universe = "\"age\""` in TOML: the quotes made a string of the name.
    let (_, _, help) = one_error("\"age\"");
    assert_eq!(
        help.as_deref(),
        Some("remove the quotes to refer to the variable `age`")
    );
    let (message, span, _) = one_error("a == 1 and b");
    assert_eq!(
        (message.as_str(), span),
        ("expected a condition, found a number", Span::new(11, 1))
    );
    let (message, span, _) = one_error("(a == 1) + 1 > 2");
    assert_eq!(message, "arithmetic needs numbers, found a condition");
    assert_eq!(span, Span::new(0, 8));
    let errors = compile_errors("(a == 1) == (b < 2)");
    assert_eq!(errors.len(), 2);
    assert!(errors
        .iter()
        .all(|e| e.message == "a condition cannot be compared"));
    let errors = compile_str("region", &VARS).unwrap_err();
    assert_eq!(
        errors[0].message,
        "expected a condition or a number, found text"
    );
}

#[test]
fn date_literals() {
    let row = [
        Value::Missing,
        Value::Missing,
        Value::Missing,
        Value::Missing,
        Value::Missing,
        Value::Number(day("2024-03-01")),
        Value::Number(day("2024-03-05")),
    ];
    assert_eq!(eval("start >= \"2024-01-01\"", &row), T);
    assert_eq!(eval("\"2024-03-01\" == start", &row), T);
    assert_eq!(eval("start > '2024-03-01'", &row), F);
    assert_eq!(eval("start <= end", &row), T);
    assert_eq!(eval("start in [\"2024-02-29\", \"2024-03-01\"]", &row), T);
    assert_eq!(eval("start > \"2024-01-01\"", &[]), U);

    let (message, span, _) = one_error("start >= \"2024-02-30\"");
    assert_eq!(message, "`2024-02-30` is not a valid date");
    assert_eq!(span, Span::new(9, 12));
    let (message, span, help) = one_error("start > 5");
    assert_eq!(message, "a date cannot be compared with a number");
    assert_eq!(span, Span::new(8, 1));
    assert!(help.unwrap().contains("2024-01-31"));
    assert_eq!(
        one_error("start in ['2024-01-01', '01/02/2024']").1,
        Span::new(24, 12)
    );
    assert_eq!(one_error("start in [20240101]").1, Span::new(10, 8));
    assert_eq!(
        one_error("start + 1 > 3").0,
        "arithmetic on dates is not supported"
    );
    assert_eq!(compile_errors("start - end > 3").len(), 2);
    assert_eq!(one_error("start == region").1, Span::new(0, 15));
}

// ---------------------------------------------------------------------------------------
// Evaluation.
// ---------------------------------------------------------------------------------------

#[test]
fn in_lists() {
    for (a, expected) in [
        (Value::Number(2.0), T),
        (Value::Number(3.0), F),
        (Value::Missing, U),
    ] {
        assert_eq!(eval("a in [1, 2, 5]", &[a]), expected);
        assert_eq!(eval("a not in [1, 2, 5]", &[a]), !expected);
    }
    assert_eq!(eval("a in [-1, 0.5,]", &[Value::Number(-1.0)]), T);
    assert_eq!(eval("a + 1 in [1.5]", &[Value::Number(0.5)]), T);
    let row = [
        Value::Missing,
        Value::Missing,
        Value::Missing,
        Value::Missing,
        Value::Text("south"),
    ];
    assert_eq!(eval("region in [\"north\", 'south']", &row), T);
    assert_eq!(eval("region not in [\"north\"]", &row), T);
}

#[test]
fn answered_and_missing_are_never_unknown() {
    assert_eq!(eval("answered(a)", &[Value::Number(0.0)]), T);
    assert_eq!(eval("answered(a)", &[Value::Missing]), F);
    assert_eq!(eval("missing(a)", &[Value::Missing]), T);
    assert_eq!(eval("missing(a)", &[Value::Number(7.0)]), F);
    assert_eq!(eval("not answered(a) or a > 3", &[Value::Missing]), T);
    // A value of the wrong kind reads as missing, consistently.
    let wrong = [Value::Text("7")];
    assert_eq!(eval("missing(a)", &wrong), T);
    assert_eq!(eval("a == 7", &wrong), U);
}

#[test]
fn division_by_zero_is_missing() {
    let row = [Value::Number(4.0), Value::Number(0.0)];
    assert_eq!(number("a / b", &row), None);
    assert_eq!(number("b / b", &row), None);
    assert_eq!(eval("a / b > 1", &row), U);
    assert_eq!(number("a / 2", &row), Some(2.0));
    assert_eq!(number("a * 1", &[Value::Missing]), None);
    assert_eq!(number("a * a", &[Value::Number(1e200)]), None);
}

#[test]
fn text_equality_is_exact() {
    let row = |text| {
        [
            Value::Missing,
            Value::Missing,
            Value::Missing,
            Value::Missing,
            Value::Text(text),
        ]
    };
    assert_eq!(eval("region == \"north\"", &row("north")), T);
    assert_eq!(eval("region == \"north\"", &row("North")), F);
    assert_eq!(eval("region == \"north\"", &row("north ")), F);
    assert_eq!(eval("region != 'north'", &row("south")), T);
    assert_eq!(eval(r#"region == "say \"hi\"""#, &row("say \"hi\"")), T);
}

#[test]
fn variables_are_sorted_and_distinct() {
    let compiled =
        compile_condition_str("start > end or c == 1 and a == c and answered(b)", &VARS).unwrap();
    assert_eq!(compiled.variables(), &[0, 1, 2, 5, 6]);
    assert!(compiled.is_condition());
    let arithmetic = compile(&parse("age / a").unwrap(), &VARS).unwrap();
    assert_eq!(arithmetic.variables(), &[0, 3]);
    assert!(!arithmetic.is_condition());
    assert_eq!(arithmetic.eval(&[]), U);
}

#[test]
fn number_comparisons_use_parsed_values() {
    assert_eq!(eval("a == 1", &[Value::Number(1.0)]), T);
    assert_eq!(eval("a == 1.0", &[Value::Number(1.0)]), T);
    assert_eq!(eval("a == 0.3", &[Value::Number(0.1 + 0.2)]), F);
}

// ---------------------------------------------------------------------------------------
// Robustness.
// ---------------------------------------------------------------------------------------

/// xorshift64 (Marsaglia 2003): enough randomness to vary inputs, and reproducible.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }

    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }

    fn pick<'a>(&mut self, items: &[&'a str]) -> &'a str {
        items[self.below(items.len())]
    }
}

fn random_row(rng: &mut Rng) -> Vec<Value<'static>> {
    (0..VARS.len())
        .map(|i| match (rng.below(4), VARS[i].1) {
            (0, _) => Value::Missing,
            (_, VarType::Text) => Value::Text(["north", "south", ""][rng.below(3)]),
            (_, _) => Value::Number([0.0, 1.0, 2.0, -3.5, 19_800.0][rng.below(5)]),
        })
        .collect()
}

fn check_spans(text: &str, spans: impl IntoIterator<Item = Span>) {
    for span in spans {
        assert!(
            text.get(span.offset..span.end()).is_some(),
            "{text:?}: {span:?}"
        );
    }
}

/// Parse, display, parse again: the text is stable and the meaning the same.
fn check_text(text: &str, rng: &mut Rng) {
    let expr = match parse(text) {
        Ok(expr) => expr,
        Err(e) => return check_spans(text, [e.span]),
    };
    let shown = expr.to_string();
    let again = parse(&shown).unwrap_or_else(|e| panic!("{text:?} -> {shown:?}: {e:?}"));
    assert_eq!(again.to_string(), shown, "{text:?}");
    assert_eq!(grouping(&again), grouping(&expr), "{text:?}");
    match (compile(&expr, &VARS), compile(&again, &VARS)) {
        (Ok(first), Ok(second)) => {
            for _ in 0..4 {
                let row = random_row(rng);
                assert_eq!(first.eval(&row), second.eval(&row), "{text:?}");
                assert_eq!(
                    first.eval_number(&row),
                    second.eval_number(&row),
                    "{text:?}"
                );
            }
        }
        (Err(errors), Err(_)) => check_spans(text, errors.iter().map(|e| e.span)),
        _ => panic!("{text:?} and {shown:?} compile differently"),
    }
}

#[test]
fn random_token_soup_never_panics() {
    let pieces = [
        "a",
        "b",
        "age",
        "region",
        "start",
        "zz",
        "1",
        "2.5",
        "0",
        "-",
        "+",
        "*",
        "/",
        "==",
        "!=",
        "<",
        "<=",
        ">",
        ">=",
        "=",
        "and",
        "or",
        "not",
        "in",
        "[",
        "]",
        "(",
        ")",
        ",",
        "\"north\"",
        "'2024-01-01'",
        "\"",
        "'",
        "answered(",
        "missing(",
        "foo(",
        "é",
        "!",
        "&&",
        "\\",
        ".5",
        "12ab",
        "\t",
    ];
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    for _ in 0..20_000 {
        let len = 1 + rng.below(12);
        let mut text = String::new();
        for _ in 0..len {
            text.push_str(rng.pick(&pieces));
            if rng.below(3) > 0 {
                text.push(' ');
            }
        }
        check_text(&text, &mut rng);
    }
}

/// A random expression that parses, of a random shape.
fn random_expr(rng: &mut Rng, depth: u32) -> String {
    let leaf = |rng: &mut Rng| {
        rng.pick(&[
            "a", "b", "c", "age", "1", "2.5", "0", "region", "'north'", "start",
        ])
        .to_owned()
    };
    if depth == 0 {
        return leaf(rng);
    }
    let sub = |rng: &mut Rng| random_expr(rng, depth - 1);
    match rng.below(10) {
        0 => leaf(rng),
        1 => format!("-{}", sub(rng)),
        2 => format!("not {}", sub(rng)),
        3 => format!("({})", sub(rng)),
        4 => format!("{} in [1, -2, 'x']", sub(rng)),
        5 => format!("answered({})", rng.pick(&["a", "region", "start"])),
        6 => format!(
            "{} {} {}",
            sub(rng),
            rng.pick(&["+", "-", "*", "/"]),
            sub(rng)
        ),
        7 => format!(
            "({} {} {})",
            sub(rng),
            rng.pick(&["==", "<", ">=", "!="]),
            sub(rng)
        ),
        _ => format!("({} {} {})", sub(rng), rng.pick(&["and", "or"]), sub(rng)),
    }
}

#[test]
fn random_expressions_round_trip() {
    let mut rng = Rng(42);
    let mut parsed = 0;
    for _ in 0..5_000 {
        let text = random_expr(&mut rng, 4);
        parsed += usize::from(parse(&text).is_ok());
        check_text(&text, &mut rng);
    }
    // `not` inside arithmetic is rejected by the parser; most shapes must still parse.
    assert!(parsed > 2_500, "only {parsed} parsed");
}

#[test]
fn hostile_nesting_is_an_error_not_a_crash() {
    let too_deep = [
        "(".repeat(100_000),
        format!("{}a == 1{}", "(".repeat(900), ")".repeat(900)),
        format!("{}1", "-".repeat(100_000)),
        format!("{}a == 1", "not ".repeat(50_000)),
    ];
    for text in too_deep {
        let e = parse(&text).unwrap_err();
        assert!(e.message.contains("nested too deeply"), "{}", e.message);
    }
    let e = parse(&"a == 1 or ".repeat(5_000)).unwrap_err();
    assert!(e.message.contains("too long"), "{}", e.message);

    // The deepest trees the limits allow still compile and evaluate on a test thread's
    // small stack.
    let deepest = [
        format!(
            "{}a{} == 1{}",
            "(".repeat(60),
            " + a".repeat(190),
            ")".repeat(60)
        ),
        format!("a{} == 1", " * a".repeat(254)),
        format!("{}a == 1", "not ".repeat(62)),
        "a == 1 or ".repeat(127) + "a == 1",
    ];
    for text in deepest {
        let compiled = compile_str(&text, &VARS).expect("compiles");
        let _ = compiled.eval(&[Value::Number(1.0)]);
    }
}

#[test]
fn names_may_use_letters_of_any_script() {
    // Codebooks name variables in their own language; the condition language reads them.
    let names: &[(&str, VarType)] = &[("année", VarType::Number), ("région", VarType::Text)];
    let compiled =
        concord::condition::compile_condition_str("année >= 2 and région == \"Nord\"", &names)
            .expect("non-ASCII names compile");
    let row: &[Value<'_>] = &[Value::Number(3.0), Value::Text("Nord")];
    assert_eq!(compiled.eval(&row), Tri::True);
    // Other symbols are still not part of a name.
    assert!(concord::condition::parse("année € 2").is_err());
}
