//! Reading workbooks: every format calamine opens (xlsx, xlsm, xlsb, xls,
//! ods) becomes a [`Workbook`] of [`Grid`](crate::cells::Grid)s in absolute
//! coordinates.
//!
//! This is the only module that imports calamine; nothing past it sees
//! calamine's types, and calamine's errors reach callers only as the
//! `source()` of a [`ReadError`] whose message speaks in user terms.
//!
//! What is kept: sheet order, names and visibility; every value (numbers,
//! text, booleans, dates and times as 1900-system serials, error values);
//! formula text beside its cached value; merged ranges (xlsx and xls only —
//! calamine exposes none for xlsb and ods — and on xlsx only for sheets up
//! to [`MERGE_SCAN_MAX_CELLS`]). Chart sheets and VBA modules hold no cells
//! and are left out.
//!
//! Memory: xlsx and xlsb sheets are streamed cell by cell into a grid sized
//! once from the sheet's dimension record (no per-cell allocation for
//! numbers); xls and ods sheets come through calamine's dense range, which
//! calamine builds before we see it (xls sheets are measured first, see
//! `compound.rs`).
//!
//! Robustness: malformed input gives a [`ReadError`], not a panic or an
//! endless wait. calamine's errors are translated; its panics on malformed
//! content are caught (see `read_guarded`); its OpenDocument reader, which
//! can loop forever on a cut document, runs on a watched thread (see
//! `open_ods_watched`); both are in `guards.rs`.
//!
//! The parts: this file holds the public API and the top-level flow
//! (`read_any`); `format.rs` tells the format from the first bytes and opens
//! the matching calamine reader; `guards.rs` keeps reader panics and stalls
//! from reaching the user; `compound.rs` checks an OLE compound file (chain
//! loops, xls sheet sizes) before calamine reads it; `sheets.rs` builds each
//! sheet's grid; `values.rs` converts calamine's cell values to ours.
//! Date arithmetic lives in `cells::dates`.

use std::fmt;
use std::fs::File;
use std::io::{BufReader, Cursor, Read, Seek};
use std::path::Path;

use calamine::{SheetType, SheetVisible};

use crate::cells::{CellRange, Visibility, Workbook};

mod compound;
mod format;
mod guards;
mod sheets;
mod values;

use format::{open_compound, open_zip, sniff, Book, Sniffed};
use guards::read_guarded;
use sheets::read_sheet;

/// The largest used rectangle (rows × columns) one sheet may have; a larger
/// sheet is refused with [`ReadError::TooLarge`] before its cells are stored.
/// At 16 bytes a cell this bounds one grid to 800 MB.
pub const MAX_CELLS: usize = 50_000_000;

/// xlsx sheets whose used rectangle is larger than this are not read a
/// second time for their merged ranges: calamine finds them only by
/// scanning the whole sheet XML again, which costs about a third of the
/// read (measured: 2.4 M cells, 1.7 s → 2.3 s), and large data sheets
/// practically never merge cells. Such sheets come back with no merged ranges.
pub const MERGE_SCAN_MAX_CELLS: usize = 2_000_000;

/// How many leading bytes are inspected to tell the file's format.
const HEAD_LEN: u64 = 4096;

/// The underlying cause of a [`ReadError`], for `source()`.
type Cause = Box<dyn std::error::Error + Send + Sync + 'static>;

/// Why a workbook could not be read. `Display` names the file, says what is
/// wrong and what to do; `source()` gives the reader's own error, if any.
#[derive(Debug)]
#[non_exhaustive]
pub enum ReadError {
    /// The file could not be opened or read from disk.
    Io {
        /// The file, as given by the caller.
        file: String,
        /// The operating system's error.
        source: std::io::Error,
    },
    /// The content is not a workbook in any format plumb reads.
    NotAWorkbook {
        /// The file, as given by the caller.
        file: String,
        /// What the content looks like instead, such as "a text file".
        found: &'static str,
    },
    /// The workbook is encrypted with a password.
    PasswordProtected {
        /// The file, as given by the caller.
        file: String,
    },
    /// The file has a workbook's outer form but is cut short or broken.
    Damaged {
        /// The file, as given by the caller.
        file: String,
        /// The reader's error, or the message of a reader panic.
        source: Option<Cause>,
    },
    /// The workbook opened but holds no worksheet.
    NoSheets {
        /// The file, as given by the caller.
        file: String,
    },
    /// One sheet's content could not be read.
    Sheet {
        /// The file, as given by the caller.
        file: String,
        /// The sheet's name.
        sheet: String,
        /// What is wrong and what to do, in user terms.
        reason: String,
        /// The reader's error.
        source: Option<Cause>,
    },
    /// A sheet's used rectangle has more than [`MAX_CELLS`] cells.
    TooLarge {
        /// The file, as given by the caller.
        file: String,
        /// The sheet's name.
        sheet: String,
        /// The used rectangle.
        extent: CellRange,
    },
}

impl fmt::Display for ReadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReadError::Io { file, source } => match source.kind() {
                std::io::ErrorKind::NotFound => write!(f, "{file} could not be opened: there is no such file; check the path"),
                std::io::ErrorKind::PermissionDenied => write!(
                    f,
                    "{file} could not be opened: permission denied; check the file's permissions, or close the program that holds it"
                ),
                _ => write!(f, "{file} could not be read from disk"),
            },
            ReadError::NotAWorkbook { file, found } => write!(
                f,
                "{file} is not a workbook (xlsx, xlsm, xlsb, xls or ods): it is {found}; save it in one of those formats"
            ),
            ReadError::PasswordProtected { file } => {
                write!(f, "{file} is password-protected; save an unprotected copy and use that")
            }
            ReadError::Damaged { file, .. } => write!(
                f,
                "{file} is truncated or damaged; open it in a spreadsheet program and save a new copy"
            ),
            ReadError::NoSheets { file } => write!(f, "{file} holds no worksheet; add a sheet with the data"),
            ReadError::Sheet { file, sheet, reason, .. } => {
                write!(f, "{file}: sheet '{sheet}' could not be read: {reason}")
            }
            ReadError::TooLarge { file, sheet, extent } => write!(
                f,
                "{file}: sheet '{sheet}' uses cells {extent} ({} rows × {} columns), more than the {} cells plumb reads from one sheet; delete unused rows and columns, or split the data over several sheets",
                extent.rows(),
                extent.cols(),
                group_thousands(MAX_CELLS as u64)
            ),
        }
    }
}

impl std::error::Error for ReadError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            ReadError::Io { source, .. } => Some(source),
            ReadError::Damaged { source, .. } | ReadError::Sheet { source, .. } => {
                source.as_deref().map(|e| e as &(dyn std::error::Error + 'static))
            }
            _ => None,
        }
    }
}

/// `50000000` → `50,000,000`.
fn group_thousands(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// A [`ReadError`] before the file name is attached.
enum Fault {
    Io(std::io::Error),
    NotAWorkbook(&'static str),
    Password,
    Damaged(Option<Cause>),
    NoSheets,
    Sheet { sheet: String, reason: String, source: Option<Cause> },
    TooLarge { sheet: String, extent: CellRange },
}

impl Fault {
    fn with_file(self, file: &str) -> ReadError {
        let file = file.to_string();
        match self {
            Fault::Io(source) => ReadError::Io { file, source },
            Fault::NotAWorkbook(found) => ReadError::NotAWorkbook { file, found },
            Fault::Password => ReadError::PasswordProtected { file },
            Fault::Damaged(source) => ReadError::Damaged { file, source },
            Fault::NoSheets => ReadError::NoSheets { file },
            Fault::Sheet { sheet, reason, source } => ReadError::Sheet { file, sheet, reason, source },
            Fault::TooLarge { sheet, extent } => ReadError::TooLarge { file, sheet, extent },
        }
    }
}

/// Reads every worksheet of the workbook at `path`.
///
/// The format is told from the content (the extension only breaks ties), so
/// a workbook saved under a wrong extension still opens.
///
/// ```no_run
/// let book = plumb::read::read_workbook(std::path::Path::new("greenhouse.xlsx"))?;
/// println!("{} sheets", book.sheets.len());
/// # Ok::<(), plumb::read::ReadError>(())
/// ```
pub fn read_workbook(path: &Path) -> Result<Workbook, ReadError> {
    read_workbook_with_format(path).map(|(book, _)| book)
}

/// The format a workbook was read from, told from its content.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Office Open XML (xlsx, xlsm).
    Xlsx,
    /// Binary workbook (xlsb).
    Xlsb,
    /// Legacy binary workbook (BIFF records in a compound file, xls).
    Xls,
    /// OpenDocument spreadsheet; its formulas are in OpenFormula syntax,
    /// not that of xlsx.
    Ods,
}

/// As [`read_workbook`], also saying which format the content was (an ods
/// file saved as `.xlsx` is still [`Format::Ods`]).
pub fn read_workbook_with_format(path: &Path) -> Result<(Workbook, Format), ReadError> {
    let file = path.display().to_string();
    let head = read_head(path).map_err(|e| Fault::Io(e).with_file(&file))?;
    let ext = extension_of(&file);
    read_guarded(&head, ext.as_deref(), || File::open(path).map(BufReader::new)).map_err(|f| f.with_file(&file))
}

/// Reads a workbook held in memory; `name_for_messages` stands for the file
/// in error messages, and its extension, if any, breaks format ties.
pub fn read_workbook_bytes(bytes: &[u8], name_for_messages: &str) -> Result<Workbook, ReadError> {
    let head = &bytes[..bytes.len().min(HEAD_LEN as usize)];
    let ext = extension_of(name_for_messages);
    read_guarded(head, ext.as_deref(), || Ok(Cursor::new(bytes))).map(|(book, _)| book).map_err(|f| f.with_file(name_for_messages))
}

fn read_head(path: &Path) -> std::io::Result<Vec<u8>> {
    let mut head = Vec::with_capacity(HEAD_LEN as usize);
    File::open(path)?.take(HEAD_LEN).read_to_end(&mut head)?;
    Ok(head)
}

fn extension_of(name: &str) -> Option<String> {
    Path::new(name).extension().and_then(|e| e.to_str()).map(str::to_ascii_lowercase)
}

fn read_any<RS: Read + Seek>(
    head: &[u8],
    ext: Option<&str>,
    open: &dyn Fn() -> std::io::Result<RS>,
) -> Result<(Workbook, Format), Fault> {
    let mut book = match sniff(head) {
        Sniffed::Other(found) => return Err(Fault::NotAWorkbook(found)),
        Sniffed::Compound => open_compound(open)?,
        Sniffed::Zip => open_zip(ext, open)?,
    };
    let mut sheets = Vec::new();
    for meta in book.sheets_metadata() {
        if !matches!(meta.typ, SheetType::WorkSheet | SheetType::MacroSheet | SheetType::DialogSheet) {
            continue;
        }
        let mut grid = read_sheet(&mut book, &meta.name)?;
        grid.visibility = match meta.visible {
            SheetVisible::Visible => Visibility::Visible,
            SheetVisible::Hidden => Visibility::Hidden,
            SheetVisible::VeryHidden => Visibility::VeryHidden,
        };
        sheets.push(grid);
    }
    if sheets.is_empty() {
        return Err(Fault::NoSheets);
    }
    let format = match book {
        Book::Xlsx(_) => Format::Xlsx,
        Book::Xlsb(_) => Format::Xlsb,
        Book::Xls(_) => Format::Xls,
        Book::Ods(_) => Format::Ods,
    };
    Ok((Workbook { sheets }, format))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn errors_cross_threads() {
        fn send_sync<T: Send + Sync + 'static>() {}
        send_sync::<ReadError>();
    }

    #[test]
    fn thousands() {
        assert_eq!(group_thousands(50_000_000), "50,000,000");
        assert_eq!(group_thousands(999), "999");
        assert_eq!(group_thousands(1000), "1,000");
    }
}
