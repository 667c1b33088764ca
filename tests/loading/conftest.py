"""Helpers for the loading-stage tests: write a small manifest and data file into a tmp folder."""

from __future__ import annotations

import textwrap
from collections.abc import Callable
from pathlib import Path

import pytest

MONTHLY_CSV = "month,a,b\n" + "".join(f"{2010 + (i // 12)}-{i % 12 + 1:02d},{100 + i},{50 + (i % 7)}\n"
                                       for i in range(36))

BASE_MANIFEST = """\
reportgen: 1
project:
  title: Test dossier
datasets:
  shop:
    path: data.csv
    index: month
series:
  a: {dataset: shop, column: a, transform: [log]}
  b: {dataset: shop, column: b}
regressions:
  a_on_b: {formula: "a ~ b"}
"""


@pytest.fixture
def base() -> str:
    """The text of a small valid manifest."""
    return BASE_MANIFEST


@pytest.fixture
def project(tmp_path: Path) -> Callable[..., Path]:
    """Write ``manifest.yaml`` (and ``data.csv``) and return the manifest's path."""

    def write(manifest: str = BASE_MANIFEST, data: str | bytes | None = MONTHLY_CSV) -> Path:
        path = tmp_path / "manifest.yaml"
        path.write_text(textwrap.dedent(manifest), encoding="utf-8")
        if data is not None:
            target = tmp_path / "data.csv"
            if isinstance(data, bytes):
                target.write_bytes(data)
            else:
                target.write_text(data, encoding="utf-8")
        return path

    return write
