"""The search stage for a whole workbook: for each shipment pick the objective and the
candidate vehicles, build (once, cached) the compact network of each profile, run A*, and
hand the lanes found to the costing stage."""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace

import networkx as nx

from costing.contract.inputs import tunnel_forbids, tunnel_letter
from costing.model import WARNING, Model, Problem, RateCard, Shipment
from costing.money import minor_unit
from costing.network.build import (
    CompactNetwork,
    Profile,
    card_of,
    compact,
    exit_weight,
    explain_no_route,
    start_weight,
)
from costing.network.search import astar, dijkstra_all
from costing.objectives import objective
from costing.price.cost import NO_ROUTE, REJECTED, CostedShipment, cost_route, unrouted
from costing.price.rates import load_vehicles
from costing.price.rules import rules_for


@dataclass
class RunStats:
    searches: int = 0
    settled: int = 0
    pushed: int = 0
    networks: int = 0
    bounds: dict[str, str] = field(default_factory=dict)  # profile label -> bound used
    batches: int = 0  # one-to-many searches, each serving a group of shipments
    batched: int = 0  # shipment searches answered by them
    seconds: dict[str, float] = field(default_factory=dict)  # stage -> wall seconds


def _label(p: Profile) -> str:
    cards = ", ".join(f"{v} on {m} x{n}" for v, m, n in p.cards)
    extra = f", {len(p.blocked)} restricted lane steps" if p.blocked else ""
    return f"{p.objective}: {cards}{extra}"


def _uses(name: str, quantity: str) -> bool:
    """Whether objective `name` weighs `quantity` (costing.objectives)."""
    return any(q == quantity for q, _c in objective(name).terms)


def objective_for(model: Model, shipment: Shipment, override: str | None) -> str:
    """A shipment's own objective wins; then the command line; then Settings."""
    return shipment.objective or override or model.settings.objective


def make_profile(model: Model, s: Shipment, objective: str, cards: list[RateCard],
                 restricted: bool = True) -> Profile:
    """The rate cards shipment `s` may use, with the vehicles each needs, and the lane steps
    its hazmat flag and weight forbid (lane by lane, card by card)."""
    blocked: set[tuple[str, int]] = set()
    if restricted:
        for lane in model.restricted_lanes:
            for k, card in enumerate(cards):
                if lane.mode != card.mode:
                    continue
                if s.hazmat and not lane.hazmat_allowed:
                    blocked.add((lane.lane_id, k))
                elif s.hazmat and tunnel_forbids(hazmat_tunnel_letter(s), lane.tunnel_category):
                    blocked.add((lane.lane_id, k))
                elif lane.max_weight_t is not None and \
                        loaded_weight(s, card) > lane.max_weight_t + 1e-9:
                    blocked.add((lane.lane_id, k))
    needs_tonnes = _uses(objective, "co2e") and any(
        c.fuel_l_per_100km is None or c.co2e_kg_per_litre is None
        or c.fuel_empty_l_per_100km is not None for c in cards)  # default intensity, or fuel by load
    return Profile(objective,
                   tuple((c.vehicle, c.mode, load_vehicles(s.weight_t, c, s.pallets, s.volume_m3))
                         for c in cards),
                   frozenset(blocked), s.weight_t if needs_tonnes else 0.0,
                   tie_break=objective != "cost")


def hazmat_tunnel_letter(s: Shipment) -> str | None:
    """The ADR tunnel category from which dangerous goods `s` are kept out (to E): its
    tunnel_code's letter (costing.contract.inputs.tunnel_letter), or B, the most restrictive,
    for dangerous goods without a code (the safe reading of the yes/no case); None otherwise."""
    if not s.hazmat:
        return None
    return tunnel_letter(s.tunnel_code) or "B"


def loaded_weight(s: Shipment, card: RateCard) -> float:
    """Gross weight of one loaded vehicle: its share of the load plus its tare."""
    return s.weight_t / load_vehicles(s.weight_t, card, s.pallets, s.volume_m3) + card.tare_t


# a group of this many shipments with one origin and profile is searched one-to-many
BATCH_MIN = 3
# from this many depots on, a one-card profile is searched by the array engine (landmark bound,
# compiled one-to-all searches) instead of the pure-Python search
ENGINE_MIN_DEPOTS = 20_000
# the driving clock is carried in the search of networks up to this many (depot, card) states;
# larger ones choose on driving hours and add the stops after (a note says so)
CLOCK_MAX_STATES = 50_000
ENGINE_LANDMARKS = 24  # 16 settled 4.5-5.5 % of Dijkstra's nodes at 100k, 24 about 3.6 %


class Router:
    """Routes shipments over one model, caching a compact network per profile."""

    def __init__(self, model: Model, graph: nx.MultiDiGraph, stats: RunStats | None = None):
        self.model = model
        self.graph = graph
        self.stats = stats or RunStats()
        self.problems: list[Problem] = []
        self.networks: dict[Profile, CompactNetwork] = {}
        self.vehicles = model.vehicles()
        self.places = minor_unit(model.settings.currency)
        self._pairs: dict[Profile, list] = {}
        self._layers: dict = {}  # per-card lane weights shared by profiles
        self._batched: dict = {}  # (profile, origin, destination) -> (network, search result)
        self._engines: dict = {}  # profile -> costing.network.engine.SearchEngine
        self.rules = rules_for(model.settings)  # driving-time rules, or None
        self.clock_fallbacks: set[str] = set()  # shipments searched without the clock (too many labels)
        self._reverse: dict = {}  # profile -> reversed rows of its compact network (clock bounds)
        self._costed: dict = {}  # (shipment id, route key) -> priced route (`price`)
        self._charges: dict = {}  # lane step's charges by their arguments (cost_route's memo)

    def network(self, profile: Profile) -> CompactNetwork:
        """The compact network of `profile`, built once and cached (its build time is recorded)."""
        cn = self.networks.get(profile)
        if cn is None:
            t0 = time.perf_counter()
            cn = self.networks[profile] = compact(self.graph, self.model, profile, self._layers)
            key = "compact networks (within search)"
            self.stats.seconds[key] = self.stats.seconds.get(key, 0.0) + time.perf_counter() - t0
            self.stats.bounds[_label(profile)] = cn.bound_note
        return cn

    def _ends(self, s: Shipment, profile: Profile, cn: CompactNetwork):
        model = self.model
        origin, dest = model.depot(s.origin), model.depot(s.destination)
        sources = [(cn.node(s.origin, k), start_weight(model, profile, k, origin, self.places))
                   for k in range(cn.n_cards)]
        exits = {cn.node(s.destination, k): exit_weight(model, profile, k, dest, self.places)
                 for k in range(cn.n_cards)}
        return sources, exits

    def prepare(self, shipments, objective: str | None, force: bool = False) -> None:
        """Batch the searches of shipments that share an origin and a profile: one one-to-many
        search per group of BATCH_MIN or more, stopped when all its destinations are settled,
        instead of one A* each. The answers are the least weights A* finds (search.one_to_many);
        `search` then returns them. Smaller groups keep per-shipment A*.

        `objective` is the command line's (a shipment's own objective wins, then it, then
        Settings), or with `force` the objective every shipment is searched under (the
        comparison across objectives)."""
        from costing.network.search import one_to_many

        groups: dict[tuple[Profile, str], list[Shipment]] = {}
        for s in shipments:
            if s.origin == s.destination:
                continue
            obj = objective if force and objective else objective_for(self.model, s, objective)
            for cards in self.candidates(s, obj):
                groups.setdefault((make_profile(self.model, s, obj, cards), s.origin), []).append(s)
        for (profile, origin), members in groups.items():
            dests = [d for d in dict.fromkeys(m.destination for m in members)
                     if (profile, origin, d) not in self._batched]
            if len(members) < BATCH_MIN or not dests or self.clocked(profile):
                continue  # few, answered already, or searched with the driving clock (one each)
            cn = self.network(profile)
            sources, _exits = self._ends(members[0], profile, cn)
            targets = [self._ends(Shipment("", origin, d, 0.0), profile, cn)[1] for d in dests]
            engine = self._engine(profile, cn)
            if engine is not None:  # its statistics split one search's counts over its results
                raw = engine.route_many([(sources[0][0], next(iter(t))) for t in targets],
                                        lower_bound=cn.bound)
                results = [_with_ends(r, sources[0][1], next(iter(t.values()))) for r, t in zip(raw, targets)]
                settled = sum(r.stats.settled for r in raw)
                pushed = sum(r.stats.pushed for r in raw)
            else:  # one search: every result carries its whole count
                results = one_to_many(cn.arcs, sources, targets)
                settled = results[0].stats.settled if results else 0
                pushed = results[0].stats.pushed if results else 0
            self.stats.batches += 1
            self.stats.batched += len(members)
            self.stats.settled += settled
            self.stats.pushed += pushed
            for d, res in zip(dests, results):
                self._batched[(profile, origin, d)] = (cn, res)

    def prepared(self, shipments, objective: str | None, force: bool = False):
        """`prepare`, made for its answers (in another process: `costing.aside`): (the answers
        it added as (profile, origin, destination, search result), in the order it made them;
        what it added to the statistics: batches, batched, settled, pushed). `adopt` records
        them in the router that asked."""
        before = set(self._batched)
        st = self.stats
        counts = (st.batches, st.batched, st.settled, st.pushed)
        self.prepare(shipments, objective, force)
        new = [(*key, res) for key, (_cn, res) in self._batched.items() if key not in before]
        return new, tuple(b - a for a, b in zip(counts, (st.batches, st.batched, st.settled, st.pushed)))

    def adopt(self, prepared) -> None:
        """Record `prepared` (what `prepared` returned, possibly in another process) as `prepare`
        would have: the networks built in the same order, the answers, the statistics. Call it
        where `prepare` would have run, on a router in the state the other one was in."""
        new, (batches, batched, settled, pushed) = prepared
        for profile, origin, dest, res in new:
            key = (profile, origin, dest)
            if key not in self._batched:
                self._batched[key] = (self.network(profile), res)
        st = self.stats
        st.batches += batches
        st.batched += batched
        st.settled += settled
        st.pushed += pushed

    def search(self, s: Shipment, profile: Profile):
        """(network, search result) of shipment `s` under `profile`: from the batched one-to-many
        search when one served it, else one search (the array engine for large one-card networks,
        A* with the profile's bound otherwise)."""
        hit = self._batched.get((profile, s.origin, s.destination))
        if hit is not None:
            return hit
        cn = self.network(profile)
        sources, exits = self._ends(s, profile, cn)
        engine = self._engine(profile, cn)
        if self.clocked(profile):
            res = self._clock_search(s, profile, cn, sources, exits)
        elif engine is not None:
            d = cn.node(s.destination, 0)
            res = _with_ends(engine.astar(sources[0][0], d, lower_bound=cn.bound(cn.index[s.destination])),
                             sources[0][1], exits[d])
        else:
            res = astar(cn.arcs, sources, exits, cn.bound(cn.index[s.destination]))
        self.stats.searches += 1
        self.stats.settled += res.stats.settled
        self.stats.pushed += res.stats.pushed
        return cn, res

    def clocked(self, profile: Profile) -> bool:
        """Whether the search of `profile` carries the driving clock (costing.network.clock):
        driving rules on, the setting on, an objective that weighs cost or hours (stops add both),
        and a road card."""
        st = self.model.settings
        return (self.rules is not None and st.driving_clock_in_search == "yes"
                and (_uses(profile.objective, "cost") or _uses(profile.objective, "hours"))
                and any(m == "road" for _v, m, _n in profile.cards)
                and len(self.model.depots) * len(profile.cards) <= CLOCK_MAX_STATES)

    def _clock_search(self, s: Shipment, profile: Profile, cn: CompactNetwork, sources, exits):
        """The clock-labelled search of `s`; on too many labels, the plain search (noted)."""
        from costing.network.build import stop_weight
        from costing.network.clock import ClockLimit, clock_astar

        model, places = self.model, self.places
        memo: dict = {}

        def stops(k: int, b: float, r: float):
            w = memo.get((k, b, r))
            if w is None:
                w = memo[(k, b, r)] = stop_weight(model, profile, k, b, r, places)
            return w

        # exact shortcut: stops only add weight, so the plain search's optimum is a lower bound;
        # when its route needs no stop, its weight with the clock is that bound: it is optimal
        plain = astar(cn.arcs, sources, exits, cn.bound(cn.index[s.destination]))
        if not plain.found or self._stop_free(profile, cn, plain):
            return plain
        # the bound: the least remaining weight without stops (a reverse search from the exits);
        # stops only add weight, so it is consistent for the clock labels too, and much closer
        # than the straight line
        rev = self._reverse.get(profile)
        if rev is None:
            rev = self._reverse[profile] = [[] for _ in cn.adj]
            for u, row in enumerate(cn.adj):
                for v, w, e in row:
                    rev[v].append((u, w, e))
        remaining = dijkstra_all(rev, list(exits.items()))
        try:
            return clock_astar(cn, sources, exits, remaining, self.rules,
                               lambda k: profile.cards[k][1] == "road", stops,
                               cap=max(20_000, 40 * len(cn.adj)),
                               on_duty=lambda state: model.depot(cn.depot_of(state)).handling_hours)
        except ClockLimit:
            self.clock_fallbacks.add(s.shipment_id)
            return astar(cn.arcs, sources, exits, cn.bound(cn.index[s.destination]))

    def _stop_free(self, profile: Profile, cn: CompactNetwork, res) -> bool:
        """Whether the route `res` needs no break or rest under the driving rules (its runs
        clocked as the legs are: costing.price.rules.advance from a rested driver)."""
        from costing.price.rules import advance, start_clock

        def loading(state: int) -> float:
            return self.model.depot(cn.depot_of(state)).handling_hours

        clock = start_clock(self.rules, loading(res.nodes[0]))
        for i, e in enumerate(res.edges):
            step = cn.steps[e]
            if step.transfer is not None:
                clock = start_clock(self.rules, loading(res.nodes[i + 1]))
            elif profile.cards[step.card][1] == "road":
                brk, rest, clock = advance(clock, step.use.hours, self.rules)
                if brk or rest:
                    return False
        return True

    def price(self, s: Shipment, obj: str, cn: CompactNetwork, res) -> CostedShipment:
        """The route `res` of `s` priced (costing.price.cost.cost_route) under objective `obj`.

        A route is priced once per shipment: the same cards on the same lane steps found again
        (under another objective, or another card set of the same route) reuse the priced legs,
        which depend only on the shipment and the route, with `obj` set on the copy."""
        runs = _runs(self.model, cn, res)
        key = (s.shipment_id, tuple((card.vehicle, card.mode, tuple(u.key for u in uses))
                                    for card, uses in runs))
        hit = self._costed.get(key)
        if hit is None:
            hit = self._costed[key] = cost_route(self.model, s, obj, runs, memo=self._charges)
        elif hit.objective != obj:
            hit = replace(hit, objective=obj)
        return hit

    def pool(self, s: Shipment) -> list[RateCard]:
        """The rate cards a shipment may use: its named vehicle's, or every card."""
        return [r for r in self.model.rates if not s.vehicle or r.vehicle == s.vehicle]

    def _engine(self, profile: Profile, cn: CompactNetwork):
        """The array engine for a large one-card network (built once per profile), else None."""
        if cn.n_cards != 1 or len(cn.depot_ids) < ENGINE_MIN_DEPOTS or profile.tie_break:
            return None  # tie-broken weights are triples: the pure-Python core searches them
        engine = self._engines.get(profile)
        if engine is None:
            from costing.network.engine import CSRGraph, SearchEngine

            t0 = time.perf_counter()
            engine = self._engines[profile] = SearchEngine(CSRGraph.from_adjacency(cn.adj),
                                                           landmarks=ENGINE_LANDMARKS)
            key = "landmarks (within search)"
            self.stats.seconds[key] = self.stats.seconds.get(key, 0.0) + time.perf_counter() - t0
            self.stats.bounds[_label(profile)] += f"; with {ENGINE_LANDMARKS} landmarks (array engine)"
        return engine

    def candidates(self, s: Shipment, objective: str) -> list[list[RateCard]]:
        """Sets of rate cards to search. A minimum charge is not additive lane by lane (a route
        pays the largest min_charge of the cards it uses), so one search is run per distinct
        min_charge t over the cards with min_charge <= t, and the best wins (`better`). For
        the cost objective that is exact: the best route r* with largest card minimum t* is a
        candidate of the search at t*, whose result has subtotal <= r*'s and minimum <= t*, so
        its total max(subtotal, minimum) is no more than r*'s.

        The other objectives break ties of their value toward the lower total cost, then the
        fewer legs, and need the same levels for the cost part: let r* be the best route by
        (objective, total cost, legs) and t* its largest card minimum. The search at t* reaches
        the least objective value (r* is in it) and, its weights being Lex(objective, cost,
        legs) (`costing.network.build._weigh`), returns a route of that value whose cost
        before the minimum (its subtotal without break pay) is <= r*'s, with minimum <= t*:
        its total is no more than r*'s. Legs are the last key among routes of equal subtotal;
        two routes whose subtotals differ but are both lifted to the same minimum charge are
        equal in total and the search does not compare their legs (stated approximation)."""
        pool = self.pool(s)
        levels = sorted({c.min_charge for c in pool})
        return [[c for c in pool if c.min_charge <= t] for t in levels]

    def route(self, s: Shipment, obj: str, notes: bool = True) -> CostedShipment:
        """Route and price shipment `s` under objective `obj`: the cheapest feasible card set, its
        legs and notes; a result with the reason when it has no route."""
        return _route_one(self, s, obj, notes)

    def alternatives(self, s: Shipment, objectives) -> dict[str, CostedShipment]:
        """The best route of `s` under each objective (no problems are recorded)."""
        saved = self.problems
        self.problems = []
        try:
            return {obj: self.route(s, obj, notes=False) for obj in objectives}
        finally:
            self.problems = saved

    def frontier(self, s: Shipment, max_routes: int,
                 clock_labels: int | None = None, found=None) -> tuple[list[CostedShipment], bool]:
        """Routes of `s` that no other route beats on both cost and time, cheapest first, and
        whether the cap stopped the search early: `frontier_routes` priced (`price`).

        `found` is what ``frontier_routes(s, max_routes, clock_labels)`` returned for `s`,
        possibly in another process (`costing.aside`); its problems and counts are recorded here
        as the search would have recorded them. None: searched now."""
        if s.origin == s.destination:
            return [], False
        if found is None:
            routes, capped = self.frontier_routes(s, max_routes, clock_labels)
        else:
            routes, capped, fell_back, problems = found
            self.stats.searches += 1
            self.problems += problems
            if fell_back:
                self.__dict__.setdefault("frontier_fallbacks", set()).add(s.shipment_id)
        pc = make_profile(self.model, s, "cost", self.pool(s))
        cnc = self.network(pc)
        self.network(replace(pc, objective="time"))  # the networks built are those of a search here
        # priced once per shipment (`price`): the cheapest is usually the chosen route already
        return [self.price(s, "cost", cnc, r) for r in routes], capped

    def frontier_found(self, s: Shipment, max_routes: int, clock_labels: int | None = None):
        """``frontier_routes`` of `s` with what it recorded: (routes, capped, whether `s` fell back
        to the plain frontier, its problems), the `found` argument of `frontier`; the router's
        problems are left as they were (to be recorded where `frontier` prices the routes)."""
        if s.origin == s.destination:
            return [], False, False, []
        saved, self.problems = self.problems, []
        try:
            routes, capped = self.frontier_routes(s, max_routes, clock_labels)
            fell_back = s.shipment_id in getattr(self, "frontier_fallbacks", ())
            return list(routes), capped, fell_back, self.problems
        finally:
            self.problems = saved

    def frontier_routes(self, s: Shipment, max_routes: int, clock_labels: int | None = None):
        """The search of `frontier`: (routes, capped), each route a ParetoRoute over the compact
        network of `s`'s cost profile (nodes and edges), cheapest first; counts the search and
        records a fallback's problem.

        Time is drive + handling hours and cost the sum of the steps' costs (before the minimum
        charge). When the driving clock is in the search of the shipment's cost profile
        (`clocked`), time is elapsed hours with the breaks and rests its legs show, and cost
        includes their pay as Settings break_hours_paid / rest_hours_paid say, as `cost_route`
        prices the route: the search carries the clock in its labels
        (costing.network.pareto_clock). The plain frontier is searched first: stops only add
        weight, so when none of its routes stops it is the frontier with the clock too. Past
        `clock_labels` labels (default: 10 per state of the compact network, at least 50,000;
        about 550 bytes each, measured) the shipment keeps the plain frontier, is listed in the set
        `frontier_fallbacks` (made on the first fallback) and gets a warning. What is exact and
        what is approximated, and which clocks are compared: costing.network.pareto_clock."""
        if s.origin == s.destination:
            return [], False
        pc, net, starts, exits = self._frontier_query(s)
        result = net.frontier(starts, exits, key=s.destination, max_routes=max_routes)
        self.stats.searches += 1
        cnc = self.network(pc)
        if self.clocked(pc) and not all(self._stop_free(pc, cnc, r) for r in result.routes):
            from costing.network.build import stop_weight
            from costing.network.pareto_clock import LabelLimit, clock_frontier
            from costing.price.rules import advance, start_clock

            model, rules, places, st = self.model, self.rules, self.places, self.model.settings
            inf = float("inf")
            pt = replace(pc, objective="time")
            road = [m == "road" for _v, m, _n in pc.cards]
            memo: dict = {}

            def loading(state: int) -> float:
                return model.depot(cnc.depot_of(state)).handling_hours

            # a label's state: (whether its vehicle run has no lane step yet, the driving clock)
            def step(state, head: int, e: int):
                """(stop pay, stop hours, state after) of step e, as cost_route prices its leg."""
                empty, clock = state
                use = cnc.steps[e]
                if use.transfer is not None:
                    if empty:  # a run without a lane is no run (`_runs_from` drops it): changing
                        return inf, inf, state  # twice at one depot would rest a driver unpriced
                    return 0.0, 0.0, (True, start_clock(rules, loading(head)))  # a rested driver
                if not road[use.card] or use.use.hours <= 0:
                    return 0.0, 0.0, (False, clock)
                brk, rest, after = advance(clock, use.use.hours, rules)
                if not (brk or rest):
                    return 0.0, 0.0, (False, after)
                w = memo.get((use.card, brk, rest))
                if w is None:
                    w = memo[(use.card, brk, rest)] = (stop_weight(model, pc, use.card, brk, rest, places),
                                                       stop_weight(model, pt, use.card, brk, rest, places))
                return w[0], w[1], (False, after)

            # the order (proved in costing.network.pareto_clock): clocks agree in driving today,
            # on duty, today's limit and longer days used; then less driving since the break and
            # fewer reduced rests used are no worse, when there is no duty window and each paid
            # stop is a whole number of minor units; otherwise equal clocks only
            def whole(hours: float) -> bool:
                for v, m, n in pc.cards:
                    if m == "road":
                        x = n * hours * card_of(model, v, m).per_hour * 10 ** places
                        if abs(x - round(x)) > 1e-6:
                            return False
                return True

            paid = ([rules.break_hours] if st.break_hours_paid == "yes" else []) + \
                ([rules.daily_rest] + ([rules.reduced_rest] if rules.reduced_rest is not None else [])
                 if st.rest_hours_paid == "yes" else [])
            if rules.duty_window is None and all(whole(h) for h in paid):
                def split(state):
                    empty, c = state
                    return (empty, c[1], c[2], c[3], c[4]), (c[0], c[5])
            else:
                def split(state):
                    return state, ()

            # the bound `more` (pareto_clock): the stops of the least driving from a state to
            # where its run ends (an exit or a change of vehicle), cached per destination
            cache = self.__dict__.setdefault("_frontier_drive", {})
            left = cache.get((pc, s.destination))
            if left is None:
                if len(cache) * len(cnc.adj) > 2_000_000:
                    cache.clear()
                rev: list[list[tuple[int, float, int]]] = [[] for _ in cnc.adj]
                ends = {x: 0.0 for x in exits}
                for u, row in enumerate(cnc.adj):
                    for v, _w, e in row:
                        use = cnc.steps[e]
                        if use.transfer is not None:
                            ends[u] = 0.0
                        else:
                            rev[v].append((u, use.use.hours if road[use.card] else 0.0, e))
                left = cache[(pc, s.destination)] = dijkstra_all(rev, list(ends.items()))
            additive = all(whole(h) for h in paid)

            def more(state, v: int):
                clock = state[1]
                k = v % cnc.n_cards
                if not road[k] or not left[v] < inf:
                    return 0.0, 0.0
                brk, rest, _after = advance(clock, left[v], rules)
                if not (brk or rest):
                    return 0.0, 0.0
                return (stop_weight(model, pc, k, brk, rest, places) if additive else 0.0), brk + rest

            hc, ht = net.bounds(exits, key=s.destination)
            cap = clock_labels if clock_labels is not None else max(50_000, 10 * len(cnc.adj))
            try:
                result = clock_frontier(net.adj, [(v, c0, t0, (True, start_clock(rules, loading(v))))
                                                  for v, c0, t0 in starts],
                                        exits, hc, ht, step, split, max_routes, cap, more)
            except LabelLimit:
                self.__dict__.setdefault("frontier_fallbacks", set()).add(s.shipment_id)
                sheet, cell = model.cell("Shipments", "shipment_id", s.row)
                self.problems.append(Problem(
                    WARNING, sheet, cell,
                    f"shipment {s.shipment_id}: trade-offs compared on drive + handling hours, without "
                    f"breaks and rests (more than {cap:,} driving-clock labels); planning estimate",
                    "nothing to do; the routes listed are costed with their stops"))
        return result.routes, result.capped

    def _frontier_query(self, s: Shipment):
        """(cost profile, its FrontierNetwork with the cost and time of every edge, sources as
        (node, start cost, start hours), exits as node -> (exit cost, exit hours)) for the
        trade-offs of `s`; the network is made once per profile."""
        from costing.network.pareto import FrontierNetwork

        pc = make_profile(self.model, s, "cost", self.pool(s))
        pt = replace(pc, objective="time")
        cnc, cnt = self.network(pc), self.network(pt)
        net = self._pairs.get(pc)
        if net is None:  # both networks list the same edges in the same order
            net = self._pairs[pc] = FrontierNetwork(
                [[(v, wc, wt, e) for (v, wc, e), (_v, wt, _e) in zip(ec, et)]
                 for ec, et in zip(cnc.adj, cnt.adj)])
        starts_c, exits_c = self._ends(s, pc, cnc)
        starts_t, exits_t = self._ends(s, pt, cnt)
        starts = [(v, wc, wt) for (v, wc), (_v, wt) in zip(starts_c, starts_t)]
        exits = {x: (wc, exits_t[x]) for x, wc in exits_c.items()}
        return pc, net, starts, exits


def _with_ends(res, start: float, exit_weight: float):
    """A one-card route from the engine, with the route's start and exit weights added."""
    if not res.found:
        return res
    return replace(res, weight=res.weight + start + exit_weight)


def _runs_from(model: Model, cn: CompactNetwork, first_node: int, edges) -> list[tuple[RateCard, list]]:
    """A path of the compact network as vehicle runs: (rate card, consecutive lane steps)."""
    def card(k):
        v, m, _n = cn.profile.cards[k]
        return card_of(model, v, m)

    runs: list[tuple[RateCard, list]] = [(card(first_node % cn.n_cards), [])]
    for e in edges:
        step = cn.steps[e]
        if step.transfer is not None:
            runs.append((card(step.card), []))
        else:
            runs[-1][1].append(step.use)
    return [r for r in runs if r[1]]


def _runs(model: Model, cn: CompactNetwork, res) -> list[tuple[RateCard, list]]:
    return _runs_from(model, cn, res.nodes[0], res.edges)


def _route_one(router: Router, s: Shipment, obj: str, with_notes: bool = True) -> CostedShipment:
    model = router.model
    if s.origin == s.destination:
        if with_notes:
            sheet, cell = model.cell("Shipments", "destination", s.row)
            router.problems.append(Problem(WARNING, sheet, cell, f"shipment {s.shipment_id} starts and "
                                           f"ends at {s.origin}; nothing to route",
                                           "correct origin or destination"))
        return unrouted(model, s, REJECTED, obj, f"origin and destination are both {s.origin}")
    candidates = router.candidates(s, obj)
    best: CostedShipment | None = None
    best_vs: list[RateCard] = []
    settled = pushed = 0
    for vs in candidates:
        profile = make_profile(model, s, obj, vs)
        cn, res = router.search(s, profile)
        settled += res.stats.settled
        pushed += res.stats.pushed
        if not res.found:
            continue
        costed = router.price(s, obj, cn, res)
        if best is None or better(costed, best):
            best, best_vs = costed, vs
    if best is None:
        msg = _why_no_route(router, s, obj, candidates[-1]) if with_notes else "no route"
        return unrouted(model, s, NO_ROUTE, obj, msg, s.vehicle or "", settled, pushed)
    if not with_notes:
        return replace(best, settled=settled, pushed=pushed)
    notes = []
    if best.vehicles > 1:
        sheet, cell = model.cell("Shipments", "weight_t", s.row)
        split = max(best.legs, key=lambda leg: leg.vehicles)
        note = (f"{s.weight_t:g} t is more than one {split.card.vehicle} carries "
                f"({split.card.payload_t:g} t): split over {split.vehicles} vehicles")
        notes.append(note)
        router.problems.append(Problem(WARNING, sheet, cell, f"shipment {s.shipment_id}: {note}",
                                       "check the weight; otherwise nothing to do: each vehicle is costed"))
    restricted = _restriction_note(router, s, obj, best_vs, best)
    if restricted:
        notes.append(restricted)
    modes = list(dict.fromkeys(leg.use.lane.mode for leg in best.legs))
    if len(modes) > 1:
        notes.append("intermodal: " + " > ".join(_run_modes(best)))
    crossdocks = [f"{a.card.vehicle} > {b.card.vehicle} at {a.use.to_depot}"
                  for a, b in zip(best.legs, best.legs[1:])
                  if a.card.mode == b.card.mode and a.card.vehicle != b.card.vehicle]
    if crossdocks:
        notes.append("vehicle changed (cross-dock): " + "; ".join(crossdocks))
    if best.break_hours or best.rest_hours:
        clocked = router.clocked(make_profile(model, s, obj, best_vs))
        if clocked and s.shipment_id not in router.clock_fallbacks:
            how = "route chosen with them in the search"
        elif s.shipment_id in router.clock_fallbacks:
            how = "route chosen on driving hours: too many clock labels for the search"
        else:
            how = "route chosen on driving hours"
        notes.append(f"driving rules: {best.break_hours:g} h of breaks and {best.rest_hours:g} h of rest "
                     f"on the chosen route ({how}; planning estimate)")
    if any(leg.co2e_basis != "fuel" for leg in best.legs):
        notes.append("CO2e partly from default intensities (see Legs)")
    if not s.vehicle and len(router.vehicles) > 1:
        notes.append(f"vehicle chosen by {obj}")
    return replace(best, message="; ".join(notes), settled=settled, pushed=pushed)


def better(a: CostedShipment, b: CostedShipment) -> bool:
    """Whether route `a` beats route `b`: a lower objective value (by more than 1e-9 of its unit,
    float noise), or an equal one and then a lower total cost, then fewer legs. Deterministic:
    on a full tie the route found first is kept."""
    if a.objective_value < b.objective_value - 1e-9:
        return True
    if a.objective_value > b.objective_value + 1e-9:
        return False
    return (a.total_cost, len(a.legs)) < (b.total_cost, len(b.legs))


def _run_modes(c: CostedShipment) -> list[str]:
    out: list[str] = []
    last = None
    for leg in c.legs:
        key = (leg.card.vehicle, leg.card.mode)
        if key != last:
            out.append(f"{leg.card.mode} ({leg.card.vehicle})")
            last = key
    return out


def _blocked_reasons(model: Model, s: Shipment, cn: CompactNetwork, res, profile: Profile) -> list[str]:
    """The restrictions of `profile` that the (unrestricted) route `res` runs into."""
    reasons = []
    for e in res.edges:
        step = cn.steps[e]
        if step.use is None or (step.use.lane.lane_id, step.card) not in profile.blocked:
            continue
        lane = step.use.lane
        v, m, _n = cn.profile.cards[step.card]
        if s.hazmat and not lane.hazmat_allowed:
            reasons.append(f"{lane.lane_id} does not allow dangerous goods")
        elif s.hazmat and tunnel_forbids(hazmat_tunnel_letter(s), lane.tunnel_category):
            code = (f"tunnel code {s.tunnel_code}" if s.tunnel_code
                    else "dangerous goods without a tunnel code")
            reasons.append(f"{lane.lane_id} has a category {lane.tunnel_category} tunnel, closed to "
                           f"{code}")
        else:
            reasons.append(f"{lane.lane_id} allows at most {lane.max_weight_t:g} t per vehicle, "
                           f"a loaded {v} weighs {loaded_weight(s, card_of(model, v, m)):g} t")
    return list(dict.fromkeys(reasons))


def _restriction_note(router: Router, s: Shipment, obj: str, vehicles, best: CostedShipment) -> str:
    """When restrictions moved the route, say which and what they cost."""
    model = router.model
    profile = make_profile(model, s, obj, vehicles)
    if not profile.blocked:
        return ""
    free = make_profile(model, s, obj, vehicles, restricted=False)
    cn, res = router.search(s, free)
    if not res.found:
        return ""
    reasons = _blocked_reasons(model, s, cn, res, profile)
    if not reasons:
        return ""
    unrestricted = cost_route(model, s, obj, _runs(model, cn, res))
    delta = best.objective_value - unrestricted.objective_value
    unit = objective(obj).unit_text(model.settings.currency)
    return f"restrictions: {'; '.join(reasons)}; route changed, {delta:+.2f} {unit}"


def _why_no_route(router: Router, s: Shipment, obj: str, vehicles) -> str:
    """Name the restriction that blocks the shipment, or the depots that are cut off."""
    model = router.model
    profile = make_profile(model, s, obj, vehicles)
    if profile.blocked:
        free = make_profile(model, s, obj, vehicles, restricted=False)
        cn, res = router.search(s, free)
        if res.found:
            return ("blocked by lane restrictions: " + "; ".join(_blocked_reasons(model, s, cn, res, profile))
                    + " (no other route avoids them)")
    return explain_no_route(router.graph, router.network(profile), s.origin, s.destination)
