//! Parts of the output that belong to one request — its charts, the band of
//! rows of its calculator or prediction table, a drop-down list, a link —
//! and leaving one out when the output format cannot hold it, so that such
//! a failure costs that part alone: the writer checks the parts
//! (`write::check_parts`), [`Book::owner_of`] names the request a refused
//! part belongs to, and [`Book::leave_out`] removes it.

use super::{Book, Content, OutCell, Style};
use crate::cells::{CellAddress, Workbook};

/// A band of rows of a result sheet that holds one request's part.
#[derive(Debug, Clone, PartialEq)]
pub struct Region {
    /// The request cell.
    pub owner: CellAddress,
    /// The part in words, such as "the prediction calculator of main".
    pub what: String,
    /// First row of the band.
    pub first_row: u32,
    /// Last row of the band (inclusive).
    pub last_row: u32,
}

/// Which sheet of the output a part is on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SheetAt {
    /// A source sheet (its overlay), by index.
    Source(usize),
    /// A result sheet, by index in [`Book::sheets`].
    Result(usize),
}

/// A part of one sheet.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Part {
    /// A chart, by index in [`super::Sheet::charts`].
    Chart(usize),
    /// The drop-down list of a cell.
    Choice(u32, u32),
    /// The link of a cell.
    Link(u32, u32),
    /// A cell's content.
    Cell(u32, u32),
}

/// A part the output format cannot hold as laid out, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Refused {
    /// The sheet.
    pub sheet: SheetAt,
    /// The part.
    pub part: Part,
    /// Why, in words.
    pub why: String,
}

/// The longest list of choices written into a drop-down list itself, in
/// UTF-16 units with the commas between items (the xlsx format's limit, as
/// the writer enforces it).
pub const LIST_MAX: usize = 255;

/// Whether `levels` can be written into a drop-down list itself: together
/// within [`LIST_MAX`], and no item holding a comma (the list's separator).
/// Other lists read their choices from cells.
pub fn list_holds(levels: &[String]) -> bool {
    let units: usize = levels.iter().map(|l| l.encode_utf16().count()).sum::<usize>() + levels.len().saturating_sub(1);
    !levels.is_empty() && units <= LIST_MAX && !levels.iter().any(|l| l.contains(','))
}

impl Book {
    /// The request a refused part belongs to, when one does, and the part
    /// in words ("the chart 'Residuals against fitted values' of main").
    pub fn owner_of(&self, source: &Workbook, r: &Refused) -> (Option<CellAddress>, String) {
        match r.sheet {
            SheetAt::Source(i) => {
                let (row, col) = match r.part {
                    Part::Chart(_) => (0, 0),
                    Part::Choice(a, b) | Part::Link(a, b) | Part::Cell(a, b) => (a, b),
                };
                let name = source.sheets.get(i).map(|g| g.name.clone()).unwrap_or_default();
                let at = CellAddress::new(name, row, col);
                let what = match r.part {
                    Part::Link(..) => "the link of the request cell".to_string(),
                    _ => "the outcome of the request cell".to_string(),
                };
                (Some(at), what)
            }
            SheetAt::Result(i) => {
                let Some(s) = self.sheets.get(i) else { return (None, "a part of the output".into()) };
                let (a, b) = match r.part {
                    Part::Chart(k) => {
                        let Some(c) = s.charts.get(k) else { return (None, "a chart".into()) };
                        return (c.owner.clone(), format!("the chart '{}' on {}", c.title, s.name));
                    }
                    Part::Choice(a, b) | Part::Link(a, b) | Part::Cell(a, b) => (a, b),
                };
                let cell = CellAddress::new(s.name.clone(), a, b);
                let detail = match r.part {
                    Part::Choice(..) => format!("the drop-down list of {cell}"),
                    Part::Link(..) => format!("the link of {cell}"),
                    _ => format!("the cell {cell}"),
                };
                match s.regions.iter().find(|g| (g.first_row..=g.last_row).contains(&a)) {
                    Some(g) if matches!(r.part, Part::Cell(..)) => (Some(g.owner.clone()), format!("{} on {} ({detail})", g.what, s.name)),
                    Some(g) => (Some(g.owner.clone()), format!("{detail}, in {}", g.what)),
                    None => (None, detail),
                }
            }
        }
    }

    /// Leaves the refused parts out: a chart is removed, a drop-down list or
    /// a link is dropped (the cell stays), and a cell inside a request's
    /// region empties the whole region, whose first row then says what was
    /// left out and why; any other cell shows why it was left out.
    pub fn leave_out(&mut self, refused: &[Refused]) {
        let mut charts: Vec<(usize, usize)> = Vec::new();
        for r in refused {
            match (r.sheet, r.part) {
                (SheetAt::Result(i), Part::Chart(k)) => charts.push((i, k)),
                (SheetAt::Result(i), Part::Choice(a, b)) => {
                    if let Some(s) = self.sheets.get_mut(i) {
                        s.choices.remove(&(a, b));
                    }
                }
                (SheetAt::Result(i), Part::Link(a, b)) => {
                    if let Some(c) = self.sheets.get_mut(i).and_then(|s| s.cells.get_mut(&(a, b))) {
                        c.link = None;
                    }
                }
                (SheetAt::Source(i), Part::Link(a, b)) => {
                    if let Some(c) = self.overlays.get_mut(i).and_then(|o| o.cells.get_mut(&(a, b))) {
                        c.link = None;
                    }
                }
                (SheetAt::Result(i), Part::Cell(a, b)) => {
                    let Some(s) = self.sheets.get_mut(i) else { continue };
                    match s.regions.iter().position(|g| (g.first_row..=g.last_row).contains(&a)) {
                        Some(gi) => {
                            let g = s.regions.remove(gi);
                            s.cells.retain(|&(row, _), _| !(g.first_row..=g.last_row).contains(&row));
                            s.choices.retain(|&(row, _), _| !(g.first_row..=g.last_row).contains(&row));
                            let text = format!("{} was left out: {}", capitalized(&g.what), r.why);
                            s.put(g.first_row, 0, OutCell::text(text, Style::Warning));
                        }
                        None => s.put(a, b, OutCell::text(format!("(left out: {})", r.why), Style::Warning)),
                    }
                }
                (SheetAt::Source(i), Part::Cell(a, b) | Part::Choice(a, b)) => {
                    if let Some(c) = self.overlays.get_mut(i).and_then(|o| o.cells.get_mut(&(a, b))) {
                        c.content = Content::Text(format!("(left out: {})", r.why));
                        c.style = Style::Warning;
                    }
                }
                (SheetAt::Source(_), Part::Chart(_)) => {}
            }
        }
        // Highest index first, so the other indices stay valid.
        charts.sort_unstable();
        charts.dedup();
        for (i, k) in charts.into_iter().rev() {
            if let Some(s) = self.sheets.get_mut(i) {
                if k < s.charts.len() {
                    s.charts.remove(k);
                }
            }
        }
    }
}

fn capitalized(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::layout::Sheet;

    #[test]
    fn lists_hold_short_levels_without_commas() {
        let l = |v: &[&str]| v.iter().map(|s| s.to_string()).collect::<Vec<_>>();
        assert!(list_holds(&l(&["East", "West"])));
        assert!(!list_holds(&l(&["Bay 1, north", "Bay 2"])));
        // 127 + 1 + 127 = 255 units fit; one more does not (LIST_MAX).
        assert!(list_holds(&l(&[&"a".repeat(127), &"b".repeat(127)])));
        assert!(!list_holds(&l(&[&"a".repeat(128), &"b".repeat(127)])));
        assert!(!list_holds(&[]));
    }

    #[test]
    fn a_refused_cell_empties_its_region_only() {
        let owner = CellAddress::new("Data", 1, 4);
        let mut s = Sheet::new("Intervals");
        for r in 0..10 {
            s.put(r, 0, OutCell::number(f64::from(r), Style::Number));
        }
        s.regions.push(Region { owner: owner.clone(), what: "the prediction calculator of main".into(), first_row: 3, last_row: 6 });
        s.choices.insert((4, 1), crate::layout::Choices::List(vec!["a".into()]));
        let mut book = Book { sheets: vec![s], ..Default::default() };
        let r = Refused { sheet: SheetAt::Result(0), part: Part::Cell(5, 1), why: "a text in a formula is longer than 255 characters".into() };
        let (who, what) = book.owner_of(&Workbook { sheets: Vec::new() }, &r);
        assert_eq!(who, Some(owner));
        assert_eq!(what, "the prediction calculator of main on Intervals (the cell Intervals!B6)");
        book.leave_out(&[r]);
        let s = &book.sheets[0];
        assert!(s.choices.is_empty());
        assert_eq!(s.cells.keys().map(|k| k.0).collect::<Vec<_>>(), vec![0, 1, 2, 3, 7, 8, 9]);
        assert_eq!(s.cells[&(3, 0)].content, Content::Text("The prediction calculator of main was left out: a text in a formula is longer than 255 characters".into()));
    }
}
