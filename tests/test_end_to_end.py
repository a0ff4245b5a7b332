"""End to end through the command line: template -> filled -> run -> output read back.
The ties are checked with our own arithmetic on the values read back (openpyxl, a general
reader), independent of the code that wrote them."""

from __future__ import annotations

import hashlib
import os
import re
import zipfile

import openpyxl
import pytest

from tests.conftest import base_data

# The output's header names, written out here (the README's description of the Summary and Legs
# sheets), not taken from the writer's column lists: columns are found by the header text the
# output holds, so a value written under the wrong header, or a header renamed, fails the checks.
MONEY = ["km_cost", "hour_cost", "toll_cost", "fixed_cost", "fuel_surcharge", "stop_cost",
         "handling_start_cost", "handling_end_cost", "trip_cost"]
LEG_HEADERS = ["shipment_id", "seq", "from_depot", "to_depot", "vehicles", "distance_km", "per_km",
               "leg_cost", "run_id", "cost_share", *MONEY]
SUMMARY_HEADERS = ["shipment_id", "status", "origin", "destination", "objective", "distance_km",
                   "subtotal", "min_charge", "min_charge_uplift", "standalone_cost", "allocated_cost",
                   "total_cost", "saving", "travels_with", "route", "make_or_buy", "buy_cost"]


def header_index(ws, wanted: list[str]) -> dict[str, int]:
    """{header text: 0-based column} from row 1 of `ws`, for every name in `wanted` (each must
    appear exactly once)."""
    row = [c.value for c in next(ws.iter_rows(min_row=1, max_row=1))]
    for name in wanted:
        assert row.count(name) == 1, f"{ws.title}: header {name!r} found {row.count(name)} times in {row}"
    return {name: row.index(name) for name in wanted}


def summary_columns(path) -> dict[str, int]:
    return header_index(openpyxl.load_workbook(path, read_only=True)["Summary"], SUMMARY_HEADERS)


def _sha(path):
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def _cents(x):
    return round(x * 100)


def check_costed_workbook(path):
    """Every total equals the sum of its legs to the cent; returns (summary rows, legs rows)."""
    wb = openpyxl.load_workbook(path, data_only=True)
    assert wb.sheetnames[0] == "Summary" and "Legs" in wb.sheetnames
    assert wb.sheetnames[-2:] == ["Problems", "Run"]
    # every Legs sheet is read through its own header row; rows become {header: value}
    legs = []
    for name in wb.sheetnames:
        if name == "Legs" or name.startswith("Legs "):
            cols = header_index(wb[name], LEG_HEADERS)
            legs += [{h: r[i] for h, i in cols.items()}
                     for r in wb[name].iter_rows(min_row=2, values_only=True) if r[0] is not None]
    col = header_index(wb["Summary"], SUMMARY_HEADERS)
    summary = [r for r in wb["Summary"].iter_rows(min_row=2, values_only=True) if r[0] is not None]
    total_row = summary[-1]
    assert total_row[0] == "TOTAL"
    summary = summary[:-1]
    carrier_charges = set()
    if "Carrier charges" in wb.sheetnames:
        cc = header_index(wb["Carrier charges"], ["shipment_id", "used", "charge"])
        carrier_charges = {(r[cc["shipment_id"]], r[cc["used"]], r[cc["charge"]])
                           for r in wb["Carrier charges"].iter_rows(min_row=2, values_only=True)}
    by_ship: dict[str, list] = {}
    for leg in legs:
        parts = [leg[m] for m in MONEY]
        assert _cents(leg["leg_cost"]) == sum(_cents(p) for p in parts)
        # each component is ROUND(vehicles x quantity x rate) to the cent
        n = leg["vehicles"]
        assert _cents(leg["km_cost"]) == pytest.approx(
            n * leg["distance_km"] * leg["per_km"] * 100, abs=0.5 + 1e-6)
        by_ship.setdefault(leg["shipment_id"], []).append(leg)
    grand = 0
    for row in summary:
        sid, status = row[col["shipment_id"]], row[col["status"]]
        if status != "routed":
            assert sid not in by_ship and row[col["total_cost"]] is None
            continue
        if row[col["make_or_buy"]] == "buy":
            # bought from a carrier (issue 11): no legs; it costs the carrier's charge, its own
            # Carrier charges row (used = yes)
            assert sid not in by_ship and row[col["total_cost"]] == row[col["buy_cost"]]
            assert (sid, "yes", row[col["buy_cost"]]) in carrier_charges
            grand += _cents(row[col["total_cost"]])
            continue
        ls = by_ship[sid]
        assert [x["seq"] for x in ls] == list(range(1, len(ls) + 1))
        subtotal = sum(_cents(x["leg_cost"]) for x in ls)
        assert _cents(row[col["subtotal"]]) == subtotal
        uplift = max(0, _cents(row[col["min_charge"]]) - subtotal)
        assert _cents(row[col["min_charge_uplift"]]) == uplift
        # the shipment alone: its legs plus the uplift; what it pays: its shares of the runs
        # it rides in, plus the uplift only when it shares no vehicle (issue: consolidation)
        assert _cents(row[col["standalone_cost"]]) == subtotal + uplift
        shares = sum(_cents(x["cost_share"]) for x in ls)
        assert _cents(row[col["allocated_cost"]]) == shares <= subtotal
        shared = bool(row[col["travels_with"]])
        total = shares + (0 if shared else uplift)
        assert _cents(row[col["total_cost"]]) == total
        assert _cents(row[col["saving"]]) == subtotal + uplift - total >= 0
        assert row[col["distance_km"]] == pytest.approx(sum(x["distance_km"] for x in ls))
        # the legs chain from origin to destination
        assert ls[0]["from_depot"] == row[col["origin"]]
        assert ls[-1]["to_depot"] == row[col["destination"]]
        for a, b in zip(ls, ls[1:]):
            assert a["to_depot"] == b["from_depot"]
        grand += total
    assert _cents(total_row[col["total_cost"]]) == grand
    run = dict(wb["Run"].iter_rows(min_row=2, max_col=2, values_only=True))
    assert run["difference (must be 0)"] == 0
    assert len(run["input SHA-256"]) == 64
    assert "not legal or compliance advice" in run["caution"]
    return summary, legs


def test_run_end_to_end(cli, make_input, tmp_path):
    inp = make_input()
    before = _sha(inp)
    out = tmp_path / "costed.xlsx"
    code, stdout, stderr = cli("run", inp, "-o", str(out))
    assert code == 0, stderr
    assert "2 of 3 shipments routed" in stdout
    assert _sha(inp) == before, "the input workbook is never modified"
    summary, legs = check_costed_workbook(out)
    SUM = summary_columns(out)
    assert [r[SUM["status"]] for r in summary] == ["routed", "routed", "no_route"]
    run = dict(openpyxl.load_workbook(out)["Run"].iter_rows(min_row=2, max_col=2, values_only=True))
    assert run["input SHA-256"] == before


def test_demo_end_to_end(cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, stdout, _ = cli("demo")
    assert code == 0 and os.path.exists("costing-demo.xlsx")
    code, stdout2, _ = cli("demo")  # run twice: earlier output is kept, a fresh name is used
    assert code == 0 and os.path.exists("costing-demo-2.xlsx")
    summary, legs = check_costed_workbook("costing-demo.xlsx")
    assert len(summary) >= 40 and len(legs) >= 40


def test_every_formula_is_ours_and_input_text_stays_text(cli, make_input, tmp_path):
    data = base_data()
    nasty = ['=HYPERLINK("http://example.invalid","x")', "+1+1", "-2+3", "@SUM(A1)",
             "{=1+1}", "http://example.invalid"]
    data["Shipments"][0]["customer"] = nasty[0]
    data["Shipments"][1]["customer"] = nasty[1]
    data["Shipments"][0]["shipment_id"] = "=1+1"
    data["Depots"][0]["name"] = nasty[3]
    inp = make_input(data)
    out = tmp_path / "costed.xlsx"
    code, _, err = cli("run", inp, "-o", str(out))
    assert code == 0, err
    # our formulas use only these functions, sheet and cell references, numbers and operators
    token = re.compile(r"SUMPRODUCT|SUMIFS|COUNTIF|ROUNDUP|ROUND|SUM|COUNT|IF|OR|MAX|MIN|N|Legs!|Summary!"
                       r"|'Vehicle runs'!|'Carrier charges'!"
                       r'|\$?[A-Z]{1,3}\$?\d+|\d+(\.\d+)?'
                       r'|[-+*/(),:=<>]|""|&quot;&quot;|&quot;fuel&quot;|"fuel"'
                       r'|&quot;(routed|yes)&quot;|"(routed|yes)"')
    with zipfile.ZipFile(out) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/sheet"):
                xml = z.read(name).decode()
                for f in re.findall(r"<f>(.*?)</f>", xml):
                    assert token.sub("", f) == "", f"{name}: unexpected formula {f!r}"
                assert "HYPERLINK" not in xml
        strings = z.read("xl/sharedStrings.xml").decode()
    assert "=HYPERLINK(" in strings.replace("&quot;", '"')  # kept, as text
    wb = openpyxl.load_workbook(out, data_only=True)
    ids = [r[0] for r in wb["Summary"].iter_rows(min_row=2, values_only=True)]
    assert "=1+1" in ids


def test_errors_stop_the_run_and_write_nothing(cli, make_input, tmp_path):
    data = base_data()
    data["Lanes"][0]["to_depot"] = "ZZ"
    inp = make_input(data)
    out = tmp_path / "costed.xlsx"
    code, _, err = cli("run", inp, "-o", str(out))
    assert code == 1
    assert "Lanes!C2" in err and "ZZ" in err
    assert not out.exists()
    assert not [f for f in os.listdir(tmp_path) if f.startswith(".costing-")]


def test_output_may_not_be_input_and_is_not_clobbered(cli, make_input, tmp_path):
    inp = make_input()
    before = _sha(inp)
    code, _, err = cli("run", inp, "-o", inp)
    assert code == 2 and "INPUT" in err
    code, _, err = cli("run", inp, "-o", inp, "--overwrite")
    assert code == 2 and _sha(inp) == before
    out = tmp_path / "o.xlsx"
    out.write_bytes(b"earlier output")
    code, _, err = cli("run", inp, "-o", str(out))
    assert code == 2 and "--overwrite" in err and out.read_bytes() == b"earlier output"
    code, _, _ = cli("run", inp, "-o", str(out), "--overwrite")
    assert code == 0
    check_costed_workbook(out)


def test_check_command_exit_codes(cli, make_input):
    code, out, _ = cli("check", make_input())
    assert code == 0 and "no errors" in out
    data = base_data()
    data["Depots"][1]["latitude"] = 152.5
    code, out, _ = cli("check", make_input(data, "bad.xlsx"))
    assert code == 1 and "Depots!C3" in out
    code, _, _ = cli("check")
    assert code == 2
    code, _, _ = cli("frobnicate")
    assert code == 2


def test_objective_option(cli, make_input, tmp_path):
    out = tmp_path / "o.xlsx"
    code, _, _ = cli("run", make_input(), "-o", str(out), "--objective", "distance")
    assert code == 0
    summary, legs = check_costed_workbook(out)
    SUM = summary_columns(out)
    assert summary[0][SUM["objective"]] == "distance"
    assert summary[0][SUM["route"]] == "A > B > C"


def test_reproducible_bytes(cli, make_input, tmp_path, monkeypatch):
    # with a fixed creation time the same input gives the same bytes, so finance can verify a rerun
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    inp = make_input()
    a, b = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    assert cli("run", inp, "-o", str(a))[0] == 0
    assert cli("run", inp, "-o", str(b))[0] == 0
    assert a.read_bytes() == b.read_bytes()
    run = dict(openpyxl.load_workbook(a)["Run"].iter_rows(min_row=2, max_col=2, values_only=True))
    assert run["run at (UTC)"] == "2026-01-01 00:00:00"


def test_legs_continue_on_further_sheets(cli, tmp_path, monkeypatch):
    # the spreadsheet row limit (1,048,576 rows: Microsoft "Excel specifications and limits", per
    # shared/references.md 6) is simulated with a 16-row limit so the test stays small
    import costing.sheets.legs as legs

    monkeypatch.setattr(legs, "LEGS_SHEET_ROWS", 16)
    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "split.xlsx")[0] == 0
    wb = openpyxl.load_workbook("split.xlsx")
    legs_sheets = [n for n in wb.sheetnames if n == "Legs" or n.startswith("Legs ")]
    assert len(legs_sheets) > 5 and "Legs 2" in legs_sheets
    assert all(wb[n].max_row <= 17 for n in legs_sheets)
    check_costed_workbook("split.xlsx")
    run = dict(wb["Run"].iter_rows(min_row=2, max_col=2, values_only=True))
    assert "never split across sheets" in run["Legs sheets"]


def test_failed_write_leaves_earlier_output_intact(cli, make_input, tmp_path, monkeypatch):
    import costing.sheets.writer as writer

    out = tmp_path / "o.xlsx"
    out.write_bytes(b"last week's output")

    def broken(path, *args, **kwargs):
        open(path, "wb").write(b"half a workbook")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(writer, "write_costed", broken)
    code, _, err = cli("run", make_input(), "-o", str(out), "--overwrite")
    assert code == 1 and "No space left on device" in err and "Traceback" not in err
    assert out.read_bytes() == b"last week's output"
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".costing-")] == []


def test_fuel_rebate_larger_than_per_km_is_refused(cli, make_input, tmp_path):
    data = base_data()
    data["Settings"].append({"setting": "fuel_price_per_litre", "value": 1.00})
    data["Rates"][0].update({"per_km": 0.10, "fuel_l_per_100km": 40, "fuel_included_at": 2.00})
    out = tmp_path / "o.xlsx"
    code, _, err = cli("run", make_input(data), "-o", str(out))
    # 40 l/100 km x (1.00 - 2.00) = -0.40 per km against per_km 0.10 (hand-worked)
    assert code == 1 and "Rates!J2" in err and "driving would earn money" in err
    assert not out.exists()


def test_streamed_output_holds_the_same_cells(cli, tmp_path, monkeypatch):
    # large outputs are streamed (xlsxwriter constant_memory), which silently drops a write to an
    # earlier row: the streamed workbook must hold exactly the cells of the normal one
    import costing.sheets.legs as legs

    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "normal.xlsx")[0] == 0
    monkeypatch.setattr(legs, "STREAMING_LEGS", 0)
    assert cli("demo", "-o", "streamed.xlsx")[0] == 0
    a = openpyxl.load_workbook("normal.xlsx")
    b = openpyxl.load_workbook("streamed.xlsx")
    assert a.sheetnames == b.sheetnames
    def cells(ws):
        return {c.coordinate: c.value for row in ws.iter_rows() for c in row if c.value is not None}

    for ws in a:
        assert cells(ws) == cells(b[ws.title]), ws.title
    check_costed_workbook("streamed.xlsx")


def test_fast_formula_path_matches_xlsxwriter(cli, tmp_path, monkeypatch):
    # reference: xlsxwriter's own formula preparation, on every formula the demo writes
    import xlsxwriter

    from costing.sheets.formats import fast_formulas as _fast_formulas

    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "d.xlsx")[0] == 0
    ws = xlsxwriter.Workbook(str(tmp_path / "scratch.xlsx")).add_worksheet()
    reference = ws._prepare_formula
    _fast_formulas(ws)
    formulas = [c.value for sheet in openpyxl.load_workbook("d.xlsx") for row in sheet.iter_rows()
                for c in row if c.data_type == "f"]
    assert len(formulas) > 1000
    assert all(ws._prepare_formula(f) == reference(f) for f in formulas)
    assert ws._prepare_formula("=XLOOKUP(A1,B:B,C:C)") == reference("=XLOOKUP(A1,B:B,C:C)")
