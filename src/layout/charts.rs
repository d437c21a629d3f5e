//! The Charts sheet: per fit, the data with the fitted line (one numeric
//! input) or observed against fitted, residuals against fitted, and a
//! normal quantile plot, reading tables at the right of the sheet. The
//! columns come by their roles ([`RowRole`]), never by label.

use super::{ChartSpec, OutCell, SeriesSpec, Sheet, Style};
use crate::numeric::normal_plot_positions;
use crate::protocol::RowRole;
use crate::report::Report;

/// Above this many rows a chart plots every k-th point (in the sorted order
/// of its table), `k = ⌈n / CHART_POINTS⌉`, so the workbook stays quick to
/// open; the residual columns beside the data keep every row.
pub const CHART_POINTS: usize = 20_000;

/// Every k-th index of `0..n` (and the last), `k = ⌈n / CHART_POINTS⌉`.
pub fn chart_subset(n: usize) -> Vec<usize> {
    let k = n.div_ceil(CHART_POINTS).max(1);
    let mut v: Vec<usize> = (0..n).step_by(k).collect();
    if n > 0 && v.last() != Some(&(n - 1)) {
        v.push(n - 1);
    }
    v
}

/// Width of one fit's chart data table on the Charts sheet, plus a gap.
const DATA_COLS: u32 = 9;
/// Columns the charts take (three charts of eight default columns), the
/// printed part of the sheet.
const CHART_COLS: u32 = 24;
/// First column of the chart data tables (right of the charts).
const DATA_COL0: u32 = 26;
/// Rows per fit's block of charts.
const BLOCK_ROWS: u32 = 19;

/// The Charts sheet: per fit, the data with the fitted line (one numeric
/// input) or observed against fitted, residuals against fitted, and a
/// normal quantile plot of the internally studentized residuals; the cells they read
/// are tables at the right of the sheet. `None` when no fit has per-row
/// results.
pub(super) fn sheet(name: &str, reports: &[Report]) -> Option<Sheet> {
    let mut s = Sheet::new(name);
    let sheet_name = name.to_string();
    let mut block = 0u32;
    for r in reports {
        let Some(o) = &r.outcome else { continue };
        let col = |role: RowRole| o.row_column(&role).map(|c| c.values.clone());
        let (Some(fitted), Some(resid)) = (col(RowRole::Fitted), col(RowRole::Residual)) else { continue };
        let std_res = col(RowRole::StandardizedResidual).unwrap_or_else(|| vec![f64::NAN; fitted.len()]);
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
        let heads = [x_name.as_str(), "Observed", "Fitted", "Residual", "Normal quantile", "Internally studentized residual (sorted)", "Zero line: fitted", "Zero line: residual"];
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
        // The zero line of the residual chart: from the smallest fitted
        // value to the largest, at 0.
        let (lo, hi) = fitted.iter().filter(|v| v.is_finite()).fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| (a.min(v), b.max(v)));
        for (k, x) in [lo, hi].into_iter().enumerate() {
            s.put(2 + k as u32, c0 + 6, OutCell::number(x, Style::Number));
            s.put(2 + k as u32, c0 + 7, OutCell::number(0.0, Style::Number));
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
                owner: Some(r.cell.clone()),
            }
        } else {
            ChartSpec {
                anchor: (top + 1, 0),
                title: format!("Observed {} against fitted", r.response),
                x_label: format!("Fitted {}", r.response),
                y_label: format!("Observed {}", r.response),
                series: vec![series("Observed", c0 + 2, c0 + 1, last, false), series("Where observed equals fitted", c0 + 2, c0 + 2, last, true)],
                owner: Some(r.cell.clone()),
            }
        };
        s.charts.push(first);
        s.charts.push(ChartSpec {
            anchor: (top + 1, 8),
            title: "Residuals against fitted values".into(),
            x_label: format!("Fitted {}", r.response),
            y_label: "Residual (observed − fitted)".into(),
            series: vec![series("Residual", c0 + 2, c0 + 3, last, false), series("Zero", c0 + 6, c0 + 7, 3, true)],
            owner: Some(r.cell.clone()),
        });
        if !sr.is_empty() {
            s.charts.push(ChartSpec {
                anchor: (top + 1, 16),
                title: "Normal quantile plot of the internally studentized residuals".into(),
                x_label: "Expected for normal residuals (normal quantile, Blom positions)".into(),
                y_label: "Internally studentized residual".into(),
                series: vec![series("Internally studentized residual", c0 + 4, c0 + 5, last_q, false), series("Where normal residuals would lie", c0 + 4, c0 + 4, last_q, true)],
                owner: Some(r.cell.clone()),
            });
        }
        block += 1;
    }
    if block == 0 {
        return None;
    }
    s.print.area = Some(crate::cells::CellRange { first_row: 0, first_col: 0, last_row: block * BLOCK_ROWS, last_col: CHART_COLS - 1 });
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cells::CellAddress;
    use crate::layout::Content;
    use crate::report::Status;
    use crate::protocol::{FitOutcome, RowColumn};

    fn report(n: usize) -> Report {
        let fitted: Vec<f64> = (0..n).map(|i| i as f64).collect();
        let resid: Vec<f64> = (0..n).map(|i| ((i * 7919) % 13) as f64 - 6.0).collect();
        let col = RowColumn::new;
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
            notes: Vec::new(),
            outcome: Some(FitOutcome { rows: vec![col(RowRole::Fitted, fitted), col(RowRole::Residual, resid.clone()), col(RowRole::StandardizedResidual, resid)], ..Default::default() }),
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
        let s = sheet("Charts", &[report(45_001)]).unwrap();
        assert_eq!(s.charts.len(), 3);
        for c in &s.charts {
            for ser in c.series.iter().filter(|ser| ser.name != "Zero") {
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
        let s = sheet("Charts", &[report(30)]).unwrap();
        assert!(s.charts.iter().all(|c| c.series.iter().filter(|ser| ser.name != "Zero").all(|ser| ser.last_row == 31)));
        // The residual chart's zero line runs from the smallest fitted value
        // (0) to the largest (29) at 0.
        let zero = &s.charts[1].series[1];
        assert_eq!((zero.name.as_str(), zero.first_row, zero.last_row, zero.line), ("Zero", 2, 3, true));
        let at = |r: u32, c: u32| s.cells[&(r, c)].content.clone();
        assert_eq!([at(2, zero.x_col), at(3, zero.x_col), at(2, zero.y_col), at(3, zero.y_col)], [Content::Number(0.0), Content::Number(29.0), Content::Number(0.0), Content::Number(0.0)]);
        // Observed = fitted + residual, sorted by fitted: row 0 has fitted 0 and residual 0 % 13 − 6 = −6.
        let obs = s.charts[0].series[0].y_col;
        assert_eq!(s.cells[&(2, obs)].content, Content::Number(-6.0));
    }
}
