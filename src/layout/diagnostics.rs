//! The Diagnostics sheet: a block per fit, its statistics grouped under the
//! headings the fit gives them, each shown in the number format the fit
//! declares, a statistic of one row linked to that row, then the fit's
//! warnings and notes.

use super::{link_to, OutCell, Sheet, Style};
use crate::protocol::NumberFormat;
use crate::report::Report;

/// The Diagnostics sheet.
pub(super) fn sheet(diag_n: &str, reports: &[Report]) -> Sheet {
    let mut diag = Sheet::new(diag_n);
    diag.widths.insert(0, 40.0);
    diag.widths.insert(1, 18.0);
    diag.widths.insert(2, 18.0);
    let mut drow = 0u32;
    for r in reports {
        let Some(o) = &r.outcome else { continue };
        diag.put(drow, 0, OutCell::text(format!("{} — {}", r.name, r.text.trim()), Style::Title));
        drow += 1;
        let mut group = "";
        for s in &o.statistics {
            if s.group != group {
                group = &s.group;
                diag.put(drow, 0, OutCell::text(group, Style::Header));
                diag.put(drow, 1, OutCell::text("Value", Style::Header));
                drow += 1;
            }
            diag.put(drow, 0, OutCell::text(&s.label, Style::Plain));
            let style = match s.format {
                NumberFormat::PValue => Style::PValue,
                NumberFormat::Integer => Style::Integer,
                NumberFormat::Decimal => Style::Number,
            };
            diag.put(drow, 1, OutCell::number(s.value, style));
            // A statistic of one row: name the row on its sheet, linked.
            if let (Some(&i), Some(place)) = (o.statistic_rows.get(&s.key), &r.place) {
                if let Some(&sr) = place.rows.get(i) {
                    let cell = OutCell::text(format!("row {} of {}", sr + 1, place.sheet), Style::Link).link(link_to(&place.sheet, sr, place.last_col));
                    diag.put(drow, 2, cell);
                }
            }
            drow += 1;
        }
        if !o.warnings.is_empty() || !o.notes.is_empty() || r.rows_left_out > 0 {
            diag.put(drow, 0, OutCell::text("Warnings and notes", Style::Header));
            drow += 1;
            for m in r.messages.iter().chain(&o.notes) {
                diag.put(drow, 0, OutCell::text(m, Style::Warning));
                drow += 1;
            }
        }
        drow += 1;
    }

    diag
}
