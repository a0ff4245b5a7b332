"""Write the blank input template: every sheet and column of the contract, with notes,
dropdowns, number formats and frozen headers. Column widths are measured from what a column
shows: its bold header beside the filter button, its allowed values, default and bounds as
formatted, and any rows written; long text wraps (the Settings notes) with rows tall enough for
every line, so no header or note is cut."""

from __future__ import annotations

import datetime as _dt
import math

import xlsxwriter
from xlsxwriter.utility import xl_col_to_name

from costing.contract.inputs import SETTINGS, SHEETS, SheetSpec

# Validations reach this far down; a coordinator with more rows extends them in the app.
TEMPLATE_ROWS = 5000
FIXED_TIME = _dt.datetime(2026, 1, 1, 0, 0, 0)
# blank rows printed below the header of an empty sheet, to write on
PRINT_BLANK_ROWS = 25

_NUMBER_FORMATS = {
    "degrees": "0.0000",
    "km": "#,##0.0",
    "hours": "0.00",
    "tonnes": "#,##0.00",
    "litres per 100 km": "0.0",
    "kg CO2e per litre": "0.000",
}


# widths, in characters of the default font's digit width
FILTER_BUTTON = 2.5  # the autofilter's drop-down button at a header cell's right
BOLD = 1.1  # a bold character against a regular one
PAD = 1.5  # cell padding either side
TEXT_CAP = 60  # wider text wraps
NOTE_WIDTH = 90  # the Settings note column; its notes wrap
COMMENT_CHARS = 44  # characters a line of a header note's box holds (x_scale 2.2: 282 px, 8 pt)


def shown_chars(value, number_format: str | None = None) -> int:
    """Characters `value` takes when shown: text as is, a number in `number_format` (decimals
    and thousands separators; General shows up to 10 significant digits)."""
    if isinstance(value, bool):
        return 3
    if isinstance(value, (_dt.date, _dt.datetime)):
        return 10
    if not isinstance(value, (int, float)):
        return max((len(line) for line in str(value).split("\n")), default=0)
    if not math.isfinite(value):
        return 4
    if number_format in (None, "General", "@"):
        return len(f"{value:.10g}")
    section = number_format.split(";")[0]
    decimals = len(section.split(".", 1)[1]) if "." in section else 0
    return len(f"{value:{',' if ',' in section else ''}.{decimals}f}")


def column_width(col, number_format: str | None, values=()) -> float:
    """Width (characters) that shows `col`'s header whole beside its filter button, its allowed
    values, default and bounds in `number_format`, and `values`; at most TEXT_CAP."""
    shown = [len(col.name) * BOLD + FILTER_BUTTON + PAD]
    samples = list(col.choices) + [v for v in (col.default, col.minimum, col.maximum) if v is not None]
    for v in samples + list(values):
        if v is None or (isinstance(v, float) and abs(v) >= 1e9):
            continue
        shown.append(shown_chars(v, number_format) + PAD)
    return round(min(max(shown), TEXT_CAP), 1)


def wrapped_lines(text: str, width: float) -> int:
    """Lines `text` takes wrapped at whole words in a column `width` characters wide (a
    character counted as wide as a digit, so proportional text never needs more)."""
    room = max(1, int(width - PAD))
    lines, used = 1, 0
    for word in text.split():
        n = len(word)
        if used and used + 1 + n > room:
            lines, used = lines + 1, 0
        used += n + (1 if used else 0)
    return lines


def header_note(spec: SheetSpec, col) -> str:
    """The note shown on a header cell of the template: meaning, unit, allowed values, required."""
    parts = [col.note]
    if col.unit:
        parts.append(f"Unit: {col.unit}.")
    if col.choices:
        parts.append("Allowed: " + ", ".join(col.choices) + ".")
    parts.append("Required." if col.required else "Optional.")
    return " ".join(p for p in parts if p)


def _list_source(spec: SheetSpec, col) -> str | list[str] | None:
    if col.kind in ("choice", "yesno"):
        return list(col.choices)
    if col.kind == "depot":
        return f"=Depots!$A$2:$A${TEMPLATE_ROWS}"
    if col.kind == "vehicle":
        return f"=Rates!$A$2:$A${TEMPLATE_ROWS}"
    return None


def write_template(path: str, data: dict[str, list[dict]] | None = None) -> None:
    """Write the template to `path`. `data` (sheet name -> list of row dicts keyed by column
    name) fills rows below the headers; the example workbook is written this way."""
    data = data or {}
    wb = xlsxwriter.Workbook(path, {"strings_to_formulas": False, "strings_to_urls": False})
    wb.set_properties({"title": "Route costing input", "created": FIXED_TIME,
                       "comments": "Input workbook for the costing tool. Fill one record per row."})
    head_req = wb.add_format({"bold": True, "bg_color": "#1F4E78", "font_color": "#FFFFFF",
                              "border": 1})
    head_opt = wb.add_format({"bold": True, "bg_color": "#DDEBF7", "border": 1})
    note_fmt = wb.add_format({"italic": True, "font_color": "#595959", "text_wrap": True,
                              "valign": "top", "indent": 1})
    text_fmt = wb.add_format({"num_format": "@"})
    date_fmt = wb.add_format({"num_format": "yyyy-mm-dd"})
    fmt_cache: dict[str, object] = {}

    def number_format(unit: str):
        nf = _NUMBER_FORMATS.get(unit, "#,##0.00" if "currency" in unit else "General")
        if nf not in fmt_cache:
            fmt_cache[nf] = wb.add_format({"num_format": nf})
        return fmt_cache[nf]

    for spec in SHEETS:
        ws = wb.add_worksheet(spec.name)
        ws.freeze_panes(1, 0)
        rows_in = data.get(spec.name, [])
        widths = []
        for c, col in enumerate(spec.columns):
            ws.write_string(0, c, col.name, head_req if col.required else head_opt)
            note = header_note(spec, col)
            # the note's box tall enough for every line (default box 74 px; 13 px a line)
            lines = wrapped_lines(note, COMMENT_CHARS + PAD)
            ws.write_comment(0, c, note, {"x_scale": 2.2, "y_scale": max(1.0, (lines * 13 + 10) / 74),
                                          "author": "costing"})
            cell_format = None
            if col.kind == "number":
                cell_format = number_format(col.unit)
            elif col.kind == "date":
                cell_format = date_fmt
            elif spec.name == "Settings" and col.name == "value":
                cell_format = None  # General: a typed 1.3 is a number, a typed EUR or yes is text
            elif col.kind in ("id", "text", "depot", "vehicle"):
                cell_format = text_fmt  # a typed +10%, =no or 007 stays as typed
            values = [record.get(col.name) for record in rows_in]
            if spec.name == "Settings" and not rows_in:
                values = {"setting": [s.name for s in SETTINGS],
                          "value": [v for s in SETTINGS for v in (s.default, *s.choices)],
                          "note": []}.get(col.name, [])
            nf = cell_format.num_format if cell_format is not None else None
            width = column_width(col, nf, values)
            if spec.name == "Settings" and col.name == "note":
                width = NOTE_WIDTH  # notes wrap (rows sized below)
            widths.append(width)
            ws.set_column(c, c, width, cell_format)
            rng = f"{xl_col_to_name(c)}2:{xl_col_to_name(c)}{TEMPLATE_ROWS}"
            source = _list_source(spec, col)
            if source is not None:
                ws.data_validation(rng, {
                    "validate": "list", "source": source,
                    "input_title": col.name[:32], "input_message": col.note[:255],
                    "error_title": "Not in the list",
                    "error_message": f"Pick a value from the list for {col.name}."[:255],
                    "error_type": "warning" if col.kind in ("depot", "vehicle") else "stop",
                })
            elif col.kind == "number":
                lo = col.minimum if col.minimum is not None else -1e307
                hi = col.maximum if col.maximum is not None else 1e307
                ws.data_validation(rng, {
                    "validate": "decimal", "criteria": "between", "minimum": lo, "maximum": hi,
                    "input_title": col.name[:32],
                    "input_message": (col.note + (f" Unit: {col.unit}." if col.unit else ""))[:255],
                    "error_title": "Not a number in range",
                    "error_message": f"{col.name} takes a number from {lo:g} to {hi:g}."[:255],
                })
        ws.autofilter(0, 0, 0, len(spec.columns) - 1)
        # print: the header and the rows filled in (or a few blank ones), one page wide, the
        # header on every page; without a print area a blank sheet prints its formatted columns
        rows = len(data.get(spec.name, [])) or (len(SETTINGS) if spec.name == "Settings" else 0)
        ws.print_area(0, 0, max(rows, PRINT_BLANK_ROWS), len(spec.columns) - 1)
        ws.repeat_rows(0)
        ws.set_paper(9)
        # A4, portrait when the measured columns fit across it (7 px a character and 5 px
        # padding), else landscape; as few pages wide as keep the print at 65 % or more
        # (11 pt type at 7 pt or larger)
        width_pt = sum((int(w * 7 + 0.5) + 5) * 0.75 for w in widths)
        page_w = 595.3 - 100.8  # A4 portrait less 0.7 in margins, points
        if width_pt > page_w:
            ws.set_landscape()
            page_w = 841.9 - 100.8
        ws.fit_to_pages(max(1, math.ceil(width_pt * 0.66 / page_w)), 0)
        if spec.name == "Settings" and "Settings" not in data:
            top = wb.add_format({"valign": "top"})  # beside the first line of a wrapped note
            top_text = wb.add_format({"valign": "top", "num_format": "@"})
            for r, s in enumerate(SETTINGS, start=1):
                ws.write_string(r, 0, s.name, top_text)
                if s.default is not None:
                    if isinstance(s.default, (int, float)):
                        ws.write_number(r, 1, s.default, top)
                    else:
                        ws.write_string(r, 1, str(s.default), top)
                else:
                    ws.write_blank(r, 1, None, top)
                ws.write_string(r, 2, s.note, note_fmt)
                ws.set_row(r, 15 * wrapped_lines(s.note, NOTE_WIDTH))  # wrapped note: every line shown
                if s.choices:
                    ws.data_validation(r, 1, r, 1, {"validate": "list", "source": list(s.choices)})
        for r, record in enumerate(data.get(spec.name, []), start=1):
            for c, col in enumerate(spec.columns):
                v = record.get(col.name)
                if v is None:
                    continue
                if isinstance(v, bool):
                    ws.write_string(r, c, "yes" if v else "no")
                elif isinstance(v, (int, float)):
                    ws.write_number(r, c, v)
                elif isinstance(v, _dt.date):
                    ws.write_datetime(r, c, _dt.datetime.combine(v, _dt.time()) if not isinstance(
                        v, _dt.datetime) else v, date_fmt)
                else:
                    ws.write_string(r, c, str(v))
    wb.close()
