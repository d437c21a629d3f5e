//! What the evaluation of each request produced, as plain data: the
//! [`Report`] of a request (its status, messages, outcome and where its
//! rows are) and the tables of the host's own functions (`#predict`,
//! `#compare`). `host` fills the host tables, `pipeline` the reports, and
//! `layout` arranges them; none of these imports another for them.

use crate::cells::CellAddress;
use crate::predict::Point;
use crate::protocol::FitOutcome;
use crate::recipe::{NewValue, Recipe};

/// One point of a prediction.
#[derive(Debug, Clone, PartialEq)]
pub struct PredictionRow {
    /// The input values, in the recipe's input order.
    pub values: Vec<NewValue>,
    /// The prediction and its intervals.
    pub at: Point,
    /// Why the point lies outside the data, if it does.
    pub outside: Vec<String>,
}

/// The outcome of a `#predict` request.
#[derive(Debug, Clone, PartialEq)]
pub struct Prediction {
    /// The fit's name.
    pub fit: String,
    /// The input names, in order.
    pub inputs: Vec<String>,
    /// Confidence level.
    pub level: f64,
    /// One row per point.
    pub rows: Vec<PredictionRow>,
}

/// One fit in a comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct ComparedFit {
    /// Fit name.
    pub name: String,
    /// Rows used.
    pub n: f64,
    /// Parameters estimated.
    pub parameters: f64,
    /// R².
    pub r_squared: f64,
    /// Adjusted R².
    pub adj_r_squared: f64,
    /// Residual standard error √(SSE/(n − p)).
    pub rmse: f64,
    /// AIC.
    pub aic: f64,
    /// BIC.
    pub bic: f64,
    /// Estimate and standard error per term of [`Comparison::terms`].
    pub coefficients: Vec<Option<(Option<f64>, Option<f64>)>>,
}

/// A nested-model F test.
#[derive(Debug, Clone, PartialEq)]
pub struct NestedTest {
    /// The smaller fit.
    pub smaller: String,
    /// The larger fit, whose terms contain the smaller's.
    pub larger: String,
    /// F statistic.
    pub f: f64,
    /// Numerator degrees of freedom.
    pub df_num: f64,
    /// Denominator degrees of freedom.
    pub df_den: f64,
    /// Upper-tail p-value.
    pub p_value: f64,
}

/// The outcome of a `#compare` request.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// The response, as typed in the first fit.
    pub response: String,
    /// The fits, in the order named.
    pub fits: Vec<ComparedFit>,
    /// Index of the fit with the lowest AIC.
    pub lowest_aic: usize,
    /// Every pair of nested fits.
    pub nested: Vec<NestedTest>,
    /// Every term of any fit, in order of first appearance.
    pub terms: Vec<String>,
}

/// What a host function produced.
#[derive(Debug, Clone, PartialEq)]
pub enum HostOutcome {
    /// `#predict`.
    Prediction(Prediction),
    /// `#compare`.
    Comparison(Comparison),
}

/// Where a fit's per-row results belong.
#[derive(Debug, Clone, PartialEq)]
pub struct RowsPlace {
    /// Sheet of the data.
    pub sheet: String,
    /// Header row of the table, when it has one.
    pub header_row: Option<u32>,
    /// The table's last column; results go to its right.
    pub last_col: u32,
    /// First and last data row of the table.
    pub first_row: u32,
    /// Last data row.
    pub last_row: u32,
    /// The sheet row of each row sent to the fit.
    pub rows: Vec<u32>,
}

/// How a request ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// Fitted.
    Ok,
    /// Fitted, with warnings.
    Warning,
    /// Not fitted.
    Error,
}

impl Status {
    /// A word for the Fits sheet.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Ok => "ok",
            Status::Warning => "warning",
            Status::Error => "error",
        }
    }
}

/// Everything layout needs to know of one request.
#[derive(Debug, Clone, PartialEq)]
pub struct Report {
    /// The fit's name (`name=` or the cell address).
    pub name: String,
    /// Function, lowercase.
    pub function: String,
    /// Request cell.
    pub cell: CellAddress,
    /// Request text.
    pub text: String,
    /// Response as typed (empty when the request did not resolve).
    pub response: String,
    /// Terms as typed.
    pub terms: Vec<String>,
    /// Confidence level.
    pub level: f64,
    /// Rows used.
    pub rows_used: usize,
    /// Rows left out.
    pub rows_left_out: usize,
    /// Outcome.
    pub status: Status,
    /// The error message (one line) or the warnings.
    pub messages: Vec<String>,
    /// Notes that need no action (rows left out, an option's old name).
    pub notes: Vec<String>,
    /// The fit's outcome, when it ran.
    pub outcome: Option<FitOutcome>,
    /// Where per-row results go.
    pub place: Option<RowsPlace>,
    /// How the fit's model columns are made from its inputs (for the
    /// prediction calculator and charts), when known.
    pub recipe: Option<Recipe>,
    /// The tables of a host function (`#predict`, `#compare`).
    pub host: Option<HostOutcome>,
}

/// Facts about the run for the About sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct RunInfo {
    /// Tool version.
    pub version: String,
    /// Input file name.
    pub input_name: String,
    /// SHA-256 of the input, hex.
    pub input_sha256: String,
    /// Time of the run, as text (UTC, ISO 8601).
    pub time: String,
    /// How the input's own sheets were carried over, in plain words, for
    /// the About sheet (`None`: not said).
    pub sheets: Option<String>,
}

