"""The trade-off search's exact bounds by scipy's compiled Dijkstra (FrontierNetwork.compiled)
against the search core's reverse search and against networkx.

Sources of truth: networkx 3.6 ``multi_source_dijkstra_path_length`` on the reversed graph built
here (a reference library; values compared within 1e-12 relative), and the product's own search
core (``costing.network.search.dijkstra_all``, a different implementation: pure Python, no
scipy), which the compiled path must equal float for float so the frontiers stay the same.
Graphs: seeded random multigraphs with parallel arcs, zero weights, unusable (inf) arcs and
exits with exit weights, and the week benchmark's road-like network.
"""

from __future__ import annotations

import math
import random

import networkx as nx
import pytest

from costing.network.pareto import FrontierNetwork


def random_adj(seed: int):
    rng = random.Random(seed)
    n = rng.randint(2, 60)
    adj = [[] for _ in range(n)]
    e = 0
    for _ in range(rng.randint(0, 5 * n)):
        u, v = rng.randrange(n), rng.randrange(n)
        pick = rng.random()
        cost = (0.0 if pick < 0.1 else math.inf if pick < 0.15
                else round(rng.uniform(0, 500), rng.choice([0, 2, 7])))
        time = 0.0 if rng.random() < 0.1 else rng.uniform(0, 12) / 3
        adj[u].append((v, cost, time, e))
        e += 1
        if rng.random() < 0.2:  # a parallel arc
            adj[u].append((v, cost * rng.uniform(0.5, 1.5), time, e))
            e += 1
    exits = {rng.randrange(n): (rng.choice([0.0, 12.5, 0.1]), rng.uniform(0, 2))
             for _ in range(rng.randint(1, 3))}
    return adj, exits


def networkx_bounds(adj, exits, which: int) -> list[float]:
    g = nx.DiGraph()
    n = len(adj)
    g.add_nodes_from(range(n + 1))
    for u, row in enumerate(adj):
        for v, wc, wt, _e in row:
            w = (wc, wt)[which]
            if math.isfinite(w) and (not g.has_edge(v, u) or w < g[v][u]["w"]):
                g.add_edge(v, u, w=w)  # reversed
    for x, weights in exits.items():
        g.add_edge(n, x, w=weights[which])  # the virtual start
    d = nx.single_source_dijkstra_path_length(g, n, weight="w")
    return [d.get(v, math.inf) for v in range(n)]


@pytest.mark.parametrize("seed", range(60))
def test_compiled_bounds_equal_the_core_and_networkx(seed):
    adj, exits = random_adj(seed)
    net = FrontierNetwork(adj)
    assert FrontierNetwork.compiled
    hc, ht = net.bounds(exits)
    FrontierNetwork.compiled = False
    try:
        core = FrontierNetwork(adj).bounds(exits)
    finally:
        FrontierNetwork.compiled = True
    assert (hc, ht) == core  # float for float, the two virtual nodes' zeros included
    for got, which in ((hc, 0), (ht, 1)):
        want = networkx_bounds(adj, exits, which)
        for a, b in zip(got, want):
            assert a == b or math.isclose(a, b, rel_tol=1e-12), (a, b)


def test_compiled_bounds_on_the_week_network():
    from benchmarks.road_network import generate

    net = generate(3000, seed=5)
    adj = [[] for _ in range(net.n)]
    for e, (u, v, km, h) in enumerate(zip(net.tail.tolist(), net.head.tolist(), net.km.tolist(),
                                          net.hours.tolist())):
        adj[u].append((v, 1.7 * km + 33.0 * h, h, e))
    exits = {17: (45.0, 0.5), 2200: (45.0, 0.5), 901: (0.0, 0.0)}
    fast = FrontierNetwork(adj).bounds(exits)
    FrontierNetwork.compiled = False
    try:
        assert fast == FrontierNetwork(adj).bounds(exits)
    finally:
        FrontierNetwork.compiled = True
