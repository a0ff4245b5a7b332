"""Work set aside: a function run in a second process while this one goes on with the week.

A week's stages do not all need each other. The cost-time trade-off searches need only the
networks and the shipments, not the vehicle runs the plan stage makes; the map picture needs
only the lane totals, not the sheets. On a machine with two or more cores, `start` runs such a
function in a forked child process (``os.fork``: the child starts with a copy of this process's
memory, so nothing is sent to it) and `Job.result` collects its return value, pickled into an
unlinked temporary file (its place sent through a pipe), when this process needs it; `series`
runs several calls one after the other in one child, each value sent as soon as it is made.

What it guarantees:

- **The same value as a plain call.** The child runs the same function on the same objects (a
  copy of this process's memory at the fork); its value comes back pickled (floats bit for
  bit). Work the function does to its arguments' state in the child (caches, counters,
  problems) stays in the child: callers return whatever they need from it as part of the value.
- **Nothing lost.** When the child cannot give a value (it raised, was killed, or exited without
  one), `result` calls the function in this process instead, at that point: an error is then
  raised here, with its own traceback, and a flaky child costs time, never a result.
- **Only where forking is safe.** `available` is true only on Linux (``os.fork``), with two or
  more usable cores, in a process with one Python thread (forking a process with other threads
  running can leave a lock held for ever in the child: a Dask worker runs its tasks in threads),
  outside `one_process` (the LibreOffice add-on, inside Calc's process, and ``costing run
  --single-process``), and unless the environment sets ``COSTING_ASIDE=0``. Otherwise `start`
  defers the call, and `result` makes it, in this process: the same value, one core. (numpy's
  BLAS keeps idle threads of its own; it prepares them for a fork itself.)
- **No stray processes.** `result` and `close` wait for the child; `close` (or leaving the `with`
  block, or the Job being collected) kills a child whose value is no longer wanted.

The child exits with ``os._exit``: it runs none of this process's exit handlers and flushes none
of its buffered output. It freezes the inherited objects out of its cyclic collector's reach
(``gc.freeze``), so its collections do not visit, and copy, the parent's pages.

Who uses it: `costing.pipeline.run` (`Options.aside`: the comparison's batched searches and the
trade-off searches beside the plan stage, `costing.plan.analysis.Aside`), the command line (the
map picture beside the sheets) and `costing.sheets.assemble` (the heaviest worksheets' XML
beside the others' at close).

Examples
--------
>>> from costing import aside
>>> with aside.start(sum, [1, 2, 3]) as job:
...     job.result()
6
"""

from __future__ import annotations

import contextlib
import gc
import os
import pickle
import signal
import sys
import tempfile
import threading
from collections.abc import Callable, Iterator
from typing import Any

ENV = "COSTING_ASIDE"  # "0": never fork (every Job runs in this process)


def cores() -> int:
    """The cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


_held = 0  # `one_process` blocks open


@contextlib.contextmanager
def one_process() -> Iterator[None]:
    """Keep every Job of the block in this process (``costing run --single-process``; the
    LibreOffice add-on, whose Python runs inside Calc's process among Calc's own threads, which
    Python's thread count does not see)."""
    global _held
    _held += 1
    try:
        yield
    finally:
        _held -= 1


def available() -> bool:
    """Whether `start` forks a child: on Linux (``os.fork``; elsewhere forking a process that runs
    system frameworks is not safe), two or more usable cores, one Python thread in this process,
    outside `one_process`, and ``COSTING_ASIDE`` is not ``0``."""
    return (sys.platform.startswith("linux") and hasattr(os, "fork") and not _held
            and os.environ.get(ENV, "1") != "0" and cores() >= 2 and threading.active_count() == 1)


class Job:
    """Function calls set aside (made by `start` or `series`); ``result(k)`` gives the value of
    the k-th. A forked child makes the calls in order and sends each value as soon as it has
    it, so an early value can be collected while the child works on the next."""

    def __init__(self, calls: list[tuple[Callable[..., Any], tuple, dict]], fork: bool):
        self._calls = list(calls)
        self._values: dict[int, Any] = {}
        self._got = 0  # values read from the child so far (in order)
        self._pid: int | None = None
        self._pipe = None  # the read end, as a file: where each value is in the spool
        self._spool = None  # the values, pickled, one after the other
        self.forked = False  # whether a child process computes (or computed) the values
        self._owner = os.getpid()  # a child forked later inherits this Job: only its owner stops it
        if fork:
            self._fork()

    # -- public --
    def result(self, k: int = 0) -> Any:
        """The k-th call's value: the child's when it gave one, else computed here and now
        (whatever the function raises is raised here)."""
        if k not in self._values:
            while self._pipe is not None and self._got <= k:
                self._read_one()
            if k not in self._values:
                fn, args, kwargs = self._calls[k]
                self._values[k] = fn(*args, **kwargs)
        return self._values[k]

    def close(self) -> None:
        """Stop a child whose values were not all collected, and wait for it (nothing else)."""
        if os.getpid() != self._owner:  # in another Job's child: not ours to stop
            return
        if self._pid is not None:
            try:
                os.kill(self._pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
        self._reap()

    def __enter__(self) -> Job:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def __del__(self):
        try:
            self.close()
        except Exception:  # interpreter shutting down
            pass

    # -- private --
    def _fork(self) -> None:
        for stream in (sys.stdout, sys.stderr):  # nothing buffered is written twice
            try:
                stream.flush()
            except (AttributeError, ValueError, OSError):
                pass
        # values go to an unlinked temporary file and only their places through the pipe: a
        # pipe holds 64 KiB, and a child writing a large value into it would wait for this
        # process to read it instead of going on with the next call
        spool = tempfile.TemporaryFile()
        r, w = os.pipe()
        pid = os.fork()
        if pid == 0:  # the child: compute, send, exit without this process's exit handlers
            code = 1
            try:
                os.close(r)
                gc.freeze()
                at = 0
                for fn, args, kwargs in self._calls:
                    try:
                        frame = pickle.dumps((True, fn(*args, **kwargs)), pickle.HIGHEST_PROTOCOL)
                    except BaseException:  # the parent makes the call again and raises it there
                        frame = pickle.dumps((False, None))
                    done = 0
                    while done < len(frame):
                        done += os.pwrite(spool.fileno(), memoryview(frame)[done:], at + done)
                    os.write(w, at.to_bytes(8, "little") + len(frame).to_bytes(8, "little"))
                    at += len(frame)
                code = 0
            finally:
                os._exit(code)
        os.close(w)
        self._pid, self._pipe, self._spool, self.forked = pid, os.fdopen(r, "rb"), spool, True

    def _read_one(self) -> None:
        """Read the child's next value (kept unless the child failed to make it); at the end,
        or when the child gives no more, close the pipe and wait for the child."""
        k = self._got
        try:
            head = self._pipe.read(16)  # (offset, size) of the value in the spool, when it is there
            if len(head) == 16:
                at, size = int.from_bytes(head[:8], "little"), int.from_bytes(head[8:], "little")
                frame = os.pread(self._spool.fileno(), size, at)
                if len(frame) == size:
                    ok, value = pickle.loads(frame)
                    if ok:
                        self._values[k] = value
                    self._got = k + 1
        except Exception:  # a truncated or unreadable value: made here instead
            pass
        if self._got <= k or self._got >= len(self._calls):
            self._reap()

    def _reap(self) -> None:
        """Close the pipe and the spool, and wait for the child (if there is one)."""
        if self._pipe is not None:
            self._pipe.close()
            self._pipe = None
        if self._spool is not None:
            self._spool.close()
            self._spool = None
        pid, self._pid = self._pid, None
        while pid is not None:
            try:
                os.waitpid(pid, 0)
            except InterruptedError:
                continue
            except ChildProcessError:
                pass
            pid = None


def start(fn: Callable[..., Any], *args, fork: bool | None = None, **kwargs) -> Job:
    """Start ``fn(*args, **kwargs)`` in a forked child, or defer it when forking is not
    `available` (or `fork` is False).

    Parameters
    ----------
    fn : callable
        Its value must pickle (standard library ``pickle``).
    fork : bool, optional
        False: never fork (the call is made by `Job.result`). Default: `available()`.

    Returns
    -------
    Job
        ``Job.result()`` gives the value; use it as a context manager, or call ``close``, when
        the value may not be wanted.
    """
    return series([(fn, args, kwargs)], fork)


def series(calls, fork: bool | None = None) -> Job:
    """Start the calls ``(fn, args, kwargs)`` one after the other in one forked child (each value
    sent as soon as it is made), or defer them: ``Job.result(k)`` gives the k-th value."""
    use = available() if fork is None else (fork and available())
    return Job(list(calls), use)
