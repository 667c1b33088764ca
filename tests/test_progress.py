"""Progress displays: one updating line on a terminal, plain periodic lines in a log, nothing with --quiet."""

from __future__ import annotations

import io
from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen import cli
from reportgen.progress import (
    LineProgress,
    MessageProgress,
    SilentProgress,
    TerminalProgress,
    as_progress,
    format_duration,
    progress_display,
)
from reportgen.runner import run


class Terminal(io.StringIO):
    """A stream that says it is a terminal."""

    def isatty(self) -> bool:
        return True


class Clock:
    """A clock the test moves by hand."""

    def __init__(self) -> None:
        self.now = 100.0

    def __call__(self) -> float:
        return self.now


def test_the_display_follows_the_stream() -> None:
    assert isinstance(progress_display(Terminal()), TerminalProgress)
    assert isinstance(progress_display(io.StringIO()), LineProgress)
    assert isinstance(progress_display(Terminal(), quiet=True), SilentProgress)
    assert isinstance(as_progress(None), SilentProgress)
    assert isinstance(as_progress(print), MessageProgress)
    line = LineProgress(io.StringIO())
    assert as_progress(line) is line


def test_a_terminal_gets_one_line_per_stage_redrawn_in_place() -> None:
    stream, clock = Terminal(), Clock()
    display = TerminalProgress(stream, clock=clock)
    display.start("order of integration", 4)
    for _ in range(3):
        clock.now += 2.0
        display.advance("order of integration", item="walk")
    clock.now += 0.05
    display.advance("order of integration")  # the last one is always drawn
    display.finish("order of integration")
    display.start("charts")
    clock.now += 2.5
    display.finish("charts")
    assert stream.getvalue() == (
        "\rorder of integration: 0/4 (0%)"
        "\rorder of integration: 1/4 (25%), 2.0 s each, about 6.0 s left"
        "\rorder of integration: 2/4 (50%), 2.0 s each, about 4.0 s left"
        "\rorder of integration: 3/4 (75%), 2.0 s each, about 2.0 s left"
        "\rorder of integration: 4/4 (100%), 1.5 s each" + " " * 17 +  # blanks over the longer line before
        "\rorder of integration: 4 done in 6.0 s" + " " * 7 + "\n"
        "\rcharts: 0.0 s"
        "\rcharts: done in 2.5 s\n")


def test_a_terminal_line_is_redrawn_at_most_ten_times_a_second() -> None:
    stream, clock = Terminal(), Clock()
    display = TerminalProgress(stream, clock=clock)
    display.start("regressions", 1000)
    for _ in range(999):
        clock.now += 0.001
        display.advance("regressions")
    assert stream.getvalue().count("\r") == 1 + 9  # the start, then one redraw per tenth of a second


def test_a_log_gets_a_line_per_tenth_and_every_five_seconds() -> None:
    stream, clock = io.StringIO(), Clock()
    display = LineProgress(stream, clock=clock)
    display.start("order of integration", 200)
    for _ in range(200):
        clock.now += 0.01
        display.advance("order of integration")
    display.finish("order of integration")
    lines = stream.getvalue().splitlines()
    assert lines[0] == "  order of integration: 200 to do"
    assert lines[1] == "  order of integration: 20/200 (10%), 100.0/s, about 1.8 s left"
    assert lines[9] == "  order of integration: 180/200 (90%), 100.0/s, about 0.2 s left"
    assert lines[10:] == ["  order of integration: 200 done in 2.0 s"]

    stream, clock = io.StringIO(), Clock()
    display = LineProgress(stream, clock=clock)
    display.start("regressions", 1000)
    for _ in range(30):
        clock.now += 1.0
        display.advance("regressions")  # 3% after 30 s: a line every five seconds
    assert len(stream.getvalue().splitlines()) == 1 + 6
    assert stream.getvalue().splitlines()[-1] == "  regressions: 30/1000 (3%), 1.0/s, about 16 min 10 s left"


def test_messages_for_a_callable() -> None:
    messages: list[str] = []
    display = MessageProgress(messages.append)
    display.start("regressions", 2)
    display.advance("regressions", item="a_on_b")
    display.advance("regressions", item="noise_on_a")
    display.finish("regressions")
    display.note("removed a staging folder")
    assert messages == ["regressions", "regressions 1/2: a_on_b", "regressions 2/2: noise_on_a",
                        "removed a staging folder"]


def test_durations() -> None:
    assert [format_duration(seconds) for seconds in (0.04, 59.94, 61, 3599, 3600 * 2 + 61)] == \
        ["0.0 s", "59.9 s", "1 min 01 s", "59 min 59 s", "2 h 01 min"]


def test_a_run_reports_every_stage_in_a_log(small_project: Callable[..., Path], tmp_path: Path,
                                            capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["run", str(small_project()), "--out", str(tmp_path / "out"), "--format", "html",
                     "--jobs", "1"]) == 0
    err = capsys.readouterr().err
    for line in ("  reading data", "  order of integration: 3 to do", "  regressions: 2 to do", "  charts",
                 "  HTML"):
        assert f"{line}\n" in err
    for stage, count in (("order of integration", "3 done in"), ("regressions", "2 done in"),
                         ("charts", "done in"), ("HTML", "done in")):
        assert f"  {stage}: {count} " in err
    assert "cache " in err
    assert "\r" not in err


def test_a_run_on_a_terminal_redraws_and_quiet_prints_nothing(small_project: Callable[..., Path], tmp_path: Path,
                                                              capsys: pytest.CaptureFixture[str],
                                                              monkeypatch: pytest.MonkeyPatch) -> None:
    terminal = Terminal()
    monkeypatch.setattr("sys.stderr", terminal)
    assert cli.main(["run", str(small_project()), "--out", str(tmp_path / "out"), "--format", "json",
                     "--jobs", "1"]) == 0
    shown = terminal.getvalue()
    assert "\rorder of integration: 0/3 (0%)" in shown
    assert "\rorder of integration: 3 done in " in shown
    assert "\rregressions: 2 done in " in shown
    terminal.truncate(0)
    terminal.seek(0)
    capsys.readouterr()
    assert cli.main(["run", str(small_project()), "--out", str(tmp_path / "out"), "--format", "json",
                     "--jobs", "1", "--quiet"]) == 0
    assert terminal.getvalue() == ""
    assert capsys.readouterr().out == ""


def test_the_run_function_still_takes_a_callable(small_project: Callable[..., Path], tmp_path: Path) -> None:
    messages: list[str] = []
    run(small_project(), tmp_path / "out", (), command=["reportgen"], progress=messages.append)
    assert messages[:2] == ["reading data", "order of integration"]
    assert "order of integration 3/3: noise" in messages
    assert "regressions 2/2: noise_on_a" in messages
