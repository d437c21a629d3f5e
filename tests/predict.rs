//! `#predict`, `#compare` and the charts through the whole tool, on the
//! stack loss data (Brownlee 1965; tests/data/stackloss.csv, the statsmodels
//! package's copy), against statsmodels: tests/data/predict_figures.json,
//! written by tests/reference/predict_figures.py, records the versions
//! (statsmodels 0.15.0, scipy 1.17.1). Figures agree to 9 significant digits.

mod common;

// `close` allows an absolute difference where the figure is 0 (the middle
// normal quantile of the charts).
use common::data::{close, stackloss};
use common::output::{self, num, text};
use common::run::{run_to, scratch};
use common::workbooks::pinned_workbook;
use plumb::report::Status;
use serde_json::Value as Json;
use std::io::Read;
use std::path::{Path, PathBuf};

fn reference() -> Json {
    serde_json::from_str(include_str!("data/predict_figures.json")).expect("tests/data/predict_figures.json is JSON")
}

const HEADERS: [&str; 4] = ["STACKLOSS", "AIRFLOW", "WATERTEMP", "ACIDCONC"];

/// The stack loss table on sheet Plant with the requests in column G, and
/// the reference points on sheet Plan.
fn book(dir: &Path, requests: &[&str]) -> PathBuf {
    let path = dir.join("stackloss.xlsx");
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name("Plant").unwrap();
    for (j, (h, col)) in HEADERS.iter().zip(stackloss()).enumerate() {
        ws.write_string(0, j as u16, *h).unwrap();
        for (i, v) in col.iter().enumerate() {
            ws.write_number(i as u32 + 1, j as u16, *v).unwrap();
        }
    }
    for (i, r) in requests.iter().enumerate() {
        ws.write_string(i as u32 + 1, 6, *r).unwrap();
    }
    let plan = wb.add_worksheet();
    plan.set_name("Plan").unwrap();
    let points = reference()["predictions"].as_array().unwrap().iter().filter(|p| p["level"] == 0.95).map(|p| p["point"].clone()).collect::<Vec<_>>();
    for (j, h) in HEADERS[1..].iter().enumerate() {
        plan.write_string(0, j as u16, *h).unwrap();
        for (i, p) in points.iter().enumerate() {
            plan.write_number(i as u32 + 1, j as u16, p[*h].as_f64().unwrap()).unwrap();
        }
    }
    // The new AIRFLOW values of the polynomial's reference predictions.
    let poly = wb.add_worksheet();
    poly.set_name("PolyPlan").unwrap();
    poly.write_string(0, 0, "AIRFLOW").unwrap();
    let points = reference()["polynomial"]["predictions"].as_array().unwrap().iter().filter(|p| p["level"] == 0.95).map(|p| p["point"]["AIRFLOW"].as_f64().unwrap()).collect::<Vec<_>>();
    for (i, x) in points.iter().enumerate() {
        poly.write_number(i as u32 + 1, 0, *x).unwrap();
    }
    wb.save(&path).unwrap();
    path
}

const REQUESTS: [&str; 7] = [
    "#linear(STACKLOSS, AIRFLOW + WATERTEMP + ACIDCONC, name=full)",
    "#linear(STACKLOSS, AIRFLOW, name=air)",
    "#linear(STACKLOSS, AIRFLOW + WATERTEMP, name=airwater)",
    "#predict(full, rows=Plan!A1:C5)",
    "#predict(full, rows=Plan!A1:C5, confidence=0.90)",
    "#compare(air, airwater, full)",
    "#predict(full, AIRFLOW=60, WATERTEMP=20, ACIDCONC=85)",
];

/// The data rows of the prediction table titled by `request`.
fn prediction_rows(t: &[Vec<calamine::Data>], request: &str) -> Vec<Vec<calamine::Data>> {
    let title = format!("Predictions — {request}");
    let at = t.iter().position(|r| r.first().and_then(text) == Some(title.as_str())).unwrap_or_else(|| panic!("no table {title}"));
    t[at + 3..].iter().take_while(|r| r.first().and_then(num).is_some()).cloned().collect()
}

#[test]
fn predictions_and_intervals_match_statsmodels() {
    let d = scratch("predict-pi");
    let input = book(&d, &REQUESTS);
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    for r in &s.reports {
        assert_ne!(r.status, Status::Error, "{}: {:?}", r.text, r.messages);
    }
    // The fourth point (AIRFLOW 90) lies outside the data: a warning, not an error.
    assert_eq!(s.reports[3].status, Status::Warning, "{:?}", s.reports[3].messages);
    assert!(s.reports[3].messages[0].contains("AIRFLOW = 90 lies outside the data"), "{:?}", s.reports[3].messages);
    let t = output::table(&out, "Intervals");
    let refs = reference();
    for (req, level) in [(REQUESTS[3], 0.95), (REQUESTS[4], 0.90)] {
        let rows = prediction_rows(&t, req);
        let want: Vec<&Json> = refs["predictions"].as_array().unwrap().iter().filter(|p| p["level"].as_f64() == Some(level)).collect();
        assert_eq!(rows.len(), want.len());
        for (row, w) in rows.iter().zip(want) {
            // Columns: 3 inputs, predicted, confidence interval, prediction interval, standard error of the fitted value.
            for (j, h) in HEADERS[1..].iter().enumerate() {
                assert_eq!(num(&row[j]), w["point"][*h].as_f64());
            }
            let f = |c: usize| num(&row[c]).unwrap_or_else(|| panic!("no number in column {c}"));
            let what = format!("level {level} at {}", w["point"]);
            close(f(3), w["mean"].as_f64().unwrap(), &format!("{what}: predicted"));
            close(f(4), w["mean_ci_lower"].as_f64().unwrap(), &format!("{what}: confidence interval from"));
            close(f(5), w["mean_ci_upper"].as_f64().unwrap(), &format!("{what}: confidence interval to"));
            close(f(6), w["obs_ci_lower"].as_f64().unwrap(), &format!("{what}: prediction interval from"));
            close(f(7), w["obs_ci_upper"].as_f64().unwrap(), &format!("{what}: prediction interval to"));
            close(f(8), w["mean_se"].as_f64().unwrap(), &format!("{what}: standard error of the fitted value"));
        }
    }
    // The one-point request cell holds the predicted value as a number.
    let plant = output::table(&out, "Plant");
    close(num(&plant[7][6]).expect("the request cell holds a number"), refs["predictions"][0]["mean"].as_f64().unwrap(), "request cell");
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_polynomial_predicts_as_statsmodels_does_on_the_same_powers() {
    // #polynomial forms the powers itself; its outcome says how a new x
    // becomes the model row (1, x, x²), so #predict and the calculator work.
    // Reference: statsmodels 0.15.0 OLS of STACKLOSS ~ AIRFLOW + I(AIRFLOW**2),
    // get_prediction(...).summary_frame() (tests/data/predict_figures.json).
    let d = scratch("predict-poly");
    let reqs = ["#polynomial(STACKLOSS, AIRFLOW, degree=2, name=q)", "#predict(q, rows=PolyPlan!A1:A5)", "#predict(q, rows=PolyPlan!A1:A5, confidence=0.90)", "#predict(q, AIRFLOW=62)"];
    let input = book(&d, &reqs);
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    for r in &s.reports {
        assert_ne!(r.status, Status::Error, "{}: {:?}", r.text, r.messages);
    }
    let t = output::table(&out, "Intervals");
    let refs = reference();
    for (req, level) in [(reqs[1], 0.95), (reqs[2], 0.90)] {
        let rows = prediction_rows(&t, req);
        let want: Vec<&Json> = refs["polynomial"]["predictions"].as_array().unwrap().iter().filter(|p| p["level"].as_f64() == Some(level)).collect();
        assert_eq!(rows.len(), want.len());
        for (row, w) in rows.iter().zip(want) {
            assert_eq!(num(&row[0]), w["point"]["AIRFLOW"].as_f64());
            let f = |c: usize| num(&row[c]).unwrap_or_else(|| panic!("no number in column {c}"));
            let what = format!("polynomial, level {level} at {}", w["point"]);
            for (c, key) in [(1, "mean"), (2, "mean_ci_lower"), (3, "mean_ci_upper"), (4, "obs_ci_lower"), (5, "obs_ci_upper"), (6, "mean_se")] {
                close(f(c), w[key].as_f64().unwrap(), &format!("{what}: {key}"));
            }
        }
    }
    // The one-point request holds the prediction at AIRFLOW = 62.
    let plant = output::table(&out, "Plant");
    let at62 = refs["polynomial"]["predictions"].as_array().unwrap().iter().find(|p| p["level"] == 0.95 && p["point"]["AIRFLOW"] == 62.0).unwrap();
    close(num(&plant[4][6]).expect("a number"), at62["mean"].as_f64().unwrap(), "request cell");
    // The calculator: its cached prediction at the mean of AIRFLOW is
    // b₀ + b₁·m + b₂·m² (common practice), and the x² term value is a live power.
    let at = t.iter().position(|r| r.first().and_then(text).is_some_and(|x| x.starts_with("Prediction calculator — q:"))).expect("a calculator for the polynomial");
    let m = num(&t[at + 3][1]).unwrap();
    let q = s.reports.iter().find(|r| r.name == "q").unwrap();
    let b: Vec<f64> = q.outcome.as_ref().unwrap().coefficients.iter().map(|c| c.estimate.unwrap()).collect();
    let predicted = num(&t[at + 5][1]).expect("a cached predicted value");
    let by_hand = b[0] + b[1] * m + b[2] * m * m;
    assert!((predicted - by_hand).abs() < 1e-12 * by_hand.abs(), "{predicted} vs {by_hand}");
    // With PLUMB_RECALC set (as .ci/run does), LibreOffice recalculates the
    // calculator at the first #predict point and must agree with #predict.
    if std::env::var_os("PLUMB_RECALC").is_some() {
        let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/calculator_recalc.py");
        let st = std::process::Command::new("python3").arg(script).arg(&out).status().expect("python3 runs");
        assert!(st.success(), "LibreOffice's recalculation of the polynomial's calculator disagrees with #predict");
    }
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn compare_gives_the_nested_f_tests_of_statsmodels() {
    let d = scratch("predict-cmp");
    let input = book(&d, &REQUESTS);
    let out = d.join("out.xlsx");
    run_to(&input, &out);
    let t = output::table(&out, "Comparisons");
    let refs = reference();
    // Fit table: AIC and BIC per fit (statsmodels 0.15.0).
    let head = t.iter().position(|r| r.first().and_then(text) == Some("Fit")).expect("a Fit header");
    let mut lowest = Vec::new();
    for r in &t[head + 1..head + 4] {
        let name = text(&r[0]).unwrap();
        let w = &refs["fits"][name];
        close(num(&r[3]).unwrap(), w["rsquared"].as_f64().unwrap(), &format!("{name} R²"));
        close(num(&r[4]).unwrap(), w["rsquared_adj"].as_f64().unwrap(), &format!("{name} adjusted R²"));
        close(num(&r[6]).unwrap(), w["aic"].as_f64().unwrap(), &format!("{name} AIC"));
        close(num(&r[7]).unwrap(), w["bic"].as_f64().unwrap(), &format!("{name} BIC"));
        if r.get(8).and_then(text) == Some("lowest AIC") {
            lowest.push(name.to_string());
        }
    }
    let best = ["air", "airwater", "full"].into_iter().min_by(|a, b| refs["fits"][*a]["aic"].as_f64().unwrap().total_cmp(&refs["fits"][*b]["aic"].as_f64().unwrap())).unwrap();
    assert_eq!(lowest, [best]);
    // Nested F tests: statsmodels compare_f_test (= anova_lm).
    let nh = t.iter().position(|r| r.first().and_then(text) == Some("Smaller fit")).expect("a nested-test table");
    let rows: Vec<_> = t[nh + 1..].iter().take_while(|r| r.get(2).and_then(num).is_some()).collect();
    assert_eq!(rows.len(), 3);
    for w in refs["nested"].as_array().unwrap() {
        let (a, b) = (w["smaller"].as_str().unwrap(), w["larger"].as_str().unwrap());
        let r = rows.iter().find(|r| text(&r[0]) == Some(a) && text(&r[1]) == Some(b)).unwrap_or_else(|| panic!("no test {a} in {b}"));
        close(num(&r[2]).unwrap(), w["f"].as_f64().unwrap(), &format!("F of {a} in {b}"));
        assert_eq!(num(&r[3]), w["df_num"].as_f64());
        assert_eq!(num(&r[4]), w["df_den"].as_f64());
        close(num(&r[5]).unwrap(), w["p_value"].as_f64().unwrap(), &format!("p of {a} in {b}"));
    }
    // Coefficients side by side: estimate and standard error of full, as numbers.
    let ch = t.iter().position(|r| r.first().and_then(text) == Some("Term")).expect("a coefficient table");
    assert_eq!(t[ch].get(5).and_then(text), Some("full: estimate"));
    let air = t[ch + 1..].iter().find(|r| text(&r[0]) == Some("ACIDCONC")).unwrap();
    assert!(num(&air[1]).is_none(), "air has no ACIDCONC");
    // statsmodels 0.15.0 (datasets/README.md stack loss table, as in tests/stackloss.rs).
    close(num(&air[5]).unwrap(), -0.1521225191, "ACIDCONC estimate");
    close(num(&air[6]).unwrap(), 0.1562940432, "ACIDCONC standard error");
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn compare_refuses_other_responses_and_other_rows() {
    let d = scratch("predict-refuse");
    let input = book(
        &d,
        &[
            "#linear(STACKLOSS, AIRFLOW, name=a)",
            "#linear(AIRFLOW, WATERTEMP, name=b)",
            "#compare(a, b)",
            "#compare(a, nosuch)",
            "#predict(a, AIRFLOW=60, WATERTEMP=3)",
            "#predict(a)",
            "#predict(late, AIRFLOW=60)",
            "#linear(STACKLOSS, AIRFLOW, name=late)",
            "#predict(lat, AIRFLOW=60)",
            "#linear(STACKLOSS, AIRFLOW + WATERTEMP, table=Plant!A1:D15, name=short)",
            "#compare(a, short)",
        ],
    );
    let out = d.join("out.xlsx");
    let s = run_to(&input, &out);
    let msg = |i: usize| s.reports[i].messages.join(" ");
    assert_eq!(s.reports[2].status, Status::Error);
    assert!(msg(2).contains("different responses (STACKLOSS and AIRFLOW)"), "{}", msg(2));
    assert!(msg(3).contains("there is no fit named 'nosuch'"), "{}", msg(3));
    assert!(msg(4).contains("uses no column 'watertemp'"), "{}", msg(4));
    assert!(msg(5).contains("#predict needs the new values"), "{}", msg(5));
    // A prediction may stand above the fit it names: host functions run after every fit.
    assert_eq!(s.reports[6].status, Status::Ok, "{}", msg(6));
    assert_eq!(s.reports[6].function, "predict");
    // An unknown fit name: the nearest is suggested, with a caret under the name.
    assert!(msg(8).contains("there is no fit named 'lat' — did you mean late?"), "{}", msg(8));
    assert!(msg(10).contains("the fits 'a' (21 rows) and 'short' (14 rows) use different rows"), "{}", msg(10));
    let p = s.problems.iter().find(|p| p.message.contains("'lat'")).unwrap();
    assert!(format!("{p}").contains("    #predict(lat, AIRFLOW=60)\n             ^^^\n"), "{p}");
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn charts_read_the_cells_of_their_fits() {
    let d = scratch("predict-charts");
    let input = book(&d, &[REQUESTS[0], REQUESTS[1]]);
    let out = d.join("out.xlsx");
    run_to(&input, &out);
    let charts = output::chart_parts(&out);
    assert_eq!(charts.len(), 6, "three charts per fit");
    let t = output::table(&out, "Charts");
    let column = |r: &str| -> (String, Vec<f64>) {
        let (c, r0, r1) = output::parse_range(r);
        let head = text(&t[r0 as usize - 1][c as usize]).unwrap_or("").to_string();
        (head, (r0..=r1).map(|i| num(&t[i as usize][c as usize]).unwrap()).collect())
    };
    // Fit full (three inputs): observed against fitted, residuals, normal quantiles.
    let (titles, ranges) = &charts[0];
    assert_eq!(titles[0], "Observed STACKLOSS against fitted");
    assert!(ranges.iter().all(|r| r.starts_with("Charts!")), "{ranges:?}");
    let (hx, xs) = column(&ranges[0]);
    let (hy, ys) = column(&ranges[1]);
    assert_eq!((hx.as_str(), hy.as_str()), ("Fitted", "Observed"));
    let mut observed = stackloss()[0].clone();
    let mut got = ys.clone();
    observed.sort_by(f64::total_cmp);
    got.sort_by(f64::total_cmp);
    assert_eq!(xs.len(), 21);
    for (a, b) in got.iter().zip(&observed) {
        assert!((a - b).abs() < 1e-9, "observed {a} vs data {b}"); // fitted + residual rebuilds the data (common practice)
    }
    // The residual chart's zero line runs at 0 from the smallest fitted value to the largest.
    let (_, ranges) = &charts[1];
    let (hz, zx) = column(&ranges[2]);
    let (_, zy) = column(&ranges[3]);
    assert_eq!(hz, "Zero line: fitted");
    assert_eq!(zy, vec![0.0, 0.0]);
    assert_eq!(zx, vec![xs.iter().copied().fold(f64::INFINITY, f64::min), xs.iter().copied().fold(f64::NEG_INFINITY, f64::max)]);
    let (titles, ranges) = &charts[2];
    assert_eq!(titles[0], "Normal quantile plot of the internally studentized residuals");
    let (hq, q) = column(&ranges[0]);
    let (_, r) = column(&ranges[1]);
    assert_eq!(hq, "Normal quantile");
    let refs = reference();
    let wq = refs["normal_quantile_plot"]["theoretical"].as_array().unwrap();
    let wr = refs["normal_quantile_plot"]["std_residuals_sorted"].as_array().unwrap();
    assert_eq!(q.len(), wq.len());
    for i in 0..q.len() {
        // Blom positions through scipy 1.17.1 norm.ppf; statsmodels 0.15.0 resid_studentized_internal.
        close(q[i], wq[i].as_f64().unwrap(), &format!("normal quantile {i}"));
        close(r[i], wr[i].as_f64().unwrap(), &format!("sorted standardized residual {i}"));
    }
    // Fit air (one input): the data with the fitted line, x = AIRFLOW.
    let (titles, ranges) = &charts[3];
    assert_eq!(titles[0], "STACKLOSS against AIRFLOW, with the fitted line");
    let (hx, xs) = column(&ranges[0]);
    assert_eq!(hx, "AIRFLOW");
    let mut air = stackloss()[1].clone();
    air.sort_by(f64::total_cmp);
    assert_eq!(xs, air, "the x column is AIRFLOW in sorted order");
    assert_eq!(ranges[2], ranges[0], "the fitted line shares the x column");
    let (hf, _) = column(&ranges[3]);
    assert_eq!(hf, "Fitted");
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn predicting_at_the_data_rows_gives_the_fitted_values() {
    // Powers, a transform, a text column and its product with a number:
    // the recipe must rebuild the model columns exactly as the resolver did,
    // so #predict at each data row equals that row's Fitted column (common practice: identity).
    let d = scratch("predict-recipe");
    let path = d.join("mixed.xlsx");
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name("Data").unwrap();
    for (j, h) in ["y", "x", "z", "g"].iter().enumerate() {
        ws.write_string(0, j as u16, *h).unwrap();
    }
    let levels = ["B", "A", "C"];
    for i in 0..30u32 {
        let x = f64::from(i % 7) + 0.5 * f64::from(i % 3);
        let z = 1.0 + f64::from((i * 5) % 11);
        let g = levels[(i % 3) as usize];
        let y = 2.0 + 0.3 * x - 0.05 * x * x + 0.7 * z.ln() + if g == "C" { 0.4 * x } else { 0.0 } + 0.01 * f64::from((i * 37) % 17);
        ws.write_number(i + 1, 0, y).unwrap();
        ws.write_number(i + 1, 1, x).unwrap();
        ws.write_number(i + 1, 2, z).unwrap();
        ws.write_string(i + 1, 3, g).unwrap();
    }
    ws.write_string(1, 6, "#linear(y, x + x^2 + log(z) + x*g + g, name=m, against(g=\"C\"))").unwrap();
    ws.write_string(2, 6, "#predict(m, rows=Data!A1:D31)").unwrap();
    wb.save(&path).unwrap();
    let out = d.join("out.xlsx");
    let s = run_to(&path, &out);
    assert!(s.reports.iter().all(|r| r.status != Status::Error), "{:?}", s.problems);
    let t = output::table(&out, "Intervals");
    let rows = prediction_rows(&t, "#predict(m, rows=Data!A1:D31)");
    assert_eq!(rows.len(), 30);
    let data = output::table(&out, "Data");
    let fc = data[0].iter().position(|h| text(h) == Some("Fitted (m)")).expect("a Fitted (m) column");
    for (i, r) in rows.iter().enumerate() {
        let want = num(&data[i + 1][fc]).unwrap();
        let got = num(&r[3]).unwrap();
        assert!((got - want).abs() <= 1e-10 * want.abs().max(1.0), "row {}: predicted {got}, fitted {want}", i + 2);
        // The table echoes the inputs: x, z, g.
        assert_eq!(text(&r[2]), text(&data[i + 1][3]));
    }
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn the_demo_calculator_offers_the_levels_and_caches_its_values() {
    let input = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("demo-data/greenhouse.xlsx");
    let d = scratch("predict-demo");
    let out = d.join("greenhouse.fitted.xlsx");
    let s = run_to(&input, &out);
    // The Intervals sheet part holds a list validation of the bay levels.
    let names = output::sheet_names(&out);
    let idx = names.iter().position(|n| n == "Intervals").unwrap() + 1;
    let mut z = zip::ZipArchive::new(std::fs::File::open(&out).unwrap()).unwrap();
    let mut xml = String::new();
    z.by_name(&format!("xl/worksheets/sheet{idx}.xml")).unwrap().read_to_string(&mut xml).unwrap();
    assert!(xml.contains("<dataValidation type=\"list\""), "no drop-down list on Intervals");
    assert!(xml.contains("\"East,North,South,West\""), "the list holds the bays in sorted order");
    assert!(xml.contains("TINV("), "the t quantile is a live formula");
    // Cached values: the calculator of main at the data's means equals #predict at those means.
    let t = output::table(&out, "Intervals");
    let at = t.iter().position(|r| r.first().and_then(text).is_some_and(|x| x.starts_with("Prediction calculator — main:"))).unwrap();
    let means: Vec<f64> = (0..3).map(|k| num(&t[at + 3 + k][1]).unwrap()).collect();
    let predicted = num(&t[at + 7][1]).expect("a cached predicted value");
    let main = s.reports.iter().find(|r| r.name == "main").unwrap();
    let o = main.outcome.as_ref().unwrap();
    let b: Vec<f64> = o.coefficients.iter().map(|c| c.estimate.unwrap()).collect();
    let by_hand = b[0] + b[1] * means[0] + b[2] * means[1] + b[3] * means[2]; // xᵀb (common practice)
    assert!((predicted - by_hand).abs() < 1e-12 * by_hand.abs(), "{predicted} vs {by_hand}");
    let _ = std::fs::remove_dir_all(&d);
}
