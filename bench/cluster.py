"""Benchmark: many series one after another, on two worker processes and on a two-worker Dask cluster.

Builds a project of seeded series (default 10,000 monthly series of 200 periods, the mix of
bench/incremental.py) and runs it three times with ``--format json`` and no cache: serially
(``--jobs 1``), on two worker processes (``--jobs 2``) and on a Dask ``LocalCluster`` of two
worker processes with one thread each (``--cluster``). Each run happens in a fresh interpreter,
so that its peak memory is its own; for each it prints the time, the throughput in series per
second and the peak resident memory of the runner and of its largest worker, then checks that
the three results.json files are the same bytes.

    python bench/cluster.py [--series 10000] [--periods 200] [--regressions 0] [--modes serial,jobs,dask]
    python bench/cluster.py --quick      # a smoke run: 200 series

``--modes jobs,dask`` leaves the serial run out (10,000 series take 15 to 20 minutes on one core).
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import resource
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(HERE))

MODES = ("serial", "jobs", "dask")
#: The command line every run records, so that the three results.json files can be compared byte for byte.
COMMAND = ["reportgen", "run", "manifest.yaml", "--format", "json"]


def _peak_mib(who: int) -> float:
    scale = 1 if sys.platform == "darwin" else 1024  # ru_maxrss: bytes on macOS, KiB elsewhere
    return resource.getrusage(who).ru_maxrss * scale / 2**20


def _cpu_seconds() -> float:
    """CPU time (user and system) of this process and of its children that have ended."""
    return sum(resource.getrusage(who).ru_utime + resource.getrusage(who).ru_stime
               for who in (resource.RUSAGE_SELF, resource.RUSAGE_CHILDREN))


class MemorySampler(threading.Thread):
    """The peak resident memory of each process below this one and of all of them together, sampled.

    ``ru_maxrss`` of the children is no use here: a child forked from a large parent starts with
    the parent's pages counted as its own.
    """

    def __init__(self, interval: float = 0.2) -> None:
        super().__init__(daemon=True)
        import psutil

        self._me = psutil.Process()
        self._interval = interval
        self._halt = threading.Event()
        self.worker_peak = 0
        self.total_peak = 0

    def run(self) -> None:
        import psutil

        while not self._halt.is_set():
            total = self._me.memory_info().rss
            for child in self._me.children(recursive=True):
                try:
                    size = child.memory_info().rss
                except psutil.Error:
                    continue
                self.worker_peak = max(self.worker_peak, size)
                total += size
            self.total_peak = max(self.total_peak, total)
            self._halt.wait(self._interval)

    def stop(self) -> None:
        self._halt.set()
        self.join()


def run_mode(mode: str, manifest: Path, out: Path) -> dict[str, float]:
    """One run in this interpreter; its time and peak memory (the LocalCluster's start-up timed apart)."""
    from reportgen.runner import run

    started_cluster = 0.0
    options: dict[str, object] = {"jobs": 1 if mode == "serial" else 2}
    cluster = None
    if mode == "dask":
        import distributed

        begin = time.perf_counter()
        cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                           dashboard_address=None, silence_logs=40)
        started_cluster = time.perf_counter() - begin
        options = {"cluster": cluster.scheduler_address}
    sampler = MemorySampler()
    sampler.start()
    try:
        cpu = _cpu_seconds()
        begin = time.perf_counter()
        run(manifest, out, (), command=COMMAND, **options)  # type: ignore[arg-type]
        elapsed = time.perf_counter() - begin
    finally:
        if cluster is not None:
            cluster.close()
        sampler.stop()
    return {"seconds": elapsed, "cpu_seconds": _cpu_seconds() - cpu, "cluster_start": started_cluster,
            "self_mib": _peak_mib(resource.RUSAGE_SELF), "worker_mib": sampler.worker_peak / 2**20,
            "total_mib": sampler.total_peak / 2**20}


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=10_000)
    parser.add_argument("--periods", type=int, default=200)
    parser.add_argument("--regressions", type=int, default=0)
    parser.add_argument("--modes", default=",".join(MODES), help="comma-separated, of serial, jobs, dask")
    parser.add_argument("--quick", action="store_true", help="a smoke run of 200 series")
    parser.add_argument("--run-mode", choices=MODES, help=argparse.SUPPRESS)  # one run, in a child interpreter
    parser.add_argument("--project", type=Path, help=argparse.SUPPRESS)
    options = parser.parse_args(argv)
    os.environ.setdefault("SOURCE_DATE_EPOCH", "1700000000")

    if options.run_mode is not None:
        figures = run_mode(options.run_mode, options.project / "manifest.yaml", options.project.parent /
                           f"out-{options.run_mode}")
        print(json.dumps(figures))
        return 0

    from incremental import write_project

    series = 200 if options.quick else options.series
    modes = [mode.strip() for mode in options.modes.split(",") if mode.strip()]
    with tempfile.TemporaryDirectory(prefix="reportgen-cluster-") as scratch:
        folder = Path(scratch)
        write_project(folder / "project", series=series, periods=options.periods, regressions=options.regressions)
        print(f"{series} series x {options.periods} periods, {options.regressions} regressions, "
              f"{os.cpu_count()} cores")
        environment = {**os.environ, "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT),
                                                                                os.environ.get("PYTHONPATH")]))}
        digests: dict[str, str] = {}
        for mode in modes:
            child = subprocess.run([sys.executable, __file__, "--run-mode", mode, "--project",
                                    str(folder / "project")], capture_output=True, text=True, env=environment)
            if child.returncode != 0:
                print(f"the {mode} run failed:\n{child.stderr}")
                return 1
            figures = json.loads(child.stdout.strip().splitlines()[-1])
            label = {"serial": "serial (--jobs 1)", "jobs": "--jobs 2", "dask": "Dask LocalCluster, 2 workers"}[mode]
            start = f" (+{figures['cluster_start']:.1f} s to start the cluster)" if mode == "dask" else ""
            cpu = f", CPU {figures['cpu_seconds']:.0f} s" if mode != "dask" else ""  # Dask workers are not reaped
            print(f"{label:<30} {figures['seconds']:8.1f} s  {series / figures['seconds']:7.1f} series/s{start}{cpu}")
            print(f"{'':<30} peak memory: runner {figures['self_mib']:.0f} MiB, largest worker "
                  f"{figures['worker_mib']:.0f} MiB, all processes {figures['total_mib']:.0f} MiB")
            results = folder / f"out-{mode}" / "results.json"
            digests[mode] = hashlib.sha256(results.read_bytes()).hexdigest()
            print(f"{'':<30} results.json {results.stat().st_size / 1e6:.1f} MB, sha256 {digests[mode][:16]}")
        if len(set(digests.values())) > 1:
            print("results.json DIFFERS between the runs")
            return 1
        if len(digests) > 1:
            print("results.json is byte-identical across " + ", ".join(digests))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
