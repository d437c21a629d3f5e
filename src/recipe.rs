//! A fitted model's recipe: how the model columns are made from the inputs.
//!
//! `resolve` turns a request's terms into model columns over the data rows;
//! it also records here, in a small tree free of spans and cells, how each
//! column is made (powers, products, transforms, indicator columns of text
//! columns against their base level), together with the range of every
//! numeric input and the levels of every text input in the rows used. With
//! it, new values (from `#predict` or a reader's typed inputs) become a
//! model row exactly as the data did, and the same recipe prints the
//! spreadsheet formulas of the prediction calculator. Nothing here knows of
//! workbooks or writers.

use crate::protocol::{Formula, Function};
use std::collections::BTreeMap;

/// A binary operation of a term.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Op {
    /// `+`
    Add,
    /// `-`
    Sub,
    /// `*`
    Mul,
    /// `/`
    Div,
    /// `^`
    Pow,
}

/// When two texts of a column are one level: the same once case is
/// ignored and runs of spaces are one space ("Office", "office ",
/// "OFFICE"). The one rule for levels everywhere: indicator columns,
/// `against(...)` and the new values of `#predict`.
pub fn level_key(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ").to_lowercase()
}

/// A transform of the fit language: the protocol's [`Function`] (one list
/// of functions for the whole program).
pub type Func = Function;

/// The standard spreadsheet function of the same meaning (names of the
/// OpenFormula standard, which every spreadsheet application reads). Every
/// function of the language has one; the match is exhaustive, so a function
/// added to [`Function`] must be given its equivalent here (or the
/// formulas that use it made to answer none, which the calculator reports)
/// before the program builds.
fn sheet_function(f: Function) -> &'static str {
    match f {
        Function::Log => "LN",
        Function::Log10 => "LOG10",
        Function::Exp => "EXP",
        Function::Sqrt => "SQRT",
        Function::Abs => "ABS",
        Function::Sin => "SIN",
        Function::Cos => "COS",
        Function::Tan => "TAN",
        Function::Atan => "ATAN",
    }
}

/// A [`Formula`] (a fit's model row, or a model and its derivatives) as
/// spreadsheet formula text, each [`Formula::Column`]`(j)` replaced by
/// `columns[j]` (the formula or cell computing the request's column `j`)
/// and each [`Formula::Parameter`]`(k)` by `parameters[k]` (the cell
/// holding coefficient `k`). A formula naming a column or parameter not
/// given, or holding a number that is not finite, has none.
pub fn sheet_formula(f: &Formula, columns: &[String], parameters: &[String]) -> Option<String> {
    let p = |f: &Formula| sheet_formula(f, columns, parameters);
    Some(match f {
        Formula::Number(x) if !x.is_finite() => return None,
        Formula::Number(x) => number_literal(*x),
        Formula::Column(j) => columns.get(*j)?.clone(),
        Formula::Parameter(k) => parameters.get(*k)?.clone(),
        Formula::Neg(a) => format!("(-{})", p(a)?),
        Formula::Add(a, b) => format!("(({})+({}))", p(a)?, p(b)?),
        Formula::Sub(a, b) => format!("(({})-({}))", p(a)?, p(b)?),
        Formula::Mul(a, b) => format!("(({})*({}))", p(a)?, p(b)?),
        Formula::Div(a, b) => format!("(({})/({}))", p(a)?, p(b)?),
        Formula::Pow(a, b) => format!("(({})^({}))", p(a)?, p(b)?),
        Formula::Call(g, a) => format!("{}({})", sheet_function(*g), p(a)?),
    })
}

/// One node of a term.
#[derive(Debug, Clone, PartialEq)]
pub enum Node {
    /// An input column, by its index in [`Recipe::inputs`].
    Input(usize),
    /// A number.
    Number(f64),
    /// Negation.
    Neg(Box<Node>),
    /// A binary operation.
    Bin(Op, Box<Node>, Box<Node>),
    /// A transform.
    Call(Func, Box<Node>),
}

/// What an input column holds in the rows used.
#[derive(Debug, Clone, PartialEq)]
pub enum InputKind {
    /// Numbers: smallest, largest and mean of the rows used.
    Numeric {
        /// Smallest value.
        min: f64,
        /// Largest value.
        max: f64,
        /// Mean (unweighted).
        mean: f64,
    },
    /// Text: the levels in sorted order and the base level.
    Levels {
        /// Levels in sorted order.
        levels: Vec<String>,
        /// The base level (no indicator column).
        base: String,
    },
}

/// An input column of the model.
#[derive(Debug, Clone, PartialEq)]
pub struct Input {
    /// Its header, as typed in the request.
    pub name: String,
    /// Numbers or levels.
    pub kind: InputKind,
}

/// How a fit's model columns are made from its inputs.
#[derive(Debug, Clone, PartialEq)]
pub struct Recipe {
    /// The input columns, in order of first use.
    pub inputs: Vec<Input>,
    /// One tree per term of the request.
    pub terms: Vec<Node>,
    /// The model column labels after expansion (intercept excluded), to check
    /// that the recipe agrees with the fit.
    pub columns: Vec<String>,
    /// For a model of one numeric input: its values in the rows used (for
    /// the chart of the data with the fitted line).
    pub single_input: Option<Vec<f64>>,
}

/// A new value of an input.
#[derive(Debug, Clone, PartialEq)]
pub enum NewValue {
    /// A number.
    Number(f64),
    /// A level of a text column.
    Text(String),
}

/// A model value with the spreadsheet formula computing it.
#[derive(Debug, Clone)]
struct Sym {
    value: f64,
    formula: String,
}

#[derive(Debug, Clone)]
enum Ev {
    Num(Sym),
    /// A text input: its index, the level given, the cell holding it.
    Cat(usize, String, String),
    Prod(Vec<Ev>),
}

fn quote_text(s: &str) -> String {
    format!("\"{}\"", s.replace('"', "\"\""))
}

fn number_literal(x: f64) -> String {
    let s = format!("{x}");
    if x < 0.0 {
        format!("({s})")
    } else {
        s
    }
}

impl Recipe {
    /// The index of an input by name (case-insensitive, trimmed).
    pub fn input(&self, name: &str) -> Option<usize> {
        let k = name.trim().to_lowercase();
        self.inputs.iter().position(|i| i.name.to_lowercase() == k)
    }

    /// The value a calculator starts from: the mean of a numeric input, the
    /// base level of a text input.
    pub fn default_value(&self, i: usize) -> NewValue {
        match &self.inputs[i].kind {
            InputKind::Numeric { mean, .. } => NewValue::Number(*mean),
            InputKind::Levels { base, .. } => NewValue::Text(base.clone()),
        }
    }

    /// The values of the request's columns (the model columns the resolver
    /// sent, intercept excluded) at new input values.
    pub fn columns_at(&self, values: &[NewValue]) -> Result<Vec<f64>, String> {
        let refs: Vec<String> = self.inputs.iter().map(|i| i.name.clone()).collect();
        Ok(self.expand(values, &refs)?.into_iter().map(|s| s.value).collect())
    }

    /// The request's columns as spreadsheet formulas over the cells holding
    /// the inputs (`cells[i]`, such as `$C$5`), with their values at `values`.
    pub fn column_formulas(&self, values: &[NewValue], cells: &[String]) -> Result<Vec<(f64, String)>, String> {
        Ok(self.expand(values, cells)?.into_iter().map(|s| (s.value, s.formula)).collect())
    }

    fn expand(&self, values: &[NewValue], cells: &[String]) -> Result<Vec<Sym>, String> {
        if values.len() != self.inputs.len() || cells.len() != self.inputs.len() {
            return Err(format!("{} values for {} inputs", values.len(), self.inputs.len()));
        }
        let mut out = Vec::new();
        for t in &self.terms {
            let ev = self.eval(t, values, cells)?;
            let parts = match ev {
                Ev::Prod(p) => p,
                x => vec![x],
            };
            let mut acc = vec![Sym { value: 1.0, formula: String::new() }];
            for part in parts {
                let cols: Vec<Sym> = match part {
                    Ev::Num(s) => vec![s],
                    Ev::Cat(i, level, cell) => self.indicators(i, &level, &cell)?,
                    Ev::Prod(_) => Vec::new(),
                };
                let mut next = Vec::new();
                for a in &acc {
                    for b in &cols {
                        let formula = if a.formula.is_empty() { b.formula.clone() } else { format!("{}*{}", a.formula, b.formula) };
                        next.push(Sym { value: a.value * b.value, formula });
                    }
                }
                acc = next;
            }
            out.extend(acc);
        }
        if out.len() != self.columns.len() {
            return Err(format!("the recipe makes {} columns but the fit has {}", out.len(), self.columns.len()));
        }
        for (s, label) in out.iter().zip(&self.columns) {
            if !s.value.is_finite() {
                return Err(format!("the term {label} is undefined at these values (such as the log of a value ≤ 0)"));
            }
        }
        Ok(out)
    }

    fn indicators(&self, i: usize, level: &str, cell: &str) -> Result<Vec<Sym>, String> {
        let InputKind::Levels { levels, base } = &self.inputs[i].kind else {
            return Err(format!("{} is a numeric column", self.inputs[i].name));
        };
        let Some(given) = levels.iter().find(|l| level_key(l) == level_key(level)) else {
            return Err(format!("'{}' is not a level of {}; the levels are {}", level, self.inputs[i].name, levels.join(", ")));
        };
        Ok(levels
            .iter()
            .filter(|l| *l != base)
            .map(|l| Sym { value: if l == given { 1.0 } else { 0.0 }, formula: format!("IF({cell}={},1,0)", quote_text(l)) })
            .collect())
    }

    fn eval(&self, n: &Node, values: &[NewValue], cells: &[String]) -> Result<Ev, String> {
        let num = |e: Ev| -> Result<Sym, String> {
            match e {
                Ev::Num(s) => Ok(s),
                _ => Err("a text column cannot be used in arithmetic".to_string()),
            }
        };
        Ok(match n {
            Node::Input(i) => match (&self.inputs[*i].kind, &values[*i]) {
                (InputKind::Numeric { .. }, NewValue::Number(x)) => Ev::Num(Sym { value: *x, formula: cells[*i].clone() }),
                (InputKind::Numeric { .. }, NewValue::Text(t)) => {
                    return Err(format!("{} is a numeric column, but the value given is the text '{t}'", self.inputs[*i].name))
                }
                (InputKind::Levels { .. }, NewValue::Text(t)) => Ev::Cat(*i, t.clone(), cells[*i].clone()),
                (InputKind::Levels { levels, .. }, NewValue::Number(x)) => {
                    return Err(format!("{} is a text column; give one of its levels ({}) in double quotes, not {x}", self.inputs[*i].name, levels.join(", ")))
                }
            },
            Node::Number(x) => Ev::Num(Sym { value: *x, formula: number_literal(*x) }),
            Node::Neg(a) => {
                let a = num(self.eval(a, values, cells)?)?;
                Ev::Num(Sym { value: -a.value, formula: format!("(-{})", a.formula) })
            }
            Node::Call(f, a) => {
                let a = num(self.eval(a, values, cells)?)?;
                Ev::Num(Sym { value: f.apply(a.value), formula: format!("{}({})", sheet_function(*f), a.formula) })
            }
            Node::Bin(Op::Mul, a, b) => {
                let mut parts = Vec::new();
                for side in [a, b] {
                    match self.eval(side, values, cells)? {
                        Ev::Prod(p) => parts.extend(p),
                        e => parts.push(e),
                    }
                }
                if parts.iter().all(|p| matches!(p, Ev::Num(_))) {
                    let mut it = parts.into_iter().filter_map(|p| if let Ev::Num(s) = p { Some(s) } else { None });
                    let first = it.next().ok_or("an empty product")?;
                    let s = it.fold(first, |acc, s| Sym { value: acc.value * s.value, formula: format!("({})*({})", acc.formula, s.formula) });
                    Ev::Num(s)
                } else {
                    Ev::Prod(parts)
                }
            }
            Node::Bin(op, a, b) => {
                let a = num(self.eval(a, values, cells)?)?;
                let b = num(self.eval(b, values, cells)?)?;
                let (value, sym) = match op {
                    Op::Add => (a.value + b.value, "+"),
                    Op::Sub => (a.value - b.value, "-"),
                    Op::Div => (a.value / b.value, "/"),
                    Op::Pow => (a.value.powf(b.value), "^"),
                    Op::Mul => (a.value * b.value, "*"),
                };
                Ev::Num(Sym { value, formula: format!("(({}){sym}({}))", a.formula, b.formula) })
            }
        })
    }

    /// Reads new values given by name; inputs not named take `fallback`.
    /// Returns the values and the names given that are not inputs.
    pub fn values_from(&self, given: &BTreeMap<String, NewValue>) -> (Vec<Option<NewValue>>, Vec<String>) {
        let mut vals: Vec<Option<NewValue>> = vec![None; self.inputs.len()];
        let mut unknown = Vec::new();
        for (k, v) in given {
            match self.input(k) {
                Some(i) => vals[i] = Some(v.clone()),
                None => unknown.push(k.clone()),
            }
        }
        (vals, unknown)
    }

    /// The inputs whose given value lies outside the range seen in the data.
    pub fn outside(&self, values: &[NewValue]) -> Vec<String> {
        let mut out = Vec::new();
        for (inp, v) in self.inputs.iter().zip(values) {
            if let (InputKind::Numeric { min, max, .. }, NewValue::Number(x)) = (&inp.kind, v) {
                if x < min || x > max {
                    out.push(format!("{} = {x} lies outside the data ({min} to {max})", inp.name));
                }
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn recipe() -> Recipe {
        // Light + Light^2 + Light*Bay.
        Recipe {
            inputs: vec![
                Input { name: "Light".into(), kind: InputKind::Numeric { min: 8.0, max: 16.0, mean: 12.0 } },
                Input { name: "Bay".into(), kind: InputKind::Levels { levels: vec!["East".into(), "North".into(), "West".into()], base: "East".into() } },
            ],
            terms: vec![
                Node::Input(0),
                Node::Bin(Op::Pow, Box::new(Node::Input(0)), Box::new(Node::Number(2.0))),
                Node::Bin(Op::Mul, Box::new(Node::Input(0)), Box::new(Node::Input(1))),
            ],
            columns: vec!["Light".into(), "Light^2".into(), "Light*(Bay: North vs East)".into(), "Light*(Bay: West vs East)".into()],
            single_input: None,
        }
    }

    #[test]
    fn new_values_become_the_model_row() {
        let r = recipe();
        let row = r.columns_at(&[NewValue::Number(10.0), NewValue::Text("north".into())]).unwrap();
        // Worked by hand (common practice): 10, 100, 10·1, 10·0.
        assert_eq!(row, vec![10.0, 100.0, 10.0, 0.0]);
        let f = r.column_formulas(&[NewValue::Number(10.0), NewValue::Text("West".into())], &["$B$2".into(), "$B$3".into()]).unwrap();
        assert_eq!(f[1].1, "(($B$2)^(2))");
        assert_eq!(f[3].1, "$B$2*IF($B$3=\"West\",1,0)");
        assert_eq!(f[3].0, 10.0);
    }

    #[test]
    fn wrong_values_are_refused_with_the_levels() {
        let r = recipe();
        let e = r.columns_at(&[NewValue::Number(10.0), NewValue::Text("South".into())]).unwrap_err();
        assert!(e.contains("East, North, West"), "{e}");
        assert!(r.columns_at(&[NewValue::Text("x".into()), NewValue::Text("East".into())]).is_err());
        assert_eq!(r.outside(&[NewValue::Number(20.0), NewValue::Text("East".into())]).len(), 1);
    }
}
