"""The Python interface for notebooks: one call from a manifest to the results the command line uses.

    >>> import reportgen
    >>> results = reportgen.run("manifests/demo.yaml")  # doctest: +SKIP
    >>> results.to_frame("regressions")                 # doctest: +SKIP

``run`` returns the same :class:`~reportgen.results.Results` object that ``reportgen run`` turns
into results.json; with ``out`` it also writes the dossier, exactly as the command line would.
Bad input raises the catalogue errors of :mod:`reportgen.errors` (``error.render()`` gives the
command line's message).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from pathlib import Path

from reportgen.manifest import Manifest, load_manifest
from reportgen.provenance import document_run_id
from reportgen.results import Results, results_to_dict


def run(manifest: Path | str | Manifest, *, out: Path | str | None = None,
        formats: Sequence[str] = ("html", "pdf"), force: bool = False) -> Results:
    """Analyse a manifest (a path or a loaded :class:`~reportgen.manifest.Manifest`) and return its results.

    Parameters
    ----------
    manifest
        The manifest's path, or a manifest loaded with :func:`reportgen.manifest.load_manifest`.
    out
        When given, the dossier is also written there (results.json always, plus ``formats``),
        atomically, as ``reportgen run MANIFEST --out OUT`` writes it.
    formats
        The renderings to write with ``out``: any of ``"html"`` and ``"pdf"``; empty for results.json alone.
    force
        Replace a dossier of another manifest in ``out``.

    Returns
    -------
    Results
        Every series' order verdict and every regression's assessment (``.series``,
        ``.regressions``, ``.to_frame()``), the inputs' hashes and the provenance.
    """
    from reportgen import runner

    loaded = manifest if isinstance(manifest, Manifest) else load_manifest(manifest)
    command = ["reportgen.run", str(loaded.display_path)]
    if out is None:
        results = runner.analyse(loaded, command)
        return dataclasses.replace(results, run_id=document_run_id(results_to_dict(results)))
    outcome = runner.run(loaded.path, out, tuple(formats), command=command, force=force)
    assert outcome.results is not None
    return outcome.results
