"""The plan stage: from each shipment's route to the vehicle runs of the week, and what each
shipment pays of them.

A *vehicle run* is one movement on one lane step, on one day, with one rate card: ``vehicles``
vehicles carrying one or more loads. Its cost is the leg arithmetic of ``costing.price.cost``
for that many vehicles (``reprice_leg``), so a run carrying one load costs exactly what the
load's leg costs alone.

With Settings ``consolidate = no`` every leg of every routed shipment is a run of its own: the
run's cost is the leg's cost, the shipment's share is all of it, and every total is the
stand-alone total to the cent (nothing else changes).

With ``consolidate = yes`` (the default):

1. **Candidates.** Each routed shipment keeps the route the search chose under its objective.
   A shipment under the cost objective, on a day with other shipments, also gets its cheapest
   route through each of up to ``MAX_HUBS`` consolidation hubs (depots of kind ``hub``): those
   the chosen routes of other shipments of its day pass through first, then the least
   straight-line detour (the two halves searched with the same search core and priced as one
   route). A candidate that would arrive after the
   due date is dropped when the chosen route is on time. Where carrier tariffs price parts of
   the route (``costing.plan.buy.part_options``), the same shipment (also one alone on its day)
   gets candidates with its collection to a hub and/or its delivery from one bought, the rest on
   own vehicles: the trunk's steps shared like any own step, each bought part a fixed price.
2. **Plan.** ``costing.plan.consolidate.plan`` chooses one candidate per shipment so that the
   runs of the week cost least: loads of the same day on the same lane step with the same card
   and the same paid stop hours (the *step key*) share vehicles, packed first-fit decreasing
   over payload, pallet places and volume. A shared run pays, per vehicle, the lane's charges
   once and the largest of its loads' start handling, end handling and trip rates (a vehicle is
   loaded where any of its loads starts, unloaded where any ends). Its
   module docstring states the method and its guarantees: it stops (at a local optimum for
   single and pair moves, or at its bound on sweeps when estimated moves on large runs repeat
   plans), and where no move is estimated it is never worse than every load alone.
3. **Price.** Each run is priced for its vehicles. A run of several loads that saves no vehicle,
   or would not cost less than its loads' legs alone, is split back into one run per load
   (without a vehicle saved, sharing changes only the rounding of ROUND(n x rate)).
4. **Allocate.** A run's cost is shared among its loads by tonne-km (``costing.price.allocate``:
   largest remainder, so the shares add up to the run's cost exactly), then capped so no leg pays
   more than it would alone (``cap_at_standalone``; the excess goes to the other loads of the
   run, and the shipment's note says so). Emissions are shared by the same keys, unrounded.

Guarantees (each tested):

- the shares of every run add up to its cost exactly, to the minor unit;
- no shipment's total exceeds its stand-alone cost on the route it takes (each leg's share is
  at most the leg alone, and the minimum-charge uplift is charged only when it shares nothing);
- the week's total is the sum of the runs' costs plus the minimum-charge uplifts of the
  shipments that share no vehicle;
- with ``consolidate = no`` every shipment's total is its stand-alone total.

What is approximated: loads share a run only where their paid stop hours on that step are the
same; a shared run is handled once per vehicle at each end (at the largest rate of its loads),
not once per load; every load of a day leaves at the start of the day, so waiting for a shared
vehicle is 0 h; candidates through hubs are the cheapest route through each of a few hubs, not
every route.

Speed. Nothing below changes a candidate or a plan (each has a switch; the tests compare):

- A half of a route through a hub (the shipment to the hub, or from it) is routed once per
  *search key* (``SHARE_HALVES``): its origin and destination, the vehicle it names and its
  search profile over every rate card (``costing.plan.route.make_profile``: each card's vehicles
  for its size, the lane steps its dangerous goods and loaded weight close, its tonnes where
  the objective needs them). What the Router's ``route`` answers under the cost objective is a
  function of these alone: its card sets are those of the vehicle named (by minimum charge), each
  set's profile is the key's restricted to those cards, the search depends on the profile and the
  ends, and the comparison of the sets on their totals, which depend on the route and each card's
  vehicles. Only the half's vehicle runs are used (the route through the hub is priced for the
  shipment itself), so shipments with the same key share them. The Run sheet's work counters
  (searches, nodes settled) count the searches made: fewer where halves are shared.
- The straight-line km of the depot pairs measured to choose hubs are kept (``FAST_CANDIDATES``).
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Callable
from dataclasses import dataclass, field, replace

from costing.geo import great_circle_km
from costing.model import WARNING, Model, Problem, RateCard
from costing.money import minor_unit, round_money
from costing.plan.buy import (
    add_buy_options,
    carrier_capacities,
    carrier_route,
    cheaper_alone,
    may_buy_part,
    part_options,
    part_steps,
    parts_text,
    plan_with_carriers,
    settle,
)
from costing.plan.consolidate import Capacity, Load, Step, plan
from costing.plan.route import make_profile
from costing.price.allocate import allocate, cap_at_standalone
from costing.price.cost import ROUTED, CostedShipment, Leg, cost_route, reprice_leg, with_share
from costing.price.rates import fuel_use, load_factor, wtw_per_litre

MAX_HUBS = 3  # hubs tried per shipment for a route through a consolidation hub
# co-travellers a shipment's note and `shared_with` name, the first in input order; the rest are
# counted ("and 442 more"): a run of thousands of loads would otherwise repeat its whole list on
# every load's row (beyond a cell's 32,767 characters), and build it in time and memory that grow
# with the square of the run; the Vehicle runs sheet lists each run's loads
TRAVEL_NAMES = 10
# keep the straight-line km of the depot pairs measured when choosing hubs (``_hubs_near``); False
# measures every pair again (the same floats: tests/test_hub_candidates.py compares)
FAST_CANDIDATES = True
# route each half of a route through a hub once per search key (origin, destination, vehicle
# named, the shipment's search profile over every rate card), not once per shipment; False routes
# every half (the same candidates: tests/test_hub_candidates.py compares)
SHARE_HALVES = True


@dataclass(frozen=True)
class VehicleRun:
    """Vehicles of one rate card on one lane step on one day, with the loads they carry.

    Attributes
    ----------
    run_id : str
        ``R0001``, ... in the order of the Vehicle runs sheet.
    day : datetime.date or None
        The loads' ready day (None when no shipment gives one).
    leg : Leg
        The step priced for the run's vehicles: rates, cost components, ``leg_cost`` (the run's
        cost, currency).
    loads : tuple of str
        Shipment ids on the run, in input order.
    load_legs : tuple of Leg
        Each load's own leg on the step (priced alone), in the order of `loads`.
    tonne_km : float
        Sum of the loads' tonne-km, in load order (the allocation keys' total).
    co2e_kg : float
        The run's emissions, kg CO2e (fuel-based for its vehicles, or tonne-km x intensity).
    """

    run_id: str
    day: _dt.date | None
    leg: Leg
    loads: tuple[str, ...]
    load_legs: tuple[Leg, ...]
    tonne_km: float
    co2e_kg: float
    pallets: tuple[float, ...] = ()  # each load's pallet places, in the order of `loads`
    volumes: tuple[float, ...] = ()  # each load's m3
    empty_for: tuple[str, ...] = ()  # an empty return: the shipments whose vehicles it brings back

    @property
    def vehicles(self) -> int:
        """Vehicles on the run."""
        return self.leg.vehicles

    @property
    def run_cost(self) -> float:
        """The run's cost, currency."""
        return self.leg.leg_cost

    @property
    def standalone_cost(self) -> float:
        """What the loads' legs cost alone, each with vehicles of its own (currency, unrounded
        sum of rounded amounts)."""
        return sum(g.leg_cost for g in self.load_legs)

    @property
    def tonnes(self) -> float:
        """Tonnes carried."""
        return sum(g.weight_t for g in self.load_legs)


@dataclass
class WeekPlan:
    """The plan stage's result.

    Attributes
    ----------
    results : list of CostedShipment
        One per shipment, in the Model's order, each routed leg carrying its run id and shares.
    runs : list of VehicleRun
        Every vehicle run, ordered by day and then as the shipments first use them.
    consolidated : bool
        Settings ``consolidate`` was yes.
    problems : list of Problem
        Late arrivals (warnings naming the shipment's due_date cell).
    notes : list of str
        What the planner reported (e.g. days too large for pair moves).
    """

    results: list[CostedShipment]
    runs: list[VehicleRun]
    consolidated: bool
    problems: list[Problem] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    moves: int = 0


def first_day(model: Model) -> _dt.date | None:
    """The first day of the run: the earliest ready_date of the shipments (None when none has one)."""
    days = [s.ready_date for s in model.shipments if s.ready_date is not None]
    return min(days) if days else None


def late_hours(res: CostedShipment, start: _dt.date | None) -> float | None:
    """Hours the shipment arrives after the end of its due_date (0 when on time), leaving at the
    start of its ready day (`start` when it gives none); None when it has no due_date, no route,
    or no day to start from."""
    s = res.shipment
    ready = s.ready_date or start
    if s.due_date is None or ready is None or res.status != ROUTED:
        return None
    allowed = ((s.due_date - ready).days + 1) * 24.0
    return max(0.0, res.elapsed_hours - allowed)


def _route_runs(res: CostedShipment) -> list[tuple[RateCard, list]]:
    """A priced route as vehicle runs (rate card, consecutive lane steps), as cost_route takes them."""
    runs: list[tuple[RateCard, list]] = []
    for leg in res.legs:
        if runs and runs[-1][0] is leg.card and leg.trip_rate == 0 and leg.start_handling_rate == 0:
            runs[-1][1].append(leg.use)
        else:
            runs.append((leg.card, [leg.use]))
    return runs


def _join(first: list[tuple[RateCard, list]], second: list[tuple[RateCard, list]]):
    """Two routes end to end; the vehicle goes on where both sides use the same card."""
    if first and second and first[-1][0] is second[0][0]:
        return first[:-1] + [(first[-1][0], first[-1][1] + second[0][1])] + second[1:]
    return first + second


def _step_key(leg: Leg) -> tuple:
    """What loads must have in common to share a run on a step: the lane direction and the paid
    stop hours (the card and the day are the planner's own keys)."""
    return (leg.use.key, leg.paid_stop_hours)


def _run_rates(legs: list[Leg]) -> Leg:
    """The first load's leg with the run's per-vehicle handling and trip rates: the largest of
    each over the loads (a vehicle is loaded where any load starts a run, unloaded where any
    ends or is handled at a hub, and dispatched where any load starts a vehicle run)."""
    first = legs[0]
    if len(legs) == 1:
        return first
    return replace(first, start_handling_rate=max(g.start_handling_rate for g in legs),
                   end_handling_rate=max(g.end_handling_rate for g in legs),
                   trip_rate=max(g.trip_rate for g in legs),
                   handling_hours=max(g.handling_hours for g in legs))


def _card_key(card: RateCard) -> tuple[str, str]:
    return card.vehicle, card.mode


def _hubs_near(model: Model, res: CostedShipment, hubs: list[str], used: set[str],
               km: dict | None = None) -> list[str]:
    """Up to MAX_HUBS of `hubs` not already on the route: those on other loads' routes of the
    day (`used`) first, then the least straight-line detour first. `km` keeps the straight-line
    km of each pair of depots already measured (the same function of the same coordinates)."""
    s = res.shipment
    on_route = {s.origin, s.destination} | {leg.use.to_depot for leg in res.legs}
    out = [h for h in hubs if h not in on_route]
    if km is None:
        km = {}

    def line(x, y) -> float:
        key = (x.depot_id, y.depot_id)
        d = km.get(key)
        if d is None:
            d = km[key] = great_circle_km(x.latitude, x.longitude, y.latitude, y.longitude)
        return d

    def detour(h: str) -> float:
        a, b, c = model.depot(s.origin), model.depot(h), model.depot(s.destination)
        if None in (a.latitude, b.latitude, c.latitude):
            return 0.0
        return line(a, b) + line(b, c)

    return sorted(out, key=lambda h: (h not in used, detour(h), h))[:MAX_HUBS]


def _candidates(model: Model, route: Callable, results: list[CostedShipment], day_of,
                prepare: Callable | None = None) -> tuple[list[list], list[list]]:
    """Per result: its candidate routes (CostedShipment), the chosen one first; and its own
    routes through hubs to buy parts of (``costing.plan.buy.part_options``): the candidates, and
    for a load alone on its day that a carrier may take, its routes through hubs (offered only
    with a part bought: alone, a route through a hub is never cheaper than the chosen one)."""
    hub_ids = [d.depot_id for d in model.depots if d.kind == "hub"]
    start = first_day(model)
    per_day_hubs: dict = {}
    per_day: dict = {}
    for i, res in enumerate(results):
        if res.status == ROUTED:
            per_day[day_of(res.shipment)] = per_day.get(day_of(res.shipment), 0) + 1
            for leg in res.legs:
                for d in (leg.use.from_depot, leg.use.to_depot):
                    if d in hub_ids:
                        per_day_hubs.setdefault(day_of(res.shipment), {}).setdefault(d, set()).add(i)
    tries: dict[int, list[str]] = {}
    km: dict | None = {} if FAST_CANDIDATES else None
    for i, res in enumerate(results):
        if res.status == ROUTED and res.objective == "cost" and hub_ids and (
                per_day[day_of(res.shipment)] > 1 or may_buy_part(model, res)):
            day_hubs = per_day_hubs.get(day_of(res.shipment), {})
            used = {h for h, users in day_hubs.items() if users - {i}}
            tries[i] = _hubs_near(model, res, hub_ids, used, km)
    # each try's halves: the shipment to the hub and from it (made once, for prepare and route)
    halves = {i: [(replace(results[i].shipment, destination=h), replace(results[i].shipment, origin=h))
                  for h in hubs] for i, hubs in tries.items()}
    if prepare is not None:  # the halves searched together, one search per origin where it pays
        prepare([to for pairs in halves.values() for to, _fr in pairs]
                + [fr for pairs in halves.values() for _to, fr in pairs])
    out: list[list] = []
    bases: list[list] = []
    memo: dict = {}  # the lane steps' charges, shared by every route through a hub (cost_route)
    found: dict = {}  # a half's search key -> its vehicle runs (None: no route)
    cards = list(model.rates)

    def runs_of(half) -> list | None:
        """The half's route as vehicle runs (None when it has none): routed once per search key
        (``SHARE_HALVES``, module docstring)."""
        key = None
        if SHARE_HALVES:
            key = (half.origin, half.destination, half.vehicle, make_profile(model, half, "cost", cards))
            if key in found:
                return found[key]
        got = route(half)
        runs = _route_runs(got) if got.status == ROUTED else None
        if key is not None:
            found[key] = runs
        return runs

    for i, res in enumerate(results):
        cands = [res]
        lone = [] if res.status != ROUTED or per_day[day_of(res.shipment)] > 1 else [res]
        if i in tries:
            s = res.shipment
            on_time = (late_hours(res, start) or 0.0) == 0.0
            for to_hub, from_hub in halves[i]:
                ra = runs_of(to_hub)
                rb = runs_of(from_hub)
                if ra is None or rb is None:
                    continue
                via = cost_route(model, s, "cost", _join(ra, rb), memo=memo)
                keys = [(_step_key(g), _card_key(g.card)) for g in via.legs]
                if len(set(keys)) != len(keys):
                    continue  # a route through the hub that repeats a step is never the cheapest
                if on_time and (late_hours(via, start) or 0.0) > 0.0:
                    continue
                (lone if lone else cands).append(via)
        out.append(cands)
        bases.append(lone or [c for c in cands if c.status == ROUTED])
    return out, bases


def _load(index: int, res_list: list[CostedShipment], model: Model, day,
          steps_seen: dict | None = None) -> Load:
    """Shipment `index` as the planner's load: each candidate route as steps priced for one
    vehicle. `steps_seen` keeps the steps already made: a step is the same for every leg with
    the same lane use and card objects and the same paid stop hours and rates (the arguments of
    the leg's repricing), so it is made once."""
    s = res_list[0].shipment
    routes = []
    places = minor_unit(model.settings.currency)
    if steps_seen is None:
        steps_seen = {}
    for res in res_list:
        if res.bought:  # the carrier option (costing.plan.buy): a fixed price for this load alone
            routes.append(carrier_route(res, index))
            continue
        steps = []
        for g in res.legs:
            key = (id(g.use), id(g.card), g.paid_stop_hours, g.start_handling_rate, g.end_handling_rate,
                   g.trip_rate, g.toll_rate)
            hit = steps_seen.get(key)
            if hit is None or hit[0] is not g.use or hit[1] is not g.card:
                one = reprice_leg(model, g, 1)
                extras = (one.start_handling_cost, one.end_handling_cost, one.trip_cost)
                shared = round_money(one.leg_cost - sum(extras), places)
                hit = steps_seen[key] = (g.use, g.card,
                                         Step((_step_key(g),), _card_key(g.card), shared, g.use.km, extras))
            steps.append(hit[2])
        routes.append(tuple(steps) + part_steps(res, index))  # parts bought: fixed prices
    return Load(index, day, s.weight_t, s.pallets or 0.0, s.volume_m3 or 0.0, tuple(routes))


def _run_co2e(leg: Leg, vehicles: int, tonne_km: float, tonnes: float = 0.0) -> float:
    """A run's kg CO2e (well-to-wheel), in the order of its spreadsheet formula (Vehicle runs):
    fuel basis, its vehicles' fuel at the run's load factor (MIN(1, tonnes / vehicles / payload));
    default basis, the run's tonne-km x the mode's intensity."""
    card = leg.card
    if leg.co2e_basis == "fuel":
        l100 = fuel_use(card, load_factor(tonnes, vehicles, card))
        return vehicles * leg.use.km * l100 / 100 * wtw_per_litre(card)
    return tonne_km * leg.intensity_g_per_tkm / 1000


def _stretches(res: CostedShipment) -> list[tuple[RateCard, list[Leg]]]:
    """The shipment's vehicle stretches: consecutive legs on one rate card (where its vehicles
    are loaded, to where they are unloaded)."""
    out: list[tuple[RateCard, list[Leg]]] = []
    for leg in res.legs:
        if out and out[-1][0] is leg.card:
            out[-1][1].append(leg)
        else:
            out.append((leg.card, [leg]))
    return out


def _empty_returns(model: Model, route: Callable, chosen: list[CostedShipment], runs: list[VehicleRun],
                   day_of, consolidate: bool, places: int):
    """Empty returns (Settings return_empty): the vehicles of each stretch (legs on one card,
    from where they were loaded, S, to where they were unloaded, E) drive back empty from E to S
    over the cheapest way with that card (the same search, for an empty vehicle), priced with
    the leg arithmetic for their vehicles without handling or trip charges. Stretches of the same
    day, card, S and E return together (with consolidation): as many vehicles as their loads pack
    into; the return's cost is shared among them by the tonne-km of their stretches (largest
    remainder), each capped at its own return alone. Returns (runs with the empty runs appended,
    shipment index -> (its share, its own return alone), notes)."""
    from costing.model import Shipment
    from costing.plan.consolidate import vehicles_for
    from costing.price.rates import load_vehicles

    groups: dict[tuple, list[tuple[int, list[Leg]]]] = {}
    for i, res in enumerate(chosen):
        if res.status != ROUTED:
            continue
        for card, stretch in _stretches(res):
            s_, e_ = stretch[0].use.from_depot, stretch[-1].use.to_depot
            key = (day_of(res.shipment), _card_key(card), s_, e_) + (() if consolidate else (i,))
            groups.setdefault(key, []).append((i, stretch))
    paths: dict[tuple, CostedShipment | None] = {}
    out_runs = list(runs)
    empty: dict[int, tuple[float, float]] = {}
    notes: list[str] = []
    for key, members in groups.items():
        day, (vehicle, mode), s_, e_ = key[:4]
        card = next(c for c in model.rates if (c.vehicle, c.mode) == (vehicle, mode))
        back = paths.get((vehicle, mode, e_, s_), False)
        if back is False:
            ghost = Shipment(f"empty {vehicle} {e_}>{s_}", e_, s_, 0.0, vehicle=vehicle, objective="cost")
            found = route(ghost)
            ok = found.status == ROUTED and all(g.card is card for g in found.legs)
            back = paths[(vehicle, mode, e_, s_)] = found if ok else None
        if back is None:
            notes.append(f"no way back for empty {vehicle} from {e_} to {s_}: no empty return costed")
            continue
        bare = [replace(g, start_handling_rate=0.0, end_handling_rate=0.0, trip_rate=0.0, handling_hours=0.0,
                        weight_t=0.0) for g in back.legs]
        ships = [chosen[i].shipment for i, _st in members]
        own = [[reprice_leg(model, g, load_vehicles(s.weight_t, card, s.pallets, s.volume_m3)) for g in bare]
               for s in ships]
        alone = [round_money(sum(g.leg_cost for g in legs), places) for legs in own]
        n = vehicles_for([(s.weight_t, s.pallets or 0.0, s.volume_m3 or 0.0) for s in ships], _capacity(card))
        together = [reprice_leg(model, g, n) for g in bare]
        cost = round_money(sum(g.leg_cost for g in together), places)
        if len(members) > 1 and cost < round_money(sum(alone), places):
            keys = [sum(g.tonne_km for g in st) for _i, st in members]
            shares, _cut = cap_at_standalone(allocate(cost, keys, places), alone, places)
            trips = [(tuple(s.shipment_id for s in ships), together)]
        else:  # one shipment, or nothing saved: each brings its own vehicles back
            shares = alone
            trips = [((s.shipment_id,), legs) for s, legs in zip(ships, own)]
        for ids, legs in trips:
            for g in legs:
                out_runs.append(VehicleRun(f"R{len(out_runs) + 1:04d}", day, g, (), (), 0.0,
                                           _run_co2e(g, g.vehicles, 0.0), (), (), ids))
        for (i, _st), sh, al in zip(members, shares, alone):
            old_share, old_alone = empty.get(i, (0.0, 0.0))
            empty[i] = (round_money(old_share + sh, places), round_money(old_alone + al, places))
    return out_runs, empty, notes


def _travels_with(parts: list[list[int]], i: int, sids: list[str]) -> tuple[tuple[str, ...], int]:
    """(the ids of the first TRAVEL_NAMES shipments other than `i` in the shared `parts` (each
    the sorted input positions of one run's loads), their number in all). The first few of a
    union are among the first few of each part, so only those are merged; the count takes the
    union only for a shipment on several shared runs."""
    if not parts:
        return (), 0
    if len(parts) == 1:
        count = len(parts[0]) - 1
        first = [j for j in parts[0][:TRAVEL_NAMES + 1] if j != i][:TRAVEL_NAMES]
    else:
        count = len(set().union(*parts)) - 1
        first = sorted({j for part in parts for j in part[:TRAVEL_NAMES + 1]} - {i})[:TRAVEL_NAMES]
    return tuple(sids[j] for j in first), count


def _capacity(card: RateCard) -> Capacity:
    return Capacity(card.payload_t, card.pallet_places, card.volume_m3)


def _quota(amount: float, key: float, total_key: float, n: int) -> float:
    """amount x key / total_key in the order of the share formulas (amount / n when no keys)."""
    if total_key == key:
        return amount
    if total_key == 0:
        return amount / n
    return amount * key / total_key


def plan_week(model: Model, route: Callable[..., CostedShipment],
              results: list[CostedShipment], prepare: Callable | None = None) -> WeekPlan:
    """Turn routed shipments into vehicle runs and price each shipment's share.

    Parameters
    ----------
    model : Model
        Settings ``consolidate`` decides whether loads share vehicles.
    route : callable
        ``route(shipment) -> CostedShipment``: the cheapest route of a (changed) shipment under
        the cost objective, for candidates through hubs (the pipeline passes the Router's). Its
        lane steps and cards must depend only on the search key of the module docstring (Speed):
        halves with the same key are routed once.
    results : list of CostedShipment
        The routing stage's results, in the Model's order.
    prepare : callable, optional
        ``prepare(shipments)``: batch the searches of the candidates' halves (the Router's
        ``prepare``, one one-to-many search per origin and profile); the answers are the same.

    Returns
    -------
    WeekPlan
        The results with run ids and shares on their legs, and the runs.
    """
    places = minor_unit(model.settings.currency)
    start = first_day(model)

    def day_of(s):
        return s.ready_date or start

    consolidate = model.settings.consolidate == "yes"
    notes: list[str] = []
    moves = 0
    chosen = list(results)
    # groups: (day, step key, card) -> [(result index, leg index)], in order of first use
    groups: dict[tuple, list[tuple[int, int]]] = {}
    vehicles: dict[tuple, int] = {}
    if consolidate:
        own_cands, bases = _candidates(model, route, results, day_of, prepare)
        cands = add_buy_options(model, results, own_cands, day_of)
        for i, res in enumerate(results):  # parts bought: after the whole-shipment carrier
            if res.status == ROUTED:
                cands[i] = cands[i] + part_options(model, res, bases[i], day_of(res.shipment))
        idx = [i for i, c in enumerate(cands) if c[0].status == ROUTED]
        steps_seen: dict = {}
        loads = [_load(i, cands[i], model, day_of(results[i].shipment), steps_seen) for i in idx]
        capacities = {_card_key(c): Capacity(c.payload_t, c.pallet_places, c.volume_m3) for c in model.rates}
        capacities.update(carrier_capacities(model))
        p = plan_with_carriers(loads, capacities) if model.tariffs else plan(loads, capacities)
        notes += p.notes
        moves = p.moves
        for i in idx:
            chosen[i] = cands[i][p.choice[i]]
        for run in p.runs:
            vehicles[(run.day, run.key[0], run.card)] = run.vehicles
    else:
        chosen = cheaper_alone(model, results, day_of)
    for i, res in enumerate(chosen):
        for k, g in enumerate(res.legs):
            key = (day_of(res.shipment), _step_key(g), _card_key(g.card))
            if not consolidate:
                key = key + (i, k)  # every leg its own run
            groups.setdefault(key, []).append((i, k))

    # runs in order: by day, then by first use
    order = sorted(groups, key=lambda key: (key[0] is not None, key[0] or _dt.date.min))
    legs: dict[tuple[int, int], Leg] = {}
    shared: dict[int, list[list[int]]] = {}  # shipment -> its shared parts' members, sorted
    capped: dict[int, list[str]] = {}
    runs: list[VehicleRun] = []
    for key in order:
        members = groups[key]
        own = [chosen[i].legs[k] for i, k in members]
        n = vehicles.get(key[:3], own[0].vehicles) if consolidate else own[0].vehicles
        run_leg = (own[0] if len(members) == 1 and n == own[0].vehicles
                   else reprice_leg(model, _run_rates(own), n))
        pieces = [members]
        if len(members) > 1 and (n >= sum(g.vehicles for g in own)
                                 or run_leg.leg_cost >= round_money(sum(g.leg_cost for g in own), places)):
            pieces = [[m] for m in members]  # sharing saves no vehicle here: each load alone
        for part in pieces:
            part_legs = [chosen[i].legs[k] for i, k in part]
            rl = run_leg if len(part) == len(members) else part_legs[0]
            tkm = sum(g.tonne_km for g in part_legs)
            co2e = _run_co2e(rl, rl.vehicles, tkm, sum(g.weight_t for g in part_legs))
            run_id = f"R{len(runs) + 1:04d}"
            keys = [g.tonne_km for g in part_legs]
            cost_shares = allocate(rl.leg_cost, keys, places) if len(part) > 1 else [rl.leg_cost]
            alone = [g.leg_cost for g in part_legs]
            cut: list[int] = []
            if len(part) > 1:
                cost_shares, cut = cap_at_standalone(cost_shares, alone, places)
            together = sorted({j for j, _k in part})
            for pos, ((i, k), g) in enumerate(zip(part, part_legs)):
                q = _quota(rl.leg_cost, g.tonne_km, tkm, len(part))
                legs[(i, k)] = with_share(g, run_id=run_id, cost_share=cost_shares[pos],
                                          share_adjust=round_money(cost_shares[pos] - round_money(q, places),
                                                                   places),
                                          co2e_share=_quota(co2e, g.tonne_km, tkm, len(part)))
                if len(part) > 1:
                    shared.setdefault(i, []).append(together)  # i itself is left out below
                if pos in cut:
                    capped.setdefault(i, []).append(g.use.lane.lane_id)
            ships = [chosen[i].shipment for i, _k in part]
            runs.append(VehicleRun(run_id, key[0], rl, tuple(s.shipment_id for s in ships), tuple(part_legs),
                                   tkm, co2e, tuple(s.pallets or 0.0 for s in ships),
                                   tuple(s.volume_m3 or 0.0 for s in ships)))

    multi = {r.run_id for r in runs if len(r.loads) > 1}
    empty: dict[int, tuple[float, float]] = {}
    if model.settings.return_empty == "yes":
        runs, empty, empty_notes = _empty_returns(model, route, chosen, runs, day_of, consolidate, places)
        notes += empty_notes
    out: list[CostedShipment] = []
    problems: list[Problem] = []
    sids = [c.shipment.shipment_id for c in chosen]
    for i, res in enumerate(chosen):
        if res.status != ROUTED or res.bought:
            out.append(replace(res, day=day_of(res.shipment)))
            continue
        new_legs = tuple(legs[(i, k)] for k in range(len(res.legs)))
        with_ids, with_count = _travels_with(shared.get(i, ()), i, sids)
        msg = [res.message] if res.message else []
        if res.parts:
            msg = [m for m in [results[i].message] if m]
            msg.append(parts_text(res, places) + "; the rest on own vehicles")
        elif res is not results[i]:
            old = results[i]
            msg = [m for m in [old.message] if m]
            via = [leg.use.to_depot for leg in res.legs[:-1]]
            msg.append(f"routed via {', '.join(via)} to share vehicles (alone it would go "
                       f"{' > '.join([old.legs[0].use.from_depot] + [g.use.to_depot for g in old.legs])} "
                       f"for {old.standalone_cost:.{places}f})")
        if with_ids:
            steps = list(dict.fromkeys(g.use.lane.lane_id for g in new_legs if g.run_id in multi))
            more = f" and {with_count - len(with_ids)} more" if with_count > len(with_ids) else ""
            msg.append(f"travels with {', '.join(with_ids)}{more} on {', '.join(steps)}")
        if i in capped:
            msg.append(f"share capped at its stand-alone cost on {', '.join(dict.fromkeys(capped[i]))}")
        share, alone = empty.get(i, (0.0, 0.0))
        if alone:
            msg.append(f"empty return {share:.{places}f} (alone {alone:.{places}f})")
        new = replace(res, legs=new_legs, shared_with=with_ids, shared_count=with_count,
                      day=day_of(res.shipment), message="; ".join(msg), empty_return_cost=share,
                      empty_return_alone=alone)
        late = late_hours(new, start)
        if late:
            s = res.shipment
            new = replace(new, message=new.message + f"; late: arrives {late:.1f} h after its due_date")
            sheet, cell = model.cell("Shipments", "due_date", s.row)
            problems.append(Problem(WARNING, sheet, cell,
                                    f"shipment {s.shipment_id} arrives {late:.1f} h after the end of its "
                                    f"due_date {s.due_date}",
                                    "allow a later due_date, an earlier ready_date, or a faster objective "
                                    "for it (objective = time)"))
        out.append(new)
    out = settle(model, out, results, day_of, places)
    return WeekPlan(out, runs, consolidate, problems, notes, moves)
