//! A request's arguments bound against its function's spec.
//!
//! This file owns the checks of the argument list (positional arguments
//! before options, how many, known option names, an option given once, a
//! group written as a group) and the values of options by their kind
//! (number, whole number, one of a list of words, text), with defaults.

use super::{typed, Ctx};
use crate::problems::{closest, Problem};
use crate::protocol::{FunctionSpec, OptionValue, ParamKind};
use crate::syntax::{Arg, Expr, ExprKind, Request, Span};
use std::collections::BTreeMap;

/// The arguments of a request, checked against the spec.
pub(super) struct Args<'r> {
    /// The positional arguments in order, as many as the spec has.
    pub positional: Vec<&'r Expr>,
    /// `key=value` options by lowercase key: the value and the whole span.
    pub named: BTreeMap<String, (&'r Expr, Span)>,
    /// Group options by lowercase name: lowercase key → (value, span of the group).
    pub groups: BTreeMap<String, BTreeMap<String, (String, Span)>>,
    /// Every option's value (given, or the spec's default).
    pub options: BTreeMap<String, OptionValue>,
}

/// The span of a request's closing `)`, where a missing argument is reported.
pub(super) fn end_of(req: &Request) -> Span {
    Span { start: req.span.end.saturating_sub(1), end: req.span.end }
}

/// Checks the arguments of `req` against `spec` and reads the options' values.
pub(super) fn bind_args<'r>(ctx: &Ctx, req: &'r Request, spec: &FunctionSpec) -> Result<Args<'r>, Problem> {
    let text = ctx.text;
    let end = end_of(req);
    let mut positional: Vec<&Expr> = Vec::new();
    let mut named: BTreeMap<String, (&Expr, Span)> = BTreeMap::new();
    let mut groups: BTreeMap<String, BTreeMap<String, (String, Span)>> = BTreeMap::new();
    let accepted = || spec.options.iter().map(|o| o.name.as_str()).collect::<Vec<_>>().join(", ");
    for arg in &req.args {
        match arg {
            Arg::Positional(e) => {
                if !named.is_empty() {
                    return Err(ctx.err(e.span, "a positional argument comes after an option").help(format!(
                        "put the arguments first, then the options: {}",
                        spec.signature()
                    )));
                }
                if positional.len() == spec.positional.len() {
                    return Err(ctx
                        .err(e.span, format!("#{} takes {} arguments before its options", spec.name, spec.positional.len()))
                        .help(format!("the call is {}", spec.signature())));
                }
                positional.push(e);
            }
            Arg::Named { key, value, span } => {
                let k = key.name.to_lowercase();
                let Some(o) = spec.option(&k) else {
                    let near = closest(&k, spec.options.iter().map(|o| o.name.as_str()));
                    let help = match near.first() {
                        Some(n) => format!("did you mean {n}? #{} accepts {}", spec.name, accepted()),
                        None => format!("#{} accepts {}", spec.name, accepted()),
                    };
                    return Err(ctx.err(key.span, format!("#{} has no option '{}'", spec.name, key.name)).help(help));
                };
                if o.kind == ParamKind::Group {
                    return Err(ctx.err(*span, format!("{} is written {}(column=value)", o.name, o.name)));
                }
                if named.insert(k.clone(), (value, *span)).is_some() {
                    return Err(ctx.err(*span, format!("the option {k} is given twice")).help(format!("keep one {k}=")));
                }
            }
            Arg::Group { name, entries, span } => {
                let k = name.name.to_lowercase();
                match spec.option(&k) {
                    Some(o) if o.kind == ParamKind::Group => {}
                    _ => {
                        return Err(ctx
                            .err(name.span, format!("#{} has no option '{}(…)'", spec.name, name.name))
                            .help(format!("#{} accepts {}", spec.name, accepted())))
                    }
                }
                let g = groups.entry(k).or_default();
                for (key, v) in entries {
                    let val = match &v.kind {
                        ExprKind::Name(s) | ExprKind::Quoted(s) => s.clone(),
                        ExprKind::Number(x) => format!("{x}"),
                        _ => return Err(ctx.err(v.span, "give a level as a word or in double quotes")),
                    };
                    g.insert(key.name.trim().to_lowercase(), (val, *span));
                }
            }
        }
    }
    if positional.len() < spec.positional.len() {
        let missing = &spec.positional[positional.len()];
        return Err(ctx
            .err(end, format!("#{} needs its {} argument ({})", spec.name, missing.name, missing.help))
            .help(format!("the call is {}", spec.signature())));
    }
    let mut options: BTreeMap<String, OptionValue> = BTreeMap::new();
    for o in &spec.options {
        let Some((value, span)) = named.get(&o.name) else {
            if let Some(d) = &o.default {
                let v = match o.kind {
                    ParamKind::Number | ParamKind::Integer => d.parse().map(OptionValue::Number).unwrap_or(OptionValue::Text(d.clone())),
                    _ => OptionValue::Text(d.clone()),
                };
                options.insert(o.name.clone(), v);
            }
            continue;
        };
        let v = match o.kind {
            ParamKind::Number | ParamKind::Integer => match &value.kind {
                ExprKind::Number(x) if o.kind == ParamKind::Number || x.fract() == 0.0 => OptionValue::Number(*x),
                _ => {
                    return Err(ctx.err(value.span, format!("{} takes a {}", o.name, if o.kind == ParamKind::Integer { "whole number" } else { "number" }))
                        .help(o.help.clone()))
                }
            },
            ParamKind::Choice => {
                let word = match &value.kind {
                    ExprKind::Name(s) | ExprKind::Quoted(s) => s.to_lowercase(),
                    _ => String::new(),
                };
                if !o.choices.contains(&word) {
                    return Err(ctx
                        .err(value.span, format!("{}={} is not one of the choices", o.name, typed(text, value.span)))
                        .help(format!("{} takes {}", o.name, o.choices.join(", "))));
                }
                OptionValue::Text(word)
            }
            ParamKind::Text | ParamKind::FitName => match &value.kind {
                ExprKind::Name(s) | ExprKind::Quoted(s) if !s.trim().is_empty() => OptionValue::Text(s.trim().to_string()),
                _ => return Err(ctx.err(value.span, format!("{} takes a word or text in double quotes", o.name))),
            },
            _ => OptionValue::Text(typed(text, *span)),
        };
        options.insert(o.name.clone(), v);
    }
    Ok(Args { positional, named, groups, options })
}
