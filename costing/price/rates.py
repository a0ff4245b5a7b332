"""Rate arithmetic shared by the search weights (network.py) and the legs (cost.py), so that a
route's search weight is, by construction, exactly the sum of the rounded amounts its legs show.

Every money amount is ROUND(n x quantity x rate) to the currency's minor unit, half away from
zero, computed in the same order as the spreadsheet formula the writer emits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from costing.model import Lane, RateCard, Settings
from costing.money import round_money

# Emissions are reported on one basis, as ISO 14083:2023 and the GLEC Framework ask: well-to-wheel
# (WTW) CO2e, with its tank-to-wheel (TTW) part shown beside it. Planning estimates only.
#
# Well-to-tank of diesel, kg CO2e per litre, for a rate card whose wtw_co2e_kg_per_litre is blank
# (its co2e_kg_per_litre is then read as diesel TTW): UK DESNZ GHG conversion factors 2025, diesel
# (average biofuel blend): TTW 2.57082, WTT 0.62665, WTW 3.19747 kg CO2e/l [V-2ND: third-party
# transcription of DESNZ 2025, ../shared/references.md 4.1].
DIESEL_WTT_KG_PER_LITRE = 0.62665
DIESEL_WTT_SOURCE = ("UK DESNZ GHG conversion factors 2025, diesel (average biofuel blend): "
                     "well-to-tank 0.62665 kg CO2e per litre (TTW 2.57082, WTW 3.19747)")

# The road table's own ratio of WTW to TTW (direct) GHG for diesel freight: 2012 Guidelines to
# Defra/DECC GHG Conversion Factors, Annex 7, Table 7e, articulated HGV >33 t: direct GHG 84.73,
# grand total incl. indirect (well-to-tank) 102.73 g CO2e/tkm [V-DOC]. Used to put the modes whose
# published factor is tank-to-wheel only on the WTW basis.
ROAD_WTW_PER_TTW = 102.73 / 84.73


@dataclass(frozen=True)
class ModeFactor:
    """A mode's default emission intensity, g CO2e per tonne-km, on both bases.

    Attributes
    ----------
    ttw, wtw : float
        Tank-to-wheel and well-to-wheel intensity, g CO2e per tonne-km.
    source : str
        The publication the figure is read from.
    year : int
        Its year.
    basis : str
        What was published and what was derived.
    """

    ttw: float
    wtw: float
    source: str
    year: int
    basis: str


_HANSARD = "DEFRA freight factors, Hansard (Commons written answer 'Freight Transport'), 4 June 2007"
_DERIVED = ("published tank-to-wheel CO2 {ttw:g} g/tkm; WTW derived x 102.73/84.73 (the 2012 Defra "
            "road table's well-to-tank uplift of diesel; an approximation for other fuels and "
            "for CH4 and N2O)")


def _derived(ttw: float, source: str, year: int, what: str) -> ModeFactor:
    return ModeFactor(ttw, round(ttw * ROAD_WTW_PER_TTW, 2), f"{source}: {what}", year,
                      _DERIVED.format(ttw=ttw))


# Default intensities per mode, used for a rate card with no fuel figures. Each carries its
# published source and year; none is from memory ([V-DOC] in ../shared/references.md 4.3).
DEFAULT_FACTORS: dict[str, ModeFactor] = {
    "road": ModeFactor(84.73, 102.73,
                       "2012 Guidelines to Defra/DECC GHG Conversion Factors, Annex 7, Table 7e: "
                       "articulated HGV >33 t, UK average load (62 % laden)", 2012,
                       "published: direct GHG 84.73 (TTW) and grand total incl. well-to-tank 102.73 "
                       "(WTW) g CO2e/tkm"),
    "rail": _derived(30.0, _HANSARD, 2007, "rail freight"),
    "sea": _derived(20.0, _HANSARD, 2007, "large RoRo ferry"),
    "inland_water": _derived(38.6, "KiM / CE Delft via Eur. Transport Research Review (2019), doi "
                                   "10.1186/s12544-019-0344-x, Table 9", 2014,
                             "inland waterway, Netherlands"),
    "air": _derived(570.0, _HANSARD, 2007, "air freight, long haul"),
}

# mode -> (WTW g CO2e per tonne-km, source): the defaults as the Run sheet and earlier readers list them
DEFAULT_INTENSITY: dict[str, tuple[float, str]] = {
    mode: (f.wtw, f"{f.source} ({f.year}); {f.basis}") for mode, f in DEFAULT_FACTORS.items()}


def toll_class(card: RateCard) -> str:
    """The card's toll class: its own, or from its maximum weight tare_t + payload_t: light up to
    3.5 t, medium to 12 t, heavy above (the EU road-charging lines, from memory)."""
    if card.toll_class:
        return card.toll_class
    gross = card.tare_t + card.payload_t
    if gross <= 3.5 + 1e-9:
        return "light"
    return "medium" if gross <= 12.0 + 1e-9 else "heavy"


def toll_for(lane: Lane, card: RateCard) -> float:
    """The toll one vehicle of `card` pays on `lane`, by its toll class: heavy pays ``toll``;
    medium ``toll_medium`` (blank: ``toll``); light ``toll_light`` (blank: 0, the usual exemption
    of vans below 3.5 t from truck tolls; common practice, no source)."""
    cls = toll_class(card)
    if cls == "light":
        return lane.toll_light if lane.toll_light is not None else 0.0
    if cls == "medium" and lane.toll_medium is not None:
        return lane.toll_medium
    return lane.toll


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


@dataclass(frozen=True)
class Emissions:
    """The emissions of one leg (n vehicles of one card over km), on both bases.

    Attributes
    ----------
    wtw_kg, ttw_kg : float
        Well-to-wheel CO2e and its tank-to-wheel part, kg.
    basis : str
        ``"fuel"`` (the card's fuel figures) or ``"default intensity"`` (the mode's).
    tonne_km : float
        weight_t x km.
    load_factor : float
        Load per vehicle / payload_t, at most 1.
    l_per_100km : float or None
        Fuel use per vehicle at that load (fuel basis), litres per 100 km.
    wtw_kg_per_litre : float or None
        The WTW factor used (fuel basis), kg CO2e per litre.
    wtw_g_per_tkm, ttw_g_per_tkm : float or None
        The default intensities used (default basis), g CO2e per tonne-km.
    """

    wtw_kg: float
    ttw_kg: float
    basis: str
    tonne_km: float
    load_factor: float
    l_per_100km: float | None = None
    wtw_kg_per_litre: float | None = None
    wtw_g_per_tkm: float | None = None
    ttw_g_per_tkm: float | None = None


def load_factor(weight_t: float, n: int, card: RateCard) -> float:
    """MIN(1, weight_t / n / payload_t): how full each of the n vehicles is (by weight)."""
    return min(1.0, weight_t / n / card.payload_t)


def fuel_use(card: RateCard, factor: float) -> float | None:
    """Litres per 100 km of one vehicle at load factor `factor`: linear between the card's empty
    figure (fuel_empty_l_per_100km) and its laden one (fuel_l_per_100km), as the DEFRA 2007
    load-dependent road table is (articulated: 0.311 l/km empty to 0.448 full, 25 % steps on the
    line; Hansard 4 June 2007 [V-DOC]). Without an empty figure, fuel_l_per_100km at every load;
    None without fuel figures."""
    full = card.fuel_l_per_100km
    if full is None:
        return None
    empty = card.fuel_empty_l_per_100km
    if empty is None:
        return full
    return empty + (full - empty) * factor


def wtw_per_litre(card: RateCard) -> float | None:
    """The card's WTW factor, kg CO2e per litre: wtw_co2e_kg_per_litre, or, when blank, its
    co2e_kg_per_litre (TTW) plus the well-to-tank of diesel (DIESEL_WTT_KG_PER_LITRE)."""
    if card.co2e_kg_per_litre is None:
        return None
    if card.wtw_co2e_kg_per_litre is not None:
        return card.wtw_co2e_kg_per_litre
    return card.co2e_kg_per_litre + DIESEL_WTT_KG_PER_LITRE


def emissions(km: float, card: RateCard, n: int, weight_t: float) -> Emissions:
    """The emissions of n vehicles on `card` over `km` carrying `weight_t` tonnes.

    Fuel basis (the card has fuel use and a factor): litres = n x km x l/100 km(load) / 100;
    TTW = litres x co2e_kg_per_litre, WTW = litres x the WTW factor (`wtw_per_litre`).
    Default basis: tonne-km x the mode's g CO2e per tonne-km (DEFAULT_FACTORS) / 1000, TTW and WTW.
    Each product is computed in the order of the Legs sheet's formula."""
    tkm = weight_t * km
    lf = load_factor(weight_t, n, card)
    if card.fuel_l_per_100km is not None and card.co2e_kg_per_litre is not None:
        l100 = fuel_use(card, lf)
        wtw_f = wtw_per_litre(card)
        return Emissions(n * km * l100 / 100 * wtw_f, n * km * l100 / 100 * card.co2e_kg_per_litre,
                         "fuel", tkm, lf, l100, wtw_f)
    f = DEFAULT_FACTORS[card.mode]
    return Emissions(weight_t * km * f.wtw / 1000, weight_t * km * f.ttw / 1000, "default intensity",
                     tkm, lf, wtw_g_per_tkm=f.wtw, ttw_g_per_tkm=f.ttw)


def co2e_kg(km: float, card: RateCard, n: int, weight_t: float) -> tuple[float, str, float | None]:
    """(kg CO2e well-to-wheel, basis, default WTW intensity used or None): `emissions` in short,
    the quantity the emissions objective weighs."""
    e = emissions(km, card, n, weight_t)
    return e.wtw_kg, e.basis, e.wtw_g_per_tkm


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
