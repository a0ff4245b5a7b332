"""Search benchmark: our engine (costing.network.engine) against reference libraries, same run, same
queries, on seeded road-like networks (benchmarks/road_network.py).

    python -m benchmarks.bench_search --nodes 100000            # W2 on the 100k network
    python -m benchmarks.bench_search --nodes 10000,100000,1000000
    python -m benchmarks.bench_search --smoke                   # ~2k nodes, seconds (CI)

Workloads (cost objective: cost = ROUND(km x per_km, 2) + ROUND(hours x per_hour, 2) per lane):
  W2-many   10,000 shipments from 20 origins, destinations uniform
  W2-mixed  2,000 shipments; 20 % from 4 origins, the rest from origins with 1 or 2 shipments
  p2p       point-to-point queries: settled nodes of A* against Dijkstra stopped at the target
  W1        end-to-end workbook workload: not here yet (hook: `run_w1`)

Engines. Every engine returns, for every shipment, its cost and its route:
  ours             SearchEngine.route_many: per origin group, A* with landmarks, or one compiled
                   one-to-all (scipy) with our route reconstruction, by the engine's estimate
  scipy            scipy.sparse.csgraph.dijkstra per origin, predecessors, routes walked back
  rustworkx        per origin: digraph_dijkstra_shortest_paths (with target= when the origin has
                   one destination), cost summed along the route
  networkx-dijkstra per origin: single_source_dijkstra(target=) for one destination, else
                   dijkstra_predecessor_and_distance and routes walked back
  networkx-astar   astar_path per shipment with the straight-line heuristic, path_weight
A reference that would take longer than --budget seconds on a workload runs on a seeded random
subset of its units (origin groups, or shipments for networkx-astar) and its time is
extrapolated linearly to all units; the table says so. Costs are compared on every shipment a
reference answered. "scipy (costs only)" is shown for information: distances without routes.

Timing excludes building each engine's graph (shown separately: our build includes the landmark
tables). Memory: peak resident set size of this process, reset (Linux /proc/self/clear_refs)
before each engine's build, so the figure is that engine's peak with the network loaded.
"""

from __future__ import annotations

import argparse
import gc
import json
import math
import os
import platform
import sys
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass, field

import numpy as np

from benchmarks.road_network import RoadNetwork, generate, workload_many_per_origin, workload_mixed
from costing.network.engine import CSRGraph, SearchEngine

REL_TOL = 1e-9  # costs must agree to this relative difference (all engines sum in route order)

# ---------------------------------------------------------------------------------------------
# memory


def reset_peak() -> None:
    try:
        with open("/proc/self/clear_refs", "w") as f:
            f.write("5")
    except OSError:
        pass


def _status_mb(key: str) -> float | None:
    try:
        with open("/proc/self/status") as f:
            for line in f:
                if line.startswith(key + ":"):
                    return int(line.split()[1]) / 1024.0
    except OSError:
        return None
    return None


def peak_mb() -> float:
    v = _status_mb("VmHWM")
    if v is None:
        import resource

        v = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    return v


def rss_mb() -> float:
    v = _status_mb("VmRSS")
    return peak_mb() if v is None else v


def cpu_model() -> str:
    try:
        with open("/proc/cpuinfo") as f:
            for line in f:
                if line.startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or "unknown"


# ---------------------------------------------------------------------------------------------
# results


@dataclass
class Run:
    engine: str
    workload: str
    shipments: int  # in the workload
    answered: int  # shipments this engine answered (all, or a subset within the budget)
    seconds: float  # measured
    estimated_seconds: float  # for all shipments (= seconds when answered == shipments)
    settled: int | None = None  # nodes settled, where the engine tells
    mismatches: int = 0
    max_rel_diff: float = 0.0
    note: str = ""

    @property
    def extrapolated(self) -> bool:
        return self.answered < self.shipments


@dataclass
class SizeReport:
    nodes: int
    arcs: int
    generate_seconds: float
    generate_peak_mb: float
    builds: dict[str, float] = field(default_factory=dict)  # engine -> seconds
    peaks: dict[str, float] = field(default_factory=dict)  # engine -> peak MB
    runs: list[Run] = field(default_factory=list)
    p2p: dict[str, float] = field(default_factory=dict)
    ours: dict[str, object] = field(default_factory=dict)
    skipped: dict[str, str] = field(default_factory=dict)

    @property
    def all_agree(self) -> bool:
        return all(r.mismatches == 0 for r in self.runs)


Pairs = list[tuple[int, int]]
Costs = dict[tuple[int, int], float]


def _groups(pairs: Pairs) -> dict[int, list[int]]:
    g: dict[int, list[int]] = {}
    for o, d in pairs:
        g.setdefault(o, [])
        if d not in g[o]:
            g[o].append(d)
    return g


def _budgeted(units: list, work: Callable[[object], None], budget: float, seed: int) -> tuple[int, float]:
    """Run work(unit) over the units in a seeded random order until the budget is spent (at
    least one unit); return (units done, seconds)."""
    order = np.random.default_rng(seed).permutation(len(units))
    t0 = time.perf_counter()
    done = 0
    for i in order:
        work(units[i])
        done += 1
        if time.perf_counter() - t0 > budget:
            break
    return done, time.perf_counter() - t0


def _compare(run: Run, mine: Costs, ref: Costs) -> None:
    worst = 0.0
    bad = 0
    for key, c in ref.items():
        o = mine[key]
        if math.isinf(o) or math.isinf(c):
            ok = math.isinf(o) and math.isinf(c)
            diff = 0.0 if ok else math.inf
        else:
            diff = abs(o - c) / max(1.0, abs(o))
            ok = diff <= REL_TOL
        worst = max(worst, diff)
        bad += not ok
    run.mismatches, run.max_rel_diff = bad, worst


# ---------------------------------------------------------------------------------------------
# engines


def run_ours(eng: SearchEngine, name: str, pairs: Pairs) -> tuple[Run, Costs]:
    before = dict(eng.stats.shipments)
    t0 = time.perf_counter()
    res = eng.route_many(pairs)
    dt = time.perf_counter() - t0
    costs = {p: r.weight for p, r in zip(pairs, res)}
    # each result carries its share of a shared search, so the sum over unique pairs is exact
    seen = {}
    for p, r in zip(pairs, res):
        seen[p] = r.stats.settled
    mix = {k: v - before.get(k, 0) for k, v in eng.stats.shipments.items() if v - before.get(k, 0)}
    note = "strategies (shipments): " + ", ".join(f"{k} {v}" for k, v in sorted(mix.items()))
    return Run("ours", name, len(pairs), len(pairs), dt, dt, sum(seen.values()), note=note), costs


def run_scipy(A, name: str, pairs: Pairs, budget: float, seed: int, routes: bool = True
              ) -> tuple[Run, Costs]:
    from scipy.sparse.csgraph import dijkstra

    groups = _groups(pairs)
    units = list(groups.items())
    costs: Costs = {}
    settled = 0

    def work(unit) -> None:
        nonlocal settled
        o, dests = unit
        if routes:
            dist, pred = dijkstra(A, indices=o, return_predecessors=True)
            pl = pred.tolist()
            for d in dests:
                if math.isfinite(dist[d]):
                    path = [d]
                    while path[-1] != o:
                        path.append(pl[path[-1]])
                    path.reverse()
                costs[(o, d)] = float(dist[d])
        else:
            dist = dijkstra(A, indices=o)
            for d in dests:
                costs[(o, d)] = float(dist[d])
        settled += int(np.isfinite(dist).sum())

    done, dt = _budgeted(units, work, budget, seed)
    est = dt * len(units) / done
    answered = sum(1 for p in pairs if p in costs)
    label = "scipy" if routes else "scipy (costs only)"
    return Run(label, name, len(pairs), answered, dt, est, settled * len(units) // done,
               note="one-to-all per origin; settled = nodes reached"), costs


def build_rustworkx(net: RoadNetwork):
    import rustworkx as rx

    g = rx.PyDiGraph(multigraph=False)
    g.add_nodes_from(range(net.n))
    g.extend_from_weighted_edge_list(list(zip(net.tail.tolist(), net.head.tolist(), net.cost.tolist())))
    return g


def run_rustworkx(g, name: str, pairs: Pairs, budget: float, seed: int) -> tuple[Run, Costs]:
    import rustworkx as rx

    units = list(_groups(pairs).items())
    costs: Costs = {}
    edge = g.get_edge_data

    def route_cost(path) -> float:
        c = 0.0
        for a, b in zip(path, path[1:]):
            c += edge(a, b)
        return c

    def work(unit) -> None:
        o, dests = unit
        if len(dests) == 1:
            paths = rx.digraph_dijkstra_shortest_paths(g, o, target=dests[0], weight_fn=float)
        else:
            paths = rx.digraph_dijkstra_shortest_paths(g, o, weight_fn=float)
        for d in dests:
            costs[(o, d)] = route_cost(list(paths[d])) if d in paths else math.inf

    done, dt = _budgeted(units, work, budget, seed)
    answered = sum(1 for p in pairs if p in costs)
    return Run("rustworkx", name, len(pairs), answered, dt, dt * len(units) / done,
               note="per origin; target= for one destination"), costs


def build_networkx(net: RoadNetwork):
    import networkx as nx

    G = nx.DiGraph()
    G.add_nodes_from(range(net.n))
    G.add_weighted_edges_from(zip(net.tail.tolist(), net.head.tolist(), net.cost.tolist()))
    return G


def run_nx_dijkstra(G, name: str, pairs: Pairs, budget: float, seed: int) -> tuple[Run, Costs]:
    import networkx as nx

    units = list(_groups(pairs).items())
    costs: Costs = {}

    def work(unit) -> None:
        o, dests = unit
        if len(dests) == 1:
            try:
                length, _path = nx.single_source_dijkstra(G, o, target=dests[0])
            except nx.NetworkXNoPath:
                length = math.inf
            costs[(o, dests[0])] = float(length)
            return
        pred, dist = nx.dijkstra_predecessor_and_distance(G, o)
        for d in dests:
            if d in dist:
                path = [d]
                while path[-1] != o:
                    path.append(pred[path[-1]][0])
                path.reverse()
            costs[(o, d)] = float(dist.get(d, math.inf))

    done, dt = _budgeted(units, work, budget, seed)
    answered = sum(1 for p in pairs if p in costs)
    return Run("networkx-dijkstra", name, len(pairs), answered, dt, dt * len(units) / done,
               note="per origin"), costs


def run_nx_astar(G, net: RoadNetwork, name: str, pairs: Pairs, budget: float, seed: int
                 ) -> tuple[Run, Costs]:
    import networkx as nx

    xy = net.xy.tolist()
    rate = net.rate_per_km * (1.0 - 1e-9)

    def h(u: int, v: int) -> float:
        a, b = xy[u], xy[v]
        return math.hypot(a[0] - b[0], a[1] - b[1]) * rate

    units = list(dict.fromkeys(pairs))
    costs: Costs = {}

    def work(p) -> None:
        try:
            path = nx.astar_path(G, p[0], p[1], heuristic=h, weight="weight")
            costs[p] = float(nx.path_weight(G, path, "weight"))
        except nx.NetworkXNoPath:
            costs[p] = math.inf

    done, dt = _budgeted(units, work, budget, seed)
    answered = sum(1 for p in pairs if p in costs)
    return Run("networkx-astar", name, len(pairs), answered, dt, dt * len(units) / done,
               note="per shipment, straight-line heuristic"), costs


# ---------------------------------------------------------------------------------------------
# the run


def load_network(n: int, seed: int, cache: str | None) -> tuple[RoadNetwork, float, float]:
    reset_peak()
    t0 = time.perf_counter()
    path = os.path.join(cache, f"road-{n}-seed{seed}.npz") if cache else None
    if path and os.path.exists(path):
        z = np.load(path)
        net = RoadNetwork(int(z["n"]), z["xy"], z["tail"], z["head"], z["km"], z["hours"], z["cost"],
                          float(z["rate"]))
    else:
        net = generate(n, seed)
        if path:
            os.makedirs(cache, exist_ok=True)
            np.savez(path, n=net.n, xy=net.xy, tail=net.tail, head=net.head, km=net.km, hours=net.hours,
                     cost=net.cost, rate=net.rate_per_km)
    gc.collect()
    return net, time.perf_counter() - t0, peak_mb()


def run_w1(args, report: SizeReport) -> None:
    """Hook for W1, the end-to-end workbook workload (read, validate, route, cost, write): to be
    added with the integration of the engine into costing/route.py."""
    report.skipped["W1"] = "end-to-end workbook workload not added yet (hook: benchmarks.bench_search.run_w1)"


def bench_size(n: int, args) -> SizeReport:
    net, gen_s, gen_peak = load_network(n, args.seed, args.cache)
    rep = SizeReport(n, net.m, gen_s, gen_peak)
    workloads: dict[str, Pairs] = {
        "W2-many": workload_many_per_origin(net, args.many_shipments, args.many_origins, seed=args.seed + 1),
        "W2-mixed": workload_mixed(net, args.mixed_shipments, seed=args.seed + 2),
    }
    rng = np.random.default_rng(args.seed + 3)
    p2p = [(int(a), int(b)) for a, b in rng.integers(0, net.n, size=(args.p2p, 2)) if a != b]

    # ours first, so that its peak memory is measured with nothing else built
    reset_peak()
    t0 = time.perf_counter()
    eng = SearchEngine(CSRGraph.from_arrays(net.n, net.tail, net.head, net.cost),
                       landmarks=args.landmarks, active=args.active)
    rep.builds["ours"] = time.perf_counter() - t0
    ours_costs: dict[str, Costs] = {}
    for wname, pairs in workloads.items():
        run, costs = run_ours(eng, wname, pairs)
        rep.runs.append(run)
        ours_costs[wname] = costs
    # point to point: A* against Dijkstra stopped at the target (both ours, same queries)
    t0 = time.perf_counter()
    a_res = [eng.astar(s, t) for s, t in p2p]
    a_time = time.perf_counter() - t0
    # Dijkstra stopped at the target, on as many of the same queries as the budget allows
    t0 = time.perf_counter()
    d_res = []
    for s, t in p2p:
        d_res.append(eng.one_to_many(s, [t], "python-many")[0])
        if time.perf_counter() - t0 > args.budget:
            break
    d_time = time.perf_counter() - t0
    for a, d in zip(a_res, d_res):
        if a.weight != d.weight or a.nodes != d.nodes:
            raise AssertionError("A* and Dijkstra disagree")
    sa = np.array([r.stats.settled for r in a_res[:len(d_res)]], dtype=float)
    sd = np.array([r.stats.settled for r in d_res], dtype=float)
    rep.p2p.update(queries=len(p2p), dijkstra_queries=len(d_res), astar_ms=a_time / len(p2p) * 1e3,
                   dijkstra_ms=d_time / len(d_res) * 1e3,
                   astar_settled=float(sa.mean()), dijkstra_settled=float(sd.mean()),
                   settled_ratio_sum=float(sa.sum() / sd.sum()),
                   settled_ratio_median=float(np.median(sa / sd)),
                   settled_share_of_n=float(sa.mean() / net.n))
    rep.peaks["ours"] = peak_mb()
    st = eng.stats
    rep.ours = {"landmarks": st.landmarks, "active": eng.active, "landmark_MB": st.landmark_bytes / 2**20,
                "landmark_seconds": st.landmark_seconds, "arrays_MB": st.graph_bytes / 2**20,
                "groups": dict(st.groups), "shipments": dict(st.shipments)}
    del eng, a_res, d_res
    gc.collect()

    # scipy (reference, compiled one-to-all) and the single full Dijkstra per query
    reset_peak()
    t0 = time.perf_counter()
    A = CSRGraph.from_arrays(net.n, net.tail, net.head, net.cost).to_scipy()
    rep.builds["scipy"] = time.perf_counter() - t0
    from scipy.sparse.csgraph import dijkstra

    k = min(len(p2p), 30)
    t0 = time.perf_counter()
    for s, t in p2p[:k]:
        _ = dijkstra(A, indices=s)[t]
    rep.p2p["scipy_full_dijkstra_ms"] = (time.perf_counter() - t0) / k * 1e3
    for wname, pairs in workloads.items():
        for routes in (True, False):
            run, costs = run_scipy(A, wname, pairs, args.budget, args.seed, routes)
            _compare(run, ours_costs[wname], costs)
            rep.runs.append(run)
    rep.peaks["scipy"] = peak_mb()
    del A
    gc.collect()

    if "rustworkx" in args.skip:
        rep.skipped["rustworkx"] = "--skip"
    else:
        try:
            import rustworkx  # noqa: F401
        except ImportError:
            rep.skipped["rustworkx"] = "not installed (pip install -e '.[bench]')"
        else:
            reset_peak()
            t0 = time.perf_counter()
            g = build_rustworkx(net)
            rep.builds["rustworkx"] = time.perf_counter() - t0
            for wname, pairs in workloads.items():
                run, costs = run_rustworkx(g, wname, pairs, args.budget, args.seed)
                _compare(run, ours_costs[wname], costs)
                rep.runs.append(run)
            rep.peaks["rustworkx"] = peak_mb()
            del g
            gc.collect()

    if "networkx" in args.skip:
        rep.skipped["networkx"] = "--skip"
    elif net.n > args.nx_max_nodes:
        rep.skipped["networkx"] = (f"not run above {args.nx_max_nodes:,} nodes: its graph of dicts needs "
                                   "several GB at this size")
    else:
        reset_peak()
        t0 = time.perf_counter()
        G = build_networkx(net)
        rep.builds["networkx"] = time.perf_counter() - t0
        for wname, pairs in workloads.items():
            run, costs = run_nx_dijkstra(G, wname, pairs, args.budget, args.seed)
            _compare(run, ours_costs[wname], costs)
            rep.runs.append(run)
            run, costs = run_nx_astar(G, net, wname, pairs, args.budget, args.seed)
            _compare(run, ours_costs[wname], costs)
            rep.runs.append(run)
        # point to point with networkx A*
        t0 = time.perf_counter()
        import networkx as nx

        xy = net.xy.tolist()
        rate = net.rate_per_km * (1.0 - 1e-9)
        done = 0
        for s, t in p2p:
            nx.astar_path_length(G, s, t, heuristic=lambda u, v: math.hypot(xy[u][0] - xy[v][0],
                                                                             xy[u][1] - xy[v][1]) * rate)
            done += 1
            if time.perf_counter() - t0 > args.budget:
                break
        rep.p2p["networkx_astar_ms"] = (time.perf_counter() - t0) / done * 1e3
        rep.peaks["networkx"] = peak_mb()
        del G
        gc.collect()

    run_w1(args, rep)
    return rep


# ---------------------------------------------------------------------------------------------
# printing


def _fmt_s(r: Run) -> str:
    s = f"{r.estimated_seconds:.3g}"
    return s + ("*" if r.extrapolated else "")


def markdown(reports: list[SizeReport], args) -> str:
    lines = []
    lines.append(f"Machine: {os.cpu_count()} logical CPUs, {cpu_model()}; "
                 f"Python {platform.python_version()}; numpy {np.__version__}; scipy {_ver('scipy')}; "
                 f"networkx {_ver('networkx')}; rustworkx {_ver('rustworkx')}.")
    lines.append(f"Load average (1 min) at the start and end of the run: {args.load_start:.2f}, "
                 f"{_load():.2f}: other work on the machine slows every engine, not always evenly.")
    lines.append("")
    lines.append(f"Reproduce: `python -m benchmarks.bench_search {args.cmdline}`")
    for rep in reports:
        lines.append("")
        lines.append(f"### {rep.nodes:,} nodes, {rep.arcs:,} arcs")
        lines.append("")
        o = rep.ours
        lines.append(f"Network generated in {rep.generate_seconds:.1f} s. Ours: {o.get('landmarks')} "
                     f"landmarks ({o.get('active')} active per query), tables "
                     f"{o.get('landmark_MB', 0):.0f} MB, computed in {o.get('landmark_seconds', 0):.1f} s.")
        lines.append("")
        wl = list(dict.fromkeys(r.workload for r in rep.runs))
        head = "| engine | " + " | ".join(f"{w} s | {w} x" for w in wl) + " | build s | peak MB |"
        lines.append(head)
        lines.append("|" + "---|" * (1 + 2 * len(wl) + 2))
        engines = list(dict.fromkeys(r.engine for r in rep.runs))
        by = {(r.engine, r.workload): r for r in rep.runs}
        for e in engines:
            cells = []
            for w in wl:
                r = by.get((e, w))
                o = by.get(("ours", w))
                if r is None:
                    cells += ["-", "-"]
                    continue
                ratio = r.estimated_seconds / o.estimated_seconds if o and o.estimated_seconds else math.nan
                cells += [_fmt_s(r), "1" if e == "ours" else f"{ratio:.2f}"]
            base = e.split(" ")[0].split("-")[0]
            b = rep.builds.get(base)
            pk = rep.peaks.get(base)
            lines.append(f"| {e} | " + " | ".join(cells) + f" | {'' if b is None else f'{b:.1f}'} | "
                         f"{'' if pk is None else f'{pk:.0f}'} |")
        lines.append("")
        lines.append("x = that engine's time / ours (above 1: ours is faster). * = run on a seeded subset "
                     "within the budget and extrapolated linearly to all units (origin groups, or shipments "
                     "for networkx-astar). build and peak MB are shared by an engine's rows.")
        lines.append("")
        agree = "all costs agree" if rep.all_agree else "COSTS DISAGREE"
        answered = ", ".join(f"{r.engine}/{r.workload} {r.answered}/{r.shipments}"
                             for r in rep.runs if r.extrapolated)
        lines.append(f"Agreement: {agree} (relative tolerance {REL_TOL:g}; largest difference "
                     f"{max((r.max_rel_diff for r in rep.runs), default=0.0):.2g})."
                     + (f" Subsets: {answered}." if answered else ""))
        for r in rep.runs:
            if r.engine == "ours":
                lines.append(f"Ours, {r.workload}: {r.note}; nodes settled {r.settled:,}.")
        p = rep.p2p
        lines.append("")
        nx_ms = p.get("networkx_astar_ms")
        lines.append(f"Point to point ({p['queries']} random pairs; the settled counts on the first "
                     f"{p['dijkstra_queries']}): A* settles {p['astar_settled']:.0f} "
                     f"nodes on average against {p['dijkstra_settled']:.0f} for Dijkstra stopped at the "
                     f"target: {100 * p['settled_ratio_sum']:.2f} % (median per query "
                     f"{100 * p['settled_ratio_median']:.2f} %; {100 * p['settled_share_of_n']:.2f} % of "
                     f"all nodes). Time per query: our A* {p['astar_ms']:.2f} ms, our Dijkstra "
                     f"{p['dijkstra_ms']:.1f} ms, scipy full one-to-all {p['scipy_full_dijkstra_ms']:.1f} ms"
                     + (f", networkx astar_path_length {nx_ms:.1f} ms" if nx_ms is not None else "") + ".")
        if rep.skipped:
            lines.append("")
            lines.append("Not run: " + "; ".join(f"{k}: {v}" for k, v in rep.skipped.items()) + ".")
    return "\n".join(lines)


def _load() -> float:
    try:
        return os.getloadavg()[0]
    except OSError:
        return math.nan


def _ver(mod: str) -> str:
    try:
        return __import__(mod).__version__
    except ImportError:
        return "not installed"


# ---------------------------------------------------------------------------------------------


def parse(argv: list[str] | None) -> argparse.Namespace:
    ap = argparse.ArgumentParser(prog="python -m benchmarks.bench_search", description=__doc__.split("\n")[0])
    ap.add_argument("--nodes", default="100000", help="comma-separated network sizes (default 100000)")
    ap.add_argument("--smoke", action="store_true", help="a ~2k-node run in seconds, for CI")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--landmarks", type=int, default=24)
    ap.add_argument("--active", type=int, default=6)
    ap.add_argument("--budget", type=float, default=60.0, help="seconds per reference and workload")
    ap.add_argument("--many-shipments", type=int, default=10_000)
    ap.add_argument("--many-origins", type=int, default=20)
    ap.add_argument("--mixed-shipments", type=int, default=2_000)
    ap.add_argument("--p2p", type=int, default=200, help="point-to-point queries")
    ap.add_argument("--nx-max-nodes", type=int, default=200_000)
    ap.add_argument("--skip", default="", help="comma-separated: rustworkx, networkx")
    ap.add_argument("--cache", default=os.path.join(os.environ.get("TMPDIR", "/tmp"), "costing-bench"),
                    help="directory for generated networks ('' for none)")
    ap.add_argument("--json", default="", help="write the figures here too")
    ap.add_argument("--quiet", action="store_true", help="no table (with --json)")
    args = ap.parse_args(argv)
    args.cmdline = " ".join(argv if argv is not None else sys.argv[1:])
    if args.smoke:
        args.nodes = "2000"
        args.many_shipments, args.many_origins, args.mixed_shipments = 300, 5, 150
        args.p2p, args.budget, args.cache = 20, 5.0, ""
    args.skip = {s.strip() for s in args.skip.split(",") if s.strip()}
    args.cache = args.cache or None
    return args


def _from_json(d: dict) -> SizeReport:
    runs = [Run(**x) for x in d.pop("runs")]
    return SizeReport(**d, runs=runs)


def _in_child(n: int, argv: list[str]) -> SizeReport:
    """One network size in a fresh interpreter, so that its peak memory is its own."""
    import subprocess
    import tempfile

    keep = []
    skip_next = False
    for a in argv:
        if skip_next:
            skip_next = False
            continue
        if a in ("--nodes", "--json"):
            skip_next = True
            continue
        if a.startswith(("--nodes=", "--json=")):
            continue
        keep.append(a)
    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "size.json")
        subprocess.run([sys.executable, "-m", "benchmarks.bench_search", *keep, "--nodes", str(n),
                        "--json", out, "--quiet"], check=False)
        with open(out) as f:
            return _from_json(json.load(f)[0])


def main(argv: list[str] | None = None) -> list[SizeReport]:
    raw = list(sys.argv[1:] if argv is None else argv)
    args = parse(raw)
    args.load_start = _load()
    sizes = [int(x) for x in args.nodes.split(",")]
    reports = []
    for n in sizes:
        print(f"--- {n:,} nodes", file=sys.stderr, flush=True)
        reports.append(_in_child(n, raw) if len(sizes) > 1 else bench_size(n, args))
    if not args.quiet:
        print(markdown(reports, args))
    if args.json:
        with open(args.json, "w") as f:
            json.dump([{**asdict(r), "runs": [asdict(x) for x in r.runs]} for r in reports], f, indent=1)
    return reports


if __name__ == "__main__":
    reps = main()
    sys.exit(0 if all(r.all_agree for r in reps) else 1)
