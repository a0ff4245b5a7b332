"""What finance compares beside the chosen routes: each shipment's best route under every
objective, its cost-time trade-offs, and where the money goes lane by lane. Runs after the
search and cost stages, on their results; writes nothing."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

from costing.contract.inputs import OBJECTIVES
from costing.model import Model
from costing.plan.route import Router
from costing.price.cost import ROUTED, CostedShipment


@dataclass
class LaneTotals:
    lane_id: str
    from_depot: str
    to_depot: str
    mode: str
    legs: int = 0
    tonnes: float = 0.0
    vehicle_trips: int = 0
    vehicle_km: float = 0.0
    cost: float = 0.0


@dataclass
class Analysis:
    # shipment id -> objective -> best route under it (only when compare_objectives is yes)
    alternatives: dict[str, dict[str, CostedShipment]] = field(default_factory=dict)
    # shipment id -> (frontier routes cheapest first, capped?)
    frontiers: dict[str, tuple[list[CostedShipment], bool]] = field(default_factory=dict)
    lanes: list[LaneTotals] = field(default_factory=list)


def lane_usage(results: list[CostedShipment]) -> list[LaneTotals]:
    """Legs, tonnes, vehicle trips, vehicle-km and cost per lane (both directions together),
    costliest first (ties by lane id).

    One row per leg into a pandas frame, grouped by lane. Sums are taken in leg order
    (``math.fsum`` would differ from the spreadsheet's SUM by an ulp now and then; the plain
    sequential sum is what the Lane usage formulas recompute).

    Returns
    -------
    list of LaneTotals
        tonnes in t, vehicle_km in km, cost in the run's currency.
    """
    import pandas as pd

    rows = [(leg.use.lane, leg.weight_t, leg.vehicles, leg.vehicles * leg.use.km, leg.leg_cost)
            for r in results for leg in r.legs]
    if not rows:
        return []
    frame = pd.DataFrame(rows, columns=["lane", "tonnes", "vehicle_trips", "vehicle_km", "cost"])
    frame["lane_id"] = [lane.lane_id for lane in frame["lane"]]
    grouped = frame.groupby("lane_id", sort=False)
    sums = grouped[["tonnes", "vehicle_km", "cost"]].agg(_sequential_sum)
    out = [LaneTotals(lane.lane_id, lane.from_depot, lane.to_depot, lane.mode,
                      legs=int(n), tonnes=sums.at[lid, "tonnes"], vehicle_trips=int(trips),
                      vehicle_km=sums.at[lid, "vehicle_km"], cost=sums.at[lid, "cost"])
           for lid, lane, n, trips in zip(grouped.size().index, grouped["lane"].first(), grouped.size(),
                                          grouped["vehicle_trips"].sum())]
    return sorted(out, key=lambda u: (-u.cost, u.lane_id))


def _sequential_sum(values) -> float:
    """Left-to-right float sum (pandas' own sum compensates, which can differ in the last bit)."""
    total = 0.0
    for v in values:
        total += float(v)
    return total


def analyse(model: Model, router: Router, results: list[CostedShipment],
            progress: Callable[[int, int], None] | None = None) -> Analysis:
    """Beside the chosen routes: each routed shipment's best route under every other objective
    (when Settings ``compare_objectives`` is yes), its cost-time trade-offs (up to
    ``frontier_max_routes``) and the lane totals. Changes nothing; returns an Analysis."""
    a = Analysis(lanes=lane_usage(results))
    compare = model.settings.compare_objectives == "yes"
    max_routes = int(model.settings.frontier_max_routes)
    total = len(results)
    for k, r in enumerate(results):
        s = r.shipment
        if r.status == ROUTED:
            if compare:
                others = [o for o in OBJECTIVES if o != r.objective]
                alts = router.alternatives(s, others)
                alts[r.objective] = r
                a.alternatives[s.shipment_id] = {o: alts[o] for o in OBJECTIVES}
            if max_routes > 0:
                a.frontiers[s.shipment_id] = router.frontier(s, max_routes)
        if progress:
            progress(k + 1, total)
    return a


@dataclass
class ScenarioRun:
    scenario: object  # costing.check.scenarios.Scenario
    results: list[CostedShipment]
    stats: object  # route.RunStats
