"""Charts of the dossier as inline SVG, drawn with matplotlib's object API (never pyplot).

Every chart is drawn from values already in the results document; the only arithmetic is
display: the first difference of the plotted series for its lower panel, the axis limits, and,
for a series longer than :data:`~reportgen.render.environment.DISPLAY_POINTS`, the lowest and
highest value of each group of consecutive periods (an envelope of at most
:data:`~reportgen.render.environment.DISPLAY_COLUMNS` groups, so a long series draws as fast as a
short one and looks the same at any resolution a page can show). A fan chart shades the quantile
bands of simulated random walks that the statistics stage computed and stored.

Speed: each kind of chart has one figure, built once per process, whose artists (lines, band
outlines, texts) are updated with the next chart's data rather than created again; the SVG
renderer remembers the size of every text it has measured. A chart's bytes depend on its own data
only, never on the charts drawn before it in the same process, so charts drawn in any order, in
one process or several (see :func:`render_plots`'s ``executor``), are identical.

The SVG is deterministic (fixed hash salt, no date, text kept as text) and lean: styles become
presentation attributes, matplotlib's id-only wrapper groups are dropped, path coordinates are
written to a hundredth of a point, and every ``id`` is prefixed with the chart's own name so many
charts can be inlined in one page without clashes.
"""

from __future__ import annotations

import html
import io
import itertools
import math
import re
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from typing import Any, Protocol, TypeVar, cast

import matplotlib
import numpy as np
from matplotlib.backends.backend_mixed import MixedModeRenderer
from matplotlib.backends.backend_svg import FigureCanvasSVG, RendererSVG
from matplotlib.figure import Figure
from matplotlib.font_manager import FontProperties
from matplotlib.lines import Line2D
from matplotlib.patches import PathPatch, Rectangle
from matplotlib.path import Path as DrawingPath
from matplotlib.textpath import TextToPath
from matplotlib.ticker import AutoLocator, ScalarFormatter
from matplotlib.transforms import offset_copy

from reportgen.render.environment import DISPLAY_COLUMNS, DISPLAY_POINTS, unique_ids

#: Fixed salt for the ids matplotlib derives from hashes (clip paths, markers).
HASH_SALT = "reportgen-dossier"
#: Width of every chart, in inches (fits an A4 text column at 72 dpi).
WIDTH = 7.0
#: Height of one panel, in inches.
PANEL_HEIGHT = 1.9
#: At most this many period labels on an x axis.
MAX_TICKS = 7
#: Share of the data range left free above and below the data (matplotlib's default margin).
MARGIN = 0.05

# Our own palette: ink blue for the series, copper for changes, slate for residuals.
_SERIES_COLOUR = "#1b4965"
_CHANGE_COLOUR = "#a44a1d"
_RESIDUAL_COLOURS = ("#3d405b", "#7a4e9c")
_REFERENCE_COLOUR = "#8d99ae"
_MESSAGE_COLOUR = "#555555"
_GRID_COLOUR = "#e3e6ea"
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
_DASHED = (0, (3, 2))

#: matplotlib settings every chart is drawn under (fonts, sizes, the SVG hash salt, text kept as text).
RC_PARAMS: dict[str, Any] = {
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
_ANY_TAG = re.compile(r"<(/?)([a-zA-Z][\w:.-]*)([^<>]*)>")
_STYLE_ATTRIBUTE = re.compile(r'\sstyle="([^"]*)"')
_PROLOG = re.compile(r"\A\s*(<\?xml[^>]*\?>\s*)?(<!DOCTYPE[^>]*>\s*)?", re.DOTALL)
_METADATA = re.compile(r"\s*<metadata>.*?</metadata>", re.DOTALL)
_ID = re.compile(r'\bid="([^"]+)"')
_URL_REF = re.compile(r"url\(#([^)\s]+)\)")
_HREF_REF = re.compile(r'(\b(?:xlink:)?href=")#([^"]+)"')
_PLAIN_GROUP = re.compile(r'\s+id="[^"]*"\s*')
_PATH_DATA = re.compile(r'\sd="([^"]*)"')
_DIGITS = re.compile(r"(?<=\.\d\d)\d+")  # the digits after the hundredths
_NO_ROTATION = re.compile(r'\stransform="rotate\(-?0 [-\d.e]+ [-\d.e]+\)"')
_BLANK_LINES = re.compile(r"\n\s*\n")


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


def _merged_dates(first: Sequence[str], second: Sequence[str]) -> list[str]:
    """One period axis for two panels: the first panel's periods when they cover the second's."""
    if set(second) <= set(first):
        return list(first)
    return sorted(set(first) | set(second))


def _positions(dates: Sequence[str], axis_dates: Sequence[str]) -> list[int]:
    index = {date: position for position, date in enumerate(axis_dates)}
    return [index[date] for date in dates]


def is_downsampled(count: int) -> bool:
    """Whether a line of ``count`` points is drawn as its envelope (see the module docstring)."""
    return count > DISPLAY_POINTS


def _envelope(positions: Sequence[float], values: Sequence[float]) -> tuple[list[float], list[float]]:
    """The points a line of many values is drawn with: each group's lowest and highest, in period order.

    Up to :data:`DISPLAY_POINTS` values are returned as they are. A group without any finite
    value becomes a gap (NaN), as a missing value is in a short series.
    """
    count = len(values)
    if not is_downsampled(count):
        return list(positions), list(values)
    size = math.ceil(count / DISPLAY_COLUMNS)
    groups = math.ceil(count / size)
    padded = np.full(groups * size, np.nan)
    padded[:count] = values
    where = np.full(groups * size, np.nan)
    where[:count] = positions
    block = padded.reshape(groups, size)
    places = where.reshape(groups, size)
    finite = np.isfinite(block)
    lowest = np.where(finite, block, np.inf).argmin(axis=1)
    highest = np.where(finite, block, -np.inf).argmax(axis=1)
    xs: list[float] = []
    ys: list[float] = []
    for group in range(groups):
        if not finite[group].any():
            xs.append(float(places[group, 0]))
            ys.append(math.nan)
            continue
        for column in sorted({int(lowest[group]), int(highest[group])}):
            xs.append(float(places[group, column]))
            ys.append(float(block[group, column]))
    return xs, ys


def _band_envelope(positions: Sequence[float], lower: Sequence[float],
                   upper: Sequence[float]) -> tuple[list[float], list[float], list[float]]:
    """A band of many periods drawn over groups: the group's lowest lower and highest upper bound."""
    count = len(positions)
    if not is_downsampled(count):
        return list(positions), list(lower), list(upper)
    size = math.ceil(count / DISPLAY_COLUMNS)
    xs: list[float] = []
    lows: list[float] = []
    highs: list[float] = []
    for start in range(0, count, size):
        stop = min(start + size, count)
        below = [value for value in lower[start:stop] if math.isfinite(value)]
        above = [value for value in upper[start:stop] if math.isfinite(value)]
        xs.append((positions[start] + positions[stop - 1]) / 2)
        lows.append(min(below) if below and above else math.nan)
        highs.append(max(above) if below and above else math.nan)
    return xs, lows, highs


def _band_path(positions: Sequence[float], lower: Sequence[float], upper: Sequence[float]) -> DrawingPath:
    """The area between two lines as closed polygons, one per run of periods where both are known."""
    vertices: list[tuple[float, float]] = []
    codes: list[int] = []
    run: list[int] = []

    def close() -> None:
        if not run:
            return
        outline = [(positions[i], upper[i]) for i in run] + [(positions[i], lower[i]) for i in reversed(run)]
        vertices.extend([*outline, outline[0]])
        codes.extend([DrawingPath.MOVETO] + [DrawingPath.LINETO] * (len(outline) - 1) + [DrawingPath.CLOSEPOLY])
        run.clear()

    for index in range(len(positions)):
        if math.isfinite(lower[index]) and math.isfinite(upper[index]):
            run.append(index)
        else:
            close()
    close()
    if not vertices:
        return DrawingPath(np.empty((0, 2)))
    return DrawingPath(vertices, codes)


def _limits(groups: Iterable[Iterable[float]], *, include_zero: bool = False) -> tuple[float, float]:
    """The y range of a panel: its finite values (and 0 with a reference line) plus the margin."""
    low, high = math.inf, -math.inf
    for values in groups:
        for value in values:
            if math.isfinite(value):
                low, high = min(low, value), max(high, value)
    if include_zero:
        low, high = min(low, 0.0), max(high, 0.0)
    if low > high:
        return (0.0, 1.0)
    largest = max(abs(low), abs(high))
    if largest < 1e-300 or high - low <= largest * 1e-15:  # a flat line: widen it by the margin around itself
        low, high = (-MARGIN, MARGIN) if largest < 1e-300 else (low - MARGIN * abs(low), high + MARGIN * abs(high))
    margin = (high - low) * MARGIN
    return (low - margin, high + margin)


# --------------------------------------------------------------------------------------------
# SVG output
# --------------------------------------------------------------------------------------------

#: Sizes of texts measured so far, by text and font (a pure function of both, so keeping them
#: changes no byte of a chart). Cleared when it grows past :data:`_TEXT_SIZE_LIMIT` entries.
_TEXT_SIZES: dict[tuple[Any, ...], tuple[float, float, float]] = {}
_TEXT_SIZE_LIMIT = 20_000


class _MeasuringRendererSVG(RendererSVG):
    """matplotlib's SVG renderer, remembering text sizes across charts.

    Laying out ticks and titles measures every text several times, and matplotlib's own cache
    lives only as long as one renderer, that is one chart.
    """

    def get_text_width_height_descent(self, s: str, prop: Any, ismath: Any) -> tuple[float, float, float]:
        key = (s, ismath, tuple(prop.get_family()), prop.get_style(), prop.get_variant(), prop.get_weight(),
               prop.get_stretch(), prop.get_size_in_points(), prop.get_file(), prop.get_math_fontfamily())
        size = _TEXT_SIZES.get(key)
        if size is None:
            if len(_TEXT_SIZES) >= _TEXT_SIZE_LIMIT:
                _TEXT_SIZES.clear()
            size = _TEXT_SIZES[key] = tuple(super().get_text_width_height_descent(s, prop, ismath))
        return size


def figure_svg(figure: Figure) -> str:
    """The figure as SVG text: what ``figure.savefig(buffer, format="svg", metadata={"Date": None,
    "Creator": None})`` writes, drawn by :class:`_MeasuringRendererSVG`."""
    buffer = io.StringIO()
    width, height = figure.get_size_inches()
    renderer = MixedModeRenderer(
        figure, width, height, 72,
        _MeasuringRendererSVG(width * 72, height * 72, buffer, image_dpi=72,
                              metadata={"Date": None, "Creator": None}))
    figure.draw(renderer)
    renderer.finalize()
    return buffer.getvalue()


def _short_path(match: re.Match[str]) -> str:
    """A path's data with its coordinates cut to hundredths of a point (one regular expression, no callback)."""
    data = _DIGITS.sub("", " ".join(match.group(1).split()))
    return ' d="' + data + '"'


def _styles_as_attributes(tag: str) -> str:
    """One tag with its ``style="a: b; c: d"`` turned into attributes ``a="b" c="d"``."""
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


def _finish(svg: str, prefix: str, description: str) -> str:
    """matplotlib's SVG made ready to inline: see the module docstring (one pass over the tags)."""
    svg = _PROLOG.sub("", svg, count=1)
    svg = _METADATA.sub("", svg, count=1)
    svg = _DEFAULT_STYLE.sub("", svg, count=1)
    unwrapped: list[bool] = []

    def tag(match: re.Match[str]) -> str:
        closing, name, rest = match.groups()
        if name == "g":
            if closing:
                return "" if unwrapped.pop() else "</g>"
            empty = rest.rstrip().endswith("/")
            body = rest.rstrip().removesuffix("/")
            plain = _PLAIN_GROUP.fullmatch(body) is not None or not body.strip()
            if empty:
                return "" if plain else match.group(0)
            unwrapped.append(plain)
            if plain:
                return ""
        if closing:
            return match.group(0)
        text = _styles_as_attributes(match.group(0))
        text = _ID.sub(lambda found: f'id="{prefix}-{found.group(1)}"', text)
        text = _URL_REF.sub(lambda found: f"url(#{prefix}-{found.group(1)})", text)
        text = _HREF_REF.sub(lambda found: f'{found.group(1)}#{prefix}-{found.group(2)}"', text)
        if name == "path":
            text = _PATH_DATA.sub(_short_path, text, count=1)
        elif name == "text":
            text = _NO_ROTATION.sub("", text, count=1)
        return text

    svg = _ANY_TAG.sub(tag, svg)
    svg = _BLANK_LINES.sub("\n", svg).strip()
    label = html.escape(description, quote=True)
    return svg.replace("<svg ", f'<svg class="chart" role="img" aria-label="{label}" stroke-linejoin="round" '
                                'stroke-linecap="butt" ', 1)


def presentation_attributes(svg: str) -> str:
    """Move matplotlib's inline styles into SVG presentation attributes.

    Inlined in HTML, ``style`` attributes inside an SVG go through the page's CSS machinery (and
    WeasyPrint warns about every SVG property it meets there); presentation attributes are plain
    SVG. The stylesheet matplotlib puts in every file (``*{stroke-linejoin: round; ...}``) would
    apply to the whole page once inlined, so it becomes attributes of the root element instead.
    """
    svg = _DEFAULT_STYLE.sub("", svg, count=1)
    svg = svg.replace("<svg ", '<svg stroke-linejoin="round" stroke-linecap="butt" ', 1)
    return _TAG.sub(lambda match: _styles_as_attributes(match.group(0)), svg)


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


# --------------------------------------------------------------------------------------------
# Figures, built once and redrawn
# --------------------------------------------------------------------------------------------


#: Length of a tick mark and the gap between it and its label, in points (matplotlib's defaults).
_TICK_LENGTH = 3.5
_TICK_PAD = 3.5
_TICK_LABEL_SIZE = 7.0


class _Panel:
    """One axes of a reused figure and the artists every chart updates.

    matplotlib's own axis machinery (a tick object of five artists per tick, label bounding
    boxes measured on every draw) is most of the cost of a small chart, so the axes' own axis
    lines are hidden and the panel draws its ticks itself: all tick marks of an axis as one
    path, the grid as one path, and the labels as texts from a pool. Labels are those
    matplotlib would write: the y ticks come from the axis' locator and formatter.
    """

    def __init__(self, figure: Figure, axes: Any, colour: str, *, x_labels: bool = True) -> None:
        self.figure = figure
        self.axes = axes
        self.show_x_labels = x_labels
        axes.xaxis.set_visible(False)
        axes.yaxis.set_visible(False)
        box = axes.get_position()
        width_in, height_in = figure.get_size_inches()
        self.mark_x = _TICK_LENGTH / (box.height * height_in * 72)  # tick length in axes fractions
        self.mark_y = _TICK_LENGTH / (box.width * width_in * 72)
        self.grid = Line2D([], [], color=_GRID_COLOUR, linewidth=0.5, transform=axes.get_yaxis_transform(),
                           zorder=0.5, clip_on=False, solid_capstyle="projecting")
        self.x_marks = Line2D([], [], color="black", linewidth=0.6, transform=axes.get_xaxis_transform(),
                              clip_on=False, zorder=2.5)
        self.y_marks = Line2D([], [], color="black", linewidth=0.6, transform=axes.get_yaxis_transform(),
                              clip_on=False, zorder=2.5)
        for artist in (self.grid, self.x_marks, self.y_marks):
            axes.add_line(artist)
        self.line = Line2D([], [], color=colour)
        axes.add_line(self.line)
        self.zero = axes.axhline(0.0, color=_REFERENCE_COLOUR, linewidth=0.6, linestyle=_DASHED)
        self.message = axes.text(0.5, 0.5, "", ha="center", va="center", transform=axes.transAxes,
                                 color=_MESSAGE_COLOUR, visible=False)
        self.offset = axes.text(1.0, 1.0, "", ha="right", va="baseline", fontsize=_TICK_LABEL_SIZE, visible=False,
                                transform=offset_copy(axes.transAxes, fig=figure, y=3.0, units="points"))
        self._x_place = offset_copy(axes.get_xaxis_transform(), fig=figure, y=-(_TICK_LENGTH + _TICK_PAD),
                                    units="points")
        self._y_place = offset_copy(axes.get_yaxis_transform(), fig=figure, x=-(_TICK_LENGTH + _TICK_PAD),
                                    units="points")
        self._x_labels: list[Any] = []
        self._y_labels: list[Any] = []
        self.locator = AutoLocator()
        self.formatter = ScalarFormatter()
        axes.yaxis.set_major_locator(self.locator)
        axes.yaxis.set_major_formatter(self.formatter)

    def _labels(self, pool: list[Any], count: int, *, x: bool) -> list[Any]:
        """``count`` label texts of one axis, visible; the rest of its pool hidden.

        Each label has its own z-order, so labels are drawn in the same order however the pool
        grew (matplotlib draws artists of equal z-order in the order they were added).
        """
        while len(pool) < count:
            order = (3.01 if x else 3.02) + len(pool) * 1e-5
            if x:
                text = self.axes.text(0.0, 0.0, "", ha="center", va="top", fontsize=_TICK_LABEL_SIZE,
                                      transform=self._x_place, clip_on=False, zorder=order)
            else:
                text = self.axes.text(0.0, 0.0, "", ha="right", va="center_baseline", fontsize=_TICK_LABEL_SIZE,
                                      transform=self._y_place, clip_on=False, zorder=order)
            pool.append(text)
        for index, text in enumerate(pool):
            text.set_visible(index < count)
        return pool[:count]

    def reset(self, title: str, *, pad: float | None = None) -> None:
        """Back to the state of a new panel: no data, no ticks, no message."""
        self.axes.set_title(title, pad=pad)
        for artist in (self.line, self.grid, self.x_marks, self.y_marks):
            artist.set_data([], [])
        self.line.set_visible(False)
        self.zero.set_visible(False)
        self.message.set_visible(False)
        self.offset.set_visible(False)
        self._labels(self._x_labels, 0, x=True)
        self._labels(self._y_labels, 0, x=False)

    def draw_line(self, positions: Sequence[float], values: Sequence[float], *, zero: bool = False) -> None:
        xs, ys = _envelope(positions, values)
        self.line.set_data(xs, ys)
        self.line.set_visible(True)
        self.zero.set_visible(zero)

    def x_axis(self, dates: Sequence[str], positions: Sequence[int]) -> None:
        """Periods 0..len(dates)-1 across the panel, with ticks (and labels) at ``positions``."""
        self.axes.set_xlim(-0.5, max(len(dates), 1) - 0.5)
        marks_x: list[float] = []
        marks_y: list[float] = []
        for position in positions:
            marks_x += [position, position, math.nan]
            marks_y += [0.0, -self.mark_x, math.nan]
        self.x_marks.set_data(marks_x, marks_y)
        if self.show_x_labels:
            for text, position in zip(self._labels(self._x_labels, len(positions), x=True), positions, strict=True):
                text.set_x(position)
                text.set_text(str(dates[position]))

    def y_axis(self, limits: tuple[float, float]) -> None:
        """The y range, with the ticks, grid and labels matplotlib's locator and formatter give it."""
        low, high = limits
        self.axes.set_ylim(low, high)
        tolerance = (high - low) * 1e-10
        locations = [float(value) for value in self.locator() if low - tolerance <= value <= high + tolerance]
        labels = self.formatter.format_ticks(locations)
        grid_x: list[float] = []
        grid_y: list[float] = []
        marks_x: list[float] = []
        marks_y: list[float] = []
        for value in locations:
            grid_x += [0.0, 1.0, math.nan]
            grid_y += [value, value, math.nan]
            marks_x += [0.0, -self.mark_y, math.nan]
            marks_y += [value, value, math.nan]
        self.grid.set_data(grid_x, grid_y)
        self.y_marks.set_data(marks_x, marks_y)
        for text, value, label in zip(self._labels(self._y_labels, len(locations), x=False), locations, labels,
                                      strict=True):
            text.set_y(value)
            text.set_text(label)
        offset = self.formatter.get_offset()
        self.offset.set_text(offset)
        self.offset.set_visible(bool(offset))

    def empty(self, message: str) -> None:
        """A panel without data: the message in its middle, no ticks."""
        self.message.set_text(message)
        self.message.set_visible(True)
        self.axes.set_xlim(0.0, 1.0)
        self.axes.set_ylim(0.0, 1.0)


def _new_figure(count: int, room: float = 0.0) -> tuple[Figure, list[Any]]:
    """A figure of ``count`` stacked panels, with ``room`` inches more above the first."""
    height = PANEL_HEIGHT * count + 0.35 + room
    figure = Figure(figsize=(WIDTH, height), dpi=72)
    FigureCanvasSVG(figure)
    axes = list(figure.subplots(count, 1, squeeze=False)[:, 0])
    figure.subplots_adjust(left=0.09, right=0.955, top=1 - (0.3 + room) / height, bottom=0.42 / height,
                           hspace=0.38)
    figure.patch.set_visible(False)
    for item in axes:
        item.patch.set_visible(False)
    return figure, axes


def _period_axis(panels: Sequence[_Panel], dates: Sequence[str]) -> None:
    """Label the panels' shared x axis, whose positions 0..n-1 are the periods ``dates``."""
    positions = _tick_positions(len(dates))
    for panel in panels:
        panel.x_axis(dates, positions)


#: A fan chart's legend: its entries in order, with the font size and spacing in points.
_FAN_LEGEND: tuple[tuple[str, str], ...] = (("outer", "5–95% band"), ("inner", "25–75% band"),
                                            ("median", "median path"), ("observed", "observed"))
_LEGEND_SIZE = 6.8
_LEGEND_HANDLE = 1.8 * _LEGEND_SIZE
_LEGEND_TEXT_PAD = 0.8 * _LEGEND_SIZE
_LEGEND_SPACING = 1.4 * _LEGEND_SIZE
_LEGEND_RISE = 5.5  # the row's middle above the panel's top, in points


class _FanFigure:
    """The fan chart's figure: two bands, the median, the observed path and a one-row legend.

    The legend is drawn from a handle and a text per entry, placed left to right for the
    entries a chart has; the texts never change, so their widths are measured once.
    """

    def __init__(self) -> None:
        figure, (axes,) = _new_figure(1, _FAN_LEGEND_ROOM)
        self.figure = figure
        self.outer = PathPatch(DrawingPath(np.empty((0, 2))), facecolor=_FAN_OUTER, edgecolor="none", linewidth=0)
        self.inner = PathPatch(DrawingPath(np.empty((0, 2))), facecolor=_FAN_INNER, edgecolor="none", linewidth=0)
        axes.add_patch(self.outer)
        axes.add_patch(self.inner)
        self.median = Line2D([], [], color=_FAN_MEDIAN, linewidth=0.9, linestyle=(0, (4, 2)))
        axes.add_line(self.median)
        self.panel = _Panel(figure, axes, _FAN_OBSERVED)
        self.panel.line.set_linewidth(1.2)
        box = axes.get_position()
        width_in, height_in = figure.get_size_inches()
        self._per_x = 1.0 / (box.width * width_in * 72)  # axes fraction per point
        self._per_y = 1.0 / (box.height * height_in * 72)
        middle = 1.0 + _LEGEND_RISE * self._per_y
        half = 0.35 * _LEGEND_SIZE * self._per_y
        measure = TextToPath()
        font = FontProperties(size=_LEGEND_SIZE)
        self.entries: dict[str, tuple[Any, Any, float]] = {}
        for key, label in _FAN_LEGEND:
            if key in ("outer", "inner"):
                handle: Any = Rectangle((0.0, middle - half), _LEGEND_HANDLE * self._per_x, 2 * half,
                                        facecolor=_FAN_OUTER if key == "outer" else _FAN_INNER, edgecolor="none",
                                        linewidth=0, transform=axes.transAxes, clip_on=False)
                axes.add_patch(handle)
            else:
                source = self.median if key == "median" else self.panel.line
                handle = Line2D([], [], color=source.get_color(), linewidth=source.get_linewidth(),
                                linestyle=source.get_linestyle() if key == "median" else "-",
                                transform=axes.transAxes, clip_on=False)
                if key == "median":
                    handle.set_dashes((4, 2))
                axes.add_line(handle)
            text = axes.text(0.0, middle, label, ha="left", va="center", fontsize=_LEGEND_SIZE,
                             transform=axes.transAxes, clip_on=False)
            width = measure.get_text_width_height_descent(label, font, ismath=False)[0]
            self.entries[key] = (handle, text, width)

    def legend(self, shown: Sequence[str]) -> None:
        """Show the legend entries ``shown``, in the legend's order, from the panel's left edge."""
        place = 0.0
        for key, _ in _FAN_LEGEND:
            handle, text, width = self.entries[key]
            visible = key in shown
            handle.set_visible(visible)
            text.set_visible(visible)
            if not visible:
                continue
            left, right = place * self._per_x, (place + _LEGEND_HANDLE) * self._per_x
            if isinstance(handle, Rectangle):
                handle.set_x(left)
            else:
                middle = text.get_position()[1]
                handle.set_data([left, right], [middle, middle])
            text.set_x((place + _LEGEND_HANDLE + _LEGEND_TEXT_PAD) * self._per_x)
            place += _LEGEND_HANDLE + _LEGEND_TEXT_PAD + width + _LEGEND_SPACING


class ChartWriter:
    """Draws every kind of chart on figures built once, and returns their SVG text.

    ``figure`` is the figure of the chart drawn last. Use it inside ``matplotlib.rc_context``
    with :data:`RC_PARAMS`, as :func:`draw_chart` does.
    """

    def __init__(self) -> None:
        self._series: tuple[Figure, _Panel, _Panel] | None = None
        self._fan: _FanFigure | None = None
        self._residuals: dict[int, tuple[Figure, list[_Panel]]] = {}
        self.figure: Figure | None = None

    def series_chart(self, name: str, body: Mapping[str, Any]) -> str:
        """Two panels: the series as analysed and its first difference, against period labels."""
        if self._series is None:
            figure, (top, bottom) = _new_figure(2)
            self._series = (figure, _Panel(figure, top, _SERIES_COLOUR, x_labels=False),
                            _Panel(figure, bottom, _CHANGE_COLOUR))
        figure, upper, lower = self._series
        data = body.get("data") or {}
        dates = [str(date) for date in data.get("dates") or ()]
        values = _numbers(data.get("values") or ())
        if len(dates) != len(values):
            dates = (dates + [""] * len(values))[: len(values)]
        lineage = body.get("lineage") or name
        upper.reset(f"{body.get('label') or name}: {lineage}")
        lower.reset("First difference (change from the previous period)")
        self.figure = figure
        if not values:
            upper.empty("no observations")
            lower.empty("no observations")
            return figure_svg(figure)
        positions = list(range(len(values)))
        upper.draw_line(positions, values)
        upper.y_axis(_limits([values]))
        _period_axis([upper, lower], dates)
        if len(values) > 1:
            changes = _first_difference(values)
            lower.draw_line(positions[1:], changes, zero=True)
            lower.y_axis(_limits([changes], include_zero=True))
        else:
            lower.empty("a single observation has no difference")
            _period_axis([lower], dates)
        return figure_svg(figure)

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
        fan_positions: list[float] = [float(position) for position in _positions(fan_dates, axis_dates)]
        if self._fan is None:
            self._fan = _FanFigure()
        chart = self._fan
        self.figure = chart.figure
        panel = chart.panel
        panel.reset("Observed path against simulated random walks", pad=_FAN_TITLE_PAD)
        shown: list[str] = []
        plotted: list[Sequence[float]] = []
        for key, patch, (low, high) in (("outer", chart.outer, ("5%", "95%")), ("inner", chart.inner, ("25%", "75%"))):
            if low in paths and high in paths:
                xs, lows, highs = _band_envelope(fan_positions, paths[low], paths[high])
                patch.set_path(_band_path(xs, lows, highs))
                patch.set_visible(True)
                plotted += [paths[low], paths[high]]
                shown.append(key)
            else:
                patch.set_visible(False)
        chart.median.set_visible("50%" in paths)
        if "50%" in paths:
            chart.median.set_data(*_envelope(fan_positions, paths["50%"]))
            plotted.append(paths["50%"])
            shown.append("median")
        if observed:
            panel.draw_line(_positions(observed_dates, axis_dates), observed)
            plotted.append(observed)
            shown.append("observed")
        chart.legend(shown)
        panel.y_axis(_limits(plotted))
        _period_axis([panel], axis_dates)
        return figure_svg(chart.figure)

    def regression_chart(self, name: str, body: Mapping[str, Any]) -> str | None:
        """Residuals of the levels fit and of the differences or error-correction fit."""
        fits: list[tuple[str, list[str], list[float]]] = []
        first = body.get("levels") or body.get("long_run")
        if first and first.get("residuals"):
            fits.append((f"Residuals of the levels regression: {first.get('equation', '')}",
                         [str(date) for date in first.get("residual_dates") or ()], _numbers(first["residuals"])))
        for key, title in (("error_correction", "Residuals of the error-correction model"),
                           ("differences", "Residuals of the regression in differences")):
            fit = body.get(key)
            if fit and fit.get("residuals"):
                fits.append((f"{title}: {fit.get('equation', '')}",
                             [str(date) for date in fit.get("residual_dates") or ()], _numbers(fit["residuals"])))
                break
        if not fits:
            return None
        axis_dates = fits[0][1]
        for _, dates, _ in fits[1:]:
            axis_dates = _merged_dates(axis_dates, dates)
        count = len(fits)
        if count not in self._residuals:
            figure, axes = _new_figure(count)
            self._residuals[count] = (figure, [
                _Panel(figure, item, _RESIDUAL_COLOURS[index % 2], x_labels=index == count - 1)
                for index, item in enumerate(axes)])
        figure, panels = self._residuals[count]
        self.figure = figure
        for panel, (title, dates, values) in zip(panels, fits, strict=True):
            panel.reset(title)
            positions = _positions(dates, axis_dates) if len(dates) == len(values) else list(range(len(values)))
            panel.draw_line(positions, values, zero=True)
            panel.y_axis(_limits([values], include_zero=True))
        _period_axis(panels, axis_dates)
        return figure_svg(figure)


# --------------------------------------------------------------------------------------------
# Every chart of a document
# --------------------------------------------------------------------------------------------

_Item = TypeVar("_Item")
_Result = TypeVar("_Result")


class Executor(Protocol):
    """Anything with an order-preserving ``map``: :class:`concurrent.futures.Executor`, a pool, a dask client."""

    def map(self, function: Callable[[_Item], _Result], items: Iterable[_Item], /) -> Iterator[_Result]: ...


#: One chart to draw: its kind (``series``, ``fan`` or ``regression``), the name, the document
#: entry, and the prefix of the chart's ids.
ChartJob = tuple[str, str, Mapping[str, Any], str]

_DESCRIPTIONS: Mapping[str, str] = {
    "series": "Chart of series {name}: levels and first differences",
    "fan": "Fan chart of series {name}: observed path against bands of simulated random walks",
    "regression": "Chart of residuals of regression {name}",
}

#: The writer of this process (each worker of an executor has its own).
_WRITER: ChartWriter | None = None


def draw_chart(job: ChartJob, writer: ChartWriter | None = None) -> str | None:
    """One chart as inline SVG, or ``None`` when the document holds nothing to draw for it.

    A plain module-level function of plain values, so that it can be sent to worker processes;
    it draws with this process' writer unless given one.
    """
    global _WRITER
    kind, name, body, prefix = job
    with matplotlib.rc_context(cast(Any, RC_PARAMS)):
        if writer is None:
            if _WRITER is None:
                _WRITER = ChartWriter()
            writer = _WRITER
        draw = {"series": writer.series_chart, "fan": writer.fan_chart, "regression": writer.regression_chart}[kind]
        svg = draw(name, body)
    if svg is None:
        return None
    return _finish(svg, prefix, _DESCRIPTIONS[kind].format(name=name))


def chart_jobs(document: Mapping[str, Any]) -> list[ChartJob]:
    """Every chart the document can have, in page order (a fan chart may turn out to have nothing to draw)."""
    series: Mapping[str, Any] = document.get("series") or {}
    regressions: Mapping[str, Any] = document.get("regressions") or {}
    keys = [f"{kind}:{name}" for name in series for kind in ("series", "fan")]
    keys += [f"regression:{name}" for name in regressions]
    prefixes = unique_ids(keys, "fig")
    jobs: list[ChartJob] = []
    for name, body in series.items():
        jobs.append(("series", name, body, prefixes[f"series:{name}"]))
        if isinstance(body.get("fan_chart"), Mapping):
            jobs.append(("fan", name, body, prefixes[f"fan:{name}"]))
    jobs += [("regression", name, body, prefixes[f"regression:{name}"]) for name, body in regressions.items()]
    return jobs


def render_plots(document: Mapping[str, Any], executor: Executor | None = None) -> dict[str, str]:
    """Every chart of the dossier as an inline SVG string.

    Keys are ``"series:<name>"`` (the series as analysed above its first difference),
    ``"fan:<name>"`` (the series over the bands of simulated random walks, for a series whose
    document entry has a ``fan_chart``) and ``"regression:<name>"`` (residuals of the levels fit
    above those of the differences or error-correction fit). A regression without any residuals
    has no chart.

    ``executor``, when given, draws the charts through its ``map(function, items)`` (which must
    keep the order of ``items``), for example a :class:`concurrent.futures.ProcessPoolExecutor`;
    the charts are byte-identical to those drawn in this process.
    """
    jobs = chart_jobs(document)
    results: Iterable[str | None] = map(draw_chart, jobs) if executor is None else executor.map(draw_chart, jobs)
    charts: dict[str, str] = {}
    for (kind, name, _, _), svg in zip(jobs, results, strict=True):
        if svg is not None:
            charts[f"{kind}:{name}"] = svg
    return charts
