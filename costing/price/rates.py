"""Rate arithmetic shared by the search weights (network.py) and the legs (cost.py), so that a
route's search weight is, by construction, exactly the sum of the rounded amounts its legs show.

Every money amount is ROUND(n x quantity x rate) to the currency's minor unit, half away from
zero, computed in the same order as the spreadsheet formula the writer emits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from costing.model import RateCard, Settings
from costing.money import round_money

# Default emission intensities, g CO2e per tonne-km, used for a rate card with no fuel figures.
# Each carries its published source; none is from memory. Planning estimates only.
DEFAULT_INTENSITY: dict[str, tuple[float, str]] = {
    "road": (102.73, "2012 Guidelines to Defra/DECC GHG Conversion Factors, Annex 7, Table 7e: "
                     "articulated HGV >33 t, UK average load, direct + well-to-tank, g CO2e/tkm"),
    "rail": (30.0, "DEFRA 2007 freight factors (Hansard, Commons written answer, 4 June 2007): "
                   "rail freight, g CO2/tkm"),
    "sea": (20.0, "DEFRA 2007 freight factors (Hansard, 4 June 2007): large RoRo ferry, g CO2/tkm"),
    "inland_water": (38.6, "KiM / CE Delft via Eur. Transport Research Review (2019), "
                           "doi 10.1186/s12544-019-0344-x, Table 9: inland waterway NL 2014, g CO2/tkm"),
    "air": (570.0, "DEFRA 2007 freight factors (Hansard, 4 June 2007): air long haul, g CO2/tkm"),
}


def charge(n: int, rate: float, places: int) -> float:
    """ROUND(n x rate): a per-vehicle charge for n vehicles."""
    return round_money(n * rate, places)


def fuel_surcharge_rate(card: RateCard, settings: Settings) -> float | None:
    """Litres per km x (fuel price - price included in the rate), per vehicle-km; None when the
    card or the settings do not give what it needs (then no surcharge). Negative when fuel is
    cheaper than the price the rate includes (a rebate)."""
    if (settings.fuel_price_per_litre is None or card.fuel_included_at is None
            or card.fuel_l_per_100km is None):
        return None
    return card.fuel_l_per_100km / 100 * (settings.fuel_price_per_litre - card.fuel_included_at)


@dataclass(frozen=True)
class LaneCharges:
    km_cost: float
    hour_cost: float
    toll_cost: float
    fixed_cost: float
    fuel_surcharge: float

    @property
    def total(self) -> float:
        """Sum of the lane's rounded cost components, in the run's currency."""
        return self.km_cost + self.hour_cost + self.toll_cost + self.fixed_cost + self.fuel_surcharge


def lane_charges(km: float, hours: float, toll: float, fixed: float, card: RateCard, n: int,
                 settings: Settings, places: int) -> LaneCharges:
    """The rounded cost components of `n` vehicles on one lane step with `card`.

    Parameters
    ----------
    km, hours : float
        The lane's km and driving hours.
    toll, fixed : float
        The lane's toll and fixed charge per vehicle (currency).
    card : RateCard
    n : int
        Vehicles needed for the load.
    settings : Settings
        For the fuel price (fuel surcharge).
    places : int
        Minor unit of the run's currency.

    Returns
    -------
    LaneCharges
        km_cost, hour_cost, toll_cost, fixed_cost, fuel_surcharge, each rounded half away from
        zero in the order of operations of its spreadsheet formula."""
    fuel = 0.0
    if fuel_surcharge_rate(card, settings) is not None:
        # spreadsheet order: n * km * l_per_100km / 100 * (price - included)
        fuel = round_money(n * km * card.fuel_l_per_100km / 100
                           * (settings.fuel_price_per_litre - card.fuel_included_at), places)
    return LaneCharges(round_money(n * km * card.per_km, places),
                       round_money(n * hours * card.per_hour, places),
                       round_money(n * toll, places), round_money(n * fixed, places), fuel)


def co2e_kg(km: float, card: RateCard, n: int, weight_t: float) -> tuple[float, str, float | None]:
    """(kg CO2e, basis, default intensity used). Fuel-based where the card has fuel figures:
    n x km x l/100 km / 100 x kg CO2e per litre; otherwise tonnes x km x the mode's default
    intensity (g per tonne-km) / 1000."""
    if card.fuel_l_per_100km is not None and card.co2e_kg_per_litre is not None:
        return n * km * card.fuel_l_per_100km / 100 * card.co2e_kg_per_litre, "fuel", None
    intensity = DEFAULT_INTENSITY[card.mode][0]
    return weight_t * km * intensity / 1000, "default intensity", intensity


def load_vehicles(weight_t: float, card: RateCard, pallets: float | None = None,
                  volume_m3: float | None = None) -> int:
    """Vehicles of `card` one load needs on its own: the most of ceil(weight / payload),
    ceil(pallets / pallet_places) and ceil(volume / the card's volume), at least one.

    Parameters
    ----------
    weight_t : float
        The load's weight, tonnes.
    card : RateCard
        Its payload_t, pallet_places and volume_m3 (a blank capacity sets no limit).
    pallets, volume_m3 : float, optional
        The load's pallet places and volume, m3 (None: not given, no limit from them).

    Returns
    -------
    int
        The same count as ``vehicles_needed`` when no pallets or volume are given; the same rule
        (with the same tolerance) as the piece count of ``costing.plan.consolidate``."""
    n = vehicles_needed(weight_t, card.payload_t)
    for size, cap in ((pallets, card.pallet_places), (volume_m3, card.volume_m3)):
        if size and cap:
            n = max(n, math.ceil(size / cap - 1e-9))
    return n


def vehicles_needed(weight_t: float, payload_t: float) -> int:
    """ceil(weight / payload), at least one vehicle. A tiny tolerance keeps 49.0 t on 24.5 t
    payloads at 2 vehicles despite float division."""
    return max(1, math.ceil(weight_t / payload_t - 1e-9))
