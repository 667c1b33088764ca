"""The one place where the jinja2 environment of the dossier is built.

Autoescaping is on for every template, undefined names raise (``StrictUndefined``), and every
filter the templates use is registered here, in :data:`FILTERS`. Filters only *format*: they turn
numbers into text and vocabulary words into sentences; they never compute a statistic.

Templates are searched in the user's folders first (every ``--templates DIR`` in the order given,
then the manifest's brand folder, ``project.branding.templates``), then in the packaged
``templates/`` folder. A user template can reach the
packaged version of a file it replaces through the ``default/`` prefix, e.g.
``{% extends "default/partials/summary.html.j2" %}``.

User templates may come with a client's manifest, so they are not trusted: they run in jinja2's
immutable sandbox (no attribute starting with ``_``, no ``str.format`` tricks, no changing the
document they display), and :class:`TemplateFolders` loads only plain relative names that stay
inside their folder (no absolute names, no ``..``, no link that leads out of the folder).
"""

from __future__ import annotations

import math
import re
import unicodedata
from collections.abc import Callable, Iterable, Mapping, Sequence
from importlib import resources
from pathlib import Path
from typing import Any

import jinja2
from jinja2.exceptions import SecurityError
from jinja2.sandbox import ImmutableSandboxedEnvironment

from reportgen.errors import TemplateFolderMissingError, TemplatesMissingError

#: Text shown for a missing value (``None`` in results.json).
MISSING = "—"

#: Name of the template that the HTML renderer starts from.
ENTRY_TEMPLATE = "dossier.html.j2"

#: Prefix under which a user template reaches the packaged version of a template it replaces.
DEFAULT_PREFIX = "default/"

#: A chart draws a line of more points than this as its envelope: the lowest and highest value
#: of each of at most :data:`DISPLAY_COLUMNS` groups of consecutive periods (display only; the
#: document keeps every value). The dossier says so under such a chart.
DISPLAY_POINTS = 5000
#: Groups of an envelope (about one per pixel column of a chart on a wide screen).
DISPLAY_COLUMNS = 1000


def packaged_templates_dir() -> Path:
    """The folder of templates shipped with reportgen.

    In a wheel, ``reportgen/templates/`` is a real folder of package data; in an editable
    install or a source checkout it is a symbolic link to the repository's ``templates/``, and
    the repository folder itself is the last fallback.
    """
    candidates: list[Path] = []
    packaged = resources.files("reportgen") / "templates"
    if isinstance(packaged, Path):
        candidates.append(packaged)
    here = Path(__file__).resolve()
    candidates.append(here.parent.parent / "templates")
    candidates.append(here.parent.parent.parent / "templates")
    for candidate in candidates:
        if (candidate / "base.html.j2").is_file():
            return candidate.resolve()
    raise TemplatesMissingError(places=", ".join(str(candidate) for candidate in candidates))


# --------------------------------------------------------------------------------------------
# Filters: formatting only.
# --------------------------------------------------------------------------------------------


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def fmt_stat(value: Any, digits: int = 4) -> str:
    """A statistic or estimate with ``digits`` significant digits (fixed notation when readable).

    ``-3.45678`` gives ``-3.457``, ``0.5`` gives ``0.5000``, ``1234.56`` gives ``1235``, and very
    small or very large magnitudes switch to scientific notation (``1.235e-05``).
    """
    if not _is_number(value):
        return MISSING
    number = float(value)
    if number == 0:
        return f"{0:.{digits - 1}f}"
    magnitude = math.floor(math.log10(abs(number)))
    if magnitude < -3 or magnitude >= 6:
        return f"{number:.{digits - 1}e}"
    decimals = max(0, digits - 1 - magnitude)
    text = f"{number:.{decimals}f}"
    if float(text) == 0:  # never show "-0.000"
        text = text.lstrip("-")
    return text


def fmt_p(value: Any, bound: str | None = None) -> str:
    """A p-value: ``0.032``; ``< 0.001`` below what three decimals show; with a table bound
    (``pvalue_bound`` of ``"<"`` or ``">"``) the edge of the table, e.g. ``< 0.01``, ``> 0.10``.
    """
    if not _is_number(value):
        return MISSING
    number = float(value)
    if bound in ("<", ">"):
        edge = f"{number:.2f}" if number >= 0.01 else f"{number:.2g}"
        return f"{bound} {edge}"
    if number < 0.001:
        return "< 0.001"
    return f"{number:.3f}"


def fmt_int(value: Any) -> str:
    """An integer count with thousands separators: ``12,480``."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return MISSING
    if isinstance(value, float):
        if not math.isfinite(value):
            return MISSING
        value = round(value)
    return f"{value:,}"


def fmt_level(significance: Any) -> str:
    """A significance level as a percentage: ``0.05`` gives ``5%``, ``0.1`` gives ``10%``."""
    if not _is_number(significance):
        return MISSING
    return f"{float(significance) * 100:g}%"


def fmt_order(order: Any) -> str:
    """An order of integration: ``I(1)``, or ``undetermined`` when none was found."""
    if isinstance(order, int) and not isinstance(order, bool):
        return f"I({order})"
    return "undetermined"


def fmt_deterministic(terms: Any) -> str:
    """Deterministic terms of a test regression in words."""
    words = {"none": "none", "constant": "constant", "constant-trend": "constant and trend"}
    if terms is None:
        return MISSING
    return words.get(str(terms), str(terms))


def fmt_bool(value: Any, true: str = "yes", false: str = "no", missing: str = "not tested") -> str:
    """``yes``/``no`` for a boolean, ``missing`` for ``None``."""
    if value is None:
        return missing
    return true if value else false


def fmt_difference_level(level: Any) -> str:
    """A differencing level in words: 0 is the series as analysed."""
    names = {0: "as analysed", 1: "first difference", 2: "second difference"}
    try:
        number = int(level)
    except (TypeError, ValueError):
        return str(level)
    return names.get(number, f"difference {number}")


def fmt_bytes(value: Any) -> str:
    """A file size: ``18,204 bytes`` (exact, so it can be checked against the file)."""
    text = fmt_int(value)
    return text if text == MISSING else f"{text} bytes"


def fmt_periods(value: Any) -> str:
    """A duration in periods: ``3.20 periods``."""
    text = fmt_stat(value, 3)
    return text if text == MISSING else f"{text} periods"


_VERDICT_SHORT: dict[str, str] = {
    "stationary": "Stationary",
    "cointegrated": "Cointegrated",
    "spurious-risk": "Spurious risk",
    "unbalanced": "Unbalanced",
    "inconclusive": "Inconclusive",
}

_VERDICT_TEXT: dict[str, str] = {
    "stationary": "Every variable is I(0): inference on the levels regression is valid.",
    "cointegrated": (
        "The integrated variables share a long-run relation: the levels relation is kept and "
        "an error-correction model describes the short run."
    ),
    "spurious-risk": (
        "Integrated variables without evidence of cointegration: the levels regression may be "
        "spurious and is re-estimated in differences."
    ),
    "unbalanced": (
        "The orders of integration cannot balance (for example an I(0) variable explained by an "
        "I(1) regressor): the levels regression is misspecified."
    ),
    "inconclusive": (
        "The tests disagree or there is too little data to decide; see the decision trail below."
    ),
}


def verdict_short(verdict: Any) -> str:
    """The verdict as a short label for tables: ``Spurious risk``."""
    return _VERDICT_SHORT.get(str(verdict), str(verdict))


def verdict_text(verdict: Any) -> str:
    """The verdict as a sentence that says what it means for the regression."""
    return _VERDICT_TEXT.get(str(verdict), str(verdict))


def fit_heading(role: Any) -> str:
    """The heading of a fitted equation by its role.

    A parenthetical detail of the role is kept: ``"long-run (dynamic OLS)"`` gives
    ``Long-run relation (dynamic OLS)``.
    """
    headings = {
        "levels": "Levels regression",
        "differences": "Re-estimated in differences",
        "long-run": "Long-run relation",
        "long_run": "Long-run relation",
        "error-correction": "Error-correction model",
        "error_correction": "Error-correction model",
    }
    text = str(role).strip()
    base, separator, detail = text.partition(" (")
    if base in headings:
        return headings[base] + (f" ({detail}" if separator else "")
    return text.replace("_", " ")[:1].upper() + text.replace("_", " ")[1:]


def fmt_share(value: Any) -> str:
    """A share between 0 and 1 as a percentage with one decimal: ``0.125`` gives ``12.5%``."""
    if not _is_number(value):
        return MISSING
    return f"{float(value) * 100:.1f}%"


_CRITERIA: dict[str, str] = {"aic": "AIC", "bic": "BIC", "hqic": "HQIC", "t-stat": "t-stat", "fixed": "fixed"}


def fmt_criterion(criterion: Any) -> str:
    """A lag-selection criterion as the trade writes it: ``aic`` gives ``AIC``."""
    if criterion is None or criterion == "":
        return MISSING
    return _CRITERIA.get(str(criterion).lower(), str(criterion))


def fmt_case(case: Any) -> str:
    """The deterministic case of a Johansen or bounds test, by its number: ``3`` gives ``case 3``."""
    if isinstance(case, bool) or not isinstance(case, int):
        return MISSING if case is None else str(case)
    return f"case {case}"


def slugify(text: Any) -> str:
    """A safe fragment identifier: lower case ASCII letters, digits and single hyphens."""
    normal = unicodedata.normalize("NFKD", str(text)).encode("ascii", "ignore").decode("ascii")
    slug = re.sub(r"[^a-z0-9]+", "-", normal.lower()).strip("-")
    return slug or "item"


def unique_ids(names: Iterable[str], prefix: str, taken: set[str] | None = None) -> dict[str, str]:
    """Map each name to ``prefix-slug``, adding ``-2``, ``-3``... when two names share a slug.

    ``taken`` holds identifiers already in use on the page; it is updated in place.
    """
    used = taken if taken is not None else set()
    result: dict[str, str] = {}
    for name in names:
        base = f"{prefix}-{slugify(name)}"
        candidate, counter = base, 2
        while candidate in used:
            candidate = f"{base}-{counter}"
            counter += 1
        used.add(candidate)
        result[name] = candidate
    return result


def humanise_key(key: Any) -> str:
    """A mapping key shown as a label: ``relative_path`` gives ``Relative path``."""
    text = str(key).replace("_", " ").strip()
    return text[:1].upper() + text[1:] if text else text


#: Every filter the templates may use, registered once by :func:`build_environment`.
FILTERS: Mapping[str, Callable[..., str]] = {
    "fmt_stat": fmt_stat,
    "fmt_p": fmt_p,
    "fmt_int": fmt_int,
    "fmt_level": fmt_level,
    "fmt_order": fmt_order,
    "fmt_deterministic": fmt_deterministic,
    "fmt_bool": fmt_bool,
    "fmt_difference_level": fmt_difference_level,
    "fmt_bytes": fmt_bytes,
    "fmt_periods": fmt_periods,
    "verdict_short": verdict_short,
    "verdict_text": verdict_text,
    "fit_heading": fit_heading,
    "fmt_share": fmt_share,
    "fmt_criterion": fmt_criterion,
    "fmt_case": fmt_case,
    "slugify": slugify,
    "humanise_key": humanise_key,
}


def _is_mapping(value: Any) -> bool:
    return isinstance(value, Mapping)


def _is_list(value: Any) -> bool:
    return isinstance(value, (list, tuple))


#: Tests the templates may use in addition to jinja2's own.
TESTS: Mapping[str, Callable[[Any], bool]] = {"dict_like": _is_mapping, "list_like": _is_list}


class TemplateLoadRefusedError(SecurityError):
    """A template name or file that :class:`TemplateFolders` will not load (raised by the loader itself)."""


class TemplateFolders(jinja2.BaseLoader):
    """Loads templates by relative name from folders searched in order, and ``default/NAME`` from the last.

    A name must be a plain relative path (``partials/summary.html.j2``): an absolute name, a
    ``..`` part, a backslash or a NUL character raises :class:`TemplateLoadRefusedError`, and
    so does a file that is a link leading outside the folder it was found in. A plain name that
    no folder holds raises :class:`jinja2.TemplateNotFound`.
    """

    def __init__(self, folders: Sequence[Path]) -> None:
        self.folders = tuple(Path(folder).resolve() for folder in folders)

    @staticmethod
    def name_parts(name: str, shown: str | None = None) -> tuple[str, ...]:
        """The parts of a template name, or :class:`TemplateLoadRefusedError` for a name that is not plain.

        ``shown`` is the name as the template wrote it (with its ``default/`` prefix), for the message.
        """
        parts = tuple(part for part in name.split("/") if part not in ("", "."))
        if not parts:
            raise jinja2.TemplateNotFound(shown or name)
        if name.startswith("/") or "\\" in name or "\0" in name or ".." in parts or Path(name).is_absolute():
            raise TemplateLoadRefusedError(f"{shown or name!r} is not a template name reportgen loads: templates "
                                           "are named by a relative path inside a template folder, without '..'")
        return parts

    def get_source(self, environment: jinja2.Environment, template: str) -> tuple[str, str, Callable[[], bool]]:
        folders = self.folders
        name = template
        if template.startswith(DEFAULT_PREFIX):
            folders, name = self.folders[-1:], template[len(DEFAULT_PREFIX):]
        parts = self.name_parts(name, template)
        for folder in folders:
            candidate = folder.joinpath(*parts)
            if not candidate.is_file():
                continue
            real = candidate.resolve()
            if not real.is_relative_to(folder):
                raise TemplateLoadRefusedError(f"template {template!r} is a link to {real}, outside its template "
                                               f"folder {folder}")
            raw = real.read_bytes()
            try:
                source = raw.decode("utf-8")
            except UnicodeDecodeError as error:
                raise jinja2.TemplateSyntaxError(f"the file is not UTF-8 text (byte {error.start})", lineno=1,
                                                 name=template, filename=str(candidate)) from None
            return source, str(candidate), lambda: True
        raise jinja2.TemplateNotFound(template)


def _finalize(value: Any) -> Any:
    """Show ``None`` as the missing-value mark rather than the word ``None``."""
    return MISSING if value is None else value


def build_environment(template_dirs: Sequence[Path] = ()) -> jinja2.Environment:
    """The jinja2 environment for the dossier: user folders first, then packaged templates.

    Sandboxed (user templates may come with a client's manifest: jinja2's immutable sandbox and
    :class:`TemplateFolders`), autoescaping on for every template whatever its name,
    ``StrictUndefined``, and the filters of :data:`FILTERS`.

    Raises
    ------
    TemplateFolderMissingError
        When a user template folder does not exist.
    TemplatesMissingError
        When reportgen's own templates cannot be found.
    """
    user_dirs: list[Path] = []
    for folder in template_dirs:
        path = Path(folder)
        if not path.is_dir():
            raise TemplateFolderMissingError(path=path)
        user_dirs.append(path.resolve())
    packaged = packaged_templates_dir()
    environment = ImmutableSandboxedEnvironment(
        loader=TemplateFolders([*user_dirs, packaged]),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        finalize=_finalize,
        auto_reload=False,
    )
    environment.filters.update(FILTERS)
    environment.tests.update(TESTS)
    return environment
