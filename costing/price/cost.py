"""Price a route: legs, rates, tolls, handling, vehicles, driving-time stops, rounding.
Knows nothing of graphs' internals or workbooks.

Per leg, with n = vehicles needed on that leg's rate card (ceil(weight / payload)):
    km_cost        = ROUND(n x distance_km x per_km)
    hour_cost      = ROUND(n x drive_hours x per_hour)
    toll_cost      = ROUND(n x toll of the card's toll class on the lane)
    fixed_cost     = ROUND(n x fixed_cost)
    fuel_surcharge = ROUND(n x km x l/100 km / 100 x (fuel price - fuel_included_at))
    stop_cost      = ROUND(n x paid break and rest hours x per_hour)   (driving rules)
    handling_start_cost = ROUND(n x handling where a vehicle run starts: origin or a transfer)
    handling_end_cost   = ROUND(n x handling where a vehicle run ends: destination or a transfer)
    trip_cost      = ROUND(n x per_trip), on the first leg of each vehicle run
    leg_cost       = the sum of the above
A vehicle run is a stretch of legs on one rate card; it changes only at a terminal or port (to
another mode) or at a hub (to another vehicle of the same mode). Handling is charged where loads
are handled: per vehicle at both ends of each vehicle run (loading, unloading: every unit lifted
off and on at a transfer), never where a vehicle only drives through a hub. Handling hours
likewise: per vehicle (in parallel) at each end of each run.
Per shipment: subtotal = sum of leg_cost; min_charge_uplift = max(0, min_charge - subtotal)
with min_charge the largest of the rate cards used; total_cost = subtotal + uplift.
ROUND is half away from zero to the currency's minor unit, as the spreadsheet ROUND does.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from functools import cached_property

from costing.model import Depot, LaneUse, Model, RateCard, Shipment
from costing.money import minor_unit, round_money
from costing.objectives import objective
from costing.price.rates import (
    charge,
    emissions,
    fuel_surcharge_rate,
    lane_charges,
    load_vehicles,
    toll_class,
    toll_for,
)
from costing.price.rules import rules_for, stops_for_run

ROUTED, NO_ROUTE, REJECTED = "routed", "no_route", "rejected"


@dataclass(frozen=True)
class Leg:
    seq: int
    use: LaneUse
    card: RateCard
    vehicles: int
    start_handling_rate: float  # per vehicle, at from_depot where a vehicle run starts
    end_handling_rate: float  # per vehicle, at to_depot (hub or destination)
    handling_hours: float  # per vehicle (vehicles are handled in parallel)
    trip_rate: float  # per vehicle, on the first leg of each vehicle run
    km_cost: float
    hour_cost: float
    toll_cost: float
    fixed_cost: float
    fuel_surcharge: float
    start_handling_cost: float
    end_handling_cost: float
    trip_cost: float
    break_hours: float
    rest_hours: float
    paid_stop_hours: float
    stop_cost: float
    leg_cost: float
    co2e_kg: float  # well-to-wheel
    co2e_basis: str  # "fuel" or "default intensity"
    intensity_g_per_tkm: float | None  # the default (well-to-wheel) intensity used, if any
    weight_t: float
    fuel_price: float | None  # the fuel price used for the surcharge, if any
    # set by the plan stage (costing.plan.week): the vehicle run the leg rides in and its shares
    run_id: str = ""
    cost_share: float | None = None  # the leg's share of its run's cost, currency
    share_adjust: float = 0.0  # cost_share minus ROUND(run cost x tonne-km / run tonne-km)
    co2e_share: float | None = None  # the leg's share of its run's kg CO2e
    # emissions on a stated basis (price/rates.py `emissions`): co2e_kg above is well-to-wheel
    co2e_ttw_kg: float = 0.0  # its tank-to-wheel part
    tonne_km: float = 0.0  # weight_t x km
    load_factor: float = 0.0  # load per vehicle / payload_t, at most 1
    fuel_used_l_per_100km: float | None = None  # per vehicle at that load (fuel basis)
    wtw_kg_per_litre: float | None = None  # the WTW factor used (fuel basis)
    ttw_intensity_g_per_tkm: float | None = None  # the default TTW intensity used (default basis)
    toll_rate: float = 0.0  # the toll per vehicle of the card's toll class on this lane
    toll_class: str = "heavy"

    @property
    def co2e_g_per_tkm(self) -> float:
        """Well-to-wheel g CO2e per tonne-km of the leg (0 when it carries no tonne-km)."""
        return self.co2e_kg * 1000 / self.tonne_km if self.tonne_km else 0.0

    @property
    def handling_cost(self) -> float:
        """Handling at both ends of the leg, in the run's currency."""
        return self.start_handling_cost + self.end_handling_cost

    @property
    def elapsed_hours(self) -> float:
        """Driving, breaks, rests and handling of the leg, in hours."""
        return self.use.hours + self.break_hours + self.rest_hours + self.handling_hours


@dataclass(frozen=True)
class CostedShipment:
    shipment: Shipment
    status: str
    objective: str
    vehicle: str = ""
    legs: tuple[Leg, ...] = ()
    min_charge: float = 0.0
    message: str = ""
    settled: int = 0
    pushed: int = 0
    places: int = 2
    value_of_time: float = 0.0  # per hour, for the blended objective
    # shipment ids sharing a vehicle run with it (plan stage): the first TRAVEL_NAMES of them in
    # input order (costing.plan.week), and how many there are in all
    shared_with: tuple[str, ...] = ()
    day: object = None  # the plan's day (ready_date, or the first day of the run)
    empty_return_cost: float = 0.0  # its share of empty returns (Settings return_empty), currency
    empty_return_alone: float = 0.0  # its own vehicles' empty return alone, currency
    shared_count: int = 0  # shipments sharing a vehicle run with it, in all (`shared_with` names the first)
    # make or buy (costing.plan.buy): the carrier option and what was chosen
    quote: object = None  # costing.price.tariffs.CarrierCharge: the cheapest carrier, if a tariff fits
    bought: bool = False  # True: the shipment goes by carrier at quote.charge (no legs, no runs)
    make_cost: float | None = None  # on own vehicles: its total when made; alone when bought
    chosen: str = ""  # "make" or "buy" ("" when no carrier was priced)
    why: str = ""  # the reason, with both figures
    # parts of the route bought from a carrier (costing.price.tariffs.BoughtPart), the legs being the
    # rest on own vehicles: the collection to a consolidation hub and/or the delivery from one
    parts: tuple = ()

    @property
    def buy_cost(self) -> float | None:
        """The carrier's charge in the run's currency (None when no tariff fits)."""
        return None if self.quote is None else self.quote.charge

    @cached_property  # the record is frozen: computed once
    def parts_cost(self) -> float:
        """What the parts of the route bought from carriers cost, in the run's currency (0 without
        any): the sum of their charges."""
        return round_money(sum(p.charge for p in self.parts), self.places)

    stops_in_hours: bool = False  # the hours quantity includes breaks and rests (clock in search)

    @cached_property  # the record is frozen: computed once
    def subtotal(self) -> float:
        """Sum of the rounded leg costs, in the run's currency (rounded to its minor unit)."""
        return round_money(sum(leg.leg_cost for leg in self.legs), self.places)

    @cached_property  # the record is frozen: computed once
    def min_charge_uplift(self) -> float:
        """What the minimum charge adds above the subtotal (0 when the subtotal reaches it), currency."""
        return round_money(max(0.0, self.min_charge - self.subtotal), self.places) if self.legs else 0.0

    @cached_property  # the record is frozen: computed once
    def standalone_cost(self) -> float:
        """Subtotal plus the minimum-charge uplift (plus its own empty return, when Settings
        return_empty is yes, and the parts of the route bought from carriers), currency: what the
        route costs the shipment with vehicles of its own (bought from a carrier: the carrier's
        charge)."""
        if self.bought:
            return self.quote.charge
        return round_money(self.subtotal + self.min_charge_uplift + self.empty_return_alone + self.parts_cost,
                           self.places)

    @cached_property  # the record is frozen: computed once
    def allocated_cost(self) -> float:
        """Sum of the leg's shares of the vehicle runs they ride in, currency (the legs' own
        cost before the plan stage has run)."""
        return round_money(sum(leg.leg_cost if leg.cost_share is None else leg.cost_share
                               for leg in self.legs), self.places)

    @cached_property  # the record is frozen: computed once
    def total_cost(self) -> float:
        """What the shipment costs, currency: its allocated share of the vehicle runs and of
        their empty returns, plus the minimum-charge uplift when it shares no vehicle (with
        vehicles of its own this is the stand-alone cost), plus the parts of the route bought from
        carriers; bought from a carrier, the carrier's charge."""
        if self.bought:
            return self.quote.charge
        uplift = 0.0 if self.shared_with else self.min_charge_uplift
        return round_money(self.allocated_cost + self.empty_return_cost + uplift + self.parts_cost,
                           self.places)

    @cached_property  # the record is frozen: computed once
    def saving(self) -> float:
        """Stand-alone cost minus total cost, currency: what sharing vehicles saves (>= 0)."""
        return round_money(self.standalone_cost - self.total_cost, self.places)

    @property
    def vehicles(self) -> int:
        """Most vehicles on any leg (the load split over vehicles); 0 when not routed."""
        return max((leg.vehicles for leg in self.legs), default=0)

    @cached_property  # the record is frozen: computed once
    def distance_km(self) -> float:
        """Route length in km (the legs' stated or estimated km)."""
        return sum(leg.use.km for leg in self.legs)

    @cached_property  # the record is frozen: computed once
    def drive_hours(self) -> float:
        """Driving hours of the route (the legs' stated or estimated hours)."""
        return sum(leg.use.hours for leg in self.legs)

    @property
    def handling_hours(self) -> float:
        """Handling hours at depots, hubs and transfers."""
        return sum(leg.handling_hours for leg in self.legs)

    @property
    def break_hours(self) -> float:
        """Driving-time breaks added by the rule set, in hours."""
        return sum(leg.break_hours for leg in self.legs)

    @property
    def rest_hours(self) -> float:
        """Daily rests added by the rule set, in hours."""
        return sum(leg.rest_hours for leg in self.legs)

    @cached_property  # the record is frozen: computed once
    def elapsed_hours(self) -> float:
        """Driving, handling, breaks and rests, in hours."""
        return sum(leg.elapsed_hours for leg in self.legs)

    @cached_property  # the record is frozen: computed once
    def co2e_kg(self) -> float:
        """Emissions of the route, kg CO2e: the legs' shares of their vehicle runs (the legs'
        own emissions before the plan stage has run)."""
        return sum(leg.co2e_kg if leg.co2e_share is None else leg.co2e_share for leg in self.legs)

    @property
    def standalone_co2e_kg(self) -> float:
        """Emissions of the route with vehicles of its own, kg CO2e."""
        return sum(leg.co2e_kg for leg in self.legs)

    @property
    def co2e_ttw_kg(self) -> float:
        """The tank-to-wheel part of the route's emissions, kg CO2e (sum of the legs)."""
        return sum(leg.co2e_ttw_kg for leg in self.legs)

    @property
    def tonne_km(self) -> float:
        """Tonne-km of the route: weight_t x km summed over the legs."""
        return sum(leg.tonne_km for leg in self.legs)

    @property
    def co2e_g_per_tkm(self) -> float:
        """Well-to-wheel g CO2e per tonne-km of the route (0 without tonne-km)."""
        tkm = self.tonne_km
        return self.co2e_kg * 1000 / tkm if tkm else 0.0

    def component(self, name: str) -> float:
        """One cost component (a Leg field such as ``km_cost``) summed over the legs and rounded
        to the currency's minor unit."""
        return round_money(sum(getattr(leg, name) for leg in self.legs), self.places)

    def quantity(self, name: str) -> float:
        """A route quantity of costing.objectives: cost (total, currency), hours (driving and
        handling, and breaks and rests when the driving clock is in the search), km, co2e (kg
        CO2e, well-to-wheel)."""
        if name == "cost":
            return self.total_cost
        if name == "hours":
            if self.stops_in_hours:  # the driving clock is in the search: elapsed hours
                return self.elapsed_hours
            return self.drive_hours + self.handling_hours
        if name == "km":
            return self.distance_km
        if name == "co2e":
            return self.co2e_kg
        raise ValueError(f"unknown quantity {name}")

    @property
    def objective_value(self) -> float:
        """The route's value under its objective (costing.objectives), in the objective's unit."""
        coefficients = {"value_of_time_per_hour": self.value_of_time}  # the Settings a route carries
        return objective(self.objective).combine(self.quantity, coefficients.__getitem__)


def _charges(use: LaneUse, card: RateCard, n: int, paid_hours: float, start_rate: float,
             end_rate: float, trip_rate: float, settings, places: int, toll: float):
    """(lane charges, stop, start handling, end handling, trip, leg cost) of `n` vehicles on one
    lane step, each rounded in the order of its spreadsheet formula (module docstring)."""
    lc = lane_charges(use.km, use.hours, toll, use.lane.fixed_cost, card, n, settings, places)
    stop_cost = round_money(n * paid_hours * card.per_hour, places)
    sh_cost, eh_cost = charge(n, start_rate, places), charge(n, end_rate, places)
    trip_cost = charge(n, trip_rate, places)
    leg_cost = round_money(lc.total + stop_cost + sh_cost + eh_cost + trip_cost, places)
    return lc, stop_cost, sh_cost, eh_cost, trip_cost, leg_cost


def cost_route(model: Model, shipment: Shipment, objective: str,
               runs: list[tuple[RateCard, list[LaneUse]]], settled: int = 0,
               pushed: int = 0, memo: dict | None = None) -> CostedShipment:
    """Price a route given as vehicle runs: (rate card, its consecutive lane steps).

    `memo`, a dict the caller keeps for one Model (its Settings and currency fixed), holds each
    lane step's rounded charges by everything they depend on (the lane step, the card, the
    vehicles, the paid stop hours, the handling, trip and toll rates), so a step priced for one
    route is not priced again for another: the same arguments give the same charges."""
    settings = model.settings
    places = minor_unit(settings.currency)
    depots: dict[str, Depot] = model.depot_index
    rules = rules_for(settings)
    legs: list[Leg] = []
    for card, uses in runs:
        n = load_vehicles(shipment.weight_t, card, shipment.pallets, shipment.volume_m3)
        on_duty = depots[uses[0].from_depot].handling_hours  # loading before the run's driving
        stops = (stops_for_run([u.hours for u in uses], rules, on_duty) if rules and card.mode == "road"
                 else [(0.0, 0.0)] * len(uses))
        surcharge_rate = fuel_surcharge_rate(card, settings)
        for i, use in enumerate(uses):
            start = depots[use.from_depot] if i == 0 else None
            end = depots[use.to_depot]
            end_counts = i == len(uses) - 1  # the run ends here: its vehicles are unloaded
            start_rate = start.handling_cost if start else 0.0
            end_rate = end.handling_cost if end_counts else 0.0
            hours = (start.handling_hours if start else 0.0) + (end.handling_hours if end_counts else 0.0)
            trip_rate = card.per_trip if i == 0 else 0.0
            toll = toll_for(use.lane, card)  # by the card's toll class
            brk, rest = stops[i]
            paid = (brk if settings.break_hours_paid == "yes" else 0.0) + \
                (rest if settings.rest_hours_paid == "yes" else 0.0)
            if memo is None:
                got = _charges(use, card, n, paid, start_rate, end_rate, trip_rate, settings, places, toll)
            else:
                key = (use, card, n, paid, start_rate, end_rate, trip_rate, toll)
                got = memo.get(key)
                if got is None:
                    got = memo[key] = _charges(use, card, n, paid, start_rate, end_rate, trip_rate, settings,
                                               places, toll)
            lc, stop_cost, sh_cost, eh_cost, trip_cost, leg_cost = got
            em = emissions(use.km, card, n, shipment.weight_t)
            legs.append(Leg(len(legs) + 1, use, card, n, start_rate, end_rate, hours, trip_rate,
                            lc.km_cost, lc.hour_cost, lc.toll_cost, lc.fixed_cost, lc.fuel_surcharge,
                            sh_cost, eh_cost, trip_cost, brk, rest, paid, stop_cost, leg_cost, em.wtw_kg,
                            em.basis, em.wtw_g_per_tkm, shipment.weight_t,
                            settings.fuel_price_per_litre if surcharge_rate is not None else None,
                            co2e_ttw_kg=em.ttw_kg, tonne_km=em.tonne_km, load_factor=em.load_factor,
                            fuel_used_l_per_100km=em.l_per_100km, wtw_kg_per_litre=em.wtw_kg_per_litre,
                            ttw_intensity_g_per_tkm=em.ttw_g_per_tkm, toll_rate=toll,
                            toll_class=toll_class(card)))
    min_charge = max((card.min_charge for card, _u in runs), default=0.0)
    vehicle = ", ".join(dict.fromkeys(card.vehicle for card, _u in runs))
    return CostedShipment(shipment, ROUTED, objective, vehicle, tuple(legs), min_charge,
                          settled=settled, pushed=pushed, places=places,
                          value_of_time=settings.value_of_time_per_hour,
                          stops_in_hours=rules is not None and settings.driving_clock_in_search == "yes")


_LEG_FIELDS: frozenset[str] = frozenset()


def with_share(leg: Leg, **changes) -> Leg:
    """A copy of `leg` with `changes` (Leg field names): `dataclasses.replace` without running
    the constructor again (a Leg has no __post_init__ and no cached properties: its fields are
    its instance dict), for the plan stage's hundred thousand shares.

    Raises
    ------
    TypeError
        For a name that is not a Leg field.
    """
    global _LEG_FIELDS
    if not _LEG_FIELDS:
        _LEG_FIELDS = frozenset(f.name for f in fields(Leg))
    if not changes.keys() <= _LEG_FIELDS:
        raise TypeError(f"not Leg fields: {sorted(changes.keys() - _LEG_FIELDS)}")
    new = object.__new__(Leg)
    new.__dict__.update(leg.__dict__)
    new.__dict__.update(changes)
    return new


def reprice_leg(model: Model, leg: Leg, n: int) -> Leg:
    """The same leg (lane, card, rates, handling, stops) run with `n` vehicles: every cost
    component recomputed with the arithmetic of `cost_route`, in the same order.

    Parameters
    ----------
    model : Model
        For the settings (fuel price, currency).
    leg : Leg
        A priced leg.
    n : int
        Vehicles, >= 1 (a vehicle run carrying several loads).

    Returns
    -------
    Leg
        With ``vehicles = n`` and its cost components and leg_cost for n vehicles; emissions
        and weight are left as they were (a run's emissions are computed from all its loads)."""
    settings = model.settings
    places = minor_unit(settings.currency)
    card, use = leg.card, leg.use
    lc, stop_cost, sh_cost, eh_cost, trip_cost, leg_cost = _charges(
        use, card, n, leg.paid_stop_hours, leg.start_handling_rate, leg.end_handling_rate, leg.trip_rate,
        settings, places, leg.toll_rate)
    return with_share(leg, vehicles=n, km_cost=lc.km_cost, hour_cost=lc.hour_cost, toll_cost=lc.toll_cost,
                      fixed_cost=lc.fixed_cost, fuel_surcharge=lc.fuel_surcharge, stop_cost=stop_cost,
                      start_handling_cost=sh_cost, end_handling_cost=eh_cost, trip_cost=trip_cost,
                      leg_cost=leg_cost)


def unrouted(model: Model, shipment: Shipment, status: str, objective: str, message: str,
             vehicle: str = "", settled: int = 0, pushed: int = 0) -> CostedShipment:
    """A result for a shipment that has no route: `status` (``no_route`` or ``rejected``) and
    the message saying why; no legs, total 0."""
    return CostedShipment(shipment, status, objective, vehicle, (), 0.0, message, settled, pushed,
                          minor_unit(model.settings.currency))
