"""The dossier as one self-contained HTML file: CSS and charts inlined, no external requests.

:func:`render_html` builds one context from the results document (anchors, charts, the fits of
each regression in display order) and hands it to the templates, which only display it.
"""

from __future__ import annotations

import re
import traceback
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import jinja2
from markupsafe import Markup

from reportgen.errors import Location
from reportgen.render.environment import ENTRY_TEMPLATE, TemplateError, build_environment, unique_ids

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

#: Fits of a regression in the order they are shown, with the document key of each.
FIT_KEYS: tuple[str, ...] = ("levels", "long_run", "differences", "error_correction")

_UNSAFE_SVG = re.compile(r"<\s*(script|foreignobject|iframe|object|embed)\b|\son[a-z]+\s*=|javascript:", re.IGNORECASE)


def _chart_markup(key: str, svg: str) -> Markup:
    """An SVG from :func:`reportgen.render.plots.render_plots`, checked and marked safe to inline."""
    text = svg.strip()
    if not text.startswith("<svg") or _UNSAFE_SVG.search(text):
        raise ValueError(f"chart {key!r} is not a plain inline SVG; pass the output of render_plots")
    return Markup(text)  # checked above; drawn by our own plotting code


def _stylesheet(environment: jinja2.Environment) -> Markup:
    """``style.css`` from the template folders (a user folder may replace it), for a <style> element."""
    loader = environment.loader
    assert loader is not None
    source, _, _ = loader.get_source(environment, "style.css")
    if re.search(r"</\s*style", source, re.IGNORECASE):
        raise TemplateError("style.css must not contain a closing </style> tag",
                            location=Location(path="style.css"))
    return Markup(source)  # a stylesheet from the template folder, not document text


def _fit_panels(regression: Mapping[str, Any]) -> list[Mapping[str, Any]]:
    """The fits of one regression that exist, in display order (levels first)."""
    return [regression[key] for key in FIT_KEYS if regression.get(key)]


def dossier_context(document: Mapping[str, Any], plots: Mapping[str, str],
                    environment: jinja2.Environment) -> dict[str, Any]:
    """Everything the templates see: the document itself plus display helpers (no statistics)."""
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
        "css": _stylesheet(environment),
    }


def _user_template_frame(error: BaseException, user_dirs: Sequence[Path]) -> Location | None:
    """Where in a *user* template an error was raised, from the traceback jinja2 rewrites."""
    folders = [str(Path(folder).resolve()) for folder in user_dirs]
    location: Location | None = None
    for frame in traceback.extract_tb(error.__traceback__):
        if frame.filename.endswith(".j2") and any(frame.filename.startswith(folder) for folder in folders):
            location = Location(path=frame.filename, line=frame.lineno)
    return location


def render_html(document: Mapping[str, Any], plots: Mapping[str, str], template_dirs: Sequence[Path] = ()) -> str:
    """The dossier as one self-contained HTML page.

    Parameters
    ----------
    document
        ``results_to_dict(results)``: the same content as results.json.
    plots
        Inline SVG charts keyed ``"series:<name>"`` and ``"regression:<name>"``, as returned by
        :func:`reportgen.render.plots.render_plots`; a missing chart is simply not shown.
    template_dirs
        Folders searched before the packaged templates (any template or ``style.css`` there
        replaces the packaged one of the same name).

    Raises
    ------
    TemplateError
        A user template is missing, does not parse, or uses a name the context does not have.
    """
    environment = build_environment(template_dirs)
    try:
        template = environment.get_template(ENTRY_TEMPLATE)
        return template.render(dossier_context(document, plots, environment))
    except jinja2.TemplateSyntaxError as error:
        raise TemplateError(f"template syntax error: {error.message}",
                            location=Location(path=error.filename or error.name, line=error.lineno),
                            hint="fix the template, or remove it to use the packaged one") from error
    except jinja2.TemplateNotFound as error:
        raise TemplateError(f"template {error.name!r} not found in the template folders",
                            hint="a user template folder may only replace templates that exist") from error
    except (jinja2.UndefinedError, jinja2.exceptions.SecurityError) as error:
        location = _user_template_frame(error, template_dirs)
        if location is None:
            raise  # raised by a packaged template: a bug, keep the traceback
        raise TemplateError(f"template error: {error}", location=location,
                            hint="the names a template can use are listed in reportgen/render/html.py") from error
