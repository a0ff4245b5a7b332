"""Bi-objective search: the Pareto frontier of routes on two non-negative criteria (cost, time)
from one source to one target. Node ids 0..n-1, an adjacency list of (head, cost, time, edge id),
and optional lower bounds per node and criterion. Nothing here knows about depots or rates.

The method is multi-objective A* in the form of NAMOA*: L. Mandow and J. L. Pérez de la Cruz,
"Multiobjective A* search with consistent heuristics", Journal of the ACM 57(5), 2010 (the
algorithm first appeared in their IJCAI 2005 paper "A new approach to multiobjective A* search").

Dominance. A route's value is the pair (cost, time). Pair a dominates pair b when a is no worse
in both criteria and better in at least one; a covers b ("weakly dominates") when a is no worse
in both. The frontier is the set of pairs no route dominates, with one route kept per pair.

Labels. A label is one partial route from the source: its node, g = (cost, time) so far, and a
pointer to the label it extends. Each node keeps one set of labels, open (waiting on the queue)
and closed (expanded), in which no label covers another; it is a staircase, sorted by cost
ascending with time strictly descending, so a check is a binary search. The queue orders open
labels lexicographically by f = g + h (cost first, then time), ties by the order in which they
were pushed. h = (h_cost, h_time) are the lower bounds on the remaining cost and time.

One step: take the lexicographically least open label. If a solution (a target label taken
earlier) covers its f, drop it. If it is at the target, its g is a new frontier point (f = g
there). Otherwise extend it along every edge; a new label is dropped when a label of its node
covers its g, or when a solution covers its f; otherwise it removes the labels of its node that
it covers (open or closed: with bounds that are admissible but not consistent a closed label can
be beaten later) and joins the queue.

Why the pruning is exact, with non-negative weights and bounds that never exceed the least
remaining cost (resp. time) to the target ("admissible"):
  * Same node: whatever suffix completes a covered label g' also completes the covering label g,
    and g + suffix covers g' + suffix; so nothing on the frontier is lost.
  * Bounds: every completion of a label costs at least f = g + h in both criteria. If a solution
    C covers f, it covers every completion, so none of them can be a new frontier point.
  * Order: if a not-yet-found route P* dominated a target label C taken from the queue, then (by
    induction along P*, as in the admissibility proof of NAMOA*) some open label on a route at
    least as good as P* has f <= P* <= C componentwise, which is lexicographically smaller than
    C, so it would have been taken first. Hence every frontier point is final when found, and
    frontier points are found in increasing order of cost: a point of cost c has an open
    representative with f_cost <= c that is taken before any target label of larger cost.
With h = 0 this is a plain bi-objective label-setting search (multi-objective Dijkstra). A
bound of inf at a node (the target is unreachable from it) drops every label there. Negative
bounds are raised to 0 (still admissible since weights are non-negative), and the target's bound
is taken as 0. An edge whose cost or time is inf is unusable and skipped.

Guarantees.
  * Not capped (capped=False): routes is the whole frontier, one route per non-dominated pair,
    sorted by cost ascending (so time descending); no route covers another.
  * Capped by max_routes: the routes are the max_routes frontier points of least cost (the
    prefix of the full frontier in cost order), each truly on the frontier.
  * Capped by max_labels: the routes found so far, again a prefix of the frontier in cost order
    (possibly empty), each truly on the frontier.
  capped=True means the search stopped with live labels left, so more points may exist (it can
  also be set when the frontier happened to be complete); capped=False means it is complete.
  These hold in exact arithmetic. Floating-point sums along different routes can differ in the
  last bits, so values within 1e-9 relative are treated as equal (`REL_TOL`): two routes whose
  costs and times agree that closely are one point, and a route better by less than that is not
  told apart. When the max_routes cap is reached the search continues through the labels whose
  f cost ties the last point within the tolerance, so a near-tie found a little later can still
  replace it; the returned routes never cover one another.
  Ties: for routes with the same pair, the one whose target label is taken first is kept; that
  order depends only on the adjacency order, so the same input gives the same result every time.
  Routes are simple paths: a cycle returns to a node with a g covered by the label it left from.

Complexity. Let L be the number of labels created (each is a simple route from the source that
no label of its node covered when it was made; L is at most the number of such routes). Each
label costs O(log L) on the heap and, per outgoing edge, O(log k) to test against a node
staircase of size k plus O(k) to insert into it (list insertion). L can grow exponentially with
the network size, as the frontier itself can (P. Hansen, "Bicriterion path problems", 1980),
hence the two caps. Memory is O(L): rows are read and staircases made only for the nodes labels
reach, so a query costs nothing proportional to the network beyond its bounds.

`FrontierNetwork` is the form the product uses: one network, many queries from sources with
start weights to exits with exit weights (one virtual source and end, as in the search core),
with exact bounds from two reverse searches of the search core per set of exits, cached.
"""

from __future__ import annotations

import heapq
import math
from bisect import bisect_left, bisect_right
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

Adjacency = Sequence[Sequence[tuple[int, float, float, int]]]

REL_TOL = 1e-9  # values within this relative difference are equal

_OPEN, _CLOSED, _DEAD = 0, 1, 2


@dataclass(frozen=True)
class ParetoRoute:
    cost: float
    time: float
    nodes: tuple[int, ...]  # source .. target
    edges: tuple[int, ...]  # edge ids, one per step


@dataclass(frozen=True)
class ParetoResult:
    routes: tuple[ParetoRoute, ...]  # sorted by cost ascending (time descending); none covers another
    capped: bool  # True when max_routes or max_labels stopped the search with live labels left
    labels_expanded: int  # labels taken from the queue and processed (target labels included)
    labels_pushed: int  # labels put on the queue (the source label included)


def _leq(a: float, b: float) -> bool:
    """a <= b within the tolerance, for finite non-negative a and b."""
    return a <= b or a - b <= REL_TOL * a


def _covered(costs: list[float], times: list[float], c: float, t: float) -> bool:
    """Whether some entry of a staircase covers (c, t). In a staircase the entries' costs
    differ pairwise by more than the tolerance and times strictly fall, so only two entries can
    matter: the last with cost <= c (the least time among those) and the next, whose cost may
    equal c within the tolerance."""
    i = bisect_right(costs, c)
    if i and _leq(times[i - 1], t):
        return True
    return i < len(costs) and _leq(costs[i], c) and _leq(times[i], t)


def _insert(costs: list[float], times: list[float], ids: list[int], c: float, t: float,
            lid: int) -> list[int]:
    """Put (c, t) into a staircase that does not cover it; remove and return the ids of the
    entries it covers (a contiguous run: costs >= c within tolerance, times >= t)."""
    start = bisect_left(costs, c)
    if start and _leq(c, costs[start - 1]) and _leq(t, times[start - 1]):
        start -= 1  # an entry of cost just below c (equal within tolerance) and no better time
    end = start
    while end < len(costs) and _leq(t, times[end]):
        end += 1
    removed = ids[start:end]
    costs[start:end] = [c]
    times[start:end] = [t]
    ids[start:end] = [lid]
    return removed


def _bounds(h: Sequence[float] | None, n: int, target: int, name: str) -> list[float]:
    if h is None:
        return [0.0] * n
    if len(h) != n:
        raise ValueError(f"{name} has {len(h)} entries for {n} nodes")
    out = []
    for v, x in enumerate(h):
        x = float(x)
        if math.isnan(x):
            raise ValueError(f"{name}[{v}] is NaN")
        out.append(x if x > 0.0 else 0.0)
    out[target] = 0.0
    return out


def pareto_frontier(adj: Adjacency, source: int, target: int,
                    h_cost: Sequence[float] | None = None, h_time: Sequence[float] | None = None,
                    max_routes: int = 50, max_labels: int = 200_000) -> ParetoResult:
    """The Pareto frontier of (cost, time) over routes from source to target.

    `adj[u]` lists (v, cost, time, edge id) for the edges out of u; weights must be >= 0 (inf
    means unusable). `h_cost`/`h_time` are lower bounds on the remaining cost/time per node
    (sequences indexed by node id, or None for 0); they must be admissible for the result to
    be exact. At most `max_routes` routes are returned and at most `max_labels` labels expanded;
    hitting either sets capped=True (see the module docstring for what is then guaranteed)."""
    n = len(adj)
    if not (0 <= source < n and 0 <= target < n):
        raise ValueError(f"source {source} or target {target} is not a node id in 0..{n - 1}")
    _check_caps(max_routes, max_labels)
    hc = _bounds(h_cost, n, target, "h_cost")
    ht = _bounds(h_time, n, target, "h_time")
    return _search(adj, source, target, hc, ht, max_routes, max_labels)


def _check_caps(max_routes: int, max_labels: int) -> None:
    if max_routes < 1 or max_labels < 1:
        raise ValueError("max_routes and max_labels must be at least 1")


def _search(adj, source: int, target: int, hc: Sequence[float], ht: Sequence[float],
            max_routes: int, max_labels: int) -> ParetoResult:
    """The search of the module docstring. `adj[u]` is read only for the nodes labels reach,
    and a node's staircase is made when its first label is, so the work is proportional to the
    labels, not to the network. `hc`/`ht` are indexable by every node id `adj` leads to, >= 0
    (inf where the target is unreachable), 0 at the target."""
    # labels, by id: g pair, node, parent label id (-1 at the source), edge id, state
    l_cost: list[float] = []
    l_time: list[float] = []
    l_node: list[int] = []
    l_parent: list[int] = []
    l_edge: list[int] = []
    l_state: list[int] = []
    # per node reached: the staircase (costs, times, label ids) of its open and closed labels
    stairs: dict[int, tuple[list[float], list[float], list[int]]] = {}
    # the solutions (target labels taken), as a staircase
    sol_cost: list[float] = []
    sol_time: list[float] = []
    sol_id: list[int] = []

    heap: list[tuple[float, float, int]] = []
    push, pop = heapq.heappush, heapq.heappop
    expanded = 0
    capped = False
    full = False  # max_routes solutions held: finish the tolerance tie window, then stop
    last_cost = 0.0
    inf = math.inf

    if hc[source] == inf or ht[source] == inf:
        return ParetoResult((), False, 0, 0)
    l_cost.append(0.0)
    l_time.append(0.0)
    l_node.append(source)
    l_parent.append(-1)
    l_edge.append(-1)
    l_state.append(_OPEN)
    stairs[source] = ([0.0], [0.0], [0])
    heap.append((hc[source], ht[source], 0))

    while heap:
        fc, ft, lid = pop(heap)
        if l_state[lid] != _OPEN:
            continue  # removed from its node's set by a label that covers it
        if sol_id and _covered(sol_cost, sol_time, fc, ft):
            l_state[lid] = _CLOSED  # filtered; it stays in its node's set as a witness
            continue
        if (full and not _leq(fc, last_cost)) or expanded >= max_labels:
            capped = True
            break
        l_state[lid] = _CLOSED
        expanded += 1
        u = l_node[lid]
        gc, gt = l_cost[lid], l_time[lid]
        if u == target:
            if full:
                i = bisect_left(sol_cost, gc)
                near = [j for j in (i - 1, i) if 0 <= j < len(sol_cost)]
                if not any(_leq(gc, sol_cost[j]) and _leq(gt, sol_time[j]) for j in near):
                    capped = True  # would be a point beyond the cap (not expected: see docstring)
                    break
            _insert(sol_cost, sol_time, sol_id, gc, gt, lid)
            if len(sol_id) >= max_routes:
                full = True
                last_cost = gc
            continue
        for v, wc, wt, e in adj[u]:
            if not (wc >= 0.0 and wt >= 0.0):
                raise ValueError(f"edge {e} ({u}->{v}) has a negative or NaN weight ({wc}, {wt})")
            if wc == inf or wt == inf:
                continue
            hv_c, hv_t = hc[v], ht[v]
            if hv_c == inf or hv_t == inf:
                continue
            c2, t2 = gc + wc, gt + wt
            f2c, f2t = c2 + hv_c, t2 + hv_t
            if sol_id and _covered(sol_cost, sol_time, f2c, f2t):
                continue
            st = stairs.get(v)
            if st is None:
                st = stairs[v] = ([], [], [])
            elif _covered(st[0], st[1], c2, t2):
                continue
            new = len(l_cost)
            for old in _insert(st[0], st[1], st[2], c2, t2, new):
                l_state[old] = _DEAD
            l_cost.append(c2)
            l_time.append(t2)
            l_node.append(v)
            l_parent.append(lid)
            l_edge.append(e)
            l_state.append(_OPEN)
            push(heap, (f2c, f2t, new))

    routes = []
    for lid in sol_id:
        nodes = [l_node[lid]]
        edges = []
        k = lid
        while l_parent[k] >= 0:
            edges.append(l_edge[k])
            k = l_parent[k]
            nodes.append(l_node[k])
        nodes.reverse()
        edges.reverse()
        routes.append(ParetoRoute(l_cost[lid], l_time[lid], tuple(nodes), tuple(edges)))
    return ParetoResult(tuple(routes), capped, expanded, len(l_cost))


class _Rows:
    """A network's rows with a virtual source (id n: arcs of the start weights) and a virtual end
    (id n + 1, no arcs) joined from each exit by an arc of its exit weights (edge id -1), listed
    after the exit's own arcs. Built per query from the sources and exits only."""

    __slots__ = ("adj", "extra")

    def __init__(self, adj: Adjacency, starts, exits):
        n = len(adj)
        self.adj = adj
        self.extra = {n: [(v, c0, t0, -1) for v, c0, t0 in starts], n + 1: ()}
        for x, (ce, te) in exits.items():
            self.extra[x] = list(adj[x]) + [(n + 1, ce, te, -1)]

    def __getitem__(self, u: int):
        row = self.extra.get(u)
        return self.adj[u] if row is None else row


class FrontierNetwork:
    """One network searched for many frontiers, each from sources with start weights to exits
    with exit weights, with exact bounds.

    The bounds. For a set of exits, h_cost(v) is the least cost of any route from v to an exit
    plus that exit's cost weight, and h_time(v) the same in time, each computed by one reverse
    search from the exits, their exit weights as start weights, over the reversed arcs: by
    scipy's compiled Dijkstra (`_compiled_all`, the way the array engine computes its landmark
    tables) from a virtual node joined to each exit by an arc of its exit weight, or with
    ``compiled = False`` by the search core (`costing.network.search.dijkstra_all`). Both
    compute the same floats (tested equal): each node's value is the least, over its reversed
    in-arcs, of the float sum exit weight + w1 + w2 + ... added in the same order from the exit.
    A remaining route's cost is at least its least cost, so both are admissible; they are also
    consistent, h(u) <= w(u, v) + h(v), being least weights (the triangle inequality of shortest
    paths), and inf exactly where no exit is reachable, which drops those labels. So the module's
    guarantees hold, and no label is kept that cannot reach an exit. The bounds are cached per key
    (the caller's name for the set of exits, e.g. the destination), up to about
    ``BOUND_ENTRIES`` node entries in all; past that the cache starts again.

    Per query the work is the two reverse searches (none when the key is cached) and the labels:
    the sources and exits are joined by a virtual source and end (`_Rows`) without copying the
    network, and staircases are made for the nodes labels reach only.

    Parameters
    ----------
    adj : sequence of rows ``[(head, cost, time, edge id), ...]`` per node
        Non-negative weights (cost in the caller's money unit, time in hours, or any two units);
        inf marks an unusable edge. Must not change afterwards.
    """

    BOUND_ENTRIES = 2_000_000
    compiled = True  # bounds by scipy's compiled search (`_compiled_all`); False: the search core

    def __init__(self, adj: Adjacency):
        from costing.network.search import Arcs

        self.adj = adj
        self.n = n = len(adj)
        rev_c: list[list[tuple[int, float, int]]] = [[] for _ in range(n)]
        rev_t: list[list[tuple[int, float, int]]] = [[] for _ in range(n)]
        for u, row in enumerate(adj):
            for v, wc, wt, e in row:
                if not (wc >= 0.0 and wt >= 0.0):
                    raise ValueError(f"edge {e} ({u}->{v}) has a negative or NaN weight ({wc}, {wt})")
                rev_c[v].append((u, wc, e))
                rev_t[v].append((u, wt, e))
        self._reverse = (Arcs.from_rows(rev_c), Arcs.from_rows(rev_t))
        self._csr = (_reverse_csr(rev_c), _reverse_csr(rev_t))
        self._bounds: dict = {}
        self.reverse_searches = 0  # statistics: reverse searches run for bounds

    def bounds(self, exits: Mapping[int, tuple[float, float]], key=None) -> tuple[list[float], list[float]]:
        """(h_cost, h_time): the exact least remaining cost and time to the exits (exit weights
        included) for every node, and 0 at the two virtual nodes n and n + 1; cached by `key`
        (None: not cached)."""
        from costing.network.search import dijkstra_all

        got = self._bounds.get(key) if key is not None else None
        if got is not None:
            return got
        if self.compiled:
            hc = _compiled_all(self._csr[0], [(x, ce) for x, (ce, _te) in exits.items()])
            ht = _compiled_all(self._csr[1], [(x, te) for x, (_ce, te) in exits.items()])
        else:
            rc, rt = self._reverse
            hc = dijkstra_all(rc, [(x, ce) for x, (ce, _te) in exits.items()])
            ht = dijkstra_all(rt, [(x, te) for x, (_ce, te) in exits.items()])
        hc += (0.0, 0.0)
        ht += (0.0, 0.0)
        self.reverse_searches += 2
        if key is not None:
            if (len(self._bounds) + 1) * self.n > self.BOUND_ENTRIES:
                self._bounds.clear()
            self._bounds[key] = (hc, ht)
        return hc, ht

    def frontier(self, starts: Sequence[tuple[int, float, float]], exits: Mapping[int, tuple[float, float]],
                 key=None, max_routes: int = 50, max_labels: int = 200_000) -> ParetoResult:
        """The frontier of (start + route + exit) cost and time over routes from a source to an
        exit, with the exact bounds (cached by `key`, the name of this set of exits).

        Parameters
        ----------
        starts : sequence of (node id, start cost, start time)
        exits : mapping node id -> (exit cost, exit time)
        key : hashable or None
            Names the set of exits (with its weights) for the bound cache.
        max_routes, max_labels : int
            The caps of `pareto_frontier`.

        Returns
        -------
        ParetoResult
            As `pareto_frontier`'s, with each route's nodes from a source to an exit and its
            edges the network's edge ids (the virtual arcs left out); cost and time include the
            start and exit weights.
        """
        _check_caps(max_routes, max_labels)
        n = self.n
        hc, ht = self.bounds(exits, key)
        res = _search(_Rows(self.adj, starts, exits), n, n + 1, hc, ht, max_routes, max_labels)
        routes = tuple(ParetoRoute(r.cost, r.time, r.nodes[1:-1], r.edges[1:-1]) for r in res.routes)
        return ParetoResult(routes, res.capped, res.labels_expanded, res.labels_pushed)


def _reverse_csr(rows: list[list[tuple[int, float, int]]]) -> tuple:
    """(indptr, heads, weights) of reversed rows as CSR arrays with one row more for a virtual
    source (empty here), keeping the least weight of parallel arcs (scipy would add them up) and
    leaving out unusable (inf) arcs, which can lower no bound."""
    import numpy as np

    n = len(rows)
    tail = np.repeat(np.arange(n, dtype=np.int64), [len(r) for r in rows])
    flat = [(v, w) for r in rows for v, w, _e in r]
    head = np.array([v for v, _w in flat], dtype=np.int64)
    weight = np.array([w for _v, w in flat], dtype=float)
    keep = np.isfinite(weight)
    tail, head, weight = tail[keep], head[keep], weight[keep]
    order = np.lexsort((weight, head, tail))
    tail, head, weight = tail[order], head[order], weight[order]
    first = np.ones(tail.size, dtype=bool)
    first[1:] = (tail[1:] != tail[:-1]) | (head[1:] != head[:-1])
    tail, head, weight = tail[first], head[first], weight[first]
    indptr = np.zeros(n + 2, dtype=np.int64)
    np.cumsum(np.bincount(tail, minlength=n), out=indptr[1:n + 1])
    indptr[n + 1] = indptr[n]
    return indptr, head, weight


def _compiled_all(csr: tuple, starts: list[tuple[int, float]]) -> list[float]:
    """`dijkstra_all` of the search core, by scipy: least (start + route) weight from the
    `starts` (node, start weight) to every node of the CSR arrays of `_reverse_csr`, through a
    virtual node n whose arcs are the start weights; inf where none reaches."""
    import numpy as np
    from scipy.sparse import csr_matrix
    from scipy.sparse.csgraph import dijkstra

    indptr, head, weight = csr
    n = indptr.size - 2
    best: dict[int, float] = {}
    for x, w in starts:  # a node listed twice starts at its least weight; inf starts nowhere
        if w < best.get(x, math.inf):
            best[x] = w
    ptr = indptr.copy()
    ptr[n + 1] += len(best)
    g = csr_matrix((np.concatenate([weight, np.fromiter(best.values(), float, len(best))]),
                    np.concatenate([head, np.fromiter(best.keys(), np.int64, len(best))]), ptr),
                   shape=(n + 1, n + 1))
    return dijkstra(g, directed=True, indices=n)[:n].tolist()
