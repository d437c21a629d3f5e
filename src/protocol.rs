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
    /// The `key=value` pairs of a group option such as `start(a=40, k=0.2)`
    /// or `base(Bay="East")`, keys as typed (trimmed), values numbers or text.
    Group(BTreeMap<String, OptionValue>),
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
    /// The model of a function whose parameter of kind
    /// [`ParamKind::Expression`] was given (`a*exp(-k*Hours) + c`): the
    /// formula over [`FitRequest::columns`] (every column the expression
    /// names, in order of first use) and the parameters. Absent otherwise.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub expression: Option<ModelExpression>,
    /// The other options, resolved (group options such as `start(...)` as
    /// [`OptionValue::Group`]); the host's own (`name`, `level`,
    /// `intercept`, `weights`, `missing`, `data`, `base`) are not repeated
    /// here: they are the fields above, or already applied to the rows.
    pub options: BTreeMap<String, OptionValue>,
}

/// A model expression with parameters, resolved (see [`FitRequest::expression`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelExpression {
    /// The expression as typed.
    pub text: String,
    /// The formula: [`Formula::Column`] indexes [`FitRequest::columns`],
    /// [`Formula::Parameter`] indexes [`ModelExpression::parameters`].
    pub formula: Formula,
    /// The parameters' names, in the order the group option that declares
    /// them (`start(a=40, k=0.2)`) lists them.
    pub parameters: Vec<String>,
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
    /// The covariance matrix of the estimates, one row per coefficient in
    /// coefficient order (rows and columns of a coefficient without an
    /// estimate are zero), when the fit has one: what predictions with
    /// intervals need, with the `rmse` and `df_resid` statistics.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<Vec<Vec<f64>>>,
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

/// A fit that could not be done, in the user's terms: what an `Err` of a
/// fit carries, and what an external plugin sends back instead of an
/// outcome.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitError {
    /// What happened.
    pub message: String,
    /// What would fix it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub help: Option<String>,
    /// The term or column at fault, by its label ([`Column::term`] or
    /// [`Column::name`]), so the host can point at it in the request text.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub term: Option<String>,
}

impl FitError {
    /// A new error.
    pub fn new(message: impl Into<String>) -> Self {
        FitError { message: message.into(), help: None, term: None }
    }
    /// Adds what would fix it.
    pub fn help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }
    /// Names the term or column at fault.
    pub fn at_term(mut self, term: impl Into<String>) -> Self {
        self.term = Some(term.into());
        self
    }
}

impl std::fmt::Display for FitError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for FitError {}

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
        if let Some(v) = &self.covariance {
            let p = self.coefficients.len();
            if v.len() != p || v.iter().any(|r| r.len() != p) {
                return Err(format!("the covariance matrix is not {p} × {p} (one row and column per coefficient)"));
            }
            if v.iter().flatten().any(|x| !x.is_finite()) {
                return Err("the covariance matrix has a value that is not a finite number".into());
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

/// A function that a [`Formula`] may call.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Function {
    /// Natural logarithm.
    Log,
    /// Common (base-10) logarithm.
    Log10,
    /// Exponential.
    Exp,
    /// Square root.
    Sqrt,
    /// Absolute value.
    Abs,
    /// Sine (radians).
    Sin,
    /// Cosine (radians).
    Cos,
    /// Tangent (radians).
    Tan,
    /// Arc tangent (radians).
    Atan,
}

impl Function {
    /// The function of a fit-language name (`log`, `sin`, …), case-insensitive.
    pub fn from_name(name: &str) -> Option<Function> {
        Some(match name.to_ascii_lowercase().as_str() {
            "log" => Function::Log,
            "log10" => Function::Log10,
            "exp" => Function::Exp,
            "sqrt" => Function::Sqrt,
            "abs" => Function::Abs,
            "sin" => Function::Sin,
            "cos" => Function::Cos,
            "tan" => Function::Tan,
            "atan" => Function::Atan,
            _ => return None,
        })
    }

    /// Its fit-language name.
    pub fn name(self) -> &'static str {
        match self {
            Function::Log => "log",
            Function::Log10 => "log10",
            Function::Exp => "exp",
            Function::Sqrt => "sqrt",
            Function::Abs => "abs",
            Function::Sin => "sin",
            Function::Cos => "cos",
            Function::Tan => "tan",
            Function::Atan => "atan",
        }
    }

    /// The value at `x`.
    pub fn apply(self, x: f64) -> f64 {
        match self {
            Function::Log => x.ln(),
            Function::Log10 => x.log10(),
            Function::Exp => x.exp(),
            Function::Sqrt => x.sqrt(),
            Function::Abs => x.abs(),
            Function::Sin => x.sin(),
            Function::Cos => x.cos(),
            Function::Tan => x.tan(),
            Function::Atan => x.atan(),
        }
    }

    /// The derivative at `x` (standard calculus; `abs` takes the sign of `x`,
    /// 0 at 0).
    pub fn derivative(self, x: f64) -> f64 {
        match self {
            Function::Log => 1.0 / x,
            Function::Log10 => 1.0 / (x * std::f64::consts::LN_10),
            Function::Exp => x.exp(),
            Function::Sqrt => 0.5 / x.sqrt(),
            Function::Abs => {
                if x > 0.0 {
                    1.0
                } else if x < 0.0 {
                    -1.0
                } else {
                    0.0
                }
            }
            Function::Sin => x.cos(),
            Function::Cos => -x.sin(),
            Function::Tan => 1.0 / (x.cos() * x.cos()),
            Function::Atan => 1.0 / (1.0 + x * x),
        }
    }
}

/// A formula over the columns of a [`FitRequest`] and, for a model with
/// parameters, the fit's parameters: plain data that travels as JSON, such
/// as `{"mul":[{"parameter":0},{"column":1}]}`.
///
/// A fit uses it to say how a new row of inputs becomes its model row
/// ([`Predictor::model_row`]: `Light^2` is `{"pow":[{"column":0},{"number":2.0}]}`)
/// and, for a model nonlinear in its parameters, what the model is
/// ([`PredictorForm::Model`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase", deny_unknown_fields)]
pub enum Formula {
    /// A number.
    Number(f64),
    /// The value of the request's column of this index ([`FitRequest::columns`]).
    Column(usize),
    /// The value of the parameter of this index.
    Parameter(usize),
    /// `−a`.
    Neg(Box<Formula>),
    /// `a + b`.
    Add(Box<Formula>, Box<Formula>),
    /// `a − b`.
    Sub(Box<Formula>, Box<Formula>),
    /// `a × b`.
    Mul(Box<Formula>, Box<Formula>),
    /// `a / b`.
    Div(Box<Formula>, Box<Formula>),
    /// `a ^ b` (real exponent).
    Pow(Box<Formula>, Box<Formula>),
    /// A function of one value.
    Call(Function, Box<Formula>),
}

impl Formula {
    /// `a op b` with boxing, for building formulas in code.
    pub fn pow(a: Formula, b: Formula) -> Formula {
        Formula::Pow(Box::new(a), Box::new(b))
    }

    /// The value at the given column values and parameters. A column or
    /// parameter index out of range gives NaN.
    pub fn eval(&self, columns: &[f64], params: &[f64]) -> f64 {
        let e = |f: &Formula| f.eval(columns, params);
        match self {
            Formula::Number(x) => *x,
            Formula::Column(j) => columns.get(*j).copied().unwrap_or(f64::NAN),
            Formula::Parameter(k) => params.get(*k).copied().unwrap_or(f64::NAN),
            Formula::Neg(a) => -e(a),
            Formula::Add(a, b) => e(a) + e(b),
            Formula::Sub(a, b) => e(a) - e(b),
            Formula::Mul(a, b) => e(a) * e(b),
            Formula::Div(a, b) => e(a) / e(b),
            Formula::Pow(a, b) => pow(e(a), e(b)),
            Formula::Call(f, a) => f.apply(e(a)),
        }
    }

    /// The value and the gradient with respect to the parameters (one entry
    /// per parameter, `params.len()` of them), by forward differentiation
    /// with the usual rules of calculus (sum, product, quotient and chain
    /// rules; `d(a^b) = b·a^(b−1)·da + a^b·ln(a)·db`, the second part only
    /// where `b` depends on the parameters).
    pub fn gradient(&self, columns: &[f64], params: &[f64]) -> (f64, Vec<f64>) {
        let k = params.len();
        let g = |f: &Formula| f.gradient(columns, params);
        match self {
            Formula::Number(x) => (*x, vec![0.0; k]),
            Formula::Column(j) => (columns.get(*j).copied().unwrap_or(f64::NAN), vec![0.0; k]),
            Formula::Parameter(i) => {
                let mut d = vec![0.0; k];
                if let Some(x) = d.get_mut(*i) {
                    *x = 1.0;
                }
                (params.get(*i).copied().unwrap_or(f64::NAN), d)
            }
            Formula::Neg(a) => {
                let (v, d) = g(a);
                (-v, d.into_iter().map(|x| -x).collect())
            }
            Formula::Add(a, b) | Formula::Sub(a, b) => {
                let s = if matches!(self, Formula::Sub(..)) { -1.0 } else { 1.0 };
                let ((va, da), (vb, db)) = (g(a), g(b));
                (va + s * vb, da.iter().zip(&db).map(|(x, y)| x + s * y).collect())
            }
            Formula::Mul(a, b) => {
                let ((va, da), (vb, db)) = (g(a), g(b));
                (va * vb, da.iter().zip(&db).map(|(x, y)| x * vb + va * y).collect())
            }
            Formula::Div(a, b) => {
                let ((va, da), (vb, db)) = (g(a), g(b));
                (va / vb, da.iter().zip(&db).map(|(x, y)| (x * vb - va * y) / (vb * vb)).collect())
            }
            Formula::Pow(a, b) => {
                let ((va, da), (vb, db)) = (g(a), g(b));
                let v = pow(va, vb);
                let d = da
                    .iter()
                    .zip(&db)
                    .map(|(x, y)| {
                        let base = if *x == 0.0 { 0.0 } else { vb * pow(va, vb - 1.0) * x };
                        let expo = if *y == 0.0 { 0.0 } else { v * va.ln() * y };
                        base + expo
                    })
                    .collect();
                (v, d)
            }
            Formula::Call(f, a) => {
                let (va, da) = g(a);
                let fd = f.derivative(va);
                (f.apply(va), da.into_iter().map(|x| fd * x).collect())
            }
        }
    }

    /// Whether the formula uses any parameter.
    pub fn has_parameters(&self) -> bool {
        match self {
            Formula::Number(_) | Formula::Column(_) => false,
            Formula::Parameter(_) => true,
            Formula::Neg(a) | Formula::Call(_, a) => a.has_parameters(),
            Formula::Add(a, b) | Formula::Sub(a, b) | Formula::Mul(a, b) | Formula::Div(a, b) | Formula::Pow(a, b) => a.has_parameters() || b.has_parameters(),
        }
    }
}

/// `a^b`, with whole exponents by repeated multiplication (exact for
/// `x^2`, and defined for a negative base).
fn pow(a: f64, b: f64) -> f64 {
    if b.fract() == 0.0 && b.abs() <= 64.0 {
        a.powi(b as i32)
    } else {
        a.powf(b)
    }
}
