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

from .geo import great_circle_km, great_circle_km_many
from .model import Depot, Lane, Model, RateCard
from .money import minor_unit, round_money

# Keeps floating-point error in gc * r_min from pushing the bound a hair above the truth.
BOUND_SAFETY = 1.0 - 1e-9
OBJECTIVE_UNITS = {"cost": "currency", "time": "hours", "distance": "km", "emissions": "kg CO2e"}


@dataclass(frozen=True)
class LaneUse:
    """One direction of one open lane, with its resolved figures."""

    lane: Lane
    from_depot: str
    to_depot: str
    reverse: bool
    km: float
    km_estimated: bool
    hours: float
    hours_estimated: bool

    @property
    def key(self) -> str:
        return f"{self.lane.lane_id}{'<' if self.reverse else '>'}"


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
    """What makes lane weights differ between shipments."""

    vehicle: str
    objective: str
    vehicles_by_mode: tuple[tuple[str, int], ...]  # mode -> vehicles needed

    def vehicles(self, mode: str) -> int:
        return dict(self.vehicles_by_mode)[mode]


def vehicles_needed(weight_t: float, payload_t: float) -> int:
    """ceil(weight / payload), at least one vehicle. A tiny tolerance keeps 49.0 t on 24.5 t
    payloads at 2 vehicles despite float division."""
    return max(1, math.ceil(weight_t / payload_t - 1e-9))


def profile_for(model: Model, vehicle: str, objective: str, weight_t: float) -> Profile:
    cards = model.cards_for(vehicle)
    return Profile(vehicle, objective, tuple(sorted(
        (m, vehicles_needed(weight_t, c.payload_t)) for m, c in cards.items())))


def edge_weight(use: LaneUse, card: RateCard, n: int, to_depot: Depot, objective: str,
                places: int) -> float:
    """The weight of one lane step for one shipment. Cost uses the rounded leg amounts the
    output shows, so a route's weight is exactly what its legs add up to."""
    hub = to_depot.kind == "hub"
    if objective == "cost":
        w = (round_money(n * use.km * card.per_km, places)
             + round_money(n * use.hours * card.per_hour, places)
             + round_money(n * use.lane.toll, places)
             + round_money(n * use.lane.fixed_cost, places))
        if hub:
            w += round_money(n * to_depot.handling_cost, places)
        return w
    if objective == "time":
        return use.hours + (to_depot.handling_hours if hub else 0.0)
    if objective == "distance":
        return use.km
    if objective == "emissions":
        if card.fuel_l_per_100km is None or card.co2e_kg_per_litre is None:
            return 0.0
        return n * use.km * card.fuel_l_per_100km / 100 * card.co2e_kg_per_litre
    raise ValueError(f"unknown objective {objective}")


@dataclass
class CompactNetwork:
    """Integer-indexed adjacency for one profile, plus what the bound needs."""

    profile: Profile
    depot_ids: list[str]
    index: dict[str, int]
    adj: list[list[tuple[int, float, int]]]
    uses: list[LaneUse]  # edge id -> lane use
    r_min: float
    lats: object  # numpy array, NaN where unknown
    lons: object
    bound_note: str
    _bounds: dict[int, list[float]] = field(default_factory=dict)

    def bound(self, target: int) -> list[float] | None:
        """h(v) for every node v towards target, or None for plain uniform-cost search."""
        if self.r_min <= 0 or self.bound_note.startswith("none"):
            return None
        h = self._bounds.get(target)
        if h is None:
            gc = great_circle_km_many(self.lats, self.lons, float(self.lats[target]),
                                      float(self.lons[target]))
            h = (gc * (self.r_min * BOUND_SAFETY)).tolist()
            if len(self._bounds) > 256:
                self._bounds.clear()
            self._bounds[target] = h
        return h


def compact(graph: nx.MultiDiGraph, model: Model, profile: Profile) -> CompactNetwork:
    import numpy as np

    cards = model.cards_for(profile.vehicle)
    places = minor_unit(model.settings.currency)
    depot_ids = list(graph.nodes)
    index = {d: i for i, d in enumerate(depot_ids)}
    depots = [graph.nodes[d]["depot"] for d in depot_ids]
    lats = np.array([np.nan if d.latitude is None else d.latitude for d in depots], dtype=float)
    lons = np.array([np.nan if d.longitude is None else d.longitude for d in depots], dtype=float)
    adj: list[list[tuple[int, float, int]]] = [[] for _ in depot_ids]
    uses: list[LaneUse] = []
    r_min = math.inf
    missing_coords: str | None = None
    for a, b, data in graph.edges(data=True):
        use: LaneUse = data["use"]
        card = cards.get(use.lane.mode)
        if card is None:
            continue
        n = dict(profile.vehicles_by_mode)[use.lane.mode]
        w = edge_weight(use, card, n, graph.nodes[b]["depot"], profile.objective, places)
        i, j = index[a], index[b]
        eid = len(uses)
        uses.append(use)
        adj[i].append((j, w, eid))
        if math.isnan(lats[i]) or math.isnan(lats[j]) or math.isnan(lons[i]) or math.isnan(lons[j]):
            missing_coords = missing_coords or (a if math.isnan(lats[i]) or math.isnan(lons[i]) else b)
            continue
        gc = great_circle_km(lats[i], lons[i], lats[j], lons[j])
        if gc > 0:
            r_min = min(r_min, w / gc)
    if r_min is math.inf:
        r_min = 0.0
    if missing_coords is not None:
        note = f"none: depot {missing_coords} has no coordinates, so uniform-cost search is used"
    elif r_min == 0:
        note = "none: a usable lane has zero weight, so uniform-cost search is used"
    else:
        note = (f"straight line x {r_min:.6g} {OBJECTIVE_UNITS[profile.objective]} per km "
                "(least weight per straight-line km over the usable lanes)")
    return CompactNetwork(profile, depot_ids, index, adj, uses, r_min, lats, lons, note)


def explain_no_route(graph: nx.MultiDiGraph, cn: CompactNetwork, origin: str, destination: str) -> str:
    """Why no usable path exists: which depots are cut off, and by what."""
    from .search import dijkstra_all

    o, d = cn.index[origin], cn.index[destination]
    reach = [x < math.inf for x in dijkstra_all(cn.adj, o)]
    reverse: list[list[tuple[int, float, int]]] = [[] for _ in cn.adj]
    for u, edges in enumerate(cn.adj):
        for v, _w, e in edges:
            reverse[v].append((u, 0.0, e))
    can_reach_d = [x < math.inf for x in dijkstra_all(reverse, d)]
    modes = sorted(m for m, _ in cn.profile.vehicles_by_mode)
    vehicle = f"{cn.profile.vehicle} ({', '.join(modes)})"
    into_d = [u for u, edges in enumerate(cn.adj) for v, _w, _e in edges if v == d]
    if not into_d:
        blocked = []
        for _a, _b, data in graph.in_edges(destination, data=True):
            use = data["use"]
            if use.lane.mode not in modes:
                blocked.append(f"{use.lane.lane_id} is {use.lane.mode}")
        closed = [ln.lane_id for ln in _lanes_touching(cn, graph, destination) if not ln.open]
        if closed:
            blocked.append("closed: " + ", ".join(closed))
        why = "; ".join(blocked) if blocked else "no lane ends there"
        return f"no lane usable by {vehicle} leads into {destination} ({why})"
    n_reach = sum(reach) - 1
    others = [cn.depot_ids[i] for i, ok in enumerate(can_reach_d) if ok and i != d]
    shown = ", ".join(others[:6]) + (" ..." if len(others) > 6 else "")
    return (f"{destination} is cut off from {origin} for {vehicle}: {origin} reaches {n_reach} "
            f"depot(s), none of which leads to {destination}; only {shown or 'no depot'} can "
            f"reach {destination}")


def _lanes_touching(cn: CompactNetwork, graph: nx.MultiDiGraph, depot: str) -> list[Lane]:
    model_lanes = graph.graph.get("all_lanes", ())
    return [ln for ln in model_lanes if depot in (ln.to_depot, ln.from_depot)]
