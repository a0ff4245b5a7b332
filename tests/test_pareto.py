"""The bi-objective frontier search (costing/pareto.py) against an independent oracle.

Source of truth: brute-force enumeration of every simple route with networkx.all_simple_paths
(reference library, networkx 3.6.1) on a networkx MultiDiGraph this file builds itself, taking
every choice among parallel edges; the non-dominated set of the (cost, time) pairs is computed
here, in this file, by a sort-and-sweep written for the test. With non-negative weights a walk
with a cycle is never better than the simple route inside it, so simple routes suffice.
Bounds for the bounded runs are reverse Dijkstra distances from networkx
(single_source_dijkstra_path_length on the reversed graph), scaled down so they stay lower bounds.
Equality of values is within 1e-9 relative (the tolerance the brief sets for the module).
"""

from __future__ import annotations

import math
import random
from functools import cache
from itertools import product

import networkx as nx
import pytest

from costing.network.pareto import ParetoResult, pareto_frontier

N_RANDOM = 160  # seeded random graphs (the brief asks for at least 150)
REL = 1e-9


# ---------------------------------------------------------------------------------------------
# the independent oracle


def close(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=REL, abs_tol=1e-12)


def no_worse(a: float, b: float) -> bool:
    return a <= b or close(a, b)


def non_dominated(points: list[tuple[float, float]]) -> list[tuple[float, float]]:
    """Pareto filter written for this test: sort by (cost, time), sweep keeping points whose
    time beats every kept point's; a point equal in cost (within tolerance) to the last kept one
    and better in time replaces it. Returns the staircase sorted by cost ascending."""
    kept: list[tuple[float, float]] = []
    for c, t in sorted(points):
        if kept and no_worse(kept[-1][1], t):
            continue  # the kept point of least time (and no larger cost) covers it
        while kept and close(kept[-1][0], c):
            kept.pop()  # same cost within tolerance, worse time
        kept.append((c, t))
    return kept


def brute_force_frontier(g: nx.MultiDiGraph, s: int, t: int) -> list[tuple[float, float]]:
    points = []
    for path in {tuple(p) for p in nx.all_simple_paths(g, s, t)}:
        hops = [list(g[u][v].values()) for u, v in zip(path, path[1:])]
        for choice in product(*hops):
            points.append((sum(d["cost"] for d in choice), sum(d["time"] for d in choice)))
    return non_dominated(points)


def reverse_dijkstra(g: nx.MultiDiGraph, t: int, weight: str) -> list[float]:
    """Least remaining weight to t from every node (inf where t is unreachable), by networkx.
    On a multigraph networkx takes the least of parallel edges' weights."""
    dist = nx.single_source_dijkstra_path_length(g.reverse(copy=True), t, weight=weight)
    return [dist.get(v, math.inf) for v in range(g.number_of_nodes())]


# ---------------------------------------------------------------------------------------------
# graphs


def build(n: int, lanes: list[tuple[int, int, float, float]]):
    """(adjacency for the module, networkx MultiDiGraph for the oracle, edge table)."""
    adj: list[list[tuple[int, float, float, int]]] = [[] for _ in range(n)]
    g = nx.MultiDiGraph()
    g.add_nodes_from(range(n))
    for e, (u, v, c, t) in enumerate(lanes):
        adj[u].append((v, c, t, e))
        g.add_edge(u, v, key=e, cost=c, time=t)
    return adj, g, lanes


def random_lanes(seed: int) -> tuple[int, list[tuple[int, int, float, float]]]:
    """5-12 nodes, source 0 and target n-1; lanes of three kinds that conflict on purpose
    (fast-expensive, slow-cheap, in between), parallel lanes, and per graph one number style:
    two-decimal figures, small integers with zeros (many exact ties), or raw floats."""
    rng = random.Random(seed)
    n = rng.randint(5, 12)
    style = rng.choice(("money", "int", "float"))

    def weights() -> tuple[float, float]:
        kind = rng.choice(("fast", "slow", "mid"))
        if style == "int":
            c, t = {"fast": (rng.randint(5, 9), rng.randint(0, 2)),
                    "slow": (rng.randint(0, 3), rng.randint(5, 9)),
                    "mid": (rng.randint(0, 9), rng.randint(0, 9))}[kind]
            return float(c), float(t)
        c, t = {"fast": (rng.uniform(8, 20), rng.uniform(0.2, 2)),
                "slow": (rng.uniform(0.5, 4), rng.uniform(5, 12)),
                "mid": (rng.uniform(0, 12), rng.uniform(0, 8))}[kind]
        if style == "money":
            return round(c, 2), round(t, 2)
        return c, t

    pairs = [(u, v) for u in range(n) for v in range(n) if u != v]
    rng.shuffle(pairs)
    lanes = []
    for u, v in pairs[: rng.randint(2 * n + 2, 4 * n)]:
        for _ in range(1 + (rng.random() < 0.3) + (rng.random() < 0.1)):
            lanes.append((u, v, *weights()))
    rng.shuffle(lanes)
    return n, lanes


@cache
def case(seed: int):
    n, lanes = random_lanes(seed)
    adj, g, table = build(n, lanes)
    s, t = 0, n - 1
    return adj, g, table, s, t, brute_force_frontier(g, s, t)


def bounds(seed: int, kind: str):
    adj, g, _table, _s, t, _front = case(seed)
    if kind == "zero":
        return None, None
    hc, ht = reverse_dijkstra(g, t, "cost"), reverse_dijkstra(g, t, "time")
    if kind == "scaled":  # consistent lower bounds: 0.7 x the exact remaining weight
        return [0.7 * x for x in hc], [0.7 * x for x in ht]
    if kind == "exact":  # the best admissible bound there is
        return hc, ht
    rng = random.Random(1000 + seed)  # "jumpy": admissible, generally not consistent
    return [x * rng.random() for x in hc], [x * rng.random() for x in ht]


def check_routes(res: ParetoResult, table, s: int, t: int) -> None:
    """Each route is a real simple route whose figures are the sums of its edges' weights, and
    the list is sorted by cost with time falling (source: the edge table of this file)."""
    for r in res.routes:
        assert r.nodes[0] == s and r.nodes[-1] == t
        assert len(r.edges) == len(r.nodes) - 1
        assert len(set(r.nodes)) == len(r.nodes)
        for i, e in enumerate(r.edges):
            u, v, _c, _t = table[e]
            assert (u, v) == (r.nodes[i], r.nodes[i + 1])
        assert close(r.cost, sum(table[e][2] for e in r.edges))
        assert close(r.time, sum(table[e][3] for e in r.edges))
    for a, b in zip(res.routes, res.routes[1:]):
        assert a.cost < b.cost and a.time > b.time


def pairs(res: ParetoResult) -> list[tuple[float, float]]:
    return [(r.cost, r.time) for r in res.routes]


def same_points(got: list[tuple[float, float]], want: list[tuple[float, float]]) -> bool:
    return len(got) == len(want) and all(close(a, c) and close(b, d) for (a, b), (c, d) in zip(got, want))


# ---------------------------------------------------------------------------------------------
# a hand-worked example

# Nodes 0 = S, 1 = A, 2 = B, 3 = T. Edges (id: from->to cost, time):
#   e0: S->A 2, 6    e1: A->T 3, 4    e2: S->B 4, 3    e3: B->T 3, 3
#   e4: S->T 12, 2   (fast and expensive)
#   e5: S->T 13, 7   (dominated by S-B-T: 7 <= 13 and 6 <= 7)
#   e6: A->B 1, 1
# Every route S -> T, worked by hand:
#   S-A-T    e0 e1     cost 2+3   = 5,  time 6+4   = 10   cheap and slow      -> frontier
#   S-B-T    e2 e3     cost 4+3   = 7,  time 3+3   = 6    medium              -> frontier
#   S-T      e4        cost 12,         time 2            fast and expensive  -> frontier
#   S-T      e5        cost 13,         time 7            dominated by S-B-T (7, 6)
#   S-A-B-T  e0 e6 e3  cost 2+1+3 = 6,  time 6+1+3 = 10   dominated by S-A-T (5, 10)
# Least remaining cost to T: S 5 (S-A-T), A 3, B 3, T 0; least remaining time: S 2 (e4),
# A min(4, 1+3) = 4, B 3, T 0.
HAND_LANES = [(0, 1, 2.0, 6.0), (1, 3, 3.0, 4.0), (0, 2, 4.0, 3.0), (2, 3, 3.0, 3.0),
              (0, 3, 12.0, 2.0), (0, 3, 13.0, 7.0), (1, 2, 1.0, 1.0)]
HAND_FRONTIER = [(5.0, 10.0, (0, 1, 3), (0, 1)), (7.0, 6.0, (0, 2, 3), (2, 3)), (12.0, 2.0, (0, 3), (4,))]


@pytest.mark.parametrize("h", [(None, None), ([5.0, 3.0, 3.0, 0.0], [2.0, 4.0, 3.0, 0.0]),
                               ([3.5, 2.1, 2.1, 0.0], [1.4, 2.8, 2.1, 0.0])],
                         ids=["zero", "exact", "scaled"])
def test_hand_worked(h):
    adj, g, table = build(4, HAND_LANES)
    res = pareto_frontier(adj, 0, 3, *h)
    # source: the hand-worked table above
    assert [(r.cost, r.time, r.nodes, r.edges) for r in res.routes] == HAND_FRONTIER
    assert not res.capped
    # source: networkx brute force agrees with the hand work
    assert brute_force_frontier(g, 0, 3) == [(c, t) for c, t, _n, _e in HAND_FRONTIER]
    check_routes(res, table, 0, 3)


# ---------------------------------------------------------------------------------------------
# random graphs against the brute force


@pytest.mark.parametrize("seed", range(N_RANDOM))
def test_random_against_brute_force(seed):
    adj, _g, table, s, t, front = case(seed)
    for kind in ("zero", "scaled", "exact", "jumpy"):
        res = pareto_frontier(adj, s, t, *bounds(seed, kind))
        # source: networkx all_simple_paths enumeration + the Pareto filter of this file
        assert same_points(pairs(res), front), (kind, pairs(res), front)
        assert not res.capped
        check_routes(res, table, s, t)


@pytest.mark.parametrize("seed", range(0, N_RANDOM, 2))
def test_random_caps_give_a_prefix(seed):
    """Frontier points are found in increasing order of cost (module docstring, after Mandow &
    Pérez de la Cruz 2010), so either cap returns the cheapest points of the frontier."""
    adj, _g, table, s, t, front = case(seed)
    for kind in ("zero", "scaled", "jumpy"):
        h = bounds(seed, kind)
        res = pareto_frontier(adj, s, t, *h, max_routes=2)
        # source: networkx brute force, first two points in cost order
        assert same_points(pairs(res), front[:2])
        assert res.capped == (len(front) > 2) or len(front) == 2
        for max_labels in (1, 3, 8):
            res = pareto_frontier(adj, s, t, *h, max_labels=max_labels)
            got = pairs(res)
            # source: networkx brute force; a prefix, and the whole frontier when not capped
            assert same_points(got, front[: len(got)])
            assert res.capped or len(got) == len(front)
            assert res.labels_expanded <= max_labels
            check_routes(res, table, s, t)


def test_random_sample_is_not_trivial():
    # source: the brute force itself (a guard that the sample exercises real trade-offs)
    sizes = [len(case(seed)[5]) for seed in range(N_RANDOM)]
    assert sum(k >= 3 for k in sizes) >= 80
    assert sum(k >= 5 for k in sizes) >= 30
    assert max(sizes) >= 10
    assert any(k == 0 for k in sizes)  # some targets are unreachable


def test_bounds_reduce_work():
    """From memory of Mandow & Pérez de la Cruz 2010: with consistent bounds, a better informed
    bound never expands more labels (ties aside); checked here in total over the sample."""
    total = {}
    for kind in ("zero", "scaled", "exact"):
        total[kind] = sum(pareto_frontier(case(s)[0], case(s)[3], case(s)[4], *bounds(s, kind))
                          .labels_expanded for s in range(N_RANDOM))
    assert total["exact"] <= total["scaled"] <= total["zero"]


# ---------------------------------------------------------------------------------------------
# edge cases


def test_unreachable_target():
    # 0 -> 1 and 2 -> 3: nothing leads from 0 to 3 (source: networkx finds no simple path)
    adj, g, _table = build(4, [(0, 1, 1.0, 1.0), (2, 3, 1.0, 1.0)])
    assert list(nx.all_simple_paths(g, 0, 3)) == []
    res = pareto_frontier(adj, 0, 3)
    assert res.routes == () and not res.capped
    # with networkx reverse-Dijkstra bounds the source's bound is inf: nothing is even pushed
    res = pareto_frontier(adj, 0, 3, reverse_dijkstra(g, 3, "cost"), reverse_dijkstra(g, 3, "time"))
    assert res.routes == () and not res.capped and res.labels_pushed == 0
    # an edge of infinite weight is unusable (module docstring)
    adj, _g, _table = build(2, [(0, 1, math.inf, 1.0)])
    assert pareto_frontier(adj, 0, 1).routes == ()


def test_source_is_target():
    # the empty route costs nothing (common practice, no source: the empty sum is 0)
    adj, _g, _table = build(3, [(0, 1, 1.0, 1.0), (1, 0, 1.0, 1.0), (1, 2, 2.0, 2.0)])
    res = pareto_frontier(adj, 1, 1, [5.0, 9.0, 0.0], [5.0, 9.0, 0.0])
    assert [(r.cost, r.time, r.nodes, r.edges) for r in res.routes] == [(0.0, 0.0, (1,), ())]
    assert not res.capped


# Five parallel lanes 0 -> 1 and one lane 1 -> 2 (1, 1). Lanes (cost, time): (1, 9), (2, 7), (5, 8)
# (dominated by (4, 5)), (4, 5), (6, 3), (9, 1). Routes 0 -> 2 add (1, 1): the frontier is
# (2, 10), (3, 8), (5, 6), (7, 4), (10, 2) and (6, 9) is dominated by (5, 6).
CAP_LANES = [(0, 1, 6.0, 3.0), (0, 1, 1.0, 9.0), (0, 1, 5.0, 8.0), (0, 1, 9.0, 1.0), (0, 1, 2.0, 7.0),
             (0, 1, 4.0, 5.0), (1, 2, 1.0, 1.0)]


def test_max_routes_cap():
    adj, g, table = build(3, CAP_LANES)
    front = brute_force_frontier(g, 0, 2)
    # source: the hand-worked comment above, and networkx brute force
    assert front == [(2.0, 10.0), (3.0, 8.0), (5.0, 6.0), (7.0, 4.0), (10.0, 2.0)]
    res = pareto_frontier(adj, 0, 2, max_routes=2)
    assert len(res.routes) == 2 and res.capped
    assert all(p in front for p in pairs(res))  # each truly on the frontier (networkx)
    assert pairs(res) == front[:2]  # the cheapest two (module docstring guarantee)
    check_routes(res, table, 0, 2)
    # at exactly five the search ends with nothing left over, so it is not capped
    res = pareto_frontier(adj, 0, 2, max_routes=5)
    assert pairs(res) == front and not res.capped


def test_max_labels_cap():
    adj, g, _table = build(3, CAP_LANES)
    front = brute_force_frontier(g, 0, 2)
    # 1 label: only the source is expanded, no route yet (source: counting by hand)
    res = pareto_frontier(adj, 0, 2, max_labels=1)
    assert res.routes == () and res.capped and res.labels_expanded == 1
    # Counting by hand (zero bounds, queue in lexicographic order of (cost, time)): 1st the
    # source; 2nd (1, 9) at node 1, which pushes (2, 10) at 2; 3rd (2, 7) at 1, as (2, 7) comes
    # before (2, 10); 4th (2, 10) at the target, the first frontier point.
    res = pareto_frontier(adj, 0, 2, max_labels=3)
    assert res.routes == () and res.capped
    res = pareto_frontier(adj, 0, 2, max_labels=4)
    assert pairs(res) == front[:1] and res.capped


def test_ties_keep_the_first_found():
    # 0->1->3 and 0->2->3 both cost (2, 2) (hand-worked). Zero bounds: the label at the node
    # listed first in adj[0] is expanded first and reaches 3 first, so its route is kept.
    lanes = [(0, 1, 1.0, 1.0), (0, 2, 1.0, 1.0), (1, 3, 1.0, 1.0), (2, 3, 1.0, 1.0)]
    adj, _g, _table = build(4, lanes)
    res = pareto_frontier(adj, 0, 3)
    assert [(r.cost, r.time, r.nodes, r.edges) for r in res.routes] == [(2.0, 2.0, (0, 1, 3), (0, 2))]
    adj[0].reverse()
    res = pareto_frontier(adj, 0, 3)
    assert [(r.nodes, r.edges) for r in res.routes] == [((0, 2, 3), (1, 3))]
    # two parallel lanes with equal figures: the one listed first
    adj, _g, _table = build(2, [(0, 1, 3.0, 4.0), (0, 1, 3.0, 4.0)])
    assert [r.edges for r in pareto_frontier(adj, 0, 1).routes] == [(0,)]


def test_rounding_noise_is_one_point():
    # same cost within 1e-9 relative, same time: one point
    adj, _g, _table = build(3, [(0, 2, 0.3, 2.0), (0, 1, 0.1, 1.0), (1, 2, 0.2, 1.0)])
    res = pareto_frontier(adj, 0, 2)
    assert len(res.routes) == 1 and close(res.routes[0].cost, 0.3)
    # same cost within tolerance, better time: only that route (the other is dominated)
    adj, _g, _table = build(3, [(0, 2, 0.3, 2.0), (0, 1, 0.1, 0.5), (1, 2, 0.2, 0.5)])
    res = pareto_frontier(adj, 0, 2)
    assert [(r.nodes, r.time) for r in res.routes] == [((0, 1, 2), 1.0)]
    # The cost the module accumulated for the two-lane route is not the double 0.3 of the
    # one-lane route (IEEE 754 binary64: 0.1 + 0.2 rounds to 0.30000000000000004, from memory),
    # yet within the module's 1e-9 relative tolerance of it: the merge above is the tolerance's
    # doing, not exact equality. If the module summed exactly (decimal, fsum) this would fail
    # and the case above would no longer test the tolerance.
    via = res.routes[0].cost
    assert via != 0.3 and close(via, 0.3)


def test_near_tie_found_later_replaces():
    # Exact bounds at node 1 (remaining 0.2, 0.5, hand-worked) give it f = (0.1 + 0.2, 1.0), a
    # hair above the direct route's (0.3, 2.0), so the direct route is taken first. The route
    # via 1 then arrives with the same cost within tolerance and a better time and replaces it
    # (module docstring: the returned routes never cover one another), also when max_routes = 1
    # (the tie window is finished before stopping).
    adj, _g, _table = build(3, [(0, 2, 0.3, 2.0), (0, 1, 0.1, 0.5), (1, 2, 0.2, 0.5)])
    for max_routes in (1, 50):
        res = pareto_frontier(adj, 0, 2, [0.0, 0.2, 0.0], [0.0, 0.5, 0.0], max_routes=max_routes)
        assert [(r.nodes, r.time) for r in res.routes] == [((0, 1, 2), 1.0)] and not res.capped


def test_zero_weight_cycle():
    # a zero-weight cycle 1 <-> 2 must not loop or duplicate (hand-worked: one route (1, 1))
    adj, g, table = build(4, [(0, 1, 1.0, 0.0), (1, 2, 0.0, 0.0), (2, 1, 0.0, 0.0), (2, 3, 0.0, 1.0)])
    res = pareto_frontier(adj, 0, 3)
    assert pairs(res) == brute_force_frontier(g, 0, 3) == [(1.0, 1.0)]
    check_routes(res, table, 0, 3)


def test_determinism():
    for seed in range(0, N_RANDOM, 10):
        adj, _g, _table, s, t, _front = case(seed)
        h = bounds(seed, "jumpy")
        first = pareto_frontier(adj, s, t, *h)
        again = pareto_frontier([list(a) for a in adj], s, t, list(h[0]), list(h[1]))
        assert first == again  # same input, same routes and counts (module docstring)


def test_bad_input():
    adj, _g, _table = build(2, [(0, 1, -1.0, 1.0)])
    with pytest.raises(ValueError):
        pareto_frontier(adj, 0, 1)
    adj, _g, _table = build(2, [(0, 1, 1.0, 1.0)])
    for kwargs in ({"max_routes": 0}, {"max_labels": 0}, {"h_cost": [0.0]}, {"h_time": [math.nan, 0.0]}):
        with pytest.raises(ValueError):
            pareto_frontier(adj, 0, 1, **kwargs)
    with pytest.raises(ValueError):
        pareto_frontier(adj, 0, 2)

