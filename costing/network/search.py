"""A* over a compact network: node ids 0..n-1, an adjacency list of (head, weight, edge id),
and a lower bound h on the remaining weight. Nothing here knows about depots or rates.

Correctness, in brief. Weights are non-negative. If h is consistent,
    h(u) <= w(u, v) + h(v) for every edge u->v, and h(target) = 0,
then the key f = g + h along any path never decreases, so the first time a node is popped its
g is the least weight from the source (it is "settled"), and the route to the target is optimal
when the target is popped. A consistent h with h(target) = 0 is also admissible (never above the
true remaining weight). With h = 0 this is plain uniform-cost search (Dijkstra).

Ties on f are broken by the order in which entries were pushed, which depends only on the
adjacency order, so the same network gives the same route every time.

One core. `_label_setting` is the only search loop of this module: several sources with start
weights, optional exits with exit weights (joined to one virtual target), a bound, and an
optional stop set. `astar` is the core with exits and a bound, stopped when the virtual target
is settled; `one_to_many` is the core with h = 0 and a stop set (the exits of every target),
stopped when the set is empty; `dijkstra_all` is the core with neither, run until the queue is
empty. The argument above covers all three: each returns g values of settled nodes only, and a
settled node's g is final. (Stopping early never changes a settled g; it only leaves nodes
unsettled, whose g is then not used.)
"""

from __future__ import annotations

import heapq
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

Adjacency = Sequence[Sequence[tuple[int, float, int]]]


@dataclass(frozen=True)
class SearchStats:
    settled: int = 0  # nodes popped with their final weight
    pushed: int = 0  # entries put on the priority queue

    def __add__(self, other: SearchStats) -> SearchStats:
        return SearchStats(self.settled + other.settled, self.pushed + other.pushed)


@dataclass(frozen=True)
class SearchResult:
    found: bool
    weight: float  # total weight of the route (inf when not found)
    nodes: tuple[int, ...]  # source .. target
    edges: tuple[int, ...]  # edge ids, one per step
    stats: SearchStats


def _label_setting(adj: Adjacency, starts: Sequence[tuple[int, float]],
                   bound: Callable[[int], float] | None = None,
                   exits: Mapping[int, float] | None = None,
                   stop: set[int] | None = None):
    """The search core: label-setting from several sources, least key g + h first.

    Parameters
    ----------
    adj : sequence of sequences of (head, weight, edge id)
        Out-arcs of node u at ``adj[u]``; weights non-negative.
    starts : sequence of (node, start weight)
        The sources; the least start weight of a node counts.
    bound : callable, optional
        Consistent lower bound h(v) on the remaining weight, 0 at every exit; None: h = 0.
    exits : mapping of node -> exit weight, optional
        Where a route may end; they are joined to a virtual target (id ``len(adj)``) and the
        search stops when that is settled.
    stop : set of nodes, optional
        Without exits: stop as soon as every node of the set is settled (the set is emptied).

    Returns
    -------
    g, parent_node, parent_edge, done : lists indexed by node id (one more entry when
        ``exits`` is given: the virtual target)
    stats : SearchStats
        Nodes settled (the virtual target not counted) and entries pushed.
    """
    n = len(adj)
    size = n + 1 if exits is not None else n
    virtual = n
    g = [float("inf")] * size
    parent_node = [-1] * size
    parent_edge = [-1] * size
    done = [False] * size
    heap: list[tuple[float, int, int]] = []
    counter = 0
    for s, g0 in starts:
        if g0 < g[s]:
            g[s] = g0
            counter += 1
            heap.append((g0 + bound(s) if bound else g0, counter, s))
    heapq.heapify(heap)
    pushed = len(heap)
    settled = 0
    push, pop = heapq.heappush, heapq.heappop
    while heap and (stop is None or stop):
        _f, _c, u = pop(heap)
        if done[u]:
            continue  # a stale entry: u was settled through a better one
        done[u] = True
        settled += 1
        if stop is not None:
            stop.discard(u)
        if exits is not None:
            if u == virtual:
                break
            exit_w = exits.get(u)
            if exit_w is not None and g[u] + exit_w < g[virtual]:
                g[virtual] = g[u] + exit_w
                parent_node[virtual] = u
                counter += 1
                push(heap, (g[virtual], counter, virtual))
                pushed += 1
        gu = g[u]
        for v, w, e in adj[u]:
            if done[v]:
                continue
            gv = gu + w
            if gv < g[v]:
                g[v] = gv
                parent_node[v] = u
                parent_edge[v] = e
                counter += 1
                push(heap, (gv + bound(v) if bound else gv, counter, v))
                pushed += 1
    if exits is not None and done[virtual]:
        settled -= 1  # the virtual target is not a network node
    return g, parent_node, parent_edge, done, SearchStats(settled, pushed)


def astar(adj: Adjacency, source: int | Sequence[tuple[int, float]],
          target: int | Mapping[int, float],
          h: Sequence[float] | Callable[[int], float] | None = None) -> SearchResult:
    """Least-weight route from source to target (A*; uniform-cost search when h is None).

    Parameters
    ----------
    adj : sequence of sequences of (head, weight, edge id)
        The network; weights non-negative (cost, hours, km or kg CO2e).
    source : int or sequence of (node, start weight)
        A node id, or several nodes with the weight of starting there.
    target : int or mapping of node -> exit weight
        A node id, or several exits: the route ends at one of them and pays its exit weight.
        Several sources and exits are the same as one virtual source and one virtual target
        joined to them by arcs of those weights, so the argument at the top of this module
        holds with h(virtual target) = 0 and h(exit node) = 0 (the caller's bound must be 0 at
        exits).
    h : sequence of float, callable or None
        Consistent lower bound per node (indexed by node id, or a function); None: h = 0.

    Returns
    -------
    SearchResult
        The route without the virtual ends; ``weight`` includes the start and exit weights
        (in the weights' unit); ``found`` is False and ``weight`` inf when no exit is reachable.

    Examples
    --------
    >>> adj = [[(1, 2.0, 0), (2, 5.0, 1)], [(2, 1.0, 2)], []]
    >>> r = astar(adj, 0, 2)
    >>> r.weight, r.nodes, r.edges
    (3.0, (0, 1, 2), (0, 2))
    """
    if h is None:
        bound = None
    elif callable(h):
        bound = h
    else:
        bound = h.__getitem__
    starts = [(source, 0.0)] if isinstance(source, int) else list(source)
    exits = {target: 0.0} if isinstance(target, int) else dict(target)
    g, parent_node, parent_edge, done, stats = _label_setting(adj, starts, bound, exits)
    virtual = len(adj)
    if not done[virtual]:
        return SearchResult(False, float("inf"), (), (), stats)
    nodes, edges = _walk_back(parent_node, parent_edge, parent_node[virtual])
    return SearchResult(True, g[virtual], nodes, edges, stats)


def _walk_back(parent_node: list[int], parent_edge: list[int], end: int) -> tuple[tuple, tuple]:
    """The route to `end` as (nodes, edges), from the parents the search recorded."""
    nodes, edges = [end], []
    v = end
    while parent_node[v] != -1:
        edges.append(parent_edge[v])
        v = parent_node[v]
        nodes.append(v)
    return tuple(reversed(nodes)), tuple(reversed(edges))


def dijkstra_all(adj: Adjacency, source: int) -> list[float]:
    """Least weight from `source` to every node (inf where unreachable), in the weights' unit.

    Used for the reverse-search checks of the bound and for reachability reports.

    Examples
    --------
    >>> dijkstra_all([[(1, 2.0, 0)], [], []], 0)
    [0.0, 2.0, inf]
    """
    return _label_setting(adj, [(source, 0.0)])[0]


def one_to_many(adj: Adjacency, source: Sequence[tuple[int, float]],
                targets: Sequence[Mapping[int, float]]) -> list[SearchResult]:
    """One uniform-cost search from `source` that serves several targets.

    Parameters
    ----------
    adj : sequence of sequences of (head, weight, edge id)
    source : sequence of (node, start weight)
    targets : sequence of mappings of exit node -> exit weight
        Each as ``target`` in `astar`.

    Returns
    -------
    list of SearchResult
        One per target, in order. The search stops as soon as every exit node of every target
        is settled, so each target's least weight is min over its exits of g(exit) + exit
        weight, exactly what `astar` returns for it alone (settled g values are final, by the
        argument at the top of this module with h = 0). Statistics are shared: each result
        carries the whole search's counts.
    """
    waiting: set[int] = set()
    for t in targets:
        waiting.update(t)
    g, parent_node, parent_edge, _done, stats = _label_setting(adj, list(source), stop=waiting)
    out = []
    for t in targets:
        best, best_node = float("inf"), -1
        for x, exit_w in t.items():  # first exit in mapping order wins ties, as in astar's queue
            if g[x] + exit_w < best:
                best, best_node = g[x] + exit_w, x
        if best_node < 0:
            out.append(SearchResult(False, float("inf"), (), (), stats))
            continue
        nodes, edges = _walk_back(parent_node, parent_edge, best_node)
        out.append(SearchResult(True, best, nodes, edges, stats))
    return out
