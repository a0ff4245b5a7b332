"""The bi-objective frontier search (costing/pareto.py) on seeded random graphs, against
brute-force enumeration of every simple route with networkx.all_simple_paths.

    python -m benchmarks.bench_pareto                 # 160 graphs of 5 to 12 nodes
    python -m benchmarks.bench_pareto --graphs 40

Replaces the wall-clock limit the test suite used to hold (tests assert no times). The graphs
are invented: lanes of three kinds that conflict on purpose (fast-expensive, slow-cheap, in
between), some parallel. Prints seconds and the ratio; asserts nothing about time.
"""

from __future__ import annotations

import argparse
import random
import time
from itertools import product

import networkx as nx
import pandas as pd

from costing.network.pareto import pareto_frontier


def random_graph(seed: int):
    rng = random.Random(seed)
    n = rng.randint(5, 12)
    pairs = [(u, v) for u in range(n) for v in range(n) if u != v]
    rng.shuffle(pairs)
    adj: list[list[tuple[int, float, float, int]]] = [[] for _ in range(n)]
    g = nx.MultiDiGraph()
    g.add_nodes_from(range(n))
    e = 0
    for u, v in pairs[: rng.randint(2 * n + 2, 4 * n)]:
        for _ in range(1 + (rng.random() < 0.3)):
            c, t = {"fast": (rng.uniform(8, 20), rng.uniform(0.2, 2)),
                    "slow": (rng.uniform(0.5, 4), rng.uniform(5, 12)),
                    "mid": (rng.uniform(0, 12), rng.uniform(0, 8))}[rng.choice(("fast", "slow", "mid"))]
            adj[u].append((v, c, t, e))
            g.add_edge(u, v, key=e, cost=c, time=t)
            e += 1
    return adj, g, n


def brute_force_points(g: nx.MultiDiGraph, s: int, t: int) -> int:
    count = 0
    for path in {tuple(p) for p in nx.all_simple_paths(g, s, t)}:
        for _choice in product(*[list(g[u][v].values()) for u, v in zip(path, path[1:])]):
            count += 1
    return count


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--graphs", type=int, default=160)
    args = ap.parse_args()
    graphs = [random_graph(seed) for seed in range(args.graphs)]

    start = time.perf_counter()
    routes = sum(len(pareto_frontier(adj, 0, n - 1).routes) for adj, _g, n in graphs)
    ours = time.perf_counter() - start

    start = time.perf_counter()
    points = sum(brute_force_points(g, 0, n - 1) for _adj, g, n in graphs)
    brute = time.perf_counter() - start

    table = pd.DataFrame([("frontier search (ours)", ours, f"{routes} frontier routes"),
                          ("brute force (networkx)", brute, f"{points} routes enumerated")],
                         columns=["method", "seconds", "output"])
    print(f"{args.graphs} graphs")
    print(table.to_string(index=False, float_format=lambda x: f"{x:.3f}"))
    print(f"ratio brute/ours {brute / ours:.1f}")


if __name__ == "__main__":
    main()
