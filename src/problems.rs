//! Located errors and warnings.
//!
//! A [`Problem`] says where (file, cell, the characters of the request text
//! at fault), what happened, and how to fix it. Every stage reports the
//! problems a user can cause through this one type, so the command line and
//! the output workbook show them the same way: the request text with a caret
//! line under the fault.

use crate::cells::CellAddress;
use std::fmt;

/// How serious a problem is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Severity {
    /// The request (or the run) could not be done.
    Error,
    /// The result exists but the reader should know something about it.
    Warning,
    /// Something the reader may like to know that needs no action (rows
    /// left out, an option under its old name).
    Note,
}

impl Severity {
    /// A lowercase word for messages.
    pub fn as_str(self) -> &'static str {
        match self {
            Severity::Error => "error",
            Severity::Warning => "warning",
            Severity::Note => "note",
        }
    }
}

/// One located problem.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Error or warning.
    pub severity: Severity,
    /// The workbook's file name, when known.
    pub file: Option<String>,
    /// The cell at fault (usually the request cell).
    pub cell: Option<CellAddress>,
    /// The request text and the byte span at fault within it (boxed: it
    /// keeps a `Problem`, the error type of every stage, small).
    pub source: Option<Box<(String, usize, usize)>>,
    /// What happened, in the user's terms.
    pub message: String,
    /// What would fix it.
    pub help: Option<String>,
}

impl Problem {
    /// A new error with a message.
    pub fn error(message: impl Into<String>) -> Self {
        Problem { severity: Severity::Error, file: None, cell: None, source: None, message: message.into(), help: None }
    }

    /// A new warning with a message.
    pub fn warning(message: impl Into<String>) -> Self {
        Problem { severity: Severity::Warning, ..Problem::error(message) }
    }

    /// A new note with a message.
    pub fn note(message: impl Into<String>) -> Self {
        Problem { severity: Severity::Note, ..Problem::error(message) }
    }

    /// Adds the cell.
    pub fn at(mut self, cell: CellAddress) -> Self {
        self.cell = Some(cell);
        self
    }

    /// Adds the request text and the byte span at fault.
    pub fn in_text(mut self, text: &str, start: usize, end: usize) -> Self {
        self.source = Some(Box::new((text.to_string(), start, end)));
        self
    }

    /// Adds what would fix it.
    pub fn help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }

    /// Adds the file name.
    pub fn in_file(mut self, file: impl Into<String>) -> Self {
        self.file = Some(file.into());
        self
    }

    /// The message with its fix, on one line, for a cell of the output.
    pub fn one_line(&self) -> String {
        match &self.help {
            Some(h) => format!("{} — {}", self.message, h),
            None => self.message.clone(),
        }
    }

    /// The request text and a caret line under the span, both indented by
    /// four spaces; empty when the problem has no source text.
    pub fn caret_lines(&self) -> String {
        let Some((text, start, end)) = self.source.as_deref() else { return String::new() };
        caret_lines(text, *start, *end)
    }
}

/// Prints `text` and under it a line of `^` marking the byte span
/// `start..end` (at least one caret), counting characters rather than bytes
/// so the marks line up under non-ASCII text.
///
/// ```
/// let s = plumb::problems::caret_lines("#linear(Yield, Ligth)", 15, 20);
/// assert_eq!(s, "    #linear(Yield, Ligth)\n                   ^^^^^\n");
/// ```
pub fn caret_lines(text: &str, start: usize, end: usize) -> String {
    let shown: String = text.chars().map(|c| if c == '\n' || c == '\r' || c == '\t' { ' ' } else { c }).collect();
    let clamp = |i: usize| {
        let mut i = i.min(text.len());
        while !text.is_char_boundary(i) {
            i -= 1;
        }
        i
    };
    let (s, e) = (clamp(start), clamp(end.max(start)));
    let before = text[..s].chars().count();
    let width = text[s..e].chars().count().max(1);
    format!("    {}\n    {}{}\n", shown, " ".repeat(before), "^".repeat(width))
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let place = match (&self.file, &self.cell) {
            (Some(file), Some(cell)) => format!("{file}, {cell}: "),
            (Some(file), None) => format!("{file}: "),
            (None, Some(cell)) => format!("{cell}: "),
            (None, None) => String::new(),
        };
        writeln!(f, "{place}{}: {}", self.severity.as_str(), self.message)?;
        write!(f, "{}", self.caret_lines())?;
        if let Some(h) = &self.help {
            writeln!(f, "    fix: {h}")?;
        }
        Ok(())
    }
}

impl std::error::Error for Problem {}

/// Levenshtein edit distance between two strings, compared case-insensitively;
/// used to suggest the closest header names (Levenshtein 1966, the classic
/// dynamic programme over one row).
pub fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.to_lowercase().chars().collect();
    let b: Vec<char> = b.to_lowercase().chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.iter().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = if ca == cb { prev } else { 1 + prev.min(row[j]).min(row[j + 1]) };
            prev = cur;
        }
    }
    row[b.len()]
}

/// The candidates closest to `name` (at most three, nearest first), keeping
/// only those within a distance that a typo explains: a third of the longer
/// name, at least 2.
pub fn closest<'a>(name: &str, candidates: impl IntoIterator<Item = &'a str>) -> Vec<&'a str> {
    let mut scored: Vec<(usize, &str)> = candidates
        .into_iter()
        .filter(|c| !c.trim().is_empty())
        .map(|c| (edit_distance(name, c), c))
        .filter(|(d, c)| *d <= (name.chars().count().max(c.chars().count()) / 3).max(2))
        .collect();
    scored.sort_by_key(|(d, _)| *d);
    scored.dedup_by(|a, b| a.1 == b.1);
    scored.into_iter().take(3).map(|(_, c)| c).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn caret_counts_characters_not_bytes() {
        let s = caret_lines("#linear(Température, x)", 8, 20);
        let lines: Vec<&str> = s.lines().collect();
        assert_eq!(lines[1], format!("    {}{}", " ".repeat(8), "^".repeat(11)));
    }

    #[test]
    fn problem_prints_place_text_and_fix() {
        let p = Problem::error("no column named \"Ligth\"")
            .at(CellAddress::new("Weekly", 5, 13))
            .in_file("greenhouse.xlsx")
            .in_text("#linear(Yield, Ligth)", 15, 20)
            .help("did you mean Light?");
        let s = p.to_string();
        assert!(s.starts_with("greenhouse.xlsx, Weekly!N6: error: no column named \"Ligth\"\n"), "{s}");
        assert!(s.contains("\n                   ^^^^^\n"), "{s}");
        assert!(s.ends_with("    fix: did you mean Light?\n"), "{s}");
    }

    #[test]
    fn closest_names_suggest_typos_only() {
        let headers = ["Week", "Bay", "Light", "CO2", "Irrigation", "Yield"];
        assert_eq!(closest("Ligth", headers), vec!["Light"]);
        assert_eq!(closest("yeild", headers), vec!["Yield"]);
        assert!(closest("Temperature", headers).is_empty());
        assert_eq!(edit_distance("kitten", "sitting"), 3);
    }
}
