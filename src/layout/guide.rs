//! The Guide sheet: what every figure and column means, in plain words,
//! and the cautions that go with any fit.

use super::{OutCell, Sheet, Style};

/// The plain-language guide.
pub(super) fn sheet(name: &str) -> Sheet {
    let mut s = Sheet::new(name);
    s.widths.insert(0, 28.0);
    s.widths.insert(1, 100.0);
    let entries: &[(&str, &str)] = &[
        ("How to read this workbook", ""),
        ("", "Each request cell on your sheets now shows its outcome; click it to jump to the fit's coefficients. The sheets after your own hold the results: Fits lists every request, Coefficients and Intervals the estimates, Diagnostics how well each fit describes the data."),
        ("Columns beside your data", ""),
        ("Fitted", "The value the fit predicts for that row."),
        ("Residual", "Observed minus fitted. Residuals should look like random scatter around zero."),
        ("Standardized residual", "The residual divided by its own standard error. Values beyond about ±2 are unusual, beyond ±3 rare."),
        ("Leverage", "How far the row's predictor values lie from the others (0 to 1). A common rule of thumb (not a test) flags leverage above 2p/n, with p parameters and n rows."),
        ("Cook's distance", "How much all fitted values would move if the row were left out. A common rule of thumb flags values above 4/n; plumb warns about a row above 0.5 and names it."),
        ("Studentized residual", "The residual divided by the spread the other rows show when this row is left out (externally studentized). Under the model it follows Student's t, so beyond ±3 is rare; the Diagnostics sheet counts such rows (common practice, not a test)."),
        ("DFFITS", "How many standard errors the row's own fitted value moves when the row is left out. A common rule of thumb flags sizes above 2√(p/n)."),
        ("Coefficients", ""),
        ("Estimate", "The change in the response for one unit more of the term, the other terms held fixed. For a text column each level gets its own row (Bay=North): the difference from the base level."),
        ("Standard error", "How precisely the estimate is known; smaller is more precise."),
        ("t statistic", "Estimate divided by its standard error."),
        ("p-value", "If the term truly had no effect, the chance of an estimate at least this far from zero. A small p-value (say below 0.05) is evidence of an effect; a large one is not evidence of no effect."),
        ("VIF", "Variance inflation factor: how much the term's variance is inflated because it can be predicted from the other terms, 1/(1 − R²) of the term on the others. 1 means no overlap; above 10 (common practice) the term is nearly collinear with the others, and plumb warns. Blank for the intercept."),
        ("Standardized coefficient", "The estimate × (standard deviation of the term) / (standard deviation of the response): the change in the response, in its standard deviations, for one standard deviation more of the term. Lets terms in different units be compared; for an indicator column (Bay=North) it is less meaningful. Blank for the intercept."),
        ("Standard errors", "Which standard errors the row uses: classic (they assume the residual spread is the same everywhere) or, with errors=hc0 … hc3, heteroscedasticity-consistent ones that stay valid when the spread changes (White 1980; HC1–HC3 from MacKinnon & White 1985, which correct HC0's tendency to be too small in small samples; HC3 is the usual choice). The t statistic, p-value and interval then use them, with Student's t on n − p degrees of freedom."),
        ("Confidence interval", "The range of values of the coefficient consistent with the data at the stated level (0.95: 95 %). Narrow intervals mean precise estimates."),
        ("Goodness of fit", ""),
        ("R²", "The share of the response's variation the fit explains (0 to 1). Without an intercept it is the uncentred R², not comparable with the usual one."),
        ("Adjusted R²", "R² penalised for the number of terms; use it to compare fits with different numbers of terms."),
        ("Root mean squared error", "The typical size of a residual, in the response's units."),
        ("F statistic and its p-value", "Whether the terms together explain more than chance would."),
        ("Log-likelihood, AIC, BIC", "For comparing fits of the same response on the same rows: lower AIC or BIC is better."),
        ("Residual checks", ""),
        ("Durbin–Watson", "Whether residuals of neighbouring rows (in sheet order, rows left out skipped) are correlated: Σ(difference of neighbouring residuals)² / Σ residual². About 2 means no correlation; towards 0 neighbours have similar residuals, towards 4 opposite ones. plumb warns below 1.5 or above 2.5 (a common rule of thumb; it matters mostly when the rows are in time order)."),
        ("Breusch–Pagan", "Whether the residuals' spread changes with the terms: the squared residuals are regressed on the terms. Two forms are shown: Koenker's studentized form (n × R² of that regression, valid whatever the residuals' distribution) and the original form (half its explained sum of squares after dividing by the mean square, which assumes normal residuals), each with its p-value on as many degrees of freedom as there are terms. plumb warns when Koenker's p-value is below 0.05; errors=hc3 then gives standard errors that allow for it."),
        ("Jarque–Bera", "Whether the residuals look normally distributed, from their skewness S and kurtosis K: n/6 × (S² + (K − 3)²/4), with its p-value (chi-squared, 2 degrees of freedom). A small p-value says the residuals are not normal; with many rows the coefficients' tests are still roughly right."),
        ("Skewness, kurtosis", "Skewness 0 means residuals balanced around zero; kurtosis 3 is that of a normal distribution (higher: more extreme residuals than normal)."),
        ("Collinearity", ""),
        ("Condition number", "How close the terms are to being combinations of one another: the ratio of the largest to the smallest singular value of the design (intercept column included, not centred) after each column is scaled to unit length (Belsley, Kuh & Welsch 1980). Above about 30 collinearity begins to matter, above about 1000 the estimates become unstable. The largest VIF and its term are shown beside it."),
        ("Influence", ""),
        ("Largest leverage, Cook's distance, studentized residual", "The row with the largest value, named by its row on its sheet (click it to go there)."),
        ("Counts of flagged rows", "Rows with leverage above 2p/n, Cook's distance above 4/n, or a studentized residual beyond ±3 (p parameters, n rows): the usual rules of thumb, common practice rather than tests. A flagged row is worth a look, not necessarily wrong."),
        ("Warnings", "Plain-language warnings on the Fits and Diagnostics sheets and at the request cell come from these figures: residuals correlated in row order (Durbin–Watson outside 1.5–2.5), spread growing with the fitted value (Breusch–Pagan p below 0.05), a row with a large influence (Cook's distance above 0.5, named by its sheet row), terms nearly collinear (VIF above 10), and rows left out."),
        ("Analysis of variance", "The split of the total sum of squares into the part the fit explains (regression) and the part left over (residual), with degrees of freedom and mean squares."),
        ("Rows left out", "Rows with a blank, text or error cell in a column the request uses are left out and counted (missing=skip); missing=stop makes the request fail instead."),
        ("Predictions", ""),
        ("Predicted value", "What the fit gives for the response at the values of a #predict request or of the calculator's inputs."),
        ("Interval of the mean", "The range in which the average response at those values lies, at the stated level: how precisely the fit pins down the mean."),
        ("Interval of a new observation", "The range in which one new measurement at those values would fall, at the stated level. It is wider than the interval of the mean, because single measurements scatter around the mean."),
        ("Outside the data", "A point whose values lie beyond those the fit was made from, or whose leverage exceeds every row's: the prediction is an extrapolation and may be far off."),
        ("Prediction calculator", "On the Intervals sheet, one per fit: type values into the shaded cells and the prediction and both intervals follow, computed by the workbook's own formulas from the coefficients and their covariance shown below them."),
        ("Comparisons", "Fits of one response side by side. Lower AIC or BIC is better; for fits whose terms contain another's, a small p-value of F says the extra terms help. When figures are close, prefer the simpler fit."),
        ("Charts", "Per fit: the data with the fitted line (or observed against fitted values: points near the line fit well), residuals against fitted values (look for a pattern or a funnel shape: there should be none), and a normal quantile plot (points near the line mean the residuals look normal, which the p-values and intervals assume)."),
        ("Cautions", ""),
        ("Association is not causation", "A fit shows how the response moves with the terms in these data. It does not show that changing a term would change the response."),
        ("No extrapolation", "Predictions are only supported within the range of the data the fit was made from."),
        ("A fit is only as good as its data", "Check the residual columns and the diagnostics before relying on a result. Decisions about safety, health or money rest with qualified people and the rules that apply where you are."),
    ];
    for (i, (k, v)) in entries.iter().enumerate() {
        let style = if v.is_empty() { Style::Title } else { Style::Header };
        if !k.is_empty() {
            s.put(i as u32, 0, OutCell::text(*k, style));
        }
        if !v.is_empty() {
            s.put(i as u32, 1, OutCell::text(*v, Style::Wrap));
        }
    }
    s
}

