"""The Scenario legs sheet: every scenario's legs on one long sheet keyed by a `scenario` column,
written by the Legs row writer (costing.sheets.legs.write_legs), so each row carries the
scenario's own rates and the same live formulas as the base case's Legs, with values cached;
continues on "Scenario legs 2", ... at the row limit."""

from __future__ import annotations

from costing.contract.outputs import SCENARIO_KEY, SCENARIO_LEGS
from costing.sheets.formats import Writer
from costing.sheets.legs import legs_sheet_names, write_legs


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
    return write_legs(w, sheets, results, key=(SCENARIO_KEY, keys))
