"""``reportgen check MANIFEST``: everything a run checks before the statistics, and a summary of what it found.

The manifest is validated, its brand folder and logo read, every dataset read, every series built
under its missing-data policy and transforms, and every regression's sample aligned, with the same
catalogue errors as a run; no statistic is computed and nothing is written. Also
:func:`manifest_schema`, the manifest's JSON Schema, for editors.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from reportgen.branding import brand_files
from reportgen.errors import ReportgenError
from reportgen.manifest import ManifestSpec, load_manifest
from reportgen.periods import period_label
from reportgen.runner import build_series, load_tables, refuse_short_series, regression_data
from reportgen.stats.checks import check_magnitude, check_variation


@dataclass(frozen=True, slots=True)
class Preflight:
    """What a check found: one line per dataset, series and regression."""

    manifest: Path
    datasets: tuple[str, ...]
    series: tuple[str, ...]
    regressions: tuple[str, ...]

    def text(self) -> str:
        """The summary as the command line prints it."""
        lines = [f"{self.manifest}: ok, ready to run"]
        for title, items in (("datasets", self.datasets), ("series", self.series),
                             ("regressions", self.regressions)):
            lines.append(f"{title}:")
            lines.extend(f"  {item}" for item in items)
        return "\n".join(lines)


def check_manifest(path: Path | str) -> Preflight:
    """Validate a manifest and its data as a run would, without the statistics; raise the first catalogue error."""
    manifest = load_manifest(path)
    brand_files(manifest)  # the brand folder and the logo, as a run reads them first
    tables = load_tables(manifest)
    built = build_series(manifest, tables)
    refuse_short_series(manifest, built)
    for name, item in built.items():
        try:
            check_magnitude(name, item.values)
            check_variation(name, item.values)
        except ReportgenError as error:  # give it the series' manifest line, as a run does
            raise type(error)(error.message, location=manifest.locate("series", name), hint=error.hint) from None
    datasets = tuple(
        f"{name}: {table.display_path}, {len(table.periods)} {table.frequency} periods "
        f"({table.frequency_source}), {period_label(table.periods[0])} to {period_label(table.periods[-1])}"
        for name, table in tables.items())
    series = tuple(
        f"{name}: {item.lineage}, {len(item.values)} observations, {period_label(item.values.index[0])} to "
        f"{period_label(item.values.index[-1])} ({item.frequency})"
        for name, item in built.items())
    frequencies = {name: item.frequency for name, item in built.items()}
    values = {name: item.values for name, item in built.items()}
    regressions = []
    for name, formula in manifest.formulas.items():
        data = regression_data(manifest, name, values, frequencies)
        span = (f"{period_label(data.index[0])} to {period_label(data.index[-1])}" if not data.empty
                else "no common periods")
        regressions.append(f"{name}: {formula.text}, {len(data)} common observations, {span}")
    return Preflight(manifest=Path(path), datasets=datasets, series=series, regressions=tuple(regressions))


def manifest_schema() -> dict[str, Any]:
    """The manifest's JSON Schema (draft 2020-12), generated from the models that validate it."""
    schema = ManifestSpec.model_json_schema()
    return {"$schema": "https://json-schema.org/draft/2020-12/schema",
            "$id": "https://reportgen.invalid/schema/manifest-1.json",
            "title": "reportgen manifest, version 1", **schema}
