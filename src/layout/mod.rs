//! Arranging outcomes into an abstract workbook.
//!
//! Layout decides what goes where — the result sheets, the one-line outcome
//! at each request cell, the residual columns beside each fit's data — in a
//! plain model of sheets, cells, styles and links. It knows nothing of any
//! writer library, so it is tested without files; `write` renders it.
//!
//! One file per result sheet: `fits.rs`, `coefficients.rs`, `intervals.rs`
//! (interval table, `#predict` tables, prediction calculators),
//! `diagnostics.rs`, `comparisons.rs`, `charts.rs`, `guide.rs`, `about.rs`;
//! `overlays.rs` holds what is added to the source sheets; `parts.rs` the
//! parts of one request (charts, regions of rows) and leaving one out;
//! `readable.rs` the number formats, column widths, row heights and print
//! setup that make every result sheet read well when opened. This
//! file holds the model, the names sheets are written under, and
//! [`lay_out`], which calls them in order.
//!
//! Source sheets are not copied into the model: they get an [`Overlay`] of
//! replaced cells and added column blocks, which the writer merges with the
//! source grid row by row.

mod about;
mod charts;
mod coefficients;
mod comparisons;
mod diagnostics;
mod fits;
mod guide;
mod intervals;
mod overlays;
mod parts;
mod readable;

pub use charts::{chart_subset, CHART_POINTS};
pub use intervals::CALCULATOR_MAX_TERMS;
pub use overlays::outcome_line;
pub use parts::{list_holds, Part, Refused, Region, SheetAt, LIST_MAX};
pub use readable::{format_code, line_height, shown_chars, shown_number, wrapped_lines};

use crate::cells::{quote_sheet_name, CellAddress, CellRange, DateKind, ErrorValue, Workbook};
use crate::report::{Report, RunInfo};
use std::collections::{BTreeMap, HashMap, HashSet};

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
    /// A number shown to this many decimals (the cell keeps every digit).
    Fixed(u8),
    /// A share shown as a whole percentage, such as a level of 0.95 as 95%.
    Percent,
    /// A number in the spreadsheet's general format, which adapts to the
    /// value: for live formulas, whose value the reader changes.
    General,
    /// Text that wraps within the column.
    Wrap,
    /// A header or row label that wraps within its column: bold, shaded.
    Label,
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
    /// Row heights in points, for rows whose wrapped text needs more than
    /// one line (readers do not fit rows to their text on opening).
    pub heights: BTreeMap<u32, f64>,
    /// How the sheet prints.
    pub print: PrintSetup,
    /// Rows and columns frozen above and left of this cell.
    pub freeze: Option<(u32, u32)>,
    /// A filter over a table.
    pub filter: Option<CellRange>,
    /// Cells that offer a drop-down list of choices.
    pub choices: BTreeMap<(u32, u32), Choices>,
    /// Charts placed on the sheet.
    pub charts: Vec<ChartSpec>,
    /// Bands of rows that belong to one request (a calculator, a
    /// prediction table), so that one can be left out alone.
    pub regions: Vec<Region>,
}

/// How a result sheet prints: these workbooks get printed.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PrintSetup {
    /// Landscape (for sheets wider than a portrait page).
    pub landscape: bool,
    /// Scaled to fit the page width (as many pages down as needed).
    pub fit_width: bool,
    /// Rows repeated at the top of every printed page (first, last).
    pub repeat_rows: Option<(u32, u32)>,
    /// Columns repeated at the left of every printed page (first, last).
    pub repeat_cols: Option<(u32, u32)>,
    /// The part of the sheet printed, when not all of it.
    pub area: Option<CellRange>,
}

/// The choices of a drop-down list.
#[derive(Debug, Clone, PartialEq)]
pub enum Choices {
    /// Written into the list itself (when [`list_holds`] them).
    List(Vec<String>),
    /// Read from cells of the same sheet (one row or one column).
    Cells(CellRange),
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
    /// The request the chart shows.
    pub owner: Option<CellAddress>,
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
    pub(crate) fn header(&mut self, row: u32, labels: &[(&str, f64)]) {
        for (c, (label, width)) in labels.iter().enumerate() {
            self.put(row, c as u32, OutCell::text(*label, Style::Header));
            self.widths.insert(c as u32, *width);
        }
        self.freeze = Some((row + 1, 0));
    }
    pub(crate) fn close_table(&mut self, header_row: u32, cols: u32) {
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
    /// The name each source sheet is written under, in source order (see
    /// [`output_sheet_names`]).
    pub source_names: Vec<String>,
    /// The result sheets in order.
    pub sheets: Vec<Sheet>,
    /// Whether source formulas are kept (false when the source's formula
    /// syntax is not that of the output format).
    pub keep_formulas: bool,
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

/// A sheet name the output format accepts: at most 31 characters, none of
/// `[]:*?/\`, not starting or ending with `'`, not blank. (Other formats
/// allow longer names and more characters.)
pub fn valid_sheet_name(name: &str) -> String {
    let cleaned: String = name.chars().map(|c| if "[]:*?/\\".contains(c) { '_' } else { c }).collect();
    let cleaned = cleaned.trim_matches('\'').to_string();
    let cut: String = cleaned.chars().take(31).collect();
    if cut.trim().is_empty() {
        "Sheet".into()
    } else {
        cut
    }
}

/// The name each source sheet is written under: its own when the output
/// format accepts it, else [`valid_sheet_name`] of it, numbered when that
/// clashes (names compare ignoring case). Links and references to source
/// sheets use these names; messages keep the input's.
pub fn output_sheet_names(book: &Workbook) -> Vec<String> {
    let mut used: Vec<String> = Vec::new();
    for g in &book.sheets {
        let mut name = valid_sheet_name(&g.name);
        let mut k = 2;
        while used.iter().any(|n| n.to_lowercase() == name.to_lowercase()) {
            let suffix = format!(" {k}");
            name = format!("{}{suffix}", valid_sheet_name(&g.name).chars().take(31 - suffix.len()).collect::<String>());
            k += 1;
        }
        used.push(name);
    }
    used
}

/// The names of the result sheets in this workbook (see [`RESULT_SHEETS`]),
/// and the output names of the source sheets.
struct SheetNames {
    /// Input name → output name of every source sheet.
    source: HashMap<String, String>,
    fits: String,
    coefficients: String,
    intervals: String,
    diagnostics: String,
    guide: String,
    about: String,
    comparisons: String,
    charts: String,
}

impl SheetNames {
    fn new(book: &Workbook, source_names: &[String]) -> Self {
        let taken: HashSet<String> = source_names.iter().map(|n| n.to_lowercase()).collect();
        let n: Vec<String> = RESULT_SHEETS.iter().map(|n| unique_name(n, &taken)).collect();
        let mut it = n.into_iter();
        let mut next = || it.next().unwrap_or_default();
        let source = book.sheets.iter().map(|g| g.name.clone()).zip(source_names.iter().cloned()).collect();
        SheetNames { source, fits: next(), coefficients: next(), intervals: next(), diagnostics: next(), guide: next(), about: next(), comparisons: next(), charts: next() }
    }

    /// The output name of a source sheet.
    fn source<'a>(&'a self, input: &'a str) -> &'a str {
        self.source.get(input).map(String::as_str).unwrap_or(input)
    }
}

/// Lays out the whole output.
pub fn lay_out(book: &Workbook, reports: &[Report], info: &RunInfo) -> Book {
    let source_names = output_sheet_names(book);
    let names = SheetNames::new(book, &source_names);
    // Coefficients first: other sheets link to its rows.
    let (coef, first_coef_row) = coefficients::sheet(&names.coefficients, reports);
    let (ints, mut host_links) = intervals::sheet(&names.intervals, book, reports);
    let (comparisons, cmp_links) = comparisons::sheet(&names.comparisons, reports);
    for (l, c) in host_links.iter_mut().zip(cmp_links) {
        if l.is_none() {
            *l = c;
        }
    }
    let charts = charts::sheet(&names.charts, reports);
    let fits = fits::sheet(&names, reports, &first_coef_row);
    let diag = diagnostics::sheet(&names.diagnostics, reports);
    let overlays = overlays::overlays(book, reports, &names, &first_coef_row, &host_links);
    let guide = guide::sheet(&names.guide);
    let about = about::sheet(&names.about, reports, info);
    let mut sheets = vec![fits, coef, ints, diag];
    sheets.extend(comparisons);
    sheets.extend(charts);
    sheets.extend([guide, about]);
    for s in &mut sheets {
        readable::fit(s);
    }
    Book { overlays, source_names, sheets, keep_formulas: true }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sheet_names_are_made_valid() {
        assert_eq!(valid_sheet_name("a/b:c"), "a_b_c");
        assert_eq!(valid_sheet_name(&"x".repeat(40)).chars().count(), 31);
        assert_eq!(valid_sheet_name("Données"), "Données");
        assert_eq!(valid_sheet_name("'quoted'"), "quoted");
    }

    #[test]
    fn clashing_output_names_are_numbered() {
        use crate::cells::Grid;
        let long = "x".repeat(40);
        let book = Workbook { sheets: vec![Grid::new("a/b"), Grid::new("a:b"), Grid::new("a?b"), Grid::new(&long), Grid::new(format!("{long}y"))] };
        let names = output_sheet_names(&book);
        assert_eq!(names[..3], ["a_b", "a_b 2", "a_b 3"]);
        assert_eq!(names[3], "x".repeat(31));
        assert_eq!(names[4], format!("{} 2", "x".repeat(29)));
    }

    #[test]
    fn result_sheets_do_not_clash_with_source_sheets() {
        let taken: HashSet<String> = ["fits".to_string(), "fits (plumb)".to_string()].into_iter().collect();
        assert_eq!(unique_name("Fits", &taken), "Fits 2");
        assert_eq!(unique_name("Guide", &taken), "Guide");
    }
}
