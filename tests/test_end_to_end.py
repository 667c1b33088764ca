"""The demo manifest end to end: designed orders and verdicts, schema, dossier sections, determinism."""

from __future__ import annotations

import hashlib
import json
import os
import re
import subprocess
import sys
from pathlib import Path
from typing import Any

import jsonschema
import pytest
from bs4 import BeautifulSoup

from reportgen.runner import run

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "manifests" / "demo.yaml"
SCHEMA = ROOT / "reportgen" / "schema" / "results.schema.json"

# The orders the demo's data-generating processes were built to have (manifests/generate_demo.py);
# that a random walk is I(1), its cumulation I(2) and an AR(1) with coefficient 0.5 I(0) is common practice.
DESIGNED_ORDERS = {
    "occupancy": 0, "delays": 0, "boxes": 1, "fuel": 1, "freight": 1, "excursions": 1, "cranes": 1,
    "dredging": 2, "warehouse": 0, "cruise_pax": None, "cruise_revenue": None,
}


def designed_verdicts() -> dict[str, str]:
    """The verdict each demo regression was built for, read from the manifest's comments."""
    verdicts: dict[str, str] = {}
    pending: str | None = None
    for line in DEMO.read_text(encoding="utf-8").splitlines():
        match = re.match(r"\s*# Designed verdict: ([a-z-]+)", line)
        if match:
            pending = match.group(1)
            continue
        name = re.match(r"  ([a-z_]+):\s*$", line)
        if pending and name:
            verdicts[name.group(1)] = pending
            pending = None
    return verdicts


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, Any]]:
    out = tmp_path_factory.mktemp("demo") / "dossier"
    run(DEMO, out, ("html", "pdf"), command=["reportgen", "run", "demo.yaml"])
    return out, json.loads((out / "results.json").read_text(encoding="utf-8"))


def test_every_designed_verdict_is_present() -> None:
    assert set(designed_verdicts().values()) == {"stationary", "cointegrated", "spurious-risk", "unbalanced",
                                                 "inconclusive"}


def test_demo_orders_are_as_designed(demo_run: tuple[Path, dict[str, Any]]) -> None:
    _, document = demo_run
    assert {name: series["order"] for name, series in document["series"].items()} == DESIGNED_ORDERS
    # A trend-stationary series is order 0 with a trend, not order 1 (common practice).
    assert document["series"]["warehouse"]["deterministic"]["0"] == "constant-trend"


def test_demo_verdicts_are_as_designed(demo_run: tuple[Path, dict[str, Any]]) -> None:
    _, document = demo_run
    assert {name: regression["verdict"] for name, regression in document["regressions"].items()} == \
        designed_verdicts()
    for regression in document["regressions"].values():
        assert regression["flagged"] == (regression["verdict"] in {"spurious-risk", "unbalanced", "inconclusive"})


def test_spurious_and_cointegrated_cases_carry_their_alternatives(demo_run: tuple[Path, dict[str, Any]]) -> None:
    _, document = demo_run
    spurious = document["regressions"]["excursions_on_crane_costs"]
    assert spurious["cointegrated"] is False
    assert spurious["differences"]["equation"].startswith("d.excursions ~")
    # Granger and Newbold (1974): the classic spurious look, R-squared above Durbin-Watson.
    assert spurious["r2_exceeds_dw"] is True
    cointegrated = document["regressions"]["freight_on_fuel"]
    assert cointegrated["cointegrated"] is True
    terms = {c["term"]: c for c in cointegrated["error_correction"]["coefficients"]}
    assert terms["ec(-1)"]["estimate"] < 0
    assert cointegrated["adjustment_half_life"] > 0


def test_results_json_follows_its_schema_and_hashes_are_true(demo_run: tuple[Path, dict[str, Any]]) -> None:
    _, document = demo_run
    jsonschema.validate(document, json.loads(SCHEMA.read_text()))
    assert [entry["role"] for entry in document["inputs"]] == ["manifest", "data", "data"]
    for entry in document["inputs"]:
        content = Path(entry["path"]).read_bytes()
        assert entry["sha256"] == hashlib.sha256(content).hexdigest()
        assert entry["bytes"] == len(content)


def test_dossier_has_every_section(demo_run: tuple[Path, dict[str, Any]]) -> None:
    out, document = demo_run
    soup = BeautifulSoup((out / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    text = soup.get_text(" ")
    for name, series in document["series"].items():
        assert series["label"] in text, name
    for regression in document["regressions"].values():
        assert regression["label"] in text
    for caution in document["cautions"]:
        assert caution in text
    for citation in ("Dickey and Fuller (1979)", "Kwiatkowski, Phillips, Schmidt and Shin (1992)",
                     "Engle and Granger (1987)", "MacKinnon"):
        assert citation in text
    for entry in document["inputs"]:
        assert entry["sha256"] in text
    assert soup.find("svg") is not None
    anchors = {element.get("id") for element in soup.find_all(id=True)}
    for link in soup.find_all("a", href=True):
        if link["href"].startswith("#"):
            assert link["href"][1:] in anchors, link["href"]
    pdf = (out / "dossier.pdf").read_bytes()
    assert pdf.startswith(b"%PDF")
    assert pdf.count(b"/Type /Page\n") + pdf.count(b"/Type /Page ") + pdf.count(b"/Type/Page") > 3 or \
        len(pdf) > 50_000


def test_two_runs_give_identical_bytes(tmp_path: Path) -> None:
    env = {**os.environ, "SOURCE_DATE_EPOCH": "1767225600"}
    outputs = []
    for attempt in ("one", "two"):
        folder = tmp_path / attempt
        folder.mkdir()
        # Separate processes, the same command line (the output folder is relative to each working folder).
        subprocess.run([sys.executable, "-m", "reportgen.cli", "run", str(DEMO), "--out", "dossier", "--quiet"],
                       check=True, env=env, cwd=folder)
        outputs.append(folder / "dossier")
    one, two = outputs
    for name in ("results.json", "dossier.html", "dossier.pdf"):
        assert (one / name).read_bytes() == (two / name).read_bytes(), name
    assert json.loads((one / "results.json").read_text())["created"] == "2026-01-01T00:00:00Z"
