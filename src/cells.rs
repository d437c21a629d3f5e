//! Our own cell model: what a workbook holds, independent of any file format.
//!
//! `read` fills [`Grid`]s from a file, `resolve` looks values up in them and
//! `write` copies them cell for cell into the output. Coordinates are
//! absolute and zero-based (row 0, column 0 is `A1`), so an address printed
//! from here matches what the user sees in their spreadsheet program.
//!
//! A grid stores its used rectangle densely, 16 bytes a cell: numbers carry
//! no heap allocation, text is interned in a per-grid string table, and
//! formulas live in a sparse side table, because most cells have none.
//!
//! Date arithmetic (civil dates, serials, ISO 8601 text) is in `dates`.

use std::collections::BTreeMap;
use std::fmt;

pub(crate) mod dates;

pub use dates::civil_from_unix;

/// The largest row count of the open workbook formats (1,048,576 rows).
pub const MAX_ROWS: u32 = 1 << 20;
/// The largest column count of the open workbook formats (16,384 columns, `XFD`).
pub const MAX_COLS: u32 = 1 << 14;

/// A cell of a named sheet, zero-based. Prints in A1 form, `Data!C7`, with the
/// sheet name quoted when it needs it (`'Bay 2'!C7`).
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct CellAddress {
    /// Sheet name as the workbook spells it.
    pub sheet: String,
    /// Zero-based row.
    pub row: u32,
    /// Zero-based column.
    pub col: u32,
}

impl CellAddress {
    /// A new address.
    pub fn new(sheet: impl Into<String>, row: u32, col: u32) -> Self {
        CellAddress { sheet: sheet.into(), row, col }
    }

    /// The address without its sheet, such as `C7`.
    pub fn local(&self) -> String {
        format!("{}{}", column_letters(self.col), self.row + 1)
    }
}

impl fmt::Display for CellAddress {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}!{}", quote_sheet_name(&self.sheet), self.local())
    }
}

/// A sheet name as it must appear before `!` in an A1 reference: bare when it
/// is letters, digits and underscores not starting with a digit and not
/// readable as a cell (`AB12`, `R1C1`, `R2`, `C`), otherwise in single
/// quotes with inner quotes doubled (the workbook formats' rule).
pub fn quote_sheet_name(name: &str) -> String {
    let bare = !name.is_empty()
        && name.chars().all(|c| c.is_alphanumeric() || c == '_' || c == '.')
        && !name.starts_with(|c: char| c.is_ascii_digit() || c == '.')
        && !looks_like_cell(name)
        && !looks_like_r1c1(name);
    if bare {
        name.to_string()
    } else {
        format!("'{}'", name.replace('\'', "''"))
    }
}

/// True when `s` reads as a cell reference such as `AB12` (so a sheet of that
/// name must be quoted).
fn looks_like_cell(s: &str) -> bool {
    let letters = s.chars().take_while(|c| c.is_ascii_alphabetic()).count();
    let rest = &s[letters..];
    (1..=3).contains(&letters) && !rest.is_empty() && rest.chars().all(|c| c.is_ascii_digit())
}

/// True when `s` is, or starts as, a reference of the R1C1 style (`R`, `C`,
/// `RC`, `R2`, `C3`, `R1C1`, `RC4…`), which a reader would take for a cell.
fn looks_like_r1c1(s: &str) -> bool {
    let u = s.to_ascii_uppercase();
    if matches!(u.as_str(), "R" | "C" | "RC") {
        return true;
    }
    ["RC", "R", "C"].iter().any(|p| u.strip_prefix(p).is_some_and(|rest| rest.starts_with(|c: char| c.is_ascii_digit())))
}

/// Column letters of a zero-based column: 0 → `A`, 25 → `Z`, 26 → `AA`,
/// 16383 → `XFD`. Counted in `u64`, so every `u32` has letters.
pub fn column_letters(col: u32) -> String {
    let mut n = u64::from(col) + 1;
    let mut out = Vec::new();
    while n > 0 {
        n -= 1;
        // n % 26 < 26, so the sum is an ASCII capital letter.
        out.push(b'A' + (n % 26) as u8);
        n /= 26;
    }
    out.reverse();
    out.into_iter().map(char::from).collect()
}

/// Zero-based column of column letters (`A` → 0, `xfd` → 16383); `None` when
/// the text is not 1–3 letters or lies beyond the last column.
pub fn column_index(letters: &str) -> Option<u32> {
    if letters.is_empty() || letters.len() > 3 || !letters.chars().all(|c| c.is_ascii_alphabetic()) {
        return None;
    }
    let mut n: u32 = 0;
    for b in letters.bytes() {
        n = n * 26 + u32::from(b.to_ascii_uppercase() - b'A' + 1);
    }
    (n <= MAX_COLS).then(|| n - 1)
}

/// A rectangle of cells on one sheet, inclusive at both ends, zero-based.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct CellRange {
    /// First row.
    pub first_row: u32,
    /// First column.
    pub first_col: u32,
    /// Last row (inclusive).
    pub last_row: u32,
    /// Last column (inclusive).
    pub last_col: u32,
}

impl CellRange {
    /// Number of rows.
    pub fn rows(&self) -> u32 {
        self.last_row - self.first_row + 1
    }
    /// Number of columns.
    pub fn cols(&self) -> u32 {
        self.last_col - self.first_col + 1
    }
    /// The smallest rectangle holding `range` (if any) and the cell
    /// `(row, col)`.
    pub fn enclosing(range: Option<CellRange>, row: u32, col: u32) -> CellRange {
        match range {
            None => CellRange { first_row: row, first_col: col, last_row: row, last_col: col },
            Some(r) => CellRange {
                first_row: r.first_row.min(row),
                first_col: r.first_col.min(col),
                last_row: r.last_row.max(row),
                last_col: r.last_col.max(col),
            },
        }
    }
    /// Whether the cell lies inside.
    pub fn contains(&self, row: u32, col: u32) -> bool {
        (self.first_row..=self.last_row).contains(&row) && (self.first_col..=self.last_col).contains(&col)
    }
}

impl fmt::Display for CellRange {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{}{}:{}{}",
            column_letters(self.first_col),
            self.first_row + 1,
            column_letters(self.last_col),
            self.last_row + 1
        )
    }
}

/// The error values of the workbook formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ErrorValue {
    /// `#DIV/0!`
    Div0,
    /// `#N/A`
    NotAvailable,
    /// `#NAME?`
    Name,
    /// `#NULL!`
    Null,
    /// `#NUM!`
    Num,
    /// `#REF!`
    Ref,
    /// `#VALUE!`
    Value,
    /// `#GETTING_DATA`
    GettingData,
}

impl ErrorValue {
    /// The error as the file formats spell it.
    pub fn as_str(self) -> &'static str {
        match self {
            ErrorValue::Div0 => "#DIV/0!",
            ErrorValue::NotAvailable => "#N/A",
            ErrorValue::Name => "#NAME?",
            ErrorValue::Null => "#NULL!",
            ErrorValue::Num => "#NUM!",
            ErrorValue::Ref => "#REF!",
            ErrorValue::Value => "#VALUE!",
            ErrorValue::GettingData => "#GETTING_DATA",
        }
    }
}

/// What kind of moment a date-time serial number stands for; it only chooses
/// the display format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum DateKind {
    /// A calendar date (whole serial).
    Date,
    /// A date with a time of day.
    DateTime,
    /// A time of day or a duration.
    Time,
}

/// One stored cell value. Text is an index into the grid's string table.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Stored {
    /// No value.
    #[default]
    Empty,
    /// A number.
    Number(f64),
    /// Text, by index into the grid's string table.
    Text(u32),
    /// A boolean.
    Bool(bool),
    /// A date or time as a serial day number of the 1900 date system
    /// (day 1 is 1900-01-01, the fraction is the time of day).
    DateTime(f64, DateKind),
    /// An error value.
    Error(ErrorValue),
}

/// A cell value borrowed from a grid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Value<'a> {
    /// No value.
    Empty,
    /// A number.
    Number(f64),
    /// Text.
    Text(&'a str),
    /// A boolean.
    Bool(bool),
    /// A date-time serial (1900 system) and its kind.
    DateTime(f64, DateKind),
    /// An error value.
    Error(ErrorValue),
}

impl Value<'_> {
    /// Whether the cell holds nothing (or only white space).
    pub fn is_blank(&self) -> bool {
        match self {
            Value::Empty => true,
            Value::Text(t) => t.trim().is_empty(),
            _ => false,
        }
    }
}

/// Whether a sheet shows in the spreadsheet program's tab bar.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Visibility {
    /// Shown.
    #[default]
    Visible,
    /// Hidden, and can be unhidden from the program.
    Hidden,
    /// Hidden so that only a program can unhide it.
    VeryHidden,
}

/// The used cells of one sheet.
///
/// ```
/// use plumb::cells::{Grid, Value};
/// let mut g = Grid::new("Data");
/// g.set_number(2, 1, 4.5);
/// g.set_text(0, 0, "Bay");
/// assert_eq!(g.value(2, 1), Value::Number(4.5));
/// assert_eq!(g.value(0, 0), Value::Text("Bay"));
/// assert_eq!(g.value(9, 9), Value::Empty);
/// ```
#[derive(Debug, Clone, Default)]
pub struct Grid {
    /// Sheet name.
    pub name: String,
    /// Whether the sheet is hidden.
    pub visibility: Visibility,
    first_row: u32,
    first_col: u32,
    rows: u32,
    cols: u32,
    cells: Vec<Stored>,
    strings: Vec<Box<str>>,
    string_index: std::collections::HashMap<Box<str>, u32>,
    formulas: BTreeMap<(u32, u32), Box<str>>,
    /// Merged ranges, as stored in the file.
    pub merged: Vec<CellRange>,
}

impl Grid {
    /// An empty sheet.
    pub fn new(name: impl Into<String>) -> Self {
        Grid { name: name.into(), ..Default::default() }
    }

    /// An empty sheet whose cells will lie in `range`; storage is reserved
    /// once, so filling it allocates nothing per cell.
    pub fn with_extent(name: impl Into<String>, range: CellRange) -> Self {
        let mut g = Grid::new(name);
        g.first_row = range.first_row;
        g.first_col = range.first_col;
        g.rows = range.rows();
        g.cols = range.cols();
        g.cells = vec![Stored::Empty; g.rows as usize * g.cols as usize];
        g
    }

    /// The used rectangle, `None` for a sheet without cells.
    pub fn extent(&self) -> Option<CellRange> {
        (self.rows > 0 && self.cols > 0).then(|| CellRange {
            first_row: self.first_row,
            first_col: self.first_col,
            last_row: self.first_row + self.rows - 1,
            last_col: self.first_col + self.cols - 1,
        })
    }

    /// Number of cells the grid stores (its rectangle's area).
    pub fn area(&self) -> usize {
        self.cells.len()
    }

    fn slot(&self, row: u32, col: u32) -> Option<usize> {
        if row < self.first_row || col < self.first_col {
            return None;
        }
        let (r, c) = (row - self.first_row, col - self.first_col);
        (r < self.rows && c < self.cols).then(|| r as usize * self.cols as usize + c as usize)
    }

    /// Grows the stored rectangle to take in `(row, col)`.
    fn ensure(&mut self, row: u32, col: u32) -> usize {
        if let Some(i) = self.slot(row, col) {
            return i;
        }
        let (fr, fc) = if self.rows == 0 {
            (row, col)
        } else {
            (self.first_row.min(row), self.first_col.min(col))
        };
        let lr = if self.rows == 0 { row } else { (self.first_row + self.rows - 1).max(row) };
        let lc = if self.cols == 0 { col } else { (self.first_col + self.cols - 1).max(col) };
        let (nr, nc) = (lr - fr + 1, lc - fc + 1);
        let mut cells = vec![Stored::Empty; nr as usize * nc as usize];
        for r in 0..self.rows {
            for c in 0..self.cols {
                let old = self.cells[r as usize * self.cols as usize + c as usize];
                let (ar, ac) = (self.first_row + r - fr, self.first_col + c - fc);
                cells[ar as usize * nc as usize + ac as usize] = old;
            }
        }
        self.cells = cells;
        self.first_row = fr;
        self.first_col = fc;
        self.rows = nr;
        self.cols = nc;
        // Invariant: the rectangle now contains (row, col).
        self.slot(row, col).expect("grown grid contains the cell")
    }

    /// Stores a value in a cell.
    pub fn set(&mut self, row: u32, col: u32, value: Stored) {
        let i = self.ensure(row, col);
        self.cells[i] = value;
    }

    /// Stores a number.
    pub fn set_number(&mut self, row: u32, col: u32, x: f64) {
        self.set(row, col, Stored::Number(x));
    }

    /// Stores text, interning it in the grid's string table.
    pub fn set_text(&mut self, row: u32, col: u32, text: &str) {
        let id = self.intern(text);
        self.set(row, col, Stored::Text(id));
    }

    /// The string table index of `text`, adding it when new.
    pub fn intern(&mut self, text: &str) -> u32 {
        if let Some(&id) = self.string_index.get(text) {
            return id;
        }
        let id = self.strings.len() as u32;
        let b: Box<str> = text.into();
        self.strings.push(b.clone());
        self.string_index.insert(b, id);
        id
    }

    /// Records the formula text of a cell (without a leading `=`).
    pub fn set_formula(&mut self, row: u32, col: u32, formula: &str) {
        self.ensure(row, col);
        self.formulas.insert((row, col), formula.into());
    }

    /// The value of a cell; `Empty` outside the used rectangle.
    pub fn value(&self, row: u32, col: u32) -> Value<'_> {
        match self.slot(row, col).map(|i| self.cells[i]) {
            None | Some(Stored::Empty) => Value::Empty,
            Some(Stored::Number(x)) => Value::Number(x),
            Some(Stored::Text(i)) => Value::Text(&self.strings[i as usize]),
            Some(Stored::Bool(b)) => Value::Bool(b),
            Some(Stored::DateTime(x, k)) => Value::DateTime(x, k),
            Some(Stored::Error(e)) => Value::Error(e),
        }
    }

    /// The formula of a cell, without a leading `=`, if it has one.
    pub fn formula(&self, row: u32, col: u32) -> Option<&str> {
        self.formulas.get(&(row, col)).map(|f| &**f)
    }

    /// Every formula cell, in row-major order.
    pub fn formulas(&self) -> impl Iterator<Item = ((u32, u32), &str)> {
        self.formulas.iter().map(|(k, v)| (*k, &**v))
    }

    /// Whether a cell holds a formula without a stored result: the file was
    /// saved by a program that writes formulas without computing them, so
    /// its value reads as blank. The reader keeps the difference: a formula
    /// whose result is empty text reads as `Text("")`, one with no result as
    /// `Empty` (xlsx and ods; an xls formula always stores its result).
    pub fn is_uncomputed(&self, row: u32, col: u32) -> bool {
        self.formulas.contains_key(&(row, col)) && matches!(self.value(row, col), Value::Empty)
    }

    /// Every formula cell without a stored result ([`Grid::is_uncomputed`]),
    /// in row-major order.
    pub fn uncomputed(&self) -> impl Iterator<Item = (u32, u32)> + '_ {
        self.formulas.keys().copied().filter(|&(r, c)| matches!(self.value(r, c), Value::Empty))
    }

    /// Every non-empty cell (value or formula) in row-major order.
    pub fn cells(&self) -> impl Iterator<Item = (u32, u32, Value<'_>)> + '_ {
        let cols = self.cols.max(1) as usize;
        self.cells.iter().enumerate().filter_map(move |(i, s)| {
            let (r, c) = ((i / cols) as u32 + self.first_row, (i % cols) as u32 + self.first_col);
            (!matches!(s, Stored::Empty) || self.formulas.contains_key(&(r, c))).then(|| (r, c, self.value(r, c)))
        })
    }
}

/// A whole workbook: its sheets in order.
#[derive(Debug, Clone, Default)]
pub struct Workbook {
    /// Sheets in workbook order.
    pub sheets: Vec<Grid>,
}

impl Workbook {
    /// The sheet of that name; names compare case-insensitively, as the
    /// workbook formats do.
    pub fn sheet(&self, name: &str) -> Option<&Grid> {
        self.sheets.iter().find(|g| g.name.eq_ignore_ascii_case(name) || g.name.to_lowercase() == name.to_lowercase())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn column_letters_round_trip() {
        for (i, s) in [(0, "A"), (25, "Z"), (26, "AA"), (701, "ZZ"), (702, "AAA"), (16383, "XFD")] {
            assert_eq!(column_letters(i), s);
            assert_eq!(column_index(s), Some(i));
        }
        // Past the last column the letters go on, with no overflow at u32::MAX:
        // 26 + 26² + … + 26⁶ = 321,272,406 columns have at most six letters,
        // fewer than 2³² − 1 < 26 + … + 26⁷ (arithmetic), so it has seven.
        assert_eq!(column_letters(u32::MAX).len(), 7);
        assert_eq!(column_index("XFE"), None);
        assert_eq!(column_index("A1"), None);
    }

    #[test]
    fn addresses_print_in_a1_form() {
        assert_eq!(CellAddress::new("Data", 6, 2).to_string(), "Data!C7");
        assert_eq!(CellAddress::new("Bay 2", 0, 0).to_string(), "'Bay 2'!A1");
        assert_eq!(CellAddress::new("O'Neil", 0, 0).to_string(), "'O''Neil'!A1");
        assert_eq!(CellAddress::new("AB12", 0, 0).to_string(), "'AB12'!A1");
        // R1C1-style names are quoted too (the rule rust_xlsxwriter's utility::quote_sheet_name follows).
        for n in ["R1C1", "r2", "C3", "RC", "R", "RC12x"] {
            assert_eq!(quote_sheet_name(n), format!("'{n}'"), "{n}");
        }
        for n in ["Results", "Crops", "Data_2", "Ωmega", "Данные"] {
            assert_eq!(quote_sheet_name(n), n, "{n}");
        }
    }

    #[test]
    fn grid_grows_in_any_direction() {
        let mut g = Grid::new("S");
        g.set_number(5, 5, 1.0);
        g.set_number(2, 7, 2.0);
        g.set_text(9, 1, "x");
        assert_eq!(g.extent(), Some(CellRange { first_row: 2, first_col: 1, last_row: 9, last_col: 7 }));
        assert_eq!(g.value(5, 5), Value::Number(1.0));
        assert_eq!(g.value(2, 7), Value::Number(2.0));
        assert_eq!(g.value(9, 1), Value::Text("x"));
        assert_eq!(g.cells().count(), 3);
    }
}
