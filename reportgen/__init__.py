"""reportgen: order-of-integration and spurious-regression diagnostics as a verifiable dossier.

The command line (``reportgen run MANIFEST --out DIR``) and notebooks share one pipeline,
:func:`reportgen.runner.run`; the statistics in :mod:`reportgen.stats` can be used on their own.
"""

__version__ = "0.1.0"
