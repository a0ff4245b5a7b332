"""The Charts sheet: native spreadsheet charts over the Summary, Trade-offs and Scenario sheets."""

from __future__ import annotations

from costing.contract.outputs import SCENARIO_COMPONENTS, SUM, TRADEOFF_COLUMNS
from costing.sheets.formats import Writer, page


def write_charts(w: Writer, ws, results, last_row: int, frontier_rows, scenario_rows=None) -> None:
    """Native charts: cost by component (from the Summary TOTAL row) and the cost-time
    trade-offs of the costliest shipments (from the Trade-offs sheet)."""
    page(ws)
    ws.set_column(0, 0, 2)
    ws.write_string(0, 1, "Charts are drawn from the Summary and Trade-offs sheets; "
                    "they follow those figures when rates change and the workbook recalculates.",
                    w.f["bold"])
    components = ["km_cost", "hour_cost", "toll_cost", "fixed_cost", "fuel_surcharge", "stop_cost",
                  "handling_cost", "trip_cost", "min_charge_uplift"]
    total_row = last_row + 1  # 0-based TOTAL row of Summary
    chart = w.wb.add_chart({"type": "column"})
    for name in components:
        ci = SUM[name]
        chart.add_series({"name": name,
                          "categories": ["Summary", 0, SUM["total_cost"], 0, SUM["total_cost"]],
                          "values": ["Summary", total_row, ci, total_row, ci]})
    chart.set_title({"name": "Cost by component, all shipments"})
    chart.set_y_axis({"name": w.model.settings.currency, "num_format": "#,##0"})
    chart.set_x_axis({"visible": False})
    chart.set_legend({"position": "right"})
    chart.set_size({"width": 760, "height": 380})
    ws.insert_chart(2, 1, chart)
    costliest = sorted((r for r in results if r.shipment.shipment_id in frontier_rows),
                       key=lambda r: -r.total_cost)
    picked = [r for r in costliest if frontier_rows[r.shipment.shipment_id][1]
              - frontier_rows[r.shipment.shipment_id][0] >= 1][:5]
    if picked:
        sc = w.wb.add_chart({"type": "scatter", "subtype": "straight_with_markers"})
        hi = TRADEOFF_COLUMNS.index(("hours", 9, "hours"))
        ci = TRADEOFF_COLUMNS.index(("total_cost", 12, "money"))
        for r in picked:
            a, b = frontier_rows[r.shipment.shipment_id]  # 1-based first row, 0-based last+1
            sc.add_series({"name": r.shipment.shipment_id,
                           "categories": ["Trade-offs", a - 1, hi, b - 1, hi],
                           "values": ["Trade-offs", a - 1, ci, b - 1, ci],
                           "marker": {"type": "circle", "size": 6}})
        sc.set_title({"name": "Cost against hours: trade-offs of the costliest shipments"})
        sc.set_x_axis({"name": "hours (drive + handling)"})
        sc.set_y_axis({"name": f"total cost ({w.model.settings.currency})", "num_format": "#,##0"})
        sc.set_size({"width": 760, "height": 420})
        ws.insert_chart(23, 1, sc)
    if scenario_rows:
        a, b = scenario_rows  # 0-based rows of the scenario totals on "Scenario comparison"
        name = "Scenario comparison"
        bar = w.wb.add_chart({"type": "bar"})
        total_col = 2 + len(SCENARIO_COMPONENTS)  # columns: scenario, routed, components, total
        bar.add_series({"name": "total_cost", "categories": [name, a, 0, b, 0],
                        "values": [name, a, total_col, b, total_col],
                        "data_labels": {"value": True, "num_format": "#,##0"}})
        bar.set_title({"name": "Total cost per scenario"})
        bar.set_x_axis({"name": w.model.settings.currency, "num_format": "#,##0", "min": 0})
        bar.set_legend({"none": True})
        bar.set_size({"width": 760, "height": 320})
        ws.insert_chart(45, 1, bar)
        stack = w.wb.add_chart({"type": "column", "subtype": "stacked"})
        for k, comp in enumerate(SCENARIO_COMPONENTS):
            stack.add_series({"name": comp, "categories": [name, a, 0, b, 0],
                              "values": [name, a, 2 + k, b, 2 + k]})
        stack.set_title({"name": "Cost by component per scenario"})
        stack.set_y_axis({"name": w.model.settings.currency, "num_format": "#,##0"})
        stack.set_size({"width": 760, "height": 400})
        ws.insert_chart(62, 1, stack)
