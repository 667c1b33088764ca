"""Benchmark of the dossier at scale: statistics, charts, HTML and PDF timed separately.

A seeded, invented project is generated for each size asked for (monthly data, 240 months from
2005-01; a mix of random walks with and without drift, stationary AR(1) processes, trend-stationary
series and a few doubly integrated ones; about one regression per ten series, some built to be
cointegrated and some independent walks). Each size runs cold, in a fresh process, through the
runner's stages as :func:`reportgen.runner.write_outputs` calls them: ``analyse`` (statistics),
``render_plots`` (charts), ``render_html`` and the PDF (WeasyPrint), each timed on its own::

    python -m bench.dossier                       # 100 and 1,000 series
    python -m bench.dossier --series 300          # one size (repeat --series, or give 100,1000)
    python -m bench.dossier --quick               # smoke run: 20 series
    python -m bench.dossier --stats-cache /tmp/bench-results.json   # reuse the analysed documents
    python -m bench.dossier --memory-charts 2000  # memory of 2,000 charts drawn in one process

``--stats-cache FILE`` keeps the results document of every size (``FILE`` with ``-N`` before its
suffix), keyed by the generator's parameters, so that rendering can be timed again without
running the statistics. The report ends with the targets: at most 20 ms per chart on average and,
for 1,000 series, the HTML within 30 s and the PDF within 120 s (two cores). Everything in the
generated project is invented.
"""

from __future__ import annotations

import argparse
import gc
import hashlib
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
import tracemalloc
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

import numpy as np

#: Changing the generator changes this, so a stats cache of an older generator is not reused.
GENERATOR_VERSION = "1"
#: Months of data per series.
PERIODS = 240
#: Default seed of the generated project.
SEED = 20260301
#: Targets of the issue (two cores).
TARGET_MS_PER_CHART = 20.0
TARGET_HTML_SECONDS_1000 = 30.0
TARGET_PDF_SECONDS_1000 = 120.0

_KINDS = ("walk", "walk-drift", "ar1", "trend", "walk-log", "integrated2")
_KIND_WEIGHTS = (0.28, 0.17, 0.25, 0.12, 0.14, 0.04)
_PLACES = ("Aldmere", "Brackwater", "Corvane", "Dunholt", "Eskerby", "Fallowmouth", "Greyhithe", "Harrowfield",
           "Istermoor", "Juniper Quay", "Kestle", "Lowenbrook")
_MEASURES = ("freight tonnage", "ferry passengers", "fuel price index", "warehouse rents", "berth hours",
             "crane hours", "pilotage fees", "dredged volume", "container dwell time", "reefer plugs")


def _months(count: int) -> list[str]:
    return [f"{2005 + index // 12:04d}-{index % 12 + 1:02d}" for index in range(count)]


def _ar1(rng: np.random.Generator, phi: float, scale: float, count: int) -> np.ndarray:
    values = np.empty(count)
    values[0] = rng.normal(0.0, scale / np.sqrt(1 - phi * phi))
    shocks = rng.normal(0.0, scale, count)
    for index in range(1, count):
        values[index] = phi * values[index - 1] + shocks[index]
    return values


def _draw(rng: np.random.Generator, kind: str, count: int) -> tuple[np.ndarray, list[str]]:
    """One invented series of the given kind and its manifest transforms."""
    t = np.arange(count)
    if kind == "walk":
        return 100 + np.cumsum(rng.normal(0.0, 1.5, count)), []
    if kind == "walk-drift":
        return 50 + 0.3 * t + np.cumsum(rng.normal(0.0, 1.2, count)), []
    if kind == "ar1":
        return 20 + _ar1(rng, float(rng.uniform(0.2, 0.7)), 1.0, count), []
    if kind == "trend":
        return 80 + 0.2 * t + _ar1(rng, 0.5, 1.0, count), []
    if kind == "walk-log":
        return np.exp(np.log(250) + np.cumsum(rng.normal(0.002, 0.03, count))), ["log"]
    accruals = 1.0 + 0.01 * t + np.cumsum(rng.normal(0.0, 0.08, count))
    return 300 + np.cumsum(accruals), []


def generate_project(folder: Path, series_count: int, seed: int = SEED) -> Path:
    """Write an invented project of ``series_count`` monthly series into ``folder``; return its manifest.

    About one regression per ten series: every fourth one is built cointegrated (the dependent
    is a multiple of its regressor plus stationary noise), the others pair series as drawn.
    """
    rng = np.random.default_rng(seed)
    dates = _months(PERIODS)
    kinds = rng.choice(len(_KINDS), size=series_count, p=_KIND_WEIGHTS)
    columns: dict[str, np.ndarray] = {}
    transforms: dict[str, list[str]] = {}
    labels: dict[str, str] = {}
    for index in range(series_count):
        name = f"s{index + 1:04d}"
        values, steps = _draw(rng, _KINDS[kinds[index]], PERIODS)
        columns[name], transforms[name] = values, steps
        labels[name] = f"{_PLACES[index % len(_PLACES)]} {_MEASURES[(index // len(_PLACES)) % len(_MEASURES)]}"
    regressions: dict[str, str] = {}
    names = list(columns)
    for number in range(max(1, series_count // 10)):
        dependent, regressor = names[(2 * number) % series_count], names[(2 * number + 1) % series_count]
        if number % 4 == 0 and not transforms[regressor] and not transforms[dependent]:
            columns[dependent] = 5 + 0.8 * columns[regressor] + _ar1(rng, 0.5, 1.0, PERIODS)
        regressions[f"r{number + 1:03d}"] = f"{dependent} ~ {regressor}"
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "data").mkdir(exist_ok=True)
    with open(folder / "data" / "bench_monthly.csv", "w", encoding="utf-8", newline="\n") as stream:
        stream.write("month," + ",".join(names) + "\n")
        for row, date in enumerate(dates):
            stream.write(date + "," + ",".join(f"{columns[name][row]:.4f}" for name in names) + "\n")
    lines = [
        "# Invented benchmark project: every name and number is made up (bench/dossier.py).",
        "reportgen: 1",
        "project:",
        f'  title: "Benchmark harbour statistics, {series_count} series"',
        '  client: "Invented Port Consortium"',
        '  author: "reportgen benchmark"',
        f'  reference: "BENCH-{series_count}-{seed}"',
        "datasets:",
        "  bench: {path: data/bench_monthly.csv, index: month, frequency: monthly}",
        "series:",
    ]
    for name in names:
        steps = f", transform: [{', '.join(transforms[name])}]" if transforms[name] else ""
        lines.append(f'  {name}: {{dataset: bench, column: {name}, label: "{labels[name]}"{steps}}}')
    lines.append("regressions:")
    for name, formula in regressions.items():
        lines.append(f'  {name}: {{formula: "{formula}"}}')
    lines += ["settings:", "  significance: 0.05", "  max_order: 2", f"  seed: {seed % 2**32}", ""]
    manifest = folder / "manifest.yaml"
    manifest.write_text("\n".join(lines), encoding="utf-8", newline="\n")
    return manifest


def _cache_path(cache: Path, series_count: int) -> Path:
    return cache.with_name(f"{cache.stem}-{series_count}{cache.suffix or '.json'}")


def _cache_key(series_count: int, seed: int) -> str:
    from reportgen import __version__

    return hashlib.sha256(f"{GENERATOR_VERSION}|{series_count}|{seed}|{__version__}".encode()).hexdigest()


def _max_rss_mib() -> float:
    """Peak resident memory of this process, in MiB (Linux reports kilobytes)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def run_size(series_count: int, *, seed: int = SEED, cache: Path | None = None, pdf: bool = True,
             keep: Path | None = None) -> dict[str, Any]:
    """Generate, analyse and render one project; the seconds of each stage and a few counts."""
    from reportgen.manifest import load_manifest
    from reportgen.provenance import document_run_id
    from reportgen.render.html import render_html
    from reportgen.render.pdf import build_pdf
    from reportgen.render.plots import render_plots
    from reportgen.results import dumps, results_to_dict
    from reportgen.runner import analyse

    report: dict[str, Any] = {"series": series_count}
    with tempfile.TemporaryDirectory(prefix="reportgen-bench-") as scratch:
        folder = keep if keep is not None else Path(scratch)
        manifest_path = generate_project(folder, series_count, seed)
        manifest = load_manifest(manifest_path)
        key = _cache_key(series_count, seed)
        document: dict[str, Any] | None = None
        stored = _cache_path(cache, series_count) if cache is not None else None
        if stored is not None and stored.is_file():
            held = json.loads(stored.read_text(encoding="utf-8"))
            if held.get("key") == key:
                document = held["document"]
                report["statistics_cached"] = True
        if document is None:
            started, cpu = time.perf_counter(), time.process_time()
            results = analyse(manifest, ["reportgen", "run", "manifest.yaml"])
            document = results_to_dict(results)
            document["run_id"] = document_run_id(document)
            report["statistics"], report["statistics_cpu"] = time.perf_counter() - started, time.process_time() - cpu
            if stored is not None:
                stored.parent.mkdir(parents=True, exist_ok=True)
                stored.write_text(json.dumps({"key": key, "document": document}), encoding="utf-8")
        report["regressions"] = len(document["regressions"])
        out = folder / "out"
        out.mkdir(exist_ok=True)
        (out / "results.json").write_text(dumps(document), encoding="utf-8")

        started, cpu = time.perf_counter(), time.process_time()
        plots = render_plots(document)
        report["charts"], report["charts_cpu"] = time.perf_counter() - started, time.process_time() - cpu
        report["chart_count"] = len(plots)

        started, cpu = time.perf_counter(), time.process_time()
        html = render_html(document, plots)
        report["html"], report["html_cpu"] = time.perf_counter() - started, time.process_time() - cpu
        (out / "dossier.html").write_text(html, encoding="utf-8")
        report["html_bytes"] = len(html.encode("utf-8"))
        del plots
        gc.collect()

        if pdf:
            started, cpu = time.perf_counter(), time.process_time()
            built = build_pdf(html, base_dir=manifest.base_dir, created=document["created"],
                              attachments=(manifest.path, out / "results.json"))
            (out / "dossier.pdf").write_bytes(built.data)
            report["pdf"], report["pdf_cpu"] = time.perf_counter() - started, time.process_time() - cpu
            report["pages"] = built.pages
            report["pdf_details"] = built.details
            report["pdf_parts"] = built.parts
            report["pdf_worker_cpu"] = built.worker_seconds
            report["pdf_worker_peak_mib"] = built.worker_peak_mib
            report["pdf_bytes"] = len(built.data)
            report["pdf_warnings"] = [message for message in built.warnings if "HarfBuzz" not in message][:5]
    report["max_rss_mib"] = _max_rss_mib()
    return report


def chart_memory(count: int) -> dict[str, Any]:
    """Draw ``count`` series charts in one process; memory held after the first tenth and at the end."""
    from reportgen.render.plots import render_plots

    rng = np.random.default_rng(SEED)
    dates = _months(PERIODS)
    body = {"label": "Invented walk", "lineage": "walk", "data": {"dates": dates, "values": []}}
    batch = 100
    tracemalloc.start()
    marks: list[tuple[int, int, float]] = []
    drawn = 0
    started = time.perf_counter()
    while drawn < count:
        series = {}
        for index in range(min(batch, count - drawn)):
            values = [float(value) for value in np.cumsum(rng.normal(0.0, 1.0, PERIODS))]
            series[f"m{drawn + index}"] = dict(body, data={"dates": dates, "values": values})
        render_plots({"series": series, "regressions": {}})
        drawn += len(series)
        gc.collect()
        current, _ = tracemalloc.get_traced_memory()
        marks.append((drawn, current, _max_rss_mib()))
    elapsed = time.perf_counter() - started
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    first = next(mark for mark in marks if mark[0] >= count // 10)
    return {"charts": count, "ms_per_chart": 1000 * elapsed / count, "traced_after_first_tenth_kib": first[1] / 1024,
            "traced_at_end_kib": marks[-1][1] / 1024, "traced_peak_kib": peak / 1024,
            "rss_after_first_tenth_mib": first[2], "rss_at_end_mib": marks[-1][2]}


def _child(arguments: Sequence[str]) -> dict[str, Any]:
    """Run one measurement in a fresh process (cold imports and caches); its report as a dict."""
    environment = {**os.environ, "PYTHONPATH": os.pathsep.join([str(Path(__file__).resolve().parent.parent),
                                                                 os.environ.get("PYTHONPATH", "")])}
    finished = subprocess.run([sys.executable, "-m", "bench.dossier", "--child", *arguments], check=True,
                              stdout=subprocess.PIPE, text=True, env=environment)
    return json.loads(finished.stdout.strip().splitlines()[-1])


def _sizes(values: Iterable[str]) -> list[int]:
    sizes: list[int] = []
    for value in values:
        sizes.extend(int(part) for part in value.split(",") if part.strip())
    return sizes


def _line(report: dict[str, Any]) -> str:
    """One line per size: wall-clock seconds of each stage, CPU seconds in brackets (the machine may be shared)."""
    charts = report["chart_count"]
    per_chart = 1000 * report["charts"] / charts if charts else 0.0
    per_chart_cpu = 1000 * report["charts_cpu"] / charts if charts else 0.0
    statistics = ("cached" if report.get("statistics_cached")
                  else f"{report['statistics']:.1f} s [{report['statistics_cpu']:.1f}]")
    pdf = "skipped"
    if "pdf" in report:
        folded = "with" if report["pdf_details"] else "without"
        cpu = report["pdf_cpu"] + report.get("pdf_worker_cpu", 0.0)
        layout = (f"in {report['pdf_parts']} parts at once" if report.get("pdf_parts", 1) > 1 else "in one piece")
        pdf = (f"{report['pdf']:.1f} s [{cpu:.1f}], {report['pages']} pages {layout}, {folded} the folded "
               f"parts, {report['pdf_bytes'] / 2**20:.1f} MiB")
    return (f"{report['series']:>6} series, {report['regressions']} regressions | statistics {statistics} | "
            f"charts {report['charts']:.1f} s [{report['charts_cpu']:.1f}] ({charts} charts, {per_chart:.1f} ms "
            f"each [{per_chart_cpu:.1f}]) | HTML {report['html']:.1f} s [{report['html_cpu']:.1f}] "
            f"({report['html_bytes'] / 2**20:.1f} MiB) | PDF {pdf} | peak memory {report['max_rss_mib']:.0f} MiB"
            + (f", largest PDF worker {report['pdf_worker_peak_mib']:.0f} MiB" if report.get("pdf_worker_peak_mib")
               else ""))


def _checks(reports: Sequence[dict[str, Any]]) -> list[tuple[str, bool]]:
    checks: list[tuple[str, bool]] = []
    charts = sum(report["chart_count"] for report in reports)
    seconds = sum(report["charts"] for report in reports)
    if charts:
        average = 1000 * seconds / charts
        checks.append((f"average chart {average:.1f} ms <= {TARGET_MS_PER_CHART:.0f} ms",
                       average <= TARGET_MS_PER_CHART))
    for report in reports:
        if report["series"] == 1000:
            checks.append((f"1,000 series HTML {report['html']:.1f} s <= {TARGET_HTML_SECONDS_1000:.0f} s",
                           report["html"] <= TARGET_HTML_SECONDS_1000))
            if "pdf" in report:
                checks.append((f"1,000 series PDF {report['pdf']:.1f} s <= {TARGET_PDF_SECONDS_1000:.0f} s",
                               report["pdf"] <= TARGET_PDF_SECONDS_1000))
    return checks


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m bench.dossier", description=__doc__.split("\n\n")[0])
    parser.add_argument("--series", action="append", default=[], metavar="N",
                        help="project size in series (repeatable, or a comma-separated list); default 100,1000")
    parser.add_argument("--quick", action="store_true", help="smoke run: 20 series")
    parser.add_argument("--seed", type=int, default=SEED, help="seed of the generated project")
    parser.add_argument("--stats-cache", type=Path, metavar="FILE",
                        help="reuse (or store) the analysed results document of each size")
    parser.add_argument("--no-pdf", action="store_true", help="leave the PDF out")
    parser.add_argument("--keep", type=Path, metavar="DIR",
                        help="write the generated project and its outputs into DIR/N instead of a temporary folder")
    parser.add_argument("--memory-charts", type=int, metavar="N", default=0,
                        help="also draw N charts in one process and report the memory held")
    parser.add_argument("--child", action="store_true", help=argparse.SUPPRESS)
    options = parser.parse_args(argv)

    if options.child:
        if options.memory_charts:
            print(json.dumps(chart_memory(options.memory_charts)))
            return 0
        (size,) = _sizes(options.series)
        keep = options.keep / str(size) if options.keep else None
        print(json.dumps(run_size(size, seed=options.seed, cache=options.stats_cache, pdf=not options.no_pdf,
                                  keep=keep)))
        return 0

    sizes = [20] if options.quick else (_sizes(options.series) or [100, 1000])
    reports = []
    for size in sizes:
        arguments = ["--series", str(size), "--seed", str(options.seed)]
        if options.stats_cache:
            arguments += ["--stats-cache", str(options.stats_cache.resolve())]
        if options.no_pdf:
            arguments.append("--no-pdf")
        if options.keep:
            arguments += ["--keep", str(options.keep.resolve())]
        report = _child(arguments)
        reports.append(report)
        print(_line(report), flush=True)
    if options.memory_charts:
        memory = _child(["--memory-charts", str(options.memory_charts)])
        print(f"memory over {memory['charts']} charts ({memory['ms_per_chart']:.1f} ms each): traced "
              f"{memory['traced_after_first_tenth_kib']:.0f} KiB after the first tenth, "
              f"{memory['traced_at_end_kib']:.0f} KiB at the end (peak {memory['traced_peak_kib']:.0f} KiB); "
              f"resident {memory['rss_after_first_tenth_mib']:.0f} MiB then {memory['rss_at_end_mib']:.0f} MiB")
    failed = False
    for text, passed in _checks(reports):
        print(f"{'PASS' if passed else 'FAIL'}  {text}")
        failed = failed or not passed
    return 1 if failed else 0


if __name__ == "__main__":
    raise SystemExit(main())
