"""Charts: one per series and per regression, inline-ready, deterministic, with page-unique ids."""

from __future__ import annotations

import copy
import re
from pathlib import Path
from typing import Any

from reportgen.render.plots import prefix_svg_ids, presentation_attributes, render_plots

ID = re.compile(r'\bid="([^"]+)"')
REFERENCE = re.compile(r'url\(#([^)]+)\)|href="#([^"]+)"')


def test_every_series_and_regression_has_a_chart(document: dict[str, Any], plots: dict[str, str]) -> None:
    expected = {f"series:{name}" for name in document["series"]}
    expected |= {f"fan:{name}" for name, body in document["series"].items() if body["fan_chart"]}
    expected |= {f"regression:{name}" for name in document["regressions"]}
    assert set(plots) == expected
    assert {key for key in plots if key.startswith("fan:")} == {"fan:boxes", "fan:fuel", "fan:wages", "fan:cpi"}


def test_fan_chart_shows_bands_median_and_observed_path(document: dict[str, Any], plots: dict[str, str]) -> None:
    svg = plots["fan:wages"]
    for label in ("5–95% band", "25–75% band", "median path", "observed", "simulated random walks"):
        assert label in svg
    dates = document["series"]["wages"]["fan_chart"]["dates"]
    assert f">{dates[0]}<" in svg
    assert f">{dates[-1]}<" in svg
    assert 'aria-label="Fan chart of series wages' in svg
    # The two bands are filled areas in their own tints (each also in the legend).
    assert svg.count('fill="#d6e2ec"') >= 2
    assert svg.count('fill="#9dbad0"') >= 2


def test_fan_chart_is_left_out_without_usable_bands(document: dict[str, Any]) -> None:
    document["series"]["boxes"]["fan_chart"]["bands"] = {}
    document["series"]["fuel"]["fan_chart"]["bands"]["5%"] = [1.0]  # not the length of the dates
    document["series"]["cpi"]["fan_chart"] = None
    charts = render_plots(document)
    assert "fan:boxes" not in charts
    assert "fan:cpi" not in charts
    assert "fan:fuel" in charts  # the other bands still draw
    assert "5–95% band" not in charts["fan:fuel"]
    assert "25–75% band" in charts["fan:fuel"]


def test_charts_are_inline_svg(plots: dict[str, str]) -> None:
    for key, svg in plots.items():
        assert svg.startswith("<svg "), key
        assert "<?xml" not in svg, key
        assert "<!DOCTYPE" not in svg, key
        assert "<metadata" not in svg, key
        assert "<style" not in svg, key  # matplotlib's page-wide "*{...}" rule is gone
        assert ' style="' not in svg, key  # presentation attributes instead
        assert 'role="img"' in svg, key
        assert "aria-label=" in svg, key


def test_series_chart_shows_period_labels(document: dict[str, Any], plots: dict[str, str]) -> None:
    dates = document["series"]["boxes"]["data"]["dates"]
    svg = plots["series:boxes"]
    assert f">{dates[0]}<" in svg
    assert f">{dates[-1]}<" in svg
    assert "First difference" in svg


def test_regression_chart_has_a_panel_per_fit(plots: dict[str, str]) -> None:
    assert "error-correction model" in plots["regression:boxes_on_fuel"]
    assert "regression in differences" in plots["regression:wages_on_fuel"]
    # The inconclusive regression has only a levels fit: one panel.
    assert "Residuals of the levels regression" in plots["regression:survey_on_boxes"]
    assert "differences" not in plots["regression:survey_on_boxes"]


def test_plots_are_deterministic(document: dict[str, Any], plots: dict[str, str]) -> None:
    assert render_plots(document) == plots


def test_a_chart_does_not_depend_on_the_charts_drawn_before_it(document: dict[str, Any],
                                                                plots: dict[str, str]) -> None:
    for name in ("survey", "cpi", "rate", "wages"):
        alone = dict(document, series={name: document["series"][name]}, regressions={})
        charts = render_plots(alone)
        assert charts[f"series:{name}"] == plots[f"series:{name}"]
        if f"fan:{name}" in plots:
            assert charts[f"fan:{name}"] == plots[f"fan:{name}"]
    for name in ("survey_on_boxes", "boxes_on_fuel"):
        alone = dict(document, series={}, regressions={name: document["regressions"][name]})
        assert render_plots(alone)[f"regression:{name}"] == plots[f"regression:{name}"]


def test_ids_are_unique_across_all_charts_and_references_resolve(plots: dict[str, str]) -> None:
    every_id: list[str] = []
    for key, svg in plots.items():
        ids = ID.findall(svg)
        every_id.extend(ids)
        for match in REFERENCE.finditer(svg):
            target = match.group(1) or match.group(2)
            assert target in ids, f"{key}: #{target} does not resolve inside the chart"
    assert len(every_id) == len(set(every_id))


def test_identical_data_gives_distinct_ids(document: dict[str, Any]) -> None:
    document["series"] = {"boxes": document["series"]["boxes"], "copy": copy.deepcopy(document["series"]["boxes"])}
    document["regressions"] = {}
    charts = render_plots(document)
    assert set(ID.findall(charts["fan:boxes"])).isdisjoint(ID.findall(charts["fan:copy"]))
    first, second = set(ID.findall(charts["series:boxes"])), set(ID.findall(charts["series:copy"]))
    assert first
    assert second
    assert not first & second


def test_missing_values_and_empty_series(document: dict[str, Any]) -> None:
    values = document["series"]["rate"]["data"]["values"]
    values[5] = None
    document["series"]["empty"] = dict(document["series"]["rate"], data={"dates": [], "values": []})
    document["series"]["single"] = dict(document["series"]["rate"], data={"dates": ["2010-01"], "values": [1.0]})
    document["series"]["gap"] = copy.deepcopy(document["series"]["wages"])
    document["series"]["gap"]["data"]["values"][7] = None
    document["series"]["gap"]["fan_chart"]["bands"]["50%"][3] = None
    document["regressions"] = {}
    charts = render_plots(document)
    assert "observed" in charts["fan:gap"]
    assert "no observations" in charts["series:empty"]
    assert "a single observation has no difference" in charts["series:single"]


def test_regression_without_residuals_has_no_chart(document: dict[str, Any]) -> None:
    document["regressions"]["survey_on_boxes"]["levels"] = None
    document["series"] = {}
    assert "regression:survey_on_boxes" not in render_plots(document)


def test_text_from_the_document_is_escaped_and_not_parsed_as_math(document: dict[str, Any]) -> None:
    document["series"] = {"rate": document["series"]["rate"]}
    document["regressions"] = {}
    document["series"]["rate"]["label"] = "<script>alert(1)</script> & $x^2$"
    svg = render_plots(document)["series:rate"]
    assert "<script" not in svg
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; $x^2$" in svg


def test_prefix_svg_ids_renames_references() -> None:
    svg = '<svg><defs><path id="m1"/><clipPath id="p2"/></defs><use xlink:href="#m1"/><g clip-path="url(#p2)"/></svg>'
    renamed = prefix_svg_ids(svg, "fig-a")
    assert 'id="fig-a-m1"' in renamed
    assert 'xlink:href="#fig-a-m1"' in renamed
    assert 'id="fig-a-p2"' in renamed
    assert "url(#fig-a-p2)" in renamed


def test_presentation_attributes_keeps_unknown_styles() -> None:
    assert presentation_attributes('<svg ><path style="fill: none; stroke: #000"/></svg>').count('fill="none"') == 1
    assert 'style="filter: blur(2px)"' in presentation_attributes('<svg ><path style="filter: blur(2px)"/></svg>')


def test_plots_use_the_object_api_only() -> None:
    source = (Path(__file__).resolve().parents[2] / "reportgen" / "render" / "plots.py").read_text(encoding="utf-8")
    assert not re.search(r"import\s+matplotlib\.pyplot|from\s+matplotlib\s+import\s+pyplot", source)
