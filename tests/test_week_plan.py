"""The plan stage through the one pipeline: loads ready on the same day share vehicle runs, each
pays a tonne-km share (largest remainder), capped at its own leg alone; the Vehicle runs sheet,
the Legs shares and the Summary tie out, and a real spreadsheet recomputes them.

Every expected figure below is worked by hand in the comments from the leg formulas of
costing/price/cost.py's docstring; the rates and places are invented inputs (not expected values).
The largest-remainder rule is Hamilton's method of apportionment (textbook; from memory).
"""

from __future__ import annotations

import datetime as dt

import openpyxl
import pytest

from costing import pipeline
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.sheets.run import RunInfo
from costing.sheets.writer import write_costed

DAY = dt.date(2026, 12, 7)


def _model(shipments, consolidate="yes", rates=None, lanes=None, depots=None, return_empty="no") -> Model:
    depots = depots or (Depot("A", "Ashby", None, None, "depot"),
                        Depot("C", "Corrin", None, None, "customer"))
    # one lane A-C: 250 km, 3.5 h
    lanes = lanes or (Lane("L1", "A", "C", "road", 250.0, 3.5),)
    # artic: 1.85 per km, 45 per hour, 156.25 per trip, 24.5 t
    rates = rates or (RateCard("artic", "road", 1.85, 45.0, 24.5, per_trip=156.25, pallet_places=33),)
    return Model(Settings(consolidate=consolidate, compare_objectives="no", frontier_max_routes=0,
                          return_empty=return_empty),
                 tuple(depots), tuple(lanes), tuple(rates), tuple(shipments))


def _run(model):
    return pipeline.run(model, pipeline.Options(analyses=False, scenarios=False))


def _ship(sid, weight, **kw):
    return Shipment(sid, kw.pop("origin", "A"), kw.pop("destination", "C"), weight, **kw)


def test_three_loads_one_day_one_artic_shared_by_tonne_km():
    # one artic alone: 250 x 1.85 = 462.50; 3.5 x 45 = 157.50; trip 156.25 -> 776.25
    # 5 + 5 + 10 = 20 t fit in one artic (24.5 t): one run of 776.25 instead of 3 x 776.25.
    # tonne-km 1250, 1250, 2500 of 5000: quotas 194.0625, 194.0625, 388.125 -> floors 194.06,
    # 194.06, 388.12 (776.24); the cent left goes to the largest remainder (0.5 of S3) -> 388.13.
    costed = _run(_model([_ship("S1", 5, ready_date=DAY), _ship("S2", 5, ready_date=DAY),
                          _ship("S3", 10, ready_date=DAY)]))
    assert len(costed.runs) == 1
    run = costed.runs[0]
    assert run.vehicles == 1 and run.loads == ("S1", "S2", "S3") and run.run_cost == 776.25
    totals = [r.total_cost for r in costed.results]
    assert totals == [194.06, 194.06, 388.13]
    assert [r.standalone_cost for r in costed.results] == [776.25] * 3
    assert [r.saving for r in costed.results] == [582.19, 582.19, 388.12]
    assert costed.results[0].shared_with == ("S2", "S3")
    assert "travels with S2, S3 on L1" in costed.results[0].message
    # emissions are shared by the same keys: intensity basis, 20 t x 250 km = 5000 tkm
    assert sum(r.co2e_kg for r in costed.results) == pytest.approx(run.co2e_kg)


def test_consolidate_no_prices_every_load_alone():
    costed = _run(_model([_ship("S1", 5), _ship("S2", 5), _ship("S3", 10)], consolidate="no"))
    assert len(costed.runs) == 3 and all(r.vehicles == 1 for r in costed.runs)
    assert [r.total_cost for r in costed.results] == [776.25] * 3
    assert all(r.saving == 0 and not r.shared_with for r in costed.results)


def test_different_days_never_share():
    days = [DAY, DAY + dt.timedelta(days=1), DAY + dt.timedelta(days=2)]
    costed = _run(_model([_ship(f"S{i}", 5, ready_date=d) for i, d in enumerate(days)]))
    assert len(costed.runs) == 3
    assert sorted(r.day for r in costed.runs) == days
    assert [r.total_cost for r in costed.results] == [776.25] * 3


def test_blank_ready_date_is_the_first_day():
    # S2 has no ready_date: it leaves on the first day of the run (S1's), so they share
    costed = _run(_model([_ship("S1", 5, ready_date=DAY), _ship("S2", 5)]))
    assert len(costed.runs) == 1 and costed.runs[0].day == DAY


def test_pallets_bind_before_weight():
    # 3 x 12 pallets on 33 pallet places: 36 > 33, so two vehicles although 3 t weigh little
    costed = _run(_model([_ship(f"S{i}", 1, pallets=12) for i in range(3)]))
    assert [r.vehicles for r in costed.runs] == [2]
    # two vehicles: 2 x 776.25 = 1552.50, a third each by tonne-km (1 t each): 517.50
    assert [r.total_cost for r in costed.results] == [517.50] * 3
    # a load needing more pallet places than one vehicle has needs two vehicles alone too
    alone = _run(_model([_ship("B", 1, pallets=40)], consolidate="no"))
    assert alone.results[0].vehicles == 2 and alone.results[0].total_cost == 1552.50


def test_share_capped_at_the_leg_alone_and_said():
    # artic 24 t, 33 pallets. A: 20 t, 1 pallet; B and C: 1 t, 20 pallets each. Alone: one
    # vehicle each (3 x 776.25 = 2328.75). Packed first-fit decreasing: A and B in one vehicle
    # (21 t, 21 pallets), C in a second (A + B + C would be 41 pallets): 2 vehicles, 1552.50.
    # By tonne-km A would pay 20/22 x 1552.50 = 1411.36 > 776.25 alone, so A is capped at
    # 776.25 and the excess goes to B and C by their room (equal): each pays 388.13 / 388.12.
    rates = (RateCard("artic", "road", 1.85, 45.0, 24.0, per_trip=156.25, pallet_places=33),)
    costed = _run(_model([_ship("A", 20, pallets=1), _ship("B", 1, pallets=20),
                          _ship("C", 1, pallets=20)], rates=rates))
    assert [r.vehicles for r in costed.runs] == [2]
    a, b, c = costed.results
    assert a.total_cost == 776.25
    assert sorted([b.total_cost, c.total_cost]) == [388.12, 388.13]
    assert round(a.total_cost + b.total_cost + c.total_cost, 2) == 1552.50
    assert "capped at its stand-alone cost" in a.message


def test_no_saving_no_sharing():
    # 24 t + 24 t on 24.5 t: two vehicles either way, so each keeps a run of its own
    costed = _run(_model([_ship("S1", 24), _ship("S2", 24)]))
    assert len(costed.runs) == 2 and all(len(r.loads) == 1 for r in costed.runs)
    assert [r.total_cost for r in costed.results] == [776.25, 776.25]


def test_late_arrival_is_marked():
    # 30 h of driving from the start of 7 December; due by the end of 7 December (24 h): 6 h late
    lanes = (Lane("L1", "A", "C", "road", 250.0, 30.0),)
    costed = _run(_model([_ship("S1", 5, ready_date=DAY, due_date=DAY),
                          _ship("S2", 5, ready_date=DAY, due_date=DAY + dt.timedelta(days=1))], lanes=lanes))
    s1, s2 = costed.results
    assert "late: arrives 6.0 h after its due_date" in s1.message
    assert "late" not in s2.message
    assert any("arrives 6.0 h after" in p.message for p in costed.problems)


def test_route_through_a_hub_to_share_a_trunk():
    # Two loads from A and B to C. Direct lanes A-C and B-C are long (600 km each); A-H and B-H
    # are 100 km, H-C is 500 km. Rigid 1.00 per km, 10 t payload; no other charges.
    #   alone: direct 600.00 each (via H: 100 + 500 = 600.00, a tie; the search keeps direct
    #   or the hub: either is 600.00 alone, 1200.00 for both).
    #   shared: A-H 100 + B-H 100 + one rigid on H-C 500 = 700.00 for both (4 + 4 t fit in 10 t).
    depots = (Depot("A", "A", None, None), Depot("B", "B", None, None), Depot("H", "Hub", None, None, "hub"),
              Depot("C", "C", None, None, "customer"))
    lanes = (Lane("AC", "A", "C", "road", 600.0, 0.0), Lane("BC", "B", "C", "road", 600.0, 0.0),
             Lane("AH", "A", "H", "road", 100.0, 0.0), Lane("BH", "B", "H", "road", 100.0, 0.0),
             Lane("HC", "H", "C", "road", 500.0, 0.0))
    rates = (RateCard("rigid", "road", 1.0, 0.0, 10.0),)
    ships = [_ship("SA", 4, origin="A"), _ship("SB", 4, origin="B")]
    costed = _run(_model(ships, rates=rates, lanes=lanes, depots=depots))
    assert round(sum(r.total_cost for r in costed.results), 2) == 700.00
    trunk = [r for r in costed.runs if r.leg.use.lane.lane_id == "HC"]
    assert len(trunk) == 1 and trunk[0].loads == ("SA", "SB") and trunk[0].vehicles == 1
    # each pays its feeder and half the trunk (equal tonne-km): 100 + 250 = 350.00
    assert [r.total_cost for r in costed.results] == [350.00, 350.00]
    alone = _run(_model(ships, consolidate="no", rates=rates, lanes=lanes, depots=depots))
    assert round(sum(r.total_cost for r in alone.results), 2) == 1200.00


def test_empty_returns_shared_by_tonne_km():
    # the artic comes back empty C -> A over L1: 250 x 1.85 = 462.50 + 3.5 x 45 = 157.50 -> 620.00
    # (no trip or handling charge on an empty return). One artic carried 5 + 5 + 10 t, so one
    # comes back: 620.00 shared by tonne-km 1:1:2 -> 155.00, 155.00, 310.00. Alone each load's
    # own artic would come back: 620.00 each.
    ships = [_ship("S1", 5), _ship("S2", 5), _ship("S3", 10)]
    costed = _run(_model(ships, return_empty="yes"))
    empty = [r for r in costed.runs if r.empty_for]
    assert len(empty) == 1 and empty[0].run_cost == 620.00 and empty[0].empty_for == ("S1", "S2", "S3")
    assert empty[0].leg.use.from_depot == "C" and empty[0].leg.use.to_depot == "A"
    assert [r.empty_return_cost for r in costed.results] == [155.00, 155.00, 310.00]
    assert [r.empty_return_alone for r in costed.results] == [620.00] * 3
    assert [r.total_cost for r in costed.results] == [349.06, 349.06, 698.13]
    assert [r.standalone_cost for r in costed.results] == [1396.25] * 3
    assert round(sum(r.total_cost for r in costed.results), 2) == round(
        sum(r.run_cost for r in costed.runs), 2) == 1396.25
    # consolidate = no: each artic comes back on its own
    alone = _run(_model(ships, consolidate="no", return_empty="yes"))
    assert len([r for r in alone.runs if r.empty_for]) == 3
    assert [r.total_cost for r in alone.results] == [1396.25] * 3


def _write(costed, path):
    info = RunInfo("test", "0" * 64, None, dt.datetime(2026, 12, 3), costed.stats)
    write_costed(str(path), costed.model, costed.results, costed.problems, info, None, None, (), costed.runs)


def test_workbook_ties_out(tmp_path):
    costed = _run(_model([_ship("S1", 5, ready_date=DAY), _ship("S2", 5, ready_date=DAY),
                          _ship("S3", 10, ready_date=DAY), _ship("S4", 30, ready_date=DAY)]))
    _write(costed, tmp_path / "out.xlsx")
    wb = openpyxl.load_workbook(tmp_path / "out.xlsx", data_only=True)
    runs = list(wb["Vehicle runs"].iter_rows(values_only=True))
    head = runs[0]
    run_cost = sum(r[head.index("run_cost")] for r in runs[1:])
    summary = list(wb["Summary"].iter_rows(values_only=True))
    sh = summary[0]
    total = [r for r in summary if r[0] == "TOTAL"][0][sh.index("total_cost")]
    # 20 t share one artic (776.25); 30 t takes two artics alone (1552.50) and shares none of it
    # on its own first vehicle... with first-fit decreasing: pieces 15, 15, 10, 5, 5 -> bins
    # [15, 5], [15, 5], [10]: 3 vehicles = 2328.75 for all four (alone 4 x 776.25 + 1552.50 = 3881.25)
    assert round(run_cost, 2) == 2328.75 == round(total, 2)
    legs = list(wb["Legs"].iter_rows(values_only=True))
    lh = legs[0]
    assert round(sum(r[lh.index("cost_share")] for r in legs[1:]), 2) == 2328.75
    recon = {r[0]: r[1] for r in wb["Run"].iter_rows(values_only=True) if r[0]}
    assert recon["difference runs - shares (must be 0)"] == 0
    assert recon["difference (must be 0)"] == 0


def test_workbook_ties_out_with_empty_returns(tmp_path):
    costed = _run(_model([_ship("S1", 5), _ship("S2", 5), _ship("S3", 10), _ship("S4", 30)],
                         return_empty="yes"))
    _write(costed, tmp_path / "out.xlsx")
    wb = openpyxl.load_workbook(tmp_path / "out.xlsx", data_only=True)
    recon = {r[0]: r[1] for r in wb["Run"].iter_rows(values_only=True) if r[0]}
    assert recon["difference runs - shares (must be 0)"] == 0
    assert recon["difference (must be 0)"] == 0
    runs = list(wb["Vehicle runs"].iter_rows(values_only=True))
    assert any(str(r[runs[0].index("shipments")]).startswith("empty return for") for r in runs[1:])


@pytest.mark.needs_soffice
def test_libreoffice_recomputes_the_shares(tmp_path):
    # LibreOffice Calc (an independent spreadsheet engine) recalculates every formula of a run
    # with shares, a cap and largest-remainder adjustments; each must equal the cached value
    from tests.spreadsheet_app import recalc_mismatches

    rates = (RateCard("artic", "road", 1.85, 45.0, 24.0, per_trip=156.25, pallet_places=33),)
    costed = _run(_model([_ship("A", 20, pallets=1), _ship("B", 1, pallets=20), _ship("C", 1, pallets=20),
                          _ship("D", 5), _ship("E", 5), _ship("F", 7.3)], rates=rates, return_empty="yes"))
    _write(costed, tmp_path / "out.xlsx")
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(tmp_path / "out.xlsx"), str(tmp_path / "recalc"))
    assert checked > 50 and not mismatches, mismatches[:10]


def test_a_long_run_names_ten_co_travellers_and_counts_the_rest(tmp_path):
    # 30 loads of 0.5 t on one day fit one artic (15 t of 24.5): one run of 30 loads. Each load
    # shares it with 29 others; its note and travels_with name the first ten in input order and
    # count the other 19 (costing.plan.week.TRAVEL_NAMES); Vehicle runs lists all 30.
    ships = [_ship(f"S{k:02d}", 0.5, ready_date=DAY) for k in range(1, 31)]
    model = _model(ships)
    costed = _run(model)
    assert len(costed.runs) == 1 and len(costed.runs[0].loads) == 30
    first, last = costed.results[0], costed.results[-1]
    assert first.shared_with == tuple(f"S{k:02d}" for k in range(2, 12)) and first.shared_count == 29
    assert last.shared_with == tuple(f"S{k:02d}" for k in range(1, 11)) and last.shared_count == 29
    assert "travels with S02, S03, S04, S05, S06, S07, S08, S09, S10, S11 and 19 more on L1" in first.message
    # on a load's second shared run the count is of the union: a second lane C-D, ten of the
    # loads going on to D (the other 20 stop at C): S01 shares run A-C with 29, run C-D with 9
    # of the same loads: still 29 in all
    depots = (Depot("A", "Ashby", None, None, "depot"), Depot("C", "Corrin", None, None, "depot"),
              Depot("D", "Dunmere", None, None, "customer"))
    lanes = (Lane("L1", "A", "C", "road", 250.0, 3.5), Lane("L2", "C", "D", "road", 40.0, 0.7))
    ships = [_ship(f"S{k:02d}", 0.5, ready_date=DAY, destination="D" if k <= 10 else "C")
             for k in range(1, 31)]
    costed = _run(_model(ships, depots=depots, lanes=lanes))
    s01 = costed.results[0]
    assert {len(r.loads) for r in costed.runs} == {30, 10}
    assert s01.shared_count == 29 and s01.shared_with == tuple(f"S{k:02d}" for k in range(2, 12))
    # the Summary cell says the same; the Vehicle runs row lists every load of the run
    path = tmp_path / "out.xlsx"
    info = RunInfo("test", "0" * 64, None, dt.datetime(2026, 12, 3), costed.stats)
    write_costed(str(path), costed.model, costed.results, costed.problems, info, None, None, (), costed.runs)
    wb = openpyxl.load_workbook(path, data_only=True)
    summary, runs = wb["Summary"], wb["Vehicle runs"]
    head = [c.value for c in summary[1]]
    assert summary.cell(2, head.index("travels_with") + 1).value == \
        "S02, S03, S04, S05, S06, S07, S08, S09, S10, S11 and 19 more"
    head = [c.value for c in runs[1]]
    listed = {runs.cell(r, head.index("shipments") + 1).value for r in range(2, runs.max_row + 1)}
    assert ", ".join(f"S{k:02d}" for k in range(1, 31)) in listed
