"""The dossier at scale: charts drawn fast on reused figures yet byte-identical, long series drawn
as envelopes, and a page of hundreds of series that keeps the summary, the index and every
series' key facts."""

from __future__ import annotations

import concurrent.futures
import copy
import gc
import hashlib
import io
import json
import math
import multiprocessing
import os
import re
import subprocess
import sys
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from typing import Any

import matplotlib
import pytest
from bs4 import BeautifulSoup, Tag

from reportgen.render.environment import DISPLAY_COLUMNS, DISPLAY_POINTS, fmt_order
from reportgen.render.html import SUMMARY_ROWS, render_html
from reportgen.render.plots import RC_PARAMS, ChartWriter, chart_jobs, draw_chart, figure_svg, render_plots

ROOT = Path(__file__).resolve().parents[2]


def digests(charts: dict[str, str]) -> dict[str, str]:
    return {key: hashlib.sha256(svg.encode("utf-8")).hexdigest() for key, svg in charts.items()}


# -- charts ------------------------------------------------------------------------------------

def test_charts_are_identical_in_a_new_process(plots: dict[str, str]) -> None:
    script = ("import hashlib, json\n"
              "from tests.render.conftest import build_document\n"
              "from reportgen.render.plots import render_plots\n"
              "charts = render_plots(build_document())\n"
              "print(json.dumps({k: hashlib.sha256(v.encode('utf-8')).hexdigest() for k, v in charts.items()}))\n")
    environment = {**os.environ, "PYTHONPATH": os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")])}
    finished = subprocess.run([sys.executable, "-c", script], cwd=ROOT, env=environment, check=True,
                              capture_output=True, text=True)
    assert json.loads(finished.stdout) == digests(plots)


def test_reused_figures_draw_what_new_figures_draw(document: dict[str, Any], plots: dict[str, str]) -> None:
    # Every chart drawn alone by a new writer (new figures, new artists) is the chart drawn in turn
    # on the figures the other charts used, byte for byte.
    for kind, name, body, prefix in chart_jobs(document):
        fresh = draw_chart((kind, name, body, prefix), ChartWriter())
        assert fresh == plots.get(f"{kind}:{name}"), f"{kind}:{name}"


def test_measuring_renderer_writes_what_savefig_writes(document: dict[str, Any]) -> None:
    writer = ChartWriter()
    with matplotlib.rc_context(RC_PARAMS):
        for draw, body in ((writer.series_chart, document["series"]["wages"]),
                           (writer.fan_chart, document["series"]["wages"]),
                           (writer.regression_chart, document["regressions"]["boxes_on_fuel"])):
            ours = draw("wages", body)
            assert writer.figure is not None
            buffer = io.BytesIO()
            writer.figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
            assert ours == buffer.getvalue().decode("utf-8")
            assert figure_svg(writer.figure) == ours


class _Backwards:
    """An executor that evaluates its items last to first and returns them in order."""

    def map(self, function: Callable[[Any], Any], items: Iterable[Any]) -> Iterator[Any]:
        listed = list(items)
        results = [function(item) for item in reversed(listed)]
        return iter(list(reversed(results)))


def test_charts_through_an_executor_are_identical(document: dict[str, Any], plots: dict[str, str]) -> None:
    assert render_plots(document, executor=_Backwards()) == plots
    context = multiprocessing.get_context("spawn")
    with concurrent.futures.ProcessPoolExecutor(max_workers=2, mp_context=context) as pool:
        assert digests(render_plots(document, executor=pool)) == digests(plots)


def test_memory_stays_flat_over_many_charts(document: dict[str, Any]) -> None:
    # Counting live objects rather than tracing allocations keeps the test fast; bench/dossier.py
    # --memory-charts traces the bytes over thousands of charts.
    body = document["series"]["wages"]
    values = body["data"]["values"]

    def batch(start: int, count: int) -> None:
        series = {}
        for index in range(start, start + count):
            shifted = [value + math.sin(index + position) for position, value in enumerate(values)]
            series[f"m{index}"] = dict(body, label=f"Invented series {index}", data=dict(body["data"], values=shifted))
        render_plots({"series": series, "regressions": {}})

    batch(0, 20)
    gc.collect()
    before = len(gc.get_objects())
    batch(20, 80)
    gc.collect()
    after = len(gc.get_objects())
    # 160 charts more keep nothing but the remembered size of each new title (a few objects each).
    assert after - before < 1_000


def test_long_series_are_drawn_as_envelopes(document: dict[str, Any]) -> None:
    body = document["series"]["rate"]
    count = DISPLAY_POINTS * 2 + 1
    dates = [f"{2000 + index // 365:04d}-{index % 365 + 1:03d}" for index in range(count)]
    values = [math.sin(index / 50) + (3.0 if index == 7777 else 0.0) for index in range(count)]
    long = dict(body, data={"dates": dates, "values": values}, fan_chart=None)
    svg = render_plots({"series": {"long": long}, "regressions": {}})["series:long"]
    lines = [match.group(1) for match in re.finditer(r'<path d="([^"]*)"[^>]*stroke="#1b4965"', svg)]
    assert len(lines) == 1
    points = lines[0].count("L") + 1
    assert DISPLAY_COLUMNS <= points <= 2 * DISPLAY_COLUMNS
    document["series"] = {"long": long}
    document["regressions"] = {}
    soup = BeautifulSoup(render_html(document, {"series:long": svg}), "html.parser")
    caption = " ".join(soup.select_one("#series-long figure figcaption").get_text(" ").split())
    assert f"With {count:,} observations" in caption
    assert "results.json holds every value" in caption
    short = BeautifulSoup(render_html(document | {"series": {"rate": body}}, {}), "html.parser")
    assert "groups of consecutive periods" not in short.get_text(" ")


# -- a page of many series ---------------------------------------------------------------------

def many_series(document: dict[str, Any], count: int = 300, regressions: int = 30) -> dict[str, Any]:
    """``count`` invented series cloned from the fixture's (each with its own name and label)."""
    sources = list(document["series"].values())
    series = {}
    for index in range(count):
        body = copy.deepcopy(sources[index % len(sources)])
        body["label"] = f"Invented quay statistic {index:03d}"
        series[f"q{index:03d}"] = body
    models = list(document["regressions"].values())
    fits = {}
    for index in range(regressions):
        body = copy.deepcopy(models[index % len(models)])
        body["label"] = f"Invented relation {index:02d}"
        fits[f"r{index:02d}"] = body
    return dict(document, series=series, regressions=fits)


@pytest.fixture(scope="module")
def big(document_master: dict[str, Any]) -> tuple[dict[str, Any], BeautifulSoup]:
    big_document = many_series(document_master)
    return big_document, BeautifulSoup(render_html(big_document, {}), "html.parser")


def _text(element: Tag | None) -> str:
    assert element is not None
    return " ".join(element.get_text(" ").split())


def test_summary_comes_first_and_lists_every_series_in_short_tables(big: tuple[dict[str, Any], BeautifulSoup]) -> None:
    document, soup = big
    order = [element["id"] for element in soup.select("main > section, main > nav")]
    assert order[:2] == ["summary", "contents"]
    tables = soup.select("#summary table.summary-series")
    assert len(tables) == math.ceil(len(document["series"]) / SUMMARY_ROWS)
    assert all(len(table.select("tbody tr[data-series]")) <= SUMMARY_ROWS for table in tables)
    rows = soup.select("#summary table.summary-series tbody tr[data-series]")
    assert [row["data-series"] for row in rows] == list(document["series"])
    for row in rows:
        body = document["series"][row["data-series"]]
        cells = row.find_all("td")
        assert _text(cells[1]) == ("undetermined" if body["order"] is None else fmt_order(body["order"]))
        link = row.select_one("a")
        assert link is not None
        assert link["href"] == f"#series-{row['data-series']}"
    assert [row["data-regression"] for row in soup.select("#summary tr[data-regression]")] == \
        list(document["regressions"])


def test_index_links_every_series_and_regression(big: tuple[dict[str, Any], BeautifulSoup]) -> None:
    document, soup = big
    targets = [link["href"] for link in soup.select("#contents a")]
    for name in document["series"]:
        assert f"#series-{name}" in targets
    for name in document["regressions"]:
        assert f"#regression-{name}" in targets
    ids = {element["id"] for element in soup.find_all(id=True)}
    assert all(target[1:] in ids for target in targets)


def test_every_series_section_keeps_its_key_facts(big: tuple[dict[str, Any], BeautifulSoup]) -> None:
    document, soup = big
    sections = soup.select("article.series")
    assert len(sections) == len(document["series"])
    for section, (name, body) in zip(sections, document["series"].items(), strict=True):
        assert section["id"] == f"series-{name}"
        assert body["label"] in _text(section.find("h3"))
        conclusion = _text(section.select_one("p.conclusion"))
        facts = _text(section.select_one("p.series-facts"))
        for fact in (body["lineage"], body["dataset"], body["column"], f"{body['nobs']} observations"):
            assert fact in facts, (name, fact)
        folded = section.select_one("details.more")
        assert folded is not None
        if body["order"] is None:
            assert "undetermined" in conclusion
            assert body["reason"] in conclusion
        else:
            assert f"Order of integration: {fmt_order(body['order'])}" in conclusion
        if body["tests"]:
            key = section.select_one("table.key-tests")
            assert key is not None
            levels = {int(row["data-level"]) for row in key.select("tr.key-row")}
            expected = {body["order"] - 1, body["order"]} if body["order"] else {0}
            if body["order"] is None:
                expected = {max(test["level"] for test in body["tests"])}
            assert levels == expected, name
            assert folded.select_one("table.tests") is not None
        for sentence in body["trail"]:
            assert sentence in _text(folded)


def test_key_table_shows_the_voting_tests_of_the_decisive_levels(soup_of: Callable[..., BeautifulSoup],
                                                                  document: dict[str, Any]) -> None:
    soup = soup_of(document)
    table = soup.select_one("#series-boxes table.key-tests")
    assert table is not None
    assert [_text(cell) for cell in table.select("thead th")][1:] == ["ADF", "PP", "DF-GLS", "KPSS"]
    tests = {(test["level"], test["test"]): test for test in document["series"]["boxes"]["tests"]
             if not test["auxiliary"]}
    for row in table.select("tr.key-row"):
        for cell in row.select("td.key-cell"):
            test = tests[(int(row["data-level"]), cell["data-test"])]
            assert ("rejects" in cell["class"]) == bool(test["rejects"])
            assert _text(cell).endswith("*") == bool(test["rejects"])
    decision = _text(soup.select_one("#series-boxes .decision"))
    assert decision.startswith("The series as analysed is not stationary by the decision rule; the first difference is")


@pytest.fixture
def soup_of() -> Callable[..., BeautifulSoup]:
    def parse(document: dict[str, Any], plots: dict[str, str] | None = None) -> BeautifulSoup:
        return BeautifulSoup(render_html(document, plots or {}), "html.parser")
    return parse
