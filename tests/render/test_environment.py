"""The jinja2 environment and its formatting filters."""

from __future__ import annotations

import math

import jinja2
import pytest

from reportgen.render.environment import (
    FILTERS,
    build_environment,
    fit_heading,
    fmt_bool,
    fmt_case,
    fmt_criterion,
    fmt_deterministic,
    fmt_int,
    fmt_level,
    fmt_order,
    fmt_p,
    fmt_share,
    fmt_stat,
    packaged_templates_dir,
    slugify,
    unique_ids,
    verdict_short,
    verdict_text,
)
from reportgen.render.html import footnote_label


@pytest.mark.parametrize(
    ("value", "expected"),
    [(-3.45678, "-3.457"), (0.5, "0.5000"), (1234.56, "1235"), (12.3456, "12.35"), (0.0, "0.000"),
     (-0.00001234, "-1.234e-05"), (2.5e7, "2.500e+07"), (-0.00004, "-4.000e-05"), (None, "—"),
     (math.nan, "—"), (math.inf, "—"), (True, "—")],
)
def test_fmt_stat(value: object, expected: str) -> None:
    assert fmt_stat(value) == expected


def test_fmt_stat_digits_and_negative_zero() -> None:
    assert fmt_stat(0.91234, 3) == "0.912"
    assert fmt_stat(-0.00049, 3) == "-4.90e-04"
    assert fmt_stat(-0.0001, 1) == "-1e-04"
    assert not fmt_stat(-1e-12 + 1e-12).startswith("-")


@pytest.mark.parametrize(
    ("value", "bound", "expected"),
    [(0.032, None, "0.032"), (0.0321, None, "0.032"), (0.5391, None, "0.539"), (1.0, None, "1.000"),
     (0.0002, None, "< 0.001"), (0.01, "<", "< 0.01"), (0.1, ">", "> 0.10"), (0.001, "<", "< 0.001"),
     (None, None, "—"), (math.nan, "<", "—")],
)
def test_fmt_p(value: object, bound: str | None, expected: str) -> None:
    assert fmt_p(value, bound) == expected


def test_small_filters() -> None:
    assert fmt_int(18204) == "18,204"
    assert fmt_int(None) == "—"
    assert fmt_level(0.05) == "5%"
    assert fmt_level(0.1) == "10%"
    assert fmt_order(0) == "I(0)"
    assert fmt_order(None) == "undetermined"
    assert fmt_deterministic("constant-trend") == "constant and trend"
    assert fmt_bool(None) == "not tested"
    assert fmt_bool(True) == "yes"
    assert fmt_bool(False) == "no"


def test_battery_filters() -> None:
    assert fmt_share(0.183) == "18.3%"
    assert fmt_share(0.0) == "0.0%"
    assert fmt_share(None) == "—"
    assert fmt_criterion("aic") == "AIC"
    assert fmt_criterion("t-stat") == "t-stat"
    assert fmt_criterion("Hannan-Quinn") == "Hannan-Quinn"
    assert fmt_criterion(None) == "—"
    assert fmt_case(3) == "case 3"
    assert fmt_case(None) == "—"
    assert fit_heading("long-run (dynamic OLS)") == "Long-run relation (dynamic OLS)"
    assert fit_heading("long-run") == "Long-run relation"
    assert fit_heading("error_correction") == "Error-correction model"
    assert fit_heading("first_stage") == "First stage"


def test_footnote_labels() -> None:
    assert [footnote_label(index) for index in (0, 1, 25, 26, 27, 51, 52)] == [
        "a", "b", "z", "aa", "ab", "az", "ba"]


def test_every_verdict_has_words() -> None:
    for verdict in ("stationary", "cointegrated", "spurious-risk", "unbalanced", "inconclusive"):
        assert verdict_short(verdict) != verdict
        assert verdict_text(verdict).endswith(".")


def test_slugs() -> None:
    assert slugify("Boxes on Fuel (log)") == "boxes-on-fuel-log"
    assert slugify("Ölpreis") == "olpreis"
    assert slugify("<>") == "item"
    taken = {"summary"}
    ids = unique_ids(["a b", "a-b", "summary"], "x", taken)
    assert ids == {"a b": "x-a-b", "a-b": "x-a-b-2", "summary": "x-summary"}
    assert unique_ids(["summary"], "x", taken) == {"summary": "x-summary-2"}


def test_environment_is_strict_autoescaped_and_has_the_filters() -> None:
    environment = build_environment()
    assert set(FILTERS) <= set(environment.filters)
    template = environment.from_string("{{ value }}|{{ value|fmt_stat }}")
    assert template.render(value="<b>") == "&lt;b&gt;|—"
    with pytest.raises(jinja2.UndefinedError):
        environment.from_string("{{ missing }}").render()
    assert environment.from_string("{{ nothing }}").render(nothing=None) == "—"


def test_packaged_templates_are_found() -> None:
    folder = packaged_templates_dir()
    for name in ("base.html.j2", "dossier.html.j2", "style.css", "partials/cover.html.j2",
                 "partials/summary.html.j2", "partials/series.html.j2", "partials/regression.html.j2",
                 "partials/methods.html.j2", "partials/provenance.html.j2", "partials/cautions.html.j2",
                 "partials/contents.html.j2", "partials/macros.html.j2"):
        assert (folder / name).is_file(), name
