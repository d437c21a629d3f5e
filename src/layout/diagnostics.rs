//! The Diagnostics sheet: every fit side by side, one column per fit, in
//! blocks by the question each figure answers (the headings the fits give
//! their statistics, in order of first appearance), each figure in the
//! number format its fit declares; under a figure of one row, the row on
//! its sheet, linked. Then the analysis of variance of each fit as a small
//! grid, and each fit's warnings and notes.

use super::{link_to, OutCell, Sheet, Style};
use crate::protocol::{FitOutcome, NumberFormat, Statistic, ANOVA_GROUP, ANOVA_KEYS};
use crate::report::Report;

/// The cell style of a declared number format.
pub(super) fn style_of(format: NumberFormat) -> Style {
    match format {
        NumberFormat::PValue => Style::PValue,
        NumberFormat::Integer => Style::Integer,
        NumberFormat::Decimal => Style::Number,
        NumberFormat::Decimals(d) => Style::Fixed(d),
    }
}

/// The first column of the fits.
const FIRST: u32 = 1;

/// The Diagnostics sheet.
pub(super) fn sheet(diag_n: &str, reports: &[Report]) -> Sheet {
    let mut s = Sheet::new(diag_n);
    let fits: Vec<(&Report, &FitOutcome)> = reports.iter().filter_map(|r| r.outcome.as_ref().map(|o| (r, o))).collect();
    s.widths.insert(0, 52.0);
    for i in 0..fits.len().max(6) as u32 {
        s.widths.insert(FIRST + i, 20.0);
    }
    s.put(0, 0, OutCell::text("Diagnostics: the fits side by side", Style::Title));
    s.put(1, 0, OutCell::text("One column per fit, one block per question; the Guide says what each figure means.", Style::Plain));
    s.put(2, 0, OutCell::text("Fit", Style::Header));
    s.put(3, 0, OutCell::text("Request", Style::Plain));
    for (i, (r, _)) in fits.iter().enumerate() {
        s.put(2, FIRST + i as u32, OutCell::text(&r.name, Style::Header));
        s.put(3, FIRST + i as u32, OutCell::text(r.text.trim(), Style::Wrap));
    }
    s.freeze = Some((3, 1));
    let mut row = 4u32;
    // The groups, and the statistics of each, in order of first appearance.
    let mut groups: Vec<(&str, Vec<&str>)> = Vec::new();
    for (_, o) in &fits {
        for st in o.statistics.iter().filter(|st| st.group != ANOVA_GROUP) {
            match groups.iter_mut().find(|g| g.0 == st.group) {
                Some(g) if !g.1.contains(&st.key.as_str()) => g.1.push(&st.key),
                Some(_) => {}
                None => groups.push((&st.group, vec![&st.key])),
            }
        }
    }
    for (group, keys) in &groups {
        s.put(row, 0, OutCell::text(*group, Style::Header));
        for i in 0..fits.len() as u32 {
            s.put(row, FIRST + i, OutCell::text("", Style::Header));
        }
        row += 1;
        for key in keys {
            row = statistic_rows(&mut s, row, &fits, key);
        }
    }
    row = anova(&mut s, row + 1, &fits);
    messages(&mut s, row + 1, &fits);
    s
}

/// One statistic across the fits from `row`, and under it, when any fit
/// names a row or a term for it, a line saying where; returns the next row.
fn statistic_rows(s: &mut Sheet, row: u32, fits: &[(&Report, &FitOutcome)], key: &str) -> u32 {
    let found: Vec<Option<&Statistic>> = fits.iter().map(|(_, o)| o.statistics.iter().find(|st| st.key == key)).collect();
    let Some(first) = found.iter().flatten().next() else { return row };
    s.put(row, 0, OutCell::text(&first.label, Style::Plain));
    let mut where_row = false;
    for (i, (st, (r, o))) in found.iter().zip(fits).enumerate() {
        let Some(st) = st else { continue };
        let col = FIRST + i as u32;
        let mut cell = OutCell::number(st.value, style_of(st.format));
        if st.label != first.label {
            cell.note = Some(st.label.clone());
        }
        s.put(row, col, cell);
        if let (Some(&k), Some(place)) = (o.statistic_rows.get(key), &r.place) {
            if let Some(&sr) = place.rows.get(k) {
                s.put(row + 1, col, OutCell::text(format!("row {} of {}", sr + 1, place.sheet), Style::Link).link(link_to(&place.sheet, sr, place.last_col)));
                where_row = true;
            }
        } else if let Some(d) = &st.detail {
            s.put(row + 1, col, OutCell::text(d, Style::Plain));
            where_row = true;
        }
    }
    if where_row {
        s.put(row + 1, 0, OutCell::text("    where", Style::Plain));
        row + 2
    } else {
        row + 1
    }
}

fn anova_value<'a>(o: &'a FitOutcome, key: &str) -> Option<&'a Statistic> {
    o.statistics.iter().find(|st| st.group == ANOVA_GROUP && st.key == key)
}

/// The analysis of variance of each fit that sends one, as a grid from
/// `row`; returns the next free row.
fn anova(s: &mut Sheet, mut row: u32, fits: &[(&Report, &FitOutcome)]) -> u32 {
    let mut titled = false;
    for (r, o) in fits {
        if anova_value(o, ANOVA_KEYS[0][0]).is_none() {
            continue;
        }
        if !titled {
            s.put(row, 0, OutCell::text("Analysis of variance: how the variation of the response divides", Style::Title));
            row += 1;
            titled = true;
        }
        for (c, h) in [r.name.as_str(), "Degrees of freedom", "Sum of squares", "Mean square", "F", "p-value"].iter().enumerate() {
            s.put(row, c as u32, OutCell::text(*h, Style::Header));
        }
        row += 1;
        let about_zero = anova_value(o, "ss_total").is_some_and(|st| st.label.contains("about zero"));
        let total = if about_zero { "Total (about zero: no intercept)" } else { "Total (about the mean)" };
        for (keys, source) in ANOVA_KEYS.iter().zip(["Explained by the terms", "Left in the residuals", total]) {
            s.put(row, 0, OutCell::text(source, Style::Plain));
            for (c, key) in keys.iter().enumerate() {
                if let Some(st) = anova_value(o, key) {
                    s.put(row, 1 + c as u32, OutCell::number(st.value, style_of(st.format)));
                }
            }
            row += 1;
        }
        row += 1;
    }
    row
}

/// Each fit's warnings (and rows left out) and notes from `row`.
fn messages(s: &mut Sheet, mut row: u32, fits: &[(&Report, &FitOutcome)]) {
    for (r, o) in fits {
        if r.messages.is_empty() && r.notes.is_empty() && o.notes.is_empty() {
            continue;
        }
        s.put(row, 0, OutCell::text(format!("Warnings and notes — {}", r.name), Style::Header));
        row += 1;
        for m in &r.messages {
            s.put(row, 0, OutCell::text(m, Style::Warning));
            row += 1;
        }
        for m in r.notes.iter().chain(&o.notes) {
            s.put(row, 0, OutCell::text(format!("note: {m}"), Style::Plain));
            row += 1;
        }
        row += 1;
    }
}
