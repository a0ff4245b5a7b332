"""The Scenario comparison sheet: totals per scenario and cost component against the base case
(per shipment: the Scenario shipments sheet). Every scenario figure is a live formula over the
scenario's rows on Scenario legs and Scenario shipments (written by costing.sheets.scenario_legs
and scenario_shipments with the base case's formulas), its value cached; the base row refers to
the Summary TOTAL row."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import (
    SCENARIO_COMPONENTS,
    SCENARIO_LEG_COLUMNS,
    SCENARIO_SHIPMENT_COLUMNS,
    SCENARIO_SHIPMENTS,
    SCENARIO_TOTAL_COLUMNS,
    SUM,
    SUMMED,
)
from costing.money import round_money
from costing.price.cost import ROUTED, CostedShipment
from costing.sheets.formats import Writer, cell_text, component, route_text, sheet_ref

_LEG_COL = {name: xl_col_to_name(i) for i, (name, _w, _k) in enumerate(SCENARIO_LEG_COLUMNS)}
_SHIP_COL = {name: xl_col_to_name(i) for i, (name, _w, _k) in enumerate(SCENARIO_SHIPMENT_COLUMNS)}


def keyed_sum(sheets: dict[str, int], col: str, key_cell: str) -> str:
    """Formula text: the sum of column `col` over the rows of `sheets` (name -> last data row,
    1-based) whose first column (the scenario) equals `key_cell`. An exact comparison inside
    SUMPRODUCT, not SUMIFS, so a name holding * ? or ~ is not read as a wildcard."""
    terms = []
    for name, last in sheets.items():
        sh, n = sheet_ref(name), max(last, 2)
        terms.append(f"SUMPRODUCT(({sh}!$A$2:$A${n}={key_cell})*{sh}!${col}$2:${col}${n})")
    return "+".join(terms) or "0"


def write_scenarios(w: Writer, ws, base: list[CostedShipment], runs, last_row: int, legs_last: dict[str, int],
                    ship_last: int) -> tuple[int, int]:
    """Totals per scenario and cost component against the base case, and how many shipments
    changed route (each shipment's figures are on Scenario shipments). The base row refers to the
    Summary TOTAL row; a scenario row sums that scenario's rows on Scenario legs (`legs_last`:
    sheet -> last data row) and Scenario shipments (`ship_last`: its last data row). Returns the
    first and last rows (0-based) of the scenario totals."""
    f = w.f
    ws.write_string(0, 0, "Scenario totals by cost component. The base row is the Summary TOTAL row; "
                    "each scenario row is the same shipments costed with that scenario's changes, summed "
                    "from its legs on the Scenario legs sheet and its shipments on Scenario shipments "
                    "(each shipment against the base case there).",
                    f["bold"])
    head = SCENARIO_TOTAL_COLUMNS
    for c, h in enumerate(head):
        ws.write_string(2, c, h, f["head"])
    col = {h: i for i, h in enumerate(head)}
    letter = {h: xl_col_to_name(i) for h, i in col.items()}
    pct = w.wb.add_format({"num_format": "+0.0%;-0.0%;0.0%"})
    t = last_row + 2  # Summary TOTAL row, 1-based
    ships = {SCENARIO_SHIPMENTS: ship_last}

    def scenario_formula(comp: str, key_cell: str) -> str:
        """A scenario's total of `comp`: its legs' column(s) or its shipments' column, summed."""
        if comp in ("min_charge_uplift", "total_cost", "empty_return_alone"):
            return w.round_f(keyed_sum(ships, _SHIP_COL[comp], key_cell))
        if comp == "consolidation_saving":
            return w.round_f("-(" + keyed_sum(ships, _SHIP_COL["saving"], key_cell) + ")")
        expr = "+".join(keyed_sum(legs_last, _LEG_COL[lc], key_cell) for lc in SUMMED[comp])
        return expr if comp == "co2e_kg" else w.round_f(expr)

    def figures(results):
        routed = [r for r in results if r.status == ROUTED]
        out = {name: round_money(sum(component(r, name) for r in routed), w.places)
               for name in SCENARIO_COMPONENTS + ["total_cost"]}
        out["co2e_kg"] = sum(r.co2e_kg for r in routed)
        out["routed"] = len(routed)
        return out

    base_fig = figures(base)
    base_routes = {r.shipment.shipment_id: route_text(r) for r in base}
    rows = [("base", ["(the input as given)"], base, base_fig)]
    for run in runs:
        rows.append((run.scenario.name, [ch.describe() for ch in run.scenario.changes],
                     run.results, figures(run.results)))
    first = 3
    for i, (name, _changes, results, fig) in enumerate(rows):
        r = first + i
        x = r + 1
        ws.write_string(r, col["scenario"], cell_text(name))
        key_cell = f"$A${x}"
        if i == 0:
            ws.write_number(r, col["routed"], fig["routed"])
        else:
            sh, n, st = sheet_ref(SCENARIO_SHIPMENTS), max(ship_last, 2), _SHIP_COL["status"]
            ws.write_formula(r, col["routed"], f"=SUMPRODUCT(({sh}!$A$2:$A${n}={key_cell})"
                             f'*({sh}!${st}$2:${st}${n}="{ROUTED}"))', f["int"], fig["routed"])
        for comp in SCENARIO_COMPONENTS + ["total_cost", "co2e_kg"]:
            fmt = f["kg"] if comp == "co2e_kg" else f["money"]
            if i == 0:
                ref = (f"-Summary!{xl_col_to_name(SUM['saving'])}{t}" if comp == "consolidation_saving"
                       else f"Summary!{xl_col_to_name(SUM[comp])}{t}")
                ws.write_formula(r, col[comp], "=" + ref, fmt, fig[comp])
            else:
                ws.write_formula(r, col[comp], "=" + scenario_formula(comp, key_cell), fmt, fig[comp])
        b = first + 1
        tot, dv = letter["total_cost"], letter["delta_vs_base"]
        delta = round_money(fig["total_cost"] - base_fig["total_cost"], w.places)
        ws.write_formula(r, col["delta_vs_base"], "=" + w.round_f(f"{tot}{x}-{tot}{b}"), f["money"], delta)
        ws.write_formula(r, col["delta_pct"], f"=IF({tot}{b}=0,0,{dv}{x}/{tot}{b})", pct,
                         delta / base_fig["total_cost"] if base_fig["total_cost"] else 0.0)
        rerouted = sum(1 for res in results if route_text(res) != base_routes.get(res.shipment.shipment_id))
        ws.write_number(r, col["rerouted"], rerouted)
    last_total = first + len(rows) - 1
    # what each scenario changes, a line each below the totals (a cell alone on its row, so a long
    # list wraps across the columns instead of widening the first)
    r = last_total + 2
    ws.write_string(r, 0, "What each scenario changes in the input (the Scenarios sheet):", f["bold"])
    for name, changes, _results, _fig in rows[1:]:
        r += 1
        ws.write_string(r, 0, cell_text(f"{name}: {'; '.join(changes)}"))
    ws.freeze_panes(3, 1)
    return first, last_total
