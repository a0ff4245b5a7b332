"""A hand-worked costing example, written out in full, and the rounding rule.

The rates and lanes are the invented test network of conftest.py; the expected figures below
are worked by hand from the formulas in costing/cost.py's docstring (and the design's
workbook contract), not produced by the code under test.
"""

from __future__ import annotations

import math

import pytest
from pipeline_helpers import route_all

from costing.check.validate import validate
from costing.money import minor_unit, round_money
from costing.network.build import build_graph
from costing.workbook.reader import read_workbook


def _run(path, objective=None):
    model = validate(read_workbook(path))
    results, _stats, problems = route_all(model, objective)
    return {r.shipment.shipment_id: r for r in results}, problems


def test_hand_worked_costs(make_input):
    res, problems = _run(make_input())
    s1 = res["S1"]
    # S1: 10 t, one truck (10 / 24 -> 1). Direct lane L3: 190 km, 2.6 h.
    #   km   190 x 1.10 = 209.00;  hours 2.6 x 35 = 91.00;  toll 0;  fixed 0
    #   handling: start A 20.00, end C 10.00;  per trip 40.00      -> 370.00
    # Through hub B (L1 + L2), the truck driving through: nothing is handled at B
    #   L1: 80 x 1.10 = 88.00, 1.2 x 35 = 42.00, toll 5.00                        -> 135.00
    #   L2: 85 x 1.10 = 93.50, 1.3 x 35 = 45.50                                  -> 139.00
    #   + start 20 + end 10 + trip 40                                            -> 344.00
    # So the least-cost route runs through the hub at 344.00 (before issue 12 the hub charged
    # 40.00 for the truck driving through, 384.00, and the direct lane won).
    assert [leg.use.lane.lane_id for leg in s1.legs] == ["L1", "L2"]
    assert s1.vehicles == 1
    leg = s1.legs[0]
    assert (leg.km_cost, leg.hour_cost, leg.toll_cost, leg.fixed_cost) == (88.00, 42.00, 5.00, 0.0)
    assert (leg.start_handling_cost, leg.end_handling_cost, leg.trip_cost) == (20.00, 0.0, 40.00)
    assert leg.handling_hours == 0.5  # at A only: B is driven through
    assert (s1.legs[1].start_handling_cost, s1.legs[1].end_handling_cost) == (0.0, 10.00)
    assert s1.subtotal == 344.00
    assert s1.min_charge == 300.00 and s1.min_charge_uplift == 0.0
    assert s1.total_cost == 344.00
    assert s1.distance_km == 165
    # co2e tank-to-wheel: 165 km x 30 l/100 km / 100 x 2.5 kg/l = 123.75 kg; well-to-wheel adds the
    # well-to-tank of diesel, 0.62665 kg CO2e/l (UK DESNZ 2025, [V-2ND] in references.md 4.1):
    # 49.5 l x 3.12665 = 154.769175 kg; tonne-km 10 x 165 = 1650
    assert s1.co2e_ttw_kg == pytest.approx(123.75)
    assert s1.co2e_kg == pytest.approx(154.769175)
    assert s1.tonne_km == pytest.approx(1650.0)
    assert s1.co2e_g_per_tkm == pytest.approx(154.769175 * 1000 / 1650)

    s2 = res["S2"]
    # S2: 50 t on 24 t payloads -> ceil(2.083) = 3 trucks.
    #   direct: 3 x 190 x 1.1 = 627.00; 3 x 2.6 x 35 = 273.00; handling 3 x 20 + 3 x 10 = 90.00;
    #           trips 3 x 40 = 120.00                                         -> 1110.00
    #   via B:  264.00 + 126.00 + 15.00 + 280.50 + 136.50 + 90 + 120           -> 1032.00
    #           (before issue 12 also 3 x 40 = 120.00 at B for driving through: 1152.00)
    assert s2.vehicles == 3
    assert [leg.use.lane.lane_id for leg in s2.legs] == ["L1", "L2"]
    assert s2.total_cost == 1032.00
    assert any("split over 3 vehicles" in p.message and p.cell == "D3" for p in problems)

    # S3: the only lane into D (L4) is closed.
    assert res["S3"].status == "no_route"
    assert "L4" in res["S3"].message and "closed" in res["S3"].message


def test_objectives_pick_different_routes(make_input):
    # distance: direct 190 km vs via B 80 + 85 = 165 km -> via B
    res, _ = _run(make_input(), "distance")
    assert [leg.use.lane.lane_id for leg in res["S1"].legs] == ["L1", "L2"]
    assert res["S1"].distance_km == 165
    # time: direct 2.6 h vs 1.2 + 1.3 = 2.5 h through hub B (no handling hour there: nothing is
    # handled) -> via B; with a cross-dock at B (a change of vehicle) it would pay B's hour twice
    res, _ = _run(make_input(), "time")
    assert [leg.use.lane.lane_id for leg in res["S1"].legs] == ["L1", "L2"]
    assert res["S1"].objective_value == pytest.approx(2.5 + 0.5)  # + A's handling hour


def test_min_charge_uplift(make_input):
    from tests.conftest import base_data

    data = base_data()
    data["Rates"][0]["min_charge"] = 500
    res, _ = _run(make_input(data))
    s1 = res["S1"]
    # subtotal 344.00 (above) is under the 500.00 minimum: uplift 156.00, total 500.00
    assert s1.subtotal == 344.00 and s1.min_charge_uplift == 156.00 and s1.total_cost == 500.00


def _sphere_km(lat1: float, lon1: float, lat2: float, lon2: float) -> float:
    """Great-circle km written for this test, not the project's haversine: the atan2 form of the
    central angle on a sphere (the special case of Vincenty's formula for a sphere, from memory),
    radius the IUGG mean radius R1 = 6371.0088 km of the WGS84 ellipsoid (Moritz, Geodetic
    Reference System 1980; from memory)."""
    p1, p2, dl = math.radians(lat1), math.radians(lat2), math.radians(lon2 - lon1)
    y = math.hypot(math.cos(p2) * math.sin(dl),
                   math.cos(p1) * math.sin(p2) - math.sin(p1) * math.cos(p2) * math.cos(dl))
    x = math.sin(p1) * math.sin(p2) + math.cos(p1) * math.cos(p2) * math.cos(dl)
    return 6371.0088 * math.atan2(y, x)


def test_estimated_distance_and_hours(make_input):
    from geographiclib.geodesic import Geodesic

    from tests.conftest import base_data

    data = base_data()
    data["Lanes"][2]["distance_km"] = None
    data["Lanes"][2]["drive_hours"] = None
    res, _ = _run(make_input(data), "distance")
    model = validate(read_workbook(make_input(data, "again.xlsx")))
    lane = [u for u in (d["use"] for _a, _b, d in build_graph(model).edges(data=True))
            if u.lane.lane_id == "L3"][0]
    # estimated km = straight line (haversine) x detour_factor 1.25, rounded to 0.1 km;
    # hours = km / 70 km/h, rounded to 0.01 h
    expected_km = round(_sphere_km(52.0, 5.0, 53.0, 6.0) * 1.25, 1)
    assert lane.km == expected_km and lane.km_estimated
    # and the straight line is the WGS84 geodesic (geographiclib, reference library) to within
    # the 0.57 % a mean-radius sphere can differ from it (costing/geo.py docstring; from memory)
    geodesic_km = Geodesic.WGS84.Inverse(52.0, 5.0, 53.0, 6.0)["s12"] / 1000
    assert lane.km == pytest.approx(geodesic_km * 1.25, rel=0.0057)
    assert lane.hours == round(expected_km / 70, 2) and lane.hours_estimated


# Spreadsheet ROUND rounds half away from zero (Microsoft's ROUND function documentation; from
# memory). Python's built-in round() rounds half to even and on binary floats, so it differs:
@pytest.mark.parametrize("value, places, expected", [
    (2.675, 2, 2.68),     # binary 2.67499999... ; ROUND(2.675, 2) = 2.68 in a spreadsheet
    (-2.675, 2, -2.68),   # away from zero for negatives too
    (0.125, 2, 0.13),     # round() gives 0.12 (half to even)
    (1.005, 2, 1.01),
    (2.5, 0, 3.0),        # round(2.5) == 2
    (-0.5, 0, -1.0),
    (1.0005, 3, 1.001),
    (12.344999, 2, 12.34),
])
def test_round_half_away_from_zero(value, places, expected):
    assert round_money(value, places) == expected


def test_currency_minor_units():
    # ISO 4217 minor units (from memory, matching the ISO 4217 list): JPY 0, EUR 2, KWD 3
    assert (minor_unit("JPY"), minor_unit("EUR"), minor_unit("KWD"), minor_unit("USD")) == (0, 2, 3, 2)


def test_yen_rounds_to_whole_units(make_input):
    from tests.conftest import base_data

    data = base_data()
    data["Settings"][0]["value"] = "JPY"
    data["Rates"][0]["per_km"] = 151.37  # invented yen rate
    res, _ = _run(make_input(data), "distance")
    leg = res["S1"].legs[0]
    # the 165 km route via B; its first lane L1: 80 x 151.37 = 12109.6 -> 12110 yen
    assert leg.use.lane.lane_id == "L1"
    assert leg.km_cost == 12110


# Published worked examples of the spreadsheet ROUND function, half away from zero:
#   MS  Microsoft Support, "Use the ROUND function" (Excel): ROUND(2.15,1)=2.2, ROUND(2.149,1)=2.1,
#       ROUND(-1.475,2)=-1.48, ROUND(21.5,-1)=20
#   OO  Apache OpenOffice wiki, "Calc: ROUND function": ROUND(2.348;2)=2.35, ROUND(2.348;0)=2,
#       ROUND(2.5)=3, ROUND(987.65;-2)=1000
#   AN  Apple Numbers function help, "ROUND": ROUND(1.49,0)=1, ROUND(1.50,0)=2,
#       ROUND(1.23456,3)=1.235, ROUND(1111.222,-2)=1100, ROUND(-2.2,0)=-2, ROUND(-2.8,0)=-3
#   mem ROUND(-2.5,0)=-3 (half away from zero for negatives; from memory)
@pytest.mark.parametrize("value, places, expected, source", [
    (2.15, 1, 2.2, "MS"), (2.149, 1, 2.1, "MS"), (-1.475, 2, -1.48, "MS"), (21.5, -1, 20.0, "MS"),
    (2.348, 2, 2.35, "OO"), (2.348, 0, 2.0, "OO"), (2.5, 0, 3.0, "OO"), (987.65, -2, 1000.0, "OO"),
    (1.49, 0, 1.0, "AN"), (1.50, 0, 2.0, "AN"), (1.23456, 3, 1.235, "AN"), (1111.222, -2, 1100.0, "AN"),
    (-2.2, 0, -2.0, "AN"), (-2.8, 0, -3.0, "AN"),
    (-2.5, 0, -3.0, "mem"),
])
def test_published_round_examples(value, places, expected, source):
    assert round_money(value, places) == expected, source


def test_rounding_properties():
    # Properties of rounding half away from zero to `places` decimals that need no reference
    # implementation (definition of the rule; common practice, no source): a decimal half
    # n + 0.5 units, written as text and read as a float, goes to n + 1 units away from zero;
    # a figure already at the unit is unchanged; the result is within half a unit; sign symmetry.
    from hypothesis import given, settings
    from hypothesis import strategies as st

    @settings(max_examples=3000, deadline=None)
    @given(st.integers(0, 10**9), st.sampled_from([0, 1, 2, 3]), st.booleans())
    def halves(n, places, negative):
        sign = "-" if negative else ""
        unit = 10 ** places
        half = float(f"{sign}{n // unit}.{n % unit:0{places}d}5" if places else f"{sign}{n}.5")
        away = float(f"{sign}{(n + 1) // unit}.{(n + 1) % unit:0{places}d}" if places
                     else f"{sign}{n + 1}")
        at_unit = float(f"{sign}{n // unit}.{n % unit:0{places}d}" if places else f"{sign}{n}")
        assert round_money(half, places) == away
        assert round_money(at_unit, places) == at_unit

    @settings(max_examples=3000, deadline=None)
    @given(st.floats(-1e9, 1e9, allow_nan=False), st.sampled_from([0, 2, 3]))
    def near(value, places):
        r = round_money(value, places)
        # within half a unit of the figure read at 15 significant digits (what a spreadsheet
        # shows and rounds), which is itself within 5e-15 x |value| of the float, plus the
        # float of the result (an ulp, 2.2e-16 x |value|)
        assert abs(r - value) <= 0.5 * 10.0 ** -places * (1 + 1e-9) + abs(value) * 6e-15
        assert round_money(-value, places) == -r

    halves()
    near()


@pytest.mark.needs_soffice  # skips locally without LibreOffice, fails in CI (conftest.py)
def test_rounding_equals_libreoffice_round(tmp_path):
    # Reference: LibreOffice Calc's own ROUND, recalculated headless (an independent spreadsheet
    # engine) on exact halves at 0, 2 and 3 decimals, halves that binary floats cannot hold
    # (x.xx5), large and negative figures, and seeded random values.
    import random

    import openpyxl

    from tests.spreadsheet_app import convert

    rng = random.Random(18)
    cases = []
    for i in range(-2000, 2001):
        cases += [(i / 2, 0), (i / 200, 2), (i / 2000, 3), (i * 1.001 + 0.005, 2)]
    cases += [(rng.uniform(-1e9, 1e9), rng.choice([0, 2, 3])) for _ in range(2000)]
    cases += [(rng.randint(-10**8, 10**8) / 1000 + 0.0005, 3) for _ in range(1000)]
    cases += [(rng.randint(-10**7, 10**7) / 100 + 0.005, 2) for _ in range(1000)]
    wb = openpyxl.Workbook()
    ws = wb.active
    for row, (value, places) in enumerate(cases, 1):
        ws.cell(row, 1, value)
        ws.cell(row, 2, places)
        ws.cell(row, 3, f"=ROUND(A{row},B{row})")
    wb.save(tmp_path / "round.xlsx")
    (tmp_path / "out").mkdir()
    fresh = openpyxl.load_workbook(convert(str(tmp_path / "round.xlsx"), str(tmp_path / "out")),
                                   data_only=True).active
    theirs = [fresh.cell(row, 3).value for row in range(1, len(cases) + 1)]
    differ = [(v, p, round_money(v, p), t) for (v, p), t in zip(cases, theirs) if round_money(v, p) != t]
    assert not differ, differ[:10]
