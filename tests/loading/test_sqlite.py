"""SQLite databases through SQLAlchemy: the demo data in a database give the results of the CSV files."""

from __future__ import annotations

import csv
import hashlib
import json
import shutil
import sqlite3
from pathlib import Path

import pytest

from reportgen import cli

DEMO = Path(__file__).resolve().parents[2] / "manifests"


def _database(folder: Path) -> Path:
    """The two demo CSV files as two tables of one SQLite file; numbers stored as REAL, periods as TEXT."""
    target = folder / "data" / "harbour.sqlite"
    connection = sqlite3.connect(target)
    for stem in ("harbour_monthly", "cruise_quarterly"):
        with (folder / "data" / f"{stem}.csv").open(newline="", encoding="utf-8") as stream:
            rows = list(csv.reader(stream))
        header = rows[0]
        columns = ", ".join([f'"{header[0]}" TEXT', *(f'"{name}" REAL' for name in header[1:])])
        connection.execute(f'CREATE TABLE "{stem}" ({columns})')
        connection.executemany(f'INSERT INTO "{stem}" VALUES ({", ".join("?" * len(header))})',
                               [[row[0], *(float(cell) if cell.strip() else None for cell in row[1:])]
                                for row in rows[1:]])
    connection.commit()
    connection.close()
    return target


def _project(tmp_path: Path, database: bool) -> Path:
    folder = tmp_path / ("sqlite" if database else "csv")
    shutil.copytree(DEMO, folder, ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    manifest = folder / "demo.yaml"
    if database:
        _database(folder)
        text = manifest.read_text(encoding="utf-8")
        for stem in ("harbour_monthly", "cruise_quarterly"):
            text = text.replace(f"path: data/{stem}.csv",
                                f'path: data/harbour.sqlite\n    query: "SELECT * FROM {stem} ORDER BY 1"')
        manifest.write_text(text, encoding="utf-8")
    return manifest


def _run(manifest: Path, out: Path) -> dict:  # type: ignore[type-arg]
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "json", "--quiet"]) == 0
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


def test_the_demo_from_sqlite_gives_the_results_of_the_csv_files(tmp_path: Path,
                                                                 capsys: pytest.CaptureFixture[str]) -> None:
    from_csv = _run(_project(tmp_path, False), tmp_path / "out-csv")
    from_sql = _run(_project(tmp_path, True), tmp_path / "out-sql")
    for key in ("series", "regressions", "summary"):
        assert from_sql[key] == from_csv[key]
    # The query text and the result are both hashed; the result's hash equals the CSV table's.
    query = "SELECT * FROM harbour_monthly ORDER BY 1"
    assert from_sql["datasets"]["harbour"]["query"] == query
    assert from_sql["datasets"]["harbour"]["query_sha256"] == hashlib.sha256(query.encode()).hexdigest()
    assert from_sql["datasets"]["harbour"]["table_sha256"] == from_csv["datasets"]["harbour"]["table_sha256"]
    assert cli.main(["verify", str(tmp_path / "out-sql"), "--recompute"]) == 0
    capsys.readouterr()


@pytest.mark.parametrize(("query", "message"), [
    ("DELETE FROM harbour_monthly", "the query must be one SELECT (or WITH ... SELECT) statement"),
    ("SELECT 1; DROP TABLE harbour_monthly", "the query must be one SELECT (or WITH ... SELECT) statement"),
    ("SELECT * FROM nowhere", "the query on data/harbour.sqlite failed: no such table: nowhere"),
    ("SELECT load_extension('x')", "the query on data/harbour.sqlite failed: not authorized"),
    ("SELECT * FROM pragma_database_list", "the query on data/harbour.sqlite failed: not authorized"),
])
def test_a_query_can_only_read(tmp_path: Path, capsys: pytest.CaptureFixture[str], query: str, message: str) -> None:
    manifest = _project(tmp_path, True)
    text = manifest.read_text(encoding="utf-8").replace("SELECT * FROM harbour_monthly ORDER BY 1", query, 1)
    manifest.write_text(text, encoding="utf-8")
    before = (manifest.parent / "data" / "harbour.sqlite").read_bytes()
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--format", "json", "--quiet"]) == 2
    error = capsys.readouterr().err
    assert f"error[sql-query]: datasets.harbour.query: {message}" in error
    assert (manifest.parent / "data" / "harbour.sqlite").read_bytes() == before


def test_attach_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    manifest = _project(tmp_path, True)
    other = tmp_path / "secret.sqlite"
    connection = sqlite3.connect(other)
    connection.execute("CREATE TABLE secret (x TEXT)")
    connection.commit()
    connection.close()
    text = manifest.read_text(encoding="utf-8").replace(
        "SELECT * FROM harbour_monthly ORDER BY 1", f"ATTACH DATABASE '{other}' AS s", 1)
    manifest.write_text(text, encoding="utf-8")
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--format", "json", "--quiet"]) == 2
    assert "error[sql-query]" in capsys.readouterr().err
