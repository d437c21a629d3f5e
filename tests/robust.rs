//! `#robust` through the whole tool against statsmodels 0.15.0 `RLM`
//! (HuberT 1.345 and TukeyBiweight 4.685, MAD scale, `cov="H1"`, converged
//! with `conv="coefs", tol=1e-12, maxiter=1000`): tests/data/robust_figures.json,
//! written by tests/reference/robust_figures.py (versions recorded inside),
//! on the stack loss data (tests/data/stackloss.csv, Brownlee 1965) and
//! Engel's food expenditure data (tests/data/engel.csv), both the
//! statsmodels package's copies. Coefficients, standard errors, the scale
//! and every row's weight are held to 1e-8 (relative; absolute for a
//! weight, which lies in [0, 1]); the largest differences are printed with
//! --nocapture. `#predict` on the Huber fit: the standard error of the
//! fitted value is `√(xᵀVx)` with V statsmodels' H1 covariance.

mod common;

use common::data::{csv, relative_difference};
use common::output::{self, num, text};
use common::run::{run_to, scratch};
use common::workbooks::pinned_workbook;
use plumb::report::Status;
use serde_json::Value as Json;
use std::path::{Path, PathBuf};

/// The agreement asserted.
const TOLERANCE: f64 = 1e-8;

fn reference() -> Json {
    serde_json::from_str(include_str!("data/robust_figures.json")).expect("tests/data/robust_figures.json is JSON")
}

struct Worst(f64, String);

impl Worst {
    fn check(&mut self, got: Option<f64>, want: f64, absolute: bool, what: &str) {
        let got = got.unwrap_or_else(|| panic!("{what}: no number in the output (statsmodels 0.15.0 gives {want})"));
        let d = if absolute { (got - want).abs() } else { relative_difference(got, want) };
        assert!(d <= TOLERANCE, "{what}: plumb {got}, statsmodels 0.15.0 {want} (difference {d:.1e})");
        if d > self.0 {
            *self = Worst(d, what.to_string());
        }
    }
}

/// The data on sheet `Data` (headers in row 1), the requests in a column
/// right of it, and sheet Plan with the given new points.
fn book(dir: &Path, headers: &[String], cols: &[Vec<f64>], requests: &[&str], plan: &[(&str, f64)]) -> PathBuf {
    let path = dir.join("robust.xlsx");
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name("Data").unwrap();
    for (j, (h, col)) in headers.iter().zip(cols).enumerate() {
        ws.write_string(0, j as u16, h).unwrap();
        for (i, v) in col.iter().enumerate() {
            ws.write_number(i as u32 + 1, j as u16, *v).unwrap();
        }
    }
    let rc = headers.len() as u16 + 2;
    for (i, r) in requests.iter().enumerate() {
        ws.write_string(i as u32 + 1, rc, *r).unwrap();
    }
    let p = wb.add_worksheet();
    p.set_name("Plan").unwrap();
    for (j, (h, v)) in plan.iter().enumerate() {
        p.write_string(0, j as u16, *h).unwrap();
        p.write_number(1, j as u16, *v).unwrap();
    }
    wb.save(&path).unwrap();
    path
}

/// Runs the book to `out.xlsx` in `dir`; every request must succeed.
fn run_ok(dir: &Path, input: &Path) -> PathBuf {
    let out = dir.join("out.xlsx");
    let s = run_to(input, &out);
    for r in &s.reports {
        assert_ne!(r.status, Status::Error, "{}: {:?}", r.text, r.messages);
    }
    out
}

/// The per-row column headed `header` on sheet Data, rows 2 on.
fn row_column(out: &Path, header: &str, n: usize) -> Vec<f64> {
    let t = output::table(out, "Data");
    let c = t[0].iter().position(|d| text(d) == Some(header)).unwrap_or_else(|| panic!("no column {header} beside the data: {:?}", t[0]));
    (1..=n).map(|i| num(&t[i][c]).unwrap_or_else(|| panic!("{header}, row {}: no number", i + 1))).collect()
}

fn check_fit(out: &Path, name: &str, want: &Json, n: usize, worst: &mut Worst) {
    let coefs = output::coefficients(out, name);
    let params = want["params"].as_array().unwrap();
    assert_eq!(coefs.len(), params.len(), "{name}: {coefs:?}");
    for (k, c) in coefs.iter().enumerate() {
        worst.check(c.estimate, params[k].as_f64().unwrap(), false, &format!("{name}: estimate of {}", c.term));
        worst.check(c.std_error, want["bse"][k].as_f64().unwrap(), false, &format!("{name}: standard error of {}", c.term));
        let ls = output::statistic(out, name, &format!("Least-squares estimate of {}", c.term));
        worst.check(ls, want["ols_params"][k].as_f64().unwrap(), false, &format!("{name}: least-squares estimate of {}", c.term));
    }
    worst.check(output::statistic(out, name, "Robust scale of the residuals (median |residual| / 0.6745)"), want["scale"].as_f64().unwrap(), false, &format!("{name}: scale"));
    let weights = row_column(out, &format!("Weight ({name})"), n);
    let wants: Vec<f64> = want["weights"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
    for (i, (g, w)) in weights.iter().zip(&wants).enumerate() {
        worst.check(Some(*g), *w, true, &format!("{name}: weight of row {}", i + 2));
    }
    let resid = row_column(out, &format!("Residual ({name})"), n);
    let standardized = row_column(out, &format!("Residual / robust scale ({name})"), n);
    let scale = want["scale"].as_f64().unwrap();
    for (i, (r, z)) in resid.iter().zip(&standardized).enumerate() {
        worst.check(Some(*r), want["resid"][i].as_f64().unwrap(), false, &format!("{name}: residual of row {}", i + 2));
        assert!(relative_difference(*z, r / scale) < 1e-8, "{name}: standardized residual of row {}", i + 2);
    }
    // The lowest weight is named by its sheet row.
    let (low, at) = wants.iter().enumerate().min_by(|a, b| a.1.total_cmp(b.1)).map(|(i, w)| (*w, i)).unwrap();
    let (v, place) = output::statistic_at(out, name, "Lowest weight").expect("the lowest weight on Diagnostics");
    assert!((v - low).abs() < 1e-8, "{name}: lowest weight {v}, statsmodels {low}");
    let place = place.unwrap_or_default();
    assert!(place.contains(&format!("row {}", at + 2)), "{name}: lowest weight at {place:?}, statsmodels row {}", at + 2);
}

#[test]
fn stack_loss_huber_and_bisquare_match_statsmodels_with_predict() {
    let refs = reference();
    let (headers, cols) = csv(include_str!("data/stackloss.csv"));
    let terms = "AIRFLOW + WATERTEMP + ACIDCONC";
    let huber = format!("#robust(STACKLOSS, {terms}, name=huber)");
    let bisq = format!("#robust(STACKLOSS, {terms}, method=bisquare, name=bisquare)");
    let pred = "#predict(huber, rows=Plan!A1:C2)";
    let point = &refs["fits"]["stackloss_huber"]["prediction"];
    let plan: Vec<(&str, f64)> = ["AIRFLOW", "WATERTEMP", "ACIDCONC"].iter().map(|h| (*h, point["point"][h].as_f64().unwrap())).collect();
    let d = scratch("robust-stackloss");
    let input = book(&d, &headers, &cols, &[&huber, &bisq, pred], &plan);
    let out = run_ok(&d, &input);
    let mut worst = Worst(0.0, String::new());
    let n = cols[0].len();
    check_fit(&out, "huber", &refs["fits"]["stackloss_huber"], n, &mut worst);
    check_fit(&out, "bisquare", &refs["fits"]["stackloss_bisquare"], n, &mut worst);
    // #predict: the fitted value and its standard error from the robust
    // covariance.
    let t = output::table(&out, "Intervals");
    let title = format!("Predictions — {pred}");
    let at = t.iter().position(|r| r.first().and_then(text) == Some(title.as_str())).unwrap_or_else(|| panic!("no table {title}"));
    let heads: Vec<&str> = t[at + 2].iter().map(|d| text(d).unwrap_or("")).collect();
    let col = |h: &str| heads.iter().position(|x| *x == h).unwrap_or_else(|| panic!("no column {h}: {heads:?}"));
    let row = &t[at + 3];
    worst.check(num(&row[col("Predicted value")]), point["mean"].as_f64().unwrap(), false, "prediction at the plan point");
    worst.check(num(&row[col("Standard error of the fitted value")]), point["se"].as_f64().unwrap(), false, "standard error of the prediction");
    println!("stack loss: largest difference from statsmodels 0.15.0: {:.1e} ({})", worst.0, worst.1);
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn engel_huber_and_bisquare_match_statsmodels() {
    let refs = reference();
    let (headers, cols) = csv(include_str!("data/engel.csv"));
    let d = scratch("robust-engel");
    let input = book(&d, &headers, &cols, &["#robust(foodexp, income, name=huber)", "#robust(foodexp, income, method=bisquare, name=bisquare)"], &[("income", 1000.0)]);
    let out = run_ok(&d, &input);
    let mut worst = Worst(0.0, String::new());
    let n = cols[0].len();
    check_fit(&out, "huber", &refs["fits"]["engel_huber"], n, &mut worst);
    check_fit(&out, "bisquare", &refs["fits"]["engel_bisquare"], n, &mut worst);
    println!("Engel: largest difference from statsmodels 0.15.0: {:.1e} ({})", worst.0, worst.1);
    let _ = std::fs::remove_dir_all(&d);
}
