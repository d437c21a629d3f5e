//! Layout of the tables that go beyond one fit's figures: the prediction
//! tables of `#predict` and the prediction calculator of each linear fit
//! (Intervals sheet), the comparisons of `#compare` (Comparisons sheet), and
//! the charts with the cells they read (Charts sheet).
//!
//! Like the rest of `layout`, this builds the abstract model only: cells,
//! formulas with their computed values, drop-down choices and
//! [`ChartSpec`]s; `write` renders them.

use crate::cells::column_letters;
use crate::host::{Comparison, HostOutcome, Prediction};
use crate::layout::{link_to, Cached, ChartSpec, Content, OutCell, Report, SeriesSpec, Sheet, Style};
use crate::numeric::{normal_plot_positions, t_quantile};
use crate::recipe::{InputKind, NewValue};

/// Above this many rows a chart plots every k-th point (in the sorted order
/// of its table), `k = ⌈n / CHART_POINTS⌉`, so the workbook stays quick to
/// open; the residual columns beside the data keep every row.
pub const CHART_POINTS: usize = 20_000;

/// An absolute A1 reference on the same sheet, such as `$C$5`.
fn abs(row: u32, col: u32) -> String {
    format!("${}${}", column_letters(col), row + 1)
}

fn formula(text: String, value: f64, style: Style) -> OutCell {
    OutCell::new(Content::Formula(text, if value.is_finite() { Cached::Number(value) } else { Cached::Empty }), style)
}

fn value_cell(v: &NewValue, style: Style) -> OutCell {
    match v {
        NewValue::Number(x) => OutCell::number(*x, style),
        NewValue::Text(t) => OutCell::text(t, style),
    }
}

/// The prediction table of one `#predict` request from `row`; returns the
/// next free row.
pub fn prediction_table(s: &mut Sheet, mut row: u32, r: &Report, p: &Prediction) -> u32 {
    s.put(row, 0, OutCell::text(format!("Predictions — {}", r.text.trim()), Style::Title));
    row += 1;
    s.put(row, 0, OutCell::text(format!("From the fit {} of {}, at level {}: the predicted value, the confidence interval of the mean response, and the interval for one new observation.", p.fit, r.response, p.level), Style::Plain));
    row += 1;
    let mut headers: Vec<String> = p.inputs.clone();
    for h in ["Predicted value", "Standard error of the mean", "Mean: lower bound", "Mean: upper bound", "New observation: lower bound", "New observation: upper bound", "Leverage", "Outside the data"] {
        headers.push(h.into());
    }
    for (c, h) in headers.iter().enumerate() {
        s.put(row, c as u32, OutCell::text(h, Style::Header));
    }
    row += 1;
    let k = p.inputs.len() as u32;
    for pr in &p.rows {
        for (c, v) in pr.values.iter().enumerate() {
            s.put(row, c as u32, value_cell(v, Style::Number));
        }
        let nums = [pr.predicted, pr.se_mean, pr.mean_lower, pr.mean_upper, pr.new_lower, pr.new_upper, pr.leverage];
        for (j, x) in nums.iter().enumerate() {
            s.put(row, k + j as u32, OutCell::number(*x, Style::Number));
        }
        if !pr.outside.is_empty() {
            s.put(row, k + 7, OutCell::text(pr.outside.join("; "), Style::Warning));
        }
        row += 1;
    }
    row + 1
}

/// The prediction calculator of one linear fit from `row`: input cells,
/// live formulas for the prediction and both intervals, and the
/// coefficients and covariance matrix they read. Returns the next free row,
/// or `row` unchanged when the fit cannot predict (no recipe or covariance).
pub fn calculator(s: &mut Sheet, row: u32, r: &Report) -> u32 {
    let (Some(o), Some(rec)) = (&r.outcome, &r.recipe) else { return row };
    let Some(cov) = &o.covariance else { return row };
    let p = o.coefficients.len();
    let (Some(sigma), Some(df)) = (o.statistic("rmse"), o.statistic("df_resid")) else { return row };
    if cov.len() != p || rec.columns.len() + usize::from(rec.intercept) != p || p > CALCULATOR_MAX_TERMS || p == 0 {
        return row;
    }
    let k = rec.inputs.len() as u32;
    let r_in = row + 3;
    let r_lvl = r_in + k;
    let r_res = r_lvl + 1;
    let r_th = r_res + 11;
    let r_across = r_th + 1;
    let r_t0 = r_th + 2;
    let r_t1 = r_t0 + p as u32 - 1;
    let defaults: Vec<NewValue> = (0..rec.inputs.len()).map(|i| rec.default_value(i)).collect();
    let cells: Vec<String> = (0..k).map(|i| abs(r_in + i, 1)).collect();
    let Ok(xs) = rec.formulas(&defaults, &cells) else { return row };

    s.put(row, 0, OutCell::text(format!("Prediction calculator — {}: {}", r.name, r.text.trim()), Style::Title));
    s.put(
        row + 1,
        0,
        OutCell::text(
            "Type new values into the shaded cells (a text column offers its levels in a list); the prediction and both intervals below follow. They start at the data's means and base levels.",
            Style::Plain,
        ),
    );
    for (c, h) in ["Input", "Value", "Smallest in data", "Largest in data"].iter().enumerate() {
        s.put(row + 2, c as u32, OutCell::text(*h, Style::Header));
    }
    for (i, inp) in rec.inputs.iter().enumerate() {
        let rr = r_in + i as u32;
        s.put(rr, 0, OutCell::text(&inp.name, Style::Plain));
        s.put(rr, 1, value_cell(&defaults[i], Style::Input));
        match &inp.kind {
            InputKind::Numeric { min, max, .. } => {
                s.put(rr, 2, OutCell::number(*min, Style::Number));
                s.put(rr, 3, OutCell::number(*max, Style::Number));
            }
            InputKind::Levels { levels, base } => {
                s.put(rr, 2, OutCell::text(format!("levels: {} (base {base})", levels.join(", ")), Style::Plain));
                s.choices.insert((rr, 1), levels.clone());
            }
        }
    }
    s.put(r_lvl, 0, OutCell::text("Confidence level", Style::Plain));
    s.put(r_lvl, 1, OutCell::number(r.level, Style::Input));

    // Values computed here, cached in the formulas for readers that do not recalculate.
    let b: Vec<f64> = o.coefficients.iter().map(|c| c.estimate.unwrap_or(0.0)).collect();
    let x: Vec<f64> = xs.iter().map(|(v, _)| *v).collect();
    let u: Vec<f64> = (0..p).map(|i| (0..p).map(|j| cov[i][j] * x[j]).sum()).collect();
    let q: f64 = x.iter().zip(&u).map(|(a, b)| a * b).sum();
    let pred: f64 = b.iter().zip(&x).map(|(a, b)| a * b).sum();
    let se_mean = q.max(0.0).sqrt();
    let se_new = (sigma * sigma + se_mean * se_mean).sqrt();
    let t = -t_quantile(0.5 * (1.0 - r.level), df);

    let (bcol, xcol, ucol, vcol0) = (1u32, 2u32, 3u32, 4u32);
    let vcol1 = vcol0 + p as u32 - 1;
    let range = |c0: u32, r0: u32, c1: u32, r1: u32| format!("{}:{}", abs(r0, c0), abs(r1, c1));
    let (c_pred, c_sem, c_sen, c_t, c_s, c_df) = (abs(r_res, 1), abs(r_res + 1, 1), abs(r_res + 2, 1), abs(r_res + 3, 1), abs(r_res + 8, 1), abs(r_res + 9, 1));
    let lvl = abs(r_lvl, 1);
    let rows: [(&str, String, f64); 10] = [
        ("Predicted value", format!("SUMPRODUCT({},{})", range(bcol, r_t0, bcol, r_t1), range(xcol, r_t0, xcol, r_t1)), pred),
        ("Standard error of the mean", format!("SQRT(MAX(0,SUMPRODUCT({},{})))", range(xcol, r_t0, xcol, r_t1), range(ucol, r_t0, ucol, r_t1)), se_mean),
        ("Standard error of a new observation", format!("SQRT({c_s}^2+{c_sem}^2)"), se_new),
        ("t quantile", format!("TINV(1-{lvl},{c_df})"), t),
        ("Mean: lower bound", format!("{c_pred}-{c_t}*{c_sem}"), pred - t * se_mean),
        ("Mean: upper bound", format!("{c_pred}+{c_t}*{c_sem}"), pred + t * se_mean),
        ("New observation: lower bound", format!("{c_pred}-{c_t}*{c_sen}"), pred - t * se_new),
        ("New observation: upper bound", format!("{c_pred}+{c_t}*{c_sen}"), pred + t * se_new),
        ("Residual standard deviation", String::new(), sigma),
        ("Residual degrees of freedom", String::new(), df),
    ];
    for (i, (label, f, v)) in rows.iter().enumerate() {
        let rr = r_res + i as u32;
        s.put(rr, 0, OutCell::text(*label, if i == 0 { Style::Header } else { Style::Plain }));
        if f.is_empty() {
            s.put(rr, 1, OutCell::number(*v, if i == 9 { Style::Integer } else { Style::Number }));
        } else {
            s.put(rr, 1, formula(f.clone(), *v, Style::Number));
        }
    }
    if o.coefficients.iter().any(|c| c.estimate.is_none()) {
        s.put(r_res + 10, 0, OutCell::text("A term without an estimate (collinear) counts as 0.", Style::Warning));
    }

    // The term table: coefficients, term values, covariance.
    for (c, h) in ["Term", "Coefficient", "Term value", "Covariance × term values"].iter().enumerate() {
        s.put(r_th, c as u32, OutCell::text(*h, Style::Header));
    }
    s.put(r_across, 0, OutCell::text("Term values, across", Style::Plain));
    for (j, c) in o.coefficients.iter().enumerate() {
        let rr = r_t0 + j as u32;
        let vc = vcol0 + j as u32;
        s.put(r_th, vc, OutCell::text(&c.term, Style::Header));
        s.put(r_across, vc, formula(abs(rr, xcol), x[j], Style::Number));
        s.put(rr, 0, OutCell::text(&c.term, Style::Plain));
        s.put(rr, bcol, OutCell::number(b[j], Style::Number));
        let (xv, xf) = &xs[j];
        s.put(rr, xcol, formula(xf.clone(), *xv, Style::Number));
        s.put(rr, ucol, formula(format!("SUMPRODUCT({},{})", range(vcol0, rr, vcol1, rr), range(vcol0, r_across, vcol1, r_across)), u[j], Style::Number));
        for (m, v) in cov[j].iter().enumerate() {
            s.put(rr, vcol0 + m as u32, OutCell::number(*v, Style::Number));
        }
    }
    r_t1 + 3
}

/// The comparison of one `#compare` request from `row`; returns the next
/// free row.
pub fn comparison_table(s: &mut Sheet, mut row: u32, r: &Report, c: &Comparison) -> u32 {
    s.put(row, 0, OutCell::text(format!("Comparison — {}", r.text.trim()), Style::Title));
    row += 1;
    s.put(row, 0, OutCell::text(format!("Fits of {} on the same {} rows.", c.response, r.rows_used), Style::Plain));
    row += 1;
    for (j, h) in ["Fit", "Rows used", "Parameters", "R²", "Adjusted R²", "Root mean squared error", "AIC", "BIC", "Lowest AIC"].iter().enumerate() {
        s.put(row, j as u32, OutCell::text(*h, Style::Header));
    }
    row += 1;
    for (i, f) in c.fits.iter().enumerate() {
        s.put(row, 0, OutCell::text(&f.name, Style::Plain));
        s.put(row, 1, OutCell::number(f.n, Style::Integer));
        s.put(row, 2, OutCell::number(f.parameters, Style::Integer));
        for (j, x) in [f.r_squared, f.adj_r_squared, f.rmse, f.aic, f.bic].iter().enumerate() {
            s.put(row, 3 + j as u32, OutCell::number(*x, Style::Number));
        }
        if i == c.lowest_aic {
            s.put(row, 8, OutCell::text("lowest AIC", Style::Good));
        }
        row += 1;
    }
    row += 1;
    if c.nested.is_empty() {
        s.put(row, 0, OutCell::text("No fit's terms contain another's, so there is no nested F test.", Style::Plain));
        row += 2;
    } else {
        s.put(row, 0, OutCell::text("Nested fits: does the larger fit explain significantly more? (F test)", Style::Header));
        row += 1;
        for (j, h) in ["Smaller fit", "Larger fit", "F statistic", "Numerator df", "Denominator df", "p-value"].iter().enumerate() {
            s.put(row, j as u32, OutCell::text(*h, Style::Header));
        }
        row += 1;
        for t in &c.nested {
            s.put(row, 0, OutCell::text(&t.smaller, Style::Plain));
            s.put(row, 1, OutCell::text(&t.larger, Style::Plain));
            s.put(row, 2, OutCell::number(t.f, Style::Number));
            s.put(row, 3, OutCell::number(t.df_num, Style::Integer));
            s.put(row, 4, OutCell::number(t.df_den, Style::Integer));
            s.put(row, 5, OutCell::number(t.p_value, Style::PValue));
            row += 1;
        }
        row += 1;
    }
    s.put(
        row,
        0,
        OutCell::text(
            "How to choose: prefer the fit with the lower AIC (or BIC, which penalises extra terms more); a difference below about 2 is slight. For nested fits, a small p-value of F (say below 0.05) says the extra terms help. Prefer the simpler fit when the figures are close, and check its residuals.",
            Style::Wrap,
        ),
    );
    row += 2;
    s.put(row, 0, OutCell::text("Term", Style::Header));
    for (i, f) in c.fits.iter().enumerate() {
        s.put(row, 1 + 2 * i as u32, OutCell::text(format!("{}: estimate", f.name), Style::Header));
        s.put(row, 2 + 2 * i as u32, OutCell::text(format!("{}: standard error", f.name), Style::Header));
    }
    row += 1;
    for (ti, term) in c.terms.iter().enumerate() {
        s.put(row, 0, OutCell::text(term, Style::Plain));
        for (i, f) in c.fits.iter().enumerate() {
            if let Some((est, se)) = f.coefficients[ti] {
                s.put(row, 1 + 2 * i as u32, OutCell::maybe(est, Style::Number));
                s.put(row, 2 + 2 * i as u32, OutCell::maybe(se, Style::Number));
            }
        }
        row += 1;
    }
    row + 2
}

/// Every k-th index of `0..n` (and the last), `k = ⌈n / CHART_POINTS⌉`.
pub fn chart_subset(n: usize) -> Vec<usize> {
    let k = n.div_ceil(CHART_POINTS).max(1);
    let mut v: Vec<usize> = (0..n).step_by(k).collect();
    if n > 0 && v.last() != Some(&(n - 1)) {
        v.push(n - 1);
    }
    v
}

/// A fit with more coefficients than this gets no calculator (its
/// covariance matrix would fill the sheet).
pub const CALCULATOR_MAX_TERMS: usize = 60;

/// Width of one fit's chart data table on the Charts sheet, plus a gap.
const DATA_COLS: u32 = 7;
/// First column of the chart data tables (right of the charts).
const DATA_COL0: u32 = 26;
/// Rows per fit's block of charts.
const BLOCK_ROWS: u32 = 19;

/// The Charts sheet: per fit, the data with the fitted line (one numeric
/// input) or observed against fitted, residuals against fitted, and a
/// normal quantile plot of the standardized residuals; the cells they read
/// are tables at the right of the sheet. `None` when no fit has per-row
/// results.
pub fn charts_sheet(name: &str, reports: &[Report]) -> Option<Sheet> {
    let mut s = Sheet::new(name);
    let sheet_name = name.to_string();
    let mut block = 0u32;
    for r in reports {
        let Some(o) = &r.outcome else { continue };
        let col = |key: &str| o.rows.iter().find(|c| c.key == key).map(|c| c.values.clone());
        let (Some(fitted), Some(resid)) = (col("fitted"), col("residual")) else { continue };
        let std_res = col("std_residual").unwrap_or_else(|| vec![f64::NAN; fitted.len()]);
        let n = fitted.len();
        if n == 0 {
            continue;
        }
        let single = r.recipe.as_ref().and_then(|rec| rec.single_input.clone().map(|v| (rec.inputs[0].name.clone(), v))).filter(|(_, v)| v.len() == n);
        let (x_name, x): (String, Vec<f64>) = match &single {
            Some((nm, v)) => (nm.clone(), v.clone()),
            None => ("Fitted".into(), fitted.clone()),
        };
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| x[a].total_cmp(&x[b]));
        let mut sr: Vec<f64> = std_res.iter().copied().filter(|v| v.is_finite()).collect();
        sr.sort_by(f64::total_cmp);
        let qs = normal_plot_positions(sr.len());
        let pick = chart_subset(n);
        let pick_q = chart_subset(sr.len());

        let c0 = DATA_COL0 + block * DATA_COLS;
        s.put(0, c0, OutCell::text(format!("Chart data: {}", r.name), Style::Title));
        let heads = [x_name.as_str(), "Observed", "Fitted", "Residual", "Normal quantile", "Standardized residual (sorted)"];
        for (j, h) in heads.iter().enumerate() {
            s.put(1, c0 + j as u32, OutCell::text(*h, Style::Header));
            s.widths.insert(c0 + j as u32, 14.0);
        }
        for (k, &i) in pick.iter().enumerate() {
            let (rr, j) = (2 + k as u32, order[i]);
            s.put(rr, c0, OutCell::number(x[j], Style::Number));
            s.put(rr, c0 + 1, OutCell::number(fitted[j] + resid[j], Style::Number));
            s.put(rr, c0 + 2, OutCell::number(fitted[j], Style::Number));
            s.put(rr, c0 + 3, OutCell::number(resid[j], Style::Number));
        }
        for (k, &i) in pick_q.iter().enumerate() {
            s.put(2 + k as u32, c0 + 4, OutCell::number(qs[i], Style::Number));
            s.put(2 + k as u32, c0 + 5, OutCell::number(sr[i], Style::Number));
        }
        let last = 1 + pick.len() as u32;
        let last_q = 1 + pick_q.len().max(1) as u32;

        let top = block * BLOCK_ROWS;
        let sub = if pick.len() < n { format!(" (one row in {} of {n} plotted)", n.div_ceil(CHART_POINTS)) } else { String::new() };
        s.put(top, 0, OutCell::text(format!("{} — {}{sub}", r.name, r.text.trim()), Style::Title));
        let series = |name: &str, xc: u32, yc: u32, last_row: u32, line: bool| SeriesSpec {
            name: name.into(),
            sheet: sheet_name.clone(),
            x_col: xc,
            y_col: yc,
            first_row: 2,
            last_row,
            line,
        };
        let first = if single.is_some() {
            ChartSpec {
                anchor: (top + 1, 0),
                title: format!("{} against {x_name}, with the fitted line", r.response),
                x_label: x_name.clone(),
                y_label: r.response.clone(),
                series: vec![series("Observed", c0, c0 + 1, last, false), series("Fitted", c0, c0 + 2, last, true)],
            }
        } else {
            ChartSpec {
                anchor: (top + 1, 0),
                title: format!("Observed {} against fitted", r.response),
                x_label: format!("Fitted {}", r.response),
                y_label: format!("Observed {}", r.response),
                series: vec![series("Observed", c0 + 2, c0 + 1, last, false), series("Observed = fitted", c0 + 2, c0 + 2, last, true)],
            }
        };
        s.charts.push(first);
        s.charts.push(ChartSpec {
            anchor: (top + 1, 8),
            title: "Residuals against fitted values".into(),
            x_label: format!("Fitted {}", r.response),
            y_label: "Residual (observed − fitted)".into(),
            series: vec![series("Residual", c0 + 2, c0 + 3, last, false)],
        });
        if !sr.is_empty() {
            s.charts.push(ChartSpec {
                anchor: (top + 1, 16),
                title: "Normal quantile plot of standardized residuals".into(),
                x_label: "Normal quantile (Blom positions)".into(),
                y_label: "Standardized residual".into(),
                series: vec![series("Standardized residual", c0 + 4, c0 + 5, last_q, false), series("Normal line", c0 + 4, c0 + 4, last_q, true)],
            });
        }
        block += 1;
    }
    if block == 0 {
        return None;
    }
    s.put(
        block * BLOCK_ROWS,
        0,
        OutCell::text(
            format!("The charts read the tables at the right of this sheet. Normal quantiles use Blom's positions (i − 0.375)/(n + 0.25). Above {CHART_POINTS} rows a chart plots every k-th row of its sorted table; the columns beside your data keep every row."),
            Style::Plain,
        ),
    );
    Some(s)
}

/// Lays out the `#predict` tables and the calculators on the Intervals
/// sheet from `row`; returns the link target of each request (by index).
pub fn intervals_extras(s: &mut Sheet, mut row: u32, reports: &[Report]) -> Vec<Option<String>> {
    let mut links = vec![None; reports.len()];
    row += 2;
    for (i, r) in reports.iter().enumerate() {
        if let Some(HostOutcome::Prediction(p)) = &r.host {
            links[i] = Some(link_to(&s.name, row, 0));
            row = prediction_table(s, row, r, p);
        }
    }
    for r in reports {
        if r.function == "linear" && r.outcome.is_some() {
            row = calculator(s, row, r);
        }
    }
    links
}

/// The Comparisons sheet, when any `#compare` succeeded, with each request's
/// link target (by index).
pub fn comparisons_sheet(name: &str, reports: &[Report]) -> (Option<Sheet>, Vec<Option<String>>) {
    let mut s = Sheet::new(name);
    s.widths.insert(0, 26.0);
    for c in 1..12 {
        s.widths.insert(c, 16.0);
    }
    let mut links = vec![None; reports.len()];
    let mut row = 0;
    for (i, r) in reports.iter().enumerate() {
        if let Some(HostOutcome::Comparison(c)) = &r.host {
            links[i] = Some(link_to(name, row, 0));
            row = comparison_table(&mut s, row, r, c);
        }
    }
    if row == 0 {
        (None, links)
    } else {
        (Some(s), links)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cells::CellAddress;
    use crate::layout::Status;
    use crate::protocol::{FitOutcome, RowColumn};

    fn report(n: usize) -> Report {
        let fitted: Vec<f64> = (0..n).map(|i| i as f64).collect();
        let resid: Vec<f64> = (0..n).map(|i| ((i * 7919) % 13) as f64 - 6.0).collect();
        let col = |key: &str, values: Vec<f64>| RowColumn { key: key.into(), label: key.into(), values };
        Report {
            name: "big".into(),
            function: "linear".into(),
            cell: CellAddress::new("Data", 0, 5),
            text: "#linear(y, a + b)".into(),
            response: "y".into(),
            terms: vec!["a".into(), "b".into()],
            level: 0.95,
            rows_used: n,
            rows_left_out: 0,
            status: Status::Ok,
            messages: Vec::new(),
            outcome: Some(FitOutcome { rows: vec![col("fitted", fitted), col("residual", resid.clone()), col("std_residual", resid)], ..Default::default() }),
            place: None,
            recipe: None,
            host: None,
        }
    }

    #[test]
    fn large_fits_plot_every_kth_row_and_keep_the_last() {
        // k = ⌈45 001 / 20 000⌉ = 3: rows 0, 3, …, 45 000 (common practice: arithmetic).
        let v = chart_subset(45_001);
        assert_eq!(v.len(), 15_001);
        assert_eq!((v[1], *v.last().unwrap()), (3, 45_000));
        assert_eq!(chart_subset(20_000).len(), 20_000);
        assert_eq!(chart_subset(20_001).len(), 10_001);
        let s = charts_sheet("Charts", &[report(45_001)]).unwrap();
        assert_eq!(s.charts.len(), 3);
        for c in &s.charts {
            for ser in &c.series {
                assert_eq!((ser.first_row, ser.last_row), (2, 2 + 15_001 - 1), "{}", c.title);
                assert_eq!(ser.sheet, "Charts");
            }
        }
        // Every charted cell holds a number; nothing below the subset.
        let x = s.charts[1].series[0].x_col;
        assert!(matches!(s.cells.get(&(2 + 15_000, x)).map(|c| &c.content), Some(Content::Number(_))));
        assert!(!s.cells.contains_key(&(2 + 15_001, x)));
        assert!(s.cells.values().any(|c| matches!(&c.content, Content::Text(t) if t.contains("one row in 3 of 45001 plotted"))));
    }

    #[test]
    fn small_fits_plot_every_row() {
        let s = charts_sheet("Charts", &[report(30)]).unwrap();
        assert!(s.charts.iter().all(|c| c.series.iter().all(|ser| ser.last_row == 31)));
        // Observed = fitted + residual, sorted by fitted: row 0 has fitted 0 and residual 0 % 13 − 6 = −6.
        let obs = s.charts[0].series[0].y_col;
        assert_eq!(s.cells[&(2, obs)].content, Content::Number(-6.0));
    }
}
