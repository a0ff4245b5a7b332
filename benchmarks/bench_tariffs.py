"""Make or buy at scale: the pipeline on the same week with and without carrier tariffs.

    python -m benchmarks.bench_tariffs            # 500 depots, 1,000 lanes, 2,000 shipments
    python -m benchmarks.bench_tariffs --smoke    # 150 depots, 300 lanes, 200 shipments

The input is the invented, seeded network of `benchmarks.bench_workbook`. The tariffs are
invented too: the depots fall into a 5 x 5 grid of zones by latitude and longitude, and one
carrier offers four weight bands between every pair of zones (2,500 rows), at a price per 100 kg
that grows with the zones' distance. The run goes through `costing.pipeline.run` (analyses and
scenarios off) twice on the same Model, once with the tariffs removed. Prints the seconds, the
ratio, how many shipments were priced and bought, and the week's cost of the shipments the own
fleet can route (like for like) apart from those only a carrier serves; asserts nothing.
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from dataclasses import replace

import pandas as pd

from benchmarks.bench_workbook import make_input
from costing import pipeline
from costing.model import Tariff

GRID = 5
BANDS = ((0, 1000, 1.0), (1000, 5000, 0.8), (5000, 12000, 0.65), (12000, None, 0.5))


def with_tariffs(model):
    """The Model with every depot in a grid zone and one carrier's tariff between all zones."""
    lats = [d.latitude for d in model.depots]
    lons = [d.longitude for d in model.depots]
    lo_a, hi_a, lo_o, hi_o = min(lats), max(lats) + 1e-9, min(lons), max(lons) + 1e-9

    def cell(d):
        return (int((d.latitude - lo_a) / (hi_a - lo_a) * GRID),
                int((d.longitude - lo_o) / (hi_o - lo_o) * GRID))

    zones = {d.depot_id: "Z{}{}".format(*cell(d)) for d in model.depots}
    tariffs = []
    for a in range(GRID):
        for b in range(GRID):
            for c in range(GRID):
                for e in range(GRID):
                    steps = abs(a - c) + abs(b - e)
                    for lo, hi, factor in BANDS:
                        tariffs.append(Tariff("Bench Carrier", f"Z{a}{b}", f"Z{c}{e}", lo, hi,
                                              round((9.0 + 4.0 * steps) * factor, 2), 60.0,
                                              price_per_consignment=7.5, row=len(tariffs) + 2))
    return replace(model, tariffs=tuple(tariffs), zones=zones)


def main(argv=None) -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--smoke", action="store_true", help="a small run, for the tests")
    args = p.parse_args(argv)
    depots, lanes, shipments = (150, 300, 200) if args.smoke else (500, 1000, 2000)
    with tempfile.TemporaryDirectory() as tmp:
        inp = os.path.join(tmp, "in.xlsx")
        make_input(inp, depots, lanes, shipments, origins=20)
        base, problems, _sha = pipeline.load(inp)
    opts = pipeline.Options(analyses=False, scenarios=False)
    rows = []
    own_routed = None
    for label, model in (("own fleet only", base), ("with tariffs", with_tariffs(base))):
        t0 = time.perf_counter()
        costed = pipeline.run(model, opts)
        secs = time.perf_counter() - t0
        res = costed.results
        if own_routed is None:  # the shipments the own fleet can route: compared like for like
            own_routed = [r.status == "routed" for r in res]
        rows.append({"run": label, "tariff rows": len(model.tariffs), "seconds": round(secs, 2),
                     "plan seconds": round(costed.seconds.get("plan (vehicle runs)", 0.0), 2),
                     "routed": sum(r.status == "routed" for r in res),
                     "priced by a carrier": sum(r.quote is not None for r in res),
                     "bought": sum(r.bought for r in res),
                     "parts bought": sum(len(r.parts) for r in res),
                     "total, own-routable shipments": round(sum(r.total_cost for r, k in zip(res, own_routed)
                                                                if k), 2),
                     "total, the rest (bought)": round(sum(r.total_cost for r, k in zip(res, own_routed)
                                                           if not k), 2)})
    df = pd.DataFrame(rows)
    print(f"{depots} depots, {lanes} lanes, {shipments} shipments")
    print(df.to_string(index=False))
    print(f"ratio with / without tariffs: {rows[1]['seconds'] / rows[0]['seconds']:.2f}")


if __name__ == "__main__":
    main()
