"""The Lane usage sheet: per lane, the vehicle runs, loads, tonnes, vehicle trips, vehicle-km,
payload capacity, fill rate by weight and cost, as formulas over the Vehicle runs sheet (one row
per run, so the sums stay small when the Legs sheet is large)."""

from __future__ import annotations

from xlsxwriter.utility import xl_col_to_name

from costing.contract.outputs import LANE_COLUMNS, RUN_COL, VEHICLE_RUNS
from costing.money import round_money
from costing.sheets.formats import Writer, cell_text, sheet_ref

C_VEHICLES = xl_col_to_name(RUN_COL["vehicles"])


# a lane with at most this many vehicle runs adds its runs' cells by name; more, SUMIFS over the
# whole Vehicle runs sheet. 120 keeps the longest formula (vehicles x km, about 50 characters a
# run) near 6,000 characters, under the 8,192 a spreadsheet formula may hold, and COUNT's list
# under its 255 arguments. On the 5,000-shipment week of benchmarks/bench_week.py 116 of 1,547
# lanes had more than 40 runs, each with formulas over every run row.
NAMED_RUNS = 120
MAX_FORMULA = 8000  # characters; a longer named sum falls back to SUMIFS (the limit is 8,192)


def write_lane_usage(w: Writer, ws, analysis, n_runs: int, runs=None) -> None:
    """Where the money goes: per lane (both directions together), the vehicle runs, loads,
    tonnes, vehicle trips, vehicle-km, capacity and cost as formulas over the `n_runs` rows of the
    Vehicle runs sheet, with the values of ``analysis.lanes`` (costing.plan.analysis.lane_usage,
    summed in the same row order) cached.

    With `runs` (the Vehicle runs rows, in order), a lane of at most NAMED_RUNS runs adds its own
    runs' cells by name (``='Vehicle runs'!R5+'Vehicle runs'!R77``), in run order: each formula
    reads only its lane's rows, so a recalculation reads every run row about once. Other lanes
    (and every lane without `runs`) use COUNTIF / SUMIFS / SUMPRODUCT over the whole sheet."""
    w.header(ws, LANE_COLUMNS)
    c = {name: i for i, (name, _w, _k) in enumerate(LANE_COLUMNS)}
    C = {name: xl_col_to_name(i) for name, i in c.items()}
    vr = sheet_ref(VEHICLE_RUNS)
    rows_of: dict[str, list[int]] = {}
    for k, run in enumerate(runs or ()):
        rows_of.setdefault(run.leg.use.lane.lane_id, []).append(k + 2)

    def rng(col: str) -> str:
        letter = xl_col_to_name(RUN_COL[col])
        return f"{vr}!${letter}$2:${letter}${max(n_runs + 1, 2)}"

    def named(col: str, rows: list[int], times: str | None = None) -> str:
        letter = xl_col_to_name(RUN_COL[col])
        if times is None:
            return "+".join(f"{vr}!{letter}{x}" for x in rows)
        other = xl_col_to_name(RUN_COL[times])
        return "+".join(f"{vr}!{letter}{x}*{vr}!{other}{x}" for x in rows)

    total_cost = round_money(sum(u.cost for u in analysis.lanes), w.places)
    n = len(analysis.lanes)
    for r, u in enumerate(analysis.lanes, start=1):
        x = r + 1
        ws.write_string(r, c["lane_id"], cell_text(u.lane_id))
        ws.write_string(r, c["from_depot"], cell_text(u.from_depot))
        ws.write_string(r, c["to_depot"], cell_text(u.to_depot))
        ws.write_string(r, c["mode"], u.mode)
        rows = rows_of.get(u.lane_id, [])
        longest = named("vehicles", rows, "distance_km") if rows and len(rows) <= NAMED_RUNS else ""
        if rows and len(rows) <= NAMED_RUNS and len(longest) < MAX_FORMULA:
            # the runs counted by their vehicles cell (a number on every run row)
            ws.write_formula(r, c["runs"], f"=COUNT({','.join(f'{vr}!{C_VEHICLES}{y}' for y in rows)})",
                             w.f["int"], u.runs)
            for col, run_col, kind, value in (("legs", "loads", "int", u.legs),
                                              ("tonnes", "tonnes", "km", u.tonnes),
                                              ("vehicle_trips", "vehicles", "int", u.vehicle_trips)):
                ws.write_formula(r, c[col], "=" + named(run_col, rows), w.f[kind], value)
            for col, other, value in (("vehicle_km", "distance_km", u.vehicle_km),
                                      ("capacity_t", "payload_t", u.capacity_t)):
                ws.write_formula(r, c[col], "=" + named("vehicles", rows, other), w.f["km"], value)
            cost = w.round_f(named("run_cost", rows))
        else:
            key = f"$A{x}"
            lane = rng("lane_id")
            ws.write_formula(r, c["runs"], f"=COUNTIF({lane},{key})", w.f["int"], u.runs)
            sums = (("legs", "loads", "int", u.legs), ("tonnes", "tonnes", "km", u.tonnes),
                    ("vehicle_trips", "vehicles", "int", u.vehicle_trips))
            for col, run_col, kind, value in sums:
                ws.write_formula(r, c[col], f"=SUMIFS({rng(run_col)},{lane},{key})", w.f[kind], value)
            for col, other, value in (("vehicle_km", "distance_km", u.vehicle_km),
                                      ("capacity_t", "payload_t", u.capacity_t)):
                ws.write_formula(r, c[col], f"=SUMPRODUCT(({lane}={key})*{rng('vehicles')}*{rng(other)})",
                                 w.f["km"], value)
            cost = w.round_f(f"SUMIFS({rng('run_cost')},{lane},{key})")
        cap, tonnes = f"{C['capacity_t']}{x}", f"{C['tonnes']}{x}"
        ws.write_formula(r, c["fill_weight"], f"=IF({cap}=0,0,{tonnes}/{cap})", w.f["pct"], u.fill_weight)
        ws.write_formula(r, c["cost"], "=" + cost, w.f["money"], round_money(u.cost, w.places))
        whole = f"SUM(${C['cost']}$2:${C['cost']}${n + 1})"
        ws.write_formula(r, c["share_of_cost"], f"=IF({whole}=0,0,{C['cost']}{x}/{whole})", w.f["pct"],
                         (round_money(u.cost, w.places) / total_cost) if total_cost else 0.0)
    ws.autofilter(0, 0, max(n, 1), len(LANE_COLUMNS) - 1)
    if n:
        ws.conditional_format(1, c["cost"], n, c["cost"], {"type": "data_bar", "bar_color": "#9DC3E6"})
        ws.conditional_format(1, c["fill_weight"], n, c["fill_weight"],
                              {"type": "3_color_scale", "min_color": "#F8CBAD", "mid_color": "#FFE699",
                               "max_color": "#C6EFCE"})
