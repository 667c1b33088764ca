"""Shared fixtures: a small seeded project on disk (simulated series, not the demo)."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

SMALL_MANIFEST = """\
reportgen: 1
project:
  title: Small check
datasets:
  sim:
    path: sim.csv
    index: month
series:
  walk_a: {dataset: sim, column: walk_a}
  walk_b: {dataset: sim, column: walk_b}
  noise: {dataset: sim, column: noise}
regressions:
  a_on_b: {formula: "walk_a ~ walk_b"}
  noise_on_a: {formula: "noise ~ walk_a"}
"""


def simulated_csv(seed: int = 7, periods: int = 120) -> str:
    """Two independent random walks and a white noise, monthly from 2010-01 (seeded)."""
    rng = np.random.default_rng(seed)
    walk_a = 50 + np.cumsum(rng.standard_normal(periods))
    walk_b = 80 + np.cumsum(rng.standard_normal(periods))
    noise = 5 + rng.standard_normal(periods)
    rows = [f"{2010 + i // 12}-{i % 12 + 1:02d},{walk_a[i]:.6f},{walk_b[i]:.6f},{noise[i]:.6f}"
            for i in range(periods)]
    return "month,walk_a,walk_b,noise\n" + "\n".join(rows) + "\n"


@pytest.fixture(autouse=True)
def private_result_cache(tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A fresh result cache for every test (``reportgen run`` caches by default): never the user's own."""
    folder = tmp_path_factory.mktemp("cache")
    monkeypatch.setenv("REPORTGEN_CACHE", str(folder))
    return folder


@pytest.fixture
def small_manifest() -> str:
    """The text of the small manifest (two walks and a noise)."""
    return SMALL_MANIFEST


@pytest.fixture
def simulated_data() -> Callable[..., str]:
    """The simulated CSV writer (two walks and a noise), for tests that build their own projects."""
    return simulated_csv


@pytest.fixture
def small_project(tmp_path: Path) -> Callable[..., Path]:
    """Write a small manifest and its simulated data; return the manifest path."""

    def write(manifest: str = SMALL_MANIFEST, data: str | None = None) -> Path:
        folder = tmp_path / "project"
        folder.mkdir(exist_ok=True)
        (folder / "sim.csv").write_text(data if data is not None else simulated_csv(), encoding="utf-8")
        path = folder / "manifest.yaml"
        path.write_text(manifest, encoding="utf-8")
        return path

    return write
