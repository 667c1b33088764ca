"""Every source round-trips the demo data: CSV, Parquet, Excel, SQLite and PostgreSQL give identical results.

The demo's two datasets are written into each format (or database), analysed with ``reportgen.run``,
and the statistics of results.json compared with those of the CSV files: only the datasets'
provenance (path, query, server, snapshot hash) may differ.
"""

from __future__ import annotations

import csv
import shutil
import sqlite3
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

import reportgen
from reportgen.results import results_to_dict

from .postgres_support import Schema

DEMO = Path(__file__).resolve().parents[2] / "manifests"
STEMS = ("harbour_monthly", "cruise_quarterly")
#: The parts of results.json computed from the numbers: identical whatever the source.
STATISTICS = ("series", "regressions", "summary")
#: The fields of a dataset's record that say where it came from rather than what it holds.
PROVENANCE = frozenset({"path", "query", "query_sha256", "server", "snapshot_sha256", "query_timeout"})
VARIABLE = "RG_TEST_ROUNDTRIP_DB"


def _rows(stem: str) -> tuple[list[str], list[list[str]]]:
    with (DEMO / "data" / f"{stem}.csv").open(newline="", encoding="utf-8") as stream:
        rows = list(csv.reader(stream))
    return rows[0], rows[1:]


def _number(text: str) -> float | None:
    return float(text) if text.strip() else None


def _parquet(folder: Path, stem: str) -> str:
    import pyarrow as pa
    import pyarrow.parquet as pq

    header, rows = _rows(stem)
    columns = {name: [row[k] if k == 0 else _number(row[k]) for row in rows] for k, name in enumerate(header)}
    pq.write_table(pa.table(columns), folder / f"{stem}.parquet")
    return f"path: data/{stem}.parquet"


def _excel(folder: Path, stem: str) -> str:
    import openpyxl

    header, rows = _rows(stem)
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(header)
    for row in rows:
        sheet.append([row[0], *(_number(cell) for cell in row[1:])])
    book.save(folder / f"{stem}.xlsx")
    return f"path: data/{stem}.xlsx"


def _sqlite(folder: Path, stem: str) -> str:
    header, rows = _rows(stem)
    connection = sqlite3.connect(folder / "demo.sqlite")
    columns = ", ".join([f'"{header[0]}" TEXT', *(f'"{name}" REAL' for name in header[1:])])
    connection.execute(f'CREATE TABLE "{stem}" ({columns})')
    connection.executemany(f'INSERT INTO "{stem}" VALUES ({", ".join("?" * len(header))})',
                           [[row[0], *(_number(cell) for cell in row[1:])] for row in rows])
    connection.commit()
    connection.close()
    return f'path: data/demo.sqlite\n    query: "SELECT * FROM {stem} ORDER BY 1"'


def _analyse(tmp_path: Path, name: str, write: Callable[[Path, str], str] | None) -> dict[str, Any]:
    """The demo copied to ``tmp_path/name`` with its datasets rewritten by ``write``, analysed by reportgen.run."""
    folder = tmp_path / name
    shutil.copytree(DEMO, folder, ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    manifest = folder / "demo.yaml"
    if write is not None:
        text = manifest.read_text(encoding="utf-8")
        for stem in STEMS:
            text = text.replace(f"path: data/{stem}.csv", write(folder / "data", stem))
            (folder / "data" / f"{stem}.csv").unlink()
        manifest.write_text(text, encoding="utf-8")
    return results_to_dict(reportgen.run(manifest))


@pytest.fixture(scope="module")
def from_csv(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """The demo's results from its CSV files, the reference every other source must give."""
    return _analyse(tmp_path_factory.mktemp("roundtrip"), "csv", None)


def _assert_same_results(document: dict[str, Any], reference: dict[str, Any]) -> None:
    for section in STATISTICS:
        assert document[section] == reference[section], section
    for name, dataset in document["datasets"].items():
        expected = reference["datasets"][name]
        assert {key: value for key, value in dataset.items() if key not in PROVENANCE} == \
            {key: value for key, value in expected.items() if key not in PROVENANCE}


@pytest.mark.parametrize("source", ["parquet", "excel", "sqlite"])
def test_a_file_format_round_trips_the_demo(source: str, tmp_path: Path, from_csv: dict[str, Any]) -> None:
    write = {"parquet": _parquet, "excel": _excel, "sqlite": _sqlite}[source]
    _assert_same_results(_analyse(tmp_path, source, write), from_csv)


def test_postgresql_round_trips_the_demo(tmp_path: Path, from_csv: dict[str, Any], pg_schema: Schema,
                                         monkeypatch: pytest.MonkeyPatch) -> None:
    pg_schema.load_demo()
    monkeypatch.setenv(VARIABLE, pg_schema.url)

    def server(_: Path, stem: str) -> str:
        return (f"format: postgresql\n    url_env: {VARIABLE}\n"
                f'    query: "SELECT * FROM {pg_schema.name}.{stem} ORDER BY 1"')

    document = _analyse(tmp_path, "postgresql", server)
    _assert_same_results(document, from_csv)
    assert [entry["role"] for entry in document["inputs"]] == ["manifest", "server-query", "server-query"]
