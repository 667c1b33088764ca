"""The demo scenario's data: reproducible byte for byte, and drawn with the designed properties.

The property checks use statsmodels directly, with the rule reportgen uses: ADF with the lag
chosen by AIC up to ``int(12 * (T / 100) ** 0.25)`` lagged differences, KPSS with the automatic
bandwidth, both at the 5 % level. They confirm that the generator's seed drew series that behave
as designed; if a seed ever gives an atypical draw, change the seed, not these checks.
"""

from __future__ import annotations

import re
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import yaml
from statsmodels.stats.stattools import durbin_watson
from statsmodels.tsa.stattools import adfuller, coint, kpss

MANIFESTS = Path(__file__).resolve().parents[1] / "manifests"
GENERATOR = MANIFESTS / "generate_demo.py"
DATA = MANIFESTS / "data"
MANIFEST = MANIFESTS / "demo.yaml"
LEVEL = 0.05

#: Designed order of integration of each series of the monthly dataset (series names of demo.yaml).
I0_SERIES = ("occupancy", "delays")
TREND_STATIONARY_SERIES = ("warehouse",)
I1_SERIES = ("boxes", "fuel", "freight", "excursions", "cranes")
I2_SERIES = ("dredging",)
COINTEGRATED = ("freight", "fuel")  # y, x
INDEPENDENT_WALKS = ("excursions", "cranes")  # y, x

#: Designed verdict of each regression of demo.yaml.
DESIGNED_VERDICTS = {
    "occupancy_on_weather": "stationary",
    "occupancy_on_weather_recent": "stationary",
    "freight_on_fuel": "cointegrated",
    "excursions_on_crane_costs": "spurious-risk",
    "occupancy_on_throughput": "unbalanced",
    "dredging_on_throughput": "unbalanced",
    "cruise_revenue_on_passengers": "inconclusive",
}


# --- the rule -------------------------------------------------------------------------------


def max_adf_lags(x: np.ndarray) -> int:
    """Schwert's (1989) upper bound, as reportgen uses it."""
    return int(12 * (len(x) / 100) ** 0.25)


def adf_rejects(x: np.ndarray, regression: str) -> bool:
    """ADF rejects a unit root at 5 % (lags by AIC up to the Schwert bound)."""
    result = adfuller(x, maxlag=max_adf_lags(x), autolag="AIC", regression=regression, result_object=False)
    pvalue = result[1]
    return bool(pvalue < LEVEL)


def kpss_rejects(x: np.ndarray, regression: str) -> bool:
    """KPSS rejects stationarity at 5 % (automatic bandwidth)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # InterpolationWarning: p-value beyond the table's range
        pvalue = kpss(x, regression=regression, nlags="auto", result_object=False)[1]
    return bool(pvalue < LEVEL)


def i0_failures(x: np.ndarray) -> list[str]:
    failures = []
    if not adf_rejects(x, "c"):
        failures.append("ADF('c') does not reject in levels")
    if kpss_rejects(x, "c"):
        failures.append("KPSS('c') rejects in levels")
    return failures


def trend_stationary_failures(x: np.ndarray) -> list[str]:
    failures = []
    if not adf_rejects(x, "ct"):
        failures.append("ADF('ct') does not reject in levels")
    if kpss_rejects(x, "ct"):
        failures.append("KPSS('ct') rejects in levels")
    trend = np.arange(len(x), dtype=float)
    fit = sm.OLS(x, sm.add_constant(trend)).fit(cov_type="HAC", cov_kwds={"maxlags": max_adf_lags(x)})
    if not (fit.params[1] > 0 and fit.tvalues[1] > 10):
        failures.append(f"trend not clearly significant (t = {fit.tvalues[1]:.2f})")
    return failures


def i1_failures(x: np.ndarray) -> list[str]:
    failures = []
    dx = np.diff(x)
    for regression in ("c", "ct"):
        if adf_rejects(x, regression):
            failures.append(f"ADF('{regression}') rejects in levels")
    if not kpss_rejects(x, "c"):
        failures.append("KPSS('c') does not reject in levels")
    if not adf_rejects(dx, "c"):
        failures.append("ADF('c') does not reject in first differences")
    if kpss_rejects(dx, "c"):
        failures.append("KPSS('c') rejects in first differences")
    return failures


def i2_failures(x: np.ndarray) -> list[str]:
    failures = []
    dx = np.diff(x)
    d2x = np.diff(x, n=2)
    for level, values in ((0, x), (1, dx)):
        for regression in ("c", "ct"):
            if adf_rejects(values, regression):
                failures.append(f"ADF('{regression}') rejects at differencing level {level}")
        if not kpss_rejects(values, "c"):
            failures.append(f"KPSS('c') does not reject at differencing level {level}")
    if not adf_rejects(d2x, "c"):
        failures.append("ADF('c') does not reject in second differences")
    if kpss_rejects(d2x, "c"):
        failures.append("KPSS('c') rejects in second differences")
    return failures


def cointegrated_failures(y: np.ndarray, x: np.ndarray) -> list[str]:
    pvalue = coint(y, x)[1]
    return [] if pvalue < 0.01 else [f"coint p = {pvalue:.4f}, not below 0.01"]


def spurious_failures(y: np.ndarray, x: np.ndarray) -> list[str]:
    failures = []
    for name, (left, right) in {"y on x": (y, x), "x on y": (x, y)}.items():
        pvalue = coint(left, right)[1]
        if not pvalue > 0.20:
            failures.append(f"coint ({name}) p = {pvalue:.4f}, not above 0.20")
    fit = sm.OLS(y, sm.add_constant(x)).fit()
    dw = durbin_watson(fit.resid)
    if not fit.rsquared > dw:
        failures.append(f"levels R-squared {fit.rsquared:.3f} not above Durbin-Watson {dw:.3f}")
    return failures


# --- the data as the manifest declares it -----------------------------------------------------


def load_manifest() -> dict:
    return yaml.safe_load(MANIFEST.read_text(encoding="utf-8"))


def load_dataset(manifest: dict, name: str) -> pd.DataFrame:
    spec = manifest["datasets"][name]
    return pd.read_csv(MANIFESTS / spec["path"], dtype={spec["index"]: str})


def series_values(manifest: dict, name: str, sample: dict | None = None) -> np.ndarray:
    """A series as the manifest declares it (column, then transforms; only ``log`` is used)."""
    spec = manifest["series"][name]
    dataset = manifest["datasets"][spec["dataset"]]
    frame = load_dataset(manifest, spec["dataset"]).set_index(dataset["index"])
    if sample is not None:
        frame = frame.loc[sample["start"] : sample["end"]]
    values = frame[spec["column"]].to_numpy(dtype=float)
    for step in spec.get("transform", []):
        assert step == "log", f"the demo only declares log transforms, not {step!r}"
        values = np.log(values)
    return values


@pytest.fixture(scope="module")
def manifest() -> dict:
    return load_manifest()


# --- reproducibility and format ---------------------------------------------------------------


def test_generator_reproduces_committed_csvs(tmp_path: Path) -> None:
    subprocess.run([sys.executable, str(GENERATOR), "--out", str(tmp_path)], check=True, capture_output=True)
    written = sorted(path.name for path in tmp_path.glob("*.csv"))
    committed = sorted(path.name for path in DATA.glob("*.csv"))
    assert written == committed == ["cruise_quarterly.csv", "harbour_monthly.csv"]
    for name in written:
        assert (tmp_path / name).read_bytes() == (DATA / name).read_bytes(), f"{name} differs"


def test_monthly_dataset_format(manifest: dict) -> None:
    frame = load_dataset(manifest, "harbour")
    assert len(frame) == 240
    assert frame.columns[0] == "month"
    assert all(re.fullmatch(r"\d{4}-(0[1-9]|1[0-2])", label) for label in frame["month"])
    expected = [str(period) for period in pd.period_range("2006-01", "2025-12", freq="M")]
    assert frame["month"].tolist() == expected


def test_quarterly_dataset_has_sixteen_quarters(manifest: dict) -> None:
    frame = load_dataset(manifest, "cruise")
    assert len(frame) == 16
    assert frame.columns[0] == "quarter"
    assert all(re.fullmatch(r"\d{4}Q[1-4]", label) for label in frame["quarter"])
    expected = [str(period) for period in pd.period_range("2022Q1", "2025Q4", freq="Q")]
    assert frame["quarter"].tolist() == expected


@pytest.mark.parametrize("dataset", ["harbour", "cruise"])
def test_no_missing_values_and_snake_case_columns(manifest: dict, dataset: str) -> None:
    frame = load_dataset(manifest, dataset)
    assert not frame.isna().any().any()
    assert all(re.fullmatch(r"[a-z][a-z0-9]*(_[a-z0-9]+)*", column) for column in frame.columns)
    values = frame.drop(columns=manifest["datasets"][dataset]["index"])
    assert all(pd.api.types.is_numeric_dtype(dtype) for dtype in values.dtypes)


def test_manifest_matches_the_data(manifest: dict) -> None:
    assert manifest["reportgen"] == 1
    for name, spec in manifest["series"].items():
        frame = load_dataset(manifest, spec["dataset"])
        assert spec["column"] in frame.columns, name
        if "log" in spec.get("transform", []):
            assert (frame[spec["column"]] > 0).all(), f"{name} is logged but not positive"
    assert set(manifest["regressions"]) == set(DESIGNED_VERDICTS)
    for name, spec in manifest["regressions"].items():
        left, right = spec["formula"].split("~")
        names = [left.strip(), *(term.strip() for term in right.split("+"))]
        assert all(term in manifest["series"] for term in names), name
    designed = {*I0_SERIES, *TREND_STATIONARY_SERIES, *I1_SERIES, *I2_SERIES}
    harbour_series = {name for name, spec in manifest["series"].items() if spec["dataset"] == "harbour"}
    assert designed == harbour_series


def test_manifest_comments_state_each_designed_verdict() -> None:
    lines = MANIFEST.read_text(encoding="utf-8").splitlines()
    for name, verdict in DESIGNED_VERDICTS.items():
        position = lines.index(f"  {name}:")
        assert lines[position - 1].strip().startswith(f"# Designed verdict: {verdict} "), name


# --- the designed properties ------------------------------------------------------------------


@pytest.mark.parametrize("name", I0_SERIES)
def test_i0_series(manifest: dict, name: str) -> None:
    assert i0_failures(series_values(manifest, name)) == []


@pytest.mark.parametrize("name", I0_SERIES)
def test_i0_series_in_the_recent_window(manifest: dict, name: str) -> None:
    sample = manifest["regressions"]["occupancy_on_weather_recent"]["sample"]
    assert i0_failures(series_values(manifest, name, sample)) == []


def test_stationary_pair_is_related(manifest: dict) -> None:
    y = series_values(manifest, "occupancy")
    x = series_values(manifest, "delays")
    fit = sm.OLS(y, sm.add_constant(x)).fit(cov_type="HAC", cov_kwds={"maxlags": max_adf_lags(x)})
    assert fit.params[1] > 0
    assert fit.pvalues[1] < 0.001


@pytest.mark.parametrize("name", TREND_STATIONARY_SERIES)
def test_trend_stationary_series(manifest: dict, name: str) -> None:
    assert trend_stationary_failures(series_values(manifest, name)) == []


@pytest.mark.parametrize("name", I1_SERIES)
def test_i1_series(manifest: dict, name: str) -> None:
    assert i1_failures(series_values(manifest, name)) == []


@pytest.mark.parametrize("name", I2_SERIES)
def test_i2_series(manifest: dict, name: str) -> None:
    assert i2_failures(series_values(manifest, name)) == []


def test_cointegrated_pair(manifest: dict) -> None:
    y, x = (series_values(manifest, name) for name in COINTEGRATED)
    assert cointegrated_failures(y, x) == []


def test_independent_walks_look_spurious_but_are_not_cointegrated(manifest: dict) -> None:
    y, x = (series_values(manifest, name) for name in INDEPENDENT_WALKS)
    assert spurious_failures(y, x) == []
