"""Cell formats and the helpers every output sheet shares: the Writer (formats, widths, text always
written as text), formula helpers and print set-up. Knows xlsxwriter; knows nothing of the search."""

from __future__ import annotations

import datetime as _dt
import functools
import re
import zipfile

import xlsxwriter

from costing import __version__
from costing.contract.outputs import HEADER_NOTES, SUM, SUMMARY_COLUMNS, SUMMED
from costing.model import Model
from costing.money import round_money
from costing.price.cost import CostedShipment
from costing.sheets import assemble

# Spreadsheet limits: Microsoft "Excel specifications and limits".
MAX_ROWS = 1_048_576
MAX_CELL_TEXT = 32_767

CAUTION = ("Planning estimate. Driving-time rules and emission factors used here are planning "
           "figures, not legal or compliance advice; defer to local regulation and licensed practice.")


# Output columns: (header, width, kind, value of a leg or shipment, formula or None).
# kind: text | int | km | hours | money | rate | kg | plain. A formula names other columns of
# the same row in braces ({vehicles}) and the money decimals as {d}; the writer caches the
# value next to it, computed in Python in the same order of operations.
def basis(flag: bool) -> str:
    """``estimated`` or ``stated``: whether a leg's km or hours were estimated (blank in the input)."""
    return "estimated" if flag else "stated"


# The only functions our formulas use. xlsxwriter rewrites newer ("future") function names with
# some thirty regular expressions per formula; ours need none of that, and on a million legs it
# is most of the writing time.
_OUR_FUNCTIONS = {"ROUND", "ROUNDUP", "SUM", "IF", "OR", "MIN", "MAX", "COUNT", "COUNTIF", "SUMIFS",
                  "SUMPRODUCT"}


_FUNCTION_NAME = re.compile(r"([A-Za-z_][A-Za-z0-9_.]*)\(")
_NO_DIGITS = str.maketrans("", "", "0123456789")


def fast_formulas(ws) -> None:
    """Let formulas built only from our functions skip xlsxwriter's renaming pass (it would not
    change them); any other formula still goes through it."""
    slow = ws._prepare_formula
    verdicts: dict[str, bool] = {}  # the formula without its digits -> only our functions?

    def prepare(formula: str, expand_future_functions: bool = False) -> str:
        shape = formula.translate(_NO_DIGITS)  # rows differ by their numbers only
        ours = verdicts.get(shape)
        if ours is None:
            ours = verdicts[shape] = (set(_FUNCTION_NAME.findall(formula)) <= _OUR_FUNCTIONS
                                      and "[" not in formula)
        if ours:
            return formula[1:] if formula.startswith("=") else formula
        return slow(formula, expand_future_functions)

    ws._prepare_formula = prepare


def cell_text(value: object) -> str:
    """`value` as cell text, cut with a marker at the spreadsheet's 32,767-character cell limit."""
    s = "" if value is None else str(value)
    if len(s) > MAX_CELL_TEXT:
        s = s[: MAX_CELL_TEXT - 40] + " ... [truncated at the cell limit]"
    return s


def travels_with(res) -> str:
    """The travels_with cell of a result: the shipments it shares vehicle runs with (the first
    ten, and how many more; costing.plan.week.TRAVEL_NAMES)."""
    text = ", ".join(res.shared_with)
    more = res.shared_count - len(res.shared_with)
    return cell_text(f"{text} and {more} more" if more > 0 else text)


class Writer:
    def __init__(self, path: str, model: Model, created: _dt.datetime, streaming: bool = False):
        # streaming: rows go to disk as written (xlsxwriter's constant_memory), for large outputs;
        # every sheet here is written top to bottom once, which that mode requires
        self.wb = xlsxwriter.Workbook(path, {"strings_to_formulas": False, "strings_to_urls": False,
                                             "strings_to_numbers": False, "nan_inf_to_errors": True,
                                             "constant_memory": streaming})
        self.wb.set_properties({"title": "Costed routes", "created": created,
                                "comments": f"Written by costing {__version__}"})
        self.model = model
        from costing.plan.week import first_day

        self.first_day = first_day(model)  # the day of shipments with no ready_date
        install_layout(self.wb, streaming)
        assemble.install(self.wb)  # the heaviest worksheets' XML in a second process at close
        self.legs_last: dict[str, int] = {}  # Legs sheet name -> its last data row (1-based)
        cur = model.settings.currency
        from costing.money import minor_unit

        self.places = minor_unit(cur)
        zeros = "." + "0" * self.places if self.places else ""
        wb = self.wb
        self.f = {
            "head": wb.add_format({"bold": True, "bg_color": "#1F4E78", "font_color": "#FFFFFF",
                                   "text_wrap": True, "valign": "top", "border": 1}),
            "text": wb.add_format({}),
            "int": wb.add_format({"num_format": "0"}),
            "km": wb.add_format({"num_format": "#,##0.0"}),
            "hours": wb.add_format({"num_format": "0.00"}),
            "money": wb.add_format({"num_format": f'#,##0{zeros}" {cur}"'}),
            "rate": wb.add_format({"num_format": "#,##0.00##"}),
            "kg": wb.add_format({"num_format": "#,##0.0"}),
            "plain": wb.add_format({"num_format": "General"}),
            "date": wb.add_format({"num_format": "yyyy-mm-dd"}),
            "pct": wb.add_format({"num_format": "0.0%"}),
            "bold": wb.add_format({"bold": True}),
            "total_text": wb.add_format({"bold": True, "top": 2}),
            "wrap": wb.add_format({"text_wrap": True, "valign": "top"}),
        }
        self.f["total_money"] = wb.add_format({"bold": True, "top": 2,
                                               "num_format": f'#,##0{zeros}" {cur}"'})
        for k in ("km", "hours", "kg", "int"):
            self.f["total_" + k] = wb.add_format({"bold": True, "top": 2,
                                                  "num_format": self.f[k].num_format})
        self.f["error"] = wb.add_format({"bg_color": "#F8CBAD"})
        self.f["warning"] = wb.add_format({"bg_color": "#FFE699"})

    def round_f(self, expr: str) -> str:
        """``ROUND(expr, d)`` with d the currency's minor unit (the spreadsheet's half away from zero)."""
        return f"ROUND({expr},{self.places})"

    def header(self, ws, columns):
        """Write the header row of `columns` (name, width, kind): widths, number formats, notes,
        frozen header. Print set-up and the final widths follow from what is written (`layout`)."""
        for c, (name, width, kind) in enumerate(columns):
            ws.write_string(0, c, name, self.f["head"])
            ws.set_column(c, c, max(width, len(name) + 2), self.f.get(kind) if kind != "text" else None)
            if name in HEADER_NOTES:
                ws.write_comment(0, c, HEADER_NOTES[name], {"x_scale": 2, "y_scale": 1.2})
        ws.freeze_panes(1, 0)


def route_text(res: CostedShipment) -> str:
    """The route as ``A > B > C`` (depot ids); empty when the shipment has no legs."""
    if not res.legs:
        return ""
    return " > ".join([res.legs[0].use.from_depot] + [leg.use.to_depot for leg in res.legs])


def component(res: CostedShipment, name: str) -> float:
    """A Summary figure of a shipment: a cost component summed over its legs, the minimum-charge
    uplift or the total, in the run's currency."""
    if name == "min_charge_uplift":
        return res.min_charge_uplift
    if name == "total_cost":
        return res.total_cost
    if name == "consolidation_saving":
        return -res.saving
    if name == "empty_return_alone":
        return res.empty_return_alone
    return shipment_value(res, name)


def sheet_ref(name: str) -> str:
    """A sheet name as a formula refers to it (quoted when it has a space)."""
    return f"'{name}'" if " " in name else name


# what a numeric Legs column reads of a leg (the rest read the attribute of the column's name)
_LEG_EXPR = {"distance_km": "leg.use.km", "drive_hours": "leg.use.hours",
             "cost_share": "(leg.leg_cost if leg.cost_share is None else leg.cost_share)",
             "co2e_share": "(leg.co2e_kg if leg.co2e_share is None else leg.co2e_share)",
             "handling_start_cost": "leg.start_handling_cost", "handling_end_cost": "leg.end_handling_cost"}


def _leg_values(cols):
    """A function leg -> [leg_value(leg, c) for c in cols], in one list expression (_LEG_EXPR)."""
    if not all(c.isidentifier() for c in cols):
        raise ValueError(f"not column names: {cols}")
    items = [_LEG_EXPR.get(c, f"leg.{c}") for c in cols]
    scope: dict = {}
    source = f"def values(leg):\n    return [{', '.join(items)}]\n"
    exec(compile(source, "<costing.sheets.formats leg values>", "exec"), scope)  # noqa: S102
    return scope["values"]


_ONE_VALUE: dict = {}  # column, or tuple of columns -> its values function (`leg_value`, `shipment_value`)


def leg_value(leg, col: str) -> float:
    """The cached value of a numeric Legs column of `leg` (shares fall back to the leg's own
    figures when no plan stage has set them)."""
    fn = _ONE_VALUE.get(col)
    if fn is None:
        fn = _ONE_VALUE[col] = _leg_values([col])
    return fn(leg)[0]


def shipment_value(res: CostedShipment, col: str) -> float:
    """The cached value of a summed Summary column, from the same rounded leg figures."""
    cols = tuple(SUMMED[col])
    fn = _ONE_VALUE.get(cols)
    if fn is None:
        fn = _ONE_VALUE[cols] = _leg_values(cols)
    total = sum(v for leg in res.legs for v in fn(leg))  # leg by leg, its columns in turn
    kind = SUMMARY_COLUMNS[SUM[col]][2]
    return round_money(total, res.places) if kind == "money" else total


_SUMMED_LEG_COLS = tuple(dict.fromkeys(c for cols in SUMMED.values() for c in cols))
_SUMMED_MONEY = {col: SUMMARY_COLUMNS[SUM[col]][2] == "money" for col in SUMMED}
_summed_leg_values = _leg_values(_SUMMED_LEG_COLS)


def shipment_values(res: CostedShipment) -> dict[str, float]:
    """``shipment_value(res, col)`` for every summed Summary column at once: each leg's figures
    are read once, and each column is summed in the same order (leg by leg, its Legs columns in
    turn), so the values are the same floats."""
    rows = [_summed_leg_values(leg) for leg in res.legs]
    at = {c: i for i, c in enumerate(_SUMMED_LEG_COLS)}
    out = {}
    for col, legs_cols in SUMMED.items():
        idx = [at[c] for c in legs_cols]
        total = sum(row[i] for row in rows for i in idx)
        out[col] = round_money(total, res.places) if _SUMMED_MONEY[col] else total
    return out


# --- layout: widths from what is shown, print set-up -----------------------------------------
# Every worksheet of a Writer's workbook is measured as it is written (`install_layout`), and
# when the workbook closes each sheet gets: column widths from its formatted values (bold cells
# wider; no `###`), long text wrapped at TEXT_CAP characters with taller rows, header cells wide
# enough for their longest word (never cut mid-word), a print area, the header row repeated on
# every page, A4 in portrait or landscape by width, and a print scale that fits the sheet's
# width over as few pages as keep the type at least MIN_FONT_PT. Sheet modules need do nothing.

TEXT_CAP = 60  # widest text column, characters; longer text wraps
MIN_SCALE = 65  # per cent: 11 pt Calibri prints at 7.15 pt or larger
MIN_FONT_PT = 11 * MIN_SCALE / 100
PAGE_W = {"portrait": 595.3 - 100.8, "landscape": 841.9 - 100.8}  # A4 less 0.7 in margins, points
PAGE_H = {"portrait": 841.9 - 108.0, "landscape": 595.3 - 108.0}
CAPTION_SPAN = 110  # characters a caption wraps within
_MEASURED_ROWS = 2000  # rows whose cells are counted to tell captions (a lone long text) apart


def col_points(width: float) -> float:
    """Printed width in points of a column `width` characters wide (Calibri 11: 7 px a digit
    plus 5 px padding; 0.75 pt a pixel)."""
    return (int(width * 7 + 0.5) + 5) * 0.75 if width >= 1 else width * 12 * 0.75


@functools.lru_cache(maxsize=256)
def _parse_number_format(nf) -> tuple:
    """(decimals, optional decimals, thousands?, percent?, literal characters) of the first
    section of a number format; None for General. Cached: a sheet has a handful of formats and
    millions of cells."""
    if nf in (None, 0, "General", ""):
        return None
    if isinstance(nf, int):
        return (2, 0, True, False, 0)
    section = nf.split(";")[0]
    literals = sum(len(q) for q in re.findall(r'"([^"]*)"', section))
    bare = re.sub(r'"[^"]*"', "", section)
    literals += len(re.sub(r"[#0,.%?]", "", bare))
    dec = bare.split(".", 1)[1] if "." in bare else ""
    return (dec.count("0"), dec.count("#"), "," in bare, "%" in bare, literals)


def shown_length(value, nf) -> int:
    """Characters a number takes when shown with number format `nf`."""
    if isinstance(value, bool):
        return 5
    try:
        v = float(value)
    except (TypeError, ValueError):
        return len(str(value))
    if v != v or v in (float("inf"), float("-inf")):
        return 7
    p = _parse_number_format(nf)
    if p is None:
        return len(f"{v:.10g}")
    zeros, hashes, thousands, percent, literals = p
    x = abs(v) * (100 if percent else 1)
    s = f"{x:{',' if thousands else ''}.{zeros + hashes}f}"
    if hashes:
        keep = len(s) - hashes
        s = s[:keep] + s[keep:].rstrip("0")
        s = s.rstrip(".") if zeros == 0 else s
    return len(s) + (v < 0) + percent + literals


class Layout:
    """What one worksheet shows, measured as it is written; `finish` sets widths and print."""

    def __init__(self, ws, streaming: bool):
        self.ws = ws
        self.streaming = streaming
        self.width: dict[int, float] = {}  # column -> widest shown value, characters
        self.head_word: dict[int, float] = {}  # column -> longest word of a header cell
        self.heads: list[tuple[int, int, str]] = []  # header cells (row, col, text)
        self.long: list[tuple[int, int, int, bool]] = []  # (row, col, length, bold) text over TEXT_CAP
        self.captions: list[tuple[int, int, str, object]] = []
        self.row_cells: dict[int, int] = {}
        self.col_fmt: dict[int, object] = {}
        self.declared: dict[int, float] = {}
        self.col_opts: dict[int, dict] = {}  # set_column options (outline level, hidden) kept
        self.max_row = -1
        self.max_col = -1
        self.drawings: list[tuple[int, int, float, float]] = []  # row, col, width px, height px
        self.active = True
        self.fmt_info: dict[int, tuple] = {}

    def _info(self, fmt, col) -> tuple:
        if fmt is None:
            fmt = self.col_fmt.get(col)
            if fmt is None:
                return (None, False, False, False)
        key = id(fmt)
        got = self.fmt_info.get(key)
        if got is None:
            head = bool(fmt.bold and fmt.text_wrap and fmt.bg_color)
            got = (fmt.num_format, bool(fmt.bold), bool(fmt.text_wrap), head)
            self.fmt_info[key] = got
        return got

    def _grow(self, row: int, col: int) -> None:
        if row > self.max_row:
            self.max_row = row
        if col > self.max_col:
            self.max_col = col
        if row < _MEASURED_ROWS:
            self.row_cells[row] = self.row_cells.get(row, 0) + 1

    def text(self, row, col, s, fmt) -> None:
        if not self.active:
            return
        self._grow(row, col)
        nf, bold, _wrap, head = self._info(fmt, col)
        s = "" if s is None else str(s)
        if head:
            word = max((len(w) for w in s.split()), default=0) * 1.1 + 1.5
            self.head_word[col] = max(self.head_word.get(col, 0), word)
            self.heads.append((row, col, s))
            return
        n = max((len(part) for part in s.split("\n")), default=0) if s else 0
        w = n * (1.1 if bold else 1.0) + 1.5
        if n > 40 and row < _MEASURED_ROWS:  # maybe a caption: decided in finish
            self.captions.append((row, col, s, fmt))
            return
        if n > TEXT_CAP:
            self.long.append((row, col, len(s), bold))
            w = TEXT_CAP
        if w > self.width.get(col, 0):
            self.width[col] = w

    def number(self, row, col, value, fmt) -> None:
        if not self.active:
            return
        self._grow(row, col)
        nf, bold, _wrap, _head = self._info(fmt, col)
        w = shown_length(value, nf) * (1.1 if bold else 1.0) + 2.0
        if w > self.width.get(col, 0):
            self.width[col] = w

    # -- finish --
    def finish(self, wb) -> None:
        self.active = False
        ws = self.ws
        if self.max_col < 0 and not self.drawings:
            return
        captions = {}
        for r, c, text, fmt in self.captions:
            if self.row_cells.get(r, 0) == 1:
                captions[(r, c)] = (text, fmt)
                continue
            bold = self._info(fmt, c)[1]
            if len(text) > TEXT_CAP:
                self.long.append((r, c, len(text), bold))
            w = min(TEXT_CAP, len(text) * (1.1 if bold else 1.0) + 1.5)
            self.width[c] = max(self.width.get(c, 0), w)
        widths: dict[int, float] = {}
        for c in range(self.max_col + 1):
            data = self.width.get(c)
            w = max(data or 0.0, self.head_word.get(c, 0.0))
            if data is None:  # nothing but a header (or a caption): the width the sheet asked for
                w = max(w, self.declared.get(c, 8.43))
            widths[c] = max(3.0, w)
        wrap = wb.add_format({"text_wrap": True, "valign": "top"})
        wrapped_cols = {c for _r, c, _n, _b in self.long if (_r, c) not in captions}
        for c, w in widths.items():
            fmt = self.col_fmt.get(c)
            if c in wrapped_cols and fmt is None:
                fmt = wrap
            ws.set_column(c, c, round(w, 1), fmt, self.col_opts.get(c))
        heights: dict[int, float] = {}
        for r, c, n, bold in self.long:
            if (r, c) in captions:
                continue
            lines = -(-int(n * (1.1 if bold else 1.0) * 1.1) // max(1, int(widths[c] - 1)))
            heights[r] = max(heights.get(r, 15.0), min(409.0, 15.0 * lines))
        for r, c, s in self.heads:
            width = max(1, int(widths.get(c, 10) - 1.5))
            lines, used = 1, 0
            for word in s.split():
                n = int(len(word) * 1.1) + 1
                if used and used + n > width:
                    lines, used = lines + 1, 0
                used += n
            heights[r] = max(heights.get(r, 15.0), 15.0 * lines + 3)
        if not self.streaming:
            bold_wrap = wb.add_format({"bold": True, "text_wrap": True, "valign": "top"})
            for (r, c), (s, f) in captions.items():
                # wrap over the columns to its right, at most about a printed page wide
                end, span = c, widths.get(c, 8.43)
                while end < self.max_col and span < CAPTION_SPAN:
                    end += 1
                    span += widths.get(end, 8.43)
                if len(s) * 1.1 + 2 > span and end > c:
                    bold = f is not None and f.bold
                    ws.merge_range(r, c, r, end, s, bold_wrap if bold else wrap)
                    lines = -(-int(len(s) * 1.15) // max(1, int(span)))
                    heights[r] = max(heights.get(r, 15.0), 15.0 * lines)
            for r, h in heights.items():
                ws.set_row(r, h)
        # print set-up
        width_pt = sum(col_points(w) for w in widths.values())
        last_row, last_col = self.max_row, self.max_col
        height_pt = 15.0 * (self.max_row + 1)
        for r, c, wpx, hpx in self.drawings:
            x = sum(col_points(widths.get(k, 8.43)) for k in range(c))
            width_pt = max(width_pt, x + wpx * 0.75)
            height_pt = max(height_pt, 15.0 * r + hpx * 0.75)
            px, k = x / 0.75 + wpx, 0
            while px > 0 and k < 200:
                px -= col_points(widths.get(k, 8.43)) / 0.75
                k += 1
            last_col = max(last_col, k - 1)
            last_row = max(last_row, r + int(hpx / 20) + 1)
        ws.set_paper(9)
        orientation = "portrait" if width_pt <= PAGE_W["portrait"] else "landscape"
        if orientation == "portrait":
            ws.set_portrait()
        else:
            ws.set_landscape()
        page_w = PAGE_W[orientation]
        if self.drawings:
            scale = min(100.0, page_w / width_pt * 100, PAGE_H[orientation] / height_pt * 100)
            scale = max(scale, MIN_SCALE if height_pt <= PAGE_H[orientation] * 2 else 40)
        else:
            cols = [col_points(widths[c]) for c in range(self.max_col + 1)]
            scale, pages = fit_columns(cols, page_w, repeat_first=bool(self.heads))
            if pages > 1 and self.heads:
                ws.repeat_columns(0)
        if self.drawings:  # pictures and charts: one page, scaled by the application
            ws.fit_to_pages(1, 1 if height_pt * scale / 100 <= PAGE_H[orientation] * 1.05 else 0)
        else:
            ws.set_print_scale(int(scale))
        ws.print_area(0, 0, max(last_row, 0), max(last_col, 0))
        if self.heads:
            ws.repeat_rows(min(r for r, _c, _s in self.heads))


def fit_columns(cols: list[float], page_w: float, repeat_first: bool = True) -> tuple[float, int]:
    """(print scale in per cent, pages wide) for columns of these printed widths (points) on a
    page `page_w` points wide: the fewest pages at MIN_SCALE or larger, at the largest scale that
    keeps that many. A column is never split; with `repeat_first` the first column is printed
    again at the left of every page."""

    def pages_at(scale: float) -> int:
        room = page_w / (scale / 100)
        pages, used = 1, 0.0
        for w in cols:
            if used and used + w > room:
                pages += 1
                used = cols[0] if repeat_first else 0.0
            used += w
        return pages

    fewest = pages_at(MIN_SCALE)
    for scale in range(100, MIN_SCALE - 1, -1):
        if pages_at(scale) <= fewest:
            return float(scale), fewest
    return float(MIN_SCALE), fewest


def _png_size(data) -> tuple[int, int]:
    """Width and height in pixels of PNG bytes in a BytesIO (its IHDR chunk); 640 x 480 otherwise."""
    try:
        head = data.getvalue()[:24]
        if head[:8] == b"\x89PNG\r\n\x1a\n":
            return int.from_bytes(head[16:20], "big"), int.from_bytes(head[20:24], "big")
    except AttributeError:
        pass
    return 640, 480


# Deflate level of the written workbook. Measured on a week of 80,862 legs (363 MB of sheet XML):
# level 1 compresses in 2.7 s to 71 MB, zlib's default (6) in 9.0 s to 54 MB; a costed workbook
# is written at every rerun, so it takes the faster level (a third larger file).
ZIP_LEVEL = 1


class _FastZip(zipfile.ZipFile):
    """The ZipFile xlsxwriter packs the workbook with, at ZIP_LEVEL."""

    def __init__(self, *args, **kwargs):
        kwargs.setdefault("compresslevel", ZIP_LEVEL)
        super().__init__(*args, **kwargs)


def install_layout(wb, streaming: bool) -> None:
    """Measure every worksheet `wb` adds from now on and lay each out when `wb` closes."""
    layouts: list[Layout] = []
    add = wb.add_worksheet

    def add_worksheet(name=None, *args, **kwargs):
        ws = add(name, *args, **kwargs)
        lay = Layout(ws, streaming)
        layouts.append(lay)
        ws._costing_layout = lay  # rows written as XML (costing.sheets.rowxml) report to it
        ws_string, ws_number, ws_formula = ws._write_string, ws._write_number, ws._write_formula
        ws_set_column, ws_chart, ws_image = ws.set_column, ws.insert_chart, ws.insert_image

        # every format takes its style index when first written or set, in the order the sheets
        # are written, not when the worksheets are assembled at close: the assembly may then be
        # split between processes (costing.sheets.assemble) and give the same styles
        def write_string(row, col, string, cell_format=None):
            lay.text(row, col, string, cell_format)
            if cell_format is not None:
                cell_format._get_xf_index()
            return ws_string(row, col, string, cell_format)

        def write_number(row, col, number, cell_format=None):
            lay.number(row, col, number, cell_format)
            if cell_format is not None:
                cell_format._get_xf_index()
            return ws_number(row, col, number, cell_format)

        def write_formula(row, col, formula, cell_format=None, value=0):
            if isinstance(value, str):
                lay.text(row, col, value, cell_format)
            else:
                lay.number(row, col, value, cell_format)
            if cell_format is not None:
                cell_format._get_xf_index()
            return ws_formula(row, col, formula, cell_format, value)

        def set_column(first_col, last_col, width=None, cell_format=None, options=None):
            if cell_format is not None:
                cell_format._get_xf_index()
            if lay.active and isinstance(first_col, int):
                for c in range(first_col, min(last_col, first_col + 200) + 1):
                    lay.col_fmt[c] = cell_format
                    if width is not None:
                        lay.declared[c] = width
                    if options:
                        lay.col_opts[c] = options
            return ws_set_column(first_col, last_col, width, cell_format, options)

        def insert_chart(row, col, chart, options=None):
            o = options or {}
            w = chart.width * o.get("x_scale", 1) + o.get("x_offset", 0)
            h = chart.height * o.get("y_scale", 1) + o.get("y_offset", 0)
            lay.drawings.append((row, col, w, h))
            return ws_chart(row, col, chart, options)

        def insert_image(row, col, source, options=None):
            o = options or {}
            w, h = _png_size(o.get("image_data"))
            lay.drawings.append((row, col, w * o.get("x_scale", 1), h * o.get("y_scale", 1)))
            return ws_image(row, col, source, options)

        ws._write_string, ws._write_number, ws._write_formula = write_string, write_number, write_formula
        ws.set_column, ws.insert_chart, ws.insert_image = set_column, insert_chart, insert_image
        return ws

    close = wb.close

    def close_laid_out():
        for lay in layouts:
            lay.finish(wb)
        import xlsxwriter.workbook as package

        saved = package.ZipFile
        package.ZipFile = _FastZip  # for this close only
        try:
            return close()
        finally:
            package.ZipFile = saved

    wb.add_worksheet = add_worksheet
    wb.close = close_laid_out
