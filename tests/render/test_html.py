"""The HTML dossier, checked with selectors rather than against a stored page."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import pytest
from bs4 import BeautifulSoup, Tag

from reportgen.render.environment import TemplateError, verdict_short
from reportgen.render.html import render_html
from reportgen.render.plots import render_plots

INJECTION = "<script>alert(1)</script>"


@pytest.fixture(scope="module")
def soup(html_text: str) -> BeautifulSoup:
    return BeautifulSoup(html_text, "html.parser")


def text_of(element: Tag | None) -> str:
    assert element is not None
    return " ".join(element.get_text(" ").split())


def section_of(soup: BeautifulSoup, identifier: str) -> Tag:
    element = soup.find(id=identifier)
    assert isinstance(element, Tag), f"no element with id {identifier!r}"
    return element


# -- structure ---------------------------------------------------------------------------------

def test_page_is_self_contained(soup: BeautifulSoup, html_text: str) -> None:
    assert html_text.startswith("<!DOCTYPE html>")
    assert soup.find("link") is None
    assert soup.find("script") is None
    assert soup.find("img") is None
    assert soup.find("style") is not None
    for element in soup.find_all(attrs={"src": True}):
        pytest.fail(f"external resource: {element}")
    for element in soup.find_all("a", href=True):
        assert element["href"].startswith("#"), element
    assert "http://" not in html_text.replace("http://www.w3.org/", "")
    assert "https://" not in html_text


def test_title_and_cover(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    assert text_of(soup.title).startswith(document["project"]["title"])
    cover = text_of(section_of(soup, "cover"))
    for key in ("title", "client", "author", "reference"):
        assert document["project"][key] in cover
    for key in ("run_id", "created", "tool_version"):
        assert document[key] in cover


def test_summary_lists_every_regression_with_its_verdict(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    rows = soup.select("table.summary-regressions tbody tr[data-regression]")
    assert [row["data-regression"] for row in rows] == list(document["regressions"])
    for row in rows:
        body = document["regressions"][row["data-regression"]]
        cell = row.select_one("td.verdict-cell")
        assert cell is not None
        assert cell["data-verdict"] == body["verdict"]
        assert verdict_short(body["verdict"]) in text_of(cell)
        assert body["formula"] in text_of(row)
        flagged = "is-flagged" in row.get("class", [])
        assert flagged == body["flagged"]
        # Flagged is said in words, not only in colour.
        assert ("Flagged" in text_of(row)) == body["flagged"]
        for variable in body["orders"]:
            assert variable in text_of(row)
    verdicts = {cell["data-verdict"] for cell in soup.select("table.summary-regressions td.verdict-cell")}
    assert verdicts == {"stationary", "cointegrated", "spurious-risk", "unbalanced", "inconclusive"}


def test_summary_lists_every_series_with_its_order(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    rows = soup.select("table.summary-series tbody tr[data-series]")
    assert [row["data-series"] for row in rows] == list(document["series"])
    orders = {row["data-series"]: text_of(row.find_all("td")[1]) for row in rows}
    assert orders == {"rate": "I(0)", "fuel_growth": "I(0)", "boxes": "I(1)", "fuel": "I(1)", "wages": "I(1)",
                      "cpi": "I(2)", "survey": "undetermined"}
    assert "constant and trend" in text_of(soup.find("tr", attrs={"data-series": "boxes"}))


def test_summary_counts_and_r2_sign(soup: BeautifulSoup) -> None:
    summary = text_of(section_of(soup, "summary"))
    assert "5 regressions assessed" in summary
    assert "3 flagged for attention" in summary
    row = soup.find("tr", attrs={"data-regression": "wages_on_fuel"})
    assert "R² above DW" in text_of(row)
    assert "0.874" in text_of(row)


def test_cautions_near_the_summary_and_in_an_appendix(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    summary = text_of(section_of(soup, "summary"))
    appendix = text_of(section_of(soup, "cautions"))
    assert document["cautions"]
    for caution in document["cautions"]:
        assert caution in summary
        assert caution in appendix
    assert "do not replace it" in summary


def test_every_series_has_a_section(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    sections = soup.select("article.series")
    assert len(sections) == len(document["series"])
    for section, body in zip(sections, document["series"].values(), strict=True):
        text = text_of(section)
        assert body["label"] in text_of(section.find("h3"))
        assert body["lineage"] in text
        assert body["dataset"] in text
        assert body["column"] in text
        assert f"{body['nobs']} observations" in text
        table = section.select_one("table.tests")
        if body["tests"]:
            assert table is not None
            assert len(table.select("tbody tr")) == len(body["tests"])
            assert section.select_one("figure svg") is not None
        for sentence in body["trail"]:
            assert sentence in text
        for note in body["notes"]:
            assert note in text
        for reason in body["deterministic_reasons"].values():
            assert reason in text
        if body["order"] is None:
            assert body["reason"] in text


def test_test_table_shows_bounds_critical_values_and_lag_rules(soup: BeautifulSoup) -> None:
    section = section_of(soup, "series-boxes")
    rows = section.select("table.tests tbody tr")
    cells = [text_of(cell) for cell in rows[1].find_all(["th", "td"])]  # KPSS at level 0, p below the table
    assert cells[0].startswith("KPSS")
    assert "< 0.01" in cells
    assert "0.739" in cells
    assert "0.463" in cells
    assert "0.347" in cells
    assert "Hobijn" in cells[8]
    assert "rejects stationarity at 5%" in cells[-1]
    first = [text_of(cell) for cell in rows[0].find_all(["th", "td"])]
    assert first[3] == "-2.101"
    assert first[4] == "0.539"
    assert "does not reject unit root at 5%" in first[-1]
    assert "MacKinnon (2010)" in text_of(section)


def test_every_regression_has_a_section(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    sections = soup.select("article.regression")
    assert len(sections) == len(document["regressions"])
    for section, body in zip(sections, document["regressions"].values(), strict=True):
        text = text_of(section)
        assert body["formula"] in text
        assert verdict_short(body["verdict"]) in text
        assert ("is-flagged" in section["class"]) == body["flagged"]
        for sentence in body["trail"]:
            assert sentence in text
        fits = [key for key in ("levels", "long_run", "differences", "error_correction") if body[key]]
        assert len(section.select("div.fit")) == len(fits)
        for key in fits:
            assert body[key]["equation"] in text
        assert bool(section.select_one("table.cointegration")) == bool(body["cointegration"])
        assert section.select_one("figure svg") is not None


def test_regression_details(soup: BeautifulSoup) -> None:
    ecm = text_of(section_of(soup, "regression-boxes-on-fuel"))
    assert "Error-correction model" in ecm
    assert "Long-run relation" in ecm
    assert "3.35 periods" in ecm
    assert "rejects no cointegration at 5%" in ecm
    assert "ec(-1)" in ecm
    assert "-0.1870" in ecm
    assert "Ljung-Box (Q, 12 lags)" in ecm
    assert "HAC (Newey-West" in ecm
    spurious = text_of(section_of(soup, "regression-wages-on-fuel"))
    assert "Re-estimated in differences" in spurious
    assert "Flagged" in spurious
    assert "Needs attention" in spurious
    assert "not applicable" in spurious  # no half-life without an error-correction model


def test_methods_appendix(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    methods = text_of(section_of(soup, "methods"))
    for key in ("order_rule", "deterministic_rule", "verdict_rule", "references"):
        for sentence in document["methods"][key]:
            assert sentence in methods
    for test in document["methods"]["tests"]:
        assert test["name"] in methods
        assert test["description"] in methods
    assert "Significance" in methods
    assert "0.05" in methods


def test_methods_appendix_renders_what_is_present(document: dict[str, Any], plots: dict[str, str]) -> None:
    document["methods"] = {"order_rule": ["Only this rule."], "extra_notes": {"source": "tests"}}
    methods = text_of(BeautifulSoup(render_html(document, plots), "html.parser").find(id="methods"))
    assert "Only this rule." in methods
    assert "Extra notes" in methods
    assert "References" not in methods
    document["methods"] = {}
    methods = text_of(BeautifulSoup(render_html(document, plots), "html.parser").find(id="methods"))
    assert "did not record" in methods


def test_provenance_appendix(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    provenance = text_of(section_of(soup, "provenance"))
    for item in document["inputs"]:
        assert item["sha256"] in provenance
        assert item["relative_path"] in provenance
        assert f"{item['bytes']:,} bytes" in provenance
    for name, dataset in document["datasets"].items():
        assert name in provenance
        assert dataset["table_sha256"] in provenance
    environment = document["environment"]
    assert environment["python"] in provenance
    assert environment["platform"] in provenance
    assert environment["command"] in provenance
    for package, version in environment["packages"].items():
        assert package in provenance
        assert version in provenance
    assert environment["git"]["commit"] in provenance


def test_environment_is_rendered_generically(document: dict[str, Any], plots: dict[str, str]) -> None:
    document["environment"] = {"python": "3.12.1", "git": None, "threads": 4, "flags": ["a", "b"],
                               "nested": {"deep": {"deeper": True}}}
    provenance = text_of(BeautifulSoup(render_html(document, plots), "html.parser").find(id="provenance"))
    assert "3.12.1" in provenance
    assert "not recorded" in provenance
    assert "Threads 4" in provenance
    assert "deeper yes" in provenance


# -- links and ids -----------------------------------------------------------------------------

def test_every_in_page_link_resolves(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    ids = {element["id"] for element in soup.find_all(id=True)}
    links = [element["href"] for element in soup.find_all(href=True)]
    links += [element["xlink:href"] for element in soup.find_all(attrs={"xlink:href": True})]
    assert links
    for link in links:
        assert link.startswith("#"), link
        assert link[1:] in ids, link
    contents = section_of(soup, "contents")
    targets = {element["href"][1:] for element in contents.find_all("a")}
    assert len(targets) == 2 + len(document["series"]) + 1 + len(document["regressions"]) + 3


def test_ids_are_unique_on_the_page(html_text: str) -> None:
    ids = re.findall(r'\bid="([^"]+)"', html_text)
    duplicates = {identifier for identifier in ids if ids.count(identifier) > 1}
    assert not duplicates


def test_anchor_ids_are_safe_and_do_not_collide(document: dict[str, Any]) -> None:
    document["series"]["Boxes!"] = document["series"]["boxes"]  # slugs to the same "series-boxes"
    document["series"]["part"] = document["series"]["rate"]
    html = render_html(document, render_plots(document))
    soup = BeautifulSoup(html, "html.parser")
    ids = [element["id"] for element in soup.find_all(id=True)]
    assert len(ids) == len(set(ids))
    assert "series-boxes" in ids
    assert "series-boxes-2" in ids
    for element in soup.find_all("a", href=True):
        target = element["href"][1:]
        assert target in ids
        assert re.fullmatch(r"[a-z0-9]+(-[a-z0-9]+)*", target), target


# -- safety and reproducibility ----------------------------------------------------------------

def test_document_strings_are_escaped(document: dict[str, Any]) -> None:
    document["project"]["title"] = INJECTION
    document["series"]["rate"]["label"] = INJECTION
    document["series"]["rate"]["trail"].append(INJECTION)
    document["regressions"]["boxes_on_fuel"]["label"] = INJECTION
    document["regressions"]["boxes_on_fuel"]["formula"] = f"boxes ~ fuel {INJECTION}"
    document["environment"]["command"] = INJECTION
    document["environment"]["packages"][INJECTION] = INJECTION
    document["cautions"].append(INJECTION)
    html = render_html(document, render_plots(document))
    soup = BeautifulSoup(html, "html.parser")
    assert soup.find("script") is None
    assert "<script" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert INJECTION in text_of(soup.select_one("article.series h3"))
    assert INJECTION in text_of(soup.find("tr", attrs={"data-regression": "boxes_on_fuel"}))
    assert INJECTION in text_of(soup.title)


def test_attribute_values_are_escaped(document: dict[str, Any]) -> None:
    name = 'odd" onmouseover="alert(1)'
    document["regressions"][name] = document["regressions"].pop("rate_on_boxes")
    html = render_html(document, {})
    soup = BeautifulSoup(html, "html.parser")
    assert all("onmouseover" not in element.attrs for element in soup.find_all(True))
    assert soup.find("tr", attrs={"data-regression": name}) is not None


def test_unsafe_chart_is_refused(document: dict[str, Any]) -> None:
    with pytest.raises(ValueError, match="not a plain inline SVG"):
        render_html(document, {"series:rate": "<svg><script>alert(1)</script></svg>"})


def test_rendering_twice_gives_identical_bytes(document: dict[str, Any], plots: dict[str, str],
                                                html_text: str) -> None:
    assert render_html(document, plots) == html_text
    assert render_html(document, render_plots(document)).encode() == html_text.encode()


def test_missing_charts_are_left_out(document: dict[str, Any]) -> None:
    soup = BeautifulSoup(render_html(document, {}), "html.parser")
    assert soup.find("svg") is None
    assert len(soup.select("article.series")) == len(document["series"])


def test_empty_run(document: dict[str, Any]) -> None:
    document["series"] = {}
    document["regressions"] = {}
    soup = BeautifulSoup(render_html(document, {}), "html.parser")
    assert "No regressions in this run." in text_of(soup.find(id="summary"))
    assert "declares no series" in text_of(soup.find(id="all-series"))


# -- user templates ----------------------------------------------------------------------------

def test_user_templates_are_searched_first(tmp_path: Path, document: dict[str, Any]) -> None:
    (tmp_path / "partials").mkdir()
    (tmp_path / "partials" / "cover.html.j2").write_text(
        '<header id="{{ ids.cover }}"><h1>Client edition</h1>{% include "default/partials/cover.html.j2" %}'
        "</header>\n", encoding="utf-8")
    (tmp_path / "style.css").write_text("body { color: #123456; }\n", encoding="utf-8")
    html = render_html(document, {}, [tmp_path])
    assert "Client edition" in html
    assert document["project"]["client"] in html  # the packaged cover, reached through default/
    assert "#123456" in html
    assert "--flag-bg" not in html


def test_user_dossier_can_extend_base_blocks(tmp_path: Path, document: dict[str, Any]) -> None:
    (tmp_path / "dossier.html.j2").write_text(
        '{% extends "base.html.j2" %}{% block footer %}<footer>Internal use</footer>{% endblock %}\n',
        encoding="utf-8")
    html = render_html(document, {}, [tmp_path])
    assert "<footer>Internal use</footer>" in html
    assert "Written by reportgen" not in html


def test_user_template_errors_are_reported_with_a_location(tmp_path: Path, document: dict[str, Any]) -> None:
    (tmp_path / "partials").mkdir()
    bad = tmp_path / "partials" / "cautions.html.j2"
    bad.write_text("<section>\n{{ no_such_name }}\n</section>\n", encoding="utf-8")
    with pytest.raises(TemplateError) as caught:
        render_html(document, {}, [tmp_path])
    assert caught.value.location is not None
    assert caught.value.location.line == 2
    bad.write_text("{% if %}\n", encoding="utf-8")
    with pytest.raises(TemplateError, match="syntax"):
        render_html(document, {}, [tmp_path])


def test_missing_template_folder_is_an_error(tmp_path: Path, document: dict[str, Any]) -> None:
    with pytest.raises(TemplateError, match="does not exist"):
        render_html(document, {}, [tmp_path / "nowhere"])
