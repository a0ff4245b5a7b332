"""The Scenario shipments sheet: one row per scenario and shipment, its totals summed by formula
from its rows on Scenario legs with the Summary's own formulas (subtotal, min_charge_uplift,
total_cost), then the base case's total (from the Summary), the difference and whether the route
changed; values cached. The Scenario comparison sheet adds these rows up."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import SCENARIO_LEG_COLUMNS, SCENARIO_SHIPMENT_COLUMNS, SUM
from costing.money import round_money
from costing.price.cost import ROUTED
from costing.sheets.formats import Writer, cell_text, route_text, sheet_ref, shipment_value, travels_with
from costing.sheets.summary import route_with_parts, write_cost_cells

COL = {name: i for i, (name, _w, _k) in enumerate(SCENARIO_SHIPMENT_COLUMNS)}
KIND = {name: kind for name, _w, kind in SCENARIO_SHIPMENT_COLUMNS}


def write_scenario_shipments(w: Writer, ws, runs, ranges, base) -> tuple[dict[tuple[str, str], int], int]:
    """One row per scenario run (costing.plan.analysis.ScenarioRun) and shipment, in scenario
    order. `ranges`: (scenario, shipment id) -> (Scenario legs sheet, first row, last row), as
    costing.sheets.scenario_legs.write_scenario_legs returns; `base`: the base case's results in
    Summary order (row i + 2), for each shipment's base total and route. Returns (scenario,
    shipment id) -> its row (1-based) and the last data row (1-based)."""
    w.header(ws, SCENARIO_SHIPMENT_COLUMNS)
    f = w.f
    S = {name: xl_col_to_name(i) for name, i in COL.items()}
    L = {name: xl_col_to_name(i) for i, (name, _w, _k) in enumerate(SCENARIO_LEG_COLUMNS)}
    rows: dict[tuple[str, str], int] = {}
    summary = {res.shipment.shipment_id: (i + 2, res) for i, res in enumerate(base)}
    base_total = xl_col_to_name(SUM["total_cost"])
    r = 0
    for run in runs:
        name = run.scenario.name
        for res in run.results:
            r += 1
            x = r + 1
            s = res.shipment
            rows[(name, s.shipment_id)] = x
            for col, value in (("scenario", name), ("shipment_id", s.shipment_id), ("status", res.status),
                               ("origin", s.origin), ("destination", s.destination),
                               ("vehicle", res.vehicle), ("note", res.message)):
                ws.write_string(r, COL[col], cell_text(value))
            if res.status == ROUTED and getattr(res, "bought", False):
                # bought from a carrier in this scenario: its charge (Carrier charges prices the
                # base case's; a scenario's tariff figures are in its note)
                ws.write_number(r, COL["legs"], 0, f["int"])
                for col in ("standalone_cost", "total_cost"):
                    ws.write_number(r, COL[col], res.total_cost, f["money"])
                ws.write_number(r, COL["saving"], 0.0, f["money"])
                route = f"{s.origin} > {s.destination} (carrier {res.vehicle})"
                ws.write_string(r, COL["route"], cell_text(route))
                continue
            if res.status != ROUTED or not res.legs:
                ws.write_number(r, COL["legs"], 0, f["int"])
                continue
            sheet, a, b = ranges[(name, s.shipment_id)]
            sh = sheet_ref(sheet)

            def over(leg_col: str, sh=sh, a=a, b=b) -> str:
                return f"{sh}!{L[leg_col]}{a}:{L[leg_col]}{b}"

            ws.write_number(r, COL["vehicles"], res.vehicles, f["int"])
            ws.write_formula(r, COL["legs"], f"=COUNT({over('seq')})", f["int"], len(res.legs))
            for col, formula in (("distance_km", f"SUM({over('distance_km')})"),
                                 ("subtotal", w.round_f(f"SUM({over('leg_cost')})")),
                                 ("co2e_kg", f"SUM({over('co2e_share')})")):
                ws.write_formula(r, COL[col], "=" + formula, f[KIND[col]], shipment_value(res, col))
            ws.write_string(r, COL["travels_with"], travels_with(res))
            ws.write_formula(r, COL["allocated_cost"], "=" + w.round_f(f"SUM({over('cost_share')})"),
                             f["money"], res.allocated_cost)
            write_cost_cells(w, ws, r, res, COL, S)  # the Summary's formulas
            ws.write_string(r, COL["route"], cell_text(route_with_parts(res)))
            row, was = summary.get(s.shipment_id, (None, None))
            if was is None or was.status != ROUTED:
                continue
            ws.write_formula(r, COL["base_total_cost"], f"=Summary!{base_total}{row}", f["money"],
                             was.total_cost)
            ws.write_formula(r, COL["delta_vs_base"],
                             "=" + w.round_f(f"{S['total_cost']}{x}-{S['base_total_cost']}{x}"), f["money"],
                             round_money(res.total_cost - was.total_cost, w.places))
            same = route_text(res) == route_text(was)
            ws.write_string(r, COL["route_vs_base"], "same" if same else "changed")
    ws.autofilter(0, 0, max(r, 1), len(SCENARIO_SHIPMENT_COLUMNS) - 1)
    return rows, r + 1
