//! Reader for the NIST StRD linear and nonlinear regression files
//! (`linear/*.dat`, `nonlinear/*.dat`) used by the integration tests, and the log relative error (LRE) measure defined
//! in the reference README.
//!
//! The NIST files are never copied into the repository: they are read from
//! the folder named by the environment variable `PLUMB_REFERENCE_DATA`
//! (default `CARGO_MANIFEST_DIR/../shared/reference`), which holds
//! `nist-strd/linear/NAME.dat`. When the variable is unset and the default
//! folder is missing, [`reference_dir`] prints a notice and returns `None` so
//! the calling test can skip; when the variable *is* set and the folder is
//! missing, it panics, so a CI run that sets it can never skip silently.
//!
//! File layout (NIST StRD, as described in the reference README): header
//! "File Format" lines give `Certified Values (lines A to B)` and
//! `Data (lines C to D)`; certified rows `Bk estimate sd` (exponents may be
//! written `E-03`), `Residual Standard Deviation`, `R-Squared`, and an
//! analysis of variance table with `Regression` and `Residual` rows; data rows
//! are whitespace separated, response first.

use std::path::PathBuf;

/// The certified analysis of variance table of a linear StRD file.
#[derive(Clone, Debug, PartialEq)]
pub struct Anova {
    pub df_reg: f64,
    pub ss_reg: f64,
    pub ms_reg: f64,
    /// F statistic; `inf` where NIST prints "Infinity" (exact fits).
    pub f: f64,
    pub df_res: f64,
    pub ss_res: f64,
    pub ms_res: f64,
}

/// One NIST StRD linear dataset with its certified values.
#[derive(Clone, Debug, PartialEq)]
pub struct NistLinear {
    /// Dataset name as in the file name (e.g. "Longley").
    pub name: String,
    /// Response.
    pub y: Vec<f64>,
    /// Predictor columns as in the file (one for the polynomial datasets).
    pub x: Vec<Vec<f64>>,
    /// Certified estimates, in parameter order (B0, B1, … or B1 for the
    /// no-intercept files).
    pub coefficients: Vec<f64>,
    /// Certified standard deviations of the estimates.
    pub std_devs: Vec<f64>,
    /// Certified residual standard deviation.
    pub residual_sd: f64,
    /// Certified R² (uncentred for the no-intercept files).
    pub r_squared: f64,
    /// Certified analysis of variance table.
    pub anova: Option<Anova>,
    /// `true` when the parameters start at B0 (the model has an intercept).
    pub intercept: bool,
    /// Polynomial degree in the single predictor (1 for straight lines and
    /// for the multi-predictor Longley): parameters minus intercept when the
    /// file has one predictor column.
    pub degree: usize,
}

impl NistLinear {
    /// The model's columns as NIST states the model: a column of ones when
    /// there is an intercept, then `x, x², …, x^degree` for a single
    /// predictor, or the predictor columns as given.
    pub fn model_columns(&self) -> Vec<Vec<f64>> {
        let n = self.y.len();
        let mut cols = Vec::new();
        if self.intercept {
            cols.push(vec![1.0; n]);
        }
        if self.x.len() == 1 {
            for d in 1..=self.degree {
                cols.push(self.x[0].iter().map(|v| v.powi(d as i32)).collect());
            }
        } else {
            cols.extend(self.x.iter().cloned());
        }
        cols
    }
}

/// The folder holding `nist-strd/` (see the module notes).
pub fn reference_dir() -> Option<PathBuf> {
    match std::env::var_os("PLUMB_REFERENCE_DATA") {
        Some(v) => {
            let p = PathBuf::from(v);
            if !p.join("nist-strd").is_dir() {
                panic!(
                    "PLUMB_REFERENCE_DATA is set to {} but that folder has no nist-strd/ subfolder",
                    p.display()
                );
            }
            Some(p)
        }
        None => {
            let p = PathBuf::from(concat!(env!("CARGO_MANIFEST_DIR"), "/../shared/reference"));
            if p.join("nist-strd").is_dir() {
                Some(p)
            } else {
                // Written to the process's stderr directly, past the test
                // runner's capture of `println!`, so the notice is seen.
                use std::io::Write;
                let _ = writeln!(
                    std::io::stderr(),
                    "notice: NIST reference data not found at {} and PLUMB_REFERENCE_DATA is unset; skipping the NIST checks",
                    p.display()
                );
                None
            }
        }
    }
}

/// Loads `nist-strd/linear/NAME.dat`; `None` (after a notice) when the
/// reference folder is absent. Panics with a clear message on a malformed
/// or missing file inside a present folder (a broken reference set is a test
/// failure, not a skip).
pub fn load_linear(name: &str) -> Option<NistLinear> {
    let dir = reference_dir()?;
    let path = dir.join("nist-strd").join("linear").join(format!("{name}.dat"));
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    match parse_linear(name, &text) {
        Ok(d) => Some(d),
        Err(e) => panic!("{}: {e}", path.display()),
    }
}

/// `(A, B)` from a header line holding `(lines A to B)`.
fn line_range(line: &str) -> Option<(usize, usize)> {
    let start = line.find("(lines")?;
    let rest = &line[start + "(lines".len()..];
    let end = rest.find(')')?;
    let mut it = rest[..end].split_whitespace();
    let a = it.next()?.parse().ok()?;
    if it.next()? != "to" {
        return None;
    }
    let b = it.next()?.parse().ok()?;
    Some((a, b))
}

fn num(tok: &str) -> Result<f64, String> {
    tok.parse::<f64>().map_err(|_| format!("not a number: {tok:?}"))
}

/// `(first, last)` line numbers, 1-based.
type Lines = (usize, usize);

/// The lines of a file and the certified-values and data line ranges its
/// header states.
fn sections(text: &str) -> Result<(Vec<&str>, Lines, Lines), String> {
    let lines: Vec<&str> = text.lines().map(|l| l.trim_end_matches('\r')).collect();
    let (mut cert, mut data) = (None, None);
    // The "File Format" block sits in the first lines of the header.
    for l in lines.iter().take(12) {
        if l.contains("Certified Values") {
            cert = line_range(l);
        } else if l.contains("Data") && l.contains("(lines") {
            data = line_range(l);
        }
    }
    let (c0, c1) = cert.ok_or("no 'Certified Values (lines A to B)' in the header")?;
    let (d0, d1) = data.ok_or("no 'Data (lines A to B)' in the header")?;
    if c1 > lines.len() || d1 > lines.len() || c0 == 0 || d0 == 0 {
        return Err(format!("header line ranges exceed the file's {} lines", lines.len()));
    }
    Ok((lines, (c0, c1), (d0, d1)))
}

/// The data rows `d0..=d1` (1-based): the response and the predictor columns.
fn data_rows(lines: &[&str], d0: usize, d1: usize) -> Result<(Vec<f64>, Vec<Vec<f64>>), String> {
    let mut y = Vec::new();
    let mut x: Vec<Vec<f64>> = Vec::new();
    for (k, l) in lines[d0 - 1..d1].iter().enumerate() {
        let toks: Vec<&str> = l.split_whitespace().collect();
        if toks.is_empty() {
            continue;
        }
        if toks.len() < 2 {
            return Err(format!("data line {} has fewer than two values", d0 + k));
        }
        if x.is_empty() {
            x = vec![Vec::new(); toks.len() - 1];
        } else if toks.len() - 1 != x.len() {
            return Err(format!("data line {} has {} values, expected {}", d0 + k, toks.len(), x.len() + 1));
        }
        y.push(num(toks[0])?);
        for (j, t) in toks[1..].iter().enumerate() {
            x[j].push(num(t)?);
        }
    }
    if y.is_empty() {
        return Err("no data rows".into());
    }
    Ok((y, x))
}

/// Parses the text of a linear StRD file.
pub fn parse_linear(name: &str, text: &str) -> Result<NistLinear, String> {
    let (lines, (c0, c1), (d0, d1)) = sections(text)?;

    let mut params: Vec<(usize, f64, f64)> = Vec::new();
    let mut residual_sd = None;
    let mut r_squared = None;
    let mut reg: Option<Vec<f64>> = None;
    let mut res: Option<Vec<f64>> = None;
    for l in &lines[c0 - 1..c1] {
        let toks: Vec<&str> = l.split_whitespace().collect();
        if toks.is_empty() {
            continue;
        }
        let t0 = toks[0];
        if t0.len() > 1 && t0.starts_with('B') && t0[1..].chars().all(|c| c.is_ascii_digit()) {
            if toks.len() < 3 {
                return Err(format!("short parameter row: {l:?}"));
            }
            let idx: usize = t0[1..].parse().map_err(|_| format!("bad parameter name {t0}"))?;
            params.push((idx, num(toks[1])?, num(toks[2])?));
        } else if l.trim_start().starts_with("Standard Deviation") {
            if let Some(last) = toks.last() {
                if let Ok(v) = last.parse::<f64>() {
                    residual_sd = Some(v);
                }
            }
        } else if t0 == "R-Squared" && toks.len() >= 2 {
            r_squared = Some(num(toks[1])?);
        } else if t0 == "Regression" && toks.len() >= 5 {
            reg = Some(toks[1..5].iter().map(|t| num(t)).collect::<Result<_, _>>()?);
        } else if t0 == "Residual" && toks.len() >= 4 {
            res = Some(toks[1..4].iter().map(|t| num(t)).collect::<Result<_, _>>()?);
        }
    }
    if params.is_empty() {
        return Err("no certified parameter rows (Bk ...)".into());
    }
    params.sort_by_key(|p| p.0);
    let intercept = params[0].0 == 0;
    let anova = match (reg, res) {
        (Some(g), Some(r)) => Some(Anova {
            df_reg: g[0],
            ss_reg: g[1],
            ms_reg: g[2],
            f: g[3],
            df_res: r[0],
            ss_res: r[1],
            ms_res: r[2],
        }),
        _ => None,
    };

    let (y, x) = data_rows(&lines, d0, d1)?;
    let n_params = params.len();
    let degree = if x.len() == 1 { n_params - usize::from(intercept) } else { 1 };
    Ok(NistLinear {
        name: name.to_string(),
        y,
        x,
        coefficients: params.iter().map(|p| p.1).collect(),
        std_devs: params.iter().map(|p| p.2).collect(),
        residual_sd: residual_sd.ok_or("no residual standard deviation")?,
        r_squared: r_squared.ok_or("no R-Squared")?,
        anova,
        intercept,
        degree,
    })
}

/// Log relative error (NIST StRD README): `−log10(|est − cert|/|cert|)`, or
/// `−log10(|est|)` when `cert = 0`; `digits` (the certified value's printed
/// significant digits: 15 for linear files) when `est == cert` and as the
/// cap; floored at 0. NaN or infinite estimates give 0. For a certified
/// "Infinity" (the F statistic of the exact-fit Wampler1/Wampler2 files)
/// the README gives no rule; here it is the log absolute error of `1/est`
/// against 0, i.e. `log10(est)`, capped the same way.
pub fn lre(est: f64, cert: f64, digits: f64) -> f64 {
    if est == cert {
        return digits;
    }
    if cert.is_infinite() {
        return if cert > 0.0 && est > 0.0 { lre(1.0 / est, 0.0, digits) } else { 0.0 };
    }
    if !est.is_finite() {
        return 0.0;
    }
    let v = if cert == 0.0 { -est.abs().log10() } else { -((est - cert).abs() / cert.abs()).log10() };
    if v.is_nan() {
        0.0
    } else {
        v.clamp(0.0, digits)
    }
}

/// The 11 linear datasets, in the order of the StRD listing.
pub const LINEAR: [&str; 11] =
    ["Norris", "Pontius", "NoInt1", "NoInt2", "Filip", "Longley", "Wampler1", "Wampler2", "Wampler3", "Wampler4", "Wampler5"];

/// The LRE of every certified value of one fit through the tool.
#[derive(Clone, Debug)]
pub struct Lres {
    /// Dataset name.
    pub name: String,
    /// Per coefficient.
    pub coefficients: Vec<f64>,
    /// Per coefficient standard deviation.
    pub std_devs: Vec<f64>,
    /// Residual standard deviation.
    pub residual_sd: f64,
    /// R².
    pub r_squared: f64,
    /// Regression and residual sums of squares.
    pub ss: [f64; 2],
    /// Regression and residual mean squares.
    pub ms: [f64; 2],
    /// F statistic.
    pub f: f64,
    /// Regression and residual degrees of freedom.
    pub df: [f64; 2],
}

fn min(v: &[f64]) -> f64 {
    v.iter().cloned().fold(f64::INFINITY, f64::min)
}

impl Lres {
    /// (quantity, LRE) for every certified value, minima over the vectors.
    pub fn named(&self) -> Vec<(String, f64)> {
        let mut out = Vec::new();
        for (i, v) in self.coefficients.iter().enumerate() {
            out.push((format!("coefficient B{}", i), *v));
        }
        for (i, v) in self.std_devs.iter().enumerate() {
            out.push((format!("SD of B{}", i), *v));
        }
        out.push(("residual SD".into(), self.residual_sd));
        out.push(("R²".into(), self.r_squared));
        out.push(("SS regression".into(), self.ss[0]));
        out.push(("SS residual".into(), self.ss[1]));
        out.push(("MS regression".into(), self.ms[0]));
        out.push(("MS residual".into(), self.ms[1]));
        out.push(("F".into(), self.f));
        out.push(("df regression".into(), self.df[0]));
        out.push(("df residual".into(), self.df[1]));
        out
    }

    /// One line of the LRE table: minima per quantity.
    pub fn row(&self) -> String {
        format!(
            "| {:<9} | {:>5.1} | {:>5.1} | {:>6.1} | {:>5.1} | {:>5.1} | {:>5.1} | {:>5.1} |",
            self.name,
            min(&self.coefficients),
            min(&self.std_devs),
            self.residual_sd,
            self.r_squared,
            self.ss[0].min(self.ss[1]),
            self.ms[0].min(self.ms[1]),
            self.f
        )
    }
}

/// The table header matching [`Lres::row`].
pub const TABLE_HEADER: &str = "| dataset   | coef  | SD    | res.SD | R²    | SS    | MS    | F     |\n|---|---|---|---|---|---|---|---|";

/// Writes the dataset as a workbook (`y`, `x1`, … on sheet Data, the
/// request in the column after the table), runs `plumb run`, reads the
/// output back with calamine and measures the LRE of every certified value.
/// The request must name its fit `nist`. `None` when the reference data is
/// absent (after a notice).
pub fn through_tool(name: &str, request: &str) -> Option<Lres> {
    let d = load_linear(name)?;
    let dir = super::run::scratch(&format!("nist-{name}-{}", request.len()));
    let input = dir.join(format!("{name}.xlsx"));
    let mut headers = vec!["y".to_string()];
    let mut cols = vec![d.y.iter().map(|v| Some(*v)).collect::<Vec<_>>()];
    for (i, x) in d.x.iter().enumerate() {
        headers.push(format!("x{}", i + 1));
        cols.push(x.iter().map(|v| Some(*v)).collect());
    }
    let h: Vec<&str> = headers.iter().map(|s| s.as_str()).collect();
    let req_col = headers.len() as u32 + 2;
    super::workbooks::write_table(&input, "Data", &h, &cols, &[(0, req_col, request)]);
    let out = dir.join("out.xlsx");
    let summary = super::run::run_to(&input, &out);
    assert!(!summary.any_failed(), "{name}: {:?}", summary.problems);
    let coefs = super::output::coefficients(&out, "nist");
    assert_eq!(coefs.len(), d.coefficients.len(), "{name}: {coefs:?}");
    let stat = |label: &str| super::output::statistic(&out, "nist", label);
    let need = |label: &str| stat(label).unwrap_or_else(|| panic!("{name}: no '{label}' on the Diagnostics sheet"));
    // The analysis of variance is a grid: source rows by figure columns.
    let grid = |source: &str, column: &str| super::output::anova(&out, "nist", source, column).unwrap_or_else(|| panic!("{name}: no '{source}' × '{column}' in the analysis of variance"));
    let r2_label = if d.intercept { "R²" } else { "R² (uncentred, no intercept)" };
    let a = d.anova.clone().unwrap_or_else(|| panic!("{name}: no certified ANOVA table"));
    // F of an exact fit is certified as Infinity; the output shows an
    // infinite F as a blank cell, which counts as exact.
    let f = match stat("F statistic") {
        Some(v) => lre(v, a.f, 15.0),
        None if a.f.is_infinite() => 15.0,
        None => 0.0,
    };
    let l = Lres {
        name: name.to_string(),
        coefficients: coefs.iter().zip(&d.coefficients).map(|(c, b)| lre(c.estimate.unwrap_or(f64::NAN), *b, 15.0)).collect(),
        std_devs: coefs.iter().zip(&d.std_devs).map(|(c, b)| lre(c.std_error.unwrap_or(f64::NAN), *b, 15.0)).collect(),
        residual_sd: lre(need("Residual standard error"), d.residual_sd, 15.0),
        r_squared: lre(need(r2_label), d.r_squared, 15.0),
        ss: [lre(grid("Explained by the terms", "Sum of squares"), a.ss_reg, 15.0), lre(grid("Left in the residuals", "Sum of squares"), a.ss_res, 15.0)],
        ms: [lre(grid("Explained by the terms", "Mean square"), a.ms_reg, 15.0), lre(grid("Left in the residuals", "Mean square"), a.ms_res, 15.0)],
        f,
        df: [lre(grid("Explained by the terms", "Degrees of freedom"), a.df_reg, 15.0), lre(grid("Left in the residuals", "Degrees of freedom"), a.df_res, 15.0)],
    };
    let _ = std::fs::remove_dir_all(&dir);
    Some(l)
}

/// One NIST StRD nonlinear dataset (`nonlinear/*.dat`) with its model,
/// starting values and certified values. Layout (reference README): the
/// header's "File Format" lines give `Starting Values (lines A to B)`,
/// `Certified Values (lines A to C)` and `Data (lines D to E)`; the
/// `Model:` block states the class, the parameter count and the formula
/// (Fortran-like: `**`, square brackets, `arctan`, a trailing `+ e`); rows
/// `bk = start1 start2 estimate sd`, then `Residual Sum of Squares`,
/// `Residual Standard Deviation`, `Degrees of Freedom`, `Number of
/// Observations`; data rows response first.
#[derive(Clone, Debug, PartialEq)]
pub struct NistNonlinear {
    /// Dataset name as in the file name (e.g. "MGH09").
    pub name: String,
    /// The model's formula as printed, lines joined, `+ e` removed
    /// (`y = b1*(1-exp[-b2*x])`).
    pub model: String,
    /// Response.
    pub y: Vec<f64>,
    /// Predictor columns (`x`, or `x1`, `x2` for Nelson).
    pub x: Vec<Vec<f64>>,
    /// Starting values, first and second start.
    pub starts: [Vec<f64>; 2],
    /// Certified estimates.
    pub estimates: Vec<f64>,
    /// Certified standard deviations.
    pub std_devs: Vec<f64>,
    /// Certified residual sum of squares.
    pub rss: f64,
    /// Certified residual standard deviation.
    pub residual_sd: f64,
    /// Degrees of freedom.
    pub df: f64,
}

impl NistNonlinear {
    /// The header names of the data columns: `y`, then `x` (one predictor)
    /// or `x1`, `x2`, ….
    pub fn headers(&self) -> Vec<String> {
        let mut h = vec!["y".to_string()];
        if self.x.len() == 1 {
            h.push("x".into());
        } else {
            h.extend((1..=self.x.len()).map(|i| format!("x{i}")));
        }
        h
    }

    /// The response and the model in the fit language: `**` → `^`,
    /// brackets → parentheses, `arctan` → `atan` (π is the fit language's
    /// `pi`); Nelson's `log[y]` becomes the response `log(y)`.
    pub fn request_parts(&self) -> (String, String) {
        let t = self.model.replace("**", "^").replace('[', "(").replace(']', ")").replace("arctan", "atan");
        let (lhs, rhs) = t.split_once('=').unwrap_or(("y", &t));
        (lhs.split_whitespace().collect(), rhs.split_whitespace().collect::<Vec<_>>().join(" "))
    }

    /// `#nonlinear(y, MODEL, start(b1=…, …), name=nist)` from start 1 or 2.
    pub fn request(&self, start: usize) -> String {
        let (y, model) = self.request_parts();
        let s: Vec<String> = self.starts[start - 1].iter().enumerate().map(|(i, v)| format!("b{}={v:e}", i + 1)).collect();
        format!("#nonlinear({y}, {model}, start({}), name=nist)", s.join(", "))
    }
}

/// The 27 nonlinear datasets, hardest first (NIST's stated difficulty:
/// higher, average, lower; within each, the README's order).
pub const NONLINEAR: [&str; 27] = [
    "MGH09", "Thurber", "BoxBOD", "Rat42", "MGH10", "Eckerle4", "Rat43", "Bennett5", "Kirby2", "Hahn1", "Nelson", "MGH17", "Lanczos1", "Lanczos2", "Gauss3", "Misra1c", "Misra1d", "Roszman1", "ENSO",
    "Misra1a", "Chwirut2", "Chwirut1", "Lanczos3", "Gauss1", "Gauss2", "DanWood", "Misra1b",
];

/// Loads `nist-strd/nonlinear/NAME.dat` (see [`load_linear`] for the
/// rules on a missing folder or file).
pub fn load_nonlinear(name: &str) -> Option<NistNonlinear> {
    let dir = reference_dir()?;
    let path = dir.join("nist-strd").join("nonlinear").join(format!("{name}.dat"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    match parse_nonlinear(name, &text) {
        Ok(d) => Some(d),
        Err(e) => panic!("{}: {e}", path.display()),
    }
}

/// Parses the text of a nonlinear StRD file.
pub fn parse_nonlinear(name: &str, text: &str) -> Result<NistNonlinear, String> {
    let (lines, (c0, c1), (d0, d1)) = sections(text)?;
    // The model: the lines after `Model:` holding an '=' (not `pi = …`)
    // and their continuations, up to the starting-values table.
    let m0 = lines.iter().position(|l| l.starts_with("Model:")).ok_or("no Model: block")?;
    let mut model = String::new();
    for l in &lines[m0 + 1..c0 - 1] {
        let t = l.trim();
        if t.is_empty() || t.contains("Parameters") || t.starts_with("pi =") || t.starts_with("Starting") {
            if !model.is_empty() && t.is_empty() {
                break;
            }
            continue;
        }
        model.push(' ');
        model.push_str(t);
    }
    let model = model.trim();
    let model = model.strip_suffix('e').map(|m| m.trim_end().strip_suffix('+').unwrap_or(m).trim().to_string()).ok_or_else(|| format!("the model does not end in '+ e': {model}"))?;
    let mut starts = [Vec::new(), Vec::new()];
    let (mut estimates, mut std_devs) = (Vec::new(), Vec::new());
    let (mut rss, mut residual_sd, mut df) = (None, None, None);
    for l in &lines[c0 - 1..c1] {
        let toks: Vec<&str> = l.split_whitespace().collect();
        if toks.len() == 6 && toks[1] == "=" && toks[0].starts_with('b') {
            starts[0].push(num(toks[2])?);
            starts[1].push(num(toks[3])?);
            estimates.push(num(toks[4])?);
            std_devs.push(num(toks[5])?);
        } else if l.contains("Residual Sum of Squares") {
            rss = toks.last().map(|t| num(t)).transpose()?;
        } else if l.contains("Residual Standard Deviation") {
            residual_sd = toks.last().map(|t| num(t)).transpose()?;
        } else if l.contains("Degrees of Freedom") {
            df = toks.last().map(|t| num(t)).transpose()?;
        }
    }
    if estimates.is_empty() {
        return Err("no parameter rows (bk = start1 start2 estimate sd)".into());
    }
    let (y, x) = data_rows(&lines, d0, d1)?;
    Ok(NistNonlinear {
        name: name.to_string(),
        model,
        y,
        x,
        starts,
        estimates,
        std_devs,
        rss: rss.ok_or("no residual sum of squares")?,
        residual_sd: residual_sd.ok_or("no residual standard deviation")?,
        df: df.ok_or("no degrees of freedom")?,
    })
}

/// The LRE of every certified value of one nonlinear fit through the tool.
#[derive(Clone, Debug)]
pub struct NonlinearLres {
    /// Dataset name.
    pub name: String,
    /// Start 1 or 2.
    pub start: usize,
    /// Per parameter.
    pub estimates: Vec<f64>,
    /// Per parameter standard deviation.
    pub std_devs: Vec<f64>,
    /// Residual sum of squares.
    pub rss: f64,
    /// Residual standard deviation.
    pub residual_sd: f64,
    /// Iterations the fit took (from the Diagnostics sheet).
    pub iterations: f64,
}

impl NonlinearLres {
    /// (quantity, LRE) for every certified value.
    pub fn named(&self) -> Vec<(String, f64)> {
        let mut out: Vec<(String, f64)> = self.estimates.iter().enumerate().map(|(i, v)| (format!("b{}", i + 1), *v)).collect();
        out.extend(self.std_devs.iter().enumerate().map(|(i, v)| (format!("SD of b{}", i + 1), *v)));
        out.push(("residual sum of squares".into(), self.rss));
        out.push(("residual SD".into(), self.residual_sd));
        out
    }

    /// The smallest LRE of all.
    pub fn worst(&self) -> f64 {
        self.named().iter().map(|x| x.1).fold(f64::INFINITY, f64::min)
    }

    /// One line of the table.
    pub fn row(&self) -> String {
        format!(
            "| {:<9} | {} | {:>5.1} | {:>5.1} | {:>5.1} | {:>6.1} | {:>5} |",
            self.name,
            self.start,
            min(&self.estimates),
            min(&self.std_devs),
            self.rss,
            self.residual_sd,
            self.iterations
        )
    }
}

/// The table header matching [`NonlinearLres::row`].
pub const NONLINEAR_HEADER: &str = "| dataset   | start | estimates | SD | RSS | res.SD | iterations |\n|---|---|---|---|---|---|---|";

/// Values the certificate cannot be held to: for Lanczos1 the residual sum
/// of squares and standard deviations of the exact least-squares solution
/// of the data as stored in doubles (tests/data/lanczos1_exact.json,
/// written by tests/reference/lanczos1_exact.py), as `(rss, residual_sd,
/// std_devs)`.
pub fn lanczos1_exact() -> (f64, f64, Vec<f64>) {
    let path = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/lanczos1_exact.json");
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("cannot read {path}: {e}"));
    let v: serde_json::Value = serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"));
    let f = |k: &str| v[k].as_str().and_then(|s| s.parse::<f64>().ok()).unwrap_or_else(|| panic!("{path}: no {k}"));
    let sds = v["std_devs"].as_array().unwrap_or_else(|| panic!("{path}: no std_devs")).iter().map(|s| s.as_str().and_then(|s| s.parse::<f64>().ok()).unwrap_or_else(|| panic!("{path}: bad std_devs"))).collect();
    (f("rss"), f("residual_sd"), sds)
}

/// Fits one nonlinear dataset from start 1 or 2 through the whole tool
/// (workbook in, `plumb run`, workbook out read back with calamine) and
/// measures the LRE of every certified value (11 significant digits
/// printed, so the cap is 11). `None` when the reference data is absent.
pub fn nonlinear_through_tool(name: &str, start: usize) -> Option<NonlinearLres> {
    let d = load_nonlinear(name)?;
    let request = d.request(start);
    let dir = super::run::scratch(&format!("nist-nl-{name}-{start}"));
    let input = dir.join(format!("{name}.xlsx"));
    let headers = d.headers();
    let mut cols = vec![d.y.iter().map(|v| Some(*v)).collect::<Vec<_>>()];
    cols.extend(d.x.iter().map(|x| x.iter().map(|v| Some(*v)).collect()));
    let h: Vec<&str> = headers.iter().map(|s| s.as_str()).collect();
    let req_col = headers.len() as u32 + 2;
    super::workbooks::write_table(&input, "Data", &h, &cols, &[(0, req_col, request.as_str())]);
    let out = dir.join("out.xlsx");
    let summary = super::run::run_to(&input, &out);
    assert!(!summary.any_failed(), "{name} start {start} ({request}): {:?}", summary.problems);
    let coefs = super::output::coefficients(&out, "nist");
    assert_eq!(coefs.len(), d.estimates.len(), "{name}: {coefs:?}");
    let need = |label: &str| super::output::statistic(&out, "nist", label).unwrap_or_else(|| panic!("{name}: no '{label}' on the Diagnostics sheet"));
    let (rss, sd, sds) = if name == "Lanczos1" { lanczos1_exact() } else { (d.rss, d.residual_sd, d.std_devs.clone()) };
    let l = NonlinearLres {
        name: name.to_string(),
        start,
        estimates: coefs.iter().zip(&d.estimates).map(|(c, b)| lre(c.estimate.unwrap_or(f64::NAN), *b, 11.0)).collect(),
        std_devs: coefs.iter().zip(&sds).map(|(c, b)| lre(c.std_error.unwrap_or(f64::NAN), *b, 11.0)).collect(),
        rss: lre(need("Residual sum of squares"), rss, 11.0),
        residual_sd: lre(need("Residual standard error"), sd, 11.0),
        iterations: need("Iterations (trial steps)"),
    };
    let _ = std::fs::remove_dir_all(&dir);
    Some(l)
}
