"""The HTML dossier, checked with selectors rather than against a stored page."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import pytest
from bs4 import BeautifulSoup, Tag

from reportgen.errors import TemplateFolderMissingError, TemplateSyntaxError, TemplateUnsafeError
from reportgen.render.environment import verdict_short
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
            decisive = [test for test in body["tests"] if not test["auxiliary"]]
            assert len(table.select("tbody tr.test-row")) == len(decisive)
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
    rows = section.select("table.tests tbody tr.test-row")
    kpss = next(row for row in rows if row["data-test"] == "KPSS" and row["data-level"] == "0")
    cells = [text_of(cell) for cell in kpss.find_all(["th", "td"])]
    assert cells[0] == "KPSS"
    assert any(cell.startswith("< 0.01") for cell in cells)
    assert "0.739" in cells
    assert "0.463" in cells
    assert any(cell.startswith("0.347") for cell in cells)
    assert cells[-1] == "rejects stationarity"
    adf = next(row for row in rows if row["data-test"] == "ADF" and "is-auxiliary" not in row["class"])
    first = [text_of(cell) for cell in adf.find_all(["th", "td"])]
    assert first[2] == "-1.620"
    assert first[3].startswith("0.471")
    assert first[-1] == "does not reject unit root"
    text = text_of(section)
    assert "decisions at 5%" in text
    assert "MacKinnon (2010)" in text
    assert "Hobijn et al. (2004) automatic" in text


def test_battery_rows_are_grouped_by_level_in_run_order(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    tests = document["series"]["cpi"]["tests"]
    table = section_of(soup, "series-cpi").select_one("table.tests")
    assert table is not None
    groups = table.select("tbody.level-group")
    assert [text_of(group.select_one("tr.level-heading")).split(":")[0].strip() for group in groups] == [
        "As analysed", "First difference", "Second difference"]
    rows = table.select("tr.test-row")
    assert [(row["data-test"], row["data-level"]) for row in rows] == [
        (test["test"], str(test["level"])) for test in tests if not test["auxiliary"]]
    assert {test["test"] for test in tests} == {"ADF", "PP", "DF-GLS", "KPSS", "ZA"}


def test_battery_shows_bandwidth_break_date_sources_and_criteria(soup: BeautifulSoup,
                                                                 document: dict[str, Any]) -> None:
    section = section_of(soup, "series-boxes")
    table = section.select_one("table.tests")
    assert table is not None
    headers = [text_of(cell) for cell in table.select("thead th")]
    assert "Bandwidth" in [header.replace("\xad", "") for header in headers]
    assert "Break" in headers
    footnotes = text_of(section.select_one("ul.footnotes"))
    za = next(test for test in document["series"]["boxes"]["tests"] if test["test"] == "ZA")
    row = table.select_one('tr.test-row[data-test="ZA"]')
    assert row is not None
    break_cell = row.select_one("td.break-date")
    assert break_cell is not None
    assert text_of(break_cell).startswith(za["break_date"])
    label = text_of(break_cell.select_one("sup.fn"))
    # The break-date convention, from the test's notes, is the footnote the date points to.
    assert f"{label} Note: {za['notes'][0]}" in footnotes
    assert f"p-value: {za['pvalue_source']}" in footnotes
    pp = next(test for test in document["series"]["boxes"]["tests"] if test["test"] == "PP")
    assert f"Bandwidth: {pp['bandwidth_rule']}" in footnotes
    assert "AIC" in text_of(table.select_one('tr.test-row[data-test="ADF"]'))
    assert "t-stat" in text_of(row)
    # Each distinct text is one footnote, however many tests share it.
    items = [text_of(item) for item in section.select("ul.footnotes li")]
    assert len(items) == len(set(items))
    assert sum("MacKinnon (1994) response surface" in item for item in items) == 1


def test_auxiliary_tests_are_counted_not_listed(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    section = section_of(soup, "series-boxes")
    assert not section.select("tr.test-row.is-auxiliary")
    expected = [test for test in document["series"]["boxes"]["tests"] if test["auxiliary"]]
    assert len(expected) == 1
    assert "1 further auxiliary test runs, made only for the robustness grid" in text_of(section)
    plain = section_of(soup, "series-rate")
    assert "further auxiliary" not in text_of(plain)


def test_robustness_grid_has_every_cell_and_marks_differences(soup: BeautifulSoup,
                                                              document: dict[str, Any]) -> None:
    section = section_of(soup, "series-wages")
    table = section.select_one("table.grid")
    assert table is not None
    rows = table.select("tbody tr.grid-row")
    assert [row["data-test"] for row in rows] == ["ADF", "PP", "DF-GLS", "KPSS", "combined"]
    cells = table.select("td.grid-cell")
    assert len(cells) == 30
    assert all(cell.get_text().strip().rstrip("†") in ("I(0)", "I(1)", "undetermined") for cell in cells)
    headers = [text_of(cell) for cell in table.select("thead tr")[1].find_all("th")]
    assert headers == ["AIC", "BIC", "t-stat"] * 2
    assert [text_of(cell) for cell in table.select("th.grid-terms")] == ["Constant", "Constant and trend"]
    reported = document["series"]["wages"]["order"]
    expected = sum(cell["order"] != reported for cell in document["series"]["wages"]["grid"])
    differing = table.select("td.grid-cell.differs")
    assert len(differing) == expected == 3
    for cell in differing:
        assert cell.select_one(".differs-mark") is not None
        assert cell.get_text().strip().endswith("†")  # a marker, not colour alone
    for cell in cells:
        if "differs" not in cell["class"]:
            assert "†" not in text_of(cell)
    dfgls = table.select_one('tr[data-test="DF-GLS"]')
    assert dfgls is not None
    assert [cell.get_text().strip() for cell in dfgls.select("td")] == [
        "I(1)", "I(0)†", "I(0)†", "I(1)", "I(1)", "I(1)"]
    combined = table.select_one('tr[data-test="combined"]')
    assert combined is not None
    assert "undetermined†" in [cell.get_text().strip() for cell in combined.select("td")]
    legend = text_of(section.select_one(".grid-legend"))
    assert "† differs from the reported order (I(1))" in legend


def test_robustness_grid_tolerates_gaps_and_absence(document: dict[str, Any]) -> None:
    document["series"]["boxes"]["grid"] = document["series"]["boxes"]["grid"][:-1]
    document["series"]["fuel"]["grid"] = []
    del document["series"]["cpi"]["grid"]
    soup = BeautifulSoup(render_html(document, {}), "html.parser")
    boxes = section_of(soup, "series-boxes")
    assert len(boxes.select("table.grid td.grid-cell")) == 30
    assert len(boxes.select("table.grid td.not-run")) == 1
    assert "Not run" in text_of(boxes.select_one(".grid-legend"))
    assert section_of(soup, "series-fuel").select_one("table.grid") is None
    assert section_of(soup, "series-cpi").select_one("table.grid") is None


def test_fragile_series_has_a_badge_with_its_reason(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    wages = section_of(soup, "series-wages")
    note = wages.select_one(".fragile-note")
    assert note is not None
    assert text_of(note.select_one(".fragile-badge")) == "Fragile"
    assert text_of(note.select_one(".fragile-reason")) == document["series"]["wages"]["fragile_reason"]
    assert "is-fragile" in wages["class"]
    for name, body in document["series"].items():
        if not body["fragile"]:
            assert section_of(soup, f"series-{name}".replace("_", "-")).select_one(".fragile-badge") is None


def test_summary_marks_fragile_series_and_regressions(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    for name, body in document["series"].items():
        row = soup.find("tr", attrs={"data-series": name})
        cell = row.select_one("td.robustness-cell")
        assert cell is not None
        assert (cell.select_one(".fragile-badge") is not None) == body["fragile"], name
        if not body["fragile"]:
            assert text_of(cell) == ("stable across the grid" if body["grid"] else "not assessed")
    for name, body in document["regressions"].items():
        row = soup.find("tr", attrs={"data-regression": name})
        assert ("Fragile" in text_of(row.select_one("td.attention-cell"))) == body["fragile"], name
    assert sum(body["fragile"] for body in document["regressions"].values()) == 1
    contents = text_of(section_of(soup, "contents"))
    assert "I(1), fragile" in contents
    assert "spurious risk, fragile" in contents


def test_fragile_reason_is_escaped(document: dict[str, Any]) -> None:
    document["series"]["wages"]["fragile_reason"] = INJECTION
    document["regressions"]["wages_on_fuel"]["fragile_reason"] = INJECTION
    html = render_html(document, {})
    soup = BeautifulSoup(html, "html.parser")
    assert soup.find("script") is None
    assert "<script" not in html
    assert html.count("&lt;script&gt;alert(1)&lt;/script&gt;") == 2
    assert text_of(section_of(soup, "series-wages").select_one(".fragile-reason")) == INJECTION


def test_fan_chart_for_integrated_series_only(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    for name, body in document["series"].items():
        section = section_of(soup, f"series-{name}".replace("_", "-"))
        figure = section.select_one("figure.fan-figure")
        integrated = body["order"] is not None and body["order"] >= 1
        assert (body["fan_chart"] is not None) == integrated, name
        assert (figure is not None) == integrated, name
        if integrated:
            assert figure.select_one("svg") is not None
            caption = text_of(figure.find("figcaption"))
            assert body["fan_chart"]["description"] in caption
            assert "Share of observations outside the 5–95% band" in caption
    caption = text_of(section_of(soup, "series-wages").select_one("figure.fan-figure figcaption"))
    assert "18.3%" in caption
    assert "seed 20240601" in caption


def test_fan_facts_without_the_chart(document: dict[str, Any]) -> None:
    soup = BeautifulSoup(render_html(document, {}), "html.parser")
    facts = section_of(soup, "series-boxes").select_one("p.fan-facts")
    assert facts is not None
    assert "4.2%" in text_of(facts)


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
        assert bool(section.select_one("table.cointegration")) == bool(body["cointegration"] or body["engle_granger"])
        assert bool(section.select_one("table.johansen")) == bool(body["johansen"])
        assert bool(section.select_one("div.bounds-test")) == bool(body["bounds_test"])
        assert section.select_one("figure svg") is not None


def test_regression_details(soup: BeautifulSoup) -> None:
    ecm = text_of(section_of(soup, "regression-boxes-on-fuel"))
    assert "Error-correction model" in ecm
    assert "Long-run relation (dynamic OLS)" in ecm
    assert "3.35 periods" in ecm
    assert "rejects no cointegration" in ecm
    assert "decisions at 5%" in ecm
    assert "ec(-1)" in ecm
    assert "-0.1870" in ecm
    assert "Ljung-Box (Q, 12 lags)" in ecm
    assert "HAC (Newey-West" in ecm
    spurious = text_of(section_of(soup, "regression-wages-on-fuel"))
    assert "Re-estimated in differences" in spurious
    assert "Flagged" in spurious
    assert "Needs attention" in spurious
    assert "not applicable" in spurious  # no half-life without an error-correction model


def test_fits_come_in_pairs_long_run_beside_error_correction(soup: BeautifulSoup) -> None:
    section = section_of(soup, "regression-boxes-on-fuel")
    rows = [[fit["class"][1] for fit in row.select("div.fit")] for row in section.select("div.fits")]
    assert rows == [["fit-levels"], ["fit-long-run-dynamic-ols", "fit-error-correction"]]
    rows = [[fit["class"][1] for fit in row.select("div.fit")]
            for row in section_of(soup, "regression-wages-on-fuel").select("div.fits")]
    assert rows == [["fit-levels", "fit-differences"]]


def test_speed_of_adjustment_and_half_life(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    facts = text_of(section_of(soup, "regression-boxes-on-fuel").select_one("table.facts"))
    assert "Speed of adjustment -0.1870" in facts
    assert "Half-life of adjustment 3.35 periods" in facts
    assert "Speed of adjustment" not in text_of(section_of(soup, "regression-wages-on-fuel").select_one("table.facts"))


def test_fits_show_their_hac_details(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    fit = section_of(soup, "regression-boxes-on-fuel").select_one("div.fit-error-correction")
    assert fit is not None
    hac = text_of(fit.select_one("tr.hac"))
    body = document["regressions"]["boxes_on_fuel"]["error_correction"]
    assert f"{body['hac_kernel']} kernel, bandwidth {body['hac_bandwidth']}" in hac
    assert body["hac_bandwidth_rule"] in hac
    assert "small-sample correction: yes" in hac
    classical = section_of(soup, "regression-survey-on-boxes").select_one("div.fit-levels")
    assert classical is not None
    assert classical.select_one("tr.hac") is None


def test_diagnostics_list_every_check(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    table = section_of(soup, "regression-rate-on-fuel-growth").select_one("table.diagnostics")
    diagnostics = document["regressions"]["rate_on_fuel_growth"]["levels"]["diagnostics"]
    names = [text_of(row.select_one(".diagnostic-name")) for row in table.select("tbody tr")]
    assert names == [item["name"] for item in diagnostics]
    assert [text_of(row.select_one(".diagnostic-null")) for row in table.select("tbody tr")] == [
        item["null_hypothesis"] for item in diagnostics]
    assert "Breusch-Pagan" in names
    assert any(name.startswith("RESET") for name in names)


def test_engle_granger_under_every_normalisation(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    for name, anchor in (("boxes_on_fuel", "regression-boxes-on-fuel"), ("wages_on_fuel", "regression-wages-on-fuel")):
        body = document["regressions"][name]
        table = section_of(soup, anchor).select_one("table.engle-granger")
        assert table is not None
        rows = table.select("tbody tr.eg-row")
        variables = body["engle_granger"][0]["variables"]
        assert len(rows) == len(variables) == len(body["engle_granger"])
        # The manifest's normalisation first and marked, the others in the document's order.
        assert rows[0]["data-dependent"] == body["dependent"]
        assert "is-manifest" in rows[0]["class"]
        assert "manifest's equation" in text_of(rows[0])
        assert all("is-manifest" not in row["class"] for row in rows[1:])
        others = [test["dependent"] for test in body["engle_granger"] if test["dependent"] != body["dependent"]]
        assert [row["data-dependent"] for row in rows[1:]] == others
    rows = section_of(soup, "regression-wages-on-fuel").select("table.engle-granger tr.eg-row")
    boxes = next(row for row in rows if row["data-dependent"] == "boxes")
    cells = [text_of(cell) for cell in boxes.find_all(["th", "td"])]
    assert "-3.950" in cells
    assert "0.041" in cells
    assert cells[-1] == "rejects no cointegration"
    assert "-4.38" in cells
    note = "With boxes on the left the residuals look stationary."
    assert note in text_of(section_of(soup, "regression-wages-on-fuel"))


def test_single_cointegration_test_still_shows(document: dict[str, Any]) -> None:
    document["regressions"]["boxes_on_fuel"]["engle_granger"] = []
    soup = BeautifulSoup(render_html(document, {}), "html.parser")
    rows = section_of(soup, "regression-boxes-on-fuel").select("table.engle-granger tr.eg-row")
    assert len(rows) == 1
    assert rows[0]["data-dependent"] == "boxes"


def test_johansen_table(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    for name, anchor in (("boxes_on_fuel", "regression-boxes-on-fuel"), ("wages_on_fuel", "regression-wages-on-fuel")):
        body = document["regressions"][name]["johansen"]
        section = section_of(soup, anchor)
        table = section.select_one("table.johansen")
        assert table is not None
        rows = table.select("tbody tr.rank-row")
        assert len(rows) == len(body["variables"])
        assert [row["data-rank"] for row in rows] == [str(test["rank"]) for test in body["trace"]]
        chosen = [row["data-rank"] for row in rows if "is-chosen" in row["class"]]
        assert chosen == [str(body["rank"])]
        assert "chosen" in text_of(table.select_one("tr.is-chosen"))
        headers = text_of(table.find("thead"))
        assert "Trace" in headers
        assert "Maximum eigenvalue" in headers
        facts = text_of(section.select_one("table.johansen-facts"))
        assert f"Chosen rank {body['rank']}" in facts
        assert body["rank_rule"] in facts
        assert body["critical_values_source"] in facts
        for value in body["eigenvalues"]:
            assert f"{value:.4f}"[:5] in facts
        assert body["case_description"] in text_of(table.find("caption"))
    rows = section_of(soup, "regression-boxes-on-fuel").select("table.johansen tr.rank-row")
    cells = [text_of(cell) for cell in rows[1].find_all("td")]
    # Trace at rank 1 has no 99% value in the document: shown as missing, not invented.
    assert cells[:5] == ["2.900", "2.71", "3.84", "—", "not rejected"]
    assert cells[0] == "2.900"
    first = [text_of(cell) for cell in rows[0].find_all("td")]
    assert first[4] == "rejected"


def test_bounds_test_shows_decision_and_both_bounds(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    for name, anchor in (("boxes_on_fuel", "regression-boxes-on-fuel"), ("wages_on_fuel", "regression-wages-on-fuel")):
        body = document["regressions"][name]["bounds_test"]
        block = section_of(soup, anchor).select_one("div.bounds-test")
        assert block is not None
        assert text_of(block.select_one("td.bounds-decision")) == body["decision"]
        rows = block.select("table.bounds tr.bounds-row")
        assert [text_of(row.find("th")) for row in rows] == list(body["critical_values"])  # keys as given
        for row, (lower, upper) in zip(rows, body["critical_values"].values(), strict=True):
            cells = [text_of(cell) for cell in row.find_all("td")]
            assert cells == [f"{lower:.2f}", f"{upper:.2f}"]
        facts = text_of(block.select_one("table.bounds-facts"))
        assert f"F-statistic {body['f_statistic']:.3f}" in facts
        for variable, lags in body["lags"].items():
            assert f"{variable} {lags}" in facts
    wages = section_of(soup, "regression-wages-on-fuel").select("table.bounds tr.bounds-row th")
    assert [text_of(cell) for cell in wages] == ["90%", "95%", "99%"]


def test_cointegration_tables_tolerate_partial_documents(document: dict[str, Any]) -> None:
    body = document["regressions"]["boxes_on_fuel"]
    body["johansen"]["trace"][1]["critical_values"] = {}
    del body["johansen"]["max_eigenvalue"]
    body["bounds_test"]["critical_values"] = {"5%": [4.94]}
    del body["bounds_test"]["notes"]
    del body["adjustment_speed"]
    for key in ("hac_kernel", "hac_bandwidth", "hac_bandwidth_rule", "small_sample_correction"):
        del body["levels"][key]
    for test in document["series"]["boxes"]["tests"]:
        for key in ("bandwidth", "bandwidth_rule", "break_date", "pvalue_source", "lag_criterion", "auxiliary"):
            del test[key]
    for key in ("grid", "fragile", "fragile_reason", "fan_chart"):
        del document["series"]["boxes"][key]
    del document["regressions"]["wages_on_fuel"]["fragile"]
    subset = dict(document, series={"boxes": document["series"]["boxes"]},
                  regressions={"boxes_on_fuel": document["regressions"]["boxes_on_fuel"]})
    plots = render_plots(subset)
    assert "fan:boxes" not in plots
    soup = BeautifulSoup(render_html(document, plots), "html.parser")
    section = section_of(soup, "regression-boxes-on-fuel")
    assert "not reported" in text_of(section.select_one("table.johansen"))
    assert [text_of(cell) for cell in section.select("table.bounds tr.bounds-row td")] == ["4.94", "—"]
    boxes = section_of(soup, "series-boxes")
    assert boxes.select_one("table.grid") is None
    assert boxes.select_one("figure.fan-figure") is None
    headers = [text_of(cell) for cell in boxes.select("table.tests thead th")]
    assert "Break" not in headers


def test_fragile_regression_has_a_badge_with_its_reason(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    section = section_of(soup, "regression-wages-on-fuel")
    note = section.select_one(".verdict-panel .fragile-note")
    assert note is not None
    assert text_of(note.select_one(".fragile-reason")) == document["regressions"]["wages_on_fuel"]["fragile_reason"]
    assert section_of(soup, "regression-boxes-on-fuel").select_one(".fragile-note") is None


def test_methods_appendix(soup: BeautifulSoup, document: dict[str, Any]) -> None:
    methods = text_of(section_of(soup, "methods"))
    for key in ("order_rule", "deterministic_rule", "grid_rule", "verdict_rule", "references"):
        for sentence in document["methods"][key]:
            assert sentence in methods
    for test in document["methods"]["tests"]:
        assert test["name"] in methods
        assert test["description"] in methods
    assert "Significance" in methods
    assert "0.05" in methods
    assert "How the robustness grid is built" in methods
    assert "Grid rule" not in methods  # shown once, under its own heading
    for name in ("PP", "DF-GLS", "ZA", "Johansen", "Bounds test"):
        assert name in methods


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
    assert "border-collapse" not in html  # the packaged style.css is replaced (colours.css, its palette, stays)


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
    with pytest.raises(TemplateUnsafeError) as caught:
        render_html(document, {}, [tmp_path])
    assert caught.value.location is not None
    assert caught.value.location.line == 2
    assert caught.value.code == "template-unsafe"
    bad.write_text("{% if %}\n", encoding="utf-8")
    with pytest.raises(TemplateSyntaxError, match="syntax") as syntax:
        render_html(document, {}, [tmp_path])
    assert syntax.value.render().startswith(f"{bad}:1: error[template-syntax]: template syntax error: ")


def test_missing_template_folder_is_an_error(tmp_path: Path, document: dict[str, Any]) -> None:
    with pytest.raises(TemplateFolderMissingError) as caught:
        render_html(document, {}, [tmp_path / "nowhere"])
    assert caught.value.render() == (
        f"error[template-folder-missing]: template folder {tmp_path / 'nowhere'} does not exist or is not a folder\n"
        "  hint: check the --templates option")
