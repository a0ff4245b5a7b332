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

      freight       = ROUND(charged_kg / 100 x price_per_100kg)
      pallet_charge = ROUND(pallets x price_per_pallet)
      price         = ROUND(MAX(min_charge, freight) + price_per_consignment + pallet_charge)

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
