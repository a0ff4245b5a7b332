"""Seeded medium inputs for the tests of listed routes (trade-offs and the comparison across
objectives), and the canonical figures the Trade-offs and Comparison sheets show for them.

The inputs are invented (rule 3: inputs only, never expected values): depots in a region of
lat/lon, road lanes to near neighbours and a few longer ones (tolls, fixed costs, one-way lanes,
hazmat bans, weight limits), rail lanes between terminals, hubs, two vehicles (one on road and
rail), driving rules, a fuel surcharge and a value of time.
"""

from __future__ import annotations

import hashlib
import random

from costing.geo import great_circle_km
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment


def medium_model(seed: int, depots: int = 45, shipments: int = 36, rules: str = "eu_561_2006") -> Model:
    rng = random.Random(seed)
    pts = []
    for i in range(depots):
        kind = rng.choices(["depot", "hub", "terminal", "customer"], [12, 2, 2, 3])[0]
        lat, lon = round(50 + rng.random() * 3, 4), round(4 + rng.random() * 5, 4)
        pts.append(Depot(f"M{i:02d}", "", lat, lon, kind, float(rng.choice([0, 10, 25, 40])),
                         rng.choice([0.0, 0.25, 0.5, 1.0])))
    km = {}
    for a in pts:
        for b in pts:
            if a is not b:
                km[a.depot_id, b.depot_id] = great_circle_km(a.latitude, a.longitude, b.latitude, b.longitude)
    pairs = set()
    for a in pts:
        near = sorted((km[a.depot_id, b.depot_id], b.depot_id) for b in pts if b is not a)
        for _d, b in near[:3]:
            pairs.add(tuple(sorted((a.depot_id, b))))
    ids = [p.depot_id for p in pts]
    while len(pairs) < int(depots * 2.3):
        a, b = rng.sample(ids, 2)
        if km[a, b] < 160:
            pairs.add(tuple(sorted((a, b))))
    lanes = []
    for k, (a, b) in enumerate(sorted(pairs)):
        d = round(km[a, b] * rng.uniform(1.05, 1.45) + 0.1, 1)
        fast = rng.random() < 0.45
        hours = round(d / (rng.uniform(80, 95) if fast else rng.uniform(45, 70)), 2)
        lanes.append(Lane(f"R{k:03d}", a, b, "road", d, hours,
                          toll=round(rng.uniform(5, 45), 2) if fast else 0.0,
                          fixed_cost=rng.choice([0.0, 0.0, 0.0, 12.5]),
                          two_way=rng.random() < 0.9,
                          max_weight_t=20.0 if rng.random() < 0.06 else None,
                          hazmat_allowed=rng.random() > 0.08))
    terminals = [p.depot_id for p in pts if p.kind == "terminal"]
    for k, (a, b) in enumerate(zip(terminals, terminals[1:] + terminals[:1])):
        if a != b:
            d = round(km[a, b] * 1.15 + 0.1, 1)
            lanes.append(Lane(f"T{k:02d}", a, b, "rail", d, round(d / 60, 2), fixed_cost=35.0))
    rates = (RateCard("unit", "road", 1.05, 39.0, 24.0, per_trip=35.0, fuel_l_per_100km=31.0,
                      co2e_kg_per_litre=2.51, min_charge=140.0, fuel_included_at=1.5, tare_t=14.0),
             RateCard("unit", "rail", 0.62, 18.0, 24.0, per_trip=55.0, min_charge=140.0),
             RateCard("van", "road", 0.55, 31.0, 3.5, per_trip=12.0, fuel_l_per_100km=11.0,
                      co2e_kg_per_litre=2.51, min_charge=60.0, tare_t=2.5))
    origins = rng.sample(ids, 4)
    ships = []
    for k in range(shipments):
        o = rng.choice(origins)
        d = rng.choice([x for x in ids if x != o])
        ships.append(Shipment(f"Q{k:03d}", o, d, round(rng.uniform(0.5, 40), 1),
                              vehicle=rng.choice([None, None, None, "van", "unit"]),
                              objective=rng.choice([None, None, "time", "distance", "emissions", "blended"]),
                              hazmat=rng.random() < 0.15))
    # consolidate = no: the snapshot is of each shipment's listed routes and their figures alone
    settings = Settings(driving_rules=rules, value_of_time_per_hour=22.0, fuel_price_per_litre=1.62,
                        consolidate="no")
    return Model(settings, tuple(pts), tuple(lanes), rates, tuple(ships))


def _fig(x: float) -> str:
    return repr(round(x, 9))


def _route(res) -> str:
    if not res.legs:
        return ""
    return " > ".join([res.legs[0].use.from_depot] + [leg.use.to_depot for leg in res.legs])


def listed_figures(route) -> tuple:
    """The figures the Trade-offs and Comparison sheets write for one listed route."""
    if route.status != "routed":
        return (route.status, route.vehicle)
    return (route.status, route.vehicle, len(route.legs), _fig(route.total_cost), _fig(route.subtotal),
            _fig(route.drive_hours), _fig(route.handling_hours), _fig(route.elapsed_hours),
            _fig(route.distance_km), _fig(route.co2e_kg), _route(route))


def snapshot(analysis, results) -> tuple[list, list]:
    """(trade-off rows, comparison rows): per shipment in result order, as the sheets list them."""
    trade, comp = [], []
    for r in results:
        sid = r.shipment.shipment_id
        if sid in analysis.frontiers:
            routes, capped = analysis.frontiers[sid]
            trade.append((sid, capped, [listed_figures(x) for x in routes]))
        if sid in analysis.alternatives:
            comp.append((sid, [(obj, listed_figures(x)) for obj, x in analysis.alternatives[sid].items()]))
    return trade, comp


def digest(rows) -> str:
    return hashlib.sha256(repr(rows).encode()).hexdigest()[:16]
