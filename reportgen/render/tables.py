"""The dossier's tables as files: CSV for spreadsheets and LaTeX (booktabs) for papers and referee replies.

Every table is built from results.json (the same numbers the dossier shows) into a :class:`Table`
of text cells, then written twice: ``NAME.csv`` (full precision, as recorded) and ``NAME.tex`` (a
``tabular`` with ``\\toprule``/``\\midrule``/``\\bottomrule``, numbers to four significant digits, every
special character escaped). Tables: the series and their orders, the regressions and their verdicts,
each series' test battery, and each regression's fitted equations.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

#: LaTeX's special characters and what stands for each in text.
_LATEX = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_", "{": r"\{",
          "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}", "<": r"\textless{}",
          ">": r"\textgreater{}", "|": r"\textbar{}"}
_SPECIAL = re.compile("|".join(re.escape(character) for character in _LATEX))
_FILE_NAME = re.compile(r"[^A-Za-z0-9_.-]+")


@dataclass(frozen=True, slots=True)
class Table:
    """One table: its file name (without suffix), caption, column headings, alignments and rows of values."""

    name: str
    caption: str
    columns: tuple[str, ...]
    align: str  # one letter per column: l (text) or r (numbers)
    rows: tuple[tuple[Any, ...], ...]


def latex_escape(text: str) -> str:
    """Text with LaTeX's special characters escaped (so a label like ``R&D_2 {50%}`` prints as written)."""
    return _SPECIAL.sub(lambda match: _LATEX[match.group(0)], text)


def _latex_cell(value: Any) -> str:
    if value is None:
        return "--"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            return "--"
        text = f"{value:.4g}"
        if "e" in text:
            mantissa, exponent = text.split("e")
            return f"${mantissa}\\times 10^{{{int(exponent)}}}$"
        return f"${text}$" if text.startswith("-") else text
    return latex_escape(str(value))


def _csv_cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return str(value)


def to_csv(table: Table) -> str:
    """The table as CSV text (header row, then the values as recorded)."""
    stream = io.StringIO()
    writer = csv.writer(stream, lineterminator="\n")
    writer.writerow(table.columns)
    writer.writerows([_csv_cell(value) for value in row] for row in table.rows)
    return stream.getvalue()


def to_latex(table: Table) -> str:
    """The table as a booktabs ``tabular`` inside a ``table`` float with its caption and label."""
    lines = [f"% {table.name}: written by reportgen from results.json; needs \\usepackage{{booktabs}}",
             "\\begin{table}[htbp]", "\\centering", f"\\caption{{{latex_escape(table.caption)}}}",
             f"\\label{{tab:{table.name}}}", f"\\begin{{tabular}}{{{table.align}}}", "\\toprule",
             " & ".join(latex_escape(column) for column in table.columns) + " \\\\", "\\midrule"]
    lines += [" & ".join(_latex_cell(value) for value in row) + " \\\\" for row in table.rows]
    lines += ["\\bottomrule", "\\end{tabular}", "\\end{table}", ""]
    return "\n".join(lines)


def _safe(name: str) -> str:
    return _FILE_NAME.sub("-", name).strip("-") or "table"


def _order(value: Any) -> str:
    return "undetermined" if value is None else f"I({value})"


def dossier_tables(document: Mapping[str, Any]) -> list[Table]:
    """Every table of a results document, in dossier order."""
    series: Mapping[str, Any] = document["series"]
    regressions: Mapping[str, Any] = document["regressions"]
    tables = [
        Table("series", "Series and their order of integration", ("Series", "Label", "Order", "Terms (levels)",
                                                                   "Fragile", "Observations", "Start", "End"),
              "lllllrll",
              tuple((name, item["label"], _order(item["order"]), item["deterministic"].get("0"),
                     bool(item.get("fragile")), item["nobs"], item["start"], item["end"])
                    for name, item in series.items())),
        Table("regressions", "Regressions and their verdicts", ("Regression", "Formula", "Verdict", "Cointegrated",
                                                                 "Needs attention"), "lllll",
              tuple((name, item["formula"], item["verdict"], item["cointegrated"], bool(item["flagged"]))
                    for name, item in regressions.items())),
    ]
    for name, item in series.items():
        tables.append(Table(
            _safe(f"tests-{name}"), f"Unit-root and stationarity tests on {name}",
            ("Test", "Level", "Terms", "Statistic", "p-value", "Lags", "Observations", "Sample", "Rejects"),
            "lrlrrrrll",
            tuple((test["test"], test["level"], test["deterministic"], test["statistic"], test["pvalue"],
                   test["lags"], test["nobs"], f"{test['sample_start']} to {test['sample_end']}", test["rejects"])
                  for test in item["tests"])))
    for name, item in regressions.items():
        for role in ("levels", "differences", "long_run", "error_correction"):
            fit = item.get(role)
            if not isinstance(fit, Mapping) or not fit.get("coefficients"):
                continue
            tables.append(Table(
                _safe(f"fit-{name}-{role}"), f"{name}: {fit['equation']} ({role.replace('_', ' ')}; "
                                             f"{fit['nobs']} observations)",
                ("Term", "Estimate", "Std. error", "t", "p-value"), "lrrrr",
                tuple((coefficient["term"], coefficient["estimate"], coefficient["std_error"],
                       coefficient["t_statistic"], coefficient["pvalue"]) for coefficient in fit["coefficients"])))
    return tables


def write_tables(document: Mapping[str, Any], folder: Path) -> list[Path]:
    """Write every table as ``folder/NAME.csv`` and ``folder/NAME.tex``; return the files, sorted."""
    folder.mkdir(parents=True, exist_ok=True)
    written: list[Path] = []
    seen: set[str] = set()
    for table in dossier_tables(document):
        name = table.name
        suffix = 2
        while name in seen:  # two names that differ only in characters a file name cannot hold
            name, suffix = f"{table.name}-{suffix}", suffix + 1
        seen.add(name)
        for extension, text in (("csv", to_csv(table)), ("tex", to_latex(table))):
            path = folder / f"{name}.{extension}"
            path.write_text(text, encoding="utf-8", newline="\n")
            written.append(path)
    return sorted(written)


__all__: Sequence[str] = ("Table", "dossier_tables", "latex_escape", "to_csv", "to_latex", "write_tables")
