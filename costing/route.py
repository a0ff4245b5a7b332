"""The search stage for a whole workbook: for each shipment pick the objective and the
candidate vehicles, build (once, cached) the compact network of each profile, run A*, and
hand the lanes found to the costing stage."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field, replace

import networkx as nx

from .cost import NO_ROUTE, REJECTED, CostedShipment, cost_route, unrouted
from .model import WARNING, Model, Problem, RateCard, Shipment
from .money import minor_unit
from .network import (
    OBJECTIVE_UNITS,
    CompactNetwork,
    Profile,
    card_of,
    compact,
    exit_weight,
    explain_no_route,
    start_weight,
    vehicles_needed,
)
from .search import astar


@dataclass
class RunStats:
    searches: int = 0
    settled: int = 0
    pushed: int = 0
    networks: int = 0
    bounds: dict[str, str] = field(default_factory=dict)  # profile label -> bound used
    seconds: dict[str, float] = field(default_factory=dict)  # stage -> wall seconds


def _label(p: Profile) -> str:
    cards = ", ".join(f"{v} on {m} x{n}" for v, m, n in p.cards)
    extra = f", {len(p.blocked)} restricted lane steps" if p.blocked else ""
    return f"{p.objective}: {cards}{extra}"


def objective_for(model: Model, shipment: Shipment, override: str | None) -> str:
    """A shipment's own objective wins; then the command line; then Settings."""
    return shipment.objective or override or model.settings.objective


def route_all(model: Model, graph: nx.MultiDiGraph, objective: str | None = None,
              progress: Callable[[int, int], None] | None = None
              ) -> tuple[list[CostedShipment], RunStats, list[Problem]]:
    stats = RunStats()
    problems: list[Problem] = []
    networks: dict[Profile, CompactNetwork] = {}
    vehicles = model.vehicles()
    out: list[CostedShipment] = []
    total = len(model.shipments)
    for k, s in enumerate(model.shipments):
        obj = objective_for(model, s, objective)
        out.append(_route_one(model, graph, s, obj, vehicles, networks, stats, problems))
        if progress:
            progress(k + 1, total)
    stats.networks = len(networks)
    return out, stats, problems


def make_profile(model: Model, s: Shipment, objective: str, vehicles: list[str],
                 restricted: bool = True) -> Profile:
    """The rate cards shipment `s` may use (those of `vehicles`), with the vehicles each needs,
    and the lane steps its hazmat flag and weight forbid (lane by lane, card by card)."""
    cards = [r for r in model.rates if r.vehicle in vehicles]
    blocked: set[tuple[str, int]] = set()
    if restricted:
        for lane in model.lanes:
            for k, card in enumerate(cards):
                if lane.mode != card.mode:
                    continue
                if s.hazmat and not lane.hazmat_allowed:
                    blocked.add((lane.lane_id, k))
                elif lane.max_weight_t is not None and \
                        loaded_weight(s, card) > lane.max_weight_t + 1e-9:
                    blocked.add((lane.lane_id, k))
    needs_tonnes = objective == "emissions" and any(
        c.fuel_l_per_100km is None or c.co2e_kg_per_litre is None for c in cards)
    return Profile(objective,
                   tuple((c.vehicle, c.mode, vehicles_needed(s.weight_t, c.payload_t)) for c in cards),
                   frozenset(blocked), s.weight_t if needs_tonnes else 0.0)


def loaded_weight(s: Shipment, card: RateCard) -> float:
    """Gross weight of one loaded vehicle: its share of the load plus its tare."""
    return s.weight_t / vehicles_needed(s.weight_t, card.payload_t) + card.tare_t


def _search(model, graph, s: Shipment, profile: Profile, networks, stats: RunStats):
    cn = networks.get(profile)
    if cn is None:
        t0 = time.perf_counter()
        cn = networks[profile] = compact(graph, model, profile)
        key = "compact networks (within search)"
        stats.seconds[key] = stats.seconds.get(key, 0.0) + time.perf_counter() - t0
        stats.bounds[_label(profile)] = cn.bound_note
    places = minor_unit(model.settings.currency)
    origin, dest = model.depot(s.origin), model.depot(s.destination)
    sources = [(cn.node(s.origin, k), start_weight(model, profile, k, origin, places))
               for k in range(cn.n_cards)]
    exits = {cn.node(s.destination, k): exit_weight(model, profile, k, dest, places)
             for k in range(cn.n_cards)}
    res = astar(cn.adj, sources, exits, cn.bound(cn.index[s.destination]))
    stats.searches += 1
    stats.settled += res.stats.settled
    stats.pushed += res.stats.pushed
    return cn, res


def _runs(model: Model, cn: CompactNetwork, res) -> list[tuple[RateCard, list]]:
    """The search's path as vehicle runs: (rate card, consecutive lane steps)."""
    def card(k):
        v, m, _n = cn.profile.cards[k]
        return card_of(model, v, m)

    runs: list[tuple[RateCard, list]] = [(card(res.nodes[0] % cn.n_cards), [])]
    for e in res.edges:
        step = cn.steps[e]
        if step.transfer is not None:
            runs.append((card(step.card), []))
        else:
            runs[-1][1].append(step.use)
    return [r for r in runs if r[1]]


def _route_one(model, graph, s: Shipment, obj: str, vehicles, networks, stats: RunStats,
               problems: list[Problem]) -> CostedShipment:
    if s.origin == s.destination:
        sheet, cell = model.cell("Shipments", "destination", s.row)
        problems.append(Problem(WARNING, sheet, cell, f"shipment {s.shipment_id} starts and ends at "
                                f"{s.origin}; nothing to route", "correct origin or destination"))
        return unrouted(model, s, REJECTED, obj, f"origin and destination are both {s.origin}")
    # Candidate sets of vehicles: the named one; or all together (any vehicle, changing at
    # terminals and ports) and each alone, so a minimum charge, which the search cannot add
    # lane by lane, still decides between vehicles.
    if s.vehicle:
        candidates = [[s.vehicle]]
    else:
        candidates = [vehicles] + ([[v] for v in vehicles] if len(vehicles) > 1 else [])
    best: CostedShipment | None = None
    best_vs: list[str] = []
    settled = pushed = 0
    for vs in candidates:
        profile = make_profile(model, s, obj, vs)
        cn, res = _search(model, graph, s, profile, networks, stats)
        settled += res.stats.settled
        pushed += res.stats.pushed
        if not res.found:
            continue
        costed = cost_route(model, s, obj, _runs(model, cn, res))
        if best is None or costed.objective_value < best.objective_value - 1e-9:
            best, best_vs = costed, vs
    if best is None:
        msg = _why_no_route(model, graph, s, obj, candidates[0], networks, stats)
        return unrouted(model, s, NO_ROUTE, obj, msg, s.vehicle or "", settled, pushed)
    notes = []
    if best.vehicles > 1:
        sheet, cell = model.cell("Shipments", "weight_t", s.row)
        split = max(best.legs, key=lambda leg: leg.vehicles)
        note = (f"{s.weight_t:g} t is more than one {split.card.vehicle} carries "
                f"({split.card.payload_t:g} t): split over {split.vehicles} vehicles")
        notes.append(note)
        problems.append(Problem(WARNING, sheet, cell, f"shipment {s.shipment_id}: {note}",
                                "check the weight; otherwise nothing to do: each vehicle is costed"))
    restricted = _restriction_note(model, graph, s, obj, best_vs, best, networks, stats)
    if restricted:
        notes.append(restricted)
    modes = list(dict.fromkeys(leg.use.lane.mode for leg in best.legs))
    if len(modes) > 1:
        notes.append("intermodal: " + " > ".join(_run_modes(best)))
    if any(leg.co2e_basis != "fuel" for leg in best.legs):
        notes.append("CO2e partly from default intensities (see Legs)")
    if not s.vehicle and len(vehicles) > 1:
        notes.append(f"vehicle chosen by {obj}")
    return replace(best, message="; ".join(notes), settled=settled, pushed=pushed)


def _run_modes(c: CostedShipment) -> list[str]:
    out: list[str] = []
    last = None
    for leg in c.legs:
        key = (leg.card.vehicle, leg.card.mode)
        if key != last:
            out.append(f"{leg.card.mode} ({leg.card.vehicle})")
            last = key
    return out


def _blocked_reasons(model: Model, s: Shipment, cn: CompactNetwork, res, profile: Profile) -> list[str]:
    """The restrictions of `profile` that the (unrestricted) route `res` runs into."""
    reasons = []
    for e in res.edges:
        step = cn.steps[e]
        if step.use is None or (step.use.lane.lane_id, step.card) not in profile.blocked:
            continue
        lane = step.use.lane
        v, m, _n = cn.profile.cards[step.card]
        if s.hazmat and not lane.hazmat_allowed:
            reasons.append(f"{lane.lane_id} does not allow dangerous goods")
        else:
            reasons.append(f"{lane.lane_id} allows at most {lane.max_weight_t:g} t per vehicle, "
                           f"a loaded {v} weighs {loaded_weight(s, card_of(model, v, m)):g} t")
    return list(dict.fromkeys(reasons))


def _restriction_note(model, graph, s: Shipment, obj: str, vehicles, best: CostedShipment,
                      networks, stats) -> str:
    """When restrictions moved the route, say which and what they cost."""
    profile = make_profile(model, s, obj, vehicles)
    if not profile.blocked:
        return ""
    free = make_profile(model, s, obj, vehicles, restricted=False)
    cn, res = _search(model, graph, s, free, networks, stats)
    if not res.found:
        return ""
    reasons = _blocked_reasons(model, s, cn, res, profile)
    if not reasons:
        return ""
    unrestricted = cost_route(model, s, obj, _runs(model, cn, res))
    delta = best.objective_value - unrestricted.objective_value
    unit = model.settings.currency if obj in ("cost", "blended") else OBJECTIVE_UNITS[obj]
    return f"restrictions: {'; '.join(reasons)}; route changed, {delta:+.2f} {unit}"


def _why_no_route(model, graph, s: Shipment, obj: str, vehicles, networks, stats) -> str:
    """Name the restriction that blocks the shipment, or the depots that are cut off."""
    profile = make_profile(model, s, obj, vehicles)
    if profile.blocked:
        free = make_profile(model, s, obj, vehicles, restricted=False)
        cn, res = _search(model, graph, s, free, networks, stats)
        if res.found:
            return ("blocked by lane restrictions: " + "; ".join(_blocked_reasons(model, s, cn, res, profile))
                    + " (no other route avoids them)")
    cn = networks.get(profile) or compact(graph, model, profile)
    return explain_no_route(graph, cn, s.origin, s.destination)
