"""The plan stage at scale: a week of shipments costed with Settings consolidate = yes and = no in
the same run, over the same seeded network, through the one pipeline (costing.pipeline.run).

    python -m benchmarks.bench_consolidation                    # 2,000 depots, 10,000 shipments
    python -m benchmarks.bench_consolidation --smoke            # a small run that takes seconds
    python -m benchmarks.bench_consolidation --shipments 2500 --depots 1000 --lanes 4000 --digest
    python -m benchmarks.bench_consolidation --split            # the plan stage's parts timed too

``--digest`` adds a fingerprint of each plan (every run's loads, vehicles and cost, every
shipment's total and leg shares): equal fingerprints before and after a change to the plan stage
show that it changed no plan.

The network is bench_workbook's (depots in a 600 x 600 km region, nearest-neighbour and trunk
road lanes); 1 depot in 100 is a consolidation hub; shipments leave from 50 origins over five
days (ready_date), 0.5 to 24 t, some with pallets. Analyses (comparison, trade-offs) are off,
as a coordinator would run a week this size. Prints the stage times of both runs, the ratio of
the consolidated run to the other, the vehicles and the saving; asserts nothing about time.
"""

from __future__ import annotations

import argparse
import contextlib
import datetime as dt
import hashlib
import os
import random
import resource
import tempfile
import time
from dataclasses import replace

import pandas as pd

from benchmarks.bench_week import timed
from benchmarks.bench_workbook import make_input
from costing import pipeline


def week_model(depots: int, lanes: int, shipments: int, origins: int, seed: int = 11):
    """The seeded Model: bench_workbook's network and shipments, with hubs, ready days and pallets."""
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "week.xlsx")
        make_input(path, depots, lanes, shipments, origins, seed=seed)
        model, problems, _ = pipeline.load(path)
    assert model is not None, problems[:3]
    rng = random.Random(seed)
    hubs = {d.depot_id for d in rng.sample(list(model.depots), max(1, depots // 100))}
    monday = dt.date(2026, 12, 7)
    ships = tuple(replace(s, ready_date=monday + dt.timedelta(days=rng.randrange(5)),
                          pallets=float(rng.randint(1, 26)) if rng.random() < 0.5 else None)
                  for s in model.shipments)
    rates = tuple(replace(r, pallet_places=33.0) for r in model.rates)
    return replace(model, depots=tuple(replace(d, kind="hub") if d.depot_id in hubs else d
                                       for d in model.depots), shipments=ships, rates=rates)


def digest(costed) -> str:
    """A fingerprint of the plan: every run's id, day, loads, vehicles, cost, tonne-km and
    emissions, every shipment's status, totals, message and leg shares (reprs of the floats)."""
    h = hashlib.sha256()
    for r in costed.runs:
        h.update(repr((r.run_id, r.day, r.loads, r.vehicles, r.run_cost, r.tonne_km, r.co2e_kg,
                       r.empty_for)).encode())
    for r in costed.results:
        h.update(repr((r.shipment.shipment_id, r.status, r.total_cost, r.standalone_cost, r.message,
                       [(g.run_id, g.cost_share, g.share_adjust, g.co2e_share, g.leg_cost)
                        for g in r.legs])).encode())
    return h.hexdigest()[:16]


@contextlib.contextmanager
def plan_split(seconds: dict):
    """Time the plan stage's parts (into `seconds`): the candidate routes through hubs
    (``week._candidates``) and the planner (``week.plan`` / ``plan_with_carriers``)."""
    import costing.plan.week as week

    saved = {name: getattr(week, name) for name in ("_candidates", "plan", "plan_with_carriers")}

    for name, label in (("_candidates", "  candidates through hubs"), ("plan", "  planner"),
                        ("plan_with_carriers", "  planner")):
        setattr(week, name, timed(seconds, label, saved[name]))
    try:
        yield
    finally:
        for name, fn in saved.items():
            setattr(week, name, fn)


def run(model, consolidate: str, with_digest: bool = False, split: bool = False) -> dict:
    m = replace(model, settings=replace(model.settings, consolidate=consolidate))
    parts: dict = {}
    t0 = time.perf_counter()
    with plan_split(parts) if split else contextlib.nullcontext():
        costed = pipeline.run(m, pipeline.Options(analyses=False, scenarios=False))
    wall = time.perf_counter() - t0
    routed = [r for r in costed.results if r.status == "routed"]
    seconds = dict(costed.seconds)
    if split:
        seconds.update({k: parts.get(k, 0.0) for k in ("  candidates through hubs", "  planner")})
    return {"consolidate": consolidate, "wall s": round(wall, 2),
            **{f"{k} s": round(v, 2) for k, v in seconds.items()},
            "runs": len(costed.runs), "vehicles": sum(r.vehicles for r in costed.runs),
            "shared runs": sum(len(r.loads) > 1 for r in costed.runs),
            "total": round(sum(r.total_cost for r in routed), 2),
            "standalone": round(sum(r.standalone_cost for r in routed), 2),
            **({"plan digest": digest(costed)} if with_digest else {})}


def main(argv=None) -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--depots", type=int, default=2000)
    p.add_argument("--lanes", type=int, default=8000)
    p.add_argument("--shipments", type=int, default=10_000)
    p.add_argument("--origins", type=int, default=50)
    p.add_argument("--seed", type=int, default=11)
    p.add_argument("--smoke", action="store_true", help="200 depots, 500 shipments")
    p.add_argument("--digest", action="store_true", help="print a fingerprint of each plan")
    p.add_argument("--split", action="store_true",
                   help="also time the plan stage's candidates through hubs and its planner")
    args = p.parse_args(argv)
    if args.smoke:
        args.depots, args.lanes, args.shipments, args.origins = 200, 800, 500, 10
    t0 = time.perf_counter()
    model = week_model(args.depots, args.lanes, args.shipments, args.origins, seed=args.seed)
    print(f"week: {len(model.depots):,} depots ({sum(d.kind == 'hub' for d in model.depots)} hubs), "
          f"{len(model.lanes):,} lanes, {len(model.shipments):,} shipments over 5 days "
          f"(input built and read in {time.perf_counter() - t0:.1f} s)")
    rows = [run(model, "no", args.digest, args.split), run(model, "yes", args.digest, args.split)]
    table = pd.DataFrame(rows).set_index("consolidate").T
    print(table.to_string())
    off, on = rows
    print(f"ratio consolidate=yes / no (wall): {on['wall s'] / off['wall s']:.2f}; vehicles "
          f"{on['vehicles']:,} instead of {off['vehicles']:,}; week total {on['total']:,.2f} instead of "
          f"{off['total']:,.2f} ({(off['total'] - on['total']) / off['total']:.1%} less)")
    print(f"peak memory: {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")


if __name__ == "__main__":
    main()
