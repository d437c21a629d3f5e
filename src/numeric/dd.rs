//! Double-double arithmetic: a value is carried as an unevaluated sum
//! `hi + lo` of two `f64` with `|lo| ≤ ½ ulp(hi)`, about 106 significant bits.
//! This module owns the error-free transformations and the few operations the
//! least squares refinement needs (residuals, sums of squares, Gram matrices).
//!
//! Sources:
//! - TwoSum: Knuth, *The Art of Computer Programming*, vol. 2, 3rd ed., §4.2.2,
//!   Theorem B (after Møller 1965) — exact `a + b = s + e` for any `a`, `b`.
//! - FastTwoSum and the double-double representation: Dekker, T. J. (1971),
//!   "A floating-point technique for extending the available precision",
//!   *Numerische Mathematik* 18, 224–242.
//! - TwoProd: with a fused multiply-add `e = fma(a, b, −ab)` is exact (Ogita,
//!   Rump & Oishi 2005; Muller et al., *Handbook of Floating-Point
//!   Arithmetic* (2010), §4.4); without hardware FMA in the build, Dekker's
//!   (1971) `mul12` with Veltkamp's splitting, equally exact (see
//!   [`two_prod`]).
//! - Addition, multiplication, division and square root of double-double
//!   numbers follow Hida, Li & Bailey (2001), "Algorithms for quad-double
//!   precision floating point arithmetic" (the QD library's `dd_real`),
//!   which builds on Dekker (1971).
//! - The compensated dot-product accumulator [`Dot2`] is Algorithm Dot2 of
//!   Ogita, T., Rump, S. M. & Oishi, S. (2005), "Accurate sum and dot product",
//!   *SIAM J. Sci. Comput.* 26(6), 1955–1988: the result is as accurate as if
//!   computed in twice the working precision.

use std::ops::{Add, Div, Mul, Neg, Sub};

/// Knuth's TwoSum: `(s, e)` with `s = fl(a + b)` and `a + b = s + e` exactly.
/// (Knuth, TAOCP vol. 2, §4.2.2, Theorem B.)
#[inline(always)]
pub fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    let e = (a - (s - bb)) + (b - bb);
    (s, e)
}

/// Dekker's FastTwoSum: as [`two_sum`] but requires `|a| ≥ |b|` (or `a == 0`).
/// (Dekker 1971.)
#[inline(always)]
pub fn fast_two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let e = b - (s - a);
    (s, e)
}

/// Operands above this magnitude are not split (Veltkamp's `2^27 + 1`
/// multiplier would overflow near 2^996); TwoProd then uses the fused
/// multiply-add.
const SPLIT_LIMIT: f64 = 1e290;

/// TwoProd: `(p, e)` with `p = fl(a·b)` and `a·b = p + e` exactly (barring
/// underflow of `e`).
///
/// With a hardware fused multiply-add compiled in (`target_feature = "fma"`)
/// this is `e = fma(a, b, −p)` (`f64::mul_add`). Otherwise `mul_add` becomes
/// a call into the math library on every product, several times slower than
/// Dekker's (1971) exact product with Veltkamp's splitting (Dekker's `mul12`,
/// 17 flops, no calls), which is used instead for operands up to 1e290;
/// larger operands fall back to `mul_add`. Both forms are exact, so the
/// results do not depend on the build.
#[inline(always)]
pub fn two_prod(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    if cfg!(target_feature = "fma") || a.abs() > SPLIT_LIMIT || b.abs() > SPLIT_LIMIT {
        let e = a.mul_add(b, -p);
        (p, e)
    } else {
        let (ah, al) = split(a);
        let (bh, bl) = split(b);
        let e = ((ah * bh - p) + ah * bl + al * bh) + al * bl;
        (p, e)
    }
}

/// Veltkamp's splitting (Dekker 1971): `a = h + l` with `h` holding the
/// leading 26 bits, so products of halves are exact.
#[inline(always)]
fn split(a: f64) -> (f64, f64) {
    let c = 134217729.0 * a; // 2^27 + 1
    let h = c - (c - a);
    (h, a - h)
}

/// A double-double number `hi + lo`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Dd {
    /// Leading part, the value rounded to `f64`.
    pub hi: f64,
    /// Trailing part, `|lo| ≤ ½ ulp(hi)` after normalisation.
    pub lo: f64,
}

impl Dd {
    /// Zero.
    pub const ZERO: Dd = Dd { hi: 0.0, lo: 0.0 };
    /// One.
    pub const ONE: Dd = Dd { hi: 1.0, lo: 0.0 };

    /// The double `x` as a double-double (exact).
    #[inline(always)]
    pub fn new(x: f64) -> Dd {
        Dd { hi: x, lo: 0.0 }
    }

    /// Normalises an arbitrary pair (Dekker 1971): result `hi = fl(a + b)`.
    #[inline(always)]
    pub fn from_sum(a: f64, b: f64) -> Dd {
        let (hi, lo) = two_sum(a, b);
        Dd { hi, lo }
    }

    /// The exact product of two doubles.
    #[inline(always)]
    pub fn from_prod(a: f64, b: f64) -> Dd {
        let (hi, lo) = two_prod(a, b);
        Dd { hi, lo }
    }

    /// Rounds to the nearest double (`hi`, since the pair is normalised).
    #[inline(always)]
    pub fn to_f64(self) -> f64 {
        self.hi + self.lo
    }

    /// Absolute value.
    #[inline(always)]
    pub fn abs(self) -> Dd {
        if self.hi < 0.0 || (self.hi == 0.0 && self.lo < 0.0) {
            -self
        } else {
            self
        }
    }

    /// `self + b` for a double `b` (Hida–Li–Bailey 2001, `dd + d`).
    #[inline(always)]
    pub fn add_f64(self, b: f64) -> Dd {
        let (s1, s2) = two_sum(self.hi, b);
        let s2 = s2 + self.lo;
        let (hi, lo) = fast_two_sum(s1, s2);
        Dd { hi, lo }
    }

    /// `self · b` for a double `b` (Hida–Li–Bailey 2001, `dd · d`).
    #[inline(always)]
    pub fn mul_f64(self, b: f64) -> Dd {
        let (p1, p2) = two_prod(self.hi, b);
        let p2 = p2 + self.lo * b;
        let (hi, lo) = fast_two_sum(p1, p2);
        Dd { hi, lo }
    }

    /// Square root (one Newton step on `sqrt(hi)`, Hida–Li–Bailey 2001).
    /// NaN for negative input, zero for zero.
    pub fn sqrt(self) -> Dd {
        if self.hi <= 0.0 {
            return if self.hi == 0.0 { Dd::ZERO } else { Dd::new(f64::NAN) };
        }
        let x = self.hi.sqrt();
        let (p, e) = two_prod(x, x);
        // (a − x²) / (2x), with a − x² formed exactly enough in double-double.
        let r = ((self.hi - p) - e + self.lo) / (2.0 * x);
        let (hi, lo) = fast_two_sum(x, r);
        Dd { hi, lo }
    }

    /// `true` when both parts are finite.
    #[inline(always)]
    pub fn is_finite(self) -> bool {
        self.hi.is_finite() && self.lo.is_finite()
    }

    /// `eˣ`, relative error about 1e-31 (measured against mpmath in the
    /// tests). Method (as in the QD library's `dd_real::exp`, Hida, Li &
    /// Bailey 2001): `x = k·ln 2 + r` with `|r| ≤ ½ ln 2`, `e^r` from the
    /// Taylor series of `e^(r/1024) − 1` (nine terms, each below 1e-36
    /// after the first few), squared back ten times as `e ← 2e + e²` (so
    /// the small quantity `e^s − 1` keeps its relative accuracy), times
    /// `2^k`. Overflow gives infinity, underflow zero.
    pub fn exp(self) -> Dd {
        if !self.hi.is_finite() {
            return Dd::new(self.hi.exp());
        }
        if self.hi > 709.79 {
            return Dd::new(f64::INFINITY);
        }
        if self.hi < -745.2 {
            return Dd::ZERO;
        }
        let k = (self.hi / LN_2.hi).round();
        let r = self - LN_2.mul_f64(k);
        let s = r.mul_f64(1.0 / 1024.0);
        // e^s − 1 = s·(1 + s/2·(1 + s/3·(… (1 + s/9)))), by Horner.
        let mut t = Dd::ONE;
        for n in (2..=9).rev() {
            t = Dd::ONE + (t * s) / Dd::new(f64::from(n));
        }
        let mut e = s * t;
        for _ in 0..10 {
            e = e.mul_f64(2.0) + e * e;
        }
        let v = e + Dd::ONE;
        let scale = 2f64.powi(k as i32);
        if scale.is_finite() && scale != 0.0 {
            Dd { hi: v.hi * scale, lo: v.lo * scale }
        } else {
            // |k| near the ends of the exponent range: scale in two halves.
            let h = 2f64.powi((k / 2.0).trunc() as i32);
            let g = 2f64.powi(k as i32 - (k / 2.0).trunc() as i32);
            Dd { hi: v.hi * h * g, lo: v.lo * h * g }
        }
    }

    /// Natural logarithm: one Newton step `x ← x + a·e^(−x) − 1` from the
    /// double `x = ln(hi)`, which doubles the number of correct digits
    /// (Hida, Li & Bailey 2001). NaN for negative input, −∞ at zero.
    pub fn ln(self) -> Dd {
        if self.hi <= 0.0 || !self.hi.is_finite() {
            return Dd::new(self.hi.ln());
        }
        let x = Dd::new(self.hi.ln());
        x + self * (-x).exp() - Dd::ONE
    }

    /// `self^e` for a double-double exponent: repeated multiplication for
    /// a whole exponent of at most 64 in size (exact rules, defined for a
    /// negative base), otherwise `exp(e·ln self)`.
    pub fn powd(self, e: Dd) -> Dd {
        if e.lo == 0.0 && e.hi.fract() == 0.0 && e.hi.abs() <= 64.0 {
            let mut k = e.hi.abs() as u32;
            let (mut acc, mut base) = (Dd::ONE, self);
            while k > 0 {
                if k & 1 == 1 {
                    acc = acc * base;
                }
                base = base * base;
                k >>= 1;
            }
            return if e.hi < 0.0 { Dd::ONE / acc } else { acc };
        }
        if self.hi == 0.0 && self.lo == 0.0 {
            return Dd::new(0f64.powf(e.hi));
        }
        (e * self.ln()).exp()
    }
}

/// `ln 2` as a double-double (hi: the double nearest ln 2; lo: the next
/// 53 bits, from the digits 0.693147180559945309417232121458176568…).
pub const LN_2: Dd = Dd { hi: std::f64::consts::LN_2, lo: 2.319_046_813_846_299_6e-17 };

impl From<f64> for Dd {
    fn from(x: f64) -> Dd {
        Dd::new(x)
    }
}

impl Neg for Dd {
    type Output = Dd;
    #[inline(always)]
    fn neg(self) -> Dd {
        Dd { hi: -self.hi, lo: -self.lo }
    }
}

impl Add for Dd {
    type Output = Dd;
    /// Accurate ("IEEE") double-double addition (Hida–Li–Bailey 2001).
    #[inline(always)]
    fn add(self, b: Dd) -> Dd {
        let (s1, s2) = two_sum(self.hi, b.hi);
        let (t1, t2) = two_sum(self.lo, b.lo);
        let s2 = s2 + t1;
        let (s1, s2) = fast_two_sum(s1, s2);
        let s2 = s2 + t2;
        let (hi, lo) = fast_two_sum(s1, s2);
        Dd { hi, lo }
    }
}

impl Sub for Dd {
    type Output = Dd;
    #[inline(always)]
    fn sub(self, b: Dd) -> Dd {
        self + (-b)
    }
}

impl Mul for Dd {
    type Output = Dd;
    /// Double-double product (Dekker 1971, `mul2`; Hida–Li–Bailey 2001).
    #[inline(always)]
    fn mul(self, b: Dd) -> Dd {
        let (p1, p2) = two_prod(self.hi, b.hi);
        let p2 = p2 + (self.hi * b.lo + self.lo * b.hi);
        let (hi, lo) = fast_two_sum(p1, p2);
        Dd { hi, lo }
    }
}

impl Div for Dd {
    type Output = Dd;
    /// Double-double quotient by long division with two correction steps
    /// (Hida–Li–Bailey 2001, "accurate" division).
    fn div(self, b: Dd) -> Dd {
        let q1 = self.hi / b.hi;
        let r = self - b.mul_f64(q1);
        let q2 = r.hi / b.hi;
        let r = r - b.mul_f64(q2);
        let q3 = r.hi / b.hi;
        let (q1, q2) = fast_two_sum(q1, q2);
        Dd { hi: q1, lo: q2 }.add_f64(q3)
    }
}

/// Compensated accumulator for sums of products (Ogita, Rump & Oishi 2005,
/// Algorithm Dot2): the running sum `s` is kept in double with every rounding
/// error captured exactly by TwoSum/TwoProd and summed in `c`. The final
/// `s + c` is as accurate as a dot product evaluated in twice the working
/// precision and then rounded to double-double.
#[derive(Clone, Copy, Debug, Default)]
pub struct Dot2 {
    s: f64,
    c: f64,
}

impl Dot2 {
    /// An empty accumulator.
    #[inline(always)]
    pub fn new() -> Dot2 {
        Dot2 { s: 0.0, c: 0.0 }
    }

    /// Starts from a double-double value.
    #[inline(always)]
    pub fn from_dd(x: Dd) -> Dot2 {
        Dot2 { s: x.hi, c: x.lo }
    }

    /// Adds the exact product `a·b`.
    #[inline(always)]
    pub fn add_prod(&mut self, a: f64, b: f64) {
        let (p, pe) = two_prod(a, b);
        let (s, se) = two_sum(self.s, p);
        self.s = s;
        self.c += pe + se;
    }

    /// Adds `a·b` for a double-double `b` (the `a·b.lo` part rounded once,
    /// a relative error of order u² of the term).
    #[inline(always)]
    pub fn add_prod_dd(&mut self, a: f64, b: Dd) {
        let (p, pe) = two_prod(a, b.hi);
        let (s, se) = two_sum(self.s, p);
        self.s = s;
        self.c += (pe + se) + a * b.lo;
    }

    /// Adds a double.
    #[inline(always)]
    pub fn add(&mut self, x: f64) {
        let (s, se) = two_sum(self.s, x);
        self.s = s;
        self.c += se;
    }

    /// Adds a double-double.
    #[inline(always)]
    pub fn add_dd(&mut self, x: Dd) {
        let (s, se) = two_sum(self.s, x.hi);
        self.s = s;
        self.c += se + x.lo;
    }

    /// Merges another accumulator.
    #[inline(always)]
    pub fn merge(&mut self, o: Dot2) {
        let (s, se) = two_sum(self.s, o.s);
        self.s = s;
        self.c += se + o.c;
    }

    /// The accumulated value, normalised.
    #[inline(always)]
    pub fn value(self) -> Dd {
        let (hi, lo) = two_sum(self.s, self.c);
        Dd { hi, lo }
    }
}

/// Merges four Dot2 lanes `(s, c)` into one double-double.
#[inline(always)]
fn merge_lanes(s: [f64; 4], c: [f64; 4]) -> Dd {
    let mut acc = Dot2 { s: s[0], c: c[0] };
    for j in 1..4 {
        acc.merge(Dot2 { s: s[j], c: c[j] });
    }
    acc.value()
}

/// `Σ aᵢ bᵢ` by Dot2 (Ogita–Rump–Oishi 2005) in four interleaved lanes
/// (a fixed order, so the result is deterministic), as a double-double.
pub fn dot2(a: &[f64], b: &[f64]) -> Dd {
    debug_assert_eq!(a.len(), b.len());
    let mut s = [0.0f64; 4];
    let mut c = [0.0f64; 4];
    let ca = a.chunks_exact(4);
    let cb = b.chunks_exact(4);
    let (ra, rb) = (ca.remainder(), cb.remainder());
    for (x, y) in ca.zip(cb) {
        for j in 0..4 {
            let (p, pe) = two_prod(x[j], y[j]);
            let (t, te) = two_sum(s[j], p);
            s[j] = t;
            c[j] += pe + te;
        }
    }
    for (j, (x, y)) in ra.iter().zip(rb).enumerate() {
        let (p, pe) = two_prod(*x, *y);
        let (t, te) = two_sum(s[j], p);
        s[j] = t;
        c[j] += pe + te;
    }
    merge_lanes(s, c)
}

/// `Σ aᵢ (hᵢ + lᵢ)` for a double-double vector stored as two slices, by
/// Dot2 (the `aᵢlᵢ` parts rounded once).
pub fn dot2_dd(a: &[f64], h: &[f64], l: &[f64]) -> Dd {
    debug_assert!(h.len() == a.len() && l.len() == a.len());
    let mut s = [0.0f64; 4];
    let mut c = [0.0f64; 4];
    let n4 = a.len() / 4 * 4;
    let mut i = 0;
    while i < n4 {
        for j in 0..4 {
            let (p, pe) = two_prod(a[i + j], h[i + j]);
            let (t, te) = two_sum(s[j], p);
            s[j] = t;
            c[j] += (pe + te) + a[i + j] * l[i + j];
        }
        i += 4;
    }
    for (j, ii) in (n4..a.len()).enumerate() {
        let (p, pe) = two_prod(a[ii], h[ii]);
        let (t, te) = two_sum(s[j], p);
        s[j] = t;
        c[j] += (pe + te) + a[ii] * l[ii];
    }
    merge_lanes(s, c)
}

/// `(s, c) ← (s, c) + a·(bh + bl)` row by row: one Dot2 step per row for a
/// double-double scalar `b` (the running pairs stay unnormalised; normalise
/// with [`two_sum`] at the end). Used to accumulate `y − Xβ` column by column.
pub fn axpy_dot2(a: &[f64], bh: f64, bl: f64, s: &mut [f64], c: &mut [f64]) {
    debug_assert!(s.len() == a.len() && c.len() == a.len());
    for ((si, ci), &x) in s.iter_mut().zip(c.iter_mut()).zip(a) {
        let (p, pe) = two_prod(x, bh);
        let (t, te) = two_sum(*si, p);
        *si = t;
        *ci += (pe + te) + x * bl;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_sum_and_two_prod_are_exact() {
        // 1 + 2^-60 is not representable; TwoSum keeps the lost part exactly
        // (common practice: the defining property of TwoSum).
        let tiny = 2f64.powi(-60);
        let (s, e) = two_sum(1.0, tiny);
        assert_eq!(s, 1.0);
        assert_eq!(e, tiny);
        // (1 + 2^-30)² = 1 + 2^-29 + 2^-60: the 2^-60 lands in the error term.
        let a = 1.0 + 2f64.powi(-30);
        let (p, e) = two_prod(a, a);
        assert_eq!(p, 1.0 + 2f64.powi(-29));
        assert_eq!(e, 2f64.powi(-60));
    }

    #[test]
    fn split_product_agrees_with_fused_multiply_add() {
        // Both TwoProd forms are exact, so they must agree bit for bit with
        // fma (common practice: the defining property), including operands
        // beyond the splitting limit.
        let vals = [0.1, -3.7e-5, 12345.678901, 1.0 / 3.0, 6.02e23, -2.5e-200, 1e295, 7e300];
        for &a in &vals {
            for &b in &vals {
                let (p, e) = two_prod(a, b);
                if !(a * b).is_finite() || (a * b).abs() < 1e-280 {
                    continue;
                }
                assert_eq!(p, a * b);
                assert_eq!(e, a.mul_add(b, -p), "{a} * {b}");
            }
        }
    }

    #[test]
    fn division_and_sqrt_reach_double_double_accuracy() {
        // 1/3 · 3 = 1 to about 2^-104 (common practice).
        let third = Dd::ONE / Dd::new(3.0);
        let back = third * Dd::new(3.0) - Dd::ONE;
        assert!(back.to_f64().abs() < 1e-31, "{back:?}");
        // sqrt(2)² = 2 to about 2^-104.
        let r = Dd::new(2.0).sqrt();
        let err = r * r - Dd::new(2.0);
        assert!(err.to_f64().abs() < 1e-31, "{err:?}");
        // sqrt(2) = 1.41421356237309504880168872420969807856967 (from memory,
        // a classical constant): check the low part against the digits.
        let tail = r - Dd::new(std::f64::consts::SQRT_2);
        assert!((tail.to_f64() - (-9.667293313452913e-17)).abs() < 1e-31, "{tail:?}");
    }

    #[test]
    fn dot2_recovers_cancelled_sum() {
        // Σ = 1e16 + 1 − 1e16 = 1: plain summation gives 0 (common practice).
        let mut acc = Dot2::new();
        acc.add(1e16);
        acc.add(1.0);
        acc.add(-1e16);
        assert_eq!(acc.value().to_f64(), 1.0);
        let plain = 1e16 + 1.0 - 1e16;
        assert_eq!(plain, 0.0);
    }
}
