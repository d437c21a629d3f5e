//! Guards around calamine: its panics on malformed content are caught and
//! become [`ReadError::Damaged`](super::ReadError::Damaged) without a word on
//! stderr (`read_guarded`, `QuietPanics`), and its OpenDocument reader, which
//! can spin forever on a cut document, runs on a watched thread with a time
//! limit (`open_ods_watched`).

use std::fmt;
use std::io::{Cursor, Read, Seek};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::mpsc;
use std::time::Duration;

use calamine::{Ods, OdsError, Reader};

use super::{read_any, Fault, Format};
use crate::cells::Workbook;

/// The cause of a reader panic, kept as the source of [`ReadError::Damaged`](super::ReadError::Damaged).
#[derive(Debug)]
struct ReaderPanic(String);

impl fmt::Display for ReaderPanic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "the workbook reader stopped on malformed content: {}", self.0)
    }
}

impl std::error::Error for ReaderPanic {}

/// The cause of [`ReadError::Damaged`](super::ReadError::Damaged) when the reader did not finish in time.
#[derive(Debug)]
struct ReaderStalled(Duration);

impl fmt::Display for ReaderStalled {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "the workbook reader did not finish within {} seconds", self.0.as_secs())
    }
}

impl std::error::Error for ReaderStalled {}

/// Runs the reader under `catch_unwind`. calamine parses untrusted binary
/// and XML content and some malformed inputs make it index out of bounds
/// (fuzzing its xls reader with a few flipped bytes does so about once in
/// fifty tries); such a panic means the file is malformed, so it becomes
/// [`ReadError::Damaged`](super::ReadError::Damaged), with the panic's message as its source, instead
/// of ending the program. (With `panic = "abort"` nothing is caught.)
pub(super) fn read_guarded<RS: Read + Seek>(
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
/// resulting [`ReadError::Damaged`](super::ReadError::Damaged). This is the one piece of process-wide
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

/// The least time the OpenDocument reader is given, and the extra time per
/// megabyte of file. Measured here: 140 MB of content XML (2 M cells) parse
/// in 0.94 s, about 150 MB/s, and content XML compresses roughly tenfold, so
/// a megabyte of file takes well under a tenth of a second; the limits leave
/// a margin of twenty times or more.
const ODS_BASE_SECONDS: u64 = 15;
const ODS_SECONDS_PER_MB: u64 = 2;

/// What calamine's OpenDocument reader returned, when it returned.
pub(super) type OdsOpened = Result<Ods<Cursor<Vec<u8>>>, OdsError>;

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
pub(super) fn open_ods_watched<RS: Read + Seek>(mut rs: RS) -> Result<OdsOpened, Fault> {
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

#[cfg(test)]
mod tests {
    use super::*;

    /// A zip archive of `entries`, stored without compression, written with
    /// the `zip` crate (a dev-dependency), for the stalled-reader test.
    fn stored_zip(entries: &[(&str, &[u8])]) -> Vec<u8> {
        use std::io::Write;
        let mut w = zip::ZipWriter::new(Cursor::new(Vec::new()));
        let options = zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Stored);
        for (name, data) in entries {
            w.start_file(*name, options).expect("start a zip entry");
            w.write_all(data).expect("write a zip entry");
        }
        w.finish().expect("finish the zip").into_inner()
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
}
