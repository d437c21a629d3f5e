//! Rendering the laid-out book and the source grids as an xlsx file.
//!
//! This is the only module that imports rust_xlsxwriter. Source sheets are
//! streamed row by row in the writer's constant-memory mode (its temporary
//! files go beside the output, not to the system's temp folder), merged with
//! their [`Overlay`]: replaced request cells and added result columns. The
//! file is written to a temporary name in the output's folder and renamed into
//! place only when complete, so no half-written output is ever left behind.
//!
//! A part of one request's results that the format cannot hold — a chart
//! reading a sheet that is not written, a formula too long or with too long
//! a text, a list the format refuses, a link to no sheet — is checked before
//! writing ([`check_parts`]) and, should one still fail, left out while
//! writing: it never costs the rest of the workbook.

mod graft;

pub use graft::{can_keep, GraftError};

use crate::cells::{quote_sheet_name, CellRange, DateKind, ErrorValue, Grid, Value, Visibility, Workbook};
use crate::layout::{format_code, output_sheet_names, Book, Cached, ChartSpec, Choices, Content, OutCell, Overlay, Part, Refused, Sheet, SheetAt, Style};
use rust_xlsxwriter::{Chart, ChartAxisCrossing, ChartFormat, ChartLine, ChartMarker, ChartMarkerType, DataValidation, DocProperties, ExcelDateTime, Format, FormatBorder, Formula, Note, Url, Workbook as XlsxBook, Worksheet, XlsxError};
use std::collections::{HashMap, HashSet};
use std::fmt;
use std::path::{Path, PathBuf};

/// Why the output could not be written.
#[derive(Debug)]
pub enum WriteError {
    /// The writer library refused something.
    Xlsx { path: PathBuf, source: XlsxError },
    /// A file-system step failed.
    Io { path: PathBuf, action: &'static str, source: std::io::Error },
    /// The output's folder cannot be written to (the writer's temporary
    /// files go there first).
    Folder { dir: PathBuf, source: std::io::Error },
}

impl fmt::Display for WriteError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            WriteError::Xlsx { path, .. } => write!(f, "could not write the output workbook {}", path.display()),
            WriteError::Io { path, action, .. } => write!(f, "could not {action} {}", path.display()),
            WriteError::Folder { dir, .. } => write!(f, "could not write in the folder {}", dir.display()),
        }
    }
}

impl std::error::Error for WriteError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            WriteError::Xlsx { source, .. } => Some(source),
            WriteError::Io { source, .. } | WriteError::Folder { source, .. } => Some(source),
        }
    }
}

/// How to write.
#[derive(Debug, Clone)]
pub struct WriteOptions {
    /// The workbook's creation time, seconds since 1970 (UTC); pinned for
    /// reproducible bytes.
    pub created_unix: i64,
    /// Deflate level of the zip container (0–9); 3 is most of the size for a
    /// third less time than 6 (docs/benchmarks.md).
    pub zip_level: u8,
}

/// Formats keyed by style and number-format code, made once each.
struct Formats {
    cache: HashMap<(Style, String), Format>,
}

impl Formats {
    fn new() -> Self {
        Formats { cache: HashMap::new() }
    }

    /// The format of a cell of this style and content (its number format
    /// chosen by [`format_code`]).
    fn get(&mut self, style: Style, content: &Content) -> &Format {
        let code = format_code(style, content);
        self.cache.entry((style, code.clone())).or_insert_with(|| {
            // Top-aligned, so that a row made tall by wrapped text reads
            // from its top line.
            let mut f = Format::new().set_align(rust_xlsxwriter::FormatAlign::Top);
            if !code.is_empty() {
                f = f.set_num_format(&code);
            }
            match style {
                Style::Header => f.set_bold().set_background_color(0xDDE7F0).set_border_bottom(FormatBorder::Thin),
                Style::Label => f.set_bold().set_background_color(0xDDE7F0).set_border_bottom(FormatBorder::Thin).set_text_wrap(),
                Style::Title => f.set_bold().set_font_size(13),
                Style::Wrap => f.set_text_wrap(),
                Style::Good => f.set_bold(),
                Style::Warning => f.set_font_color(0x9C5700),
                Style::Error => f.set_font_color(0x9C0006).set_bold(),
                Style::Link => f.set_font_color(0x0563C1).set_underline(rust_xlsxwriter::FormatUnderline::Single),
                Style::Input => f.set_background_color(0xFFF2CC).set_border(FormatBorder::Thin),
                _ => f,
            }
        })
    }
}

fn date_style(kind: DateKind) -> Style {
    match kind {
        DateKind::Date => Style::Date,
        DateKind::DateTime => Style::DateTime,
        DateKind::Time => Style::Time,
    }
}

/// The longest text one cell of the output format holds, in UTF-16 units
/// (rust_xlsxwriter refuses longer strings; the spreadsheet programs'
/// documented cell limit).
pub const MAX_CELL_TEXT: usize = 32_767;

/// The longest note text the writer accepts (the cell limit less the room it
/// keeps for an author prefix).
const MAX_NOTE_TEXT: usize = MAX_CELL_TEXT - 54;

/// `t` cut to at most `max` UTF-16 units, on a character boundary. A longer
/// source text cannot be stored in an xlsx cell; the pipeline reports every
/// such cell as a warning ([`over_long_text`]).
pub fn clip_text(t: &str, max: usize) -> &str {
    let mut units = 0;
    for (i, ch) in t.char_indices() {
        units += ch.len_utf16();
        if units > max {
            return &t[..i];
        }
    }
    t
}

/// Whether `t` is longer than one output cell holds.
pub fn over_long_text(t: &str) -> bool {
    t.len() > MAX_CELL_TEXT && t.encode_utf16().count() > MAX_CELL_TEXT
}

fn xerr(path: &Path) -> impl Fn(XlsxError) -> WriteError + '_ {
    move |source| WriteError::Xlsx { path: path.to_path_buf(), source }
}

/// Writes one model cell. A link or formula the format cannot hold (see
/// [`check_parts`]) is not written: the cell keeps its text or the
/// formula's last value, and the part is recorded as refused.
#[allow(clippy::too_many_arguments)]
fn put(ws: &mut Worksheet, fm: &mut Formats, parts: &mut Parts, at: SheetAt, row: u32, col: u16, cell: &OutCell, path: &Path) -> Result<(), WriteError> {
    let e = xerr(path);
    let link = cell.link.as_ref().filter(|t| parts.accept(at, Part::Link(row, u32::from(col)), link_fits(t, &parts.names)));
    if let Some(target) = link {
        let text = match &cell.content {
            Content::Text(t) => clip_text(t, MAX_CELL_TEXT).to_string(),
            Content::Number(x) => format!("{x}"),
            _ => String::new(),
        };
        let f = fm.get(cell.style, &cell.content).clone();
        ws.write_url_with_format(row, col, Url::new(format!("internal:{target}")).set_text(text), &f).map_err(&e)?;
    } else if let Content::Formula(text, cached) = &cell.content {
        if parts.accept(at, Part::Cell(row, u32::from(col)), formula_fits(text)) {
            write_content(ws, fm, row, col, &cell.content, Some(cell.style), path)?;
        } else {
            write_content(ws, fm, row, col, &cached_content(cached), Some(cell.style), path)?;
        }
    } else {
        write_content(ws, fm, row, col, &cell.content, Some(cell.style), path)?;
    }
    if let Some(n) = &cell.note {
        ws.insert_note(row, col, &Note::new(clip_text(n, MAX_NOTE_TEXT)).add_author_prefix(false)).map_err(&e)?;
    }
    Ok(())
}

/// A formula's last value as plain content.
fn cached_content(c: &Cached) -> Content {
    match c {
        Cached::Empty => Content::Blank,
        Cached::Number(x) => Content::Number(*x),
        Cached::Text(t) => Content::Text(t.clone()),
        Cached::Bool(b) => Content::Bool(*b),
        Cached::Error(e) => Content::Error(*e),
    }
}

fn error_formula(err: ErrorValue) -> Formula {
    Formula::new(format!("={}", err.as_str())).set_result(err.as_str())
}

/// Writes a content: a model cell in its style's format (`Some(style)`),
/// a source cell's own value (`None`) without one, but a date in its
/// date format.
fn write_content(ws: &mut Worksheet, fm: &mut Formats, row: u32, col: u16, content: &Content, style: Option<Style>, path: &Path) -> Result<(), WriteError> {
    let e = xerr(path);
    let f: Option<Format> = match (style, content) {
        (Some(s), _) => Some(fm.get(s, content).clone()),
        (None, Content::DateTime(_, kind)) => Some(fm.get(date_style(*kind), content).clone()),
        (None, _) => None,
    };
    match (content, f) {
        (Content::Blank, Some(f)) => {
            if style != Some(Style::Plain) {
                ws.write_blank(row, col, &f).map_err(&e)?;
            }
        }
        (Content::Blank, None) => {}
        (Content::Number(x) | Content::DateTime(x, _), Some(f)) => {
            ws.write_number_with_format(row, col, *x, &f).map_err(&e)?;
        }
        (Content::Number(x) | Content::DateTime(x, _), None) => {
            ws.write_number(row, col, *x).map_err(&e)?;
        }
        (Content::Text(t), f) => {
            let t = clip_text(t, MAX_CELL_TEXT);
            match f {
                Some(f) => ws.write_string_with_format(row, col, t, &f).map_err(&e)?,
                None => ws.write_string(row, col, t).map_err(&e)?,
            };
        }
        (Content::Bool(b), _) => {
            ws.write_boolean(row, col, *b).map_err(&e)?;
        }
        (Content::Error(err), _) => {
            ws.write_formula(row, col, error_formula(*err)).map_err(&e)?;
        }
        (Content::Formula(text, cached), f) => {
            let result = match cached {
                Cached::Empty => String::new(),
                Cached::Number(x) => format!("{x}"),
                Cached::Text(t) => clip_text(t, MAX_CELL_TEXT).to_string(),
                Cached::Bool(b) => if *b { "TRUE".into() } else { "FALSE".into() },
                Cached::Error(err) => err.as_str().into(),
            };
            let formula = Formula::new(format!("={text}")).set_result(result);
            match f {
                Some(f) => ws.write_formula_with_format(row, col, formula, &f).map_err(&e)?,
                None => ws.write_formula(row, col, formula).map_err(&e)?,
            };
        }
    }
    Ok(())
}

/// The content of a source cell.
fn source_content(grid: &Grid, row: u32, col: u32, keep_formulas: bool) -> Option<Content> {
    let v = grid.value(row, col);
    if keep_formulas {
        if let Some(f) = grid.formula(row, col) {
            let cached = match v {
                Value::Empty => Cached::Empty,
                Value::Number(x) | Value::DateTime(x, _) => Cached::Number(x),
                Value::Text(t) => Cached::Text(t.to_string()),
                Value::Bool(b) => Cached::Bool(b),
                Value::Error(e) => Cached::Error(e),
            };
            return Some(Content::Formula(f.to_string(), cached));
        }
    }
    Some(match v {
        Value::Empty => return None,
        Value::Number(x) => Content::Number(x),
        Value::Text(t) => Content::Text(t.to_string()),
        Value::Bool(b) => Content::Bool(b),
        Value::DateTime(x, k) => Content::DateTime(x, k),
        Value::Error(e) => Content::Error(e),
    })
}

#[allow(clippy::too_many_arguments)]
fn write_source(ws: &mut Worksheet, fm: &mut Formats, parts: &mut Parts, at: SheetAt, grid: &Grid, ov: &Overlay, keep_formulas: bool, path: &Path) -> Result<(), WriteError> {
    let e = xerr(path);
    for (c, w) in &ov.widths {
        ws.set_column_width(*c as u16, *w).map_err(&e)?;
    }
    // Rows that hold anything, ascending: constant-memory mode writes rows in order.
    let ext = grid.extent();
    let rows = [ext, overlay_extent(ov)].into_iter().flatten().map(|x| (x.first_row, x.last_row)).reduce(|a, b| (a.0.min(b.0), a.1.max(b.1)));
    let Some((lo, hi)) = rows else { return Ok(()) };
    let mut next: Vec<usize> = vec![0; ov.blocks.len()];
    for r in lo..=hi {
        if let Some(x) = ext {
            if (x.first_row..=x.last_row).contains(&r) {
                for c in x.first_col..=x.last_col {
                    if ov.cells.contains_key(&(r, c)) {
                        continue;
                    }
                    if let Some(content) = source_content(grid, r, c, keep_formulas) {
                        write_content(ws, fm, r, c as u16, &content, None, path)?;
                    }
                }
            }
        }
        for ((_, c), cell) in ov.cells.range((r, 0)..=(r, u32::MAX)) {
            put(ws, fm, parts, at, r, *c as u16, cell, path)?;
        }
        for (bi, b) in ov.blocks.iter().enumerate() {
            if let Some((hr, h)) = &b.header {
                if *hr == r {
                    put(ws, fm, parts, at, r, b.col as u16, &OutCell::text(h, Style::Header), path)?;
                }
            }
            let i = &mut next[bi];
            while *i < b.rows.len() && b.rows[*i] < r {
                *i += 1;
            }
            if *i < b.rows.len() && b.rows[*i] == r {
                let x = b.values[*i];
                if x.is_finite() {
                    let f = fm.get(Style::Number, &Content::Number(x)).clone();
                    ws.write_number_with_format(r, b.col as u16, x, &f).map_err(&e)?;
                }
            }
        }
    }
    Ok(())
}

fn write_result(ws: &mut Worksheet, fm: &mut Formats, parts: &mut Parts, at: SheetAt, sheet: &Sheet, path: &Path) -> Result<(), WriteError> {
    let e = xerr(path);
    for (c, w) in &sheet.widths {
        ws.set_column_width(*c as u16, *w).map_err(&e)?;
    }
    for (r, h) in &sheet.heights {
        ws.set_row_height(*r, *h).map_err(&e)?;
    }
    for ((r, c), cell) in &sheet.cells {
        put(ws, fm, parts, at, *r, *c as u16, cell, path)?;
    }
    if let Some((r, c)) = sheet.freeze {
        ws.set_freeze_panes(r, c as u16).map_err(&e)?;
    }
    print_setup(ws, &sheet.print).map_err(&e)?;
    if let Some(f) = sheet.filter {
        ws.autofilter(f.first_row, f.first_col as u16, f.last_row, f.last_col as u16).map_err(&e)?;
    }
    for (&(r, c), choices) in &sheet.choices {
        let part = Part::Choice(r, c);
        if let Some(dv) = parts.take(at, part, list_for(choices)) {
            let added = ws.add_data_validation(r, c as u16, r, c as u16, &dv).map(|_| ()).map_err(|x| x.to_string());
            parts.accept(at, part, added);
        }
    }
    for (k, spec) in sheet.charts.iter().enumerate() {
        let part = Part::Chart(k);
        if let Some(chart) = parts.take(at, part, chart_for(spec, &parts.names)) {
            let inserted = ws.insert_chart(spec.anchor.0, spec.anchor.1 as u16, &chart).map(|_| ()).map_err(|x| x.to_string());
            parts.accept(at, part, inserted);
        }
    }
    Ok(())
}

/// The sheet's print setup: landscape, fitted to the page width (as many
/// pages down as needed), rows and columns repeated on every page, the
/// printed area.
fn print_setup(ws: &mut Worksheet, p: &crate::layout::PrintSetup) -> Result<(), XlsxError> {
    if p.landscape {
        ws.set_landscape();
    }
    if p.fit_width {
        ws.set_print_fit_to_pages(1, 0);
    }
    if let Some((a, b)) = p.repeat_rows {
        ws.set_repeat_rows(a, b)?;
    }
    if let Some((a, b)) = p.repeat_cols {
        ws.set_repeat_columns(a as u16, b as u16)?;
    }
    if let Some(a) = &p.area {
        ws.set_print_area(a.first_row, a.first_col as u16, a.last_row, a.last_col as u16)?;
    }
    Ok(())
}

/// Text for a chart's title, axis or series name that the writer keeps as
/// text. rust_xlsxwriter reads such a name as a cell reference when the
/// text after its first `!` looks like a range (a response typed as
/// `Data!F2:F105` gives the axis name `Fitted Data!F2:F105`), and as a
/// formula when it starts with `=(` or starts with `=` and holds `[`; a
/// trailing or leading space, which a chart does not show, keeps it text.
fn chart_text(t: &str) -> String {
    let looks_like_range = t.split_once('!').is_some_and(|(_, rest)| {
        let r = rest.replace('$', "");
        r.starts_with(|c: char| c.is_ascii_uppercase()) && r.ends_with(|c: char| c.is_ascii_digit()) && r.chars().all(|c| c.is_ascii_uppercase() || c.is_ascii_digit() || c == ':')
    });
    if t.starts_with('=') {
        format!(" {t}")
    } else if looks_like_range {
        format!("{t} ")
    } else {
        t.to_string()
    }
}

/// A scatter chart of the workbook from its abstract spec: markers without
/// lines, or lines without markers, each series reading one-column ranges.
/// Refused when a series reads a sheet that is not written or cells past
/// the sheet's edge, or the writer's own check fails.
fn chart_for(spec: &ChartSpec, names: &HashSet<String>) -> Result<Chart, String> {
    let mut chart = Chart::new_scatter();
    for s in &spec.series {
        if !names.contains(&s.sheet) {
            return Err(format!("it reads the sheet {}, which the output does not have", quote_sheet_name(&s.sheet)));
        }
        if s.first_row > s.last_row || s.last_row >= crate::cells::MAX_ROWS || s.x_col.max(s.y_col) >= crate::cells::MAX_COLS {
            return Err(format!("the series {} reads rows {}–{}, which are not on a sheet", s.name, s.first_row + 1, s.last_row + 1));
        }
        let series = chart.add_series();
        series
            .set_name(&chart_text(&s.name))
            .set_categories((s.sheet.as_str(), s.first_row, s.x_col as u16, s.last_row, s.x_col as u16))
            .set_values((s.sheet.as_str(), s.first_row, s.y_col as u16, s.last_row, s.y_col as u16));
        if s.line {
            series.set_marker(ChartMarker::new().set_none()).set_format(ChartFormat::new().set_line(ChartLine::new().set_width(1.75)));
        } else {
            series.set_marker(ChartMarker::new().set_type(ChartMarkerType::Circle).set_size(5));
        }
    }
    chart.title().set_name(&chart_text(&spec.title));
    // Each axis crosses the other at its minimum, so the axes frame the
    // plot instead of crossing mid-plot at zero (the residual chart draws
    // its zero line as a series).
    chart.x_axis().set_name(&chart_text(&spec.x_label)).set_crossing(ChartAxisCrossing::Min);
    chart.y_axis().set_name(&chart_text(&spec.y_label)).set_crossing(ChartAxisCrossing::Min);
    chart.set_width(500).set_height(340);
    chart.validate().map_err(|e| e.to_string())?;
    Ok(chart)
}

/// The drop-down list of a cell: its choices written into the list, or
/// read from cells of the same sheet.
fn list_for(choices: &Choices) -> Result<DataValidation, String> {
    match choices {
        Choices::List(levels) => DataValidation::new().allow_list_strings(levels).map_err(|e| e.to_string()),
        Choices::Cells(r) => {
            let at = |row: u32, col: u32| format!("${}${}", crate::cells::column_letters(col), row + 1);
            if r.first_row != r.last_row && r.first_col != r.last_col {
                return Err("a list reads one row or one column".into());
            }
            let range = format!("{}:{}", at(r.first_row, r.first_col), at(r.last_row, r.last_col));
            Ok(DataValidation::new().allow_list_formula(Formula::new(range)))
        }
    }
}

/// The longest formula the xlsx format holds, in characters (Excel's
/// specifications and limits: 8,192; from memory).
const MAX_FORMULA: usize = 8_192;

/// The longest text constant within a formula (Excel's specifications and
/// limits: 255 characters; from memory).
const MAX_FORMULA_TEXT: usize = 255;

/// Whether the format holds a formula (given without `=`): not longer than
/// [`MAX_FORMULA`], no text constant longer than [`MAX_FORMULA_TEXT`].
fn formula_fits(f: &str) -> Result<(), String> {
    let n = f.encode_utf16().count();
    if n > MAX_FORMULA {
        return Err(format!("a formula would be {n} characters long, more than the {MAX_FORMULA} a workbook formula holds"));
    }
    let mut chars = f.chars().peekable();
    while let Some(c) = chars.next() {
        if c != '"' {
            continue;
        }
        let mut len = 0usize;
        loop {
            match chars.next() {
                Some('"') if chars.peek() == Some(&'"') => {
                    chars.next();
                    len += 1;
                }
                Some('"') | None => break,
                Some(ch) => len += ch.len_utf16(),
            }
        }
        if len > MAX_FORMULA_TEXT {
            return Err(format!("a formula would hold a text of {len} characters, more than the {MAX_FORMULA_TEXT} a text in a workbook formula may have"));
        }
    }
    Ok(())
}

/// Whether an internal link target (`'Sheet name'!A1`) names a sheet the
/// output has.
fn link_fits(target: &str, names: &HashSet<String>) -> Result<(), String> {
    let sheet = match target.strip_prefix('\'') {
        Some(rest) => {
            let mut name = String::new();
            let mut chars = rest.chars().peekable();
            loop {
                match chars.next() {
                    Some('\'') if chars.peek() == Some(&'\'') => {
                        chars.next();
                        name.push('\'');
                    }
                    Some('\'') => break,
                    Some(c) => name.push(c),
                    None => return Err(format!("the link {target} has an unclosed quote")),
                }
            }
            (chars.next() == Some('!')).then_some(name)
        }
        None => target.split_once('!').map(|(n, _)| n.to_string()),
    };
    match sheet {
        Some(n) if names.contains(&n) => Ok(()),
        Some(n) => Err(format!("it links to the sheet {}, which the output does not have", quote_sheet_name(&n))),
        None => Err(format!("the link {target} names no sheet")),
    }
}

/// The parts the writer refused, and the names of the sheets it writes.
struct Parts {
    names: HashSet<String>,
    refused: Vec<Refused>,
}

impl Parts {
    fn new(source_names: &[String], book: &Book) -> Self {
        let names = source_names.iter().chain(book.sheets.iter().map(|s| &s.name)).cloned().collect();
        Parts { names, refused: Vec::new() }
    }

    /// Whether the part is accepted; records it as refused when not.
    fn accept(&mut self, sheet: SheetAt, part: Part, r: Result<(), String>) -> bool {
        match r {
            Ok(()) => true,
            Err(why) => {
                self.refused.push(Refused { sheet, part, why });
                false
            }
        }
    }

    /// The built part, or `None` with the part recorded as refused.
    fn take<T>(&mut self, sheet: SheetAt, part: Part, r: Result<T, String>) -> Option<T> {
        match r {
            Ok(x) => Some(x),
            Err(why) => {
                self.refused.push(Refused { sheet, part, why });
                None
            }
        }
    }
}

/// Every part of a laid-out book the output format would refuse, checked
/// without writing: charts (their ranges must read sheets that are
/// written), drop-down lists, formulas of the result sheets (length, text
/// constants) and links (to sheets that are written). The writer makes the
/// same checks as it writes and leaves out what fails, so a refused part
/// never costs the rest of the output; checking first lets the pipeline
/// say so at the request's cell (`Book::leave_out`).
pub fn check_parts(book: &Book) -> Vec<Refused> {
    let mut parts = Parts::new(&book.source_names, book);
    for (i, ov) in book.overlays.iter().enumerate() {
        for (&(r, c), cell) in &ov.cells {
            if let Some(t) = &cell.link {
                let ok = link_fits(t, &parts.names);
                parts.accept(SheetAt::Source(i), Part::Link(r, c), ok);
            }
        }
    }
    for (i, sheet) in book.sheets.iter().enumerate() {
        let at = SheetAt::Result(i);
        for (&(r, c), cell) in &sheet.cells {
            if let Some(t) = &cell.link {
                let ok = link_fits(t, &parts.names);
                parts.accept(at, Part::Link(r, c), ok);
            }
            if let Content::Formula(f, _) = &cell.content {
                parts.accept(at, Part::Cell(r, c), formula_fits(f));
            }
        }
        for (&(r, c), choices) in &sheet.choices {
            let ok = list_for(choices).map(|_| ());
            parts.accept(at, Part::Choice(r, c), ok);
        }
        for (k, spec) in sheet.charts.iter().enumerate() {
            let ok = chart_for(spec, &parts.names).map(|_| ());
            parts.accept(at, Part::Chart(k), ok);
        }
    }
    parts.refused
}

/// Unix seconds to the workbook's date-time.
fn excel_time(unix: i64) -> Result<ExcelDateTime, XlsxError> {
    let (y, m, d, hh, mm, ss) = crate::cells::civil_from_unix(unix);
    let year = u16::try_from(y.clamp(1900, 9999)).unwrap_or(1900);
    ExcelDateTime::from_ymd(year, m as u8, d as u8)?.and_hms(hh as u16, mm as u8, ss as f64)
}

/// The output's folder, and a temporary file in it named after the output
/// (`tag` tells two temporary files of one run apart); hidden by its dot,
/// removed or renamed onto the output when done.
fn beside(out: &Path, tag: &str) -> (PathBuf, PathBuf) {
    let dir = match out.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let file = out.file_name().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "output.xlsx".into());
    let tmp = dir.join(format!(".{file}.plumb-{}{tag}.tmp", std::process::id()));
    (dir, tmp)
}

/// Writes the output atomically: a temporary file beside `out`, renamed onto
/// it when complete. On any error the temporary file is removed and `out` is
/// left as it was. A part the format cannot hold (see [`check_parts`]) is
/// left out and returned; the rest is written.
pub fn write_book(source: &Workbook, book: &Book, out: &Path, opts: &WriteOptions) -> Result<Vec<Refused>, WriteError> {
    let (dir, tmp) = beside(out, "");
    // Errors name the output, not the temporary file the user never sees;
    // a folder the writer cannot use is said plainly.
    let result = build(source, book, &tmp, &dir, opts).map_err(|e| match e {
        WriteError::Xlsx { source: XlsxError::TempFileError(_, io), .. } => WriteError::Folder { dir: dir.clone(), source: io },
        WriteError::Xlsx { source, .. } => WriteError::Xlsx { path: out.to_path_buf(), source },
        other => other,
    });
    let result = result.and_then(|refused| {
        std::fs::rename(&tmp, out).map_err(|source| WriteError::Io { path: out.to_path_buf(), action: "move the finished output to", source })?;
        Ok(refused)
    });
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

/// What [`write_book_keeping`] wrote.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Written {
    /// Parts of plumb's results the format refused (see [`check_parts`]).
    pub refused: Vec<Refused>,
    /// Things of the input that are not in the output, in plain words.
    pub left_out: Vec<String>,
    /// Why the input's own sheets could not be kept, when they were written
    /// from their values instead.
    pub fallback: Option<String>,
}

/// The cells an overlay writes: its request cells, and its added columns
/// from their headings to their last rows.
fn overlay_extent(ov: &Overlay) -> Option<CellRange> {
    let mut ext: Option<CellRange> = None;
    for &(r, c) in ov.cells.keys() {
        ext = Some(CellRange::enclosing(ext, r, c));
    }
    for b in &ov.blocks {
        for r in b.header.iter().map(|h| h.0).chain(b.rows.first().copied()).chain(b.rows.last().copied()) {
            ext = Some(CellRange::enclosing(ext, r, b.col));
        }
    }
    ext
}

/// As [`write_book`], keeping the input's own package (an xlsx or xlsm
/// file at `input`): its sheets exactly as they are, with plumb's cells,
/// columns, links and notes added and the result sheets after them (see
/// the `graft` module). Should the package hold something the graft does
/// not expect, the source sheets are written from their values as
/// [`write_book`] does, and [`Written::fallback`] says why.
pub fn write_book_keeping(source: &Workbook, book: &Book, input: &Path, out: &Path, opts: &WriteOptions) -> Result<Written, WriteError> {
    let (_, own) = beside(out, "-own");
    // Plumb's own part: the source sheets holding only the overlay.
    let bare = Workbook {
        sheets: source
            .sheets
            .iter()
            .map(|g| {
                let mut e = Grid::new(g.name.clone());
                e.visibility = g.visibility;
                e
            })
            .collect(),
    };
    let refused = write_book(&bare, book, &own, opts)?;
    let (_, tmp) = beside(out, "");
    let sources: Vec<graft::SourceAdds> = source
        .sheets
        .iter()
        .enumerate()
        .map(|(i, g)| {
            let ov = book.overlays.get(i);
            graft::SourceAdds { name: g.name.clone(), touched: ov.is_some_and(|o| !o.cells.is_empty() || !o.blocks.is_empty()), extent: ov.and_then(overlay_extent) }
        })
        .collect();
    let names_match = book.source_names.is_empty() || book.source_names.iter().zip(&source.sheets).all(|(n, g)| *n == g.name);
    let grafted = if names_match { graft::graft(input, &own, &tmp, opts.zip_level, &sources) } else { Err(GraftError("a sheet name had to change in the output".into())) };
    let _ = std::fs::remove_file(&own);
    match grafted {
        Ok(g) => {
            std::fs::rename(&tmp, out).map_err(|source| {
                let _ = std::fs::remove_file(&tmp);
                WriteError::Io { path: out.to_path_buf(), action: "move the finished output to", source }
            })?;
            Ok(Written { refused, left_out: g.left_out, fallback: None })
        }
        Err(why) => {
            let _ = std::fs::remove_file(&tmp);
            let refused = write_book(source, book, out, opts)?;
            Ok(Written { refused, left_out: Vec::new(), fallback: Some(why.0) })
        }
    }
}

fn build(source: &Workbook, book: &Book, tmp: &Path, dir: &Path, opts: &WriteOptions) -> Result<Vec<Refused>, WriteError> {
    let e = xerr(tmp);
    let mut wb = XlsxBook::new();
    wb.set_tempdir(dir).map_err(&e)?;
    wb.set_zip_compression_level(opts.zip_level);
    let created = excel_time(opts.created_unix).map_err(&e)?;
    wb.set_properties(&DocProperties::new().set_creation_datetime(&created));
    let mut fm = Formats::new();
    let first_visible = source.sheets.iter().position(|g| g.visibility == Visibility::Visible);
    // The names layout chose (and linked to); a book made without them gets the same rule.
    let source_names = if book.source_names.len() == source.sheets.len() { book.source_names.clone() } else { output_sheet_names(source) };
    let mut parts = Parts::new(&source_names, book);
    for (i, grid) in source.sheets.iter().enumerate() {
        let ws = wb.add_worksheet_with_constant_memory().map_err(&e)?;
        ws.set_name(&source_names[i]).map_err(&e)?;
        match grid.visibility {
            Visibility::Visible => {}
            Visibility::Hidden => {
                ws.set_hidden(true);
            }
            Visibility::VeryHidden => {
                ws.set_very_hidden(true);
            }
        }
        if Some(i) == first_visible {
            ws.set_active(true);
        }
        // A formula whose last value was empty text stays empty, not 0.
        ws.set_formula_result_default("");
        let empty = Overlay::default();
        let ov = book.overlays.get(i).unwrap_or(&empty);
        write_source(ws, &mut fm, &mut parts, SheetAt::Source(i), grid, ov, book.keep_formulas, tmp)?;
    }
    for (i, sheet) in book.sheets.iter().enumerate() {
        let ws = wb.add_worksheet();
        ws.set_name(&sheet.name).map_err(&e)?;
        if first_visible.is_none() && i == 0 {
            ws.set_active(true);
        }
        write_result(ws, &mut fm, &mut parts, SheetAt::Result(i), sheet, tmp)?;
    }
    wb.save(tmp).map_err(&e)?;
    Ok(parts.refused)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_folder_the_writer_cannot_use_is_named_not_its_temporary_file() {
        let dir = std::env::temp_dir().join(format!("plumb-write-missing-{}", std::process::id())).join("nope");
        let out = dir.join("out.xlsx");
        let opts = WriteOptions { created_unix: 0, zip_level: 1 };
        let e = write_book(&Workbook { sheets: Vec::new() }, &Book::default(), &out, &opts).expect_err("the folder is missing");
        assert!(matches!(&e, WriteError::Folder { dir: d, .. } if *d == dir), "{e:?}");
        assert_eq!(e.to_string(), format!("could not write in the folder {}", dir.display()));
    }

    #[test]
    fn long_text_is_clipped_on_a_character_boundary() {
        assert_eq!(clip_text("abc", 2), "ab");
        assert_eq!(clip_text("abc", 5), "abc");
        // '🌱' is two UTF-16 units: it does not fit in the last one.
        assert_eq!(clip_text("a🌱", 2), "a");
        let long = "x".repeat(MAX_CELL_TEXT + 10);
        assert!(over_long_text(&long));
        assert_eq!(clip_text(&long, MAX_CELL_TEXT).len(), MAX_CELL_TEXT);
        assert!(!over_long_text(&"é".repeat(MAX_CELL_TEXT)));
    }

}
