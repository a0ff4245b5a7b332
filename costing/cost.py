"""Price a route: legs, rates, tolls, handling, vehicles, rounding. Knows nothing of graphs'
internals or workbooks.

Per leg, with n = vehicles needed on that leg's rate card (ceil(weight / payload)):
    km_cost       = ROUND(n x distance_km x per_km)
    hour_cost     = ROUND(n x drive_hours x per_hour)
    toll_cost     = ROUND(n x toll)
    fixed_cost    = ROUND(n x fixed_cost)
    handling_cost = ROUND(n x handling at the start (first leg only)) +
                    ROUND(n x handling at the end (a hub passed through, or the destination))
    trip_cost     = ROUND(n x per_trip), on the first leg priced by each rate card
    leg_cost      = the sum of the above
Per shipment: subtotal = sum of leg_cost; min_charge_uplift = max(0, min_charge - subtotal)
with min_charge the largest of the rate cards used; total_cost = subtotal + uplift.
ROUND is half away from zero to the currency's minor unit, as the spreadsheet ROUND does.
"""

from __future__ import annotations

from dataclasses import dataclass

from .model import Depot, Model, RateCard, Shipment
from .money import minor_unit, round_money
from .network import LaneUse, vehicles_needed

ROUTED, NO_ROUTE, REJECTED = "routed", "no_route", "rejected"


@dataclass(frozen=True)
class Leg:
    seq: int
    use: LaneUse
    card: RateCard
    vehicles: int
    start_handling_rate: float  # per vehicle, at from_depot (first leg only)
    end_handling_rate: float  # per vehicle, at to_depot (hub or destination)
    handling_hours: float  # per vehicle (vehicles are handled in parallel)
    trip_rate: float  # per vehicle, on the first leg of each rate card
    km_cost: float
    hour_cost: float
    toll_cost: float
    fixed_cost: float
    start_handling_cost: float
    end_handling_cost: float
    trip_cost: float
    leg_cost: float
    co2e_kg: float  # 0 where the card has no fuel figures

    @property
    def handling_cost(self) -> float:
        return self.start_handling_cost + self.end_handling_cost

    @property
    def has_fuel(self) -> bool:
        return self.card.fuel_l_per_100km is not None and self.card.co2e_kg_per_litre is not None


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

    @property
    def subtotal(self) -> float:
        return round_money(sum(leg.leg_cost for leg in self.legs), self.places)

    @property
    def min_charge_uplift(self) -> float:
        return round_money(max(0.0, self.min_charge - self.subtotal), self.places) if self.legs else 0.0

    @property
    def total_cost(self) -> float:
        return round_money(self.subtotal + self.min_charge_uplift, self.places)

    @property
    def vehicles(self) -> int:
        return max((leg.vehicles for leg in self.legs), default=0)

    @property
    def distance_km(self) -> float:
        return sum(leg.use.km for leg in self.legs)

    @property
    def drive_hours(self) -> float:
        return sum(leg.use.hours for leg in self.legs)

    @property
    def handling_hours(self) -> float:
        return sum(leg.handling_hours for leg in self.legs)

    @property
    def co2e_kg(self) -> float:
        return sum(leg.co2e_kg for leg in self.legs)

    def component(self, name: str) -> float:
        return round_money(sum(getattr(leg, name) for leg in self.legs), self.places)

    @property
    def objective_value(self) -> float:
        return {"cost": self.total_cost, "time": self.drive_hours + self.handling_hours,
                "distance": self.distance_km, "emissions": self.co2e_kg}[self.objective]


def cost_route(model: Model, shipment: Shipment, vehicle: str, objective: str,
               uses: list[LaneUse], settled: int = 0, pushed: int = 0) -> CostedShipment:
    places = minor_unit(model.settings.currency)
    cards = model.cards_for(vehicle)
    depots: dict[str, Depot] = model.depot_index
    legs: list[Leg] = []
    seen_cards: set[str] = set()
    last = len(uses) - 1
    for i, use in enumerate(uses):
        card = cards[use.lane.mode]
        n = vehicles_needed(shipment.weight_t, card.payload_t)
        start = depots[use.from_depot] if i == 0 else None
        end = depots[use.to_depot]
        end_counts = i == last or end.kind == "hub"
        start_rate = start.handling_cost if start else 0.0
        end_rate = end.handling_cost if end_counts else 0.0
        hours = (start.handling_hours if start else 0.0) + (end.handling_hours if end_counts else 0.0)
        trip_rate = card.per_trip if card.mode not in seen_cards else 0.0
        seen_cards.add(card.mode)
        km_cost = round_money(n * use.km * card.per_km, places)
        hour_cost = round_money(n * use.hours * card.per_hour, places)
        toll_cost = round_money(n * use.lane.toll, places)
        fixed_cost = round_money(n * use.lane.fixed_cost, places)
        sh_cost = round_money(n * start_rate, places)
        eh_cost = round_money(n * end_rate, places)
        trip_cost = round_money(n * trip_rate, places)
        leg_cost = round_money(km_cost + hour_cost + toll_cost + fixed_cost + sh_cost + eh_cost
                               + trip_cost, places)
        co2e = 0.0
        if card.fuel_l_per_100km is not None and card.co2e_kg_per_litre is not None:
            co2e = n * use.km * card.fuel_l_per_100km / 100 * card.co2e_kg_per_litre
        legs.append(Leg(i + 1, use, card, n, start_rate, end_rate, hours, trip_rate, km_cost,
                        hour_cost, toll_cost, fixed_cost, sh_cost, eh_cost, trip_cost, leg_cost, co2e))
    min_charge = max((cards[m].min_charge for m in seen_cards), default=0.0)
    return CostedShipment(shipment, ROUTED, objective, vehicle, tuple(legs), min_charge,
                          settled=settled, pushed=pushed, places=places)


def unrouted(model: Model, shipment: Shipment, status: str, objective: str, message: str,
             vehicle: str = "", settled: int = 0, pushed: int = 0) -> CostedShipment:
    return CostedShipment(shipment, status, objective, vehicle, (), 0.0, message, settled, pushed,
                          minor_unit(model.settings.currency))
