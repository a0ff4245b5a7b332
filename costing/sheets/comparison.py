"""The Comparison sheet: each shipment's best route under every objective, with the difference from
the chosen route as formulas."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import COMPARISON_COLUMNS
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import Writer, cell_text, route_text


def write_comparison(w: Writer, ws, results, analysis) -> None:
    """One block of rows per shipment: its best route under each objective, with differences
    from the chosen route as formulas."""
    w.header(ws, COMPARISON_COLUMNS)
    c = {name: i for i, (name, _w, _k) in enumerate(COMPARISON_COLUMNS)}
    col = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    r = 1
    for res in results:
        alts = analysis.alternatives.get(res.shipment.shipment_id)
        if not alts:
            continue
        chosen_row = r + 1 + list(alts).index(res.objective)
        for obj, alt in alts.items():
            x = r + 1
            ws.write_string(r, c["shipment_id"], cell_text(res.shipment.shipment_id))
            ws.write_string(r, c["objective"], obj)
            ws.write_string(r, c["chosen"], "yes" if obj == res.objective else "")
            ws.write_string(r, c["status"], alt.status)
            ws.write_string(r, c["vehicle"], cell_text(alt.vehicle))
            if alt.status == ROUTED:
                ws.write_number(r, c["legs"], len(alt.legs))
                figures = {"total_cost": alt.total_cost, "drive_hours": alt.drive_hours,
                           "elapsed_hours": alt.elapsed_hours, "distance_km": alt.distance_km,
                           "co2e_kg": alt.co2e_kg}
                for name, value in figures.items():
                    ws.write_number(r, c[name], value, f[COMPARISON_COLUMNS[c[name]][2]])
                base = alts[res.objective]
                for name, src in (("cost_vs_chosen", "total_cost"), ("hours_vs_chosen", "elapsed_hours"),
                                  ("km_vs_chosen", "distance_km"), ("co2e_vs_chosen", "co2e_kg")):
                    expr = f"{col[src]}{x}-{col[src]}{chosen_row}"
                    value = figures[src] - getattr(base, src)
                    kind = COMPARISON_COLUMNS[c[name]][2]
                    if kind == "money":
                        expr, value = w.round_f(expr), round_money(value, w.places)
                    ws.write_formula(r, c[name], "=" + expr, f[kind], value)
                ws.write_string(r, c["route"], cell_text(route_text(alt)))
            r += 1
    ws.autofilter(0, 0, max(r - 1, 1), len(COMPARISON_COLUMNS) - 1)
