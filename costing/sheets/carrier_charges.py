"""The Carrier charges sheet: one row per shipment a carrier tariff prices whole, bought (used =
yes) or priced for comparison (used = no), and one row per part of a route bought (part =
collection or delivery, used = yes), with the lane ends it covers (from_depot, to_depot). Every
figure from chargeable weight to the charge in the run's currency is a live formula over the
row's own cells, with its value cached from ``costing.price.tariffs`` (the same order of operations):

    chargeable_kg = MAX(weight_kg, volume_m3 x volumetric_kg_per_m3, loading_metres x kg_per_loading_metre)
    charged_kg    = chargeable_kg, or ROUNDUP(ROUND(chargeable_kg / weight_step_kg, 9), 0) x weight_step_kg
    freight       = ROUND(charged_kg / 100 x price_per_100kg, d)
    fuel_surcharge = ROUND(MAX(min_charge, freight) x fuel_surcharge_pct / 100, d)
    pallet_charge = ROUND(pallets x price_per_pallet, d)
    price         = ROUND(MAX(min_charge, freight) + fuel_surcharge + price_per_consignment
                          + pallet_charge, d)
    charge        = ROUND(price x rate, D)

d is the tariff currency's minor unit, D the run's (ISO 4217).

Why a sheet of its own and not Legs rows: a bought shipment has no lane, vehicle or km, and a
tariff price is not a sum of leg components; a Legs row would be mostly blank, and its
leg_cost formula (the sum of the components) would not hold. Here each price is its own formula.
"""

from __future__ import annotations

import datetime as _dt

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import CARRIER_COL, CARRIER_COLUMNS
from costing.money import minor_unit
from costing.sheets.formats import Writer, cell_text


def _priced(results):
    """(result, key, quote, used, part, from depot, to depot) for every Carrier charges row, in
    order: per result its whole-shipment quote, then its bought parts."""
    for res in results:
        s = res.shipment
        if res.quote is not None:
            yield res, s.shipment_id, res.quote, res.bought, "whole", s.origin, s.destination
        for p in res.parts:
            yield res, (s.shipment_id, p.role), p.quote, True, p.role, p.from_depot, p.to_depot


def carrier_rows(results) -> dict:
    """Key -> its 1-based row on the Carrier charges sheet: the shipment id for a shipment's
    whole-shipment quote, (shipment id, part) for a bought part (collection, delivery)."""
    return {key: i + 2 for i, (_res, key, *_rest) in enumerate(_priced(results))}


def write_carrier_charges(w: Writer, ws, results) -> None:
    """Write the sheet (module docstring); rows as `carrier_rows` numbers them."""
    w.header(ws, CARRIER_COLUMNS)
    c = CARRIER_COL
    L = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    st = w.model.settings
    r = 0
    for res, _key, q, used, part, a, b in _priced(results):
        r += 1
        x = r + 1
        s, t, p = res.shipment, q.tariff, q.price
        d = minor_unit(q.currency)
        ref = {name: f"{col}{x}" for name, col in L.items()}
        for col, value in (("shipment_id", s.shipment_id), ("used", "yes" if used else "no"),
                           ("part", part), ("from_depot", a), ("to_depot", b),
                           ("carrier", t.carrier), ("from_zone", q.from_zone), ("to_zone", q.to_zone),
                           ("currency", q.currency)):
            ws.write_string(r, c[col], cell_text(value))
        day = res.day or s.ready_date
        if isinstance(day, _dt.date):
            ws.write_datetime(r, c["date"], _dt.datetime.combine(day, _dt.time()), f["date"])
        numbers = (("weight_kg", s.weight_t * 1000), ("volume_m3", s.volume_m3 or 0.0),
                   ("volumetric_kg_per_m3", st.volumetric_kg_per_m3),
                   ("loading_metres", s.loading_metres or 0.0),
                   ("kg_per_loading_metre", st.kg_per_loading_metre), ("min_kg", t.min_kg),
                   ("price_per_100kg", t.price_per_100kg), ("min_charge", t.min_charge),
                   ("pallets", s.pallets or 0.0), ("price_per_pallet", t.price_per_pallet),
                   ("price_per_consignment", t.price_per_consignment), ("rate", q.rate),
                   ("fuel_surcharge_pct", p.fuel_pct),
                   ("tariff_row", t.row))
        for col, value in numbers:
            ws.write_number(r, c[col], value)
        if t.max_kg is not None:
            ws.write_number(r, c["max_kg"], t.max_kg)
        if t.weight_step_kg:
            ws.write_number(r, c["weight_step_kg"], t.weight_step_kg)
        formulas = (
            ("chargeable_kg", "MAX({weight_kg},{volume_m3}*{volumetric_kg_per_m3},"
                              "{loading_metres}*{kg_per_loading_metre})", q.chargeable_kg, "kg"),
            ("charged_kg", 'IF({weight_step_kg}="",{chargeable_kg},'
                           "ROUNDUP(ROUND({chargeable_kg}/{weight_step_kg},9),0)*{weight_step_kg})",
             p.charged_kg, "kg"),
            ("freight", f"ROUND({{charged_kg}}/100*{{price_per_100kg}},{d})", p.freight, "rate"),
            ("fuel_surcharge", f"ROUND(MAX({{min_charge}},{{freight}})*{{fuel_surcharge_pct}}/100,{d})",
             p.fuel_surcharge, "rate"),
            ("pallet_charge", f"ROUND({{pallets}}*{{price_per_pallet}},{d})", p.pallet_charge, "rate"),
            ("price", "ROUND(MAX({min_charge},{freight})+{fuel_surcharge}+{price_per_consignment}"
                      f"+{{pallet_charge}},{d})", p.price, "rate"),
            ("charge", w.round_f("{price}*{rate}"), q.charge, "money"),
        )
        for col, formula, value, kind in formulas:
            ws.write_formula(r, c[col], "=" + formula.format(**ref), f[kind], value)
    ws.autofilter(0, 0, max(r, 1), len(CARRIER_COLUMNS) - 1)
