"""The Bridge and Bridge shipments sheets: a cost bridge (costing.compare.bridge) as a table of
live formulas, the largest shipments behind each step, and a native bridge chart.

What the sheets guarantee:

- Bridge shipments has one row per shipment with its OLD and NEW total_cost and its share of
  every step (plain amounts, money rounded to the currency's minor unit), and a live ``check``
  formula per row, ROUND(old + the steps - new), which is 0.
- On Bridge, each step's amount is a live formula, ROUND(SUM(its column on Bridge shipments)),
  and the running total a live formula, ROUND(previous running total + amount); the NEW total
  row shows the last running total beside ROUND(SUM(new_total_cost)) and their difference,
  which is 0. Every formula carries its cached value.
- The chart is a stacked column chart drawn as a bridge: an invisible base series (no fill, no
  border) lifts each step's bar to where the running total was; increases and decreases are
  their own series, the two totals a third. Its bars read the bar_ columns of the table
  (formulas too), so the chart follows the table when the spreadsheet recalculates.

The steps are in the fixed order of costing.contract.outputs.BRIDGE_STEPS, stated on the sheet.
Knows xlsxwriter and the output contract; knows nothing of pricing or the search.
"""

from __future__ import annotations

import math
import re
from typing import TYPE_CHECKING

import pandas as pd
from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import (
    BRIDGE,
    BRIDGE_COLUMNS,
    BRIDGE_SHIPMENT_COLUMNS,
    BRIDGE_SHIPMENTS,
    BRIDGE_STEPS,
    SCENARIO_BRIDGE_SHIPMENTS,
)

if TYPE_CHECKING:  # the record only; the sheets never call into compare
    from costing.compare.bridge import Bridge

CHART_HEIGHT_PX = 300  # with the table it fits one landscape A4 page at about 80 %
CHART_ROWS = 17  # rows of 15 pt the chart covers, and one to spare
TOP = 5  # shipments listed behind each step (costing.compare.bridge keeps as many)
TOP_HEADER = ("step", "shipment_id", "amount", "share of step", "rank", "what changed")


def _sheet_ref(name: str) -> str:
    return f"'{name}'" if re.search(r"[^A-Za-z0-9_]", name) else name


class BridgeFormats:
    """The cell formats of the bridge sheets, made once per workbook."""

    def __init__(self, wb, currency: str, places: int):
        zeros = "." + "0" * places if places else ""
        suffix = f'" {currency}"' if re.fullmatch(r"[A-Z]{3}", currency) else ""
        money = f"#,##0{zeros}{suffix}"
        top = {"valign": "top"}
        self.places = places
        self.money_format = money
        self.f = {
            "head": wb.add_format({"bold": True, "bg_color": "#1F4E78", "font_color": "#FFFFFF",
                                   "text_wrap": True, "valign": "top", "border": 1}),
            "text": wb.add_format(top),
            "wrap": wb.add_format({"text_wrap": True, "valign": "top"}),
            "small_wrap": wb.add_format({"text_wrap": True, "valign": "top", "font_size": 9}),
            "bold": wb.add_format({"bold": True, "valign": "top"}),
            "caption": wb.add_format({"bold": True, "font_size": 13}),
            "money": wb.add_format({"num_format": money, **top}),
            "delta": wb.add_format({"num_format": f"+{money};-{money};{money}", **top}),
            # a shipment's share of a step: a zero share shows as a dash, so the moves stand out
            "share": wb.add_format({"num_format": f'+{money};-{money};"-"', "align": "right", **top}),
            "total": wb.add_format({"num_format": money, "bold": True, "top": 1, "bottom": 1, **top}),
            "total_text": wb.add_format({"bold": True, "top": 1, "bottom": 1, **top}),
            "int": wb.add_format({"num_format": "0", **top}),
            "pct": wb.add_format({"num_format": "0.0%", **top}),
            "muted": wb.add_format({"font_color": "#7F7F7F", "valign": "top"}),
        }


def _money(units: int | None, places: int) -> float | None:
    return None if units is None else units / 10 ** places


_PRICED = {"old_route_new_rates": "rates_units", "old_route_new_fuel": "fuel_units",
           "old_route_new_load": "load_units"}
_SHIPMENT_NOTES = {
    "check": "ROUND(old_total_cost + the steps - new_total_cost): 0 on every row.",
    "old_route_new_rates": "The shipment's OLD route, OLD weight, priced at the NEW rates with the "
                           "OLD fuel price (blank: not priced).",
    "old_route_new_fuel": "The same at the NEW fuel price.",
    "old_route_new_load": "The same with the NEW weight.",
    **{k: meaning for k, _label, meaning in BRIDGE_STEPS[1:-1]},
}


def _shipment_rows(ws, blocks: list[tuple[str | None, Bridge]], fm: BridgeFormats, head: int
                   ) -> tuple[dict[str, str], int]:
    """Per-shipment shares of one or more bridges from row `head` down (a header row, then the
    rows); with a name per bridge, a first column ``scenario`` holds it. Returns the column
    letters and the last row written (0-based)."""
    p = fm.places
    f = fm.f
    keyed = blocks[0][0] is not None
    columns = ([("scenario", 14, "text")] if keyed else []) + BRIDGE_SHIPMENT_COLUMNS
    names = [n for n, _w, _k in columns]
    at = {n: i for i, n in enumerate(names)}
    letters = {n: xl_col_to_name(i) for i, n in enumerate(names)}
    for c, (name, _width, _kind) in enumerate(columns):
        ws.write_string(head, c, name, f["head"])
        if name in _SHIPMENT_NOTES:
            ws.write_comment(head, c, _SHIPMENT_NOTES[name], {"x_scale": 2.5, "y_scale": 1.5})
    steps = [k for k, _l, _m in BRIDGE_STEPS[1:-1]]
    first_step, last_step = letters[steps[0]], letters[steps[-1]]
    r = head
    for name, bridge in blocks:
        for row in bridge.contributions.itertuples(index=False):
            r += 1
            x = r + 1
            if keyed:
                ws.write_string(r, at["scenario"], name, f["text"])
            ws.write_string(r, at["shipment_id"], str(row.shipment_id), f["text"])
            ws.write_number(r, at["old_total_cost"], _money(row.old_units, p), f["money"])
            for k in steps:
                ws.write_number(r, at[k], _money(int(getattr(row, k)), p), f["share"])
            ws.write_number(r, at["new_total_cost"], _money(row.new_units, p), f["money"])
            check = int(row.old_units) + sum(int(getattr(row, k)) for k in steps) - int(row.new_units)
            ws.write_formula(r, at["check"],
                             f"=ROUND({letters['old_total_cost']}{x}+SUM({first_step}{x}:{last_step}{x})"
                             f"-{letters['new_total_cost']}{x},{p})", f["delta"], _money(check, p))
            for col, attr in _PRICED.items():
                v = getattr(row, attr)
                if not pd.isna(v):
                    ws.write_number(r, at[col], _money(int(v), p), f["money"])
            if row.detail:
                ws.write_string(r, at["what_changed"], str(row.detail),
                                f["wrap"] if len(str(row.detail)) > 40 else f["text"])
    return letters, r


def write_bridge_shipments(ws, bridge: Bridge, fm: BridgeFormats) -> dict[str, str]:
    """The Bridge shipments sheet: one row per shipment, its share of each step. Returns the
    column letter of each header."""
    letters, last = _shipment_rows(ws, [(None, bridge)], fm, 0)
    for c, (name, width, _kind) in enumerate(BRIDGE_SHIPMENT_COLUMNS):
        ws.set_column(c, c, max(width, len(name) + 2))
    ws.freeze_panes(1, 1)
    ws.autofilter(0, 0, max(last, 1), len(BRIDGE_SHIPMENT_COLUMNS) - 1)
    return letters


def _print_setup(ws, last_row: int, last_col: int, breaks: list[int]) -> None:
    """A4 landscape, one page wide, page breaks before `breaks` (0-based rows)."""
    ws.set_paper(9)
    ws.set_landscape()
    ws.fit_to_pages(1, 0)
    if breaks:
        ws.set_h_pagebreaks(breaks)
    ws.print_area(0, 0, last_row, last_col)


def _set_bridge_columns(ws) -> None:
    for c, (name, width, _kind) in enumerate(BRIDGE_COLUMNS):
        ws.set_column(c, c, width, None, {"hidden": name.startswith("bar_")})


def write_bridge(wb, ws, bridge: Bridge, fm: BridgeFormats, letters: dict[str, str],
                 shipments_sheet: str = BRIDGE_SHIPMENTS) -> None:
    """The Bridge sheet: the steps as live formulas over `shipments_sheet` (written by
    `write_bridge_shipments`, whose column `letters` it returned), the bridge chart, and the
    largest shipments behind each step. Lays itself out for print (A4 landscape, one page wide):
    the bar_ columns the chart reads are hidden, the chart plots them all the same."""
    p = fm.places
    last = max(len(bridge.contributions), 1) + 1  # last data row of the shipments sheet, 1-based
    ref = _sheet_ref(shipments_sheet)

    def col_sum(name: str) -> str:
        c = letters[name]
        return f"ROUND(SUM({ref}!${c}$2:${c}${last}),{p})"

    _set_bridge_columns(ws)
    end, breaks = _bridge_block(wb, ws, bridge, fm, 0, col_sum,
                                f"Cost bridge: {bridge.old_label} to {bridge.new_label} ({bridge.currency})",
                                f"the {shipments_sheet} sheet")
    ws.freeze_panes(4, 0)
    _print_setup(ws, end, len([c for c in BRIDGE_COLUMNS if not c[0].startswith("bar_")]) - 1, breaks)


def write_scenario_bridge(wb, ws, rows_ws, bridges: list[tuple[str, Bridge]], fm: BridgeFormats,
                          rows_sheet: str = SCENARIO_BRIDGE_SHIPMENTS) -> None:
    """The Scenario bridge sheets of a costed workbook: on `ws`, for each scenario the bridge from
    the base case (steps as live formulas summing the rows of `rows_ws` with that scenario's
    name), its chart and the largest shipments behind each step; on `rows_ws` (named
    `rows_sheet`) every shipment's share of every step, per scenario.

    Parameters
    ----------
    wb : xlsxwriter.Workbook
    ws : worksheet
        Added with xlsxwriter's own add_worksheet: the sheet lays itself out (hidden chart columns).
    rows_ws : worksheet
    bridges : list of (scenario name, Bridge)
        Each from ``costing.compare.bridge.bridge_results`` (base against the scenario).
    fm : BridgeFormats
    """
    if not bridges:
        return
    p = fm.places
    _set_bridge_columns(ws)
    letters, last_row = _shipment_rows(rows_ws, bridges, fm, 0)
    rows_ws.freeze_panes(1, 2)
    rows_ws.autofilter(0, 0, max(last_row, 1), len(letters) - 1)
    first, last = 2, max(last_row, 1) + 1
    ref = _sheet_ref(rows_sheet)
    ws.write_string(0, 0, "Scenario bridges: from the base case to each scenario, one cause at a time "
                          f"({bridges[0][1].currency})", fm.f["caption"])
    r, breaks = 2, []
    for name, bridge in bridges:
        name_cell = f"$B${r + 3}"  # _bridge_block writes the scenario's name there

        def col_sum(col: str, name_cell=name_cell) -> str:
            c, k = letters[col], letters["scenario"]
            # SUMPRODUCT of an equality, not SUMIFS: a name such as "<10%" or "rates*" would be
            # read as a condition or a wildcard by SUMIFS
            return (f"ROUND(SUMPRODUCT(({ref}!${k}${first}:${k}${last}={name_cell})"
                    f"*{ref}!${c}${first}:${c}${last}),{p})")

        if r > 2:
            breaks.append(r)
        end, more = _bridge_block(wb, ws, bridge, fm, r, col_sum,
                                  f"Scenario {name}: base case to {name} ({bridge.currency})",
                                  f"the {rows_sheet} sheet", scenario=name)
        breaks += more
        r = end + 3
    _print_setup(ws, r, len([c for c in BRIDGE_COLUMNS if not c[0].startswith("bar_")]) - 1, breaks)


def _bridge_block(wb, ws, bridge: Bridge, fm: BridgeFormats, r0: int, col_sum, title: str,
                  where: str, scenario: str | None = None) -> tuple[int, list[int]]:
    """One bridge from row `r0`: title, the stated order, the steps table (each amount
    ``=col_sum(column)``), its check row, warnings, chart and the largest shipments per step.
    For a `scenario`, OLD and NEW read "base" and "scenario". Returns (last row written, page
    breaks)."""
    p = fm.places
    f = fm.f

    def words(text: str) -> str:
        if scenario is None:
            return text
        return re.sub(r"\bOLD\b", "base", re.sub(r"\bNEW\b", "scenario", text))

    names = [c for c, _w, _k in BRIDGE_COLUMNS]
    col = {c: i for i, c in enumerate(names)}
    L = {c: xl_col_to_name(i) for c, i in col.items()}
    shown = [c for c in names if not c.startswith("bar_")]
    ws.write_string(r0, 0, title, f["caption"])
    order = ", ".join(words(label) for _k, label, _m in BRIDGE_STEPS)
    ws.merge_range(r0 + 1, 0, r0 + 1, len(shown) - 1,
                   f"Steps in this fixed order, each measured after the ones before it: {order}. Each "
                   f"amount is the sum of its column in {where} (one row per shipment); the steps add up "
                   "to the change exactly, to the minor unit.", f["wrap"])
    ws.set_row(r0 + 1, 32)
    if scenario is not None:  # the name the SUMIFS formulas match, in B of the next row
        ws.write_string(r0 + 2, 0, "scenario", f["bold"])
        ws.write_string(r0 + 2, 1, scenario, f["bold"])
    head = r0 + 3
    for c, (name, _width, _kind) in enumerate(BRIDGE_COLUMNS):
        ws.write_string(head, c, name, f["head"])
    ws.set_row(head, 18)
    running = 0
    first = head + 1  # 0-based row of the first step
    step_row: dict[str, int] = {}
    for i, step in enumerate(bridge.steps):
        r = first + i
        x = r + 1  # 1-based
        step_row[step.key] = x
        is_total = step.key in ("start", "end")
        amount = step.units
        ws.write_string(r, col["step"], step.key, f["total_text"] if is_total else f["text"])
        ws.write_string(r, col["label"], words(step.label), f["total_text"] if is_total else f["bold"])
        if step.key == "start":
            running = amount
            ws.write_formula(r, col["amount"], "=" + col_sum("old_total_cost"), f["total"], _money(amount, p))
            ws.write_formula(r, col["running_total"], f"={L['amount']}{x}", f["total"], _money(running, p))
        elif step.key == "end":
            ws.write_formula(r, col["amount"], "=" + col_sum("new_total_cost"), f["total"], _money(amount, p))
            ws.write_formula(r, col["running_total"], f"={L['running_total']}{x - 1}", f["total"],
                             _money(running, p))
        else:
            before = running
            running += amount
            ws.write_formula(r, col["amount"], "=" + col_sum(step.key), f["delta"], _money(amount, p))
            ws.write_formula(r, col["running_total"],
                             f"=ROUND({L['running_total']}{x - 1}+{L['amount']}{x},{p})", f["money"],
                             _money(running, p))
            ws.write_formula(r, col["bar_base"], f"=MIN({L['running_total']}{x - 1},{L['running_total']}{x})",
                             f["money"], _money(min(before, running), p))
            ws.write_formula(r, col["bar_increase"], f"=MAX({L['amount']}{x},0)", f["money"],
                             _money(max(amount, 0), p))
            ws.write_formula(r, col["bar_decrease"], f"=MAX(-{L['amount']}{x},0)", f["money"],
                             _money(max(-amount, 0), p))
        if is_total:
            for c in ("bar_base", "bar_increase", "bar_decrease"):
                ws.write_number(r, col[c], 0, f["money"])
            ws.write_formula(r, col["bar_total"], f"={L['running_total']}{x}", f["money"], _money(running, p))
        else:
            ws.write_number(r, col["bar_total"], 0, f["money"])
        ws.write_number(r, col["shipments"], step.shipments, f["int"])
        ws.write_string(r, col["what_it_holds"], words(step.meaning), f["small_wrap"])
        if step.note:
            ws.write_string(r, col["note"], words(step.note), f["small_wrap"])
        ws.set_row(r, 24)  # two lines of the 9 pt text
    end_row = first + len(bridge.steps) - 1
    r = end_row + 1
    e = end_row + 1
    ws.write_string(r, col["label"], "check (must be 0)", f["bold"])
    ws.write_formula(r, col["amount"], f"=ROUND({L['amount']}{e}-{L['running_total']}{e},{p})", f["delta"],
                     _money(bridge.end_units - running, p))
    ws.write_string(r, col["what_it_holds"], words("NEW total minus the running total after the last step."),
                    f["wrap"])
    for w in bridge.warnings:
        r += 1
        ws.write_string(r, col["label"], "warning", f["bold"])
        ws.merge_range(r, col["what_it_holds"], r, col["note"], w, f["wrap"])
        ws.set_row(r, 15 * min(8, 1 + len(w) // 90))

    # the chart: stacked columns on the bar_ columns
    chart_row = r + 2
    _bridge_chart(wb, ws, bridge, fm, L, first, end_row, chart_row)
    r = chart_row + CHART_ROWS
    breaks = [r]  # table and chart on one page, the lists after

    # the largest shipments behind each step, in the table's columns
    ws.write_string(r, 0, f"The largest shipments behind each step (up to {TOP}, by the size of their "
                          f"share; every shipment is in {where})", f["bold"])
    r += 1
    top_cols = ("step", "label", "amount", "running_total", "shipments", "what_it_holds")
    for h, c in zip(TOP_HEADER, top_cols):
        ws.write_string(r, col[c], h, f["head"])
    top_first = r + 1
    for step in bridge.steps:
        for rank, (sid, units, detail) in enumerate(step.top, start=1):
            r += 1
            x = r + 1
            ws.write_string(r, col["step"], step.key, f["text"])
            ws.write_string(r, col["label"], sid, f["text"])
            ws.write_number(r, col["amount"], _money(units, p), f["delta"])
            if step.units:
                ws.write_formula(r, col["running_total"],
                                 f"={L['amount']}{x}/{L['amount']}${step_row[step.key]}", f["pct"],
                                 units / step.units)
            ws.write_number(r, col["shipments"], rank, f["int"])
            if detail:
                ws.write_string(r, col["what_it_holds"], detail, f["wrap"])
    if r < top_first:
        r += 1
        ws.write_string(r, col["label"], "(no shipment moved)", f["muted"])
    return r, breaks


def _nice_floor(x: float) -> float:
    """A round number at or below x (1, 2 or 5 times a power of ten), for the value axis."""
    if x <= 0:
        return 0.0
    power = 10 ** math.floor(math.log10(x))
    for m in (5, 2, 1):
        if m * power <= x:
            return m * power
    return 0.0


def _bridge_chart(wb, ws, bridge: Bridge, fm: BridgeFormats, L: dict[str, str], first: int, last: int,
                  at_row: int) -> None:
    """A stacked column chart: invisible base, increases (red: cost up), decreases (green), totals."""
    sheet = _sheet_ref(ws.get_name())
    chart = wb.add_chart({"type": "column", "subtype": "stacked"})
    cats = f"={sheet}!${L['label']}${first + 1}:${L['label']}${last + 1}"

    def values(name: str) -> str:
        return f"={sheet}!${L[name]}${first + 1}:${L[name]}${last + 1}"

    chart.add_series({"name": "base", "categories": cats, "values": values("bar_base"),
                      "fill": {"none": True}, "border": {"none": True}})
    # light fills with dark labels: a small step's label may spill over its bar and stays legible;
    # labels without the currency code (it is on the axis), zero bars unlabelled
    dec = "0" * fm.places
    number = f"#,##0{'.' + dec if dec else ''}"
    for name, title, colour, label, fmt in (
            ("bar_total", "total", "#1F4E78", "#FFFFFF", f"{number};-{number};;"),
            ("bar_increase", "increase (cost up)", "#F4B183", "#000000", f"+{number};-{number};;"),
            ("bar_decrease", "decrease (cost down)", "#A9D18E", "#000000", f'"-"{number};{number};;')):
        chart.add_series({"name": title, "categories": cats, "values": values(name),
                          "fill": {"color": colour}, "border": {"none": True}, "gap": 30,
                          "data_labels": {"value": True, "num_format": fmt,
                                          "position": "inside_end" if name == "bar_total" else "center",
                                          "font": {"size": 9, "bold": True, "color": label}}})
    chart.show_hidden_data()  # the bar_ columns are hidden on the sheet
    running = [bridge.start_units]
    for s in bridge.steps[1:-1]:
        running.append(running[-1] + s.units)
    low = min(running + [bridge.end_units]) / 10 ** fm.places
    high = max(running + [bridge.end_units]) / 10 ** fm.places
    # the axis starts at a round number below the lowest running total so the steps show (a
    # change of a few per cent on an axis from 0 draws flat bars); its title says where it starts
    span = high - low
    tick = _nice_floor(max(span, abs(low) * 0.02, 1.0))
    axis_min = math.floor((low - span * 0.6) / tick) * tick if low > 0 else 0.0
    if axis_min < low * 0.2:
        axis_min = 0.0
    y = {"num_format": "#,##0", "major_gridlines": {"visible": True, "line": {"color": "#D9D9D9"}},
         "name": bridge.currency,
         "num_font": {"size": 9}, "name_font": {"size": 9, "bold": False}}
    if axis_min > 0:
        y["min"] = axis_min
    chart.set_y_axis(y)
    chart.set_x_axis({"num_font": {"size": 9, "rotation": -30}})
    start = f" (the axis starts at {axis_min:,.0f})" if axis_min > 0 else ""
    chart.set_title({"name": f"Cost bridge: {bridge.old_label} to {bridge.new_label}{start}",
                     "name_font": {"size": 11}})
    chart.set_legend({"position": "bottom", "delete_series": [0], "font": {"size": 9}})
    chart.set_size({"width": 960, "height": CHART_HEIGHT_PX})
    ws.insert_chart(at_row, 0, chart, {"x_offset": 4, "y_offset": 4})


SHEET_NAMES = (BRIDGE, BRIDGE_SHIPMENTS)
