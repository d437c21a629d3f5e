//! Keeping the user's own workbook: plumb's additions grafted into the
//! input's package (xlsx, xlsm).
//!
//! The writer first renders plumb's part alone — the source sheets holding
//! only the overlay (request outcomes, per-row columns, their widths, links
//! and notes), then the result sheets — into a temporary package. This
//! module then builds the output from the input's package, part by part
//! (ECMA-376 Part 2, Open Packaging Conventions):
//!
//! - every part plumb does not change is copied as it is, still compressed
//!   (drawings, images, charts, comments, tables, themes, properties, …);
//! - each source sheet with additions is streamed once: the input's XML is
//!   passed through event by event, and plumb's cells are merged into its
//!   rows in column order (a request cell replaced, result columns added);
//!   plumb's column widths, links and notes are added where the sheet has
//!   none of its own;
//! - the styles and shared strings are the input's with plumb's appended,
//!   plumb's indices shifted past the input's (ECMA-376 Part 1, §18.8 and
//!   §18.4);
//! - the result sheets and everything they reach (drawings, charts, notes)
//!   are added under fresh part names, listed in the workbook, its
//!   relationships and the content types;
//! - the calculation chain, a cache the application rebuilds (§18.6), is
//!   left out, so it can never name a cell plumb changed; macros are left
//!   out, since the output is an .xlsx file, which cannot hold them.
//!
//! Anything unexpected in the package is a [`GraftError`]; the writer then
//! falls back to writing the source sheets from their values and says so.

use crate::cells::{column_index, column_letters, CellRange};
use quick_xml::events::attributes::Attribute;
use quick_xml::events::{BytesEnd, BytesStart, BytesText, Event};
use quick_xml::name::QName;
use quick_xml::{Reader, Writer};
use std::borrow::Cow;
use std::collections::{BTreeMap, HashMap, HashSet};
use std::fmt;
use std::fs::File;
use std::io::{BufReader, Read, Seek, Write};
use std::path::Path;
use zip::write::SimpleFileOptions;
use zip::{CompressionMethod, ZipArchive, ZipWriter};

/// Why the input's package could not be kept; the writer falls back to the
/// values.
#[derive(Debug, Clone, PartialEq)]
pub struct GraftError(pub String);

impl fmt::Display for GraftError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl From<zip::result::ZipError> for GraftError {
    fn from(e: zip::result::ZipError) -> Self {
        GraftError(format!("the package could not be read or written ({e})"))
    }
}

impl From<quick_xml::Error> for GraftError {
    fn from(e: quick_xml::Error) -> Self {
        GraftError(format!("a part's XML could not be read ({e})"))
    }
}

impl From<std::io::Error> for GraftError {
    fn from(e: std::io::Error) -> Self {
        GraftError(format!("a file step failed ({e})"))
    }
}

impl From<quick_xml::events::attributes::AttrError> for GraftError {
    fn from(e: quick_xml::events::attributes::AttrError) -> Self {
        GraftError(format!("a part's XML has a bad attribute ({e})"))
    }
}

type R<T> = Result<T, GraftError>;

/// What the graft could not carry over, in plain words, for the run's messages.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Grafted {
    /// Things of the input that are not in the output.
    pub left_out: Vec<String>,
}

const REL_NS: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships";
const T_WORKSHEET: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet";
const T_STYLES: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles";
const T_SST: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings";
const T_CALC_CHAIN: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/calcChain";
const T_OFFICE_DOC: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument";
const T_VBA: &str = "http://schemas.microsoft.com/office/2006/relationships/vbaProject";
const T_COMMENTS: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/comments";
const T_VML: &str = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/vmlDrawing";
const CT_MAIN: &str = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml";
const CT_MACRO_MAIN: &str = "application/vnd.ms-excel.sheet.macroEnabled.main+xml";
const CT_SST: &str = "application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml";

// ---------------------------------------------------------------- package

/// One relationship of a part.
#[derive(Debug, Clone)]
struct Rel {
    id: String,
    kind: String,
    target: String,
    external: bool,
}

/// The folder of a part name (`xl/worksheets/sheet1.xml` → `xl/worksheets`).
fn folder(part: &str) -> &str {
    part.rfind('/').map(|i| &part[..i]).unwrap_or("")
}

/// The relationships part of a part (§9.3 of Part 2).
fn rels_name(part: &str) -> String {
    let (dir, file) = match part.rfind('/') {
        Some(i) => (&part[..i], &part[i + 1..]),
        None => ("", part),
    };
    if dir.is_empty() {
        format!("_rels/{file}.rels")
    } else {
        format!("{dir}/_rels/{file}.rels")
    }
}

/// A relationship target resolved against its source part: a part name
/// without a leading slash.
fn resolve(source: &str, target: &str) -> String {
    let target = target.split('#').next().unwrap_or(target);
    let mut parts: Vec<&str> = if let Some(abs) = target.strip_prefix('/') {
        return normalise(abs.split('/').collect());
    } else {
        folder(source).split('/').filter(|s| !s.is_empty()).collect()
    };
    parts.extend(target.split('/'));
    normalise(parts)
}

fn normalise(parts: Vec<&str>) -> String {
    let mut out: Vec<&str> = Vec::new();
    for p in parts {
        match p {
            "" | "." => {}
            ".." => {
                out.pop();
            }
            x => out.push(x),
        }
    }
    out.join("/")
}

/// The value of an attribute by local name, unescaped.
fn attr(e: &BytesStart, local: &str) -> R<Option<String>> {
    for a in e.attributes() {
        let a = a?;
        if local_of(a.key.0) == local {
            return Ok(Some(a.normalized_value(quick_xml::XmlVersion::Implicit1_0).map_err(|x| GraftError(format!("a bad attribute value ({x})")))?.into_owned()));
        }
    }
    Ok(None)
}

fn local_of(name: &str) -> &str {
    name.rsplit(':').next().unwrap_or(name)
}

/// The prefix of an element name, with its colon (`x:row` → `x:`).
fn prefix_of(name: &str) -> String {
    name.rfind(':').map(|i| name[..=i].to_string()).unwrap_or_default()
}

fn parse_rels(xml: &str) -> R<Vec<Rel>> {
    let mut rd = Reader::from_str(xml);
    let mut out = Vec::new();
    loop {
        match rd.read_event()? {
            Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "Relationship" => out.push(Rel {
                id: attr(&e, "Id")?.unwrap_or_default(),
                kind: attr(&e, "Type")?.unwrap_or_default(),
                target: attr(&e, "Target")?.unwrap_or_default(),
                external: attr(&e, "TargetMode")?.is_some_and(|m| m == "External"),
            }),
            Event::Eof => break,
            _ => {}
        }
    }
    Ok(out)
}

fn write_rels(rels: &[Rel]) -> String {
    let mut s = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"yes\"?>\n<Relationships xmlns=\"http://schemas.openxmlformats.org/package/2006/relationships\">");
    for r in rels {
        s.push_str(&format!("<Relationship Id=\"{}\" Type=\"{}\" Target=\"{}\"", esc(&r.id), esc(&r.kind), esc(&r.target)));
        if r.external {
            s.push_str(" TargetMode=\"External\"");
        }
        s.push_str("/>");
    }
    s.push_str("</Relationships>");
    s
}

/// XML-escaped text for an attribute value or element text.
fn esc(s: &str) -> String {
    quick_xml::escape::escape(s).into_owned()
}

/// The content types of a package.
#[derive(Debug, Default)]
struct ContentTypes {
    defaults: Vec<(String, String)>,
    overrides: Vec<(String, String)>,
}

impl ContentTypes {
    fn parse(xml: &str) -> R<Self> {
        let mut rd = Reader::from_str(xml);
        let mut ct = ContentTypes::default();
        loop {
            match rd.read_event()? {
                Event::Start(e) | Event::Empty(e) => match local_of(e.name().0) {
                    "Default" => ct.defaults.push((attr(&e, "Extension")?.unwrap_or_default().to_ascii_lowercase(), attr(&e, "ContentType")?.unwrap_or_default())),
                    "Override" => ct.overrides.push((attr(&e, "PartName")?.unwrap_or_default().trim_start_matches('/').to_string(), attr(&e, "ContentType")?.unwrap_or_default())),
                    _ => {}
                },
                Event::Eof => break,
                _ => {}
            }
        }
        Ok(ct)
    }

    /// The content type of a part (an override, else its extension's default).
    fn of(&self, part: &str) -> Option<&str> {
        if let Some((_, t)) = self.overrides.iter().find(|(p, _)| p.eq_ignore_ascii_case(part)) {
            return Some(t);
        }
        let ext = part.rsplit('.').next()?.to_ascii_lowercase();
        self.defaults.iter().find(|(e, _)| *e == ext).map(|(_, t)| t.as_str())
    }

    fn write(&self) -> String {
        let mut s = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"yes\"?>\n<Types xmlns=\"http://schemas.openxmlformats.org/package/2006/content-types\">");
        for (e, t) in &self.defaults {
            s.push_str(&format!("<Default Extension=\"{}\" ContentType=\"{}\"/>", esc(e), esc(t)));
        }
        for (p, t) in &self.overrides {
            s.push_str(&format!("<Override PartName=\"/{}\" ContentType=\"{}\"/>", esc(p), esc(t)));
        }
        s.push_str("</Types>");
        s
    }
}

/// An open package: the zip and its part names.
struct Package<Z: Read + Seek> {
    zip: ZipArchive<Z>,
    names: Vec<String>,
}

impl<Z: Read + Seek> Package<Z> {
    fn open(z: Z) -> R<Self> {
        let zip = ZipArchive::new(z)?;
        let names = zip.file_names().map(|n| n.map(|n| n.into_owned())).collect::<Result<Vec<_>, _>>()?;
        Ok(Package { zip, names })
    }

    /// The stored name of a part (part names compare ignoring case, §9.1.1.2).
    fn find(&self, part: &str) -> Option<&str> {
        self.names.iter().find(|n| n.eq_ignore_ascii_case(part)).map(|s| s.as_str())
    }

    fn text(&mut self, part: &str) -> R<Option<String>> {
        let Some(name) = self.find(part).map(str::to_string) else { return Ok(None) };
        let mut f = self.zip.by_name(&name)?;
        let mut s = String::new();
        f.read_to_string(&mut s).map_err(|e| GraftError(format!("the part {name} is not text ({e})")))?;
        Ok(Some(s))
    }

    fn bytes(&mut self, part: &str) -> R<Vec<u8>> {
        let name = self.find(part).map(str::to_string).ok_or_else(|| GraftError(format!("the part {part} is missing")))?;
        let mut f = self.zip.by_name(&name)?;
        let mut v = Vec::new();
        f.read_to_end(&mut v)?;
        Ok(v)
    }

    fn rels(&mut self, part: &str) -> R<Vec<Rel>> {
        match self.text(&rels_name(part))? {
            Some(x) => parse_rels(&x),
            None => Ok(Vec::new()),
        }
    }
}

/// The workbook part of a package and the parts it names.
struct Book {
    part: String,
    xml: String,
    rels: Vec<Rel>,
    /// Sheet name → (relationship id, part name), in workbook order.
    sheets: Vec<(String, String, Option<String>)>,
    max_sheet_id: u32,
}

fn read_book<Z: Read + Seek>(pkg: &mut Package<Z>) -> R<Book> {
    let root = pkg.rels("")?;
    let part = root
        .iter()
        .find(|r| r.kind == T_OFFICE_DOC)
        .map(|r| resolve("", &r.target))
        .ok_or_else(|| GraftError("the package names no workbook".into()))?;
    let xml = pkg.text(&part)?.ok_or_else(|| GraftError(format!("the workbook part {part} is missing")))?;
    let rels = pkg.rels(&part)?;
    let mut sheets = Vec::new();
    let mut max_sheet_id = 0;
    let mut rd = Reader::from_str(&xml);
    loop {
        match rd.read_event()? {
            Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "sheet" => {
                let name = attr(&e, "name")?.unwrap_or_default();
                let id = attr(&e, "id")?.unwrap_or_default();
                if let Some(n) = attr(&e, "sheetId")?.and_then(|s| s.parse::<u32>().ok()) {
                    max_sheet_id = max_sheet_id.max(n);
                }
                let target = rels.iter().find(|r| r.id == id && r.kind == T_WORKSHEET).map(|r| resolve(&part, &r.target));
                sheets.push((name, id, target));
            }
            Event::Eof => break,
            _ => {}
        }
    }
    Ok(Book { part, xml, rels, sheets, max_sheet_id })
}

/// Whether the input's package can be kept: it reads as a package with a
/// workbook naming each of `sheet_names` as a worksheet part. Checked
/// before laying out, so the About sheet can say which way the sheets were
/// carried over.
pub fn can_keep(input: &Path, sheet_names: &[String]) -> R<()> {
    let mut pkg = Package::open(BufReader::new(File::open(input)?))?;
    let book = read_book(&mut pkg)?;
    for n in sheet_names {
        match book.sheets.iter().find(|(name, _, _)| name == n) {
            Some((_, _, Some(part))) if pkg.find(part).is_some() => {}
            _ => return Err(GraftError(format!("the sheet {n} has no worksheet part"))),
        }
    }
    Ok(())
}

// ---------------------------------------------------------------- xml helpers

type XmlOut<W> = Writer<W>;

/// A start tag renamed with a prefix (plumb's own XML has none), its
/// attributes kept as they are except those in `set` (new values, escaped
/// here) and those in `drop`.
fn restart(e: &BytesStart, prefix: &str, set: &[(&str, String)], drop: &[&str]) -> R<BytesStart<'static>> {
    let name = e.name();
    let local = local_of(name.0);
    let new_name = if prefix.is_empty() || name.0.contains(':') { name.0.to_string() } else { format!("{prefix}{local}") };
    let mut out = BytesStart::new(new_name);
    for a in e.attributes() {
        let a: Attribute = a?;
        let k = a.key.0;
        if drop.contains(&k) || set.iter().any(|(s, _)| *s == k) {
            continue;
        }
        out.push_attribute(Attribute { key: QName(k), value: Cow::Owned(a.value.into_owned()) });
    }
    for (k, v) in set {
        out.push_attribute((*k, v.as_str()));
    }
    Ok(out)
}

/// Renames an end tag with a prefix.
fn reend(e: &BytesEnd, prefix: &str) -> BytesEnd<'static> {
    let n = e.name().0;
    if prefix.is_empty() || n.contains(':') {
        BytesEnd::new(n.to_string())
    } else {
        BytesEnd::new(format!("{prefix}{n}"))
    }
}

/// Reads a whole element (its start already read) into a list of owned events.
fn subtree<B: std::io::BufRead>(rd: &mut Reader<B>, buf: &mut Vec<u8>, first: Event<'static>) -> R<Vec<Event<'static>>> {
    let mut out = vec![first.clone()];
    if matches!(first, Event::Empty(_)) {
        return Ok(out);
    }
    let mut depth = 1usize;
    loop {
        buf.clear();
        let ev = rd.read_event_into(buf)?.into_owned();
        match &ev {
            Event::Start(_) => depth += 1,
            Event::End(_) => depth -= 1,
            Event::Eof => return Err(GraftError("a part's XML ends early".into())),
            _ => {}
        }
        out.push(ev);
        if depth == 0 {
            return Ok(out);
        }
    }
}

fn xml_err(e: std::io::Error) -> GraftError {
    GraftError(format!("writing a part failed ({e})"))
}

/// An A1 reference's zero-based (row, column); `$` marks allowed.
fn parse_ref(r: &str) -> Option<(u32, u32)> {
    let r = r.trim_start_matches('$');
    let split = r.find(|c: char| !c.is_ascii_alphabetic())?;
    let col = column_index(&r[..split])?;
    let row: u32 = r[split..].trim_start_matches('$').parse().ok()?;
    Some((row.checked_sub(1)?, col))
}

fn a1(row: u32, col: u32) -> String {
    format!("{}{}", column_letters(col), row + 1)
}

// ---------------------------------------------------------------- styles

/// The pieces of a styles part that plumb's cells need.
#[derive(Debug, Default)]
struct Styles {
    num_fmts: Vec<(u32, String)>,
    fonts: Vec<String>,
    fills: Vec<String>,
    borders: Vec<String>,
    xfs: Vec<Vec<Event<'static>>>,
    dxfs: Vec<String>,
}

fn events_to_string(evs: &[Event<'static>]) -> R<String> {
    let mut w = Writer::new(Vec::new());
    for e in evs {
        w.write_event(e.clone()).map_err(xml_err)?;
    }
    String::from_utf8(w.into_inner()).map_err(|_| GraftError("a part is not UTF-8".into()))
}

fn parse_styles(xml: &str) -> R<Styles> {
    let mut rd = Reader::from_reader(xml.as_bytes());
    let mut buf = Vec::new();
    let mut st = Styles::default();
    let mut section: Option<String> = None;
    loop {
        buf.clear();
        let ev = rd.read_event_into(&mut buf)?.into_owned();
        match &ev {
            Event::Start(e) if section.is_none() => {
                let l = local_of(e.name().0).to_string();
                if ["numFmts", "fonts", "fills", "borders", "cellXfs", "dxfs"].contains(&l.as_str()) {
                    section = Some(l);
                }
            }
            Event::End(e) if section.as_deref() == Some(local_of(e.name().0)) => section = None,
            Event::Start(_) | Event::Empty(_) => {
                let Some(sec) = section.clone() else { continue };
                let (Event::Start(e) | Event::Empty(e)) = &ev else { continue };
                if sec == "numFmts" {
                    let id = attr(e, "numFmtId")?.and_then(|s| s.parse().ok()).unwrap_or(0);
                    st.num_fmts.push((id, attr(e, "formatCode")?.unwrap_or_default()));
                    if matches!(ev, Event::Start(_)) {
                        subtree(&mut rd, &mut Vec::new(), ev.clone())?;
                    }
                    continue;
                }
                let tree = subtree(&mut rd, &mut Vec::new(), ev.clone())?;
                match sec.as_str() {
                    "fonts" => st.fonts.push(events_to_string(&tree)?),
                    "fills" => st.fills.push(events_to_string(&tree)?),
                    "borders" => st.borders.push(events_to_string(&tree)?),
                    "cellXfs" => st.xfs.push(tree),
                    "dxfs" => st.dxfs.push(events_to_string(&tree)?),
                    _ => {}
                }
            }
            Event::Eof => break,
            _ => {}
        }
    }
    Ok(st)
}

/// The input's styles with plumb's appended; plumb's cell format `k`
/// becomes `k + xf_offset`, its differential format `k` becomes
/// `k + dxf_offset`.
struct MergedStyles {
    xml: String,
    xf_offset: u32,
    dxf_offset: u32,
}

fn merge_styles(input: &str, plumb: &str) -> R<MergedStyles> {
    let a = parse_styles(input)?;
    let p = parse_styles(plumb)?;
    let next_fmt = a.num_fmts.iter().map(|(i, _)| *i).max().unwrap_or(163).max(163) + 1;
    let fmt_map: HashMap<u32, u32> = p.num_fmts.iter().enumerate().map(|(k, (id, _))| (*id, next_fmt + k as u32)).collect();
    let shift = |v: Option<String>, by: usize| v.and_then(|s| s.parse::<usize>().ok()).map(|x| (x + by).to_string());
    // Plumb's cell formats, pointing at the appended fonts, fills, borders and number formats.
    let mut xfs = String::new();
    for tree in &p.xfs {
        let mut evs = tree.clone();
        if let Some(Event::Start(e) | Event::Empty(e)) = evs.first() {
            let mut set = Vec::new();
            for (k, n) in [("fontId", a.fonts.len()), ("fillId", a.fills.len()), ("borderId", a.borders.len())] {
                if let Some(v) = shift(attr(e, k)?, n) {
                    set.push((k, v));
                }
            }
            if let Some(id) = attr(e, "numFmtId")?.and_then(|s| s.parse::<u32>().ok()) {
                set.push(("numFmtId", fmt_map.get(&id).copied().unwrap_or(id).to_string()));
            }
            set.push(("xfId", "0".to_string()));
            let ne = restart(e, "", &set, &[])?;
            evs[0] = if matches!(evs[0], Event::Empty(_)) { Event::Empty(ne) } else { Event::Start(ne) };
        }
        xfs.push_str(&events_to_string(&evs)?);
    }
    let fmts: String = p.num_fmts.iter().map(|(id, code)| format!("<numFmt numFmtId=\"{}\" formatCode=\"{}\"/>", fmt_map[id], esc(code))).collect();
    let adds: HashMap<&str, (String, usize)> = HashMap::from([
        ("numFmts", (fmts, a.num_fmts.len() + p.num_fmts.len())),
        ("fonts", (p.fonts.concat(), a.fonts.len() + p.fonts.len())),
        ("fills", (p.fills.concat(), a.fills.len() + p.fills.len())),
        ("borders", (p.borders.concat(), a.borders.len() + p.borders.len())),
        ("cellXfs", (xfs, a.xfs.len() + p.xfs.len())),
        ("dxfs", (p.dxfs.concat(), a.dxfs.len() + p.dxfs.len())),
    ]);
    // Sections the input lacks go before the first section that follows them (§18.8.39).
    const ORDER: [&str; 12] = ["numFmts", "fonts", "fills", "borders", "cellStyleXfs", "cellXfs", "cellStyles", "dxfs", "tableStyles", "colors", "extLst", "/"];
    let mut present: HashSet<String> = HashSet::new();
    {
        let mut rd = Reader::from_str(input);
        let mut depth = 0;
        loop {
            match rd.read_event()? {
                Event::Start(e) => {
                    if depth == 1 {
                        present.insert(local_of(e.name().0).to_string());
                    }
                    depth += 1;
                }
                Event::Empty(e) if depth == 1 => {
                    present.insert(local_of(e.name().0).to_string());
                }
                Event::End(_) => depth -= 1,
                Event::Eof => break,
                _ => {}
            }
        }
    }
    for need in ["fonts", "fills", "borders", "cellXfs"] {
        if !present.contains(need) {
            return Err(GraftError(format!("the styles part has no {need}")));
        }
    }
    let mut w = Writer::new(Vec::new());
    let mut rd = Reader::from_reader(input.as_bytes());
    let mut buf = Vec::new();
    let mut depth = 0usize;
    let mut prefix = String::new();
    let mut done: HashSet<&str> = HashSet::new();
    let missing_before = |at: &str, done: &HashSet<&str>| -> Vec<&'static str> {
        let pos = ORDER.iter().position(|x| *x == at).unwrap_or(ORDER.len());
        ORDER[..pos].iter().copied().filter(|s| adds.contains_key(s) && !present.contains(*s) && !done.contains(s) && adds[s].1 > 0).collect()
    };
    loop {
        buf.clear();
        let ev = rd.read_event_into(&mut buf)?;
        match ev {
            Event::Start(e) => {
                depth += 1;
                let l = local_of(e.name().0).to_string();
                if depth == 1 {
                    prefix = prefix_of(e.name().0);
                    w.write_event(Event::Start(e)).map_err(xml_err)?;
                    continue;
                }
                if depth == 2 {
                    for s in missing_before(&l, &done) {
                        write_section(&mut w, &prefix, s, &adds[s])?;
                        done.insert(s);
                    }
                    if let Some((_, n)) = adds.get(l.as_str()) {
                        let ne = restart(&e, "", &[("count", n.to_string())], &[])?;
                        w.write_event(Event::Start(ne)).map_err(xml_err)?;
                        continue;
                    }
                }
                w.write_event(Event::Start(e)).map_err(xml_err)?;
            }
            Event::Empty(e) if depth == 1 => {
                let l = local_of(e.name().0).to_string();
                for s in missing_before(&l, &done) {
                    write_section(&mut w, &prefix, s, &adds[s])?;
                    done.insert(s);
                }
                if let Some(add) = adds.get(l.as_str()) {
                    write_section(&mut w, &prefix, &l, add)?;
                } else {
                    w.write_event(Event::Empty(e)).map_err(xml_err)?;
                }
            }
            Event::End(e) => {
                let l = local_of(e.name().0).to_string();
                if depth == 2 {
                    if let Some((body, _)) = adds.get(l.as_str()) {
                        w.get_mut().extend_from_slice(body.as_bytes());
                    }
                }
                if depth == 1 {
                    for s in missing_before("/", &done) {
                        write_section(&mut w, &prefix, s, &adds[s])?;
                        done.insert(s);
                    }
                }
                depth -= 1;
                w.write_event(Event::End(e)).map_err(xml_err)?;
            }
            Event::Eof => break,
            other => w.write_event(other).map_err(xml_err)?,
        }
    }
    let xml = String::from_utf8(w.into_inner()).map_err(|_| GraftError("the styles part is not UTF-8".into()))?;
    Ok(MergedStyles { xml, xf_offset: a.xfs.len() as u32, dxf_offset: a.dxfs.len() as u32 })
}

fn write_section<W: Write>(w: &mut XmlOut<W>, prefix: &str, name: &str, (body, count): &(String, usize)) -> R<()> {
    let body = if prefix.is_empty() { body.clone() } else { prefixed(body, prefix)? };
    let s = format!("<{prefix}{name} count=\"{count}\">{body}</{prefix}{name}>");
    w.get_mut().write_all(s.as_bytes()).map_err(xml_err)
}

/// Plumb's unprefixed XML fragment with every element name prefixed.
fn prefixed(xml: &str, prefix: &str) -> R<String> {
    let mut rd = Reader::from_str(xml);
    let mut w = Writer::new(Vec::new());
    loop {
        match rd.read_event()? {
            Event::Start(e) => w.write_event(Event::Start(restart(&e, prefix, &[], &[])?)),
            Event::Empty(e) => w.write_event(Event::Empty(restart(&e, prefix, &[], &[])?)),
            Event::End(e) => w.write_event(Event::End(reend(&e, prefix))),
            Event::Eof => break,
            other => w.write_event(other),
        }
        .map_err(xml_err)?;
    }
    String::from_utf8(w.into_inner()).map_err(|_| GraftError("not UTF-8".into()))
}

// ---------------------------------------------------------------- shared strings

/// The input's shared strings with plumb's appended; plumb's string `k`
/// becomes `k + offset`.
fn merge_strings(input: Option<&str>, plumb: &str) -> R<(String, u32)> {
    let items = |xml: &str| -> R<(Vec<String>, String, u64)> {
        let mut rd = Reader::from_reader(xml.as_bytes());
        let mut buf = Vec::new();
        let mut out = Vec::new();
        let mut prefix = String::new();
        let mut count = 0u64;
        loop {
            buf.clear();
            let ev = rd.read_event_into(&mut buf)?.into_owned();
            match &ev {
                Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "sst" => {
                    prefix = prefix_of(e.name().0);
                    count = attr(e, "count")?.and_then(|s| s.parse().ok()).unwrap_or(0);
                }
                Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "si" => {
                    out.push(events_to_string(&subtree(&mut rd, &mut Vec::new(), ev.clone())?)?);
                }
                Event::Eof => break,
                _ => {}
            }
        }
        Ok((out, prefix, count))
    };
    let (pi, _, pc) = items(plumb)?;
    let (ai, prefix, ac) = match input {
        Some(x) => items(x)?,
        None => (Vec::new(), String::new(), 0),
    };
    let offset = ai.len() as u32;
    let mut s = format!(
        "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"yes\"?>\n<{prefix}sst xmlns{}=\"http://schemas.openxmlformats.org/spreadsheetml/2006/main\" count=\"{}\" uniqueCount=\"{}\">",
        if prefix.is_empty() { String::new() } else { format!(":{}", prefix.trim_end_matches(':')) },
        ac.max(ai.len() as u64) + pc.max(pi.len() as u64),
        ai.len() + pi.len()
    );
    for x in &ai {
        s.push_str(x);
    }
    for x in &pi {
        s.push_str(&if prefix.is_empty() { x.clone() } else { prefixed(x, &prefix)? });
    }
    s.push_str(&format!("</{prefix}sst>"));
    Ok((s, offset))
}

// ---------------------------------------------------------------- plumb's sheets

/// How plumb's cell XML is shifted into the merged package.
#[derive(Debug, Clone, Copy)]
struct Shift {
    xf: u32,
    dxf: u32,
    sst: u32,
}


/// Rewrites one event of plumb's sheet XML: style indices shifted, the
/// prefix added; `in_shared` tracks whether the text is a shared-string
/// index.
fn shift_event<'a>(ev: Event<'a>, shift: Shift, prefix: &str, state: &mut (bool, bool)) -> R<Event<'a>> {
    Ok(match ev {
        Event::Start(e) => match shift_start(&e, shift, prefix, state)? {
            Some(ne) => Event::Start(ne),
            None => Event::Start(e),
        },
        Event::Empty(e) => {
            let ne = shift_start(&e, shift, prefix, state)?;
            state.0 = false;
            match ne {
                Some(ne) => Event::Empty(ne),
                None => Event::Empty(e),
            }
        }
        Event::End(e) => {
            match local_of(e.name().0) {
                "c" => state.0 = false,
                "v" => state.1 = false,
                _ => {}
            }
            if prefix.is_empty() {
                Event::End(e)
            } else {
                Event::End(reend(&e, prefix))
            }
        }
        Event::Text(t) if state.0 && state.1 => {
            let n: u32 = t.trim().parse().map_err(|_| GraftError("a shared-string index is not a number".into()))?;
            Event::Text(BytesText::from_escaped((n + shift.sst).to_string()))
        }
        other => other,
    })
}

/// The raw value of an attribute, without allocating.
fn raw_attr<'b>(e: &'b BytesStart, key: &str) -> R<Option<Cow<'b, str>>> {
    Ok(e.try_get_attribute(key)?.map(|a| a.value))
}

/// The start tag with its style indices shifted and the prefix added;
/// `None` when it needs neither.
fn shift_start(e: &BytesStart, shift: Shift, prefix: &str, state: &mut (bool, bool)) -> R<Option<BytesStart<'static>>> {
    let l = local_of(e.name().0);
    let key = match l {
        "c" | "row" => "s",
        "col" => "style",
        "cfRule" => "dxfId",
        "v" => {
            state.1 = true;
            ""
        }
        _ => "",
    };
    if l == "c" {
        state.0 = raw_attr(e, "t")?.as_deref() == Some("s");
    }
    let by = if l == "cfRule" { shift.dxf } else { shift.xf };
    let set: Vec<(&str, String)> = if key.is_empty() {
        Vec::new()
    } else {
        match raw_attr(e, key)?.and_then(|v| v.parse::<u32>().ok()) {
            Some(x) => vec![(key, (x + by).to_string())],
            None => Vec::new(),
        }
    };
    if set.is_empty() && prefix.is_empty() {
        return Ok(None);
    }
    restart(e, prefix, &set, &[]).map(Some)
}

/// Writes an element whose start `first` was just read, and everything up to
/// its end, each event passed through `f`, into `out`.
fn copy_element<B: std::io::BufRead>(rd: &mut Reader<B>, first: Event<'_>, out: &mut Vec<u8>, f: &mut dyn FnMut(Event<'_>) -> R<Event<'_>>) -> R<()> {
    let empty = matches!(first, Event::Empty(_));
    let mut w = Writer::new(out);
    let ev = f(first)?;
    w.write_event(ev).map_err(xml_err)?;
    if empty {
        return Ok(());
    }
    let mut depth = 1usize;
    let mut buf = Vec::new();
    while depth > 0 {
        buf.clear();
        let ev = rd.read_event_into(&mut buf)?;
        match &ev {
            Event::Start(_) => depth += 1,
            Event::End(_) => depth -= 1,
            Event::Eof => return Err(GraftError("a part's XML ends early".into())),
            _ => {}
        }
        let ev = f(ev)?;
        w.write_event(ev).map_err(xml_err)?;
    }
    Ok(())
}

/// Copies one of plumb's result sheets with its indices shifted.
fn copy_result_sheet<W: Write>(src: &mut dyn Read, out: &mut W, shift: Shift) -> R<()> {
    let mut rd = Reader::from_reader(BufReader::new(src));
    let mut w = Writer::new(out);
    let mut buf = Vec::new();
    let mut state = (false, false);
    loop {
        buf.clear();
        let ev = rd.read_event_into(&mut buf)?;
        if matches!(ev, Event::Eof) {
            break;
        }
        let ev = shift_event(ev, shift, "", &mut state)?;
        w.write_event(ev).map_err(xml_err)?;
    }
    Ok(())
}

/// One row of plumb's overlay sheet: its number (zero-based) and its
/// cells (column, XML).
type PlumbRow = (u32, Cells);

/// A row's cells as one buffer and each cell's (column, start, end) in it.
#[derive(Debug, Default)]
struct Cells {
    xml: Vec<u8>,
    at: Vec<(u32, usize, usize)>,
}

/// The rows of plumb's overlay sheet, read one at a time.
struct PlumbRows<B: std::io::BufRead> {
    rd: Reader<B>,
    buf: Vec<u8>,
    shift: Shift,
    prefix: String,
    /// Column elements of plumb's sheet (prefixed), by first column.
    cols: Vec<(u32, u32, String)>,
    pending: Option<PlumbRow>,
    finished_rows: bool,
    hyperlinks: Vec<(String, String)>,
    legacy_drawing: Option<String>,
}

impl<B: std::io::BufRead> PlumbRows<B> {
    fn new(src: B, shift: Shift, prefix: &str) -> R<Self> {
        let mut p = PlumbRows { rd: Reader::from_reader(src), buf: Vec::new(), shift, prefix: prefix.to_string(), cols: Vec::new(), pending: None, finished_rows: false, hyperlinks: Vec::new(), legacy_drawing: None };
        // Up to the sheet data: the column widths.
        loop {
            p.buf.clear();
            let ev = p.rd.read_event_into(&mut p.buf)?.into_owned();
            match &ev {
                Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "col" => {
                    let min = attr(e, "min")?.and_then(|s| s.parse().ok()).unwrap_or(0);
                    let max = attr(e, "max")?.and_then(|s| s.parse().ok()).unwrap_or(min);
                    let tree = subtree(&mut p.rd, &mut Vec::new(), ev.clone())?;
                    let mut w = Writer::new(Vec::new());
                    let mut st = (false, false);
                    for x in tree {
                        w.write_event(shift_event(x, shift, prefix, &mut st)?).map_err(xml_err)?;
                    }
                    p.cols.push((min, max, String::from_utf8_lossy(&w.into_inner()).into_owned()));
                }
                Event::Start(e) if local_of(e.name().0) == "sheetData" => break,
                Event::Empty(e) if local_of(e.name().0) == "sheetData" => {
                    p.finished_rows = true;
                    break;
                }
                Event::Eof => return Err(GraftError("plumb's sheet has no sheet data".into())),
                _ => {}
            }
        }
        p.advance()?;
        Ok(p)
    }

    /// The next row's number (zero-based), if any.
    fn peek(&self) -> Option<u32> {
        self.pending.as_ref().map(|(r, _)| *r)
    }

    fn take(&mut self) -> R<Option<PlumbRow>> {
        let out = self.pending.take();
        self.advance()?;
        Ok(out)
    }

    fn advance(&mut self) -> R<()> {
        if self.finished_rows {
            return Ok(());
        }
        loop {
            self.buf.clear();
            let ev = self.rd.read_event_into(&mut self.buf)?.into_owned();
            match &ev {
                Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "row" => {
                    let r: u32 = attr(e, "r")?.and_then(|s| s.parse().ok()).ok_or_else(|| GraftError("a row of plumb's sheet has no number".into()))?;
                    let mut cells = Cells::default();
                    if matches!(ev, Event::Start(_)) {
                        let mut b = Vec::new();
                        loop {
                            b.clear();
                            let c = self.rd.read_event_into(&mut b)?;
                            match &c {
                                Event::Start(ce) | Event::Empty(ce) if local_of(ce.name().0) == "c" => {
                                    let at = raw_attr(ce, "r")?.and_then(|s| parse_ref(&s)).ok_or_else(|| GraftError("a cell of plumb's sheet has no reference".into()))?;
                                    let start = cells.xml.len();
                                    let mut st = (false, false);
                                    let (shift, prefix) = (self.shift, self.prefix.clone());
                                    copy_element(&mut self.rd, c, &mut cells.xml, &mut |x| shift_event(x, shift, &prefix, &mut st))?;
                                    cells.at.push((at.1, start, cells.xml.len()));
                                }
                                Event::End(_) => break,
                                Event::Eof => return Err(GraftError("plumb's sheet ends early".into())),
                                _ => {}
                            }
                        }
                    }
                    self.pending = Some((r - 1, cells));
                    return Ok(());
                }
                Event::End(e) if local_of(e.name().0) == "sheetData" => {
                    self.finished_rows = true;
                    return Ok(());
                }
                Event::Eof => return Err(GraftError("plumb's sheet ends early".into())),
                _ => {}
            }
        }
    }

    /// After the rows: plumb's links (reference, element) and its notes' drawing.
    fn tail(&mut self) -> R<()> {
        while !self.finished_rows || self.pending.is_some() {
            self.take()?;
        }
        loop {
            self.buf.clear();
            let ev = self.rd.read_event_into(&mut self.buf)?.into_owned();
            match &ev {
                Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "hyperlink" => {
                    let r = attr(e, "ref")?.unwrap_or_default();
                    let ne = restart(e, &self.prefix, &[], &[])?;
                    let mut w = Writer::new(Vec::new());
                    w.write_event(Event::Empty(ne)).map_err(xml_err)?;
                    self.hyperlinks.push((r, String::from_utf8_lossy(&w.into_inner()).into_owned()));
                }
                Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "legacyDrawing" => {
                    self.legacy_drawing = attr(e, "id")?;
                }
                Event::Eof => return Ok(()),
                _ => {}
            }
        }
    }
}

// ---------------------------------------------------------------- source sheets

/// What plumb adds to one source sheet beyond its cells.
struct SheetAdds {
    /// The relationship id of plumb's notes drawing in the input sheet's
    /// relationships, when the notes are added.
    legacy_rid: Option<String>,
    /// The cells plumb writes.
    extent: Option<CellRange>,
}

/// How a relationship id is written on an element under this root: with
/// the prefix the root declares for relationships (`r:id=`), or declaring
/// one on the element itself.
fn rel_id_attr(root: &BytesStart) -> R<String> {
    for a in root.attributes() {
        let a = a?;
        if let Some(p) = a.key.0.strip_prefix("xmlns:") {
            if a.value == REL_NS {
                return Ok(format!("{p}:id="));
            }
        }
    }
    Ok(format!("xmlns:pr=\"{REL_NS}\" pr:id="))
}

/// The element prefix of a part's root (`x:` for `<x:worksheet>`).
fn root_prefix<B: std::io::BufRead>(src: B) -> R<String> {
    let mut rd = Reader::from_reader(src);
    let mut buf = Vec::new();
    loop {
        buf.clear();
        match rd.read_event_into(&mut buf)? {
            Event::Start(e) | Event::Empty(e) => return Ok(prefix_of(e.name().0)),
            Event::Eof => return Ok(String::new()),
            _ => {}
        }
    }
}

/// Elements that follow `hyperlinks` in a worksheet (§18.3.1.99).
const AFTER_HYPERLINKS: [&str; 19] = [
    "printOptions", "pageMargins", "pageSetup", "headerFooter", "rowBreaks", "colBreaks", "customProperties", "cellWatches", "ignoredErrors", "smartTags", "drawing", "legacyDrawing", "legacyDrawingHF", "picture", "oleObjects", "controls", "webPublishItems", "tableParts", "extLst",
];
/// Elements that follow `legacyDrawing`.
const AFTER_LEGACY: [&str; 6] = ["legacyDrawingHF", "picture", "oleObjects", "controls", "webPublishItems", "tableParts"];
/// Elements that follow `cols` (the sheet data always does).
const AFTER_COLS: [&str; 1] = ["sheetData"];

/// Streams one source sheet with plumb's cells merged into it; says
/// whether plumb's notes drawing was referenced from it.
fn merge_sheet<B1: std::io::BufRead, B2: std::io::BufRead, W: Write>(input: B1, plumb: &mut PlumbRows<B2>, out: W, adds: &SheetAdds) -> R<bool> {
    let mut rd = Reader::from_reader(input);
    let mut w = Writer::new(out);
    let mut buf = Vec::new();
    let mut prefix = String::new();
    let mut depth = 0usize;
    let mut in_data = false;
    let mut last_row: Option<u32> = None;
    let mut cols_done = false;
    let mut links_done = false;
    let mut legacy_done = adds.legacy_rid.is_none();
    let mut own_links: HashSet<String> = HashSet::new();
    let mut notes_added = false;
    let mut rel_attr = String::new();
    loop {
        buf.clear();
        let ev = rd.read_event_into(&mut buf)?;
        match ev {
            Event::Eof => break,
            Event::Start(e) | Event::Empty(e) if depth == 0 => {
                prefix = prefix_of(e.name().0);
                rel_attr = rel_id_attr(&e)?;
                depth += 1;
                w.write_event(Event::Start(e)).map_err(xml_err)?;
            }
            Event::Start(ref e) | Event::Empty(ref e) if depth == 1 => {
                let l = local_of(e.name().0).to_string();
                let empty = matches!(ev, Event::Empty(_));
                // Insertions due before this element.
                if !cols_done && (l == "cols" || AFTER_COLS.contains(&l.as_str())) {
                    cols_done = true;
                    if l == "cols" {
                        let own = if empty { Vec::new() } else { own_cols(&mut rd)? };
                        write_cols(&mut w, &prefix, own, &plumb.cols)?;
                        continue;
                    }
                    write_cols(&mut w, &prefix, Vec::new(), &plumb.cols)?;
                }
                if l == "dimension" {
                    let own = attr(e, "ref")?;
                    let new_ref = union_ref(own.as_deref(), adds.extent);
                    let ne = restart(e, "", &[("ref", new_ref)], &[])?;
                    if empty {
                        w.write_event(Event::Empty(ne)).map_err(xml_err)?;
                    } else {
                        w.write_event(Event::Start(ne)).map_err(xml_err)?;
                        depth += 1;
                    }
                    continue;
                }
                if l == "sheetData" {
                    w.write_event(Event::Start(restart(e, "", &[], &[])?)).map_err(xml_err)?;
                    if empty {
                        flush_rows(&mut w, plumb, &prefix, None)?;
                        w.write_event(Event::End(BytesEnd::new(format!("{prefix}sheetData")))).map_err(xml_err)?;
                        plumb.tail()?;
                    } else {
                        in_data = true;
                        depth += 1;
                    }
                    continue;
                }
                if !links_done && (l == "hyperlinks" || AFTER_HYPERLINKS.contains(&l.as_str())) {
                    links_done = true;
                    if l == "hyperlinks" {
                        // The user's links stay; plumb's go after them, none on a cell that has one.
                        let mut own = subtree(&mut rd, &mut Vec::new(), ev.clone().into_owned())?;
                        for x in &own {
                            if let Event::Start(h) | Event::Empty(h) = x {
                                if local_of(h.name().0) == "hyperlink" {
                                    own_links.insert(attr(h, "ref")?.unwrap_or_default());
                                }
                            }
                        }
                        let end = if empty {
                            let Some(Event::Empty(h)) = own.pop() else { return Err(GraftError("unexpected XML event".into())) };
                            own.push(Event::Start(h));
                            Event::End(BytesEnd::new(format!("{prefix}hyperlinks")))
                        } else {
                            own.pop().ok_or_else(|| GraftError("unexpected XML event".into()))?
                        };
                        for x in own {
                            w.write_event(x).map_err(xml_err)?;
                        }
                        write_links(&mut w, &plumb.hyperlinks, &own_links)?;
                        w.write_event(end).map_err(xml_err)?;
                        continue;
                    }
                    write_links_element(&mut w, &prefix, &plumb.hyperlinks)?;
                }
                if l == "legacyDrawing" {
                    // The sheet has notes or controls of its own: plumb's notes are not added.
                    legacy_done = true;
                }
                if !legacy_done && AFTER_LEGACY.contains(&l.as_str()) {
                    legacy_done = true;
                    notes_added |= write_legacy(&mut w, &prefix, &rel_attr, adds)?;
                }
                if !empty {
                    depth += 1;
                }
                w.write_event(ev.into_owned()).map_err(xml_err)?;
            }
            Event::Start(ref e) | Event::Empty(ref e) if in_data && depth == 2 && local_of(e.name().0) == "row" => {
                let r = match attr(e, "r")?.and_then(|s| s.parse::<u32>().ok()) {
                    Some(n) if n > 0 => n - 1,
                    _ => last_row.map(|x| x + 1).unwrap_or(0),
                };
                last_row = Some(r);
                flush_rows(&mut w, plumb, &prefix, Some(r))?;
                let empty = matches!(ev, Event::Empty(_));
                if plumb.peek() == Some(r) {
                    let (_, cells) = plumb.take()?.unwrap_or_default();
                    let ne = restart(e, "", &[("r", (r + 1).to_string())], &["spans"])?;
                    w.write_event(Event::Start(ne)).map_err(xml_err)?;
                    let own = if empty { Cells::default() } else { own_cells(&mut rd, r)? };
                    write_merged_cells(&mut w, &own, &cells)?;
                    w.write_event(Event::End(BytesEnd::new(format!("{prefix}row")))).map_err(xml_err)?;
                } else {
                    let ne = if attr(e, "r")?.is_none() { restart(e, "", &[("r", (r + 1).to_string())], &[])? } else { e.clone().into_owned() };
                    if empty {
                        w.write_event(Event::Empty(ne)).map_err(xml_err)?;
                    } else {
                        w.write_event(Event::Start(ne)).map_err(xml_err)?;
                        depth += 1;
                    }
                }
            }
            Event::End(ref e) => {
                if in_data && depth == 2 && local_of(e.name().0) == "sheetData" {
                    flush_rows(&mut w, plumb, &prefix, None)?;
                    in_data = false;
                    plumb.tail()?;
                }
                if depth == 1 {
                    // The end of the worksheet: what is still due goes here.
                    if !links_done {
                        write_links_element(&mut w, &prefix, &plumb.hyperlinks)?;
                    }
                    if !legacy_done {
                        notes_added |= write_legacy(&mut w, &prefix, &rel_attr, adds)?;
                    }
                }
                depth -= 1;
                w.write_event(ev.into_owned()).map_err(xml_err)?;
            }
            Event::Start(_) => {
                depth += 1;
                w.write_event(ev.into_owned()).map_err(xml_err)?;
            }
            other => w.write_event(other).map_err(xml_err)?,
        }
    }
    Ok(notes_added)
}

fn write_legacy<W: Write>(w: &mut XmlOut<W>, prefix: &str, rel_attr: &str, adds: &SheetAdds) -> R<bool> {
    let Some(rid) = &adds.legacy_rid else { return Ok(false) };
    let s = format!("<{prefix}legacyDrawing {rel_attr}\"{}\"/>", esc(rid));
    w.get_mut().write_all(s.as_bytes()).map_err(xml_err)?;
    Ok(true)
}

/// Plumb's links, except on cells that have a link of their own.
fn write_links<W: Write>(w: &mut XmlOut<W>, links: &[(String, String)], own: &HashSet<String>) -> R<()> {
    for (r, x) in links {
        if !own.contains(r) {
            w.get_mut().write_all(x.as_bytes()).map_err(xml_err)?;
        }
    }
    Ok(())
}

/// Plumb's links in a `hyperlinks` element of their own, for a sheet that has none.
fn write_links_element<W: Write>(w: &mut XmlOut<W>, prefix: &str, links: &[(String, String)]) -> R<()> {
    if links.is_empty() {
        return Ok(());
    }
    write_raw(w, &format!("<{prefix}hyperlinks>"))?;
    write_links(w, links, &HashSet::new())?;
    write_raw(w, &format!("</{prefix}hyperlinks>"))
}

/// The input's column elements (min, max, XML), read up to `</cols>`.
fn own_cols<B: std::io::BufRead>(rd: &mut Reader<B>) -> R<Vec<(u32, u32, String)>> {
    let mut out = Vec::new();
    loop {
        let mut b = Vec::new();
        let ev = rd.read_event_into(&mut b)?.into_owned();
        match &ev {
            Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "col" => {
                let min = attr(e, "min")?.and_then(|s| s.parse().ok()).unwrap_or(0);
                let max = attr(e, "max")?.and_then(|s| s.parse().ok()).unwrap_or(min);
                let tree = subtree(rd, &mut Vec::new(), ev.clone())?;
                out.push((min, max, events_to_string(&tree)?));
            }
            Event::End(_) => return Ok(out),
            Event::Eof => return Err(GraftError("a sheet's columns end early".into())),
            _ => {}
        }
    }
}

/// The input's columns with plumb's added where the input sets none, in order.
fn write_cols<W: Write>(w: &mut XmlOut<W>, prefix: &str, own: Vec<(u32, u32, String)>, plumb: &[(u32, u32, String)]) -> R<()> {
    let mut all = own.clone();
    for (min, max, x) in plumb {
        if !own.iter().any(|(a, b, _)| a <= max && min <= b) {
            all.push((*min, *max, x.clone()));
        }
    }
    if all.is_empty() {
        return Ok(());
    }
    all.sort_by_key(|c| c.0);
    let mut s = format!("<{prefix}cols>");
    for (_, _, x) in all {
        s.push_str(&x);
    }
    s.push_str(&format!("</{prefix}cols>"));
    w.get_mut().write_all(s.as_bytes()).map_err(xml_err)
}

/// Plumb's rows before `until` (all when `None`), written as rows of their own.
fn flush_rows<B: std::io::BufRead, W: Write>(w: &mut XmlOut<W>, plumb: &mut PlumbRows<B>, prefix: &str, until: Option<u32>) -> R<()> {
    while let Some(r) = plumb.peek() {
        if until.is_some_and(|u| r >= u) {
            break;
        }
        let (r, cells) = plumb.take()?.unwrap_or_default();
        w.get_mut().write_all(format!("<{prefix}row r=\"{}\">", r + 1).as_bytes()).map_err(xml_err)?;
        w.get_mut().write_all(&cells.xml).map_err(xml_err)?;
        w.get_mut().write_all(format!("</{prefix}row>").as_bytes()).map_err(xml_err)?;
    }
    Ok(())
}

/// The input's cells of one row, each with its reference made explicit,
/// read up to `</row>`; anything else in the row (extensions) is kept
/// after the cells, as column `u32::MAX`.
fn own_cells<B: std::io::BufRead>(rd: &mut Reader<B>, row: u32) -> R<Cells> {
    let mut out = Cells::default();
    let mut last: Option<u32> = None;
    let mut b = Vec::new();
    loop {
        b.clear();
        let ev = rd.read_event_into(&mut b)?;
        match &ev {
            Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "c" => {
                let found = raw_attr(e, "r")?.and_then(|s| parse_ref(&s));
                let col = match found {
                    Some((_, c)) => c,
                    None => last.map(|x| x + 1).unwrap_or(0),
                };
                last = Some(col);
                let start = out.xml.len();
                let first = if found.is_none() {
                    let ne = restart(e, "", &[("r", a1(row, col))], &[])?;
                    if matches!(ev, Event::Empty(_)) { Event::Empty(ne) } else { Event::Start(ne) }
                } else {
                    ev.clone()
                };
                copy_element(rd, first, &mut out.xml, &mut |x| Ok(x))?;
                out.at.push((col, start, out.xml.len()));
            }
            Event::End(_) => return Ok(out),
            Event::Eof => return Err(GraftError("a row ends early".into())),
            Event::Start(_) | Event::Empty(_) => {
                let start = out.xml.len();
                copy_element(rd, ev.clone(), &mut out.xml, &mut |x| Ok(x))?;
                out.at.push((u32::MAX, start, out.xml.len()));
            }
            _ => {}
        }
    }
}

/// One row's cells: the input's, with plumb's replacing the same column and
/// inserted in column order (both lists are in column order, as the format
/// requires, §18.3.1.4).
fn write_merged_cells<W: Write>(w: &mut XmlOut<W>, own: &Cells, plumb: &Cells) -> R<()> {
    let out = w.get_mut();
    let (mut i, mut j) = (0, 0);
    while i < own.at.len() || j < plumb.at.len() {
        let oc = own.at.get(i).map(|x| x.0);
        let pc = plumb.at.get(j).map(|x| x.0);
        let take_plumb = match (oc, pc) {
            (Some(o), Some(p)) => p <= o,
            (None, Some(_)) => true,
            _ => false,
        };
        if take_plumb {
            let (c, s, e) = plumb.at[j];
            out.write_all(&plumb.xml[s..e]).map_err(xml_err)?;
            if oc == Some(c) {
                i += 1;
            }
            j += 1;
        } else {
            let (_, s, e) = own.at[i];
            out.write_all(&own.xml[s..e]).map_err(xml_err)?;
            i += 1;
        }
    }
    Ok(())
}

/// The input's used range widened to hold plumb's cells.
fn union_ref(own: Option<&str>, extent: Option<CellRange>) -> String {
    let parse = |s: &str| -> Option<CellRange> {
        let mut it = s.split(':');
        let a = parse_ref(it.next()?.trim())?;
        let b = it.next().and_then(|x| parse_ref(x.trim())).unwrap_or(a);
        Some(CellRange::enclosing(Some(CellRange::enclosing(None, a.0, a.1)), b.0, b.1))
    };
    let u = match (own.and_then(parse), extent) {
        (Some(a), Some(b)) => CellRange::enclosing(Some(CellRange::enclosing(Some(a), b.first_row, b.first_col)), b.last_row, b.last_col),
        (Some(a), None) | (None, Some(a)) => a,
        (None, None) => return own.unwrap_or("A1").to_string(),
    };
    if u.rows() == 1 && u.cols() == 1 {
        a1(u.first_row, u.first_col)
    } else {
        u.to_string()
    }
}

// ---------------------------------------------------------------- the graft

/// A source sheet that receives plumb's cells: its part in the input and in
/// plumb's package, and, when plumb's notes are added to it, their
/// relationships in plumb's package and the sheet's own.
struct Touched {
    apart: String,
    ppart: String,
    notes: Option<(Vec<Rel>, Vec<Rel>)>,
}

/// What the writer knows of one source sheet's additions.
pub struct SourceAdds {
    /// The sheet's name in the input (and in plumb's package).
    pub name: String,
    /// Whether plumb adds anything to it.
    pub touched: bool,
    /// The cells plumb writes there.
    pub extent: Option<CellRange>,
}

/// Builds the output at `out` from the input's package and plumb's
/// rendering of its own part (`plumb`: the source sheets with only the
/// overlay, then the result sheets).
pub fn graft(input: &Path, plumb: &Path, out: &Path, zip_level: u8, sources: &[SourceAdds]) -> R<Grafted> {
    let mut a = Package::open(BufReader::new(File::open(input)?))?;
    let mut p = Package::open(BufReader::new(File::open(plumb)?))?;
    let ab = read_book(&mut a)?;
    let pb = read_book(&mut p)?;
    let a_types = ContentTypes::parse(&a.text("[Content_Types].xml")?.ok_or_else(|| GraftError("the package has no content types".into()))?)?;
    let p_types = ContentTypes::parse(&p.text("[Content_Types].xml")?.ok_or_else(|| GraftError("plumb's package has no content types".into()))?)?;
    let mut grafted = Grafted::default();

    // Styles and shared strings.
    let a_styles_part = ab.rels.iter().find(|r| r.kind == T_STYLES).map(|r| resolve(&ab.part, &r.target));
    let p_styles_part = pb.rels.iter().find(|r| r.kind == T_STYLES).map(|r| resolve(&pb.part, &r.target)).ok_or_else(|| GraftError("plumb's package has no styles".into()))?;
    let p_styles = p.text(&p_styles_part)?.unwrap_or_default();
    let a_styles = match &a_styles_part {
        Some(s) => a.text(s)?,
        None => None,
    };
    let styles = match &a_styles {
        Some(x) => merge_styles(x, &p_styles)?,
        None => MergedStyles { xml: p_styles.clone(), xf_offset: 0, dxf_offset: 0 },
    };
    let a_sst_part = ab.rels.iter().find(|r| r.kind == T_SST).map(|r| resolve(&ab.part, &r.target));
    let p_sst_part = pb.rels.iter().find(|r| r.kind == T_SST).map(|r| resolve(&pb.part, &r.target));
    let (sst, sst_offset) = match &p_sst_part {
        Some(pp) => {
            let px = p.text(pp)?.unwrap_or_default();
            let ax = match &a_sst_part {
                Some(s) => a.text(s)?,
                None => None,
            };
            let (x, off) = merge_strings(ax.as_deref(), &px)?;
            (Some(x), off)
        }
        None => (None, 0),
    };
    let shift = Shift { xf: styles.xf_offset, dxf: styles.dxf_offset, sst: sst_offset };

    // Fresh names for plumb's parts: its result sheets and all they reach,
    // and the notes of the source sheets.
    let mut taken: HashSet<String> = a.names.iter().map(|n| n.to_ascii_lowercase()).collect();
    let mut renamed: BTreeMap<String, String> = BTreeMap::new();
    let fresh = |part: &str, taken: &mut HashSet<String>| -> String {
        let dir = folder(part);
        let file = &part[dir.len() + usize::from(!dir.is_empty())..];
        if taken.insert(part.to_ascii_lowercase()) {
            return part.to_string();
        }
        let mut k = 0;
        loop {
            let cand = if k == 0 { format!("{dir}/plumb-{file}") } else { format!("{dir}/plumb{k}-{file}") };
            if taken.insert(cand.to_ascii_lowercase()) {
                return cand;
            }
            k += 1;
        }
    };
    let n_source = sources.len();
    if pb.sheets.len() < n_source {
        return Err(GraftError("plumb's package lacks a source sheet".into()));
    }
    let mut result_parts: Vec<(String, String)> = Vec::new(); // (name, new part)
    let mut queue: Vec<String> = Vec::new();
    for (name, _, part) in pb.sheets.iter().skip(n_source) {
        let part = part.clone().ok_or_else(|| GraftError(format!("plumb's sheet {name} has no part")))?;
        if ab.sheets.iter().any(|(n, _, _)| n.eq_ignore_ascii_case(name)) {
            return Err(GraftError(format!("the input already has a sheet named {name}")));
        }
        let new = fresh(&part, &mut taken);
        renamed.insert(part.clone(), new.clone());
        result_parts.push((name.clone(), new));
        queue.push(part);
    }
    // The source sheets that receive plumb's cells, and their notes
    // (comments and their drawing) where the sheet has none of its own.
    let mut touched: HashMap<usize, Touched> = HashMap::new();
    for (i, s) in sources.iter().enumerate() {
        if !s.touched {
            continue;
        }
        let ppart = pb.sheets[i].2.clone().ok_or_else(|| GraftError("plumb's source sheet has no part".into()))?;
        let apart = ab.sheets.iter().find(|(n, _, _)| *n == s.name).and_then(|x| x.2.clone()).ok_or_else(|| GraftError(format!("the sheet {} has no part", s.name)))?;
        let notes: Vec<Rel> = p.rels(&ppart)?.into_iter().filter(|r| r.kind == T_COMMENTS || r.kind == T_VML).collect();
        let mut t = Touched { apart, ppart, notes: None };
        if !notes.is_empty() {
            let own = a.rels(&t.apart)?;
            if own.iter().any(|r| r.kind == T_VML || r.kind == T_COMMENTS) {
                grafted.left_out.push(format!("the notes holding the request texts on the sheet {} (it has notes or controls of its own; the About sheet lists the texts)", s.name));
            } else {
                for r in &notes {
                    let target = resolve(&t.ppart, &r.target);
                    if !renamed.contains_key(&target) {
                        let new = fresh(&target, &mut taken);
                        renamed.insert(target.clone(), new);
                        queue.push(target);
                    }
                }
                t.notes = Some((notes, own));
            }
        }
        touched.insert(i, t);
    }
    // Everything the renamed parts reach.
    let mut seen: HashSet<String> = HashSet::new();
    while let Some(part) = queue.pop() {
        if !seen.insert(part.clone()) {
            continue;
        }
        for r in p.rels(&part)? {
            if r.external {
                continue;
            }
            let t = resolve(&part, &r.target);
            if !renamed.contains_key(&t) {
                let new = fresh(&t, &mut taken);
                renamed.insert(t.clone(), new);
            }
            queue.push(t);
        }
    }

    let file = File::create(out)?;
    let mut z = ZipWriter::new(std::io::BufWriter::new(file));
    let opts = SimpleFileOptions::default()
        .compression_method(CompressionMethod::Deflated)
        .compression_level(Some(i64::from(zip_level.max(1))))
        .last_modified_time(zip::DateTime::default())
        .large_file(false);
    // Zip64 headers only where a part could pass 4 GiB: some readers refuse
    // them on small parts.
    let big = opts.large_file(std::fs::metadata(input)?.len() > (1 << 27));

    // Parts the input has that plumb replaces or leaves out.
    let mut replaced: HashSet<String> = HashSet::new();
    for x in ["[Content_Types].xml".to_string(), ab.part.clone(), rels_name(&ab.part)] {
        replaced.insert(x.to_ascii_lowercase());
    }
    if let Some(s) = &a_styles_part {
        replaced.insert(s.to_ascii_lowercase());
    }
    if sst.is_some() {
        if let Some(s) = &a_sst_part {
            replaced.insert(s.to_ascii_lowercase());
        }
    }
    let mut dropped: HashSet<String> = HashSet::new();
    for r in &ab.rels {
        if r.kind == T_CALC_CHAIN || r.kind == T_VBA {
            let t = resolve(&ab.part, &r.target);
            dropped.insert(t.to_ascii_lowercase());
            dropped.insert(rels_name(&t).to_ascii_lowercase());
            if r.kind == T_VBA {
                grafted.left_out.push("the workbook's macros (an .xlsx file cannot hold them; the input keeps them)".into());
            }
        }
    }
    let touched_parts: HashMap<String, usize> = touched.iter().map(|(i, t)| (t.apart.to_ascii_lowercase(), *i)).collect();
    for t in touched.values().filter(|t| t.notes.is_some()) {
        replaced.insert(rels_name(&t.apart).to_ascii_lowercase());
    }

    // 1. The input's parts, in their order.
    let names = a.names.clone();
    for name in &names {
        let lower = name.to_ascii_lowercase();
        if replaced.contains(&lower) || dropped.contains(&lower) {
            continue;
        }
        if let Some(&i) = touched_parts.get(&lower) {
            let t = &touched[&i];
            let legacy_rid = t.notes.as_ref().map(|_| "rIdPlumbNotes".to_string());
            let adds = SheetAdds { legacy_rid, extent: sources[i].extent };
            z.start_file(name.as_str(), big)?;
            let prefix = root_prefix(BufReader::new(a.zip.by_name(name)?))?;
            let pname = p.find(&t.ppart).ok_or_else(|| GraftError("plumb's sheet is missing".into()))?.to_string();
            let notes_added = {
                let pf = p.zip.by_name(&pname)?;
                let mut prow = PlumbRows::new(BufReader::with_capacity(1 << 16, pf), shift, &prefix)?;
                let af = a.zip.by_name(name)?;
                merge_sheet(BufReader::with_capacity(1 << 16, af), &mut prow, &mut z, &adds)?
            };
            if let Some((notes, own)) = &t.notes {
                let mut rels = own.clone();
                if notes_added {
                    for r in notes {
                        let target = resolve(&t.ppart, &r.target);
                        let id = if r.kind == T_VML { "rIdPlumbNotes".to_string() } else { "rIdPlumbComments".to_string() };
                        rels.push(Rel { id, kind: r.kind.clone(), target: format!("/{}", renamed[&target]), external: false });
                    }
                }
                z.start_file(rels_name(name), opts)?;
                z.write_all(write_rels(&rels).as_bytes())?;
            }
            continue;
        }
        let f = a.zip.by_name(name)?;
        z.raw_copy_file(f)?;
    }

    // 2. Plumb's parts under their new names.
    for (old, new) in &renamed {
        let is_result_sheet = result_parts.iter().any(|(_, n)| n == new);
        let is_vml = old.to_ascii_lowercase().ends_with(".vml");
        z.start_file(new.as_str(), if is_result_sheet { big } else { opts })?;
        if is_result_sheet {
            let pname = p.find(old).ok_or_else(|| GraftError(format!("plumb's part {old} is missing")))?.to_string();
            let mut f = p.zip.by_name(&pname)?;
            copy_result_sheet(&mut f, &mut z, shift)?;
        } else if is_vml {
            let text = String::from_utf8_lossy(&p.bytes(old)?).into_owned();
            let k = renamed.keys().position(|x| x == old).unwrap_or(0) as u32;
            z.write_all(renumber_vml(&text, 900 + k).as_bytes())?;
        } else {
            let bytes = p.bytes(old)?;
            z.write_all(&bytes)?;
        }
        let rels = p.rels(old)?;
        if !rels.is_empty() {
            let rels: Vec<Rel> = rels
                .into_iter()
                .map(|r| {
                    if r.external {
                        r
                    } else {
                        let t = resolve(old, &r.target);
                        Rel { target: format!("/{}", renamed.get(&t).cloned().unwrap_or(t)), ..r }
                    }
                })
                .collect();
            z.start_file(rels_name(new), opts)?;
            z.write_all(write_rels(&rels).as_bytes())?;
        }
    }

    // 3. Styles, shared strings, the workbook and its relationships, the content types.
    let styles_part = a_styles_part.clone().unwrap_or_else(|| "xl/styles.xml".into());
    z.start_file(styles_part.as_str(), opts)?;
    z.write_all(styles.xml.as_bytes())?;
    let mut wb_rels: Vec<Rel> = ab.rels.iter().filter(|r| r.kind != T_CALC_CHAIN && r.kind != T_VBA).cloned().collect();
    let mut types = a_types;
    let dropped_types: Vec<String> = dropped.iter().cloned().collect();
    types.overrides.retain(|(p, _)| !dropped_types.contains(&p.to_ascii_lowercase()));
    for (_, t) in types.overrides.iter_mut() {
        if t == CT_MACRO_MAIN {
            *t = CT_MAIN.into();
        }
    }
    let rel_id = |k: usize| format!("rIdPlumb{k}");
    if a_styles_part.is_none() {
        wb_rels.push(Rel { id: rel_id(0), kind: T_STYLES.into(), target: format!("/{styles_part}"), external: false });
        if let Some(t) = p_types.of(&p_styles_part) {
            types.overrides.push((styles_part.clone(), t.into()));
        }
    }
    if let Some(x) = &sst {
        let part = a_sst_part.clone().unwrap_or_else(|| if taken.contains("xl/sharedstrings.xml") { "xl/plumb-sharedStrings.xml".into() } else { "xl/sharedStrings.xml".into() });
        z.start_file(part.as_str(), big)?;
        z.write_all(x.as_bytes())?;
        if a_sst_part.is_none() {
            wb_rels.push(Rel { id: rel_id(1), kind: T_SST.into(), target: format!("/{part}"), external: false });
            types.overrides.push((part, CT_SST.into()));
        }
    }
    let mut new_sheets = String::new();
    for (k, (name, part)) in result_parts.iter().enumerate() {
        let id = rel_id(10 + k);
        wb_rels.push(Rel { id: id.clone(), kind: T_WORKSHEET.into(), target: format!("/{part}"), external: false });
        new_sheets.push_str(&format!("<{{P}}sheet name=\"{}\" sheetId=\"{}\" {{RID}}\"{id}\"/>", esc(name), ab.max_sheet_id + 1 + k as u32));
    }
    for (old, new) in &renamed {
        if let Some(t) = p_types.of(old) {
            types.overrides.push((new.clone(), t.to_string()));
        }
    }
    // Plumb's defined names (print titles of the result sheets), their sheet positions moved past the input's.
    let defined = plumb_defined_names(&pb.xml, n_source, ab.sheets.len())?;
    let wb_xml = rewrite_workbook(&ab.xml, &new_sheets, &defined)?;
    z.start_file(ab.part.as_str(), opts)?;
    z.write_all(wb_xml.as_bytes())?;
    z.start_file(rels_name(&ab.part), opts)?;
    z.write_all(write_rels(&wb_rels).as_bytes())?;
    z.start_file("[Content_Types].xml", opts)?;
    z.write_all(types.write().as_bytes())?;
    let inner = z.finish()?;
    inner.into_inner().map_err(|e| GraftError(format!("the output could not be flushed ({})", e.error())))?.sync_all()?;
    Ok(grafted)
}

/// Notes drawings number their shapes from a block of 1024 per drawing
/// (`o:idmap`, shape ids `_x0000_s{block·1024+n}`); plumb's drawings get
/// blocks the input's cannot use, so no two shapes share an id.
fn renumber_vml(text: &str, block: u32) -> String {
    let mut out = String::with_capacity(text.len());
    let mut rest = text;
    while let Some(i) = rest.find("_x0000_s") {
        out.push_str(&rest[..i + 8]);
        rest = &rest[i + 8..];
        let digits: String = rest.chars().take_while(|c| c.is_ascii_digit()).collect();
        if let Ok(n) = digits.parse::<u32>() {
            out.push_str(&(block * 1024 + n % 1024).to_string());
            rest = &rest[digits.len()..];
        }
    }
    out.push_str(rest);
    let mut s = out;
    if let Some(i) = s.find("data=\"") {
        let j = s[i + 6..].find('"').map(|j| i + 6 + j).unwrap_or(i + 6);
        s.replace_range(i + 6..j, &block.to_string());
    }
    s
}

/// Plumb's defined names as XML, sheet-local ones moved to the result
/// sheets' positions in the output.
fn plumb_defined_names(xml: &str, n_source: usize, n_input: usize) -> R<String> {
    let mut rd = Reader::from_reader(xml.as_bytes());
    let mut buf = Vec::new();
    let mut out = String::new();
    loop {
        buf.clear();
        let ev = rd.read_event_into(&mut buf)?.into_owned();
        match &ev {
            Event::Start(e) | Event::Empty(e) if local_of(e.name().0) == "definedName" => {
                let mut set = Vec::new();
                if let Some(k) = attr(e, "localSheetId")?.and_then(|s| s.parse::<usize>().ok()) {
                    if k < n_source {
                        continue;
                    }
                    set.push(("localSheetId", (n_input + k - n_source).to_string()));
                }
                let ne = restart(e, "", &set, &[])?;
                let mut tree = subtree(&mut rd, &mut Vec::new(), ev.clone())?;
                tree[0] = if matches!(tree[0], Event::Empty(_)) { Event::Empty(ne) } else { Event::Start(ne) };
                out.push_str(&events_to_string(&tree)?);
            }
            Event::Eof => break,
            _ => {}
        }
    }
    Ok(out)
}

/// The input's workbook part with plumb's sheets and defined names added
/// and calculation on load asked for (the calculators' formulas).
fn rewrite_workbook(xml: &str, new_sheets: &str, defined: &str) -> R<String> {
    // Elements after definedNames and calcPr (§18.2.27).
    const AFTER_NAMES: [&str; 11] = ["calcPr", "oleSize", "customWorkbookViews", "pivotCaches", "smartTagPr", "smartTagTypes", "webPublishing", "fileRecoveryPr", "webPublishObjects", "extLst", "/"];
    let mut rd = Reader::from_reader(xml.as_bytes());
    let mut w = Writer::new(Vec::new());
    let mut buf = Vec::new();
    let mut depth = 0usize;
    let mut prefix = String::new();
    let mut names_done = defined.is_empty();
    let mut calc_done = false;
    let mut sheets_xml = String::new();
    loop {
        buf.clear();
        let ev = rd.read_event_into(&mut buf)?;
        match ev {
            Event::Eof => break,
            Event::Start(ref e) | Event::Empty(ref e) => {
                let l = local_of(e.name().0).to_string();
                let empty = matches!(ev, Event::Empty(_));
                if depth == 0 {
                    prefix = prefix_of(e.name().0);
                    sheets_xml = new_sheets.replace("{P}", &prefix).replace("{RID}", &rel_id_attr(e)?);
                } else if depth == 1 {
                    if !names_done && AFTER_NAMES.contains(&l.as_str()) {
                        names_done = true;
                        write_raw(&mut w, &format!("<{prefix}definedNames>{}</{prefix}definedNames>", with_prefix(defined, &prefix)?))?;
                    }
                    if l == "calcPr" {
                        calc_done = true;
                        let ne = restart(e, "", &[("fullCalcOnLoad", "1".into())], &[])?;
                        w.write_event(if empty { Event::Empty(ne) } else { Event::Start(ne) }).map_err(xml_err)?;
                        if !empty {
                            depth += 1;
                        }
                        continue;
                    }
                    if !calc_done && AFTER_NAMES[1..].contains(&l.as_str()) {
                        calc_done = true;
                        write_raw(&mut w, &format!("<{prefix}calcPr fullCalcOnLoad=\"1\"/>"))?;
                    }
                    if l == "definedNames" && empty && !names_done {
                        names_done = true;
                        write_raw(&mut w, &format!("<{prefix}definedNames>{}</{prefix}definedNames>", with_prefix(defined, &prefix)?))?;
                        continue;
                    }
                    if l == "sheets" && empty {
                        w.write_event(Event::Start(e.clone().into_owned())).map_err(xml_err)?;
                        write_raw(&mut w, &sheets_xml)?;
                        w.write_event(Event::End(BytesEnd::new(format!("{prefix}sheets")))).map_err(xml_err)?;
                        continue;
                    }
                }
                if !empty {
                    depth += 1;
                }
                w.write_event(ev.into_owned()).map_err(xml_err)?;
            }
            Event::End(ref e) => {
                let l = local_of(e.name().0).to_string();
                if depth == 2 && l == "sheets" {
                    write_raw(&mut w, &sheets_xml)?;
                }
                if depth == 2 && l == "definedNames" && !names_done {
                    names_done = true;
                    write_raw(&mut w, &with_prefix(defined, &prefix)?)?;
                }
                if depth == 1 {
                    if !names_done {
                        names_done = true;
                        write_raw(&mut w, &format!("<{prefix}definedNames>{}</{prefix}definedNames>", with_prefix(defined, &prefix)?))?;
                    }
                    if !calc_done {
                        calc_done = true;
                        write_raw(&mut w, &format!("<{prefix}calcPr fullCalcOnLoad=\"1\"/>"))?;
                    }
                }
                depth -= 1;
                w.write_event(ev.into_owned()).map_err(xml_err)?;
            }
            other => w.write_event(other).map_err(xml_err)?,
        }
    }
    String::from_utf8(w.into_inner()).map_err(|_| GraftError("the workbook part is not UTF-8".into()))
}

fn with_prefix(xml: &str, prefix: &str) -> R<String> {
    if prefix.is_empty() {
        Ok(xml.to_string())
    } else {
        prefixed(xml, prefix)
    }
}

fn write_raw<W: Write>(w: &mut XmlOut<W>, s: &str) -> R<()> {
    w.get_mut().write_all(s.as_bytes()).map_err(xml_err)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn targets_resolve_against_their_part() {
        assert_eq!(resolve("xl/workbook.xml", "worksheets/sheet1.xml"), "xl/worksheets/sheet1.xml");
        assert_eq!(resolve("xl/workbook.xml", "/xl/worksheets/sheet1.xml"), "xl/worksheets/sheet1.xml");
        assert_eq!(resolve("xl/drawings/drawing1.xml", "../charts/chart1.xml"), "xl/charts/chart1.xml");
        assert_eq!(resolve("", "xl/workbook.xml"), "xl/workbook.xml");
        assert_eq!(rels_name("xl/workbook.xml"), "xl/_rels/workbook.xml.rels");
        assert_eq!(rels_name(""), "_rels/.rels");
    }

    #[test]
    fn references_and_ranges() {
        assert_eq!(parse_ref("B3"), Some((2, 1)));
        assert_eq!(parse_ref("AA10"), Some((9, 26)));
        assert_eq!(a1(9, 26), "AA10");
        assert_eq!(union_ref(Some("A1:C5"), Some(CellRange { first_row: 0, first_col: 4, last_row: 9, last_col: 5 })), "A1:F10");
        assert_eq!(union_ref(Some("A1"), None), "A1");
        assert_eq!(union_ref(None, Some(CellRange { first_row: 1, first_col: 1, last_row: 1, last_col: 1 })), "B2");
    }

    #[test]
    fn styles_append_with_indices_moved_past_the_inputs() {
        let input = r#"<styleSheet xmlns="m"><numFmts count="1"><numFmt numFmtId="164" formatCode="0.0%"/></numFmts><fonts count="1"><font><b/></font></fonts><fills count="2"><fill/><fill/></fills><borders count="1"><border/></borders><cellXfs count="2"><xf fontId="0"/><xf numFmtId="164" fontId="0"/></cellXfs></styleSheet>"#;
        let plumb = r#"<styleSheet xmlns="m"><numFmts count="1"><numFmt numFmtId="164" formatCode="0.000"/></numFmts><fonts count="2"><font/><font><i/></font></fonts><fills count="1"><fill/></fills><borders count="1"><border/></borders><cellXfs count="2"><xf fontId="0" fillId="0" borderId="0" numFmtId="0" xfId="0"/><xf numFmtId="164" fontId="1" fillId="0" borderId="0" xfId="0"><alignment vertical="top"/></xf></cellXfs></styleSheet>"#;
        let m = merge_styles(input, plumb).expect("merged");
        assert_eq!(m.xf_offset, 2);
        let st = parse_styles(&m.xml).expect("parses");
        assert_eq!(st.fonts.len(), 3);
        assert_eq!(st.fills.len(), 3);
        assert_eq!(st.xfs.len(), 4);
        assert_eq!(st.num_fmts, vec![(164, "0.0%".to_string()), (165, "0.000".to_string())]);
        let last = events_to_string(&st.xfs[3]).expect("text");
        assert!(last.contains("numFmtId=\"165\"") && last.contains("fontId=\"2\"") && last.contains("fillId=\"2\"") && last.contains("borderId=\"1\""), "{last}");
        assert!(m.xml.contains("<cellXfs count=\"4\">"), "{}", m.xml);
    }

    #[test]
    fn cells_merge_into_rows_in_column_order() {
        let input = r#"<worksheet xmlns="m"><dimension ref="A1:B2"/><sheetData><row r="1" spans="1:2"><c r="A1"><v>1</v></c><c r="B1" t="s"><v>0</v></c></row><row r="3"><c><v>5</v></c><c><v>6</v></c></row></sheetData><pageMargins left="1"/></worksheet>"#;
        let plumb = r#"<worksheet><cols><col min="3" max="3" width="12" customWidth="1"/></cols><sheetData><row r="1"><c r="B1" s="1" t="inlineStr"><is><t>done</t></is></c><c r="C1" s="2"><v>9</v></c></row><row r="2"><c r="C2" s="2"><v>8</v></c></row><row r="3"><c r="C3"><v>7</v></c></row></sheetData><hyperlinks><hyperlink ref="B1" location="'Fits'!A2" display="done"/></hyperlinks></worksheet>"#;
        let shift = Shift { xf: 10, dxf: 0, sst: 0 };
        let mut rows = PlumbRows::new(plumb.as_bytes(), shift, "").expect("plumb rows");
        let mut out = Vec::new();
        let adds = SheetAdds { legacy_rid: None, extent: Some(CellRange { first_row: 0, first_col: 1, last_row: 2, last_col: 2 }) };
        merge_sheet(input.as_bytes(), &mut rows, &mut out, &adds).expect("merged");
        let s = String::from_utf8(out).expect("utf8");
        assert_eq!(
            s,
            r#"<worksheet xmlns="m"><dimension ref="A1:C3"/><cols><col min="3" max="3" width="12" customWidth="1"/></cols><sheetData><row r="1"><c r="A1"><v>1</v></c><c r="B1" t="inlineStr" s="11"><is><t>done</t></is></c><c r="C1" s="12"><v>9</v></c></row><row r="2"><c r="C2" s="12"><v>8</v></c></row><row r="3"><c r="A3"><v>5</v></c><c r="B3"><v>6</v></c><c r="C3"><v>7</v></c></row></sheetData><hyperlinks><hyperlink ref="B1" location="'Fits'!A2" display="done"/></hyperlinks><pageMargins left="1"/></worksheet>"#
        );
    }

    #[test]
    fn a_prefixed_sheet_gets_prefixed_additions() {
        let input = r#"<x:worksheet xmlns:x="m"><x:sheetData><x:row r="1"><x:c r="A1"><x:v>1</x:v></x:c></x:row></x:sheetData></x:worksheet>"#;
        let plumb = r#"<worksheet><sheetData><row r="2"><c r="A2"><v>2</v></c></row></sheetData></worksheet>"#;
        let mut rows = PlumbRows::new(plumb.as_bytes(), Shift { xf: 0, dxf: 0, sst: 0 }, "x:").expect("rows");
        let mut out = Vec::new();
        merge_sheet(input.as_bytes(), &mut rows, &mut out, &SheetAdds { legacy_rid: None, extent: None }).expect("merged");
        let s = String::from_utf8(out).expect("utf8");
        assert!(s.contains(r#"<x:row r="2"><x:c r="A2"><x:v>2</x:v></x:c></x:row>"#), "{s}");
    }

    #[test]
    fn workbook_gets_the_result_sheets_and_calculation_on_load() {
        let xml = r#"<workbook xmlns="m" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="Data" sheetId="1" r:id="rId1"/></sheets><calcPr calcId="1"/></workbook>"#;
        let out = rewrite_workbook(xml, "<{P}sheet name=\"Fits\" sheetId=\"2\" {RID}\"rIdPlumb10\"/>", "<definedName name=\"_xlnm.Print_Titles\" localSheetId=\"1\">Fits!$1:$1</definedName>").expect("rewritten");
        assert_eq!(
            out,
            r#"<workbook xmlns="m" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="Data" sheetId="1" r:id="rId1"/><sheet name="Fits" sheetId="2" r:id="rIdPlumb10"/></sheets><definedNames><definedName name="_xlnm.Print_Titles" localSheetId="1">Fits!$1:$1</definedName></definedNames><calcPr calcId="1" fullCalcOnLoad="1"/></workbook>"#
        );
    }
}
