"""Progress of a run, stage by stage: what the runner reports and how the command line shows it.

The runner reports through the :class:`Progress` interface: a stage starts (with the number of
items it will handle, or None when it cannot count them), advances as items complete (in
completion order, which with worker processes is not manifest order), and finishes; ``note``
passes on a sentence that is not a count (a tidied staging folder, a cache that cannot be
written). The runner never prints.

Three displays:

- :class:`TerminalProgress`, for a terminal: one line per stage, redrawn in place (at most ten
  times a second) with the count, the share done, the rate and the time left;
- :class:`LineProgress`, for a log file or a pipe: one plain line when a stage starts, whenever
  another tenth of it is done or five seconds have passed, and when it finishes;
- :class:`SilentProgress`, for ``--quiet`` and for callers that want nothing.

:func:`progress_display` picks one for a stream; :func:`as_progress` turns a plain callable of
one string (the older interface of :func:`reportgen.runner.run`) into a :class:`Progress`.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Protocol, TextIO, runtime_checkable

#: The stages of a run, in the order they happen (names as shown).
STAGES: tuple[str, ...] = ("reading data", "order of integration", "regressions", "charts", "HTML", "PDF",
                           "tables", "bundle")


@runtime_checkable
class Progress(Protocol):
    """What the runner tells about its progress."""

    def start(self, stage: str, total: int | None = None) -> None:
        """A stage begins; ``total`` items are to come (None: not counted)."""

    def advance(self, stage: str, count: int = 1, *, item: str | None = None) -> None:
        """``count`` more items of the stage are done; ``item`` names the last one."""

    def finish(self, stage: str) -> None:
        """The stage is over."""

    def note(self, message: str) -> None:
        """A sentence to pass on that is not a count."""


class SilentProgress:
    """Shows nothing."""

    def start(self, stage: str, total: int | None = None) -> None:
        return None

    def advance(self, stage: str, count: int = 1, *, item: str | None = None) -> None:
        return None

    def finish(self, stage: str) -> None:
        return None

    def note(self, message: str) -> None:
        return None


class MessageProgress:
    """Passes each event on as one sentence to a callable (``progress=messages.append``)."""

    def __init__(self, emit: Callable[[str], object]) -> None:
        self._emit = emit
        self._counts: dict[str, tuple[int, int | None]] = {}

    def start(self, stage: str, total: int | None = None) -> None:
        self._counts[stage] = (0, total)
        self._emit(stage)

    def advance(self, stage: str, count: int = 1, *, item: str | None = None) -> None:
        done, total = self._counts.get(stage, (0, None))
        done += count
        self._counts[stage] = (done, total)
        of = f"/{total}" if total is not None else ""
        self._emit(f"{stage} {done}{of}" + (f": {item}" if item else ""))

    def finish(self, stage: str) -> None:
        self._counts.pop(stage, None)

    def note(self, message: str) -> None:
        self._emit(message)


def as_progress(progress: Progress | Callable[[str], object] | None) -> Progress:
    """A :class:`Progress` for what a caller passed: one already, a callable of one string, or None."""
    if progress is None:
        return SilentProgress()
    if isinstance(progress, Progress):
        return progress
    return MessageProgress(progress)


def format_duration(seconds: float) -> str:
    """``"4.2 s"``, ``"3 min 05 s"`` or ``"1 h 02 min"``."""
    if seconds < 60:
        return f"{seconds:.1f} s"
    minutes, rest = divmod(round(seconds), 60)
    if minutes < 60:
        return f"{minutes} min {rest:02d} s"
    hours, minutes = divmod(minutes, 60)
    return f"{hours} h {minutes:02d} min"


@dataclass(slots=True)
class _Stage:
    name: str
    total: int | None
    started: float
    done: int = 0
    item: str | None = None
    last_shown: float = 0.0
    last_share: int = 0  # tenths shown so far (LineProgress)

    def describe(self, now: float, *, final: bool = False) -> str:
        elapsed = now - self.started
        if final:
            counted = f"{self.done} done in" if self.total is not None or self.done else "done in"
            return f"{self.name}: {counted} {format_duration(elapsed)}"
        if self.total is None:
            counted = f" {self.done}" if self.done else ""
            return f"{self.name}:{counted} {format_duration(elapsed)}"
        share = self.done / self.total if self.total else 1.0
        parts = [f"{self.name}: {self.done}/{self.total} ({share:.0%})"]
        if self.done and elapsed > 0:
            rate = self.done / elapsed
            parts.append(f"{rate:.1f}/s" if rate >= 1 else f"{1 / rate:.1f} s each")
            if self.done < self.total:
                parts.append(f"about {format_duration((self.total - self.done) / rate)} left")
        return ", ".join(parts)


class TerminalProgress:
    """One line per stage, redrawn in place: ``order of integration: 120/200 (60%), 9.8/s, about 8.2 s left``."""

    #: Seconds between two redraws of the line.
    REDRAW = 0.1

    def __init__(self, stream: TextIO, clock: Callable[[], float] = time.monotonic, width: int = 100) -> None:
        self._stream = stream
        self._clock = clock
        self._width = width
        self._stages: dict[str, _Stage] = {}
        self._drawn = 0  # characters of the line on screen

    def _draw(self, text: str, *, end: str = "") -> None:
        text = text[: self._width - 1]
        padding = " " * max(0, self._drawn - len(text))
        self._stream.write(f"\r{text}{padding}{end}")
        self._stream.flush()
        self._drawn = 0 if end else len(text)

    def start(self, stage: str, total: int | None = None) -> None:
        now = self._clock()
        self._stages[stage] = _Stage(stage, total, now, last_shown=now)
        self._draw(self._stages[stage].describe(now))

    def advance(self, stage: str, count: int = 1, *, item: str | None = None) -> None:
        state = self._stages.get(stage)
        if state is None:
            return
        state.done += count
        state.item = item
        now = self._clock()
        if now - state.last_shown >= self.REDRAW or (state.total is not None and state.done >= state.total):
            state.last_shown = now
            self._draw(state.describe(now))

    def finish(self, stage: str) -> None:
        state = self._stages.pop(stage, None)
        if state is not None:
            self._draw(state.describe(self._clock(), final=True), end="\n")

    def note(self, message: str) -> None:
        self._draw(message, end="\n")


class LineProgress:
    """Plain lines for a log: at the start, at every tenth done or every five seconds, and at the end."""

    #: Seconds after which another line is written even if another tenth is not done.
    INTERVAL = 5.0

    def __init__(self, stream: TextIO, clock: Callable[[], float] = time.monotonic) -> None:
        self._stream = stream
        self._clock = clock
        self._stages: dict[str, _Stage] = {}

    def _write(self, text: str) -> None:
        self._stream.write(f"  {text}\n")
        self._stream.flush()

    def start(self, stage: str, total: int | None = None) -> None:
        now = self._clock()
        self._stages[stage] = _Stage(stage, total, now, last_shown=now)
        self._write(f"{stage}: {total} to do" if total is not None else stage)

    def advance(self, stage: str, count: int = 1, *, item: str | None = None) -> None:
        state = self._stages.get(stage)
        if state is None:
            return
        state.done += count
        now = self._clock()
        tenths = state.done * 10 // state.total if state.total else 0
        if state.total is not None and state.done >= state.total:
            return  # finish() says it
        if tenths > state.last_share or now - state.last_shown >= self.INTERVAL:
            state.last_share = max(state.last_share, tenths)
            state.last_shown = now
            self._write(state.describe(now))

    def finish(self, stage: str) -> None:
        state = self._stages.pop(stage, None)
        if state is not None:
            self._write(state.describe(self._clock(), final=True))

    def note(self, message: str) -> None:
        self._write(message)


def progress_display(stream: TextIO, *, quiet: bool = False) -> Progress:
    """The display for ``stream``: silent when ``quiet``, one updating line on a terminal, plain lines otherwise."""
    if quiet:
        return SilentProgress()
    try:
        terminal = stream.isatty()
    except (AttributeError, ValueError):  # a closed or unusual stream
        terminal = False
    return TerminalProgress(stream) if terminal else LineProgress(stream)
