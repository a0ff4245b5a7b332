"""A large week on Dask: the single-process run against 1, 2 and 4 local workers.

    python -m benchmarks.bench_distributed                          # 200,000 shipments, 100,000 nodes
    python -m benchmarks.bench_distributed --shipments 5000 --nodes 5000 --workers 1,2   # quick

The network is the seeded road-like graph of `benchmarks.road_network` (Delaunay neighbours,
km = straight line x 1.05..1.5, 50..110 km/h), placed at 49.5 N 3 E, written as a compact
network file (`costing.network.netfile`) that a small input workbook names in Settings
`network_file`, as `costing import-network --compact` leaves it. The workbook holds the rate
card and the shipments (written with the template writer, as `benchmarks.bench_workbook` does):
from `--origins` origins to one of the 400 nodes nearest the origin (a regional distribution
week), 0.5 to 24 t, ready over 5 days; Settings turn the comparison across objectives and the
trade-offs off, as a coordinator would for a week this size, and `consolidate` is `--consolidate`
(default no: with yes, the plan stage's notes on who travels with whom look through every vehicle
run of the week for every leg that shares one, time that grows with the square of the week and
makes 200,000 shipments impractical in one process; `--consolidate yes` at a few thousand
shipments measures the day-sharded case).

Each run is `pipeline.run` (one process) or `costing.distributed.run` (a LocalCluster of N worker
processes, one thread each, the Model minus shipments scattered once per worker) on the Model
that `pipeline.load` read; the gathered result is checked equal to the single-process one
(every shipment's status, route and total, the week's vehicle runs), which reads every gathered
record once (workers send their results back as columns and the driver rebuilds records only as
they are read: `costing.distributed.PackedResults`). The costed workbook is not written (it takes
the same time whatever ran the week; `--write OUTPUT` writes the last one, `--parquet` as a Parquet
set beside a summary workbook). Prints wall seconds and the ratio to the single-process run, and
peak memory: the driver's resident set sampled during each run (psutil, every 0.2 s) and each
worker's own peak and CPU time (getrusage); asserts nothing about time. `--limit SECONDS` stops a
distributed run that takes longer and reports it as stopped.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import math
import os
import resource
import tempfile
import threading
import time

import numpy as np

from benchmarks.road_network import generate
from costing.model import Depot, Lane

LAT0, LON0 = 49.5, 3.0
DAYS = 5
NEAREST = 400  # a shipment goes to one of the nodes nearest its origin


def network_records(nodes: int, seed: int = 1) -> tuple[list[Depot], list[Lane], np.ndarray]:
    """Depots and two-way road lanes of the seeded road-like network (km and hours as generated),
    and the node positions in km."""
    net = generate(nodes, seed=seed)
    lat = LAT0 + net.xy[:, 1] / 111.2
    lon = LON0 + net.xy[:, 0] / (111.2 * math.cos(math.radians(LAT0)))
    depots = [Depot(f"N{i:06d}", f"node {i}", round(float(a), 6), round(float(o), 6))
              for i, (a, o) in enumerate(zip(lat, lon))]
    half = net.m // 2  # generate() lists each lane u -> v, then all the reverse arcs
    lanes = [Lane(f"L{k:07d}", f"N{u:06d}", f"N{v:06d}", "road", float(km), float(h))
             for k, (u, v, km, h) in enumerate(zip(net.tail[:half].tolist(), net.head[:half].tolist(),
                                                   net.km[:half].tolist(), net.hours[:half].tolist()))]
    return depots, lanes, net.xy


def make_week(folder: str, nodes: int, shipments: int, origins: int, seed: int = 7,
              consolidate: str = "no") -> str:
    """Write the network file and the input workbook naming it; returns the workbook's path."""
    from scipy.spatial import cKDTree

    from costing.network.netfile import write_network_file
    from costing.workbook.template import write_template

    depots, lanes, xy = network_records(nodes)
    write_network_file(os.path.join(folder, "week.network.npz"), depots, lanes)
    rng = np.random.default_rng(seed)
    origin_ids = rng.choice(nodes, size=origins, replace=False)
    _d, near = cKDTree(xy).query(xy[origin_ids], k=min(NEAREST, nodes))
    pick_o = rng.integers(0, origins, size=shipments)
    pick_d = rng.integers(1, near.shape[1], size=shipments)  # column 0 is the origin itself
    weights = np.round(rng.uniform(0.5, 24.0, size=shipments), 1)
    days = rng.integers(0, DAYS, size=shipments)
    monday = _dt.date(2026, 12, 7)
    rows = [{"shipment_id": f"S{k:07d}", "origin": f"N{origin_ids[o]:06d}",
             "destination": f"N{near[o, d]:06d}", "weight_t": float(w),
             "ready_date": monday + _dt.timedelta(days=int(day))}
            for k, (o, d, w, day) in enumerate(zip(pick_o.tolist(), pick_d.tolist(), weights.tolist(),
                                                   days.tolist()))]
    path = os.path.join(folder, "week.xlsx")
    write_template(path, {
        "Settings": [{"setting": "currency", "value": "EUR"},
                     {"setting": "compare_objectives", "value": "no"},
                     {"setting": "frontier_max_routes", "value": 0},
                     {"setting": "consolidate", "value": consolidate},
                     {"setting": "network_file", "value": "week.network.npz"}],
        "Depots": [], "Lanes": [],
        "Rates": [{"vehicle": "artic", "mode": "road", "per_km": 1.1, "per_hour": 38, "per_trip": 40,
                   "payload_t": 24.5, "fuel_l_per_100km": 31, "co2e_kg_per_litre": 2.51, "min_charge": 150}],
        "Shipments": rows,
    })
    return path


def fingerprint(costed):
    """What must not change with the number of workers, one item at a time: per shipment its
    status, route and total; the week's runs (id, day, lane, vehicles, loads, cost)."""
    for r in costed.results:
        yield (r.shipment.shipment_id, r.status, tuple(g.use.key for g in r.legs), r.total_cost,
               tuple(g.run_id for g in r.legs))
    for u in costed.runs:
        yield (u.run_id, u.day, u.leg.use.key, u.vehicles, u.loads, u.run_cost)


def digest(costed) -> str:
    """SHA-256 of the fingerprint's items (their repr, floats to the last bit): equal digests, equal
    results, without holding two weeks' fingerprints."""
    import hashlib

    h = hashlib.sha256()
    for item in fingerprint(costed):
        h.update(repr(item).encode())
    return h.hexdigest()


class PeakRSS:
    """The largest resident set of this process while inside the block, MB (sampled every 0.2 s)."""

    def __enter__(self):
        import psutil

        self._proc = psutil.Process()
        self.peak = self.start = self._proc.memory_info().rss
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._watch, daemon=True)
        self._thread.start()
        return self

    def _watch(self) -> None:
        while not self._stop.wait(0.2):
            self.peak = max(self.peak, self._proc.memory_info().rss)

    def __exit__(self, *exc) -> None:
        self._stop.set()
        self._thread.join()
        self.peak = max(self.peak, self._proc.memory_info().rss)
        self.mb = self.peak / 2 ** 20
        self.grew = (self.peak - self.start) / 2 ** 20

    def now_mb(self) -> float:
        """The peak so far, MB."""
        return max(self.peak, self._proc.memory_info().rss) / 2 ** 20


def _worker_usage() -> tuple[float, float]:
    """On a worker: its own peak resident set, MB (Linux: VmHWM of /proc/self/status; getrusage's
    ru_maxrss would carry over the peak of the process that started it), and its CPU seconds."""
    import resource as _r

    use = _r.getrusage(_r.RUSAGE_SELF)
    peak = use.ru_maxrss / 1024
    try:
        with open("/proc/self/status") as f:
            for line in f:
                if line.startswith("VmHWM:"):
                    peak = int(line.split()[1]) / 1024
    except OSError:
        pass
    return peak, use.ru_utime + use.ru_stime


def _usage_text(client) -> str:
    """Each worker's peak memory and CPU time, largest first."""
    use = sorted(client.run(_worker_usage).values(), reverse=True)
    return (f"workers {', '.join(f'{mb:,.0f}' for mb, _c in use)} MB, CPU "
            f"{', '.join(f'{c:,.0f}' for _mb, c in use)} s")


def run_workers(model, opts, n: int, limit: float | None):
    """``costing.distributed.run`` on a LocalCluster of `n` worker processes, the comparison digest
    read from its result; prints times and memory. Returns (Costed, wall s), or (None, None) when
    it ran longer than `limit` seconds (the cluster is then closed)."""
    from costing import distributed

    t0 = time.perf_counter()
    client = distributed.local_client(n)
    started = time.perf_counter() - t0
    answer: dict = {}

    def go() -> None:
        try:
            answer["costed"] = distributed.run(model, opts, client)
        except BaseException as e:  # noqa: BLE001 - reported by the caller's thread
            answer["error"] = e

    try:
        with PeakRSS() as mem:
            t0 = time.perf_counter()
            worker = threading.Thread(target=go, daemon=True)
            worker.start()
            worker.join(limit)
            wall = time.perf_counter() - t0
            if worker.is_alive():
                print(f"{n} worker(s): stopped after {wall:.0f} s; so far: driver peak "
                      f"{mem.now_mb():,.0f} MB, {_usage_text(client)}", flush=True)
                return None, None
            if "error" in answer:
                raise answer["error"]
            costed = answer["costed"]
            t0 = time.perf_counter()
            digest(costed)
            read = time.perf_counter() - t0
        usage = _usage_text(client)
    finally:
        cluster = client.cluster
        client.close()
        cluster.close()
    # the shards' own pipeline stages (sub-timings "within" a stage left out), summed
    work = sum(v for k, v in costed.stats.seconds.items() if "within" not in k)
    print(f"{n} worker(s): {wall:.1f} s (cluster start {started:.1f} s, not included); "
          f"the shards' pipeline.run stages took {work:.1f} s summed over shards, the rest is "
          "sending the network and shipments out and the results back, and gathering; "
          f"reading every gathered record once (the comparison) {read:.1f} s; peak memory: driver "
          f"{mem.mb:,.0f} MB ({mem.grew:+,.0f} MB over the run), {usage}", flush=True)
    return costed, wall


def main(argv=None) -> list[tuple[str, float]]:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--nodes", type=int, default=100_000)
    p.add_argument("--shipments", type=int, default=200_000)
    p.add_argument("--origins", type=int, default=200)
    p.add_argument("--workers", default="1,2,4", help="local worker counts to run, e.g. 1,2,4")
    p.add_argument("--consolidate", choices=("yes", "no"), default="no",
                   help="Settings consolidate (yes: shards are whole ready days; no: day and origin)")
    p.add_argument("--write", metavar="OUTPUT", default=None,
                   help="also write the last run's costed workbook to OUTPUT")
    p.add_argument("--parquet", action="store_true",
                   help="with --write: the long tables as a Parquet set beside a summary workbook")
    p.add_argument("--single", choices=("first", "last"), default="last",
                   help="run the single process before the distributed runs or after them (default: "
                   "after, so its week of objects is not in the driver's heap while they run)")
    p.add_argument("--limit", type=float, default=None, metavar="SECONDS",
                   help="stop a distributed run that takes longer (reported as stopped)")
    args = p.parse_args(argv)
    from costing import pipeline

    counts = [int(x) for x in args.workers.split(",") if x.strip()]
    print(f"machine: {os.cpu_count()} cores (shared with other work while measuring); "
          f"{args.nodes:,} nodes, {args.shipments:,} shipments from {args.origins} origins over {DAYS} days, "
          f"consolidate = {args.consolidate}")
    rows: list[tuple[str, float]] = []
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        inp = make_week(tmp, args.nodes, args.shipments, args.origins, consolidate=args.consolidate)
        print(f"input made in {time.perf_counter() - t0:.1f} s (network file "
              f"{os.path.getsize(os.path.join(tmp, 'week.network.npz')) / 1e6:.1f} MB, workbook "
              f"{os.path.getsize(inp) / 1e6:.1f} MB)")
        t0 = time.perf_counter()
        model, problems, _ = pipeline.load(inp)
        assert model is not None and not [x for x in problems if x.severity == "error"], problems[:3]
        print(f"pipeline.load (workbook + network file): {time.perf_counter() - t0:.1f} s; "
              f"{len(model.depots):,} depots, {len(model.lanes):,} lanes, {len(model.shipments):,} shipments")
        opts = pipeline.Options(scenarios=False)
        done = []  # (workers, wall or None when stopped, digest)
        single: dict = {}
        costed = None

        def run_single() -> None:
            nonlocal costed
            with PeakRSS() as mem:
                t0 = time.perf_counter()
                one = pipeline.run(model, opts)
                single["wall"] = time.perf_counter() - t0
            legs = sum(len(r.legs) for r in one.results)
            print(f"single process: {single['wall']:.1f} s; {legs:,} legs, {len(one.runs):,} vehicle runs; "
                  f"peak memory {mem.mb:,.0f} MB ({mem.grew:+,.0f} MB over the run)", flush=True)
            single["digest"] = digest(one)
            if args.write and costed is None:
                costed = one

        if args.single == "first":
            run_single()
        for n in counts:
            costed = None
            got, wall = run_workers(model, opts, n, args.limit)
            if wall is not None and args.write:
                costed = got
            done.append((n, wall, None if wall is None else digest(got)))
            got = None  # the columns take memory; the digest is all that is compared
        if args.single == "last":
            run_single()
        base = single["wall"]
        rows.append(("single process (pipeline.run)", base))
        for n, wall, got in done:
            if wall is None:
                print(f"{n} worker(s): stopped after {args.limit:.0f} s (--limit)")
                continue
            rows.append((f"Dask, {n} local worker{'s' if n > 1 else ''}", wall))
            same = got == single["digest"]
            print(f"{n} worker(s): ratio to single process {wall / base:.2f}; identical results: "
                  f"{'yes' if same else 'NO'}")
            if not same:
                raise SystemExit("distributed result differs from the single-process run")
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        print("\n| run | wall s | ratio to single process |\n|---|---:|---:|")
        for name, secs in rows:
            print(f"| {name} | {secs:.1f} | {secs / base:.2f} |")
        print(f"\ndriver peak memory over the whole benchmark {peak:,.0f} MB (workers not counted)")
        if args.write:
            from costing.sheets.writer import RunInfo, run_time, write_costed

            t0 = time.perf_counter()
            info = RunInfo("bench_distributed week", None, None, run_time(), costed.stats)
            with PeakRSS() as mem:
                if args.parquet:
                    from costing.sheets.parquet_set import parquet_folder, write_parquet_set

                    folder = parquet_folder(args.write)
                    os.makedirs(folder, exist_ok=True)
                    files = write_parquet_set(args.write, folder, model, costed.results, costed.problems,
                                              info, costed.runs, reason="benchmark")
                    counts = ", ".join(f"{k}: {v:,} rows" for k, v in files.items())
                    what = f"{args.write} and {folder} ({counts})"
                else:
                    write_costed(args.write, model, costed.results, costed.problems, info, costed.analysis,
                                 None, [], costed.runs)
                    what = args.write
            print(f"wrote {what} in {time.perf_counter() - t0:.1f} s; peak memory {mem.mb:,.0f} MB")
    return rows


if __name__ == "__main__":
    main()
