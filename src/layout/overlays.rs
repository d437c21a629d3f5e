//! What is added to the source sheets: the one-line outcome that replaces
//! each request cell (linked to its results, the original text kept in a
//! note) and each fit's per-row columns in the first free columns right of
//! its table.

use super::{link_to, ColumnBlock, OutCell, Overlay, SheetNames, Style};
use crate::cells::{Grid, Value, Workbook};
use crate::report::{HostOutcome, Report, Status};
use std::collections::HashSet;

/// The one line shown in place of a request cell.
pub fn outcome_line(r: &Report) -> String {
    if let (Some(h), false) = (&r.host, r.status == Status::Error) {
        let warn = if r.status == Status::Warning { "; outside the data, see Fits" } else { "" };
        return match h {
            HostOutcome::Prediction(p) => format!("predictions from {} for {} point{}{warn} → Intervals", p.fit, p.rows.len(), if p.rows.len() == 1 { "" } else { "s" }),
            HostOutcome::Comparison(c) => {
                format!("comparison of {} fits of {}; lowest AIC: {} → Comparisons", c.fits.len(), c.response, c.fits.get(c.lowest_aic).map(|f| f.name.as_str()).unwrap_or(""))
            }
        };
    }
    match (&r.status, &r.outcome) {
        (Status::Error, _) | (_, None) => {
            format!("{} — error: {}", r.text.trim(), r.messages.first().map(String::as_str).unwrap_or("the request failed"))
        }
        (_, Some(o)) => {
            let r2 = o.least_squares.map(|l| format!(", R² = {:.4}", l.r_squared)).unwrap_or_default();
            let left = if r.rows_left_out > 0 { format!(" ({} left out)", r.rows_left_out) } else { String::new() };
            let warn = match r.status {
                Status::Warning => format!("; {} warning{}, see Fits", r.messages.len(), if r.messages.len() == 1 { "" } else { "s" }),
                _ => String::new(),
            };
            format!("{}: {} fit of {}, n = {}{left}{r2}{warn} → Coefficients", r.name, r.function, r.response, r.rows_used)
        }
    }
}

/// A figure for a note: six significant digits (the cells keep every digit).
fn short(x: f64) -> String {
    if !x.is_finite() {
        return String::new();
    }
    let s = format!("{x:.5e}");
    match s.split_once('e').map(|(m, e)| (m.parse::<f64>(), e.parse::<i32>())) {
        Some((Ok(m), Ok(e))) if (-4..7).contains(&e) => {
            let d = (5 - e).max(0) as usize;
            format!("{:.d$}", m * 10f64.powi(e))
        }
        _ => s,
    }
}

/// A level as a percentage: 0.95 as "95 %".
fn percent(level: f64) -> String {
    let p = level * 100.0;
    if (p - p.round()).abs() < 1e-9 {
        format!("{} %", p.round())
    } else {
        format!("{p} %")
    }
}

/// The overlay of every source sheet, in source order.
pub(super) fn overlays(book: &Workbook, reports: &[Report], names: &SheetNames, first_coef_row: &[Option<u32>], host_links: &[Option<String>]) -> Vec<Overlay> {
    let mut overlays: Vec<Overlay> = book.sheets.iter().map(|_| Overlay::default()).collect();
    let request_cells: HashSet<(String, u32, u32)> = reports.iter().map(|r| (r.cell.sheet.clone(), r.cell.row, r.cell.col)).collect();
    let mut claimed: Vec<Vec<(u32, u32, u32)>> = vec![Vec::new(); book.sheets.len()]; // (col, first_row, last_row)
    for (i, r) in reports.iter().enumerate() {
        let Some(si) = book.sheets.iter().position(|g| g.name == r.cell.sheet) else { continue };
        let target = match (first_coef_row[i], &host_links[i]) {
            (Some(cr), _) => link_to(&names.coefficients, cr, 0),
            (None, Some(l)) if r.status != Status::Error => l.clone(),
            _ => link_to(&names.fits, i as u32 + 1, 0),
        };
        let style = match r.status {
            Status::Ok => Style::Good,
            Status::Warning => Style::Warning,
            Status::Error => Style::Error,
        };
        let mut cell = OutCell::text(outcome_line(r), style).link(target);
        cell.note = Some(format!("plumb request: {}", r.text.trim()));
        if let (Some(HostOutcome::Prediction(p)), false) = (&r.host, r.status == Status::Error) {
            if let [pr] = p.rows.as_slice() {
                // One point: the request cell holds the predicted value itself, a number other cells can use.
                cell = OutCell::number(pr.at.predicted, if r.status == Status::Ok { Style::Number } else { Style::Warning });
                cell.note = Some(format!(
                    "plumb request: {}\nPredicted {} from the fit {}: {}; {} confidence interval {} to {}; prediction interval {} to {}. Details on {}.",
                    r.text.trim(), r.response, p.fit, short(pr.at.predicted), percent(p.level), short(pr.at.mean_lower), short(pr.at.mean_upper), short(pr.at.new_lower), short(pr.at.new_upper), names.intervals
                ));
            }
        }
        overlays[si].cells.insert((r.cell.row, r.cell.col), cell);
    }
    for r in reports {
        let (Some(o), Some(place)) = (&r.outcome, &r.place) else { continue };
        let Some(si) = book.sheets.iter().position(|g| g.name == place.sheet) else { continue };
        let grid = &book.sheets[si];
        let top = place.header_row.unwrap_or(place.first_row);
        let width = o.rows.len() as u32;
        if width == 0 {
            continue;
        }
        let col = free_columns(grid, &request_cells, &claimed[si], place.last_col + 1, width, top, place.last_row);
        // Past the sheet's last column (a table reaching column XFD) there is
        // no room: the per-row columns are left out; the result sheets still
        // hold the fit.
        if u64::from(col) + u64::from(width) > u64::from(crate::cells::MAX_COLS) {
            continue;
        }
        claimed[si].push((col, top, place.last_row));
        for (k, rc) in o.rows.iter().enumerate() {
            let c = col + k as u32;
            claimed[si].push((c, top, place.last_row));
            overlays[si].widths.insert(c, (rc.label.len() + r.name.len() + 4).clamp(10, 28) as f64);
            overlays[si].blocks.push(ColumnBlock {
                col: c,
                header: place.header_row.map(|h| (h, format!("{} ({})", rc.label, r.name))),
                rows: place.rows.clone(),
                values: rc.values.clone(),
            });
        }
    }

    overlays
}

/// The first run of `width` columns at or right of `start` that are free in
/// rows `top..=bottom`: no source cell, no request, no other fit's columns.
fn free_columns(grid: &Grid, requests: &HashSet<(String, u32, u32)>, claimed: &[(u32, u32, u32)], start: u32, width: u32, top: u32, bottom: u32) -> u32 {
    let busy = |c: u32| {
        claimed.iter().any(|&(cc, a, b)| cc == c && a <= bottom && top <= b)
            || (top..=bottom).any(|r| !matches!(grid.value(r, c), Value::Empty) || grid.formula(r, c).is_some() || requests.contains(&(grid.name.clone(), r, c)))
    };
    let mut c = start;
    'search: loop {
        for k in 0..width {
            if busy(c + k) {
                c = c + k + 1;
                continue 'search;
            }
        }
        return c;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn residual_columns_skip_busy_columns() {
        let mut g = Grid::new("S");
        g.set_text(0, 0, "y");
        g.set_number(5, 4, 1.0); // a source cell in column E
        let claimed = [(1u32, 0u32, 9u32)]; // column B taken by another fit
        let c = free_columns(&g, &HashSet::new(), &claimed, 1, 2, 0, 9);
        assert_eq!(c, 2);
        let c = free_columns(&g, &HashSet::new(), &claimed, 1, 3, 0, 9);
        assert_eq!(c, 5);
    }
}
