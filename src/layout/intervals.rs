//! The Intervals sheet: the confidence interval of every coefficient, the
//! tables of `#predict` requests, and a prediction calculator for every fit
//! with a predictor (linear in its coefficients or a model formula, on any
//! link): live formulas over the stored coefficients and covariance, cached
//! with the values of [`crate::predict`].

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

/// A result row of the calculator.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Res {
    /// The linear predictor η (a link other than the identity).
    Eta,
    Pred,
    CiLo,
    CiHi,
    PiLo,
    PiHi,
    /// "No prediction interval", with the reason.
    PiNone,
    SeMean,
    SeNew,
    Quantile,
    Sigma,
    Df,
}

/// The response at a predictor value given as formula text `x`: the
/// inverse link as a spreadsheet formula.
fn inverse_link(link: Link, x: &str) -> String {
    match link {
        Link::Identity => x.to_string(),
        Link::Logit => format!("1/(1+EXP(-({x})))"),
        Link::Log => format!("EXP({x})"),
    }
}

/// In place of the calculator of a model that cannot be written as a
/// spreadsheet formula, a line that says so (never a wrong formula).
/// Returns the next free row.
fn no_live_model(s: &mut Sheet, row: u32, r: &Report) -> u32 {
    s.put(row, 0, OutCell::text(format!("Prediction calculator — {}: {}", r.name, r.text.trim()), Style::Title));
    s.put(
        row + 1,
        0,
        OutCell::text(
            "No calculator for this fit: its model cannot be written as a spreadsheet formula of the input and coefficient cells (a number in it is not finite, or it uses a column the calculator has no input for). #predict gives predictions from it.",
            Style::Warning,
        ),
    );
    s.regions.push(Region { owner: r.cell.clone(), what: format!("the prediction calculator of {}", r.name), first_row: row, last_row: row + 1 });
    row + 3
}

/// The prediction calculator of one fit from `row`: input cells, live
/// formulas for the prediction and its intervals, and the coefficients and
/// covariance matrix they read. A predictor linear in its coefficients
/// reads its term values (the model row over the input cells); a model
/// formula is written live over the input and coefficient cells, and its
/// gradient in the coefficients, which the standard error reads in place
/// of the term values, as the live formulas of its symbolic derivatives
/// ([`crate::protocol::Formula::derivative`]). With a link other than the
/// identity the linear predictor η comes first, the predicted value is its
/// inverse link, the confidence interval is formed on η's scale and its
/// ends mapped, and the calculator says that there is no prediction
/// interval; without degrees of freedom the quantile is the normal's.
/// Returns the next free row, or `row` unchanged when the fit cannot
/// predict (no recipe or covariance).
fn calculator(s: &mut Sheet, row: u32, book: &Workbook, r: &Report) -> u32 {
    let (Some(o), Some(rec)) = (&r.outcome, &r.recipe) else { return row };
    let Some(pr) = &o.predictor else { return row };
    let cov = &pr.covariance;
    let p = o.coefficients.len();
    if cov.len() != p || p > CALCULATOR_MAX_TERMS || p == 0 || matches!(&pr.form, PredictorForm::Linear { model_row } if model_row.len() != p) {
        return row;
    }
    let link = pr.link;
    // The interval of a new observation needs a residual spread on the
    // response's scale: least squares only.
    let sigma = pr.residual_sd.filter(|_| link == Link::Identity);
    let mut order = Vec::new();
    if link != Link::Identity {
        order.push(Res::Eta);
    }
    order.extend([Res::Pred, Res::CiLo, Res::CiHi]);
    if sigma.is_some() {
        order.extend([Res::PiLo, Res::PiHi, Res::SeMean, Res::SeNew]);
    } else {
        order.extend([Res::PiNone, Res::SeMean]);
    }
    order.push(Res::Quantile);
    if sigma.is_some() {
        order.push(Res::Sigma);
    }
    if pr.df.is_some() {
        order.push(Res::Df);
    }
    let k = rec.inputs.len() as u32;
    let r_in = row + 3;
    let r_lvl = r_in + k;
    let r_res = r_lvl + 1;
    let r_th = r_res + order.len() as u32 + 1;
    let r_across = r_th + 1;
    let r_t0 = r_th + 2;
    let r_t1 = r_t0 + p as u32 - 1;
    let (bcol, xcol, ucol, vcol0) = (1u32, 2u32, 3u32, 4u32);
    let looks: Vec<Precision> = rec.inputs.iter().map(|inp| precision(book, r, inp)).collect();
    let defaults: Vec<NewValue> = (0..rec.inputs.len())
        .map(|i| match rec.default_value(i) {
            NewValue::Number(x) => NewValue::Number(looks[i].round(x)),
            v => v,
        })
        .collect();
    let cells: Vec<String> = (0..k).map(|i| abs(r_in + i, 1)).collect();
    // The request's columns as formulas over the input cells, then the
    // fit's model row (or model and gradient) over those and the
    // coefficient cells.
    let Ok(cols) = rec.column_formulas(&defaults, &cells) else { return row };
    let col_values: Vec<f64> = cols.iter().map(|c| c.0).collect();
    let col_texts: Vec<String> = cols.into_iter().map(|c| c.1).collect();
    let b_cells: Vec<String> = (0..p as u32).map(|j| abs(r_t0 + j, bcol)).collect();
    let range = |c0: u32, r0: u32, c1: u32, r1: u32| format!("{}:{}", abs(r0, c0), abs(r1, c1));
    let (eta_text, term_texts) = match &pr.form {
        PredictorForm::Linear { model_row } => {
            let Some(t) = model_row.iter().map(|f| sheet_formula(f, &col_texts, &[])).collect::<Option<Vec<String>>>() else { return row };
            (format!("SUMPRODUCT({},{})", range(bcol, r_t0, bcol, r_t1), range(xcol, r_t0, xcol, r_t1)), t)
        }
        PredictorForm::Model { formula } => {
            let eta = sheet_formula(formula, &col_texts, &b_cells);
            let t = (0..p).map(|j| sheet_formula(&formula.derivative(j), &col_texts, &b_cells)).collect::<Option<Vec<String>>>();
            let (Some(eta), Some(t)) = (eta, t) else { return no_live_model(s, row, r) };
            (eta, t)
        }
    };
    let linear = matches!(pr.form, PredictorForm::Linear { .. });
    let b: Vec<f64> = o.coefficients.iter().map(|c| c.estimate.unwrap_or(0.0)).collect();
    let Ok((eta, x)) = predict::gradient(pr, &b, &col_values) else { return row };
    let Ok(pt) = predict::at(pr, &b, &col_values, r.level) else { return row };
    let xs: Vec<(f64, String)> = x.iter().copied().zip(term_texts).collect();

    s.put(row, 0, OutCell::text(format!("Prediction calculator — {}: {}", r.name, r.text.trim()), Style::Title));
    let follows = if sigma.is_some() {
        "the prediction and both intervals below follow"
    } else if link == Link::Identity {
        "the prediction and its confidence interval below follow"
    } else {
        "the prediction and its confidence interval below follow (the interval is formed on the linear predictor's scale and its ends mapped to the response's)"
    };
    s.put(
        row + 1,
        0,
        OutCell::text(format!("Type new values into the shaded cells (a text column offers its levels in a list); {follows}. They start at the data's means and reference levels."), Style::Plain),
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
    let q = predict::quantile(r.level, pr.df);
    let vcol1 = vcol0 + p as u32 - 1;
    let at = |w: Res| abs(r_res + order.iter().position(|x| *x == w).unwrap_or(0) as u32, 1);
    let (c_eta, c_pred, c_sem, c_sen, c_q, c_s, c_df) = (at(Res::Eta), at(Res::Pred), at(Res::SeMean), at(Res::SeNew), at(Res::Quantile), at(Res::Sigma), at(Res::Df));
    let lvl = abs(r_lvl, 1);
    // On η's scale, mapped: the confidence interval's ends.
    let centre = if link == Link::Identity { c_pred.clone() } else { c_eta.clone() };
    let end = |sign: char| inverse_link(link, &format!("{centre}{sign}{c_q}*{c_sem}"));
    let no_interval = match link {
        Link::Identity => "none: the fit gives no residual spread for a new observation",
        Link::Logit => "none: a new outcome is an event or not, with the predicted value as its probability",
        Link::Log => "none: the fit gives no spread of a new observation around the predicted value",
    };
    let term_word = if linear { "Term value" } else { "Gradient" };
    for (i, w) in order.iter().enumerate() {
        let rr = r_res + i as u32;
        let (label, f, v): (String, String, f64) = match w {
            Res::Eta => (
                if link == Link::Logit { "Linear predictor (log-odds)" } else { "Linear predictor (log of the predicted value)" }.into(),
                eta_text.clone(),
                eta,
            ),
            Res::Pred => ("Predicted value".into(), if link == Link::Identity { eta_text.clone() } else { inverse_link(link, &c_eta) }, pt.predicted),
            Res::CiLo => ("Confidence interval: from".into(), end('-'), pt.mean_lower),
            Res::CiHi => ("Confidence interval: to".into(), end('+'), pt.mean_upper),
            Res::PiLo => ("Prediction interval: from".into(), format!("{c_pred}-{c_q}*{c_sen}"), pt.new_lower),
            Res::PiHi => ("Prediction interval: to".into(), format!("{c_pred}+{c_q}*{c_sen}"), pt.new_upper),
            Res::PiNone => {
                s.put(rr, 0, OutCell::text("Prediction interval", Style::Plain));
                s.put(rr, 1, OutCell::text(no_interval, Style::Plain));
                continue;
            }
            Res::SeMean => (
                if link == Link::Identity { "Standard error of the fitted value" } else { "Standard error of the linear predictor" }.into(),
                format!("SQRT(MAX(0,SUMPRODUCT({},{})))", range(xcol, r_t0, xcol, r_t1), range(ucol, r_t0, ucol, r_t1)),
                pt.se_mean,
            ),
            Res::SeNew => ("Standard error of a new observation".into(), format!("SQRT({c_s}^2+{c_sem}^2)"), pt.se_new),
            Res::Quantile => match pr.df {
                Some(_) => ("t quantile".into(), format!("TINV(1-{lvl},{c_df})"), q),
                None => ("Normal quantile".into(), format!("NORMSINV((1+{lvl})/2)"), q),
            },
            Res::Sigma => ("Residual standard error".into(), String::new(), sigma.unwrap_or(f64::NAN)),
            Res::Df => ("Residual degrees of freedom".into(), String::new(), pr.df.unwrap_or(f64::NAN)),
        };
        s.put(rr, 0, OutCell::text(label, if *w == Res::Pred { Style::Header } else { Style::Plain }));
        if f.is_empty() {
            s.put(rr, 1, OutCell::number(v, if *w == Res::Df { Style::Integer } else { Style::Number }));
        } else {
            s.put(rr, 1, formula(f, v, Style::General));
        }
    }
    if o.coefficients.iter().any(|c| c.estimate.is_none()) {
        s.put(r_th - 1, 0, OutCell::text("A term without an estimate (collinear) counts as 0.", Style::Warning));
    }

    // Covariance × term values cancel to rounding noise (1e-19, say) at
    // some inputs: they show to six significant digits of the column's
    // scale, Σ|cov·x|, so that noise shows as 0 (the cell keeps its value).
    let scale = (0..p).map(|i| (0..p).map(|j| (cov[i][j] * x[j]).abs()).sum::<f64>()).fold(0.0, f64::max);
    let u_style = if scale > 0.0 && scale.is_finite() { Style::Fixed((5 - scale.log10().floor() as i32).clamp(0, 15) as u8) } else { Style::General };

    // The term table: coefficients, term values (or the gradient), covariance.
    let heads = if linear {
        ["Term", "Coefficient", "Term value", "Covariance × term values"]
    } else {
        ["Term", "Coefficient", "Gradient (change of the prediction per unit of the coefficient)", "Covariance × gradient"]
    };
    for (c, h) in heads.iter().enumerate() {
        s.put(r_th, c as u32, OutCell::text(*h, Style::Header));
    }
    s.put(r_across, 0, OutCell::text(if linear { "Term values, across".to_string() } else { format!("{term_word}, across") }, Style::Plain));
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


#[cfg(test)]
mod tests {
    use super::*;
    use crate::cells::CellAddress;
    use crate::protocol::{Coefficient, FitOutcome, Formula, Function, Predictor};
    use crate::recipe::{Input, Node, Recipe};
    use crate::report::Status;

    /// A hand-made report of one numeric input `Dose` (0 to 10, mean 5:
    /// the calculator starts at 5) with this predictor; the figures are
    /// invented, only the calculator's agreement with `predict` is checked.
    fn report(form: PredictorForm, link: Link, residual_sd: Option<f64>, df: Option<f64>, estimates: &[f64]) -> Report {
        let coefficient = |j: usize, e: f64| Coefficient { term: format!("b{j}"), estimate: Some(e), std_error: None, statistic: None, p_value: None, lower: None, upper: None, vif: None, standardized: None, remark: None, term_p_value: None };
        let p = estimates.len();
        let covariance: Vec<Vec<f64>> = (0..p).map(|i| (0..p).map(|j| if i == j { 0.04 * (i + 1) as f64 } else { -0.005 }).collect()).collect();
        Report {
            name: "doses".into(),
            function: "invented".into(),
            cell: CellAddress::new("Data", 0, 5),
            text: "#invented(Event, Dose)".into(),
            response: "Event".into(),
            terms: vec!["Dose".into()],
            level: 0.9,
            rows_used: 30,
            rows_left_out: 0,
            status: Status::Ok,
            messages: Vec::new(),
            notes: Vec::new(),
            outcome: Some(FitOutcome {
                coefficients: estimates.iter().enumerate().map(|(j, e)| coefficient(j, *e)).collect(),
                predictor: Some(Predictor { form, covariance, link, residual_sd, df }),
                ..Default::default()
            }),
            place: None,
            recipe: Some(Recipe {
                inputs: vec![Input { name: "Dose".into(), kind: InputKind::Numeric { min: 0.0, max: 10.0, mean: 5.0 } }],
                terms: vec![Node::Input(0)],
                columns: vec!["Dose".into()],
                single_input: None,
            }),
            host: None,
        }
    }

    /// The calculator of `r` laid out: (label, formula or text, cached or
    /// plain value) of the cell beside each label of column A.
    fn laid_out(r: &Report) -> (Sheet, Vec<(String, String, f64)>) {
        let mut s = Sheet::new("Intervals");
        let next = calculator(&mut s, 0, &Workbook { sheets: Vec::new() }, r);
        assert!(next > 0, "a calculator is laid out");
        let rows = (0..next)
            .filter_map(|row| {
                let Some(OutCell { content: Content::Text(label), .. }) = s.cells.get(&(row, 0)) else { return None };
                match s.cells.get(&(row, 1)).map(|c| &c.content) {
                    Some(Content::Formula(f, Cached::Number(v))) => Some((label.clone(), f.clone(), *v)),
                    Some(Content::Number(v)) => Some((label.clone(), String::new(), *v)),
                    Some(Content::Text(t)) => Some((label.clone(), t.clone(), f64::NAN)),
                    _ => None,
                }
            })
            .collect();
        (s, rows)
    }

    fn find<'a>(rows: &'a [(String, String, f64)], label: &str) -> &'a (String, String, f64) {
        rows.iter().find(|r| r.0 == label).unwrap_or_else(|| panic!("no row '{label}' in {rows:?}"))
    }

    #[test]
    fn a_logit_calculator_maps_its_confidence_interval_and_has_no_prediction_interval() {
        let form = PredictorForm::Linear { model_row: vec![Formula::Number(1.0), Formula::Column(0)] };
        let r = report(form, Link::Logit, None, None, &[-2.0, 0.45]);
        let (_, rows) = laid_out(&r);
        let pr = r.outcome.as_ref().and_then(|o| o.predictor.as_ref()).expect("a predictor");
        let pt = predict::at(pr, &[-2.0, 0.45], &[5.0], 0.9).expect("predicts");
        // The cached values are predict's, at the starting value Dose = 5.
        assert_eq!(find(&rows, "Predicted value").2, pt.predicted);
        assert_eq!(find(&rows, "Confidence interval: from").2, pt.mean_lower);
        assert_eq!(find(&rows, "Confidence interval: to").2, pt.mean_upper);
        assert_eq!(find(&rows, "Standard error of the linear predictor").2, pt.se_mean);
        assert_eq!(find(&rows, "Linear predictor (log-odds)").2, -2.0 + 0.45 * 5.0);
        // Normal quantile at 0.9: 1.644853626951 (scipy.stats.norm.ppf(0.95), from memory).
        let (_, q, v) = find(&rows, "Normal quantile");
        assert!((v - 1.644853626951).abs() < 1e-11 && q.starts_with("NORMSINV((1+"), "{q} {v}");
        // Rows: title, help, headers, Dose ($B$4), level, then η ($B$6).
        assert_eq!(find(&rows, "Predicted value").1, "1/(1+EXP(-($B$6)))");
        let (_, lo, _) = find(&rows, "Confidence interval: from");
        assert!(lo.starts_with("1/(1+EXP(-(") && lo.contains('-') && lo.contains('*'), "{lo}");
        assert!(find(&rows, "Prediction interval").1.starts_with("none"));
        assert!(!rows.iter().any(|r| r.0.starts_with("Prediction interval:") || r.0 == "Residual degrees of freedom"));
        // The logit's mapped ends bracket the probability (common practice).
        assert!(pt.mean_lower < pt.predicted && pt.predicted < pt.mean_upper && pt.mean_upper < 1.0);
    }

    #[test]
    fn a_log_link_calculator_uses_the_exponential_and_t_when_there_are_degrees_of_freedom() {
        let form = PredictorForm::Linear { model_row: vec![Formula::Number(1.0), Formula::Column(0)] };
        let r = report(form, Link::Log, None, Some(12.0), &[0.3, 0.1]);
        let (_, rows) = laid_out(&r);
        let pr = r.outcome.as_ref().and_then(|o| o.predictor.as_ref()).expect("a predictor");
        let pt = predict::at(pr, &[0.3, 0.1], &[5.0], 0.9).expect("predicts");
        assert_eq!(find(&rows, "Predicted value").2, pt.predicted);
        assert!(find(&rows, "Predicted value").1.starts_with("EXP("));
        assert_eq!(find(&rows, "Confidence interval: to").2, pt.mean_upper);
        assert!(find(&rows, "t quantile").1.starts_with("TINV("));
        assert_eq!(find(&rows, "Residual degrees of freedom").2, 12.0);
    }

    #[test]
    fn a_model_without_a_spreadsheet_formula_gets_a_line_saying_so() {
        // A model naming a column (3) the recipe has no input for.
        let f = Formula::Mul(Box::new(Formula::Parameter(0)), Box::new(Formula::Column(3)));
        let r = report(PredictorForm::Model { formula: f }, Link::Identity, Some(0.8), Some(27.0), &[2.0]);
        let mut s = Sheet::new("Intervals");
        assert_eq!(calculator(&mut s, 0, &Workbook { sheets: Vec::new() }, &r), 3);
        assert!(matches!(s.cells.get(&(1, 0)).map(|c| &c.content), Some(Content::Text(t)) if t.starts_with("No calculator for this fit")));
        assert!(!s.cells.values().any(|c| matches!(c.content, Content::Formula(..))), "no formula is written");
    }

    #[test]
    fn a_model_calculator_writes_the_model_and_its_gradient_live() {
        // a·exp(−k·Dose) + c at a = 40, k = 0.2, c = 5 (invented figures).
        let b = |f: Formula| Box::new(f);
        let e = Formula::Call(Function::Exp, b(Formula::Neg(b(Formula::Mul(b(Formula::Parameter(1)), b(Formula::Column(0)))))));
        let f = Formula::Add(b(Formula::Mul(b(Formula::Parameter(0)), b(e))), b(Formula::Parameter(2)));
        let r = report(PredictorForm::Model { formula: f }, Link::Identity, Some(0.8), Some(27.0), &[40.0, 0.2, 5.0]);
        let (s, rows) = laid_out(&r);
        let pr = r.outcome.as_ref().and_then(|o| o.predictor.as_ref()).expect("a predictor");
        let pt = predict::at(pr, &[40.0, 0.2, 5.0], &[5.0], 0.9).expect("predicts");
        for (label, want) in [("Predicted value", pt.predicted), ("Confidence interval: from", pt.mean_lower), ("Prediction interval: to", pt.new_upper), ("Standard error of the fitted value", pt.se_mean)] {
            assert_eq!(find(&rows, label).2, want, "{label}");
        }
        // The model over the input cell $B$4 and the coefficient cells.
        let (_, f, _) = find(&rows, "Predicted value");
        assert!(f.contains("EXP(") && f.contains("$B$4") && !f.contains("SUMPRODUCT"), "{f}");
        // The gradient column: ∂/∂c is the number 1, ∂/∂a is exp(−k·Dose).
        let grads: Vec<(String, f64)> = s
            .cells
            .iter()
            .filter(|((_, c), _)| *c == 2)
            .filter_map(|(_, cell)| match &cell.content {
                Content::Formula(f, Cached::Number(v)) => Some((f.clone(), *v)),
                _ => None,
            })
            .collect();
        assert_eq!(grads.len(), 3, "{grads:?}");
        assert!((grads[0].1 - (-1.0f64).exp()).abs() < 1e-15 && grads[0].0.starts_with("EXP("), "{grads:?}");
        assert_eq!(grads[2], ("1".to_string(), 1.0));
    }
}
