"""The Charts sheet: native spreadsheet charts over the Summary, Trade-offs and Scenario sheets."""

from __future__ import annotations

from costing.contract.outputs import SCENARIO_COMPONENTS, SCENARIO_TOTAL_COLUMNS, SUM, TRADEOFF_COLUMNS
from costing.sheets.formats import Writer, component

# the charts sit in a grid of two columns beside the first chart's data
CHART_W, CHART_H = 520, 330  # pixels
GRID_COL = 3  # column D
CHART_COLS, CHART_ROWS = 8, 17  # grid step: 8 default columns (512 px), 17 rows (340 px)


def write_charts(w: Writer, ws, results, last_row: int, frontier_rows, scenario_rows=None,
                 n_lanes: int = 0) -> None:
    """Native charts: cost by component (from the Summary TOTAL row), the cost-time trade-offs of
    the costliest shipments (from the Trade-offs sheet), the scenarios, and the fill rate by
    weight of the costliest lanes (from the first `n_lanes` rows of the Lane usage sheet)."""
    ws.write_string(0, 0, "Charts are drawn from the Summary, Trade-offs and Scenario comparison sheets; "
                    "they follow those figures when rates change and the workbook recalculates.",
                    w.f["bold"])
    components = SCENARIO_COMPONENTS
    total_row = last_row + 1  # 0-based TOTAL row of Summary
    # the first chart's data, beside it: each component's name and its Summary TOTAL by formula
    ws.write_string(2, 0, "component", w.f["head"])
    ws.write_string(2, 1, f"all shipments ({w.model.settings.currency})", w.f["head"])
    from xlsxwriter.utility import xl_col_to_name

    routed = [r for r in results if r.status == "routed"]
    for k, name in enumerate(components, start=3):
        ws.write_string(k, 0, name)
        value = round(sum(component(r, name) for r in routed), w.places)
        ref = (f"-Summary!{xl_col_to_name(SUM['saving'])}" if name == "consolidation_saving"
               else f"Summary!{xl_col_to_name(SUM[name])}")
        ws.write_formula(k, 1, f"={ref}{total_row + 1}", w.f["money"], value)
    first, last = 3, 2 + len(components)
    chart = w.wb.add_chart({"type": "bar"})
    chart.add_series({"name": "cost", "categories": [ws.name, first, 0, last, 0],
                      "values": [ws.name, first, 1, last, 1], "fill": {"color": "#4472C4"},
                      "data_labels": {"value": True, "num_format": "#,##0"}})
    chart.set_title({"name": "Cost by component, all shipments"})
    chart.set_x_axis({"name": w.model.settings.currency, "num_format": "#,##0"})
    chart.set_y_axis({"name": "cost component", "reverse": True})
    chart.set_legend({"none": True})
    chart.set_size({"width": CHART_W, "height": CHART_H})
    ws.insert_chart(2, GRID_COL, chart)
    slots = [(2, GRID_COL + CHART_COLS), (2 + CHART_ROWS, GRID_COL), (2 + CHART_ROWS, GRID_COL + CHART_COLS),
             (2 + 2 * CHART_ROWS, GRID_COL), (2 + 2 * CHART_ROWS, GRID_COL + CHART_COLS)]
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
        st = w.model.settings
        elapsed = st.driving_rules != "none" and st.driving_clock_in_search == "yes"
        axis = "elapsed hours (with breaks and rests)" if elapsed else "hours (drive + handling)"
        sc.set_x_axis({"name": axis})
        sc.set_y_axis({"name": f"total cost ({w.model.settings.currency})", "num_format": "#,##0"})
        sc.set_size({"width": CHART_W, "height": CHART_H})
        ws.insert_chart(*slots.pop(0), sc)
    if scenario_rows:
        a, b = scenario_rows  # 0-based rows of the scenario totals on "Scenario comparison"
        name = "Scenario comparison"
        bar = w.wb.add_chart({"type": "bar"})
        total_col = SCENARIO_TOTAL_COLUMNS.index("total_cost")
        bar.add_series({"name": "total_cost", "categories": [name, a, 0, b, 0],
                        "values": [name, a, total_col, b, total_col],
                        "data_labels": {"value": True, "num_format": "#,##0"}})
        bar.set_title({"name": "Total cost per scenario"})
        bar.set_x_axis({"name": w.model.settings.currency, "num_format": "#,##0", "min": 0})
        bar.set_y_axis({"name": "scenario", "reverse": True})
        bar.set_legend({"none": True})
        bar.set_size({"width": CHART_W, "height": CHART_H})
        ws.insert_chart(*slots.pop(0), bar)
        stack = w.wb.add_chart({"type": "column", "subtype": "stacked"})
        at = {h: i for i, h in enumerate(SCENARIO_TOTAL_COLUMNS)}
        for comp in SCENARIO_COMPONENTS:
            stack.add_series({"name": comp, "categories": [name, a, 0, b, 0],
                              "values": [name, a, at[comp], b, at[comp]]})
        stack.set_title({"name": "Cost by component per scenario"})
        stack.set_y_axis({"name": w.model.settings.currency, "num_format": "#,##0"})
        stack.set_x_axis({"name": "scenario"})
        stack.set_legend({"position": "bottom"})
        stack.set_size({"width": CHART_W, "height": CHART_H})
        ws.insert_chart(*slots.pop(0), stack)
    if n_lanes:
        from costing.contract.outputs import LANE_COLUMNS, LANE_USAGE

        shown = min(n_lanes, 15)
        fill = [name for name, _w, _k in LANE_COLUMNS].index("fill_weight")
        fc = w.wb.add_chart({"type": "bar"})
        fc.add_series({"name": "fill rate by weight", "categories": [LANE_USAGE, 1, 0, shown, 0],
                       "values": [LANE_USAGE, 1, fill, shown, fill], "fill": {"color": "#70AD47"},
                       "data_labels": {"value": True, "num_format": "0%"}})
        fc.set_title({"name": f"Fill rate by weight, the {shown} costliest lanes"})
        fc.set_x_axis({"name": "tonnes carried / payload of the vehicles run", "num_format": "0%",
                       "min": 0, "max": 1})
        fc.set_y_axis({"name": "lane", "reverse": True})
        fc.set_legend({"none": True})
        fc.set_size({"width": CHART_W, "height": CHART_H})
        ws.insert_chart(*slots.pop(0), fc)
