"""A small project of every verdict rendered once, and headless Chromium to read its dossier.

The project (nine series, five regressions) is simulated from a fixed seed and runs through
the real pipeline in seconds: orders 0, 1, 2 and undetermined, one regression of each
verdict, two series whose names share a fragment identifier (``Walk_B`` and ``walk_b``) and
labels with ``&``, ``<`` and quotes. Chromium comes from Debian's ``chromium`` and
``chromium-driver`` packages, driven by selenium through ``/usr/bin/chromedriver`` (nothing
is downloaded). Without them the browser tests skip locally and fail under CI (``CI`` set),
where ``.ci/run`` installs them.
"""

from __future__ import annotations

import os
import shutil
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from reportgen.runner import run

MANIFEST = """\
reportgen: 1
project:
  title: "Browser check: <every> verdict & \\"quoted\\" names"
  client: "Test client"
  author: "Test author"
  reference: "BR-0001"
datasets:
  monthly: {path: monthly.csv, index: month}
  quarterly: {path: quarterly.csv, index: quarter}
series:
  walk_a: {dataset: monthly, column: walk_a, label: "Walk A"}
  Walk_B: {dataset: monthly, column: walk_b, label: "Walk B (capitals)"}
  walk_b: {dataset: monthly, column: walk_b, transform: [log], label: "Walk B in logs"}
  tied: {dataset: monthly, column: tied, label: "Tied to walk A"}
  calm: {dataset: monthly, column: calm}
  still: {dataset: monthly, column: still, label: "Still & calm"}
  double: {dataset: monthly, column: double, label: "Doubly integrated"}
  visits: {dataset: quarterly, column: visits, too_short: report}
  spend: {dataset: quarterly, column: spend, too_short: report}
regressions:
  still_on_calm: {formula: "still ~ calm"}
  tied_on_a: {formula: "tied ~ walk_a"}
  a_on_b: {formula: "walk_a ~ Walk_B"}
  calm_on_a: {formula: "calm ~ walk_a"}
  spend_on_visits: {formula: "spend ~ visits"}
"""

#: The seed of the simulated data.
SEED = 20261202

#: The verdict each regression of :data:`MANIFEST` comes out with (checked, so the page shows every one).
VERDICTS = {"still_on_calm": "stationary", "tied_on_a": "cointegrated", "a_on_b": "spurious-risk",
            "calm_on_a": "unbalanced", "spend_on_visits": "inconclusive"}

#: The flags that start Chromium here as root, headless, with nothing fetched in the background.
CHROMIUM_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--disable-dev-shm-usage", "--window-size=1280,900", "--hide-scrollbars")

#: Where the browser tests copy their screenshots and page images (besides pytest's tmp_path).
ARTIFACTS = Path(os.environ.get("REPORTGEN_BROWSER_ARTIFACTS",
                                Path(__file__).resolve().parents[2] / "out" / "browser-check"))

_SAVED: list[Path] = []


def monthly_csv(rng: np.random.Generator, count: int = 120) -> str:
    """Two independent walks, one tied to the first, two stationary AR(1)s and a doubly integrated walk."""
    shocks = rng.standard_normal((6, count))
    walk_a = 40 + np.cumsum(shocks[0])
    walk_b = 60 + np.cumsum(shocks[1])
    tied = 5 + 0.8 * walk_a + 0.7 * shocks[2]
    calm = np.zeros(count)
    still = np.zeros(count)
    for t in range(1, count):
        calm[t] = 0.4 * calm[t - 1] + shocks[3, t]
        still[t] = 0.3 * still[t - 1] + 0.5 * calm[t] + shocks[4, t]
    double = 500 + np.cumsum(np.cumsum(0.2 + shocks[5]))
    rows = [f"{2012 + i // 12}-{i % 12 + 1:02d},{walk_a[i]:.6f},{walk_b[i]:.6f},{tied[i]:.6f},"
            f"{10 + calm[i]:.6f},{20 + still[i]:.6f},{double[i]:.6f}" for i in range(count)]
    return "month,walk_a,walk_b,tied,calm,still,double\n" + "\n".join(rows) + "\n"


def quarterly_csv(rng: np.random.Generator, count: int = 16) -> str:
    """Two short walks: too few quarters for the unit-root tests."""
    visits, spend = (np.cumsum(row) for row in rng.standard_normal((2, count)))
    rows = [f"{2021 + i // 4}Q{i % 4 + 1},{100 + visits[i]:.4f},{50 + spend[i]:.4f}" for i in range(count)]
    return "quarter,visits,spend\n" + "\n".join(rows) + "\n"


@dataclass(frozen=True, slots=True)
class Dossier:
    """The rendered project: its output folder and the files in it."""

    out_dir: Path
    html: Path
    pdf: Path


@pytest.fixture(scope="session")
def dossier(tmp_path_factory: pytest.TempPathFactory) -> Dossier:
    """Run the project once (HTML and PDF, no cache) and return where the dossier is."""
    folder = tmp_path_factory.mktemp("browser-project")
    rng = np.random.default_rng(SEED)
    (folder / "monthly.csv").write_text(monthly_csv(rng), encoding="utf-8")
    (folder / "quarterly.csv").write_text(quarterly_csv(rng), encoding="utf-8")
    manifest = folder / "manifest.yaml"
    manifest.write_text(MANIFEST, encoding="utf-8")
    out = folder / "out"
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("SOURCE_DATE_EPOCH", "1764633600")  # a fixed run date: the same pages, the same screenshots
        outcome = run(manifest, out, ("html", "pdf"), command=["reportgen", "run", "manifest.yaml"], cache=None)
    verdicts = {name: regression["verdict"] for name, regression in outcome.document["regressions"].items()}
    assert verdicts == VERDICTS
    return Dossier(out, out / "dossier.html", out / "dossier.pdf")


def unavailable(reason: str) -> None:
    """Skip with ``reason`` on a developer's machine; fail under CI, where the browser must be there."""
    if os.environ.get("CI", "").strip().lower() not in ("", "0", "false", "no"):
        pytest.fail(f"{reason} (CI is set, so this is a failure, not a skip: .ci/run installs them)")
    pytest.skip(reason)


def chromium_paths() -> tuple[str, str]:
    """The Chromium binary and its driver (``$REPORTGEN_CHROMIUM``, ``$REPORTGEN_CHROMEDRIVER`` or on PATH).

    Missing, they skip the test (fail it under CI) with the packages to install.
    """
    browser = shutil.which(os.environ.get("REPORTGEN_CHROMIUM", "chromium"))
    driver = shutil.which(os.environ.get("REPORTGEN_CHROMEDRIVER", "chromedriver"))
    missing = [package for package, path in (("chromium", browser), ("chromium-driver", driver)) if not path]
    if missing:
        unavailable(f"headless Chromium is not installed (apt-get install -y {' '.join(missing)})")
    assert browser is not None
    assert driver is not None
    return browser, driver


@pytest.fixture(scope="session")
def browser(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Any]:
    """A headless Chromium with a fresh profile, its console kept for :func:`console_errors`."""
    binary, driver_path = chromium_paths()
    try:
        from selenium import webdriver
        from selenium.webdriver.chrome.service import Service
    except ImportError:
        unavailable("selenium is not installed (pip install -e '.[test]')")
    options = webdriver.ChromeOptions()
    options.binary_location = binary
    for flag in CHROMIUM_FLAGS:
        options.add_argument(flag)
    options.add_argument(f"--user-data-dir={tmp_path_factory.mktemp('chromium-profile')}")
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(options=options, service=Service(executable_path=driver_path))
    driver.set_page_load_timeout(60)
    try:
        yield driver
    finally:
        driver.quit()


def keep_artifact(path: Path) -> Path:
    """Copy ``path`` to :data:`ARTIFACTS`, remember it for the end-of-run report, return the copy."""
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    copy = ARTIFACTS / path.name
    shutil.copyfile(path, copy)
    _SAVED.append(copy)
    print(f"saved {copy}")
    return copy


def pytest_terminal_summary(terminalreporter: Any) -> None:
    """List the screenshots and page images the browser tests saved."""
    if _SAVED:
        terminalreporter.section("browser check images")
        for path in dict.fromkeys(_SAVED):
            terminalreporter.write_line(str(path))
