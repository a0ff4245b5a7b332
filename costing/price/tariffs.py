"""Carrier tariffs: chargeable weight, the tariff band of a load, and what the carrier charges.

Pure arithmetic on records; no workbooks, no graphs. What it guarantees:

- **Chargeable weight** (``chargeable_kg``): the most of the actual weight in kg, volume_m3 x
  Settings ``volumetric_kg_per_m3`` and loading_metres x Settings ``kg_per_loading_metre``
  (road groupage convention: a light, bulky load pays for the room it takes).
- **Rounding of the weight** (``charged_kg``): where a tariff row gives ``weight_step_kg``, the
  chargeable kg is rounded *up* to the next multiple of it (``ROUNDUP(ROUND(kg / step, 9), 0) x
  step``: the ROUND to 9 decimals first keeps 0.8 t x 1000 = 800.0000000000001 kg at 800, in
  Python and in the spreadsheet alike); a blank step prices the kg as they are (pro rata per
  100 kg, no rounding of the weight).
- **Band** (``band``): a row holds a weight w when ``min_kg <= w < max_kg`` (a blank max_kg has
  no upper end), looked up with the charged kg; and a day d when ``valid_from <= d <= valid_to``
  (a blank end is open).
- **Price** (``price``), in the tariff's currency, each amount rounded half away from zero to
  that currency's minor unit (ISO 4217), in the order of the spreadsheet formula the Carrier
  charges sheet writes::

      freight        = ROUND(charged_kg / 100 x price_per_100kg)
      fuel_surcharge = ROUND(MAX(min_charge, freight) x surcharge_pct / 100)
      pallet_charge  = ROUND(pallets x price_per_pallet)
      price          = ROUND(MAX(min_charge, freight) + fuel_surcharge + price_per_consignment
                             + pallet_charge)

- **Fuel surcharge** (``surcharge_pct``): the carrier's band (Fuel surcharges sheet) that holds
  Settings ``fuel_price_per_litre`` (``fuel_price_from <= price < fuel_price_to``) gives a per
  cent of the freight charge (the larger of freight and min_charge); 0 when the carrier has no
  band for the price, or no fuel price is set. Per consignment and per pallet charges carry none.

- **Conversion** (``CarrierCharge.charge``): price x rate (units of the reporting currency per
  unit of the tariff's), rounded to the reporting currency's minor unit; rate 1 when the tariff
  is in the reporting currency.
- **Quote** (``quote``): of the carriers with a row for the origin's zone to the destination's
  zone, valid on the day and holding the charged weight, the lowest charge in the reporting
  currency (ties: the carrier named first, then the earlier row).
"""

from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass

from costing.money import minor_unit, round_money


def chargeable_kg(weight_t: float, volume_m3: float | None, loading_metres: float | None,
                  volumetric_kg_per_m3: float, kg_per_loading_metre: float) -> float:
    """The chargeable weight of a load, kg.

    Parameters
    ----------
    weight_t : float
        Actual weight, tonnes.
    volume_m3 : float or None
        Volume, cubic metres (None: not given).
    loading_metres : float or None
        Metres of trailer floor taken, full width (None: not given).
    volumetric_kg_per_m3 : float
        kg charged per m3 (road groupage: 333, common practice).
    kg_per_loading_metre : float
        kg charged per loading metre (road: 1,750 to 2,000 by carrier).

    Returns
    -------
    float
        MAX(weight_t x 1000, volume_m3 x volumetric_kg_per_m3, loading_metres x
        kg_per_loading_metre), kg, in that order of operations (the spreadsheet's).
    """
    return max(weight_t * 1000, (volume_m3 or 0.0) * volumetric_kg_per_m3,
               (loading_metres or 0.0) * kg_per_loading_metre)


def shipment_chargeable_kg(shipment, settings) -> float:
    """``chargeable_kg`` of a Shipment under the Settings' factors, kg."""
    return chargeable_kg(shipment.weight_t, shipment.volume_m3, shipment.loading_metres,
                         settings.volumetric_kg_per_m3, settings.kg_per_loading_metre)


def charged_kg(kg: float, step: float | None) -> float:
    """`kg` rounded up to a multiple of `step` kg (None or 0: unchanged), as
    ``ROUNDUP(ROUND(kg / step, 9), 0) x step``."""
    if not step:
        return kg
    return math.ceil(round(kg / step, 9)) * step


def in_band(tariff, kg: float) -> bool:
    """Whether the tariff row's band holds `kg`: min_kg <= kg < max_kg (blank max_kg: no end)."""
    return tariff.min_kg <= kg and (tariff.max_kg is None or kg < tariff.max_kg)


def valid_on(tariff, day: _dt.date | None) -> bool:
    """Whether the row applies on `day`: valid_from <= day <= valid_to (blank ends are open; a
    shipment with no day matches only rows with no dates)."""
    if day is None:
        return tariff.valid_from is None and tariff.valid_to is None
    return ((tariff.valid_from is None or tariff.valid_from <= day)
            and (tariff.valid_to is None or day <= tariff.valid_to))


@dataclass(frozen=True)
class Price:
    """A tariff row's price for one consignment, in the row's currency (each amount rounded to
    its minor unit).

    Attributes
    ----------
    charged_kg : float
        Chargeable kg after the row's weight_step_kg.
    freight : float
        ROUND(charged_kg / 100 x price_per_100kg).
    pallet_charge : float
        ROUND(pallets x price_per_pallet).
    price : float
        ROUND(MAX(min_charge, freight) + fuel_surcharge + price_per_consignment + pallet_charge).
    fuel_pct : float
        Fuel surcharge, per cent of MAX(min_charge, freight).
    fuel_surcharge : float
        ROUND(MAX(min_charge, freight) x fuel_pct / 100)."""

    charged_kg: float
    freight: float
    pallet_charge: float
    price: float
    fuel_pct: float = 0.0
    fuel_surcharge: float = 0.0


def price(tariff, kg: float, pallets: float | None, places: int, fuel_pct: float = 0.0) -> Price:
    """What one consignment of `kg` chargeable kg and `pallets` pallet places costs on the row,
    with a fuel surcharge of `fuel_pct` per cent, in the row's currency rounded to `places`
    decimals (module docstring: the formula)."""
    charged = charged_kg(kg, tariff.weight_step_kg)
    freight = round_money(charged / 100 * tariff.price_per_100kg, places)
    base = max(tariff.min_charge, freight)
    fuel = round_money(base * fuel_pct / 100, places)
    pallet_charge = round_money((pallets or 0.0) * tariff.price_per_pallet, places)
    total = round_money(base + fuel + tariff.price_per_consignment + pallet_charge, places)
    return Price(charged, freight, pallet_charge, total, fuel_pct, fuel)


def surcharge_pct(bands, carrier: str, fuel_price: float | None) -> float:
    """The per cent of `carrier`'s fuel band holding `fuel_price` (fuel_price_from <= price <
    fuel_price_to); 0 when none does or no price is given."""
    if fuel_price is None:
        return 0.0
    for b in bands:
        if (b.carrier == carrier and b.fuel_price_from <= fuel_price
                and (b.fuel_price_to is None or fuel_price < b.fuel_price_to)):
            return b.surcharge_pct
    return 0.0


@dataclass(frozen=True)
class CarrierCharge:
    """The carrier option of one shipment: the tariff row, its price and the price in the
    reporting currency.

    Attributes
    ----------
    tariff : Tariff
        The row used.
    from_zone, to_zone : str
        The origin's and destination's zones.
    chargeable_kg : float
        The shipment's chargeable weight before the row's weight step, kg.
    price : Price
        In the row's currency.
    currency : str
        The row's currency (the reporting currency when the row gives none).
    rate : float
        Units of the reporting currency per unit of `currency` (1 when the same).
    charge : float
        ROUND(price x rate) in the reporting currency's minor unit: what the shipment costs when
        bought."""

    tariff: object
    from_zone: str
    to_zone: str
    chargeable_kg: float
    price: Price
    currency: str
    rate: float
    charge: float

    @property
    def carrier(self) -> str:
        """The carrier's name."""
        return self.tariff.carrier


def convert(amount: float, rate: float, places: int) -> float:
    """ROUND(amount x rate) to the reporting currency's `places`."""
    return round_money(amount * rate, places)


def quote(model, shipment, day: _dt.date | None,
          rates: dict[str, float] | None = None) -> CarrierCharge | None:
    """The cheapest carrier charge for `shipment` leaving on `day`, or None when no tariff row
    fits (zone pair, validity, band, dangerous goods) or a row's currency has no rate.

    Parameters
    ----------
    model : Model
        Tariffs, zones, Settings (chargeable-weight factors, reporting currency).
    shipment : Shipment
    day : datetime.date or None
        The shipment's ready day.
    rates : dict, optional
        ISO 4217 code -> units of the reporting currency per unit (the Currencies sheet).
        A row in the reporting currency needs none.

    Returns
    -------
    CarrierCharge or None
        Lowest charge in the reporting currency; ties: the carrier first in the Tariffs sheet.
    """
    if not model.tariffs:
        return None
    rates = rates or {}
    reporting = model.settings.currency
    rep_places = minor_unit(reporting)
    fz, tz = model.zone(shipment.origin), model.zone(shipment.destination)
    kg = shipment_chargeable_kg(shipment, model.settings)
    best: CarrierCharge | None = None
    for t in model.tariffs_by_zones.get((fz, tz), ()):
        if not valid_on(t, day):
            continue
        if shipment.hazmat and not t.hazmat_allowed:
            continue
        if not in_band(t, charged_kg(kg, t.weight_step_kg)):
            continue
        cur = t.currency or reporting
        rate = 1.0 if cur == reporting else rates.get(cur)
        if rate is None:
            continue
        pct = surcharge_pct(getattr(model, "fuel_bands", ()), t.carrier, model.settings.fuel_price_per_litre)
        p = price(t, kg, shipment.pallets, minor_unit(cur), pct)
        c = CarrierCharge(t, fz, tz, kg, p, cur, rate, convert(p.price, rate, rep_places))
        if best is None or c.charge < best.charge:
            best = c
    return best


@dataclass(frozen=True)
class BoughtPart:
    """A part of a route bought from a carrier (the rest runs on own vehicles): the collection
    (origin to the first consolidation hub) or the delivery (last hub to the destination).

    Attributes
    ----------
    role : str
        ``collection`` or ``delivery``.
    from_depot, to_depot : str
        The lane ends the carrier covers (depot ids).
    quote : CarrierCharge
        The cheapest carrier for that part (``quote`` on the shipment with those ends).
    own_cost : float or None
        What own vehicles would cost on the same part alone, in the run's currency (None when
        not known)."""

    role: str
    from_depot: str
    to_depot: str
    quote: CarrierCharge
    own_cost: float | None = None

    @property
    def charge(self) -> float:
        """The carrier's charge in the run's currency."""
        return self.quote.charge
