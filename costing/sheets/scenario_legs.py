"""The Scenario legs and Scenario vehicle runs sheets: every scenario's legs on one long sheet keyed
by a `scenario` column, written by the Legs row writer (costing.sheets.legs.write_legs), so each
row carries the scenario's own rates and the same live formulas as the base case's Legs, with
values cached (continuing on "Scenario legs 2", ... at the row limit); and every scenario's vehicle
runs, written by the Vehicle runs writer, which the legs' shares refer to."""

from __future__ import annotations

from costing.contract.outputs import SCENARIO_KEY, SCENARIO_LEGS, SCENARIO_VEHICLE_RUNS
from costing.sheets.formats import Writer
from costing.sheets.legs import legs_sheet_names, write_legs
from costing.sheets.vehicle_runs import write_vehicle_runs


def scenario_results(runs) -> tuple[list, list[str]]:
    """Every scenario's results in scenario order and, beside each, its scenario's name."""
    results, keys = [], []
    for run in runs:
        results += run.results
        keys += [run.scenario.name] * len(run.results)
    return results, keys


def scenario_legs_sheet_names(runs) -> list[str]:
    """Names of the sheets the scenarios' legs need (Scenario legs, Scenario legs 2, ...)."""
    return legs_sheet_names(scenario_results(runs)[0], SCENARIO_LEGS)


def write_scenario_legs(w: Writer, sheets, runs) -> tuple[dict[tuple[str, str], tuple[str, int, int]],
                                                          dict[str, int]]:
    """Write the legs of every scenario run (costing.plan.analysis.ScenarioRun) on `sheets`
    [(name, worksheet), ...]. Returns (scenario, shipment id) -> (sheet, first row, last row)
    (1-based, inclusive) and sheet -> its last data row (1-based)."""
    results, keys = scenario_results(runs)
    rows = scenario_run_rows(runs)
    return write_legs(w, sheets, results, key=(SCENARIO_KEY, keys), runs_sheet=SCENARIO_VEHICLE_RUNS,
                      run_row=lambda k, run_id: rows[(k, run_id)], runs_shift=1)


def scenario_run_rows(runs) -> dict[tuple[str, str], int]:
    """(scenario, run id) -> its row (1-based) on Scenario vehicle runs: every scenario's vehicle
    runs in scenario order, each scenario's in its own order."""
    rows: dict[tuple[str, str], int] = {}
    for run in runs:
        for vr in run.runs:
            rows[(run.scenario.name, vr.run_id)] = len(rows) + 2
    return rows


def write_scenario_vehicle_runs(w: Writer, ws, runs, ranges) -> int:
    """Every scenario's vehicle runs on one sheet keyed by a `scenario` column, with the Vehicle
    runs formulas over the scenario's rows on Scenario legs (`ranges`, from write_scenario_legs).
    Returns the last data row (1-based)."""
    all_runs, keys = [], []
    for run in runs:
        all_runs += run.runs
        keys += [run.scenario.name] * len(run.runs)
    return write_vehicle_runs(w, ws, all_runs, ranges, key=(SCENARIO_KEY, keys))
