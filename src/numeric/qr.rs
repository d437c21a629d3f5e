//! Householder QR factorisation with column pivoting on a column-major
//! buffer, and the operations the least squares driver needs from it:
//! applying `Q` and `Qᵀ` to a vector through the stored reflectors,
//! triangular solves with `R`, and forming the thin `Q` in place.
//!
//! Sources:
//! - Householder reflectors in the LAPACK convention (`dlarfg`/`dgeqp3`):
//!   `H = I − τ v vᵀ`, `v₀ = 1`, `β = −sign(α)·‖(α, x)‖`, `τ = (β − α)/β`;
//!   Golub & Van Loan, *Matrix Computations*, 4th ed. (2013), §5.1.2–5.1.3.
//! - Column pivoting: Businger, P. & Golub, G. H. (1965), "Linear least
//!   squares solutions by Householder transformations", *Numer. Math.* 7,
//!   269–276; Golub & Van Loan §5.4.2. At each step the remaining column of
//!   largest remaining 2-norm is moved to the front.
//! - "In-order" pivoting (keep the caller's column order, move a column to
//!   the end only when its remaining norm falls below the threshold) is a
//!   limited form of pivoting (cf. the initial/free column options of
//!   LINPACK `dqrdc`, Dongarra et al., *LINPACK Users' Guide* (1979), ch. 9);
//!   it is used here only to choose *which* columns of an already detected
//!   rank-deficient design are reported as aliased (see `lsq`).
//! - Forming the thin `Q` by backward accumulation of the reflectors in place
//!   is LAPACK `dorg2r`; Golub & Van Loan §5.1.6.
//!
//! Remaining column norms are recomputed exactly in the same pass that
//! applies each reflector (no downdating formula, so no cancellation issue;
//! compare Drmač & Bujanović 2008 for the downdating alternative).

/// Dot product with four independent accumulators (lets the compiler keep
/// several multiply-adds in flight; the order of summation is fixed, so the
/// result is deterministic).
#[inline]
pub(crate) fn dot(a: &[f64], b: &[f64]) -> f64 {
    debug_assert_eq!(a.len(), b.len());
    let mut s = [0.0f64; 4];
    let ca = a.chunks_exact(4);
    let cb = b.chunks_exact(4);
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        s[0] += x[0] * y[0];
        s[1] += x[1] * y[1];
        s[2] += x[2] * y[2];
        s[3] += x[3] * y[3];
    }
    let mut t = (s[0] + s[1]) + (s[2] + s[3]);
    for (x, y) in ra.iter().zip(rb) {
        t += x * y;
    }
    t
}

/// Sum of squares with four accumulators (see [`dot`]).
#[inline]
pub(crate) fn sum_sq(a: &[f64]) -> f64 {
    dot(a, a)
}

/// `b ← b − w·a`, returning the new `Σ b²` (fused: one pass).
#[inline]
fn axpy_sumsq(w: f64, a: &[f64], b: &mut [f64]) -> f64 {
    debug_assert_eq!(a.len(), b.len());
    let mut s = [0.0f64; 4];
    let ca = a.chunks_exact(4);
    let ra = ca.remainder();
    let mut cb = b.chunks_exact_mut(4);
    for (x, y) in ca.zip(&mut cb) {
        y[0] -= w * x[0];
        y[1] -= w * x[1];
        y[2] -= w * x[2];
        y[3] -= w * x[3];
        s[0] += y[0] * y[0];
        s[1] += y[1] * y[1];
        s[2] += y[2] * y[2];
        s[3] += y[3] * y[3];
    }
    let mut t = (s[0] + s[1]) + (s[2] + s[3]);
    let rb = cb.into_remainder();
    for (x, y) in ra.iter().zip(rb.iter_mut()) {
        *y -= w * x;
        t += *y * *y;
    }
    t
}

/// `b ← b − w·a`.
#[inline]
fn axpy(w: f64, a: &[f64], b: &mut [f64]) {
    for (x, y) in a.iter().zip(b.iter_mut()) {
        *y -= w * x;
    }
}

/// How the next pivot column is chosen.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Pivoting {
    /// Businger–Golub: the remaining column of largest remaining norm.
    Largest,
    /// Keep the given order; a column whose remaining norm is at or below
    /// the threshold is set aside (aliased) permanently.
    InOrder,
}

/// A pivoted Householder QR factorisation `A P = Q R` of an `n × p`
/// column-major matrix, stopped at the numerical rank.
///
/// Storage (LAPACK `dgeqp3` layout, but columns are addressed through
/// `cols` so no column is ever moved in memory): for position `j < rank`,
/// buffer column `cols[j]` holds `R[0..j, j]` in rows `0..j`, `R[j, j]` in
/// row `j` and the reflector tail `v[j+1..n]` below (`v[j] = 1` implied).
#[derive(Debug)]
pub(crate) struct PivotedQr {
    pub n: usize,
    pub a: Vec<f64>,
    /// Position → original column index; `cols[..rank]` are the kept
    /// columns in pivot order, `cols[rank..]` the aliased ones.
    pub cols: Vec<usize>,
    /// Reflector scalars, one per kept column.
    pub tau: Vec<f64>,
    /// Numerical rank: the number of kept columns.
    pub rank: usize,
    /// The absolute norm threshold used: a column is aliased when its
    /// remaining norm is at or below it.
    pub threshold: f64,
}

impl PivotedQr {
    /// Factors `a` (`n × p`, column-major, consumed).
    ///
    /// With [`Pivoting::Largest`] the threshold is `tol·|R₁₁|`, where `R₁₁`
    /// is the largest column norm (the first pivot); `threshold_abs` is
    /// ignored. With [`Pivoting::InOrder`] the absolute `threshold_abs` is
    /// used (the caller passes the one found by the Businger–Golub pass).
    pub fn factor(
        mut a: Vec<f64>,
        n: usize,
        p: usize,
        mode: Pivoting,
        tol: f64,
        threshold_abs: f64,
    ) -> PivotedQr {
        debug_assert_eq!(a.len(), n * p);
        let mut cols: Vec<usize> = (0..p).collect();
        // Remaining squared norms (rows j..n) of every column.
        let mut norm_sq: Vec<f64> = (0..p).map(|c| sum_sq(&a[c * n..(c + 1) * n])).collect();
        let threshold = match mode {
            Pivoting::Largest => {
                let max = norm_sq.iter().cloned().fold(0.0f64, f64::max).sqrt();
                tol * max
            }
            Pivoting::InOrder => threshold_abs,
        };
        let mut tau = Vec::with_capacity(p.min(n));
        let mut end = p; // positions end..p are set aside (InOrder)
        let mut j = 0;
        while j < end.min(n) {
            // Choose the pivot.
            match mode {
                Pivoting::Largest => {
                    let mut best = j;
                    for q in j + 1..end {
                        if norm_sq[cols[q]] > norm_sq[cols[best]] {
                            best = q;
                        }
                    }
                    if norm_sq[cols[best]].sqrt() <= threshold {
                        break;
                    }
                    cols.swap(j, best);
                }
                Pivoting::InOrder => {
                    if norm_sq[cols[j]].sqrt() <= threshold {
                        // Set aside: rotate it to the end, keeping order.
                        let c = cols.remove(j);
                        cols.push(c);
                        end -= 1;
                        continue;
                    }
                }
            }
            let cj = cols[j];
            // Householder vector for rows j..n of column cj (LAPACK dlarfg).
            {
                let col = &mut a[cj * n..(cj + 1) * n];
                let alpha = col[j];
                let xnorm = sum_sq(&col[j + 1..]).sqrt();
                if xnorm == 0.0 {
                    tau.push(0.0);
                } else {
                    let beta = -(alpha.hypot(xnorm)).copysign(alpha);
                    let scale = 1.0 / (alpha - beta);
                    for v in col[j + 1..].iter_mut() {
                        *v *= scale;
                    }
                    col[j] = beta;
                    tau.push((beta - alpha) / beta);
                }
            }
            let t = tau[j];
            // Apply H_j to the remaining columns and recompute their norms.
            if t != 0.0 {
                for &cq in &cols[j + 1..end] {
                    let (vcol, ccol) = two_cols(&mut a, n, cj, cq);
                    let w = t * (ccol[j] + dot(&vcol[j + 1..], &ccol[j + 1..]));
                    ccol[j] -= w;
                    norm_sq[cq] = axpy_sumsq(w, &vcol[j + 1..], &mut ccol[j + 1..]);
                }
            } else {
                for &cq in &cols[j + 1..end] {
                    norm_sq[cq] = sum_sq(&a[cq * n + j + 1..(cq + 1) * n]);
                }
            }
            j += 1;
        }
        let rank = j;
        tau.truncate(rank);
        PivotedQr { n, a, cols, tau, rank, threshold }
    }

    /// The kept part of `R` (`rank × rank`, column-major, pivot order).
    pub fn r_matrix(&self) -> Vec<f64> {
        let k = self.rank;
        let mut r = vec![0.0; k * k];
        for b in 0..k {
            let c = self.cols[b];
            for i in 0..=b {
                r[b * k + i] = self.a[c * self.n + i];
            }
        }
        r
    }

    /// `f ← Qᵀ f` (reflectors `H₁ … H_rank` applied in order).
    pub fn apply_qt(&self, f: &mut [f64]) {
        let n = self.n;
        for j in 0..self.rank {
            let t = self.tau[j];
            if t == 0.0 {
                continue;
            }
            let v = &self.a[self.cols[j] * n + j + 1..(self.cols[j] + 1) * n];
            let w = t * (f[j] + dot(v, &f[j + 1..]));
            f[j] -= w;
            axpy(w, v, &mut f[j + 1..]);
        }
    }

    /// `f ← Q f` (reflectors applied in reverse order).
    pub fn apply_q(&self, f: &mut [f64]) {
        let n = self.n;
        for j in (0..self.rank).rev() {
            let t = self.tau[j];
            if t == 0.0 {
                continue;
            }
            let v = &self.a[self.cols[j] * n + j + 1..(self.cols[j] + 1) * n];
            let w = t * (f[j] + dot(v, &f[j + 1..]));
            f[j] -= w;
            axpy(w, v, &mut f[j + 1..]);
        }
    }

    /// Overwrites the kept columns of the buffer with the thin `Q`
    /// (`n × rank`, column `j` of `Q` in buffer column `cols[j]`), LAPACK
    /// `dorg2r`. The reflectors and `R` are lost; call [`r_matrix`] first.
    ///
    /// [`r_matrix`]: PivotedQr::r_matrix
    pub fn form_thin_q(&mut self) {
        let n = self.n;
        let k = self.rank;
        for j in (0..k).rev() {
            let cj = self.cols[j];
            let t = self.tau[j];
            // Apply H_j to columns j+1..k (rows j..n); their rows < j+1 are
            // still those of the identity (zero above the diagonal part
            // touched so far, which starts at row j+1).
            self.a[cj * n + j] = 1.0;
            if t != 0.0 {
                for q in j + 1..k {
                    let cq = self.cols[q];
                    let (vcol, ccol) = two_cols(&mut self.a, n, cj, cq);
                    let w = t * dot(&vcol[j..], &ccol[j..]);
                    axpy(w, &vcol[j..], &mut ccol[j..]);
                }
            }
            let col = &mut self.a[cj * n..(cj + 1) * n];
            for v in col[j + 1..].iter_mut() {
                *v *= -t;
            }
            col[j] = 1.0 - t;
            for v in col[..j].iter_mut() {
                *v = 0.0;
            }
        }
    }

    /// Column `j` (position) of the thin `Q` after [`form_thin_q`].
    ///
    /// [`form_thin_q`]: PivotedQr::form_thin_q
    pub fn q_column(&self, j: usize) -> &[f64] {
        let c = self.cols[j];
        &self.a[c * self.n..(c + 1) * self.n]
    }
}

/// Disjoint borrows of buffer columns `c1` (shared) and `c2` (mutable).
fn two_cols(a: &mut [f64], n: usize, c1: usize, c2: usize) -> (&[f64], &mut [f64]) {
    debug_assert_ne!(c1, c2);
    if c1 < c2 {
        let (lo, hi) = a.split_at_mut(c2 * n);
        (&lo[c1 * n..(c1 + 1) * n], &mut hi[..n])
    } else {
        let (lo, hi) = a.split_at_mut(c1 * n);
        (&hi[..n], &mut lo[c2 * n..(c2 + 1) * n])
    }
}

/// Solves `R x = b` in place (`R` upper triangular `k × k`, column-major),
/// back substitution.
pub(crate) fn solve_upper(r: &[f64], k: usize, b: &mut [f64]) {
    for j in (0..k).rev() {
        b[j] /= r[j * k + j];
        let bj = b[j];
        for i in 0..j {
            b[i] -= r[j * k + i] * bj;
        }
    }
}

/// Solves `Rᵀ x = b` in place, forward substitution.
pub(crate) fn solve_upper_transpose(r: &[f64], k: usize, b: &mut [f64]) {
    for j in 0..k {
        let s = dot(&r[j * k..j * k + j], &b[..j]);
        b[j] = (b[j] - s) / r[j * k + j];
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn matmul_check(qr: &mut PivotedQr, orig: &[f64]) -> f64 {
        // ‖A P − Q R‖_max for a full-rank factorisation (common practice:
        // the defining identity of the factorisation).
        let (n, k) = (qr.n, qr.rank);
        let r = qr.r_matrix();
        qr.form_thin_q();
        let mut worst = 0.0f64;
        for b in 0..k {
            let c = qr.cols[b];
            for i in 0..n {
                let mut s = 0.0;
                for m in 0..=b {
                    s += qr.q_column(m)[i] * r[b * k + m];
                }
                worst = worst.max((s - orig[c * n + i]).abs());
            }
        }
        worst
    }

    #[test]
    fn factorisation_reproduces_matrix_and_q_is_orthonormal() {
        let n = 7;
        let p = 3;
        let a: Vec<f64> = (0..n * p).map(|i| ((i * 37 % 11) as f64 - 5.0) / 3.0).collect();
        let mut qr = PivotedQr::factor(a.clone(), n, p, Pivoting::Largest, 1e-11, 0.0);
        assert_eq!(qr.rank, 3);
        assert!(matmul_check(&mut qr, &a) < 1e-14);
        for i in 0..3 {
            for j in 0..3 {
                let d = dot(qr.q_column(i), qr.q_column(j));
                let want = if i == j { 1.0 } else { 0.0 };
                assert!((d - want).abs() < 1e-14, "QᵀQ[{i},{j}] = {d}");
            }
        }
    }

    #[test]
    fn pivoting_puts_largest_column_first_and_detects_rank() {
        // Column 2 = column 0 + column 1 exactly; column 1 has the largest norm.
        let n = 5;
        let c0 = [1.0, 0.0, 1.0, 0.0, 1.0];
        let c1 = [0.0, 3.0, 1.0, 2.0, 0.0];
        let mut a = Vec::new();
        a.extend_from_slice(&c0);
        a.extend_from_slice(&c1);
        for i in 0..n {
            a.push(c0[i] + c1[i]);
        }
        let qr = PivotedQr::factor(a, n, 3, Pivoting::Largest, 1e-11, 0.0);
        assert_eq!(qr.rank, 2);
        assert_eq!(qr.cols[0], 2, "c0 + c1 has the largest norm");
    }

    #[test]
    fn q_and_qt_are_inverse() {
        let n = 6;
        let a: Vec<f64> = (0..n * 2).map(|i| (i as f64).sin()).collect();
        let qr = PivotedQr::factor(a, n, 2, Pivoting::Largest, 1e-11, 0.0);
        let f0: Vec<f64> = (0..n).map(|i| (i as f64).cos()).collect();
        let mut f = f0.clone();
        qr.apply_qt(&mut f);
        qr.apply_q(&mut f);
        for (x, y) in f.iter().zip(&f0) {
            assert!((x - y).abs() < 1e-15);
        }
    }
}
