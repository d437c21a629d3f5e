//! `#nonlinear` and `#predict` on a real data set through the whole tool,
//! against scipy: Engel's food expenditure data (tests/data/engel.csv, the
//! statsmodels 0.15.0 package's copy, public domain; 235 Belgian households,
//! 1857) with the power curve `foodexp = a*income^b` from a = 1, b = 1.
//! tests/data/engel_nonlinear.json is written by
//! tests/reference/engel_nonlinear.py (scipy 1.17.1
//! `optimize.least_squares` / `curve_fit` with method "lm", polished by
//! Gauss–Newton steps in numpy 2.4.6; the delta-method standard errors and
//! both intervals in numpy from the analytic gradient and pcov, the t
//! quantile from `scipy.stats.t`; versions recorded in the file).
//! Every figure is held to 1e-10 relative; the largest difference measured
//! is 1.9e-12 (the standard error of a), printed with --nocapture.

mod common;

use common::data::{csv, relative_difference, Worst};
use common::output::{self, num, text};
use common::run::{run_to, scratch};
use common::workbooks::pinned_workbook;
use plumb::report::Status;
use serde_json::Value as Json;

/// The agreement asserted: 1e-10 relative.
const TOLERANCE: f64 = 1e-10;

fn reference() -> Json {
    serde_json::from_str(include_str!("data/engel_nonlinear.json")).expect("tests/data/engel_nonlinear.json is JSON")
}

#[test]
fn engel_power_curve_and_predictions_match_scipy() {
    let refs = reference();
    let (headers, cols) = csv(include_str!("data/engel.csv"));
    assert_eq!(headers, ["income", "foodexp"]);
    assert_eq!(cols[0].len(), refs["n"].as_u64().unwrap() as usize);
    let incomes: Vec<f64> = refs["predictions"].as_array().unwrap().iter().map(|p| p["income"].as_f64().unwrap()).collect();
    let one = format!("#predict(engel, income={})", incomes[0]);
    let requests = ["#nonlinear(foodexp, a*income^b, start(a=1, b=1), name=engel)", "#predict(engel, rows=Plan!A1:A4)", one.as_str()];
    let d = scratch("engel-nonlinear");
    let input = d.join("engel.xlsx");
    // Sheet Households: the data in A:B, the requests in F2:F4; sheet Plan:
    // the new incomes under the header income.
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name("Households").unwrap();
    for (j, (h, col)) in headers.iter().zip(&cols).enumerate() {
        ws.write_string(0, j as u16, h).unwrap();
        for (i, v) in col.iter().enumerate() {
            ws.write_number(i as u32 + 1, j as u16, *v).unwrap();
        }
    }
    for (i, r) in requests.iter().enumerate() {
        ws.write_string(i as u32 + 1, 5, *r).unwrap();
    }
    let plan = wb.add_worksheet();
    plan.set_name("Plan").unwrap();
    plan.write_string(0, 0, "income").unwrap();
    for (i, x) in incomes.iter().enumerate() {
        plan.write_number(i as u32 + 1, 0, *x).unwrap();
    }
    wb.save(&input).unwrap();
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    for r in &s.reports {
        assert_ne!(r.status, Status::Error, "{}: {:?}", r.text, r.messages);
    }
    let mut worst = Worst::new(TOLERANCE, 0.0, "scipy 1.17.1");

    // Parameters, standard errors, RSS and residual SD.
    let coefs = output::coefficients(&out, "engel");
    assert_eq!(coefs.iter().map(|c| c.term.as_str()).collect::<Vec<_>>(), ["a", "b"]);
    for c in &coefs {
        worst.check(c.estimate, &refs["estimates"][&c.term], &format!("estimate of {}", c.term));
        worst.check(c.std_error, &refs["std_errors"][&c.term], &format!("standard error of {}", c.term));
    }
    worst.check(output::statistic(&out, "engel", "Residual sum of squares"), &refs["rss"], "residual sum of squares");
    worst.check(output::statistic(&out, "engel", "Residual standard error"), &refs["residual_sd"], "residual standard error");
    assert_eq!(output::statistic(&out, "engel", "Degrees of freedom, residual (n − p)"), refs["df_resid"].as_f64());

    // The rows= table: income, predicted value, both intervals, the
    // standard error of the fitted value (headings of src/layout/intervals.rs).
    let t = output::table(&out, "Intervals");
    let title = format!("Predictions — {}", requests[1]);
    let at = t.iter().position(|r| r.first().and_then(text) == Some(title.as_str())).unwrap_or_else(|| panic!("no table {title}"));
    let heads: Vec<&str> = t[at + 2].iter().map(|d| text(d).unwrap_or("")).collect();
    assert_eq!(
        heads[..7],
        ["income", "Predicted value", "Confidence interval: from", "Confidence interval: to", "Prediction interval: from", "Prediction interval: to", "Standard error of the fitted value"]
    );
    let rows: Vec<&Vec<calamine::Data>> = t[at + 3..].iter().take_while(|r| r.first().and_then(num).is_some()).collect();
    assert_eq!(rows.len(), incomes.len());
    for (row, w) in rows.iter().zip(refs["predictions"].as_array().unwrap()) {
        let x = w["income"].as_f64().unwrap();
        assert_eq!(num(&row[0]), Some(x));
        for (c, key) in [(1, "fitted"), (2, "mean_lower"), (3, "mean_upper"), (4, "obs_lower"), (5, "obs_upper"), (6, "se_fit")] {
            worst.check(num(&row[c]), &w[key], &format!("{key} at income {x}"));
        }
    }
    // The one-point request: its cell holds the predicted value.
    let sheet = output::table(&out, "Households");
    worst.check(num(&sheet[3][5]), &refs["predictions"][0]["fitted"], "the one-point request's cell");
    // The Charts sheet: the one-column model gets the data with its fitted
    // curve, x = income in increasing order, the curve's values those of
    // a·income^b at the estimates shown (common practice: the model itself).
    let charts = output::chart_parts(&out);
    let (titles, ranges) = &charts[0];
    assert_eq!(titles[0], "foodexp against income, with the fitted line");
    let ct = output::table(&out, "Charts");
    let column = |r: &str| -> (String, Vec<f64>) {
        let (c, r0, r1) = output::parse_range(r);
        let head = text(&ct[r0 as usize - 1][c as usize]).unwrap_or("").to_string();
        (head, (r0..=r1).map(|i| num(&ct[i as usize][c as usize]).unwrap()).collect())
    };
    let (hx, xs) = column(&ranges[0]);
    let (hy, ys) = column(&ranges[1]);
    assert_eq!((hx.as_str(), hy.as_str()), ("income", "Observed"));
    assert_eq!(ranges[2], ranges[0], "the fitted curve shares the x column");
    let (hf, fs) = column(&ranges[3]);
    assert_eq!(hf, "Fitted");
    assert!(xs.len() >= 100 && xs.windows(2).all(|w| w[0] <= w[1]), "{} x values in increasing order", xs.len());
    let (a, b) = (coefs[0].estimate.unwrap(), coefs[1].estimate.unwrap());
    for ((x, y), f) in xs.iter().zip(&ys).zip(&fs) {
        let want = a * x.powf(b);
        assert!(relative_difference(*f, want) < 1e-12, "fitted curve at income {x}: {f}, a·x^b = {want}");
        // Observed is written as fitted + residual: a data row of this
        // income (three incomes occur twice) to rounding.
        let found = (0..cols[0].len()).any(|i| cols[0][i] == *x && relative_difference(*y, cols[1][i]) < 1e-12);
        assert!(found, "observed {y} at income {x} is no data row");
    }
    // The prediction calculator of the curve: a·income^b written live over
    // the income and coefficient cells, its gradient as the formulas of its
    // symbolic derivatives. With PLUMB_RECALC set (as .ci/run does),
    // LibreOffice recalculates it at the first #predict point, every cached
    // value removed, and must agree with #predict to 1e-9.
    let calc = t.iter().position(|r| r.first().and_then(text).is_some_and(|x| x.starts_with("Prediction calculator — engel: "))).expect("a calculator of the curve");
    let grad = t[calc..].iter().position(|r| r.get(2).and_then(text).is_some_and(|x| x.starts_with("Gradient"))).expect("a gradient column");
    let formulas = output::elements(&output::sheet_xml(&out, "Intervals"), "<f>", "</f>");
    let model = formulas.iter().find(|f| f.contains('^') && f.contains("$B$")).expect("the model as a live formula");
    assert!(!model.contains("SUMPRODUCT"), "the model itself, not a sum of terms: {model}");
    assert!(grad > 0);
    if std::env::var_os("PLUMB_RECALC").is_some() {
        let script = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/calculator_recalc.py");
        let st = std::process::Command::new("python3").arg(script).arg(&out).status().expect("python3 runs");
        assert!(st.success(), "LibreOffice's recalculation of the curve's calculator disagrees with #predict");
    }
    println!("largest relative difference from scipy 1.17.1: {:.1e} ({})", worst.difference, worst.what);
    let _ = std::fs::remove_dir_all(&d);
}
