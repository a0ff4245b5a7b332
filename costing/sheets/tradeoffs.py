"""The Trade-offs sheet: each shipment's cost-time frontier, cheapest first, with what each step buys."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import TRADEOFF_COLUMNS
from costing.money import round_money
from costing.sheets.formats import Writer, cell_text, route_text


def write_tradeoffs(w: Writer, ws, results, analysis) -> dict[str, tuple[int, int]]:
    """Every route of a shipment that no other beats on both cost and hours, cheapest first, with
    what paying more buys. Hours are the route's `quantity("hours")`, the time the trade-off
    search compares: elapsed hours (breaks and rests included) when the driving clock is in the
    search, else drive + handling hours."""
    w.header(ws, TRADEOFF_COLUMNS)
    st = w.model.settings
    clocked = st.driving_rules != "none" and st.driving_clock_in_search == "yes"
    ws.write_comment(0, TRADEOFF_COLUMNS.index(("hours", 9, "hours")),
                     "elapsed hours (driving, handling, breaks and rests; planning estimate): the time "
                     "the trade-off search compares." if clocked else
                     "drive_hours + handling_hours: the time the trade-off search compares.")
    c = {name: i for i, (name, _w, _k) in enumerate(TRADEOFF_COLUMNS)}
    col = {name: xl_col_to_name(i) for name, i in c.items()}
    f = w.f
    cur = w.model.settings.currency
    rows: dict[str, tuple[int, int]] = {}
    r = 1
    for res in results:
        routes, capped = analysis.frontiers.get(res.shipment.shipment_id, ([], False))
        if not routes:
            continue
        first = r + 1
        cheapest = routes[0]
        for k, alt in enumerate(routes, start=1):
            x = r + 1
            hours = alt.quantity("hours")
            ws.write_string(r, c["shipment_id"], cell_text(res.shipment.shipment_id))
            ws.write_number(r, c["option"], k)
            ws.write_number(r, c["total_cost"], alt.total_cost, f["money"])
            ws.write_number(r, c["hours"], hours, f["hours"])
            ws.write_number(r, c["elapsed_hours"], alt.elapsed_hours, f["hours"])
            ws.write_number(r, c["distance_km"], alt.distance_km, f["km"])
            ws.write_number(r, c["co2e_kg"], alt.co2e_kg, f["kg"])
            more = round_money(alt.total_cost - cheapest.total_cost, w.places)
            sooner = cheapest.quantity("hours") - hours
            tc, hc = col["total_cost"], col["hours"]
            ws.write_formula(r, c["pay_more"], "=" + w.round_f(f"{tc}{x}-{tc}{first}"), f["money"], more)
            ws.write_formula(r, c["hours_sooner"], f"={hc}{first}-{hc}{x}", f["hours"], sooner)
            text = "cheapest" if k == 1 else f"pay {more:,.2f} {cur} more, arrive {sooner:.2f} h sooner"
            ws.write_string(r, c["read_out"], text)
            ws.write_string(r, c["vehicle"], cell_text(alt.vehicle))
            ws.write_string(r, c["route"], cell_text(route_text(alt)))
            if k == len(routes) and capped:
                ws.write_string(r, c["note"], "more trade-offs exist: raise frontier_max_routes to see them")
            r += 1
        rows[res.shipment.shipment_id] = (first, r)
    ws.autofilter(0, 0, max(r - 1, 1), len(TRADEOFF_COLUMNS) - 1)
    return rows
