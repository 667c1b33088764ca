"""The run's results and their JSON form, the single source of truth for every output.

``results.json`` is written first; the HTML, the PDF and the audit commands read it and nothing
else. Its form is versioned (``SCHEMA_VERSION``), its keys come in a fixed order and its floats
follow one formatting policy (12 significant digits), so the same inputs give the same bytes.
"""

from __future__ import annotations

import dataclasses
import functools
import html
import json
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, TextIO

import pandas as pd

from reportgen.cache import ResultCache
from reportgen.stats.types import OrderVerdict, RegressionAssessment

SCHEMA_VERSION = "1.0"
#: Significant digits kept for every float written to results.json.
FLOAT_DIGITS = 12

CAUTIONS: tuple[str, ...] = (
    "These diagnostics inform professional judgement; they do not replace it.",
    "Every result depends on the sample, the transforms and the specification chosen in the "
    "manifest; a different window or deterministic specification can change an order or a verdict.",
    "Unit-root and stationarity tests have low power in short samples and near the unit root: "
    "a failure to reject is not evidence that the null hypothesis is true.",
    "The R-squared above Durbin-Watson sign (Granger and Newbold 1974) is a weak flag in short "
    "samples; it is shown as a prompt to look further, not as a test.",
)


#: The role of an input that is a query on a database server: its bytes are the snapshot of the result.
SERVER_QUERY_ROLE = "server-query"


@dataclass(frozen=True, slots=True)
class InputRecord:
    """One input: what it is, where it was read, and the SHA-256 of its bytes.

    A server query (role :data:`SERVER_QUERY_ROLE`) has no file: its path is the server's URL
    without the password and its bytes are the snapshot of the result (``sources.snapshot_bytes``).
    """

    role: str  # "manifest", "data", "server-query" or "brand" (a brand template or logo, see reportgen.branding)
    name: str  # dataset name, "manifest", or "brand:logo" / "brand:templates/PATH"
    path: str  # as resolved at run time (absolute); a server's redacted URL
    relative_path: str  # relative to the manifest's folder, as written in the manifest; a server's redacted URL
    sha256: str
    bytes: int


@dataclass(frozen=True, slots=True)
class DatasetRecord:
    """A loaded dataset: its frequency, its period range and its size."""

    name: str
    path: str
    index_column: str
    frequency: str
    frequency_source: str  # "declared" or "inferred"
    rows: int
    start: str
    end: str
    columns: tuple[str, ...]
    table_sha256: str  # SHA-256 of the parsed table in a canonical form
    notes: tuple[str, ...] = ()
    query: str | None = None  # the SELECT that read a database file, as written in the manifest
    query_sha256: str | None = None  # SHA-256 of the query's UTF-8 text
    #: The server a query ran on, without the password: dialect, driver, host, port, database, user, url_env.
    server: Mapping[str, Any] | None = None
    snapshot_sha256: str | None = None  # SHA-256 of the snapshot of a server query's result
    query_timeout: int | None = None  # seconds a server query may run (its statement timeout)


@dataclass(frozen=True, slots=True)
class SeriesRecord:
    """A series as analysed: where it came from, its values, and its order verdict."""

    name: str
    label: str
    dataset: str
    column: str
    transforms: tuple[str, ...]
    lineage: str  # e.g. "log(containers)"
    frequency: str
    start: str
    end: str
    dates: tuple[str, ...]
    values: tuple[float, ...]
    verdict: OrderVerdict
    notes: tuple[str, ...] = ()
    missing_policy: str = "error"  # the missing-data policy applied to the column
    dropped: tuple[str, ...] = ()  # empty periods before the first or after the last value, left out
    interpolated: tuple[str, ...] = ()  # interior periods filled by linear interpolation


@dataclass(frozen=True, slots=True)
class Results:
    """Everything one run produced, before any rendering."""

    tool_version: str
    run_id: str
    created: str
    project: Mapping[str, str]
    settings: Mapping[str, Any]
    inputs: tuple[InputRecord, ...]
    environment: Mapping[str, Any]
    datasets: Mapping[str, DatasetRecord]
    series: Mapping[str, SeriesRecord]
    regressions: Mapping[str, RegressionAssessment]
    regression_labels: Mapping[str, str]
    methods: Mapping[str, Any]
    cautions: tuple[str, ...] = CAUTIONS
    #: The snapshot bytes of every server query's result, by dataset (for the bundle; not in results.json).
    snapshots: Mapping[str, bytes] = dataclasses.field(default_factory=dict)
    #: Where a run with a cache keeps each series' and regression's part of results.json (not in results.json).
    parts: PartStore | None = dataclasses.field(default=None, compare=False, repr=False)

    def to_frame(self, kind: str = "series") -> pd.DataFrame:
        """A table for notebooks: one row per series (``kind="series"``) or per regression (``"regressions"``)."""
        if kind == "series":
            rows = [{"series": name, "label": record.label, "order": record.verdict.order,
                     "terms": record.verdict.deterministic.get(0), "fragile": record.verdict.fragile,
                     "nobs": len(record.values), "start": record.start, "end": record.end,
                     "frequency": record.frequency, "lineage": record.lineage, "reason": record.verdict.reason}
                    for name, record in self.series.items()]
            return pd.DataFrame(rows, columns=["series", "label", "order", "terms", "fragile", "nobs", "start", "end",
                                               "frequency", "lineage", "reason"]).set_index("series")
        if kind == "regressions":
            rows = [{"regression": name, "label": self.regression_labels.get(name, name),
                     "formula": assessment.formula, "verdict": assessment.verdict,
                     "cointegrated": assessment.cointegrated, "flagged": assessment.flagged,
                     "fragile": getattr(assessment, "fragile", False),
                     "orders": ", ".join(f"{variable}: {'?' if order is None else order}"
                                         for variable, order in assessment.orders.items())}
                    for name, assessment in self.regressions.items()]
            return pd.DataFrame(rows, columns=["regression", "label", "formula", "verdict", "cointegrated", "flagged",
                                               "fragile", "orders"]).set_index("regression")
        raise ValueError(f"kind must be 'series' or 'regressions', not {kind!r}")

    def _repr_html_(self) -> str:
        """The verdicts as an HTML table, for notebooks (every text escaped)."""
        cells = "".join(
            f"<tr><td>{html.escape(name)}</td><td>{html.escape(self.regression_labels.get(name, name))}</td>"
            f"<td><code>{html.escape(assessment.formula)}</code></td><td>{html.escape(assessment.verdict)}</td>"
            f"<td>{'yes' if assessment.flagged else 'no'}</td></tr>"
            for name, assessment in self.regressions.items())
        title = html.escape(str(self.project.get("title", "")))
        return (f"<div><strong>{title}</strong> · run <code>{html.escape(self.run_id)}</code> · "
                f"{len(self.series)} series, {len(self.regressions)} regressions"
                "<table><thead><tr><th>regression</th><th>label</th><th>formula</th><th>verdict</th>"
                f"<th>needs attention</th></tr></thead><tbody>{cells}</tbody></table></div>")


#: The field names of each dataclass met by :func:`_plain` (a run meets a few types, many times over).
_FIELD_NAMES: dict[type, tuple[str, ...]] = {}


def _plain(value: Any) -> Any:
    """Turn dataclasses, tuples and mappings into JSON values; floats follow the policy."""
    kind = type(value)  # the exact built-in types first: a results document is millions of them
    if kind is float:
        return float(format(value, f".{FLOAT_DIGITS}g")) if math.isfinite(value) else None
    if kind is str or kind is int or kind is bool or value is None:
        return value
    if kind is tuple or kind is list:
        return [_plain(item) for item in value]
    if kind is dict:
        return {str(key): _plain(item) for key, item in value.items()}
    names = _FIELD_NAMES.get(kind)
    if names is None and dataclasses.is_dataclass(kind):
        names = _FIELD_NAMES.setdefault(kind, tuple(field.name for field in dataclasses.fields(kind)))
    if names is not None:
        return {name: _plain(getattr(value, name)) for name in names}
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: _plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, Mapping):
        return {str(key): _plain(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(item) for item in value]
    if isinstance(value, bool) or value is None or isinstance(value, (str, int)):
        return value
    if isinstance(value, float):
        if not math.isfinite(value):
            return None
        return float(format(value, f".{FLOAT_DIGITS}g"))
    if hasattr(value, "item"):  # numpy scalars
        return _plain(value.item())
    raise TypeError(f"cannot write {type(value).__name__} to results.json")


def summary_counts(regressions: Mapping[str, RegressionAssessment]) -> dict[str, int]:
    """How many regressions got each verdict, and how many are flagged."""
    counts = dict.fromkeys(("stationary", "cointegrated", "spurious-risk", "unbalanced", "inconclusive"), 0)
    for assessment in regressions.values():
        counts[assessment.verdict] += 1
    counts["flagged"] = sum(1 for assessment in regressions.values() if assessment.flagged)
    return counts


class DocumentPart(dict):  # type: ignore[type-arg]
    """A series' or regression's part of a results document that also holds its JSON text.

    ``text`` is the part as :func:`dump` writes it inside ``"series"`` or ``"regressions"``, so a
    run that takes it from the cache writes it as it is instead of encoding it again. Any change
    made through the mapping drops the text (the part is then encoded as usual); the values inside
    are the document's and are not changed in place by anything that reads it.
    """

    __slots__ = ("text",)

    def __init__(self, content: Mapping[str, Any], text: str | None) -> None:
        super().__init__(content)
        self.text = text

    def __setitem__(self, key: str, value: Any) -> None:
        self.text = None
        super().__setitem__(key, value)

    def __delitem__(self, key: str) -> None:
        self.text = None
        super().__delitem__(key)

    def __ior__(self, other: Any) -> DocumentPart:
        self.text = None
        return super().__ior__(other)  # type: ignore[return-value]

    def clear(self) -> None:
        self.text = None
        super().clear()

    def pop(self, *arguments: Any) -> Any:
        self.text = None
        return super().pop(*arguments)

    def popitem(self) -> tuple[str, Any]:
        self.text = None
        return super().popitem()

    def setdefault(self, key: str, default: Any = None) -> Any:
        self.text = None
        return super().setdefault(key, default)

    def update(self, *arguments: Any, **named: Any) -> None:
        self.text = None
        super().update(*arguments, **named)

    def __reduce__(self) -> tuple[Any, ...]:
        return (DocumentPart, (dict(self), self.text))


#: The indentation of a series' or regression's part in results.json (inside "series" or "regressions").
BODY_INDENT = "    "


def _series_body(records: Mapping[str, SeriesRecord], name: str) -> dict[str, Any]:
    record = records[name]  # looked up only here: the runner may build a record on first use
    verdict = _plain(record.verdict)
    return {
        "label": record.label,
        "dataset": record.dataset,
        "column": record.column,
        "transforms": list(record.transforms),
        "lineage": record.lineage,
        "frequency": record.frequency,
        "start": record.start,
        "end": record.end,
        "nobs": len(record.values),
        "missing": {"policy": record.missing_policy, "dropped": list(record.dropped),
                    "interpolated": list(record.interpolated)},
        "order": verdict["order"],
        "reason": verdict["reason"],
        "deterministic": verdict["deterministic"],
        "deterministic_reasons": verdict["deterministic_reasons"],
        "trail": verdict["trail"],
        "fragile": verdict["fragile"],
        "fragile_reason": verdict["fragile_reason"],
        "tests": verdict["tests"],
        "grid": verdict["grid"],
        "fan_chart": verdict["fan_chart"],
        "notes": list(record.notes) + verdict["notes"],
        "data": {"dates": list(record.dates), "values": _plain(record.values)},
    }


def _regression_body(assessment: RegressionAssessment, label: str) -> dict[str, Any]:
    body = _plain(assessment)
    body.pop("name")
    body["label"] = label
    return body


PART_KINDS = {"series": "series-part", "regressions": "regression-part"}


@dataclass(frozen=True, slots=True)
class PartStore:
    """The parts of a results document that a run's cache holds or should hold (see :func:`results_to_dict`).

    ``keys`` names each part's text entry (``"series"`` or ``"regressions"``, then the name): the
    SHA-256 of everything the part is made of, so an entry found is the part as it would be
    built. ``found`` holds the parts the runner has already read.
    """

    cache: ResultCache
    keys: Mapping[str, Mapping[str, str]]
    found: Mapping[str, Mapping[str, DocumentPart]] = dataclasses.field(default_factory=dict)


def load_part(cache: ResultCache, section: str, key: str) -> DocumentPart | None:
    """The part of ``section`` (``"series"`` or ``"regressions"``) stored under ``key``, or None."""
    text = cache.load_text(PART_KINDS[section], key)
    if text is None:
        return None
    try:
        content = json.loads(text)
    except ValueError:
        content = None
    if type(content) is not dict:
        cache.stats.rejected += 1
        return None
    return DocumentPart(content, text)


def _part(parts: PartStore | None, section: str, name: str,
          build: Callable[[], dict[str, Any]]) -> dict[str, Any]:
    """A part of the document: read already, else from its text entry, else built (and its text stored)."""
    key = None if parts is None else parts.keys.get(section, {}).get(name)
    if parts is None or key is None:
        return build()
    found = parts.found.get(section, {}).get(name)
    if found is None:
        found = load_part(parts.cache, section, key)
    if found is not None:
        return found
    body = build()
    text = _encoded(body, BODY_INDENT)
    parts.cache.store_text(PART_KINDS[section], key, text)
    return DocumentPart(body, text)


def results_to_dict(results: Results) -> dict[str, Any]:
    """The JSON form of a run (see DESIGN.md, "Contracts"), keys in a fixed order.

    Where the results carry :attr:`~Results.parts` (a run with a cache), each series' and
    regression's part is taken from the cache, else built and stored there: an incremental run
    then neither rebuilds nor re-encodes the parts that did not change. The document is the same.
    """
    parts = results.parts
    series = {name: _part(parts, "series", name, functools.partial(_series_body, results.series, name))
              for name in results.series}
    regressions = {name: _part(parts, "regressions", name,
                               functools.partial(_regression_body, assessment,
                                                 results.regression_labels.get(name, name)))
                   for name, assessment in results.regressions.items()}
    return {
        "schema_version": SCHEMA_VERSION,
        "tool_version": results.tool_version,
        "run_id": results.run_id,
        "created": results.created,
        "project": _plain(results.project),
        "settings": _plain(results.settings),
        "inputs": _plain(results.inputs),
        "environment": _plain(results.environment),
        "datasets": _plain(results.datasets),
        "series": series,
        "regressions": regressions,
        "summary": summary_counts(results.regressions),
        "methods": _plain(results.methods),
        "cautions": list(results.cautions),
    }


def dumps(document: Mapping[str, Any]) -> str:
    """Serialise a results document: fixed indentation, key order as built, UTF-8 text."""
    return json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def dump(document: Mapping[str, Any], stream: TextIO) -> None:
    """Write :func:`dumps`' text to ``stream`` piece by piece, never holding all of it (documents of many series).

    The text is the same, byte for byte, as :func:`dumps` writes; each series and regression is
    encoded on its own by :func:`_encoded` (a direct encoder, a fifth to a quarter faster than the
    json module's indenting one, which runs in Python too), so only one of them is held at a time.
    """
    stream.write("".join(_pieces(document, "", 2)) if not document else "{")
    if not document:
        stream.write("\n")
        return
    inner = "\n  "
    for position, (key, value) in enumerate(document.items()):
        stream.write(("," if position else "") + inner + _key(key) + ": ")
        if type(value) is dict and value and key in ("series", "regressions"):
            stream.write("{")
            for number, (name, body) in enumerate(value.items()):
                text = body.text if type(body) is DocumentPart and body.text is not None else None
                stream.write(("," if number else "") + "\n" + BODY_INDENT + _key(name) + ": "
                             + (text if text is not None else _encoded(body, BODY_INDENT)))
            stream.write("\n  }")
        else:
            stream.write(_encoded(value, "  "))
    stream.write("\n}\n")


_STRING = json.encoder.encode_basestring  # the C function where available: ensure_ascii=False


def _float(value: float) -> str:
    if value != value or value in (math.inf, -math.inf):
        raise ValueError(f"Out of range float values are not JSON compliant: {value!r}")
    return float.__repr__(value)


def _scalar(value: Any) -> str:
    """A str, int, float, bool or None as json writes it."""
    kind = type(value)
    if kind is float:
        return _float(value)
    if kind is str:
        return _STRING(value)
    if value is None:
        return "null"
    if kind is bool:
        return "true" if value else "false"
    return int.__repr__(value)


_SCALARS = frozenset({str, int, float, bool, type(None)})
#: Lists of one scalar type, encoded by one function each.
_SCALAR_TEXT: dict[frozenset[type], Any] = {frozenset({float}): _float, frozenset({str}): _STRING,
                                            frozenset({int}): int.__repr__}


def _key(key: Any) -> str:
    """A mapping key as json writes it (strings as they are, other scalars as their JSON text)."""
    if isinstance(key, str):
        return _STRING(key)
    if key is True or key is False or key is None:
        return _STRING({True: "true", False: "false", None: "null"}[key])
    if isinstance(key, int):
        return _STRING(int.__repr__(key))
    if isinstance(key, float):
        return _STRING(_float(key))
    raise TypeError(f"keys must be str, int, float, bool or None, not {type(key).__name__}")


def _encoded(value: Any, indent: str) -> str:
    """``value`` as ``json.dumps(value, indent=2, ensure_ascii=False, allow_nan=False)`` writes it,
    nested at ``indent`` (the text of every line after the first is preceded by it)."""
    return "".join(_pieces(value, indent, 2))


def _pieces(value: Any, indent: str, step: int) -> list[str]:
    out: list[str] = []
    append = out.append

    def encode(item: Any, current: str) -> None:
        kind = type(item)
        if kind is str:
            append(_STRING(item))
        elif item is None:
            append("null")
        elif item is True:
            append("true")
        elif item is False:
            append("false")
        elif kind is int:
            append(int.__repr__(item))
        elif kind is float:
            append(_float(item))
        elif kind is dict or isinstance(item, dict):
            if not item:
                append("{}")
                return
            inner = current + " " * step
            separator = ",\n" + inner
            append("{\n" + inner)
            first = True
            for key, member in item.items():
                if not first:
                    append(separator)
                first = False
                append(_key(key) + ": ")
                encode(member, inner)
            append("\n" + current + "}")
        elif kind is list or kind is tuple or isinstance(item, (list, tuple)):
            if not item:
                append("[]")
                return
            inner = current + " " * step
            separator = ",\n" + inner
            kinds = set(map(type, item))
            if kinds <= _SCALARS:  # the bulk of a document: series values, dates, grids, in one join
                text = separator.join(map(_SCALAR_TEXT.get(frozenset(kinds), _scalar), item))
                append("[\n" + inner + text + "\n" + current + "]")
                return
            append("[\n" + inner)
            first = True
            for member in item:
                if not first:
                    append(separator)
                first = False
                encode(member, inner)
            append("\n" + current + "]")
        elif isinstance(item, int):  # int subclasses (bool handled above), as json writes them
            append(int.__repr__(item))
        elif isinstance(item, float):
            append(_float(item))
        elif isinstance(item, str):
            append(_STRING(item))
        else:
            raise TypeError(f"Object of type {kind.__name__} is not JSON serializable")

    encode(value, indent)
    return out
