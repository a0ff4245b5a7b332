"""Generated workbooks never make `costing run` crash: the exit code is 0, 1 or 2, no
traceback is printed, and when it is not 0 no output (and no temporary file) is left.

Two generators: workbooks made of random sheets, headers and cells (contract names mixed
with junk), and the small valid input with a few cells replaced by random values, which
gets further down the pipeline (routing, costing, writing). Bounded to run in well under a
minute; set COSTING_FUZZ_EXAMPLES to search longer."""

from __future__ import annotations

import contextlib
import datetime as dt
import io
import os
import tempfile
import zipfile

import openpyxl
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from costing.cli import main
from costing.contract.inputs import SHEETS
from tests.conftest import base_data

EXAMPLES = int(os.environ.get("COSTING_FUZZ_EXAMPLES", "30"))
FUZZ = settings(max_examples=EXAMPLES, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])

COLUMNS = {s.name: [c.name for c in s.columns] for s in SHEETS}
ALL_COLUMNS = sorted({c for cols in COLUMNS.values() for c in cols})
SHEET_NAMES = [*COLUMNS, "Sheet1", "lanes", "Lanez", "DEPOTS", "Rates (2)", "Δρομολόγια", "History",
               "Shipments ", "Scenarios"]
JUNK_HEADERS = ["", " ", "Distanse km", "depot id", "???", "1", "notes", "lane_id ", "Weight (t)"]
WORDS = ["A", "B", "C", "D", "Z9", "L1", "S1", "truck", "road", "rail", "sea", "air", "yes", "no",
         "maybe", "EUR", "EURO", "JPY", "cost", "time", "emissions", "hub", "port", "1,200 km", "12.5",
         "1.200,5", "-0", "#N/A", "#DIV/0!", "", "   ", "52°30'N", "=1+1", "=SUM(A1:A3)", "=#REF!",
         "detour_factor", "currency", "objective", "default_speed_kmh", "driving_rules",
         "eu_561_2006", "1e308", "nan", "inf", "Αθήνα", "北京", "🚚"]

# Text openpyxl can write: no control characters (XML 1.0 forbids most) and no surrogates.
TEXT = st.text(st.characters(blacklist_categories=("Cc", "Cs")), max_size=24)

VALUES = st.one_of(
    st.none(),
    st.sampled_from(WORDS),
    TEXT,
    st.integers(min_value=-(10**20), max_value=10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(min_value=-1000, max_value=100_000),
    st.booleans(),
    st.dates(min_value=dt.date(1900, 3, 1), max_value=dt.date(2200, 1, 1)),
    st.datetimes(min_value=dt.datetime(1900, 3, 1), max_value=dt.datetime(2200, 1, 1)),
    st.times(),
    st.timedeltas(min_value=dt.timedelta(0), max_value=dt.timedelta(days=1000)),
)

HEADER = st.one_of(st.sampled_from(ALL_COLUMNS), st.sampled_from(ALL_COLUMNS),
                   st.sampled_from(JUNK_HEADERS), VALUES)

SHEET = st.tuples(st.sampled_from(SHEET_NAMES), st.lists(HEADER, max_size=14),
                  st.lists(st.lists(VALUES, max_size=16), max_size=8))


def _save(sheets: list[tuple[str, list, list[list]]], path: str) -> None:
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    seen = set()
    for title, header, rows in sheets:
        if title.lower() in seen:
            continue
        seen.add(title.lower())
        ws = wb.create_sheet(title)
        if header:
            ws.append(header)
        else:
            ws.append([None])
        for row in rows:
            ws.append(row)
    if not wb.sheetnames:
        wb.create_sheet("Sheet1")
    wb.save(path)


def _run(sheets) -> None:
    with tempfile.TemporaryDirectory() as folder:
        inp = os.path.join(folder, "in.xlsx")
        _save(sheets, inp)
        _run_file(inp, folder)


def _run_file(inp: str, folder: str) -> None:
    out = os.path.join(folder, "out.xlsx")
    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        try:
            code = main(["run", inp, "-o", out])
        except SystemExit as e:  # argparse usage errors only
            code = e.code
    text = stdout.getvalue() + stderr.getvalue()
    assert code in (0, 1, 2), (code, text)
    assert "Traceback" not in text, text
    if code != 0:
        assert not os.path.exists(out), text
    else:
        assert os.path.exists(out)
    assert not [f for f in os.listdir(folder) if f.startswith(".costing-")]


@FUZZ
@given(st.lists(SHEET, max_size=7))
def test_random_workbooks_never_crash(sheets):
    _run(sheets)


def _base_sheets() -> dict[str, tuple[list, list[list]]]:
    data = base_data()
    out = {}
    for name, cols in COLUMNS.items():
        out[name] = (list(cols), [[rec.get(c) for c in cols] for rec in data.get(name, [])])
    return out


MUTATION = st.tuples(st.sampled_from(list(COLUMNS)), st.integers(0, 6), st.integers(0, 13), VALUES)


@FUZZ
@given(st.lists(MUTATION, min_size=1, max_size=4), st.sets(st.sampled_from(list(COLUMNS)), max_size=1))
def test_valid_input_with_random_cells_never_crashes(mutations, dropped):
    sheets = _base_sheets()
    for name, row, col, value in mutations:
        header, rows = sheets[name]
        if row == 0:  # the header row
            header += [None] * (col + 1 - len(header))
            header[col] = value
            continue
        while len(rows) < row:
            rows.append([])
        target = rows[row - 1]
        target += [None] * (col + 1 - len(target))
        target[col] = value
    _run([(name, h, r) for name, (h, r) in sheets.items() if name not in dropped])


_GOOD: dict[str, bytes] = {}


def _good_parts() -> dict[str, bytes]:
    """The parts of a small valid input, written once by the template writer."""
    if not _GOOD:
        from costing.workbook.template import write_template

        with tempfile.TemporaryDirectory() as folder:
            path = os.path.join(folder, "in.xlsx")
            write_template(path, base_data())
            with zipfile.ZipFile(path) as z:
                _GOOD.update({n: z.read(n) for n in z.namelist()})
    return _GOOD


XML_SNIPPETS = [b"", b"<", b">", b"&", b"&amp;", b'"', b"<c r=\"A2\"><v>x</v></c>", b"<v>NaN</v>",
                b"t=\"s\"", b"t=\"e\"", b"t=\"b\"", b"t=\"d\"", b"r=\"XFD1048577\"", b"r=\"A0\"",
                b"<f>1/0</f>", b"<mergeCell ref=\"A1:C3\"/>", b"\xff\xfe", b"<row r=\"99999999\"/>",
                b"<dimension ref=\"A1:XFD1048576\"/>", b"s=\"9999\"", b"<si><t>", b"</sheetData>"]


@FUZZ
@given(st.lists(st.tuples(st.integers(0, 10**6), st.integers(0, 10**6), st.integers(0, 40),
                          st.one_of(st.sampled_from(XML_SNIPPETS), st.binary(max_size=12))),
                min_size=1, max_size=3))
def test_damaged_xml_parts_never_crash(edits):
    """A valid input with a few byte ranges of its XML parts replaced: damaged files of every
    kind (bad XML, bad cell types and references, bad shared-string and style indexes)."""
    parts = dict(_good_parts())
    names = sorted(n for n in parts if n.endswith(".xml") or n.endswith(".rels"))
    for which, where, length, new in edits:
        name = names[which % len(names)]
        data = parts[name]
        at = where % (len(data) + 1)
        parts[name] = data[:at] + new + data[at + length:]
    with tempfile.TemporaryDirectory() as folder:
        inp = os.path.join(folder, "in.xlsx")
        with zipfile.ZipFile(inp, "w", zipfile.ZIP_DEFLATED) as z:
            for name, data in parts.items():
                z.writestr(name, data)
        _run_file(inp, folder)
