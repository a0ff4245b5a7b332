"""A* on random lane networks against an independent oracle.

Source of truth: networkx.dijkstra_path_length / networkx.single_source_dijkstra_path_length
(reference library, networkx 3.6.1) on a graph this file builds itself from the Model, over
states (depot, rate card), with weights computed here from the documented formulas
(costing/cost.py, costing/network.py and costing/pricing.py docstrings, design.md), never with
costing.network.build's own weight functions:

    lane step on card c (lane mode = card mode; open; one-way lanes only forwards):
      cost      = ROUND(n x km x per_km) + ROUND(n x hours x per_hour) + ROUND(n x toll)
                  + ROUND(n x fixed_cost)
                  + ROUND(n x km x l/100 km / 100 x (fuel price - fuel_included_at))  [if all given]
                  + ROUND(n x handling_cost of the entered depot)                    [if it is a hub]
      time      = hours + handling_hours of the entered depot                        [if it is a hub]
      distance  = km
      emissions = n x km x l/100 km / 100 x kg CO2e/l, or without fuel figures
                  tonnes x km x default g/tkm / 1000
      blended   = cost + value_of_time_per_hour x time
    start of a vehicle run on card c at a depot (the origin, or a change of card at a terminal or
    port, to a card of another mode): ROUND(n x handling_cost) + ROUND(n x per_trip) (cost),
    handling_hours (time), 0 (distance, emissions)
    end at the destination: 0 at a hub (paid on entry), else ROUND(n x handling_cost) (cost),
    handling_hours (time), 0 (distance, emissions)

ROUND is half away from zero to the currency's minor unit, n = ceil(weight / payload) (at least
1), a blank km = haversine km x detour_factor rounded to 0.1 km, a blank hours = km /
default_speed_kmh rounded to 0.01 h. Money is done in exact decimal arithmetic here.
"""

from __future__ import annotations

import math
import random
from decimal import ROUND_CEILING, ROUND_HALF_UP, Decimal
from functools import cache

import networkx as nx
import pytest

from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.network.build import build_graph, compact
from costing.network.lex import primary
from costing.network.search import astar
from costing.objectives import BY_NAME

VEHICLE = "truck"
N_RANDOM = 120  # seeded random networks
N_COORDLESS = 20  # seeded networks with one depot that has no coordinates
OBJECTIVES = tuple(o for o in ("cost", "time", "distance", "emissions", "blended") if o in BY_NAME)

# Mean Earth radius R1 = (2a + b) / 3 of WGS84, km: references.md 1.1 [V-LIB computed].
R1_KM = 6371.0088
# ISO 4217 minor units of the currencies used here: [MEM] (EUR/GBP 2, JPY 0, KWD 3).
MINOR_UNITS = {"EUR": 2, "GBP": 2, "JPY": 0, "KWD": 3}
# Default intensities (g CO2e per tonne-km) for a card without fuel figures, references.md 4.3
# [V-DOC]: road = 2012 Defra/DECC GHG factors, Annex 7 Table 7e, articulated HGV > 33 t, UK
# average load, 102.73; rail = DEFRA 2007 freight factors (Hansard, 4 June 2007), 30.
# well-to-wheel g CO2e per tonne-km: road 102.73 (Defra 2012 Table 7e, artic >33 t [V-DOC]); rail
# 30 g CO2/tkm tank-to-wheel (DEFRA 2007, Hansard [V-DOC]) on the WTW basis x 102.73 / 84.73 (the
# road table's WTW / direct ratio), to 2 decimals as documented in costing/price/rates.py
DEFAULT_G_PER_TKM = {"road": Decimal("102.73"),
                     "rail": (Decimal(30) * Decimal("102.73") / Decimal("84.73")).quantize(Decimal("0.01"))}
# well-to-tank of diesel added to a tank-to-wheel factor per litre: UK DESNZ 2025 [V-2ND]
DIESEL_WTT = Decimal("0.62665")
TRANSFER_KINDS = ("terminal", "port")  # design: a vehicle run changes only at a terminal or port
# Speeds for estimated hours. With km in tenths, km / v never lands on a half-hundredth for
# v in 65, 70, 75 (so the unspecified half-rounding mode of the hours cannot matter).
SPEEDS = (65.0, 70.0, 75.0)


# ---------------------------------------------------------------------------------------------
# the product under test: the only place that knows how costing builds a network


def product_network(model: Model, objective: str, weight_t: float):
    from costing.plan.route import make_profile

    ids = [d.depot_id for d in model.depots]
    cards = [r for r in model.rates if r.vehicle == VEHICLE]
    profile = make_profile(model, Shipment("Q", ids[0], ids[-1], weight_t), objective, cards)
    return compact(build_graph(model), model, profile)


def card_index(cn) -> dict[str, int]:
    """mode -> card index k of the compact network's states (depot, k)."""
    out = {}
    for k, (vehicle, mode, _n) in enumerate(cn.profile.cards):
        assert vehicle == VEHICLE
        out[mode] = k
    return out


def state_node(cn, state) -> int:
    depot, mode = state
    return cn.node(depot, card_index(cn)[mode])


# ---------------------------------------------------------------------------------------------
# the independent oracle


def haversine_km(lat1, lon1, lat2, lon2):
    """Haversine in the atan2 form (references.md 1.1: Rosetta Code task text [V-DOC])."""
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dp, dl = p2 - p1, math.radians(lon2 - lon1)
    a = math.sin(dp / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    return 2 * R1_KM * math.atan2(math.sqrt(a), math.sqrt(1 - a))


def dec(x: float) -> Decimal:
    """The decimal a spreadsheet cell shows for a float entered as a short decimal."""
    return Decimal(repr(float(x)))


def rnd(x: Decimal, places: int) -> Decimal:
    return x.quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_UP)  # HALF_UP = away from 0


def vehicles(weight_t: float, payload_t: float) -> int:
    return int(max(Decimal(1), (dec(weight_t) / dec(payload_t)).to_integral_value(rounding=ROUND_CEILING)))


def lane_km_hours(lane: Lane, depots: dict[str, Depot], s: Settings) -> tuple[Decimal, Decimal]:
    if lane.distance_km is None:
        a, b = depots[lane.from_depot], depots[lane.to_depot]
        km = dec(round(haversine_km(a.latitude, a.longitude, b.latitude, b.longitude) * s.detour_factor, 1))
    else:
        km = dec(lane.distance_km)
    if lane.drive_hours is None:
        hours = rnd(km / dec(s.default_speed_kmh), 2)
    else:
        hours = dec(lane.drive_hours)
    return km, hours


class Oracle:
    """States (depot, mode) of the one vehicle; steps keyed ('lane', lane id, reverse, mode) or
    ('change', depot, from mode, to mode); start and end weights per state."""

    def __init__(self, model: Model, objective: str, weight_t: float):
        self.model, self.objective = model, objective
        s = model.settings
        self.places = MINOR_UNITS[s.currency]
        self.depots = {d.depot_id: d for d in model.depots}
        self.cards = {r.mode: r for r in model.rates if r.vehicle == VEHICLE}
        self.n = {m: vehicles(weight_t, c.payload_t) for m, c in self.cards.items()}
        self.weight_t = weight_t
        self.vot = dec(s.value_of_time_per_hour)
        self.steps: dict[tuple, tuple[tuple, tuple, float]] = {}
        for lane in model.lanes:
            if not lane.open or lane.mode not in self.cards:
                continue
            km, hours = lane_km_hours(lane, self.depots, s)
            dirs = [(lane.from_depot, lane.to_depot, False)]
            if lane.two_way:
                dirs.append((lane.to_depot, lane.from_depot, True))
            for a, b, rev in dirs:
                w = self._weight(lambda o, ln=lane, km=km, h=hours, b=b: self._lane(o, ln, km, h, b),
                                 objective)
                self.steps[("lane", lane.lane_id, rev, lane.mode)] = ((a, lane.mode), (b, lane.mode), w)
        for d in model.depots:
            if d.kind not in TRANSFER_KINDS:
                continue
            for m1 in self.cards:
                for m2 in self.cards:
                    if m1 != m2:  # unload the arriving vehicles, load the leaving ones
                        w = self._weight(lambda o, d=d.depot_id, m1=m1, m2=m2:
                                         self._end(o, d, m1) + self._start(o, d, m2), objective)
                        self.steps[("change", d.depot_id, m1, m2)] = ((d.depot_id, m1), (d.depot_id, m2), w)
        g = nx.DiGraph()
        g.add_nodes_from((d, m) for d in self.depots for m in self.cards)
        for a, b, w in self.steps.values():
            if not g.has_edge(a, b) or w < g[a][b]["weight"]:
                g.add_edge(a, b, weight=w)
        self.graph = g

    def _weight(self, fn, objective: str) -> float:
        if objective == "blended":
            return float(fn("cost") + self.vot * fn("time"))
        return float(fn(objective))

    def _lane(self, objective, lane, km, hours, b) -> Decimal:
        card, n = self.cards[lane.mode], self.n[lane.mode]
        p, s = self.places, self.model.settings
        if objective == "cost":
            w = (rnd(n * km * dec(card.per_km), p) + rnd(n * hours * dec(card.per_hour), p)
                 + rnd(n * dec(lane.toll), p) + rnd(n * dec(lane.fixed_cost), p))
            if (s.fuel_price_per_litre is not None and card.fuel_included_at is not None
                    and card.fuel_l_per_100km is not None):
                w += rnd(n * km * dec(card.fuel_l_per_100km) / 100
                         * (dec(s.fuel_price_per_litre) - dec(card.fuel_included_at)), p)
            return w  # driving through a hub: no handling (handled only where loads change vehicle)
        if objective == "time":
            return hours
        if objective == "distance":
            return km
        if card.fuel_l_per_100km is not None and card.co2e_kg_per_litre is not None:
            wtw = (dec(card.wtw_co2e_kg_per_litre) if card.wtw_co2e_kg_per_litre is not None
                   else dec(card.co2e_kg_per_litre) + DIESEL_WTT)
            return n * km * dec(card.fuel_l_per_100km) / 100 * wtw
        return dec(self.weight_t) * km * DEFAULT_G_PER_TKM[lane.mode] / 1000

    def _start(self, objective, depot: str, mode: str) -> Decimal:
        d, card, n = self.depots[depot], self.cards[mode], self.n[mode]
        if objective == "cost":
            return rnd(n * dec(d.handling_cost), self.places) + rnd(n * dec(card.per_trip), self.places)
        if objective == "time":
            return dec(d.handling_hours)
        return Decimal(0)

    def _end(self, objective, depot: str, mode: str) -> Decimal:
        d, n = self.depots[depot], self.n[mode]
        if objective == "cost":
            return rnd(n * dec(d.handling_cost), self.places)
        if objective == "time":
            return dec(d.handling_hours)
        return Decimal(0)

    def start(self, depot: str, mode: str) -> float:
        return self._weight(lambda o: self._start(o, depot, mode), self.objective)

    def end(self, depot: str, mode: str) -> float:
        return self._weight(lambda o: self._end(o, depot, mode), self.objective)

    def length(self, o: str, d: str) -> float | None:
        """networkx.dijkstra_path_length (reference library) from a virtual source joined to the
        origin's states by their start weights to a virtual target joined from the destination's
        states by their end weights."""
        g = self.graph
        for m in self.cards:
            g.add_edge("src", (o, m), weight=self.start(o, m))
            g.add_edge((d, m), "dst", weight=self.end(d, m))
        try:
            return nx.dijkstra_path_length(g, "src", "dst", weight="weight")
        except nx.NetworkXNoPath:
            return None
        finally:
            g.remove_nodes_from(["src", "dst"])

    def remaining(self, t: str) -> dict:
        """Least weight from every state to any state of depot t (networkx on the reversed graph)."""
        g = self.graph
        for m in self.cards:
            g.add_edge((t, m), "T", weight=0.0)
        try:
            return nx.single_source_dijkstra_path_length(g.reverse(copy=False), "T", weight="weight")
        finally:
            g.remove_node("T")

    def reaches(self, o: str) -> set[str]:
        return {x[0] for m in self.cards for x in nx.descendants(self.graph, (o, m)) | {(o, m)}}


# ---------------------------------------------------------------------------------------------
# random networks


def _money(rng: random.Random, lo: float, hi: float, places: int = 2) -> float:
    return float(f"{rng.uniform(lo, hi):.{places}f}")


@cache
def random_case(seed: int, coordless: bool = False) -> tuple[Model, float]:
    """(model, shipment weight) of a seeded random network. With coordless, one connected depot
    has no coordinates (its lanes then all carry a stated distance)."""
    rng = random.Random(seed)
    n = rng.randint(8, 40)
    lat0, lon0 = rng.uniform(38.0, 58.0), rng.uniform(-8.0, 22.0)
    dlat = 500 / 111.2  # ~500 km box
    dlon = 500 / (111.2 * math.cos(math.radians(lat0 + dlat / 2)))
    true_xy = [(round(lat0 + rng.uniform(0, dlat), 4), round(lon0 + rng.uniform(0, dlon), 4))
               for _ in range(n)]
    ids = [f"D{i:02d}" for i in range(n)]
    isolated = set(rng.sample(range(n), rng.randint(1, 2))) if rng.random() < 0.3 else set()
    connected = [i for i in range(n) if i not in isolated]
    hidden = rng.choice(connected) if coordless else None
    depots = []
    for i, (la, lo) in enumerate(true_xy):
        r = rng.random()
        kind = "hub" if r < 0.25 else "terminal" if r < 0.4 else "port" if r < 0.45 else \
            rng.choice(("depot", "customer"))
        # non-hubs get handling figures too: they count only where a run starts or ends
        hc = _money(rng, 5, 90) if rng.random() < 0.8 else 0.0
        hh = _money(rng, 0.25, 3) if rng.random() < 0.8 else 0.0
        if i == hidden:
            la = lo = None
        depots.append(Depot(ids[i], f"site {i}", la, lo, kind, hc, hh))

    def gc(i, j):
        return haversine_km(*true_xy[i], *true_xy[j])

    rail = rng.random() < 0.5
    pairs: list[tuple[int, int]] = []
    seen = set()
    for i in connected:
        near = sorted((j for j in connected if j != i), key=lambda j: gc(i, j))
        for j in near[: rng.randint(1, 3)]:
            if frozenset((i, j)) not in seen:
                seen.add(frozenset((i, j)))
                pairs.append((i, j))
    for _ in range(rng.randint(0, n // 2)):
        i, j = rng.sample(connected, 2)
        if frozenset((i, j)) not in seen:
            seen.add(frozenset((i, j)))
            pairs.append((i, j))
    parallel = [p if rng.random() < 0.5 else p[::-1] for p in pairs if rng.random() < 0.15]
    lanes = []
    for k, (i, j) in enumerate(pairs + parallel):
        if rail and rng.random() < 0.3:
            mode = "rail"
        else:
            mode = "rail" if rng.random() < 0.08 else "road"  # rail without a rail card: unusable
        if rng.random() < 0.25 and i != hidden and j != hidden:
            km = None
        else:
            factor = rng.uniform(0.6, 0.95) if rng.random() < 0.03 else rng.uniform(1.02, 1.6)  # typo
            km = max(0.1, round(gc(i, j) * factor, 1))
        hours = None
        if rng.random() < 0.6:
            ref_km = km if km is not None else gc(i, j) * 1.25
            hours = max(0.01, round(ref_km / rng.uniform(45, 90), 2))
        lanes.append(Lane(
            lane_id=f"L{k:03d}", from_depot=ids[i], to_depot=ids[j], mode=mode, distance_km=km,
            drive_hours=hours,
            toll=_money(rng, 0, 80) if rng.random() < 0.4 else 0.0,
            fixed_cost=_money(rng, 0, 150) if rng.random() < 0.3 else 0.0,
            two_way=rng.random() < 0.8, open=rng.random() < 0.9))
    rng.shuffle(lanes)
    fuel_price = _money(rng, 1.3, 1.9) if rng.random() < 0.4 else None
    road_fuel = _money(rng, 28, 36, 1) if rng.random() < 0.8 else None
    rates = [RateCard(VEHICLE, "road", per_km=_money(rng, 0.5, 2.5, 3), per_hour=_money(rng, 20, 60),
                      payload_t=rng.choice((22.0, 24.5, 26.0)), per_trip=_money(rng, 0, 50),
                      fuel_l_per_100km=road_fuel, co2e_kg_per_litre=2.67 if road_fuel else None,
                      # a surcharge, or a rebate far smaller than per_km, so weights stay >= 0
                      fuel_included_at=(_money(rng, fuel_price - 0.2, fuel_price + 0.1) if fuel_price
                                        else None))]
    if rail:
        fuel = _money(rng, 80, 200, 1) if rng.random() < 0.5 else None
        rates.append(RateCard(VEHICLE, "rail", per_km=_money(rng, 0.2, 1.2, 3), per_hour=_money(rng, 5, 30),
                              payload_t=rng.choice((60.0, 600.0)), per_trip=_money(rng, 20, 150),
                              fuel_l_per_100km=fuel, co2e_kg_per_litre=2.67 if fuel is not None else None))
    # a decoy vehicle: its cards must not be used for the truck
    rates.append(RateCard("van", "road", per_km=0.001, per_hour=0.0, payload_t=3.5))
    rng.shuffle(rates)
    settings = Settings(currency=rng.choice(("EUR", "EUR", "EUR", "GBP", "JPY", "KWD")),
                        detour_factor=rng.choice((1.2, 1.25, 1.3, 1.35)),
                        default_speed_kmh=rng.choice(SPEEDS), fuel_price_per_litre=fuel_price,
                        value_of_time_per_hour=_money(rng, 0, 60))
    road_payload = next(r.payload_t for r in rates if r.vehicle == VEHICLE and r.mode == "road")
    weight = rng.choice((_money(rng, 1, 80, 1), road_payload, 2 * road_payload))
    ship = Shipment("S1", ids[connected[0]], ids[connected[-1]], weight)
    return Model(settings, tuple(depots), tuple(lanes), tuple(rates), (ship,)), weight


@cache
def prepared(seed: int, objective: str, coordless: bool = False):
    model, weight = random_case(seed, coordless)
    return model, product_network(model, objective, weight), Oracle(model, objective, weight)


def queries(model: Model, oracle: Oracle, seed: int) -> list[tuple[str, str]]:
    """Random origin != destination pairs, plus up to two unreachable pairs."""
    rng = random.Random(seed * 7919 + 17)
    ids = [d.depot_id for d in model.depots]
    out = [tuple(rng.sample(ids, 2)) for _ in range(8)]
    reach = {o: oracle.reaches(o) for o in ids}
    cut = [(o, d) for o in ids for d in ids if o != d and d not in reach[o]]
    return out + rng.sample(cut, min(2, len(cut)))


def run_query(cn, oracle: Oracle, o: str, d: str, h="bound"):
    """The product's search (cn.adj, cn.bound) from the origin's states to the destination's,
    with the oracle's start and end weights."""
    k_of = card_index(cn)
    sources = [(cn.node(o, k), oracle.start(o, m)) for m, k in k_of.items()]
    exits = {cn.node(d, k): oracle.end(d, m) for m, k in k_of.items()}
    return astar(cn.adj, sources, exits, cn.bound(cn.index[d]) if h == "bound" else h)


def step_key(cn, e: int) -> tuple:
    step = cn.steps[e]
    mode = cn.profile.cards[step.card][1]
    if step.transfer is not None:
        t = step.transfer
        return ("change", t.depot, cn.profile.cards[t.from_card][1], cn.profile.cards[t.to_card][1])
    return ("lane", step.use.lane.lane_id, step.use.reverse, mode)


def check_result(cn, oracle: Oracle, o: str, d: str, res) -> bool:
    want = oracle.length(o, d)
    if want is None:
        assert not res.found and res.weight == math.inf and res.nodes == () and res.edges == ()
        return False
    assert res.found
    assert primary(res.weight) == pytest.approx(want, rel=1e-9, abs=1e-6)
    # the route is a walk from a state of o to a state of d whose steps, priced by the oracle with
    # its start and end weights, add up to the optimum
    k_of = {k: m for m, k in card_index(cn).items()}
    first, last = res.nodes[0], res.nodes[-1]
    assert cn.depot_of(first) == o and cn.depot_of(last) == d
    assert len(res.edges) == len(res.nodes) - 1
    total = oracle.start(o, k_of[first % cn.n_cards]) + oracle.end(d, k_of[last % cn.n_cards])
    for k, e in enumerate(res.edges):
        a, b, w = oracle.steps[step_key(cn, e)]
        assert (state_node(cn, a), state_node(cn, b)) == (res.nodes[k], res.nodes[k + 1])
        total += w
    assert total == pytest.approx(want, rel=1e-9, abs=1e-6)
    return True


# ---------------------------------------------------------------------------------------------
# tests


def test_generator_covers_the_features():
    """The random networks do contain what the oracle comparison is meant to exercise."""
    tally = dict.fromkeys(("parallel", "closed", "one_way", "blank_km", "blank_h", "hub", "change_point",
                           "rail_card", "unusable_mode", "isolated", "unreachable_query", "typo_km",
                           "surcharge", "no_fuel_figures", "reachable_query", "intermodal_route"), 0)
    for seed in range(N_RANDOM):
        model, _w = random_case(seed)
        assert 8 <= len(model.depots) <= 40
        ends = [frozenset((ln.from_depot, ln.to_depot)) for ln in model.lanes]
        tally["parallel"] += len(ends) - len(set(ends))
        tally["closed"] += sum(not ln.open for ln in model.lanes)
        tally["one_way"] += sum(not ln.two_way for ln in model.lanes)
        tally["blank_km"] += sum(ln.distance_km is None for ln in model.lanes)
        tally["blank_h"] += sum(ln.drive_hours is None for ln in model.lanes)
        tally["hub"] += sum(d.kind == "hub" for d in model.depots)
        tally["change_point"] += sum(d.kind in TRANSFER_KINDS for d in model.depots)
        cards = [r for r in model.rates if r.vehicle == VEHICLE]
        modes = {r.mode for r in cards}
        tally["rail_card"] += "rail" in modes
        tally["unusable_mode"] += sum(ln.mode not in modes for ln in model.lanes)
        tally["surcharge"] += model.settings.fuel_price_per_litre is not None
        tally["no_fuel_figures"] += any(r.fuel_l_per_100km is None for r in cards)
        touched = {x for ln in model.lanes for x in (ln.from_depot, ln.to_depot)}
        tally["isolated"] += len(model.depots) - len(touched)
        dep = model.depot_index
        tally["typo_km"] += sum(
            ln.distance_km is not None and ln.distance_km < haversine_km(
                dep[ln.from_depot].latitude, dep[ln.from_depot].longitude,
                dep[ln.to_depot].latitude, dep[ln.to_depot].longitude)
            for ln in model.lanes)
        _m, cn, oracle = prepared(seed, "cost")
        for o, d in queries(model, oracle, seed):
            res = run_query(cn, oracle, o, d)
            tally["reachable_query" if res.found else "unreachable_query"] += 1
            tally["intermodal_route"] += any(step_key(cn, e)[0] == "change" for e in res.edges)
    assert all(v >= 10 for v in tally.values()), tally
    assert tally["reachable_query"] >= 500, tally


@pytest.mark.parametrize("seed", range(N_RANDOM))
def test_step_weights_match_documented_formulas(seed):
    """Every usable lane direction on each card, and every change of card at a terminal or port,
    is in the compact network once, with the oracle's weight; closed lanes, the wrong direction
    of one-way lanes, lanes without a card and the decoy vehicle's card are absent."""
    for objective in OBJECTIVES:
        _model, cn, oracle = prepared(seed, objective)
        assert {m: n for _v, m, n in cn.profile.cards} == oracle.n
        got = {}
        for u, out in enumerate(cn.adj):
            for v, w, e in out:
                key = step_key(cn, e)
                assert key not in got
                got[key] = (u, v, w)
        assert got.keys() == oracle.steps.keys()
        for key, (a, b, w) in oracle.steps.items():
            assert got[key][:2] == (state_node(cn, a), state_node(cn, b))
            assert primary(got[key][2]) == pytest.approx(w, rel=1e-12, abs=1e-9), (objective, key)


@pytest.mark.parametrize("seed", range(0, N_RANDOM, 3))
def test_start_and_end_weights_match_documented_formulas(seed):
    from costing.money import minor_unit
    from costing.network.build import exit_weight, start_weight

    model, _w = random_case(seed)
    for objective in OBJECTIVES:
        _m, cn, oracle = prepared(seed, objective)
        places = minor_unit(model.settings.currency)
        for d in model.depots:
            for mode, k in card_index(cn).items():
                assert primary(start_weight(model, cn.profile, k, d, places)) == pytest.approx(
                    oracle.start(d.depot_id, mode), rel=1e-12, abs=1e-9)
                assert primary(exit_weight(model, cn.profile, k, d, places)) == pytest.approx(
                    oracle.end(d.depot_id, mode), rel=1e-12, abs=1e-9)


@pytest.mark.parametrize("seed", range(N_RANDOM))
def test_astar_matches_networkx_dijkstra(seed):
    model, _w = random_case(seed)
    for objective in OBJECTIVES:
        _m, cn, oracle = prepared(seed, objective)
        for o, d in queries(model, oracle, seed):
            check_result(cn, oracle, o, d, run_query(cn, oracle, o, d))
            # state to state, single source and target: astar(adj, o, d, bound(d))
            for mode, k in card_index(cn).items():
                res = astar(cn.adj, cn.node(o, k), cn.node(d, k), cn.bound(cn.index[d]))
                try:
                    want = nx.dijkstra_path_length(oracle.graph, (o, mode), (d, mode), weight="weight")
                except nx.NetworkXNoPath:
                    want = None
                assert res.found == (want is not None)
                if want is not None:
                    assert primary(res.weight) == pytest.approx(want, rel=1e-9, abs=1e-6)


@pytest.mark.parametrize("seed", range(N_RANDOM))
def test_bound_admissible_and_consistent(seed):
    """h(v) <= true remaining weight to the target depot at every state (reverse Dijkstra with
    networkx on the reversed oracle graph), h = 0 at the target's states, and
    h(u) <= w(u, v) + h(v) on every lane step and change of card."""
    for objective in OBJECTIVES:
        _m, cn, oracle = prepared(seed, objective)
        for t_id in cn.depot_ids:
            h = cn.bound(cn.index[t_id])
            if h is None:
                assert cn.bound_note.startswith("none")
                continue
            assert len(h) == len(cn.adj)
            assert all(h[cn.node(t_id, k)] == 0.0 for k in range(cn.n_cards))
            assert all(x >= 0.0 for x in h)
            for state, dist in oracle.remaining(t_id).items():
                if state != "T":
                    assert h[state_node(cn, state)] <= dist + 1e-9, (objective, t_id, state)
            for a, b, w in oracle.steps.values():
                assert h[state_node(cn, a)] <= w + h[state_node(cn, b)] + 1e-9, (objective, t_id, a, b)


def test_bound_is_used_on_every_random_network():
    """Guard against a vacuous admissibility test: the straight-line bound is on (not None) for
    every objective on every random network, and positive somewhere."""
    for seed in range(N_RANDOM):
        for objective in OBJECTIVES:
            _m, cn, _o = prepared(seed, objective)
            h = cn.bound(0)
            assert h is not None and cn.r_min > 0, (seed, objective, cn.bound_note)
            assert max(h) > 0


@pytest.mark.parametrize("seed", range(N_RANDOM))
def test_astar_settles_no_more_than_uniform_cost(seed):
    model, _w = random_case(seed)
    for objective in OBJECTIVES:
        _m, cn, oracle = prepared(seed, objective)
        for o, d in queries(model, oracle, seed):
            a = run_query(cn, oracle, o, d)
            u = run_query(cn, oracle, o, d, h=None)
            assert a.found == u.found
            if a.found:
                assert primary(a.weight) == pytest.approx(primary(u.weight), rel=1e-12, abs=1e-9)
            assert a.stats.settled <= u.stats.settled, (objective, o, d)


@pytest.mark.parametrize("seed", range(0, N_RANDOM, 4))
def test_same_network_same_route(seed):
    """Searching twice, and rebuilding the network from the same model, gives identical routes."""
    model, weight = random_case(seed)
    for objective in OBJECTIVES:
        _m, cn, oracle = prepared(seed, objective)
        cn2 = product_network(model, objective, weight)
        assert cn2.depot_ids == cn.depot_ids and cn2.profile == cn.profile
        for o, d in queries(model, oracle, seed):
            r1 = run_query(cn, oracle, o, d)
            r2 = run_query(cn, oracle, o, d)
            r3 = run_query(cn2, oracle, o, d)
            assert (r1.nodes, r1.edges, r1.weight) == (r2.nodes, r2.edges, r2.weight)
            assert (r1.nodes, r1.edges, r1.weight) == (r3.nodes, r3.edges, r3.weight)
            assert [step_key(cn, e) for e in r1.edges] == [step_key(cn2, e) for e in r3.edges]


def _hidden(model: Model) -> str:
    return next(d.depot_id for d in model.depots if d.latitude is None)


@pytest.mark.parametrize("seed", range(1000, 1000 + N_COORDLESS))
def test_depot_without_coordinates_gives_uniform_cost(seed):
    model, _w = random_case(seed, coordless=True)
    hidden = _hidden(model)
    ids = [d.depot_id for d in model.depots]
    for objective in OBJECTIVES:
        _m, cn, oracle = prepared(seed, objective, coordless=True)
        if any(hidden in (a[0], b[0]) for key, (a, b, _w) in oracle.steps.items() if key[0] == "lane"):
            assert all(cn.bound(t) is None for t in range(len(cn.depot_ids)))
            assert cn.bound_note.startswith("none")
        for o, d in queries(model, oracle, seed) + [(hidden, ids[-1]), (ids[1], hidden)]:
            if o != d:
                check_result(cn, oracle, o, d, run_query(cn, oracle, o, d))


def test_coordless_networks_really_lose_the_bound():
    """Guard: in most coordless cases the depot without coordinates touches a usable lane."""
    hits = 0
    for seed in range(1000, 1000 + N_COORDLESS):
        model, _w = random_case(seed, coordless=True)
        hidden = _hidden(model)
        _m, cn, oracle = prepared(seed, "cost", coordless=True)
        touches = any(hidden in (a[0], b[0]) for a, b, _w in oracle.steps.values())
        hits += touches and cn.bound(0) is None
    assert hits >= N_COORDLESS // 2


def _tiny(lanes, depots=None, rates=None, settings=None, shipments=()):
    depots = depots or (Depot("A", "A", 50.0, 4.0), Depot("B", "B", 50.5, 4.5), Depot("C", "C", 51.0, 5.0))
    rates = rates or (RateCard(VEHICLE, "road", 1.0, 0.0, 24.0, fuel_l_per_100km=30.0,
                               co2e_kg_per_litre=2.67),)
    return Model(settings or Settings(), tuple(depots), tuple(lanes), tuple(rates), tuple(shipments))


def test_depot_without_coordinates_off_the_usable_network_keeps_the_bound():
    """A depot with no coordinates whose only lane is unusable (rail, truck has no rail card):
    the bound stays on, and searches to and from it report no route, as the oracle does."""
    depots = (Depot("A", "A", 50.0, 4.0), Depot("B", "B", 50.5, 4.5), Depot("C", "C", 51.0, 5.0),
              Depot("X", "X", None, None))
    lanes = (Lane("L1", "A", "B", "road", 80.0, 1.2), Lane("L2", "B", "C", "road", 80.0, 1.2),
             Lane("L3", "C", "X", "rail", 50.0, 1.0))
    model = _tiny(lanes, depots)
    for objective in OBJECTIVES:
        cn = product_network(model, objective, 10.0)
        assert cn.bound(cn.index["C"]) is not None
        oracle = Oracle(model, objective, 10.0)
        for o, d in (("A", "C"), ("A", "X"), ("X", "A"), ("C", "A")):
            check_result(cn, oracle, o, d, run_query(cn, oracle, o, d))


def test_zero_weight_lane_falls_back_to_uniform_cost():
    """A lane of 0 km has distance weight 0, so r_min = 0: no bound, and the route is still optimal."""
    lanes = (Lane("L1", "A", "B", "road", 0.0, 0.0), Lane("L2", "B", "C", "road", 80.0, 1.0),
             Lane("L3", "A", "C", "road", 95.0, 1.1))
    model = _tiny(lanes)
    cn = product_network(model, "distance", 10.0)
    assert cn.bound(2) is None and cn.bound_note.startswith("none")
    res = astar(cn.adj, cn.node("A", 0), cn.node("C", 0), cn.bound(cn.index["C"]))
    assert res.found and primary(res.weight) == 80.0  # hand-worked: 0 + 80 < 95
    assert [cn.steps[e].use.lane.lane_id for e in res.edges] == ["L1", "L2"]


# ---------------------------------------------------------------------------------------------
# route-level charges, checked through route_all against every candidate route priced by
# costing.price.cost.cost_route (hand-worked figures in the comments)


def _two_mode_case(per_trip_rail: float, min_charge_rail: float) -> Model:
    """A -> C by a road lane (200 km x 1.00 = 200.00) or a parallel rail lane (300 km x 0.50 =
    150.00 before the rail card's per-trip and minimum charges), one vehicle with both cards."""
    depots = (Depot("A", "A", 50.0, 4.0), Depot("C", "C", 51.0, 5.0))
    lanes = (Lane("ROAD", "A", "C", "road", 200.0, 0.0), Lane("RAIL", "A", "C", "rail", 300.0, 0.0))
    rates = (RateCard(VEHICLE, "road", 1.0, 0.0, 30.0),
             RateCard(VEHICLE, "rail", 0.5, 0.0, 30.0, per_trip=per_trip_rail, min_charge=min_charge_rail))
    ship = Shipment("S1", "A", "C", 10.0, vehicle=VEHICLE, objective="cost")
    return Model(Settings(), depots, lanes, rates, (ship,))


def _totals(model: Model) -> tuple[float, dict[str, float]]:
    from pipeline_helpers import route_all

    from costing.price.cost import cost_route

    graph = build_graph(model)
    ship = model.shipments[0]
    cards = model.cards_for(VEHICLE)
    totals = {}
    for lane_id, mode in (("ROAD", "road"), ("RAIL", "rail")):
        use = graph.edges["A", "C", f"{lane_id}>"]["use"]
        totals[lane_id] = cost_route(model, ship, "cost", [(cards[mode], [use])]).total_cost
    out, _stats, _problems = route_all(model)
    return out[0].total_cost, totals


def test_per_trip_charge_decides_between_modes():
    chosen, totals = _totals(_two_mode_case(100.0, 0.0))
    assert totals == {"ROAD": 200.0, "RAIL": 250.0}  # hand-worked: 200 x 1.00; 300 x 0.50 + 100
    assert chosen == 200.0


def test_min_charge_decides_between_modes_of_one_vehicle():
    chosen, totals = _totals(_two_mode_case(0.0, 400.0))
    assert totals == {"ROAD": 200.0, "RAIL": 400.0}  # hand-worked: 200 x 1.00; max(150, 400)
    assert chosen == 200.0


def test_fuel_rebate_cannot_make_a_lane_weight_negative():
    """search.py needs non-negative weights: validation refuses a rebate larger than per_km
    (tests/test_bad_workbooks.py), and a model built in code that holds one is refused by the
    network builder instead of being searched wrongly."""
    from pipeline_helpers import route_all

    from costing.price.cost import cost_route

    # per km: 0.10 + 40 l/100 km x (1.00 - 2.00) = 0.10 - 0.40 = -0.30 (figures invented, each
    # allowed by the contract: all >= 0)
    card = RateCard(VEHICLE, "road", 0.10, 0.0, 24.0, fuel_l_per_100km=40.0, fuel_included_at=2.00)
    lanes = (Lane("AB", "A", "B", "road", 10.0, 0.0, toll=20.0, two_way=False),   # 1 - 4 + 20 = 17
             Lane("AC", "A", "C", "road", 10.0, 0.0, toll=22.0, two_way=False),   # 1 - 4 + 22 = 19
             Lane("CB", "C", "B", "road", 100.0, 0.0, two_way=False))             # 10 - 40 = -30
    model = _tiny(lanes, rates=(card,), settings=Settings(fuel_price_per_litre=1.00),
                  shipments=(Shipment("S1", "A", "B", 10.0, vehicle=VEHICLE, objective="cost"),))
    graph = build_graph(model)
    ship = model.shipments[0]
    via_c = [graph.edges["A", "C", "AC>"]["use"], graph.edges["C", "B", "CB>"]["use"]]
    direct = [graph.edges["A", "B", "AB>"]["use"]]
    sub_via_c = cost_route(model, ship, "cost", [(card, via_c)]).subtotal
    sub_direct = cost_route(model, ship, "cost", [(card, direct)]).subtotal
    assert (sub_direct, sub_via_c) == (17.0, -11.0)  # hand-worked above
    with pytest.raises(ValueError, match="negative cost weight"):
        route_all(model)
    from costing.check.validate import fuel_rebate_problems

    problems = fuel_rebate_problems(model.settings, model.rates, {})
    assert len(problems) == 1 and "driving would earn money" in problems[0].message
