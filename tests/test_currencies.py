"""Currencies: tariffs and rate cards in another currency converted into the run's currency,
rounded to the run currency's minor unit (ISO 4217: JPY 0 decimals, KWD 3, EUR 2); a missing
rate is an error naming the cell. Expected values are worked by hand in the comments; the
exchange rates and tariffs are invented inputs."""

from __future__ import annotations

import datetime as dt

import openpyxl
import pytest

from costing import pipeline
from costing.check.validate import validate
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment, Tariff
from costing.price.tariffs import quote
from costing.sheets.run import RunInfo
from costing.sheets.writer import write_costed
from costing.workbook.reader import read_workbook
from tests.conftest import base_data

DAY = dt.date(2026, 12, 7)


def _model(currency, tariff, fx, scale=1.0, **kw):
    depots = (Depot("A", "Ashby", None, None), Depot("C", "Corrin", None, None))
    lanes = (Lane("L1", "A", "C", "road", 250.0, 3.5),)
    # own artic in the run's currency: 1.85/km, 45/h, 156.25/trip in EUR, times `scale`
    rates = (RateCard("artic", "road", 1.85 * scale, 45.0 * scale, 24.5, per_trip=156.25 * scale),)
    return Model(Settings(currency=currency, compare_objectives="no", frontier_max_routes=0, **kw),
                 depots, lanes, rates, (), tariffs=(tariff,), currencies=fx)


def _charge(currency, tariff, fx, kg=499):
    m = _model(currency, tariff, fx)
    return quote(m, Shipment("S1", "A", "C", kg / 1000, ready_date=DAY), DAY, fx)


EUR_TARIFF = Tariff("Brindle", "A", "C", 0, None, 12.0, 45.0, "EUR", 5.0)


def test_eur_tariff_reported_in_jpy_rounds_to_whole_yen():
    # ISO 4217: JPY has 0 decimals. 4.99 x 12 = 59.88 EUR + 5 = 64.88 EUR; x 162.35 JPY/EUR
    # = 10,533.268 -> 10,533 JPY
    q = _charge("JPY", EUR_TARIFF, {"EUR": 162.35})
    assert q.price.price == 64.88 and q.rate == 162.35 and q.charge == 10533


def test_eur_tariff_reported_in_kwd_rounds_to_three_decimals():
    # ISO 4217: KWD has 3 decimals. 64.88 EUR x 0.3312 KWD/EUR = 21.488256 -> 21.488 KWD
    q = _charge("KWD", EUR_TARIFF, {"EUR": 0.3312})
    assert q.charge == 21.488


def test_jpy_tariff_priced_in_whole_yen_then_converted():
    # the tariff's own amounts round in its currency: 4.99 x 1,200 = 5,988 JPY (> 5,000
    # minimum) + 600 = 6,588 JPY; x 0.00616 EUR/JPY = 40.58208 -> 40.58 EUR
    t = Tariff("Kanto", "A", "C", 0, None, 1200.0, 5000.0, "JPY", 600.0)
    q = _charge("EUR", t, {"JPY": 0.00616})
    assert q.price.freight == 5988 and q.price.price == 6588 and q.charge == 40.58


def test_kwd_tariff_keeps_three_decimals():
    # 4.99 x 3.9875 = 19.897625 -> 19.898 KWD; x 3.02 EUR/KWD = 60.09196 -> 60.09 EUR
    t = Tariff("Gulf", "A", "C", 0, None, 3.9875, 0.0, "KWD")
    q = _charge("EUR", t, {"KWD": 3.02})
    assert q.price.price == 19.898 and q.charge == 60.09


def _validate(make_input, change):
    d = base_data()
    change(d)
    m = validate(read_workbook(make_input(d)))
    return m, [p for p in m.problems if p.severity == "error"]


def test_missing_rate_is_an_error_naming_the_cell(make_input):
    def change(d):
        d["Rates"][0]["currency"] = "USD"
        d["Tariffs"] = [{"carrier": "B", "from_zone": "A", "to_zone": "C", "min_kg": 0,
                         "price_per_100kg": 10, "currency": "GBP"}]
    _m, errors = _validate(make_input, change)
    where = sorted(p.where for p in errors)
    assert where == ["Rates!N2", "Tariffs!H2"], errors
    assert all("add a Currencies row" in p.fix for p in errors)


def test_rate_card_converted_into_the_run_currency(make_input):
    # base truck: per_km 1.1, per_hour 35, per_trip 40, min_charge 300 given in USD at 0.5 EUR/USD
    def change(d):
        d["Rates"][0]["currency"] = "USD"
        d["Currencies"] = [{"currency": "USD", "rate": 0.5, "date": DAY}]
    m, errors = _validate(make_input, change)
    assert not errors
    card = m.rates[0]
    assert (card.per_km, card.per_hour, card.per_trip, card.min_charge) == (0.55, 17.5, 20.0, 150.0)
    assert card.currency == "USD" and card.fx_rate == 0.5


def test_bad_currency_rows(make_input):
    def change(d):
        d["Currencies"] = [{"currency": "EUR", "rate": 2}, {"currency": "US$", "rate": 1},
                           {"currency": "GBP", "rate": 0}]
    _m, errors = _validate(make_input, change)
    assert sorted(p.cell for p in errors) == ["A3", "B2", "B4"]


def _write(model, shipments, tmp_path):
    costed = pipeline.run(replace_ships(model, shipments), pipeline.Options(analyses=False, scenarios=False))
    path = tmp_path / "out.xlsx"
    info = RunInfo("in.xlsx", "0" * 64, None, dt.datetime(2026, 12, 7), costed.stats)
    write_costed(str(path), costed.model, costed.results, costed.problems, info, runs=costed.runs)
    return costed, path


def replace_ships(model, shipments):
    from dataclasses import replace
    return replace(model, shipments=tuple(shipments))


@pytest.mark.needs_soffice
@pytest.mark.parametrize("currency, rate", [("JPY", 162.35), ("KWD", 0.3312)])
def test_libreoffice_recomputes_converted_charges(tmp_path, currency, rate):
    # LibreOffice Calc (an independent spreadsheet engine) recomputes the conversion formulas
    from tests.spreadsheet_app import recalc_mismatches

    m = _model(currency, EUR_TARIFF, {"EUR": rate}, scale=rate)
    costed, path = _write(m, [Shipment("S1", "A", "C", 0.499, ready_date=DAY)], tmp_path)
    assert costed.results[0].bought
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(path), str(tmp_path / "recalc"))
    assert checked > 10 and not mismatches, mismatches[:10]
    wb = openpyxl.load_workbook(tmp_path / "recalc" / "out.xlsx", data_only=True)
    head = [c.value for c in wb["Carrier charges"][1]]
    charge = wb["Carrier charges"].cell(2, head.index("charge") + 1).value
    assert charge == {"JPY": 10533, "KWD": 21.488}[currency]


# --- the Currency conversion sheet ---------------------------------------------------------
# The truck (base data: per_km 1.1, per_hour 35, per_trip 40, min_charge 300) typed in USD and a
# carrier tariff typed in EUR (4.37 per 100 kg, minimum 45) in a run reporting in JPY or KWD.
# Worked by hand, rounded half away from zero to the run currency's ISO 4217 minor unit:
#   JPY (0 decimals), USD at 150.5: 1.1 x 150.5 = 165.55 -> 166; 35 x 150.5 = 5,267.5 -> 5,268;
#     40 x 150.5 = 6,020; 300 x 150.5 = 45,150. EUR at 162.35: S1 10 t = 100 x 4.37 = 437.00 EUR
#     x 162.35 = 70,946.95 -> 70,947; S2 50 t = 2,185.00 EUR x 162.35 = 354,734.75 -> 354,735
#   KWD (3 decimals), USD at 0.3072: 1.1 x 0.3072 = 0.33792 -> 0.338; 35 x 0.3072 = 10.752;
#     40 x 0.3072 = 12.288; 300 x 0.3072 = 92.16. EUR at 0.3312: 437 x 0.3312 = 144.7344 ->
#     144.734; 2,185 x 0.3312 = 723.672
CONVERSION_CASES = {
    "JPY": ({"USD": 150.5, "EUR": 162.35},
            {"per_km": 166, "per_hour": 5268, "per_trip": 6020, "min_charge": 45150},
            {"S1": 70947, "S2": 354735}),
    "KWD": ({"USD": 0.3072, "EUR": 0.3312},
            {"per_km": 0.338, "per_hour": 10.752, "per_trip": 12.288, "min_charge": 92.16},
            {"S1": 144.734, "S2": 723.672}),
}


def _conversion_run(make_input, tmp_path, currency):
    rates, _cards, _prices = CONVERSION_CASES[currency]
    d = base_data()
    d["Settings"][0]["value"] = currency
    d["Rates"][0]["currency"] = "USD"
    d["Currencies"] = [{"currency": code, "rate": rate, "date": DAY} for code, rate in rates.items()]
    d["Tariffs"] = [{"carrier": "Brindle", "from_zone": "A", "to_zone": "C", "min_kg": 0,
                     "price_per_100kg": 4.37, "min_charge": 45, "currency": "EUR"}]
    model = validate(read_workbook(make_input(d)))
    assert not [p for p in model.problems if p.severity == "error"]
    costed, path = _write(model, model.shipments, tmp_path)
    return costed, path


def _sheet(path, name):
    rows = list(openpyxl.load_workbook(path, data_only=True)[name].iter_rows(values_only=True))
    return [dict(zip(rows[0], r)) for r in rows[1:]]


@pytest.mark.parametrize("currency", ["JPY", "KWD"])
def test_conversion_sheet_lists_each_figure_in_its_own_currency(make_input, tmp_path, currency):
    rates, cards, prices = CONVERSION_CASES[currency]
    costed, path = _conversion_run(make_input, tmp_path, currency)
    rows = _sheet(path, "Currency conversion")
    card = costed.model.rates[0]
    by_figure = {r["figure"]: r for r in rows if r["source"] == "Rates"}
    assert set(by_figure) == set(cards)
    for name, rounded in cards.items():
        r = by_figure[name]
        # as typed, beside its Currencies rate; converted = what the run priced with (unrounded)
        assert (r["currency"], r["rate"], r["run_currency"]) == ("USD", rates["USD"], currency)
        assert r["amount"] == {"per_km": 1.1, "per_hour": 35, "per_trip": 40, "min_charge": 300}[name]
        assert r["converted"] == getattr(card, name) and r["converted_rounded"] == rounded
    charges = {r["shipment_id"]: r["charge"] for r in _sheet(path, "Carrier charges")}
    tariffs = [r for r in rows if r["source"] == "Tariffs"]
    assert [r["item"].split(": ")[1] for r in tariffs] == ["S1 whole", "S2 whole"]
    for r in tariffs:
        sid = r["item"].split(": ")[1].split()[0]
        # the carrier's charge the run used, in the run currency's minor unit
        assert r["currency"] == "EUR" and r["converted_rounded"] == prices[sid] == charges[sid]
    # each currency's rate typed once (its first row); the other rows refer to it
    ws = openpyxl.load_workbook(path)["Currency conversion"]
    head = [c.value for c in ws[1]]
    rates_typed = [row[head.index("rate")].value for row in ws.iter_rows(min_row=2)]
    # USD x 4 (per_km, per_hour, per_trip, min_charge), then EUR x 2 (S1, S2)
    assert [isinstance(v, str) and v.startswith("=") for v in rates_typed] == \
        [False, True, True, True, False, True]


@pytest.mark.needs_soffice
@pytest.mark.parametrize("currency", ["JPY", "KWD"])
def test_libreoffice_recomputes_conversion_sheet(make_input, tmp_path, currency):
    # LibreOffice Calc (an independent spreadsheet engine) recomputes the conversion formulas to
    # the cached values: every formula of the workbook within 0.005, and the rounded conversions
    # exactly (a KWD amount has 3 decimals)
    from tests.spreadsheet_app import convert, recalc_mismatches

    _rates, cards, prices = CONVERSION_CASES[currency]
    _costed, path = _conversion_run(make_input, tmp_path, currency)
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(path), str(tmp_path / "recalc"))
    assert checked > 20 and not mismatches, mismatches[:10]
    (tmp_path / "again").mkdir()
    rows = _sheet(convert(str(path), str(tmp_path / "again")), "Currency conversion")
    got = [r["converted_rounded"] for r in rows]
    assert got == list(cards.values()) + list(prices.values())
    assert got == [r["converted_rounded"] for r in _sheet(path, "Currency conversion")]


def test_no_conversion_sheet_in_one_currency(make_input, tmp_path):
    d = base_data()
    model = validate(read_workbook(make_input(d)))
    _costed, path = _write(model, model.shipments, tmp_path)
    assert "Currency conversion" not in openpyxl.load_workbook(path).sheetnames
