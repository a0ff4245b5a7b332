"""Comparing two costed workbooks. The two runs come from the command line on invented inputs
(a rate rises, a lane closes, shipments come and go, one loses its route); the expected figures
are read back from the two Summary sheets with openpyxl here, independent of costing.compare.diff."""

from __future__ import annotations

import dataclasses
import re
import zipfile

import openpyxl
import pytest
from openpyxl.utils import get_column_letter

from costing.cli import main
from costing.compare.diff import (
    ADDED,
    COST_CHANGED,
    KINDS,
    REMOVED,
    ROUTE_CHANGED,
    STATUS_CHANGED,
    UNCHANGED,
    CompareError,
    compare,
    read_costed,
    write_comparison,
)
from costing.workbook.template import write_template
from tests.conftest import base_data
from tests.spreadsheet_app import recalc_mismatches

NASTY_ID = "=1+1"

EXPECTED_KINDS = {
    "S1": ROUTE_CHANGED,  # L3 (A-C direct) closes: A > C becomes A > B > C
    "S2": ROUTE_CHANGED,
    "S3": UNCHANGED,  # no_route in both runs (L4 closed in both)
    "S4": COST_CHANGED,  # per_km rises; same route, two vehicles, above the min charge
    "S5": UNCHANGED,  # per_km rises but the min charge still applies
    NASTY_ID: UNCHANGED,  # min charge in both; the id is text that looks like a formula
    "S6": STATUS_CHANGED,  # L5 (A-E) closes: routed becomes no_route
    "S7": REMOVED,
    "S8": ADDED,
}


def old_data() -> dict:
    d = base_data()
    # each shipment priced alone, so each expected kind above follows from its own route
    # (sharing vehicles would move cost between shipments; tests/test_week_plan.py covers it)
    d.setdefault("Settings", []).append({"setting": "consolidate", "value": "no"})
    # a dearer L1 keeps A > C direct the cheaper route while L3 is open (a truck driving through
    # hub B pays no handling there, so with the base toll A > B > C would already win)
    d["Lanes"][0]["toll"] = 50
    d["Depots"].append({"depot_id": "E", "name": "Echo", "latitude": 52.2, "longitude": 4.6})
    d["Lanes"].append({"lane_id": "L5", "from_depot": "A", "to_depot": "E", "mode": "road",
                       "distance_km": 60, "drive_hours": 0.9})
    d["Shipments"] += [
        {"shipment_id": "S4", "origin": "A", "destination": "B", "weight_t": 30},
        {"shipment_id": "S5", "origin": "B", "destination": "C", "weight_t": 4},
        {"shipment_id": NASTY_ID, "origin": "A", "destination": "B", "weight_t": 1,
         "customer": '=HYPERLINK("http://example.invalid","x")'},
        {"shipment_id": "S6", "origin": "A", "destination": "E", "weight_t": 6},
        {"shipment_id": "S7", "origin": "B", "destination": "C", "weight_t": 2},
    ]
    return d


def new_data() -> dict:
    d = old_data()
    d["Rates"][0]["per_km"] = 1.25
    for lane in d["Lanes"]:
        if lane["lane_id"] in ("L3", "L5"):
            lane["open"] = False
    d["Shipments"] = [s for s in d["Shipments"] if s["shipment_id"] != "S7"]
    d["Shipments"].append({"shipment_id": "S8", "origin": "A", "destination": "B", "weight_t": 20})
    return d


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """(old output path, new output path), each written by `costing run` once for the module
    (the same steps as the make_input and cli fixtures, at module scope to keep the tests fast)."""
    folder = tmp_path_factory.mktemp("runs")
    paths = []
    for name, data in (("old", old_data()), ("new", new_data())):
        inp, out = str(folder / f"{name}-input.xlsx"), str(folder / f"{name}-costed.xlsx")
        write_template(inp, data)
        assert main(["run", inp, "-o", out, "--quiet"]) == 0
        paths.append(out)
    return tuple(paths)


def summary_of(path):
    """{shipment_id: {header: value}} and the TOTAL row, read with openpyxl by header name."""
    ws = openpyxl.load_workbook(path, data_only=True)["Summary"]
    rows = list(ws.iter_rows(values_only=True))
    header = rows[0]
    records = [dict(zip(header, r)) for r in rows[1:] if r[0] is not None]
    total = [r for r in records if r["shipment_id"] == "TOTAL" and r["status"] is None]
    assert len(total) == 1
    return {r["shipment_id"]: r for r in records if r is not total[0]}, total[0]


def cents(x):
    return 0 if x is None else round(x * 100)


def test_each_kind_is_reported_with_the_right_numbers(runs):
    old_path, new_path = runs
    old, old_total = summary_of(old_path)
    new, new_total = summary_of(new_path)
    cmp = compare(read_costed(old_path), read_costed(new_path))

    assert {c.shipment_id: c.kind for c in cmp.changes} == EXPECTED_KINDS
    assert cmp.counts == {k: list(EXPECTED_KINDS.values()).count(k) for k in KINDS}
    assert cmp.currency == "EUR" and cmp.hours_column == "elapsed_hours"
    for c in cmp.changes:
        o, n = old.get(c.shipment_id), new.get(c.shipment_id)
        assert c.old_status == (o["status"] if o else None)
        assert c.new_status == (n["status"] if n else None)
        o_cost = o["total_cost"] if o else None
        n_cost = n["total_cost"] if n else None
        assert cents(c.old_cost) == cents(o_cost) and cents(c.new_cost) == cents(n_cost)
        assert cents(c.delta) == cents(n_cost) - cents(o_cost), c.shipment_id
        if o_cost and n_cost is not None:
            assert c.delta_pct == pytest.approx((cents(n_cost) - cents(o_cost)) / cents(o_cost) * 100)
        else:
            assert c.delta_pct is None
        assert c.old_route == (o["route"] if o else None) and c.new_route == (n["route"] if n else None)
        assert c.old_vehicle == ((o["vehicle"] or None) if o else None)
        assert c.new_vehicle == ((n["vehicle"] or None) if n else None)
        assert c.old_hours == (o["elapsed_hours"] if o else None)
        assert c.new_hours == (n["elapsed_hours"] if n else None)
        assert c.old_co2e == (o["co2e_kg"] if o else None) and c.new_co2e == (n["co2e_kg"] if n else None)

    # the story behind each kind, in numbers read from the sheets
    s1 = cmp.change("S1")
    assert (s1.old_route, s1.new_route) == ("A > C", "A > B > C") and "route" in s1.changed
    s4 = cmp.change("S4")
    assert s4.old_route == s4.new_route and cents(s4.delta) > 0 and s4.changed == ("cost",)
    s5 = cmp.change("S5")
    assert s5.delta == 0 and cents(s5.old_cost) == cents(s5.new_cost) == 30000  # the min charge
    s6 = cmp.change("S6")
    assert (s6.old_status, s6.new_status) == ("routed", "no_route")
    assert cents(s6.delta) == -cents(old["S6"]["total_cost"])
    assert cmp.change("S7").new_status is None and cents(cmp.change("S7").delta) < 0
    assert cmp.change("S8").old_status is None and cents(cmp.change("S8").delta) > 0
    assert cmp.change("S3").delta == 0 and cmp.change("S3").old_cost is None

    # totals tie to the TOTAL rows, and the per-shipment deltas add up to the total delta
    assert cents(cmp.old_total) == cents(old_total["total_cost"])
    assert cents(cmp.new_total) == cents(new_total["total_cost"])
    assert cents(cmp.total_delta) == cents(new_total["total_cost"]) - cents(old_total["total_cost"])
    assert sum(cents(c.delta) for c in cmp.changes) == cents(cmp.total_delta)
    assert cmp.warnings == []


def test_changes_are_sorted_status_first_then_largest_delta(runs):
    cmp = compare(read_costed(runs[0]), read_costed(runs[1]))
    kinds = [c.kind for c in cmp.changes]
    assert kinds[0] == STATUS_CHANGED
    moved = [c for c in cmp.changes[1:] if c.delta != 0]
    still = [c for c in cmp.changes[1:] if c.delta == 0]
    assert cmp.changes[1:] == moved + still
    assert [abs(c.delta) for c in moved] == sorted((abs(c.delta) for c in moved), reverse=True)
    # ties keep the sheet order: removed S7 (old run) before added S8
    assert [c.shipment_id for c in moved[:2]] == ["S7", "S8"]


FORMULA_TOKENS = re.compile(r'ROUND|SUM|COUNTIF|Changes!|\$?[A-Z]{1,3}\$?\d+|\d+(\.\d+)?|[-+*/(),:=]'
                            r'|&quot;[a-z_]+&quot;|"[a-z_]+"')


def test_written_workbook_caches_the_deltas_in_live_formulas(runs, tmp_path):
    old_path, new_path = runs
    old, old_total = summary_of(old_path)
    new, new_total = summary_of(new_path)
    cmp = compare(read_costed(old_path), read_costed(new_path))
    out = tmp_path / "comparison.xlsx"
    write_comparison(str(out), cmp)

    formulas = openpyxl.load_workbook(out)
    cached = openpyxl.load_workbook(out, data_only=True)
    assert cached.sheetnames == ["Changes", "Overview"]
    ws, wsf = cached["Changes"], formulas["Changes"]
    header = [c.value for c in ws[1]]
    col = {h: i for i, h in enumerate(header)}
    letter = {h: openpyxl.utils.get_column_letter(i + 1) for h, i in col.items()}
    rows = list(ws.iter_rows(min_row=2, values_only=True))
    assert [r[col["shipment_id"]] for r in rows] == [c.shipment_id for c in cmp.changes]
    for x, r in enumerate(rows, start=2):
        sid = r[col["shipment_id"]]
        o, n = old.get(sid), new.get(sid)
        want = cents(n["total_cost"] if n else None) - cents(o["total_cost"] if o else None)
        f = wsf[f"{letter['cost_delta']}{x}"].value
        assert f == f"=ROUND({letter['new_total_cost']}{x}-{letter['old_total_cost']}{x},2)"
        assert cents(r[col["cost_delta"]]) == want
        assert r[col["change"]] == EXPECTED_KINDS[sid]
        if o and n and o["total_cost"] and n["total_cost"] is not None:
            assert wsf[f"{letter['cost_delta_pct']}{x}"].value.startswith("=")
            assert r[col["cost_delta_pct"]] == pytest.approx(want / cents(o["total_cost"]))
        if o and n and o["co2e_kg"] is not None and n["co2e_kg"] is not None:
            assert r[col["co2e_kg_delta"]] == pytest.approx(n["co2e_kg"] - o["co2e_kg"])
            assert wsf[f"{letter['co2e_kg_delta']}{x}"].value.startswith("=")
    # the look of the sheet: frozen header, filter, currency format on money columns
    assert wsf.freeze_panes == "B2"
    assert wsf.auto_filter.ref == f"A1:{letter['destination']}{len(rows) + 1}"
    assert "EUR" in wsf[f"{letter['old_total_cost']}2"].number_format
    assert "EUR" in wsf[f"{letter['cost_delta']}2"].number_format
    assert wsf.column_dimensions[letter["new_route"]].width >= len("A > B > C")

    ov = {r[0]: r[1:] for r in cached["Overview"].iter_rows(values_only=True) if r[0]}
    ovf = {r[0].value: r for r in formulas["Overview"].iter_rows() if r[0].value}
    assert ov["costed workbook"][:2] == ("old-costed.xlsx", "new-costed.xlsx")
    assert ov["input file"][:2] == ("old-input.xlsx", "new-input.xlsx")
    assert all(len(h) == 64 for h in ov["input SHA-256"][:2] + ov["costed workbook SHA-256"][:2])
    old_t, new_t, delta_t = ov["total_cost"]
    assert cents(old_t) == cents(old_total["total_cost"]) and cents(new_t) == cents(new_total["total_cost"])
    assert cents(delta_t) == cents(new_total["total_cost"]) - cents(old_total["total_cost"])
    assert all(str(c.value).startswith("=") for c in ovf["total_cost"][1:4])
    assert ov["difference (must be 0)"][2] == 0
    for kind in KINDS:
        assert ov[kind][0] == list(EXPECTED_KINDS.values()).count(kind)
        assert ovf[kind][1].value.startswith("=COUNTIF(")

    # every formula is ours; the formula-looking id and customer stay text
    with zipfile.ZipFile(out) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/sheet"):
                xml = z.read(name).decode()
                for found in re.findall(r"<f>(.*?)</f>", xml):
                    assert FORMULA_TOKENS.sub("", found) == "", f"{name}: unexpected formula {found!r}"
                assert "HYPERLINK" not in xml
    assert NASTY_ID in [r[col["shipment_id"]] for r in rows]


@pytest.mark.needs_soffice  # skips locally without LibreOffice, fails in CI (conftest.py)
def test_libreoffice_recalculates_the_cached_values(runs, tmp_path):
    out = tmp_path / "comparison.xlsx"
    write_comparison(str(out), compare(read_costed(runs[0]), read_costed(runs[1])))
    (tmp_path / "recalc").mkdir()
    checked, mismatches = recalc_mismatches(str(out), str(tmp_path / "recalc"), tolerance=1e-9)
    assert checked > 40
    assert not mismatches, mismatches[:10]


def test_columns_are_matched_by_name_not_position(runs, tmp_path):
    """A costed workbook whose Summary gains a column (and is saved with values only) reads the same."""
    wb = openpyxl.load_workbook(runs[0], data_only=True)
    ws = wb["Summary"]
    ws.insert_cols(2)
    ws["B1"] = "a_new_column"
    for r in range(2, ws.max_row + 1):
        ws.cell(r, 2, 123.0)
    moved = tmp_path / "moved.xlsx"
    wb.save(moved)
    a, b = read_costed(runs[0]), read_costed(moved)

    def rounded(rows):  # openpyxl saves numbers to 16 significant digits, xlsxwriter caches 17
        return {k: tuple(round(x, 9) if isinstance(x, float) else x for x in dataclasses.astuple(v))
                for k, v in rows.items()}

    assert rounded(a.shipments) == rounded(b.shipments)
    assert a.total_cost == b.total_cost and a.currency == b.currency
    assert "a_new_column" in b.columns


def test_same_run_twice_is_all_unchanged(runs):
    run = read_costed(runs[1])
    cmp = compare(run, run)
    assert all(c.kind == UNCHANGED and c.delta == 0 and c.changed == () for c in cmp.changes)
    assert cmp.total_delta == 0
    assert any("same input file" in w for w in cmp.warnings)


def test_input_template_is_refused_clearly(cli, tmp_path):
    template = tmp_path / "template.xlsx"
    assert cli("template", str(template))[0] == 0
    with pytest.raises(CompareError) as e:
        read_costed(template)
    assert "template.xlsx is not a costed workbook" in e.value.message
    assert "Summary" in e.value.message and "Run" in e.value.message
    assert "costing run" in e.value.fix and e.value.path == str(template)
    assert "costing run" in str(e.value)


def header_letter(path, header: str, sheet: str = "Summary") -> str:
    """Column letter of the one cell in row 1 of `sheet` whose text is `header` (openpyxl)."""
    row = [c.value for c in next(openpyxl.load_workbook(path, read_only=True)[sheet].iter_rows(max_row=1))]
    assert row.count(header) == 1, row
    return get_column_letter(row.index(header) + 1)


def _edited(path, tmp_path, edit, data_only=False):
    wb = openpyxl.load_workbook(path, data_only=data_only)
    edit(wb)
    out = tmp_path / "edited.xlsx"
    wb.save(out)
    return out


def _rename_total_cost(wb):
    ws = wb["Summary"]
    for c in ws[1]:
        if c.value == "total_cost":
            c.value = "cost"


def _drop_currency(wb):
    ws = wb["Run"]
    for row in ws.iter_rows():
        if row[0].value == "setting: currency":
            row[0].value = "setting: money"


def _add_run_mark(wb):
    wb["Run"]["C1"] = "edited"  # saved by openpyxl: formulas kept, their cached results lost


@pytest.mark.parametrize("edit, data_only, words", [
    (_rename_total_cost, True, "Summary sheet has no total_cost column"),
    (lambda wb: wb.remove(wb["Run"]), True, "is not a costed workbook: it has no Run sheet"),
    (_drop_currency, True, "no 'setting: currency' row"),
    (_add_run_mark, False,
     "Summary!{total_cost}2 (total_cost of shipment S1) holds a formula with no saved result"),
])
def test_damaged_outputs_are_refused_naming_file_and_cell(runs, tmp_path, edit, data_only, words):
    words = words.format(total_cost=header_letter(runs[0], "total_cost"))
    bad = _edited(runs[0], tmp_path, edit, data_only)
    with pytest.raises(CompareError) as e:
        read_costed(bad)
    assert e.value.message.startswith("edited.xlsx"), e.value.message
    assert words in e.value.message
    assert e.value.fix


def test_blank_cost_of_a_routed_shipment_is_refused(runs, tmp_path):
    cost_column = header_letter(runs[0], "total_cost")

    def blank(wb):
        wb["Summary"][f"{cost_column}3"] = None

    bad = _edited(runs[0], tmp_path, blank, data_only=True)
    with pytest.raises(CompareError, match=rf"Summary!{cost_column}3 \(total_cost of shipment S2\) is blank"):
        read_costed(bad)


def test_not_a_workbook_and_missing_file_are_refused(tmp_path):
    text = tmp_path / "notes.xlsx"
    text.write_text("shipment_id,total_cost\nS1,10\n")
    with pytest.raises(CompareError, match="notes.xlsx is .*not an .xlsx workbook"):
        read_costed(text)
    with pytest.raises(CompareError, match="file not found"):
        read_costed(tmp_path / "nowhere.xlsx")


def test_total_row_that_disagrees_is_reported(runs, tmp_path):
    cost_column = header_letter(runs[0], "total_cost")

    def edit_total(wb):
        ws = wb["Summary"]
        for row in ws.iter_rows():
            if row[0].value == "TOTAL":
                ws[f"{cost_column}{row[0].row}"] = 1.0

    edited = _edited(runs[0], tmp_path, edit_total, data_only=True)
    cmp = compare(read_costed(edited), read_costed(runs[1]))
    assert any("TOTAL row's total_cost (1.00) differs" in w for w in cmp.warnings)
    # the old total is the sum of the shipments' total_cost cells, not the edited TOTAL row: the
    # cells are read here with openpyxl by header text (summary_of), not through read_costed
    shipments, total_row = summary_of(edited)
    assert cents(total_row["total_cost"]) == 100
    assert cents(cmp.old_total) == sum(cents(r["total_cost"]) for r in shipments.values())


def test_currency_mismatch_is_refused(runs, make_input, cli, tmp_path):
    data = new_data()
    data["Settings"][0]["value"] = "USD"
    out = str(tmp_path / "usd.xlsx")
    assert cli("run", make_input(data, "usd-input.xlsx"), "-o", out, "--quiet")[0] == 0
    with pytest.raises(CompareError) as e:
        compare(read_costed(runs[0]), read_costed(out))
    assert "different currencies" in e.value.message
    assert "EUR" in e.value.message and "USD" in e.value.message
    assert "currency" in e.value.fix and e.value.path is None


def test_compare_command(cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "a.xlsx")[0] == 0
    assert cli("demo", "-o", "b.xlsx")[0] == 0
    code, out, err = cli("compare", "a.xlsx", "b.xlsx", "-o", "diff.xlsx")
    assert code == 0, err
    assert "unchanged" in out and "(+0.00)" in out
    wb = openpyxl.load_workbook("diff.xlsx")
    assert "Changes" in wb.sheetnames and "Overview" in wb.sheetnames
    code, _, err = cli("compare", "a.xlsx", "b.xlsx", "-o", "diff.xlsx")
    assert code == 2 and "--overwrite" in err
    code, _, err = cli("compare", "a.xlsx", "missing.xlsx", "-o", "d2.xlsx")
    assert code == 2
    code, _, err = cli("compare", "a.xlsx", "b.xlsx", "-o", "a.xlsx", "--overwrite")
    assert code == 2


def test_long_routes_wrap_in_their_column(runs, tmp_path):
    """A route longer than a text column shows (issue 13: routes overlapped their neighbours):
    its cell wraps, aligned at the top with the rest of its row, in a column at most 60
    characters wide (the costed workbook's layout rule, costing.sheets.formats.TEXT_CAP)."""
    import dataclasses

    cmp = compare(read_costed(runs[0]), read_costed(runs[1]))
    long_route = " > ".join(f"D{k:02d}" for k in range(40))  # 40 depots, 238 characters
    cmp.changes[0] = dataclasses.replace(cmp.changes[0], new_route=long_route)
    out = tmp_path / "long.xlsx"
    write_comparison(str(out), cmp)
    ws = openpyxl.load_workbook(out)["Changes"]
    header = [c.value for c in ws[1]]
    letter = get_column_letter(header.index("new_route") + 1)
    cell = ws[f"{letter}2"]
    assert cell.value == long_route
    assert cell.alignment.wrap_text and cell.alignment.vertical == "top"
    assert ws["A2"].alignment.vertical == "top"
    assert 9 <= ws.column_dimensions[letter].width <= 61
    assert ws.row_dimensions[2].height >= 30  # taller: the route takes several lines
