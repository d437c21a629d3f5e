//! Tests of the least squares driver against textbook identities and the
//! statsmodels stack loss figures. The NIST StRD linear datasets are checked
//! against the numeric layer in `tests/nist_numeric.rs`, which shares the
//! NIST file reader of the integration tests.

use super::*;

fn fit_cols(cols: &[Vec<f64>], y: &[f64], w: Option<&[f64]>, has_intercept: bool) -> LsFit {
    let n = y.len();
    let x: Vec<f64> = cols.iter().flat_map(|c| c.iter().cloned()).collect();
    let prob = LsProblem { x: &x, n, p: cols.len(), y, weights: w, has_intercept };
    least_squares(&prob).expect("test problem is well posed")
}

fn rel(a: f64, b: f64) -> f64 {
    if b == 0.0 {
        a.abs()
    } else {
        ((a - b) / b).abs()
    }
}

// ---------------------------------------------------------------------------
// Straight line: textbook identities (common practice), invented data
// (greenhouse bays: light hours → yield).

#[test]
fn straight_line_identities() {
    let light = [6.0, 7.5, 8.0, 9.25, 10.0, 11.5, 12.0, 13.0];
    let yield_kg = [3.1, 3.9, 4.0, 4.8, 5.1, 6.0, 5.9, 6.8];
    let n = light.len() as f64;
    let mx = light.iter().sum::<f64>() / n;
    let my = yield_kg.iter().sum::<f64>() / n;
    let sxx: f64 = light.iter().map(|x| (x - mx) * (x - mx)).sum();
    let syy: f64 = yield_kg.iter().map(|y| (y - my) * (y - my)).sum();
    let sxy: f64 = light.iter().zip(&yield_kg).map(|(x, y)| (x - mx) * (y - my)).sum();
    let r = sxy / (sxx * syy).sqrt();
    let (sx, sy) = ((sxx / (n - 1.0)).sqrt(), (syy / (n - 1.0)).sqrt());

    let fit = fit_cols(&[vec![1.0; 8], light.to_vec()], &yield_kg, None, true);
    let slope = r * sy / sx;
    let intercept = my - slope * mx;
    assert!(rel(fit.coefficients[1], slope) < 1e-13, "slope = r·s_y/s_x");
    assert!(rel(fit.coefficients[0], intercept) < 1e-13, "intercept = ȳ − b·x̄");
    assert!(rel(fit.r_squared, 1.0 - fit.sse / fit.sst) < 1e-14, "R² = 1 − SSE/SST");
    assert!(rel(fit.r_squared, r * r) < 1e-13, "R² = r² for one predictor");
    assert!(rel(fit.sst, syy) < 1e-13);
    // se(slope) = s/√Sxx (textbook, e.g. Draper & Smith §1.4).
    assert!(rel(fit.std_errors[1], fit.sigma / sxx.sqrt()) < 1e-13);
    // Leverage of a straight line: 1/n + (x − x̄)²/Sxx (textbook).
    for (i, x) in light.iter().enumerate() {
        assert!(rel(fit.leverage[i], 1.0 / n + (x - mx) * (x - mx) / sxx) < 1e-13);
    }
    // Residuals sum to zero with an intercept and are y − ŷ.
    let rs: f64 = fit.residuals.iter().sum();
    assert!(rs.abs() < 1e-13);
    for ((e, y), f) in fit.residuals.iter().zip(&yield_kg).zip(&fit.fitted) {
        assert!((e - (y - f)).abs() < 1e-15);
    }
    assert_eq!(fit.rank, 2);
    assert_eq!(fit.df_model, 1.0);
    assert_eq!(fit.df_resid, 6.0);
}

// ---------------------------------------------------------------------------
// Stack loss (Brownlee 1965), figures computed with statsmodels 0.15.0 as
// listed in /work/shared/reference/datasets/README.md.
// Data: tests/data/stackloss.csv, a copy of statsmodels 0.15.0
// `statsmodels/datasets/stackloss/stackloss.csv` (public domain).

const STACKLOSS_CSV: &str = include_str!("../../tests/data/stackloss.csv");

fn stackloss() -> (Vec<Vec<f64>>, Vec<f64>) {
    let mut cols = vec![Vec::new(); 4];
    let mut y = Vec::new();
    for line in STACKLOSS_CSV.lines().skip(1) {
        if line.trim().is_empty() {
            continue;
        }
        let v: Vec<f64> = line.split(',').map(|t| t.trim().parse().expect("numeric CSV cell")).collect();
        y.push(v[0]);
        cols[0].push(1.0);
        cols[1].push(v[1]);
        cols[2].push(v[2]);
        cols[3].push(v[3]);
    }
    (cols, y)
}

#[test]
fn stackloss_matches_statsmodels() {
    let (cols, y) = stackloss();
    assert_eq!(y.len(), 21);
    let fit = fit_cols(&cols, &y, None, true);
    // statsmodels 0.15.0 OLS, ten significant digits; checked here to nine.
    let coef = [-39.91967442, 0.7156402005, 1.295286124, -0.1521225191];
    let se = [11.89599685, 0.1348581854, 0.3680242653, 0.1562940432];
    let t = [-3.355723351, 5.306613007, 3.519567177, -0.9733097691];
    let tab = coefficient_table(&fit, 0.95);
    for j in 0..4 {
        assert!(rel(fit.coefficients[j], coef[j]) < 1e-9, "coef {j}: {}", fit.coefficients[j]);
        assert!(rel(fit.std_errors[j], se[j]) < 1e-9, "se {j}: {}", fit.std_errors[j]);
        assert!(rel(tab[j].t, t[j]) < 1e-9, "t {j}: {}", tab[j].t);
    }
    assert!(rel(fit.r_squared, 0.9135769045) < 1e-9);
    assert!(rel(fit.adj_r_squared, 0.8983257700) < 1e-9);
    assert!(rel(fit.f_statistic, 59.90222590) < 1e-9);
    assert!(rel(fit.f_p_value, 3.016327243e-09) < 1e-9, "{}", fit.f_p_value);
    assert!(rel(fit.sigma, 3.243363918) < 1e-9);
    assert!(rel(fit.sse, 178.8299616) < 1e-9);
    assert!(rel(fit.log_likelihood, -52.28779550) < 1e-9);
    assert!(rel(fit.aic, 112.5755910) < 1e-9);
    assert!(rel(fit.bic, 116.7536808) < 1e-9);
    assert_eq!((fit.df_model, fit.df_resid), (3.0, 17.0));
    // Interval half-width = t_{0.975,17}·se; t_{0.975,17} = 2.10982 (Student
    // t table, five significant digits, e.g. Draper & Smith table A2).
    let half = (tab[1].upper - tab[1].lower) / 2.0;
    assert!(rel(half / fit.std_errors[1], 2.10982) < 5e-6);
    // p-values are two-sided tails of t on 17 df.
    for row in &tab {
        assert!(rel(row.p_value, 2.0 * t_sf(row.t.abs(), 17.0)) < 1e-15);
    }
}

#[test]
fn leverage_and_cooks_distance_match_their_definitions() {
    let (cols, y) = stackloss();
    let fit = fit_cols(&cols, &y, None, true);
    let n = y.len();
    let p = 4;
    // Hat diagonal from an explicit inverse, h_i = x_iᵀ(XᵀX)⁻¹x_i
    // (definition; common practice), computed independently with nalgebra.
    let xm = nalgebra::DMatrix::from_fn(n, p, |i, j| cols[j][i]);
    let xtx_inv = (xm.transpose() * &xm).try_inverse().expect("stack loss design has full rank");
    let mut sum_h = 0.0;
    for i in 0..n {
        let xi = xm.row(i);
        let h = (xi * &xtx_inv * xi.transpose())[(0, 0)];
        assert!((fit.leverage[i] - h).abs() < 1e-12, "row {i}: {} vs {h}", fit.leverage[i]);
        sum_h += fit.leverage[i];
    }
    // Trace of the hat matrix is the rank (textbook).
    assert!((sum_h - 4.0).abs() < 1e-12);
    // Cook's distance by its leave-one-out definition (Cook 1977, eq. 5):
    // D_i = (β̂ − β̂₍ᵢ₎)ᵀ XᵀX (β̂ − β̂₍ᵢ₎) / (k s²).
    let cook = cooks_distance(&fit);
    let stud = standardized_residuals(&fit);
    let xtx = xm.transpose() * &xm;
    for i in 0..n {
        let keep: Vec<usize> = (0..n).filter(|&r| r != i).collect();
        let cols_i: Vec<Vec<f64>> = cols.iter().map(|c| keep.iter().map(|&r| c[r]).collect()).collect();
        let y_i: Vec<f64> = keep.iter().map(|&r| y[r]).collect();
        let fi = fit_cols(&cols_i, &y_i, None, true);
        let db = nalgebra::DVector::from_fn(p, |j, _| fit.coefficients[j] - fi.coefficients[j]);
        let d = (db.transpose() * &xtx * &db)[(0, 0)] / (4.0 * fit.sigma * fit.sigma);
        assert!(rel(cook[i], d) < 1e-9, "row {i}: {} vs {d}", cook[i]);
        // Internally studentized residual = e_i / (s √(1 − h_i)) (definition).
        let r = fit.residuals[i] / (fit.sigma * (1.0 - fit.leverage[i]).sqrt());
        assert!(rel(stud[i], r) < 1e-14);
    }
}

// ---------------------------------------------------------------------------
// Aliased columns (invented data).

fn invented_predictors(n: usize) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let x1: Vec<f64> = (0..n).map(|i| ((i * 7919) % 101) as f64 / 10.0 + 2.0).collect();
    let x2: Vec<f64> = (0..n).map(|i| ((i * 104729) % 37) as f64 * 0.25 - 3.0).collect();
    let y: Vec<f64> =
        (0..n).map(|i| 1.5 + 0.8 * x1[i] - 1.1 * x2[i] + (((i * 31) % 17) as f64 - 8.0) / 20.0).collect();
    (x1, x2, y)
}

#[test]
fn exactly_collinear_column_is_aliased_and_named() {
    let n = 40;
    let (x1, x2, y) = invented_predictors(n);
    let x3: Vec<f64> = x1.iter().zip(&x2).map(|(a, b)| a + b).collect();
    let fit = fit_cols(&[vec![1.0; n], x1.clone(), x2.clone(), x3.clone()], &y, None, true);
    assert_eq!(fit.rank, 3);
    assert_eq!(fit.aliased, vec![false, false, false, true]);
    assert!(fit.coefficients[3].is_nan() && fit.std_errors[3].is_nan());
    let a = &fit.alias_of[3];
    assert_eq!(a.len(), 2, "{a:?}");
    assert_eq!(a[0].0, 1);
    assert_eq!(a[1].0, 2);
    assert!((a[0].1 - 1.0).abs() < 1e-14 && (a[1].1 - 1.0).abs() < 1e-14, "{a:?}");
    assert!(fit.covariance[3 * 4 + 3].is_nan() && fit.covariance[3 * 4 + 1].is_nan());
    // The kept columns reproduce the fit without x3.
    let reduced = fit_cols(&[vec![1.0; n], x1.clone(), x2.clone()], &y, None, true);
    for j in 0..3 {
        assert!(rel(fit.coefficients[j], reduced.coefficients[j]) < 1e-13);
        assert!(rel(fit.std_errors[j], reduced.std_errors[j]) < 1e-12);
    }
    assert!(rel(fit.sse, reduced.sse) < 1e-13);
    assert_eq!(fit.df_resid, reduced.df_resid);

    // Put the sum first: the later column (x2) is then the aliased one.
    let fit2 = fit_cols(&[vec![1.0; n], x3.clone(), x1.clone(), x2.clone()], &y, None, true);
    assert_eq!(fit2.aliased, vec![false, false, false, true]);
    let a2 = &fit2.alias_of[3];
    assert_eq!(a2.len(), 2, "{a2:?}");
    assert_eq!((a2[0].0, a2[1].0), (1, 2));
    assert!((a2[0].1 - 1.0).abs() < 1e-14 && (a2[1].1 + 1.0).abs() < 1e-14, "{a2:?}");

    // A scaled duplicate and a zero column.
    let dup: Vec<f64> = x1.iter().map(|v| -2.5 * v).collect();
    let fit3 = fit_cols(&[vec![1.0; n], x1.clone(), vec![0.0; n], dup], &y, None, true);
    assert_eq!(fit3.aliased, vec![false, false, true, true]);
    assert!(fit3.alias_of[2].is_empty());
    assert_eq!(fit3.alias_of[3].len(), 1);
    assert_eq!(fit3.alias_of[3][0].0, 1);
    assert!((fit3.alias_of[3][0].1 + 2.5).abs() < 1e-14);

    // Dummy trap: intercept plus a full set of indicators.
    let g1: Vec<f64> = (0..n).map(|i| if i % 3 == 0 { 1.0 } else { 0.0 }).collect();
    let g2: Vec<f64> = (0..n).map(|i| if i % 3 == 1 { 1.0 } else { 0.0 }).collect();
    let g3: Vec<f64> = (0..n).map(|i| if i % 3 == 2 { 1.0 } else { 0.0 }).collect();
    let fit4 = fit_cols(&[vec![1.0; n], g1, g2, g3], &y, None, true);
    assert_eq!(fit4.aliased, vec![false, false, false, true]);
    let a4 = &fit4.alias_of[3];
    assert_eq!(a4.iter().map(|e| e.0).collect::<Vec<_>>(), vec![0, 1, 2]);
    assert!((a4[0].1 - 1.0).abs() < 1e-14 && (a4[1].1 + 1.0).abs() < 1e-14 && (a4[2].1 + 1.0).abs() < 1e-14);
}

#[test]
fn nearly_collinear_but_identifiable_columns_are_kept() {
    // x3 = x1 + x2 + 1e-6·(small pattern): condition ~1e7, well inside the
    // tolerance, so all columns are kept.
    let n = 30;
    let (x1, x2, y) = invented_predictors(n);
    let x3: Vec<f64> = (0..n).map(|i| x1[i] + x2[i] + 1e-6 * ((i % 5) as f64 - 2.0)).collect();
    let fit = fit_cols(&[vec![1.0; n], x1, x2, x3], &y, None, true);
    assert_eq!(fit.rank, 4);
    assert!(fit.aliased.iter().all(|a| !a));
    assert!(fit.condition_number > 1e5 && fit.condition_number < 1e9, "{}", fit.condition_number);
}

#[test]
fn ill_conditioned_design_matches_exact_rational_solution() {
    // Rows (1, 1), (1, 1+δ), (1, 1−δ) with δ = 2^-27 (all exact in double),
    // y = (1, 2, ½). By hand (exact rational algebra, common practice):
    // XᵀX = [[3, 3], [3, 3+2δ²]], det = 6δ², so
    // (XᵀX)⁻¹ = [[(3+2δ²), −3], [−3, 3]] / (6δ²);
    // with S = Σy = 7/2 and D = y₂ − y₃ = 3/2: β₂ = D/(2δ), β₁ = S/3 − D/(2δ);
    // residuals (−1/6, 1/12, 1/12), SSE = 1/24, s² = 1/24 on 1 df.
    // The scaled condition number is ~1e8, beyond what the Gram-residual
    // covariance refinement handles, so the augmented-system path is used.
    let delta = 2f64.powi(-27);
    let x2 = vec![1.0, 1.0 + delta, 1.0 - delta];
    let y = [1.0, 2.0, 0.5];
    let fit = fit_cols(&[vec![1.0; 3], x2], &y, None, true);
    assert_eq!(fit.rank, 2);
    assert!(fit.condition_number > 1e7, "{}", fit.condition_number);
    assert_eq!(fit.refinement.covariance_method, CovarianceMethod::AugmentedColumns);
    let b2 = 0.75 / delta;
    let b1 = 3.5 / 3.0 - b2;
    assert!(rel(fit.coefficients[1], b2) < 1e-15, "{}", fit.coefficients[1]);
    assert!(rel(fit.coefficients[0], b1) < 1e-15, "{} vs {b1}", fit.coefficients[0]);
    assert!(rel(fit.sse, 1.0 / 24.0) < 1e-15, "{}", fit.sse);
    for (e, want) in fit.residuals.iter().zip([-1.0 / 6.0, 1.0 / 12.0, 1.0 / 12.0]) {
        assert!(rel(*e, want) < 1e-14, "{e} vs {want}");
    }
    let s2 = 1.0 / 24.0;
    let d2 = 6.0 * delta * delta;
    let c11 = s2 * (3.0 + 2.0 * delta * delta) / d2;
    let c22 = s2 * 3.0 / d2;
    let c12 = -s2 * 3.0 / d2;
    assert!(rel(fit.covariance[0], c11) < 1e-14, "{} vs {c11}", fit.covariance[0]);
    assert!(rel(fit.covariance[3], c22) < 1e-14);
    assert!(rel(fit.covariance[1], c12) < 1e-14 && rel(fit.covariance[2], c12) < 1e-14);
    assert!(rel(fit.std_errors[1], c22.sqrt()) < 1e-14);
}

// ---------------------------------------------------------------------------
// Weights.

#[test]
fn weight_two_equals_a_duplicated_row() {
    let n = 25;
    let (x1, x2, y) = invented_predictors(n);
    let w: Vec<f64> = (0..n).map(|i| if i % 4 == 0 { 2.0 } else { 1.0 }).collect();
    let wfit = fit_cols(&[vec![1.0; n], x1.clone(), x2.clone()], &y, Some(&w), true);
    // Duplicate the weight-2 rows.
    let mut d1 = Vec::new();
    let mut d2 = Vec::new();
    let mut dy = Vec::new();
    for i in 0..n {
        let times = if i % 4 == 0 { 2 } else { 1 };
        for _ in 0..times {
            d1.push(x1[i]);
            d2.push(x2[i]);
            dy.push(y[i]);
        }
    }
    let ofit = fit_cols(&[vec![1.0; dy.len()], d1, d2], &dy, None, true);
    for j in 0..3 {
        assert!(rel(wfit.coefficients[j], ofit.coefficients[j]) < 1e-13, "coef {j}");
    }
    // Sums of squares agree too (weighted SSE = SSE over duplicated rows).
    assert!(rel(wfit.sse, ofit.sse) < 1e-13);
    assert!(rel(wfit.sst, ofit.sst) < 1e-13);
    assert!(rel(wfit.r_squared, ofit.r_squared) < 1e-13);
}

#[test]
fn weighted_fit_equals_ols_on_rescaled_rows() {
    // WLS = OLS of √w·y on √w·X (textbook, e.g. Draper & Smith §9.2), with an
    // uncentred comparison (no intercept flag).
    let n = 20;
    let (x1, x2, y) = invented_predictors(n);
    let w: Vec<f64> = (0..n).map(|i| 0.5 + (i % 7) as f64 * 0.3).collect();
    let wfit = fit_cols(&[vec![1.0; n], x1.clone(), x2.clone()], &y, Some(&w), false);
    let s: Vec<f64> = w.iter().map(|v| v.sqrt()).collect();
    let sc = |c: &[f64]| -> Vec<f64> { c.iter().zip(&s).map(|(a, b)| a * b).collect() };
    let ofit = fit_cols(&[s.clone(), sc(&x1), sc(&x2)], &sc(&y), None, false);
    for j in 0..3 {
        assert!(rel(wfit.coefficients[j], ofit.coefficients[j]) < 1e-12);
        assert!(rel(wfit.std_errors[j], ofit.std_errors[j]) < 1e-12);
    }
    assert!(rel(wfit.sse, ofit.sse) < 1e-12);
    assert!(rel(wfit.r_squared, ofit.r_squared) < 1e-12);
    for i in 0..n {
        assert!((wfit.leverage[i] - ofit.leverage[i]).abs() < 1e-13);
    }
    // Log-likelihood differs by ½Σ ln w (statsmodels WLS convention).
    let half_sum_ln_w: f64 = 0.5 * w.iter().map(|v| v.ln()).sum::<f64>();
    assert!((wfit.log_likelihood - (ofit.log_likelihood + half_sum_ln_w)).abs() < 1e-10);
    // Studentized residuals use √w·e.
    let sw = standardized_residuals(&wfit);
    let so = standardized_residuals(&ofit);
    for i in 0..n {
        assert!((sw[i] - so[i]).abs() < 1e-11);
    }
}

// ---------------------------------------------------------------------------
// Tails through a fit.

#[test]
fn large_t_gives_tiny_positive_p() {
    // y = 2 + 3x + small pattern: t of the slope is in the thousands and
    // 1 − cdf would be exactly 0; the survival function is not.
    let n = 12;
    let x: Vec<f64> = (0..n).map(|i| i as f64).collect();
    let y: Vec<f64> = (0..n).map(|i| 2.0 + 3.0 * i as f64 + if i % 2 == 0 { 1e-3 } else { -1e-3 }).collect();
    let fit = fit_cols(&[vec![1.0; n], x], &y, None, true);
    let tab = coefficient_table(&fit, 0.95);
    assert!(tab[1].t > 1000.0);
    assert!(tab[1].p_value > 0.0 && tab[1].p_value < 1e-30, "{}", tab[1].p_value);
    assert!(fit.f_p_value > 0.0 && fit.f_p_value < 1e-30, "{}", fit.f_p_value);
    // F = t² for a single slope (textbook) and their p-values agree.
    assert!(rel(fit.f_statistic, tab[1].t * tab[1].t) < 1e-12);
    assert!(rel(fit.f_p_value, tab[1].p_value) < 1e-9, "{} vs {}", fit.f_p_value, tab[1].p_value);
}

#[test]
fn two_sided_p_for_t60_on_10_df_matches_series() {
    // Independent check: 2·P(T > t) = I_x(ν/2, ½) with x = ν/(ν + t²)
    // (A&S 26.7.1, 26.5.27); for ν = 10 the incomplete beta is summed from
    // its power series I_x(a,b) = x^a/B(a,b) · Σ (1−b)_k/k! · x^k/(a+k)
    // (A&S 26.5.4 form), B(5, ½) = 256/315 exactly.
    let (t, nu) = (60.0f64, 10.0f64);
    let x = nu / (nu + t * t);
    let b = 0.5;
    let mut term = 1.0; // (1−b)_k / k!
    let mut sum = 0.0;
    for k in 0..60 {
        sum += term * x.powi(k) / (5.0 + k as f64);
        term *= (k as f64 + 1.0 - b) / (k as f64 + 1.0);
    }
    let series = x.powi(5) / (256.0 / 315.0) * sum;
    let p = 2.0 * t_sf(t, nu);
    assert!(rel(p, series) < 1e-12, "{p} vs {series}");
    assert!(p > 1e-14 && p < 1e-13, "{p}");
}

// ---------------------------------------------------------------------------
// Errors and edge cases.

#[test]
fn problems_are_reported_not_panicked() {
    let y = [1.0, 2.0, 3.0];
    let x = [1.0, 1.0, 1.0, 0.0, 1.0, 2.0];
    let ok = LsProblem { x: &x, n: 3, p: 2, y: &y, weights: None, has_intercept: true };
    assert!(least_squares(&ok).is_ok());
    let e = least_squares(&LsProblem { p: 0, x: &[], ..ok }).unwrap_err();
    assert_eq!(e, LsError::NoColumns);
    let x4 = [1.0; 12];
    let e = least_squares(&LsProblem { x: &x4, p: 4, ..ok }).unwrap_err();
    assert_eq!(e, LsError::TooFewRows { n: 3, p: 4 });
    assert!(e.to_string().contains("too few rows"));
    let ybad = [1.0, f64::NAN, 3.0];
    assert_eq!(least_squares(&LsProblem { y: &ybad, ..ok }).unwrap_err(), LsError::NonFinite { row: 1 });
    let xbad = [1.0, 1.0, 1.0, f64::INFINITY, 1.0, 2.0];
    assert_eq!(least_squares(&LsProblem { x: &xbad, ..ok }).unwrap_err(), LsError::NonFinite { row: 0 });
    let w = [1.0, 0.0, 1.0];
    let e = least_squares(&LsProblem { weights: Some(&w), ..ok }).unwrap_err();
    assert_eq!(e, LsError::BadWeight { row: 1 });
    assert!(e.to_string().contains("row 2"));
    let zeros = [0.0; 6];
    assert_eq!(least_squares(&LsProblem { x: &zeros, ..ok }).unwrap_err(), LsError::ZeroDesign);
    assert!(matches!(
        least_squares(&LsProblem { x: &x[..5], ..ok }).unwrap_err(),
        LsError::DimensionMismatch { .. }
    ));
}

#[test]
fn exact_fit_and_saturated_fit_do_not_panic() {
    // Exact straight line: SSE 0, R² 1, sigma 0, F infinite.
    let x: Vec<f64> = (0..6).map(|i| i as f64).collect();
    let y: Vec<f64> = x.iter().map(|v| 4.0 - 0.5 * v).collect();
    let fit = fit_cols(&[vec![1.0; 6], x.clone()], &y, None, true);
    assert_eq!(fit.coefficients, vec![4.0, -0.5]);
    assert_eq!(fit.sse, 0.0);
    assert_eq!(fit.r_squared, 1.0);
    assert_eq!(fit.sigma, 0.0);
    assert!(fit.f_statistic.is_infinite());
    assert_eq!(fit.f_p_value, 0.0);
    let _ = coefficient_table(&fit, 0.95);
    assert!(standardized_residuals(&fit).iter().all(|v| v.is_nan()));
    // As many rows as columns: no residual df; statistics are NaN.
    let fit2 = fit_cols(&[vec![1.0; 2], vec![0.0, 1.0]], &[1.0, 3.0], None, true);
    assert_eq!(fit2.df_resid, 0.0);
    assert!(fit2.sigma.is_nan() && fit2.std_errors[0].is_nan());
    assert!((fit2.coefficients[1] - 2.0).abs() < 1e-15);
    let tab = coefficient_table(&fit2, 0.95);
    assert!(tab[1].p_value.is_nan());
}

// ---------------------------------------------------------------------------
// Scale: 1,000,000 rows × 12 columns (run with `--ignored`; reports timing,
// asserts only that the fit is sane).

/// CPU seconds (user + system) of this process so far, from
/// /proc/self/stat (Linux; clock ticks of 1/100 s), or NaN elsewhere. Wall
/// time on a shared machine mostly measures the neighbours.
fn cpu_seconds() -> f64 {
    let Ok(stat) = std::fs::read_to_string("/proc/self/stat") else { return f64::NAN };
    // Fields after the parenthesised command name; utime and stime are the
    // 14th and 15th fields overall.
    let Some(rest) = stat.rsplit(')').next() else { return f64::NAN };
    let f: Vec<&str> = rest.split_whitespace().collect();
    let tick = |i: usize| f.get(i).and_then(|v| v.parse::<f64>().ok()).unwrap_or(f64::NAN);
    (tick(11) + tick(12)) / 100.0
}

#[test]
#[ignore]
fn large_fit_timing() {
    let n = 1_000_000;
    let p = 12;
    // Invented predictors from a linear congruential generator (Knuth's
    // MMIX constants), uniform on [0, 10).
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    let mut next = || {
        state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        (state >> 11) as f64 / (1u64 << 53) as f64 * 10.0
    };
    let mut x = vec![1.0; n * p];
    for v in x[n..].iter_mut() {
        *v = next();
    }
    let y: Vec<f64> = (0..n)
        .map(|i| (0..p).map(|j| x[j * n + i] * (j as f64 * 0.1 - 0.4)).sum::<f64>() + next() - 5.0)
        .collect();
    let prob = LsProblem { x: &x, n, p, y: &y, weights: None, has_intercept: true };
    let t0 = std::time::Instant::now();
    let c0 = cpu_seconds();
    let fit = least_squares(&prob).expect("well-posed invented problem");
    let el = t0.elapsed();
    println!(
        "n={n} p={p}: {:.3} s wall, {:.2} s CPU, rank {}, R² {:.6}, steps {}, cov {:?}/{}",
        el.as_secs_f64(),
        cpu_seconds() - c0,
        fit.rank,
        fit.r_squared,
        fit.refinement.solution_steps,
        fit.refinement.covariance_method,
        fit.refinement.covariance_steps
    );
    assert_eq!(fit.rank, p);
    let trace: f64 = fit.leverage.iter().sum();
    assert!((trace - p as f64).abs() < 1e-6, "trace of hat = rank: {trace}");
    // An exactly collinear 13th column (x₁ + x₂) is caught at this size.
    let mut x13 = x.clone();
    x13.extend((0..n).map(|i| x[n + i] + x[2 * n + i]));
    let (t2, c2) = (std::time::Instant::now(), cpu_seconds());
    let cfit = least_squares(&LsProblem { x: &x13, p: p + 1, ..prob }).expect("well-posed");
    println!(
        "with an aliased 13th column: {:.3} s wall, {:.2} s CPU, rank {}, alias_of {:?}",
        t2.elapsed().as_secs_f64(),
        cpu_seconds() - c2,
        cfit.rank,
        cfit.alias_of[p]
    );
    assert_eq!(cfit.rank, p);
    assert!(cfit.aliased[p]);
    assert_eq!(cfit.alias_of[p].iter().map(|e| e.0).collect::<Vec<_>>(), vec![1, 2]);
    drop(x13);
    let w: Vec<f64> = (0..n).map(|i| 1.0 + (i % 3) as f64).collect();
    let (t1, c1) = (std::time::Instant::now(), cpu_seconds());
    let wfit = least_squares(&LsProblem { weights: Some(&w), ..prob }).expect("well-posed");
    println!("weighted: {:.3} s wall, {:.2} s CPU, rank {}", t1.elapsed().as_secs_f64(), cpu_seconds() - c1, wfit.rank);
}
