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

/// The option the host sends a fit that declares an `event` option when its
/// response is text of two levels: the level coded 1 (the other is 0),
/// chosen by `event="…"` or by default (the later in alphabetical order).
pub const EVENT_LEVEL: &str = "event_level";

/// One message between the host and a plugin: what travels, one JSON
/// object per line, over an external plugin's standard input and output.
///
/// The host opens with [`Message::Hello`]; the plugin answers
/// [`Message::Manifest`]. Then for each request the host sends
/// [`Message::Fit`] with an id of its choosing, and the plugin answers with
/// [`Message::Outcome`] or [`Message::Error`] carrying the same id.
/// Example: `{"type":"hello","protocol":1}`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "type", rename_all = "snake_case", deny_unknown_fields)]
pub enum Message {
    /// Host to plugin: the host's protocol version; asks for the manifest.
    Hello {
        /// The protocol version the host speaks.
        protocol: u32,
    },
    /// Plugin to host: what the plugin serves.
    Manifest {
        /// The manifest.
        manifest: Manifest,
    },
    /// Host to plugin: fit one request.
    Fit {
        /// The call's id, repeated in the reply.
        id: u64,
        /// The request.
        request: FitRequest,
    },
    /// Plugin to host: the outcome of the call `id`.
    Outcome {
        /// The call's id.
        id: u64,
        /// The outcome.
        outcome: FitOutcome,
    },
    /// Plugin to host: the call `id` could not be done.
    Error {
        /// The call's id.
        id: u64,
        /// Why, in the user's terms.
        error: FitError,
    },
}

/// What a plugin provides.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
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
#[serde(deny_unknown_fields)]
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

    /// The call pattern, such as `#linear(response, terms, name=…, confidence=0.95)`;
    /// a group option by its [`ParamSpec::example`] (`start(a=…, k=…)`,
    /// `against(Bay="East")`), or `name(key=value, …)` when it has none.
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
            parts.push(if o.kind == ParamKind::Group { o.example.clone().unwrap_or_else(|| format!("{}(key=value, …)", o.name)) } else { format!("{}={}", o.name, v) });
        }
        format!("#{}({})", self.name, parts.join(", "))
    }
}

impl ParamSpec {
    /// How the option is written in a request: `name=`, or `name(…)` for a
    /// group option such as `against(Bay="East")`.
    pub fn written(&self) -> String {
        if self.kind == ParamKind::Group {
            format!("{}(…)", self.name)
        } else {
            format!("{}=", self.name)
        }
    }
}

/// A parameter or option of a function.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
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
    /// How the option is written, as the signature shows it: for a group,
    /// such as `start(a=…, k=…)` or `base(Bay="East")`. Optional (older
    /// manifests have none).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub example: Option<String>,
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
    /// or `against(Bay="East")`, keys as typed (trimmed), values numbers or text.
    Group(BTreeMap<String, OptionValue>),
}

impl Column {
    /// A plain column (not a power) whose term is itself.
    pub fn new(name: &str, values: Vec<f64>) -> Column {
        Column { name: name.into(), term: name.into(), values, power: None }
    }
}

/// One column of numbers sent to a plugin.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Column {
    /// Label used in the output (`Light`, `Light^2`, `Bay: North vs East`).
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
#[serde(deny_unknown_fields)]
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
#[serde(deny_unknown_fields)]
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
    /// A column option (see [`FitRequest::option_columns`]) is here as its
    /// text as typed (`order` → `"Week"`), so that the fit can name it.
    pub options: BTreeMap<String, OptionValue>,
    /// The values of the column options other than the host's `weights`
    /// (such as `trials=Tested` of `#logistic`), one per row sent, keyed by
    /// the option's name as the spec spells it; a row with an unusable cell
    /// there is left out like any other. Optional in the JSON (absent means
    /// none), so protocol version 1 is unchanged. A text column is accepted
    /// only for `groups=`, sent as the position (1, 2, …) of each row's
    /// level among the levels sorted alphabetically.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub option_columns: BTreeMap<String, Vec<f64>>,
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
    /// A request of `function` for `response` on `columns`, with an
    /// intercept, confidence 0.95, no weights, no model expression and no
    /// options: what a check of a fit starts from, the other fields set by
    /// struct update (`FitRequest { intercept: false, ..FitRequest::new(…) }`).
    pub fn new(function: &str, response: Column, columns: Vec<Column>) -> FitRequest {
        FitRequest {
            protocol: PROTOCOL_VERSION,
            function: function.into(),
            response,
            columns,
            intercept: true,
            weights: None,
            level: 0.95,
            expression: None,
            options: BTreeMap::new(),
            option_columns: BTreeMap::new(),
        }
    }

    /// Number of rows sent.
    pub fn rows(&self) -> usize {
        self.response.values.len()
    }
}

/// One estimated coefficient.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Coefficient {
    /// Term label (`Intercept`, `Light`, `Bay: North vs East`).
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
    /// Why a figure of this row is left blank (`None` when none is, or
    /// when the term is aliased, which the host says itself).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub remark: Option<String>,
    /// The p-value of the joint test of every column of this row's term
    /// (the indicators of a text column, say), when the term has more than
    /// one column; the test's figures are among the statistics.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub term_p_value: Option<f64>,
}

/// How a statistic's value is shown.
///
/// Example: a count of rows is `{"key":"n","label":"Rows used","group":"How
/// closely it fits","format":"integer","value":102.0}`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum NumberFormat {
    /// A figure shown to six significant digits (the cell keeps every digit).
    #[default]
    Decimal,
    /// A whole number: a count, degrees of freedom.
    Integer,
    /// A p-value: four decimals, or scientific below 0.0001.
    PValue,
    /// A figure shown to this many decimals (the cell keeps every digit),
    /// for figures on a known scale such as R² or Durbin–Watson. JSON:
    /// `{"decimals":3}`.
    Decimals(u8),
}

/// The Diagnostics group whose statistics form the analysis-of-variance
/// grid rather than a list: a fit that sends statistics in this group with
/// the keys of [`ANOVA_KEYS`] gets the grid (source × degrees of freedom,
/// sum of squares, mean square, F, p-value).
pub const ANOVA_GROUP: &str = "Analysis of variance";

/// The keys of the analysis-of-variance grid, row by row (terms, residual,
/// total), column by column (degrees of freedom, sum of squares, mean
/// square, F, p-value); an empty key is a cell left blank.
pub const ANOVA_KEYS: [[&str; 5]; 3] =
    [["df_model", "ss_model", "ms_model", "anova_f", "anova_f_p_value"], ["df_resid", "ss_resid", "ms_resid", "", ""], ["df_total", "ss_total", "", "", ""]];

/// A named statistic of a fit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Statistic {
    /// Stable key for programs (`r_squared`).
    pub key: String,
    /// Label for readers (`R²`).
    pub label: String,
    /// The heading of the Diagnostics block it belongs to; consecutive
    /// statistics with one heading form one block.
    pub group: String,
    /// How the value is shown (default: [`NumberFormat::Decimal`]).
    #[serde(default)]
    pub format: NumberFormat,
    /// The value; NaN (sent as `null`) when undefined.
    #[serde(with = "nan_as_null")]
    pub value: f64,
    /// What the value is about, when that differs between fits (the term
    /// with the largest variance inflation factor): shown under the value.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub detail: Option<String>,
}

impl Statistic {
    /// A statistic shown as a decimal figure.
    pub fn new(key: &str, label: &str, group: &str, value: f64) -> Self {
        Statistic { key: key.into(), label: label.into(), group: group.into(), format: NumberFormat::Decimal, value, detail: None }
    }
    /// The same with what the value is about.
    pub fn detail(mut self, detail: impl Into<String>) -> Self {
        self.detail = Some(detail.into());
        self
    }
    /// The same with another number format.
    pub fn format(mut self, format: NumberFormat) -> Self {
        self.format = format;
        self
    }
}

/// What a per-row column means. The host relies on these roles, never on a
/// column's label: [`RowRole::Fitted`] and [`RowRole::Residual`] draw the
/// charts, [`RowRole::StandardizedResidual`] the normal quantile plot, and
/// [`RowRole::Leverage`] tells `#predict` which new points lie outside the
/// data.
///
/// Example JSON: `"fitted"`, `"cooks_distance"`, `{"other":"dfbeta_Light"}`.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RowRole {
    /// The fitted value (on the response's scale).
    Fitted,
    /// Observed minus fitted.
    Residual,
    /// The residual over its own standard error (internally studentized).
    StandardizedResidual,
    /// The residual over the spread of the other rows (externally studentized).
    StudentizedResidual,
    /// The diagonal of the hat matrix.
    Leverage,
    /// Cook's distance.
    CooksDistance,
    /// DFFITS.
    Dffits,
    /// The weight the fit gave the row (robust fits).
    Weight,
    /// The fitted probability of the event (yes/no outcomes).
    Probability,
    /// Anything else, with a stable key of the fit's choosing.
    Other(String),
}

impl RowRole {
    /// The usual header of such a column.
    pub fn label(&self) -> &str {
        match self {
            RowRole::Fitted => "Fitted",
            RowRole::Residual => "Residual",
            RowRole::StandardizedResidual => "Internally studentized residual",
            RowRole::StudentizedResidual => "Externally studentized residual",
            RowRole::Leverage => "Leverage",
            RowRole::CooksDistance => "Cook's distance",
            RowRole::Dffits => "DFFITS",
            RowRole::Weight => "Weight",
            RowRole::Probability => "Probability",
            RowRole::Other(k) => k,
        }
    }
}

/// A per-row result column (fitted values, residuals, …).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RowColumn {
    /// What the column means.
    pub role: RowRole,
    /// Header for readers (`Fitted`).
    pub label: String,
    /// One value per row sent, NaN (sent as `null`) where undefined.
    #[serde(with = "nan_as_null_vec")]
    pub values: Vec<f64>,
}

impl RowColumn {
    /// A column with its role's usual label.
    pub fn new(role: RowRole, values: Vec<f64>) -> Self {
        RowColumn { label: role.label().to_string(), role, values }
    }
}

/// How a fit's linear predictor becomes the response's scale.
///
/// Example: a yes/no fit sends `"link":"logit"`, and `#predict` then shows
/// probabilities with their interval's ends mapped through `1/(1+e^(−η))`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Link {
    /// The predictor is the response (least squares).
    #[default]
    Identity,
    /// The predictor is the log-odds: the response is the probability
    /// `1 / (1 + e^(−η))`.
    Logit,
    /// The predictor is the logarithm of the response: the response is `e^η`.
    Log,
}

impl Link {
    /// The response at predictor value `eta`.
    pub fn inverse(self, eta: f64) -> f64 {
        match self {
            Link::Identity => eta,
            Link::Logit => 1.0 / (1.0 + (-eta).exp()),
            Link::Log => eta.exp(),
        }
    }
}

/// What the predictor is made of.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum PredictorForm {
    /// Linear in the coefficients: `η = Σₖ bₖ·rowₖ`, with one formula per
    /// coefficient (in coefficient order) over the request's columns. For
    /// `#linear(Yield, Light + CO2)` the row is `[1, column 0, column 1]`;
    /// a fit that forms powers itself says so: `[1, column 0, column 0 ^ 2]`.
    /// Example JSON: `{"linear":{"model_row":[{"number":1.0},{"column":0}]}}`.
    Linear {
        /// One formula per coefficient.
        model_row: Vec<Formula>,
    },
    /// Nonlinear in the coefficients: `η = f(columns; b)`, the formula's
    /// [`Formula::Parameter`]`(k)` standing for coefficient `k`. The host
    /// differentiates it for the delta method: `se = √(gᵀVg)` with `g` the
    /// gradient in the coefficients.
    /// Example JSON: `{"model":{"formula":{"mul":[{"parameter":0},{"call":["exp",{"column":0}]}]}}}`.
    Model {
        /// The model.
        formula: Formula,
    },
}

/// What a fit offers for predictions at new points (`#predict`, the
/// prediction calculator, Wald intervals): the model's form, the
/// covariance of its coefficients, the link, and the residual spread for
/// intervals of a new observation.
///
/// Example (a straight line `Yield = b₀ + b₁·Light` with 10 residual
/// degrees of freedom), as JSON:
/// `{"form":{"linear":{"model_row":[{"number":1.0},{"column":0}]}},
///   "covariance":[[0.5,-0.03],[-0.03,0.002]],"link":"identity",
///   "residual_sd":1.2,"df":10.0}`
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Predictor {
    /// How a new row of the request's columns becomes the predictor.
    pub form: PredictorForm,
    /// The covariance of the coefficients, one row per coefficient in
    /// coefficient order; rows and columns of a coefficient without an
    /// estimate are zero.
    pub covariance: Vec<Vec<f64>>,
    /// How the predictor becomes the response.
    #[serde(default)]
    pub link: Link,
    /// The residual standard deviation, for the interval of a new
    /// observation (identity link only); absent when the fit has no such
    /// interval.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residual_sd: Option<f64>,
    /// Degrees of freedom of Student's t for the intervals; absent for
    /// normal (z) intervals.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub df: Option<f64>,
}

/// A fit's log-likelihood, for AIC, BIC and likelihood-ratio tests:
/// `AIC = 2k − 2ℓ`, `BIC = k·ln(n) − 2ℓ` (Akaike 1974; Schwarz 1978), with
/// `k` = [`Likelihood::parameters`] and `n` = [`Likelihood::observations`].
///
/// Example JSON: `{"log_likelihood":-104.2,"parameters":4.0,"observations":100.0}`
/// gives AIC = 216.4.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Likelihood {
    /// The maximised log-likelihood `ℓ`.
    pub log_likelihood: f64,
    /// The parameters counted in AIC and BIC.
    pub parameters: f64,
    /// The observations counted in BIC.
    pub observations: f64,
}

impl Likelihood {
    /// `2k − 2ℓ`.
    pub fn aic(&self) -> f64 {
        2.0 * self.parameters - 2.0 * self.log_likelihood
    }
    /// `k·ln(n) − 2ℓ`.
    pub fn bic(&self) -> f64 {
        self.parameters * self.observations.ln() - 2.0 * self.log_likelihood
    }
}

/// The sums of squares of a least-squares fit, for nested F tests and for
/// comparing fits.
///
/// Example JSON: `{"ss_resid":41.2,"df_resid":97.0,"r_squared":0.71,"adj_r_squared":0.70}`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LeastSquares {
    /// Residual sum of squares (weighted, for a weighted fit).
    pub ss_resid: f64,
    /// Residual degrees of freedom.
    pub df_resid: f64,
    /// R² (uncentred without an intercept).
    pub r_squared: f64,
    /// Adjusted R².
    pub adj_r_squared: f64,
}

/// What a fit returns.
///
/// Besides its tables, a fit declares what it can do by filling the
/// optional capabilities: [`FitOutcome::predictor`] (predictions with
/// intervals, the calculator), [`FitOutcome::likelihood`] (AIC, BIC,
/// likelihood-ratio tests in `#compare`), [`FitOutcome::least_squares`]
/// (nested F tests, R² in `#compare`). Nothing downstream looks at the
/// function's name.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitOutcome {
    /// The coefficients, intercept first when there is one.
    pub coefficients: Vec<Coefficient>,
    /// Named statistics in display order.
    #[serde(default)]
    pub statistics: Vec<Statistic>,
    /// Per-row columns.
    #[serde(default)]
    pub rows: Vec<RowColumn>,
    /// Plain-language warnings about this fit.
    #[serde(default)]
    pub warnings: Vec<String>,
    /// Which R² the fit reports and similar remarks.
    #[serde(default)]
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
    /// Warnings about one term or column of the request, named by its label
    /// ([`Column::term`] or [`Column::name`]): the host shows them with a
    /// caret under that term in the request text.
    #[serde(default)]
    pub term_warnings: Vec<TermWarning>,
    /// Predictions at new points, when the fit offers them.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub predictor: Option<Predictor>,
    /// The log-likelihood, when the fit has one.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub likelihood: Option<Likelihood>,
    /// The sums of squares, for a least-squares fit.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub least_squares: Option<LeastSquares>,
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
    /// The row at fault, by its index among the rows sent (zero-based): the
    /// host replaces `{row}` in the message with the row's place on its
    /// sheet ("row 57 of Weekly"). Optional in the JSON, so protocol
    /// version 1 is unchanged.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub row: Option<usize>,
}

impl FitError {
    /// A new error.
    pub fn new(message: impl Into<String>) -> Self {
        FitError { message: message.into(), help: None, term: None, row: None }
    }
    /// Names the row at fault (index among the rows sent); the message
    /// says where with `{row}`.
    pub fn at_row(mut self, row: usize) -> Self {
        self.row = Some(row);
        self
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

/// A warning about one term or column of the request.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TermWarning {
    /// The term's or column's label, as sent.
    pub term: String,
    /// The warning.
    pub text: String,
}

/// A warning about one row of the data.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
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

    /// The per-row column of a role.
    pub fn row_column(&self, role: &RowRole) -> Option<&RowColumn> {
        self.rows.iter().find(|c| &c.role == role)
    }

    /// Checks everything an outcome promises against its request: at least
    /// one coefficient; estimates, standard errors, statistics and interval
    /// ends finite or absent (a statistic may be NaN: undefined); one value
    /// per row in every row column, finite or NaN; rows named by index
    /// among the rows sent; the covariance `p × p` and finite; a model row
    /// of one formula per coefficient naming only columns sent; a model
    /// formula naming only columns sent and coefficients there are; finite
    /// capability figures. Returns a message naming the first fault.
    pub fn check_shape(&self, request: &FitRequest) -> Result<(), String> {
        let n = request.rows();
        let p = self.coefficients.len();
        if p == 0 {
            return Err("the outcome has no coefficients".into());
        }
        for c in &self.coefficients {
            let fields = [("estimate", c.estimate), ("standard error", c.std_error), ("statistic", c.statistic), ("p-value", c.p_value), ("lower end", c.lower), ("upper end", c.upper), ("VIF", c.vif), ("standardized coefficient", c.standardized)];
            for (what, v) in fields {
                if v.is_some_and(|x| !x.is_finite()) {
                    return Err(format!("the coefficient '{}' has a {what} that is not a finite number", c.term));
                }
            }
            if c.p_value.is_some_and(|x| !(0.0..=1.0).contains(&x)) {
                return Err(format!("the coefficient '{}' has a p-value outside 0 to 1", c.term));
            }
        }
        for s in &self.statistics {
            if s.value.is_infinite() {
                return Err(format!("the statistic '{}' is infinite", s.key));
            }
        }
        for c in &self.rows {
            if c.values.len() != n {
                return Err(format!("the column '{}' has {} values for {} rows", c.label, c.values.len(), n));
            }
            if c.values.iter().any(|v| v.is_infinite()) {
                return Err(format!("the column '{}' has an infinite value", c.label));
            }
        }
        for (key, &row) in &self.statistic_rows {
            if row >= n {
                return Err(format!("the statistic '{key}' names row {row} of {n}"));
            }
            if !self.statistics.iter().any(|s| &s.key == key) {
                return Err(format!("a row is given for the statistic '{key}', which the outcome does not have"));
            }
        }
        for w in &self.term_warnings {
            if !request.columns.iter().any(|c| c.name == w.term || c.term == w.term) {
                return Err(format!("a warning names the term '{}', which the request does not have", w.term));
            }
        }
        for w in &self.row_warnings {
            if w.row >= n {
                return Err(format!("a warning names row {} of {}", w.row, n));
            }
        }
        if let Some(pr) = &self.predictor {
            let v = &pr.covariance;
            if v.len() != p || v.iter().any(|r| r.len() != p) {
                return Err(format!("the covariance matrix is not {p} × {p} (one row and column per coefficient)"));
            }
            if v.iter().flatten().any(|x| !x.is_finite()) {
                return Err("the covariance matrix has a value that is not a finite number".into());
            }
            let k = request.columns.len();
            match &pr.form {
                PredictorForm::Linear { model_row } => {
                    if model_row.len() != p {
                        return Err(format!("the model row has {} formulas for {p} coefficients", model_row.len()));
                    }
                    if let Some(f) = model_row.iter().find(|f| f.has_parameters() || f.max_column().is_some_and(|j| j >= k)) {
                        return Err(format!("a model row formula names a parameter or a column beyond the {k} sent: {f:?}"));
                    }
                }
                PredictorForm::Model { formula } => {
                    if formula.max_column().is_some_and(|j| j >= k) || formula.max_parameter().is_some_and(|j| j >= p) {
                        return Err(format!("the model formula names a column beyond the {k} sent or a coefficient beyond the {p} there are"));
                    }
                }
            }
            for (what, x) in [("residual standard deviation", pr.residual_sd), ("degrees of freedom", pr.df)] {
                if x.is_some_and(|x| !x.is_finite() || x <= 0.0) {
                    return Err(format!("the predictor's {what} is not a positive finite number"));
                }
            }
        }
        if let Some(l) = &self.likelihood {
            if !l.log_likelihood.is_finite() || !l.parameters.is_finite() || l.observations.is_nan() || l.observations <= 0.0 {
                return Err("the log-likelihood, its parameter count or its observation count is not a finite number".into());
            }
        }
        if let Some(l) = &self.least_squares {
            if !l.ss_resid.is_finite() || l.ss_resid < 0.0 || !l.df_resid.is_finite() {
                return Err("the residual sum of squares or its degrees of freedom are not finite".into());
            }
        }
        Ok(())
    }
}

/// NaN as JSON `null` and back (JSON has no NaN).
mod nan_as_null {
    use serde::{Deserialize, Deserializer, Serializer};
    pub fn serialize<S: Serializer>(x: &f64, s: S) -> Result<S::Ok, S::Error> {
        if x.is_finite() {
            s.serialize_f64(*x)
        } else {
            s.serialize_none()
        }
    }
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
        Ok(Option::<f64>::deserialize(d)?.unwrap_or(f64::NAN))
    }
}

/// A list of numbers with NaN as JSON `null`.
mod nan_as_null_vec {
    use serde::{Deserialize, Deserializer, Serializer};
    pub fn serialize<S: Serializer>(v: &[f64], s: S) -> Result<S::Ok, S::Error> {
        s.collect_seq(v.iter().map(|x| x.is_finite().then_some(*x)))
    }
    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<Vec<f64>, D::Error> {
        Ok(Vec::<Option<f64>>::deserialize(d)?.into_iter().map(|x| x.unwrap_or(f64::NAN)).collect())
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
    /// Every function, in the order the docs list them.
    pub const ALL: [Function; 9] = [
        Function::Log,
        Function::Log10,
        Function::Exp,
        Function::Sqrt,
        Function::Abs,
        Function::Sin,
        Function::Cos,
        Function::Tan,
        Function::Atan,
    ];

    /// The function of a fit-language name (`log`, `sin`, …), case-insensitive.
    /// `ln` is another name of `log`, the natural logarithm (the
    /// spreadsheet's LN; its LOG is base 10, here `log10`).
    pub fn from_name(name: &str) -> Option<Function> {
        Some(match name.to_ascii_lowercase().as_str() {
            "log" | "ln" => Function::Log,
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
/// ([`PredictorForm::Linear`]: `Light^2` is `{"pow":[{"column":0},{"number":2.0}]}`)
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

    /// The derivative in parameter `parameter` as a formula, by the rules
    /// of calculus (common practice): constants and columns give 0, the
    /// parameter itself 1; `(a ± b)' = a' ± b'`, `(a·b)' = a'·b + a·b'`,
    /// `(a/b)' = a'/b − a·b'/b²`, `(a^b)' = b·a^(b−1)·a' + a^b·ln(a)·b'`
    /// (each part only where its derivative is not 0), and the chain rule
    /// `f(a)' = f'(a)·a'` with `log' = 1/a`, `log10' = 1/(a·ln 10)`,
    /// `exp' = exp(a)`, `sqrt' = 0.5/sqrt(a)`, `abs' = a/abs(a)` (undefined
    /// at 0, where [`Formula::gradient`] takes 0), `sin' = cos(a)`,
    /// `cos' = −sin(a)`, `tan' = 1/cos(a)^2`, `atan' = 1/(1 + a^2)`.
    ///
    /// The result is lightly simplified as it is built: `0·x` and `0/x` are
    /// 0, `1·x`, `x/1`, `x + 0`, `x − 0` and `x^1` are `x`, `x^0` is 1,
    /// `−(−x)` is `x`, and operations on two numbers are folded. It equals
    /// the matching entry of [`Formula::gradient`] wherever both are defined
    /// (up to rounding), and is what the prediction calculator writes as a
    /// live spreadsheet formula.
    pub fn derivative(&self, parameter: usize) -> Formula {
        use Formula as F;
        let d = |f: &Formula| f.derivative(parameter);
        match self {
            F::Number(_) | F::Column(_) => F::Number(0.0),
            F::Parameter(i) => F::Number(if *i == parameter { 1.0 } else { 0.0 }),
            F::Neg(a) => simple::neg(d(a)),
            F::Add(a, b) => simple::add(d(a), d(b)),
            F::Sub(a, b) => simple::sub(d(a), d(b)),
            F::Mul(a, b) => simple::add(simple::mul(d(a), (**b).clone()), simple::mul((**a).clone(), d(b))),
            F::Div(a, b) => {
                let (da, db) = (d(a), d(b));
                let left = simple::div(da, (**b).clone());
                if simple::is(&db, 0.0) {
                    return left;
                }
                let right = simple::div(simple::mul((**a).clone(), db), simple::pow((**b).clone(), F::Number(2.0)));
                simple::sub(left, right)
            }
            F::Pow(a, b) => {
                let (da, db) = (d(a), d(b));
                let base = if simple::is(&da, 0.0) {
                    F::Number(0.0)
                } else {
                    let less = simple::sub((**b).clone(), F::Number(1.0));
                    simple::mul(simple::mul((**b).clone(), simple::pow((**a).clone(), less)), da)
                };
                let expo = if simple::is(&db, 0.0) {
                    F::Number(0.0)
                } else {
                    simple::mul(simple::mul(self.clone(), F::Call(Function::Log, a.clone())), db)
                };
                simple::add(base, expo)
            }
            F::Call(f, a) => {
                let da = d(a);
                if simple::is(&da, 0.0) {
                    return F::Number(0.0);
                }
                let a = (**a).clone();
                let outer = match f {
                    Function::Log => simple::div(F::Number(1.0), a),
                    Function::Log10 => simple::div(F::Number(1.0), simple::mul(a, F::Number(std::f64::consts::LN_10))),
                    Function::Exp => F::Call(Function::Exp, Box::new(a)),
                    Function::Sqrt => simple::div(F::Number(0.5), F::Call(Function::Sqrt, Box::new(a))),
                    Function::Abs => simple::div(a.clone(), F::Call(Function::Abs, Box::new(a))),
                    Function::Sin => F::Call(Function::Cos, Box::new(a)),
                    Function::Cos => simple::neg(F::Call(Function::Sin, Box::new(a))),
                    Function::Tan => simple::div(F::Number(1.0), simple::pow(F::Call(Function::Cos, Box::new(a)), F::Number(2.0))),
                    Function::Atan => simple::div(F::Number(1.0), simple::add(F::Number(1.0), simple::pow(a, F::Number(2.0)))),
                };
                simple::mul(outer, da)
            }
        }
    }

    /// The largest column index used, if any.
    pub fn max_column(&self) -> Option<usize> {
        self.fold_index(&|f| if let Formula::Column(j) = f { Some(*j) } else { None })
    }

    /// The largest parameter index used, if any.
    pub fn max_parameter(&self) -> Option<usize> {
        self.fold_index(&|f| if let Formula::Parameter(j) = f { Some(*j) } else { None })
    }

    fn fold_index(&self, leaf: &dyn Fn(&Formula) -> Option<usize>) -> Option<usize> {
        match self {
            Formula::Number(_) | Formula::Column(_) | Formula::Parameter(_) => leaf(self),
            Formula::Neg(a) | Formula::Call(_, a) => a.fold_index(leaf),
            Formula::Add(a, b) | Formula::Sub(a, b) | Formula::Mul(a, b) | Formula::Div(a, b) | Formula::Pow(a, b) => a.fold_index(leaf).max(b.fold_index(leaf)),
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

/// The constructors of [`Formula::derivative`] that simplify as they
/// build: the identities of 0 and 1, double negation, and folding of
/// operations on two numbers.
mod simple {
    use super::{pow as power, Formula};

    /// Whether `f` is the number `x`.
    pub fn is(f: &Formula, x: f64) -> bool {
        matches!(f, Formula::Number(y) if *y == x)
    }

    fn both(a: &Formula, b: &Formula) -> Option<(f64, f64)> {
        match (a, b) {
            (Formula::Number(x), Formula::Number(y)) => Some((*x, *y)),
            _ => None,
        }
    }

    pub fn neg(a: Formula) -> Formula {
        match a {
            Formula::Number(x) => Formula::Number(-x),
            Formula::Neg(x) => *x,
            a => Formula::Neg(Box::new(a)),
        }
    }

    pub fn add(a: Formula, b: Formula) -> Formula {
        if let Some((x, y)) = both(&a, &b) {
            return Formula::Number(x + y);
        }
        if is(&a, 0.0) {
            b
        } else if is(&b, 0.0) {
            a
        } else {
            Formula::Add(Box::new(a), Box::new(b))
        }
    }

    pub fn sub(a: Formula, b: Formula) -> Formula {
        if let Some((x, y)) = both(&a, &b) {
            return Formula::Number(x - y);
        }
        if is(&b, 0.0) {
            a
        } else if is(&a, 0.0) {
            neg(b)
        } else {
            Formula::Sub(Box::new(a), Box::new(b))
        }
    }

    pub fn mul(a: Formula, b: Formula) -> Formula {
        if let Some((x, y)) = both(&a, &b) {
            return Formula::Number(x * y);
        }
        if is(&a, 0.0) || is(&b, 0.0) {
            Formula::Number(0.0)
        } else if is(&a, 1.0) {
            b
        } else if is(&b, 1.0) {
            a
        } else if is(&a, -1.0) {
            neg(b)
        } else if is(&b, -1.0) {
            neg(a)
        } else {
            Formula::Mul(Box::new(a), Box::new(b))
        }
    }

    pub fn div(a: Formula, b: Formula) -> Formula {
        if let Some((x, y)) = both(&a, &b) {
            return Formula::Number(x / y);
        }
        if is(&a, 0.0) {
            Formula::Number(0.0)
        } else if is(&b, 1.0) {
            a
        } else {
            Formula::Div(Box::new(a), Box::new(b))
        }
    }

    pub fn pow(a: Formula, b: Formula) -> Formula {
        if let Some((x, y)) = both(&a, &b) {
            return Formula::Number(power(x, y));
        }
        if is(&b, 1.0) {
            a
        } else if is(&b, 0.0) {
            Formula::Number(1.0)
        } else {
            Formula::Pow(Box::new(a), Box::new(b))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn col(name: &str, values: &[f64]) -> Column {
        Column { name: name.into(), term: name.into(), values: values.to_vec(), power: None }
    }

    fn request() -> FitRequest {
        let mut options = BTreeMap::new();
        let mut start = BTreeMap::new();
        start.insert("a".to_string(), OptionValue::Number(40.0));
        options.insert("start".to_string(), OptionValue::Group(start));
        FitRequest { options, ..FitRequest::new("linear", col("Yield", &[1.0, 2.0, 4.0]), vec![col("Light", &[1.0, 2.0, 3.0])]) }
    }

    /// A well-formed outcome for [`request`] (invented figures: only its
    /// shape is checked).
    fn outcome() -> FitOutcome {
        let c = |term: &str, e: f64| Coefficient { term: term.into(), estimate: Some(e), std_error: Some(0.5), statistic: Some(e / 0.5), p_value: Some(0.2), lower: Some(e - 1.0), upper: Some(e + 1.0), vif: None, standardized: None, remark: None, term_p_value: None };
        FitOutcome {
            coefficients: vec![c("(intercept)", -1.0), c("Light", 1.5)],
            statistics: vec![Statistic::new("n", "Rows used", "Fit", 3.0).format(NumberFormat::Integer), Statistic::new("r2", "R²", "Fit", f64::NAN)],
            rows: vec![RowColumn::new(RowRole::Fitted, vec![0.5, 2.0, 3.5])],
            statistic_rows: [("n".to_string(), 2usize)].into_iter().collect(),
            predictor: Some(Predictor {
                form: PredictorForm::Linear { model_row: vec![Formula::Number(1.0), Formula::Column(0)] },
                covariance: vec![vec![0.25, 0.0], vec![0.0, 0.25]],
                link: Link::Identity,
                residual_sd: Some(0.7),
                df: Some(1.0),
            }),
            likelihood: Some(Likelihood { log_likelihood: -2.0, parameters: 2.0, observations: 3.0 }),
            ..Default::default()
        }
    }

    #[test]
    fn messages_have_a_fixed_json_form() {
        // Snapshots of the wire format: a change here is a protocol change.
        let hello = serde_json::to_string(&Message::Hello { protocol: 1 }).unwrap();
        assert_eq!(hello, r#"{"type":"hello","protocol":1}"#);
        let err = Message::Error { id: 7, error: FitError::new("too few rows").help("add rows").at_term("Light") };
        assert_eq!(serde_json::to_string(&err).unwrap(), r#"{"type":"error","id":7,"error":{"message":"too few rows","help":"add rows","term":"Light"}}"#);
        let fit = serde_json::to_string(&Message::Fit { id: 1, request: request() }).unwrap();
        assert_eq!(
            fit,
            r#"{"type":"fit","id":1,"request":{"protocol":1,"function":"linear","response":{"name":"Yield","term":"Yield","values":[1.0,2.0,4.0]},"columns":[{"name":"Light","term":"Light","values":[1.0,2.0,3.0]}],"intercept":true,"weights":null,"level":0.95,"options":{"start":{"group":{"a":{"number":40.0}}}}}}"#
        );
        let out = serde_json::to_string(&Message::Outcome { id: 1, outcome: outcome() }).unwrap();
        assert!(out.contains(r#""rows":[{"role":"fitted","label":"Fitted","values":[0.5,2.0,3.5]}]"#), "{out}");
        assert!(out.contains(r#"{"key":"r2","label":"R²","group":"Fit","format":"decimal","value":null}"#), "{out}");
        assert!(out.contains(r#""predictor":{"form":{"linear":{"model_row":[{"number":1.0},{"column":0}]}},"covariance":[[0.25,0.0],[0.0,0.25]],"link":"identity","residual_sd":0.7,"df":1.0}"#), "{out}");
        // And back, NaN included.
        let back: Message = serde_json::from_str(&out).unwrap();
        let Message::Outcome { outcome: o, .. } = back else { panic!("an outcome") };
        assert!(o.statistics[1].value.is_nan());
        assert_eq!(o.predictor, outcome().predictor);
    }

    #[test]
    fn a_group_option_is_shown_by_its_example() {
        let group = |example: Option<&str>| ParamSpec {
            name: "start".into(),
            kind: ParamKind::Group,
            required: true,
            default: None,
            choices: Vec::new(),
            help: "starting values".into(),
            example: example.map(Into::into),
        };
        let spec = |o: ParamSpec| FunctionSpec { name: "curve".into(), help: String::new(), positional: Vec::new(), options: vec![o] };
        assert_eq!(spec(group(Some("start(a=…, k=…)"))).signature(), "#curve(start(a=…, k=…))");
        assert_eq!(spec(group(None)).signature(), "#curve(start(key=value, …))");
        // A manifest from before the field reads (no example), and a spec
        // without one is written without it: the JSON form is unchanged.
        let old = r#"{"name":"start","kind":"group","required":true,"default":null,"choices":[],"help":"starting values"}"#;
        assert_eq!(serde_json::from_str::<ParamSpec>(old).unwrap(), group(None));
        assert_eq!(serde_json::to_string(&group(None)).unwrap(), old);
        let new = serde_json::to_string(&group(Some("start(a=…)"))).unwrap();
        assert!(new.ends_with(r#""help":"starting values","example":"start(a=…)"}"#), "{new}");
    }

    #[test]
    fn unknown_fields_are_refused() {
        let bad = r#"{"type":"hello","protocol":1,"colour":"red"}"#;
        assert!(serde_json::from_str::<Message>(bad).is_err());
        let bad = r#"{"message":"x","hint":"y"}"#;
        assert!(serde_json::from_str::<FitError>(bad).is_err());
        let bad = r#"{"role":"fitted","label":"F","values":[1.0],"extra":1}"#;
        assert!(serde_json::from_str::<RowColumn>(bad).is_err());
        // An outcome with only its coefficients reads (everything else has a default).
        let ok = r#"{"coefficients":[{"term":"b","estimate":1.0,"std_error":null,"statistic":null,"p_value":null,"lower":null,"upper":null}]}"#;
        assert!(serde_json::from_str::<FitOutcome>(ok).is_ok());
    }

    #[test]
    fn a_sound_outcome_passes_its_checks() {
        assert_eq!(outcome().check_shape(&request()), Ok(()));
    }

    #[test]
    fn check_shape_refuses_each_fault_it_promises_to_find() {
        let req = request();
        type Spoil = Box<dyn Fn(&mut FitOutcome)>;
        let cases: Vec<(&str, Spoil)> = vec![
            ("no coefficients", Box::new(|o| o.coefficients.clear())),
            ("estimate that is not a finite", Box::new(|o| o.coefficients[0].estimate = Some(f64::NAN))),
            ("standard error that is not a finite", Box::new(|o| o.coefficients[1].std_error = Some(f64::INFINITY))),
            ("p-value outside 0 to 1", Box::new(|o| o.coefficients[1].p_value = Some(1.5))),
            ("statistic 'n' is infinite", Box::new(|o| o.statistics[0].value = f64::INFINITY)),
            ("2 values for 3 rows", Box::new(|o| o.rows[0].values.pop().map(drop).unwrap_or(()))),
            ("infinite value", Box::new(|o| o.rows[0].values[0] = f64::NEG_INFINITY)),
            ("names row 3 of 3", Box::new(|o| {
                o.statistic_rows.insert("n".into(), 3);
            })),
            ("does not have", Box::new(|o| {
                o.statistic_rows.insert("missing".into(), 0);
            })),
            ("a warning names row 9", Box::new(|o| o.row_warnings.push(RowWarning { row: 9, text: "{row}".into() }))),
            ("the term 'CO2'", Box::new(|o| o.term_warnings.push(TermWarning { term: "CO2".into(), text: "collinear".into() }))),
            ("not 2 × 2", Box::new(|o| o.predictor.as_mut().unwrap().covariance.pop().map(drop).unwrap_or(()))),
            ("not a finite number", Box::new(|o| o.predictor.as_mut().unwrap().covariance[0][1] = f64::NAN)),
            ("3 formulas for 2", Box::new(|o| {
                if let PredictorForm::Linear { model_row } = &mut o.predictor.as_mut().unwrap().form {
                    model_row.push(Formula::Number(1.0));
                }
            })),
            ("beyond the 1 sent", Box::new(|o| {
                if let PredictorForm::Linear { model_row } = &mut o.predictor.as_mut().unwrap().form {
                    model_row[1] = Formula::Column(1);
                }
            })),
            ("coefficient beyond", Box::new(|o| o.predictor.as_mut().unwrap().form = PredictorForm::Model { formula: Formula::Parameter(2) })),
            ("residual standard deviation", Box::new(|o| o.predictor.as_mut().unwrap().residual_sd = Some(-1.0))),
            ("log-likelihood", Box::new(|o| o.likelihood.as_mut().unwrap().log_likelihood = f64::NAN)),
            ("residual sum of squares", Box::new(|o| o.least_squares = Some(LeastSquares { ss_resid: -1.0, df_resid: 1.0, r_squared: 0.5, adj_r_squared: 0.0 }))),
        ];
        for (want, spoil) in cases {
            let mut o = outcome();
            spoil(&mut o);
            let e = o.check_shape(&req).expect_err(want);
            assert!(e.contains(want), "expected '{want}' in '{e}'");
        }
    }

    #[test]
    fn symbolic_derivatives_are_simplified_and_agree_with_the_gradient() {
        use Formula as F;
        let b = |f: F| Box::new(f);
        // a·exp(−k·x) + c (parameters a, k, c; column x), by hand (common
        // practice): ∂/∂a = exp(−k·x), ∂/∂k = a·(exp(−k·x)·(−x)), ∂/∂c = 1.
        let e = F::Call(Function::Exp, b(F::Neg(b(F::Mul(b(F::Parameter(1)), b(F::Column(0)))))));
        let f = F::Add(b(F::Mul(b(F::Parameter(0)), b(e.clone()))), b(F::Parameter(2)));
        assert_eq!(f.derivative(0), e);
        assert_eq!(f.derivative(1), F::Mul(b(F::Parameter(0)), b(F::Mul(b(e.clone()), b(F::Neg(b(F::Column(0))))))));
        assert_eq!(f.derivative(2), F::Number(1.0));
        assert_eq!(f.derivative(3), F::Number(0.0), "a parameter the formula does not use");
        // x^1, x + 0, constant folding: (p^2)' = 2·p, (3·2)' = 0, (p/2)' = 0.5.
        assert_eq!(F::pow(F::Parameter(0), F::Number(2.0)).derivative(0), F::Mul(b(F::Number(2.0)), b(F::Parameter(0))));
        assert_eq!(F::Mul(b(F::Number(3.0)), b(F::Number(2.0))).derivative(0), F::Number(0.0));
        assert_eq!(F::Div(b(F::Parameter(0)), b(F::Number(2.0))).derivative(0), F::Number(0.5));
        // Every function through the chain rule against the forward gradient
        // at p = 0.7 (common practice).
        for func in Function::ALL {
            let g = F::Call(func, b(F::Mul(b(F::Parameter(0)), b(F::Column(0)))));
            let (cols, ps) = ([1.5], [0.7]);
            let (_, want) = g.gradient(&cols, &ps);
            let got = g.derivative(0).eval(&cols, &ps);
            assert!((got - want[0]).abs() <= 1e-14 * want[0].abs(), "{}: {got} against {}", func.name(), want[0]);
        }
    }

    #[test]
    fn formulas_differentiate_by_the_rules_of_calculus() {
        // d/da, d/db of a·x^b + sin(a/b) at a = 2, b = 3, x = 1.5, worked by
        // hand (common practice): ∂/∂a = x^b + cos(a/b)/b,
        // ∂/∂b = a·x^b·ln x − a·cos(a/b)/b².
        let (a, b, x) = (2.0f64, 3.0f64, 1.5f64);
        let f = Formula::Add(
            Box::new(Formula::Mul(Box::new(Formula::Parameter(0)), Box::new(Formula::pow(Formula::Column(0), Formula::Parameter(1))))),
            Box::new(Formula::Call(Function::Sin, Box::new(Formula::Div(Box::new(Formula::Parameter(0)), Box::new(Formula::Parameter(1)))))),
        );
        let (v, g) = f.gradient(&[x], &[a, b]);
        assert!((v - (a * x.powf(b) + (a / b).sin())).abs() < 1e-14);
        assert!((g[0] - (x.powf(b) + (a / b).cos() / b)).abs() < 1e-14);
        assert!((g[1] - (a * x.powf(b) * x.ln() - a * (a / b).cos() / (b * b))).abs() < 1e-13);
        assert_eq!(f.eval(&[x], &[a, b]), v);
        assert_eq!((f.max_column(), f.max_parameter()), (Some(0), Some(1)));
        // Every function's derivative against a central difference (common practice).
        for func in [Function::Log, Function::Log10, Function::Exp, Function::Sqrt, Function::Abs, Function::Sin, Function::Cos, Function::Tan, Function::Atan] {
            let (x, h) = (0.7, 1e-6);
            let num = (func.apply(x + h) - func.apply(x - h)) / (2.0 * h);
            assert!((func.derivative(x) - num).abs() < 1e-8, "{}", func.name());
            assert_eq!(Function::from_name(func.name()), Some(func));
            assert_eq!(Function::from_name("ln"), Some(Function::Log), "ln is the natural log, as log is");
        }
    }
}
