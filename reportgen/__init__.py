"""reportgen: order-of-integration and spurious-regression diagnostics as a verifiable dossier.

The command line (``reportgen run MANIFEST --out DIR``) and notebooks share one pipeline,
:func:`reportgen.runner.run`; notebooks call :func:`reportgen.run`.
The statistics in :mod:`reportgen.stats` can be used on their own.
"""

from typing import Any

__version__ = "0.1.0"
__all__ = ["__version__", "run"]


def __getattr__(name: str) -> Any:
    """``reportgen.run`` is imported on first use, so ``reportgen --version`` stays light."""
    if name == "run":
        from reportgen.api import run

        return run
    raise AttributeError(f"module 'reportgen' has no attribute {name!r}")
