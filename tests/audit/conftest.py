"""Fixtures of the audit tests: the command line in-process, its tables, and small projects on disk."""

from __future__ import annotations

import re
from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen import cli

CliRun = Callable[..., tuple[int, str, str]]
Rows = Callable[[str], dict[tuple[str, str], str]]


@pytest.fixture
def cli_run(capsys: pytest.CaptureFixture[str]) -> CliRun:
    """Run ``reportgen`` in this process; return (exit status, stdout, stderr)."""

    def call(*arguments: str | Path) -> tuple[int, str, str]:
        status = cli.main([str(argument) for argument in arguments])
        captured = capsys.readouterr()
        return status, captured.out, captured.err

    return call


def _verify_rows(text: str) -> dict[tuple[str, str], str]:
    rows: dict[tuple[str, str], str] = {}
    for line in text.splitlines():
        if line.startswith("  ") and not line.startswith("   "):
            cells = re.split(r"\s{2,}", line.strip())
            if len(cells) == 4 and cells[0] != "check":
                rows[(cells[0], cells[1])] = cells[2]
    return rows


@pytest.fixture
def verify_rows() -> Rows:
    """Read the table ``reportgen verify`` prints: (check, name) -> status."""
    return _verify_rows
