"""Model -> the lane network (a networkx MultiDiGraph) and, per vehicle and objective, the
compact arrays that the search walks, with the straight-line lower bound.

The bound. For goal t, h(v) = gc_km(v, t) * r_min, where r_min is the least
weight(e) / gc_km(ends of e) over the usable lanes with gc_km > 0. For any lane u->v,
w(u, v) >= r_min * gc(u, v) (definition of r_min; lanes with gc = 0 satisfy it trivially as
w >= 0) and gc(u, t) <= gc(u, v) + gc(v, t) (triangle inequality on the sphere), so
h(u) <= w(u, v) + h(v): h is consistent, and h(t) = 0. It is computed from the stated figures,
so a lane shorter than the straight line (a typo) lowers r_min but keeps h a lower bound.
If any depot of the usable network has no coordinates, the bound is 0 everywhere (plain
uniform-cost search): a depot of unknown position could be a shortcut no straight line bounds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import networkx as nx
import numpy as np

from costing.geo import great_circle_km, great_circle_km_many
from costing.model import Depot, Lane, LaneUse, Model, RateCard
from costing.money import minor_unit, round_money
from costing.network.lex import Lex, primary
from costing.network.search import Arcs
from costing.objectives import objective
from costing.price.rates import charge, co2e_kg, lane_charges, toll_for

# Keeps floating-point error in gc * r_min from pushing the bound a hair above the truth.
BOUND_SAFETY = 1.0 - 1e-9


def resolve_lane(lane: Lane, depots: dict[str, Depot], detour: float, speed: float) -> tuple:
    """(km, km_estimated, hours, hours_estimated) for a lane; blanks are estimated and
    rounded to 0.1 km and 0.01 h so the figures printed are the figures costed."""
    km, km_est = lane.distance_km, False
    if km is None:
        a, b = depots[lane.from_depot], depots[lane.to_depot]
        km = round(great_circle_km(a.latitude, a.longitude, b.latitude, b.longitude) * detour, 1)
        km_est = True
    hours, hours_est = lane.drive_hours, False
    if hours is None:
        hours = round(km / speed, 2)
        hours_est = True
    return km, km_est, hours, hours_est


def build_graph(model: Model) -> nx.MultiDiGraph:
    """Depots become nodes; every open lane an edge (two-way lanes both ways). Closed lanes
    are left out; parallel lanes are kept as separate edges keyed by lane id and direction."""
    g = nx.MultiDiGraph(all_lanes=model.lanes)
    depots = model.depot_index
    for d in model.depots:
        g.add_node(d.depot_id, depot=d)
    s = model.settings
    for lane in model.lanes:
        if not lane.open:
            continue
        km, km_est, hours, hours_est = resolve_lane(lane, depots, s.detour_factor, s.default_speed_kmh)
        ends = [(lane.from_depot, lane.to_depot, False)]
        if lane.two_way:
            ends.append((lane.to_depot, lane.from_depot, True))
        for a, b, rev in ends:
            use = LaneUse(lane, a, b, rev, km, km_est, hours, hours_est)
            g.add_edge(a, b, key=use.key, use=use)
    return g


@dataclass(frozen=True)
class Profile:
    """What makes lane weights differ between shipments: the objective, the rate cards a
    shipment may use with the vehicles each needs, and lane steps its restrictions forbid."""

    objective: str
    cards: tuple[tuple[str, str, int], ...]  # (vehicle, mode, vehicles needed)
    blocked: frozenset[tuple[str, int]] = frozenset()  # (lane id, card index) not allowed
    weight_t: float = 0.0  # only set when emissions weights need tonnes; else 0
    # weights are Lex(objective, cost in minor units, lane steps): equal objective values are
    # broken toward the lower cost, then the fewer legs (costing.network.lex)
    tie_break: bool = False

    @property
    def vehicles(self) -> tuple[str, ...]:
        """The vehicles of the profile's cards, each once, in card order."""
        return tuple(dict.fromkeys(v for v, _m, _n in self.cards))


TRANSFER_KINDS = ("terminal", "port")  # a load changes mode here
HUB_KINDS = ("hub",)  # a load changes vehicle (same mode) here: a cross-dock


@dataclass(frozen=True)
class Transfer:
    """A change of rate card (vehicle and mode) at a terminal or port."""

    depot: str
    from_card: int
    to_card: int


@dataclass(frozen=True)
class Step:
    """What one search edge is: a lane step on one card, or a transfer."""

    card: int
    use: LaneUse | None = None
    transfer: Transfer | None = None


def card_of(model: Model, vehicle: str, mode: str) -> RateCard:
    """The rate card of `vehicle` on `mode`."""
    return model.cards_for(vehicle)[mode]


def _weigh(model: Model, profile: Profile, quantity_weight, legs: int = 0):
    """The profile's objective as the weighted sum of quantity weights (costing.objectives).

    With ``profile.tie_break`` the weight is ``Lex(objective, cost, legs)``: the same objective
    weight, then the cost weight in minor currency units (an exact integer: every cost weight is
    a sum of amounts rounded to the minor unit) and the lane steps it adds (1 for a lane, 0 for a
    start, exit or transfer). Summed along a route these are its objective value, its cost
    before breaks and the minimum charge, and its number of legs, so the search returns, among
    the routes of least objective, one of least cost, and among those one of fewest legs
    (costing.network.lex: the core's proof holds for such weights)."""
    w = objective(profile.objective).combine(quantity_weight, lambda c: getattr(model.settings, c))
    if not profile.tie_break:
        return w
    cost_minor = round(quantity_weight("cost") * 10 ** minor_unit(model.settings.currency))
    return Lex(w, cost_minor, legs)


def start_weight(model: Model, profile: Profile, k: int, origin: Depot, places: int) -> float:
    """Weight of starting the route at `origin` on card k: handling there and the card's trip."""
    vehicle, mode, n = profile.cards[k]

    def weight(q: str) -> float:
        if q == "cost":
            card = card_of(model, vehicle, mode)
            return charge(n, origin.handling_cost, places) + charge(n, card.per_trip, places)
        if q == "hours":
            return origin.handling_hours
        return 0.0

    return _weigh(model, profile, weight)


def exit_weight(model: Model, profile: Profile, k: int, destination: Depot, places: int) -> float:
    """Weight of ending at `destination` on card k: its handling of the card's vehicles (unloading;
    a hub too: a hub charges where loads are handled, not where vehicles drive through)."""
    n = profile.cards[k][2]

    def weight(q: str) -> float:
        if q == "cost":
            return charge(n, destination.handling_cost, places)
        if q == "hours":
            return destination.handling_hours
        return 0.0

    return _weigh(model, profile, weight)


def transfer_weight(model: Model, profile: Profile, k: int, depot: Depot, places: int,
                    from_k: int | None = None):
    """Changing onto card k at a terminal, port or hub: the depot's handling for the new vehicles
    and the new card's trip charge (as if starting there) and, given the card `from_k` the load
    arrives on, the depot's handling of the arriving vehicles (as if ending there): each unit is
    lifted off at the end of one vehicle run and on at the start of the next."""
    w = start_weight(model, profile, k, depot, places)
    if from_k is None:
        return w
    return exit_weight(model, profile, from_k, depot, places) + w


def lane_weight(model: Model, profile: Profile, k: int, use: LaneUse, to_depot: Depot,
                places: int) -> float:
    """The weight of one lane step on card k. Cost uses the rounded leg amounts the output
    shows (price/rates.py), so a route's weight is exactly what its legs add up to. `to_depot`
    adds nothing: handling is in the start, exit and transfer weights, where loads are handled."""
    vehicle, mode, n = profile.cards[k]
    card = card_of(model, vehicle, mode)

    def weight(q: str) -> float:
        if q == "cost":  # no handling: a vehicle driving through a hub is not handled there
            return lane_charges(use.km, use.hours, toll_for(use.lane, card), use.lane.fixed_cost, card,
                                n, model.settings, places).total
        if q == "hours":
            return use.hours
        if q == "km":
            return use.km
        if q == "co2e":
            return co2e_kg(use.km, card, n, profile.weight_t)[0]
        raise ValueError(f"unknown quantity {q}")

    return _weigh(model, profile, weight, legs=1)


def stop_weight(model: Model, profile: Profile, k: int, break_hours: float, rest_hours: float,
                places: int):
    """The weight of the driving-time stops taken on one lane step on card k: their hours, and
    their pay as the legs charge it (stop_cost = ROUND(n x paid hours x per_hour), break and rest
    hours paid as Settings say), combined as the profile's objective (costing.network.clock)."""
    vehicle, mode, n = profile.cards[k]
    s = model.settings

    def weight(q: str) -> float:
        if q == "cost":
            paid = (break_hours if s.break_hours_paid == "yes" else 0.0) + \
                (rest_hours if s.rest_hours_paid == "yes" else 0.0)
            return round_money(n * paid * card_of(model, vehicle, mode).per_hour, places)
        if q == "hours":
            return break_hours + rest_hours
        return 0.0

    return _weigh(model, profile, weight)


@dataclass
class CompactNetwork:
    """Integer-indexed adjacency for one profile, plus what the bound needs. A node is a state
    (depot, card): node id = depot index x number of cards + card index."""

    profile: Profile
    depot_ids: list[str]
    index: dict[str, int]  # depot id -> depot index
    adj: list[list[tuple[int, float, int]]]
    steps: list[Step]  # edge id -> what the edge is
    r_min: float
    lats: object  # numpy array per depot, NaN where unknown
    lons: object
    bound_note: str
    _bounds: dict[int, list[float]] = field(default_factory=dict)
    _arcs: Arcs | None = field(default=None, repr=False, compare=False)

    @property
    def arcs(self) -> Arcs:
        """`adj` as the search core reads it, made once per network (its rows are split as
        searches first read them, and its work arrays are reused from search to search)."""
        if self._arcs is None:
            self._arcs = Arcs.from_rows(self.adj)
        return self._arcs

    @property
    def n_cards(self) -> int:
        """Number of rate cards in the profile (states per depot)."""
        return len(self.profile.cards)

    def node(self, depot: str, k: int) -> int:
        """The state id of (depot id, card index k)."""
        return self.index[depot] * self.n_cards + k

    def depot_of(self, node: int) -> str:
        """The depot id of state `node`."""
        return self.depot_ids[node // self.n_cards]

    def bound(self, target_depot: int) -> list[float] | None:
        """h(state) for every state towards the target depot (index), or None for plain
        uniform-cost search. States of one depot share its bound; at the target it is 0."""
        if self.r_min <= 0 or self.bound_note.startswith("none"):
            return None
        h = self._bounds.get(target_depot)
        if h is None:
            gc = great_circle_km_many(self.lats, self.lons, float(self.lats[target_depot]),
                                      float(self.lons[target_depot]))
            # a depot with no coordinates here touches no usable lane (else there would be no
            # bound at all), so it is unreachable: 0 keeps every entry a number
            per_depot = np.nan_to_num(gc * (self.r_min * BOUND_SAFETY), nan=0.0)
            h = np.repeat(per_depot, self.n_cards).tolist()
            if len(self._bounds) > 256:
                self._bounds.clear()
            self._bounds[target_depot] = h
        return h


def _edge_table(graph: nx.MultiDiGraph):
    """Depots, coordinates and every lane step of the graph with its straight-line km (None where
    a coordinate is missing), computed once per graph."""
    table = graph.graph.get("_edge_table")
    if table is None:
        depot_ids = list(graph.nodes)
        index = {d: i for i, d in enumerate(depot_ids)}
        depots = [graph.nodes[d]["depot"] for d in depot_ids]
        lats = np.array([np.nan if d.latitude is None else d.latitude for d in depots], dtype=float)
        lons = np.array([np.nan if d.longitude is None else d.longitude for d in depots], dtype=float)
        rows = []
        for a, b, data in graph.edges(data=True):
            i, j = index[a], index[b]
            known = not (math.isnan(lats[i]) or math.isnan(lats[j]) or math.isnan(lons[i])
                         or math.isnan(lons[j]))
            gc = great_circle_km(lats[i], lons[i], lats[j], lons[j]) if known else None
            rows.append((i, j, data["use"], gc))
        table = graph.graph["_edge_table"] = (depot_ids, index, depots, lats, lons, rows)
    return table


def _layer(model: Model, graph: nx.MultiDiGraph, profile: Profile, k: int, places: int,
           cache: dict | None) -> list[float | None]:
    """The weight of every lane step of the graph on card k (None where the card cannot use it).
    Shipments that need the same number of vehicles on a card share it, so it is cached."""
    vehicle, mode, n = profile.cards[k]
    blocked = frozenset(lane for lane, kk in profile.blocked if kk == k)
    key = (vehicle, mode, n, profile.objective, profile.weight_t, blocked, profile.tie_break)
    if cache is not None and key in cache:
        return cache[key]
    _ids, _index, depots, _lats, _lons, rows = _edge_table(graph)
    weights: list[float | None] = [None] * len(rows)
    for e, (_i, j, use, _gc) in enumerate(rows):
        if use.lane.mode != mode or use.lane.lane_id in blocked:
            continue
        w = lane_weight(model, profile, k, use, depots[j], places)
        if w < 0:  # validation refuses such rates; a model built in code could still hold them
            raise ValueError(f"lane {use.lane.lane_id} has a negative {profile.objective} weight "
                             f"({primary(w):g}) for {vehicle}: a fuel rebate larger than per_km?")
        weights[e] = w
    if cache is not None:
        cache[key] = weights
    return weights


def compact(graph: nx.MultiDiGraph, model: Model, profile: Profile,
            layers: dict | None = None) -> CompactNetwork:
    """The (depot, card) state network of one profile. `layers` caches per-card lane weights
    across profiles. Edges are listed lane step by lane step in graph order, then by card, so two
    profiles that differ only in objective list the same edges in the same order."""
    places = minor_unit(model.settings.currency)
    depot_ids, index, depots, lats, lons, rows = _edge_table(graph)
    K = len(profile.cards)
    adj: list[list[tuple[int, float, int]]] = [[] for _ in range(len(depot_ids) * K)]
    steps: list[Step] = []
    weights = [_layer(model, graph, profile, k, places, layers) for k in range(K)]
    r_min = math.inf
    missing_coords: str | None = None
    for e, (i, j, use, gc) in enumerate(rows):
        for k in range(K):
            w = weights[k][e]
            if w is None:
                continue
            if gc is None:
                a, b = depot_ids[i], depot_ids[j]
                missing_coords = missing_coords or (a if math.isnan(lats[i]) or math.isnan(lons[i]) else b)
            elif gc > 0:
                r_min = min(r_min, primary(w) / gc)
            eid = len(steps)
            steps.append(Step(k, use=use))
            adj[i * K + k].append((j * K + k, w, eid))
    # transfers: between cards of different modes at terminals and ports, between cards of the
    # same mode (another vehicle) at hubs (cross-docks)
    for i, d in enumerate(depots):
        if (d.kind not in TRANSFER_KINDS and d.kind not in HUB_KINDS) or K < 2:
            continue
        for k1 in range(K):
            for k2 in range(K):
                same_mode = profile.cards[k1][1] == profile.cards[k2][1]
                if k1 == k2 or same_mode != (d.kind in HUB_KINDS):
                    continue
                eid = len(steps)
                steps.append(Step(k2, transfer=Transfer(d.depot_id, k1, k2)))
                adj[i * K + k1].append((i * K + k2, transfer_weight(model, profile, k2, d, places, k1),
                                        eid))
    if r_min is math.inf:
        r_min = 0.0
    if missing_coords is not None:
        note = f"none: depot {missing_coords} has no coordinates, so uniform-cost search is used"
    elif r_min == 0:
        note = "none: a usable lane has zero weight, so uniform-cost search is used"
    else:
        note = (f"straight line x {r_min:.6g} {_bound_unit(profile.objective)} per km "
                "(least weight per straight-line km over the usable lanes)")
    return CompactNetwork(profile, depot_ids, index, adj, steps, r_min, lats, lons, note)


def explain_no_route(graph: nx.MultiDiGraph, cn: CompactNetwork, origin: str, destination: str) -> str:
    """Why no usable path exists: which depots are cut off, and by what."""
    from costing.network.search import dijkstra_all

    K = cn.n_cards
    n_states = len(cn.adj)
    o, d = cn.index[origin], cn.index[destination]
    extended = [list(edges) for edges in cn.adj] + [[(o * K + k, 0.0, -1) for k in range(K)]]
    reach_state = dijkstra_all(extended, n_states)
    reached = {s // K for s in range(n_states) if reach_state[s] < math.inf}
    reverse: list[list[tuple[int, float, int]]] = [[] for _ in range(n_states + 1)]
    for u, edges in enumerate(cn.adj):
        for v, _w, e in edges:
            reverse[v].append((u, 0.0, e))
    reverse[n_states] = [(d * K + k, 0.0, -1) for k in range(K)]
    back = dijkstra_all(reverse, n_states)
    can_reach_d = {s // K for s in range(n_states) if back[s] < math.inf} - {d}
    modes = sorted({m for _v, m, _n in cn.profile.cards})
    vehicles = ", ".join(cn.profile.vehicles)
    what = f"{vehicles} ({', '.join(modes)})"
    if not can_reach_d:
        blocked = []
        for _a, _b, data in graph.in_edges(destination, data=True):
            use = data["use"]
            if use.lane.mode not in modes:
                blocked.append(f"{use.lane.lane_id} is {use.lane.mode}")
        closed = [ln.lane_id for ln in graph.graph.get("all_lanes", ())
                  if not ln.open and destination in (ln.to_depot, ln.from_depot)]
        if closed:
            blocked.append("closed: " + ", ".join(closed))
        why = "; ".join(blocked) if blocked else "no lane ends there"
        return f"no lane usable by {what} leads into {destination} ({why})"
    others = [cn.depot_ids[i] for i in sorted(can_reach_d)]
    shown = ", ".join(others[:6]) + (" ..." if len(others) > 6 else "")
    return (f"{destination} is cut off from {origin} for {what}: {origin} reaches "
            f"{len(reached - {o})} depot(s), none of which leads to {destination}; only {shown} "
            f"can reach {destination}")


def _bound_unit(name: str) -> str:
    """The unit the bound note prints: as before the objective table, "currency" for cost and
    "currency incl. value of time" for blended."""
    obj = objective(name)
    if obj.in_money and obj.quantity is None:
        return "currency incl. value of time"
    return obj.unit
