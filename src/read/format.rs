//! Telling a workbook's format from its first bytes (`sniff`: compound
//! file, zip archive, or what else it looks like) and opening the matching
//! calamine reader: a compound file as xls (or refused as encrypted or not a
//! workbook), a zip archive by trying the xlsx, xlsb and OpenDocument readers
//! in an order set by the extension. [`Book`] is the opened reader.

use std::io::{Cursor, Read, Seek};

use calamine::{Ods, OdsError, Reader, Xls, XlsError, Xlsb, XlsbError, Xlsx, XlsxError};

use super::guards::open_ods_watched;
use super::{compound, Cause, Fault};

/// What the first bytes say the file is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Sniffed {
    /// An OLE compound file: xls, or an encrypted xlsx/xlsb.
    Compound,
    /// A zip archive: xlsx, xlsm, xlsb or ods.
    Zip,
    /// Not a workbook; the text says what it looks like.
    Other(&'static str),
}

const CFB_MAGIC: [u8; 8] = [0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1];

pub(super) fn sniff(head: &[u8]) -> Sniffed {
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
pub(super) enum Book<RS: Read + Seek> {
    Xlsx(Xlsx<RS>),
    Xlsb(Xlsb<RS>),
    Xls(Xls<RS>),
    /// calamine's OpenDocument reader parses everything when it opens and
    /// keeps no reader, so it is opened over an owned copy of the bytes
    /// (see `open_ods_watched`).
    Ods(Ods<Cursor<Vec<u8>>>),
}

impl<RS: Read + Seek> Book<RS> {
    pub(super) fn sheets_metadata(&self) -> Vec<calamine::Sheet> {
        match self {
            Book::Xlsx(b) => b.sheets_metadata().to_vec(),
            Book::Xlsb(b) => b.sheets_metadata().to_vec(),
            Book::Xls(b) => b.sheets_metadata().to_vec(),
            Book::Ods(b) => b.sheets_metadata().to_vec(),
        }
    }
}

/// An OLE compound file is an xls workbook, or an xlsx/xlsb encrypted with
/// a password (the encrypted package lives in such a file).
pub(super) fn open_compound<RS: Read + Seek>(open: &dyn Fn() -> std::io::Result<RS>) -> Result<Book<RS>, Fault> {
    let mut bytes = Vec::new();
    open().and_then(|mut rs| rs.read_to_end(&mut bytes)).map_err(Fault::Io)?;
    compound::check(&bytes)?;
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
pub(super) fn open_zip<RS: Read + Seek>(ext: Option<&str>, open: &dyn Fn() -> std::io::Result<RS>) -> Result<Book<RS>, Fault> {
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

#[cfg(test)]
mod tests {
    use super::*;

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
}
