//! All 11 NIST StRD linear datasets through the whole tool: a workbook with a
//! request is written, `plumb run` fits it, and the output is read back with
//! calamine. Every certified value is checked: each coefficient and its
//! standard deviation, the residual standard deviation, R², and the
//! analysis of variance (degrees of freedom, sums of squares, mean squares,
//! F). Certified values: NIST/ITL Statistical Reference Datasets, files
//! Norris.dat, Pontius.dat, NoInt1.dat, NoInt2.dat, Filip.dat, Longley.dat,
//! Wampler1.dat … Wampler5.dat (read from PLUMB_REFERENCE_DATA, never
//! copied). LRE as defined in ../shared/reference/nist-strd/README.md (log
//! absolute error where the certified value is 0).

mod common;

use common::nist;

/// The floor every certified value must reach (the goal).
const FLOOR: f64 = 13.0;

fn check(name: &str, request: &str) {
    let Some(l) = nist::through_tool(name, request) else { return };
    println!("{}", l.row());
    for (what, v) in l.named() {
        assert!(v >= FLOOR, "{name} ({request}): LRE of {what} is {v:.2}, below {FLOOR}");
    }
}

fn slopes(k: usize) -> String {
    (1..=k).map(|i| format!("x{i}")).collect::<Vec<_>>().join(" + ")
}

#[test]
fn norris() {
    // NIST StRD Norris.dat: straight line, 36 observations, lower difficulty.
    check("Norris", "#linear(y, x1, name=nist)");
}

#[test]
fn pontius_polynomial() {
    // NIST StRD Pontius.dat: quadratic, 40 observations, lower difficulty.
    check("Pontius", "#polynomial(y, x1, degree=2, name=nist)");
}

#[test]
fn pontius_powers_inside_linear() {
    // NIST StRD Pontius.dat, the powers written as terms of #linear.
    check("Pontius", "#linear(y, x1 + x1^2, name=nist)");
}

#[test]
fn noint1() {
    // NIST StRD NoInt1.dat: line through the origin, uncentred R².
    check("NoInt1", "#linear(y, x1, intercept=no, name=nist)");
}

#[test]
fn noint2() {
    // NIST StRD NoInt2.dat: line through the origin, 3 observations.
    check("NoInt2", "#linear(y, x1, intercept=no, name=nist)");
}

#[test]
fn filip_polynomial() {
    // NIST StRD Filip.dat: degree 10, 82 observations, higher difficulty;
    // ill-conditioned but of full rank.
    check("Filip", "#polynomial(y, x1, degree=10, name=nist)");
}

#[test]
fn filip_powers_inside_linear() {
    // NIST StRD Filip.dat, the ten powers written as terms of #linear.
    let terms: Vec<String> = (1..=10).map(|k| if k == 1 { "x1".to_string() } else { format!("x1^{k}") }).collect();
    check("Filip", &format!("#linear(y, {}, name=nist)", terms.join(" + ")));
}

#[test]
fn longley() {
    // NIST StRD Longley.dat: 6 predictors, 16 observations, higher difficulty.
    check("Longley", &format!("#linear(y, {}, name=nist)", slopes(6)));
}

#[test]
fn wampler1() {
    // NIST StRD Wampler1.dat: degree 5, exact fit (certified SDs 0).
    check("Wampler1", "#polynomial(y, x1, degree=5, name=nist)");
}

#[test]
fn wampler2() {
    // NIST StRD Wampler2.dat: degree 5, exact fit (certified SDs 0).
    check("Wampler2", "#polynomial(y, x1, degree=5, name=nist)");
}

#[test]
fn wampler3() {
    // NIST StRD Wampler3.dat: degree 5.
    check("Wampler3", "#polynomial(y, x1, degree=5, name=nist)");
}

#[test]
fn wampler4() {
    // NIST StRD Wampler4.dat: degree 5.
    check("Wampler4", "#polynomial(y, x1, degree=5, name=nist)");
}

#[test]
fn wampler5() {
    // NIST StRD Wampler5.dat: degree 5, the largest residuals.
    check("Wampler5", "#polynomial(y, x1, degree=5, name=nist)");
}

#[test]
fn reader_sees_every_certified_value() {
    // NIST StRD: all 11 linear files parse with their full certified tables.
    for name in nist::LINEAR {
        let Some(d) = nist::load_linear(name) else { return };
        assert!(d.anova.is_some(), "{name}: ANOVA table");
        assert_eq!(d.coefficients.len(), d.std_devs.len());
    }
}
