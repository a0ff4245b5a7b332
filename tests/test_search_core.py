"""The one search routine (costing.network.search._label_setting) behind astar, one_to_many,
dijkstra_all and the array engine, checked against networkx (an independent implementation of
Dijkstra's algorithm) on seeded random networks with parallel arcs and zero weights.

What is specific to the single routine: one `Arcs` keeps its split rows and work arrays from
search to search (so a search must leave nothing behind), the three ways of ending a search, and
a search started from inside a bound (it must not share the outer search's work arrays). Inputs
are random; every expected value comes from networkx.
"""

from __future__ import annotations

import math
import random

import networkx as nx
import pytest

from costing.network.search import Arcs, _label_setting, astar, dijkstra_all, one_to_many


def random_adjacency(seed: int, n: int = 40) -> list[list[tuple[int, float, int]]]:
    rng = random.Random(seed)
    adj: list[list[tuple[int, float, int]]] = [[] for _ in range(n)]
    e = 0
    for u in range(n):
        for _ in range(rng.randint(0, 4)):
            v = rng.randrange(n)
            w = float(rng.randint(0, 5)) if seed % 2 else round(rng.uniform(0.0, 9.0), 2)
            adj[u].append((v, w, e))
            e += 1
            if rng.random() < 0.15:  # a parallel arc, sometimes as light
                adj[u].append((v, w if rng.random() < 0.5 else w + 1.0, e))
                e += 1
    return adj


def nx_graph(adj) -> nx.DiGraph:
    """The lightest arc per (u, v) is all a least weight needs."""
    g = nx.DiGraph()
    g.add_nodes_from(range(len(adj)))
    for u, row in enumerate(adj):
        for v, w, _e in row:
            if not g.has_edge(u, v) or g[u][v]["weight"] > w:
                g.add_edge(u, v, weight=w)
    return g


def nx_best(adj, sources, exits) -> float:
    """Reference: networkx Dijkstra from a virtual source to a virtual end joined by arcs of the
    start and exit weights (the construction the module docstring argues with)."""
    g = nx_graph(adj)
    for s, w in sources:
        if not g.has_edge("S", s) or g["S"][s]["weight"] > w:
            g.add_edge("S", s, weight=w)
    for x, w in exits.items():
        g.add_edge(x, "T", weight=w)
    try:
        return nx.dijkstra_path_length(g, "S", "T", weight="weight")
    except (nx.NetworkXNoPath, nx.NodeNotFound):
        return math.inf


def check_route(adj, res, sources, exits) -> None:
    """The route is a real walk along the edge ids given, and its weight is the one reported."""
    start = dict(reversed(sources))  # the smallest start weight of a node given twice
    for s, w in sources:
        start[s] = min(start[s], w)
    total = start[res.nodes[0]]
    for u, v, e in zip(res.nodes, res.nodes[1:], res.edges):
        (w,) = [w for vv, w, ee in adj[u] if ee == e and vv == v]
        total += w
    total += exits[res.nodes[-1]]
    assert total == pytest.approx(res.weight, rel=1e-12, abs=1e-12)


@pytest.mark.parametrize("seed", range(24))
def test_one_arcs_reused_by_many_searches_matches_networkx(seed):
    adj = random_adjacency(seed)
    n = len(adj)
    arcs = Arcs.from_rows(adj)  # shared by every search below, in a random order of kinds
    rng = random.Random(seed + 100)
    for _ in range(12):
        kind = rng.choice(("astar", "many", "all"))
        sources = [(rng.randrange(n), float(rng.randint(0, 3))) for _ in range(rng.randint(1, 3))]
        if kind == "astar":
            exits = {rng.randrange(n): float(rng.randint(0, 3)) for _ in range(rng.randint(1, 3))}
            res = astar(arcs, sources, exits)
            ref = nx_best(adj, sources, exits)  # reference: networkx
            assert res.found == (ref < math.inf)
            if res.found:
                assert res.weight == pytest.approx(ref, rel=1e-12, abs=1e-12)
                check_route(adj, res, sources, exits)
            # the same search on the plain adjacency (fresh work arrays) returns the same route
            again = astar(adj, sources, exits)
            assert (again.weight, again.nodes, again.edges, again.stats) == \
                   (res.weight, res.nodes, res.edges, res.stats)
        elif kind == "many":
            targets = [{rng.randrange(n): float(rng.randint(0, 2))} for _ in range(rng.randint(1, 4))]
            for t, res in zip(targets, one_to_many(arcs, sources, targets)):
                ref = nx_best(adj, sources, t)  # reference: networkx
                assert res.found == (ref < math.inf)
                if res.found:
                    assert res.weight == pytest.approx(ref, rel=1e-12, abs=1e-12)
                    check_route(adj, res, sources, t)
        else:
            s = sources[0][0]
            ref = nx.single_source_dijkstra_path_length(nx_graph(adj), s, weight="weight")  # reference
            got = dijkstra_all(arcs, s)
            for v in range(n):
                if v in ref:
                    assert got[v] == pytest.approx(ref[v], rel=1e-12, abs=1e-12)
                else:
                    assert got[v] == math.inf


@pytest.mark.parametrize("seed", range(6))
def test_a_search_inside_a_bound_does_not_disturb_the_outer_search(seed):
    """A bound that itself searches the same Arcs (here: it computes the true remaining weight
    by a reverse search once, then reads it; consistent and 0 at the target) must not corrupt the
    outer search's work arrays."""
    adj = random_adjacency(seed)
    n = len(adj)
    arcs = Arcs.from_rows(adj)
    rng = random.Random(seed)
    s, t = rng.randrange(n), rng.randrange(n)
    reverse = [[] for _ in range(n)]
    for u, row in enumerate(adj):
        for v, w, e in row:
            reverse[v].append((u, w, e))
    calls = []

    def h(v: int) -> float:
        calls.append(v)
        dijkstra_all(arcs, v)  # a search on the same Arcs while the outer one is running
        d = dijkstra_all(reverse, t)[v]
        return d if d < math.inf else 0.0

    res = astar(arcs, s, t, h)
    ref = nx_best(adj, [(s, 0.0)], {t: 0.0})  # reference: networkx
    assert res.found == (ref < math.inf)
    if res.found:
        assert res.weight == pytest.approx(ref, rel=1e-12, abs=1e-12)
        check_route(adj, res, [(s, 0.0)], {t: 0.0})
    assert calls  # the bound was evaluated
    # and the shared work arrays were left clean: a plain search afterwards is still right
    after = astar(arcs, s, t)
    assert (after.found, after.weight) == (res.found, res.weight)


def test_cutoff_leaves_out_nodes_that_cannot_reach_and_keeps_the_route():
    """A bound of inf (>= the default cutoff) at every node that cannot reach the target:
    those nodes are never queued, the route and weight are networkx's."""
    for seed in range(10):
        adj = random_adjacency(seed + 50)
        n = len(adj)
        g = nx_graph(adj)
        t = seed % n
        can = nx.ancestors(g, t) | {t}  # reference: networkx reachability
        h = [0.0 if v in can else math.inf for v in range(n)]
        for s in range(0, n, 5):
            routes, stats, _ = _label_setting(Arcs.from_rows(adj), [(s, 0.0)], ({t: 0.0},), h,
                                              until="every")
            found, weight, nodes, _edges = routes[0]
            assert found == (s in can)
            if found:
                assert weight == pytest.approx(nx.dijkstra_path_length(g, s, t, weight="weight"),
                                               rel=1e-12, abs=1e-12)
                assert set(nodes) <= can
            assert stats.settled <= len(can)
