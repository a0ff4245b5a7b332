"""The Comparison sheet: one row per shipment, its best route under every objective side by side
(total cost, elapsed hours, km, kg CO2e, the route), each objective's cost against the chosen
route's as a formula, and how many different routes the objectives choose.

Guarantees: the figures are those of the routes in `Analysis.alternatives` (the routes the
search finds under each objective, priced by costing.price.cost); ``{objective}_cost_vs_chosen``
is ``ROUND({objective}_total_cost - {chosen}_total_cost, d)`` on the same row, so it is 0 in the
chosen objective's columns; a route shown as "chosen route" has the same lanes, in the same order,
on the same vehicles as the chosen one."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.inputs import OBJECTIVES
from costing.contract.outputs import COMPARISON_COLUMNS
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import Writer, cell_text, route_text
from costing.sheets.rowxml import RowSink

CHOSEN_ROUTE = "chosen route"


def _key(route) -> tuple:
    """What makes two routes the same: their lane steps and vehicles, in order."""
    return tuple((leg.use.key, leg.card.vehicle, leg.card.mode) for leg in route.legs)


def write_comparison(w: Writer, ws, results, analysis) -> None:
    """One row per shipment compared (Settings compare_objectives = yes), in result order."""
    w.header(ws, COMPARISON_COLUMNS)
    c = {name: i for i, (name, _w, _k) in enumerate(COMPARISON_COLUMNS)}
    kinds = {name: kind for name, _w, kind in COMPARISON_COLUMNS}
    col = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    out = RowSink(ws, 1)  # the rows as worksheet XML (costing.sheets.rowxml)
    r = 1
    for res in results:
        alts = analysis.alternatives.get(res.shipment.shipment_id)
        if not alts:
            continue
        x = r + 1
        chosen = alts.get(res.objective, res)
        out.write_string(r, c["shipment_id"], cell_text(res.shipment.shipment_id))
        out.write_string(r, c["chosen"], res.objective)
        keys = {id(a): _key(a) for a in (chosen, *alts.values())}  # each route's key once
        routed = [alts[o] for o in OBJECTIVES if o in alts and alts[o].status == ROUTED]
        out.write_number(r, c["routes"], len({keys[id(a)] for a in routed}))
        for obj in OBJECTIVES:
            alt = alts.get(obj)
            if alt is None:
                continue
            if alt.status != ROUTED:
                out.write_string(r, c[f"{obj}_route"], alt.status)
                continue
            for name in ("total_cost", "elapsed_hours", "distance_km", "co2e_kg"):
                out.write_number(r, c[f"{obj}_{name}"], getattr(alt, name), f[kinds[f"{obj}_{name}"]])
            if chosen.status == ROUTED:
                expr = w.round_f(f"{col[f'{obj}_total_cost']}{x}-{col[f'{res.objective}_total_cost']}{x}")
                out.write_formula(r, c[f"{obj}_cost_vs_chosen"], "=" + expr, f["money"],
                                  round_money(alt.total_cost - chosen.total_cost, w.places))
            same = (chosen.status == ROUTED and keys[id(alt)] == keys[id(chosen)]
                    and alt.bought == chosen.bought)
            if same:
                text = CHOSEN_ROUTE
            elif alt.bought:
                carrier = alt.quote.carrier if alt.quote is not None else "a carrier"
                text = f"bought from {carrier}"
            else:
                text = f"{route_text(alt)} ({alt.vehicle})"
            out.write_string(r, c[f"{obj}_route"], cell_text(text))
        r += 1
    out.finish()
    ws.autofilter(0, 0, max(r - 1, 1), len(COMPARISON_COLUMNS) - 1)
