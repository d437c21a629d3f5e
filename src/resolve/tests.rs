//! Binding by kind, group options, model expressions and spans, on small
//! in-memory workbooks and test-only specs.

use super::*;
use crate::fits::{host_functions, Registry};
use crate::protocol::{ParamKind, ParamSpec};
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
    ParamSpec { name: name.into(), kind, required: true, default: None, choices: Vec::new(), help: help.into() }
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

#[test]
fn predict_binds_its_fit_its_options_and_any_column_as_a_pair() {
    let spec = host("predict");
    let text = "#predict(main, Light=14, Bay=\"North\", level=0.9, Hours=-2)";
    let b = bind_text(text, &spec).unwrap();
    assert_eq!(b.positional.len(), 1);
    assert_eq!(b.positional[0].value, BoundValue::FitName("main".into()));
    assert_eq!(slice(text, b.positional[0].span), "main");
    assert_eq!(b.option("level").map(|o| &o.value), Some(&BoundValue::Number(0.9)));
    assert_eq!(b.values.get("level"), Some(&OptionValue::Number(0.9)));
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
    let p = bind_text("#compare(main, curved, level=0.9)", &spec).unwrap_err();
    assert_eq!(p.message, "#compare has no option 'level'");
}

#[test]
fn linear_binds_each_argument_by_its_kind() {
    let spec = builtin("linear");
    let text = "#linear(log(Level), Hours + Bay + Hours*Light, weights=Light, data=Data!A1:D13, missing=stop, base(Bay=\"South\"))";
    let b = bind_text(text, &spec).unwrap();
    assert!(matches!(&b.positional[0].value, BoundValue::Column(e) if slice(text, e.span) == "log(Level)"));
    match &b.positional[1].value {
        BoundValue::Terms(t) => assert_eq!(t.iter().map(|e| slice(text, e.span)).collect::<Vec<_>>(), ["Hours", "Bay", "Hours*Light"]),
        other => panic!("terms bound as {other:?}"),
    }
    assert!(matches!(&b.option("weights").unwrap().value, BoundValue::Column(e) if slice(text, e.span) == "Light"));
    assert!(matches!(&b.option("data").unwrap().value, BoundValue::Range(Place::Range(_))));
    assert_eq!(b.option("missing").unwrap().value, BoundValue::Choice("stop".into()));
    match &b.option("base").unwrap().value {
        BoundValue::Group(g) => {
            assert_eq!((g[0].key.as_str(), &g[0].value), ("Bay", &OptionValue::Text("South".into())));
            assert_eq!(slice(text, g[0].key_span), "Bay");
        }
        other => panic!("base bound as {other:?}"),
    }
    // Defaults are values too.
    assert_eq!(b.values.get("errors"), Some(&OptionValue::Text("classic".into())));
    assert_eq!(b.values.get("level"), Some(&OptionValue::Number(0.95)));
}

#[test]
fn the_host_options_stay_out_of_the_fits_options() {
    let spec = builtin("linear");
    let r = resolve_text("#linear(Level, Hours + Bay, weights=Light, base(Bay=\"South\"), errors=hc3, name=m, level=0.9)", &spec).unwrap();
    let keys: Vec<&str> = r.request.options.keys().map(|k| k.as_str()).collect();
    assert_eq!(keys, ["errors"]);
    assert_eq!(r.request.level, 0.9);
    assert_eq!(r.name.as_deref(), Some("m"));
    assert!(r.request.weights.is_some());
    let names: Vec<&str> = r.request.columns.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(names, ["Hours", "Bay=East", "Bay=North"], "South is the base level");
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
    let r = resolve_text("#tuned(Level, Hours, limits(lo=-1, hi=9.5, how=fast), base(Bay=East))", &tuned()).unwrap();
    let want = OptionValue::Group(BTreeMap::from([
        ("lo".to_string(), OptionValue::Number(-1.0)),
        ("hi".to_string(), OptionValue::Number(9.5)),
        ("how".to_string(), OptionValue::Text("fast".into())),
    ]));
    assert_eq!(r.request.options.get("limits"), Some(&want));
    assert!(!r.request.options.contains_key("base"));
}

#[test]
fn a_second_column_argument_gives_the_model_its_columns() {
    let r = resolve_text("#polynomial(Level, Hours, degree=2)", &builtin("polynomial")).unwrap();
    assert_eq!(r.request.columns.iter().map(|c| c.name.as_str()).collect::<Vec<_>>(), ["Hours"]);
    assert_eq!(r.terms, ["Hours"]);
    assert_eq!(r.request.options.get("degree"), Some(&OptionValue::Number(2.0)));
}
