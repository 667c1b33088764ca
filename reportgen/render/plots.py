"""Charts of the dossier as inline SVG, drawn with matplotlib's object API (never pyplot).

Every chart is drawn from values already in the results document; the only arithmetic is the
first difference of the plotted series for its lower panel, which is display. A fan chart shades
the quantile bands of simulated random walks that the statistics stage computed and stored. The SVG bytes are
deterministic (fixed hash salt, no date, text kept as text) and every ``id`` inside a chart is
prefixed with the chart's own name, so many charts can be inlined in one page without clashes.
"""

from __future__ import annotations

import html
import io
import itertools
import math
import re
from collections.abc import Mapping, Sequence
from typing import Any, cast

import matplotlib
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure
from matplotlib.ticker import AutoLocator, ScalarFormatter

from reportgen.render.environment import unique_ids

#: Fixed salt for the ids matplotlib derives from hashes (clip paths, markers).
HASH_SALT = "reportgen-dossier"
#: Width of every chart, in inches (fits an A4 text column at 72 dpi).
WIDTH = 7.0
#: Height of one panel, in inches.
PANEL_HEIGHT = 1.9
#: At most this many period labels on an x axis.
MAX_TICKS = 7

# Our own palette: ink blue for the series, copper for changes, slate for residuals.
_SERIES_COLOUR = "#1b4965"
_CHANGE_COLOUR = "#a44a1d"
_RESIDUAL_COLOURS = ("#3d405b", "#7a4e9c")
_REFERENCE_COLOUR = "#8d99ae"
# Fan charts: the observed path in copper over two tints of ink blue and a dashed median.
_FAN_OUTER = "#d6e2ec"
_FAN_INNER = "#9dbad0"
_FAN_MEDIAN = "#1b4965"
_FAN_OBSERVED = "#a44a1d"
#: Quantile labels of a fan chart's bands: outer pair, inner pair, median.
FAN_BANDS: tuple[str, ...] = ("5%", "25%", "50%", "75%", "95%")
#: Extra room above a fan chart's panel for its legend (a row between the title and the panel), in inches.
_FAN_LEGEND_ROOM = 0.2
#: Space between a fan chart's title and its panel, in points (room for the legend row).
_FAN_TITLE_PAD = 17.0

_RC: dict[str, Any] = {
    "svg.hashsalt": HASH_SALT,
    "svg.fonttype": "none",
    "svg.image_inline": True,
    "text.parse_math": False,
    "text.usetex": False,
    "font.family": "DejaVu Sans",
    "font.size": 8.0,
    "axes.titlesize": 8.5,
    "axes.titlelocation": "left",
    "axes.titley": 1.0,  # a fixed title position: no layout pass over the tick labels
    "axes.titlepad": 5.0,
    "axes.labelsize": 8.0,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.edgecolor": "#4a4e69",
    "axes.linewidth": 0.6,
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "xtick.major.width": 0.6,
    "ytick.major.width": 0.6,
    "lines.linewidth": 1.1,
    "path.simplify": False,
}

#: Style properties matplotlib writes that are also SVG presentation attributes.
_PRESENTATION = frozenset({
    "fill", "fill-opacity", "stroke", "stroke-width", "stroke-linecap", "stroke-linejoin", "stroke-dasharray",
    "stroke-dashoffset", "stroke-opacity", "stroke-miterlimit", "opacity", "font-size", "font-family",
    "font-weight", "font-style", "text-anchor", "clip-path",
})
_DEFAULT_STYLE = re.compile(r'\s*<style type="text/css">\*\{stroke-linejoin: round; stroke-linecap: butt\}</style>')
_TAG = re.compile(r"<[a-zA-Z][^<>]*>")
_STYLE_ATTRIBUTE = re.compile(r'\sstyle="([^"]*)"')
_PROLOG = re.compile(r"\A\s*(<\?xml[^>]*\?>\s*)?(<!DOCTYPE[^>]*>\s*)?", re.DOTALL)
_METADATA = re.compile(r"\s*<metadata>.*?</metadata>", re.DOTALL)
_ID = re.compile(r'\bid="([^"]+)"')
_URL_REF = re.compile(r"url\(#([^)\s]+)\)")
_HREF_REF = re.compile(r'(\b(?:xlink:)?href=")#([^"]+)"')


def _numbers(values: Sequence[Any]) -> list[float]:
    """Values as floats, with ``None`` (missing in results.json) as NaN."""
    result: list[float] = []
    for value in values:
        if value is None or isinstance(value, bool):
            result.append(math.nan)
        else:
            result.append(float(value))
    return result


def _first_difference(values: Sequence[float]) -> list[float]:
    """``values[i] - values[i - 1]`` from the second value on (display only)."""
    return [current - previous for previous, current in itertools.pairwise(values)]


def _tick_positions(count: int) -> list[int]:
    """At most :data:`MAX_TICKS` evenly spread positions, always the first and the last."""
    if count <= 0:
        return []
    if count <= MAX_TICKS:
        return list(range(count))
    step = (count - 1) / (MAX_TICKS - 1)
    return sorted({round(index * step) for index in range(MAX_TICKS)})


def _period_axis(axes: Any, dates: Sequence[str]) -> None:
    """Label an axis whose positions 0..n-1 are the periods ``dates``."""
    positions = _tick_positions(len(dates))
    axes.set_xticks(positions, [str(dates[index]) for index in positions])
    if dates:
        axes.set_xlim(-0.5, len(dates) - 0.5)


def _empty_panel(axes: Any, message: str) -> None:
    axes.text(0.5, 0.5, message, ha="center", va="center", transform=axes.transAxes, color="#555555")
    axes.set_xticks([])
    axes.set_yticks([])


def _merged_dates(first: Sequence[str], second: Sequence[str]) -> list[str]:
    """One period axis for two panels: the first panel's periods when they cover the second's."""
    if set(second) <= set(first):
        return list(first)
    return sorted(set(first) | set(second))


def _positions(dates: Sequence[str], axis_dates: Sequence[str]) -> list[int]:
    index = {date: position for position, date in enumerate(axis_dates)}
    return [index[date] for date in dates]


class _ChartWriter:
    """Draws charts on reused figures (one per panel count) and returns clean SVG.

    Creating axes and their ticks is most of the cost of a small chart, so each layout is built
    once and reset between charts: every artist drawn for a chart is removed, autoscaling and the
    default tick locators are restored, so a chart's bytes do not depend on the chart before it.
    """

    def __init__(self) -> None:
        self._layouts: dict[tuple[int, float], tuple[Figure, list[Any]]] = {}
        self.figure: Figure | None = None

    def _layout(self, count: int, room: float = 0.0) -> tuple[Figure, list[Any]]:
        """The figure of ``count`` stacked panels, with ``room`` inches more above the first."""
        key = (count, room)
        if key not in self._layouts:
            height = PANEL_HEIGHT * count + 0.35 + room
            figure = Figure(figsize=(WIDTH, height), dpi=72)
            FigureCanvasSVG(figure)
            axes = list(figure.subplots(count, 1, sharex=True, squeeze=False)[:, 0])
            figure.subplots_adjust(left=0.09, right=0.955, top=1 - (0.3 + room) / height,
                                   bottom=0.42 / height, hspace=0.38)
            for item in axes:
                item.grid(axis="y", color="#e3e6ea", linewidth=0.5)
                item.set_axisbelow(True)
            self._layouts[key] = (figure, axes)
        return self._layouts[key]

    def _panels(self, count: int, room: float = 0.0) -> list[Any]:
        figure, axes = self._layout(count, room)
        for item in axes:
            for artist in [*item.lines, *item.texts, *item.collections, *item.patches]:
                artist.remove()
            legend = item.get_legend()
            if legend is not None:
                legend.remove()
            item.set_title("")
            item.xaxis.set_major_locator(AutoLocator())
            item.xaxis.set_major_formatter(ScalarFormatter())
            item.yaxis.set_major_locator(AutoLocator())
            item.yaxis.set_major_formatter(ScalarFormatter())
            item.relim()
            item.set_autoscale_on(True)
        self.figure = figure
        return axes

    def series_chart(self, name: str, body: Mapping[str, Any]) -> str:
        """Two panels: the series as analysed and its first difference, against period labels."""
        data = body.get("data") or {}
        dates = [str(date) for date in data.get("dates") or ()]
        values = _numbers(data.get("values") or ())
        upper, lower = self._panels(2)
        lineage = body.get("lineage") or name
        upper.set_title(f"{body.get('label') or name}: {lineage}")
        lower.set_title("First difference (change from the previous period)")
        if not values:
            _empty_panel(upper, "no observations")
            _empty_panel(lower, "no observations")
        else:
            positions = list(range(len(values)))
            upper.plot(positions, values, color=_SERIES_COLOUR)
            if len(values) > 1:
                lower.plot(positions[1:], _first_difference(values), color=_CHANGE_COLOUR)
                lower.axhline(0.0, color=_REFERENCE_COLOUR, linewidth=0.6, linestyle=(0, (3, 2)))
            else:
                _empty_panel(lower, "a single observation has no difference")
            _period_axis(lower, dates)
        return self._svg(f"Chart of series {name}: levels and first differences")

    def fan_chart(self, name: str, body: Mapping[str, Any]) -> str | None:
        """The observed series over the 5-95% and 25-75% bands and the median of simulated random walks.

        The bands are the ones stored in ``body["fan_chart"]``; nothing is simulated here. A
        fan chart without dates or without any band has no chart.
        """
        fan = body.get("fan_chart")
        if not isinstance(fan, Mapping):
            return None
        fan_dates = [str(date) for date in fan.get("dates") or ()]
        raw_bands = fan.get("bands")
        bands = raw_bands if isinstance(raw_bands, Mapping) else {}
        paths = {label: _numbers(bands[label]) for label in FAN_BANDS
                 if isinstance(bands.get(label), (list, tuple)) and len(bands[label]) == len(fan_dates)}
        if not fan_dates or not paths:
            return None
        data = body.get("data") or {}
        observed_dates = [str(date) for date in data.get("dates") or ()]
        observed = _numbers(data.get("values") or ())
        if len(observed) != len(observed_dates):
            observed_dates, observed = [], []
        axis_dates = _merged_dates(fan_dates, observed_dates)
        fan_positions = _positions(fan_dates, axis_dates)
        (item,) = self._panels(1, _FAN_LEGEND_ROOM)
        item.set_title("Observed path against simulated random walks", pad=_FAN_TITLE_PAD)
        if "5%" in paths and "95%" in paths:
            item.fill_between(fan_positions, paths["5%"], paths["95%"], color=_FAN_OUTER, linewidth=0,
                              label="5–95% band")
        if "25%" in paths and "75%" in paths:
            item.fill_between(fan_positions, paths["25%"], paths["75%"], color=_FAN_INNER, linewidth=0,
                              label="25–75% band")
        if "50%" in paths:
            item.plot(fan_positions, paths["50%"], color=_FAN_MEDIAN, linewidth=0.9, linestyle=(0, (4, 2)),
                      label="median path")
        if observed:
            item.plot(_positions(observed_dates, axis_dates), observed, color=_FAN_OBSERVED, linewidth=1.2,
                      label="observed")
        item.legend(loc="lower left", bbox_to_anchor=(0.0, 1.0), ncols=4, frameon=False, fontsize=6.8,
                    borderaxespad=0.15, borderpad=0.0, handlelength=1.8, columnspacing=1.4)
        _period_axis(item, axis_dates)
        return self._svg(f"Fan chart of series {name}: observed path against bands of simulated random walks")

    def regression_chart(self, name: str, body: Mapping[str, Any]) -> str | None:
        """Residuals of the levels fit and of the differences or error-correction fit."""
        panels: list[tuple[str, list[str], list[float]]] = []
        first = body.get("levels") or body.get("long_run")
        if first and first.get("residuals"):
            panels.append(
                (
                    f"Residuals of the levels regression: {first.get('equation', '')}",
                    [str(date) for date in first.get("residual_dates") or ()],
                    _numbers(first["residuals"]),
                )
            )
        for key, title in (
            ("error_correction", "Residuals of the error-correction model"),
            ("differences", "Residuals of the regression in differences"),
        ):
            fit = body.get(key)
            if fit and fit.get("residuals"):
                panels.append(
                    (
                        f"{title}: {fit.get('equation', '')}",
                        [str(date) for date in fit.get("residual_dates") or ()],
                        _numbers(fit["residuals"]),
                    )
                )
                break
        if not panels:
            return None
        axis_dates = panels[0][1]
        for _, dates, _ in panels[1:]:
            axis_dates = _merged_dates(axis_dates, dates)
        axes = self._panels(len(panels))
        for index, (item, (title, dates, values)) in enumerate(zip(axes, panels, strict=True)):
            item.set_title(title)
            item.plot(_positions(dates, axis_dates), values, color=_RESIDUAL_COLOURS[index % 2])
            item.axhline(0.0, color=_REFERENCE_COLOUR, linewidth=0.6, linestyle=(0, (3, 2)))
        _period_axis(axes[-1], axis_dates)
        return self._svg(f"Chart of residuals of regression {name}")

    def _svg(self, description: str) -> str:
        assert self.figure is not None
        buffer = io.BytesIO()
        self.figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
        text = buffer.getvalue().decode("utf-8")
        text = _PROLOG.sub("", text, count=1)
        text = _METADATA.sub("", text, count=1)
        text = presentation_attributes(text)
        label = html.escape(description, quote=True)
        return text.replace("<svg ", f'<svg class="chart" role="img" aria-label="{label}" ', 1)


def _presentation_tag(match: re.Match[str]) -> str:
    """One tag with its ``style="a: b; c: d"`` turned into attributes ``a="b" c="d"``."""
    tag = match.group(0)
    style = _STYLE_ATTRIBUTE.search(tag)
    if style is None:
        return tag
    attributes: list[str] = []
    for declaration in style.group(1).split(";"):
        if not declaration.strip():
            continue
        name, _, value = declaration.partition(":")
        name, value = name.strip(), value.strip()
        if name not in _PRESENTATION or re.search(rf"\s{re.escape(name)}=", tag):
            return tag  # something we do not map: keep the style attribute as it is
        attributes.append(f' {name}="{value}"')
    return tag[: style.start()] + "".join(attributes) + tag[style.end():]


def presentation_attributes(svg: str) -> str:
    """Move matplotlib's inline styles into SVG presentation attributes.

    Inlined in HTML, ``style`` attributes inside an SVG go through the page's CSS machinery (and
    WeasyPrint warns about every SVG property it meets there); presentation attributes are plain
    SVG. The stylesheet matplotlib puts in every file (``*{stroke-linejoin: round; ...}``) would
    apply to the whole page once inlined, so it becomes attributes of the root element instead.
    """
    svg = _DEFAULT_STYLE.sub("", svg, count=1)
    svg = svg.replace("<svg ", '<svg stroke-linejoin="round" stroke-linecap="butt" ', 1)
    return _TAG.sub(_presentation_tag, svg)


def prefix_svg_ids(svg: str, prefix: str) -> str:
    """Prefix every ``id`` of an SVG, and every reference to it, with ``prefix-``.

    Only the tags are rewritten: a label whose text happens to read ``id="x"`` or ``url(#x)``
    (matplotlib escapes ``<`` and ``>`` in text, not quotes) is left as written.
    """
    ids = {identifier for tag in _TAG.findall(svg) for identifier in _ID.findall(tag)}
    if not ids:
        return svg

    def rename(identifier: str) -> str:
        return f"{prefix}-{identifier}" if identifier in ids else identifier

    def rename_in_tag(match: re.Match[str]) -> str:
        tag = _ID.sub(lambda found: f'id="{rename(found.group(1))}"', match.group(0))
        tag = _URL_REF.sub(lambda found: f"url(#{rename(found.group(1))})", tag)
        return _HREF_REF.sub(lambda found: f'{found.group(1)}#{rename(found.group(2))}"', tag)

    return _TAG.sub(rename_in_tag, svg)


def render_plots(document: Mapping[str, Any]) -> dict[str, str]:
    """Every chart of the dossier as an inline SVG string.

    Keys are ``"series:<name>"`` (the series as analysed above its first difference),
    ``"fan:<name>"`` (the series over the bands of simulated random walks, for a series whose
    document entry has a ``fan_chart``) and ``"regression:<name>"`` (residuals of the levels fit
    above those of the differences or error-correction fit). A regression without any residuals
    has no chart.
    """
    series: Mapping[str, Any] = document.get("series") or {}
    regressions: Mapping[str, Any] = document.get("regressions") or {}
    keys = [f"{kind}:{name}" for name in series for kind in ("series", "fan")]
    keys += [f"regression:{name}" for name in regressions]
    prefixes = unique_ids(keys, "fig")
    charts: dict[str, str] = {}
    with matplotlib.rc_context(cast(Any, _RC)):
        writer = _ChartWriter()
        for name, body in series.items():
            key = f"series:{name}"
            charts[key] = prefix_svg_ids(writer.series_chart(name, body), prefixes[key])
            fan = writer.fan_chart(name, body)
            if fan is not None:
                charts[f"fan:{name}"] = prefix_svg_ids(fan, prefixes[f"fan:{name}"])
        for name, body in regressions.items():
            key = f"regression:{name}"
            chart = writer.regression_chart(name, body)
            if chart is not None:
                charts[key] = prefix_svg_ids(chart, prefixes[key])
    return charts
