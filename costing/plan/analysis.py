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
ASIDE = "trade-off searches in a second process, beside the plan (within analyses)"


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
            progress: Callable[[int, int], None] | None = None, runs=(),
            aside: Aside | None = None) -> Analysis:
    """Beside the chosen routes: each routed shipment's best route under every other objective
    (when Settings ``compare_objectives`` is yes), its cost-time trade-offs (up to
    ``frontier_max_routes``) and the lane totals of the vehicle `runs`. Changes nothing;
    returns an Analysis.

    `aside` (an `Aside`) holds searches made in another process while the week was planned:
    each is recorded here as if made here (`Router.adopt`, `Router.frontier`'s `found`), and
    whatever it lacks is searched here. The comparison runs first over every shipment, then the
    trade-offs: each shipment's routes are the same either way (searches and prices depend only
    on the shipment, and the batched searches on the shipments batched, which `Aside` checks)."""
    a = Analysis(lanes=lane_usage(runs))
    compare = model.settings.compare_objectives == "yes"
    max_routes = int(model.settings.frontier_max_routes)
    routed = [r for r in results if r.status == ROUTED]
    total = len(results) * (int(compare) + int(max_routes > 0))
    done = 0
    spent = {COMPARING: 0.0, TRADING: 0.0, ASIDE: 0.0}
    if compare:  # one one-to-many search per origin, profile and objective, not one A* each
        t0 = time.perf_counter()
        for obj in OBJECTIVES:
            ships = [r.shipment for r in routed if r.objective != obj]
            if aside is None or not aside.adopt(router, obj, ships):  # adopted: prepare has nothing left
                router.prepare(ships, obj, force=True)
        for r in results:
            if r.status == ROUTED:
                s = r.shipment
                others = [o for o in OBJECTIVES if o != r.objective]
                alts = router.alternatives(s, others)
                alts[r.objective] = r
                a.alternatives[s.shipment_id] = {o: alts[o] for o in OBJECTIVES}
            done += 1
            if progress:
                progress(done, total)
        spent[COMPARING] += time.perf_counter() - t0
    if max_routes > 0:
        t0 = time.perf_counter()
        searched = aside.frontiers() if aside is not None else {}
        for r in results:
            if r.status == ROUTED:
                s = r.shipment
                a.frontiers[s.shipment_id] = router.frontier(s, max_routes, found=searched.get(s.shipment_id))
            done += 1
            if progress:
                progress(done, total)
        spent[TRADING] += time.perf_counter() - t0
    if aside is not None:
        spent[ASIDE] = aside.seconds
    _record(router, spent)
    return a


class Aside:
    """Searches of `analyse` made in a second process (`costing.aside`) while this one plans the
    week: the batched searches of the comparison for the objectives the plan does not search
    under (`plan_objective`), then the trade-off searches (`search_frontiers`), each sent as
    soon as made. Start it after routing, before the plan; close it (or use it as a context
    manager) when done.

    The comparison's batches are left here when the plan searches under their objective (its
    batches could then overlap them) and on networks the array engine searches (from
    ENGINE_MIN_DEPOTS depots: its landmarks would be built in the other process only)."""

    def __init__(self, model: Model, router: Router, results: list[CostedShipment], plan_objective: str):
        from costing import aside
        from costing.plan.route import ENGINE_MIN_DEPOTS

        routed = [r for r in results if r.status == ROUTED]
        calls, self._parts = [], {}
        if model.settings.compare_objectives == "yes" and len(model.depots) < ENGINE_MIN_DEPOTS:
            for obj in OBJECTIVES:
                if obj != plan_objective:
                    ships = [r.shipment for r in routed if r.objective != obj]
                    self._parts[obj] = (len(calls), [s.shipment_id for s in ships])
                    calls.append((router.prepared, (ships, obj, True), {}))
        max_routes = int(model.settings.frontier_max_routes)
        self._frontier_part = len(calls) if max_routes > 0 else None
        if max_routes > 0:
            calls.append((search_frontiers, (router, [r.shipment for r in routed], max_routes), {}))
        self.job = aside.series(calls)
        self.seconds = 0.0  # the trade-off searches' own wall seconds, in the other process

    def adopt(self, router: Router, objective: str, shipments) -> bool:
        """Record the batched searches of `objective` made aside, when they were made for exactly
        `shipments` (the plan may have changed which shipments are routed); whether they were.
        Then ``router.prepare(shipments, objective, force=True)`` would find every batch made."""
        part = self._parts.get(objective)
        if part is None or part[1] != [s.shipment_id for s in shipments]:
            return False
        router.adopt(self.job.result(part[0]))
        return True

    def frontiers(self) -> dict[str, tuple]:
        """``Router.frontier_found`` by shipment id, made aside ({} when none were asked)."""
        if self._frontier_part is None:
            return {}
        found, self.seconds = self.job.result(self._frontier_part)
        return found

    def close(self) -> None:
        self.job.close()

    def __enter__(self) -> Aside:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def search_frontiers(router: Router, shipments, max_routes: int) -> tuple[dict[str, tuple], float]:
    """(``Router.frontier_found`` of each shipment by shipment id, wall seconds): the trade-off
    searches of `analyse`, made apart from their pricing (in a child process: `costing.aside`)."""
    t0 = time.perf_counter()
    found = {s.shipment_id: router.frontier_found(s, max_routes) for s in shipments}
    return found, time.perf_counter() - t0


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
