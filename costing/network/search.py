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


def astar(adj: Adjacency, source: int | Sequence[tuple[int, float]],
          target: int | Mapping[int, float],
          h: Sequence[float] | Callable[[int], float] | None = None) -> SearchResult:
    """Least-weight route from source to target.

    `source` is a node id, or several (node id, starting weight) pairs; `target` is a node id, or
    a mapping of node id -> exit weight (the route ends at one of them and pays its exit
    weight). Several sources and exits are the same as one virtual source and one virtual
    target joined to them by edges of those weights, so the argument above still holds with
    h(virtual target) = 0 and h(exit node) = 0 (the caller's bound must be 0 at exits).
    `h` is a lower bound per node (a sequence indexed by node id, a function, or None for
    uniform-cost search). The route returned excludes the virtual ends; `weight` includes the
    starting and exit weights."""
    if h is None:
        def bound(_v: int) -> float:
            return 0.0
    elif callable(h):
        bound = h
    else:
        bound = h.__getitem__
    starts = [(source, 0.0)] if isinstance(source, int) else list(source)
    exits = {target: 0.0} if isinstance(target, int) else dict(target)
    n = len(adj)
    virtual = n  # the virtual target's id
    g = [float("inf")] * (n + 1)
    parent_node = [-1] * (n + 1)
    parent_edge = [-1] * (n + 1)
    done = [False] * (n + 1)
    heap: list[tuple[float, int, int]] = []
    counter = 0
    for s, g0 in starts:
        if g0 < g[s]:
            g[s] = g0
            counter += 1
            heap.append((g0 + bound(s), counter, s))
    heapq.heapify(heap)
    pushed = len(heap)
    settled = 0
    push, pop = heapq.heappush, heapq.heappop
    while heap:
        _f, _c, u = pop(heap)
        if done[u]:
            continue  # a stale entry: u was settled through a better one
        done[u] = True
        settled += 1
        if u == virtual:
            break
        gu = g[u]
        exit_w = exits.get(u)
        if exit_w is not None and gu + exit_w < g[virtual]:
            g[virtual] = gu + exit_w
            parent_node[virtual] = u
            counter += 1
            push(heap, (g[virtual], counter, virtual))
            pushed += 1
        for v, w, e in adj[u]:
            if done[v]:
                continue
            gv = gu + w
            if gv < g[v]:
                g[v] = gv
                parent_node[v] = u
                parent_edge[v] = e
                counter += 1
                push(heap, (gv + bound(v), counter, v))
                pushed += 1
    settled -= 1 if done[virtual] else 0  # the virtual target is not a network node
    stats = SearchStats(settled, pushed)
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
    """Least weight from source to every node (inf where unreachable). Used for the
    reverse-search checks of the bound and for reachability reports."""
    n = len(adj)
    g = [float("inf")] * n
    g[source] = 0.0
    heap = [(0.0, source)]
    done = [False] * n
    while heap:
        gu, u = heapq.heappop(heap)
        if done[u]:
            continue
        done[u] = True
        for v, w, _e in adj[u]:
            gv = gu + w
            if gv < g[v]:
                g[v] = gv
                heapq.heappush(heap, (gv, v))
    return g


def one_to_many(adj: Adjacency, source: Sequence[tuple[int, float]],
                targets: Sequence[Mapping[int, float]]) -> list[SearchResult]:
    """One uniform-cost search from `source` (node, starting weight pairs) that serves several
    targets, each a mapping of exit node -> exit weight as in `astar`. It stops as soon as every
    exit node of every target is settled, so each target's least weight is min over its exits of
    g(exit) + exit weight, exactly what `astar` returns for it alone (the settled g values are
    final, by the argument at the top of this module with h = 0). Statistics are shared: each
    result carries the whole search's counts."""
    n = len(adj)
    g = [float("inf")] * n
    parent_node = [-1] * n
    parent_edge = [-1] * n
    done = [False] * n
    heap: list[tuple[float, int, int]] = []
    counter = 0
    for s, g0 in source:
        if g0 < g[s]:
            g[s] = g0
            counter += 1
            heap.append((g0, counter, s))
    heapq.heapify(heap)
    pushed = len(heap)
    waiting = set()
    for t in targets:
        waiting.update(t)
    settled = 0
    push, pop = heapq.heappush, heapq.heappop
    while heap and waiting:
        gu, _c, u = pop(heap)
        if done[u]:
            continue
        done[u] = True
        settled += 1
        waiting.discard(u)
        for v, w, e in adj[u]:
            if done[v]:
                continue
            gv = gu + w
            if gv < g[v]:
                g[v] = gv
                parent_node[v] = u
                parent_edge[v] = e
                counter += 1
                push(heap, (gv, counter, v))
                pushed += 1
    stats = SearchStats(settled, pushed)
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
