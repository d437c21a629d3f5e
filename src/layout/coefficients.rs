//! The Coefficients sheet: one row per coefficient of every fit, with its
//! standard error, test, VIF and standardized coefficient.

use super::{OutCell, Sheet, Style};
use crate::report::Report;

/// The Coefficients sheet and, per report, the row of its first
/// coefficient (other sheets link there).
pub(super) fn sheet(coef_n: &str, reports: &[Report]) -> (Sheet, Vec<Option<u32>>) {
    let mut coef = Sheet::new(coef_n);
    coef.header(
        0,
        &[
            ("Fit", 14.0),
            ("Term", 22.0),
            ("Estimate", 14.0),
            ("Standard error", 15.0),
            ("t statistic", 12.0),
            ("p-value", 11.0),
            ("VIF", 10.0),
            ("Standardized coefficient", 14.0),
            ("Standard errors", 11.0),
        ],
    );
    let mut first_coef_row: Vec<Option<u32>> = Vec::new();
    let mut row = 1u32;
    for r in reports {
        let Some(o) = &r.outcome else {
            first_coef_row.push(None);
            continue;
        };
        first_coef_row.push(Some(row));
        for c in &o.coefficients {
            coef.put(row, 0, OutCell::text(&r.name, Style::Plain));
            coef.put(row, 1, OutCell::text(&c.term, Style::Plain));
            coef.put(row, 2, OutCell::maybe(c.estimate, Style::Number));
            coef.put(row, 3, OutCell::maybe(c.std_error, Style::Number));
            coef.put(row, 4, OutCell::maybe(c.statistic, Style::Number));
            coef.put(row, 5, OutCell::maybe(c.p_value, Style::PValue));
            coef.put(row, 6, OutCell::maybe(c.vif, Style::Number));
            coef.put(row, 7, OutCell::maybe(c.standardized, Style::Number));
            if let Some(kind) = &o.standard_errors {
                coef.put(row, 8, OutCell::text(kind, Style::Plain));
            }
            if c.estimate.is_none() {
                coef.put(row, 9, OutCell::text("not estimable (collinear)", Style::Warning));
            }
            row += 1;
        }
    }
    coef.close_table(0, 9);
    (coef, first_coef_row)
}
