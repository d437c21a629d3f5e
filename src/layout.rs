//! Arranging outcomes into an abstract workbook.
//!
//! Layout decides what goes where — the result sheets, the one-line outcome
//! at each request cell, the residual columns beside each fit's data — in a
//! plain model of sheets, cells, styles and links. It knows nothing of any
//! writer library, so it is tested without files; `write` renders it.
//!
//! Source sheets are not copied into the model: they get an [`Overlay`] of
//! replaced cells and added column blocks, which the writer merges with the
//! source grid row by row.

use crate::cells::{quote_sheet_name, CellAddress, CellRange, DateKind, ErrorValue, Grid, Value, Workbook};
use crate::host::HostOutcome;
use crate::protocol::FitOutcome;
use crate::recipe::Recipe;
use std::collections::{BTreeMap, HashSet};

/// How a cell looks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Style {
    /// No formatting.
    Plain,
    /// A table header: bold, shaded.
    Header,
    /// A sheet or block title: bold, larger.
    Title,
    /// A number shown to six significant digits (the cell keeps every digit).
    Number,
    /// A whole number.
    Integer,
    /// A p-value: four decimals, or scientific below 0.0001.
    PValue,
    /// Text that wraps within the column.
    Wrap,
    /// A request outcome that went well: bold.
    Good,
    /// A warning: dark orange text.
    Warning,
    /// An error: dark red text.
    Error,
    /// A link: underlined blue.
    Link,
    /// A date.
    Date,
    /// A date and time.
    DateTime,
    /// A time of day.
    Time,
    /// A cell the reader types into: shaded, bordered.
    Input,
}

/// What a cell holds.
#[derive(Debug, Clone, PartialEq)]
pub enum Content {
    /// Nothing (a styled blank).
    Blank,
    /// A number.
    Number(f64),
    /// Text.
    Text(String),
    /// A boolean.
    Bool(bool),
    /// A date-time serial of the 1900 system.
    DateTime(f64, DateKind),
    /// An error value.
    Error(ErrorValue),
    /// A formula (without `=`) and its last computed value.
    Formula(String, Cached),
}

/// The last computed value of a formula.
#[derive(Debug, Clone, PartialEq)]
pub enum Cached {
    /// No value.
    Empty,
    /// A number.
    Number(f64),
    /// Text.
    Text(String),
    /// A boolean.
    Bool(bool),
    /// An error value.
    Error(ErrorValue),
}

/// One cell of the model.
#[derive(Debug, Clone, PartialEq)]
pub struct OutCell {
    /// Value.
    pub content: Content,
    /// Look.
    pub style: Style,
    /// An internal link target such as `'Coefficients'!A5`.
    pub link: Option<String>,
    /// A note shown when the reader hovers over the cell.
    pub note: Option<String>,
}

impl OutCell {
    /// A cell with content and style.
    pub fn new(content: Content, style: Style) -> Self {
        OutCell { content, style, link: None, note: None }
    }
    /// Text in a style.
    pub fn text(t: impl Into<String>, style: Style) -> Self {
        OutCell::new(Content::Text(t.into()), style)
    }
    /// A number in a style; NaN becomes a blank.
    pub fn number(x: f64, style: Style) -> Self {
        if x.is_finite() {
            OutCell::new(Content::Number(x), style)
        } else {
            OutCell::new(Content::Blank, style)
        }
    }
    /// An optional number.
    pub fn maybe(x: Option<f64>, style: Style) -> Self {
        OutCell::number(x.unwrap_or(f64::NAN), style)
    }
    /// Adds a link.
    pub fn link(mut self, target: impl Into<String>) -> Self {
        self.link = Some(target.into());
        self
    }
}

/// A result sheet.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Sheet {
    /// Name.
    pub name: String,
    /// Cells by (row, column).
    pub cells: BTreeMap<(u32, u32), OutCell>,
    /// Column widths in characters.
    pub widths: BTreeMap<u32, f64>,
    /// Rows and columns frozen above and left of this cell.
    pub freeze: Option<(u32, u32)>,
    /// A filter over a table.
    pub filter: Option<CellRange>,
    /// Cells that offer a drop-down list of these choices.
    pub choices: BTreeMap<(u32, u32), Vec<String>>,
    /// Charts placed on the sheet.
    pub charts: Vec<ChartSpec>,
}

/// A native chart of the workbook, reading cells (no writer types).
#[derive(Debug, Clone, PartialEq)]
pub struct ChartSpec {
    /// Top-left cell (row, column) of the chart on its sheet.
    pub anchor: (u32, u32),
    /// Title.
    pub title: String,
    /// Label of the horizontal axis.
    pub x_label: String,
    /// Label of the vertical axis.
    pub y_label: String,
    /// The series, drawn in order.
    pub series: Vec<SeriesSpec>,
}

/// One series of a scatter chart: x and y from one-column ranges.
#[derive(Debug, Clone, PartialEq)]
pub struct SeriesSpec {
    /// Legend name.
    pub name: String,
    /// Sheet holding the cells.
    pub sheet: String,
    /// Column of the x values.
    pub x_col: u32,
    /// Column of the y values.
    pub y_col: u32,
    /// First row (inclusive).
    pub first_row: u32,
    /// Last row (inclusive).
    pub last_row: u32,
    /// Drawn as a line without markers (else markers without a line).
    pub line: bool,
}

impl Sheet {
    pub(crate) fn new(name: &str) -> Self {
        Sheet { name: name.to_string(), ..Default::default() }
    }
    pub(crate) fn put(&mut self, row: u32, col: u32, cell: OutCell) {
        self.cells.insert((row, col), cell);
    }
    /// Writes a header row and freezes it, with a filter over the table
    /// that will follow.
    fn header(&mut self, row: u32, labels: &[(&str, f64)]) {
        for (c, (label, width)) in labels.iter().enumerate() {
            self.put(row, c as u32, OutCell::text(*label, Style::Header));
            self.widths.insert(c as u32, *width);
        }
        self.freeze = Some((row + 1, 0));
    }
    fn close_table(&mut self, header_row: u32, cols: u32) {
        let last = self.cells.keys().map(|k| k.0).max().unwrap_or(header_row);
        self.filter = Some(CellRange { first_row: header_row, first_col: 0, last_row: last.max(header_row), last_col: cols - 1 });
    }
}

/// A column of per-row results added to a source sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnBlock {
    /// Column on the source sheet.
    pub col: u32,
    /// Header cell row and text.
    pub header: Option<(u32, String)>,
    /// Absolute sheet rows, ascending, one per value.
    pub rows: Vec<u32>,
    /// Values; NaN shows as a blank.
    pub values: Vec<f64>,
}

/// Changes to one source sheet.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Overlay {
    /// Cells that replace source cells (request outcomes).
    pub cells: BTreeMap<(u32, u32), OutCell>,
    /// Added result columns.
    pub blocks: Vec<ColumnBlock>,
    /// Widths for added columns.
    pub widths: BTreeMap<u32, f64>,
}

/// The whole output: overlays for the source sheets, in source order, then
/// the result sheets.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Book {
    /// One overlay per source sheet.
    pub overlays: Vec<Overlay>,
    /// The result sheets in order.
    pub sheets: Vec<Sheet>,
    /// Whether source formulas are kept (false when the source's formula
    /// syntax is not that of the output format).
    pub keep_formulas: bool,
}

/// Where a fit's per-row results belong.
#[derive(Debug, Clone, PartialEq)]
pub struct RowsPlace {
    /// Sheet of the data.
    pub sheet: String,
    /// Header row of the table, when it has one.
    pub header_row: Option<u32>,
    /// The table's last column; results go to its right.
    pub last_col: u32,
    /// First and last data row of the table.
    pub first_row: u32,
    /// Last data row.
    pub last_row: u32,
    /// The sheet row of each row sent to the fit.
    pub rows: Vec<u32>,
}

/// How a request ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// Fitted.
    Ok,
    /// Fitted, with warnings.
    Warning,
    /// Not fitted.
    Error,
}

impl Status {
    /// A word for the Fits sheet.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Ok => "ok",
            Status::Warning => "warning",
            Status::Error => "error",
        }
    }
}

/// Everything layout needs to know of one request.
#[derive(Debug, Clone, PartialEq)]
pub struct Report {
    /// The fit's name (`name=` or the cell address).
    pub name: String,
    /// Function, lowercase.
    pub function: String,
    /// Request cell.
    pub cell: CellAddress,
    /// Request text.
    pub text: String,
    /// Response as typed (empty when the request did not resolve).
    pub response: String,
    /// Terms as typed.
    pub terms: Vec<String>,
    /// Confidence level.
    pub level: f64,
    /// Rows used.
    pub rows_used: usize,
    /// Rows left out.
    pub rows_left_out: usize,
    /// Outcome.
    pub status: Status,
    /// The error message (one line) or the warnings.
    pub messages: Vec<String>,
    /// The fit's outcome, when it ran.
    pub outcome: Option<FitOutcome>,
    /// Where per-row results go.
    pub place: Option<RowsPlace>,
    /// How the fit's model columns are made from its inputs (for the
    /// prediction calculator and charts), when known.
    pub recipe: Option<Recipe>,
    /// The tables of a host function (`#predict`, `#compare`).
    pub host: Option<HostOutcome>,
}

/// Facts about the run for the About sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct RunInfo {
    /// Tool version.
    pub version: String,
    /// Input file name.
    pub input_name: String,
    /// SHA-256 of the input, hex.
    pub input_sha256: String,
    /// Time of the run, as text (UTC, ISO 8601).
    pub time: String,
}

/// Names of the result sheets.
/// Comparisons and Charts come last in this list but are placed after
/// Diagnostics, and only when they have content.
pub const RESULT_SHEETS: [&str; 8] = ["Fits", "Coefficients", "Intervals", "Diagnostics", "Guide", "About", "Comparisons", "Charts"];

/// A result sheet name that does not clash with a source sheet: the plain
/// name, else the name with ` (plumb)`, else with a number.
fn unique_name(base: &str, taken: &HashSet<String>) -> String {
    let free = |n: &str| !taken.contains(&n.to_lowercase());
    if free(base) {
        return base.to_string();
    }
    let alt = format!("{base} (plumb)");
    if free(&alt) {
        return alt;
    }
    (2..).map(|i| format!("{base} {i}")).find(|n| free(n)).unwrap_or_else(|| base.to_string())
}

pub(crate) fn link_to(sheet: &str, row: u32, col: u32) -> String {
    format!("{}!{}", quote_sheet_name(sheet), CellAddress::new(sheet, row, col).local())
}

/// The one line shown in place of a request cell.
pub fn outcome_line(r: &Report) -> String {
    if let (Some(h), false) = (&r.host, r.status == Status::Error) {
        let warn = if r.status == Status::Warning { "; outside the data, see Fits" } else { "" };
        return match h {
            crate::host::HostOutcome::Prediction(p) => format!("predictions from {} for {} point{}{warn} → Intervals", p.fit, p.rows.len(), if p.rows.len() == 1 { "" } else { "s" }),
            crate::host::HostOutcome::Comparison(c) => {
                format!("comparison of {} fits of {}; lowest AIC: {} → Comparisons", c.fits.len(), c.response, c.fits.get(c.lowest_aic).map(|f| f.name.as_str()).unwrap_or(""))
            }
        };
    }
    match (&r.status, &r.outcome) {
        (Status::Error, _) | (_, None) => {
            format!("{} — error: {}", r.text.trim(), r.messages.first().map(String::as_str).unwrap_or("the request failed"))
        }
        (_, Some(o)) => {
            let r2 = o.statistic("r_squared").map(|v| format!(", R² = {v:.4}")).unwrap_or_default();
            let left = if r.rows_left_out > 0 { format!(" ({} left out)", r.rows_left_out) } else { String::new() };
            let warn = match r.status {
                Status::Warning => format!("; {} warning{}, see Fits", r.messages.len(), if r.messages.len() == 1 { "" } else { "s" }),
                _ => String::new(),
            };
            format!("{}: {} fit of {}, n = {}{left}{r2}{warn} → Coefficients", r.name, r.function, r.response, r.rows_used)
        }
    }
}

/// Lays out the whole output.
pub fn lay_out(book: &Workbook, reports: &[Report], info: &RunInfo) -> Book {
    let taken: HashSet<String> = book.sheets.iter().map(|g| g.name.to_lowercase()).collect();
    let names: Vec<String> = RESULT_SHEETS.iter().map(|n| unique_name(n, &taken)).collect();
    let (fits_n, coef_n, int_n, diag_n, guide_n, about_n) = (&names[0], &names[1], &names[2], &names[3], &names[4], &names[5]);
    let (cmp_n, charts_n) = (&names[6], &names[7]);

    // Coefficients first: other sheets link to its rows.
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
    let mut ints = Sheet::new(int_n);
    ints.header(0, &[("Fit", 14.0), ("Term", 22.0), ("Level", 8.0), ("Estimate", 14.0), ("Lower bound", 14.0), ("Upper bound", 14.0)]);
    let mut first_coef_row: Vec<Option<u32>> = Vec::new();
    let (mut row, mut irow) = (1u32, 1u32);
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
            ints.put(irow, 0, OutCell::text(&r.name, Style::Plain));
            ints.put(irow, 1, OutCell::text(&c.term, Style::Plain));
            ints.put(irow, 2, OutCell::number(r.level, Style::Number));
            ints.put(irow, 3, OutCell::maybe(c.estimate, Style::Number));
            ints.put(irow, 4, OutCell::maybe(c.lower, Style::Number));
            ints.put(irow, 5, OutCell::maybe(c.upper, Style::Number));
            irow += 1;
        }
    }
    coef.close_table(0, 9);
    ints.close_table(0, 6);
    let mut host_links = crate::tables::intervals_extras(&mut ints, irow, reports);
    let (comparisons, cmp_links) = crate::tables::comparisons_sheet(cmp_n, reports);
    for (l, c) in host_links.iter_mut().zip(cmp_links) {
        if l.is_none() {
            *l = c;
        }
    }
    let charts = crate::tables::charts_sheet(charts_n, reports);

    // Fits.
    let mut fits = Sheet::new(fits_n);
    fits.header(
        0,
        &[("Fit", 14.0), ("Function", 10.0), ("Response", 14.0), ("Terms", 30.0), ("Request cell", 14.0), ("Rows used", 10.0), ("Rows left out", 13.0), ("Status", 9.0), ("Messages", 80.0)],
    );
    for (i, r) in reports.iter().enumerate() {
        let row = i as u32 + 1;
        let mut name = OutCell::text(&r.name, Style::Plain);
        if let Some(cr) = first_coef_row[i] {
            name = OutCell::text(&r.name, Style::Link).link(link_to(coef_n, cr, 0));
        }
        fits.put(row, 0, name);
        fits.put(row, 1, OutCell::text(&r.function, Style::Plain));
        fits.put(row, 2, OutCell::text(&r.response, Style::Plain));
        fits.put(row, 3, OutCell::text(r.terms.join(" + "), Style::Plain));
        fits.put(row, 4, OutCell::text(r.cell.to_string(), Style::Link).link(link_to(&r.cell.sheet, r.cell.row, r.cell.col)));
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
        fits.put(row, 8, OutCell::text(r.messages.join(" | "), Style::Plain));
    }
    fits.close_table(0, 9);

    // Diagnostics: a block per fit.
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
            let style = if s.key.contains("p_value") {
                Style::PValue
            } else if s.key.starts_with("df") || s.key.ends_with("_df") || s.key.ends_with("_count") || s.key == "n" || s.key == "parameters" {
                Style::Integer
            } else {
                Style::Number
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

    // Source overlays: outcomes at request cells, residual columns.
    let mut overlays: Vec<Overlay> = book.sheets.iter().map(|_| Overlay::default()).collect();
    let request_cells: HashSet<(String, u32, u32)> = reports.iter().map(|r| (r.cell.sheet.clone(), r.cell.row, r.cell.col)).collect();
    let mut claimed: Vec<Vec<(u32, u32, u32)>> = vec![Vec::new(); book.sheets.len()]; // (col, first_row, last_row)
    for (i, r) in reports.iter().enumerate() {
        let Some(si) = book.sheets.iter().position(|g| g.name == r.cell.sheet) else { continue };
        let target = match (first_coef_row[i], &host_links[i]) {
            (Some(cr), _) => link_to(coef_n, cr, 0),
            (None, Some(l)) if r.status != Status::Error => l.clone(),
            _ => link_to(fits_n, i as u32 + 1, 0),
        };
        let style = match r.status {
            Status::Ok => Style::Good,
            Status::Warning => Style::Warning,
            Status::Error => Style::Error,
        };
        let mut cell = OutCell::text(outcome_line(r), style).link(target);
        cell.note = Some(format!("plumb request: {}", r.text.trim()));
        if let (Some(crate::host::HostOutcome::Prediction(p)), false) = (&r.host, r.status == Status::Error) {
            if let [pr] = p.rows.as_slice() {
                // One point: the request cell holds the predicted value itself, a number other cells can use.
                cell = OutCell::number(pr.predicted, if r.status == Status::Ok { Style::Number } else { Style::Warning });
                cell.note = Some(format!(
                    "plumb request: {}\nPredicted {} from the fit {}: {}; mean at level {}: {} to {}; a new observation: {} to {}. Details on {int_n}.",
                    r.text.trim(), r.response, p.fit, pr.predicted, p.level, pr.mean_lower, pr.mean_upper, pr.new_lower, pr.new_upper
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

    let guide = guide_sheet(guide_n);
    let mut about = Sheet::new(about_n);
    about.widths.insert(0, 18.0);
    about.widths.insert(1, 70.0);
    about.widths.insert(2, 10.0);
    about.put(0, 0, OutCell::text("About this workbook", Style::Title));
    let facts = [
        ("Made by", format!("plumb {}", info.version)),
        ("Input file", info.input_name.clone()),
        ("Input SHA-256", info.input_sha256.clone()),
        ("Time of the run (UTC)", info.time.clone()),
        ("Regenerate with", format!("plumb run \"{}\"", info.input_name)),
    ];
    for (i, (k, v)) in facts.iter().enumerate() {
        about.put(i as u32 + 1, 0, OutCell::text(*k, Style::Header));
        about.put(i as u32 + 1, 1, OutCell::text(v, Style::Plain));
    }
    let base = facts.len() as u32 + 2;
    about.put(base, 0, OutCell::text("Request cell", Style::Header));
    about.put(base, 1, OutCell::text("Request text", Style::Header));
    about.put(base, 2, OutCell::text("Status", Style::Header));
    for (i, r) in reports.iter().enumerate() {
        let row = base + 1 + i as u32;
        about.put(row, 0, OutCell::text(r.cell.to_string(), Style::Plain));
        about.put(row, 1, OutCell::text(r.text.trim(), Style::Plain));
        about.put(row, 2, OutCell::text(r.status.as_str(), Style::Plain));
    }

    let mut sheets = vec![fits, coef, ints, diag];
    sheets.extend(comparisons);
    sheets.extend(charts);
    sheets.extend([guide, about]);
    Book { overlays, sheets, keep_formulas: true }
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

/// The plain-language guide.
fn guide_sheet(name: &str) -> Sheet {
    let mut s = Sheet::new(name);
    s.widths.insert(0, 28.0);
    s.widths.insert(1, 100.0);
    let entries: &[(&str, &str)] = &[
        ("How to read this workbook", ""),
        ("", "Each request cell on your sheets now shows its outcome; click it to jump to the fit's coefficients. The sheets after your own hold the results: Fits lists every request, Coefficients and Intervals the estimates, Diagnostics how well each fit describes the data."),
        ("Columns beside your data", ""),
        ("Fitted", "The value the fit predicts for that row."),
        ("Residual", "Observed minus fitted. Residuals should look like random scatter around zero."),
        ("Standardized residual", "The residual divided by its own standard error. Values beyond about ±2 are unusual, beyond ±3 rare."),
        ("Leverage", "How far the row's predictor values lie from the others (0 to 1). A common rule of thumb (not a test) flags leverage above 2p/n, with p parameters and n rows."),
        ("Cook's distance", "How much all fitted values would move if the row were left out. A common rule of thumb flags values above 4/n; plumb warns about a row above 0.5 and names it."),
        ("Studentized residual", "The residual divided by the spread the other rows show when this row is left out (externally studentized). Under the model it follows Student's t, so beyond ±3 is rare; the Diagnostics sheet counts such rows (common practice, not a test)."),
        ("DFFITS", "How many standard errors the row's own fitted value moves when the row is left out. A common rule of thumb flags sizes above 2√(p/n)."),
        ("Coefficients", ""),
        ("Estimate", "The change in the response for one unit more of the term, the other terms held fixed. For a text column each level gets its own row (Bay=North): the difference from the base level."),
        ("Standard error", "How precisely the estimate is known; smaller is more precise."),
        ("t statistic", "Estimate divided by its standard error."),
        ("p-value", "If the term truly had no effect, the chance of an estimate at least this far from zero. A small p-value (say below 0.05) is evidence of an effect; a large one is not evidence of no effect."),
        ("VIF", "Variance inflation factor: how much the term's variance is inflated because it can be predicted from the other terms, 1/(1 − R²) of the term on the others. 1 means no overlap; above 10 (common practice) the term is nearly collinear with the others, and plumb warns. Blank for the intercept."),
        ("Standardized coefficient", "The estimate × (standard deviation of the term) / (standard deviation of the response): the change in the response, in its standard deviations, for one standard deviation more of the term. Lets terms in different units be compared; for an indicator column (Bay=North) it is less meaningful. Blank for the intercept."),
        ("Standard errors", "Which standard errors the row uses: classic (they assume the residual spread is the same everywhere) or, with errors=hc0 … hc3, heteroscedasticity-consistent ones that stay valid when the spread changes (White 1980; HC1–HC3 from MacKinnon & White 1985, which correct HC0's tendency to be too small in small samples; HC3 is the usual choice). The t statistic, p-value and interval then use them, with Student's t on n − p degrees of freedom."),
        ("Confidence interval", "The range of values of the coefficient consistent with the data at the stated level (0.95: 95 %). Narrow intervals mean precise estimates."),
        ("Goodness of fit", ""),
        ("R²", "The share of the response's variation the fit explains (0 to 1). Without an intercept it is the uncentred R², not comparable with the usual one."),
        ("Adjusted R²", "R² penalised for the number of terms; use it to compare fits with different numbers of terms."),
        ("Root mean squared error", "The typical size of a residual, in the response's units."),
        ("F statistic and its p-value", "Whether the terms together explain more than chance would."),
        ("Log-likelihood, AIC, BIC", "For comparing fits of the same response on the same rows: lower AIC or BIC is better."),
        ("Residual checks", ""),
        ("Durbin–Watson", "Whether residuals of neighbouring rows (in sheet order, rows left out skipped) are correlated: Σ(difference of neighbouring residuals)² / Σ residual². About 2 means no correlation; towards 0 neighbours have similar residuals, towards 4 opposite ones. plumb warns below 1.5 or above 2.5 (a common rule of thumb; it matters mostly when the rows are in time order)."),
        ("Breusch–Pagan", "Whether the residuals' spread changes with the terms: the squared residuals are regressed on the terms. Two forms are shown: Koenker's studentized form (n × R² of that regression, valid whatever the residuals' distribution) and the original form (half its explained sum of squares after dividing by the mean square, which assumes normal residuals), each with its p-value on as many degrees of freedom as there are terms. plumb warns when Koenker's p-value is below 0.05; errors=hc3 then gives standard errors that allow for it."),
        ("Jarque–Bera", "Whether the residuals look normally distributed, from their skewness S and kurtosis K: n/6 × (S² + (K − 3)²/4), with its p-value (chi-squared, 2 degrees of freedom). A small p-value says the residuals are not normal; with many rows the coefficients' tests are still roughly right."),
        ("Skewness, kurtosis", "Skewness 0 means residuals balanced around zero; kurtosis 3 is that of a normal distribution (higher: more extreme residuals than normal)."),
        ("Collinearity", ""),
        ("Condition number", "How close the terms are to being combinations of one another: the ratio of the largest to the smallest singular value of the design (intercept column included, not centred) after each column is scaled to unit length (Belsley, Kuh & Welsch 1980). Above about 30 collinearity begins to matter, above about 1000 the estimates become unstable. The largest VIF and its term are shown beside it."),
        ("Influence", ""),
        ("Largest leverage, Cook's distance, studentized residual", "The row with the largest value, named by its row on its sheet (click it to go there)."),
        ("Counts of flagged rows", "Rows with leverage above 2p/n, Cook's distance above 4/n, or a studentized residual beyond ±3 (p parameters, n rows): the usual rules of thumb, common practice rather than tests. A flagged row is worth a look, not necessarily wrong."),
        ("Warnings", "Plain-language warnings on the Fits and Diagnostics sheets and at the request cell come from these figures: residuals correlated in row order (Durbin–Watson outside 1.5–2.5), spread growing with the fitted value (Breusch–Pagan p below 0.05), a row with a large influence (Cook's distance above 0.5, named by its sheet row), terms nearly collinear (VIF above 10), and rows left out."),
        ("Analysis of variance", "The split of the total sum of squares into the part the fit explains (regression) and the part left over (residual), with degrees of freedom and mean squares."),
        ("Rows left out", "Rows with a blank, text or error cell in a column the request uses are left out and counted (missing=skip); missing=stop makes the request fail instead."),
        ("Predictions", ""),
        ("Predicted value", "What the fit gives for the response at the values of a #predict request or of the calculator's inputs."),
        ("Interval of the mean", "The range in which the average response at those values lies, at the stated level: how precisely the fit pins down the mean."),
        ("Interval of a new observation", "The range in which one new measurement at those values would fall, at the stated level. It is wider than the interval of the mean, because single measurements scatter around the mean."),
        ("Outside the data", "A point whose values lie beyond those the fit was made from, or whose leverage exceeds every row's: the prediction is an extrapolation and may be far off."),
        ("Prediction calculator", "On the Intervals sheet, one per fit: type values into the shaded cells and the prediction and both intervals follow, computed by the workbook's own formulas from the coefficients and their covariance shown below them."),
        ("Comparisons", "Fits of one response side by side. Lower AIC or BIC is better; for fits whose terms contain another's, a small p-value of F says the extra terms help. When figures are close, prefer the simpler fit."),
        ("Charts", "Per fit: the data with the fitted line (or observed against fitted values: points near the line fit well), residuals against fitted values (look for a pattern or a funnel shape: there should be none), and a normal quantile plot (points near the line mean the residuals look normal, which the p-values and intervals assume)."),
        ("Cautions", ""),
        ("Association is not causation", "A fit shows how the response moves with the terms in these data. It does not show that changing a term would change the response."),
        ("No extrapolation", "Predictions are only supported within the range of the data the fit was made from."),
        ("A fit is only as good as its data", "Check the residual columns and the diagnostics before relying on a result. Decisions about safety, health or money rest with qualified people and the rules that apply where you are."),
    ];
    for (i, (k, v)) in entries.iter().enumerate() {
        let style = if v.is_empty() { Style::Title } else { Style::Header };
        if !k.is_empty() {
            s.put(i as u32, 0, OutCell::text(*k, style));
        }
        if !v.is_empty() {
            s.put(i as u32, 1, OutCell::text(*v, Style::Wrap));
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn result_sheets_do_not_clash_with_source_sheets() {
        let taken: HashSet<String> = ["fits".to_string(), "fits (plumb)".to_string()].into_iter().collect();
        assert_eq!(unique_name("Fits", &taken), "Fits 2");
        assert_eq!(unique_name("Guide", &taken), "Guide");
    }

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
