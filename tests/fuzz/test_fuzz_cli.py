"""Fuzzing the whole run through the command line, on short generated data that the statistics accept.

``reportgen run MANIFEST --out DIR --format json --quiet`` is called in-process on a valid
manifest over 24-60 observations of random walks, noise and awkward columns (constants,
extreme scales, outliers, near-duplicate and exactly collinear regressors). The exit status
is 0 or 2, never 3 (a bug); a refused run writes nothing and leaves an existing output folder
as it was; a successful one writes a results.json that strict JSON can read.
"""

from __future__ import annotations

import contextlib
import io
import json
import re
from pathlib import Path
from typing import Any

import numpy as np
import yaml
from hypothesis import given
from hypothesis import strategies as st

from reportgen.cli import main
from reportgen.errors import CATALOGUE
from reportgen.vocabulary import FLAGGED_VERDICTS, allowed
from reportgen.vocabulary import Verdict as VerdictWords

from .strategies import period_text
from .support import collect_crash, fuzz_settings, known_bug, note_event

#: Column shapes: the ordinary ones the statistics are for, and the awkward ones they must survive.
COLUMN_KINDS = ["walk", "walk", "walk", "noise", "noise", "trend", "trend", "constant", "near-constant", "huge",
                "tiny", "outlier", "near-copy", "collinear", "copy", "integers", "step", "negative", "alternating",
                "explosive", "overflowing-diff"]
VERDICTS = frozenset(allowed(VerdictWords))
#: Valid series names that look like the names of terms inside the statistics.
INTERNAL_LOOKING_NAMES = ["const", "trend", "ect", "resid", "Intercept", "e", "y", "_", "lag1", "d_x0", "x0_1",
                          "L1", "index", "A" * 200]


def _column(kind: str, rng: np.random.Generator, rows: int, first: np.ndarray) -> np.ndarray:
    """One column of values of a shape; ``first`` is the first column, for copies and combinations."""
    walk = 100 + np.cumsum(rng.standard_normal(rows))
    shapes = {
        "walk": lambda: walk,
        "noise": lambda: 10 + rng.standard_normal(rows),
        "trend": lambda: 5 + 0.3 * np.arange(rows) + rng.standard_normal(rows),
        "constant": lambda: np.full(rows, 7.0),
        "near-constant": lambda: 7.0 + 1e-13 * rng.standard_normal(rows),
        "huge": lambda: walk * 10.0 ** rng.choice([150, 200, 300]),
        "tiny": lambda: walk * 10.0 ** -rng.choice([150, 200, 300]),
        "overflowing-diff": lambda: np.where(np.arange(rows) % 2 == 0, 1e308, -1e308),
        "outlier": lambda: np.where(np.arange(rows) == rows // 2, 1e6, 10 + rng.standard_normal(rows)),
        "near-copy": lambda: first + 1e-9 * rng.standard_normal(rows),
        "collinear": lambda: 2.0 * first + 3.0,
        "copy": lambda: first.copy(),
        "integers": lambda: np.round(5 + np.cumsum(rng.integers(-1, 2, rows))),
        "step": lambda: np.where(np.arange(rows) < rows // 2, 1.0, 2.0),
        "negative": lambda: walk - 1000,
        "alternating": lambda: np.where(np.arange(rows) % 2 == 0, 1.0, -1.0),
        "explosive": lambda: 1.0 + np.cumprod(np.full(rows, 1.5)),
    }
    return shapes[kind]()


@st.composite
def runnable_projects(draw: st.DrawFn) -> tuple[bytes, bytes]:
    """A valid manifest and its CSV file: 2-4 columns of drawn shapes, 1-2 regressions among them."""
    rows = draw(st.integers(24, 60))
    form = draw(st.sampled_from(["monthly", "monthly", "monthly", "quarterly", "quarterly", "annual", "weekly",
                                 "daily"]))
    rng = np.random.default_rng(draw(st.integers(0, 2**16)))
    kinds = ["walk" if draw(st.integers(0, 2)) else draw(st.sampled_from(COLUMN_KINDS))]
    kinds += [draw(st.sampled_from(COLUMN_KINDS)) for _ in range(draw(st.integers(1, 3)))]
    columns: list[np.ndarray] = []
    for kind in kinds:
        columns.append(_column(kind, rng, rows, columns[0] if columns else np.zeros(rows)))
    names = [f"x{number}" for number in range(len(kinds))]
    for number in range(len(names)):
        if draw(st.integers(0, 4)) == 0:  # a name the statistics might also use for a term of their own
            name = draw(st.sampled_from(INTERNAL_LOOKING_NAMES))
            if name not in names:
                names[number] = name
    lines = ["period," + ",".join(names)]
    lines += [period_text(form, 2001, row) + "," + ",".join(repr(float(column[row])) for column in columns)
              for row in range(rows)]
    series: dict[str, Any] = {}
    for name in names:
        spec: dict[str, Any] = {"dataset": "d", "column": name}
        transform = draw(st.sampled_from([[], [], [], [], ["diff"], ["log"], ["log-diff"], [{"lag": 1}], ["growth"],
                                          ["seasonal-diff"]]))
        if transform:
            spec["transform"] = transform
        if draw(st.integers(0, 5)) == 0:
            spec["deterministic"] = draw(st.sampled_from(["constant", "constant-trend"]))
        series[name] = spec
    regressions: dict[str, Any] = {}
    for number in range(draw(st.integers(1, 2))):
        chosen = draw(st.permutations(names))[:draw(st.integers(2, min(3, len(names))))]
        regression: dict[str, Any] = {"formula": f"{chosen[0]} ~ {' + '.join(chosen[1:])}"}
        if draw(st.integers(0, 3)) == 0:
            regression["sample"] = {bound: period_text(form, 2001, draw(st.integers(0, rows)))
                                    for bound in ("start", "end") if draw(st.booleans())}
        regressions[f"r{number}"] = regression
    settings: dict[str, Any] = {}
    if draw(st.booleans()):
        settings["too_short"] = "report"
    if draw(st.integers(0, 3)) == 0:
        settings["max_order"] = 1
    if draw(st.integers(0, 3)) == 0:
        settings["deterministic"] = draw(st.sampled_from(["constant", "constant-trend"]))
    if draw(st.integers(0, 3)) == 0:
        settings["lag_criterion"] = draw(st.sampled_from(["bic", "t-stat"]))
    if draw(st.integers(0, 3)) == 0:
        settings["significance"] = draw(st.sampled_from([0.01, 0.1]))
    manifest = {"reportgen": 1, "project": {"title": "Fuzz run"},
                "datasets": {"d": {"path": "data.csv", "index": "period", "frequency": form}},
                "series": series, "regressions": regressions, "settings": settings}
    return yaml.safe_dump(manifest, sort_keys=False).encode(), ("\n".join(lines) + "\n").encode()


def _snapshot(folder: Path) -> dict[str, bytes] | None:
    if not folder.exists():
        return None
    return {str(path.relative_to(folder)): path.read_bytes() if path.is_file() else b"<folder>"
            for path in sorted(folder.rglob("*"))}


def _reject_constant(name: str) -> None:
    raise AssertionError(f"results.json holds {name}, which is not JSON")


def _check_results(out: Path) -> None:
    """results.json is strict JSON (no NaN or Infinity) and keeps the contracts of DESIGN.md."""
    document = json.loads((out / "results.json").read_text(encoding="utf-8"), parse_constant=_reject_constant)
    for key in ("schema_version", "tool_version", "run_id", "inputs", "series", "regressions"):
        assert key in document, key
    for name, series in document["series"].items():
        assert series["order"] in (0, 1, 2, None), (name, series["order"])
    for name, regression in document["regressions"].items():
        assert regression["verdict"] in VERDICTS, (name, regression["verdict"])
        assert regression["cointegrated"] in (True, False, None), name
        assert regression["flagged"] is (regression["verdict"] in FLAGGED_VERDICTS), name


@fuzz_settings(max_examples=50)
@given(project=runnable_projects(), before=st.sampled_from(["absent"] * 9 + ["empty", "foreign", "other-dossier"]))
def test_command_line_run_exits_0_or_2_and_writes_strict_json(project_folder: Path, project: tuple[bytes, bytes],
                                                              before: str) -> None:
    """50 examples: ``reportgen run`` on a valid manifest over 24-60 generated observations.

    Columns: random walks (the first column usually), white noise, trends, constants and
    near-constants, values scaled by 1e150 to 1e300 and 1e-150 to 1e-300, alternating
    +-1e308 (whose differences overflow), an outlier of 1e6, a near-copy (1e-9 apart),
    an exact copy and an exact linear combination of the first column, small integers, a step,
    negative values, alternating signs, explosive growth; monthly, quarterly, annual, weekly or
    daily dates; transforms none, diff, log, log-diff, a lag, growth or a seasonal difference,
    some series with a fixed deterministic term; 1-2 regressions, some with a sample window;
    settings with too_short: report, max_order 1, a fixed deterministic term, another lag
    criterion or significance level. One series in five has a name like those of the terms
    inside the statistics (const, trend, ect, resid, Intercept, ...). The output folder is
    absent, empty, holds a foreign file or another manifest's dossier.

    Exit 0: results.json parses as strict JSON (no NaN, no Infinity) and each series' order,
    each regression's verdict, ``cointegrated`` and ``flagged`` are in their vocabularies.
    Exit 2: stderr has no traceback, every ``error[code]`` in it is a catalogue code, and the
    output folder is as it was (absent if it was absent). Exit 3 (a bug) or any other status fails.

    Why: awkward but legal data must end in a dossier or an error message, never in a crash
    or a results file that a JSON reader rejects.
    """
    manifest_text, data = project
    manifest = project_folder / "manifest.yaml"
    manifest.write_bytes(manifest_text)
    (project_folder / "data.csv").write_bytes(data)
    out = project_folder / f"out-{before}"
    _prepare(out, before)
    snapshot = _snapshot(out)
    stderr = io.StringIO()
    try:
        with contextlib.redirect_stderr(stderr), contextlib.redirect_stdout(io.StringIO()):
            status = main(["run", str(manifest), "--out", str(out), "--format", "json", "--quiet"])
        if status == 3:
            _internal_error(stderr.getvalue(), project_folder)
            return
        assert status in (0, 2), (status, stderr.getvalue())
        note_event(f"exit {status}")
        if status == 0:
            _check_results(out)
        else:
            message = stderr.getvalue()
            assert "Traceback" not in message, message
            codes = re.findall(r"error\[([^\]]+)\]", message)
            if not codes and (known_bug(message, "uncoded") is not None
                              or collect_crash(f"uncoded error\n{message}", project_folder)):
                note_event("exit 2, known bug (uncoded error)")
                return
            assert codes, message
            assert all(code in CATALOGUE for code in codes), message
            for code in codes:
                note_event(f"error[{code}]")
            assert _snapshot(out) == snapshot, f"the output folder changed: {message}"
    finally:
        _remove(out)


def _prepare(out: Path, before: str) -> None:
    _remove(out)
    if before == "absent":
        return
    out.mkdir()
    if before == "foreign":
        (out / "notes.txt").write_text("not a dossier\n", encoding="utf-8")
    elif before == "other-dossier":
        other = {"inputs": [{"role": "manifest", "path": "/elsewhere/manifest.yaml"}]}
        (out / "results.json").write_text(json.dumps(other), encoding="utf-8")


def _remove(folder: Path) -> None:
    if folder.exists():
        for path in sorted(folder.rglob("*"), reverse=True):
            path.rmdir() if path.is_dir() else path.unlink()
        folder.rmdir()


def _internal_error(message: str, folder: Path) -> None:
    """Exit status 3: read the crash report the command line wrote; fail unless it is a known bug."""
    found = re.search(r"the traceback is in (\S+?\.txt)", message)
    report = Path(found.group(1)) if found else None
    text = report.read_text(encoding="utf-8") if report is not None and report.is_file() else message
    if report is not None:
        report.unlink(missing_ok=True)
    if known_bug(text) is not None or collect_crash(text, folder):
        note_event("exit 3 (known bug)")
        return
    raise AssertionError(f"exit status 3 (internal error):\n{message}\n{text}")

