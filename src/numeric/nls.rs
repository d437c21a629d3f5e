//! Nonlinear least squares: minimise `Σ rᵢ(b)²` over the parameters `b` by
//! Levenberg–Marquardt with Moré's scaling and trust-region update, and the
//! covariance `s²(JᵀJ)⁻¹` at the solution from the QR of the Jacobian.
//!
//! Design (MINPACK `lmder`, `lmpar`, `qrsolv`): Moré, J. J. (1978), "The
//! Levenberg–Marquardt algorithm: implementation and theory", in *Numerical
//! Analysis*, Lecture Notes in Mathematics 630, 105–116; Moré, Garbow &
//! Hillstrom (1980), *User Guide for MINPACK-1*, ANL-80-74, ch. 2 and the
//! listings of `lmder`, `lmpar`, `qrsolv`. Each step:
//!
//! 1. the exact Jacobian `J` (from the caller) is factored `J P = Q R` by
//!    Householder QR with column pivoting (`numeric::qr`), never through
//!    `JᵀJ`;
//! 2. the scaling `D = diag(dⱼ)`, `dⱼ` the largest column norm of `J` seen
//!    so far (Moré 1978 §6), makes the method invariant to the units of the
//!    parameters;
//! 3. the step `p` solves `min ‖J p + r‖` subject to `‖D p‖ ≤ Δ` as
//!    `(J; √λ D) p ≈ (−r; 0)`, each trial `λ` by Givens rotations of `R`
//!    against `√λ D` (`qrsolv`), `λ` found by Moré's safeguarded Newton
//!    iteration on `‖D p(λ)‖ = Δ` (`lmpar`, to 10 %);
//! 4. the ratio of actual to predicted reduction updates `Δ` (halved or
//!    cut to a tenth below ¼, doubled above ¾) and accepts the step when it
//!    is at least 1e-4.
//!
//! The residuals come from the caller (who may evaluate them in extended
//! precision); their sum of squares is accumulated in double-double.
//! The stopping rules and the reasons for each tolerance are in
//! docs/accuracy.md ("Nonlinear least squares"). If the iteration stops on
//! "no further progress" with the gradient test not yet met, it is
//! restarted once from the point reached with a fresh trust region
//! ([`RESTARTS`]), which costs nothing when the point is the minimum and
//! rescues a trust region that shrank in a curved valley.

// The loops keep the index form of the MINPACK listings, so that each can
// be checked line by line against them.
#![allow(clippy::needless_range_loop)]

use super::dd::{Dd, Dot2};
use super::qr::{PivotedQr, Pivoting};
use super::RANK_TOLERANCE;

/// A least squares problem in its parameters: residuals and their exact
/// Jacobian. An `Err(row)` says the model is undefined (not a finite
/// number) at that row (zero-based) for those parameters.
pub trait Residuals {
    /// Number of residuals `n`.
    fn rows(&self) -> usize;
    /// Number of parameters `p`.
    fn parameters(&self) -> usize;
    /// `r(b)`, one value per row rounded to double, into `out`; returns
    /// `Σ rᵢ²` of the residuals before rounding, in double-double (the
    /// actual reduction of a step is their difference, which must be
    /// resolved below the rounding of the residuals).
    fn residuals(&self, b: &[f64], out: &mut [f64]) -> Result<Dd, usize>;
    /// `∂rᵢ/∂bⱼ`, column-major `n × p`, into `out`.
    fn jacobian(&self, b: &[f64], out: &mut [f64]) -> Result<(), usize>;
}

/// Relative reduction tolerance: stop when both the actual and the
/// predicted relative reduction of the sum of squares of a step are at most
/// this (MINPACK's `ftol` test). See docs/accuracy.md.
pub const FTOL: f64 = 1e-20;
/// Relative step tolerance: stop when the trust region `Δ ≤ XTOL·‖D b‖`
/// (MINPACK's `xtol` test).
pub const XTOL: f64 = 1e-15;
/// Gradient tolerance: stop when the largest cosine between the residual
/// vector and a column of `J` is at most this (MINPACK's `gtol` test).
pub const GTOL: f64 = 1e-15;
/// Fresh starts from the point reached when the iteration stalls (see the
/// module notes).
pub const RESTARTS: usize = 1;
/// Trial steps after which a run not yet converged starts afresh from the
/// point reached (see the module notes).
pub const RESTART_EVERY: usize = 100;
/// The default most iterations (trial steps, each one evaluation of the
/// residuals).
pub const DEFAULT_LIMIT: usize = 1000;

/// Why the iteration stopped.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Stop {
    /// The relative reduction of the sum of squares fell below [`FTOL`].
    Reduction,
    /// The relative step fell below [`XTOL`].
    Step,
    /// The gradient test ([`GTOL`]) was met.
    Gradient,
    /// No step could improve the sum of squares at double precision (the
    /// reduction, the step or the gradient is at the rounding level).
    Rounding,
    /// The iteration limit was reached first: not converged.
    Limit,
}

impl Stop {
    /// Whether this counts as converged.
    pub fn converged(self) -> bool {
        self != Stop::Limit
    }

    /// The reason in plain words.
    pub fn describe(self) -> &'static str {
        match self {
            Stop::Reduction => "the sum of squares stopped decreasing (actual and predicted relative reduction below 1e-20)",
            Stop::Step => "the steps became negligible (relative step below 1e-15)",
            Stop::Gradient => "the residuals are orthogonal to every parameter's gradient (cosine below 1e-15)",
            Stop::Rounding => "no step improves the sum of squares at double precision (the trust region shrank to the rounding level)",
            Stop::Limit => "the iteration limit was reached before the convergence tests were met",
        }
    }
}

/// Settings of one run (one set for every problem).
#[derive(Clone, Copy, Debug)]
pub struct Settings {
    /// Most trial steps.
    pub limit: usize,
}

impl Default for Settings {
    fn default() -> Self {
        Settings { limit: DEFAULT_LIMIT }
    }
}

/// Why a problem could not be started.
#[derive(Clone, Debug, PartialEq)]
pub enum NlsError {
    /// Fewer rows than parameters.
    TooFewRows { n: usize, p: usize },
    /// The residual or its gradient is undefined at the start at this row.
    UndefinedAtStart { row: usize },
    /// The Jacobian at the start has numerical rank below `p`: these
    /// parameters (indices, later ones first in the caller's order) cannot
    /// be told apart from the others there.
    SingularAtStart { parameters: Vec<usize> },
    /// The gradient became undefined at an accepted point, at this row.
    UndefinedJacobian { row: usize },
}

/// The result of [`solve`].
#[derive(Clone, Debug)]
pub struct NlsFit {
    /// The parameters reached.
    pub parameters: Vec<f64>,
    /// The residuals there.
    pub residuals: Vec<f64>,
    /// The sum of squares at the minimum: at convergence `‖Q₂ᵀr‖²`, the
    /// part of the residuals orthogonal to the columns of `J` (what is left
    /// after the Gauss–Newton step from the point reached, a step smaller
    /// than the rounding of the parameters to double); otherwise `Σ rᵢ²`
    /// at the point reached. Accumulated in double-double.
    pub rss: f64,
    /// Trial steps taken (evaluations of the residuals after the start).
    pub iterations: usize,
    /// Jacobian evaluations (accepted points, the start included).
    pub jacobians: usize,
    /// Why it stopped.
    pub stop: Stop,
    /// Fresh starts used.
    pub restarts: usize,
    /// Largest cosine between `r` and a column of `J` at the end (0 at an
    /// exact stationary point; MINPACK's scaled gradient).
    pub gradient_cosine: f64,
    /// `‖Jᵀr‖₂` at the end.
    pub gradient_norm: f64,
    /// The last accepted step's size relative to the parameters, `‖D p‖/‖D b‖`.
    pub last_step: f64,
    /// The parameters before the last accepted step.
    pub previous: Vec<f64>,
}

/// Euclidean norm, scaled against overflow and underflow.
fn enorm(v: &[f64]) -> f64 {
    let m = v.iter().fold(0.0f64, |a, x| a.max(x.abs()));
    if m == 0.0 || !m.is_finite() {
        return m;
    }
    let s: f64 = v.iter().map(|x| (x / m) * (x / m)).sum();
    m * s.sqrt()
}

/// Sum of squares in double-double (Ogita–Rump–Oishi Dot2).
pub fn sum_of_squares(r: &[f64]) -> f64 {
    let mut acc = Dot2::new();
    for x in r {
        acc.add_prod(*x, *x);
    }
    acc.value().to_f64()
}

/// The pivoted QR of `J` in MINPACK's terms: `r` the full `p × p` upper
/// triangle (column-major, pivot order; zero below the rank), `ipvt`
/// position → parameter, `qtf` the first `p` entries of `Qᵀ f`.
struct Factored {
    r: Vec<f64>,
    ipvt: Vec<usize>,
    qtf: Vec<f64>,
}

fn factor(jac: &[f64], f: &[f64], n: usize, p: usize) -> Factored {
    let qr = PivotedQr::factor(jac.to_vec(), n, p, Pivoting::Largest, 0.0, 0.0);
    let mut r = vec![0.0; p * p];
    for b in 0..p {
        let c = qr.cols[b];
        for i in 0..=b {
            if i < qr.rank {
                r[b * p + i] = qr.a[c * n + i];
            }
        }
    }
    let mut qf = f.to_vec();
    qr.apply_qt(&mut qf);
    let mut qtf: Vec<f64> = qf[..p.min(n)].to_vec();
    for v in qtf.iter_mut().skip(qr.rank) {
        *v = 0.0;
    }
    qtf.resize(p, 0.0);
    Factored { r, ipvt: qr.cols.clone(), qtf }
}

/// MINPACK `qrsolv`: given `J P = Q R`, solves `min ‖(J; D) x − (b; 0)‖`
/// with `qtb = (Qᵀb)[..p]`, by Givens rotations eliminating `D` against
/// `R`. Leaves `S` (with `Pᵀ(JᵀJ + D²)P = SᵀS`) in the strict lower
/// triangle of `r` and its diagonal in `sdiag`.
fn qrsolv(r: &mut [f64], p: usize, ipvt: &[usize], diag: &[f64], qtb: &[f64], x: &mut [f64], sdiag: &mut [f64]) {
    let mut wa = qtb.to_vec();
    for j in 0..p {
        for i in j..p {
            r[j * p + i] = r[i * p + j];
        }
        x[j] = r[j * p + j];
    }
    for j in 0..p {
        let l = ipvt[j];
        if diag[l] != 0.0 {
            for s in sdiag[j..].iter_mut() {
                *s = 0.0;
            }
            sdiag[j] = diag[l];
            let mut qtbpj = 0.0;
            for k in j..p {
                if sdiag[k] == 0.0 {
                    continue;
                }
                let rkk = r[k * p + k];
                let (sin, cos) = if rkk.abs() < sdiag[k].abs() {
                    let cotan = rkk / sdiag[k];
                    let sin = 0.5 / (0.25 + 0.25 * cotan * cotan).sqrt();
                    (sin, sin * cotan)
                } else {
                    let tan = sdiag[k] / rkk;
                    let cos = 0.5 / (0.25 + 0.25 * tan * tan).sqrt();
                    (cos * tan, cos)
                };
                r[k * p + k] = cos * rkk + sin * sdiag[k];
                let temp = cos * wa[k] + sin * qtbpj;
                qtbpj = -sin * wa[k] + cos * qtbpj;
                wa[k] = temp;
                for i in k + 1..p {
                    let t = cos * r[k * p + i] + sin * sdiag[i];
                    sdiag[i] = -sin * r[k * p + i] + cos * sdiag[i];
                    r[k * p + i] = t;
                }
            }
        }
        sdiag[j] = r[j * p + j];
        r[j * p + j] = x[j];
    }
    let mut nsing = p;
    for j in 0..p {
        if sdiag[j] == 0.0 && nsing == p {
            nsing = j;
        }
        if nsing < p {
            wa[j] = 0.0;
        }
    }
    for j in (0..nsing).rev() {
        let mut sum = 0.0;
        for i in j + 1..nsing {
            sum += r[j * p + i] * wa[i];
        }
        wa[j] = (wa[j] - sum) / sdiag[j];
    }
    for j in 0..p {
        x[ipvt[j]] = wa[j];
    }
}

/// MINPACK `lmpar`: the Levenberg–Marquardt parameter `λ` (returned, from
/// the initial `par`) and the step `x` with `‖D x‖` within 10 % of `delta`
/// (or `λ = 0` when the Gauss–Newton step is inside). `x` solves
/// `(J; √λ D) x ≈ (qtb; 0)`; the caller negates it.
fn lmpar(fac: &Factored, diag: &[f64], delta: f64, par: f64, x: &mut [f64]) -> f64 {
    let p = fac.ipvt.len();
    let r0 = &fac.r;
    let ipvt = &fac.ipvt;
    let qtb = &fac.qtf;
    let dwarf = f64::MIN_POSITIVE;
    let mut r = r0.clone();
    // Gauss–Newton direction (least squares solution if R is singular).
    let mut nsing = p;
    let mut wa1 = qtb.clone();
    for j in 0..p {
        if r[j * p + j] == 0.0 && nsing == p {
            nsing = j;
        }
        if nsing < p {
            wa1[j] = 0.0;
        }
    }
    for j in (0..nsing).rev() {
        wa1[j] /= r[j * p + j];
        let t = wa1[j];
        for i in 0..j {
            wa1[i] -= r[j * p + i] * t;
        }
    }
    for j in 0..p {
        x[ipvt[j]] = wa1[j];
    }
    let mut wa2: Vec<f64> = (0..p).map(|j| diag[j] * x[j]).collect();
    let mut dxnorm = enorm(&wa2);
    let mut fp = dxnorm - delta;
    if fp <= 0.1 * delta {
        return 0.0;
    }
    // Lower bound parl of the Newton iteration (full rank only).
    let mut parl = 0.0;
    if nsing == p {
        for j in 0..p {
            let l = ipvt[j];
            wa1[j] = diag[l] * (wa2[l] / dxnorm);
        }
        for j in 0..p {
            let mut sum = 0.0;
            for i in 0..j {
                sum += r[j * p + i] * wa1[i];
            }
            wa1[j] = (wa1[j] - sum) / r[j * p + j];
        }
        let t = enorm(&wa1);
        parl = ((fp / delta) / t) / t;
    }
    // Upper bound paru.
    for j in 0..p {
        let mut sum = 0.0;
        for i in 0..=j {
            sum += r[j * p + i] * qtb[i];
        }
        wa1[j] = sum / diag[ipvt[j]];
    }
    let gnorm = enorm(&wa1);
    let mut paru = gnorm / delta;
    if paru == 0.0 {
        paru = dwarf / delta.min(0.1);
    }
    let mut par = par.max(parl).min(paru);
    if par == 0.0 {
        par = gnorm / dxnorm;
    }
    let mut sdiag = vec![0.0; p];
    let mut iter = 0;
    loop {
        iter += 1;
        if par == 0.0 {
            par = dwarf.max(0.001 * paru);
        }
        let s = par.sqrt();
        let d: Vec<f64> = diag.iter().map(|v| s * v).collect();
        r.copy_from_slice(r0);
        qrsolv(&mut r, p, ipvt, &d, qtb, x, &mut sdiag);
        for j in 0..p {
            wa2[j] = diag[j] * x[j];
        }
        dxnorm = enorm(&wa2);
        let temp = fp;
        fp = dxnorm - delta;
        if fp.abs() <= 0.1 * delta || (parl == 0.0 && fp <= temp && temp < 0.0) || iter == 10 {
            break;
        }
        // Newton correction.
        for j in 0..p {
            let l = ipvt[j];
            wa1[j] = diag[l] * (wa2[l] / dxnorm);
        }
        for j in 0..p {
            wa1[j] /= sdiag[j];
            let t = wa1[j];
            for i in j + 1..p {
                wa1[i] -= r[j * p + i] * t;
            }
        }
        let t = enorm(&wa1);
        let parc = ((fp / delta) / t) / t;
        if fp > 0.0 {
            parl = parl.max(par);
        }
        if fp < 0.0 {
            paru = paru.min(par);
        }
        par = parl.max(par + parc);
    }
    par
}

/// At the start a parameter is refused only when its column of `J` (unit
/// length) is within this of the span of the others: an exact dependence
/// up to rounding (64 ulps), such as a zero column or two parameters that
/// enter only as a product. A Jacobian that is merely ill-conditioned at
/// the start is left to the damping of the method (MGH17 from its first
/// start has columns within 1e-9 of each other and converges).
pub const START_RANK_TOLERANCE: f64 = 64.0 * f64::EPSILON;

/// The parameters whose columns of `J` (scaled to unit length) fall within
/// `tol` (the rank rule: [`RANK_TOLERANCE`]) of the span of the others: empty for
/// a Jacobian of full rank. Among equally good choices the later
/// parameters are named (as for linear terms).
pub fn aliased_parameters(jac: &[f64], n: usize, p: usize, tol: f64) -> Vec<usize> {
    let (scaled, _) = scale_columns(jac, n, p);
    let qr = PivotedQr::factor(scaled.clone(), n, p, Pivoting::Largest, tol, 0.0);
    if qr.rank == p {
        return Vec::new();
    }
    let q2 = PivotedQr::factor(scaled, n, p, Pivoting::InOrder, tol, qr.threshold);
    let mut out: Vec<usize> = q2.cols[q2.rank..].to_vec();
    if q2.rank != qr.rank {
        out = qr.cols[qr.rank..].to_vec();
    }
    out.sort_unstable();
    out
}

/// Columns scaled to unit length (zero columns left as they are) and the
/// scales used.
fn scale_columns(jac: &[f64], n: usize, p: usize) -> (Vec<f64>, Vec<f64>) {
    let mut a = jac.to_vec();
    let mut s = vec![1.0; p];
    for j in 0..p {
        let c = &mut a[j * n..(j + 1) * n];
        let norm = enorm(c);
        if norm > 0.0 && norm.is_finite() {
            for v in c.iter_mut() {
                *v /= norm;
            }
            s[j] = norm;
        }
    }
    (a, s)
}

/// The covariance of the estimates at a solution.
#[derive(Clone, Debug)]
pub struct Covariance {
    /// `s²(JᵀJ)⁻¹`, `p × p` column-major; rows and columns of an aliased
    /// parameter are NaN.
    pub matrix: Vec<f64>,
    /// Parameters whose column of `J` is within the rank rule of the others.
    pub aliased: Vec<usize>,
    /// 2-norm condition number of `J` with unit-length columns (from the
    /// singular values of its `R`).
    pub condition: f64,
}

/// `s²(JᵀJ)⁻¹` from the pivoted QR of `J` with unit-length columns
/// (`J D⁻¹ P = Q R`, so `(JᵀJ)⁻¹ = D⁻¹ P R⁻¹ R⁻ᵀ Pᵀ D⁻¹`); `s² = rss/df`.
pub fn covariance(jac: &[f64], n: usize, p: usize, s2: f64) -> Covariance {
    let (scaled, scale) = scale_columns(jac, n, p);
    let aliased = aliased_parameters(jac, n, p, RANK_TOLERANCE);
    let keep: Vec<usize> = (0..p).filter(|j| !aliased.contains(j)).collect();
    let k = keep.len();
    let mut sub = Vec::with_capacity(n * k);
    for &j in &keep {
        sub.extend_from_slice(&scaled[j * n..(j + 1) * n]);
    }
    let qr = PivotedQr::factor(sub, n, k, Pivoting::Largest, 0.0, 0.0);
    let r = qr.r_matrix();
    let kr = qr.rank;
    // R⁻¹ column by column (back substitution on unit vectors).
    let mut rinv = vec![0.0; kr * kr];
    for c in 0..kr {
        let mut e = vec![0.0; kr];
        e[c] = 1.0;
        super::qr::solve_upper(&r, kr, &mut e);
        rinv[c * kr..(c + 1) * kr].copy_from_slice(&e);
    }
    let mut matrix = vec![f64::NAN; p * p];
    for a in 0..kr {
        for b in 0..kr {
            // (R⁻¹R⁻ᵀ)[a,b] = Σ_c R⁻¹[a,c]·R⁻¹[b,c].
            let mut acc = Dot2::new();
            for c in a.max(b)..kr {
                acc.add_prod(rinv[c * kr + a], rinv[c * kr + b]);
            }
            let (ja, jb) = (keep[qr.cols[a]], keep[qr.cols[b]]);
            matrix[jb * p + ja] = s2 * acc.value().to_f64() / (scale[ja] * scale[jb]);
        }
    }
    let condition = super::lsq::scaled_condition(&r, kr);
    Covariance { matrix, aliased, condition }
}

/// Minimises `Σ r(b)²` from `start`.
pub fn solve<M: Residuals + ?Sized>(model: &M, start: &[f64], settings: Settings) -> Result<NlsFit, NlsError> {
    let n = model.rows();
    let p = model.parameters();
    if n < p {
        return Err(NlsError::TooFewRows { n, p });
    }
    let mut x = start.to_vec();
    let mut fvec = vec![0.0; n];
    let mut rss = model.residuals(&x, &mut fvec).map_err(|row| NlsError::UndefinedAtStart { row })?;
    let mut jac = vec![0.0; n * p];
    model.jacobian(&x, &mut jac).map_err(|row| NlsError::UndefinedAtStart { row })?;
    if let Some(row) = (0..n).find(|&i| (0..p).any(|j| !jac[j * n + i].is_finite())) {
        return Err(NlsError::UndefinedAtStart { row });
    }
    let singular = aliased_parameters(&jac, n, p, START_RANK_TOLERANCE);
    if !singular.is_empty() {
        return Err(NlsError::SingularAtStart { parameters: singular });
    }
    let eps = f64::EPSILON;
    let mut fnorm = rss.hi.sqrt();
    let mut iterations = 0;
    let mut jacobians = 1;
    let mut restarts = 0;
    let mut since = 0;
    let mut stalls = 0;
    let mut last_step = f64::NAN;
    let mut previous = x.clone();
    let mut fresh = true;
    let mut diag = vec![0.0; p];
    let mut delta = 0.0;
    let mut par = 0.0;
    let mut wa1 = vec![0.0; p];
    let mut wa4 = vec![0.0; n];
    let mut gnorm;
    let stop = 'outer: loop {
        let fac = factor(&jac, &fvec, n, p);
        let acnorm: Vec<f64> = (0..p).map(|j| enorm(&jac[j * n..(j + 1) * n])).collect();
        if fresh {
            for j in 0..p {
                diag[j] = if acnorm[j] == 0.0 { 1.0 } else { acnorm[j] };
            }
            let xnorm = enorm(&x.iter().zip(&diag).map(|(a, d)| a * d).collect::<Vec<_>>());
            delta = if xnorm == 0.0 { 100.0 } else { 100.0 * xnorm };
            par = 0.0;
        }
        // The scaled gradient: largest cosine between f and a column of J.
        gnorm = 0.0f64;
        if fnorm != 0.0 {
            for j in 0..p {
                let l = fac.ipvt[j];
                if acnorm[l] != 0.0 {
                    let mut sum = 0.0;
                    for i in 0..=j {
                        sum += fac.r[j * p + i] * (fac.qtf[i] / fnorm);
                    }
                    gnorm = gnorm.max((sum / acnorm[l]).abs());
                }
            }
        }
        if gnorm <= GTOL {
            break 'outer Stop::Gradient;
        }
        for j in 0..p {
            diag[j] = diag[j].max(acnorm[j]);
        }
        let first = fresh;
        fresh = false;
        loop {
            par = lmpar(&fac, &diag, delta, par, &mut wa1);
            for v in wa1.iter_mut() {
                *v = -*v;
            }
            let trial: Vec<f64> = x.iter().zip(&wa1).map(|(a, b)| a + b).collect();
            let pnorm = enorm(&wa1.iter().zip(&diag).map(|(a, d)| a * d).collect::<Vec<_>>());
            if first {
                delta = delta.min(pnorm);
            }
            iterations += 1;
            let rss1 = match model.residuals(&trial, &mut wa4) {
                Ok(v) if v.is_finite() => v,
                _ => Dd::new(f64::INFINITY),
            };
            let fnorm1 = if rss1.is_finite() { rss1.hi.sqrt() } else { f64::INFINITY };
            // 1 − ‖f₁‖²/‖f‖², from the double-double sums of squares.
            let actred = if 0.1 * fnorm1 < fnorm { ((rss - rss1) / rss).to_f64() } else { -1.0 };
            // Predicted reduction ‖J p‖² + 2λ‖D p‖², relative.
            let mut wa3 = vec![0.0; p];
            for j in 0..p {
                let t = wa1[fac.ipvt[j]];
                for i in 0..=j {
                    wa3[i] += fac.r[j * p + i] * t;
                }
            }
            let temp1 = enorm(&wa3) / fnorm;
            let temp2 = (par.sqrt() * pnorm) / fnorm;
            let prered = temp1 * temp1 + temp2 * temp2 / 0.5;
            let dirder = -(temp1 * temp1 + temp2 * temp2);
            let ratio = if prered != 0.0 { actred / prered } else { 0.0 };
            if ratio <= 0.25 {
                let mut temp = if actred >= 0.0 { 0.5 } else { 0.5 * dirder / (dirder + 0.5 * actred) };
                if 0.1 * fnorm1 >= fnorm || temp < 0.1 || !temp.is_finite() {
                    temp = 0.1;
                }
                delta = temp * delta.min(pnorm / 0.1);
                par /= temp;
            } else if par == 0.0 || ratio >= 0.75 {
                delta = pnorm / 0.5;
                par *= 0.5;
            }
            let xnorm;
            if ratio >= 1e-4 {
                let accept = model.jacobian(&trial, &mut jac);
                previous = std::mem::replace(&mut x, trial);
                fvec.copy_from_slice(&wa4);
                fnorm = fnorm1;
                rss = rss1;
                jacobians += 1;
                let dx = enorm(&x.iter().zip(&diag).map(|(a, d)| a * d).collect::<Vec<_>>());
                last_step = if dx > 0.0 { pnorm / dx } else { pnorm };
                if let Err(row) = accept {
                    return Err(NlsError::UndefinedJacobian { row });
                }
                if let Some(row) = (0..n).find(|&i| (0..p).any(|j| !jac[j * n + i].is_finite())) {
                    return Err(NlsError::UndefinedJacobian { row });
                }
                xnorm = dx;
            } else {
                xnorm = enorm(&x.iter().zip(&diag).map(|(a, d)| a * d).collect::<Vec<_>>());
            }
            let mut found = None;
            if actred.abs() <= FTOL && prered <= FTOL && 0.5 * ratio <= 1.0 {
                found = Some(Stop::Reduction);
            } else if delta <= XTOL * xnorm {
                found = Some(Stop::Step);
            } else if delta <= eps * xnorm || gnorm <= eps {
                found = Some(Stop::Rounding);
            }
            if let Some(s) = found {
                // A stall short of the gradient test: one fresh start from
                // the point reached (module notes).
                if s != Stop::Reduction && stalls < RESTARTS && iterations < settings.limit {
                    stalls += 1;
                    restarts += 1;
                    fresh = true;
                    continue 'outer;
                }
                break 'outer s;
            }
            if iterations >= settings.limit {
                break 'outer Stop::Limit;
            }
            if ratio >= 1e-4 && iterations - since >= RESTART_EVERY {
                // A fresh trust region and scaling from the point reached
                // (module notes).
                restarts += 1;
                since = iterations;
                fresh = true;
                continue 'outer;
            }
            if ratio >= 1e-4 {
                continue 'outer;
            }
        }
    };
    // The final gradient, from the residuals and Jacobian at the end.
    let mut g = vec![0.0; p];
    for (j, gj) in g.iter_mut().enumerate() {
        let mut acc = Dot2::new();
        for i in 0..n {
            acc.add_prod(jac[j * n + i], fvec[i]);
        }
        *gj = acc.value().to_f64();
    }
    let gradient_cosine = if stop == Stop::Gradient { gnorm } else { cosine(&jac, &fvec, n, p) };
    let rss = if stop.converged() { minimum_sum_of_squares(&jac, &fvec, n, p).unwrap_or(rss.to_f64()) } else { rss.to_f64() };
    Ok(NlsFit {
        rss,
        parameters: x,
        residuals: fvec,
        iterations,
        jacobians,
        stop,
        restarts,
        gradient_cosine,
        gradient_norm: enorm(&g),
        last_step,
        previous,
    })
}

/// `‖Q₂ᵀr‖²` from the pivoted QR of `J` (`None` when `J` has a zero
/// column or no residual degrees of freedom).
fn minimum_sum_of_squares(jac: &[f64], f: &[f64], n: usize, p: usize) -> Option<f64> {
    let qr = PivotedQr::factor(jac.to_vec(), n, p, Pivoting::Largest, 0.0, 0.0);
    if qr.rank < p || n <= p {
        return None;
    }
    let mut qf = f.to_vec();
    qr.apply_qt(&mut qf);
    Some(sum_of_squares(&qf[p..]))
}

/// Largest `|cos|` between `f` and a column of `J` (0 for a zero column or
/// zero residuals).
fn cosine(jac: &[f64], f: &[f64], n: usize, p: usize) -> f64 {
    let fnorm = enorm(f);
    if fnorm == 0.0 {
        return 0.0;
    }
    (0..p)
        .map(|j| {
            let c = &jac[j * n..(j + 1) * n];
            let cn = enorm(c);
            if cn == 0.0 {
                return 0.0;
            }
            let mut acc = Dot2::new();
            for (a, b) in c.iter().zip(f) {
                acc.add_prod(*a, *b);
            }
            (acc.value().to_f64() / (cn * fnorm)).abs()
        })
        .fold(0.0, f64::max)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `y = b₀·e^(b₁x)` on exact data from b = (2, −0.5), x = 0..9.
    struct Decay {
        x: Vec<f64>,
        y: Vec<f64>,
    }

    impl Residuals for Decay {
        fn rows(&self) -> usize {
            self.x.len()
        }
        fn parameters(&self) -> usize {
            2
        }
        fn residuals(&self, b: &[f64], out: &mut [f64]) -> Result<Dd, usize> {
            for i in 0..self.x.len() {
                out[i] = self.y[i] - b[0] * (b[1] * self.x[i]).exp();
            }
            Ok(Dd::new(sum_of_squares(out)))
        }
        fn jacobian(&self, b: &[f64], out: &mut [f64]) -> Result<(), usize> {
            let n = self.x.len();
            for i in 0..n {
                let e = (b[1] * self.x[i]).exp();
                out[i] = -e;
                out[n + i] = -b[0] * self.x[i] * e;
            }
            Ok(())
        }
    }

    #[test]
    fn an_exact_exponential_is_recovered_from_a_far_start() {
        let x: Vec<f64> = (0..10).map(f64::from).collect();
        let y = x.iter().map(|v| 2.0 * (-0.5 * v).exp()).collect();
        let m = Decay { x, y };
        let fit = solve(&m, &[1.0, 0.1], Settings::default()).expect("solves");
        assert!(fit.stop.converged(), "{:?}", fit.stop);
        // The data are the model at (2, −0.5) (constructed).
        assert!((fit.parameters[0] - 2.0).abs() < 1e-13 && (fit.parameters[1] + 0.5).abs() < 1e-13, "{:?}", fit.parameters);
        assert!(fit.rss < 1e-28);
    }

    #[test]
    fn a_tiny_limit_reports_no_convergence() {
        let x: Vec<f64> = (0..10).map(f64::from).collect();
        let y = x.iter().map(|v| 2.0 * (-0.5 * v).exp() + 0.01 * (v * 1.7).sin()).collect();
        let m = Decay { x, y };
        let fit = solve(&m, &[1.0, 0.1], Settings { limit: 2 }).expect("starts");
        assert_eq!(fit.stop, Stop::Limit);
        assert_eq!(fit.iterations, 2);
    }

    #[test]
    fn a_parameter_without_influence_is_singular_at_the_start() {
        // At b₀ = 0 the column ∂r/∂b₁ = −b₀·x·e^(b₁x) is zero.
        let x: Vec<f64> = (0..10).map(f64::from).collect();
        let y = x.clone();
        let m = Decay { x, y };
        assert_eq!(solve(&m, &[0.0, 0.1], Settings::default()).unwrap_err(), NlsError::SingularAtStart { parameters: vec![1] });
    }
}
