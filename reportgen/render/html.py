"""The dossier as one self-contained HTML file: CSS and charts inlined, no external requests.

:func:`render_html` builds one context from the results document (anchors, charts, the fits of
each regression in display order, and *views*: the document's tables arranged for display, with
every optional field present) and hands it to the templates, which only display it. Arranging is
grouping, ordering, de-duplicating footnotes, comparing a grid cell with the reported order and
picking the tests of the levels that decide an order (by the rule the methods appendix states);
no statistic is computed here.

The page is laid out for hundreds of series: the summary comes first (every regression's verdict,
every series' order, terms and robustness, in tables of at most :data:`SUMMARY_ROWS` rows), then
the index, then one compact section per series (the order in a sentence, the decisive tests, the
chart) whose full record (fan chart, every test, robustness grid, deterministic terms, decision
trail, notes) is folded in a ``<details>`` element.
"""

from __future__ import annotations

import hashlib
import itertools
import re
import traceback
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any
from xml.etree import ElementTree

import jinja2
from markupsafe import Markup

from reportgen.errors import (
    Location,
    StylesheetUnsafeError,
    TemplateNameRefusedError,
    TemplateNotFoundError,
    TemplateSyntaxError,
    TemplateUnsafeError,
)
from reportgen.render.environment import (
    DISPLAY_COLUMNS,
    DISPLAY_POINTS,
    ENTRY_TEMPLATE,
    TemplateLoadRefusedError,
    build_environment,
    unique_ids,
)

#: Fixed anchors of the dossier's parts; series and regressions get ``series-…``/``regression-…``.
SECTION_IDS: Mapping[str, str] = {
    "cover": "cover",
    "contents": "contents",
    "summary": "summary",
    "series_part": "all-series",
    "regressions_part": "all-regressions",
    "methods": "methods",
    "provenance": "provenance",
    "cautions": "cautions",
}

#: Fits of a regression in display rows, by document key: the levels fit beside its re-estimate in
#: differences, then the long-run relation beside the error-correction model.
FIT_ROWS: tuple[tuple[str, ...], ...] = (("levels", "differences"), ("long_run", "error_correction"))
#: Fits of a regression in the order they are shown.
FIT_KEYS: tuple[str, ...] = tuple(key for row in FIT_ROWS for key in row)

#: Rows of one summary table: a longer list is split into tables of this many rows, because
#: WeasyPrint lays out a table that runs over many pages in time that grows faster than its pages.
SUMMARY_ROWS = 50
#: The tests that vote on a level's stationarity, in the order the table of decisive tests shows them
#: (the decision rule of the methods appendix); other tests are in the full battery only.
KEY_TESTS: tuple[str, ...] = ("ADF", "PP", "DF-GLS", "KPSS")

#: Rows and columns of a robustness grid come in these orders; values not listed follow, in the
#: order the document first gives them.
GRID_TESTS: tuple[str, ...] = ("ADF", "PP", "DF-GLS", "KPSS", "ZA", "combined")
GRID_DETERMINISTIC: tuple[str, ...] = ("none", "constant", "constant-trend")
GRID_LAG_CRITERIA: tuple[str, ...] = ("aic", "bic", "hqic", "t-stat", "fixed")

# Every field a template reads from a document table, with the value shown when it is absent, so
# that a results file from an earlier battery (or a partial one) still renders.
_TEST_FIELDS: Mapping[str, Any] = {
    "test": "", "null_hypothesis": "", "level": None, "deterministic": None, "statistic": None,
    "pvalue": None, "pvalue_bound": None, "critical_values": {}, "critical_values_source": "", "lags": None,
    "lag_rule": "", "nobs": None, "sample_start": "", "sample_end": "", "rejects": None, "significance": None,
    "notes": [], "pvalue_source": "", "bandwidth": None, "bandwidth_rule": "", "break_date": None,
    "lag_criterion": None, "auxiliary": False,
}
_COINTEGRATION_FIELDS: Mapping[str, Any] = {
    "method": "Engle-Granger", "dependent": "", "variables": [], "deterministic": None, "statistic": None,
    "pvalue": None, "pvalue_bound": None, "critical_values": {}, "critical_values_source": "", "lags": None,
    "lag_rule": "", "nobs": None, "rejects": None, "significance": None, "notes": [],
}
_RANK_FIELDS: Mapping[str, Any] = {"rank": None, "statistic": None, "critical_values": {}, "rejects": None}
_JOHANSEN_FIELDS: Mapping[str, Any] = {
    "variables": [], "case": None, "case_description": "", "lags": None, "lag_rule": "", "nobs": None,
    "eigenvalues": [], "trace": [], "max_eigenvalue": [], "rank": None, "rank_rule": "",
    "critical_values_source": "", "significance": None, "notes": [],
}
_BOUNDS_FIELDS: Mapping[str, Any] = {
    "dependent": "", "regressors": [], "case": None, "case_description": "", "lags": {}, "lag_rule": "",
    "nobs": None, "f_statistic": None, "critical_values": {}, "critical_values_source": "", "decision": None,
    "significance": None, "notes": [],
}
_FIT_FIELDS: Mapping[str, Any] = {
    "role": "", "equation": "", "dependent": "", "coefficients": [], "covariance": "", "nobs": None,
    "r_squared": None, "adj_r_squared": None, "durbin_watson": None, "residual_std_error": None,
    "sample_start": "", "sample_end": "", "diagnostics": [], "notes": [], "hac_kernel": "",
    "hac_bandwidth": None, "hac_bandwidth_rule": "", "small_sample_correction": None,
}
_FAN_FIELDS: Mapping[str, Any] = {
    "dates": [], "bands": {}, "drift": None, "innovation_std": None, "replications": None, "seed": None,
    "share_outside": None, "description": "",
}

#: Elements a chart may hold: what matplotlib's SVG backend writes for our charts and a few other shapes.
_SVG_ELEMENTS = frozenset({
    "svg", "g", "defs", "path", "use", "text", "tspan", "clipPath", "rect", "circle", "ellipse", "line",
    "polyline", "polygon", "pattern", "image", "title", "desc", "linearGradient", "radialGradient", "stop",
    "mask", "marker", "symbol",
})
_LOCAL_REFERENCE = re.compile(r"#[A-Za-z0-9_.:-]+")
_INLINE_IMAGE = re.compile(r"data:image/(png|jpeg);base64,[A-Za-z0-9+/=\s]*")
_URL_FUNCTION = re.compile(r"url\(\s*([^)]*?)\s*\)", re.IGNORECASE)


def svg_problem(svg: str) -> str | None:
    """What makes ``svg`` unfit to inline in the page, or ``None`` for a plain drawing.

    The check is on the parsed tree, not on the text, so a label that *reads* ``<script>`` or
    ``onerror=`` (escaped by matplotlib, hence plain text) passes, while a ``script`` element, an
    event-handler attribute, a link to anything but an element of the chart itself or an
    inline PNG/JPEG, a comment, CDATA or processing instruction does not.
    """
    if not svg.startswith("<svg"):
        return "it does not start with <svg"
    if "<!" in svg or "<?" in svg:
        return "it holds a comment, CDATA section, declaration or processing instruction"
    try:
        root = ElementTree.fromstring(svg)
    except ElementTree.ParseError as error:
        return f"it is not well-formed XML ({error})"
    for element in root.iter():
        name = element.tag.rpartition("}")[2] if isinstance(element.tag, str) else "?"
        if name not in _SVG_ELEMENTS:
            return f"it holds a <{name}> element"
        for attribute, value in element.attrib.items():
            local = attribute.rpartition("}")[2].lower()
            if local.startswith("on"):
                return f"<{name}> has an event-handler attribute {local!r}"
            if local == "href" and not (_LOCAL_REFERENCE.fullmatch(value) or _INLINE_IMAGE.fullmatch(value)):
                return f"<{name}> links to {value[:40]!r}"
            for target in _URL_FUNCTION.findall(value):
                if not _LOCAL_REFERENCE.fullmatch(target.strip("'\"")):
                    return f"<{name}> refers to {target[:40]!r}"
    return None


_svg_problem = svg_problem  # the earlier private name


def _chart_markup(key: str, svg: str) -> Markup:
    """An SVG from :func:`reportgen.render.plots.render_plots`, checked and marked safe to inline."""
    text = svg.strip()
    problem = svg_problem(text)
    if problem is not None:
        raise ValueError(f"chart {key!r} is not a plain inline SVG ({problem}); pass the output of render_plots")
    return Markup(text)  # checked above; drawn by our own plotting code, every label escaped by matplotlib


def _stylesheet(environment: jinja2.Environment, name: str = "style.css") -> Markup:
    """A stylesheet from the template folders (a user folder may replace it), for a <style> element."""
    loader = environment.loader
    assert loader is not None
    source, filename, _ = loader.get_source(environment, name)
    if re.search(r"</\s*style", source, re.IGNORECASE):
        message = None if name == "style.css" else f"{name} must not contain a closing </style> tag"
        raise StylesheetUnsafeError(message, location=Location(path=filename or name))
    return Markup(source)  # a stylesheet from the template folder, not document text


def _complete(table: Any, fields: Mapping[str, Any]) -> dict[str, Any]:
    """``table`` with every field of ``fields`` present (absent or ``None`` ones take the default)."""
    given = table if isinstance(table, Mapping) else {}
    complete = {key: given.get(key) if given.get(key) is not None else default for key, default in fields.items()}
    complete.update({key: value for key, value in given.items() if key not in fields})
    return complete


def _mappings(items: Any) -> list[Mapping[str, Any]]:
    """The mappings of a list from the document (anything else, or a missing list, gives none)."""
    if not isinstance(items, (list, tuple)):
        return []
    return [item for item in items if isinstance(item, Mapping)]


def _ordered(values: Iterable[Any], preferred: Sequence[str]) -> list[str]:
    """Distinct ``values`` as text: those in ``preferred`` in its order, then the rest as first met."""
    seen = list(dict.fromkeys(str(value) for value in values if value is not None))
    return [value for value in preferred if value in seen] + [value for value in seen if value not in preferred]


def _levels_present(tables: Iterable[Mapping[str, Any]]) -> list[str]:
    """The critical-value levels of several tests, in the order the document first gives them."""
    levels: dict[str, None] = {}
    for table in tables:
        values = table.get("critical_values")
        if isinstance(values, Mapping):
            levels.update(dict.fromkeys(str(key) for key in values))
    return list(levels)


def footnote_label(index: int) -> str:
    """The label of the ``index``-th footnote of a table: ``a`` ... ``z``, then ``aa``, ``ab`` ..."""
    letters = "abcdefghijklmnopqrstuvwxyz"
    label = ""
    index += 1
    while index > 0:
        index, remainder = divmod(index - 1, len(letters))
        label = letters[remainder] + label
    return label


class Footnotes:
    """The footnotes of one table: each distinct text once, lettered in the order first marked."""

    def __init__(self) -> None:
        self.items: list[dict[str, str]] = []
        self._labels: dict[tuple[str, str], str] = {}

    def mark(self, kind: str, text: Any) -> str | None:
        """The label of the footnote ``kind: text`` (added if new); ``None`` for empty text."""
        if not isinstance(text, str) or not text.strip():
            return None
        key = (kind, text.strip())
        if key not in self._labels:
            label = footnote_label(len(self.items))
            self._labels[key] = label
            self.items.append({"label": label, "kind": kind, "text": key[1]})
        return self._labels[key]


def _as_level(level: Any) -> Any:
    """A differencing level as written in the document (an int in tests, a string as a mapping key)."""
    try:
        return int(level)
    except (TypeError, ValueError):
        return level


def _sample_text(start: Any, end: Any) -> str:
    """``start to end`` for a footnote, or empty text when neither is known."""
    if not start and not end:
        return ""
    return f"{start or '?'} to {end or '?'}"


def battery_view(series: Mapping[str, Any]) -> dict[str, Any] | None:
    """The battery of one series as display groups: consecutive tests at one level, in run order.

    Every rule and source text becomes a lettered footnote (each distinct text once), so the
    table stays narrow however many tests share a rule.
    """
    every = [_complete(test, _TEST_FIELDS) for test in _mappings(series.get("tests"))]
    # Auxiliary runs (the robustness grid's and the deterministic-terms choice's) are summarised by
    # the grid and the trail; listing dozens of them would bury the tests that decided the order.
    tests = [test for test in every if test["auxiliary"] is not True]
    if not tests:
        return None
    chosen = series.get("deterministic") if isinstance(series.get("deterministic"), Mapping) else {}
    chosen_by_level = {_as_level(key): value for key, value in chosen.items()}
    footnotes = Footnotes()
    groups: list[dict[str, Any]] = []
    for level, members in itertools.groupby(tests, key=lambda test: _as_level(test["level"])):
        rows = []
        for test in members:
            notes = [footnotes.mark("Note", note) for note in test["notes"] if isinstance(note, str)]
            rows.append({
                "test": test,
                "pvalue_mark": footnotes.mark("p-value", test["pvalue_source"]),
                "critical_mark": footnotes.mark("Critical values", test["critical_values_source"]),
                "lag_mark": footnotes.mark("Lags", test["lag_rule"]),
                "bandwidth_mark": footnotes.mark("Bandwidth", test["bandwidth_rule"]),
                "sample_mark": footnotes.mark("Sample", _sample_text(test["sample_start"], test["sample_end"])),
                "note_marks": [label for label in notes if label is not None],
            })
        groups.append({"level": level, "deterministic": chosen_by_level.get(level), "rows": rows})
    levels = [level for level in ("1%", "5%", "10%") if level in _levels_present(tests)] or ["1%", "5%", "10%"]
    has_bandwidth = any(test["bandwidth"] is not None for test in tests)
    has_breaks = any(test["break_date"] for test in tests)
    return {
        "groups": groups,
        "footnotes": footnotes.items,
        "levels": levels,
        # Test, terms, statistic, p-value, critical values, lags, [bandwidth], [break], obs., decision.
        "columns": 7 + len(levels) + int(has_bandwidth) + int(has_breaks),
        "has_bandwidth": has_bandwidth,
        "has_breaks": has_breaks,
        "auxiliary_count": len(every) - len(tests),
        "test_count": len(tests),
        "significance": next((test["significance"] for test in tests if test["significance"] is not None), None),
    }


def grid_view(series: Mapping[str, Any]) -> dict[str, Any] | None:
    """A series' robustness grid as rows (tests) by columns (deterministic terms x lag criterion).

    A cell is marked ``differs`` when the order it shows is not the series' reported order; a
    combination the grid does not hold is shown as not run.
    """
    cells = _mappings(series.get("grid"))
    if not cells:
        return None
    tests = _ordered((cell.get("test") for cell in cells), GRID_TESTS)
    terms = _ordered((cell.get("deterministic") for cell in cells), GRID_DETERMINISTIC)
    criteria = _ordered((cell.get("lag_criterion") for cell in cells), GRID_LAG_CRITERIA)
    lookup: dict[tuple[str, str, str], Mapping[str, Any]] = {}
    for cell in cells:
        key = (str(cell.get("test")), str(cell.get("deterministic")), str(cell.get("lag_criterion")))
        lookup.setdefault(key, cell)
    reported = series.get("order")
    rows = []
    for test in tests:
        row_cells = []
        for term in terms:
            for criterion in criteria:
                cell = lookup.get((test, term, criterion))
                order = cell.get("order") if cell is not None else None
                row_cells.append({
                    "present": cell is not None,
                    "order": order,
                    "differs": cell is not None and order != reported,
                    "deterministic": term,
                    "lag_criterion": criterion,
                })
        rows.append({"test": test, "combined": test == "combined", "cells": row_cells})
    return {
        "terms": terms,
        "criteria": criteria,
        "rows": rows,
        "reported": reported,
        "any_differs": any(cell["differs"] for row in rows for cell in row["cells"]),
        "any_missing": any(not cell["present"] for row in rows for cell in row["cells"]),
    }


def _decisive_levels(order: Any, levels: Sequence[Any]) -> list[Any]:
    """The differencing levels whose tests decide an order, by the top-down rule (see the methods).

    Order ``d`` >= 1: level ``d - 1`` (the highest that is not stationary) and level ``d``; order
    0: level 0; no order: the highest level tested (which is not stationary).
    """
    if isinstance(order, int) and not isinstance(order, bool):
        wanted = [order - 1, order] if order > 0 else [0]
        return [level for level in wanted if level in levels]
    numbers = [level for level in levels if isinstance(level, int)]
    return [max(numbers)] if numbers else []


def key_tests_view(series: Mapping[str, Any]) -> dict[str, Any] | None:
    """The tests at the levels that decide the order, as rows (level and terms) by columns (tests).

    Only the voting tests (:data:`KEY_TESTS`) the battery shows (no auxiliary run) at the decisive
    levels; a test a row does not have is ``None`` in its cell. ``nulls`` groups the columns by
    null hypothesis. ``chosen`` marks the row of the terms chosen at that level (the
    other is the second vote with a constant and trend).
    """
    tests = [test for test in (_complete(test, _TEST_FIELDS) for test in _mappings(series.get("tests")))
             if test["auxiliary"] is not True]
    if not tests:
        return None
    levels = list(dict.fromkeys(_as_level(test["level"]) for test in tests))
    decisive = _decisive_levels(series.get("order"), levels)
    chosen = series.get("deterministic") if isinstance(series.get("deterministic"), Mapping) else {}
    chosen_by_level = {_as_level(key): value for key, value in chosen.items()}
    shown = [test for test in tests if _as_level(test["level"]) in decisive]
    voting = [test for test in shown if test["test"] in KEY_TESTS]
    shown = voting or shown  # a battery without the voting tests shows what it has
    columns = _ordered((test["test"] for test in shown), KEY_TESTS)
    nulls: dict[str, list[str]] = {}
    for column in columns:
        null = next((str(test["null_hypothesis"]) for test in shown if test["test"] == column), "")
        nulls.setdefault(null, []).append(column)
    rows: list[dict[str, Any]] = []
    for level in decisive:
        at_level = [test for test in shown if _as_level(test["level"]) == level]
        for terms in dict.fromkeys(test["deterministic"] for test in at_level):
            cells: dict[str, Any] = {}
            for test in at_level:
                if test["deterministic"] == terms:
                    cells.setdefault(str(test["test"]), test)
            rows.append({"level": level, "deterministic": terms, "chosen": chosen_by_level.get(level) == terms,
                         "cells": [cells.get(column) for column in columns]})
    return {
        "levels": decisive,
        "columns": [{"test": column} for column in columns],
        "nulls": [{"null_hypothesis": null, "tests": names} for null, names in nulls.items()],
        "rows": rows,
        "significance": next((test["significance"] for test in shown if test["significance"] is not None), None),
        "test_count": len(tests),
    }


def decision_view(series: Mapping[str, Any]) -> dict[str, Any] | None:
    """The order restated by the top-down rule: the highest level not stationary and the level above it.

    ``None`` without an order (the document's ``reason`` says why).
    """
    order = series.get("order")
    if not isinstance(order, int) or isinstance(order, bool):
        return None
    return {"order": order, "stationary_level": order, "not_stationary_level": order - 1 if order > 0 else None}


def display_view(count: int) -> dict[str, Any]:
    """Whether a chart of ``count`` points draws an envelope (see :mod:`reportgen.render.plots`)."""
    return {"count": count, "downsampled": count > DISPLAY_POINTS, "groups": DISPLAY_COLUMNS}


def _series_count(series: Mapping[str, Any]) -> int:
    data = series.get("data")
    values = data.get("values") if isinstance(data, Mapping) else None
    return len(values) if isinstance(values, (list, tuple)) else 0


def _residual_count(regression: Mapping[str, Any]) -> int:
    counts = [len(fit["residuals"]) for fit in (regression.get(key) for key in FIT_KEYS)
              if isinstance(fit, Mapping) and isinstance(fit.get("residuals"), (list, tuple))]
    return max(counts, default=0)


def chunks(names: Iterable[str], size: int = SUMMARY_ROWS) -> list[list[str]]:
    """``names`` in consecutive groups of ``size`` (one group when there are at most ``size + size // 5``)."""
    listed = list(names)
    if len(listed) <= size + size // 5:
        return [listed]
    return [listed[start:start + size] for start in range(0, len(listed), size)]


def fan_view(series: Mapping[str, Any]) -> dict[str, Any] | None:
    """The facts of a series' fan chart shown under the chart, or ``None`` without one."""
    fan = series.get("fan_chart")
    if not isinstance(fan, Mapping):
        return None
    return _complete(fan, _FAN_FIELDS)


def series_view(series: Mapping[str, Any]) -> dict[str, Any]:
    """Everything the series partial shows beyond the document's plain fields."""
    return {
        "tests": battery_view(series),
        "key": key_tests_view(series),
        "decision": decision_view(series),
        "grid": grid_view(series),
        "fan": fan_view(series),
        "display": display_view(_series_count(series)),
        "fragile": series.get("fragile") is True,
        "fragile_reason": series.get("fragile_reason") or None,
    }


def _fit_rows(regression: Mapping[str, Any]) -> list[list[dict[str, Any]]]:
    """The fits of one regression that exist, in display rows (see :data:`FIT_ROWS`)."""
    rows = []
    for keys in FIT_ROWS:
        row = [_complete(regression[key], _FIT_FIELDS) for key in keys if isinstance(regression.get(key), Mapping)]
        if row:
            rows.append(row)
    return rows


def _fit_panels(regression: Mapping[str, Any]) -> list[Mapping[str, Any]]:
    """The fits of one regression that exist, in display order (levels first)."""
    return [fit for row in _fit_rows(regression) for fit in row]


def engle_granger_view(regression: Mapping[str, Any]) -> dict[str, Any] | None:
    """Engle-Granger under every normalisation, the manifest's (its dependent on the left) first.

    A document with only the single ``cointegration`` test shows that one row. Lag rules,
    critical-value sources and notes become lettered footnotes, each distinct text once.
    """
    tests = _mappings(regression.get("engle_granger"))
    if not tests and isinstance(regression.get("cointegration"), Mapping):
        tests = [regression["cointegration"]]
    if not tests:
        return None
    dependent = regression.get("dependent")
    completed = [_complete(test, _COINTEGRATION_FIELDS) for test in tests]
    completed.sort(key=lambda test: test["dependent"] != dependent)  # stable: the document's order otherwise
    footnotes = Footnotes()
    rows = []
    for test in completed:
        notes = [footnotes.mark("Note", note) for note in test["notes"] if isinstance(note, str)]
        rows.append({
            "test": test,
            "manifest": test["dependent"] == dependent,
            "critical_mark": footnotes.mark("Critical values", test["critical_values_source"]),
            "lag_mark": footnotes.mark("Lags", test["lag_rule"]),
            "note_marks": [label for label in notes if label is not None],
        })
    return {
        "rows": rows,
        "footnotes": footnotes.items,
        "levels": _levels_present(completed) or ["1%", "5%", "10%"],
        "variables": next((test["variables"] for test in completed if test["variables"]), []),
        "method": completed[0]["method"],
        "significance": next((test["significance"] for test in completed if test["significance"] is not None),
                             None),
    }


def johansen_view(regression: Mapping[str, Any]) -> dict[str, Any] | None:
    """Johansen's trace and maximum-eigenvalue sequences side by side, one row per null rank."""
    if not isinstance(regression.get("johansen"), Mapping):
        return None
    johansen = _complete(regression["johansen"], _JOHANSEN_FIELDS)
    trace = {test.get("rank"): _complete(test, _RANK_FIELDS) for test in _mappings(johansen["trace"])}
    maximum = {test.get("rank"): _complete(test, _RANK_FIELDS) for test in _mappings(johansen["max_eigenvalue"])}
    ranks = list(dict.fromkeys([*trace, *maximum]))
    rows = [{"rank": rank, "trace": trace.get(rank), "max_eigenvalue": maximum.get(rank),
             "chosen": rank is not None and rank == johansen["rank"]} for rank in ranks]
    return dict(johansen, rows=rows, levels=_levels_present([*trace.values(), *maximum.values()]),
                any_chosen=any(row["chosen"] for row in rows))


def bounds_view(regression: Mapping[str, Any]) -> dict[str, Any] | None:
    """The bounds test with its critical values as rows (level, lower bound, upper bound)."""
    if not isinstance(regression.get("bounds_test"), Mapping):
        return None
    bounds = _complete(regression["bounds_test"], _BOUNDS_FIELDS)
    rows = []
    values = bounds["critical_values"] if isinstance(bounds["critical_values"], Mapping) else {}
    for level, pair in values.items():
        pair = list(pair) if isinstance(pair, (list, tuple)) else []
        rows.append({"level": str(level), "lower": pair[0] if pair else None,
                     "upper": pair[1] if len(pair) > 1 else None})
    lags = bounds["lags"] if isinstance(bounds["lags"], Mapping) else {}
    return dict(bounds, rows=rows, lag_list=list(lags.items()))


def regression_view(regression: Mapping[str, Any]) -> dict[str, Any]:
    """Everything the regression partial shows beyond the document's plain fields."""
    return {
        "fit_rows": _fit_rows(regression),
        "engle_granger": engle_granger_view(regression),
        "johansen": johansen_view(regression),
        "bounds": bounds_view(regression),
        "display": display_view(_residual_count(regression)),
        "fragile": regression.get("fragile") is True,
        "fragile_reason": regression.get("fragile_reason") or None,
    }


def appendix_series_view(series: Mapping[str, Any]) -> dict[str, Any]:
    """The rows of one series in the appendix layout: the decisive tests at the chosen terms.

    One row per decisive level (the level that is not stationary and the one that is, see
    :func:`key_tests_view`) under the terms chosen there; every row at a level where no terms were
    recorded as chosen. Each row's ``tests`` maps a test name to its result (the table's columns are
    :data:`KEY_TESTS`, as ``appendix_tests`` in the context).
    """
    key = key_tests_view(series)
    if key is None:
        return {"rows": []}
    by_level: dict[Any, list[dict[str, Any]]] = {}
    for row in key["rows"]:
        by_level.setdefault(row["level"], []).append(row)
    rows = [row for level_rows in by_level.values()
            for row in ([chosen for chosen in level_rows if chosen["chosen"]] or level_rows)]
    columns = [column["test"] for column in key["columns"]]
    return {"rows": [dict(row, tests=dict(zip(columns, row["cells"], strict=True))) for row in rows]}


def appendix_regression_view(regression: Mapping[str, Any]) -> dict[str, Any]:
    """The rows of one regression in the appendix layout: the manifest's cointegration test and each fit."""
    eg = engle_granger_view(regression)
    manifest_test = next((row["test"] for row in eg["rows"] if row["manifest"]), eg["rows"][0]["test"]) if eg else None
    return {"cointegration": manifest_test, "fits": _fit_panels(regression)}


def sign_off_view(project: Mapping[str, Any]) -> dict[str, Any] | None:
    """The cover's sign-off block, or ``None`` when the manifest has no ``sign_off``.

    ``prepared_by`` falls back to the project's author; ``reviewed`` is False until a reviewer and
    a review date are recorded (the cover then says "not yet reviewed").
    """
    sign_off = project.get("sign_off")
    if not isinstance(sign_off, Mapping):
        return None
    prepared_by = sign_off.get("prepared_by") or project.get("author") or None
    reviewed_by = sign_off.get("reviewed_by") or None
    return {"prepared_by": prepared_by, "prepared_on": sign_off.get("prepared_on") or None,
            "reviewed_by": reviewed_by, "reviewed_on": sign_off.get("reviewed_on") or None,
            "reviewed": bool(reviewed_by and sign_off.get("reviewed_on"))}


#: A logo the page may show: an inline image of one of these types (built by :mod:`reportgen.branding`).
_LOGO_URL = re.compile(r"data:image/(png|jpeg|svg\+xml);base64,[A-Za-z0-9+/=]*")


def branding_view(project: Mapping[str, Any], logo_url: str | None) -> dict[str, Any]:
    """The firm's name, disclaimer and logo for the partials; every value ``None`` when not branded."""
    branding = project.get("branding") if isinstance(project.get("branding"), Mapping) else {}
    if logo_url is not None and not _LOGO_URL.fullmatch(logo_url):
        raise ValueError("logo_url must be a base64 data: URL of a PNG, JPEG or SVG image (see reportgen.branding)")
    return {"firm": branding.get("firm") or None, "disclaimer": branding.get("disclaimer") or None,
            "logo_url": logo_url, "logo_alt": f"Logo of {branding['firm']}" if branding.get("firm") else "Logo"}


#: Layouts of the dossier and the words the page uses for them.
LAYOUTS: Mapping[str, str] = {
    "full": "full dossier",
    "appendix": "referee's appendix (compact tables: no charts, no folded details)",
}
#: The template each layout starts from.
LAYOUT_TEMPLATES: Mapping[str, str] = {"full": ENTRY_TEMPLATE, "appendix": "appendix.html.j2"}


def rendering_view(layout: str, template_dirs: Sequence[Path], brand_folder: Path | None) -> dict[str, Any]:
    """How this page was rendered: the layout, and the user template folders in search order with their files.

    Each folder's files carry their SHA-256 (those of the brand folder are also inputs in
    results.json); a link out of its folder is not listed, as it is never loaded, nor are
    version-control folders (``.git``, ``.hg``, ``.svn``).
    """
    folders = [(Path(folder), "--templates") for folder in template_dirs]
    if brand_folder is not None:
        folders.append((Path(brand_folder), "project.branding.templates"))
    shown = []
    for folder, origin in folders:
        root = folder.resolve()
        files = []
        for path in sorted(root.rglob("*")):
            real = path.resolve()
            hidden = any(part in (".git", ".hg", ".svn") for part in path.relative_to(root).parts)
            if real.is_file() and real.is_relative_to(root) and not hidden:
                data = real.read_bytes()
                files.append({"name": path.relative_to(root).as_posix(), "sha256": hashlib.sha256(data).hexdigest(),
                              "bytes": len(data)})
        shown.append({"path": str(root), "origin": origin, "files": files})
    return {"layout": layout, "layout_text": LAYOUTS[layout], "folders": shown}


def dossier_context(document: Mapping[str, Any], plots: Mapping[str, str],
                    environment: jinja2.Environment, *, layout: str = "full",
                    template_dirs: Sequence[Path] = (), brand_folder: Path | None = None,
                    logo_url: str | None = None) -> dict[str, Any]:
    """Everything the templates see: the document itself plus display helpers (no statistics).

    ``document``, ``project``, ``methods``: the results document and two of its parts.
    ``ids``: page anchors (:data:`SECTION_IDS`, plus ``ids.series[name]`` and ``ids.regressions[name]``).
    ``charts``: inline SVGs by key (``series:``, ``fan:``, ``regression:`` plus the name).
    ``fit_panels[name]``: the fits of a regression in display order.
    ``series_views[name]``: :func:`series_view` (battery table, robustness grid, fan-chart facts, fragility).
    ``regression_views[name]``: :func:`regression_view` (fit rows, Engle-Granger, Johansen, bounds test,
    fragility). ``series_chunks``, ``regression_chunks``: the names in groups of at most
    :data:`SUMMARY_ROWS`, one summary table each. ``css``: the stylesheet; ``colours``: the colour
    stylesheet (CSS custom properties that ``style.css`` uses), placed before it.
    ``branding``: :func:`branding_view`; ``sign_off``: :func:`sign_off_view`; ``layout``: ``"full"``
    or ``"appendix"``; ``rendering``: :func:`rendering_view`; ``appendix_series[name]`` and
    ``appendix_regressions[name]``: :func:`appendix_series_view`, :func:`appendix_regression_view`
    (appendix layout only, else empty); ``appendix_tests``: the test columns of the appendix's series table.
    """
    series: Mapping[str, Any] = document.get("series") or {}
    regressions: Mapping[str, Any] = document.get("regressions") or {}
    taken = set(SECTION_IDS.values())
    ids: dict[str, Any] = dict(SECTION_IDS)
    ids["series"] = unique_ids(series, "series", taken)
    ids["regressions"] = unique_ids(regressions, "regression", taken)
    return {
        "document": document,
        "project": document.get("project") or {},
        "methods": document.get("methods") or {},
        "ids": ids,
        "charts": {key: _chart_markup(key, svg) for key, svg in plots.items()},
        "fit_panels": {name: _fit_panels(body) for name, body in regressions.items()},
        "series_views": {name: series_view(body) for name, body in series.items()},
        "regression_views": {name: regression_view(body) for name, body in regressions.items()},
        "series_chunks": chunks(series),
        "regression_chunks": chunks(regressions),
        "css": _stylesheet(environment),
        "colours": _stylesheet(environment, "colours.css"),
        "branding": branding_view(document.get("project") or {}, logo_url),
        "sign_off": sign_off_view(document.get("project") or {}),
        "layout": layout,
        "rendering": rendering_view(layout, template_dirs, brand_folder),
        "appendix_tests": list(KEY_TESTS),
        "appendix_series": {name: appendix_series_view(body) for name, body in series.items()}
        if layout == "appendix" else {},
        "appendix_regressions": {name: appendix_regression_view(body) for name, body in regressions.items()}
        if layout == "appendix" else {},
    }


def _user_template_frame(error: BaseException, user_dirs: Sequence[Path]) -> Location | None:
    """Where in a *user* template an error was raised, from the traceback jinja2 rewrites."""
    folders = [str(Path(folder).resolve()) for folder in user_dirs]
    location: Location | None = None
    for frame in traceback.extract_tb(error.__traceback__):
        if frame.filename.endswith(".j2") and any(frame.filename.startswith(folder) for folder in folders):
            location = Location(path=frame.filename, line=frame.lineno)
    return location


def render_html(document: Mapping[str, Any], plots: Mapping[str, str], template_dirs: Sequence[Path] = (), *,
                layout: str = "full", brand_folder: Path | None = None, logo_url: str | None = None) -> str:
    """The dossier as one self-contained HTML page.

    Parameters
    ----------
    document
        ``results_to_dict(results)``: the same content as results.json.
    plots
        Inline SVG charts keyed ``"series:<name>"``, ``"fan:<name>"`` and ``"regression:<name>"``, as returned by
        :func:`reportgen.render.plots.render_plots`; a missing chart is simply not shown.
    template_dirs
        Folders searched before the packaged templates (any template or ``style.css`` there
        replaces the packaged one of the same name): ``--templates`` folders, in order.
    layout
        ``"full"`` (``dossier.html.j2``) or ``"appendix"`` (``appendix.html.j2``: compact tables only).
    brand_folder
        The manifest's brand folder (``project.branding.templates``), searched after ``template_dirs``
        and before the packaged templates.
    logo_url
        The brand logo as a base64 ``data:`` URL (:func:`reportgen.branding.logo_data_url`), or None.

    Raises
    ------
    TemplateSyntaxError
        A user template does not parse.
    TemplateNotFoundError
        A user template includes or extends a template that no folder holds.
    TemplateUnsafeError
        A user template uses a name the context does not have, something the sandbox forbids, or a
        template name that is absolute, climbs with ``..`` or is a link out of its folder.
    StylesheetUnsafeError
        A user ``style.css`` would close its ``<style>`` element.
    """
    if layout not in LAYOUTS:
        raise ValueError(f"layout must be one of {', '.join(LAYOUTS)}, not {layout!r}")
    user_dirs = [*template_dirs, *((brand_folder,) if brand_folder is not None else ())]
    environment = build_environment(user_dirs)
    try:
        template = environment.get_template(LAYOUT_TEMPLATES[layout])
        return template.render(dossier_context(document, plots, environment, layout=layout,
                                               template_dirs=template_dirs, brand_folder=brand_folder,
                                               logo_url=logo_url))
    except jinja2.TemplateSyntaxError as error:
        raise TemplateSyntaxError(problem=error.message,
                                  location=Location(path=error.filename or error.name, line=error.lineno)) from error
    except jinja2.TemplateNotFound as error:
        raise TemplateNotFoundError(name=error.name, location=_user_template_frame(error, user_dirs)) from error
    except TemplateLoadRefusedError as error:
        # The loader refused a name or a file of a user folder, whichever template asked for it.
        raise TemplateNameRefusedError(problem=str(error), location=_user_template_frame(error, user_dirs),
                                       hint="include or extend templates by their name inside a template folder, "
                                            "e.g. 'partials/summary.html.j2'; links out of the folder are not "
                                            "followed") from error
    except (jinja2.UndefinedError, jinja2.exceptions.SecurityError) as error:
        location = _user_template_frame(error, user_dirs)
        if location is None:
            raise  # raised by a packaged template: a bug, keep the traceback
        raise TemplateUnsafeError(problem=str(error), location=location) from error
