"""Carrier tariffs: chargeable weight, band look-up at the edges, price and rounding.

Expected values are worked by hand in the comments; the conventions checked come from the
trade's published worked examples, named beside each check. Tariff figures are invented inputs.
"""

from __future__ import annotations

import pytest

from costing.price.tariffs import chargeable_kg, charged_kg


def test_chargeable_weight_published_worked_example():
    # 3t-event.com "chargeable weight" worked example: 10 pallets of 1.2 x 1.0 x 1.8 m, 960 kg
    # each: gross 9,600 kg; volume 21.6 m3 x 333 = 7,192.8 kg; 5 ldm x 1,250 = 6,250 kg:
    # the chargeable weight is the largest, 9,600 kg (gross).
    assert chargeable_kg(9.6, 21.6, 5, 333, 1250) == pytest.approx(9600)
    assert 21.6 * 333 == pytest.approx(7192.8)


def test_light_bulky_goods_pay_on_volume():
    # logisticsglossary.com "measuring three times": on road, 1 m3 = 333 kg and the higher of
    # volume weight and actual weight is charged: 2 m3 of 400 kg is charged as 666 kg.
    assert chargeable_kg(0.4, 2.0, None, 333, 1750) == pytest.approx(666)


def test_unstackable_goods_pay_on_loading_metres():
    # scanfreight.no "weight and volume calculation": one euro pallet (1.2 x 0.8 m) takes
    # 0.4 loading metre on a 2.4 m wide trailer and, at 2,000 kg per loading metre, is charged
    # 800 kg: a 300 kg pallet that cannot be stacked pays for 800 kg.
    assert chargeable_kg(0.3, None, 0.4, 333, 2000) == pytest.approx(800)
    assert 1.2 * 0.8 / 2.4 == pytest.approx(0.4)


def test_heavy_dense_goods_pay_on_weight():
    # common practice, no source: steel coils, 24 t in 10 m3 on 3 ldm: weight decides
    assert chargeable_kg(24.0, 10.0, 3.0, 333, 1750) == 24000.0


def test_charged_kg_rounds_up_to_the_step():
    # hand-worked: 1,234 kg in 100 kg steps is 1,300 kg; 1,300 stays 1,300; 0.8 t is 800 kg
    # exactly even though 0.8 x 1000 is 800.0000000000001 in binary (the ROUND to 9 decimals)
    assert charged_kg(1234, 100) == 1300
    assert charged_kg(1300, 100) == 1300
    assert charged_kg(0.8 * 1000 + 1e-13, 100) == 800
    assert charged_kg(1234.5, None) == 1234.5


# ------------------------------------------------------------------ band look-up and price
import datetime as dt  # noqa: E402

from costing.check.validate import validate  # noqa: E402
from costing.model import Depot, Model, Settings, Shipment, Tariff  # noqa: E402
from costing.price.tariffs import price, quote  # noqa: E402
from costing.workbook.reader import read_workbook  # noqa: E402
from tests.conftest import base_data  # noqa: E402

DAY = dt.date(2026, 12, 7)
# invented tariff (inputs only): Brindle Haulage, zone N to zone S, three bands; 5.00 per consignment
BANDS = (
    Tariff("Brindle", "N", "S", 0, 500, 12.0, min_charge=45.0, price_per_consignment=5.0, row=2),
    Tariff("Brindle", "N", "S", 500, 1000, 10.0, min_charge=45.0, price_per_consignment=5.0, row=3),
    Tariff("Brindle", "N", "S", 1000, None, 8.0, min_charge=45.0, price_per_consignment=5.0, row=4),
)


def _model(tariffs=BANDS, **settings):
    depots = (Depot("A", "Ashby", None, None), Depot("C", "Corrin", None, None))
    return Model(Settings(**settings), depots, (), (), (), tariffs=tuple(tariffs),
                 zones={"A": "N", "C": "S"})


def _quote(kg, model=None, day=DAY, **kw):
    s = Shipment("S1", "A", "C", kg / 1000, ready_date=day, **kw)
    return quote(model or _model(), s, day)


@pytest.mark.parametrize("kg, row, expected", [
    # hand-worked, band holds min_kg <= w < max_kg (the definition):
    (499, 2, 64.88),     # 4.99 x 12 = 59.88 > 45; + 5 = 64.88
    (500, 3, 55.00),     # the edge belongs to the upper band: 5 x 10 = 50; + 5
    (999.99, 3, 105.00),  # 9.9999 x 10 = 99.999 -> 100.00; + 5
    (1000, 4, 85.00),    # 10 x 8 = 80; + 5
    (200, 2, 50.00),     # 2 x 12 = 24 < min_charge 45; 45 + 5
    (0.001, 2, 50.00),   # the smallest load pays the minimum
])
def test_band_edges(kg, row, expected):
    q = _quote(kg)
    assert q.tariff.row == row and q.charge == expected and q.currency == "EUR" and q.rate == 1.0


def test_weight_step_rounds_up_before_band_and_price():
    # per started 100 kg: 450.5 kg -> 500 kg, which is in the 500-1000 band: 5 x 10 + 5 = 55.00
    stepped = [Tariff(t.carrier, t.from_zone, t.to_zone, t.min_kg, t.max_kg, t.price_per_100kg,
                      t.min_charge, None, t.price_per_consignment, weight_step_kg=100, row=t.row)
               for t in BANDS]
    q = _quote(450.5, _model(stepped))
    assert q.tariff.row == 3 and q.price.charged_kg == 500 and q.charge == 55.00


def test_rounding_half_away_from_zero():
    # 10 kg at 10.25 per 100 kg = 1.025: the spreadsheet ROUND gives 1.03 (half away from
    # zero; from memory), not the binary float's 1.02
    t = Tariff("X", "N", "S", 0, None, 10.25)
    assert price(t, 10, None, 2).freight == 1.03


def test_pallets_and_volume():
    # 300 kg, 2 m3 -> 666 kg chargeable (333 kg/m3, common practice); 6.66 x 12 = 79.92 + 5
    # + 3 pallets x 4.50 = 13.50 -> 98.42
    t = [Tariff("B", "N", "S", 0, None, 12.0, 45.0, None, 5.0, price_per_pallet=4.5)]
    q = _quote(300, _model(t), volume_m3=2.0, pallets=3)
    assert q.chargeable_kg == pytest.approx(666) and q.price.pallet_charge == 13.5 and q.charge == 98.42


def test_cheapest_carrier_valid_on_the_day_and_hazmat():
    cheap_old = Tariff("Cheap", "N", "S", 0, None, 5.0, valid_to=DAY - dt.timedelta(days=1), row=5)
    cheap_new = Tariff("Cheap", "N", "S", 0, None, 9.0, valid_from=DAY, row=6)
    dear = Tariff("Dear", "N", "S", 0, None, 9.5, hazmat_allowed=True, row=7)
    m = _model([cheap_old, cheap_new, dear])
    # on DAY the 5.00 row has expired: 9.00 x 10 = 90.00 from Cheap beats 95.00 from Dear
    assert _quote(1000, m).tariff.row == 6 and _quote(1000, m).charge == 90.0
    # a day earlier the 5.00 row applies
    assert _quote(1000, m, day=DAY - dt.timedelta(days=1)).charge == 50.0
    # dangerous goods: only the row that takes them
    assert _quote(1000, m, hazmat=True).tariff.carrier == "Dear"


def test_no_tariff_for_the_zones():
    m = _model()
    s = Shipment("S1", "C", "A", 1.0, ready_date=DAY)  # S to N: no row
    assert quote(m, s, DAY) is None


# ------------------------------------------------------------------ validation of the sheets
def _problems(make_input, change):
    d = base_data()
    d["Zones"] = [{"depot_id": "A", "zone": "NL-1"}, {"depot_id": "C", "zone": "NL-9"}]
    d["Tariffs"] = [
        {"carrier": "Brindle", "from_zone": "NL-1", "to_zone": "NL-9", "min_kg": 0, "max_kg": 1000,
         "price_per_100kg": 12},
        {"carrier": "Brindle", "from_zone": "NL-1", "to_zone": "NL-9", "min_kg": 1000,
         "price_per_100kg": 10},
    ]
    change(d)
    m = validate(read_workbook(make_input(d)))
    return m, [p for p in m.problems if p.sheet in ("Tariffs", "Zones") and p.severity == "error"]


def test_good_tariffs_and_zones_are_read(make_input):
    m, errors = _problems(make_input, lambda d: None)
    assert not errors and len(m.tariffs) == 2 and m.zone("A") == "NL-1" and m.zone("B") == "B"


def test_overlapping_bands_are_an_error(make_input):
    def change(d):
        d["Tariffs"][1]["min_kg"] = 900
    _m, errors = _problems(make_input, change)
    assert [(p.cell, "overlaps row 2" in p.message) for p in errors] == [("D3", True)]


def test_max_not_above_min_is_an_error(make_input):
    def change(d):
        d["Tariffs"][0]["max_kg"] = 0
    _m, errors = _problems(make_input, change)
    assert errors[0].cell == "E2" and "not above min_kg" in errors[0].message


def test_unknown_zone_and_depot_are_errors(make_input):
    def change(d):
        d["Tariffs"][0]["to_zone"] = "NL-8"
        d["Zones"].append({"depot_id": "Q", "zone": "NL-3"})
    _m, errors = _problems(make_input, change)
    cells = sorted(p.cell for p in errors)
    assert cells == ["A4", "C2"], errors
    assert any("did you mean NL-9" in p.fix for p in errors)


def test_dates_the_wrong_way_round_are_an_error(make_input):
    def change(d):
        d["Tariffs"][0]["valid_from"] = DAY
        d["Tariffs"][0]["valid_to"] = DAY - dt.timedelta(days=1)
    _m, errors = _problems(make_input, change)
    assert errors[0].cell == "K2" and "before valid_from" in errors[0].message


# ------------------------------------------------------------------ fuel surcharge index
from dataclasses import replace as _replace  # noqa: E402

from costing.model import FuelBand  # noqa: E402

FUEL = (FuelBand("Brindle", 0.0, 1.5, 8.0, 2), FuelBand("Brindle", 1.5, 1.8, 10.5, 3),
        FuelBand("Brindle", 1.8, None, 13.0, 4))


def _fuel_model(price_per_litre):
    return _replace(_model(fuel_price_per_litre=price_per_litre), fuel_bands=FUEL)


@pytest.mark.parametrize("litre, kg, pct, fuel, total", [
    # hand-worked: surcharge = ROUND(MAX(min_charge, freight) x pct / 100), on top of the freight
    (1.62, 499, 10.5, 6.29, 71.17),   # 59.88 x 10.5 % = 6.2874 -> 6.29; 59.88 + 6.29 + 5
    (1.50, 499, 10.5, 6.29, 71.17),   # the band's lower edge is in it
    (1.49, 499, 8.0, 4.79, 69.67),    # 59.88 x 8 % = 4.7904 -> 4.79
    (1.62, 200, 10.5, 4.73, 54.73),   # on the minimum: 45 x 10.5 % = 4.725 -> 4.73 (half away from 0)
    (1.80, 1000, 13.0, 10.40, 95.40),  # 80 x 13 % = 10.40; 80 + 10.40 + 5
    (None, 499, 0.0, 0.0, 64.88),     # no fuel price: no surcharge
])
def test_fuel_surcharge_bands(litre, kg, pct, fuel, total):
    q = _quote(kg, _fuel_model(litre))
    assert (q.price.fuel_pct, q.price.fuel_surcharge, q.charge) == (pct, fuel, total)


def test_fuel_bands_checked(make_input):
    def change(d):
        d["Fuel surcharges"] = [
            {"carrier": "Brindle", "fuel_price_from": 1.0, "fuel_price_to": 1.6, "surcharge_pct": 8},
            {"carrier": "Brindle", "fuel_price_from": 1.5, "surcharge_pct": 10},
            {"carrier": "Brindel", "fuel_price_from": 2.0, "fuel_price_to": 1.0, "surcharge_pct": 10},
        ]
    m, errors = _problems(make_input, change)
    fuel = [p for p in m.problems if p.sheet == "Fuel surcharges"]
    assert sorted((p.severity, p.cell) for p in fuel if p.severity == "error") == \
        [("error", "B3"), ("error", "C4")]
    # the base data sets no fuel price: Brindle's bands hold none of it
    assert any(p.severity == "warning" and "no fuel band of Brindle" in p.message for p in fuel)
