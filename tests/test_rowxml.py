"""The Legs rows written as XML from row shapes (costing.sheets.rowxml) are the cells xlsxwriter
writes cell by cell for the same calls. Reference: xlsxwriter's own write methods (the
`fast=False` path of write_legs, an independent general-purpose library's writer), both files
read back with openpyxl (another independent library) and compared cell by cell: value or
formula, cached value, number format, bold and wrap, column widths, row heights, the sheet's
dimension and filter. The LibreOffice recalculation of the fast path's formulas is in
tests/test_recalc_libreoffice.py (every Legs formula of the costed example, recalculated by an
independent spreadsheet engine, equals its cached value)."""

from __future__ import annotations

import openpyxl
import pytest

import costing.sheets.legs as legs
import costing.sheets.rowxml as rowxml

LONG = "Depot with a name far longer than sixty characters, so that it wraps in its column"


def _write(cli, tmp_path, name: str, fast: bool, monkeypatch, inp: str | None = None) -> str:
    monkeypatch.setattr(rowxml, "FAST_ROWS", fast)
    args = ("run", inp, "-o", str(tmp_path / name)) if inp else ("demo", "-o", str(tmp_path / name))
    code, _out, err = cli(*args)
    assert code == 0, err
    return str(tmp_path / name)


def _cells(path: str, sheet: str):
    wb = openpyxl.load_workbook(path)
    cached = openpyxl.load_workbook(path, data_only=True)
    ws, wc = wb[sheet], cached[sheet]
    out = {}
    for row in ws.iter_rows():
        for c in row:
            if c.value is None and not c.has_style:
                continue
            out[c.coordinate] = (c.value, c.data_type, wc[c.coordinate].value, c.number_format,
                                 bool(c.font.b), bool(c.alignment.wrap_text))
    widths = {k: round(d.width or 0, 2) for k, d in ws.column_dimensions.items()}
    heights = {k: d.height for k, d in ws.row_dimensions.items() if d.height}
    return out, widths, heights, ws.dimensions, ws.auto_filter.ref, ws.freeze_panes


def _same(a: str, b: str, sheets) -> int:
    n = 0
    for sheet in sheets:
        ca, cb = _cells(a, sheet), _cells(b, sheet)
        assert ca[0] == cb[0], [(k, ca[0].get(k), cb[0].get(k)) for k in set(ca[0]) ^ set(cb[0])
                                or [k for k in ca[0] if ca[0][k] != cb[0][k]]][:5]
        assert ca[1:] == cb[1:], sheet
        n += len(ca[0])
    return n


@pytest.mark.parametrize("streaming", [False, True])
def test_fast_legs_are_the_cells_xlsxwriter_writes(cli, tmp_path, monkeypatch, streaming):
    if streaming:  # xlsxwriter's constant_memory mode: inline strings, rows written as added
        monkeypatch.setattr(legs, "STREAMING_LEGS", 1)
    slow = _write(cli, tmp_path, "slow.xlsx", False, monkeypatch)
    fast = _write(cli, tmp_path, "fast.xlsx", True, monkeypatch)
    names = openpyxl.load_workbook(fast, read_only=True).sheetnames
    assert names == openpyxl.load_workbook(slow, read_only=True).sheetnames
    assert "Legs" in names and "Scenario legs" in names
    checked = _same(slow, fast, [n for n in names if n.startswith(("Legs", "Scenario legs"))])
    assert checked > 2000
    # the sheets around them too: the Legs rows' shared strings and formats must not shift theirs
    # (the Run sheet differs by its timings)
    around = ("Summary", "Vehicle runs", "Scenario vehicle runs", "Lane usage", "Problems")
    if not streaming:
        # streaming, xlsxwriter writes a sheet's last row at close, after the layout has set the
        # wrap format of long-text columns, so that row alone wraps; the row writer writes every
        # row as it comes (rowxml's module docstring)
        around += ("Trade-offs", "Comparison")
    _same(slow, fast, [n for n in names if n in around])


def test_fast_legs_over_several_sheets_and_long_text(cli, tmp_path, monkeypatch, make_input):
    # Legs continue on Legs 2, 3... and a depot id over 60 characters wraps with a taller row,
    # as the layout does for cells xlsxwriter writes
    from tests.conftest import base_data

    data = base_data()
    old = data["Depots"][0]["depot_id"]
    for sheet in ("Depots", "Lanes", "Shipments"):
        for row in data.get(sheet, []):
            for k, v in row.items():
                if v == old:
                    row[k] = LONG
    inp = make_input(data)
    monkeypatch.setattr(legs, "LEGS_SHEET_ROWS", 3)
    slow = _write(cli, tmp_path, "slow.xlsx", False, monkeypatch, inp)
    fast = _write(cli, tmp_path, "fast.xlsx", True, monkeypatch, inp)
    names = openpyxl.load_workbook(fast, read_only=True).sheetnames
    assert "Legs 2" in names
    _same(slow, fast, [n for n in names if n.startswith("Legs")])
    ws = openpyxl.load_workbook(fast)["Legs"]
    assert any(c.value == LONG for row in ws.iter_rows() for c in row)
    assert _cells(fast, "Legs")[2], "the long text's row is taller"


def test_rows_out_of_order_are_refused(tmp_path):
    import datetime as dt

    from costing.model import Model, Settings
    from costing.sheets.formats import Writer
    from costing.sheets.rowxml import NUMBER, Column, RowBlock, Shape

    w = Writer(str(tmp_path / "x.xlsx"), Model(Settings(), (), (), (), ()), dt.datetime(2026, 1, 1))
    ws = w.wb.add_worksheet("S")
    ws.write_string(0, 0, "head")
    block = RowBlock(ws, 1)
    shape = Shape([Column(0, NUMBER)])
    block.add(1, shape, [1.5])
    with pytest.raises(ValueError):
        block.add(1, shape, [2.5])
    block.finish()
    w.wb.close()
    assert openpyxl.load_workbook(tmp_path / "x.xlsx")["S"]["A2"].value == 1.5


@pytest.mark.parametrize("streaming", [False, True])
def test_compiled_row_writer_gives_the_cell_by_cell_xml(tmp_path, streaming):
    """The row writer made once per shape (`_compile`) gives, for every kind of value, the XML of
    the cell-by-cell path (`RowBlock._xml_cells`, the path the file-level tests above compare
    with xlsxwriter's own cells)."""
    import datetime as dt
    import random

    from costing.model import Model, Settings
    from costing.sheets.formats import Writer
    from costing.sheets.rowxml import DATE, FORMULA, NUMBER, TEXT, Column, RowBlock, Shape

    w = Writer(str(tmp_path / "x.xlsx"), Model(Settings(), (), (), (), ()), dt.datetime(2026, 1, 1))
    if streaming:
        w.wb.constant_memory = True
    ws = w.wb.add_worksheet("S")
    ws.write_string(0, 0, "head")
    money = w.wb.add_format({"num_format": "#,##0.00"})
    shape = Shape([
        Column(0, TEXT), Column(1, NUMBER), Column(2, NUMBER, money), Column(3, DATE),
        Column(4, FORMULA, money, "ROUND(B{r}*C{r},2)"),
        Column(5, FORMULA, None, "IF('Vehicle runs'!K{rr}=0,\"\",B{r}&\"{{x}}\")"),  # quotes, braces
        Column(6, FORMULA, None, "B{r}<C{r}"),  # escaped for XML
        Column(7, FORMULA),  # a formula of its own per row
        Column(30, TEXT),
    ])
    rng = random.Random(7)
    texts = ["", "plain", " padded ", "a & b < c", "tab\there", "ctl\x01x", "it's \"quoted\""]
    cached = [0.0, 1.25, -3.5e-7, 12, True, False, "", "text & more", "#N/A", "#DIV/0!", None]
    block = RowBlock(ws, 1)
    for row in range(1, 400):
        values = [rng.choice(texts), rng.choice([None, 0, 1.5, -2.25, 1e20, 7]),
                  rng.choice([None, 0.1 + 0.2, 3, 1 / 3]), rng.choice([None, 46000.5]),
                  rng.choice(cached), rng.choice(cached), rng.choice(cached),
                  rng.choice([None, ("SUM(A1:A3)", 6.0), ("\"a<b\"&\"{c}\"", "a<b{c}"), ("1=1", True)]),
                  rng.choice(texts + [None])]
        rr = rng.randint(2, 900)
        if not streaming:  # texts are shared-string indexes by then (`add`)
            values = [rng.randint(0, 50) if c.kind == TEXT else v for c, v in zip(shape.columns, values)]
        assert block._xml(row, shape, values, rr) == block._xml_cells(row, shape, values, rr)
    w.wb.close()


@pytest.mark.parametrize("streaming", [False, True])
def test_shared_formulas_read_back_as_each_rows_own(tmp_path, monkeypatch, streaming):
    """Formulas of a row's own cells written as shared groups (OOXML shared formulas) read back,
    through openpyxl's own translation of shared formulas (an independent reader), as each
    row's formula; groups end at a gap in the rows, at a shape of another share key, at a row
    with a format of its own and at SHARED_ROWS rows."""
    import datetime as dt
    import re
    import zipfile

    from costing.model import Model, Settings
    from costing.sheets.formats import Writer
    from costing.sheets.rowxml import FORMULA, NUMBER, Column, RowBlock, Shape

    monkeypatch.setattr(rowxml, "SHARED_ROWS", 4)
    path = str(tmp_path / "x.xlsx")
    w = Writer(path, Model(Settings(), (), (), (), ()), dt.datetime(2026, 1, 1))
    if streaming:
        w.wb.constant_memory = True
    ws = w.wb.add_worksheet("S")
    ws.write_string(0, 0, "head")
    own = "ROUND(A{r}*B{r},2)"
    a = Shape([Column(0, NUMBER), Column(1, NUMBER), Column(2, FORMULA, None, own, shared=True),
               Column(3, FORMULA, None, "A{r}+$B$2", shared=True), Column(4, FORMULA, None, "A{rr}")])
    b = Shape([Column(0, NUMBER), Column(1, NUMBER), Column(2, FORMULA, None, own, shared=True),
               Column(3, FORMULA, None, "A{r}+$B$2", shared=True), Column(4, FORMULA, None, "B{r}")])
    c = Shape([Column(0, NUMBER), Column(1, NUMBER), Column(2, FORMULA, None, "A{r}-B{r}", shared=True)])
    if not streaming:
        ws.set_row(9, None, w.wb.add_format({"bold": True}))  # row 10 has a format of its own
    block = RowBlock(ws, 1)
    rows = [(1, a), (2, b), (3, a), (4, a), (5, a), (6, b), (7, c), (8, c), (9, a), (10, a), (11, a),
            (13, a), (14, b)]  # row 13 (0-based 12) skipped
    expect = {}
    for row, shape in rows:
        values = [row, 2.5] + [float(row)] * (len(shape.columns) - 2)
        block.add(row, shape, values, rr=row + 100)
        for col in shape.columns[2:]:
            expect[(row + 1, col.col + 1)] = "=" + col.template.format(r=row + 1, rr=row + 100)
    block.finish()
    w.wb.close()
    got = {(cell.row, cell.column): cell.value for r in openpyxl.load_workbook(path)["S"].iter_rows(min_row=2)
           for cell in r if isinstance(cell.value, str) and cell.value.startswith("=")}
    assert got == expect
    xml = zipfile.ZipFile(path).read("xl/worksheets/sheet1.xml").decode()
    refs = re.findall(r'<f t="shared" ref="([A-Z]+\d+:[A-Z]+\d+)" si="(\d+)">', xml)
    firsts = sorted({int(re.match(r"[A-Z]+(\d+)", ref).group(1)) for ref, _si in refs})
    # groups: rows 2-5 (four rows, the cap), 6-7, 8-9 (shape c), 10-12 (or 11-12 with row 10's
    # own format), 14-15; ids unique on the worksheet
    assert firsts == ([2, 6, 8, 10, 14] if streaming else [2, 6, 8, 11, 14])
    assert len({si for _ref, si in refs}) == len(refs)
    assert "{" not in xml and "}" not in xml


def test_streamed_texts_are_escaped_as_xlsxwriter_escapes_them(tmp_path):
    """A streamed text cell's XML (RowBlock._text, with its shortcut for plain texts and its
    memory of recent texts) is the XML xlsxwriter itself writes for write_string in
    constant_memory mode (the reference: xlsxwriter's own worksheet writer)."""
    import re
    import zipfile

    import xlsxwriter

    from costing.sheets.rowxml import RowBlock

    texts = ["plain", "D-0042", "", " lead", "trail ", "tab\tin", "line\nbreak", "end\n", "a & b",
             "<tag>", "ctl\x01x", "_x0041_ literal", "_x00zz_ not one", "\ufffe odd", "quote \" '",
             "ünïcödé ✓", "\u00a0nbsp", "x" * 300]
    ref = str(tmp_path / "ref.xlsx")
    wb = xlsxwriter.Workbook(ref, {"constant_memory": True})
    ws = wb.add_worksheet("S")
    for r, t in enumerate(texts):
        ws.write_string(r, 0, t)
    wb.close()
    xml = zipfile.ZipFile(ref).read("xl/worksheets/sheet1.xml").decode()
    theirs = re.findall(r'<c r="A\d+"( t="inlineStr">.*?</c>)', xml, re.S)
    assert len(theirs) == len(texts)

    wb2 = xlsxwriter.Workbook(str(tmp_path / "ours.xlsx"), {"constant_memory": True})
    ws2 = wb2.add_worksheet("S")
    ws2.write_string(0, 0, "head")
    block = RowBlock(ws2, 1)
    for _round in range(2):  # the second round from the block's memory of recent texts
        assert [block._text(t) for t in texts] == theirs
    wb2.close()


def test_compiled_measure_is_the_cell_by_cell_measure(tmp_path):
    """The measure made once per shape (`_compile_measure`) leaves every column's measure, the
    caption counts and the layout's long-text records as the cell-by-cell measure
    (`RowBlock._measure_cells`) does, for every kind of value: numbers of both signs in monotone
    and non-monotone formats, ints, bools, NaN, texts short and over 40 characters, None, and
    formulas of their own with text, number and bool values."""
    import datetime as dt
    import random

    from costing.model import Model, Settings
    from costing.sheets.formats import Writer
    from costing.sheets.rowxml import FORMULA, NUMBER, TEXT, Column, RowBlock, Shape

    def measured(compiled: bool):
        w = Writer(str(tmp_path / f"m{compiled}.xlsx"), Model(Settings(), (), (), (), ()),
                   dt.datetime(2026, 1, 1))
        ws = w.wb.add_worksheet("S")
        ws.write_string(0, 0, "head")
        money = w.wb.add_format({"num_format": "#,##0.00"})
        pct = w.wb.add_format({"num_format": "0.0%"})
        general = w.wb.add_format({"num_format": "General"})
        shape = Shape([Column(0, TEXT), Column(1, NUMBER), Column(2, NUMBER, money), Column(3, NUMBER, pct),
                       Column(4, NUMBER, general), Column(5, FORMULA, money, "B{r}*2"), Column(6, FORMULA),
                       Column(9, TEXT, general)])
        rng = random.Random(11)
        texts = ["", "ab", "a longer text", "x" * 45, "two\nlines of it", None]
        numbers = [None, 0, 0.0, -0.0, 1.5, -2.25, 1e20, -7, 3, True, False, float("nan"), "n/a", 123456.789]
        block = RowBlock(ws, 1)
        lay_texts = []
        if block.lay is not None:
            record = block.lay.text
            block.lay.text = lambda *a: (lay_texts.append(a[:3]), record(*a))[1]
        for row in range(1, 2600):  # past the rows counted for the caption rule
            values = [rng.choice(texts), rng.choice(numbers), rng.choice(numbers), rng.choice(numbers),
                      rng.choice(numbers), rng.choice(numbers),
                      rng.choice([None, ("SUM(A1:A3)", 6.0), ("\"ab\"", "ab"), ("1=1", True), ("-B2", -4.5)]),
                      rng.choice(texts)]
            if compiled:
                block._measure(row, shape, values)
            else:
                block._measure_cells(row, shape, values)
        state = {(col, m.fmt.num_format if m.fmt is not None else None):
                 (m.pos, m.pos_row, m.neg, m.neg_row, sorted(m.seen.items(), key=repr), m.text, m.text_row)
                 for (col, _f), m in block.measures.items()}
        w.wb.close()
        return repr(state), dict(block.counted), lay_texts

    assert measured(True) == measured(False)


def test_compiled_legs_row_values_are_the_cell_functions_values():
    """`legs.row_values` (one list expression, attribute reads in line) gives, for every leg of
    the example week and of its scenarios, the values of calling each column's cell function
    (LEG_CELLS), texts through cell_text; and it reads in line only the cell functions that
    only read attributes."""
    from pathlib import Path

    from costing import pipeline
    from costing.sheets.formats import cell_text
    from costing.sheets.legs import LEG_SPEC, _attr_path, row_values

    assert _attr_path(lambda r, g: g.card.per_km) == (1, "card.per_km")
    assert _attr_path(lambda r, g: r.shipment.shipment_id) == (0, "shipment.shipment_id")
    assert _attr_path(lambda r, g: g.seq or 0) is None and _attr_path(lambda r, g: basis(g)) is None
    assert _attr_path(lambda r, g: g.card.f()) is None and _attr_path(len) is None
    example = Path(__file__).resolve().parents[1] / "examples" / "hollowmere-week.xlsx"
    model, _p, _d = pipeline.load(str(example))
    costed = pipeline.run(model)
    n = 0
    for res in costed.results + [r for sc in costed.scenarios for r in sc.results]:
        for leg in res.legs:
            want = [cell_text(f(res, leg)) if kind == "text" else f(res, leg)
                    for _name, _w, kind, f, _formula in LEG_SPEC]
            got = row_values(res, leg)
            assert [type(v) for v in got] == [type(v) for v in want] and repr(got) == repr(want)
            n += 1
    assert n > 100


def basis(_g):  # a call, for the test above
    return None


def test_compiled_leg_values_read_what_each_column_shows():
    """`formats.leg_value`, `shipment_value` and `shipment_values` (compiled list expressions)
    against the rule written out here: a column reads the leg's attribute of its name, except
    km and hours (the lane step's), the two handling costs (start_/end_handling_cost) and the
    shares (the leg's own figure when the plan set none); a Summary column sums its Legs columns
    leg by leg, rounded to the currency's minor unit when it is money."""
    from pathlib import Path

    from costing import pipeline
    from costing.contract.outputs import SUM, SUMMARY_COLUMNS, SUMMED
    from costing.money import round_money
    from costing.sheets.formats import leg_value, shipment_value, shipment_values

    def rule(leg, col):
        if col in ("distance_km", "drive_hours"):
            return leg.use.km if col == "distance_km" else leg.use.hours
        if col in ("cost_share", "co2e_share"):
            own = leg.leg_cost if col == "cost_share" else leg.co2e_kg
            share = getattr(leg, col)
            return own if share is None else share
        return getattr(leg, {"handling_start_cost": "start_handling_cost",
                             "handling_end_cost": "end_handling_cost"}.get(col, col))

    example = Path(__file__).resolve().parents[1] / "examples" / "hollowmere-week.xlsx"
    model, _p, _d = pipeline.load(str(example))
    costed = pipeline.run(model)
    cols = {c for cs in SUMMED.values() for c in cs} | {"cost_share", "co2e_share"}
    for res in costed.results:
        for leg in res.legs:
            for c in cols:
                assert repr(leg_value(leg, c)) == repr(rule(leg, c)), c
        many = shipment_values(res)
        for col, legs_cols in SUMMED.items():
            total = 0
            for leg in res.legs:
                for c in legs_cols:
                    total += rule(leg, c)
            want = round_money(total, res.places) if SUMMARY_COLUMNS[SUM[col]][2] == "money" else total
            assert repr(shipment_value(res, col)) == repr(many[col]) == repr(want), col


@pytest.mark.parametrize("fast", [True, False])
def test_a_whole_row_is_the_cells_written_one_by_one(tmp_path, monkeypatch, fast):
    """`RowSink.add_row` against the same cells written through write_* one by one (xlsxwriter's
    own cells when FAST_ROWS is off): a date as a datetime, a number None (no cell), NaN
    (#NUM!), a template formula with {r} and {rr}, a formula of its own."""
    import datetime as dt

    from costing.model import Model, Settings
    from costing.sheets.formats import Writer
    from costing.sheets.rowxml import DATE, FORMULA, NUMBER, TEXT, Column, RowSink, Shape

    monkeypatch.setattr(rowxml, "FAST_ROWS", fast)
    paths = []
    for whole in (True, False):
        path = str(tmp_path / f"w{whole}.xlsx")
        w = Writer(path, Model(Settings(), (), (), (), ()), dt.datetime(2026, 1, 1))
        ws = w.wb.add_worksheet("S")
        ws.write_string(0, 0, "head")
        money = w.f["money"]
        shape = Shape([Column(0, TEXT), Column(1, NUMBER), Column(2, DATE, w.f["date"]),
                       Column(3, FORMULA, money, "ROUND(B{r}*2,2)+{rr}"), Column(4, FORMULA)])
        out = RowSink(ws, 1)
        rows = [["a", 1.5, dt.datetime(2026, 3, 2), 3.0, ("B2+1", 2.5)],
                ["b", None, None, 0.0, ("SUM(B2:B3)", 1.5)],
                ["c", float("nan"), dt.datetime(2026, 3, 4), 1.0, ("1=1", True)]]
        for r, values in enumerate(rows, start=1):
            if whole:
                out.add_row(r, shape, values, rr=7)
                continue
            out.write_string(r, 0, values[0])
            if values[1] is not None:
                out.write_number(r, 1, values[1])
            if values[2] is not None:
                out.write_datetime(r, 2, values[2], w.f["date"])
            out.write_formula(r, 3, f"=ROUND(B{r + 1}*2,2)+7", money, values[3])
            out.write_formula(r, 4, "=" + values[4][0], None, values[4][1])
        out.finish()
        w.wb.close()
        paths.append(path)
    assert _same(paths[0], paths[1], ["S"]) == 14  # the header, 5 + 3 + 5 cells
    cells = _cells(paths[0], "S")[0]
    assert cells["B4"][:2] == ("=#NUM!", "f") or cells["B4"][2] == "#NUM!"
