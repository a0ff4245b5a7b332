"""The search engine (costing.network.engine) on seeded random networks against independent references.

Sources of truth:
- networkx 3.6 (reference library): single_source_dijkstra_path_length on the reversed graph gives
  d(v, t) for every v (the "reverse Dijkstra" the bound is checked against), and
  dijkstra_path_length gives the least route weight from source to target. networkx shares no
  code with the engine (which uses scipy for its landmark tables).
- The definitions of admissible (h(v) <= d(v, t)) and consistent (h(u) <= w(u, v) + h(v) on every
  arc, h(t) = 0) as stated in costing/search.py, checked at every node and arc.
- scipy.sparse.csgraph.dijkstra (reference library, compiled, shares no code with the engine's
  searches) on a sparse matrix this file builds itself from the arc list (parallel arcs reduced to
  the lightest, loops dropped): the least route weight from every queried source to every node,
  checked against every strategy and the batched route_many (the large-network path).
- costing.network.search.astar (the product's reviewed search) for the adjacency-list input, as a second
  opinion next to scipy.
Networks are invented test inputs only; no expected value is invented.
"""

from __future__ import annotations

import math
import random

import networkx as nx
import numpy as np
import pytest

from costing.network.engine import HUGE, CSRGraph, SearchEngine
from costing.network.search import SearchResult, astar

N_ASTAR_NETWORKS = 60  # >= 50 random networks for the A* cost check


def random_network(seed: int, n: int | None = None, integer: bool = False, one_way: float = 0.2,
                   zero: bool = False):
    """Points in a square; each joined to a few near neighbours (two-way or one-way) plus a few
    long arcs; weight = straight line x U(1, 2) (so straight line x 1 is a lower bound), or small
    integers >= straight line rounded up when `integer` (many exactly equal routes). Returns
    (n, arcs [(u, v, w, edge_id)], xy)."""
    rng = random.Random(seed)
    n = n or rng.randint(8, 160)
    xy = [(rng.uniform(0, 100), rng.uniform(0, 100)) for _ in range(n)]
    arcs = []

    def dist(a, b):
        return math.hypot(xy[a][0] - xy[b][0], xy[a][1] - xy[b][1])

    def weight(a, b):
        if zero and rng.random() < 0.1:
            return 0.0  # breaks the straight-line bound: not used with `zero`
        if integer:
            return float(math.ceil(dist(a, b)) + rng.randint(0, 2))
        return dist(a, b) * rng.uniform(1.0, 2.0)

    k = rng.randint(1, 4)
    for u in range(n):
        near = sorted(range(n), key=lambda v: dist(u, v))[1:k + 1]
        for v in near:
            arcs.append((u, v, weight(u, v)))
            if rng.random() > one_way:
                arcs.append((v, u, weight(v, u)))
    for _ in range(rng.randint(0, n // 4)):
        u, v = rng.randrange(n), rng.randrange(n)
        arcs.append((u, v, weight(u, v)))  # may be a self-loop or a parallel arc
    rng.shuffle(arcs)
    return n, [(u, v, w, i) for i, (u, v, w) in enumerate(arcs)], xy


def nx_graph(n, arcs) -> nx.DiGraph:
    """networkx reference graph: parallel arcs reduced to the lightest, loops kept (harmless)."""
    g = nx.DiGraph()
    g.add_nodes_from(range(n))
    for u, v, w, _e in arcs:
        if not g.has_edge(u, v) or w < g[u][v]["weight"]:
            g.add_edge(u, v, weight=w)
    return g


def scipy_distances(n, arcs, sources) -> dict[int, np.ndarray]:
    """{source: least weight to every node} by scipy.sparse.csgraph.dijkstra (reference library) on
    a CSR matrix built here: parallel arcs reduced to the lightest, self-loops dropped (a loop is
    never on a least route). No zero weights here: a sparse matrix cannot tell a zero-weight arc
    from no arc, so the zero-weight case is checked against networkx instead."""
    from scipy.sparse import csr_array
    from scipy.sparse.csgraph import dijkstra

    best: dict[tuple[int, int], float] = {}
    for u, v, w, _e in arcs:
        if u == v:
            continue
        assert w > 0, "scipy_distances: zero weights are not representable"
        if w < best.get((u, v), math.inf):
            best[(u, v)] = w
    rows, cols = zip(*best) if best else ((), ())
    mat = csr_array((list(best.values()), (list(rows), list(cols))), shape=(n, n))
    sources = sorted(set(sources))
    dist = dijkstra(mat, directed=True, indices=sources)
    return {s: dist[i] for i, s in enumerate(sources)}


def assert_weights_equal_scipy(results, pairs, ref) -> None:
    """Each result's found flag and weight against scipy's distance for its (source, target)."""
    assert len(results) == len(pairs)
    for r, (s, t) in zip(results, pairs):
        d = ref[s][t]
        assert r.found == math.isfinite(d), (s, t, r.weight, d)
        if r.found:
            assert r.weight == pytest.approx(d, rel=1e-12, abs=1e-12), (s, t)


def engine_for(n, arcs, landmarks=6, active=3, reorder=True, seed=0) -> SearchEngine:
    u, v, w, e = zip(*arcs) if arcs else ((), (), (), ())
    return SearchEngine(CSRGraph.from_arrays(n, u, v, w, e), landmarks=landmarks, active=active,
                        reorder=reorder, seed=seed)


def straight_line(xy, t):
    return [math.hypot(x - xy[t][0], y - xy[t][1]) * (1 - 1e-9) for x, y in xy]


def check_route(res: SearchResult, arcs, source, target):
    """The route is a chain of arcs from source to target whose weights, added in order, give
    exactly the reported weight."""
    by_id = {e: (u, v, w) for u, v, w, e in arcs}
    assert res.nodes[0] == source and res.nodes[-1] == target
    assert len(res.edges) == len(res.nodes) - 1
    total = 0.0
    for a, b, e in zip(res.nodes, res.nodes[1:], res.edges):
        u, v, w = by_id[e]
        assert (u, v) == (a, b)
        total += w
    assert total == res.weight


# ---------------------------------------------------------------------------------------------
# the bound


@pytest.mark.parametrize("seed", range(30))
def test_landmark_bound_admissible_and_consistent_at_every_node(seed):
    n, arcs, xy = random_network(1000 + seed, integer=seed % 3 == 0)
    eng = engine_for(n, arcs, landmarks=min(8, n), seed=seed)
    rev = nx_graph(n, arcs).reverse(copy=True)
    rng = random.Random(seed)
    for t in rng.sample(range(n), min(n, 6)):
        # reference: networkx Dijkstra from t on the reversed graph = d(v, t) for every v
        d = nx.single_source_dijkstra_path_length(rev, t, weight="weight")
        lower = straight_line(xy, t)
        for lb in (None, lower):
            for subset in (None, [0], list(range(eng.lm.k))[::2]):
                h = eng.bound(t, lb, landmarks=subset)
                assert h[t] == 0.0
                for v in d:
                    assert h[v] <= d[v], (v, h[v], d[v])
                for u, v, w, _e in arcs:
                    if h[v] < HUGE:
                        assert h[u] <= w + h[v], (u, v, w, h[u], h[v])
                # a node flagged "cannot reach t" really cannot
                assert all(v not in d for v in np.flatnonzero(h >= HUGE).tolist())


def test_lazy_bound_equals_vector_bound():
    """The node-by-node bound A* evaluates equals `bound` (same landmarks, same numbers)."""
    n, arcs, xy = random_network(7, n=120)
    eng = engine_for(n, arcs, landmarks=8, active=3)
    for t in (0, 17, 99):
        lower = straight_line(xy, t)
        ti = eng._int[t]
        for s in (3, 50):
            act = eng._active_landmarks(eng._int[s], ti)
            h = eng._bound_function(ti, act, lower)
            vec = eng.bound(t, lower, landmarks=act)
            assert [h(eng._int[v]) for v in range(n)] == vec.tolist()


def test_landmark_lower_bounds_from_a_source():
    n, arcs, _xy = random_network(21, n=90)
    eng = engine_for(n, arcs, landmarks=6)
    d = nx.single_source_dijkstra_path_length(nx_graph(n, arcs), 5, weight="weight")  # reference
    lb = eng.lower_bounds_from(5)
    assert lb[5] == 0.0
    for v, dv in d.items():
        assert lb[v] <= dv * (1 + 1e-12)


def test_landmark_memory_is_reported():
    n, arcs, _xy = random_network(3, n=100)
    eng = engine_for(n, arcs, landmarks=5)
    assert eng.stats.landmarks == 5
    assert eng.stats.landmark_bytes == 2 * 5 * n * 8 + 5 * 8
    assert eng.stats.graph_bytes > 0


# ---------------------------------------------------------------------------------------------
# A* against networkx


@pytest.mark.parametrize("seed", range(N_ASTAR_NETWORKS))
def test_astar_equals_networkx_on_random_networks(seed):
    n, arcs, xy = random_network(seed, integer=seed % 4 == 0, one_way=0.4 if seed % 5 == 0 else 0.15)
    g = nx_graph(n, arcs)
    eng = engine_for(n, arcs, landmarks=min(6, n), active=1 + seed % 4, reorder=seed % 2 == 0, seed=seed)
    rng = random.Random(seed)
    for _ in range(8):
        s, t = rng.randrange(n), rng.randrange(n)
        lb = straight_line(xy, t) if rng.random() < 0.5 else None
        res = eng.astar(s, t, lb)
        try:
            ref = nx.dijkstra_path_length(g, s, t, weight="weight")  # reference: networkx
        except nx.NetworkXNoPath:
            assert not res.found and res.weight == math.inf and res.nodes == ()
            continue
        assert res.found
        assert res.weight == pytest.approx(ref, rel=1e-12, abs=1e-12)
        check_route(res, arcs, s, t)


def test_source_equals_target_like_costing_search():
    n, arcs, _xy = random_network(11, n=30)
    eng = engine_for(n, arcs)
    adj = [[] for _ in range(n)]
    for u, v, w, e in arcs:
        adj[u].append((v, w, e))
    ours, theirs = eng.astar(4, 4), astar(adj, 4, 4)
    assert_weights_equal_scipy([ours], [(4, 4)], scipy_distances(n, arcs, [4]))  # reference: scipy
    assert ours.nodes == (4,) and ours.edges == ()  # the empty route (definition, no source)
    assert (ours.found, ours.weight, ours.nodes, ours.edges) == (theirs.found, theirs.weight, theirs.nodes,
                                                                 theirs.edges)


def test_from_adjacency_matches_costing_search():
    """Adjacency lists as costing.network.build builds them (parallel lanes, a loop): same weights as
    costing.network.search.astar, and the same lane among equally light parallel lanes (the first)."""
    for seed in range(10):
        n, arcs, _xy = random_network(500 + seed, integer=True)
        adj = [[] for _ in range(n)]
        for u, v, w, e in sorted(arcs, key=lambda a: a[3]):
            adj[u].append((v, w, e))
        adj[0].append((1 % n, 1.0, 10_000))
        adj[0].append((1 % n, 1.0, 10_001))  # an equally light parallel lane: 10_000 must win
        eng = SearchEngine(CSRGraph.from_adjacency(adj), landmarks=4)
        all_arcs = [(u, v, w, e) for u in range(n) for v, w, e in adj[u]]
        ref = scipy_distances(n, all_arcs, range(0, n, max(1, n // 5)))  # reference: scipy
        for s in range(0, n, max(1, n // 5)):
            for t in range(0, n, max(1, n // 7)):
                a, b = eng.astar(s, t), astar(adj, s, t)
                assert_weights_equal_scipy([a], [(s, t)], ref)
                if a.found:
                    check_route(a, all_arcs, s, t)
                assert a.found == b.found
                if a.found:
                    assert a.weight == pytest.approx(b.weight, rel=1e-12, abs=1e-12)
                    assert 10_001 not in a.edges


def test_rejects_negative_and_nan_weights():
    with pytest.raises(ValueError):
        CSRGraph.from_arrays(2, [0], [1], [-1.0])
    with pytest.raises(ValueError):
        CSRGraph.from_arrays(2, [0], [1], [float("nan")])


# ---------------------------------------------------------------------------------------------
# batching


def _key(r: SearchResult):
    return (r.found, r.weight, r.nodes, r.edges)


@pytest.mark.parametrize("seed", range(20))
def test_batching_strategies_give_identical_results(seed):
    """Per-shipment A*, one Dijkstra stopped at the last destination and scipy's one-to-all
    with our reconstruction give the same weights and the same routes, also where integer
    weights make many routes exactly equal."""
    n, arcs, xy = random_network(2000 + seed, n=60 + 7 * seed, integer=seed % 2 == 0)
    eng = engine_for(n, arcs, landmarks=6, active=2 + seed % 3, reorder=seed % 3 != 0)
    rng = random.Random(seed)
    for _ in range(3):
        s = rng.randrange(n)
        targets = [rng.randrange(n) for _ in range(rng.randint(1, 25))] + [s]
        runs = {m: [_key(r) for r in eng.one_to_many(s, targets, m)]
                for m in ("astar", "python-many", "scipy-all")}
        assert runs["astar"] == runs["python-many"] == runs["scipy-all"]
        # and the weights are the least ones (reference: scipy's Dijkstra on our own matrix)
        ref = scipy_distances(n, arcs, [s])
        assert_weights_equal_scipy(eng.one_to_many(s, targets, "astar"), [(s, t) for t in targets], ref)
        lb = eng.one_to_many(s, targets, "astar", lower_bound=lambda t: straight_line(xy, t))
        assert [_key(r) for r in lb] == runs["astar"]
        for t, r in zip(targets, lb):
            if r.found:
                check_route(r, arcs, s, t)


def test_route_many_identical_to_per_shipment_astar():
    n, arcs, _xy = random_network(77, n=150, integer=True)
    eng = engine_for(n, arcs, landmarks=8)
    rng = random.Random(5)
    origins = rng.sample(range(n), 12)
    pairs = [(o, rng.randrange(n)) for o in origins for _ in range(rng.choice([1, 1, 2, 30]))]
    rng.shuffle(pairs)
    auto = eng.route_many(pairs)
    assert {p.strategy for p in eng.plans} >= {"astar"}
    for strategy in ("astar", "python-many", "scipy-all"):
        forced = eng.route_many(pairs, strategy=strategy)
        assert [_key(r) for r in forced] == [_key(r) for r in auto]
    single = [eng.astar(o, d) for o, d in pairs]
    assert [_key(r) for r in single] == [_key(r) for r in auto]
    assert_weights_equal_scipy(auto, pairs, scipy_distances(n, arcs, origins))  # reference: scipy
    for r, (o, d) in zip(auto, pairs):
        if r.found:
            check_route(r, arcs, o, d)
    assert sum(eng.stats.shipments.values()) == 4 * len(pairs)
    # a shared search's statistics are split over its results, not repeated: they add up to at
    # most every node once
    big = max(origins, key=lambda o: sum(p[0] == o for p in pairs))
    dests = list(dict.fromkeys(d for o, d in pairs if o == big))
    shared = eng.one_to_many(big, dests, "python-many")
    assert sum(r.stats.settled for r in shared) <= n


def test_plan_prefers_one_search_for_many_destinations_and_astar_for_one():
    n, arcs, _xy = random_network(5, n=400)
    eng = engine_for(n, arcs, landmarks=8)
    many = eng.plan(0, list(range(1, 400)))
    assert many.strategy in ("scipy-all", "python-many")
    assert set(many.estimates) == {"astar", "python-many", "scipy-all"}


def test_zero_weight_arcs_same_weights_every_strategy():
    n, arcs, _xy = random_network(9, n=120, zero=True)
    eng = engine_for(n, arcs, landmarks=6)
    assert eng.has_zero_weight
    g = nx_graph(n, arcs)
    targets = list(range(0, n, 3))
    runs = {m: eng.one_to_many(1, targets, m) for m in ("astar", "python-many", "scipy-all")}
    ref = nx.single_source_dijkstra_path_length(g, 1, weight="weight")  # reference: networkx
    for m, res in runs.items():
        for t, r in zip(targets, res):
            assert r.found == (t in ref), m
            if r.found:
                assert r.weight == pytest.approx(ref[t], rel=1e-12, abs=1e-12)
                check_route(r, arcs, 1, t)


# ---------------------------------------------------------------------------------------------
# the large-network path against scipy and networkx


def road_like(seed: int, side: int):
    """A side x side grid of junctions, jittered, each joined to its right and lower neighbours
    both ways (weight = straight line x U(1, 1.6), different each way) plus a few long one-way
    links; built here, independently of benchmarks/road_network.py. Returns (n, arcs, xy)."""
    rng = random.Random(seed)
    n = side * side
    xy = [(i % side + rng.uniform(-0.3, 0.3), i // side + rng.uniform(-0.3, 0.3)) for i in range(n)]
    arcs = []

    def add(u, v):
        arcs.append((u, v, math.hypot(xy[u][0] - xy[v][0], xy[u][1] - xy[v][1]) * rng.uniform(1.0, 1.6)))

    for i in range(n):
        if i % side + 1 < side:
            add(i, i + 1)
            add(i + 1, i)
        if i + side < n:
            add(i, i + side)
            add(i + side, i)
    for _ in range(n // 20):
        add(rng.randrange(n), rng.randrange(n))
    arcs = [a for a in arcs if a[2] > 0]
    return n, [(u, v, w, i) for i, (u, v, w) in enumerate(arcs)], xy


@pytest.mark.parametrize("seed", range(3))
def test_large_network_route_many_equals_scipy_and_networkx(seed):
    """route_many on a 2,500-node road-like network (landmarks, batching by origin, every
    strategy the planner picks), with and without the straight-line bound: every weight equals
    scipy's Dijkstra, every route is a real chain of arcs, and a sample equals networkx's
    dijkstra_path_length (second reference library)."""
    n, arcs, xy = road_like(seed, 50)
    eng = engine_for(n, arcs, landmarks=12, active=3, seed=seed)
    rng = random.Random(seed)
    origins = rng.sample(range(n), 8)
    pairs = [(o, rng.randrange(n)) for o in origins for _ in range(rng.choice([1, 2, 40, 200]))]
    rng.shuffle(pairs)
    ref = scipy_distances(n, arcs, origins)
    for lower_bound in (None, lambda t: straight_line(xy, t)):
        res = eng.route_many(pairs, lower_bound=lower_bound)
        assert_weights_equal_scipy(res, pairs, ref)
        for r, (o, d) in zip(res, pairs):
            check_route(r, arcs, o, d)
    assert {p.strategy for p in eng.plans} >= {"astar"}  # the A* path is among those checked
    g = nx_graph(n, arcs)
    for o, d in rng.sample(pairs, 20):
        assert ref[o][d] == pytest.approx(nx.dijkstra_path_length(g, o, d, weight="weight"), rel=1e-12)
