"""The costed workbook holds the sheets and the header rows the output contract names, read back
from the file with openpyxl (the writer's own lists are not consulted for the check)."""

from __future__ import annotations

import re

import openpyxl

from costing.cli import main
from costing.contract import outputs


def test_demo_sheets_and_headers_follow_the_output_contract(tmp_path):
    out = tmp_path / "demo.xlsx"
    assert main(["demo", "-o", str(out), "--quiet"]) == 0
    wb = openpyxl.load_workbook(out, read_only=True)
    names = wb.sheetnames
    # every sheet is one the contract names (Legs may continue on "Legs 2", ..., Scenario legs on
    # "Scenario legs 2", ...)
    assert all(n in outputs.SHEETS or re.fullmatch(r"(Scenario legs|Legs) \d+", n) for n in names), names
    order = [outputs.SHEETS.index(n) for n in names if n in outputs.SHEETS]
    assert order == sorted(order)  # in the contract's order
    header = [c.value for c in next(wb["Legs"].iter_rows(min_row=1, max_row=1))]
    assert header == [name for name, _w, _k in outputs.LEG_COLUMNS]
    header = [c.value for c in next(wb["Summary"].iter_rows(min_row=1, max_row=1))]
    assert header == [name for name, _w, _k in outputs.SUMMARY_COLUMNS]
    # the demo has scenarios: their legs keyed by scenario, then the Legs columns; their shipments
    header = [c.value for c in next(wb["Scenario legs"].iter_rows(min_row=1, max_row=1))]
    assert header == ["scenario"] + [name for name, _w, _k in outputs.LEG_COLUMNS]
    assert header == [name for name, _w, _k in outputs.SCENARIO_LEG_COLUMNS]
    header = [c.value for c in next(wb["Scenario shipments"].iter_rows(min_row=1, max_row=1))]
    assert header == [name for name, _w, _k in outputs.SCENARIO_SHIPMENT_COLUMNS]
    header = [c.value for c in next(wb["Scenario comparison"].iter_rows(min_row=3, max_row=3))]
    assert header[:len(outputs.SCENARIO_TOTAL_COLUMNS)] == outputs.SCENARIO_TOTAL_COLUMNS
