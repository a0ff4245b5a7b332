"""W1: a lane network costed end to end through workbooks, against the time of only reading the
input rows and writing the output rows with the same libraries (openpyxl, xlsxwriter).

    python -m benchmarks.bench_workbook                     # 2,000 depots, 8,000 lanes, 50,000 shipments
    python -m benchmarks.bench_workbook --smoke             # a small run that takes seconds

The network is invented and seeded: depots in a 600 x 600 km region of lat/lon, each joined to
its three nearest neighbours by road lanes (km = straight line x 1.05 to 1.5, 50 to 100 km/h),
the rest of the lanes between random depots up to 250 km apart (trunk lanes, some with tolls).
Shipments leave from 50 origins. Settings turn off the per-objective comparison and the
trade-offs (five and more searches per shipment) as a coordinator would for a run this size.
Prints figures; asserts nothing about time.
"""

from __future__ import annotations

import argparse
import math
import os
import random
import resource
import tempfile
import time

from costing.geo import great_circle_km
from costing.workbook.template import write_template


def make_input(path: str, depots: int, lanes: int, shipments: int, origins: int, seed: int = 7,
               settings: dict | None = None) -> None:
    """Write the seeded input workbook. `settings` (name -> value) replaces the default Settings
    rows (currency EUR, objective cost, no comparison, no trade-offs); ``{}`` leaves every other
    setting at its default."""
    rng = random.Random(seed)
    lat0, lon0 = 49.5, 3.0
    pts = []
    for i in range(depots):
        lat = lat0 + rng.random() * 5.4
        lon = lon0 + rng.random() * 8.4
        pts.append((f"N{i:05d}", lat, lon))
    dep_rows = [{"depot_id": d, "name": f"site {d}", "latitude": round(la, 5), "longitude": round(lo, 5),
                 "kind": "depot", "handling_cost": 20, "handling_hours": 0.5} for d, la, lo in pts]
    # nearest neighbours on a coarse grid
    cell = 0.3
    grid: dict[tuple[int, int], list[int]] = {}
    for i, (_d, la, lo) in enumerate(pts):
        grid.setdefault((int(la / cell), int(lo / cell)), []).append(i)
    pairs: set[tuple[int, int]] = set()
    for i, (_d, la, lo) in enumerate(pts):
        near = []
        gx, gy = int(la / cell), int(lo / cell)
        for dx in (-1, 0, 1):
            for dy in (-1, 0, 1):
                for j in grid.get((gx + dx, gy + dy), []):
                    if j != i:
                        near.append((great_circle_km(la, lo, pts[j][1], pts[j][2]), j))
        for _km, j in sorted(near)[:3]:
            pairs.add((min(i, j), max(i, j)))
    while len(pairs) < lanes:
        i, j = rng.sample(range(depots), 2)
        if great_circle_km(pts[i][1], pts[i][2], pts[j][1], pts[j][2]) <= 250:
            pairs.add((min(i, j), max(i, j)))
    lane_rows = []
    for k, (i, j) in enumerate(sorted(pairs)[:lanes]):
        gc = great_circle_km(pts[i][1], pts[i][2], pts[j][1], pts[j][2])
        km = round(gc * rng.uniform(1.05, 1.5) + 0.1, 1)
        trunk = gc > 60
        speed = rng.uniform(70, 100) if trunk else rng.uniform(50, 80)
        lane_rows.append({"lane_id": f"L{k:05d}", "from_depot": pts[i][0], "to_depot": pts[j][0],
                          "mode": "road", "distance_km": km, "drive_hours": round(km / speed, 2),
                          "toll": round(rng.uniform(5, 40), 2) if trunk and rng.random() < 0.4 else 0})
    origin_ids = rng.sample(range(depots), origins)
    ship_rows = [{"shipment_id": f"S{k:06d}", "origin": pts[rng.choice(origin_ids)][0],
                  "destination": pts[rng.randrange(depots)][0], "weight_t": round(rng.uniform(0.5, 24), 1)}
                 for k in range(shipments)]
    ship_rows = [r for r in ship_rows if r["origin"] != r["destination"]]
    if settings is None:
        settings = {"compare_objectives": "no", "frontier_max_routes": 0}
    settings = {"currency": "EUR", "objective": "cost", **settings}
    data = {
        "Settings": [{"setting": k, "value": v} for k, v in settings.items()],
        "Depots": dep_rows, "Lanes": lane_rows,
        "Rates": [{"vehicle": "artic", "mode": "road", "per_km": 1.1, "per_hour": 38, "per_trip": 40,
                   "payload_t": 24.5, "fuel_l_per_100km": 31, "co2e_kg_per_litre": 2.51, "min_charge": 150}],
        "Shipments": ship_rows,
    }
    write_template(path, data)


def baseline(inp: str, out: str, leg_rows: int, leg_cols: int, summary_rows: int, summary_cols: int) -> float:
    """Only read every input row (openpyxl, read-only) and write as many output rows and
    columns (xlsxwriter, streamed), with no routing or costing."""
    import openpyxl
    import xlsxwriter

    t0 = time.perf_counter()
    wb = openpyxl.load_workbook(inp, read_only=True, data_only=True)
    n = 0
    for ws in wb:
        for _row in ws.iter_rows(values_only=True):
            n += 1
    wb.close()
    out_wb = xlsxwriter.Workbook(out, {"constant_memory": leg_rows >= 100_000})
    legs = out_wb.add_worksheet("Legs")
    for r in range(leg_rows + 1):
        legs.write_string(r, 0, f"S{r}")
        for c in range(1, leg_cols):
            legs.write_number(r, c, r * 0.5 + c)
    summary = out_wb.add_worksheet("Summary")
    for r in range(summary_rows + 1):
        summary.write_string(r, 0, f"S{r}")
        for c in range(1, summary_cols):
            summary.write_number(r, c, r * 0.25 + c)
    out_wb.close()
    return time.perf_counter() - t0


def main(argv=None) -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--depots", type=int, default=2000)
    p.add_argument("--lanes", type=int, default=8000)
    p.add_argument("--shipments", type=int, default=50_000)
    p.add_argument("--origins", type=int, default=50)
    p.add_argument("--smoke", action="store_true", help="200 depots, 800 lanes, 500 shipments")
    args = p.parse_args(argv)
    if args.smoke:
        args.depots, args.lanes, args.shipments, args.origins = 200, 800, 500, 10
    from costing.cli import main as costing_main
    from costing.contract.outputs import LEG_COLUMNS, SUMMARY_COLUMNS

    with tempfile.TemporaryDirectory() as tmp:
        inp = os.path.join(tmp, "w1-input.xlsx")
        t0 = time.perf_counter()
        make_input(inp, args.depots, args.lanes, args.shipments, args.origins)
        made = time.perf_counter() - t0
        print(f"W1 input: {args.depots:,} depots, {args.lanes:,} lanes, {args.shipments:,} shipments from "
              f"{args.origins} origins ({os.path.getsize(inp) / 1e6:.1f} MB, made in {made:.1f} s)")
        out = os.path.join(tmp, "w1-costed.xlsx")
        t0 = time.perf_counter()
        code = costing_main(["run", inp, "-o", out, "--quiet"])
        ours = time.perf_counter() - t0
        assert code == 0, f"costing run exited {code}"
        import openpyxl

        wb = openpyxl.load_workbook(out, read_only=True)
        leg_rows = sum(wb[n].max_row - 1 for n in wb.sheetnames if n == "Legs" or n.startswith("Legs "))
        run = {r[0]: r[1] for r in wb["Run"].iter_rows(min_row=2, max_col=2, values_only=True) if r[0]}
        wb.close()
        base = baseline(inp, os.path.join(tmp, "baseline.xlsx"), leg_rows, len(LEG_COLUMNS),
                        args.shipments, len(SUMMARY_COLUMNS))
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        print(f"legs written: {leg_rows:,} rows x {len(LEG_COLUMNS)} columns")
        import pandas as pd

        counts = ("searches (A*)", "nodes settled", "batched searches")
        rows = [(str(k).removeprefix("seconds: "), v) for k, v in run.items()
                if str(k).startswith("seconds:") or k in counts]
        print(pd.DataFrame(rows, columns=["Run sheet row", "value"]).to_string(index=False))
        print(f"costing run end to end: {ours:.1f} s; read input + write output rows only: {base:.1f} s; "
              f"ratio {ours / base:.2f} (goal: at most 1.5); peak memory {peak:,.0f} MB")
        if not math.isfinite(ours):
            raise SystemExit(1)


if __name__ == "__main__":
    main()
