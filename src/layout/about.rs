//! The About sheet: what made the workbook, from which input, when, and
//! every request with its status.

use super::{OutCell, Sheet, Style};
use crate::report::{Report, RunInfo};

/// The About sheet.
pub(super) fn sheet(about_n: &str, reports: &[Report], info: &RunInfo) -> Sheet {
    let mut about = Sheet::new(about_n);
    about.widths.insert(0, 18.0);
    about.widths.insert(1, 70.0);
    about.widths.insert(2, 10.0);
    about.put(0, 0, OutCell::text("About this workbook", Style::Title));
    let mut facts = vec![
        ("Made by", format!("plumb {}", info.version)),
        ("Input file", info.input_name.clone()),
        ("Input SHA-256", info.input_sha256.clone()),
        ("Time of the run (UTC)", info.time.clone()),
        ("Regenerate with", format!("plumb run \"{}\"", info.input_name)),
    ];
    if let Some(how) = &info.sheets {
        facts.push(("Your sheets", how.clone()));
    }
    for (i, (k, v)) in facts.iter().enumerate() {
        about.put(i as u32 + 1, 0, OutCell::text(*k, Style::Header));
        about.put(i as u32 + 1, 1, OutCell::text(v, Style::Plain));
    }
    let base = facts.len() as u32 + 2;
    about.put(base, 0, OutCell::text("Request cell", Style::Header));
    about.put(base, 1, OutCell::text("Request text", Style::Header));
    about.put(base, 2, OutCell::text("Status", Style::Header));
    for (i, r) in reports.iter().enumerate() {
        let row = base + 1 + i as u32;
        about.put(row, 0, OutCell::text(r.cell.to_string(), Style::Plain));
        about.put(row, 1, OutCell::text(r.text.trim(), Style::Plain));
        about.put(row, 2, OutCell::text(r.status.as_str(), Style::Plain));
    }

    about
}
