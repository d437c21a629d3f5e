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
        ("", "Each request cell on your sheets now shows its outcome; click it to jump to the fit's coefficients. The sheets after your own hold the results: Fits lists every request, Coefficients the estimates with their confidence intervals, Intervals the intervals again with the predictions and a calculator per fit, Diagnostics every fit side by side, one column per fit, in blocks by the question each figure answers."),
        ("Columns beside your data", ""),
        ("Fitted", "The value the fit gives for that row."),
        ("Residual", "Observed minus fitted. Residuals should look like random scatter around zero."),
        ("Internally studentized residual", "The residual divided by its own standard error, s·√(1 − leverage), with s the residual standard error of the whole fit. Values beyond about ±2 are unusual, beyond ±3 rare. The normal quantile chart plots these."),
        ("Externally studentized residual", "The residual divided by its standard error with s taken from the fit without this row. Under the model it follows Student's t on n − p − 1 degrees of freedom, so beyond ±3 is rare; the Diagnostics sheet counts such rows (common practice, not a test)."),
        ("Leverage", "How far the row's values of the terms lie from the others (0 to 1). A common rule of thumb (not a test) flags leverage above 2p/n, with p coefficients and n rows."),
        ("Cook's distance", "How much all fitted values would move if the row were left out. A common rule of thumb flags values above 4/n; plumb warns about a row above 0.5 and names it."),
        ("DFFITS", "How many standard errors the row's own fitted value moves when the row is left out. A common rule of thumb flags sizes above 2√(p/n)."),
        ("Coefficients", ""),
        ("Estimate", "For a plain numeric term: the change in the response for one unit more of the term, the other terms held fixed. For a text column each level but the reference level gets its own row, labelled with what it is compared with: Bay: North vs East is the difference of North from East, the reference level (the first level in sorted order, or the one against(Bay=\"South\") names). For a log response, log(Yield): the change in the natural log of the response, so 100 × estimate is roughly the percentage change when it is small. For a power such as Light^2, or a product such as Light*CO2, the term cannot change with the others held fixed: read the powers of one column together (the slope in Light is b₁ + 2·b₂·Light), and a product's estimate as how the slope in one column changes per unit of the other."),
        ("Intercept", "The fitted response when every term is zero (and every text column at its reference level); often outside the data, and then of no interest by itself."),
        ("Standard error", "How precisely the estimate is known; smaller is more precise. Estimates, standard errors and interval ends are shown to the decimals that give the standard error three significant digits; every cell keeps the full value."),
        ("Confidence interval", "The range of values of the coefficient consistent with the data at the stated level (95 %: estimate ± the t quantile × standard error). Narrow intervals mean precise estimates. Shown beside the estimate on Coefficients and again on Intervals."),
        ("t statistic", "Estimate divided by its standard error."),
        ("p-value", "If the term truly had no effect, the chance of an estimate at least this far from zero. A small p-value (say below 0.05) is evidence of an effect; a large one is not evidence of no effect."),
        ("VIF", "Variance inflation factor: how much the term's variance is inflated because it can be predicted from the other terms, 1/(1 − R²) of the term on the others. 1 means no overlap; above 10 (common practice) the term is nearly collinear with the others, and plumb warns. Left blank, with the reason in the Remark column, where it means nothing: for the intercept, for a power beside other powers of its column (collinear by construction, harmless), in a fit without an intercept, and for the indicator rows of a text column, whose term gets one generalized VIF on Diagnostics instead."),
        ("Standardized coefficient", "The estimate × (standard deviation of the term) / (standard deviation of the response): the change in the response, in its standard deviations, for one standard deviation more of the term. Lets terms in different units be compared; for an indicator row it is less meaningful. Left blank for the intercept, for a power beside other powers of its column (it cannot move alone) and in a fit without an intercept."),
        ("Standard-error method", "Which standard errors the row uses: classic (they assume the residual spread is the same everywhere) or, with errors=hc0 … hc3, heteroscedasticity-consistent ones that stay valid when the spread changes (White 1980; HC1–HC3 from MacKinnon & White 1985, which correct HC0's tendency to be too small in small samples; HC3 is the usual choice). The t statistic, p-value and interval of each coefficient then use them, with Student's t on n − p degrees of freedom. The F test, the analysis of variance, predictions and #compare stay classic."),
        ("Diagnostics: how closely does it fit?", ""),
        ("Rows used, coefficients, residual degrees of freedom", "n rows used, p coefficients estimated (aliased terms not counted), and n − p, the degrees of freedom left for the residuals."),
        ("Residual standard error", "s = √(SSE/(n − p)), with SSE the sum of squared residuals: the typical size of a residual, in the response's units. The same figure everywhere in plumb (Diagnostics, Comparisons, the calculator). It is not √(SSE/n)."),
        ("R²", "The share of the response's variation the fit explains, 1 − SSE/SST (0 to 1). Without an intercept it is the uncentred R², 1 − SSE/Σy², not comparable with the usual one."),
        ("Adjusted R²", "R² penalised for the number of coefficients, 1 − (1 − R²)(n − 1)/(n − p); use it to compare fits with different numbers of terms."),
        ("Diagnostics: do the terms help at all?", ""),
        ("F statistic", "Whether the terms together explain more than chance would: the mean square of the terms over the mean square of the residuals, on (degrees of freedom of the terms, residual degrees of freedom), shown beside it, with its upper-tail p-value. With errors=hc* it is the robust Wald test of every coefficient but the intercept, in its F form (the Wald statistic W over its q degrees of freedom, on F(q, n − p)), and a note says so."),
        ("Does each term help, given the others?", "For each term, one F test of all its columns together: would dropping the term, every other term kept, make the fit significantly worse? For a text column it tests all its levels at once, which the rows of single indicators cannot; its p-value also stands on each indicator's row of Coefficients (p-value of the whole term). Each term is tested given all the others, so the answer for a term depends on which others are in the fit; with a product of terms, the test of a term inside the product depends on how its levels are coded. Classic, or with errors=hc* a robust Wald test in the same F form."),
        ("Analysis of variance", "A grid per fit at the foot of Diagnostics: the total sum of squares (about the mean; about zero without an intercept) divided into the part explained by the terms and the part left in the residuals, each with its degrees of freedom and mean square (sum of squares / degrees of freedom), and F with its p-value on the terms' row."),
        ("Diagnostics: shape of the residuals", ""),
        ("Jarque–Bera", "Whether the residuals look normally distributed, from their skewness S and kurtosis K: n/6 × (S² + (K − 3)²/4), with its p-value (chi-squared, 2 degrees of freedom). A small p-value says the residuals are not normal; with many rows the coefficients' tests are still roughly right."),
        ("Skewness", "0 means the residuals are symmetric about their mean; positive: a longer tail of large positive residuals, negative: of large negative ones."),
        ("Kurtosis", "Shown as kurtosis itself, not excess kurtosis: 3 is that of a normal distribution; higher means more extreme residuals than normal, lower fewer."),
        ("Diagnostics: spread of the residuals", ""),
        ("Breusch–Pagan", "Whether the residuals' spread changes with the terms: the squared residuals are regressed on the terms of the fit (not on the fitted value). Two forms are shown: Koenker's studentized form (n × R² of that regression, valid whatever the residuals' distribution) and the original form (half the explained sum of squares of the regression of e²/(SSE/n) on the terms, which assumes normal residuals), each with its p-value on as many degrees of freedom as there are terms. plumb warns when Koenker's p-value is below 0.05, and says whether the spread grows with the fitted value; errors=hc3 then gives standard errors that allow for it."),
        ("Diagnostics: order of the residuals", ""),
        ("Durbin–Watson", "Whether residuals of neighbouring rows (in sheet order, rows left out skipped) are correlated: Σ(difference of neighbouring residuals)² / Σ residual². About 2 means no correlation; towards 0 neighbours have similar residuals, towards 4 opposite ones. plumb warns below 1.5 or above 2.5 (a common rule of thumb; it matters mostly when the rows are in time order)."),
        ("Diagnostics: do the terms overlap?", ""),
        ("Condition number", "How close the columns of the design are to being combinations of one another: the ratio of the largest to the smallest singular value of the design, intercept column included and not centred, after each column is scaled to unit length (Belsley, Kuh & Welsch 1980). Because the intercept is included, a column whose values lie far from zero raises it even when the VIFs are near 1: that overlap is with the intercept and does not make the slopes unstable. Read it with the VIFs: above about 30 with a large VIF, collinearity matters; above about 1000 the estimates become unstable. Left out for fits with powers of one column, which plumb solves in a centred, scaled basis where the raw design's figure does not apply."),
        ("Largest variance inflation factor", "The largest VIF shown on Coefficients, with its term on the line below."),
        ("Generalized VIF", "One figure for a term of several columns, such as a text column's indicators (Fox & Monette 1992): det(R₁₁)·det(R₂₂)/det(R), with R the correlation matrix of the columns, R₁₁ that of the term's own columns and R₂₂ that of the others. It does not depend on which level is the reference level. For d columns, GVIF^(1/d) is on the scale of an ordinary VIF; plumb warns when that is above 10."),
        ("Diagnostics: rows that stand out", ""),
        ("Largest leverage, Cook's distance, externally studentized residual", "The row with the largest value, named on the line below by its row on its sheet (click it to go there)."),
        ("Counts of flagged rows", "Rows with leverage above 2p/n, Cook's distance above 4/n, or an externally studentized residual beyond ±3 (p coefficients, n rows): the usual rules of thumb, common practice rather than tests. A flagged row is worth a look, not necessarily wrong."),
        ("Diagnostics: for comparing fits of one response", ""),
        ("Log-likelihood", "Of the normal model at its estimates: ln L = −n/2 · (ln(2π) + ln(SSE/n) + 1), plus ½·Σ ln wᵢ for a weighted fit."),
        ("AIC, BIC", "AIC = −2 ln L + 2k and BIC = −2 ln L + k·ln n, with k the number of coefficients estimated. The residual variance σ² is not counted as a parameter, so these values are 2 (AIC) and ln n (BIC) lower than where it is counted; differences between fits, which are what matter, are the same either way. For fits of the same response on the same rows, lower is better."),
        ("Warnings and notes", "Warnings, on the Fits and Diagnostics sheets and at the request cell, are for what should worry the reader: residuals correlated in row order (Durbin–Watson outside 1.5–2.5), a spread that changes with the terms (Breusch–Pagan p below 0.05), a row with a large influence (Cook's distance above 0.5, named by its sheet row), terms nearly collinear (VIF, or generalized VIF on the VIF's scale, above 10). Notes say what was done: rows left out, which R², why a figure is blank."),
        ("Rows left out", "Rows with a blank, text or error cell in a column the request uses are left out and counted (gaps=skip, the default); gaps=stop makes the request fail instead."),
        ("Logarithms", "log(x) in a request is the natural logarithm, the spreadsheet's LN; the spreadsheet's LOG is base 10 (write log10(x) for that). ln(x) means the same as log(x)."),
        ("Predictions", ""),
        ("Predicted value", "What the fit gives for the response at the values of a #predict request or of the calculator's inputs."),
        ("Confidence interval (of a prediction)", "The range in which the mean response at those values is estimated to lie, at the stated level: how precisely the fit pins down the mean. From the standard error of the fitted value."),
        ("Prediction interval", "The range in which one new observation at those values would fall, at the stated level. It is wider than the confidence interval, because single observations scatter around the mean: its standard error is √(s² + standard error of the fitted value²)."),
        ("Standard error of the fitted value", "How precisely the fit pins down the mean response at those values (not s/√n, the standard error of a sample mean)."),
        ("Outside the data", "A point whose values lie beyond those the fit was made from, or whose leverage exceeds every row's: the prediction is an extrapolation and may be far off."),
        ("Prediction calculator", "On the Intervals sheet, one per fit: type values into the shaded cells and the prediction and both intervals follow, computed by the workbook's own formulas from the coefficients and their covariance shown below them (for a curve, from the model and its gradient written as formulas; for a probability, the confidence interval only, formed on the log-odds scale). Its cells use the spreadsheet's general number format, so a small value stays visible as you change the inputs."),
        ("Comparisons", "Fits of one response side by side. Lower AIC or BIC is better; for fits whose terms contain another's, a small p-value of F says the extra terms help. When figures are close, prefer the simpler fit. These F tests are classic even for fits with errors=hc*."),
        ("Charts", "Per fit: the data with the fitted line (or observed against fitted values: points near the line fit well), residuals against fitted values with a line at zero (look for a pattern or a funnel shape: there should be none), and a normal quantile plot of the internally studentized residuals (points near the line mean the residuals look normal, which the p-values and intervals assume)."),
        ("Robust fits (#robust)", ""),
        ("Weight", "How much say the row had in a robust fit, from 1 (a full say, as in least squares) down to 0 (none). A robust fit measures each row's distance from the fit in robust scales and gives rows far out less weight, so a few wild values cannot pull the fit towards them. Huber's method (the default) keeps some weight for every row; bisquare gives none to rows beyond its tuning constant."),
        ("A down-weighted row is a row to check", "A low weight says the row does not follow the pattern of the others: often a typing or reading error, sometimes the most interesting row in the table. Check it at its source and correct it if it is wrong; do not delete it just because the fit down-weighted it. The Diagnostics sheet names the rows with the lowest weights."),
        ("Robust scale", "The typical size of a residual, measured so that a few wild rows do not inflate it: the median absolute residual divided by 0.6745, which equals the standard deviation when the residuals are normal. Residual / robust scale says how many such scales a row lies from the fit."),
        ("Robust minus least squares", "How far each robust estimate lies from the least-squares one, in robust standard errors: a large figure says the down-weighted rows were pulling the least-squares estimate."),
        ("Predictions from a robust fit", "They use Huber's asymptotic covariance of the estimates and the robust scale. The confidence interval is approximate, and trustworthy when there are many rows per coefficient; the prediction interval assumes the new observation is like the fully weighted rows, not like the rows the fit down-weighted."),
        ("Cautions", ""),
        ("Association is not causation", "A fit shows how the response moves with the terms in these data. It does not show that changing a term would change the response."),
        ("No extrapolation", "Predictions are only supported within the range of the data the fit was made from."),
        ("A fit is only as good as its data", "Check the residual columns and the diagnostics before relying on a result. Decisions about safety, health or money rest with qualified people and the rules that apply where you are."),
    ];
    for (i, (k, v)) in entries.iter().enumerate() {
        // Keys wrap within their column, and the row is as tall as the
        // longer of key and explanation (readable::fit).
        let style = if v.is_empty() { Style::Title } else { Style::Label };
        if !k.is_empty() {
            s.put(i as u32, 0, OutCell::text(*k, style));
        }
        if !v.is_empty() {
            s.put(i as u32, 1, OutCell::text(*v, Style::Wrap));
        }
    }
    s
}

