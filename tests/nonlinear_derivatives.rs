//! The exact derivatives of `#nonlinear` (forward differentiation of the
//! model tree, `Formula::gradient`) checked two ways, each model built
//! through the request language (parsed, then bound by the resolver's
//! formula builder against the `#nonlinear` spec, as a workbook's request
//! is):
//!
//! - against derivatives worked out by hand for three NIST StRD models
//!   (Misra1a, MGH09, Rat43; the models as printed in the NIST files,
//!   derivatives by the usual rules of calculus, common practice);
//! - as a property, against five-point central differences at random
//!   points of all 27 NIST StRD nonlinear models (read from
//!   PLUMB_REFERENCE_DATA, skipped with a notice when absent): parameters
//!   within ±10 % of the certified estimates, the columns anywhere in the
//!   range of the file's data, points where the curve leaves ten times the
//!   certified curve's range (near a pole of a rational model) set aside;
//! - the symbolic derivatives (`Formula::derivative`) against the forward
//!   gradient at the same kind of random points.

mod common;

use common::nist;
use plumb::cells::CellAddress;
use plumb::fits::nonlinear::Nonlinear;
use plumb::fits::Fit;
use plumb::protocol::Formula;
use plumb::resolve::{bind, BoundValue};
use plumb::syntax::parse_request;
use proptest::prelude::*;
use std::sync::OnceLock;

/// The model of a `#nonlinear` request as plumb builds it: its formula and
/// the labels of the columns it uses, in the formula's column order.
fn model_of(request: &str) -> (Formula, Vec<String>) {
    let req = parse_request(request).unwrap_or_else(|e| panic!("{request}: {e:?}"));
    let spec = Nonlinear::new();
    let bound = bind(spec.spec(), &req, &CellAddress::new("Data", 0, 0), request).unwrap_or_else(|e| panic!("{request}: {e}"));
    let model = bound.positional.iter().find_map(|a| match &a.value {
        BoundValue::Expression(x) => Some(x),
        _ => None,
    });
    let x = model.unwrap_or_else(|| panic!("{request}: no model bound"));
    (x.formula.clone(), x.columns.iter().map(|c| c.label.clone()).collect())
}

/// Asserts that plumb's gradient at (x, b) equals `want` to 1e-13 relative
/// (rounding of a few operations), and its value equals `value`.
fn assert_gradient(f: &Formula, x: &[f64], b: &[f64], value: f64, want: &[f64], what: &str) {
    let (v, g) = f.gradient(x, b);
    assert!((v - value).abs() <= 1e-13 * value.abs(), "{what}: value {v} against {value}");
    assert_eq!(g.len(), want.len(), "{what}");
    for (j, (got, w)) in g.iter().zip(want).enumerate() {
        assert!((got - w).abs() <= 1e-13 * w.abs().max(1e-300), "{what}: ∂/∂b{} is {got}, by hand {w}", j + 1);
    }
}

#[test]
fn misra1a_by_hand() {
    // NIST StRD Misra1a: y = b1*(1-exp[-b2*x]).
    // ∂/∂b1 = 1 − e^(−b2·x);  ∂/∂b2 = b1·x·e^(−b2·x).
    let (f, cols) = model_of("#nonlinear(y, b1*(1-exp(-b2*x)), start(b1=500, b2=1e-4))");
    assert_eq!(cols, ["x"]);
    for &(b1, b2, x) in &[(238.94212918_f64, 0.00055015643181, 77.6), (500.0, 1e-4, 790.0), (-3.5, 2.0, 0.25_f64)] {
        let e = (-b2 * x).exp();
        assert_gradient(&f, &[x], &[b1, b2], b1 * (1.0 - e), &[1.0 - e, b1 * x * e], &format!("Misra1a at b=({b1}, {b2}), x={x}"));
    }
}

#[test]
fn mgh09_by_hand() {
    // NIST StRD MGH09: y = b1*(x**2+x*b2) / (x**2+x*b3+b4).
    // With N = x² + b2·x and D = x² + b3·x + b4:
    // ∂/∂b1 = N/D;  ∂/∂b2 = b1·x/D;  ∂/∂b3 = −b1·N·x/D²;  ∂/∂b4 = −b1·N/D².
    let (f, cols) = model_of("#nonlinear(y, b1*(x^2+x*b2) / (x^2+x*b3+b4), start(b1=25, b2=39, b3=41.5, b4=39))");
    assert_eq!(cols, ["x"]);
    for &(b, x) in &[([0.19280693458_f64, 0.19128232873, 0.12305650693, 0.13606233068], 4.0), ([25.0, 39.0, 41.5, 39.0], 0.0625), ([0.25, 0.39, 0.415, 0.39], 0.75)] {
        let [b1, b2, b3, b4] = b;
        let n = x * x + x * b2;
        let d = x * x + x * b3 + b4;
        let want = [n / d, b1 * x / d, -b1 * n * x / (d * d), -b1 * n / (d * d)];
        assert_gradient(&f, &[x], &b, b1 * n / d, &want, &format!("MGH09 at b={b:?}, x={x}"));
    }
}

#[test]
fn rat43_by_hand() {
    // NIST StRD Rat43: y = b1 / ((1+exp[b2-b3*x])**(1/b4)).
    // With E = e^(b2 − b3·x), u = 1 + E and f = b1·u^(−1/b4):
    // ∂/∂b1 = u^(−1/b4);  ∂/∂b2 = −f·E/(b4·u);  ∂/∂b3 = f·x·E/(b4·u);
    // ∂/∂b4 = f·ln(u)/b4².
    let (f, cols) = model_of("#nonlinear(y, b1 / ((1+exp(b2-b3*x))^(1/b4)), start(b1=100, b2=10, b3=1, b4=1))");
    assert_eq!(cols, ["x"]);
    for &(b, x) in &[([699.6415127_f64, 5.2771253025, 0.75962938329, 1.2792483859], 9.0), ([100.0, 10.0, 1.0, 1.0], 1.0), ([700.0, 5.0, 0.75, 1.3], 15.0)] {
        let [b1, b2, b3, b4] = b;
        let e = (b2 - b3 * x).exp();
        let u = 1.0 + e;
        let v = b1 * u.powf(-1.0 / b4);
        let want = [u.powf(-1.0 / b4), -v * e / (b4 * u), v * x * e / (b4 * u), v * u.ln() / (b4 * b4)];
        assert_gradient(&f, &[x], &b, v, &want, &format!("Rat43 at b={b:?}, x={x}"));
    }
}

/// One NIST model as plumb builds it, with what a random point needs.
struct Model {
    name: &'static str,
    formula: Formula,
    /// Certified estimates.
    estimates: Vec<f64>,
    /// Per formula column: the smallest and largest value in the data.
    ranges: Vec<(f64, f64)>,
    /// The largest |f| of the certified curve over the data rows.
    scale: f64,
}

/// All 27 models, loaded once; `None` without the reference data.
fn models() -> Option<&'static [Model]> {
    static MODELS: OnceLock<Option<Vec<Model>>> = OnceLock::new();
    MODELS
        .get_or_init(|| {
            let mut out = Vec::new();
            for name in nist::NONLINEAR {
                let d = nist::load_nonlinear(name)?;
                let (formula, cols) = model_of(&d.request(1));
                let headers = d.headers();
                // The formula's column j is the data column of its label.
                let data: Vec<&Vec<f64>> = cols
                    .iter()
                    .map(|c| {
                        let k = headers.iter().position(|h| h == c).unwrap_or_else(|| panic!("{name}: column {c} not among {headers:?}"));
                        &d.x[k - 1]
                    })
                    .collect();
                let ranges = data.iter().map(|v| v.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| (lo.min(*x), hi.max(*x)))).collect();
                let scale = (0..d.y.len())
                    .map(|i| {
                        let row: Vec<f64> = data.iter().map(|v| v[i]).collect();
                        formula.eval(&row, &d.estimates).abs()
                    })
                    .fold(0.0, f64::max);
                out.push(Model { name, formula, estimates: d.estimates, ranges, scale });
            }
            Some(out)
        })
        .as_deref()
}

/// The five-point central difference of the model in parameter `j`,
/// step `h`: (8·(f(b+h) − f(b−h)) − (f(b+2h) − f(b−2h))) / 12h, error
/// O(h⁴) (common practice).
fn central(f: &Formula, x: &[f64], b: &[f64], j: usize, h: f64) -> f64 {
    let at = |t: f64| {
        let mut c = b.to_vec();
        c[j] += t;
        f.eval(x, &c)
    };
    (8.0 * (at(h) - at(-h)) - (at(2.0 * h) - at(-2.0 * h))) / (12.0 * h)
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 1000, ..ProptestConfig::default() })]

    #[test]
    fn gradients_of_every_nist_model_match_central_differences_and_the_symbolic_derivatives(
        which in 0usize..27,
        u in prop::collection::vec(-1.0f64..1.0, 9),
        t in prop::collection::vec(0.0f64..1.0, 2),
    ) {
        let Some(models) = models() else { return Ok(()) };
        let m = &models[which];
        let b: Vec<f64> = m.estimates.iter().zip(&u).map(|(e, u)| e * (1.0 + 0.1 * u)).collect();
        let x: Vec<f64> = m.ranges.iter().zip(&t).map(|((lo, hi), t)| lo + t * (hi - lo)).collect();
        let (v, g) = m.formula.gradient(&x, &b);
        prop_assume!(v.is_finite() && v.abs() <= 10.0 * m.scale);
        prop_assert_eq!(v, m.formula.eval(&x, &b), "{}: the gradient's value is the model's", m.name);
        for (j, d) in g.iter().enumerate() {
            let h = 1e-5 * b[j].abs();
            let fd = central(&m.formula, &x, &b, j, h);
            // Truncation (h⁴ terms) and rounding (ε·|f|/h) both far below
            // 1e-6 of the larger of |∂f/∂bⱼ| and |f|/|bⱼ|.
            let tol = 1e-6 * (d.abs() + v.abs() / b[j].abs());
            prop_assert!((d - fd).abs() <= tol, "{}: ∂/∂b{} at b={:?}, x={:?}: exact {}, central difference {}", m.name, j + 1, b, x, d, fd);
            // The symbolic derivative (what the prediction calculator writes
            // as a live formula): the same rules applied the other way, so
            // equal to rounding (common practice).
            let sym = m.formula.derivative(j).eval(&x, &b);
            prop_assert!((d - sym).abs() <= 1e-6 * tol, "{}: ∂/∂b{} at b={:?}, x={:?}: forward {}, symbolic {}", m.name, j + 1, b, x, d, sym);
        }
    }
}

#[test]
fn every_nist_model_is_built_with_its_columns() {
    // NIST StRD: each model uses x (Nelson x1 and x2), and all its parameters.
    let Some(models) = models() else { return };
    assert_eq!(models.len(), 27);
    for m in models {
        let want = if m.name == "Nelson" { 2 } else { 1 };
        assert_eq!(m.ranges.len(), want, "{}", m.name);
        assert_eq!(m.formula.max_parameter(), Some(m.estimates.len() - 1), "{}", m.name);
        assert!(m.scale > 0.0 && m.scale.is_finite(), "{}", m.name);
    }
}
