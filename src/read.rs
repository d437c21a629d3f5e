//! Reading workbooks: every format calamine opens (xlsx, xlsm, xlsb, xls,
//! ods) becomes a [`Workbook`] of [`Grid`]s in absolute coordinates.
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
//! `xls_guard`).
//!
//! Robustness: malformed input gives a [`ReadError`], not a panic or an
//! endless wait. calamine's errors are translated; its panics on malformed
//! content are caught (see `read_guarded`); its OpenDocument reader, which
//! can loop forever on a cut document, runs on a watched thread (see
//! `open_ods_watched`).

use std::fmt;
use std::fs::File;
use std::io::{BufReader, Cursor, Read, Seek};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;
use std::sync::mpsc;
use std::time::Duration;

use calamine::{
    CellErrorType, Data, DataRef, Dimensions, ExcelDateTime, Ods, OdsError, Reader, SheetType,
    SheetVisible, Xls, XlsError, Xlsb, XlsbError, Xlsx, XlsxError,
};

use crate::cells::{
    CellRange, DateKind, ErrorValue, Grid, Stored, Value, Visibility, Workbook, MAX_COLS, MAX_ROWS,
};

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

/// The cause of a reader panic, kept as the source of [`ReadError::Damaged`].
#[derive(Debug)]
struct ReaderPanic(String);

impl fmt::Display for ReaderPanic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "the workbook reader stopped on malformed content: {}", self.0)
    }
}

impl std::error::Error for ReaderPanic {}

/// The cause of [`ReadError::Damaged`] when the reader did not finish in time.
#[derive(Debug)]
struct ReaderStalled(Duration);

impl fmt::Display for ReaderStalled {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "the workbook reader did not finish within {} seconds", self.0.as_secs())
    }
}

impl std::error::Error for ReaderStalled {}

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

/// Runs the reader under `catch_unwind`. calamine parses untrusted binary
/// and XML content and some malformed inputs make it index out of bounds
/// (fuzzing its xls reader with a few flipped bytes does so about once in
/// fifty tries); such a panic means the file is malformed, so it becomes
/// [`ReadError::Damaged`], with the panic's message as its source, instead
/// of ending the program. (With `panic = "abort"` nothing is caught.)
fn read_guarded<RS: Read + Seek>(
    head: &[u8],
    ext: Option<&str>,
    open: impl Fn() -> std::io::Result<RS>,
) -> Result<(Workbook, Format), Fault> {
    let _quiet = QuietPanics::begin();
    match catch_unwind(AssertUnwindSafe(|| read_any(head, ext, &open))) {
        Ok(result) => result,
        Err(payload) => Err(Fault::Damaged(Some(Box::new(ReaderPanic(panic_message(&*payload)))))),
    }
}

thread_local! {
    /// Whether this thread is inside the reader, whose panics are caught.
    static IN_READER: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// Keeps caught reader panics off stderr while alive.
///
/// The panic hook prints a panic before `catch_unwind` sees it, so a caught
/// reader panic would still print "thread … panicked" to the user. On first
/// use this installs, once per process, a hook that stays silent on threads
/// inside the reader and passes every other panic to the hook that was in
/// place before. The panic's message is not lost: it is the source of the
/// resulting [`ReadError::Damaged`]. This is the one piece of process-wide
/// state the module touches.
struct QuietPanics {
    was_inside: bool,
}

impl QuietPanics {
    fn begin() -> Self {
        static INSTALL: std::sync::Once = std::sync::Once::new();
        INSTALL.call_once(|| {
            let previous = std::panic::take_hook();
            std::panic::set_hook(Box::new(move |info| {
                if !IN_READER.with(|inside| inside.get()) {
                    previous(info);
                }
            }));
        });
        QuietPanics { was_inside: IN_READER.with(|inside| inside.replace(true)) }
    }
}

impl Drop for QuietPanics {
    fn drop(&mut self) {
        IN_READER.with(|inside| inside.set(self.was_inside));
    }
}

/// The text a panic was raised with.
fn panic_message(payload: &(dyn std::any::Any + Send)) -> String {
    payload
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "unknown panic".to_string())
}

/// What the first bytes say the file is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Sniffed {
    /// An OLE compound file: xls, or an encrypted xlsx/xlsb.
    Compound,
    /// A zip archive: xlsx, xlsm, xlsb or ods.
    Zip,
    /// Not a workbook; the text says what it looks like.
    Other(&'static str),
}

const CFB_MAGIC: [u8; 8] = [0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];

fn sniff(head: &[u8]) -> Sniffed {
    if head.is_empty() {
        return Sniffed::Other("an empty file (0 bytes)");
    }
    if head.starts_with(&CFB_MAGIC) {
        return Sniffed::Compound;
    }
    if head.starts_with(b"PK\x03\x04") || head.starts_with(b"PK\x05\x06") || head.starts_with(b"PK\x07\x08") {
        return Sniffed::Zip;
    }
    let text = match std::str::from_utf8(head) {
        Ok(s) => Some(s),
        // A multi-byte character cut at the end of the head is still text.
        Err(e) if e.error_len().is_none() => std::str::from_utf8(&head[..e.valid_up_to()]).ok(),
        Err(_) => None,
    };
    match text {
        Some(t) if !t.chars().any(|c| c.is_control() && !c.is_whitespace()) => {
            let t = t.trim_start_matches('\u{feff}').trim_start();
            if t.starts_with('<') {
                Sniffed::Other("an XML or HTML text file")
            } else {
                Sniffed::Other("a text file (such as CSV)")
            }
        }
        _ if head.starts_with(b"%PDF") => Sniffed::Other("a PDF document"),
        _ => Sniffed::Other("a file of unrecognised content"),
    }
}

/// A workbook opened by one of calamine's readers.
enum Book<RS: Read + Seek> {
    Xlsx(Xlsx<RS>),
    Xlsb(Xlsb<RS>),
    Xls(Xls<RS>),
    /// calamine's OpenDocument reader parses everything when it opens and
    /// keeps no reader, so it is opened over an owned copy of the bytes
    /// (see `open_ods_watched`).
    Ods(Ods<Cursor<Vec<u8>>>),
}

impl<RS: Read + Seek> Book<RS> {
    fn sheets_metadata(&self) -> Vec<calamine::Sheet> {
        match self {
            Book::Xlsx(b) => b.sheets_metadata().to_vec(),
            Book::Xlsb(b) => b.sheets_metadata().to_vec(),
            Book::Xls(b) => b.sheets_metadata().to_vec(),
            Book::Ods(b) => b.sheets_metadata().to_vec(),
        }
    }
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

/// An OLE compound file is an xls workbook, or an xlsx/xlsb encrypted with
/// a password (the encrypted package lives in such a file).
fn open_compound<RS: Read + Seek>(open: &dyn Fn() -> std::io::Result<RS>) -> Result<Book<RS>, Fault> {
    let mut bytes = Vec::new();
    open().and_then(|mut rs| rs.read_to_end(&mut bytes)).map_err(Fault::Io)?;
    xls_guard::check(&bytes)?;
    drop(bytes);
    let xls_err = match Xls::new(open().map_err(Fault::Io)?) {
        Ok(b) => return Ok(Book::Xls(b)),
        Err(XlsError::Password) => return Err(Fault::Password),
        Err(e) => e,
    };
    if let Err(XlsxError::Password) = Xlsx::new(open().map_err(Fault::Io)?) {
        return Err(Fault::Password);
    }
    match &xls_err {
        // calamine keeps its compound-file error type private; its message
        // is the only way to tell "no workbook stream" from damage.
        XlsError::Cfb(_) if xls_err.to_string().contains("Cannot find Workbook stream") => {
            Err(Fault::NotAWorkbook("a compound document that holds no workbook (such as a word-processor file)"))
        }
        _ => Err(Fault::Damaged(Some(Box::new(xls_err)))),
    }
}

/// A size check of xls sheets before calamine reads them.
///
/// calamine's xls reader builds each sheet as one dense rectangle around
/// its cells, and reserves room for the rectangle a sheet's Dimensions
/// record declares, before we see a cell. Two cells far apart, or a wild
/// Dimensions record, make it ask for tens of gigabytes, and a failed
/// allocation ends the process (no panic to catch). xls content is not
/// compressed, so the cell positions can be read cheaply first: this module
/// finds the `Workbook` stream in the compound file ([MS-CFB] §2.2–2.6),
/// walks each sheet's records ([MS-XLS] §2.1.4) the way calamine does, and
/// refuses a sheet whose cells or declared dimensions span more than
/// [`MAX_CELLS`]. Content it cannot follow is left to calamine, which then
/// reports it.
mod xls_guard {
    use super::{Fault, MAX_CELLS};
    use crate::cells::CellRange;

    const END_OF_CHAIN: u32 = 0xFFFF_FFFE;
    const MAX_REGULAR: u32 = 0xFFFF_FFFA;

    fn u16_at(b: &[u8], at: usize) -> Option<u16> {
        Some(u16::from_le_bytes(b.get(at..at + 2)?.try_into().ok()?))
    }

    fn u32_at(b: &[u8], at: usize) -> Option<u32> {
        Some(u32::from_le_bytes(b.get(at..at + 4)?.try_into().ok()?))
    }

    /// Refuses an xls whose sheets span more than [`MAX_CELLS`].
    pub(super) fn check(file: &[u8]) -> Result<(), Fault> {
        // calamine follows sector chains without a bound: a chain that loops
        // back on itself makes it grow a buffer until memory runs out
        // (found by fuzzing: examples/fuzz_stable.rs).
        if let Some(fat) = fat_table(file) {
            if has_loop(&fat) || minifat_table(file, &fat).is_some_and(|m| has_loop(&m)) {
                return Err(Fault::Damaged(None));
            }
        }
        let Some(stream) = workbook_stream(file) else { return Ok(()) };
        for (name, extent, declared) in sheet_extents(&stream) {
            let area = |r: &CellRange| u64::from(r.rows()) * u64::from(r.cols());
            if let Some(e) = extent.filter(|e| area(e) > MAX_CELLS as u64) {
                return Err(Fault::TooLarge { sheet: name, extent: e });
            }
            if declared > MAX_CELLS as u64 {
                return Err(Fault::Sheet {
                    sheet: name,
                    reason: format!(
                        "its dimension record declares {declared} cells, more than the {} plumb reads from one sheet; the file is damaged, or the sheet must be split",
                        super::group_thousands(MAX_CELLS as u64)
                    ),
                    source: None,
                });
            }
        }
        Ok(())
    }

    /// The bytes of the chain of units from `start`, `len` bytes at most; a
    /// loop in the chain or a unit beyond the file gives `None`.
    fn chain<'a>(start: u32, unit: &dyn Fn(u32) -> Option<&'a [u8]>, table: &[u32], len: usize) -> Option<Vec<u8>> {
        let mut out = Vec::new();
        let mut id = start;
        let mut steps = 0;
        while id != END_OF_CHAIN && out.len() < len {
            steps += 1;
            if steps > table.len() + 1 {
                return None;
            }
            out.extend_from_slice(unit(id)?);
            id = *table.get(id as usize)?;
        }
        out.truncate(len);
        Some(out)
    }

    /// The file allocation table ([MS-CFB] §2.3), read as
    /// [`workbook_stream`] reads it; `None` where it cannot be followed.
    fn fat_table(file: &[u8]) -> Option<Vec<u32>> {
        let size = sector_size(file)?;
        let n_sectors = file.len() / size;
        // DIFAT: 109 entries in the header, then a chain of DIFAT sectors.
        let mut difat: Vec<u32> = (0..109).filter_map(|i| u32_at(file, 76 + 4 * i)).collect();
        let mut next = u32_at(file, 68)?;
        let mut guard = 0;
        while next < MAX_REGULAR {
            guard += 1;
            if guard > n_sectors {
                return None;
            }
            let s = sector_at(file, size, next)?;
            let per = size / 4 - 1;
            difat.extend((0..per).filter_map(|i| u32_at(s, 4 * i)));
            next = u32_at(s, 4 * per)?;
        }
        let mut fat = Vec::new();
        for id in difat.into_iter().filter(|id| *id < MAX_REGULAR) {
            let s = sector_at(file, size, id)?;
            fat.extend((0..size / 4).filter_map(|i| u32_at(s, 4 * i)));
        }
        Some(fat)
    }

    /// The sector size of a compound file's header: 512 (version 3) or
    /// 4096 (version 4) bytes; `None` for anything else.
    fn sector_size(file: &[u8]) -> Option<usize> {
        match u16_at(file, 30)? {
            9 => Some(512),
            12 => Some(4096),
            _ => None,
        }
    }

    /// Sector `id` of a compound file (sector 0 follows the header sector).
    fn sector_at(file: &[u8], size: usize, id: u32) -> Option<&[u8]> {
        let start = (id as usize + 1).checked_mul(size)?;
        file.get(start..start.checked_add(size)?)
    }

    /// The mini FAT ([MS-CFB] §2.4), whose chain the FAT gives.
    fn minifat_table(file: &[u8], fat: &[u32]) -> Option<Vec<u32>> {
        let size = sector_size(file)?;
        let sector = |id: u32| sector_at(file, size, id);
        let bytes = chain(u32_at(file, 60)?, &sector, fat, usize::MAX)?;
        Some((0..bytes.len() / 4).filter_map(|i| u32_at(&bytes, 4 * i)).collect())
    }

    /// Whether some chain of the table returns to a sector it passed: each
    /// entry names the next sector, so the table is a functional graph and
    /// one pass with three marks finds any cycle. A sound file has none
    /// (unused sectors are marked free).
    fn has_loop(table: &[u32]) -> bool {
        let n = table.len();
        let mut mark = vec![0u8; n]; // 0 unseen, 1 on the current path, 2 done
        for start in 0..n {
            let mut path = Vec::new();
            let mut id = start;
            while id < n && mark[id] == 0 {
                mark[id] = 1;
                path.push(id);
                id = table[id] as usize;
            }
            if id < n && mark[id] == 1 {
                return true;
            }
            for p in path {
                mark[p] = 2;
            }
        }
        false
    }

    /// The content of the `Workbook` (or BIFF5 `Book`) stream.
    fn workbook_stream(file: &[u8]) -> Option<Vec<u8>> {
        let size = sector_size(file)?;
        let sector = |id: u32| sector_at(file, size, id);
        let fat = fat_table(file)?;
        let dirs = chain(u32_at(file, 48)?, &sector, &fat, usize::MAX)?;
        let entries: Vec<&[u8]> = dirs.chunks_exact(128).collect();
        let root = entries.first()?;
        let named = |want: &str| {
            entries.iter().find(|e| {
                let len = (u16_at(e, 64).unwrap_or(0) as usize).min(64);
                let units: Vec<u16> = (0..len / 2).filter_map(|i| u16_at(e, 2 * i)).take_while(|u| *u != 0).collect();
                String::from_utf16_lossy(&units).eq_ignore_ascii_case(want)
            })
        };
        let entry = named("Workbook").or_else(|| named("Book"))?;
        let (start, size) = (u32_at(entry, 116)?, u32_at(entry, 120)? as usize);
        if size >= 4096 {
            return chain(start, &sector, &fat, size);
        }
        // A small stream lives in 64-byte units of the mini stream, which is
        // the root entry's stream, mapped by the mini FAT.
        let ministream = chain(u32_at(root, 116)?, &sector, &fat, u32_at(root, 120)? as usize)?;
        let minifat_bytes = chain(u32_at(file, 60)?, &sector, &fat, usize::MAX)?;
        let minifat: Vec<u32> = (0..minifat_bytes.len() / 4).filter_map(|i| u32_at(&minifat_bytes, 4 * i)).collect();
        let mini = |id: u32| ministream.get(id as usize * 64..id as usize * 64 + 64);
        chain(start, &mini, &minifat, size)
    }

    /// Each sheet's name, the rectangle around its cells and the cell count
    /// its Dimensions records declare, following calamine's walk: from each
    /// BoundSheet8 offset, records up to the sheet's EOF, skipping nested
    /// substreams.
    fn sheet_extents(stream: &[u8]) -> Vec<(String, Option<CellRange>, u64)> {
        let records = |from: usize| {
            let mut at = from;
            std::iter::from_fn(move || {
                let typ = u16_at(stream, at)?;
                let len = u16_at(stream, at + 2)? as usize;
                let data = stream.get(at + 4..at + 4 + len)?;
                at += 4 + len;
                Some((typ, data))
            })
        };
        let mut sheets = Vec::new();
        for (typ, data) in records(0) {
            match typ {
                0x0085 => {
                    let Some(pos) = u32_at(data, 0) else { continue };
                    let name = data.get(6..).map(short_string).unwrap_or_default();
                    sheets.push((pos as usize, name));
                }
                0x000A => break,
                _ => {}
            }
        }
        let mut out = Vec::new();
        for (pos, name) in sheets {
            let mut extent: Option<CellRange> = None;
            let mut declared = 0u64;
            let mut add = |row: u16, col: u16| {
                let (r, c) = (u32::from(row), u32::from(col));
                extent = Some(match extent {
                    None => CellRange { first_row: r, first_col: c, last_row: r, last_col: c },
                    Some(e) => CellRange {
                        first_row: e.first_row.min(r),
                        first_col: e.first_col.min(c),
                        last_row: e.last_row.max(r),
                        last_col: e.last_col.max(c),
                    },
                });
            };
            let (mut seen_bof, mut depth) = (false, 0usize);
            for (typ, data) in records(pos) {
                if depth > 0 {
                    match typ {
                        0x0809 => depth += 1,
                        0x000A => depth -= 1,
                        _ => {}
                    }
                    continue;
                }
                let cell = || Some((u16_at(data, 0)?, u16_at(data, 2)?));
                match typ {
                    0x0809 if seen_bof => depth += 1,
                    0x0809 => seen_bof = true,
                    0x000A => break,
                    0x0200 => declared = declared.max(dimension_cells(data)),
                    0x0203 | 0x0204 | 0x00D6 | 0x0205 | 0x027E | 0x00FD | 0x0006 => {
                        if let Some((r, c)) = cell() {
                            add(r, c);
                        }
                    }
                    0x00BD => {
                        if let (Some((r, c)), Some(last)) = (cell(), data.len().checked_sub(2).and_then(|at| u16_at(data, at))) {
                            add(r, c);
                            add(r, last);
                        }
                    }
                    _ => {}
                }
            }
            out.push((name, extent, declared));
        }
        out
    }

    /// The cell count a Dimensions record declares, as calamine reads it
    /// (BIFF5 16-bit or BIFF8 32-bit rows, end exclusive).
    fn dimension_cells(d: &[u8]) -> u64 {
        let parts = match d.len() {
            10 => (u16_at(d, 0).map(u32::from), u16_at(d, 2).map(u32::from), u16_at(d, 4), u16_at(d, 6)),
            14 | 16 => (u32_at(d, 0), u32_at(d, 4), u16_at(d, 8), u16_at(d, 10)),
            _ => return 0,
        };
        let (Some(rf), Some(rl), Some(cf), Some(cl)) = parts else { return 0 };
        let cf = if cf > 0xFF || cl < cf { 0 } else { cf };
        if rl == 0 || cl == 0 {
            return 1;
        }
        let rows = u64::from(rl - 1).wrapping_sub(u64::from(rf)).wrapping_add(1);
        let cols = u64::from(cl - 1).wrapping_sub(u64::from(cf)).wrapping_add(1);
        rows.saturating_mul(cols)
    }

    /// A BoundSheet8 name: a byte count, then (BIFF8) a flag for 16-bit
    /// characters, then the characters. Best effort: it only names a sheet
    /// in a message.
    fn short_string(d: &[u8]) -> String {
        let Some(&n) = d.first() else { return String::new() };
        match d.get(1) {
            Some(1) => {
                let units: Vec<u16> = (0..n as usize).filter_map(|i| u16_at(d, 2 + 2 * i)).collect();
                String::from_utf16_lossy(&units)
            }
            _ => d.get(2..2 + n as usize).map(|b| b.iter().map(|&c| char::from(c)).collect()).unwrap_or_default(),
        }
    }
}

/// Which reader to try first on a zip archive; the others follow.
#[derive(Clone, Copy)]
enum ZipKind {
    Xlsx,
    Xlsb,
    Ods,
}

/// A zip archive is xlsx/xlsm, xlsb or ods. Each reader is tried in an order
/// set by the extension; a reader that fails because the archive lacks its
/// parts ("not this format") gives way to the next, while a broken archive
/// or a password stops the search.
fn open_zip<RS: Read + Seek>(ext: Option<&str>, open: &dyn Fn() -> std::io::Result<RS>) -> Result<Book<RS>, Fault> {
    use ZipKind::*;
    let order = match ext {
        Some("xlsb") => [Xlsb, Xlsx, Ods],
        Some("ods") => [Ods, Xlsx, Xlsb],
        _ => [Xlsx, Xlsb, Ods],
    };
    let mut first_damage: Option<Cause> = None;
    let mut opened_empty = false;
    for kind in order {
        let rs = open().map_err(Fault::Io)?;
        let (book, err): (Option<Book<RS>>, Option<(Cause, ZipFailure)>) = match kind {
            Xlsx => match calamine::Xlsx::new(rs) {
                Ok(b) => (Some(Book::Xlsx(b)), None),
                Err(e) => {
                    let class = classify_xlsx_open(&e);
                    (None, Some((Box::new(e), class)))
                }
            },
            Xlsb => match calamine::Xlsb::new(rs) {
                Ok(b) => (Some(Book::Xlsb(b)), None),
                Err(e) => {
                    let class = classify_xlsb_open(&e);
                    (None, Some((Box::new(e), class)))
                }
            },
            Ods => match open_ods_watched(rs)? {
                Ok(b) => (Some(Book::Ods(b)), None),
                Err(e) => {
                    let class = classify_ods_open(&e);
                    (None, Some((Box::new(e), class)))
                }
            },
        };
        if let Some(book) = book {
            // A reader can accept a foreign package and find no sheets in it
            // (xlsx's reader on an xlsb file); then the next reader gets a turn.
            if !book.sheets_metadata().is_empty() {
                return Ok(book);
            }
            opened_empty = true;
            continue;
        }
        if let Some((cause, class)) = err {
            match class {
                ZipFailure::Password => return Err(Fault::Password),
                ZipFailure::BrokenArchive => return Err(Fault::Damaged(Some(cause))),
                ZipFailure::Io(kind) => return Err(Fault::Io(std::io::Error::new(kind, cause))),
                ZipFailure::NotThisFormat => {}
                ZipFailure::Damaged => {
                    if first_damage.is_none() {
                        first_damage = Some(cause);
                    }
                }
            }
        }
    }
    match first_damage {
        Some(cause) => Err(Fault::Damaged(Some(cause))),
        None if opened_empty => Err(Fault::NoSheets),
        None => Err(Fault::NotAWorkbook("a zip archive that holds no workbook")),
    }
}

/// The least time the OpenDocument reader is given, and the extra time per
/// megabyte of file. Measured here: 140 MB of content XML (2 M cells) parse
/// in 0.94 s, about 150 MB/s, and content XML compresses roughly tenfold, so
/// a megabyte of file takes well under a tenth of a second; the limits leave
/// a margin of twenty times or more.
const ODS_BASE_SECONDS: u64 = 15;
const ODS_SECONDS_PER_MB: u64 = 2;

/// What calamine's OpenDocument reader returned, when it returned.
type OdsOpened = Result<Ods<Cursor<Vec<u8>>>, OdsError>;

/// Opens an OpenDocument spreadsheet on a watched thread.
///
/// calamine 0.38's OpenDocument reader never returns on some damaged
/// content: when `content.xml` ends inside a table, its table loop treats
/// the end of the document like any other event and spins forever. A
/// catch-all cannot stop a loop, so the reader runs on its own thread and
/// is given a time limit scaled to the file's size; past it the file is
/// reported as damaged. The stalled thread cannot be stopped and keeps a
/// core busy until the program exits. A panic on that thread is caught
/// there and reported the same way as one on ours.
fn open_ods_watched<RS: Read + Seek>(mut rs: RS) -> Result<OdsOpened, Fault> {
    let mut bytes = Vec::new();
    rs.seek(std::io::SeekFrom::Start(0)).map_err(Fault::Io)?;
    rs.read_to_end(&mut bytes).map_err(Fault::Io)?;
    let limit = Duration::from_secs(ODS_BASE_SECONDS + ODS_SECONDS_PER_MB * (bytes.len() as u64 >> 20));
    open_ods_bytes_watched(bytes, limit)
}

fn open_ods_bytes_watched(bytes: Vec<u8>, limit: Duration) -> Result<OdsOpened, Fault> {
    let (tx, rx) = mpsc::channel();
    let spawned = std::thread::Builder::new().name("plumb-ods-reader".into()).spawn(move || {
        let _quiet = QuietPanics::begin();
        let result = catch_unwind(AssertUnwindSafe(|| Ods::new(Cursor::new(bytes))));
        // The receiver may have given up waiting; nothing is left to tell.
        let _ = tx.send(result.map_err(|payload| panic_message(&*payload)));
    });
    if let Err(e) = spawned {
        return Err(Fault::Io(e));
    }
    match rx.recv_timeout(limit) {
        Ok(Ok(result)) => Ok(result),
        Ok(Err(msg)) => Err(Fault::Damaged(Some(Box::new(ReaderPanic(msg))))),
        Err(_) => Err(Fault::Damaged(Some(Box::new(ReaderStalled(limit))))),
    }
}

/// How opening a zip archive with one reader failed.
enum ZipFailure {
    /// The archive is encrypted.
    Password,
    /// The zip structure itself is broken (truncated, bad headers).
    BrokenArchive,
    /// Reading failed for a reason outside the content.
    Io(std::io::ErrorKind),
    /// The archive lacks this format's parts.
    NotThisFormat,
    /// This format's parts are present but broken.
    Damaged,
}

fn classify_io(e: &std::io::Error) -> ZipFailure {
    match e.kind() {
        std::io::ErrorKind::UnexpectedEof | std::io::ErrorKind::InvalidData => ZipFailure::BrokenArchive,
        kind => ZipFailure::Io(kind),
    }
}

fn classify_xlsx_open(e: &XlsxError) -> ZipFailure {
    match e {
        XlsxError::Password => ZipFailure::Password,
        XlsxError::Zip(_) => ZipFailure::BrokenArchive,
        XlsxError::Io(io) => classify_io(io),
        XlsxError::FileNotFound(_) | XlsxError::RelationshipNotFound => ZipFailure::NotThisFormat,
        _ => ZipFailure::Damaged,
    }
}

fn classify_xlsb_open(e: &XlsbError) -> ZipFailure {
    match e {
        XlsbError::Password => ZipFailure::Password,
        XlsbError::Zip(_) => ZipFailure::BrokenArchive,
        XlsbError::Io(io) => classify_io(io),
        XlsbError::FileNotFound(_) => ZipFailure::NotThisFormat,
        _ => ZipFailure::Damaged,
    }
}

fn classify_ods_open(e: &OdsError) -> ZipFailure {
    match e {
        OdsError::Password => ZipFailure::Password,
        OdsError::Zip(_) => ZipFailure::BrokenArchive,
        OdsError::Io(io) => classify_io(io),
        OdsError::FileNotFound(_) | OdsError::InvalidMime(_) => ZipFailure::NotThisFormat,
        _ => ZipFailure::Damaged,
    }
}

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

fn read_sheet<RS: Read + Seek>(book: &mut Book<RS>, name: &str) -> Result<Grid, Fault> {
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
        let used = match self.used {
            None => CellRange { first_row: row, first_col: col, last_row: row, last_col: col },
            Some(u) => CellRange {
                first_row: u.first_row.min(row),
                first_col: u.first_col.min(col),
                last_row: u.last_row.max(row),
                last_col: u.last_col.max(col),
            },
        };
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

fn value_of_ref<'a>(d: &'a DataRef<'_>, is_1904: bool) -> Value<'a> {
    match d {
        DataRef::Int(i) => Value::Number(*i as f64),
        DataRef::Float(x) => Value::Number(*x),
        DataRef::String(s) => Value::Text(s),
        DataRef::SharedString(s) => Value::Text(s),
        DataRef::Bool(b) => Value::Bool(*b),
        DataRef::DateTime(dt) => datetime_value(dt, is_1904),
        DataRef::DateTimeIso(s) => iso_datetime_value(s),
        DataRef::DurationIso(s) => iso_duration_value(s),
        DataRef::Error(e) => Value::Error(error_value(e)),
        DataRef::Empty => Value::Empty,
    }
}

fn value_of_data(d: &Data, is_1904: bool) -> Value<'_> {
    match d {
        Data::Int(i) => Value::Number(*i as f64),
        Data::Float(x) => Value::Number(*x),
        Data::String(s) => Value::Text(s),
        Data::Bool(b) => Value::Bool(*b),
        Data::DateTime(dt) => datetime_value(dt, is_1904),
        Data::DateTimeIso(s) => iso_datetime_value(s),
        Data::DurationIso(s) => iso_duration_value(s),
        Data::Error(e) => Value::Error(error_value(e)),
        Data::Empty => Value::Empty,
    }
}

fn error_value(e: &CellErrorType) -> ErrorValue {
    match e {
        CellErrorType::Div0 => ErrorValue::Div0,
        CellErrorType::NA => ErrorValue::NotAvailable,
        CellErrorType::Name => ErrorValue::Name,
        CellErrorType::Null => ErrorValue::Null,
        CellErrorType::Num => ErrorValue::Num,
        CellErrorType::Ref => ErrorValue::Ref,
        CellErrorType::Value => ErrorValue::Value,
        CellErrorType::GettingData => ErrorValue::GettingData,
    }
}

/// Days between the 1900 and 1904 date systems' day zero (1462 days: four
/// years and a day). Source: ECMA-376 Part 1, §18.17.4.1 (date systems).
const DAYS_1904_TO_1900: f64 = 1462.0;

/// A number that carries a date or time format, as a 1900-system serial.
///
/// calamine tells only "date/time format" from "duration format" (such as
/// `[h]:mm:ss`); the kind is then chosen from the number: a duration, or a
/// serial in [0, 1) (a bare time of day), is [`DateKind::Time`] and keeps its
/// value as is (no date system applies to it); a whole serial is a
/// [`DateKind::Date`]; anything else a [`DateKind::DateTime`]. Serials of a
/// 1904-system workbook are moved to the 1900 system.
fn datetime_value(dt: &ExcelDateTime, is_1904: bool) -> Value<'static> {
    let raw = dt.as_f64();
    if dt.is_duration() || (0.0..1.0).contains(&raw) {
        return Value::DateTime(raw, DateKind::Time);
    }
    let serial = if is_1904 { raw + DAYS_1904_TO_1900 } else { raw };
    let kind = if serial.fract() == 0.0 { DateKind::Date } else { DateKind::DateTime };
    Value::DateTime(serial, kind)
}

/// An ISO 8601 date or date-time (ods `office:date-value`, xlsx `t="d"`) as
/// a 1900-system serial; text it cannot place stays text.
fn iso_datetime_value(s: &str) -> Value<'_> {
    match parse_iso_datetime(s) {
        Some((serial, kind)) => Value::DateTime(serial, kind),
        None => Value::Text(s),
    }
}

/// An ISO 8601 duration (ods `office:time-value`) as a serial day count of
/// kind [`DateKind::Time`]; text it cannot read stays text.
fn iso_duration_value(s: &str) -> Value<'_> {
    match parse_iso_duration(s) {
        Some(days) => Value::DateTime(days, DateKind::Time),
        None => Value::Text(s),
    }
}

/// Days from 1970-01-01 to the civil date (proleptic Gregorian).
/// Source: H. Hinnant, "chrono-Compatible Low-Level Date Algorithms",
/// `days_from_civil` (from memory).
fn days_from_civil(y: i64, m: u32, d: u32) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let mp = (i64::from(m) + 9) % 12;
    let doy = (153 * mp + 2) / 5 + i64::from(d) - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

fn days_in_month(y: i64, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ if (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 => 29,
        _ => 28,
    }
}

/// The 1900-system serial of a civil date, `None` before 1900-01-01.
///
/// Serial 1 is 1900-01-01; the system counts a 29 February 1900 that never
/// was (serial 60), so dates from 1900-03-01 on are days since 1899-12-30
/// and earlier ones one less. Source: ECMA-376 Part 1, §18.17.4.1.
fn serial_of_date(y: i64, m: u32, d: u32) -> Option<f64> {
    let days = days_from_civil(y, m, d) - days_from_civil(1899, 12, 30);
    let serial = if days < 61 { days - 1 } else { days };
    (serial >= 1).then_some(serial as f64)
}

/// Splits `n` ASCII digits off the front of `s`.
fn take_digits(s: &str, n: usize) -> Option<(u32, &str)> {
    let head = s.get(..n)?;
    if !head.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    Some((head.parse().ok()?, &s[n..]))
}

/// `HH:MM[:SS[.fff]]` as a fraction of a day.
fn parse_clock(s: &str) -> Option<f64> {
    let (h, rest) = take_digits(s, 2)?;
    let rest = rest.strip_prefix(':')?;
    let (m, rest) = take_digits(rest, 2)?;
    let secs = if rest.is_empty() {
        0.0
    } else {
        let rest = rest.strip_prefix(':')?;
        let (whole, frac) = take_digits(rest, 2)?;
        let frac_value = if frac.is_empty() {
            0.0
        } else {
            let digits = frac.strip_prefix('.')?;
            if digits.is_empty() || !digits.bytes().all(|b| b.is_ascii_digit()) {
                return None;
            }
            format!("0.{digits}").parse::<f64>().ok()?
        };
        f64::from(whole) + frac_value
    };
    if h > 24 || m > 59 || secs >= 61.0 || (h == 24 && (m > 0 || secs > 0.0)) {
        return None;
    }
    Some((f64::from(h) * 3600.0 + f64::from(m) * 60.0 + secs) / 86_400.0)
}

/// `YYYY-MM-DD[THH:MM[:SS[.fff]]][Z]` or a bare `HH:MM[:SS[.fff]]` as a
/// 1900-system serial and its kind: a date alone is a `Date`, a date with a
/// time part a `DateTime`, a time alone a `Time`. Offsets other than `Z`
/// are refused (the workbook formats keep no time zone).
fn parse_iso_datetime(s: &str) -> Option<(f64, DateKind)> {
    let s = s.trim();
    let s = s.strip_suffix('Z').unwrap_or(s);
    if s.len() >= 3 && s.as_bytes()[2] == b':' {
        return parse_clock(s).map(|t| (t, DateKind::Time));
    }
    let (y, rest) = take_digits(s, 4)?;
    let rest = rest.strip_prefix('-')?;
    let (m, rest) = take_digits(rest, 2)?;
    let rest = rest.strip_prefix('-')?;
    let (d, rest) = take_digits(rest, 2)?;
    let y = i64::from(y);
    if !(1..=12).contains(&m) || d == 0 || d > days_in_month(y, m) {
        return None;
    }
    let day = serial_of_date(y, m, d)?;
    if rest.is_empty() {
        return Some((day, DateKind::Date));
    }
    let time = parse_clock(rest.strip_prefix('T')?)?;
    Some((day + time, DateKind::DateTime))
}

/// `[-]P[nD][T[nH][nM][n[.f]S]]` as a number of days. Years, months and
/// weeks are refused: their length in days is not fixed.
fn parse_iso_duration(s: &str) -> Option<f64> {
    let s = s.trim();
    let (sign, s) = match s.strip_prefix('-') {
        Some(rest) => (-1.0, rest),
        None => (1.0, s),
    };
    let mut rest = s.strip_prefix('P')?;
    let mut days = 0.0;
    let mut in_time = false;
    let mut seen = false;
    let mut last_unit = 0u8; // order: D=1, H=2, M=3, S=4
    while !rest.is_empty() {
        if let Some(r) = rest.strip_prefix('T') {
            if in_time {
                return None;
            }
            in_time = true;
            rest = r;
            continue;
        }
        let len = rest.bytes().take_while(|b| b.is_ascii_digit() || *b == b'.').count();
        if len == 0 {
            return None;
        }
        let n: f64 = rest[..len].parse().ok()?;
        let unit = *rest.as_bytes().get(len)?;
        let (order, scale) = match (unit, in_time) {
            (b'D', false) => (1, 1.0),
            (b'H', true) => (2, 1.0 / 24.0),
            (b'M', true) => (3, 1.0 / 1440.0),
            (b'S', true) => (4, 1.0 / 86_400.0),
            _ => return None,
        };
        if order <= last_unit {
            return None;
        }
        last_unit = order;
        days += n * scale;
        seen = true;
        rest = &rest[len + 1..];
    }
    seen.then_some(sign * days)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn serials_of_known_dates() {
        // Serials from memory / common practice (the 1900 date system):
        // 1900-01-01 = 1, 1900-02-28 = 59, 1900-03-01 = 61, 2025-01-01 = 45658.
        assert_eq!(serial_of_date(1900, 1, 1), Some(1.0));
        assert_eq!(serial_of_date(1900, 2, 28), Some(59.0));
        assert_eq!(serial_of_date(1900, 3, 1), Some(61.0));
        assert_eq!(serial_of_date(2025, 1, 1), Some(45658.0));
        assert_eq!(serial_of_date(2026, 1, 5), Some(46027.0));
        assert_eq!(serial_of_date(1899, 12, 31), None);
    }

    #[test]
    fn iso_dates_and_times() {
        assert_eq!(parse_iso_datetime("2026-01-05"), Some((46027.0, DateKind::Date)));
        assert_eq!(parse_iso_datetime("2026-01-05T12:00:00"), Some((46027.5, DateKind::DateTime)));
        assert_eq!(parse_iso_datetime("2026-01-05T06:00"), Some((46027.25, DateKind::DateTime)));
        assert_eq!(parse_iso_datetime("2026-01-05T00:00:00.5Z"), Some((46027.0 + 0.5 / 86_400.0, DateKind::DateTime)));
        assert_eq!(parse_iso_datetime("18:00:00"), Some((0.75, DateKind::Time)));
        for bad in ["2026-02-29", "2026-13-01", "2026-1-5", "1850-06-01", "2026-01-05T25:00:00", "2026-01-05+01:00", "", "soon"] {
            assert_eq!(parse_iso_datetime(bad), None, "{bad}");
        }
        assert_eq!(parse_iso_datetime("2024-02-29"), Some((45351.0, DateKind::Date)));
    }

    #[test]
    fn iso_durations() {
        assert_eq!(parse_iso_duration("PT12H00M00S"), Some(0.5));
        assert_eq!(parse_iso_duration("PT36H"), Some(1.5));
        assert_eq!(parse_iso_duration("P1DT6H"), Some(1.25));
        assert_eq!(parse_iso_duration("-PT6H"), Some(-0.25));
        assert_eq!(parse_iso_duration("PT0.5S"), Some(0.5 / 86_400.0));
        for bad in ["P", "PT", "P1Y", "P2W", "PT1M1H", "12:00", "PT1H1H", "PT1D", "P1H"] {
            assert_eq!(parse_iso_duration(bad), None, "{bad}");
        }
        assert_eq!(parse_iso_duration("P1DT"), Some(1.0));
    }

    #[test]
    fn date_kinds_from_serials() {
        use calamine::ExcelDateTimeType::{DateTime, TimeDelta};
        let v = |x, t, e| datetime_value(&ExcelDateTime::new(x, t, e), e);
        assert_eq!(v(46027.0, DateTime, false), Value::DateTime(46027.0, DateKind::Date));
        assert_eq!(v(46027.25, DateTime, false), Value::DateTime(46027.25, DateKind::DateTime));
        assert_eq!(v(0.25, DateTime, false), Value::DateTime(0.25, DateKind::Time));
        assert_eq!(v(1.5, TimeDelta, false), Value::DateTime(1.5, DateKind::Time));
        // 1904 system: serial 0 is 1904-01-01, which is 1462 in the 1900 system.
        assert_eq!(v(44565.0, DateTime, true), Value::DateTime(46027.0, DateKind::Date));
        assert_eq!(v(0.25, DateTime, true), Value::DateTime(0.25, DateKind::Time));
    }

    #[test]
    fn sniffing() {
        assert_eq!(sniff(b""), Sniffed::Other("an empty file (0 bytes)"));
        assert_eq!(sniff(b"Bay,Light\nNorth,12\n"), Sniffed::Other("a text file (such as CSV)"));
        assert_eq!(sniff("\u{feff}<html>".as_bytes()), Sniffed::Other("an XML or HTML text file"));
        assert_eq!(sniff(b"PK\x03\x04rest"), Sniffed::Zip);
        assert_eq!(sniff(&CFB_MAGIC), Sniffed::Compound);
        assert_eq!(sniff(&[0u8, 1, 2, 200, 255]), Sniffed::Other("a file of unrecognised content"));
        // A multi-byte character cut by the head's end is still text.
        assert_eq!(sniff(&"données".as_bytes()[..2]), Sniffed::Other("a text file (such as CSV)"));
    }

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

    /// A stored zip of `entries` (PKWARE APPNOTE.TXT §4.3; CRC-32 per §4.4.7,
    /// from memory), for the stalled-reader test.
    fn stored_zip(entries: &[(&str, &[u8])]) -> Vec<u8> {
        fn crc32(data: &[u8]) -> u32 {
            let mut crc = !0u32;
            for &b in data {
                crc ^= u32::from(b);
                for _ in 0..8 {
                    crc = if crc & 1 != 0 { (crc >> 1) ^ 0xEDB8_8320 } else { crc >> 1 };
                }
            }
            !crc
        }
        let (mut out, mut central) = (Vec::new(), Vec::new());
        for (name, data) in entries {
            let offset = out.len() as u32;
            let fields = |v: &mut Vec<u8>| {
                for x in [0u16, 0, 0, 0x21] {
                    v.extend_from_slice(&x.to_le_bytes()); // flags, stored, time, date
                }
                for x in [crc32(data), data.len() as u32, data.len() as u32] {
                    v.extend_from_slice(&x.to_le_bytes());
                }
                v.extend_from_slice(&(name.len() as u16).to_le_bytes());
                v.extend_from_slice(&0u16.to_le_bytes()); // extra
            };
            out.extend_from_slice(&0x0403_4b50u32.to_le_bytes());
            out.extend_from_slice(&20u16.to_le_bytes());
            fields(&mut out);
            out.extend_from_slice(name.as_bytes());
            out.extend_from_slice(data);
            central.extend_from_slice(&0x0201_4b50u32.to_le_bytes());
            central.extend_from_slice(&[20, 0, 20, 0]);
            fields(&mut central);
            central.extend_from_slice(&[0; 8]); // comment, disk, internal, external (part)
            central.extend_from_slice(&[0; 2]);
            central.extend_from_slice(&offset.to_le_bytes());
            central.extend_from_slice(name.as_bytes());
        }
        let (cd_offset, cd_size, n) = (out.len() as u32, central.len() as u32, entries.len() as u16);
        out.extend_from_slice(&central);
        out.extend_from_slice(&0x0605_4b50u32.to_le_bytes());
        out.extend_from_slice(&[0; 4]);
        out.extend_from_slice(&n.to_le_bytes());
        out.extend_from_slice(&n.to_le_bytes());
        out.extend_from_slice(&cd_size.to_le_bytes());
        out.extend_from_slice(&cd_offset.to_le_bytes());
        out.extend_from_slice(&[0; 2]);
        out
    }

    #[test]
    fn a_stalling_opendocument_reader_is_given_up_on() {
        let manifest = br#"<?xml version="1.0"?><manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0"><manifest:file-entry manifest:full-path="/"/></manifest:manifest>"#;
        let content = |tail: &str| {
            format!(
                r#"<?xml version="1.0"?><office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0"><office:body><office:spreadsheet><table:table table:name="W"><table:table-row><table:table-cell office:value-type="float" office:value="1"/></table:table-row>{tail}"#
            )
        };
        let ods = |tail: &str| {
            stored_zip(&[
                ("mimetype", b"application/vnd.oasis.opendocument.spreadsheet"),
                ("META-INF/manifest.xml", manifest),
                ("content.xml", content(tail).as_bytes()),
            ])
        };
        let limit = Duration::from_millis(1500);
        let whole = ods("</table:table></office:spreadsheet></office:body></office:document-content>");
        assert!(matches!(open_ods_bytes_watched(whole, limit), Ok(Ok(_))), "the whole document opens");
        // The document ends inside the table: calamine 0.38 spins forever.
        match open_ods_bytes_watched(ods(""), limit) {
            Err(Fault::Damaged(Some(cause))) => assert!(cause.to_string().contains("did not finish"), "{cause}"),
            Err(_) => panic!("expected damage from a stalled reader, got another fault"),
            Ok(_) => panic!("expected damage from a stalled reader, got a workbook"),
        }
    }

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
