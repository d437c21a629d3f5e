//! The committed data sets the statsmodels checks use, and their tolerance.
//!
//! tests/data/stackloss.csv and tests/data/longley.csv are the copies shipped
//! in statsmodels 0.15.0 (datasets/stackloss, datasets/longley; public
//! domain), as in ../shared/reference/datasets/README.md.

/// A CSV of numbers with a header line: the header (quotes around names
/// dropped) and the columns.
pub fn csv(text: &str) -> (Vec<String>, Vec<Vec<f64>>) {
    let mut lines = text.lines().filter(|l| !l.trim().is_empty());
    let header: Vec<String> = lines.next().expect("a header").split(',').map(|h| h.trim().trim_matches('"').to_string()).collect();
    let mut cols = vec![Vec::new(); header.len()];
    for line in lines {
        for (i, v) in line.split(',').enumerate() {
            cols[i].push(v.trim().parse::<f64>().expect("a number"));
        }
    }
    (header, cols)
}

/// Stack loss (Brownlee 1965), tests/data/stackloss.csv: the columns
/// STACKLOSS, AIRFLOW, WATERTEMP, ACIDCONC, 21 rows.
pub fn stackloss() -> Vec<Vec<f64>> {
    csv(include_str!("../data/stackloss.csv")).1
}

/// The relative difference of `got` from `want`; the absolute difference
/// where `want` is 0.
pub fn relative_difference(got: f64, want: f64) -> f64 {
    if want == 0.0 {
        got.abs()
    } else {
        ((got - want) / want).abs()
    }
}

/// Asserts agreement with a statsmodels 0.15.0 figure to 9 significant
/// digits (relative difference below 5e-9).
pub fn close(got: f64, want: f64, what: &str) {
    let rel = relative_difference(got, want);
    assert!(rel < 5e-9, "{what}: got {got}, statsmodels 0.15.0 gives {want} (relative difference {rel:.1e})");
}

/// Checks figures against a reference within a tolerance and keeps the
/// largest difference seen, for a printed summary: relative, or absolute
/// where the reference is below `absolute_below` in size.
pub struct Worst {
    /// The largest difference so far.
    pub difference: f64,
    /// Which figure it was.
    pub what: String,
    /// The agreement asserted.
    pub tolerance: f64,
    /// References smaller than this are compared absolutely.
    pub absolute_below: f64,
    /// The reference's name and version, for the messages.
    pub source: &'static str,
}

impl Worst {
    /// A fresh record.
    pub fn new(tolerance: f64, absolute_below: f64, source: &'static str) -> Self {
        Worst { difference: 0.0, what: String::new(), tolerance, absolute_below, source }
    }

    /// Asserts `got` agrees with the reference figure `want`.
    pub fn check(&mut self, got: Option<f64>, want: &serde_json::Value, what: &str) {
        let source = self.source;
        let want = want.as_f64().unwrap_or_else(|| panic!("{what}: no reference figure"));
        let got = got.unwrap_or_else(|| panic!("{what}: no number in the output ({source} gives {want})"));
        let diff = if want.abs() < self.absolute_below { (got - want).abs() } else { relative_difference(got, want) };
        assert!(diff <= self.tolerance, "{what}: plumb {got}, {source} {want} (difference {diff:.1e})");
        if diff > self.difference {
            self.difference = diff;
            self.what = what.to_string();
        }
    }
}
