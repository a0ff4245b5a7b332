"""A week of freight with every sheet on, stage by stage, against the floor of only reading the
input and writing as many plain rows.

    python -m benchmarks.bench_week                  # 1,000 depots, 2,000 lanes, 5,000 shipments
    python -m benchmarks.bench_week --smoke          # 200 depots, 400 lanes, 200 shipments
    python -m benchmarks.bench_week --serial         # no second process (costing.aside)

The input is the invented, seeded network of `benchmarks.bench_workbook` (depots in a region of
lat/lon joined to their nearest neighbours, trunk lanes up to 250 km), with 40 origins and the
Settings left at their defaults: the comparison across objectives and the cost-time trade-offs
(6 routes) are on, as are the map and every other sheet. The run goes through the pipeline as the
command line does (`pipeline.load`, `pipeline.run`, the map, `sheets.writer.write_costed`); the
stage table takes the pipeline's own timings (`Costed.seconds`, and the search's
`RunStats.seconds`) and times each sheet writer and the closing of the workbook (the zip) by
wrapping them for this run only.

The floor, in the same run: read every input row with openpyxl (read-only) and write as many
15-cell rows (one text, fourteen numbers) with xlsxwriter as the costed workbook holds on all its
sheets. Prints the tables (pandas) and the ratio; asserts nothing about time.
"""

from __future__ import annotations

import argparse
import functools
import os
import resource
import tempfile
import time

import pandas as pd

from benchmarks.bench_workbook import make_input
from costing import aside
from costing.collector import fewer_collections

FLOOR_COLUMNS = 15
SHEET_WRITERS = ("write_legs", "write_vehicle_runs", "write_summary", "write_scenarios",
                 "write_scenario_legs", "write_scenario_shipments", "write_scenario_vehicle_runs",
                 "write_comparison", "write_tradeoffs", "write_lane_usage", "write_charts", "write_map",
                 "write_problems", "write_run")


def floor(inp: str, out: str, rows: int) -> tuple[float, float]:
    """(read seconds, write seconds): read every input row (openpyxl, read-only), then write
    `rows` rows of FLOOR_COLUMNS cells (xlsxwriter, streamed), a sheet per million rows."""
    import openpyxl
    import xlsxwriter

    t0 = time.perf_counter()
    wb = openpyxl.load_workbook(inp, read_only=True, data_only=True)
    for ws in wb:
        for _row in ws.iter_rows(values_only=True):
            pass
    wb.close()
    read = time.perf_counter() - t0
    t0 = time.perf_counter()
    out_wb = xlsxwriter.Workbook(out, {"constant_memory": True})
    ws = None
    for r in range(rows):
        if r % 1_000_000 == 0:
            ws = out_wb.add_worksheet(f"Rows {r // 1_000_000 + 1}")
        k = r % 1_000_000
        ws.write_string(k, 0, f"S{r}")
        for c in range(1, FLOOR_COLUMNS):
            ws.write_number(k, c, r * 0.5 + c)
    out_wb.close()
    return read, time.perf_counter() - t0


def timed(store: dict[str, float], name: str, fn):
    """`fn` wrapped to add its wall seconds to ``store[name]`` on every call."""
    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        t0 = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            store[name] = store.get(name, 0.0) + time.perf_counter() - t0
    return wrapper


@fewer_collections()  # as the command line runs load, run, map and write (costing.collector)
def costed_run(inp: str, out: str, aside: bool = True) -> tuple[list[tuple[str, str, float]], dict]:
    """Run the pipeline and write the workbook as the command line does (with `aside`: the
    trade-off searches and the map in a second process when forking is available,
    `costing.aside`); returns the stage rows (group, stage, seconds) and a few counts."""
    import xlsxwriter

    from costing import pipeline
    from costing.sheets import writer
    from costing.sheets.map import start_map
    from costing.sheets.writer import RunInfo, run_time, write_costed

    rows: list[tuple[str, str, float]] = []
    started = time.perf_counter()
    t0 = time.perf_counter()
    model, problems, digest = pipeline.load(inp)
    rows.append(("read", "read and validate (pipeline.load)", time.perf_counter() - t0))
    assert model is not None and not any(p.severity == "error" for p in problems), problems[:3]
    costed = pipeline.run(model, pipeline.Options(aside=aside))
    for stage, secs in costed.seconds.items():
        rows.append(("pipeline", stage, secs))
    for stage, secs in costed.stats.seconds.items():
        rows.append(("  within", stage, secs))
    t0 = time.perf_counter()
    png = start_map(model, costed.analysis.lanes, "bench week: lanes and routed tonnes", fork=aside)
    rows.append(("write", "map picture" + (" (started aside)" if hasattr(png, "result") else ""),
                 time.perf_counter() - t0))

    sheet_secs: dict[str, float] = {}
    saved = {name: getattr(writer, name) for name in SHEET_WRITERS}
    close = xlsxwriter.Workbook.close
    try:
        for name in SHEET_WRITERS:
            setattr(writer, name, timed(sheet_secs, name, saved[name]))
        xlsxwriter.Workbook.close = timed(sheet_secs, "workbook close (zip)", close)
        info = RunInfo(os.path.basename(inp), digest, None, run_time(), costed.stats)
        t0 = time.perf_counter()
        write_costed(out, model, costed.results, costed.problems, info, costed.analysis, png,
                     costed.scenarios, costed.runs)
        written = time.perf_counter() - t0
    finally:
        for name, fn in saved.items():
            setattr(writer, name, fn)
        xlsxwriter.Workbook.close = close
    for name, secs in sheet_secs.items():
        rows.append(("write", name.replace("write_", "sheet: "), secs))
    rows.append(("write", "rest of write_costed", written - sum(sheet_secs.values())))
    total = time.perf_counter() - started
    a = costed.analysis
    counts = {"seconds": total, "shipments": len(costed.results),
              "routed": sum(r.status == "routed" for r in costed.results),
              "legs": sum(len(r.legs) for r in costed.results),
              "comparison shipments": len(a.alternatives),
              "trade-off routes": sum(len(f[0]) for f in a.frontiers.values()),
              "total cost": round(sum(r.total_cost for r in costed.results), 2)}
    return rows, counts


def _cpu() -> float:
    """CPU seconds (user + system) of this process and of its waited-for children."""
    me, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime


def sheet_rows(path: str) -> dict[str, int]:
    import openpyxl

    wb = openpyxl.load_workbook(path, read_only=True)
    try:
        return {name: wb[name].max_row or 0 for name in wb.sheetnames}
    finally:
        wb.close()


def main(argv=None) -> dict:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--depots", type=int, default=1000)
    p.add_argument("--lanes", type=int, default=2000)
    p.add_argument("--shipments", type=int, default=5000)
    p.add_argument("--origins", type=int, default=40)
    p.add_argument("--smoke", action="store_true", help="200 depots, 400 lanes, 200 shipments")
    p.add_argument("--serial", action="store_true",
                   help="one process: no trade-off searches or map in a second process (costing.aside)")
    args = p.parse_args(argv)
    if args.smoke:
        args.depots, args.lanes, args.shipments, args.origins = 200, 400, 200, 10
    pd.set_option("display.width", 120)
    with tempfile.TemporaryDirectory() as tmp:
        inp = os.path.join(tmp, "week-input.xlsx")
        make_input(inp, args.depots, args.lanes, args.shipments, args.origins, settings={})
        out = os.path.join(tmp, "week-costed.xlsx")
        cpu0 = _cpu()
        rows, counts = costed_run(inp, out, aside=not args.serial)
        counts["cpu"] = _cpu() - cpu0
        per_sheet = sheet_rows(out)
        n_rows = sum(per_sheet.values())
        read, write = floor(inp, os.path.join(tmp, "floor.xlsx"), n_rows)
    base = read + write
    print(f"week: {args.depots:,} depots, {args.lanes:,} lanes, {counts['shipments']:,} shipments from "
          f"{args.origins} origins; {counts['routed']:,} routed, {counts['legs']:,} legs, "
          f"{counts['trade-off routes']:,} trade-off routes; total cost {counts['total cost']:,.2f}")
    table = pd.DataFrame(rows, columns=["group", "stage", "seconds"])
    top = table[table["group"] != "  within"]
    table["share %"] = 100 * table["seconds"] / counts["seconds"]
    print(table.to_string(index=False, float_format=lambda x: f"{x:,.2f}"))
    print(f"stages outside the 'within' rows add up to {top['seconds'].sum():.1f} s of "
          f"{counts['seconds']:.1f} s end to end")
    print(pd.DataFrame(sorted(per_sheet.items()), columns=["sheet", "rows"]).to_string(index=False))
    summary = pd.DataFrame([("costing end to end", counts["seconds"]),
                            ("floor: read input (openpyxl)", read),
                            (f"floor: write {n_rows:,} rows x {FLOOR_COLUMNS} cells (xlsxwriter)", write),
                            ("floor total", base)], columns=["what", "seconds"])
    print(summary.to_string(index=False, float_format=lambda x: f"{x:,.1f}"))
    print(f"ratio end to end / floor: {counts['seconds'] / base:.2f}")
    print(f"CPU seconds of the costing run, this process and its children: {counts['cpu']:.1f} "
          f"(wall {counts['seconds']:.1f}; {'one process' if args.serial else 'second process allowed'}, "
          f"{aside.cores()} cores usable)")
    return {"rows": rows, "counts": counts, "floor": base, "ratio": counts["seconds"] / base}


if __name__ == "__main__":
    main()
