"""Write the costed workbook: one module per output sheet (costing.sheets.*), called here in
the order the sheets appear. Every audited figure is a live formula with its value cached;
every string from the input is written as text. Knows xlsxwriter; knows nothing of the search."""

from __future__ import annotations

import xlsxwriter

from costing.collector import fewer_collections
from costing.contract import outputs as out
from costing.errors import OutputLimitError
from costing.model import Model, Problem
from costing.price.cost import CostedShipment
from costing.sheets import legs
from costing.sheets.bridge import BridgeFormats, write_scenario_bridge
from costing.sheets.carrier_charges import carrier_rows, write_carrier_charges
from costing.sheets.charts import write_charts
from costing.sheets.comparison import write_comparison
from costing.sheets.currency_conversion import conversion_rows, write_currency_conversion
from costing.sheets.customers import write_cost_per_customer
from costing.sheets.formats import MAX_ROWS, Writer, fast_formulas
from costing.sheets.invoice_check import write_invoice_check
from costing.sheets.lane_usage import write_lane_usage
from costing.sheets.legs import legs_sheet_names, write_legs
from costing.sheets.map_sheet import write_map
from costing.sheets.problems import write_problems
from costing.sheets.run import RunInfo, run_time, write_run
from costing.sheets.scenario_legs import (
    scenario_legs_sheet_names,
    write_scenario_legs,
    write_scenario_vehicle_runs,
)
from costing.sheets.scenario_sheet import write_scenarios
from costing.sheets.scenario_shipments import write_scenario_shipments
from costing.sheets.summary import write_summary
from costing.sheets.tradeoffs import write_tradeoffs
from costing.sheets.vehicle_runs import write_vehicle_runs

__all__ = ["OutputLimitError", "RunInfo", "run_time", "write_costed"]


@fewer_collections()  # costing.collector: the same results, fewer full collections
def write_costed(path: str, model: Model, results: list[CostedShipment], problems: list[Problem],
                 info: RunInfo, analysis=None, map_png=None, scenario_runs=(),
                 runs=(), scenario_bridges=()) -> None:
    """Write the costed workbook. `runs` (costing.plan.week.VehicleRun, ``Costed.runs``) are the
    vehicle runs the results' legs name; `analysis` (costing.plan.analysis.Analysis) adds the
    Comparison, Trade-offs, Lane usage and Charts sheets; `map_png` (PNG bytes, or a
    `costing.aside.Job` drawing them, collected when the Map sheet is written) a Map sheet; `scenario_runs`
    (costing.plan.analysis.ScenarioRun) the Scenario comparison, Scenario shipments, Scenario
    vehicle runs and Scenario legs sheets; `scenario_bridges` ((scenario name,
    costing.compare.bridge.Bridge) pairs) the Scenario bridge sheets."""
    named = {leg.run_id for r in results for leg in r.legs if leg.run_id}
    loaded = [run for run in runs if not run.empty_for]  # empty returns carry no legs
    if len(named) != len(loaded) or any(run.run_id not in named for run in loaded):
        raise ValueError(f"the results' legs name {len(named)} vehicle runs but {len(runs)} were given: "
                         "pass Costed.runs with Costed.results")
    if len(results) + 2 > MAX_ROWS:
        raise OutputLimitError(f"{len(results):,} shipments do not fit on one Summary sheet "
                               f"({MAX_ROWS:,} rows)",
                               "install pyarrow (pip install 'costing[parquet]') and the run writes them as "
                               "Parquet files beside a summary workbook (costing run --parquet), or cost the "
                               "shipments in batches of under a million")
    n_legs = sum(len(r.legs) for r in results)
    n_scenario_legs = sum(len(r.legs) for run in scenario_runs for r in run.results)
    if len(scenario_runs) * len(results) + 2 > MAX_ROWS:
        raise OutputLimitError(f"{len(scenario_runs)} scenarios of {len(results):,} shipments do not fit on "
                               f"one {out.SCENARIO_SHIPMENTS} sheet ({MAX_ROWS:,} rows)",
                               "install pyarrow (pip install 'costing[parquet]') and the run writes the "
                               "scenario rows as Parquet files beside a summary workbook (costing run "
                               "--parquet), or run fewer scenarios at a time")
    w = Writer(path, model, info.created, streaming=n_legs + n_scenario_legs >= legs.STREAMING_LEGS)
    summary = w.wb.add_worksheet(out.SUMMARY)
    sheets = {}
    if scenario_runs:
        sheets["Scenarios"] = w.wb.add_worksheet(out.SCENARIO_COMPARISON)
    if scenario_bridges:  # the bridge sheet lays itself out (hidden chart columns): not measured
        sheets["Scenario bridge"] = xlsxwriter.Workbook.add_worksheet(w.wb, out.SCENARIO_BRIDGE)
        sheets["Scenario bridge shipments"] = w.wb.add_worksheet(out.SCENARIO_BRIDGE_SHIPMENTS)
    runs_ws = w.wb.add_worksheet(out.VEHICLE_RUNS)
    legs_sheets = [(name, w.wb.add_worksheet(name)) for name in legs_sheet_names(results)]
    quoted = carrier_rows(results)
    if quoted:
        sheets["Carrier charges"] = w.wb.add_worksheet(out.CARRIER_CHARGES)
    converted = conversion_rows(model, results, quoted, w.places)
    if converted:
        sheets["Currency conversion"] = w.wb.add_worksheet(out.CURRENCY_CONVERSION)
    if scenario_runs:
        scenario_ships_ws = w.wb.add_worksheet(out.SCENARIO_SHIPMENTS)
        scenario_runs_ws = w.wb.add_worksheet(out.SCENARIO_VEHICLE_RUNS)
        scenario_legs_sheets = [(name, w.wb.add_worksheet(name))
                                for name in scenario_legs_sheet_names(scenario_runs)]
    if analysis is not None:
        if analysis.alternatives:
            sheets["Comparison"] = w.wb.add_worksheet(out.COMPARISON)
        if analysis.frontiers:
            sheets["Trade-offs"] = w.wb.add_worksheet(out.TRADE_OFFS)
        sheets["Lane usage"] = w.wb.add_worksheet(out.LANE_USAGE)
    sheets["Cost per customer"] = w.wb.add_worksheet(out.COST_PER_CUSTOMER)
    if any(r.shipment.invoiced is not None for r in results):
        sheets["Invoice check"] = w.wb.add_worksheet(out.INVOICE_CHECK)
    if analysis is not None:
        sheets["Charts"] = w.wb.add_worksheet(out.CHARTS)
    if map_png:
        sheets["Map"] = w.wb.add_worksheet(out.MAP)
    problems_ws = w.wb.add_worksheet(out.PROBLEMS)
    run_ws = w.wb.add_worksheet(out.RUN)
    for sheet in w.wb.worksheets():
        fast_formulas(sheet)
    ranges, w.legs_last = write_legs(w, legs_sheets, results)
    if len(legs_sheets) > 1:
        info.extra["Legs sheets"] = (f"{', '.join(n for n, _ws in legs_sheets)}: one sheet holds at most "
                                     f"{legs.LEGS_SHEET_ROWS:,} legs (the spreadsheet row limit); a "
                                     "shipment's legs are never split across sheets")
    write_vehicle_runs(w, runs_ws, runs, ranges)
    if quoted:
        write_carrier_charges(w, sheets["Carrier charges"], results)
    if converted:
        write_currency_conversion(w, sheets["Currency conversion"], converted)
    last_row = write_summary(w, summary, results, ranges, quoted)
    frontier_rows: dict[str, tuple[int, int]] = {}
    scenario_rows = None
    if scenario_runs:
        scenario_ranges, scenario_legs_last = write_scenario_legs(w, scenario_legs_sheets, scenario_runs)
        if len(scenario_legs_sheets) > 1:
            info.extra["Scenario legs sheets"] = (f"{', '.join(n for n, _ws in scenario_legs_sheets)}: at "
                                                  f"most {legs.LEGS_SHEET_ROWS:,} legs a sheet")
        write_scenario_vehicle_runs(w, scenario_runs_ws, scenario_runs, scenario_ranges)
        _rows, ship_last = write_scenario_shipments(w, scenario_ships_ws, scenario_runs, scenario_ranges,
                                                    results)
        scenario_rows = write_scenarios(w, sheets["Scenarios"], results, scenario_runs, last_row,
                                        scenario_legs_last, ship_last)
    if scenario_bridges:
        write_scenario_bridge(w.wb, sheets["Scenario bridge"], sheets["Scenario bridge shipments"],
                              list(scenario_bridges), BridgeFormats(w.wb, model.settings.currency, w.places))
    if "Comparison" in sheets:
        write_comparison(w, sheets["Comparison"], results, analysis)
    if "Trade-offs" in sheets:
        frontier_rows = write_tradeoffs(w, sheets["Trade-offs"], results, analysis)
    if "Lane usage" in sheets:
        write_lane_usage(w, sheets["Lane usage"], analysis, len(runs), runs)
        write_charts(w, sheets["Charts"], results, last_row, frontier_rows, scenario_rows,
                     len(analysis.lanes))
    write_cost_per_customer(w, sheets["Cost per customer"], results, last_row)
    if "Invoice check" in sheets:
        write_invoice_check(w, sheets["Invoice check"], results)
    if map_png:
        write_map(w, sheets["Map"], map_png.result() if hasattr(map_png, "result") else map_png)
    write_problems(w, problems_ws, problems)
    write_run(w, run_ws, model, results, problems, info, last_row, n_legs, runs, len(quoted))
    summary.activate()
    w.wb.close()
