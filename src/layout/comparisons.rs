//! The Comparisons sheet: the tables of `#compare` requests.

use super::{link_to, OutCell, Sheet, Style};
use crate::report::{Comparison, HostOutcome, Report};

/// The comparison of one `#compare` request from `row`; returns the next
/// free row.
fn comparison_table(s: &mut Sheet, mut row: u32, r: &Report, c: &Comparison) -> u32 {
    s.put(row, 0, OutCell::text(format!("Comparison — {}", r.text.trim()), Style::Title));
    row += 1;
    s.put(row, 0, OutCell::text(format!("Fits of {} on the same {} rows.", c.response, r.rows_used), Style::Plain));
    row += 1;
    for (j, h) in ["Fit", "Rows used", "Coefficients estimated", "R²", "Adjusted R²", "Residual standard error", "AIC", "BIC", "Lowest AIC"].iter().enumerate() {
        s.put(row, j as u32, OutCell::text(*h, Style::Header));
    }
    row += 1;
    for (i, f) in c.fits.iter().enumerate() {
        s.put(row, 0, OutCell::text(&f.name, Style::Plain));
        s.put(row, 1, OutCell::number(f.n, Style::Integer));
        s.put(row, 2, OutCell::number(f.parameters, Style::Integer));
        for (j, (x, style)) in [(f.r_squared, Style::Fixed(4)), (f.adj_r_squared, Style::Fixed(4)), (f.rmse, Style::Number), (f.aic, Style::Fixed(3)), (f.bic, Style::Fixed(3))].iter().enumerate() {
            s.put(row, 3 + j as u32, OutCell::number(*x, *style));
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
        s.put(row, 0, OutCell::text("Nested fits: does the larger fit explain significantly more? (F test)", Style::Title));
        row += 1;
        for (j, h) in ["Smaller fit", "Larger fit", "F statistic", "Numerator df", "Denominator df", "p-value"].iter().enumerate() {
            s.put(row, j as u32, OutCell::text(*h, Style::Header));
        }
        row += 1;
        for t in &c.nested {
            s.put(row, 0, OutCell::text(&t.smaller, Style::Plain));
            s.put(row, 1, OutCell::text(&t.larger, Style::Plain));
            s.put(row, 2, OutCell::number(t.f, Style::Fixed(2)));
            s.put(row, 3, OutCell::number(t.df_num, Style::Integer));
            s.put(row, 4, OutCell::number(t.df_den, Style::Integer));
            s.put(row, 5, OutCell::number(t.p_value, Style::PValue));
            row += 1;
        }
        row += 1;
    }
    // One sentence a row: a paragraph would need a column of its own.
    for line in [
        "How to choose: prefer the fit with the lower AIC (or BIC, which penalises extra terms more); a difference below about 2 is slight.",
        "For nested fits, a small p-value of F (say below 0.05) says the extra terms help.",
        "Prefer the simpler fit when the figures are close, and check its residuals.",
        "The F tests here use the classic residual variance even when a fit asked for errors=hc*.",
    ] {
        s.put(row, 0, OutCell::text(line, Style::Plain));
        row += 1;
    }
    row += 1;
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

/// The Comparisons sheet, when any `#compare` succeeded, with each request's
/// link target (by index).
pub(super) fn sheet(name: &str, reports: &[Report]) -> (Option<Sheet>, Vec<Option<String>>) {
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

