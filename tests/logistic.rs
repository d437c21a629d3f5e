//! `#logistic` and `#predict` on a logistic fit through the whole tool,
//! against statsmodels: the Spector & Mazzeo (1980) data
//! (tests/data/spector.csv, the statsmodels 0.15.0 package's copy) and the
//! Bliss (1935) beetle mortality counts (as printed in Dobson & Barnett, from
//! memory; the figures are statsmodels' fit of the same numbers).
//! tests/data/logistic_figures.json is written by
//! tests/reference/logistic_figures.py (statsmodels 0.15.0 GLM Binomial and
//! Logit, numpy 2.4.6, scipy 1.17.1; versions recorded in the file). Every
//! figure is held to 1e-9 relative; the largest difference measured is
//! printed with --nocapture.

mod common;

use common::data::Worst;
use common::output::{self, num, text};
use common::run::{run_to, scratch};
use common::workbooks::pinned_workbook;
use plumb::report::Status;
use serde_json::Value as Json;
use std::path::{Path, PathBuf};

/// The agreement asserted: 1e-9 relative (absolute near zero).
const TOLERANCE: f64 = 1e-9;

fn reference() -> Json {
    serde_json::from_str(include_str!("data/logistic_figures.json")).expect("tests/data/logistic_figures.json is JSON")
}

/// The Spector data: headers and columns (space separated, quoted headers).
fn spector() -> (Vec<String>, Vec<Vec<f64>>) {
    let text = include_str!("data/spector.csv");
    let mut lines = text.lines();
    let headers: Vec<String> = lines.next().unwrap().split_whitespace().map(|h| h.trim_matches('\'').to_string()).collect();
    let mut cols = vec![Vec::new(); headers.len()];
    for l in lines.filter(|l| !l.trim().is_empty()) {
        for (j, v) in l.split_whitespace().enumerate() {
            cols[j].push(v.parse::<f64>().unwrap());
        }
    }
    (headers, cols)
}

/// A workbook with one data sheet (headers in row 1), the requests in a
/// column to the right, and optionally a Plan sheet of new points.
fn book(dir: &Path, sheet: &str, headers: &[&str], cols: &[Vec<f64>], requests: &[&str], plan: Option<(&[&str], &[Vec<f64>])>) -> PathBuf {
    let path = dir.join("book.xlsx");
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name(sheet).unwrap();
    for (j, (h, col)) in headers.iter().zip(cols).enumerate() {
        ws.write_string(0, j as u16, *h).unwrap();
        for (i, v) in col.iter().enumerate() {
            ws.write_number(i as u32 + 1, j as u16, *v).unwrap();
        }
    }
    let rc = headers.len() as u16 + 2;
    for (i, r) in requests.iter().enumerate() {
        ws.write_string(i as u32 + 1, rc, *r).unwrap();
    }
    if let Some((ph, pc)) = plan {
        let p = wb.add_worksheet();
        p.set_name("Plan").unwrap();
        for (j, (h, col)) in ph.iter().zip(pc).enumerate() {
            p.write_string(0, j as u16, *h).unwrap();
            for (i, v) in col.iter().enumerate() {
                p.write_number(i as u32 + 1, j as u16, *v).unwrap();
            }
        }
    }
    wb.save(&path).unwrap();
    path
}

/// The values under the header `label (fit)` on a sheet, top to bottom.
fn row_column(path: &Path, sheet: &str, label: &str, fit: &str) -> Vec<f64> {
    let t = output::table(path, sheet);
    let head = format!("{label} ({fit})");
    let c = t[0].iter().position(|d| text(d) == Some(head.as_str())).unwrap_or_else(|| panic!("no column {head}"));
    t[1..].iter().map(|r| r.get(c).and_then(num).unwrap_or(f64::NAN)).collect()
}

#[test]
fn spector_fit_rows_and_predictions_match_statsmodels() {
    let refs = reference();
    let want = &refs["spector"];
    let (headers, cols) = spector();
    assert_eq!(headers, ["OBS", "GPA", "TUCE", "PSI", "GRADE"]);
    let points = want["predictions"].as_array().unwrap();
    let plan_heads = ["GPA", "TUCE", "PSI"];
    let plan_cols: Vec<Vec<f64>> = plan_heads.iter().map(|h| points.iter().map(|p| p["point"][*h].as_f64().unwrap()).collect()).collect();
    let requests = ["#logistic(GRADE, GPA + TUCE + PSI, name=grade)", "#predict(grade, rows=Plan!A1:C4)", "#logistic(GRADE, GPA + PSI, name=small)", "#compare(small, grade)"];
    let d = scratch("logistic-spector");
    let h: Vec<&str> = headers.iter().map(String::as_str).collect();
    let input = book(&d, "Course", &h, &cols, &requests, Some((&plan_heads, &plan_cols)));
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    for r in &s.reports {
        assert_ne!(r.status, Status::Error, "{}: {:?}", r.text, r.messages);
    }
    let mut worst = Worst::new(TOLERANCE, 1e-6, "statsmodels 0.15.0");
    let coefs = output::coefficients(&out, "grade");
    assert_eq!(coefs.iter().map(|c| c.term.as_str()).collect::<Vec<_>>(), ["Intercept", "GPA", "TUCE", "PSI"]);
    for c in &coefs {
        let t = &c.term;
        worst.check(c.estimate, &want["estimates"][t], &format!("estimate of {t}"));
        worst.check(c.std_error, &want["std_errors"][t], &format!("standard error of {t}"));
        worst.check(c.t, &want["z"][t], &format!("z of {t}"));
        worst.check(c.p, &want["p_values"][t], &format!("p-value of {t}"));
        if t != "Intercept" {
            let or = output::statistic(&out, "grade", &format!("Odds ratio of {t}"));
            worst.check(or.map(f64::ln), &want["estimates"][t], &format!("log odds ratio of {t}"));
        }
    }
    // Wald intervals from the Intervals sheet (Fit, Term, Level, Estimate, from, to).
    let ints = output::table(&out, "Intervals");
    let wald: Vec<&Vec<calamine::Data>> = ints.iter().filter(|r| r.first().and_then(text) == Some("grade")).collect();
    assert_eq!(wald.len(), 4, "one interval per coefficient");
    for r in wald {
        let t = text(&r[1]).unwrap();
        worst.check(num(&r[4]), &want["lower"][t], &format!("interval from, {t}"));
        worst.check(num(&r[5]), &want["upper"][t], &format!("interval to, {t}"));
    }
    for (label, key) in [
        ("Log-likelihood", "log_likelihood"),
        ("Log-likelihood, intercept alone", "null_log_likelihood"),
        ("Residual deviance", "deviance"),
        ("Null deviance (intercept alone)", "null_deviance"),
        ("Likelihood-ratio χ² against the intercept alone", "lr_statistic"),
        ("p-value of the likelihood-ratio χ²", "lr_p_value"),
        ("McFadden's pseudo-R² (1 − LL/LL₀; not an R² of variance explained)", "mcfadden_r2"),
        ("AIC", "aic"),
        ("BIC", "bic"),
    ] {
        worst.check(output::statistic(&out, "grade", label), &want[key], label);
    }
    assert_eq!(output::statistic(&out, "grade", "Events"), want["events"].as_f64());
    assert_eq!(output::statistic(&out, "grade", "Rows used"), want["n"].as_f64());
    for (label, key) in [("Probability", "probability"), ("Pearson residual", "pearson"), ("Deviance residual", "deviance_residuals"), ("Leverage", "leverage"), ("Cook's distance", "cooks")] {
        let got = row_column(&out, "Course", label, "grade");
        let exp = want[key].as_array().unwrap();
        assert_eq!(got.len(), exp.len(), "{label}");
        for (i, (g, w)) in got.iter().zip(exp).enumerate() {
            worst.check(Some(*g), w, &format!("{label}, data row {}", i + 1));
        }
    }
    // #predict: the probability and its interval, computed on the logit
    // scale and mapped through 1/(1+e^(−η)).
    let t = output::table(&out, "Intervals");
    let title = format!("Predictions — {}", requests[1]);
    let at = t.iter().position(|r| r.first().and_then(text) == Some(title.as_str())).unwrap_or_else(|| panic!("no table {title}"));
    let heads: Vec<&str> = t[at + 2].iter().map(|d| text(d).unwrap_or("")).collect();
    let col = |h: &str| heads.iter().position(|x| *x == h).unwrap_or_else(|| panic!("no column {h} in {heads:?}"));
    let rows: Vec<&Vec<calamine::Data>> = t[at + 3..].iter().take_while(|r| r.first().and_then(num).is_some()).collect();
    assert_eq!(rows.len(), points.len());
    for (row, w) in rows.iter().zip(points) {
        for (h, key) in [("Predicted value", "probability"), ("Confidence interval: from", "lower"), ("Confidence interval: to", "upper")] {
            worst.check(num(&row[col(h)]), &w[key], &format!("{key} at {}", w["point"]));
        }
    }
    // #compare of two logistic fits: AIC and BIC from the likelihood, no
    // least-squares figures and no F test (they are not least squares).
    let Some(plumb::report::HostOutcome::Comparison(cmp)) = &s.reports[3].host else { panic!("#compare gave no comparison") };
    let full = cmp.fits.iter().find(|f| f.name == "grade").expect("the full fit is compared");
    worst.check(Some(full.aic), &want["aic"], "AIC in #compare");
    worst.check(Some(full.bic), &want["bic"], "BIC in #compare");
    assert!(full.r_squared.is_nan() && cmp.nested.is_empty(), "{cmp:?}");
    println!("largest difference from statsmodels 0.15.0: {:.1e} ({})", worst.difference, worst.what);
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn grouped_counts_match_statsmodels_and_the_expanded_rows() {
    let refs = reference();
    let want = &refs["grouped"];
    let f = |k: &str| -> Vec<f64> { want[k].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect() };
    let (dose, tested, killed) = (f("dose"), f("tested"), f("killed"));
    // The same beetles one row each: 1 killed, 0 survived.
    let (mut ed, mut ek) = (Vec::new(), Vec::new());
    for i in 0..dose.len() {
        for j in 0..tested[i] as usize {
            ed.push(dose[i]);
            ek.push(if (j as f64) < killed[i] { 1.0 } else { 0.0 });
        }
    }
    let d = scratch("logistic-grouped");
    let input = d.join("book.xlsx");
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name("Doses").unwrap();
    for (j, (h, col)) in ["dose", "tested", "killed"].iter().zip([&dose, &tested, &killed]).enumerate() {
        ws.write_string(0, j as u16, *h).unwrap();
        for (i, v) in col.iter().enumerate() {
            ws.write_number(i as u32 + 1, j as u16, *v).unwrap();
        }
    }
    ws.write_string(1, 5, "#logistic(killed, dose, trials=tested, name=grouped)").unwrap();
    let es = wb.add_worksheet();
    es.set_name("Beetles").unwrap();
    for (j, (h, col)) in ["dose", "dead"].iter().zip([&ed, &ek]).enumerate() {
        es.write_string(0, j as u16, *h).unwrap();
        for (i, v) in col.iter().enumerate() {
            es.write_number(i as u32 + 1, j as u16, *v).unwrap();
        }
    }
    es.write_string(1, 4, "#logistic(dead, dose, name=expanded)").unwrap();
    wb.save(&input).unwrap();
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    for r in &s.reports {
        assert_ne!(r.status, Status::Error, "{}: {:?}", r.text, r.messages);
    }
    let mut worst = Worst::new(TOLERANCE, 1e-6, "statsmodels 0.15.0");
    let grouped = output::coefficients(&out, "grouped");
    let expanded = output::coefficients(&out, "expanded");
    for (g, e) in grouped.iter().zip(&expanded) {
        worst.check(g.estimate, &want["estimates"][&g.term], &format!("grouped estimate of {}", g.term));
        worst.check(g.std_error, &want["std_errors"][&g.term], &format!("grouped standard error of {}", g.term));
        // The same likelihood up to the binomial coefficients: the same fit.
        worst.check(e.estimate, &want["estimates"][&g.term], &format!("expanded estimate of {}", g.term));
        worst.check(e.std_error, &want["std_errors"][&g.term], &format!("expanded standard error of {}", g.term));
    }
    worst.check(output::statistic(&out, "grouped", "Residual deviance"), &want["deviance"], "grouped deviance");
    worst.check(output::statistic(&out, "grouped", "Null deviance (intercept alone)"), &want["null_deviance"], "grouped null deviance");
    worst.check(output::statistic(&out, "grouped", "Log-likelihood"), &want["log_likelihood"], "grouped log-likelihood (binomial coefficients included)");
    assert_eq!(output::statistic(&out, "grouped", "Observations (trials × weights)"), Some(tested.iter().sum()));
    assert_eq!(output::statistic(&out, "expanded", "Events"), Some(killed.iter().sum()));
    let p = row_column(&out, "Doses", "Probability", "grouped");
    for (i, w) in want["probability"].as_array().unwrap().iter().enumerate() {
        worst.check(Some(p[i]), w, &format!("grouped probability, dose {}", dose[i]));
    }
    println!("largest difference from statsmodels 0.15.0: {:.1e} ({})", worst.difference, worst.what);
    let _ = std::fs::remove_dir_all(&d);
}

/// The error of the one request of a workbook built from these columns.
fn error_of(name: &str, headers: &[&str], cols: &[Vec<f64>], request: &str) -> String {
    let d = scratch(name);
    let input = book(&d, "Data", headers, cols, &[request], None);
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    let r = &s.reports[0];
    assert_eq!(r.status, Status::Error, "{request} should fail: {:?}", r.messages);
    let _ = std::fs::remove_dir_all(&d);
    r.messages.join(" | ")
}

#[test]
fn separation_and_bad_responses_are_errors_in_plain_words() {
    // x below 3.5 never an event, above always (constructed): complete
    // separation; the term is named and method=firth suggested.
    let x = vec![1.0, 2.0, 2.5, 3.0, 4.0, 4.5, 5.0, 6.0];
    let y = vec![0.0, 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 1.0];
    let z = vec![3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0, 6.0];
    let m = error_of("logistic-separated", &["x", "z", "y"], &[x.clone(), z.clone(), y.clone()], "#logistic(y, x + z)");
    assert!(m.contains("x separate") && m.contains("firth"), "{m}");
    // Quasi-complete: one tie at the boundary (x = 3.5 has both outcomes).
    let xq = vec![1.0, 2.0, 2.5, 3.5, 3.5, 4.5, 5.0, 6.0, 1.5, 5.5];
    let yq = vec![0.0, 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 1.0, 0.0, 1.0];
    let m = error_of("logistic-quasi", &["x", "y"], &[xq, yq], "#logistic(y, x)");
    assert!(m.contains("x separate"), "{m}");
    // A response that is not 0/1, one that is all one outcome, too few events.
    let bad = vec![0.0, 1.0, 2.0, 0.0, 1.0, 1.0, 0.0, 1.0];
    let m = error_of("logistic-not01", &["x", "y"], &[x.clone(), bad], "#logistic(y, x)");
    assert!(m.contains("holds 2 in row 4 of Data") && m.contains("0 or 1"), "{m}");
    let m = error_of("logistic-one-level", &["x", "y"], &[x.clone(), vec![1.0; 8]], "#logistic(y, x)");
    assert!(m.contains("only events"), "{m}");
    let few = vec![0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0];
    let m = error_of("logistic-few", &["x", "z", "y"], &[x.clone(), z, few], "#logistic(y, x + z)");
    assert!(m.contains("1 events and 7 non-events for 3 coefficients"), "{m}");
    // Events greater than their trials, at the row.
    let m = error_of("logistic-trials", &["x", "k", "n"], &[x, vec![1.0, 2.0, 5.0, 1.0, 0.0, 2.0, 1.0, 3.0], vec![3.0; 8]], "#logistic(k, x, trials=n)");
    assert!(m.contains("row 4 of Data") && m.contains("from 0 to its 3 trials"), "{m}");
}

#[test]
fn text_and_boolean_responses_code_the_event_as_said() {
    let refs = reference();
    let want = &refs["spector"];
    let (_, cols) = spector();
    let (gpa, tuce, psi, grade) = (&cols[1], &cols[2], &cols[3], &cols[4]);
    let d = scratch("logistic-text");
    let input = d.join("book.xlsx");
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name("Course").unwrap();
    for (j, h) in ["GPA", "TUCE", "PSI", "Better", "Word", "Flag", "Three"].iter().enumerate() {
        ws.write_string(0, j as u16, *h).unwrap();
    }
    for i in 0..grade.len() {
        let r = i as u32 + 1;
        ws.write_number(r, 0, gpa[i]).unwrap();
        ws.write_number(r, 1, tuce[i]).unwrap();
        ws.write_number(r, 2, psi[i]).unwrap();
        let up = grade[i] == 1.0;
        ws.write_string(r, 3, if up { "better" } else { "same" }).unwrap();
        ws.write_string(r, 4, if up { "yes" } else { "no" }).unwrap();
        ws.write_boolean(r, 5, up).unwrap();
        ws.write_string(r, 6, ["a", "b", "c"][i % 3]).unwrap();
    }
    let requests = [
        "#logistic(Better, GPA + TUCE + PSI, event=\"better\", name=chosen)",
        "#logistic(Word, GPA + TUCE + PSI, name=default)",
        "#logistic(Flag, GPA + TUCE + PSI, name=flag)",
        "#logistic(Better, GPA + TUCE + PSI, name=flipped)",
        "#logistic(Three, GPA + TUCE + PSI)",
        "#logistic(Better, GPA, event=\"worse\")",
        "#logistic(Flag, GPA, event=\"yes\")",
    ];
    for (i, r) in requests.iter().enumerate() {
        ws.write_string(i as u32 + 1, 9, *r).unwrap();
    }
    wb.save(&input).unwrap();
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    let mut worst = Worst::new(TOLERANCE, 1e-6, "statsmodels 0.15.0");
    for fit in ["chosen", "default", "flag"] {
        for c in output::coefficients(&out, fit) {
            worst.check(c.estimate, &want["estimates"][&c.term], &format!("{fit}: estimate of {}", c.term));
        }
    }
    let r = |i: usize| &s.reports[i];
    let notes = &r(1).outcome.as_ref().expect("an outcome").notes;
    assert!(notes.iter().any(|n| n.contains("the event is Word = \"yes\"")), "{notes:?}");
    // The default event of better/same is "same" (later in the alphabet):
    // every coefficient changes sign.
    for c in output::coefficients(&out, "flipped") {
        worst.check(c.estimate.map(|b| -b), &want["estimates"][&c.term], &format!("flipped: minus the estimate of {}", c.term));
    }
    assert_eq!(r(4).status, Status::Error);
    assert!(r(4).messages.iter().any(|m| m.contains("has 3 levels") && m.contains("exactly two")), "{:?}", r(4).messages);
    assert_eq!(r(5).status, Status::Error);
    assert!(r(5).messages.iter().any(|m| m.contains("event=\"worse\" is not a level")), "{:?}", r(5).messages);
    // event= on a numeric (here boolean) response is refused, not ignored.
    assert_eq!(r(6).status, Status::Error);
    assert!(r(6).messages.iter().any(|m| m.contains("Flag holds numbers")), "{:?}", r(6).messages);
    let _ = std::fs::remove_dir_all(&d);
}
