"""Parallel execution: worker processes and a Dask cluster give the serial run's results.json, byte for byte.

Byte identity is checked through the command line on the small project, with a fixed build date
(``SOURCE_DATE_EPOCH``) and the same output folder, so the only difference between the runs is
where the statistics were computed. Executors are also checked on their own: results in task
order whatever order they complete in, never more tasks in flight than the window, errors of a
task raised where the caller reads it.
"""

from __future__ import annotations

import json
import os
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from reportgen import cli, executor
from reportgen.executor import (
    WINDOW_PER_WORKER,
    DaskExecutor,
    ProcessExecutor,
    SerialExecutor,
    check_worker_versions,
    local_versions,
    make_executor,
)

CONSTANT_WALK_B = "walk_b"


def _results(manifest: Path, out: Path, *options: str) -> bytes:
    status = cli.main(["run", str(manifest), "--out", str(out), "--format", "json", "--quiet", *options])
    assert status == 0
    return (out / "results.json").read_bytes()


@pytest.fixture
def fixed_date(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")


@pytest.fixture(scope="module")
def cluster() -> Iterator[str]:
    """A Dask cluster of two worker processes on this machine, for the module; its scheduler's address."""
    import distributed

    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=None) as local:
        yield local.scheduler_address


def test_two_worker_processes_write_the_serial_results(small_project: Callable[..., Path], tmp_path: Path,
                                                       fixed_date: None) -> None:
    manifest = small_project()
    serial = _results(manifest, tmp_path / "out", "--jobs", "1", "--no-cache")
    parallel = _results(manifest, tmp_path / "out", "--jobs", "2", "--no-cache")
    assert parallel == serial
    document = json.loads(serial)
    assert list(document["series"]) == ["walk_a", "walk_b", "noise"]
    assert list(document["regressions"]) == ["a_on_b", "noise_on_a"]
    assert document["environment"]["command"].endswith("--format json")  # display options are not recorded


def test_a_dask_cluster_writes_the_serial_results(small_project: Callable[..., Path], tmp_path: Path,
                                                  fixed_date: None, cluster: str) -> None:
    manifest = small_project()
    serial = _results(manifest, tmp_path / "out", "--jobs", "1", "--no-cache")
    assert _results(manifest, tmp_path / "out", "--cluster", cluster, "--no-cache") == serial


def test_settings_executor_dask_runs_on_the_configured_cluster(small_project: Callable[..., Path],
                                                               small_manifest: str, tmp_path: Path,
                                                               fixed_date: None, cluster: str,
                                                               monkeypatch: pytest.MonkeyPatch) -> None:
    import dask

    plain = _results(small_project(), tmp_path / "plain", "--jobs", "1", "--no-cache")
    manifest = small_project(small_manifest + "settings: {executor: dask}\n")
    started: list[str | None] = []
    original = executor.DaskExecutor.__init__

    def recording(self: DaskExecutor, address: str | None = None, **options: int) -> None:
        started.append(address)
        original(self, address, **options)

    monkeypatch.setattr(executor.DaskExecutor, "__init__", recording)
    with dask.config.set({"scheduler-address": cluster}):
        on_dask = json.loads(_results(manifest, tmp_path / "dask", "--no-cache"))
    assert started == [cluster]
    expected = json.loads(plain)
    assert "executor" not in on_dask["settings"]  # where the statistics ran is not a setting of the results
    assert on_dask["settings"] == expected["settings"]
    assert on_dask["series"] == expected["series"]
    assert on_dask["regressions"] == expected["regressions"]


def test_a_catalogue_error_in_a_worker_reads_as_in_a_serial_run(small_project: Callable[..., Path],
                                                                tmp_path: Path,
                                                                capsys: pytest.CaptureFixture[str]) -> None:
    rows = ["month,walk_a,walk_b,noise"] + [f"{2010 + i // 12}-{i % 12 + 1:02d},{50 + (i * 7919) % 13},4.0,"
                                            f"{5 + (i * 104729) % 11}" for i in range(120)]
    manifest = small_project(data="\n".join(rows) + "\n")
    messages = []
    for jobs in ("1", "2"):
        assert cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--format", "json", "--quiet",
                         "--no-cache", "--jobs", jobs]) == 2
        messages.append(capsys.readouterr().err)
    assert messages[0] == messages[1]
    assert messages[0].startswith(f"{manifest}:10:3: error[constant-series]: series.walk_b: ")
    assert not (tmp_path / "out").exists()


def test_jobs_must_be_a_positive_whole_number(small_project: Callable[..., Path], tmp_path: Path,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    for bad in ("0", "-2", "two"):
        assert cli.main(["run", str(small_project()), "--out", str(tmp_path / "out"), "--jobs", bad]) == 2
        assert (f"argument --jobs: the number of jobs must be a whole number of at least 1; not '{bad}'"
                in capsys.readouterr().err)


def test_the_recorded_command_leaves_out_where_the_statistics_ran() -> None:
    arguments = ["run", "m.yaml", "--out", "o", "--jobs", "2", "--cluster=tcp://h:8786", "--no-c", "--cache", "d",
                 "--job=3", "--format", "json", "--", "--jobs"]
    assert cli.recorded_command(arguments) == ["run", "m.yaml", "--out", "o", "--format", "json", "--", "--jobs"]


# ---------------------------------------------------------------- the executors on their own


def _slow_square(value: int) -> int:
    """Later tasks finish first: task i sleeps (5 - i) hundredths of a second."""
    time.sleep(max(0, 5 - value) / 100)
    return value * value


def _fail_on_three(value: int) -> int:
    if value == 3:
        raise RuntimeError("task three failed")
    return value


def _process_id(_: int) -> int:
    time.sleep(0.05)
    return os.getpid()


@pytest.fixture(scope="module")
def processes() -> Iterator[ProcessExecutor]:
    with ProcessExecutor(2) as pool:
        yield pool


def test_results_come_in_task_order_whatever_order_they_complete_in(processes: ProcessExecutor) -> None:
    completed: list[int] = []
    results = list(processes.map(_slow_square, list(range(6)), lambda index, result: completed.append(index)))
    assert results == [0, 1, 4, 9, 16, 25]
    assert sorted(completed) == list(range(6))
    assert len({*processes.map(_process_id, list(range(6)))} - {os.getpid()}) == 2


def test_an_error_of_a_task_is_raised_where_its_result_is_read(processes: ProcessExecutor) -> None:
    results = processes.map(_fail_on_three, list(range(8)))
    assert [next(results) for _ in range(3)] == [0, 1, 2]
    with pytest.raises(RuntimeError, match="task three failed"):
        next(results)


def test_few_tasks_run_in_this_process(processes: ProcessExecutor) -> None:
    fresh = ProcessExecutor(2, minimum_tasks=10)
    assert list(fresh.map(_process_id, [1, 2, 3])) == [os.getpid()] * 3
    assert fresh._pool is None  # no worker was started
    assert list(ProcessExecutor(1).map(_process_id, [1, 2, 3])) == [os.getpid()] * 3


def test_no_more_tasks_in_flight_than_the_window() -> None:
    """Memory stays bounded: tasks are handed to the workers only as results are read."""
    handed: list[int] = []

    class Watched(list):  # type: ignore[type-arg]
        def __getitem__(self, index):  # type: ignore[no-untyped-def]
            handed.append(index)
            return super().__getitem__(index)

    with ProcessExecutor(2) as pool:
        results = pool.map(abs, Watched(range(100)))
        assert next(results) == 0
        assert len(handed) == 2 * WINDOW_PER_WORKER
        assert list(results) == list(range(1, 100))
    assert handed == list(range(100))


def test_the_serial_executor_computes_one_task_after_another() -> None:
    completed: list[tuple[int, int]] = []
    results = SerialExecutor().map(_slow_square, [3, 2], lambda index, result: completed.append((index, result)))
    assert next(results) == 9
    assert completed == [(0, 9)]  # the second task has not started
    assert list(results) == [4]


def test_make_executor_follows_jobs_and_cluster() -> None:
    assert isinstance(make_executor(1), SerialExecutor)
    two = make_executor(2)
    assert isinstance(two, ProcessExecutor)
    assert (two.workers, two.minimum_tasks) == (2, 2)
    every_core = make_executor(None)
    assert isinstance(every_core, ProcessExecutor)
    assert every_core.workers == executor.available_cores()
    assert every_core.minimum_tasks > 2  # small projects do not wait for workers to start


def test_a_dask_executor_maps_in_task_order(cluster: str) -> None:
    with DaskExecutor(cluster) as dask_executor:
        assert dask_executor.workers == 2
        completed: list[int] = []
        assert list(dask_executor.map(_slow_square, list(range(6)), lambda index, result: completed.append(index))) \
            == [0, 1, 4, 9, 16, 25]
        assert sorted(completed) == list(range(6))
        with pytest.raises(RuntimeError, match="task three failed"):
            list(dask_executor.map(_fail_on_three, list(range(6))))


def test_workers_with_other_versions_are_refused() -> None:
    from reportgen.errors import ClusterMismatchError

    here = local_versions()
    check_worker_versions("tcp://h:1", here, {"tcp://w:1": dict(here), "tcp://w:2": dict(here)})
    with pytest.raises(ClusterMismatchError) as raised:
        check_worker_versions("tcp://h:1", here, {"tcp://w:1": dict(here), "tcp://w:2": {**here, "numpy": "1.0"}})
    assert raised.value.message == (f"the Dask cluster at tcp://h:1 cannot give this machine's results: worker "
                                    f"tcp://w:2 has numpy 1.0 (here {here['numpy']})")
    with pytest.raises(ClusterMismatchError, match="the scheduler has no workers"):
        check_worker_versions("tcp://h:1", here, {})
    with pytest.raises(ClusterMismatchError, match=r"worker tcp://w:1 cannot run reportgen \(No module named"):
        check_worker_versions("tcp://h:1", here, {"tcp://w:1": ModuleNotFoundError("No module named 'reportgen'")})


def test_results_json_is_written_piece_by_piece_with_the_same_bytes(small_project: Callable[..., Path],
                                                                     tmp_path: Path) -> None:
    """Memory: results.json is streamed to its file, never held whole; the bytes are those of ``dumps``."""
    import io

    from reportgen.manifest import load_manifest
    from reportgen.results import dump, dumps, results_to_dict
    from reportgen.runner import analyse

    document = results_to_dict(analyse(load_manifest(small_project()), ["reportgen"]))
    stream = io.StringIO()
    dump(document, stream)
    assert stream.getvalue() == dumps(document)
    written = io.StringIO()
    dump({"series": {f"s{number}": list(range(50)) for number in range(2000)}}, written)  # many pieces
    assert written.getvalue() == dumps({"series": {f"s{number}": list(range(50)) for number in range(2000)}})


_JSON_SCALARS = (st.none() | st.booleans() | st.integers(-10**20, 10**20)
                 | st.floats(allow_nan=False, allow_infinity=False) | st.text(max_size=8))
_JSON_VALUES = st.recursive(_JSON_SCALARS, lambda inner: st.lists(inner, max_size=4)
                            | st.dictionaries(st.text(max_size=6), inner, max_size=4), max_leaves=30)


@settings(max_examples=300, derandomize=True, database=None, deadline=None)
@given(st.dictionaries(st.sampled_from(["series", "regressions", "run_id", "x"]), _JSON_VALUES, max_size=4))
def test_the_streamed_encoder_writes_what_the_json_module_writes(document: dict[str, Any]) -> None:
    """``dump``'s own encoder against ``json.dumps(indent=2)`` (the reference): the same text for any document."""
    import io

    from reportgen.results import dump, dumps

    stream = io.StringIO()
    dump(document, stream)
    assert stream.getvalue() == dumps(document)


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), [1.0, float("-inf")], {"k": [float("nan"), None]}])
def test_the_streamed_encoder_refuses_what_the_json_module_refuses(bad: Any) -> None:
    import io

    from reportgen.results import dump

    with pytest.raises(ValueError, match="not JSON compliant"):
        dump({"series": {"a": bad}}, io.StringIO())


def test_a_part_with_its_text_is_written_as_it_is_until_changed() -> None:
    """An DocumentPart's text is written in place of its values; any change through the mapping drops the
    text, so the values are written (common practice: a cached rendering is never trusted past a change)."""
    import io
    import pickle

    from reportgen.results import BODY_INDENT, DocumentPart, _encoded, dump, dumps

    content = {"order": 1, "values": [1.5, 2.0], "label": "x"}
    part = DocumentPart(content, _encoded(content, BODY_INDENT))
    document = {"series": {"a": part}}
    stream = io.StringIO()
    dump(document, stream)
    assert stream.getvalue() == dumps(document)
    part.text = part.text.replace("1.5", "9.5")  # a stale text is written as it is: it is what was kept
    stream = io.StringIO()
    dump(document, stream)
    assert '"values": [\n        9.5' in stream.getvalue()
    for change in (lambda body: body.__setitem__("order", 2), lambda body: body.pop("label"),
                   lambda body: body.update(extra=True), lambda body: body.setdefault("new", 0),
                   lambda body: body.__delitem__("order"), lambda body: body.clear(), lambda body: body.popitem()):
        body = DocumentPart(content, "stale text")
        change(body)
        assert body.text is None
        stream = io.StringIO()
        dump({"series": {"a": body}}, stream)
        assert stream.getvalue() == dumps({"series": {"a": dict(body)}})
    copied = pickle.loads(pickle.dumps(part))
    assert type(copied) is DocumentPart
    assert copied == part
    assert copied.text == part.text


@settings(max_examples=200, derandomize=True, database=None, deadline=None)
@given(st.dictionaries(st.text(max_size=6), _JSON_VALUES, max_size=5))
def test_a_stored_part_reads_back_as_the_json_module_reads_it(content: dict[str, Any]) -> None:
    """A part stored and read back is the part encoded: its text as written, its values as json.loads reads it."""
    import tempfile

    from reportgen.cache import ResultCache
    from reportgen.results import BODY_INDENT, _encoded, load_part

    text = _encoded(content, BODY_INDENT)
    with tempfile.TemporaryDirectory() as folder:
        cache = ResultCache(folder)
        cache.store_text("series-part", "ab" * 32, text)
        part = load_part(cache, "series", "ab" * 32)
    reference = json.loads(text)
    assert part is not None
    assert part.text == text
    assert json.dumps(part, sort_keys=True) == json.dumps(reference, sort_keys=True)  # also int vs float, -0.0
