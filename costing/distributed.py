"""A week too big for one process: ``costing.pipeline.run`` on shards of the shipments, on Dask.

Dask (``dask.distributed``, an optional dependency: ``pip install costing[dask]``) runs the
shards; nothing here routes, plans or prices. Each worker gets the Model without its shipments
once, as one pickled blob (``Client.scatter(..., broadcast=True)`` of bytes: depots, lanes, rates,
settings; each worker process unpickles it once and keeps it, ``_network``); each task is
``pipeline.run`` on that Model with one shard's shipments, analyses as the caller asks,
scenarios off. The driver gathers the shards' results into one ``pipeline.Costed``; each
scenario is costed the same way on its changed Model, as ``pipeline.run`` costs it.

What travels back is compact: a worker packs its shard's results and vehicle runs as columns
(numbers in numpy arrays, references to the Model's own rate cards, lanes and shipments by row;
``pack_shard``), and the driver keeps the columns, rebuilding the records only as they are read
(``PackedResults``, ``PackedRuns``: sequences that rebuild a block of records at a time), so the
week's legs are never held as objects in the driver all at once, nor pickled one object at a
time. The rebuilt records equal the worker's field for field (floats bit for bit).

Why the result equals the single-process run:

- **Shards never split a day.** The plan stage (``costing.plan.week``) lets shipments ready on
  the same day share vehicles across origins, so with Settings ``consolidate = yes`` a shard
  holds every shipment of each of its days (the ready day: ``ready_date``, blank = the first day
  of the whole run). With ``consolidate = no`` nothing is shared and a shard holds whole (day,
  origin) groups, except that the first day stays whole when a shipment leaves its ready date
  blank (the blank means the first day, and a shard takes its first day from its own shipments).
  Routing is per shipment, so a shipment's route does not depend on its shard.
- **Gathering restores the one run's order.** Results go back to the Model's order; vehicle
  runs are ordered by day as the plan orders them (with ``consolidate = no`` by day and then by
  shipment) and renumbered ``R0001``... in that order, the legs and the analysis's routes
  renamed with them; lane totals are summed again over the gathered runs in that order
  (``plan.analysis.lane_usage``); problems go back to the order routing and planning raise
  them (by the shipment's row).

What differs: the search's work counters on the Run sheet (searches, nodes settled and pushed,
compact networks built, batched searches) are sums over the shards, since each shard builds its
own networks and batches its own searches; stage times are summed over the shards, beside the
wall time of the distributed run.
"""

from __future__ import annotations

import datetime as _dt
import pickle
import re
import threading
import time
import uuid
from collections.abc import Callable, Sequence
from dataclasses import fields, replace
from itertools import islice
from operator import attrgetter

import numpy as np

from costing import pipeline
from costing.model import LaneUse, Model
from costing.plan.analysis import Analysis, ScenarioRun, lane_usage
from costing.plan.route import RunStats
from costing.plan.week import VehicleRun, first_day, late_hours
from costing.price.cost import CostedShipment, Leg

DASK_MISSING = ("dask.distributed is not installed: pip install 'costing[dask]' (or 'dask[distributed]') "
                "to run on several workers")


def shard_groups(model: Model) -> list[list[int]]:
    """Shipment indices in groups that must stay in one shard, in the order first seen.

    Parameters
    ----------
    model : Model
        Settings ``consolidate`` and the shipments' ready dates decide the groups.

    Returns
    -------
    list of list of int
        With ``consolidate = yes`` one group per ready day; with ``no`` one per (day, origin),
        but the first day whole when any shipment leaves its ready date blank. Indices ascend.
    """
    start = first_day(model)
    consolidate = model.settings.consolidate == "yes"
    blank = any(s.ready_date is None for s in model.shipments)
    groups: dict[tuple, list[int]] = {}
    for i, s in enumerate(model.shipments):
        day = s.ready_date or start
        if consolidate or (blank and start is not None and day == start):
            key: tuple = (day,)
        else:
            key = (day, s.origin)
        groups.setdefault(key, []).append(i)
    return list(groups.values())


def make_shards(model: Model, shards: int) -> list[list[int]]:
    """The groups of ``shard_groups`` packed into at most `shards` shards of about equal size
    (largest group first into the smallest shard); each shard's indices ascend."""
    bins: list[list[int]] = [[] for _ in range(max(1, shards))]
    for g in sorted(shard_groups(model), key=len, reverse=True):
        min(bins, key=len).extend(g)
    return [sorted(b) for b in bins if b]


# --- compact results: what a worker sends back --------------------------------------------------
#
# A shard's results and vehicle runs travel as columns, not as objects: every CostedShipment,
# VehicleRun, Leg and LaneUse of the shard goes into a pool of its class, and each field of a pool
# into one column (numpy arrays for numbers, shared tables for repeated texts and dates, ragged
# arrays for tuples, row numbers for references to another pool, row numbers into the Model's own
# records for rate cards, lanes and the shard's shipments). The driver keeps these columns and
# rebuilds objects only as they are read (``PackedResults``, ``PackedRuns``), a block at a time, so
# the whole week's legs are never held as objects at once. Every value is restored exactly: floats
# as the same bits, ints as ints, None as None, strings and dates by value, any other object as
# pickled; a pooled record is rebuilt with the same field values (``dataclasses`` equality holds).

# pooled classes, each referring only to classes after it
_POOLED: tuple[type, ...] = (CostedShipment, VehicleRun, Leg, LaneUse)
_RANK = {cls: k for k, cls in enumerate(_POOLED)}
_FIELDS = {cls: tuple(f.name for f in fields(cls)) for cls in _POOLED}
_BY_VALUE = (str, bool, int, type(None), _dt.date, _dt.datetime)  # interned by value (floats by repr)
_HASHED = {str, type(None), _dt.date, _dt.datetime}  # types whose values never equal another's
BLOCK = 4096  # results or runs rebuilt at a time when read in order


class _Packer:
    """Turns objects into columns; `known` names tables of records both ends hold (by identity)."""

    def __init__(self, known: dict[str, Sequence]):
        self.known = {id(o): (name, i) for name, table in known.items() for i, o in enumerate(table)}
        self.pools: dict[type, tuple[list, dict[int, int]]] = {cls: ([], {}) for cls in _POOLED}

    def _refs(self, cls: type, values: list) -> np.ndarray:
        members, at = self.pools[cls]
        get = at.get
        rows = []
        for v in values:
            i = get(id(v))
            if i is None:
                i = at[id(v)] = len(members)
                members.append(v)
            rows.append(i)
        return np.array(rows, dtype=np.int64)

    def column(self, values: list, rank: int = -1) -> tuple:
        """One column; `rank`: the pool being packed (references go only to later pools)."""
        n = len(values)
        if not n:
            return ("o", [], np.zeros(0, dtype=np.int64))
        types = set(map(type, values))
        if len(types) == 1:
            t = next(iter(types))
            if t is float:
                a = np.array(values, dtype=np.float64)
                bits = a.view(np.int64)
                return ("c", values[0], n) if (bits == bits[0]).all() else ("f", a)
            if t is int and all(-(2 ** 62) < v < 2 ** 62 for v in (min(values), max(values))):
                a = np.array(values, dtype=np.int64)
                return ("c", values[0], n) if (a == a[0]).all() else ("f", a)
            if t is tuple:
                lengths = np.fromiter(map(len, values), dtype=np.int64, count=n)
                return ("t", lengths, self.column([x for v in values for x in v], rank))
            if t in _RANK and _RANK[t] > rank:
                return ("r", t, self._refs(t, values))
        elif types == {float, type(None)}:
            mask = np.fromiter((v is None for v in values), dtype=bool, count=n)
            return ("n", np.array([0.0 if v is None else v for v in values], dtype=np.float64), mask)
        if types <= _HASHED or types == {bool} or types == {int}:  # no two types' values compare equal
            unique = list(dict.fromkeys(values))
            if len(unique) == 1:
                return ("c", values[0], n)
            at = {v: i for i, v in enumerate(unique)}
            return ("o", unique, np.fromiter(map(at.__getitem__, values), dtype=np.int64, count=n))
        found = [self.known.get(id(v)) for v in values]
        if all(found) and len({k[0] for k in found}) == 1:
            return ("k", found[0][0], np.fromiter((k[1] for k in found), dtype=np.int64, count=n))
        unique = []
        seen: dict = {}
        index = np.empty(n, dtype=np.int64)
        for j, v in enumerate(values):
            t = type(v)
            key = (t, repr(v)) if t is float else (t, v) if t in _BY_VALUE else id(v)
            i = seen.get(key)
            if i is None:
                i = seen[key] = len(unique)
                unique.append(v)
            index[j] = i
        if len(unique) == 1:
            return ("c", unique[0], n)
        return ("o", unique, index)

    def pack(self, results: list, runs: list) -> dict:
        """The shard's results and runs as columns (``_Packed``'s state)."""
        roots = {"results": self.column(list(results)), "runs": self.column(list(runs))}
        pools = {}
        for cls in _POOLED:  # in rank order: a pool is complete before it is packed
            members = self.pools[cls][0]
            pools[cls] = {f: self.column(list(map(attrgetter(f), members)), _RANK[cls]) for f in _FIELDS[cls]}
            pools[cls]["#"] = len(members)
            self.pools[cls] = ([], {})
        return {"roots": roots, "pools": pools}


def _unpack(col: tuple, rows: np.ndarray, reader: _Reader) -> list:
    """The values of column `col` at `rows` (numpy int array), as Python objects."""
    kind = col[0]
    if kind == "c":
        return [col[1]] * len(rows)
    if kind == "f":
        return col[1][rows].tolist()
    if kind == "n":
        out = col[1][rows].tolist()
        for j in np.flatnonzero(col[2][rows]).tolist():
            out[j] = None
        return out
    if kind == "k":
        table = reader.known[col[1]]
        return [table[i] for i in col[2][rows].tolist()]
    if kind == "o":
        unique = col[1]
        return [unique[i] for i in col[2][rows].tolist()]
    if kind == "r":
        return reader.objects(col[1], col[2][rows])
    if kind == "t":
        lengths = col[1]
        starts = reader.offsets(col)[rows]
        lens = lengths[rows]
        total = int(lens.sum())
        flat = np.arange(total, dtype=np.int64) + np.repeat(starts - (np.cumsum(lens) - lens), lens)
        it = iter(_unpack(col[2], flat, reader))
        return [tuple(islice(it, k)) for k in lens.tolist()]
    raise ValueError(f"unknown column kind {kind!r}")


class _Reader:
    """Rebuilds a packed shard's objects. `known`: the driver's tables of the records named
    ``rates``, ``lanes``, ``depots`` and ``ships``; `rename`: a Leg's vehicle run id -> the
    gathered one (applied to the legs of results)."""

    def __init__(self, packed: dict, known: dict[str, Sequence], rename: Callable[[str], str] | None = None):
        self.packed = packed
        self.known = known
        self.rename = rename
        self._offsets: dict[int, np.ndarray] = {}
        self._cache: dict[type, list] = {}

    def offsets(self, col: tuple) -> np.ndarray:
        got = self._offsets.get(id(col))
        if got is None:
            got = self._offsets[id(col)] = np.concatenate(([0], np.cumsum(col[1])[:-1])).astype(np.int64)
        return got

    def objects(self, cls: type, rows: np.ndarray) -> list:
        """Pool `cls`'s records at `rows`; LaneUse records are rebuilt once and shared."""
        if cls is LaneUse:
            every = self._cache.get(cls)
            if every is None:
                pool = self.packed["pools"][cls]
                every = self._cache[cls] = self._build(cls, np.arange(pool["#"], dtype=np.int64))
            return [every[i] for i in rows.tolist()]
        return self._build(cls, rows)

    def _build(self, cls: type, rows: np.ndarray) -> list:
        pool = self.packed["pools"][cls]
        names = _FIELDS[cls]
        columns = [_unpack(pool[f], rows, self) for f in names]
        if cls is Leg and self.rename is not None:
            k = names.index("run_id")
            columns[k] = [self.rename(x) if x else x for x in columns[k]]
        out = []
        new = object.__new__
        for values in zip(*columns):
            o = new(cls)
            o.__dict__.update(zip(names, values))
            out.append(o)
        return out

    def field(self, cls: type, name: str, rows: np.ndarray) -> list:
        """One field of pool `cls` at `rows`, without rebuilding the records."""
        return _unpack(self.packed["pools"][cls][name], rows, self)

    def roots(self, name: str) -> np.ndarray:
        """The pool rows of the shard's ``results`` or ``runs``, in the shard's order."""
        col = self.packed["roots"][name]
        if col[0] == "r":
            return col[2]
        if col[0] == "o" and not len(col[2]):  # none
            return np.zeros(0, dtype=np.int64)
        raise ValueError(f"the shard's {name} were not packed as records")

    def sibling(self, rename: Callable[[str], str] | None) -> _Reader:
        """A reader of the same shard (sharing what is rebuilt once) with another `rename`."""
        other = _Reader(self.packed, self.known, rename)
        other._offsets, other._cache = self._offsets, self._cache
        return other


def pack_shard(costed: pipeline.Costed, known: dict[str, Sequence]) -> dict:
    """A shard's Costed with its results and vehicle runs packed as columns (``_Packer``);
    the rest (problems, statistics, analyses) as it is."""
    packed = _Packer(known).pack(costed.results, costed.runs)
    costed.results, costed.runs = [], []
    packed["costed"] = costed
    return packed


class _Lazy(Sequence):
    """A list of records rebuilt from packed shards when read: item `i` is record ``local[i]``
    of shard ``owner[i]``; reading in order rebuilds BLOCK records at a time."""

    def __init__(self, readers: list[_Reader], cls: type, owner: np.ndarray, rows: np.ndarray,
                 fix: Callable[[object, int], None] | None = None):
        self.readers, self.cls, self.owner, self.rows, self.fix = readers, cls, owner, rows, fix
        self._block: tuple[int, list] = (-1, [])

    def __len__(self) -> int:
        return len(self.owner)

    def _load(self, start: int) -> list:
        stop = min(start + BLOCK, len(self))
        owner, rows = self.owner[start:stop], self.rows[start:stop]
        out: list = [None] * (stop - start)
        for n in np.unique(owner).tolist():
            at = np.flatnonzero(owner == n)
            for j, o in zip(at.tolist(), self.readers[n].objects(self.cls, rows[at])):
                out[j] = o
        if self.fix is not None:
            for j, o in enumerate(out):
                self.fix(o, start + j)
        return out

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[k] for k in range(*i.indices(len(self)))]
        if i < 0:
            i += len(self)
        if not 0 <= i < len(self):
            raise IndexError(i)
        start = i - i % BLOCK
        if self._block[0] != start:
            self._block = (start, self._load(start))
        return self._block[1][i - start]

    def __iter__(self):
        for start in range(0, len(self), BLOCK):
            yield from self._load(start)

    def __eq__(self, other) -> bool:
        if not isinstance(other, Sequence) or len(self) != len(other):
            return False
        return all(a == b for a, b in zip(self, other))

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        return f"<{len(self):,} {self.cls.__name__} records rebuilt from packed shards as read>"


class PackedResults(_Lazy):
    """``Costed.results`` of a distributed run: CostedShipment records in the Model's order,
    rebuilt from the shards' columns when read (a list in all but storage)."""


class PackedRuns(_Lazy):
    """``Costed.runs`` of a distributed run: VehicleRun records in day order, numbered
    ``R0001``... as read."""


_NETWORKS: dict[str, Model] = {}  # per worker process: token -> the unpickled network Model
_KEEP = 2  # networks a worker keeps (the base run's and one scenario's)
_NET_LOCK = threading.Lock()


def _network(token: str, blob: bytes) -> Model:
    """On a worker: the Model (without shipments) that `blob` pickles, unpickled once per worker
    process and token (a worker with several threads unpickles it once too).

    Why a blob: scattering the Model object itself made dask pickle it on the driver and unpickle
    it in each worker's communication thread; at 100,000 depots and 300,000 lanes (a 61 MB
    pickle, about 1 s to load) a broadcast to 4 local workers on 2 cores never finished, while
    bytes are broadcast in well under a second and unpickled here, in the task, once."""
    with _NET_LOCK:
        model = _NETWORKS.get(token)
        if model is None:
            model = pickle.loads(blob)
            while len(_NETWORKS) >= _KEEP:
                _NETWORKS.pop(next(iter(_NETWORKS)))
            _NETWORKS[token] = model
        return model


def _run_shard(token: str, blob: bytes, shipments: tuple, options: pipeline.Options):
    """On a worker: ``pipeline.run`` on the network Model of `blob` (``_network``) with
    `shipments`, its results and vehicle runs packed as columns (``pack_shard``); the Model is
    left out of the answer (the driver has it), and the number of late-arrival problems (raised
    last) is added."""
    base = _network(token, blob)
    model = replace(base, shipments=shipments)
    costed = pipeline.run(model, options)
    start = first_day(model)
    late = sum(1 for r in costed.results if late_hours(r, start))
    costed.problems = costed.problems[len(model.problems):]
    costed.model = None
    costed.analysis.lanes = []  # the driver sums the lanes again over the gathered runs
    known = {"rates": base.rates, "lanes": base.lanes, "depots": base.depots, "ships": shipments}
    return pack_shard(costed, known), late


def _same_network(a: Model, b: Model) -> bool:
    """Whether `b` differs from `a` in its shipments alone (a scenario that changes only shipments
    reuses the network already on the workers)."""
    if a.settings != b.settings:
        return False
    return all(len(x) == len(y) and all(p is q for p, q in zip(x, y))
               for x, y in ((a.depots, b.depots), (a.lanes, b.lanes), (a.rates, b.rates)))


_ROW = re.compile(r"(\d+)$")


def _problem_order(model: Model):
    """problem -> the index of the shipment whose row it names (routing and planning problems
    name a Shipments cell); problems naming no shipment sort last, in the order given."""
    rows: dict[int, int] = {}
    for i, s in enumerate(model.shipments):
        rows.setdefault(s.row, i)
    unique = len(rows) == len(model.shipments)

    def key(p) -> int:
        m = _ROW.search(p.cell or "")
        return rows.get(int(m.group(1)), len(rows)) if (unique and m) else len(rows)
    return key


def _renumber(res, rename: Callable[[str], str]):
    if not any(g.run_id for g in res.legs):
        return res
    return replace(res, legs=tuple(replace(g, run_id=rename(g.run_id)) if g.run_id else g for g in res.legs))


def _renamer(ids: list[str], new: list[int]) -> Callable[[str], str]:
    """A shard's run id -> its gathered id ``R`` + (position + 1), `new` holding each run's
    position in the gathered order; the shard numbers its runs R0001... in order (checked)."""
    if all(x == f"R{k + 1:04d}" for k, x in enumerate(ids)):
        return lambda old: f"R{new[int(old[1:]) - 1] + 1:04d}"
    names = {x: f"R{p + 1:04d}" for x, p in zip(ids, new)}
    return names.__getitem__


def _set_run_id(run, i: int) -> None:
    run.__dict__["run_id"] = f"R{i + 1:04d}"  # a record just rebuilt, not yet seen by anyone


def gather(model: Model, shards: list[list[int]], answers: list, analyses: bool) -> pipeline.Costed:
    """One Costed from the shards' answers, as ``pipeline.run`` on the whole `model` gives it.

    Parameters
    ----------
    model : Model
        The whole Model.
    shards : list of list of int
        Each shard's shipment indices (``make_shards``).
    answers : list of (dict, int)
        ``_run_shard``'s answer per shard (the packed shard, its late-arrival problems), in the
        order of `shards`.
    analyses : bool
        Whether the shards ran the analyses.

    Returns
    -------
    pipeline.Costed
        Its ``results`` (``PackedResults``) and ``runs`` (``PackedRuns``) are rebuilt from the
        shards' columns each time they are read; everything else is held as objects.
    """
    consolidate = model.settings.consolidate == "yes"
    base = {"rates": model.rates, "lanes": model.lanes, "depots": model.depots}
    readers: list[_Reader] = []
    day_key, firsts, owners, locals_, run_ids = [], [], [], [], []
    for n, (idx, (packed, _late)) in enumerate(zip(shards, answers)):
        rd = _Reader(packed, {**base, "ships": [model.shipments[i] for i in idx]})
        readers.append(rd)
        rows = rd.roots("runs")
        days = rd.field(VehicleRun, "day", rows)
        run_ids.append(rd.field(VehicleRun, "run_id", rows))
        day_key.append(np.array([d.toordinal() if d is not None else -1 for d in days], dtype=np.int64))
        if consolidate:
            firsts.append(np.zeros(len(rows), dtype=np.int64))
        else:
            pos = {model.shipments[i].shipment_id: i for i in idx}
            loads = rd.field(VehicleRun, "loads", rows)
            firsts.append(np.array([pos[ld[0]] for ld in loads], dtype=np.int64))
        owners.append(np.full(len(rows), n, dtype=np.int64))
        locals_.append(np.arange(len(rows), dtype=np.int64))

    def joined(parts: list) -> np.ndarray:
        return np.concatenate(parts) if parts else np.zeros(0, dtype=np.int64)

    owner, local = joined(owners), joined(locals_)
    # by day (None first), then first load (consolidate = no), shard and the shard's order
    order = np.lexsort((local, owner, joined(firsts), joined(day_key)))
    owner, local = owner[order], local[order]
    renames = []
    for n in range(len(readers)):
        new = np.empty(int((owner == n).sum()), dtype=np.int64)
        at = np.flatnonzero(owner == n)
        new[local[at]] = at
        renames.append(_renamer(run_ids[n], new.tolist()))
    run_rows = np.empty(len(owner), dtype=np.int64)
    for n, rd in enumerate(readers):
        at = np.flatnonzero(owner == n)
        run_rows[at] = rd.roots("runs")[local[at]]
    runs = PackedRuns(readers, VehicleRun, owner, run_rows, _set_run_id)

    res_owner = np.empty(len(model.shipments), dtype=np.int64)
    res_rows = np.empty(len(model.shipments), dtype=np.int64)
    for n, (idx, rd) in enumerate(zip(shards, readers)):
        res_owner[idx] = n
        res_rows[idx] = rd.roots("results")
    results = PackedResults([rd.sibling(renames[n]) for n, rd in enumerate(readers)], CostedShipment,
                            res_owner, res_rows)

    routing, planning = [], []
    stats = RunStats()
    seconds: dict[str, float] = {}
    alternatives: dict[int, tuple] = {}
    frontiers: dict[int, tuple] = {}
    for n, (idx, (packed, late)) in enumerate(zip(shards, answers)):
        costed = packed["costed"]
        cut = len(costed.problems) - late
        routing += costed.problems[:cut]
        planning += costed.problems[cut:]
        st = costed.stats
        for f in ("searches", "settled", "pushed", "networks", "batches", "batched"):
            setattr(stats, f, getattr(stats, f) + getattr(st, f))
        for label, note in st.bounds.items():
            stats.bounds.setdefault(label, note)
        for stage, secs in {**costed.seconds, **st.seconds}.items():
            seconds[stage] = seconds.get(stage, 0.0) + secs
        by_id = {model.shipments[i].shipment_id: i for i in idx}
        for sid, alts in costed.analysis.alternatives.items():
            alternatives[by_id[sid]] = (sid, {o: _renumber(r, renames[n]) for o, r in alts.items()})
        for sid, front in costed.analysis.frontiers.items():
            frontiers[by_id[sid]] = (sid, front)
    key = _problem_order(model)
    problems = list(model.problems) + sorted(routing, key=key) + sorted(planning, key=key)
    analysis = Analysis(lanes=lane_usage(runs))
    if analyses:
        analysis.alternatives = dict(alternatives[i] for i in sorted(alternatives))
        analysis.frontiers = dict(frontiers[i] for i in sorted(frontiers))
    stats.seconds = {f"{stage} (summed over {len(shards)} shards)": s for stage, s in seconds.items()}
    return pipeline.Costed(model, results, problems, stats, analysis, [], {}, runs)


def local_client(workers: int, processes: bool = True):
    """A ``dask.distributed`` Client of a LocalCluster: `workers` workers of one thread each
    (processes, so they run in parallel; ``processes=False``: threads, for tests)."""
    import logging

    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:  # pragma: no cover - depends on the environment
        raise ImportError(DASK_MISSING) from None
    cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=processes,
                           dashboard_address=None, silence_logs=logging.ERROR)
    return Client(cluster)


def connect(scheduler: str):
    """A ``dask.distributed`` Client of the scheduler at `scheduler` (e.g. ``tcp://10.0.0.5:8786``)."""
    try:
        from dask.distributed import Client
    except ImportError:  # pragma: no cover - depends on the environment
        raise ImportError(DASK_MISSING) from None
    return Client(scheduler)


def run(model: Model, options: pipeline.Options | None = None, client=None, shards: int | None = None
        ) -> pipeline.Costed:
    """``pipeline.run`` of `model`, shard by shard on the workers of a Dask `client`.

    Parameters
    ----------
    model : Model
        A checked Model without errors.
    options : pipeline.Options, optional
        As for ``pipeline.run`` (``progress`` is not used: the shards report none).
    client : dask.distributed.Client
        Its workers must import this version of ``costing``.
    shards : int, optional
        How many shards (default: the number of worker threads); each builds its own search
        networks, so more shards than workers costs time and buys only balance.

    Returns
    -------
    pipeline.Costed
        Equal to ``pipeline.run(model, options)`` but for the Run sheet's work counters and
        times (module docstring); its ``results`` and ``runs`` (and each scenario's) are
        ``PackedResults`` and ``PackedRuns``: read-only sequences that rebuild their records from
        the shards' columns each time they are read.
    """
    from costing.check.scenarios import apply_scenario

    options = options or pipeline.Options()
    t0 = time.perf_counter()
    threads = sum(client.nthreads().values()) or 1
    count = shards or threads
    # aside off: a worker runs its tasks in threads, where forking is not safe (costing.aside)
    base_options = replace(options, scenarios=False, progress=None, aside=False)
    sub_options = replace(options, analyses=False, scenarios=False, progress=None, aside=False)
    networks = {}

    def shipped(m: Model):
        for net_model, future in networks.values():
            if _same_network(net_model, m):
                return future
        # bytes, not the Model (``_network``); hash=False: no content key (tokenizing 61 MB takes
        # longer than sending it)
        blob = pickle.dumps(replace(m, shipments=(), scenarios=()), protocol=pickle.HIGHEST_PROTOCOL)
        future = client.scatter(blob, broadcast=True, hash=False)
        token = uuid.uuid4().hex
        networks[len(networks)] = (m, (token, future))
        return token, future

    def submit(m: Model, opts: pipeline.Options):
        parts = make_shards(m, count)
        token, net = shipped(m)
        # each shard's shipments go to the cluster as data (not inside the task), once
        ships = client.scatter([tuple(m.shipments[i] for i in part) for part in parts], hash=False)
        futures = [client.submit(_run_shard, token, net, sh, opts, pure=False) for sh in ships]
        return parts, futures, ships  # the data futures are held until gathered, or dask drops them

    jobs = [(model, options.analyses, *submit(model, base_options))]
    scenarios = list(model.scenarios) if options.scenarios else []
    for sc in scenarios:
        changed = apply_scenario(model, sc)
        jobs.append((changed, False, *submit(changed, sub_options)))
    gathered = [gather(m, parts, client.gather(futures), analyses)
                for m, analyses, parts, futures, _ships in jobs]
    costed = gathered[0]
    costed.scenarios = [ScenarioRun(sc, g.results, g.stats, g.runs) for sc, g in zip(scenarios, gathered[1:])]
    workers = len(client.nthreads())
    costed.seconds = {f"distributed run: {len(jobs[0][2])} shards on {workers} workers "
                      f"({threads} threads), wall": time.perf_counter() - t0}
    return costed
