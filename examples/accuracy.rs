//! The accuracy report: every NIST StRD linear dataset fitted through the
//! whole tool (workbook in, `plumb run`, workbook read back with calamine),
//! printing the minimum log relative error (LRE, as defined in
//! ../shared/reference/nist-strd/README.md) per quantity as a Markdown table.
//!
//! ```text
//! PLUMB_REFERENCE_DATA=../shared/reference cargo run --example accuracy
//! ```
//!
//! The same measurements are asserted (LRE ≥ 13) by `tests/nist_linear.rs`;
//! the output is recorded in docs/accuracy.md. Then the 27 nonlinear
//! datasets from both starts, hardest first (asserted LRE ≥ 7 by
//! `tests/nist_nonlinear.rs`; 11 = every printed digit).

#[path = "../tests/common/mod.rs"]
mod common;

use common::nist;

fn main() {
    let requests: [(&str, String); 13] = [
        ("Norris", "#linear(y, x1, name=nist)".into()),
        ("Pontius", "#polynomial(y, x1, degree=2, name=nist)".into()),
        ("Pontius", "#linear(y, x1 + x1^2, name=nist)".into()),
        ("NoInt1", "#linear(y, x1, intercept=no, name=nist)".into()),
        ("NoInt2", "#linear(y, x1, intercept=no, name=nist)".into()),
        ("Filip", "#polynomial(y, x1, degree=10, name=nist)".into()),
        ("Filip", format!("#linear(y, x1 + {}, name=nist)", (2..=10).map(|k| format!("x1^{k}")).collect::<Vec<_>>().join(" + "))),
        ("Longley", "#linear(y, x1 + x2 + x3 + x4 + x5 + x6, name=nist)".into()),
        ("Wampler1", "#polynomial(y, x1, degree=5, name=nist)".into()),
        ("Wampler2", "#polynomial(y, x1, degree=5, name=nist)".into()),
        ("Wampler3", "#polynomial(y, x1, degree=5, name=nist)".into()),
        ("Wampler4", "#polynomial(y, x1, degree=5, name=nist)".into()),
        ("Wampler5", "#polynomial(y, x1, degree=5, name=nist)".into()),
    ];
    println!("Minimum LRE per quantity (15 = every printed digit; coef and SD: minimum over the parameters; SS, MS: minimum of regression and residual)\n");
    println!("{} request |", nist::TABLE_HEADER.lines().next().unwrap_or(""));
    println!("|---|---|---|---|---|---|---|---|---|");
    for (name, request) in &requests {
        match nist::through_tool(name, request) {
            Some(l) => println!("{} `{}` |", l.row(), request),
            None => {
                eprintln!("the NIST reference data is not available; set PLUMB_REFERENCE_DATA");
                std::process::exit(2);
            }
        }
    }
    println!("\nNonlinear: minimum LRE per quantity (11 = every printed digit; Lanczos1's RSS, residual SD and SDs against the exact solution of its stored data)\n");
    println!("{}", nist::NONLINEAR_HEADER);
    for name in nist::NONLINEAR {
        for start in [1, 2] {
            match nist::nonlinear_through_tool(name, start) {
                Some(l) => println!("{}", l.row()),
                None => std::process::exit(2),
            }
        }
    }
}
