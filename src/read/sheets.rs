//! Building each sheet's [`Grid`]: xlsx and xlsb streamed cell by cell into
//! a [`SheetBuilder`] sized once from the sheet's dimension record, xls and
//! ods from calamine's dense ranges; merged ranges, formula text, the
//! OpenDocument error results, and the [`MAX_CELLS`] limit as cells arrive.
//! Errors of one sheet become a located sheet fault.

use std::io::{Read, Seek};

use calamine::{Data, Dimensions, OdsError, Reader, XlsError, Xlsb, XlsbError, Xlsx, XlsxError};

use super::format::Book;
use super::values::{value_of_data, value_of_ref};
use super::{group_thousands, Cause, Fault, MAX_CELLS, MERGE_SCAN_MAX_CELLS};
use crate::cells::{CellRange, ErrorValue, Grid, Stored, Value, MAX_COLS, MAX_ROWS};

/// A sheet-level fault from a reader error.
fn sheet_fault(sheet: &str, reason: String, cause: Cause) -> Fault {
    Fault::Sheet { sheet: sheet.to_string(), reason, source: Some(cause) }
}

const DAMAGED_SHEET: &str =
    "its content is truncated, damaged or in a form plumb cannot read; open the workbook in a spreadsheet program and save a new copy";

fn xlsx_sheet_fault(sheet: &str, e: XlsxError) -> Fault {
    let reason = match &e {
        XlsxError::CellError(v) => format!(
            "a cell holds the error value {v}, which plumb does not know; replace that cell's content with a value"
        ),
        XlsxError::NotAWorksheet(_) => "it is not a worksheet".to_string(),
        _ => DAMAGED_SHEET.to_string(),
    };
    sheet_fault(sheet, reason, Box::new(e))
}

pub(super) fn read_sheet<RS: Read + Seek>(book: &mut Book<RS>, name: &str) -> Result<Grid, Fault> {
    match book {
        Book::Xlsx(x) => read_xlsx_sheet(x, name),
        Book::Xlsb(x) => read_xlsb_sheet(x, name),
        Book::Xls(x) => {
            let is_1904 = x.has_1904_epoch();
            let damaged = |e: XlsError| sheet_fault(name, DAMAGED_SHEET.to_string(), Box::new(e));
            let values = x.worksheet_range(name).map_err(damaged)?;
            let formulas = x.worksheet_formula(name).map_err(damaged)?;
            let merged = x.merge_cells_by_sheet_name(name).map_err(damaged)?;
            let mut grid = grid_from_ranges(name, &values, &formulas, is_1904)?;
            grid.merged = merged.iter().filter_map(range_of).collect();
            Ok(grid)
        }
        Book::Ods(x) => {
            let damaged = |e: OdsError| {
                let reason = match &e {
                    OdsError::CellLimitExceeded { .. } => format!(
                        "it uses more cells than plumb reads from one sheet ({}); delete unused rows and columns, or split the data over several sheets",
                        group_thousands(MAX_CELLS as u64)
                    ),
                    _ => DAMAGED_SHEET.to_string(),
                };
                sheet_fault(name, reason, Box::new(e))
            };
            let values = x.worksheet_range(name).map_err(damaged)?;
            let formulas = x.worksheet_formula(name).map_err(damaged)?;
            let mut grid = grid_from_ranges(name, &values, &formulas, false)?;
            ods_formula_errors(&mut grid);
            Ok(grid)
        }
    }
}

/// xlsx: one streaming pass for values and formulas together, then the
/// merged ranges (which follow the cell data in the sheet's XML).
fn read_xlsx_sheet<RS: Read + Seek>(x: &mut Xlsx<RS>, name: &str) -> Result<Grid, Fault> {
    let is_1904 = x.has_1904_epoch();
    let mut cells = x.worksheet_cells_reader(name).map_err(|e| xlsx_sheet_fault(name, e))?;
    let mut b = SheetBuilder::new(name, range_of(&cells.dimensions()));
    while let Some(cell) = cells.next_cell_with_formula().map_err(|e| xlsx_sheet_fault(name, e))? {
        let (row, col) = cell.pos;
        b.put(row, col, value_of_ref(&cell.value, is_1904))?;
        if let Some(f) = cell.formula.as_deref() {
            b.put_formula(row, col, f)?;
        }
    }
    drop(cells);
    let mut grid = b.finish()?;
    if grid.area() <= MERGE_SCAN_MAX_CELLS {
        let merged = x.merge_cells_by_sheet_name(name).map_err(|e| xlsx_sheet_fault(name, e))?;
        grid.merged = merged.iter().filter_map(range_of).collect();
    }
    Ok(grid)
}

/// xlsb: a streaming pass for values, a second for formulas (calamine's
/// xlsb reader yields them separately).
fn read_xlsb_sheet<RS: Read + Seek>(x: &mut Xlsb<RS>, name: &str) -> Result<Grid, Fault> {
    let is_1904 = x.has_1904_epoch();
    let damaged = |e: XlsbError| sheet_fault(name, DAMAGED_SHEET.to_string(), Box::new(e));
    let mut b = {
        let mut cells = x.worksheet_cells_reader(name).map_err(damaged)?;
        let mut b = SheetBuilder::new(name, range_of(&cells.dimensions()));
        while let Some(cell) = cells.next_cell().map_err(damaged)? {
            let (row, col) = cell.get_position();
            b.put(row, col, value_of_ref(cell.get_value(), is_1904))?;
        }
        b
    };
    let mut cells = x.worksheet_cells_reader(name).map_err(damaged)?;
    while let Some(cell) = cells.next_formula().map_err(damaged)? {
        let (row, col) = cell.get_position();
        b.put_formula(row, col, cell.get_value())?;
    }
    b.finish()
}

/// xls and ods: calamine's dense value range and formula range, each with
/// its own start offset.
fn grid_from_ranges(
    name: &str,
    values: &calamine::Range<Data>,
    formulas: &calamine::Range<String>,
    is_1904: bool,
) -> Result<Grid, Fault> {
    let hint = match (values.start(), values.end()) {
        (Some(s), Some(e)) => range_of(&Dimensions::new(s, e)),
        _ => None,
    };
    let mut b = SheetBuilder::new(name, hint);
    if let Some((r0, c0)) = values.start() {
        for (r, c, v) in values.used_cells() {
            b.put(offset(r0, r), offset(c0, c), value_of_data(v, is_1904))?;
        }
    }
    if let Some((r0, c0)) = formulas.start() {
        for (r, c, f) in formulas.used_cells() {
            b.put_formula(offset(r0, r), offset(c0, c), f)?;
        }
    }
    b.finish()
}

/// An absolute coordinate from a range start and a relative index; a sum
/// past `u32` saturates, and the builder then refuses it as beyond the
/// formats' limits.
fn offset(start: u32, relative: usize) -> u32 {
    u32::try_from(relative).map_or(u32::MAX, |r| start.saturating_add(r))
}

/// OpenDocument keeps a formula's error result as text (LibreOffice writes
/// `#DIV/0!` as the cell's string with `calcext:value-type="error"`, which
/// calamine does not pass on). A formula cell whose text is exactly one of
/// the error spellings is therefore taken as that error value.
fn ods_formula_errors(grid: &mut Grid) {
    let found: Vec<(u32, u32, ErrorValue)> = grid
        .formulas()
        .filter_map(|((r, c), _)| match grid.value(r, c) {
            Value::Text(t) => error_of_text(t).map(|e| (r, c, e)),
            _ => None,
        })
        .collect();
    for (r, c, e) in found {
        grid.set(r, c, Stored::Error(e));
    }
}

/// The error value spelled `t`, if any.
fn error_of_text(t: &str) -> Option<ErrorValue> {
    use ErrorValue::*;
    [Div0, NotAvailable, Name, Null, Num, Ref, Value, GettingData].into_iter().find(|e| e.as_str() == t)
}

/// A calamine rectangle as ours; `None` when it is inverted or lies beyond
/// the formats' limits (so cannot come from a sound file).
fn range_of(d: &Dimensions) -> Option<CellRange> {
    let ((r0, c0), (r1, c1)) = (d.start, d.end);
    (r0 <= r1 && c0 <= c1 && r1 < MAX_ROWS && c1 < MAX_COLS).then_some(CellRange {
        first_row: r0,
        first_col: c0,
        last_row: r1,
        last_col: c1,
    })
}

fn area(r: &CellRange) -> u64 {
    u64::from(r.rows()) * u64::from(r.cols())
}

/// A cell value owned, for cells that arrive outside the pre-sized grid.
enum Owned {
    /// Any value but text.
    Plain(Stored),
    /// Text.
    Text(Box<str>),
}

/// Collects one sheet's cells into a [`Grid`].
///
/// The grid is allocated once from the sheet's declared dimension (the
/// "hint") when that is plausible; cells arriving outside it (a missing or
/// wrong dimension record) are kept aside and the grid is rebuilt once at
/// the end, tight around the cells actually used. The used rectangle is
/// checked against [`MAX_CELLS`] as cells arrive, so an oversized sheet
/// costs no memory beyond the hint.
struct SheetBuilder {
    name: String,
    grid: Grid,
    hint: Option<CellRange>,
    spill: Vec<(u32, u32, Owned)>,
    spill_formulas: Vec<(u32, u32, Box<str>)>,
    used: Option<CellRange>,
    too_large: bool,
}

impl SheetBuilder {
    fn new(name: &str, hint: Option<CellRange>) -> Self {
        let hint = hint.filter(|h| area(h) <= MAX_CELLS as u64);
        let grid = match hint {
            Some(h) => Grid::with_extent(name, h),
            None => Grid::new(name),
        };
        SheetBuilder {
            name: name.to_string(),
            grid,
            hint,
            spill: Vec::new(),
            spill_formulas: Vec::new(),
            used: None,
            too_large: false,
        }
    }

    /// Widens the used rectangle to `(row, col)`; false once it is too large
    /// (cells are then only measured, not stored).
    fn note_used(&mut self, row: u32, col: u32) -> Result<bool, Fault> {
        if row >= MAX_ROWS || col >= MAX_COLS {
            return Err(Fault::Sheet {
                sheet: self.name.clone(),
                reason: format!(
                    "a cell lies at row {}, column {}, beyond the largest sheet the workbook formats allow ({MAX_ROWS} rows, {MAX_COLS} columns); the file is damaged",
                    u64::from(row) + 1,
                    u64::from(col) + 1
                ),
                source: None,
            });
        }
        let used = CellRange::enclosing(self.used, row, col);
        self.used = Some(used);
        if area(&used) > MAX_CELLS as u64 && !self.too_large {
            self.too_large = true;
            // Nothing more will be stored: release what is held.
            self.grid = Grid::new(self.name.as_str());
            self.spill = Vec::new();
            self.spill_formulas = Vec::new();
        }
        Ok(!self.too_large)
    }

    fn in_hint(&self, row: u32, col: u32) -> bool {
        self.hint.is_some_and(|h| h.contains(row, col))
    }

    fn put(&mut self, row: u32, col: u32, v: Value<'_>) -> Result<(), Fault> {
        if matches!(v, Value::Empty) || !self.note_used(row, col)? {
            return Ok(());
        }
        if self.in_hint(row, col) {
            store(&mut self.grid, row, col, v);
        } else {
            let owned = match v {
                Value::Text(t) => Owned::Text(t.into()),
                other => Owned::Plain(plain(other)),
            };
            self.spill.push((row, col, owned));
        }
        Ok(())
    }

    /// Records a formula; a leading `=` and an OpenDocument `of:` namespace
    /// prefix are removed, an empty text means no formula.
    fn put_formula(&mut self, row: u32, col: u32, formula: &str) -> Result<(), Fault> {
        let f = formula.strip_prefix("of:").unwrap_or(formula);
        let f = f.strip_prefix('=').unwrap_or(f);
        if f.is_empty() || !self.note_used(row, col)? {
            return Ok(());
        }
        if self.in_hint(row, col) {
            self.grid.set_formula(row, col, f);
        } else {
            self.spill_formulas.push((row, col, f.into()));
        }
        Ok(())
    }

    fn finish(self) -> Result<Grid, Fault> {
        let Some(used) = self.used else {
            return Ok(Grid::new(self.name));
        };
        if self.too_large {
            return Err(Fault::TooLarge { sheet: self.name, extent: used });
        }
        if self.spill.is_empty() && self.spill_formulas.is_empty() && self.grid.extent() == Some(used) {
            return Ok(self.grid);
        }
        let mut grid = Grid::with_extent(self.name.as_str(), used);
        for (r, c, v) in self.grid.cells() {
            store(&mut grid, r, c, v);
        }
        for ((r, c), f) in self.grid.formulas() {
            grid.set_formula(r, c, f);
        }
        for (r, c, v) in self.spill {
            match v {
                Owned::Text(t) => grid.set_text(r, c, &t),
                Owned::Plain(s) => grid.set(r, c, s),
            }
        }
        for (r, c, f) in self.spill_formulas {
            grid.set_formula(r, c, &f);
        }
        Ok(grid)
    }
}

/// A non-text value as stored.
fn plain(v: Value<'_>) -> Stored {
    match v {
        Value::Empty | Value::Text(_) => Stored::Empty,
        Value::Number(x) => Stored::Number(x),
        Value::Bool(b) => Stored::Bool(b),
        Value::DateTime(x, k) => Stored::DateTime(x, k),
        Value::Error(e) => Stored::Error(e),
    }
}

fn store(grid: &mut Grid, row: u32, col: u32, v: Value<'_>) {
    match v {
        Value::Empty => {}
        Value::Text(t) => grid.set_text(row, col, t),
        other => grid.set(row, col, plain(other)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn builder_rebuilds_around_cells_outside_the_hint() {
        let hint = CellRange { first_row: 0, first_col: 0, last_row: 0, last_col: 0 };
        let mut b = SheetBuilder::new("S", Some(hint));
        b.put(4, 2, Value::Number(1.5)).ok();
        b.put(9, 3, Value::Text("x")).ok();
        b.put_formula(6, 5, "=B2*2").ok();
        b.put(0, 0, Value::Empty).ok();
        let Ok(g) = b.finish() else { panic!("finish failed") };
        assert_eq!(g.extent(), Some(CellRange { first_row: 4, first_col: 2, last_row: 9, last_col: 5 }));
        assert_eq!(g.value(4, 2), Value::Number(1.5));
        assert_eq!(g.value(9, 3), Value::Text("x"));
        assert_eq!(g.formula(6, 5), Some("B2*2"));
        assert_eq!(g.value(6, 5), Value::Empty);
        assert_eq!(g.cells().count(), 3);
    }

    #[test]
    fn builder_refuses_oversized_sheets() {
        let mut b = SheetBuilder::new("Big", None);
        b.put(0, 0, Value::Number(1.0)).ok();
        b.put(MAX_ROWS - 1, 100, Value::Number(2.0)).ok();
        match b.finish() {
            Err(Fault::TooLarge { sheet, extent }) => {
                assert_eq!(sheet, "Big");
                assert_eq!(extent.to_string(), "A1:CW1048576");
            }
            _ => panic!("expected TooLarge"),
        }
        let mut b = SheetBuilder::new("Far", None);
        assert!(matches!(b.put(MAX_ROWS, 0, Value::Number(1.0)), Err(Fault::Sheet { .. })));
    }
}
