"""The Lane usage sheet: tonnes, vehicle trips, vehicle-km and cost per lane, as formulas over Legs."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import LANE_COLUMNS, LEG
from costing.money import round_money
from costing.sheets.formats import Writer, cell_text, sheet_ref


def write_lane_usage(w: Writer, ws, analysis) -> None:
    """Where the money goes: per lane, the legs, tonnes, vehicle trips and leg cost routed over
    it, as SUMIFS over the Legs sheet (both directions of a lane together)."""
    w.header(ws, LANE_COLUMNS)
    L = {name: xl_col_to_name(i) for name, i in LEG.items()}

    def over_sheets(template: str) -> str:
        """template with {r(col)} placeholders, summed over every Legs sheet."""
        parts = []
        for sheet, last in w.legs_last.items():
            def rng(col, sheet=sheet, last=last):
                return f"{sheet_ref(sheet)}!${L[col]}$2:${L[col]}${max(last, 2)}"
            parts.append(template.format(**{col: rng(col) for col in LEG}))
        return "+".join(parts)

    pct = w.wb.add_format({"num_format": "0.0%"})
    total_cost = round_money(sum(u.cost for u in analysis.lanes), w.places)
    n = len(analysis.lanes)
    for r, u in enumerate(analysis.lanes, start=1):
        x = r + 1
        ws.write_string(r, 0, cell_text(u.lane_id))
        ws.write_string(r, 1, cell_text(u.from_depot))
        ws.write_string(r, 2, cell_text(u.to_depot))
        ws.write_string(r, 3, u.mode)
        key = f"$A{x}"
        ws.write_formula(r, 4, "=" + over_sheets("COUNTIF({lane_id}," + key + ")"), w.f["int"], u.legs)
        ws.write_formula(r, 5, "=" + over_sheets("SUMIFS({weight_t},{lane_id}," + key + ")"), w.f["km"],
                         u.tonnes)
        ws.write_formula(r, 6, "=" + over_sheets("SUMIFS({vehicles},{lane_id}," + key + ")"), w.f["int"],
                         u.vehicle_trips)
        km_expr = over_sheets("SUMPRODUCT(({lane_id}=" + key + ")*{vehicles}*{distance_km})")
        ws.write_formula(r, 7, "=" + km_expr, w.f["km"], u.vehicle_km)
        cost_expr = over_sheets("SUMIFS({leg_cost},{lane_id}," + key + ")")
        ws.write_formula(r, 8, "=" + w.round_f(cost_expr), w.f["money"], round_money(u.cost, w.places))
        ws.write_formula(r, 9, f"=IF(SUM($I$2:$I${n + 1})=0,0,I{x}/SUM($I$2:$I${n + 1}))", pct,
                         (round_money(u.cost, w.places) / total_cost) if total_cost else 0.0)
    ws.autofilter(0, 0, max(n, 1), len(LANE_COLUMNS) - 1)
    if n:
        ws.conditional_format(1, 8, n, 8, {"type": "data_bar", "bar_color": "#9DC3E6"})
