//! The options of the linear family checked for accuracy and for their
//! messages: zero and negative or non-numeric weights, the uncentred R²
//! without an intercept, tiny p-values written as such, and the analysis of
//! variance block. In-memory workbooks for messages; a written and re-read
//! workbook (calamine) for what a reader sees.

mod common;

use common::output;
use plumb::cells::{Grid, Workbook};
use plumb::fits::Registry;
use plumb::report::Status;
use plumb::numeric::t_sf;
use common::run::run_to;
use plumb::pipeline::evaluate_book;

/// Sheet "Bays": Light (B), Yield (C), Beds (D, the weights) and the
/// request in F2. `beds` gives each row's weight cell.
fn book(request: &str, beds: &[Option<&str>]) -> Workbook {
    let mut g = Grid::new("Bays");
    for (c, h) in ["Bay", "Light", "Yield", "Beds"].iter().enumerate() {
        g.set_text(0, c as u32, h);
    }
    for (i, b) in beds.iter().enumerate() {
        let r = i as u32 + 1;
        g.set_text(r, 0, &format!("B{r}"));
        let light = 6.0 + i as f64 * 0.5;
        g.set_number(r, 1, light);
        g.set_number(r, 2, 1.5 + 0.4 * light + 0.05 * ((i * 7) % 5) as f64);
        if let Some(t) = b {
            match t.parse::<f64>() {
                Ok(x) => g.set_number(r, 3, x),
                Err(_) => g.set_text(r, 3, t),
            }
        }
    }
    g.set_text(1, 5, request);
    Workbook { sheets: vec![g] }
}

fn ones(n: usize) -> Vec<Option<&'static str>> {
    vec![Some("1"); n]
}

#[test]
fn zero_weight_leaves_the_row_out_and_counts_it() {
    let mut beds = ones(10);
    beds[3] = Some("0");
    let s = evaluate_book(&book("#linear(Yield, Light, weights=Beds)", &beds), "book.xlsx", &Registry::builtin());
    let r = &s.reports[0];
    assert_ne!(r.status, Status::Error, "{:?}", r.messages);
    assert_eq!((r.rows_used, r.rows_left_out), (9, 1));
    // Leaving the row out is a note, not a warning.
    assert!(r.notes.iter().any(|m| m.contains("1 with zero weight")), "{:?}", r.notes);
    assert!(!r.messages.iter().any(|m| m.contains("zero weight")), "{:?}", r.messages);
    // The same fit as leaving the row out by hand (common practice).
    let mut beds2 = ones(10);
    beds2[3] = None;
    let s2 = evaluate_book(&book("#linear(Yield, Light, weights=Beds)", &beds2), "book.xlsx", &Registry::builtin());
    let (a, b) = (r.outcome.as_ref().unwrap(), s2.reports[0].outcome.as_ref().unwrap()); // both fitted, asserted by status
    assert_eq!(a.coefficients[1].estimate, b.coefficients[1].estimate);
}

#[test]
fn negative_weight_is_an_error_naming_its_cell() {
    let mut beds = ones(10);
    beds[4] = Some("-2");
    let s = evaluate_book(&book("#linear(Yield, Light, weights=Beds)", &beds), "book.xlsx", &Registry::builtin());
    assert_eq!(s.reports[0].status, Status::Error);
    let m = s.problems[0].to_string();
    // Row 6 of the sheet, column D (Beds): Bays!D6.
    assert!(m.contains("the weight at Bays!D6 is negative (-2)"), "{m}");
    assert!(m.starts_with("book.xlsx, Bays!F2: error:"), "{m}");
}

#[test]
fn text_weight_is_an_error_naming_its_cell() {
    let mut beds = ones(10);
    beds[1] = Some("two");
    let s = evaluate_book(&book("#linear(Yield, Light, weights=Beds)", &beds), "book.xlsx", &Registry::builtin());
    assert_eq!(s.reports[0].status, Status::Error);
    let m = s.problems[0].to_string();
    assert!(m.contains("the weight at Bays!D3 is text, not a number"), "{m}");
}

#[test]
fn no_intercept_reports_the_uncentred_r_squared() {
    let s = evaluate_book(&book("#linear(Yield, Light, intercept=no)", &ones(10)), "book.xlsx", &Registry::builtin());
    let o = s.reports[0].outcome.as_ref().expect("fitted");
    let r2 = o.statistics.iter().find(|x| x.key == "r_squared").expect("R² present");
    assert_eq!(r2.label, "R² (uncentred, no intercept)");
    // Uncentred R² = 1 − SSE/Σy² (NIST StRD NoInt1/NoInt2 definition).
    let sse = o.statistic("ss_resid").unwrap();
    let syy = o.statistic("ss_total").unwrap();
    assert!((r2.value - (1.0 - sse / syy)).abs() < 1e-15);
}

#[test]
fn analysis_of_variance_is_complete() {
    let s = evaluate_book(&book("#polynomial(Yield, Light, degree=2)", &ones(10)), "book.xlsx", &Registry::builtin());
    let o = s.reports[0].outcome.as_ref().expect("fitted");
    for key in ["df_model", "ss_model", "ms_model", "df_resid", "ss_resid", "ms_resid", "ss_total", "df_total", "anova_f", "anova_f_p_value"] {
        let st = o.statistics.iter().find(|x| x.key == key).unwrap_or_else(|| panic!("no {key}"));
        assert_eq!(st.group, "Analysis of variance", "{key}");
    }
    // Textbook identities (common practice): SS add up, MS = SS/df, F = MSR/MSE.
    let g = |k: &str| o.statistic(k).unwrap();
    assert!((g("ss_model") + g("ss_resid") - g("ss_total")).abs() < 1e-12 * g("ss_total"));
    assert!((g("ms_model") - g("ss_model") / g("df_model")).abs() < 1e-14 * g("ms_model"));
    assert!((g("anova_f") - g("ms_model") / g("ms_resid")).abs() < 1e-12 * g("anova_f"));
    assert_eq!(g("df_total"), 9.0);
}

#[test]
fn a_tiny_p_value_is_written_as_such_not_zero() {
    // 62 rows on a line with noise of 1e-3: t ≈ 1.4e5 on 60 df, a two-sided
    // p-value near 1e-256. It must reach the workbook as a positive number
    // equal to 2·P(T > |t|) (survival function, common practice), not 0.
    let dir = common::run::scratch("tiny-p");
    let input = dir.join("tiny.xlsx");
    let x: Vec<Option<f64>> = (1..=62).map(|i| Some(i as f64)).collect();
    let y: Vec<Option<f64>> = (1..=62).map(|i| Some(i as f64 + if i % 2 == 0 { 1e-3 } else { -1e-3 })).collect();
    common::workbooks::write_table(&input, "Data", &["x", "y"], &[x, y], &[(0, 4, "#linear(y, x, name=tiny)")]);
    let out = dir.join("out.xlsx");
    let s = run_to(&input, &out);
    assert!(!s.any_failed(), "{:?}", s.problems);
    let c = &output::coefficients(&out, "tiny")[1];
    let (t, p) = (c.t.expect("t written"), c.p.expect("p written"));
    assert!(p > 0.0 && p < 1e-200, "p = {p}");
    let want = 2.0 * t_sf(t.abs(), 60.0);
    assert!(((p - want) / want).abs() < 1e-12, "{p} vs {want}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_polynomial_on_too_few_distinct_values_names_the_aliased_power() {
    // Light takes only three distinct values, so Light³ is an exact
    // combination of 1, Light, Light² (common practice: a cubic through
    // three points is not identifiable).
    let mut g = Grid::new("Bays");
    g.set_text(0, 0, "Light");
    g.set_text(0, 1, "Yield");
    for i in 0..12u32 {
        let light = [6.0, 8.0, 11.0][i as usize % 3];
        g.set_number(i + 1, 0, light);
        g.set_number(i + 1, 1, 2.0 + 0.3 * light + 0.01 * (i % 5) as f64);
    }
    g.set_text(1, 3, "#polynomial(Yield, Light, degree=3)");
    let s = evaluate_book(&Workbook { sheets: vec![g] }, "book.xlsx", &Registry::builtin());
    let o = s.reports[0].outcome.as_ref().expect("fitted with a warning");
    let est: Vec<bool> = o.coefficients.iter().map(|c| c.estimate.is_some()).collect();
    assert_eq!(est, [true, true, true, false], "{:?}", o.coefficients);
    assert!(o.warnings.iter().any(|w| w.starts_with("the term Light^3 is an exact combination of")), "{:?}", o.warnings);
    assert_eq!(o.statistic("parameters"), Some(3.0));
}
