"""The driving clock inside the search: labels that carry, besides the route's weight, the driving
since the last break and the day's driving, so the weight of a route includes the breaks and daily
rests its driving calls for and the route found is optimal with them.

How. The search core is unchanged: it runs on an implicit expanded network whose nodes are
(state of the compact network, the driving clock of `costing.price.rules`: driving since the
last break, driving today, time on duty, today's limit, longer days and reduced rests used),
made as the search first reaches them (`Arcs` loads rows lazily). An arc of the compact network
from state u, read from clock c, leads to (v, c') where c' and the stops taken on the way come from
`costing.price.rules.advance` (the same step the legs are priced with); its weight is the lane's
weight plus the weight of those stops (`costing.network.build.stop_weight`: their hours for the
time objective, their pay for cost, both for blended). A change of vehicle starts a rested driver
(`start_clock`, on duty for the loading there), as the legs assume, once the run it ends has
driven a lane (a label carries whether it has): a change and back at a hub before driving would
reset the clock in the search while the priced route has one run there, so it is not offered;
non-road steps leave the clock alone (no stops off the road). The exits are joined to one sink
node, the single exit of the core's "exit" mode.

What is exact. The expanded network's arc weights are non-negative and a route's weight is the
sum of its lane, start, exit and transfer weights plus the weights of exactly the stops its legs
show, so the core's proof (costing.network.search) makes the route optimal under the stop model of
`costing.price.rules`. Any bound consistent for the compact network's weights stays consistent
here, as stops only add weight: the caller passes the least remaining weight without stops (a
reverse search from the exits), much closer than the straight line.

The caller (costing.plan.route) first runs the plain search: stops only add weight, so its
optimum is a lower bound, and when that route needs no stop it is optimal with the clock too and
this search is not needed.

What is approximated (stated, not hidden). The stop model itself is the planning model of
`costing.price.rules` (its docstring: one driver, stops as soon as due, longer days used when
reached, reduced rests first; weekly limits and the EU 24-hour period are not modelled);
the distance and emissions objectives do not carry the clock (stops do not change distance or
emissions); the cost-time trade-offs carry it in their own search (costing.network.pareto_clock). The
number of clock labels is capped (`cap`); a search that would pass it raises `ClockLimit` and the
caller falls back to choosing on driving hours, with a note.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence

from costing.network.search import Arcs, SearchResult, astar
from costing.price.rules import DrivingRules, advance, start_clock


class ClockLimit(Exception):
    """The clock-labelled search would need more labels than its cap."""


def clock_astar(cn, sources: Sequence[tuple[int, object]], exits: Mapping[int, object],
                bound: Sequence[float] | None, rules: DrivingRules,
                road: Callable[[int], bool], stop_weight: Callable[[int, float, float], object],
                cap: int = 200_000, on_duty: Callable[[int], float] = lambda state: 0.0) -> SearchResult:
    """Least-weight route of the compact network `cn` with the driving clock in the labels.

    Parameters
    ----------
    cn : costing.network.build.CompactNetwork
        Its rows (head, weight, edge id) and steps; weights in the objective's unit.
    sources : sequence of (state, start weight)
    exits : mapping state -> exit weight
    bound : list per state or None
        Consistent lower bound on the remaining weight (the compact network's), unit as weights.
    rules : DrivingRules
    road : callable card index -> bool
        Whether the card's lane steps run the clock.
    stop_weight : callable (card index, break hours, rest hours) -> weight
        The weight the stops on one step add.
    cap : int
        Most labels (expanded nodes).
    on_duty : callable state -> hours
        Hours on duty (loading) before a vehicle run starting at that state drives.

    Returns
    -------
    SearchResult
        `nodes` are states of `cn` and `edges` its edge ids, as a plain search returns them;
        `weight` includes the stops.

    Raises
    ------
    ClockLimit
        More than `cap` labels would be needed.
    """
    sink = cap
    n = cap + 1
    keys: list[tuple] = []  # (state, driven since the run began?, *clock)
    ids: dict[tuple, int] = {}
    heads: list = [None] * n
    weights: list = [None] * n
    edges: list = [None] * n

    def node(key: tuple) -> int:
        x = ids.get(key)
        if x is None:
            if len(keys) >= cap:
                raise ClockLimit(f"more than {cap:,} clock labels")
            x = ids[key] = len(keys)
            keys.append(key)
        return x

    def load(x: int) -> tuple:
        if x == sink:
            heads[x], weights[x], edges[x] = (), (), ()
            return ()
        u, driven, clock = keys[x][0], keys[x][1], keys[x][2:]
        hs, ws, es = [], [], []
        for v, w, e in cn.adj[u]:
            step = cn.steps[e]
            if step.transfer is not None:
                if not driven:
                    # a change of vehicle before the run has driven a lane (a change and back
                    # at a hub) would start a rested driver's clock, but the priced route has
                    # one run there (an empty run is no run): not offered
                    continue
                after, moved = start_clock(rules, on_duty(v)), False  # a new vehicle run
            elif road(step.card) and step.use.hours > 0:
                brk, rest, after = advance(clock, step.use.hours, rules)
                if brk or rest:
                    w = w + stop_weight(step.card, brk, rest)
                moved = True
            else:
                after, moved = clock, True
            hs.append(node((v, moved, *after)))
            ws.append(w)
            es.append(e)
        if u in exits:
            hs.append(sink)
            ws.append(exits[u])
            es.append(-1)
        heads[x], weights[x], edges[x] = tuple(hs), tuple(ws), tuple(es)
        return heads[x]

    def edge(x: int, i: int) -> int:
        return edges[x][i]

    def h(x: int) -> float:
        return 0.0 if x == sink or bound is None else bound[keys[x][0]]

    starts = [(node((s, False, *start_clock(rules, on_duty(s)))), g0) for s, g0 in sources]
    res = astar(Arcs(n, heads, weights, load, edge), starts, {sink: 0.0}, h)
    if not res.found:
        return res
    nodes = tuple(keys[x][0] for x in res.nodes[:-1])
    return SearchResult(True, res.weight, nodes, res.edges[:-1], res.stats)
