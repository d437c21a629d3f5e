//! Stack loss (Brownlee 1965) through the whole tool against the statsmodels
//! 0.15.0 OLS figures quoted in ../shared/reference/datasets/README.md, to 9
//! significant digits. The data file tests/data/stackloss.csv is the
//! statsmodels package's copy (public domain).

mod common;

use common::data::{close, stackloss};
use common::run::{run_to, scratch};
use common::{output, workbooks};

#[test]
fn stack_loss_matches_statsmodels_to_nine_digits() {
    let cols = stackloss();
    let dir = scratch("stackloss");
    let input = dir.join("stackloss.xlsx");
    let opt: Vec<Vec<Option<f64>>> = cols.iter().map(|c| c.iter().map(|v| Some(*v)).collect()).collect();
    workbooks::write_table(
        &input,
        "Plant",
        &["STACKLOSS", "AIRFLOW", "WATERTEMP", "ACIDCONC"],
        &opt,
        &[(1, 6, "#linear(STACKLOSS, AIRFLOW + WATERTEMP + ACIDCONC, name=stack)")],
    );
    let out = dir.join("out.xlsx");
    let s = run_to(&input, &out);
    assert!(!s.any_failed(), "{:?}", s.problems);
    let coefs = output::coefficients(&out, "stack");
    // statsmodels 0.15.0, datasets/README.md table "Stack loss OLS figures".
    let want = [
        ("Intercept", -39.91967442, 11.89599685, -3.355723351),
        ("AIRFLOW", 0.7156402005, 0.1348581854, 5.306613007),
        ("WATERTEMP", 1.295286124, 0.3680242653, 3.519567177),
        ("ACIDCONC", -0.1521225191, 0.1562940432, -0.9733097691),
    ];
    assert_eq!(coefs.len(), 4);
    for (c, (term, b, se, t)) in coefs.iter().zip(want) {
        assert_eq!(c.term, term);
        close(c.estimate.unwrap(), b, &format!("{term} estimate"));
        close(c.std_error.unwrap(), se, &format!("{term} standard error"));
        close(c.t.unwrap(), t, &format!("{term} t"));
    }
    let stat = |label: &str| output::statistic(&out, "stack", label).unwrap_or_else(|| panic!("no {label}"));
    close(stat("R²"), 0.9135769045, "R²");
    close(stat("Adjusted R²"), 0.8983257700, "adjusted R²");
    close(stat("F statistic"), 59.90222590, "F");
    close(stat("p-value of F"), 3.016327243e-09, "p of F");
    close(stat("Residual standard error"), 3.243363918, "residual standard error");
    close(output::anova(&out, "stack", "Left in the residuals", "Sum of squares").expect("the grid"), 178.8299616, "SSE");
    close(stat("Log-likelihood"), -52.28779550, "log-likelihood");
    close(stat("AIC"), 112.5755910, "AIC");
    close(stat("BIC"), 116.7536808, "BIC");
    // Residual checks, statsmodels 0.15.0 (durbin_watson, het_breuschpagan
    // with robust=True and robust=False, jarque_bera), same README table.
    close(stat("Durbin–Watson (no correlation = 2)"), 1.485131034, "Durbin–Watson");
    close(stat("Breusch–Pagan (Koenker, studentized)"), 4.890367744, "Breusch–Pagan, Koenker");
    close(stat("p-value of Breusch–Pagan (Koenker)"), 0.1800032435, "p of Breusch–Pagan, Koenker");
    close(stat("Breusch–Pagan (original)"), 5.152993099, "Breusch–Pagan, original");
    close(stat("p-value of Breusch–Pagan (original)"), 0.1609309668, "p of Breusch–Pagan, original");
    assert_eq!(stat("Degrees of freedom of Breusch–Pagan"), 3.0, "3 auxiliary regressors (README)");
    close(stat("Jarque–Bera"), 0.1402405728, "Jarque–Bera");
    close(stat("p-value of Jarque–Bera"), 0.9322816724, "p of Jarque–Bera");
    close(stat("Skewness of residuals (symmetric = 0)"), -0.1928335246, "skewness");
    close(stat("Kurtosis of residuals (normal = 3)"), 3.107405156, "kurtosis");
    // Durbin–Watson 1.485 is below the warning band's 1.5 (our rule of
    // thumb), and row 21 (sheet row 22 under the header) is the one with
    // the largest Cook's distance in these data (statsmodels 0.15.0,
    // tests/data/statsmodels_figures.json: 0.69).
    let fits = output::table(&out, "Fits");
    let msg = fits.iter().find(|r| output::text(&r[0]) == Some("stack")).and_then(|r| r.get(8)).and_then(output::text).unwrap_or("").to_string();
    assert!(msg.contains("correlated in row order") && msg.contains("1.485"), "{msg}");
    assert!(msg.contains("row 22 of Plant has a large influence"), "{msg}");
    // Influence: the largest leverage (data row 17), Cook's distance and
    // studentized residual (both data row 21) with their sheet rows (the
    // header is sheet row 1), statsmodels 0.15.0 OLSInfluence values from
    // tests/data/statsmodels_figures.json; and one row above each rule of
    // thumb (2p/n, 4/n, |t| > 3; counted from the same file's figures).
    let row_of = |label: &str| {
        let (v, at) = output::statistic_at(&out, "stack", label).unwrap_or_else(|| panic!("no {label}"));
        (v, at.unwrap_or_default())
    };
    let (lev, at) = row_of("Largest leverage");
    close(lev, 0.41212349785785984, "largest leverage");
    assert_eq!(at, "row 18 of Plant");
    let (cook, at) = row_of("Largest Cook's distance");
    close(cook, 0.6919999163395193, "largest Cook's distance");
    assert_eq!(at, "row 22 of Plant");
    let (t, at) = row_of("Largest externally studentized residual (by size)");
    close(t, -3.330493319328064, "largest studentized residual");
    assert_eq!(at, "row 22 of Plant");
    for label in ["Rows with leverage above 2p/n", "Rows with Cook's distance above 4/n", "Rows with |externally studentized residual| above 3"] {
        assert_eq!(stat(label), 1.0, "{label}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}
