"""Benchmark: an incremental run after one series changed, against the cold run that filled the cache.

Builds a project of seeded series (default 200 monthly series of 240 periods: random walks,
stationary AR(1) processes, cumulated walks and trend-stationary series) and regressions
(default 50) in a temporary folder, runs it once with an empty cache (``--format json``), changes
one value of one series and runs it again with the same cache. Prints both times, their ratio
(the target is at least 10) and the peak memory, and checks that everything the change does not
touch is identical between the two runs, and that the incremental run's results.json is the
same bytes as a run without the cache.

    python bench/incremental.py [--series 200] [--periods 240] [--regressions 50] [--jobs N] [--cli]

``--jobs`` is passed to the runs (default: every core, as the command line); ``--cli`` also
times both runs as ``reportgen run`` subprocesses, which adds the interpreter's start-up and
imports to each.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

#: The kinds of simulated series, in turn.
KINDS = ("walk", "ar1", "cumulated", "trend")


def series_values(index: int, periods: int, seed: int) -> np.ndarray:
    """The values of series ``index``: its kind by turn, its random numbers from (seed, index)."""
    rng = np.random.default_rng([seed, index])
    shocks = rng.standard_normal(periods)
    kind = KINDS[index % len(KINDS)]
    if kind == "walk":
        return 100 + np.cumsum(shocks)
    if kind == "ar1":
        values = np.empty(periods)
        values[0] = shocks[0]
        for position in range(1, periods):
            values[position] = 0.5 * values[position - 1] + shocks[position]
        return 20 + values
    if kind == "cumulated":
        return 1000 + np.cumsum(np.cumsum(shocks))
    return 10 + 0.05 * np.arange(periods) + shocks


def write_project(folder: Path, *, series: int, periods: int, regressions: int, seed: int = 2024,
                  columns_per_file: int = 500) -> Path:
    """Write the data files and the manifest of a simulated project; return the manifest's path."""
    folder.mkdir(parents=True, exist_ok=True)
    months = [f"{2000 + month // 12}-{month % 12 + 1:02d}" for month in range(periods)]
    names = [f"s{index:05d}" for index in range(series)]
    datasets: list[str] = []
    for start in range(0, series, columns_per_file):
        chunk = names[start:start + columns_per_file]
        values = np.column_stack([series_values(start + offset, periods, seed) for offset in range(len(chunk))])
        dataset = f"d{start // columns_per_file:03d}"
        lines = ["month," + ",".join(chunk)]
        lines += [months[row] + "," + ",".join(f"{value:.6f}" for value in values[row]) for row in range(periods)]
        (folder / f"{dataset}.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
        datasets.append(dataset)
    text = ["reportgen: 1", "project:", "  title: Incremental benchmark", "datasets:"]
    text += [f"  {dataset}: {{path: {dataset}.csv, index: month, frequency: monthly}}" for dataset in datasets]
    text.append("series:")
    text += [f"  {name}: {{dataset: d{index // columns_per_file:03d}, column: {name}}}"
             for index, name in enumerate(names)]
    if regressions:
        text.append("regressions:")
        rng = np.random.default_rng([seed, 10**6])
        for number in range(regressions):
            dependent, *regressors = (names[int(choice)] for choice in
                                      rng.choice(series, size=2 + number % 2, replace=False))
            text.append(f'  r{number:03d}: {{formula: "{dependent} ~ {" + ".join(regressors)}"}}')
    (folder / "manifest.yaml").write_text("\n".join(text) + "\n", encoding="utf-8")
    return folder / "manifest.yaml"


def change_one_value(folder: Path, column: str, row: int) -> None:
    """Add 1 to one cell of the first data file (row ``row`` of ``column``)."""
    path = folder / "d000.csv"
    lines = path.read_text(encoding="utf-8").splitlines()
    position = lines[0].split(",").index(column)
    cells = lines[row + 1].split(",")
    cells[position] = f"{float(cells[position]) + 1:.6f}"
    lines[row + 1] = ",".join(cells)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def peak_memory() -> str:
    """Peak resident memory of this process and of its (waited-for) children, in MiB."""
    scale = 1 if sys.platform == "darwin" else 1024  # ru_maxrss: bytes on macOS, KiB elsewhere
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * scale / 2**20
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss * scale / 2**20
    return f"{own:.0f} MiB (this process), {children:.0f} MiB (largest child process)"


def _timed_run(manifest: Path, out: Path, cache: Path | None, jobs: int | None) -> tuple[float, bytes]:
    from reportgen.runner import run

    started = time.perf_counter()
    run(manifest, out, (), command=["reportgen", "run", "manifest.yaml"], jobs=jobs, cache=cache)
    return time.perf_counter() - started, (out / "results.json").read_bytes()


def _timed_cli(manifest: Path, out: Path, cache: Path, jobs: int | None) -> float:
    command = [sys.executable, "-m", "reportgen.cli", "run", str(manifest), "--out", str(out), "--format", "json",
               "--quiet", "--cache", str(cache)] + (["--jobs", str(jobs)] if jobs else [])
    environment = {**os.environ, "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT),
                                                                            os.environ.get("PYTHONPATH")]))}
    started = time.perf_counter()
    subprocess.run(command, check=True, env=environment)
    return time.perf_counter() - started


def _uses(regression: dict[str, Any], column: str) -> bool:
    return column == regression["dependent"] or column in regression["regressors"]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=200)
    parser.add_argument("--periods", type=int, default=240)
    parser.add_argument("--regressions", type=int, default=50)
    parser.add_argument("--jobs", type=int, default=None, help="worker processes (default: every core)")
    parser.add_argument("--cli", action="store_true", help="also time the runs as reportgen subprocesses")
    options = parser.parse_args(argv)
    os.environ.setdefault("SOURCE_DATE_EPOCH", "1700000000")

    with tempfile.TemporaryDirectory(prefix="reportgen-incremental-") as scratch:
        folder = Path(scratch)
        manifest = write_project(folder / "project", series=options.series, periods=options.periods,
                                 regressions=options.regressions)
        changed = "s00000"
        print(f"{options.series} series x {options.periods} periods, {options.regressions} regressions; "
              f"jobs {options.jobs or 'auto'}; cache in {folder / 'cache'}")

        cold, cold_bytes = _timed_run(manifest, folder / "out", folder / "cache", options.jobs)
        print(f"cold run (empty cache):       {cold:7.2f} s")
        change_one_value(folder / "project", changed, row=options.periods // 2)
        warm, warm_bytes = _timed_run(manifest, folder / "out", folder / "cache", options.jobs)
        print(f"after changing {changed}:       {warm:7.2f} s")
        print(f"ratio:                        {cold / warm:7.1f}x (target at least 10x)")

        before, after = json.loads(cold_bytes), json.loads(warm_bytes)
        touched = [name for name, body in after["regressions"].items() if _uses(body, changed)]
        for name in before["series"]:
            assert (before["series"][name] == after["series"][name]) is (name != changed), name
        for name in before["regressions"]:
            if name not in touched:
                assert before["regressions"][name] == after["regressions"][name], name
        print(f"unchanged: {len(before['series']) - 1} series and {len(before['regressions']) - len(touched)} "
              f"regressions identical; recomputed {changed} and {len(touched)} regression(s) using it "
              f"({', '.join(touched) or 'none'})")
        _, fresh = _timed_run(manifest, folder / "fresh", None, options.jobs)
        assert fresh == warm_bytes, "the run from the cache differs from a run without it"
        print("results.json of the incremental run is byte-identical to a run without the cache")

        if options.cli:
            change_one_value(folder / "project", changed, row=options.periods // 2 + 1)
            cli_cold = _timed_cli(manifest, folder / "cli", folder / "cli-cache", options.jobs)
            change_one_value(folder / "project", changed, row=options.periods // 2 + 2)
            cli_warm = _timed_cli(manifest, folder / "cli", folder / "cli-cache", options.jobs)
            print(f"as reportgen subprocesses: cold {cli_cold:.2f} s, incremental {cli_warm:.2f} s, "
                  f"ratio {cli_cold / cli_warm:.1f}x")
        print(f"peak memory: {peak_memory()}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
