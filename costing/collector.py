"""Fewer full passes of Python's cyclic garbage collector while a week is costed and written.

What it changes. CPython frees an object as soon as nothing refers to it (reference counting);
the cyclic collector only finds groups of objects that refer to each other. It runs by
generations: a young pass after every ``threshold0`` new container objects, a middle pass after
``threshold1`` young ones, a full pass, which visits every live container object, after
``threshold2`` middle ones (and only once the objects that survived since the last full pass
number a quarter of the long-lived ones). A costed week holds millions of long-lived objects
(lane steps, legs, labels, rows), so each full pass visits all of them, and with the default
thresholds (700, 10, 10) they come again and again as the week grows.

`fewer_collections` raises the thresholds to (100,000, 50, 1,000) for the duration of a block
and puts the previous ones back after it (nested blocks too): young and middle passes still run,
so cycles that die young are still freed; full passes are put off until the block ends, when
the usual thresholds apply again. Nothing is disabled and no result depends on it: the
collector frees memory, it never changes a value.

Where: `pipeline.load`, `pipeline.run`, `sheets.map.draw_map`, `sheets.writer.write_costed` and
`sheets.parquet_set.write_parquet_set` run under it, and the command line's whole run (`costing
run`, `costing demo`) is one block around them: each block's end puts the default thresholds
back, and the next allocation may then start the full pass that was put off (0.8 s on the week
of `benchmarks.bench_week` after the map, when the map was a block of its own). Outside them
the heap a finished week leaves is scanned as usual: on the 50,000-shipment week of
`benchmarks.bench_workbook` importing the map's plotting library between run and write took
4.3 s of full passes before the map ran under it.

Measured on the week of `benchmarks.bench_week` (4,992 shipments, every sheet on), 2026-12-03:
26.3 s end to end with the default thresholds, 21.5 s with these; peak memory 1,108 MB and
1,112 MB. With the collector off altogether: 22.0 s, 1,155 MB (the cycles that die young kept).
"""

from __future__ import annotations

import contextlib
import gc
import threading
from collections.abc import Iterator

THRESHOLDS = (100_000, 50, 1_000)


_LOCK = threading.Lock()
_held = {"depth": 0, "before": (700, 10, 10)}  # blocks open in the process; thresholds found by the first


@contextlib.contextmanager
def fewer_collections() -> Iterator[None]:
    """Run the block with the collector's thresholds at THRESHOLDS (module docstring), then put
    the previous thresholds back. The collector is one per process: blocks open at once, nested
    or in several threads (a distributed run on threads), hold the raised thresholds from the
    first one in to the last one out, which puts back what the first found.

    Examples
    --------
    >>> import gc
    >>> before = gc.get_threshold()
    >>> with fewer_collections():
    ...     gc.get_threshold() == THRESHOLDS
    True
    >>> gc.get_threshold() == before
    True
    """
    with _LOCK:
        if _held["depth"] == 0:
            _held["before"] = gc.get_threshold()
            gc.set_threshold(*THRESHOLDS)
        _held["depth"] += 1
    try:
        yield
    finally:
        with _LOCK:
            _held["depth"] -= 1
            if _held["depth"] == 0:
                gc.set_threshold(*_held["before"])
