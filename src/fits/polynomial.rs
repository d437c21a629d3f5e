//! `#polynomial(response, x, degree=k)`: least squares of the response on
//! `x, x², …, x^k` (and an intercept unless `intercept=no`).
//!
//! The request is turned into a linear request whose columns are the powers
//! of `x`, each marked as a power of the base `x` ([`PowerOf`]), and handed
//! to [`Linear`]: the numerics then fit in a centred, scaled basis and report
//! the coefficients in the user's basis (see `numeric::poly`), and every
//! statistic and per-row column is the linear family's.

use super::linear::{shared_options, Linear};
use super::{Fit, FitError};
use crate::protocol::{Column, FitOutcome, FitRequest, Formula, FunctionSpec, OptionValue, ParamKind, ParamSpec, PowerOf, PredictorForm};

/// The highest degree accepted.
pub const MAX_DEGREE: u32 = 30;

/// The built-in polynomial fit.
pub struct Polynomial {
    spec: FunctionSpec,
    linear: Linear,
}

impl Polynomial {
    /// The fit with its spec.
    pub fn new() -> Self {
        let p = |name: &str, kind: ParamKind, help: &str| ParamSpec {
            name: name.into(),
            kind,
            required: true,
            default: None,
            choices: Vec::new(),
            help: help.into(),
            example: None,
        };
        let mut options = vec![p("degree", ParamKind::Integer, "the degree k of the polynomial: the terms are x, x², …, x^k")];
        options.extend(shared_options());
        Polynomial {
            spec: FunctionSpec {
                name: "polynomial".into(),
                help: "least squares of the response on the powers x, x², …, x^k of one column, fitted in a centred and scaled basis".into(),
                positional: vec![
                    p("response", ParamKind::Column, "the column to explain (a header name, a range, or an expression such as log(Yield))"),
                    p("x", ParamKind::Column, "the one numeric column whose powers are the terms"),
                ],
                options,
            },
            linear: Linear::new(),
        }
    }
}

impl Default for Polynomial {
    fn default() -> Self {
        Self::new()
    }
}

impl Fit for Polynomial {
    fn spec(&self) -> &FunctionSpec {
        &self.spec
    }

    fn fit(&self, req: &FitRequest) -> Result<FitOutcome, FitError> {
        let degree = match req.options.get("degree") {
            Some(OptionValue::Number(k)) if k.fract() == 0.0 && *k >= 1.0 && *k <= f64::from(MAX_DEGREE) => *k as u32,
            Some(OptionValue::Number(k)) => {
                return Err(FitError::new(format!("degree={k} is not a whole number from 1 to {MAX_DEGREE}"))
                    .help("give the degree as a whole number, such as degree=2"))
            }
            _ => {
                return Err(FitError::new("#polynomial needs its degree")
                    .help("add degree=k, such as #polynomial(Yield, Light, degree=2)"))
            }
        };
        let [base] = req.columns.as_slice() else {
            let e = FitError::new(format!("#polynomial takes one numeric column as x, but x makes {} model columns", req.columns.len()))
                .help("give one numeric column, such as Light; use #linear for several terms");
            return Err(match req.columns.first() {
                Some(c) => e.at_term(c.term.clone()),
                None => e,
            });
        };
        let p = degree as usize + usize::from(req.intercept);
        if req.rows() <= p {
            return Err(FitError::new(format!(
                "{} rows are usable, but a polynomial of degree {degree} has {p} parameters; least squares needs more rows than parameters",
                req.rows()
            ))
            .help("add data rows or lower the degree"));
        }
        let columns = (1..=degree)
            .map(|e| {
                let name = if e == 1 { base.name.clone() } else { format!("{}^{e}", base.name) };
                Column {
                    name,
                    term: base.term.clone(),
                    values: base.values.iter().map(|v| v.powi(e as i32)).collect(),
                    power: Some(PowerOf { base: base.name.clone(), exponent: e, base_values: base.values.clone() }),
                }
            })
            .collect();
        let mut options = req.options.clone();
        options.remove("degree");
        let linear_req = FitRequest { function: "linear".into(), columns, options, ..req.clone() };
        let mut out = self.linear.fit(&linear_req)?;
        // Warnings about a power belong to the one column sent, x.
        for w in &mut out.term_warnings {
            w.term = base.term.clone();
        }
        // The linear fit's model row names the powers it was sent; a new
        // point gives only x, so the row is 1, x, x², … of request column 0.
        if let Some(pr) = &mut out.predictor {
            if let PredictorForm::Linear { model_row } = &mut pr.form {
                for f in model_row.iter_mut() {
                    if let Formula::Column(j) = *f {
                        let e = j as f64 + 1.0;
                        *f = if j == 0 { Formula::Column(0) } else { Formula::pow(Formula::Column(0), Formula::Number(e)) };
                    }
                }
            }
        }
        out.notes.push(format!(
            "polynomial of degree {degree} in {}: fitted in a centred and scaled basis, coefficients reported for the powers of {} as given",
            base.name, base.name
        ));
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    fn request(x: &[f64], y: &[f64], degree: f64) -> FitRequest {
        let col = |name: &str, v: &[f64]| Column { name: name.into(), term: name.into(), values: v.to_vec(), power: None };
        let mut options = BTreeMap::new();
        options.insert("degree".to_string(), OptionValue::Number(degree));
        FitRequest { options, ..FitRequest::new("polynomial", col("Yield", y), vec![col("Light", x)]) }
    }

    #[test]
    fn quadratic_terms_are_labelled_and_exact() {
        // y = 2 + 0.25·Light² exactly (invented greenhouse data): the
        // coefficients come back exactly (common practice: exact fit).
        let x: Vec<f64> = (0..10).map(|i| 5.0 + i as f64).collect();
        let y: Vec<f64> = x.iter().map(|v| 2.0 + 0.25 * v * v).collect();
        let out = Polynomial::new().fit(&request(&x, &y, 2.0)).expect("fits");
        let terms: Vec<&str> = out.coefficients.iter().map(|c| c.term.as_str()).collect();
        assert_eq!(terms, ["Intercept", "Light", "Light^2"]);
        let est: Vec<f64> = out.coefficients.iter().map(|c| c.estimate.unwrap_or(f64::NAN)).collect();
        assert!((est[0] - 2.0).abs() < 1e-13 && est[1].abs() < 1e-13 && (est[2] - 0.25).abs() < 1e-15, "{est:?}");
    }

    #[test]
    fn a_column_without_power_reads_from_older_json() {
        // Protocol version 1 JSON written before `power` existed still reads.
        let c: Column = serde_json::from_str(r#"{"name":"Light","term":"Light","values":[1.0,2.0]}"#).expect("valid JSON");
        assert_eq!(c.power, None);
        assert!(!serde_json::to_string(&c).expect("serialises").contains("power"));
    }

    #[test]
    fn the_order_and_newey_west_errors_reach_the_linear_fit() {
        // The rows sent in reverse time order: order= puts them right, so
        // Durbin–Watson equals that of the rows in time order (the
        // statistic is the same read forwards or backwards: a check of the
        // plumbing, not of a figure).
        let x: Vec<f64> = (0..15).map(|i| i as f64).collect();
        let y: Vec<f64> = x.iter().map(|v| 1.0 + 0.3 * v - 0.02 * v * v + ((*v as i32 * 7) % 4) as f64 * 0.1).collect();
        let forward = Polynomial::new().fit(&request(&x, &y, 2.0)).expect("fits");
        let (xr, yr): (Vec<f64>, Vec<f64>) = (x.iter().rev().copied().collect(), y.iter().rev().copied().collect());
        let mut req = request(&xr, &yr, 2.0);
        req.options.insert("order".into(), OptionValue::Text("Day".into()));
        req.options.insert("errors".into(), OptionValue::Text("neweywest".into()));
        req.option_columns.insert("order".into(), xr.iter().map(|v| 100.0 - v).collect());
        let out = Polynomial::new().fit(&req).expect("fits");
        let dw = |o: &FitOutcome| o.statistics.iter().find(|s| s.key == "durbin_watson").cloned().expect("Durbin–Watson");
        assert!((dw(&out).value - dw(&forward).value).abs() < 1e-12);
        assert_eq!(dw(&out).detail.as_deref(), Some("rows sorted by Day"));
        assert_eq!(out.standard_errors.as_deref(), Some("Newey–West"));
    }

    #[test]
    fn bad_degree_and_too_few_rows_are_errors() {
        let x = [1.0, 2.0, 3.0];
        let y = [1.0, 4.0, 9.0];
        assert!(Polynomial::new().fit(&request(&x, &y, 2.5)).unwrap_err().message.contains("whole number"));
        assert!(Polynomial::new().fit(&request(&x, &y, 2.0)).unwrap_err().message.contains("more rows than parameters"));
    }
}
