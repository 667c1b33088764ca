"""Tables as CSV and LaTeX: the numbers of results.json, booktabs layout, every special character escaped."""

from __future__ import annotations

import csv
import io
import json
import re
from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen import cli
from reportgen.render.tables import Table, latex_escape, to_csv, to_latex, write_tables


def _balanced(text: str) -> bool:
    """Unescaped braces balance and every \\begin has its \\end, in order (a check that needs no TeX)."""
    depth = 0
    for match in re.finditer(r"(?<!\\)[{}]", text):
        depth += 1 if match.group(0) == "{" else -1
        if depth < 0:
            return False
    stack: list[str] = []
    for kind, name in re.findall(r"\\(begin|end)\{([^}]*)\}", text):
        if kind == "begin":
            stack.append(name)
        elif not stack or stack.pop() != name:
            return False
    return depth == 0 and not stack


def test_special_characters_are_escaped() -> None:
    assert latex_escape("R&D_2 {50%} #1 $x ~ y^2 \\ <a|b>") == (
        r"R\&D\_2 \{50\%\} \#1 \$x \textasciitilde{} y\textasciicircum{}2 \textbackslash{} "
        r"\textless{}a\textbar{}b\textgreater{}")


def test_a_table_in_both_forms() -> None:
    table = Table("demo", "Costs & 50% margins", ("Name_1", "Value"), "lr",
                  (("a&b", 1.23456789), ("c", -2.5e-7), ("d", None), ("e", True)))
    text = to_latex(table)
    assert _balanced(text)
    assert "\\toprule" in text
    assert "\\midrule" in text
    assert "\\bottomrule" in text
    assert "\\caption{Costs \\& 50\\% margins}" in text
    assert "a\\&b & 1.235 \\\\" in text
    assert "c & $-2.5\\times 10^{-7}$ \\\\" in text
    assert "d & -- \\\\" in text
    rows = list(csv.reader(io.StringIO(to_csv(table))))
    assert rows == [["Name_1", "Value"], ["a&b", "1.23456789"], ["c", "-2.5e-07"], ["d", ""], ["e", "true"]]


def test_a_run_writes_every_table(small_project: Callable[..., Path], small_manifest: str, tmp_path: Path,
                                  capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project(small_manifest.replace(
        "  walk_a: {dataset: sim, column: walk_a}", "  walk_a: {dataset: sim, column: walk_a, label: 'R&D_spend {%}'}"))
    out = tmp_path / "out"
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "tables", "--quiet"]) == 0
    capsys.readouterr()
    document = json.loads((out / "results.json").read_text())
    names = sorted(path.name for path in (out / "tables").iterdir())
    assert "series.csv" in names
    assert "series.tex" in names
    assert "regressions.tex" in names
    assert {f"tests-{name}.csv" for name in document["series"]} <= set(names)
    assert "fit-a_on_b-levels.tex" in names
    for path in (out / "tables").glob("*.tex"):
        assert _balanced(path.read_text()), path.name
    assert "R\\&D\\_spend \\{\\%\\}" in (out / "tables" / "series.tex").read_text()
    rows = list(csv.DictReader(io.StringIO((out / "tables" / "tests-noise.csv").read_text())))
    recorded = [test["statistic"] for test in document["series"]["noise"]["tests"]]
    assert [float(row["Statistic"]) for row in rows] == recorded
    checksums = (out / "checksums.sha256").read_text()
    assert "tables/series.tex" in checksums
    assert cli.main(["verify", str(out)]) == 0
    capsys.readouterr()


def test_tables_are_byte_identical_run_to_run(small_project: Callable[..., Path], tmp_path: Path) -> None:
    document = json.loads(json.dumps({"series": {}, "regressions": {}}))
    first = write_tables(document, tmp_path / "one")
    second = write_tables(document, tmp_path / "two")
    assert [path.read_bytes() for path in first] == [path.read_bytes() for path in second]
