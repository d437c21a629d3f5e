//! Finding the rows a request reads.
//!
//! This file owns the [`Frame`] (the data rows of one request, with the
//! table's headers), how a table is found on a sheet (runs of used columns
//! between empty columns, titles merged across the top left out, the table
//! holding the most of the names used), what `table=` and one-column ranges
//! cover, and sheet lookup with suggestions.

use super::eval::has_ranges;
use super::{range_rows, Ctx, Place, Placement};
use crate::cells::{CellAddress, CellRange, Grid, Value};
use crate::problems::{closest, Problem};
use crate::syntax::{Expr, RangeRef, Request, Span};
use std::collections::{BTreeMap, HashSet};

/// Rows of one request: an absolute sheet row per frame row.
pub(super) struct Frame<'a> {
    pub grid: &'a Grid,
    pub rows: Vec<u32>,
    pub header_row: Option<u32>,
    pub first_col: u32,
    pub last_col: u32,
    /// Lowercased trimmed header → columns with that header.
    pub headers: BTreeMap<String, Vec<u32>>,
    pub header_names: Vec<String>,
}

/// One column of a sheet named by a range: its rows (the header row, when
/// there is one, left out) and its header.
pub(super) struct RangeColumn<'a> {
    pub grid: &'a Grid,
    pub col: u32,
    pub rows: Vec<u32>,
    pub header: Option<String>,
}

fn header_text(v: Value) -> Option<String> {
    match v {
        Value::Text(t) if !t.trim().is_empty() => Some(t.trim().to_string()),
        Value::Number(x) => Some(format!("{x}")),
        _ => None,
    }
}

/// Columns of a grid that hold at least one non-blank cell (request cells
/// excluded), grouped into runs separated by empty columns: each run is a
/// candidate table.
fn candidate_tables(grid: &Grid, requests: &HashSet<(u32, u32)>) -> Vec<CellRange> {
    let Some(ext) = grid.extent() else { return Vec::new() };
    let titles = merged_titles(grid, requests);
    let mut used = vec![(u32::MAX, 0u32); ext.cols() as usize];
    for (r, c, v) in grid.cells() {
        if v.is_blank() || requests.contains(&(r, c)) || titles.contains(&(r, c)) {
            continue;
        }
        let u = &mut used[(c - ext.first_col) as usize];
        u.0 = u.0.min(r);
        u.1 = u.1.max(r);
    }
    let mut out = Vec::new();
    let mut run: Option<CellRange> = None;
    for (i, (lo, hi)) in used.iter().enumerate() {
        let col = ext.first_col + i as u32;
        if *lo == u32::MAX {
            if let Some(t) = run.take() {
                out.push(t);
            }
            continue;
        }
        run = Some(match run {
            None => CellRange { first_row: *lo, last_row: *hi, first_col: col, last_col: col },
            Some(t) => CellRange { first_row: t.first_row.min(*lo), last_row: t.last_row.max(*hi), last_col: col, ..t },
        });
    }
    out.extend(run);
    out
}

/// Title cells: the first cell of a merged range more than one column wide
/// that is the only non-blank cell of its row (request cells aside), such as
/// a title merged across the top of a table. They are not part of any table,
/// so the table's header row is the row below them.
fn merged_titles(grid: &Grid, requests: &HashSet<(u32, u32)>) -> HashSet<(u32, u32)> {
    let mut out = HashSet::new();
    let Some(ext) = grid.extent() else { return out };
    for m in &grid.merged {
        if m.cols() < 2 || grid.value(m.first_row, m.first_col).is_blank() {
            continue;
        }
        let alone = (ext.first_col..=ext.last_col)
            .filter(|&c| c != m.first_col && !requests.contains(&(m.first_row, c)))
            .all(|c| grid.value(m.first_row, c).is_blank());
        if alone {
            out.insert((m.first_row, m.first_col));
        }
    }
    out
}

/// Picks the table of a sheet that holds the referenced names: among the
/// candidate tables (runs of used columns between empty columns), the one
/// whose headers contain the most of the names, the largest on a tie.
fn pick_table(grid: &Grid, requests: &HashSet<(u32, u32)>, names: &[String]) -> Option<CellRange> {
    let tables = candidate_tables(grid, requests);
    tables
        .into_iter()
        .filter(|t| t.rows() >= 1)
        .max_by_key(|t| {
            let f = Frame::table(grid, *t);
            let hits = names.iter().filter(|n| f.has(n)).count();
            (hits, t.rows() as u64 * t.cols() as u64)
        })
}

impl<'a> Frame<'a> {
    /// A frame over a table whose first row holds headers.
    pub fn table(grid: &'a Grid, t: CellRange) -> Self {
        let mut headers: BTreeMap<String, Vec<u32>> = BTreeMap::new();
        let mut header_names = Vec::new();
        for c in t.first_col..=t.last_col {
            if let Some(h) = header_text(grid.value(t.first_row, c)) {
                headers.entry(h.to_lowercase()).or_default().push(c);
                header_names.push(h);
            }
        }
        Frame {
            grid,
            rows: (t.first_row + 1..=t.last_row).collect(),
            header_row: Some(t.first_row),
            first_col: t.first_col,
            last_col: t.last_col,
            headers,
            header_names,
        }
    }

    /// Where per-row results go when the frame rows `keep` are used.
    pub fn placement(&self, keep: &[usize]) -> Placement {
        Placement {
            sheet: self.grid.name.clone(),
            header_row: self.header_row,
            first_col: self.first_col,
            last_col: self.last_col,
            rows: keep.iter().map(|&i| self.rows[i]).collect(),
            first_row: self.rows[0],
            last_row: *self.rows.last().unwrap_or(&self.rows[0]),
        }
    }

    fn has(&self, name: &str) -> bool {
        self.headers.contains_key(&name.trim().to_lowercase())
    }

    /// The table's cells, header row included.
    pub fn range(&self) -> CellRange {
        CellRange {
            first_row: self.header_row.unwrap_or(self.rows.first().copied().unwrap_or(0)),
            last_row: self.rows.last().copied().unwrap_or(0),
            first_col: self.first_col,
            last_col: self.last_col,
        }
    }
}

impl Ctx<'_> {
    /// The sheet of that name, or an error suggesting the closest names.
    pub(super) fn sheet(&self, name: &str, span: Span) -> Result<&Grid, Problem> {
        self.book.sheet(name).ok_or_else(|| {
            let names: Vec<&str> = self.book.sheets.iter().map(|g| g.name.as_str()).collect();
            let near = closest(name, names.iter().copied());
            let help = if near.is_empty() {
                format!("the sheets are {}", names.join(", "))
            } else {
                format!("did you mean {}?", near.join(" or "))
            };
            self.err(span, format!("there is no sheet named '{name}'")).help(help)
        })
    }

    /// Rows and column of a one-column range; the first cell is taken as a
    /// header when it is text and the rest are not all text.
    pub(super) fn range_column(&self, r: &RangeRef, span: Span) -> Result<RangeColumn<'_>, Problem> {
        let grid = match &r.sheet {
            Some(s) => self.sheet(s, span)?,
            None => self.sheet(&self.cell.sheet, span)?,
        };
        if r.start.col != r.end.col {
            return Err(self
                .err(span, "a column reference must be one column wide")
                .help("give one column, such as C2:C40, or a header name"));
        }
        if (r.start.row.is_none() || r.end.row.is_none()) && grid.extent().is_none() {
            return Err(self.err(span, format!("the sheet '{}' is empty", grid.name)));
        }
        // Whole columns stop at the last used row of the sheet.
        let cover = range_rows(grid, r);
        let col = cover.first_col;
        // A request cell in the column (one below the table, say) is never data.
        let mut rows: Vec<u32> = (cover.first_row..=cover.last_row).filter(|&r| !matches!(grid.value(r, col), Value::Text(t) if crate::syntax::looks_like_request(t))).collect();
        // A whole column ends at its own last value, not at the sheet's
        // last used row (which may be a request or another table's).
        if r.start.row.is_none() || r.end.row.is_none() {
            while rows.last().is_some_and(|&r| grid.value(r, col).is_blank()) {
                rows.pop();
            }
        }
        let mut header = None;
        if let Some(&r0) = rows.first() {
            if let Value::Text(t) = grid.value(r0, col) {
                let rest_text = rows[1..].iter().all(|&r| matches!(grid.value(r, col), Value::Text(_) | Value::Empty));
                if !rest_text && !t.trim().is_empty() {
                    header = Some(t.trim().to_string());
                    rows.remove(0);
                }
            }
        }
        Ok(RangeColumn { grid, col, rows, header })
    }

    /// The frame of a request: the table `table=` names (a sheet's table or a
    /// range), else the rows of the first range when no column is named by
    /// header, else the table on the request's own sheet that holds the most
    /// of the `names` used.
    pub(super) fn frame(
        &self,
        req: &Request,
        data: Option<(&Place, Span)>,
        names: &[String],
        columns: &[&Expr],
        requests: &HashSet<CellAddress>,
    ) -> Result<Frame<'_>, Problem> {
        let cell = self.cell;
        let request_cells: HashSet<(u32, u32)> = requests.iter().map(|c| (c.row, c.col)).collect();
        let frame = match data {
            Some((place, span)) => {
                let (grid, range) = match place {
                    Place::Sheet(s) => (self.sheet(s, span)?, None),
                    Place::Range(r) => {
                        let grid = self.sheet(r.sheet.as_deref().unwrap_or(&cell.sheet), span)?;
                        (grid, Some(range_rows(grid, r)))
                    }
                };
                let t = match range {
                    Some(t) => t,
                    None => {
                        let same_sheet = grid.name == cell.sheet;
                        let excl = if same_sheet { request_cells.clone() } else { HashSet::new() };
                        pick_table(grid, &excl, names).ok_or_else(|| self.err(span, format!("the sheet '{}' has no table", grid.name)))?
                    }
                };
                Frame::table(grid, t)
            }
            None if names.is_empty() => {
                // Only ranges: the frame is the first range's rows.
                let first = columns.first().map(|e| e.span).unwrap_or(req.span);
                let Some(r) = columns.iter().find_map(|e| has_ranges(e)) else {
                    return Err(self.err(first, "the request names no column").help("name columns by their header, such as Yield, or by a range such as C2:C40"));
                };
                let rc = self.range_column(&r, first)?;
                Frame {
                    grid: rc.grid,
                    header_row: rc.header.as_ref().and(rc.rows.first().map(|r| r.saturating_sub(1))),
                    first_col: rc.col,
                    last_col: rc.col,
                    headers: BTreeMap::new(),
                    header_names: Vec::new(),
                    rows: rc.rows,
                }
            }
            None => {
                let grid = self.sheet(&cell.sheet, req.span)?;
                let t = pick_table(grid, &request_cells, names).ok_or_else(|| {
                    self.err(req.function.span, format!("the sheet '{}' has no data table besides its requests", grid.name))
                        .help("put the data in a table whose first row holds headers, or point to it with table=Sheet!A1:F100")
                })?;
                Frame::table(grid, t)
            }
        };
        if frame.rows.is_empty() {
            return Err(self.err(req.span, format!("the table {}!{} has headers but no data rows", crate::cells::quote_sheet_name(&frame.grid.name), frame.range())));
        }
        Ok(frame)
    }
}
