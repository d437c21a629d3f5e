//! Running the stages: read → find → parse → resolve → fit → lay out → write.
//!
//! The pipeline collects every problem with its location and goes on past a
//! failed request: an error in one request costs only that request. Only a
//! problem with the input as a whole (it cannot be read, the output would
//! overwrite it) stops the run, and then nothing is written.

use crate::cells::{CellAddress, Workbook};
use crate::fits::Registry;
use crate::layout;
use crate::report::{Report, RowsPlace, RunInfo, Status};
use crate::problems::{closest, Problem, Severity};
use crate::read::{self, ReadError};
use crate::resolve::{self, FoundRequest};
use crate::syntax;
use crate::write::{self, WriteError, WriteOptions};
use sha2::{Digest, Sha256};
use std::collections::HashSet;
use std::fmt;
use std::path::{Path, PathBuf};

/// What the user asked for.
#[derive(Debug, Clone)]
pub struct RunConfig {
    /// The workbook to read.
    pub input: PathBuf,
    /// Where to write; `None` for [`default_output`] beside the input.
    pub output: Option<PathBuf>,
    /// The time to record, seconds since 1970 (UTC); `None` for now.
    pub created_unix: Option<i64>,
}

/// Why a run could not go ahead at all (exit status 2).
#[derive(Debug)]
pub enum RunError {
    /// The input could not be read.
    Read(ReadError),
    /// The input file could not be opened for hashing.
    Input { path: PathBuf, source: std::io::Error },
    /// The output would replace the input.
    OutputIsInput { path: PathBuf },
    /// The output must be an xlsx file.
    OutputFormat { path: PathBuf },
    /// The output's folder does not exist or is not a folder.
    OutputFolder { dir: PathBuf, exists: bool },
    /// Writing failed.
    Write(WriteError),
}

impl fmt::Display for RunError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            RunError::Read(e) => write!(f, "{e}"),
            RunError::Input { path, source } => write!(f, "{}: cannot be read ({source})", path.display()),
            RunError::OutputIsInput { path } => write!(
                f,
                "the output {} is the input itself; plumb never changes its input — choose another name with -o",
                path.display()
            ),
            RunError::OutputFormat { path } => write!(f, "the output {} must end in .xlsx (plumb writes xlsx workbooks)", path.display()),
            RunError::OutputFolder { dir, exists: false } => {
                write!(f, "the folder {} does not exist; create it or choose another -o", dir.display())
            }
            RunError::OutputFolder { dir, exists: true } => write!(f, "{} is not a folder; choose another -o", dir.display()),
            RunError::Write(WriteError::Folder { dir, source }) => {
                write!(f, "the folder {} cannot be written to ({source}); choose another -o", dir.display())
            }
            RunError::Write(e) => {
                write!(f, "{e}")?;
                if let Some(s) = std::error::Error::source(e) {
                    write!(f, ": {s}")?;
                }
                Ok(())
            }
        }
    }
}

impl std::error::Error for RunError {}

/// The outcome of every request.
#[derive(Debug, Clone)]
pub struct Summary {
    /// One report per request, in workbook order.
    pub reports: Vec<Report>,
    /// Every problem found, errors and warnings, located.
    pub problems: Vec<Problem>,
    /// The file written, for `run`.
    pub output: Option<PathBuf>,
}

impl Summary {
    /// Whether any request failed.
    pub fn any_failed(&self) -> bool {
        self.reports.iter().any(|r| r.status == Status::Error)
    }

    /// How many requests failed.
    pub fn failed(&self) -> usize {
        self.reports.iter().filter(|r| r.status == Status::Error).count()
    }

    /// One line per request for the terminal: status, cell, name, and the
    /// error, the host function's outcome or the fit's size and R².
    pub fn report_lines(&self) -> Vec<String> {
        self.reports
            .iter()
            .map(|r| {
                let detail = match (&r.status, &r.outcome) {
                    (Status::Error, _) => r.messages.first().cloned().unwrap_or_default(),
                    (_, None) if r.host.is_some() => layout::outcome_line(r),
                    (_, None) => r.messages.first().cloned().unwrap_or_default(),
                    (_, Some(o)) => {
                        let r2 = o.least_squares.map(|l| format!(", R² = {:.4}", l.r_squared)).unwrap_or_default();
                        format!("{} fit, n = {}{r2}", r.function, r.rows_used)
                    }
                };
                format!("{:<8} {:<14} {:<16} {}", r.status.as_str(), r.cell.to_string(), r.name, detail)
            })
            .collect()
    }
}

/// The registry of every built-in fit and host function.
pub fn builtin_registry() -> Registry {
    Registry::builtin()
}

/// The output beside the input when no `-o` is given: `NAME.fitted.xlsx`
/// for `NAME.xlsx`, and the whole file name with `-fitted.xlsx` for any
/// other input (`book.xls-fitted.xlsx`, `book.ods-fitted.xlsx`,
/// `book.xlsm-fitted.xlsx`). Names cannot collide: the first kind ends in
/// `.fitted.xlsx`, the second never does, and each is made from a name no
/// other input in the folder has — so `book.xls`, `book.ods` and
/// `book.xlsx` side by side keep three outputs.
pub fn default_output(input: &Path) -> PathBuf {
    let name = input.file_name().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "workbook".into());
    match name.strip_suffix(".xlsx").filter(|stem| !stem.is_empty()) {
        Some(stem) => input.with_file_name(format!("{stem}.fitted.xlsx")),
        None => input.with_file_name(format!("{name}-fitted.xlsx")),
    }
}

/// Whether `out` names the same file as `input`: the same path once links
/// are followed, the same file on disk, or the same name in the same folder
/// on a file system that ignores case.
fn same_file(input: &Path, out: &Path) -> bool {
    let canon = |p: &Path| -> Option<PathBuf> {
        if let Ok(c) = p.canonicalize() {
            return Some(c);
        }
        let parent = p.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
        Some(parent.canonicalize().ok()?.join(p.file_name()?))
    };
    let (Some(a), Some(b)) = (canon(input), canon(out)) else { return false };
    if a == b {
        return true;
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if let (Ok(ma), Ok(mb)) = (std::fs::metadata(&a), std::fs::metadata(&b)) {
            if ma.dev() == mb.dev() && ma.ino() == mb.ino() {
                return true;
            }
        }
    }
    a.parent() == b.parent()
        && a.file_name().map(|s| s.to_string_lossy().to_lowercase()) == b.file_name().map(|s| s.to_string_lossy().to_lowercase())
}

/// The lock file a spreadsheet application keeps beside a workbook it has
/// open, when there is one beside `out` (and `out` exists): `.~lock.NAME#`
/// (LibreOffice) or `~$NAME` (Microsoft Office; its programs also shorten a
/// long name by its first two characters, `~$ME…`, from memory).
pub fn open_lock(out: &Path) -> Option<PathBuf> {
    let name = out.file_name()?.to_string_lossy().into_owned();
    if !out.is_file() {
        return None;
    }
    let shortened: String = name.chars().skip(2).collect();
    [format!(".~lock.{name}#"), format!("~${name}"), format!("~${shortened}")].into_iter().map(|n| out.with_file_name(n)).find(|p| p.is_file())
}

/// Unix seconds as `YYYY-MM-DD hh:mm:ss`.
pub fn iso_time(unix: i64) -> String {
    let (y, m, d, hh, mm, ss) = crate::cells::civil_from_unix(unix);
    format!("{y:04}-{m:02}-{d:02} {hh:02}:{mm:02}:{ss:02}")
}

fn file_label(path: &Path) -> String {
    path.file_name().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| path.display().to_string())
}

/// Reads the input and evaluates every request; writes nothing.
pub fn evaluate(input: &Path, registry: &Registry) -> Result<(Workbook, Summary), RunError> {
    let book = read::read_workbook(input).map_err(RunError::Read)?;
    let mut summary = evaluate_book(&book, &file_label(input), registry);
    note_uncomputed(&mut summary, &book, &file_label(input));
    Ok((book, summary))
}

/// One warning per sheet whose formulas have no stored results (a file
/// saved by a program that writes formulas without computing them), at
/// the first such cell: plumb reads those cells as blank, which explains a
/// request's blank or missing values.
pub fn uncomputed_formulas(book: &Workbook) -> Vec<Problem> {
    let mut out = Vec::new();
    for g in &book.sheets {
        let mut cells = g.uncomputed();
        let Some((r, c)) = cells.next() else { continue };
        let others = cells.count();
        let what = match others {
            0 => "this formula has no stored result, so plumb reads it as blank".to_string(),
            n => format!("this cell and {n} other formula cell{} of {} have no stored results, so plumb reads them as blank", if n == 1 { "" } else { "s" }, g.name),
        };
        out.push(
            Problem::warning(format!("{what}: the file was saved by a program that does not compute formulas"))
                .at(CellAddress::new(g.name.clone(), r, c))
                .help("open the file in a spreadsheet application and save it again, which stores the results; then run plumb again"),
        );
    }
    out
}

/// Puts the [`uncomputed_formulas`] warnings first among the problems:
/// they explain the requests' blank cells.
fn note_uncomputed(summary: &mut Summary, book: &Workbook, file: &str) {
    let found: Vec<Problem> = uncomputed_formulas(book).into_iter().map(|p| p.in_file(file)).collect();
    summary.problems.splice(0..0, found);
}

/// Evaluates every request of a workbook already read: first every fit, in
/// workbook order, then the host's own functions (`#predict`, `#compare`),
/// which use the fits by name wherever those stand in the workbook.
pub fn evaluate_book(book: &Workbook, file: &str, registry: &Registry) -> Summary {
    let found = resolve::find_requests(book);
    let request_cells: HashSet<CellAddress> = found.iter().map(|f| f.cell.clone()).collect();
    let mut slots: Vec<Option<(Report, Vec<Problem>)>> = Vec::new();
    let mut deferred = Vec::new();
    let mut names: HashSet<String> = HashSet::new();
    for (i, f) in found.iter().enumerate() {
        let host = syntax::parse_request(&f.text).ok().filter(|p| registry.host_function(&p.function.name).is_some());
        match host {
            Some(parsed) => {
                deferred.push((i, parsed));
                slots.push(None);
            }
            None => slots.push(Some(evaluate_one(book, f, registry, &request_cells, &mut names))),
        }
    }
    let fits: Vec<&Report> = slots.iter().flatten().map(|(r, _)| r).collect();
    let done: Vec<(usize, (Report, Vec<Problem>))> = deferred.iter().map(|(i, parsed)| (*i, evaluate_host(book, &found[*i], parsed, registry, &fits))).collect();
    for (i, d) in done {
        slots[i] = Some(d);
    }
    let mut reports = Vec::new();
    let mut problems = Vec::new();
    for (report, mut probs) in slots.into_iter().flatten() {
        for p in &mut probs {
            p.file = Some(file.to_string());
        }
        problems.extend(probs);
        reports.push(report);
    }
    Summary { reports, problems, output: None }
}

/// The report of a request before anything about it is known: named after
/// its cell, failed until it succeeds.
fn unfinished_report(f: &FoundRequest, function: &str) -> Report {
    Report {
        name: f.cell.to_string(),
        function: function.to_string(),
        cell: f.cell.clone(),
        text: f.text.clone(),
        response: String::new(),
        terms: Vec::new(),
        level: 0.95,
        rows_used: 0,
        rows_left_out: 0,
        status: Status::Error,
        messages: Vec::new(),
        notes: Vec::new(),
        outcome: None,
        place: None,
        recipe: None,
        host: None,
    }
}

/// A finished request's warnings and notes on its report, each on one
/// line, and its status: a warning makes it [`Status::Warning`], a note alone
/// does not.
fn set_messages(report: &mut Report, problems: &[Problem]) {
    let (notes, warnings): (Vec<&Problem>, Vec<&Problem>) = problems.iter().partition(|p| p.severity == Severity::Note);
    report.messages = warnings.iter().map(|p| p.one_line()).collect();
    report.notes = notes.iter().map(|p| p.one_line()).collect();
    report.status = if warnings.is_empty() { Status::Ok } else { Status::Warning };
}

/// Evaluates one `#predict` or `#compare` request against the fits.
fn evaluate_host(book: &Workbook, f: &FoundRequest, parsed: &syntax::Request, registry: &Registry, fits: &[&Report]) -> (Report, Vec<Problem>) {
    let fname = parsed.function.name.to_lowercase();
    let mut report = unfinished_report(f, &fname);
    let result = match (fname.as_str(), registry.host_function(&fname)) {
        ("predict", Some(spec)) => crate::host::predict(book, &f.cell, &f.text, parsed, spec, fits),
        (_, Some(spec)) => crate::host::compare(&f.cell, &f.text, parsed, spec, fits),
        (_, None) => Err(Problem::error(format!("there is no function #{fname}")).at(f.cell.clone())),
    };
    match result {
        Ok(h) => {
            report.response = h.response;
            report.terms = h.fits;
            report.rows_used = h.rows_used;
            report.level = h.level;
            set_messages(&mut report, &h.warnings);
            report.host = Some(h.outcome);
            (report, h.warnings)
        }
        Err(p) => {
            report.messages = vec![p.one_line()];
            (report, vec![p])
        }
    }
}

fn evaluate_one(
    book: &Workbook,
    f: &FoundRequest,
    registry: &Registry,
    request_cells: &HashSet<CellAddress>,
    names: &mut HashSet<String>,
) -> (Report, Vec<Problem>) {
    let mut report = unfinished_report(f, "");
    let fail = |mut report: Report, p: Problem| {
        report.messages = vec![p.one_line()];
        report.status = Status::Error;
        (report, vec![p])
    };
    let parsed = match syntax::parse_request(&f.text) {
        Ok(r) => r,
        Err(e) => {
            let p = Problem::error(e.message.clone())
                .at(f.cell.clone())
                .in_text(&f.text, e.span.start, e.span.end)
                .help(format!("expected {}", e.expected));
            return fail(report, p);
        }
    };
    let fname = parsed.function.name.to_lowercase();
    report.function = fname.clone();
    let Some(fit) = registry.get(&fname) else {
        let near = closest(&fname, registry.names());
        let all: Vec<&str> = registry.names().collect();
        let help = match near.first() {
            Some(n) => format!("did you mean #{n}? The functions are {} (see `plumb functions`)", all.join(", ")),
            None => format!("the functions are {} (see `plumb functions`)", all.join(", ")),
        };
        let p = Problem::error(format!("there is no function #{}", parsed.function.name))
            .at(f.cell.clone())
            .in_text(&f.text, parsed.function.span.start, parsed.function.span.end)
            .help(help);
        return fail(report, p);
    };
    let resolved = match resolve::resolve(book, &f.cell, &f.text, &parsed, fit.spec(), request_cells) {
        Ok(r) => r,
        Err(p) => return fail(report, p),
    };
    if let Some(n) = &resolved.name {
        report.name = n.clone();
    }
    if !names.insert(report.name.to_lowercase()) {
        let p = Problem::error(format!("another request is already named '{}'", report.name))
            .at(f.cell.clone())
            .help("give each fit its own name=");
        return fail(report, p);
    }
    report.response = resolved.response_label.clone();
    report.terms = resolved.terms.clone();
    report.level = resolved.request.level;
    report.rows_used = resolved.request.rows();
    report.rows_left_out = resolved.left_out.total();
    // A fit that panics has a bug; it costs only its own request. (The
    // panic hook still prints the panic, for the bug report.)
    let result = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| fit.fit(&resolved.request)));
    let mut outcome = match result {
        Ok(Ok(o)) => o,
        Ok(Err(mut e)) => {
            // An error about one row: name the row by its place on its sheet.
            if let Some(i) = e.row {
                e.message = e.message.replace("{row}", &row_place(&resolved.placement, i));
            }
            return fail(report, resolved.fit_problem(&e, &f.cell, &f.text));
        }
        Err(payload) => {
            let why = payload.downcast_ref::<&str>().map(|s| s.to_string()).or_else(|| payload.downcast_ref::<String>().cloned()).unwrap_or_default();
            let p = Problem::error(format!("the fit #{fname} stopped with an internal error ({why}); this is a bug in the fit, not in your data"))
                .at(f.cell.clone())
                .help("please report it with the workbook; the other requests are not affected");
            return fail(report, p);
        }
    };
    if let Err(why) = outcome.check_shape(&resolved.request) {
        let p = Problem::error(format!("the fit #{fname} returned a malformed result: {why}")).at(f.cell.clone());
        return fail(report, p);
    }
    // Warnings about one row: name the row by its place on its sheet.
    let pl = &resolved.placement;
    for w in std::mem::take(&mut outcome.row_warnings) {
        outcome.warnings.push(w.text.replace("{row}", &row_place(pl, w.row)));
    }
    // Warnings about one term come first, with a caret under the term.
    let term_warnings = std::mem::take(&mut outcome.term_warnings);
    outcome.warnings.splice(0..0, term_warnings.iter().map(|w| w.text.clone()));
    let mut problems = resolved.warnings.clone();
    for w in &term_warnings {
        let p = Problem::warning(w.text.clone()).at(f.cell.clone());
        problems.push(match resolved.span_of(&w.term) {
            Some(span) => p.in_text(&f.text, span.start, span.end),
            None => p,
        });
    }
    for w in outcome.warnings.iter().skip(term_warnings.len()) {
        problems.push(Problem::warning(w.clone()).at(f.cell.clone()));
    }
    set_messages(&mut report, &problems);
    report.place = Some(RowsPlace {
        sheet: pl.sheet.clone(),
        header_row: pl.header_row,
        last_col: pl.last_col,
        first_row: pl.first_row,
        last_row: pl.last_row,
        rows: pl.rows.clone(),
    });
    report.outcome = Some(outcome);
    report.recipe = resolved.recipe.clone();
    (report, problems)
}

/// A row sent to a fit, by its index, named by its place on its sheet
/// ("row 57 of Weekly").
fn row_place(pl: &crate::resolve::Placement, i: usize) -> String {
    match pl.rows.get(i) {
        Some(r) => format!("row {} of {}", r + 1, pl.sheet),
        None => format!("data row {}", i + 1),
    }
}

/// Source cells the xlsx format cannot hold as they are, each as a located
/// warning: a text longer than [`write::MAX_CELL_TEXT`] characters (written
/// cut to that length) and a number that is infinite or not a number
/// (written as the text `INF`, `-INF` or `NAN`; no spreadsheet program writes
/// such a number, a hand-made file can). Request cells are replaced by their
/// outcome and not reported.
pub fn unwritable_cells(book: &Workbook, requests: &HashSet<CellAddress>) -> Vec<Problem> {
    use crate::cells::Value;
    let mut out = Vec::new();
    for g in &book.sheets {
        for (r, c, v) in g.cells() {
            let why = match v {
                Value::Text(t) if write::over_long_text(t) => format!(
                    "this cell's text is {} characters long, more than the {} an xlsx cell holds; the output keeps its first {}",
                    t.chars().count(),
                    "32,767",
                    "32,767"
                ),
                Value::Number(x) if !x.is_finite() => format!(
                    "this cell holds the number {x}, which the xlsx format cannot store; the output shows it as the text {}",
                    if x.is_nan() { "NAN" } else if x > 0.0 { "INF" } else { "-INF" }
                ),
                _ => continue,
            };
            let at = CellAddress::new(g.name.clone(), r, c);
            if requests.contains(&at) {
                continue;
            }
            out.push(Problem::warning(why).at(at).help("shorten or correct the cell in the input if the output must hold it whole"));
        }
    }
    out
}

/// `plumb run`: evaluates every request and writes the output workbook.
pub fn run(config: &RunConfig, registry: &Registry) -> Result<Summary, RunError> {
    let out = config.output.clone().unwrap_or_else(|| default_output(&config.input));
    if same_file(&config.input, &out) {
        return Err(RunError::OutputIsInput { path: out });
    }
    if !out.extension().is_some_and(|e| e.eq_ignore_ascii_case("xlsx")) {
        return Err(RunError::OutputFormat { path: out });
    }
    let dir = out.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
    if !dir.is_dir() {
        return Err(RunError::OutputFolder { dir: dir.to_path_buf(), exists: dir.exists() });
    }
    let bytes = std::fs::read(&config.input).map_err(|source| RunError::Input { path: config.input.clone(), source })?;
    let sha = Sha256::digest(&bytes).iter().map(|b| format!("{b:02x}")).collect::<String>();
    drop(bytes);
    let (book, format) = read::read_workbook_with_format(&config.input).map_err(RunError::Read)?;
    let mut summary = evaluate_book(&book, &file_label(&config.input), registry);
    note_uncomputed(&mut summary, &book, &file_label(&config.input));
    let requests: HashSet<CellAddress> = summary.reports.iter().map(|r| r.cell.clone()).collect();
    for p in unwritable_cells(&book, &requests) {
        summary.problems.push(p.in_file(file_label(&config.input)));
    }
    let created = config.created_unix.unwrap_or_else(|| {
        std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH).map(|d| d.as_secs() as i64).unwrap_or(0)
    });
    let info = RunInfo {
        version: env!("CARGO_PKG_VERSION").into(),
        input_name: file_label(&config.input),
        input_sha256: sha,
        time: iso_time(created),
        sheets: None,
    };
    // Told from the content, not the name: an ods saved as .xlsx still has
    // OpenFormula syntax, which would be a broken formula in xlsx.
    let keep_formulas = format != read::Format::Ods;
    // An xlsx or xlsm input keeps its own sheets exactly; other formats are
    // read for their values and formulas only.
    let keep_own = format == read::Format::Xlsx && write::can_keep(&config.input, &book.sheets.iter().map(|g| g.name.clone()).collect::<Vec<_>>()).is_ok();
    let info = RunInfo { sheets: Some(sheets_carried(format, keep_own).into()), ..info };
    if !keep_own {
        summary.problems.push(Problem::note(format!("{}; the results are complete", sheets_carried(format, keep_own))).in_file(file_label(&config.input)));
    }
    let lay_out = |reports: &[Report]| layout::Book { keep_formulas, ..layout::lay_out(&book, reports, &info) };
    let mut laid = lay_out_guarded(&mut summary, &file_label(&config.input), &lay_out);
    // A part the output cannot hold (a chart, a calculator, a list) costs
    // that part alone: its request gets a warning, shown at its cell, and
    // the book is laid out again with the part left out.
    let refused = write::check_parts(&laid);
    if !refused.is_empty() {
        for r in &refused {
            note_refused(&mut summary, &book, &laid, r, &file_label(&config.input), true);
        }
        laid = lay_out_guarded(&mut summary, &file_label(&config.input), &lay_out);
        let again = write::check_parts(&laid);
        laid.leave_out(&again);
    }
    let lock = open_lock(&out);
    let opts = WriteOptions { created_unix: created, zip_level: 3 };
    let skipped = if keep_own {
        let written = write::write_book_keeping(&book, &laid, &config.input, &out, &opts).map_err(RunError::Write)?;
        if let Some(why) = &written.fallback {
            summary.problems.push(
                Problem::warning(format!("your sheets are written from their values only: their formats, widths and other settings could not be kept ({why})"))
                    .help("the results are complete; please report this with the workbook so the sheets can be kept as they are")
                    .in_file(file_label(&config.input)),
            );
        }
        for what in &written.left_out {
            summary.problems.push(Problem::note(format!("not carried over to the output: {what}")).in_file(file_label(&config.input)));
        }
        written.refused
    } else {
        write::write_book(&book, &laid, &out, &opts).map_err(RunError::Write)?
    };
    // Replaced while open: the application still shows the old results,
    // and saving there would put them back over the new ones.
    if let Some(lock) = lock {
        let lock_name = lock.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
        summary.problems.push(
            Problem::warning(format!(
                "the output seems to be open in a spreadsheet application (the lock file {lock_name} is beside it); it was replaced, but the application still shows the old results, and saving it there would overwrite the new ones"
            ))
            .help("close it without saving and open it again; if the new results do not show, close it and run again")
            .in_file(out.display().to_string()),
        );
    }
    for r in &skipped {
        note_refused(&mut summary, &book, &laid, r, &file_label(&config.input), false);
    }
    summary.output = Some(out);
    Ok(summary)
}

/// Lays out the book. A panic while laying out one request's results (a
/// bug in plumb) costs that request alone: each request whose results
/// cannot be laid out by themselves becomes an error at its cell, and the
/// book is laid out without them. (The panic hook still prints the panic,
/// for the bug report.)
fn lay_out_guarded(summary: &mut Summary, file: &str, lay_out: &dyn Fn(&[Report]) -> layout::Book) -> layout::Book {
    let attempt = |rs: &[Report]| std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| lay_out(rs)));
    if let Ok(book) = attempt(&summary.reports) {
        return book;
    }
    for i in 0..summary.reports.len() {
        if attempt(std::slice::from_ref(&summary.reports[i])).is_ok() {
            continue;
        }
        let r = &mut summary.reports[i];
        let p = Problem::error("laying out the results of this request stopped with an internal error; this is a bug in plumb, not in your data")
            .at(r.cell.clone())
            .help("please report it with the workbook; the other requests' results are written")
            .in_file(file);
        r.status = Status::Error;
        r.outcome = None;
        r.host = None;
        r.messages.insert(0, p.one_line());
        summary.problems.push(p);
    }
    match attempt(&summary.reports) {
        Ok(book) => book,
        // Only the requests together fail: the results are left out, each request shown as failed.
        Err(_) => {
            for r in &mut summary.reports {
                r.status = Status::Error;
                r.outcome = None;
                r.host = None;
                r.messages.insert(0, "laying out the results stopped with an internal error; this is a bug in plumb, not in your data".into());
            }
            lay_out(&summary.reports)
        }
    }
}

/// How the input's own sheets reach the output, in plain words (About
/// sheet, and a note when not kept exactly).
fn sheets_carried(format: read::Format, kept: bool) -> &'static str {
    match (format, kept) {
        (_, true) => "kept exactly as they are in the input (styles, widths, formats, merges, notes, images, charts, names, formulas); plumb only adds its results",
        (read::Format::Xlsx, false) => "written from their values and formulas only: the input's package could not be kept as it is",
        (read::Format::Ods, false) => "written from their values only (OpenDocument formulas and the sheets' formats, widths, merges, notes, images and charts are not carried over)",
        (_, false) => "written from their values and formulas only (this file format's formats, widths, merges, notes, images and charts are not carried over)",
    }
}

/// Records a part of the output that was left out as a warning at the
/// request it belongs to (or of the run), and, when `mark` is set, in that
/// request's report so its cell and the Fits sheet show it.
fn note_refused(summary: &mut Summary, book: &Workbook, laid: &layout::Book, r: &layout::Refused, file: &str, mark: bool) {
    let (owner, what) = laid.owner_of(book, r);
    let mut p = Problem::warning(format!("{what} could not be written ({}), so it is left out; the rest of the output is written", r.why))
        .help("this is a limit of the output format; please report it with the workbook if the request looks ordinary")
        .in_file(file);
    if let Some(cell) = owner {
        p = p.at(cell.clone());
        if mark {
            if let Some(rep) = summary.reports.iter_mut().find(|rep| rep.cell == cell) {
                rep.messages.push(p.one_line());
                if rep.status == Status::Ok {
                    rep.status = Status::Warning;
                }
            }
        }
    }
    summary.problems.push(p);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn iso_time_of_known_instants() {
        // 0 s is the Unix epoch; 1e9 s is 2001-09-09 01:46:40 UTC (common knowledge, POSIX time).
        assert_eq!(iso_time(0), "1970-01-01 00:00:00");
        assert_eq!(iso_time(1_000_000_000), "2001-09-09 01:46:40");
        assert_eq!(iso_time(951_782_400), "2000-02-29 00:00:00");
    }

    /// A fit with the linear family's spec that panics.
    struct Boom(crate::protocol::FunctionSpec);
    impl crate::fits::Fit for Boom {
        fn spec(&self) -> &crate::protocol::FunctionSpec {
            &self.0
        }
        fn fit(&self, _: &crate::protocol::FitRequest) -> Result<crate::protocol::FitOutcome, crate::fits::FitError> {
            panic!("index out of bounds in a test fit")
        }
    }

    #[test]
    fn a_panicking_fit_costs_only_its_request() {
        use crate::fits::Fit;
        let mut registry = Registry::builtin();
        let mut spec = crate::fits::linear::Linear::new().spec().clone();
        spec.name = "boom".into();
        registry.register("test", crate::protocol::PROTOCOL_VERSION, Box::new(Boom(spec))).expect("registers");
        let s = evaluate_book(&small_book(&["#boom(y, x)", "#linear(y, x)"]), "t.xlsx", &registry);
        assert_eq!(s.reports[0].status, Status::Error);
        assert!(s.reports[0].messages[0].contains("internal error (index out of bounds in a test fit)"), "{:?}", s.reports[0].messages);
        assert_ne!(s.reports[1].status, Status::Error);
    }

    #[test]
    fn a_panic_while_laying_out_costs_only_its_request() {
        let book = small_book(&["#linear(y, x, name=first)", "#linear(y, x2, name=second)"]);
        let mut s = evaluate_book(&book, "t.xlsx", &Registry::builtin());
        let info = RunInfo { version: "0".into(), input_name: "t.xlsx".into(), input_sha256: String::new(), time: String::new(), sheets: None };
        // A layout with a bug in the results of one fit: it panics whenever
        // that fit's outcome is to be laid out.
        let lay_out = |rs: &[Report]| {
            if rs.iter().any(|r| r.name == "second" && r.outcome.is_some()) {
                panic!("a layout bug in a test");
            }
            layout::lay_out(&book, rs, &info)
        };
        let laid = lay_out_guarded(&mut s, "t.xlsx", &lay_out);
        assert_ne!(s.reports[0].status, Status::Error, "{:?}", s.reports[0].messages);
        assert!(s.reports[0].outcome.is_some());
        assert_eq!(s.reports[1].status, Status::Error);
        assert!(s.reports[1].messages[0].contains("laying out the results of this request stopped with an internal error"), "{:?}", s.reports[1].messages);
        assert!(s.problems.iter().any(|p| p.severity == Severity::Error && p.message.contains("laying out")));
        // The first fit's results are in the book.
        let coefs = laid.sheets.iter().find(|sh| sh.name == "Coefficients").expect("a Coefficients sheet");
        assert!(coefs.cells.values().any(|c| matches!(&c.content, layout::Content::Text(t) if t == "first")), "the first fit is laid out");
    }

    /// A sheet `Data` with x, y, twice x and a three-level text column, and
    /// the requests in column F.
    fn small_book(requests: &[&str]) -> Workbook {
        use crate::cells::Grid;
        let mut g = Grid::new("Data");
        for (c, h) in ["x", "y", "x2", "g"].iter().enumerate() {
            g.set_text(0, c as u32, h);
        }
        for i in 1..=9u32 {
            let x = f64::from(i);
            g.set_number(i, 0, x);
            g.set_number(i, 1, 1.0 + x + 0.1 * f64::from(i % 3));
            g.set_number(i, 2, 2.0 * x);
            g.set_text(i, 3, ["a", "b", "c"][(i % 3) as usize]);
        }
        for (k, r) in requests.iter().enumerate() {
            g.set_text(k as u32 + 1, 5, r);
        }
        Workbook { sheets: vec![g] }
    }

    #[test]
    fn a_fit_complaint_about_a_term_points_at_the_term() {
        // An error naming a term (FitError::term) and a warning about a
        // term (term_warnings) each get a caret under that term.
        let s = evaluate_book(&small_book(&["#polynomial(y, g, degree=2)", "#linear(y, x + x2)"]), "t.xlsx", &Registry::builtin());
        let caret = |p: &Problem| p.source.as_deref().map(|(t, a, b)| t[*a..*b].to_string());
        let err = s.problems.iter().find(|p| p.message.contains("takes one numeric column")).expect("the polynomial's error");
        assert_eq!(caret(err).as_deref(), Some("g"), "{err:?}");
        let warn = s.problems.iter().find(|p| p.message.contains("exact combination")).expect("the collinear warning");
        assert_eq!(caret(warn).as_deref(), Some("x2"), "{warn:?}");
    }

    /// A fit of a model with parameters that answers with what it received.
    struct Echo(crate::protocol::FunctionSpec);
    impl crate::fits::Fit for Echo {
        fn spec(&self) -> &crate::protocol::FunctionSpec {
            &self.0
        }
        fn fit(&self, req: &crate::protocol::FitRequest) -> Result<crate::protocol::FitOutcome, crate::fits::FitError> {
            let x = req.expression.as_ref().map(|m| (m.parameters.join(","), m.formula.eval(&[req.columns[0].values[0]], &[2.0, 0.5]))).unwrap_or_default();
            Err(crate::fits::FitError::new(format!("start={:?} model={x:?}", req.options.get("start"))))
        }
    }

    #[test]
    fn start_values_and_the_model_reach_the_fit() {
        use crate::protocol::{FunctionSpec, ParamKind, ParamSpec};
        let p = |name: &str, kind: ParamKind, required: bool| ParamSpec { name: name.into(), kind, required, default: None, choices: Vec::new(), help: String::new(), example: None };
        let spec = FunctionSpec {
            name: "echo".into(),
            help: String::new(),
            positional: vec![p("response", ParamKind::Column, true), p("model", ParamKind::Expression, true)],
            options: vec![p("start", ParamKind::Group, false)],
        };
        let mut registry = Registry::builtin();
        registry.register("test", crate::protocol::PROTOCOL_VERSION, Box::new(Echo(spec))).expect("registers");
        let s = evaluate_book(&small_book(&["#echo(y, a*x^b, start(a=2, b=0.5))"]), "t.xlsx", &registry);
        // At x = 1 (the first row), a·x^b = 2 whatever b (arithmetic).
        let m = &s.reports[0].messages[0];
        assert!(m.contains(r#"start=Some(Group({"a": Number(2.0), "b": Number(0.5)}))"#), "{m}");
        assert!(m.contains(r#"model=("a,b", 2.0)"#), "{m}");
    }

    #[test]
    fn a_request_typed_as_a_spreadsheet_user_would_is_understood() {
        // Typographic quotes, `;` between arguments and a percent.
        let s = evaluate_book(&small_book(&["#linear(“y”; x, level=90%)"]), "t.xlsx", &Registry::builtin());
        let r = &s.reports[0];
        assert_ne!(r.status, Status::Error, "{:?}", r.messages);
        assert_eq!(r.level, 0.9);
    }

    #[test]
    fn every_fit_takes_the_shared_options_under_their_names() {
        // The options the host applies are spelt the same for every fit.
        for req in ["#linear(y, x, confidence=0.9, gaps=stop, table=Data!A1:D10, name=l)", "#nonlinear(y, a*x^b, start(a=1, b=1), confidence=0.9, gaps=stop, table=Data!A1:D10, name=n)"] {
            let s = evaluate_book(&small_book(&[req]), "t.xlsx", &Registry::builtin());
            let r = &s.reports[0];
            assert_ne!(r.status, Status::Error, "{req}: {:?}", r.messages);
            assert_eq!((r.level, r.rows_used), (0.9, 9), "{req}");
        }
    }

    #[test]
    fn levels_that_differ_only_in_case_or_spacing_are_one_level_with_a_note() {
        let mut b = small_book(&["#linear(y, x + g, name=m)", "#predict(m, x=3, g=\"B \")"]);
        let g = &mut b.sheets[0];
        g.set_text(2, 3, "A");
        g.set_text(5, 3, " a  ");
        g.set_text(4, 3, "B");
        let s = evaluate_book(&b, "t.xlsx", &Registry::builtin());
        let terms: Vec<String> = s.reports[0].outcome.as_ref().expect("fitted").coefficients.iter().map(|c| c.term.clone()).collect();
        // Three levels remain (a, b, c, whatever the spelling): the
        // intercept, x and two indicator columns.
        assert_eq!(terms.len(), 4, "{terms:?}");
        let note = s.reports[0].notes.iter().find(|n| n.contains("are taken as one level")).expect("a note on the merged spellings");
        assert!(note.contains("“a”") && note.contains("“A”"), "{note}");
        // #predict matches a level by the same rule.
        assert_ne!(s.reports[1].status, Status::Error, "{:?}", s.reports[1].messages);
    }

    #[test]
    fn cells_that_are_not_data_are_said_to_be_so() {
        let mut b = small_book(&["#linear(\"y\", x, name=q)"]);
        // A number stored as text in x, and a request below the table in
        // column A, which a whole-column range must not read as data.
        b.sheets[0].set_text(3, 0, "3");
        b.sheets[0].set_text(11, 0, "#linear(Data!B:B, Data!A:A, name=whole)");
        let s = evaluate_book(&b, "t.xlsx", &Registry::builtin());
        let q = &s.reports[0];
        assert_eq!(q.response, "y", "a quoted header is labelled without its quotes");
        assert!(q.notes.iter().any(|n| n.contains("1 with a number stored as text")), "{:?}", q.notes);
        let whole = s.reports.iter().find(|r| r.name == "whole").expect("the whole-column request");
        assert_eq!((whole.rows_used, whole.rows_left_out), (8, 1), "{:?} {:?}", whole.messages, whole.notes);
        assert!(!whole.notes.iter().any(|n| n.contains("text in a numeric column")), "{:?}", whole.notes);
    }

    #[test]
    fn default_output_sits_beside_the_input() {
        let out = |p: &str| default_output(Path::new(p)).to_string_lossy().into_owned();
        assert_eq!(out("dir/book.xlsx"), "dir/book.fitted.xlsx");
        assert_eq!(out("dir/book.xls"), "dir/book.xls-fitted.xlsx");
        assert_eq!(out("book.ods"), "book.ods-fitted.xlsx");
        assert_eq!(out("book.xlsm"), "book.xlsm-fitted.xlsx");
        assert_eq!(out("book.xlsb"), "book.xlsb-fitted.xlsx");
        assert_eq!(out("book.xls.xlsx"), "book.xls.fitted.xlsx");
        assert_eq!(out("book"), "book-fitted.xlsx");
        // Two names differing in case are two files where case matters.
        assert_eq!(out("book.XLSX"), "book.XLSX-fitted.xlsx");
        assert_eq!(out(".xlsx"), ".xlsx-fitted.xlsx");
    }

    #[test]
    fn default_outputs_of_different_inputs_differ() {
        // Every pair of these names, as they might stand in one folder.
        let names = ["book.xlsx", "book.xls", "book.ods", "book.xlsm", "book.xlsb", "book", "book.xls.xlsx", "book.xls-fitted.xlsx", "book.fitted.xlsx", "book.XLSX", "book.fitted"];
        let outs: Vec<PathBuf> = names.iter().map(|n| default_output(Path::new(n))).collect();
        for i in 0..names.len() {
            for j in i + 1..names.len() {
                assert_ne!(outs[i], outs[j], "{} and {}", names[i], names[j]);
            }
        }
    }
}
