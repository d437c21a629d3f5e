//! The Fits sheet: one row per request, with its status and messages.

use super::{link_to, OutCell, Sheet, SheetNames, Style};
use crate::report::{Report, Status};

/// The Fits sheet; each fit's name links to its first coefficient row.
/// Each request cell links to the cell on its sheet, under the sheet's
/// output name.
pub(super) fn sheet(names: &SheetNames, reports: &[Report], first_coef_row: &[Option<u32>]) -> Sheet {
    let mut fits = Sheet::new(&names.fits);
    fits.header(
        0,
        &[("Fit", 14.0), ("Function", 10.0), ("Response", 14.0), ("Terms, or the fits it uses", 30.0), ("Request cell", 14.0), ("Rows used", 10.0), ("Rows left out", 13.0), ("Status", 9.0), ("Messages", 60.0)],
    );
    for (i, r) in reports.iter().enumerate() {
        let row = i as u32 + 1;
        let mut name = OutCell::text(&r.name, Style::Plain);
        if let Some(cr) = first_coef_row[i] {
            name = OutCell::text(&r.name, Style::Link).link(link_to(&names.coefficients, cr, 0));
        }
        fits.put(row, 0, name);
        fits.put(row, 1, OutCell::text(&r.function, Style::Plain));
        fits.put(row, 2, OutCell::text(&r.response, Style::Plain));
        // A host function's "terms" are the fits it reads: listed as such,
        // not joined with + as if they were a model.
        let terms = if r.host.is_some() {
            if r.terms.is_empty() { String::new() } else { format!("{}: {}", if r.terms.len() == 1 { "fit" } else { "fits" }, r.terms.join(", ")) }
        } else {
            r.terms.join(" + ")
        };
        fits.put(row, 3, OutCell::text(terms, Style::Plain));
        fits.put(row, 4, OutCell::text(r.cell.to_string(), Style::Link).link(link_to(names.source(&r.cell.sheet), r.cell.row, r.cell.col)));
        if r.outcome.is_some() {
            fits.put(row, 5, OutCell::number(r.rows_used as f64, Style::Integer));
            fits.put(row, 6, OutCell::number(r.rows_left_out as f64, Style::Integer));
        }
        let st = match r.status {
            Status::Ok => Style::Good,
            Status::Warning => Style::Warning,
            Status::Error => Style::Error,
        };
        fits.put(row, 7, OutCell::text(r.status.as_str(), st));
        let notes = r.notes.iter().map(|n| format!("note: {n}"));
        // One message a line, wrapped in the column.
        fits.put(row, 8, OutCell::text(r.messages.iter().cloned().chain(notes).collect::<Vec<_>>().join("\n"), Style::Wrap));
    }
    fits.close_table(0, 9);

    fits
}
