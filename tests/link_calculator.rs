//! The prediction calculator of a predictor with a link, recalculated by an
//! independent formula engine. No built-in fit has a logit or log link yet,
//! so the reports are made by hand (invented coefficients and covariance of
//! a yes-or-no outcome against one numeric input, and of a count through
//! the log), laid out and written as `plumb run` would, with a `#predict`
//! table of one point from `predict::at`. The calculator's cached values
//! are `predict::at`'s at its starting point; with PLUMB_RECALC set (as
//! .ci/run does) LibreOffice recalculates it at the table's point, every
//! cached value removed, and must agree with `#predict` to 1e-9
//! (tests/calculator_recalc.py).

mod common;

use common::output::{self, num, text};
use common::run::scratch;
use plumb::cells::{CellAddress, Grid, Workbook};
use plumb::predict;
use plumb::protocol::{Coefficient, FitOutcome, Formula, Link, Predictor, PredictorForm};
use plumb::recipe::{Input, InputKind, NewValue, Node, Recipe};
use plumb::report::{HostOutcome, Prediction, PredictionRow, Report, RunInfo, Status};

/// A report of the request `text` at Data row 1, column `col`, with what
/// it produced.
fn report(name: &str, text: &str, col: u32, outcome: Option<FitOutcome>, recipe: Option<Recipe>, host: Option<HostOutcome>) -> Report {
    Report {
        name: name.into(),
        function: "invented".into(),
        cell: CellAddress::new("Data", 0, col),
        text: text.into(),
        response: "Late".into(),
        terms: vec!["Distance".into()],
        level: 0.9,
        rows_used: 40,
        rows_left_out: 0,
        status: Status::Ok,
        messages: Vec::new(),
        notes: Vec::new(),
        outcome,
        place: None,
        recipe,
        host,
    }
}

/// A fit named `name` with this link and its `#predict` at Distance = 7.
fn fit_and_prediction(name: &str, link: Link, b: [f64; 2], col: u32) -> (Report, Report) {
    let coefficient = |term: &str, e: f64| Coefficient { term: term.into(), estimate: Some(e), std_error: None, statistic: None, p_value: None, lower: None, upper: None, vif: None, standardized: None, remark: None, term_p_value: None };
    let pr = Predictor {
        form: PredictorForm::Linear { model_row: vec![Formula::Number(1.0), Formula::Column(0)] },
        covariance: vec![vec![0.31, -0.042], vec![-0.042, 0.0071]],
        link,
        residual_sd: None,
        df: None,
    };
    let point = predict::at(&pr, &b, &[7.0], 0.9).expect("predicts");
    let outcome = FitOutcome { coefficients: vec![coefficient("Intercept", b[0]), coefficient("Distance", b[1])], predictor: Some(pr), ..Default::default() };
    let recipe = Recipe {
        inputs: vec![Input { name: "Distance".into(), kind: InputKind::Numeric { min: 1.0, max: 12.0, mean: 5.0 } }],
        terms: vec![Node::Input(0)],
        columns: vec!["Distance".into()],
        single_input: None,
    };
    let fit = report(name, &format!("#invented(Late, Distance, name={name})"), col, Some(outcome), Some(recipe), None);
    let table = Prediction { fit: name.into(), inputs: vec!["Distance".into()], level: 0.9, rows: vec![PredictionRow { values: vec![NewValue::Number(7.0)], at: point, outside: Vec::new() }] };
    let mut host = report(&format!("{name}-at-7"), &format!("#predict({name}, Distance=7)"), col + 1, None, None, Some(HostOutcome::Prediction(table)));
    host.function = "predict".into();
    (fit, host)
}

#[test]
fn logit_and_log_calculators_recalculate_to_predict() {
    let (a, pa) = fit_and_prediction("late", Link::Logit, [-2.1, 0.38], 5);
    let (b, pb) = fit_and_prediction("counts", Link::Log, [0.4, 0.12], 7);
    let reports = [a, b, pa, pb];
    let book = Workbook { sheets: vec![Grid::new("Data")] };
    let info = RunInfo { version: "0".into(), input_name: "links.xlsx".into(), input_sha256: String::new(), time: "2026-01-01 00:00:00".into(), sheets: None };
    let laid = plumb::layout::lay_out(&book, &reports, &info);
    let d = scratch("link-calculator");
    let out = d.join("out.xlsx");
    plumb::write::write_book(&book, &laid, &out, &plumb::write::WriteOptions { created_unix: 0, zip_level: 1 }).expect("writes");
    // The cached values, read back: predict::at at the starting value 5.
    let t = output::table(&out, "Intervals");
    for r in &reports[..2] {
        let o = r.outcome.as_ref().expect("an outcome");
        let pr = o.predictor.as_ref().expect("a predictor");
        let est: Vec<f64> = o.coefficients.iter().map(|c| c.estimate.unwrap_or(0.0)).collect();
        let want = predict::at(pr, &est, &[5.0], 0.9).expect("predicts");
        let at = t.iter().position(|row| row.first().and_then(text).is_some_and(|x| x.starts_with(&format!("Prediction calculator — {}: ", r.name)))).expect("a calculator");
        let value = |label: &str| t[at..].iter().find(|row| row.first().and_then(text) == Some(label)).and_then(|row| row.get(1)).and_then(num);
        assert_eq!(value("Predicted value"), Some(want.predicted), "{}", r.name);
        assert_eq!(value("Confidence interval: from"), Some(want.mean_lower), "{}", r.name);
        assert_eq!(value("Confidence interval: to"), Some(want.mean_upper), "{}", r.name);
        assert_eq!(value("Prediction interval: from"), None, "{}: no prediction interval", r.name);
    }
    if std::env::var_os("PLUMB_RECALC").is_some() {
        let script = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/calculator_recalc.py");
        let st = std::process::Command::new("python3").arg(script).arg(&out).status().expect("python3 runs");
        assert!(st.success(), "LibreOffice's recalculation of the link calculators disagrees with #predict");
    }
    let _ = std::fs::remove_dir_all(&d);
}
