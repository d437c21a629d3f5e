//! The Coefficients sheet: one row per coefficient of every fit, with its
//! standard error and confidence interval beside it, its t test, the
//! p-value of its whole term's joint test (a text column's indicators
//! together), VIF and standardized coefficient, and why any figure is left
//! blank.

use super::{OutCell, Sheet, Style};
use crate::protocol::Coefficient;
use crate::report::Report;

/// The style of an estimate and of the figures on its scale (standard
/// error, interval ends): a common number of decimals showing three
/// significant digits of the standard error, or six significant digits
/// when there is no standard error or it needs more than ten decimals.
pub(super) fn estimate_style(c: &Coefficient) -> Style {
    match c.std_error {
        Some(se) if se.is_finite() && se > 0.0 => {
            let d = 2 - se.log10().floor() as i32;
            if (0..=10).contains(&d) {
                Style::Fixed(d as u8)
            } else {
                Style::Number
            }
        }
        _ => Style::Number,
    }
}

/// The Coefficients sheet and, per report, the row of its first
/// coefficient (other sheets link there).
pub(super) fn sheet(coef_n: &str, reports: &[Report]) -> (Sheet, Vec<Option<u32>>) {
    let mut coef = Sheet::new(coef_n);
    let headers = [
        ("Fit", 14.0),
        ("Term", 22.0),
        ("Estimate", 14.0),
        ("Standard error", 15.0),
        ("Level", 7.0),
        ("Confidence interval: from", 14.0),
        ("Confidence interval: to", 14.0),
        ("t statistic", 11.0),
        ("p-value", 11.0),
        ("p-value of the whole term", 12.0),
        ("VIF", 9.0),
        ("Standardized coefficient", 14.0),
        ("Standard-error method", 12.0),
        ("Remark", 45.0),
    ];
    coef.header(0, &headers);
    let mut first_coef_row: Vec<Option<u32>> = Vec::new();
    let mut row = 1u32;
    for r in reports {
        let Some(o) = &r.outcome else {
            first_coef_row.push(None);
            continue;
        };
        first_coef_row.push(Some(row));
        for c in &o.coefficients {
            let est = estimate_style(c);
            coef.put(row, 0, OutCell::text(&r.name, Style::Plain));
            coef.put(row, 1, OutCell::text(&c.term, Style::Plain));
            coef.put(row, 2, OutCell::maybe(c.estimate, est));
            coef.put(row, 3, OutCell::maybe(c.std_error, est));
            coef.put(row, 4, OutCell::number(r.level, Style::Percent));
            coef.put(row, 5, OutCell::maybe(c.lower, est));
            coef.put(row, 6, OutCell::maybe(c.upper, est));
            coef.put(row, 7, OutCell::maybe(c.statistic, Style::Fixed(2)));
            coef.put(row, 8, OutCell::maybe(c.p_value, Style::PValue));
            coef.put(row, 9, OutCell::maybe(c.term_p_value, Style::PValue));
            coef.put(row, 10, OutCell::maybe(c.vif, Style::Fixed(2)));
            coef.put(row, 11, OutCell::maybe(c.standardized, Style::Fixed(3)));
            if let Some(kind) = &o.standard_errors {
                coef.put(row, 12, OutCell::text(kind, Style::Plain));
            }
            if c.estimate.is_none() {
                coef.put(row, 13, OutCell::text("not estimable (collinear)", Style::Warning));
            } else if let Some(why) = &c.remark {
                coef.put(row, 13, OutCell::text(why, Style::Wrap));
            }
            row += 1;
        }
    }
    coef.close_table(0, headers.len() as u32);
    (coef, first_coef_row)
}
