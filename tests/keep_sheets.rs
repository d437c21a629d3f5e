//! The user's sheets, exactly: a workbook with everything a real workbook
//! holds (styles, widths and heights, number and date formats, merged
//! cells, frozen panes, conditional formats, a drop-down list, notes, an
//! image, a chart, defined names, hidden rows and columns, formulas, a
//! filter, print settings, document properties) comes back with every
//! part of the input unchanged and only plumb's additions added.
//!
//! Checked three ways: here, part by part at the level of the package
//! (every part plumb does not touch byte-identical; every cell, style and
//! sheet setting of the input verbatim in the output); by an independent
//! reader (openpyxl, `tests/kept_sheets.py`), comparing every look and
//! setting it reads; and, with PLUMB_RECALC set as in CI, by LibreOffice
//! opening the output and saving it again without complaint.

mod common;

use common::run::{run_to, scratch};
use quick_xml::events::Event;
use quick_xml::Reader;
use rust_xlsxwriter::{
    Chart, ChartType, ConditionalFormatCell, ConditionalFormatCellRule, DataValidation, DocProperties, ExcelDateTime, Format, FormatAlign, FormatBorder, Formula, Image, Note, Workbook,
};
use std::collections::BTreeMap;
use std::io::Read;
use std::path::Path;

/// A 4×4 green PNG (made for this test with Python's zlib and struct).
const PNG: [u8; 73] = [
    0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0x00, 0x00, 0x00, 0x0d, 0x49, 0x48, 0x44, 0x52, 0x00, 0x00, 0x00, 0x04, 0x00, 0x00, 0x00, 0x04, 0x08, 0x02, 0x00, 0x00, 0x00, 0x26, 0x93, 0x09, 0x29, 0x00, 0x00, 0x00,
    0x10, 0x49, 0x44, 0x41, 0x54, 0x78, 0x9c, 0x63, 0xd0, 0x58, 0x60, 0x03, 0x47, 0x0c, 0xc4, 0x71, 0x00, 0xa5, 0x83, 0x10, 0x41, 0xf6, 0x33, 0x48, 0xbd, 0x00, 0x00, 0x00, 0x00, 0x49, 0x45, 0x4e, 0x44, 0xae, 0x42, 0x60, 0x82,
];

/// The rich workbook: a harvest log of an invented allotment scheme.
fn rich_workbook(path: &Path) {
    let mut wb = Workbook::new();
    wb.set_properties(&DocProperties::new().set_title("Allotment harvest log").set_author("Plot committee").set_creation_datetime(&ExcelDateTime::from_ymd(2026, 5, 1).unwrap()));
    let title = Format::new().set_bold().set_font_size(14).set_align(FormatAlign::Center).set_background_color(0xE2EFDA);
    let head = Format::new().set_bold().set_border_bottom(FormatBorder::Medium).set_font_color(0x1F4E78).set_text_wrap();
    let date = Format::new().set_num_format("dd/mm/yyyy");
    let pct = Format::new().set_num_format("0%");
    let kg = Format::new().set_num_format("0.00\" kg\"").set_italic();
    let ws = wb.add_worksheet();
    ws.set_name("Harvest log").unwrap();
    ws.merge_range(0, 0, 0, 5, "Harvest log, spring beds", &title).unwrap();
    ws.set_row_height(0, 28).unwrap();
    for (c, h) in ["Picked on", "Bed", "Water (l)", "Shade", "Yield", "Yield per m²"].iter().enumerate() {
        ws.write_string_with_format(1, c as u16, *h, &head).unwrap();
    }
    ws.set_column_width(0, 13).unwrap();
    ws.set_column_width(1, 9).unwrap();
    ws.set_column_width(2, 10.5).unwrap();
    ws.set_column_width(5, 14).unwrap();
    let beds = ["Plot A", "Plot B", "Plot C"];
    for i in 0..30u32 {
        let r = i + 2;
        let water = 10.0 + f64::from(i % 7) * 1.5;
        let shade = f64::from(i % 5) * 0.1;
        let y = 2.0 + 0.3 * water - 1.5 * shade + f64::from((i * 37) % 11) * 0.07;
        ws.write_number_with_format(r, 0, 46113.0 + f64::from(i), &date).unwrap();
        ws.write_string(r, 1, beds[(i % 3) as usize]).unwrap();
        ws.write_number(r, 2, water).unwrap();
        ws.write_number_with_format(r, 3, shade, &pct).unwrap();
        ws.write_number_with_format(r, 4, (y * 100.0).round() / 100.0, &kg).unwrap();
        ws.write_formula(r, 5, Formula::new(format!("=E{}/4", r + 1)).set_result(format!("{}", (y * 100.0).round() / 400.0))).unwrap();
    }
    ws.set_row_hidden(12).unwrap();
    ws.set_column_hidden(6).unwrap();
    ws.set_freeze_panes(2, 1).unwrap();
    ws.autofilter(1, 0, 31, 5).unwrap();
    let rule = ConditionalFormatCell::new().set_rule(ConditionalFormatCellRule::GreaterThan(5.5)).set_format(Format::new().set_font_color(0x9C0006).set_background_color(0xFFC7CE));
    ws.add_conditional_format(2, 4, 31, 4, &rule).unwrap();
    ws.add_data_validation(2, 1, 31, 1, &DataValidation::new().allow_list_strings(&beds).unwrap()).unwrap();
    ws.insert_note(1, 4, &Note::new("Weighed on the shed scale").set_author("Plot committee")).unwrap();
    ws.insert_image(20, 9, &Image::new_from_buffer(&PNG).unwrap()).unwrap();
    let mut chart = Chart::new(ChartType::Scatter);
    chart.add_series().set_categories("'Harvest log'!$C$3:$C$32").set_values("'Harvest log'!$E$3:$E$32").set_name("Yield");
    ws.insert_chart(3, 9, &chart).unwrap();
    ws.set_landscape();
    ws.set_print_fit_to_pages(1, 0);
    ws.set_header("&CHarvest log");
    ws.write_string(2, 8, "#linear(Yield, \"Water (l)\" + Shade)").unwrap();
    let notes = wb.add_worksheet();
    notes.set_name("Notes Ω").unwrap();
    notes.write_string_with_format(0, 0, "Beds are dug in March.", &Format::new().set_bold()).unwrap();
    notes.write_formula(1, 0, Formula::new("=SUM('Harvest log'!E3:E32)").set_result("0")).unwrap();
    notes.set_tab_color(0x70AD47);
    wb.define_name("Beds", "='Harvest log'!$B$3:$B$32").unwrap();
    wb.define_name("'Notes Ω'!Season", "=2026").unwrap();
    wb.save(path).unwrap();
}

fn parts(path: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut z = zip::ZipArchive::new(std::fs::File::open(path).unwrap()).unwrap();
    let mut out = BTreeMap::new();
    for i in 0..z.len() {
        let mut f = z.by_index(i).unwrap();
        let mut v = Vec::new();
        f.read_to_end(&mut v).unwrap();
        out.insert(f.name().unwrap().to_string(), v);
    }
    out
}

/// The children of an element as (name, XML text), each child as it is in the part.
fn children(xml: &str, parent: &str) -> Vec<(String, String)> {
    let mut rd = Reader::from_str(xml);
    let mut out = Vec::new();
    let mut depth = 0;
    let mut inside = false;
    let mut start = 0usize;
    let mut name = String::new();
    loop {
        let before = rd.buffer_position() as usize;
        match rd.read_event().unwrap() {
            Event::Start(e) => {
                let n = e.local_name().as_ref().to_string();
                if inside && depth == 0 {
                    start = before;
                    name = n.clone();
                }
                if inside {
                    depth += 1;
                }
                if !inside && n == parent {
                    inside = true;
                }
            }
            Event::Empty(e) if inside && depth == 0 => {
                let n = e.local_name().as_ref().to_string();
                out.push((n, xml[before..rd.buffer_position() as usize].to_string()));
            }
            Event::End(e) => {
                let n = e.local_name().as_ref().to_string();
                if inside && depth == 0 && n == parent {
                    inside = false;
                } else if inside {
                    depth -= 1;
                    if depth == 0 {
                        out.push((name.clone(), xml[start..rd.buffer_position() as usize].to_string()));
                    }
                }
            }
            Event::Eof => break,
            _ => {}
        }
    }
    out
}

#[test]
fn a_rich_workbook_keeps_every_part_and_setting() {
    let d = scratch("keep-rich");
    let input = d.join("allotment.xlsx");
    rich_workbook(&input);
    let out = d.join("allotment.fitted.xlsx");
    let s = run_to(&input, &out);
    assert!(s.reports.iter().all(|r| r.status != plumb::report::Status::Error), "{:?}", s.reports.iter().map(|r| &r.messages).collect::<Vec<_>>());
    assert!(!s.problems.iter().any(|p| p.message.contains("values only")), "the sheets were kept: {:?}", s.problems);
    let a = parts(&input);
    let b = parts(&out);
    // Parts plumb rewrites: the package's lists, the styles and strings (plumb's
    // appended), the sheet with the request and its notes' relationships.
    let rewritten = ["[Content_Types].xml", "xl/workbook.xml", "xl/_rels/workbook.xml.rels", "xl/styles.xml", "xl/sharedStrings.xml", "xl/worksheets/sheet1.xml", "xl/worksheets/_rels/sheet1.xml.rels"];
    for (name, bytes) in &a {
        if rewritten.contains(&name.as_str()) {
            continue;
        }
        assert_eq!(b.get(name), Some(bytes), "the part {name} is carried over unchanged");
    }
    // Every child of the input's sheet outside its cells (views, columns,
    // merges, formats, lists, filter, print setup, drawing, notes) is in the
    // output as it was; every cell but the request's is there as it was.
    let sa = String::from_utf8(a["xl/worksheets/sheet1.xml"].clone()).unwrap();
    let sb = String::from_utf8(b["xl/worksheets/sheet1.xml"].clone()).unwrap();
    let mut kept = 0;
    for (name, x) in children(&sa, "worksheet") {
        if ["sheetData", "dimension", "cols"].contains(&name.as_str()) {
            continue;
        }
        assert!(sb.contains(&x), "the sheet's {name} is kept: {x}");
        kept += 1;
    }
    assert!(kept >= 8, "sheet settings compared: {kept}");
    for (_, col) in children(&sa, "cols") {
        assert!(sb.contains(&col), "column setting kept: {col}");
    }
    let mut cells = 0;
    for (_, row) in children(&sa, "sheetData") {
        for (_, c) in children(&row, "row") {
            if c.contains("r=\"I3\"") {
                continue;
            }
            assert!(sb.contains(&c), "cell kept: {c}");
            cells += 1;
        }
    }
    assert!(cells > 150, "cells compared: {cells}");
    // Styles: the input's come first, unchanged, plumb's after them.
    let ya = String::from_utf8(a["xl/styles.xml"].clone()).unwrap();
    let yb = String::from_utf8(b["xl/styles.xml"].clone()).unwrap();
    for section in ["fonts", "fills", "borders", "cellXfs", "dxfs", "numFmts"] {
        let ca = children(&ya, section);
        let cb = children(&yb, section);
        assert!(cb.len() >= ca.len(), "{section}");
        assert_eq!(&cb[..ca.len()], &ca[..], "the input's {section} come first, unchanged");
    }
    // The strings likewise.
    let ta = children(&String::from_utf8(a["xl/sharedStrings.xml"].clone()).unwrap(), "sst");
    let tb = children(&String::from_utf8(b["xl/sharedStrings.xml"].clone()).unwrap(), "sst");
    assert_eq!(&tb[..ta.len()], &ta[..]);
    // The workbook keeps its sheets, names and views, and lists the results after them.
    let wa = String::from_utf8(a["xl/workbook.xml"].clone()).unwrap();
    let wb = String::from_utf8(b["xl/workbook.xml"].clone()).unwrap();
    for (name, x) in children(&wa, "workbook") {
        if ["sheets", "definedNames", "calcPr"].contains(&name.as_str()) {
            continue;
        }
        assert!(wb.contains(&x), "workbook {name} kept");
    }
    for group in ["sheets", "definedNames"] {
        for (_, x) in children(&wa, group) {
            assert!(wb.contains(&x), "kept: {x}");
        }
    }
    let sheets: Vec<String> = children(&wb, "sheets").into_iter().map(|(_, x)| x).collect();
    assert!(sheets[0].contains("Harvest log") && sheets[1].contains("Notes Ω") && sheets.iter().any(|x| x.contains("\"Coefficients\"")), "{sheets:?}");
    // No calculation chain that could name a changed cell.
    assert!(!b.contains_key("xl/calcChain.xml"));
    // The values read back equal, by plumb's own reader.
    common::faithful::assert_faithful(&input, &out);
    // The independent reader, and LibreOffice (CI).
    if std::env::var_os("PLUMB_RECALC").is_some() || std::env::var_os("PLUMB_OPENPYXL").is_some() {
        let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/kept_sheets.py");
        let st = std::process::Command::new("python3").arg(script).arg(&input).arg(&out).status().expect("python3 runs");
        assert!(st.success(), "tests/kept_sheets.py failed");
    } else {
        eprintln!("keep_sheets: PLUMB_RECALC is not set, so openpyxl and LibreOffice do not check the output (CI sets it)");
    }
    if std::env::var_os("PLUMB_KEEP_SCRATCH").is_none() {
        let _ = std::fs::remove_dir_all(&d);
    }
}

/// An xlsm input: its sheets are kept, its macros are not (an .xlsx output
/// cannot hold them), and the run says so. The macro part is added to a
/// generated workbook by hand, as the format lays it out (ECMA-376 with the
/// macro-enabled content type and the vbaProject relationship).
#[test]
fn an_xlsm_input_keeps_its_sheets_and_says_the_macros_are_left_out() {
    use std::io::Write;
    let d = scratch("keep-xlsm");
    let plain = d.join("plain.xlsx");
    rich_workbook(&plain);
    let input = d.join("allotment.xlsm");
    let mut z = zip::ZipWriter::new(std::fs::File::create(&input).unwrap());
    let opts = zip::write::SimpleFileOptions::default();
    for (name, bytes) in parts(&plain) {
        let bytes = match name.as_str() {
            "[Content_Types].xml" => String::from_utf8(bytes)
                .unwrap()
                .replace("application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml", "application/vnd.ms-excel.sheet.macroEnabled.main+xml")
                .replace("</Types>", "<Default Extension=\"bin\" ContentType=\"application/vnd.ms-office.vbaProject\"/></Types>")
                .into_bytes(),
            "xl/_rels/workbook.xml.rels" => String::from_utf8(bytes)
                .unwrap()
                .replace("</Relationships>", "<Relationship Id=\"rIdMacros\" Type=\"http://schemas.microsoft.com/office/2006/relationships/vbaProject\" Target=\"vbaProject.bin\"/></Relationships>")
                .into_bytes(),
            _ => bytes,
        };
        z.start_file(name, opts).unwrap();
        z.write_all(&bytes).unwrap();
    }
    z.start_file("xl/vbaProject.bin", opts).unwrap();
    z.write_all(b"not a real macro project; only its presence matters here").unwrap();
    z.finish().unwrap();
    let out = d.join("allotment.xlsm-fitted.xlsx");
    let s = run_to(&input, &out);
    assert!(s.problems.iter().any(|p| p.message.contains("macros")), "{:?}", s.problems);
    assert!(!s.problems.iter().any(|p| p.message.contains("values only")), "{:?}", s.problems);
    let b = parts(&out);
    assert!(!b.contains_key("xl/vbaProject.bin"));
    let types = String::from_utf8(b["[Content_Types].xml"].clone()).unwrap();
    assert!(!types.contains("macroEnabled") && types.contains("spreadsheetml.sheet.main+xml"), "{types}");
    let rels = String::from_utf8(b["xl/_rels/workbook.xml.rels"].clone()).unwrap();
    assert!(!rels.contains("vbaProject"), "{rels}");
    // The sheets are kept as in the plain case.
    assert_eq!(b.get("xl/worksheets/sheet2.xml"), parts(&plain).get("xl/worksheets/sheet2.xml"));
    common::faithful::assert_faithful(&input, &out);
    let _ = std::fs::remove_dir_all(&d);
}
