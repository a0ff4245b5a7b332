"""The Parquet set beside a summary workbook (costing run --parquet; automatic past the row limit).

Oracles: (1) the full costed workbook of the same input and the same run (`costing run` without
--parquet), read back with openpyxl (each formula's cached value): the Parquet tables, read back
with pyarrow, hold its rows column for column, numbers to the cent, the scenario tables (Scenario
shipments, Scenario vehicle runs, Scenario legs over all its sheets, Scenario bridge shipments)
included; the Scenario comparison and Scenario bridge sheets the summary workbook keeps show the
full workbook's values cell for cell; (2) pandas' own groupby and sum over the Parquet rows (a
general-purpose reference library): each shipment's legs add up to its Summary subtotal and the
shipments to the workbook's TOTAL row, each scenario's shipments to its Scenario comparison
total, each bridge step's column to its amount, to the cent; (3) LibreOffice Calc recalculating
the summary workbook: the formulas it keeps give the values cached beside them.
Inputs: the invented Hollowmere example (costing.example, two scenarios), and the same with four
more scenarios (six) and a small legs sheet so Legs and Scenario legs continue over several
sheets. SOURCE_DATE_EPOCH is fixed."""

from __future__ import annotations

import datetime as _dt
import os
import sys

import openpyxl
import pytest

from costing.contract import outputs as out
from costing.example import write_example

pd = pytest.importorskip("pandas")
pq = pytest.importorskip("pyarrow.parquet",
                         reason="pyarrow not installed: pip install -e '.[test]' (in the test extras)")

CENT = 0.005 + 1e-9  # "to the cent": money is rounded to 2 decimals (EUR, ISO 4217 minor unit 2)


@pytest.fixture(autouse=True)
def _fixed_epoch(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")


def _sheet_rows(wb, names: list[str], stop_at_total: bool = False) -> tuple[list, list]:
    """Header and data rows of the sheets `names` (Legs, Legs 2, ...), one after the other."""
    header, rows = None, []
    for name in names:
        ws = wb[name]
        it = ws.iter_rows(values_only=True)
        head = list(next(it))
        assert header is None or head == header
        header = head
        for row in it:
            if stop_at_total and row[0] == "TOTAL":
                break
            rows.append(list(row))
    return header, rows


def _same(a, b) -> bool:
    a, b = (x.date() if isinstance(x, _dt.datetime) else x for x in (a, b))
    if isinstance(b, (int, float)) and not isinstance(b, bool) and b == b:
        return isinstance(a, (int, float)) and abs(a - b) <= CENT
    return a == b


def _parquet_rows(path: str) -> tuple[list, list]:
    # pyarrow itself, not pandas: a null stays None and an int64 column holds ints
    table = pq.read_table(path)
    columns = [table.column(i).to_pylist() for i in range(table.num_columns)]
    return table.column_names, [list(r) for r in zip(*columns)]


# the output contract's columns of the Scenario bridge shipments sheet: costing.sheets.bridge puts
# the scenario's name in a first column before the Bridge shipments columns
BRIDGE_ROW_COLUMNS = [(out.SCENARIO_KEY, 14, "text"), *out.BRIDGE_SHIPMENT_COLUMNS]
SCENARIO_FILES = {"scenario_shipments.parquet": (out.SCENARIO_SHIPMENTS, out.SCENARIO_SHIPMENT_COLUMNS),
                  "scenario_vehicle_runs.parquet": (out.SCENARIO_VEHICLE_RUNS, out.SCENARIO_RUN_COLUMNS),
                  "scenario_legs.parquet": (out.SCENARIO_LEGS, out.SCENARIO_LEG_COLUMNS),
                  "scenario_bridge_shipments.parquet": (out.SCENARIO_BRIDGE_SHIPMENTS, BRIDGE_ROW_COLUMNS)}
CONTRACT = {"summary.parquet": out.SUMMARY_COLUMNS, "legs.parquet": out.LEG_COLUMNS,
            "vehicle_runs.parquet": out.RUN_COLUMNS, "carrier_charges.parquet": out.CARRIER_COLUMNS,
            **{name: columns for name, (_sheet, columns) in SCENARIO_FILES.items()}}


def _continued(wb, base: str) -> list[str]:
    """`base` and the sheets it continues on (Legs, Legs 2, ...)."""
    return [n for n in wb.sheetnames
            if n == base or (n.startswith(base + " ") and n[len(base) + 1:].isdigit())]


def _compare(full: str, folder: str) -> dict:
    wb = openpyxl.load_workbook(full, data_only=True)
    try:
        tables = {"summary.parquet": ([out.SUMMARY], out.SUMMARY_COLUMNS, True),
                  "legs.parquet": (_continued(wb, out.LEGS), out.LEG_COLUMNS, False),
                  "vehicle_runs.parquet": ([out.VEHICLE_RUNS], out.RUN_COLUMNS, False),
                  "carrier_charges.parquet": ([out.CARRIER_CHARGES], out.CARRIER_COLUMNS, False)}
        for name, (sheet, columns) in SCENARIO_FILES.items():
            if sheet in wb.sheetnames:
                tables[name] = (_continued(wb, sheet), columns, False)
        assert sorted(os.listdir(folder)) == sorted(tables)  # every long sheet has its file, no other
        counts = {}
        for name, (sheets, contract, total) in tables.items():
            head, want = _sheet_rows(wb, sheets, total)
            cols, got = _parquet_rows(os.path.join(folder, name))
            assert cols == [c for c, _w, _k in contract] == head, name  # the output contract's names
            assert len(got) == len(want), name
            for k, (g, e) in enumerate(zip(got, want)):
                bad = [(cols[c], x, y) for c, (x, y) in enumerate(zip(g, e)) if not _same(x, y)]
                assert bad == [], (name, k + 2, bad[:5])
            counts[name] = len(got)
        return counts
    finally:
        wb.close()


def _run_both(tmp_path, cli, *extra: str, scenarios=()) -> tuple[str, str, str]:
    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    if scenarios:  # rows added to the example's Scenarios sheet
        wb = openpyxl.load_workbook(inp)
        for row in scenarios:
            wb["Scenarios"].append(list(row))
        wb.save(inp)
    full, summary = str(tmp_path / "full.xlsx"), str(tmp_path / "week.xlsx")
    assert cli("run", inp, "-o", full, "--quiet")[0] == 0
    code, _out, err = cli("run", inp, "-o", summary, "--parquet", *extra)
    assert code == 0, err
    return full, summary, str(tmp_path / "week.parquet")


def test_parquet_tables_equal_the_workbook_rows(tmp_path, cli):
    full, summary, folder = _run_both(tmp_path, cli)
    assert sorted(os.listdir(folder)) == [
        "carrier_charges.parquet", "legs.parquet", "scenario_bridge_shipments.parquet",
        "scenario_legs.parquet", "scenario_shipments.parquet", "scenario_vehicle_runs.parquet",
        "summary.parquet", "vehicle_runs.parquet"]
    assert not [n for n in os.listdir(tmp_path) if n.startswith(".costing-")]  # no part files left
    counts = _compare(full, folder)
    assert counts["summary.parquet"] == 47 and counts["legs.parquet"] > 100
    assert counts["scenario_shipments.parquet"] == 2 * 47  # the example's two scenarios
    _check_scenarios(full, summary, folder, counts, ["fuel_up_12", "blerick_rail_closed"])

    # the summary workbook: Summary TOTAL row as the full workbook's, Problems as its, Run naming the files
    a = openpyxl.load_workbook(full, data_only=True)
    b = openpyxl.load_workbook(summary, data_only=True)
    try:
        assert b.sheetnames == [out.SUMMARY, out.SCENARIO_COMPARISON, out.SCENARIO_BRIDGE, out.PROBLEMS,
                                out.RUN]
        total = next(r for r in a[out.SUMMARY].iter_rows(values_only=True) if r[0] == "TOTAL")
        row2 = next(b[out.SUMMARY].iter_rows(min_row=2, max_row=2, values_only=True))
        assert [_same(x, y) for x, y in zip(row2, total)] == [True] * len(total)
        problems = [list(wb[out.PROBLEMS].iter_rows(values_only=True)) for wb in (a, b)]
        assert problems[0] == problems[1]
        run = {r[0]: r[1] for r in b[out.RUN].iter_rows(values_only=True) if r[0]}
        for name, rows in counts.items():
            note = run[f"Parquet file: week.parquet/{name}"]
            assert note.startswith(f"{rows:,} rows")
            assert note.endswith("columns: " + ", ".join(c for c, _w, _k in CONTRACT[name]))
        assert run["difference (must be 0)"] == 0 and run["difference runs - shares (must be 0)"] == 0
        full_run = {r[0]: r[1] for r in a[out.RUN].iter_rows(values_only=True) if r[0]}
        key = "equals Summary total_cost (TOTAL row)"
        assert run[key] == full_run[key]
    finally:
        a.close()
        b.close()

    # pandas as the reference: legs add up to each shipment's subtotal, shipments to the TOTAL row
    legs = pd.read_parquet(os.path.join(folder, "legs.parquet"))
    ships = pd.read_parquet(os.path.join(folder, "summary.parquet")).set_index("shipment_id")
    by_ship = legs.groupby("shipment_id")["leg_cost"].sum().round(2)
    routed = ships[ships["legs"] > 0]
    assert (abs(by_ship.reindex(routed.index) - routed["subtotal"]) <= CENT).all()
    assert abs(ships["total_cost"].sum() - row2[out.SUM["total_cost"]]) <= CENT
    runs = pd.read_parquet(os.path.join(folder, "vehicle_runs.parquet"))
    assert abs(runs["run_cost"].sum() - legs["cost_share"].sum() - ships["empty_return_cost"].sum()) <= CENT


def _cell_values(path: str, sheet: str, data_only: bool = True) -> dict:
    wb = openpyxl.load_workbook(path, data_only=data_only)
    try:
        return {c.coordinate: c.value for row in wb[sheet].iter_rows() for c in row if c.value is not None}
    finally:
        wb.close()


def _check_scenarios(full: str, summary: str, folder: str, counts: dict, names: list[str]) -> None:
    """The scenario part of a Parquet set against the full workbook of the same run."""
    label = os.path.basename(folder)
    # the Run sheet names each scenario file with its rows and the contract's columns
    b = openpyxl.load_workbook(summary, data_only=True)
    try:
        run = {r[0]: r[1] for r in b[out.RUN].iter_rows(values_only=True) if r[0]}
    finally:
        b.close()
    for name in SCENARIO_FILES:
        note = run[f"Parquet file: {label}/{name}"]
        assert note.startswith(f"{counts[name]:,} rows")
        assert note.endswith("columns: " + ", ".join(c for c, _w, _k in CONTRACT[name]))
    kept, left_out = run["Parquet set"].split("Not written in this mode:")
    assert "Scenario" not in left_out and out.SCENARIO_COMPARISON in kept and out.SCENARIO_BRIDGE in kept

    # Scenario comparison and Scenario bridge: the full workbook's values, cell for cell; the one
    # cell added (A2) names the files the rows are in, and no formula names another sheet
    for sheet, file in ((out.SCENARIO_COMPARISON, "scenario_legs.parquet"),
                        (out.SCENARIO_BRIDGE, "scenario_bridge_shipments.parquet")):
        want, got = _cell_values(full, sheet), _cell_values(summary, sheet)
        assert "A2" not in want and f"{label}/{file}" in got.pop("A2")
        assert want.keys() == got.keys(), sheet
        bad = {k: (got[k], want[k]) for k in want if not _same(got[k], want[k])}
        assert bad == {}, sheet
        formulas = [v for v in _cell_values(summary, sheet, data_only=False).values()
                    if isinstance(v, str) and v.startswith("=")]
        assert formulas and not [f for f in formulas if "!" in f], sheet

    # pandas over the files: legs add up to each scenario shipment's subtotal, the scenario shipments
    # to the Scenario comparison totals, the bridge rows from the base TOTAL to those totals
    legs = pd.read_parquet(os.path.join(folder, "scenario_legs.parquet"))
    ships = pd.read_parquet(os.path.join(folder, "scenario_shipments.parquet"))
    bridge = pd.read_parquet(os.path.join(folder, "scenario_bridge_shipments.parquet"))
    vruns = pd.read_parquet(os.path.join(folder, "scenario_vehicle_runs.parquet"))
    for df in (legs, ships, bridge, vruns):
        assert list(dict.fromkeys(df[out.SCENARIO_KEY])) == names  # every scenario, in order
    by_ship = legs.groupby([out.SCENARIO_KEY, "shipment_id"])["leg_cost"].sum().round(2)
    own = ships[ships["legs"] > 0].set_index([out.SCENARIO_KEY, "shipment_id"])
    assert len(own) > 0 and (abs(by_ship.reindex(own.index) - own["subtotal"]) <= CENT).all()
    totals = ships.groupby(out.SCENARIO_KEY, sort=False)["total_cost"].sum()
    comparison = _cell_values(summary, out.SCENARIO_COMPARISON)
    head = {comparison[f"{c}3"]: c for c in "ABCDEFG" if f"{c}3" in comparison}
    total_col = head["total_cost"]
    table = {comparison[f"A{r}"]: comparison.get(f"{total_col}{r}") for r in range(4, 5 + len(names))}
    base_total = table.pop("base")
    assert list(table) == names
    for name in names:
        assert abs(totals[name] - table[name]) <= CENT, name
        rows = bridge[bridge[out.SCENARIO_KEY] == name]
        assert abs(rows["old_total_cost"].sum() - base_total) <= CENT, name
        assert abs(rows["new_total_cost"].sum() - table[name]) <= CENT, name
    assert (bridge["check"].abs() <= CENT).all()
    # each scenario's vehicle runs cost what its legs' shares add up to, plus its empty returns
    for name in names:
        share = legs.loc[legs[out.SCENARIO_KEY] == name, "cost_share"].sum()
        empty = ships.loc[ships[out.SCENARIO_KEY] == name, "empty_return_cost"].sum()
        assert abs(vruns.loc[vruns[out.SCENARIO_KEY] == name, "run_cost"].sum() - share - empty) <= 0.01, name


def test_several_scenarios_over_several_sheets(tmp_path, cli, monkeypatch):
    # six scenarios (the example's two and four more: tolls, a rate card's per_km (a name a SUMIFS
    # would read as a wildcard), a per_hour added, a heavier shipment); at most 100 legs a sheet, so
    # the full workbook continues Legs and Scenario legs over several sheets
    from costing.sheets import legs

    monkeypatch.setattr(legs, "LEGS_SHEET_ROWS", 100)
    more = [("tolls_up_20", "Lanes", None, "toll", "+20%"),
            ("artic*<5%", "Rates", "artic_40t", "per_km", "-5%"),
            ("van_hour_plus_3", "Rates", "van_3t5", "per_hour", "+3"),
            ("S005_heavier", "Shipments", "S005", "weight_t", "+10%")]
    full, summary, folder = _run_both(tmp_path, cli, "--quiet", scenarios=more)
    wb = openpyxl.load_workbook(full, read_only=True)
    try:
        assert len(_continued(wb, out.SCENARIO_LEGS)) >= 6 and len(_continued(wb, out.LEGS)) == 2
    finally:
        wb.close()
    counts = _compare(full, folder)
    assert counts["scenario_shipments.parquet"] == 6 * 47 and counts["scenario_legs.parquet"] > 500
    _check_scenarios(full, summary, folder, counts,
                     ["fuel_up_12", "blerick_rail_closed"] + [row[0] for row in more])


@pytest.mark.needs_soffice
def test_libreoffice_recalculates_the_summary_workbook_to_its_values(tmp_path, cli):
    # LibreOffice Calc as the outside reference: the formulas the summary workbook keeps (within
    # Scenario comparison and Scenario bridge: deltas, running totals, chart bars) recalculate to
    # the values cached beside them
    from tests.spreadsheet_app import recalc_mismatches

    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    summary = str(tmp_path / "week.xlsx")
    assert cli("run", inp, "-o", summary, "--parquet", "--quiet")[0] == 0
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(summary, str(tmp_path / "recalc"))
    assert checked > 50 and not mismatches, mismatches[:10]


def test_past_the_row_limit_the_run_switches_to_parquet(tmp_path, cli, monkeypatch):
    # the Summary sheet's limit made small: 47 shipments "do not fit"
    import costing.sheets.formats as formats

    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    monkeypatch.setattr(formats, "MAX_ROWS", 30)
    code, _out, err = cli("run", inp, "-o", str(tmp_path / "w.xlsx"))
    assert code == 0, err
    assert "47 shipments do not fit on one Summary sheet (30 rows" in err and "Parquet files in" in err
    assert sorted(os.listdir(tmp_path / "w.parquet"))[-1] == "vehicle_runs.parquet"
    wb = openpyxl.load_workbook(str(tmp_path / "w.xlsx"))
    try:
        run = {r[0]: r[1] for r in wb[out.RUN].iter_rows(values_only=True) if r[0]}
        assert "47 shipments do not fit" in run["Parquet set"]
    finally:
        wb.close()


def test_past_the_row_limit_of_the_scenario_rows_the_run_switches_to_parquet(tmp_path, cli, monkeypatch):
    # 47 shipments fit on a Summary sheet of 60 rows, their two scenarios' 94 rows do not fit on
    # one Scenario shipments sheet: the run writes a Parquet set, the scenario rows in it
    import costing.sheets.formats as formats

    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    monkeypatch.setattr(formats, "MAX_ROWS", 60)
    code, _out, err = cli("run", inp, "-o", str(tmp_path / "w.xlsx"))
    assert code == 0, err
    assert "2 scenarios of 47 shipments do not fit on one Scenario shipments sheet (60 rows" in err
    assert set(SCENARIO_FILES) <= set(os.listdir(tmp_path / "w.parquet"))
    assert len(pq.read_table(tmp_path / "w.parquet" / "scenario_shipments.parquet")) == 94
    wb = openpyxl.load_workbook(str(tmp_path / "w.xlsx"))
    try:
        run = {r[0]: r[1] for r in wb[out.RUN].iter_rows(values_only=True) if r[0]}
        assert "2 scenarios of 47 shipments do not fit" in run["Parquet set"]
    finally:
        wb.close()


def test_parquet_refusals_write_nothing(tmp_path, cli, monkeypatch):
    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    os.mkdir(tmp_path / "o.parquet")
    (tmp_path / "o.parquet" / "notes.txt").write_text("mine")
    code, _out, err = cli("run", inp, "-o", str(tmp_path / "o.xlsx"), "--parquet")
    assert code == 2 and "exists; add --overwrite" in err
    code, _out, err = cli("run", inp, "-o", str(tmp_path / "o.xlsx"), "--parquet", "--overwrite")
    assert code == 2 and "notes.txt" in err  # a folder holding other files is never removed
    assert not os.path.exists(tmp_path / "o.xlsx") and os.listdir(tmp_path / "o.parquet") == ["notes.txt"]
    monkeypatch.setitem(sys.modules, "pyarrow.parquet", None)  # import fails as if not installed
    code, _out, err = cli("run", inp, "-o", str(tmp_path / "p.xlsx"), "--parquet")
    assert code == 2 and "pip install" in err and "pyarrow" in err
    assert not os.path.exists(tmp_path / "p.xlsx") and not os.path.exists(tmp_path / "p.parquet")


def test_an_earlier_set_is_replaced_with_overwrite(tmp_path, cli):
    full, summary, folder = _run_both(tmp_path, cli)
    first = os.path.getmtime(os.path.join(folder, "legs.parquet"))
    inp = str(tmp_path / "in.xlsx")
    code, _out, err = cli("run", inp, "-o", summary, "--parquet", "--overwrite", "--quiet")
    assert code == 0, err
    assert os.path.getmtime(os.path.join(folder, "legs.parquet")) >= first
    _compare(full, folder)
