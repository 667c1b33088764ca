"""Declared frequency conversion: a dataset combined into a coarser frequency, complete periods only."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from reportgen import cli
from reportgen.errors import ConversionError
from reportgen.manifest import load_manifest
from reportgen.runner import build_series, load_tables

# Monthly from 2010-02 to 2011-04: the quarters 2010Q1 and 2011Q2 are incomplete.
MONTHLY = "month,a,b\n" + "".join(f"{2010 + (i + 1) // 12}-{(i + 1) % 12 + 1:02d},{i + 1},{(i * 7) % 5}\n"
                                   for i in range(15))


def _built(path: Path) -> dict:  # type: ignore[type-arg]
    manifest = load_manifest(path)
    return build_series(manifest, load_tables(manifest))


@pytest.mark.parametrize("how", ["mean", "sum", "last", "first"])
def test_monthly_to_quarterly(project: Callable[..., Path], base: str, how: str) -> None:
    text = base.replace("index: month", f"index: month\n    convert: {{to: quarterly, how: {how}}}")
    built = _built(project(text, MONTHLY))
    series = built["b"]
    assert series.frequency == "quarterly"
    assert list(series.values.index.astype(str)) == ["2010Q2", "2010Q3", "2010Q4", "2011Q1"]
    # Reference: pandas' own resampling of the same months (quarters complete in the sample only).
    months = pd.Series([(i * 7) % 5 for i in range(15)], index=pd.period_range("2010-02", periods=15, freq="M"),
                       dtype=float)
    expected = getattr(months.groupby(months.index.asfreq("Q")), how)().loc["2010Q2":"2011Q1"]
    np.testing.assert_allclose(series.values.to_numpy(), expected.to_numpy())
    assert series.notes[-1] == (f"converted from monthly to quarterly: the {how} of the monthly values in each "
                                "quarterly period; 4 complete period(s); incomplete period(s) left out: 2010Q1; 2011Q2")


def test_conversion_must_go_to_a_coarser_frequency(project: Callable[..., Path], base: str) -> None:
    text = base.replace("index: month", "index: month\n    convert: {to: daily, how: mean}")
    with pytest.raises(ConversionError) as caught:
        _built(project(text, MONTHLY))
    assert caught.value.message == "cannot convert monthly data to daily: the target must be a coarser frequency"
    assert caught.value.location is not None
    assert caught.value.location.key_path == "datasets.shop.convert"


def test_a_converted_dataset_is_regressed_on_a_native_one(small_project: Callable[..., Path], tmp_path: Path,
                                                          capsys: pytest.CaptureFixture[str]) -> None:
    rng = np.random.default_rng(8)
    walk = 20 + np.cumsum(rng.standard_normal(120))
    quarters = pd.period_range("2010Q1", periods=40, freq="Q")
    folder = tmp_path / "project"
    folder.mkdir()
    (folder / "monthly.csv").write_text("month,x\n" + "".join(
        f"{period},{value:.6f}\n" for period, value in zip(pd.period_range("2010-01", periods=120, freq="M"),
                                                           walk, strict=True)))
    (folder / "quarterly.csv").write_text("quarter,y\n" + "".join(
        f"{period},{value:.6f}\n" for period, value in zip(quarters, 3 + 0.5 * walk[2::3] +
                                                           rng.standard_normal(40) * 0.3, strict=True)))
    manifest = folder / "manifest.yaml"
    manifest.write_text("""reportgen: 1
project: {title: Conversion}
datasets:
  fine: {path: monthly.csv, index: month, convert: {to: quarterly, how: last}}
  coarse: {path: quarterly.csv, index: quarter}
series:
  x: {dataset: fine, column: x}
  y: {dataset: coarse, column: y}
regressions:
  y_on_x: {formula: "y ~ x"}
""")
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--format", "json", "--quiet"]) == 0
    document = json.loads((tmp_path / "out" / "results.json").read_text())
    assert document["series"]["x"]["frequency"] == "quarterly"
    assert document["series"]["x"]["nobs"] == 40
    assert document["regressions"]["y_on_x"]["levels"]["nobs"] == 40
    capsys.readouterr()
