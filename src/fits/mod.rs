//! Fits and the registry that serves them.
//!
//! Every function of the fit language is served by a [`Fit`] registered
//! under its name. The built-in fits (`linear.rs`, `polynomial.rs`) register exactly as an
//! external plugin would, so the rest of the program never knows which kind
//! answered a request.

pub mod linear;
pub mod polynomial;

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

/// A fit that could not be done, in the user's terms.
#[derive(Debug, Clone, PartialEq)]
pub struct FitError {
    /// What happened.
    pub message: String,
    /// What would fix it.
    pub help: Option<String>,
}

impl FitError {
    /// A new error.
    pub fn new(message: impl Into<String>) -> Self {
        FitError { message: message.into(), help: None }
    }
    /// Adds what would fix it.
    pub fn help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }
}

impl fmt::Display for FitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for FitError {}

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

/// Fits keyed by function name.
pub struct Registry {
    entries: BTreeMap<String, Entry>,
}

impl Registry {
    /// An empty registry.
    pub fn empty() -> Self {
        Registry { entries: BTreeMap::new() }
    }

    /// The registry with every built-in fit.
    pub fn builtin() -> Self {
        let mut r = Registry::empty();
        let manifest_version = env!("CARGO_PKG_VERSION");
        for fit in [Box::new(linear::Linear::new()) as Box<dyn Fit>, Box::new(polynomial::Polynomial::new())] {
            // Invariant: built-in names are distinct and speak our version.
            if let Err(e) = r.register("builtin", PROTOCOL_VERSION, fit) {
                unreachable!("built-in fits clash ({manifest_version}): {e}");
            }
        }
        r
    }

    /// Adds a fit served by `plugin` speaking protocol `version`.
    pub fn register(&mut self, plugin: &str, version: u32, fit: Box<dyn Fit>) -> Result<(), RegistryError> {
        if version != PROTOCOL_VERSION {
            return Err(RegistryError::Version { plugin: plugin.to_string(), version });
        }
        let name = fit.spec().name.to_lowercase();
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

    /// Every function's spec, by name.
    pub fn functions(&self) -> impl Iterator<Item = (&str, &FunctionSpec)> {
        self.entries.values().map(|e| (e.plugin.as_str(), e.fit.spec()))
    }

    /// The names of every function, for suggestions.
    pub fn names(&self) -> impl Iterator<Item = &str> {
        self.entries.keys().map(|k| k.as_str())
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
