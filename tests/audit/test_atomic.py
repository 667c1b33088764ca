"""The output folder: swapped in whole, never half-written, never another manifest's dossier by accident."""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from collections.abc import Callable
from pathlib import Path

import pytest

import reportgen.runner
from reportgen.errors import DataError
from reportgen.runner import _exchange, remove_stale_staging, run

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "manifests" / "demo.yaml"


def _files(folder: Path) -> dict[str, bytes]:
    return {path.name: path.read_bytes() for path in sorted(folder.iterdir())}


def _dead_pid() -> int:
    """A process id that no process has right now (a child that has exited and been reaped)."""
    child = subprocess.Popen([sys.executable, "-c", "pass"])
    child.wait()
    return child.pid


def test_sigkill_mid_run_leaves_the_previous_dossier_and_the_next_run_tidies(tmp_path: Path) -> None:
    out = tmp_path / "dossier"
    run(DEMO, out, (), command=["reportgen"])
    before = _files(out)
    assert sorted(before) == ["checksums.sha256", "results.json"]

    # HTML and PDF take several seconds after the staging folder appears.
    process = subprocess.Popen([sys.executable, "-m", "reportgen.cli", "run", str(DEMO), "--out", str(out),
                                "--quiet"], cwd=tmp_path)
    deadline = time.monotonic() + 120
    try:
        while not list(tmp_path.glob(".dossier.partial-*")):
            assert process.poll() is None, "the run ended before its staging folder was seen"
            assert time.monotonic() < deadline, "no staging folder appeared"
            time.sleep(0.02)
        time.sleep(0.3)  # into the charts and the PDF
        assert process.poll() is None, "the run ended before it could be killed"
    finally:
        process.send_signal(signal.SIGKILL)
        process.wait()
    assert process.returncode == -signal.SIGKILL

    assert _files(out) == before
    leftovers = list(tmp_path.glob(".dossier.partial-*"))
    assert [path.name.startswith(f".dossier.partial-{process.pid}-") for path in leftovers] == [True]

    # The next run removes the staging folder of the killed process, and says so.
    messages: list[str] = []
    run(DEMO, out, (), command=["reportgen"], progress=messages.append)
    assert f"removed {leftovers[0].name}, left by process {process.pid}, which no longer runs" in messages
    assert not list(tmp_path.glob(".dossier.*"))
    assert sorted(_files(out)) == ["checksums.sha256", "results.json"]


def test_only_stale_staging_folders_of_ended_processes_are_removed(tmp_path: Path) -> None:
    out = tmp_path / "out"
    out.mkdir()
    dead = tmp_path / f".out.partial-{_dead_pid()}-abcd"
    alive = tmp_path / f".out.partial-{os.getpid()}-efgh"
    nameless = tmp_path / ".out.partial-ijkl"
    recent = tmp_path / f".out.partial-{_dead_pid()}-mnop"
    other = tmp_path / f".elsewhere.partial-{_dead_pid()}-qrst"
    for folder in (dead, alive, nameless, other):
        folder.mkdir()
        os.utime(folder, (time.time() - 60, time.time() - 60))
    started = time.time() - 30
    recent.mkdir()  # newer than the run's start: not judged stale
    messages = remove_stale_staging(out, started)
    assert messages == [f"removed {dead.name}, left by process {dead.name.split('-')[1]}, which no longer runs"]
    assert not dead.exists()
    assert alive.exists() and nameless.exists() and recent.exists() and other.exists()  # noqa: PT018


def test_a_retired_dossier_is_put_back_when_the_folder_is_missing(small_project: Callable[..., Path],
                                                                   tmp_path: Path) -> None:
    out = tmp_path / "out"
    manifest = small_project()
    run(manifest, out, (), command=["reportgen"])
    before = _files(out)
    retired = tmp_path / f".out.previous-{_dead_pid()}-wxyz"
    os.replace(out, retired)  # as a run killed between the two renames of the fallback swap leaves it
    os.utime(retired, (time.time() - 60, time.time() - 60))
    data = manifest.parent / "sim.csv"
    data.write_text(data.read_text().replace("2010-03,", "2010-03,x", 1))
    with pytest.raises(DataError):
        run(manifest, out, (), command=["reportgen"])
    assert _files(out) == before
    assert not retired.exists()


@pytest.mark.parametrize("exchange", [True, False], ids=["exchange", "two-renames"])
def test_the_swap_replaces_the_whole_folder(small_project: Callable[..., Path], tmp_path: Path,
                                            monkeypatch: pytest.MonkeyPatch, exchange: bool) -> None:
    if not exchange:
        monkeypatch.setattr(reportgen.runner, "_exchange", lambda first, second: False)
    out = tmp_path / "out"
    manifest = small_project()
    run(manifest, out, ("html",), command=["reportgen"])
    assert sorted(_files(out)) == ["checksums.sha256", "dossier.html", "results.json"]
    run(manifest, out, (), command=["reportgen"])
    assert sorted(_files(out)) == ["checksums.sha256", "results.json"]
    assert sorted(path.name for path in tmp_path.iterdir()) == ["out", "project"]


def test_exchange_swaps_two_folders_on_linux(tmp_path: Path) -> None:
    first, second = tmp_path / "first", tmp_path / "second"
    first.mkdir()
    second.mkdir()
    (first / "a").write_text("a")
    (second / "b").write_text("b")
    if not _exchange(first, second):
        pytest.skip("this system or file system has no atomic exchange; the two-rename swap is used")
    assert [path.name for path in first.iterdir()] == ["b"]
    assert [path.name for path in second.iterdir()] == ["a"]


def test_another_manifests_dossier_needs_force(small_project: Callable[..., Path], tmp_path: Path,
                                               cli_run) -> None:
    first = small_project()
    second_folder = tmp_path / "second"
    shutil.copytree(first.parent, second_folder)
    second = second_folder / "manifest.yaml"
    out = tmp_path / "out"
    assert cli_run("run", first, "--out", out, "--format", "json", "--quiet")[0] == 0
    assert cli_run("run", first, "--out", out, "--format", "json", "--quiet")[0] == 0  # the same manifest: fine
    before = _files(out)
    status, stdout, stderr = cli_run("run", second, "--out", out, "--format", "json", "--quiet")
    assert (status, stdout) == (2, "")
    assert stderr == (f"{out}: error[output-other-dossier]: the output folder {out} holds the dossier of "
                      f"{first.resolve()}, not of "
                      f"{second.resolve()}\n  hint: choose another folder, or pass --force to replace that dossier\n")
    assert _files(out) == before
    assert cli_run("run", second, "--out", out, "--format", "json", "--quiet", "--force")[0] == 0
    assert reportgen.runner.recorded_manifest(out / "results.json") == second.resolve()


@pytest.mark.parametrize("chunk", [1, 7, 64, 1 << 16])
def test_the_recorded_manifest_is_read_from_the_start_of_results_json(tmp_path: Path, chunk: int) -> None:
    """Only the start of a complete results.json is read, in growing blocks that may end inside a character."""
    from reportgen.results import dumps

    inputs = [{"role": "data", "name": f"d{number}", "path": f"/data/é{number}.csv"} for number in range(300)]
    inputs.append({"role": "manifest", "name": "manifest", "path": "/projects/Ölmühle/manifest.yaml"})
    document = {"schema_version": "1.0", "project": {"title": "Hafenstadt · Ölmühle ✓"}, "inputs": inputs,
                "series": {"s": {"values": [1.5] * 10_000}}}
    results_file = tmp_path / "results.json"
    results_file.write_text(dumps(document), encoding="utf-8")
    assert reportgen.runner._recorded_inputs(results_file, chunk) == document["inputs"]
    assert reportgen.runner.recorded_manifest(results_file) == Path("/projects/Ölmühle/manifest.yaml")
    results_file.write_text(dumps(document)[:-2], encoding="utf-8")  # not complete: the whole file is tried
    assert reportgen.runner._recorded_inputs(results_file, chunk) is None
    assert reportgen.runner.recorded_manifest(results_file) is None
    results_file.write_text(dumps({"inputs": "a text", "x": 1}), encoding="utf-8")
    assert reportgen.runner.recorded_manifest(results_file) is None
    results_file.write_bytes(dumps(document).encode()[:100] + b"\xff" + dumps(document).encode()[100:])
    assert reportgen.runner.recorded_manifest(results_file) is None


def test_checksums_file_is_in_sha256sum_format(small_project: Callable[..., Path], tmp_path: Path) -> None:
    out = tmp_path / "out"
    run(small_project(), out, ("html",), command=["reportgen"])
    lines = (out / "checksums.sha256").read_bytes().decode().splitlines()
    assert [line[66:] for line in lines] == ["dossier.html", "results.json"]
    assert all(len(line.split("  ")[0]) == 64 and line[64:66] == "  " for line in lines)
    sha256sum = shutil.which("sha256sum")
    if sha256sum is not None:  # GNU coreutils reads it as its own
        subprocess.run([sha256sum, "--check", "--strict", "--quiet", "checksums.sha256"], cwd=out, check=True)
