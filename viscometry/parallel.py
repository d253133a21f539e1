"""Run one function over many files on every core, results in the order given.

Edge layer (processes, terminals); the engine never imports it. :func:`map_files` is the one
parallel map of the command line: ``viscometry audit`` uses it, and so can any later command
that evaluates many files one by one. :class:`TerminalProgress` is the one progress line.

How :func:`map_files` works
---------------------------
* **Small runs stay in this process.** The calling process evaluates items one after
  another and measures the processor time of each (the first item, which pays for imports
  and caches, is not counted). Worker processes are started only when the work left,
  estimated from the quickest of the last three items (so that one slow item, e.g. one that
  loads a module, does not start them), exceeds :data:`PARALLEL_WORK` seconds, about twice
  what a worker needs to start; so a short audit never pays for them, and ``jobs=1`` never
  starts any.
* **Workers may be started ahead** (:class:`Workers`), e.g. by the command line before it
  imports the engine and searches the folders, so that they are ready when the files are
  known; they are used when the work left is estimated at more than :data:`READY_WORK`
  seconds, and ended otherwise.
* **The caller works too.** With ``jobs = N`` there are N - 1 workers, and the calling
  process keeps evaluating items from the end of the list while the workers take them from
  the front (chunks of about :data:`CHUNK_SECONDS` of work), so the seconds a worker needs to
  start are not lost.
* **Workers are started with 'spawn'** (a fresh interpreter: fork + exec at once), on Linux
  too. Forking a process that runs threads (a Jupyter kernel, a BLAS thread pool, a test
  runner's helpers) can deadlock the child, and Python 3.12 warns about it; the
  'forkserver' method is safe as well but makes the caller wait until its server has
  imported the worker's module, while 'spawn' returns at once. A worker imports only the
  module of the function it runs (and what that imports when it is called), plus the main
  module as every 'spawn' child does — so a script that calls :func:`map_files` (or
  :func:`viscometry.audit.run_audit`) with more than one job must keep its top-level code
  under ``if __name__ == "__main__":``, as the :mod:`multiprocessing` guide says. Workers
  ignore Ctrl-C; the calling process ends them.
* **Faults stay with their item.** An exception raised by the function (``MemoryError``
  included) becomes ``on_error(item, reason)`` for that item, in this process or a worker
  alike. A worker that dies (killed, out of memory, crashed) takes only the item it was
  evaluating: that item is evaluated again alone in a fresh worker and, if that one dies
  too, becomes ``on_error(item, reason)``; the other items are evaluated again. If workers
  cannot start at all, the items left are evaluated in this process.
* **Ctrl-C** (``KeyboardInterrupt``) ends the workers (terminated and waited for) and is
  raised again, so the command line exits with 130 and no process is left behind.

Python warnings a worker's function issues are issued again in the calling process.
"""

from __future__ import annotations

import os
import sys
import time
import warnings
from collections.abc import Callable, Iterable, Sequence
from typing import Any, TextIO, TypeVar

from viscometry._checks import (
    available_cores,  # re-exported: the cores this process may use
    worker_count,
)
from viscometry.errors import InputError

__all__ = [
    "CHUNK_SECONDS",
    "MAX_JOBS",
    "PARALLEL_WORK",
    "READY_WORK",
    "TerminalProgress",
    "Workers",
    "available_cores",
    "check_jobs",
    "map_files",
]

T = TypeVar("T")
R = TypeVar("R")

#: Most processes of one run: Windows cannot wait for more than 61 worker processes, and on
#: a larger machine more processes than cores only add memory (each holds the engine).
MAX_JOBS = 61
#: Estimated seconds of work left above which worker processes are started (about twice the
#: time a 'spawn' worker needs to import the engine; measured with benchmarks/bench_audit.py).
PARALLEL_WORK = 2.0
#: The same for workers started ahead (:class:`Workers`): handing items over costs little.
READY_WORK = 0.2
#: Seconds of work given to a worker at a time (fewer round trips for quick items; small
#: enough that the calling process and the workers finish together).
CHUNK_SECONDS = 0.05
#: Most items given to a worker at a time.
MAX_CHUNK = 64
#: Whether the calling process evaluates items while workers run (tests turn it off to make
#: sure the workers do the work).
WORK_HERE = True

_FAILED = "unexpected {name}: {text}"
_DIED = (
    "the worker process evaluating it stopped abruptly (killed, out of memory or crashed); "
    "evaluated again alone, it stopped again"
)
_MISSING: Any = object()


def check_jobs(value: object, field: str = "jobs") -> int:
    """A number of processes: ``None`` means every available core; at most :data:`MAX_JOBS`.

    Parameters
    ----------
    value : int or None
        Processes that evaluate at the same time, the calling one included.
    field : str
        What to call it in the message (``"--jobs"`` on the command line).

    Returns
    -------
    int
        1 to :data:`MAX_JOBS` (a larger number is capped).

    Raises
    ------
    InputError
        Not a whole number, or below 1.

    Examples
    --------
    >>> check_jobs(2), check_jobs(1000)
    (2, 61)
    >>> check_jobs(0)
    Traceback (most recent call last):
    ...
    viscometry.errors.InputError: jobs must be a whole number of at least 1, got 0
    """
    return worker_count(value, field, MAX_JOBS)


class TerminalProgress:
    """A progress line on a terminal: ``auditing 412/1000 files``, rewritten in place.

    Called as ``progress(done, total)``. Nothing is written unless ``stream`` is a terminal
    (so nothing when it is piped, redirected or captured by a test), nor before ``delay``
    seconds have passed (a short run shows nothing), nor more often than every ``interval``
    seconds. :meth:`close` (or leaving a ``with`` block) clears the line. The line is
    written with ``os.write`` to the stream's file descriptor, after flushing the stream, so
    the carriage return reaches the terminal; its text is this package's own (a label and
    two counts), never text from a file.

    Parameters
    ----------
    label, noun : str
        The words before and after the counts.
    stream : text stream, optional
        Default ``sys.stderr``.
    delay, interval : float
        Seconds before the first update, and between updates.

    Examples
    --------
    >>> import io
    >>> with TerminalProgress("auditing", "files", io.StringIO()) as bar:
    ...     bar(1, 2)
    >>> bar.enabled
    False
    """

    def __init__(self, label: str, noun: str, stream: TextIO | None = None, *,
                 delay: float = 0.5, interval: float = 0.1) -> None:  # fmt: skip
        self.label, self.noun = label, noun
        self.stream = sys.stderr if stream is None else stream
        self.delay, self.interval = delay, interval
        self._start = time.monotonic()
        self._last = -float("inf")
        self._width = 0
        self._fd = self._terminal_fd(self.stream)

    @staticmethod
    def _terminal_fd(stream: Any) -> int | None:
        try:
            if not stream.isatty():
                return None
            return int(stream.fileno())
        except (AttributeError, OSError, ValueError):  # a captured or closed stream
            return None

    @property
    def enabled(self) -> bool:
        """Whether the stream is a terminal (the line is shown)."""
        return self._fd is not None

    def __call__(self, done: int, total: int) -> None:
        if self._fd is None:
            return
        now = time.monotonic()
        if now - self._start < self.delay or now - self._last < self.interval:
            return
        self._last = now
        text = f"{self.label} {done}/{total} {self.noun}"
        self._write("\r" + text + " " * max(0, self._width - len(text)))
        self._width = len(text)

    def close(self) -> None:
        """Clear the line (if anything was shown)."""
        if self._fd is not None and self._width:
            self._write("\r" + " " * self._width + "\r")
            self._width = 0

    def _write(self, text: str) -> None:
        try:
            self.stream.flush()
            os.write(self._fd, text.encode("ascii", "replace"))  # type: ignore[arg-type]
        except (OSError, ValueError):  # the terminal went away: stop showing progress
            self._fd = None

    def __enter__(self) -> TerminalProgress:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def _failure(exc: BaseException) -> str:
    return _FAILED.format(name=type(exc).__name__, text=exc)


def map_files(
    fn: Callable[[T], R],
    items: Iterable[T],
    jobs: int | None = None,
    *,
    on_error: Callable[[T, str], R],
    progress: Callable[[int, int], None] | None = None,
    workers: Workers | None = None,
) -> list[R]:
    """``[fn(item) for item in items]``, spread over ``jobs`` processes, in the order given.

    See the module notes for when workers are started and how faults are handled.

    Parameters
    ----------
    fn : callable
        A function defined at the top level of an importable module (workers import it by
        name); its items and results must be picklable.
    items : iterable
        What to evaluate, e.g. file paths.
    jobs : int, optional
        Processes that evaluate at the same time, the calling one included (default: every
        available core, :func:`check_jobs`). 1 evaluates everything in this process.
    on_error : callable
        ``on_error(item, reason)`` gives the result for an item whose evaluation raised an
        exception or killed its worker; ``reason`` is one line of text.
    progress : callable, optional
        ``progress(done, total)``, called in this process as items finish (e.g. a
        :class:`TerminalProgress`).
    workers : Workers, optional
        Worker processes started ahead; used (and then ended) when the work left pays for
        them, else left to their ``with`` block to end.

    Returns
    -------
    list
        One result per item, in the order of ``items``, whatever the number of processes.

    Raises
    ------
    InputError
        ``jobs`` below 1 or not a whole number; a worker process that starts this function
        while it imports the main module (a script without the ``__main__`` guard).

    Examples
    --------
    >>> map_files(abs, [-2, 3], jobs=1, on_error=lambda item, reason: None)
    [2, 3]
    """
    work = list(items)
    jobs = check_jobs(jobs)
    if jobs > 1 and _in_worker():
        jobs = 1  # a worker never starts workers of its own
    run = _Run(fn, work, on_error, progress)
    run.report()
    ready = workers if workers is not None and workers.ready else None
    threshold = READY_WORK if ready is not None else PARALLEL_WORK
    measured: list[float] = []  # processor seconds per item, the first item left out
    for i in range(len(work)):
        if jobs > 1 and _worth_starting(measured, len(work) - i, threshold):
            run.in_parallel(list(range(i, len(work))), jobs, min(measured[-3:]), ready)
            break
        t0 = time.thread_time()
        run.here(i)
        if i > 0:
            measured.append(time.thread_time() - t0)
    return run.results


def _worth_starting(measured: Sequence[float], left: int, threshold: float) -> bool:
    """Whether the work left (estimated from the quickest of the last three items measured,
    two at least) pays for workers."""
    if len(measured) < 2 or left < (2 if WORK_HERE else 1):
        return False
    return min(measured[-3:]) * left >= threshold


def _in_worker() -> bool:
    """Whether this process is a :mod:`multiprocessing` child; raises while it imports the
    parent's main module (a script that starts workers without the ``__main__`` guard)."""
    mp = sys.modules.get("multiprocessing")  # every child has imported it
    if mp is None or mp.parent_process() is None:
        return False
    if getattr(mp.current_process(), "_inheriting", False):
        raise InputError(
            "a worker process started more workers while it imported the main module: keep "
            "the script's top-level code under 'if __name__ == \"__main__\":' (or use jobs=1)"
        )
    return True


class _Run:
    """The results of one :func:`map_files` call as they come in, from here or from workers."""

    def __init__(self, fn: Callable[[Any], Any], items: list[Any],
                 on_error: Callable[[Any, str], Any],
                 progress: Callable[[int, int], None] | None) -> None:  # fmt: skip
        self.fn, self.items, self.on_error, self.progress = fn, items, on_error, progress
        self.results: list[Any] = [_MISSING] * len(items)
        self.done = 0

    def report(self) -> None:
        if self.progress is not None:
            self.progress(self.done, len(self.items))

    def here(self, i: int) -> None:
        """Evaluate item ``i`` in this process."""
        try:
            result = self.fn(self.items[i])
        except Exception as exc:  # noqa: BLE001 - any fault stays with its item
            result = self.on_error(self.items[i], _failure(exc))
        self.set(i, result)

    def set(self, i: int, result: Any) -> None:
        self.results[i] = result
        self.done += 1
        self.report()

    def from_worker(self, i: int, outcome: tuple[str, Any, list[tuple[Any, ...]]]) -> None:
        """Store what a worker sent for item ``i``, issuing its warnings again here."""
        kind, value, caught = outcome
        try:
            for message, category, filename, lineno in caught:
                warnings.warn_explicit(message, category, filename, lineno)
        except Exception as exc:  # noqa: BLE001 - a warning made an error, as it would be here
            kind, value = "error", _failure(exc)
        self.set(i, value if kind == "ok" else self.on_error(self.items[i], value))

    def in_parallel(self, indexes: list[int], jobs: int, seconds_per_item: float,
                    ready: Workers | None) -> None:  # fmt: skip
        """Evaluate ``indexes`` with ``jobs - 1`` workers (``jobs`` without :data:`WORK_HERE`)
        and this process; after a worker died, again with fresh workers."""
        size = 1 if seconds_per_item <= 0 else round(CHUNK_SECONDS / seconds_per_item)
        size = max(1, min(size, MAX_CHUNK, len(indexes) // (4 * jobs) or 1))
        count = jobs - 1 if WORK_HERE else jobs
        pool = ready.take() if ready is not None else None
        while indexes:
            if pool is None:
                try:
                    pool = _start_pool(min(count, len(indexes)))
                except OSError:  # no process can be started (a limit): all here
                    for i in indexes:
                        self.here(i)
                    return
            indexes = _with_workers(self, indexes, pool, size)
            pool = None


# ------------------------------------------------------------------ worker processes
#: Slot values: a worker has not claimed the slot yet / is between items.
_FREE, _IDLE = -2, -1
#: In a worker: the shared slots, and the index of this worker's slot, where it notes the
#: item it is evaluating (so that the item a dead worker held is known).
_SLOTS: Any = None
_SLOT = -1


def _init_worker(slots: Any) -> None:
    """Start of a worker: ignore Ctrl-C (the calling process ends workers) and claim a slot."""
    import signal

    global _SLOTS, _SLOT
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    with slots.get_lock():
        raw = slots.get_obj()
        _SLOT = next(k for k in range(len(raw)) if raw[k] == _FREE)
        raw[_SLOT] = _IDLE
        _SLOTS = raw


def _portable(category: type[Warning]) -> type[Warning]:
    """A warning class a worker can send back (importable by name), else ``UserWarning``."""
    module = sys.modules.get(category.__module__)
    return category if getattr(module, category.__qualname__, None) is category else UserWarning


def _work(fn: Callable[[Any], Any], chunk: list[tuple[int, Any]]) -> list[tuple[Any, ...]]:
    """In a worker: ``(kind, result or reason, warnings)`` for each ``(index, item)``."""
    out = []
    for i, item in chunk:
        if _SLOTS is not None:
            _SLOTS[_SLOT] = i
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                kind, value = "ok", fn(item)
            except Exception as exc:  # noqa: BLE001 - any fault stays with its item
                kind, value = "error", _failure(exc)
        sent = [(str(w.message), _portable(w.category), w.filename, w.lineno) for w in caught]
        out.append((kind, value, sent))
    if _SLOTS is not None:
        _SLOTS[_SLOT] = _IDLE
    return out


def _start_pool(workers: int) -> tuple[Any, Any]:
    """A 'spawn' process pool of ``workers`` and the slots its workers claim."""
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    context = multiprocessing.get_context("spawn")
    slots = context.Array("q", [_FREE] * workers)
    pool = ProcessPoolExecutor(
        workers, mp_context=context, initializer=_init_worker, initargs=(slots,)
    )
    return pool, slots


#: What a worker started ahead may run first, by name: ``(module, function)``. A literal
#: table, so no module name reaches ``import_module`` from anywhere else.
WARM_UPS: dict[str, tuple[str, str]] = {
    "audit": ("viscometry.audit", "warm_up"),
}


def _warm(warm_up: str | None) -> None:
    """In a worker started ahead: run the warm-up of that name from :data:`WARM_UPS`."""
    if warm_up is not None:
        import importlib

        module, function = WARM_UPS[warm_up]
        getattr(importlib.import_module(module), function)()


class Workers:
    """Worker processes started ahead of :func:`map_files`, to be ready when the items are.

    Used as a ``with`` block around the work that finds the items (searching folders,
    importing the engine); the workers start at once, in the background, and run
    ``warm_up`` (the name of an entry of :data:`WARM_UPS`, e.g. one that loads what an
    evaluation needs). :func:`map_files` given them uses them when the work pays for it;
    leaving the block ends them if it did not. Nothing is started when ``jobs`` is 1.

    Parameters
    ----------
    jobs : int, optional
        As for :func:`map_files` (``jobs - 1`` workers are started).
    warm_up : str, optional
        Name of an entry of :data:`WARM_UPS`, run by each worker once it has started.

    Examples
    --------
    >>> with Workers(1) as ready:
    ...     ready.ready
    False
    """

    def __init__(self, jobs: int | None = None, warm_up: str | None = None) -> None:
        if warm_up is not None and warm_up not in WARM_UPS:
            raise ValueError(f"warm_up: no warm-up named {warm_up!r} (known: {sorted(WARM_UPS)})")
        jobs = check_jobs(jobs)
        count = jobs - 1 if WORK_HERE else jobs
        self._pool: tuple[Any, Any] | None = None
        if jobs > 1 and not _in_worker():
            try:
                self._pool = _start_pool(count)
                for _ in range(count):  # each task starts one more worker process
                    self._pool[0].submit(_warm, warm_up)
            except OSError:  # no process can be started now: map_files works without
                self.close()

    @property
    def ready(self) -> bool:
        """Whether workers were started and not yet used."""
        return self._pool is not None

    def take(self) -> tuple[Any, Any] | None:
        """The pool and its slots, for one use (then ending them is the taker's job)."""
        pool, self._pool = self._pool, None
        return pool

    def close(self) -> None:
        """End the workers unless they were taken."""
        pool, self._pool = self._pool, None
        if pool is not None:
            _stop(pool[0])

    def __enter__(self) -> Workers:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def _stop(pool: Any) -> None:
    """End a pool's workers now (terminated, then waited for) and its management thread."""
    terminate = getattr(pool, "terminate_workers", None)  # Python 3.14
    if terminate is not None:
        terminate()
    else:
        for process in list((getattr(pool, "_processes", None) or {}).values()):
            try:
                process.terminate()
            except (OSError, ValueError, AttributeError):  # already gone
                pass
    pool.shutdown(wait=True, cancel_futures=True)


class _Inbox:
    """Finished futures, handed from the pool's thread to the calling thread."""

    def __init__(self) -> None:
        import collections
        import threading

        self.queue: collections.deque[Any] = collections.deque()
        self.event = threading.Event()

    def put(self, future: Any) -> None:
        self.queue.append(future)
        self.event.set()

    def take(self, timeout: float) -> list[Any]:
        self.event.wait(timeout)
        self.event.clear()
        out = []
        while self.queue:
            out.append(self.queue.popleft())
        return out


def _with_workers(run: _Run, indexes: list[int], started: tuple[Any, Any], size: int) -> list[int]:
    """Evaluate ``indexes`` with one pool (and here); return those to evaluate again after
    a worker died (the item it held has been dealt with alone)."""
    pool, slots = started
    workers = len(slots)
    try:
        lost = _feed(run, pool, indexes, size)
    except BaseException:
        _stop(pool)
        raise
    _stop(pool)
    if not lost:
        return []
    held = {int(slots.get_obj()[k]) for k in range(workers)} & set(lost)
    if not held:  # the workers died before evaluating anything: no worker can help
        for i in lost:
            run.here(i)
        return []
    for i in sorted(held):
        _alone(run, i)
    return [i for i in lost if i not in held]


def _feed(run: _Run, pool: Any, indexes: list[int], size: int) -> list[int]:
    """Give ``pool`` the items in chunks and take chunks back from the end to evaluate here
    while they wait; collect results until every chunk is in. Returns the items lost when
    the pool broke (a worker died), else ``[]``."""
    from concurrent.futures.process import BrokenProcessPool

    inbox, order, chunks, lost = _Inbox(), [], {}, []
    for k in range(0, len(indexes), size):
        chunk = indexes[k : k + size]
        try:
            future = pool.submit(_work, run.fn, [(i, run.items[i]) for i in chunk])
        except BrokenProcessPool:
            lost += chunk
            continue
        chunks[future] = chunk
        order.append(future)
        future.add_done_callback(inbox.put)
    stealing = WORK_HERE
    while chunks:
        if stealing and order and order[-1].cancel():
            for i in chunks.pop(order.pop()):
                run.here(i)
        else:  # the last chunk is taken (so are all before it), or stealing is off
            stealing = False
        for future in inbox.take(0.0 if stealing else 0.1):
            if future in chunks and not future.cancelled():
                lost += _collect(run, future, chunks.pop(future))
    return sorted(lost)


def _collect(run: _Run, future: Any, chunk: list[int]) -> list[int]:
    """Store a finished chunk; returns the chunk when its pool broke."""
    from concurrent.futures.process import BrokenProcessPool

    error = future.exception()
    if isinstance(error, BrokenProcessPool):
        return chunk
    if error is not None:  # e.g. a result that cannot be sent back
        for i in chunk:
            run.set(i, run.on_error(run.items[i], _failure(error)))
    else:
        for i, outcome in zip(chunk, future.result(), strict=True):
            run.from_worker(i, outcome)
    return []


def _alone(run: _Run, i: int) -> None:
    """Evaluate item ``i`` alone in a fresh worker (it was held by a worker that died)."""
    from concurrent.futures.process import BrokenProcessPool

    try:
        pool, _slots = _start_pool(1)
    except OSError:  # no process can be started now
        run.from_worker(i, ("error", _DIED.split(";")[0], []))
        return
    try:
        future = pool.submit(_work, run.fn, [(i, run.items[i])])
        try:
            (outcome,) = future.result()
        except BrokenProcessPool:
            outcome = ("error", _DIED, [])
    finally:
        _stop(pool)
    run.from_worker(i, outcome)
