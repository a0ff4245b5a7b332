"""A week too big for one process: ``costing.pipeline.run`` on shards of the shipments, on Dask.

Dask (``dask.distributed``, an optional dependency: ``pip install costing[dask]``) runs the
shards; nothing here routes, plans or prices. Each worker gets the Model without its shipments
once (``Client.scatter(..., broadcast=True)``: depots, lanes, rates, settings); each task is
``pipeline.run`` on that Model with one shard's shipments, analyses as the caller asks,
scenarios off. The driver gathers the shards' results into one ``pipeline.Costed``; each
scenario is costed the same way on its changed Model, as ``pipeline.run`` costs it.

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
import re
import time
from dataclasses import replace

from costing import pipeline
from costing.model import Model
from costing.plan.analysis import Analysis, ScenarioRun, lane_usage
from costing.plan.route import RunStats
from costing.plan.week import first_day, late_hours

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


def _run_shard(base: Model, shipments: tuple, options: pipeline.Options):
    """On a worker: ``pipeline.run`` on `base` with `shipments`; the Model is left out of the
    answer (the driver has it), and the number of late-arrival problems (raised last) is added."""
    model = replace(base, shipments=shipments)
    costed = pipeline.run(model, options)
    start = first_day(model)
    late = sum(1 for r in costed.results if late_hours(r, start))
    costed.problems = costed.problems[len(model.problems):]
    costed.model = None
    return costed, late


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


def _renumber(res, names: dict[str, str]):
    if not any(g.run_id for g in res.legs):
        return res
    return replace(res, legs=tuple(replace(g, run_id=names[g.run_id]) if g.run_id else g for g in res.legs))


def gather(model: Model, shards: list[list[int]], answers: list, analyses: bool) -> pipeline.Costed:
    """One Costed from the shards' answers, as ``pipeline.run`` on the whole `model` gives it.

    Parameters
    ----------
    model : Model
        The whole Model.
    shards : list of list of int
        Each shard's shipment indices (``make_shards``).
    answers : list of (Costed, int)
        ``_run_shard``'s answer per shard, in the order of `shards`.
    analyses : bool
        Whether the shards ran the analyses.
    """
    consolidate = model.settings.consolidate == "yes"
    results: list = [None] * len(model.shipments)
    tagged = []  # (day key, first shipment, shard number, position, run)
    for n, (idx, (costed, _late)) in enumerate(zip(shards, answers)):
        pos = {s.shipment_id: idx[j] for j, s in enumerate(m.shipment for m in costed.results)}
        for k, run in enumerate(costed.runs):
            day = (run.day is not None, run.day or _dt.date.min)
            first = 0 if consolidate else pos[run.loads[0]]
            tagged.append((day, first, n, k, run))
    tagged.sort(key=lambda t: t[:4])
    names: list[dict[str, str]] = [{} for _ in shards]
    runs = []
    for new, (_d, _f, n, _k, run) in enumerate(tagged, start=1):
        rid = f"R{new:04d}"
        names[n][run.run_id] = rid
        runs.append(replace(run, run_id=rid))

    routing, planning = [], []
    stats = RunStats()
    seconds: dict[str, float] = {}
    alternatives: dict[int, tuple] = {}
    frontiers: dict[int, tuple] = {}
    for n, (idx, (costed, late)) in enumerate(zip(shards, answers)):
        for j, res in enumerate(costed.results):
            results[idx[j]] = _renumber(res, names[n])
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
        by_id = {res.shipment.shipment_id: idx[j] for j, res in enumerate(costed.results)}
        for sid, alts in costed.analysis.alternatives.items():
            alternatives[by_id[sid]] = (sid, {o: _renumber(r, names[n]) for o, r in alts.items()})
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
        times (module docstring).
    """
    from costing.check.scenarios import apply_scenario

    options = options or pipeline.Options()
    t0 = time.perf_counter()
    threads = sum(client.nthreads().values()) or 1
    count = shards or threads
    base_options = replace(options, scenarios=False, progress=None)
    sub_options = replace(options, analyses=False, scenarios=False, progress=None)
    networks = {}

    def shipped(m: Model):
        for net_model, future in networks.values():
            if _same_network(net_model, m):
                return future
        future = client.scatter(replace(m, shipments=(), scenarios=()), broadcast=True)
        networks[len(networks)] = (m, future)
        return future

    def submit(m: Model, opts: pipeline.Options):
        parts = make_shards(m, count)
        net = shipped(m)
        # each shard's shipments go to the cluster as data (not inside the task), once
        ships = client.scatter([tuple(m.shipments[i] for i in part) for part in parts])
        futures = [client.submit(_run_shard, net, sh, opts, pure=False) for sh in ships]
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
