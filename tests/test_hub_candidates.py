"""The plan stage's speed-ups change no plan: a seeded week with consolidation hubs (the
benchmark's week, small) planned with each speed-up switched off gives the same plan digest
(every run's loads, vehicles and cost, every shipment's shares) as with it on.

All inputs are invented (benchmarks.bench_consolidation's seeded week)."""

from __future__ import annotations

import gc
from dataclasses import replace

import pytest

import costing.pipeline as pipeline
import costing.plan.week as week
from benchmarks.bench_consolidation import digest, week_model


@pytest.fixture(scope="module")
def small_week():
    # 500 depots (5 hubs: more than MAX_HUBS), 300 shipments over five days, half with pallets
    # (invented inputs)
    return week_model(500, 2000, 300, 10, seed=3)


def _run(model, consolidate="yes"):
    m = replace(model, settings=replace(model.settings, consolidate=consolidate))
    return pipeline.run(m, pipeline.Options(analyses=False, scenarios=False))


@pytest.mark.parametrize("was_enabled", [True, False])
def test_collector_paused_while_planning_and_restored(small_week, monkeypatch, was_enabled):
    seen = []
    plan_week = week.plan_week

    def spy(model, route, results, prepare=None):
        def route_spy(s):
            seen.append(gc.isenabled())
            return route(s)
        return plan_week(model, route_spy, results, prepare)

    monkeypatch.setattr(pipeline, "plan_week", spy)
    if not was_enabled:
        gc.disable()
    try:
        _run(small_week)
        after = gc.isenabled()
    finally:
        gc.enable()
    assert seen and not any(seen)  # paused while the halves through hubs are routed
    assert after == was_enabled


def test_planning_makes_no_reference_cycle(small_week, monkeypatch):
    # the pause is cheap only if the plan stage leaves no cyclic garbage for later: a full
    # collection right after it finds nothing unreachable (gc.collect's count)
    found = []
    plan_week = week.plan_week

    def spy(*a, **k):
        gc.collect()
        out = plan_week(*a, **k)
        found.append(gc.collect())
        return out

    monkeypatch.setattr(pipeline, "plan_week", spy)
    _run(small_week)
    assert found == [0]


@pytest.mark.parametrize("consolidate", ["yes", "no"])
def test_same_plan_with_the_collector_running(small_week, monkeypatch, consolidate):
    fast = digest(_run(small_week, consolidate))
    monkeypatch.setattr(week, "PAUSE_COLLECTOR", False)
    assert digest(_run(small_week, consolidate)) == fast


def _candidates_of(model, monkeypatch):
    """Every shipment's candidate routes (and routes to buy parts of) as plan_week made them."""
    made = []
    candidates = week._candidates

    def spy(*a, **k):
        out = candidates(*a, **k)
        made.append(out)
        return out

    monkeypatch.setattr(week, "_candidates", spy)
    costed = _run(model)
    monkeypatch.setattr(week, "_candidates", candidates)
    assert len(made) == 1
    return made[0], digest(costed)


def test_same_candidates_with_the_kept_distances(small_week, monkeypatch):
    (cands, bases), fast = _candidates_of(small_week, monkeypatch)
    through = sum(len(c) - 1 for c in cands)
    assert through > 100  # the week has routes through hubs to compare
    monkeypatch.setattr(week, "FAST_CANDIDATES", False)
    (plain_cands, plain_bases), plain = _candidates_of(small_week, monkeypatch)
    # the same routes through the same hubs, priced to the same floats (dataclass equality)
    assert cands == plain_cands and bases == plain_bases
    assert fast == plain


def test_hubs_near_kept_distances_are_the_haversine_ones(small_week):
    # the distances kept are those measured afresh; and each is within 0.57 % of the WGS84
    # geodesic (geographiclib, Karney's algorithm: the published bound of the haversine formula
    # on a sphere of radius 6371 km against the ellipsoid; costing.geo's docstring)
    from geographiclib.geodesic import Geodesic

    model = small_week
    hubs = [d.depot_id for d in model.depots if d.kind == "hub"]
    km: dict = {}
    results = _run(model, "no").results
    for res in results[:60]:
        if res.status != "routed":
            continue
        kept = week._hubs_near(model, res, hubs, set(), km)
        assert kept == week._hubs_near(model, res, hubs, set())
    assert km
    for (a, b), d in km.items():
        x, y = model.depot(a), model.depot(b)
        g = Geodesic.WGS84.Inverse(x.latitude, x.longitude, y.latitude, y.longitude)["s12"] / 1000
        assert abs(d - g) <= 0.0057 * g + 1e-9
