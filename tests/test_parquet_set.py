"""The Parquet set beside a summary workbook (costing run --parquet; automatic past the row limit).

Oracles: (1) the full costed workbook of the same input and the same run (`costing run` without
--parquet), read back with openpyxl (each formula's cached value): the Parquet tables, read back
with pandas (pyarrow), hold its rows column for column, numbers to the cent; (2) pandas' own
groupby and sum over the Parquet rows (a general-purpose reference library): each shipment's legs
add up to its Summary subtotal and the shipments to the workbook's TOTAL row, to the cent.
Inputs: the invented Hollowmere example (costing.example). SOURCE_DATE_EPOCH is fixed."""

from __future__ import annotations

import datetime as _dt
import os
import sys

import openpyxl
import pytest

from costing.contract import outputs as out
from costing.example import write_example

pd = pytest.importorskip("pandas")
pytest.importorskip("pyarrow", reason="pyarrow not installed: pip install -e '.[test]' (in the test extras)")

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
    df = pd.read_parquet(path)
    rows = [[None if (v is None or (isinstance(v, float) and v != v)) else v for v in r]
            for r in df.astype(object).itertuples(index=False, name=None)]
    return list(df.columns), rows


def _compare(full: str, folder: str) -> dict:
    wb = openpyxl.load_workbook(full, data_only=True)
    try:
        legs_sheets = [n for n in wb.sheetnames if n == out.LEGS or n.startswith(out.LEGS + " ")]
        tables = {"summary.parquet": ([out.SUMMARY], out.SUMMARY_COLUMNS, True),
                  "legs.parquet": (legs_sheets, out.LEG_COLUMNS, False),
                  "vehicle_runs.parquet": ([out.VEHICLE_RUNS], out.RUN_COLUMNS, False),
                  "carrier_charges.parquet": ([out.CARRIER_CHARGES], out.CARRIER_COLUMNS, False)}
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


def _run_both(tmp_path, cli, *extra: str) -> tuple[str, str, str]:
    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    full, summary = str(tmp_path / "full.xlsx"), str(tmp_path / "week.xlsx")
    assert cli("run", inp, "-o", full, "--quiet")[0] == 0
    code, _out, err = cli("run", inp, "-o", summary, "--parquet", *extra)
    assert code == 0, err
    return full, summary, str(tmp_path / "week.parquet")


def test_parquet_tables_equal_the_workbook_rows(tmp_path, cli):
    full, summary, folder = _run_both(tmp_path, cli)
    assert sorted(os.listdir(folder)) == ["carrier_charges.parquet", "legs.parquet", "summary.parquet",
                                          "vehicle_runs.parquet"]
    assert not [n for n in os.listdir(tmp_path) if n.startswith(".costing-")]  # no part files left
    counts = _compare(full, folder)
    assert counts["summary.parquet"] == 47 and counts["legs.parquet"] > 100

    # the summary workbook: Summary TOTAL row as the full workbook's, Problems as its, Run naming the files
    a = openpyxl.load_workbook(full, data_only=True)
    b = openpyxl.load_workbook(summary, data_only=True)
    try:
        assert b.sheetnames == [out.SUMMARY, out.PROBLEMS, out.RUN]
        total = next(r for r in a[out.SUMMARY].iter_rows(values_only=True) if r[0] == "TOTAL")
        row2 = next(b[out.SUMMARY].iter_rows(min_row=2, max_row=2, values_only=True))
        assert [_same(x, y) for x, y in zip(row2, total)] == [True] * len(total)
        problems = [list(wb[out.PROBLEMS].iter_rows(values_only=True)) for wb in (a, b)]
        assert problems[0] == problems[1]
        run = {r[0]: r[1] for r in b[out.RUN].iter_rows(values_only=True) if r[0]}
        for name, rows in counts.items():
            note = run[f"Parquet file: week.parquet/{name}"]
            assert note.startswith(f"{rows:,} rows")
            sheet = {"summary.parquet": out.SUMMARY_COLUMNS, "legs.parquet": out.LEG_COLUMNS,
                     "vehicle_runs.parquet": out.RUN_COLUMNS,
                     "carrier_charges.parquet": out.CARRIER_COLUMNS}[name]
            assert note.endswith("columns: " + ", ".join(c for c, _w, _k in sheet))
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
