//! A request's arguments bound against its function's spec, by kind.
//!
//! This file owns the checks of the argument list (positional arguments
//! before options, how many, known option names, an option given once, a
//! group written as a group), and the binding of every value by the
//! [`ParamKind`] its parameter declares: columns and terms kept as
//! expressions, a model expression split into parameters and columns with
//! its [`Formula`], numbers, words of a list, fit names, sheets or ranges,
//! text and groups, each with its span in the request text. An option
//! written under a name of an earlier version ([`RENAMED_OPTIONS`]) is
//! bound to its new name with a note. It knows
//! nothing of the workbook: a host function (`#predict`, `#compare`) binds
//! through the same code as a fit.

use super::eval::unknown_function;
use super::{split_terms, typed, Here, HOST_OPTIONS};
use crate::cells::CellAddress;
use crate::problems::{closest, Problem};
use crate::protocol::{Formula, Function, FunctionSpec, OptionValue, ParamKind, ParamSpec};
use crate::syntax::{Arg, BinOp, Expr, ExprKind, Ident, RangeRef, Request, Span, UnaryOp};
use std::collections::BTreeMap;

/// A request's arguments, each bound to a parameter of its function's spec.
#[derive(Debug, Clone, PartialEq)]
pub struct Bound {
    /// The positional arguments in the order written.
    pub positional: Vec<BoundArg>,
    /// The options given, in the spec's order (a group given twice is one
    /// option with the entries of both).
    pub options: Vec<BoundArg>,
    /// The `key=value` pairs taken by a catch-all option (a spec option
    /// named in angle brackets, such as `#predict`'s `<column>`: "any other
    /// key is a column"), in the order written; [`BoundArg::name`] is the
    /// key as typed.
    pub extra: Vec<BoundArg>,
    /// What a fit receives as options: the value of every option given or
    /// defaulted in the spec, and of every positional parameter whose kind
    /// is not a column, terms or an expression, by the spec's name (the
    /// first, when a positional parameter repeats). Groups
    /// are [`OptionValue::Group`]; column, terms, expression and range
    /// options are their text as typed. Catch-all pairs are not here.
    pub values: BTreeMap<String, OptionValue>,
    /// The closing `)` of the request, where a missing argument is shown.
    pub end: Span,
    /// Notes about the arguments: an option written under its old name
    /// (one note per old name, with a caret under it).
    pub notes: Vec<Problem>,
}

/// Option names of an earlier version and the names that replaced them,
/// `(old, new)`. An old name still binds, to the new name, in this version
/// (with a note saying so), when the function has an option of the new
/// name and none of the old; otherwise it means what it always did (for
/// `#predict`, which has no `table=`, `data=` is a column). Remove an entry
/// one version after its rename.
pub const RENAMED_OPTIONS: [(&str, &str); 4] = [("data", "table"), ("level", "confidence"), ("missing", "gaps"), ("base", "against")];

/// The option of `spec` that the old name `name` (lowercase) now means, with
/// the old name as the table spells it.
fn renamed<'s>(spec: &'s FunctionSpec, name: &str) -> Option<(&'static str, &'s ParamSpec)> {
    let (old, new) = RENAMED_OPTIONS.iter().find(|(old, _)| *old == name)?;
    if spec.options.iter().any(|o| o.name.eq_ignore_ascii_case(old)) {
        return None;
    }
    let o = spec.options.iter().find(|o| !is_catch_all(o) && o.name.eq_ignore_ascii_case(new))?;
    Some((old, o))
}

/// The note that an option was written under its old name.
fn renamed_note(at: &Here, old: &str, new: &ParamSpec, key: &Ident) -> Problem {
    let was = if new.kind == ParamKind::Group { format!("{old}(…)") } else { format!("{old}=") };
    Problem::note(format!("{was} is now {}; the old name still works in this version", new.written()))
        .at(at.cell.clone())
        .in_text(at.text, key.span.start, key.span.end)
}

impl Bound {
    /// The option of that spec name (case-insensitive), when given.
    pub fn option(&self, name: &str) -> Option<&BoundArg> {
        self.options.iter().find(|o| o.name.eq_ignore_ascii_case(name))
    }
}

/// One argument bound to a parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct BoundArg {
    /// The parameter's name in the spec (for a catch-all pair, the key as
    /// typed, trimmed).
    pub name: String,
    /// The parameter's kind.
    pub kind: ParamKind,
    /// The value.
    pub value: BoundValue,
    /// The whole argument: `confidence=0.9`, `start(a=40, k=0.2)`, `Light + CO2`.
    pub span: Span,
    /// The value alone: after the `=`; for a group or a positional
    /// argument, the same as `span`.
    pub value_span: Span,
}

/// A value bound by its parameter's [`ParamKind`].
#[derive(Debug, Clone, PartialEq)]
pub enum BoundValue {
    /// [`ParamKind::Column`]: one column or an expression of columns, as parsed.
    Column(Expr),
    /// [`ParamKind::Terms`]: the terms, split at the top-level `+`.
    Terms(Vec<Expr>),
    /// [`ParamKind::Expression`]: a model with parameters.
    Expression(BoundExpression),
    /// [`ParamKind::Number`] or [`ParamKind::Integer`] (then whole).
    Number(f64),
    /// [`ParamKind::Choice`]: one of the spec's words, lowercase.
    Choice(String),
    /// [`ParamKind::FitName`]: another request's name, trimmed.
    FitName(String),
    /// [`ParamKind::Range`]: a sheet or a range of cells.
    Range(Place),
    /// [`ParamKind::Text`]: a word or quoted text, trimmed.
    Text(String),
    /// [`ParamKind::Group`]: the entries in the order written.
    Group(Vec<GroupEntry>),
}

/// What a [`ParamKind::Range`] value names.
#[derive(Debug, Clone, PartialEq)]
pub enum Place {
    /// A whole sheet, by name (`table=Sheet2`, `table='Bay 2'`).
    Sheet(String),
    /// A range of cells (`table=Sheet2!A1:F500`).
    Range(RangeRef),
}

/// One `key=value` entry of a group option.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupEntry {
    /// The key as typed, trimmed.
    pub key: String,
    /// A number, or a word or text.
    pub value: OptionValue,
    /// The key's characters.
    pub key_span: Span,
    /// The value's characters.
    pub value_span: Span,
}

/// A model expression with parameters (a value of [`ParamKind::Expression`]).
///
/// The names declared in the spec's parameter group (see
/// [`parameter_group`]) are parameters; every other name, quoted name or
/// range is a column; a bare `pi` that is not a parameter is the number π.
#[derive(Debug, Clone, PartialEq)]
pub struct BoundExpression {
    /// The expression as typed, white space folded.
    pub text: String,
    /// The expression as parsed.
    pub expr: Expr,
    /// The formula: [`Formula::Column`] indexes [`BoundExpression::columns`],
    /// [`Formula::Parameter`] indexes [`BoundExpression::parameters`].
    pub formula: Formula,
    /// The parameters in the order the group lists them, with the span of
    /// each key in the group.
    pub parameters: Vec<(String, Span)>,
    /// The name of the group option that declares them (`start`).
    pub group: String,
    /// The columns the expression uses, in order of first use.
    pub columns: Vec<ExprColumn>,
}

/// A column used in a model expression.
#[derive(Debug, Clone, PartialEq)]
pub struct ExprColumn {
    /// The column as typed at its first use (a header name, trimmed, or a range).
    pub label: String,
    /// Its first use: a name, quoted name or range.
    pub expr: Expr,
}

/// The group option of a spec that declares the parameters of its
/// [`ParamKind::Expression`] parameter (`start(a=40, k=0.2)`): the first
/// group option the host does not apply itself. `None` when the spec has
/// no expression parameter or no such group.
pub fn parameter_group(spec: &FunctionSpec) -> Option<&ParamSpec> {
    let has_expression = spec.positional.iter().chain(&spec.options).any(|p| p.kind == ParamKind::Expression);
    has_expression.then(|| spec.options.iter().find(|o| o.kind == ParamKind::Group && !HOST_OPTIONS.contains(&o.name.to_lowercase().as_str()))).flatten()
}

/// Whether a spec option is a catch-all (its name in angle brackets, such
/// as `<column>`): every `key=value` whose key is no other option's name.
pub fn is_catch_all(o: &ParamSpec) -> bool {
    o.name.starts_with('<') && o.name.ends_with('>')
}

/// The spec's parameter for the positional argument at `index`. When the
/// spec's last two positional parameters have the same name and kind (as
/// `#compare(fit, fit)`), the last one repeats: any number may follow.
fn positional_param(spec: &FunctionSpec, index: usize) -> Option<&ParamSpec> {
    if let Some(p) = spec.positional.get(index) {
        return Some(p);
    }
    match spec.positional.as_slice() {
        [.., a, b] if a.name == b.name && a.kind == b.kind => Some(b),
        _ => None,
    }
}

/// Binds a request's arguments to `spec`: what a host function calls
/// before it evaluates (`cell` and `text` are the request's cell and text,
/// for errors with a caret under the fault).
pub fn bind(spec: &FunctionSpec, req: &Request, cell: &CellAddress, text: &str) -> Result<Bound, Problem> {
    bind_at(&Here { cell, text }, spec, req)
}

/// A named or catch-all argument waiting for its value to be bound.
struct Pending<'r> {
    param: &'r ParamSpec,
    /// The name errors call it by: the old name when it was written so.
    shown: &'r str,
    key: &'r Ident,
    value: &'r Expr,
    span: Span,
}

/// [`bind`] at a place.
pub(super) fn bind_at(at: &Here, spec: &FunctionSpec, req: &Request) -> Result<Bound, Problem> {
    let end = Span { start: req.span.end.saturating_sub(1), end: req.span.end };
    let params = parameter_group(spec);
    let catch_all = spec.options.iter().find(|o| is_catch_all(o));
    let mut positional: Vec<(&ParamSpec, &Expr)> = Vec::new();
    let mut named: Vec<Pending> = Vec::new();
    let mut extra: Vec<Pending> = Vec::new();
    let mut groups: Vec<(&ParamSpec, Span, Vec<GroupEntry>)> = Vec::new();
    // Notes of options written under an old name, one per old name.
    let mut notes: Vec<(&str, Problem)> = Vec::new();
    let mut note_renamed = |old: &'static str, new: &ParamSpec, key: &Ident| {
        if !notes.iter().any(|(o, _)| *o == old) {
            notes.push((old, renamed_note(at, old, new, key)));
        }
    };
    let accepts = || {
        if spec.options.is_empty() {
            format!("#{} takes no options: {}", spec.name, spec.signature())
        } else {
            format!("#{} accepts {}", spec.name, spec.options.iter().map(|o| o.name.as_str()).collect::<Vec<_>>().join(", "))
        }
    };
    // 1. The argument list: order, count, names.
    for arg in &req.args {
        match arg {
            Arg::Positional(e) => {
                if !named.is_empty() || !extra.is_empty() {
                    return Err(at.err(e.span, "a positional argument comes after an option").help(format!(
                        "put the arguments first, then the options: {}",
                        spec.signature()
                    )));
                }
                let Some(p) = positional_param(spec, positional.len()) else {
                    return Err(at
                        .err(e.span, format!("#{} takes {} arguments before its options", spec.name, spec.positional.len()))
                        .help(format!("the call is {}", spec.signature())));
                };
                positional.push((p, e));
            }
            Arg::Named { key, value, span } => {
                let k = key.name.to_lowercase();
                let mut shown = None;
                let found = spec.options.iter().find(|o| !is_catch_all(o) && o.name.eq_ignore_ascii_case(&k)).or_else(|| {
                    let (old, o) = renamed(spec, k.trim())?;
                    shown = Some(old);
                    Some(o)
                });
                let Some(o) = found else {
                    if let Some(c) = catch_all {
                        let name = key.name.trim();
                        if extra.iter().any(|x| x.key.name.trim().eq_ignore_ascii_case(name)) {
                            return Err(at.err(*span, format!("{} is given twice", key.name)));
                        }
                        extra.push(Pending { param: c, shown: &c.name, key, value, span: *span });
                        continue;
                    }
                    // An old name near the key suggests its new one.
                    let old_names = RENAMED_OPTIONS.iter().filter(|(old, _)| renamed(spec, old).is_some()).map(|(old, _)| *old);
                    let near = closest(&k, spec.options.iter().map(|o| o.name.as_str()).chain(old_names));
                    let near: Vec<&str> = near.into_iter().map(|n| renamed(spec, n).map_or(n, |(_, o)| o.name.as_str())).collect();
                    let help = match near.first() {
                        Some(n) => format!("did you mean {n}? {}", accepts()),
                        None => accepts(),
                    };
                    return Err(at.err(key.span, format!("#{} has no option '{}'", spec.name, key.name)).help(help));
                };
                if o.kind == ParamKind::Group {
                    return Err(at.err(*span, format!("{} is written {}(column=value)", o.name, o.name)));
                }
                if named.iter().any(|n| std::ptr::eq(n.param, o)) {
                    return Err(at.err(*span, format!("the option {} is given twice", o.name)).help(format!("keep one {}=", o.name)));
                }
                if let Some(old) = shown {
                    note_renamed(old, o, key);
                }
                named.push(Pending { param: o, shown: shown.unwrap_or(o.name.as_str()), key, value, span: *span });
            }
            Arg::Group { name, entries, span } => {
                let old = renamed(spec, name.name.trim().to_lowercase().as_str());
                let o = match spec.option(&name.name).or(old.map(|r| r.1)) {
                    Some(o) if o.kind == ParamKind::Group => o,
                    _ => {
                        return Err(at
                            .err(name.span, format!("#{} has no option '{}(…)'", spec.name, name.name))
                            .help(accepts()))
                    }
                };
                if let Some((old, _)) = old {
                    note_renamed(old, o, name);
                }
                let declares_parameters = params.is_some_and(|p| std::ptr::eq(p, o));
                let mut bound = Vec::new();
                for (key, v) in entries {
                    bound.push(group_entry(at, o, key, v, declares_parameters)?);
                }
                match groups.iter_mut().find(|g| std::ptr::eq(g.0, o)) {
                    Some(g) => g.2.extend(bound),
                    None => groups.push((o, *span, bound)),
                }
            }
        }
    }
    let given = positional.len();
    if let Some(missing) = spec.positional.iter().skip(given).find(|p| p.required) {
        return Err(at
            .err(end, format!("#{} needs its {} argument ({})", spec.name, missing.name, missing.help))
            .help(format!("the call is {}", spec.signature())));
    }
    // 2. Option values by kind, in the spec's order; then the positional
    // arguments and the catch-all pairs.
    let parameters = Params {
        group: params.map(|p| p.name.as_str()),
        list: match params {
            Some(p) => parameter_list(at, p, groups.iter().find(|g| std::ptr::eq(g.0, p)).map(|g| g.2.as_slice()).unwrap_or(&[]))?,
            None => Vec::new(),
        },
    };
    let mut values: BTreeMap<String, OptionValue> = BTreeMap::new();
    let mut options = Vec::new();
    for o in spec.options.iter().filter(|o| !is_catch_all(o)) {
        if let Some((_, span, entries)) = groups.iter().find(|g| std::ptr::eq(g.0, o)) {
            let map = entries.iter().map(|e| (e.key.clone(), e.value.clone())).collect();
            values.insert(o.name.clone(), OptionValue::Group(map));
            options.push(BoundArg { name: o.name.clone(), kind: o.kind, value: BoundValue::Group(entries.clone()), span: *span, value_span: *span });
            continue;
        }
        let Some(n) = named.iter().find(|n| std::ptr::eq(n.param, o)) else {
            if let Some(d) = &o.default {
                let v = match o.kind {
                    ParamKind::Number | ParamKind::Integer => d.parse().map(OptionValue::Number).unwrap_or(OptionValue::Text(d.clone())),
                    _ => OptionValue::Text(d.clone()),
                };
                values.insert(o.name.clone(), v);
            }
            continue;
        };
        let value = bind_value(at, &spec.name, o, n.value, Role::Option(n.shown), &parameters)?;
        values.insert(o.name.clone(), option_value(at.text, &value, n.value.span));
        options.push(BoundArg { name: o.name.clone(), kind: o.kind, value, span: n.span, value_span: n.value.span });
    }
    let mut bound_positional = Vec::new();
    for (p, e) in positional {
        let value = bind_value(at, &spec.name, p, e, Role::Positional, &parameters)?;
        if !matches!(p.kind, ParamKind::Column | ParamKind::Terms | ParamKind::Expression) {
            values.entry(p.name.clone()).or_insert_with(|| option_value(at.text, &value, e.span));
        }
        bound_positional.push(BoundArg { name: p.name.clone(), kind: p.kind, value, span: e.span, value_span: e.span });
    }
    let mut bound_extra = Vec::new();
    for x in extra {
        let value = bind_value(at, &spec.name, x.param, x.value, Role::Pair(&x.key.name), &parameters)?;
        bound_extra.push(BoundArg { name: x.key.name.trim().to_string(), kind: x.param.kind, value, span: x.span, value_span: x.value.span });
    }
    Ok(Bound { positional: bound_positional, options, extra: bound_extra, values, end, notes: notes.into_iter().map(|n| n.1).collect() })
}

/// One entry of a group: a number (a leading `-` allowed), or a word or
/// text; the parameter group takes numbers only.
fn group_entry(at: &Here, group: &ParamSpec, key: &Ident, v: &Expr, declares_parameters: bool) -> Result<GroupEntry, Problem> {
    let number = match &v.kind {
        ExprKind::Number(x) => Some(*x),
        ExprKind::Unary { op: UnaryOp::Neg, operand } => match operand.kind {
            ExprKind::Number(x) => Some(-x),
            _ => None,
        },
        _ => None,
    };
    let value = match (&v.kind, number) {
        (_, Some(x)) => OptionValue::Number(x),
        (ExprKind::Name(s) | ExprKind::Quoted(s), None) if !declares_parameters => OptionValue::Text(s.clone()),
        _ if declares_parameters => {
            return Err(at
                .err(v.span, format!("the starting value of {} must be a number", key.name.trim()))
                .help(format!("give each parameter a number, such as {}(a=40, k=0.2)", group.name)))
        }
        _ => return Err(at.err(v.span, "give a level as a word or in double quotes")),
    };
    Ok(GroupEntry { key: key.name.trim().to_string(), value, key_span: key.span, value_span: v.span })
}

/// The parameters a group declares, in order; a name given twice (ignoring
/// case) is an error.
fn parameter_list(at: &Here, group: &ParamSpec, entries: &[GroupEntry]) -> Result<Vec<(String, Span)>, Problem> {
    let mut out: Vec<(String, Span)> = Vec::new();
    for e in entries {
        if out.iter().any(|(n, _)| n.eq_ignore_ascii_case(&e.key)) {
            return Err(at.err(e.key_span, format!("the parameter {} is given twice in {}(…)", e.key, group.name)).help("keep one starting value for it"));
        }
        out.push((e.key.clone(), e.key_span));
    }
    Ok(out)
}

/// The parameters of a spec's model expression: the group that declares
/// them and the names given in it, with their spans.
struct Params<'a> {
    group: Option<&'a str>,
    list: Vec<(String, Span)>,
}

/// Where a value stands, for the wording of errors.
#[derive(Clone, Copy)]
enum Role<'a> {
    /// After `name=`, with the name errors call it by.
    Option(&'a str),
    /// A positional argument.
    Positional,
    /// A catch-all pair, with its key.
    Pair(&'a str),
}

/// Binds one value by its parameter's kind.
fn bind_value(at: &Here, function: &str, p: &ParamSpec, value: &Expr, role: Role, parameters: &Params) -> Result<BoundValue, Problem> {
    let name = match role {
        Role::Pair(key) | Role::Option(key) => key,
        Role::Positional => p.name.as_str(),
    };
    Ok(match p.kind {
        ParamKind::Column => BoundValue::Column(value.clone()),
        ParamKind::Terms => BoundValue::Terms(terms_of(at, value)?),
        ParamKind::Expression => BoundValue::Expression(bind_expression(at, value, parameters)?),
        ParamKind::Number | ParamKind::Integer => match &value.kind {
            ExprKind::Number(x) if p.kind == ParamKind::Number || x.fract() == 0.0 => BoundValue::Number(*x),
            _ => {
                return Err(at
                    .err(value.span, format!("{name} takes a {}", if p.kind == ParamKind::Integer { "whole number" } else { "number" }))
                    .help(p.help.clone()))
            }
        },
        ParamKind::Choice => {
            let word = match &value.kind {
                ExprKind::Name(s) | ExprKind::Quoted(s) => s.to_lowercase(),
                _ => String::new(),
            };
            if !p.choices.contains(&word) {
                let what = match role {
                    Role::Positional => format!("{} is not one of the choices for {name}", typed(at.text, value.span)),
                    _ => format!("{name}={} is not one of the choices", typed(at.text, value.span)),
                };
                return Err(at.err(value.span, what).help(format!("{name} takes {}", p.choices.join(", "))));
            }
            BoundValue::Choice(word)
        }
        ParamKind::Text | ParamKind::FitName => match &value.kind {
            ExprKind::Name(s) | ExprKind::Quoted(s) if !s.trim().is_empty() => {
                let s = s.trim().to_string();
                if p.kind == ParamKind::Text {
                    BoundValue::Text(s)
                } else {
                    BoundValue::FitName(s)
                }
            }
            _ if p.kind == ParamKind::FitName && matches!(role, Role::Positional) => {
                return Err(at.err(value.span, format!("the {name} argument of #{function} is a fit's name, such as main")).help(p.help.clone()))
            }
            _ => return Err(at.err(value.span, format!("{name} takes a word or text in double quotes"))),
        },
        ParamKind::Range => match &value.kind {
            ExprKind::Name(s) | ExprKind::SheetName(s) | ExprKind::Quoted(s) => BoundValue::Range(Place::Sheet(s.clone())),
            ExprKind::Range(r) => BoundValue::Range(Place::Range(r.clone())),
            _ => {
                let eq = if matches!(role, Role::Positional) { "" } else { "=" };
                return Err(at.err(value.span, format!("{name}{eq} takes a sheet name or a range, such as {name}{eq}Sheet2 or {name}{eq}Sheet2!A1:F500")));
            }
        },
        ParamKind::Group => return Err(at.err(value.span, format!("{name} is written {name}(key=value)"))),
    })
}

/// What a fit receives for a bound value.
fn option_value(text: &str, value: &BoundValue, span: Span) -> OptionValue {
    match value {
        BoundValue::Number(x) => OptionValue::Number(*x),
        BoundValue::Choice(s) | BoundValue::FitName(s) | BoundValue::Text(s) => OptionValue::Text(s.clone()),
        BoundValue::Group(entries) => OptionValue::Group(entries.iter().map(|e| (e.key.clone(), e.value.clone())).collect()),
        BoundValue::Column(_) | BoundValue::Terms(_) | BoundValue::Expression(_) | BoundValue::Range(_) => OptionValue::Text(typed(text, span)),
    }
}

/// The terms of a model argument: split at its top-level `+`; a difference
/// or a number as a term is an error.
pub(super) fn terms_of(at: &Here, e: &Expr) -> Result<Vec<Expr>, Problem> {
    let mut terms = Vec::new();
    split_terms(e, &mut terms);
    for t in &terms {
        if let ExprKind::Binary { op: BinOp::Sub, .. } = t.kind {
            return Err(at
                .err(t.span, "terms are joined by +; a difference must be in parentheses")
                .help(format!("write ({}) to use the difference as one term", typed(at.text, t.span))));
        }
        if let ExprKind::Number(_) = t.kind {
            return Err(at.err(t.span, "a number is not a term").help("the intercept is fitted unless intercept=no"));
        }
    }
    Ok(terms)
}

/// Binds a model expression: parameters by name, every other name a
/// column, its formula built; unknown functions and parameters the model
/// never uses are errors.
fn bind_expression(at: &Here, e: &Expr, params: &Params) -> Result<BoundExpression, Problem> {
    let parameters = params.list.as_slice();
    let group = match params.group {
        Some(g) if !parameters.is_empty() => g,
        _ => {
            let help = match params.group {
                Some(g) => format!("give each parameter a starting value in {g}(…), such as {g}(a=1, k=0.1)"),
                None => "this function declares no group option for its parameters".to_string(),
            };
            return Err(at.err(e.span, format!("the model {} has no parameters", typed(at.text, e.span))).help(help));
        }
    };
    let mut used = vec![false; parameters.len()];
    let mut columns: Vec<(String, ExprColumn)> = Vec::new();
    let formula = formula_of(at, e, parameters, &mut used, &mut columns)?;
    if let Some(i) = used.iter().position(|u| !u) {
        let (p, span) = &parameters[i];
        return Err(at
            .err(*span, format!("the parameter {p} is not used in the model {}", typed(at.text, e.span)))
            .help(format!("use {p} in the model, or leave it out of {group}(…)")));
    }
    Ok(BoundExpression {
        text: typed(at.text, e.span),
        expr: e.clone(),
        formula,
        parameters: parameters.to_vec(),
        group: group.to_string(),
        columns: columns.into_iter().map(|(_, c)| c).collect(),
    })
}

/// The formula of an expression; `columns` collects the columns in order
/// of first use, by a key that makes `Hours`, `"hours"` one column.
fn formula_of(at: &Here, e: &Expr, parameters: &[(String, Span)], used: &mut [bool], columns: &mut Vec<(String, ExprColumn)>) -> Result<Formula, Problem> {
    let mut sub = |x: &Expr| formula_of(at, x, parameters, used, columns);
    Ok(match &e.kind {
        ExprKind::Number(x) => Formula::Number(*x),
        ExprKind::Name(n) => match parameters.iter().position(|(p, _)| p.eq_ignore_ascii_case(n.trim())) {
            Some(i) => {
                used[i] = true;
                Formula::Parameter(i)
            }
            None if n.trim().eq_ignore_ascii_case("pi") => Formula::Number(std::f64::consts::PI),
            None => column_of(columns, format!("name {}", n.trim().to_lowercase()), n.trim(), e),
        },
        ExprKind::Quoted(n) => column_of(columns, format!("name {}", n.trim().to_lowercase()), n.trim(), e),
        ExprKind::Range(r) => column_of(columns, format!("range {r}"), &typed(at.text, e.span), e),
        ExprKind::SheetName(s) => {
            return Err(at
                .err(e.span, format!("'{s}' in single quotes is a sheet name, not a column"))
                .help("quote header names with double quotes: \"Outdoor temp\""))
        }
        ExprKind::Paren(inner) => sub(inner)?,
        ExprKind::Unary { op: UnaryOp::Neg, operand } => Formula::Neg(Box::new(sub(operand)?)),
        ExprKind::Binary { op, lhs, rhs } => {
            let (a, b) = (Box::new(sub(lhs)?), Box::new(sub(rhs)?));
            match op {
                BinOp::Add => Formula::Add(a, b),
                BinOp::Sub => Formula::Sub(a, b),
                BinOp::Mul => Formula::Mul(a, b),
                BinOp::Div => Formula::Div(a, b),
                BinOp::Pow => Formula::Pow(a, b),
            }
        }
        ExprKind::Call { name, args } => {
            let Some(f) = Function::from_name(&name.name) else {
                return Err(unknown_function(at, name, &Function::ALL));
            };
            let [arg] = args.as_slice() else {
                return Err(at.err(e.span, format!("{}(…) takes exactly one argument", f.name())));
            };
            Formula::Call(f, Box::new(sub(arg)?))
        }
    })
}

/// The formula of a column of an expression, adding the column at its first use.
fn column_of(columns: &mut Vec<(String, ExprColumn)>, key: String, label: &str, e: &Expr) -> Formula {
    let i = match columns.iter().position(|(k, _)| *k == key) {
        Some(i) => i,
        None => {
            columns.push((key, ExprColumn { label: label.to_string(), expr: e.clone() }));
            columns.len() - 1
        }
    };
    Formula::Column(i)
}
