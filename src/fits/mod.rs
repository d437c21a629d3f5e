//! Fits and the registry that serves them.
//!
//! Every function of the fit language is served by a [`Fit`] registered
//! under its name. The built-in fits (`linear.rs`, `polynomial.rs`, `nonlinear.rs`, `logistic.rs`) register exactly as an
//! external plugin would, so the rest of the program never knows which kind
//! answered a request.

pub mod linear;
pub mod logistic;
pub mod nonlinear;
pub mod polynomial;
pub mod robust;

use crate::protocol::{FitOutcome, FitRequest, FunctionSpec, Manifest, PROTOCOL_VERSION};
use std::collections::BTreeMap;
use std::fmt;

/// A fit that turns a resolved request into an outcome.
pub trait Fit: Send + Sync {
    /// The function it serves: name, parameters, options and help.
    fn spec(&self) -> &FunctionSpec;
    /// Runs the fit. An `Err` is a message in the user's terms, shown at the
    /// request's cell.
    fn fit(&self, request: &FitRequest) -> Result<FitOutcome, FitError>;
}

pub use crate::protocol::FitError;

/// Why a plugin could not be registered.
#[derive(Debug, Clone, PartialEq)]
pub enum RegistryError {
    /// Another plugin already serves this function.
    Duplicate { function: String, plugin: String },
    /// The plugin speaks another protocol version.
    Version { plugin: String, version: u32 },
}

impl fmt::Display for RegistryError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            RegistryError::Duplicate { function, plugin } => {
                write!(f, "the function '{function}' is already served by the plugin '{plugin}'")
            }
            RegistryError::Version { plugin, version } => write!(
                f,
                "the plugin '{plugin}' speaks protocol version {version}; this plumb speaks version {PROTOCOL_VERSION}"
            ),
        }
    }
}

impl std::error::Error for RegistryError {}

struct Entry {
    plugin: String,
    fit: Box<dyn Fit>,
}

/// Fits keyed by function name, and the host's own functions.
pub struct Registry {
    entries: BTreeMap<String, Entry>,
    /// Functions the host evaluates itself after the fits (`#predict`,
    /// `#compare`): they work on other requests' outcomes, not on data.
    host: BTreeMap<String, FunctionSpec>,
}

impl Registry {
    /// An empty registry.
    pub fn empty() -> Self {
        Registry { entries: BTreeMap::new(), host: BTreeMap::new() }
    }

    /// The registry with every built-in fit.
    pub fn builtin() -> Self {
        let mut r = Registry::empty();
        let manifest_version = env!("CARGO_PKG_VERSION");
        for fit in [Box::new(linear::Linear::new()) as Box<dyn Fit>, Box::new(polynomial::Polynomial::new()), Box::new(nonlinear::Nonlinear::new()), Box::new(robust::Robust::new()), Box::new(logistic::Logistic::new())] {
            // Invariant: built-in names are distinct and speak our version.
            if let Err(e) = r.register("builtin", PROTOCOL_VERSION, fit) {
                unreachable!("built-in fits clash ({manifest_version}): {e}");
            }
        }
        for spec in host_functions() {
            r.host.insert(spec.name.clone(), spec);
        }
        r
    }

    /// A function the host evaluates itself, by name (case-insensitive).
    pub fn host_function(&self, name: &str) -> Option<&FunctionSpec> {
        self.host.get(&name.to_lowercase())
    }

    /// Adds a fit served by `plugin` speaking protocol `version`.
    pub fn register(&mut self, plugin: &str, version: u32, fit: Box<dyn Fit>) -> Result<(), RegistryError> {
        if version != PROTOCOL_VERSION {
            return Err(RegistryError::Version { plugin: plugin.to_string(), version });
        }
        let name = fit.spec().name.to_lowercase();
        if self.host.contains_key(&name) {
            return Err(RegistryError::Duplicate { function: name, plugin: "host".into() });
        }
        if let Some(e) = self.entries.get(&name) {
            return Err(RegistryError::Duplicate { function: name, plugin: e.plugin.clone() });
        }
        self.entries.insert(name, Entry { plugin: plugin.to_string(), fit });
        Ok(())
    }

    /// The fit serving a function name (case-insensitive).
    pub fn get(&self, name: &str) -> Option<&dyn Fit> {
        self.entries.get(&name.to_lowercase()).map(|e| &*e.fit)
    }

    /// Every function's spec with its plugin (`host` for the host's own), by name.
    pub fn functions(&self) -> impl Iterator<Item = (&str, &FunctionSpec)> {
        self.entries.values().map(|e| (e.plugin.as_str(), e.fit.spec())).chain(self.host.values().map(|s| ("host", s)))
    }

    /// The names of every function, for suggestions.
    pub fn names(&self) -> impl Iterator<Item = &str> {
        self.entries.keys().map(|k| k.as_str()).chain(self.host.keys().map(|k| k.as_str()))
    }

    /// The manifest of the built-in plugin.
    pub fn builtin_manifest(&self) -> Manifest {
        Manifest {
            protocol: PROTOCOL_VERSION,
            plugin: "builtin".into(),
            version: env!("CARGO_PKG_VERSION").into(),
            functions: self.entries.values().filter(|e| e.plugin == "builtin").map(|e| e.fit.spec().clone()).collect(),
        }
    }
}

/// The specs of the host's own functions: `#predict` and `#compare`.
pub fn host_functions() -> Vec<FunctionSpec> {
    use crate::protocol::{ParamKind, ParamSpec};
    let p = |name: &str, kind: ParamKind, required: bool, default: Option<&str>, help: &str| ParamSpec {
        name: name.into(),
        kind,
        required,
        default: default.map(Into::into),
        choices: Vec::new(),
        help: help.into(),
        example: None,
    };
    vec![
        FunctionSpec {
            name: "predict".into(),
            help: "the fitted value of a named fit at new values, with the standard error of the fitted value, the confidence interval (where the mean response is estimated to lie) and the prediction interval (where one new observation would fall); new values as column=value, or a table with rows=".into(),
            positional: vec![p("fit", ParamKind::FitName, true, None, "the name= of a #linear request in this workbook")],
            options: vec![
                p("rows", ParamKind::Range, false, None, "a table of new values, headers in its first row, such as rows=Plan!A1:C13"),
                p("confidence", ParamKind::Number, false, None, "confidence level of both intervals, between 0 and 1 (default: the fit's confidence=)"),
                p("<column>", ParamKind::Column, false, None, "each column of the fit = its new value, such as Light=14 or Bay=\"North\" (every column the fit uses, unless rows= is given)"),
            ],
        },
        FunctionSpec {
            name: "compare".into(),
            help: "a side-by-side comparison of named fits of one response on the same rows: R², AIC, BIC, nested F tests and the coefficients".into(),
            positional: vec![
                p("fit", ParamKind::FitName, true, None, "the name= of a fit"),
                p("fit", ParamKind::FitName, true, None, "another fit's name; give as many as you like"),
            ],
            options: Vec::new(),
        },
    ]
}
