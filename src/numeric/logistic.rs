//! Binary and binomial logistic regression by maximum likelihood.
//!
//! Iteratively reweighted least squares: each step solves the weighted
//! least squares problem `min ‖W^½(z − Xβ)‖` by pivoted Householder QR of
//! `W^½X` (never the normal equations), with the step halved while the
//! deviance rises. Convergence, separation and the figures that follow
//! (covariance, leverage, residuals, Cook's distance) are documented in
//! docs/accuracy.md. Nothing here knows about workbooks or requests.

use super::qr::{Pivoting, PivotedQr};
use super::RANK_TOLERANCE;

/// The most iterations before giving up.
pub const MAX_ITERATIONS: usize = 100;
/// Convergence: relative change of the deviance `|ΔD|/(|D| + 0.1)` below this…
pub const DEVIANCE_TOLERANCE: f64 = 1e-13;
/// …and the Newton decrement `uᵀ(XᵀWX)⁻¹u` (the score `u` in the metric of
/// the information) below this.
pub const SCORE_TOLERANCE: f64 = 1e-14;
/// A linear predictor beyond ±this (a fitted probability within about
/// 1e-13 of 0 or 1) on the data means separation: the likelihood has no
/// finite maximum.
pub const SEPARATION_ETA: f64 = 30.0;

/// A logistic problem: `events[i]` of `trials[i]` (1 for a 0/1 response),
/// each row counted `weights[i]` times (frequency weights).
#[derive(Clone, Copy, Debug)]
pub struct LogisticProblem<'a> {
    /// Design, column-major `n × p` (the caller includes the intercept).
    pub x: &'a [f64],
    /// Rows.
    pub n: usize,
    /// Columns.
    pub p: usize,
    /// Events per row, `0 ≤ events ≤ trials`.
    pub events: &'a [f64],
    /// Trials per row, positive.
    pub trials: &'a [f64],
    /// Frequency weights, positive.
    pub weights: Option<&'a [f64]>,
}

/// The maximum likelihood fit.
#[derive(Clone, Debug)]
pub struct LogisticFit {
    /// Estimates; NaN for an aliased column.
    pub coefficients: Vec<f64>,
    /// Standard errors `sqrt((XᵀWX)⁻¹ⱼⱼ)`; NaN for an aliased column.
    pub std_errors: Vec<f64>,
    /// Column-major `p × p` inverse information; NaN rows/columns for aliased columns.
    pub covariance: Vec<f64>,
    /// Columns found to be linear combinations of the others.
    pub aliased: Vec<bool>,
    /// Columns estimated.
    pub rank: usize,
    /// Linear predictor per row.
    pub eta: Vec<f64>,
    /// Fitted probability per row.
    pub probability: Vec<f64>,
    /// Hat diagonal of `W^½X` at the estimate.
    pub leverage: Vec<f64>,
    /// Pearson residuals `(k − mπ)/√(mπ(1−π))` times √weight.
    pub pearson: Vec<f64>,
    /// Deviance residuals: signed square roots of each row's deviance.
    pub deviance_residuals: Vec<f64>,
    /// Cook's distance `r²_P h / (rank (1 − h)²)` (the one-step form).
    pub cooks: Vec<f64>,
    /// Residual deviance.
    pub deviance: f64,
    /// Deviance of the model with the intercept alone (or of π = ½ without one).
    pub null_deviance: f64,
    /// Log-likelihood, binomial coefficients included.
    pub log_likelihood: f64,
    /// Log-likelihood of the null model.
    pub null_log_likelihood: f64,
    /// Total count `Σ weight·trials` (the observations).
    pub observations: f64,
    /// Total events `Σ weight·events`.
    pub total_events: f64,
    /// IRLS iterations used.
    pub iterations: usize,
}

/// Why a logistic fit failed.
#[derive(Clone, Debug, PartialEq)]
pub enum LogisticError {
    /// No columns, or every column zero.
    NoColumns,
    /// The data are separated: these columns' estimates grow without bound.
    Separation {
        /// Design columns whose coefficients run away, largest first.
        columns: Vec<usize>,
    },
    /// No convergence within [`MAX_ITERATIONS`].
    NoConvergence,
}

fn ln_choose(m: f64, k: f64) -> f64 {
    ln_gamma(m + 1.0) - ln_gamma(k + 1.0) - ln_gamma(m - k + 1.0)
}

fn ln_gamma(x: f64) -> f64 {
    statrs::function::gamma::ln_gamma(x)
}

/// `y ln(y/π) + (1−y) ln((1−y)/(1−π))` with `0 ln 0 = 0`.
fn unit_deviance(y: f64, p: f64) -> f64 {
    let a = if y > 0.0 { y * (y / p).ln() } else { 0.0 };
    let b = if y < 1.0 { (1.0 - y) * ((1.0 - y) / (1.0 - p)).ln() } else { 0.0 };
    2.0 * (a + b)
}

fn sigmoid(eta: f64) -> f64 {
    if eta >= 0.0 {
        1.0 / (1.0 + (-eta).exp())
    } else {
        let e = eta.exp();
        e / (1.0 + e)
    }
}

/// Row data shared by the steps: prior weight `a = weight·trials`, the
/// observed proportion `y`, and the log binomial coefficient times weight.
struct Rows {
    a: Vec<f64>,
    y: Vec<f64>,
    f: Vec<f64>,
    m: Vec<f64>,
    k: Vec<f64>,
}

impl Rows {
    fn deviance(&self, prob: &[f64]) -> f64 {
        (0..self.a.len()).map(|i| self.a[i] * unit_deviance(self.y[i], prob[i])).sum()
    }
    fn log_likelihood(&self, prob: &[f64]) -> f64 {
        (0..self.a.len())
            .map(|i| {
                let (k, m, p) = (self.k[i], self.m[i], prob[i]);
                let a = if k > 0.0 { k * p.ln() } else { 0.0 };
                let b = if m - k > 0.0 { (m - k) * (1.0 - p).ln() } else { 0.0 };
                self.f[i] * (ln_choose(m, k) + a + b)
            })
            .sum()
    }
}

/// One weighted least squares solve over the kept columns: the step's
/// coefficients (full length, 0 for set-aside columns) and the QR.
fn wls(x: &[f64], n: usize, kept: &[usize], sw: &[f64], z: &[f64]) -> (Vec<f64>, PivotedQr) {
    let k = kept.len();
    let mut a = vec![0.0; n * k];
    for (b, &c) in kept.iter().enumerate() {
        for i in 0..n {
            a[b * n + i] = sw[i] * x[c * n + i];
        }
    }
    let qr = PivotedQr::factor(a, n, k, Pivoting::Largest, RANK_TOLERANCE, 0.0);
    let mut f: Vec<f64> = (0..n).map(|i| sw[i] * z[i]).collect();
    qr.apply_qt(&mut f);
    let r = qr.r_matrix();
    let rk = qr.rank;
    let mut sol = vec![0.0; rk];
    for i in (0..rk).rev() {
        let mut s = f[i];
        for j in i + 1..rk {
            s -= r[j * rk + i] * sol[j];
        }
        sol[i] = s / r[i * rk + i];
    }
    let mut beta = vec![0.0; k];
    for (pos, v) in sol.iter().enumerate() {
        beta[qr.cols[pos]] = *v;
    }
    (beta, qr)
}

fn eta_of(x: &[f64], n: usize, kept: &[usize], beta: &[f64]) -> Vec<f64> {
    let mut eta = vec![0.0; n];
    for (b, &c) in kept.iter().enumerate() {
        for i in 0..n {
            eta[i] += beta[b] * x[c * n + i];
        }
    }
    eta
}

/// Fits the model by IRLS. Rows with zero prior weight are not expected
/// (the caller drops them).
pub fn logistic(pr: &LogisticProblem) -> Result<LogisticFit, LogisticError> {
    let (n, p, x) = (pr.n, pr.p, pr.x);
    if p == 0 {
        return Err(LogisticError::NoColumns);
    }
    let f: Vec<f64> = (0..n).map(|i| pr.weights.map_or(1.0, |w| w[i])).collect();
    let rows = Rows {
        a: (0..n).map(|i| f[i] * pr.trials[i]).collect(),
        y: (0..n).map(|i| pr.events[i] / pr.trials[i]).collect(),
        m: pr.trials.to_vec(),
        k: pr.events.to_vec(),
        f,
    };
    // Start from the observed proportions pulled towards ½.
    let mut prob: Vec<f64> = (0..n).map(|i| (rows.a[i] * rows.y[i] + 0.5) / (rows.a[i] + 1.0)).collect();
    let mut eta: Vec<f64> = prob.iter().map(|q| (q / (1.0 - q)).ln()).collect();
    // The columns kept: decided on the first weighted design.
    let all: Vec<usize> = (0..p).collect();
    let mut kept = all.clone();
    let mut beta: Option<Vec<f64>> = None;
    let mut dev = f64::INFINITY;
    let mut iterations = 0;
    let mut converged = false;
    while iterations < MAX_ITERATIONS {
        iterations += 1;
        let w: Vec<f64> = (0..n).map(|i| rows.a[i] * prob[i] * (1.0 - prob[i])).collect();
        let sw: Vec<f64> = w.iter().map(|v| v.sqrt()).collect();
        let z: Vec<f64> = (0..n).map(|i| eta[i] + (rows.y[i] - prob[i]) / (prob[i] * (1.0 - prob[i]))).collect();
        let (mut next, qr) = wls(x, n, &kept, &sw, &z);
        if beta.is_none() {
            if qr.rank == 0 {
                return Err(LogisticError::NoColumns);
            }
            let mut k: Vec<usize> = qr.cols[..qr.rank].iter().map(|&b| kept[b]).collect();
            k.sort_unstable();
            if k.len() < kept.len() {
                kept = k;
                next = wls(x, n, &kept, &sw, &z).0;
            }
        }
        // The Newton decrement at the current point: ‖Qᵀ W^½ (z − η)‖².
        let decrement = {
            let mut r: Vec<f64> = (0..n).map(|i| sw[i] * (z[i] - eta[i])).collect();
            qr.apply_qt(&mut r);
            r[..qr.rank].iter().map(|v| v * v).sum::<f64>()
        };
        // Step halving while the deviance rises.
        let mut new_eta = eta_of(x, n, &kept, &next);
        let mut new_prob: Vec<f64> = new_eta.iter().map(|e| sigmoid(*e)).collect();
        let mut new_dev = rows.deviance(&new_prob);
        if let Some(old) = &beta {
            let mut halvings = 0;
            while (new_dev.is_nan() || new_dev > dev * (1.0 + 1e-15) + 1e-300) && halvings < 30 {
                for (b, o) in next.iter_mut().zip(old) {
                    *b = 0.5 * (*b + o);
                }
                new_eta = eta_of(x, n, &kept, &next);
                new_prob = new_eta.iter().map(|e| sigmoid(*e)).collect();
                new_dev = rows.deviance(&new_prob);
                halvings += 1;
            }
        }
        let change = (new_dev - dev).abs() / (new_dev.abs() + 0.1);
        eta = new_eta;
        prob = new_prob;
        dev = new_dev;
        beta = Some(next);
        if eta.iter().any(|e| e.abs() > SEPARATION_ETA) {
            break;
        }
        if change < DEVIANCE_TOLERANCE && decrement < SCORE_TOLERANCE * (1.0 + dev) {
            converged = true;
            break;
        }
    }
    let beta = beta.unwrap_or_default();
    if eta.iter().any(|e| e.abs() > SEPARATION_ETA) {
        // The runaway columns: those whose effect over the data's spread
        // is at least half the largest.
        let size: Vec<(usize, f64)> = kept
            .iter()
            .enumerate()
            .map(|(b, &c)| {
                let col = &x[c * n..(c + 1) * n];
                let (lo, hi) = col.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| (l.min(*v), h.max(*v)));
                (c, (beta[b] * (hi - lo)).abs())
            })
            .collect();
        let max = size.iter().map(|s| s.1).fold(0.0, f64::max);
        let mut columns: Vec<(usize, f64)> = size.into_iter().filter(|s| s.1 > 0.0 && s.1 >= 0.5 * max).collect();
        columns.sort_by(|a, b| b.1.total_cmp(&a.1));
        return Err(LogisticError::Separation { columns: columns.into_iter().map(|c| c.0).collect() });
    }
    if !converged {
        return Err(LogisticError::NoConvergence);
    }
    // The information at the estimate: R of W^½X, inverted.
    let w: Vec<f64> = (0..n).map(|i| rows.a[i] * prob[i] * (1.0 - prob[i])).collect();
    let sw: Vec<f64> = w.iter().map(|v| v.sqrt()).collect();
    let (_, mut qr) = wls(x, n, &kept, &sw, &eta);
    let rk = qr.rank;
    let r = qr.r_matrix();
    // R⁻¹ (upper triangular), then (XᵀWX)⁻¹ = R⁻¹R⁻ᵀ in pivot order.
    let mut ri = vec![0.0; rk * rk];
    for c in 0..rk {
        ri[c * rk + c] = 1.0 / r[c * rk + c];
        for i in (0..c).rev() {
            let s: f64 = (i + 1..=c).map(|j| r[j * rk + i] * ri[c * rk + j]).sum();
            ri[c * rk + i] = -s / r[i * rk + i];
        }
    }
    let mut cov = vec![f64::NAN; p * p];
    for a in 0..rk {
        for b in 0..rk {
            let s: f64 = (a.max(b)..rk).map(|j| ri[j * rk + a] * ri[j * rk + b]).sum();
            let (ca, cb) = (kept[qr.cols[a]], kept[qr.cols[b]]);
            cov[cb * p + ca] = s;
        }
    }
    qr.form_thin_q();
    let mut leverage = vec![0.0; n];
    for j in 0..rk {
        for (h, q) in leverage.iter_mut().zip(qr.q_column(j)) {
            *h += q * q;
        }
    }
    let mut coefficients = vec![f64::NAN; p];
    for (b, &c) in kept.iter().enumerate() {
        coefficients[c] = beta[b];
    }
    let aliased: Vec<bool> = (0..p).map(|c| !kept.contains(&c)).collect();
    let std_errors: Vec<f64> = (0..p).map(|j| cov[j * p + j].sqrt()).collect();
    let pearson: Vec<f64> = (0..n).map(|i| (rows.y[i] - prob[i]) * (rows.a[i] / (prob[i] * (1.0 - prob[i]))).sqrt()).collect();
    let deviance_residuals: Vec<f64> = (0..n).map(|i| (rows.y[i] - prob[i]).signum() * (rows.a[i] * unit_deviance(rows.y[i], prob[i])).max(0.0).sqrt()).collect();
    let cooks: Vec<f64> = (0..n).map(|i| pearson[i] * pearson[i] * leverage[i] / (rk as f64 * (1.0 - leverage[i]).powi(2))).collect();
    // The null model: the weighted event rate, or ½ without an intercept.
    let has_constant = (0..p).any(|c| x[c * n..(c + 1) * n].iter().all(|v| *v == x[c * n]) && x[c * n] != 0.0);
    let total: f64 = rows.a.iter().sum();
    let events: f64 = (0..n).map(|i| rows.a[i] * rows.y[i]).sum();
    let p0 = if has_constant { events / total } else { 0.5 };
    let null_prob = vec![p0; n];
    Ok(LogisticFit {
        coefficients,
        std_errors,
        covariance: cov,
        aliased,
        rank: rk,
        deviance: dev,
        null_deviance: rows.deviance(&null_prob),
        log_likelihood: rows.log_likelihood(&prob),
        null_log_likelihood: rows.log_likelihood(&null_prob),
        observations: total,
        total_events: events,
        eta,
        probability: prob,
        leverage,
        pearson,
        deviance_residuals,
        cooks,
        iterations,
    })
}

/// Two-sided p-value of a z statistic (statrs `Normal::sf`).
pub fn z_p_value(z: f64) -> f64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    match Normal::new(0.0, 1.0) {
        Ok(d) => (2.0 * d.sf(z.abs())).min(1.0),
        Err(_) => f64::NAN,
    }
}

/// The standard normal quantile (statrs `Normal::inverse_cdf`).
pub fn normal_quantile(p: f64) -> f64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    Normal::new(0.0, 1.0).map_or(f64::NAN, |d| d.inverse_cdf(p))
}

/// The area under the ROC curve (the concordance): the chance that an
/// event's fitted probability exceeds a non-event's, ties counting half.
/// Row `i` holds `events[i]` events and `trials[i] − events[i]` non-events,
/// each counted `weights[i]` times.
pub fn concordance(prob: &[f64], events: &[f64], trials: &[f64], weights: &[f64]) -> f64 {
    let mut order: Vec<usize> = (0..prob.len()).collect();
    order.sort_by(|a, b| prob[*a].total_cmp(&prob[*b]));
    let (mut below, mut pairs, mut conc) = (0.0, 0.0, 0.0);
    let mut i = 0;
    let total_non: f64 = (0..prob.len()).map(|i| weights[i] * (trials[i] - events[i])).sum();
    let total_ev: f64 = (0..prob.len()).map(|i| weights[i] * events[i]).sum();
    while i < order.len() {
        let mut j = i;
        let (mut ev, mut non) = (0.0, 0.0);
        while j < order.len() && prob[order[j]] == prob[order[i]] {
            let r = order[j];
            ev += weights[r] * events[r];
            non += weights[r] * (trials[r] - events[r]);
            j += 1;
        }
        conc += ev * below + 0.5 * ev * non;
        below += non;
        i = j;
    }
    pairs += total_ev * total_non;
    conc / pairs
}

/// The Hosmer–Lemeshow statistic with `g` groups of (near) equal numbers
/// of rows by fitted probability: `Σ (O − E)² / (E (1 − E/N))` over the
/// groups, its degrees of freedom `g − 2` and the χ² p-value.
pub fn hosmer_lemeshow(prob: &[f64], events: &[f64], trials: &[f64], weights: &[f64], g: usize) -> (f64, f64, f64) {
    let n = prob.len();
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|a, b| prob[*a].total_cmp(&prob[*b]));
    let groups = g.min(n);
    let mut stat = 0.0;
    for k in 0..groups {
        let (lo, hi) = (k * n / groups, (k + 1) * n / groups);
        let (mut o, mut e, mut m) = (0.0, 0.0, 0.0);
        for &r in &order[lo..hi] {
            o += weights[r] * events[r];
            e += weights[r] * trials[r] * prob[r];
            m += weights[r] * trials[r];
        }
        if e > 0.0 && m > e {
            stat += (o - e).powi(2) / (e * (1.0 - e / m));
        }
    }
    let df = groups as f64 - 2.0;
    (stat, df, if df > 0.0 { super::chi2_sf(stat, df) } else { f64::NAN })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn concordance_counts_ties_half() {
        // Events at 0.9 and 0.5, non-events at 0.5 and 0.1: of the four
        // pairs three are concordant and one tied, 3.5/4 (direct count).
        let auc = concordance(&[0.9, 0.5, 0.5, 0.1], &[1.0, 1.0, 0.0, 0.0], &[1.0; 4], &[1.0; 4]);
        assert!((auc - 0.875).abs() < 1e-15);
    }

    #[test]
    fn complete_separation_is_detected() {
        // x < 3 all non-events, x > 3 all events: no finite maximum.
        let x = [vec![1.0; 6], vec![1.0, 2.0, 2.5, 3.5, 4.0, 5.0]].concat();
        let y = [0.0, 0.0, 0.0, 1.0, 1.0, 1.0];
        let pr = LogisticProblem { x: &x, n: 6, p: 2, events: &y, trials: &[1.0; 6], weights: None };
        match logistic(&pr) {
            Err(LogisticError::Separation { columns }) => assert!(columns.contains(&1), "{columns:?}"),
            other => panic!("expected separation, got {other:?}"),
        }
    }
}
