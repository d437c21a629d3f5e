//! Property tests (proptest), a few hundred cases each so the suite stays
//! fast: the parser never panics and its printed form parses back to the
//! same tree; a workbook written by plumb reads back cell for cell.
//! The long-running search for crashes is the fuzzing (scripts/fuzz.sh).

mod common;

use plumb::cells::{DateKind, ErrorValue, Grid, Stored, Value, Visibility, Workbook};
use plumb::syntax::{parse_request, to_sexpr};
use proptest::prelude::*;

/// Expression text from the grammar (docs/fit-language.md), nested a few levels.
fn expr() -> impl Strategy<Value = String> {
    let leaf = prop_oneof![
        prop::sample::select(vec!["Light", "Yield", "CO2", "x", "Bay_2", "Température", "温室", "C2", "a.b"]).prop_map(String::from),
        (0u32..100_000, 0u32..4).prop_map(|(n, d)| if d == 0 { n.to_string() } else { format!("{}.{}", n, d) }),
        prop::sample::select(vec!["1e300", "0.5", ".25", "3.", "2e-7"]).prop_map(String::from),
        "[A-Za-z ]{1,8}".prop_map(|s| format!("\"{}\"", s.replace('"', "\"\""))),
        (1u32..500, 1u32..500, prop::sample::select(vec!["", "Data!", "'Bay 2'!", "'O''Neil'!"]))
            .prop_map(|(a, b, s)| format!("{s}C{a}:D{b}")),
        prop::sample::select(vec!["C:C", "Data!A:A", "$B$3:$B$9", "Data!C7"]).prop_map(String::from),
    ];
    leaf.prop_recursive(4, 32, 3, |inner| {
        prop_oneof![
            (inner.clone(), prop::sample::select(vec!["+", "-", "*", "/", "^"]), inner.clone()).prop_map(|(a, op, b)| format!("{a} {op} {b}")),
            inner.clone().prop_map(|a| format!("({a})")),
            inner.clone().prop_map(|a| format!("-{a}")),
            (prop::sample::select(vec!["log", "exp", "sqrt", "f"]), prop::collection::vec(inner, 0..3)).prop_map(|(f, args)| format!("{f}({})", args.join(", "))),
        ]
    })
}

/// A whole request: positional arguments, options and a group.
fn request() -> impl Strategy<Value = String> {
    (
        prop::collection::vec(expr(), 0..3),
        prop::collection::vec((prop::sample::select(vec!["level", "name", "data", "\"Outdoor temp\""]), expr()), 0..3),
        prop::option::of((prop::sample::select(vec!["base", "start"]), "[a-z]{1,4}", expr())),
        "[ \t]{0,2}",
    )
        .prop_map(|(pos, named, group, ws)| {
            let mut args: Vec<String> = pos;
            args.extend(named.into_iter().map(|(k, v)| format!("{k}={v}")));
            if let Some((g, k, v)) = group {
                args.push(format!("{g}({k}={v})"));
            }
            format!("{ws}#linear({}){ws}", args.join(", "))
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn grammar_requests_print_and_parse_back_to_the_same_tree(text in request()) {
        match parse_request(&text) {
            Ok(tree) => {
                let printed = tree.to_string();
                let again = parse_request(&printed);
                prop_assert!(again.is_ok(), "{text:?} printed as {printed:?} does not parse: {:?}", again.err());
                let again = again.unwrap();
                prop_assert_eq!(to_sexpr(&tree), to_sexpr(&again));
                // The printed form is a fixed point.
                prop_assert_eq!(again.to_string(), printed);
            }
            // Limits (height, depth) may refuse a generated request; the
            // error must lie inside the text.
            Err(e) => prop_assert!(e.span.start <= e.span.end && e.span.end <= text.len()),
        }
    }

    #[test]
    fn any_text_parses_or_gives_an_error_inside_it(text in "\\PC{0,80}|#[a-z]{1,6}\\([ -~]{0,60}\\)?") {
        let _ = plumb::syntax::looks_like_request(&text);
        if let Err(e) = parse_request(&text) {
            prop_assert!(e.span.start <= e.span.end && e.span.end <= text.len());
            let _ = plumb::problems::caret_lines(&text, e.span.start, e.span.end);
        }
    }
}

/// A cell value for the round trip.
fn stored() -> impl Strategy<Value = Option<(Option<f64>, Option<String>, Option<Stored>)>> {
    prop_oneof![
        3 => Just(None),
        3 => prop::num::f64::NORMAL.prop_map(|x| Some((Some(x), None, None))),
        1 => (-1e6f64..1e6).prop_map(|x| Some((Some(x), None, None))),
        3 => "\\PC{0,20}".prop_map(|s| Some((None, Some(s), None))),
        1 => any::<bool>().prop_map(|b| Some((None, None, Some(Stored::Bool(b))))),
        1 => (1u32..60_000).prop_map(|d| Some((None, None, Some(Stored::DateTime(f64::from(d), DateKind::Date))))),
        1 => prop::sample::select(vec![ErrorValue::Div0, ErrorValue::NotAvailable, ErrorValue::Value, ErrorValue::Ref]).prop_map(|e| Some((None, None, Some(Stored::Error(e))))),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    #[test]
    fn every_cell_written_reads_back_equal(cells in prop::collection::vec(stored(), 1..60), width in 1u32..6, hidden in any::<bool>()) {
        let mut g = Grid::new("Données");
        for (i, c) in cells.iter().enumerate() {
            let (r, col) = (i as u32 / width, i as u32 % width);
            match c {
                Some((Some(x), _, _)) => g.set_number(r, col, *x),
                // An empty text is no cell at all in xlsx.
                Some((_, Some(t), _)) if !t.is_empty() => g.set_text(r, col, t),
                Some((_, _, Some(s))) => g.set(r, col, *s),
                _ => {}
            }
        }
        if hidden {
            g.visibility = Visibility::Hidden;
        }
        let book = Workbook { sheets: vec![g, Grid::new("Second")] };
        let d = std::env::temp_dir().join(format!("plumb-prop-{}", std::process::id()));
        std::fs::create_dir_all(&d).unwrap();
        let out = d.join("round.xlsx");
        let info = plumb::report::RunInfo { version: "0".into(), input_name: "p.xlsx".into(), input_sha256: String::new(), time: "2026-01-01 00:00:00".into(), sheets: None };
        let laid = plumb::layout::lay_out(&book, &[], &info);
        plumb::write::write_book(&book, &laid, &out, &plumb::write::WriteOptions { created_unix: 0, zip_level: 1 }).expect("write");
        let back = plumb::read::read_workbook(&out).expect("read back");
        let n = common::faithful::assert_books_faithful(&book, &back, true);
        // A generated text that reads as a request (`#` and a letter of any
        // script, then `(`) is a request cell, compared for its outcome, not counted.
        let requests = plumb::resolve::find_requests(&book).len();
        prop_assert_eq!(n + requests, book.sheets[0].cells().filter(|(_, _, v)| !matches!(v, Value::Empty)).count());
        let _ = std::fs::remove_file(&out);
    }
}
