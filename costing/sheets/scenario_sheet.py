"""The Scenario comparison sheet: totals per scenario and cost component against the base case,
and per shipment."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import SCENARIO_COMPONENTS, SUM
from costing.money import round_money
from costing.price.cost import ROUTED, CostedShipment
from costing.sheets.formats import Writer, cell_text, component, route_text


def write_scenarios(w: Writer, ws, base: list[CostedShipment], runs, last_row: int) -> tuple[int, int]:
    """Totals per scenario and cost component, then per-shipment totals and deltas and which
    shipments changed route. The base row refers to the Summary TOTAL row; scenario figures are
    the tool's costing of each scenario's changed inputs (their legs are not in this workbook)."""
    f = w.f
    cur = w.model.settings.currency
    ws.write_string(0, 0, "Scenario totals by cost component. The base row is the Summary TOTAL row; "
                    "each scenario row is the same shipments costed with that scenario's changes.", f["bold"])
    head = (["scenario", "routed"] + SCENARIO_COMPONENTS
            + ["total_cost", "delta_vs_base", "delta_pct", "co2e_kg", "rerouted", "changes"])
    for c, h in enumerate(head):
        ws.write_string(2, c, h, f["head"])
    ws.set_column(0, 0, 18)
    ws.set_column(1, len(head) - 2, 13)
    ws.set_column(len(head) - 1, len(head) - 1, 70)
    col = {h: i for i, h in enumerate(head)}
    letter = {h: xl_col_to_name(i) for h, i in col.items()}
    pct = w.wb.add_format({"num_format": "+0.0%;-0.0%;0.0%"})
    t = last_row + 2  # Summary TOTAL row, 1-based

    def figures(results):
        routed = [r for r in results if r.status == ROUTED]
        out = {name: round_money(sum(component(r, name) for r in routed), w.places)
               for name in SCENARIO_COMPONENTS + ["total_cost"]}
        out["co2e_kg"] = sum(r.co2e_kg for r in routed)
        out["routed"] = len(routed)
        return out

    base_fig = figures(base)
    base_routes = {r.shipment.shipment_id: route_text(r) for r in base}
    rows = [("base", "(the input as given)", base, base_fig)]
    for run in runs:
        rows.append((run.scenario.name, "; ".join(ch.describe() for ch in run.scenario.changes),
                     run.results, figures(run.results)))
    first = 3
    for i, (name, changes, results, fig) in enumerate(rows):
        r = first + i
        x = r + 1
        ws.write_string(r, col["scenario"], cell_text(name))
        ws.write_string(r, col["changes"], cell_text(changes))
        ws.write_number(r, col["routed"], fig["routed"])
        for comp in SCENARIO_COMPONENTS + ["total_cost", "co2e_kg"]:
            fmt = f["kg"] if comp == "co2e_kg" else f["money"]
            if i == 0:
                ref = (f"-Summary!{xl_col_to_name(SUM['saving'])}{t}" if comp == "consolidation_saving"
                       else f"Summary!{xl_col_to_name(SUM[comp])}{t}")
                ws.write_formula(r, col[comp], "=" + ref, fmt, fig[comp])
            else:
                ws.write_number(r, col[comp], fig[comp], fmt)
        b = first + 1
        tot, dv = letter["total_cost"], letter["delta_vs_base"]
        delta = round_money(fig["total_cost"] - base_fig["total_cost"], w.places)
        ws.write_formula(r, col["delta_vs_base"], "=" + w.round_f(f"{tot}{x}-{tot}{b}"), f["money"], delta)
        ws.write_formula(r, col["delta_pct"], f"=IF({tot}{b}=0,0,{dv}{x}/{tot}{b})", pct,
                         delta / base_fig["total_cost"] if base_fig["total_cost"] else 0.0)
        rerouted = sum(1 for res in results if route_text(res) != base_routes.get(res.shipment.shipment_id))
        ws.write_number(r, col["rerouted"], rerouted)
    last_total = first + len(rows) - 1
    # per shipment
    r0 = last_total + 3
    ws.write_string(r0 - 1, 0, f"Per shipment: total_cost ({cur}) under each scenario, the change from "
                    "base, and whether the route changed.", f["bold"])
    heads = ["shipment_id", "base_total"]
    for run in runs:
        heads += [f"{run.scenario.name}: total", f"{run.scenario.name}: delta", f"{run.scenario.name}: route"]
    for c, h in enumerate(heads):
        ws.write_string(r0, c, cell_text(h)[:255], f["head"])
    by_id = [{res.shipment.shipment_id: res for res in run.results} for run in runs]
    summary_row = {res.shipment.shipment_id: i + 2 for i, res in enumerate(base)}
    tc = xl_col_to_name(SUM["total_cost"])
    for i, res in enumerate(base):
        r = r0 + 1 + i
        x = r + 1
        sid = res.shipment.shipment_id
        ws.write_string(r, 0, cell_text(sid))
        if res.status == ROUTED:
            ws.write_formula(r, 1, f"=Summary!{tc}{summary_row[sid]}", f["money"], res.total_cost)
        else:
            ws.write_string(r, 1, res.status)
        for k, run_ids in enumerate(by_id):
            alt = run_ids.get(sid)
            c = 2 + 3 * k
            if alt is None or alt.status != ROUTED:
                ws.write_string(r, c, alt.status if alt else "")
                continue
            ws.write_number(r, c, alt.total_cost, f["money"])
            if res.status == ROUTED:
                ws.write_formula(r, c + 1, "=" + w.round_f(f"{xl_col_to_name(c)}{x}-B{x}"), f["money"],
                                 round_money(alt.total_cost - res.total_cost, w.places))
            ws.write_string(r, c + 2, "changed" if route_text(alt) != base_routes[sid] else "same")
    ws.freeze_panes(3, 1)
    return first, last_total
