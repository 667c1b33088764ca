"""Data loading: dates, frequencies, and every kind of bad cell reported with its line."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pandas as pd
import pytest

from reportgen.errors import DataError
from reportgen.manifest import load_manifest
from reportgen.runner import build_series, load_tables
from reportgen.sources import parse_period


def _load(path: Path) -> dict[str, pd.Series]:
    manifest = load_manifest(path)
    return {name: item.values for name, item in build_series(manifest, load_tables(manifest)).items()}


def _data_error(path: Path) -> str:
    with pytest.raises(DataError) as caught:
        _load(path)
    return caught.value.render()


def test_monthly_data_load_on_a_period_index(project: Callable[..., Path]) -> None:
    series = _load(project())
    assert isinstance(series["a"].index, pd.PeriodIndex)
    assert series["a"].index.freqstr == "M"
    assert len(series["a"]) == 36
    assert series["a"].iloc[0] == pytest.approx(4.605170186)  # log(100)


@pytest.mark.parametrize(
    ("labels", "frequency"),
    [
        (["2001", "2002", "2003"], "Y-DEC"),
        (["2001Q1", "2001Q2", "2001Q3"], "Q-DEC"),
        (["2001-Q4", "2002-Q1", "2002-Q2"], "Q-DEC"),
        (["2001-01-07", "2001-01-14", "2001-01-21"], "W-SUN"),
        (["2001-01-30", "2001-01-31", "2001-02-01"], "D"),
        (["2001-01-31", "2001-02-28", "2001-03-31"], "M"),
    ],
)
def test_frequency_is_inferred(project: Callable[..., Path], base: str, labels: list[str], frequency: str) -> None:
    data = "month,a,b\n" + "".join(f"{label},{10 + i},{i}\n" for i, label in enumerate(labels))
    series = _load(project(base, data))
    assert series["a"].index.freqstr == frequency


def test_unsorted_rows_are_refused_unless_sorting_is_allowed(project: Callable[..., Path], base: str) -> None:
    data = "month,a,b\n2010-02,2,1\n2010-01,1,1\n2010-03,3,1\n"
    path = project(base, data)
    assert _data_error(path) == (
        f"{path.parent / 'data.csv'}:3: error[dates-unsorted]: the rows of data.csv are not in date order: line 3 "
        "(2010-01 after "
        "2010-02)\n  hint: sort the file by date, or add 'sort: true' to the dataset to let reportgen sort it "
        "(recorded in the dossier)")
    path = project(base.replace("index: month", "index: month\n    sort: true"), data)
    manifest = load_manifest(path)
    tables = load_tables(manifest)
    assert tables["shop"].notes == ("rows of data.csv were not in date order (1 step(s) back in time, the first at "
                                    "line 3 (2010-01 after 2010-02)); reportgen sorted them, as the dataset's "
                                    "'sort: true' allows",)
    values = build_series(manifest, tables)["b"].values
    assert list(values.index.astype(str)) == ["2010-01", "2010-02", "2010-03"]


def test_unparsable_dates_are_listed_with_lines(project: Callable[..., Path]) -> None:
    path = project(data="month,a,b\n2010-01,1,1\nJan 2010,2,2\n2010-13,3,3\n")
    assert _data_error(path) == (
        f"{path.parent / 'data.csv'}:3: error[dates-unparsable]: column 'month' of data.csv has dates reportgen "
        "cannot read: line 3: 'Jan 2010'; line 4: '2010-13'\n  hint: write dates as 2011, 2011Q1, 2011-03 or "
        "2011-03-14")


def test_duplicate_periods_are_listed(project: Callable[..., Path]) -> None:
    path = project(data="month,a,b\n2010-01,1,1\n2010-02,2,2\n2010-02,3,3\n")
    assert "data.csv has more than one row for a period: 2010-02 on lines 3 and 4" in _data_error(path)


def test_gaps_are_listed(project: Callable[..., Path]) -> None:
    path = project(data="month,a,b\n2010-01,1,1\n2010-04,2,2\n")
    assert "data.csv skips 2 period(s) of its monthly calendar: 2010-02; 2010-03" in _data_error(path)


def test_non_numeric_cells_name_line_column_and_value(project: Callable[..., Path], base: str) -> None:
    path = project(data="month,a,b\n2010-01,1,1\n2010-02,2,x7\n2010-03,3,1_0\n")
    rendered = _data_error(path)
    assert rendered.startswith(f"{path}:10:")
    assert ("column 'b' of data.csv has non-numeric cells: line 3 (2010-02): 'x7'; line 4 (2010-03): '1_0'"
            in rendered)


def test_interior_missing_cells_are_errors_but_ragged_ends_may_be_spans(project: Callable[..., Path],
                                                                        base: str) -> None:
    data = "month,a,b\n2010-01,1,\n2010-02,2,5\n2010-03,3,6\n2010-04,4,\n"
    assert ("column 'b' of data.csv has empty cells at its start or end: line 2 (2010-01); line 5 (2010-04)"
            in _data_error(project(base, data)))
    series = _load(project(base.replace("index: month", "index: month\n    missing: drop-leading-trailing"), data))
    assert list(series["b"]) == [5.0, 6.0]
    path = project(base.replace("index: month", "index: month\n    missing: drop-leading-trailing"),
                   "month,a,b\n2010-01,1,4\n2010-02,,5\n2010-03,3,6\n")
    assert "column 'a' of data.csv has empty cells inside its span: line 3 (2010-02)" in _data_error(path)


def test_missing_column_and_index(project: Callable[..., Path], base: str) -> None:
    path = project(base.replace("column: b", "column: c"))
    assert "dataset 'shop' (data.csv) has no column 'c'\n  hint: columns: a, b" in _data_error(path)
    path = project(base.replace("index: month", "index: date"))
    rendered = _data_error(path)
    assert rendered == (f"{path}:7:5: error[index-missing]: datasets.shop.index: data.csv has no column 'date' to "
                        "use as the date index\n  hint: columns in the file: month, a, b")


def test_missing_file_and_encoding(project: Callable[..., Path], base: str) -> None:
    path = project(base.replace("path: data.csv", "path: nowhere.csv"))
    assert _data_error(path) == (f"{path}:6:5: error[data-not-found]: datasets.shop.path: data file not found: "
                                 "nowhere.csv\n  hint: paths are relative to the manifest's folder")
    path = project(base, data="month,a,b\n2010-01,1,caf\xe9\n".encode("latin-1"))
    assert "data.csv is not UTF-8 text (byte 23)" in _data_error(path)


def test_declared_frequency_coarser_labels_refused(project: Callable[..., Path], base: str) -> None:
    path = project(base.replace("index: month", "index: month\n    frequency: monthly"),
                   data="month,a,b\n2010,1,1\n2011,2,2\n")
    assert "data.csv is declared monthly but has annual (2011) date labels" in _data_error(path)


def test_log_of_non_positive_names_the_first_date(project: Callable[..., Path]) -> None:
    path = project(data="month,a,b\n2010-01,1,1\n2010-02,0,2\n2010-03,-1,3\n")
    assert ("'log' needs positive values; the series is 0 at 2010-02 (2 non-positive values in all)"
            in _data_error(path))


def test_parse_period_maps_coarse_labels_to_window_edges() -> None:
    assert str(parse_period("2010", "monthly")) == "2010-01"
    assert str(parse_period("2010", "monthly", "end")) == "2010-12"
    assert str(parse_period("2010Q2", "monthly", "end")) == "2010-06"
    assert parse_period("2010-13", "monthly") is None
    assert parse_period("soon", "monthly") is None
