"""Warnings at the edges: a flood of one kind is summarised on stderr (the Problems sheet keeps
every one); ids with spaces around them or differing only in case are reported with both cells.
The data is invented test data; expected counts follow from how it is built."""

from __future__ import annotations

import re

import openpyxl

from tests.conftest import base_data


def _problems_sheet(path: str) -> list[tuple]:
    wb = openpyxl.load_workbook(path, read_only=True)
    try:
        return [r for r in wb["Problems"].iter_rows(min_row=2, values_only=True) if r[0]]
    finally:
        wb.close()


def test_flood_of_one_warning_is_summarised(cli, make_input, tmp_path):
    d = base_data()
    # 40 shipments of 30 t on a 24 t truck: each is split over 2 vehicles, each a warning
    d["Shipments"] += [{"shipment_id": f"H{k:03d}", "origin": "A", "destination": "C", "weight_t": 30}
                       for k in range(40)]
    out = str(tmp_path / "costed.xlsx")
    code, _stdout, stderr = cli("run", make_input(d), "-o", out)
    assert code == 0, stderr
    split = [ln for ln in stderr.splitlines() if "split over" in ln]
    # S2 (50 t) is split as well: 41 of one kind; 3 in full, then one summary line
    assert len(split) == 3, stderr
    summary = [ln for ln in stderr.splitlines() if "more warnings like the one above" in ln]
    assert len(summary) == 1, stderr
    assert "38 more warnings like the one above (41 in all)" in summary[0], summary
    assert "full list on the Problems sheet" in summary[0]
    cells = re.search(r"at ((?:Shipments!D\d+, ){2}Shipments!D\d+) and 35 more", summary[0])
    assert cells, summary[0]
    rows = _problems_sheet(out)
    assert sum("split over" in str(r[3]) for r in rows) == 41  # every one kept on the sheet
    assert len(stderr.splitlines()) < 15, stderr


def test_few_warnings_are_all_printed(cli, make_input, tmp_path):
    d = base_data()
    d["Shipments"] += [{"shipment_id": f"H{k}", "origin": "A", "destination": "C", "weight_t": 30}
                       for k in range(5)]
    code, _o, stderr = cli("run", make_input(d), "-o", str(tmp_path / "c.xlsx"))
    assert code == 0
    assert sum("split over" in ln for ln in stderr.splitlines()) == 6
    assert "more warnings like" not in stderr


def test_flood_of_errors_points_to_check(cli, make_input, tmp_path):
    d = base_data()
    d["Shipments"] += [{"shipment_id": f"N{k}", "origin": "A", "destination": "C", "weight_t": -1}
                       for k in range(25)]
    inp = make_input(d)
    code, _o, stderr = cli("run", inp, "-o", str(tmp_path / "c.xlsx"))
    assert code == 1
    assert sum("weight_t is negative" in ln for ln in stderr.splitlines()) == 3, stderr
    assert "22 more errors like the one above (25 in all)" in stderr
    assert f"full list: `costing check {inp}`" in stderr
    # `costing check` lists every one
    code, stdout, _e = cli("check", inp)
    assert sum("negative" in ln for ln in stdout.splitlines()) == 25


def test_spaces_around_ids_are_stripped_with_a_warning(cli, make_input, tmp_path):
    d = base_data()
    d["Shipments"][0]["origin"] = "A "
    d["Depots"][2]["depot_id"] = " C"
    code, stdout, _e = cli("check", make_input(d))
    assert code == 0, stdout
    assert "warning: Shipments!B2: origin 'A ' has spaces before or after it; read as 'A'" in stdout
    assert "warning: Depots!A4: depot_id ' C' has spaces before or after it; read as 'C'" in stdout


def test_shipment_ids_differing_in_case_are_a_warning(cli, make_input, tmp_path):
    d = base_data()
    d["Shipments"].append({"shipment_id": "s1", "origin": "A", "destination": "B", "weight_t": 3})
    code, stdout, _e = cli("check", make_input(d))
    assert code == 0, stdout
    assert ("warning: Shipments!A5: shipment 's1' differs from shipment 'S1' (A2) only in upper/lower "
            "case") in stdout


def test_vehicles_differing_in_case_are_a_warning(cli, make_input, tmp_path):
    d = base_data()
    d["Rates"].append({"vehicle": "Truck", "mode": "rail", "per_km": 0.8, "per_hour": 20,
                       "payload_t": 60})
    code, stdout, _e = cli("check", make_input(d))
    assert code == 0, stdout
    assert ("warning: Rates!A3: vehicle 'Truck' differs from vehicle 'truck' (A2) only in upper/lower "
            "case") in stdout
