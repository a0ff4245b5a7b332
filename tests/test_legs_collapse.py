"""Cost components that are 0 on every leg (and the rates that only feed them) are grouped and
hidden on the Legs sheet, never removed: every cell is still there with its formula, and a
column with any non-zero leg stays visible. Checked by reading the written workbook back with
openpyxl (an independent reader), cell by cell, against the rule itself."""

from __future__ import annotations

import openpyxl
import pytest

from costing.contract.outputs import LEG_COLUMNS
from costing.sheets import rowxml
from costing.sheets.legs import COLLAPSIBLE
from tests.conftest import base_data


def _legs(path: str):
    wb = openpyxl.load_workbook(path, data_only=True)
    formulas = openpyxl.load_workbook(path)
    ws, wf = wb["Legs"], formulas["Legs"]
    header = [c.value for c in ws[1]]
    hidden = {header[openpyxl.utils.column_index_from_string(k) - 1]
              for k, d in ws.column_dimensions.items() if d.hidden and d.outlineLevel == 1}
    # a <col> element may span several columns (min..max)
    for _k, d in ws.column_dimensions.items():
        if d.hidden and d.min and d.max:
            hidden |= {header[i - 1] for i in range(d.min, d.max + 1)}
    rows = [dict(zip(header, (c.value for c in row))) for row in ws.iter_rows(min_row=2)]
    return header, hidden, rows, wf


@pytest.mark.parametrize("fast", [True, False])
def test_zero_cost_columns_are_collapsed_not_removed(cli, make_input, tmp_path, monkeypatch, fast):
    monkeypatch.setattr(rowxml, "FAST_ROWS", fast)  # the zeros tracked while writing, or found after
    data = base_data()
    data["Lanes"][0]["toll"] = 0  # no toll anywhere: toll_cost is 0 on every leg
    out = str(tmp_path / "out.xlsx")
    code, _o, err = cli("run", make_input(data), "-o", out)
    assert code == 0, err
    header, hidden, rows, wf = _legs(out)
    assert header == [name for name, _w, _k in LEG_COLUMNS]  # nothing left out
    assert rows
    for cost, rates in COLLAPSIBLE.items():
        all_zero = all(not r[cost] for r in rows)
        assert (cost in hidden) == all_zero, cost
        for rate in rates:
            assert (rate in hidden) == (all_zero and all(not r[rate] for r in rows)), rate
    assert {"toll_cost", "toll", "fixed_cost", "fuel_surcharge"} <= hidden
    assert "trip_cost" not in hidden and "km_cost" not in hidden  # 40 per trip, 1.1 per km
    # the hidden columns keep their formulas
    col = header.index("toll_cost") + 1
    assert str(wf.cell(row=2, column=col).value).startswith("=ROUND(")


def test_a_component_used_once_stays_visible(cli, make_input, tmp_path):
    out = str(tmp_path / "out.xlsx")
    data = base_data()
    data["Shipments"] = [{"shipment_id": "S1", "origin": "A", "destination": "B", "weight_t": 10}]
    code, _o, err = cli("run", make_input(data), "-o", out)  # A-B is lane L1, toll 5
    assert code == 0, err
    _header, hidden, rows, _wf = _legs(out)
    assert any(r["toll_cost"] for r in rows)
    assert "toll_cost" not in hidden and "toll" not in hidden
