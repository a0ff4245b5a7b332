"""The template accepts what its notes tell a user to type: a test types into the template the way
a spreadsheet stores typed input, then runs `costing check`.

How a spreadsheet stores a typed entry (from memory; Microsoft Excel and LibreOffice Calc in an
English locale behave alike): in a cell formatted as Text it is kept as the typed string; in any
other cell `=...` becomes a formula, `+10%` the number 0.1, `+12.5` the number 12.5, `2026-03-01` a
date, a number a number, and anything else text.
"""

from __future__ import annotations

import datetime as _dt
import re

import openpyxl
from openpyxl.utils import column_index_from_string, get_column_letter

from costing.contract.inputs import SHEETS

COMMITTED = "templates/costing-input-template.xlsx"


def number_format_of(ws, coord: str) -> str:
    """The format a new entry in `coord` takes: the cell's own, else its column's."""
    cell = ws[coord]
    if cell.has_style:
        return cell.number_format
    col = column_index_from_string(re.match(r"[A-Z]+", coord).group(0))
    for dim in ws.column_dimensions.values():
        lo, hi = dim.min or 0, dim.max or 0
        if lo <= col <= hi:
            return dim.number_format
    return "General"


def type_into(ws, coord: str, typed: str) -> None:
    """Store `typed` in `coord` as a spreadsheet stores a typed entry (see the module docstring)."""
    if number_format_of(ws, coord) == "@":
        ws[coord].value = typed
        ws[coord].data_type = "s"
        return
    s = typed.strip()
    if s.startswith("="):
        ws[coord] = s  # openpyxl stores a string starting with = as a formula, as the app does
        return
    m = re.fullmatch(r"([+-]?)(\d+(?:\.\d+)?)%", s)
    if m:
        ws[coord] = float(m.group(1) + m.group(2)) / 100
        return
    if re.fullmatch(r"[+-]?\d+(?:\.\d+)?", s):
        ws[coord] = float(s)
        return
    if re.fullmatch(r"\d{4}-\d\d-\d\d", s):
        ws[coord] = _dt.datetime.fromisoformat(s)
        return
    ws[coord] = typed


def row_of(ws, setting: str) -> int:
    return next(r for r in range(2, ws.max_row + 1) if ws.cell(r, 1).value == setting)


def filled_template(tmp_path, settings=(), scenarios=()):
    """The committed template with a small network typed in, plus `settings` (name, typed) and
    `scenarios` rows (scenario, sheet, key, column, change), all typed."""
    wb = openpyxl.load_workbook(COMMITTED)
    rows = {
        "Depots": [["A", "Alpha", "52.1", "4.3"], ["B", "Beta", "52.4", "4.9"]],
        "Lanes": [["L1", "A", "B", "road", "60", "1"]],
        "Rates": [["truck", "road", "1.2", "40", "50", "24"]],
        "Shipments": [["S1", "A", "B", "10"]],
        "Scenarios": [list(r) for r in scenarios],
    }
    for sheet, records in rows.items():
        ws = wb[sheet]
        for r, record in enumerate(records, start=2):
            for c, typed in enumerate(record, start=1):
                if typed != "":
                    type_into(ws, f"{get_column_letter(c)}{r}", typed)
    ws = wb["Settings"]
    for name, typed in settings:
        type_into(ws, f"B{row_of(ws, name)}", typed)
    path = tmp_path / "typed.xlsx"
    wb.save(path)
    return str(path)


def test_a_typed_setting_number_is_a_number(cli, tmp_path):
    path = filled_template(tmp_path, settings=[("detour_factor", "1.3"), ("fuel_price_per_litre", "1.85"),
                                               ("currency", "GBP"), ("break_hours_paid", "no")])
    ws = openpyxl.load_workbook(path)["Settings"]
    assert ws[f"B{row_of(ws, 'detour_factor')}"].value == 1.3  # General cell: stored as a number
    code, out, err = cli("check", path)
    assert code == 0, out + err
    assert "detour_factor" not in out


def test_typed_scenario_changes_are_read_as_written(cli, tmp_path):
    path = filled_template(tmp_path, scenarios=[("fuel_up", "Settings", "fuel_price_per_litre", "value",
                                                 "=1.85"),
                                                ("dearer", "Rates", "truck", "per_km", "+10%"),
                                                ("toll", "Lanes", "L1", "toll", "+12.5"),
                                                ("closed", "Lanes", "L1", "open", "=no")])
    ws = openpyxl.load_workbook(path)["Scenarios"]
    assert [ws.cell(r, 5).value for r in range(2, 6)] == ["=1.85", "+10%", "+12.5", "=no"]
    code, out, err = cli("check", path)
    assert code == 0, out + err
    assert not [x for x in out.splitlines() if x.startswith("error")], out


def test_a_change_that_arrives_as_a_number_is_an_error_naming_the_cell(cli, tmp_path):
    # +10% typed into a General cell arrives as 0.1: never read as "set to 0.10"
    path = filled_template(tmp_path, scenarios=[("dearer", "Rates", "truck", "per_km", "+10%")])
    wb = openpyxl.load_workbook(path)
    wb["Scenarios"]["E2"] = 0.1
    wb.save(path)
    code, out, err = cli("check", path)
    assert code == 1
    line = next(x for x in out.splitlines() if "Scenarios!E2" in x)
    assert line.startswith("error") and "0.1" in line and "Text" in line


def test_every_template_column_takes_its_kind():
    # numbers as numbers, text and ids as text (a typed 007 or +10% kept), dates as dates
    wb = openpyxl.load_workbook(COMMITTED)
    for spec in SHEETS:
        ws = wb[spec.name]
        for c, col in enumerate(spec.columns, start=1):
            nf = number_format_of(ws, f"{get_column_letter(c)}2")
            if spec.name == "Settings" and col.name == "note":
                continue  # written by the tool, not read
            if spec.name == "Settings" and col.name == "value":
                assert nf == "General", "Settings values take numbers and words"
            elif col.kind == "number":
                assert nf not in ("@",), (spec.name, col.name)
            elif col.kind == "date":
                assert "yy" in nf, (spec.name, col.name)
            elif col.kind in ("id", "text", "depot", "vehicle"):
                assert nf == "@", (spec.name, col.name)


def test_the_template_prints_in_a_handful_of_pages():
    wb = openpyxl.load_workbook(COMMITTED)
    for ws in wb:
        assert ws.print_area, ws.title
        assert ws.print_title_rows == "$1:$1", ws.title
        wide = ws.page_setup.fitToWidth or 1
        assert ws.sheet_properties.pageSetUpPr.fitToPage
        # readable: the columns fit as many A4 pages wide as the sheet asks (less 0.7 in margins)
        # at 65 % or more, 11 pt printing at 7 pt or larger (widths as stored: characters incl. padding,
        # 7 px each at 96 dpi; common practice, no source)
        width_pt = sum(d.width * 7 * 0.75 for d in ws.column_dimensions.values() if d.width)
        page_w = (841.9 if ws.page_setup.orientation == "landscape" else 595.3) - 100.8
        assert wide * page_w / width_pt >= 0.65, (ws.title, round(wide * page_w / width_pt, 2))
        assert wide <= 2, (ws.title, wide)  # a handful of pages: at most two wide


def test_template_columns_show_their_headers_and_values_whole():
    # every header fits beside its filter button (bold, ~1.1 x a regular character, the button
    # about 2.5 characters: common practice, no source), and the longest allowed value fits
    wb = openpyxl.load_workbook(COMMITTED)
    for spec in SHEETS:
        ws = wb[spec.name]
        for c, col in enumerate(spec.columns, start=1):
            width = ws.column_dimensions[get_column_letter(c)].width
            assert width >= len(col.name) * 1.1 + 2.5, (spec.name, col.name, width)
            for choice in col.choices:
                assert width >= len(choice) + 1, (spec.name, col.name, choice)
    # the Settings notes wrap at whole words in rows tall enough for every line
    ws = wb["Settings"]
    note_width = ws.column_dimensions["C"].width
    for row in ws.iter_rows(min_row=2):
        note = row[2].value
        if not note:
            continue
        lines, used, room = 1, 0, int(note_width - 2)
        for word in note.split():
            if used and used + 1 + len(word) > room:
                lines, used = lines + 1, 0
            used += len(word) + (1 if used else 0)
        assert (ws.row_dimensions[row[0].row].height or 15) >= 15 * lines, (row[0].value, lines)
