//! Tests of the whole module: snapshots of every construct of the fit
//! language, precedence, the Display round trip, error positions and
//! messages, limits, spans and a no-panic sweep over random text.
//!
//! The numbers asserted here are literals of request text and positions in
//! it, not computed results. The sheet limits (1 to 3 column letters up to
//! XFD = column 16,384, rows up to 1,048,576) are from memory of the open
//! workbook formats (ECMA-376); A1 column lettering (Z, AA, ZZ, AAA) is
//! common practice.

use super::parser::parse_unlimited;
use super::*;

/// Request text and its exact snapshot form. The first ten are the examples
/// of fit-language.md, in its order.
const SNAPSHOTS: &[(&str, &str)] = &[
    ("#linear(Yield, Light)", "(linear (name Yield) (name Light))"),
    (
        "#linear(Yield, Light + CO2 + House, name=main)",
        "(linear (name Yield) (+ (+ (name Light) (name CO2)) (name House)) (opt name (name main)))",
    ),
    (
        "#linear(log(Yield), Light + Light^2, weights=Beds, confidence=0.99)",
        "(linear (call log (name Yield)) (+ (name Light) (^ (name Light) 2)) (opt weights (name Beds)) (opt confidence 0.99))",
    ),
    (
        "#polynomial(Yield, Light, degree=3)",
        "(polynomial (name Yield) (name Light) (opt degree 3))",
    ),
    (
        "#nonlinear(Moisture, a*exp(-k*Hours) + c, start(a=40, k=0.2, c=5))",
        "(nonlinear (name Moisture) (+ (* (name a) (call exp (* (neg (name k)) (name Hours)))) (name c)) (group start (a 40) (k 0.2) (c 5)))",
    ),
    ("#logistic(Ripe, Light + House)", "(logistic (name Ripe) (+ (name Light) (name House)))"),
    (
        "#robust(Yield, Light + CO2, method=bisquare)",
        "(robust (name Yield) (+ (name Light) (name CO2)) (opt method (name bisquare)))",
    ),
    (
        "#predict(main, Light=14, CO2=900, House=\"North\")",
        "(predict (name main) (opt Light 14) (opt CO2 900) (opt House (quoted \"North\")))",
    ),
    ("#predict(main, rows=Plan!A1:C13)", "(predict (name main) (opt rows (range Plan!A1:C13)))"),
    ("#compare(main, curved, quadratic)", "(compare (name main) (name curved) (name quadratic))"),
    // Column references.
    (
        "#linear(Yield, \"Outdoor temp\" + Light)",
        "(linear (name Yield) (+ (quoted \"Outdoor temp\") (name Light)))",
    ),
    ("#linear(C2:C121, D2:D121)", "(linear (range C2:C121) (range D2:D121))"),
    (
        "#linear(Data!C2:C121, Data!D2:D121)",
        "(linear (range Data!C2:C121) (range Data!D2:D121))",
    ),
    (
        "#linear('Bay 2'!C2:C121, 'Bay 2'!D:D)",
        "(linear (range 'Bay 2'!C2:C121) (range 'Bay 2'!D:D))",
    ),
    ("#linear(C:C, B:D)", "(linear (range C:C) (range B:D))"),
    ("#linear(Yield, Data!C7)", "(linear (name Yield) (range Data!C7))"),
    ("#linear($C$2:$C$9, c2:c9, $c$7)", "(linear (range C2:C9) (range C2:C9) (range C7:C7))"),
    ("#linear(C9:A2, 'Bay 2'!$A$1)", "(linear (range A2:C9) (range 'Bay 2'!A1))"),
    ("#linear(Yield, C2)", "(linear (name Yield) (name C2))"),
    // The data table.
    (
        "#linear(Yield, Light, table=Sheet2)",
        "(linear (name Yield) (name Light) (opt table (name Sheet2)))",
    ),
    (
        "#linear(Yield, Light, table=Sheet2!A1:F500)",
        "(linear (name Yield) (name Light) (opt table (range Sheet2!A1:F500)))",
    ),
    (
        "#linear(Yield, Light, table='Bay 2')",
        "(linear (name Yield) (name Light) (opt table (sheet \"Bay 2\")))",
    ),
    // Model terms.
    ("#linear(Yield, Light*CO2)", "(linear (name Yield) (* (name Light) (name CO2)))"),
    (
        "#linear(log(Area), sqrt(Dose) + log10(Dose) + exp(Shift) + abs(Shift))",
        "(linear (call log (name Area)) (+ (+ (+ (call sqrt (name Dose)) (call log10 (name Dose))) (call exp (name Shift))) (call abs (name Shift))))",
    ),
    (
        "#linear(Yield, (A + B) + Light)",
        "(linear (name Yield) (+ (paren (+ (name A) (name B))) (name Light)))",
    ),
    (
        "#linear(Yield, Light - CO2/2)",
        "(linear (name Yield) (- (name Light) (/ (name CO2) 2)))",
    ),
    // Shared options.
    (
        "#linear(Yield, Light + House, against(House=\"East\"))",
        "(linear (name Yield) (+ (name Light) (name House)) (group against (House (quoted \"East\"))))",
    ),
    (
        "#linear(Yield, Light, intercept=no, errors=hc3, gaps=skip)",
        "(linear (name Yield) (name Light) (opt intercept (name no)) (opt errors (name hc3)) (opt gaps (name skip)))",
    ),
    (
        "#linear(Yield, Light, intercept=yes, errors=classic, gaps=stop)",
        "(linear (name Yield) (name Light) (opt intercept (name yes)) (opt errors (name classic)) (opt gaps (name stop)))",
    ),
    (
        "#robust(Yield, Light + CO2, method=huber)",
        "(robust (name Yield) (+ (name Light) (name CO2)) (opt method (name huber)))",
    ),
    // Quoted keys, groups with quoted keys, negative values.
    ("#predict(main, \"Outdoor temp\"=14)", "(predict (name main) (opt \"Outdoor temp\" 14))"),
    (
        "#linear(Yield, \"Bay side\", against(\"Bay side\"=\"West\"))",
        "(linear (name Yield) (quoted \"Bay side\") (group against (\"Bay side\" (quoted \"West\"))))",
    ),
    ("#predict(main, Light=-2)", "(predict (name main) (opt Light (neg 2)))"),
    // Order is the caller's business; empty lists; case; spacing; Unicode.
    ("#linear(name=main, Yield)", "(linear (opt name (name main)) (name Yield))"),
    ("#linear()", "(linear)"),
    ("  #LINEAR ( Yield , Light )  ", "(LINEAR (name Yield) (name Light))"),
    ("# linear(Yield,Light)", "(linear (name Yield) (name Light))"),
    ("#linear(Température, Light)", "(linear (name Température) (name Light))"),
    // Literals.
    ("#f(14, 0.2, .5, 1e-3, 2.5E+4, 7.)", "(f 14 0.2 0.5 0.001 25000 7)"),
    ("#f(1e300, 12345678901234567890)", "(f 1e300 1.2345678901234567e19)"),
    (
        "#f(\"say \"\"hi\"\"\", 'Bay ''A''', \"back\\slash\")",
        "(f (quoted \"say \\\"hi\\\"\") (sheet \"Bay 'A'\") (quoted \"back\\\\slash\"))",
    ),
    ("#f(\"\")", "(f (quoted \"\"))"),
    ("#f(g(), h(a, b))", "(f (call g) (call h (name a) (name b)))"),
    ("#f(x.y_2, _z)", "(f (name x.y_2) (name _z))"),
];

fn sexpr_of(text: &str) -> String {
    match parse_request(text) {
        Ok(r) => to_sexpr(&r),
        Err(e) => panic!("{text:?} did not parse: {e:?}"),
    }
}

/// The snapshot of the single argument of `#f(EXPR)`.
fn expr_sexpr(expr: &str) -> String {
    let r = parse_request(&format!("#f({expr})")).expect("parses");
    assert_eq!(r.args.len(), 1);
    match &r.args[0] {
        Arg::Positional(e) => expr_to_sexpr(e),
        other => panic!("not positional: {other:?}"),
    }
}

fn err_of(text: &str) -> SyntaxError {
    match parse_request(text) {
        Ok(r) => panic!("{text:?} parsed as {}", to_sexpr(&r)),
        Err(e) => e,
    }
}

#[test]
fn snapshots() {
    assert!(SNAPSHOTS.len() >= 25);
    for (text, want) in SNAPSHOTS {
        assert_eq!(sexpr_of(text), *want, "{text}");
    }
}

#[test]
fn display_round_trip() {
    for (text, want) in SNAPSHOTS {
        let r = parse_request(text).expect("parses");
        let printed = r.to_string();
        assert_eq!(sexpr_of(&printed), *want, "{text} printed as {printed}");
        // Printing is canonical: printing the reparsed tree gives the same text.
        assert_eq!(
            parse_request(&printed).expect("parses").to_string(),
            printed
        );
    }
}

#[test]
fn display_is_readable() {
    let r = parse_request("#nonlinear( Moisture,a*exp( -k*Hours )+c,start(a=40,k=.2) )")
        .expect("parses");
    assert_eq!(
        r.to_string(),
        "#nonlinear(Moisture, a*exp(-k*Hours) + c, start(a=40, k=0.2))"
    );
    let r = parse_request("#linear('Bay 2'!$C$2:$C$9, \"Outdoor temp\"=1, table='Bay 2', x=$C$7)")
        .expect("parses");
    assert_eq!(
        r.to_string(),
        "#linear('Bay 2'!C2:C9, \"Outdoor temp\"=1, table='Bay 2', x=C7:C7)"
    );
}

#[test]
fn precedence_and_associativity() {
    let cases = [
        (
            "a+b*c^d^e",
            "(+ (name a) (* (name b) (^ (name c) (^ (name d) (name e)))))",
        ),
        ("-a^2", "(neg (^ (name a) 2))"),
        ("(a+b)*c", "(* (paren (+ (name a) (name b))) (name c))"),
        ("a-b-c", "(- (- (name a) (name b)) (name c))"),
        ("a/b/c", "(/ (/ (name a) (name b)) (name c))"),
        ("a/b*c", "(* (/ (name a) (name b)) (name c))"),
        ("a-b+c", "(+ (- (name a) (name b)) (name c))"),
        ("a*b+c*d", "(+ (* (name a) (name b)) (* (name c) (name d)))"),
        ("-a*b", "(* (neg (name a)) (name b))"),
        ("a*-b", "(* (name a) (neg (name b)))"),
        ("2^-3", "(^ 2 (neg 3))"),
        ("2^-3^2", "(^ 2 (neg (^ 3 2)))"),
        ("--a", "(neg (neg (name a)))"),
        ("a - -b", "(- (name a) (neg (name b)))"),
        ("f(a)^2", "(^ (call f (name a)) 2)"),
        ("(-a)^2", "(^ (paren (neg (name a))) 2)"),
    ];
    for (expr, want) in cases {
        assert_eq!(expr_sexpr(expr), want, "{expr}");
    }
}

#[test]
fn operator_table_is_consistent() {
    use super::parser::{precedence, Assoc, INFIX_OPERATORS, PREFIX_NEG_PRECEDENCE};
    assert_eq!(precedence(BinOp::Add), precedence(BinOp::Sub));
    assert!(precedence(BinOp::Mul).0 > precedence(BinOp::Add).0);
    assert!(PREFIX_NEG_PRECEDENCE > precedence(BinOp::Mul).0);
    assert!(precedence(BinOp::Pow).0 > PREFIX_NEG_PRECEDENCE);
    assert_eq!(precedence(BinOp::Pow).1, Assoc::Right);
    assert_eq!(INFIX_OPERATORS.len(), 5);
}

#[test]
fn hand_built_trees_print_with_needed_parentheses() {
    let sp = Span::new(0, 0);
    let name = |n: &str| Expr {
        kind: ExprKind::Name(n.to_string()),
        span: sp,
    };
    let bin = |op, l, r| Expr {
        kind: ExprKind::Binary {
            op,
            lhs: Box::new(l),
            rhs: Box::new(r),
        },
        span: sp,
    };
    // a - (b - c) without a Paren node, and (a ^ b) ^ c, and -(a*b).
    let e = bin(BinOp::Sub, name("a"), bin(BinOp::Sub, name("b"), name("c")));
    assert_eq!(e.to_string(), "a - (b - c)");
    let e = bin(BinOp::Pow, bin(BinOp::Pow, name("a"), name("b")), name("c"));
    assert_eq!(e.to_string(), "(a^b)^c");
    let e = Expr {
        kind: ExprKind::Unary {
            op: UnaryOp::Neg,
            operand: Box::new(bin(BinOp::Mul, name("a"), name("b"))),
        },
        span: sp,
    };
    assert_eq!(e.to_string(), "-(a*b)");
    assert_eq!(name("Outdoor temp").to_string(), "\"Outdoor temp\"");
}

#[test]
fn spans_of_parts() {
    let text = "#linear(Yield, Light + CO2, name=main)";
    let r = parse_request(text).expect("parses");
    assert_eq!(r.span, Span::new(0, text.len()));
    assert_eq!(r.function.span, Span::new(1, 7));
    assert_eq!(r.args[1].span(), Span::new(15, 26));
    assert_eq!(
        &text[r.args[2].span().start..r.args[2].span().end],
        "name=main"
    );

    // Multi-byte: `é` is two bytes, so `Température` is 12 bytes.
    let text = "  #linear(Température, \"Höhe\"=2)";
    let r = parse_request(text).expect("parses");
    assert_eq!(r.span, Span::new(2, text.len()));
    assert_eq!(r.args[0].span(), Span::new(10, 22));
    let Arg::Named { key, .. } = &r.args[1] else {
        panic!("named")
    };
    assert_eq!(key.name, "Höhe");
    assert_eq!(key.span, Span::new(24, 31));
    assert_eq!(&text[key.span.start..key.span.end], "\"Höhe\"");
}

/// Checks every span in the tree against the text it came from.
fn check_spans(text: &str, r: &Request) {
    fn slice(text: &str, s: Span) -> &str {
        assert!(
            s.start <= s.end && s.end <= text.len(),
            "span {s:?} out of {}",
            text.len()
        );
        text.get(s.start..s.end).expect("span on char boundaries")
    }
    fn expr(text: &str, e: &Expr) {
        let s = slice(text, e.span);
        match &e.kind {
            ExprKind::Name(n) => assert_eq!(s, n),
            ExprKind::Number(v) => assert_eq!(s.parse::<f64>().ok(), Some(*v)),
            ExprKind::Quoted(_) => assert!(s.starts_with('"') && s.ends_with('"')),
            ExprKind::SheetName(_) => assert!(s.starts_with('\'') && s.ends_with('\'')),
            ExprKind::Range(_) => assert!(!s.is_empty()),
            ExprKind::Unary { operand, .. } => {
                assert!(s.starts_with('-'));
                assert_eq!(operand.span.end, e.span.end);
                expr(text, operand);
            }
            ExprKind::Binary { lhs, rhs, .. } => {
                assert_eq!((lhs.span.start, rhs.span.end), (e.span.start, e.span.end));
                expr(text, lhs);
                expr(text, rhs);
            }
            ExprKind::Call { name, args } => {
                assert_eq!(slice(text, name.span), name.name);
                assert!(s.starts_with(name.name.as_str()) && s.ends_with(')'));
                for a in args {
                    expr(text, a);
                }
            }
            ExprKind::Paren(inner) => {
                assert!(s.starts_with('(') && s.ends_with(')'));
                expr(text, inner);
            }
        }
    }
    assert!(slice(text, r.span).starts_with('#') && slice(text, r.span).ends_with(')'));
    assert_eq!(slice(text, r.function.span), r.function.name);
    for arg in &r.args {
        match arg {
            Arg::Positional(e) => expr(text, e),
            Arg::Named { key, value, span } => {
                assert_eq!((key.span.start, value.span.end), (span.start, span.end));
                slice(text, key.span);
                expr(text, value);
            }
            Arg::Group {
                name,
                entries,
                span,
            } => {
                assert_eq!(slice(text, name.span), name.name);
                assert!(slice(text, *span).ends_with(')'));
                for (k, v) in entries {
                    slice(text, k.span);
                    expr(text, v);
                }
            }
        }
    }
}

#[test]
fn spans_match_text_in_all_snapshots() {
    for (text, _) in SNAPSHOTS {
        check_spans(text, &parse_request(text).expect("parses"));
    }
}

#[test]
fn error_missing_close() {
    let text = "#linear(Yield, Light";
    let e = err_of(text);
    assert_eq!(e.span, Span::new(text.len(), text.len()));
    assert_eq!(e.message, "the request ends before its closing `)`");
    assert_eq!(e.expected, "`,` or `)`");

    let e = err_of("#linear(log(Yield, Light)");
    assert_eq!(e.span.start, 25);
    assert_eq!(e.message, "the request ends before its closing `)`");
}

#[test]
fn error_operand_missing_after_plus() {
    let e = err_of("#linear(Yield, Light +)");
    assert_eq!(e.span, Span::new(22, 23));
    assert_eq!(e.message, "found `)`");
    assert_eq!(
        e.expected,
        "a column name, number, range, `-` or `(` after `+`"
    );
}

#[test]
fn error_empty_argument() {
    let e = err_of("#linear(Yield,, Light)");
    assert_eq!(e.span, Span::new(14, 15));
    assert_eq!(e.message, "found `,`");
    assert!(
        e.expected.starts_with("a column name, number"),
        "{}",
        e.expected
    );

    let e = err_of("#linear(Yield, Light,)");
    assert_eq!(e.span, Span::new(21, 22));
    assert_eq!(e.message, "found `)`");
}

#[test]
fn error_unclosed_quote() {
    let e = err_of("#linear(Yield, \"Outdoor temp)");
    assert_eq!(e.span, Span::new(15, 16));
    assert!(e.message.starts_with("unclosed quote"), "{}", e.message);
    assert_eq!(
        e.expected,
        "a closing `\"` (write `\"\"` for one `\"` inside the name)"
    );

    let e = err_of("#linear(Yield, table='Bay 2)");
    assert_eq!(e.span, Span::new(21, 22));
    assert!(e.message.starts_with("unclosed quote"), "{}", e.message);
}

#[test]
fn error_bad_ranges() {
    let e = err_of("#linear(Yield, Data!ZZZZ1:A2)");
    assert_eq!(e.span, Span::new(20, 25));
    assert!(
        e.message.contains("`ZZZZ1` is not a cell reference"),
        "{}",
        e.message
    );
    assert!(e.message.contains("at most 3 letters"), "{}", e.message);

    let cases = [
        ("#f(XFE1:XFE2)", 3, "the last column is XFD"),
        ("#f(A0:A2)", 3, "rows start at 1"),
        ("#f(A1:A1048577)", 6, "the last row is 1048576"),
        ("#f(A1:C)", 3, "mixes a whole column with a cell"),
        ("#f(Data!C)", 8, "a column without a row"),
        ("#f(Data!)", 8, "found `)` after `Data!`"),
        ("#f(Light:CO2)", 3, "`Light` is not a cell reference"),
        ("#f(C2:)", 6, "found `)` after `C2:`"),
        ("#f(C$)", 3, "must be followed by a row number"),
    ];
    for (text, start, needle) in cases {
        let e = err_of(text);
        assert_eq!(e.span.start, start, "{text}: {e:?}");
        assert!(e.message.contains(needle), "{text}: {}", e.message);
    }
}

#[test]
fn error_text_after_close() {
    let e = err_of("#linear(Yield, Light) extra words  ");
    assert_eq!(e.span, Span::new(22, 33));
    assert_eq!(
        e.message,
        "unexpected text after the closing parenthesis: `extra words`"
    );
    let e = err_of("#linear(Yield, Light))");
    assert_eq!(e.span, Span::new(21, 22));
}

#[test]
fn error_header() {
    let e = err_of("linear(Yield)");
    assert_eq!(e.span, Span::new(0, 1));
    assert!(e.expected.contains("`#`"));
    let e = err_of("   ");
    assert_eq!(e.message, "the text is empty");
    let e = err_of("#(Yield)");
    assert_eq!(
        (e.span.start, e.message.as_str()),
        (1, "found `(` after `#`")
    );
    let e = err_of("#");
    assert_eq!(
        (e.span, e.message.as_str()),
        (Span::new(1, 1), "the request ends after `#`")
    );
    let e = err_of("#linear");
    assert_eq!(e.message, "the request ends after the function name");
    let e = err_of("#linear Yield");
    assert_eq!(
        (e.span, e.message.as_str()),
        (Span::new(8, 13), "found `Yield`")
    );
    assert!(e.expected.starts_with("`(`"));
}

#[test]
fn error_other_tokens() {
    // A multi-byte character is reported whole.
    let e = err_of("#linear(Yield, Light → CO2)");
    assert_eq!(e.span, Span::new(21, 24));
    assert_eq!(e.message, "found `→`");
    let e = err_of("#linear(Température,, Light)");
    assert_eq!(e.span.start, 21);
    let e = err_of("#linear(Yield, Light CO2)");
    assert_eq!((e.span.start, e.message.as_str()), (21, "found `CO2`"));
    assert_eq!(e.expected, "`,` or `)`");
    let e = err_of("#linear(Yield, 2x)");
    assert_eq!(
        (e.span, e.message.as_str()),
        (Span::new(15, 17), "`2x` is not a number")
    );
    let e = err_of("#linear(Yield, (Light + CO2)");
    assert_eq!(e.message, "the request ends before its closing `)`");
    let e = err_of("#linear(Yield, (Light CO2))");
    assert!(
        e.expected
            .starts_with("`)` to close the `(` at character 16"),
        "{}",
        e.expected
    );
    let e = err_of("#f(start(a=1 b=2))");
    assert_eq!(e.span.start, 13);
    assert_eq!(e.expected, "`,` or `)` to close `start(`");
    let e = err_of("#f(start(a=1, 2))");
    assert_eq!(e.span.start, 14);
    assert!(
        e.expected
            .starts_with("a name followed by `=` inside `start(...)`"),
        "{}",
        e.expected
    );
    let e = err_of("#f(start(a=1, b))");
    assert_eq!(e.span.start, 15);
    assert!(e.expected.starts_with("`=` after `b`"), "{}", e.expected);
    let e = err_of("#f(log(a b))");
    assert_eq!(e.expected, "`,` or `)` to close `log(`");
    let e = err_of("#f(confidence=)");
    assert_eq!(
        e.expected,
        "a column name, number, range, `-` or `(` after `=`"
    );
    let e = err_of("#f(a=b=c)");
    assert_eq!((e.span.start, e.message.as_str()), (6, "found `=`"));
    let e = err_of("#f(+a)");
    assert_eq!(e.message, "found `+`");
    let e = err_of("#f(\"Bay 2\"!C2)");
    assert_eq!((e.span.start, e.message.as_str()), (10, "found `!`"));
    let e = err_of("#linear(Yield, C2 : C9)");
    assert_eq!((e.span.start, e.message.as_str()), (18, "found `:`"));
    assert!(e.expected.contains("without spaces"), "{}", e.expected);
    let e = err_of("#f(1e999)");
    assert!(e.message.contains("too large"));
}

#[test]
fn errors_come_in_text_order() {
    // The empty argument comes before the unclosed quote.
    let e = err_of("#linear(Yield,, \"open");
    assert_eq!(e.span.start, 14);
}

#[test]
fn depth_limit() {
    let nested = |n: usize| format!("#f({}a{})", "(".repeat(n), ")".repeat(n));
    assert!(parse_request(&nested(MAX_DEPTH)).is_ok());
    let e = err_of(&nested(MAX_DEPTH + 1));
    assert_eq!(e.span.start, 3 + MAX_DEPTH + 1);
    assert!(e.message.contains("nested too deeply"), "{}", e.message);
    assert!(e.message.contains("64"), "{}", e.message);

    // Other ways to nest: unary minus, `^` chains, calls, groups.
    let minus = |n: usize| format!("#f({}a)", "-".repeat(n));
    assert!(parse_request(&minus(MAX_DEPTH)).is_ok());
    assert!(err_of(&minus(MAX_DEPTH + 1))
        .message
        .contains("nested too deeply"));
    let pow = |n: usize| format!("#f(a{})", "^a".repeat(n));
    assert!(parse_request(&pow(MAX_DEPTH)).is_ok());
    assert!(err_of(&pow(MAX_DEPTH + 1))
        .message
        .contains("nested too deeply"));
    let calls = |n: usize| format!("#f({}a{})", "g(".repeat(n), ")".repeat(n));
    assert!(parse_request(&calls(MAX_DEPTH)).is_ok());
    assert!(err_of(&calls(MAX_DEPTH + 1))
        .message
        .contains("nested too deeply"));
    let grouped = |n: usize| format!("#f(start(a={}a{}))", "(".repeat(n), ")".repeat(n));
    assert!(parse_request(&grouped(MAX_DEPTH - 1)).is_ok());
    assert!(err_of(&grouped(MAX_DEPTH))
        .message
        .contains("nested too deeply"));

    // 4,000 parentheses fit in the length limit and stop at the depth limit.
    let text = nested(4000);
    assert!(text.len() <= MAX_REQUEST_LEN);
    assert!(err_of(&text).message.contains("nested too deeply"));
    // 10,000 parentheses: over the length limit, and without that limit the
    // depth limit still stops them without a stack overflow.
    let text = nested(10_000);
    assert!(err_of(&text)
        .message
        .contains("more than the limit of 8192 bytes"));
    let e = parse_unlimited(&text).unwrap_err();
    assert!(e.message.contains("nested too deeply"), "{}", e.message);
    let text = format!("#f({}a)", "-".repeat(10_000));
    assert!(parse_unlimited(&text)
        .unwrap_err()
        .message
        .contains("nested too deeply"));
}

#[test]
fn flat_sums_do_not_nest_but_trees_stay_low() {
    // A model of 256 terms: a flat chain, so no nesting error; its tree is
    // 256 levels high, the most allowed.
    let sum = |terms: usize| format!("#linear(Yield, {}x)", "x+".repeat(terms - 1));
    let r = parse_request(&sum(MAX_TREE_HEIGHT)).expect("parses");
    let printed = r.to_string();
    let again = parse_request(&printed).expect("reparses");
    assert_eq!(to_sexpr(&again), to_sexpr(&r));
    assert_eq!(to_sexpr(&r).matches("(name x)").count(), MAX_TREE_HEIGHT);
    assert_eq!(r.clone(), r);

    // One term more: the error points at the `+` that makes the tree too high.
    let text = sum(MAX_TREE_HEIGHT + 1);
    let e = err_of(&text);
    let last_plus = text.rfind('+').expect("has a plus");
    assert_eq!(e.span, Span::new(last_plus, last_plus + 1));
    assert!(e.message.contains("more than 256 levels"), "{}", e.message);
    assert!(
        e.expected.contains("split a longer model"),
        "{}",
        e.expected
    );

    // 4,000 terms fit in the length limit and stop at the height limit
    // without overflowing the stack.
    let text = sum(4000);
    assert!(text.len() <= MAX_REQUEST_LEN);
    assert!(err_of(&text).message.contains("too many parts"));

    // Heights add up across constructs: parentheses around a long sum.
    let text = format!("#f(({}x))", "x*".repeat(MAX_TREE_HEIGHT - 1));
    let e = err_of(&text);
    assert_eq!(e.span, Span::new(3, 4));
    let text = format!("#f(log({}x))", "x*".repeat(MAX_TREE_HEIGHT - 1));
    assert_eq!(err_of(&text).span, Span::new(3, 6));
    let text = format!("#f(-({}x))", "x*".repeat(MAX_TREE_HEIGHT - 2));
    assert_eq!(err_of(&text).span, Span::new(3, 4));
    let text = format!("#f(({}x))", "x*".repeat(MAX_TREE_HEIGHT - 2));
    assert!(parse_request(&text).is_ok());
}

#[test]
fn length_limit() {
    let long = format!("#linear(Yield, {}x)", "x+".repeat(50_000));
    assert!(long.len() > 100_000);
    let e = err_of(&long);
    assert_eq!(e.span, Span::new(MAX_REQUEST_LEN, long.len()));
    assert_eq!(
        e.message,
        format!(
            "the request is {} bytes long, more than the limit of 8192 bytes",
            long.len()
        )
    );
    assert!(e.expected.contains("at most 8192 bytes"));
    assert!(e.expected.contains("split it into several requests"));

    // Exactly at the limit is fine; one byte more is not.
    let fill = |n: usize| {
        let head = "#f(a";
        format!("{head}{}", " ".repeat(n - head.len() - 1)) + ")"
    };
    assert!(parse_request(&fill(MAX_REQUEST_LEN)).is_ok());
    assert!(err_of(&fill(MAX_REQUEST_LEN + 1)).message.contains("8192"));

    // The span starts on a character boundary even when the limit cuts a character.
    let text = format!("#f({})", "é".repeat(5000));
    let e = err_of(&text);
    assert!(text.is_char_boundary(e.span.start));
    assert!(e.span.start <= MAX_REQUEST_LEN);
}

#[test]
fn empty_argument_list() {
    let r = parse_request("#linear()").expect("parses");
    assert!(r.args.is_empty());
    let r = parse_request("#linear(  )").expect("parses");
    assert!(r.args.is_empty());
}

#[test]
fn groups_and_calls_are_told_apart() {
    // `start()` and `g(x)` are calls; `start(a=1)` is a group.
    assert_eq!(sexpr_of("#f(start())"), "(f (call start))");
    assert_eq!(sexpr_of("#f(g(x))"), "(f (call g (name x)))");
    assert_eq!(sexpr_of("#f(start(a=1))"), "(f (group start (a 1)))");
    // A group's value is any expression.
    assert_eq!(
        sexpr_of("#f(start(a=-1.5*x, \"b c\"=log(2)))"),
        "(f (group start (a (* (neg 1.5) (name x))) (\"b c\" (call log 2))))"
    );
    // A named value that is a call.
    assert_eq!(
        sexpr_of("#f(w=log(Beds))"),
        "(f (opt w (call log (name Beds))))"
    );
}

#[test]
fn looks_like_request_cases() {
    for yes in [
        "#linear(Yield, Light)",
        "  # linear (Yield",
        "#f(",
        "\t#Température(x)",
        "#linear()",
        "#linear(Yield, Light +)",
        "#x.y_2 (",
    ] {
        assert!(looks_like_request(yes), "{yes:?}");
    }
    for no in [
        "#1 priority",
        "# note",
        "#linear Yield",
        "",
        "   ",
        "linear(x)",
        "#",
        "#(x)",
        "##linear(x)",
        "x #linear(y)",
        "#linear",
    ] {
        assert!(!looks_like_request(no), "{no:?}");
    }
}

#[test]
fn column_letters_cases() {
    assert_eq!(column_letters(0), "A");
    assert_eq!(column_letters(25), "Z");
    assert_eq!(column_letters(26), "AA");
    assert_eq!(column_letters(701), "ZZ");
    assert_eq!(column_letters(702), "AAA");
    assert_eq!(column_letters(16_383), "XFD");
}

#[test]
fn range_fields() {
    let r = parse_request("#f(Data!C7, C:E, b3:a1)").expect("parses");
    let ranges: Vec<&RangeRef> = r
        .args
        .iter()
        .map(|a| match a {
            Arg::Positional(Expr {
                kind: ExprKind::Range(r),
                ..
            }) => r,
            other => panic!("not a range: {other:?}"),
        })
        .collect();
    assert_eq!(ranges[0].sheet.as_deref(), Some("Data"));
    assert_eq!(
        ranges[0].start,
        CellRefPart {
            col: 2,
            row: Some(6)
        }
    );
    assert!(ranges[0].is_single_cell());
    assert_eq!(ranges[1].start, CellRefPart { col: 2, row: None });
    assert_eq!(ranges[1].end, CellRefPart { col: 4, row: None });
    assert!(ranges[1].is_whole_columns());
    assert_eq!(
        ranges[2].start,
        CellRefPart {
            col: 0,
            row: Some(0)
        }
    );
    assert_eq!(
        ranges[2].end,
        CellRefPart {
            col: 1,
            row: Some(2)
        }
    );
}

/// A tiny xorshift64 generator, so the sweep needs no dependencies.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        self.0 = x;
        x
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
}

/// What must hold for any text: no panic; an error's span lies inside the
/// text on character boundaries; a success prints back to the same tree,
/// has consistent spans, and looks like a request.
fn check_any(text: &str) {
    match parse_request(text) {
        Ok(r) => {
            assert!(looks_like_request(text), "{text:?}");
            check_spans(text, &r);
            let printed = r.to_string();
            match parse_request(&printed) {
                Ok(again) => assert_eq!(to_sexpr(&again), to_sexpr(&r), "{text:?} -> {printed:?}"),
                Err(e) => panic!("{text:?} printed as {printed:?} which fails: {e:?}"),
            }
        }
        Err(e) => {
            assert!(
                e.span.start <= e.span.end && e.span.end <= text.len(),
                "{text:?}: {e:?}"
            );
            assert!(text.is_char_boundary(e.span.start) && text.is_char_boundary(e.span.end));
            assert!(!e.message.is_empty() && !e.expected.is_empty());
        }
    }
}

#[test]
fn every_prefix_of_valid_requests() {
    for (text, _) in SNAPSHOTS {
        let end = text.trim_end().len();
        for (cut, _) in text.char_indices() {
            check_any(&text[..cut]);
            if cut < end {
                assert!(
                    parse_request(&text[..cut]).is_err(),
                    "prefix {:?} parsed",
                    &text[..cut]
                );
            }
        }
        check_any(text);
    }
}

#[test]
fn random_text_never_panics() {
    const PIECES: &[&str] = &[
        "#", "linear", "f", "(", ")", ",", "=", "+", "-", "*", "/", "^", "\"", "'", "!", ":", "$",
        " ", ".", "e", "E", "C", "c", "2", "0", "9", "Data", "Bay 2", "é", "→", "start", "base",
        "log", "1e5", "A1", "XFD", "ZZZZ", "1048577", "\t", "\n", "_", "\"\"", "''", "\u{0}",
        "\u{feff}", "x", "Light",
    ];
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    for _ in 0..4000 {
        let mut text = String::new();
        if rng.below(2) == 0 {
            text.push_str("#f(");
        }
        for _ in 0..rng.below(24) {
            text.push_str(PIECES[rng.below(PIECES.len())]);
        }
        check_any(&text);
    }
    for _ in 0..2000 {
        let bytes: Vec<u8> = (0..rng.below(40)).map(|_| rng.next() as u8).collect();
        let text = String::from_utf8_lossy(&bytes).into_owned();
        check_any(&text);
        check_any(&format!("#f({text}"));
    }
}

#[test]
fn mutated_requests_never_panic() {
    // Near-valid text: each snapshot request with random pieces inserted,
    // removed or replaced at character boundaries. Many of these still parse,
    // so the round-trip checks of `check_any` run often.
    const PIECES: &[&str] = &[
        "(", ")", ",", "=", "+", "-", "^", "\"", "'", "!", ":", "$", " ", "é", "2", "x", "C",
    ];
    let mut rng = Rng(0x2545_f491_4f6c_dd1d);
    let mut parsed = 0;
    for _ in 0..20 {
        for (text, _) in SNAPSHOTS {
            let mut t = text.to_string();
            for _ in 0..1 + rng.below(3) {
                let bounds: Vec<usize> =
                    t.char_indices().map(|(i, _)| i).chain([t.len()]).collect();
                let at = bounds[rng.below(bounds.len())];
                match rng.below(3) {
                    0 => t.insert_str(at, PIECES[rng.below(PIECES.len())]),
                    1 if at < t.len() => {
                        t.remove(at);
                    }
                    _ if at < t.len() => {
                        t.remove(at);
                        t.insert_str(at, PIECES[rng.below(PIECES.len())]);
                    }
                    _ => {}
                }
            }
            check_any(&t);
            parsed += usize::from(parse_request(&t).is_ok());
        }
    }
    assert!(parsed > 100, "only {parsed} mutated requests parsed");
}

/// A random well-formed expression (as text) of bounded depth.
fn random_expr(rng: &mut Rng, depth: usize, out: &mut String) {
    let leaf = depth == 0 || rng.below(3) == 0;
    if leaf {
        match rng.below(6) {
            0 => out.push_str("Light"),
            1 => out.push_str(["2", "0.5", "1e-3", "14"][rng.below(4)]),
            2 => out.push_str("\"Outdoor temp\""),
            3 => out.push_str("Data!C2:C9"),
            4 => out.push_str("'Bay 2'"),
            _ => out.push_str("CO2"),
        }
        return;
    }
    match rng.below(5) {
        0 => {
            out.push('-');
            random_expr(rng, depth - 1, out);
        }
        1 => {
            out.push('(');
            random_expr(rng, depth - 1, out);
            out.push(')');
        }
        2 => {
            out.push_str(["log(", "exp(", "sqrt("][rng.below(3)]);
            random_expr(rng, depth - 1, out);
            out.push(')');
        }
        _ => {
            random_expr(rng, depth - 1, out);
            out.push_str(["+", "-", "*", "/", "^", " - ", " + "][rng.below(7)]);
            random_expr(rng, depth - 1, out);
        }
    }
}

#[test]
fn random_expressions_round_trip() {
    let mut rng = Rng(12345);
    for _ in 0..3000 {
        let mut expr = String::new();
        random_expr(&mut rng, 6, &mut expr);
        let text = format!("#f({expr}, k={expr})");
        let r = parse_request(&text).unwrap_or_else(|e| panic!("{text:?}: {e:?}"));
        check_spans(&text, &r);
        let printed = r.to_string();
        let again = parse_request(&printed).unwrap_or_else(|e| panic!("{printed:?}: {e:?}"));
        assert_eq!(to_sexpr(&again), to_sexpr(&r), "{text} -> {printed}");
        assert_eq!(again.to_string(), printed);
    }
}

#[test]
fn syntax_error_display() {
    let e = err_of("#linear(Yield, Light +)");
    assert_eq!(
        e.to_string(),
        "found `)`; expected a column name, number, range, `-` or `(` after `+`"
    );
}
