"""The methods appendix as data: each rule and test in plain words, with its references.

The rules come from the modules that apply them, so the appendix cannot drift from the code.
"""

from __future__ import annotations

from typing import Any

from reportgen.stats.order import DECISION_RULE, DETERMINISTIC_RULE, GRID_RULE
from reportgen.stats.regression import VERDICT_RULE

TESTS: tuple[dict[str, str], ...] = (
    {
        "name": "Augmented Dickey-Fuller (ADF)",
        "null_hypothesis": "the series has a unit root",
        "description": (
            "OLS of the first difference on the lagged level, the chosen deterministic terms and lagged "
            "differences. The number of lagged differences minimises the chosen information criterion over "
            "0 to int(12 (T/100)^(1/4)) lags (Schwert's rule, rounded down); all candidates are fitted on the "
            "common sample of the longest lag and the chosen lag is refitted on its own full sample. The "
            "t-statistic on the lagged level is compared with MacKinnon's response-surface critical values at "
            "the regression's sample size; the p-value comes from MacKinnon's (1994) surface and is shown as a "
            "bound where the statistic lies beyond it."
        ),
        "reference": "Dickey and Fuller (1979); Said and Dickey (1984); MacKinnon (1994, 2010); Schwert (1989)",
    },
    {
        "name": "KPSS",
        "null_hypothesis": "the series is stationary (around a constant, or around a linear trend)",
        "description": (
            "The partial sums of the residuals from a regression on a constant (or a constant and a trend), "
            "scaled by a long-run variance estimated with Bartlett weights and the short bandwidth "
            "int(4 (T/100)^(1/4)) that Kwiatkowski, Phillips, Schmidt and Shin (1992) report (from memory); "
            "a data-dependent bandwidth grows with persistence and costs the test its power against a unit "
            "root. Critical values are those of Kwiatkowski, Phillips, Schmidt and Shin (1992, Table 1); "
            "p-values are interpolated in that table and shown as bounds outside it (below 0.01 or above 0.10)."
        ),
        "reference": "Kwiatkowski, Phillips, Schmidt and Shin (1992)",
    },
    {
        "name": "Phillips-Perron (PP)",
        "null_hypothesis": "the series has a unit root",
        "description": (
            "The Dickey-Fuller regression without lagged differences; the t-statistic on the lagged level is "
            "corrected non-parametrically for serial correlation with a Bartlett-kernel long-run variance "
            "(Phillips and Perron 1988, Z_t form). It shares the Dickey-Fuller distribution, so MacKinnon's "
            "critical values and p-values apply."
        ),
        "reference": "Phillips and Perron (1988); MacKinnon (1994, 2010)",
    },
    {
        "name": "DF-GLS",
        "null_hypothesis": "the series has a unit root",
        "description": (
            "The series is detrended by generalised least squares against a local alternative (c = -7 with a "
            "constant, -13.5 with a constant and trend) and an ADF regression without deterministic terms is run "
            "on the detrended series (Elliott, Rothenberg and Stock 1996). It has more power than ADF near the "
            "unit root. Critical values: Elliott, Rothenberg and Stock (1996, Table I) with a trend, the "
            "no-constant Dickey-Fuller values with a constant."
        ),
        "reference": "Elliott, Rothenberg and Stock (1996)",
    },
    {
        "name": "Zivot-Andrews (ZA)",
        "null_hypothesis": "a unit root without a structural break",
        "description": (
            "ADF regressions with a one-time break in the intercept (or in the intercept and trend) at every "
            "candidate date inside the trimmed sample (15% at each end); the statistic is the smallest "
            "t-statistic, and the break date is where it occurs. It guards against mistaking a stationary "
            "series with a level shift for a unit root; it is reported beside the battery and does not vote."
        ),
        "reference": "Zivot and Andrews (1992)",
    },
    {
        "name": "Engle-Granger residual test",
        "null_hypothesis": "no cointegration (the levels regression's residuals have a unit root)",
        "description": (
            "Step one regresses the dependent series on a constant and the integrated regressors in levels; "
            "step two runs an ADF regression without deterministic terms on the residuals. Critical values come "
            "from MacKinnon's (2010) response surfaces for the number of integrated variables, with the paper's "
            "coefficients (several library copies carry transcription errors that reportgen corrects); the "
            "p-value comes from MacKinnon's (1994) surface."
        ),
        "reference": "Engle and Granger (1987); MacKinnon (1994, 2010)",
    },
    {
        "name": "Johansen reduced-rank tests",
        "null_hypothesis": "the cointegrating rank is at most r (trace), or exactly r against r + 1 "
                           "(maximum eigenvalue)",
        "description": (
            "The eigenvalues of the reduced-rank regression of a vector error-correction model with the stated "
            "deterministic case give the trace and maximum-eigenvalue statistics for each rank r. The rank is "
            "chosen by the sequential trace procedure: the first r whose null hypothesis is not rejected. "
            "Critical values: MacKinnon, Haug and Michelis (1999) for the unrestricted cases; for the "
            "restricted ones (2 and 4), reportgen's own seeded simulation, which lies within 3% of "
            "Osterwald-Lenum (1992). The case follows the drift: a constant restricted to the relation "
            "when no variable drifts, unrestricted when one does."
        ),
        "reference": "Johansen (1988, 1991); MacKinnon, Haug and Michelis (1999); Osterwald-Lenum (1992)",
    },
    {
        "name": "ARDL bounds test",
        "null_hypothesis": "no levels relation (the lagged levels in the conditional error-correction model are "
                           "jointly zero)",
        "description": (
            "An F-test on the lagged levels of an ARDL model in error-correction form, compared with two bounds: "
            "the critical value if every regressor were I(0) and if every regressor were I(1). Above the upper "
            "bound a levels relation exists whatever the regressors' orders; below the lower bound it does not; "
            "between them the test cannot decide. Used when the regressors mix I(0) and I(1) series; the case "
            "(deterministic terms) is stated with the result, and the critical values are looked up for the "
            "actual number of regressors."
        ),
        "reference": "Pesaran, Shin and Smith (2001)",
    },
    {
        "name": "Dynamic OLS long-run coefficients",
        "null_hypothesis": "each long-run coefficient is zero (t-test)",
        "description": (
            "The levels regression augmented with leads and lags of the regressors' first differences, so that "
            "the long-run coefficients have standard errors valid for inference when the variables are "
            "cointegrated; standard errors are HAC (Newey-West, Bartlett kernel)."
        ),
        "reference": "Stock and Watson (1993)",
    },
    {
        "name": "OLS with HAC standard errors",
        "null_hypothesis": "each coefficient is zero (t-test)",
        "description": (
            "Levels, differences and error-correction equations are fitted by OLS with Newey-West standard "
            "errors (Bartlett kernel, int(4 (T/100)^(2/9)) lags, small-sample correction); residuals are computed "
            "by reportgen from the fitted equation. Durbin-Watson, Ljung-Box, Breusch-Godfrey, Jarque-Bera, "
            "Breusch-Pagan and Ramsey RESET diagnostics accompany every fit."
        ),
        "reference": "Newey and West (1987, 1994); Durbin and Watson (1950); Ljung and Box (1978); "
                     "Breusch (1978); Godfrey (1978); Jarque and Bera (1980); Breusch and Pagan (1979); "
                     "Ramsey (1969)",
    },
    {
        "name": "Random-walk fan chart",
        "null_hypothesis": "(a picture, not a test)",
        "description": (
            "For each integrated series, random walks with the series' own mean and standard deviation of first "
            "differences are simulated from its first value with a fixed seed; the 5-95% and 25-75% bands show "
            "where a random walk of that kind would wander, so a reader can see whether the series behaves "
            "like one."
        ),
        "reference": "common practice",
    },
    {
        "name": "Error-correction model (Engle-Granger two-step)",
        "null_hypothesis": "no adjustment toward the long-run relation (adjustment coefficient zero)",
        "description": (
            "When the levels relation is cointegrated, the first difference of the dependent series is "
            "regressed on the lagged long-run residual, the differences of the regressors and one lag of every "
            "difference. The adjustment coefficient alpha should be negative; the half-life of a deviation is "
            "ln(0.5) / ln(1 + alpha) periods."
        ),
        "reference": "Engle and Granger (1987)",
    },
)

REFERENCES: tuple[str, ...] = (
    "Breusch, T. S. (1978). Testing for autocorrelation in dynamic linear models. Australian Economic Papers 17.",
    "Breusch, T. S. and Pagan, A. R. (1979). A simple test for heteroscedasticity and random coefficient "
    "variation. Econometrica 47.",
    "Dickey, D. A. and Pantula, S. G. (1987). Determining the order of differencing in autoregressive "
    "processes. Journal of Business and Economic Statistics 5.",
    "Dickey, D. A. and Fuller, W. A. (1981). Likelihood ratio statistics for autoregressive time series with "
    "a unit root. Econometrica 49.",
    "Dickey, D. A. and Fuller, W. A. (1979). Distribution of the estimators for autoregressive time series with a "
    "unit root. Journal of the American Statistical Association 74.",
    "Dolado, J. J., Jenkinson, T. and Sosvilla-Rivero, S. (1990). Cointegration and unit roots. Journal of "
    "Economic Surveys 4.",
    "Durbin, J. and Watson, G. S. (1950). Testing for serial correlation in least squares regression I. "
    "Biometrika 37.",
    "Elliott, G., Rothenberg, T. J. and Stock, J. H. (1996). Efficient tests for an autoregressive unit root. "
    "Econometrica 64.",
    "Elder, J. and Kennedy, P. E. (2001). Testing for unit roots: what should students be taught? Journal "
    "of Economic Education 32.",
    "Engle, R. F. and Granger, C. W. J. (1987). Co-integration and error correction: representation, estimation "
    "and testing. Econometrica 55.",
    "Godfrey, L. G. (1978). Testing against general autoregressive and moving average error models when the "
    "regressors include lagged dependent variables. Econometrica 46.",
    "Granger, C. W. J. and Newbold, P. (1974). Spurious regressions in econometrics. Journal of Econometrics 2.",
    "Johansen, S. (1988). Statistical analysis of cointegration vectors. Journal of Economic Dynamics and "
    "Control 12.",
    "Johansen, S. (1991). Estimation and hypothesis testing of cointegration vectors in Gaussian vector "
    "autoregressive models. Econometrica 59.",
    "Jarque, C. M. and Bera, A. K. (1980). Efficient tests for normality, homoscedasticity and serial "
    "independence of regression residuals. Economics Letters 6.",
    "Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. and Shin, Y. (1992). Testing the null hypothesis of "
    "stationarity against the alternative of a unit root. Journal of Econometrics 54.",
    "Ljung, G. M. and Box, G. E. P. (1978). On a measure of lack of fit in time series models. Biometrika 65.",
    "MacKinnon, J. G., Haug, A. A. and Michelis, L. (1999). Numerical distribution functions of likelihood "
    "ratio tests for cointegration. Journal of Applied Econometrics 14.",
    "MacKinnon, J. G. (1994). Approximate asymptotic distribution functions for unit-root and cointegration "
    "tests. Journal of Business and Economic Statistics 12.",
    "MacKinnon, J. G. (2010). Critical values for cointegration tests. Queen's Economics Department Working "
    "Paper 1227.",
    "Newey, W. K. and West, K. D. (1987). A simple, positive semi-definite, heteroskedasticity and "
    "autocorrelation consistent covariance matrix. Econometrica 55.",
    "Newey, W. K. and West, K. D. (1994). Automatic lag selection in covariance matrix estimation. Review of "
    "Economic Studies 61.",
    "Osterwald-Lenum, M. (1992). A note with quantiles of the asymptotic distribution of the maximum "
    "likelihood cointegration rank test statistics. Oxford Bulletin of Economics and Statistics 54.",
    "Pesaran, M. H., Shin, Y. and Smith, R. J. (2001). Bounds testing approaches to the analysis of level "
    "relationships. Journal of Applied Econometrics 16.",
    "Phillips, P. C. B. and Perron, P. (1988). Testing for a unit root in time series regression. "
    "Biometrika 75.",
    "Ramsey, J. B. (1969). Tests for specification errors in classical linear least-squares regression "
    "analysis. Journal of the Royal Statistical Society B 31.",
    "Said, S. E. and Dickey, D. A. (1984). Testing for unit roots in autoregressive-moving average models of "
    "unknown order. Biometrika 71.",
    "Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. Journal of Business and Economic "
    "Statistics 7.",
    "Stock, J. H. and Watson, M. W. (1993). A simple estimator of cointegrating vectors in higher order "
    "integrated systems. Econometrica 61.",
    "Zivot, E. and Andrews, D. W. K. (1992). Further evidence on the great crash, the oil-price shock, and the "
    "unit-root hypothesis. Journal of Business and Economic Statistics 10.",
)


def methods_text() -> dict[str, Any]:
    """Everything the methods appendix prints, as plain data for results.json."""
    return {
        "order_rule": list(DECISION_RULE),
        "deterministic_rule": list(DETERMINISTIC_RULE),
        "grid_rule": list(GRID_RULE),
        "verdict_rule": list(VERDICT_RULE),
        "tests": [dict(test) for test in TESTS],
        "references": sorted(REFERENCES),
    }
