"""Bi-objective search with a clock in the labels: the Pareto frontier of (cost, time) when each
step may add weight that depends on a state carried along the route (for the product: breaks
and rests that depend on the driving clock). Nothing here knows about depots, rates or driving
rules: the caller passes the state at each start and two callbacks, `step` (the weight a step
adds besides its own, and the state after it) and `split` (which parts of a state must be equal,
and which are compared, for one label to cover another).

The search is the one of `costing.network.pareto` (NAMOA*, Mandow and Pérez de la Cruz, JACM
2010) run on the network whose nodes are (node, state): labels are taken in lexicographic order
of f = g + h (cost, then time), filtered by the solutions found, and pruned at their node by the
labels there that cover them. What changes is the covering at a node.

Covering. `split(state)` returns (key, vec): a hashable key and a tuple of numbers. A label A
covers a label B at the same node when key(A) = key(B), vec(A) <= vec(B) in every component,
cost(A) <= cost(B) and time(A) <= time(B) (cost and time within `REL_TOL`, as in pareto.py).
The caller's promise ("the order is sound"): for states a and b of one node with key(a) = key(b)
and vec(a) <= vec(b), every continuation (the same steps to the same exit) that can be taken
from b can be taken from a and adds no more cost and no more time from a than from b. With vec
always empty this is equality of states, which is always sound: the same steps from the same
state add the same weights (`step` must be a function of its arguments).

Why the frontier is exact, given non-negative weights (the steps' own and what `step` adds),
bounds h that never exceed the least remaining weight without the added weights, and a sound
order:
  * Same node: if A covers B, any continuation S of B is one of A (same node), and A + S is no
    worse than B + S in both criteria: A's g is no worse and, by soundness, so is what S adds.
    Covering is transitive (equal keys, componentwise order, and <= on cost and time), so a
    removed label always has a live coverer (open or closed).
  * Bounds: what `step` adds is >= 0, so the least remaining weight without it is a lower bound
    with it; the optional `more(state, node)` is a lower bound on what `step` adds from there,
    so f = g + h + more never exceeds any completion. A solution covering f covers them all.
  * Order: let P* be a frontier route of value v not found yet. Walk along P* from its start:
    at its first node some label represents a route of value <= v on P*'s remaining steps (the
    start label, or its live coverer, whose completion along P* is no worse, hence of value v
    since v is non-dominated). If that label is closed, its child along P*'s next step was made
    and kept, or covered by a live label at the next node: again a label whose completion along
    P*'s remaining steps has value v, with one step fewer to go. The steps to go fall at each
    move, so this ends at an open label with f <= v (else a solution of value v is already
    found, or a solution covers f <= v and so covers v). That label is lexicographically
    smaller than any target label C that P* dominates, so C is not taken before P* is found:
    every frontier point is final when found, and they are found in increasing cost, as in
    pareto.py. The guarantees of pareto.py (whole frontier, or the max_routes prefix; no
    returned route covers another; determinism; floating-point tolerance) carry over.
Routes are walks of the network: a node may be met twice with different states. A walk is
returned only when no route (walk) covers it; it is then priced as it runs.

How the product uses it (costing.plan.route, Router.frontier): the trade-offs with the driving
clock. The network is the cost profile's compact network (states (depot, card)) with each
step's cost and its drive + handling hours; the state is (whether the current vehicle run has
no lane step yet, the clock of costing.price.rules: driving since the last break, driving
today, time on duty, today's limit, longer days used, reduced rests used); a start state is a
rested driver on duty for the loading there; `step` is `costing.price.rules.advance` on a road
lane step (the stops it adds: their hours, and their pay as Settings break_hours_paid and
rest_hours_paid say, rounded per leg as `cost_route` does), a rested driver after a change of
vehicle, the clock unchanged off the road; so a route's (cost, time) here is exactly its
subtotal and elapsed hours as `cost_route` prices it. Two guards: a change of vehicle straight
after another (or at the start) is refused (inf): a run without a lane step is no run, and
changing there and back would rest a driver where the priced route has one run; nothing is
lost, as changing onto the last card directly is the same route with less handling.
  The order. Labels are compared only when their clocks agree in driving today, time on duty,
  today's limit and longer days used (and the empty-run flag); then driving since the break and
  reduced rests used are compared (smaller is no worse), provided the rules have no duty window
  and the pay of one stop (n x stop hours x per_hour) is a whole number of minor units on every
  road card; otherwise only equal clocks are compared. Proof of soundness, without a duty
  window: a continuation's stops up to the end of the current run are those `advance` takes
  for its driving from the clock (after that, runs start rested: the same for both labels).
  Where a rest falls depends only on driving today, today's limit and longer days used (a
  longer day when the limit is reached and one is left, else a rest), not on the driving since
  the break, and a rest resets that; so from clocks a and b equal in those parts the rests fall
  at the same points. Between rests a break falls each 4.5 h (break_after) of driving counted
  from where the driving since the break stands, and none at a rest: from since(a) <= since(b)
  each break of a comes no earlier than the matching break of b, so a has no more breaks by any
  point. Reduced rests are taken first: with reduced(a) <= reduced(b) each rest of a is no
  longer than the matching rest of b, and the count n -> n + [n < allowed] keeps the order. So
  a adds no more break hours and no more rest hours: no more time, and no more pay when each
  stop's pay is a whole number of minor units (a leg's rounded pay is then the sum of its stops'
  pay, on whichever leg they fall; otherwise moving a break to another leg can change the
  rounding by a minor unit, hence equal clocks there). With a duty window (US) a break adds
  time on duty and moves the rests: equal clocks only.
  Why driving today is not compared: less driving today is not always better. From a fresh
  clock 4.6 h of driving take a paid 45-minute break; from a clock at 8.9 h today they take an
  unpaid daily rest: cheaper, though far slower (tests/test_frontier_clock.py has such a case,
  where the cheap tired route is on the frontier and a covering by driving today would lose it).
  The bound `more`: the current run drives at least the least driving hours from the node to
  where a run ends (an exit or a change of vehicle), and the stops of a run only grow with its
  driving (`advance` takes a stop where more driving follows: those of a shorter drive are among
  them), so the stops `advance` gives for that least driving are a lower bound (their pay
  counted only when it is whole, as above).
  Exact: the frontier of (subtotal, elapsed hours) over the routes of the compact network under
  the stop model of costing.price.rules, subject to the guarantees above. Approximated (stated):
  the stop model itself (its docstring: a planning model, not legal advice); the cost criterion
  is the subtotal, before the minimum charge (as without the clock); a search that needs more
  than its label cap falls back to the frontier on drive + handling hours, noted. The plain
  frontier is searched first: when none of its routes stops, it is the frontier with the clock
  too (stops only add weight, so any other route is covered by one of them).

The label cap. The number of labels can grow with the number of distinct states as well as with
the frontier (pareto.py, Complexity). `max_labels` caps the labels created; past it the search
raises `LabelLimit` (no partial frontier: the caller falls back and says so).

Cost: per label O(log L) on the heap; per outgoing edge one `step` call and a scan of the labels
of its (node, key) bucket (a sorted staircase when vec is empty, a list otherwise).
"""

from __future__ import annotations

import heapq
import math
from bisect import bisect_left
from collections.abc import Callable, Hashable, Mapping, Sequence

from costing.network.pareto import (
    ParetoResult,
    ParetoRoute,
    _check_caps,
    _covered,
    _insert,
    _leq,
)

_OPEN, _CLOSED, _DEAD = 0, 1, 2
_SINK = -1  # the node of target labels: routes joined past their exit


class LabelLimit(Exception):
    """The search would need more labels than its cap."""


def clock_frontier(adj, starts: Sequence[tuple[int, float, float, Hashable]],
                   exits: Mapping[int, tuple[float, float]], h_cost: Sequence[float],
                   h_time: Sequence[float],
                   step: Callable[[Hashable, int, int], tuple[float, float, Hashable]],
                   split: Callable[[Hashable], tuple[Hashable, tuple]],
                   max_routes: int = 50, max_labels: int = 200_000,
                   more: Callable[[Hashable, int], tuple[float, float]] | None = None) -> ParetoResult:
    """The Pareto frontier of (cost, time) from the starts to the exits, with a state per label.

    Parameters
    ----------
    adj : sequence of rows ``[(head, cost, time, edge id), ...]`` per node
        The steps' own weights, >= 0 (cost in the caller's money unit, time in hours); inf marks
        an unusable step.
    starts : sequence of (node, start cost, start time, state)
        Where routes start, what starting there weighs and the state there.
    exits : mapping node -> (exit cost, exit time)
        Where routes may end and what ending there weighs; the state ends there.
    h_cost, h_time : sequences indexed by node
        Lower bounds on the remaining cost and time to an exit without what `step` adds (exit
        weights included); inf where no exit is reachable. E.g. `FrontierNetwork.bounds`.
    step : callable (state, head, edge id) -> (added cost, added time, state at head)
        What a step adds besides its own weights (>= 0; inf: the step cannot be taken from
        that state) and the state after it; a function of its arguments.
    split : callable state -> (key, vec)
        The covering order (module docstring): equal keys and vec componentwise no larger.
        Must be sound.
    max_routes : int
        Most routes returned (the least-cost prefix of the frontier).
    max_labels : int
        Most labels made.
    more : callable (state, node) -> (cost, time), optional
        A lower bound on what `step` adds on any continuation from the node in that state to
        an exit (>= 0); added to h. None: 0.

    Returns
    -------
    ParetoResult
        Routes from a start node to an exit node (edges: the network's edge ids), cost and time
        including the start, exit and added weights, sorted by cost ascending; capped is True
        only when max_routes stopped the search with labels left.

    Raises
    ------
    LabelLimit
        More than `max_labels` labels would be needed.
    """
    _check_caps(max_routes, max_labels)
    inf = math.inf
    l_cost: list[float] = []
    l_time: list[float] = []
    l_node: list[int] = []
    l_state: list = []
    l_vec: list[tuple] = []
    l_parent: list[int] = []
    l_edge: list[int] = []
    l_live: list[int] = []
    # (node, key) -> staircase (costs, times, ids) when vec is empty, else a list of label ids
    buckets: dict = {}
    sol: tuple[list[float], list[float], list[int]] = ([], [], [])
    heap: list[tuple[float, float, int]] = []
    push, pop = heapq.heappush, heapq.heappop

    def add(node: int, c: float, t: float, state, vec: tuple, key, parent: int, edge: int,
            fc: float, ft: float) -> None:
        """A new label unless a label of its bucket covers it; it removes those it covers."""
        b = buckets.get((node, key))
        new = len(l_cost)
        if not vec:
            if b is None:
                b = buckets[(node, key)] = ([], [], [])
            elif _covered(b[0], b[1], c, t):
                return
            for old in _insert(b[0], b[1], b[2], c, t, new):
                l_live[old] = _DEAD
        else:
            if b is None:
                b = buckets[(node, key)] = []
            else:
                for j in b:
                    if _leq(l_cost[j], c) and _leq(l_time[j], t) and \
                            all(x <= y for x, y in zip(l_vec[j], vec)):
                        return
                keep = []
                for j in b:
                    if _leq(c, l_cost[j]) and _leq(t, l_time[j]) and \
                            all(x <= y for x, y in zip(vec, l_vec[j])):
                        l_live[j] = _DEAD
                    else:
                        keep.append(j)
                b[:] = keep
            b.append(new)
        if new >= max_labels:
            raise LabelLimit(f"more than {max_labels:,} labels")
        l_cost.append(c)
        l_time.append(t)
        l_node.append(node)
        l_state.append(state)
        l_vec.append(vec)
        l_parent.append(parent)
        l_edge.append(edge)
        l_live.append(_OPEN)
        push(heap, (fc, ft, new))

    for v, c0, t0, state in starts:
        hv_c, hv_t = h_cost[v], h_time[v]
        if not (c0 >= 0.0 and t0 >= 0.0):
            raise ValueError(f"start at {v} has a negative or NaN weight ({c0}, {t0})")
        if hv_c == inf or hv_t == inf or c0 == inf or t0 == inf:
            continue
        key, vec = split(state)
        mc, mt = more(state, v) if more is not None else (0.0, 0.0)
        add(v, c0, t0, state, vec, key, -1, -1, c0 + max(hv_c, 0.0) + mc, t0 + max(hv_t, 0.0) + mt)

    expanded = 0
    capped = False
    full = False  # max_routes solutions held: finish the tolerance tie window, then stop
    last_cost = 0.0
    while heap:
        fc, ft, lid = pop(heap)
        if l_live[lid] != _OPEN:
            continue
        if sol[2] and _covered(sol[0], sol[1], fc, ft):
            l_live[lid] = _CLOSED  # filtered; it stays in its bucket as a witness
            continue
        if full and not _leq(fc, last_cost):
            capped = True
            break
        l_live[lid] = _CLOSED
        expanded += 1
        u = l_node[lid]
        gc, gt = l_cost[lid], l_time[lid]
        if u == _SINK:
            if full:
                i = bisect_left(sol[0], gc)
                near = [j for j in (i - 1, i) if 0 <= j < len(sol[0])]
                if not any(_leq(gc, sol[0][j]) and _leq(gt, sol[1][j]) for j in near):
                    capped = True
                    break
            _insert(sol[0], sol[1], sol[2], gc, gt, lid)
            if len(sol[2]) >= max_routes:
                full = True
                last_cost = gc
            continue
        state = l_state[lid]
        for v, wc, wt, e in adj[u]:
            if not (wc >= 0.0 and wt >= 0.0):
                raise ValueError(f"edge {e} ({u}->{v}) has a negative or NaN weight ({wc}, {wt})")
            if wc == inf or wt == inf:
                continue
            hv_c, hv_t = h_cost[v], h_time[v]
            if hv_c == inf or hv_t == inf:
                continue
            xc, xt, after = step(state, v, e)
            if not (xc >= 0.0 and xt >= 0.0):
                raise ValueError(f"step {e} adds a negative or NaN weight ({xc}, {xt})")
            if xc == inf or xt == inf:
                continue  # not usable from this state
            c2, t2 = gc + wc + xc, gt + wt + xt
            f2c, f2t = c2 + max(hv_c, 0.0), t2 + max(hv_t, 0.0)
            if sol[2] and _covered(sol[0], sol[1], f2c, f2t):
                continue
            if more is not None:
                mc, mt = more(after, v)
                f2c, f2t = f2c + mc, f2t + mt
                if sol[2] and _covered(sol[0], sol[1], f2c, f2t):
                    continue
            key, vec = split(after)
            add(v, c2, t2, after, vec, key, lid, e, f2c, f2t)
        ex = exits.get(u)
        if ex is not None:
            c2, t2 = gc + ex[0], gt + ex[1]
            if not (sol[2] and _covered(sol[0], sol[1], c2, t2)):
                add(_SINK, c2, t2, None, (), None, lid, -1, c2, t2)

    routes = []
    for lid in sol[2]:
        k = l_parent[lid]  # the exit's label
        nodes = [l_node[k]]
        edges = []
        while l_parent[k] >= 0:
            edges.append(l_edge[k])
            k = l_parent[k]
            nodes.append(l_node[k])
        nodes.reverse()
        edges.reverse()
        routes.append(ParetoRoute(l_cost[lid], l_time[lid], tuple(nodes), tuple(edges)))
    return ParetoResult(tuple(routes), capped, expanded, len(l_cost))
