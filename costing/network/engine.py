"""The array side of the search for networks of any size: a compact array network built once
and reused for every shipment, a landmark lower bound, and batching of shipments that share an
origin. It does not search by itself: its A* and its one-to-many Dijkstra are the one search
routine of `costing.network.search` (`_label_setting`), fed with this module's CSR rows and
landmark bound; the third batching strategy is a compiled one-to-all search (scipy) and a
vectorised reconstruction of the routes the routine would return.

Nothing here knows about depots or rates: node ids 0..n-1, arcs with non-negative weights and
edge ids, exactly as `costing.network.search`. Results are `costing.network.search.SearchResult`.

Use (for example from costing/route.py, one engine per CompactNetwork, built once):

    engine = SearchEngine(CSRGraph.from_adjacency(cn.adj), landmarks=24)
    res = engine.astar(o, d, lower_bound=cn.bound(d))             # one shipment
    results = engine.route_many([(o1, d1), (o2, d2), ...], lower_bound=cn.bound)   # many
    engine.stats                                                   # EngineStats

The network (`CSRGraph`)
------------------------
Arcs sorted by (tail, head) in compressed sparse row form: `indptr`, `heads`, `weights`,
`edge_ids`. Parallel arcs are merged into the lightest one (equal weights: the smaller edge id,
which is also the one `costing.network.search.astar` keeps, as it relaxes arcs in list order and only
replaces on a strict improvement); self-loops are dropped (never part of a least-weight route).
`SearchEngine` renumbers the nodes internally (reverse Cuthill-McKee, so that neighbours sit near
each other in memory) and maps every answer back to the caller's ids.

The landmark bound (ALT)
------------------------
After Goldberg and Harrelson, "Computing the Shortest Path: A* Search Meets Graph Theory"
(SODA 2005). Pick landmarks L (farthest first, below) and store d(v, L) and d(L, v) for every v,
computed once per landmark with a compiled one-to-all search (scipy.sparse.csgraph.dijkstra on
the network and on its transpose). For a target t and any node v:

    h_L(v) = max( d(v, L) - d(t, L),  d(L, t) - d(L, v) )

*Admissible.* The triangle inequality of shortest-path distances gives
d(v, L) <= d(v, t) + d(t, L) and d(L, t) <= d(L, v) + d(v, t); so both terms are <= d(v, t).

*Consistent.* For an arc u -> v of weight w, d(u, L) <= w + d(v, L) and d(L, v) <= d(L, u) + w.
Hence d(u, L) - d(t, L) <= w + (d(v, L) - d(t, L)) and d(L, t) - d(L, u) <= w + (d(L, t) - d(L, v)):
each term drops by at most w along an arc, so h_L(u) <= w + h_L(v). At v = t both terms are 0.

The engine uses h(v) = SAFETY * max(0, h_L(v) for L in the active landmarks, b(v)) where b is an
optional lower bound supplied by the caller (the straight-line bound of `costing.network.build`, itself
consistent with b(t) = 0). A maximum of consistent functions is consistent
(max_i h_i(u) <= max_i (w + h_i(v)) = w + max_i h_i(v)), and so is SAFETY * h for 0 < SAFETY <= 1
(SAFETY * h(u) <= SAFETY * (w + h(v)) <= w + SAFETY * h(v) as w >= 0); h(t) = 0. So A* with h
settles each node once and the target with its least weight, as proved in `costing.network.search`
(whose routine this engine runs, so that proof covers the engine's routes).
Any subset of landmarks gives a bound with the same properties, which is why each query may use
only its `active` best landmarks (those with the largest bound at the source).

Unreachable pairs. A distance that does not exist is stored as BIG = 1e300. If d(t, L) is finite
and d(v, L) is not, v cannot reach t (it would reach L through t); if d(L, v) is finite and
d(L, t) is not, again v cannot reach t. In both cases the term is about BIG, and such a node is
never put on the queue (it can be on no route to t). Both distances BIG give a term of 0; one
finite term minus BIG is hugely negative; neither breaks the bound.

Floating point. SAFETY = 1 - 1e-7 leaves a margin of 1e-7 * w on every arc, far above the
rounding of the stored distances (relative 1e-16 of the network's diameter) whenever the
lightest arc is more than about 1e-8 of the diameter (true of any lane network: a lane costs at
least cents, a route at most millions). With that margin the f-value of a node's tight
predecessor (u with g(u) + w(u, v) = g(v), w > 0) is strictly below the f-value of v, so every
tight predecessor is settled before v, and every g is the exact (bit for bit) least sum of
weights added along the route from the source, the same number a compiled Dijkstra computes
(tests/test_engine.py checks the equality, and the bound at every node and arc, exactly).

Ties and determinism. Queue ties on f are broken by push order (the search routine's counter).
Among routes of exactly equal weight, the parent of a node is its tight predecessor with the
smallest internal id (the routine's `lowest_parent` rule: an arc of equal g from a smaller id
replaces the parent). Because all tight
predecessors are settled before the node, this choice does not depend on the order of the search:
A*, a one-to-many Dijkstra and the reconstruction after scipy's one-to-all give the same route,
not only the same weight. (Zero-weight arcs break the "settled before" argument; with them the
weights are still identical but an equal-weight route may differ between strategies. On exact
ties the route can also differ from `costing.network.search.astar`, which runs the same routine
with its default rule, the first predecessor found; both are optimal.)

Landmark choice (farthest first). Start from a seeded random node s0; the first landmark is the
node farthest from s0 (out-distance); then repeatedly the node whose least "round trip"
d(L, v) + d(v, L) over the landmarks chosen so far is largest (ties: smallest id). A way that
does not exist counts 0 (a node reachable one way only counts by that way); a node a landmark can
neither reach nor be reached from is infinitely far from it, so every weakly connected piece of
the network gets a landmark before any piece gets a second.

Batching (`route_many`)
-----------------------
Shipments are grouped by origin. Per group, three ways give identical results (proved above,
tested): one A* per destination; one Dijkstra from the origin stopped when every destination of
the group is settled ("python-many"); or one compiled one-to-all search (scipy) plus a vectorised
reconstruction of the routes ("scipy-all"). The choice is by estimated time, in microseconds:

    astar       = sum over the group's destinations t of  C_QUERY + C_SETTLE_ASTAR * RHO * ball(d'(s, t))
    python-many = C_QUERY + C_SETTLE_DIJKSTRA * ball(max_t d'(s, t))
    scipy-all   = C_SCIPY0 + C_SCIPY * (n + arcs) + C_RECON * arcs + C_PATH * destinations

where d'(s, v) is the landmark lower bound of d(s, v) (all landmarks), ball(r) is n times the
share of a fixed seeded sample of up to 256 nodes with d'(s, v) <= r (the nodes a Dijkstra
from s settles before reaching distance r), and RHO is the share of that ball an ALT A* settles
(0.05 with 8 or more landmarks, as measured on the benchmark's road-like networks; 0.5 without).
The constants were measured on the development machine (2 CPUs, benchmarks/README.md) on the
100k-node road-like network: A* about 6 microseconds per settled node with its bound, the Python
Dijkstra about 3.5, scipy's one-to-all about 25 ms for 100k nodes and 600k arcs, the route
reconstruction about 15 ms for 500 destinations. They only steer speed, never results.

Memory: arrays and work lists take about 40 m + 100 n bytes (m arcs, in both orders), the landmark
tables 16 k n bytes (k landmarks; `stats.landmark_bytes`), and the Python rows of the inner loop
about 60 bytes per arc, made only for the nodes a Python search has settled. The search routine
keeps per-node work arrays in the engine's `Arcs` between queries (reset after each), so one
engine must not be searched from two threads at once.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field

import numpy as np

from costing.network.search import Arcs, SearchResult, SearchStats, _label_setting

BIG = 1e300  # stored in place of a distance that does not exist
HUGE = 1e299  # a bound at least this large means "cannot reach the target"
SAFETY = 1.0 - 1e-7
INF = float("inf")

# Estimated cost of the strategies, microseconds (how measured: module docstring).
C_QUERY = 40.0  # fixed cost of one A* query (landmark choice, queue, route)
C_SETTLE_ASTAR = 6.0  # per node settled by A* (with its bound evaluations)
C_SETTLE_DIJKSTRA = 3.5  # per node settled by the Python one-to-many Dijkstra
C_SCIPY0 = 150.0  # fixed cost of one compiled one-to-all call
C_SCIPY = 0.05  # per node plus arc of a compiled one-to-all
C_RECON = 0.02  # per arc of the vectorised route reconstruction
C_PATH = 8.0  # per destination of the vectorised route reconstruction
RHO_ALT = 0.05
RHO_NONE = 0.5
SAMPLE = 256

STRATEGIES = ("astar", "python-many", "scipy-all")


# ---------------------------------------------------------------------------------------------
# the network


@dataclass
class CSRGraph:
    """Arcs in compressed sparse row form, sorted by (tail, head), no parallel arcs, no loops.
    Build it with `from_arrays` or `from_adjacency`."""

    n: int
    indptr: np.ndarray  # (n + 1,) int64
    heads: np.ndarray  # (m,) int32 (int64 above 2**31 nodes)
    weights: np.ndarray  # (m,) float64, >= 0
    edge_ids: np.ndarray  # (m,) the caller's edge id of each arc (int32 when they fit, else int64)

    @property
    def m(self) -> int:
        """Number of arcs."""
        return int(self.heads.shape[0])

    @property
    def tails(self) -> np.ndarray:
        """Tail node of every arc, in arc order (an array of m ids)."""
        return np.repeat(np.arange(self.n, dtype=self.heads.dtype), np.diff(self.indptr))

    @property
    def nbytes(self) -> int:
        """Bytes held by the arrays (indptr, heads, weights, edge ids)."""
        return int(self.indptr.nbytes + self.heads.nbytes + self.weights.nbytes + self.edge_ids.nbytes)

    @classmethod
    def from_arrays(cls, n: int, tail, head, weight, edge_id=None) -> CSRGraph:
        """Arcs tail[i] -> head[i] of weight[i]; edge_id[i] defaults to i. Weights must be
        non-negative and not NaN; arcs of infinite weight are dropped (unusable)."""
        tail = np.asarray(tail, dtype=np.int64).ravel()
        head = np.asarray(head, dtype=np.int64).ravel()
        weight = np.asarray(weight, dtype=np.float64).ravel()
        if edge_id is None:
            edge_id = np.arange(tail.shape[0], dtype=np.int64)
        edge_id = np.asarray(edge_id, dtype=np.int64).ravel()
        if not (tail.shape == head.shape == weight.shape == edge_id.shape):
            raise ValueError("tail, head, weight and edge_id must have the same length")
        if tail.size and (tail.min() < 0 or head.min() < 0 or tail.max() >= n or head.max() >= n):
            raise ValueError("node ids must be in 0..n-1")
        if np.isnan(weight).any() or (weight < 0).any():
            raise ValueError("weights must be non-negative numbers")
        keep = (tail != head) & np.isfinite(weight)
        tail, head, weight, edge_id = tail[keep], head[keep], weight[keep], edge_id[keep]
        # Sort by (tail, head, weight, edge id); the first of each (tail, head) run is kept.
        order = np.lexsort((edge_id, weight, head, tail))
        tail, head, weight, edge_id = tail[order], head[order], weight[order], edge_id[order]
        if tail.size:
            first = np.ones(tail.shape[0], dtype=bool)
            first[1:] = (tail[1:] != tail[:-1]) | (head[1:] != head[:-1])
            tail, head, weight, edge_id = tail[first], head[first], weight[first], edge_id[first]
        indptr = np.zeros(n + 1, dtype=np.int64)
        np.cumsum(np.bincount(tail, minlength=n), out=indptr[1:])
        idx = np.int32 if n < 2**31 else np.int64
        if edge_id.size and -(2**31) <= edge_id.min() and edge_id.max() < 2**31:
            edge_id = edge_id.astype(np.int32)
        return cls(int(n), indptr, head.astype(idx), weight, edge_id)

    @classmethod
    def from_adjacency(cls, adj: Sequence[Sequence[tuple[int, float, int]]]) -> CSRGraph:
        """From `adj[u] = [(v, weight, edge_id), ...]`, as `costing.network.build.CompactNetwork.adj`."""
        n = len(adj)
        deg = [len(row) for row in adj]
        tail = np.repeat(np.arange(n, dtype=np.int64), deg)
        flat = [arc for row in adj for arc in row]
        if flat:
            head, weight, eid = zip(*flat)
        else:
            head, weight, eid = (), (), ()
        return cls.from_arrays(n, tail, np.array(head, dtype=np.int64), np.array(weight, dtype=float),
                               np.array(eid, dtype=np.int64))

    def transpose(self) -> CSRGraph:
        """The same arcs reversed (v -> u for u -> v), keeping weights and edge ids."""
        return CSRGraph.from_arrays(self.n, self.heads, self.tails, self.weights, self.edge_ids)

    def permuted(self, new_of_old: np.ndarray) -> CSRGraph:
        """The same network with node v renamed new_of_old[v]."""
        p = np.asarray(new_of_old, dtype=np.int64)
        tail = p[self.tails]
        head = p[self.heads]
        order = np.lexsort((head, tail))  # no parallel arcs to merge: a plain re-sort
        indptr = np.zeros(self.n + 1, dtype=np.int64)
        np.cumsum(np.bincount(tail, minlength=self.n), out=indptr[1:])
        del tail
        return CSRGraph(self.n, indptr, head[order].astype(self.heads.dtype), self.weights[order],
                        self.edge_ids[order])

    def to_scipy(self):
        """A scipy.sparse CSR matrix over the same arrays (explicit zeros are arcs to scipy)."""
        import scipy.sparse as sp

        return sp.csr_matrix((self.weights, self.heads, self.indptr), shape=(self.n, self.n))


# ---------------------------------------------------------------------------------------------
# landmarks


@dataclass
class Landmarks:
    nodes: np.ndarray  # (k,) internal node ids
    to_lm: np.ndarray  # (k, n) d(v, L), BIG where v cannot reach L
    from_lm: np.ndarray  # (k, n) d(L, v), BIG where L cannot reach v
    seconds: float = 0.0

    @property
    def k(self) -> int:
        """Number of landmarks."""
        return int(self.nodes.shape[0])

    @property
    def nbytes(self) -> int:
        """Bytes held by the distance tables and landmark ids."""
        return int(self.to_lm.nbytes + self.from_lm.nbytes + self.nodes.nbytes)


def _one_to_all(matrix, source: int) -> np.ndarray:
    from scipy.sparse.csgraph import dijkstra

    return dijkstra(matrix, directed=True, indices=int(source))


def choose_landmarks(fwd, bwd, n: int, k: int, seed: int = 0) -> Landmarks:
    """Farthest-first landmarks on the scipy matrices of a network (`fwd`) and its transpose
    (`bwd`), with their distance tables. See the module docstring."""
    t0 = time.perf_counter()
    k = max(0, min(int(k), n))
    to_lm = np.empty((k, n), dtype=np.float64)
    from_lm = np.empty((k, n), dtype=np.float64)
    nodes = np.empty(k, dtype=np.int64)
    if k:
        rng = np.random.default_rng(seed)
        s0 = int(rng.integers(0, n))
        d0 = _one_to_all(fwd, s0)
        d0[~np.isfinite(d0)] = -1.0
        cur = int(np.argmax(d0))
        far = np.full(n, np.inf)
        for i in range(k):
            fr = _one_to_all(fwd, cur)
            to = _one_to_all(bwd, cur)
            fr_ok, to_ok = np.isfinite(fr), np.isfinite(to)
            trip = np.where(fr_ok, fr, 0.0) + np.where(to_ok, to, 0.0)
            trip[~fr_ok & ~to_ok] = BIG
            fr[~fr_ok] = BIG
            to[~to_ok] = BIG
            nodes[i], from_lm[i], to_lm[i] = cur, fr, to
            np.minimum(far, trip, out=far)
            far[nodes[: i + 1]] = -1.0
            cur = int(np.argmax(far))
    return Landmarks(nodes, to_lm, from_lm, time.perf_counter() - t0)


# ---------------------------------------------------------------------------------------------
# statistics


@dataclass
class EngineStats:
    n: int = 0
    arcs: int = 0
    landmarks: int = 0
    landmark_bytes: int = 0  # the two distance tables
    graph_bytes: int = 0  # the arrays (the Python adjacency rows come on top)
    build_seconds: float = 0.0
    landmark_seconds: float = 0.0
    queries: int = 0  # shipments answered
    settled: int = 0
    pushed: int = 0  # 0 counted for compiled searches (scipy does not report it)
    groups: dict[str, int] = field(default_factory=dict)  # strategy -> origin groups
    shipments: dict[str, int] = field(default_factory=dict)  # strategy -> shipments

    def count(self, strategy: str, shipments: int) -> None:
        """Count one origin group of `shipments` searched by `strategy`."""
        self.groups[strategy] = self.groups.get(strategy, 0) + 1
        self.shipments[strategy] = self.shipments.get(strategy, 0) + shipments


@dataclass(frozen=True)
class GroupPlan:
    source: int
    destinations: int
    estimates: dict[str, float]  # strategy -> estimated microseconds
    strategy: str


# ---------------------------------------------------------------------------------------------
# the engine

LowerBound = Sequence[float] | np.ndarray | None


class SearchEngine:
    """A* with landmarks and batched one-to-many searches over one `CSRGraph`.

    landmarks: how many (0 for none); active: how many of them each A* query uses;
    reorder: renumber nodes internally for memory locality; seed: for the landmark start and the
    estimate's node sample.
    """

    def __init__(self, graph: CSRGraph, landmarks: int = 24, active: int = 6, reorder: bool = True,
                 seed: int = 0):
        t0 = time.perf_counter()
        n = graph.n
        self.n = n
        self.active = max(0, int(active))
        if reorder and n > 2:
            from scipy.sparse.csgraph import reverse_cuthill_mckee

            order = reverse_cuthill_mckee(graph.to_scipy(), symmetric_mode=True).astype(np.int64)
            new_of_old = np.empty(n, dtype=np.int64)
            new_of_old[order] = np.arange(n, dtype=np.int64)
            g = graph.permuted(new_of_old)
        else:
            order = np.arange(n, dtype=np.int64)
            new_of_old = order
            g = graph
        self.graph = g  # internal numbering
        self._old_of_new = order
        self._new_of_old = new_of_old
        self._ext = order.tolist()  # internal -> caller id (routes share these int objects)
        self._int = memoryview(new_of_old)  # caller id -> internal
        self.has_zero_weight = bool(g.m and float(g.weights.min()) == 0.0)
        idx = g.heads.dtype
        # The reverse order of the arcs (by head, then tail) is the transpose's CSR order: it
        # serves the landmark searches towards a node and the route reconstruction.
        tails = np.append(g.tails, idx.type(0))  # tail of each arc, + a pseudo arc (routes)
        self._arc_tail_ext = tails
        tails = tails[:-1]
        rev = np.lexsort((tails, g.heads))
        self._rev = rev.astype(np.int32 if g.m < 2**31 else np.int64)
        self._rev_tail = tails[rev]
        self._rev_w = g.weights[rev]
        del rev
        self._indeg = np.bincount(g.heads, minlength=n)
        self._rev_head = np.repeat(np.arange(n, dtype=idx), self._indeg)
        rev_indptr = np.zeros(n + 1, dtype=np.int64)
        np.cumsum(self._indeg, out=rev_indptr[1:])
        import scipy.sparse as sp

        self._fwd = g.to_scipy()
        self._bwd = sp.csr_matrix((self._rev_w, self._rev_tail, rev_indptr), shape=(n, n))
        # Python rows (tuples of heads and of weights) for the inner loops, made the first time
        # a search settles the node: memory only for the part of the network searched.
        self._heads: list[tuple[int, ...] | None] = [None] * n
        self._wts: list[tuple[float, ...] | None] = [None] * n
        self._heads_mv = memoryview(g.heads)
        self._wts_mv = memoryview(g.weights)
        self._ip = memoryview(g.indptr)
        self._eid = memoryview(np.ascontiguousarray(g.edge_ids))
        # The rows as the search core reads them (it also keeps its work arrays there).
        eid, ip = self._eid, self._ip

        def edge(u: int, i: int) -> int:
            return eid[ip[u] + i]

        self._arcs = Arcs(n, self._heads, self._wts, self._load_row, edge)
        self.lm = choose_landmarks(self._fwd, self._bwd, n, landmarks, seed)
        self._to_rows = [memoryview(r) for r in self.lm.to_lm]
        self._from_rows = [memoryview(r) for r in self.lm.from_lm]
        rng = np.random.default_rng(seed + 1)
        self._sample = np.sort(rng.choice(n, size=min(n, SAMPLE), replace=False)) if n else np.empty(0, int)
        self.stats = EngineStats(n=n, arcs=g.m, landmarks=self.lm.k, landmark_bytes=self.lm.nbytes,
                                 graph_bytes=g.nbytes, landmark_seconds=self.lm.seconds)
        self.plans: list[GroupPlan] = []  # the last route_many's choices
        self.stats.build_seconds = time.perf_counter() - t0

    # -- the bound ------------------------------------------------------------------------------

    def _active_landmarks(self, s: int, t: int, count: int | None = None) -> list[int]:
        """The landmarks giving the largest bound at s towards t (internal ids)."""
        k = self.lm.k
        count = self.active if count is None else count
        if k == 0 or count <= 0:
            return []
        if count >= k:
            return list(range(k))
        to, fr = self.lm.to_lm, self.lm.from_lm
        score = np.fmax(to[:, s] - to[:, t], fr[:, t] - fr[:, s])
        return np.argsort(-score, kind="stable")[:count].tolist()

    def _bound_function(self, t: int, active: list[int], lower: LowerBound) -> Callable[[int], float]:
        """h(v) for internal v, evaluated one node at a time (what A* uses)."""
        terms = [(self._to_rows[i], self._to_rows[i][t], self._from_rows[i], self._from_rows[i][t])
                 for i in active]
        ext = self._ext
        if isinstance(lower, np.ndarray):
            lower = memoryview(np.ascontiguousarray(lower, dtype=np.float64))

        if lower is None:
            def h(v: int) -> float:
                best = 0.0
                for tl, a, fl, b in terms:
                    x = tl[v] - a
                    if x > best:
                        best = x
                    x = b - fl[v]
                    if x > best:
                        best = x
                return best * SAFETY
        else:
            def h(v: int) -> float:
                best = 0.0
                x = lower[ext[v]]
                if x > best:
                    best = x
                for tl, a, fl, b in terms:
                    x = tl[v] - a
                    if x > best:
                        best = x
                    x = b - fl[v]
                    if x > best:
                        best = x
                return best * SAFETY
        return h

    def bound(self, target: int, lower_bound: LowerBound = None,
              landmarks: Sequence[int] | None = None) -> np.ndarray:
        """h(v) towards `target` for every node v (caller's ids), with the given landmark
        indices (all by default) and the caller's lower bound if any. The same numbers A*
        computes node by node; values >= HUGE mean v cannot reach target."""
        t = self._int[target]
        idx = range(self.lm.k) if landmarks is None else landmarks
        best = np.zeros(self.n)
        if lower_bound is not None:
            best = np.fmax(best, np.asarray(lower_bound, dtype=np.float64)[self._old_of_new])
        for i in idx:
            to, fr = self.lm.to_lm[i], self.lm.from_lm[i]
            best = np.fmax(best, to - to[t])
            best = np.fmax(best, fr[t] - fr)
        return (best * SAFETY)[self._new_of_old]

    def lower_bounds_from(self, source: int, nodes: Iterable[int] | None = None) -> np.ndarray:
        """The landmark lower bound of d(source, v) for the given nodes (caller's ids; all by
        default)."""
        s = self._int[source]
        v = self._new_of_old if nodes is None else self._new_of_old[np.asarray(list(nodes), dtype=np.int64)]
        return self._lb_internal(s, v)

    def _lb_internal(self, s: int, v: np.ndarray) -> np.ndarray:
        if self.lm.k == 0:
            return np.zeros(len(v))
        to, fr = self.lm.to_lm, self.lm.from_lm
        a = (to[:, s][:, None] - to[:, v]).max(axis=0)
        b = (fr[:, v] - fr[:, s][:, None]).max(axis=0)
        return np.maximum(np.maximum(a, b), 0.0)

    # -- point to point --------------------------------------------------------------------------

    def astar(self, source: int, target: int, lower_bound: LowerBound = None) -> SearchResult:
        """Least-weight route from source to target: A* with the landmark bound.

        Parameters
        ----------
        source, target : int
            The caller's node ids.
        lower_bound : sequence or array indexed by the caller's node ids, or None
            An optional consistent lower bound towards `target`, in the weights' unit (for
            example `CompactNetwork.bound(target)`); the larger of it and the landmark bound
            is used.

        Returns
        -------
        SearchResult
            Weight in the weights' unit (inf when no route), the caller's node and edge ids.
        """
        s, t = self._int[source], self._int[target]
        res = self._astar(s, t, lower_bound)
        self.stats.queries += 1
        self.stats.settled += res.stats.settled
        self.stats.pushed += res.stats.pushed
        return res

    def _astar(self, s: int, t: int, lower: LowerBound) -> SearchResult:
        """The search core ("every" mode with the one target, lowest-parent ties, nodes with a
        bound >= HUGE never queued) with the landmark bound towards t."""
        h = self._bound_function(t, self._active_landmarks(s, t), lower)
        routes, stats, _ = _label_setting(self._arcs, ((s, 0.0),), ({t: 0.0},), h, until="every",
                                          cutoff=HUGE, lowest_parent=True)
        return self._external(routes[0], stats)

    def _load_row(self, u: int) -> tuple[int, ...]:
        a, b = self._ip[u], self._ip[u + 1]
        hu = self._heads[u] = tuple(self._heads_mv[a:b])
        self._wts[u] = tuple(self._wts_mv[a:b])
        return hu

    def _external(self, route: tuple, stats: SearchStats) -> SearchResult:
        """A route of the core (internal node ids) as a SearchResult in the caller's ids."""
        found, weight, nodes, edges = route
        if not found:
            return SearchResult(False, INF, (), (), stats)
        ext = self._ext
        return SearchResult(True, weight, tuple([ext[v] for v in nodes]), edges, stats)

    # -- one to many -------------------------------------------------------------------------------

    def one_to_many(self, source: int, targets: Sequence[int], method: str = "python-many",
                    lower_bound: Callable[[int], LowerBound] | None = None) -> list[SearchResult]:
        """Routes from one source to each target, by one strategy.

        The routes and weights are the same whichever strategy is used (module docstring).

        Parameters
        ----------
        source : int
            The caller's node id.
        targets : sequence of int
            The caller's node ids; results come in this order.
        method : {"astar", "python-many", "scipy-all"}
            One A* each; one Dijkstra stopped when every target is settled; or a compiled
            one-to-all search and a vectorised reconstruction of the routes.
        lower_bound : callable target -> lower bound (as `astar`'s), or None
            For "astar" only.

        Returns
        -------
        list of SearchResult
            Weights in the weights' unit. The statistics of a shared search are split over its
            results (first results take the remainder), so that their sum is the search's.
        """
        s = self._int[source]
        tl = [self._int[t] for t in targets]
        if method == "astar":
            out = [self._astar(s, t, lower_bound(self._ext[t]) if lower_bound else None) for t in tl]
        elif method == "python-many":
            out = self._dijkstra_many(s, tl)
        elif method == "scipy-all":
            out = self._scipy_all(s, tl)
        else:
            raise ValueError(f"unknown method {method!r}; one of {', '.join(STRATEGIES)}")
        self.stats.queries += len(out)
        self.stats.settled += sum(r.stats.settled for r in out)
        self.stats.pushed += sum(r.stats.pushed for r in out)
        return out

    @staticmethod
    def _split(total: SearchStats, k: int) -> list[SearchStats]:
        if k == 0:
            return []
        qs, rs = divmod(total.settled, k)
        qp, rp = divmod(total.pushed, k)
        made: dict[tuple[bool, bool], SearchStats] = {}  # at most four distinct (immutable) values
        out = []
        for i in range(k):
            key = (i < rs, i < rp)
            st = made.get(key)
            if st is None:
                st = made[key] = SearchStats(qs + key[0], qp + key[1])
            out.append(st)
        return out

    def _dijkstra_many(self, s: int, targets: list[int]) -> list[SearchResult]:
        """The search core with h = 0, ended when every target is settled (lowest-parent ties)."""
        routes, stats, _ = _label_setting(self._arcs, ((s, 0.0),), [{t: 0.0} for t in targets],
                                          until="every", cutoff=HUGE, lowest_parent=True)
        return [self._external(r, st) for r, st in zip(routes, self._split(stats, len(targets)))]

    def _scipy_all(self, s: int, targets: list[int]) -> list[SearchResult]:
        dist = _one_to_all(self._fwd, s)
        reached = int(np.isfinite(dist).sum())
        parts = self._split(SearchStats(reached, 0), len(targets))
        parent = self._parents_from_scipy(s) if self.has_zero_weight else self._tight_parents(dist, s)
        t_arr = np.asarray(targets, dtype=np.int64)
        ok = np.isfinite(dist[t_arr]) if len(targets) else np.zeros(0, dtype=bool)
        good = t_arr[ok]
        node_flat, edge_flat, lengths = self._routes(parent, s, good)
        # Routes lie one after another in the flat lists (a route of k arcs has k + 1 nodes).
        weights = dist[good].tolist()
        out = []
        j = a = 0
        for st, reached_t in zip(parts, ok.tolist()):
            if not reached_t:
                out.append(SearchResult(False, INF, (), (), st))
                continue
            k = lengths[j]
            out.append(SearchResult(True, weights[j], tuple(node_flat[a + j:a + j + k + 1]),
                                    tuple(edge_flat[a:a + k]), st))
            a += k
            j += 1
        return out

    def _tight_parents(self, dist: np.ndarray, s: int) -> np.ndarray:
        """For each node the arc from its tight predecessor with the smallest id (-1 if none):
        the parent A* and the Python Dijkstra choose (module docstring). One vectorised pass over
        the arcs in (head, tail) order; unreachable nodes get a meaningless parent, never used."""
        dt = dist[self._rev_tail]
        dt += self._rev_w
        tight = np.flatnonzero(dt == np.repeat(dist, self._indeg))
        hv = self._rev_head[tight]
        first = np.empty(hv.shape[0], dtype=bool)
        if hv.shape[0]:
            first[0] = True
            np.not_equal(hv[1:], hv[:-1], out=first[1:])
        parent = np.full(self.n, -1, dtype=np.int64)
        parent[hv[first]] = self._rev[tight[first]]
        parent[s] = -1
        return parent

    def _parents_from_scipy(self, s: int) -> np.ndarray:
        """With zero-weight arcs: scipy's own predecessor tree (an optimal tree, possibly another
        equal-weight route than the Python searches choose)."""
        from scipy.sparse.csgraph import dijkstra

        _d, pred = dijkstra(self._fwd, directed=True, indices=s, return_predecessors=True)
        parent = np.full(self.n, -1, dtype=np.int64)
        v = np.flatnonzero(pred >= 0)
        u = pred[v].astype(np.int64)
        keys = self._arc_tail_ext[:-1].astype(np.int64) * self.n + self.graph.heads  # CSR order
        parent[v] = np.searchsorted(keys, u * self.n + v)
        return parent

    def _routes(self, parent: np.ndarray, s: int, targets: np.ndarray) -> tuple[list, list, list[int]]:
        """Every target's route from the parent arcs, walking all targets back to s together.
        Returns the caller's node ids of all routes one after another (each source first,
        target last), their edge ids likewise, and the number of arcs of each route."""
        m = targets.shape[0]
        arrived = self.graph.m  # a pseudo arc: the parent of s, with tail s, so s stays put
        tail = self._arc_tail_ext
        tail[arrived] = s
        parent[s] = arrived
        if m == 0:
            return [], [], []
        cur = targets
        steps = []
        while True:
            for _ in range(8):  # test for the end every 8 steps only
                arc = parent[cur]
                steps.append(arc)
                cur = tail[arc]
            if (arc == arrived).all():
                break
            if len(steps) > self.n + 8:
                raise RuntimeError("route reconstruction did not end")
        mat = np.stack(steps)  # (steps, targets): arcs from the target end, then `arrived`
        if (mat < 0).any():
            raise RuntimeError("route reconstruction found a node without a parent")
        real = mat != arrived
        lengths = real.sum(axis=0)
        # Reverse each column's real arcs so that routes run source first: the real arcs are a
        # prefix of each column, so row k of route j goes to position lengths[j] - 1 - k.
        starts = np.zeros(m, dtype=np.int64)
        np.cumsum(lengths[:-1], out=starts[1:])
        k_idx, j_idx = np.nonzero(real)
        ordered = np.empty(k_idx.shape[0], dtype=np.int64)
        ordered[starts[j_idx] + lengths[j_idx] - 1 - k_idx] = mat[k_idx, j_idx]
        # Nodes: route j takes positions starts[j] + j .. starts[j] + j + lengths[j].
        total = ordered.shape[0]
        route_of = np.repeat(np.arange(m), lengths)
        nodes = np.empty(total + m, dtype=np.int64)
        nodes[np.arange(total) + route_of] = tail[ordered]
        nodes[starts + lengths + np.arange(m)] = targets
        node_flat = self._old_of_new[nodes].tolist()
        return node_flat, self.graph.edge_ids[ordered].tolist(), lengths.tolist()

    # -- batching ------------------------------------------------------------------------------------

    def plan(self, source: int, targets: Sequence[int]) -> GroupPlan:
        """Estimated microseconds of each strategy for one origin group; the cheapest wins."""
        s = self._int[source]
        tl = sorted({self._int[t] for t in targets} - {s})
        m = len(tl)
        n = self.n
        rho = RHO_ALT if self.lm.k >= 8 else RHO_NONE
        if m == 0:
            est = {"astar": C_QUERY * len(targets), "python-many": C_QUERY, "scipy-all": INF}
        else:
            if self.lm.k and self._sample.shape[0]:
                ds = np.sort(self._lb_internal(s, self._sample))
                dt = self._lb_internal(s, np.asarray(tl, dtype=np.int64))
                frac = np.searchsorted(ds, dt, side="right") / ds.shape[0]
                balls = np.maximum(frac * n, 1.0)
                ball_max = float(balls.max())
            else:
                balls = np.full(m, float(n))
                ball_max = float(n)
            est = {
                "astar": float(np.sum(C_QUERY + C_SETTLE_ASTAR * rho * balls)),
                "python-many": C_QUERY + C_SETTLE_DIJKSTRA * ball_max,
                "scipy-all": C_SCIPY0 + C_SCIPY * (n + self.graph.m) + C_RECON * self.graph.m + C_PATH * m,
            }
        best = min(STRATEGIES, key=lambda k: (est[k], STRATEGIES.index(k)))
        return GroupPlan(source, len(targets), est, best)

    def route_many(self, pairs: Sequence[tuple[int, int]],
                   lower_bound: Callable[[int], LowerBound] | None = None,
                   strategy: str = "auto") -> list[SearchResult]:
        """Routes for many (origin, destination) pairs, batched by origin.

        Parameters
        ----------
        pairs : sequence of (int, int)
            The caller's node ids; results come in this order.
        lower_bound : callable target -> lower bound (as `astar`'s), or None
            A consistent lower bound per target, in the weights' unit, for the A* queries
            (e.g. `CompactNetwork.bound`).
        strategy : {"auto", "astar", "python-many", "scipy-all"}
            "auto": per origin group the strategy `plan` estimates cheapest.

        Returns
        -------
        list of SearchResult
            One per pair; weights in the weights' unit.
        """
        groups: dict[int, list[int]] = {}
        for i, (o, _d) in enumerate(pairs):
            groups.setdefault(o, []).append(i)
        out: list[SearchResult | None] = [None] * len(pairs)
        self.plans = []
        for o, idx in groups.items():
            dests = [pairs[i][1] for i in idx]
            if strategy == "auto":
                p = self.plan(o, dests)
                self.plans.append(p)
                chosen = p.strategy
            else:
                chosen = strategy
            uniq = list(dict.fromkeys(dests))
            res = dict(zip(uniq, self.one_to_many(o, uniq, chosen, lower_bound)))
            self.stats.count(chosen, len(idx))
            for i in idx:
                out[i] = res[pairs[i][1]]
        return out  # type: ignore[return-value]
