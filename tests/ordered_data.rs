//! Ordered data through the whole tool: `order=`, `groups=`, `lags=`, the
//! Durbin–Watson statistic with its exact p-value, Breusch–Godfrey, and
//! `errors=neweywest` / `errors=clustered` with their tests, on real
//! series shipped with statsmodels (quarterly US macro data; Grunfeld's 11
//! firms over 20 years), the rows shuffled in the sheet so that only
//! `order=` can put them right. Reference figures: tests/data/ordered_figures.json,
//! written by tests/reference/ordered_figures.py (statsmodels 0.15.0,
//! scipy 1.17.1; versions recorded in the file): statsmodels for
//! Durbin–Watson, Breusch–Godfrey (acorr_breusch_godfrey), HAC, hac-panel
//! and cluster covariances; the exact Durbin–Watson p-value from an
//! independent Python implementation of Imhof (1961) with
//! scipy.integrate.quad; within-group Durbin–Watson and Breusch–Godfrey from
//! numpy code in the same script (no library function takes groups).

mod common;

use common::output;
use common::run::{run_to, scratch};
use common::workbooks::{write_mixed_table, Col};
use plumb::report::Status;
use serde_json::Value as Json;
use std::path::Path;

/// Relative agreement to `tol`.
fn close(got: Option<f64>, want: f64, tol: f64, what: &str) {
    let got = got.unwrap_or_else(|| panic!("{what}: no figure in the output (reference {want})"));
    let rel = ((got - want) / want).abs();
    println!("{what}: relative difference {rel:.1e}");
    assert!(rel < tol, "{what}: got {got}, reference {want} (relative difference {rel:.1e}, tolerance {tol:.0e})");
}

fn refs() -> Json {
    serde_json::from_str(include_str!("data/ordered_figures.json")).expect("JSON")
}

/// The CSV's columns: numbers, or text where a field does not parse.
fn columns(csv: &str) -> (Vec<String>, Vec<Col>) {
    let mut lines = csv.lines().filter(|l| !l.trim().is_empty());
    let headers: Vec<String> = lines.next().expect("header").split(',').map(str::to_string).collect();
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    let cols = (0..headers.len())
        .map(|k| match rows[0][k].parse::<f64>() {
            Ok(_) => Col::Num(rows.iter().map(|r| Some(r[k].parse().expect("a number"))).collect()),
            Err(_) => Col::Text(rows.iter().map(|r| Some(r[k].to_string())).collect()),
        })
        .collect();
    (headers, cols)
}

fn run(name: &str, csv: &str, requests: &[&str]) -> (std::path::PathBuf, std::path::PathBuf) {
    let (headers, cols) = columns(csv);
    let h: Vec<&str> = headers.iter().map(String::as_str).collect();
    let d = scratch(name);
    let input = d.join("in.xlsx");
    let at = headers.len() as u32 + 1;
    let reqs: Vec<(u32, u32, &str)> = requests.iter().enumerate().map(|(i, r)| (i as u32, at, *r)).collect();
    write_mixed_table(&input, "Data", &h, &cols, &reqs);
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    assert!(s.reports.iter().all(|r| r.status != Status::Error), "{:?}", s.problems);
    (d, out)
}

fn f(j: &Json) -> f64 {
    j.as_f64().expect("a number")
}

/// Standard errors and p-values of a fit's coefficients (intercept first),
/// the overall F and each term's F against the reference's.
fn same_tests(out: &Path, fit: &str, want: &Json, terms: &[&str], tol: f64) {
    let coefs = output::coefficients(out, fit);
    for (j, c) in coefs.iter().enumerate() {
        close(c.std_error, f(&want["se"][j]), tol, &format!("{fit}: standard error of {}", c.term));
        close(c.p, f(&want["p"][j]), tol, &format!("{fit}: p-value of {}", c.term));
    }
    // The intervals (t on n − p, or on G − 1 when clustered).
    let t = output::table(out, "Coefficients");
    let h: Vec<&str> = t[0].iter().map(|c| output::text(c).unwrap_or("")).collect();
    let col = |name: &str| h.iter().position(|x| *x == name).unwrap_or_else(|| panic!("no column {name}"));
    let (cf, lo, hi) = (col("Fit"), col("Confidence interval: from"), col("Confidence interval: to"));
    let rows: Vec<_> = t[1..].iter().filter(|r| output::text(&r[cf]) == Some(fit)).collect();
    assert_eq!(rows.len(), coefs.len());
    for (j, r) in rows.iter().enumerate() {
        close(output::num(&r[lo]), f(&want["lower"][j]), tol, &format!("{fit}: interval from, row {j}"));
        close(output::num(&r[hi]), f(&want["upper"][j]), tol, &format!("{fit}: interval to, row {j}"));
    }
    close(output::statistic(out, fit, "F statistic"), f(&want["f"]), tol, &format!("{fit}: overall F"));
    close(output::statistic(out, fit, "p-value of F"), f(&want["f_p"]), tol, &format!("{fit}: p of the overall F"));
    for t in terms {
        close(output::statistic(out, fit, &format!("{t}: F")), f(&want["terms"][t]["f"]), tol, &format!("{fit}: F of {t}"));
        close(output::statistic(out, fit, &format!("{t}: p-value")), f(&want["terms"][t]["p"]), tol, &format!("{fit}: p of {t}"));
    }
}

#[test]
fn a_time_series_in_shuffled_rows_is_checked_in_time_order() {
    let r = refs();
    let (d, out) = run(
        "ordered-macro",
        include_str!("data/macro_growth.csv"),
        &[
            "#linear(dunemp, ggdp, order=period, name=okun)",
            "#linear(dunemp, ggdp, order=period, lags=2, errors=neweywest, name=okun2)",
            "#linear(gcons, ggdp + infl, order=period, errors=neweywest, name=cons)",
            "#linear(gcons, ggdp + infl, order=period, lags=1, name=cons1)",
            "#linear(dunemp, ggdp, name=sheet)",
            "#linear(dunemp, ggdp, order=period, groups=decade, lags=2, name=decades)",
        ],
    );
    // Neighbours within a decade only (a text grouping column): numpy and
    // Imhof with scipy.integrate.quad in the reference script (quad's error
    // estimate 3e-13 on a p of 1.5e-6, so 1e-6 relative).
    let w = &r["okun_by_decade"];
    let (dw, said) = output::statistic_at(&out, "decades", "Durbin–Watson (no correlation = 2)").expect("Durbin–Watson");
    close(Some(dw), f(&w["dw_within"]), 1e-12, "Durbin–Watson within decades");
    assert_eq!(said.as_deref(), Some("rows sorted by period within each decade"));
    close(output::statistic(&out, "decades", "p-value of Durbin–Watson (exact; against positive correlation)"), f(&w["dw_within_p"]), 1e-6, "its exact p-value");
    close(output::statistic(&out, "decades", "Breusch–Godfrey (n·R²)"), f(&w["bg_within_2"]["lm"]), 1e-9, "Breusch–Godfrey within decades");
    close(output::statistic(&out, "decades", "p-value of Breusch–Godfrey (χ²)"), f(&w["bg_within_2"]["p"]), 1e-9, "its p-value");
    for (fit, key, lags) in [("okun", "okun", "4"), ("okun2", "okun", "2"), ("cons", "consumption", "4"), ("cons1", "consumption", "1")] {
        let w = &r[key];
        // Durbin–Watson: statsmodels 0.15.0 durbin_watson on the sorted rows.
        let (dw, said) = output::statistic_at(&out, fit, "Durbin–Watson (no correlation = 2)").expect("Durbin–Watson");
        close(Some(dw), f(&w["durbin_watson"]), 1e-12, &format!("{fit}: Durbin–Watson"));
        assert_eq!(said.as_deref(), Some("rows sorted by period"), "{fit}: which order was used");
        // Its exact p-value: Imhof (1961) with scipy.integrate.quad (error
        // estimate below 1e-14 recorded in the JSON), to 1e-6 relative.
        close(output::statistic(&out, fit, "p-value of Durbin–Watson (exact; against positive correlation)"), f(&w["dw_p"]), 1e-6, &format!("{fit}: Durbin–Watson p"));
        // Breusch–Godfrey LM: statsmodels acorr_breusch_godfrey.
        close(output::statistic(&out, fit, "Breusch–Godfrey (n·R²)"), f(&w["bg"][lags]["lm"]), 1e-9, &format!("{fit}: Breusch–Godfrey"));
        close(output::statistic(&out, fit, "p-value of Breusch–Godfrey (χ²)"), f(&w["bg"][lags]["p"]), 1e-9, &format!("{fit}: Breusch–Godfrey p"));
        assert_eq!(output::statistic(&out, fit, "Lags tested by Breusch–Godfrey"), Some(lags.parse().unwrap()));
    }
    // Newey–West with 4 lags (the default rule ⌊4(202/100)^(2/9)⌋ = 4):
    // statsmodels cov_type="HAC", maxlags=4, Bartlett, no small-sample factor.
    same_tests(&out, "cons", &r["consumption"]["newey_west_4"], &["ggdp", "infl"], 1e-9);
    // Without order= the checks use sheet order (here shuffled) and say so.
    let (_, said) = output::statistic_at(&out, "sheet", "Durbin–Watson (no correlation = 2)").expect("Durbin–Watson");
    assert_eq!(said.as_deref(), Some("rows in sheet order"));
    let dw_sheet = output::statistic(&out, "sheet", "Durbin–Watson (no correlation = 2)").unwrap();
    assert!((dw_sheet - f(&r["okun"]["durbin_watson"])).abs() > 0.1, "shuffled rows give another Durbin–Watson: {dw_sheet}");
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_panel_is_checked_within_groups_and_clustered_by_them() {
    let r = refs();
    let w = &r["grunfeld"];
    let (d, out) = run(
        "ordered-grunfeld",
        include_str!("data/grunfeld.csv"),
        &[
            "#linear(invest, value + capital, order=year, groups=firm, lags=2, errors=clustered, name=clustered)",
            "#linear(invest, value + capital, order=year, groups=firm, lags=2, errors=neweywest, name=panel)",
        ],
    );
    // Clustered by firm: statsmodels cov_type="cluster" (factor
    // G/(G−1)·(n−1)/(n−k); t and F on G − 1 = 10 degrees of freedom).
    same_tests(&out, "clustered", &w["clustered"], &["value", "capital"], 1e-9);
    assert_eq!(output::statistic(&out, "clustered", "F: residual degrees of freedom"), Some(10.0), "F on G − 1 = 10");
    // Newey–West within firms: statsmodels cov_type="hac-panel", maxlags=2,
    // use_correction=False.
    for (j, c) in output::coefficients(&out, "panel").iter().enumerate() {
        close(c.std_error, f(&w["newey_west_panel_2"]["se"][j]), 1e-9, &format!("panel: standard error of {}", c.term));
    }
    for fit in ["clustered", "panel"] {
        let (dw, said) = output::statistic_at(&out, fit, "Durbin–Watson (no correlation = 2)").expect("Durbin–Watson");
        assert_eq!(said.as_deref(), Some("rows sorted by year within each firm"));
        // Within firms: numpy in tests/reference/ordered_figures.py.
        close(Some(dw), f(&w["dw_within"]), 1e-12, "Durbin–Watson within firms");
        // Durbin–Watson 0.21 on 220 rows: the exact p-value is below the
        // integration's resolution (the Python reference gives
        // -2.2e-16 ± 1e-14), so only its smallness is checked.
        let p = output::statistic(&out, fit, "p-value of Durbin–Watson (exact; against positive correlation)").expect("a p-value");
        assert!((0.0..1e-12).contains(&p), "{fit}: Durbin–Watson p {p}");
        let said = output::table(&out, "Diagnostics").iter().flatten().filter_map(output::text).any(|t| t.contains("below the accuracy of its numerical integral"));
        assert!(said, "{fit}: a note says the p-value is below the integral's accuracy");
        close(output::statistic(&out, fit, "Breusch–Godfrey (n·R²)"), f(&w["bg_within_2"]["lm"]), 1e-9, "Breusch–Godfrey within firms");
        close(output::statistic(&out, fit, "p-value of Breusch–Godfrey (χ²)"), f(&w["bg_within_2"]["p"]), 1e-9, "its p-value");
    }
    let _ = std::fs::remove_dir_all(&d);
}
