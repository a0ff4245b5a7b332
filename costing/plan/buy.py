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

Approximations: the carrier's transit time is not known, so a bought shipment is not marked
late; carriers are not offered under the time, distance, emissions or blended objectives.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from costing.model import Model
from costing.plan.consolidate import Capacity, Step
from costing.price.cost import NO_ROUTE, ROUTED, CostedShipment
from costing.price.tariffs import quote

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


def plan_with_carriers(loads, capacities: dict):
    """The week's plan when loads may be bought: first the plan of the own fleet alone (the
    loads without their carrier options: exactly the plan the week would have without
    tariffs), then the planner again with the carriers, starting there.

    Every move lowers the total, so the planned total is never above the own fleet's plan. Why
    not start from each load's cheapest alone, carrier included: a carrier cheaper than each
    load's vehicle alone can be dearer than one shared vehicle for several loads (three loads at
    250, 250 and 500 against one vehicle for 776.25), which no single or pair move from there
    finds; and starting from the own plan moves only the few loads worth buying (measured:
    benchmarks/bench_tariffs.py). With no carrier among the candidates this is one plan."""
    from costing.plan.consolidate import plan

    if not any(isinstance(st.card, CarrierCard) for ld in loads for route in ld.routes for st in route):
        return plan(loads, capacities)
    own = [replace(ld, routes=tuple(r for r in ld.routes if not _bought_route(r)) or ld.routes)
           for ld in loads]  # the carrier is the last candidate, so the others keep their index
    return plan(loads, capacities, start=plan(own, capacities).choice)


def _bought_route(route) -> bool:
    return len(route) == 1 and isinstance(route[0].card, CarrierCard)


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
