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
    # 200 depots (2 hubs), 300 shipments over five days, half with pallets (invented inputs)
    return week_model(200, 800, 300, 10, seed=3)


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
