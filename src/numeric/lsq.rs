//! The least squares driver: column scaling, pivoted Householder QR, rank
//! decision, iterative refinement of the solution and of the covariance in
//! double-double precision, and the summary statistics of the fit.
//!
//! Method (each step's source is given where it is implemented):
//! 1. Form `A = W^½ X D` with `D` a diagonal of powers of two (exact) that
//!    brings every column to a 2-norm in [2^-½, 2^½).
//! 2. Businger–Golub pivoted Householder QR of `A` ([`super::qr`]), stopped
//!    when the largest remaining column norm is `≤ RANK_TOLERANCE · |R₁₁|`.
//!    If that leaves aliased columns, a second factorisation in the caller's
//!    column order chooses which columns to report as aliased (the later
//!    ones), provided it finds the same rank and a kept set no worse
//!    conditioned (factor 100) than the pivoted one; otherwise the pivoted
//!    choice stands.
//! 3. Björck's iterative refinement of the augmented system
//!    `[I A; Aᵀ 0][r; x] = [b; 0]` with residuals in double-double and the
//!    solution `x` and residual `r` carried in double-double.
//! 4. Residuals, sums of squares and R² from the refined solution, in
//!    double-double.
//! 5. Covariance `(AᵀA)⁻¹`: `C₀ = R⁻¹R⁻ᵀ`, refined by
//!    `C ← C + R⁻¹R⁻ᵀ(I − G C)` with `G = AᵀA` accumulated in double-double;
//!    when that does not converge (it contracts like `κ²u`), each column is
//!    refined instead through the augmented system with right-hand side
//!    `[0; e_j]`, which contracts like `κu`.

use super::dd::{axpy_dot2, dot2, dot2_dd, two_prod, two_sum, Dd, Dot2};
use super::qr::{solve_upper, solve_upper_transpose, PivotedQr, Pivoting};
use super::{inference, LsError, LsFit, LsProblem};

/// Relative rank tolerance: after column scaling, column `k` of the pivoted
/// factorisation is aliased when its remaining norm `|R_kk| ≤ 1e-11·|R₁₁|`.
///
/// Why 1e-11:
/// - An exactly dependent column leaves a remainder of the order of the
///   rounding errors, about `u·√n·‖a‖` in practice (`u = 2^-53 ≈ 1.1e-16`):
///   2e-13 at n = 1,000,000 — still 50× below the tolerance.
/// - Every kept set then has a scaled condition number of at most about
///   `1e11·√p`, so the double-double refinement of the solution, which
///   contracts by roughly `κ·u ≤ 1e-4` per step (Björck 1967), always
///   converges; and the regressions in the NIST StRD suite (scaled
///   condition numbers up to ~1e10 for Filip's raw powers) stay full rank.
/// - It is stricter than LAPACK-style `max(n,p)·u` cut-offs, which would
///   keep columns whose coefficients carry no correct digit in double
///   precision, and much looser than cut-offs of order 1e-7, which make a
///   statistical rather than a numerical judgement (a column that is
///   merely highly collinear is kept; its large standard error says so).
pub const RANK_TOLERANCE: f64 = 1e-11;

/// The solution refinement stops once a correction is at most this
/// fraction of the solution (`‖δx‖∞ ≤ 1e-20‖x‖∞`): the error left after it
/// is about `κu` times smaller still, far below the final rounding to
/// double (1.1e-16).
const SOLUTION_CONVERGED: f64 = 1e-20;

/// Largest number of refinement steps (solution and covariance).
const MAX_REFINE: usize = 10;

/// The Gram-residual covariance refinement is accepted as converged when
/// its last relative correction is below this. Its attainable accuracy is
/// about `κ²·u²` (the residual `I − GC` is formed from products of size
/// `‖G‖‖C‖ ≈ κ²` in double-double, `u² ≈ 1.2e-32`), e.g. 6e-24 for Longley;
/// 1e-20 leaves four orders of magnitude above what the double results need.
const COV_CONVERGED: f64 = 1e-20;

/// How the covariance matrix was refined.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum CovarianceMethod {
    /// `C ← C + R⁻¹R⁻ᵀ(I − G C)` with a double-double Gram residual.
    GramResidual,
    /// Column-wise refinement of the augmented system.
    AugmentedColumns,
}

/// A record of the refinement work done by [`least_squares`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Refinement {
    /// Refinement steps taken for the coefficients (the first step is the
    /// plain QR solve).
    pub solution_steps: usize,
    /// Last relative correction `‖δx‖∞/‖x‖∞` of the coefficients (scaled).
    pub solution_last_correction: f64,
    /// Method that produced the covariance.
    pub covariance_method: CovarianceMethod,
    /// Steps taken by that method (per column for the augmented one, max).
    pub covariance_steps: usize,
    /// Last relative correction of the covariance.
    pub covariance_last_correction: f64,
}

/// `2^e` as an exact double, for `e` in the normal range.
fn pow2(e: i32) -> f64 {
    let e = e.clamp(-1022, 1023);
    f64::from_bits(((e + 1023) as u64) << 52)
}

/// The binary exponent `e` with `2^e ≤ |x| < 2^(e+1)` for normal `x`.
fn exponent(x: f64) -> i32 {
    let bits = x.abs().to_bits();
    let biased = ((bits >> 52) & 0x7ff) as i32;
    if biased == 0 {
        // Subnormal: fall back on the logarithm.
        x.abs().log2().floor() as i32
    } else {
        biased - 1023
    }
}

/// Everything the refinement needs to evaluate residuals exactly and to
/// solve with the factorisation.
struct System<'a> {
    x: &'a [f64],
    /// Low parts of the design columns (same layout as `x`) when the design
    /// is held in double-double (power columns built from a base column).
    x_lo: Option<&'a [f64]>,
    n: usize,
    /// √w in double-double, when weighted.
    sw: Option<&'a [Dd]>,
    /// Kept original column indices, pivot order.
    kept: &'a [usize],
    /// Power-of-two scale of each kept column (pivot order).
    d: &'a [f64],
    qr: &'a PivotedQr,
    /// `R` (`k × k`, column-major).
    r: &'a [f64],
}

/// Outcome of one refined solve.
struct Solved {
    /// Solution in scaled coordinates (pivot order), double-double.
    x: Vec<Dd>,
    steps: usize,
    last: f64,
}

impl System<'_> {
    fn k(&self) -> usize {
        self.kept.len()
    }

    fn col(&self, a: usize) -> &[f64] {
        let c = self.kept[a];
        &self.x[c * self.n..(c + 1) * self.n]
    }

    /// Low part of kept column `a`, when the design is double-double.
    fn col_lo(&self, a: usize) -> Option<&[f64]> {
        let c = self.kept[a];
        self.x_lo.map(|l| &l[c * self.n..(c + 1) * self.n])
    }

    /// `u = rhs − X_kept β` in double-double (`β = D x`), Dot2 per row
    /// (Ogita–Rump–Oishi 2005) with the loop over columns outside.
    fn residual_dd(&self, rhs: Option<&[f64]>, beta: &[Dd], us: &mut [f64], uc: &mut [f64]) {
        match rhs {
            Some(b) => us.copy_from_slice(b),
            None => us.iter_mut().for_each(|v| *v = 0.0),
        }
        uc.iter_mut().for_each(|v| *v = 0.0);
        for (a, &b) in beta.iter().enumerate() {
            if b.hi == 0.0 && b.lo == 0.0 {
                continue;
            }
            axpy_dot2(self.col(a), -b.hi, -b.lo, us, uc);
            if let Some(lo) = self.col_lo(a) {
                // The low part's product is below u·|x·β|: one rounding.
                for (c, l) in uc.iter_mut().zip(lo) {
                    *c -= l * b.hi;
                }
            }
        }
        for (s, c) in us.iter_mut().zip(uc.iter_mut()) {
            let (h, l) = two_sum(*s, *c);
            *s = h;
            *c = l;
        }
    }

    /// Björck's refinement of `[I A; Aᵀ 0][r; x] = [b; c]` with
    /// `b = W^½·rhs` (zero when `rhs` is `None`) and `c` (zero when `None`).
    ///
    /// Björck, Å. (1967), "Iterative refinement of linear least squares
    /// solutions I", *BIT* 7, 257–278; Björck (1968), "... II", *BIT* 8,
    /// 8–30; Björck, *Numerical Methods for Least Squares Problems* (1996),
    /// §2.9.3. Each step computes in double-double
    /// `f = b − r − A x`, `g = c − Aᵀ r`, rounds them to double and solves
    /// `[I A; Aᵀ 0][δr; δx] = [f; g]` with the QR factors:
    /// `h = R⁻ᵀ g`, `(d₁; d₂) = Qᵀ f`, `δx = R⁻¹(d₁ − h)`, `δr = Q (h; d₂)`.
    /// Stops when `‖δx‖∞ ≤ 1e-20‖x‖∞`, when a correction is more than half
    /// the previous one (no longer shrinking; a correction larger than the
    /// previous one is not applied), or after `MAX_REFINE` steps.
    fn refine(&self, rhs: Option<&[f64]>, c: Option<&[f64]>) -> Solved {
        let n = self.n;
        let k = self.k();
        let mut x = vec![Dd::ZERO; k];
        let mut beta = vec![Dd::ZERO; k];
        let mut r_hi = vec![0.0; n];
        let mut r_lo = vec![0.0; n];
        let mut us = vec![0.0; n];
        let mut uc = vec![0.0; n];
        let mut f = vec![0.0; n];
        let mut prev = f64::INFINITY;
        let mut steps = 0;
        let mut last = f64::NAN;
        let mut g = vec![0.0; k];
        let mut h = vec![0.0; k];
        while steps < MAX_REFINE {
            // f = W^½(rhs − Xβ) − r.
            self.residual_dd(rhs, &beta, &mut us, &mut uc);
            for i in 0..n {
                let u = Dd::from_sum(us[i], uc[i]);
                let wu = match self.sw {
                    Some(sw) => u * sw[i],
                    None => u,
                };
                let fi = wu - Dd { hi: r_hi[i], lo: r_lo[i] };
                f[i] = fi.to_f64();
                // Reuse (us, uc) for t = W^½ r (needed for g).
                let t = match self.sw {
                    Some(sw) => Dd { hi: r_hi[i], lo: r_lo[i] } * sw[i],
                    None => Dd { hi: r_hi[i], lo: r_lo[i] },
                };
                us[i] = t.hi;
                uc[i] = t.lo;
            }
            // g = c − Aᵀ r = c − D X_keptᵀ (W^½ r); zero on the first step.
            for a in 0..k {
                let ga = if steps == 0 {
                    Dd::ZERO
                } else {
                    let mut t = dot2_dd(self.col(a), &us, &uc);
                    if let Some(lo) = self.col_lo(a) {
                        t = t.add_f64(lo.iter().zip(us.iter()).map(|(l, u)| l * u).sum::<f64>());
                    }
                    -t.mul_f64(self.d[a])
                };
                g[a] = match c {
                    Some(c) => ga.add_f64(c[a]).to_f64(),
                    None => ga.to_f64(),
                };
            }
            // Correction.
            h.copy_from_slice(&g);
            solve_upper_transpose(self.r, k, &mut h);
            self.qr.apply_qt(&mut f);
            let mut dx: Vec<f64> = (0..k).map(|a| f[a] - h[a]).collect();
            solve_upper(self.r, k, &mut dx);
            f[..k].copy_from_slice(&h);
            self.qr.apply_q(&mut f);
            steps += 1;
            let ndx = dx.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            if !ndx.is_finite() {
                break;
            }
            if ndx > prev {
                // Diverging: keep the previous iterate.
                break;
            }
            for a in 0..k {
                x[a] = x[a].add_f64(dx[a]);
                beta[a] = x[a].mul_f64(self.d[a]);
            }
            for i in 0..n {
                let ri = Dd { hi: r_hi[i], lo: r_lo[i] }.add_f64(f[i]);
                r_hi[i] = ri.hi;
                r_lo[i] = ri.lo;
            }
            let nx = x.iter().fold(0.0f64, |m, v| m.max(v.hi.abs()));
            last = if nx > 0.0 { ndx / nx } else { 0.0 };
            if ndx == 0.0 || ndx <= SOLUTION_CONVERGED * nx || ndx > 0.5 * prev {
                break;
            }
            prev = ndx;
        }
        Solved { x, steps, last }
    }
}

/// Builds `A = W^½ X D` and returns it with the scales `D`.
fn scaled_design(x: &[f64], n: usize, p: usize, sw: Option<&[Dd]>) -> (Vec<f64>, Vec<f64>) {
    let mut a = vec![0.0; n * p];
    let mut d = vec![1.0; p];
    for j in 0..p {
        let src = &x[j * n..(j + 1) * n];
        let dst = &mut a[j * n..(j + 1) * n];
        match sw {
            Some(sw) => {
                for i in 0..n {
                    dst[i] = src[i] * sw[i].hi;
                }
            }
            None => dst.copy_from_slice(src),
        }
        let m = dst.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        if m == 0.0 || !m.is_finite() {
            continue;
        }
        // Norm without overflow: pre-scale by a power of two near 1/max.
        let pre = pow2(-exponent(m));
        let ss: f64 = dst.iter().map(|v| (v * pre) * (v * pre)).sum();
        let log2norm = ss.sqrt().log2() + exponent(m) as f64;
        let e = log2norm.round() as i32;
        let s = pow2(-e);
        d[j] = s;
        for v in dst.iter_mut() {
            *v *= s;
        }
    }
    (a, d)
}

/// 2-norm condition number of `R` with unit-length columns (SVD, nalgebra).
pub(crate) fn scaled_condition(r: &[f64], k: usize) -> f64 {
    if k == 0 {
        return f64::NAN;
    }
    let mut m = nalgebra::DMatrix::<f64>::zeros(k, k);
    for b in 0..k {
        let norm = (0..=b).map(|i| r[b * k + i] * r[b * k + i]).sum::<f64>().sqrt();
        for i in 0..=b {
            m[(i, b)] = r[b * k + i] / norm;
        }
    }
    let sv = m.singular_values();
    let max = sv.iter().cloned().fold(0.0f64, f64::max);
    let min = sv.iter().cloned().fold(f64::INFINITY, f64::min);
    if min == 0.0 {
        f64::INFINITY
    } else {
        max / min
    }
}

/// Fits a (weighted) linear least squares problem.
///
/// See the module documentation for the method. Errors are returned for
/// inconsistent sizes, no columns, fewer rows than columns, non-finite
/// values, non-positive weights, and an all-zero design.
pub fn least_squares(problem: &LsProblem) -> Result<LsFit, LsError> {
    core(problem, None, None).map(|c| c.fit)
}

/// A fit with its double-double coefficients and covariance (working basis).
pub(crate) struct Core {
    pub fit: LsFit,
    /// Coefficients, zero for aliased columns.
    pub beta: Vec<Dd>,
    /// `p × p` column-major covariance, zero rows/columns for aliased ones.
    pub cov: Vec<Dd>,
}

/// A change of basis `Z = X N` between the user's design `X` and the
/// working design `Z`, with its inverse `M = N⁻¹` (`X = Z M`), both `p × p`
/// column-major in double-double. Coefficients transform as `β = N γ`.
pub(crate) struct Basis {
    pub n_mat: Vec<Dd>,
    pub m_mat: Vec<Dd>,
}

/// `out = A v` for a `p × p` column-major double-double matrix.
pub(crate) fn mat_vec(a: &[Dd], v: &[Dd], p: usize) -> Vec<Dd> {
    let mut out = vec![Dd::ZERO; p];
    for j in 0..p {
        if v[j].hi == 0.0 && v[j].lo == 0.0 {
            continue;
        }
        for i in 0..p {
            let m = a[j * p + i];
            if m.hi != 0.0 || m.lo != 0.0 {
                out[i] = out[i] + m * v[j];
            }
        }
    }
    out
}

/// The least squares driver on a working design `problem.x` (+ `x_lo`).
pub(crate) fn core(problem: &LsProblem, x_lo: Option<&[f64]>, basis: Option<&Basis>) -> Result<Core, LsError> {
    let LsProblem { x, n, p, y, weights, has_intercept } = *problem;
    if p == 0 {
        return Err(LsError::NoColumns);
    }
    if x.len() != n * p {
        return Err(LsError::DimensionMismatch { what: "the design", expected: n * p, found: x.len() });
    }
    if y.len() != n {
        return Err(LsError::DimensionMismatch { what: "the response", expected: n, found: y.len() });
    }
    if let Some(w) = weights {
        if w.len() != n {
            return Err(LsError::DimensionMismatch { what: "the weights", expected: n, found: w.len() });
        }
        if let Some(row) = w.iter().position(|v| !(v.is_finite() && *v > 0.0)) {
            return Err(LsError::BadWeight { row });
        }
    }
    if n < p {
        return Err(LsError::TooFewRows { n, p });
    }
    // First non-finite row over the response and every column.
    let mut bad = y.iter().position(|v| !v.is_finite());
    for j in 0..p {
        let lim = bad.unwrap_or(n);
        if let Some(i) = x[j * n..j * n + lim].iter().position(|v| !v.is_finite()) {
            bad = Some(i);
        }
    }
    if let Some(row) = bad {
        return Err(LsError::NonFinite { row });
    }

    let sw_vec: Option<Vec<Dd>> = weights.map(|w| w.iter().map(|&v| Dd::new(v).sqrt()).collect());
    let sw = sw_vec.as_deref();

    // Steps 1–2: scaling and pivoted QR.
    let (a, d_all) = scaled_design(x, n, p, sw);
    let mut qr = PivotedQr::factor(a, n, p, Pivoting::Largest, RANK_TOLERANCE, 0.0);
    if qr.rank == 0 {
        return Err(LsError::ZeroDesign);
    }
    let mut r = qr.r_matrix();
    let mut kappa = scaled_condition(&r, qr.rank);
    if qr.rank < p {
        let (a2, _) = scaled_design(x, n, p, sw);
        let qr2 = PivotedQr::factor(a2, n, p, Pivoting::InOrder, RANK_TOLERANCE, qr.threshold);
        if qr2.rank == qr.rank {
            let r2 = qr2.r_matrix();
            let kappa2 = scaled_condition(&r2, qr2.rank);
            if kappa2 <= 100.0 * kappa {
                qr = qr2;
                r = r2;
                kappa = kappa2;
            }
        }
    }
    let k = qr.rank;
    let kept: Vec<usize> = qr.cols[..k].to_vec();
    let d: Vec<f64> = kept.iter().map(|&c| d_all[c]).collect();
    let sys = System { x, x_lo, n, sw, kept: &kept, d: &d, qr: &qr, r: &r };

    // Step 3: refined coefficients.
    let sol = sys.refine(Some(y), None);
    let beta: Vec<Dd> = (0..k).map(|a| sol.x[a].mul_f64(d[a])).collect();

    // Aliased columns: refined least squares multipliers on the kept ones.
    let mut aliased = vec![false; p];
    let mut alias_of: Vec<Vec<(usize, f64)>> = vec![Vec::new(); p];
    for &j in &qr.cols[k..] {
        aliased[j] = true;
        let colj = &x[j * n..(j + 1) * n];
        let norm_j = weighted_norm(colj, weights);
        if norm_j == 0.0 {
            continue;
        }
        let s = sys.refine(Some(colj), None);
        let mut list = Vec::new();
        for a in 0..k {
            let m = s.x[a].mul_f64(d[a]).to_f64();
            let contrib = m.abs() * weighted_norm(sys.col(a), weights);
            if contrib > 1e-12 * norm_j {
                list.push((kept[a], m));
            }
        }
        list.sort_by_key(|e| e.0);
        alias_of[j] = list;
    }

    // Step 4: residuals and sums of squares in double-double from the
    // double-double solution. When the fit is exact to far below double
    // precision (SSE ≤ 1e-24·SST), the reported (rounded) coefficients are
    // tried as well and the smaller sum of squares kept (both are attained
    // by some β, so the smaller is the closer to the minimum): for an exactly
    // fitting model with representable coefficients the residuals are then
    // exactly zero, as they should be.
    let sst = total_ss(y, weights, has_intercept);
    let residual_ss = |bvec: &[Dd]| -> (Dd, Vec<f64>, Vec<f64>) {
        let mut us = vec![0.0; n];
        let mut uc = vec![0.0; n];
        sys.residual_dd(Some(y), bvec, &mut us, &mut uc);
        let mut acc = Dot2::new();
        for i in 0..n {
            let e = Dd { hi: us[i], lo: uc[i] };
            let e2 = e * e;
            match weights {
                Some(w) => acc.add_dd(e2.mul_f64(w[i])),
                None => acc.add_dd(e2),
            }
        }
        (acc.value(), us, uc)
    };
    let (mut sse, mut us, mut uc) = residual_ss(&beta);
    let mut beta_used = beta.clone();
    if sse.hi <= 1e-24 * sst.hi.abs() || sst.hi == 0.0 {
        let beta_rounded: Vec<Dd> = match basis {
            None => beta.iter().map(|b| Dd::new(b.to_f64())).collect(),
            Some(bs) => {
                // Round the coefficients of the user's basis, β = Nγ, and
                // map them back, γ' = M·round(β) (kept columns only).
                let mut g = vec![Dd::ZERO; p];
                for a in 0..k {
                    g[kept[a]] = beta[a];
                }
                let b: Vec<Dd> = mat_vec(&bs.n_mat, &g, p).iter().map(|v| Dd::new(v.to_f64())).collect();
                let g2 = mat_vec(&bs.m_mat, &b, p);
                (0..k).map(|a| g2[kept[a]]).collect()
            }
        };
        let (s2, us2, uc2) = residual_ss(&beta_rounded);
        if s2.hi < sse.hi || (s2.hi == sse.hi && s2.lo <= sse.lo) {
            sse = s2;
            us = us2;
            uc = uc2;
            beta_used = beta_rounded;
        }
    }
    let mut residuals = vec![0.0; n];
    let mut fitted = vec![0.0; n];
    for i in 0..n {
        let e = Dd { hi: us[i], lo: uc[i] };
        residuals[i] = e.to_f64();
        fitted[i] = (Dd::new(y[i]) - e).to_f64();
    }
    drop(us);
    drop(uc);

    // Step 5: covariance of the scaled problem, C = (AᵀA)⁻¹.
    let (cmat, cov_method, cov_steps, cov_last) = covariance(&sys, weights);

    // Leverage from the thin Q (formed in place; R was copied out above).
    qr.form_thin_q();
    let mut leverage = vec![0.0; n];
    for a in 0..k {
        let q = qr.q_column(a);
        for (h, v) in leverage.iter_mut().zip(q) {
            *h += v * v;
        }
    }
    drop(qr);

    // Statistics.
    let nf = n as f64;
    let kf = k as f64;
    let df_resid = nf - kf;
    let df_model = if has_intercept { kf - 1.0 } else { kf };
    let s2 = if df_resid > 0.0 { sse / Dd::new(df_resid) } else { Dd::new(f64::NAN) };
    let sigma = s2.sqrt().to_f64();

    let mut coefficients = vec![f64::NAN; p];
    let mut std_errors = vec![f64::NAN; p];
    let mut covariance = vec![f64::NAN; p * p];
    let mut beta_dd = vec![Dd::ZERO; p];
    let mut cov_dd = vec![Dd::ZERO; p * p];
    for a in 0..k {
        coefficients[kept[a]] = beta_used[a].to_f64();
        beta_dd[kept[a]] = beta_used[a];
        for b in 0..k {
            let v = (cmat[b * k + a] * s2).mul_f64(d[a] * d[b]);
            covariance[kept[b] * p + kept[a]] = v.to_f64();
            cov_dd[kept[b] * p + kept[a]] = v;
        }
        std_errors[kept[a]] = (cmat[a * k + a] * s2).sqrt().mul_f64(d[a]).to_f64();
    }

    let ssr_dd = sst - sse;
    let r2 = if sst.hi > 0.0 { Dd::ONE - sse / sst } else { Dd::new(f64::NAN) };
    let r_squared = r2.to_f64();
    let c0 = if has_intercept { 1.0 } else { 0.0 };
    let adj_r_squared = if df_resid > 0.0 {
        (Dd::ONE - (Dd::ONE - r2) * Dd::new(nf - c0) / Dd::new(df_resid)).to_f64()
    } else {
        f64::NAN
    };
    let (f_statistic, f_p_value) = if df_model > 0.0 && df_resid > 0.0 {
        let f = if sse.hi == 0.0 {
            // Exact fit: F is infinite (NIST prints "Infinity"), or
            // undefined when nothing is explained either.
            if ssr_dd.hi > 0.0 { f64::INFINITY } else { f64::NAN }
        } else {
            ((ssr_dd / Dd::new(df_model)) / (sse / Dd::new(df_resid))).to_f64()
        };
        (f, inference::f_sf(f, df_model, df_resid))
    } else {
        (f64::NAN, f64::NAN)
    };
    let sum_log_w: f64 = weights.map(|w| w.iter().map(|v| v.ln()).sum()).unwrap_or(0.0);
    let log_likelihood = -0.5 * nf * ((2.0 * std::f64::consts::PI).ln() + (sse.to_f64() / nf).ln() + 1.0)
        + 0.5 * sum_log_w;
    let aic = -2.0 * log_likelihood + 2.0 * kf;
    let bic = -2.0 * log_likelihood + kf * nf.ln();

    let fit = LsFit {
        coefficients,
        std_errors,
        aliased,
        alias_of,
        rank: k,
        covariance,
        fitted,
        residuals,
        leverage,
        sse: sse.to_f64(),
        ssr: ssr_dd.to_f64(),
        sst: sst.to_f64(),
        df_model,
        df_resid,
        sigma,
        r_squared,
        adj_r_squared,
        f_statistic,
        f_p_value,
        log_likelihood,
        aic,
        bic,
        n,
        condition_number: kappa,
        weights: weights.map(|w| w.to_vec()),
        has_intercept,
        refinement: Refinement {
            solution_steps: sol.steps,
            solution_last_correction: sol.last,
            covariance_method: cov_method,
            covariance_steps: cov_steps,
            covariance_last_correction: cov_last,
        },
    };
    Ok(Core { fit, beta: beta_dd, cov: cov_dd })
}

/// `‖W^½ v‖₂` (plain double; used only for relative thresholds).
fn weighted_norm(v: &[f64], w: Option<&[f64]>) -> f64 {
    let m = v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    if m == 0.0 {
        return 0.0;
    }
    let s: f64 = match w {
        Some(w) => v.iter().zip(w).map(|(x, w)| w * (x / m) * (x / m)).sum(),
        None => v.iter().map(|x| (x / m) * (x / m)).sum(),
    };
    m * s.sqrt()
}

/// Total sum of squares in double-double: `Σ wᵢ(yᵢ − ȳ_w)²` with
/// `ȳ_w = Σwᵢyᵢ/Σwᵢ` when centred, else `Σ wᵢ yᵢ²` (textbook definitions;
/// e.g. Draper & Smith, *Applied Regression Analysis*, 3rd ed., §1.3, §9.2).
fn total_ss(y: &[f64], w: Option<&[f64]>, centred: bool) -> Dd {
    let mean = if centred {
        let mut sy = Dot2::new();
        let mut sw = Dot2::new();
        match w {
            Some(w) => {
                for (v, wi) in y.iter().zip(w) {
                    sy.add_prod(*v, *wi);
                    sw.add(*wi);
                }
            }
            None => {
                for v in y {
                    sy.add(*v);
                }
                sw.add(y.len() as f64);
            }
        }
        sy.value() / sw.value()
    } else {
        Dd::ZERO
    };
    let mut acc = Dot2::new();
    for (i, v) in y.iter().enumerate() {
        let dv = Dd::new(*v) - mean;
        let sq = dv * dv;
        match w {
            Some(w) => acc.add_dd(sq.mul_f64(w[i])),
            None => acc.add_dd(sq),
        }
    }
    acc.value()
}

/// The scaled Gram matrix `G = D X_keptᵀ W X_kept D` (`k × k`, column-major)
/// in double-double, Dot2 accumulation (Ogita–Rump–Oishi 2005).
fn gram_dd(sys: &System, w: Option<&[f64]>) -> Vec<Dd> {
    let k = sys.k();
    let mut g = vec![Dd::ZERO; k * k];
    // Weighted: z = w ⊙ x_a formed once per column, exactly, as a
    // double-double (TwoProd), then dotted with each later column.
    let (mut zh, mut zl) = match w {
        Some(_) => (vec![0.0; sys.n], vec![0.0; sys.n]),
        None => (Vec::new(), Vec::new()),
    };
    for a in 0..k {
        let ca = sys.col(a);
        if let Some(w) = w {
            for i in 0..sys.n {
                let (h, l) = two_prod(w[i], ca[i]);
                zh[i] = h;
                zl[i] = l;
            }
        }
        for b in a..k {
            let cb = sys.col(b);
            let mut t = match w {
                None => dot2(ca, cb),
                Some(_) => dot2_dd(cb, &zh, &zl),
            };
            if let (Some(la), Some(lb)) = (sys.col_lo(a), sys.col_lo(b)) {
                // Cross terms with the low parts (each below u of the
                // whole product): plain sums suffice.
                let ww = |i: usize| w.map_or(1.0, |w| w[i]);
                let cross: f64 = (0..sys.n).map(|i| ww(i) * (la[i] * cb[i] + ca[i] * lb[i])).sum();
                t = t.add_f64(cross);
            }
            let v = t.mul_f64(sys.d[a] * sys.d[b]);
            g[b * k + a] = v;
            g[a * k + b] = v;
        }
    }
    g
}

/// Refined `C = (AᵀA)⁻¹` of the scaled, weighted, kept design, returned as
/// `k × k` column-major double-doubles, with the method used, its steps and
/// last relative correction.
///
/// First method (iterative refinement of a matrix inverse with a
/// factorisation as the approximate inverse; Higham, *Accuracy and Stability
/// of Numerical Algorithms*, 2nd ed. (2002), ch. 12 (iterative refinement)
/// and §14.3 (refining a computed inverse)): `C₀ = R⁻¹R⁻ᵀ`, then
/// `C ← C + R⁻¹R⁻ᵀ(I − G C)` with `G` and `I − G C` in double-double. The
/// contraction factor is about `‖I − (RᵀR)⁻¹G‖ ≈ κ²u`, so for very
/// ill-conditioned designs it may not converge; then the second method
/// refines each column `j` through Björck's augmented system with
/// right-hand side `[0; e_j]`, whose solution is `x = −C e_j`.
fn covariance(sys: &System, w: Option<&[f64]>) -> (Vec<Dd>, CovarianceMethod, usize, f64) {
    let k = sys.k();
    let r = sys.r;
    let precond = |e: &mut [f64]| {
        solve_upper_transpose(r, k, e);
        solve_upper(r, k, e);
    };
    let mut c = vec![Dd::ZERO; k * k];
    let mut col = vec![0.0; k];
    for j in 0..k {
        col.iter_mut().for_each(|v| *v = 0.0);
        col[j] = 1.0;
        precond(&mut col);
        for i in 0..k {
            c[j * k + i] = Dd::new(col[i]);
        }
    }
    let g = gram_dd(sys, w);
    let mut steps = 0;
    let mut last = f64::INFINITY;
    let mut prev = f64::INFINITY;
    let mut e = vec![0.0; k * k];
    while steps < MAX_REFINE {
        // E = I − G C in double-double, rounded.
        for j in 0..k {
            for i in 0..k {
                let mut acc = Dot2::new();
                if i == j {
                    acc.add(1.0);
                }
                for m in 0..k {
                    acc.add_dd(-(g[m * k + i] * c[j * k + m]));
                }
                e[j * k + i] = acc.value().to_f64();
            }
        }
        let mut nd = 0.0f64;
        let mut nc = 0.0f64;
        let mut delta = e.clone();
        for j in 0..k {
            precond(&mut delta[j * k..(j + 1) * k]);
        }
        for (dv, cv) in delta.iter().zip(&c) {
            nd = nd.max(dv.abs());
            nc = nc.max(cv.hi.abs());
        }
        steps += 1;
        if !nd.is_finite() || nd > prev {
            break;
        }
        for (cv, dv) in c.iter_mut().zip(&delta) {
            *cv = cv.add_f64(*dv);
        }
        last = if nc > 0.0 { nd / nc } else { 0.0 };
        if nd == 0.0 || last <= COV_CONVERGED || nd > 0.5 * prev {
            break;
        }
        prev = nd;
    }
    if last <= COV_CONVERGED {
        symmetrize(&mut c, k);
        return (c, CovarianceMethod::GramResidual, steps, last);
    }
    // Fallback: column-wise augmented-system refinement.
    let mut c = vec![Dd::ZERO; k * k];
    let mut ej = vec![0.0; k];
    let mut max_steps = 0;
    let mut worst = 0.0f64;
    for j in 0..k {
        ej.iter_mut().for_each(|v| *v = 0.0);
        ej[j] = 1.0;
        let s = sys.refine(None, Some(&ej));
        max_steps = max_steps.max(s.steps);
        worst = worst.max(s.last);
        for i in 0..k {
            c[j * k + i] = -s.x[i];
        }
    }
    symmetrize(&mut c, k);
    (c, CovarianceMethod::AugmentedColumns, max_steps, worst)
}

/// `C ← (C + Cᵀ)/2` in double-double.
fn symmetrize(c: &mut [Dd], k: usize) {
    for j in 0..k {
        for i in j + 1..k {
            let v = (c[j * k + i] + c[i * k + j]).mul_f64(0.5);
            c[j * k + i] = v;
            c[i * k + j] = v;
        }
    }
}
