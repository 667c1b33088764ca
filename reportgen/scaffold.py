"""``reportgen init DIR``: a new project folder with a commented manifest, seeded example data and a README.

The example is invented (a water board's monthly figures, simulated with a fixed seed) so that
``reportgen check`` and ``reportgen run`` work at once and the manifest shows every section.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from reportgen.errors import InitTargetError, Location

#: The seed of the example data; the same folder is created every time.
EXAMPLE_SEED = 20261202

MANIFEST = """\
# A reportgen manifest. Paths are relative to this file's folder.
# Check it without running the statistics:  reportgen check manifest.yaml
# Run it:                                   reportgen run manifest.yaml --out out
# Editors can validate it against:          reportgen schema > manifest.schema.json
reportgen: 1

project:
  title: "Tarrow Valley Water Board: demand regressions"   # shown on the cover
  client: "Tarrow Valley Water Board"
  author: "Your name"
  reference: "TVWB-0001"
  # branding:                      # a firm's look (see the README, "Branding")
  #   templates: brand             # folder of templates replacing reportgen's (colours.css, partials/...)
  #   firm: "Your firm"
  #   logo: brand/logo.png         # PNG, JPEG or plain SVG
  #   disclaimer: "Added after the standard cautions, never instead of them."
  # sign_off:                      # a sign-off table on the cover; "not yet reviewed" until reviewed
  #   prepared_on: 2026-01-15      # ISO dates, YYYY-MM-DD
  #   reviewed_by: "Reviewer's name"
  #   reviewed_on: 2026-01-22

datasets:
  board:
    path: data/board_monthly.csv   # CSV, Parquet (.parquet) or Excel (.xlsx, with sheet: and range:)
    index: month                   # the date column: 2011, 2011Q1, 2011-03 or 2011-03-14
    # frequency: monthly           # inferred from the dates unless declared
    # missing: error               # or drop-leading-trailing, or interpolate
    # convert: {to: quarterly, how: mean}

series:
  demand:
    dataset: board
    column: water_demand_ml
    transform: [log]               # log, diff, log-diff, growth, seasonal-diff, lag; e.g. [log, {lag: 1}]
    label: "Water demand (log megalitres)"
  tariff:
    dataset: board
    column: tariff_index
    transform: [log]
    label: "Tariff index (log)"
  rainfall:
    dataset: board
    column: rainfall_mm
    label: "Rainfall (mm)"

regressions:
  demand_on_tariff:
    formula: "demand ~ tariff"     # a constant is always included
    label: "Demand on the tariff"
  demand_on_rainfall:
    formula: "demand ~ rainfall"
    sample: {start: "2012-01"}     # an optional window, inclusive

settings:
  significance: 0.05               # 0.01, 0.05 or 0.1
  max_order: 2                     # the highest order of integration tested
  lag_criterion: aic               # aic, bic or t-stat
  deterministic: auto              # auto, constant or constant-trend
  seed: 20261202                   # every simulation (fan charts) is seeded from it
"""

README = """\
# {name}

A reportgen project.

- `manifest.yaml` declares the data, the series and the candidate regressions (comments explain each key).
- `data/board_monthly.csv` is invented example data (seed {seed}); replace it with your own.

    reportgen check manifest.yaml          # validate the manifest and the data, no statistics
    reportgen run manifest.yaml --out out  # write out/results.json, out/dossier.html and out/dossier.pdf
    reportgen explain                      # the error codes and what each means
"""


def example_data(periods: int = 180) -> str:
    """The example CSV: monthly from 2010-01, a demand that follows the tariff (cointegrated) and a rainfall noise."""
    rng = np.random.default_rng(EXAMPLE_SEED)
    tariff = 100.0 * np.exp(np.cumsum(0.004 + 0.01 * rng.standard_normal(periods)))
    error = np.zeros(periods)
    for period in range(1, periods):
        error[period] = 0.6 * error[period - 1] + 0.02 * rng.standard_normal()
    demand = np.exp(9.0 - 0.4 * np.log(tariff) + error)
    rainfall = np.clip(60 + 25 * rng.standard_normal(periods), 0, None)
    rows = [f"{2010 + i // 12}-{i % 12 + 1:02d},{demand[i]:.2f},{tariff[i]:.3f},{rainfall[i]:.1f}"
            for i in range(periods)]
    return "month,water_demand_ml,tariff_index,rainfall_mm\n" + "\n".join(rows) + "\n"


def init_project(folder: Path | str) -> tuple[Path, ...]:
    """Create a project in ``folder`` (new or empty); return the files written.

    Raises
    ------
    InitTargetError
        When ``folder`` is a file or a folder that already holds files (nothing is overwritten).
    """
    target = Path(folder)
    if target.exists() and (not target.is_dir() or any(target.iterdir())):
        raise InitTargetError(location=Location(target), path=target,
                              what="a file" if not target.is_dir() else "a folder that already holds files")
    files = {
        target / "manifest.yaml": MANIFEST,
        target / "data" / "board_monthly.csv": example_data(),
        target / "README.md": README.format(name=target.resolve().name, seed=EXAMPLE_SEED),
    }
    for path, text in files.items():
        path.parent.mkdir(parents=True, exist_ok=True)
        temporary = path.with_name(f".{path.name}.{os.getpid()}.partial")
        temporary.write_text(text, encoding="utf-8", newline="\n")
        os.replace(temporary, path)
    return tuple(files)
