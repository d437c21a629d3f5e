//! The Intervals sheet: the confidence interval of every coefficient, the
//! tables of `#predict` requests, and a prediction calculator for every fit
//! whose predictor is linear in its coefficients (live formulas over the
//! stored covariance, cached with the values of [`crate::predict`]).

use super::coefficients::estimate_style;
use super::{link_to, list_holds, Cached, Choices, Content, OutCell, Region, Sheet, Style};
use crate::cells::{column_letters, CellRange, DateKind, Value, Workbook};
use crate::predict;
use crate::protocol::{Link, PredictorForm};
use crate::recipe::{sheet_formula, InputKind, NewValue};
use crate::report::{HostOutcome, Prediction, Report};

/// The Intervals sheet and, per report, the link target of its `#predict`
/// table.
pub(super) fn sheet(int_n: &str, book: &Workbook, reports: &[Report]) -> (Sheet, Vec<Option<String>>) {
    let mut ints = Sheet::new(int_n);
    ints.header(0, &[("Fit", 14.0), ("Term", 22.0), ("Level", 8.0), ("Estimate", 14.0), ("Confidence interval: from", 14.0), ("Confidence interval: to", 14.0)]);
    let mut irow = 1u32;
    for r in reports {
        let Some(o) = &r.outcome else { continue };
        for c in &o.coefficients {
            let est = estimate_style(c);
            ints.put(irow, 0, OutCell::text(&r.name, Style::Plain));
            ints.put(irow, 1, OutCell::text(&c.term, Style::Plain));
            ints.put(irow, 2, OutCell::number(r.level, Style::Percent));
            ints.put(irow, 3, OutCell::maybe(c.estimate, est));
            ints.put(irow, 4, OutCell::maybe(c.lower, est));
            ints.put(irow, 5, OutCell::maybe(c.upper, est));
            irow += 1;
        }
    }
    ints.close_table(0, 6);
    let links = extras(&mut ints, irow, book, reports);
    (ints, links)
}

/// A fit with more coefficients than this gets no calculator (its
/// covariance matrix would fill the sheet).
pub const CALCULATOR_MAX_TERMS: usize = 60;

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
fn prediction_table(s: &mut Sheet, mut row: u32, r: &Report, p: &Prediction) -> u32 {
    let first = row;
    s.put(row, 0, OutCell::text(format!("Predictions — {}", r.text.trim()), Style::Title));
    row += 1;
    s.put(
        row,
        0,
        OutCell::text(
            format!(
                "From the fit {} of {}, at level {}: the predicted value; the confidence interval, where the mean response at these values is estimated to lie; the prediction interval, where one new observation would fall.",
                p.fit, r.response, p.level
            ),
            Style::Plain,
        ),
    );
    row += 1;
    let mut headers: Vec<String> = p.inputs.clone();
    for h in ["Predicted value", "Confidence interval: from", "Confidence interval: to", "Prediction interval: from", "Prediction interval: to", "Standard error of the fitted value", "Leverage", "Outside the data"] {
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
        let nums = [pr.at.predicted, pr.at.mean_lower, pr.at.mean_upper, pr.at.new_lower, pr.at.new_upper, pr.at.se_mean, pr.at.leverage];
        for (j, x) in nums.iter().enumerate() {
            s.put(row, k + j as u32, OutCell::number(*x, if j == 6 { Style::Fixed(4) } else { Style::Number }));
        }
        if !pr.outside.is_empty() {
            s.put(row, k + 7, OutCell::text(pr.outside.join("; "), Style::Warning));
        }
        row += 1;
    }
    s.regions.push(Region { owner: r.cell.clone(), what: "the prediction table".into(), first_row: first, last_row: row - 1 });
    row + 1
}

/// The prediction calculator of one linear fit from `row`: input cells,
/// live formulas for the prediction and both intervals, and the
/// coefficients and covariance matrix they read. Returns the next free row,
/// or `row` unchanged when the fit cannot predict (no recipe or covariance).
fn calculator(s: &mut Sheet, row: u32, book: &Workbook, r: &Report) -> u32 {
    let (Some(o), Some(rec)) = (&r.outcome, &r.recipe) else { return row };
    // The calculator's formulas are those of a predictor linear in its
    // coefficients on the response's scale, with a residual spread and t.
    let Some(pr) = &o.predictor else { return row };
    let PredictorForm::Linear { model_row } = &pr.form else { return row };
    let (Some(sigma), Some(df), Link::Identity) = (pr.residual_sd, pr.df, pr.link) else { return row };
    let cov = &pr.covariance;
    let p = o.coefficients.len();
    if cov.len() != p || model_row.len() != p || p > CALCULATOR_MAX_TERMS || p == 0 {
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
    let looks: Vec<Precision> = rec.inputs.iter().map(|inp| precision(book, r, inp)).collect();
    let defaults: Vec<NewValue> = (0..rec.inputs.len())
        .map(|i| match rec.default_value(i) {
            NewValue::Number(x) => NewValue::Number(looks[i].round(x)),
            v => v,
        })
        .collect();
    let cells: Vec<String> = (0..k).map(|i| abs(r_in + i, 1)).collect();
    // The request's columns as formulas over the input cells, then the
    // fit's model row over those.
    let Ok(cols) = rec.column_formulas(&defaults, &cells) else { return row };
    let col_values: Vec<f64> = cols.iter().map(|c| c.0).collect();
    let col_texts: Vec<String> = cols.into_iter().map(|c| c.1).collect();
    let Some(row_texts) = model_row.iter().map(|f| sheet_formula(f, &col_texts)).collect::<Option<Vec<String>>>() else { return row };
    let b: Vec<f64> = o.coefficients.iter().map(|c| c.estimate.unwrap_or(0.0)).collect();
    let Ok((_, x)) = predict::gradient(pr, &b, &col_values) else { return row };
    let Ok(pt) = predict::at(pr, &b, &col_values, r.level) else { return row };
    let xs: Vec<(f64, String)> = x.iter().copied().zip(row_texts).collect();

    s.put(row, 0, OutCell::text(format!("Prediction calculator — {}: {}", r.name, r.text.trim()), Style::Title));
    s.put(
        row + 1,
        0,
        OutCell::text(
            "Type new values into the shaded cells (a text column offers its levels in a list); the prediction and both intervals below follow. They start at the data's means and reference levels.",
            Style::Plain,
        ),
    );
    for (c, h) in ["Input", "Value", "Smallest in data", "Largest in data"].iter().enumerate() {
        s.put(row + 2, c as u32, OutCell::text(*h, Style::Header));
    }
    for (i, inp) in rec.inputs.iter().enumerate() {
        let rr = r_in + i as u32;
        s.put(rr, 0, OutCell::text(&inp.name, Style::Plain));
        s.put(rr, 1, looks[i].cell(&defaults[i], Style::Input));
        match &inp.kind {
            InputKind::Numeric { min, max, .. } => {
                s.put(rr, 2, looks[i].cell(&NewValue::Number(*min), looks[i].style()));
                s.put(rr, 3, looks[i].cell(&NewValue::Number(*max), looks[i].style()));
            }
            InputKind::Levels { levels, base } => {
                s.put(rr, 2, OutCell::text(format!("levels: {} (reference level {base})", levels.join(", ")), Style::Plain));
                if list_holds(levels) {
                    s.choices.insert((rr, 1), Choices::List(levels.clone()));
                } else if !levels.is_empty() {
                    // Too long for a list, or a level with a comma: the
                    // list reads the levels from cells across the row.
                    s.put(row + 2, 4, OutCell::text("Levels (for the list)", Style::Header));
                    for (j, l) in levels.iter().enumerate() {
                        s.put(rr, 4 + j as u32, OutCell::text(l, Style::Plain));
                    }
                    let cells = CellRange { first_row: rr, first_col: 4, last_row: rr, last_col: 4 + levels.len() as u32 - 1 };
                    s.choices.insert((rr, 1), Choices::Cells(cells));
                }
            }
        }
    }
    s.put(r_lvl, 0, OutCell::text("Confidence level", Style::Plain));
    s.put(r_lvl, 1, OutCell::number(r.level, Style::Input));
    s.put(r_lvl, 2, OutCell::text("a share: 0.95 for 95 %", Style::Plain));

    // Values computed by `predict`, cached in the formulas for readers that
    // do not recalculate.
    let u: Vec<f64> = (0..p).map(|i| (0..p).map(|j| cov[i][j] * x[j]).sum()).collect();
    let (pred, se_mean, se_new) = (pt.predicted, pt.se_mean, pt.se_new);
    let t = predict::quantile(r.level, Some(df));

    let (bcol, xcol, ucol, vcol0) = (1u32, 2u32, 3u32, 4u32);
    let vcol1 = vcol0 + p as u32 - 1;
    let range = |c0: u32, r0: u32, c1: u32, r1: u32| format!("{}:{}", abs(r0, c0), abs(r1, c1));
    let (c_pred, c_sem, c_sen, c_t, c_s, c_df) = (abs(r_res, 1), abs(r_res + 5, 1), abs(r_res + 6, 1), abs(r_res + 7, 1), abs(r_res + 8, 1), abs(r_res + 9, 1));
    let lvl = abs(r_lvl, 1);
    let rows: [(&str, String, f64); 10] = [
        ("Predicted value", format!("SUMPRODUCT({},{})", range(bcol, r_t0, bcol, r_t1), range(xcol, r_t0, xcol, r_t1)), pred),
        ("Confidence interval: from", format!("{c_pred}-{c_t}*{c_sem}"), pt.mean_lower),
        ("Confidence interval: to", format!("{c_pred}+{c_t}*{c_sem}"), pt.mean_upper),
        ("Prediction interval: from", format!("{c_pred}-{c_t}*{c_sen}"), pt.new_lower),
        ("Prediction interval: to", format!("{c_pred}+{c_t}*{c_sen}"), pt.new_upper),
        ("Standard error of the fitted value", format!("SQRT(MAX(0,SUMPRODUCT({},{})))", range(xcol, r_t0, xcol, r_t1), range(ucol, r_t0, ucol, r_t1)), se_mean),
        ("Standard error of a new observation", format!("SQRT({c_s}^2+{c_sem}^2)"), se_new),
        ("t quantile", format!("TINV(1-{lvl},{c_df})"), t),
        ("Residual standard error", String::new(), sigma),
        ("Residual degrees of freedom", String::new(), df),
    ];
    for (i, (label, f, v)) in rows.iter().enumerate() {
        let rr = r_res + i as u32;
        s.put(rr, 0, OutCell::text(*label, if i == 0 { Style::Header } else { Style::Plain }));
        if f.is_empty() {
            s.put(rr, 1, OutCell::number(*v, if i == 9 { Style::Integer } else { Style::Number }));
        } else {
            s.put(rr, 1, formula(f.clone(), *v, Style::General));
        }
    }
    if o.coefficients.iter().any(|c| c.estimate.is_none()) {
        s.put(r_res + 10, 0, OutCell::text("A term without an estimate (collinear) counts as 0.", Style::Warning));
    }

    // Covariance × term values cancel to rounding noise (1e-19, say) at
    // some inputs: they show to six significant digits of the column's
    // scale, Σ|cov·x|, so that noise shows as 0 (the cell keeps its value).
    let scale = (0..p).map(|i| (0..p).map(|j| (cov[i][j] * x[j]).abs()).sum::<f64>()).fold(0.0, f64::max);
    let u_style = if scale > 0.0 && scale.is_finite() { Style::Fixed((5 - scale.log10().floor() as i32).clamp(0, 15) as u8) } else { Style::General };

    // The term table: coefficients, term values, covariance.
    for (c, h) in ["Term", "Coefficient", "Term value", "Covariance × term values"].iter().enumerate() {
        s.put(r_th, c as u32, OutCell::text(*h, Style::Header));
    }
    s.put(r_across, 0, OutCell::text("Term values, across", Style::Plain));
    for (j, c) in o.coefficients.iter().enumerate() {
        let rr = r_t0 + j as u32;
        let vc = vcol0 + j as u32;
        s.put(r_th, vc, OutCell::text(&c.term, Style::Header));
        s.put(r_across, vc, formula(abs(rr, xcol), x[j], Style::General));
        s.put(rr, 0, OutCell::text(&c.term, Style::Plain));
        s.put(rr, bcol, OutCell::number(b[j], Style::Number));
        let (xv, xf) = &xs[j];
        s.put(rr, xcol, formula(xf.clone(), *xv, Style::General));
        s.put(rr, ucol, formula(format!("SUMPRODUCT({},{})", range(vcol0, rr, vcol1, rr), range(vcol0, r_across, vcol1, r_across)), u[j], u_style));
        for (m, v) in cov[j].iter().enumerate() {
            s.put(rr, vcol0 + m as u32, OutCell::number(*v, Style::Number));
        }
    }
    s.regions.push(Region { owner: r.cell.clone(), what: format!("the prediction calculator of {}", r.name), first_row: row, last_row: r_t1 });
    r_t1 + 3
}

/// How an input column's values look in the data: the most decimals any
/// value used has (its shortest exact form; `None` beyond ten) and the kind
/// of date when they are dates or times. Read from the source column under
/// the input's header; without one, from the smallest and largest value.
struct Precision {
    decimals: Option<u8>,
    date: Option<DateKind>,
}

/// The decimals of `x` in its shortest exact form, `None` beyond ten.
fn decimals_of(x: f64) -> Option<u8> {
    let t = format!("{x}");
    let d = t.split_once('.').map(|(_, f)| f.len()).unwrap_or(0);
    (d <= 10).then_some(d as u8)
}

fn precision(book: &Workbook, r: &Report, inp: &crate::recipe::Input) -> Precision {
    let most = |xs: &mut dyn Iterator<Item = f64>| xs.map(decimals_of).try_fold(0u8, |a, d| d.map(|d| a.max(d)));
    let column = r.place.as_ref().and_then(|place| {
        let grid = book.sheet(&place.sheet)?;
        let h = place.header_row?;
        let key = inp.name.trim().to_lowercase();
        let col = (0..=place.last_col).find(|&c| matches!(grid.value(h, c), Value::Text(t) if t.trim().to_lowercase() == key))?;
        Some((grid, col, &place.rows))
    });
    if let Some((grid, col, rows)) = column {
        let mut date = None;
        let mut values = rows.iter().filter_map(|&row| match grid.value(row, col) {
            Value::Number(x) => Some(x),
            Value::DateTime(x, k) => {
                date = Some(k);
                Some(x)
            }
            _ => None,
        });
        let decimals = most(&mut values);
        return Precision { decimals, date };
    }
    match &inp.kind {
        InputKind::Numeric { min, max, .. } => Precision { decimals: most(&mut [*min, *max].into_iter()), date: None },
        InputKind::Levels { .. } => Precision { decimals: None, date: None },
    }
}

impl Precision {
    /// `x` rounded to the data's decimals.
    fn round(&self, x: f64) -> f64 {
        match self.decimals {
            Some(d) if x.is_finite() => format!("{x:.*}", usize::from(d)).parse().unwrap_or(x),
            _ => x,
        }
    }

    /// The style of the data's smallest and largest value.
    fn style(&self) -> Style {
        match self.decimals {
            Some(d) if self.date.is_none() => Style::Fixed(d),
            _ => Style::Number,
        }
    }

    /// A cell of this input's value: a date when the data are dates.
    fn cell(&self, v: &NewValue, style: Style) -> OutCell {
        match (v, self.date) {
            (NewValue::Number(x), Some(kind)) if x.is_finite() => OutCell::new(Content::DateTime(*x, kind), if style == Style::Input { style } else { Style::Plain }),
            _ => value_cell(v, style),
        }
    }
}

/// Lays out the `#predict` tables and the calculators on the Intervals
/// sheet from `row`; returns the link target of each request (by index).
fn extras(s: &mut Sheet, mut row: u32, book: &Workbook, reports: &[Report]) -> Vec<Option<String>> {
    let mut links = vec![None; reports.len()];
    row += 2;
    for (i, r) in reports.iter().enumerate() {
        if let Some(HostOutcome::Prediction(p)) = &r.host {
            links[i] = Some(link_to(&s.name, row, 0));
            row = prediction_table(s, row, r, p);
        }
    }
    for r in reports {
        row = calculator(s, row, book, r);
    }
    links
}

