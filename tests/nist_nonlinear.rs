//! All 27 NIST StRD nonlinear datasets from both published starting values
//! through the whole tool: a workbook with the data and the request
//! `#nonlinear(y, MODEL, start(...))` (the model as printed in each file's
//! header, translated to the fit language) is written, `plumb run` fits
//! it, and the output is read back with calamine. Every certified value
//! is held to LRE ≥ 7: each parameter and its standard deviation, the
//! residual sum of squares and the residual standard deviation.
//! Certified values: NIST/ITL Statistical Reference Datasets, nonlinear
//! regression files (read from PLUMB_REFERENCE_DATA, never copied). One
//! exception, from the issue: Lanczos1's certified RSS (1.43e-25) is below
//! what its data rounded to doubles can give, so its RSS, residual SD and
//! standard deviations are held to the exact solution of the stored data
//! (tests/data/lanczos1_exact.json, mpmath 1.3.0, script
//! tests/reference/lanczos1_exact.py) and its parameters to the certificate.

mod common;

use common::nist;

/// The floor every certified value must reach (the goal).
const FLOOR: f64 = 7.0;

fn check(name: &str) {
    for start in [1, 2] {
        let Some(l) = nist::nonlinear_through_tool(name, start) else { return };
        println!("{}", l.row());
        for (what, v) in l.named() {
            assert!(v >= FLOOR, "{name} start {start}: LRE of {what} is {v:.2}, below {FLOOR}");
        }
    }
}

macro_rules! nist_tests {
    ($($test:ident => $name:literal),* $(,)?) => {
        $(
            #[test]
            fn $test() {
                // NIST StRD nonlinear file of this name, both starts.
                check($name);
            }
        )*
    };
}

nist_tests! {
    mgh09 => "MGH09", thurber => "Thurber", boxbod => "BoxBOD", rat42 => "Rat42", mgh10 => "MGH10",
    eckerle4 => "Eckerle4", rat43 => "Rat43", bennett5 => "Bennett5", kirby2 => "Kirby2", hahn1 => "Hahn1",
    nelson => "Nelson", mgh17 => "MGH17", lanczos1 => "Lanczos1", lanczos2 => "Lanczos2", gauss3 => "Gauss3",
    misra1c => "Misra1c", misra1d => "Misra1d", roszman1 => "Roszman1", enso => "ENSO", misra1a => "Misra1a",
    chwirut2 => "Chwirut2", chwirut1 => "Chwirut1", lanczos3 => "Lanczos3", gauss1 => "Gauss1", gauss2 => "Gauss2",
    danwood => "DanWood", misra1b => "Misra1b",
}

#[test]
fn reader_sees_every_model_and_certified_value() {
    // NIST StRD: all 27 nonlinear files parse, with two starts and a
    // certified SD per parameter; the translated models of two files as
    // read from their headers.
    for name in nist::NONLINEAR {
        let Some(d) = nist::load_nonlinear(name) else { return };
        assert_eq!(d.starts[0].len(), d.estimates.len(), "{name}");
        assert_eq!(d.starts[1].len(), d.std_devs.len(), "{name}");
        // Rat43.dat prints 9 degrees of freedom for 15 observations and 4
        // parameters; its certified residual SD, √(RSS/11), uses 11.
        let df = if name == "Rat43" { 11.0 } else { d.df };
        assert_eq!(df as usize, d.y.len() - d.estimates.len(), "{name}");
    }
    let Some(d) = nist::load_nonlinear("Nelson") else { return };
    assert_eq!(d.request_parts(), ("log(y)".to_string(), "b1 - b2*x1 * exp(-b3*x2)".to_string()));
    let Some(d) = nist::load_nonlinear("ENSO") else { return };
    assert!(d.request_parts().1.ends_with("+ b9*sin( 2*pi*x/b7 )"), "{:?}", d.request_parts());
}
