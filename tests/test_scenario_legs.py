"""Scenario results finance can trace: every scenario's legs on Scenario legs, its per-shipment
totals on Scenario shipments, and the Scenario comparison totals as live formulas over them.
Read back from the file with openpyxl by header text (names written here). Oracles: hand-worked
fuel surcharges (rate x litres, worked in the comments), the pipeline's own scenario results
for the sums the sheet must reproduce, and LibreOffice Calc recalculating the formulas."""

from __future__ import annotations

import openpyxl
import pytest

from costing import pipeline
from costing.example import write_example
from tests.conftest import base_data
from tests.spreadsheet_app import recalc_mismatches


def _scenario_data():
    data = base_data()
    data["Settings"].append({"setting": "fuel_price_per_litre", "value": 1.50})
    data["Rates"][0].update({"fuel_included_at": 1.50})
    # a dearer L1 keeps A > C direct the cheaper route while L3 is open (a truck driving through
    # hub B pays no handling there, so with the base toll A > B > C would already win)
    data["Lanes"][0]["toll"] = 50
    data["Scenarios"] = [
        {"scenario": "fuel_up", "sheet": "Settings", "key": "fuel_price_per_litre", "column": "value",
         "change": "+12%"},
        {"scenario": "L3_closed", "sheet": "Lanes", "key": "L3", "column": "open", "change": "=no"},
    ]
    return data


def _table(ws, header_row=1):
    rows = list(ws.iter_rows(min_row=header_row, values_only=True))
    head = list(rows[0])
    return head, [dict(zip(head, r)) for r in rows[1:] if any(v is not None for v in r)]


def _totals_block(ws):
    # the scenario totals: header on row 3, one row per scenario until the first blank row
    head = [c.value for c in ws[3]]
    out = {}
    for r in ws.iter_rows(min_row=4, values_only=True):
        if r[0] is None:
            break
        out[r[0]] = dict(zip(head, r))
    return out


def test_scenario_legs_hold_each_scenarios_rates_and_hand_worked_surcharges(cli, make_input, tmp_path):
    out = tmp_path / "o.xlsx"
    code, _, err = cli("run", make_input(_scenario_data()), "-o", str(out))
    assert code == 0, err
    wb = openpyxl.load_workbook(out, data_only=True)
    _, legs = _table(wb["Scenario legs"])
    fuel = [g for g in legs if g["scenario"] == "fuel_up"]
    # fuel_up raises the price 12 %: 1.50 x 1.12 = 1.68 a litre, on the leg row as its rate
    assert fuel and all(g["fuel_price"] == pytest.approx(1.68) for g in fuel)
    # hand-worked: lane L3, 190 km at 30 l/100 km, 0.18 a litre over the included 1.50:
    # S1 one truck 1 x 190 x 0.30 x 0.18 = 10.26; S2 50 t on 24 t trucks, 3 trucks = 30.78
    by_ship = {g["shipment_id"]: g for g in fuel}
    assert by_ship["S1"]["fuel_surcharge"] == pytest.approx(10.26)
    assert by_ship["S2"]["fuel_surcharge"] == pytest.approx(30.78)
    # L3 closed: both shipments go A > B > C (two legs each, seq 1 and 2)
    closed = [g for g in legs if g["scenario"] == "L3_closed"]
    assert sorted((g["shipment_id"], g["seq"], g["lane_id"]) for g in closed) == [
        ("S1", 1, "L1"), ("S1", 2, "L2"), ("S2", 1, "L1"), ("S2", 2, "L2")]
    # per shipment: total_cost = subtotal + uplift; the subtotal is its legs' leg_cost
    _, ships = _table(wb["Scenario shipments"])
    for s in ships:
        if s["status"] != "routed":
            continue
        mine = [g["leg_cost"] for g in legs
                if (g["scenario"], g["shipment_id"]) == (s["scenario"], s["shipment_id"])]
        assert s["subtotal"] == pytest.approx(sum(mine), abs=0.005)
        assert s["total_cost"] == pytest.approx(s["subtotal"] + s["min_charge_uplift"], abs=0.005)
    # against the base case (hand-worked in tests/test_finance_sheets.py, with L1's toll of 50):
    # with L3 closed S1 goes A > B > C for 19.00 more, S2 (three trucks) for 57.00 more
    per = {(s["scenario"], s["shipment_id"]): s for s in ships}
    assert per[("L3_closed", "S1")]["delta_vs_base"] == pytest.approx(19.00)
    assert per[("L3_closed", "S2")]["delta_vs_base"] == pytest.approx(57.00)
    assert per[("L3_closed", "S1")]["route_vs_base"] == "changed"
    assert per[("fuel_up", "S1")]["delta_vs_base"] == pytest.approx(10.26)
    assert per[("fuel_up", "S2")]["route_vs_base"] == "same"
    # the comparison's scenario rows are formulas (not pasted numbers) over those two sheets
    formulas = openpyxl.load_workbook(out)["Scenario comparison"]
    head = [c.value for c in formulas[3]]
    for row in formulas.iter_rows(min_row=5, max_row=6):
        assert row[0].value in ("fuel_up", "L3_closed")
        for name in ("km_cost", "fuel_surcharge", "total_cost", "min_charge_uplift", "routed"):
            cell = row[head.index(name)].value
            assert isinstance(cell, str) and cell.startswith("=") and "Scenario " in cell, (name, cell)


def test_scenario_totals_on_the_sheet_equal_the_pipelines(tmp_path):
    # the bundled example has two scenarios; its sheet totals must be the pipeline's own results
    src = tmp_path / "example.xlsx"
    write_example(str(src))
    model, problems, _ = pipeline.load(str(src))
    costed = pipeline.run(model)
    assert len(costed.scenarios) >= 2
    out = tmp_path / "o.xlsx"
    from costing.cli import main

    assert main(["run", str(src), "-o", str(out), "--quiet"]) == 0
    wb = openpyxl.load_workbook(out, data_only=True)
    totals = _totals_block(wb["Scenario comparison"])
    _, ships = _table(wb["Scenario shipments"])
    _, legs = _table(wb["Scenario legs"])
    for run in costed.scenarios:
        name = run.scenario.name
        routed = [r for r in run.results if r.status == "routed"]
        row = totals[name]
        assert row["routed"] == len(routed)
        assert row["total_cost"] == pytest.approx(sum(r.total_cost for r in routed), abs=0.005)
        assert row["km_cost"] == pytest.approx(sum(g.km_cost for r in routed for g in r.legs), abs=0.005)
        assert row["fuel_surcharge"] == pytest.approx(sum(g.fuel_surcharge for r in routed for g in r.legs),
                                                      abs=0.005)
        assert row["min_charge_uplift"] == pytest.approx(sum(r.min_charge_uplift for r in routed), abs=0.005)
        mine = {s["shipment_id"]: s for s in ships if s["scenario"] == name}
        assert set(mine) == {r.shipment.shipment_id for r in run.results}
        for r in routed:
            assert mine[r.shipment.shipment_id]["total_cost"] == pytest.approx(r.total_cost, abs=0.005)
        assert sum(1 for g in legs if g["scenario"] == name) == sum(len(r.legs) for r in routed)


@pytest.mark.needs_soffice
def test_libreoffice_recalculates_the_scenario_sheets_to_the_cached_values(cli, make_input, tmp_path):
    # LibreOffice Calc is the outside reference: every formula recalculated equals its cached value
    out = tmp_path / "o.xlsx"
    assert cli("run", make_input(_scenario_data()), "-o", str(out))[0] == 0
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(out), str(tmp_path / "recalc"))
    assert not mismatches, mismatches[:10]
    fresh = openpyxl.load_workbook(tmp_path / "recalc" / "o.xlsx", data_only=True)
    totals = _totals_block(fresh["Scenario comparison"])
    # recalculated from the legs: the hand-worked fuel_up surcharge, 10.26 + 30.78 = 41.04
    assert totals["fuel_up"]["fuel_surcharge"] == pytest.approx(41.04, abs=0.005)
    assert totals["L3_closed"]["delta_vs_base"] == pytest.approx(76.00, abs=0.005)
    formulas = openpyxl.load_workbook(out)
    scenario_formulas = sum(1 for name in ("Scenario comparison", "Scenario shipments", "Scenario legs")
                            for row in formulas[name].iter_rows() for c in row if c.data_type == "f")
    assert scenario_formulas > 50 and checked > scenario_formulas


def test_a_scenario_that_routes_nothing_and_streamed_output(cli, make_input, tmp_path, monkeypatch):
    # every lane closed in one scenario: no scenario legs at all for it; the sums are 0 and the
    # other scenario is unaffected. Written streamed (rows to disk as they come), as large runs are.
    import costing.sheets.legs as legs

    monkeypatch.setattr(legs, "STREAMING_LEGS", 0)
    data = _scenario_data()
    data["Scenarios"] += [{"scenario": "all_closed", "sheet": "Lanes", "key": k, "column": "open",
                           "change": "=no"} for k in ("L1", "L2", "L3")]
    out = tmp_path / "o.xlsx"
    code, _, err = cli("run", make_input(data), "-o", str(out))
    assert code == 0, err
    wb = openpyxl.load_workbook(out, data_only=True)
    totals = _totals_block(wb["Scenario comparison"])
    assert totals["all_closed"]["routed"] == 0 and totals["all_closed"]["total_cost"] == 0
    assert totals["fuel_up"]["fuel_surcharge"] == pytest.approx(41.04)  # hand-worked above
    _, legs_rows = _table(wb["Scenario legs"])
    assert not [g for g in legs_rows if g["scenario"] == "all_closed"]
    _, ships = _table(wb["Scenario shipments"])
    assert {s["status"] for s in ships if s["scenario"] == "all_closed"} == {"no_route"}
