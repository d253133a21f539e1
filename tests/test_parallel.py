"""The parallel map of the command line (viscometry.parallel): order, faults, progress.

No numeric check values: the expected results are the function's own (computed again in
this process), and messages are this package's own wording (no external source). Worker
processes are forced by setting the start-up threshold to zero; the functions they run are
defined at the top of this module, which the workers import by name.
"""

from __future__ import annotations

import io
import os
import sys
import warnings

import pytest

import viscometry.parallel as parallel
from viscometry.errors import InputError
from viscometry.parallel import (
    MAX_JOBS,
    TerminalProgress,
    Workers,
    available_cores,
    check_jobs,
    map_files,
)

#: Items that make :func:`_evaluate` fail in its own way.
RAISES, DIES, WARNS = 5, 7, 3


def _evaluate(item: int) -> tuple[int, int]:
    """``(item², process id)``; raises, dies or warns for the special items."""
    if item == RAISES:
        raise RuntimeError(f"cannot evaluate {item}")
    if item == DIES and parallel._SLOTS is not None:  # only in a worker: ends it at once
        os._exit(3)
    if item == WARNS:
        warnings.warn(f"item {item} is odd", UserWarning, stacklevel=1)
    return item * item, os.getpid()


def _modules(item: int) -> tuple[int, list[str]]:
    """The process id and the top-level packages this process has imported."""
    return os.getpid(), sorted({name.split(".")[0] for name in sys.modules})


def _reason(item: int, reason: str) -> tuple[str, str]:
    return ("failed", reason)


@pytest.fixture
def workers_at_once(monkeypatch: pytest.MonkeyPatch) -> None:
    """Start workers whatever the work left, and let them do all of it."""
    monkeypatch.setattr(parallel, "PARALLEL_WORK", 0.0)
    monkeypatch.setattr(parallel, "WORK_HERE", False)


def test_check_jobs() -> None:
    assert check_jobs(None) == min(available_cores(), MAX_JOBS) >= 1
    assert check_jobs(1) == 1 and check_jobs(10**6) == MAX_JOBS
    for bad in (0, -2, 1.5, True, "2"):
        with pytest.raises(InputError, match="jobs must be a whole number of at least 1, got"):
            check_jobs(bad)
    with pytest.raises(InputError, match=r"^--jobs must be a whole number of at least 1, got 0$"):
        check_jobs(0, "--jobs")


def test_one_job_runs_here_and_keeps_faults_with_their_item() -> None:
    with pytest.warns(UserWarning, match="item 3 is odd"):
        results = map_files(_evaluate, range(9), jobs=1, on_error=_reason)
    here = os.getpid()
    assert results[RAISES] == ("failed", "unexpected RuntimeError: cannot evaluate 5")
    expected = [(i * i, here) for i in range(9)]
    expected[RAISES] = results[RAISES]
    assert results == expected  # DIES only ends a worker, never this process


def test_short_runs_start_no_worker() -> None:
    # far below PARALLEL_WORK seconds of work: everything in this process
    results = map_files(_evaluate, [1, 2, 4, 6, 8, 9], jobs=2, on_error=_reason)
    assert {pid for _, pid in results} == {os.getpid()}


def test_workers_give_the_same_results_in_order_with_faults_per_item(workers_at_once) -> None:
    items = list(range(14))
    with pytest.warns(UserWarning, match="item 3 is odd"):  # issued again in this process
        results = map_files(_evaluate, items, jobs=2, on_error=_reason)
    assert results[RAISES] == ("failed", "unexpected RuntimeError: cannot evaluate 5")
    assert results[DIES] == ("failed", parallel._DIED)
    assert parallel._DIED.startswith("the worker process evaluating it stopped abruptly")
    for i in set(items) - {RAISES, DIES}:
        assert results[i][0] == i * i
    # the first three items are evaluated here (one to warm up, two to measure), the rest by
    # workers, including those after the one whose worker died
    pids = [r[1] for i, r in enumerate(results) if i not in (RAISES, DIES)]
    assert set(pids[:3]) == {os.getpid()}
    assert os.getpid() not in pids[3:] and len(set(pids[3:])) >= 1


def test_the_calling_process_works_too(monkeypatch) -> None:
    monkeypatch.setattr(parallel, "PARALLEL_WORK", 0.0)
    items = [i for i in range(40) if i not in (RAISES, DIES, WARNS)]
    results = map_files(_evaluate, items, jobs=2, on_error=_reason)
    assert [r[0] for r in results] == [i * i for i in items]


def test_workers_import_only_what_the_work_needs(workers_at_once) -> None:
    pid, loaded = map_files(_modules, range(5), jobs=2, on_error=_reason)[-1]
    assert pid != os.getpid() and "viscometry" in loaded
    assert not {"pandas", "matplotlib", "ipywidgets", "IPython", "jupyter_client"} & set(loaded)


def test_workers_started_ahead_are_used_or_ended(monkeypatch) -> None:
    monkeypatch.setattr(parallel, "READY_WORK", 0.0)
    with Workers(1) as none:
        assert not none.ready
    with Workers(2, warm_up="audit") as unused:
        processes = list(unused._pool[0]._processes.values())
    assert not unused.ready and processes and not any(p.is_alive() for p in processes)
    with Workers(2, warm_up="audit") as ready:
        items = [i for i in range(12) if i not in (RAISES, DIES, WARNS)]
        results = map_files(_evaluate, items, jobs=2, on_error=_reason, workers=ready)
        assert not ready.ready  # taken (and ended) by map_files
    assert [r[0] for r in results] == [i * i for i in items]


def _terminal() -> tuple[io.TextIOWrapper, int]:
    """A text stream on a pseudo-terminal, and the descriptor to read what it shows."""
    reader, writer = os.openpty()
    return io.TextIOWrapper(io.FileIO(writer, "w"), encoding="ascii"), reader


def shown_on(reader: int, quiet: float = 0.3) -> str:
    """Everything the terminal received (the kernel passes it on a little later: read until
    nothing more comes for ``quiet`` seconds)."""
    import select

    data = b""
    while select.select([reader], [], [], quiet)[0]:
        data += os.read(reader, 10_000)
    return data.decode("ascii")


def test_progress_on_a_terminal_is_rewritten_in_place_and_cleared() -> None:
    stream, reader = _terminal()
    try:
        with TerminalProgress("auditing", "files", stream, delay=0, interval=0) as bar:
            assert bar.enabled
            bar(3, 1000)
            bar(412, 1000)
        shown = shown_on(reader)
    finally:
        stream.close()
        os.close(reader)
    blank = " " * len("auditing 412/1000 files")
    assert shown.replace("\r\n", "\n") == (
        "\rauditing 3/1000 files\rauditing 412/1000 files\r" + blank + "\r"
    )


def test_no_progress_unless_a_terminal(tmp_path) -> None:
    with open(tmp_path / "log", "w", encoding="utf-8") as file:
        for stream in (io.StringIO(), file):
            with TerminalProgress("auditing", "files", stream, delay=0, interval=0) as bar:
                bar(1, 2)
            assert not bar.enabled
    assert (tmp_path / "log").read_text(encoding="utf-8") == ""


def test_progress_waits_and_short_runs_show_nothing() -> None:
    stream, reader = _terminal()
    try:
        with TerminalProgress("auditing", "files", stream, delay=60) as bar:
            bar(1, 2)
            bar(2, 2)
        assert shown_on(reader) == ""
    finally:
        stream.close()
        os.close(reader)


def test_unknown_warm_up_is_refused_by_name() -> None:
    """A warm-up is a name from parallel's literal table, never a module path."""
    with pytest.raises(ValueError, match=r"warm_up: no warm-up named 'os'"):
        Workers(2, warm_up="os")
