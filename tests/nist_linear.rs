//! NIST StRD linear datasets through the whole tool: a workbook with a request
//! is written, `plumb run` fits it, and the output is read back with calamine.
//! Certified values: NIST/ITL Statistical Reference Datasets, files
//! Norris.dat and Longley.dat (read from PLUMB_REFERENCE_DATA, never copied).
//! LRE as defined in ../shared/reference/nist-strd/README.md.

mod common;

use common::{nist, output, workbooks};
use plumb::fits::Registry;
use plumb::pipeline::{run, RunConfig};
use std::path::PathBuf;

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("plumb-test-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Fits a NIST dataset through the tool and returns the minimum LRE per
/// quantity: (coefficients, their SDs, residual SD, R²).
fn through_tool(name: &str, request: &str) -> Option<(f64, f64, f64, f64)> {
    let d = nist::load_linear(name)?;
    let dir = scratch(name);
    let input = dir.join(format!("{name}.xlsx"));
    let mut headers = vec!["y".to_string()];
    let mut cols = vec![d.y.iter().map(|v| Some(*v)).collect::<Vec<_>>()];
    for (i, x) in d.x.iter().enumerate() {
        headers.push(format!("x{}", i + 1));
        cols.push(x.iter().map(|v| Some(*v)).collect());
    }
    let h: Vec<&str> = headers.iter().map(|s| s.as_str()).collect();
    let req_col = headers.len() as u32 + 2;
    workbooks::write_table(&input, "Data", &h, &cols, &[(0, req_col, request)]);
    let out = dir.join("out.xlsx");
    let summary = run(&RunConfig { input, output: Some(out.clone()), created_unix: Some(0) }, &Registry::builtin()).expect("run");
    assert!(!summary.any_failed(), "{name}: {:?}", summary.problems);
    let coefs = output::coefficients(&out, "nist");
    assert_eq!(coefs.len(), d.coefficients.len(), "{name}: {coefs:?}");
    let mut min = (f64::INFINITY, f64::INFINITY, 0.0, 0.0);
    for (c, (b, sd)) in coefs.iter().zip(d.coefficients.iter().zip(&d.std_devs)) {
        min.0 = f64::min(min.0, nist::lre(c.estimate.unwrap(), *b, 15.0));
        min.1 = f64::min(min.1, nist::lre(c.std_error.unwrap(), *sd, 15.0));
    }
    min.2 = nist::lre(output::statistic(&out, "nist", "Root mean squared error").unwrap(), d.residual_sd, 15.0);
    let r2_label = if request.contains("intercept=no") { "R² (uncentred, no intercept)" } else { "R²" };
    min.3 = nist::lre(output::statistic(&out, "nist", r2_label).unwrap(), d.r_squared, 15.0);
    println!("{name}: LRE coefficients {:.1}, SDs {:.1}, residual SD {:.1}, R² {:.1}", min.0, min.1, min.2, min.3);
    let _ = std::fs::remove_dir_all(&dir);
    Some(min)
}

fn assert_lre(name: &str, request: &str, floor: f64) {
    let Some(m) = through_tool(name, request) else { return };
    for (what, v) in [("coefficients", m.0), ("standard deviations", m.1), ("residual SD", m.2), ("R²", m.3)] {
        assert!(v >= floor, "{name}: LRE of {what} is {v:.2}, below {floor}");
    }
}

#[test]
fn norris_every_certified_value_to_12_digits() {
    // NIST StRD Norris.dat: y on x, 36 observations, lower difficulty.
    assert_lre("Norris", "#linear(y, x1, name=nist)", 12.0);
}

#[test]
fn longley_every_certified_value_to_12_digits() {
    // NIST StRD Longley.dat: y on x1..x6, 16 observations, higher difficulty.
    assert_lre("Longley", "#linear(y, x1 + x2 + x3 + x4 + x5 + x6, name=nist)", 12.0);
}
