"""Parquet and Excel datasets: the demo data in each format gives the same results as the CSV files."""

from __future__ import annotations

import csv
import datetime
import json
import shutil
from pathlib import Path

import pytest

from reportgen import cli

DEMO = Path(__file__).resolve().parents[2] / "manifests"
ANALYSED = ("series", "regressions", "summary")


def _columns(path: Path) -> tuple[list[str], list[list[str]]]:
    with path.open(newline="", encoding="utf-8") as stream:
        rows = list(csv.reader(stream))
    return rows[0], rows[1:]


def _number(text: str) -> float | None:
    return float(text) if text.strip() else None


def _write_parquet(source: Path, target: Path, *, dates: bool = False) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    header, rows = _columns(source)
    columns: dict[str, list[object]] = {}
    for position, name in enumerate(header):
        cells = [row[position] for row in rows]
        if position == 0:
            # Monthly labels as real dates (the first of each month) or kept as text, like "2022Q1".
            columns[name] = ([datetime.date(int(cell[:4]), int(cell[5:7]), 1) for cell in cells]
                             if dates and len(cells[0]) == 7 else cells)
        else:
            columns[name] = [_number(cell) for cell in cells]
    pq.write_table(pa.table(columns), target)


def _write_excel(source: Path, target: Path) -> None:
    import openpyxl

    header, rows = _columns(source)
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "Notes"
    sheet["A1"] = "Invented figures for the demo; the data start on the sheet 'Data'."
    data = book.create_sheet("Data")
    data["A1"] = "Orvellan Sound Harbour Authority: extract"
    for offset, name in enumerate(header):
        data.cell(row=3, column=2 + offset, value=name)
    for number, row in enumerate(rows, start=4):
        data.cell(row=number, column=2, value=row[0])
        for offset, cell in enumerate(row[1:], start=3):
            data.cell(row=number, column=offset, value=_number(cell))
    book.save(target)


def _project(tmp_path: Path, kind: str) -> Path:
    folder = tmp_path / kind
    shutil.copytree(DEMO, folder, ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    manifest = folder / "demo.yaml"
    text = manifest.read_text(encoding="utf-8")
    for stem in ("harbour_monthly", "cruise_quarterly"):
        source = folder / "data" / f"{stem}.csv"
        if kind.startswith("parquet"):
            _write_parquet(source, folder / "data" / f"{stem}.parquet", dates=kind == "parquet-dates")
            text = text.replace(f"data/{stem}.csv", f"data/{stem}.parquet")
        elif kind == "excel":
            _write_excel(source, folder / "data" / f"{stem}.xlsx")
            rows = len(_columns(source)[1]) + 3
            width = len(_columns(source)[0])
            last = chr(ord("B") + width - 1)
            text = text.replace(f"path: data/{stem}.csv",
                                f"path: data/{stem}.xlsx\n    sheet: Data\n    range: B3:{last}{rows}")
        if kind != "csv":
            source.unlink()
    manifest.write_text(text, encoding="utf-8")
    return manifest


def _analysed(manifest: Path, out: Path) -> dict:  # type: ignore[type-arg]
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "json", "--quiet"]) == 0
    document = json.loads((out / "results.json").read_text(encoding="utf-8"))
    return {key: document[key] for key in ANALYSED}


@pytest.fixture(scope="module")
def csv_results(tmp_path_factory: pytest.TempPathFactory) -> dict:  # type: ignore[type-arg]
    folder = tmp_path_factory.mktemp("csv")
    return _analysed(_project(folder, "csv"), folder / "out")


@pytest.mark.parametrize("kind", ["parquet", "parquet-dates", "excel"])
def test_the_demo_in_another_format_gives_identical_results(kind: str, tmp_path: Path, csv_results: dict,  # type: ignore[type-arg]
                                                            capsys: pytest.CaptureFixture[str]) -> None:
    assert _analysed(_project(tmp_path, kind), tmp_path / "out") == csv_results
    capsys.readouterr()


def test_excel_errors_name_the_sheet_and_the_range(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    manifest = _project(tmp_path, "excel")
    text = manifest.read_text(encoding="utf-8")
    manifest.write_text(text.replace("sheet: Data", "sheet: Daten", 1), encoding="utf-8")
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    error = capsys.readouterr().err
    assert "error[sheet-missing]: datasets.harbour.sheet: data/harbour_monthly.xlsx has no sheet named 'Daten'" in error
    assert "hint: sheets in the workbook: Notes, Data" in error
    manifest.write_text(text.replace("range: B3:", "range: corner-", 1), encoding="utf-8")
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    assert "error[cell-range]: datasets.harbour.range: cannot read the cell range" in capsys.readouterr().err
    assert not (tmp_path / "out").exists()


def test_a_non_numeric_excel_cell_names_its_sheet_row(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    import openpyxl

    manifest = _project(tmp_path, "excel")
    workbook = manifest.parent / "data" / "harbour_monthly.xlsx"
    book = openpyxl.load_workbook(workbook)
    book["Data"]["C10"] = "n.a."
    book.save(workbook)
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--format", "json", "--quiet"]) == 2
    error = capsys.readouterr().err
    assert "has non-numeric cells: row 10 (2006-07): 'n.a.'" in error
