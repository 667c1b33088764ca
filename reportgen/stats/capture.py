"""Library warnings as text for the dossier's trail, never on the terminal.

Every statistics function that calls into numpy, scipy or statsmodels records the warnings those
raise with ``warnings.catch_warnings(record=True)`` and stores them in its result's notes
(:func:`warning_texts`). A caller that wants every warning raised anywhere inside a larger
computation, including those an inner function has already caught and stored, wraps it in
:func:`collecting_warnings`: inner captures forward their texts to it.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from contextvars import ContextVar

__all__ = ["collecting_warnings", "warning_texts"]

#: The collector of the innermost :func:`collecting_warnings` block, if any.
_ACTIVE: ContextVar[list[str] | None] = ContextVar("reportgen_stats_warnings", default=None)


def _text(item: warnings.WarningMessage) -> str:
    return f"{item.category.__name__}: {item.message}"


def warning_texts(caught: Sequence[warnings.WarningMessage]) -> tuple[str, ...]:
    """``"Category: message"`` for each recorded warning, once each, in the order raised.

    The texts are also passed on to the enclosing :func:`collecting_warnings` block, if any.
    """
    texts = tuple(dict.fromkeys(_text(item) for item in caught))
    collector = _ACTIVE.get()
    if collector is not None:
        collector.extend(text for text in texts if text not in collector)
    return texts


@contextmanager
def collecting_warnings() -> Iterator[list[str]]:
    """Record every warning raised inside the block, those caught by inner functions included.

    Yields a list that holds, when the block ends, each warning once as ``"Category: message"``:
    first those inner captures passed on (in the order their blocks ended), then those nothing
    inside caught. Nothing is printed. An enclosing block receives the list in turn.
    """
    outer = _ACTIVE.get()
    collected: list[str] = []
    token = _ACTIVE.set(collected)
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            yield collected
        collected.extend(text for text in dict.fromkeys(_text(item) for item in caught) if text not in collected)
    finally:
        _ACTIVE.reset(token)
    if outer is not None:
        outer.extend(text for text in collected if text not in outer)
