"""Make or buy: every shipment priced on own vehicles and at the cheapest carrier tariff, the
cheaper for the week chosen. Called by the plan stage (``costing.plan.week``).

How a carrier takes part in the plan. A carrier price is a fixed price per consignment, not a
vehicle: the carrier option of a shipment is one more candidate route for the planner
(``costing.plan.consolidate``), a single step whose key is the shipment's own (so no other
load shares it), run by a carrier pseudo-card with no capacity limit, costing the carrier's
charge. The planner then chooses, for the whole week, between riding the own fleet (where
loads share vehicles) and buying: a load moves to the carrier when that lowers the week's
cost, i.e. when the carrier charges less than what the load adds to the own runs.

What it guarantees:

- A shipment is offered a carrier only when it is under the cost objective, names no vehicle
  (a named vehicle is an instruction to use the own fleet), and a tariff row fits (zones,
  validity on its ready day, band, dangerous goods; ``costing.price.tariffs.quote``).
- A shipment with no own route (``no_route``) that a carrier takes is bought (status
  ``routed``, vehicle = the carrier); one a carrier does not take keeps its reason.
- With Settings ``consolidate = no`` each shipment is the cheaper of its own route alone and
  the carrier (ties: own vehicles).
- A bought shipment has no legs and no vehicle runs; its total is the carrier's charge.
- Every shipment with a carrier option shows both prices (``make_cost``, ``buy_cost``), what
  was chosen and why.

Part of a route bought (``part_options``). A load whose own route runs through a consolidation
hub (depot kind ``hub``), or that could (the plan stage's routes through up to ``MAX_HUBS`` hubs),
is also offered the route with its *collection* (origin to the first hub) and/or its *delivery*
(last hub to the destination) bought from the cheapest carrier for that part, the rest (the
trunk) on own vehicles. Such a candidate is the trunk's own steps, shared with other loads as
any own step is, plus one carrier step per bought part, each a fixed price only this load uses.
Its total is the trunk's share plus the parts' charges; each bought part is its own Carrier
charges row (with the lane ends it covers), and the shipment's note says which parts were bought,
from whom, for how much, against what own vehicles would cost on that part alone.

The week's plan is never dearer than its own fleet plan (the planner starts there), nor than
buying every load a carrier takes whole with the others as the own fleet plan has them (when
that is cheaper, the planner runs again from it; ``plan_with_carriers``).

Approximations: the carrier's transit time is not known, so a bought shipment is not marked
late (nor is a bought part counted in a shipment's hours); carriers are not offered under the
time, distance, emissions or blended objectives, and parts of routes only with Settings
``consolidate = yes``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from costing.model import Model, RateCard
from costing.plan.consolidate import Capacity, Step
from costing.price.cost import NO_ROUTE, ROUTED, CostedShipment, cost_route
from costing.price.tariffs import BoughtPart, quote

CARRIER = "carrier"


@dataclass(frozen=True)
class CarrierCard:
    """The planner's card of a carrier (never equal to a rate card's (vehicle, mode) key)."""

    carrier: str


def rates_of(model: Model) -> dict[str, float]:
    """ISO 4217 code -> units of the run's currency per unit (the Currencies sheet; empty when
    the Model has none)."""
    return dict(getattr(model, "currencies", None) or {})


def buy_option(model: Model, res: CostedShipment, day) -> CostedShipment | None:
    """`res` bought from the cheapest carrier (no legs, total = the carrier's charge), or None
    when the shipment may not or cannot be bought (module docstring)."""
    s = res.shipment
    if not model.tariffs or s.vehicle is not None or res.objective != "cost":
        return None
    if res.status not in (ROUTED, NO_ROUTE):
        return None
    q = quote(model, s, day, rates_of(model))
    if q is None:
        return None
    return replace(res, status=ROUTED, vehicle=q.carrier, legs=(), min_charge=0.0, message="",
                   shared_with=(), quote=q, bought=True, chosen="buy")


def add_buy_options(model: Model, results: list[CostedShipment], cands: list[list], day_of) -> list[list]:
    """The planner's candidates with each shipment's carrier option added last; a shipment with
    no own route gets the carrier as its only candidate.

    Every carrier option is offered, also one dearer than the load's own route alone: a load can
    add more than its own cost alone to the runs it joins (it may need another vehicle, and a run
    pays per vehicle the largest handling of its loads). The price: every load now has a second
    candidate, so every load's moves are evaluated (measured on 2,000 loads of one day,
    benchmarks/bench_tariffs.py: about 20 times the plan's time; offering only carriers cheaper
    than the route alone took 5 times, but bought 28 loads instead of 58 and saved 0.8 % of the
    week instead of 1.3 %)."""
    out = []
    for res, own in zip(results, cands):
        buy = buy_option(model, res, day_of(res.shipment))
        if buy is None:
            out.append(own)
        elif res.status != ROUTED:
            out.append([buy])
        else:
            out.append(list(own) + [buy])
    return out


def carrier_capacities(model: Model) -> dict:
    """Planner card -> Capacity for every carrier: no limit (a carrier price is per consignment)."""
    return {CarrierCard(t.carrier): Capacity(math.inf) for t in model.tariffs}


def carrier_route(res: CostedShipment, index: int) -> tuple[Step, ...]:
    """A bought candidate as the planner's route: one step only this load uses, costing the
    carrier's charge."""
    q = res.quote
    return (Step((CARRIER, q.carrier, index), CarrierCard(q.carrier), q.charge, 0.0, ()),)


def part_steps(res: CostedShipment, index: int) -> tuple[Step, ...]:
    """The bought parts of a candidate as planner steps: one per part, only this load uses it,
    costing the carrier's charge for the part."""
    return tuple(Step((CARRIER, p.quote.carrier, index, p.role), CarrierCard(p.quote.carrier), p.charge,
                      0.0, ()) for p in res.parts)


def may_buy(model: Model, res: CostedShipment) -> bool:
    """Whether a routed shipment may be offered carriers: tariffs exist, it is under the cost
    objective and names no vehicle."""
    return (bool(model.tariffs) and res.status == ROUTED and res.shipment.vehicle is None
            and res.objective == "cost")


def may_buy_part(model: Model, res: CostedShipment) -> bool:
    """Whether a part of the shipment's route could be bought: it may be offered carriers
    (``may_buy``) and a tariff row leaves its origin's zone or enters its destination's zone."""
    if not may_buy(model, res):
        return False
    s = res.shipment
    fz, tz = model.zone(s.origin), model.zone(s.destination)
    return any(a == fz or b == tz for a, b in model.tariffs_by_zones)


def _runs_of(legs) -> list[tuple[RateCard, list]]:
    """Consecutive priced legs as vehicle runs (rate card, lane steps), as cost_route takes them:
    a new run where the card changes or a leg starts one (trip or start handling); the first leg
    always starts one."""
    runs: list[tuple[RateCard, list]] = []
    for leg in legs:
        if runs and runs[-1][0] is leg.card and leg.trip_rate == 0 and leg.start_handling_rate == 0:
            runs[-1][1].append(leg.use)
        else:
            runs.append((leg.card, [leg.use]))
    return runs


def part_options(model: Model, res: CostedShipment, bases, day) -> list[CostedShipment]:
    """Candidates of `res` with parts of the route bought (module docstring), from its own routes
    through consolidation hubs (`bases`: routed CostedShipments of the same shipment).

    For each base with a hub between its ends: the collection bought (origin to the first hub,
    the legs from there on own vehicles), the delivery bought (the legs to the last hub on own
    vehicles, last hub to destination bought) and, where the first and last hubs differ, both.
    A part is offered only where a tariff row prices it (``costing.price.tariffs.quote`` on the
    shipment with the part's ends). The own legs are priced anew as a route of their own
    (``cost_route``: a vehicle run now starts at the hub, with its handling and trip charges).
    Candidates are returned without duplicates, in the order found."""
    if not may_buy(model, res):
        return []
    s = res.shipment
    rates = rates_of(model)
    hubs = {d.depot_id for d in model.depots if d.kind == "hub"}
    quotes: dict = {}

    def part(role: str, a: str, b: str, own_legs) -> BoughtPart | None:
        if (a, b) not in quotes:
            quotes[(a, b)] = quote(model, replace(s, origin=a, destination=b), day, rates)
        q = quotes[(a, b)]
        if q is None:
            return None
        own = cost_route(model, s, "cost", _runs_of(own_legs)).standalone_cost
        return BoughtPart(role, a, b, q, own)

    out: dict = {}
    for base in bases:
        legs = base.legs
        at = [k for k, g in enumerate(legs[:-1]) if g.use.to_depot in hubs]  # leg k ends at a hub
        if not at:
            continue
        first, last = at[0], at[-1]
        h1, h2 = legs[first].use.to_depot, legs[last].use.to_depot
        splits = [((("collection", s.origin, h1, legs[:first + 1]),), first + 1, len(legs)),
                  ((("delivery", h2, s.destination, legs[last + 1:]),), 0, last + 1)]
        if first != last:
            splits.append(((("collection", s.origin, h1, legs[:first + 1]),
                            ("delivery", h2, s.destination, legs[last + 1:])), first + 1, last + 1))
        for wanted, a, b in splits:
            parts = [part(*w) for w in wanted]
            if any(p is None for p in parts):
                continue
            trunk = legs[a:b]
            key = (tuple((g.use.key, g.card.vehicle, g.card.mode) for g in trunk),
                   tuple((p.role, p.from_depot, p.to_depot) for p in parts))
            if key in out:
                continue
            own = cost_route(model, s, "cost", _runs_of(trunk), res.settled, res.pushed)
            out[key] = replace(own, parts=tuple(parts))
    return list(out.values())


def plan_with_carriers(loads, capacities: dict):
    """The week's plan when loads may be bought: first the plan of the own fleet alone (the
    loads without their carrier options: exactly the plan the week would have without
    tariffs), then the planner again with the carriers, starting there.

    Every move lowers the total, so the planned total is never above the own fleet's plan. Why
    not start from each load's cheapest alone, carrier included: a carrier cheaper than each
    load's vehicle alone can be dearer than one shared vehicle for several loads (three loads at
    250, 250 and 500 against one vehicle for 776.25), which no single or pair move from there
    finds; and starting from the own plan moves only the few loads worth buying (measured:
    benchmarks/bench_tariffs.py). With no carrier among the candidates this is one plan.

    Then the other end: every load a carrier takes whole, bought (the rest as the own plan has
    them). When that costs less than the plan found, the planner runs again from there and the
    cheaper of the two plans is kept, so the plan is never dearer than buying all it can either
    (the three 250s case above, with the shared vehicle dearer than the three consignments)."""
    from costing.plan.consolidate import plan

    if not any(isinstance(st.card, CarrierCard) for ld in loads for route in ld.routes for st in route):
        return plan(loads, capacities)
    own = [replace(ld, routes=tuple(r for r in ld.routes if not _buys(r)) or ld.routes)
           for ld in loads]  # carrier candidates come after the own ones, so those keep their index
    start = plan(own, capacities).choice
    best = plan(loads, capacities, start=start)
    # every load a carrier takes whole, bought; the others as the own fleet plan has them
    whole = {ld.load_id: k for ld in loads for k, r in enumerate(ld.routes) if _bought_route(r)}
    if whole:
        bought = {**start, **whole}
        if plan(loads, capacities, start=bought, max_sweeps=0).total < best.total - 1e-7:
            other = plan(loads, capacities, start=bought)
            if other.total < best.total:
                best = other
    return best


def _bought_route(route) -> bool:
    """A whole-shipment carrier candidate: one carrier step."""
    return len(route) == 1 and isinstance(route[0].card, CarrierCard)


def _buys(route) -> bool:
    """A candidate with any carrier step (bought whole or in part)."""
    return any(isinstance(st.card, CarrierCard) for st in route)


def cheaper_alone(model: Model, results: list[CostedShipment], day_of) -> list[CostedShipment]:
    """With consolidate = no: each shipment's own route alone or the carrier, whichever costs
    less (ties: own vehicles)."""
    out = []
    for res in results:
        buy = buy_option(model, res, day_of(res.shipment))
        if buy is not None and (res.status != ROUTED or buy.total_cost < res.standalone_cost):
            out.append(buy)
        else:
            out.append(res)
    return out


def settle(model: Model, planned: list[CostedShipment], routed: list[CostedShipment], day_of,
           places: int) -> list[CostedShipment]:
    """The plan's results with make_cost, buy_cost, chosen and why filled in.

    Parameters
    ----------
    planned : list of CostedShipment
        The plan stage's results (bought ones with ``bought`` set).
    routed : list of CostedShipment
        The routing stage's results in the same order (each shipment's own route alone).
    """
    out = []
    for res, own in zip(planned, routed):
        alone = own.standalone_cost if own.status == ROUTED else None
        if res.bought:
            q = res.quote
            if alone is None:
                why = (f"buy: no own route ({own.message or own.status}); {q.carrier} charges "
                       f"{q.charge:.{places}f}")
            else:
                why = (f"buy: {q.carrier} charges {q.charge:.{places}f}, less than it adds to the own "
                       f"vehicle runs (alone on own vehicles {alone:.{places}f})")
            note = f"bought from {q.carrier}: tariff row {q.tariff.row}, {q.from_zone} to {q.to_zone}, " \
                   f"{q.price.charged_kg:g} kg chargeable"
            message = "; ".join(m for m in (note, own.message if own.status == ROUTED else "") if m)
            out.append(replace(res, make_cost=alone, why=why, message=message))
            continue
        buy = buy_option(model, own, day_of(own.shipment)) if res.status == ROUTED else None
        if res.parts:
            out.append(_settle_parts(res, own, buy, places))
            continue
        if buy is None:
            out.append(res)
            continue
        q = buy.quote
        make = res.total_cost
        if make <= q.charge:
            why = f"make: {make:.{places}f} on own vehicles, no more than {q.carrier}'s {q.charge:.{places}f}"
        else:
            why = (f"make: {q.carrier} charges {q.charge:.{places}f}, less than its share "
                   f"{make:.{places}f}, but taking it off the own vehicle runs would save the week less "
                   "than that (it rides in room the runs have anyway)")
        out.append(replace(res, quote=q, make_cost=make, chosen="make", why=why))
    return out


def parts_text(res: CostedShipment, places: int) -> str:
    """What the shipment's note says of its bought parts: each part's ends, carrier, charge, tariff
    row and what own vehicles would cost on it alone."""
    out = []
    for p in res.parts:
        q = p.quote
        own = "" if p.own_cost is None else f" (own vehicles alone on it {p.own_cost:.{places}f})"
        out.append(f"{p.role} {p.from_depot} > {p.to_depot} bought from {q.carrier} for {p.charge:.{places}f}"
                   f"{own}: tariff row {q.tariff.row}, {q.from_zone} to {q.to_zone}, "
                   f"{q.price.charged_kg:g} kg chargeable")
    return "; ".join(out)


def _settle_parts(res: CostedShipment, own: CostedShipment, buy: CostedShipment | None,
                  places: int) -> CostedShipment:
    """A shipment with parts of its route bought: make_cost its own route alone, buy_cost the
    whole-shipment carrier (if one prices it), chosen ``part`` and why, with the figures."""
    alone = own.standalone_cost if own.status == ROUTED else None
    names = " and ".join(f"{p.role} {p.from_depot} > {p.to_depot} ({p.quote.carrier} "
                         f"{p.charge:.{places}f})" for p in res.parts)
    against = [] if alone is None else [f"{alone:.{places}f} on own vehicles alone"]
    if buy is not None:
        against.append(f"{buy.quote.carrier}'s {buy.quote.charge:.{places}f} for all of it")
    why = (f"part: {names} bought, the rest on own vehicles: {res.total_cost:.{places}f} for the "
           f"week's plan" + (f", against {' and '.join(against)}" if against else ""))
    return replace(res, quote=None if buy is None else buy.quote, make_cost=alone, chosen="part", why=why)
