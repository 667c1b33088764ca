"""The closing summary of ``reportgen run``: words, colours and when they are used, and large projects condensed."""

from __future__ import annotations

import io
import os
import re
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

from reportgen import cli
from reportgen.summary import FLAGGED_LISTED, FULL_LIMIT, colour_wanted, format_summary

ANSI = re.compile(r"\x1b\[[0-9;]*m")
ROOT = Path(__file__).resolve().parent.parent


class Terminal(io.StringIO):
    """A stream that says it is a terminal."""

    def isatty(self) -> bool:
        return True


def series(order: int | None, *, fragile: bool = False, reason: str | None = None) -> dict[str, Any]:
    """A series entry of a results document, with only what the summary reads."""
    return {"order": order, "fragile": fragile, "reason": reason}


def regression(verdict: str, *, fragile: bool = False) -> dict[str, Any]:
    """A regression entry of a results document, with only what the summary reads."""
    return {"verdict": verdict, "flagged": verdict in {"spurious-risk", "unbalanced", "inconclusive"},
            "fragile": fragile}


DOCUMENT: dict[str, Any] = {
    "tool_version": "9.9.9",
    "run_id": "rg-0123456789abcdef",
    "series": {"rate": series(0), "boxes": series(1, fragile=True), "fuel": series(1), "cpi": series(2),
               "survey": series(None, reason="too few observations")},
    "regressions": {"rate_on_rate": regression("stationary"), "boxes_on_fuel": regression("cointegrated"),
                    "fuel_on_cpi": regression("unbalanced"), "boxes_on_cpi": regression("spurious-risk", fragile=True),
                    "survey_on_rate": regression("inconclusive")},
}

PLAIN = """\
reportgen 9.9.9  run rg-0123456789abcdef
Series (5): order of integration
  rate    I(0)
  boxes   I(1)          fragile
  fuel    I(1)
  cpi     I(2)
  survey  undetermined  too few observations
Regressions (5): verdict
  rate_on_rate    stationary     levels inference valid
  boxes_on_fuel   cointegrated   long-run relation and error-correction model
  fuel_on_cpi     unbalanced     orders that cannot cointegrate                 needs attention
  boxes_on_cpi    spurious-risk  no cointegration; re-estimated in differences  needs attention, fragile
  survey_on_rate  inconclusive   tests disagree or too little data              needs attention
5 series, 5 regressions, 3 flagged"""


def test_the_summary_word_for_word() -> None:
    text = format_summary(DOCUMENT)
    assert text == PLAIN
    assert "\x1b" not in text


def test_colour_repeats_the_words_and_marks_each_verdict() -> None:
    coloured = format_summary(DOCUMENT, colour=True)
    assert ANSI.sub("", coloured) == format_summary(DOCUMENT)
    for verdict, code in {"stationary": "32", "cointegrated": "34", "spurious-risk": "1;31", "unbalanced": "1;35",
                          "inconclusive": "1;33"}.items():
        assert f"\x1b[{code}m{verdict}\x1b[0m" in coloured
    assert "\x1b[36mI(1)\x1b[0m" in coloured
    assert "\x1b[33mundetermined\x1b[0m" in coloured
    assert "\x1b[31m3 flagged\x1b[0m" in coloured
    # Columns stay aligned: the padding sits outside the colour codes.
    assert "\x1b[34mcointegrated\x1b[0m   \x1b[2mlong-run" in coloured


@pytest.mark.parametrize(("choice", "terminal", "environment", "expected"), [
    ("auto", True, {}, True),
    ("auto", False, {}, False),                              # a pipe or a file
    ("auto", True, {"NO_COLOR": "1"}, False),
    ("auto", True, {"NO_COLOR": ""}, True),                  # no-color.org: set and not empty
    ("auto", True, {"CI": "true"}, False),
    ("auto", True, {"CI": "false"}, True),
    ("auto", True, {"TERM": "dumb"}, False),
    ("always", False, {"NO_COLOR": "1", "CI": "true"}, True),  # an explicit choice wins over the environment
    ("never", True, {}, False),
])
def test_when_colour_is_used(choice: Any, terminal: bool, environment: dict[str, str], expected: bool) -> None:
    stream = Terminal() if terminal else io.StringIO()
    assert colour_wanted(choice, stream, environment) is expected


def test_a_large_project_is_condensed() -> None:
    orders = [0] * 400 + [1] * 520 + [2] * 60 + [None] * 20
    document = {
        "tool_version": "9.9.9", "run_id": "rg-big",
        "series": {f"s{index:04d}": series(order, fragile=index % 100 == 7) for index, order in enumerate(orders)},
        "regressions": {f"r{index:03d}": regression(verdict) for index, verdict in
                        enumerate(["stationary"] * 150 + ["cointegrated"] * 80 + ["spurious-risk"] * 50
                                  + ["unbalanced"] * 15 + ["inconclusive"] * 5)},
    }
    text = format_summary(document)
    lines = text.splitlines()
    assert lines[:12] == [
        "reportgen 9.9.9  run rg-big",
        "Series (1,000): order of integration",
        "  I(0)          400  4 fragile",
        "  I(1)          520  6 fragile",
        "  I(2)           60",
        "  undetermined   20",
        "Regressions (300): verdict",
        "  stationary     150",
        "  cointegrated    80",
        "  spurious-risk   50  needs attention",
        "  unbalanced      15  needs attention",
        "  inconclusive     5  needs attention",
    ]
    assert lines[12] == f"Flagged regressions (70; the first {FLAGGED_LISTED} in manifest order)"
    assert lines[13] == "  r230  spurious-risk  no cointegration; re-estimated in differences"
    assert lines[13 + FLAGGED_LISTED:] == ["  and 20 more: --summary full lists every one",
                                           "1,000 series, 300 regressions, 70 flagged"]
    assert len(lines) < 70
    assert len(format_summary(document, detail="full").splitlines()) == 1 + 1 + 1000 + 1 + 300 + 1
    assert format_summary(DOCUMENT, detail="short").splitlines()[2:] == [
        "  I(0)          1",
        "  I(1)          2  1 fragile",
        "  I(2)          1",
        "  undetermined  1",
        "Regressions (5): verdict",
        "  stationary     1",
        "  cointegrated   1",
        "  spurious-risk  1  needs attention",
        "  unbalanced     1  needs attention",
        "  inconclusive   1  needs attention",
        "Flagged regressions (3)",
        "  fuel_on_cpi     unbalanced     orders that cannot cointegrate",
        "  boxes_on_cpi    spurious-risk  no cointegration; re-estimated in differences  fragile",
        "  survey_on_rate  inconclusive   tests disagree or too little data",
        "5 series, 5 regressions, 3 flagged",
    ]


def test_auto_lists_every_line_up_to_the_limit() -> None:
    document = {"series": {f"s{index}": series(1) for index in range(FULL_LIMIT)},
                "regressions": {"r": regression("stationary")}}
    assert len(format_summary(document).splitlines()) == 1 + 1 + FULL_LIMIT + 1 + 1 + 1
    document["series"]["one_more"] = series(1)
    assert format_summary(document).splitlines()[2] == "  I(1)  31"


def test_files_in_subfolders_are_counted(tmp_path: Path) -> None:
    out = tmp_path / "out"
    files = [out / "results.json", out / "dossier.html", *(out / "tables" / f"t{index}.csv" for index in range(40)),
             out / "tables" / "deep" / "x.tex", out / "checksums.sha256"]
    lines = format_summary(DOCUMENT, out_dir=out, files=files).splitlines()
    assert lines[-4:] == [f"wrote {out / 'results.json'}", f"wrote {out / 'dossier.html'}",
                          f"wrote {out / 'tables'}{os.sep} (41 files)", f"wrote {out / 'checksums.sha256'}"]


@pytest.fixture
def plain_environment(monkeypatch: pytest.MonkeyPatch) -> None:
    """No NO_COLOR, no CI, an ordinary terminal type, whatever the machine running the tests has."""
    for name in ("NO_COLOR", "CI"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("TERM", "xterm-256color")


def _run(manifest: Path, out: Path, *options: str) -> tuple[int, str]:
    """``reportgen run`` (results.json only) with stdout on a stand-in terminal; the status and what it printed."""
    terminal = Terminal()
    previous = sys.stdout
    sys.stdout = terminal
    try:
        status = cli.main(["run", str(manifest), "--out", str(out), "--format", "json", "--jobs", "1", *options])
    finally:
        sys.stdout = previous
    return status, terminal.getvalue()


@pytest.mark.usefixtures("plain_environment")
def test_run_colours_a_terminal_unless_told_not_to(small_project: Callable[..., Path], tmp_path: Path,
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    manifest = small_project()
    status, coloured = _run(manifest, tmp_path / "out")
    assert status == 0
    assert "\x1b[1;31mspurious-risk\x1b[0m" in coloured
    assert ANSI.sub("", coloured).splitlines()[1:4] == [
        "Series (3): order of integration", "  walk_a  I(1)", "  walk_b  I(1)  fragile"]
    assert "\x1b" not in _run(manifest, tmp_path / "out", "--color", "never")[1]
    monkeypatch.setenv("NO_COLOR", "1")
    assert _run(manifest, tmp_path / "out")[1] == ANSI.sub("", coloured)
    assert "\x1b[" in _run(manifest, tmp_path / "out", "--color=always")[1]
    monkeypatch.delenv("NO_COLOR")
    monkeypatch.setenv("CI", "true")
    assert "\x1b" not in _run(manifest, tmp_path / "out")[1]


@pytest.mark.usefixtures("plain_environment")
def test_run_prints_plain_text_to_a_pipe_and_nothing_when_quiet(small_project: Callable[..., Path], tmp_path: Path,
                                                                capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project()
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--format", "json", "--jobs", "1"]) == 0
    captured = capsys.readouterr()
    assert "\x1b" not in captured.out
    assert "  a_on_b      spurious-risk" in captured.out
    assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--format", "json", "--quiet",
                     "--color", "always"]) == 0
    assert capsys.readouterr() == ("", "")


def test_unknown_colour_choice_is_a_usage_error(small_project: Callable[..., Path], tmp_path: Path,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    status = cli.main(["run", str(small_project()), "--out", str(tmp_path / "out"), "--color", "sometimes"])
    assert status == 2
    # argparse's own wording (the quoting of the choices differs between Python versions).
    assert "argument --color: invalid choice: 'sometimes' (choose from " in capsys.readouterr().err


@pytest.mark.skipif(sys.platform == "win32", reason="pseudo-terminals are POSIX")
def test_a_real_terminal_gets_colour(small_project: Callable[..., Path], tmp_path: Path) -> None:
    import pty
    import subprocess

    leader, follower = pty.openpty()
    environment = {key: value for key, value in os.environ.items() if key not in ("NO_COLOR", "CI")}
    environment.update(TERM="xterm", PYTHONPATH=str(ROOT))
    completed = subprocess.run(
        [sys.executable, "-m", "reportgen.cli", "run", str(small_project()), "--out", str(tmp_path / "out"),
         "--format", "json", "--jobs", "1"],
        stdout=follower, stderr=subprocess.DEVNULL, env=environment, timeout=120, check=False)
    os.close(follower)
    chunks = []
    while True:
        try:
            chunk = os.read(leader, 65536)
        except OSError:  # the other end is closed: everything has been read
            break
        if not chunk:
            break
        chunks.append(chunk)
    os.close(leader)
    printed = b"".join(chunks).decode("utf-8")
    assert completed.returncode == 0
    assert "\x1b[1;31mspurious-risk\x1b[0m" in printed
