"""The search stage for a whole workbook: for each shipment pick the objective and the
candidate vehicles, build (once, cached) the compact network of each profile, run A*, and
hand the lanes found to the costing stage."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field

import networkx as nx

from .cost import NO_ROUTE, REJECTED, CostedShipment, cost_route, unrouted
from .model import WARNING, Model, Problem, Shipment
from .network import CompactNetwork, Profile, compact, explain_no_route, profile_for
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
    vehicles = ", ".join(f"{m} x{n}" for m, n in p.vehicles_by_mode)
    return f"{p.vehicle} / {p.objective} / {vehicles}"


def objective_for(model: Model, shipment: Shipment, override: str | None) -> str:
    """A shipment's own objective wins; then the command line; then Settings."""
    return shipment.objective or override or model.settings.objective


def route_all(model: Model, graph: nx.MultiDiGraph, objective: str | None = None,
              progress: Callable[[int, int], None] | None = None
              ) -> tuple[list[CostedShipment], RunStats, list[Problem]]:
    stats = RunStats()
    problems: list[Problem] = _not_yet_applied(model)
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


def _not_yet_applied(model: Model) -> list[Problem]:
    """Settings the contract reserves but this version does not apply yet: say so, never
    pretend."""
    out = []
    s = model.settings
    title = model.layout.get("Settings", ("Settings", {}))[0]
    if s.driving_rules != "none":
        out.append(Problem(WARNING, title, "", f"driving_rules {s.driving_rules} is not applied in this "
                           "version: hours are driving hours plus handling, without breaks or rests",
                           "plan breaks and rests separately, or set driving_rules to none"))
    if s.fuel_price_per_litre is not None:
        out.append(Problem(WARNING, title, "", "fuel_price_per_litre is not applied in this version: "
                           "no fuel surcharge is added", "include fuel in per_km, or leave it blank"))
    return out


def _route_one(model, graph, s: Shipment, obj: str, vehicles, networks, stats: RunStats,
               problems: list[Problem]) -> CostedShipment:
    if s.origin == s.destination:
        sheet, cell = model.cell("Shipments", "destination", s.row)
        problems.append(Problem(WARNING, sheet, cell, f"shipment {s.shipment_id} starts and ends at "
                                f"{s.origin}; nothing to route", "correct origin or destination"))
        return unrouted(model, s, REJECTED, obj, f"origin and destination are both {s.origin}")
    candidates = [s.vehicle] if s.vehicle else vehicles
    best: CostedShipment | None = None
    reasons: list[str] = []
    settled = pushed = 0
    for v in candidates:
        profile = profile_for(model, v, obj, s.weight_t)
        cn = networks.get(profile)
        if cn is None:
            t0 = time.perf_counter()
            cn = networks[profile] = compact(graph, model, profile)
            key = "compact networks (within search)"
            stats.seconds[key] = stats.seconds.get(key, 0.0) + time.perf_counter() - t0
            stats.bounds[_label(profile)] = cn.bound_note
        o, d = cn.index[s.origin], cn.index[s.destination]
        res = astar(cn.adj, o, d, cn.bound(d))
        stats.searches += 1
        stats.settled += res.stats.settled
        stats.pushed += res.stats.pushed
        settled += res.stats.settled
        pushed += res.stats.pushed
        if not res.found:
            reasons.append(explain_no_route(graph, cn, s.origin, s.destination))
            continue
        costed = cost_route(model, s, v, obj, [cn.uses[e] for e in res.edges])
        if best is None or costed.objective_value < best.objective_value - 1e-9:
            best = costed
    if best is None:
        msg = reasons[0] if len(reasons) == 1 else "no vehicle has a route: " + "; ".join(reasons)
        return unrouted(model, s, NO_ROUTE, obj, msg, s.vehicle or "", settled, pushed)
    note = ""
    if best.vehicles > 1:
        sheet, cell = model.cell("Shipments", "weight_t", s.row)
        payloads = ", ".join(f"{leg.card.payload_t:g} t" for leg in best.legs[:1])
        note = (f"{s.weight_t:g} t is more than one {best.vehicle} carries ({payloads}): "
                f"split over {best.vehicles} vehicles")
        problems.append(Problem(WARNING, sheet, cell, f"shipment {s.shipment_id}: {note}",
                                "check the weight; otherwise nothing to do: each vehicle is costed"))
    if not s.vehicle and len(candidates) > 1:
        note = (note + "; " if note else "") + f"vehicle chosen as best of {len(candidates)} by {obj}"
    return CostedShipment(best.shipment, best.status, best.objective, best.vehicle, best.legs,
                          best.min_charge, note, settled, pushed, best.places)
