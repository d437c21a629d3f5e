//! Binding by kind, group options, model expressions and spans, on small
//! in-memory workbooks and test-only specs.

use super::*;
use crate::fits::{host_functions, Registry};
use crate::protocol::{Formula, ParamKind, ParamSpec};
use crate::syntax::parse_request;

/// A sheet "Data" with a table: Hours, Level (a decay), Bay (text), Light;
/// the request goes in H2.
fn book(request: &str) -> Workbook {
    let mut g = Grid::new("Data");
    for (c, h) in ["Hours", "Level", "Bay", "Light"].iter().enumerate() {
        g.set_text(0, c as u32, h);
    }
    for i in 0..12u32 {
        let r = i + 1;
        let hours = f64::from(i);
        g.set_number(r, 0, hours);
        g.set_number(r, 1, 40.0 * (-0.2 * hours).exp() + 0.01 * f64::from(i % 3));
        g.set_text(r, 2, ["North", "South", "East"][i as usize % 3]);
        g.set_number(r, 3, 8.0 + f64::from(i % 5));
    }
    g.set_text(1, 7, request);
    Workbook { sheets: vec![g] }
}

fn at() -> CellAddress {
    CellAddress::new("Data", 1, 7)
}

fn resolve_in(book: &Workbook, text: &str, spec: &FunctionSpec) -> Result<Resolved, Problem> {
    let req = parse_request(text).expect("the request parses");
    resolve(book, &at(), text, &req, spec, &HashSet::from([at()]))
}

fn resolve_text(text: &str, spec: &FunctionSpec) -> Result<Resolved, Problem> {
    resolve_in(&book(text), text, spec)
}

fn bind_text(text: &str, spec: &FunctionSpec) -> Result<Bound, Problem> {
    let req = parse_request(text).expect("the request parses");
    bind(spec, &req, &at(), text)
}

fn param(name: &str, kind: ParamKind, help: &str) -> ParamSpec {
    ParamSpec { name: name.into(), kind, required: true, default: None, choices: Vec::new(), help: help.into(), example: None }
}

fn builtin(name: &str) -> FunctionSpec {
    Registry::builtin().get(name).expect("a built-in fit").spec().clone()
}

fn host(name: &str) -> FunctionSpec {
    host_functions().into_iter().find(|s| s.name == name).expect("a host function")
}

/// The characters of `span` in `text`.
fn slice(text: &str, span: Span) -> &str {
    &text[span.start..span.end]
}

/// The request text and caret lines of a problem.
fn carets(p: &Problem) -> String {
    p.caret_lines()
}

/// The caret lines for the first `needle` in `text` (ASCII text).
fn carets_under(text: &str, needle: &str) -> String {
    carets_width(text, needle, needle.len())
}

/// The caret lines for the first `width` characters of the first `needle`.
fn carets_width(text: &str, needle: &str, width: usize) -> String {
    let at = text.find(needle).expect("the needle is in the text");
    format!("    {text}\n    {}{}\n", " ".repeat(at), "^".repeat(width))
}

#[test]
fn predict_binds_its_fit_its_options_and_any_column_as_a_pair() {
    let spec = host("predict");
    let text = "#predict(main, Light=14, Bay=\"North\", confidence=0.9, Hours=-2)";
    let b = bind_text(text, &spec).unwrap();
    assert_eq!(b.positional.len(), 1);
    assert_eq!(b.positional[0].value, BoundValue::FitName("main".into()));
    assert_eq!(slice(text, b.positional[0].span), "main");
    assert_eq!(b.option("confidence").map(|o| &o.value), Some(&BoundValue::Number(0.9)));
    assert_eq!(b.values.get("confidence"), Some(&OptionValue::Number(0.9)));
    assert!(b.notes.is_empty());
    let keys: Vec<&str> = b.extra.iter().map(|x| x.name.as_str()).collect();
    assert_eq!(keys, ["Light", "Bay", "Hours"]);
    assert!(b.extra.iter().all(|x| x.kind == ParamKind::Column));
    assert_eq!(slice(text, b.extra[1].span), "Bay=\"North\"");
    assert_eq!(slice(text, b.extra[1].value_span), "\"North\"");
    assert!(matches!(&b.extra[2].value, BoundValue::Column(e) if slice(text, e.span) == "-2"));
    // Pairs are the host's: not among the values a fit would receive.
    assert!(!b.values.contains_key("Light") && !b.values.contains_key("<column>"));
}

#[test]
fn predict_takes_a_table_of_new_values_and_refuses_a_pair_twice() {
    let spec = host("predict");
    let text = "#predict(main, rows=Plan!A1:C13)";
    let b = bind_text(text, &spec).unwrap();
    match &b.option("rows").unwrap().value {
        BoundValue::Range(Place::Range(r)) => assert_eq!(r.to_string(), "Plan!A1:C13"),
        other => panic!("rows= bound as {other:?}"),
    }
    let text = "#predict(main, Light=14, light=15)";
    let p = bind_text(text, &spec).unwrap_err();
    assert_eq!(p.message, "light is given twice");
    assert_eq!(carets(&p), "    #predict(main, Light=14, light=15)\n                             ^^^^^^^^\n");
    let text = "#predict(main, Light=14, other)";
    let p = bind_text(text, &spec).unwrap_err();
    assert_eq!(p.message, "a positional argument comes after an option");
    let p = bind_text("#predict(3)", &spec).unwrap_err();
    assert!(p.message.contains("is a fit's name"), "{}", p.message);
}

#[test]
fn compare_takes_two_or_more_fit_names() {
    let spec = host("compare");
    let text = "#compare(main, curved, \"by bay\")";
    let b = bind_text(text, &spec).unwrap();
    let names: Vec<&BoundValue> = b.positional.iter().map(|a| &a.value).collect();
    assert_eq!(names, [&BoundValue::FitName("main".into()), &BoundValue::FitName("curved".into()), &BoundValue::FitName("by bay".into())]);
    assert_eq!(slice(text, b.positional[2].span), "\"by bay\"");
    let p = bind_text("#compare(main)", &spec).unwrap_err();
    assert!(p.message.starts_with("#compare needs its fit argument"), "{}", p.message);
    assert_eq!(carets(&p), "    #compare(main)\n                 ^\n");
    let p = bind_text("#compare(main, curved, confidence=0.9)", &spec).unwrap_err();
    assert_eq!(p.message, "#compare has no option 'confidence'");
    assert_eq!(p.help.as_deref(), Some("#compare takes no options: #compare(fit, fit)"));
}

#[test]
fn linear_binds_each_argument_by_its_kind() {
    let spec = builtin("linear");
    let text = "#linear(log(Level), Hours + Bay + Hours*Light, weights=Light, table=Data!A1:D13, gaps=stop, against(Bay=\"South\"))";
    let b = bind_text(text, &spec).unwrap();
    assert!(matches!(&b.positional[0].value, BoundValue::Column(e) if slice(text, e.span) == "log(Level)"));
    match &b.positional[1].value {
        BoundValue::Terms(t) => assert_eq!(t.iter().map(|e| slice(text, e.span)).collect::<Vec<_>>(), ["Hours", "Bay", "Hours*Light"]),
        other => panic!("terms bound as {other:?}"),
    }
    assert!(matches!(&b.option("weights").unwrap().value, BoundValue::Column(e) if slice(text, e.span) == "Light"));
    assert!(matches!(&b.option("table").unwrap().value, BoundValue::Range(Place::Range(_))));
    assert_eq!(b.option("gaps").unwrap().value, BoundValue::Choice("stop".into()));
    match &b.option("against").unwrap().value {
        BoundValue::Group(g) => {
            assert_eq!((g[0].key.as_str(), &g[0].value), ("Bay", &OptionValue::Text("South".into())));
            assert_eq!(slice(text, g[0].key_span), "Bay");
        }
        other => panic!("against bound as {other:?}"),
    }
    // Defaults are values too.
    assert_eq!(b.values.get("errors"), Some(&OptionValue::Text("classic".into())));
    assert_eq!(b.values.get("confidence"), Some(&OptionValue::Number(0.95)));
    assert!(b.notes.is_empty(), "{:?}", b.notes);
}

#[test]
fn the_old_option_names_still_bind_to_the_new_with_a_note_each() {
    let spec = builtin("linear");
    let text = "#linear(Level, Hours + Bay, data=Data!A1:D13, level=0.9, missing=stop, base(Bay=\"South\"), base(Hours=1))";
    let b = bind_text(text, &spec).unwrap();
    assert!(matches!(&b.option("table").unwrap().value, BoundValue::Range(Place::Range(_))));
    assert_eq!(b.values.get("confidence"), Some(&OptionValue::Number(0.9)));
    assert_eq!(b.option("gaps").unwrap().value, BoundValue::Choice("stop".into()));
    assert!(matches!(&b.option("against").unwrap().value, BoundValue::Group(g) if g.len() == 2));
    assert!(!b.values.contains_key("level") && !b.values.contains_key("base"));
    let notes: Vec<&str> = b.notes.iter().map(|n| n.message.as_str()).collect();
    assert_eq!(
        notes,
        [
            "data= is now table=; the old name still works in this version",
            "level= is now confidence=; the old name still works in this version",
            "missing= is now gaps=; the old name still works in this version",
            "base(…) is now against(…); the old name still works in this version",
        ],
        "one note per old name, in the order written"
    );
    assert!(b.notes.iter().all(|n| n.severity == crate::problems::Severity::Note && n.cell == Some(at())));
    assert_eq!(carets(&b.notes[1]), carets_under(text, "level"));
    assert_eq!(carets(&b.notes[3]), carets_under(text, "base"));
    // The note reaches the resolved request with the rows left out.
    let r = resolve_text("#linear(Level, Hours, level=0.9)", &spec).unwrap();
    assert_eq!(r.request.level, 0.9);
    assert!(r.warnings.iter().any(|w| w.message.starts_with("level= is now confidence=")), "{:?}", r.warnings);
    // An old name and its new one together are one option given twice.
    let p = bind_text("#linear(Level, Hours, level=0.9, confidence=0.8)", &spec).unwrap_err();
    assert_eq!(p.message, "the option confidence is given twice");
    // A wrong value under the old name is called by the name written.
    let p = bind_text("#linear(Level, Hours, missing=maybe)", &spec).unwrap_err();
    assert_eq!(p.message, "missing=maybe is not one of the choices");
    // #predict: level= is its confidence=; data= is not an option of it, so
    // still a column's new value.
    let text = "#predict(main, Light=14, level=0.9, data=3)";
    let b = bind_text(text, &host("predict")).unwrap();
    assert_eq!(b.values.get("confidence"), Some(&OptionValue::Number(0.9)));
    assert_eq!(b.extra.iter().map(|x| x.name.as_str()).collect::<Vec<_>>(), ["Light", "data"]);
    assert_eq!(b.notes.len(), 1);
    assert_eq!(b.notes[0].message, "level= is now confidence=; the old name still works in this version");
}

#[test]
fn the_host_options_stay_out_of_the_fits_options() {
    let spec = builtin("linear");
    let r = resolve_text("#linear(Level, Hours + Bay, weights=Light, against(Bay=\"South\"), errors=hc3, name=m, confidence=0.9)", &spec).unwrap();
    let keys: Vec<&str> = r.request.options.keys().map(|k| k.as_str()).collect();
    assert_eq!(keys, ["errors"]);
    assert_eq!(r.request.level, 0.9);
    assert_eq!(r.name.as_deref(), Some("m"));
    assert!(r.request.weights.is_some());
    let names: Vec<&str> = r.request.columns.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(names, ["Hours", "Bay: East vs South", "Bay: North vs South"], "South is the reference level");
}

/// `#tuned(response, terms, limits(…))`: a fit with a group option of its own.
fn tuned() -> FunctionSpec {
    let mut options = crate::fits::linear::shared_options();
    options.push(ParamSpec { required: false, ..param("limits", ParamKind::Group, "bounds of the search, such as limits(lo=1, hi=9)") });
    FunctionSpec {
        name: "tuned".into(),
        help: "a test fit".into(),
        positional: vec![param("response", ParamKind::Column, "the column to explain"), param("terms", ParamKind::Terms, "the terms")],
        options,
    }
}

#[test]
fn a_fits_own_group_reaches_it_with_numbers_and_text() {
    let r = resolve_text("#tuned(Level, Hours, limits(lo=-1, hi=9.5, how=fast), against(Bay=East))", &tuned()).unwrap();
    let want = OptionValue::Group(BTreeMap::from([
        ("lo".to_string(), OptionValue::Number(-1.0)),
        ("hi".to_string(), OptionValue::Number(9.5)),
        ("how".to_string(), OptionValue::Text("fast".into())),
    ]));
    assert_eq!(r.request.options.get("limits"), Some(&want));
    assert!(!r.request.options.contains_key("against"));
}

#[test]
fn a_second_column_argument_gives_the_model_its_columns() {
    let r = resolve_text("#polynomial(Level, Hours, degree=2)", &builtin("polynomial")).unwrap();
    assert_eq!(r.request.columns.iter().map(|c| c.name.as_str()).collect::<Vec<_>>(), ["Hours"]);
    assert_eq!(r.terms, ["Hours"]);
    assert_eq!(r.request.options.get("degree"), Some(&OptionValue::Number(2.0)));
}

/// `#curve(response, model, start(…))`: a test-only fit of a model with
/// parameters, as a plugin would declare it.
fn curve() -> FunctionSpec {
    let opt = |name: &str, kind: ParamKind, default: Option<&str>, choices: &[&str]| ParamSpec {
        required: false,
        default: default.map(Into::into),
        choices: choices.iter().map(|c| c.to_string()).collect(),
        ..param(name, kind, "")
    };
    FunctionSpec {
        name: "curve".into(),
        help: "a test fit of a model with parameters".into(),
        positional: vec![param("response", ParamKind::Column, "the column to explain"), param("model", ParamKind::Expression, "the model, such as a*exp(-k*Hours)")],
        options: vec![
            opt("start", ParamKind::Group, None, &[]),
            opt("name", ParamKind::Text, None, &[]),
            opt("level", ParamKind::Number, Some("0.95"), &[]),
            opt("missing", ParamKind::Choice, Some("skip"), &["skip", "stop"]),
            opt("data", ParamKind::Range, None, &[]),
            opt("weights", ParamKind::Column, None, &[]),
        ],
    }
}

#[test]
fn start_values_reach_the_fit_as_a_group_of_numbers() {
    let r = resolve_text("#curve(Level, a*exp(-k*Hours) + c, start(a=40, k=0.2, c=-0.5))", &curve()).unwrap();
    let want = OptionValue::Group(BTreeMap::from([
        ("a".to_string(), OptionValue::Number(40.0)),
        ("k".to_string(), OptionValue::Number(0.2)),
        ("c".to_string(), OptionValue::Number(-0.5)),
    ]));
    assert_eq!(r.request.options.get("start"), Some(&want));
    let x = r.request.expression.as_ref().expect("the request carries the model");
    assert_eq!(x.text, "a*exp(-k*Hours) + c");
    assert_eq!(x.parameters, ["a", "k", "c"], "in the order start(…) lists them");
    assert!(!r.request.intercept, "the model has its own constant");
    assert_eq!(r.terms, ["a*exp(-k*Hours) + c"]);
    // The recipe rebuilds the model's one column, Hours, from a new value.
    let rec = r.recipe.as_ref().expect("a model of named columns has a recipe");
    assert_eq!(rec.inputs.iter().map(|i| i.name.as_str()).collect::<Vec<_>>(), ["Hours"]);
    assert_eq!(rec.columns_at(&[crate::recipe::NewValue::Number(2.5)]).unwrap(), [2.5]);
    assert_eq!(rec.single_input.as_deref(), Some(r.request.columns[0].values.as_slice()));
}

#[test]
fn the_formula_evaluates_the_model_on_the_request_columns() {
    let r = resolve_text("#curve(Level, a*exp(-k*Hours) + c, start(a=40, k=0.2, c=0))", &curve()).unwrap();
    let q = &r.request;
    let names: Vec<&str> = q.columns.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(names, ["Hours"]);
    assert_eq!(q.columns[0].values, (0..12).map(f64::from).collect::<Vec<_>>());
    let x = q.expression.as_ref().unwrap();
    for i in 0..q.rows() {
        let h = q.columns[0].values[i];
        // The model as typed, a·e^(−k·h) + c, at a=40, k=0.2, c=1.5.
        let want = 40.0 * (-0.2 * h).exp() + 1.5;
        assert_eq!(x.formula.eval(&[h], &[40.0, 0.2, 1.5]), want, "row {i}");
    }
    // The response is the column argument.
    assert_eq!(q.response.name, "Level");
    assert_eq!(q.response.values.len(), 12);
}

#[test]
fn columns_of_a_model_are_headers_quoted_headers_or_ranges_in_order_of_first_use() {
    let text = "#curve(Level, a*sin(pi*\"light\"/12) + b*Data!A2:A13 + a*Light, start(b=1, a=2))";
    let r = resolve_text(text, &curve()).unwrap();
    let q = &r.request;
    assert_eq!(q.columns.iter().map(|c| c.name.as_str()).collect::<Vec<_>>(), ["light", "Data!A2:A13"]);
    let x = q.expression.as_ref().unwrap();
    assert_eq!(x.parameters, ["b", "a"]);
    let (light, hours) = (&q.columns[0].values, &q.columns[1].values);
    assert_eq!(hours, &(0..12).map(f64::from).collect::<Vec<_>>());
    for i in 0..q.rows() {
        // a·sin(π·Light/12) + b·Hours + a·Light at b=1, a=2, as typed.
        let want = 2.0 * (std::f64::consts::PI * light[i] / 12.0).sin() + 1.0 * hours[i] + 2.0 * light[i];
        assert_eq!(x.formula.eval(&[light[i], hours[i]], &[1.0, 2.0]), want, "row {i}");
    }
    assert!(matches!(&x.formula, Formula::Add(..)));
}

#[test]
fn a_misspelled_column_in_a_model_gets_a_caret_and_a_suggestion() {
    let text = "#curve(Level, a*exp(-k*Hors), start(a=40, k=0.2))";
    let p = resolve_text(text, &curve()).unwrap_err();
    assert_eq!(p.message, "there is no column headed 'Hors' in the table Data!A1:D13, and no parameter of that name in start(…)");
    assert_eq!(carets(&p), carets_under(text, "Hors"));
    assert_eq!(p.help.as_deref(), Some("did you mean Hours? The headers are Hours, Level, Bay, Light; the parameters are a, k"));
}

#[test]
fn unknown_functions_and_unused_parameters_are_pointed_at() {
    let text = "#curve(Level, a*expp(-k*Hours), start(a=40, k=0.2))";
    let p = resolve_text(text, &curve()).unwrap_err();
    assert_eq!(p.message, "'expp' is not a function of the fit language");
    assert_eq!(carets(&p), carets_under(text, "expp"));
    assert!(p.help.as_deref().unwrap().starts_with("did you mean exp? The functions are log, log10, exp, sqrt, abs, sin, cos, tan, atan"), "{:?}", p.help);

    let text = "#curve(Level, a*exp(-0.2*Hours), start(a=40, k=0.2))";
    let p = resolve_text(text, &curve()).unwrap_err();
    assert_eq!(p.message, "the parameter k is not used in the model a*exp(-0.2*Hours)");
    assert_eq!(carets(&p), carets_width(text, "k=0.2", 1));

    let text = "#curve(Level, a*exp(-k*Hours))";
    let p = resolve_text(text, &curve()).unwrap_err();
    assert_eq!(p.message, "the model a*exp(-k*Hours) has no parameters");
    assert_eq!(p.help.as_deref(), Some("give each parameter a starting value in start(…), such as start(a=1, k=0.1)"));

    let p = resolve_text("#curve(Level, a*Bay, start(a=1))", &curve()).unwrap_err();
    assert_eq!(p.message, "'Bay' is a text column (categories), so it cannot be used in arithmetic");
    let p = resolve_text("#curve(Level, a*Hours, start(a=one))", &curve()).unwrap_err();
    assert_eq!(p.message, "the starting value of a must be a number");
}

#[test]
fn rows_with_a_blank_in_a_models_column_are_left_out_and_counted() {
    let text = "#curve(Level, a*exp(-k*Hours), start(a=40, k=0.2))";
    let mut b = book(text);
    b.sheets[0].set(4, 0, crate::cells::Stored::Empty);
    b.sheets[0].set_text(7, 0, "n/a");
    let r = resolve_in(&b, text, &curve()).unwrap();
    assert_eq!(r.request.rows(), 10);
    assert_eq!(r.left_out.total(), 2);
    assert_eq!(
        r.left_out.describe().as_deref(),
        Some("2 rows left out: 1 with a blank cell (first Data!A5), 1 with text in a numeric column (first Data!A8)")
    );
    assert_eq!(r.placement.rows.len(), 10);
    assert!(!r.placement.rows.contains(&4) && !r.placement.rows.contains(&7));
}

#[test]
fn every_term_and_column_keeps_its_place_in_the_request_text() {
    let text = "#linear(log(Level), Hours + Bay + Light * Bay + sqrt(Light), weights=Light)";
    let r = resolve_text(text, &builtin("linear")).unwrap();
    assert_eq!(r.terms, ["Hours", "Bay", "Light * Bay", "sqrt(Light)"]);
    let at = |label: &str| r.span_of(label).map(|s| slice(text, s));
    assert_eq!(at("Hours"), Some("Hours"));
    assert_eq!(at("Bay"), Some("Bay"));
    assert_eq!(r.span_of("Bay"), Some(Span::new(text.find("Bay").unwrap(), text.find("Bay").unwrap() + 3)), "the term, not the product");
    // Indicator and product columns point at their term.
    assert_eq!(at("Bay: North vs East"), Some("Bay"));
    let product = r.request.columns.iter().find(|c| c.name.contains('*')).expect("a product column");
    assert_eq!(product.name, "Light*(Bay: North vs East)", "an indicator in a product is in parentheses");
    assert_eq!(at(&product.name), Some("Light * Bay"));
    assert_eq!(at("Light*Bay"), Some("Light * Bay"), "white space and case aside");
    assert_eq!(at("SQRT(light)"), Some("sqrt(Light)"));
    assert_eq!(at("log(Level)"), Some("log(Level)"), "the response");
    assert_eq!(at("(intercept)"), None);
    assert_eq!(at("Nope"), None);
}

#[test]
fn a_fits_complaint_about_a_term_gets_a_caret_under_it() {
    let text = "#linear(Level, Hours + Bay, name=m)";
    let r = resolve_text(text, &builtin("linear")).unwrap();
    let e = crate::protocol::FitError::new("the term Bay: North vs East has no rows").help("drop it").at_term("Bay: North vs East");
    let p = r.fit_problem(&e, &at(), text);
    assert_eq!(p.message, "the term Bay: North vs East has no rows");
    assert_eq!(p.help.as_deref(), Some("drop it"));
    assert_eq!(carets(&p), carets_under(text, "Bay"));
    // Without a term, or with one the request does not have: no caret.
    assert_eq!(r.fit_problem(&crate::protocol::FitError::new("no"), &at(), text).source, None);
    assert_eq!(r.fit_problem(&crate::protocol::FitError::new("no").at_term("(intercept)"), &at(), text).source, None);
}

#[test]
fn a_models_columns_point_at_their_first_use() {
    let text = "#curve(Level, a*exp(-k*Hours) + c*hours, start(a=40, k=0.2, c=0))";
    let r = resolve_text(text, &curve()).unwrap();
    assert_eq!(r.span_of("Hours").map(|s| slice(text, s)), Some("Hours"));
    assert_eq!(r.span_of("Hours").unwrap().start, text.find("Hours").unwrap());
    assert_eq!(r.span_of("a*exp(-k*Hours) + c*hours").map(|s| slice(text, s)), Some("a*exp(-k*Hours) + c*hours"));
    assert_eq!(r.request.columns.len(), 1, "Hours and hours are one column");
}

#[test]
fn binding_errors_keep_their_messages_and_carets() {
    let linear = builtin("linear");
    // (request, message, the characters under the caret); the messages are
    // those resolve gave before binding went by kind.
    let cases = [
        ("#linear(Level, Hours - Light)", "terms are joined by +; a difference must be in parentheses", "Hours - Light"),
        ("#linear(Level, Hours + 2)", "a number is not a term", "2"),
        ("#linear(Level, Hours, table=2)", "table= takes a sheet name or a range, such as table=Sheet2 or table=Sheet2!A1:F500", "2"),
        ("#linear(Level, Hours, against=East)", "against is written against(column=value)", "against=East"),
        ("#linear(Level, Hours, start(a=1))", "#linear has no option 'start(…)'", "start"),
        ("#linear(Level, Hours, confidence=0.9, Light)", "a positional argument comes after an option", "Light"),
        ("#linear(Level, Hours, Light)", "#linear takes 2 arguments before its options", "Light"),
        ("#linear(Level, Hours, gaps=maybe)", "gaps=maybe is not one of the choices", "maybe"),
        ("#linear(Level, Hours, confidence=high)", "confidence takes a number", "high"),
        ("#linear(Level, Hours, name=3)", "name takes a word or text in double quotes", "3"),
        ("#linear(Level, Hours, against(Bay=-Light))", "give a level as a word or in double quotes", "-Light"),
        ("#polynomial(Level, Hours, degree=2.5)", "degree takes a whole number", "2.5"),
    ];
    for (text, message, under) in cases {
        let spec = if text.starts_with("#poly") { builtin("polynomial") } else { linear.clone() };
        let p = resolve_text(text, &spec).unwrap_err();
        assert_eq!(p.message, message, "{text}");
        let at = text.rfind(under).expect("the fault is in the text");
        assert_eq!(p.source.as_ref().map(|s| (s.1, s.2)), Some((at, at + under.len())), "{text}");
    }
    let p = resolve_text("#linear(Level)", &linear).unwrap_err();
    assert_eq!(p.message, "#linear needs its terms argument (predictor terms joined by +, such as Light + CO2 + Light^2)");
    assert_eq!(carets(&p), "    #linear(Level)\n                 ^\n");
}
