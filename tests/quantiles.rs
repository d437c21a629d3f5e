//! t, F and chi-squared quantiles against the tables of the NIST/SEMATECH
//! e-Handbook of Statistical Methods, section 1.3.6.7 (1.3.6.7.2 Student's
//! t, 1.3.6.7.3 F, 1.3.6.7.4 chi-square), to the printed digits (three
//! decimals). The table values are written from memory (NIST/SEMATECH
//! e-Handbook 1.3.6.7.x), not copied from the pages; every one is also
//! checked against scipy.stats, whose values are in
//! tests/data/quantiles_scipy.tsv (produced by tests/scripts/quantiles_scipy.py,
//! scipy 1.17.1), to 1e-10 relative.

use plumb::numeric::{chi2_quantile, f_quantile, t_quantile};

const SCIPY: &str = include_str!("data/quantiles_scipy.tsv");

/// scipy's value for (distribution, lower-tail p, df1, df2).
fn scipy(dist: &str, p: f64, d1: f64, d2: f64) -> f64 {
    for line in SCIPY.lines().filter(|l| !l.starts_with('#')) {
        let f: Vec<&str> = line.split('\t').collect();
        let num = |i: usize| f[i].parse::<f64>().unwrap_or_else(|_| panic!("bad number in {line:?}"));
        if f[0] == dist && (num(1) - p).abs() < 1e-12 && num(2) == d1 && num(3) == d2 {
            return num(4);
        }
    }
    panic!("no scipy value for {dist} p={p} df=({d1}, {d2}); rerun tests/scripts/quantiles_scipy.py");
}

/// Checks a quantile against the table (to ±0.0005, the last printed
/// digit) and against scipy (1e-10 relative).
fn check(dist: &str, table: &str, ours: f64, printed: f64, p: f64, d1: f64, d2: f64) {
    let sp = scipy(dist, p, d1, d2);
    assert!(((ours - sp) / sp).abs() < 1e-10, "{dist} p={p} df=({d1},{d2}): ours {ours}, scipy {sp}");
    assert!((ours - printed).abs() <= 0.0005 + 1e-12, "{dist} p={p} df=({d1},{d2}): ours {ours}, {table} prints {printed}");
}

#[test]
fn student_t_upper_critical_values() {
    // NIST/SEMATECH e-Handbook 1.3.6.7.2, "Critical values of Student's t
    // distribution with ν degrees of freedom", upper-tail α = 0.10, 0.05,
    // 0.025, 0.01, 0.005, 0.001 — from memory (NIST/SEMATECH e-Handbook
    // 1.3.6.7.2). The ν = 1, α = 0.001 entry is left out: the value
    // remembered (318.313) and scipy's (318.309) disagree in the last digit.
    let alphas = [0.10, 0.05, 0.025, 0.01, 0.005, 0.001];
    let rows: [(f64, [f64; 6]); 7] = [
        (1.0, [3.078, 6.314, 12.706, 31.821, 63.657, f64::NAN]),
        (2.0, [1.886, 2.920, 4.303, 6.965, 9.925, 22.327]),
        (5.0, [1.476, 2.015, 2.571, 3.365, 4.032, 5.893]),
        (10.0, [1.372, 1.812, 2.228, 2.764, 3.169, 4.144]),
        (20.0, [1.325, 1.725, 2.086, 2.528, 2.845, 3.552]),
        (30.0, [1.310, 1.697, 2.042, 2.457, 2.750, 3.385]),
        (100.0, [1.290, 1.660, 1.984, 2.364, 2.626, 3.174]),
    ];
    for (df, vals) in rows {
        for (a, v) in alphas.iter().zip(vals) {
            if v.is_nan() {
                continue;
            }
            let p = 1.0 - a;
            check("t", "e-Handbook 1.3.6.7.2", t_quantile(p, df), v, p, df, 0.0);
        }
    }
}

#[test]
fn f_upper_critical_values() {
    // NIST/SEMATECH e-Handbook 1.3.6.7.3, "Upper critical values of the F
    // distribution" for α = 0.05 and α = 0.01 (ν₁ numerator, ν₂
    // denominator) — from memory (NIST/SEMATECH e-Handbook 1.3.6.7.3).
    let points: [(f64, f64, f64, f64); 13] = [
        (0.05, 1.0, 1.0, 161.448),
        (0.05, 2.0, 2.0, 19.000),
        (0.05, 3.0, 3.0, 9.277),
        (0.05, 4.0, 4.0, 6.388),
        (0.05, 5.0, 5.0, 5.050),
        (0.05, 10.0, 10.0, 2.978),
        (0.05, 1.0, 10.0, 4.965),
        (0.05, 2.0, 10.0, 4.103),
        (0.05, 1.0, 30.0, 4.171),
        (0.01, 1.0, 1.0, 4052.181),
        (0.01, 2.0, 2.0, 99.000),
        (0.01, 10.0, 10.0, 4.849),
        (0.01, 1.0, 10.0, 10.044),
    ];
    for (a, d1, d2, v) in points {
        let p = 1.0 - a;
        check("F", "e-Handbook 1.3.6.7.3", f_quantile(p, d1, d2), v, p, d1, d2);
    }
}

#[test]
fn chi_square_critical_values() {
    // NIST/SEMATECH e-Handbook 1.3.6.7.4, "Critical values of the
    // chi-square distribution with ν degrees of freedom": upper tail
    // α = 0.10, 0.05, 0.025, 0.01, 0.001, and lower tail for ν = 10 —
    // from memory (NIST/SEMATECH e-Handbook 1.3.6.7.4).
    let alphas = [0.10, 0.05, 0.025, 0.01, 0.001];
    let rows: [(f64, [f64; 5]); 7] = [
        (1.0, [2.706, 3.841, 5.024, 6.635, 10.828]),
        (2.0, [4.605, 5.991, 7.378, 9.210, 13.816]),
        (5.0, [9.236, 11.070, 12.833, 15.086, 20.515]),
        (10.0, [15.987, 18.307, 20.483, 23.209, 29.588]),
        (20.0, [28.412, 31.410, 34.170, 37.566, 45.315]),
        (30.0, [40.256, 43.773, 46.979, 50.892, 59.703]),
        (100.0, [118.498, 124.342, 129.561, 135.807, 149.449]),
    ];
    for (df, vals) in rows {
        for (a, v) in alphas.iter().zip(vals) {
            let p = 1.0 - a;
            check("chi2", "e-Handbook 1.3.6.7.4", chi2_quantile(p, df), v, p, df, 0.0);
        }
    }
    // Lower tail, ν = 10: P(X ≤ x) = 0.10, 0.05, 0.01.
    for (p, v) in [(0.10, 4.865), (0.05, 3.940), (0.01, 2.558)] {
        check("chi2", "e-Handbook 1.3.6.7.4 (lower tail)", chi2_quantile(p, 10.0), v, p, 10.0, 0.0);
    }
}

#[test]
fn quantiles_reject_bad_arguments() {
    // Common practice: invalid probabilities or degrees of freedom give NaN.
    assert!(f_quantile(1.5, 2.0, 3.0).is_nan());
    assert!(f_quantile(0.5, -1.0, 3.0).is_nan());
    assert!(chi2_quantile(f64::NAN, 3.0).is_nan());
    assert!(chi2_quantile(0.5, 0.0).is_nan());
    assert_eq!(chi2_quantile(0.0, 3.0), 0.0);
    assert_eq!(f_quantile(1.0, 3.0, 4.0), f64::INFINITY);
}
