//! Tests by term through the whole tool: the F test of each term given all
//! the others (a text column's indicators together), classic and robust
//! (errors=hc3), and the robust overall F, against statsmodels 0.15.0 on
//! the Fair (1978) affairs survey data that statsmodels ships
//! (tests/data/fair.csv and tests/data/term_tests.json, both written by
//! tests/reference/term_tests.py, which records the versions).

mod common;

use common::output;
use common::run::{run_to, scratch};
use common::workbooks::{write_mixed_table, Col};
use plumb::report::Status;
use serde_json::Value as Json;

fn close(got: Option<f64>, want: f64, what: &str) {
    let got = got.unwrap_or_else(|| panic!("{what}: no figure in the output (statsmodels 0.15.0 gives {want})"));
    let rel = ((got - want) / want).abs();
    assert!(rel < 1e-9, "{what}: got {got}, statsmodels 0.15.0 gives {want} (relative difference {rel:.1e})");
}

#[test]
fn each_term_is_tested_given_the_others_as_statsmodels_does() {
    let refs: Json = serde_json::from_str(include_str!("data/term_tests.json")).expect("JSON");
    let mut cols: Vec<Vec<Option<f64>>> = vec![Vec::new(); 3];
    let mut occ = Vec::new();
    for line in include_str!("data/fair.csv").lines().skip(1).filter(|l| !l.trim().is_empty()) {
        let f: Vec<&str> = line.split(',').collect();
        for k in 0..3 {
            cols[k].push(Some(f[k].parse().expect("a number")));
        }
        occ.push(Some(f[3].to_string()));
    }
    let d = scratch("term-tests");
    let input = d.join("fair.xlsx");
    let columns = [Col::Num(cols[0].clone()), Col::Num(cols[1].clone()), Col::Num(cols[2].clone()), Col::Text(occ)];
    let requests = [(0, 5, "#linear(affairs, rate_marriage + age + occupation, name=classic)"), (1, 5, "#linear(affairs, rate_marriage + age + occupation, errors=hc3, name=robust)")];
    write_mixed_table(&input, "Survey", &["affairs", "rate_marriage", "age", "occupation"], &columns, &requests);
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    assert!(s.reports.iter().all(|r| r.status != Status::Error), "{:?}", s.problems);
    for (fit, kind) in [("classic", "classic"), ("robust", "hc3")] {
        for term in ["rate_marriage", "age", "occupation"] {
            let w = &refs["terms"][term][kind];
            let what = format!("{fit}, {term}");
            close(output::statistic(&out, fit, &format!("{term}: F")), w["f"].as_f64().unwrap(), &format!("{what}: F"));
            close(output::statistic(&out, fit, &format!("{term}: degrees of freedom")), w["df"].as_f64().unwrap(), &format!("{what}: df"));
            close(output::statistic(&out, fit, &format!("{term}: p-value")), w["p"].as_f64().unwrap(), &format!("{what}: p"));
        }
    }
    // The robust overall F, and the classic one unchanged.
    close(output::statistic(&out, "robust", "F statistic"), refs["overall_hc3"]["f"].as_f64().unwrap(), "robust overall F");
    close(output::statistic(&out, "robust", "p-value of F"), refs["overall_hc3"]["p"].as_f64().unwrap(), "robust overall p");
    close(output::statistic(&out, "classic", "F statistic"), refs["overall_classic"]["f"].as_f64().unwrap(), "classic overall F");
    // The Coefficients sheet shows the whole term's p-value on each of its rows.
    let t = output::table(&out, "Coefficients");
    let h: Vec<&str> = t[0].iter().map(|c| output::text(c).unwrap_or("")).collect();
    let (cf, ct, cp) = (h.iter().position(|x| *x == "Fit").unwrap(), h.iter().position(|x| *x == "Term").unwrap(), h.iter().position(|x| *x == "p-value of the whole term").unwrap());
    let rows: Vec<_> = t[1..].iter().filter(|r| output::text(&r[cf]) == Some("classic") && output::text(&r[ct]).is_some_and(|x| x.starts_with("occupation:"))).collect();
    assert_eq!(rows.len(), 5, "five indicator rows against occ1");
    for r in rows {
        close(output::num(&r[cp]), refs["terms"]["occupation"]["classic"]["p"].as_f64().unwrap(), "the whole term's p on an indicator row");
    }
    let _ = std::fs::remove_dir_all(&d);
}
