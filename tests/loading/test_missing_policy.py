"""Missing data: refused by default, or handled by a policy declared per dataset or series and recorded."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from reportgen import cli
from reportgen.errors import DatesIrregularError, MissingValuesError
from reportgen.manifest import load_manifest
from reportgen.runner import build_series, load_tables

GAPPY = ("month,a,b\n2010-01,,1\n2010-02,,2\n2010-03,10,3\n2010-04,,4\n2010-05,16,5\n2010-06,18,6\n"
         "2010-07,,7\n")


def _built(path: Path) -> dict:  # type: ignore[type-arg]
    manifest = load_manifest(path)
    return build_series(manifest, load_tables(manifest))


def _error(path: Path) -> MissingValuesError:
    with pytest.raises(MissingValuesError) as caught:
        _built(path)
    return caught.value


def test_by_default_every_empty_cell_is_an_error_listing_its_lines(project: Callable[..., Path], base: str) -> None:
    error = _error(project(base, GAPPY))
    assert error.message == ("column 'a' of data.csv has empty cells at its start or end and inside its span: "
                             "line 2 (2010-01); line 3 (2010-02); line 5 (2010-04); line 8 (2010-07)")
    assert error.location is not None
    assert error.location.key_path == "series.a.column"
    assert "missing: drop-leading-trailing" in (error.hint or "")
    assert "missing: interpolate" in (error.hint or "")


def test_drop_leading_trailing_keeps_the_span_but_refuses_interior_gaps(project: Callable[..., Path],
                                                                       base: str) -> None:
    declared = base.replace("index: month", "index: month\n    missing: drop-leading-trailing")
    error = _error(project(declared, GAPPY))
    assert error.message == "column 'a' of data.csv has empty cells inside its span: line 5 (2010-04)"
    assert "missing: interpolate" in (error.hint or "")
    filled = GAPPY.replace("2010-04,,4", "2010-04,13,4")
    item = _built(project(declared, filled))["a"]
    assert list(item.values.index.astype(str)) == ["2010-03", "2010-04", "2010-05", "2010-06"]
    assert item.column.dropped == ("2010-01", "2010-02", "2010-07")
    assert item.column.interpolated == ()


def test_interpolate_fills_interior_gaps_linearly_in_time(project: Callable[..., Path], base: str) -> None:
    declared = base.replace("column: a, transform: [log]}", "column: a, missing: interpolate}")
    item = _built(project(declared, GAPPY))["a"]
    # 2010-04 lies halfway between 10 (2010-03) and 16 (2010-05): common practice, linear interpolation.
    np.testing.assert_allclose(item.values.to_numpy(), [10.0, 13.0, 16.0, 18.0])
    assert item.column.interpolated == ("2010-04",)
    assert item.column.dropped == ("2010-01", "2010-02", "2010-07")
    assert item.column.describe() == (
        "missing data (interpolate): 3 empty period(s) at the start or end left out: 2010-01; 2010-02; 2010-07",
        "missing data (interpolate): 1 interior period(s) filled by linear interpolation: 2010-04",
    )


def test_a_series_policy_overrides_its_datasets(project: Callable[..., Path], base: str) -> None:
    declared = base.replace("index: month", "index: month\n    missing: interpolate").replace(
        "column: a, transform: [log]}", "column: a, missing: error}")
    assert _error(project(declared, GAPPY)).location.key_path == "series.a.column"  # type: ignore[union-attr]


def test_rows_missing_from_the_calendar_are_filled_only_under_interpolate(project: Callable[..., Path],
                                                                          base: str) -> None:
    data = "month,a,b\n2010-01,1,10\n2010-02,2,20\n2010-05,5,50\n2010-06,6,60\n"
    with pytest.raises(DatesIrregularError) as caught:
        _built(project(base, data))
    assert "declare 'missing: interpolate' on the dataset" in (caught.value.hint or "")
    declared = base.replace("index: month", "index: month\n    missing: interpolate")
    built = _built(project(declared, data))
    np.testing.assert_allclose(built["b"].values.to_numpy(), [10, 20, 30, 40, 50, 60])
    assert built["b"].column.interpolated == ("2010-03", "2010-04")
    tables = load_tables(load_manifest(project(declared, data)))
    assert tables["shop"].inserted == ("2010-03", "2010-04")
    # A series that refuses missing data names the periods that have no row at all.
    strict = declared.replace("column: b}", "column: b, missing: error}")
    assert _error(project(strict, data)).message == (
        "column 'b' of data.csv has empty cells inside its span: 2010-03 (no row in the file); 2010-04 (no row in "
        "the file)")


def test_the_policy_and_the_affected_dates_are_recorded_in_the_dossier(small_project: Callable[..., Path],
                                                                       small_manifest: str,
                                                                       simulated_data: Callable[..., str],
                                                                       tmp_path: Path,
                                                                       capsys: pytest.CaptureFixture[str]) -> None:
    lines = simulated_data().splitlines()
    lines[1] = lines[1].split(",")[0] + ",,,"  # 2010-01 empty in every column
    fields = lines[40].split(",")
    lines[40] = ",".join([fields[0], "", fields[2], fields[3]])  # 2013-04 empty in walk_a
    manifest = small_project(small_manifest.replace("index: month", "index: month\n    missing: interpolate"),
                             "\n".join(lines) + "\n")
    out = tmp_path / "out"
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "html", "--quiet"]) == 0
    capsys.readouterr()
    document = json.loads((out / "results.json").read_text())
    assert document["series"]["walk_a"]["missing"] == {"policy": "interpolate", "dropped": ["2010-01"],
                                                       "interpolated": ["2013-04"]}
    assert document["series"]["walk_b"]["missing"] == {"policy": "interpolate", "dropped": ["2010-01"],
                                                       "interpolated": []}
    assert ("missing data (interpolate): 1 interior period(s) filled by linear interpolation: 2013-04"
            in document["series"]["walk_a"]["notes"])
    html = (out / "dossier.html").read_text()
    assert ("policy <code>interpolate</code>: 1 empty period(s) at the start or end left out; 1 interior period(s) "
            "filled by linear interpolation (2013-04)") in html


def test_data_outside_the_project_folder_is_reported(small_project: Callable[..., Path], small_manifest: str,
                                                     tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project()
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    (manifest.parent / "sim.csv").rename(elsewhere / "sim.csv")
    (manifest.parent / "sim.csv").symlink_to(elsewhere / "sim.csv")
    out = tmp_path / "out"
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "json", "--quiet"]) == 0
    document = json.loads((out / "results.json").read_text())
    assert document["datasets"]["sim"]["notes"] == [
        "sim.csv lies outside the project folder (the manifest's folder), through a symbolic link; its resolved path "
        "is recorded with the inputs and its bytes are hashed as read, but a copy of the project folder alone cannot "
        "reproduce the dossier"]
    data = next(entry for entry in document["inputs"] if entry["role"] == "data")
    assert data["path"] == str((elsewhere / "sim.csv").resolve())
    assert data["relative_path"] == "sim.csv"
    # Inside the project, no note.
    (manifest.parent / "sim.csv").unlink()
    (elsewhere / "sim.csv").rename(manifest.parent / "sim.csv")
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "json", "--quiet"]) == 0
    assert json.loads((out / "results.json").read_text())["datasets"]["sim"]["notes"] == []
    capsys.readouterr()
