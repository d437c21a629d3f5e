//! What a user reads when a request is wrong: the cell, the request with a
//! caret under the fault, and how to fix it. Built on in-memory workbooks.

use plumb::cells::{Grid, Workbook};
use plumb::fits::Registry;
use plumb::report::Status;
use plumb::pipeline::evaluate_book;

/// A sheet "Weekly" with a small table (Bay text, Light, CO2, Yield) and the
/// given request in H2, H3, ...
fn book(requests: &[&str]) -> Workbook {
    let mut g = Grid::new("Weekly");
    for (c, h) in ["Bay", "Light", "CO2", "Yield"].iter().enumerate() {
        g.set_text(0, c as u32, h);
    }
    for i in 0..20u32 {
        let r = i + 1;
        g.set_text(r, 0, ["North", "South", "East"][i as usize % 3]);
        g.set_number(r, 1, 8.0 + (i % 7) as f64);
        g.set_number(r, 2, 400.0 + 37.0 * ((i * 5) % 11) as f64);
        g.set_number(r, 3, 3.0 + 0.4 * (i % 7) as f64 + 0.002 * ((i * 5) % 11) as f64 + 0.1 * (i % 3) as f64);
    }
    for (k, r) in requests.iter().enumerate() {
        g.set_text(k as u32 + 1, 7, r);
    }
    Workbook { sheets: vec![g] }
}

fn first_problem(request: &str) -> String {
    let s = evaluate_book(&book(&[request]), "book.xlsx", &Registry::builtin());
    assert_eq!(s.reports.len(), 1);
    assert_eq!(s.reports[0].status, Status::Error, "{:?}", s.reports[0]);
    s.problems[0].to_string()
}

#[test]
fn unknown_column_points_at_it_and_suggests_the_closest_header() {
    let m = first_problem("#linear(Yield, Ligth + CO2)");
    assert!(m.starts_with("book.xlsx, Weekly!H2: error: there is no column headed 'Ligth' in the table Weekly!A1:D21\n"), "{m}");
    assert!(m.contains("    #linear(Yield, Ligth + CO2)\n                   ^^^^^\n"), "{m}");
    assert!(m.contains("fix: did you mean Light? The headers are Bay, Light, CO2, Yield"), "{m}");
}

#[test]
fn unknown_function_suggests_the_nearest() {
    let m = first_problem("#linaer(Yield, Light)");
    assert!(m.contains("there is no function #linaer"), "{m}");
    assert!(m.contains("    #linaer(Yield, Light)\n     ^^^^^^\n"), "{m}");
    assert!(m.contains("did you mean #linear?"), "{m}");
}

#[test]
fn unknown_option_lists_the_accepted_ones() {
    let m = first_problem("#linear(Yield, Light, confidnce=0.9)");
    assert!(m.contains("#linear has no option 'confidnce'"), "{m}");
    assert!(m.contains("                          ^^^^^^^^^\n"), "{m}");
    assert!(m.contains("did you mean confidence?"), "{m}");
    assert!(m.contains("name, confidence, intercept, weights, gaps, table, against"), "{m}");
    // A slip of an old name suggests the new one.
    let m = first_problem("#linear(Yield, Light, levl=0.9)");
    assert!(m.contains("did you mean confidence?"), "{m}");
}

#[test]
fn bad_option_values_say_what_is_accepted() {
    let m = first_problem("#linear(Yield, Light, gaps=maybe)");
    assert!(m.contains("gaps=maybe is not one of the choices"), "{m}");
    assert!(m.contains("gaps takes skip, stop"), "{m}");
    let m = first_problem("#linear(Yield, Light, confidence=95)");
    assert!(m.contains("the confidence level 95 is not between 0 and 1"), "{m}");
}

#[test]
fn parse_error_puts_the_caret_on_the_character() {
    let m = first_problem("#linear(Yield, Light +)");
    // The fault is the `)` at character 22, where a term was expected.
    assert!(m.contains("    #linear(Yield, Light +)\n                          ^\n"), "{m}");
    assert!(m.contains("fix: expected"), "{m}");
}

#[test]
fn text_response_and_arithmetic_on_categories_are_refused() {
    let m = first_problem("#linear(Bay, Light)");
    assert!(m.contains("the response 'Bay' is a text column"), "{m}");
    let m = first_problem("#linear(Yield, log(Bay))");
    assert!(m.contains("'Bay' is a text column (categories)"), "{m}");
}

#[test]
fn one_bad_request_costs_only_itself() {
    let s = evaluate_book(&book(&["#linear(Yield, Nope)", "#linear(Yield, Light + Bay, name=ok)"]), "b.xlsx", &Registry::builtin());
    assert_eq!(s.reports[0].status, Status::Error);
    assert_ne!(s.reports[1].status, Status::Error, "{:?}", s.reports[1].messages);
    let terms: Vec<String> = s.reports[1].outcome.as_ref().unwrap().coefficients.iter().map(|c| c.term.clone()).collect();
    // Levels in sorted order: East is the reference level.
    assert_eq!(terms, ["Intercept", "Light", "Bay: North vs East", "Bay: South vs East"]);
}

#[test]
fn reference_level_and_missing_rows() {
    let mut b = book(&["#linear(Yield, Light + Bay, against(Bay=\"South\"), name=a)", "#linear(Yield, Light, gaps=stop, name=b)"]);
    b.sheets[0].set(5, 1, plumb::cells::Stored::Empty);
    b.sheets[0].set_text(9, 1, "n/a");
    let s = evaluate_book(&b, "b.xlsx", &Registry::builtin());
    let a = &s.reports[0];
    assert_eq!(a.rows_used, 18);
    assert_eq!(a.rows_left_out, 2);
    assert!(a.notes.iter().any(|m| m.contains("2 rows left out: 1 with a blank cell (first Weekly!B6), 1 with text in a numeric column (first Weekly!B10)")), "{:?}", a.notes);
    let terms: Vec<String> = a.outcome.as_ref().unwrap().coefficients.iter().map(|c| c.term.clone()).collect();
    assert_eq!(terms, ["Intercept", "Light", "Bay: East vs South", "Bay: North vs South"]);
    assert_eq!(s.reports[1].status, Status::Error);
    assert!(s.reports[1].messages[0].contains("gaps=stop and 2 rows left out"), "{:?}", s.reports[1].messages);
}

#[test]
fn the_old_option_names_still_work_with_a_note() {
    // Each old spelling gives the fit of the new one, and a note naming the new.
    let old = ["#linear(Yield, Light + Bay, data=Weekly!A1:D21, level=0.9, missing=skip, base(Bay=\"South\"), name=old)", "#predict(old, Light=12, Bay=\"North\", level=0.8)"];
    let new = ["#linear(Yield, Light + Bay, table=Weekly!A1:D21, confidence=0.9, gaps=skip, against(Bay=\"South\"), name=old)", "#predict(old, Light=12, Bay=\"North\", confidence=0.8)"];
    let (s_old, s_new) = (evaluate_book(&book(&old), "b.xlsx", &Registry::builtin()), evaluate_book(&book(&new), "b.xlsx", &Registry::builtin()));
    for (a, b) in s_old.reports.iter().zip(&s_new.reports) {
        assert_ne!(a.status, Status::Error, "{:?}", a.messages);
        assert_eq!((a.status, &a.messages, &a.outcome, &a.host, a.level), (b.status, &b.messages, &b.outcome, &b.host, b.level), "{}", a.text);
        assert!(b.notes.iter().all(|n| !n.contains("is now")), "{:?}", b.notes);
    }
    assert_eq!(s_old.reports[0].level, 0.9);
    assert_eq!(s_old.reports[1].level, 0.8);
    let notes = &s_old.reports[0].notes;
    for (was, now) in [("data=", "table="), ("level=", "confidence="), ("missing=", "gaps="), ("base(…)", "against(…)")] {
        let want = format!("{was} is now {now}; the old name still works in this version");
        assert!(notes.contains(&want), "{want} not among {notes:?}");
    }
    assert_eq!(s_old.reports[1].notes, ["level= is now confidence=; the old name still works in this version"]);
}

#[test]
fn collinear_terms_are_named() {
    let s = evaluate_book(&book(&["#linear(Yield, Light + (Light*2) + CO2, name=c)"]), "b.xlsx", &Registry::builtin());
    let r = &s.reports[0];
    assert_eq!(r.status, Status::Warning, "{:?}", r.messages);
    assert!(r.messages.iter().any(|m| m.contains("collinear") && m.contains("Light")), "{:?}", r.messages);
    let c = &r.outcome.as_ref().unwrap().coefficients;
    assert_eq!(c.iter().filter(|c| c.estimate.is_none()).count(), 1);
}

#[test]
fn powers_of_one_column_draw_no_collinearity_warning() {
    // Light and Light^2 are collinear by construction (common practice: their
    // VIFs are large without harm), so their VIFs are left blank with the
    // reason and only a note is given; a genuinely redundant pair of
    // distinct columns still warns.
    let s = evaluate_book(&book(&["#linear(Yield, Light + Light^2, name=q)"]), "b.xlsx", &Registry::builtin());
    let r = &s.reports[0];
    let o = r.outcome.as_ref().unwrap();
    assert!(o.coefficients.iter().skip(1).all(|c| c.vif.is_none() && c.remark.as_deref().is_some_and(|w| w.contains("power"))), "{:?}", o.coefficients);
    assert!(!r.messages.iter().any(|m| m.contains("nearly collinear")), "{:?}", r.messages);
    assert!(o.notes.iter().any(|n| n.contains("collinear by construction")), "{:?}", o.notes);
}


// #nonlinear's bad input (issue 10), on the same Weekly table. Each message
// is checked word for word where it matters: the cell, the caret, the fix.

#[test]
fn nonlinear_parameter_the_model_never_uses() {
    let m = first_problem("#nonlinear(Yield, a*Light, start(a=1, b=2))");
    assert!(m.starts_with("book.xlsx, Weekly!H2: error: the parameter b is not used in the model a*Light\n"), "{m}");
    assert!(m.contains("    #nonlinear(Yield, a*Light, start(a=1, b=2))\n                                          ^\n"), "{m}");
    assert!(m.contains("fix: use b in the model, or leave it out of start(…)"), "{m}");
}

#[test]
fn nonlinear_name_neither_parameter_nor_column_suggests_the_nearest_header() {
    let m = first_problem("#nonlinear(Yield, a*Ligth, start(a=1))");
    assert!(m.starts_with("book.xlsx, Weekly!H2: error: there is no column headed 'Ligth' in the table Weekly!A1:D21, and no parameter of that name in start(…)\n"), "{m}");
    assert!(m.contains("    #nonlinear(Yield, a*Ligth, start(a=1))\n                        ^^^^^\n"), "{m}");
    assert!(m.contains("fix: did you mean Light? The headers are Bay, Light, CO2, Yield; the parameters are a"), "{m}");
}

#[test]
fn nonlinear_single_letter_without_a_start_value_is_taken_for_a_parameter() {
    let m = first_problem("#nonlinear(Yield, a*exp(-k*Light), start(a=1))");
    assert!(m.starts_with("book.xlsx, Weekly!H2: error: k has no starting value: it is no header of the table Weekly!A1:D21, so it is taken for a parameter\n"), "{m}");
    assert!(m.contains("    #nonlinear(Yield, a*exp(-k*Light), start(a=1))\n                             ^\n"), "{m}");
    assert!(m.contains("fix: add it to the starting values, start(a=…, k=…), or write the column's header"), "{m}");
}

#[test]
fn nonlinear_model_undefined_at_the_start_names_the_sheet_row() {
    // Light is 8 in row 2 of Weekly: log(8 − 10) is not a number.
    let m = first_problem("#nonlinear(Yield, a*log(Light - b), start(a=1, b=10))");
    assert!(m.starts_with("book.xlsx, Weekly!H2: error: the model is not a number at the starting values in row 2 of Weekly\n"), "{m}");
    assert!(m.contains("fix: check the starting values: a logarithm or square root of a negative number"), "{m}");
}

#[test]
fn nonlinear_singular_jacobian_at_the_start_names_the_parameter() {
    // With a = 0 the model a·b·Light + c does not change with b.
    let m = first_problem("#nonlinear(Yield, a*b*Light + c, start(a=0, b=1, c=1))");
    assert!(m.starts_with("book.xlsx, Weekly!H2: error: at the starting values the model does not change with b independently of the other parameters, so it cannot be estimated from there\n"), "{m}");
    assert!(m.contains("    #nonlinear(Yield, a*b*Light + c, start(a=0, b=1, c=1))\n                                                ^\n"), "{m}");
    assert!(m.contains("fix: change the starting values"), "{m}");
}

#[test]
fn nonlinear_no_convergence_within_the_limit_gives_the_values_reached() {
    let m = first_problem("#nonlinear(Yield, a*exp(-k*Light) + c, start(a=1, k=0.1, c=1), limit=2)");
    // Two trial steps, neither lowering the sum of squares: still at the start.
    assert!(m.starts_with("book.xlsx, Weekly!H2: error: no convergence within limit=2 iterations: it stopped at start(a=1, k=0.1, c=1) (residual sum of squares "), "{m}");
    assert!(m.contains("); no trial step lowered the residual sum of squares from the starting values\n"), "{m}");
    assert!(m.contains("fix: raise limit=, or go on from the values reached: paste them over start(…)"), "{m}");
    // Yield grows about linearly with Light, so a·Light^b has a minimum near b = 1.
    let m = first_problem("#nonlinear(Yield, a*Light^b, start(a=1, b=2), limit=3)");
    assert!(m.contains("no convergence within limit=3 iterations: it stopped at start(a="), "{m}");
    assert!(m.contains("the last accepted step came from start(a="), "{m}");
    assert!(!m.contains("NaN"), "{m}");
    // The values reached, pasted over start(…), go on to a converged fit.
    let reached = &m[m.find("stopped at ").unwrap() + 11..m.find(" (residual").unwrap()];
    let s = evaluate_book(&book(&[&format!("#nonlinear(Yield, a*Light^b, {reached})")]), "book.xlsx", &Registry::builtin());
    assert_ne!(s.reports[0].status, Status::Error, "{reached}: {:?}", s.reports[0].messages);
}
