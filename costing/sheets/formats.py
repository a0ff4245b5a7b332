"""Cell formats and the helpers every output sheet shares: the Writer (formats, widths, text always
written as text), formula helpers and print set-up. Knows xlsxwriter; knows nothing of the search."""

from __future__ import annotations

import datetime as _dt
import re

import xlsxwriter

from costing import __version__
from costing.contract.outputs import HEADER_NOTES, SUM, SUMMARY_COLUMNS, SUMMED
from costing.model import Model
from costing.money import round_money
from costing.price.cost import CostedShipment

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
_OUR_FUNCTIONS = {"ROUND", "SUM", "IF", "OR", "MAX", "COUNT", "COUNTIF", "SUMIFS", "SUMPRODUCT"}


_FUNCTION_NAME = re.compile(r"([A-Za-z_][A-Za-z0-9_.]*)\(")


def fast_formulas(ws) -> None:
    """Let formulas built only from our functions skip xlsxwriter's renaming pass (it would not
    change them); any other formula still goes through it."""
    slow = ws._prepare_formula

    def prepare(formula: str, expand_future_functions: bool = False) -> str:
        if set(_FUNCTION_NAME.findall(formula)) <= _OUR_FUNCTIONS and "[" not in formula:
            return formula[1:] if formula.startswith("=") else formula
        return slow(formula, expand_future_functions)

    ws._prepare_formula = prepare


def cell_text(value: object) -> str:
    """`value` as cell text, cut with a marker at the spreadsheet's 32,767-character cell limit."""
    s = "" if value is None else str(value)
    if len(s) > MAX_CELL_TEXT:
        s = s[: MAX_CELL_TEXT - 40] + " ... [truncated at the cell limit]"
    return s


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
        frozen header, landscape A4 fit to width, header repeated on every printed page."""
        for c, (name, width, kind) in enumerate(columns):
            ws.write_string(0, c, name, self.f["head"])
            ws.set_column(c, c, max(width, len(name) + 2), self.f.get(kind) if kind != "text" else None)
            if name in HEADER_NOTES:
                ws.write_comment(0, c, HEADER_NOTES[name], {"x_scale": 2, "y_scale": 1.2})
        ws.freeze_panes(1, 0)
        ws.set_row(0, 30)
        ws.set_landscape()
        ws.set_paper(9)
        ws.fit_to_pages(1, 0)
        ws.repeat_rows(0)


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
    return shipment_value(res, name)


def page(ws) -> None:
    """Print set-up for a one-page sheet: landscape A4, fit to one page."""
    ws.set_landscape()
    ws.set_paper(9)
    ws.fit_to_pages(1, 1)


def sheet_ref(name: str) -> str:
    """A sheet name as a formula refers to it (quoted when it has a space)."""
    return f"'{name}'" if " " in name else name


def shipment_value(res: CostedShipment, col: str) -> float:
    """The cached value of a summed Summary column, from the same rounded leg figures."""
    legs_cols = SUMMED[col]
    attr = {"handling_start_cost": "start_handling_cost", "handling_end_cost": "end_handling_cost",
            "leg_cost": "leg_cost"}
    total = sum(getattr(leg, attr.get(c, c)) if c not in ("distance_km", "drive_hours")
                else (leg.use.km if c == "distance_km" else leg.use.hours)
                for leg in res.legs for c in legs_cols)
    kind = SUMMARY_COLUMNS[SUM[col]][2]
    return round_money(total, res.places) if kind == "money" else total
