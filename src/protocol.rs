//! The types shared by built-in and external fits.
//!
//! A plugin declares its functions in a [`Manifest`]; the host validates each
//! request against it, resolves every column reference to numbers, and sends
//! a [`FitRequest`]; the plugin answers with a [`FitOutcome`]. The same types
//! travel as JSON to external plugins, so everything here is plain data with
//! serde derives and no I/O. Changing a field's meaning means a new
//! [`PROTOCOL_VERSION`].

use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The protocol version this host speaks.
pub const PROTOCOL_VERSION: u32 = 1;

/// What a plugin provides.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// Protocol version the plugin speaks.
    pub protocol: u32,
    /// Plugin name (`builtin` for the fits compiled into plumb).
    pub plugin: String,
    /// Plugin version.
    pub version: String,
    /// The functions it serves.
    pub functions: Vec<FunctionSpec>,
}

/// One function of the fit language.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FunctionSpec {
    /// Name, lowercase (`linear`).
    pub name: String,
    /// One line of help.
    pub help: String,
    /// Positional parameters, in order.
    pub positional: Vec<ParamSpec>,
    /// `key=value` options.
    pub options: Vec<ParamSpec>,
}

impl FunctionSpec {
    /// The option of that name (case-insensitive).
    pub fn option(&self, name: &str) -> Option<&ParamSpec> {
        self.options.iter().find(|o| o.name.eq_ignore_ascii_case(name))
    }

    /// The call pattern, such as `#linear(response, terms, name=…, level=0.95)`.
    pub fn signature(&self) -> String {
        let mut parts: Vec<String> = self
            .positional
            .iter()
            .map(|p| if p.required { p.name.clone() } else { format!("[{}]", p.name) })
            .collect();
        for o in &self.options {
            let v = match (&o.default, o.kind) {
                (Some(d), _) => d.clone(),
                (None, ParamKind::Choice) => o.choices.join("|"),
                (None, _) => "…".to_string(),
            };
            parts.push(if o.kind == ParamKind::Group { format!("{}(col=level)", o.name) } else { format!("{}={}", o.name, v) });
        }
        format!("#{}({})", self.name, parts.join(", "))
    }
}

/// A parameter or option of a function.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ParamSpec {
    /// Name.
    pub name: String,
    /// What kind of value it takes.
    pub kind: ParamKind,
    /// Whether it must be given.
    pub required: bool,
    /// The default, as the user would type it.
    pub default: Option<String>,
    /// For [`ParamKind::Choice`], the accepted words.
    #[serde(default)]
    pub choices: Vec<String>,
    /// One line of help.
    pub help: String,
}

/// The kinds of value a parameter takes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ParamKind {
    /// One column (header name or range), or an expression of columns.
    Column,
    /// Model terms joined by `+`.
    Terms,
    /// A numeric expression with parameters (nonlinear models).
    Expression,
    /// A number.
    Number,
    /// A whole number.
    Integer,
    /// One word of a fixed list.
    Choice,
    /// The name of another fit.
    FitName,
    /// A sheet or a range of cells.
    Range,
    /// A free word or quoted text.
    Text,
    /// `name(key=value, …)`.
    Group,
}

/// A resolved option value, ready for the plugin.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum OptionValue {
    /// A number.
    Number(f64),
    /// A word or text.
    Text(String),
    /// `key=value` pairs of a group option.
    Group(BTreeMap<String, String>),
}

/// One column of numbers sent to a plugin.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Column {
    /// Label used in the output (`Light`, `Light^2`, `Bay=North`).
    pub name: String,
    /// The term of the request this column belongs to.
    pub term: String,
    /// One value per row used, all finite.
    pub values: Vec<f64>,
    /// When the column is a whole power of one base column (`Light^2`, or
    /// `Light` itself beside `Light^2`): which base, which power, and the
    /// base's values, so a fit can form the powers itself in a better
    /// conditioned basis. `values` still holds the power, so a fit that
    /// ignores this field is correct (if less accurate). Optional in the
    /// JSON (absent means "not a power"), so protocol version 1 is unchanged.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub power: Option<PowerOf>,
}

/// "Power `exponent` of the base column `base`" (see [`Column::power`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PowerOf {
    /// The base column's label as typed (`Light`).
    pub base: String,
    /// The power, at least 1.
    pub exponent: u32,
    /// The base column's values, one per row used.
    pub base_values: Vec<f64>,
}

/// A fully resolved request: numbers only, never cell addresses.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitRequest {
    /// Protocol version.
    pub protocol: u32,
    /// Function name, lowercase.
    pub function: String,
    /// The response.
    pub response: Column,
    /// The model columns in order (categorical terms already expanded into
    /// indicator columns).
    pub columns: Vec<Column>,
    /// Whether to fit an intercept.
    pub intercept: bool,
    /// Weights, one per row, all positive.
    pub weights: Option<Vec<f64>>,
    /// Confidence level for intervals, in (0, 1).
    pub level: f64,
    /// The other options, resolved.
    pub options: BTreeMap<String, OptionValue>,
}

impl FitRequest {
    /// Number of rows sent.
    pub fn rows(&self) -> usize {
        self.response.values.len()
    }
}

/// One estimated coefficient.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Coefficient {
    /// Term label (`(intercept)`, `Light`, `Bay=North`).
    pub term: String,
    /// Estimate; `None` when the term is aliased (not estimable).
    pub estimate: Option<f64>,
    /// Standard error.
    pub std_error: Option<f64>,
    /// t (or z) statistic.
    pub statistic: Option<f64>,
    /// Two-sided p-value.
    pub p_value: Option<f64>,
    /// Lower end of the confidence interval.
    pub lower: Option<f64>,
    /// Upper end of the confidence interval.
    pub upper: Option<f64>,
    /// Variance inflation factor `1/(1 − R²)` of the term's column on the
    /// other columns; `None` for the intercept and aliased terms.
    #[serde(default)]
    pub vif: Option<f64>,
    /// Standardized coefficient `estimate × s_x / s_y`; `None` for the
    /// intercept and aliased terms.
    #[serde(default)]
    pub standardized: Option<f64>,
}

/// A named statistic of a fit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Statistic {
    /// Stable key for programs (`r_squared`).
    pub key: String,
    /// Label for readers (`R²`).
    pub label: String,
    /// Which block of the Diagnostics sheet it belongs to.
    pub group: String,
    /// The value.
    pub value: f64,
}

/// A per-row result column (fitted values, residuals, …).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RowColumn {
    /// Stable key (`fitted`).
    pub key: String,
    /// Header for readers (`Fitted`).
    pub label: String,
    /// One value per row sent, `NaN` where undefined.
    pub values: Vec<f64>,
}

/// What a fit returns.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct FitOutcome {
    /// The coefficients, intercept first when there is one.
    pub coefficients: Vec<Coefficient>,
    /// Named statistics in display order.
    pub statistics: Vec<Statistic>,
    /// Per-row columns.
    pub rows: Vec<RowColumn>,
    /// Plain-language warnings about this fit.
    pub warnings: Vec<String>,
    /// Which R² the fit reports and similar remarks.
    pub notes: Vec<String>,
    /// Which standard errors the coefficient table uses (`classic`, `HC3`,
    /// …), shown beside every coefficient; `None` when the fit does not say.
    #[serde(default)]
    pub standard_errors: Option<String>,
    /// Statistics that belong to one row (the largest leverage, …): the
    /// statistic's key and the row's index among the rows sent. The host
    /// shows the row's place on its sheet ("row 57") beside the value.
    #[serde(default)]
    pub statistic_rows: BTreeMap<String, usize>,
    /// Warnings about one row, which the fit knows only by its index among
    /// the rows sent. The host replaces `{row}` in the text with the row's
    /// place ("row 57 of Weekly") and adds the result to the warnings.
    #[serde(default)]
    pub row_warnings: Vec<RowWarning>,
}

/// A warning about one row of the data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RowWarning {
    /// The row's index among the rows sent (zero-based).
    pub row: usize,
    /// The warning, with `{row}` where the row is to be named.
    pub text: String,
}

impl FitOutcome {
    /// A statistic by key.
    pub fn statistic(&self, key: &str) -> Option<f64> {
        self.statistics.iter().find(|s| s.key == key).map(|s| s.value)
    }

    /// Checks the outcome's shape against the request: one value per row in
    /// every row column, finite statistics or NaN, estimates finite. Returns a
    /// message naming the first fault.
    pub fn check_shape(&self, request: &FitRequest) -> Result<(), String> {
        let n = request.rows();
        for c in &self.rows {
            if c.values.len() != n {
                return Err(format!("the column '{}' has {} values for {} rows", c.label, c.values.len(), n));
            }
        }
        for (key, &row) in &self.statistic_rows {
            if row >= n {
                return Err(format!("the statistic '{key}' names row {row} of {n}"));
            }
        }
        for w in &self.row_warnings {
            if w.row >= n {
                return Err(format!("a warning names row {} of {}", w.row, n));
            }
        }
        for c in &self.coefficients {
            for v in [c.estimate, c.std_error, c.lower, c.upper].into_iter().flatten() {
                if v.is_infinite() {
                    return Err(format!("the coefficient '{}' has an infinite value", c.term));
                }
            }
        }
        Ok(())
    }
}
