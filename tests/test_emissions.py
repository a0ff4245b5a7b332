"""Emissions on a stated basis (issue 12): well-to-wheel CO2e with its tank-to-wheel part, tonne-km,
g CO2e per tonne-km, fuel use by load, default factors per mode on one basis.

Sources of the check values (marks as in ../shared/references.md):
- DEFRA freight factors, Hansard, Commons written answer "Freight Transport", 4 June 2007 [V-DOC]:
  articulated HGV 0.311 / 0.345 / 0.379 / 0.414 / 0.448 litres per km at 0 / 25 / 50 / 75 / 100 %
  weight laden; rigid 0.236 / 0.262 / 0.288 / 0.314 / 0.340; diesel 2.63 kg CO2 per litre; rail
  0.03, RoRo large 0.02, air long haul 0.57 kg CO2 per tonne-km.
- 2012 Guidelines to Defra/DECC GHG Conversion Factors, Annex 7, Table 7e [V-DOC]: articulated HGV
  >33 t, UK average load: direct GHG 0.08473, indirect 0.01800, grand total 0.10273 kg CO2e/tkm.
- UK DESNZ GHG conversion factors 2025, diesel (average biofuel blend) [V-2ND: a third-party
  transcription]: TTW 2.57082, WTT 0.62665, WTW 3.19747 kg CO2e per litre.
- Planning estimates: these figures are not compliance advice.
"""

from __future__ import annotations

import openpyxl
import pytest

from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.price.rates import (
    DEFAULT_FACTORS,
    DIESEL_WTT_KG_PER_LITRE,
    emissions,
    fuel_use,
    load_factor,
    wtw_per_litre,
)
from tests.pipeline_helpers import route_all

DEFRA_2007_ARTIC_L_PER_KM = {0.0: 0.311, 0.25: 0.345, 0.5: 0.379, 0.75: 0.414, 1.0: 0.448}
DEFRA_2007_RIGID_L_PER_KM = {0.0: 0.236, 0.25: 0.262, 0.5: 0.288, 0.75: 0.314, 1.0: 0.340}


def _card(empty, full, payload=24.0, ttw=2.63, wtw=None, mode="road"):
    return RateCard("truck", mode, 1.0, 0.0, payload, fuel_l_per_100km=full, co2e_kg_per_litre=ttw,
                    fuel_empty_l_per_100km=empty, wtw_co2e_kg_per_litre=wtw)


@pytest.mark.parametrize("table, empty, full", [(DEFRA_2007_ARTIC_L_PER_KM, 31.1, 44.8),
                                                (DEFRA_2007_RIGID_L_PER_KM, 23.6, 34.0)])
def test_fuel_by_load_follows_the_published_table(table, empty, full):
    # the straight line from the table's empty to its full figure meets every 25 % step to the
    # table's 3 decimals (DEFRA 2007, Hansard 4 June 2007 [V-DOC])
    card = _card(empty, full)
    for laden, l_per_km in table.items():
        assert fuel_use(card, laden) / 100 == pytest.approx(l_per_km, abs=0.0006), laden


def test_hand_worked_leg_against_the_published_table():
    # 12 t on a 24 t artic = 50 % laden, 100 km. DEFRA 2007 (Hansard): 100 km x 0.379 l/km x
    # 2.63 kg CO2/l = 99.677 kg. Ours on the straight line 31.1 -> 44.8 l/100 km: 37.95 l/100 km,
    # 37.95 l x 2.63 = 99.8085 kg (0.13 % above the table's rounded 0.379 l/km).
    card = _card(31.1, 44.8)
    e = emissions(100.0, card, 1, 12.0)
    assert e.load_factor == 0.5 and e.l_per_100km == pytest.approx(37.95)
    assert e.ttw_kg == pytest.approx(99.8085)
    assert e.ttw_kg == pytest.approx(100 * 0.379 * 2.63, rel=0.002)
    # well-to-wheel: the card's blank WTW factor is TTW + the DESNZ 2025 well-to-tank of diesel
    assert e.wtw_kg_per_litre == pytest.approx(2.63 + 0.62665)
    assert e.wtw_kg == pytest.approx(37.95 * (2.63 + 0.62665))
    assert e.tonne_km == 1200.0 and e.basis == "fuel"


def test_diesel_well_to_tank_reproduces_desnz_wtw():
    # DESNZ 2025 diesel: 2.57082 TTW + 0.62665 WTT = 3.19747 WTW [V-2ND]
    assert DIESEL_WTT_KG_PER_LITRE == 0.62665
    assert wtw_per_litre(_card(None, 30.0, ttw=2.57082)) == pytest.approx(3.19747, abs=1e-9)
    assert wtw_per_litre(_card(None, 30.0, ttw=2.57082, wtw=3.3)) == 3.3  # the card's own wins


def test_empty_vehicle_share_and_overload_cap():
    card = _card(31.1, 44.8)
    assert load_factor(0.0, 1, card) == 0.0 and fuel_use(card, 0.0) == pytest.approx(31.1)
    assert load_factor(60.0, 3, card) == pytest.approx(60 / 3 / 24)
    assert load_factor(100.0, 1, card) == 1.0  # at most fully laden
    assert fuel_use(_card(None, 40.0), 0.3) == 40.0  # no empty figure: the one figure at any load


def test_default_factors_are_on_one_stated_basis():
    road = DEFAULT_FACTORS["road"]
    # Defra 2012 Table 7e, articulated >33 t: 0.08473 direct (TTW), 0.10273 grand total (WTW) [V-DOC]
    assert (road.ttw, road.wtw, road.year) == (84.73, 102.73, 2012)
    # DEFRA 2007 (Hansard) TTW CO2 per tonne-km: rail 0.03, large RoRo 0.02, air long haul 0.57 [V-DOC]
    for mode, ttw in (("rail", 30.0), ("sea", 20.0), ("air", 570.0)):
        f = DEFAULT_FACTORS[mode]
        assert f.ttw == ttw and f.year == 2007
        # put on the WTW basis with the road table's own uplift, 102.73 / 84.73
        assert f.wtw == pytest.approx(ttw * 102.73 / 84.73, abs=0.005)
        assert "derived" in f.basis and "Hansard" in f.source
    for f in DEFAULT_FACTORS.values():
        assert f.wtw >= f.ttw > 0 and f.source and f.basis


def test_default_basis_leg():
    # 48 t by rail over 244.3 km: 11 726.4 tkm x 30 g = 351.792 kg TTW; WTW x 102.73 / 84.73
    card = RateCard("wagon", "rail", 0.5, 0.0, 60.0)
    e = emissions(244.3, card, 1, 48.0)
    assert e.basis == "default intensity"
    assert e.tonne_km == pytest.approx(11726.4)
    assert e.ttw_kg == pytest.approx(351.792)
    assert e.wtw_kg == pytest.approx(11726.4 * DEFAULT_FACTORS["rail"].wtw / 1000)


def _model(cards, weight=12.0, objective="cost"):
    depots = (Depot("A", "A", 50.0, 4.0), Depot("B", "B", 50.5, 4.5))
    lanes = (Lane("L1", "A", "B", "road", 100.0, 1.3),)
    return Model(Settings(objective=objective), depots, lanes, tuple(cards),
                 (Shipment("S1", "A", "B", weight),))


def test_route_totals_and_g_per_tkm():
    (res,), _st, _p = route_all(_model([_card(31.1, 44.8)]))
    leg = res.legs[0]
    assert res.co2e_kg == pytest.approx(37.95 * 3.25665)  # WTW, as hand-worked above
    assert res.co2e_ttw_kg == pytest.approx(99.8085)
    assert res.tonne_km == 1200.0
    assert res.co2e_g_per_tkm == pytest.approx(37.95 * 3.25665 * 1000 / 1200)
    assert leg.co2e_g_per_tkm == pytest.approx(res.co2e_g_per_tkm)


def test_emissions_objective_sees_the_load():
    # Two trucks, same lane. A: 25 -> 45 l/100 km empty -> full; B: 35 flat. At 2.4 t on 24 t
    # payloads (10 % laden) A burns 27 l/100 km and is cleaner; at 21.6 t (90 %) it burns 43 and B wins.
    a = RateCard("a", "road", 1.0, 0.0, 24.0, fuel_l_per_100km=45.0, co2e_kg_per_litre=2.6,
                 fuel_empty_l_per_100km=25.0)
    b = RateCard("b", "road", 1.0, 0.0, 24.0, fuel_l_per_100km=35.0, co2e_kg_per_litre=2.6)
    (light,), _s, _p = route_all(_model([a, b], 2.4, "emissions"))
    (heavy,), _s, _p = route_all(_model([a, b], 21.6, "emissions"))
    assert light.vehicle == "a" and heavy.vehicle == "b"


def test_output_shows_basis_sources_and_columns(cli, make_input, tmp_path):
    out = tmp_path / "out.xlsx"
    code, _o, err = cli("run", make_input(), "-o", str(out))
    assert code == 0, err
    wb = openpyxl.load_workbook(out, data_only=True)
    legs_head = [c.value for c in wb["Legs"][1]]
    summary_head = [c.value for c in wb["Summary"][1]]
    for col in ("co2e_kg", "co2e_ttw_kg", "tonne_km", "co2e_g_per_tkm"):
        assert col in legs_head and col in summary_head
    run = {r[0]: r[1] for r in wb["Run"].iter_rows(values_only=True) if r[0]}
    assert "well-to-wheel" in run["emissions basis"] and "tank-to-wheel" in run["emissions basis"]
    assert "not compliance advice" in run["emissions basis"]
    road = run["default CO2e intensity: road"]
    assert "102.73" in road and "Table 7e" in road and "2012" in road and "basis" in road
    assert "DESNZ GHG conversion factors 2025" in run["emissions: well-to-tank of diesel"]


def test_empty_fuel_above_laden_is_a_warning(cli, make_input, tmp_path):
    from tests.conftest import base_data

    data = base_data()
    data["Rates"][0]["fuel_empty_l_per_100km"] = 40  # above its laden 30 l/100 km
    code, _o, err = cli("run", make_input(data), "-o", str(tmp_path / "o.xlsx"))
    assert code == 0, err
    assert "fuel use empty (40 l/100 km) is above fuel use laden (30 l/100 km)" in err


def test_closing_line_keeps_the_caution(cli, make_input, tmp_path):
    code, out, err = cli("run", make_input(), "-o", str(tmp_path / "o.xlsx"))
    assert code == 0, err
    assert "planning estimates, not legal or compliance advice" in out.strip().splitlines()[-1]
