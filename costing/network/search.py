"""Least-weight routes over a compact network: node ids 0..n-1, out-arcs with non-negative
weights and edge ids, and a lower bound h on the remaining weight. Nothing here knows about
depots, rates or workbooks.

One search routine, `_label_setting`, does every search of the product. The public functions
are its special cases, and the array engine (`costing.network.engine`) calls it too:

    astar(adj, sources, exits, h)        several sources with start weights, several exits with
                                         exit weights, a bound: the best route ("exit" mode)
    one_to_many(adj, sources, targets)   one uniform-cost search serving several targets, ended
                                         when every target's exits are settled ("every" mode)
    dijkstra_all(adj, sources)           least weight to every node (run until the queue is empty)
    engine.SearchEngine                  the same routine over CSR arrays, with the landmark bound
                                         ("every" mode: one target per A*, a group per Dijkstra)

Units. Weights, start weights, exit weights and the bound are all in one unit, the caller's
(the objective's: currency, hours, km or kg CO2e); the routine only adds and compares them.
So weights may be any values that add and compare like numbers under a total order compatible
with addition, with the float 0 and infinity at the ends: `costing.network.lex.Lex` triples
(lexicographic, with a bound on their first part) are such values, and the argument below holds
for them word for word (that module says why); ties of the first part are then broken by the
others.

Correctness
-----------
Weights are non-negative. Several sources are one virtual source joined to each source s by an
arc of its start weight g0(s); in "exit" mode several exits are one virtual end joined from each
exit x by an arc of its exit weight e(x). The routine is Dijkstra's algorithm keyed by
f = g + h. Let h be consistent,

    h(u) <= w(u, v) + h(v) for every arc u->v,   and h(x) <= e(x) at every exit (h(end) = 0),

for example h(x) = 0 at exits. The reduced weight w'(u, v) = w(u, v) - h(u) + h(v) is then
>= 0 on every arc, and a path's reduced weight is its weight minus h at its first node plus h at
its last; so f(v) = g(v) + h(v) is the reduced weight of the best known route to v plus a
constant per source (g0(s) + h(s) on the virtual source's arc, which may have any sign: no route
comes back to the virtual source). Popping the least f is therefore Dijkstra on non-negative
reduced weights, and Dijkstra's invariant holds: when a node is popped for the first time
("settled"), its g is the least weight of any route from the virtual source to it, and it is
never changed again. In particular

* "exit" mode: the virtual end is settled with the least (start + route + exit) weight over all
  sources and exits, which is why the search can stop there; a consistent h with h(exit) = 0 is
  also admissible (never above the true remaining weight);
* "every" mode: each node of the stop set has its least weight once settled, so the search can
  stop when all are (with any consistent h; the product uses h = 0 here, or the target's bound
  when the stop set is that one target); each target's answer is min over its exits of
  g(x) + e(x);
* no ends: every reachable node is settled with its least weight.

With h = 0 this is plain uniform-cost search (Dijkstra).

Pruning. A caller may pass a `cutoff`: a node with h(v) >= cutoff is declared unable to reach
any end and is never queued (the engine's landmark bound gives about 1e300 exactly there; see
`costing.network.engine`). Leaving out nodes that reach no end changes no route to an end, and
the argument above holds on the rest of the network. With the default cutoff (infinity) only a
node whose bound is infinite is left out.

Routes and ties. Every queue entry carries a counter, so entries of equal f leave the queue in
push order, and pushes follow the adjacency order: the same network gives the same route every
time. The parent of a node v is, by default, the node whose relaxation first gave v its final g
(a later equal offer does not replace it; among parallel arcs the first in the row); with
`lowest_parent` it is, among the settled nodes offering exactly v's final g, the one with the
smallest id (the array engine's rule, which makes its three strategies return the same route;
see `costing.network.engine`). Either way the parent u is settled and g(u) + w(u, v) = g(v) bit
for bit, so walking the parents back from an end gives a route whose weight is exactly the g
the search computed, and the arc taken from u is the first of u's arcs to v with that weight.

The array engine. Its A* and its one-to-many Dijkstra are this routine ("every" mode, the
lowest-parent rule, cutoff HUGE) over the engine's CSR rows, with the landmark bound that
`costing.network.engine` proves consistent (and 0 at the target). So the argument above covers
the engine's routes too; its third strategy is a compiled Dijkstra (scipy) followed by a
reconstruction of the lowest-parent tree, which the engine's docstring shows gives the same routes.

Statistics: `settled` counts the network nodes settled (the virtual end is not one), `pushed`
the entries put on the queue (sources, improved labels and offers to the virtual end).
"""

from __future__ import annotations

import heapq
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass

Adjacency = Sequence[Sequence[tuple[int, float, int]]]
Bound = Sequence[float] | Callable[[int], float] | None

INF = float("inf")


@dataclass(frozen=True)
class SearchStats:
    settled: int = 0  # nodes popped with their final weight
    pushed: int = 0  # entries put on the priority queue

    def __add__(self, other: SearchStats) -> SearchStats:
        return SearchStats(self.settled + other.settled, self.pushed + other.pushed)


@dataclass(frozen=True)
class SearchResult:
    found: bool
    weight: float  # total weight of the route, the caller's unit (inf when not found)
    nodes: tuple[int, ...]  # source .. target
    edges: tuple[int, ...]  # edge ids, one per step
    stats: SearchStats


NOT_FOUND = (False, INF, (), ())


class Arcs:
    """The out-arcs of nodes 0..n-1 as the search routine reads them.

    For node u, ``heads[u]`` and ``weights[u]`` are parallel tuples (head node ids, arc weights);
    a row may be None until it is first needed, and ``load(u)`` then fills both and returns
    ``heads[u]``. ``edge(u, i)`` is the caller's edge id of the i-th arc of u. The object also
    keeps the routine's work arrays between searches (so one Arcs must not be searched from two
    threads at once). Build it with `from_rows`, or as the array engine does from CSR arrays.
    """

    __slots__ = ("n", "heads", "weights", "load", "edge", "_work", "_busy")

    def __init__(self, n: int, heads: list, weights: list, load: Callable[[int], tuple],
                 edge: Callable[[int, int], int]):
        self.n = n
        self.heads = heads
        self.weights = weights
        self.load = load
        self.edge = edge
        self._work: tuple | None = None
        self._busy = False

    @classmethod
    def from_rows(cls, adj: Adjacency) -> Arcs:
        """From ``adj[u] = [(head, weight, edge id), ...]`` (rows split the first time a search
        reads them; `adj` must not change afterwards)."""
        n = len(adj)
        heads: list = [None] * n
        weights: list = [None] * n

        def load(u: int) -> tuple:
            row = adj[u]
            if row:
                hu, wu, _e = zip(*row)
            else:
                hu = wu = ()
            heads[u], weights[u] = hu, wu
            return hu

        def edge(u: int, i: int) -> int:
            return adj[u][i][2]

        return cls(n, heads, weights, load, edge)

    def _acquire(self) -> tuple:
        """Work arrays of n + 1 entries (the last is the virtual end): g = inf, done = 0
        everywhere; parents and cached bounds hold leftovers that the routine overwrites
        before it reads them."""
        if self._busy or self._work is None:
            size = self.n + 1
            work = ([INF] * size, [-1] * size, [0.0] * size, bytearray(size))
            if self._busy:
                return work  # a search inside a search (a bound that searches): its own arrays
            self._work = work
        self._busy = True
        return self._work

    def _release(self, work: tuple) -> None:
        if work is self._work:
            self._busy = False


def _arcs(adj: Adjacency | Arcs) -> Arcs:
    return adj if isinstance(adj, Arcs) else Arcs.from_rows(adj)


def _label_setting(arcs: Arcs, starts: Iterable[tuple[int, float]],
                   ends: Sequence[Mapping[int, float]] = (), bound: Bound = None, *,
                   until: str = "exit", cutoff: float = INF, lowest_parent: bool = False,
                   relax_last: bool = False) -> tuple[list[tuple], SearchStats, list[float] | None]:
    """The one search routine (module docstring: correctness, ties, statistics).

    Parameters
    ----------
    arcs : Arcs
        Out-arcs with non-negative weights (caller's unit).
    starts : iterable of (node id, start weight)
        Sources; a node given twice keeps its smaller start weight.
    ends : sequence of mappings node id -> exit weight
        The targets. ``until="exit"``: exactly one mapping; the search ends when the best
        (route + exit weight) over its exits is settled. ``until="every"``: the search ends
        when every exit node of every mapping is settled. ``until="all"``: ignored; the search
        runs until the queue is empty.
    bound : sequence indexed by node id, callable node id -> float, or None
        A consistent lower bound on the remaining weight (caller's unit), 0 at exits; None is 0.
    cutoff : float
        Nodes with bound >= cutoff are taken to reach no end and are never queued.
    lowest_parent : bool
        Among equal-weight offers, the smallest parent id wins (default: the first offer).
    relax_last : bool
        ``until="every"``: relax the arcs of the node that completes the stop set before ending
        (changes only `pushed`; `one_to_many` has always counted those pushes).

    Returns
    -------
    routes : list of (found, weight, nodes, edges)
        One per mapping of `ends` (empty for ``until="all"``): nodes from a source to the
        chosen exit, the caller's edge ids, weight = start + route + exit weights.
    stats : SearchStats
    weights : list of float or None
        ``until="all"``: the least weight from the sources to every node (inf where
        unreachable); else None.
    """
    bounded = bound is not None
    if not bounded:
        h = None  # h = 0, never evaluated
    elif callable(bound):
        h = bound
    else:
        h = bound.__getitem__
    n = arcs.n
    end = n  # the virtual end's id ("exit" mode)
    exit_mode = until == "exit"
    if exit_mode:
        if len(ends) != 1:
            raise ValueError("until='exit' takes exactly one mapping of exits")
        waiting: dict | set = dict(ends[0])
        waiting[end] = 0.0
    elif until == "every":
        waiting = set()
        for t in ends:
            waiting.update(t)
    elif until == "all":
        waiting = set()
    else:
        raise ValueError(f"until must be 'exit', 'every' or 'all', not {until!r}")
    heads, weights, load = arcs.heads, arcs.weights, arcs.load
    work = arcs._acquire()
    g, par, hc, done = work
    touched: list[int] = []  # every entry of g or done changed, reset at the end
    heap: list[tuple[float, int, int]] = []
    counter = 0
    settled = 0
    try:
        for s, g0 in starts:
            if g[s] == INF:
                if done[s]:
                    continue  # already left out by the cutoff
                touched.append(s)
                if bounded:
                    hs = h(s)
                    if not hs < cutoff:
                        done[s] = 1
                        continue
                    hc[s] = hs
            if g0 < g[s]:
                g[s] = g0
                par[s] = -1
                counter += 1
                heap.append((g0 + hc[s] if bounded else g0, counter, s))
        heapq.heapify(heap)
        if until == "every" and not waiting:
            heap.clear()  # nothing to wait for
        last = False
        push, pop = heapq.heappush, heapq.heappop
        while heap:
            _f, _c, u = pop(heap)
            if done[u]:
                continue  # a stale entry: u was settled through a better one
            done[u] = 1
            settled += 1
            if u in waiting:
                if exit_mode:
                    if u == end:
                        settled -= 1  # the virtual end is not a network node
                        break
                    gx = g[u] + waiting[u]
                    if gx < g[end]:
                        if g[end] == INF:
                            touched.append(end)
                        g[end] = gx
                        par[end] = u
                        counter += 1
                        push(heap, (gx, counter, end))
                else:
                    waiting.discard(u)
                    if not waiting:
                        if not relax_last:
                            break
                        last = True
            gu = g[u]
            hu = heads[u]
            if hu is None:
                hu = load(u)
            for v, w in zip(hu, weights[u]):
                gv = gu + w
                gold = g[v]
                if gv < gold:
                    if done[v]:
                        continue  # settled nodes are final (never reopened)
                    if not bounded:
                        if gold == INF:
                            touched.append(v)
                        key = gv
                    elif gold == INF:
                        touched.append(v)
                        hv = h(v)
                        if not hv < cutoff:
                            done[v] = 1  # v reaches no end: never queue it
                            continue
                        hc[v] = hv
                        key = gv + hv
                    else:
                        key = gv + hc[v]
                    g[v] = gv
                    par[v] = u
                    counter += 1
                    push(heap, (key, counter, v))
                elif gv == gold and lowest_parent and u < par[v] and not done[v]:
                    par[v] = u  # equal weight: the smaller parent id wins
            if last:
                break
        stats = SearchStats(settled, counter)
        if until == "all":
            return [], stats, g[:n]
        routes = []
        if exit_mode:
            if done[end]:
                nodes, edges = _walk_back(arcs, g, par, par[end])
                routes.append((True, g[end], nodes, edges))
            else:
                routes.append(NOT_FOUND)
            return routes, stats, None
        for t in ends:
            best, best_node = INF, -1
            for x, exit_w in t.items():  # the first exit in mapping order wins ties
                if done[x] and g[x] + exit_w < best:
                    best, best_node = g[x] + exit_w, x
            if best_node < 0:
                routes.append(NOT_FOUND)
            else:
                nodes, edges = _walk_back(arcs, g, par, best_node)
                routes.append((True, best, nodes, edges))
        return routes, stats, None
    finally:
        for v in touched:
            g[v] = INF
            done[v] = 0
        arcs._release(work)


def _walk_back(arcs: Arcs, g: list[float], par: list[int], last: int) -> tuple[tuple, tuple]:
    """The route to `last` as (nodes, edge ids), from the parents the search recorded: from each
    parent u the first arc to v with g(u) + w = g(v) (the arc the search took)."""
    heads, weights, edge = arcs.heads, arcs.weights, arcs.edge
    nodes, edges = [last], []
    v = last
    u = par[v]
    while u != -1:
        hu, wu, gu, gv = heads[u], weights[u], g[u], g[v]
        i = hu.index(v)
        while gu + wu[i] != gv:
            i = hu.index(v, i + 1)
        edges.append(edge(u, i))
        nodes.append(u)
        v = u
        u = par[v]
    nodes.reverse()
    edges.reverse()
    return tuple(nodes), tuple(edges)


def astar(adj: Adjacency | Arcs, source: int | Sequence[tuple[int, float]],
          target: int | Mapping[int, float], h: Bound = None) -> SearchResult:
    """Least-weight route from the sources to the exits (A*).

    Several sources and exits are one virtual source and one virtual end joined to them by arcs
    of their start and exit weights (module docstring), so the optimality argument holds as for
    one source and one target.

    Parameters
    ----------
    adj : sequence of rows ``[(head, weight, edge id), ...]`` per node, or Arcs
        Weights non-negative, in the caller's unit (currency, hours, km or kg CO2e). Passing the
        same `Arcs` to many searches reuses its split rows and work arrays.
    source : int or sequence of (node id, start weight)
        One node (start weight 0), or several with the weight paid before the first arc.
    target : int or mapping node id -> exit weight
        One node (exit weight 0), or several exits: the route ends at one of them and pays its
        exit weight.
    h : sequence indexed by node id, callable node id -> float, or None
        Consistent lower bound on the remaining weight, same unit, 0 at the exits; None for
        uniform-cost search.

    Returns
    -------
    SearchResult
        `weight` includes the start and exit weights (inf when no route); `nodes` run from a
        source to an exit, `edges` are the edge ids of the steps (the virtual ends excluded).
    """
    starts = [(source, 0.0)] if isinstance(source, int) else source
    exits = {target: 0.0} if isinstance(target, int) else target
    routes, stats, _ = _label_setting(_arcs(adj), starts, (exits,), h, until="exit")
    return SearchResult(*routes[0], stats)


def dijkstra_all(adj: Adjacency | Arcs, source: int | Sequence[tuple[int, float]]) -> list[float]:
    """Least weight from `source` to every node, for the reverse-search checks of the bound, for
    reachability reports and for exact bounds (a reverse search from a target's exits).

    Parameters
    ----------
    adj : sequence of rows ``[(head, weight, edge id), ...]`` per node, or Arcs
        Non-negative weights, caller's unit.
    source : int or sequence of (node id, start weight)
        One node (start weight 0), or several with the weight paid before the first arc (as in
        `astar`: one virtual source joined to each by an arc of its start weight).

    Returns
    -------
    list of float
        Indexed by node id, the caller's unit: the least (start + route) weight; inf where no
        source reaches.
    """
    starts = ((source, 0.0),) if isinstance(source, int) else source
    _routes, _stats, weights = _label_setting(_arcs(adj), starts, until="all")
    return weights


def one_to_many(adj: Adjacency | Arcs, source: Sequence[tuple[int, float]],
                targets: Sequence[Mapping[int, float]]) -> list[SearchResult]:
    """One uniform-cost search from the sources that serves several targets.

    It stops once every exit node of every target is settled, so each target's least weight is
    min over its exits of g(exit) + exit weight, exactly what `astar` returns for it alone (the
    settled g values are final: module docstring, with h = 0).

    Parameters
    ----------
    adj : sequence of rows ``[(head, weight, edge id), ...]`` per node, or Arcs
        Non-negative weights, caller's unit.
    source : sequence of (node id, start weight)
    targets : sequence of mappings exit node id -> exit weight, as `astar`'s target

    Returns
    -------
    list of SearchResult
        One per target, in order; weights include start and exit weights. Statistics are the
        whole search's: each result carries the same counts.
    """
    routes, stats, _ = _label_setting(_arcs(adj), source, targets, until="every", relax_last=True)
    return [SearchResult(*r, stats) for r in routes]
