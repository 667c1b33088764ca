"""The methods appendix as data: each rule and test in plain words, with its references.

The rules come from the modules that apply them, so the appendix cannot drift from the code.
"""

from __future__ import annotations

from typing import Any

from reportgen.stats.order import DECISION_RULE, DETERMINISTIC_RULE
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
            "scaled by a long-run variance estimated with Bartlett weights and an automatically chosen "
            "bandwidth (Hobijn, Franses and Ooms 1998). Critical values are those of Kwiatkowski, Phillips, "
            "Schmidt and Shin (1992, Table 1); p-values are interpolated in that table and shown as bounds "
            "outside it (below 0.01 or above 0.10)."
        ),
        "reference": "Kwiatkowski, Phillips, Schmidt and Shin (1992); Hobijn, Franses and Ooms (1998)",
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
        "name": "OLS with HAC standard errors",
        "null_hypothesis": "each coefficient is zero (t-test)",
        "description": (
            "Levels, differences and error-correction equations are fitted by OLS with Newey-West standard "
            "errors (Bartlett kernel, int(4 (T/100)^(2/9)) lags, small-sample correction). Durbin-Watson, "
            "Ljung-Box, Breusch-Godfrey and Jarque-Bera diagnostics accompany every fit."
        ),
        "reference": "Newey and West (1987, 1994); Durbin and Watson (1950); Ljung and Box (1978); "
                     "Breusch (1978); Godfrey (1978); Jarque and Bera (1980)",
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
    "Dickey, D. A. and Fuller, W. A. (1979). Distribution of the estimators for autoregressive time series with a "
    "unit root. Journal of the American Statistical Association 74.",
    "Durbin, J. and Watson, G. S. (1950). Testing for serial correlation in least squares regression I. "
    "Biometrika 37.",
    "Engle, R. F. and Granger, C. W. J. (1987). Co-integration and error correction: representation, estimation "
    "and testing. Econometrica 55.",
    "Godfrey, L. G. (1978). Testing against general autoregressive and moving average error models when the "
    "regressors include lagged dependent variables. Econometrica 46.",
    "Granger, C. W. J. and Newbold, P. (1974). Spurious regressions in econometrics. Journal of Econometrics 2.",
    "Hobijn, B., Franses, P. H. and Ooms, M. (1998). Generalisations of the KPSS-test for stationarity. "
    "Econometric Institute Report 9802, Erasmus University Rotterdam.",
    "Jarque, C. M. and Bera, A. K. (1980). Efficient tests for normality, homoscedasticity and serial "
    "independence of regression residuals. Economics Letters 6.",
    "Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. and Shin, Y. (1992). Testing the null hypothesis of "
    "stationarity against the alternative of a unit root. Journal of Econometrics 54.",
    "Ljung, G. M. and Box, G. E. P. (1978). On a measure of lack of fit in time series models. Biometrika 65.",
    "MacKinnon, J. G. (1994). Approximate asymptotic distribution functions for unit-root and cointegration "
    "tests. Journal of Business and Economic Statistics 12.",
    "MacKinnon, J. G. (2010). Critical values for cointegration tests. Queen's Economics Department Working "
    "Paper 1227.",
    "Newey, W. K. and West, K. D. (1987). A simple, positive semi-definite, heteroskedasticity and "
    "autocorrelation consistent covariance matrix. Econometrica 55.",
    "Newey, W. K. and West, K. D. (1994). Automatic lag selection in covariance matrix estimation. Review of "
    "Economic Studies 61.",
    "Said, S. E. and Dickey, D. A. (1984). Testing for unit roots in autoregressive-moving average models of "
    "unknown order. Biometrika 71.",
    "Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. Journal of Business and Economic "
    "Statistics 7.",
)


def methods_text() -> dict[str, Any]:
    """Everything the methods appendix prints, as plain data for results.json."""
    return {
        "order_rule": list(DECISION_RULE),
        "deterministic_rule": list(DETERMINISTIC_RULE),
        "verdict_rule": list(VERDICT_RULE),
        "tests": [dict(test) for test in TESTS],
        "references": list(REFERENCES),
    }
