"""What finance compares beside the chosen routes: each shipment's best route under every
objective, its cost-time trade-offs, and where the money goes lane by lane. Runs after the
search and cost stages, on their results; writes nothing."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field

from costing.contract.inputs import OBJECTIVES
from costing.model import Model
from costing.plan.route import Router
from costing.price.cost import ROUTED, CostedShipment

# the analyses' entries in RunStats.seconds (wall seconds)
COMPARING = "comparison across objectives (within analyses)"
TRADING = "cost-time trade-offs (within analyses)"


@dataclass
class LaneTotals:
    lane_id: str
    from_depot: str
    to_depot: str
    mode: str
    legs: int = 0  # loads carried (one per shipment leg)
    tonnes: float = 0.0
    vehicle_trips: int = 0
    vehicle_km: float = 0.0
    cost: float = 0.0
    runs: int = 0
    capacity_t: float = 0.0  # vehicles x payload, summed over the runs

    @property
    def fill_weight(self) -> float:
        """Tonnes carried / payload of the vehicles run (0 when none)."""
        return self.tonnes / self.capacity_t if self.capacity_t else 0.0


@dataclass
class Analysis:
    # shipment id -> objective -> best route under it (only when compare_objectives is yes)
    alternatives: dict[str, dict[str, CostedShipment]] = field(default_factory=dict)
    # shipment id -> (frontier routes cheapest first, capped?)
    frontiers: dict[str, tuple[list[CostedShipment], bool]] = field(default_factory=dict)
    lanes: list[LaneTotals] = field(default_factory=list)


def lane_usage(runs) -> list[LaneTotals]:
    """Vehicle runs, loads carried, tonnes, vehicle trips, vehicle-km, capacity and cost per lane
    (both directions together), costliest first (ties by lane id).

    Parameters
    ----------
    runs : list of costing.plan.week.VehicleRun
        The week's vehicle runs, in the order of the Vehicle runs sheet.

    Returns
    -------
    list of LaneTotals
        tonnes and capacity_t in t, vehicle_km in km, cost in the run's currency.

    Notes
    -----
    Sums are taken in run order, as the Lane usage formulas recompute them (a compensated sum,
    such as pandas' groupby sum, differs from the spreadsheet's SUM in the last bit now and then).
    """
    out: dict[str, LaneTotals] = {}
    for run in runs:
        leg = run.leg
        lane = leg.use.lane
        u = out.get(lane.lane_id)
        if u is None:
            u = out[lane.lane_id] = LaneTotals(lane.lane_id, lane.from_depot, lane.to_depot, lane.mode)
        u.runs += 1
        u.legs += len(run.loads)
        u.tonnes += run.tonnes
        u.vehicle_trips += run.vehicles
        u.vehicle_km += run.vehicles * leg.use.km
        u.capacity_t += run.vehicles * leg.card.payload_t
        u.cost += run.run_cost
    return sorted(out.values(), key=lambda u: (-u.cost, u.lane_id))


def analyse(model: Model, router: Router, results: list[CostedShipment],
            progress: Callable[[int, int], None] | None = None, runs=()) -> Analysis:
    """Beside the chosen routes: each routed shipment's best route under every other objective
    (when Settings ``compare_objectives`` is yes), its cost-time trade-offs (up to
    ``frontier_max_routes``) and the lane totals of the vehicle `runs`. Changes nothing;
    returns an Analysis."""
    a = Analysis(lanes=lane_usage(runs))
    compare = model.settings.compare_objectives == "yes"
    max_routes = int(model.settings.frontier_max_routes)
    total = len(results)
    spent = {COMPARING: 0.0, TRADING: 0.0}
    if compare:  # one one-to-many search per origin, profile and objective, not one A* each
        t0 = time.perf_counter()
        routed = [r for r in results if r.status == ROUTED]
        for obj in OBJECTIVES:
            router.prepare([r.shipment for r in routed if r.objective != obj], obj, force=True)
        spent[COMPARING] += time.perf_counter() - t0
    for k, r in enumerate(results):
        s = r.shipment
        if r.status == ROUTED:
            if compare:
                t0 = time.perf_counter()
                others = [o for o in OBJECTIVES if o != r.objective]
                alts = router.alternatives(s, others)
                alts[r.objective] = r
                a.alternatives[s.shipment_id] = {o: alts[o] for o in OBJECTIVES}
                spent[COMPARING] += time.perf_counter() - t0
            if max_routes > 0:
                t0 = time.perf_counter()
                a.frontiers[s.shipment_id] = router.frontier(s, max_routes)
                spent[TRADING] += time.perf_counter() - t0
        if progress:
            progress(k + 1, total)
    _record(router, spent)
    return a


def _record(router: Router, spent: dict[str, float]) -> None:
    """Add the analyses' own timings (wall seconds) to the router's stage times."""
    seconds = router.stats.seconds
    for key, secs in spent.items():
        if secs:
            seconds[key] = seconds.get(key, 0.0) + secs


@dataclass
class ScenarioRun:
    scenario: object  # costing.check.scenarios.Scenario
    results: list[CostedShipment]
    stats: object  # route.RunStats
    runs: list = field(default_factory=list)  # costing.plan.week.VehicleRun of the scenario
