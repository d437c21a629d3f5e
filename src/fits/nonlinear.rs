//! `#nonlinear(response, model, start(...))`: least squares of the response
//! on a model with parameters, such as `a*exp(-k*Hours) + c`.
//!
//! The resolver binds the model (names in `start(...)` are parameters, all
//! others columns) into a [`Formula`]; this file evaluates it — the
//! residuals in double-double ([`eval_dd`]), the Jacobian exactly by
//! forward differentiation ([`Formula::gradient`]) — runs
//! Levenberg–Marquardt ([`crate::numeric::nls`]) and reports the parameters
//! with Wald inference on `n − p` degrees of freedom, the convergence
//! report, residual checks and the per-row columns. A run that meets no
//! convergence test within `limit=` is an error, never a result: its
//! message says where it stopped (docs/fit-language.md).

use super::linear::{count, finite, param, pval, shared_options, stat};
use super::{Fit, FitError};
use crate::numeric::dd::Dd;
use crate::numeric::diagnostics as diag;
use crate::numeric::nls::{self, NlsError, Residuals, Settings};
use crate::numeric::qr::{PivotedQr, Pivoting};
use crate::numeric::{t_quantile, t_sf};
use crate::protocol::{
    Coefficient, FitOutcome, FitRequest, Formula, Function, FunctionSpec, LeastSquares, Likelihood, Link, OptionValue, ParamKind, ParamSpec, Predictor, PredictorForm, RowColumn,
    RowRole, RowWarning,
};

/// The built-in nonlinear least-squares fit.
pub struct Nonlinear {
    spec: FunctionSpec,
}

/// The largest `limit=` accepted.
pub const MAX_LIMIT: usize = 100_000;

impl Nonlinear {
    /// The fit with its spec.
    pub fn new() -> Self {
        let p = |name: &str, kind: ParamKind, required: bool, default: Option<&str>, help: &str| ParamSpec { required, ..param(name, kind, default, &[], help) };
        let mut options = vec![ParamSpec {
            example: Some("start(a=…, k=…)".into()),
            ..p("start", ParamKind::Group, true, None, "the parameters with their starting values, such as start(a=40, k=0.2, c=5)")
        }];
        options.extend(shared_options().into_iter().filter(|o| ["name", "confidence", "weights", "gaps", "table"].contains(&o.name.as_str())));
        let default_limit = nls::DEFAULT_LIMIT.to_string();
        options.push(p("limit", ParamKind::Integer, false, Some(&default_limit), "the most iterations (trial steps) before the fit gives up"));
        Nonlinear {
            spec: FunctionSpec {
                name: "nonlinear".into(),
                help: "least squares of the response on a model with parameters (Levenberg–Marquardt, exact derivatives), with standard errors, intervals and a convergence report".into(),
                positional: vec![
                    p("response", ParamKind::Column, true, None, "the column to explain (a header name, a range, or an expression such as log(Yield))"),
                    p("model", ParamKind::Expression, true, None, "the model: columns, parameters named in start(...), numbers, pi, + - * / ^ and exp log log10 sqrt abs sin cos tan atan"),
                ],
                options,
            },
        }
    }
}

impl Default for Nonlinear {
    fn default() -> Self {
        Self::new()
    }
}

/// `ln 10` as a double-double (digits 2.302585092994045684017991454684…).
const LN_10: Dd = Dd { hi: std::f64::consts::LN_10, lo: -2.170_756_223_382_249_4e-16 };

/// The formula's value in double-double arithmetic: `+ − × ÷`, `^`, `exp`,
/// `log`, `log10` and `sqrt` to about 1e-30 relative; `abs` exactly; `sin`,
/// `cos`, `tan` and `atan` at double precision with a first-order
/// correction for the low part of their argument (docs/accuracy.md).
pub fn eval_dd(f: &Formula, columns: &[f64], params: &[f64]) -> Dd {
    let e = |g: &Formula| eval_dd(g, columns, params);
    match f {
        Formula::Number(x) => Dd::new(*x),
        Formula::Column(j) => Dd::new(columns.get(*j).copied().unwrap_or(f64::NAN)),
        Formula::Parameter(k) => Dd::new(params.get(*k).copied().unwrap_or(f64::NAN)),
        Formula::Neg(a) => -e(a),
        Formula::Add(a, b) => e(a) + e(b),
        Formula::Sub(a, b) => e(a) - e(b),
        Formula::Mul(a, b) => e(a) * e(b),
        Formula::Div(a, b) => e(a) / e(b),
        Formula::Pow(a, b) => e(a).powd(e(b)),
        Formula::Call(func, a) => {
            let x = e(a);
            match func {
                Function::Exp => x.exp(),
                Function::Log => x.ln(),
                Function::Log10 => x.ln() / LN_10,
                Function::Sqrt => {
                    if x.hi < 0.0 {
                        Dd::new(f64::NAN)
                    } else {
                        x.sqrt()
                    }
                }
                Function::Abs => x.abs(),
                _ => Dd::from_sum(func.apply(x.hi), func.derivative(x.hi) * x.lo),
            }
        }
    }
}

/// The request as a least-squares problem: `rᵢ = √wᵢ·(yᵢ − f(xᵢ; b))`.
struct Problem<'a> {
    formula: &'a Formula,
    /// Row-major column values: row `i` is `x[i*k..(i+1)*k]`.
    x: Vec<f64>,
    k: usize,
    y: &'a [f64],
    sqrt_w: Option<Vec<f64>>,
    p: usize,
}

impl Problem<'_> {
    fn row(&self, i: usize) -> &[f64] {
        &self.x[i * self.k..(i + 1) * self.k]
    }
    fn weight(&self, i: usize) -> f64 {
        self.sqrt_w.as_ref().map_or(1.0, |w| w[i])
    }
    /// The model's values at `b` in double precision (for the Fitted column).
    fn fitted(&self, b: &[f64]) -> Vec<f64> {
        (0..self.y.len()).map(|i| eval_dd(self.formula, self.row(i), b).to_f64()).collect()
    }
}

impl Residuals for Problem<'_> {
    fn rows(&self) -> usize {
        self.y.len()
    }
    fn parameters(&self) -> usize {
        self.p
    }
    fn residuals(&self, b: &[f64], out: &mut [f64]) -> Result<Dd, usize> {
        let mut rss = Dd::ZERO;
        for (i, o) in out.iter_mut().enumerate() {
            let f = eval_dd(self.formula, self.row(i), b);
            let r = (Dd::new(self.y[i]) - f).mul_f64(self.weight(i));
            if !r.is_finite() {
                return Err(i);
            }
            rss = rss + r * r;
            *o = r.to_f64();
        }
        Ok(rss)
    }
    fn jacobian(&self, b: &[f64], out: &mut [f64]) -> Result<(), usize> {
        let n = self.y.len();
        for i in 0..n {
            let (_, g) = self.formula.gradient(self.row(i), b);
            let w = self.weight(i);
            for (j, d) in g.iter().enumerate() {
                let v = -w * d;
                if !v.is_finite() {
                    return Err(i);
                }
                out[j * n + i] = v;
            }
        }
        Ok(())
    }
}

/// Whether the model has a parameter as one of its top-level added terms
/// (`… + c`): then a constant-only model is nested in it and R² compares
/// the two.
fn has_additive_constant(f: &Formula) -> bool {
    match f {
        Formula::Parameter(_) => true,
        Formula::Add(a, b) => has_additive_constant(a) || has_additive_constant(b),
        Formula::Sub(a, b) => has_additive_constant(a) || matches!(**b, Formula::Parameter(_)),
        _ => false,
    }
}

/// A number with at most 7 significant digits and no trailing zeros, for
/// messages (`1`, `0.1`, `182.2948`, `1.5e-7`).
fn figure(x: f64) -> String {
    fn trimmed(t: &str) -> &str {
        if t.contains('.') {
            t.trim_end_matches('0').trim_end_matches('.')
        } else {
            t
        }
    }
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    if x.abs() >= 1e6 || x.abs() < 1e-3 {
        let t = format!("{x:.6e}");
        let (m, e) = t.split_once('e').unwrap_or((&t, "0"));
        format!("{}e{e}", trimmed(m))
    } else {
        let digits = (6 - x.abs().log10().floor() as i32).clamp(0, 12) as usize;
        trimmed(&format!("{x:.digits$}")).to_string()
    }
}

impl Fit for Nonlinear {
    fn spec(&self) -> &FunctionSpec {
        &self.spec
    }

    fn fit(&self, req: &FitRequest) -> Result<FitOutcome, FitError> {
        let Some(model) = &req.expression else {
            return Err(FitError::new("#nonlinear needs a model with parameters").help("write the model as its second argument, such as #nonlinear(Moisture, a*exp(-k*Hours) + c, start(a=40, k=0.2, c=5))"));
        };
        let names = &model.parameters;
        let p = names.len();
        let start = match req.options.get("start") {
            Some(OptionValue::Group(g)) => g,
            _ => return Err(FitError::new("#nonlinear needs the starting values of its parameters").help("add start(name=value, …), such as start(a=40, k=0.2)")),
        };
        let mut b0 = Vec::with_capacity(p);
        for name in names {
            let v = start.iter().find(|(k, _)| k.trim().eq_ignore_ascii_case(name)).map(|(_, v)| v);
            match v {
                Some(OptionValue::Number(x)) if x.is_finite() => b0.push(*x),
                _ => return Err(FitError::new(format!("the starting value of {name} is not a number")).help(format!("give a number, such as start({name}=1)")).at_term(name.clone())),
            }
        }
        let limit = match req.options.get("limit") {
            None => nls::DEFAULT_LIMIT,
            Some(OptionValue::Number(k)) if k.fract() == 0.0 && *k >= 1.0 && *k <= MAX_LIMIT as f64 => *k as usize,
            Some(_) => return Err(FitError::new(format!("limit= takes a whole number from 1 to {MAX_LIMIT}")).help(format!("the default is limit={}", nls::DEFAULT_LIMIT))),
        };
        let n = req.rows();
        let k = req.columns.len();
        let mut x = Vec::with_capacity(n * k);
        for i in 0..n {
            x.extend(req.columns.iter().map(|c| c.values[i]));
        }
        let problem = Problem {
            formula: &model.formula,
            x,
            k,
            y: &req.response.values,
            sqrt_w: req.weights.as_ref().map(|w| w.iter().map(|v| v.sqrt()).collect()),
            p,
        };
        let fit = nls::solve(&problem, &b0, Settings { limit }).map_err(|e| match e {
            NlsError::TooFewRows { n, p } => FitError::new(format!("{n} rows for {p} parameters; least squares needs more rows than parameters")).help("add data rows or use fewer parameters"),
            NlsError::UndefinedAtStart { row } => FitError::new("the model is not a number at the starting values in {row}")
                .help("check the starting values: a logarithm or square root of a negative number, a division by zero or an overflow there")
                .at_row(row),
            NlsError::SingularAtStart { parameters } => {
                let list: Vec<&str> = parameters.iter().map(|&j| names[j].as_str()).collect();
                FitError::new(format!(
                    "at the starting values the model does not change with {} independently of the other parameters, so {} cannot be estimated from there",
                    list.join(", "),
                    if list.len() == 1 { "it" } else { "they" }
                ))
                .help("change the starting values (a parameter multiplied by another that starts at 0 is a common cause), or drop the parameter")
                .at_term(list[0].to_string())
            }
            NlsError::UndefinedJacobian { row } => FitError::new("the model's derivatives stopped being numbers during the fit, in {row}")
                .help("try starting values nearer the data, or a model defined for every row")
                .at_row(row),
        })?;
        if !fit.stop.converged() {
            let group = |b: &[f64]| format!("start({})", names.iter().zip(b).map(|(n, v)| format!("{n}={}", figure(*v))).collect::<Vec<_>>().join(", "));
            let last = if fit.jacobians > 1 {
                format!("the last accepted step came from {} and changed the parameters by {} relative", group(&fit.previous), figure(fit.last_step))
            } else {
                "no trial step lowered the residual sum of squares from the starting values".to_string()
            };
            return Err(FitError::new(format!(
                "no convergence within limit={limit} iterations: it stopped at {} (residual sum of squares {}); {last}",
                group(&fit.parameters),
                figure(fit.rss),
            ))
            .help("raise limit=, or go on from the values reached: paste them over start(…)"));
        }
        let b = &fit.parameters;
        let df = (n - p) as f64;
        let rss = fit.rss;
        let s2 = if df > 0.0 { rss / df } else { f64::NAN };
        let s = s2.sqrt();
        let mut jac = vec![0.0; n * p];
        problem.jacobian(b, &mut jac).map_err(|row| FitError::new("the model's derivatives are not numbers at the solution, in {row}").at_row(row))?;
        let cov = nls::covariance(&jac, n, p, s2);
        let q = if req.level > 0.0 && req.level < 1.0 && df > 0.0 { -t_quantile(0.5 * (1.0 - req.level), df) } else { f64::NAN };
        let mut out = FitOutcome::default();
        for j in 0..p {
            let est = b[j];
            let se = cov.matrix[j * p + j].sqrt();
            let t = est / se;
            out.coefficients.push(Coefficient {
                term: names[j].clone(),
                estimate: finite(est),
                std_error: finite(se),
                statistic: finite(t),
                p_value: finite(if df > 0.0 { 2.0 * t_sf(t.abs(), df) } else { f64::NAN }),
                lower: finite(est - q * se),
                upper: finite(est + q * se),
                vif: None,
                standardized: None,
                remark: None,
                term_p_value: None,
            });
        }
        if !cov.aliased.is_empty() {
            let list: Vec<&str> = cov.aliased.iter().map(|&j| names[j].as_str()).collect();
            out.warnings.push(format!(
                "at the solution the Jacobian is nearly singular: {} cannot be told apart from the other parameters (rank rule 1e-11), so {} standard errors are left blank; the curve may be over-parameterised",
                list.join(", "),
                if list.len() == 1 { "its" } else { "their" }
            ));
        }

        // Per-row columns: fitted and residual on the response's scale; the
        // tangent-plane leverage (the hat matrix of √W·J) and the residual
        // standardized by it.
        let fitted = problem.fitted(b);
        let residuals: Vec<f64> = req.response.values.iter().zip(&fitted).map(|(y, f)| y - f).collect();
        let weighted: Vec<f64> = fit.residuals.clone();
        let leverage = tangent_leverage(&jac, n, p);
        let standardized: Vec<f64> = weighted.iter().zip(&leverage).map(|(r, h)| if *h < 1.0 - 1e-10 { r / (s * (1.0 - h).sqrt()) } else { f64::NAN }).collect();

        // Statistics, arranged by the questions an analyst asks.
        let g = "How well the curve fits";
        let nf = n as f64;
        let log_w: f64 = req.weights.as_ref().map_or(0.0, |w| w.iter().map(|v| v.ln()).sum());
        let ll = -0.5 * nf * ((2.0 * std::f64::consts::PI).ln() + (rss / nf).ln() + 1.0) + 0.5 * log_w;
        let with_constant = has_additive_constant(&model.formula);
        let (r2, adj) = if with_constant {
            let (sw, swy) = (0..n).fold((0.0, 0.0), |(a, c), i| {
                let w = problem.weight(i).powi(2);
                (a + w, c + w * req.response.values[i])
            });
            let mean = swy / sw;
            let sst: f64 = (0..n).map(|i| problem.weight(i).powi(2) * (req.response.values[i] - mean).powi(2)).sum();
            let r2 = 1.0 - rss / sst;
            (r2, 1.0 - (1.0 - r2) * (nf - 1.0) / df)
        } else {
            (f64::NAN, f64::NAN)
        };
        out.statistics = vec![
            count("n", "Rows used (n)", g, nf),
            count("parameters", "Parameters estimated", g, p as f64),
            count("df_resid", "Degrees of freedom, residual (n − p)", g, df),
            stat("ss_resid", "Residual sum of squares", g, rss),
            stat("residual_standard_error", "Residual standard error", g, s),
        ];
        if with_constant {
            out.statistics.push(stat("r_squared", "R² (against a constant)", g, r2));
            out.statistics.push(stat("adj_r_squared", "Adjusted R²", g, adj));
        } else {
            out.notes.push("no R²: the model has no added constant parameter, so a constant-only model is not a special case of it and 1 − RSS/TSS would not measure anything".into());
        }
        out.statistics.push(stat("log_likelihood", "Log-likelihood (normal errors)", g, ll));
        out.statistics.push(stat("aic", "AIC", g, 2.0 * p as f64 - 2.0 * ll));
        out.statistics.push(stat("bic", "BIC", g, p as f64 * nf.ln() - 2.0 * ll));

        let c = "Did the iteration converge";
        out.statistics.push(count("converged", "Converged (1 = yes)", c, 1.0));
        out.statistics.push(count("iterations", "Iterations (trial steps)", c, fit.iterations as f64));
        out.statistics.push(count("jacobians", "Derivative evaluations", c, fit.jacobians as f64));
        out.statistics.push(count("restarts", "Fresh starts from the point reached", c, fit.restarts as f64));
        out.statistics.push(stat("gradient_norm", "Gradient of the sum of squares at the end (length)", c, 2.0 * fit.gradient_norm));
        out.statistics.push(stat("gradient_cosine", "Largest cosine of residuals and a parameter's derivative", c, fit.gradient_cosine));
        out.statistics.push(stat("last_step", "Last step, relative to the parameters", c, fit.last_step));
        out.statistics.push(stat("condition_number", "Condition number of the derivatives (scaled)", c, cov.condition));
        out.notes.push(format!("converged: {}", fit.stop.describe()));

        let rc = "Residual checks";
        let dw = diag::durbin_watson(&weighted);
        out.statistics.push(stat("durbin_watson", "Durbin–Watson", rc, dw));
        let jb = diag::jarque_bera(&weighted);
        out.statistics.push(stat("jarque_bera", "Jarque–Bera", rc, jb.statistic));
        out.statistics.push(pval("jarque_bera_p_value", "p-value of Jarque–Bera", rc, jb.p_value));
        out.statistics.push(stat("skewness", "Skewness of residuals (symmetric = 0)", rc, jb.skewness));
        out.statistics.push(stat("kurtosis", "Kurtosis of residuals (normal = 3)", rc, jb.kurtosis));
        if let Some((i, v)) = diag::largest(&standardized, true) {
            out.statistics.push(stat("max_standardized_residual", "Largest internally studentized residual (by size)", rc, v));
            out.statistic_rows.insert("max_standardized_residual".into(), i);
        }
        if let Some((i, v)) = diag::largest(&leverage, false) {
            out.statistics.push(stat("max_leverage", "Largest leverage (tangent plane)", rc, v));
            out.statistic_rows.insert("max_leverage".into(), i);
        }
        if dw.is_finite() && n >= 3 && (dw < super::linear::DW_BAND.0 || dw > super::linear::DW_BAND.1) {
            out.warnings.push(format!(
                "the residuals look correlated in row order: Durbin–Watson is {} (far from 2); if the rows are in time order the standard errors may be too small, or the curve may miss a systematic pattern",
                figure(dw)
            ));
        }
        let mut big: Vec<(usize, f64)> = standardized.iter().copied().enumerate().filter(|(_, v)| v.is_finite() && v.abs() > 3.0).collect();
        big.sort_by(|a, b| b.1.abs().total_cmp(&a.1.abs()));
        for &(i, v) in big.iter().take(3) {
            out.row_warnings.push(RowWarning { row: i, text: format!("{{row}} lies far from the curve (internally studentized residual {}); check it", figure(v)) });
        }
        if p > 0 && cov.aliased.is_empty() {
            // Parameters estimated with no precision at all (interval wider
            // than the estimate by far) are worth a word.
            for cf in &out.coefficients {
                if let (Some(e), Some(se)) = (cf.estimate, cf.std_error) {
                    if se > 1e3 * e.abs() && e != 0.0 {
                        out.warnings.push(format!("the parameter {} is hardly determined by the data (standard error {} for an estimate of {})", cf.term, figure(se), figure(e)));
                    }
                }
            }
        }
        out.rows = vec![
            RowColumn::new(RowRole::Fitted, fitted),
            RowColumn::new(RowRole::Residual, residuals),
            RowColumn::new(RowRole::StandardizedResidual, standardized),
            RowColumn::new(RowRole::Leverage, leverage),
        ];
        out.predictor = Some(Predictor {
            form: PredictorForm::Model { formula: model.formula.clone() },
            covariance: (0..p).map(|i| (0..p).map(|j| cov.matrix[j * p + i]).map(|v| if v.is_finite() { v } else { 0.0 }).collect()).collect(),
            link: Link::Identity,
            residual_sd: (s.is_finite() && s > 0.0).then_some(s),
            df: (df > 0.0).then_some(df),
        });
        // σ² is not counted among the parameters, as for #linear.
        out.likelihood = ll.is_finite().then_some(Likelihood { log_likelihood: ll, parameters: p as f64, observations: nf });
        out.least_squares = Some(LeastSquares { ss_resid: rss, df_resid: df, r_squared: r2, adj_r_squared: adj });
        Ok(out)
    }
}

/// The diagonal of the tangent-plane hat matrix `J(JᵀJ)⁻¹Jᵀ` (row sums of
/// squares of the thin `Q` of the pivoted QR of `J`, stopped at the rank
/// rule): the leverage of each row in the linearised model at the solution.
fn tangent_leverage(jac: &[f64], n: usize, p: usize) -> Vec<f64> {
    let mut qr = PivotedQr::factor(jac.to_vec(), n, p, Pivoting::Largest, crate::numeric::RANK_TOLERANCE, 0.0);
    qr.form_thin_q();
    let mut h = vec![0.0; n];
    for j in 0..qr.rank {
        for (hi, q) in h.iter_mut().zip(qr.q_column(j)) {
            *hi += q * q;
        }
    }
    h
}
